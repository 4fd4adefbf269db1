"""Messages: capped, naming the file and the reason, naming what a path is truthfully.

Exit codes follow the CLI rule in arena_studio/cli.py (2: unreadable or refused); file kinds
are those of POSIX stat(2) (S_ISFIFO, S_ISCHR, S_ISDIR), read through Python's stat module.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

import pytest

from arena_studio.cli import main
from arena_studio.commands.common import MAX_MESSAGE
from tests.conftest import REPO, SCENES

GREENHOUSE = SCENES / "greenhouse.scene.json"


def _err_lines(capsys) -> list[str]:
    return capsys.readouterr().err.splitlines()


def test_huge_value_makes_a_short_line(tmp_path: Path, capsys) -> None:
    doc = json.loads(GREENHOUSE.read_text(encoding="utf-8"))
    doc["goals"]["rule"] = "x" * 8_000_000  # a long hostile value (measured with 63 MB)
    path = tmp_path / "long.scene.json"
    path.write_text(json.dumps(doc), encoding="utf-8")
    assert main(["check", str(path)]) == 2
    (line,) = _err_lines(capsys)
    assert len(line) < MAX_MESSAGE + 100
    assert "goals.rule" in line and "8000000 characters" in line and str(path) in line


def test_every_error_line_is_capped(capsys) -> None:
    from arena_studio.commands.common import error_line

    error_line("y" * 50_000 + "\nsecond line")
    (line,) = _err_lines(capsys)
    assert len(line) < MAX_MESSAGE + 100 and "characters in all" in line


@pytest.mark.parametrize(
    ("make", "kind"),
    [
        (lambda p: (os.mkfifo(p), p)[1], "a pipe"),
        (lambda p: Path("/dev/null"), "a device"),
        (lambda p: (p.mkdir(), p)[1], "a folder"),
        (lambda p: p, "no such file"),
    ],
)
def test_input_path_kinds_are_named(make, kind: str, tmp_path: Path, capsys) -> None:
    src = make(tmp_path / "input")
    out = str(tmp_path / "o.tape")
    for args in (
        ["import", "csv", str(src), "--scene", str(GREENHOUSE), "-o", out],
        ["check", str(src)],
        ["stats", str(src)],
        ["rollout", str(src), "-o", out],
    ):
        assert main(args) == 2
        (line,) = _err_lines(capsys)
        assert f"{src}: " in line and kind in line, (args, line)


def test_bad_seed_blames_the_option_not_the_scene(tmp_path: Path, capsys) -> None:
    out = str(tmp_path / "r.tape")
    assert main(["rollout", str(GREENHOUSE), "-o", out, "--seed", "-1"]) == 2
    (line,) = _err_lines(capsys)
    assert "--seed" in line and str(GREENHOUSE) not in line


def test_screenshot_of_damaged_episode_names_file_and_reason(tmp_path: Path) -> None:
    from arena_studio.core.tape import open_tape
    from tests.core.tape_helpers import box_scene, write_small_tape

    tape = tmp_path / "damaged.tape"
    write_small_tape(tape, box_scene(), episodes=2, steps=5)
    begin = open_tape(tape)._entries[0].begin
    data = bytearray(tape.read_bytes())
    data[begin + 200] ^= 0xFF  # inside episode 0's records: its checksum no longer matches
    tape.write_bytes(bytes(data))
    env = {**os.environ, "PYTHONPATH": str(REPO), "QT_QPA_PLATFORM": "offscreen"}
    shot = str(tmp_path / "s.png")
    proc = subprocess.run(
        [
            sys.executable,
            "-m",
            "arena_studio.cli",
            "--screenshot",
            shot,
            str(tape),
            "--episode",
            "0",
        ],
        env=env,
        capture_output=True,
        text=True,
        timeout=300,
    )
    assert proc.returncode == 2
    lines = [ln for ln in proc.stderr.splitlines() if "episode 0" in ln]
    assert len(lines) == 1
    assert str(tape) in lines[0] and "damaged" in lines[0] and "checksum" in lines[0]
