"""Clip export read back with independent decoders.

Sources: imageio (v3, its ffmpeg plugin) decodes the MP4 and reports fps; Pillow decodes GIFs
and reports each frame's delay, which GIF stores in 1/100 s (GIF89a spec, Graphic Control
Extension "Delay Time"); PSNR = 10 log10(255^2 / MSE) (common practice, no source) against
the renderer's lossless frames; H.264 4:2:0 needs even frame sides (ITU-T H.264 chroma
subsampling [memory]).
"""

from __future__ import annotations

import math
import os
import stat

import numpy as np
import pytest
from PIL import Image

from arena_studio.render.clip import ClipCancelled, ClipError, ClipSpec, export_clip, schedule
from arena_studio.render.episode_painter import FrameOptions
from arena_studio.render.frame import FrameRenderer

from .demo_episode import demo_episode, greenhouse


@pytest.fixture(scope="module")
def scene():
    return greenhouse()


@pytest.fixture(scope="module")
def episode(scene):
    return demo_episode(scene, seconds=3.0)


def _rgb(qimage) -> np.ndarray:
    w, h = qimage.width(), qimage.height()
    arr = np.frombuffer(qimage.constBits(), np.uint8).reshape(h, qimage.bytesPerLine() // 4, 4)
    return arr[:, :w, [2, 1, 0]].astype(np.float64)  # bgra in memory -> rgb


def _read_mp4(path) -> tuple[dict, list[np.ndarray]]:
    """imageio-ffmpeg's reader: metadata, then every frame (count by iterating, since the
    container's frame count may read as inf)."""
    import imageio_ffmpeg

    gen = imageio_ffmpeg.read_frames(str(path), pix_fmt="rgb24")
    meta = next(gen)
    w, h = meta["size"]
    frames = [np.frombuffer(f, np.uint8).reshape(h, w, 3) for f in gen]
    return meta, frames


def psnr(a: np.ndarray, b: np.ndarray) -> float:
    mse = float(((a - b) ** 2).mean())
    return math.inf if mse == 0 else 10 * math.log10(255.0**2 / mse)


# imageio-ffmpeg's reader leaves its subprocess pipes to the garbage collector
@pytest.mark.filterwarnings("ignore::ResourceWarning")
@pytest.mark.filterwarnings("ignore::pytest.PytestUnraisableExceptionWarning")
def test_mp4_reads_back_with_count_size_fps_and_quality(qapp, scene, episode, tmp_path):
    spec = ClipSpec(start=0.5, end=2.5, fps=24, size=(480, 270), frame=FrameOptions())
    out = tmp_path / "clip.mp4"
    result = export_clip(scene, [episode], out, spec)
    meta, frames = _read_mp4(out)
    assert abs(len(frames) - 2.0 * 24) <= 1  # duration x fps (+-1)
    assert result.frames == len(schedule([episode], spec))
    assert frames[0].shape[:2] == (270, 480)
    assert tuple(meta["size"]) == (480, 270)
    assert meta["fps"] == pytest.approx(24.0)
    assert np.abs(frames[0].astype(int) - frames[-1].astype(int)).max() > 50  # it moves
    # codec tolerance: PSNR against the renderer's lossless frames
    renderer = FrameRenderer(scene, (480, 270), spec.frame)
    shots = schedule([episode], spec)
    for k in (0, len(frames) // 2, len(frames) - 1):
        ref = _rgb(renderer.render(episode, shots[k].steps[0]))
        assert psnr(frames[k].astype(np.float64), ref) > 30.0, k
    assert [p.name for p in tmp_path.iterdir()] == ["clip.mp4"]


def test_gif_durations_sum_to_the_clip_length(qapp, scene, episode, tmp_path):
    out = tmp_path / "clip.gif"
    export_clip(scene, [episode], out, ClipSpec(end=2.0, fps=30, size=(320, 180)))
    with Image.open(out) as im:
        assert im.size == (320, 180)
        durations = []
        for i in range(im.n_frames):
            im.seek(i)
            durations.append(im.info["duration"])
    assert abs(len(durations) - 60) <= 1
    # each delay is a whole 1/100 s; the sum still matches 2 s within one tick
    assert all(d % 10 == 0 for d in durations)
    assert sum(durations) == pytest.approx(2000, abs=10)


def test_png_folder_and_sequence_of_episodes(qapp, scene, episode, tmp_path):
    second = demo_episode(scene, seconds=1.0, index=1)
    out = tmp_path / "frames"
    spec = ClipSpec(fps=10, size=(160, 90), frame=FrameOptions(title="Run"), title_seconds=0.5)
    result = export_clip(scene, [episode, second], out, spec)
    names = sorted(p.name for p in out.iterdir())
    # title card 0.5 s + 3 s, then card 0.5 s + 1 s, at 10 fps
    assert len(names) == result.frames == 5 + 30 + 5 + 10
    assert names[0] == "frame_00000.png" and names[-1] == f"frame_{len(names) - 1:05d}.png"
    with Image.open(out / names[7]) as im:
        assert im.size == (160, 90)


def test_side_by_side_compare(qapp, scene, episode, tmp_path):
    other = demo_episode(scene, seconds=2.0, index=1)
    out = tmp_path / "cmp"
    export_clip(scene, [episode, other], out, ClipSpec(fps=5, size=(400, 200), compare=True))
    assert len(list(out.iterdir())) == 15  # the longer episode sets the length


def test_cancel_leaves_no_output(qapp, scene, episode, tmp_path):
    seen = []

    def cancel() -> bool:
        return len(seen) >= 5

    for name in ("c.mp4", "c.gif", "c_frames"):
        seen.clear()
        with pytest.raises(ClipCancelled):
            export_clip(
                scene,
                [episode],
                tmp_path / name,
                ClipSpec(size=(160, 90)),
                progress=lambda done, total: seen.append(done),
                cancel=cancel,
            )
    assert list(tmp_path.iterdir()) == []


def test_odd_sizes_are_explained_for_h264(qapp, scene, episode, tmp_path):
    result = export_clip(scene, [episode], tmp_path / "odd.mp4", ClipSpec(end=0.5, size=(161, 91)))
    assert result.size == (160, 90)
    assert any("even" in note and "161x91" in note for note in result.notes)
    png = export_clip(scene, [episode], tmp_path / "odd", ClipSpec(end=0.2, size=(161, 91)))
    assert png.size == (161, 91) and not png.notes  # PNG frames keep the exact size


def test_clear_errors_and_nothing_left_behind(qapp, scene, episode, tmp_path, monkeypatch):
    with pytest.raises(ClipError, match="unknown clip type"):
        export_clip(scene, [episode], tmp_path / "x.avi")
    with pytest.raises(ClipError, match="does not exist"):
        export_clip(scene, [episode], tmp_path / "missing" / "x.mp4")
    with pytest.raises(ClipError, match="empty"):
        export_clip(scene, [episode], tmp_path / "x.mp4", ClipSpec(start=5.0))
    monkeypatch.setenv("IMAGEIO_FFMPEG_EXE", str(tmp_path / "no-ffmpeg-here"))
    with pytest.raises(ClipError, match="ffmpeg is missing"):
        export_clip(scene, [episode], tmp_path / "x.mp4", ClipSpec(end=0.2, size=(64, 64)))
    assert list(tmp_path.iterdir()) == []


@pytest.mark.skipif(os.geteuid() == 0, reason="root may write into read-only folders")
def test_unwritable_folder(qapp, scene, episode, tmp_path):
    folder = tmp_path / "ro"
    folder.mkdir()
    folder.chmod(stat.S_IRUSR | stat.S_IXUSR)
    try:
        with pytest.raises(ClipError, match="not writable"):
            export_clip(scene, [episode], folder / "x.mp4")
    finally:
        folder.chmod(stat.S_IRWXU)


def test_disk_full_is_named_and_leaves_nothing(qapp, scene, episode, tmp_path, monkeypatch):
    # /dev/full (Linux) fails every write with ENOSPC, the errno a full disk gives (POSIX).
    import errno
    from pathlib import Path

    import arena_studio.render.clip as clip

    real_args = clip._ffmpeg_args
    monkeypatch.setattr(
        clip,
        "_ffmpeg_args",
        lambda exe, kind, size, spec, out: real_args(exe, kind, size, spec, "/dev/full"),
    )
    with pytest.raises(ClipError, match="disk is full"):
        export_clip(scene, [episode], tmp_path / "x.mp4", ClipSpec(end=0.5, size=(64, 64)))
    monkeypatch.undo()

    def full(self, data):
        raise OSError(errno.ENOSPC, "No space left on device")

    monkeypatch.setattr(Path, "write_bytes", full)
    with pytest.raises(ClipError, match="disk is full"):
        export_clip(scene, [episode], tmp_path / "frames", ClipSpec(end=0.5, size=(64, 64)))
    monkeypatch.undo()
    assert list(tmp_path.iterdir()) == []
