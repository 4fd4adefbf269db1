"""The replay canvas's clock: the same drawing as :func:`arena_studio.render.legend.paint_clock`
(clip export's clock), with its fonts, font metrics and colours made once per theme.

A new step is painted right after the trails, when the font caches are cold: building the two
fonts and their metrics again each frame cost about as much as drawing the text (~0.06 ms of a
1.5 ms frame budget). ``tests/app/test_replay_clock.py`` checks the pixels equal the shared
painter's, so a change to the shared clock shows up as a failing test, not as drift.
"""

from __future__ import annotations

from PySide6.QtCore import QPointF, QRectF, Qt
from PySide6.QtGui import QColor, QFont, QFontMetricsF, QPainter

from arena_studio.core.tape.episode import Episode
from arena_studio.render.drawing import font
from arena_studio.render.theme import Theme

LABEL_PAD = 2.0  # render.drawing.label's default padding around the text
CORNER = 3.0  # render.drawing.label's backdrop corner radius


class ClockOverlay:
    """Paints elapsed / total seconds and the step line, as the shared clock does."""

    def __init__(self) -> None:
        self._for: tuple[Theme, float] | None = None
        self._big: tuple[QFont, QFontMetricsF] | None = None
        self._small: tuple[QFont, QFontMetricsF] | None = None
        self._colors: tuple[QColor, QColor, QColor] | None = None

    def _prepare(self, theme: Theme, ui: float) -> None:
        if self._for is not None and self._for[0] is theme and self._for[1] == ui:
            return
        big, small = font(15 * ui, True), font(11 * ui)
        self._big = (big, QFontMetricsF(big))
        self._small = (small, QFontMetricsF(small))
        self._colors = (
            theme.qcolor("text"),
            theme.qcolor("text_muted"),
            theme.qcolor("background", alpha=0.85),
        )
        self._for = (theme, ui)

    def paint(
        self,
        painter: QPainter,
        rect: QRectF,
        episode: Episode,
        step: int,
        theme: Theme,
        ui: float,
        shared_steps: int | None = None,
    ) -> None:
        """``shared_steps``: a compare's shared timeline, read the same in both panes (the
        episode's own end then goes into the line below)."""
        self._prepare(theme, ui)
        assert self._big is not None and self._small is not None and self._colors is not None
        text_color, muted, backdrop = self._colors
        if shared_steps is not None:
            total = max(shared_steps - 1, 0)
            now = int(min(max(step, 0), total))
            text = f"{now * episode.dt:6.2f} s / {total * episode.dt:.2f} s"
            last = max(episode.steps - 1, 0)
            state = f"ended at {last * episode.dt:.2f} s" if now > last else f"step {now}"
            sub = f"episode {episode.index}  ·  {state}"
        else:
            step = int(min(max(step, 0), max(episode.steps - 1, 0)))
            text = f"{step * episode.dt:6.2f} s / {episode.duration:.2f} s"
            sub = f"step {step} of {max(episode.steps - 1, 0)}  ·  episode {episode.index}"
        box = _label(
            painter, text, QPointF(rect.x() + 10 * ui, rect.y() + 16 * ui), self._big, text_color,
            backdrop,
        )  # fmt: skip
        _label(
            painter, sub, QPointF(rect.x() + 10 * ui, box.bottom() + 9 * ui), self._small, muted,
            backdrop,
        )  # fmt: skip


def _label(
    painter: QPainter,
    text: str,
    anchor: QPointF,
    face: tuple[QFont, QFontMetricsF],
    color: QColor,
    backdrop: QColor,
) -> QRectF:
    """render.drawing.label for left-aligned text with a backdrop, metrics passed in."""
    qfont, metrics = face
    w = metrics.horizontalAdvance(text)
    h = metrics.height()
    x = anchor.x()
    pad = LABEL_PAD
    box = QRectF(x - pad, anchor.y() - h / 2 - pad, w + 2 * pad, h + 2 * pad)
    painter.setFont(qfont)
    painter.setPen(Qt.PenStyle.NoPen)
    painter.setBrush(backdrop)
    painter.drawRoundedRect(box, CORNER, CORNER)
    painter.setPen(color)
    painter.drawText(QPointF(x, anchor.y() - h / 2 + metrics.ascent()), text)
    return box
