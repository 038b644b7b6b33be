"""The OEM model shared by the KVN and XML readers: limits, segments and files, epochs in bulk,
and the checks every segment passes whatever its encoding (CCSDS 502.0-B-3)."""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from contactplan.errors import InputError
from contactplan.timescale import (
    DAY_S,
    MJD_J2000,
    TT_MINUS_TAI_S,
    _MJD_UNIX,
    _days_from_civil,
    tdb_minus_tt,
    tdb_to_tt,
    tt_to_utc_fields,
)

SUPPORTED_VERSIONS = ("2.0", "3.0")
TIME_SYSTEMS = ("UTC", "TAI", "TT", "TDB", "GPS")
FRAMES = ("ICRF", "EME2000", "GCRF")
CENTERS = ("EARTH", "EARTH BARYCENTER", "MOON", "SUN", "SOLAR SYSTEM BARYCENTER")
INTERPOLATIONS = ("LAGRANGE", "HERMITE", "LINEAR")
DEFAULT_INTERPOLATION = ("LAGRANGE", 7)
MAX_DEGREE = 20

_HEADER_KEYS = {"CCSDS_OEM_VERS", "CREATION_DATE", "ORIGINATOR", "MESSAGE_ID", "CLASSIFICATION"}
_META_KEYS = {
    "OBJECT_NAME", "OBJECT_ID", "CENTER_NAME", "REF_FRAME", "REF_FRAME_EPOCH", "TIME_SYSTEM",
    "START_TIME", "USEABLE_START_TIME", "USEABLE_STOP_TIME", "STOP_TIME",
    "INTERPOLATION", "INTERPOLATION_DEGREE",
    "MESSAGE_ID",  # belongs to the version 3 header; some producers put it here, harmless
}
_META_REQUIRED = ("OBJECT_NAME", "OBJECT_ID", "CENTER_NAME", "REF_FRAME", "TIME_SYSTEM", "START_TIME", "STOP_TIME")
_COV_KEYS = {"EPOCH", "COV_REF_FRAME"}
_SV_PLAIN = {("EPOCH", "X", "Y", "Z", "X_DOT", "Y_DOT", "Z_DOT"),
             ("EPOCH", "X", "Y", "Z", "X_DOT", "Y_DOT", "Z_DOT", "X_DDOT", "Y_DDOT", "Z_DDOT")}
#: tolerance for comparing header times with data epochs (s)
_TIME_TOL_S = 1e-6

#: physically meaningful states (refused otherwise, naming the line): a position from the
#: Earth's centre no smaller than its polar radius, 6356.752 km (WGS 84, from memory), and from
#: any centre no larger than 1e13 km (about 67,000 au, the order of the Sun's sphere of influence
#: in the Galaxy, from memory); a speed below the speed of light, 299,792.458 km/s (SI definition).
MIN_EARTH_RADIUS_KM = 6356.0
MAX_RADIUS_KM = 1.0e13
MAX_SPEED_KM_S = 299_792.458
#: neighbouring states whose position change disagrees with their mean velocity by more than
#: this fraction of the step are more than the interpolation can follow (an outlier): refused
MAX_STEP_MISMATCH = 0.5
#: a spacing inside a segment this many times its median is a hole in the data: warned
GAP_FACTOR = 10.0

_KV_RE = re.compile(r"^\s*([A-Za-z][A-Za-z0-9_]*)\s*=\s*(.*?)\s*$")
_COMMENT_RE = re.compile(r"^\s*COMMENT(?:\s(.*))?$")
_WORD_RE = re.compile(r"^\s*([A-Za-z][A-Za-z0-9_]*)\s*$")
# a line that is not part of a data block: starts with a letter (keyword)
_KEYWORD_LINE_RE = re.compile(r"\n[ \t]*[A-Za-z]")  # searched from the newline before a line


# ------------------------------------------------------------------ model
@dataclass
class OemSegment:
    """One metadata block and its states, numbers as written in the file.

    ``t_tt`` (N,) TT seconds since J2000; ``pos_km`` (N, 3) and ``vel_km_s``
    (N, 3) relative to ``center_name`` in ``ref_frame`` axes; ``acc_km_s2``
    (N, 3) or None. ``useable_start_tt``/``useable_stop_tt`` are the span the
    segment may be used over (USEABLE_* when given, else START/STOP_TIME,
    clipped to the first and last state). ``line`` is the META_START line.
    """

    object_name: str
    object_id: str
    center_name: str
    ref_frame: str
    time_system: str
    start_tt: float
    stop_tt: float
    useable_start_tt: float
    useable_stop_tt: float
    interpolation: str
    interpolation_degree: int
    t_tt: np.ndarray
    pos_km: np.ndarray
    vel_km_s: np.ndarray
    acc_km_s2: np.ndarray | None = None
    comments: list = field(default_factory=list)
    metadata: dict = field(default_factory=dict)  # keyword -> text, as written
    line: int = 0
    data_lines: np.ndarray | None = None  # line number of each state
    covariance_count: int = 0
    #: set by a windowed read (:mod:`contactplan.io.oem_window`) when only a run of the segment's
    #: states was read: (index of the first state read, first epoch of the whole segment, its node
    #: spacing when uniform else None, loaded_start_tt, loaded_end_tt); interpolation between
    #: loaded_start_tt and loaded_end_tt gives the whole segment's values to the bit
    part: tuple | None = None

    def __len__(self) -> int:
        return len(self.t_tt)


@dataclass
class OemFile:
    """A parsed OEM: header, segments in time order, and anything worth a warning."""

    path: Path | None
    version: str
    encoding: str  # "KVN" or "XML"
    header: dict
    segments: list
    comments: list = field(default_factory=list)
    warnings: list = field(default_factory=list)

    @property
    def start_tt(self) -> float:
        return min(s.useable_start_tt for s in self.segments)

    @property
    def end_tt(self) -> float:
        return max(s.useable_stop_tt for s in self.segments)

    @property
    def object_name(self) -> str:
        return self.segments[0].object_name

    @property
    def gaps(self) -> list:
        """(start_tt, end_tt) spans between segments that no segment covers."""
        return coverage(self.segments)[1]


def coverage(segments) -> tuple[list, list]:
    """Pieces (start_tt, end_tt, segment index) in time order, and the gaps between them.

    Where segments overlap the later one in the file takes over from its useable start.
    """
    pieces: list = []
    for idx, seg in enumerate(segments):
        a, b = seg.useable_start_tt, seg.useable_stop_tt
        cut = []
        for (p0, p1, j) in pieces:
            if p1 < a or p0 > b:
                cut.append((p0, p1, j))
                continue
            if p0 < a:
                cut.append((p0, a, j))
            if p1 > b:
                cut.append((b, p1, j))
        cut.append((a, b, idx))
        pieces = sorted(cut, key=lambda p: (p[0], p[1]))
    pieces = [p for p in pieces if p[1] > p[0] or len(pieces) == 1]
    gaps = [(p[1], q[0]) for p, q in zip(pieces, pieces[1:]) if q[0] > p[1]]
    return pieces, gaps


# ------------------------------------------------------------------ epochs
def _day_base(mjd, scale: str):
    """TT seconds of 0h of UTC/TT/TAI/GPS day ``mjd``; the epoch is base + seconds of day.

    Shared by reader and writer so that epochs round-trip to the last bit.
    """
    mjd = np.asarray(mjd, dtype=np.int64)
    day = (mjd - MJD_J2000) * DAY_S  # exact: multiples of 43200
    if scale == "UTC":
        from contactplan.timescale import _tai_utc_at_mjd

        return day + (_tai_utc_at_mjd(mjd) + TT_MINUS_TAI_S)
    if scale == "TT":
        return day + 0.0
    if scale == "TAI":
        return day + TT_MINUS_TAI_S
    if scale == "GPS":
        return day + (19.0 + TT_MINUS_TAI_S)
    raise ValueError(scale)


class _EpochError(Exception):
    def __init__(self, index: int, message: str):
        super().__init__(message)
        self.index = index
        self.message = message


_CAL_DIGITS = (0, 1, 2, 3, 5, 6, 8, 9)  # YYYY-MM-DD
_DOY_DIGITS = (0, 1, 2, 3, 5, 6, 7)  # YYYY-DDD


def parse_epochs(texts, scale: str) -> np.ndarray:
    """Parse CCSDS epoch texts (``YYYY-MM-DDThh:mm:ss[.f][Z]`` or ``YYYY-DDDThh:mm:ss[.f][Z]``)
    read in ``scale`` into TT seconds since J2000, vectorised.

    Raises :class:`_EpochError` naming the index of the first bad text.
    """
    texts = np.asarray(texts, dtype=str)
    n = texts.size
    if n == 0:
        return np.zeros(0)
    try:
        raw = texts.astype("S")
    except UnicodeEncodeError:
        for i, s in enumerate(texts.tolist()):
            if not s.isascii():
                raise _EpochError(i, f"not an epoch: {s[:40]!r}") from None
        raise
    width = raw.dtype.itemsize
    if width < 17:
        width = 17
        raw = raw.astype("S17")
    mat = raw.view(np.uint8).reshape(n, width)
    length = np.count_nonzero(mat, axis=1)
    # a trailing Z is allowed; drop it
    last = mat[np.arange(n), np.maximum(length - 1, 0)]
    zmask = (last == ord("Z")) & (length > 0)
    length = length - zmask
    if np.any(zmask):
        mat = mat.copy()
        mat[np.flatnonzero(zmask), length[zmask]] = 0
    is_doy = (mat[:, 4] == ord("-")) & (mat[:, 8] == ord("T"))
    tt = np.empty(n)
    for doy in (False, True):
        sel = np.flatnonzero(is_doy == doy)
        if sel.size:
            tt[sel] = _parse_layout(mat[sel], length[sel], doy, scale, texts, sel)
    return tt


def _bad(texts, sel, rows, why):
    i = int(sel[rows[0]])
    raise _EpochError(i, f"not an epoch: {texts[i][:40]!r} ({why}; use YYYY-MM-DDThh:mm:ss.sss)")


def _parse_layout(mat, length, doy, scale, texts, sel):
    d0 = 8 if doy else 10  # date length
    t0 = d0 + 1
    need = t0 + 8
    if mat.shape[1] < need:
        _bad(texts, sel, np.arange(len(sel)), "too short")
    digit = (mat >= 48) & (mat <= 57)
    val = mat.astype(np.int64) - 48
    ok = length >= need
    for c in (_DOY_DIGITS if doy else _CAL_DIGITS):
        ok &= digit[:, c]
    ok &= mat[:, 4] == ord("-")
    if not doy:
        ok &= mat[:, 7] == ord("-")
    ok &= mat[:, d0] == ord("T")
    for c in (0, 1, 3, 4, 6, 7):
        ok &= digit[:, t0 + c]
    ok &= (mat[:, t0 + 2] == ord(":")) & (mat[:, t0 + 5] == ord(":"))
    # optional fraction
    fstart = t0 + 8
    has_frac = length > fstart
    if mat.shape[1] > fstart:
        ok &= ~has_frac | ((mat[:, fstart] == ord(".")) & (length > fstart + 1))
    nfrac = np.where(has_frac, length - fstart - 1, 0)
    if np.any(nfrac > 15):
        ok &= nfrac <= 15
    frac_int = np.zeros(len(mat), dtype=np.int64)
    for c in range(fstart + 1, mat.shape[1]):
        inside = c < length
        ok &= ~inside | digit[:, c]
        frac_int = np.where(inside, frac_int * 10 + np.where(digit[:, c], val[:, c], 0), frac_int)
    if not np.all(ok):
        _bad(texts, sel, np.flatnonzero(~ok), "wrong layout")
    year = val[:, 0] * 1000 + val[:, 1] * 100 + val[:, 2] * 10 + val[:, 3]
    leap_year = ((year % 4 == 0) & (year % 100 != 0)) | (year % 400 == 0)
    if doy:
        dn = val[:, 5] * 100 + val[:, 6] * 10 + val[:, 7]
        bad = (dn < 1) | (dn > 365 + leap_year)
        if np.any(bad):
            _bad(texts, sel, np.flatnonzero(bad), "day of year does not exist")
        days = _days_from_civil(year, np.ones_like(year), np.ones_like(year)) + dn - 1
    else:
        month = val[:, 5] * 10 + val[:, 6]
        day = val[:, 8] * 10 + val[:, 9]
        mdays = np.array([31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31])
        bad = (month < 1) | (month > 12)
        if np.any(bad):
            _bad(texts, sel, np.flatnonzero(bad), "month does not exist")
        dim = mdays[month - 1] + ((month == 2) & leap_year)
        bad = (day < 1) | (day > dim)
        if np.any(bad):
            _bad(texts, sel, np.flatnonzero(bad), "date does not exist")
        days = _days_from_civil(year, month, day)
    hh = val[:, t0] * 10 + val[:, t0 + 1]
    mi = val[:, t0 + 3] * 10 + val[:, t0 + 4]
    ss = val[:, t0 + 6] * 10 + val[:, t0 + 7]
    bad = (hh > 23) | (mi > 59) | (ss > 60)
    if np.any(bad):
        _bad(texts, sel, np.flatnonzero(bad), "time of day out of range")
    mjd = days + _MJD_UNIX
    sod = (hh * 3600 + mi * 60 + ss).astype(float) + frac_int / (10.0 ** nfrac)
    if scale == "UTC":
        if np.any(mjd < 41317):
            _bad(texts, sel, np.flatnonzero(mjd < 41317), "UTC before 1972 is not supported")
        sixty = np.flatnonzero(ss == 60)
        if sixty.size:
            from contactplan.timescale import _tai_utc_at_mjd

            m60 = mjd[sixty]
            real = (hh[sixty] == 23) & (mi[sixty] == 59) & (_tai_utc_at_mjd(m60 + 1) > _tai_utc_at_mjd(m60))
            if not np.all(real):
                _bad(texts, sel, sixty[~real], "second 60 exists only in a leap second")
        return _day_base(mjd, "UTC") + sod
    if np.any(ss == 60):
        _bad(texts, sel, np.flatnonzero(ss == 60), f"second 60 does not exist in {scale}")
    if scale == "TDB":
        return tdb_to_tt((mjd - MJD_J2000) * DAY_S + sod)
    return _day_base(mjd, scale) + sod


def format_epochs(t_tt, scale: str = "UTC", decimals: int | None = None) -> list[str]:
    """Epoch texts ``YYYY-MM-DDThh:mm:ss.fff`` in ``scale`` for TT instants.

    With ``decimals`` None the fewest of 3, 6, 9 for which :func:`parse_epochs`
    gives back the same floats is used.
    """
    t = np.atleast_1d(np.asarray(t_tt, dtype=float))
    scale = scale.upper()
    if scale not in TIME_SYSTEMS:
        raise InputError(f"unknown time system {scale!r} (use {', '.join(TIME_SYSTEMS)})")
    if not np.all(np.isfinite(t)) or np.any(np.abs(t) > 200.0 * 365.25 * DAY_S):
        raise InputError("epochs must be finite and within two centuries of 2000")
    for dec in ((3, 6, 9) if decimals is None else (decimals,)):
        out = _format(t, scale, dec)
        try:
            back = parse_epochs(out, scale)
        except _EpochError as exc:
            raise InputError(f"cannot write epoch {out[exc.index]}: {exc.message}") from None
        if np.array_equal(back, t):
            return out
    if np.any(np.abs(back - t) > 0.6 * 10.0 ** -dec + 1e-9):  # pragma: no cover - defensive
        raise InputError("epochs do not survive formatting")
    return out


def _format(t, scale, dec):
    q = 10 ** dec
    if scale == "UTC":
        mjd, _ = tt_to_utc_fields(t)
        mjd = np.asarray(mjd, dtype=np.int64)
        sod = t - _day_base(mjd, "UTC")
        from contactplan.timescale import _tai_utc_at_mjd

        leapday = _tai_utc_at_mjd(mjd + 1) > _tai_utc_at_mjd(mjd)
    else:
        if scale == "TDB":
            s = t + tdb_minus_tt(t)
            mjd = np.floor(s / DAY_S + MJD_J2000).astype(np.int64)
            sod = s - (mjd - MJD_J2000) * DAY_S
        else:
            off = _day_base(np.zeros(1, dtype=np.int64), scale)[0] - (0 - MJD_J2000) * DAY_S
            mjd = np.floor((t - off) / DAY_S + MJD_J2000).astype(np.int64)
            sod = t - _day_base(mjd, scale)
        leapday = np.zeros(len(t), dtype=bool)
    units = np.round(sod * q).astype(np.int64)
    neg = units < 0  # rounding put the instant on the previous day
    if np.any(neg):
        units = np.where(neg, units + int(DAY_S) * q, units)
        mjd = np.where(neg, mjd - 1, mjd)
    day_units = np.where(leapday, int(DAY_S + 1) * q, int(DAY_S) * q)
    over = units >= day_units
    mjd = np.where(over, mjd + 1, mjd)
    units = np.where(over, units - day_units, units)
    whole = units // q
    frac = units % q
    in_leap = whole >= int(DAY_S)
    hh = np.where(in_leap, 23, whole // 3600)
    mi = np.where(in_leap, 59, (whole % 3600) // 60)
    ss = np.where(in_leap, 60, whole % 60)
    from contactplan.timescale import _civil_from_days

    y, mo, d = _civil_from_days(mjd - _MJD_UNIX)
    cols = [np.asarray(c).tolist() for c in (y, mo, d, hh, mi, ss, frac)]
    if dec:
        return [f"{a:04d}-{b:02d}-{c:02d}T{e:02d}:{f:02d}:{g:02d}.{h:0{dec}d}" for a, b, c, e, f, g, h in zip(*cols)]
    return [f"{a:04d}-{b:02d}-{c:02d}T{e:02d}:{f:02d}:{g:02d}" for a, b, c, e, f, g, _ in zip(*cols)]



# ------------------------------------------------------------------ shared reader
class Reader:
    """What the KVN and XML readers share: one-line errors, header and segment checks."""

    def __init__(self, path):
        self.path = path
        self.warnings: list = []
        #: META_START line -> (first, last) epoch of the whole segment, for a windowed read that
        #: parses only some of its states (the useable span is the whole segment's)
        self.spans: dict = {}

    def fail(self, message, line=None):
        raise InputError(message, self.path, line)

    # ---------------------------------------------------------- KVN
    def _version(self, value: str, line):
        v = value.strip()
        try:
            f = float(v)
        except ValueError:
            self.fail(f"CCSDS_OEM_VERS {v!r} is not a version number", line)
        if f not in (2.0, 3.0):
            self.fail(f"OEM version {v} is not supported (this reader takes {' and '.join(SUPPORTED_VERSIONS)})", line)
        return f"{f:.1f}"

    def _check_header(self, header: dict, line):
        for key in ("CREATION_DATE", "ORIGINATOR"):
            if not header.get(key, "").strip():
                self.fail(f"header keyword {key} missing (required)", line)

    def _segment(self, meta, meta_line, comments, epochs, values, data_lines, ncov) -> OemSegment:
        md: dict = {}
        where: dict = {}
        for key, value, ln in meta:
            if key not in _META_KEYS:
                self.fail(f"unknown metadata keyword {key} (CCSDS 502.0-B-3 OEM)", ln)
            if key in md:
                self.fail(f"{key} given twice in one metadata block", ln)
            md[key] = value
            where[key] = ln
        for key in _META_REQUIRED:
            if not md.get(key, "").strip():
                self.fail(f"metadata keyword {key} missing (required)", where.get(key, meta_line))
        ts = md["TIME_SYSTEM"].strip().upper()
        if ts not in TIME_SYSTEMS:
            self.fail(f"TIME_SYSTEM {md['TIME_SYSTEM']} is not supported (use {', '.join(TIME_SYSTEMS)})",
                      where["TIME_SYSTEM"])
        frame = md["REF_FRAME"].strip().upper()
        if frame not in FRAMES:
            self.fail(f"REF_FRAME {md['REF_FRAME']} is not supported (use {', '.join(FRAMES)})", where["REF_FRAME"])
        center = " ".join(md["CENTER_NAME"].split()).upper()
        if center == "EARTH-MOON BARYCENTER":
            center = "EARTH BARYCENTER"
        if center not in CENTERS:
            self.fail(f"CENTER_NAME {md['CENTER_NAME']} is not supported (use {', '.join(CENTERS)})",
                      where["CENTER_NAME"])
        method = md.get("INTERPOLATION", "").strip().upper() or DEFAULT_INTERPOLATION[0]
        if method not in INTERPOLATIONS:
            self.fail(f"INTERPOLATION {md['INTERPOLATION']} is not supported (use {', '.join(INTERPOLATIONS)})",
                      where["INTERPOLATION"])
        if "INTERPOLATION_DEGREE" in md:
            s = md["INTERPOLATION_DEGREE"].strip()
            if not s.isdigit() or not 1 <= int(s) <= MAX_DEGREE:
                self.fail(f"INTERPOLATION_DEGREE {s!r} must be a whole number from 1 to {MAX_DEGREE}",
                          where["INTERPOLATION_DEGREE"])
            degree = int(s)
        else:
            degree = 1 if method == "LINEAR" else DEFAULT_INTERPOLATION[1]

        def htime(key):
            if key not in md:
                return None
            try:
                return float(parse_epochs([md[key].strip()], ts)[0])
            except _EpochError as exc:
                self.fail(f"{key}: {exc.message}", where[key])

        start, stop = htime("START_TIME"), htime("STOP_TIME")
        ustart, ustop = htime("USEABLE_START_TIME"), htime("USEABLE_STOP_TIME")
        if stop < start:
            self.fail("STOP_TIME is before START_TIME", where["STOP_TIME"])
        for key, v in (("USEABLE_START_TIME", ustart), ("USEABLE_STOP_TIME", ustop)):
            if v is not None and not (start - _TIME_TOL_S <= v <= stop + _TIME_TOL_S):
                self.fail(f"{key} lies outside START_TIME to STOP_TIME", where[key])
        if ustart is not None and ustop is not None and ustop <= ustart:
            self.fail("USEABLE_STOP_TIME is not after USEABLE_START_TIME", where["USEABLE_STOP_TIME"])
        try:
            t = parse_epochs(epochs, ts)
        except _EpochError as exc:
            self.fail(exc.message, int(data_lines[exc.index]))
        bad = ~np.isfinite(values)
        if np.any(bad):
            r = int(np.flatnonzero(bad.any(axis=1))[0])
            self.fail("state holds a value that is not a finite number (NaN or infinity)", int(data_lines[r]))
        if len(t) > 1:
            step = np.diff(t)
            if np.any(step <= 0):
                r = int(np.flatnonzero(step <= 0)[0]) + 1
                self.fail(f"epoch {epochs[r]} is not after the previous state's epoch (line {data_lines[r - 1]}): "
                          "epochs must increase", int(data_lines[r]))
        out = np.flatnonzero((t < start - _TIME_TOL_S) | (t > stop + _TIME_TOL_S))
        if out.size:
            r = int(out[0])
            self.fail(f"epoch {epochs[r]} lies outside the segment's START_TIME to STOP_TIME", int(data_lines[r]))
        if len(t) < 2:
            self.fail("segment holds a single state; at least 2 are needed to interpolate", meta_line)
        self._check_states(t, values, data_lines, center, meta_line)
        t_first, t_last = self.spans.get(meta_line, (t[0], t[-1]))
        a = max(start if ustart is None else ustart, t_first)
        b = min(stop if ustop is None else ustop, t_last)
        if b <= a:
            self.fail("the useable span holds no data", where.get("USEABLE_START_TIME", meta_line))
        if degree + 1 > len(t):
            self.warnings.append(f"segment at line {meta_line}: {len(t)} states, interpolation degree lowered "
                                 f"from {degree} to {len(t) - 1}")
            degree = len(t) - 1
        acc = values[:, 6:9] if values.shape[1] >= 9 else None
        return OemSegment(
            object_name=md["OBJECT_NAME"].strip(), object_id=md["OBJECT_ID"].strip(), center_name=center,
            ref_frame=frame, time_system=ts, start_tt=start, stop_tt=stop, useable_start_tt=float(a),
            useable_stop_tt=float(b), interpolation=method, interpolation_degree=degree, t_tt=t,
            pos_km=np.ascontiguousarray(values[:, 0:3]), vel_km_s=np.ascontiguousarray(values[:, 3:6]),
            acc_km_s2=None if acc is None else np.ascontiguousarray(acc), comments=comments, metadata=md,
            line=meta_line or 0, data_lines=data_lines, covariance_count=ncov,
        )

    def _check_states(self, t, values, data_lines, center, meta_line) -> None:
        """Refuse absurd states and outliers, warn about holes (vectorised over the segment)."""
        pos, vel = values[:, 0:3], values[:, 3:6]
        r = np.hypot(np.hypot(pos[:, 0], pos[:, 1]), pos[:, 2])  # no overflow for 1e200 km
        v = np.hypot(np.hypot(vel[:, 0], vel[:, 1]), vel[:, 2])
        low = MIN_EARTH_RADIUS_KM if center == "EARTH" else 0.0
        bad = np.flatnonzero((r < low) | (r > MAX_RADIUS_KM) | (v >= MAX_SPEED_KM_S))
        if bad.size:
            k = int(bad[0])
            if r[k] < low:
                why = (f"position {r[k]:.6g} km from the Earth's centre is below its surface "
                       f"(states must be at least {low:g} km from it)")
            elif r[k] > MAX_RADIUS_KM:
                why = f"position {r[k]:.6g} km from {center.lower()} is beyond {MAX_RADIUS_KM:g} km"
            else:
                why = f"speed {v[k]:.6g} km/s is not below the speed of light"
            self.fail(f"state is not physically meaningful: {why}", int(data_lines[k]))
        dt = np.diff(t)
        dr = np.diff(pos, axis=0)
        mean_v = 0.5 * (vel[1:] + vel[:-1])
        miss = np.linalg.norm(dr - mean_v * dt[:, None], axis=1)
        scale = np.maximum(np.linalg.norm(dr, axis=1), np.linalg.norm(mean_v, axis=1) * dt)
        jump = np.flatnonzero(miss > MAX_STEP_MISMATCH * scale + 1.0)
        if jump.size:
            i = int(jump[0])
            self.fail(f"the state does not follow from the one at line {int(data_lines[i])}: the position moves "
                      f"{np.linalg.norm(dr[i]):.6g} km in {dt[i]:g} s where the velocities say "
                      f"{np.linalg.norm(mean_v[i]) * dt[i]:.6g} km (an outlier the interpolation cannot follow)",
                      int(data_lines[i + 1]))
        if dt.size >= 3:
            s = np.sort(dt)  # the median without np.median, whose first call imports numpy.ma (some 25 ms)
            med = float(s[s.size // 2] if s.size % 2 else (s[s.size // 2 - 1] + s[s.size // 2]) / 2.0)
            holes = np.flatnonzero(dt > GAP_FACTOR * med)
            if holes.size:
                i = int(holes[0])
                more = f" ({holes.size} such holes in the segment)" if holes.size > 1 else ""
                self.warnings.append(
                    f"segment at line {meta_line}: states at lines {int(data_lines[i])} and {int(data_lines[i + 1])} "
                    f"are {dt[i]:g} s apart, more than {GAP_FACTOR:g} times the median spacing of {med:g} s: "
                    f"the orbit is interpolated across the hole{more}; split the segment if data are missing")

    def _finish(self, version, encoding, header, comments, segments) -> OemFile:
        for prev, seg in zip(segments, segments[1:]):
            if seg.useable_start_tt < prev.useable_start_tt:
                self.fail("segment starts before the previous segment: segments must be in time order", seg.line)
        return OemFile(path=self.path, version=version, encoding=encoding, header=header, segments=segments,
                       comments=comments, warnings=self.warnings)


def _is_float(s: str) -> bool:
    try:
        float(s)
        return True
    except ValueError:
        return False
