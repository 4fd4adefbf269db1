"""Every numeric option refuses non-finite and out-of-range values as one usage line, exit 2.

NaN and the infinities are IEEE 754 special values that Python's ``float()`` accepts from text
(IEEE 754-2008 section 5.12, from memory); none of them may reach computation. Exit 2 for bad
arguments, one line on stderr, is the project's CLI rule (README "Commands"; common practice).
"""

from __future__ import annotations

import math

import pytest

from arena_studio.cli import main
from arena_studio.core import limits
from arena_studio.core.limits import Range, RangeError
from arena_studio.core.resources import demo_path

SCENE = str(demo_path("greenhouse.scene.json"))
TAPE = str(demo_path("greenhouse-greedy.tape"))

#: (command prefix, option, its Range): every numeric option of every command.
OPTIONS = [
    (["render", TAPE, "-o", "x.png"], "--start", limits.TIME),
    (["render", TAPE, "-o", "x.png"], "--end", limits.TIME),
    (["render", TAPE, "-o", "x.png"], "--time", limits.TIME),
    (["render", TAPE, "-o", "x.png"], "--trail", limits.TRAIL),
    (["render", TAPE, "-o", "x.png"], "--title-seconds", limits.TITLE_SECONDS),
    (["render", TAPE, "-o", "x.png"], "--fps", limits.FPS),
    (["render", TAPE, "-o", "x.png"], "--speed", limits.SPEED),
    (["render", TAPE, "-o", "x.png"], "--scale", limits.SCALE),
    (["render", TAPE, "-o", "x.png"], "--dpi", limits.DPI),
    (["render", TAPE, "-o", "x.png"], "--episode", limits.EPISODE),
    (["rollout", SCENE, "-o", "x.tape"], "--episodes", limits.EPISODES),
    (["rollout", SCENE, "-o", "x.tape"], "--seed", limits.SEED),
    (["rollout", SCENE, "-o", "x.tape"], "--max-time", limits.MAX_TIME),
    (["rollout", SCENE, "-o", "x.tape"], "--dt", limits.DT),
    (["rollout", SCENE, "-o", "x.tape"], "--word-error", limits.SHARE),
    (["rollout", SCENE, "-o", "x.tape"], "--adopt", limits.SHARE),
    (["export", SCENE, "-f", "grid", "-o", "x"], "--resolution", limits.RESOLUTION),
    (["export", SCENE, "-f", "grid", "-o", "x"], "--clearance", limits.CLEARANCE),
    (["import", "csv", "in.csv", "--scene", SCENE, "-o", "x.tape"], "--dt", limits.DT),
    (["import", "map", "m.yaml", "-o", "x.scene.json"], "--tolerance", limits.TOLERANCE),
    (["import", "map", "m.yaml", "-o", "x.scene.json"], "--min-area", limits.MIN_AREA),
    (["import", "bag", "run", "--scene", SCENE, "-o", "x.tape"], "--gap", limits.GAP),
    (["import", "bag", "run", "--scene", SCENE, "-o", "x.tape"], "--dt", limits.DT),
    (["stats", TAPE], "--episode", limits.EPISODE),
    (["stats", TAPE], "--permutations", limits.PERMUTATIONS),
    (["app", TAPE], "--time", limits.TIME),
    (["app", TAPE], "--episode", limits.EPISODE),
]


def _bad_values(r: Range) -> list[str]:
    below = r.low if r.low_open else (r.low - 1 if r.integer else r.low / 2 - 1)
    above = r.high + 1 if r.integer else r.high * 2 + 1
    values = [repr(below), repr(above), "abc", ""]
    if not r.integer:
        values += ["nan", "inf", "-inf", "1e309"]
    else:
        values += ["1.5", "1e3"]
    return values


@pytest.mark.parametrize(("prefix", "option", "limit"), OPTIONS, ids=lambda v: str(v)[:20])
def test_every_numeric_option_refuses_bad_values_in_one_line(
    prefix, option, limit, capsys, tmp_path, monkeypatch
):
    monkeypatch.chdir(tmp_path)
    for value in _bad_values(limit):
        assert main([*prefix, f"{option}={value}"]) == 2, (option, value)
        err = capsys.readouterr().err.strip().splitlines()
        assert len(err) == 1, err
        assert option in err[0] and limit.what in err[0] and "Traceback" not in err[0]
        if limit.unit:
            assert limit.unit in err[0]
    assert not list(tmp_path.iterdir())  # refused before any work or output


def test_range_accepts_its_ends_and_refuses_just_outside():
    r = Range("a speed", 0.1, 16.0, "times")
    assert r.parse("0.1") == 0.1 and r.parse("16") == 16.0
    for text in ("0.0999", "16.001", "nan", "inf"):
        with pytest.raises(RangeError, match=r"a speed from 0\.1 to 16 times"):
            r.parse(text)
    assert math.isfinite(r.check(1.0))
    opened = Range("a step", 0.0, 1.0, "s", low_open=True)
    with pytest.raises(RangeError, match="above 0"):
        opened.check(0.0)
    whole = Range("a count", 1, 10, "", integer=True)
    assert whole.parse("10") == 10
    with pytest.raises(RangeError, match="whole number"):
        whole.parse("2.0")
    with pytest.raises(RangeError):
        whole.parse("9" * 5000)  # past CPython's int-from-text digit limit: still one message


def test_rollout_refuses_more_steps_than_the_limit_with_the_estimate(capsys, tmp_path):
    code = main(
        ["rollout", SCENE, "-o", str(tmp_path / "x.tape"), "--max-time", "36000", "--dt", "0.0001"]
    )
    assert code == 2
    err = capsys.readouterr().err
    assert "360,000,000 steps" in err and "1,000,000" in err
    assert not list(tmp_path.iterdir())


def test_a_clip_over_the_frame_limit_is_refused_before_any_frame_is_made():
    from types import SimpleNamespace

    from arena_studio.render.clip import ClipError, ClipSpec, clip_frames, schedule
    from arena_studio.render.episode_painter import FrameOptions

    long = SimpleNamespace(duration=limits.MAX_SECONDS, index=0, step_at=lambda t: 0)
    spec = ClipSpec(
        start=0.0,
        end=None,
        speed=0.1,
        fps=120.0,
        size=(64, 64),
        compare=False,
        frame=FrameOptions(),
        title_seconds=0.0,
    )
    assert clip_frames([long], spec) > limits.MAX_CLIP_FRAMES
    with pytest.raises(ClipError, match="more than 200,000"):
        schedule([long], spec)
    short = SimpleNamespace(duration=2.0, index=0, step_at=lambda t: 0)
    # 2 s at 30 frames per second, real time: 60 frames (common practice: frames = s x fps)
    spec = ClipSpec(
        start=0.0,
        end=None,
        speed=1.0,
        fps=30.0,
        size=(64, 64),
        compare=False,
        frame=FrameOptions(),
        title_seconds=0.0,
    )
    assert clip_frames([short], spec) == len(schedule([short], spec)) == 60
