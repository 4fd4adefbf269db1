"""Transport buttons, speed box, loop controls and the time/step read-out under the canvas.

The buttons trigger the same QActions as the keyboard shortcuts (see :mod:`.actions`), so a
button, a menu entry and a key can never disagree. Icons are small shapes drawn here in the
theme's text colour.
"""

from __future__ import annotations

from PySide6.QtCore import QPointF, QRectF, QSize, Qt
from PySide6.QtGui import QAction, QIcon, QPainter, QPainterPath, QPixmap
from PySide6.QtWidgets import QComboBox, QHBoxLayout, QLabel, QMenu, QToolButton, QWidget

from arena_studio.app.replay.transport import SPEEDS, PlaybackClock
from arena_studio.render.theme import Theme, load_theme

ICON_PX = 18


def _shape_icon(kind: str, theme: Theme) -> QIcon:
    """Simple transport glyphs of our own: bars and wedges on a transparent square."""
    pm = QPixmap(ICON_PX * 2, ICON_PX * 2)
    pm.fill(Qt.GlobalColor.transparent)
    p = QPainter(pm)
    p.setRenderHint(QPainter.RenderHint.Antialiasing)
    p.scale(2, 2)
    p.setPen(Qt.PenStyle.NoPen)
    p.setBrush(theme.qcolor("text"))
    s = ICON_PX

    def wedge(x0: float, x1: float) -> None:  # pointing from x0 to x1
        path = QPainterPath(QPointF(x0, s * 0.2))
        path.lineTo(x1, s * 0.5)
        path.lineTo(x0, s * 0.8)
        path.closeSubpath()
        p.drawPath(path)

    def bar(x: float, w: float = 2.4) -> None:
        p.drawRect(QRectF(x, s * 0.2, w, s * 0.6))

    if kind == "play":
        wedge(s * 0.28, s * 0.8)
    elif kind == "pause":
        bar(s * 0.28, 3.2)
        bar(s * 0.58, 3.2)
    elif kind == "step_fwd":
        wedge(s * 0.25, s * 0.65)
        bar(s * 0.68)
    elif kind == "step_back":
        wedge(s * 0.75, s * 0.35)
        bar(s * 0.2)
    elif kind == "home":
        bar(s * 0.18)
        wedge(s * 0.6, s * 0.3)
        wedge(s * 0.9, s * 0.6)
    elif kind == "end":
        wedge(s * 0.1, s * 0.4)
        wedge(s * 0.4, s * 0.7)
        bar(s * 0.72)
    elif kind in ("next_event", "prev_event"):  # a wedge towards a small pennant
        pole_x = s * 0.72 if kind == "next_event" else s * 0.22
        p.drawRect(QRectF(pole_x, s * 0.15, 1.6, s * 0.7))
        flag = QPainterPath(QPointF(pole_x + 1.6, s * 0.15))
        flag.lineTo(pole_x + 1.6 + s * 0.22, s * 0.27)
        flag.lineTo(pole_x + 1.6, s * 0.39)
        flag.closeSubpath()
        p.drawPath(flag)
        if kind == "next_event":
            wedge(s * 0.2, s * 0.6)
        else:
            wedge(s * 0.8, s * 0.4)
    p.end()
    return QIcon(pm)


def format_clock(step: int, steps: int, dt: float) -> str:
    """`` 12.30 / 40.00 s   step 123/400`` (steps counted from 0)."""
    return f"{step * dt:6.2f} / {max(steps - 1, 0) * dt:.2f} s   step {step}/{steps - 1}"


class TransportBar(QWidget):
    """Buttons for the transport actions, a speed box, loop buttons and a read-out."""

    def __init__(
        self,
        clock: PlaybackClock,
        actions: dict[str, QAction],
        theme: Theme | None = None,
        parent: QWidget | None = None,
    ) -> None:
        super().__init__(parent)
        self._clock = clock
        self._actions = actions
        self._theme = theme or load_theme("light")
        layout = QHBoxLayout(self)
        layout.setContentsMargins(6, 2, 6, 2)
        layout.setSpacing(2)
        self._buttons: dict[str, QToolButton] = {}
        for name in ("home", "prev_event", "step_back", "play", "step_fwd", "next_event", "end"):
            button = QToolButton(self)
            button.setDefaultAction(actions[name])
            button.setIconSize(QSize(ICON_PX, ICON_PX))
            button.setAutoRaise(True)
            button.setFocusPolicy(Qt.FocusPolicy.NoFocus)
            layout.addWidget(button)
            self._buttons[name] = button
        layout.addSpacing(10)
        layout.addWidget(QLabel("Speed", self))
        self.speed_box = QComboBox(self)
        self.speed_box.setFocusPolicy(Qt.FocusPolicy.NoFocus)
        for speed in SPEEDS:
            self.speed_box.addItem(f"{speed:g}x", speed)
        self.speed_box.setCurrentIndex(SPEEDS.index(1.0))
        self.speed_box.currentIndexChanged.connect(
            lambda i: clock.set_speed(float(self.speed_box.itemData(i)))
        )
        layout.addWidget(self.speed_box)
        layout.addSpacing(10)
        # One "Loop" button with the three loop actions keeps the bar narrow enough for a
        # 1280 px wide window with the episode list open.
        self.loop_button = QToolButton(self)
        self.loop_button.setText("Loop")
        self.loop_button.setToolTip("Loop a range: from here (L), to here (Shift+L), none (Alt+L)")
        self.loop_button.setFocusPolicy(Qt.FocusPolicy.NoFocus)
        self.loop_button.setToolButtonStyle(Qt.ToolButtonStyle.ToolButtonTextOnly)
        self.loop_button.setPopupMode(QToolButton.ToolButtonPopupMode.InstantPopup)
        loop_menu = QMenu(self.loop_button)
        for name in ("loop_start", "loop_end", "loop_clear"):
            loop_menu.addAction(actions[name])
        self.loop_button.setMenu(loop_menu)
        layout.addWidget(self.loop_button)
        clock.loopChanged.connect(self._on_loop)
        layout.addStretch(1)
        self.readout = QLabel(self)
        self.readout.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse)
        font = self.readout.font()
        font.setFamily("monospace")
        font.setStyleHint(font.StyleHint.Monospace)
        self.readout.setFont(font)
        layout.addWidget(self.readout)
        clock.stepChanged.connect(self._refresh)
        clock.lengthChanged.connect(self._refresh)
        clock.playingChanged.connect(self._on_playing)
        clock.speedChanged.connect(self._on_speed)
        self.set_theme(self._theme)
        self._refresh()

    def set_theme(self, theme: Theme) -> None:
        self._theme = theme
        for name, action in self._actions.items():
            if name in ("home", "prev_event", "step_back", "step_fwd", "next_event", "end"):
                action.setIcon(_shape_icon(name, theme))
        self._on_playing(self._clock.playing)

    def _refresh(self, *_: object) -> None:
        c = self._clock
        self.readout.setText(format_clock(c.step, c.steps, c.dt))

    def _on_playing(self, playing: bool) -> None:
        action = self._actions["play"]
        action.setIcon(_shape_icon("pause" if playing else "play", self._theme))
        action.setText("Pause" if playing else "Play")

    def _on_loop(self, loop: object) -> None:
        """The button says the range while a loop is set, so a loop is never a surprise."""
        if isinstance(loop, tuple) and self._clock.dt > 0:
            a, b = loop
            dt = self._clock.dt
            self.loop_button.setText(f"Loop {a * dt:.1f}–{b * dt:.1f} s")
        else:
            self.loop_button.setText("Loop")

    def _on_speed(self, speed: float) -> None:
        best = min(range(len(SPEEDS)), key=lambda i: abs(SPEEDS[i] - speed))
        self.speed_box.blockSignals(True)
        self.speed_box.setCurrentIndex(best)
        self.speed_box.blockSignals(False)
