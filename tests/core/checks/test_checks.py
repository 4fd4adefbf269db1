"""The scene checker on the broken test scene, the demo scenes and small hand-made layouts.

Expected values come from plane geometry worked by hand (perpendicular distance to a wall
line, disc widths against doorway widths), from ``math.comb`` / ``itertools.combinations``
for goal indices, and from networkx's Hopcroft-Karp matching
as the reference for the team-assignment check.
"""

from __future__ import annotations

import itertools
import math
from pathlib import Path

import networkx as nx
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from arena_studio.core.checks.checker import CODES, SEVERITIES, Finding, check_scene
from arena_studio.core.checks.goals import _max_matching
from arena_studio.core.checks.reach import reach_table
from arena_studio.core.scene.model import (
    Agent,
    Circle,
    GoalSpec,
    Landmark,
    Obstacle,
    Room,
    Scene,
    Start,
    load_scene,
)

REPO = Path(__file__).resolve().parents[3]
BROKEN = REPO / "tests" / "data" / "broken.scene.json"
DEMOS = sorted((REPO / "scenes").glob("*.scene.json"))


def box(x0: float, y0: float, x1: float, y1: float) -> tuple[tuple[float, float], ...]:
    return ((x0, y0), (x1, y0), (x1, y1), (x0, y1))


def bot(name: str, x: float, y: float, r: float = 0.3) -> Agent:
    return Agent(name, r, 1.0, 2.0, Start(pose=(x, y, 0.0)))


def spot(name: str, x: float, y: float, reach: float = 0.5, mount: str = "free") -> Landmark:
    return Landmark(name, name.title(), (x, y), reach, mount)  # type: ignore[arg-type]


def square_scene(**changes) -> Scene:
    """A 4 m x 4 m room, one agent in the middle, one free landmark."""
    base = Scene(
        name="square",
        rooms=(Room("room", box(0, 0, 4, 4)),),
        landmarks=(spot("a", 1, 1),),
        agents=(bot("r1", 2, 2),),
        goals=GoalSpec(families=(1,)),
    )
    return base.with_changes(**changes)


def codes(findings: list[Finding]) -> dict[str, list[Finding]]:
    out: dict[str, list[Finding]] = {}
    for f in findings:
        out.setdefault(f.code, []).append(f)
    return out


# -- the broken scene and the demos -------------------------------------------------------

EXPECTED_IN_BROKEN = {
    "room-invalid": "bowtie",
    "rooms-disconnected": "annex",
    "duplicate-id": "main",
    "obstacle-invalid": "twisted",
    "obstacle-outside-rooms": "far-crate",
    "landmark-outside-rooms": "lm-outside",
    "landmark-inside-obstacle": "lm-in-crate",
    "landmark-off-wall": "lm-off-wall",
    "landmark-unreachable": "lm-annex",
    "reach-radius-too-small": "lm-tiny-reach",
    "agent-no-free-space": "bot-huge",
    "start-outside-free-space": "bot-3",
    "start-region-invalid": "bot-4",
    "start-overlap": "bot-2",
    "duplicate-label": "lm-twin",
    "reach-overlap": "lm-twin",
    "goal-vector-length": None,
    "goal-empty": None,
    "goal-duplicate": None,
    "goal-needs-more-agents": None,
    "goal-no-assignment": None,
    "family-too-large": None,
}


def test_broken_scene_has_every_expected_code() -> None:
    found = codes(check_scene(load_scene(BROKEN)))
    for code, obj in EXPECTED_IN_BROKEN.items():
        assert code in found, code
        if obj is not None:
            assert obj in {f.object_id for f in found[code]}, (code, obj)
            assert any(obj in f.message for f in found[code]), (code, obj)


def test_broken_scene_geos_location_of_bowtie_room() -> None:
    # GEOS (OGC validity): POLYGON((30 0,31 1,31 0,30 1)) self-intersects at (30.5, 0.5).
    (f,) = codes(check_scene(load_scene(BROKEN)))["room-invalid"]
    assert f.point == pytest.approx((30.5, 0.5))
    assert "self-intersection" in f.message


def test_broken_goal_indices_follow_enumeration_order() -> None:
    # families [1, 9] over 7 landmarks: C(7,1) = 7 goals, C(7,9) = 0 (math.comb, no error);
    # then vectors[0] (wrong length) and [1] (empty) are skipped, so vectors[2] is goal 7.
    scene = load_scene(BROKEN)
    assert math.comb(7, 1) + math.comb(7, 9) == 7
    (need,) = codes(check_scene(scene))["goal-needs-more-agents"]
    assert need.goal_index == 7 and "goals.vectors[2]" in need.message


@pytest.mark.parametrize("path", DEMOS, ids=lambda p: p.name)
def test_demo_scenes_have_no_errors(path: Path) -> None:
    scene = load_scene(path)
    findings = check_scene(scene)
    assert [f for f in findings if f.severity == "error"] == []
    # Demo requirements from the brief: 2-4 agents, 4-9 landmarks, both mounts, 1- and 2-hot.
    assert 2 <= len(scene.agents) <= 4 and 4 <= len(scene.landmarks) <= 9
    assert {lm.mount for lm in scene.landmarks} == {"wall", "free"}
    sizes = set(scene.goals.families) | {sum(v) for v in scene.goals.vectors}
    assert {1, 2} <= sizes
    # Every landmark reachable by at least one agent (the checker's own table agrees).
    assert all(any(row[i] for row in reach_table(scene)) for i in range(len(scene.landmarks)))


def test_findings_sorted_by_severity_and_codes_known() -> None:
    findings = check_scene(load_scene(BROKEN))
    ranks = [SEVERITIES.index(f.severity) for f in findings]
    assert ranks == sorted(ranks)
    for f in findings:
        assert f.code in CODES
        d = f.to_dict()
        assert set(d) == {"severity", "code", "message", "where"}
        assert set(d["where"]) == {"id", "point", "goal"}


# -- small layouts with hand-computed answers --------------------------------------------


def test_empty_scene_findings() -> None:
    found = codes(check_scene(Scene()))
    assert {"no-rooms", "no-landmarks", "no-agents"} <= set(found)
    assert all(f.severity == "error" for fs in found.values() for f in fs)


def test_clean_square_scene_has_no_findings() -> None:
    assert check_scene(square_scene()) == []


@pytest.mark.parametrize(
    ("x", "off"), [(4.0, False), (3.96, False), (4.04, False), (3.94, True), (3.5, True)]
)
def test_wall_landmark_tolerance(x: float, off: bool) -> None:
    # Perpendicular distance from (x, 2) to the wall line x = 4 is |4 - x|; tolerance 5 cm.
    lm = spot("w", x, 2.0, reach=0.6, mount="wall")
    found = codes(check_scene(square_scene(landmarks=(lm,))))
    assert ("landmark-off-wall" in found) is off
    if off:
        assert f"{abs(4 - x):.2f} m" in found["landmark-off-wall"][0].message
        assert "(4.00, 2.00)" in found["landmark-off-wall"][0].message  # the foot point


def test_wall_landmark_on_obstacle_outline_is_on_a_wall() -> None:
    # A sign on a pillar: the circle's top point (2, 2.5 + 0.3) lies on the obstacle outline.
    pillar = Obstacle("pillar", circle=Circle((2.0, 2.5), 0.3))
    lm = spot("sign", 2.0, 2.8, reach=0.7, mount="wall")
    found = codes(
        check_scene(square_scene(obstacles=(pillar,), landmarks=(lm,), agents=(bot("r1", 1, 1),)))
    )
    assert "landmark-off-wall" not in found and "landmark-unreachable" not in found


@pytest.mark.parametrize(
    ("reach", "expect"),
    [
        (0.25, {"reach-radius-too-small", "landmark-unreachable"}),
        (0.3, {"reach-radius-too-small"}),
        (0.32, {"reach-radius-tight"}),
        (0.5, set()),
    ],
)
def test_reach_radius_of_wall_landmark(reach: float, expect: set[str]) -> None:
    # Agent radius 0.3 against a straight wall: its centre gets no closer than 0.3 m, so the
    # landmark on the wall is reachable iff reach >= 0.3 (closed disc), and at reach = 0.3
    # only by touching the wall, which the checker still calls too small.
    lm = spot("w", 4.0, 2.0, reach=reach, mount="wall")
    found = set(codes(check_scene(square_scene(landmarks=(lm,)))))
    relevant = {"reach-radius-too-small", "reach-radius-tight", "landmark-unreachable"}
    assert found & relevant == expect


def two_rooms(door_width: float) -> tuple[Room, ...]:
    return (
        Room("west", box(0, 0, 4, 4)),
        Room("east", box(4.2, 0, 8, 4)),
        Room("door", box(3.9, 2 - door_width / 2, 4.3, 2 + door_width / 2)),
    )


@pytest.mark.parametrize(
    ("door", "radius", "reachable"), [(0.8, 0.3, True), (0.8, 0.45, False), (1.0, 0.45, True)]
)
def test_doorway_narrower_than_agent(door: float, radius: float, reachable: bool) -> None:
    # A disc of diameter 2r passes a doorway of width w iff 2r < w (hand geometry).
    scene = square_scene(
        rooms=two_rooms(door), landmarks=(spot("far", 6, 2),), agents=(bot("r1", 1, 2, radius),)
    )
    found = codes(check_scene(scene))
    assert ("landmark-unreachable" not in found) is reachable
    if not reachable:
        assert "no agent starts" in found["landmark-unreachable"][0].message


def test_disconnected_rooms() -> None:
    rooms = (Room("west", box(0, 0, 4, 4)), Room("east", box(4.2, 0, 8, 4)))
    found = codes(check_scene(square_scene(rooms=rooms)))
    (f,) = found["rooms-disconnected"]
    assert f.object_id == "east" and "'west'" in f.message
    # Touching along an edge joins them (OGC union); touching at a corner point does not.
    corner = (Room("a", box(0, 0, 4, 4)), Room("b", box(4, 4, 8, 8)))
    assert "rooms-disconnected" not in codes(
        check_scene(square_scene(rooms=(Room("a", box(0, 0, 4, 4)), Room("b", box(4, 0, 8, 4)))))
    )
    assert "rooms-disconnected" in codes(check_scene(square_scene(rooms=corner)))


def test_start_checks() -> None:
    crate = Obstacle("crate", outline=box(0.5, 0.5, 1.5, 1.5))
    agents = (
        bot("in-crate", 1.0, 1.0),
        bot("near-wall", 0.2, 3.0),  # 0.2 m from x = 0 < radius 0.3
        bot("twin-a", 3.0, 3.0),
        bot("twin-b", 3.5, 3.0),  # 0.5 m apart < 0.3 + 0.3
        Agent("half-out", 0.3, 1, 1, Start(region=box(3, 0, 5, 2))),
    )
    found = codes(
        check_scene(square_scene(obstacles=(crate,), agents=agents, landmarks=(spot("a", 2, 2),)))
    )
    outside = {f.object_id: f.message for f in found["start-outside-free-space"]}
    assert "inside obstacle 'crate'" in outside["in-crate"]
    assert "closer to a wall" in outside["near-wall"]
    assert [f.object_id for f in found["start-overlap"]] == ["twin-b"]
    (part,) = found["start-region-partly-outside"]
    # Region 3..5 x 0..2, free space x, y in [0.3, 3.7]: inside 0.7 * 1.7 of 4 m^2, so
    # 70.25 % lies outside.
    assert part.object_id == "half-out" and "70%" in part.message


def test_start_region_split_across_parts() -> None:
    region = Agent("spread", 0.45, 1, 1, Start(region=box(3, 1, 5, 3)))
    scene = square_scene(rooms=two_rooms(0.8), agents=(region,), landmarks=(spot("a", 2, 2),))
    assert "start-region-split" in codes(check_scene(scene))


def test_goal_needs_more_agents_only_for_simultaneous_rules() -> None:
    lms = (spot("a", 1, 1), spot("b", 3, 1), spot("c", 1, 3))
    agents = (bot("r1", 2, 2), bot("r2", 3, 3))
    for rule, expect in (("all_at_once", True), ("all_at_end", True), ("all_visited", False)):
        scene = square_scene(
            landmarks=lms, agents=agents, goals=GoalSpec(rule=rule, families=(1, 3))
        )  # type: ignore[arg-type]
        found = codes(check_scene(scene))
        assert ("goal-needs-more-agents" in found) is expect, rule
        if expect:
            # The 3-hot family starts after C(3,1) = 3 one-hot goals.
            assert found["goal-needs-more-agents"][0].goal_index == math.comb(3, 1)


def test_family_larger_than_landmarks_and_empty_goal_set() -> None:
    found = codes(check_scene(square_scene(goals=GoalSpec(families=(2,)))))
    assert "family-too-large" in found and "no-goals" in found


def test_explicit_vector_index_after_families() -> None:
    # L = 4, families [1, 2]: C(4,1) + C(4,2) = 10 goals come first (itertools order);
    # a duplicate 2-hot vector is not new, the 3-hot one is goal 10.
    lms = tuple(spot(n, x, 1) for n, x in zip("abcd", (0.6, 1.6, 2.6, 3.4), strict=True))
    goals = GoalSpec(rule="all_at_once", families=(1, 2), vectors=((1, 1, 0, 0), (1, 1, 1, 0)))
    found = codes(
        check_scene(
            square_scene(landmarks=lms, goals=goals, agents=(bot("r1", 2, 3), bot("r2", 3, 3)))
        )
    )
    n_family = sum(1 for k in (1, 2) for _ in itertools.combinations(range(4), k))
    assert n_family == math.comb(4, 1) + math.comb(4, 2) == 10
    assert found["goal-duplicate"][0].goal_index is None
    assert found["goal-needs-more-agents"][0].goal_index == 10


def test_goal_no_assignment_when_only_one_agent_gets_through() -> None:
    # Only the small agent fits through the 0.8 m door, so it alone reaches both far targets;
    # a 2-hot goal over them needs two distinct agents at once.
    lms = (spot("near", 1, 1), spot("far1", 6, 1), spot("far2", 6, 3))
    agents = (bot("small", 1, 2, 0.2), bot("big", 2, 3, 0.45))
    goals = GoalSpec(rule="all_at_once", families=(1,), vectors=((0, 1, 1),))
    found = codes(
        check_scene(square_scene(rooms=two_rooms(0.8), landmarks=lms, agents=agents, goals=goals))
    )
    (f,) = found["goal-no-assignment"]
    assert f.severity == "error" and f.goal_index == 3
    assert {f.object_id for f in found["landmark-unreachable-by-agent"]} == {"far1", "far2"}
    # Under all_visited the small agent may visit both, one after the other.
    visited = square_scene(
        rooms=two_rooms(0.8),
        landmarks=lms,
        agents=agents,
        goals=GoalSpec(rule="all_visited", families=(1,), vectors=((0, 1, 1),)),
    )
    assert "goal-no-assignment" not in codes(check_scene(visited))


def test_zero_weights() -> None:
    goals = GoalSpec(families=(1,), family_weights=(0.0,))
    assert "goal-weights-zero" in codes(check_scene(square_scene(goals=goals)))


def test_obstacle_outside_rooms_and_landmark_checks() -> None:
    obstacles = (
        Obstacle("far", outline=box(10, 10, 11, 11)),
        Obstacle("crate", outline=box(2.5, 0.5, 3.5, 1.5)),
    )
    lms = (spot("out", 6, 2), spot("boxed", 3, 1), spot("ok", 1, 1))
    found = codes(check_scene(square_scene(obstacles=obstacles, landmarks=lms)))
    assert [f.object_id for f in found["obstacle-outside-rooms"]] == ["far"]
    assert found["obstacle-outside-rooms"][0].severity == "warning"
    (out,) = found["landmark-outside-rooms"]
    assert out.object_id == "out" and "2.00 m" in out.message  # (6, 2) to x = 4: 2 m
    (boxed,) = found["landmark-inside-obstacle"]
    assert boxed.object_id == "boxed" and "'crate'" in boxed.message


def test_agent_too_large() -> None:
    found = codes(check_scene(square_scene(agents=(bot("whale", 2, 2, 2.1),))))
    assert [f.object_id for f in found["agent-no-free-space"]] == ["whale"]  # 4.2 m > 4 m


def test_extreme_coordinates_do_not_crash() -> None:
    huge = Room("huge", box(-1e300, -1e300, 1e300, 1e300))
    findings = check_scene(square_scene(rooms=(huge,)))
    assert all(f.code in CODES for f in findings)


@settings(max_examples=60, deadline=None)
@given(
    st.lists(st.lists(st.booleans(), min_size=5, max_size=5), min_size=1, max_size=5),
    st.sets(st.integers(0, 4), min_size=1),
)
def test_assignment_matches_networkx(table: list[list[bool]], targets: set[int]) -> None:
    # Reference: networkx Hopcroft-Karp maximum bipartite matching (agents x targets).
    g = nx.Graph()
    tnodes = [("t", t) for t in targets]
    g.add_nodes_from(tnodes)
    g.add_nodes_from(("a", a) for a in range(len(table)))
    g.add_edges_from((("a", a), ("t", t)) for a, row in enumerate(table) for t in targets if row[t])
    ref = nx.bipartite.hopcroft_karp_matching(g, top_nodes=tnodes)
    expected = sum(1 for node in ref if node[0] == "t")
    rows = tuple(tuple(r) for r in table)
    assert _max_matching(sorted(targets), rows) == expected


def test_outlines_still_being_drawn_are_findings_not_crashes() -> None:
    # The editor holds outlines with fewer than 3 points while the user draws; a polygon
    # needs at least 3 distinct points (OGC 06-103r4, linear ring), so these are findings.
    scene = square_scene(
        rooms=(Room("room", box(0, 0, 4, 4)), Room("new", ((5.0, 5.0), (6.0, 5.0)))),
        obstacles=(Obstacle("dot", outline=((1.0, 1.0),)),),
        agents=(bot("r1", 2, 2), Agent("r2", 0.3, 1, 1, Start(region=((1.0, 1.0), (2.0, 2.0))))),
    )
    found = codes(check_scene(scene))
    assert [f.object_id for f in found["room-invalid"]] == ["new"]
    assert [f.object_id for f in found["obstacle-invalid"]] == ["dot"]
    assert [f.object_id for f in found["start-region-invalid"]] == ["r2"]
    assert "geometry-failed" not in found


@pytest.mark.parametrize(
    ("mount", "y", "inside"),
    [("free", 1.49, True), ("free", 1.5, False), ("wall", 1.47, False), ("wall", 1.4, True)],
)
def test_landmark_inside_obstacle_edge(mount: str, y: float, inside: bool) -> None:
    # Crate 2.5..3.5 x 0.5..1.5: (3, y) lies 1.5 - y inside its top edge (hand geometry).
    # A free landmark inside by any amount is flagged; a wall one gets the 5 cm tolerance.
    crate = Obstacle("crate", outline=box(2.5, 0.5, 3.5, 1.5))
    lm = spot("x", 3.0, y, reach=0.6, mount=mount)
    found = codes(check_scene(square_scene(obstacles=(crate,), landmarks=(lm,))))
    assert ("landmark-inside-obstacle" in found) is inside


def test_goal_indices_agree_with_goal_enumeration() -> None:
    # The contract: goal_index is the position in core.goals.enumerate_goals' order.
    goals = pytest.importorskip("arena_studio.core.planning.goal_set")
    scene = load_scene(BROKEN)
    table = goals.enumerate_goals(scene)
    indexed = [f for f in check_scene(scene) if f.goal_index is not None]
    assert {f.code for f in indexed} >= {"goal-needs-more-agents", "goal-no-assignment"}
    for f in indexed:
        vi = int(f.message.split("goals.vectors[")[1].split("]")[0])
        assert tuple(table.vectors[f.goal_index]) == scene.goals.vectors[vi]
