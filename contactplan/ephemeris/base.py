"""The one interface every spacecraft ephemeris source implements.

``state(t_tt)`` returns geocentric position (km) and velocity (km/s) in ICRF
axes for an array of TT instants (seconds since J2000), shapes (N, 3).
Asking outside the covered span raises :class:`OutOfSpanError` naming the span;
nothing is ever extrapolated.
"""

from __future__ import annotations

import numpy as np

from contactplan.errors import OutOfSpanError


class Ephemeris:
    """Base class. Subclasses set ``name``, ``start_tt``, ``end_tt`` and implement ``_state``.

    ``path`` is the file the states come from (None for built-in sources); errors name it.
    """

    name: str = "ephemeris"
    path: str | None = None
    start_tt: float = -np.inf
    end_tt: float = np.inf
    #: spans (start_tt, end_tt) inside [start_tt, end_tt] with no data (between OEM segments)
    gaps: list = []

    def covers(self, t_tt) -> np.ndarray:
        """Boolean mask of instants the source can answer."""
        t = np.asarray(t_tt, dtype=float)
        ok = (t >= self.start_tt) & (t <= self.end_tt)
        for g0, g1 in self.gaps:
            ok &= ~((t > g0) & (t < g1))
        return ok

    def pieces(self) -> list[tuple[float, float]]:
        """The covered spans [(start_tt, end_tt)] in time order: the whole span minus the gaps."""
        return covered_pieces(self)

    def clamp_to_cover(self, t_tt, ref_tt=None) -> np.ndarray:
        """Instants moved into the covered piece that holds ``ref_tt`` (see :func:`clamp_to_cover`)."""
        return clamp_to_cover(self, t_tt, ref_tt)

    def check_span(self, t_tt) -> None:
        t = np.asarray(t_tt, dtype=float)
        if t.size == 0:
            return
        if not np.all(self.covers(t)):
            from contactplan.timescale import format_utc

            bad = t[~self.covers(t)][0]
            text = (f"asked for {format_utc(bad, 0)}, outside the covered span "
                    f"{format_utc(self.start_tt, 0)} to {format_utc(self.end_tt, 0)}"
                    + (f" ({len(self.gaps)} gap(s) between segments)" if self.gaps else ""))
            # From a file: "FILE: asked for ..."; a built-in source has no file, its name leads.
            if self.path:
                raise OutOfSpanError(text, self.path)
            raise OutOfSpanError(f"{self.name}: {text}")

    def state(self, t_tt) -> tuple[np.ndarray, np.ndarray]:
        """Geocentric ICRF position (km) and velocity (km/s), each (N, 3)."""
        t = np.atleast_1d(np.asarray(t_tt, dtype=float))
        self.check_span(t)
        return self._state(t)

    def position_km(self, t_tt) -> np.ndarray:
        return self.state(t_tt)[0]

    def _state(self, t_tt: np.ndarray) -> tuple[np.ndarray, np.ndarray]:  # pragma: no cover
        raise NotImplementedError


def covered_pieces(ephemeris) -> list[tuple[float, float]]:
    """[start_tt, end_tt] of any ephemeris-like object minus its ``gaps``, as (start_tt, end_tt) in time order.

    Gap edges are covered instants (a gap is the open span between two segments).
    Unlike :func:`contactplan.intervals.subtract` this keeps zero-length pieces: an instant
    between two touching gaps, or at a gap on the span's edge, is covered and
    :func:`clamp_to_cover` may clamp to it.
    """
    lo, hi = float(ephemeris.start_tt), float(ephemeris.end_tt)
    out = []
    a = lo
    for g0, g1 in sorted(getattr(ephemeris, "gaps", None) or []):
        g0, g1 = max(float(g0), lo), min(float(g1), hi)
        if g1 <= g0:
            continue
        if g0 >= a:
            out.append((a, g0))
        a = max(a, g1)
    out.append((a, hi))
    return out


def clamp_to_cover(ephemeris, t_tt, ref_tt=None) -> np.ndarray:
    """Each instant of ``t_tt`` clipped to the covered piece that holds the matching ``ref_tt``.

    ``ref_tt`` (default ``t_tt`` itself) picks the piece: the one containing it, else
    the nearest one (before the start, after the end, or inside a gap). Used for light
    time: the emission instant ``t - tau`` is kept in the piece of the receive time ``t``,
    so a pass that rises at the first epoch after a gap never asks inside the gap, just
    as one at the very start of the ephemeris never asks before it (the spacecraft
    position is then a light time late there, see :mod:`contactplan.geometry.topo`).
    """
    t = np.asarray(t_tt, dtype=float)
    gaps = getattr(ephemeris, "gaps", None) or []
    if not gaps:
        return np.clip(t, ephemeris.start_tt, ephemeris.end_tt)
    ref = t if ref_tt is None else np.broadcast_to(np.asarray(ref_tt, dtype=float), t.shape)
    pieces = covered_pieces(ephemeris)
    starts = np.array([p[0] for p in pieces])
    ends = np.array([p[1] for p in pieces])
    i = np.clip(np.searchsorted(starts, ref, side="right") - 1, 0, len(pieces) - 1)
    # inside a gap: take the nearer of the piece before and the piece after
    nxt = np.minimum(i + 1, len(pieces) - 1)
    after = (ref > ends[i]) & (starts[nxt] - ref < ref - ends[i])
    i = np.where(after, nxt, i)
    return np.clip(t, starts[i], ends[i])
