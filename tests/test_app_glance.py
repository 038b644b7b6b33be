"""The planner reads at a glance: a palette of its own whose element kinds stay apart under colour-vision
deficiencies, findings and locks marked by shape, labels at week zoom, the sky view following the
selection, and the booking under the cursor being the one dragged.

The scenario is small and invented (tests/editor_scenario.py); its passes are computed once per test
(a few milliseconds on the cached built-in orbit).
"""

from __future__ import annotations

import numpy as np
import pytest

pytest.importorskip("PySide6")
pytest.importorskip("pyqtgraph")

from PySide6.QtWidgets import QApplication  # noqa: E402

from editor_scenario import planner_window  # noqa: E402

# Colour-vision deficiency simulation, Machado, Oliveira & Fernandes (2009), "A physiologically-based
# model for simulation of color vision deficiency", IEEE TVCG 15(6); severity 1.0 matrices, applied to
# linear RGB (values from memory).
MACHADO_2009 = {
    "protanopia": [[0.152286, 1.052583, -0.204868], [0.114503, 0.786281, 0.099216],
                   [-0.003882, -0.048116, 1.051998]],
    "deuteranopia": [[0.367322, 0.860646, -0.227968], [0.280085, 0.672501, 0.047413],
                     [-0.011820, 0.042940, 0.968881]],
    "tritanopia": [[1.255528, -0.076749, -0.178779], [-0.078411, 0.930809, 0.148180],
                   [0.004733, 0.691367, 0.303900]],
}


def _lab(rgb_linear):
    """CIE L*a*b* (D65) of linear sRGB (IEC 61966-2-1 matrix; CIE 15 Lab formulas)."""
    m = np.array([[0.4124, 0.3576, 0.1805], [0.2126, 0.7152, 0.0722], [0.0193, 0.1192, 0.9505]])
    xyz = m @ np.clip(rgb_linear, 0, 1) / np.array([0.95047, 1.0, 1.08883])
    f = np.where(xyz > (6 / 29) ** 3, np.cbrt(xyz), xyz / (3 * (6 / 29) ** 2) + 4 / 29)
    return np.array([116 * f[1] - 16, 500 * (f[0] - f[1]), 200 * (f[1] - f[2])])


def _linear(c, over):
    """Linear sRGB of a QColor composited over ``over`` (its alpha), IEC 61966-2-1 transfer function."""
    a = c.alphaF()
    v = np.array([c.redF(), c.greenF(), c.blueF()]) * a + np.array([over.redF(), over.greenF(), over.blueF()]) * (1 - a)
    return np.where(v <= 0.04045, v / 12.92, ((v + 0.055) / 1.055) ** 2.4)


SIX = ("booking", "booking_locked", "error", "burn", "keepout", "overflow")


def test_the_six_kinds_that_were_all_orange_stay_apart_with_colour_vision_deficiencies(qapp):
    from contactplan.app import theme

    for th in (theme.light_theme(), theme.dark_theme()):
        # keep-out and overflow are drawn as patterns: compared at full strength
        cols = {k: _linear(getattr(th, k), th.background) if k not in ("keepout", "overflow")
                else _linear(type(getattr(th, k))(getattr(th, k).name()), th.background) for k in SIX}
        for name, mat in [("normal", np.eye(3))] + list(MACHADO_2009.items()):
            labs = {k: _lab(np.asarray(mat) @ v) for k, v in cols.items()}
            for i, a in enumerate(SIX):
                for b in SIX[i + 1:]:
                    de = float(np.linalg.norm(labs[a] - labs[b]))  # CIE 1976 colour difference
                    # 10: clearly different at a glance (common practice, no source)
                    assert de >= 10.0, (th.dark, name, a, b, round(de, 1))
        # every kind has its own shape too (theme.MARKS), so none rests on colour alone
        assert len({theme.MARKS[k] for k in theme.MARKS}) == len(theme.MARKS)


@pytest.fixture
def planned(qtbot, tmp_path, monkeypatch):
    w = planner_window(qtbot, tmp_path, monkeypatch, passes=True)
    yield w
    w.doc.undo_stack.setClean()
    w.doc.wait_checked()


def _img(win):
    win.timeline.canvas.update()
    return win.timeline.grab().toImage()


def test_errors_warnings_and_locks_are_marked_by_shape(planned, qtbot):
    from contactplan.app import theme

    win = planned
    doc = win.doc
    sc = doc.scenario
    p = doc.passes_for("HLM")[0]
    bid = doc.add_booking("HLM", p.los_tt - 1800.0, p.los_tt + 3600.0)  # reaches past LOS: an error
    doc.wait_checked()
    assert any(f.severity == "error" for f in doc.findings_for(bid))
    win.timeline.zoom_to(p.los_tt - 4 * 3600, p.los_tt + 4 * 3600)
    img = _img(win)
    c = win.timeline.canvas
    kind, box = c.badges_drawn[bid]
    assert kind == "error"
    th = theme.current()
    dpr = img.devicePixelRatio()
    vp = win.timeline.viewport().mapTo(win.timeline, win.timeline.viewport().rect().topLeft())

    def px(x, y):  # a pixel of the canvas (view coordinates) in the grab of the whole timeline
        return img.pixelColor(int((x + vp.x()) * dpr), int((y + vp.y()) * dpr)).name()

    # a filled triangle: its foot is the error colour, its top corners are not (not a square)
    assert px(box.center().x(), box.bottom() - 2) == th.error.name()
    assert px(box.left() + 1, box.top() + 1) != th.error.name()
    # a locked booking: another fill, and a cross in its top-right corner drawn in the edge colour
    doc.edit_booking(bid, locked=True)
    doc.wait_checked()
    img = _img(win)
    r = c.blocks_drawn[bid]
    assert px(r.center().x(), r.center().y() + 2) == th.booking_locked.name() != th.booking.name()
    assert px(r.right() - 4.5, r.top() + 7.5) == th.booking_edge.name()
    assert px(r.center().x(), r.top() + 1) == th.booking_edge.name()  # the bar along its top


def test_bookings_are_named_at_week_zoom(planned, qtbot):
    win = planned
    doc = win.doc
    sc = doc.scenario
    for p in doc.passes_for("HLM")[:3]:
        doc.add_booking("HLM", p.aos_tt + 600.0, p.aos_tt + 600.0 + 2 * 3600.0, services=["telemetry", "ranging"])
    doc.wait_checked()
    win.timeline.show_week(sc.start_tt)
    _img(win)
    c = win.timeline.canvas
    for b in sc.bookings:
        if b.start_tt < win.timeline.visible_tt()[1]:
            # its id as a label (inside the block or above it), and its services as letter marks
            assert b.id in c.labels_drawn, b.id
            assert [m for m, _r in c.marks_drawn[b.id]], b.id
            text = c.describe(c.x_of(0.5 * (b.start_tt + b.end_tt)), c.lane_of_station(b.station) + 0.5)
            assert f"booking {b.id}" in text and "services:" in text


def test_the_sky_view_follows_the_selected_booking_when_it_moves(planned, qtbot):
    from contactplan.app.document import Selection

    win = planned
    doc = win.doc
    p1, p2 = doc.passes_for("HLM")[:2]
    bid = doc.add_booking("HLM", p1.aos_tt + 600.0, p1.aos_tt + 4200.0)
    doc.select(Selection("booking", bid))
    assert win.sky.pass_ is p1
    shift = p2.aos_tt - p1.aos_tt
    b = doc.scenario.booking(bid)
    doc.edit_booking(bid, start_tt=b.start_tt + shift, end_tt=b.end_tt + shift)
    assert win.sky.pass_ is p2  # followed, and redrawn
    doc.undo_stack.undo()
    assert win.sky.pass_ is p1


def test_dragging_where_two_bookings_overlap_moves_the_one_under_the_cursor(planned, qtbot):
    win = planned
    doc = win.doc
    p = max(doc.passes_for("HLM"), key=lambda q: q.los_tt - q.aos_tt)
    a = doc.add_booking("HLM", p.aos_tt + 600.0, p.aos_tt + 3 * 3600.0)
    b = doc.add_booking("HLM", p.aos_tt + 2 * 3600.0, p.aos_tt + 4 * 3600.0)
    doc.select(type(doc.selection)("station", "HLM"))
    c = win.timeline.canvas
    win.timeline.zoom_to(p.aos_tt, p.aos_tt + 5 * 3600.0)
    _img(win)
    lane = c.lane_of_station("HLM") + 0.5
    x = c.x_of(p.aos_tt + 2.5 * 3600.0)  # inside both: B drawn on top (later start)
    d = c.begin_drag(x, lane)
    assert d.booking.id == b
    c.drag = None
    doc.select(type(doc.selection)("booking", a))  # the selected one is the one being worked on
    d = c.begin_drag(x, lane)
    assert d.booking.id == a
    c.drag = None


def test_the_legend_names_the_shape_of_every_element_kind(planned):
    from contactplan.app.theme import MARKS

    planned.legend()
    text = planned.legend_box.text()
    for kind, shape in MARKS.items():
        assert shape in text, kind
    assert "Shift-drag" in text
