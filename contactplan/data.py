"""Packaged data, in one place, never downloaded.

* Leap seconds and Earth-orientation parameters (UT1-UTC, polar motion) come
  from the ``astropy-iers-data`` package (IERS Bulletin A ``finals2000A.all``
  and ``Leap_Second.dat``).
* The planetary ephemeris (JPL DE421) comes from ``skyfield-data``.
* :func:`configure_astropy` makes astropy use the packaged tables and never
  reach for the network; call it before any astropy time/coordinate work.

Past the end of the Earth-orientation predictions the last values are held and
one plain warning is issued (:class:`EOPWarning`), instead of failing. Past the
expiry date of the leap-second table no new leap second is assumed, and the
geometry says so once (:class:`LeapSecondWarning`).
"""

from __future__ import annotations

import functools
import re
import warnings
from pathlib import Path

import numpy as np


class EOPWarning(UserWarning):
    """Earth-orientation values are extrapolated past the packaged table."""


class LeapSecondWarning(UserWarning):
    """Times lie past the expiry date of the packaged leap-second table."""


class NetworkAccessWarning(UserWarning):
    """Something tried to reach the network; tests turn this into an error."""


@functools.lru_cache(maxsize=None)
def _package_dir(name: str) -> Path:
    """Folder of an installed package, found without importing it (nor ``importlib.resources``' readers,
    which take milliseconds to import); ``importlib.resources`` where the package is not a plain folder."""
    from importlib.util import find_spec

    try:
        spec = find_spec(name)
        for loc in (spec.submodule_search_locations or []) if spec is not None else []:
            if Path(loc).is_dir():
                return Path(loc)
    except (ImportError, ValueError):
        pass
    from importlib import resources

    return Path(str(resources.files(name)))


def _iers_dir() -> Path:
    return _package_dir("astropy_iers_data") / "data"


def skyfield_data_dir() -> Path:
    """Folder holding ``de421.bsp`` (and an older ``finals2000A.all`` we do not use)."""
    return _package_dir("skyfield_data") / "data"


@functools.lru_cache(maxsize=1)
def leap_second_table() -> tuple[np.ndarray, np.ndarray, str]:
    """Return (mjd_utc, tai_minus_utc_s, expires_text) from ``Leap_Second.dat``.

    Row *i* says that from 0h UTC of ``mjd_utc[i]`` on, TAI-UTC is ``tai_minus_utc_s[i]``.
    """
    path = _iers_dir() / "Leap_Second.dat"
    text = path.read_text()
    mjd, dat = [], []
    for line in text.splitlines():
        if line.startswith("#") or not line.strip():
            continue
        parts = line.split()
        mjd.append(float(parts[0]))
        dat.append(float(parts[4]))
    m = re.search(r"File expires on\s+(.+)", text)
    return np.array(mjd), np.array(dat), (m.group(1).strip() if m else "unknown")


@functools.lru_cache(maxsize=1)
def leap_second_expiry_mjd() -> float | None:
    """UTC MJD of the leap-second table's expiry date (None if the file does not say)."""
    import datetime as _dt

    text = leap_second_table()[2]
    try:
        day = _dt.datetime.strptime(" ".join(text.split()[:3]), "%d %B %Y").date()
    except ValueError:
        return None
    return float((day - _dt.date(1858, 11, 17)).days)


_EOP_COLUMNS = ("mjd_utc", "ut1_minus_utc_s", "xp_arcsec", "yp_arcsec")
EOP_CACHE_FORMAT = "contactplan-eop-1"  # bump when the parse or the layout changes


@functools.lru_cache(maxsize=1)
def eop_table() -> dict[str, np.ndarray]:
    """Earth-orientation parameters from the packaged IERS ``finals2000A.all``.

    Returns a dict of arrays: ``mjd_utc``, ``ut1_minus_utc_s``, ``xp_arcsec``,
    ``yp_arcsec`` (Bulletin A values, observed then predicted), daily at 0h UTC.

    Parsing the 3.5 MB text costs about 0.1 s, so the four columns are kept as a
    compact binary file in the user cache folder (:func:`contactplan.paths.user_cache_dir`)
    and read back in about a millisecond. That file is used only when its header
    names the same source file (path, size, modification time) and cache format,
    and its data match the SHA-256 in the header; anything else is parsed again
    and the file rewritten (quietly skipped when the folder cannot be written).
    """
    path = _iers_dir() / "finals2000A.all"
    try:
        st = path.stat()
        key = {"format": EOP_CACHE_FORMAT, "source": str(path), "size": st.st_size, "mtime_ns": st.st_mtime_ns}
    except OSError:
        key = None
    cached = _eop_cache_load(key) if key else None
    if cached is not None:
        return cached
    tab = _parse_finals(path)
    if key:
        _eop_cache_store(key, tab)
    return tab


def _parse_finals(path: Path) -> dict[str, np.ndarray]:
    mjd, dut1, xp, yp = [], [], [], []
    with open(path, "r") as fh:
        for line in fh:
            # Fixed columns (ReadMe.finals2000A): MJD 8-15, PM-x 19-27, PM-y 38-46, UT1-UTC 59-68.
            if len(line) < 68:
                continue
            s_dut1 = line[58:68].strip()
            if not s_dut1:
                continue
            mjd.append(float(line[7:15]))
            xp.append(float(line[18:27]) if line[18:27].strip() else 0.0)
            yp.append(float(line[37:46]) if line[37:46].strip() else 0.0)
            dut1.append(float(s_dut1))
    return dict(zip(_EOP_COLUMNS, (np.array(mjd), np.array(dut1), np.array(xp), np.array(yp))))


def _eop_cache_path() -> Path:
    from contactplan.cachefile import path_for

    return path_for("eop", "finals2000A.bin")


def _eop_cache_load(key: dict) -> dict[str, np.ndarray] | None:
    """The cached table when its header matches ``key`` and its checksum holds, else None."""
    from contactplan.cachefile import load

    cols = load(_eop_cache_path(), key)
    if cols is None or cols.ndim != 2 or cols.shape[0] != len(_EOP_COLUMNS) or cols.shape[1] < 2:
        return None
    if not np.all(np.isfinite(cols)) or np.any(np.diff(cols[0]) <= 0):
        return None
    return {name: cols[i].copy() for i, name in enumerate(_EOP_COLUMNS)}


def _eop_cache_store(key: dict, tab: dict[str, np.ndarray]) -> bool:
    from contactplan.cachefile import store

    return store(_eop_cache_path(), key, np.stack([np.asarray(tab[c], dtype=float) for c in _EOP_COLUMNS]))


def eop_source_key() -> dict | None:
    """What identifies the packaged Earth-orientation and leap-second files (for caches built from them)."""
    try:
        out = {"format": EOP_CACHE_FORMAT}
        for name in ("finals2000A.all", "Leap_Second.dat"):
            st = (_iers_dir() / name).stat()
            out[name] = [str(_iers_dir() / name), st.st_size, st.st_mtime_ns]
        return out
    except OSError:
        return None


_warned_eop = False


def _mjd_date(mjd: float) -> str:
    """The calendar date (YYYY-MM-DD) of a modified Julian day."""
    import datetime as dt

    return (dt.date(1858, 11, 17) + dt.timedelta(days=int(mjd))).isoformat()


def _warn_eop_once(last_mjd: float) -> None:
    global _warned_eop
    if not _warned_eop:
        _warned_eop = True
        warnings.warn(
            f"Earth-orientation predictions end on {_mjd_date(last_mjd)} (MJD {last_mjd:.0f}); later times "
            "use the last "
            "values (UT1 error grows by about 1 ms a day). Update the astropy-iers-data package.",
            EOPWarning,
            stacklevel=3,
        )


_warned_leap = False


def _warn_leap_once() -> None:
    global _warned_leap
    if not _warned_leap:
        _warned_leap = True
        warnings.warn(
            f"the packaged leap-second table is valid until {leap_second_table()[2]}; later UTC times "
            "assume no new leap second (they would be 1 s off if one is announced). "
            "Update the astropy-iers-data package.",
            LeapSecondWarning,
            stacklevel=3,
        )


def earth_orientation(mjd_utc: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """UT1-UTC (s), polar motion x and y (arcsec) at UTC MJDs, linearly interpolated.

    Outside the table the end values are held; past its end one warning is issued, and
    one more past the expiry date of the leap-second table.
    UT1-UTC jumps by one second at leap seconds, so interpolation is done on
    UT1-TAI, which is continuous, then converted back.
    """
    tab = eop_table()
    mjd_utc = np.asarray(mjd_utc, dtype=float)
    if mjd_utc.size and np.nanmax(mjd_utc) > tab["mjd_utc"][-1] + 1.0:
        _warn_eop_once(tab["mjd_utc"][-1])
    expiry = leap_second_expiry_mjd()
    if mjd_utc.size and expiry is not None and np.nanmax(mjd_utc) > expiry:
        _warn_leap_once()
    leap_mjd, leap_dat, _ = leap_second_table()
    dat_tab = leap_dat[np.searchsorted(leap_mjd, tab["mjd_utc"], side="right") - 1]
    ut1_tai_tab = tab["ut1_minus_utc_s"] - dat_tab
    dat = leap_dat[np.clip(np.searchsorted(leap_mjd, mjd_utc, side="right") - 1, 0, None)]
    ut1_tai = np.interp(mjd_utc, tab["mjd_utc"], ut1_tai_tab)
    xp = np.interp(mjd_utc, tab["mjd_utc"], tab["xp_arcsec"])
    yp = np.interp(mjd_utc, tab["mjd_utc"], tab["yp_arcsec"])
    return ut1_tai + dat, xp, yp


@functools.lru_cache(maxsize=1)
def planetary_ephemeris():
    """The packaged JPL DE421 kernel, opened with skyfield (never downloaded)."""
    import atexit

    from skyfield.api import load_file

    kernel = load_file(str(skyfield_data_dir() / "de421.bsp"))
    atexit.register(kernel.close)  # no "unclosed file de421.bsp" at exit
    return kernel


@functools.lru_cache(maxsize=1)
def skyfield_timescale():
    """A skyfield timescale built from the packaged tables (no download, no expiry nag)."""
    from skyfield.api import load

    # builtin=True uses skyfield's own bundled leap seconds and Delta T; UT1 for
    # station rotation is applied by contactplan.geometry from eop_table().
    return load.timescale(builtin=True)


_astropy_done = False


def configure_astropy() -> None:
    """Point astropy at the packaged IERS tables and forbid downloads. Idempotent."""
    global _astropy_done
    if _astropy_done:
        return
    from astropy.utils import iers
    from astropy.utils.data import conf as data_conf

    iers.conf.auto_download = False
    iers.conf.auto_max_age = None
    iers.conf.iers_degraded_accuracy = "warn"
    data_conf.allow_internet = False
    _astropy_done = True
