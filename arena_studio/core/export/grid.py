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

import io
import math
from pathlib import Path

import numpy as np
import shapely

from arena_studio.core.export import ExportError
from arena_studio.core.export.meta import provenance, write_export_bytes, write_json_atomic
from arena_studio.core.export.png import encode_png
from arena_studio.core.geometry.regions import bounds, free_space, open_area
from arena_studio.core.scene.model import Scene

#: Largest grid written (cells); a finer resolution is refused with a reason.
MAX_CELLS = 40_000_000


def occupancy(
    scene: Scene, resolution: float, clearance: float = 0.0
) -> tuple[np.ndarray, tuple[float, float]]:
    """(rows, cols) uint8 grid (0 free, 1 blocked) and its origin (lower-left corner).

    ``clearance``: metres a free cell's centre keeps from walls and obstacles (0: none)."""
    if not (isinstance(resolution, int | float) and math.isfinite(resolution) and resolution > 0):
        raise ExportError(f"--resolution must be a number of metres > 0, got {resolution!r}")
    if not (isinstance(clearance, int | float) and math.isfinite(clearance) and clearance >= 0):
        raise ExportError(f"--clearance must be a number of metres >= 0, got {clearance!r}")
    minx, miny, maxx, maxy = bounds(scene)
    cols = max(1, math.ceil((maxx - minx) / resolution - 1e-9))
    rows = max(1, math.ceil((maxy - miny) / resolution - 1e-9))
    if rows * cols > MAX_CELLS:
        raise ExportError(
            f"a {resolution:g} m grid of this scene has {rows} x {cols} cells, more than "
            f"{MAX_CELLS}; choose a coarser --resolution"
        )
    xs = minx + (np.arange(cols) + 0.5) * resolution
    ys = miny + (np.arange(rows) + 0.5) * resolution
    gx, gy = np.meshgrid(xs, ys)
    # the same free space the reachability checks and the planner use for an agent this size
    area = free_space(scene, clearance) if clearance > 0 else open_area(scene)
    if area.is_empty:
        free = np.zeros(gx.shape, dtype=bool)
    else:
        shapely.prepare(area)
        free = shapely.contains_xy(area, gx, gy)
    return np.where(free, 0, 1).astype(np.uint8), (float(minx), float(miny))


def _paths(out: Path) -> tuple[Path, Path, Path]:
    base = out.with_suffix("") if out.suffix.lower() in (".npy", ".png", ".json") else out
    return (
        base.with_name(base.name + ".npy"),
        base.with_name(base.name + ".png"),
        base.with_name(base.name + ".json"),
    )


def write_grid(scene: Scene, out: Path, resolution: float, clearance: float = 0.0) -> list[Path]:
    from arena_studio.core.export.svg import palette

    grid, origin = occupancy(scene, resolution, clearance)
    npy_path, png_path, json_path = _paths(out)
    buffer = io.BytesIO()
    np.save(buffer, grid, allow_pickle=False)
    write_export_bytes(npy_path, buffer.getvalue())

    colors = palette("light")
    lut = np.array(
        [_rgb(colors["room_fill"]), _rgb(colors["wall"])], dtype=np.uint8
    )  # 0 free, 1 blocked
    meta = provenance(scene, "grid")
    png = encode_png(
        lut[grid[::-1]], {"content_hash": meta["content_hash"], "caution": meta["caution"]}
    )
    write_export_bytes(png_path, png)

    write_json_atomic(
        json_path,
        {
            **meta,
            "grid": npy_path.name,
            "preview": png_path.name,
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
        },
    )
    return [npy_path, png_path, json_path]


def _rgb(hex_color: str) -> tuple[int, int, int]:
    h = hex_color.lstrip("#")
    return int(h[0:2], 16), int(h[2:4], 16), int(h[4:6], 16)
