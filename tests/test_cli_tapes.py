"""`arena-studio rollout`, `stats` and `import` as a user runs them: outputs and exit codes."""

from __future__ import annotations

import json
from pathlib import Path

import jsonschema

from arena_studio.cli import main

SCENE = str(Path(__file__).resolve().parent.parent / "scenes" / "greenhouse.scene.json")

# the documented shape of `stats --json` (checked with jsonschema, draft 2020-12)
STATS_SCHEMA = {
    "type": "object",
    "required": ["summary", "episodes"],
    "properties": {
        "summary": {
            "type": "object",
            "required": ["episodes", "success_rate", "alignment_rate", "by_kind", "by_goal"],
        },
        "episodes": {
            "type": "array",
            "items": {
                "type": "object",
                "required": ["index", "success", "time_to_success", "aligned", "diagnosis"],
            },
        },
    },
}


def test_rollout_then_stats(tmp_path: Path, capsys) -> None:
    out = tmp_path / "g.tape"
    args = ["rollout", SCENE, "-o", str(out), "--episodes", "4", "--seed", "1", "--goals", "shared"]
    assert main(args) == 0
    assert out.exists() and not (tmp_path / "g.tape.partial").exists()
    capsys.readouterr()
    assert main(["stats", str(out), "--json"]) == 0
    doc = json.loads(capsys.readouterr().out)
    jsonschema.Draft202012Validator(STATS_SCHEMA).validate(doc)
    assert doc["summary"]["episodes"] == 4 and len(doc["episodes"]) == 4
    assert main(["stats", str(out), "--csv", "--episode", "1"]) == 0
    lines = capsys.readouterr().out.strip().splitlines()
    assert len(lines) == 2 and lines[1].startswith("1,")
    assert main(["stats", str(out)]) == 0
    assert "4 episode(s)" in capsys.readouterr().out
    assert main(["stats", str(out), "--json", "--episode", "0"]) == 0
    one = json.loads(capsys.readouterr().out)["episodes"][0]
    kinds = {e["kind"] for e in one["events"]}
    assert one["success"] and {"reached", "success", "role"} <= kinds


def test_stats_truncated_and_unreadable(tmp_path: Path, capsys) -> None:
    out = tmp_path / "g.tape"
    assert main(["rollout", SCENE, "-o", str(out), "--episodes", "3", "--quiet"]) == 0
    data = out.read_bytes()
    cut = tmp_path / "cut.tape"
    cut.write_bytes(data[: len(data) * 2 // 3])
    capsys.readouterr()
    assert main(["stats", str(cut), "--json"]) == 0
    captured = capsys.readouterr()
    assert "warning" in captured.err and "Recovered" in captured.err
    assert json.loads(captured.out)["summary"]["truncated"] is True
    junk = tmp_path / "junk.tape"
    junk.write_bytes(b"hello world")
    assert main(["stats", str(junk)]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "not an arena-studio tape" in err
    assert main(["stats", str(tmp_path / "missing.tape")]) == 2
    assert main(["stats", str(out), "--episode", "9"]) == 2


def test_import_csv_and_bad_arguments(tmp_path: Path, capsys) -> None:
    src = tmp_path / "in.csv"
    src.write_text(
        "episode,step,agent,x,y,heading\n"
        + "".join(f"0,{s},rover-{a},1,{1 + a},0\n" for s in range(3) for a in (1, 2, 3))
    )
    out = tmp_path / "o.tape"
    assert main(["import", "csv", str(src), "--scene", SCENE, "-o", str(out)]) == 0
    assert "1 episode(s)" in capsys.readouterr().out
    src.write_text("episode,step,agent,x,y,heading\n0,0,rover-1,oops,1,0\n")
    assert main(["import", "csv", str(src), "--scene", SCENE, "-o", str(tmp_path / "b.tape")]) == 2
    assert "line 2, column 'x'" in capsys.readouterr().err
    assert not (tmp_path / "b.tape").exists()
    assert main(["rollout", SCENE, "-o", str(out), "--episodes", "0"]) == 2


def test_rollout_greedy_and_par_limit_arguments(tmp_path: Path, capsys) -> None:
    out = tmp_path / "greedy.tape"
    args = ["rollout", SCENE, "-o", str(out), "--episodes", "3", "--goals", "greedy", "--quiet"]
    assert main([*args, "--par-limit", "0.8,2.0"]) == 0
    capsys.readouterr()
    assert main(["stats", str(out), "--json"]) == 0
    doc = json.loads(capsys.readouterr().out)
    assert doc["summary"]["alignment_rate"] == 1.0  # greedy agents share the team goal
    for bad in ("2", "x,1", "1.5,0.5", "0,1"):
        assert main([*args, "--par-limit", bad]) == 2
        err = capsys.readouterr().err
        assert err.count("\n") == 1 and "--par-limit" in err
