"""Checking a recording against its scene: what the simulator did that the scene forbids.

::

    from arena_studio.core.tape_checks import check_tape
    findings = check_tape(open_tape("run.tape"), scene=load_scene("arena.scene.json"))

Findings use the scene checker's format (:class:`~arena_studio.core.checks.Finding`) plus
the episode, step and agent (:class:`TapeFinding`); codes are in :data:`TAPE_CODES`.
Sorted errors first. A damaged episode is one finding; the others are still checked.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import replace
from typing import Any

import numpy as np

from arena_studio.core.checks import SEVERITIES
from arena_studio.core.scene import Scene
from arena_studio.core.tape.format import TapeError
from arena_studio.core.tape_checks.findings import TAPE_CODES, TapeFinding, place, tape_finding
from arena_studio.core.tape_checks.frame import SAMPLE, check_frame, sample_points
from arena_studio.core.tape_checks.motion import check_motion
from arena_studio.core.tape_checks.starts import check_start
from arena_studio.core.tape_checks.walls import SceneWalls, check_walls

#: findings listed per code; the rest are counted in one ``more-findings`` line
MAX_PER_CODE = 20
#: per-step codes dropped when a unit or axis mistake explains them
_EXPLAINED = {
    "pose-outside-rooms",
    "pose-in-obstacle",
    "wall-crossing",
    "over-speed",
    "over-turn-rate",
    "jump",
    "start-mismatch",
}


def check_tape(
    tape: Any,
    scene: Scene | None = None,
    episodes: Sequence[int] | None = None,
    advance: Callable[[int], None] | None = None,
    max_per_code: int | None = MAX_PER_CODE,
) -> list[TapeFinding]:
    """Every finding about ``tape``; ``scene`` (a scene file's) is compared by hash and,
    when given, is what the poses are checked against (else the tape's own scene)."""
    found = _header_findings(tape, scene)
    target = scene if scene is not None else tape.scene
    if [a.id for a in target.agents] != list(tape.agent_ids):
        target = tape.scene  # a different team: only the tape's own scene fits its poses
    walls = SceneWalls(target)
    indices = range(len(tape)) if episodes is None else episodes
    per_episode = max(1, SAMPLE // max(len(indices), 1))
    samples: list[np.ndarray] = []
    for i in indices:
        try:
            ep = tape.episode(i)
        except TapeError as exc:
            found.append(_unreadable(i, exc))
        else:
            samples.append(sample_points([ep.poses], per_episode))
            found.extend(check_start(target, ep))
            found.extend(check_walls(walls, ep))
            found.extend(check_motion(target, ep))
        if advance is not None:
            advance(1)
    xy = np.concatenate(samples) if samples else np.zeros((0, 2))
    frame = check_frame(walls, xy)
    if frame:
        found = [f for f in found if f.code not in _EXPLAINED] + frame
    return _sorted(_capped(found, max_per_code))


def check_episode(scene: Scene, episode: Any) -> list[TapeFinding]:
    """Findings of one episode on its own (what a viewer marks on its timeline and canvas):
    a unit or axis mistake in its poses replaces the per-step findings it explains."""
    walls = SceneWalls(scene)
    frame = check_frame(walls, sample_points([episode.poses]))
    if frame:
        return [replace(f, episode=episode.index, step=0) for f in frame]
    found = check_start(scene, episode) + check_walls(walls, episode)
    return _sorted(found + check_motion(scene, episode))


def _header_findings(tape: Any, scene: Scene | None) -> list[TapeFinding]:
    found = []
    if getattr(tape, "scene_hash_ok", True) is False:
        found.append(
            tape_finding(
                "scene-hash-broken",
                "the tape's embedded scene does not hash to the value recorded with it "
                "(edited after recording?)",
            )
        )
    if scene is not None:
        recorded = getattr(tape, "scene_hash", None) or tape.scene.content_hash()
        if recorded != scene.content_hash():
            found.append(
                tape_finding(
                    "scene-differs",
                    f"the tape was recorded in a scene with hash {recorded[:12]}…, the given "
                    f"scene '{scene.name}' has {scene.content_hash()[:12]}…",
                )
            )
    return found


def _unreadable(i: int, exc: TapeError) -> TapeFinding:
    where = exc.where or ""
    if ("team_goal" in where or "pursued_goals" in where) and "shape[0]" in exc.problem:
        return tape_finding("goal-vector-length", f"{place(i)}: {where}: {exc.problem}", episode=i)
    return tape_finding("episode-unreadable", f"{place(i)}: {exc}", episode=i)


def _capped(found: list[TapeFinding], limit: int | None) -> list[TapeFinding]:
    if limit is None:
        return found
    kept: list[TapeFinding] = []
    extra: dict[str, int] = {}
    for f in found:
        n = sum(1 for k in kept if k.code == f.code)
        if n < limit:
            kept.append(f)
        else:
            extra[f.code] = extra.get(f.code, 0) + 1
    for code, n in extra.items():
        kept.append(tape_finding("more-findings", f"{n} more {code} finding(s) not listed"))
    return kept


def _sorted(found: list[TapeFinding]) -> list[TapeFinding]:
    rank = {s: i for i, s in enumerate(SEVERITIES)}
    return sorted(found, key=lambda f: rank[f.severity])


__all__ = ["MAX_PER_CODE", "TAPE_CODES", "TapeFinding", "check_episode", "check_tape"]
