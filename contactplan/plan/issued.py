"""The issued revisions of a plan: ``NAME.rN.toml`` beside the scenario ``NAME.toml``.

Issuing requests (:mod:`contactplan.commands.requests`) keeps the scenario as the station
network was told it in revision N. The latest of these files is what the network knows:
the next issue compares the plan with it (what was added, changed, cancelled or deleted),
and ``frozen-edited`` lists the frozen bookings that differ from it.
"""

from __future__ import annotations

import os
import re
from pathlib import Path

_CACHE: dict = {}  # resolved path -> ((size, mtime_ns), Scenario)
_CACHE_MAX = 8


def issued_path(scenario_path: str | Path, revision: int) -> Path:
    """``NAME.rN.toml`` beside ``NAME.toml`` (any extension: the stem is kept)."""
    p = Path(scenario_path)
    return p.with_name(f"{p.stem}.r{int(revision)}.toml")


def issued_revisions(scenario_path: str | Path) -> list[tuple[int, Path]]:
    """(N, path) of every ``NAME.rN.toml`` beside the scenario, by N."""
    p = Path(scenario_path)
    folder = p.parent if str(p.parent) else Path(".")
    pattern = re.compile(rf"^{re.escape(p.stem)}\.r(\d{{1,9}})\.toml$")
    out = []
    try:
        names = os.listdir(folder)
    except OSError:
        return []
    for name in names:
        mm = pattern.match(name)
        if mm and (folder / name).is_file():
            out.append((int(mm.group(1)), folder / name))
    return sorted(out)


def latest_issued_path(scenario_path) -> tuple[int, Path] | None:
    revs = issued_revisions(scenario_path) if scenario_path is not None else []
    return revs[-1] if revs else None


def load_issued(path: Path):
    """The scenario in an issued file (kept while the file's size and time stay the same)."""
    import warnings

    from contactplan.scenario.load import load_scenario

    path = Path(path)
    try:
        st = path.stat()
        key = (st.st_size, st.st_mtime_ns)
    except OSError:
        key = None
    real = str(path.resolve())
    got = _CACHE.get(real)
    if got is not None and key is not None and got[0] == key:
        return got[1]
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # its unknown keys were said when it was the plan
        sc = load_scenario(path)
    if key is not None:
        if len(_CACHE) >= _CACHE_MAX:
            _CACHE.pop(next(iter(_CACHE)))
        _CACHE[real] = (key, sc)
    return sc


def latest_issued(scenario):
    """(N, the scenario as issued in revision N) of the latest ``NAME.rN.toml`` beside ``scenario``'s file,
    or None (no file, or the scenario has no path). A file that cannot be read raises its InputError."""
    got = latest_issued_path(getattr(scenario, "path", None))
    if got is None:
        return None
    return got[0], load_issued(got[1])
