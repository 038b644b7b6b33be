"""The desktop planner: the only package that imports Qt."""

import sys


def _pin_singletons() -> None:
    """Make True, False and None immortal on Python < 3.12, as 3.12+ does by itself.

    Some shiboken6 releases (seen with 6.12.0 on Python 3.11) drop one reference to
    ``True`` on every ``Signal.emit`` made from Python, and to ``None`` on some
    virtual calls; after enough of them the interpreter aborts ("bool_dealloc",
    "none_dealloc"). These are static singletons that are never freed anyway, so
    a very large reference count changes nothing else.
    """
    if sys.version_info >= (3, 12) or sys.implementation.name != "cpython":
        return
    import ctypes

    for obj in (True, False, None):
        ref = ctypes.c_ssize_t.from_address(id(obj))  # ob_refcnt is the first field of every object
        if ref.value < (1 << 40):
            ref.value += 1 << 40


_pin_singletons()
