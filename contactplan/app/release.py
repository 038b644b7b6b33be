"""Large plans freed off the event loop: what the GUI thread lets go of is taken apart in a background thread.

Replacing the findings of a week with 50,000 burns (150,000 findings, each a few
objects) or opening another plan drops millions of objects at once; freeing them by
reference counting in the GUI thread is one long call (a fifth of a second and more)
that holds the event loop. :func:`release_later` hands the old containers to one
daemon thread instead, which takes them apart a few at a time: a list or dict is
emptied into the thread's own stack, a record's attributes are followed, so each
object is freed when its last reference goes, in small steps between which the GUI
thread gets the interpreter back.

Only what nobody else holds is taken apart (the reference count says so); anything
still referenced elsewhere is only let go of (and freed later by whoever drops it
last). Nothing is changed that another part of the program can see.
"""

from __future__ import annotations

import queue
import sys
import threading
import time

_QUEUE: queue.SimpleQueue = queue.SimpleQueue()
_STATE = {"thread": None, "freed": 0}
_LOCK = threading.Lock()
#: objects of these modules' classes are followed into their attributes (records, results, findings)
_OURS = ("contactplan.",)


#: Qt objects the thread found it held last: never freed there (a Qt object belongs to its thread);
#: the GUI thread lets go of them at its next hand-over
_QT_KEEP: list = []


def release_later(*objs) -> None:
    """Let go of ``objs`` here; what only they hold is freed in the background thread, bit by bit."""
    with _LOCK:
        kept = _QT_KEEP[:]
        del _QT_KEEP[:]
    del kept  # (here, in the GUI thread)
    if not objs:
        return
    objs = [o for o in objs if type(o) not in _ATOMS]
    if objs:
        _start()
        _QUEUE.put((time.monotonic(), objs))


def _start() -> None:
    with _LOCK:
        if _STATE["thread"] is None:
            t = threading.Thread(target=_reap, name="release", daemon=True)
            _STATE["thread"] = t
            t.start()


def wait_idle(timeout_s: float = 10.0) -> bool:
    """Block until everything handed over so far is freed (tests)."""
    done = threading.Event()
    _QUEUE.put(done)
    _start()
    return done.wait(timeout_s)


def _qt_base():
    try:
        from shiboken6 import Shiboken

        return Shiboken.Object
    except ImportError:  # pragma: no cover
        return ()


_QT_BASE = _qt_base()
#: freed at once wherever they go (no parts, no Qt)
_ATOMS = (str, float, int, bool, bytes, type(None))


def _followed(o) -> bool:
    mod = getattr(type(o), "__module__", "") or ""
    return mod.startswith(_OURS) and hasattr(o, "__dict__") and not isinstance(o, type)


#: the thread pauses after this many objects ... (it must not keep the GUI thread waiting for the
#: interpreter while a plan is opened and painted: it works in the background, in short bursts)
BATCH = 2000
#: ... for this long (s)
PAUSE_S = 0.001


def _take_apart(root: list) -> None:
    stack = root
    del root
    n = 0
    while stack:
        n += 1
        if n % BATCH == 0:
            time.sleep(PAUSE_S)
        o = stack.pop()
        # 2: ``o`` here and getrefcount's own argument; more means someone else still holds it
        if sys.getrefcount(o) > 2:
            continue
        kind = type(o)
        if kind in _ATOMS:
            pass
        elif kind is list:
            stack.extend(o)
            o.clear()
        elif kind is dict:
            stack.extend(o.values())
            o.clear()
        elif kind is tuple or kind is set or kind is frozenset:
            stack.extend(o)
        elif isinstance(o, _QT_BASE):
            with _LOCK:
                _QT_KEEP.append(o)  # freed by the GUI thread, not here
        elif _followed(o):
            stack.extend(vars(o).values())
        _STATE["freed"] += 1


#: what is handed over is taken apart no sooner than this (s): the views that still held parts of it
#: (tables, lane indexes) have been given their new data by then and let go of the old
SETTLE_S = 0.3


def _reap() -> None:
    while True:
        item = _QUEUE.get()
        if isinstance(item, threading.Event):
            item.set()
            continue
        t_put, item = item
        try:
            wait = t_put + SETTLE_S - time.monotonic()
            if wait > 0:
                time.sleep(wait)
            stack = item  # what the GUI thread still holds after the settling time is only let go of
            del item
            _take_apart(stack)
            del stack
        except Exception:  # pragma: no cover - freeing must never take the planner down
            pass
