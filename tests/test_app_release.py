"""Freeing large plans off the event loop (app/release.py): what only the hand-over holds is freed, what
others still hold is left whole."""

from __future__ import annotations

import gc
import weakref

from contactplan.app.release import _QT_KEEP, release_later, wait_idle
from contactplan.plan.rules import Finding


def test_what_only_the_hand_over_holds_is_freed_and_shared_records_stay_whole():
    found = [Finding("station-busy", "error", [f"B{i}"], float(i), float(i + 1), f"message {i}", [f"fix {i}"])
             for i in range(2000)]
    kept = found[7]  # still held here: must come through untouched
    probe = _Probe()
    found.append(probe)
    watch = weakref.ref(probe)
    del probe
    by_subject = {f.subjects[0]: [f] for f in found[:-1]}
    release_later(found, by_subject)
    del found, by_subject
    assert wait_idle(120.0)
    gc.collect()
    assert watch() is None  # freed by the background thread
    assert kept.subjects == ["B7"] and kept.message == "message 7" and kept.fix == ["fix 7"]


def test_qt_objects_are_given_back_to_the_calling_thread():
    from PySide6.QtCore import QObject

    holder = [QObject()]
    release_later(holder)
    del holder
    assert wait_idle(120.0)
    assert len(_QT_KEEP) == 1  # not destroyed in the background thread
    release_later()  # the next hand-over, in this thread, lets go of it
    assert not _QT_KEEP


class _Probe:
    pass
