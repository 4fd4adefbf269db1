"""Metrics of many episodes at once: the same :class:`EpisodeMetrics` as
:func:`~arena_studio.core.analysis.metrics.episode_metrics`, field for field, bit for bit.

Numpy costs about a microsecond per call whatever the array size, and the per-episode path
makes a few hundred calls per episode. Here the poses of consecutive episodes are laid end to
end into one (sum T, A, 3) array; coverage, success (:func:`observe.goal_reached_batch`),
speeds, overlaps and free-space tests run once over it, and per-episode results come out of
segment reductions (``reduceat`` over episode start rows, running maxima that restart at each
start). Path lengths are running sums over each episode's slice, as in the per-episode path,
so the two agree exactly (tests/core/analysis/test_metrics.py checks every field; the diagnoses come
from :func:`diagnosis.diagnose_block`, the batched twin of ``diagnose``).

``tape_metrics(tape)`` reads a tape in blocks of whole episodes (one file read per block;
chunks of 64 KiB and more are decoded as views into it, smaller ones are copied)
and is what ``arena-studio stats`` uses.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from arena_studio.core._frozen import fast_maker
from arena_studio.core.analysis.diagnosis import BlockArrays, Diagnosis, diagnose_block
from arena_studio.core.analysis.metrics import (
    _MEMO,
    STILL_SPEED_FRACTION,
    STILL_SPEED_MIN,
    STILL_TURN,
    EpisodeMetrics,
    _prepared_free_space,
    aligned_goals,
    goal_key,
    par_time_of,
)
from arena_studio.core.scene.model import Scene
from arena_studio.core.sim.observe import (
    coverage_planes_sparse,
    goal_reached_planes,
    segment_starts,
)
from arena_studio.core.tape.damage import Damage, EpisodeDamaged
from arena_studio.core.tape.episode import Episode
from arena_studio.core.tape.episode_scene import episode_scene, same_layout
from arena_studio.core.value_limits import pose_problem

#: episodes are processed in groups of about this many steps (arrays stay cache-sized)
BLOCK_STEPS = 32768
#: EpisodeMetrics(...) with every field given in order, built without the frozen __init__'s
#: per-field setattr (~2.5 us an object; tests/core/analysis/test_metrics_batch_paths.py compares)
_new_metrics = fast_maker(EpisodeMetrics)


def _aligned(episode: Episode) -> bool | None:
    """:func:`metrics.aligned_goals` comparing raw bytes when the goals are integer arrays."""
    goals = episode.pursued_goals
    team = episode.team_goal
    if not goals or any(g is None for g in goals):
        return aligned_goals(episode)
    first = goals[0]
    assert first is not None
    same = all(
        isinstance(g, np.ndarray) and g.dtype == first.dtype and g.shape == first.shape
        for g in (*goals, *(() if team is None else (team,)))
    )
    if not same or first.dtype.kind not in "biu":
        return aligned_goals(episode)
    fb = first.tobytes()
    if any(g.tobytes() != fb for g in goals[1:] if g is not None):
        return False
    return team is None or team.tobytes() == fb


def _judged(
    episode: Episode, cache: dict[bytes, tuple[int, ...]]
) -> tuple[bool | None, tuple[int, ...] | None]:
    """(aligned, judged target indices or None) of an episode, as metrics.episode_metrics."""
    aligned = _aligned(episode)
    goal = episode.team_goal
    if goal is None and aligned and episode.pursued_goals:
        goal = episode.pursued_goals[0]
    if goal is None:
        return aligned, None
    g = np.asarray(goal)
    key = g.dtype.str.encode() + g.tobytes()
    if key not in cache:
        cache[key] = tuple(int(i) for i in np.flatnonzero(g))
    return aligned, cache[key] or None


def episodes_metrics(scene: Scene, episodes: Sequence[Episode]) -> list[EpisodeMetrics]:
    """``[episode_metrics(scene, e) for e in episodes]``, computed in blocks of episodes.

    Episodes made in memory are checked first (a pose that is not finite or outside the
    documented range raises ValueError naming episode, step and agent); ``tape_metrics``
    skips that, the tape reader checked them already."""
    for ep in episodes:
        problem = pose_problem(ep.poses)
        if problem is not None:
            raise ValueError(f"episode {ep.index} {problem}")
    return _episodes_metrics(scene, episodes)


def _episodes_metrics(scene: Scene, episodes: Sequence[Episode]) -> list[EpisodeMetrics]:
    out: list[EpisodeMetrics] = []
    block: list[Episode] = []
    rows = 0
    for ep in episodes:
        if block and (
            rows + ep.steps > BLOCK_STEPS or ep.dt != block[0].dt or not same_layout(ep, block[0])
        ):
            out.extend(_block_metrics(episode_scene(scene, block[0]), block))
            block, rows = [], 0
        block.append(ep)
        rows += ep.steps
    if block:  # a block shares one landmark layout: judged in the scene of its first episode
        out.extend(_block_metrics(episode_scene(scene, block[0]), block))
    return out


def tape_metrics(
    tape: Any,
    indices: Sequence[int] | None = None,
    advance: Callable[[int], None] | None = None,
    damaged: list[Damage] | None = None,
) -> list[EpisodeMetrics]:
    """Metrics of a tape's episodes (all, or ``indices`` in order), read block by block:
    one file read and one checksum pass per block of consecutive episodes. (A reader thread
    fetching the next block was tried: the GIL left it no faster on two cores.)

    A damaged episode (bad checksum, undecodable record, a pose that is not finite or out of
    range) raises :class:`EpisodeDamaged`; with a ``damaged`` list it is left out of the
    result instead, its :class:`Damage` record appended there, and the rest are measured.
    """
    order = list(range(len(tape))) if indices is None else [int(i) for i in indices]
    blocks: list[tuple[int, int]] = []
    pos = 0
    while pos < len(order):
        stop, rows = pos + 1, tape.episode_steps(order[pos])
        while stop < len(order) and order[stop] == order[stop - 1] + 1:
            more = tape.episode_steps(order[stop])
            if rows + more > BLOCK_STEPS:
                break
            rows += more
            stop += 1
        blocks.append((order[pos], order[stop - 1] + 1))
        pos = stop
    out: list[EpisodeMetrics] = []
    for start, stop in blocks:
        episodes = _read_block(tape, start, stop, damaged)
        out.extend(_episodes_metrics(tape.scene, episodes))
        if advance is not None:
            advance(stop - start)
    return out


def _read_block(tape: Any, start: int, stop: int, damaged: list[Damage] | None) -> list[Episode]:
    """Episodes ``start .. stop - 1`` from one read; with ``damaged`` given, a damaged episode
    is recorded there and the block is read again around it (damage is rare: the usual block
    costs one read)."""
    try:
        return tape.decode_span(tape.read_span(start, stop), copy=False)
    except EpisodeDamaged as exc:
        if damaged is None:
            raise
        bad = exc.damage.episode
        damaged.append(exc.damage)
    before = _read_block(tape, start, bad, damaged) if bad > start else []
    after = _read_block(tape, bad + 1, stop, damaged) if bad + 1 < stop else []
    return before + after


@dataclass(frozen=True, slots=True)
class _Layout:
    """A block's episodes laid end to end: rows ``starts[e] .. ends[e] - 1`` are episode e."""

    dt: float
    lengths: np.ndarray  # (E,) steps per episode
    starts: np.ndarray  # (E,) first row of each episode
    floor: np.ndarray  # (N,) first row of the episode each row is in, minus one
    ends: np.ndarray  # (E,) one past each episode's last row
    n: int  # rows in all
    xa: np.ndarray  # (A, N) x of each agent, one contiguous row per agent
    ya: np.ndarray  # (A, N) y
    idx: np.ndarray  # (N,) 0 .. N - 1


@dataclass(frozen=True, slots=True)
class _Goals:
    """What each episode is judged on."""

    aligned: list[bool | None]  # per episode, as metrics.aligned_goals
    targets_of: list[tuple[int, ...] | None]  # judged target indices, or None
    goal_rows: np.ndarray  # (E, L) bool: target k of episode e
    has_goal: np.ndarray  # (E,) bool
    needed: np.ndarray  # (L,) bool: landmarks some episode's answer reads


@dataclass(frozen=True, slots=True)
class _Coverage:
    cover: np.ndarray  # (N, A, L) bool: agent a covers landmark k at row r
    count: np.ndarray  # (L, N) agents covering each needed landmark (0 for the rest)
    covered_any: np.ndarray  # (L, N) bool


@dataclass(frozen=True, slots=True)
class _Success:
    success: np.ndarray  # (E,) bool
    step: np.ndarray  # (E,) step of success in its episode (read only where success)
    at_row: np.ndarray  # (E,) row where coverage is judged: success row, else the last


@dataclass(frozen=True, slots=True)
class _Motion:
    seg_rows: np.ndarray  # (A, N) step lengths, column r: move from row r to r + 1
    still: np.ndarray  # (N, A) bool
    still_counts: np.ndarray  # (E, A) still steps


@dataclass(frozen=True, slots=True)
class _Contacts:
    on_rows: np.ndarray  # rows of contact onsets, ascending
    on_pair: np.ndarray  # pair index of each onset
    exits: np.ndarray  # (E,) free-space exits
    on_split: np.ndarray  # (E,) onsets before each episode's end


def _block_metrics(scene: Scene, episodes: list[Episode]) -> list[EpisodeMetrics]:
    """Metrics of episodes sharing one dt and one landmark layout, stage by stage."""
    layout = _layout(scene, episodes)
    goals = _goals(episodes, len(scene.landmarks))
    coverage = _coverage(scene, layout, goals)
    success = _success(scene, layout, goals, coverage)
    who, visited = _who_covered(scene, layout, coverage, success.at_row)
    motion = _motion(scene, episodes, layout)
    contacts = _contacts(scene, layout, len(episodes))
    found = diagnose_block(
        scene,
        episodes,
        success.success.tolist(),
        goals.targets_of,
        goals.aligned,
        BlockArrays(
            coverage.cover,
            motion.still,
            (layout.starts, layout.lengths, layout.floor),
            coverage.count,
            layout.xa,
            layout.ya,
        ),
    )
    credit = (who, visited)
    return _assemble(scene, episodes, layout, goals, success, credit, motion, contacts, found)


def _layout(scene: Scene, episodes: list[Episode]) -> _Layout:
    n_agents = len(scene.agents)
    for ep in episodes:
        if ep.agent_count != n_agents:
            raise ValueError(f"episode {ep.index}: {ep.agent_count} agents, scene has {n_agents}")
    lengths = np.array([ep.steps for ep in episodes], dtype=np.int64)
    starts, floor = segment_starts(lengths)
    ends = starts + lengths
    n = int(ends[-1])
    # x and y as (A, N): one contiguous row per agent, episodes end to end (headings are
    # laid out the same way only when some step is slow enough to need its turn rate)
    xa, ya = _agent_rows(episodes, starts, lengths, (0, 1))
    return _Layout(episodes[0].dt, lengths, starts, floor, ends, n, xa, ya, np.arange(n))


def _goals(episodes: list[Episode], n_lm: int) -> _Goals:
    # tapes hand out the same goal arrays episode after episode: answers are remembered by
    # array identity (safe: every episode, hence every array, lives until this block ends)
    aligned: list[bool | None] = []
    targets_of: list[tuple[int, ...] | None] = []
    goal_rows = np.zeros((len(episodes), n_lm), dtype=bool)
    cache: dict[bytes, tuple[int, ...]] = {}
    seen: dict[tuple[int, ...], tuple[bool | None, tuple[int, ...] | None]] = {}
    rows_of: dict[tuple[int, ...], list[int]] = {}
    for e, ep in enumerate(episodes):
        ident = (
            id(ep.team_goal),
            len(ep.pursued_goals),
            *map(id, ep.pursued_goals),
            *map(id, ep.assigned_targets),
        )
        known = seen.get(ident)
        if known is None:
            known = seen[ident] = _judged(ep, cache)
        aligned.append(known[0])
        t = known[1]
        targets_of.append(t)
        if t:
            rows_of.setdefault(t, []).append(e)
    for t, rows in rows_of.items():  # one assignment per distinct goal
        goal_rows[np.ix_(rows, t)] = True
    # only landmarks some episode is judged on, or all when one is misaligned (its diagnosis
    # looks for landmarks outside the goal); the rest stay False and are never read
    needed = np.asarray(goal_rows.any(axis=0))
    if any(a is False and t is not None for a, t in zip(aligned, targets_of, strict=True)):
        needed[:] = True
    return _Goals(aligned, targets_of, goal_rows, np.asarray(goal_rows.any(axis=1)), needed)


def _coverage(scene: Scene, layout: _Layout, goals: _Goals) -> _Coverage:
    n_agents, n_lm = len(scene.agents), len(scene.landmarks)
    planes = coverage_planes_sparse(scene, layout.xa, layout.ya, only=goals.needed)  # (L, A, N)
    # agents covering each landmark, (L, N), and landmark covered by some agent; unneeded
    # landmarks stay 0 / False (the diagnosis reads the counts too)
    count = np.zeros((n_lm, layout.n), dtype=np.uint8 if n_agents < 256 else np.int64)
    for k in np.flatnonzero(goals.needed).tolist():
        for a in range(n_agents):
            count[k] += planes[k, a]
    return _Coverage(planes.transpose(2, 1, 0), count, count > 0)


def _success(scene: Scene, layout: _Layout, goals: _Goals, coverage: _Coverage) -> _Success:
    n_ep = len(layout.lengths)
    success = np.zeros(n_ep, dtype=bool)
    step = np.zeros(n_ep, dtype=np.int64)
    starts, ends, idx, n = layout.starts, layout.ends, layout.idx, layout.n
    has_goal = goals.has_goal
    if has_goal.any():
        rows = goals.goal_rows.copy()
        rows[~has_goal, 0] = True  # placeholder target, result ignored
        reached = goal_reached_planes(
            scene, rows, coverage.covered_any, layout.lengths, dt=layout.dt
        )
        if scene.goals.rule == "all_at_end":
            success = reached[ends - 1] & has_goal
            step = np.maximum.reduceat(np.where(reached, layout.floor, idx), starts) + 1 - starts
        else:
            first = np.minimum.reduceat(np.where(reached, idx, n), starts)
            success = (first < ends) & has_goal
            step = first - starts
    return _Success(success, step, np.where(success, starts + step, ends - 1))


def _who_covered(
    scene: Scene, layout: _Layout, coverage: _Coverage, at_row: np.ndarray
) -> tuple[np.ndarray, np.ndarray]:
    """(who, visited), each (E, L): the agent credited with each landmark and whether it
    was covered (first visit for ``all_visited``, else the nearest covering agent at the
    judged row)."""
    cover, n, n_lm = coverage.cover, layout.n, len(scene.landmarks)
    if scene.goals.rule == "all_visited":
        any_cover = cover.any(axis=1)  # (N, L)
        first_row = np.minimum.reduceat(
            np.where(any_cover, layout.idx[:, None], n), layout.starts, axis=0
        )
        visited = first_row <= at_row[:, None]
        safe = np.minimum(first_row, n - 1)
        who = cover[safe, :, np.arange(n_lm)[None, :]].argmax(axis=-1)  # (E, L)
        return who, visited
    lm_pos = np.array([lm.position for lm in scene.landmarks], dtype=np.float64).reshape(-1, 2)
    c_at = cover[at_row]  # (E, A, L)
    x_at, y_at = layout.xa[:, at_row].T, layout.ya[:, at_row].T  # (E, A)
    d = np.hypot(x_at[:, :, None] - lm_pos[:, 0], y_at[:, :, None] - lm_pos[:, 1])
    who = np.where(c_at, d, np.inf).argmin(axis=1)  # (E, L)
    return who, np.asarray(c_at.any(axis=1))


def _step_lengths(layout: _Layout) -> np.ndarray:
    """(A, N) step lengths, column r: move from row r to r + 1 (as metrics.step_lengths);
    the last column, after the last row, is 0 so that the rows reshape into episodes."""
    xa, ya, n = layout.xa, layout.ya, layout.n
    seg_rows = np.zeros((xa.shape[0], n))
    seg = seg_rows[:, :-1]
    if n > 1:
        dy = np.empty(n - 1)
        for a in range(xa.shape[0]):  # agent by agent: the rows stay in cache
            sa = seg[a]
            np.subtract(xa[a, 1:], xa[a, :-1], out=sa)
            np.subtract(ya[a, 1:], ya[a, :-1], out=dy)
            sa *= sa
            dy *= dy
            sa += dy
            np.sqrt(sa, out=sa)
    return seg_rows


def _motion(scene: Scene, episodes: list[Episode], layout: _Layout) -> _Motion:
    n_agents, n, dt = len(scene.agents), layout.n, layout.dt
    starts, lengths, floor = layout.starts, layout.lengths, layout.floor
    seg_rows = _step_lengths(layout)
    seg = seg_rows[:, :-1]
    top = np.array([a.max_speed for a in scene.agents], dtype=np.float64)
    limit = np.maximum(STILL_SPEED_FRACTION * top, STILL_SPEED_MIN)
    # still when speed = seg / dt < limit (as metrics.step_speeds): a step at or above
    # limit * dt (1 + 1e-6) cannot pass, so only the rest are divided and compared
    still_an = np.zeros((n_agents, n), dtype=bool)  # (A, N)
    if n > 1:
        ca, cc = _nonzero_2d(seg < (limit * dt * (1 + 1e-6))[:, None])
        if cc.size:
            slow = seg[ca, cc] / dt < limit[ca]
            still_an[ca[slow], cc[slow] + 1] = True
    long_ep = lengths >= 2
    still_an[:, starts[long_ep]] = still_an[:, starts[long_ep] + 1]  # step 0 copies step 1
    still_an[:, starts[~long_ep]] = True  # a one-step episode has speed 0
    aa, rr = _nonzero_2d(still_an)
    if rr.size:
        later = rr.copy()
        is_start = floor[rr] + 1 == rr
        later[is_start] += 1
        single = is_start & (lengths[np.searchsorted(starts, rr, side="right") - 1] < 2)
        later[single] = rr[single]
        earlier = np.where(single, rr, later - 1)
        (tha,) = _agent_rows(episodes, starts, lengths, (2,))
        turn = tha[aa, later] - tha[aa, earlier]
        turn = np.abs((turn + np.pi) % (2 * np.pi) - np.pi) / dt
        turn[single] = 0.0
        keep = turn < STILL_TURN
        still_an[aa, rr] = keep
        aa, rr = aa[keep], rr[keep]
    # still steps per (episode, agent), counted from the sparse still positions
    ep_of = np.searchsorted(starts, rr, side="right") - 1
    still_counts = np.bincount(ep_of * n_agents + aa, minlength=len(episodes) * n_agents)
    return _Motion(seg_rows, still_an.T, still_counts.reshape(len(episodes), n_agents))


def _contacts(scene: Scene, layout: _Layout, n_ep: int) -> _Contacts:
    on_rows, on_pair = _contact_onsets(scene, layout.xa, layout.ya, layout.floor)
    exits = _exit_counts(scene, layout.xa, layout.ya, layout.starts, layout.floor, n_ep)
    return _Contacts(on_rows, on_pair, exits, np.searchsorted(on_rows, layout.ends))


def _assemble(
    scene: Scene,
    episodes: list[Episode],
    layout: _Layout,
    goals: _Goals,
    success: _Success,
    credit: tuple[np.ndarray, np.ndarray],
    motion: _Motion,
    contacts: _Contacts,
    found: list[Diagnosis | None],
) -> list[EpisodeMetrics]:
    """One EpisodeMetrics per episode from the stages' arrays (Python lists from here on:
    reading numpy scalars one by one costs more than one ``tolist``)."""
    ids = [a.id for a in scene.agents]
    lm_ids = [lm.id for lm in scene.landmarks]
    targets_of, aligned = goals.targets_of, goals.aligned
    success_list = success.success.tolist()
    step_list = success.step.tolist()
    who_list, visited_list = credit[0].tolist(), credit[1].tolist()
    exits_list = contacts.exits.tolist()
    still_time = (motion.still_counts * layout.dt).tolist()
    paths = _path_lengths(motion.seg_rows, layout.starts, layout.lengths, len(ids))
    out: list[EpisodeMetrics] = []
    lo = 0
    split_list = contacts.on_split.tolist()
    lengths_list = layout.lengths.tolist()
    contact_list = _contact_list(layout, contacts, len(ids))
    # goal key, kind and par time once per distinct goal of the block
    per_goal: dict[tuple[int, ...] | None, tuple[str | None, str | None, float | None]] = {}
    new_metrics = _new_metrics
    for e, ep in enumerate(episodes):
        targets = targets_of[e]
        ok = success_list[e]
        st = step_list[e] if ok else None
        covered: dict[str, str | None] = {}
        if targets:
            who_e, visited_e = who_list[e], visited_list[e]
            for lm in targets:
                covered[lm_ids[lm]] = ids[who_e[lm]] if visited_e[lm] else None
        hi = split_list[e]
        pairs: tuple[tuple[int, int, int], ...] = ()
        if hi > lo:
            pairs = tuple(contact_list[lo:hi])
            lo = hi
        facts = per_goal.get(targets)
        if facts is None:
            facts = per_goal[targets] = _goal_facts(scene, targets)
        key, kind, par = facts
        ep_dt = ep.dt
        tts = None if st is None else st * ep_dt
        ratio = None
        if par is not None and tts is not None:
            ratio = par / tts if tts > 0 else (1.0 if par == 0 else None)
        diag = found[e]
        steps = lengths_list[e]
        out.append(
            new_metrics(  # in field order
                ep.index,  # index
                steps,  # steps
                max(steps - 1, 0) * ep_dt,  # duration (as Episode.duration, without its calls)
                targets,  # goal
                key,  # goal_key
                kind,  # kind
                ok,  # success
                st,  # success_step
                tts,  # time_to_success
                covered,  # covered_by
                paths[e],  # path_length
                par,  # par_time
                ratio,  # par_ratio
                aligned[e],  # aligned
                len(pairs),  # collisions
                exits_list[e],  # free_space_exits
                tuple(still_time[e]),  # still_time
                None if diag is None else diag.text,  # diagnosis
                None if diag is None else diag.code,  # diagnosis_code
                None if diag is None else diag.step,  # diagnosis_step
                ep.complete,  # complete
                pairs,  # collision_pairs
                ep.outcome,  # outcome
            )
        )
    return out


def _contact_list(
    layout: _Layout, contacts: _Contacts, n_agents: int
) -> list[tuple[int, int, int]]:
    """(step in its episode, agent i, agent j) of every contact onset, episode after episode."""
    pi_, pj_ = _pairs(n_agents)
    on_rows, on_pair = contacts.on_rows, contacts.on_pair
    on_ep = np.searchsorted(contacts.on_split, np.arange(on_rows.size), side="right")
    return list(
        zip(
            (on_rows - layout.starts[on_ep]).tolist(),
            pi_[on_pair].tolist(),
            pj_[on_pair].tolist(),
            strict=True,
        )
    )


def _agent_rows(
    episodes: Sequence[Episode], starts: np.ndarray, lengths: np.ndarray, fields: tuple[int, ...]
) -> np.ndarray:
    """(len(fields), A, N): pose fields (0 x, 1 y, 2 heading) of episodes laid end to end."""
    n_agents = episodes[0].agent_count
    out = np.empty((len(fields), n_agents, int(starts[-1] + lengths[-1])))
    lo, hi = fields[0], fields[-1] + 1
    pick: slice | list[int] = slice(lo, hi) if list(fields) == list(range(lo, hi)) else [*fields]
    for ep, s0, t_len in zip(episodes, starts.tolist(), lengths.tolist(), strict=True):
        # one copy per episode for all fields: (3, A, T) view, fields picked
        out[:, :, s0 : s0 + t_len] = np.asarray(ep.poses).T[pick]
    return out


def _goal_facts(
    scene: Scene, targets: tuple[int, ...] | None
) -> tuple[str | None, str | None, float | None]:
    """(goal key, kind, par time) of a judged goal, as metrics.episode_metrics gives them."""
    if targets is None:
        return None, None, None
    par = _MEMO.get(scene, ("par", targets), lambda: par_time_of(scene, targets))
    kind = "individual" if len(targets) == 1 else "cooperative"
    return goal_key(scene, targets), kind, par


def _pairs(n_agents: int) -> tuple[np.ndarray, np.ndarray]:
    """``np.triu_indices(n_agents, k=1)``: agent pairs (i < j) in row-major order, built
    directly (triu_indices costs tens of microseconds, once per block)."""
    first = [i for i in range(n_agents) for _ in range(i + 1, n_agents)]
    second = [j for i in range(n_agents) for j in range(i + 1, n_agents)]
    return np.array(first, dtype=np.intp), np.array(second, dtype=np.intp)


def _contact_onsets(
    scene: Scene, xa: np.ndarray, ya: np.ndarray, floor: np.ndarray
) -> tuple[np.ndarray, np.ndarray]:
    """(rows, pairs) where a pair of agents starts to overlap (as metrics.overlap_mask and
    onsets; pairs numbered as ``np.triu_indices(A, 1)``), sorted by row, then pair.

    Overlap is ``dx * dx + dy * dy < reach * reach``; with ``|dx|`` at or above
    ``reach * (1 + 1e-6)`` it cannot hold, so one pass over a pair's x gaps finds the few
    candidates and only they are squared (pair by pair, in buffers that stay in cache).
    Onsets come from the sparse overlaps: the first row of a run, or an episode's first row.
    """
    n_agents, n = xa.shape
    pi_, pj_ = _pairs(n_agents)
    radii = np.array([a.radius for a in scene.agents], dtype=np.float64)
    reach = radii[pi_] + radii[pj_]
    pad = (reach * (1 + 1e-6)).tolist()
    reach2 = (reach * reach).tolist()
    gap = np.empty(n)
    near = np.empty(n, dtype=bool)
    part = np.empty(n, dtype=bool)
    pair_parts: list[np.ndarray] = []
    row_parts: list[np.ndarray] = []
    for k, (i, j) in enumerate(zip(pi_.tolist(), pj_.tolist(), strict=True)):
        np.subtract(xa[i], xa[j], out=gap)
        np.less(gap, pad[k], out=near)  # -pad < dx < pad, i.e. |dx| < pad
        near &= np.greater(gap, -pad[k], out=part)
        c = np.flatnonzero(near)
        if c.size:
            cx = gap[c]
            cy = ya[i, c] - ya[j, c]
            cx *= cx
            cy *= cy
            cx += cy
            c = c[cx < reach2[k]]
            if c.size:
                row_parts.append(c)
                pair_parts.append(np.full(c.size, k, dtype=np.intp))
    if not row_parts:
        empty = np.zeros(0, dtype=np.intp)
        return empty, empty
    pp, cc = np.concatenate(pair_parts), np.concatenate(row_parts)  # by pair, then row
    cont = np.zeros(pp.size, dtype=bool)
    cont[1:] = (pp[1:] == pp[:-1]) & (cc[1:] == cc[:-1] + 1)
    onset = ~cont | (floor[cc] + 1 == cc)
    pp, cc = pp[onset], cc[onset]
    order = np.lexsort((pp, cc))  # by step, then pair
    return cc[order], pp[order]


def _exit_counts(
    scene: Scene, xa: np.ndarray, ya: np.ndarray, starts: np.ndarray, floor: np.ndarray, n_ep: int
) -> np.ndarray:
    """Per episode: onsets of an agent centre leaving its free space (as metrics.outside_mask
    and onsets), found from the sparse outside positions. Agents of one radius share a test
    and are tested in one call."""
    n_agents = xa.shape[0]
    by_radius: dict[float, list[int]] = {}
    for a, agent in enumerate(scene.agents):
        by_radius.setdefault(float(agent.radius), []).append(a)
    aa_parts, rr_parts = [], []
    for radius, agents in by_radius.items():
        test = _prepared_free_space(scene, radius)
        if len(agents) == n_agents:
            gx, gy = xa, ya
        else:
            gx, gy = xa[agents], ya[agents]
        k, r = np.divmod(test.outside_flat(gx, gy), gx.shape[1])  # as _nonzero_2d(~inside)
        aa_parts.append(np.asarray(agents, dtype=np.intp)[k])
        rr_parts.append(r)
    aa = np.concatenate(aa_parts)
    rr = np.concatenate(rr_parts)
    if not rr.size:
        return np.zeros(n_ep, dtype=np.int64)
    if len(by_radius) > 1:  # one group comes out of nonzero already by agent, then row
        order = np.lexsort((rr, aa))
        aa, rr = aa[order], rr[order]
    # an onset: the episode's first row, or a row whose previous row was inside
    cont = np.zeros(rr.size, dtype=bool)
    cont[1:] = (aa[1:] == aa[:-1]) & (rr[1:] == rr[:-1] + 1)
    onset = ~cont | (floor[rr] + 1 == rr)
    ep_of = np.searchsorted(starts, rr[onset], side="right") - 1
    return np.bincount(ep_of, minlength=n_ep)


def _path_lengths(
    seg: np.ndarray, starts: np.ndarray, lengths: np.ndarray, n_agents: int
) -> list[tuple[float, ...]]:
    """Per episode, per agent: the sum of its step lengths ``seg`` (A, N; column r is the
    move from row r to r + 1), accumulated left to right like metrics' per-episode running
    sum (``np.cumsum``), so the last bit is the same. Episodes of one length are summed
    together (``np.add.reduceat`` would be one call but rounds differently)."""
    out: list[tuple[float, ...]] = [(0.0,) * n_agents] * len(starts)
    if len(starts) and (lengths == lengths[0]).all() and lengths[0] >= 2:
        # the usual case, episodes of one length: (A, E, T) is a view of the rows
        t_len = int(lengths[0])
        view = seg.reshape(n_agents, len(starts), t_len)[:, :, : t_len - 1]
        return [tuple(t) for t in _running_totals(view).T.tolist()]
    for t_len in np.unique(lengths).tolist():
        if t_len < 2:
            continue
        group = np.flatnonzero(lengths == t_len)
        cols = starts[group][:, None] + np.arange(t_len - 1)  # (G, T - 1)
        totals = _running_totals(seg[:, cols]).T.tolist()  # (G, A)
        for e, total in zip(group.tolist(), totals, strict=True):
            out[e] = tuple(total)
    return out


def _running_totals(parts: np.ndarray) -> np.ndarray:
    """(A, G): ``np.cumsum(parts, axis=2)[:, :, -1]`` of (A, G, K) step lengths, the same to
    the last bit and several times faster: numpy adds along a slow axis one element after
    the other (pairwise summation is only used along the fast axis in memory, numpy.sum
    notes), so with K made the slowest axis ``np.add.reduce`` adds each column left to right,
    all columns at once, instead of one dependent running sum per column. A single column
    leaves only K, which would become the fast axis: that case keeps the running sum."""
    n_agents, n_group, _ = parts.shape
    if n_agents * n_group < 2:
        return np.cumsum(parts, axis=2)[:, :, -1]
    rows = np.ascontiguousarray(parts.transpose(2, 0, 1))  # (K, A, G), K slowest
    return np.add.reduce(rows, axis=0)


def _nonzero_2d(mask: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """``np.nonzero`` of a C-contiguous 2-D mask, several times faster (same order)."""
    flat = np.flatnonzero(mask)
    rows, cols = np.divmod(flat, mask.shape[1])
    return rows, cols


__all__ = ["BLOCK_STEPS", "episodes_metrics", "tape_metrics"]
