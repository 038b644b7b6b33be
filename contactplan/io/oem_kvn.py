"""CCSDS OEM in KVN (keyword = value text): the reader (CCSDS 502.0-B-3, section 5)."""

from __future__ import annotations

import math

import numpy as np

from contactplan.io.oem_model import *  # noqa: F401,F403 - the shared model and limits
from contactplan.io.oem_model import (Reader, _COMMENT_RE, _COV_KEYS, _HEADER_KEYS, _KEYWORD_LINE_RE, _KV_RE,
                                      _META_KEYS, _WORD_RE, _is_float)


class KvnReader(Reader):
    """Reads OEM KVN text into an :class:`OemFile`."""

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
