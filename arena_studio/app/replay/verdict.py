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

from PySide6.QtCore import QEvent, QObject, Qt, Signal
from PySide6.QtWidgets import QFrame, QLabel, QScrollArea, QWidget

from arena_studio.app.replay.prepared import PreparedEpisode
from arena_studio.core.analysis.diagnosis_words import diagnosis_words
from arena_studio.core.wording import LandmarkNames
from arena_studio.render.theme import Theme

#: longest outcome text shown (characters); a simulator may report a lot
OUTCOME_CHARS = 160
#: links in the line: jump to the diagnosis, show or hide the compared episode's details
LINK_DIAGNOSIS, LINK_COMPARED = "diag", "compared"


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
    return _verdict(p, theme, lead, step, link) + details(p, explain)


def details(p: PreparedEpisode, explain: Callable[[Any], list[str]] | None = None) -> str:
    """What follows the verdict: who went where, the messages, the simulator's report."""
    text = where_words(p)
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

    textSet = Signal()  # the text was replaced (its wrapped height may have changed)

    def __init__(self, theme: Theme, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.theme = theme
        self._state = "none"
        #: sentences about messages for a misaligned failure (set when a tape has them)
        self.explain: Callable[[Any], list[str]] | None = None
        #: the compared episode's who-went-where and report shown (else one line and a link)
        self.compared_details = False
        self._last: tuple[PreparedEpisode | None, PreparedEpisode | None, int] = (None, None, 0)
        self.setWordWrap(True)
        self.setTextFormat(Qt.TextFormat.RichText)
        self.setContentsMargins(10, 4, 10, 4)
        self._apply_style()

    def set_theme(self, theme: Theme) -> None:
        self.theme = theme
        self._apply_style()

    def setText(self, text: str) -> None:
        super().setText(text)
        self.textSet.emit()

    def show_episodes(
        self, shown: PreparedEpisode | None, compared: PreparedEpisode | None, step: int
    ) -> None:
        """The shown episode in full; the compared one in one line right under its verdict
        (read first when the line scrolls), its who-went-where and the simulator's report
        behind a link (``compared_details`` toggles them)."""
        self._last = (shown, compared, step)
        if shown is None:
            self.setText("")
            state = "none"
        else:
            text = _verdict(shown, self.theme, "Episode", step, True)
            if compared is not None:
                text += "<br>" + self._compared_words(compared, step)
            self.setText(text + details(shown, self.explain))
            m = shown.metrics
            state = "none" if m is None else ("ok" if getattr(m, "success", False) else "failed")
        if state != self._state:
            self._state = state
            self._apply_style()

    def _compared_words(self, compared: PreparedEpisode, step: int) -> str:
        ink = self.theme.hex("text")[:7]
        head = _verdict(compared, self.theme, "Compared: episode", step, False)
        if not self.compared_details:
            more = bool(where_words(compared) or outcome_words(compared.episode.outcome))
            link = f" &nbsp;<a href='{LINK_COMPARED}' style='color:{ink}'>who went where</a>"
            return head + (link if more else "")
        less = f" &nbsp;<a href='{LINK_COMPARED}' style='color:{ink}'>less</a>"
        return head + where_words(compared) + outcome_words(compared.episode.outcome) + less

    def toggle_compared_details(self) -> None:
        """Show or hide the compared episode's who-went-where and report."""
        self.compared_details = not self.compared_details
        self.show_episodes(*self._last)

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


class BoundedLine(QScrollArea):
    """Holds the verdict line at its text's height, up to ``max_lines`` lines; longer text
    scrolls inside, so a long explanation cannot squeeze the canvas above it."""

    def __init__(self, line: VerdictLine, max_lines: int = 4, parent: QWidget | None = None):
        super().__init__(parent)
        self.line = line
        self.max_lines = max_lines
        self.setWidget(line)
        self.setWidgetResizable(True)
        self.setFrameShape(QFrame.Shape.NoFrame)
        self.setHorizontalScrollBarPolicy(Qt.ScrollBarPolicy.ScrollBarAlwaysOff)
        line.installEventFilter(self)
        line.textSet.connect(self._fit)
        self._fit()

    def set_max_lines(self, lines: int) -> None:
        self.max_lines = max(1, lines)
        self._fit()

    def cap(self) -> int:
        """The most height the line may take (pixels)."""
        m = self.line.contentsMargins()
        lines = self.line.fontMetrics().lineSpacing() * self.max_lines
        return int(lines + m.top() + m.bottom() + 8)  # 8: the style sheet's padding, border

    def eventFilter(self, watched: QObject, event: QEvent) -> bool:
        if watched is self.line and event.type() in (QEvent.Type.Resize, QEvent.Type.Show):
            self._fit()
        return False

    def resizeEvent(self, event) -> None:
        super().resizeEvent(event)
        self._fit()

    def _fit(self) -> None:
        width = max(self.viewport().width(), 100)
        want = self.line.heightForWidth(width) if self.line.text() else 0
        self.setFixedHeight(min(max(want, 0), self.cap()))
