"""Where landmark labels go so they stay readable: clear of walls, obstacles and each other.

Qt-free so the SVG export (core) and the QPainter stills (render) share one placement. The
caller measures its own text (a font in pixels, or an approximate width per character) and
hands over each label's box size in metres; this module only does geometry.

Each landmark gets a fixed list of candidate positions around its mark: first the one the
old fixed rule used (into the room along the wall's inward normal; right of a free mark), then
the eight compass positions at one and at two distances, the nearest in angle to the first one
first. A candidate is *clear* when its box lies inside the open area (rooms minus obstacles)
in sight of its mark (no wall between them), or, for a mark on a wall line, entirely outside
every room just beyond that wall; when it stays inside the frame; and when it overlaps
neither a label already placed nor another landmark's mark (nor a box the caller avoids);
and when no other landmark's mark is nearer to it than its own (so a reader pairs it with
the right mark).
Labels are placed most-constrained first (fewest clear candidates before any label is
placed; ties in scene order). Each takes its first clear candidate: inside the rooms before
outside, and one that leaves the usual place of every label still to come free before one
that does not. When nothing is clear the label takes the candidate with the least overlap
(walls crossed, area in another room, marks and labels covered): a label is never dropped.
The same input always gives the same output.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Literal

import numpy as np
import shapely
from shapely.geometry import Point
from shapely.geometry.base import BaseGeometry
from shapely.ops import unary_union

from arena_studio.core.geometry.regions import (
    inward_normals,
    open_area,
    per_thread_cache,
    polygon,
    walkable_area,
)
from arena_studio.core.scene.model import Landmark, Scene

Box = tuple[float, float, float, float]
Align = Literal["left", "center", "right"]
VAlign = Literal["above", "middle", "below"]

#: a component of a compass direction above this counts as pointing that way (cos 67.5 deg)
_AXIS = 0.38


@dataclass(frozen=True)
class Candidate:
    """One place for a label: its box (world metres, y up) and how text aligns in it."""

    box: Box
    align: Align
    angle: float  # direction from the mark, radians CCW from +x (orders the candidates)

    @property
    def anchor(self) -> tuple[float, float]:
        """The aligned edge's x (left, centre or right) at the box's vertical centre."""
        x0, y0, x1, y1 = self.box
        x = {"left": x0, "center": (x0 + x1) / 2, "right": x1}[self.align]
        return (x, (y0 + y1) / 2)


@dataclass(frozen=True)
class LabelPlacement:
    """The chosen place of one landmark's label."""

    box: Box  # (minx, miny, maxx, maxy), world metres
    anchor: tuple[float, float]  # see Candidate.anchor
    align: Align
    candidate: int  # index in the landmark's candidate list; 0 is the old fixed rule's place
    clear: bool  # False when no candidate was clear and the least-overlapping one was taken


def _box_at(ox: float, oy: float, w: float, h: float, align: Align, valign: VAlign) -> Box:
    x0 = ox if align == "left" else ox - w if align == "right" else ox - w / 2
    y0 = oy if valign == "above" else oy - h if valign == "below" else oy - h / 2
    return (x0, y0, x0 + w, y0 + h)


def _aligns(ux: float, uy: float) -> tuple[Align, VAlign]:
    align: Align = "left" if ux > _AXIS else "right" if ux < -_AXIS else "center"
    valign: VAlign = "above" if uy > _AXIS else "below" if uy < -_AXIS else "middle"
    return align, valign


def candidates(
    landmark: Landmark,
    normal: tuple[float, float],
    size: tuple[float, float],
    mark_radius: float,
    gap: float,
) -> list[Candidate]:
    """The candidate places of one label, in the order they are tried.

    ``size`` is the label box (width, height) in metres; the box keeps ``gap`` metres from
    the edge of a mark of radius ``mark_radius``.
    """
    w, h = size
    px, py = landmark.position
    d = mark_radius + gap
    out: list[Candidate] = []
    if landmark.mount == "wall":
        nx, ny = normal
        align: Align = "left" if nx > 0.5 else "right" if nx < -0.5 else "center"
        valign: VAlign = "middle" if abs(nx) > 0.5 else "above" if ny > 0 else "below"
        box = _box_at(px + d * nx, py + d * ny, w, h, align, valign)
        out.append(Candidate(box, align, math.atan2(ny, nx)))
    else:  # right of the mark, a little raised, as the fixed rule had it
        out.append(Candidate(_box_at(px + d, py + 0.6 * d, w, h, "left", "middle"), "left", 0.54))
    first = out[0].angle
    compass = sorted(
        range(8),
        key=lambda k: (abs(math.remainder(k * math.pi / 4 - first, 2 * math.pi)), k),
    )
    for reach in (d, d + h):
        for k in compass:
            ang = k * math.pi / 4
            ux, uy = math.cos(ang), math.sin(ang)
            align, valign = _aligns(ux, uy)
            box = _box_at(px + reach * ux, py + reach * uy, w, h, align, valign)
            out.append(Candidate(box, align, ang))
    return out


def _overlap(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Pairwise overlap areas of boxes a (..., 4) and b (M, 4): shape (..., M)."""
    a = a[..., None, :]
    dx = np.minimum(a[..., 2], b[:, 2]) - np.maximum(a[..., 0], b[:, 0])
    dy = np.minimum(a[..., 3], b[:, 3]) - np.maximum(a[..., 1], b[:, 1])
    return np.clip(dx, 0.0, None) * np.clip(dy, 0.0, None)


def _fixed_cost(flat: np.ndarray, fixed: np.ndarray, per: int) -> np.ndarray:
    """Summed overlap of each candidate box (N, 4) with the fixed boxes (F, 4), skipping
    candidate k's own mark (fixed row k // per). Only pairs that touch are measured (an
    R-tree query), so thousands of landmarks cost no (N, F) table."""
    if len(flat) == 0 or len(fixed) == 0:
        return np.zeros(len(flat))
    tree = shapely.STRtree(shapely.box(*fixed.T))
    cand, hit = tree.query(shapely.box(*flat.T), predicate="intersects")
    keep = hit != cand // per
    cand, hit = cand[keep], hit[keep]
    a, b = flat[cand], fixed[hit]
    dx = np.minimum(a[:, 2], b[:, 2]) - np.maximum(a[:, 0], b[:, 0])
    dy = np.minimum(a[:, 3], b[:, 3]) - np.maximum(a[:, 1], b[:, 1])
    area = np.clip(dx, 0.0, None) * np.clip(dy, 0.0, None)
    return np.bincount(cand, weights=area, minlength=len(flat))


def _outside_frame(boxes: np.ndarray, frame: Box | None) -> np.ndarray:
    """Area of each box (N, 4) that lies outside the frame."""
    if frame is None:
        return np.zeros(len(boxes))
    area = (boxes[:, 2] - boxes[:, 0]) * (boxes[:, 3] - boxes[:, 1])
    return area - _inside_frame_area(boxes, frame)


def _inside_frame_area(boxes: np.ndarray, frame: Box) -> np.ndarray:
    dx = np.minimum(boxes[:, 2], frame[2]) - np.maximum(boxes[:, 0], frame[0])
    dy = np.minimum(boxes[:, 3], frame[3]) - np.maximum(boxes[:, 1], frame[1])
    return np.clip(dx, 0.0, None) * np.clip(dy, 0.0, None)


def _nearest_own(flat: np.ndarray, pos: np.ndarray, per: int) -> np.ndarray:
    """Per candidate box (N, 4): no other landmark's mark is nearer the box than its own
    (row k belongs to landmark k // per), so a reader pairs the label with its own mark.
    One nearest-neighbour query on an R-tree: no (N, L) table for thousands of marks."""
    if len(pos) < 2 or len(flat) == 0:
        return np.ones(len(flat), bool)
    geoms = shapely.box(*flat.T)
    points = shapely.points(pos)
    own = shapely.distance(geoms, points[np.arange(len(flat)) // per])
    _pairs, nearest = shapely.STRtree(points).query_nearest(
        geoms, return_distance=True, all_matches=False
    )
    return np.asarray(own <= nearest + 1e-9, bool)


@dataclass
class _Walls:
    """The open area (shrunk by the clearance) and the rooms (grown by it), prepared."""

    inner: BaseGeometry
    rooms: BaseGeometry
    open: BaseGeometry  # rooms minus obstacles, not shrunk: what a sight line may cross
    floor: BaseGeometry  # the rooms, not grown
    room_parts: tuple[BaseGeometry, ...]  # each room on its own

    @staticmethod
    def of(scene: Scene, clearance: float) -> _Walls:
        return _walls(scene, clearance)

    @classmethod
    def build(cls, scene: Scene, clearance: float) -> _Walls:
        # copies, so preparing them leaves the shared cached geometry alone
        open_ = shapely.from_wkb(open_area(scene).wkb)
        floor = shapely.from_wkb(walkable_area(scene).wkb)
        inner, rooms = open_, floor
        if clearance > 0:
            inner, rooms = open_.buffer(-clearance), floor.buffer(clearance)
        for g in {id(g): g for g in (inner, rooms, open_, floor)}.values():
            shapely.prepare(g)
        parts = tuple(shapely.make_valid(polygon(r.outline)) for r in scene.rooms)
        return cls(inner, rooms, open_, floor, parts)

    def classify(self, boxes: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Per box: inside the open area; entirely outside every room."""
        if self.rooms.is_empty:  # nothing drawn to collide with
            return np.ones(len(boxes), bool), np.zeros(len(boxes), bool)
        geoms = shapely.box(boxes[:, 0], boxes[:, 1], boxes[:, 2], boxes[:, 3])
        inside = shapely.contains(self.inner, geoms)
        outside = ~shapely.intersects(self.rooms, geoms)
        return np.asarray(inside, bool), np.asarray(outside, bool)

    def in_sight(
        self, boxes: np.ndarray, starts: np.ndarray, outward: np.ndarray
    ) -> tuple[np.ndarray, np.ndarray]:
        """Per box: the short line from its landmark (``starts``, just inside the room) to
        the box's nearest point stays in the open area; and for a box outside the rooms,
        the line from ``outward`` (just outside the wall) stays outside every room. A label
        across a wall from its mark (in the next room) would be read as that room's."""
        if self.rooms.is_empty:
            ones = np.ones(len(boxes), bool)
            return ones, ones
        near_in = np.clip(starts, boxes[:, :2], boxes[:, 2:])
        near_out = np.clip(outward, boxes[:, :2], boxes[:, 2:])
        seen_in = shapely.covers(self.open, shapely.linestrings(np.stack([starts, near_in], 1)))
        lines_out = shapely.linestrings(np.stack([outward, near_out], 1))
        seen_out = ~shapely.intersects(self.floor, lines_out)
        return np.asarray(seen_in, bool), np.asarray(seen_out, bool)

    def crossing_area(self, boxes: np.ndarray) -> np.ndarray:
        """Area of each box over walls or obstacles (0 for one wholly outside the rooms)."""
        if self.rooms.is_empty:
            return np.zeros(len(boxes))
        geoms = shapely.box(boxes[:, 0], boxes[:, 1], boxes[:, 2], boxes[:, 3])
        area = shapely.area(geoms)
        crossing = area - shapely.area(shapely.intersection(geoms, self.inner))
        outside = ~shapely.intersects(self.rooms, geoms)
        return np.where(outside, 0.0, np.asarray(crossing, dtype=np.float64))

    def foreign_area(self, boxes: np.ndarray, start: tuple[float, float]) -> np.ndarray:
        """Area of each box lying in rooms other than the one(s) its mark is in: a label
        half in the next room reads as that room's."""
        here = Point(start)
        home = [r for r in self.room_parts if r.covers(here)]
        if not home:
            return np.zeros(len(boxes))
        foreign = self.inner.difference(unary_union(home))
        geoms = shapely.box(boxes[:, 0], boxes[:, 1], boxes[:, 2], boxes[:, 3])
        return np.asarray(shapely.area(shapely.intersection(geoms, foreign)), dtype=np.float64)


@per_thread_cache(maxsize=32)
def _walls(scene: Scene, clearance: float) -> _Walls:
    """Cached per scene and thread: prepared geometry must not cross threads (GEOS #825)."""
    return _Walls.build(scene, clearance)


def start_marks(scene: Scene, arrow: float, radii: float = 1.0) -> list[Box]:
    """Boxes over the agents' start poses (the drawn start circle and its heading arrow),
    for labels to keep clear of. The arrow is ``arrow`` metres or ``radii`` agent radii
    long, whichever is longer."""
    out: list[Box] = []
    for agent in scene.agents:
        if agent.start.pose is not None:
            x, y, heading = agent.start.pose
            r = agent.radius
            length = max(arrow, radii * r)
            tx, ty = x + length * math.cos(heading), y + length * math.sin(heading)
            out.append((min(x - r, tx), min(y - r, ty), max(x + r, tx), max(y + r, ty)))
    return out


def place_labels(
    scene: Scene,
    sizes: Sequence[tuple[float, float]],
    mark_radius: float,
    gap: float,
    *,
    clearance: float = 0.0,
    frame: Box | None = None,
    avoid: Sequence[Box] = (),
    covered: Sequence[Box] = (),
) -> tuple[LabelPlacement, ...]:
    """Place every landmark's label (one per landmark, in scene order).

    ``sizes[i]`` is landmark i's label box (width, height) in metres, padding included.
    ``clearance`` keeps boxes that far from wall lines (half a drawn wall's width);
    ``frame`` is the visible world box (labels leaving it count as colliding); ``avoid``
    are further boxes to keep clear of (start marks, other text); ``covered`` are parts of
    the frame drawn over later (a viewer's legend), where a label counts as off the frame.
    """
    landmarks = scene.landmarks
    if len(sizes) != len(landmarks):
        raise ValueError(f"{len(sizes)} label sizes for {len(landmarks)} landmarks")
    if not landmarks:
        return ()
    normals = inward_normals(scene)
    cands = [
        candidates(lm, n, s, mark_radius, gap)
        for lm, n, s in zip(landmarks, normals, sizes, strict=True)
    ]
    per = len(cands[0])
    boxes = np.array([[c.box for c in cs] for cs in cands], dtype=np.float64)  # (L, C, 4)
    flat = boxes.reshape(-1, 4)
    walls = _Walls.of(scene, clearance)
    inside, outside = walls.classify(flat)
    # sight lines start a little off the landmark: into the room, and (wall landmarks only,
    # whose mark sits on the wall line) out of it
    step = 0.5 * mark_radius
    pos = np.array([lm.position for lm in landmarks], dtype=np.float64)
    nrm = np.array(normals, dtype=np.float64)
    on_wall = np.array([lm.mount == "wall" for lm in landmarks])
    starts = np.where(on_wall[:, None], pos + step * nrm, pos)
    seen_in, seen_out = walls.in_sight(
        flat, np.repeat(starts, per, axis=0), np.repeat(pos - step * nrm, per, axis=0)
    )
    # area under boxes drawn over the labels, (L, C): as unreadable as off the frame
    under = _overlap(boxes, np.asarray(covered, dtype=np.float64).reshape(-1, 4)).sum(axis=2)
    off_frame = (_outside_frame(flat, frame) + under.reshape(-1)) > 1e-12
    inside = (inside & seen_in & ~off_frame).reshape(-1, per)
    outside = (outside & seen_out & ~off_frame).reshape(-1, per) & on_wall[:, None]
    hidden = ~(seen_in | seen_out).reshape(-1, per)
    areas = (boxes[..., 2] - boxes[..., 0]) * (boxes[..., 3] - boxes[..., 1])

    r = mark_radius
    marks = np.array([(x - r, y - r, x + r, y + r) for x, y in (lm.position for lm in landmarks)])
    fixed = np.concatenate([marks, np.asarray(avoid, dtype=np.float64).reshape(-1, 4)])
    # overlap of each candidate with every mark and avoided box (own mark excluded)
    fixed_cost = _fixed_cost(flat, fixed, per).reshape(-1, per)
    own = _nearest_own(flat, pos, per).reshape(-1, per)
    statically_clear = (inside | outside) & (fixed_cost <= 1e-12) & own
    order = sorted(range(len(landmarks)), key=lambda i: (int(statically_clear[i].sum()), i))

    # a label still to come whose usual place is clear keeps it if it can: a moving label
    # avoids those places before it settles for any free one
    usual = boxes[:, 0][statically_clear[:, 0]]
    usual_owner = np.flatnonzero(statically_clear[:, 0])
    pending = np.ones(len(landmarks), bool)
    placed = np.zeros((0, 4))
    chosen: dict[int, LabelPlacement] = {}
    for i in order:
        pending[i] = False
        label_cost = _overlap(boxes[i], placed).sum(axis=1)
        free = statically_clear[i] & (label_cost <= 1e-12)
        blocks = (_overlap(boxes[i], usual)[:, pending[usual_owner]] > 1e-12).any(axis=1)
        pick: int | None = None
        for tier in (inside[i] & ~blocks, outside[i] & ~blocks, inside[i], outside[i]):
            hit = np.flatnonzero(free & tier)
            if len(hit):
                pick = int(hit[0])
                break
        clear = pick is not None
        if pick is None:
            cost = (
                walls.crossing_area(boxes[i])
                + walls.foreign_area(boxes[i], (float(starts[i, 0]), float(starts[i, 1])))
                + 3.0 * (_outside_frame(boxes[i], frame) + under[i])  # cut off: unreadable
                + fixed_cost[i]
                + 2.0 * label_cost  # text over text is the worst to read
                + hidden[i] * areas[i]  # a wall between label and mark: as bad as covered
                + ~own[i] * areas[i]  # nearer another mark: read as that landmark's
            )
            pick = int(np.argmin(cost))  # first of equals: deterministic
        cand = cands[i][pick]
        chosen[i] = LabelPlacement(cand.box, cand.anchor, cand.align, pick, clear)
        placed = np.vstack([placed, boxes[i, pick]])
    return tuple(chosen[i] for i in range(len(landmarks)))


__all__ = [
    "Align",
    "Box",
    "Candidate",
    "LabelPlacement",
    "VAlign",
    "candidates",
    "place_labels",
    "start_marks",
]
