"""A fast point-in-free-space test that answers exactly like ``shapely.intersects_xy``.

Testing millions of recorded centres one by one against a prepared polygon costs about 50 ns
a point. Most centres lie far from any wall, so the bounding box of the geometry is cut into
a grid once; each cell (grown by :data:`CELL_MARGIN`) is classified with GEOS as *covered*
(every point of it lies in the geometry), *disjoint* (none does) or *mixed*. A point in a
covered or disjoint cell gets its answer from the table; a point in a mixed cell, or not
finite, is asked of GEOS itself. A point off the grid is clamped into an edge cell, which
reaches past the geometry's bounds and so is never covered: the point is either in a
disjoint cell (and, being beyond the bounds, outside) or asked of GEOS. The answers are
therefore the same as ``shapely.intersects_xy(geometry, x, y)`` point for point
(tests/core/tape/test_tape_bulk.py checks them against GEOS near every boundary).

A geometry that *is* an axis-aligned rectangle (GEOS finds it topologically equal to the box of
its bounds; an empty room, a room's free space shrunk by an agent's radius) needs no grid: its
points are exactly those of the closed box, so four comparisons answer every point, and a
number that is not finite fails them as it fails GEOS (tests/core/geometry/test_inside_test_box.py).
"""

from __future__ import annotations

from typing import Any

import numpy as np
import shapely

#: cells are grown by this much (m) before classification, so a point whose cell index is off
#: by one through rounding still lies inside the cell that decided it
CELL_MARGIN = 1e-6
#: at most this many cells along each axis
MAX_CELLS = 128
#: fewer points than this go straight to GEOS (building the grid would cost more)
MIN_POINTS = 4096

#: fewer points than this skip the grid once it is built
FEW_POINTS = 64
#: each mixed cell is split into this many sub-cells along each axis
SUB_CELLS = 8
#: no sub-grids when they would hold more sub-cells than this (building costs ~1 us each)
MAX_SUB_CELLS = 1 << 16

_DISJOINT, _COVERED, _MIXED = 0, 1, 2


class InsideTest:
    """``contains_xy(x, y)`` == ``shapely.intersects_xy(geometry, x, y)``, faster on many points."""

    def __init__(self, geometry: Any) -> None:
        self.geometry = geometry
        shapely.prepare(geometry)
        self._table: np.ndarray | None = None
        self._grid: tuple[float, float, float, float, int, int] | None = None
        self._flat = np.zeros(0, dtype=np.uint8)
        #: (x0, y0, x1, y1) of a closed box GEOS says the geometry covers, or None
        self._box: tuple[float, float, float, float] | None = None
        #: True when the geometry is exactly that closed box (no grid is built then)
        self._exact_box = False
        #: sub-cell classes of the mixed cells, and each cell's slot among them (-1: none)
        self._sub = np.zeros(0, dtype=np.uint8)
        self._slot = np.zeros(0, dtype=np.intp)

    def _build(self) -> None:
        geom = self.geometry
        if geom.is_empty:
            self._table = np.zeros((1, 1), dtype=np.uint8)
            self._flat = self._table.ravel()
            self._grid = (0.0, 0.0, 1.0, 1.0, 1, 1)
            return
        minx, miny, maxx, maxy = geom.bounds
        if geom.geom_type == "Polygon" and shapely.equals(geom, shapely.box(*geom.bounds)):
            # the same point set as the closed box of its bounds: comparisons decide exactly
            self._box = (minx, miny, maxx, maxy)
            self._exact_box = True
            self._table = np.zeros((1, 1), dtype=np.uint8)
            return
        minx, miny = minx - 2 * CELL_MARGIN, miny - 2 * CELL_MARGIN
        maxx, maxy = maxx + 2 * CELL_MARGIN, maxy + 2 * CELL_MARGIN
        nx = int(min(MAX_CELLS, max(1, np.ceil((maxx - minx) / 0.1))))
        ny = int(min(MAX_CELLS, max(1, np.ceil((maxy - miny) / 0.1))))
        hx, hy = (maxx - minx) / nx, (maxy - miny) / ny
        ix, iy = np.meshgrid(np.arange(nx), np.arange(ny), indexing="ij")
        x0 = minx + ix.ravel() * hx - CELL_MARGIN
        y0 = miny + iy.ravel() * hy - CELL_MARGIN
        boxes = shapely.box(x0, y0, x0 + hx + 2 * CELL_MARGIN, y0 + hy + 2 * CELL_MARGIN)
        covered = shapely.covers(geom, boxes)
        disjoint = shapely.disjoint(geom, boxes)
        table = np.full(boxes.shape, _MIXED, dtype=np.uint8)
        table[covered] = _COVERED
        table[disjoint & ~covered] = _DISJOINT
        self._table = table.reshape(nx, ny)
        self._flat = table
        self._grid = (minx, miny, 1.0 / hx, 1.0 / hy, nx, ny)
        self._build_sub(minx, miny, hx, hy, ny)
        found = _largest_rectangle(self._table == _COVERED)
        if found is not None:
            i0, j0, i1, j1 = found  # cells i0..i1 along x, j0..j1 along y
            box = (minx + i0 * hx, miny + j0 * hy, minx + (i1 + 1) * hx, miny + (j1 + 1) * hy)
            # the covered cells were grown by CELL_MARGIN, so their union holds this box; GEOS
            # confirms it, and only then do points in the box skip the grid
            if shapely.covers(geom, shapely.box(*box)):
                self._box = box

    def _build_sub(self, minx: float, miny: float, hx: float, hy: float, ny: int) -> None:
        """Split every mixed cell into SUB_CELLS x SUB_CELLS sub-cells, classified like the
        cells (grown by CELL_MARGIN), so that far fewer points near walls reach GEOS."""
        mixed = np.flatnonzero(self._flat == _MIXED)
        if not mixed.size or mixed.size * SUB_CELLS * SUB_CELLS > MAX_SUB_CELLS:
            return
        ci, cj = np.divmod(mixed, ny)
        k = np.arange(SUB_CELLS)
        bx = minx + ci[:, None, None] * hx + k[None, :, None] * (hx / SUB_CELLS)
        by = miny + cj[:, None, None] * hy + k[None, None, :] * (hy / SUB_CELLS)
        bx, by = np.broadcast_arrays(bx, by)
        x0 = bx.ravel() - CELL_MARGIN
        y0 = by.ravel() - CELL_MARGIN
        boxes = shapely.box(
            x0, y0, x0 + hx / SUB_CELLS + 2 * CELL_MARGIN, y0 + hy / SUB_CELLS + 2 * CELL_MARGIN
        )
        covered = shapely.covers(self.geometry, boxes)
        disjoint = shapely.disjoint(self.geometry, boxes)
        sub = np.full(boxes.shape, _MIXED, dtype=np.uint8)
        sub[covered] = _COVERED
        sub[disjoint & ~covered] = _DISJOINT
        self._sub = sub
        self._slot = np.full(self._flat.size, -1, dtype=np.intp)
        self._slot[mixed] = np.arange(mixed.size)

    def contains_xy(self, x: Any, y: Any) -> np.ndarray:
        xs = np.asarray(x, dtype=np.float64)
        ys = np.asarray(y, dtype=np.float64)
        if xs.size < MIN_POINTS:
            return np.asarray(shapely.intersects_xy(self.geometry, xs, ys))
        if self._table is None:
            self._build()
        if self._box is None or xs.shape != ys.shape:
            if self._exact_box:
                return self._in_box(*np.broadcast_arrays(xs, ys))
            return self._grid_contains(xs, ys)
        # most centres lie in the covered box: four comparisons settle them, and only the rest
        # go through the grid (a point in the closed box is covered, so it intersects)
        inside = self._in_box(xs, ys)
        if self._exact_box:
            return inside
        rest = np.flatnonzero(~inside)
        if rest.size:
            flat = inside.reshape(-1)  # a view: inside is a new contiguous array
            flat[rest] = self._grid_contains(xs.reshape(-1)[rest], ys.reshape(-1)[rest])
        return inside

    def outside_flat(self, x: Any, y: Any) -> np.ndarray:
        """Ascending flat (C-order) indices of the points ``contains_xy`` answers False for,
        ``np.flatnonzero(~contains_xy(x, y))`` without the full answer array: only the points
        outside the covered box are looked at again. ``x`` and ``y`` have one shape."""
        xs = np.asarray(x, dtype=np.float64)
        ys = np.asarray(y, dtype=np.float64)
        if xs.shape != ys.shape:
            raise ValueError(f"x and y differ in shape: {xs.shape} and {ys.shape}")
        if xs.size >= MIN_POINTS and self._table is None:
            self._build()
        if xs.size < MIN_POINTS or self._box is None:
            return np.flatnonzero(~self.contains_xy(xs, ys))
        inside = self._in_box(xs, ys)
        np.logical_not(inside, out=inside)
        rest = np.flatnonzero(inside)
        if self._exact_box or not rest.size:
            return rest
        found = self._grid_contains(xs.reshape(-1)[rest], ys.reshape(-1)[rest])
        return rest[~found]

    def _in_box(self, xs: np.ndarray, ys: np.ndarray) -> np.ndarray:
        """Points in the closed box ``_box`` (False for NaN: every comparison fails)."""
        assert self._box is not None
        x0, y0, x1, y1 = self._box
        inside = np.greater_equal(xs, x0)
        part = np.less_equal(xs, x1)
        inside &= part
        np.greater_equal(ys, y0, out=part)
        inside &= part
        np.less_equal(ys, y1, out=part)
        inside &= part
        return inside

    def _grid_contains(self, xs: np.ndarray, ys: np.ndarray) -> np.ndarray:
        if xs.size < FEW_POINTS or self._table is None:
            return np.asarray(shapely.intersects_xy(self.geometry, xs, ys))
        assert self._table is not None and self._grid is not None
        minx, miny, sx, sy, nx, ny = self._grid
        # a cell index clamped into the grid is safe: edge cells reach past the geometry's
        # bounds, so they are never "covered", and a clamped point beyond them is outside
        fx = (xs - minx) * sx
        fy = (ys - miny) * sy
        np.clip(fx, 0.0, nx - 0.5, out=fx)
        np.clip(fy, 0.0, ny - 0.5, out=fy)
        finite = np.isfinite(fx)
        finite &= np.isfinite(fy)
        all_finite = bool(finite.all())
        if not all_finite:
            fx[~finite] = 0.0
            fy[~finite] = 0.0
        flat = fx.astype(np.intp)
        flat *= ny
        flat += fy.astype(np.intp)
        cls = self._flat.take(flat)
        out = cls == _COVERED
        unsure = cls == _MIXED
        if not all_finite:
            unsure |= ~finite
        if unsure.any():
            where = np.nonzero(unsure)
            out[where] = self._fine_contains(xs[where], ys[where], flat[where])
        return out

    def _fine_contains(self, xs: np.ndarray, ys: np.ndarray, cells: np.ndarray) -> np.ndarray:
        """Points of mixed cells (``cells``: their flat cell index): a point off the grid lies
        beyond the geometry's bounds and is outside; the cell's sub-grid decides points in
        covered or disjoint sub-cells; GEOS the rest (and every point that is not a number)."""
        assert self._grid is not None
        minx, miny, sx, sy, nx, ny = self._grid
        slot = self._slot.take(cells) if self._slot.size else np.full(cells.shape, -1)
        fx = (xs - minx) * sx
        fy = (ys - miny) * sy
        on_grid = (fx >= 0) & (fx < nx) & (fy >= 0) & (fy < ny)  # False for NaN
        # off the grid means beyond the geometry's bounds (the grid reaches past them): outside
        off_grid = (fx < 0) | (fx >= nx) | (fy < 0) | (fy >= ny)
        ok = on_grid & (slot >= 0)
        out = np.zeros(xs.shape, dtype=bool)
        ask = ~(ok | off_grid)
        if ok.any():
            k = np.flatnonzero(ok)
            fxk, fyk = fx[k], fy[k]
            si = np.clip(((fxk - np.floor(fxk)) * SUB_CELLS).astype(np.intp), 0, SUB_CELLS - 1)
            sj = np.clip(((fyk - np.floor(fyk)) * SUB_CELLS).astype(np.intp), 0, SUB_CELLS - 1)
            cls = self._sub.take((slot[k] * SUB_CELLS + si) * SUB_CELLS + sj)
            out[k] = cls == _COVERED
            ask[k[cls == _MIXED]] = True
        if ask.any():
            where = np.flatnonzero(ask)
            out[where] = shapely.intersects_xy(self.geometry, xs[where], ys[where])
        return out


def _largest_rectangle(mask: np.ndarray) -> tuple[int, int, int, int] | None:
    """(i0, j0, i1, j1) of the largest all-True rectangle of a 2-D mask (inclusive), or None.

    Row by row, the heights of True runs ending in that row form a histogram whose largest
    rectangle is found with a stack (the usual maximal-rectangle method); at most 128 x 128.
    """
    rows, cols = mask.shape
    heights = np.zeros(cols, dtype=np.int64)
    best: tuple[int, int, int, int] | None = None
    best_area = 0
    for i in range(rows):
        heights = np.where(mask[i], heights + 1, 0)
        h = [*heights.tolist(), 0]
        stack: list[int] = []
        for j, hj in enumerate(h):
            while stack and h[stack[-1]] >= hj:
                top = stack.pop()
                left = stack[-1] + 1 if stack else 0
                area = h[top] * (j - left)
                if area > best_area:
                    best_area = area
                    best = (i - h[top] + 1, left, i, j - 1)
            stack.append(j)
    return best


__all__ = ["InsideTest"]
