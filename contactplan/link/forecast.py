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
  probability: sqrt(P (1 - P) / N). The draws of a pass are column ``i`` of :func:`draw_levels` over all
  passes of the plan, ``i`` its place in ``result.passes`` (AOS order): the same seed gives the same draws
  in every process, and an edit changes the draws of no other pass.
- **cost** (a year of 2,000 bookings in a check): one list of booked downlink pieces serves the plan's
  recorder, the band and the draws; the rate steps of every (piece, level) come from one vectorised
  bisection on the rate plans of every pass at every level, packed once per result
  (:func:`contactplan.link.recorder.steps_of_rows`); a band edge on the plan's own profiles reuses the
  plan's recorder; the draws per pass are kept on the result. In the recursion a cell where every draw
  stays clear of empty and full by far more than rounding takes the plain step (each branch would choose
  it: the same bits), and for the probability a draw is no longer followed once its loss is certain to
  stay above the tolerance; the recursion stops when every draw is decided.
- **between checks** (kept in ``result.weather_profiles``, shared by the planner's snapshots; passes and
  profiles never change on a result): the level steps per piece, and the last recursion's inputs with its
  state every :data:`CHECKPOINT_CELLS` cells. A check after an edit computes the steps of the new pieces
  only and resumes the recursion from the last state before the first cell whose inputs changed (nothing
  changed: the same losses); the numbers are those of a run from the start.
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
def _same_profiles(a: dict, b: dict) -> bool:
    return a is b or (len(a) == len(b) and all(b.get(k) is v for k, v in a.items()))


def forecast_for(result, overflow_recorder=None, fades: bool = True, scenario=None, recorder=None,
                 pieces=None) -> RecorderForecast | None:
    """The recorder forecast of a plan result (None without a recorder or without weather); ``scenario``:
    the plan whose bookings count (default ``result.scenario``). ``recorder``: the plan's own recorder of
    that scenario (reused for a band edge whose profiles are the plan's own); ``pieces``: the booked
    downlink pieces (:func:`contactplan.link.recorder.booked_pieces`) of that scenario's window."""
    from contactplan.link.recorder import booked_pieces, simulate_recorder
    from contactplan.scenario.link_planning import DEFAULT_OVERFLOW_AVAILABILITY_PCT, planning_of

    sc = result.scenario if scenario is None else scenario
    if sc.spacecraft.recorder is None or not in_weather(result):
        return None
    lp = planning_of(sc)
    p1, p2 = (float(x) for x in lp.band_availability_pct)
    if pieces is None:
        pieces = booked_pieces(sc, result.passes, sc.bookings, float(sc.start_tt), float(sc.end_tt))
    recs = []
    for a in (None, p1, p2):
        prof = cached_profiles_at(result, a)
        same = recorder is not None and _same_profiles(prof, result.profiles)
        recs.append(recorder if same else simulate_recorder(sc, result.passes, prof, pieces=pieces))
    t = np.unique(np.concatenate([r.t_tt for r in recs]))
    req = getattr(sc, "requirements", None)
    over = getattr(req, "recorder_overflow_availability_pct", None) or DEFAULT_OVERFLOW_AVAILABILITY_PCT
    fc = RecorderForecast(t_tt=t, clear_gbit=recs[0].fill_at(t), band_low_gbit=recs[1].fill_at(t),
                          band_high_gbit=recs[2].fill_at(t), band_pct=(p1, p2),
                          capacity_gbit=float(sc.spacecraft.recorder.capacity_gbit), draws=int(lp.forecast_draws),
                          seed=int(lp.forecast_seed), overflow_availability_pct=float(over),
                          clear_lost_gbit=recs[0].lost_gbit, band_lost_gbit=(recs[1].lost_gbit, recs[2].lost_gbit))
    if lp.forecast_draws > 0:
        lost = draw_losses(result, lp.forecast_draws, lp.forecast_seed, fades=fades, scenario=sc, pieces=pieces,
                           decide=True)
        prob = float(np.mean(lost > LOST_TOLERANCE_GBIT))
        fc.overflow_probability_pct = 100.0 * prob
        fc.standard_error_pct = 100.0 * float(np.sqrt(prob * (1.0 - prob) / lost.size))
    return fc


def draw_levels(n_draws: int, n_passes: int, seed: int) -> np.ndarray:
    """Level index (into :data:`LEVELS_P`) of every (draw, pass): u uniform on [0, 100) % per pass,
    the nearest level at or below u (u < 0.01 %: the last level; u >= 50 %: the first)."""
    rng = np.random.default_rng(int(seed))
    u = rng.uniform(0.0, 100.0, size=(int(n_draws), int(n_passes)))
    levels = np.asarray(LEVELS_P)  # descending
    k = np.searchsorted(-levels, -u, side="left")  # first level <= u
    return np.minimum(k, levels.size - 1)


def _memo(result) -> dict:
    """The per-result store of :func:`cached_profiles_at` (shared by the planner's snapshots)."""
    cached_profiles_at(result, None)
    return result.weather_profiles


def _pass_draws(result, n: int, seed: int) -> np.ndarray:
    """Level index of every (pass, draw), shape (passes, draws), one column of :func:`draw_levels` per pass of
    ``result.passes`` in their order (AOS); kept on the result (passes do not change between checks)."""
    memo = _memo(result)
    key = ("draws", n, int(seed), len(result.passes))
    got = memo.get(key)
    if got is None:
        got = np.ascontiguousarray(draw_levels(n, len(result.passes), seed).T.astype(np.intp))
        memo[key] = got
    return got


def _pass_index(result) -> dict:
    memo = _memo(result)
    got = memo.get("pass_index")
    if got is None or got[0] is not result.passes or len(got[1]) != len(result.passes):
        got = (result.passes, {id(p): i for i, p in enumerate(result.passes)})
        memo["pass_index"] = got
    return got[1]


def draw_losses(result, n_draws: int, seed: int = 0, fades: bool = True, scenario=None, pieces=None,
                decide: bool = False) -> np.ndarray:
    """Gigabits lost in each of ``n_draws`` draws (see the module doc). ``fades=False``: every pass on the
    plan's own profiles (each draw is then the deterministic recorder). ``pieces``: the booked downlink
    pieces of the scenario's window (:func:`contactplan.link.recorder.booked_pieces`). ``decide=True``: a
    draw whose loss is certain to stay above :data:`LOST_TOLERANCE_GBIT` is no longer followed (the loss
    returned for it is then only a lower bound; whether it overflows is exact); the recursion stops when
    every draw is decided."""
    from contactplan.link.recorder import booked_pieces, downlink_rate_steps

    sc = result.scenario if scenario is None else scenario
    rec = sc.spacecraft.recorder
    t0, t1 = float(sc.start_tt), float(sc.end_tt)
    bookings = list(sc.bookings)
    n = int(n_draws)
    own = result.profiles or {}
    if pieces is None:
        pieces = booked_pieces(sc, result.passes, bookings, t0, t1)
    if not fades:
        edges, rates, _ = downlink_rate_steps(sc, result.passes, own, bookings, t0, t1, pieces=pieces)
        return fill_over_draws(edges, np.broadcast_to(rates, (n, rates.size)), rec, decide=decide)
    n_lv = len(LEVELS_P)
    pidx = _pass_index(result)
    piece_col = [pidx[id(p)] if getattr(own.get(id(p)), "clear_level_db", None) is not None else -1
                 for _s0, _s1, p, _k in pieces]
    e0, e1, r, level, piece = _level_steps(result, pieces, piece_col)
    grid = np.unique(np.concatenate(([t0, t1], e0, e1)))
    cells = grid.size - 1
    pos = r > 0
    piece, level, rr = piece[pos], level[pos], r[pos]
    i0, i1 = np.searchsorted(grid, e0[pos]), np.searchsorted(grid, e1[pos])
    cnt = np.maximum(i1 - i0, 0)
    rep = np.repeat(np.arange(rr.size), cnt)
    cell = np.arange(rep.size) - np.repeat(np.cumsum(cnt) - cnt, cnt) + i0[rep]
    key = cell * max(len(pieces), 1) + piece[rep]  # (cell, piece) pairs, cell-major
    uniq, pair = np.unique(key, return_inverse=True)
    table = np.zeros((uniq.size, n_lv))  # rate (kbit/s) of each (cell, piece) at each level
    lv_r = level[rep]
    every = lv_r < 0
    table[pair[every]] = rr[rep[every]][:, None]
    table[pair[~every], lv_r[~every]] = rr[rep[~every]]
    pair_cell = uniq // max(len(pieces), 1)
    pair_col = np.asarray(piece_col, dtype=np.int64)[uniq % max(len(pieces), 1)] if uniq.size else np.zeros(0, int)
    draws = _pass_draws(result, n, seed) if uniq.size and (pair_col >= 0).any() else None
    table_g = table * 1e-6  # Gbit/s, as the recorder turns its rates
    terms: list = [[] for _ in range(cells)]  # per cell: its pieces' rates, one number or (level rates, draws)
    for q, (c, col) in enumerate(zip(pair_cell.tolist(), pair_col.tolist())):
        terms[c].append((table_g[q], draws[col]) if col >= 0 else float(table_g[q, 0]))
    dmax = np.zeros(cells)
    if uniq.size:
        np.maximum.at(dmax, pair_cell, table_g.max(axis=1))

    def column(k):
        out = 0.0
        for i, t in enumerate(terms[k]):
            v = t if isinstance(t, float) else t[0].take(t[1])
            out = v if i == 0 else np.maximum(out, v)  # one transmitter: the higher rate
        return out

    memo = _memo(result)
    inputs = _RunInputs((float(rec.capacity_gbit), float(rec.generation_kbps), float(rec.initial_gbit), n, int(seed),
                         bool(decide), id(draws)), grid, pair_cell, pair_col, table_g)
    last = memo.get("recursion")
    resume = inputs.resume_from(last) if last is not None else None
    if resume is not None and resume[0] == "done":  # nothing it read has changed: the same losses
        last.inputs = inputs
        return last.lost.copy()
    run = _Run()
    if resume is not None:
        run.states = {c: v for c, v in last.states.items() if c <= resume[0]}
    lost = _recursion(grid, column, n, rec, decide, dmax, resume=resume, run=run)
    run.inputs = inputs
    memo["recursion"] = run
    return lost.copy()


#: cells between two kept states of the recursion (a check after an edit resumes from the last one before it)
CHECKPOINT_CELLS = 128


@dataclass(eq=False)
class _Run:
    """One recursion of :func:`draw_losses`: its inputs, the state before every :data:`CHECKPOINT_CELLS`-th
    cell ``{k: (fill, lost, next look)}``, the cell it stopped at and its losses."""

    inputs: object = None
    states: dict = field(default_factory=dict)
    stopped: int = 0
    lost: object = None


@dataclass(eq=False)
class _RunInputs:
    """What a recursion reads: recorder, draws, seed and mode; the cells and their (cell, piece) rates."""

    key: tuple
    grid: np.ndarray
    pair_cell: np.ndarray
    pair_col: np.ndarray
    table: np.ndarray

    def first_change(self, old: "_RunInputs") -> int:
        """The first cell whose inputs differ from ``old``'s (the number of cells when none does)."""
        cells = self.grid.size - 1
        m = min(self.grid.size, old.grid.size)
        diff = np.flatnonzero(self.grid[:m] != old.grid[:m])
        k = int(diff[0]) - 1 if diff.size else (m - 1 if self.grid.size != old.grid.size else cells)
        m = min(self.pair_cell.size, old.pair_cell.size)
        same = (self.pair_cell[:m] == old.pair_cell[:m]) & (self.pair_col[:m] == old.pair_col[:m]) & \
            np.all(self.table[:m] == old.table[:m], axis=1)
        bad = np.flatnonzero(~same)
        if bad.size:
            q = int(bad[0])
            k = min(k, int(self.pair_cell[q]), int(old.pair_cell[q]))
        elif self.pair_cell.size != old.pair_cell.size:
            longer = self if self.pair_cell.size > m else old
            k = min(k, int(longer.pair_cell[m]))
        return max(k, 0)

    def resume_from(self, last: _Run):
        """(cell, fill, lost, next look) to start from, or ("done", losses) when ``last`` ran the same inputs
        as far as it went; None: start afresh."""
        old = last.inputs
        if old is None or old.key != self.key:
            return None
        k = self.first_change(old)
        if k >= last.stopped and last.lost is not None:
            return ("done", last.lost)
        best = max((c for c in last.states if c <= k), default=None)
        if best is None:
            return None
        fill, lost, look = last.states[best]
        return (best, fill, lost, look)


def _level_plans(result):
    """The rate plans of every pass at every Monte Carlo level, packed (:func:`contactplan.link.recorder.
    pack_plans`; row ``level * passes + pass index``), and {row: profile} of the level profiles without a
    plan (left to :func:`contactplan.link.recorder.plan_steps`); kept on the result."""
    from contactplan.link.recorder import pack_plans

    memo = _memo(result)
    got = memo.get("level_plans")
    if got is None or got[0] != len(result.passes):
        profs, bare = [], {}
        for li, p_pct in enumerate(LEVELS_P):
            lv = cached_profiles_at(result, 100.0 - p_pct)
            for i, p in enumerate(result.passes):
                pr = lv.get(id(p))
                if pr is not None and pr.plan_rates_kbps is None:
                    bare[li * len(result.passes) + i] = pr
                profs.append(pr)
        got = (len(result.passes), *pack_plans(profs), bare)
        memo["level_plans"] = got
    return got[1:]


#: pieces whose level steps are kept per result (a few plans' worth; cleared beyond)
_STEP_MEMO_MAX = 50000


def _level_steps(result, pieces, piece_col):
    """Rate steps of every piece at every Monte Carlo level: arrays (e0, e1, rate kbit/s, level index or -1
    for a piece not in weather (the same steps at every level), piece index), pieces in order, each piece's
    levels in order. Kept per piece on the result (its passes and profiles do not change between checks),
    so a check after an edit computes only the pieces that changed."""
    from contactplan.link.recorder import _merge_steps, steps_of, steps_of_rows

    memo = _memo(result).setdefault("level_steps", {})
    if len(memo) > _STEP_MEMO_MAX:
        memo.clear()
    own = result.profiles or {}
    keys = [(s0, s1, id(p)) for s0, s1, p, _k in pieces]
    missing = [j for j, key in enumerate(keys) if key not in memo]
    if missing:
        n_lv, n_p = len(LEVELS_P), len(result.passes)
        E, R, ne, nr, bare = _level_plans(result)
        # queries in (piece, level) order: weather pieces on the packed plans of every level, the rest
        # (a piece not in weather on its own profile; a level profile without a plan) one by one
        rows, q_a, q_b, q_id = [], [], [], []
        o_prof, o_a, o_b, o_id = [], [], [], []
        q_piece, q_level = [], []
        for j in missing:
            s0, s1, p, _k = pieces[j]
            col = piece_col[j]
            if col >= 0:
                for li in range(n_lv):
                    row = li * n_p + col
                    if row in bare:
                        o_prof.append(bare[row]), o_a.append(s0), o_b.append(s1), o_id.append(len(q_piece))
                    else:
                        rows.append(row), q_a.append(s0), q_b.append(s1), q_id.append(len(q_piece))
                    q_piece.append(j), q_level.append(li)
            elif own.get(id(p)) is not None:
                o_prof.append(own[id(p)]), o_a.append(s0), o_b.append(s1), o_id.append(len(q_piece))
                q_piece.append(j), q_level.append(-1)
        parts = []
        if rows:
            ix = np.asarray(rows, dtype=np.int64)
            parts.append(steps_of_rows(E[ix], R[ix], ne[ix], nr[ix], np.asarray(q_a), np.asarray(q_b), q_id))
        if o_prof:
            a, b, rate, qj = steps_of(o_prof, o_a, o_b)
            parts.append((a, b, rate, np.asarray(o_id, dtype=np.int64)[qj]))
        a, b, rate, qj = _merge_steps(parts)
        pj = np.asarray(q_piece, dtype=np.int64)[qj]
        lv = np.asarray(q_level, dtype=np.int64)[qj]
        cut = np.searchsorted(pj, missing + [len(pieces)])
        for i, j in enumerate(missing):
            lo, hi = cut[i], cut[i + 1]
            memo[keys[j]] = (a[lo:hi], b[lo:hi], rate[lo:hi], lv[lo:hi])
    got = [memo[key] for key in keys]
    if not got:
        z = np.zeros(0)
        return z, z, z, np.zeros(0, dtype=np.int64), np.zeros(0, dtype=np.int64)
    counts = [g[0].size for g in got]
    piece = np.repeat(np.arange(len(got)), counts)
    return (np.concatenate([g[0] for g in got]), np.concatenate([g[1] for g in got]),
            np.concatenate([g[2] for g in got]), np.concatenate([g[3] for g in got]), piece)


def fill_over_draws(edges, rates_kbps, rec, decide: bool = False) -> np.ndarray:
    """Gigabits lost per draw: :func:`contactplan.link.recorder.simulate_recorder`'s recursion (same
    operations in the same order) over the cells ``edges`` with ``rates_kbps`` of shape (draws, cells)."""
    d_rates = np.asarray(rates_kbps, dtype=float) * 1e-6
    dmax = d_rates.max(axis=0) if d_rates.size else np.zeros(max(len(edges) - 1, 0))
    return _recursion(edges, lambda k: d_rates[:, k], d_rates.shape[0], rec, decide, dmax)


#: cells between two looks at whether every draw is decided (``decide=True``)
_DECIDE_EVERY = 32


def _recursion(edges, column, n: int, rec, decide: bool = False, dmax_gbps=None, resume=None,
               run: _Run | None = None) -> np.ndarray:
    """The recorder's recursion over draws: ``column(k)`` gives cell k's downlink rates (Gbit/s) per draw (an
    array of ``n``, or one number for every draw), ``dmax_gbps`` their highest per cell. A cell where every
    draw stays clear of empty and full by far more than rounding (:func:`_clear_margin`) takes the plain
    step only (the branches would all choose it); branches no draw takes are not evaluated. ``resume``: a
    state kept by an earlier ``run`` on the same cells up to there (see :class:`_RunInputs`); ``run`` keeps
    this one's states (the same numbers as a run from the start: the states are those it would reach)."""
    cap = float(rec.capacity_gbit)
    gen = float(rec.generation_kbps) * 1e-6
    fill = np.full(n, float(rec.initial_gbit))
    lost = np.zeros(n)
    if fill[0] > cap if n else False:
        lost += fill - cap
        fill[:] = cap
    e = np.asarray(edges, dtype=float)
    cells = e.size - 1
    if cells <= 0 or n == 0:
        return lost
    dts = np.diff(e)
    margins = _clear_margin(cap, gen, np.zeros(cells) if dmax_gbps is None else dmax_gbps, dts).tolist()
    # a loss above this stays above the tolerance whatever rounding the remaining cells add (each cell's
    # increment is rounded by a few ulps of the capacity plus the cell's generation)
    span = float(e[-1] - e[0])
    sure = LOST_TOLERANCE_GBIT + 16 * np.finfo(float).eps * (cells * (cap + 1.0) + gen * span)
    look = _DECIDE_EVERY
    first = 0
    if resume is not None:
        first, fill, lost, look = resume[0], resume[1].copy(), resume[2].copy(), resume[3]
    el = e.tolist()
    stopped = cells
    keep = run.states if run is not None else None
    with np.errstate(divide="ignore", invalid="ignore"):
        for k in range(first, cells):
            if keep is not None and k % CHECKPOINT_CELLS == 0:
                keep[k] = (fill, lost, look)  # arrays are never changed in place below
            dt = el[k + 1] - el[k]
            if dt <= 0:
                continue
            d = column(k)
            net = gen - d
            f0 = fill
            plain = f0 + net * dt
            m = margins[k]
            if plain.min() > m and plain.max() < cap - m:
                fill = plain
                continue
            if isinstance(net, float):  # one rate for every draw: only its sign's branch can be taken
                full = (cap - f0) / net < dt if net > 0 else None
                empty = f0 / -net < dt if net < 0 else None
            else:
                full = (net > 0) & ((cap - f0) / net < dt)
                empty = ~full & (net < 0) & (f0 / -net < dt)
            if full is not None and not full.any():
                full = None
            over = plain > cap
            if full is not None:
                over &= ~full
            if empty is not None:
                over &= ~empty
            if full is not None or over.any():
                inc = np.where(full, f0 + gen * dt - d * dt - cap, 0.0) if full is not None else 0.0
                lost = lost + inc + np.where(over, plain - cap, 0.0)
            new = np.clip(plain, 0.0, cap)
            if empty is not None:
                new = np.where(empty, 0.0, new)
            if full is not None:
                new = np.where(full, cap, new)
            fill = new
            if decide and k >= look:
                look = k + _DECIDE_EVERY
                if lost.min() > sure:
                    stopped = k + 1
                    break
    if run is not None:
        run.stopped, run.lost = stopped, lost
    return lost


def _clear_margin(cap: float, gen: float, d, dt):
    """Gigabits from empty and from full (per cell: highest rate ``d`` Gbit/s, length ``dt`` s) beyond which no
    branch of the recursion can differ from the plain step f + (gen - d) dt: about a million times the
    rounding of its comparisons (of the capacity and the cell's volumes)."""
    return 1e-9 * (cap + (gen + np.asarray(d, dtype=float)) * dt) + 1e-12
