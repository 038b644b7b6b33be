"""Colours of the planner: one palette of our own, safe for colour-blind readers.

The hues come from the Okabe-Ito set (Okabe & Ito, "Color Universal Design",
2008), chosen because it stays distinguishable under the common colour-vision
deficiencies. Every meaning also has a second cue (hatching, outline style,
position in the lane) so that no information rests on colour alone.
"""

from __future__ import annotations

from dataclasses import dataclass

from PySide6.QtCore import Qt
from PySide6.QtGui import QColor, QGuiApplication, QPalette

# Okabe-Ito hues (Okabe & Ito 2008, "Color Universal Design").
ORANGE = "#E69F00"
SKY = "#56B4E9"
GREEN = "#009E73"
YELLOW = "#F0E442"
BLUE = "#0072B2"
VERMILLION = "#D55E00"
PURPLE = "#CC79A7"


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
        lane_a=_c("#F4F6F8"), lane_b=_c("#FFFFFF"), grid=_c("#D0D4D8"), day_line=_c("#7A8088"),
        pass_low=_c("#CFE6F5"), pass_high=_c(BLUE), pass_edge=_c("#1A1A1A"),
        booking=_c(ORANGE), booking_edge=_c("#3A2A00"), booking_locked=_c("#B88400"),
        selection=_c("#1A1A1A"),
        burn=_c(VERMILLION), slew=_c(PURPLE), other=_c(GREEN),
        keepout=_c(VERMILLION, 38), monitor=_c(GREEN, 60), outage=_c("#5A5A5A", 150),
        # a darker vermillion and sky than Okabe-Ito's: the error text and the now line need their
        # WCAG 2.1 contrast on white (4.5:1 for text, 1.4.3; 3:1 for a line, 1.4.11)
        error=_c("#B34A00"), warning=_c("#8A6D00"),
        now=_c("#3A8CC0"), fill=_c(GREEN), capacity=_c("#1A1A1A"), overflow=_c(VERMILLION, 90),
        mask=_c("#8C8C8C", 120), track=_c(BLUE),
    )


def dark_theme() -> Theme:
    return Theme(
        dark=True,
        background=_c("#1E2226"), foreground=_c("#E8EAED"),
        lane_a=_c("#262B30"), lane_b=_c("#1E2226"), grid=_c("#3A4047"), day_line=_c("#9AA0A8"),
        pass_low=_c("#1F3A4D"), pass_high=_c(SKY), pass_edge=_c("#E8EAED"),
        booking=_c(ORANGE), booking_edge=_c("#FFF2CC"), booking_locked=_c("#B88400"),
        selection=_c("#FFFFFF"),
        burn=_c(VERMILLION), slew=_c(PURPLE), other=_c(GREEN),
        keepout=_c(VERMILLION, 48), monitor=_c(GREEN, 70), outage=_c("#B0B0B0", 150),
        error=_c("#FF7A3D"), warning=_c(YELLOW),
        now=_c(SKY), fill=_c(GREEN), capacity=_c("#E8EAED"), overflow=_c(VERMILLION, 110),
        mask=_c("#8C8C8C", 130), track=_c(SKY),
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
