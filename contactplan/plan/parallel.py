"""Large searches on every core: passes and link profiles split by station and by span.

:func:`find_passes` and :func:`link_profiles` give exactly what
:func:`contactplan.geometry.passes.find_passes` and
:func:`contactplan.plan.pipeline.link_profiles` give (the tests compare them field by field),
but hand pieces of the work to a ``concurrent.futures`` executor when the work is large:

* the pass search when stations x days reaches :data:`MIN_STATION_DAYS` (a year for six
  stations stays on one core: starting workers would cost more than they save);
* the link profiles when the passes reach :data:`MIN_PASSES`.

Pieces. The stations are dealt into groups and the window into pieces of whole days, each
piece searched from a few grid steps before its start to past the LOS of every pass whose AOS
it owns, on the grid of the whole span (see
:func:`contactplan.geometry.passes.passes_in_piece`); a pass still under way at a piece's
end widens that piece and is searched again. Link profiles are split by station group, with
the node grid of the whole set of passes.

Executors. By default a ``ProcessPoolExecutor`` with one worker per core (``os.cpu_count()``),
started for the call and closed after it (``spawn`` when other threads run, e.g. inside the
planner, so no thread's state is forked). Any ``concurrent.futures.Executor`` can be passed
instead, for example a cluster's (see the README): the work functions and their arguments are
plain picklable module-level objects.
"""

from __future__ import annotations

import math
import os

import numpy as np

#: stations x days from which the pass search is split (a year for 12 stations)
MIN_STATION_DAYS = 4000.0
#: passes from which the link profiles are split
MIN_PASSES = 8000
#: the window is cut into pieces of this many days at least
MIN_PIECE_DAYS = 30.0
#: a piece starts this long before the part it owns (several coarse grid steps)
LEAD_S = 4 * 3600.0
#: and ends this long after it at first, then again this much later while an owned pass is under way
TAIL_S = 2 * 86400.0
DAY_S = 86400.0


def worker_count() -> int:
    """Cores available to this process."""
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except (AttributeError, OSError):
        return max(1, os.cpu_count() or 1)


class _OwnPool:
    """A process pool for one call (closed on exit), or the caller's executor left open."""

    def __init__(self, executor, workers):
        self.given = executor
        self.workers = workers
        self.pool = None

    def __enter__(self):
        if self.given is not None:
            return self.given
        import multiprocessing
        import threading
        from concurrent.futures import ProcessPoolExecutor

        ctx = multiprocessing.get_context("spawn" if threading.active_count() > 1 else None)
        self.pool = ProcessPoolExecutor(max_workers=self.workers, mp_context=ctx)
        return self.pool

    def __exit__(self, *exc):
        if self.pool is not None:
            self.pool.shutdown(wait=True, cancel_futures=True)
        return False


def _groups(items: list, n: int) -> list[list]:
    """``items`` dealt into ``n`` groups of near-equal size (order kept inside each group)."""
    n = max(1, min(n, len(items)))
    return [items[i::n] for i in range(n)]


# ---------------------------------------------------------------- passes
def _piece_task(scenario, ephemeris, station_ids, span, own_lo, own_hi):
    """Passes whose AOS lies in [own_lo, own_hi) for these stations, complete (run in a worker)."""
    from contactplan.geometry.passes import passes_in_piece

    stations = [scenario.station(sid) for sid in station_ids]
    lo = max(span[0], own_lo - LEAD_S)
    hi = min(span[1], own_hi + TAIL_S)
    while True:
        found = passes_in_piece(scenario, ephemeris, stations, span, lo, hi, own_lo, own_hi)
        if hi >= span[1] or not any(p.clipped_end for p in found):
            return found
        hi = min(span[1], hi + TAIL_S)


def pass_pieces(spans, station_ids, workers: int):
    """The pieces of a split search: [(station ids, span, own_lo, own_hi)]."""
    from contactplan.geometry.passes import PRE_STEP_S

    groups = _groups(list(station_ids), workers)
    # enough pieces in time that every worker has two or more to do, none shorter than MIN_PIECE_DAYS
    want = max(1, math.ceil(2 * workers / len(groups)))
    pieces = []
    for a, b in spans:
        days = (b - a) / DAY_S
        n = max(1, min(want, int(days // MIN_PIECE_DAYS)))
        # cut at whole multiples of the coarse sizing step from the span start (grid nodes)
        cuts = [a] + [a + round((b - a) * i / n / PRE_STEP_S) * PRE_STEP_S for i in range(1, n)] + [b]
        for g in groups:
            for lo, hi in zip(cuts[:-1], cuts[1:]):
                if hi > lo:
                    pieces.append((g, (a, b), lo, hi if hi < b else math.inf))
    return pieces


def should_split_passes(n_stations: int, days: float, executor=None, workers: int | None = None) -> bool:
    """True when the pass search is worth splitting (or an executor was given)."""
    if executor is not None:
        return True
    return (workers or worker_count()) > 1 and n_stations * days >= MIN_STATION_DAYS


def find_passes(scenario, ephemeris, start_tt=None, end_tt=None, stations=None, progress=None, cancel=None,
                executor=None, workers: int | None = None, split: bool | None = None):
    """:func:`contactplan.geometry.passes.find_passes`, split over an executor when the work is large.

    ``split`` forces (True) or forbids (False) the split; by default it follows
    :func:`should_split_passes`. ``executor``: any ``concurrent.futures.Executor``
    (default: a process pool for this call, ``workers`` processes, one per core).
    """
    from contactplan.errors import Cancelled
    from contactplan.geometry import passes as gp

    start, end, chosen, spans, _ = gp.prepare_search(scenario, ephemeris, start_tt, end_tt, stations)
    if not chosen:
        return []
    n_workers = workers or worker_count()
    days = sum(b - a for a, b in spans) / DAY_S
    if split is None:
        split = should_split_passes(len(chosen), days, executor, n_workers)
    if not split:
        return gp.find_passes(scenario, ephemeris, start, end, [s.id for s in chosen], progress, cancel)
    pieces = pass_pieces(spans, [s.id for s in chosen], n_workers)
    out = []
    with _OwnPool(executor, n_workers) as pool:
        futures = [pool.submit(_piece_task, scenario, ephemeris, g, span, lo, hi) for g, span, lo, hi in pieces]
        for i, fut in enumerate(futures):
            if cancel is not None and cancel():
                for f in futures:
                    f.cancel()
                raise Cancelled("pass search cancelled")
            out.extend(fut.result())
            if progress is not None:
                progress((i + 1) / len(futures))
    _reattach(scenario, out)
    out.sort(key=lambda p: (p.aos_tt, p.station))
    return out


def _reattach(scenario, passes) -> None:
    """Outages of passes that came back from a worker are copies: point them at the scenario's records."""
    for p in passes:
        if p.outages:
            st = scenario.station(p.station)
            p.outages = [o for o in st.outages if o.start_tt < p.los_tt and o.end_tt > p.aos_tt]


# ---------------------------------------------------------------- link profiles
def _profile_task(scenario, ephemeris, passes, ref_tt):
    """Link columns and every link's profiles of these passes (one station group; run in a worker)."""
    from contactplan.link.volume import annotate_links

    per_link = annotate_links(scenario, passes, ephemeris, ref_tt=ref_tt) or {}
    cols = [(p.max_rate_kbps, p.volume_gbit) for p in passes]
    prof = {lid: {i: got[id(p)] for i, p in enumerate(passes) if id(p) in got} for lid, got in per_link.items()}
    return cols, prof


def all_link_profiles(scenario, passes, ephemeris, executor=None, workers: int | None = None,
                      split: bool | None = None) -> tuple[dict, dict]:
    """:func:`contactplan.plan.pipeline.all_link_profiles`, split by station over an executor when large."""
    from contactplan.link.volume import playback_profiles
    from contactplan.plan.pipeline import all_link_profiles as one_core

    if not passes or not any(lk.has_budget for lk in scenario.spacecraft.links):
        return {}, {}
    n_workers = workers or worker_count()
    if split is None:
        split = executor is not None or (n_workers > 1 and len(passes) >= MIN_PASSES)
    if not split:
        return one_core(scenario, passes, ephemeris)
    ref = float(np.min([p.aos_tt for p in passes]))
    by_station: dict[str, list] = {}
    for p in passes:
        by_station.setdefault(p.station, []).append(p)
    groups = [sum((by_station[s] for s in g), []) for g in _groups(list(by_station), n_workers)]
    per_link: dict = {}
    with _OwnPool(executor, n_workers) as pool:
        futures = [pool.submit(_profile_task, scenario, ephemeris, g, ref) for g in groups]
        for g, fut in zip(groups, futures):
            cols, prof = fut.result()
            for p, (rate, volume) in zip(g, cols):
                p.max_rate_kbps, p.volume_gbit = rate, volume
            for lid, got in prof.items():
                per_link.setdefault(lid, {}).update({id(g[i]): pr for i, pr in got.items()})
    return playback_profiles(scenario, passes, per_link), per_link


def link_profiles(scenario, passes, ephemeris, executor=None, workers: int | None = None,
                  split: bool | None = None) -> dict:
    """:func:`contactplan.plan.pipeline.link_profiles` (playback-link profiles), split like :func:`all_link_profiles`."""
    return all_link_profiles(scenario, passes, ephemeris, executor, workers, split)[0]
