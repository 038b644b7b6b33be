"""The recorder in weather on the weekly report: the clear-sky line and the band between the two
availabilities of the forecast (:mod:`contactplan.link.forecast`), and its figures in words."""

from __future__ import annotations


def draw_band(ax, plan, t0: float, colour: str) -> None:
    """Clear-sky fill and the band (fill at p1 to fill at p2) on the recorder axes, when the plan has them."""
    fc = getattr(plan, "forecast", None)
    if fc is None or not len(fc.t_tt):
        return
    x = (fc.t_tt - t0) / 86400.0
    p1, p2 = fc.band_pct
    ax.fill_between(x, fc.band_low_gbit, fc.band_high_gbit, color=colour, alpha=0.18, lw=0,
                    label=f"weather band ({p1:g} to {p2:g} % availability)")
    ax.plot(x, fc.clear_gbit, color=colour, lw=0.8, ls="--", label="clear sky")


def forecast_text(plan) -> str | None:
    """One paragraph for the recorder section (None without a forecast)."""
    fc = getattr(plan, "forecast", None)
    if fc is None:
        return None
    return " ".join(fc.lines()) + "."
