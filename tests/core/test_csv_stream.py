"""The streaming CSV importer: same tapes and messages as the whole-file importer it replaced,
episodes cut across blocks, rows of one episode kept together, memory bounded."""

from __future__ import annotations

import csv
import os
import random
import subprocess
import sys
import textwrap
from pathlib import Path

import numpy as np
import pytest

from arena_studio.core.tape import csv_blocks, open_tape
from arena_studio.core.tape.importers import ImportFormatError, import_csv

from .legacy_csv_import import legacy_import_csv
from .tape_helpers import box_scene, write_long_csv

SCENE = box_scene(agents=3)
HEADER = ["episode", "step", "agent", "x", "y", "heading", "reward", "goal", "role"]


def _write(path: Path, rows: list[list[object]], header: list[str] = HEADER) -> Path:
    with open(path, "w", newline="") as f:
        w = csv.writer(f)  # Python's csv module as the reference writer of RFC 4180 tables
        w.writerow(header)
        w.writerows(rows)
    return path


def _rows(episodes: int = 4, steps: int = 7, seed: int = 0, shuffle: bool = False) -> list:
    rng = random.Random(seed)
    out = []
    for e in range(episodes):
        # a comma or a quote makes the writer quote the label (RFC 4180 doubles the quote)
        label = {1: f"run, {e}", 2: f'say "run {e}"'}.get(e, f"run-{e}")
        block = []
        for s in range(steps + e):
            for a in range(3):
                role = "lead" if (s < 3 or a == 1) else "scout"
                goal = "A+B" if a < 2 else ("C" if e % 2 else "")
                block.append(
                    [label, s, f"r{a}", round(rng.uniform(0, 10), 6), rng.uniform(0, 10),
                     rng.uniform(-3, 3), rng.choice([0.0, 1.0, -0.5]), goal, role]
                )  # fmt: skip
        if shuffle:
            rng.shuffle(block)  # any order of steps and agents inside an episode
        out.extend(block)
    return out


def _tape_values(path: Path) -> list[dict]:
    tape = open_tape(path)
    out = []
    for i in range(len(tape)):
        ep = tape.episode(i)
        out.append(
            {
                "poses": ep.poses.tolist(),
                "rewards": None if ep.rewards is None else ep.rewards.tolist(),
                "pursued": None
                if ep.pursued_goals is None
                else [None if g is None else np.asarray(g).tolist() for g in ep.pursued_goals],
                "roles": ep.roles,
                "messages": ep.messages,
            }
        )
    return [{"dt": tape.dt}, *out]


@pytest.mark.parametrize("block_bytes", [64, 700, 1 << 20])
@pytest.mark.parametrize(
    "columns",
    [
        HEADER[:6],  # poses
        HEADER[:7],  # rewards
        HEADER[:8],  # goals
        HEADER,  # roles
    ],
)
@pytest.mark.parametrize("shuffle", [False, True])
def test_streamed_import_equals_whole_file_import(
    tmp_path: Path, block_bytes: int, columns: list[str], shuffle: bool
) -> None:
    keep = [HEADER.index(c) for c in columns]
    rows = [[r[i] for i in keep] for r in _rows(shuffle=shuffle)]
    src = _write(tmp_path / "in.csv", rows, columns)
    # reference: the whole-file importer this one replaced
    assert legacy_import_csv(src, SCENE, tmp_path / "old.tape", dt=0.2) == 4
    assert import_csv(src, SCENE, tmp_path / "new.tape", dt=0.2, block_bytes=block_bytes) == 4
    assert _tape_values(tmp_path / "new.tape") == _tape_values(tmp_path / "old.tape")


def test_episode_cut_by_block_boundaries_is_whole(tmp_path: Path, monkeypatch) -> None:
    rows = _rows(episodes=2, steps=40)
    src = _write(tmp_path / "in.csv", rows)
    seen: list[int] = []
    fast: list[int] = []
    parse = csv_blocks.BlockParser.parse

    def counting(self, block: bytes, start: int):  # type: ignore[no-untyped-def]
        rows_, after = parse(self, block, start)
        seen.append(len(rows_))
        fast.append(self.fast_blocks)
        return rows_, after

    monkeypatch.setattr(csv_blocks.BlockParser, "parse", counting)
    assert import_csv(src, SCENE, tmp_path / "o.tape", block_bytes=256) == 2
    assert len(seen) > 10 and sum(seen) == len(rows)  # many blocks, every row once
    if csv_blocks.load_pyarrow() is not None:
        # quoted values on one line ("run, 1") take pyarrow's way too
        assert fast[-1] == len(seen)
    tape = open_tape(tmp_path / "o.tape")
    assert tape.episode(0).steps == 40 and tape.episode(1).steps == 41
    # the rows read back as written (Python's csv module as the reference reader)
    written = rows[40 * 3 + 17 * 3 + 2][3:6]
    assert tape.episode(1).poses[17, 2].tolist() == [float(v) for v in written]


def test_quoted_values_with_line_breaks_keep_line_numbers(tmp_path: Path) -> None:
    rows = [["two\nlines", s, f"r{a}", 1, 1, 0] for s in range(2) for a in range(3)]
    rows.append(["two\nlines", 2, "r0", "oops", 1, 0])
    src = _write(tmp_path / "q.csv", rows, HEADER[:6])
    for block_bytes in (32, 1 << 20):
        with pytest.raises(ImportFormatError) as new:
            import_csv(src, SCENE, tmp_path / "o.tape", block_bytes=block_bytes)
        with pytest.raises(ImportFormatError) as old:
            legacy_import_csv(src, SCENE, tmp_path / "o.tape")
        assert str(new.value) == str(old.value)
        assert "line 15, column 'x'" in str(new.value)  # 1 header + 7 rows of 2 lines each


@pytest.mark.parametrize("block_bytes", [48, 1 << 20])
def test_skip_bad_names_the_same_lines(tmp_path: Path, block_bytes: int) -> None:
    rows = _rows(episodes=3, steps=5)
    rows[4][3] = "abc"  # line 6
    rows[20][5] = "inf"  # line 22
    rows[30][2] = "robot-9"  # line 32
    src = _write(tmp_path / "bad.csv", rows)
    old: list[str] = []
    new: list[str] = []
    legacy_import_csv(src, SCENE, tmp_path / "old.tape", skipped=old)
    assert import_csv(src, SCENE, tmp_path / "new.tape", skipped=new, block_bytes=block_bytes)

    # bad rows in file order, then (whole-file) or as they end (streamed) the episodes left out
    def split(texts: list[str]) -> tuple[list[str], list[str]]:
        rows_ = [t for t in texts if t.startswith("line")]
        return rows_, [t for t in texts if not t.startswith("line")]

    assert split(new) == split(old) and len(new) == len(old)
    assert new[0] == "line 6, column 'x': expected a number, got 'abc'"
    assert any(t.startswith("line 32, column 'agent'") for t in new)
    assert _tape_values(tmp_path / "new.tape") == _tape_values(tmp_path / "old.tape")


def test_episode_rows_apart_are_refused_with_the_line(tmp_path: Path) -> None:
    rows = [["a", 0, f"r{k}", 0, 0, 0] for k in range(3)]
    rows += [["b", 0, f"r{k}", 0, 0, 0] for k in range(3)]
    rows += [["a", 1, f"r{k}", 0, 0, 0] for k in range(3)]  # lines 8..10
    src = _write(tmp_path / "apart.csv", rows, HEADER[:6])
    with pytest.raises(ImportFormatError, match=r"line 8: episode 'a' \(first row on line 2\)"):
        import_csv(src, SCENE, tmp_path / "o.tape")
    assert not (tmp_path / "o.tape").exists()
    assert not (tmp_path / "o.tape.partial").exists()
    skipped: list[str] = []
    assert import_csv(src, SCENE, tmp_path / "o.tape", skipped=skipped) == 2
    assert [t.split(":")[0] for t in skipped] == ["line 8", "line 9", "line 10"]
    assert open_tape(tmp_path / "o.tape").episode(0).steps == 1


def test_repeated_row_and_changed_goal_match_the_whole_file_import(tmp_path: Path) -> None:
    rows = _rows(episodes=2, steps=4)
    rows.insert(5, list(rows[3]))  # a second row for step 1 of r0
    rows[9][7] = "C"  # agent r0 changes its goal
    src = _write(tmp_path / "dup.csv", rows)
    with pytest.raises(ImportFormatError) as new:
        import_csv(src, SCENE, tmp_path / "o.tape")
    with pytest.raises(ImportFormatError) as old:
        legacy_import_csv(src, SCENE, tmp_path / "o.tape")
    assert str(new.value) == str(old.value) and "appears twice" in str(new.value)
    old_skips: list[str] = []
    new_skips: list[str] = []
    legacy_import_csv(src, SCENE, tmp_path / "old.tape", skipped=old_skips)
    import_csv(src, SCENE, tmp_path / "new.tape", skipped=new_skips, block_bytes=100)
    assert sorted(new_skips) == sorted(old_skips)
    assert _tape_values(tmp_path / "new.tape") == _tape_values(tmp_path / "old.tape")


def test_import_without_pyarrow_reads_the_same(tmp_path: Path, monkeypatch) -> None:
    src = _write(tmp_path / "in.csv", _rows(shuffle=True))
    import_csv(src, SCENE, tmp_path / "fast.tape")
    monkeypatch.setattr(
        "arena_studio.core.tape.csv_import.load_pyarrow", lambda: None
    )  # the row-by-row way for every block
    import_csv(src, SCENE, tmp_path / "slow.tape", block_bytes=300)
    assert _tape_values(tmp_path / "slow.tape") == _tape_values(tmp_path / "fast.tape")


# -- memory: a file imported under an address-space limit ----------------------------------
_LIMITED = textwrap.dedent(
    """
    import resource, sys
    sys.path.insert(0, {root!r})
    sys.path.insert(0, {tests!r})
    from arena_studio.core.tape.importers import import_csv
    from core.tape_helpers import box_scene
    from core.legacy_csv_import import legacy_import_csv
    fn = legacy_import_csv if sys.argv[1] == "whole" else import_csv
    scene = box_scene(agents=3)
    # a small import first, so that libraries and thread pools are set up before the limit:
    # the limit then bounds what the import itself holds
    fn(sys.argv[4], scene, sys.argv[3])
    with open("/proc/self/status") as f:
        vm = next(int(l.split()[1]) * 1024 for l in f if l.startswith("VmSize"))
    resource.setrlimit(resource.RLIMIT_AS, (vm + {extra}, vm + {extra}))
    try:
        print(fn(sys.argv[2], scene, sys.argv[3]))
    except MemoryError:
        print("MemoryError")
        sys.exit(3)
    """
)


@pytest.mark.skipif(not sys.platform.startswith("linux"), reason="RLIMIT_AS and /proc: Linux")
def test_50_mb_file_imports_within_a_memory_limit(tmp_path: Path) -> None:
    src = tmp_path / "long.csv"
    episodes = write_long_csv(src, 50 << 20)
    root = str(Path(__file__).resolve().parents[2])
    # 160 MiB above the process's size before the import: the file's rows as Python
    # objects (what the whole-file importer kept) need several times the file's 50 MB
    script = _LIMITED.format(root=root, tests=str(Path(root) / "tests"), extra=160 << 20)
    # Arrow's own allocator and glibc's per-thread arenas reserve address space they never
    # use; the system allocator with two arenas keeps the size close to what is used
    env = {**os.environ, "PYTHONPATH": root, "ARROW_DEFAULT_MEMORY_POOL": "system"}
    env["MALLOC_ARENA_MAX"] = "2"
    small = tmp_path / "small.csv"
    write_long_csv(small, 1 << 20)

    def run(how: str) -> subprocess.CompletedProcess[str]:
        out = tmp_path / f"{how}.tape"
        cmd = [sys.executable, "-c", script, how, str(src), str(out), str(small)]
        return subprocess.run(cmd, capture_output=True, text=True, env=env, timeout=600)

    streamed = run("stream")
    assert streamed.returncode == 0, streamed.stderr[-2000:]
    assert streamed.stdout.split() == [str(episodes)]
    tape = open_tape(tmp_path / "stream.tape")
    assert len(tape) == episodes and tape.episode(episodes - 1).steps == 400
    # the same limit stops the whole-file importer: the limit is one that matters
    whole = run("whole")
    assert whole.returncode != 0 and "MemoryError" in whole.stdout + whole.stderr


def test_every_value_quoted_reads_the_same(tmp_path: Path, monkeypatch) -> None:
    src = tmp_path / "quoted.csv"
    with open(src, "w", newline="") as f:
        w = csv.writer(f, quoting=csv.QUOTE_ALL)  # RFC 4180 allows quotes on any field
        w.writerow(HEADER)
        w.writerows(_rows(shuffle=True))
    fast = 0
    parse = csv_blocks.BlockParser.parse

    def counting(self, block: bytes, start: int):  # type: ignore[no-untyped-def]
        nonlocal fast
        out = parse(self, block, start)
        fast = self.fast_blocks
        return out

    monkeypatch.setattr(csv_blocks.BlockParser, "parse", counting)
    legacy_import_csv(src, SCENE, tmp_path / "old.tape")
    import_csv(src, SCENE, tmp_path / "new.tape", block_bytes=500)
    assert _tape_values(tmp_path / "new.tape") == _tape_values(tmp_path / "old.tape")
    if csv_blocks.load_pyarrow() is not None:
        assert fast > 5
