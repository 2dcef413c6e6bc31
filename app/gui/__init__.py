"""Desktop program (PySide6 + pyqtgraph)."""
import sys


def _guard_singleton_refcounts() -> None:
    """Work around a reference-count fault of the PySide6 6.12 wheels on Python 3.11.

    Those wheels behave as if None, True and False were immortal (as they are
    from Python 3.12 on, PEP 683): calls that return them (``QLabel.setText``,
    ``Signal.emit``, ``QModelIndex.data`` and many pyqtgraph paths) give back
    a reference they never took.  Measured here: ``sys.getrefcount(None)``
    falls by hundreds per plot redraw.  After a few minutes of use the count
    reaches zero and the interpreter aborts ("Fatal Python error:
    none_dealloc" / "bool_dealloc").  We give these singletons the protection
    3.12 gives them: a reference count far out of reach.  ``ob_refcnt`` is the
    first field of every CPython object.
    """
    if sys.version_info >= (3, 12) or sys.implementation.name != "cpython":
        return
    import ctypes
    for obj in (None, True, False, NotImplemented, Ellipsis):
        ctypes.c_ssize_t.from_address(id(obj)).value += 1 << 40


_guard_singleton_refcounts()
