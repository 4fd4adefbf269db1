"""Finding a sweep's tapes and placing them by header keys or a path layout."""

from __future__ import annotations

from pathlib import Path

import pytest

from arena_studio.core.runs.sweep import SweepError, compile_layout, scan_sweep
from tests.core.runs.sweep_helpers import write_scored_tape


def test_header_keys_place_tapes_and_task_defaults_to_scene_name(tmp_path: Path) -> None:
    write_scored_tape(tmp_path / "a.tape", 1, metadata={"condition": "c", "seed": 3, "step": 7})
    sweep = scan_sweep(tmp_path)
    (tape,) = sweep.ready
    assert (tape.place.condition, tape.place.seed, tape.place.step) == ("c", 3, 7)
    assert tape.place.task == "box"
    assert tape.header_hash and tape.size == tape.path.stat().st_size


def test_layout_places_tapes_without_keys_and_header_wins(tmp_path: Path) -> None:
    write_scored_tape(tmp_path / "x" / "seed2" / "step40.tape", 1)
    write_scored_tape(tmp_path / "y" / "seed5" / "step10.tape", 1, metadata={"condition": "z"})
    sweep = scan_sweep(tmp_path, "{condition}/seed{seed}/step{step}.tape")
    places = sorted((t.place.condition, t.place.seed, t.place.step) for t in sweep.ready)
    assert places == [("x", 2, 40), ("z", 5, 10)]


def test_unplaced_tape_is_a_problem_naming_the_keys(tmp_path: Path) -> None:
    write_scored_tape(tmp_path / "loose.tape", 1, metadata={"condition": "c"})
    sweep = scan_sweep(tmp_path)
    assert not sweep.ready
    (bad,) = sweep.problems
    assert "loose.tape" in bad.problem and "seed, step" in bad.problem and "--layout" in bad.problem


def test_partial_tapes_are_listed_as_recording(tmp_path: Path) -> None:
    write_scored_tape(tmp_path / "c" / "seed1" / "step1.tape", 1)
    (tmp_path / "c" / "seed1" / "step2.tape.partial").write_bytes(b"\x89ASTAPE\n")
    sweep = scan_sweep(tmp_path, "{condition}/seed{seed}/step{step}.tape")
    assert [t.path.name for t in sweep.recording] == ["step2.tape.partial"]
    assert sweep.recording[0].place.step == 2
    assert [t.path.name for t in sweep.ready] == ["step1.tape"]


def test_not_a_tape_is_a_problem_not_an_error(tmp_path: Path) -> None:
    (tmp_path / "junk.tape").write_bytes(b"hello world, not a tape")
    sweep = scan_sweep(tmp_path)
    assert "junk.tape" in sweep.problems[0].problem


def test_glob_and_list_file(tmp_path: Path) -> None:
    meta = {"condition": "c", "seed": 1, "step": 1}
    write_scored_tape(tmp_path / "r" / "one.tape", 1, metadata=meta)
    write_scored_tape(tmp_path / "r" / "two.tape", 1, metadata={**meta, "seed": 2})
    assert len(scan_sweep(str(tmp_path / "r" / "t*.tape")).ready) == 1
    listing = tmp_path / "tapes.txt"
    listing.write_text("# my runs\nr/one.tape\n\nr/two.tape\n")
    assert [t.path.name for t in scan_sweep(listing).ready] == ["one.tape", "two.tape"]
    listing.write_text("r/one.tape\nr/three.tape\n")
    with pytest.raises(SweepError, match=r"tapes.txt, line 2: r/three.tape: no such tape"):
        scan_sweep(listing)


def test_missing_source_and_bad_layouts(tmp_path: Path) -> None:
    with pytest.raises(SweepError, match="no such folder"):
        scan_sweep(tmp_path / "nothing")
    with pytest.raises(SweepError, match="expected at least one"):
        compile_layout("runs/*.tape")
    with pytest.raises(SweepError, match="appears twice"):
        compile_layout("{seed}/{seed}.tape")


def test_layout_pattern_matches_the_end_of_the_path() -> None:
    pattern = compile_layout("{condition}/seed{seed}/*step{step}.tape")
    m = pattern.search("sweeps/may/greedy/seed12/ckpt_step300.tape")
    assert m is not None and m.groupdict() == {"condition": "greedy", "seed": "12", "step": "300"}
    assert pattern.search("greedy/seedX/step3.tape") is None
