"""The desktop planner: the only package that imports Qt."""

import sys


def _pin_bools() -> None:
    """Make True and False immortal on Python < 3.12, as 3.12+ does by itself.

    Some shiboken6 releases (seen with 6.12.0 on Python 3.11) drop one reference to
    ``True`` on every ``Signal.emit`` made from Python; after enough emissions the
    interpreter aborts ("bool_dealloc"). The bools are static singletons that are
    never freed anyway, so a very large reference count changes nothing else.
    """
    if sys.version_info >= (3, 12) or sys.implementation.name != "cpython":
        return
    import ctypes

    for obj in (True, False):
        ref = ctypes.c_ssize_t.from_address(id(obj))  # ob_refcnt is the first field of every object
        if ref.value < (1 << 40):
            ref.value += 1 << 40


_pin_bools()
