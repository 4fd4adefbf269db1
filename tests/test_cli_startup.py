"""Building the command parser must stay light: heavy libraries load only when a command runs.

Measured here (common practice, no source): scipy.optimize alone takes ~0.3 s to import, and
every `arena-studio` call builds the parser first, so an eager import slows every command.
"""

from __future__ import annotations

import subprocess
import sys


def test_parser_imports_no_heavy_libraries() -> None:
    code = (
        "import sys\n"
        "from arena_studio.cli import _command_parser\n"
        "_command_parser()\n"
        "heavy = ('scipy', 'shapely', 'PySide6', 'pyqtgraph', 'imageio', 'PIL')\n"
        "print(sorted({m.split('.')[0] for m in sys.modules} & set(heavy)))\n"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=60)
    assert out.returncode == 0, out.stderr
    assert out.stdout.strip() == "[]"
