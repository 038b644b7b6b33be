"""Colours and marks of the planner: a palette of its own, readable with the common colour-vision deficiencies.

Every element kind has its own hue family and its own shape (:data:`MARKS`), so no
meaning rests on colour alone: bookings are a mid-lane block (warm yellow), a locked
booking a lavender block with a bar along its top and a cross on its corner, an
error a thick outline with a filled triangle badge, a warning a dashed outline with
an open diamond, a burn a red block with a flame triangle at its start, a keep-out
a band of vertical lines across every lane, an overflow a cross-hatched span with a
heavy bar on the capacity line. ``tests/test_app_editors.py`` checks that these six
stay apart under simulated protanopia, deuteranopia and tritanopia.
"""

from __future__ import annotations

from dataclasses import dataclass

from PySide6.QtCore import Qt
from PySide6.QtGui import QColor, QGuiApplication, QPalette

# accent hues used by the icons (the booking's yellow, the passes' blue, the burns' red)
ORANGE = "#F5C451"
SKY = "#63B3E6"
VERMILLION = "#B3261E"
GREEN = "#2F7D4A"
BLUE = "#1D5B86"
YELLOW = "#E8CB5E"
PURPLE = "#8E1F6F"

#: the shape that tells each element kind apart without its colour
MARKS = {
    "pass": "band across the lane, darker with rate or elevation, black ticks at AOS and LOS",
    "booking": "block in the middle of the lane, thin solid edge",
    "booking_locked": "block with a dark bar along its top and a cross in its top-right corner",
    "error": "thick solid outline with a filled triangle badge at the top-left corner",
    "warning": "dashed outline with an open diamond badge at the top-left corner",
    "burn": "block on the spacecraft lane with a flame triangle at its start",
    "slew": "block on the spacecraft lane with diagonal stripes",
    "other": "hollow block on the spacecraft lane",
    "keepout": "band of vertical lines across every lane",
    "outage": "diagonal hatching on the station lane, dashed edge",
    "overflow": "cross-hatched span on the recorder strip, heavy bar on the capacity line",
}


def _c(hex_: str, alpha: int = 255) -> QColor:
    c = QColor(hex_)
    c.setAlpha(alpha)
    return c


@dataclass
class Theme:
    """All colours the views use, for one light or dark background."""

    dark: bool
    background: QColor
    foreground: QColor
    lane_a: QColor
    lane_b: QColor
    grid: QColor
    day_line: QColor
    pass_low: QColor  # pass band at the lowest rate / elevation
    pass_high: QColor  # ... at the highest
    pass_edge: QColor  # AOS/LOS ticks
    booking: QColor
    booking_edge: QColor
    booking_locked: QColor
    selection: QColor
    burn: QColor
    slew: QColor
    other: QColor
    keepout: QColor  # faint band across every lane
    monitor: QColor
    outage: QColor
    error: QColor
    warning: QColor
    now: QColor
    fill: QColor
    capacity: QColor
    overflow: QColor
    mask: QColor
    track: QColor

    def pass_colour(self, level: float) -> QColor:
        """Colour of a pass band for a level in [0, 1] (0: lowest rate or elevation)."""
        level = 0.0 if level != level else min(1.0, max(0.0, float(level)))
        a, b = self.pass_low, self.pass_high
        return QColor.fromRgbF(
            a.redF() + (b.redF() - a.redF()) * level,
            a.greenF() + (b.greenF() - a.greenF()) * level,
            a.blueF() + (b.blueF() - a.blueF()) * level,
            a.alphaF() + (b.alphaF() - a.alphaF()) * level,
        )


def light_theme() -> Theme:
    return Theme(
        dark=False,
        background=_c("#FFFFFF"), foreground=_c("#1A1A1A"),
        lane_a=_c("#F3F5F7"), lane_b=_c("#FFFFFF"), grid=_c("#CFD4DA"), day_line=_c("#7A8088"),
        pass_low=_c("#D6E6F0"), pass_high=_c("#1D5B86"), pass_edge=_c("#1A1A1A"),
        booking=_c("#F5C451"), booking_edge=_c("#4A3800"), booking_locked=_c("#BFA8E0"),
        selection=_c("#1A1A1A"),
        burn=_c("#B3261E"), slew=_c("#2F7D4A"), other=_c("#6B6B6B"),
        keepout=_c("#4E8FA8", 150), monitor=_c("#2F7D4A", 70), outage=_c("#5A5A5A", 150),
        # text colours: 4.5:1 on white (WCAG 2.1, 1.4.3)
        error=_c("#8E1F6F"), warning=_c("#735800"),
        now=_c("#2C7FB8"), fill=_c("#2F7D4A"), capacity=_c("#1A1A1A"), overflow=_c("#2B2B2B", 140),
        mask=_c("#8C8C8C", 120), track=_c("#1D5B86"),
    )


def dark_theme() -> Theme:
    return Theme(
        dark=True,
        background=_c("#1E2226"), foreground=_c("#E8EAED"),
        lane_a=_c("#262B30"), lane_b=_c("#1E2226"), grid=_c("#3A4047"), day_line=_c("#9AA0A8"),
        pass_low=_c("#1C3547"), pass_high=_c("#63B3E6"), pass_edge=_c("#E8EAED"),
        booking=_c("#F5C451"), booking_edge=_c("#FFF0C2"), booking_locked=_c("#C7B4E6"),
        selection=_c("#FFFFFF"),
        burn=_c("#F2675F"), slew=_c("#5CC28A"), other=_c("#A8A8A8"),
        keepout=_c("#2F6F8F", 170), monitor=_c("#5CC28A", 80), outage=_c("#B0B0B0", 150),
        error=_c("#E85FB8"), warning=_c("#E8CB5E"),
        now=_c("#63B3E6"), fill=_c("#5CC28A"), capacity=_c("#E8EAED"), overflow=_c("#E0E0E0", 140),
        mask=_c("#8C8C8C", 130), track=_c("#63B3E6"),
    )


def system_is_dark() -> bool:
    """True when the desktop asks for a dark scheme (or the window palette is dark)."""
    app = QGuiApplication.instance()
    if app is None:
        return False
    try:
        scheme = app.styleHints().colorScheme()
        if scheme == Qt.ColorScheme.Dark:
            return True
        if scheme == Qt.ColorScheme.Light:
            return False
    except AttributeError:  # Qt < 6.5
        pass
    return app.palette().color(QPalette.ColorRole.Window).lightness() < 128


_current: Theme | None = None


def current(refresh: bool = False) -> Theme:
    """The theme matching the system colour scheme (cached; ``refresh`` re-reads it)."""
    global _current
    if _current is None or refresh:
        _current = dark_theme() if system_is_dark() else light_theme()
    return _current


def set_theme(theme: Theme) -> None:
    global _current
    _current = theme
