"""Build QPainterPaths of many polylines from numpy arrays in one call.

Adding points one by one from Python costs about a microsecond each; 256 agents with
200-step trails are 51,200 points a frame. Single paths come from pyqtgraph's
``arrayToQPath`` (a connect array says where each polyline ends), which fills Qt's path
stream with numpy at memory speed. A crowd's ~32 trail paths a frame are parsed from one
stream we write ourselves (:func:`grouped_rows_paths`): a call per path would cost ~40 us
each, about 1.3 ms of a 256-agent frame.
"""

from __future__ import annotations

import math
from functools import cache
from typing import Any

import numpy as np
from PySide6.QtCore import QByteArray, QDataStream, QIODevice, QLineF
from PySide6.QtGui import QPainterPath

#: Qt's stream layout of one path element (type int32, x double, y double) in the machine's
#: byte order, read by a stream set to that order (no swap)
_NATIVE = np.dtype([("type", "=i4"), ("x", "=f8"), ("y", "=f8")])
_MOVE_TO, _LINE_TO = 0, 1


@cache
def _array_to_path() -> Any:
    """pyqtgraph's path builder, imported on first use (pyqtgraph is slow to import)."""
    from pyqtgraph import arrayToQPath

    return arrayToQPath


def polylines_path(xy: np.ndarray, starts: np.ndarray) -> QPainterPath:
    """One path of several polylines.

    ``xy`` (N, 2) pixel coordinates; ``starts`` (N,) bool, True where a new polyline begins
    (the first point always begins one). Non-finite points are dropped; a dropped point
    breaks its polyline.
    """
    xy = np.asarray(xy, dtype=np.float64).reshape(-1, 2)
    starts = np.asarray(starts, dtype=bool).reshape(-1).copy()
    if len(xy) == 0:
        return QPainterPath()
    finite = np.asarray(np.isfinite(xy).all(axis=1))
    if not finite.all():
        broken = np.zeros(len(xy), dtype=bool)
        broken[1:] = ~finite[:-1]
        starts |= broken
        xy, starts = xy[finite], starts[finite]
        if len(xy) == 0:
            return QPainterPath()
    connect = np.ones(len(xy), dtype=bool)  # connect[i]: a line from point i to i + 1
    connect[:-1] = ~starts[1:]
    return _array_to_path()(xy[:, 0], xy[:, 1], connect=connect)


def segments_path(a: np.ndarray, b: np.ndarray) -> QPainterPath:
    """Independent line segments from ``a[i]`` to ``b[i]`` ((K, 2) pixel arrays) as one path."""
    a = np.asarray(a, dtype=np.float64).reshape(-1, 2)
    b = np.asarray(b, dtype=np.float64).reshape(-1, 2)
    xy = np.empty((2 * len(a), 2), dtype=np.float64)
    xy[0::2], xy[1::2] = a, b
    starts = np.zeros(len(xy), dtype=bool)
    starts[0::2] = True
    return polylines_path(xy, starts)


def rows_path(world: np.ndarray, scale: float, offset_x: float, offset_y: float) -> QPainterPath:
    """One path with one polyline per row of ``world`` ((R, N, 2) metres, y up), mapped to
    pixels as ``ViewTransform.map_array`` does (same arithmetic, so the same pixels)."""
    rows, n = world.shape[:2]
    if rows == 0 or n == 0:
        return QPainterPath()
    px = np.empty((rows, n, 2), dtype=np.float64)
    px[..., 0] = offset_x + scale * world[..., 0]
    px[..., 1] = offset_y - scale * world[..., 1]
    starts = np.zeros((rows, n), dtype=bool)
    starts[:, 0] = True
    if not np.isfinite(px.sum()):
        return polylines_path(px.reshape(-1, 2), starts.reshape(-1))
    connect = np.ones((rows, n), dtype=bool)
    connect[:, -1] = False
    return _array_to_path()(px[..., 0].ravel(), px[..., 1].ravel(), connect=connect.ravel())


_NATIVE_ORDER = (
    QDataStream.ByteOrder.LittleEndian if np.little_endian else QDataStream.ByteOrder.BigEndian
)


def grouped_rows_paths(
    groups: list[np.ndarray],
    windows: list[slice | np.ndarray],
    scale: float,
    offset_x: float,
    offset_y: float,
) -> list[list[QPainterPath]]:
    """``[w][g]`` = :func:`rows_path` of ``groups[g][:, windows[w]]`` (each group (R_g, T, 2)
    metres), all parsed from one stream with one numpy fill per window: a crowd's trails are
    ~32 paths a frame (colour groups x fade bands), and a stream each cost most of their
    Python time (~40 us a path)."""
    sizes = [len(g) for g in groups]
    ends = np.cumsum(sizes).tolist()
    blobs: list[bytes] = []
    fallback: dict[tuple[int, int], QPainterPath] = {}
    for w, window in enumerate(windows):
        world = np.concatenate([g[:, window] for g in groups]) if groups else np.zeros((0, 0, 2))
        n = world.shape[1] if world.ndim == 3 else 0
        if n == 0 or not np.isfinite(world.sum()):
            for k, g in enumerate(groups):
                fallback[(w, k)] = rows_path(g[:, window], scale, offset_x, offset_y)
            continue
        elements = np.empty(world.shape[:2], dtype=_NATIVE)
        elements["type"] = _LINE_TO
        elements["type"][:, 0] = _MOVE_TO
        elements["x"] = offset_x + scale * world[..., 0]
        elements["y"] = offset_y - scale * world[..., 1]
        raw = elements.tobytes()
        row_bytes = 20 * n
        for k, rows in enumerate(sizes):
            start = ends[k] - rows
            blobs.append(np.array([rows * n], dtype="=i4").tobytes())
            if rows:  # Qt reads an empty path as its count alone
                blobs.append(raw[start * row_bytes : ends[k] * row_bytes])
                blobs.append(np.array([(rows - 1) * n, 0], dtype="=i4").tobytes())
    stream = None
    if blobs:
        data = QByteArray(b"".join(blobs))
        stream = QDataStream(data, QIODevice.OpenModeFlag.ReadOnly)
        stream.setByteOrder(_NATIVE_ORDER)
    out: list[list[QPainterPath]] = []
    for w in range(len(windows)):
        row = []
        for k in range(len(groups)):
            path = fallback.get((w, k))
            if path is None:
                path = QPainterPath()
                stream >> path  # type: ignore[operator]  # the stubs miss QDataStream >> QPainterPath
            row.append(path)
        out.append(row)
    del stream
    return out


#: Qt's raster engine strokes a wide antialiased path whose pieces span more than ~30 px
#: several times slower per point than short pieces (measured here, 1.6 px pen: a 22 px
#: piece ~3 us, a 48 px piece ~16 us, a whole 200-step trail ~500 us)
WIDE_PIECE_PX = 24.0
#: a 1-pixel antialiased line steeper than 45 degrees is drawn as pieces at most this tall
HAIRLINE_PIECE_PX = 32.0


def line_pieces(x0: float, y0: float, x1: float, y1: float, width: float = 2.0) -> list[QLineF]:
    """One straight line as collinear pieces, for ``drawLines``, cut where Qt's raster engine
    needs it to stay fast (measured here, 600 px lines, flat caps so pieces abut unblended):

    - pens wider than 1 px: pieces about :data:`WIDE_PIECE_PX` long (a whole line 150-550 us,
      in pieces ~30 us);
    - 1 px pens (Qt's hairline stroker): a line up to 45 degrees from horizontal stays whole
      (~20 us); a steeper one costs ~400 us whole and ~12 us in pieces at most
      :data:`HAIRLINE_PIECE_PX` tall.
    """
    dx, dy = x1 - x0, y1 - y0
    if width <= 1.0:
        n = 1 if abs(dy) <= abs(dx) else max(1, math.ceil(abs(dy) / HAIRLINE_PIECE_PX))
    else:
        n = max(1, int(math.hypot(dx, dy) // WIDE_PIECE_PX))
    if n == 1:
        return [QLineF(x0, y0, x1, y1)]
    xs = [x0 + dx * k / n for k in range(n)] + [x1]  # plain floats: a few pieces per line
    ys = [y0 + dy * k / n for k in range(n)] + [y1]
    return [QLineF(xs[k], ys[k], xs[k + 1], ys[k + 1]) for k in range(n)]
