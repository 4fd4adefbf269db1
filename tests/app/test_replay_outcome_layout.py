"""The replay on the reference tape: the simulator's outcome in the episode line, landmarks
drawn where each episode had them, and a wrong scene hash said in the status line.

Expected values are the ones the reference tape was built from (tests/core/
test_tape_reference.py writes it from the format description with msgpack and zlib only).
"""

from __future__ import annotations

import hashlib
import struct
from pathlib import Path

from arena_studio.app.replay.replay_window import ReplayWindow
from arena_studio.core.tape.format import TRAILER, TRAILER_MAGIC, frame, pack, unpack

REFERENCE = Path(__file__).resolve().parents[1] / "data" / "reference.tape"
E1_LANDMARKS = [(2.0, 3.5), (4.0, 3.5)]  # as in tests/core/tape/test_tape_reference.py
SCENE_LANDMARKS = [(1.0, 3.0), (5.0, 3.0)]


def _open(qtbot, path: Path) -> tuple[ReplayWindow, list[str]]:
    w = ReplayWindow("light")
    qtbot.addWidget(w)
    said: list[str] = []
    w.statusMessage.connect(said.append)
    w.resize(1280, 800)
    w.show()
    w.open_tape(path)
    assert w.wait_loaded()
    return w, said


def test_outcome_and_moved_landmarks(qtbot) -> None:
    w, said = _open(qtbot, REFERENCE)
    assert w.prepared.episode.index == 0
    text = w.verdict.text()
    assert "Simulator reported: success true, score 2." in text
    assert [lm.position for lm in w.canvas.scene_value.landmarks] == SCENE_LANDMARKS
    w.select_episode(1)
    assert w.wait_loaded()
    qtbot.waitUntil(lambda: w.prepared.episode.index == 1, timeout=5000)
    assert "Simulator reported" not in w.verdict.text()  # episode 1 reports no outcome
    assert [lm.position for lm in w.canvas.scene_value.landmarks] == E1_LANDMARKS
    assert not any("scene_hash" in s for s in said)  # the reference hash is right
    w.close()


def _with_wrong_hash(tmp_path: Path) -> Path:
    """The reference tape with its header's scene_hash replaced (offsets moved to match)."""
    data = REFERENCE.read_bytes()
    (n,) = struct.unpack_from("<I", data, 8)
    header = unpack(memoryview(data[13 : 13 + n]))
    header["scene_hash"] = hashlib.sha256(b"another scene").hexdigest()
    new_head = frame(ord("H"), pack(header))
    shift = len(new_head) - (n + 9)
    assert shift == 0  # same length of hex digits: every later offset stays valid
    body = data[:8] + new_head + data[8 + n + 9 :]
    _at, magic = TRAILER.unpack(body[-16:])
    assert magic == TRAILER_MAGIC
    path = tmp_path / "wrong-hash.tape"
    path.write_bytes(body)
    return path


def test_wrong_scene_hash_is_said(qtbot, tmp_path: Path) -> None:
    w, said = _open(qtbot, _with_wrong_hash(tmp_path))
    assert any("scene_hash" in s and "does not match" in s for s in said)
    w.close()
