"""Tables across runs from hand-built sweeps whose answers are derived in the test; the
cache; serial, process-pool and Dask computations giving the same tables."""

from __future__ import annotations

import os
from pathlib import Path

import numpy as np
import pytest
import scipy.stats

from arena_studio.core.runs import (
    Execution,
    FigureCache,
    Settings,
    curve_rows,
    final_comparison,
    load_runs,
    scan_sweep,
)
from arena_studio.core.runs import execute as execute_mod
from tests.core.runs.sweep_helpers import write_scored_tape, write_sweep

FAST = Settings(reps=400)


def _runs(root: Path, how: Execution | None = None, cache: FigureCache | None = None):
    runs, problems = load_runs(scan_sweep(root), how, cache)
    assert problems == []
    return runs


def test_always_versus_never_and_identical_conditions(tmp_path: Path) -> None:
    scores = {}
    for seed in range(4):
        scores[("always", seed, 10)] = 4
        scores[("never", seed, 10)] = 0
        scores[("twin-a", seed, 10)] = seed  # 0..3 successes of 4
        scores[("twin-b", seed, 10)] = seed
    write_sweep(tmp_path, scores)
    final = final_comparison(_runs(tmp_path), "success", settings=FAST)
    # derived: every "always" run beats every "never" run, so P = 1 and the reverse 0;
    # identical score sets tie pair for pair in distribution, so P = 0.5
    assert final.improvement[("always", "never")] == 1.0
    assert final.improvement[("never", "always")] == 0.0
    assert final.improvement[("twin-a", "twin-b")] == 0.5
    rows = {r.group: r for r in final.rows}
    assert (rows["always"].iqm, rows["always"].ci_low, rows["always"].ci_high) == (1.0, 1.0, 1.0)
    assert rows["never"].mean == 0.0 and rows["never"].runs == 4
    # twin scores 0, .25, .5, .75: IQM keeps the middle two -> 0.375 (scipy.stats.trim_mean)
    assert rows["twin-a"].iqm == pytest.approx(scipy.stats.trim_mean([0, 0.25, 0.5, 0.75], 0.25))


def test_curve_rows_by_condition_and_step(tmp_path: Path) -> None:
    scores = {("c", s, step): min(4, step // 10 + s % 2) for s in range(4) for step in (0, 10, 20)}
    write_sweep(tmp_path, scores)
    rows = curve_rows(_runs(tmp_path), "success", settings=FAST)
    assert [(r.group, r.step, r.runs) for r in rows] == [("c", 0, 4), ("c", 10, 4), ("c", 20, 4)]
    for r in rows:
        values = np.array([scores[("c", s, r.step)] / 4 for s in range(4)])
        # reference: numpy mean/median of the per-seed success rates, derived in the test
        assert r.mean == pytest.approx(values.mean())
        assert r.median == pytest.approx(np.median(values))
        assert r.ci_low <= r.iqm <= r.ci_high
        assert len(r.tapes) == 4


def test_tasks_are_strata(tmp_path: Path) -> None:
    for seed in range(3):
        meta = {"condition": "c", "seed": seed, "step": 1}
        write_scored_tape(tmp_path / f"a{seed}.tape", 4, metadata={**meta, "task": "A"})
        write_scored_tape(tmp_path / f"b{seed}.tape", 0, metadata={**meta, "task": "B"})
    (row,) = curve_rows(_runs(tmp_path), "success", settings=Settings(statistic="mean", reps=300))
    # derived: each replicate keeps 3 runs of task A (score 1) and 3 of B (score 0): mean 0.5
    assert (row.tasks, row.runs, row.ci_low, row.ci_high) == (2, 6, 0.5, 0.5)


def test_at_step_picks_that_step(tmp_path: Path) -> None:
    write_sweep(tmp_path, {("c", 0, 5): 1, ("c", 0, 9): 4})
    runs = _runs(tmp_path)
    assert final_comparison(runs, "success", at_step=5, settings=FAST).rows[0].mean == 0.25
    assert final_comparison(runs, "success", settings=FAST).rows[0].step == 9


def test_damage_stays_in_its_tape_and_episode(tmp_path: Path) -> None:
    paths = write_sweep(tmp_path, {("c", 0, 1): 2, ("c", 1, 1): 3, ("c", 2, 1): 4})
    data = paths[0].read_bytes()
    paths[0].write_bytes(data[:200])  # cut inside the header: the tape cannot be placed
    data = bytearray(paths[1].read_bytes())
    data[-400] ^= 0xFF  # one flipped byte in the last episode's records
    paths[1].write_bytes(bytes(data))
    sweep = scan_sweep(tmp_path)
    assert [t.path for t in sweep.problems] == [paths[0]]
    runs, problems = load_runs(sweep)
    assert len(problems) == 2 and str(paths[0]) in problems[0] and str(paths[1]) in problems[1]
    by_seed = {r.tape.place.seed: r for r in runs}
    # derived: seed 1 keeps its 3 undamaged episodes (3 successes written first), 1 of 4 lost
    assert by_seed[1].figures.note is not None and "checksum" in by_seed[1].figures.note
    assert by_seed[1].value("episodes") == 3 and by_seed[1].value("success") == 1.0
    assert by_seed[1].value("damaged") == 0.25
    assert by_seed[2].value("success") == 1.0 and by_seed[2].figures.note is None


def test_cache_recomputes_only_a_touched_tape(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.setenv("ARENA_STUDIO_CACHE_DIR", str(tmp_path / "cache"))
    paths = write_sweep(tmp_path / "s", {("c", s, 1): s for s in range(4)})
    computed: list[str] = []
    real = execute_mod.group_figures

    def counting(group: list[str]):
        computed.extend(group)
        return real(group)

    monkeypatch.setattr(execute_mod, "group_figures", counting)
    first = _runs(tmp_path / "s", cache=FigureCache(tmp_path / "s"))
    assert sorted(computed) == sorted(str(p) for p in paths)
    assert list((tmp_path / "cache").iterdir())  # written under the override, not the user's
    computed.clear()
    again = _runs(tmp_path / "s", cache=FigureCache(tmp_path / "s"))
    assert computed == [] and [r.figures for r in again] == [r.figures for r in first]
    write_scored_tape(paths[2], 4, metadata={"condition": "c", "seed": 2, "step": 1})
    os.utime(paths[2], ns=(1, 1))  # a new mtime even on coarse clocks
    third = _runs(tmp_path / "s", cache=FigureCache(tmp_path / "s"))
    assert computed == [str(paths[2])]
    assert {r.tape.place.seed: r.value("success") for r in third}[2] == 1.0


def test_unreadable_cache_file_is_ignored(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setenv("ARENA_STUDIO_CACHE_DIR", str(tmp_path / "cache"))
    write_sweep(tmp_path / "s", {("c", 0, 1): 1})
    cache = FigureCache(tmp_path / "s")
    cache.file.parent.mkdir(parents=True)
    cache.file.write_bytes(b"\xc1 garbage")
    assert len(_runs(tmp_path / "s", cache=FigureCache(tmp_path / "s"))) == 1


@pytest.fixture(scope="module")
def mixed_sweep(tmp_path_factory: pytest.TempPathFactory) -> Path:
    root = tmp_path_factory.mktemp("sweep")
    rng = np.random.default_rng(7)
    scores = {(c, s, st): int(rng.integers(0, 5)) for c in "ab" for s in range(3) for st in (1, 2)}
    write_sweep(root, scores)
    return root


def _tables(root: Path, how: Execution):
    runs = _runs(root, how)
    return (
        [r.to_dict() for r in curve_rows(runs, "success", settings=FAST)],
        final_comparison(runs, "success", settings=FAST).to_dict(),
        sorted((str(r.tape.path), r.figures.to_dict()) for r in runs),
    )


def test_serial_pool_and_dask_give_identical_tables(mixed_sweep: Path) -> None:
    serial = _tables(mixed_sweep, Execution(processes=1))
    pool = _tables(mixed_sweep, Execution(processes=2))
    assert pool == serial
    pytest.importorskip("distributed")
    dask = _tables(mixed_sweep, Execution(dask_workers=2))
    assert dask == serial


def test_split_groups_covers_every_tape_once() -> None:
    paths = [str(i) for i in range(23)]
    groups = execute_mod.split_groups(paths, 2)
    assert len(groups) == 8 and [p for g in groups for p in g] == paths
    assert execute_mod.split_groups(paths[:3], 4) == [["0"], ["1"], ["2"]]
    many = execute_mod.split_groups([str(i) for i in range(1000)], 2)
    assert max(len(g) for g in many) <= execute_mod.MAX_GROUP and sum(map(len, many)) == 1000


def test_goal_matrix_means_over_runs(tmp_path: Path) -> None:
    from arena_studio.core.runs.analysis import goal_matrix

    write_sweep(tmp_path, {("c", 0, 1): 1, ("c", 1, 1): 3, ("c", 0, 2): 4, ("d", 0, 1): 0})
    m = goal_matrix(_runs(tmp_path), "c")
    # derived: every episode's goal is landmark A; step 1 runs 1/4 and 3/4 -> 0.5
    assert m.goals == ["A"] and m.steps == [1, 2]
    np.testing.assert_allclose(m.values, [[0.5, 1.0]])
    assert len(m.runs[1]) == 2


def test_final_profiles_count_runs_above_thresholds(tmp_path: Path) -> None:
    write_sweep(tmp_path, {("c", s, 1): s for s in range(4)})  # success 0, .25, .5, .75
    final = final_comparison(_runs(tmp_path), "success", settings=FAST)
    tau, frac, low, high = final.profiles["c"]
    assert tau[0] == 0.0 and tau[-1] == 0.75 and len(tau) == 21
    # derived: runs strictly above tau, out of 4
    expected = [(np.array([0, 0.25, 0.5, 0.75]) > t).mean() for t in tau]
    np.testing.assert_allclose(frac, expected)
    assert (low <= frac + 1e-12).all() and (frac <= high + 1e-12).all()
