"""Clip export timings, whole process to whole process, in one run.

Run: ``QT_QPA_PLATFORM=offscreen .venv/bin/pytest tests/bench/bench_clip.py -s``.

1. A 10 s, 30 fps, 1280x720 MP4 of a 2-agent demo episode with trails and overlays:
   ``arena-studio render`` versus the way a researcher would do it without this tool, a
   matplotlib FuncAnimation of the same content (rooms, walls, obstacles, landmarks with
   labels, target rings, fading trails, agent discs with heading ticks, clock, legend) saved
   through the same ffmpeg binary (imageio-ffmpeg's) with libx264 / yuv420p.
2. A 150-frame 640x360 GIF through ``arena-studio render``.
Prints times, the ratio and frames per second. Asserts nothing about speed (shared machine).
Targets from the clip issue, for reading the numbers: >= 5x faster than matplotlib, >= 100
frames/s end to end at 720p, the GIF under 2 s.
"""

from __future__ import annotations

import dataclasses
import os
import subprocess
import sys
import textwrap
import time
from pathlib import Path

import numpy as np
import pytest

REPO = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(REPO))

from arena_studio.core.tape import TapeWriter  # noqa: E402
from arena_studio.core.tape.episode import Episode  # noqa: E402
from tests.render.demo_episode import demo_episode, greenhouse  # noqa: E402

PY = sys.executable
CLI = str(Path(PY).with_name("arena-studio"))


def two_agent_tape(folder: Path) -> tuple[Path, Path]:
    """A tape holding one 16 s, 2-agent episode on the greenhouse scene, and its poses."""
    scene = greenhouse()
    scene2 = dataclasses.replace(scene, agents=scene.agents[:2])
    full = demo_episode(scene)
    ep = Episode(
        0,
        full.dt,
        full.poses[:, :2].copy(),
        team_goal=full.team_goal,
        pursued_goals=full.pursued_goals[:2],
    )
    tape = folder / "two.tape"
    with TapeWriter(tape, scene2, dt=ep.dt) as w:
        w.begin_episode(team_goal=ep.team_goal, pursued_goals=list(ep.pursued_goals))
        for t in range(ep.steps):
            w.step(ep.poses[t])
        w.end_episode()
    np.save(folder / "poses.npy", ep.poses)
    return tape, folder / "poses.npy"


MATPLOTLIB_SCRIPT = textwrap.dedent(
    """
    import sys, json
    import numpy as np
    import matplotlib
    matplotlib.use("Agg")
    import matplotlib.pyplot as plt
    from matplotlib.animation import FuncAnimation, FFMpegWriter
    from matplotlib.collections import LineCollection
    from matplotlib.patches import Circle, Polygon
    import imageio_ffmpeg

    scene = json.load(open(sys.argv[1]))
    poses = np.load(sys.argv[2])
    out = sys.argv[3]
    dt, fps, seconds = 0.05, 30, 10.0
    matplotlib.rcParams["animation.ffmpeg_path"] = imageio_ffmpeg.get_ffmpeg_exe()
    fig = plt.figure(figsize=(12.8, 7.2), dpi=100)
    ax = fig.add_axes([0.02, 0.05, 0.75, 0.9])
    ax.set_aspect("equal"); ax.axis("off")
    for room in scene["rooms"]:
        ax.add_patch(Polygon(room["outline"], closed=True, fc="#FBFAF7", ec="#3A3F47", lw=2))
    for ob in scene["obstacles"]:
        if "outline" in ob:
            ax.add_patch(Polygon(ob["outline"], closed=True, fc="#BDB6AA", ec="#6E675C"))
        else:
            c = ob["circle"]
            ax.add_patch(Circle(c["center"], c["radius"], fc="#BDB6AA", ec="#6E675C"))
    targets = {"seed-tray", "water-tank"}
    for lm in scene["landmarks"]:
        x, y = lm["position"]
        ax.plot([x], [y], marker="D" if lm["mount"] == "free" else "o", color="#0F6E6E")
        ax.text(x + 0.3, y + 0.2, lm["label"], fontsize=9)
        ring = "#D98E04" if lm["id"] in targets else "#999999"
        ax.add_patch(Circle((x, y), lm["reach_radius"], fill=False, ec=ring, lw=2, ls="--"))
    ax.set_xlim(-0.5, 22.5); ax.set_ylim(-0.5, 10.5)
    colors = ["#1A8A62", "#D9380F"]
    bands = [LineCollection([], lw=1.6) for _ in range(4 * 2)]
    for b in bands: ax.add_collection(b)
    bodies = [Circle((0, 0), 0.25, fc=c, ec="white", zorder=5) for c in colors]
    for b in bodies: ax.add_patch(b)
    ticks = [ax.plot([], [], color="black", lw=2, zorder=6)[0] for _ in colors]
    clock = fig.text(0.8, 0.9, "", fontsize=14)
    for i, c in enumerate(colors):
        fig.text(0.8, 0.8 - 0.04 * i, f"{i + 1} rover-{i + 1}", color=c, fontsize=11)
    trail = int(4.0 / dt)
    frames = int(seconds * fps)

    def update(k):
        step = min(round(k / fps / dt), len(poses) - 1)
        first = max(0, step - trail)
        edges = np.linspace(first, step, 5).round().astype(int)
        for a, c in enumerate(colors):
            x, y, h = poses[step, a]
            bodies[a].center = (x, y)
            ticks[a].set_data([x, x + 0.25 * np.cos(h)], [y, y + 0.25 * np.sin(h)])
            for b in range(4):
                seg = poses[edges[b] : edges[b + 1] + 1, a, :2]
                lc = bands[a * 4 + b]
                lc.set_segments([seg] if len(seg) > 1 else [])
                lc.set_color(c); lc.set_alpha(0.15 + 0.6 * (b + 1) / 4)
        clock.set_text(f"{step * dt:6.2f} s")
        return [*bodies, *ticks, *bands, clock]

    anim = FuncAnimation(fig, update, frames=frames, blit=False)
    anim.save(out, writer=FFMpegWriter(fps=fps, codec="libx264",
                                       extra_args=["-pix_fmt", "yuv420p"]))
    """
)


def timed(cmd: list[str]) -> float:
    env = dict(os.environ, QT_QPA_PLATFORM="offscreen", MPLBACKEND="Agg")
    t0 = time.perf_counter()
    subprocess.run(cmd, check=True, env=env, stdout=subprocess.DEVNULL)
    return time.perf_counter() - t0


@pytest.mark.bench
@pytest.mark.filterwarnings("ignore::ResourceWarning")  # imageio-ffmpeg's reader pipes
@pytest.mark.filterwarnings("ignore::pytest.PytestUnraisableExceptionWarning")
def test_mp4_against_matplotlib_and_gif(tmp_path):
    import imageio_ffmpeg

    tape, poses = two_agent_tape(tmp_path)
    scene_json = tmp_path / "scene.json"
    scene_json.write_text(__import__("json").dumps(greenhouse().to_dict()))
    script = tmp_path / "mpl_clip.py"
    script.write_text(MATPLOTLIB_SCRIPT)

    ours = timed(
        [
            CLI,
            "render",
            str(tape),
            "-o",
            str(tmp_path / "ours.mp4"),
            "--end",
            "10",
            "--fps",
            "30",
            "--size",
            "720p",
            "--quiet",
        ]
    )
    theirs = timed([PY, str(script), str(scene_json), str(poses), str(tmp_path / "mpl.mp4")])
    gif = timed(
        [
            CLI,
            "render",
            str(tape),
            "-o",
            str(tmp_path / "ours.gif"),
            "--end",
            "10",
            "--fps",
            "15",
            "--size",
            "640x360",
            "--quiet",
        ]
    )
    frames = sum(1 for _ in imageio_ffmpeg.read_frames(str(tmp_path / "ours.mp4"))) - 1
    print(f"\n10 s 30 fps 1280x720 MP4, 2 agents, trails and overlays ({frames} frames)")
    print(f"  arena-studio render   {ours:6.2f} s   {300 / ours:6.1f} frames/s end to end")
    print(f"  matplotlib animation  {theirs:6.2f} s")
    print(f"  ratio                 {theirs / ours:6.1f}x faster")
    print(f"150-frame 640x360 GIF  {gif:6.2f} s")
