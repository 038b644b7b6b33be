"""Service marks: one letter per booked service (T P C R D) in a fixed order, drawn as a row of small
boxes on a booking in the timeline, plus the words tooltips and the passes panel use for services and
per-link margins.

Each service keeps its slot, letter and Okabe-Ito hue (colour is the second cue, the letter the first),
so a row reads the same at every zoom. At week zoom a booking of a few hours is narrower than the
row: the row is then drawn centred on the booking in the lane's strip beside its block, where it stays legible.
"""

from __future__ import annotations

from PySide6.QtCore import QRectF, Qt
from PySide6.QtGui import QColor, QFont, QFontMetricsF, QPen

from contactplan.scenario.model import SERVICES

#: one capital letter per service, in the order of ``SERVICES``
SERVICE_LETTERS = {"telemetry": "T", "playback": "P", "commanding": "C", "ranging": "R", "doppler": "D"}
#: hues of the marks (Okabe-Ito, the roles are ours); dark text reads on all of them
SERVICE_COLOURS = {"telemetry": "#56B4E9", "playback": "#E69F00", "commanding": "#CC79A7",
                   "ranging": "#009E73", "doppler": "#F0E442"}
MARK_PT = 7.5  # point size of the letters: the smallest that stays readable on a week's view (common practice)


def letters(services) -> str:
    """The marks of ``services`` in the fixed order, e.g. ``"TPRD"``."""
    chosen = set(services)
    return "".join(SERVICE_LETTERS[s] for s in SERVICES if s in chosen)


def legend_text() -> str:
    return ", ".join(f"{v} {k}" for k, v in SERVICE_LETTERS.items())


def offered(scenario, station_id: str) -> set:
    """Services the station can give (empty for an unknown station)."""
    from contactplan.link.services import station_services

    try:
        return station_services(scenario, scenario.station(station_id))
    except KeyError:
        return set()


def services_text(scenario, booking) -> str:
    """``telemetry, playback (playback not at SLM)`` for tooltips: the services, those the station lacks named."""
    lacking = [s for s in booking.services if s not in offered(scenario, booking.station)]
    text = ", ".join(booking.services) or "no services"
    return text + (f" ({', '.join(lacking)} not at {booking.station})" if lacking else "")


def margins_text(result, p) -> str:
    """``X-DN +6.1 dB, X-UP +12.0 dB`` at culmination for one pass ('' when no link has a profile)."""
    from contactplan.app.models import link_margins

    return ", ".join(f"{k} {m:+.1f} dB" for k, m in link_margins(getattr(result, "link_profiles", None), p))


def mark_font() -> QFont:
    f = QFont()
    f.setPointSizeF(MARK_PT)
    f.setBold(True)
    return f


def mark_rects(block: QRectF, n: int, spare: QRectF, font: QFont, after_x: float = -1e9) -> list:
    """Cells for ``n`` marks on a booking drawn as ``block`` (pixels): inside its lower half when they fit,
    else centred on the booking in ``spare``, the strip of the lane beside the block; never left of
    ``after_x`` (the end of the lane's previous row)."""
    fm = QFontMetricsF(font)
    w = fm.horizontalAdvance("W") + 3.0
    h = fm.height() + 1.0
    row_w = n * w
    if row_w + 4 <= block.width() and h <= block.height() / 2:
        x0, y0 = block.left() + (block.width() - row_w) / 2, block.bottom() - h - 1
    else:
        x0, y0 = block.center().x() - row_w / 2, spare.top() + max(0.0, (spare.height() - h) / 2)
    x0 = max(x0, after_x)
    return [QRectF(x0 + i * w, y0, w - 1, h) for i in range(n)]


def paint_marks(painter, block: QRectF, services, spare: QRectF, edge: QColor, after_x: float = -1e9) -> list:
    """Draw the booking's service marks; returns ``[(letter, QRectF)]`` as drawn."""
    chosen = [s for s in SERVICES if s in set(services)]
    if not chosen:
        return []
    font = mark_font()
    cells = mark_rects(block, len(chosen), spare, font, after_x)
    painter.save()
    painter.setFont(font)
    out = []
    for s, r in zip(chosen, cells):
        painter.fillRect(r, QColor(SERVICE_COLOURS[s]))
        painter.setPen(QPen(edge, 0.8))
        painter.drawRect(r)
        painter.setPen(QPen(QColor("#1A1A1A")))
        painter.drawText(r, int(Qt.AlignmentFlag.AlignCenter), SERVICE_LETTERS[s])
        out.append((SERVICE_LETTERS[s], QRectF(r)))
    painter.restore()
    return out
