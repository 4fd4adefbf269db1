"""Replay viewer timings, each against a plain QPainter drawing of the same content.

Run with ``make bench``, or one file:
``QT_QPA_PLATFORM=offscreen .venv/bin/pytest tests/bench/bench_replay.py -s``.
Prints medians and ratios measured in this one run; asserts nothing about speed (the machine
is shared and noisy). Targets from the replay issue, for reading the numbers:

- frame update (new step, render 1280x720 offscreen), 200-step trails: 2 agents < 1.5 ms,
  64 agents < 5 ms, 256 agents < 12 ms;
- seek to a random time in a 100,000-step episode: < 2 ms;
- open a 2,000-episode tape and show the episode list: < 1 s.

"viewer" = the replay canvas (SceneCanvas + episode layer through the shared frame painter),
rendered with QWidget.render into a QImage, after the idle time in which the viewer pre-draws
the episode's trail blocks (render.trail_blocks); "before any trail block is drawn" = the same
with the blocks dropped before each frame (a jump with no idle time first, the worst case);
"painter" = paint_episode_frame alone on a QImage
over a cached scene image (what clip export does); "plain" = hand-written QPainter calls that
draw the same agents, headings and 200-step trails with one drawPolyline per agent.
"""

from __future__ import annotations

import statistics
import time
from pathlib import Path

import numpy as np
import pytest
from PySide6.QtCore import QPointF, QRectF, Qt
from PySide6.QtGui import QColor, QImage, QPainter, QPen, QPolygonF
from PySide6.QtWidgets import QApplication

from arena_studio.core.scene.model import Agent, GoalSpec, Landmark, Room, Scene, Start
from arena_studio.core.tape.episode import Episode

W, H = 1280, 720
TRAIL_STEPS = 200
DT = 0.1


def hall(agents: int) -> Scene:
    side = 40.0
    return Scene(
        name=f"bench hall {agents}",
        rooms=(Room("hall", ((0, 0), (side, 0), (side, side * 0.6), (0, side * 0.6))),),
        landmarks=tuple(
            Landmark(f"lm{i}", f"L{i}", (4 + 8 * i, 20.0), 0.6, "free") for i in range(4)
        ),
        agents=tuple(
            Agent(f"a{i}", 0.25, 1.0, 2.0, Start(pose=(1 + (i % 30), 1 + (i // 30), 0)))
            for i in range(agents)
        ),
        goals=GoalSpec(families=(1, 2)),
    )


def random_walk(agents: int, steps: int, seed: int = 3) -> Episode:
    rng = np.random.default_rng(seed)
    heading = np.cumsum(rng.normal(0, 0.15, (steps, agents)), axis=0)
    xy = np.empty((steps, agents, 2))
    xy[0] = rng.uniform([2, 2], [38, 22], (agents, 2))
    step = 0.08 * np.stack([np.cos(heading), np.sin(heading)], -1)
    xy[1:] = xy[0] + np.cumsum(step[1:], axis=0)
    xy[..., 0] = 2 + np.abs((xy[..., 0] - 2) % 72 - 36)  # fold into the hall
    xy[..., 1] = 2 + np.abs((xy[..., 1] - 2) % 40 - 20)
    poses = np.concatenate([xy, heading[..., None]], axis=-1)
    goal = np.array([1, 1, 0, 0], dtype=np.uint8)
    return Episode(
        index=0,
        dt=DT,
        poses=poses,
        team_goal=goal,
        pursued_goals=tuple(goal.copy() for _ in range(agents)),
    )


def median_ms(fn, repeat: int) -> float:
    fn()  # warm caches
    samples = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        samples.append(time.perf_counter() - t0)
    return statistics.median(samples) * 1e3


def plain_frame(image: QImage, scene: Scene, ep: Episode, step: int, view, colors) -> None:
    """The baseline: agents, heading ticks and trails with straightforward QPainter calls."""
    p = QPainter(image)
    p.setRenderHint(QPainter.RenderHint.Antialiasing)
    p.fillRect(image.rect(), QColor("#ECEAE4"))
    minx, miny = view.to_px(0, 0).x(), view.to_px(0, 0).y()
    room = scene.rooms[0].outline
    p.setPen(QPen(QColor("#3A3F47"), 2))
    p.drawPolygon(QPolygonF([view.to_px(x, y) for x, y in room]))
    t0 = max(step - TRAIL_STEPS, 0)
    px = view.map_array(ep.poses[t0 : step + 1, :, :2])
    for a in range(ep.agent_count):
        color = colors[a % len(colors)]
        p.setPen(QPen(color, 1.5))
        p.drawPolyline(QPolygonF([QPointF(x, y) for x, y in px[:, a]]))
    r = view.length_px(0.25)
    for a in range(ep.agent_count):
        x, y = px[-1, a]
        h = ep.poses[step, a, 2]
        p.setPen(QPen(QColor("#111111"), 1))
        p.setBrush(colors[a % len(colors)])
        p.drawEllipse(QPointF(x, y), r, r)
        p.drawLine(QPointF(x, y), QPointF(x + r * np.cos(h), y - r * np.sin(h)))
    del minx, miny
    p.end()


@pytest.fixture(scope="module")
def app():
    return QApplication.instance() or QApplication([])


@pytest.mark.parametrize("agents", [2, 64, 256])
def test_bench_frame_update(app, agents):
    from arena_studio.app.replay.prepared import prepare_episode
    from arena_studio.app.replay.replay_canvas import ReplayCanvas
    from arena_studio.render.episode_cache import episode_cache
    from arena_studio.render.episode_painter import (
        FrameOptions,
        paint_episode_frame,
        prefill_frame,
    )
    from arena_studio.render.scene_painter import paint_scene
    from arena_studio.render.theme import load_theme
    from arena_studio.render.view import ViewTransform

    theme = load_theme("light")
    scene = hall(agents)
    ep = random_walk(agents, 2000)
    options = FrameOptions(trail_seconds=TRAIL_STEPS * DT, legend=False)
    t0 = time.perf_counter()
    prepared = prepare_episode(scene, ep)
    episode_cache(scene, ep)
    prep_ms = (time.perf_counter() - t0) * 1e3
    rng = np.random.default_rng(1)
    steps = iter(rng.integers(TRAIL_STEPS, ep.steps, 10_000))

    canvas = ReplayCanvas(theme)
    canvas.resize(W, H)
    canvas.show_legend = False
    canvas.show()
    canvas.set_episode(scene, prepared)
    canvas.set_options(options)
    canvas.fit_scene()
    QApplication.processEvents()
    image = QImage(W, H, QImage.Format.Format_RGB32)

    def viewer() -> None:
        canvas.set_step(int(next(steps)))
        canvas.viewport().render(image)

    def viewer_unprepared() -> None:
        cache.trail_blocks.clear()  # as on a jump before any idle time: no block drawn yet
        viewer()

    cache = episode_cache(scene, ep)
    viewer()  # the first paint starts the idle-time trail blocks (app.replay.trail_prefill)
    deadline = time.perf_counter() + 5.0
    while canvas.trail_prefill.busy and time.perf_counter() < deadline:
        QApplication.processEvents()

    view = ViewTransform.fit_scene(scene, (0, 0, W, H))
    static = QImage(W, H, QImage.Format.Format_RGB32)
    sp = QPainter(static)
    paint_scene(sp, scene, view, theme)
    sp.end()
    out = QImage(W, H, QImage.Format.Format_RGB32)

    while prefill_frame(scene, ep, TRAIL_STEPS, view, theme, options, 64):
        pass  # what the viewer does while idle (a clip's frames draw blocks as they go)

    def painter_only() -> None:
        p = QPainter(out)
        p.drawImage(0, 0, static)
        paint_episode_frame(p, scene, ep, int(next(steps)), view, theme, options)
        p.end()

    colors = [theme.agent_color(i) for i in range(len(theme.identity))]

    def plain() -> None:
        plain_frame(out, scene, ep, int(next(steps)), view, colors)

    repeat = 60 if agents < 100 else 30
    v, pa, pl = median_ms(viewer, repeat), median_ms(painter_only, repeat), median_ms(plain, repeat)
    cold = median_ms(viewer_unprepared, repeat)
    canvas.close()
    print(
        f"\nframe update, {agents:3d} agents, {TRAIL_STEPS}-step trails, {W}x{H}: "
        f"viewer {v:6.2f} ms, painter {pa:6.2f} ms, plain QPainter {pl:6.2f} ms; "
        f"viewer/plain {v / pl:4.2f}x, painter/plain {pa / pl:4.2f}x; "
        f"viewer before any trail block is drawn {cold:6.2f} ms ({cold / pl:4.2f}x) "
        f"(one-off prepare {prep_ms:.0f} ms)"
    )


def test_bench_seek_long_episode(app):
    from arena_studio.app.replay.prepared import prepare_episode
    from arena_studio.app.replay.replay_canvas import ReplayCanvas
    from arena_studio.app.replay.timeline import TimelineBar
    from arena_studio.app.replay.transport import PlaybackClock
    from arena_studio.render.episode_cache import episode_cache
    from arena_studio.render.episode_painter import FrameOptions
    from arena_studio.render.theme import load_theme
    from arena_studio.render.view import ViewTransform

    theme = load_theme("light")
    agents, steps_n = 4, 100_000
    scene = hall(agents)
    ep = random_walk(agents, steps_n)
    t0 = time.perf_counter()
    prepared = prepare_episode(scene, ep)
    episode_cache(scene, ep)
    prep_s = time.perf_counter() - t0
    clock = PlaybackClock()
    clock.set_episode(ep.steps, ep.dt, range(0, steps_n, 997))
    canvas = ReplayCanvas(theme)
    canvas.resize(W, H)
    canvas.show_legend = False
    canvas.set_episode(scene, prepared)
    canvas.set_options(FrameOptions(trail_seconds=TRAIL_STEPS * DT))
    bar = TimelineBar(clock, theme)
    bar.resize(W, 60)
    clock.stepChanged.connect(canvas.set_step)
    canvas.show()
    bar.show()
    canvas.fit_scene()
    QApplication.processEvents()
    rng = np.random.default_rng(2)
    targets = iter(rng.uniform(0, ep.duration, 10_000))
    image = QImage(W, H, QImage.Format.Format_RGB32)

    def seek_only() -> None:
        clock.seek_time(float(next(targets)))

    def seek_and_draw() -> None:
        clock.seek_time(float(next(targets)))
        canvas.viewport().render(image)

    view = ViewTransform.fit_scene(scene, (0, 0, W, H))
    colors = [theme.agent_color(i) for i in range(agents)]

    def plain() -> None:
        step = ep.step_at(float(next(targets)))
        plain_frame(image, scene, ep, step, view, colors)

    s, sd, pl = median_ms(seek_only, 200), median_ms(seek_and_draw, 60), median_ms(plain, 60)
    canvas.close()
    bar.close()
    print(
        f"\nseek in a {steps_n}-step, {agents}-agent episode: seek {s:6.3f} ms, "
        f"seek + frame {sd:6.2f} ms, plain QPainter frame {pl:6.2f} ms; "
        f"(seek + frame)/plain {sd / pl:4.2f}x (one-off prepare {prep_s:.2f} s)"
    )


def test_bench_open_large_tape(app, tmp_path_factory):
    from arena_studio.app.replay.replay_window import ReplayWindow
    from arena_studio.core.tape import TapeWriter, open_tape

    path = Path(tmp_path_factory.mktemp("tape")) / "big.tape"
    scene = hall(4)
    rng = np.random.default_rng(5)
    t0 = time.perf_counter()
    with TapeWriter(path, scene, dt=DT) as w:
        for i in range(2000):
            ep = random_walk(4, 100, seed=i)
            goal = [0, 0, 0, 0]
            for k in rng.choice(4, 2, replace=False):
                goal[k] = 1
            w.begin_episode(team_goal=goal, pursued_goals=[goal] * 4)
            w.steps(ep.poses)
            w.end_episode()
    write_s = time.perf_counter() - t0

    window = ReplayWindow("light")
    window.resize(1280, 800)
    window.show()
    QApplication.processEvents()

    t0 = time.perf_counter()
    window.open_tape(path)
    window.episode_list.table.viewport().repaint()
    QApplication.processEvents()
    shown = window.episode_list.model.rowCount()
    open_ms = (time.perf_counter() - t0) * 1e3

    t0 = time.perf_counter()
    window.wait_loaded()
    first_ms = (time.perf_counter() - t0) * 1e3
    t0 = time.perf_counter()
    window.session.wait_summaries(600_000)
    QApplication.processEvents()
    fill_s = time.perf_counter() - t0

    # baseline: read the same tape header and index, and draw the same visible rows of text
    rows_visible = window.episode_list.table.height() // 22 + 1
    image = QImage(window.episode_list.table.size(), QImage.Format.Format_RGB32)

    def plain() -> None:
        tape = open_tape(path)
        p = QPainter(image)
        p.fillRect(image.rect(), Qt.GlobalColor.white)
        for r in range(min(rows_visible, len(tape))):
            p.drawText(QRectF(4, r * 22, 400, 22), f"{r}   …")
        p.end()

    pl = median_ms(plain, 20)
    window.close()
    print(
        f"\nopen a 2,000-episode tape and show the list: {open_ms:6.1f} ms ({shown} rows); "
        f"plain open + QPainter rows {pl:6.2f} ms; ratio {open_ms / pl:5.1f}x. "
        f"First episode on screen after {first_ms:.0f} ms more; metrics for all rows filled "
        f"in the background in {fill_s:.1f} s (tape written in {write_s:.1f} s)"
    )
