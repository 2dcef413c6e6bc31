"""The Qt binding in use must keep Python's reference counts intact.

PySide6-Essentials 6.12.0 for CPython 3.11 gives back references to None on
calls such as QLabel.setText that it never took; the interpreter then aborts
with "none_dealloc" after a few minutes of use.  pyproject.toml pins below 6.12;
this test catches a binding with the fault before a user does.
"""
import sys


def test_qt_calls_do_not_leak_references_to_none(qapp):
    from PySide6.QtWidgets import QLabel

    label = QLabel()
    before = sys.getrefcount(None)
    for i in range(2000):
        label.setText(str(i))
    after = sys.getrefcount(None)
    assert before - after < 100, f"reference count of None fell by {before - after}"
