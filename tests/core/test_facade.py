"""The public facade: every documented name resolves lazily, and the README's Python API
example runs as written."""

from __future__ import annotations

import re
import subprocess
import sys
from pathlib import Path

import arena_studio.core as core

ROOT = Path(__file__).resolve().parents[2]


def test_every_public_name_resolves_to_its_home_module() -> None:
    for name in core.__all__:
        value = getattr(core, name)
        assert value is not None, name
    assert sorted(dir(core)) == sorted(core.__all__)


def test_unknown_name_is_an_attribute_error() -> None:
    try:
        core.no_such_name  # noqa: B018
    except AttributeError as exc:
        assert "no_such_name" in str(exc)
    else:
        raise AssertionError("expected AttributeError")


def test_importing_the_facade_loads_no_numeric_library() -> None:
    code = (
        "import sys, arena_studio.core; "
        "print(sorted(m for m in ('numpy', 'shapely', 'scipy', 'msgpack') if m in sys.modules))"
    )
    out = subprocess.run(
        [sys.executable, "-c", code], capture_output=True, text=True, cwd=ROOT, timeout=60
    )
    assert out.returncode == 0, out.stderr
    assert out.stdout.strip() == "[]"


def test_readme_python_api_example_runs(tmp_path: Path, monkeypatch) -> None:
    readme = (ROOT / "README.md").read_text(encoding="utf-8")
    section = readme.split("## Python API", 1)[1]
    code = re.search(r"```python\n(.*?)```", section, re.S)
    assert code is not None
    (tmp_path / "scenes").symlink_to(ROOT / "scenes")
    monkeypatch.chdir(tmp_path)
    namespace: dict[str, object] = {}
    exec(compile(code.group(1), "README.md", "exec"), namespace)
    assert (tmp_path / "copy.scene.msgpack").is_file()
    assert namespace["errors"] == []
    assert namespace["plan"].par_time is not None
