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
    """Base class. Subclasses set ``name``, ``start_tt``, ``end_tt`` and implement ``_state``."""

    name: str = "ephemeris"
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

    def check_span(self, t_tt) -> None:
        t = np.asarray(t_tt, dtype=float)
        if t.size == 0:
            return
        if not np.all(self.covers(t)):
            from contactplan.timescale import format_utc

            bad = t[~self.covers(t)][0]
            raise OutOfSpanError(
                f"{self.name}: asked for {format_utc(bad, 0)}, outside the covered span "
                f"{format_utc(self.start_tt, 0)} to {format_utc(self.end_tt, 0)}"
                + (f" ({len(self.gaps)} gap(s) between segments)" if self.gaps else "")
            )

    def state(self, t_tt) -> tuple[np.ndarray, np.ndarray]:
        """Geocentric ICRF position (km) and velocity (km/s), each (N, 3)."""
        t = np.atleast_1d(np.asarray(t_tt, dtype=float))
        self.check_span(t)
        return self._state(t)

    def position_km(self, t_tt) -> np.ndarray:
        return self.state(t_tt)[0]

    def _state(self, t_tt: np.ndarray) -> tuple[np.ndarray, np.ndarray]:  # pragma: no cover
        raise NotImplementedError
