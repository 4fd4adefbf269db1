"""Frame renderer timings: a new step rendered to a 1280x720 QImage, 200-step trails.

Run: ``QT_QPA_PLATFORM=offscreen .venv/bin/pytest tests/bench/bench_frame.py -s``.
Prints medians (ms) for 2, 64 and 256 agents, each against a plain QPainter drawing of the
same content measured in the same run (one drawPolyline per agent for the trails, a disc and a
heading line per agent, over the same cached scene image). Asserts nothing about speed.
It also saves frames at several moments, light and dark, to look at
(``$ARENA_BENCH_OUT`` or /tmp/arena_bench_frames).
"""

from __future__ import annotations

import math
import os
import statistics
import time
from pathlib import Path

import numpy as np
import pytest
from PySide6.QtCore import QPointF
from PySide6.QtGui import QImage, QPainter, QPen, QPolygonF

from arena_studio.core.scene.model import Agent, Landmark, Room, Scene, Start
from arena_studio.core.tape.episode import Episode
from arena_studio.render.episode_painter import (
    MAX_TRAIL_POINTS,
    THIN_TRAIL_POINTS,
    FrameOptions,
)
from arena_studio.render.frame import FrameRenderer
from arena_studio.render.theme import load_theme

W, H = 1280, 720
DT = 0.1
TRAIL = 200


def hall(agents: int) -> Scene:
    return Scene(
        name=f"hall {agents}",
        rooms=(Room("hall", ((0, 0), (40, 0), (40, 24), (0, 24))),),
        landmarks=tuple(Landmark(f"l{i}", f"L{i}", (4 + 8 * i, 20.0), 0.6) for i in range(5)),
        agents=tuple(
            Agent(f"a{i}", 0.25, 1.0, 2.0, Start(pose=(1 + i % 30, 1 + i // 30, 0)))
            for i in range(agents)
        ),
    )


def walk(agents: int, steps: int = 600, seed: int = 5) -> Episode:
    rng = np.random.default_rng(seed)
    heading = np.cumsum(rng.normal(0, 0.15, (steps, agents)), axis=0)
    xy = np.empty((steps, agents, 2))
    xy[0] = rng.uniform([2, 2], [38, 22], (agents, 2))
    xy[1:] = xy[0] + np.cumsum(0.08 * np.stack([np.cos(heading), np.sin(heading)], -1)[1:], 0)
    xy[..., 0] = 2 + np.abs((xy[..., 0] - 2) % 72 - 36)
    xy[..., 1] = 2 + np.abs((xy[..., 1] - 2) % 40 - 20)
    goal = np.array([1, 1, 0, 0, 0], np.uint8)
    return Episode(
        0,
        DT,
        np.concatenate([xy, heading[..., None]], -1),
        team_goal=goal,
        pursued_goals=tuple(goal.copy() for _ in range(agents)),
    )


def median_ms(fn, steps: list[int]) -> float:
    fn(steps[0])
    samples = []
    for s in steps:
        t0 = time.perf_counter()
        fn(s)
        samples.append((time.perf_counter() - t0) * 1000)
    return statistics.median(samples)


def plain_painter(renderer: FrameRenderer, episode: Episode):
    """Hand-written QPainter: the same trails (same pen rule: hairlines for crowds, every k-th
    step for very long windows) as one drawPolyline per agent, a disc and a heading line per
    agent, over the same cached scene image."""
    theme = load_theme("light")
    view = renderer.layout.view
    static = renderer._static_layer(episode)
    image = QImage(W, H, QImage.Format.Format_RGB32)
    px = view.map_array(episode.poses[..., :2])
    radius = 0.25 * view.scale

    def draw(step: int) -> None:
        p = QPainter(image)
        p.setRenderHint(QPainter.RenderHint.Antialiasing, True)
        p.drawImage(0, 0, static)
        first = max(0, step - TRAIL)
        total = (step - first + 1) * episode.agent_count
        stride = max(1, math.ceil(total / MAX_TRAIL_POINTS))
        thin = total > THIN_TRAIL_POINTS
        for a in range(episode.agent_count):
            pen = QPen(theme.agent_color(a, 0.6), 1.0 if thin else 1.6)
            pen.setCosmetic(thin)
            p.setPen(pen)
            pts = px[first : step + 1 : stride, a]
            p.drawPolyline(QPolygonF([QPointF(x, y) for x, y in pts]))
        for a in range(episode.agent_count):
            x, y = px[step, a]
            h = episode.poses[step, a, 2]
            p.setPen(QPen(theme.qcolor("background"), 1.0))
            p.setBrush(theme.agent_color(a))
            p.drawEllipse(QPointF(x, y), radius, radius)
            p.setPen(QPen(theme.qcolor("text"), 1.5))
            p.drawLine(QPointF(x, y), QPointF(x + radius * math.cos(h), y - radius * math.sin(h)))
        p.end()

    return draw


@pytest.mark.bench
def test_frame_update_against_plain_qpainter(qapp):
    rng = np.random.default_rng(0)
    print("\nframe update at 1280x720, 200-step trails (median of 60 random steps)")
    print(f"{'agents':>7} {'ours ms':>9} {'plain ms':>9} {'ratio':>7}")
    for agents in (2, 64, 256):
        scene, ep = hall(agents), walk(agents)
        opts = FrameOptions(trail_seconds=TRAIL * DT, pursued=False, legend=True)
        renderer = FrameRenderer(scene, (W, H), opts)
        steps = sorted(rng.integers(TRAIL, ep.steps, 60).tolist())
        ours = median_ms(lambda s, r=renderer, e=ep: r.render(e, s), steps)
        plain = median_ms(plain_painter(renderer, ep), steps)
        print(f"{agents:>7} {ours:>9.2f} {plain:>9.2f} {ours / plain:>7.2f}")


@pytest.mark.bench
def test_save_frames_to_look_at(qapp):
    import sys

    sys.path.insert(0, str(Path(__file__).resolve().parents[2]))
    from tests.render.demo_episode import demo_episode, greenhouse

    out = Path(os.environ.get("ARENA_BENCH_OUT", "/tmp/arena_bench_frames"))
    out.mkdir(parents=True, exist_ok=True)
    scene = greenhouse()
    ep = demo_episode(scene)
    for theme in ("light", "dark"):
        r = FrameRenderer(
            scene, (W, H), FrameOptions(theme=theme, par_paths=True, title="Greenhouse demo")
        )
        for t in (0.0, 3.0, 8.5, 16.0):
            r.render(ep, ep.step_at(t)).save(str(out / f"greenhouse_{theme}_{t:04.1f}s.png"))
    crowd = FrameRenderer(hall(64), (W, H), FrameOptions(trail_seconds=20.0, theme="dark"))
    crowd.render(walk(64), 400).save(str(out / "hall_64_dark.png"))
    print(f"\nframes saved in {out}")
