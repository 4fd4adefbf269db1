"""`arena-studio check`: exit codes, text and JSON output, one-line errors for bad input.

The JSON output is read back with the standard library's json module (RFC 8259); exit-code
conventions (0 ok, 1 problems found, 2 unusable input) follow common Unix practice, no source.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

import pytest

from arena_studio.cli import main
from arena_studio.commands import COMMANDS
from arena_studio.core.checks.checker import CODES

REPO = Path(__file__).resolve().parent.parent
BROKEN = REPO / "tests" / "data" / "broken.scene.json"
DEMOS = sorted((REPO / "scenes").glob("*.scene.json"))


def run(capsys: pytest.CaptureFixture[str], *args: str) -> tuple[int, str, str]:
    code = main(["check", *args])
    out = capsys.readouterr()
    return code, out.out, out.err


@pytest.mark.parametrize("path", DEMOS, ids=lambda p: p.name)
def test_demo_scenes_exit_zero(capsys, path: Path) -> None:
    code, out, err = run(capsys, str(path))
    assert code == 0 and err == ""
    assert out.strip().endswith("(no errors)")


def test_broken_scene_text_report(capsys) -> None:
    code, out, err = run(capsys, str(BROKEN))
    assert code == 1 and err == ""
    lines = out.strip().splitlines()
    summary = lines[-1]
    assert summary.startswith(str(BROKEN)) and "errors found" in summary
    body = lines[:-1]
    severities = [line.split()[0] for line in body]
    order = {"error": 0, "warning": 1, "info": 2}
    assert [order[s] for s in severities] == sorted(order[s] for s in severities)
    n_err = severities.count("error")
    assert f"{n_err} errors" in summary
    assert any("landmark-off-wall" in line and "'lm-off-wall'" in line for line in body)


def test_broken_scene_json_shape(capsys) -> None:
    code, out, err = run(capsys, str(BROKEN), "--json")
    assert code == 1 and err == ""
    doc = json.loads(out)
    assert list(doc) == ["findings"]
    assert doc["findings"], "broken scene must have findings"
    for f in doc["findings"]:
        assert set(f) == {"severity", "code", "message", "where"}
        assert f["severity"] in ("error", "warning", "info")
        assert f["code"] in CODES
        assert set(f["where"]) == {"id", "point", "goal"}
        p = f["where"]["point"]
        assert p is None or (len(p) == 2 and all(isinstance(v, float) for v in p))
    codes = {f["code"] for f in doc["findings"]}
    assert {"room-invalid", "landmark-unreachable", "goal-needs-more-agents"} <= codes


def test_json_for_a_clean_scene(capsys) -> None:
    code, out, _ = run(capsys, str(DEMOS[0]), "--json")
    assert code == 0 and json.loads(out) == {"findings": []}


@pytest.mark.parametrize(
    ("make", "words"),
    [
        (lambda d: d, "is a folder"),
        (lambda d: d / "missing.scene.json", "no such file"),
        (lambda d: _write(d / "bin.scene.json", os.urandom(64) + b"\xff"), "not UTF-8"),
        (lambda d: _write(d / "bin.scene.msgpack", b"\xc1\xc1\xc1"), "msgpack"),
        (lambda d: _write(d / "empty.scene.json", b""), "empty"),
        (
            lambda d: _write(d / "cut.scene.json", b'{"format": "arena-studio.scene", "ver'),
            "invalid JSON at line 1",
        ),
        (lambda d: _write(d / "notes.txt", b"hello"), "unknown scene file type"),
        (
            lambda d: _write(
                d / "old.scene.json", b'{"format": "arena-studio.scene", "version": 9}'
            ),
            "newer",
        ),
    ],
)
def test_unreadable_input_one_line_exit_2(capsys, tmp_path: Path, make, words: str) -> None:
    path = make(tmp_path)
    for extra in ((), ("--json",)):
        code, out, err = run(capsys, str(path), *extra)
        assert code == 2
        assert out == ""
        assert len(err.strip().splitlines()) == 1 and words in err
        assert err.startswith("arena-studio: error: ") and "Traceback" not in err


def _write(path: Path, data: bytes) -> Path:
    path.write_bytes(data)
    return path


def test_bad_arguments_exit_2(capsys) -> None:
    assert main(["check"]) == 2
    assert "required" in capsys.readouterr().err
    assert main(["check", str(BROKEN), "--frobnicate"]) == 2
    assert "unrecognized arguments" in capsys.readouterr().err


def test_help_lists_every_command(capsys) -> None:
    assert main(["--help"]) == 0
    out = capsys.readouterr().out
    assert "check" in COMMANDS
    for name in ("app", *COMMANDS):
        assert f"    {name} " in out or f"    {name}\n" in out, name


def test_real_process_exit_codes_and_no_traceback(tmp_path: Path) -> None:
    env = {**os.environ, "QT_QPA_PLATFORM": "offscreen"}
    cases = [(DEMOS[0], 0), (BROKEN, 1), (tmp_path, 2)]
    for path, expected in cases:
        proc = subprocess.run(
            [sys.executable, "-m", "arena_studio", "check", str(path)],
            capture_output=True,
            text=True,
            timeout=120,
            env=env,
        )
        assert proc.returncode == expected, proc.stderr
        assert "Traceback" not in proc.stderr


def test_readme_documents_check_and_every_code() -> None:
    readme = (REPO / "README.md").read_text(encoding="utf-8")
    assert "arena-studio check SCENE [--json]" in readme
    missing = [code for code in CODES if f"`{code}`" not in readme]
    assert missing == []
