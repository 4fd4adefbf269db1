"""core.png against Pillow (reference decoder) and core.atomic file permissions."""

from __future__ import annotations

import io
import os
import stat

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from hypothesis.extra.numpy import arrays
from PIL import Image

from arena_studio.core.atomic import write_bytes_atomic
from arena_studio.core.export.png import encode_png

shapes = st.tuples(st.integers(1, 17), st.integers(1, 17))


@settings(max_examples=40, deadline=None)
@given(st.data())
def test_png_decodes_identically_with_pillow(data: st.DataObject) -> None:
    # Reference: Pillow's PNG decoder (PNG spec ISO/IEC 15948) must give back our pixels.
    h, w = data.draw(shapes)
    rgb = data.draw(st.booleans())
    shape = (h, w, 3) if rgb else (h, w)
    pixels = data.draw(arrays(np.uint8, shape))
    decoded = Image.open(io.BytesIO(encode_png(pixels, {"content_hash": "abc"})))
    assert decoded.mode == ("RGB" if rgb else "L")
    assert decoded.info["content_hash"] == "abc"
    np.testing.assert_array_equal(np.asarray(decoded), pixels)


def test_png_refuses_bad_arrays() -> None:
    with pytest.raises(ValueError):
        encode_png(np.zeros((2, 2), dtype=np.float32))
    with pytest.raises(ValueError):
        encode_png(np.zeros((0, 3), dtype=np.uint8))


def test_atomic_write_gives_usual_permissions(tmp_path) -> None:
    # Common practice, no source: a new file gets 0666 minus the umask (mkstemp alone gives
    # 0600); rewriting an existing file keeps that file's mode.
    mask = os.umask(0o022)
    os.umask(mask)
    fresh = tmp_path / "fresh.bin"
    write_bytes_atomic(fresh, b"x")
    assert stat.S_IMODE(fresh.stat().st_mode) == 0o666 & ~mask
    kept = tmp_path / "kept.bin"
    kept.write_bytes(b"old")
    os.chmod(kept, 0o640)
    write_bytes_atomic(kept, b"new")
    assert stat.S_IMODE(kept.stat().st_mode) == 0o640
    assert kept.read_bytes() == b"new"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["fresh.bin", "kept.bin"]
