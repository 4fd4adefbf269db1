"""Tapes as tables (core/tape/tables.py, table_files.py), read back with reference readers:
pyarrow, pandas and polars for Parquet, pandas for CSV, numpy for NPZ."""

from __future__ import annotations

import numpy as np
import pandas as pd
import polars as pl
import pyarrow.parquet as pq
import pytest

from arena_studio.core.tape import TapeWriter, open_tape
from arena_studio.core.tape.table_files import export_table
from tests.core.tape_helpers import box_scene


@pytest.fixture
def tape_path(tmp_path):
    """Three episodes of 4, 1 and 7 steps; rewards, done, 2-wide actions and channels in
    episodes 0 and 2 only (so episode 1's rows hold nulls there)."""
    scene = box_scene()
    path = tmp_path / "t.tape"
    rng = np.random.default_rng(3)
    with TapeWriter(path, scene, dt=0.25, chunk_steps=3) as w:
        for e, steps in enumerate((4, 1, 7)):
            w.begin_episode()
            poses = rng.uniform(0, 10, (steps, 2, 3))
            if e == 1:
                w.steps(poses)
            else:
                w.steps(
                    poses,
                    rewards=rng.normal(size=(steps, 2)),
                    actions=rng.normal(size=(steps, 2, 2)),
                    done=rng.random((steps, 2)) > 0.5,
                    channels={"battery": rng.random((steps, 2)), "wind": rng.random(steps)},
                )
            w.end_episode()
    return path


def _expected(tape):
    """Rows built the slow obvious way: for each episode, step and agent."""
    rows = []
    for ep in tape:
        for t in range(ep.steps):
            for a, agent in enumerate(tape.agent_ids):
                rows.append(
                    {
                        "episode": ep.index,
                        "step": t,
                        "time": t * tape.dt,
                        "agent": agent,
                        "x": ep.poses[t, a, 0],
                        "y": ep.poses[t, a, 1],
                        "heading": ep.poses[t, a, 2],
                        "reward": None if ep.rewards is None else ep.rewards[t, a],
                        "done": None if ep.done is None else bool(ep.done[t, a]),
                        "action_1": None if ep.actions is None else ep.actions[t, a, 1],
                        "battery": ep.channels["battery"][t, a] if ep.channels else None,
                        "wind": ep.channels["wind"][t] if ep.channels else None,
                    }
                )
    return rows


def _same(got_rows, expected):
    assert len(got_rows) == len(expected)
    for got, want in zip(got_rows, expected, strict=True):
        for key, value in want.items():
            g = got[key]
            if value is None:
                assert g is None or (isinstance(g, float) and np.isnan(g)), (key, g)
            else:
                assert g == value, (key, g, value)


def test_arrow_table_long_form(tape_path):
    tape = open_tape(tape_path)
    table = tape.to_table()
    # row count = sum over episodes of steps x agents
    assert table.num_rows == (4 + 1 + 7) * 2
    assert table.column_names[:9] == [
        "episode",
        "step",
        "time",
        "agent",
        "x",
        "y",
        "heading",
        "reward",
        "done",
    ]
    assert {"action_0", "action_1", "battery", "wind"} <= set(table.column_names)
    _same(table.to_pylist(), _expected(tape))
    meta = table.schema.metadata
    assert meta[b"arena_studio.scene_hash"].decode() == tape.scene_hash


def test_parquet_read_by_pyarrow_pandas_and_polars(tape_path, tmp_path):
    tape = open_tape(tape_path)
    out = tmp_path / "t.parquet"
    assert export_table(tape, "parquet", out) == 24
    want = _expected(tape)
    # reference reader 1: pyarrow.parquet
    _same(pq.read_table(out).to_pylist(), want)
    # reference reader 2: pandas (agent comes back as a categorical of the ids)
    frame = pd.read_parquet(out)
    assert len(frame) == 24 and list(frame["agent"].astype(str)[:2]) == ["r0", "r1"]
    np.testing.assert_array_equal(frame["x"].to_numpy(), [r["x"] for r in want])
    assert frame["reward"].isna().sum() == 2  # episode 1: 1 step x 2 agents
    # reference reader 3: polars
    pframe = pl.read_parquet(out)
    assert pframe.height == 24
    np.testing.assert_array_equal(pframe["heading"].to_numpy(), [r["heading"] for r in want])
    assert pframe["done"].null_count() == 2
    per_episode = pframe.group_by("episode").len().sort("episode")["len"].to_list()
    assert per_episode == [8, 2, 14]


def test_csv_and_npz(tape_path, tmp_path):
    tape = open_tape(tape_path)
    want = _expected(tape)
    export_table(tape, "csv", tmp_path / "t.csv")
    frame = pd.read_csv(tmp_path / "t.csv")  # reference reader: pandas
    assert len(frame) == 24
    np.testing.assert_array_equal(frame["y"].to_numpy(), [r["y"] for r in want])  # repr: exact
    assert frame["reward"].isna().sum() == 2
    export_table(tape, "npz", tmp_path / "t.npz")
    with np.load(tmp_path / "t.npz", allow_pickle=False) as data:
        assert data["agent"].tolist()[:2] == ["r0", "r1"]
        assert (data["done"] == -1).sum() == 2
        np.testing.assert_array_equal(data["x"], [r["x"] for r in want])


def test_some_episodes_only(tape_path):
    table = open_tape(tape_path).to_table([2])
    assert table.num_rows == 14 and set(table.column("episode").to_pylist()) == {2}
