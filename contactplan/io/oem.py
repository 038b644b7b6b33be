"""CCSDS Orbit Ephemeris Message (OEM) reader and writer.

Reads CCSDS 502.0-B-3 OEM versions 2.0 and 3.0 in KVN (keyword = value text)
and XML (parsed with defusedxml). Writes KVN version 2.0.

* Several segments; COMMENT lines; optional acceleration columns; covariance
  blocks are skipped (their structure is still checked).
* TIME_SYSTEM UTC, TAI, TT, TDB, GPS. REF_FRAME ICRF, EME2000, GCRF.
  CENTER_NAME EARTH, EARTH BARYCENTER (the Earth-Moon barycentre), MOON, SUN,
  SOLAR SYSTEM BARYCENTER. Conversion to geocentric ICRF happens in
  :class:`contactplan.ephemeris.oem.OemEphemeris`; :class:`OemFile` keeps the
  numbers as written (km, km/s, km/s**2).
* Epochs are parsed in bulk with numpy (a year at 60 s is 525,960 lines).
* Every problem raises :class:`~contactplan.errors.InputError` with the file
  and line number.

Interpolation: INTERPOLATION_DEGREE d means a sliding window of d + 1 states;
LAGRANGE fits a polynomial of degree d to the positions (and, with the same
weights, to the velocities); HERMITE matches positions and velocities on the
window (a polynomial of degree 2d + 1). Without the keywords: Lagrange, d = 7.

Epoch semantics: an epoch read in TIME_SYSTEM ``X`` is converted to TT seconds
since J2000 exactly as :func:`contactplan.timescale.parse_utc` does; the writer
picks the fewest decimals (3, 6 or 9) for which reading back gives the same
float, so write -> read round-trips to the last bit (TDB: to about 1 ns).
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from contactplan.errors import InputError
from contactplan.fileio import read_input
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


# ------------------------------------------------------------------ reading
def read_oem(path) -> OemFile:
    """Read a CCSDS OEM file (KVN or XML, version 2.0 or 3.0). Errors: InputError with line."""
    path = Path(path)
    return parse_oem_bytes(read_input(path), path)


def _wide_encoding(data: bytes) -> str | None:
    """"UTF-16" or "UTF-32" when the bytes look like text in that encoding (a byte-order mark, or
    ASCII characters interleaved with zero bytes), else None."""
    head = data[:4]
    if head.startswith((b"\xff\xfe\x00\x00", b"\x00\x00\xfe\xff")):
        return "UTF-32"
    if head.startswith((b"\xff\xfe", b"\xfe\xff")):
        return "UTF-16"
    sample = data[:200]
    if len(sample) >= 8:
        even, odd = sample[0::2], sample[1::2]
        if (even.count(0) > 0.9 * len(even) and odd.count(0) < 0.1 * len(odd)) or \
                (odd.count(0) > 0.9 * len(odd) and even.count(0) < 0.1 * len(even)):
            return "UTF-16"
    return None


def parse_oem_bytes(data: bytes, path=None) -> OemFile:
    """Parse OEM content already in memory (``path`` is only used in messages)."""
    if not data.strip():
        raise InputError("file is empty", path)
    wide = _wide_encoding(data)
    if wide:
        raise InputError(f"{wide} text: this encoding is not supported; save the OEM as UTF-8 or ASCII", path, 1)
    if b"\x00" in data:
        raise InputError("binary content, not a CCSDS OEM text file", path, data[: data.index(b"\x00")].count(b"\n") + 1)
    try:
        text = data.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        raise InputError("not UTF-8/ASCII text, not a CCSDS OEM file", path, data[: exc.start].count(b"\n") + 1) from None
    if not text.strip():
        raise InputError("file is empty", path)
    if text.lstrip().startswith("<"):
        return _KvnOrXml(path).xml(text)
    return _KvnOrXml(path).kvn(text)


class _KvnOrXml:
    def __init__(self, path):
        self.path = path
        self.warnings: list = []

    def fail(self, message, line=None):
        raise InputError(message, self.path, line)

    # ---------------------------------------------------------- KVN
    def kvn(self, text: str) -> OemFile:
        text = text.replace("\r\n", "\n").replace("\r", "\n")
        lines = text.split("\n")
        # character offset of each line start, for data-block searches
        starts = np.zeros(len(lines) + 1, dtype=np.int64)
        np.cumsum([len(s) + 1 for s in lines], out=starts[1:])
        i = 0
        nlines = len(lines)

        def skip_blank(i):
            while i < nlines and not lines[i].strip():
                i += 1
            return i

        # header
        i = skip_blank(i)
        kv = _KV_RE.match(lines[i])
        if not kv or kv.group(1) != "CCSDS_OEM_VERS":
            self.fail("not a CCSDS OEM file: the first line must be CCSDS_OEM_VERS = 2.0 (or 3.0)", i + 1)
        version = self._version(kv.group(2), i + 1)
        header = {"CCSDS_OEM_VERS": version}
        comments = []
        i += 1
        while True:
            i = skip_blank(i)
            if i >= nlines:
                self.fail("no META_START: the file has a header but no segment", i)
            line = lines[i]
            if line.strip() == "META_START":
                break
            c = _COMMENT_RE.match(line)
            if c:
                comments.append((c.group(1) or "").strip())
                i += 1
                continue
            kv = _KV_RE.match(line)
            if not kv:
                self.fail(f"expected KEYWORD = value in the header, got {line.strip()[:40]!r}", i + 1)
            key, value = kv.group(1), kv.group(2)
            if key not in _HEADER_KEYS:
                self.fail(f"unknown header keyword {key} (CCSDS 502.0-B-3 OEM)", i + 1)
            if key in header:
                self.fail(f"{key} given twice", i + 1)
            header[key] = value
            i += 1
        self._check_header(header, i + 1)
        segments = []
        while i < nlines:
            i = skip_blank(i)
            if i >= nlines:
                break
            if lines[i].strip() != "META_START":
                self.fail(f"expected META_START, got {lines[i].strip()[:40]!r}", i + 1)
            meta_line = i + 1
            i += 1
            meta = []
            seg_comments = []
            while True:
                i = skip_blank(i)
                if i >= nlines:
                    self.fail(f"META_STOP missing: the metadata opened on line {meta_line} never closes", nlines)
                s = lines[i].strip()
                if s == "META_STOP":
                    stop_line = i + 1
                    i += 1
                    break
                c = _COMMENT_RE.match(lines[i])
                if c:
                    seg_comments.append((c.group(1) or "").strip())
                    i += 1
                    continue
                kv = _KV_RE.match(lines[i])
                if not kv:
                    self.fail(f"META_STOP missing or bad metadata line {s[:40]!r} (metadata opened on line {meta_line})",
                              i + 1)
                if kv.group(1) in ("META_START",):
                    self.fail(f"META_STOP missing before a new META_START (opened on line {meta_line})", i + 1)
                meta.append((kv.group(1), kv.group(2), i + 1))
                i += 1
            # data comments
            while True:
                i = skip_blank(i)
                c = _COMMENT_RE.match(lines[i]) if i < nlines else None
                if not c:
                    break
                seg_comments.append((c.group(1) or "").strip())
                i += 1
            # data block: up to the next line starting with a letter
            m = _KEYWORD_LINE_RE.search(text, int(starts[i]) - 1) if i < nlines else None
            end_line = nlines if m is None else int(np.searchsorted(starts, m.start() + 1, side="right") - 1)
            block_lines = lines[i:end_line]
            epochs, values, data_lines = self._data_block(block_lines, i + 1, stop_line)
            i = end_line
            ncov = 0
            while i < nlines:
                i = skip_blank(i)
                if i >= nlines:
                    break
                s = lines[i].strip()
                if s == "COVARIANCE_START":
                    i, ncov = self._skip_covariance(lines, i, ncov)
                    continue
                if s == "META_START":
                    break
                if _COMMENT_RE.match(lines[i]):
                    self.fail("COMMENT lines are allowed only at the start of a data block", i + 1)
                if s in ("META_STOP", "COVARIANCE_STOP"):
                    self.fail(f"{s} without a matching start", i + 1)
                if s.startswith("META_START"):
                    self.fail(f"bad line {s[:40]!r}", i + 1)
                self.fail(f"unexpected line after the data block: {s[:40]!r} (META_START missing?)", i + 1)
            segments.append(self._segment(meta, meta_line, seg_comments, epochs, values, data_lines, ncov))
        if not segments:
            self.fail("no segment (META_START ... META_STOP and data) in the file", nlines)
        return self._finish(version, "KVN", header, comments, segments)

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

    def _skip_covariance(self, lines, i, ncov):
        start = i + 1
        i += 1
        rows = 0
        while i < len(lines):
            s = lines[i].strip()
            if not s or _COMMENT_RE.match(lines[i]):
                i += 1
                continue
            if s == "COVARIANCE_STOP":
                if rows % 6:
                    self.fail("covariance block ends inside a matrix (6 rows per matrix)", i + 1)
                return i + 1, ncov
            kv = _KV_RE.match(lines[i])
            if kv:
                if kv.group(1) not in _COV_KEYS:
                    self.fail(f"COVARIANCE_STOP missing (block opened on line {start}): found {kv.group(1)}", i + 1)
                if kv.group(1) == "EPOCH":
                    if rows % 6:
                        self.fail("covariance matrix has fewer than 6 rows", i + 1)
                    ncov += 1
                i += 1
                continue
            parts = s.split()
            k = rows % 6 + 1
            try:
                vals = [float(p) for p in parts]
            except ValueError:
                self.fail(f"covariance row is not numbers: {s[:40]!r}", i + 1)
            if len(vals) != k:
                self.fail(f"covariance row {k} must hold {k} numbers (lower triangle), got {len(vals)}", i + 1)
            if not all(math.isfinite(v) for v in vals):
                self.fail("covariance value is not a finite number", i + 1)
            rows += 1
            i += 1
        self.fail(f"COVARIANCE_STOP missing: the block opened on line {start} never closes", start)

    def _data_block(self, block_lines, first_line, stop_line):
        """Tokens of a data block -> (epoch texts, values (N, 6|9), line numbers)."""
        text = "\n".join(block_lines)
        tokens = text.split()
        nonblank = [j for j, s in enumerate(block_lines) if s.strip()] if len(tokens) else []
        n = len(nonblank)
        if n == 0:
            self.fail("segment has no state lines after this META_STOP", stop_line)
        data_lines = np.asarray(nonblank, dtype=np.int64) + first_line
        if "_" in text:  # Python's float() takes 1_000.5; a CCSDS number does not
            j = next(j for j, s in enumerate(block_lines) if "_" in s)
            self.fail("a state value holds '_': not a number in CCSDS notation", first_line + j)
        for width in (7, 10):
            if len(tokens) == width * n:
                try:  # column by column; float() per token is the fastest text -> number here
                    values = np.column_stack([np.fromiter(map(float, tokens[j::width]), dtype=float, count=n)
                                              for j in range(1, width)])
                except ValueError:
                    break
                return np.array(tokens[0::width], dtype=str), values, data_lines
        # slow path: find the bad line, or accept a mix of 7 and 10 columns
        epochs, rows = [], []
        for j in nonblank:
            parts = block_lines[j].split()
            ln = first_line + j
            if len(parts) not in (7, 10):
                if len(parts) < 7:
                    self.fail(f"truncated state line: {len(parts)} fields, expected epoch and 6 numbers "
                              "(or 9 with accelerations)", ln)
                self.fail(f"state line has {len(parts)} fields, expected 7 (epoch, position, velocity) or 10", ln)
            try:
                vals = [float(p) for p in parts[1:]]
            except ValueError:
                bad = next(p for p in parts[1:] if not _is_float(p))
                self.fail(f"not a number: {bad[:30]!r}", ln)
            epochs.append(parts[0])
            rows.append(vals[:6])
        self.warnings.append("acceleration columns given on some lines only: ignored")
        return np.array(epochs, dtype=str), np.array(rows, dtype=float), data_lines

    # ---------------------------------------------------------- XML
    def xml(self, text: str) -> OemFile:
        import xml.etree.ElementTree as ET

        from defusedxml import DefusedXmlException
        from defusedxml.ElementTree import DefusedXMLParser

        start_lines: list = []  # line of each element, in document order

        class Builder(ET.TreeBuilder):
            expat = None

            def start(self, tag, attrs, _append=start_lines.append):
                _append(self.expat.CurrentLineNumber)
                return super().start(tag, attrs)

        builder = Builder()
        parser = DefusedXMLParser(target=builder, forbid_dtd=True)
        builder.expat = parser.parser
        try:
            parser.feed(text)
            root = parser.close()
        except ET.ParseError as exc:
            line = getattr(exc, "position", (None,))[0]
            msg = re.sub(r":\s*line \d+, column \d+$", "", str(exc))
            self.fail(f"not well-formed XML: {msg}", line)
        except DefusedXmlException:
            self.fail("XML with a DTD or entities is refused (not allowed in a CCSDS OEM)", 1)
        except (ValueError, RecursionError) as exc:  # pragma: no cover - expat oddities
            self.fail(f"not well-formed XML: {exc}", None)

        lines_of = dict(zip(root.iter(), start_lines))

        def tag(el):
            return el.tag.rsplit("}", 1)[-1] if isinstance(el.tag, str) else ""

        def line(el):
            return lines_of.get(el)

        def txt(el):
            return (el.text or "").strip()

        if tag(root) != "oem":
            self.fail(f"XML root element is <{tag(root)}>, not <oem>: not a CCSDS OEM", line(root))
        version = self._version(root.attrib.get("version", ""), line(root))
        kids = [c for c in root if isinstance(c.tag, str)]
        heads = [c for c in kids if tag(c) == "header"]
        bodies = [c for c in kids if tag(c) == "body"]
        if len(heads) != 1 or len(bodies) != 1:
            self.fail("<oem> must hold one <header> and one <body>", line(root))
        header = {"CCSDS_OEM_VERS": version}
        comments = []
        for el in heads[0]:
            if not isinstance(el.tag, str):
                continue
            k = tag(el)
            if k == "COMMENT":
                comments.append(txt(el))
            elif k in _HEADER_KEYS - {"CCSDS_OEM_VERS"}:
                header[k] = txt(el)
            else:
                self.fail(f"unknown header element <{k}>", line(el))
        self._check_header(header, line(heads[0]))
        segments = []
        for seg in bodies[0]:
            if not isinstance(seg.tag, str):
                continue
            if tag(seg) != "segment":
                self.fail(f"unexpected <{tag(seg)}> in <body> (expected <segment>)", line(seg))
            metas = [c for c in seg if tag(c) == "metadata"]
            datas = [c for c in seg if tag(c) == "data"]
            if len(metas) != 1 or len(datas) != 1:
                self.fail("<segment> must hold one <metadata> and one <data>", line(seg))
            meta, seg_comments = [], []
            for el in metas[0]:
                if not isinstance(el.tag, str):
                    continue
                if tag(el) == "COMMENT":
                    seg_comments.append(txt(el))
                else:
                    meta.append((tag(el), txt(el), line(el)))
            svs, ncov = [], 0
            for el in datas[0]:
                if el.tag == "stateVector":
                    svs.append(el)
                    continue
                if not isinstance(el.tag, str):
                    continue
                k = tag(el)
                if k == "COMMENT":
                    seg_comments.append(txt(el))
                elif k == "covarianceMatrix":
                    ncov += 1
                elif k == "stateVector":  # namespaced
                    svs.append(el)
                else:
                    self.fail(f"unexpected <{k}> in <data>", line(el))
            if not svs:
                self.fail("segment has no <stateVector>", line(datas[0]))
            data_lines = [lines_of.get(el) or 0 for el in svs]
            values = None
            if all(tuple(c.tag for c in el) in _SV_PLAIN and not any(c.attrib for c in el) for el in svs):
                width = 10 if all(len(sv) == 10 for sv in svs) else 7  # with accelerations on every state
                try:  # the plain layout, read in bulk
                    values = np.column_stack([np.fromiter((float(sv[j].text) for sv in svs), dtype=float,
                                                          count=len(svs)) for j in range(1, width)])
                    epochs = [(sv[0].text or "").strip() for sv in svs]
                except (ValueError, TypeError):
                    values = None
            if values is None:  # element by element, naming the element at fault
                epochs, rows = [], []
                for el in svs:
                    e, vals = self._state_vector(el, tag, txt, line)
                    epochs.append(e)
                    rows.append(vals)
                if all(len(r) == 9 for r in rows):
                    values = np.array(rows, dtype=float)
                else:
                    values = np.array([r[:6] for r in rows], dtype=float)
            segments.append(self._segment(meta, line(metas[0]), seg_comments, np.array(epochs, dtype=str),
                                          values, np.array(data_lines, dtype=np.int64), ncov))
        if not segments:
            self.fail("no <segment> in <body>", line(bodies[0]))
        return self._finish(version, "XML", header, comments, segments)

    def _state_vector(self, el, tag, txt, line):
        names = ("EPOCH", "X", "Y", "Z", "X_DOT", "Y_DOT", "Z_DOT")
        units = {"X": "km", "Y": "km", "Z": "km", "X_DOT": "km/s", "Y_DOT": "km/s", "Z_DOT": "km/s",
                 "X_DDOT": "km/s**2", "Y_DDOT": "km/s**2", "Z_DDOT": "km/s**2"}
        acc = ("X_DDOT", "Y_DDOT", "Z_DDOT")
        got = {}
        for c in el:
            if not isinstance(c.tag, str):
                continue
            k = tag(c)
            if k in got:
                self.fail(f"<{k}> given twice in <stateVector>", line(c))
            if k not in names and k not in ("X_DDOT", "Y_DDOT", "Z_DDOT"):
                self.fail(f"unexpected <{k}> in <stateVector>", line(c))
            u = c.attrib.get("units")
            if u is not None and k in units and u.strip().lower().replace("^", "**") != units[k]:
                self.fail(f"<{k}> in {u!r}; only {units[k]} is read", line(c))
            got[k] = (txt(c), line(c))
        for k in names:
            if k not in got:
                self.fail(f"<stateVector> lacks <{k}>", line(el))
        vals = []
        for k in names[1:] + (acc if all(a in got for a in acc) else ()):
            s, ln = got[k]
            try:
                vals.append(float(s))
            except ValueError:
                self.fail(f"<{k}> is not a number: {s[:30]!r}", ln)
        return got["EPOCH"][0], vals

    # ---------------------------------------------------------- shared
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
        a = max(start if ustart is None else ustart, t[0])
        b = min(stop if ustop is None else ustop, t[-1])
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
            med = float(np.median(dt))
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


# ------------------------------------------------------------------ writing
def _num(x: float) -> str:
    r = repr(float(x))
    return r


def ascii_text(text) -> str:
    """``text`` as printable ASCII for a KVN file: accents dropped (é -> e), common punctuation mapped,
    anything else replaced by '?' so the loss shows."""
    import unicodedata

    table = {"\u2014": "-", "\u2013": "-", "\u2018": "'", "\u2019": "'", "\u201c": '"', "\u201d": '"',
             "\u00df": "ss", "\u00e6": "ae", "\u00c6": "AE", "\u0153": "oe", "\u0152": "OE", "\u00f8": "o",
             "\u00d8": "O", "\u00a0": " "}
    out = []
    for ch in unicodedata.normalize("NFKD", str(text)):
        if ch.isascii():
            out.append(ch if ch.isprintable() else " ")
        elif unicodedata.combining(ch):
            continue
        else:
            out.append(table.get(ch, "?"))
    return "".join(out)


def write_oem(path, t_tt, pos_km, vel_km_s, object_name: str, object_id: str, center: str = "EARTH",
              frame: str = "ICRF", time_system: str = "UTC", originator: str = "contactplan", comments=(),
              interpolation: str = "LAGRANGE", interpolation_degree: int = 7, creation_tt: float | None = None,
              acc_km_s2=None, segment_starts=()) -> Path:
    """Write a KVN OEM version 2.0, atomically: one segment, or one per part when ``segment_starts``
    gives the indexes of ``t_tt`` where a new segment begins (around a gap in the source).

    ``pos_km``/``vel_km_s`` (N, 3) are written as given: relative to ``center``
    in ``frame`` axes. Numbers are written with the shortest text that reads back
    to the same float; epochs with 3, 6 or 9 decimals (see :func:`format_epochs`).
    Every segment needs at least 2 states.
    """
    from contactplan.fileio import atomic_write
    from contactplan.timescale import now_tt

    t = np.atleast_1d(np.asarray(t_tt, dtype=float))
    p = np.asarray(pos_km, dtype=float).reshape(-1, 3)
    v = np.asarray(vel_km_s, dtype=float).reshape(-1, 3)
    a = None if acc_km_s2 is None else np.asarray(acc_km_s2, dtype=float).reshape(-1, 3)
    if not (len(t) == len(p) == len(v)) or (a is not None and len(a) != len(t)):
        raise InputError("times, positions and velocities differ in length", path)
    if len(t) < 2:
        raise InputError("an ephemeris needs at least 2 states", path)
    if not (np.all(np.isfinite(t)) and np.all(np.isfinite(p)) and np.all(np.isfinite(v))):
        raise InputError("ephemeris holds values that are not finite numbers", path)
    if np.any(np.diff(t) <= 0):
        raise InputError("ephemeris times must increase", path)
    center = center.upper()
    frame = frame.upper()
    ts = time_system.upper()
    if center not in CENTERS or frame not in FRAMES or ts not in TIME_SYSTEMS:
        raise InputError(f"cannot write centre {center}, frame {frame}, time system {ts}", path)
    interpolation = interpolation.upper()
    bounds = [0] + sorted({int(k) for k in segment_starts if 0 < int(k) < len(t)}) + [len(t)]
    if any(b - a < 2 for a, b in zip(bounds[:-1], bounds[1:])):
        raise InputError("an ephemeris segment needs at least 2 states", path)
    for name, val in (("OBJECT_NAME", object_name), ("OBJECT_ID", object_id), ("ORIGINATOR", originator)):
        if not str(val).strip() or "\n" in str(val):
            raise InputError(f"{name} must be one line of text", path)
    # a KVN message is ASCII text (CCSDS 502.0-B-2, KVN rules; from memory): names are folded
    object_name, object_id, originator = (ascii_text(x) for x in (object_name, object_id, originator))
    ep = format_epochs(t, ts)
    created = format_epochs([now_tt() if creation_tt is None else creation_tt], "UTC", 3)[0]
    out = ["CCSDS_OEM_VERS = 2.0"]
    for c in comments:
        for ln in str(c).splitlines() or [""]:
            out.append(f"COMMENT {ascii_text(ln)}".rstrip())
    out += [f"CREATION_DATE = {created}", f"ORIGINATOR = {originator}"]
    cols = [ep] + [[repr(x) for x in p[:, j].tolist()] for j in range(3)] \
        + [[repr(x) for x in v[:, j].tolist()] for j in range(3)]
    if a is not None:
        cols += [[repr(x) for x in a[:, j].tolist()] for j in range(3)]
    rows = [" ".join(row) for row in zip(*cols)]
    for i0, i1 in zip(bounds[:-1], bounds[1:]):
        degree = min(int(interpolation_degree), i1 - i0 - 1)
        out += ["", "META_START",
                f"OBJECT_NAME = {object_name}", f"OBJECT_ID = {object_id}", f"CENTER_NAME = {center}",
                f"REF_FRAME = {frame}", f"TIME_SYSTEM = {ts}", f"START_TIME = {ep[i0]}", f"STOP_TIME = {ep[i1 - 1]}",
                f"INTERPOLATION = {interpolation}", f"INTERPOLATION_DEGREE = {degree}", "META_STOP", ""]
        out.extend(rows[i0:i1])
    return atomic_write(path, "\n".join(out) + "\n")


def sample_ephemeris(eph, start_tt: float, end_tt: float, step_s: float):
    """States of any :class:`~contactplan.ephemeris.base.Ephemeris` every ``step_s`` from
    ``start_tt`` to ``end_tt`` (the end is always included). Returns (t_tt, pos_km, vel_km_s)."""
    if not step_s > 0 or not end_tt > start_tt:
        raise InputError("sampling needs end after start and a positive step")
    n = int(math.floor((end_tt - start_tt) / step_s + 1e-9))
    t = start_tt + step_s * np.arange(n + 1)
    if end_tt - t[-1] > 1e-6:
        t = np.append(t, end_tt)
    else:
        t[-1] = end_tt
    pos, vel = eph.state(t)
    return t, pos, vel


def write_ephemeris_oem(path, eph, start_tt: float, end_tt: float, step_s: float = 600.0, object_name=None,
                        object_id: str = "UNKNOWN", **kwargs) -> Path:
    """Sample ``eph`` (geocentric ICRF) at ``step_s`` and write it as a KVN OEM."""
    t, p, v = sample_ephemeris(eph, start_tt, end_tt, step_s)
    return write_oem(path, t, p, v, object_name or getattr(eph, "name", "SPACECRAFT"), object_id,
                     center="EARTH", frame="ICRF", **kwargs)
