"""Work-arounds for the Qt binding in use (no Qt import here).

PySide6 6.12 on CPython 3.11 hands back ``None`` from void C++ methods (``QPainter.setPen``,
``QPen.setCosmetic`` ...) without taking a reference to it; every call therefore removes
one reference from ``None`` and a long painting session ends in "Fatal Python error:
none_dealloc" (measured: ``sys.getrefcount(None)`` falls by one per call).  ``Signal.emit``
does the same with the ``True`` it returns (measured: ``sys.getrefcount(True)`` falls by one
per emit; "bool_dealloc" after a few thousand).  From CPython 3.12 on ``None``, ``True`` and
``False`` are immortal (PEP 683) and this cannot happen.  On older CPython we give them a
reference count so large that no session can use it up.
"""
from __future__ import annotations

import sys

#: references added to None on CPython < 3.12 (2**40 void calls is far beyond any session)
_RESERVE = 1 << 40


def keep_none_alive() -> bool:
    """Make ``None`` (and ``True``, ``False``) effectively immortal on CPython < 3.12; True if
    anything was done."""
    if sys.implementation.name != "cpython" or sys.version_info >= (3, 12):
        return False
    import ctypes

    done = False
    for obj in (None, True, False):
        # PyObject starts with ob_refcnt (Py_ssize_t) in release builds of CPython
        ref = ctypes.c_ssize_t.from_address(id(obj))
        if ref.value < _RESERVE:
            ref.value += _RESERVE
            done = True
    return done
