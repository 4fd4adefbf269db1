"""The visibility graph at scale: pairs tested in blocks, refused over the limit with the
estimate, progress reported.

References: ``numpy.triu_indices`` enumerates the upper triangle of a square table (numpy
documentation), so the blocks must list exactly its pairs in its order; the full graph is
checked against networkx Dijkstra in tests/core/geometry/test_paths.py, and here the block size must
not change which legs are kept. n corners have n(n-1)/2 pairs (common practice).
"""

from __future__ import annotations

import numpy as np
import pytest

from arena_studio.core.geometry import visibility as visibility
from arena_studio.core.geometry.regions import free_space
from arena_studio.core.geometry.visibility import (
    PlanTooLarge,
    build_visibility_graph,
    check_graph_size,
    graph_estimate,
    graph_progress,
    max_graph_corners,
)
from arena_studio.core.resources import demo_path
from arena_studio.core.scene.model import Scene, load_scene
from tests.fuzz import big_scenes as big


@pytest.mark.parametrize("count", [2, 3, 7, 40])
@pytest.mark.parametrize("block", [1, 5, 64, 10_000])
def test_row_blocks_list_the_upper_triangle_in_order(monkeypatch, count, block):
    monkeypatch.setattr(visibility, "PAIR_BLOCK", block)
    rows = []
    for start, end, pairs in visibility._row_blocks(count):
        assert pairs == sum(count - 1 - r for r in range(start, end))
        assert pairs <= block or end - start == 1  # one row may exceed a tiny block
        rows += list(range(start, end))
    i, _j = np.triu_indices(count, k=1)  # numpy's upper triangle: the reference
    assert rows == sorted(set(i.tolist()))


def test_block_size_does_not_change_the_graph(monkeypatch):
    scene = load_scene(demo_path("lab-wing.scene.json"))
    free = free_space(scene, 0.25)
    whole = build_visibility_graph(free, 0.25)
    monkeypatch.setattr(visibility, "PAIR_BLOCK", 7)
    blocked = build_visibility_graph(free, 0.25)
    assert whole.node_count > 10
    key = lambda g: sorted(map(tuple, g.edges.tolist()))  # noqa: E731
    assert key(blocked) == key(whole)
    assert np.array_equal(blocked.matrix.toarray(), whole.matrix.toarray())


def test_progress_reaches_every_pair(monkeypatch):
    monkeypatch.setattr(visibility, "PAIR_BLOCK", 50)
    scene = load_scene(demo_path("greenhouse.scene.json"))
    seen: list[tuple[int, int]] = []
    with graph_progress(lambda done, total: seen.append((done, total))):
        graph = build_visibility_graph(free_space(scene, 0.3), 0.3)
    n = graph.node_count
    assert len(seen) > 1 and seen[-1] == (n * (n - 1) // 2, n * (n - 1) // 2)
    assert [d for d, _ in seen] == sorted(d for d, _ in seen)


def test_estimate_and_refusal_name_the_numbers():
    pairs, seconds, need = graph_estimate(1000)
    assert pairs == 1000 * 999 // 2 and seconds > 0 and need > 0
    corners = max_graph_corners()
    assert graph_estimate(corners)[0] <= visibility.MAX_GRAPH_PAIRS
    assert graph_estimate(corners + 1)[0] > visibility.MAX_GRAPH_PAIRS
    check_graph_size(corners, 0.25)
    with pytest.raises(PlanTooLarge, match=f"{corners + 1:,} corners") as info:
        check_graph_size(corners + 1, 0.25)
    assert "corner pairs" in str(info.value) and "MB" in str(info.value)


def test_a_scene_over_the_limit_is_refused_before_any_pair_is_tested(monkeypatch):
    scene = Scene.from_dict(big.zigzag_room(2_000))
    called = []
    monkeypatch.setattr(visibility, "_bitangent_legs", lambda *a: called.append(1))
    with pytest.raises(PlanTooLarge):
        build_visibility_graph(free_space(scene, 0.25), 0.25)
    assert not called


def test_too_many_legs_stop_the_build(monkeypatch):
    monkeypatch.setattr(visibility, "MAX_GRAPH_LEGS", 5)
    scene = load_scene(demo_path("greenhouse.scene.json"))
    with pytest.raises(PlanTooLarge, match="more than 5 legs"):
        build_visibility_graph(free_space(scene, 0.25), 0.25)
