"""The weekly report: one PDF for the planning meeting (A4 or Letter), rendered headless.

Pages: a cover (mission, window in UTC and day of year, plan revision,
generation time, a summary and the caution); the week as a timeline (one lane
per station with passes, outages and bookings, a spacecraft lane with burns,
slews and their monitor spans and keep-outs); the booking table (services, track,
rate plan and its volume); the spacecraft's links per band and which station gives
which; the findings; the recorder fill against capacity; achievable rate and volume
per pass with the culmination margin on every link.

Text uses the PDF base-14 Helvetica family (present in every PDF reader, nothing
embedded) while every name in the plan fits its Latin-1 style encoding; a name
outside it (Greek, Cyrillic, ...) switches the text to DejaVu Sans, embedded from
the copy matplotlib ships, so no name turns into empty boxes; figures are drawn by matplotlib's Agg canvas (no display, no pyplot
state) and placed as RGB images (binary, Flate-compressed). matplotlib and reportlab are imported only inside
:func:`write_report` so the CLI start path stays light.

Palette: our own assignment of the Okabe-Ito colour-blind-safe colours, each
kind of block also told apart by hatching or outline so the picture survives a
grey-scale printer.
"""

from __future__ import annotations

import io
from xml.sax.saxutils import escape

from contactplan import CAUTION, __version__

# Okabe-Ito colours (Okabe & Ito 2008, "Color Universal Design"); the roles are ours.
COLOURS = {
    "pass": "#56B4E9",  # sky blue, light fill
    "booking": "#0072B2",  # blue
    "setup": "#9CC3E0",  # lighter blue: pre-pass and post-pass inside a booking
    "burn": "#D55E00",  # vermillion
    "slew": "#E69F00",  # orange
    "other": "#CC79A7",  # reddish purple
    "monitor": "#009E73",  # bluish green
    "keepout": "#7F7F7F",  # grey
    "outage": "#000000",
    "shadow": "#444444",
    "error": "#D55E00",
    "warning": "#E69F00",
    "capacity": "#000000",
}
STATION_CYCLE = ("#0072B2", "#E69F00", "#009E73", "#CC79A7", "#56B4E9", "#D55E00", "#F0E442", "#000000")
STATION_MARKER = ("o", "s", "^", "D", "v", "P", "X", "*")
DPI = 150  # raster figures: sharp in print at the sizes placed, a quarter fewer pixels than 200


# ------------------------------------------------------------ time axis helpers
def _days(t_tt, t0_tt):
    import numpy as np

    return (np.asarray(t_tt, dtype=float) - t0_tt) / 86400.0


def _day_axis(ax, start_tt: float, end_tt: float) -> None:
    """x in days since the window start; ticks at UTC midnights labelled date and day of year."""
    from contactplan.timescale import format_utc, utc_days, day_of_year

    mids = [float(m) for m in utc_days(start_tt, end_tt) if m >= start_tt - 1e-6]
    span_days = (end_tt - start_tt) / 86400.0
    every = max(1, int(round(span_days / 10.0)))
    ticks = mids[::every]
    ax.set_xticks([(m - start_tt) / 86400.0 for m in ticks])
    ax.set_xticklabels([f"{format_utc(m, 0)[5:10]}\nDOY {day_of_year(m):03d}" for m in ticks], fontsize=6.5)
    if mids:  # one collection for every midnight line (not one artist each)
        ax.vlines([(m - start_tt) / 86400.0 for m in mids], 0.0, 1.0, transform=ax.get_xaxis_transform(),
                  colors="#BBBBBB", lw=0.5, zorder=0)
    ax.set_xlim(0.0, span_days)
    if span_days <= 16:  # minor ticks every 6 h
        first = (mids[0] - start_tt) / 86400.0 if mids else 0.0
        import numpy as np

        minor = np.arange(first, span_days + 1e-9, 0.25)
        ax.set_xticks(minor[(minor >= 0)], minor=True)


def _raster(fig):
    """The figure drawn once by Agg at :data:`DPI`, as an RGB image for the PDF (no PNG round trip)."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from PIL import Image as PILImage

    canvas = FigureCanvasAgg(fig)
    fig.set_dpi(DPI)
    canvas.draw()
    w, h = canvas.get_width_height(physical=True)
    rgba = PILImage.frombuffer("RGBA", (w, h), canvas.buffer_rgba(), "raw", "RGBA", 0, 1)
    return rgba.convert("RGB")


def _RasterFlowable(img, width: float, height: float):
    """A flowable drawing an in-memory RGB image at width x height points."""
    from reportlab.lib.utils import ImageReader
    from reportlab.platypus import Flowable

    class RasterFlowable(Flowable):
        def __init__(self):
            super().__init__()
            self.width, self.height = width, height
            self.hAlign = "CENTER"

        def wrap(self, avail_w, avail_h):
            return self.width, self.height

        def draw(self):
            self.canv.drawImage(ImageReader(img), 0, 0, self.width, self.height)

    return RasterFlowable()


# ------------------------------------------------------------ figures
def timeline_figure(plan, width_in: float):
    """Stations as lanes (passes, outages, bookings), a spacecraft lane (burns, slews, monitor spans, shadows),
    keep-outs shaded across every lane."""
    from matplotlib.figure import Figure
    from matplotlib.patches import Patch

    sc = plan.scenario
    t0, t1 = sc.start_tt, sc.end_tt
    stations = [s.id for s in sc.stations]
    lanes = ["Spacecraft"] + stations
    n = len(lanes)
    fig = Figure(figsize=(width_in, 1.6 + 0.6 * n), layout="constrained")
    ax = fig.add_subplot()
    y = {name: n - 1 - i for i, name in enumerate(lanes)}
    ax.set_ylim(-0.6, n - 0.4)
    ax.set_yticks([y[name] for name in lanes])
    ax.set_yticklabels(lanes, fontsize=7)

    def seg(a, b):
        a, b = max(a, t0), min(b, t1)
        return ((a - t0) / 86400.0, (b - a) / 86400.0) if b > a else None

    def bars(lane, spans, h, **kw):
        segs = [s for s in (seg(a, b) for a, b in spans) if s]
        if segs:
            ax.broken_barh(segs, (y[lane] - h / 2, h), **kw)

    # keep-outs: faint across every lane
    for act in sc.activities:
        if act.downlink_keepout_min > 0 or act.kind in ("burn", "slew"):
            s = seg(*act.keepout_span_tt)
            if s:
                ax.axvspan(s[0], s[0] + s[1], color=COLOURS["keepout"], alpha=0.13, lw=0, zorder=0.5)
    for sid in stations:
        bars(sid, [(p.aos_tt, p.los_tt) for p in plan.passes if p.station == sid], 0.8,
             facecolors=COLOURS["pass"], alpha=0.45, edgecolors="none", zorder=1)
        try:
            st = sc.station(sid)
            outs = [(o.start_tt, o.end_tt) for o in st.outages]
            setup_s, tear_s = st.pre_pass_min * 60.0, st.post_pass_min * 60.0
        except KeyError:
            outs, setup_s, tear_s = [], 0.0, 0.0
        bars(sid, outs, 0.8, facecolors="none", edgecolors=COLOURS["outage"], hatch="xxx", lw=0.5, zorder=2)
        from contactplan.io.report_network import counting

        every = [b for b in sc.bookings if b.station == sid]
        mine = counting(every)
        gone = [b for b in every if b not in mine]  # declined or cancelled: outlined, counted nowhere
        bars(sid, [(b.start_tt, b.end_tt) for b in gone], 0.46, facecolors="none", edgecolors=COLOURS["booking"],
             hatch="////", lw=0.5, zorder=3)
        bars(sid, [(b.start_tt, b.end_tt) for b in mine], 0.46, facecolors=COLOURS["setup"],
             edgecolors=COLOURS["booking"], lw=0.6, zorder=3)
        bars(sid, [(min(b.start_tt + setup_s, b.end_tt), max(b.end_tt - tear_s, b.start_tt)) for b in mine], 0.46,
             facecolors=COLOURS["booking"], edgecolors="none", zorder=3.1)
        flagged = {s for f in plan.findings if f.severity == "error" for s in f.subjects}
        bars(sid, [(b.start_tt, b.end_tt) for b in mine if b.id in flagged], 0.62, facecolors="none",
             edgecolors=COLOURS["error"], lw=1.4, zorder=3.5)
        for b in mine:
            s = seg(b.start_tt, b.end_tt)
            if s and s[1] > 0.12:
                ax.text(s[0] + s[1] / 2, y[sid], b.id, ha="center", va="center", fontsize=6, color="white",
                        zorder=4, clip_on=True)
    kinds = {"burn": ("////", COLOURS["burn"]), "momentum-dump": ("xx", COLOURS["burn"]), "slew": ("\\\\\\\\", COLOURS["slew"]), "other": ("..", COLOURS["other"])}
    for act in sc.activities:
        hatch, colour = kinds.get(act.kind, kinds["other"])
        if act.changes_velocity and (act.monitor_before_min or act.monitor_after_min):
            bars("Spacecraft", [act.monitor_span_tt], 0.75, facecolors="none", edgecolors=COLOURS["monitor"],
                 lw=1.0, zorder=2)
        # drawn at least 1/300 of the window wide so a short slew stays visible at week scale
        mid = 0.5 * (act.start_tt + act.end_tt)
        half = max(act.end_tt - act.start_tt, (t1 - t0) / 300.0) / 2
        bars("Spacecraft", [(mid - half, mid + half)], 0.5, facecolors=colour, edgecolors="black", hatch=hatch,
             lw=0.4, zorder=3)
    shadows = [(a, b) for a, b, *_ in (plan.shadows or [])]
    bars("Spacecraft", shadows, 0.25, facecolors=COLOURS["shadow"], edgecolors="none", zorder=2.5)
    _day_axis(ax, t0, t1)
    ax.set_xlabel("UTC day (tick at 00:00 UTC)", fontsize=7)
    ax.tick_params(axis="y", length=0)
    legend = [
        Patch(facecolor=COLOURS["pass"], alpha=0.45, label="pass"),
        Patch(facecolor=COLOURS["booking"], edgecolor=COLOURS["booking"], label="booking track (BOT-EOT)"),
        Patch(facecolor=COLOURS["setup"], edgecolor=COLOURS["booking"], label="pre-pass / post-pass"),
        Patch(facecolor="none", edgecolor=COLOURS["error"], lw=1.4, label="booking with an error"),
        Patch(facecolor="none", edgecolor=COLOURS["booking"], hatch="////", label="declined / cancelled"),
        Patch(facecolor="none", edgecolor=COLOURS["outage"], hatch="xxx", label="station outage"),
        Patch(facecolor=COLOURS["burn"], edgecolor="black", hatch="////", label="burn"),
        Patch(facecolor=COLOURS["burn"], edgecolor="black", hatch="xx", label="momentum dump"),
        Patch(facecolor="none", edgecolor=COLOURS["monitor"], label="monitor span"),
        Patch(facecolor=COLOURS["slew"], edgecolor="black", hatch="\\\\\\\\", label="slew"),
        Patch(facecolor=COLOURS["keepout"], alpha=0.25, label="downlink keep-out"),
    ]
    if shadows:
        legend.append(Patch(facecolor=COLOURS["shadow"], label="shadow"))
    fig.legend(handles=legend, loc="outside lower center", ncol=5, fontsize=6, frameon=False)
    return fig


def recorder_figure(plan, width_in: float):
    """Recorder fill (Gbit) over the window against capacity and the 90 % line; overflow spans shaded."""
    from matplotlib.figure import Figure

    sc, rec = plan.scenario, plan.recorder
    fig = Figure(figsize=(width_in, 2.6), layout="constrained")
    ax = fig.add_subplot()
    t0, t1 = sc.start_tt, sc.end_tt
    x = _days(rec.t_tt, t0)
    ax.plot(x, rec.fill_gbit, color=COLOURS["booking"], lw=1.2, label="on board")
    from contactplan.io.report_forecast import draw_band

    draw_band(ax, plan, t0, COLOURS["booking"])  # weather: clear-sky line and band (nothing without weather)
    ax.axhline(rec.capacity_gbit, color=COLOURS["capacity"], ls="--", lw=1.0, label="capacity")
    ax.axhline(0.9 * rec.capacity_gbit, color=COLOURS["warning"], ls=":", lw=1.0, label="90 % of capacity")
    for k, (a, b, _lost) in enumerate(rec.overflow_spans or []):
        ax.axvspan((a - t0) / 86400.0, (b - t0) / 86400.0, color=COLOURS["error"], alpha=0.25, hatch="//",
                   lw=0, label="overflow (data lost)" if k == 0 else None)
    from contactplan.io.report_network import counting

    for b in counting(sc.bookings):
        if "playback" in b.services:
            ax.axvspan((b.start_tt - t0) / 86400.0, (b.end_tt - t0) / 86400.0, ymin=0, ymax=0.04,
                       color=COLOURS["booking"], lw=0)
    ax.set_ylim(0, max(rec.capacity_gbit * 1.12, float(max(rec.fill_gbit, default=0.0)) * 1.05, 1.0))
    ax.set_ylabel("Gbit", fontsize=7)
    ax.tick_params(axis="y", labelsize=6.5)
    _day_axis(ax, t0, t1)
    fig.legend(loc="outside lower center", fontsize=6, ncol=4, frameon=False)
    return fig


def rate_volume_figure(plan, width_in: float):
    """Top: achievable rate along each profiled pass; bottom: volume each pass could return (stem at culmination)."""
    import numpy as np
    from matplotlib.figure import Figure
    from matplotlib.lines import Line2D

    sc = plan.scenario
    t0, t1 = sc.start_tt, sc.end_tt
    sids = [s.id for s in sc.stations]
    style = {sid: (STATION_CYCLE[i % len(STATION_CYCLE)], STATION_MARKER[i % len(STATION_MARKER)])
             for i, sid in enumerate(sids)}
    fig = Figure(figsize=(width_in, 3.6), layout="constrained")
    ax1, ax2 = fig.subplots(2, 1, sharex=True)
    from matplotlib.collections import LineCollection

    # One artist per station and kind (not per pass): the same picture, drawn far faster.
    steps: dict[str, list] = {}
    stems: dict[str, list] = {}
    for p in plan.passes:
        prof = (plan.profiles or {}).get(id(p))
        if prof is not None and len(prof.t_tt):
            x = _days(prof.t_tt, t0)
            r = np.asarray(prof.rate_kbps, dtype=float) / 1000.0
            # a "post" step: hold each rate until the next sample
            steps.setdefault(p.station, []).append(np.column_stack([np.repeat(x, 2)[1:], np.repeat(r, 2)[:-1]]))
        if p.volume_gbit and t0 <= p.max_elevation_tt <= t1:
            # a stem at culmination: passes of different stations overlap in time, stems do not hide each other
            stems.setdefault(p.station, []).append(((p.max_elevation_tt - t0) / 86400.0, p.volume_gbit))
    for sid, paths in steps.items():
        colour = style.get(sid, ("#000000", "o"))[0]
        ax1.add_collection(LineCollection(paths, colors=colour, linewidths=0.9))
    if steps:
        ax1.autoscale_view()
    for sid, pts in stems.items():
        colour, marker = style.get(sid, ("#000000", "o"))
        x, v = np.array(pts).T
        ax2.vlines(x, 0, v, color=colour, lw=1.2)
        ax2.plot(x, v, marker=marker, color=colour, markeredgecolor="black", markersize=5,
                 markeredgewidth=0.5, ls="none")
    ax1.set_ylim(bottom=0)
    ax2.set_ylim(bottom=0)
    ax1.set_ylabel("rate (Mbit/s)", fontsize=7)
    ax2.set_ylabel("volume per pass (Gbit)", fontsize=7)
    for ax in (ax1, ax2):
        ax.tick_params(axis="y", labelsize=6.5)
    _day_axis(ax1, t0, t1)
    ax1.tick_params(axis="x", labelbottom=False)
    _day_axis(ax2, t0, t1)
    handles = [Line2D([], [], color=style[s][0], marker=style[s][1], markeredgecolor="black", markeredgewidth=0.5,
                      label=s) for s in sids if any(p.station == s for p in plan.passes)]
    if handles:
        fig.legend(handles=handles, loc="outside lower center", ncol=min(8, len(handles)), fontsize=6, frameon=False)
    return fig


# ------------------------------------------------------------ the document
def _fmt(t_tt) -> str:
    from contactplan.timescale import format_utc

    return format_utc(t_tt, 0)


def _span(a_tt: float, b_tt: float) -> str:
    """``2027-01-12T18:35:00Z to 19:03:00Z`` (the end's date only when it differs)."""
    a, b = _fmt(a_tt), _fmt(b_tt)
    return f"{a} to {b[11:] if a[:10] == b[:10] else b}"


def _count(n: int, word: str) -> str:
    return f"{n} {word}" if n == 1 else f"{n} {word}s"


def _rate_plan_cell(rec: dict) -> str:
    """A booking's rate plan in a table cell: ``X-DN: 11:45-13:10 256; ...`` (UTC hours, kbit/s)."""
    steps = rec.get("rate_plan_kbps") or []
    if not steps:
        return "-"
    return f"{rec['rate_plan_link']}: " + "; ".join(
        f"{s['start_utc'][11:16]}-{s['end_utc'][11:16]} {s['rate_kbps']:g}" for s in steps)


def _hours(seconds: float) -> str:
    return f"{seconds / 3600.0:.2f}"


#: the base-14 family, used while every text fits its encoding
BASE_FONTS = {"regular": "Helvetica", "bold": "Helvetica-Bold", "italic": "Helvetica-Oblique"}


def report_fonts(texts) -> dict:
    """Font names for the report text: Helvetica when every text fits the base-14 fonts' encoding
    (WinAnsi, i.e. cp1252), else DejaVu Sans (regular, bold, oblique) embedded from matplotlib's copy."""
    if all(_fits_base14(t) for t in texts):
        return dict(BASE_FONTS)
    from pathlib import Path

    import matplotlib
    from reportlab.lib.fonts import addMapping
    from reportlab.pdfbase import pdfmetrics
    from reportlab.pdfbase.ttfonts import TTFont

    folder = Path(matplotlib.get_data_path()) / "fonts" / "ttf"
    names = {"regular": ("CP-DejaVuSans", "DejaVuSans.ttf"), "bold": ("CP-DejaVuSans-Bold", "DejaVuSans-Bold.ttf"),
             "italic": ("CP-DejaVuSans-Oblique", "DejaVuSans-Oblique.ttf"),
             "bolditalic": ("CP-DejaVuSans-BoldOblique", "DejaVuSans-BoldOblique.ttf")}
    try:
        for name, fname in names.values():
            if name not in pdfmetrics.getRegisteredFontNames():
                pdfmetrics.registerFont(TTFont(name, str(folder / fname)))
    except Exception:  # no usable copy: keep the base fonts (characters outside cp1252 show as boxes)
        return dict(BASE_FONTS)
    reg, bold, ital, bi = (names[k][0] for k in ("regular", "bold", "italic", "bolditalic"))
    addMapping(reg, 0, 0, reg)
    addMapping(reg, 1, 0, bold)
    addMapping(reg, 0, 1, ital)
    addMapping(reg, 1, 1, bi)
    return {"regular": reg, "bold": bold, "italic": ital}


def _fits_base14(text) -> bool:
    try:
        str(text).encode("cp1252")
    except UnicodeEncodeError:
        return False
    return True


def _plan_texts(plan) -> list:
    """Every name and message of the plan that the report prints."""
    sc = plan.scenario
    texts = [sc.name, sc.spacecraft.name]
    for st in sc.stations:
        texts += [st.id, st.name] + [getattr(o, "reason", "") for o in st.outages]
    texts += [a.id for a in sc.activities]
    for b in sc.bookings:
        texts += [b.id, b.station] + list(b.services) + [str(getattr(b, "network_ref", None) or "")]
    texts += [f"{lk.id} {lk.band}" for lk in sc.spacecraft.links]
    texts += [f.message for f in plan.findings] + [str(x) for f in plan.findings for x in f.subjects]
    return texts


def _num(v, fmt="{:.2f}", none="-"):
    return none if v is None else fmt.format(v)


def write_report(plan, path, paper: str = "a4", now_tt: float | None = None, changes=None,
                 since_name: str | None = None) -> int:
    """Write the weekly report PDF atomically; returns the number of pages. ``changes``: a change list
    (``plan.diff.Diff``) drawn as a "Changes since revision N" page after the cover."""
    from reportlab.lib import colors
    from reportlab.lib.enums import TA_LEFT
    from reportlab.lib.pagesizes import A4, LETTER, landscape
    from reportlab.lib.styles import ParagraphStyle, getSampleStyleSheet
    from reportlab.lib.units import inch, mm
    from reportlab.platypus import (BaseDocTemplate, Frame, KeepTogether, NextPageTemplate, PageBreak,
                                    PageTemplate, Paragraph, Spacer, Table, TableStyle)

    from contactplan.errors import InputError
    from contactplan.fileio import atomic_write
    from contactplan.io.bookings import booking_records
    from contactplan.timescale import format_doy, now_tt as _now

    paper = str(paper).lower()
    if paper not in ("a4", "letter"):
        raise InputError(f"unknown paper {paper!r}: choose a4 or letter")
    pagesize = A4 if paper == "a4" else LETTER
    sc = plan.scenario
    gen_tt = _now() if now_tt is None else now_tt
    margin = 15 * mm
    frame_w = pagesize[0] - 2 * margin
    fig_w_in = frame_w / inch
    wide = landscape(pagesize)
    wide_w = wide[0] - 2 * margin
    wide_h = wide[1] - 2 * margin - 4 * mm

    from contactplan.io.report_changes import change_texts, changes_story
    from contactplan.io.report_network import bookings_fact, bookings_heading, frozen_story, status_cell

    fonts = report_fonts(_plan_texts(plan) + change_texts(changes))
    ss = getSampleStyleSheet()
    body = ParagraphStyle("body", parent=ss["BodyText"], fontName=fonts["regular"], fontSize=9, leading=11.5)
    small = ParagraphStyle("small", parent=body, fontSize=7, leading=8.5, alignment=TA_LEFT)
    h1 = ParagraphStyle("h1", parent=ss["Heading1"], fontName=fonts["bold"], fontSize=20, leading=24)
    h2 = ParagraphStyle("h2", parent=ss["Heading2"], fontName=fonts["bold"], fontSize=13, leading=16,
                        spaceBefore=4, spaceAfter=6)
    caution_style = ParagraphStyle("caution", parent=body, fontName=fonts["bold"], fontSize=10, leading=13,
                                   borderColor=colors.HexColor("#D55E00"), borderWidth=1.2, borderPadding=8,
                                   backColor=colors.HexColor("#FFF4E6"))

    def P(text, style=body):
        return Paragraph(escape(str(text)), style)

    def figure(fig, width=None, max_height=None):
        img = _raster(fig)
        w_in, h_in = fig.get_size_inches()
        width = frame_w if width is None else width
        height = width * h_in / w_in
        if max_height is not None and height > max_height:
            width, height = width * max_height / height, max_height
        return _RasterFlowable(img, width, height)

    def table(data, widths, header_bg="#DDE6F0", extra=()):
        t = Table(data, colWidths=widths, repeatRows=1)
        t.setStyle(TableStyle([
            ("FONT", (0, 0), (-1, 0), fonts["bold"], 7.5),
            ("FONT", (0, 1), (-1, -1), fonts["regular"], 7),
            ("BACKGROUND", (0, 0), (-1, 0), colors.HexColor(header_bg)),
            ("GRID", (0, 0), (-1, -1), 0.25, colors.HexColor("#999999")),
            ("VALIGN", (0, 0), (-1, -1), "TOP"),
            ("ROWBACKGROUNDS", (0, 1), (-1, -1), [colors.white, colors.HexColor("#F4F6F8")]),
            *extra,
        ]))
        return t

    records = booking_records(sc, plan)
    rec = plan.recorder
    acts = [a for a in sc.activities if a.end_tt > sc.start_tt and a.start_tt < sc.end_tt]
    findings_text = f"{_count(plan.errors, 'error')}, {_count(plan.warnings, 'warning')}"
    story = []

    # ---- cover
    story += [Spacer(1, 18 * mm), P("Weekly contact plan", h1), Spacer(1, 2 * mm),
              P(f"{sc.spacecraft.name}: {sc.name}", h2), Spacer(1, 6 * mm)]
    facts = [
        ["Mission (spacecraft)", sc.spacecraft.name],
        ["Scenario", sc.name],
        ["Window (UTC)", f"{_fmt(sc.start_tt)} to {_fmt(sc.end_tt)}"],
        ["Window (day of year, UTC)", f"{format_doy(sc.start_tt)} to {format_doy(sc.end_tt)}"],
        ["Plan revision", str(sc.revision)],
        ["Generated (UTC)", _fmt(gen_tt)],
        ["Stations", ", ".join(f"{s.id} ({s.name})" for s in sc.stations) or "none"],
        ["Passes", str(len(plan.passes))],
        ["Bookings", bookings_fact(sc.bookings)],  # declined and cancelled count nowhere
        ["Activities in the window", f"{_count(sum(a.kind == 'burn' for a in acts), 'burn')}, "
                                     f"{_count(sum(a.kind == 'momentum-dump' for a in acts), 'momentum dump')}, "
                                     f"{_count(sum(a.kind == 'slew' for a in acts), 'slew')}, "
                                     f"{sum(a.kind not in ('burn', 'momentum-dump', 'slew') for a in acts)} other"],
        ["Findings", findings_text],
    ]
    if rec is not None:
        facts.append(["Recorder (Gbit)", f"capacity {rec.capacity_gbit:.1f}, peak {float(max(rec.fill_gbit, default=0)):.1f}, "
                                         f"end {rec.end_gbit:.1f}, lost {rec.lost_gbit:.1f}"])
    eph_name = getattr(plan.ephemeris, "name", None)
    spec = getattr(sc.spacecraft, "ephemeris", None)
    if eph_name is None and spec is not None:
        eph_name = str(spec.oem_path.name) if spec.kind == "oem" and spec.oem_path else spec.kind
    if eph_name:
        facts.append(["Ephemeris source", str(eph_name)])
    cover = getattr(plan, "coverage", None)
    if cover is not None and [(float(a), float(b)) for a, b in cover] != [(float(sc.start_tt), float(sc.end_tt))]:
        spans = "; ".join(f"{_fmt(a)} to {_fmt(b)}" for a, b in cover) or "nothing of the window"
        facts.append(["Ephemeris covers (UTC)", f"{spans} only: nothing is checked outside"])
    facts.append(["Generator", f"contactplan {__version__}"])
    story.append(table([[P(a, small), P(b, small)] for a, b in facts], [0.3 * frame_w, 0.7 * frame_w],
                       extra=[("BACKGROUND", (0, 0), (-1, 0), colors.white),
                              ("FONT", (0, 0), (0, -1), fonts["bold"], 8)]))
    cautions = [CAUTION]
    if spec is not None and spec.kind == "libration":
        cautions.append("Spacecraft positions come from the built-in libration-point orbit: a planning "
                        "approximation, not a flight-dynamics ephemeris. Re-check the plan when the delivered "
                        "ephemeris arrives.")
    story.append(Spacer(1, 10 * mm))
    for k, text in enumerate(cautions):
        story += [Paragraph(escape(text), caution_style if k == 0 else body), Spacer(1, 5 * mm)]
    story += changes_story(changes, P, table, small, h2, frame_w, since_name)
    story += [NextPageTemplate("wide"), PageBreak()]

    # ---- timeline, on a landscape page
    span_name = "week" if sc.end_tt - sc.start_tt <= 8 * 86400.0 else "window"
    story += [P(f"The {span_name} at a glance", h2),
              P("One lane per station: light bands are passes, dark blocks booking tracks (BOT to EOT; lighter "
                "ends: pre-pass and post-pass), cross-hatched boxes outages; bookings outlined in vermillion have "
                "an error. The top lane holds the spacecraft's burns, momentum dumps, slews and monitor spans; "
                "grey columns across all lanes are downlink keep-outs.", small),
              Spacer(1, 3 * mm), figure(timeline_figure(plan, wide_w / inch), wide_w, wide_h - 20 * mm),
              NextPageTemplate("tall"), PageBreak()]

    # ---- bookings
    story.append(P(bookings_heading(sc.bookings), h2))
    if records:
        head = ["Id", "Station", "Status", "Start (UTC)", "End (UTC)", "Track (UTC)", "Services",
                "Rate plan (kbit/s)", "Plan / down (Gbit)", "Findings"]
        rows = [head]
        for r in records:
            rows.append([P(r["id"] + (" (locked)" if r["locked"] else "")
                           + (f", after {r['handover_from']}" if r["handover_from"] else ""), small), r["station"],
                         P(status_cell(r), small),
                         P(f"{r['start_utc'][:16]}Z {r['start_doy'][5:8]}", small),
                         P(f"{r['end_utc'][:16]}Z {r['end_doy'][5:8]}", small),
                         P(f"{r['bot_utc'][11:16]} to {r['eot_utc'][11:16]}", small),
                         P(", ".join(r["services"]) or "-", small), P(_rate_plan_cell(r), small),
                         f"{_num(r['plan_volume_gbit'])} / {_num(r['downlinked_gbit'])}",
                         P(", ".join(r["findings"]) or "-", small)])
        w = frame_w
        story.append(table(rows, [0.08 * w, 0.065 * w, 0.09 * w, 0.115 * w, 0.115 * w, 0.1 * w, 0.12 * w,
                                  0.14 * w, 0.085 * w, 0.09 * w]))
        story.append(P("Start and end include the station's pre-pass and post-pass; the track (BOT to EOT) lies "
                       "between; the three digits after the time are the day of year. Rate plan: the time-tagged "
                       "rate steps of the booking's down link over its track (start-end UTC: rate); plan: the "
                       "volume of that plan; down: what the recorder gives up (playback only). Status: where the "
                       "booking stands with the station network (the network's id in brackets); declined and "
                       "cancelled bookings are listed but count nowhere.", small))
    else:
        story.append(P("No bookings in this plan yet."))
    story.append(Spacer(1, 6 * mm))
    story += frozen_story(plan, P, table, small, h2, frame_w)

    # ---- links per band and station services
    links = list(sc.spacecraft.links)
    if links:
        story.append(P("Links and station services", h2))
        rows = [["Link", "Band", "Direction", "Frequency (MHz)", "Carries", "Rates (kbit/s)", "Stations"]]
        for lk in links:
            at = [st.id for st in sc.stations if st.service(lk.id) is not None]
            rows.append([lk.id, lk.band, lk.direction, _num(lk.frequency_mhz, "{:.1f}"),
                         P(", ".join(lk.carries) or "-", small),
                         P(", ".join(f"{r:g}" for r in lk.rates_kbps) or "-", small), P(", ".join(at) or "-", small)])
        w = frame_w
        story.append(table(rows, [0.1 * w, 0.07 * w, 0.1 * w, 0.13 * w, 0.25 * w, 0.15 * w, 0.2 * w]))
    story.append(Spacer(1, 6 * mm))

    # ---- findings
    findings = sorted(plan.findings, key=lambda f: (f.severity != "error", f.start_tt, f.rule))
    story.append(P(f"Findings ({findings_text})", h2))
    if findings:
        rows = [["Severity", "Rule", "Concerns", "When (UTC)", "What to change"]]
        extra = []
        for i, f in enumerate(findings, start=1):
            rows.append([f.severity, P(f.rule, small), P(", ".join(map(str, f.subjects)) or "-", small),
                         P(_span(f.start_tt, f.end_tt), small), P(f.message, small)])
            colour = COLOURS["error"] if f.severity == "error" else COLOURS["warning"]
            extra.append(("TEXTCOLOR", (0, i), (0, i), colors.HexColor(colour)))
            extra.append(("FONT", (0, i), (0, i), fonts["bold"], 7))
        w = frame_w
        story.append(table(rows, [0.08 * w, 0.165 * w, 0.11 * w, 0.2 * w, 0.445 * w], extra=extra))
    else:
        story.append(P("No findings: the plan passes every rule checked."))
    story.append(PageBreak())

    # ---- recorder
    story.append(P("Recorder", h2))
    if rec is not None and len(rec.t_tt):
        story.append(P(f"Generated {rec.generated_gbit:.1f} Gbit, downlinked {rec.downlinked_gbit:.1f} Gbit, lost "
                       f"{rec.lost_gbit:.1f} Gbit; {rec.end_gbit:.1f} Gbit on board at the end of the window "
                       f"(capacity {rec.capacity_gbit:.1f} Gbit). Blue ticks along the bottom: booked downlink time.",
                       small))
        from contactplan.io.report_forecast import forecast_text

        if forecast_text(plan):
            story.append(P(forecast_text(plan), small))
        story += [Spacer(1, 2 * mm), figure(recorder_figure(plan, fig_w_in))]
        if rec.overflow_spans:
            rows = [["Overflow from (UTC)", "To (UTC)", "Lost (Gbit)"]]
            rows += [[_fmt(a), _fmt(b), f"{lost:.2f}"] for a, b, lost in rec.overflow_spans]
            story += [Spacer(1, 2 * mm), table(rows, [0.35 * frame_w, 0.35 * frame_w, 0.2 * frame_w])]
    else:
        story.append(P("The scenario has no recorder."))
    story.append(Spacer(1, 6 * mm))

    from contactplan.io.report_navigation import navigation_story

    story += navigation_story(plan, P, figure, table, small, h2, frame_w, fig_w_in)

    # ---- rate and volume per pass
    block = [P("Rate and volume per pass", h2)]
    has_link = any(p.volume_gbit is not None for p in plan.passes)
    if plan.passes and has_link:
        block += [P("Volume: what each pass could return from AOS to LOS at the best rate allowed moment by moment "
                    "(not what is booked), drawn at the pass's culmination.", small), Spacer(1, 2 * mm), figure(rate_volume_figure(plan, fig_w_in))]
    story.append(KeepTogether(block))
    if plan.passes:
        per_link = getattr(plan, "link_profiles", None) or {}
        rows = [["Station", "AOS (UTC)", "LOS (UTC)", "Hours", "Max el. (deg)", "Max rate (kbit/s)", "Volume (Gbit)"]
                + [P(f"{k} margin (dB)", small) for k in per_link]]
        for p in sorted(plan.passes, key=lambda p: (p.aos_tt, p.station)):
            mark = " *" if (p.clipped_start or p.clipped_end) else ""
            margins = [getattr(per_link[k].get(id(p)), "culmination_margin_db", None) for k in per_link]
            rows.append([p.station, _fmt(p.aos_tt)[:16] + "Z", _fmt(p.los_tt)[:16] + "Z", _hours(p.duration_s) + mark,
                         f"{p.max_elevation_deg:.1f}", _num(p.max_rate_kbps, "{:g}"), _num(p.volume_gbit)]
                        + [_num(m, "{:.1f}") for m in margins])
        w = frame_w
        fixed = [0.09, 0.17, 0.17, 0.08, 0.09, 0.11, 0.1]
        rest = (1.0 - sum(fixed)) / max(len(per_link), 1)
        story += [Spacer(1, 3 * mm), table(rows, [f * w for f in fixed] + [rest * w] * len(per_link))]
        if per_link:
            story.append(P("Margin: at culmination, dB above what the link needs (down: Eb/N0 at the rate in use "
                           "minus the required Eb/N0; up: Pt/N0 minus the required Pt/N0); '-' where the station "
                           "does not offer that link.", small))
        if any(p.clipped_start or p.clipped_end for p in plan.passes):
            partial = cover is not None and [(float(a), float(b)) for a, b in cover] != \
                [(float(sc.start_tt), float(sc.end_tt))]
            story.append(P("* pass cut by the window's edge" + (" or where the ephemeris stops." if partial else "."),
                           small))
    else:
        story.append(P("No passes in the window."))

    pages = [0]

    def on_page(canvas, doc):
        canvas.saveState()
        canvas.setFont(fonts["regular"], 7)
        canvas.setFillColor(colors.HexColor("#444444"))
        n = canvas.getPageNumber()
        pages[0] = max(pages[0], n)
        canvas.drawString(margin, 9 * mm, f"{sc.spacecraft.name}: {sc.name}, revision {sc.revision}, "
                                          f"generated {_fmt(gen_tt)}")
        canvas.drawRightString(canvas._pagesize[0] - margin, 9 * mm, f"page {n}")
        canvas.setFont(fonts["italic"], 6.5)
        canvas.drawString(margin, 5.5 * mm, CAUTION)
        canvas.restoreState()

    buf = io.BytesIO()
    doc = BaseDocTemplate(buf, pagesize=pagesize, leftMargin=margin, rightMargin=margin, topMargin=margin,
                          bottomMargin=margin + 4 * mm, title=f"Weekly contact plan: {sc.name}",
                          author="contactplan", subject=f"{sc.spacecraft.name}, revision {sc.revision}",
                          creator=f"contactplan {__version__}")

    def frame(size):
        return Frame(margin, margin + 4 * mm, size[0] - 2 * margin, size[1] - 2 * margin - 4 * mm, id="body",
                     leftPadding=0, rightPadding=0, topPadding=0, bottomPadding=0)

    doc.addPageTemplates([PageTemplate("tall", [frame(pagesize)], onPage=on_page, pagesize=pagesize),
                          PageTemplate("wide", [frame(wide)], onPage=on_page, pagesize=wide)])
    from reportlab import rl_config

    a85 = rl_config.useA85
    rl_config.useA85 = 0  # binary streams: the pure-Python ASCII85 pass was an eighth of the time
    try:
        doc.build(story)
    finally:
        rl_config.useA85 = a85
    atomic_write(path, buf.getvalue())
    return pages[0]
