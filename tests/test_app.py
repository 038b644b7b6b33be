"""The desktop planner, headless (pytest-qt, offscreen): open, book by dragging, findings, undo, save, errors.

The scenario is the bundled demo (an invented mission with invented stations).
Passes are computed once per module and handed to each window so that every
test starts from the same plan without recomputing the geometry.
"""

from __future__ import annotations

import copy
import json
import time
import os
import shutil
from pathlib import Path

import numpy as np
import pytest

pytest.importorskip("PySide6")
pytest.importorskip("pyqtgraph")

from PySide6.QtCore import QEvent, QPointF, QSettings, QStandardPaths, Qt  # noqa: E402
from PySide6.QtGui import QMouseEvent  # noqa: E402
from PySide6.QtWidgets import QApplication, QMessageBox  # noqa: E402

from contactplan import CAUTION  # noqa: E402
from contactplan.paths import demo_scenario  # noqa: E402

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
from contactplan.scenario import load_scenario  # noqa: E402
from contactplan.timescale import parse_utc, utc_day_start  # noqa: E402

B = QMessageBox.StandardButton


@pytest.fixture(scope="module")
def demo_plan():
    """(scenario path, PlanResult) of the demo, computed once for the module."""
    from contactplan.plan.pipeline import compute_plan

    sc = load_scenario(demo_scenario())
    return compute_plan(sc)


@pytest.fixture
def demo_copy(tmp_path):
    p = tmp_path / "week.toml"
    shutil.copy(demo_scenario(), p)
    return p


@pytest.fixture
def win(qtbot, tmp_path, monkeypatch):
    QStandardPaths.setTestModeEnabled(True)
    from contactplan.app.autosave import Autosaver
    from contactplan.app.window import MainWindow

    settings = QSettings(str(tmp_path / "settings.ini"), QSettings.Format.IniFormat)
    w = MainWindow(settings=settings, autosaver=Autosaver(tmp_path / "autosave"))
    w.answers = []  # answers the test gives to questions, in order; Discard when empty
    w.asked = []

    def ask(title, text, buttons, default):
        w.asked.append((title, text))
        return w.answers.pop(0) if w.answers else B.Discard

    w.ask = ask
    w.recovery_answers = []  # what the test answers to the recovery list: (action, indices); keep when empty
    w.recovery_offers = []

    def choose_recovery(snaps, requested=None):
        w.recovery_offers.append(([s.name for s in snaps], requested))
        if not w.recovery_answers:
            return "keep", []
        action, rows = w.recovery_answers.pop(0)
        return action, [snaps[r] for r in rows]

    w.choose_recovery = choose_recovery
    qtbot.addWidget(w)
    w.resize(1400, 900)
    w.show()
    qtbot.waitExposed(w)
    yield w
    w.cancel_job(wait=True)


def _open_with(win, path, plan):
    """Open ``path`` in the window with the module's computed passes (no recomputation)."""
    sc = load_scenario(path)
    res = copy.copy(plan)
    res.scenario = sc
    res.findings = []
    win.set_scenario(sc, result=res)
    win._add_recent(path)
    assert win.doc.wait_checked()  # the findings come from the worker's check
    QApplication.processEvents()
    return sc


def _pos(win, t_tt, y):
    """Viewport pixel of (time, lane y) in the lanes plot."""
    tl = win.timeline
    scene = tl.lanes_vb.mapViewToScene(QPointF(tl.x_of(t_tt), y))
    return tl.mapFromScene(scene)


def _send(widget, kind, pos, buttons):
    button = Qt.MouseButton.LeftButton
    ev = QMouseEvent(kind, QPointF(pos), QPointF(widget.mapToGlobal(pos)), button, buttons,
                     Qt.KeyboardModifier.NoModifier)
    QApplication.sendEvent(widget, ev)


def drag(qtbot, win, t0, t1, y0, y1=None):
    """Press at (t0, y0), move in steps, release at (t1, y1) on the timeline."""
    vp = win.timeline.viewport()
    y1 = y0 if y1 is None else y1
    a = _pos(win, t0, y0)
    _send(vp, QEvent.Type.MouseButtonPress, a, Qt.MouseButton.LeftButton)
    for f in np.linspace(0.1, 1.0, 8):
        qtbot.wait(25)  # the scene ignores move events closer than its rate limit
        p = _pos(win, t0 + (t1 - t0) * f, y0 + (y1 - y0) * f)
        _send(vp, QEvent.Type.MouseMove, p, Qt.MouseButton.LeftButton)
    qtbot.wait(25)
    _send(vp, QEvent.Type.MouseButtonRelease, _pos(win, t1, y1), Qt.MouseButton.NoButton)
    QApplication.processEvents()


def _grid(t):
    d = float(utc_day_start(t))
    return d + round((t - d) / 300.0) * 300.0


def _free_pass(win, min_h=5.0, around=None, room_h=1.5):
    """A pass of a downlink station, at least ``min_h`` hours long, with no booking on it.

    With ``around`` (a span), the pass must hold it with ``room_h`` hours to spare on one side;
    bookings already on that pass are deleted (and the undo stack cleared).
    """
    sc = win.doc.scenario
    for p in win.doc.result.passes:
        st = sc.station(p.station)
        if not st.takes_downlink or p.duration_s < min_h * 3600 or p.clipped_start or p.clipped_end:
            continue
        on_it = [b.id for b in sc.bookings if b.station == p.station and b.end_tt > p.aos_tt and b.start_tt < p.los_tt]
        if around is not None:
            if not (p.aos_tt < around[0] and around[1] < p.los_tt):
                continue
            if max(around[0] - p.aos_tt, p.los_tt - around[1]) < room_h * 3600:
                continue
            win.doc.delete_bookings(on_it)
            win.doc.undo_stack.clear()
            return p
        if on_it:
            continue
        return p
    pytest.fail("no pass of that kind in the demo")


# ---------------------------------------------------------------- opening
def test_open_demo_computes_passes_in_worker(win, demo_copy, qtbot):
    assert win.open_path(demo_copy)
    assert win.job is not None
    qtbot.waitUntil(lambda: not win.job.running, timeout=180_000)
    sc = win.doc.scenario
    assert sc.name.startswith("Corvid")
    assert len(win.doc.result.passes) > 10
    assert win.passes_model.rowCount() == len(win.doc.result.passes)
    assert win.bookings_model.rowCount() == len(sc.bookings) == len(load_scenario(demo_copy).bookings) > 0
    # the demo is half drafted with deliberate conflicts: the findings list is not empty
    assert win.findings_model.rowCount() == len(win.doc.findings) > 0
    assert win.doc.result.recorder is not None
    # lanes: spacecraft on top, then one per station
    assert win.timeline.canvas.lanes() == 1 + len(sc.stations)
    assert "[*]" in win.windowTitle() and not win.isWindowModified()
    assert win.recent_files()[0] == str(demo_copy.resolve())


def test_caution_always_in_status_bar(win, demo_copy, demo_plan):
    _open_with(win, demo_copy, demo_plan)
    assert win.caution.text() == CAUTION
    win.statusBar().showMessage("a temporary message")
    QApplication.processEvents()
    assert win.caution.isVisible()


# ---------------------------------------------------------------- editing on the timeline
def test_drag_across_a_pass_creates_a_snapped_booking(win, demo_copy, demo_plan, qtbot):
    sc = _open_with(win, demo_copy, demo_plan)
    p = _free_pass(win)
    win.timeline.zoom_to(p.aos_tt, p.los_tt)
    QApplication.processEvents()
    lane = win.timeline.canvas.lane_of_station(p.station)
    t0 = _grid(p.aos_tt + 3600.0)
    t1 = t0 + 2 * 3600.0
    n = len(sc.bookings)
    drag(qtbot, win, t0, t1, lane + 0.5)
    assert len(sc.bookings) == n + 1
    b = sc.bookings[-1]
    assert b.station == p.station
    # both edges on the 5-minute UTC grid, where the drag started and ended
    assert b.start_tt == pytest.approx(t0, abs=1e-6)
    assert b.end_tt == pytest.approx(t1, abs=1e-6)
    assert b.purposes == ["downlink"]
    assert win.doc.selection.kind == "booking" and win.doc.selection.key == b.id
    assert win.isWindowModified()
    assert win.doc.undo_stack.count() == 1
    # undo removes it, redo brings it back
    win.act_undo.trigger()
    assert len(sc.bookings) == n
    win.act_redo.trigger()
    assert sc.bookings[-1] is b


def test_drag_edge_snaps_to_pass_edge(win, demo_copy, demo_plan, qtbot):
    sc = _open_with(win, demo_copy, demo_plan)
    p = _free_pass(win)
    s = _grid(p.aos_tt + 3600.0)
    bid = win.doc.add_booking(p.station, s, s + 3600.0)
    win.timeline.zoom_to(p.aos_tt, p.los_tt)
    QApplication.processEvents()
    lane = win.timeline.canvas.lane_of_station(p.station)
    # drag the end edge to a couple of pixels short of LOS: it lands exactly on LOS
    px = win.timeline.canvas.px_s()
    drag(qtbot, win, s + 3600.0, p.los_tt - 2 * px, lane + 0.5)
    b = sc.booking(bid)
    assert b.start_tt == pytest.approx(s, abs=1e-6)
    assert b.end_tt == pytest.approx(p.los_tt, abs=1e-6)


def test_move_into_burn_keepout_shows_finding_and_undo_clears_it(win, demo_copy, demo_plan, qtbot):
    sc = _open_with(win, demo_copy, demo_plan)
    burns = [a for a in sc.activities if a.kind == "burn" and sc.start_tt < a.start_tt < sc.end_tt]
    assert burns, "the demo has a burn in its week"
    burn = burns[0]
    k0, k1 = burn.keepout_span_tt
    # a booking holds pre-pass + a 1-hour track + post-pass (45 + 15 min in the demo): only the track
    # (playback and telemetry time) can fall in a keep-out, so the booking must be longer than an hour
    pad_s = max(st.pre_pass_min + st.post_pass_min for st in sc.stations) * 60.0
    length = pad_s + 3600.0
    p = _free_pass(win, min_h=4.0, around=(k0, k1), room_h=(length + 1800.0) / 3600.0)
    st = sc.station(p.station)
    pre_s = st.pre_pass_min * 60.0
    # a playback booking whose track is clear of the keep-out, inside the same pass
    if k0 - p.aos_tt >= length + 1800.0:
        s = _grid(k0 - length - 1800.0)  # its track ends post-pass + 30 min before the keep-out
    else:
        s = _grid(k1 + 1800.0)  # it starts 30 min after the keep-out
    shift = _grid(k0 - pre_s - 1800.0) - s  # moved, its track runs from 30 min before to 30 min into it
    bid = win.doc.add_booking(p.station, s, s + length)
    b = sc.booking(bid)
    assert win.doc.wait_checked()
    assert b.services == ["telemetry", "playback"]
    bot, eot = sc.track_span_tt(b)
    assert eot <= k0 or bot >= k1

    def keepout_findings():
        return [f for f in win.doc.findings
                if f.rule == "downlink-in-keepout" and bid in f.subjects and burn.id in f.subjects]

    assert keepout_findings() == []
    win.timeline.zoom_to(p.aos_tt, p.los_tt)
    QApplication.processEvents()
    lane = win.timeline.canvas.lane_of_station(p.station)
    grab = s + length / 2  # the middle of the block
    drag(qtbot, win, grab, grab + shift, lane + 0.5)
    assert b.start_tt == pytest.approx(s + shift, abs=1e-6)
    assert b.end_tt - b.start_tt == pytest.approx(length)
    bot, eot = sc.track_span_tt(b)
    assert bot < k0 < eot
    qtbot.waitUntil(lambda: not win.doc.checking, timeout=10000)  # the findings come from the worker
    found = keepout_findings()
    assert len(found) == 1 and found[0].severity == "error"
    # the findings table and the booking row know it
    rows = [win.findings_model.rows[i] for i in range(win.findings_model.rowCount())]
    assert found[0] in rows
    # undo puts the booking back and the finding goes
    win.act_undo.trigger()
    assert b.start_tt == pytest.approx(s)
    qtbot.waitUntil(lambda: not win.doc.checking, timeout=10000)
    assert keepout_findings() == []
    assert win.doc.last_check_s < 0.5  # findings follow an edit within a fraction of a second


def test_delete_key_and_purposes(win, demo_copy, demo_plan, qtbot):
    sc = _open_with(win, demo_copy, demo_plan)
    p = _free_pass(win)
    bid = win.doc.add_booking(p.station, _grid(p.aos_tt + 3600), _grid(p.aos_tt + 7200))
    win.doc.edit_booking(bid, purposes=["ranging", "commanding"])
    assert sc.booking(bid).purposes == ["ranging", "commanding"]
    with pytest.raises(ValueError):
        win.doc.edit_booking(bid, purposes=["telepathy"])
    win.timeline.setFocus()
    qtbot.keyClick(win.timeline, Qt.Key.Key_Delete)
    assert all(b.id != bid for b in sc.bookings)
    win.act_undo.trigger()
    assert sc.booking(bid).purposes == ["ranging", "commanding"]


def test_bookings_table_edits_are_undoable_and_bad_text_refused(win, demo_copy, demo_plan):
    sc = _open_with(win, demo_copy, demo_plan)
    m = win.bookings_model
    row = next(i for i, b in enumerate(m.rows) if b.id == "B002")
    b = m.rows[row]
    old_end = b.end_tt
    assert not m.setData(m.index(row, 3), "2027-13-45T99:00Z")
    assert m.error and "month" in m.error
    assert m.setData(m.index(row, 3), "2027-013T16:00:00Z")
    assert b.end_tt == parse_utc("2027-01-13T16:00:00Z")
    assert not m.setData(m.index(row, 3), "2027-01-13T10:00:00Z")  # before its start
    win.act_undo.trigger()
    assert b.end_tt == old_end
    assert sc.booking("B002") is b


# ---------------------------------------------------------------- tables
def test_passes_table_filters_and_sorts(win, demo_copy, demo_plan):
    _open_with(win, demo_copy, demo_plan)
    from contactplan.app.models import OBJECT_ROLE

    proxy = win.passes_proxy
    total = proxy.rowCount()
    sid = win.doc.scenario.stations[0].id
    proxy.set_station(sid)
    n = proxy.rowCount()
    assert 0 < n < total
    assert all(proxy.index(r, 0).data(OBJECT_ROLE).station == sid for r in range(n))
    proxy.set_station(None)
    proxy.sort(4, Qt.SortOrder.DescendingOrder)  # max elevation
    els = [proxy.index(r, 0).data(OBJECT_ROLE).max_elevation_deg for r in range(proxy.rowCount())]
    assert els == sorted(els, reverse=True)


def test_clicking_a_finding_selects_and_zooms(win, demo_copy, demo_plan):
    _open_with(win, demo_copy, demo_plan)
    f = win.findings_model.rows[0]
    idx = win.findings_proxy.mapFromSource(win.findings_model.index(0, 0))
    win._finding_clicked(idx)
    assert win.doc.selection.kind == "finding" and win.doc.selection.key is f
    v0, v1 = win.timeline.visible_tt()
    assert v0 <= f.start_tt and f.end_tt <= v1
    assert v1 - v0 < 3 * max(f.end_tt - f.start_tt, 7200.0) + 1


# ---------------------------------------------------------------- files
def _bookings(sc):
    return sorted((b.id, b.station, round(b.start_tt, 3), round(b.end_tt, 3), tuple(b.purposes), b.locked)
                  for b in sc.bookings)


def test_save_reopen_compare(win, demo_copy, demo_plan, tmp_path):
    sc = _open_with(win, demo_copy, demo_plan)
    p = _free_pass(win)
    win.doc.add_booking(p.station, _grid(p.aos_tt + 3600), _grid(p.aos_tt + 4 * 3600))
    win.doc.edit_booking("B002", locked=True)
    out = tmp_path / "saved.toml"
    assert win.save_to(out)
    assert not win.isWindowModified()
    again = load_scenario(out)
    assert _bookings(again) == _bookings(sc)
    assert again.name == sc.name and [s.id for s in again.stations] == [s.id for s in sc.stations]
    # the save also left a snapshot in the autosave folder
    win.autosaver.wait()
    assert (win.autosaver.folder / f"{win.autosaver.stem}.toml").exists()
    # reopening in the window shows the same bookings
    _open_with(win, out, demo_plan)
    assert _bookings(win.doc.scenario) == _bookings(sc)
    assert win.bookings_model.rowCount() == len(sc.bookings)


def test_broken_file_opens_a_dialog_with_the_one_line_error(win, tmp_path):
    from contactplan.errors import InputError

    bad = tmp_path / "broken.toml"
    text = demo_scenario().read_text(encoding="utf-8").replace("latitude_deg = 61.85", "latitude_deg = 161.85")
    bad.write_text(text, encoding="utf-8")
    with pytest.raises(InputError) as exc:
        load_scenario(bad)
    assert win.open_path(bad) is False
    assert win.last_error == str(exc.value)
    assert "\n" not in win.last_error and "broken.toml" in win.last_error and "latitude_deg" in win.last_error
    assert win.error_box is not None and win.error_box.text() == str(exc.value)
    assert win.doc.scenario is None  # nothing half-open
    # a file that is not TOML at all
    junk = tmp_path / "junk.toml"
    junk.write_bytes(b"\x00\x01 not toml")
    assert win.open_path(junk) is False
    assert "junk.toml" in win.last_error


def test_closing_with_unsaved_edits_asks(win, demo_copy, demo_plan):
    _open_with(win, demo_copy, demo_plan)
    win.doc.edit_booking("B002", locked=True)
    win.answers = [B.Cancel]
    assert win.close() is False
    assert win.asked and win.asked[-1][0] == "Unsaved edits"
    assert win.isVisible()
    win.answers = [B.Discard]
    assert win.close() is True


def _crash(saver):
    """What a crashed planner leaves: its snapshot, and its lock no longer held."""
    saver.wait()
    saver.release()


def test_autosave_and_recovery_after_a_crash(win, demo_copy, demo_plan, tmp_path):
    from contactplan.app.autosave import Autosaver, orphans
    from contactplan.app.main import offer_recovery

    sc = _open_with(win, demo_copy, demo_plan)
    win.doc.edit_booking("B003", purposes=["ranging"])
    win.autosave(wait=True)
    folder = win.autosaver.folder
    meta = folder / f"{win.autosaver.stem}.json"
    assert meta.exists()
    assert orphans(folder) == []  # this run holds its lock: not an orphan, whatever its process id
    # the planner that wrote it "crashes"; a new one starts (same process id, as in a container)
    old = win.autosaver
    _crash(old)
    win.autosaver = Autosaver(folder)
    assert win.autosaver.stem != old.stem
    snaps = orphans(folder)
    assert len(snaps) == 1 and snaps[0].original == str(demo_copy.resolve())
    win.doc.undo_stack.setClean()
    win.set_scenario(load_scenario(demo_copy), compute=False)
    win.recovery_answers = [("recover", [0])]
    assert offer_recovery(win)
    rec = win.doc.scenario
    assert rec.booking("B003").purposes == ["ranging"]
    assert rec.path == demo_copy.resolve()
    assert win.doc.dirty  # recovered edits are not saved
    win.autosaver.wait()
    assert orphans(folder) == []
    assert _bookings(rec) == _bookings(sc)


def test_every_orphaned_snapshot_is_offered_and_none_deleted_unasked(win, demo_copy, demo_plan, tmp_path):
    from contactplan.app.autosave import Autosaver, orphans
    from contactplan.app.main import offer_recovery
    from contactplan.scenario import dumps

    sc = _open_with(win, demo_copy, demo_plan)
    folder = tmp_path / "crashes"
    for i, name in enumerate(("First crash", "Second crash")):
        crashed = Autosaver(folder)
        sc.name = name
        crashed.write(dumps(sc), demo_copy, name)
        _crash(crashed)
        time.sleep(0.01)
    win.autosaver = Autosaver(folder)
    assert offer_recovery(win, requested=demo_copy) is False  # the user keeps them for later
    assert win.recovery_offers == [(["Second crash", "First crash"], demo_copy)]
    assert len(orphans(folder)) == 2  # nothing deleted
    win.recovery_answers = [("discard", [0]), ("keep", [])]
    assert offer_recovery(win) is False
    assert [s.name for s in orphans(folder)] == ["First crash"]
    assert win.recovery_offers[-1][0] == ["First crash"]  # asked again about what is left


def test_opening_a_file_with_a_pending_recovery_asks_and_opens_the_choice(win, demo_copy, tmp_path,
                                                                          monkeypatch):
    from contactplan.app.autosave import Autosaver
    from contactplan.app.main import start
    from contactplan.scenario import dumps

    other = tmp_path / "other.toml"
    shutil.copy(demo_copy, other)
    sc = load_scenario(other)
    sc.name = "Crashed edits"
    crashed = Autosaver(tmp_path / "pending")
    crashed.write(dumps(sc), other, sc.name)
    _crash(crashed)
    win.autosaver = Autosaver(tmp_path / "pending")
    monkeypatch.setattr(win, "compute", lambda *a, **k: None)
    start(win, str(demo_copy))  # the user answers: open the file asked for
    assert win.recovery_offers == [(["Crashed edits"], demo_copy)]
    assert win.doc.scenario.path == demo_copy and win.doc.scenario.name != "Crashed edits"
    win.recovery_answers = [("recover", [0])]
    start(win, str(demo_copy))  # still pending: now recovered instead
    assert win.doc.scenario.name == "Crashed edits" and win.doc.scenario.path == other


def test_snapshot_paths_are_absolute_so_recovery_works_from_another_folder(win, demo_copy, tmp_path,
                                                                           monkeypatch):
    from contactplan.app.autosave import Autosaver, orphans

    monkeypatch.chdir(demo_copy.parent)
    saver = Autosaver(tmp_path / "snaps")
    saver.write("x = 1\n", "week.toml", "week")  # the path as typed
    _crash(saver)
    monkeypatch.chdir(tmp_path.parent)
    snap = orphans(tmp_path / "snaps")[0]
    assert snap.original == str(demo_copy) and Path(snap.original).is_absolute()


def test_a_snapshot_follows_the_last_edit_within_seconds(win, demo_copy, demo_plan, qtbot):
    from contactplan.app.window import AUTOSAVE_MS

    assert AUTOSAVE_MS <= 5000
    _open_with(win, demo_copy, demo_plan)
    snap = win.autosaver.folder / f"{win.autosaver.stem}.toml"
    win.autosave_timer.setInterval(300)
    win.doc.edit_booking("B003", purposes=["ranging"])
    assert win.autosave_timer.isActive() and win.autosave_timer.isSingleShot()
    qtbot.waitUntil(lambda: snap.exists() and "ranging" in snap.read_text(encoding="utf-8"), timeout=5000)
    assert win.autosaver._thread is not None  # written off the event loop


def test_planner_starts_without_a_user_data_folder(qtbot, tmp_path):
    from contactplan.app.autosave import Autosaver
    from contactplan.app.window import MainWindow

    blocker = tmp_path / "a-file"
    blocker.write_text("not a folder")
    saver = Autosaver(blocker / "autosave")
    assert not saver.enabled and "cannot be used" in saver.error
    settings = QSettings(str(tmp_path / "settings.ini"), QSettings.Format.IniFormat)
    w = MainWindow(settings=settings, autosaver=saver)
    qtbot.addWidget(w)
    assert "Autosave off" in w.autosave_off.text()
    w.autosave(force=True, wait=True)  # nothing to write, nothing raised
    saver.clear()


def test_new_week_follows_the_open_one(win, demo_copy, demo_plan, qtbot):
    sc = _open_with(win, demo_copy, demo_plan)
    win.new_scenario()
    new = win.doc.scenario
    assert new is not sc and new.path is None
    assert new.start_tt == sc.end_tt and new.end_tt - new.start_tt == sc.end_tt - sc.start_tt
    assert new.bookings == [] and [s.id for s in new.stations] == [s.id for s in sc.stations]
    win.cancel_job(wait=True)


# ---------------------------------------------------------------- worker, look
def test_job_cancel_and_failure(qtbot):
    import time

    from contactplan.app.worker import Job
    from contactplan.errors import Cancelled, InputError

    def slow(progress, cancel):
        for i in range(1000):
            if cancel():
                raise Cancelled()
            progress(i / 1000)
            time.sleep(0.005)
        return "finished"

    job = Job("slow", slow)
    seen = []
    job.cancelled.connect(lambda: seen.append("cancelled"))
    job.done.connect(lambda r: seen.append(r))
    job.start()
    qtbot.wait(50)
    job.cancel()
    qtbot.waitUntil(lambda: not job.running, timeout=5000)
    assert seen == ["cancelled"]

    def bad(progress, cancel):
        raise InputError("no such station", "x.toml", 3)

    job2 = Job("bad", bad)
    errs = []
    job2.failed.connect(errs.append)
    job2.start()
    qtbot.waitUntil(lambda: not job2.running, timeout=5000)
    assert errs == [str(InputError("no such station", "x.toml", 3))]


def test_palette_and_icons_both_themes(qapp):
    from contactplan.app import icons, theme

    for th in (theme.light_theme(), theme.dark_theme()):
        theme.set_theme(th)
        icons.icon.cache_clear()
        # the pass shade runs from the low to the high colour, monotonic in lightness in the light theme
        lo, hi = th.pass_colour(0.0), th.pass_colour(1.0)
        assert lo.name() == th.pass_low.name() and hi.name() == th.pass_high.name()
        # foreground against background: WCAG contrast ratio above 4.5 (WCAG 2.1, 1.4.3)
        assert _contrast(th.foreground, th.background) > 4.5
        # severity words in the findings list are text: 4.5:1 on the background (WCAG 2.1, 1.4.3)
        for c in (th.error, th.warning):
            assert _contrast(c, th.background) >= 4.5 and _contrast(c, th.lane_a) >= 4.5
        # booking labels are dark text on the booking fill, locked or not (WCAG 2.1, 1.4.3)
        from PySide6.QtGui import QColor

        for fill in (th.booking, th.booking_locked):
            assert _contrast(QColor("#1A1A1A"), fill) >= 4.5
        # lines that carry meaning: 3:1 against the lanes (WCAG 2.1, 1.4.11 non-text contrast)
        for c in (th.now, th.error, th.burn, th.pass_high, th.track, th.booking_edge):
            assert min(_contrast(c, th.lane_a), _contrast(c, th.lane_b)) >= 3.0, c.name()
        for name in icons.NAMES:
            img = icons.pixmap(name, 32).toImage()
            painted = sum(img.pixelColor(x, y).alpha() > 0 for x in range(0, 32, 2) for y in range(0, 32, 2))
            assert painted > 10, name
    theme.current(refresh=True)


def _contrast(a, b):
    """WCAG 2.1 contrast ratio (relative luminance from the sRGB formula of WCAG 2.1)."""
    def lum(c):
        def ch(v):
            return v / 12.92 if v <= 0.03928 else ((v + 0.055) / 1.055) ** 2.4
        return 0.2126 * ch(c.redF()) + 0.7152 * ch(c.greenF()) + 0.0722 * ch(c.blueF())
    la, lb = sorted((lum(a), lum(b)), reverse=True)
    return (la + 0.05) / (lb + 0.05)


# ---------------------------------------------------------------- background work from the window
def _wait_job(win, qtbot, timeout=180_000):
    qtbot.waitUntil(lambda: win.job is not None and not win.job.running, timeout=timeout)
    QApplication.processEvents()


def test_export_runs_in_the_worker_and_says_what_it_wrote(win, demo_copy, demo_plan, qtbot, tmp_path):
    import csv

    _open_with(win, demo_copy, demo_plan)
    out = tmp_path / "passes.csv"
    assert win.export_to(out, "passes") is not None
    _wait_job(win, qtbot)
    assert win.last_export is not None and "passes.csv" in win.last_export
    with open(out, newline="", encoding="utf-8") as fh:
        rows = [r for r in csv.reader(fh) if r and not r[0].startswith("#")]
    # header plus one row per pass the window shows
    assert len(rows) - 1 == len(win.doc.result.passes)


def test_revalidate_against_the_same_orbit_as_oem_moves_nothing(win, demo_copy, demo_plan, qtbot, tmp_path):
    """Sampled every 10 min and re-read as CCSDS OEM, the same orbit must give the same passes
    to within a few seconds (interpolation only): no booking breaks, edges move by seconds."""
    _open_with(win, demo_copy, demo_plan)
    oem = tmp_path / "same.oem"
    sc = win.doc.scenario
    win.export_to(oem, "ephemeris")
    _wait_job(win, qtbot)
    assert oem.exists()
    win.answers = [B.No]  # do not fly it afterwards
    assert win.revalidate(oem) is not None
    _wait_job(win, qtbot)
    rv = win.last_revalidation
    assert rv is not None and win.asked[-1][0] == "Re-validation"
    assert rv.broken == []
    shifts = [abs(v) for b in rv.bookings for v in (b.aos_shift_s, b.los_shift_s) if v is not None]
    assert shifts and max(shifts) < 30.0
    text = win.asked[-1][1]  # one line per booking with its AOS and LOS shift
    for b in rv.bookings[:14]:
        assert f"  {b.booking} {b.station}: AOS " in text
    assert sc.spacecraft.ephemeris.kind == "libration"  # not flown: the user said no


def test_opening_an_oem_offers_a_new_scenario_around_it(win, demo_copy, demo_plan, qtbot, tmp_path):
    _open_with(win, demo_copy, demo_plan)
    oem = tmp_path / "delivered.oem"
    win.export_to(oem, "ephemeris")
    _wait_job(win, qtbot)
    win.doc.undo_stack.setClean()
    win.answers = [B.Yes]
    assert win.open_path(oem)  # read in the worker: the window only asks, then builds the scenario
    _wait_job(win, qtbot)
    assert win.asked[-1][0] == "New scenario from an ephemeris"
    sc = win.doc.scenario
    assert sc.spacecraft.ephemeris.kind == "oem" and sc.path is None
    assert sc.bookings == [] and len(sc.stations) == len(load_scenario(demo_copy).stations)
    _wait_job(win, qtbot)
    assert len(win.doc.result.passes) > 0


def test_opening_an_oem_parses_it_once_in_the_worker_and_a_fifo_never_hangs(win, demo_copy, demo_plan, qtbot,
                                                                            tmp_path, monkeypatch):
    import threading

    from contactplan.io import oem as oem_io

    _open_with(win, demo_copy, demo_plan)
    oem = tmp_path / "once.oem"
    win.export_to(oem, "ephemeris")
    _wait_job(win, qtbot)
    win.doc.undo_stack.setClean()
    reads = []
    real = oem_io.read_oem
    monkeypatch.setattr(oem_io, "read_oem", lambda p: (reads.append(threading.current_thread().name), real(p))[1])
    win.answers = [B.Yes]
    win.open_path(oem)
    _wait_job(win, qtbot)
    _wait_job(win, qtbot)  # the passes on it
    assert len(win.doc.result.passes) > 0
    assert len(reads) == 1 and reads[0] != threading.main_thread().name  # parsed once, not on the GUI thread
    if hasattr(os, "mkfifo"):
        fifo = tmp_path / "pipe.oem"
        os.mkfifo(fifo)
        win.last_error = None
        assert win.open_path(fifo) is not None
        _wait_job(win, qtbot, timeout=10_000)
        assert "FIFO" in win.last_error and "pipe.oem" in win.last_error


def test_sky_track_agrees_with_the_pass(win, demo_copy, demo_plan):
    """The sky view computes its own azimuth/elevation track; its peak must match the pass
    finder's maximum elevation and its ends the station's limit (same engine frames)."""
    from contactplan.app.document import Selection
    from contactplan.geometry.mask import effective_limit_deg

    sc = _open_with(win, demo_copy, demo_plan)
    p = next(q for q in win.doc.result.passes if not (q.clipped_start or q.clipped_end))
    win.doc.select(Selection("pass", p))
    t, az, el = win.sky.track
    assert len(t) == 181 and t[0] == p.aos_tt and t[-1] == p.los_tt
    assert np.max(el) == pytest.approx(p.max_elevation_deg, abs=0.3)
    st = sc.station(p.station)
    lim = effective_limit_deg(st, np.array([az[0], az[-1]]))
    assert el[0] == pytest.approx(lim[0], abs=0.3) and el[-1] == pytest.approx(lim[1], abs=0.3)
    assert az[0] == pytest.approx(p.aos_azimuth_deg, abs=0.5)
    win.sky.repaint()


def test_hover_text_and_property_editor(win, demo_copy, demo_plan):
    from contactplan.app.document import Selection

    sc = _open_with(win, demo_copy, demo_plan)
    # B006 (ORF, playback only) tracks through the burn's keep-out: an error (resources/demo/week.toml)
    b = sc.booking("B006")
    canvas = win.timeline.canvas
    win.timeline.zoom_to(b.start_tt, b.end_tt)
    QApplication.processEvents()
    x = win.timeline.x_of(0.5 * (b.start_tt + b.end_tt))
    text = canvas.describe(x, canvas.lane_of_station("ORF") + 0.5)
    assert "booking B006 at ORF" in text and "error" in text
    assert "services: playback [P]" in text
    assert "track (BOT to EOT) 2027-01-15T12:45:00Z to 2027-01-15T16:45:00Z" in text  # ORF: 45 + 15 min
    win.doc.select(Selection("booking", "B006"))
    ed = win.props
    assert ed.kind == "booking" and ed.fields["station"].currentText() == "ORF"
    assert ed.fields["handover_from"].currentText() == "(none)"
    ed.fields["service:telemetry"].setChecked(True)
    ed.apply()
    assert b.services == ["telemetry", "playback"]
    ed.fields["end_tt"].setText("not a time")
    ed.apply()
    assert ed.error.text() and b.services == ["telemetry", "playback"]
    win.act_undo.trigger()
    assert b.services == ["playback"]
    # SLM has no uplink: commanding, ranging and doppler are greyed out and marked on its booking B007
    win.doc.select(Selection("booking", "B007"))
    for s in ("commanding", "ranging", "doppler"):
        box = ed.fields[f"service:{s}"]
        assert not box.isEnabled() and "not at SLM" in box.text()
    assert ed.fields["service:playback"].isEnabled() and ed.fields["service:playback"].isChecked()
    # B008 continues B007: the handover is shown and can be taken off (undoable)
    win.doc.select(Selection("booking", "B008"))
    assert ed.fields["handover_from"].currentText() == "B007"
    ed.fields["handover_from"].setCurrentText("(none)")
    ed.apply()
    assert sc.booking("B008").handover_from is None
    win.act_undo.trigger()
    assert sc.booking("B008").handover_from == "B007"


@pytest.mark.slow
def test_draft_the_week_is_one_undo_step(win, demo_copy, demo_plan, qtbot):
    sc = _open_with(win, demo_copy, demo_plan)
    before = _bookings(sc)
    locked = [b.id for b in sc.bookings if b.locked]
    shown = []
    win.confirm_draft = lambda text, details: shown.append((text, details)) or True
    assert win.draft_week() is not None
    _wait_job(win, qtbot, timeout=300_000)
    text, details = shown[-1]  # plain words first, the solver's terms behind Details
    assert "Hours per station" in text and "Requirements:" in text and "gap" not in text
    assert "bookings added:" in details and "station cost-hours:" in details
    assert "gap" in details or "proven optimal" in details
    assert sc.revision == load_scenario(demo_copy).revision + 1  # drafting raises the revision
    after = _bookings(sc)
    assert after != before
    assert all(any(b.id == i for b in sc.bookings) for i in locked)  # locked ones stay
    win.act_undo.trigger()
    assert _bookings(sc) == before


def test_keys_move_through_weeks_and_zoom(win, demo_copy, demo_plan, qtbot):
    from contactplan.timescale import DAY_S

    sc = _open_with(win, demo_copy, demo_plan)
    sc.end_tt = sc.start_tt + 21 * DAY_S  # three weeks to move through
    tl = win.timeline
    tl.rebuild()
    tl.show_week(sc.start_tt)
    v0, v1 = tl.visible_tt()
    assert v0 == pytest.approx(sc.start_tt, abs=1.0) and v1 - v0 == pytest.approx(7 * DAY_S, abs=1.0)
    tl.setFocus()
    qtbot.keyClick(tl, Qt.Key.Key_PageDown)
    assert tl.visible_tt()[0] == pytest.approx(v0 + 7 * DAY_S, abs=1.0)
    qtbot.keyClick(tl, Qt.Key.Key_PageDown)
    qtbot.keyClick(tl, Qt.Key.Key_PageDown)  # past the window: the view stops at its end (plus a margin)
    assert tl.visible_tt()[1] <= sc.end_tt + 2.1 * DAY_S + 1.0
    tl.show_week(sc.start_tt)
    qtbot.keyClick(tl, Qt.Key.Key_Plus)
    w0, w1 = tl.visible_tt()
    assert w1 - w0 == pytest.approx(3.5 * DAY_S, abs=1.0)
    qtbot.keyClick(tl, Qt.Key.Key_Right)
    assert tl.visible_tt()[0] == pytest.approx(w0 + 0.35 * DAY_S, abs=1.0)
    # the axis labels the UTC midnights (day of year first with the day-of-year switch)
    axis = tl.top_axis
    labels = axis.tickStrings([tl.x_of(sc.start_tt)], 1.0, 24.0)
    assert labels == ["Tue 01-12"]  # 2027-01-12 is a Tuesday, day 12 (calendar fact)
    win.act_doy.setChecked(True)
    assert axis.tickStrings([tl.x_of(sc.start_tt)], 1.0, 24.0) == ["012 Tue 01-12"]
    win.act_doy.setChecked(False)


def test_station_edit_marks_passes_stale_and_recomputes(win, demo_copy, demo_plan, qtbot):
    sc = _open_with(win, demo_copy, demo_plan)
    st = sc.stations[0]
    old = st.min_elevation_deg
    n_before = len(win.doc.passes_for(st.id))
    dur_before = sum(p.duration_s for p in win.doc.passes_for(st.id))
    win.doc.edit_record("station", st.id, min_elevation_deg=old + 15.0)
    assert win.doc.stale and "out of date" in win.summary.text()
    assert win.job is not None
    _wait_job(win, qtbot)
    assert not win.doc.stale
    # a higher limit shortens that station's passes (fewer or equal passes, less time)
    assert len(win.doc.passes_for(st.id)) <= n_before
    assert sum(p.duration_s for p in win.doc.passes_for(st.id)) < dur_before
    win.act_undo.trigger()
    assert st.min_elevation_deg == old
    _wait_job(win, qtbot)


def test_run_app_on_a_broken_file_shows_the_error_and_keeps_running(tmp_path):
    """The real start-up, in its own process (its event loop ends with the test)."""
    import subprocess
    import sys

    from contactplan.errors import InputError

    bad = tmp_path / "bad.toml"
    bad.write_text("[scenario]\nname = 'x'\nstart = 'yesterday'\n", encoding="utf-8")
    with pytest.raises(InputError) as exc:
        load_scenario(bad)
    env = dict(os.environ, QT_QPA_PLATFORM="offscreen")
    for var in ("HOME", "XDG_CONFIG_HOME", "XDG_DATA_HOME", "XDG_STATE_HOME"):
        env[var] = str(tmp_path / var.lower())
    script = (
        "import sys\n"
        "from PySide6.QtCore import QTimer\n"
        "from PySide6.QtWidgets import QApplication\n"
        "from contactplan.app.main import application, run_app\n"
        "application()\n"
        "from contactplan.app.window import MainWindow\n"
        "def look():\n"
        "    for w in QApplication.topLevelWidgets():\n"
        "        if isinstance(w, MainWindow) and w.isVisible():\n"
        "            print('ERROR-LINE:' + str(w.last_error), flush=True)\n"
        "            w.close()\n"
        "    QApplication.instance().quit()\n"
        "QTimer.singleShot(1500, look)\n"
        "sys.exit(run_app(sys.argv[1]))\n"
    )
    out = subprocess.run([sys.executable, "-c", script, str(bad)], env=env, capture_output=True, text=True,
                         timeout=120, cwd=str(ROOT))
    assert out.returncode == 0, out.stderr[-2000:]
    lines = [ln[len("ERROR-LINE:"):] for ln in out.stdout.splitlines() if ln.startswith("ERROR-LINE:")]
    assert lines == [str(exc.value)]
    # the log went to the user log folder
    logs = list((tmp_path / "xdg_state_home").rglob("contactplan.log"))
    assert logs and "bad.toml" in logs[0].read_text(encoding="utf-8")


def test_recovery_skips_a_snapshot_equal_to_the_file(win, demo_copy, demo_plan):
    from contactplan.app.autosave import Autosaver, orphans
    from contactplan.app.main import offer_recovery
    from contactplan.scenario import dumps

    sc = _open_with(win, demo_copy, demo_plan)
    win.save_to(demo_copy)  # the file now holds exactly what a snapshot would
    win.autosaver.wait()
    folder = win.autosaver.folder
    assert (folder / f"{win.autosaver.stem}.toml").read_text() == dumps(sc)
    _crash(win.autosaver)
    win.autosaver = Autosaver(folder)
    assert len(orphans(folder)) == 1
    assert offer_recovery(win) is False
    assert win.recovery_offers == []  # nothing to ask about
    assert orphans(folder) == []


def test_double_click_on_a_booking_edits_its_purposes(win, demo_copy, demo_plan, qtbot, monkeypatch):
    from PySide6.QtWidgets import QDialog

    from contactplan.app import window as window_mod

    sc = _open_with(win, demo_copy, demo_plan)
    b = sc.booking("B002")
    win.timeline.zoom_to(b.start_tt, b.end_tt)
    QApplication.processEvents()

    def fake_exec(dialog):  # the user ticks commanding and presses OK
        assert dialog.boxes["commanding"].isEnabled()  # ORF has an uplink carrying it
        dialog.boxes["commanding"].setChecked(True)
        return QDialog.DialogCode.Accepted

    monkeypatch.setattr(window_mod.ServicesDialog, "exec", fake_exec)
    pos = _pos(win, 0.5 * (b.start_tt + b.end_tt), win.timeline.canvas.lane_of_station("ORF") + 0.5)
    vp = win.timeline.viewport()
    with qtbot.waitSignal(win.timeline.editPurposesRequested, timeout=3000) as blocker:
        _send(vp, QEvent.Type.MouseButtonPress, pos, Qt.MouseButton.LeftButton)
        _send(vp, QEvent.Type.MouseButtonRelease, pos, Qt.MouseButton.NoButton)
        _send(vp, QEvent.Type.MouseButtonDblClick, pos, Qt.MouseButton.LeftButton)
        _send(vp, QEvent.Type.MouseButtonRelease, pos, Qt.MouseButton.NoButton)
    assert blocker.args == ["B002"]
    assert b.services == ["telemetry", "playback", "commanding", "ranging", "doppler"]
    assert win.doc.undo_stack.undoText().startswith("Change B002")


def test_about_box_carries_the_caution(win):
    box = win.about()
    assert CAUTION in box.text()
    box.close()


def test_recompute_while_computing_restarts_without_freezing(win, demo_copy, qtbot):
    import time

    assert win.open_path(demo_copy)
    first = win.job
    assert first is not None and first.running
    t0 = time.perf_counter()
    second = win.compute()  # cancels the running computation and starts again
    assert time.perf_counter() - t0 < 5.0
    assert second is not None and second is not first and not first.running
    _wait_job(win, qtbot)
    assert len(win.doc.result.passes) > 10
    # switching scenario while computing cancels the job at once
    win.compute()
    t0 = time.perf_counter()
    win.set_scenario(load_scenario(demo_copy), compute=False)
    assert time.perf_counter() - t0 < 5.0 and not win.job.running


def test_day_of_year_dates_in_tables(win, demo_copy, demo_plan):
    sc = _open_with(win, demo_copy, demo_plan)
    m = win.bookings_model
    row = next(i for i, b in enumerate(m.rows) if b.id == "B002")
    assert m.index(row, 2).data() == "2027-01-13T11:00:00Z"
    win.act_doy.setChecked(True)
    try:
        assert m.index(row, 2).data() == "2027-013T11:00:00Z"  # 13 January is day 13 (calendar fact)
        assert win.passes_model.index(0, 1).data()[4] == "-" and win.passes_model.index(0, 1).data()[8] == "T"
        # day-of-year text is accepted back when editing
        assert m.setData(m.index(row, 3), "2027-013T16:00:00Z")
        assert sc.booking("B002").end_tt == parse_utc("2027-01-13T16:00:00Z")
    finally:
        win.act_doy.setChecked(False)


def test_switching_to_dark_recolours_the_timeline(win, demo_copy, demo_plan, monkeypatch):
    from contactplan.app import theme

    _open_with(win, demo_copy, demo_plan)
    monkeypatch.setattr(theme, "system_is_dark", lambda: True)
    before = win.export_button.icon().cacheKey()
    win.refresh_theme()
    assert theme.current().dark
    assert win.export_button.icon().cacheKey() != before  # the toolbar's export button is redrawn too
    assert win.timeline.backgroundBrush().color().name() == theme.dark_theme().background.name()
    img = win.timeline.grab().toImage()
    # most of the lanes are now dark
    dark = sum(img.pixelColor(x, y).lightness() < 100 for x in range(0, img.width(), 17)
               for y in range(0, img.height(), 17))
    total = len(range(0, img.width(), 17)) * len(range(0, img.height(), 17))
    assert dark > 0.5 * total
    monkeypatch.setattr(theme, "system_is_dark", lambda: False)
    win.refresh_theme()
    assert not theme.current().dark


def test_drag_past_los_stops_at_los(win, demo_copy, demo_plan, qtbot):
    sc = _open_with(win, demo_copy, demo_plan)
    p = _free_pass(win)
    win.timeline.zoom_to(p.aos_tt, p.los_tt)
    QApplication.processEvents()
    lane = win.timeline.canvas.lane_of_station(p.station)
    t0 = _grid(p.los_tt - 2 * 3600.0)
    drag(qtbot, win, t0, p.los_tt + 1800.0, lane + 0.5)
    b = sc.bookings[-1]
    assert b.start_tt == pytest.approx(t0, abs=1e-6)
    assert b.end_tt == pytest.approx(p.los_tt, abs=1e-6)  # clamped to the pass it was drawn on


# ---------------------------------------------------------------- usability review
def _settle(n=4):
    for _ in range(n):
        QApplication.processEvents()


def test_first_day_is_named_at_the_left_edge_of_the_time_axis(win, demo_copy, demo_plan):
    sc = _open_with(win, demo_copy, demo_plan)
    tl = win.timeline
    tl.show_week(sc.start_tt)  # the demo starts at 2027-01-12T00:00Z, a UTC midnight
    win.grab()
    _settle()
    # 2027-01-12 is day 12 and a Tuesday (calendar fact); the name may shorten to fit before 013
    assert tl.top_axis.edge_label in ("Tue 01-12", "01-12")  # calendar dates (the default)
    assert tl.el_axis.edge_label == tl.top_axis.edge_label
    win.act_doy.setChecked(True)  # the one day-of-year switch reaches the axes too
    win.grab()
    _settle()
    assert tl.top_axis.edge_label in ("012 Tue 01-12", "012 Tue", "012")
    assert tl.el_axis.edge_label == tl.top_axis.edge_label
    # a view starting mid-day names that day too
    tl.set_range_tt(sc.start_tt + 2.5 * 86400.0, sc.start_tt + 3.2 * 86400.0)
    win.grab()
    _settle()
    assert tl.top_axis.edge_label is not None and tl.top_axis.edge_label.startswith("014")
    win.act_doy.setChecked(False)


def test_recorder_overflow_says_what_is_lost(win, demo_copy, demo_plan):
    sc = _open_with(win, demo_copy, demo_plan)
    win.doc.recheck(wait=True)
    rec = win.doc.result.recorder
    assert rec.overflow_spans, "the demo week overflows its recorder on purpose"
    tl = win.timeline
    texts = tl.overflow_texts
    assert len(texts) == len(rec.overflow_spans)
    lost = rec.overflow_spans[0][2]
    assert texts[0].endswith(f"{lost:.1f} Gbit lost")
    labels = [it for it in tl.overflow_items if getattr(it, "overflow_span", None)]
    assert labels and labels[0].textItem.toPlainText() == f"{lost:.1f} Gbit lost"
    # the label stays on screen even when its span runs past the right edge of the view
    t0 = rec.overflow_spans[0][0]
    tl.set_range_tt(t0 - 2 * 86400.0, t0 + 1800.0)
    _settle()
    (vx0, vx1), _ = tl.rec_plot.getViewBox().viewRange()
    assert vx0 <= labels[0].pos().x() < vx1 and labels[0].isVisible()
    # and it goes away with its span when the view is elsewhere
    tl.set_range_tt(sc.start_tt, sc.start_tt + 86400.0)
    _settle()
    if rec.overflow_spans[0][0] > sc.start_tt + 86400.0:
        assert not labels[0].isVisible()


def test_caution_is_whole_in_a_small_window(win, demo_copy, demo_plan):
    _open_with(win, demo_copy, demo_plan)
    win.resize(800, 600)
    _settle()
    c = win.caution
    assert c.isVisible() and c.wordWrap()
    # the label is tall enough for its wrapped text and lies inside the status bar
    assert c.height() >= c.heightForWidth(c.width())
    assert c.geometry().right() <= win.statusBar().width()
    assert win.statusBar().geometry().bottom() <= win.height()
    two_lines = c.height()
    # wide again: one line, and the status bar gives the room back
    win.resize(1600, 700)
    _settle(6)
    assert c.heightForWidth(c.width()) < two_lines and c.height() >= c.heightForWidth(c.width())
    assert win.statusBar().height() < two_lines + 6


def test_sky_view_gets_room_on_first_start(win, demo_copy, demo_plan):
    _open_with(win, demo_copy, demo_plan)
    _settle()
    assert win.sky.width() >= 340 and win.sky.height() >= 320
    # ... without taking the findings list's room: several rows show
    v = win.findings_view
    assert v.viewport().height() >= 5 * v.verticalHeader().defaultSectionSize()


def _bad_oems(tmp_path):
    """A few broken OEM files: not an OEM at all, a header only, a data line cut short, times going back."""
    head = ("CCSDS_OEM_VERS = 2.0\nCREATION_DATE = 2027-01-01T00:00:00\nORIGINATOR = TEST\n\n"
            "META_START\nOBJECT_NAME = PROBE\nOBJECT_ID = 2027-000A\nCENTER_NAME = EARTH\nREF_FRAME = EME2000\n"
            "TIME_SYSTEM = UTC\nSTART_TIME = 2027-01-10T00:00:00\nSTOP_TIME = 2027-01-10T02:00:00\nMETA_STOP\n\n")
    rows = ["2027-01-10T00:00:00 1500000.0 10000.0 5000.0 0.01 0.3 0.02",
            "2027-01-10T01:00:00 1500036.0 11080.0 5072.0 0.01 0.3 0.02",
            "2027-01-10T02:00:00 1500072.0 12160.0 5144.0 0.01 0.3 0.02"]
    files = {
        "empty.oem": "",
        "header-only.oem": head,
        "short-line.oem": head + rows[0] + "\n" + rows[1][:30] + "\n" + rows[2] + "\n",
        "backwards.oem": head + rows[2] + "\n" + rows[1] + "\n" + rows[0] + "\n",
    }
    out = []
    for name, text in files.items():
        p = tmp_path / name
        p.write_text(text, encoding="utf-8")
        out.append(p)
    return out


def test_a_bad_oem_opens_a_one_line_error_dialog(win, demo_copy, demo_plan, qtbot, tmp_path):
    sc = _open_with(win, demo_copy, demo_plan)
    for bad in _bad_oems(tmp_path):
        for how in ("open", "import"):
            win.last_error = None
            win.error_box = None
            job = win.open_path(bad) if how == "open" else win.import_ephemeris_path(bad)
            assert job is not None, (bad.name, how)  # read in the worker, never on the event loop
            _wait_job(win, qtbot)
            assert win.last_error and "\n" not in win.last_error, (bad.name, how, win.last_error)
            assert bad.name in win.last_error, (bad.name, win.last_error)
            assert win.error_box is not None and win.error_box.text() == win.last_error
            win.error_box.close()
    assert win.doc.scenario is sc and sc.spacecraft.ephemeris.kind == "libration"  # nothing changed
    # re-validation against a bad OEM fails in the worker, into the same kind of dialog
    win.last_error = None
    assert win.revalidate(tmp_path / "short-line.oem") is not None
    _wait_job(win, qtbot)
    assert win.last_error and "\n" not in win.last_error and "short-line.oem" in win.last_error


@pytest.mark.parametrize("what,fmt", [(w, f) for w, f, _label, _filt in
                                      __import__("contactplan.app.window", fromlist=["EXPORTS"]).EXPORTS])
def test_every_export_writes_and_says_what_it_wrote(win, demo_copy, demo_plan, qtbot, tmp_path, what, fmt):
    _open_with(win, demo_copy, demo_plan)
    win.doc.recheck(wait=True)
    out = tmp_path / f"week-{what}.{fmt}"
    assert win.export_to(out, what) is not None
    _wait_job(win, qtbot, timeout=300_000)
    assert win.last_error is None, win.last_error
    assert out.exists() and out.stat().st_size > 0
    assert win.last_export and out.name in win.last_export
    assert out.name in win.statusBar().currentMessage()


def test_draft_runs_in_the_worker_with_progress_and_cancel(win, demo_copy, demo_plan, qtbot, monkeypatch):
    """The window hands its progress bar and Cancel button to the drafter (a stand-in drafter here)."""
    import time

    from contactplan.errors import Cancelled
    from contactplan.plan import drafter

    seen = {"fractions": [], "kwargs": None}

    def slow_draft(scenario, **kw):
        seen["kwargs"] = kw
        for i in range(400):
            kw["progress"](i / 400)
            seen["fractions"].append(i / 400)
            if kw["cancel"]():
                raise Cancelled("drafting cancelled")
            time.sleep(0.01)
        raise AssertionError("cancel never arrived")

    monkeypatch.setattr(drafter, "draft", slow_draft)
    sc = _open_with(win, demo_copy, demo_plan)
    before = _bookings(sc)
    job = win.draft_week()
    assert job is not None and win.progress.isVisible() and win.cancel_btn.isVisible()
    qtbot.waitUntil(lambda: win.progress.value() > 0, timeout=10_000)
    assert win.timeline.isEnabled()  # the window keeps answering
    win.cancel_btn.click()
    _wait_job(win, qtbot)
    assert seen["kwargs"]["progress"] is not None and seen["kwargs"]["cancel"] is not None
    assert len(seen["fractions"]) < 400
    assert not win.progress.isVisible() and "cancelled" in win.statusBar().currentMessage()
    assert not win.asked and _bookings(sc) == before  # nothing proposed, nothing changed


def test_move_snaps_to_the_grid_and_to_a_pass_edge(win, demo_copy, demo_plan, qtbot):
    sc = _open_with(win, demo_copy, demo_plan)
    p = _free_pass(win, min_h=5.0)
    s = _grid(p.aos_tt + 3600.0)
    bid = win.doc.add_booking(p.station, s, s + 3600.0)
    b = sc.booking(bid)
    win.timeline.zoom_to(p.aos_tt, p.los_tt)
    QApplication.processEvents()
    lane = win.timeline.canvas.lane_of_station(p.station)
    # dragged 17 min 40 s later: the start lands on the 5-minute grid (20 min later), length kept
    drag(qtbot, win, s + 1800.0, s + 1800.0 + 1060.0, lane + 0.5)
    assert b.start_tt == pytest.approx(s + 1200.0, abs=1e-6)
    assert b.end_tt - b.start_tt == pytest.approx(3600.0, abs=1e-6)
    # dragged so that its end comes a few pixels short of LOS: the end lands on LOS
    px = win.timeline.canvas.px_s()
    mid = 0.5 * (b.start_tt + b.end_tt)
    target_shift = (p.los_tt - 3 * px) - b.end_tt
    drag(qtbot, win, mid, mid + target_shift, lane + 0.5)
    assert b.end_tt == pytest.approx(p.los_tt, abs=1e-6)
    assert b.end_tt - b.start_tt == pytest.approx(3600.0, abs=1e-6)
    assert win.doc.undo_stack.count() == 3  # created, moved, moved: one undo step each
    win.act_undo.trigger()
    win.act_undo.trigger()
    assert b.start_tt == pytest.approx(s)


def test_delete_key_in_the_bookings_table(win, demo_copy, demo_plan, qtbot):
    sc = _open_with(win, demo_copy, demo_plan)
    win.bookings_dock.raise_()
    _settle()
    v = win.bookings_view
    idx = v.model().index(0, 0)
    bid = idx.data(__import__("contactplan.app.models", fromlist=["OBJECT_ROLE"]).OBJECT_ROLE).id
    v.setFocus()
    v.setCurrentIndex(idx)
    win._booking_clicked(idx)
    assert win.doc.selection.key == bid
    qtbot.keyClick(v, Qt.Key.Key_Delete)
    assert all(b.id != bid for b in sc.bookings)
    win.act_undo.trigger()
    assert any(b.id == bid for b in sc.bookings)


def test_arrow_keys_walk_the_findings_and_the_view_follows(win, demo_copy, demo_plan, qtbot):
    _open_with(win, demo_copy, demo_plan)
    win.doc.recheck(wait=True)
    win.findings_dock.raise_()
    _settle()
    v = win.findings_view
    assert v.model().rowCount() >= 2
    v.setFocus()
    v.setCurrentIndex(v.model().index(0, 0))
    qtbot.keyClick(v, Qt.Key.Key_Down)
    from contactplan.app.models import OBJECT_ROLE

    f = v.model().index(1, 0).data(OBJECT_ROLE)
    assert win.doc.selection.kind == "finding" and win.doc.selection.key is f
    v0, v1 = win.timeline.visible_tt()
    assert v0 <= f.start_tt and max(f.end_tt, f.start_tt + 60) <= v1


def test_previous_next_and_given_week(win, demo_copy, demo_plan, monkeypatch):
    from contactplan.app import window as window_mod
    from contactplan.timescale import DAY_S

    sc = _open_with(win, demo_copy, demo_plan)
    sc.end_tt = sc.start_tt + 28 * DAY_S
    tl = win.timeline
    tl.rebuild()
    tl.show_week(sc.start_tt)
    win.act_next.trigger()
    assert tl.visible_tt()[0] == pytest.approx(sc.start_tt + 7 * DAY_S, abs=1.0)
    win.act_prev.trigger()
    assert tl.visible_tt()[0] == pytest.approx(sc.start_tt, abs=1.0)
    # a given week, typed as a day of year: 2027-019 is 2027-01-19 (calendar fact)
    monkeypatch.setattr(window_mod.QInputDialog, "getText", staticmethod(lambda *a, **k: ("2027-019", True)))
    win.act_goto.trigger()
    v0, v1 = tl.visible_tt()
    assert v0 == pytest.approx(parse_utc("2027-01-19T00:00:00Z"), abs=1.0)
    assert v1 - v0 == pytest.approx(7 * DAY_S, abs=1.0)
    # nonsense gives the one-line error, the view stays
    monkeypatch.setattr(window_mod.QInputDialog, "getText", staticmethod(lambda *a, **k: ("next tuesday", True)))
    win.act_goto.trigger()
    assert win.last_error and "\n" not in win.last_error
    assert tl.visible_tt()[0] == pytest.approx(v0, abs=1.0)


def test_property_edits_of_stations_and_activities_are_undoable(win, demo_copy, demo_plan):
    from contactplan.app.document import Selection

    sc = _open_with(win, demo_copy, demo_plan)
    ed = win.props
    st = sc.stations[0]
    win.doc.select(Selection("station", st.id))
    old_cost, old_name = st.cost_per_hour, st.name
    ed.fields["cost_per_hour"].setValue(old_cost + 7.0)
    ed.fields["name"].setText("Renamed hill")
    ed.apply()
    assert st.cost_per_hour == pytest.approx(old_cost + 7.0) and st.name == "Renamed hill"
    assert not win.doc.stale  # cost and name do not move the passes
    win.act_undo.trigger()
    assert st.cost_per_hour == pytest.approx(old_cost) and st.name == old_name
    win.act_redo.trigger()
    assert st.name == "Renamed hill"
    win.act_undo.trigger()
    act = next(a for a in sc.activities if a.series is None)
    win.doc.select(Selection("activity", act.id))
    old_len = act.duration_min
    ed.fields["duration_min"].setValue(old_len + 10.0)
    ed.apply()
    assert act.duration_min == pytest.approx(old_len + 10.0)
    assert win.doc.undo_stack.undoText().startswith(f"Change {act.id}")
    win.act_undo.trigger()
    assert act.duration_min == pytest.approx(old_len)
    # a bad time is refused in the editor, nothing pushed
    n = win.doc.undo_stack.count()
    ed.fields["start_tt"].setText("2027-02-30T10:00Z")
    ed.apply()
    assert ed.error.text() and win.doc.undo_stack.count() == n


def test_drag_preview_names_its_snapped_times_and_length(win, demo_copy, demo_plan):
    _open_with(win, demo_copy, demo_plan)
    p = _free_pass(win, min_h=4.0)
    tl = win.timeline
    tl.zoom_to(p.aos_tt, p.los_tt)
    _settle()
    c = tl.canvas
    lane = c.lane_of_station(p.station) + 0.5
    t0 = _grid(p.aos_tt + 3600.0)
    d = c.begin_drag(c.x_of(t0 + 40.0), lane)
    c.update_drag(d, c.x_of(t0 + 2 * 3600.0 + 7 * 60.0 + 40.0), lane)  # 2 h 07 min 40 s after
    win.grab()  # paint: the preview writes its label
    from contactplan.timescale import format_utc

    assert d.start_tt == pytest.approx(t0) and d.end_tt == pytest.approx(t0 + 2 * 3600.0 + 600.0)
    # full start and end, each with its date (the end may fall on the next day)
    assert c.drag_label == f"{format_utc(t0, 0)[:16].replace('T', ' ')} - " \
                           f"{format_utc(t0 + 7800.0, 0)[:16].replace('T', ' ')}  (2 h 10)"
    c.drag = None


def test_escape_drops_a_drag_in_progress(win, demo_copy, demo_plan, qtbot):
    sc = _open_with(win, demo_copy, demo_plan)
    p = _free_pass(win)
    tl = win.timeline
    tl.zoom_to(p.aos_tt, p.los_tt)
    _settle()
    lane = tl.canvas.lane_of_station(p.station) + 0.5
    t0 = _grid(p.aos_tt + 3600.0)
    n = len(sc.bookings)
    vp = tl.viewport()
    _send(vp, QEvent.Type.MouseButtonPress, _pos(win, t0, lane), Qt.MouseButton.LeftButton)
    for f in np.linspace(0.1, 1.0, 5):
        qtbot.wait(25)
        _send(vp, QEvent.Type.MouseMove, _pos(win, t0 + 7200.0 * f, lane), Qt.MouseButton.LeftButton)
    assert tl.canvas.drag is not None
    view_before = tl.visible_tt()
    qtbot.keyClick(tl, Qt.Key.Key_Escape)
    assert tl.canvas.drag is None
    for f in (1.1, 1.2):  # the mouse goes on moving: no pan, no booking
        qtbot.wait(25)
        _send(vp, QEvent.Type.MouseMove, _pos(win, t0 + 7200.0 * f, lane), Qt.MouseButton.LeftButton)
    qtbot.wait(25)
    _send(vp, QEvent.Type.MouseButtonRelease, _pos(win, t0 + 8000.0, lane), Qt.MouseButton.NoButton)
    QApplication.processEvents()
    assert len(sc.bookings) == n and win.doc.undo_stack.count() == 0
    assert tl.visible_tt() == pytest.approx(view_before)
    # the next drag works as usual
    drag(qtbot, win, t0, t0 + 3600.0, lane)
    assert len(sc.bookings) == n + 1
