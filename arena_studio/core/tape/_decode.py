"""Decoding one episode's records into an :class:`Episode`, checking every field.

The tape reader (:mod:`arena_studio.core.tape.reader`) finds an episode's bytes (from the
index or the recovery scan) and hands them here; anything wrong raises :class:`TapeError`
naming the file, the episode and the field, or :class:`EpisodeDamaged` for damaged bytes.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from arena_studio.core.tape._index import Entry
from arena_studio.core.tape.damage import Damage, EpisodeDamaged
from arena_studio.core.tape.episode import Episode, RoleTimeline
from arena_studio.core.tape.format import (
    BOOL_DTYPES,
    FLOAT_DTYPES,
    FRAME_CRC,
    FRAME_HEAD,
    FRAME_OVERHEAD,
    GOAL_DTYPES,
    KIND_BEGIN,
    KIND_CHUNK,
    KIND_END,
    KINDS,
    MAX_RECORD,
    NUMBER_DTYPES,
    REWARD_DTYPES,
    TapeError,
    decode_array,
    read_frame,
    unpack,
    unpack_views,
)
from arena_studio.core.value_limits import COORDINATE_LIMIT, HEADING_LIMIT

__all__ = ["GOAL_CACHE_SIZE", "ZERO_COPY_BYTES", "EpisodeDecoder", "chunk_number"]

#: chunk payloads at least this large are decoded without copying their array bytes
ZERO_COPY_BYTES = 1 << 16
#: checked goal vectors a decoder remembers (they repeat across episodes)
GOAL_CACHE_SIZE = 4096
#: per-step fields a chunk may carry besides the poses
_OPTIONAL_FIELDS = frozenset(("rewards", "actions", "done", "channels"))
#: one bound for every pose value: x and y in metres, heading in radians
_POSE_LIMIT = max(COORDINATE_LIMIT, HEADING_LIMIT)


def _rank(value: Any) -> int:
    """Dimensions an encoded array claims (0 when it is not an array map)."""
    if type(value) is dict and type(value.get("shape")) is list:
        return len(value["shape"])
    return 0


def _widened(arr: np.ndarray) -> np.ndarray:
    """float64 for real numbers, int64 for whole numbers (bool flags become 0/1)."""
    if arr.dtype.kind == "f":
        return arr.astype(np.float64, copy=False)
    return arr.astype(np.int64, copy=False)


class EpisodeDecoder:
    """Decodes the episodes of one tape (its file name, time step, agent and landmark
    counts), remembering the goal vectors it has checked."""

    def __init__(self, src: str, dt: float, agents: int, landmarks: int) -> None:
        self._src = src
        self._dt = dt
        self._agents = agents
        self._landmarks = landmarks
        self._goal_cache: dict[bytes, np.ndarray] = {}

    def decode_records(
        self, i: int, entry: Entry, buf: memoryview, verify: bool, copy: bool
    ) -> Episode:
        where = f"episode {i}"
        records: list[tuple[int, Any, int]] = []
        pos = 0
        size = len(buf)
        head = FRAME_HEAD.unpack_from
        while pos < size:
            # a sound frame whose checksum was already checked is cut out here; read_frame
            # takes every other case (checksums to verify, or something to name)
            length, kind = head(buf, pos) if pos + FRAME_HEAD.size <= size else (0, -1)
            end = pos + FRAME_OVERHEAD + length
            if verify or kind not in KINDS or length > MAX_RECORD or end > size:
                try:
                    kind, payload, end = read_frame(buf, pos, verify)
                except (EOFError, ValueError) as exc:
                    byte = entry.begin + pos
                    chunk = chunk_number(buf, entry.begin, byte)
                    raise EpisodeDamaged(
                        self._src, Damage(i, str(exc), chunk=chunk, byte=byte)
                    ) from None
            else:
                payload = buf[pos + FRAME_HEAD.size : end - FRAME_CRC.size]
            try:
                big = kind == KIND_CHUNK and len(payload) >= ZERO_COPY_BYTES
                record = unpack_views(payload) if big else unpack(payload)
            except Exception as exc:  # msgpack raises several unrelated types for bad bytes
                byte = entry.begin + pos
                reason = f"not valid msgpack ({exc})"
                chunk = chunk_number(buf, entry.begin, byte)
                damage = Damage(i, reason, chunk=chunk, byte=byte)
                raise EpisodeDamaged(self._src, damage, where, reason) from None
            records.append((kind, record, entry.begin + pos))
            pos = end
        if not records or records[0][0] != KIND_BEGIN or not isinstance(records[0][1], dict):
            raise TapeError(self._src, where, "does not start with an episode record")
        begin = records[0][1]
        a, n_lm = self._agents, self._landmarks
        team_goal = self._goal(begin.get("team_goal"), n_lm, copy, where, "team_goal")
        pursued_raw = begin.get("pursued_goals")
        pursued: tuple[np.ndarray | None, ...] = ()
        if pursued_raw is not None:
            if not isinstance(pursued_raw, list) or len(pursued_raw) != a:
                raise TapeError(self._src, f"{where}.pursued_goals", f"expected {a} entries")
            goal = self._goal
            pursued = tuple(
                [goal(g, n_lm, copy, where, "pursued_goals", k) for k, g in enumerate(pursued_raw)]
            )
        roles_raw = begin.get("roles")
        roles = () if roles_raw is None else self._roles(roles_raw, f"{where}.roles", a)
        assigned, positions = self._begin_extras(begin, where, a, n_lm, copy)
        messages = begin.get("messages", [])
        if not isinstance(messages, list):
            raise TapeError(self._src, f"{where}.messages", "expected a list")
        chunks = [r for r in records[1:] if r[0] == KIND_CHUNK]
        ends = [r for r in records[1:] if r[0] == KIND_END]
        if len(chunks) + len(ends) != len(records) - 1 or len(ends) > 1:
            raise TapeError(self._src, where, "unexpected record inside the episode")
        arrays = self._chunks(chunks, where, a, copy)
        steps = arrays["poses"].shape[0]
        if steps != entry.steps:
            raise TapeError(self._src, where, f"holds {steps} steps, the index says {entry.steps}")
        outcome = None
        if ends:
            end_rec = ends[0][1]
            if not isinstance(end_rec, dict) or end_rec.get("steps") != steps:
                raise TapeError(self._src, f"{where}.end", "step count does not match the chunks")
            outcome = end_rec.get("outcome")
            if outcome is not None and not isinstance(outcome, dict):
                raise TapeError(self._src, f"{where}.outcome", "expected a map or nil")
        return Episode._of_fields(  # Episode(...) in field order, built faster
            i,  # index
            self._dt,  # dt
            arrays["poses"],  # poses
            team_goal,  # team_goal
            pursued,  # pursued_goals
            roles,  # roles
            arrays.get("rewards"),  # rewards
            arrays.get("actions"),  # actions
            arrays.get("done"),  # done
            arrays.get("channels", {}),  # channels
            tuple(messages),  # messages
            outcome,  # outcome
            entry.complete and bool(ends),  # complete
            assigned,  # assigned_targets
            positions,  # landmark_positions
        )

    def _begin_extras(
        self, begin: dict[str, Any], where: str, a: int, n_lm: int, copy: bool
    ) -> tuple[tuple[np.ndarray | None, ...], np.ndarray | None]:
        """The optional ``assigned_targets`` and ``landmark_positions`` of a begin record."""
        assigned: tuple[np.ndarray | None, ...] = ()
        raw = begin.get("assigned_targets")
        if raw is not None:
            if not isinstance(raw, list) or len(raw) != a:
                raise TapeError(self._src, f"{where}.assigned_targets", f"expected {a} entries")
            assigned = tuple(
                self._goal(g, n_lm, copy, where, "assigned_targets", k) for k, g in enumerate(raw)
            )
        positions = None
        raw = begin.get("landmark_positions")
        if raw is not None:
            place = f"{where}.landmark_positions"
            positions = self._array(raw, place, FLOAT_DTYPES, (n_lm, 2)).astype(np.float64)
            if not np.isfinite(positions).all():
                raise TapeError(self._src, place, "positions must be finite numbers")
        return assigned, positions

    def _chunks(
        self, chunks: list[tuple[int, Any, int]], where: str, a: int, copy: bool = True
    ) -> dict[str, Any]:
        if not chunks:
            raise TapeError(self._src, where, "has no steps")
        if len(chunks) == 1:
            quick = self._poses_only_chunk(chunks[0], where, a, copy)
            if quick is not None:
                return quick
        parts: dict[str, list[np.ndarray]] = {}
        channel_parts: dict[str, list[np.ndarray]] = {}
        optional = ("rewards", "actions", "done", "channels")
        layout: tuple[str, ...] | None = None
        start = 0
        k_actions: int | None = None
        for _, rec, offset in chunks:
            cw = f"{where} chunk at byte {offset}"
            if not isinstance(rec, dict):
                raise TapeError(self._src, cw, "expected a map")
            n = rec.get("steps")
            if isinstance(n, bool) or not isinstance(n, int) or n < 1 or rec.get("start") != start:
                raise TapeError(self._src, cw, "bad start or step count")
            present = tuple(k for k in optional if k in rec)
            if layout is None:
                layout = present
            elif present != layout:
                raise TapeError(self._src, cw, "optional fields differ from the first chunk")
            dec = self._array
            parts.setdefault("poses", []).append(
                dec(rec.get("poses"), f"{cw}.poses", FLOAT_DTYPES, (n, a, 3))
            )
            if "rewards" in rec:
                # (n,) one team reward per step, (n, A) one per agent; fixed by the first chunk
                rshape = (n,) if _rank(rec["rewards"]) == 1 else (n, a)
                rew = dec(rec["rewards"], f"{cw}.rewards", REWARD_DTYPES, rshape)
                if parts.get("rewards") and parts["rewards"][0].ndim != rew.ndim:
                    raise TapeError(self._src, f"{cw}.rewards", "shape differs from chunk 0")
                parts.setdefault("rewards", []).append(rew)
            if "actions" in rec:
                act = dec(rec["actions"], f"{cw}.actions", NUMBER_DTYPES, (n, a, k_actions))
                if parts.get("actions") and parts["actions"][0].dtype.kind != act.dtype.kind:
                    raise TapeError(self._src, f"{cw}.actions", "dtype differs from chunk 0")
                k_actions = act.shape[2]
                parts.setdefault("actions", []).append(act)
            if "done" in rec:
                parts.setdefault("done", []).append(
                    dec(rec["done"], f"{cw}.done", BOOL_DTYPES, (n, a)).view(np.uint8) != 0
                )
            if "channels" in rec:
                chans = rec["channels"]
                if not isinstance(chans, dict) or (
                    channel_parts and set(chans) != set(channel_parts)
                ):
                    raise TapeError(self._src, f"{cw}.channels", "expected the same named arrays")
                for name, value in chans.items():
                    rank = _rank(value)
                    cshape: tuple[int | None, ...] = (n, a, None)[: rank if 1 <= rank <= 3 else 1]
                    arr = dec(value, f"{cw}.channels.{name}", NUMBER_DTYPES, cshape)
                    first = channel_parts.get(name)
                    if first and first[0].shape[1:] != arr.shape[1:]:
                        raise TapeError(
                            self._src, f"{cw}.channels.{name}", "shape differs from the first chunk"
                        )
                    channel_parts.setdefault(name, []).append(arr)
            start += n
        out: dict[str, Any] = {}
        for name, arrs in parts.items():
            joined = (
                np.concatenate(arrs, axis=0)
                if len(arrs) > 1
                else arrs[0].copy()
                if copy
                else arrs[0]
            )
            out[name] = _widened(joined) if name != "done" else joined
        self._check_finite(out["poses"], where)
        if channel_parts:
            out["channels"] = {
                name: np.concatenate(arrs, axis=0) if len(arrs) > 1 else arrs[0].copy()
                for name, arrs in channel_parts.items()
            }
        return out

    def _poses_only_chunk(
        self, chunk: tuple[int, Any, int], where: str, a: int, copy: bool
    ) -> dict[str, Any] | None:
        """:meth:`_chunks` of an episode held in one chunk of poses alone (what the writer
        usually makes): the same checks and messages, without the bookkeeping for several
        chunks and optional fields. None when the chunk is anything else."""
        _, rec, offset = chunk
        if type(rec) is not dict or not _OPTIONAL_FIELDS.isdisjoint(rec):
            return None
        n = rec.get("steps")
        if type(n) is not int or n < 1 or rec.get("start") != 0:
            return None  # the general path names the problem
        poses = self._array(
            rec.get("poses"), f"{where} chunk at byte {offset}.poses", FLOAT_DTYPES, (n, a, 3)
        )
        if copy:
            poses = poses.copy()
        poses = poses.astype(np.float64, copy=False)
        self._check_finite(poses, where)
        return {"poses": poses}

    def _check_finite(self, poses: np.ndarray, where: str) -> None:
        """Refuse a pose that is not a finite number or lies outside the documented range,
        naming its step and agent (the writer refuses them; a foreign tape may not). Two
        reductions and no temporary array in the usual case: NaN makes min/max NaN, and a
        comparison with NaN is False."""
        if poses.size == 0 or (poses.min() >= -_POSE_LIMIT and poses.max() <= _POSE_LIMIT):
            return
        episode = int(where.split()[-1]) if where.startswith("episode ") else -1
        bad = ~np.isfinite(poses)
        if bad.any():
            t, agent = (int(v) for v in np.argwhere(bad.any(axis=2))[0])
            reason = "pose is not a finite number"
        else:
            far = np.abs(poses) > _POSE_LIMIT
            t, agent, k = (int(v) for v in np.argwhere(far)[0])
            name = ("x", "y", "heading")[k]
            unit = "rad" if k == 2 else "m"
            reason = (
                f"pose {name} = {float(poses[t, agent, k]):g} is outside ±{_POSE_LIMIT:g} {unit}"
            )
        raise EpisodeDamaged(self._src, Damage(episode, reason, step=t, agent=agent))

    def _array(
        self, value: Any, where: str, dtypes: tuple[str, ...], shape: tuple[int | None, ...]
    ) -> np.ndarray:
        return decode_array(value, where, self._src, dtypes=dtypes, shape=shape)

    def _goal(
        self, value: Any, n_lm: int, copy: bool, where: str, field: str, k: int | None = None
    ) -> np.ndarray | None:
        """A checked goal vector; ``where.field[k]`` names it in errors. With ``copy`` False
        the remembered read-only array itself (callers that only look at it)."""
        if value is None:
            return None
        # the same few goal vectors recur in every episode: remember the checked ones
        key = None
        if type(value) is dict and len(value) == 3:
            data, shape = value.get("data"), value.get("shape")
            # exact types, as decode_array checks them: 3.0 == 3 must not pass for a length
            if (
                type(data) is bytes
                and value.get("dtype") == "|u1"
                and type(shape) is list
                and len(shape) == 1
                and type(shape[0]) is int
                and shape[0] == n_lm
            ):
                key = data
                known = self._goal_cache.get(key)
                if known is not None:
                    return known.copy() if copy else known
        place = f"{where}.{field}" if k is None else f"{where}.{field}[{k}]"
        arr = self._array(value, place, GOAL_DTYPES, (n_lm,))
        if n_lm and max(value["data"]) > 1:  # |u1 or |b1 bytes: a goal holds only 0 and 1
            raise TapeError(self._src, place, "a goal holds only 0 and 1")
        arr = arr.view(np.uint8)  # |b1 goals are stored as the same 0/1 bytes
        if key is not None and len(self._goal_cache) < GOAL_CACHE_SIZE:
            kept = arr.copy()
            kept.flags.writeable = False
            self._goal_cache[key] = kept
        return arr.copy()

    def _roles(self, value: Any, where: str, a: int) -> tuple[RoleTimeline, ...]:
        if value is None:
            return ()
        if not isinstance(value, list) or len(value) != a:
            raise TapeError(self._src, where, f"expected {a} role timelines")
        out: list[RoleTimeline] = []
        for k, timeline in enumerate(value):
            ok = isinstance(timeline, list) and all(
                isinstance(p, list)
                and len(p) == 2
                and isinstance(p[0], int)
                and not isinstance(p[0], bool)
                and p[0] >= 0
                and isinstance(p[1], str)
                for p in timeline
            )
            if not ok or [p[0] for p in timeline] != sorted(p[0] for p in timeline):
                raise TapeError(self._src, f"{where}[{k}]", "expected sorted [step, label] pairs")
            out.append(tuple((int(s), str(label)) for s, label in timeline))
        return tuple(out)


def chunk_number(buf: memoryview, begin: int, byte: int | None) -> int | None:
    """Which chunk of the episode (from 0) the record at file offset ``byte`` is: the chunk
    records before it are counted from their frame heads (no checksums, no decoding)."""
    if byte is None:
        return None
    target = byte - begin
    pos, chunks = 0, 0
    size = len(buf)
    while pos + FRAME_HEAD.size <= size and pos < target:
        length, kind = FRAME_HEAD.unpack_from(buf, pos)
        if kind == KIND_CHUNK:
            chunks += 1
        pos += FRAME_OVERHEAD + length
    if pos != target or pos + FRAME_HEAD.size > size:
        return None
    return chunks if FRAME_HEAD.unpack_from(buf, pos)[1] == KIND_CHUNK else None
