"""The writer keeps copies: a simulator that updates one array in place records every step.

Property tests (hypothesis) over agent counts, step counts, chunk (flush) sizes, dtypes and
memory layouts: after each ``step``/``steps`` call the caller's arrays are overwritten with
junk; the tape must still hold what was given at the time of each call. The expected values
are computed here with plain numpy from the inputs, independently of the writer.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from arena_studio.core.scene.model import Scene
from arena_studio.core.tape import TapeWriter, open_tape
from tests.core.tape_helpers import box_scene

SETTINGS = settings(
    max_examples=40, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture]
)


def _trajectory(steps: int, agents: int, seed: int) -> np.ndarray:
    rng = np.random.default_rng(seed)
    poses = rng.uniform(0.5, 9.5, size=(steps, agents, 3))
    poses[:, :, 2] = rng.uniform(-np.pi, np.pi, size=(steps, agents))
    return poses


def _layout(arr: np.ndarray, layout: str) -> np.ndarray:
    """The same values in another memory layout or byte order (a simulator's own arrays)."""
    if layout == "fortran":
        return np.asfortranarray(arr)
    if layout == "big-endian":
        return arr.astype(arr.dtype.newbyteorder(">"))
    if layout == "float32":
        return arr.astype(np.float32)
    return np.ascontiguousarray(arr)


@SETTINGS
@given(
    steps=st.integers(1, 30),
    agents=st.integers(1, 3),
    chunk=st.integers(1, 8),
    layout=st.sampled_from(["c", "fortran", "big-endian", "float32"]),
    seed=st.integers(0, 2**16),
)
def test_step_in_place_updates_are_recorded(
    tmp_path: Path, steps: int, agents: int, chunk: int, layout: str, seed: int
) -> None:
    scene = box_scene(agents=agents)
    truth = _layout(_trajectory(steps, agents, seed), layout)
    buf = np.empty_like(truth[0])  # the simulator's one pose array, reused every step
    reward = np.empty(agents, dtype=truth.dtype)
    action = np.empty((agents, 2), dtype=np.int32)  # integer (discrete) actions
    done = np.zeros(agents, dtype=bool)
    obs = np.empty((agents, 4))
    path = tmp_path / f"s{seed}-{chunk}.tape"
    with TapeWriter(path, scene, dt=0.1, chunk_steps=chunk) as w:
        w.begin_episode()
        for t in range(steps):
            buf[...] = truth[t]
            reward[...] = t
            action[...] = t + 1
            done[...] = t == steps - 1
            obs[...] = t / 2
            w.step(buf, reward=reward, action=action, done=done, channels={"obs": obs})
            for arr in (buf, reward, action, obs):  # the simulator moves on in place
                arr[...] = -7
            done[...] = False
        w.end_episode()
    ep = open_tape(path).episode(0)
    # float32 inputs are recorded as float64 of the same values (numpy's widening is exact)
    np.testing.assert_array_equal(ep.poses, truth.astype(np.float64))
    assert ep.rewards is not None and ep.actions is not None and ep.done is not None
    np.testing.assert_array_equal(ep.rewards, np.repeat(np.arange(steps)[:, None], agents, 1))
    assert ep.actions.dtype == np.int64
    np.testing.assert_array_equal(ep.actions[:, 0, 0], np.arange(steps) + 1)
    assert ep.done[-1].all() and not ep.done[:-1].any()
    np.testing.assert_array_equal(ep.channels["obs"][:, 0, 0], np.arange(steps) / 2)


@SETTINGS
@given(
    blocks=st.lists(st.integers(1, 9), min_size=1, max_size=5),
    agents=st.integers(1, 3),
    chunk=st.integers(1, 12),
    layout=st.sampled_from(["c", "fortran", "big-endian", "float32"]),
    seed=st.integers(0, 2**16),
)
def test_steps_in_place_updates_are_recorded(
    tmp_path: Path, blocks: list[int], agents: int, chunk: int, layout: str, seed: int
) -> None:
    scene: Scene = box_scene(agents=agents)
    total = sum(blocks)
    truth = _trajectory(total, agents, seed)
    team = np.arange(total, dtype=np.float64)  # a team reward: one number per step
    size = max(blocks)
    block = _layout(np.zeros((size, agents, 3)), layout)
    rewards = np.empty(size)
    path = tmp_path / f"b{seed}-{chunk}.tape"
    with TapeWriter(path, scene, dt=0.1, chunk_steps=chunk) as w:
        w.begin_episode()
        t = 0
        for n in blocks:
            block[:n] = truth[t : t + n]
            rewards[:n] = team[t : t + n]
            w.steps(block[:n], rewards=rewards[:n])
            block[...] = 1e6  # reused for the next block
            rewards[...] = -1
            t += n
        w.end_episode()
    ep = open_tape(path).episode(0)
    expected = _layout(truth, layout).astype(np.float64)
    np.testing.assert_array_equal(ep.poses, expected)
    assert ep.rewards is not None and ep.rewards.shape == (total,)
    np.testing.assert_array_equal(ep.rewards, team)


def test_discrete_actions_per_agent_become_one_column(tmp_path: Path) -> None:
    """One integer action per agent (a Discrete space, common practice in PettingZoo
    environments) is kept as (T, A, 1) whole numbers."""
    scene = box_scene(agents=2)
    path = tmp_path / "d.tape"
    with TapeWriter(path, scene, dt=0.1) as w:
        w.begin_episode()
        for t in range(3):
            w.step(np.ones((2, 3)), action=np.array([t, 4 - t], dtype=np.int8))
        w.end_episode()
    actions = open_tape(path).episode(0).actions
    assert actions is not None and actions.shape == (3, 2, 1) and actions.dtype == np.int64
    assert actions[:, :, 0].tolist() == [[0, 4], [1, 3], [2, 2]]
