"""A non-editable install ships resources/ and scenes/ (mapped into arena_studio/_bundled).

Builds the wheel offline with the project's own build backend (hatchling, from the test
extras), installs it into a throwaway venv with pip, and runs the installed command from a
folder outside the checkout. The wheel layout is read with the standard zipfile module
(a wheel is a zip archive, PEP 427).
"""

from __future__ import annotations

import os
import subprocess
import sys
import sysconfig
import zipfile
from pathlib import Path

import pytest

REPO = Path(__file__).resolve().parent.parent

pytest.importorskip("hatchling", reason="the test extras bring the build backend")


def _run(args: list[str], **kw) -> subprocess.CompletedProcess[str]:
    return subprocess.run(args, capture_output=True, text=True, timeout=300, **kw)


@pytest.fixture(scope="module")
def wheel(tmp_path_factory: pytest.TempPathFactory) -> Path:
    out = tmp_path_factory.mktemp("wheel")
    proc = _run(
        [
            sys.executable,
            "-m",
            "pip",
            "wheel",
            "--no-deps",
            "--no-build-isolation",
            "--no-index",
            "-q",
            "-w",
            str(out),
            str(REPO),
        ]
    )
    assert proc.returncode == 0, proc.stderr
    (whl,) = out.glob("arena_studio-*.whl")
    return whl


def test_wheel_contains_bundled_folders(wheel: Path) -> None:
    names = set(zipfile.ZipFile(wheel).namelist())
    assert "arena_studio/_bundled/resources/schema/scene.schema.json" in names
    for scene in sorted((REPO / "scenes").glob("*.scene.json")):
        assert f"arena_studio/_bundled/scenes/{scene.name}" in names
    assert "arena_studio/core/checks/checker.py" in names
    assert not any(n.startswith("tests/") for n in names)


def test_installed_wheel_finds_resources_and_checks_a_demo(wheel: Path, tmp_path: Path) -> None:
    venv = tmp_path / "venv"
    assert _run([sys.executable, "-m", "venv", "--without-pip", str(venv)]).returncode == 0
    py = venv / "bin" / "python"
    proc = _run(
        [
            sys.executable,
            "-m",
            "pip",
            "--python",
            str(py),
            "install",
            "--no-deps",
            "--no-index",
            "-q",
            str(wheel),
        ]
    )
    assert proc.returncode == 0, proc.stderr
    # Dependencies come from the test environment's site-packages (not its arena_studio,
    # which is an editable path hook that PYTHONPATH does not activate).
    env = {
        **os.environ,
        "PYTHONPATH": sysconfig.get_paths()["purelib"],
        "QT_QPA_PLATFORM": "offscreen",
    }
    code = (
        "import arena_studio, sys\n"
        "from arena_studio.core.resources import resource_path, demo_path\n"
        "print(arena_studio.__file__)\n"
        "print(resource_path('schema', 'scene.schema.json'))\n"
        "print(demo_path('greenhouse.scene.json'))\n"
    )
    proc = _run([str(py), "-c", code], env=env, cwd=tmp_path)
    assert proc.returncode == 0, proc.stderr
    pkg, schema, demo = proc.stdout.split()
    assert pkg.startswith(str(venv))
    assert "_bundled" in schema and Path(schema).is_file()
    assert "_bundled" in demo and Path(demo).is_file()
    proc = _run([str(venv / "bin" / "arena-studio"), "check", demo], env=env, cwd=tmp_path)
    assert proc.returncode == 0, proc.stderr
    assert "(no errors)" in proc.stdout
