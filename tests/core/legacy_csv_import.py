"""The whole-file CSV importer as it was before imports streamed: the reference the
streaming importer is compared with (same tapes, same messages). Test-only; it keeps every
row as a Python object, which is exactly what the shipped importer no longer does."""

# ruff: noqa
from __future__ import annotations

import csv
import io
import math
from collections.abc import Callable, Mapping
from pathlib import Path
from typing import Any

import numpy as np

from arena_studio.core.import_rows import (
    ImportFormatError,
    ImportRow,
    RowLayout,
    parse_row,
)
from arena_studio.core.safe_open import open_input
from arena_studio.core.scene.model import Scene
from arena_studio.core.tape import TapeWriter
from arena_studio.core.value_limits import DT_MAX, DT_MIN

REQUIRED = ("episode", "step", "agent", "x", "y", "heading")
OPTIONAL = ("reward", "goal", "role")


class _EpisodeRows:
    def __init__(self, label: str, agents: int, with_reward: bool) -> None:
        self.label = label
        self.agents = agents
        self.poses: dict[tuple[int, int], tuple[float, float, float]] = {}
        self.rewards: dict[tuple[int, int], float] = {}
        self.goals: list[tuple[str, int] | None] = [None] * agents  # (text, line)
        self.roles: dict[tuple[int, int], str] = {}
        self.with_reward = with_reward


def legacy_import_csv(
    path: str | Path,
    scene: Scene,
    out: str | Path,
    *,
    dt: float = 0.1,
    columns: Mapping[str, str] | None = None,
    advance: Callable[[int], None] | None = None,
    keep_partial: bool = False,
    skipped: list[str] | None = None,
) -> int:
    """Convert a long-format CSV file into the tape ``out``; returns the episode count.

    A bad row raises :class:`ImportFormatError` naming its line and column. With a
    ``skipped`` list the bad rows (and episodes left with missing steps) are described there
    and left out, and the rest is imported (``--skip-bad``).
    """
    src = str(path)
    check_dt(src, dt)
    mapping = {name: name for name in REQUIRED + OPTIONAL}
    mapping.update(columns or {})
    agent_ids = [a.id for a in scene.agents]
    lm_ids = {lm.id: i for i, lm in enumerate(scene.landmarks)}
    episodes: dict[str, _EpisodeRows] = {}
    raw = open_input(path, "csv")  # regular files only, size bounded
    with io.TextIOWrapper(raw, newline="", encoding="utf-8-sig") as handle:
        reader = csv.reader(handle)
        try:
            header = next(reader)
        except StopIteration:
            raise ImportFormatError(f"{src}: the file is empty") from None
        except (csv.Error, UnicodeDecodeError) as exc:
            raise ImportFormatError(f"{src}: line 1: {exc}") from None
        where = {name: i for i, name in enumerate(header)}
        missing = [mapping[n] for n in REQUIRED if mapping[n] not in where]
        if missing:
            raise ImportFormatError(
                f"{src}: line 1: missing column(s) {', '.join(missing)} (have {', '.join(header)};"
                " map other names with --columns)"
            )
        col = {n: where[mapping[n]] for n in REQUIRED + OPTIONAL if mapping[n] in where}
        layout = RowLayout(src, col, mapping, tuple(agent_ids))
        has_reward = "reward" in col
        line = 1
        try:
            for row in reader:
                line = reader.line_num
                if not row or all(not c.strip() for c in row):
                    continue
                try:
                    _add_row(
                        src, parse_row(layout, line, row), mapping, agent_ids, episodes, has_reward
                    )
                except ImportFormatError as exc:
                    if skipped is None:
                        raise
                    skipped.append(str(exc).removeprefix(f"{src}: "))
                if advance is not None and line % 10_000 == 0:
                    advance(10_000)
        except (csv.Error, UnicodeDecodeError) as exc:
            raise ImportFormatError(f"{src}: line {line + 1}: {exc}") from None
    ready = []
    for ep in episodes.values():
        try:
            arrays = _episode_arrays(src, ep, mapping)
            pursued = [
                None if g is None else _goal_vector(src, g[1], mapping["goal"], g[0], lm_ids)
                for g in ep.goals
            ]
        except ImportFormatError as exc:
            if skipped is None:
                raise
            skipped.append(str(exc).removeprefix(f"{src}: ") + "; episode left out")
            continue
        ready.append((ep, arrays, pursued))
    if not ready:
        raise ImportFormatError(f"{src}: no data rows" + (" left" if skipped else ""))
    meta = {"generator": "arena-studio import csv", "source": Path(src).name}
    with TapeWriter(out, scene, dt=dt, metadata=meta, keep_partial=keep_partial) as writer:
        for ep, arrays, pursued in ready:
            writer.begin_episode(
                pursued_goals=pursued if any(g is not None for g in pursued) else None,
                roles=arrays["roles"],
                messages=[{"episode": ep.label}],
            )
            writer.steps(arrays["poses"], rewards=arrays["rewards"])
            writer.end_episode()
    return len(ready)


def check_dt(src: str, dt: float) -> None:
    """Refuse a time step outside the documented range (as a tape reader would)."""
    if not (isinstance(dt, int | float) and math.isfinite(dt) and DT_MIN <= dt <= DT_MAX):
        raise ImportFormatError(
            f"{src}: dt: expected a time step from {DT_MIN:g} s to {DT_MAX:g} s, got {dt!r}"
        )


def _add_row(
    src: str,
    r: ImportRow,
    mapping: dict[str, str],
    agent_ids: list[str],
    episodes: dict[str, _EpisodeRows],
    has_reward: bool,
) -> None:
    """File a checked row under its episode; a repeated step or a changed goal is refused."""
    ep = episodes.get(r.episode)
    if ep is None:
        ep = episodes[r.episode] = _EpisodeRows(r.episode, len(agent_ids), has_reward)
    key = (r.step, r.agent)
    if key in ep.poses:
        raise ImportFormatError(
            f"{src}: line {r.line}: episode {r.episode!r} step {r.step} agent "
            f"{agent_ids[r.agent]} appears twice"
        )
    if r.goal:
        known = ep.goals[r.agent]
        if known is None:
            ep.goals[r.agent] = (r.goal, r.line)
        elif known[0] != r.goal:
            raise ImportFormatError(
                f"{src}: line {r.line}, column '{mapping['goal']}': agent "
                f"{agent_ids[r.agent]} pursued {known[0]!r} earlier in episode {r.episode!r} "
                f"(line {known[1]}), now {r.goal!r}"
            )
    ep.poses[key] = r.pose
    if has_reward and r.reward is not None:
        ep.rewards[key] = r.reward
    if r.role:
        ep.roles[key] = r.role


def _goal_vector(src: str, line: int, column: str, text: str, lm_ids: dict[str, int]) -> np.ndarray:
    vector = np.zeros(len(lm_ids), dtype=np.uint8)
    for part in text.split("+"):
        name = part.strip()
        if name not in lm_ids:
            raise ImportFormatError(
                f"{src}: line {line}, column '{column}': unknown landmark {name!r} "
                f"(scene landmarks: {', '.join(lm_ids)})"
            )
        vector[lm_ids[name]] = 1
    return vector


def _episode_arrays(src: str, ep: _EpisodeRows, mapping: dict[str, str]) -> dict[str, Any]:
    steps = 1 + max(s for s, _ in ep.poses)
    a = ep.agents
    if len(ep.poses) != steps * a:
        for s in range(steps):
            for k in range(a):
                if (s, k) not in ep.poses:
                    raise ImportFormatError(
                        f"{src}: episode {ep.label!r}: no row for step {s} of agent index {k} "
                        f"(every agent needs a row at every step 0..{steps - 1})"
                    )
    keys = [(s, k) for s in range(steps) for k in range(a)]
    poses = np.array([ep.poses[key] for key in keys], dtype=np.float64).reshape(steps, a, 3)
    rewards = None
    if ep.with_reward:
        rewards = np.array([ep.rewards[key] for key in keys], dtype=np.float64).reshape(steps, a)
    roles: list[list[tuple[int, str]]] | None = None
    if ep.roles:
        roles = []
        for k in range(a):
            timeline: list[tuple[int, str]] = []
            for s in range(steps):
                label = ep.roles.get((s, k))
                if label is not None and (not timeline or timeline[-1][1] != label):
                    timeline.append((s, label))
            roles.append(timeline)
    return {"poses": poses, "rewards": rewards, "roles": roles}
