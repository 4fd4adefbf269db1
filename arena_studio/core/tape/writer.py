"""TapeWriter: what a simulator uses to record episodes while it runs.

::

    with TapeWriter("run.tape", scene, dt=0.1) as w:
        w.begin_episode(team_goal=goal, pursued_goals=[goal] * 3)
        for t in range(T):
            w.step(poses)                  # (A, 3): x, y, heading per agent
        w.end_episode(outcome={"reward": 1.0})

How partial files behave: records go to ``<path>.partial`` while the writer is open, and
each chunk (every ``chunk_steps`` steps, default 1024, and at episode end) is written and
flushed to the OS as one framed record. If the process dies, ``<path>.partial`` holds every
flushed chunk and
:func:`~arena_studio.core.tape.open_tape` reads it with ``truncated=True``: a crash loses at
most the unflushed steps of the current chunk. ``close()`` writes the index and trailer,
fsyncs and renames to ``path`` atomically, so ``path`` only ever names a finished tape. An
exception inside ``with`` keeps the ``.partial`` file for recovery (``keep_partial=False``
deletes it instead, which the CLI uses on Ctrl+C). ``fsync_chunks=True`` also fsyncs every
chunk (survives power loss, slower).
"""

from __future__ import annotations

import contextlib
import math
import os
from collections.abc import Mapping, Sequence
from pathlib import Path
from typing import Any, BinaryIO

import numpy as np

from arena_studio.core.scene.model import Scene
from arena_studio.core.tape.format import (
    FORMAT_NAME,
    FORMAT_VERSION,
    KIND_BEGIN,
    KIND_CHUNK,
    KIND_END,
    KIND_HEADER,
    KIND_INDEX,
    MAGIC,
    TRAILER,
    TRAILER_MAGIC,
    TapeError,
    encode_array,
    frame,
    pack,
)

DEFAULT_CHUNK_STEPS = 1024


def partial_path(path: str | Path) -> Path:
    """Where an unfinished tape lives while it is written."""
    p = Path(path)
    return p.with_name(p.name + ".partial")


class TapeWriter:
    """Append episodes to a new tape; see the module docstring for crash behaviour."""

    def __init__(
        self,
        path: str | Path,
        scene: Scene,
        dt: float = 0.1,
        *,
        metadata: Mapping[str, Any] | None = None,
        chunk_steps: int = DEFAULT_CHUNK_STEPS,
        keep_partial: bool = True,
        fsync_chunks: bool = False,
    ) -> None:
        self.path = Path(path)
        self._src = str(self.path)
        if not (isinstance(dt, int | float) and math.isfinite(dt) and dt > 0):
            raise TapeError(self._src, "dt", f"expected a time step > 0 s, got {dt!r}")
        if not isinstance(chunk_steps, int) or chunk_steps < 1:
            raise TapeError(self._src, "chunk_steps", "expected a whole number >= 1")
        if not scene.agents:
            raise TapeError(self._src, "scene", "the scene has no agents to record")
        self.scene = scene
        self.dt = float(dt)
        self.agent_ids = tuple(a.id for a in scene.agents)
        self.landmark_count = len(scene.landmarks)
        self.chunk_steps = chunk_steps
        self.keep_partial = keep_partial
        self.fsync_chunks = fsync_chunks
        self.partial = partial_path(self.path)
        self._file: BinaryIO | None = open(self.partial, "wb")  # noqa: SIM115 (closed in close)
        self._pos = 0
        self._episodes: list[tuple[int, int, int]] = []  # begin offset, end offset, steps
        self._episode: _EpisodeBuffer | None = None
        self._write(MAGIC)
        header = {
            "type": "header",
            "format": FORMAT_NAME,
            "version": FORMAT_VERSION,
            "dt": self.dt,
            "agent_ids": list(self.agent_ids),
            "scene": scene.to_dict(),
            "scene_hash": scene.content_hash(),
            "metadata": dict(metadata or {}),
        }
        try:
            self._write(frame(KIND_HEADER, pack(header)))
        except (TypeError, ValueError) as exc:
            self._abandon()
            raise TapeError(self._src, "metadata", f"not storable in msgpack: {exc}") from None
        self._flush()

    # -- context manager -----------------------------------------------------------------
    def __enter__(self) -> TapeWriter:
        return self

    def __exit__(self, exc_type: type[BaseException] | None, *rest: object) -> None:
        if exc_type is None:
            self.close()
        else:
            self.abort(keep=self.keep_partial)

    # -- episodes ------------------------------------------------------------------------
    def begin_episode(
        self,
        team_goal: Sequence[int] | np.ndarray | None = None,
        pursued_goals: Sequence[Sequence[int] | np.ndarray | None] | None = None,
        roles: Sequence[Sequence[tuple[int, str]] | str | None] | None = None,
        messages: Sequence[Any] | None = None,
    ) -> int:
        """Start an episode; returns its index. ``roles[a]`` is a label or (step, label) pairs."""
        self._require_open()
        if self._episode is not None:
            raise TapeError(self._src, f"episode {self._episode.index}", "not ended yet")
        index = len(self._episodes)
        where = f"episode {index}"
        record: dict[str, Any] = {"type": "begin", "episode": index}
        record["team_goal"] = self._goal(team_goal, f"{where}.team_goal")
        if pursued_goals is None:
            record["pursued_goals"] = None
        else:
            goals = list(pursued_goals)
            if len(goals) != len(self.agent_ids):
                raise TapeError(self._src, f"{where}.pursued_goals", "expected one per agent")
            record["pursued_goals"] = [
                self._goal(g, f"{where}.pursued_goals[{a}]") for a, g in enumerate(goals)
            ]
        record["roles"] = self._roles(roles, where)
        record["messages"] = list(messages) if messages is not None else []
        try:
            payload = pack(record)
        except (TypeError, ValueError) as exc:
            raise TapeError(self._src, f"{where}.messages", f"not storable: {exc}") from None
        begin = self._pos
        self._write(frame(KIND_BEGIN, payload))
        self._episode = _EpisodeBuffer(index, begin, len(self.agent_ids))
        return index

    def step(
        self,
        poses: np.ndarray | Sequence[Sequence[float]],
        reward: np.ndarray | Sequence[float] | None = None,
        action: np.ndarray | Sequence[Sequence[float]] | None = None,
        done: np.ndarray | Sequence[bool] | None = None,
        channels: Mapping[str, Any] | None = None,
    ) -> None:
        """Record one step: ``poses`` (A, 3), optional reward (A,), action (A, K), done (A,)."""
        ep = self._current()
        block_channels = None
        if channels is not None:
            block_channels = {k: np.asarray(v)[None] for k, v in channels.items()}
        self._add(
            ep,
            np.asarray(poses, dtype=np.float64)[None],
            None if reward is None else np.asarray(reward, dtype=np.float64)[None],
            None if action is None else np.asarray(action, dtype=np.float64)[None],
            None if done is None else np.asarray(done, dtype=bool)[None],
            block_channels,
        )

    def steps(
        self,
        poses: np.ndarray,
        rewards: np.ndarray | None = None,
        actions: np.ndarray | None = None,
        done: np.ndarray | None = None,
        channels: Mapping[str, np.ndarray] | None = None,
    ) -> None:
        """Record a block of steps: ``poses`` (T, A, 3) and the matching optional arrays."""
        ep = self._current()
        self._add(
            ep,
            np.asarray(poses, dtype=np.float64),
            None if rewards is None else np.asarray(rewards, dtype=np.float64),
            None if actions is None else np.asarray(actions, dtype=np.float64),
            None if done is None else np.asarray(done, dtype=bool),
            None if channels is None else {k: np.asarray(v) for k, v in channels.items()},
        )

    def end_episode(self, outcome: Mapping[str, Any] | None = None) -> None:
        """Flush the last chunk and close the episode with an optional simulator outcome."""
        ep = self._current()
        if ep.steps == 0:
            raise TapeError(self._src, f"episode {ep.index}", "an episode needs at least one step")
        self._flush_chunk(ep)
        record = {
            "type": "end",
            "episode": ep.index,
            "steps": ep.steps,
            "outcome": None if outcome is None else dict(outcome),
        }
        try:
            payload = pack(record)
        except (TypeError, ValueError) as exc:
            raise TapeError(
                self._src, f"episode {ep.index}.outcome", f"not storable: {exc}"
            ) from None
        self._write(frame(KIND_END, payload))
        self._episodes.append((ep.begin, self._pos, ep.steps))
        self._episode = None
        self._flush()

    # -- finishing -------------------------------------------------------------------------
    def close(self) -> None:
        """Write index and trailer, fsync, rename ``<path>.partial`` to ``path``.

        An episode still open is ended with outcome ``{"unfinished": True}``.
        """
        if self._file is None:
            return
        if self._episode is not None:
            if self._episode.steps:
                # closing mid-episode keeps its steps, marked so readers can tell
                self.end_episode(outcome={"unfinished": True})
            self._episode = None  # a begun episode without steps is left out of the index
        table = np.asarray(self._episodes, dtype=np.int64).reshape(-1, 3)
        index = {
            "type": "index",
            "episodes": len(self._episodes),
            "begin": encode_array(table[:, 0], "<i8"),
            "end": encode_array(table[:, 1], "<i8"),
            "steps": encode_array(table[:, 2], "<i8"),
        }
        at = self._pos
        self._write(frame(KIND_INDEX, pack(index)))
        self._write(TRAILER.pack(at, TRAILER_MAGIC))
        handle, self._file = self._file, None
        handle.flush()
        os.fsync(handle.fileno())
        handle.close()
        os.replace(self.partial, self.path)

    def abort(self, keep: bool = True) -> None:
        """Stop without an index: keep ``<path>.partial`` for recovery, or delete it."""
        if self._file is None:
            return
        if self._episode is not None and keep:
            with contextlib.suppress(Exception):
                self._flush_chunk(self._episode)
        self._episode = None
        handle, self._file = self._file, None
        with contextlib.suppress(OSError):
            handle.flush()
        handle.close()
        if not keep:
            with contextlib.suppress(OSError):
                self.partial.unlink()

    @property
    def episodes_written(self) -> int:
        return len(self._episodes)

    # -- internals -------------------------------------------------------------------------
    def _abandon(self) -> None:
        self.abort(keep=False)

    def _require_open(self) -> None:
        if self._file is None:
            raise TapeError(self._src, "", "the writer is closed")

    def _current(self) -> _EpisodeBuffer:
        self._require_open()
        if self._episode is None:
            raise TapeError(self._src, "", "call begin_episode() before recording steps")
        return self._episode

    def _goal(self, goal: Any, where: str) -> dict[str, Any] | None:
        if goal is None:
            return None
        arr = np.asarray(goal)
        if arr.shape != (self.landmark_count,) or not np.isin(arr, (0, 1)).all():
            raise TapeError(
                self._src, where, f"expected a 0/1 vector of {self.landmark_count} landmarks"
            )
        return encode_array(arr.astype(np.uint8), "|u1")

    def _roles(self, roles: Any, where: str) -> list[list[list[Any]]] | None:
        if roles is None:
            return None
        roles = list(roles)
        if len(roles) != len(self.agent_ids):
            raise TapeError(self._src, f"{where}.roles", "expected one entry per agent")
        out: list[list[list[Any]]] = []
        for a, timeline in enumerate(roles):
            if timeline is None:
                out.append([])
            elif isinstance(timeline, str):
                out.append([[0, timeline]])
            else:
                pairs: list[list[Any]] = [[int(s), str(label)] for s, label in timeline]
                steps: list[int] = [p[0] for p in pairs]
                if steps != sorted(steps) or any(s < 0 for s in steps):
                    raise TapeError(
                        self._src, f"{where}.roles[{a}]", "role steps must be sorted and >= 0"
                    )
                out.append(pairs)
        return out

    def _add(
        self,
        ep: _EpisodeBuffer,
        poses: np.ndarray,
        rewards: np.ndarray | None,
        actions: np.ndarray | None,
        done: np.ndarray | None,
        channels: dict[str, np.ndarray] | None,
    ) -> None:
        where = f"episode {ep.index} step {ep.steps}"
        a = ep.agents
        if poses.ndim != 3 or poses.shape[1:] != (a, 3):
            raise TapeError(self._src, where, f"poses must be (T, {a}, 3), got {poses.shape[1:]}")
        n = poses.shape[0]
        if not np.isfinite(poses).all():
            raise TapeError(self._src, where, "poses must be finite numbers")
        fields = {"rewards": rewards, "actions": actions, "done": done}
        for name, arr in fields.items():
            if arr is None:
                continue
            ok = arr.shape[:2] == (n, a) and arr.ndim == (3 if name == "actions" else 2)
            if not ok:
                raise TapeError(self._src, f"{where}.{name}", f"shape {arr.shape} does not fit")
        if channels is not None:
            for name, arr in channels.items():
                if not isinstance(name, str) or arr.shape[:1] != (n,) or arr.ndim > 2:
                    raise TapeError(
                        self._src, f"{where}.channels.{name}", "expected (T,) or (T, A)"
                    )
                if arr.ndim == 2 and arr.shape[1] != a:
                    raise TapeError(self._src, f"{where}.channels.{name}", "expected (T, A)")
                if arr.dtype.kind not in "fiub":
                    raise TapeError(self._src, f"{where}.channels.{name}", "expected numbers")
        ep.check_layout(self._src, where, fields, channels)
        ep.blocks.append((poses, rewards, actions, done, channels))
        ep.buffered += n
        ep.steps += n
        if ep.buffered >= self.chunk_steps:
            self._flush_chunk(ep, full_only=True)

    def _flush_chunk(self, ep: _EpisodeBuffer, full_only: bool = False) -> None:
        """Write buffered steps as chunks of at most ``chunk_steps`` steps.

        With ``full_only`` a remainder shorter than a chunk stays buffered.
        """
        if ep.buffered == 0:
            return
        blocks, ep.blocks = ep.blocks, []
        start = ep.steps - ep.buffered
        fields: list[Any] = [_cat([b[0] for b in blocks])]
        for i in (1, 2, 3):
            fields.append(None if blocks[0][i] is None else _cat([b[i] for b in blocks]))
        chans = None
        if blocks[0][4] is not None:
            chans = {name: _cat([b[4][name] for b in blocks]) for name in blocks[0][4]}
        total = fields[0].shape[0]
        n = self.chunk_steps
        done = 0
        while done < total and (total - done >= n or not full_only):
            part = slice(done, min(done + n, total))
            record: dict[str, Any] = {
                "type": "chunk",
                "episode": ep.index,
                "start": start + done,
                "steps": part.stop - part.start,
                "poses": encode_array(fields[0][part], "<f8"),
            }
            for i, name, dtype in (
                (1, "rewards", "<f8"),
                (2, "actions", "<f8"),
                (3, "done", "|b1"),
            ):
                if fields[i] is not None:
                    record[name] = encode_array(fields[i][part], dtype)
            if chans is not None:
                record["channels"] = {
                    name: encode_array(arr[part], "<f8" if arr.dtype.kind == "f" else "<i8")
                    for name, arr in chans.items()
                }
            self._write(frame(KIND_CHUNK, pack(record)))
            done = part.stop
        ep.buffered = total - done
        if ep.buffered:
            rest = slice(done, total)
            ep.blocks = [
                (
                    fields[0][rest],
                    *(None if f is None else f[rest] for f in fields[1:]),
                    None if chans is None else {k: v[rest] for k, v in chans.items()},
                )
            ]
        self._flush()

    def _write(self, data: bytes) -> None:
        assert self._file is not None
        self._file.write(data)
        self._pos += len(data)

    def _flush(self) -> None:
        assert self._file is not None
        self._file.flush()
        if self.fsync_chunks:
            os.fsync(self._file.fileno())


def _cat(arrays: list[np.ndarray]) -> np.ndarray:
    return arrays[0] if len(arrays) == 1 else np.concatenate(arrays, axis=0)


class _EpisodeBuffer:
    """Steps of the open episode not yet written, and the layout fixed by its first block."""

    def __init__(self, index: int, begin: int, agents: int) -> None:
        self.index = index
        self.begin = begin
        self.agents = agents
        self.steps = 0
        self.buffered = 0
        self.blocks: list[tuple[Any, ...]] = []
        self.layout: tuple[Any, ...] | None = None

    def check_layout(
        self,
        source: str,
        where: str,
        fields: dict[str, np.ndarray | None],
        channels: dict[str, np.ndarray] | None,
    ) -> None:
        layout = (
            tuple(name for name, arr in fields.items() if arr is not None),
            None if fields["actions"] is None else fields["actions"].shape[2],
            None if channels is None else tuple(sorted((k, v.ndim) for k, v in channels.items())),
        )
        if self.layout is None:
            self.layout = layout
        elif layout != self.layout:
            raise TapeError(
                source,
                where,
                "every step of an episode must carry the same optional fields "
                f"(first steps had {self.layout}, this one {layout})",
            )
