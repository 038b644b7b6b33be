"""Recorder forecast in weather: the clear-sky fill, a band between two availabilities, and a Monte Carlo
of per-pass fades giving the probability that the recorder overflows in the window.

- **profiles at an availability** (:func:`profiles_at`): a pass profile planned in weather keeps its
  clear-sky level (:mod:`contactplan.link.weather`); at another availability the level is that minus the
  weather penalty of the station's table there, and the rates and rate plan follow as in
  :mod:`contactplan.link.volume`. ``None`` asks for clear sky. Profiles without weather are kept as they are.
- **band**: the recorder (:func:`contactplan.link.recorder.simulate_recorder`) with every weather pass at
  availability p1 and at p2 (``[link_planning] band_availability_pct``, default 50 % and 95 %).
- **Monte Carlo** (:func:`overflow_probability`): each draw gives every weather pass one time percentage
  u, uniform on 0-100 % (the pass sees the attenuation exceeded u % of the year). Assumption, stated: the
  fade is fully correlated within a pass (one value for the whole pass) and independent between passes,
  including passes of stations far apart at the same time and passes of one station on different days
  (weather decorrelates within a day; common practice, no source). The draw is mapped to the nearest
  tabulated level at or below it (:data:`LEVELS_P`; conservative: the level's attenuation is at least the
  drawn one's), and u above 50 % takes the 50 % level. The fill over the draws is the recorder's own
  recursion (same arithmetic, vectorised over draws): with fades off every draw is the deterministic
  recorder to the last bit. Overflow: more than :data:`LOST_TOLERANCE_GBIT` lost. Standard error of the
  probability: sqrt(P (1 - P) / N).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

#: time percentages (%) of the Monte Carlo levels, descending
LEVELS_P = (50.0, 30.0, 20.0, 10.0, 5.0, 3.0, 2.0, 1.0, 0.5, 0.2, 0.1, 0.05, 0.02, 0.01)
#: a draw overflows when it loses more than this (Gbit)
LOST_TOLERANCE_GBIT = 1e-9
CORRELATION = ("one fade per pass (correlated within the pass), independent between passes and stations")


@dataclass(eq=False)
class RecorderForecast:
    """The recorder in weather over the window (gigabits; times TT s)."""

    t_tt: np.ndarray
    clear_gbit: np.ndarray  # every pass in clear sky
    band_low_gbit: np.ndarray  # every weather pass at band_pct[0] (the lower fill)
    band_high_gbit: np.ndarray  # ... at band_pct[1]
    band_pct: tuple = (50.0, 95.0)
    capacity_gbit: float = 0.0
    overflow_probability_pct: float | None = None  # None: no Monte Carlo (forecast_draws = 0)
    standard_error_pct: float | None = None
    draws: int = 0
    seed: int = 0
    overflow_availability_pct: float = 95.0
    clear_lost_gbit: float = 0.0
    band_lost_gbit: tuple = (0.0, 0.0)
    correlation: str = CORRELATION
    notes: list = field(default_factory=list)

    def to_json(self) -> dict:
        return {"band_availability_pct": list(self.band_pct), "capacity_gbit": self.capacity_gbit,
                "overflow_probability_pct": self.overflow_probability_pct,
                "standard_error_pct": self.standard_error_pct, "draws": self.draws, "seed": self.seed,
                "overflow_availability_pct": self.overflow_availability_pct,
                "clear_sky_lost_gbit": round(self.clear_lost_gbit, 6),
                "band_lost_gbit": [round(x, 6) for x in self.band_lost_gbit],
                "peak_gbit": {"clear_sky": _peak(self.clear_gbit), "band_low": _peak(self.band_low_gbit),
                              "band_high": _peak(self.band_high_gbit)},
                "correlation": self.correlation}

    def lines(self) -> list[str]:
        """Text for ``contactplan check``."""
        p1, p2 = self.band_pct
        out = [f"Recorder in weather: peak {_peak(self.clear_gbit):.1f} Gbit in clear sky, "
               f"{_peak(self.band_low_gbit):.1f} at {p1:g} % and {_peak(self.band_high_gbit):.1f} at {p2:g} % "
               f"availability (capacity {self.capacity_gbit:g}); recorder rules at {self.overflow_availability_pct:g} %"]
        if self.overflow_probability_pct is not None:
            out.append(f"Overflow probability {self.overflow_probability_pct:.1f} % "
                       f"(standard error {self.standard_error_pct:.1f} %, {self.draws} draws, seed {self.seed}; "
                       f"{self.correlation})")
        return out


def _peak(a) -> float:
    return round(float(np.max(a)), 6) if len(a) else 0.0


# ---------------------------------------------------------------- profiles at an availability
def _weather_groups(scenario, profiles: dict, passes):
    """{(station id, link id): [pass]} of the profiles planned in weather, passes in AOS order."""
    groups: dict = {}
    for p in passes:
        prof = profiles.get(id(p))
        if prof is not None and prof.clear_level_db is not None:
            groups.setdefault((p.station, prof.link_id), []).append(p)
    return groups


def profiles_at(scenario, passes, profiles: dict, availability_pct: float | None) -> dict:
    """``profiles`` with every weather profile re-planned at ``availability_pct`` (None: clear sky)."""
    from contactplan.link.volume import _build
    from contactplan.link.weather import penalty_db, site_weather

    out = dict(profiles)
    for (sid, lid), plist in _weather_groups(scenario, profiles, passes).items():
        first = profiles[id(plist[0])]
        if availability_pct is not None and all(profiles[id(p)].availability_pct == availability_pct for p in plist):
            continue  # the plan's own profiles
        station = scenario.station(sid)
        link = scenario.spacecraft.link_by_id(lid)
        sv = station.service(lid)
        profs = [profiles[id(p)] for p in plist]
        counts = [pr.t_tt.size for pr in profs]
        offsets = np.concatenate(([0], np.cumsum(counts)))
        t = np.concatenate([pr.t_tt for pr in profs])
        el = np.concatenate([pr.elevation_deg for pr in profs])
        rng = np.concatenate([pr.range_km for pr in profs])
        level = np.concatenate([pr.clear_level_db for pr in profs])
        if availability_pct is not None:
            table = site_weather(station, link.frequency_mhz, availability_pct)
            level = level - penalty_db(table, el, getattr(sv, "system_noise_k", None))
        got = _build(station, plist, t, offsets, el, rng, link, level, False)
        for p in plist:
            g = got[id(p)]
            g.clear_level_db = profiles[id(p)].clear_level_db
            g.clear_volume_gbit = profiles[id(p)].clear_volume_gbit
            g.availability_pct = availability_pct
            g.gt_model = first.gt_model
            out[id(p)] = g
    return out


def cached_profiles_at(result, availability_pct: float | None) -> dict:
    """:func:`profiles_at` of a plan result's playback profiles, kept on the result (passes do not change
    between checks; ``result.weather_profiles`` is shared by the planner's background snapshots)."""
    memo = getattr(result, "weather_profiles", None)
    if memo is None or memo.get("_profiles") is not result.profiles:
        memo = {"_profiles": result.profiles}
        result.weather_profiles = memo
    if availability_pct not in memo:
        memo[availability_pct] = profiles_at(result.scenario, result.passes, result.profiles, availability_pct)
    return memo[availability_pct]


def in_weather(result) -> bool:
    """True when some playback profile of the result is planned in weather."""
    return any(getattr(pr, "clear_level_db", None) is not None for pr in (result.profiles or {}).values())


# ---------------------------------------------------------------- the forecast
def forecast_for(result, overflow_recorder=None, fades: bool = True, scenario=None) -> RecorderForecast | None:
    """The recorder forecast of a plan result (None without a recorder or without weather); ``scenario``:
    the plan whose bookings count (default ``result.scenario``)."""
    from contactplan.link.recorder import simulate_recorder
    from contactplan.scenario.link_planning import DEFAULT_OVERFLOW_AVAILABILITY_PCT, planning_of

    sc = result.scenario if scenario is None else scenario
    if sc.spacecraft.recorder is None or not in_weather(result):
        return None
    lp = planning_of(sc)
    p1, p2 = (float(x) for x in lp.band_availability_pct)
    recs = [simulate_recorder(sc, result.passes, cached_profiles_at(result, a)) for a in (None, p1, p2)]
    t = np.unique(np.concatenate([r.t_tt for r in recs]))
    req = getattr(sc, "requirements", None)
    over = getattr(req, "recorder_overflow_availability_pct", None) or DEFAULT_OVERFLOW_AVAILABILITY_PCT
    fc = RecorderForecast(t_tt=t, clear_gbit=recs[0].fill_at(t), band_low_gbit=recs[1].fill_at(t),
                          band_high_gbit=recs[2].fill_at(t), band_pct=(p1, p2),
                          capacity_gbit=float(sc.spacecraft.recorder.capacity_gbit), draws=int(lp.forecast_draws),
                          seed=int(lp.forecast_seed), overflow_availability_pct=float(over),
                          clear_lost_gbit=recs[0].lost_gbit, band_lost_gbit=(recs[1].lost_gbit, recs[2].lost_gbit))
    if lp.forecast_draws > 0:
        lost = draw_losses(result, lp.forecast_draws, lp.forecast_seed, fades=fades, scenario=sc)
        prob = float(np.mean(lost > LOST_TOLERANCE_GBIT))
        fc.overflow_probability_pct = 100.0 * prob
        fc.standard_error_pct = 100.0 * float(np.sqrt(prob * (1.0 - prob) / lost.size))
    return fc


def _pieces(scenario, passes, bookings, t0, t1):
    """Booked downlink pieces [(s0, s1, pass, booking index)] clipped to [t0, t1]."""
    from contactplan.link.windows import DownlinkIndex, downlink_pieces

    index = DownlinkIndex(scenario, passes)
    out = []
    for k, b in enumerate(bookings):
        if b.end_tt <= t0 or b.start_tt >= t1:
            continue
        for s0, s1, p in downlink_pieces(scenario, b, passes, index):
            a, z = max(s0, t0), min(s1, t1)
            if z > a:
                out.append((a, z, p, k))
    return out


def draw_levels(n_draws: int, n_passes: int, seed: int) -> np.ndarray:
    """Level index (into :data:`LEVELS_P`) of every (draw, pass): u uniform on [0, 100) % per pass,
    the nearest level at or below u (u < 0.01 %: the last level; u >= 50 %: the first)."""
    rng = np.random.default_rng(int(seed))
    u = rng.uniform(0.0, 100.0, size=(int(n_draws), int(n_passes)))
    levels = np.asarray(LEVELS_P)  # descending
    k = np.searchsorted(-levels, -u, side="left")  # first level <= u
    return np.minimum(k, levels.size - 1)


def draw_losses(result, n_draws: int, seed: int = 0, fades: bool = True, scenario=None) -> np.ndarray:
    """Gigabits lost in each of ``n_draws`` draws (see the module doc). ``fades=False``: every pass on the
    plan's own profiles (each draw is then the deterministic recorder)."""
    from contactplan.link.recorder import downlink_rate_steps, plan_steps

    sc = result.scenario if scenario is None else scenario
    rec = sc.spacecraft.recorder
    t0, t1 = float(sc.start_tt), float(sc.end_tt)
    bookings = list(sc.bookings)
    n = int(n_draws)
    if not fades:
        edges, rates, _ = downlink_rate_steps(sc, result.passes, result.profiles or {}, bookings, t0, t1)
        return fill_over_draws(edges, np.broadcast_to(rates, (n, rates.size)), rec)
    levels = [cached_profiles_at(result, 100.0 - p) for p in LEVELS_P]
    pieces = _pieces(sc, result.passes, bookings, t0, t1)
    weather = sorted({id(p) for _, _, p, _ in pieces
                      if getattr((result.profiles or {}).get(id(p)), "clear_level_db", None) is not None})
    col = {pid: j for j, pid in enumerate(weather)}
    # per piece and level: steps (a, b, rate) of the plan in use
    steps = []
    for s0, s1, p, k in pieces:
        if id(p) in col:
            per = [plan_steps(lv[id(p)], s0, s1) if id(p) in lv else [] for lv in levels]
        else:
            prof = (result.profiles or {}).get(id(p))
            one = plan_steps(prof, s0, s1) if prof is not None else []
            per = [one] * len(levels)
        steps.append((p, per))
    cuts = [t0, t1] + [x for _, per in steps for lv in per for a, b, _ in lv for x in (a, b)]
    grid = np.unique(np.asarray(cuts, dtype=float))
    cells = grid.size - 1
    k_draw = draw_levels(n, len(weather), seed) if weather else np.zeros((n, 0), dtype=np.int64)
    rate = np.zeros((n, cells))
    for p, per in steps:
        table = np.zeros((len(levels), cells))  # rate of this piece per level and cell
        for li, lv in enumerate(per):
            for a, b, r in lv:
                if r > 0:
                    i0, i1 = np.searchsorted(grid, a), np.searchsorted(grid, b)
                    table[li, i0:i1] = r
        lo, hi = np.flatnonzero(table.any(axis=0))[[0, -1]] if table.any() else (0, -1)
        if hi < lo:
            continue
        pick = k_draw[:, col[id(p)]] if id(p) in col else np.zeros(n, dtype=np.int64)
        np.maximum(rate[:, lo:hi + 1], table[pick, lo:hi + 1], out=rate[:, lo:hi + 1])  # one transmitter
    return fill_over_draws(grid, rate, rec)


def fill_over_draws(edges, rates_kbps, rec) -> np.ndarray:
    """Gigabits lost per draw: :func:`contactplan.link.recorder.simulate_recorder`'s recursion (same
    operations in the same order) over the cells ``edges`` with ``rates_kbps`` of shape (draws, cells)."""
    rates = np.asarray(rates_kbps, dtype=float)
    n = rates.shape[0]
    cap = float(rec.capacity_gbit)
    gen = float(rec.generation_kbps) * 1e-6
    fill = np.full(n, float(rec.initial_gbit))
    lost = np.zeros(n)
    if fill[0] > cap if n else False:
        lost += fill - cap
        fill[:] = cap
    d_rates = rates * 1e-6
    e = np.asarray(edges, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        for k in range(e.size - 1):
            dt = float(e[k + 1]) - float(e[k])
            if dt <= 0:
                continue
            d = d_rates[:, k]
            net = gen - d
            f0 = fill
            full = (net > 0) & ((cap - f0) / net < dt)
            empty = ~full & (net < 0) & (f0 / -net < dt)
            seg_down = d * dt
            plain = f0 + net * dt
            over = ~full & ~empty & (plain > cap)
            lost = lost + np.where(full, f0 + gen * dt - seg_down - cap, 0.0) + np.where(over, plain - cap, 0.0)
            fill = np.where(full, cap, np.where(empty, 0.0, np.clip(plain, 0.0, cap)))
    return lost
