"""Hostile scene files, tapes, CSV and NPZ files through the commands that read them.

Each generated file runs in-process through the commands that read it; the rule checked is
the project's CLI rule (README "Commands"): exit 0, 1 or 2, no traceback, a refusal is one
line naming the file. Scene mutations follow the scene format (README "Scene files"); tape
damage follows the tape layout (DEVELOPERS.md "Tape format"): cut, flipped bytes, extreme
header numbers. CSV rows are written with Python's csv module (RFC 4180), NPZ with
``numpy.savez`` (numpy's documented .npz layout).
"""

from __future__ import annotations

import csv
import io
import json
import tempfile
from pathlib import Path

import msgpack
import numpy as np
from hypothesis import given
from hypothesis import strategies as st

from arena_studio.core.scene.model import Scene
from arena_studio.core.tape import TapeWriter
from tests.fuzz.harness import assert_clean, run_in_process
from tests.fuzz.strategies import SCENE, fuzz_settings, hostile_float, scene_documents


def _write_scene(doc: object, folder: Path, as_msgpack: bool) -> Path:
    try:  # msgpack holds integers of at most 64 bits; larger ones go in JSON
        packed = msgpack.packb(doc, use_bin_type=True) if as_msgpack else None
    except OverflowError:
        packed = None
    if packed is not None:
        path = folder / "fuzz.scene.msgpack"
        path.write_bytes(packed)
    else:
        path = folder / "fuzz.scene.json"
        path.write_text(json.dumps(doc))
    return path


@fuzz_settings()
@given(scene_documents(), st.booleans(), st.sampled_from(["check", "goals", "export"]))
def test_hostile_scenes_end_cleanly(doc, as_msgpack, command):
    with tempfile.TemporaryDirectory(prefix="fuzz-scene-") as tmp:
        path = _write_scene(doc, Path(tmp), as_msgpack)
        argv = (
            [command, str(path), "--json"]
            if command != "export"
            else ["export", str(path), "-f", "npz", "-o", str(Path(tmp) / "out.npz")]
        )
        assert_clean(run_in_process(argv), str(path))


@fuzz_settings()
@given(st.binary(max_size=400), st.sampled_from([".scene.json", ".scene.msgpack"]))
def test_random_bytes_as_a_scene_end_cleanly(data, suffix):
    with tempfile.TemporaryDirectory(prefix="fuzz-bytes-") as tmp:
        path = Path(tmp) / f"x{suffix}"
        path.write_bytes(data)
        assert_clean(run_in_process(["check", str(path)]), str(path))


def _tape_bytes(dt: float, poses_value: float, dtype: str) -> bytes:
    scene = Scene.from_dict(json.loads(Path(SCENE).read_text()))
    with tempfile.TemporaryDirectory(prefix="fuzz-tape-w-") as tmp:
        path = Path(tmp) / "t.tape"
        with TapeWriter(path, scene, dt=dt, chunk_steps=4) as w:
            for e in range(2):
                w.begin_episode()
                poses = np.zeros((6, len(scene.agents), 3), dtype=dtype)
                poses[:, :, :2] = 1.0 + e
                poses[3, 0, :] = poses_value
                w.steps(poses)
                w.end_episode()
        return path.read_bytes()


@st.composite
def damaged_tapes(draw: st.DrawFn) -> bytes:
    # in-range numbers only: extreme dt and poses are checked at read time by the
    # damaged-episode work and kept as regression cases in test_fuzz_regressions.py
    dt = draw(st.sampled_from([0.1, 0.05, 1.0, 0.001]))
    dtype = draw(st.sampled_from(["<f8", "<f4"]))
    value = draw(st.sampled_from([2.0, -5.0, 100.0, 1e4]))
    data = bytearray(_tape_bytes(dt, value, dtype))
    damage = draw(st.sampled_from(["none", "cut", "flip", "zero-run"]))
    if damage == "cut":
        data = data[: draw(st.integers(0, len(data)))]
    elif damage == "flip":
        for _ in range(draw(st.integers(1, 4))):
            at = draw(st.integers(0, len(data) - 1))
            data[at] ^= 1 << draw(st.integers(0, 7))
    elif damage == "zero-run":
        at = draw(st.integers(0, len(data) - 1))
        data[at : at + 16] = bytes(len(data[at : at + 16]))
    return bytes(data)


@fuzz_settings()
@given(damaged_tapes(), st.sampled_from(["stats", "still", "clip"]))
def test_damaged_and_extreme_tapes_end_cleanly(data, how):
    with tempfile.TemporaryDirectory(prefix="fuzz-tape-") as tmp:
        path = Path(tmp) / "t.tape"
        path.write_bytes(data)
        if how == "stats":
            argv = ["stats", str(path), "--json", "--quiet"]
        elif how == "still":
            argv = [
                "render",
                str(path),
                "-o",
                str(Path(tmp) / "s.png"),
                "--time",
                "0.3",
                "--size",
                "64x64",
            ]
        else:
            argv = [
                "render",
                str(path),
                "-o",
                str(Path(tmp) / "c.gif"),
                "--size",
                "64x64",
                "--end",
                "0.5",
                "--quiet",
            ]
        assert_clean(run_in_process(argv), str(path))


def _cell() -> st.SearchStrategy[str]:
    return st.one_of(
        st.sampled_from(
            [
                "0",
                "1",
                "rover-1",
                "rover-2",
                "nan",
                "inf",
                "1e308",
                "-1",
                "",
                "x",
                "1e-300",
                "5e-324",
                "99999999999999999999",
            ]
        ),
        hostile_float().map(repr),
        st.text(max_size=4),
    )


@st.composite
def csv_texts(draw: st.DrawFn) -> str:
    header = draw(
        st.one_of(
            st.just(["episode", "step", "agent", "x", "y", "heading"]),
            st.just(["episode", "step", "agent", "x", "y", "heading", "reward", "goal", "role"]),
            st.lists(
                st.sampled_from(["episode", "step", "agent", "x", "y", "heading", "q"]), max_size=7
            ),
        )
    )
    rows = draw(
        st.lists(st.lists(_cell(), min_size=len(header), max_size=len(header) + 1), max_size=12)
    )
    buf = io.StringIO()
    w = csv.writer(buf)
    w.writerow(header)
    w.writerows(rows)
    return buf.getvalue()


@fuzz_settings()
@given(csv_texts(), st.sampled_from([None, "0.1", "1e-4"]))
def test_hostile_csv_imports_end_cleanly(text, dt):
    with tempfile.TemporaryDirectory(prefix="fuzz-csv-") as tmp:
        src = Path(tmp) / "in.csv"
        src.write_text(text)
        argv = [
            "import",
            "csv",
            str(src),
            "--scene",
            SCENE,
            "-o",
            str(Path(tmp) / "o.tape"),
            "--quiet",
        ]
        if dt is not None:
            argv += ["--dt", dt]
        assert_clean(run_in_process(argv), str(src))


@st.composite
def npz_arrays(draw: st.DrawFn) -> dict[str, np.ndarray]:
    names = draw(
        st.lists(
            st.sampled_from(
                [
                    "poses",
                    "poses_0",
                    "poses_1",
                    "rewards",
                    "done",
                    "actions",
                    "team_goal",
                    "pursued_goals",
                    "dt",
                    "junk",
                ]
            ),
            min_size=1,
            max_size=4,
            unique=True,
        )
    )
    out = {}
    for name in names:
        shape = tuple(draw(st.lists(st.integers(0, 4), max_size=4)))
        dtype = draw(st.sampled_from(["<f8", "<f4", "<i8", "|u1", "|b1", "<c16", "<U3"]))
        fill = draw(st.sampled_from([0.0, 1.0, 1e308, -1.0]))
        arr = np.zeros(shape, dtype=dtype)
        if arr.dtype.kind in "fc":
            arr[...] = min(fill, float(np.finfo(arr.dtype).max))
        if name == "dt" and draw(st.booleans()):
            arr = np.array(draw(st.sampled_from([0.1, 0.0, -1.0, 1e-300, np.inf, np.nan])))
        out[name] = arr
    return out


@fuzz_settings()
@given(npz_arrays(), st.booleans())
def test_hostile_npz_imports_end_cleanly(arrays, compressed):
    with tempfile.TemporaryDirectory(prefix="fuzz-npz-") as tmp:
        src = Path(tmp) / "in.npz"
        (np.savez_compressed if compressed else np.savez)(src, **arrays)
        argv = [
            "import",
            "npz",
            str(src),
            "--scene",
            SCENE,
            "-o",
            str(Path(tmp) / "o.tape"),
            "--quiet",
        ]
        assert_clean(run_in_process(argv), str(src))
