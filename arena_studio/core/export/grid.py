"""Occupancy grid export: ``.npy`` (uint8, 0 free / 1 blocked), a PNG preview, a JSON sidecar.

Cell (row i, column j) covers x in [x0 + j r, x0 + (j + 1) r] and y in [y0 + i r,
y0 + (i + 1) r], where (x0, y0) is the recorded ``origin`` (the lower-left corner of cell
(0, 0)) and r the resolution: row 0 is the southern edge (lowest y). A cell is free when its
centre lies in the open area (rooms minus obstacles). With a ``clearance`` c > 0 the centre
must also lie at least c from every wall and obstacle: the open area eroded by c, which is
where the centre of a round robot of radius c fits (its configuration space; a doorway
narrower than 2c closes). The PNG preview is flipped so north is up.
"""

from __future__ import annotations

import hashlib
import io
import json
import math
from collections.abc import Callable
from pathlib import Path
from typing import Any

import numpy as np
import shapely

from arena_studio.core.atomic import write_set_atomic
from arena_studio.core.export import ExportError
from arena_studio.core.export.meta import (
    json_bytes,
    provenance,
)
from arena_studio.core.export.png import encode_png
from arena_studio.core.geometry.regions import bounds, free_space, open_area
from arena_studio.core.scene.model import Scene

#: Largest grid written (cells); a finer resolution is refused with a reason.
MAX_CELLS = 40_000_000
#: cells tested per block (bounds the temporary coordinate arrays, paces the progress bar)
BLOCK_CELLS = 1_000_000


def occupancy(
    scene: Scene,
    resolution: float,
    clearance: float = 0.0,
    advance: Callable[[int], None] | None = None,
) -> tuple[np.ndarray, tuple[float, float]]:
    """(rows, cols) uint8 grid (0 free, 1 blocked) and its origin (lower-left corner).

    ``clearance``: metres a free cell's centre keeps from walls and obstacles (0: none).
    ``advance`` receives percent steps (100 in all) as blocks of rows are done."""
    if not (isinstance(resolution, int | float) and math.isfinite(resolution) and resolution > 0):
        raise ExportError(f"--resolution must be a number of metres > 0, got {resolution!r}")
    if not (isinstance(clearance, int | float) and math.isfinite(clearance) and clearance >= 0):
        raise ExportError(f"--clearance must be a number of metres >= 0, got {clearance!r}")
    minx, miny, maxx, maxy = bounds(scene)
    # sizes as floats first: a tiny resolution must give a readable refusal, not a 300-digit
    # integer or an overflow (the quotient may be inf)
    with np.errstate(over="ignore"):
        across = np.float64(maxx - minx) / np.float64(resolution)
        up = np.float64(maxy - miny) / np.float64(resolution)
        too_many = not across * up <= MAX_CELLS * (1 + 1e-9)
    if too_many:
        raise ExportError(
            f"a {resolution:g} m grid of this scene would have {cells_in_words(up, across)} "
            f"cells, more than the {MAX_CELLS:,} allowed; choose a coarser --resolution"
        )
    cols = max(1, math.ceil(float(across) - 1e-9))
    rows = max(1, math.ceil(float(up) - 1e-9))
    if rows * cols > MAX_CELLS:
        raise ExportError(
            f"a {resolution:g} m grid of this scene would have {rows:,} x {cols:,} cells, "
            f"more than the {MAX_CELLS:,} allowed; choose a coarser --resolution"
        )
    xs = minx + (np.arange(cols) + 0.5) * resolution
    ys = miny + (np.arange(rows) + 0.5) * resolution
    # the same free space the reachability checks and the planner use for an agent this size
    area = free_space(scene, clearance) if clearance > 0 else open_area(scene)
    grid = np.ones((rows, cols), dtype=np.uint8)
    if not area.is_empty:
        shapely.prepare(area)
    step = max(1, BLOCK_CELLS // cols)
    reported = 0
    for r0 in range(0, rows, step):
        r1 = min(rows, r0 + step)
        if not area.is_empty:
            gx, gy = np.meshgrid(xs, ys[r0:r1])
            grid[r0:r1][shapely.contains_xy(area, gx, gy)] = 0
        if advance is not None:
            now = round(100 * r1 / rows)
            advance(now - reported)
            reported = now
    return grid, (float(minx), float(miny))


def cells_in_words(rows: float, cols: float) -> str:
    """``12,000 x 40,000`` (whole cells, rounded up, with thousands separators); sizes too
    large to be worth spelling out as ``about 2e+306``."""

    def one(n: float) -> str:
        if not math.isfinite(n) or n >= 1e15:
            return f"about {n:.0e}" if math.isfinite(n) else "over 1e+308"
        return f"{max(1, math.ceil(n - 1e-9)):,}"

    return f"{one(float(rows))} x {one(float(cols))}"


def grid_paths(out: Path) -> tuple[Path, Path, Path]:
    base = out.with_suffix("") if out.suffix.lower() in (".npy", ".png", ".json") else out
    return (
        base.with_name(base.name + ".npy"),
        base.with_name(base.name + ".png"),
        base.with_name(base.name + ".json"),
    )


def write_grid(
    scene: Scene,
    out: Path,
    resolution: float,
    clearance: float = 0.0,
    advance: Callable[[int], None] | None = None,
) -> list[Path]:
    """Write the three files as one set: the JSON sidecar (with a SHA-256 of each part) is
    published last, see :func:`arena_studio.core.atomic.write_set_atomic`."""
    from arena_studio.core.export.svg import palette

    grid, origin = occupancy(scene, resolution, clearance, advance)
    npy_path, png_path, json_path = grid_paths(out)
    buffer = io.BytesIO()
    np.save(buffer, grid, allow_pickle=False)
    npy = buffer.getvalue()

    colors = palette("light")
    lut = np.array(
        [_rgb(colors["room_fill"]), _rgb(colors["wall"])], dtype=np.uint8
    )  # 0 free, 1 blocked
    meta = provenance(scene, "grid")
    png = encode_png(
        lut[grid[::-1]], {"content_hash": meta["content_hash"], "caution": meta["caution"]}
    )
    doc = {
        **meta,
        "grid": npy_path.name,
        "preview": png_path.name,
        "grid_sha256": hashlib.sha256(npy).hexdigest(),
        "preview_sha256": hashlib.sha256(png).hexdigest(),
        "resolution": float(resolution),
        "clearance": float(clearance),
        "origin": [origin[0], origin[1]],
        "shape": [int(grid.shape[0]), int(grid.shape[1])],
        "row_order": "row 0 is the lowest y (south); the PNG preview has north up",
        "values": {
            "0": "free (cell centre in the open area, at least `clearance` m from walls "
            "and obstacles)",
            "1": "blocked",
        },
        "units": "m",
    }
    return write_set_atomic([(npy_path, npy), (png_path, png), (json_path, json_bytes(doc))])


def read_grid(sidecar: str | Path) -> tuple[np.ndarray, dict[str, Any]]:
    """Load a grid export through its JSON sidecar and check the parts belong to it.

    Raises :class:`ExportError` naming the file when the sidecar is not a grid export, or
    when the ``.npy`` is missing or is not the one the sidecar describes (checksum, shape):
    the leftovers of an interrupted export are never taken for a grid."""
    path = Path(sidecar)
    try:
        doc = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, ValueError) as exc:
        raise ExportError(f"{path}: not a readable grid sidecar ({exc})") from None
    if not isinstance(doc, dict) or doc.get("format") != "arena-studio.export.grid":
        raise ExportError(f"{path}: not a grid export sidecar")
    npy_path = path.with_name(str(doc.get("grid", "")))
    try:
        data = npy_path.read_bytes()
    except OSError as exc:
        raise ExportError(f"{npy_path}: cannot read the grid ({exc.strerror or exc})") from None
    if hashlib.sha256(data).hexdigest() != doc.get("grid_sha256"):
        raise ExportError(f"{npy_path}: does not match {path.name} (another export's grid?)")
    grid = np.load(io.BytesIO(data), allow_pickle=False)
    if list(grid.shape) != doc.get("shape"):
        raise ExportError(f"{npy_path}: shape {list(grid.shape)} differs from {path.name}")
    return grid, doc


def _rgb(hex_color: str) -> tuple[int, int, int]:
    h = hex_color.lstrip("#")
    return int(h[0:2], 16), int(h[2:4], 16), int(h[4:6], 16)


__all__ = [
    "BLOCK_CELLS",
    "MAX_CELLS",
    "cells_in_words",
    "grid_paths",
    "occupancy",
    "read_grid",
    "write_grid",
]
