"""Horizon mask points from spreadsheet text or a two-column CSV file: azimuth_deg, elevation_deg per row.

Cells may be separated by a tab, a comma, a semicolon or spaces (what a spreadsheet
puts on the clipboard, or a CSV export). Lines without two numbers at the start
(a header such as ``azimuth,elevation``) are skipped only before the first point;
after it, a line that is not two numbers is refused with its line number. Ranges
and order are not checked here: the scenario loader's own mask rules do that.
"""

from __future__ import annotations

import math
import re
from pathlib import Path

from contactplan.errors import InputError

_SPLIT = re.compile(r"[\t,;]|\s+")
MAX_POINTS = 100_000


def _numbers(line: str):
    cells = [c for c in _SPLIT.split(line.strip()) if c != ""]
    if len(cells) < 2:
        return None
    try:
        az, el = float(cells[0]), float(cells[1])
    except ValueError:
        return None
    if not (math.isfinite(az) and math.isfinite(el)):
        return None
    return az, el, cells[2:]


def parse_mask_text(text: str, source: str | Path | None = None) -> list:
    """``[[azimuth_deg, elevation_deg], ...]`` in the order given; InputError naming the line otherwise."""
    points: list = []
    for no, line in enumerate(str(text).splitlines(), start=1):
        if not line.strip() or line.lstrip().startswith("#"):
            continue
        got = _numbers(line)
        if got is None or any(c.strip() for c in got[2]):
            if not points and got is None:
                continue  # a header before the first point
            raise InputError("expected two numbers, azimuth_deg and elevation_deg", source, no)
        points.append([got[0], got[1]])
        if len(points) > MAX_POINTS:
            raise InputError(f"more than {MAX_POINTS} mask points", source, no)
    if not points:
        raise InputError("no azimuth and elevation pairs found", source)
    return points


def read_mask_csv(path: str | Path) -> list:
    """The mask points of a two-column CSV file (see :func:`parse_mask_text`)."""
    from contactplan.fileio import read_input

    return parse_mask_text(utf8_text(read_input(Path(path)), path), path)


def utf8_text(data: bytes, path) -> str:
    """The text of a file read as UTF-8 (a byte-order mark dropped); InputError naming the line otherwise."""
    try:
        return data.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        raise InputError("not UTF-8 text", path, data[: exc.start].count(b"\n") + 1) from None
