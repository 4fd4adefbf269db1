"""Import recorded episodes from other tools' files into a tape.

CSV, long format (one row per episode, step and agent)::

    episode,step,agent,x,y,heading[,reward][,goal][,role]

``episode`` is any label (episodes keep the order of their first row; the rows of one episode
are together, see :mod:`.csv_import`, which reads the file in blocks); ``step`` counts from 0
without gaps; ``agent`` is a scene agent id (or its 0-based index); x, y in metres, heading in
radians. Optional ``reward`` (number), ``goal`` (the agent's pursued goal: landmark ids joined
by ``+``, the same on every row of that agent in that episode) and ``role`` (a label; a change
between steps becomes a role change). ``columns={"x": "pos_x"}`` maps our names to the file's.

NPZ (``numpy.savez``; loaded with ``allow_pickle=False``, so object arrays are refused):
either ``poses`` (E, T, A, 3) for equal-length episodes, or ``poses_0``, ``poses_1``, ...
(T_i, A, 3) per episode. Optional, matching: ``rewards`` (E, T, A) / ``rewards_<i>``,
``done`` (E, T, A) / ``done_<i>``, ``actions`` (E, T, A, K) / ``actions_<i>``,
``team_goal`` (E, L) 0/1, ``pursued_goals`` (E, A, L) 0/1, and ``dt`` (a scalar, seconds).

Errors name the file and the line and column (CSV) or the array (NPZ).
"""

from __future__ import annotations

import math
import zipfile
from collections.abc import Callable
from pathlib import Path

import numpy as np

from arena_studio.core.errors import ArenaError
from arena_studio.core.import_rows import ImportFormatError, pose_array_problem
from arena_studio.core.safe_open import open_input
from arena_studio.core.scene.model import Scene
from arena_studio.core.tape import TapeWriter
from arena_studio.core.tape.csv_import import OPTIONAL, REQUIRED, import_csv
from arena_studio.core.value_limits import DT_MAX, DT_MIN

#: NPZ members together larger than this (uncompressed bytes) are refused before loading
MAX_NPZ_MEMBER = 2 << 30
#: a compressed member may expand at most this many times: deflate (RFC 1951), which numpy
#: uses, cannot exceed about 1032:1, so a genuine member never trips this
MAX_NPZ_RATIO = 1100
#: ... once it claims more than this many bytes (small members may compress better)
NPZ_RATIO_FROM = 1 << 20


def parse_columns(text: str | None) -> dict[str, str]:
    """``"x=pos_x,y=pos_y"`` -> {"x": "pos_x", "y": "pos_y"}; unknown names are refused."""
    if not text:
        return {}
    out: dict[str, str] = {}
    for part in text.split(","):
        ours, sep, theirs = part.partition("=")
        ours, theirs = ours.strip(), theirs.strip()
        if not sep or not ours or not theirs:
            raise ImportFormatError(f"--columns: expected NAME=COLUMN pairs, got {part!r}")
        if ours not in REQUIRED + OPTIONAL:
            names = ", ".join(REQUIRED + OPTIONAL)
            raise ImportFormatError(f"--columns: unknown name {ours!r} (known: {names})")
        out[ours] = theirs
    return out


def check_dt(src: str, dt: float) -> None:
    """Refuse a time step outside the documented range (as a tape reader would)."""
    if not (isinstance(dt, int | float) and math.isfinite(dt) and DT_MIN <= dt <= DT_MAX):
        raise ImportFormatError(
            f"{src}: dt: expected a time step from {DT_MIN:g} s to {DT_MAX:g} s, got {dt!r}"
        )


# -- NPZ ------------------------------------------------------------------------------------
def _check_npz_member(src: str, zf: zipfile.ZipFile, info: zipfile.ZipInfo) -> None:
    """Refuse a member before numpy allocates anything for it.

    numpy sizes its array from the ``.npy`` header and the archive member's claimed size, so
    both are checked first: the claimed size against :data:`MAX_NPZ_MEMBER` and, for a
    compressed member, against :data:`MAX_NPZ_RATIO` times its compressed bytes (a small
    member claiming a huge size is a zip bomb); and the header's shape x item size against
    the bytes the member says it holds.
    """
    name = info.filename[:-4] if info.filename.endswith(".npy") else info.filename
    where = f"{src}: array {name}"
    compressed = info.compress_type != zipfile.ZIP_STORED
    if (
        compressed
        and info.file_size > NPZ_RATIO_FROM
        and info.file_size > MAX_NPZ_RATIO * max(info.compress_size, 1)
    ):
        raise ImportFormatError(
            f"{where}: claims {info.file_size} bytes from {info.compress_size} compressed "
            f"bytes (more than {MAX_NPZ_RATIO}:1), refused as a possible zip bomb"
        )
    if info.file_size > MAX_NPZ_MEMBER:
        raise ImportFormatError(
            f"{where}: {info.file_size} bytes uncompressed, more than an import takes "
            f"({MAX_NPZ_MEMBER} bytes)"
        )
    if not info.filename.endswith(".npy"):
        return
    try:
        with zf.open(info) as f:
            version = np.lib.format.read_magic(f)
            read_header = (
                np.lib.format.read_array_header_1_0
                if version == (1, 0)
                else np.lib.format.read_array_header_2_0
            )
            shape, _, dtype = read_header(f)
            header_bytes = f.tell()
    except (ValueError, OSError, EOFError, zipfile.BadZipFile) as exc:
        raise ImportFormatError(f"{where}: not a readable .npy array ({exc})") from None
    if dtype.hasobject:
        raise ImportFormatError(f"{where}: object arrays are not imported (they need pickle)")
    claimed = math.prod(shape) * dtype.itemsize
    if claimed != info.file_size - header_bytes:
        raise ImportFormatError(
            f"{where}: its header claims shape {tuple(shape)} of {dtype.str} "
            f"({claimed} bytes), the archive member holds {info.file_size - header_bytes}"
        )


def _check_npz_total(src: str, members: list[zipfile.ZipInfo]) -> None:
    """Refuse an archive whose arrays together exceed what one import may hold in memory."""
    total = sum(info.file_size for info in members)
    if total > MAX_NPZ_MEMBER:
        raise ImportFormatError(
            f"{src}: its arrays hold {total:,} bytes uncompressed, more than an import takes "
            f"({MAX_NPZ_MEMBER:,} bytes)"
        )


def _npz_dt(src: str, arr: np.ndarray) -> float:
    """The ``dt`` array as one time step in seconds, named when it is not one."""
    if arr.size != 1:
        raise ImportFormatError(f"{src}: array dt: expected one number, got shape {arr.shape}")
    value = float(arr.reshape(-1)[0])
    if not (math.isfinite(value) and value > 0):
        raise ImportFormatError(f"{src}: array dt: expected a time step > 0 s, got {value!r}")
    return value


def import_npz(
    path: str | Path,
    scene: Scene,
    out: str | Path,
    *,
    dt: float | None = None,
    advance: Callable[[int], None] | None = None,
    keep_partial: bool = False,
    skipped: list[str] | None = None,
) -> int:
    """Convert an ``.npz`` file (array names in the module docstring) into a tape; with a
    ``skipped`` list an episode whose poses are not finite or out of range is described
    there and left out (``--skip-bad``), otherwise it is refused."""
    src = str(path)
    raw = open_input(path, "npz")  # regular files only, size bounded
    try:
        with zipfile.ZipFile(raw) as zf:
            members = zf.infolist()
            for info in members:
                _check_npz_member(src, zf, info)
            _check_npz_total(src, members)
        raw.seek(0)
        data = np.load(raw, allow_pickle=False)
    except ImportFormatError:
        raw.close()
        raise
    except (OSError, zipfile.BadZipFile, ValueError) as exc:
        raw.close()
        raise ImportFormatError(f"{src}: not a readable .npz file ({exc})") from None
    with raw, data:
        names = set(data.files)
        a, n_lm = len(scene.agents), len(scene.landmarks)

        held: dict[str, np.ndarray] = {}  # arrays of all episodes, loaded once

        def load(name: str) -> np.ndarray:
            if name in held:
                return held[name]
            try:
                arr = np.asarray(data[name])
            except ValueError as exc:  # object arrays need pickle, which is refused
                raise ImportFormatError(f"{src}: array {name}: {exc}") from None
            if arr.dtype.kind not in "biuf":  # text, complex, dates: not poses or flags
                raise ImportFormatError(
                    f"{src}: array {name}: expected real numbers, got dtype {arr.dtype.str}"
                )
            if "_" not in name or not name.rsplit("_", 1)[1].isdigit():
                held[name] = arr
            return arr

        if "poses" in names:
            stacked = load("poses")
            if stacked.ndim != 4 or stacked.shape[2:] != (a, 3):
                raise ImportFormatError(
                    f"{src}: array poses: expected (E, T, {a}, 3), got {stacked.shape}"
                )
            count = stacked.shape[0]
        else:
            count = 0
            while f"poses_{count}" in names:
                count += 1
            if count == 0:
                raise ImportFormatError(f"{src}: no array 'poses' (or poses_0, poses_1, ...)")
        step = dt
        if step is None:
            step = _npz_dt(src, load("dt")) if "dt" in names else 0.1
        check_dt(src, step)

        def per_episode(name: str, i: int) -> np.ndarray | None:
            if name in names:
                stacked = load(name)
                if stacked.ndim == 0 or stacked.shape[0] != count:
                    raise ImportFormatError(
                        f"{src}: array {name}: expected one entry per episode ({count}), "
                        f"got shape {stacked.shape}"
                    )
                return stacked[i]
            if f"{name}_{i}" in names:
                return load(f"{name}_{i}")
            return None

        team = load("team_goal") if "team_goal" in names else None
        pursued = load("pursued_goals") if "pursued_goals" in names else None
        if team is not None and team.shape != (count, n_lm):
            raise ImportFormatError(f"{src}: array team_goal: expected ({count}, {n_lm})")
        if pursued is not None and pursued.shape != (count, a, n_lm):
            raise ImportFormatError(f"{src}: array pursued_goals: expected ({count}, {a}, {n_lm})")
        meta = {"generator": "arena-studio import npz", "source": Path(src).name}
        left_out = 0
        with TapeWriter(out, scene, dt=step, metadata=meta, keep_partial=keep_partial) as w:
            for i in range(count):
                poses = per_episode("poses", i)
                assert poses is not None
                name = f"poses_{i}" if "poses" not in names else "poses"
                if poses.ndim != 3 or poses.shape[1:] != (a, 3) or poses.shape[0] < 1:
                    raise ImportFormatError(f"{src}: array {name}: expected (T, {a}, 3)")
                problem = pose_array_problem(poses) if poses.dtype.kind in "fiu" else None
                if problem is not None:
                    text = f"episode {i} (array {name}): {problem}"
                    if skipped is None:
                        raise ImportFormatError(f"{src}: {text}")
                    skipped.append(text + "; episode left out")
                    left_out += 1
                    continue
                try:
                    w.begin_episode(
                        team_goal=None if team is None else team[i],
                        pursued_goals=None if pursued is None else list(pursued[i]),
                    )
                    w.steps(
                        poses,
                        rewards=per_episode("rewards", i),
                        actions=per_episode("actions", i),
                        done=per_episode("done", i),
                    )
                    w.end_episode()
                except ArenaError as exc:
                    raise ImportFormatError(f"{src}: episode {i}: {exc}") from None
                if advance is not None:
                    advance(1)
    return count - left_out


__all__ = ["ImportFormatError", "import_csv", "import_npz", "parse_columns"]
