"""Dense lanes of the timeline: the span index's arrays, and a plan with thousands of burns painted from them.

The index (``contactplan/app/spans.py``) is checked against a brute-force scan of the
same records (hypothesis); the painted lane against the plan (pixels of the burn and
error colours where the burns and their findings are). Invented stations and burns.
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import example, given, settings
from hypothesis import strategies as st

pytest.importorskip("PySide6")

from contactplan.app.spans import SpanIndex  # noqa: E402


class _Rec:
    def __init__(self, i, a, b):
        self.id, self.start_tt, self.end_tt = f"R{i}", a, b


spans = st.lists(st.tuples(st.floats(-1e4, 1e4), st.floats(0.0, 500.0)), max_size=60)


@settings(max_examples=80, deadline=None)
@given(spans, st.floats(-1.2e4, 1.2e4), st.floats(0.0, 5e3), st.sets(st.integers(0, 59)), st.sets(st.integers(0, 59)))
@example([(-3.93123605702665e-134, 1.0)], 1.0, 0.0, set(), set())  # end - start rounds below the reach
def test_index_arrays_equal_a_brute_force_scan(items, lo, width, errors, warnings):
    recs = [_Rec(i, a, a + d) for i, (a, d) in enumerate(items)]
    hi = lo + width
    index = SpanIndex(lambda r: (r.start_tt, r.end_tt))
    ix = index.visible_index(recs, 0, lo, hi)
    got = index.take(ix)
    want = [r for r in recs if r.end_tt >= lo and r.start_tt <= hi]
    assert sorted(r.id for r in got) == sorted(r.id for r in want)
    assert [r.start_tt for r in got] == sorted(r.start_tt for r in want)  # start order
    assert index.visible(recs, 0, lo, hi) == got
    start = index.column("start", lambda r: r.start_tt)
    assert start[ix].tolist() == [r.start_tt for r in got]
    level = {f"R{i}": 2 for i in errors} | {f"R{i}": 1 for i in warnings - errors}
    assert index.severity(level)[ix].tolist() == [level.get(r.id, 0) for r in got]


def test_a_week_with_thousands_of_burns_paints_them_and_their_errors_without_rebuilding_on_booking_edits(
        qtbot, tmp_path, minimal_path):
    from PySide6.QtCore import QSettings

    from contactplan.app import theme
    from contactplan.app.autosave import Autosaver
    from contactplan.app.window import MainWindow
    from contactplan.scenario import load_scenario
    from contactplan.scenario import model as m

    sc = load_scenario(minimal_path)
    span = sc.end_tt - sc.start_tt
    n = 3000  # over DETAIL_MAX in view: the lane is painted as merged runs from the index's arrays
    # the first half of the week only: unmonitored burns (errors) there, nothing in the second half
    sc.activities = [m.Activity(id=f"K{i:05d}", kind="burn", start_tt=sc.start_tt + 0.5 * span * (i + 0.5) / n,
                                duration_min=1.0) for i in range(n)]
    sc.series = []
    win = MainWindow(settings=QSettings(str(tmp_path / "s.ini"), QSettings.Format.IniFormat),
                     autosaver=Autosaver(tmp_path / "autosave"))
    qtbot.addWidget(win)
    win.resize(1400, 900)
    win.show()
    win.set_scenario(sc, compute=False)
    assert win.doc.wait_checked()
    win.timeline.show_window()
    qtbot.wait(50)
    canvas = win.timeline.canvas
    errors = {f.subjects[0] for f in win.doc.findings if f.severity == "error" and f.subjects}
    assert len(errors & {a.id for a in sc.activities}) == n  # every burn is unmonitored
    img = win.timeline.grab().toImage()
    th = theme.current()

    def columns_with(colour) -> np.ndarray:
        hits = [x for x in range(0, img.width(), 2)
                if any(img.pixelColor(x, y).rgb() == colour.rgb() for y in range(0, img.height(), 2))]
        return np.array(hits)

    burn_x, error_x = columns_with(th.burn), columns_with(th.error)
    assert burn_x.size > 50 and error_x.size > 50
    # both stop half-way through the week: nothing painted over the burn-free second half
    assert burn_x.max() - burn_x.min() < 0.62 * img.width() and error_x.max() < burn_x.max() + 20
    key = canvas._activity_index._key
    b = sc.bookings[0]
    win.doc.edit_booking(b.id, start_tt=b.start_tt + 60.0, end_tt=b.end_tt + 60.0)
    win.timeline.grab()
    assert canvas._activity_index._key == key  # a booking edit leaves the 3000 burns' arrays alone
    a = sc.activities[10]
    win.doc.edit_record("activity", a.id, start_tt=a.start_tt + 600.0)
    win.timeline.grab()
    assert canvas._activity_index._key != key  # an activity edit rebuilds them
    assert win.doc.wait_checked()
    win.doc.undo_stack.setClean()
