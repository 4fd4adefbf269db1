"""The line under the replay canvas that says how the shown episode went.

A success names the goal and the time taken; a failure names what went wrong and when (the
metrics' diagnosis), with a link to jump there, then what the simulator itself reported (the
tape's ``outcome``), on a band tinted with the theme's error
colour so a newcomer sees at once that this episode is one to look into.
"""

from __future__ import annotations

import html
import json
from collections.abc import Callable
from typing import Any

from PySide6.QtCore import Qt
from PySide6.QtWidgets import QLabel, QWidget

from arena_studio.app.replay.prepared import PreparedEpisode
from arena_studio.core.analysis.diagnosis_words import diagnosis_words
from arena_studio.core.wording import LandmarkNames
from arena_studio.render.theme import Theme

#: longest outcome text shown (characters); a simulator may report a lot
OUTCOME_CHARS = 160


def outcome_words(outcome: Any) -> str:
    """The simulator's own outcome (the tape's end record) as escaped rich text, or ""."""
    if not outcome:
        return ""
    parts = [f"{k} {json.dumps(v, default=str)}" for k, v in outcome.items()]
    text = ", ".join(parts)
    if len(text) > OUTCOME_CHARS:
        text = text[: OUTCOME_CHARS - 1] + "\u2026"
    return f" <i>Simulator reported: {html.escape(text)}.</i>"


def describe(
    p: PreparedEpisode,
    theme: Theme,
    lead: str,
    step: int,
    link: bool,
    explain: Callable[[Any], list[str]] | None = None,
) -> str:
    """Rich text for one episode; ``link`` adds "go there" until ``step`` reaches it. The
    simulator's reported outcome, when the tape has one, follows. A misaligned failure gets
    ``explain(episode)``'s sentences (what was announced and who followed it)."""
    text = _verdict(p, theme, lead, step, link) + where_words(p)
    if explain is not None and getattr(p.metrics, "diagnosis_code", None) == "misaligned":
        said = explain(p.episode)
        if said:
            text += "<br>Messages: " + html.escape("; ".join(said)) + "."
    return text + outcome_words(p.episode.outcome)


def where_words(p: PreparedEpisode) -> str:
    """Who went where (core.analysis.who_went_where), as escaped rich text, or ""."""
    text = p.extra.get("who_went_where", "")
    return f"<br>Who went where: {html.escape(text)}." if text else ""


def _verdict(p: PreparedEpisode, theme: Theme, lead: str, step: int, link: bool) -> str:
    m, ep = p.metrics, p.episode
    if m is None:
        return f"{lead} {ep.index}: {ep.steps} steps, {ep.duration:.1f} s."
    err = theme.hex("error")[:7]
    names = p.extra.get("names") or LandmarkNames(())
    goal = names.goal(getattr(m, "goal_key", None))
    if getattr(m, "success", False):
        t = getattr(m, "time_to_success", None)
        ratio = getattr(m, "par_ratio", None)
        extra = f" (par time / time taken = {ratio:.2f})" if ratio else ""
        took = "" if t is None else f" in {t:.1f} s"
        return f"{lead} {ep.index} <b>succeeded</b> at goal {html.escape(goal)}{took}{extra}."
    diag = diagnosis_words(getattr(m, "diagnosis", None), names, getattr(m, "diagnosis_code", None))
    dstep = getattr(m, "diagnosis_step", None)
    if not diag:
        return f"{lead} {ep.index} <b style='color:{err}'>failed</b> goal {html.escape(goal)}."
    when = "" if dstep is None else f" at {dstep * ep.dt:.1f} s"
    seen = dstep is not None and step >= dstep
    ink = theme.hex("text")[:7]  # the default link blue is unreadable on a dark red band
    go = (
        f" &nbsp;<a href='diag' style='color:{ink}; font-weight:bold'>go there (D)</a>"
        if link and not seen
        else ""
    )
    said = f"{html.escape(goal)}: {html.escape(diag)}"
    return f"{lead} {ep.index} <b style='color:{err}'>failed</b> goal {said}{when}.{go}"


class VerdictLine(QLabel):
    """Shows :func:`describe` for the episode (and the compared one); link -> ``on_link``."""

    def __init__(self, theme: Theme, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.theme = theme
        self._state = "none"
        #: sentences about messages for a misaligned failure (set when a tape has them)
        self.explain: Callable[[Any], list[str]] | None = None
        self.setWordWrap(True)
        self.setTextFormat(Qt.TextFormat.RichText)
        self.setContentsMargins(10, 4, 10, 4)
        self._apply_style()

    def set_theme(self, theme: Theme) -> None:
        self.theme = theme
        self._apply_style()

    def show_episodes(
        self, shown: PreparedEpisode | None, compared: PreparedEpisode | None, step: int
    ) -> None:
        if shown is None:
            self.setText("")
            state = "none"
        else:
            text = describe(shown, self.theme, "Episode", step, link=True, explain=self.explain)
            if compared is not None:
                text += "<br>" + describe(compared, self.theme, "Compared: episode", step, False)
            self.setText(text)
            m = shown.metrics
            state = "none" if m is None else ("ok" if getattr(m, "success", False) else "failed")
        if state != self._state:
            self._state = state
            self._apply_style()

    def _apply_style(self) -> None:
        """A failed episode's line gets a tinted band and a bar in the error colour."""
        t = self.theme
        back = t.qcolor("room_fill")
        bar = t.hex("grid_major")[:7]
        if self._state == "failed":
            err = t.qcolor("error")
            mix = 0.14
            back.setRgbF(
                back.redF() * (1 - mix) + err.redF() * mix,
                back.greenF() * (1 - mix) + err.greenF() * mix,
                back.blueF() * (1 - mix) + err.blueF() * mix,
            )
            bar = t.hex("error")[:7]
        self.setStyleSheet(
            f"QLabel {{ background: {back.name()}; color: {t.hex('text')[:7]};"
            f" border-left: 5px solid {bar}; border-top: 1px solid {t.hex('grid_major')[:7]};"
            " padding: 2px 6px; }"
        )
