"""Time: UTC at the edges, one internal representation inside.

Internal time
    float64 **seconds of TT since J2000.0** (2000-01-01T12:00:00 TT), in names
    the suffix ``_tt`` (``aos_tt``, ``start_tt``). Elapsed time is plain
    subtraction, leap seconds included. Resolution is better than 1 microsecond
    over this century.

Edges
    UTC text, ISO 8601 with ``Z``: calendar ``2027-01-12T00:00:00.000Z`` or day
    of year ``2027-012T00:00:00Z`` (CCSDS 301.0-B ASCII time code B). A leap
    second is written ``23:59:60``.

Leap seconds come from the packaged IERS table (:mod:`contactplan.data`).
Times before 1972 (no integral-second UTC) are refused.
"""

from __future__ import annotations

import bisect
import datetime as _dt
import functools
import math
import re

import numpy as np

from contactplan.data import leap_second_table
from contactplan.errors import InputError

TT_MINUS_TAI_S = 32.184
MJD_J2000 = 51544.5  # MJD of J2000.0 (in TT)
DAY_S = 86400.0
_MJD_1972 = 41317.0

_ISO_RE = re.compile(
    r"^\s*(\d{4})-(?:(\d{2})-(\d{2})|(\d{3}))"
    r"(?:[Tt ](\d{2}):(\d{2})(?::(\d{2})(?:\.(\d+))?)?)?\s*(Z|z|UTC|[+-]\d{2}:?\d{2})?\s*$"
)


# ---------------------------------------------------------------- calendar
def _days_from_civil(y, m, d):
    """Days since 1970-01-01 for proleptic Gregorian dates (vectorised, H. Hinnant's algorithm)."""
    y = np.asarray(y, dtype=np.int64) - (np.asarray(m) <= 2)
    m = np.asarray(m, dtype=np.int64)
    d = np.asarray(d, dtype=np.int64)
    era = np.floor_divide(y, 400)
    yoe = y - era * 400
    mp = (m + 9) % 12
    doy = (153 * mp + 2) // 5 + d - 1
    doe = yoe * 365 + yoe // 4 - yoe // 100 + doy
    return era * 146097 + doe - 719468


def _civil_from_days(z):
    z = np.asarray(z, dtype=np.int64) + 719468
    era = np.floor_divide(z, 146097)
    doe = z - era * 146097
    yoe = (doe - doe // 1460 + doe // 36524 - doe // 146096) // 365
    y = yoe + era * 400
    doy = doe - (365 * yoe + yoe // 4 - yoe // 100)
    mp = (5 * doy + 2) // 153
    d = doy - (153 * mp + 2) // 5 + 1
    m = np.where(mp < 10, mp + 3, mp - 9)
    return y + (m <= 2), m, d


_MJD_UNIX = 40587  # MJD of 1970-01-01


def _tai_utc_at_mjd(mjd_utc):
    mjd_tab, dat_tab, _ = leap_second_table()
    idx = np.searchsorted(mjd_tab, np.floor(mjd_utc), side="right") - 1
    return dat_tab[np.clip(idx, 0, None)]


def _tt_change_points():
    """TT instants at which TAI-UTC changes, and the new TAI-UTC, as arrays."""
    mjd_tab, dat_tab, _ = leap_second_table()
    return (mjd_tab - MJD_J2000) * DAY_S + dat_tab + TT_MINUS_TAI_S, mjd_tab, dat_tab


# ---------------------------------------------------------------- UTC <-> TT
def utc_to_tt(year, month, day, hour=0, minute=0, second=0.0):
    """TT seconds since J2000 from UTC calendar fields (arrays broadcast).

    ``second`` may reach 60.999 on a leap-second day.
    """
    mjd = _days_from_civil(year, month, day) + _MJD_UNIX
    if np.any(np.asarray(mjd) < _MJD_1972):
        raise InputError("times before 1972-01-01 are not supported (UTC had no leap-second rule then)")
    sod = np.asarray(hour) * 3600.0 + np.asarray(minute) * 60.0 + np.asarray(second, dtype=float)
    return (mjd - MJD_J2000) * DAY_S + sod + _tai_utc_at_mjd(mjd) + TT_MINUS_TAI_S


def tt_to_utc_fields(tt):
    """Split TT seconds into UTC (mjd_day:int, seconds_of_day:float); seconds reach 86400+ in a leap second."""
    tt = np.asarray(tt, dtype=float)
    change_tt, mjd_tab, dat_tab = _tt_change_points()
    idx = np.clip(np.searchsorted(change_tt, tt, side="right") - 1, 0, None)
    dat = dat_tab[idx]
    utc_s = tt - TT_MINUS_TAI_S - dat  # seconds since MJD_J2000 on a 86400-s day count
    mjd_f = utc_s / DAY_S + MJD_J2000
    mjd_day = np.floor(mjd_f).astype(np.int64)
    sod = utc_s - (mjd_day - MJD_J2000) * DAY_S
    # Inside a positive leap second: [next change - step, next change) belongs to 23:59:60 of the previous day.
    nxt = np.clip(idx + 1, 0, len(change_tt) - 1)
    step = dat_tab[nxt] - dat
    in_leap = (idx + 1 < len(change_tt)) & (step > 0) & (tt >= change_tt[nxt] - step) & (tt < change_tt[nxt])
    if np.any(in_leap):
        mjd_day = np.where(in_leap, mjd_day - 1, mjd_day)
        sod = np.where(in_leap, sod + DAY_S, sod)
    return mjd_day, sod


def tt_to_mjd_utc(tt):
    """Approximate UTC MJD (float) for table look-ups such as Earth orientation."""
    mjd_day, sod = tt_to_utc_fields(tt)
    return mjd_day + np.minimum(sod, DAY_S - 1e-6) / DAY_S


def tai_minus_utc(tt):
    """TAI-UTC in seconds at TT instants."""
    change_tt, _, dat_tab = _tt_change_points()
    idx = np.clip(np.searchsorted(change_tt, np.asarray(tt, dtype=float), side="right") - 1, 0, None)
    return dat_tab[idx]


def tdb_minus_tt(tt):
    """TDB-TT in seconds (USNO Circular 179, eq. 2.6; good to about 10 microseconds)."""
    t = np.asarray(tt, dtype=float) / (DAY_S * 36525.0)
    return (0.001657 * np.sin(628.3076 * t + 6.2401)
            + 0.000022 * np.sin(575.3385 * t + 4.2970)
            + 0.000014 * np.sin(1256.6152 * t + 6.1969)
            + 0.000005 * np.sin(606.9777 * t + 4.0212)
            + 0.000005 * np.sin(52.9691 * t + 0.4444)
            + 0.000002 * np.sin(21.3299 * t + 5.5431)
            + 0.000010 * t * np.sin(628.3076 * t + 4.2490))


def tdb_to_tt(tdb):
    """TT seconds from TDB seconds since J2000 (one fixed-point step, error < 1 ns)."""
    tdb = np.asarray(tdb, dtype=float)
    return tdb - tdb_minus_tt(tdb - tdb_minus_tt(tdb))


def convert_to_tt(seconds_since_j2000, scale: str):
    """Seconds since J2000.0 counted in ``scale`` (TT, TAI, GPS, TDB; UTC not allowed here) -> TT.

    "Seconds since J2000 in scale X" means the epoch 2000-01-01T12:00:00 read in X.
    """
    s = np.asarray(seconds_since_j2000, dtype=float)
    scale = scale.upper()
    if scale == "TT":
        return s
    if scale == "TAI":
        return s + TT_MINUS_TAI_S
    if scale == "GPS":
        return s + 19.0 + TT_MINUS_TAI_S
    if scale == "TDB":
        return tdb_to_tt(s)
    raise ValueError(f"unknown time scale {scale!r}")


# ---------------------------------------------------------------- parsing
def parse_utc(text: str, *, scale: str = "UTC") -> float:
    """Parse ISO 8601 calendar or day-of-year time text into TT seconds.

    Accepts ``2027-01-12T00:00:00Z``, ``2027-012T00:00:00.5Z``, a missing ``Z``,
    lowercase ``t`` and ``z`` (RFC 3339 section 5.6 allows them), a space for ``T``,
    a date alone (midnight) and, with ``scale`` other than UTC, a time read in
    that scale (TAI, TT, GPS, TDB) as OEM files carry. Offsets other than zero
    are refused: operations work in UTC.
    """
    if not isinstance(text, str):
        raise InputError(f"expected a UTC time text like 2027-01-12T00:00:00Z, got {text!r}")
    m = _ISO_RE.match(text)
    if not m:
        raise InputError(f"not a UTC time: {text.strip()[:40]!r} (use 2027-01-12T00:00:00Z or 2027-012T00:00:00Z)")
    y, mo, d, doy, hh, mi, ss, frac, zone = m.groups()
    if zone and zone.upper() not in ("Z", "UTC", "+00:00", "+0000", "-00:00"):
        raise InputError(f"time {text.strip()!r} has offset {zone}: give it in UTC with Z")
    year = int(y)
    if doy is not None:
        nday = int(doy)
        leap = (year % 4 == 0 and year % 100 != 0) or year % 400 == 0
        if not 1 <= nday <= (366 if leap else 365):
            raise InputError(f"day of year {nday} does not exist in {year}: {text.strip()!r}")
        base = _days_from_civil(year, 1, 1) + nday - 1
        year_i, month, day = (int(v) for v in _civil_from_days(base))
    else:
        year_i, month, day = year, int(mo), int(d)
        if not 1 <= month <= 12:
            raise InputError(f"month {month} does not exist: {text.strip()!r}")
        try:
            _dt.date(year_i, month, day)
        except ValueError:
            raise InputError(f"date does not exist: {text.strip()!r}") from None
    hour = int(hh or 0)
    minute = int(mi or 0)
    sec = float(ss or 0) + (float("0." + frac) if frac else 0.0)
    if hour > 23 or minute > 59 or sec >= 61:
        raise InputError(f"time of day out of range: {text.strip()!r}")
    scale = scale.upper()
    if scale == "UTC":
        if sec >= 60:
            # Only allowed in a real leap second.
            tt = float(utc_to_tt(year_i, month, day, hour, minute, sec))
            mjd_day, sod = tt_to_utc_fields(tt)
            if not (hour == 23 and minute == 59 and sod >= DAY_S):
                raise InputError(f"{text.strip()!r}: second 60 exists only in a leap second")
            return tt
        return float(utc_to_tt(year_i, month, day, hour, minute, sec))
    days = float(_days_from_civil(year_i, month, day) + _MJD_UNIX - MJD_J2000)
    s = days * DAY_S + hour * 3600.0 + minute * 60.0 + sec
    try:
        return float(convert_to_tt(s, scale))
    except ValueError as exc:
        raise InputError(str(exc)) from None


def from_datetime(value: _dt.datetime | _dt.date) -> float:
    """TT seconds from a Python datetime (naive taken as UTC; offsets must be zero)."""
    if isinstance(value, _dt.datetime):
        if value.tzinfo is not None and value.utcoffset() != _dt.timedelta(0):
            raise InputError(f"time {value.isoformat()} has a non-zero offset: give it in UTC with Z")
        return float(utc_to_tt(value.year, value.month, value.day, value.hour, value.minute,
                               value.second + value.microsecond * 1e-6))
    if isinstance(value, _dt.date):
        return float(utc_to_tt(value.year, value.month, value.day))
    raise InputError(f"expected a time, got {value!r}")


def parse_time_value(value) -> float:
    """A scenario time: UTC text or a TOML datetime, to TT seconds."""
    if isinstance(value, (_dt.datetime, _dt.date)):
        return from_datetime(value)
    return parse_utc(value)


def to_datetime(tt: float) -> _dt.datetime:
    """UTC datetime (aware) for one instant; a leap second is folded onto 23:59:59.999999."""
    mjd_day, sod = tt_to_utc_fields(float(tt))
    sod = float(min(sod, DAY_S - 1e-6))
    y, m, d = (int(v) for v in _civil_from_days(int(mjd_day) - _MJD_UNIX))
    return _dt.datetime(y, m, d, tzinfo=_dt.timezone.utc) + _dt.timedelta(seconds=round(sod, 6))


# ---------------------------------------------------------------- formatting
def _fields(tt, decimals: int):
    tt = np.asarray(tt, dtype=float)
    mjd_day, sod = tt_to_utc_fields(tt)
    q = 10 ** decimals
    units = np.round(sod * q).astype(np.int64)
    # Rounding may carry into the next day (never across a leap second, which keeps sod >= 86400).
    day_units = np.where(sod >= DAY_S, units + 1, int(DAY_S * q))  # allow 23:59:60.x
    over = (units >= day_units) & (sod < DAY_S)
    mjd_day = np.where(over, mjd_day + 1, mjd_day)
    units = np.where(over, units - int(DAY_S * q), units)
    leap = units >= int(DAY_S * q)
    whole = units // q
    fracs = units % q
    hh = np.where(leap, 23, whole // 3600)
    mm = np.where(leap, 59, (whole % 3600) // 60)
    ss = np.where(leap, 60, whole % 60)
    y, mo, d = _civil_from_days(mjd_day - _MJD_UNIX)
    return y, mo, d, hh, mm, ss, fracs, mjd_day


def format_utc(tt, decimals: int = 3, doy: bool = False):
    """UTC text with ``Z``: ``2027-01-12T00:00:00.000Z`` (or ``2027-012T...`` with ``doy``).

    Scalar in, str out; array in, list of str out. The array path builds every
    string at once from a matrix of ASCII digits (no Python loop per time).
    """
    if np.ndim(tt) == 0:
        return _format_one(float(tt), decimals, doy)
    arr = np.atleast_1d(np.asarray(tt, dtype=float)).ravel()
    if arr.size == 0:
        return []
    y, mo, d, hh, mm, ss, fr, mjd_day = _fields(arr, decimals)
    dash, colon = ord("-"), ord(":")
    if doy:
        jan1 = _days_from_civil(y, 1, 1) + _MJD_UNIX
        parts = [_digits(y, 4), dash, _digits(mjd_day - jan1 + 1, 3)]
    else:
        parts = [_digits(y, 4), dash, _digits(mo, 2), dash, _digits(d, 2)]
    parts += [ord("T"), _digits(hh, 2), colon, _digits(mm, 2), colon, _digits(ss, 2)]
    if decimals:
        parts += [ord("."), _digits(fr, decimals)]
    parts += [ord("Z"), ord("\n")]
    n = arr.size
    cols = [np.full((n, 1), p, dtype=np.uint8) if isinstance(p, int) else p for p in parts]
    text = np.concatenate(cols, axis=1).tobytes().decode("ascii").split("\n")  # one line per time
    text.pop()
    return text


def _digits(values, width: int) -> np.ndarray:
    """(N, width) ASCII digits of non-negative integers, zero padded (vectorised)."""
    v = np.asarray(values, dtype=np.int64).reshape(-1, 1)
    scale = 10 ** np.arange(width - 1, -1, -1, dtype=np.int64)
    return ((v // scale) % 10 + 48).astype(np.uint8)


@functools.lru_cache(maxsize=1)
def _change_lists():
    change_tt, _, dat_tab = _tt_change_points()
    return change_tt.tolist(), dat_tab.tolist()


def _civil_one(z: int):
    """Scalar twin of :func:`_civil_from_days` (days since 1970-01-01 -> y, m, d)."""
    z += 719468
    era = z // 146097
    doe = z - era * 146097
    yoe = (doe - doe // 1460 + doe // 36524 - doe // 146096) // 365
    doy = doe - (365 * yoe + yoe // 4 - yoe // 100)
    mp = (5 * doy + 2) // 153
    d = doy - (153 * mp + 2) // 5 + 1
    m = mp + 3 if mp < 10 else mp - 9
    return yoe + era * 400 + (m <= 2), m, d


def _days_one(y: int, m: int, d: int) -> int:
    """Scalar twin of :func:`_days_from_civil`."""
    y -= m <= 2
    era = y // 400
    yoe = y - era * 400
    doy = (153 * ((m + 9) % 12) + 2) // 5 + d - 1
    return era * 146097 + yoe * 365 + yoe // 4 - yoe // 100 + doy - 719468


def _format_one(tt: float, decimals: int, doy: bool) -> str:
    """Scalar path of :func:`format_utc` in plain Python.

    Same arithmetic as the array path (checked against it in the tests), without
    numpy calls: formatting one time at a time from a worker thread must not keep
    the GUI thread waiting (many tiny numpy calls hand the interpreter lock back
    and forth and starve the other thread).
    """
    change, dat_tab = _change_lists()
    idx = max(bisect.bisect_right(change, tt) - 1, 0)
    dat = dat_tab[idx]
    utc_s = tt - TT_MINUS_TAI_S - dat
    mjd_day = math.floor(utc_s / DAY_S + MJD_J2000)
    sod = utc_s - (mjd_day - MJD_J2000) * DAY_S
    if idx + 1 < len(change):
        step = dat_tab[idx + 1] - dat
        if step > 0 and change[idx + 1] - step <= tt < change[idx + 1]:
            mjd_day -= 1
            sod += DAY_S
    q = 10 ** decimals
    units = int(round(sod * q))
    day_units = units + 1 if sod >= DAY_S else int(DAY_S * q)
    if units >= day_units and sod < DAY_S:
        mjd_day += 1
        units -= int(DAY_S * q)
    leap = units >= int(DAY_S * q)
    whole, frac = divmod(units, q)
    if leap:
        hh, mm, ss = 23, 59, 60
    else:
        hh, mm, ss = whole // 3600, (whole % 3600) // 60, whole % 60
    y, mo, d = _civil_one(mjd_day - _MJD_UNIX)
    if doy:
        jan1 = _days_one(y, 1, 1) + _MJD_UNIX
        date = f"{y:04d}-{mjd_day - jan1 + 1:03d}"
    else:
        date = f"{y:04d}-{mo:02d}-{d:02d}"
    t = f"{hh:02d}:{mm:02d}:{ss:02d}"
    if decimals:
        t += f".{frac:0{decimals}d}"
    return f"{date}T{t}Z"


def format_doy(tt, decimals: int = 0):
    """Day-of-year UTC text, ``2027-012T00:00:00Z`` (CCSDS ASCII time code B)."""
    return format_utc(tt, decimals=decimals, doy=True)


def day_of_year(tt):
    """UTC day of year (1..366) as int array (or int)."""
    mjd_day, _ = tt_to_utc_fields(tt)
    y, _, _ = _civil_from_days(mjd_day - _MJD_UNIX)
    out = mjd_day - (_days_from_civil(y, 1, 1) + _MJD_UNIX) + 1
    return int(out) if np.ndim(tt) == 0 else out


def utc_day_start(tt):
    """TT instant of 00:00:00 UTC of the UTC day holding ``tt``."""
    mjd_day, _ = tt_to_utc_fields(tt)
    y, m, d = _civil_from_days(mjd_day - _MJD_UNIX)
    out = utc_to_tt(y, m, d)
    return float(out) if np.ndim(tt) == 0 else out


def utc_days(start_tt: float, end_tt: float) -> np.ndarray:
    """TT instants of every UTC midnight that starts a day overlapping [start, end)."""
    first = utc_day_start(start_tt)
    mjd0, _ = tt_to_utc_fields(first)
    mjd1, _ = tt_to_utc_fields(end_tt)
    mjds = np.arange(int(mjd0), int(mjd1) + 1)
    y, m, d = _civil_from_days(mjds - _MJD_UNIX)
    starts = utc_to_tt(y, m, d)
    return starts[starts < end_tt]


def now_tt() -> float:
    """The current instant in TT seconds."""
    return from_datetime(_dt.datetime.now(_dt.timezone.utc))


def jd_tt(tt):
    """Two-part Julian date (TT) as (2451545.0, fraction) for ERFA/skyfield calls."""
    return 2451545.0, np.asarray(tt, dtype=float) / DAY_S
