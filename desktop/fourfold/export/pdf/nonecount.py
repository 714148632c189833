"""Guard against a reference-count fault of the Qt bindings on CPython 3.11.

With PySide6 6.12 on CPython 3.11, every call of a Qt method that returns nothing (``setPen``,
``setLineWidth``, ``fillRect``…) gives back ``None`` without taking a reference to it, so each
call lowers ``None``'s reference count by one. A few tens of thousands of such calls (a long
report, a long session in the window) bring the count to zero and CPython aborts with
"Fatal Python error: none_dealloc". CPython 3.12 made ``None`` immortal (PEP 683), so the fault
is harmless there. :func:`keep_none_alive` detects the fault and, only when it is present,
raises ``None``'s count once per process by 2⁴⁰, making ``None`` effectively immortal as on 3.12.

References
----------
Shannon, M. & Snow, E. (2022). PEP 683 – Immortal Objects, Using a Fixed Refcount.
https://peps.python.org/pep-0683/
"""

from __future__ import annotations

import ctypes
import sys

HEADROOM = 1 << 40


def keep_none_alive() -> bool:
    """Make ``None`` effectively immortal when the Qt bindings leak references to it.

    Returns
    -------
    bool
        ``True`` when the fault was found (now or by an earlier call) and compensated.

    Examples
    --------
    >>> keep_none_alive() in (True, False)
    True
    >>> sys.version_info >= (3, 12) or keep_none_alive() == (sys.getrefcount(None) > HEADROOM)
    True
    """
    if sys.version_info >= (3, 12):
        return False
    if sys.getrefcount(None) > HEADROOM // 2:
        return True
    from PySide6.QtCore import QObject

    probe = QObject()
    before = sys.getrefcount(None)
    for _ in range(8):
        probe.setObjectName("probe")
    if sys.getrefcount(None) >= before:
        return False
    ctypes.c_ssize_t.from_address(id(None)).value += HEADROOM
    return True
