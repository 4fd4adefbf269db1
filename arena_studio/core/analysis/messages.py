"""What agents told each other before an episode, and whether it carried and steered goals.

A tape episode's ``messages`` is a list of maps ``{"from": agent id, "to": agent id or nil
(everyone), "step": int or nil (before the episode), "value": int, short string or list of
ints}``. Entries without a ``value`` key are free notes from older tapes and are ignored here.

Two questions are kept apart, because a message can be informative and still be ignored
(Lowe, Foerster, Boureau, Pineau and Dauphin, "On the Pitfalls of Measuring Emergent
Communication", AAMAS 2019):

- signalling: I(message; speaker's pursued goal), does the message carry the speaker's goal;
- listening: I(message received; listener's pursued goal), does the listener's choice follow
  it, plus the share of episodes where the listener adopted the goal the message most often
  stands for.

Each figure comes with a permutation p-value and a bootstrap interval
(:func:`.information.estimate`).
"""

from __future__ import annotations

from collections import Counter
from collections.abc import Hashable, Mapping, Sequence
from dataclasses import asdict, dataclass
from typing import Any

import numpy as np

from arena_studio.core.analysis.information import (
    Estimate,
    context_independence,
    contingency,
    estimate,
)
from arena_studio.core.tape.episode import Episode
from arena_studio.core.tape.message_format import (
    MAX_LIST,
    MAX_TEXT,
    Message,
    parse_message,
    value_text,
)

#: a figure counts as shown when its permutation p-value is below this
SIGNIFICANCE = 0.05


def episode_messages(
    episode: Episode, agent_ids: Sequence[str], strict: bool = True
) -> list[Message]:
    """The structured messages of an episode (free notes skipped). ``strict=False`` skips a
    broken entry (a tape from another writer) instead of raising, so the damage stays in it."""
    out = []
    for i, raw in enumerate(episode.messages):
        try:
            msg = parse_message(raw, agent_ids, f"episode {episode.index} messages[{i}]")
        except ValueError:
            if strict:
                raise
            continue
        if msg is not None:
            out.append(msg)
    return out


# -- per-tape report ---------------------------------------------------------------------
@dataclass(frozen=True)
class SpeakerFigures:
    speaker: str
    episodes: int
    values: tuple[str, ...]  # rows of ``counts``
    goals: tuple[str, ...]  # columns of ``counts``
    counts: tuple[tuple[int, ...], ...]
    signalling: Estimate
    context_independence: float | None
    meaning: dict[str, str]  # value -> the speaker goal it most often came with


@dataclass(frozen=True)
class PairFigures:
    speaker: str
    listener: str
    episodes: int
    values: tuple[str, ...]
    goals: tuple[str, ...]  # the listener's goals
    counts: tuple[tuple[int, ...], ...]
    listening: Estimate
    adoption: float | None  # share of episodes where the listener took the message's meaning
    success_adopted: float | None
    success_not_adopted: float | None
    flag: str | None  # plain words: "informative but ignored", "followed but uninformative"
    aligned_adopted: float | None = None  # share of aligned episodes when it adopted
    aligned_not_adopted: float | None = None


@dataclass(frozen=True)
class MessageReport:
    speakers: tuple[SpeakerFigures, ...]
    pairs: tuple[PairFigures, ...]

    def to_dict(self) -> dict[str, Any]:
        return {
            "speakers": [_plain(asdict(s)) for s in self.speakers],
            "pairs": [_plain(asdict(p)) for p in self.pairs],
        }

    def meaning_of(self, speaker: str, value: Hashable) -> str | None:
        for s in self.speakers:
            if s.speaker == speaker:
                return s.meaning.get(value_text(value))
        return None


def _plain(d: dict[str, Any]) -> dict[str, Any]:
    return {k: (list(v) if isinstance(v, tuple) else v) for k, v in d.items()}


def goal_label(vector: np.ndarray | None, landmark_ids: Sequence[str]) -> str | None:
    if vector is None:
        return None
    targets = np.flatnonzero(np.asarray(vector))
    return "+".join(landmark_ids[int(i)] for i in targets) if len(targets) else None


def announcement(messages: Sequence[Message], speaker: str, listener: str | None) -> Message | None:
    """The speaker's first message before the episode that ``listener`` received (to it or to
    everyone); with ``listener`` None, the first one to anyone."""
    for m in messages:
        if (
            m.sender == speaker
            and m.step is None
            and (listener is None or m.receiver is None or m.receiver == listener)
        ):
            return m
    return None


def message_report(
    episodes: Sequence[Episode],
    agent_ids: Sequence[str],
    landmark_ids: Sequence[str],
    successes: Sequence[bool] | None = None,
    permutations: int = 1000,
    resamples: int = 1000,
    seed: int = 0,
    aligned: Sequence[bool] | None = None,
) -> MessageReport:
    """Signalling per speaker and listening per speaker-listener pair over a tape's episodes.

    ``aligned[i]`` (optional) is whether episode ``i``'s agents pursued one goal, for
    alignment conditioned on adoption. ``successes[i]`` (optional) is whether episode ``i``
    succeeded, for success conditioned on
    adoption. Episodes whose speaker (or listener) has no pursued goal are left out of that
    speaker's (pair's) figures.
    """
    parsed = [episode_messages(ep, agent_ids, strict=False) for ep in episodes]
    goals = [
        [goal_label(g, landmark_ids) for g in ep.pursued_goals] + [None] * len(agent_ids)
        for ep in episodes
    ]
    speakers = sorted(
        {m.sender for msgs in parsed for m in msgs if m.step is None}, key=list(agent_ids).index
    )
    speaker_figs, pair_figs = [], []
    for s_idx, speaker in enumerate(speakers):
        a = list(agent_ids).index(speaker)
        rows = [
            (value_text(m.value), goals[e][a])
            for e, msgs in enumerate(parsed)
            if (m := announcement(msgs, speaker, None)) is not None and goals[e][a] is not None
        ]
        if not rows:
            continue
        fig = _speaker_figures(speaker, rows, permutations, resamples, seed + s_idx)
        speaker_figs.append(fig)
        for listener in agent_ids:
            if listener == speaker:
                continue
            pair = _pair_figures(
                fig, listener, parsed, goals, list(agent_ids).index(listener),
                (successes, aligned), permutations, resamples, seed + 1000 * (s_idx + 1),
            )
            if pair is not None:
                pair_figs.append(pair)
    return MessageReport(tuple(speaker_figs), tuple(pair_figs))


def _speaker_figures(
    speaker: str, rows: list[tuple[str, Any]], permutations: int, resamples: int, seed: int
) -> SpeakerFigures:
    values, goals = [r[0] for r in rows], [r[1] for r in rows]
    table, value_labels, goal_labels = contingency(values, goals)
    meaning = {
        str(value_labels[i]): str(goal_labels[int(np.argmax(table[i]))])
        for i in range(len(value_labels))
    }
    return SpeakerFigures(
        speaker=speaker,
        episodes=len(rows),
        values=tuple(str(v) for v in value_labels),
        goals=tuple(str(g) for g in goal_labels),
        counts=tuple(tuple(int(c) for c in row) for row in table),
        signalling=estimate(values, goals, permutations, resamples, seed),
        context_independence=context_independence(table),
        meaning=meaning,
    )


def _pair_figures(
    speaker: SpeakerFigures,
    listener: str,
    parsed: list[list[Message]],
    goals: list[list[str | None]],
    l_idx: int,
    outcomes: tuple[Sequence[bool] | None, Sequence[bool] | None],
    permutations: int,
    resamples: int,
    seed: int,
) -> PairFigures | None:
    successes, aligned = outcomes
    values, chosen, adopted, success, align = [], [], [], [], []
    for e, msgs in enumerate(parsed):
        m = announcement(msgs, speaker.speaker, listener)
        goal = goals[e][l_idx]
        if m is None or goal is None:
            continue
        text = value_text(m.value)
        values.append(text)
        chosen.append(goal)
        adopted.append(speaker.meaning.get(text) == goal)
        if successes is not None:
            success.append(bool(successes[e]))
        if aligned is not None:
            align.append(bool(aligned[e]))
    if not values:
        return None
    table, value_labels, goal_labels = contingency(values, chosen)
    listening = estimate(values, chosen, permutations, resamples, seed)
    return PairFigures(
        speaker=speaker.speaker,
        listener=listener,
        episodes=len(values),
        values=tuple(str(v) for v in value_labels),
        goals=tuple(str(g) for g in goal_labels),
        counts=tuple(tuple(int(c) for c in row) for row in table),
        listening=listening,
        adoption=float(np.mean(adopted)),
        success_adopted=_rate(success, adopted, True),
        success_not_adopted=_rate(success, adopted, False),
        flag=_flag(speaker.signalling, listening),
        aligned_adopted=_rate(align, adopted, True),
        aligned_not_adopted=_rate(align, adopted, False),
    )


def _rate(success: list[bool], adopted: list[bool], which: bool) -> float | None:
    picked = [s for s, a in zip(success, adopted, strict=False) if a == which]
    return float(np.mean(picked)) if picked else None


def _flag(signalling: Estimate, listening: Estimate) -> str | None:
    informative = signalling.p_value < SIGNIFICANCE
    followed = listening.p_value < SIGNIFICANCE
    if informative and not followed:
        return "informative but ignored"
    if followed and not informative:
        return "followed but uninformative"
    return None


def explain_choice(
    report: MessageReport,
    episode: Episode,
    agent_ids: Sequence[str],
    landmark_ids: Sequence[str],
    name_of: Mapping[str, str] | None = None,
) -> list[str]:
    """Sentences for a misaligned episode: what each speaker announced and whether each
    listener followed it ("rover-2 announced 3; rover-1 chose A although 3 usually means B")."""
    names = dict(name_of or {})
    msgs = episode_messages(episode, agent_ids, strict=False)
    out = []
    for fig in report.speakers:
        said = announcement(msgs, fig.speaker, None)
        if said is None:
            continue
        meaning = fig.meaning.get(value_text(said.value))
        own = goal_label(_goal_of(episode, agent_ids, fig.speaker), landmark_ids)
        head = f"{names.get(fig.speaker, fig.speaker)} announced {value_text(said.value)}"
        if meaning is not None:
            head += f" (usually {_goal_words(meaning, names)})"
        if own is not None and meaning is not None and own != meaning:
            head += f" while pursuing {_goal_words(own, names)}"
        parts = [head]
        for listener in agent_ids:
            heard = announcement(msgs, fig.speaker, listener)
            if listener == fig.speaker or heard is None:
                continue
            chose = goal_label(_goal_of(episode, agent_ids, listener), landmark_ids)
            if chose is None or meaning is None:
                continue
            who = names.get(listener, listener)
            if chose == meaning:
                parts.append(f"{who} followed it")
            else:
                parts.append(
                    f"{who} chose {_goal_words(chose, names)} although "
                    f"{value_text(heard.value)} usually means {_goal_words(meaning, names)}"
                )
        out.append("; ".join(parts))
    return out


def _goal_of(episode: Episode, agent_ids: Sequence[str], agent: str) -> np.ndarray | None:
    a = list(agent_ids).index(agent)
    return episode.pursued_goals[a] if a < len(episode.pursued_goals) else None


def _goal_words(goal: str, names: Mapping[str, str]) -> str:
    return " + ".join(names.get(t, t) for t in goal.split("+"))


def value_counts(report: MessageReport) -> Counter[str]:
    """How often each value was said, over all speakers (for overviews)."""
    c: Counter[str] = Counter()
    for s in report.speakers:
        for value, row in zip(s.values, s.counts, strict=True):
            c[value] += sum(row)
    return c


__all__ = [
    "MAX_LIST",
    "MAX_TEXT",
    "SIGNIFICANCE",
    "Message",
    "MessageReport",
    "PairFigures",
    "SpeakerFigures",
    "announcement",
    "episode_messages",
    "explain_choice",
    "goal_label",
    "message_report",
    "parse_message",
    "value_counts",
    "value_text",
]
