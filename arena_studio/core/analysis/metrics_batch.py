"""Metrics of many episodes at once: the same :class:`EpisodeMetrics` as
:func:`~arena_studio.core.analysis.metrics.episode_metrics`, field for field, bit for bit.

Numpy costs about a microsecond per call whatever the array size, and the per-episode path
makes a few hundred calls per episode. Here the poses of consecutive episodes are laid end to
end into one (sum T, A, 3) array; coverage, success (:func:`observe.goal_reached_batch`),
speeds, overlaps and free-space tests run once over it, and per-episode results come out of
segment reductions (``reduceat`` over episode start rows, running maxima that restart at each
start). Path lengths are running sums over each episode's slice, as in the per-episode path,
so the two agree exactly (tests/core/test_metrics.py checks every field; the diagnoses come
from :func:`diagnosis.diagnose_block`, the batched twin of ``diagnose``).

``tape_metrics(tape)`` reads a tape in blocks of whole episodes (one file read per block;
chunks of 64 KiB and more are decoded as views into it, smaller ones are copied)
and is what ``arena-studio stats`` uses.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Callable, Sequence
from typing import Any

import numpy as np

from arena_studio.core.analysis.diagnosis import diagnose_block
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
from arena_studio.core.tape.episode import Episode

#: episodes are processed in groups of about this many steps (arrays stay cache-sized)
BLOCK_STEPS = 32768
#: EpisodeMetrics field names in order (the values are assembled in this order)
_METRIC_FIELDS = tuple(f.name for f in dataclasses.fields(EpisodeMetrics))


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
    """``[episode_metrics(scene, e) for e in episodes]``, computed in blocks of episodes."""
    out: list[EpisodeMetrics] = []
    block: list[Episode] = []
    rows = 0
    for ep in episodes:
        if block and (rows + ep.steps > BLOCK_STEPS or ep.dt != block[0].dt):
            out.extend(_block_metrics(scene, block))
            block, rows = [], 0
        block.append(ep)
        rows += ep.steps
    if block:
        out.extend(_block_metrics(scene, block))
    return out


def tape_metrics(
    tape: Any,
    indices: Sequence[int] | None = None,
    advance: Callable[[int], None] | None = None,
) -> list[EpisodeMetrics]:
    """Metrics of a tape's episodes (all, or ``indices`` in order), read block by block:
    one file read and one checksum pass per block of consecutive episodes. (A reader thread
    fetching the next block was tried: the GIL left it no faster on two cores.)"""
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
        episodes = tape.decode_span(tape.read_span(start, stop), copy=False)
        out.extend(episodes_metrics(tape.scene, episodes))
        if advance is not None:
            advance(len(episodes))
    return out


def _block_metrics(scene: Scene, episodes: list[Episode]) -> list[EpisodeMetrics]:
    n_agents, n_lm = len(scene.agents), len(scene.landmarks)
    for ep in episodes:
        if ep.agent_count != n_agents:
            raise ValueError(f"episode {ep.index}: {ep.agent_count} agents, scene has {n_agents}")
    dt = episodes[0].dt
    lengths = np.array([ep.steps for ep in episodes], dtype=np.int64)
    starts, floor = segment_starts(lengths)
    ends = starts + lengths
    n = int(ends[-1])
    # x and y as (A, N): one contiguous row per agent, episodes end to end (headings are
    # laid out the same way only when some step is slow enough to need its turn rate)
    xa, ya = _agent_rows(episodes, starts, lengths, (0, 1))
    idx = np.arange(n)

    # goals ------------------------------------------------------------------------------
    # tapes hand out the same goal arrays episode after episode: answers are remembered by
    # array identity (safe: every episode, hence every array, lives until this block ends)
    aligned: list[bool | None] = []
    targets_of: list[tuple[int, ...] | None] = []
    goal_rows = np.zeros((len(episodes), n_lm), dtype=bool)
    cache: dict[bytes, tuple[int, ...]] = {}
    seen: dict[tuple[int, ...], tuple[bool | None, tuple[int, ...] | None]] = {}
    rows_of: dict[tuple[int, ...], list[int]] = {}
    for e, ep in enumerate(episodes):
        ident = (id(ep.team_goal), *map(id, ep.pursued_goals))
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
    has_goal = goal_rows.any(axis=1)
    # only landmarks some episode is judged on, or all when one is misaligned (its diagnosis
    # looks for landmarks outside the goal); the rest stay False and are never read
    needed = np.asarray(goal_rows.any(axis=0))
    if any(a is False and t is not None for a, t in zip(aligned, targets_of, strict=True)):
        needed[:] = True
    planes = coverage_planes_sparse(scene, xa, ya, only=needed)  # (L, A, N)
    cover = planes.transpose(2, 1, 0)  # (N, A, L) view
    # agents covering each landmark, (L, N), and landmark covered by some agent; unneeded
    # landmarks stay 0 / False (the diagnosis reads the counts too)
    count = np.zeros((n_lm, n), dtype=np.uint8 if n_agents < 256 else np.int64)
    for k in np.flatnonzero(needed).tolist():
        for a in range(n_agents):
            count[k] += planes[k, a]
    covered_any = count > 0

    # success ----------------------------------------------------------------------------
    success = np.zeros(len(episodes), dtype=bool)
    step = np.zeros(len(episodes), dtype=np.int64)
    if has_goal.any():
        goals = goal_rows.copy()
        goals[~has_goal, 0] = True  # placeholder target, result ignored
        reached = goal_reached_planes(scene, goals, covered_any, lengths, dt=dt)
        if scene.goals.rule == "all_at_end":
            success = reached[ends - 1] & has_goal
            step = np.maximum.reduceat(np.where(reached, floor, idx), starts) + 1 - starts
        else:
            first = np.minimum.reduceat(np.where(reached, idx, n), starts)
            success = (first < ends) & has_goal
            step = first - starts
    at_row = np.where(success, starts + step, ends - 1)

    # who covered which target --------------------------------------------------------------
    lm_pos = np.array([lm.position for lm in scene.landmarks], dtype=np.float64).reshape(-1, 2)
    if scene.goals.rule == "all_visited":
        any_cover = cover.any(axis=1)  # (N, L)
        first_row = np.minimum.reduceat(np.where(any_cover, idx[:, None], n), starts, axis=0)
        visited = first_row <= at_row[:, None]
        safe = np.minimum(first_row, n - 1)
        who = cover[safe, :, np.arange(n_lm)[None, :]].argmax(axis=-1)  # (E, L)
    else:
        c_at = cover[at_row]  # (E, A, L)
        x_at, y_at = xa[:, at_row].T, ya[:, at_row].T  # (E, A)
        d = np.hypot(x_at[:, :, None] - lm_pos[:, 0], y_at[:, :, None] - lm_pos[:, 1])
        who = np.where(c_at, d, np.inf).argmin(axis=1)  # (E, L)
        visited = np.asarray(c_at.any(axis=1))

    # motion -----------------------------------------------------------------------------------
    # (A, N) step lengths, column r: move from row r to r + 1 (as metrics.step_lengths); the
    # last column, after the last row, is 0 so that the rows reshape into episodes
    seg_rows = np.zeros((n_agents, n))
    seg = seg_rows[:, :-1]
    if n > 1:
        dy = np.empty(n - 1)
        for a in range(n_agents):  # agent by agent: the rows stay in cache
            sa = seg[a]
            np.subtract(xa[a, 1:], xa[a, :-1], out=sa)
            np.subtract(ya[a, 1:], ya[a, :-1], out=dy)
            sa *= sa
            dy *= dy
            sa += dy
            np.sqrt(sa, out=sa)
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
    still = still_an.T  # (N, A) view
    # still steps per (episode, agent), counted from the sparse still positions
    ep_of = np.searchsorted(starts, rr, side="right") - 1
    still_counts = np.bincount(ep_of * n_agents + aa, minlength=len(episodes) * n_agents)
    still_counts = still_counts.reshape(len(episodes), n_agents)

    # contacts ---------------------------------------------------------------------------------
    on_rows, on_pair = _contact_onsets(scene, xa, ya, floor)
    exits = _exit_counts(scene, xa, ya, starts, floor, len(episodes))
    pi_, pj_ = _pairs(n_agents)
    on_split = np.searchsorted(on_rows, ends)

    # assemble -----------------------------------------------------------------------------
    ids = [a.id for a in scene.agents]
    lm_ids = [lm.id for lm in scene.landmarks]
    success_list = success.tolist()
    step_list = step.tolist()
    found = diagnose_block(
        scene,
        episodes,
        success_list,
        targets_of,
        aligned,
        cover,
        still,
        (starts, lengths, floor),
        count,
        xa,
        ya,
    )
    who_list, visited_list = who.tolist(), visited.tolist()
    exits_list = exits.tolist()
    still_time = (still_counts * dt).tolist()
    paths = _path_lengths(seg_rows, starts, lengths, n_agents)
    out: list[EpisodeMetrics] = []
    lo = 0
    split_list = on_split.tolist()
    lengths_list = lengths.tolist()
    # (step in its episode, agent i, agent j) of every contact onset, episode after episode
    on_ep = np.searchsorted(on_split, np.arange(on_rows.size), side="right")
    contacts = list(
        zip(
            (on_rows - starts[on_ep]).tolist(),
            pi_[on_pair].tolist(),
            pj_[on_pair].tolist(),
            strict=True,
        )
    )
    # EpisodeMetrics is a frozen dataclass without __post_init__: its generated __init__ sets
    # each of the 22 fields through object.__setattr__ (~2.5 us); filling the new instance's
    # dict gives the same object in ~1 us (tests/core/test_metrics_batch_paths.py)
    new_object = object.__new__
    # goal key, kind and par time once per distinct goal of the block
    per_goal: dict[tuple[int, ...] | None, tuple[str | None, str | None, float | None]] = {}
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
            pairs = tuple(contacts[lo:hi])
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
        made = new_object(EpisodeMetrics)
        made.__dict__.update(
            zip(
                _METRIC_FIELDS,
                (  # in field order
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
                ),
                strict=True,
            )
        )
        out.append(made)
    return out


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
