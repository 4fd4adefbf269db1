"""Plots dock: distance to targets, reward so far and free channels over episode time.

pyqtgraph plots share one x axis in seconds. A vertical cursor follows the playback clock;
dragging it or clicking anywhere in a plot seeks the replay. Each distance curve is drawn in
its agent's identity colour, with a dashed reach-radius line so "reached" reads at a glance.

pyqtgraph takes ~0.2 s to import, so it is imported, and its widget made, with the first
episode shown (after the window's first paint), never when the panel is built.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

import numpy as np
from PySide6.QtCore import Qt, QTimer
from PySide6.QtGui import QShowEvent
from PySide6.QtWidgets import QLabel, QVBoxLayout, QWidget

from arena_studio.app.replay.prepared import PreparedEpisode
from arena_studio.app.replay.transport import PlaybackClock
from arena_studio.core.scene.model import Scene
from arena_studio.core.wording import LandmarkNames
from arena_studio.render.theme import Theme, load_theme

if TYPE_CHECKING:
    import pyqtgraph as pg

MAX_PLOT_POINTS = 4000  # long episodes are decimated for drawing (the data stay intact)


def decimate(t: np.ndarray, y: np.ndarray, limit: int = MAX_PLOT_POINTS):
    """Keep every k-th sample (and the last) so a curve has at most ``limit`` points."""
    n = len(t)
    if n <= limit:
        return t, y
    k = int(np.ceil(n / limit))
    idx = np.r_[np.arange(0, n, k), n - 1]
    return t[idx], y[idx]


class PlotsPanel(QWidget):
    """Stacked pyqtgraph plots linked to a :class:`PlaybackClock`."""

    def __init__(self, clock: PlaybackClock, theme: Theme | None = None, parent=None) -> None:
        super().__init__(parent)
        self._clock = clock
        self._theme = theme or load_theme("light")
        self._prepared: PreparedEpisode | None = None
        self._scene: Scene | None = None
        self._layout = QVBoxLayout(self)
        layout = self._layout
        layout.setContentsMargins(2, 2, 2, 2)
        #: pyqtgraph's GraphicsLayoutWidget, made by :meth:`_ensure_graphics` when needed
        self.graphics: Any = None
        self.empty_label = QLabel("Select an episode to see its plots.", self)
        self.empty_label.setAlignment(Qt.AlignmentFlag.AlignCenter)
        layout.addWidget(self.empty_label)
        self.plots: dict[str, pg.PlotItem] = {}
        self.cursors: dict[str, pg.InfiniteLine] = {}
        self.legends: list[pg.LegendItem] = []
        self._cursors_stale = False  # a step went by while the panel was hidden
        self._cursor_timer = QTimer(self)
        self._cursor_timer.setSingleShot(True)
        self._cursor_timer.setInterval(33)
        self._cursor_timer.timeout.connect(self._move_cursors)
        clock.stepChanged.connect(self._on_step)
        clock.playingChanged.connect(lambda playing: None if playing else self._move_cursors())
        self._apply_theme()

    # -- public ------------------------------------------------------------------------
    def set_theme(self, theme: Theme) -> None:
        self._theme = theme
        self._apply_theme()
        if self._prepared is not None and self._scene is not None:
            self.set_episode(self._scene, self._prepared)

    def set_episode(self, scene: Scene, prepared: PreparedEpisode | None) -> None:
        self._scene, self._prepared = scene, prepared
        if self.graphics is not None:
            self.graphics.clear()
        self.plots.clear()
        self.cursors.clear()
        self.legends.clear()
        self.empty_label.setVisible(prepared is None)
        if prepared is None:
            return
        import pyqtgraph as pg

        self._ensure_graphics()
        ep = prepared.episode
        t = np.arange(ep.steps) * ep.dt
        first: pg.PlotItem | None = None

        dist = self._add_plot("distance", "to target (m)", first)
        first = dist
        styles = (Qt.PenStyle.SolidLine, Qt.PenStyle.DashLine, Qt.PenStyle.DotLine)
        names = LandmarkNames.of(scene)
        for (agent, lm), d in sorted(prepared.distances.items()):
            name = f"{_agent_name(scene, agent)} → {names.name(scene.landmarks[lm].id)}"
            k = prepared.targets[agent].index(lm) if lm in prepared.targets[agent] else 0
            pen = pg.mkPen(self._theme.agent_color(agent), width=2, style=styles[k % 3])
            tt, dd = decimate(t, d)
            dist.plot(tt, dd, pen=pen, name=name)
        # team-goal targets nobody pursues still matter: the closest agent's distance to each
        for lm, d in sorted(team_target_gaps(scene, prepared).items()):
            landmark = scene.landmarks[lm]
            pen = pg.mkPen(
                self._theme.qcolor("target_highlight"), width=3, style=Qt.PenStyle.DashDotLine
            )
            tt, dd = decimate(t, d)
            dist.plot(tt, dd, pen=pen, name=f"nearest agent → {landmark.label} (team goal)")
        if prepared.reward_so_far is not None:
            team = ep.rewards is not None and np.ndim(ep.rewards) == 1
            rew = self._add_plot("reward", "team reward so far" if team else "reward so far", first)
            for a in range(1 if team else prepared.reward_so_far.shape[1]):
                tt, rr = decimate(t, prepared.reward_so_far[:, a])
                rew.plot(
                    tt,
                    rr,
                    pen=pg.mkPen(
                        self._theme.qcolor("text") if team else self._theme.agent_color(a), width=2
                    ),
                    name="team" if team else _agent_name(scene, a),
                )
        for name, values in sorted(ep.channels.items()):
            arr = np.asarray(values, dtype=np.float64)
            if arr.ndim > 2:  # (T, A, K) vectors such as observations: Python use only
                continue
            plot = self._add_plot(f"channel:{name}", name, first)
            if arr.ndim == 1:
                tt, vv = decimate(t[: len(arr)], arr)
                plot.plot(tt, vv, pen=pg.mkPen(self._theme.qcolor("text"), width=2))
            else:
                for a in range(arr.shape[1]):
                    tt, vv = decimate(t[: len(arr)], arr[:, a])
                    plot.plot(tt, vv, pen=pg.mkPen(self._theme.agent_color(a), width=2))
        for row, plot in enumerate(self.plots.values()):
            self._side_legend(plot, row)
        last = list(self.plots.values())[-1]
        last.setLabel("bottom", "time (s)")
        for plot in self.plots.values():
            plot.setXRange(0.0, max(ep.duration, ep.dt), padding=0.01)
        self._apply_theme()
        self._on_step(self._clock.step)

    # -- internals ---------------------------------------------------------------------
    def _ensure_graphics(self) -> Any:
        """pyqtgraph's plot area above the empty-panel line, made once."""
        if self.graphics is None:
            import pyqtgraph as pg

            self.graphics = pg.GraphicsLayoutWidget(self)
            self.graphics.setMinimumHeight(100)
            self._layout.insertWidget(0, self.graphics, 1)
            self._apply_theme()
        return self.graphics

    def _add_plot(self, key: str, title: str, link: pg.PlotItem | None) -> pg.PlotItem:
        import pyqtgraph as pg

        row = len(self.plots)
        plot = self.graphics.addPlot(row=row, col=0)
        plot.setLabel("left", title)
        plot.showGrid(x=True, y=True, alpha=0.25)
        plot.setMenuEnabled(False)
        plot.setMouseEnabled(x=True, y=False)
        if link is not None:
            plot.setXLink(link)
        cursor = pg.InfiniteLine(
            angle=90, movable=True, pen=pg.mkPen(self._theme.qcolor("selection"), width=2)
        )
        cursor.setZValue(10)
        cursor.sigDragged.connect(lambda line: self._seek_seconds(line.value()))
        plot.addItem(cursor, ignoreBounds=True)
        plot.scene().sigMouseClicked.connect(self._on_click)
        self.plots[key] = plot
        self.cursors[key] = cursor
        return plot

    def _side_legend(self, plot: pg.PlotItem, row: int) -> None:
        """A legend beside the plot (not over the curves), for the curves that have names."""
        named = [item for item in plot.listDataItems() if item.name()]
        if not named:
            return
        import pyqtgraph as pg

        legend = pg.LegendItem(
            labelTextSize="8pt",
            labelTextColor=self._theme.qcolor("text"),
            brush=None,
            pen=None,
            verSpacing=-6,
        )
        self.graphics.addItem(legend, row=row, col=1)
        for item in named:
            legend.addItem(item, item.name())
        self.legends.append(legend)

    def _seek_seconds(self, seconds: float) -> None:
        self._clock.pause()
        self._clock.seek_time(seconds)

    def _on_click(self, event) -> None:
        if event.button() != Qt.MouseButton.LeftButton:
            return
        pos = event.scenePos()
        for plot in self.plots.values():
            if plot.sceneBoundingRect().contains(pos):
                x = plot.vb.mapSceneToView(pos).x()
                self._seek_seconds(float(x))
                event.accept()
                return

    def _on_step(self, step: int) -> None:
        """Move the cursors; while playing at most ~30 times a second (plots are costly);
        while the panel is hidden (its tab not raised) not at all until it shows again."""
        if not self.isVisible():
            self._cursors_stale = True
            return
        if self._clock.playing:
            if not self._cursor_timer.isActive():
                self._cursor_timer.start()
            return
        self._move_cursors(step)

    def showEvent(self, event: QShowEvent) -> None:
        if self._cursors_stale:
            self._move_cursors()
        super().showEvent(event)

    def _move_cursors(self, step: int | None = None) -> None:
        self._cursors_stale = False
        step = self._clock.step if step is None else step
        t = step * self._clock.dt
        for cursor in self.cursors.values():
            cursor.blockSignals(True)
            cursor.setValue(t)
            cursor.blockSignals(False)

    def _apply_theme(self) -> None:
        if self.graphics is None:
            return
        self.graphics.setBackground(self._theme.qcolor("room_fill"))
        fg = self._theme.qcolor("text")
        for plot in self.plots.values():
            for axis in ("left", "bottom"):
                ax = plot.getAxis(axis)
                ax.setPen(fg)
                ax.setTextPen(fg)


def team_target_gaps(scene: Scene, prepared: PreparedEpisode) -> dict[int, np.ndarray]:
    """Team-goal targets no agent pursues -> (T,) distance of the nearest agent to each."""
    ep = prepared.episode
    if ep.team_goal is None:
        return {}
    pursued = {lm for ts in prepared.targets for lm in ts}
    out: dict[int, np.ndarray] = {}
    for lm in np.flatnonzero(np.asarray(ep.team_goal)):
        lm = int(lm)
        if lm in pursued or lm >= len(scene.landmarks):
            continue
        lx, ly = scene.landmarks[lm].position
        xy = np.asarray(ep.poses)[:, :, :2]
        out[lm] = np.hypot(xy[..., 0] - lx, xy[..., 1] - ly).min(axis=1)
    return out


def _agent_name(scene: Scene, agent: int) -> str:
    return scene.agents[agent].id if agent < len(scene.agents) else f"agent {agent}"
