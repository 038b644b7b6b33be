"""Windowed reading of a KVN OEM: parse only the states around a planning window.

A year-long OEM is tens of megabytes; a week's plan needs a few percent of it. The first
windowed read of a file parses it whole (every check of the reader applies to all of it) and
keeps an index in the user cache (:mod:`contactplan.cachefile`): for each segment its
META_START line, its first and last epoch, its node spacing when uniform, and every
:data:`STRIDE`-th state's line number, byte offsets and epoch. The index is keyed by the real
path, size, modification time and the SHA-256 of the file's first and last 64 KiB, so an edited
file is indexed again.

Later reads take from the file only the header, every metadata block, comment and covariance
block, and for each segment the run of states from one stride before the window to one stride
after it; the data lines left out are replaced by empty lines, so the text is parsed by the same
KVN reader with the file's own line numbers, and every check of the reader (metadata, epochs in
order and inside START/STOP, absurd states, spacing jumps and holes) applies to what is read.
Each segment's useable span is the whole segment's (from the index), so coverage and gaps equal
a full read's. :attr:`~contactplan.io.oem_model.OemSegment.part` tells the ephemeris which span
of a segment was loaded and how to place its interpolation windows on the whole table, so
states inside it are the full read's to the bit; :class:`~contactplan.ephemeris.oem.OemEphemeris`
reads the whole file if it is ever asked for a time outside.

XML files and files with bare carriage returns are always read whole.
"""

from __future__ import annotations

import hashlib
import os
from pathlib import Path

import numpy as np

#: states between two index entries (more than the widest interpolation window, 21 nodes, plus 2)
STRIDE = 64
_FORMAT = 1
_EDGE_BYTES = 65536
_WIDTH = 5


def _key(real: str, st, head: bytes, tail: bytes) -> dict:
    return {"format": _FORMAT, "stride": STRIDE, "path": real, "size": int(st.st_size),
            "mtime_ns": int(st.st_mtime_ns), "head": hashlib.sha256(head).hexdigest(),
            "tail": hashlib.sha256(tail).hexdigest()}


def _cache_path(real: str) -> Path:
    from contactplan import cachefile

    return cachefile.path_for("oem_index", hashlib.sha256(real.encode("utf-8", "surrogateescape")).hexdigest()[:24]
                              + ".bin")


def build_index(oem, data: bytes) -> np.ndarray | None:
    """The index (float64 rows of 5) of a KVN OEM parsed whole from ``data``; None when the file
    cannot be read by windows (XML, bare carriage returns)."""
    from contactplan.ephemeris.interp import uniform_step

    if oem.encoding != "KVN" or data.count(b"\r") != data.count(b"\r\n"):
        return None
    nl = np.flatnonzero(np.frombuffer(data, dtype=np.uint8) == 10)
    line_start = np.concatenate([[0], nl + 1])  # line L (1-based) starts at line_start[L - 1]
    line_next = np.append(nl + 1, len(data))  # and the next one at line_next[L - 1]
    rows = [[_FORMAT, len(oem.segments), STRIDE, 0.0, 0.0]]
    for seg in oem.segments:
        n = len(seg.t_tt)
        k = np.unique(np.append(np.arange(0, n, STRIDE), n - 1))
        lines = np.asarray(seg.data_lines, dtype=np.int64)[k]
        step = uniform_step(seg.t_tt)
        rows.append([seg.line, n, seg.t_tt[0], seg.t_tt[-1], np.nan if step is None else step])
        rows.append([k.size, 0.0, 0.0, 0.0, 0.0])
        rows.extend(np.column_stack([k, lines, line_start[lines - 1], line_next[lines - 1],
                                     seg.t_tt[k]]).tolist())
    return np.asarray(rows, dtype=float)


def _segments(index: np.ndarray):
    """[(meta_line, n, t_first, t_last, step or None, entries (m, 5))] from the index rows."""
    out = []
    r = 1
    for _ in range(int(index[0, 1])):
        meta_line, n, t_first, t_last, step = index[r]
        m = int(index[r + 1, 0])
        out.append((int(meta_line), int(n), float(t_first), float(t_last),
                    None if np.isnan(step) else float(step), index[r + 2:r + 2 + m]))
        r += 2 + m
    return out


def read_oem_window(path, start_tt: float, end_tt: float):
    """An :class:`~contactplan.io.oem_model.OemFile` whose segments hold the states that cover
    [start_tt, end_tt] plus the interpolation's margin (see the module's doc). Errors as
    :func:`contactplan.io.oem.read_oem`: InputError naming the file and line."""
    from contactplan import cachefile
    from contactplan.fileio import read_input
    from contactplan.io.oem import parse_oem_bytes, read_oem

    try:
        real = os.path.realpath(path)
        st = os.stat(real)
        import stat as _stat

        if not _stat.S_ISREG(st.st_mode) or st.st_size <= 2 * _EDGE_BYTES:
            return read_oem(path)
        with open(real, "rb") as fh:
            head = fh.read(_EDGE_BYTES)
            fh.seek(st.st_size - _EDGE_BYTES)
            tail = fh.read(_EDGE_BYTES)
    except OSError:
        return read_oem(path)  # names the problem
    key = _key(real, st, head, tail)
    where = _cache_path(real)
    index = cachefile.load(where, key)
    if index is not None:
        oem = _read_parts(path, real, index, start_tt, end_tt, parse_oem_bytes)
        if oem is not None:
            return oem
    data = read_input(path)
    oem = parse_oem_bytes(data, Path(path))
    index = build_index(oem, data)
    if index is not None:
        cachefile.store(where, key, index)
    return oem


def _read_parts(path, real, index, start_tt, end_tt, parse):
    """The windowed parse, or None when the file no longer matches its index."""
    segs = _segments(index)
    if not segs:
        return None
    plan = []  # per segment: (first entry row, last entry row) of the states to read
    for meta_line, n, t_first, t_last, step, ent in segs:
        last = len(ent) - 1
        if t_last < start_tt or t_first > end_tt:
            j0, j1 = 0, min(1, last)
        else:
            j0 = max(int(np.searchsorted(ent[:, 4], start_tt, side="right")) - 2, 0)
            j1 = min(int(np.searchsorted(ent[:, 4], end_tt, side="left")) + 1, last)
        plan.append((ent[j0], ent[j1]))
    pieces = []
    try:
        with open(real, "rb") as fh:
            def take(a, b):
                fh.seek(a)
                pieces.append(fh.read(b - a))

            pos = 0
            for (meta_line, n, t_first, t_last, step, ent), (e0, e1) in zip(segs, plan):
                first, last = ent[0], ent[-1]
                take(pos, int(first[2]))  # up to the segment's first state line
                pieces.append(b"\n" * int(e0[1] - first[1]))
                take(int(e0[2]), int(e1[3]))
                pieces.append(b"\n" * int(last[1] - e1[1]))
                pos = int(last[3])
            fh.seek(pos)
            pieces.append(fh.read())
    except OSError:
        return None
    spans = {meta_line: (t_first, t_last) for meta_line, n, t_first, t_last, step, ent in segs}
    oem = parse(b"".join(pieces), Path(path), spans)
    if len(oem.segments) != len(segs):
        return None
    for seg, (meta_line, n, t_first, t_last, step, ent), (e0, e1) in zip(oem.segments, segs, plan):
        a, b = int(e0[0]), int(e1[0])
        t = seg.t_tt
        if seg.line != meta_line or len(t) != b - a + 1 or t[0] != e0[4] or t[-1] != e1[4]:
            return None
        if a == 0 and b == n - 1:
            continue
        w = seg.interpolation_degree + 1
        lo = t[0] if a == 0 else t[min(w, len(t) - 1)]
        hi = t[-1] if b == n - 1 else t[max(len(t) - 1 - w, 0)]
        seg.part = (a, t_first, step, float(lo), float(hi))
    return oem
