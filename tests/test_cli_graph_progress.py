"""Long planning shows progress: a bar per visibility graph on a terminal, none in a pipe.

Carriage-return bars on a terminal only, never in logs, is common practice (no source).
"""

from __future__ import annotations

import io

from arena_studio.commands.progress import graph_bar
from arena_studio.core.geometry import visibility as visibility
from arena_studio.core.geometry.regions import free_space
from arena_studio.core.resources import demo_path
from arena_studio.core.scene.model import load_scene


class _Terminal(io.StringIO):
    def isatty(self) -> bool:
        return True


def _build(monkeypatch, stream) -> None:
    monkeypatch.setattr(visibility, "PAIR_BLOCK", 40)
    scene = load_scene(demo_path("greenhouse.scene.json"))
    with graph_bar(stream=stream):
        visibility.build_visibility_graph(free_space(scene, 0.27), 0.27)


def test_a_terminal_sees_the_graph_bar_and_a_cleared_line(monkeypatch):
    out = _Terminal()
    _build(monkeypatch, out)
    text = out.getvalue()
    assert "visibility graph [" in text and text.endswith("\r\033[K")


def test_a_pipe_sees_nothing(monkeypatch):
    out = io.StringIO()
    _build(monkeypatch, out)
    assert out.getvalue() == ""
