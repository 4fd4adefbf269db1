"""Which episodes go to which tape: the part of recording that knows no environment API.

The wrappers call ``begin`` after every reset, ``step`` after every step and ``end`` when the
episode is over; the session decides whether the episode is recorded (every Nth, or a
trigger), opens a new tape every ``episodes_per_tape`` recorded episodes, and closes the
current one on ``close``. Tapes are written through :class:`TapeWriter`, so a crash leaves a
``*.tape.partial`` that opens with every finished episode.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from pathlib import Path
from typing import Any

import numpy as np

from arena_studio.core.scene import Scene, load_scene
from arena_studio.core.tape import TapeWriter
from arena_studio.record.sources import RecordError

#: steps buffered before a chunk is written (and flushed to the OS): what a crash can lose
DEFAULT_FLUSH_STEPS = 256


def scene_of(scene: Scene | str | Path) -> Scene:
    """The scene itself, or loaded from a scene file."""
    return scene if isinstance(scene, Scene) else load_scene(scene)


def tape_path(path: Path, part: int, rotating: bool) -> Path:
    """``run.tape`` itself, or ``run-000.tape``, ``run-001.tape``... when tapes rotate.

    A ``{part}`` placeholder in the name (``run-{part:04d}.tape``) is filled in instead.
    """
    if "{" in path.name:
        return path.with_name(path.name.format(part=part))
    if not rotating:
        return path
    name = path.name
    stem, ext = (name[: -len(".tape")], ".tape") if name.endswith(".tape") else (name, "")
    return path.with_name(f"{stem}-{part:03d}{ext}")


class RecordingSession:
    """Episodes in, tapes out; see the module docstring."""

    def __init__(
        self,
        path: str | Path,
        scene: Scene,
        dt: float,
        *,
        every: int = 1,
        trigger: Callable[[int], bool] | None = None,
        episodes_per_tape: int | None = None,
        flush_steps: int = DEFAULT_FLUSH_STEPS,
        fsync: bool = False,
        metadata: Mapping[str, Any] | None = None,
    ) -> None:
        if not isinstance(every, int) or every < 1:
            raise RecordError(f"every: expected a whole number >= 1, got {every!r}")
        if episodes_per_tape is not None and (
            not isinstance(episodes_per_tape, int) or episodes_per_tape < 1
        ):
            raise RecordError("episodes_per_tape: expected a whole number >= 1 or None")
        self.path = Path(path)
        self.scene = scene
        self.dt = float(dt)
        self.every = every
        self.trigger = trigger
        self.episodes_per_tape = episodes_per_tape
        self.flush_steps = flush_steps
        self.fsync = fsync
        self.metadata = dict(metadata or {})
        #: environment episodes seen (every reset counts), recorded or not
        self.episodes_seen = 0
        #: finished tapes, in order
        self.paths: list[Path] = []
        self._writer: TapeWriter | None = None
        self._part = 0
        self._in_tape = 0
        self._recording = False
        self._steps = 0
        self._env_episode = 0

    @property
    def recording(self) -> bool:
        """True while the current episode is being recorded."""
        return self._recording

    @property
    def writing(self) -> Path | None:
        """The tape being written now (its ``.partial`` file holds it), if any."""
        return None if self._writer is None else self._writer.path

    def wants(self, episode: int) -> bool:
        """Whether environment episode ``episode`` (0-based) is recorded."""
        if episode % self.every:
            return False
        return True if self.trigger is None else bool(self.trigger(episode))

    def begin(
        self,
        team_goal: np.ndarray | None,
        pursued: list[np.ndarray | None] | None,
        messages: list[Any] | None = None,
    ) -> bool:
        """A new environment episode; returns whether it is recorded."""
        if self._recording:
            self.end({"cut": True})  # reset before the episode finished
        episode = self.episodes_seen
        self.episodes_seen += 1
        if not self.wants(episode):
            return False
        writer = self._open_writer()
        writer.begin_episode(team_goal=team_goal, pursued_goals=pursued, messages=messages)
        self._env_episode = episode
        self._recording = True
        self._steps = 0
        return True

    def step(
        self,
        poses: np.ndarray,
        rewards: np.ndarray | None,
        done: np.ndarray | None,
        actions: np.ndarray | None,
        channels: Mapping[str, np.ndarray] | None,
    ) -> None:
        if not self._recording or self._writer is None:
            return
        if not np.isfinite(poses).all():
            raise RecordError(
                f"episode {self.episodes_seen - 1} step {self._steps}: "
                f"a pose is not a finite number: {poses.tolist()}"
            )
        self._writer.step(
            poses.copy(),
            None if rewards is None else rewards.copy(),
            None if actions is None else actions.copy(),
            None if done is None else done.copy(),
            None if channels is None else {k: np.array(v) for k, v in channels.items()},
        )
        self._steps += 1

    def end(self, outcome: Mapping[str, Any] | None = None) -> None:
        """The episode is over (all agents done, or cut by a reset)."""
        if not self._recording or self._writer is None:
            return
        self._recording = False
        self._writer.end_episode(outcome={"env_episode": self._env_episode, **(outcome or {})})
        self._in_tape += 1
        if self.episodes_per_tape is not None and self._in_tape >= self.episodes_per_tape:
            self._close_writer()

    def close(self) -> None:
        """Finish the current tape (an open episode is kept, marked unfinished)."""
        self._recording = False
        self._close_writer()

    def _open_writer(self) -> TapeWriter:
        if self._writer is None:
            rotating = self.episodes_per_tape is not None
            path = tape_path(self.path, self._part, rotating)
            path.parent.mkdir(parents=True, exist_ok=True)
            meta = {"recorded_by": "arena_studio.record", "part": self._part, **self.metadata}
            self._writer = TapeWriter(
                path,
                self.scene,
                self.dt,
                metadata=meta,
                chunk_steps=self.flush_steps,
                fsync_chunks=self.fsync,
            )
            self._in_tape = 0
        return self._writer

    def _close_writer(self) -> None:
        if self._writer is None:
            return
        writer, self._writer = self._writer, None
        writer.close()
        self.paths.append(writer.path)
        self._part += 1


__all__ = ["DEFAULT_FLUSH_STEPS", "RecordingSession", "scene_of", "tape_path"]
