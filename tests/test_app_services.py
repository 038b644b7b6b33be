"""The planner in services (scenario format 2): service marks on the timeline, pre/post-pass drawn apart
from the track, margins per link in the sky view and the passes table, service and activity edits undoable.

The scenario is the bundled demo (an invented mission with invented stations).
"""

from __future__ import annotations

import pytest

pytest.importorskip("PySide6")
pytest.importorskip("pyqtgraph")

from PySide6.QtWidgets import QApplication  # noqa: E402

from test_app import _open_with, demo_copy, demo_plan, win  # noqa: E402,F401  (fixtures shared with test_app)


def test_service_marks_are_drawn_and_legible_at_week_zoom(win, demo_copy, demo_plan):
    from contactplan.app.servicemarks import MARK_PT, letters

    sc = _open_with(win, demo_copy, demo_plan)
    tl = win.timeline
    tl.show_week(sc.start_tt)
    win.grab()  # paint
    marks = tl.canvas.marks_drawn
    in_week = [b for b in sc.bookings if sc.start_tt <= b.start_tt < sc.start_tt + 7 * 86400]
    assert {b.id for b in in_week} <= set(marks)
    # one mark per booked service, in the order T P C R D (resources/demo/week.toml)
    assert [m for m, _r in marks["B001"]] == list("TPCRD")
    assert [m for m, _r in marks["B007"]] == list("TP")
    assert [m for m, _r in marks["B004"]] == list("TRD")
    assert "".join(m for m, _r in marks["B006"]) == letters(sc.booking("B006").services) == "P"
    view = tl.viewport().rect()
    for b in in_week:
        cells = [r for _m, r in marks[b.id]]
        for r in cells:
            # legible: each letter has a box at least 7 px wide and 9 px tall (a 7.5 pt bold capital)
            assert r.width() >= 7 and r.height() >= 9 and MARK_PT >= 7
            assert view.contains(r.center().toPoint())
        for a, c in zip(cells, cells[1:]):  # side by side, not overlapping
            assert c.left() >= a.right()
    # rows of bookings in one lane never overlap, even where the bookings do (B003 and B004 at VYH)
    for st in sc.stations:
        rows = sorted((marks[b.id][0][1].left(), marks[b.id][-1][1].right()) for b in in_week
                      if b.station == st.id and marks[b.id])
        for (_a0, a1), (c0, _c1) in zip(rows, rows[1:]):
            assert c0 >= a1, st.id


def test_pre_and_post_pass_are_lighter_than_the_track(win, demo_copy, demo_plan):
    sc = _open_with(win, demo_copy, demo_plan)
    b = sc.booking("B002")  # ORF: 45 min pre-pass, 15 min post-pass
    bot, eot = sc.track_span_tt(b)
    tl = win.timeline
    tl.zoom_to(b.start_tt - 1800, b.end_tt + 1800)
    QApplication.processEvents()
    img = tl.grab().toImage()
    lane = tl.canvas.lane_of_station("ORF")
    # sample in the upper part of the block, right of the id text and above the marks
    from test_app import _pos

    pre = _pos(win, b.start_tt + 0.5 * (bot - b.start_tt), lane + 0.33)
    track = _pos(win, 0.5 * (bot + eot), lane + 0.33)
    light_pre = img.pixelColor(pre.x(), pre.y()).lightness()
    light_track = img.pixelColor(track.x(), track.y()).lightness()
    assert light_pre > light_track + 15


def test_sky_view_and_passes_table_show_margin_per_link(win, demo_copy, demo_plan):
    from contactplan.app.document import Selection

    _open_with(win, demo_copy, demo_plan)
    res = win.doc.result
    # a pass at VYH, which offers all three links (X-DN, Ka-DN, X-UP)
    p = next(q for q in res.passes if q.station == "VYH")
    want = {k: per[id(p)].culmination_margin_db for k, per in res.link_profiles.items() if id(p) in per}
    assert set(want) == {"X-DN", "Ka-DN", "X-UP"}
    win.doc.select(Selection("pass", p))
    win.sky.repaint()
    line = win.sky.margins_line
    for k, m in want.items():
        assert f"{k} {m:+.1f} dB" in line
    m = win.passes_model
    col = [c for c, (name, _tip) in enumerate(m.COLUMNS) if name == "Margin (dB)"][0]
    row = next(r for r in range(m.rowCount()) if m.rows[r] is p)
    cell = m.index(row, col).data()
    assert cell == ", ".join(f"{k} {v:+.1f}" for k, v in want.items())
    # TBC has no Ka: its passes show no Ka-DN margin
    q = next(q for q in res.passes if q.station == "TBC")
    row = next(r for r in range(m.rowCount()) if m.rows[r] is q)
    assert "Ka-DN" not in m.index(row, col).data() and "X-DN" in m.index(row, col).data()


def test_service_edits_and_activity_kind_are_undoable(win, demo_copy, demo_plan):
    from contactplan.app.document import Selection

    sc = _open_with(win, demo_copy, demo_plan)
    doc = win.doc
    doc.edit_booking("B003", services=["doppler", "telemetry", "ranging"])
    assert sc.booking("B003").services == ["telemetry", "ranging", "doppler"]  # kept in the one order
    with pytest.raises(ValueError):
        doc.edit_booking("B003", services=["telepathy"])
    with pytest.raises(ValueError):
        doc.edit_booking("B003", services=[])
    doc.undo_stack.undo()
    assert sc.booking("B003").services == ["telemetry", "playback"]
    # a new booking can be made with its services
    bid = doc.add_booking("KSD", sc.start_tt + 3600, sc.start_tt + 7200, services=["commanding"])
    assert sc.booking(bid).services == ["commanding"]
    doc.undo_stack.undo()
    # an activity turned into a momentum dump with a command load, then back
    act = sc.activity("SLEW-CAL1")  # a one-off slew of the demo
    kind0, lead0, backup0 = act.kind, act.command_lead_h, act.command_backup
    doc.select(Selection("activity", act.id))
    ed = win.props
    assert ed.fields["kind"].findText("momentum-dump") >= 0
    ed.fields["kind"].setCurrentText("momentum-dump")
    ed.fields["command_lead_h"].setValue(6.0)
    ed.fields["command_backup"].setChecked(True)
    ed.apply()
    assert (act.kind, act.command_lead_h, act.command_backup) == ("momentum-dump", 6.0, True)
    assert act.changes_velocity
    doc.undo_stack.undo()
    assert (act.kind, act.command_lead_h, act.command_backup) == (kind0, lead0, backup0)
    # a station's pre-pass and post-pass
    doc.select(Selection("station", "SLM"))
    st = sc.station("SLM")
    pre0 = st.pre_pass_min
    ed.fields["pre_pass_min"].setValue(pre0 + 10)
    ed.apply()
    assert st.pre_pass_min == pre0 + 10
    doc.undo_stack.undo()
    assert st.pre_pass_min == pre0
