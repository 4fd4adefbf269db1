"""The README's "From your training code" snippets run as written (in a fresh folder)."""

from __future__ import annotations

import re
from pathlib import Path

import numpy as np

from arena_studio.core.tape import open_tape

REPO = Path(__file__).resolve().parent.parent


def training_snippets() -> list[str]:
    text = (REPO / "README.md").read_text(encoding="utf-8")
    start = text.index("## From your training code")
    end = text.find("\n## ", start + 1)
    section = text[start : end if end > 0 else len(text)]
    return re.findall(r"```python\n(.*?)```", section, flags=re.S)


def test_readme_has_the_three_snippets():
    snippets = training_snippets()
    assert len(snippets) == 3
    assert "RecordParallelEnv" in snippets[0] and "RecordEnv" in snippets[1]


def test_snippets_run_as_written(tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    for k, code in enumerate(training_snippets()):
        namespace: dict = {"__name__": f"readme_snippet_{k}"}
        exec(compile(code, f"README.md snippet {k}", "exec"), namespace)
    rovers = open_tape(tmp_path / "runs" / "rovers.tape")
    assert len(rovers) == 5 and rovers.agent_ids == ("rover-1", "rover-2", "rover-3")
    assert all(ep.steps == 151 for ep in rovers)
    assert rovers.episode(0).team_goal.tolist() == [1, 0, 0, 0, 0, 0]
    solo = open_tape(tmp_path / "runs" / "solo.tape")
    assert len(solo) == 3 and solo.agent_ids == ("rover-1",)
    np.testing.assert_array_equal(solo.episode(0).poses[0, 0], [1.0, 1.0, 0.0])
    # the polars snippet printed one summed reward per episode and agent (15 rows)
    out = capsys.readouterr().out
    assert "shape: (15, 3)" in out
