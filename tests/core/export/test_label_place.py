"""Landmark label placement (core.export.label_place) checked with shapely/GEOS.

Reference: shapely 2 (GEOS) as the reference library for the OGC Simple Features predicates
(OGC 06-103r4): a box is clear of the walls when it is ``within`` the open area (rooms minus
obstacles) or ``disjoint`` from every room; two boxes collide when their interiors meet,
DE-9IM pattern ``T********`` (``relate_pattern``), so boxes that only touch do not. Layouts
are small ones built here (a narrow corridor, two marks side by side, a mark on a wall).
"""

from __future__ import annotations

import math
import re
import xml.etree.ElementTree as ET
from dataclasses import replace

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from shapely.geometry import Point, Polygon, box
from shapely.geometry.base import BaseGeometry

from arena_studio.core.export.label_place import (
    LabelPlacement,
    candidates,
    place_labels,
    start_marks,
)
from arena_studio.core.export.svg import svg_bytes
from arena_studio.core.geometry.regions import inward_normals, open_area, walkable_area
from arena_studio.core.resources import demo_path
from arena_studio.core.scene.model import (
    Agent,
    Landmark,
    Obstacle,
    Room,
    Scene,
    Start,
    load_scene,
)

MARK = 0.1
GAP = 0.1
INTERIORS_MEET = "T********"  # DE-9IM, OGC 06-103r4 section 6.1.15


def _scene(
    rooms: list[list[tuple[float, float]]],
    landmarks: list[Landmark],
    obstacles: tuple[Obstacle, ...] = (),
) -> Scene:
    agent = Agent("a1", 0.2, 1.0, 1.0, Start(pose=(0.5, 0.5, 0.0)))
    return Scene(
        name="labels",
        rooms=tuple(Room(f"r{i}", tuple(r)) for i, r in enumerate(rooms)),
        obstacles=obstacles,
        landmarks=tuple(landmarks),
        agents=(agent,),
    )


def _free(i: int, x: float, y: float, label: str = "") -> Landmark:
    return Landmark(f"l{i}", label or f"landmark {i}", (x, y), 0.3, "free")


def _geom(p: LabelPlacement) -> Polygon:
    return box(*p.box)


def _clear_of_walls(g: BaseGeometry, scene: Scene, on_wall: bool = True) -> bool:
    """Inside the open area, or (for a mark on a wall line) wholly outside the rooms;
    shapely within / disjoint (OGC 06-103r4 6.1.15)."""
    return bool(g.within(open_area(scene)) or (on_wall and g.disjoint(walkable_area(scene))))


def _mark(lm: Landmark) -> Polygon:
    x, y = lm.position
    return box(x - MARK, y - MARK, x + MARK, y + MARK)


def _assert_readable(scene: Scene, places: tuple[LabelPlacement, ...]) -> None:
    """Every box clear of walls, of other marks and of every other box (shapely)."""
    geoms = [_geom(p) for p in places]
    for i, g in enumerate(geoms):
        on_wall = scene.landmarks[i].mount == "wall"
        assert _clear_of_walls(g, scene, on_wall), (i, places[i])
        for j, lm in enumerate(scene.landmarks):
            if j != i:
                assert not g.relate_pattern(_mark(lm), INTERIORS_MEET), (i, j)
        for j in range(i + 1, len(geoms)):
            assert not g.relate_pattern(geoms[j], INTERIORS_MEET), (i, j)


def test_narrow_corridor_with_landmarks_close_together() -> None:
    # a 10 m x 1.2 m corridor; four marks 0.8 m apart, labels 1.2 m wide
    corridor = [(0.0, 0.0), (10.0, 0.0), (10.0, 1.2), (0.0, 1.2)]
    lms = [_free(i, 2.0 + 0.8 * i, 0.6) for i in range(4)]
    scene = _scene([corridor], lms)
    sizes = [(1.2, 0.35)] * 4
    places = place_labels(scene, sizes, MARK, GAP)
    assert all(p.clear for p in places)
    _assert_readable(scene, places)
    # the old fixed rule (right of each mark) would have overlapped the next label: shapely
    # finds the interiors of the first two default boxes meeting, so something had to move
    defaults = [
        candidates(lm, (0.0, 1.0), s, MARK, GAP)[0] for lm, s in zip(lms, sizes, strict=True)
    ]
    assert box(*defaults[0].box).relate_pattern(box(*defaults[1].box), INTERIORS_MEET)
    assert any(p.candidate != 0 for p in places)


def test_two_landmarks_side_by_side() -> None:
    room = [(0.0, 0.0), (10.0, 0.0), (10.0, 10.0), (0.0, 10.0)]
    left, right = _free(0, 4.0, 5.0, "left"), _free(1, 4.5, 5.0, "right")
    scene = _scene([room], [left, right])
    places = place_labels(scene, [(1.0, 0.3), (1.0, 0.3)], MARK, GAP)
    _assert_readable(scene, places)
    # the right label keeps its usual place; the left one moved off the right mark
    # (shapely: the default box of the left label covers the right mark)
    first = candidates(left, (0.0, 1.0), (1.0, 0.3), MARK, GAP)[0]
    assert box(*first.box).relate_pattern(_mark(right), INTERIORS_MEET)
    assert places[1].candidate == 0
    assert places[0].candidate != 0


def test_a_covered_box_counts_as_off_the_frame() -> None:
    # a viewer's legend drawn over the top right: the label moves out from under it, and when
    # no clear place is left it still prefers crossing a wall to hiding under the legend
    room = [(0.0, 0.0), (10.0, 0.0), (10.0, 10.0), (0.0, 10.0)]
    lm = _free(0, 8.0, 8.0, "gauge")
    scene = _scene([room], [lm])
    legend = (8.05, 7.0, 12.0, 12.0)  # covers the usual place, right of the mark
    usual = candidates(lm, (0.0, 1.0), (1.0, 0.3), MARK, GAP)[0]
    assert box(*usual.box).relate_pattern(box(*legend), INTERIORS_MEET)
    (place,) = place_labels(scene, [(1.0, 0.3)], MARK, GAP, covered=[legend])
    assert place.clear and not _geom(place).relate_pattern(box(*legend), INTERIORS_MEET)
    _assert_readable(scene, (place,))
    # only walls or the legend left: a tiny room around the mark, legend over its right half
    tight = _scene([[(7.6, 7.8), (8.4, 7.8), (8.4, 8.2), (7.6, 8.2)]], [lm])
    (forced,) = place_labels(tight, [(1.0, 0.3)], MARK, GAP, covered=[legend])
    assert not forced.clear
    assert not _geom(forced).relate_pattern(box(*legend), INTERIORS_MEET)


def test_landmark_on_a_wall_labels_into_the_room() -> None:
    room = [(0.0, 0.0), (10.0, 0.0), (10.0, 10.0), (0.0, 10.0)]
    west = Landmark("w", "west sign", (0.0, 5.0), 0.3, "wall")
    north = Landmark("n", "north sign", (5.0, 10.0), 0.3, "wall")
    scene = _scene([room], [west, north])
    places = place_labels(scene, [(1.5, 0.3), (1.5, 0.3)], MARK, GAP, clearance=0.05)
    _assert_readable(scene, places)
    # nothing collides, so both keep the fixed rule: along the wall's inward normal (a
    # sampled normal: within 1 cm)
    assert [p.candidate for p in places] == [0, 0]
    assert places[0].align == "left" and places[0].box[0] == pytest.approx(MARK + GAP, abs=0.01)
    assert places[1].align == "center" and places[1].box[3] == pytest.approx(
        10 - MARK - GAP, abs=0.01
    )
    # shapely: 0.05 m clearance from the wall lines (distance to the room's boundary)
    for p in places:
        assert _geom(p).distance(Polygon(room).exterior) >= 0.05 - 1e-9


def test_label_too_long_for_a_corridor_goes_beside_the_outer_wall() -> None:
    # a 1 m wide corridor; a sign on its outer (east) wall with a 3 m label: no room inside
    corridor = [(0.0, 0.0), (1.0, 0.0), (1.0, 10.0), (0.0, 10.0)]
    sign = Landmark("s", "a very long sign", (1.0, 5.0), 0.3, "wall")
    scene = _scene([corridor], [sign])
    (place,) = place_labels(scene, [(3.0, 0.35)], MARK, GAP)
    assert place.clear
    assert _geom(place).disjoint(walkable_area(scene))  # shapely: wholly outside the rooms


def test_a_label_stays_on_its_marks_side_of_a_wall() -> None:
    # a sign on the east wall of a 1 m corridor, a big room west of the corridor; the label
    # fits neither the corridor nor (inside the frame) beside the outer wall, and the room
    # next door would put it across a wall from its mark
    room = [(-8.0, 0.0), (0.0, 0.0), (0.0, 10.0), (-8.0, 10.0)]
    corridor = [(0.1, 0.0), (1.1, 0.0), (1.1, 10.0), (0.1, 10.0)]
    door = [(-0.1, 4.0), (0.3, 4.0), (0.3, 5.0), (-0.1, 5.0)]
    sign = Landmark("s", "a long sign", (1.1, 8.0), 0.3, "wall")
    scene = _scene([room, corridor, door], [sign])
    (place,) = place_labels(scene, [(2.5, 0.35)], MARK, GAP, frame=(-8.5, -0.5, 1.3, 10.5))
    near = Point(1.1, 8.0)
    # shapely: the line from the mark to the nearest point of its box crosses the wall
    # x = 0.1 only for the next-door placements; the chosen one (the least bad, crossing)
    # keeps its nearest point on the corridor side
    nearest = _geom(place).exterior.interpolate(_geom(place).exterior.project(near))
    assert nearest.x > 0.1
    assert not place.clear


def test_labels_avoid_obstacles() -> None:
    room = [(0.0, 0.0), (10.0, 0.0), (10.0, 10.0), (0.0, 10.0)]
    table = Obstacle("t", outline=((5.3, 4.6), (8.0, 4.6), (8.0, 6.0), (5.3, 6.0)))
    lm = _free(0, 5.0, 5.0)
    scene = _scene([room], [lm], (table,))
    (place,) = place_labels(scene, [(1.5, 0.3)], MARK, GAP)
    first = candidates(lm, (0.0, 1.0), (1.5, 0.3), MARK, GAP)[0]
    table_poly = Polygon(table.outline)
    assert box(*first.box).intersects(table_poly)  # shapely: the old place was on the table
    assert not _geom(place).intersects(table_poly)
    _assert_readable(scene, places=(place,))


def test_no_free_place_takes_the_least_overlap_and_keeps_every_label() -> None:
    tiny = [(0.0, 0.0), (1.0, 0.0), (1.0, 1.0), (0.0, 1.0)]
    lms = [_free(i, 0.5, 0.5) for i in range(3)]  # three marks on one spot
    scene = _scene([tiny], lms)
    frame = (-0.2, -0.2, 1.2, 1.2)  # and nowhere to go outside either
    places = place_labels(scene, [(2.0, 0.5)] * 3, MARK, GAP, frame=frame)
    assert len(places) == 3
    assert not any(p.clear for p in places)


def test_start_marks_cover_the_start_circle_and_arrow() -> None:
    agent = Agent("a", 0.25, 1.0, 1.0, Start(pose=(2.0, 3.0, math.pi / 2)))
    scene = replace(_scene([[(0, 0), (5, 0), (5, 5), (0, 5)]], []), agents=(agent,))
    (mark,) = start_marks(scene, 0.1, 2.2)
    covered = box(*mark)
    # shapely: the disc of the start and the arrow's tip (2.2 radii up) lie in the box
    assert covered.contains(Point(2.0, 3.0).buffer(0.25, quad_segs=16).envelope)
    assert covered.covers(Point(2.0, 3.0 + 2.2 * 0.25))


def test_wrong_number_of_sizes_is_refused() -> None:
    scene = _scene([[(0, 0), (5, 0), (5, 5), (0, 5)]], [_free(0, 1.0, 1.0)])
    with pytest.raises(ValueError, match="1 landmarks"):
        place_labels(scene, [], MARK, GAP)


# -- property: random landmarks in a room ------------------------------------------------
ROOM = [(0.0, 0.0), (12.0, 0.0), (12.0, 8.0), (0.0, 8.0)]


@st.composite
def layouts(draw: st.DrawFn) -> tuple[Scene, list[tuple[float, float]]]:
    n = draw(st.integers(1, 14))
    xs = st.floats(0.3, 11.7, allow_nan=False)
    ys = st.floats(0.3, 7.7, allow_nan=False)
    lms = [_free(i, draw(xs), draw(ys)) for i in range(n)]
    size = st.tuples(st.floats(0.4, 2.5), st.floats(0.2, 0.5))
    return _scene([ROOM], lms), [draw(size) for _ in range(n)]


@settings(max_examples=60, deadline=None)
@given(layouts())
def test_random_layouts_never_overlap_where_a_free_place_existed(
    layout: tuple[Scene, list[tuple[float, float]]],
) -> None:
    scene, sizes = layout
    places = place_labels(scene, sizes, MARK, GAP)
    assert places == place_labels(replace(scene), list(sizes), MARK, GAP)  # deterministic
    geoms = [_geom(p) for p in places]
    marks = [_mark(lm) for lm in scene.landmarks]
    normals = inward_normals(scene)
    for i, p in enumerate(places):
        others = [g for j, g in enumerate(geoms) if j != i]
        other_marks = [m for j, m in enumerate(marks) if j != i]
        if p.clear:
            g = geoms[i]
            assert _clear_of_walls(g, scene, on_wall=False)  # free marks label inside only
            assert not any(g.relate_pattern(m, INTERIORS_MEET) for m in other_marks)
            for j, q in enumerate(places):  # two clear labels never overlap (shapely)
                if j != i and q.clear:
                    assert not g.relate_pattern(geoms[j], INTERIORS_MEET), (i, j)
        else:
            # no candidate was free: each one crosses a wall, covers a mark, meets a
            # label (the labels placed before it are among the final ones) or lies nearer
            # another landmark than its own (shapely distances)
            own = Point(scene.landmarks[i].position)
            for cand in candidates(scene.landmarks[i], normals[i], sizes[i], MARK, GAP):
                g = box(*cand.box)
                assert (
                    not _clear_of_walls(g, scene, on_wall=False)
                    or any(g.relate_pattern(m, INTERIORS_MEET) for m in other_marks)
                    or any(g.relate_pattern(o, INTERIORS_MEET) for o in others)
                    or any(
                        g.distance(Point(lm.position)) < g.distance(own) - 1e-9
                        for j, lm in enumerate(scene.landmarks)
                        if j != i
                    )
                )


# -- the SVG export, read back independently ----------------------------------------------
def _svg_path_polygons(d: str) -> list[Polygon]:
    rings = []
    for part in re.findall(r"M([^MZ]+)Z", d):
        nums = [float(v) for v in re.findall(r"-?\d+(?:\.\d+)?", part)]
        rings.append(Polygon(list(zip(nums[0::2], nums[1::2], strict=True))))
    return rings


@pytest.mark.parametrize("name", ["lab-wing", "greenhouse", "parking-level"])
def test_svg_labels_clear_walls_and_each_other(name: str) -> None:
    """Boxes rebuilt from the SVG's own text elements (x, baseline, text-anchor, about
    0.55 em per glyph and 1.2 em per line: common practice, no source) against the SVG's
    own walkable-area and obstacle paths, in paper millimetres, with shapely."""
    root = ET.fromstring(svg_bytes(load_scene(demo_path(f"{name}.scene.json"))))
    ns = {"s": "http://www.w3.org/2000/svg"}
    area = root.find("s:g[@id='walkable']/s:path", ns)
    assert area is not None
    rings = _svg_path_polygons(area.get("d", ""))
    # even-odd fill: a ring inside another one is a hole (OGC polygon with interior rings)
    rooms = rings[0]
    for r in rings[1:]:
        rooms = rooms.symmetric_difference(r)
    for obstacle in root.findall("s:g[@id='obstacles']/s:path", ns):
        for poly in _svg_path_polygons(obstacle.get("d", "")):
            rooms = rooms.difference(poly)
    boxes = []
    for text in root.findall("s:g[@id='landmarks']/s:g/s:text", ns):
        size = float(text.get("font-size", "0"))
        x, y = float(text.get("x", "0")), float(text.get("y", "0"))
        w = 0.55 * size * len(text.text or "")
        x0 = {"start": x, "middle": x - w / 2, "end": x - w}[text.get("text-anchor", "")]
        # baseline to the line's top and bottom (ascent ~0.95 em, descent ~0.25 em [memory])
        boxes.append(box(x0, y - 0.95 * size, x0 + w, y + 0.25 * size))
    assert len(boxes) == len(root.findall("s:g[@id='landmarks']/s:g", ns))
    for i, b in enumerate(boxes):
        assert b.within(rooms) or b.disjoint(rooms), (name, i)
        for j in range(i + 1, len(boxes)):
            assert not b.relate_pattern(boxes[j], INTERIORS_MEET), (name, i, j)
    # every label stays on the paper (the viewBox)
    vb = [float(v) for v in root.get("viewBox", "").split()]
    paper = box(vb[0], vb[1], vb[0] + vb[2], vb[1] + vb[3])
    assert all(b.within(paper) for b in boxes)
