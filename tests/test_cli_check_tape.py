"""`arena-studio check RUN.tape` as a user runs it: text, JSON, exit codes, README codes."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np

from arena_studio.cli import main
from arena_studio.core.scene import save_scene
from arena_studio.core.tape import TapeWriter, open_tape
from arena_studio.core.tape_checks import TAPE_CODES

REPO = Path(__file__).resolve().parent.parent
DEMO = REPO / "scenes" / "greenhouse-shared.tape"


def test_clean_demo_tape(capsys) -> None:
    assert main(["check", str(DEMO), "--quiet"]) == 0
    out = capsys.readouterr().out
    assert out.strip().endswith("0 errors, 0 warnings, 0 info (no errors)")


def test_centimetre_tape_is_an_error_with_json(tmp_path: Path, capsys) -> None:
    tape = open_tape(DEMO)
    bad = tmp_path / "cm.tape"
    with TapeWriter(bad, tape.scene, dt=tape.dt) as w:
        for ep in tape:
            w.begin_episode()
            w.steps(ep.poses * np.array([100.0, 100.0, 1.0]))
            w.end_episode()
    assert main(["check", str(bad), "--json", "--quiet"]) == 1
    doc = json.loads(capsys.readouterr().out)
    assert [f["code"] for f in doc["findings"]] == ["units-mismatch"]
    assert set(doc["findings"][0]["where"]) >= {"episode", "step", "agent"}


def test_scene_file_compared_and_unreadable_tape(tmp_path: Path, capsys) -> None:
    scene = open_tape(DEMO).scene
    other = tmp_path / "other.scene.json"
    save_scene(scene.with_changes(name="changed"), other)
    assert main(["check", str(DEMO), "--scene", str(other), "--quiet"]) == 1
    assert "scene-differs" in capsys.readouterr().out
    junk = tmp_path / "junk.tape"
    junk.write_bytes(b"not a tape at all")
    assert main(["check", str(junk)]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "junk.tape" in err


def test_readme_lists_every_tape_code() -> None:
    readme = (REPO / "README.md").read_text(encoding="utf-8")
    assert "arena-studio check RUN.tape" in readme
    assert [c for c in TAPE_CODES if f"`{c}`" not in readme] == []
