"""Every file a command or dialog will write, checked before anything is written (Qt-free).

A command (or a dialog) lists all the files it is about to write, sidecars included, and
:func:`check_outputs` looks at each of them first:

- a file that is also an input of the command (the same file, through any name or link) is
  refused, whatever the options: an export never overwrites the scene it came from;
- an existing file that is not a previous output of the same kind (recognised by its
  content: our tape magic, our export's format tag, our sidecar naming it...) is refused
  unless the user said ``--force``; the app asks instead;
- a folder where a file goes, or a file where a folder goes, is refused.

Recognising our own outputs lets a user re-run a command onto its previous result without
``--force``, while a stranger's file (a scene, a photo, a notebook) never goes silently.
"""

from __future__ import annotations

import json
import os
import stat
import zipfile
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from pathlib import Path

from arena_studio.core.atomic import clean_stale_temps

#: Bytes read from a file to recognise it.
SNIFF_BYTES = 64 * 1024
TAPE_MAGIC = b"\x89ASTAPE\n"
#: Marker our renderer writes into PNG stills, SVG stills, MP4 and GIF clips.
RENDER_MARK = b"arena-studio render"
#: Marker the app writes into ``--screenshot`` pictures (a PNG text chunk, a JPEG comment).
SCREENSHOT_MARK = b"arena-studio screenshot"
GRID_KINDS = ("grid-npy", "grid-png", "grid-json")


class OutputClash(Exception):
    """One output cannot be written as asked; ``needs_force`` when ``--force`` would do."""

    def __init__(self, message: str, needs_force: bool = False) -> None:
        super().__init__(message)
        self.needs_force = needs_force


@dataclass(frozen=True)
class Output:
    """A file (or folder, for PNG frames) a command will write, and what kind it is."""

    path: Path
    kind: str


def same_file(a: Path, b: Path) -> bool:
    """True when ``a`` and ``b`` are one file (hard link, symlink, ``..`` in a path)."""
    try:
        return os.path.samefile(a, b)
    except OSError:
        return os.path.abspath(a) == os.path.abspath(b)


def check_outputs(
    outputs: Sequence[Output], inputs: Sequence[str | Path], force: bool = False
) -> list[Path]:
    """Raise :class:`OutputClash` for the first output that must not be written; else
    return the existing files that will be replaced (previous outputs, or forced ones)."""
    replaced: list[Path] = []
    for out in outputs:
        for src in inputs:
            if same_file(out.path, Path(src)):
                raise OutputClash(
                    f"{out.path}: is an input of this command ({src}); choose another output name"
                )
        if not os.path.lexists(out.path):
            continue
        problem = _kind_problem(out)
        if problem:
            raise OutputClash(problem)
        if not force and not is_previous_output(out):
            raise OutputClash(
                f"{out.path}: exists and is not an earlier {describe(out.kind)}; "
                "use --force to replace it",
                needs_force=True,
            )
        replaced.append(out.path)
    return replaced


def _kind_problem(out: Output) -> str | None:
    try:
        mode = os.stat(out.path).st_mode
    except OSError:
        return None  # a dangling link: writing replaces the link itself
    if out.kind == "frames":
        if not stat.S_ISDIR(mode):
            return f"{out.path}: exists and is not a folder"
        return None
    if stat.S_ISDIR(mode):
        return f"{out.path}: is a folder; give a file name"
    if not stat.S_ISREG(mode):
        return f"{out.path}: is {path_kind(out.path)}; give a regular file name"
    return None


def path_kind(path: Path) -> str:
    """A plain name of what is at ``path``: a file, a folder, a pipe, a device, ..."""
    try:
        mode = os.stat(path).st_mode
    except FileNotFoundError:
        return "missing"
    except OSError as exc:
        return f"unreadable ({exc.strerror or exc})"
    if stat.S_ISREG(mode):
        return "a file"
    if stat.S_ISDIR(mode):
        return "a folder"
    if stat.S_ISFIFO(mode):
        return "a pipe"
    if stat.S_ISCHR(mode) or stat.S_ISBLK(mode):
        return "a device"
    if stat.S_ISSOCK(mode):
        return "a socket"
    return "not a regular file"


_DESCRIPTIONS = {
    "tape": "tape",
    "export-json": "json export",
    "export-msgpack": "msgpack export",
    "export-about": "export sidecar",
    "export-npz": "npz export",
    "export-wkt": "WKT export",
    "export-svg": "SVG export",
    "grid-npy": "grid export",
    "grid-png": "grid export",
    "grid-json": "grid export",
    "still-png": "rendered still",
    "still-svg": "rendered still",
    "clip-mp4": "rendered clip",
    "clip-gif": "rendered clip",
    "frames": "frames folder",
    "screenshot": "screenshot",
}


def describe(kind: str) -> str:
    return f"arena-studio {_DESCRIPTIONS.get(kind, kind)}"


def _head(path: Path, n: int = SNIFF_BYTES) -> bytes:
    try:
        with open(path, "rb") as handle:
            return handle.read(n)
    except OSError:
        return b""


def _tail(path: Path, n: int = SNIFF_BYTES) -> bytes:
    try:
        with open(path, "rb") as handle:
            handle.seek(max(0, os.fstat(handle.fileno()).st_size - n))
            return handle.read(n)
    except OSError:
        return b""


def _json_format(path: Path) -> str | None:
    try:
        doc = json.loads(_head(path, 1 << 20).decode("utf-8"))
    except (UnicodeDecodeError, ValueError):
        return None
    fmt = doc.get("format") if isinstance(doc, dict) else None
    return fmt if isinstance(fmt, str) else None


def _scene_export(out: Output) -> bool:
    about = out.path.with_name(out.path.name + ".about.json")
    fmt = out.kind.removeprefix("export-")
    return _json_format(about) == f"arena-studio.export.{fmt}"


def _npz(out: Output) -> bool:
    try:
        with zipfile.ZipFile(out.path) as z:
            names = set(z.namelist())
    except (OSError, zipfile.BadZipFile):
        return False
    return {"content_hash.npy", "caution.npy", "wall_segments.npy"} <= names


def _grid_sibling(out: Output) -> bool:
    base = out.path.with_suffix("")
    sidecar = base.with_name(base.name + ".json")
    if _json_format(sidecar) == "arena-studio.export.grid":
        return True
    if out.kind == "grid-png" or out.kind == "grid-npy":
        # a set whose publishing was interrupted has no sidecar: its PNG still says it is ours
        png = base.with_name(base.name + ".png")
        return b"arena-studio.export" in _head(png, 4096) or b"content_hash" in _head(png, 4096)
    return False


def _frames(out: Output) -> bool:
    try:
        names = os.listdir(out.path)
    except OSError:
        return False
    return not names  # an empty folder: nothing of anyone's is lost


_RECOGNISERS: dict[str, Callable[[Output], bool]] = {
    "tape": lambda o: _head(o.path, 8) == TAPE_MAGIC,
    "export-json": _scene_export,
    "export-msgpack": _scene_export,
    "export-about": lambda o: (_json_format(o.path) or "").startswith("arena-studio.export."),
    "export-npz": _npz,
    "export-wkt": lambda o: _head(o.path, 64).startswith(b"# arena-studio WKT export"),
    "export-svg": lambda o: b"arena-studio.export.svg" in _head(o.path),
    "grid-npy": _grid_sibling,
    "grid-png": _grid_sibling,
    "grid-json": lambda o: _json_format(o.path) == "arena-studio.export.grid",
    "still-png": lambda o: RENDER_MARK in _head(o.path, 4096),
    "still-svg": lambda o: RENDER_MARK in _head(o.path, 4096),
    "clip-mp4": lambda o: RENDER_MARK in _head(o.path) or RENDER_MARK in _tail(o.path),
    "clip-gif": lambda o: RENDER_MARK in _tail(o.path, 4096),
    "frames": _frames,
    "screenshot": lambda o: SCREENSHOT_MARK in _head(o.path, 4096),
}


def is_previous_output(out: Output) -> bool:
    """True when the existing file at ``out.path`` is one we wrote as ``out.kind``."""
    recognise = _RECOGNISERS.get(out.kind)
    return bool(recognise and recognise(out))


def export_outputs(fmt: str, out: str | Path) -> list[Output]:
    """What ``arena-studio export --format FMT -o OUT`` writes."""
    from arena_studio.core.export import output_paths

    paths = output_paths(fmt, out)
    if fmt == "grid":
        return [Output(p, k) for p, k in zip(paths, GRID_KINDS, strict=True)]
    if fmt in ("json", "msgpack"):
        return [Output(paths[0], f"export-{fmt}"), Output(paths[1], "export-about")]
    return [Output(paths[0], f"export-{fmt}")]


def render_outputs(out: str | Path) -> list[Output]:
    """What ``arena-studio render -o OUT`` writes (by the name's extension)."""
    path = Path(out)
    kinds = {".png": "still-png", ".svg": "still-svg", ".mp4": "clip-mp4", ".gif": "clip-gif"}
    return [Output(path, kinds.get(path.suffix.lower(), "frames"))]


def screenshot_outputs(out: str | Path) -> list[Output]:
    """What ``arena-studio PATH --screenshot OUT`` writes."""
    return [Output(Path(out), "screenshot")]


def tape_outputs(out: str | Path) -> list[Output]:
    """What ``rollout`` and ``import`` write: the tape (its ``.partial`` is handled by the
    tape writer, which never truncates a recoverable one)."""
    return [Output(Path(out), "tape")]


def prepare_outputs(
    outputs: Sequence[Output], inputs: Sequence[str | Path], force: bool = False
) -> list[Path]:
    """:func:`check_outputs`, then remove what killed runs left in the output folders."""
    replaced = check_outputs(outputs, inputs, force)
    for folder in {o.path.parent for o in outputs}:
        clean_stale_temps(folder)
    return replaced


__all__ = [
    "Output",
    "OutputClash",
    "check_outputs",
    "describe",
    "export_outputs",
    "is_previous_output",
    "path_kind",
    "prepare_outputs",
    "render_outputs",
    "same_file",
    "screenshot_outputs",
    "tape_outputs",
]
