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
from arena_studio.core.tape.message_format import parse_message

DEFAULT_CHUNK_STEPS = 1024


def partial_path(path: str | Path) -> Path:
    """Where an unfinished tape lives while it is written."""
    p = Path(path)
    return p.with_name(p.name + ".partial")


def _recoverable(partial: Path) -> bool:
    """True when ``partial`` holds at least one episode a reader could recover (or cannot
    be read well enough to be sure it holds none)."""
    try:
        if partial.stat().st_size == 0:
            return False
    except OSError:
        return False
    from arena_studio.core.tape.reader import open_tape

    try:
        return len(open_tape(partial)) > 0
    except Exception:  # damaged beyond a reader's walk: keep it rather than guess
        return True


def set_aside_partial(path: str | Path) -> Path | None:
    """Move an earlier run's recoverable ``<path>.partial`` to a free name beside it
    (``NAME.earlier-N.tape.partial``) so a new writer never truncates it; returns the new
    name, or None when there was nothing to keep. A partial without episodes is left for
    the new writer to replace."""
    partial = partial_path(path)
    if not _recoverable(partial):
        return None
    target = Path(path)
    stem, suffix = (
        (target.name[: -len(".tape")], ".tape")
        if target.suffix == ".tape"
        else (
            target.name,
            "",
        )
    )
    for n in range(1, 10_000):
        aside = target.with_name(f"{stem}.earlier-{n}{suffix}.partial")
        if not os.path.lexists(aside):
            os.rename(partial, aside)
            return aside
    raise TapeError(str(target), "partial", f"{partial} exists and no free name was left")


class TapeWriter:
    """Append episodes to a new tape; see the module docstring for crash behaviour.

    An earlier run's recoverable ``.partial`` is moved aside first (``set_aside``
    names where), never truncated."""

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
        self.set_aside = set_aside_partial(self.path)
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
        *,
        assigned_targets: Sequence[Sequence[int] | np.ndarray | None] | None = None,
        landmark_positions: np.ndarray | Sequence[Sequence[float]] | None = None,
    ) -> int:
        """Start an episode; returns its index. ``roles[a]`` is a label or (step, label) pairs.

        ``pursued_goals[a]`` is the team goal agent ``a`` works toward (the team goal itself
        when it cooperates); ``assigned_targets[a]`` is its own share of that goal's targets
        (0/1 over the landmarks). ``landmark_positions`` (L, 2) records where this episode's
        landmarks stood when the simulator moved them at reset.
        """
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
        record["messages"] = self._messages(messages, where)
        if assigned_targets is not None:  # optional keys are written only when given
            shares = list(assigned_targets)
            if len(shares) != len(self.agent_ids):
                raise TapeError(self._src, f"{where}.assigned_targets", "expected one per agent")
            record["assigned_targets"] = [
                self._goal(g, f"{where}.assigned_targets[{a}]") for a, g in enumerate(shares)
            ]
        if landmark_positions is not None:
            record["landmark_positions"] = self._positions(landmark_positions, where)
        try:
            payload = pack(record)
        except (TypeError, ValueError) as exc:
            raise TapeError(self._src, f"{where}.messages", f"not storable: {exc}") from None
        begin = self._pos
        self._write(frame(KIND_BEGIN, payload))
        self._episode = _EpisodeBuffer(index, begin, len(self.agent_ids))
        return index

    def _messages(self, messages: Sequence[Any] | None, where: str) -> list[Any]:
        """Structured entries checked (see :mod:`.message_format`); free notes kept as given."""
        out = list(messages) if messages is not None else []
        for i, raw in enumerate(out):
            try:
                parse_message(raw, self.agent_ids, f"messages[{i}]")
            except ValueError as exc:
                raise TapeError(self._src, where, str(exc)) from None
        return out

    def step(
        self,
        poses: np.ndarray | Sequence[Sequence[float]],
        reward: np.ndarray | Sequence[float] | float | None = None,
        action: np.ndarray | Sequence[Any] | None = None,
        done: np.ndarray | Sequence[bool] | None = None,
        channels: Mapping[str, Any] | None = None,
    ) -> None:
        """Record one step: ``poses`` (A, 3); optional ``reward`` (A,) per agent or one number
        for the team, ``action`` (A, K) or (A,) (one discrete action each), ``done`` (A,),
        ``channels`` name -> a number, (A,) or (A, K).

        Every array is copied before this returns: a simulator may update its own arrays in
        place for the next step.
        """
        ep = self._current()
        where = f"episode {ep.index} step {ep.steps}"
        block_channels = None
        if channels is not None:
            block_channels = {
                k: _own_numbers(v, self._src, f"{where}.channels.{k}")[None]
                for k, v in channels.items()
            }
        act = None
        if action is not None:
            act = _own_numbers(action, self._src, f"{where}.actions")
            act = act[:, None] if act.ndim == 1 else act
        self._add(
            ep,
            _own(poses, np.float64, self._src, f"{where}.poses")[None],
            None
            if reward is None
            else _own(reward, np.float64, self._src, f"{where}.rewards")[None],
            None if act is None else act[None],
            None if done is None else _own(done, np.bool_, self._src, f"{where}.done")[None],
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
        """Record a block of steps: ``poses`` (T, A, 3); optional ``rewards`` (T, A) or (T,)
        for the team, ``actions`` (T, A, K) or (T, A), ``done`` (T, A), ``channels`` name ->
        (T,), (T, A) or (T, A, K). Every array is copied before this returns."""
        ep = self._current()
        where = f"episode {ep.index} step {ep.steps}"
        act = None
        if actions is not None:
            act = _own_numbers(actions, self._src, f"{where}.actions")
            act = act[:, :, None] if act.ndim == 2 else act
        self._add(
            ep,
            _own(poses, np.float64, self._src, f"{where}.poses"),
            None if rewards is None else _own(rewards, np.float64, self._src, f"{where}.rewards"),
            act,
            None if done is None else _own(done, np.bool_, self._src, f"{where}.done"),
            None
            if channels is None
            else {
                k: _own_numbers(v, self._src, f"{where}.channels.{k}") for k, v in channels.items()
            },
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

    def _positions(self, value: Any, where: str) -> dict[str, Any]:
        place = f"{where}.landmark_positions"
        arr = _own(value, np.float64, self._src, place)
        if arr.shape != (self.landmark_count, 2) or not np.isfinite(arr).all():
            raise TapeError(
                self._src, place, f"expected ({self.landmark_count}, 2) finite x, y in metres"
            )
        return encode_array(arr, "<f8")

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
            if name == "rewards":  # (n,) a team reward, (n, A) one per agent
                ok = arr.shape in ((n,), (n, a))
            else:
                ok = arr.shape[:2] == (n, a) and arr.ndim == (3 if name == "actions" else 2)
            if not ok:
                raise TapeError(self._src, f"{where}.{name}", f"shape {arr.shape} does not fit")
        if channels is not None:
            for name, arr in channels.items():
                place = f"{where}.channels.{name}"
                if not isinstance(name, str) or arr.shape[:1] != (n,) or arr.ndim > 3:
                    raise TapeError(self._src, place, "expected (T,), (T, A) or (T, A, K)")
                if arr.ndim >= 2 and arr.shape[1] != a:
                    raise TapeError(self._src, place, f"expected (T, {a}) or (T, {a}, K)")
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
            for i, name in ((1, "rewards"), (2, "actions"), (3, "done")):
                if fields[i] is not None:
                    record[name] = encode_array(fields[i][part], _stored_dtype(fields[i]))
            if chans is not None:
                record["channels"] = {
                    name: encode_array(arr[part], _stored_dtype(arr)) for name, arr in chans.items()
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


def _own(value: Any, dtype: Any, source: str, where: str) -> np.ndarray:
    """A C-ordered copy of ``value`` as ``dtype``: the caller keeps its own array to reuse."""
    try:
        return np.array(value, dtype=dtype, order="C", copy=True)
    except (TypeError, ValueError) as exc:
        raise TapeError(source, where, f"expected numbers ({exc})") from None


def _own_numbers(value: Any, source: str, where: str) -> np.ndarray:
    """A C-ordered copy of ``value`` kept as whole numbers when it holds whole numbers
    (int64; bool counts as 0/1) and as float64 otherwise."""
    arr = np.asarray(value)
    if arr.dtype.kind in "iub":
        return _own(arr, np.int64, source, where)
    if arr.dtype.kind != "f":
        raise TapeError(source, where, f"expected numbers, got dtype {arr.dtype}")
    return _own(arr, np.float64, source, where)


def _stored_dtype(arr: np.ndarray) -> str:
    """The tape dtype of a kept array: ``|b1`` flags, ``<i8`` whole numbers, ``<f8`` else."""
    if arr.dtype.kind == "b":
        return "|b1"
    return "<i8" if arr.dtype.kind in "iu" else "<f8"


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
        actions = fields["actions"]
        layout = (
            tuple(name for name, arr in fields.items() if arr is not None),
            None if actions is None else (*actions.shape[2:], actions.dtype.kind),
            None if fields["rewards"] is None else fields["rewards"].ndim,
            None
            if channels is None
            else tuple(sorted((k, v.shape[1:], v.dtype.kind) for k, v in channels.items())),
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


__all__ = ["DEFAULT_CHUNK_STEPS", "TapeWriter", "partial_path", "set_aside_partial"]
