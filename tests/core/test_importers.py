"""CSV and NPZ importers: round trip through a tape, errors that name line and column."""

from __future__ import annotations

import csv
from pathlib import Path

import numpy as np
import pytest

from arena_studio.core.tape import open_tape
from arena_studio.core.tape.importers import (
    ImportFormatError,
    import_csv,
    import_npz,
    parse_columns,
)

from .tape_helpers import box_scene

SCENE = box_scene()


def _write_csv(path: Path, rows: list[list[object]], header: list[str]) -> None:
    with open(path, "w", newline="") as f:
        w = csv.writer(f)  # Python's csv module as the reference writer of RFC 4180 tables
        w.writerow(header)
        w.writerows(rows)


def test_csv_round_trip_with_goals_roles_and_mapping(tmp_path: Path) -> None:
    rows = []
    for ep in ("run-a", "run-b"):
        for step in range(3):
            for agent in ("r0", "r1"):
                role = "lead" if step < 2 or agent == "r1" else "follow"
                rows.append([ep, step, agent, step * 0.5, 1.0, 0.25, 1.0, "A+B", role])
    src = tmp_path / "in.csv"
    _write_csv(
        src, rows, ["episode", "step", "agent", "pos_x", "y", "heading", "reward", "goal", "role"]
    )
    out = tmp_path / "out.tape"
    count = import_csv(src, SCENE, out, dt=0.2, columns=parse_columns("x=pos_x"))
    assert count == 2
    tape = open_tape(out)
    ep = tape.episode(1)
    assert tape.dt == 0.2 and ep.poses.shape == (3, 2, 3)
    assert ep.poses[2, 1].tolist() == [1.0, 1.0, 0.25]
    assert ep.pursued_goals[0].tolist() == [1, 1, 0] and ep.rewards.sum() == 6.0
    assert ep.roles[0] == ((0, "lead"), (2, "follow")) and ep.messages == ({"episode": "run-b"},)


@pytest.mark.parametrize(
    "row, match",
    [
        (["e", 0, "r0", "abc", 1, 0], r"line 3, column 'x': expected a number"),
        (["e", 0, "robot-9", 1, 1, 0], r"line 3, column 'agent': unknown agent"),
        (["e", -1, "r0", 1, 1, 0], r"line 3, column 'step'"),
        (["e", 0, "r0", 1, 1, "nan"], r"line 3, column 'heading': expected a finite"),
    ],
)
def test_csv_errors_name_line_and_column(tmp_path: Path, row: list, match: str) -> None:
    src = tmp_path / "bad.csv"
    _write_csv(
        src, [["e", 0, "r1", 0, 0, 0], row], ["episode", "step", "agent", "x", "y", "heading"]
    )
    with pytest.raises(ImportFormatError, match=match):
        import_csv(src, SCENE, tmp_path / "o.tape")
    assert not (tmp_path / "o.tape").exists()


def test_csv_missing_rows_and_columns(tmp_path: Path) -> None:
    src = tmp_path / "gap.csv"
    _write_csv(
        src,
        [["e", 0, "r0", 0, 0, 0], ["e", 0, "r1", 0, 0, 0], ["e", 2, "r0", 0, 0, 0]],
        ["episode", "step", "agent", "x", "y", "heading"],
    )
    with pytest.raises(ImportFormatError, match="no row for step 1"):
        import_csv(src, SCENE, tmp_path / "o.tape")
    _write_csv(src, [["e", 0]], ["episode", "step"])
    with pytest.raises(ImportFormatError, match="line 1: missing column"):
        import_csv(src, SCENE, tmp_path / "o.tape")
    with pytest.raises(ImportFormatError, match="unknown name"):
        parse_columns("speed=v")


def test_npz_stacked_and_ragged(tmp_path: Path) -> None:
    poses = np.random.default_rng(0).normal(size=(2, 4, 2, 3))
    stacked = tmp_path / "s.npz"
    np.savez(stacked, poses=poses, team_goal=np.array([[1, 0, 0], [0, 1, 1]]), dt=0.25)
    assert import_npz(stacked, SCENE, tmp_path / "s.tape") == 2
    tape = open_tape(tmp_path / "s.tape")
    assert tape.dt == 0.25 and np.array_equal(tape.episode(1).poses, poses[1])
    assert tape.episode(1).team_goal.tolist() == [0, 1, 1]
    ragged = tmp_path / "r.npz"
    np.savez(ragged, poses_0=poses[0, :2], poses_1=poses[1])
    assert import_npz(ragged, SCENE, tmp_path / "r.tape") == 2
    assert open_tape(tmp_path / "r.tape").episode(0).steps == 2
    bad = tmp_path / "b.npz"
    np.savez(bad, poses=np.zeros((1, 3, 5, 3)))
    with pytest.raises(ImportFormatError, match=r"array poses: expected \(E, T, 2, 3\)"):
        import_npz(bad, SCENE, tmp_path / "b.tape")
    obj = tmp_path / "o.npz"
    np.savez(obj, poses=np.array([None, 1], dtype=object))
    with pytest.raises(ImportFormatError):  # object arrays need pickle, which numpy refuses
        import_npz(obj, SCENE, tmp_path / "o.tape")
    text = tmp_path / "t.npz"
    text.write_text("not a zip")
    with pytest.raises(ImportFormatError, match="not a readable"):
        import_npz(text, SCENE, tmp_path / "t.tape")


# -- NPZ members that would make numpy allocate more than the file holds -------------------
# References: the ZIP format (PKWARE APPNOTE.TXT 4.3.7 and 4.3.12: sizes at offsets 18/22 of a
# local header, 20/24 of a central directory header [memory]); deflate (RFC 1951) expands at
# most about 1032:1 [memory], checked below with zlib; the .npy format (numpy NEP 1).
import io  # noqa: E402
import struct  # noqa: E402
import tracemalloc  # noqa: E402
import zipfile  # noqa: E402
import zlib  # noqa: E402

from arena_studio.core.tape import importers as importers  # noqa: E402


def _claim_size(path: Path, member: str, size: int) -> None:
    """Rewrite the uncompressed size a zip records for ``member`` (both headers)."""
    data = bytearray(path.read_bytes())
    name = member.encode()
    local = data.find(b"PK\x03\x04")
    while local >= 0:
        n = struct.unpack_from("<H", data, local + 26)[0]
        if data[local + 30 : local + 30 + n] == name:
            struct.pack_into("<I", data, local + 22, size)
        local = data.find(b"PK\x03\x04", local + 4)
    central = data.find(b"PK\x01\x02")
    while central >= 0:
        n = struct.unpack_from("<H", data, central + 28)[0]
        if data[central + 46 : central + 46 + n] == name:
            struct.pack_into("<I", data, central + 24, size)
        central = data.find(b"PK\x01\x02", central + 4)
    path.write_bytes(bytes(data))


def _peak_mb(fn) -> float:
    tracemalloc.start()  # numpy reports its array buffers to tracemalloc
    try:
        fn()
    finally:
        peak = tracemalloc.get_traced_memory()[1]
        tracemalloc.stop()
    return peak / 1e6


def test_npz_oversized_member_refused(tmp_path: Path, monkeypatch) -> None:
    path = tmp_path / "big.npz"
    np.savez(path, poses=np.zeros((1, 100, 2, 3)))  # 4,800 bytes of array data
    monkeypatch.setattr(importers, "MAX_NPZ_MEMBER", 4000)
    with pytest.raises(ImportFormatError, match=r"array poses: \d+ bytes uncompressed, more"):
        import_npz(path, SCENE, tmp_path / "big.tape")
    assert not (tmp_path / "big.tape").exists()


def test_npz_zip_bomb_member_refused_before_allocation(tmp_path: Path) -> None:
    # deflate's ratio limit, seen with zlib on the most compressible input there is
    raw = bytes(8 << 20)
    assert len(raw) / len(zlib.compress(raw, 9)) < 1032
    path = tmp_path / "bomb.npz"
    np.savez_compressed(path, poses=np.zeros((1, 1000, 2, 3)))
    _claim_size(path, "poses.npy", 3_900_000_000)  # ~3.9 GB from a few hundred bytes
    with zipfile.ZipFile(path) as zf:
        assert zf.getinfo("poses.npy").file_size == 3_900_000_000  # the forged claim reads back

    def run() -> None:
        with pytest.raises(ImportFormatError, match="possible zip bomb") as info:
            import_npz(path, SCENE, tmp_path / "bomb.tape")
        assert "array poses: claims 3900000000 bytes" in str(info.value)

    assert _peak_mb(run) < 50


def test_npz_header_claiming_a_huge_shape_refused_before_allocation(tmp_path: Path) -> None:
    # a .npy header (version 1.0) claiming 10^12 poses over 48 bytes of data
    header = io.BytesIO()
    np.lib.format.write_array_header_1_0(
        header, {"descr": "<f8", "fortran_order": False, "shape": (10**6, 10**6, 2, 3)}
    )
    member = b"\x93NUMPY\x01\x00" + header.getvalue()[8:] + bytes(48)
    path = tmp_path / "liar.npz"
    with zipfile.ZipFile(path, "w") as zf:
        zf.writestr("poses.npy", member)

    def run() -> None:
        with pytest.raises(ImportFormatError, match=r"array poses: its header claims shape"):
            import_npz(path, SCENE, tmp_path / "liar.tape")

    assert _peak_mb(run) < 50


def test_npz_highly_compressible_but_genuine_member_imports(tmp_path: Path) -> None:
    path = tmp_path / "zeros.npz"
    poses = np.zeros((2, 40000, 2, 3))  # 3.8 MB of zeros, about 1000:1 under deflate
    np.savez_compressed(path, poses=poses)
    with zipfile.ZipFile(path) as zf:
        info = zf.getinfo("poses.npy")
        assert info.file_size > importers.NPZ_RATIO_FROM
        assert info.file_size / info.compress_size > 500
    assert import_npz(path, SCENE, tmp_path / "zeros.tape") == 2


def _expanding_npz(path: Path, chunks: int) -> int:
    """A genuine ``.npz`` whose deflated ``poses.npy`` is about 1 KiB per MiB it expands to:
    ``chunks`` MiB of zeros after the header. Built from one compressed MiB repeated (a full
    flush resets deflate's state, RFC 1951 / zlib's Z_FULL_FLUSH, so every MiB compresses to
    the same bytes), written as a plain ZIP (PKWARE APPNOTE.TXT 4.3.7, 4.3.12, 4.3.16 [memory]).
    Returns the member's uncompressed size."""
    mib = bytes(1 << 20)
    steps = chunks * (1 << 20) // 48  # (1, T, 2, 3) float64 poses: 48 bytes a step
    assert steps * 48 == chunks << 20
    head = io.BytesIO()
    np.lib.format.write_array_header_1_0(
        head, {"descr": "<f8", "fortran_order": False, "shape": (1, steps, 2, 3)}
    )
    header = head.getvalue()
    c = zlib.compressobj(9, zlib.DEFLATED, -15)
    parts = [c.compress(header) + c.flush(zlib.Z_FULL_FLUSH)]
    one = c.compress(mib) + c.flush(zlib.Z_FULL_FLUSH)
    assert c.compress(mib) + c.flush(zlib.Z_FULL_FLUSH) == one  # the same bytes every MiB
    data = parts[0] + one * chunks + c.flush()
    crc = zlib.crc32(header)
    for _ in range(chunks):
        crc = zlib.crc32(mib, crc)
    size = len(header) + (chunks << 20)
    name = b"poses.npy"
    local = struct.pack("<4s5H3I2H", b"PK\x03\x04", 20, 0, 8, 0, 0x21, crc, len(data), size,
                        len(name), 0)  # fmt: skip
    central = struct.pack("<4s6H3I5H2I", b"PK\x01\x02", 20, 20, 0, 8, 0, 0x21, crc, len(data),
                          size, len(name), 0, 0, 0, 0, 0, 0)  # fmt: skip
    at = len(local) + len(name) + len(data)
    end = struct.pack("<4s4H2IH", b"PK\x05\x06", 0, 0, 1, 1, len(central) + len(name), at, 0)
    path.write_bytes(local + name + data + central + name + end)
    return size


def test_npz_three_mb_member_expanding_to_gigabytes_refused_before_loading(
    tmp_path: Path,
) -> None:
    path = tmp_path / "expands.npz"
    size = _expanding_npz(path, 3000)  # 3,000 MiB of poses in about 3 MB
    assert 2_900_000 < path.stat().st_size < 3_300_000
    with zipfile.ZipFile(path) as zf:  # a genuine archive: zipfile reads and inflates it
        info = zf.getinfo("poses.npy")
        assert info.file_size == size and info.file_size / info.compress_size < 1100
        with zf.open(info) as f:
            assert np.lib.format.read_magic(f) == (1, 0)
            assert np.lib.format.read_array_header_1_0(f)[0] == (1, 65_536_000, 2, 3)
            assert f.read(1 << 20) == bytes(1 << 20)

    def run() -> None:
        with pytest.raises(ImportFormatError) as info:
            import_npz(path, SCENE, tmp_path / "expands.tape")
        assert str(info.value) == (
            f"{path}: array poses: {size} bytes uncompressed, more than an import takes "
            f"({importers.MAX_NPZ_MEMBER} bytes)"
        )

    assert _peak_mb(run) < 50  # refused from the archive's directory, nothing inflated
    assert not (tmp_path / "expands.tape").exists()


def test_npz_stacked_arrays_are_loaded_once(tmp_path: Path, monkeypatch) -> None:
    path = tmp_path / "many.npz"
    poses = np.random.default_rng(2).uniform(0, 9, size=(30, 5, 2, 3))
    np.savez(path, poses=poses, rewards=np.ones((30, 5, 2)))
    loads: list[str] = []
    real = np.lib.npyio.NpzFile.__getitem__

    def counting(self, key):  # type: ignore[no-untyped-def]
        loads.append(key)
        return real(self, key)

    monkeypatch.setattr(np.lib.npyio.NpzFile, "__getitem__", counting)
    assert import_npz(path, SCENE, tmp_path / "many.tape") == 30
    assert sorted(loads) == ["poses", "rewards"]  # not once per episode
    assert np.array_equal(open_tape(tmp_path / "many.tape").episode(29).poses, poses[29])
