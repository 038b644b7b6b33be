"""CONTRACT: per-pass rate profiles and the recorder result (filled in by the link work)."""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np


@dataclass(eq=False)
class PassProfile:
    """Samples along one pass: times (TT s), elevation (deg), Eb/N0 at the best rate and rate (kbit/s, 0: none).

    The samples run from AOS to LOS (both included). Between two samples the link is
    taken to carry the lower of the two sample rates (a rate is used only over a
    span where it closes at both ends), so volumes never count a rate the link
    could not hold.
    """

    station: str
    t_tt: np.ndarray
    elevation_deg: np.ndarray
    rate_kbps: np.ndarray
    ebn0_db: np.ndarray | None = None
    range_km: np.ndarray | None = None  # slant range at the samples, km
    link_id: str = ""  # the scenario link this profile is for
    # achieved minus required at the samples (dB): down, Eb/N0 at the rate in use (or the lowest rate)
    # minus required_ebn0_db; up, Pt/N0 minus required_pt_dbhz. The link closes where it is >= margin_db.
    margin_db: np.ndarray | None = None
    closes: np.ndarray | None = None  # bool at the samples: the link closes with its margin
    culmination_margin_db: float | None = None  # margin_db at the sample of highest elevation
    # the time-tagged rate plan (at most max_rate_changes_per_pass changes; without a limit, the profile)
    plan_edges_tt: np.ndarray | None = None
    plan_rates_kbps: np.ndarray | None = None
    # links planned in weather (contactplan.link.weather): the level above is at ``availability_pct``;
    # the clear-sky level (C/N0, dB-Hz) at the samples and the clear-sky volume of the pass are kept beside it
    clear_level_db: np.ndarray | None = None
    clear_volume_gbit: float | None = None
    availability_pct: float | None = None
    gt_model: str = ""  # "sky-noise" (G/T falls with the attenuation), "constant"; "" without weather

    def segment_rates_kbps(self) -> np.ndarray:
        """Rate (kbit/s) held over each span [t_tt[i], t_tt[i+1]] (length len(t_tt) - 1)."""
        r = np.asarray(self.rate_kbps, dtype=float)
        return np.minimum(r[:-1], r[1:]) if r.size > 1 else np.zeros(0)

    @property
    def max_rate_kbps(self) -> float:
        seg = self.segment_rates_kbps()
        return float(seg.max()) if seg.size else 0.0

    def rate_steps(self, start_tt: float | None = None, end_tt: float | None = None):
        """The step function of rate over [start_tt, end_tt] clipped to the pass.

        Returns (edges_tt, rates_kbps) with len(edges) = len(rates) + 1; neighbouring spans
        of equal rate are merged. Empty arrays when the window misses the pass.
        """
        if self.plan_rates_kbps is not None:
            return _clip_steps(self.plan_edges_tt, self.plan_rates_kbps, start_tt, end_tt)
        return self.profile_steps(start_tt, end_tt)

    def profile_steps(self, start_tt: float | None = None, end_tt: float | None = None):
        """Like :meth:`rate_steps` but of the profile itself (what the link could hold), not the plan."""
        edges, rates = _clip_steps(self.t_tt, self.segment_rates_kbps(), start_tt, end_tt)
        if rates.size == 0:
            return edges, rates
        keep = np.concatenate(([True], rates[1:] != rates[:-1]))
        return np.concatenate((edges[:-1][keep], edges[-1:])), rates[keep]

    @property
    def plan_volume_gbit(self) -> float:
        """Gigabits the rate plan brings down over the whole pass."""
        return self.volume_gbit()

    def closed_spans(self) -> list:
        """[(start_tt, end_tt)] where the link closes at both ends of a sample span (merged)."""
        t = np.asarray(self.t_tt, dtype=float)
        c = np.asarray(self.closes if self.closes is not None else np.asarray(self.rate_kbps) > 0, dtype=bool)
        if t.size < 2:
            return []
        seg = c[:-1] & c[1:]
        d = np.diff(np.concatenate(([0], seg.astype(np.int8), [0])))
        return [(float(t[a]), float(t[b])) for a, b in zip(np.flatnonzero(d == 1), np.flatnonzero(d == -1))]

    def volume_gbit(self, start_tt: float | None = None, end_tt: float | None = None) -> float:
        """Gigabits (1e9 bit) the link returns over [start_tt, end_tt] (default the whole pass) on its plan."""
        edges, rates = self.rate_steps(start_tt, end_tt)
        if rates.size == 0:
            return 0.0
        return float(np.sum(rates * np.diff(edges)) * 1e-6)


def _clip_steps(edges, rates, start_tt, end_tt):
    """Steps (edges, rates) clipped to [start_tt, end_tt]; empty arrays when the window misses them."""
    e = np.asarray(edges, dtype=float)
    r = np.asarray(rates, dtype=float)
    if r.size == 0:
        return np.zeros(0), np.zeros(0)
    lo = e[0] if start_tt is None else max(float(start_tt), e[0])
    hi = e[-1] if end_tt is None else min(float(end_tt), e[-1])
    if not hi > lo:
        return np.zeros(0), np.zeros(0)
    inner = e[(e > lo) & (e < hi)]
    out_e = np.concatenate(([lo], inner, [hi]))
    idx = np.clip(np.searchsorted(e, out_e[:-1], side="right") - 1, 0, r.size - 1)
    return out_e, r[idx]


@dataclass(eq=False)
class RecorderResult:
    """Recorder fill over the window. Arrays share ``t_tt``; gigabits are 1e9 bits.

    Balance: initial_gbit + generated_gbit = downlinked_gbit + end_gbit + lost_gbit.
    """

    t_tt: np.ndarray
    fill_gbit: np.ndarray
    capacity_gbit: float
    generated_gbit: float
    downlinked_gbit: float
    lost_gbit: float
    end_gbit: float
    overflow_spans: list = field(default_factory=list)  # [(start_tt, end_tt, lost_gbit)]
    oldest_age_s: np.ndarray | None = None  # age of the oldest data on board at each t_tt
    downlinked_by_booking_gbit: dict = field(default_factory=dict)
    initial_gbit: float = 0.0  # on board at the window's start
    start_tt: float = 0.0
    end_tt: float = 0.0
    downlink_spans: list = field(default_factory=list)  # [(start_tt, end_tt, rate_kbps, booking id)] booked rate in use (see empty_spans)
    empty_spans: list = field(default_factory=list)  # [(start_tt, end_tt)] recorder empty while downlink booked

    def fill_at(self, t_tt):
        """Fill (Gbit) at any instants (the fill is piecewise linear between ``t_tt``)."""
        return np.interp(t_tt, self.t_tt, self.fill_gbit)

    @property
    def peak_gbit(self) -> float:
        return float(np.max(self.fill_gbit)) if len(self.fill_gbit) else self.initial_gbit
