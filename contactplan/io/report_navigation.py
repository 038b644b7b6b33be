"""The weekly report's orbit-determination section: predicted 1-sigma position over the window
against the requirement, and the values at each check time (contactplan.navigation)."""

from __future__ import annotations

import numpy as np


def navigation_figure(plan, width_in: float):
    """Predicted 1-sigma position (km, log scale) over the window, the requirement line and the check times."""
    from matplotlib.figure import Figure

    from contactplan.io.report import COLOURS, _day_axis

    sc, nav = plan.scenario, plan.navigation
    fig = Figure(figsize=(width_in, 2.4), layout="constrained")
    ax = fig.add_subplot()
    t0, t1 = sc.start_tt, sc.end_tt
    x = (np.asarray(nav.t_tt) - t0) / 86400.0
    ax.plot(x, nav.position_sigma_km, color=COLOURS["booking"], lw=1.2, label="predicted 1-sigma position")
    ax.axhline(nav.required_position_km, color=COLOURS["capacity"], ls="--", lw=1.0, label="required")
    for k, c in enumerate(nav.checks):
        ax.plot([(c.t_tt - t0) / 86400.0], [c.position_sigma_km], ls="none",
                marker="o" if c.met else "X", ms=5, color=COLOURS["monitor" if c.met else "error"],
                label=("check time" if k == 0 else None))
    ax.set_yscale("log")
    ax.set_ylabel("km", fontsize=7)
    ax.tick_params(axis="y", labelsize=6.5)
    _day_axis(ax, t0, t1)
    fig.legend(loc="outside lower center", fontsize=6, ncol=3, frameon=False)
    return fig


def navigation_story(plan, P, figure, table, small, h2, frame_w, fig_w_in) -> list:
    """Flowables of the section (empty without a predicted accuracy)."""
    nav = getattr(plan, "navigation", None)
    if nav is None:
        return []
    from reportlab.platypus import Spacer
    from reportlab.lib.units import mm

    from contactplan.io.report import _fmt

    out = [P("Orbit determination (predicted)", h2),
           P(f"Linearised covariance of the planned two-way ranging and Doppler ({nav.measurements} measurements), "
             f"measurement noise only: the best this tracking allows, not a flight-dynamics product. Required "
             f"1-sigma position {nav.required_position_km:g} km at each burn's data cut-off and at the window end; "
             f"crosses mark check times that miss it.", small),
           Spacer(1, 2 * mm), figure(navigation_figure(plan, fig_w_in))]
    rows = [["Check", "Time (UTC)", "Position (km)", "Velocity (mm/s)", "Largest axis (km)", "From Earth line",
             "Met"]]
    for c in nav.checks:
        rows.append([c.label, _fmt(c.t_tt), f"{c.position_sigma_km:.3f}", f"{c.velocity_sigma_mm_s:.3f}",
                     f"{c.largest_axis_km:.3f}", f"{c.largest_axis_angle_deg:.0f} deg", "yes" if c.met else "NO"])
    w = frame_w
    out += [Spacer(1, 2 * mm), table(rows, [0.2 * w, 0.2 * w, 0.11 * w, 0.13 * w, 0.14 * w, 0.13 * w, 0.07 * w]),
            Spacer(1, 6 * mm)]
    return out
