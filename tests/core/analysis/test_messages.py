"""Message statistics on hand-built episodes whose answers follow from the definitions.

Sources: mutual information definitions (Cover & Thomas ch. 2, from memory) - a message equal
to the goal carries H(goal) bits, an independent one none; the signalling/listening split of
Lowe et al., "On the Pitfalls of Measuring Emergent Communication" (AAMAS 2019);
``scipy.stats.entropy`` as the reference for H(goal).
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy.stats import entropy as scipy_entropy

from arena_studio.core.analysis.messages import (
    episode_messages,
    explain_choice,
    message_report,
    parse_message,
)
from arena_studio.core.tape.episode import Episode

AGENTS = ("rover-1", "rover-2")
LANDMARKS = ("tank", "bench", "rack")


def onehot(i: int) -> np.ndarray:
    v = np.zeros(len(LANDMARKS), dtype=np.uint8)
    v[i] = 1
    return v


def episodes(speaker_goals, listener_goals, values) -> list[Episode]:
    out = []
    for i, (gs, gl, value) in enumerate(zip(speaker_goals, listener_goals, values, strict=True)):
        out.append(
            Episode(
                index=i,
                dt=0.1,
                poses=np.zeros((2, 2, 3)),
                pursued_goals=(onehot(gs), onehot(gl)),
                messages=({"from": "rover-1", "to": None, "step": None, "value": value},),
            )
        )
    return out


def h_bits(goals) -> float:
    return float(scipy_entropy(np.bincount(goals), base=2))


RNG = np.random.default_rng(7)
SPEAKER = RNG.integers(0, 3, 240).tolist()


def test_clear_and_followed_announcement() -> None:
    eps = episodes(SPEAKER, SPEAKER, SPEAKER)  # value = goal index, listener copies it
    rep = message_report(eps, AGENTS, LANDMARKS, permutations=200, resamples=100)
    (speaker,) = rep.speakers
    (pair,) = rep.pairs
    assert speaker.signalling.plug_in_bits == pytest.approx(h_bits(SPEAKER))
    assert pair.listening.plug_in_bits == pytest.approx(h_bits(SPEAKER))
    assert pair.adoption == 1.0 and pair.flag is None
    assert speaker.meaning == {"0": "tank", "1": "bench", "2": "rack"}
    assert speaker.context_independence == pytest.approx(1.0)


def test_informative_but_ignored() -> None:
    listener = RNG.integers(0, 3, 240).tolist()  # chooses on its own
    rep = message_report(episodes(SPEAKER, listener, SPEAKER), AGENTS, LANDMARKS,
                         permutations=200, resamples=100)
    (pair,) = rep.pairs
    assert rep.speakers[0].signalling.p_value < 0.01
    assert pair.listening.bits < 0.05 and pair.listening.p_value > 0.05
    assert pair.flag == "informative but ignored"


def test_uninformative_message() -> None:
    noise = RNG.integers(0, 3, 240).tolist()
    rep = message_report(episodes(SPEAKER, SPEAKER, noise), AGENTS, LANDMARKS,
                         permutations=200, resamples=100)
    assert rep.speakers[0].signalling.bits < 0.05
    assert rep.speakers[0].signalling.p_value > 0.05


def test_old_free_messages_are_ignored_not_fatal() -> None:
    ep = Episode(index=0, dt=0.1, poses=np.zeros((1, 2, 3)),
                 messages=({"from": "rover-1", "to": "all", "goal": "tank"}, "hello"))
    assert episode_messages(ep, AGENTS) == []
    assert message_report([ep], AGENTS, LANDMARKS).speakers == ()


@pytest.mark.parametrize(
    ("raw", "field"),
    [
        ({"from": "rover-9", "value": 1}, ".from"),
        ({"from": "rover-1", "to": "x", "value": 1}, ".to"),
        ({"from": "rover-1", "step": -1, "value": 1}, ".step"),
        ({"from": "rover-1", "value": 1.5}, ".value"),
        ({"from": "rover-1", "value": "x" * 65}, ".value"),
        ({"from": "rover-1", "value": 1, "colour": 2}, "colour"),
    ],
)
def test_bad_structured_message_names_its_field(raw, field) -> None:
    with pytest.raises(ValueError, match=field.replace(".", r"\.")):
        parse_message(raw, AGENTS, "episode 3 messages[0]")


def test_explanation_says_who_followed() -> None:
    eps = episodes(SPEAKER, SPEAKER, SPEAKER)
    rep = message_report(eps, AGENTS, LANDMARKS, permutations=20, resamples=20)
    g = SPEAKER[0]
    odd = episodes([g], [(g + 1) % 3], [g])[0]
    (line,) = explain_choice(rep, odd, AGENTS, LANDMARKS, {"tank": "Water tank"})
    assert line.startswith(f"rover-1 announced {g}")
    assert "rover-2 chose" in line and "although" in line
