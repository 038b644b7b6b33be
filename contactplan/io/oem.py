"""CCSDS Orbit Ephemeris Message (OEM) reader and writer.

Reads CCSDS 502.0-B-3 OEM versions 2.0 and 3.0 in KVN (keyword = value text,
:mod:`contactplan.io.oem_kvn`) and XML (parsed with defusedxml, :mod:`contactplan.io.oem_xml`),
both beside the shared model, limits and epoch parsing of :mod:`contactplan.io.oem_model`.
Writes KVN version 2.0. This module is the door: ``read_oem``, ``parse_oem_bytes``, ``write_oem``.

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
from pathlib import Path

import numpy as np

from contactplan.errors import InputError
from contactplan.fileio import read_input
from contactplan.io.oem_model import *  # noqa: F401,F403 - the model, limits and epochs, as before the split
from contactplan.io.oem_model import _EpochError, _format  # noqa: F401 - used by tests and the writer

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
        return _xml_reader(path).xml(text)
    return _kvn_reader(path).kvn(text)



def _kvn_reader(path):
    from contactplan.io.oem_kvn import KvnReader

    return KvnReader(path)


def _xml_reader(path):
    from contactplan.io.oem_xml import XmlReader

    return XmlReader(path)


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
