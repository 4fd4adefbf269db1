"""Regression guard for the PySide6-Essentials 6.12.0 None-refcount leak.

Measured on our machines (DEVELOPERS.md): in 6.12.0 on CPython 3.11 every wrapped method that
returns nothing drops a reference to None, and the process aborts with ``none_dealloc`` after a
few thousand calls. pyproject pins ``<6.12`` for Python < 3.12; this test fails loudly if a
broken build is installed anyway.
"""

from __future__ import annotations

import sys

import pytest


@pytest.mark.skipif(sys.version_info >= (3, 12), reason="None is immortal from CPython 3.12 on")
def test_void_qt_methods_keep_none_refcount() -> None:
    from PySide6.QtGui import QPen

    pen = QPen()
    before = sys.getrefcount(None)
    for i in range(100_000):
        pen.setWidth(i % 7)  # a wrapped method returning void
    after = sys.getrefcount(None)
    assert after >= before - 10, f"None refcount fell from {before} to {after}"
