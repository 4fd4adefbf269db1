"""The Messages panel: who said what to whom in the shown episode, and across the tape whether
the words carried the speaker's goal and whether the listeners followed them.

Top: the shown episode's messages, each with what its value most often meant across the tape
and what every listener then chose. Below: one card for each speaker (its goal x the value it
said: a clean diagonal means the word names the goal) and one for each speaker-listener pair
(the listener's goal x the value it heard: a diagonal means it followed), with the mutual
information, its interval, the chance level, the adoption share and the plain-word flag.
Figures come from :func:`arena_studio.core.analysis.messages.message_report`.
"""

from __future__ import annotations

import html
from typing import Any

from PySide6.QtCore import QRectF, QSize, Qt
from PySide6.QtGui import QColor, QPainter
from PySide6.QtWidgets import QLabel, QScrollArea, QSizePolicy, QVBoxLayout, QWidget

from arena_studio.app.replay.batch_view import _luminance, ramp
from arena_studio.core.analysis.information import Estimate
from arena_studio.core.analysis.messages import (
    MessageReport,
    PairFigures,
    SpeakerFigures,
    announcement,
    episode_messages,
    goal_label,
    value_text,
)
from arena_studio.core.scene.model import Scene
from arena_studio.core.wording import LandmarkNames
from arena_studio.render.paint_guard import guarded_paint_event
from arena_studio.render.theme import Theme

CELL = 17.0  # px per heat-map cell
HEAD_W = 150.0  # px for the goal names left of a heat map


def value_order(values: tuple[str, ...]) -> list[int]:
    """Column order: numbers by value, then text."""

    def key(i: int) -> tuple[int, float, str]:
        v = values[i]
        try:
            return (0, float(v), v)
        except ValueError:
            return (1, 0.0, v)

    return sorted(range(len(values)), key=key)


def goal_order(
    goals: tuple[str, ...], values: tuple[str, ...], meaning: dict[str, str]
) -> list[int]:
    """Row order: each goal at the place of the first value that means it, so a word that
    names its goal shows as a diagonal; goals no value means come last."""
    place = {}
    for rank, j in enumerate(value_order(values)):
        place.setdefault(meaning.get(values[j], ""), rank)
    return sorted(range(len(goals)), key=lambda i: (place.get(goals[i], 10**6), goals[i]))


class HeatMap(QWidget):
    """Counts of (goal row, value column) as shaded cells with the count written in."""

    def __init__(self, theme: Theme, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.theme = theme
        self.rows: list[str] = []
        self.cols: list[str] = []
        self.counts: list[list[int]] = []
        self.axis = ""
        self.setSizePolicy(QSizePolicy.Policy.Preferred, QSizePolicy.Policy.Fixed)

    def set_table(
        self,
        goals: tuple[str, ...],
        values: tuple[str, ...],
        counts: Any,
        meaning: dict[str, str],
        axis: str,
        names: LandmarkNames | None = None,
    ) -> None:
        """``counts[value][goal]`` as the report stores it (goals by landmark ids); drawn
        goals x values, the goals named by ``names``."""
        cols = value_order(values)
        rows = goal_order(goals, values, meaning)
        self.rows = [goals[i] if names is None else names.goal(goals[i]) for i in rows]
        self.cols = [values[j] for j in cols]
        self.counts = [[int(counts[j][i]) for j in cols] for i in rows]
        self.axis = axis
        self.setFixedHeight(int(CELL * (len(self.rows) + 2) + 8))
        self.updateGeometry()
        self.update()

    def head_width(self, fm: Any) -> float:
        """Room for the goal names: their longest, at most HEAD_W and 40% of the width."""
        text = max((fm.horizontalAdvance(g) for g in self.rows), default=0) + 10
        return float(max(min(text, HEAD_W, 0.4 * self.width()), 40.0))

    def cell_width(self, fm: Any, head: float) -> float:
        """Wide enough for the longest value (up to 4 cells), narrower only when space is short."""
        text = max((fm.horizontalAdvance(v) for v in self.cols), default=0) + 6
        want = min(max(CELL, text), 4 * CELL)
        room = (self.width() - head - 6) / max(len(self.cols), 1)
        return max(min(want, room), 9.0)

    def sizeHint(self) -> QSize:
        return QSize(int(HEAD_W + 1.5 * CELL * max(len(self.cols), 1) + 10), self.height())

    def set_theme(self, theme: Theme) -> None:
        self.theme = theme
        self.update()

    @guarded_paint_event("the message heat map")
    def paintEvent(self, _event) -> None:
        p = QPainter(self)
        t = self.theme
        p.fillRect(self.rect(), t.qcolor("room_fill"))
        top = max((max(r) for r in self.counts if r), default=0)
        font = p.font()
        font.setPointSizeF(max(font.pointSizeF() * 0.85, 7.0))
        p.setFont(font)
        fm = p.fontMetrics()
        head = self.head_width(fm)
        cw = self.cell_width(fm, head)
        p.setPen(t.qcolor("text_muted"))
        p.drawText(
            QRectF(4, 0, self.width() - 8, CELL),
            Qt.AlignmentFlag.AlignLeft,
            fm.elidedText(self.axis, Qt.TextElideMode.ElideRight, self.width() - 8),
        )
        for j, v in enumerate(self.cols):  # a value a little wider than its cell still shows
            p.drawText(
                QRectF(head + j * cw - 3, CELL, cw + 6, CELL),
                Qt.AlignmentFlag.AlignCenter,
                fm.elidedText(v, Qt.TextElideMode.ElideRight, int(cw + 6)),
            )
        for i, goal in enumerate(self.rows):
            y = CELL * (i + 2)
            p.setPen(t.qcolor("text"))
            p.drawText(
                QRectF(2, y, head - 6, CELL),
                Qt.AlignmentFlag.AlignRight | Qt.AlignmentFlag.AlignVCenter,
                fm.elidedText(goal, Qt.TextElideMode.ElideMiddle, int(head - 8)),
            )
            for j, n in enumerate(self.counts[i]):
                rect = QRectF(head + j * cw + 0.5, y + 0.5, cw - 1, CELL - 1)
                fill = ramp(t, n / top) if top and n else t.qcolor("room_fill").darker(104)
                p.fillRect(rect, fill)
                if n:
                    dark = _luminance(fill) > 0.4
                    p.setPen(QColor("#111111") if dark else QColor("#f4f4f4"))
                    p.drawText(rect, Qt.AlignmentFlag.AlignCenter, str(n))
        p.end()


def estimate_words(e: Estimate) -> str:
    return (
        f"<b>{e.bits:.2f} bits</b> (95% interval {e.low:.2f} to {e.high:.2f}; unrelated words "
        f"would give about {e.chance:.2f}; p = {e.p_value:.3f})"
    )


class MessagesPanel(QWidget):
    """The shown episode's messages and the tape's message figures (see module docstring)."""

    def __init__(self, theme: Theme, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.theme = theme
        self.report: MessageReport | None = None
        self.scene: Scene | None = None
        outer = QVBoxLayout(self)
        outer.setContentsMargins(0, 0, 0, 0)
        self.scroll = QScrollArea(self)
        self.scroll.setWidgetResizable(True)
        outer.addWidget(self.scroll)
        self.body = QWidget()
        self.layout_ = QVBoxLayout(self.body)
        self.layout_.setContentsMargins(8, 6, 8, 6)
        self.episode_label = self._label()
        self.tape_label = self._label()
        self.layout_.addWidget(self.episode_label)
        self.layout_.addWidget(self.tape_label)
        self.cards: list[tuple[QLabel, HeatMap]] = []
        self.layout_.addStretch(1)
        self.scroll.setWidget(self.body)
        self.episode_label.setText("No messages in this tape.")

    def _label(self) -> QLabel:
        label = QLabel(self.body)
        label.setWordWrap(True)
        label.setTextFormat(Qt.TextFormat.RichText)
        return label

    def sizeHint(self) -> QSize:
        return QSize(400, 600)

    def set_theme(self, theme: Theme) -> None:
        self.theme = theme
        for _label, heat in self.cards:
            heat.set_theme(theme)
        if self.report is not None and self.scene is not None:
            self.set_report(self.scene, self.report)

    # -- across the tape -----------------------------------------------------------------
    def set_report(self, scene: Scene | None, report: MessageReport | None) -> None:
        self.scene, self.report = scene, report
        for label, heat in self.cards:
            label.deleteLater()
            heat.deleteLater()
        self.cards = []
        if report is None or scene is None:
            self.tape_label.setText("")
            return
        self.tape_label.setText(
            "<h3>Across the tape</h3>" + self.glance(report) + "<p>In each map below a "
            "diagonal means: the word names the speaker's goal (first map), or the listener "
            "took the goal the word names (the others). Scattered counts: no such link.</p>"
        )
        at = self.layout_.count() - 1  # before the stretch
        for s in report.speakers:
            at = self._card(
                at,
                self._speaker_text(s),
                s.goals,
                s.values,
                s.counts,
                s.meaning,
                f"columns: what {s.speaker} said; rows: {s.speaker}'s own goal",
            )
            for pair in (p for p in report.pairs if p.speaker == s.speaker):
                at = self._card(
                    at,
                    self._pair_text(pair),
                    pair.goals,
                    pair.values,
                    pair.counts,
                    s.meaning,
                    f"columns: what {pair.listener} heard; rows: the goal it chose",
                )

    def glance(self, report: MessageReport) -> str:
        """One line per speaker and pair: the verdict in words, before any figure."""
        err = self.theme.hex("error")[:7]
        lines = []
        for sp in report.speakers:
            clear = sp.signalling.p_value < 0.05
            lines.append(
                f"{html.escape(sp.speaker)}'s word "
                + ("<b>names its goal</b>" if clear else "does not clearly name its goal")
            )
        for p in report.pairs:
            took = "-" if p.adoption is None else f"{p.adoption:.0%}"
            verdict = (
                f"<b style='color:{err}'>{html.escape(p.flag)}</b>"
                if p.flag
                else ("follows it" if p.listening.p_value < 0.05 else "shows no link")
            )
            lines.append(f"{html.escape(p.listener)} {verdict} (took the announced goal {took})")
        return "<p>" + "<br>".join(lines) + "</p>"

    def _card(self, at: int, text: str, goals, values, counts, meaning, axis: str) -> int:
        label = self._label()
        label.setText(text)
        heat = HeatMap(self.theme, self.body)
        names = None if self.scene is None else LandmarkNames.of(self.scene)
        heat.set_table(goals, values, counts, meaning, axis, names)
        self.layout_.insertWidget(at, label)
        self.layout_.insertWidget(at + 1, heat)
        self.cards.append((label, heat))
        return at + 2

    def _speaker_text(self, s: SpeakerFigures) -> str:
        e = s.signalling
        share = "" if e.normalised is None else f", {e.normalised:.0%} of its goal's uncertainty"
        clear = "carries" if e.p_value < 0.05 else "does not clearly carry"
        ci = (
            ""
            if s.context_independence is None
            else (f" Context independence {s.context_independence:.2f}.")
        )
        return (
            f"<p><b>{html.escape(s.speaker)}'s announcement {clear} its goal</b>: "
            f"{estimate_words(e)}{share}; {s.episodes} episodes.{ci}</p>"
        )

    def _pair_text(self, p: PairFigures) -> str:
        err = self.theme.hex("error")[:7]
        flag = f" <b style='color:{err}'>{html.escape(p.flag.capitalize())}.</b>" if p.flag else ""
        adopted = "-" if p.adoption is None else f"{p.adoption:.0%}"
        rates = ""
        if p.success_adopted is not None or p.success_not_adopted is not None:
            rates = (
                f" When it did: aligned {_pct(p.aligned_adopted)}, success "
                f"{_pct(p.success_adopted)}; when it did not: aligned "
                f"{_pct(p.aligned_not_adopted)}, success {_pct(p.success_not_adopted)}."
            )
        return (
            f"<p><b>{html.escape(p.listener)} listening to {html.escape(p.speaker)}</b>:"
            f"{flag} It took the announced goal in <b>{adopted}</b> of {p.episodes} "
            f"episodes.{rates} Its choice follows the word: {estimate_words(p.listening)}.</p>"
        )

    # -- the shown episode ---------------------------------------------------------------
    def set_episode(self, scene: Scene, episode: Any) -> None:
        self.scene = scene
        self.episode_label.setText(self.episode_text(scene, episode))

    def episode_text(self, scene: Scene, episode: Any) -> str:
        names = LandmarkNames.of(scene)
        ids = [a.id for a in scene.agents]
        lms = [lm.id for lm in scene.landmarks]
        msgs = episode_messages(episode, ids, strict=False)
        head = f"<h3>Episode {episode.index}</h3>"
        if not msgs:
            return head + "<p>No messages in this episode.</p>"
        rows = []
        for m in msgs:
            to = "everyone" if m.receiver is None else m.receiver
            when = "before the episode" if m.step is None else f"at step {m.step}"
            usual = None if self.report is None else self.report.meaning_of(m.sender, m.value)
            means = (
                f" \u2014 across the tape it usually means <b>{html.escape(names.goal(usual))}</b>"
                if usual
                else ""
            )
            line = (
                f"<b>{html.escape(m.sender)}</b> to {html.escape(to)}, {when}: "
                f"<b>{html.escape(value_text(m.value))}</b>{means}."
            )
            if m.step is None and announcement(msgs, m.sender, None) is m:
                line += self._choices(episode, ids, lms, m, usual, names)
            rows.append(f"<li>{line}</li>")
        return head + "<ul style='margin-left:-20px'>" + "".join(rows) + "</ul>"

    def _choices(
        self,
        episode: Any,
        ids: list[str],
        lms: list[str],
        m: Any,
        usual: str | None,
        names: LandmarkNames,
    ) -> str:
        parts = []
        for a, agent in enumerate(ids):
            goal = episode.pursued_goals[a] if a < len(episode.pursued_goals) else None
            chose = goal_label(goal, lms)
            if chose is None or (m.receiver is not None and agent not in (m.receiver, m.sender)):
                continue
            mark = ""
            if usual is not None and agent != m.sender:
                mark = " (followed)" if chose == usual else " (<b>did not follow</b>)"
            who = "itself pursued" if agent == m.sender else "chose"
            parts.append(f"{html.escape(agent)} {who} {html.escape(names.goal(chose))}{mark}")
        return "<br>&nbsp;&nbsp;" + "; ".join(parts) if parts else ""


def _pct(value: float | None) -> str:
    return "-" if value is None else f"{value:.0%}"
