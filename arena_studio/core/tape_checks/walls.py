"""Agent centres inside walls or obstacles, and moves that pass through them.

A centre is misplaced when it lies outside the open area (rooms minus obstacles) by more
than :data:`DEPTH_TOLERANCE`; the depth reported is its distance to the open area. A move
between two well-placed steps passes through a wall when the segment joining the centres
properly crosses a wall segment (room walls and obstacle outlines of the open area; doorways
are open because touching rooms are joined first). The crossing test is the usual
orientation test for two segments, done in numpy over all moves and walls at once.
"""

from __future__ import annotations

from typing import Any

import numpy as np
import shapely

from arena_studio.core.geometry import obstacle_geometry, open_area, wall_segments
from arena_studio.core.scene import Scene
from arena_studio.core.tape.episode import Episode
from arena_studio.core.tape_checks.findings import TapeFinding, place, runs, tape_finding

#: metres a centre may sit outside the open area before it counts (float noise, thin walls)
DEPTH_TOLERANCE = 1e-3
#: moves x walls compared per numpy block (memory bound)
BLOCK = 1 << 20


class SceneWalls:
    """The geometry the checks need, built once per scene."""

    def __init__(self, scene: Scene) -> None:
        self.scene = scene
        self.area = open_area(scene)
        self.walls = wall_segments(scene)
        self.obstacles = [(o.id, obstacle_geometry(o)) for o in scene.obstacles]

    def outside(self, xy: np.ndarray) -> np.ndarray:
        """Depth outside the open area of each point (0 inside), shape (N,)."""
        if self.area.is_empty:
            return np.full(len(xy), np.inf)
        inside = shapely.intersects_xy(self.area, xy[:, 0], xy[:, 1])
        depth = np.zeros(len(xy))
        if (~inside).any():
            pts = shapely.points(xy[~inside])
            depth[~inside] = shapely.distance(self.area, pts)
        return depth

    def obstacle_at(self, xy: Any) -> str | None:
        """The obstacle containing the point, if any."""
        for oid, geom in self.obstacles:
            if shapely.intersects_xy(geom, float(xy[0]), float(xy[1])):
                return oid
        return None

    def wall_name(self, k: int) -> str:
        """Which object wall segment ``k`` belongs to: an obstacle, else the room walls."""
        mid = shapely.Point(self.walls[k].mean(axis=0))
        for oid, geom in self.obstacles:
            if geom.boundary.distance(mid) < 1e-6:
                return f"obstacle {oid}"
        for room in self.scene.rooms:
            if shapely.LineString([*room.outline, room.outline[0]]).distance(mid) < 1e-6:
                return f"a wall of room {room.id}"
        return "a room wall"


def crossings(p: np.ndarray, q: np.ndarray, walls: np.ndarray) -> np.ndarray:
    """For moves p -> q (M, 2), the index of a wall segment each properly crosses, or -1."""
    out = np.full(len(p), -1, dtype=np.int64)
    if len(walls) == 0 or len(p) == 0:
        return out
    a, b = walls[:, 0], walls[:, 1]  # (N, 2)
    rows = max(1, BLOCK // len(walls))
    for lo in range(0, len(p), rows):
        pp, qq = p[lo : lo + rows, None, :], q[lo : lo + rows, None, :]
        d1 = _cross(a, b, pp)
        d2 = _cross(a, b, qq)
        d3 = _cross(pp, qq, a)
        d4 = _cross(pp, qq, b)
        hit = (d1 * d2 < 0) & (d3 * d4 < 0)
        any_hit = hit.any(axis=1)
        out[lo : lo + rows][any_hit] = np.argmax(hit[any_hit], axis=1)
    return out


def _cross(o: np.ndarray, u: np.ndarray, v: np.ndarray) -> np.ndarray:
    """z of (u - o) x (v - o), broadcast: its sign says which side of o->u the point v is."""
    return (u[..., 0] - o[..., 0]) * (v[..., 1] - o[..., 1]) - (u[..., 1] - o[..., 1]) * (
        v[..., 0] - o[..., 0]
    )


def check_walls(geo: SceneWalls, ep: Episode) -> list[TapeFinding]:
    """Misplaced centres (one finding per run of steps) and wall crossings of one episode."""
    found: list[TapeFinding] = []
    t, a = ep.poses.shape[:2]
    xy = ep.poses[:, :, :2]
    depth = geo.outside(xy.reshape(-1, 2)).reshape(t, a)
    bad = depth > DEPTH_TOLERANCE
    for k, agent in enumerate(geo.scene.agents):
        for first, n in runs(bad[:, k]):
            worst = first + int(np.argmax(depth[first : first + n, k]))
            obstacle = geo.obstacle_at(xy[first, k])
            code = "pose-in-obstacle" if obstacle else "pose-outside-rooms"
            what = f"inside obstacle {obstacle}" if obstacle else "outside every room"
            found.append(
                tape_finding(
                    code,
                    f"{place(ep.index, first, agent.id)}: centre {what}, up to "
                    f"{depth[worst, k]:.3f} m deep, for {n} step(s)",
                    episode=ep.index,
                    step=first,
                    agent=agent.id,
                    point=tuple(xy[first, k]),
                )
            )
        if t < 2:
            continue
        ok = ~bad[:-1, k] & ~bad[1:, k]
        moves = np.flatnonzero(ok)
        hits = crossings(xy[moves, k], xy[moves + 1, k], geo.walls)
        for m in np.flatnonzero(hits >= 0):
            s = int(moves[m]) + 1
            found.append(
                tape_finding(
                    "wall-crossing",
                    f"{place(ep.index, s, agent.id)}: passed through {geo.wall_name(hits[m])} "
                    f"between steps {s - 1} and {s}",
                    episode=ep.index,
                    step=s,
                    agent=agent.id,
                    point=tuple(xy[s, k]),
                )
            )
    return found


__all__ = ["DEPTH_TOLERANCE", "SceneWalls", "check_walls", "crossings"]
