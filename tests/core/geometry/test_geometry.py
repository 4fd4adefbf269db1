"""Scene geometry against outside references (OGC Simple Features 06-103r4 as implemented by
GEOS through shapely, and textbook formulas). Values computed with shapely unless noted."""

from __future__ import annotations

import math

import numpy as np
import pytest
import shapely
from shapely.geometry import Point, Polygon, box

from arena_studio.core.checks.layout import geos_reason
from arena_studio.core.geometry import regions as geo
from arena_studio.core.scene.model import Agent, Circle, Obstacle, Room, Scene, Start

L_SHAPE = ((0.0, 0.0), (4.0, 0.0), (4.0, 1.0), (1.0, 1.0), (1.0, 3.0), (0.0, 3.0))


def shoelace(points: tuple[tuple[float, float], ...]) -> tuple[float, tuple[float, float]]:
    """Area and centroid of a simple polygon by the shoelace (surveyor's) formula.

    A = 1/2 sum(x_i y_{i+1} - x_{i+1} y_i); C_x = 1/(6A) sum((x_i + x_{i+1}) cross_i), same for y.
    (Textbook formula, e.g. Bourke, "Calculating the area and centroid of a polygon" [memory].)
    """
    a = cx = cy = 0.0
    n = len(points)
    for i in range(n):
        x0, y0 = points[i]
        x1, y1 = points[(i + 1) % n]
        cross = x0 * y1 - x1 * y0
        a += cross
        cx += (x0 + x1) * cross
        cy += (y0 + y1) * cross
    a /= 2.0
    return a, (cx / (6 * a), cy / (6 * a))


def scene_of(rooms=(), obstacles=(), agents=()) -> Scene:
    return Scene(rooms=tuple(rooms), obstacles=tuple(obstacles), agents=tuple(agents))


def test_l_shape_area_and_centroid_shoelace_and_geos_agree() -> None:
    # Computed with shapely: L-shape area 6, centroid (1.5, 1) [computed]; shoelace formula by hand,
    # shapely/GEOS as the reference library.
    area, (cx, cy) = shoelace(L_SHAPE)
    assert area == pytest.approx(6.0)
    assert (cx, cy) == pytest.approx((1.5, 1.0))
    walk = geo.walkable_area(scene_of([Room("l", L_SHAPE)]))
    assert walk.area == pytest.approx(area)
    assert (walk.centroid.x, walk.centroid.y) == pytest.approx((cx, cy))


def test_square_with_hole_area_and_centroid() -> None:
    # Computed with shapely: 10x10 square minus a (2..4)^2 obstacle: area 96,
    # centroid (61/12, 61/12).
    hole = Obstacle("hole", outline=((2.0, 2.0), (4.0, 2.0), (4.0, 4.0), (2.0, 4.0)))
    s = scene_of([Room("sq", ((0.0, 0.0), (10.0, 0.0), (10.0, 10.0), (0.0, 10.0)))], [hole])
    open_area = geo.open_area(s)
    assert open_area.area == pytest.approx(96.0)
    assert (open_area.centroid.x, open_area.centroid.y) == pytest.approx((61 / 12, 61 / 12))
    # Composite-area rule (subtract the hole's moment), independent of GEOS:
    a_out, c_out = shoelace(((0, 0), (10, 0), (10, 10), (0, 10)))
    a_in, c_in = shoelace(((2, 2), (4, 2), (4, 4), (2, 4)))
    cx = (a_out * c_out[0] - a_in * c_in[0]) / (a_out - a_in)
    assert cx == pytest.approx(61 / 12)


def test_bowtie_invalid_with_self_intersection_location() -> None:
    # OGC 06-103r4 polygon rules as implemented by GEOS: the bowtie
    # POLYGON((0 0,1 1,1 0,0 1,0 0)) is invalid, self-intersection at (0.5, 0.5).
    bowtie = Polygon([(0, 0), (1, 1), (1, 0), (0, 1)])
    assert not bowtie.is_valid
    text, where = geos_reason(bowtie)
    assert text == "Self-intersection"
    assert where == pytest.approx((0.5, 0.5))
    # The walkable area repairs it (make_valid) rather than failing.
    walk = geo.walkable_area(scene_of([Room("b", tuple(bowtie.exterior.coords)[:-1])]))
    assert walk.is_valid
    assert walk.area == pytest.approx(0.5)  # two triangles of 1/4 each (shoelace by hand)


def test_ring_orientation_is_not_a_validity_rule() -> None:
    # OGC 06-103r4: counter-clockwise exterior is a convention, not an OGC validity rule.
    cw = ((0.0, 0.0), (0.0, 1.0), (1.0, 1.0), (1.0, 0.0))
    assert Polygon(cw).is_valid
    assert geo.walkable_area(scene_of([Room("cw", cw)])).area == pytest.approx(1.0)


def test_point_projection_onto_wall_line() -> None:
    # Computed with shapely: (5, 2) projected onto the boundary of the square 0..4 lands at (4, 2),
    # distance 1; the ring written from (0,0) counter-clockwise gives project() = 6.0,
    # shapely's box(0, 0, 4, 4) starts at (4, 0) and gives 2.0.
    square = ((0.0, 0.0), (4.0, 0.0), (4.0, 4.0), (0.0, 4.0))
    s = scene_of([Room("sq", square)])
    (qx, qy), dist = geo.nearest_wall_point(s, (5.0, 2.0))
    assert (qx, qy) == pytest.approx((4.0, 2.0))
    assert dist == pytest.approx(1.0)
    assert Polygon(square).exterior.project(Point(5, 2)) == pytest.approx(6.0)
    assert box(0, 0, 4, 4).exterior.project(Point(5, 2)) == pytest.approx(2.0)
    # An inside point projects onto the nearest wall too (distance to x = 4 is 0.5).
    (qx, qy), dist = geo.nearest_wall_point(s, (3.5, 1.0))
    assert (qx, qy) == pytest.approx((4.0, 1.0)) and dist == pytest.approx(0.5)


def test_no_rooms_has_no_wall_point() -> None:
    xy, dist = geo.nearest_wall_point(scene_of(), (1.0, 1.0))
    assert math.isnan(xy[0]) and dist == math.inf


@pytest.mark.parametrize("radius", [0.05, 0.2, 0.35, 1.0, 5.0, 40.0])
def test_quad_segments_keep_chord_error_under_tolerance(radius: float) -> None:
    # Sagitta formula: a chord spanning angle t on radius r deviates by s = r (1 - cos(t/2)).
    # With n segments per quarter circle, t = (pi/2)/n; s must stay under 1 mm (ARC_TOLERANCE).
    n = geo.quad_segments(radius)
    sagitta = radius * (1 - math.cos((math.pi / 2) / n / 2))
    assert sagitta <= geo.ARC_TOLERANCE + 1e-15
    # ...and n is the smallest such count (one fewer would break the tolerance), unless the
    # floor of 4 segments applies.
    if n > 4:
        coarser = radius * (1 - math.cos((math.pi / 2) / (n - 1) / 2))
        assert coarser > geo.ARC_TOLERANCE
    # Measured on the polygon GEOS builds: every edge midpoint lies within 1 mm of the circle.
    poly = Point(0, 0).buffer(radius, quad_segs=n)
    xy = np.asarray(poly.exterior.coords)
    mid = (xy[:-1] + xy[1:]) / 2
    err = radius - np.hypot(mid[:, 0], mid[:, 1])
    assert err.max() <= geo.ARC_TOLERANCE + 1e-9


def test_circle_obstacle_area_close_to_pi_r2() -> None:
    # Area of a circle pi r^2 (elementary geometry); polygon error bounded by the chord error.
    ob = Obstacle("c", circle=Circle((0.0, 0.0), 2.0))
    area = geo.obstacle_geometry(ob).area
    assert area < math.pi * 4
    assert math.pi * 4 - area < 2 * math.pi * 2 * geo.ARC_TOLERANCE


def test_touching_rooms_join_and_doorway_bridges() -> None:
    # OGC union: rooms sharing an edge merge into one polygon; a gap stays two parts.
    a = Room("a", ((0.0, 0.0), (2.0, 0.0), (2.0, 2.0), (0.0, 2.0)))
    b = Room("b", ((2.0, 0.0), (4.0, 0.0), (4.0, 2.0), (2.0, 2.0)))
    c = Room("c", ((4.2, 0.0), (6.0, 0.0), (6.0, 2.0), (4.2, 2.0)))
    door = Room("door", ((3.9, 0.5), (4.3, 0.5), (4.3, 1.5), (3.9, 1.5)))
    assert geo.walkable_area(scene_of([a, b])).geom_type == "Polygon"
    assert geo.walkable_area(scene_of([a, b, c])).geom_type == "MultiPolygon"
    assert geo.walkable_area(scene_of([a, b, c, door])).geom_type == "Polygon"


def test_free_space_is_negative_buffer_and_splits_at_narrow_doorways() -> None:
    # Free space = open area eroded by the agent radius (Minkowski difference with a disc;
    # de Berg et al., Computational Geometry, ch. 13 configuration space [memory]).
    a = Room("a", ((0.0, 0.0), (4.0, 0.0), (4.0, 4.0), (0.0, 4.0)))
    b = Room("b", ((4.2, 0.0), (8.0, 0.0), (8.0, 4.0), (4.2, 4.0)))
    door = Room("door", ((3.9, 1.5), (4.3, 1.5), (4.3, 2.3), (3.9, 2.3)))  # 0.8 m wide
    s = scene_of([a, b, door])
    assert len(geo.free_parts(s, 0.3)) == 1  # 0.6 m body passes a 0.8 m door
    assert len(geo.free_parts(s, 0.45)) == 2  # 0.9 m body does not
    # Square room shrunk by r: (4 - 2r)^2 (exact for convex polygons, mitred or not at
    # interior corners: shrinking a convex polygon keeps straight corners).
    one = scene_of([a])
    assert geo.free_space(one, 0.5).area == pytest.approx(9.0)
    assert shapely.equals(geo.free_space(one, 0.5), box(0.5, 0.5, 3.5, 3.5))


def test_wall_segments_and_bounds() -> None:
    s = scene_of(
        [Room("sq", ((0.0, 0.0), (4.0, 0.0), (4.0, 4.0), (0.0, 4.0)))],
        [Obstacle("o", outline=((1.0, 1.0), (2.0, 1.0), (2.0, 2.0), (1.0, 2.0)))],
        [Agent("a", 0.2, 1.0, 1.0, Start(pose=(3.0, 3.0, 0.0)))],
    )
    segs = geo.wall_segments(s)
    assert segs.shape == (8, 2, 2)  # 4 room walls + 4 obstacle sides
    lengths = np.hypot(*(segs[:, 1] - segs[:, 0]).T)
    assert lengths.sum() == pytest.approx(16 + 4)
    assert geo.bounds(s, margin=1.0) == pytest.approx((-1.0, -1.0, 5.0, 5.0))
    assert geo.bounds(scene_of()) == (0.0, 0.0, 1.0, 1.0)


def test_geometry_caches_are_per_thread() -> None:
    # GEOS prepared geometries are not thread-safe (libgeos/geos issue #825), and callers may
    # prepare what the caches return, so one thread never receives another thread's object.
    import threading

    s = scene_of([Room("sq", ((0.0, 0.0), (4.0, 0.0), (4.0, 4.0), (0.0, 4.0)))])
    mine = geo.free_space(s, 0.3)
    assert geo.free_space(s, 0.3) is mine  # cached within a thread
    theirs: list[object] = []
    worker = threading.Thread(target=lambda: theirs.append(geo.free_space(s, 0.3)))
    worker.start()
    worker.join()
    assert theirs[0] is not mine and shapely.equals(theirs[0], mine)
    geo.free_space.cache_clear()
    assert geo.free_space(s, 0.3) is not mine
