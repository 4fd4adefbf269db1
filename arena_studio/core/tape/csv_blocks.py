"""Read a long-format CSV file in blocks of whole rows, as columns of numpy arrays.

Why blocks: an import must not hold the file, or one Python object per row, in memory. The
file is read in blocks of about :data:`BLOCK_BYTES`, each cut after a line end that is not
inside a quoted value (RFC 4180 doubles quotes inside values, so an even count of ``"``
before a line end marks a row boundary). Every block starts at a known line number.

A block is parsed the fast way (pyarrow's CSV reader, then vectorised checks) when it has
no blank lines, lone CR line ends or line ends inside quotes, so that row ``i`` sits on line
``start + i``.
Any other block, and any block in which a check fails, is parsed again row by row with
Python's ``csv`` module and :func:`~arena_studio.core.import_rows.parse_row`, which names
the line and column of a bad row (or leaves it out with ``--skip-bad``) exactly as a
whole-file reader would. Without pyarrow every block takes the row-by-row way (slower).
"""

from __future__ import annotations

import csv
import io
from collections.abc import Callable, Iterator
from dataclasses import dataclass
from typing import Any, BinaryIO

import numpy as np

from arena_studio.core.import_rows import ImportFormatError, RowLayout, parse_row
from arena_studio.core.value_limits import COORDINATE_LIMIT, HEADING_LIMIT

#: bytes read at a time (a block ends at the next row boundary after this many)
BLOCK_BYTES = 8 << 20
#: a single row longer than this is refused (this also stops a file whose lines end in a
#: lone CR, which has no LF to cut at, from being read whole)
MAX_ROW_BYTES = 64 << 20


@dataclass
class Rows:
    """Checked rows of one block, in file order; labels are codes into small lists."""

    line: np.ndarray  # int64 line numbers
    episode: np.ndarray  # int32 codes into episode_names
    episode_names: list[str]
    step: np.ndarray  # int64
    agent: np.ndarray  # int32 agent index
    pose: np.ndarray  # (n, 3) float64
    reward: np.ndarray | None  # float64
    goal: np.ndarray  # int32 codes into goal_names (0 is "")
    goal_names: list[str]
    role: np.ndarray  # int32 codes into role_names (0 is "")
    role_names: list[str]

    def __len__(self) -> int:
        return int(self.line.shape[0])


def read_blocks(
    raw: BinaryIO, src: str, block_bytes: int = BLOCK_BYTES
) -> Iterator[tuple[bytes, int]]:
    """Yield (block, bytes consumed) where each block ends at a row boundary (or the end)."""
    carry = b""
    while True:
        data = raw.read(block_bytes)
        if not data:
            if carry:
                yield carry, len(carry)
            return
        buf = carry + data
        cut = _row_boundary(buf)
        if cut <= 0:
            if len(buf) > MAX_ROW_BYTES:
                raise ImportFormatError(
                    f"{src}: a row longer than {MAX_ROW_BYTES >> 20} MiB (or lines that end "
                    "in a lone CR, which the importer does not read)"
                )
            carry = buf
            continue
        carry = buf[cut:]
        yield buf[:cut], cut


def _row_boundary(buf: bytes) -> int:
    """Offset just after the last LF that lies outside quotes, or 0 when there is none."""
    end = buf.rfind(b"\n")
    if end < 0:
        return 0
    if b'"' not in buf:
        return end + 1
    arr = np.frombuffer(buf, dtype=np.uint8)
    ends = np.flatnonzero((arr == ord("\n")) & (_inside_quotes(arr) == 0))
    return int(ends[-1]) + 1 if ends.size else 0


def _inside_quotes(arr: np.ndarray) -> np.ndarray:
    """1 where an odd number of quotes came before (one byte per byte of the block)."""
    return np.bitwise_xor.accumulate((arr == ord('"')).view(np.uint8))


class BlockParser:
    """Turns blocks into :class:`Rows`; ``skipped`` collects bad rows (``--skip-bad``)."""

    def __init__(
        self,
        layout: RowLayout,
        ncols: int,
        skipped: list[str] | None,
        pyarrow: Any | None,
    ) -> None:
        self.layout = layout
        self.ncols = ncols
        self.skipped = skipped
        self.pa = pyarrow
        self.fast_blocks = 0
        self.slow_blocks = 0
        ids = layout.agent_ids
        lookup: dict[str, int] = {name: i for i, name in enumerate(ids)}
        for i in range(len(ids)):
            lookup.setdefault(str(i), i)
        self._agent_names = list(lookup)
        self._agent_index = np.array(list(lookup.values()), dtype=np.int32)

    def parse(self, block: bytes, start_line: int) -> tuple[Rows, int]:
        """The rows of ``block`` (first line ``start_line``) and the line after it."""
        if self.pa is not None and _plain(block):
            rows = self._fast(block, start_line, quoted=b'"' in block)
            if rows is not None:
                self.fast_blocks += 1
                return rows, start_line + len(rows)  # one row on every line
        self.slow_blocks += 1
        return self._slow(block, start_line)

    # -- row by row: exact messages --------------------------------------------------------
    def _slow(self, block: bytes, start_line: int) -> tuple[Rows, int]:
        src = self.layout.src
        try:
            text = block.decode("utf-8")
        except UnicodeDecodeError as exc:
            line = start_line + block[: exc.start].count(b"\n")
            raise ImportFormatError(f"{src}: line {line}: not UTF-8 text ({exc.reason})") from None
        reader = csv.reader(io.StringIO(text, newline=""))
        acc = _RowLists()
        try:
            for row in reader:
                line = start_line + reader.line_num - 1
                if not row or all(not c.strip() for c in row):
                    continue
                try:
                    acc.add(parse_row(self.layout, line, row))
                except ImportFormatError as exc:
                    if self.skipped is None:
                        raise
                    self.skipped.append(str(exc).removeprefix(f"{src}: "))
        except csv.Error as exc:
            line = start_line - 1 + max(reader.line_num, 1)
            raise ImportFormatError(f"{src}: line {line}: {exc}") from None
        return acc.rows(self.layout.col.get("reward") is not None), start_line + reader.line_num

    # -- pyarrow and numpy: no object per row ----------------------------------------------
    def _fast(self, block: bytes, start_line: int, quoted: bool) -> Rows | None:
        assert self.pa is not None
        pa, pacsv, pc = self.pa
        col = self.layout.col
        names = [f"c{i}" for i in range(self.ncols)]
        wanted = {ours: f"c{i}" for ours, i in col.items()}
        types = {name: pa.string() for name in wanted.values()}
        for ours in ("x", "y", "heading", "reward"):
            if ours in wanted:
                types[wanted[ours]] = pa.float64()
        try:
            table = pacsv.read_csv(
                pa.py_buffer(block),
                read_options=pacsv.ReadOptions(column_names=names, use_threads=True),
                parse_options=pacsv.ParseOptions(
                    quote_char='"' if quoted else False,
                    newlines_in_values=False,
                    ignore_empty_lines=False,
                ),
                convert_options=pacsv.ConvertOptions(
                    column_types=types,
                    include_columns=list(dict.fromkeys(wanted.values())),
                    null_values=[],
                    strings_can_be_null=False,
                ),
            )
        except (pa.ArrowInvalid, pa.ArrowTypeError, UnicodeDecodeError):
            return None  # the row-by-row reader says which line and why
        n = table.num_rows

        def column(ours: str) -> Any:
            return table.column(wanted[ours])

        step_text = column("step")
        if n and not pc.all(pc.match_substring_regex(step_text, r"^\d{1,9}$")).as_py():
            return None
        step = pc.cast(step_text, pa.int64()).to_numpy(zero_copy_only=False)
        agent_code = pc.index_in(
            pc.utf8_trim_whitespace(column("agent")), value_set=pa.array(self._agent_names)
        )
        if agent_code.null_count:
            return None
        agent = self._agent_index[agent_code.to_numpy(zero_copy_only=False)]
        pose = np.empty((n, 3), dtype=np.float64)
        for k, (ours, limit) in enumerate(
            (("x", COORDINATE_LIMIT), ("y", COORDINATE_LIMIT), ("heading", HEADING_LIMIT))
        ):
            pose[:, k] = column(ours).to_numpy(zero_copy_only=False)
            if not _within(pose[:, k], limit):
                return None
        reward = None
        if "reward" in wanted:
            reward = np.asarray(column("reward").to_numpy(zero_copy_only=False), np.float64)
            if not np.isfinite(reward).all():
                return None
        episode, episode_names = self._codes(column("episode"), with_empty=False)
        goal, goal_names = self._optional("goal", column, n)
        role, role_names = self._optional("role", column, n)
        line = np.arange(start_line, start_line + n, dtype=np.int64)
        return Rows(
            line, episode, episode_names, step, agent, pose, reward, goal, goal_names, role,
            role_names,
        )  # fmt: skip

    def _optional(
        self, ours: str, column: Callable[[str], Any], n: int
    ) -> tuple[np.ndarray, list[str]]:
        if ours not in self.layout.col:
            return np.zeros(n, dtype=np.int32), [""]
        return self._codes(column(ours), with_empty=True)

    def _codes(self, values: Any, with_empty: bool) -> tuple[np.ndarray, list[str]]:
        """Dictionary codes of trimmed text; with ``with_empty`` code 0 is always ""."""
        assert self.pa is not None
        pc = self.pa[2]
        trimmed = pc.utf8_trim_whitespace(values).combine_chunks()
        encoded = pc.dictionary_encode(trimmed)
        codes = encoded.indices.to_numpy(zero_copy_only=False).astype(np.int32)
        names: list[str] = encoded.dictionary.to_pylist()
        if not with_empty:
            return codes, names
        ordered = [""] + [s for s in names if s]
        position = {s: i for i, s in enumerate(ordered)}
        remap = np.array([position[s] for s in names], dtype=np.int32)
        return (remap[codes] if codes.size else codes), ordered


def _plain(block: bytes) -> bool:
    """True when row i of the block is on its line i: no blank lines, no lone CR and no
    line end inside quotes (quoted values on one line are fine)."""
    if (
        b"\n\n" in block
        or b"\n\r\n" in block
        or block.startswith((b"\n", b"\r\n"))
        or (b"\r" in block and block.count(b"\r") != block.count(b"\r\n"))
    ):
        return False
    if b'"' not in block:
        return True
    arr = np.frombuffer(block, dtype=np.uint8)
    return not _inside_quotes(arr)[arr == ord("\n")].any()


def _within(values: np.ndarray, limit: float) -> bool:
    return bool(np.isfinite(values).all() and (np.abs(values) <= limit).all())


class _RowLists:
    """Rows gathered one by one (the slow way), turned into :class:`Rows` per block."""

    def __init__(self) -> None:
        self.line: list[int] = []
        self.step: list[int] = []
        self.agent: list[int] = []
        self.pose: list[tuple[float, float, float]] = []
        self.reward: list[float] = []
        self.labels: dict[str, dict[str, int]] = {"episode": {}, "goal": {"": 0}, "role": {"": 0}}
        self.codes: dict[str, list[int]] = {"episode": [], "goal": [], "role": []}

    def add(self, r: Any) -> None:
        self.line.append(r.line)
        self.step.append(r.step)
        self.agent.append(r.agent)
        self.pose.append(r.pose)
        self.reward.append(0.0 if r.reward is None else r.reward)
        for name, text in (("episode", r.episode), ("goal", r.goal), ("role", r.role)):
            table = self.labels[name]
            self.codes[name].append(table.setdefault(text, len(table)))

    def rows(self, with_reward: bool) -> Rows:
        def codes(name: str) -> np.ndarray:
            return np.array(self.codes[name], dtype=np.int32)

        return Rows(
            np.array(self.line, dtype=np.int64),
            codes("episode"),
            list(self.labels["episode"]),
            np.array(self.step, dtype=np.int64),
            np.array(self.agent, dtype=np.int32),
            np.array(self.pose, dtype=np.float64).reshape(-1, 3),
            np.array(self.reward, dtype=np.float64) if with_reward else None,
            codes("goal"),
            list(self.labels["goal"]),
            codes("role"),
            list(self.labels["role"]),
        )


def load_pyarrow() -> Any | None:
    """(pyarrow, pyarrow.csv, pyarrow.compute), or None when pyarrow is not installed."""
    try:
        import pyarrow as pa
        import pyarrow.compute as pc
        import pyarrow.csv as pacsv
    except ImportError:
        return None
    return pa, pacsv, pc


__all__ = ["BLOCK_BYTES", "MAX_ROW_BYTES", "BlockParser", "Rows", "load_pyarrow", "read_blocks"]
