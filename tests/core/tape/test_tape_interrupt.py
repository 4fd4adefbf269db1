"""Ctrl+C during a rollout leaves nothing under the target name; the progress bar's manners."""

from __future__ import annotations

import io
from pathlib import Path

import pytest

from arena_studio.commands.progress import progress_bar
from arena_studio.core.scene.model import load_scene
from arena_studio.core.sim.rollout import run_rollout

SCENES = Path(__file__).resolve().parents[3] / "scenes"


def test_interrupt_leaves_no_half_written_tape(tmp_path: Path) -> None:
    scene = load_scene(SCENES / "greenhouse.scene.json")
    out = tmp_path / "x.tape"
    out.write_bytes(b"older tape the user keeps")

    def stop(_n: int) -> None:
        raise KeyboardInterrupt

    with pytest.raises(KeyboardInterrupt):
        run_rollout(scene, out, episodes=3, seed=0, mode="shared", advance=stop)
    assert out.read_bytes() == b"older tape the user keeps"  # untouched
    assert list(tmp_path.iterdir()) == [out]  # no .partial left behind


class _Tty(io.StringIO):
    def isatty(self) -> bool:
        return True


def test_progress_bar_only_on_a_terminal() -> None:
    # common practice, no source: progress output only on an interactive terminal
    pipe = io.StringIO()
    with progress_bar(3, "work", stream=pipe) as bar:
        bar.advance(3)
    assert pipe.getvalue() == ""
    tty = _Tty()
    with progress_bar(3, "work", stream=tty) as bar:
        bar.advance(3)
    text = tty.getvalue()
    assert "work [" in text and "3/3" in text and text.endswith("\r\033[K")
    quiet = _Tty()
    with progress_bar(3, "work", quiet=True, stream=quiet) as bar:
        bar.advance(3)
    assert quiet.getvalue() == ""
