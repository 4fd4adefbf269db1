"""Messages on tapes: the writer checks them, old tapes still load, the rollout's announcement
options behave as documented, and `stats` / the per-tape figures report them.

Sources: entropy and mutual information as defined by Cover & Thomas, *Elements of
Information Theory*, ch. 2 (from memory): a message equal to the goal carries H(goal) bits,
checked against ``scipy.stats.entropy``; the signalling/listening split and the
"informative but ignored" case follow Lowe, Foerster, Boureau, Pineau and Dauphin, "On the
Pitfalls of Measuring Emergent Communication" (AAMAS 2019).
"""

from __future__ import annotations

import json

import numpy as np
import pytest
from scipy.stats import entropy as scipy_entropy

from arena_studio.cli import main
from arena_studio.core.analysis.messages import message_report
from arena_studio.core.runs.per_tape import tape_figures
from arena_studio.core.sim.rollout import MessageOptions, Rollout, code_word
from arena_studio.core.tape import TapeError, TapeWriter, open_tape
from tests.conftest import SCENES
from tests.core.tape_helpers import box_scene

PARKING = SCENES / "parking-level.scene.json"


def onehot(i: int) -> list[int]:
    v = [0, 0, 0]
    v[i] = 1
    return v


def test_writer_keeps_structured_messages_and_free_notes(tmp_path) -> None:
    scene = box_scene()
    path = tmp_path / "m.tape"
    said = [
        {"from": "r0", "to": None, "step": None, "value": 3},
        {"from": "r1", "to": "r0", "step": 2, "value": [1, 2]},
        {"from": "r0", "to": None, "step": None, "value": "left"},
        {"note": "a free note from an older writer"},
    ]
    with TapeWriter(path, scene, dt=0.5) as w:
        w.begin_episode(team_goal=[1, 0, 0], messages=said)
        w.steps(np.zeros((2, 2, 3)))
        w.end_episode()
    assert list(open_tape(path).episode(0).messages) == said


@pytest.mark.parametrize(
    ("raw", "field"),
    [
        ({"from": "nobody", "to": None, "step": None, "value": 1}, "messages[0].from"),
        ({"from": "r0", "to": "r9", "step": None, "value": 1}, "messages[0].to"),
        ({"from": "r0", "to": None, "step": -1, "value": 1}, "messages[0].step"),
        ({"from": "r0", "to": None, "step": None, "value": 1.5}, "messages[0].value"),
        ({"from": "r0", "value": 1, "colour": "red"}, "unknown message field 'colour'"),
    ],
)
def test_writer_refuses_a_broken_message_naming_episode_and_field(tmp_path, raw, field) -> None:
    with TapeWriter(tmp_path / "bad.tape", box_scene(), dt=0.5, keep_partial=False) as w:
        with pytest.raises(TapeError) as err:
            w.begin_episode(team_goal=[1, 0, 0], messages=[raw])
        assert "episode 0" in str(err.value) and field in str(err.value)
        assert "\n" not in str(err.value)


def test_an_old_tape_with_free_notes_still_loads_and_has_no_message_figures() -> None:
    tape = open_tape(SCENES / "greenhouse-independent.tape")  # written before the structure
    eps = list(tape)
    assert all(ep.messages and all("value" not in m for m in ep.messages) for ep in eps)
    ids = [a.id for a in tape.scene.agents]
    report = message_report(eps, ids, [lm.id for lm in tape.scene.landmarks], permutations=10)
    assert report.speakers == () and report.pairs == ()


def _hand_tape(path, goals_seq, listener_seq, values) -> None:
    scene = box_scene()
    with TapeWriter(path, scene, dt=0.5) as w:
        for g, lg, v in zip(goals_seq, listener_seq, values, strict=True):
            w.begin_episode(
                team_goal=onehot(g),
                pursued_goals=[onehot(g), onehot(lg)],
                messages=[{"from": "r0", "to": None, "step": None, "value": v}],
            )
            w.steps(np.zeros((2, 2, 3)))
            w.end_episode()


def test_stats_json_on_a_tape_whose_messages_are_the_goal_ids(tmp_path, capsys) -> None:
    rng = np.random.default_rng(5)
    goals = [int(g) for g in rng.integers(0, 3, 60)]
    ignored = [int(g) for g in rng.integers(0, 3, 60)]
    path = tmp_path / "h.tape"
    _hand_tape(path, goals, ignored, goals)
    assert main(["stats", str(path), "--json", "--quiet", "--permutations", "200"]) == 0
    doc = json.loads(capsys.readouterr().out)["summary"]["messages"]
    speaker = doc["speakers"][0]
    # I(message; goal) = H(goal) when the message is the goal (Cover & Thomas); H via scipy
    h_goal = scipy_entropy(np.bincount(goals), base=2)
    assert speaker["signalling"]["plug_in_bits"] == pytest.approx(h_goal, abs=1e-12)
    assert speaker["signalling"]["p_value"] < 0.01
    (pair,) = doc["pairs"]
    assert pair["listener"] == "r1" and pair["flag"] == "informative but ignored"
    assert pair["listening"]["p_value"] > 0.05
    assert doc["permutations"] == 200


def test_stats_text_names_the_ignored_pair_of_the_demo_tape(capsys) -> None:
    assert main(["stats", str(SCENES / "parking-level-ignored.tape"), "--quiet",
                 "--permutations", "200"]) == 0  # fmt: skip
    out = capsys.readouterr().out
    assert "scout says: carries its goal" in out
    assert out.count("informative but ignored") == 2
    assert main(["stats", str(SCENES / "parking-level-followed.tape"), "--quiet",
                 "--permutations", "200"]) == 0  # fmt: skip
    assert "informative but ignored" not in capsys.readouterr().out


def test_stats_permutations_zero_leaves_the_message_figures_out(capsys) -> None:
    tape = str(SCENES / "parking-level-ignored.tape")
    assert main(["stats", tape, "--json", "--quiet", "--permutations", "0"]) == 0
    assert json.loads(capsys.readouterr().out)["summary"]["messages"] is None


# -- the rollout's announcement options --------------------------------------------------
@pytest.fixture(scope="module")
def parking_rollout() -> Rollout:
    from arena_studio.core.scene.files import read_scene_file

    return Rollout(read_scene_file(PARKING))


def _index_of(sim: Rollout, vector: np.ndarray) -> int:
    return next(i for i, v in enumerate(sim.table.vectors) if np.array_equal(v, vector))


@pytest.mark.parametrize("index", range(4))
def test_a_clear_announcement_that_everyone_adopts(parking_rollout, index) -> None:
    sim = parking_rollout
    run = sim.episode(31, index, "independent", talk=MessageOptions(2, error=0.0, adopt=1.0))
    team = _index_of(sim, run.team_goal)
    assert run.messages == [{"from": "scout", "to": None, "step": None, "value": code_word(team)}]
    assert all(np.array_equal(g, run.team_goal) for g in run.pursued_goals)


def test_nobody_adopts_but_the_word_still_names_the_speakers_goal(parking_rollout) -> None:
    sim = parking_rollout
    talk = MessageOptions(2, error=0.0, adopt=0.0)
    runs = [sim.episode(32, i, "independent", talk=talk) for i in range(12)]
    for run in runs:
        assert run.messages[0]["value"] == code_word(_index_of(sim, run.pursued_goals[2]))
    differs = sum(not np.array_equal(r.pursued_goals[0], r.pursued_goals[2]) for r in runs)
    assert differs >= 6  # independent draws from the goal set rarely agree


def test_announcement_options_refuse_nonsense(parking_rollout) -> None:
    with pytest.raises(ValueError, match="error rate"):
        MessageOptions(0, error=1.5)
    with pytest.raises(ValueError, match="speaker 7"):
        parking_rollout.episode(1, 0, "independent", talk=MessageOptions(7))
    with pytest.raises(ValueError, match="greedy"):
        parking_rollout.episode(1, 0, "greedy", talk=MessageOptions(0))


def test_rollout_refuses_an_unknown_speaker_in_one_line(tmp_path, capsys) -> None:
    code = main(["rollout", str(PARKING), "-o", str(tmp_path / "x.tape"), "--announce",
                 "nobody", "--quiet"])  # fmt: skip
    err = capsys.readouterr().err.strip().splitlines()
    assert code == 2 and len(err) == 1 and "--announce 'nobody'" in err[0]


# -- per-tape figures for the runs mode ----------------------------------------------------
def test_per_tape_figures_show_listening_on_the_followed_tape_only() -> None:
    followed = tape_figures(str(SCENES / "parking-level-followed.tape")).figures
    ignored = tape_figures(str(SCENES / "parking-level-ignored.tape")).figures
    assert followed["adoption"] > 0.8 and ignored["adoption"] < 0.4
    assert followed["listening"] > ignored["listening"]
    assert followed["signalling:scout"] > 2 and ignored["signalling:scout"] > 2
    assert "adoption:scout->patrol-1" in followed
    assert "signalling" not in tape_figures(str(SCENES / "parking-level-shared.tape")).figures


# -- importers -----------------------------------------------------------------------------
def _episodes_csv(path) -> None:
    rows = ["episode,step,agent,x,y,heading"]
    for label in ("a", "b"):
        for step in range(2):
            rows += [f"{label},{step},r0,1,1,0", f"{label},{step},r1,2,1,0"]
    path.write_text("\n".join(rows) + "\n", encoding="utf-8")


def test_csv_import_takes_a_messages_file(tmp_path) -> None:
    from arena_studio.core.tape.importers import import_csv

    episodes, said, out = tmp_path / "e.csv", tmp_path / "m.csv", tmp_path / "o.tape"
    _episodes_csv(episodes)
    said.write_text(
        "episode,from,to,step,value\nb,r0,,,7\nb,r1,r0,1,1;2\na,r1,,,go left\n", encoding="utf-8"
    )
    assert import_csv(episodes, box_scene(), out, messages=said) == 2
    tape = open_tape(out)
    assert tape.episode(0).messages[1:] == (
        {"from": "r1", "to": None, "step": None, "value": "go left"},
    )
    assert tape.episode(1).messages[1:] == (
        {"from": "r0", "to": None, "step": None, "value": 7},
        {"from": "r1", "to": "r0", "step": 1, "value": [1, 2]},
    )


def test_a_bad_messages_row_names_file_line_and_field(tmp_path) -> None:
    from arena_studio.core.import_rows import ImportFormatError
    from arena_studio.core.tape.importers import import_csv

    episodes, said = tmp_path / "e.csv", tmp_path / "m.csv"
    _episodes_csv(episodes)
    said.write_text("episode,from,to,step,value\na,r0,,,1\na,r7,,,1\n", encoding="utf-8")
    with pytest.raises(ImportFormatError, match=r"m\.csv: line 3: message\.from: 'r7'"):
        import_csv(episodes, box_scene(), tmp_path / "o.tape", messages=said)


def test_npz_import_takes_a_messages_array(tmp_path) -> None:
    from arena_studio.core.tape.importers import import_npz

    src = tmp_path / "e.npz"
    np.savez(src, poses=np.zeros((2, 3, 2, 3)), messages=np.array([[4, -1], [-1, 5]]))
    assert import_npz(src, box_scene(), tmp_path / "o.tape") == 2
    tape = open_tape(tmp_path / "o.tape")
    assert list(tape.episode(0).messages) == [
        {"from": "r0", "to": None, "step": None, "value": 4}
    ]
    assert list(tape.episode(1).messages) == [
        {"from": "r1", "to": None, "step": None, "value": 5}
    ]


def test_readme_documents_the_structure_and_its_error_line_is_the_writers(tmp_path) -> None:
    from tests.conftest import REPO

    readme = (REPO / "README.md").read_text(encoding="utf-8")
    section = readme[readme.index("### Messages") : readme.index("`rollout` goal modes")]
    for key in ('"from"', '"to"', '"step"', '"value"'):
        assert key in section
    scene = box_scene()
    with TapeWriter(tmp_path / "run.tape", scene, dt=0.5, keep_partial=False) as w:
        for _ in range(4):
            w.begin_episode(team_goal=[1, 0, 0])
            w.steps(np.zeros((1, 2, 3)))
            w.end_episode()
        with pytest.raises(TapeError) as err:
            w.begin_episode(messages=[{"from": "rover-9", "to": None, "step": None, "value": 1}])
    shown = str(err.value).replace(str(tmp_path / "run.tape"), "run.tape")
    assert f"(`{shown}`)" in section.replace("\n", " ")


def test_alignment_and_success_split_by_adoption_match_a_count_by_hand() -> None:
    from arena_studio.core.analysis.metrics import episode_metrics

    tape = open_tape(SCENES / "parking-level-followed.tape")
    eps = list(tape)
    ids = [a.id for a in tape.scene.agents]
    lms = [lm.id for lm in tape.scene.landmarks]
    ms = [episode_metrics(tape.scene, ep) for ep in eps]
    report = message_report(eps, ids, lms, successes=[m.success for m in ms],
                            aligned=[m.aligned is True for m in ms], permutations=0,
                            resamples=0)  # fmt: skip
    pair = next(p for p in report.pairs if p.listener == "patrol-2")
    meaning = report.speakers[0].meaning
    # by hand: an episode "adopted" when patrol-2's goal is what the scout's word usually means
    took = [meaning[str(ep.messages[0]["value"])] == "+".join(
        lms[i] for i in np.flatnonzero(ep.pursued_goals[1])) for ep in eps]  # fmt: skip
    kept = [m for m, t in zip(ms, took, strict=True) if t]
    assert pair.adoption == pytest.approx(sum(took) / len(eps))
    assert pair.aligned_adopted == pytest.approx(np.mean([m.aligned is True for m in kept]))
    assert pair.success_adopted == pytest.approx(np.mean([m.success for m in kept]))


def test_runs_lists_the_message_figures_for_plotting() -> None:
    from arena_studio.core.runs.analysis import Run, metric_names

    fig = tape_figures(str(SCENES / "parking-level-ignored.tape"))
    names = metric_names([Run(None, fig)])  # type: ignore[arg-type]
    assert {"signalling", "listening", "adoption", "signalling:scout"} <= set(names)
