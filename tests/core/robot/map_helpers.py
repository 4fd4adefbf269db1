"""A synthetic building map: an L-shaped room with a square pillar, drawn cell by cell."""

from __future__ import annotations

from pathlib import Path

import numpy as np
from shapely.geometry import Polygon, box

RES = 0.05  # metres per cell
# the L: 6 m x 4 m with the top-right 3 m x 2 m cut away; the pillar 0.6 m square
TRUE_ROOM = Polygon([(1, 1), (7, 1), (7, 3), (4, 3), (4, 5), (1, 5)])
TRUE_PILLAR = box(2.0, 1.8, 2.6, 2.4)
WIDTH, HEIGHT = 160, 120  # cells: 8 m x 6 m of image
FREE_V, WALL_V, UNKNOWN_V = 254, 0, 205


def draw_map() -> np.ndarray:
    """Grey image, row 0 at the top: unknown outside, 1-cell-row walls, free room, pillar."""
    img = np.full((HEIGHT, WIDTH), UNKNOWN_V, dtype=np.uint8)
    ys = (HEIGHT - 1 - np.arange(HEIGHT) + 0.5) * RES  # cell centre y of each image row
    xs = (np.arange(WIDTH) + 0.5) * RES
    gx, gy = np.meshgrid(xs, ys)
    wall = TRUE_ROOM.buffer(RES, join_style="mitre")
    for poly, value in ((wall, WALL_V), (TRUE_ROOM, FREE_V), (TRUE_PILLAR, WALL_V)):
        inside = _contains(poly, gx, gy)
        img[inside] = value
    return img


def draw_stairs_map() -> np.ndarray:
    """The map plus a triangular blob whose long side is a staircase of 16 cells."""
    img = draw_map()
    for i in range(16):
        img[70 + i, 60 : 61 + i] = WALL_V
    return img


def _contains(poly: Polygon, gx: np.ndarray, gy: np.ndarray) -> np.ndarray:
    import shapely

    return shapely.contains_xy(poly, gx, gy)


def write_pgm(path: Path, img: np.ndarray) -> None:
    """Binary PGM (Netpbm P5): 'P5', width, height, maxval 255, then the rows, top first."""
    h, w = img.shape
    path.write_bytes(f"P5\n{w} {h}\n255\n".encode("ascii") + img.tobytes())


def write_map(
    folder: Path, *, origin=(0.0, 0.0, 0.0), negate=0, img=None, name="floor", extra: str = ""
) -> Path:
    image = draw_map() if img is None else img
    write_pgm(folder / f"{name}.pgm", image)
    yaml_path = folder / f"{name}.yaml"
    yaml_path.write_text(
        f"image: {name}.pgm\nresolution: {RES}\norigin: [{origin[0]}, {origin[1]}, {origin[2]}]\n"
        f"negate: {negate}\noccupied_thresh: 0.65\nfree_thresh: 0.196\n{extra}",
        encoding="utf-8",
    )
    return yaml_path
