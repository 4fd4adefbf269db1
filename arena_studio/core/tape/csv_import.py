"""Stream a long-format CSV file into a tape, episode by episode.

Memory holds one block of the file (:mod:`.csv_blocks`) and the rows of the episode being
read, as numpy arrays; each episode is written to the tape when its last row has been read.
So the rows of one episode must be together in the file (in any order of steps and agents
among themselves): an episode label that comes back after another episode began is refused
with the line where it comes back (with ``--skip-bad`` those rows are left out). An episode
holds at most :data:`MAX_EPISODE_ROWS` rows. The file format is in :mod:`.importers`.
"""

from __future__ import annotations

import csv
import io
import itertools
from collections.abc import Callable, Mapping
from pathlib import Path
from typing import Any

import numpy as np

from arena_studio.core.import_rows import ImportFormatError, RowLayout
from arena_studio.core.safe_open import open_input
from arena_studio.core.scene.model import Scene
from arena_studio.core.tape.csv_blocks import (
    BLOCK_BYTES,
    BlockParser,
    Rows,
    load_pyarrow,
    read_blocks,
)
from arena_studio.core.tape.writer import TapeWriter

REQUIRED = ("episode", "step", "agent", "x", "y", "heading")
OPTIONAL = ("reward", "goal", "role")
#: rows one episode may have (steps x agents); about 64 bytes each are held while it is read
MAX_EPISODE_ROWS = 2_000_000


class _Episode:
    """The rows of the episode being read, as blocks of arrays in file order."""

    def __init__(self, label: str, line: int) -> None:
        self.label = label
        self.line = line
        self.rows = 0
        self.parts: list[dict[str, Any]] = []
        self.goal_names: dict[str, int] = {"": 0}
        self.role_names: dict[str, int] = {"": 0}

    def add(self, rows: Rows, part: slice) -> None:
        def recode(codes: np.ndarray, names: list[str], table: dict[str, int]) -> np.ndarray:
            local = codes[part]
            used = np.unique(local)
            remap = np.zeros(len(names), dtype=np.int32)
            for u in used.tolist():
                remap[u] = table.setdefault(names[u], len(table))
            return remap[local]

        self.parts.append(
            {
                "line": rows.line[part],
                "step": rows.step[part],
                "agent": rows.agent[part],
                "pose": rows.pose[part],
                "reward": None if rows.reward is None else rows.reward[part],
                "goal": recode(rows.goal, rows.goal_names, self.goal_names),
                "role": recode(rows.role, rows.role_names, self.role_names),
            }
        )
        self.rows += part.stop - part.start

    def column(self, name: str) -> Any:
        if self.parts[0][name] is None:
            return None
        return np.concatenate([p[name] for p in self.parts])


class _Assembler:
    """Receives blocks of rows, cuts them into episodes, checks each and writes it."""

    def __init__(
        self,
        src: str,
        layout: RowLayout,
        writer: TapeWriter,
        lm_ids: dict[str, int],
        skipped: list[str] | None,
    ) -> None:
        self.src = src
        self.layout = layout
        self.writer = writer
        self.lm_ids = lm_ids
        self.skipped = skipped
        self.agents = len(layout.agent_ids)
        self.current: _Episode | None = None
        self.dropped: str | None = None  # label of an episode left out while being read
        self.finished: dict[str, int] = {}  # label -> its first line

    def feed(self, rows: Rows) -> None:
        n = len(rows)
        if n == 0:
            return
        cuts = np.flatnonzero(rows.episode[1:] != rows.episode[:-1]) + 1
        bounds = [0, *cuts.tolist(), n]
        for lo, hi in itertools.pairwise(bounds):
            label = rows.episode_names[int(rows.episode[lo])]
            self._segment(label, rows, slice(lo, hi))

    def _segment(self, label: str, rows: Rows, part: slice) -> None:
        line = int(rows.line[part.start])
        ep = self.current
        if ep is not None and ep.label == label:
            pass
        elif label == self.dropped:
            return
        else:
            if label in self.finished:
                self._not_together(label, rows, part)
                return
            self.finish()
            ep = self.current = _Episode(label, line)
        if ep.rows + (part.stop - part.start) > MAX_EPISODE_ROWS:
            self._problem(
                f"line {line}: episode {label!r} has more than {MAX_EPISODE_ROWS:,} rows, more "
                "than an import holds at once (split it into shorter episodes)",
                episode=True,
            )
            self.current, self.dropped = None, label
            self.finished[label] = ep.line
            return
        ep.add(rows, part)

    def _not_together(self, label: str, rows: Rows, part: slice) -> None:
        """Rows of an episode that ended earlier: refused, or left out with --skip-bad."""
        first = self.finished[label]
        message = (
            f"line {{}}: episode {label!r} (first row on line {first}) continues after "
            "another episode began; the rows of one episode must be together (sort the "
            "file by episode)"
        )
        if self.skipped is None:
            raise ImportFormatError(f"{self.src}: " + message.format(rows.line[part.start]))
        self.skipped.extend(message.format(int(x)) for x in rows.line[part])

    def _problem(self, text: str, episode: bool = False) -> None:
        if self.skipped is None:
            raise ImportFormatError(f"{self.src}: {text}")
        self.skipped.append(text + ("; episode left out" if episode else ""))

    def finish(self) -> None:
        """Check and write the episode being read, if any."""
        ep, self.current = self.current, None
        if ep is None:
            return
        self.finished[ep.label] = ep.line
        try:
            arrays = _episode_arrays(self.src, self.layout, ep, self.skipped)
            pursued = _pursued(self.src, self.layout, ep, arrays.pop("goal_rows"), self.lm_ids)
        except ImportFormatError as exc:
            if self.skipped is None:
                raise
            self.skipped.append(str(exc).removeprefix(f"{self.src}: ") + "; episode left out")
            return
        self.writer.begin_episode(
            pursued_goals=pursued if any(g is not None for g in pursued) else None,
            roles=arrays["roles"],
            messages=[{"episode": ep.label}],
        )
        self.writer.steps(arrays["poses"], rewards=arrays["rewards"])
        self.writer.end_episode()


def _episode_arrays(
    src: str, layout: RowLayout, ep: _Episode, skipped: list[str] | None
) -> dict[str, Any]:
    """(T, A, 3) poses, rewards and role timelines of a complete episode, rows checked."""
    a = len(layout.agent_ids)
    line, step, agent = ep.column("line"), ep.column("step"), ep.column("agent")
    goal = ep.column("goal")
    keep = _drop_goal_changes(src, layout, ep, line, agent, goal, skipped)
    keep &= _drop_repeats(src, layout, ep.label, line, step, agent, skipped)
    idx = np.flatnonzero(keep)
    if idx.size == 0:
        raise ImportFormatError(f"{src}: episode {ep.label!r}: no rows left")
    key = step[idx] * a + agent[idx]
    order = idx[np.argsort(key, kind="stable")]
    key = step[order] * a + agent[order]
    steps = int(step[idx].max()) + 1
    if idx.size != steps * a or not np.array_equal(key, np.arange(key.size)):
        missing = int(np.argmax(key != np.arange(key.size))) if key.size else 0
        if key.size and np.array_equal(key, np.arange(key.size)):
            missing = key.size
        s, k = divmod(missing, a)
        raise ImportFormatError(
            f"{src}: episode {ep.label!r}: no row for step {s} of agent index {k} "
            f"(every agent needs a row at every step 0..{max(steps - 1, 0)})"
        )
    poses = ep.column("pose")[order].reshape(steps, a, 3)
    reward = ep.column("reward")
    rewards = None if reward is None else reward[order].reshape(steps, a)
    goal_rows = {
        "line": line[idx],
        "agent": agent[idx],
        "goal": goal[idx],
    }
    return {
        "poses": poses,
        "rewards": rewards,
        "roles": _roles(ep, step[order], agent[order], ep.column("role")[order], a),
        "goal_rows": goal_rows,
    }


def _drop_goal_changes(
    src: str,
    layout: RowLayout,
    ep: _Episode,
    line: np.ndarray,
    agent: np.ndarray,
    goal: np.ndarray,
    skipped: list[str] | None,
) -> np.ndarray:
    """Rows to keep: a row naming another goal than the agent's first one is bad."""
    keep = np.ones(line.shape[0], dtype=bool)
    named = np.flatnonzero(goal > 0)
    if named.size == 0:
        return keep
    agents, first = np.unique(agent[named], return_index=True)
    first_row = np.full(len(layout.agent_ids), -1, dtype=np.int64)
    first_row[agents] = named[first]
    changed = named[goal[named] != goal[first_row[agent[named]]]]
    names = list(ep.goal_names)
    for r in changed.tolist():
        f = int(first_row[agent[r]])
        text = (
            f"line {line[r]}, column '{layout.names['goal']}': agent "
            f"{layout.agent_ids[agent[r]]} pursued {names[goal[f]]!r} earlier in episode "
            f"{ep.label!r} (line {line[f]}), now {names[goal[r]]!r}"
        )
        if skipped is None:
            raise ImportFormatError(f"{src}: {text}")
        skipped.append(text)
        keep[r] = False
    return keep


def _drop_repeats(
    src: str,
    layout: RowLayout,
    label: str,
    line: np.ndarray,
    step: np.ndarray,
    agent: np.ndarray,
    skipped: list[str] | None,
) -> np.ndarray:
    """Rows to keep: a second row for the same step and agent is bad (the first stays)."""
    a = len(layout.agent_ids)
    key = step * a + agent
    order = np.argsort(key, kind="stable")
    repeat = np.zeros(key.shape[0], dtype=bool)
    repeat[order[1:]] = key[order[1:]] == key[order[:-1]]
    keep = ~repeat
    for r in sorted(np.flatnonzero(repeat).tolist(), key=lambda i: int(line[i])):
        text = (
            f"line {line[r]}: episode {label!r} step {step[r]} agent "
            f"{layout.agent_ids[agent[r]]} appears twice"
        )
        if skipped is None:
            raise ImportFormatError(f"{src}: {text}")
        skipped.append(text)
    return keep


def _roles(
    ep: _Episode, step: np.ndarray, agent: np.ndarray, role: np.ndarray, a: int
) -> list[list[tuple[int, str]]] | None:
    """Per agent, (step, label) where its role label changes; None when no row has one."""
    if not (role > 0).any():
        return None
    names = list(ep.role_names)
    has = np.flatnonzero(role > 0)
    by_agent = has[np.lexsort((step[has], agent[has]))]
    ag, rl = agent[by_agent], role[by_agent]
    change = np.ones(by_agent.size, dtype=bool)
    change[1:] = (ag[1:] != ag[:-1]) | (rl[1:] != rl[:-1])
    out: list[list[tuple[int, str]]] = [[] for _ in range(a)]
    for r in by_agent[change].tolist():
        out[int(agent[r])].append((int(step[r]), names[int(role[r])]))
    return out


def _pursued(
    src: str,
    layout: RowLayout,
    ep: _Episode,
    rows: dict[str, np.ndarray],
    lm_ids: dict[str, int],
) -> list[np.ndarray | None]:
    """Each agent's pursued goal as a 0/1 landmark vector (None when no row names one)."""
    out: list[np.ndarray | None] = [None] * len(layout.agent_ids)
    named = np.flatnonzero(rows["goal"] > 0)
    if named.size == 0:
        return out
    names = list(ep.goal_names)
    agents, first = np.unique(rows["agent"][named], return_index=True)
    for k, r in zip(agents.tolist(), named[first].tolist(), strict=True):
        text = names[int(rows["goal"][r])]
        out[k] = _goal_vector(src, int(rows["line"][r]), layout.names["goal"], text, lm_ids)
    return out


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


def _header(src: str, block: bytes) -> tuple[list[str], bytes]:
    """The header row's names and the rest of the first block."""
    if block.startswith(b"\xef\xbb\xbf"):
        block = block[3:]
    end = block.find(b"\n")
    first, rest = (block, b"") if end < 0 else (block[: end + 1], block[end + 1 :])
    try:
        header = next(csv.reader(io.StringIO(first.decode("utf-8"), newline="")))
    except StopIteration:
        raise ImportFormatError(f"{src}: the file is empty") from None
    except (csv.Error, UnicodeDecodeError) as exc:
        raise ImportFormatError(f"{src}: line 1: {exc}") from None
    return header, rest


def import_csv(
    path: str | Path,
    scene: Scene,
    out: str | Path,
    *,
    dt: float = 0.1,
    columns: Mapping[str, str] | None = None,
    advance: Callable[[int], None] | None = None,
    keep_partial: bool = False,
    skipped: list[str] | None = None,
    block_bytes: int = BLOCK_BYTES,
) -> int:
    """Convert a long-format CSV file into the tape ``out``; returns the episode count.

    A bad row raises :class:`ImportFormatError` naming its line and column. With a
    ``skipped`` list the bad rows (and episodes left with missing steps) are described there
    and left out, and the rest is imported (``--skip-bad``). ``advance`` is called with the
    bytes read so far in each block (for a progress bar).
    """
    from arena_studio.core.tape.importers import check_dt

    src = str(path)
    check_dt(src, dt)
    mapping = {name: name for name in REQUIRED + OPTIONAL}
    mapping.update(columns or {})
    lm_ids = {lm.id: i for i, lm in enumerate(scene.landmarks)}
    meta = {"generator": "arena-studio import csv", "source": Path(src).name}
    with open_input(path, "csv") as raw:  # regular files only, size bounded
        blocks = read_blocks(raw, src, block_bytes)
        first = next(blocks, None)
        if first is None:
            raise ImportFormatError(f"{src}: the file is empty")
        header, rest = _header(src, first[0])
        layout = _layout(src, header, mapping, tuple(a.id for a in scene.agents))
        parser = BlockParser(layout, len(header), skipped, load_pyarrow())
        with TapeWriter(out, scene, dt=dt, metadata=meta, keep_partial=keep_partial) as writer:
            assembler = _Assembler(src, layout, writer, lm_ids, skipped)
            line = 2
            for block, used in _with_first(rest, first[1], blocks):
                rows, line = parser.parse(block, line)
                assembler.feed(rows)
                if advance is not None:
                    advance(used)
            assembler.finish()
            if writer.episodes_written == 0:
                raise ImportFormatError(f"{src}: no data rows" + (" left" if skipped else ""))
            return writer.episodes_written


def _with_first(rest: bytes, used: int, blocks: Any) -> Any:
    yield rest, used
    yield from blocks


def _layout(
    src: str, header: list[str], mapping: dict[str, str], agent_ids: tuple[str, ...]
) -> RowLayout:
    where = {name: i for i, name in enumerate(header)}
    missing = [mapping[n] for n in REQUIRED if mapping[n] not in where]
    if missing:
        raise ImportFormatError(
            f"{src}: line 1: missing column(s) {', '.join(missing)} (have {', '.join(header)};"
            " map other names with --columns)"
        )
    col = {n: where[mapping[n]] for n in REQUIRED + OPTIONAL if mapping[n] in where}
    return RowLayout(src, col, mapping, agent_ids)


__all__ = ["MAX_EPISODE_ROWS", "import_csv"]
