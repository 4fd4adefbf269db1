"""Finding the tapes of a sweep and where each belongs (condition, seed, step, task).

A sweep is given as a folder (searched recursively), a glob pattern (``runs/*/seed*/*.tape``),
a text file listing tapes (one path a line, relative to the list's folder; blank lines and
``#`` comments skipped), or one tape. Each tape says where it belongs through its header
metadata keys ``condition``, ``seed``, ``step`` and optional ``task`` (default: the embedded
scene's name). Keys a tape lacks are taken from ``layout``, a path pattern relative to the
sweep folder such as ``{condition}/seed{seed}/step{step}.tape`` (``*`` matches within one
folder name). Files ``*.tape.partial`` are tapes still being written: listed as recording,
never analysed.

Only the raw header record is read here (no scene parsing), so listing 10,000 tapes costs one
small read each.
"""

from __future__ import annotations

import glob
import hashlib
import os
import re
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import msgpack

from arena_studio.core.errors import ArenaError
from arena_studio.core.tape.format import FRAME_HEAD, KIND_HEADER, MAGIC
from arena_studio.core.wording import LandmarkNames

TAPE_SUFFIX = ".tape"
PARTIAL_SUFFIX = ".tape.partial"
PLACE_KEYS = ("condition", "seed", "step", "task")
_GLOB_CHARS = re.compile(r"[*?\[]")
_FIELD = re.compile(r"\{(condition|seed|step|task)\}")


class SweepError(ArenaError):
    """A sweep source or layout that cannot be used; the message names it."""


@dataclass(frozen=True)
class Placement:
    """Where a tape belongs in a sweep (``None`` where neither header nor layout said)."""

    condition: str | None = None
    seed: int | None = None
    step: int | None = None
    task: str | None = None

    def missing(self) -> list[str]:
        return [k for k in ("condition", "seed", "step") if getattr(self, k) is None]


@dataclass(frozen=True)
class SweepTape:
    """One tape file of a sweep, its identity for caching and its placement."""

    path: Path
    size: int
    mtime_ns: int
    header_hash: str = ""
    place: Placement = field(default_factory=Placement)
    recording: bool = False
    problem: str | None = None


@dataclass
class Sweep:
    root: Path
    tapes: list[SweepTape]

    @property
    def ready(self) -> list[SweepTape]:
        """Finished tapes with a complete placement and a readable header."""
        return [t for t in self.tapes if not t.recording and t.problem is None]

    @property
    def recording(self) -> list[SweepTape]:
        return [t for t in self.tapes if t.recording]

    @property
    def problems(self) -> list[SweepTape]:
        return [t for t in self.tapes if t.problem is not None]


# -- finding files ---------------------------------------------------------------------------
def find_files(source: str | Path) -> tuple[Path, list[Path]]:
    """(root folder the layout is relative to, tape and partial files in sorted order)."""
    text = str(source)
    p = Path(text)
    if p.is_dir():
        suffixes = (TAPE_SUFFIX, PARTIAL_SUFFIX)
        files = [f for f in p.rglob("*") if f.name.endswith(suffixes) and f.is_file()]
        return p, sorted(files)
    if p.is_file():
        if p.name.endswith((TAPE_SUFFIX, PARTIAL_SUFFIX)):
            return p.parent, [p]
        return p.parent, _listed(p)
    if _GLOB_CHARS.search(text):
        files = [Path(f) for f in glob.glob(text, recursive=True)]
        files = [f for f in files if f.is_file()]
        return _glob_root(text), sorted(files)
    raise SweepError(f"{text}: no such folder, tape, list file or matching pattern")


def _glob_root(pattern: str) -> Path:
    parts = Path(pattern).parts
    keep: list[str] = []
    for part in parts:
        if _GLOB_CHARS.search(part):
            break
        keep.append(part)
    return Path(*keep) if keep else Path(".")


def _listed(list_file: Path) -> list[Path]:
    try:
        lines = list_file.read_text(encoding="utf-8").splitlines()
    except (OSError, UnicodeDecodeError) as exc:
        raise SweepError(f"{list_file}: cannot read the list of tapes ({exc})") from None
    out = []
    for number, line in enumerate(lines, 1):
        entry = line.strip()
        if not entry or entry.startswith("#"):
            continue
        path = Path(entry)
        if not path.is_absolute():
            path = list_file.parent / path
        if not path.is_file():
            raise SweepError(f"{list_file}, line {number}: {entry}: no such tape")
        out.append(path)
    return out


# -- layout patterns -------------------------------------------------------------------------
def compile_layout(pattern: str) -> re.Pattern[str]:
    """A regex matching the end of a tape's path (relative, with ``/``) against ``pattern``."""
    if not _FIELD.search(pattern):
        raise SweepError(
            f"--layout {pattern!r}: expected at least one of {{condition}}, {{seed}}, {{step}}, "
            "{task}"
        )
    out, pos, seen = [], 0, set()
    for m in _FIELD.finditer(pattern):
        out.append(_literal(pattern[pos : m.start()]))
        name = m.group(1)
        if name in seen:
            raise SweepError(f"--layout {pattern!r}: {{{name}}} appears twice")
        seen.add(name)
        out.append(rf"(?P<{name}>\d+)" if name in ("seed", "step") else rf"(?P<{name}>[^/]+?)")
        pos = m.end()
    out.append(_literal(pattern[pos:]))
    return re.compile("(?:^|/)" + "".join(out) + "$")


def _literal(text: str) -> str:
    return "[^/]*".join(re.escape(piece) for piece in text.split("*"))


def place_from_path(rel: str, layout: re.Pattern[str] | None) -> dict[str, Any]:
    if layout is None:
        return {}
    m = layout.search(rel.removesuffix(".partial"))
    if m is None:
        return {}
    return {k: (int(v) if k in ("seed", "step") else v) for k, v in m.groupdict().items()}


# -- headers ---------------------------------------------------------------------------------
def read_header_bytes(path: Path) -> bytes:
    """The raw header record's payload (one small read; no checksum or scene parsing)."""
    with open(path, "rb") as f:
        start = f.read(len(MAGIC) + FRAME_HEAD.size)
        if len(start) < len(MAGIC) + FRAME_HEAD.size or start[: len(MAGIC)] != MAGIC:
            raise SweepError(f"{path}: not an arena-studio tape (wrong first bytes)")
        length, kind = FRAME_HEAD.unpack_from(start, len(MAGIC))
        if kind != KIND_HEADER or length > os.fstat(f.fileno()).st_size:
            raise SweepError(f"{path}: header: first record is not a readable header")
        payload = f.read(length)
        if len(payload) < length:
            raise SweepError(f"{path}: header: file ends inside the header")
        return payload


def header_place(payload: bytes, path: Path) -> dict[str, Any]:
    """Placement keys found in a header payload's metadata (and the scene name as task)."""
    try:
        header = msgpack.unpackb(payload, raw=False, strict_map_key=False)
    except Exception as exc:  # msgpack raises several types for bad bytes
        raise SweepError(f"{path}: header: not readable ({exc})") from None
    if not isinstance(header, dict):
        raise SweepError(f"{path}: header: expected a map")
    meta = header.get("metadata") or {}
    if not isinstance(meta, dict):
        raise SweepError(f"{path}: header.metadata: expected a map")
    out: dict[str, Any] = {}
    for key in PLACE_KEYS:
        if key in meta and meta[key] is not None:
            out[key] = _place_value(key, meta[key], path)
    scene = header.get("scene")
    if isinstance(scene, dict) and isinstance(scene.get("name"), str):
        out.setdefault("scene", scene["name"])
    return out


def _place_value(key: str, value: Any, path: Path) -> Any:
    if key in ("seed", "step"):
        if isinstance(value, bool) or not isinstance(value, int | float) or value != int(value):
            raise SweepError(f"{path}: header.metadata.{key}: expected a whole number")
        return int(value)
    return str(value)


def header_hash(payload: bytes) -> str:
    return hashlib.blake2b(payload, digest_size=16).hexdigest()


# -- the sweep -------------------------------------------------------------------------------
def scan_sweep(source: str | Path, layout: str | None = None) -> Sweep:
    """List a sweep's tapes with their placement; unreadable headers are kept as problems."""
    root, files = find_files(source)
    pattern = compile_layout(layout) if layout else None
    tapes = []
    for path in files:
        tapes.append(_sweep_tape(root, path, pattern))
    return Sweep(root=root, tapes=tapes)


def _sweep_tape(root: Path, path: Path, pattern: re.Pattern[str] | None) -> SweepTape:
    try:
        st = path.stat()
    except OSError as exc:
        return SweepTape(path, 0, 0, problem=f"{path}: cannot read ({exc.strerror or exc})")
    try:
        rel = path.relative_to(root).as_posix()
    except ValueError:
        rel = path.as_posix()
    found = place_from_path(rel, pattern)
    if path.name.endswith(PARTIAL_SUFFIX):
        return SweepTape(path, st.st_size, st.st_mtime_ns, place=_placement(found), recording=True)
    try:
        payload = read_header_bytes(path)
        found.update(header_place(payload, path))  # header keys win over the path pattern
    except SweepError as exc:
        return SweepTape(
            path, st.st_size, st.st_mtime_ns, place=_placement(found), problem=str(exc)
        )
    except OSError as exc:
        return SweepTape(
            path, st.st_size, st.st_mtime_ns, problem=f"{path}: cannot read ({exc.strerror or exc})"
        )
    place = _placement(found)
    missing = place.missing()
    problem = None
    if missing:
        problem = f"{path}: no {', '.join(missing)} in the header metadata" + (
            " or from --layout" if pattern is not None else "; give --layout"
        )
    return SweepTape(path, st.st_size, st.st_mtime_ns, header_hash(payload), place, problem=problem)


def landmark_names(tapes: list[SweepTape]) -> LandmarkNames:
    """The landmark names of a sweep's tapes, for goals shown by label: read from the header
    of the first readable tape of each task (the scene travels in the header); the first
    label seen for an id is kept, and a header that cannot be read adds nothing."""
    seen: dict[str, str | None] = {}
    tasks: set[str | None] = set()
    for tape in tapes:
        if tape.place.task in tasks:
            continue
        try:
            header = msgpack.unpackb(read_header_bytes(tape.path), raw=False, strict_map_key=False)
        except Exception:  # unreadable (msgpack raises several types): the next tape says
            continue
        tasks.add(tape.place.task)
        scene = header.get("scene") if isinstance(header, dict) else None
        marks = scene.get("landmarks") if isinstance(scene, dict) else None
        for lm in marks if isinstance(marks, list) else ():
            if isinstance(lm, dict) and isinstance(lm.get("id"), str):
                label = lm.get("label")
                seen.setdefault(lm["id"], label if isinstance(label, str) else None)
    return LandmarkNames(seen.items())


def _placement(found: dict[str, Any]) -> Placement:
    task = found.get("task") or found.get("scene")
    return Placement(
        condition=found.get("condition"),
        seed=found.get("seed"),
        step=found.get("step"),
        task=None if task is None else str(task),
    )


__all__ = [
    "Placement",
    "Sweep",
    "SweepError",
    "SweepTape",
    "compile_layout",
    "find_files",
    "header_hash",
    "landmark_names",
    "read_header_bytes",
    "scan_sweep",
]
