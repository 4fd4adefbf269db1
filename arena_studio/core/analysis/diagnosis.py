"""Why a failed episode failed: the first matching pattern, and the step where it shows.

Checked in this order (the first that matches wins, so a root cause beats its symptoms):

``misaligned``       agents pursued different goals (or not the team goal). Shows at the first
                     step an agent covers a landmark outside the judged goal, else step 0.
``duplicate-target`` at the end two or more agents cover one target while another target is
                     empty. Shows where that situation began (and lasted to the end).
``not-together``     (rules ``all_at_end`` / ``all_at_once``) every target was covered at
                     some step, never all at once for the hold time. Shows at the step the
                     last target was first reached.
``time-ran-out``     some agent was still moving at the last step, closer to an empty target
                     than a second earlier. Shows at the last step.
``stuck``            an agent stood still for the last :data:`STUCK_SECONDS` away from every
                     target while a target was empty. Shows where it stopped.
``uncovered``        none of the above: targets left empty at the end. Shows at the last step.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from arena_studio.core.scene.model import Scene
from arena_studio.core.tape.episode import Episode

if TYPE_CHECKING:
    from arena_studio.core.analysis.metrics import EpisodeMetrics

STUCK_SECONDS = 2.0
CODES = ("misaligned", "duplicate-target", "not-together", "time-ran-out", "stuck", "uncovered")
#: each diagnosis's sentence with its slots; landmarks go in by id (the diagnosis is data
#: that tables and exports keep), and ``diagnosis_words.diagnosis_words`` puts the labels
#: into the same slots for a person to read
SENTENCES = {
    "misaligned": "agents pursued different goals ({wanted})",
    "duplicate-target": "{agents} went to {target} while {empty} stayed empty",
    "time-ran-out": "time ran out while {agents} still moved towards {empty}",
    "stuck": "{agents} stopped at {at} away from every target while {empty} stayed empty",
    "uncovered": "targets left empty at the end: {empty}",
}


@dataclass(frozen=True)
class Diagnosis:
    code: str
    text: str
    step: int


def _final_run_start(mask: np.ndarray) -> int:
    """Start of the run of True values that lasts to the end (mask[-1] must be True)."""
    falses = np.flatnonzero(~mask)
    return int(falses[-1] + 1) if falses.size else 0


def _goal_words(scene: Scene, goal: np.ndarray | None) -> str:
    if goal is None:
        return "nothing recorded"
    ids = [scene.landmarks[i].id for i in np.flatnonzero(goal)]
    return "+".join(ids) if ids else "no target"


def _wanted(scene: Scene, episode: Episode) -> str:
    """What each agent went for: its pursued goal, or its share when only shares exist."""
    if episode.pursued_goals or not episode.assigned_targets:
        return ", ".join(
            f"{scene.agents[a].id} {_goal_words(scene, g)}"
            for a, g in enumerate(episode.pursued_goals)
        )
    return ", ".join(
        f"{scene.agents[a].id} share {_goal_words(scene, g)}"
        for a, g in enumerate(episode.assigned_targets)
    )


def diagnose(
    scene: Scene,
    episode: Episode,
    metrics: EpisodeMetrics,
    cover: np.ndarray,
    still: np.ndarray,
) -> Diagnosis | None:
    """Diagnosis of a failed episode with a judged goal, or None (success or no goal).

    ``cover`` is (T, A, L) from ``observe.coverage``; ``still`` (T, A) from
    ``metrics.still_mask``.
    """
    if metrics.success or metrics.goal is None:
        return None
    ids = [a.id for a in scene.agents]
    lm_ids = [lm.id for lm in scene.landmarks]
    targets = list(metrics.goal)
    steps = episode.steps
    last = steps - 1

    if metrics.aligned is False:
        outside = np.ones(len(scene.landmarks), dtype=bool)
        outside[targets] = False
        off = np.flatnonzero(cover[:, :, outside].any(axis=(1, 2)))
        wanted = _wanted(scene, episode)
        team = episode.team_goal
        lead = f"team goal {_goal_words(scene, team)}; " if team is not None else ""
        return Diagnosis(
            "misaligned",
            SENTENCES["misaligned"].format(wanted=f"{lead}{wanted}"),
            int(off[0]) if off.size else 0,
        )

    tc = cover[:, :, targets]  # (T, A, K)
    count = tc.sum(axis=1)  # (T, K)
    if len(targets) >= 2:
        dup = (count >= 2).any(axis=1) & (count == 0).any(axis=1)
        if dup[-1]:
            k_dup = int(np.argmax(count[-1]))
            k_empty = int(np.flatnonzero(count[-1] == 0)[0])
            who = " and ".join(ids[a] for a in np.flatnonzero(tc[-1, :, k_dup]))
            return Diagnosis(
                "duplicate-target",
                SENTENCES["duplicate-target"].format(
                    agents=who, target=lm_ids[targets[k_dup]], empty=lm_ids[targets[k_empty]]
                ),
                _final_run_start(dup),
            )
        ever = count > 0  # (T, K)
        if scene.goals.rule != "all_visited" and ever.any(axis=0).all():
            first = ever.argmax(axis=0)
            return Diagnosis(
                "not-together",
                "every target was reached, but never all at the same time"
                + (f" for {scene.goals.hold_time:g} s" if scene.goals.hold_time > 0 else ""),
                int(first.max()),
            )

    empty = [targets[k] for k in np.flatnonzero(count[-1] == 0)]
    if not empty:
        empty = list(targets)
    lm_pos = np.array([scene.landmarks[i].position for i in empty], dtype=np.float64)
    xy = episode.poses[:, :, :2]
    back = max(0, last - round(1.0 / episode.dt))
    d_now = np.linalg.norm(xy[last][:, None, :] - lm_pos[None], axis=-1).min(axis=1)
    d_then = np.linalg.norm(xy[back][:, None, :] - lm_pos[None], axis=-1).min(axis=1)
    approaching = ~still[-1] & (d_now < d_then - 1e-6)
    if approaching.any():
        names = ", ".join(ids[a] for a in np.flatnonzero(approaching))
        return Diagnosis(
            "time-ran-out",
            SENTENCES["time-ran-out"].format(
                agents=names, empty="+".join(lm_ids[i] for i in empty)
            ),
            last,
        )

    need = round(STUCK_SECONDS / episode.dt)
    for a in range(episode.agent_count):
        if still[-1, a] and not cover[-1, a, targets].any():
            start = _final_run_start(still[:, a])
            if last - start >= need:
                x, y = episode.poses[start, a, :2]
                return Diagnosis(
                    "stuck",
                    SENTENCES["stuck"].format(
                        agents=ids[a],
                        at=f"({x:.2f}, {y:.2f})",
                        empty="+".join(lm_ids[i] for i in empty),
                    ),
                    start,
                )
    return Diagnosis(
        "uncovered", SENTENCES["uncovered"].format(empty="+".join(lm_ids[i] for i in empty)), last
    )


@dataclass(frozen=True, slots=True)
class BlockArrays:
    """The arrays of episodes laid end to end that :func:`diagnose_block` reads.

    ``cover`` (N, A, L) and ``still`` (N, A) are the episodes' arrays concatenated, ``xs``
    and ``ys`` (A, N) the agents' positions laid out the same way (as float64). ``rows`` is
    (starts, lengths, floor) of the episodes as :func:`observe.segment_starts` gives them;
    ``count`` (L, N) the number of agents covering each landmark, needed for every landmark
    an episode without success targets (for all of them when one such is misaligned)."""

    cover: np.ndarray
    still: np.ndarray
    rows: tuple[np.ndarray, np.ndarray, np.ndarray]
    count: np.ndarray
    xs: np.ndarray
    ys: np.ndarray


@dataclass(frozen=True, slots=True)
class _Targets:
    """The judged targets of the failed episodes (``todo``) of a block."""

    todo: list[int]
    tmask: np.ndarray  # (E, L) bool; rows outside todo are False
    uniform: bool  # every episode of todo has the same targets
    misaligned: bool  # some episode of todo is misaligned

    def rows_of(self, k: int, lengths: np.ndarray) -> np.ndarray | None:
        """Rows whose episode targets landmark k; None: all of them (uniform goals)."""
        return None if self.uniform else np.repeat(self.tmask[:, k], lengths)


@dataclass(frozen=True, slots=True)
class _TargetRuns:
    """Per episode, from the per-row target tests."""

    dup_last: list[bool]  # a target doubly covered while another is empty, at the end
    dup_start: list[int]  # the step that situation began (and lasted to the end)
    all_reached: list[bool]  # every target covered at some step
    last_reached: list[int]  # the step the last target was first reached


class _EndState:
    """Per episode, the state at its last step; the dearer answers are computed when first
    asked (most failed episodes never need them)."""

    def __init__(self, arrays: BlockArrays, last: np.ndarray) -> None:
        self._arrays = arrays
        self._last = last
        self.count = arrays.count[:, last].T.tolist()  # (E, L)
        self.still = arrays.still[last].tolist()  # (E, A)
        self._run_starts: list[list[int]] = []
        self._cover_rows: list[list[list[bool]]] = []

    def still_start(self, e: int, a: int) -> int:
        """First step of agent a's still run that lasts to episode e's end."""
        if not self._run_starts:
            starts, _, floor = self._arrays.rows
            idx = np.arange(floor.shape[0])
            self._run_starts.extend(
                (
                    np.maximum.reduceat(
                        np.where(self._arrays.still, floor[:, None], idx[:, None]), starts, 0
                    )
                    + 1
                    - starts[:, None]
                ).tolist()
            )
        return self._run_starts[e][a]

    def cover(self, e: int) -> list[list[bool]]:
        """(A, L) coverage at episode e's last step."""
        if not self._cover_rows:
            self._cover_rows.extend(self._arrays.cover[self._last].tolist())
        return self._cover_rows[e]


def diagnose_block(
    scene: Scene,
    episodes: Sequence[Episode],
    success: Sequence[bool],
    goals: Sequence[tuple[int, ...] | None],
    aligned: Sequence[bool | None],
    arrays: BlockArrays,
) -> list[Diagnosis | None]:
    """:func:`diagnose` for episodes laid end to end, one answer per episode, identical to
    calling it episode by episode: every per-step test runs once over all rows and is reduced
    per episode, leaving only the wording to a Python loop.

    ``success``, ``goals`` (judged target indices) and ``aligned`` are the episodes'
    metrics, ``arrays`` their concatenated arrays. All episodes share one ``dt``.
    """
    out: list[Diagnosis | None] = [None] * len(episodes)
    targets = _block_targets(success, goals, aligned, arrays.cover.shape[2])
    if targets is None:
        return out
    starts, lengths, _ = arrays.rows
    last = starts + lengths - 1
    off_first = _off_goal_first(targets, arrays) if targets.misaligned else []
    runs = _target_runs(targets, arrays)
    end = _EndState(arrays, last)
    back = np.maximum(last - round(1.0 / episodes[0].dt), starts)
    lm_all = np.array([lm.position for lm in scene.landmarks], dtype=np.float64)
    todo = targets.todo
    approaching = _approaching(
        todo,
        targets.tmask,
        arrays.count[:, last].T,
        lm_all,
        (arrays.xs, arrays.ys),
        last[todo],
        back[todo],
    )
    words = _Wording(scene, episodes[0].dt)
    for e in todo:
        t_end = int(lengths[e]) - 1
        if aligned[e] is False:
            out[e] = words.misaligned(episodes[e], off_first[e], t_end)
        else:
            out[e] = words.first_match(
                episodes[e], list(goals[e] or ()), t_end, runs, end, approaching[e], e
            )
    return out


def _block_targets(
    success: Sequence[bool],
    goals: Sequence[tuple[int, ...] | None],
    aligned: Sequence[bool | None],
    n_lm: int,
) -> _Targets | None:
    """The failed episodes with a goal and their target masks; None when there are none."""
    n_ep = len(success)
    todo = [e for e in range(n_ep) if not success[e] and goals[e] is not None]
    if not todo:
        return None
    tmask = np.zeros((n_ep, n_lm), dtype=bool)
    by_goal: dict[tuple[int, ...], list[int]] = {}
    for e in todo:
        by_goal.setdefault(goals[e] or (), []).append(e)
    for goal, members in by_goal.items():  # one assignment per distinct goal
        tmask[np.ix_(members, goal)] = True
    # every result below is reduced per episode and read only for the episodes in todo, so
    # when those share one goal its mask can stand for every row
    uniform = bool((tmask[todo] == tmask[todo[0]]).all())
    misaligned = any(aligned[e] is False for e in todo)
    return _Targets(todo, tmask, uniform, misaligned)


def _off_goal_first(targets: _Targets, arrays: BlockArrays) -> list[int]:
    """Per episode, the first step a landmark outside the goal is covered (past the end:
    never)."""
    starts, lengths, _ = arrays.rows
    count = arrays.count
    n_lm, n_rows = count.shape
    covered = np.asarray(count > 0)
    off = np.zeros(n_rows, dtype=bool)
    for k in range(n_lm):
        rk = targets.rows_of(k, lengths)
        if rk is None:
            if not targets.tmask[targets.todo[0], k]:
                off |= covered[k]
        else:
            off |= covered[k] & ~rk
    idx = np.arange(n_rows)
    return (np.minimum.reduceat(np.where(off, idx, n_rows), starts) - starts).tolist()


def _target_runs(targets: _Targets, arrays: BlockArrays) -> _TargetRuns:
    """Duplicate coverage and first visits of the targets, reduced per episode."""
    starts, lengths, floor = arrays.rows
    count, tmask = arrays.count, targets.tmask
    n_lm, n_rows = count.shape
    ends = starts + lengths
    idx = np.arange(n_rows)
    covered = np.asarray(count > 0)
    many = np.zeros(n_rows, dtype=bool)  # some target covered twice or more
    hole = np.zeros(n_rows, dtype=bool)  # some target empty
    first_cov = np.full((len(starts), n_lm), n_rows, dtype=np.int64)
    for k in np.flatnonzero(tmask.any(axis=0)).tolist():
        rk = targets.rows_of(k, lengths)
        if rk is None:
            many |= count[k] >= 2
            hole |= ~covered[k]
        else:
            many |= (count[k] >= 2) & rk
            hole |= ~covered[k] & rk
        first_cov[:, k] = np.minimum.reduceat(np.where(covered[k], idx, n_rows), starts)
    dup = many & hole
    return _TargetRuns(
        dup[ends - 1].tolist(),
        (np.maximum.reduceat(np.where(dup, floor, idx), starts) + 1 - starts).tolist(),
        np.asarray((~tmask | (first_cov < ends[:, None])).all(axis=1)).tolist(),
        (np.where(tmask, first_cov, -1).max(axis=1) - starts).tolist(),
    )


class _Wording:
    """The diagnoses' sentences, checked in the module docstring's order."""

    def __init__(self, scene: Scene, dt: float) -> None:
        self.scene = scene
        self.ids = [a.id for a in scene.agents]
        self.lm_ids = [lm.id for lm in scene.landmarks]
        self.need = round(STUCK_SECONDS / dt)
        self.simultaneous = scene.goals.rule != "all_visited"
        hold = scene.goals.hold_time
        self.hold_words = f" for {hold:g} s" if hold > 0 else ""

    def misaligned(self, ep: Episode, first: int, t_end: int) -> Diagnosis:
        wanted = _wanted(self.scene, ep)
        team = ep.team_goal
        lead = f"team goal {_goal_words(self.scene, team)}; " if team is not None else ""
        return Diagnosis(
            "misaligned",
            SENTENCES["misaligned"].format(wanted=f"{lead}{wanted}"),
            first if first <= t_end else 0,
        )

    def first_match(
        self,
        ep: Episode,
        targets: list[int],
        t_end: int,
        runs: _TargetRuns,
        end: _EndState,
        closer: list[bool],
        e: int,
    ) -> Diagnosis:
        ids, lm_ids = self.ids, self.lm_ids
        n_agents = len(ids)
        counts = [end.count[e][lm] for lm in targets]
        if len(targets) >= 2:
            if runs.dup_last[e]:
                lm_dup = targets[counts.index(max(counts))]
                k_empty = counts.index(0)
                who = " and ".join(ids[a] for a in range(n_agents) if end.cover(e)[a][lm_dup])
                return Diagnosis(
                    "duplicate-target",
                    SENTENCES["duplicate-target"].format(
                        agents=who, target=lm_ids[lm_dup], empty=lm_ids[targets[k_empty]]
                    ),
                    runs.dup_start[e],
                )
            if self.simultaneous and runs.all_reached[e]:
                return Diagnosis(
                    "not-together",
                    "every target was reached, but never all at the same time" + self.hold_words,
                    runs.last_reached[e],
                )
        empty = [lm for lm, c in zip(targets, counts, strict=True) if c == 0] or list(targets)
        empty_words = "+".join(lm_ids[i] for i in empty)
        still_last = end.still[e]
        approaching = [a for a in range(n_agents) if closer[a] and not still_last[a]]
        if approaching:
            names = ", ".join(ids[a] for a in approaching)
            return Diagnosis(
                "time-ran-out",
                SENTENCES["time-ran-out"].format(agents=names, empty=empty_words),
                t_end,
            )
        for a in range(n_agents):
            if still_last[a] and not any(end.cover(e)[a][lm] for lm in targets):
                start = end.still_start(e, a)
                if t_end - start >= self.need:
                    x, y = ep.poses[start, a, :2]
                    return Diagnosis(
                        "stuck",
                        SENTENCES["stuck"].format(
                            agents=ids[a], at=f"({x:.2f}, {y:.2f})", empty=empty_words
                        ),
                        start,
                    )
        return Diagnosis("uncovered", SENTENCES["uncovered"].format(empty=empty_words), t_end)


def _approaching(
    todo: list[int],
    tmask: np.ndarray,
    end_count: np.ndarray,
    lm_all: np.ndarray,
    xy: tuple[np.ndarray, np.ndarray],
    now_rows: np.ndarray,
    back_rows: np.ndarray,
) -> dict[int, list[bool]]:
    """Per episode of ``todo``, per agent: is it nearer its nearest empty target at the last
    step (row ``now_rows``) than one second earlier (``back_rows``), by more than 1e-6 m? As
    :func:`diagnose` computes it, with the same subtractions, squares and square roots, for
    every episode at once; the minimum over the empty targets is a running ``np.minimum``
    with the other targets left at infinity, which leaves it unchanged (NaN propagates as
    in ``min``). Empty targets: those no agent covers at the end, or all of them when every
    one is covered."""
    xs, ys = xy
    targets = tmask[todo]  # (E, L)
    empty = targets & (end_count[todo] == 0)
    none_empty = ~empty.any(axis=1)
    empty[none_empty] = targets[none_empty]

    def nearest(rows: np.ndarray) -> np.ndarray:
        """(E, A) distance to the nearest empty target: sqrt(dx * dx + dy * dy), what
        np.linalg.norm sums over a pair of coordinates, one landmark at a time."""
        x, y = xs[:, rows].T, ys[:, rows].T  # (E, A)
        best = np.full(x.shape, np.inf)
        for k in np.flatnonzero(empty.any(axis=0)).tolist():
            dx = x - lm_all[k, 0]
            dy = y - lm_all[k, 1]
            dist = np.sqrt(dx * dx + dy * dy)
            np.minimum(best, np.where(empty[:, k, None], dist, np.inf), out=best)
        return best

    closer = (nearest(now_rows) < nearest(back_rows) - 1e-6).tolist()
    return dict(zip(todo, closer, strict=True))


def _any_row(mask: np.ndarray) -> np.ndarray:
    """``mask.any(axis=1)`` for an (N, L) mask with few columns, by element-wise ORs."""
    out = mask[:, 0].copy() if mask.shape[1] else np.zeros(mask.shape[0], dtype=bool)
    for k in range(1, mask.shape[1]):
        out |= mask[:, k]
    return out


__all__ = ["CODES", "SENTENCES", "BlockArrays", "Diagnosis", "diagnose", "diagnose_block"]
