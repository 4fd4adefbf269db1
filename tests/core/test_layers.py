"""core/ must stay importable by a simulator without Qt (DESIGN.md, layers)."""

from __future__ import annotations

import pkgutil
import subprocess
import sys

import arena_studio.core


def test_core_imports_no_qt() -> None:
    names = [
        m.name for m in pkgutil.walk_packages(arena_studio.core.__path__, "arena_studio.core.")
    ]
    assert "arena_studio.core.scene.model" in names
    code = (
        "import importlib, sys\n"
        f"for name in {names!r}:\n"
        "    importlib.import_module(name)\n"
        "qt = ('PySide6', 'shiboken6', 'pyqtgraph')\n"
        "bad = [m for m in sys.modules if m.split('.')[0] in qt]\n"
        "assert not bad, bad\n"
        "print('ok', len(sys.modules))\n"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=120)
    assert out.returncode == 0, out.stderr
    assert out.stdout.startswith("ok")
