"""The message part of ``arena-studio stats``: signalling per speaker, listening per pair.

Figures come from :func:`arena_studio.core.analysis.messages.message_report` with seeded
permutations (``--permutations``, default 1,000) and as many bootstrap resamples.
"""

from __future__ import annotations

import argparse
from collections.abc import Callable, Sequence
from typing import Any, TextIO

from arena_studio.commands.arg_types import number
from arena_studio.core import limits as lim

DEFAULT_PERMUTATIONS = 1000


def add_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument(
        "--permutations",
        type=number(lim.PERMUTATIONS),
        default=DEFAULT_PERMUTATIONS,
        metavar="N",
        help="message figures: shuffles for the p-values and resamples for the intervals "
        f"(default {DEFAULT_PERMUTATIONS}; 0 skips the message figures)",
    )


def message_figures(
    tape: Any,
    metrics: Sequence[Any],
    permutations: int,
    advance: Callable[[int], None] | None = None,
) -> dict[str, Any] | None:
    """The report as plain data over the measured episodes, None when no episode has
    structured messages (or ``permutations`` is 0). ``advance(1)`` after each episode read."""
    from arena_studio.core.analysis.messages import message_report

    if permutations <= 0:
        return None
    episodes = []
    for m in metrics:
        episodes.append(tape.episode(m.index))
        if advance is not None:
            advance(1)
    if not any("value" in raw for ep in episodes for raw in ep.messages if isinstance(raw, dict)):
        return None
    report = message_report(
        episodes,
        [a.id for a in tape.scene.agents],
        [lm.id for lm in tape.scene.landmarks],
        successes=[bool(m.success) for m in metrics],
        aligned=[bool(m.aligned) for m in metrics],
        permutations=permutations,
        resamples=permutations,
        seed=0,
    )
    if not report.speakers:
        return None
    doc = report.to_dict()
    doc["permutations"] = permutations
    return doc


def _mi(est: dict[str, Any]) -> str:
    return (
        f"{est['bits']:.2f} bits [{est['low']:.2f}, {est['high']:.2f}], "
        f"chance {est['chance']:.2f}, p={est['p_value']:.3f}"
    )


def _pct(value: float | None) -> str:
    return "-" if value is None else f"{100 * value:.0f}%"


def print_messages(doc: dict[str, Any], out: TextIO) -> None:
    """Plain text: one line per speaker (does the message carry its goal) and per pair (does
    the listener follow it)."""
    out.write("  messages (before the episode):\n")
    for s in doc["speakers"]:
        ci = s["context_independence"]
        ci_text = "-" if ci is None else f"{ci:.2f}"
        out.write(
            f"    {s['speaker']} says: carries its goal {_mi(s['signalling'])}; "
            f"{len(s['values'])} values over {s['episodes']} episodes, "
            f"context independence {ci_text}\n"
        )
    for p in doc["pairs"]:
        flag = f"  -> {p['flag']}" if p["flag"] else ""
        out.write(
            f"    {p['speaker']} -> {p['listener']}: choice follows {_mi(p['listening'])}; "
            f"adopted {_pct(p['adoption'])}; when adopted: aligned {_pct(p['aligned_adopted'])}"
            f", success {_pct(p['success_adopted'])}; otherwise: aligned "
            f"{_pct(p['aligned_not_adopted'])}, success {_pct(p['success_not_adopted'])}{flag}\n"
        )
