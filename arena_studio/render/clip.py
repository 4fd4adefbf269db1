"""Clip export: MP4 (H.264, yuv420p), GIF, or a folder of numbered PNGs, from episode frames.

Frames come from :class:`~arena_studio.render.frame.FrameRenderer` (the same painters as the
viewer), so a clip looks like the screen. MP4 and GIF go through the ffmpeg binary that
imageio-ffmpeg ships; frames are piped raw (``bgra``, straight from ``QImage.constBits()``,
no copy), which keeps export encoder-bound. Output is written under a temporary name in the
target folder and renamed only when complete: a cancel or an error leaves nothing behind.
"""

from __future__ import annotations

import contextlib
import errno
import math
import os
import queue
import shutil
import subprocess
import threading
from collections.abc import Callable, Iterator, Sequence
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import IO

from PySide6.QtCore import QSize
from PySide6.QtGui import QImage, QPainter

from arena_studio.core.atomic import make_temp, make_temp_dir, publish
from arena_studio.core.child_process import die_with_parent
from arena_studio.core.limits import FRAME_SIDE, MAX_CLIP_FRAMES, RangeError
from arena_studio.core.scene.model import Scene
from arena_studio.core.tape.episode import Episode
from arena_studio.render.episode_painter import FrameOptions
from arena_studio.render.frame import IMAGE_FORMAT, FrameRenderer, png_bytes

SIZE_PRESETS: dict[str, tuple[int, int]] = {
    "720p": (1280, 720),
    "1080p": (1920, 1080),
    "square": (1080, 1080),
}
FORMATS = (".mp4", ".gif", "folder of PNGs (a path without extension)")

#: images in the painter's ring when piping: one painted, one queued, one being written
PIPE_BUFFERS = 3
#: Written into every clip and still, so a re-run recognises its own earlier output.
RENDER_MARK = "arena-studio render"

ProgressFn = Callable[[int, int], None]
CancelFn = Callable[[], bool]


class ClipError(Exception):
    """A clip could not be made; the message is one sentence for the user."""


class ClipCancelled(ClipError):
    """The user cancelled; nothing was written."""


@dataclass(frozen=True)
class ClipSpec:
    """What to export. Times are episode seconds; ``end`` None means the episode's end."""

    start: float = 0.0
    end: float | None = None
    speed: float = 1.0
    fps: float = 30.0
    size: tuple[int, int] = (1280, 720)
    compare: bool = False  # two episodes side by side (else: in sequence)
    frame: FrameOptions = field(default_factory=FrameOptions)
    title_seconds: float = 0.0  # a title card before each episode (needs frame.title)
    crf: int = 20  # H.264 quality (lower is better and bigger)
    preset: str = "ultrafast"  # x264 speed preset: export is encoder-bound, files stay small


@dataclass
class ClipResult:
    path: Path
    frames: int
    size: tuple[int, int]
    fps: float
    notes: list[str] = field(default_factory=list)


def output_kind(path: Path) -> str:
    """ "mp4", "gif" or "png" (a folder); unknown extensions are refused with the choices."""
    suffix = path.suffix.lower()
    if suffix == ".mp4":
        return "mp4"
    if suffix == ".gif":
        return "gif"
    if suffix == "" or path.is_dir():
        return "png"
    raise ClipError(
        f"{path}: unknown clip type {suffix!r}; use .mp4, .gif, or a folder name for PNG frames"
    )


def ffmpeg_exe() -> str:
    """The ffmpeg binary imageio-ffmpeg provides (or IMAGEIO_FFMPEG_EXE names)."""
    try:
        import imageio_ffmpeg

        exe = imageio_ffmpeg.get_ffmpeg_exe()
    except Exception as exc:  # the package raises RuntimeError when it finds none
        raise ClipError(f"ffmpeg is missing ({exc}); reinstall imageio-ffmpeg") from None
    if not exe or not (os.path.isfile(exe) and os.access(exe, os.X_OK)):
        raise ClipError(f"ffmpeg is missing: {exe!r} is not an executable file")
    return exe


def checked_size(size: tuple[int, int], kind: str) -> tuple[tuple[int, int], list[str]]:
    """Validate the frame size; H.264 with yuv420p needs even sides, so odd ones round down."""
    w, h = int(size[0]), int(size[1])
    if w < 16 or h < 16 or w > 7680 or h > 4320:
        raise ClipError(f"frame size {w}x{h} is out of range (16x16 to 7680x4320)")
    notes: list[str] = []
    if kind == "mp4" and (w % 2 or h % 2):
        ew, eh = w - w % 2, h - h % 2
        notes.append(
            f"H.264 (yuv420p) stores colour at half resolution, so width and height must be "
            f"even: {w}x{h} was made {ew}x{eh}"
        )
        w, h = ew, eh
    return (w, h), notes


# -- the frame schedule -------------------------------------------------------------------------
@dataclass(frozen=True)
class Shot:
    """One output frame: which episode(s) at which step, or a title card."""

    steps: tuple[int, ...]  # one step per episode shown (two when comparing)
    episode: int  # index into the episode list (first shown)
    card: bool = False


def schedule(episodes: Sequence[Episode], spec: ClipSpec) -> list[Shot]:
    """Frames of the clip: ``round(duration x fps)`` per episode span at ``speed``."""
    if spec.fps <= 0 or spec.fps > 240:
        raise ClipError(f"fps must be between 0 and 240, got {spec.fps:g}")
    if spec.speed <= 0:
        raise ClipError(f"speed must be positive, got {spec.speed:g}")
    if not episodes:
        raise ClipError("no episode to export")
    if spec.compare and len(episodes) != 2:
        raise ClipError(f"comparing needs exactly two episodes, got {len(episodes)}")
    total = clip_frames(episodes, spec)
    if total > MAX_CLIP_FRAMES:
        raise ClipError(
            f"the clip would have {total:,} frames, more than {MAX_CLIP_FRAMES:,}; shorten the "
            "time range, raise the speed or lower the frame rate"
        )
    shots: list[Shot] = []
    for group, cards, n, start in _spans(episodes, spec):
        eps = [episodes[i] for i in group]
        shots += [Shot(tuple(0 for _ in eps), group[0], card=True)] * cards
        for k in range(n):
            t = start + k * spec.speed / spec.fps
            shots.append(Shot(tuple(e.step_at(t) for e in eps), group[0]))
    return shots


def clip_frames(episodes: Sequence[Episode], spec: ClipSpec) -> int:
    """Frames :func:`schedule` would make, counted without making them."""
    return sum(cards + n for _group, cards, n, _start in _spans(episodes, spec))


def _spans(
    episodes: Sequence[Episode], spec: ClipSpec
) -> list[tuple[tuple[int, ...], int, int, float]]:
    """Per shown group: (episode indices, title-card frames, frames, start time)."""
    groups: list[tuple[int, ...]] = (
        [(0, 1)] if spec.compare else [(i,) for i in range(len(episodes))]
    )
    out = []
    for group in groups:
        eps = [episodes[i] for i in group]
        longest = max(e.duration for e in eps)
        end = longest if spec.end is None else min(spec.end, longest)
        start = max(0.0, spec.start)
        if not end > start:
            raise ClipError(
                f"time range {start:g}-{end:g} s is empty (episode {eps[0].index} lasts "
                f"{longest:g} s)"
            )
        cards = 0
        if spec.frame.title and spec.title_seconds > 0:
            cards = _bounded_round(spec.title_seconds * spec.fps)
        n = max(1, _bounded_round((end - start) / spec.speed * spec.fps))
        out.append((group, cards, n, start))
    return out


def _bounded_round(x: float) -> int:
    """round(x), with anything not finite or huge as one more than the frame limit."""
    return round(x) if math.isfinite(x) and x <= MAX_CLIP_FRAMES else MAX_CLIP_FRAMES + 1


class ClipPainter:
    """Renders shots into a small ring of images (side by side when comparing).

    The image :meth:`render` returns stays untouched for the next ``buffers - 1`` calls, so
    a writer thread can pipe it to the encoder while the following frames are painted.
    """

    def __init__(
        self,
        scene: Scene,
        episodes: Sequence[Episode],
        spec: ClipSpec,
        size: tuple[int, int],
        buffers: int = 1,
    ) -> None:
        self.episodes = list(episodes)
        self.spec = spec
        self.size = size
        w, h = size
        if spec.compare:
            # each half names its episode (under the title when there is one)
            self.parts = [
                FrameRenderer(
                    scene, (width, h), replace(spec.frame, title=side_title(spec.frame, ep))
                )
                for (_x, width), ep in zip(halves(w), episodes, strict=True)
            ]
        else:
            self.parts = [FrameRenderer(scene, size, spec.frame)]
        self._ring = [QImage(QSize(w, h), IMAGE_FORMAT) for _ in range(max(1, buffers))]
        self._next = 0

    def render(self, shot: Shot) -> QImage:
        image = self._ring[self._next]
        self._next = (self._next + 1) % len(self._ring)
        if not self.spec.compare:
            r = self.parts[0]
            ep = self.episodes[shot.episode]
            if shot.card:
                return r.render_card(ep, self.spec.frame.title or "", _subtitle(ep), image)
            return r.render(ep, shot.steps[0], image)
        painter = QPainter(image)
        try:
            x = 0
            for r, ep, step in zip(self.parts, self.episodes, shot.steps, strict=True):
                img = (
                    r.render_card(ep, self.spec.frame.title or "", _subtitle(ep))
                    if shot.card
                    else r.render(ep, step)
                )
                painter.drawImage(x, 0, img)
                x += img.width()
            painter.setPen(self.parts[0].theme.qcolor("grid_major"))
            half = self.parts[0].layout.size[0]
            painter.drawLine(half, 0, half, self.size[1])
        finally:
            painter.end()
        return image


def side_title(options: FrameOptions, episode: Episode) -> str:
    """Each half names its episode (after the frame's title when there is one)."""
    if options.title:
        return f"{options.title}  ·  episode {episode.index}"
    return f"episode {episode.index}"


def halves(width: int) -> tuple[tuple[int, int], tuple[int, int]]:
    """``(x, width)`` of the left and right half; the right one takes an odd pixel."""
    half = width // 2
    return (0, half), (half, width - half)


def _subtitle(ep: Episode) -> str:
    return f"episode {ep.index}  ·  {ep.duration:.1f} s  ·  {ep.agent_count} agents"


# -- writers ------------------------------------------------------------------------------------
def export_clip(
    scene: Scene,
    episodes: Sequence[Episode],
    path: str | Path,
    spec: ClipSpec | None = None,
    progress: ProgressFn | None = None,
    cancel: CancelFn | None = None,
) -> ClipResult:
    """Write the clip; raises :class:`ClipError` (or :class:`ClipCancelled`) leaving nothing."""
    spec = spec or ClipSpec()
    target = Path(path)
    kind = output_kind(target)
    size, notes = checked_size(spec.size, kind)
    _check_folder(target)
    shots = schedule(episodes, spec)
    if spec.frame.ui_scale is None and spec.compare:
        from arena_studio.render.frame import ui_scale_for

        spec = replace(spec, frame=replace(spec.frame, ui_scale=ui_scale_for(size, spec.frame)))
    if kind == "png":
        painter = ClipPainter(scene, episodes, spec, size)
        _write_png_folder(target, _frames(painter, shots, progress, cancel))
    else:
        exe = ffmpeg_exe()
        painter = ClipPainter(scene, episodes, spec, size, buffers=PIPE_BUFFERS)
        _write_ffmpeg(exe, target, kind, size, spec, _frames(painter, shots, progress, cancel))
    return ClipResult(target, len(shots), size, spec.fps, notes)


def _check_folder(target: Path) -> None:
    folder = target.parent
    if not folder.exists():
        raise ClipError(f"{folder}: folder does not exist")
    if not os.access(folder, os.W_OK | os.X_OK):
        raise ClipError(f"{folder}: folder is not writable")
    if target.is_dir() and target.suffix == "" and any(target.iterdir()):
        raise ClipError(f"{target}: folder is not empty; choose a new folder for the PNG frames")


def _frames(
    painter: ClipPainter, shots: list[Shot], progress: ProgressFn | None, cancel: CancelFn | None
) -> Iterator[QImage]:
    total = len(shots)
    for i, shot in enumerate(shots):
        if cancel is not None and cancel():
            raise ClipCancelled("export cancelled; nothing was written")
        yield painter.render(shot)
        if progress is not None:
            progress(i + 1, total)


def _ffmpeg_args(exe: str, kind: str, size: tuple[int, int], spec: ClipSpec, out: str) -> list[str]:
    w, h = size
    raw_in = f"-f rawvideo -pix_fmt bgra -s {w}x{h} -framerate {spec.fps:g} -i pipe:0 -an"
    head = [exe, "-hide_banner", "-loglevel", "error", "-nostdin", "-y", *raw_in.split()]
    if kind == "mp4":
        # bgra -> yuv420p is ffmpeg's single biggest cost after x264 (~2 ms a 720p frame);
        # point-sampled chroma halves it and reads back within ~0.5 dB PSNR of the default
        encode = (
            f"-sws_flags neighbor -c:v libx264 -preset {spec.preset} -crf {spec.crf} "
            "-pix_fmt yuv420p"
        )
        mark = ["-metadata", f"comment={RENDER_MARK}"]  # how a re-run knows its own file
        return [*head, *encode.split(), *mark, "-movflags", "+faststart", "-f", "mp4", out]
    # one palette for the whole clip, ordered dithering (stable between frames, no shimmer)
    graph = (
        "split[a][b];[a]palettegen=stats_mode=full:max_colors=256[p];"
        "[b][p]paletteuse=dither=bayer:bayer_scale=4"
    )
    return [*head, "-filter_complex", graph, "-f", "gif", out]


def _write_ffmpeg(
    exe: str,
    target: Path,
    kind: str,
    size: tuple[int, int],
    spec: ClipSpec,
    frames: Iterator[QImage],
) -> None:
    tmp = _temp_name(target)
    proc = subprocess.Popen(
        _ffmpeg_args(exe, kind, size, spec, str(tmp)),
        stdin=subprocess.PIPE,
        stdout=subprocess.DEVNULL,
        stderr=subprocess.PIPE,
        preexec_fn=die_with_parent(),  # a killed render leaves no encoder running
    )
    assert proc.stdin is not None and proc.stderr is not None
    _widen_pipe(proc.stdin.fileno())
    try:
        _pipe_frames(proc.stdin, frames)
        err = proc.stderr.read().decode("utf-8", "replace").strip()
        code = proc.wait()
        if code != 0:
            if "No space left" in err:
                raise ClipError(f"{target}: the disk is full; nothing was written")
            last = err.splitlines()[-1] if err else f"exit code {code}"
            raise ClipError(f"{target}: could not encode the clip: {last}")
        if kind == "gif":
            mark_gif(tmp)
        publish(tmp, target)
    except BaseException:
        with contextlib.suppress(Exception):
            proc.kill()
            proc.wait()
        with contextlib.suppress(OSError):
            tmp.unlink()
        raise
    finally:
        for pipe in (proc.stdin, proc.stderr):
            with contextlib.suppress(Exception):
                pipe.close()


def mark_gif(path: Path) -> None:
    """Add a GIF89a comment extension naming us just before the trailer byte, so a re-run
    knows the file as its own (GIF89a: a comment block may sit between any two blocks)."""
    text = RENDER_MARK.encode("ascii")
    block = b"\x21\xfe" + bytes([len(text)]) + text + b"\x00\x3b"
    with open(path, "r+b") as handle:
        handle.seek(-1, os.SEEK_END)
        if handle.read(1) != b"\x3b":
            return  # not a complete GIF: leave it as ffmpeg wrote it
        handle.seek(-1, os.SEEK_END)
        handle.write(block)


def _widen_pipe(fd: int) -> None:
    """Linux pipes hold 64 KiB; a 720p frame is 3.7 MB. A 1 MiB pipe (the usual unprivileged
    limit) means ~15x fewer wake-ups between us and ffmpeg; elsewhere this does nothing."""
    try:
        import fcntl

        if hasattr(fcntl, "F_SETPIPE_SZ"):  # Linux only
            fcntl.fcntl(fd, fcntl.F_SETPIPE_SZ, 1 << 20)
    except (ImportError, OSError):
        pass  # a smaller limit (or none) only costs a little speed


def _pipe_frames(stdin: IO[bytes], frames: Iterator[QImage]) -> None:
    """Write frames to ffmpeg from a second thread while this one paints the next frames.

    The pipe write releases the GIL and so do QPainter's calls, so painting overlaps the
    copy into the pipe (and ffmpeg's work on the other core) instead of waiting for it. The
    queue holds at most one frame, so with :data:`PIPE_BUFFERS` images in the painter's ring
    the one being painted is never one still queued or being written.
    """
    pending: queue.Queue[QImage | None] = queue.Queue(maxsize=PIPE_BUFFERS - 2)
    broken: list[BaseException] = []

    def writer() -> None:
        while True:
            image = pending.get()
            if image is None:
                return
            if broken:
                continue  # ffmpeg stopped: keep draining so the painter never blocks
            try:
                stdin.write(image.constBits())  # bgra rows, no copy
            except BaseException as exc:  # BrokenPipeError: ffmpeg stopped, stderr says why
                broken.append(exc)

    thread = threading.Thread(target=writer, name="clip-pipe", daemon=True)
    thread.start()
    try:
        for image in frames:
            pending.put(image)
            if broken:
                break  # no point painting frames nobody reads
    finally:
        pending.put(None)
        thread.join()
    if broken and not isinstance(broken[0], BrokenPipeError):
        raise broken[0]
    with contextlib.suppress(BrokenPipeError):
        stdin.close()


def _temp_name(target: Path) -> Path:
    try:
        fd, name = make_temp(target, suffix=".part")
    except OSError as exc:
        raise ClipError(f"{target.parent}: cannot write here ({exc.strerror})") from None
    os.close(fd)
    return name


def _write_png_folder(target: Path, frames: Iterator[QImage]) -> None:
    try:
        tmp = make_temp_dir(target)
    except OSError as exc:
        raise ClipError(f"{target.parent}: cannot write here ({exc.strerror})") from None
    try:
        for i, image in enumerate(frames):
            # encode in memory and write with Python: a full disk is an OSError we can name
            data = png_bytes(image)
            try:
                (tmp / f"frame_{i:05d}.png").write_bytes(data)
            except OSError as exc:
                why = "the disk is full" if exc.errno == errno.ENOSPC else exc.strerror
                raise ClipError(f"{target}: {why}; nothing was written") from None
        if target.is_dir():
            target.rmdir()  # checked empty before we started
        publish(tmp, target, directory=True)
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        raise


def frame_count(duration: float, fps: float) -> int:
    """Frames for ``duration`` seconds at ``fps`` (what :func:`schedule` produces)."""
    return max(1, round(duration * fps))


def parse_size(text: str) -> tuple[int, int]:
    """ "720p", "1080p", "square" or "WxH" -> pixels; a clear error otherwise."""
    key = text.strip().lower()
    if key in SIZE_PRESETS:
        return SIZE_PRESETS[key]
    try:
        w, h = (int(v) for v in key.split("x"))
    except ValueError:
        raise ClipError(
            f"size {text!r}: use {', '.join(SIZE_PRESETS)} or WIDTHxHEIGHT like 1280x720"
        ) from None
    for side in (w, h):
        try:
            FRAME_SIDE.check(side)
        except RangeError as exc:
            raise ClipError(f"size {text!r}: {exc}") from None
    return (w, h)
