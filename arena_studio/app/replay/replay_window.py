"""The replay mode: canvas, scrub bar and transport in the middle; episode list, plots and
the tape overview in docks. A QMainWindow so it can be a top-level window or the replay page
of the main window (a QMainWindow works as a child widget, docks and all).
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import replace
from pathlib import Path
from typing import Any

from PySide6.QtCore import QByteArray, QEventLoop, QSettings, Qt, QTimer, Signal
from PySide6.QtGui import QAction, QKeySequence
from PySide6.QtWidgets import (
    QDockWidget,
    QFileDialog,
    QMainWindow,
    QMessageBox,
    QSplitter,
    QVBoxLayout,
    QWidget,
)

from arena_studio.app.replay.actions import build_actions
from arena_studio.app.replay.batch_stats import batch_stats
from arena_studio.app.replay.batch_view import BatchPanel
from arena_studio.app.replay.episode_list import EpisodeListPanel
from arena_studio.app.replay.follow import RecordingLine, TapeFollowing, is_growing, open_growing
from arena_studio.app.replay.messages_panel import MessagesPanel
from arena_studio.app.replay.plots import PlotsPanel
from arena_studio.app.replay.prepared import PreparedEpisode
from arena_studio.app.replay.replay_canvas import ReplayCanvas
from arena_studio.app.replay.session import ReplaySession
from arena_studio.app.replay.summary import damaged_summary
from arena_studio.app.replay.timeline import TimelineBar
from arena_studio.app.replay.transport import PlaybackClock
from arena_studio.app.replay.transport_bar import TransportBar
from arena_studio.app.replay.verdict import LINK_COMPARED, BoundedLine, VerdictLine
from arena_studio.app.replay.view_toolbar import COMPARE_MODES, ViewToolbar
from arena_studio.core.scene.model import Scene
from arena_studio.core.tape.damage import Damage
from arena_studio.core.tape.episode_scene import episode_scene
from arena_studio.render.theme import Theme, load_theme

#: replay pages shorter than this (a 1280x800 screen) get a smaller Plots dock and a
#: shorter explanation line, so the canvas keeps the height it needs
SMALL_WINDOW_H = 820
#: a bottom tab this much taller or shorter than asked for was resized by the user
USER_RESIZE_PX = 40
#: narrower windows take the Messages dock as a bottom tab: beside the canvas it left the
#: scene a few pixels a metre and squeezed the episode list at 1280x800
NARROW_WINDOW_W = 1600


class ReplayWindow(QMainWindow):
    """Everything the replay viewer shows for one open tape."""

    openSceneInEditor = Signal(object)  # Scene: an editable copy for the layout editor
    statusMessage = Signal(str)

    def __init__(
        self,
        theme: Theme | str = "light",
        parent: QWidget | None = None,
        now: Callable[[], float] | None = None,
    ) -> None:
        """``now``: seconds for the playback clock (default: a monotonic wall clock; tests
        pass one they move themselves)."""
        super().__init__(parent)
        self.setObjectName("replayWindow")
        self.theme = load_theme(theme) if isinstance(theme, str) else theme
        self.session: ReplaySession | None = None
        self.prepared: PreparedEpisode | None = None
        self.last_load_error: str | None = None  # the last background load failure
        #: the damaged episode shown instead of an episode (the last selection was damaged)
        self.shown_damage: Damage | None = None
        self.compare: PreparedEpisode | None = None
        self.compare_mode = "off"
        self._pending_index: int | None = None
        self._pending_step: int | None = None
        self._first_episode = True
        self.scene_checks_done: set[tuple[str, str, str]] = set()
        #: how warnings reach the user (tests replace it to read the text)
        self.warn: Callable[[str, str], object] = lambda title, text: QMessageBox.warning(
            self, title, text
        )
        self.clock = PlaybackClock(self, now=now)
        self.replay_actions = build_actions(self.clock, self)
        for action in self.replay_actions.values():
            self.addAction(action)
        self._build_central()
        self._build_docks()
        self._build_toolbar()
        self._build_extra_actions()
        self.clock.stepChanged.connect(self._on_step)
        self.setWindowTitle("Replay")
        self.set_actions_enabled(False)

    # -- layout ------------------------------------------------------------------------
    def _build_central(self) -> None:
        central = QWidget(self)
        layout = QVBoxLayout(central)
        layout.setContentsMargins(0, 0, 0, 0)
        layout.setSpacing(0)
        self.recording_line = RecordingLine(self.theme, central)
        layout.addWidget(self.recording_line)
        self.following: TapeFollowing | None = None
        self.split = QSplitter(Qt.Orientation.Horizontal, central)
        self.canvas = ReplayCanvas(self.theme, self.split)
        self.canvas_b = ReplayCanvas(self.theme, self.split)
        self.canvas_b.setVisible(False)
        for c in (self.canvas, self.canvas_b):
            c.agentClicked.connect(self.focus_agent)
        self.split.addWidget(self.canvas)
        self.split.addWidget(self.canvas_b)
        layout.addWidget(self.split, 1)
        self.verdict = VerdictLine(self.theme, central)
        self.verdict.linkActivated.connect(self._on_verdict_link)
        self.verdict_box = BoundedLine(self.verdict, parent=central)
        layout.addWidget(self.verdict_box)
        self.timeline = TimelineBar(self.clock, self.theme, central)
        layout.addWidget(self.timeline)
        self.transport = TransportBar(self.clock, self.replay_actions, self.theme, central)
        layout.addWidget(self.transport)
        self.setCentralWidget(central)

    def _build_docks(self) -> None:
        self.episode_list = EpisodeListPanel(self)
        self.episode_list.episodeActivated.connect(self.select_episode)
        self.dock_episodes = self._dock(
            "Episodes", self.episode_list, Qt.DockWidgetArea.LeftDockWidgetArea
        )
        self.episode_list.setMinimumWidth(240)
        self.episode_list.set_theme(self.theme)
        self.plots = PlotsPanel(self.clock, self.theme, self)
        self.dock_plots = self._dock("Plots", self.plots, Qt.DockWidgetArea.BottomDockWidgetArea)
        self.batch = BatchPanel(self.theme, self)
        self.batch.goalClicked.connect(self._on_goal_clicked)
        self.dock_batch = self._dock(
            "Tape overview", self.batch, Qt.DockWidgetArea.BottomDockWidgetArea
        )
        self.tabifyDockWidget(self.dock_plots, self.dock_batch)
        self.messages = MessagesPanel(self.theme, self)
        self.dock_messages = self._dock(
            "Messages", self.messages, Qt.DockWidgetArea.RightDockWidgetArea
        )
        self.dock_messages.setVisible(False)  # shown when the tape has structured messages
        self._messages_placed = False
        self.dock_plots.raise_()
        self.setCorner(Qt.Corner.BottomLeftCorner, Qt.DockWidgetArea.LeftDockWidgetArea)
        self._docks_sized = False
        #: the bottom tabs' own heights: the plots are read beside the canvas, the overview
        #: needs more lines (a small window gives each its own; a resize is remembered)
        self.tab_heights: dict[QDockWidget, int] = {}
        for dock in (self.dock_plots, self.dock_batch, self.dock_messages):
            dock.visibilityChanged.connect(lambda shown, d=dock: self._on_tab_shown(d, shown))

    def showEvent(self, event) -> None:
        super().showEvent(event)
        if not self._docks_sized:  # give the canvas most of the room on first show
            self._docks_sized = True
            QTimer.singleShot(0, self._size_docks)

    def _size_docks(self) -> None:
        if not self.isVisible():  # hidden again before this ran (e.g. at start-up): next show
            self._docks_sized = False
            return
        h, w = self.height(), self.width()
        small = h < SMALL_WINDOW_H  # a 1280x800 screen: the canvas needs every line
        self.verdict_box.set_max_lines(5 if small else 7)
        plots = max(int(h * 0.21), 150) if small else max(int(h * 0.27), 170)
        self.resizeDocks([self.dock_plots, self.dock_batch], [plots] * 2, Qt.Orientation.Vertical)
        # the overview's goal grid needs a line per landmark: more room when it is raised
        self.tab_heights = {self.dock_plots: plots, self.dock_batch: max(plots, int(h * 0.33))}
        if self.dockWidgetArea(self.dock_messages) == Qt.DockWidgetArea.BottomDockWidgetArea:
            self.tab_heights[self.dock_messages] = self.tab_heights[self.dock_batch]
        # the list's own width (every column whole); a wide window gives the goals more
        wanted = self.episode_list.preferred_width()
        width = min(max(wanted, int(w * 0.3)), 560)
        self.resizeDocks([self.dock_episodes], [width], Qt.Orientation.Horizontal)
        self.fit_views()

    def _on_tab_shown(self, dock: QDockWidget, shown: bool) -> None:
        """A bottom tab was raised (or left): keep each tab's height apart."""
        if not self._docks_sized or dock.isFloating():
            return
        want = self.tab_heights.get(dock)
        if want is None:
            return
        if not shown:  # a height far from the one asked for is the user's: keep it
            if dock.height() > 0 and abs(dock.height() - want) > USER_RESIZE_PX:
                self.tab_heights[dock] = dock.height()
            return
        if abs(want - dock.height()) > USER_RESIZE_PX // 2:
            QTimer.singleShot(0, lambda: self.resizeDocks([dock], [want], Qt.Orientation.Vertical))

    def _place_messages_dock(self) -> None:
        """The first time a tape has messages: a bottom tab beside Plots on a narrow window
        (the Plots stay in front), the right side on a wide one."""
        self._messages_placed = True
        if self.width() >= NARROW_WINDOW_W or self.dock_messages.isFloating():
            return
        self.tabifyDockWidget(self.dock_plots, self.dock_messages)
        overview = self.tab_heights.get(self.dock_batch)
        if overview is not None:
            self.tab_heights[self.dock_messages] = overview
        self.dock_plots.raise_()

    def _dock(self, title: str, widget: QWidget, area: Qt.DockWidgetArea) -> QDockWidget:
        dock = QDockWidget(title, self)
        dock.setObjectName(f"replay.{title.lower().replace(' ', '_')}")
        dock.setWidget(widget)
        self.addDockWidget(area, dock)
        return dock

    def _build_toolbar(self) -> None:
        bar = ViewToolbar(self)
        self.addToolBar(Qt.ToolBarArea.TopToolBarArea, bar)
        bar.optionsChanged.connect(self._apply_options)
        bar.compareModeChanged.connect(self.set_compare_mode)
        self.view_toolbar = bar

    def _build_extra_actions(self) -> None:
        def action(title: str, shortcut: str | None, slot: Callable[[], Any]) -> QAction:
            a = QAction(title, self)
            if shortcut:
                a.setShortcut(QKeySequence(shortcut))
            a.triggered.connect(lambda _c=False: slot())
            self.addAction(a)
            return a

        self.action_diagnosis = action("Go to diagnosis", "D", self.go_to_diagnosis)
        self.action_compare = action(
            "Compare with selected episode", "C", self.compare_with_selected
        )
        self.action_compare_best = action(
            "Compare with best success of the same goal", "Shift+C", self.compare_with_best_success
        )
        self.action_scene_copy = action("Open scene in editor", None, self.open_scene_copy)
        self.action_check_scene = action(
            "Check a scene file against this tape…", None, self.check_scene_file_dialog
        )
        self.action_fit = action("Fit scene", "F", self.fit_views)

    def replay_menu_actions(self) -> list[QAction | None]:
        """Actions for the main window's Replay menu (None = separator)."""
        a = self.replay_actions
        return [
            a["play"],
            a["step_back"],
            a["step_fwd"],
            a["jump_back"],
            a["jump_fwd"],
            a["home"],
            a["end"],
            None,
            a["prev_event"],
            a["next_event"],
            self.action_diagnosis,
            None,
            a["slower"],
            a["faster"],
            a["loop_start"],
            a["loop_end"],
            a["loop_clear"],
            None,
            self.action_compare,
            self.action_compare_best,
            self.action_fit,
            None,
            self.action_scene_copy,
            self.action_check_scene,
        ]

    def set_actions_enabled(self, enabled: bool) -> None:
        for a in self.replay_actions.values():
            a.setEnabled(enabled)
        for a in (
            self.action_diagnosis,
            self.action_compare,
            self.action_compare_best,
            self.action_scene_copy,
            self.action_check_scene,
        ):
            a.setEnabled(enabled)

    # -- opening -----------------------------------------------------------------------
    def open_tape(self, path: str | Path, tape: Any = None) -> None:
        """Open a tape (errors raise :class:`TapeError` with a clear message)."""
        from arena_studio.core.tape import open_tape

        if tape is None:
            tape = open_growing(path) if is_growing(path) else open_tape(path)
        self.close_tape()
        self._first_episode = True
        self.session = ReplaySession(tape, self)
        s = self.session
        s.rowsReady.connect(self._on_rows)
        s.progress.connect(self.episode_list.set_progress)
        s.summariesDone.connect(self._on_summaries_done)
        s.occupancyReady.connect(lambda occ: self.batch.set_occupancy(s.scene, occ))
        s.episodeReady.connect(self._on_episode_ready)
        s.compareReady.connect(self._on_compare_ready)
        s.failed.connect(self._on_failed)
        s.messagesReady.connect(self._on_messages)
        self.canvas.show_scene(s.scene)
        self.canvas_b.show_scene(s.scene)
        self.canvas.fit_scene()
        self.episode_list.model.reset_placeholders(len(tape))
        self.episode_list.set_progress(0, len(tape))
        self.batch.set_occupancy(s.scene, None)
        self.setWindowTitle(f"{Path(path).name} (replay)")
        self.set_actions_enabled(True)
        notes = [getattr(tape, "scene_hash_warning", None)]
        if getattr(tape, "truncated", False):
            notes.insert(0, getattr(tape, "recovery_message", None))
        if any(notes):
            self.statusMessage.emit("  ".join(n for n in notes if n))
        if len(tape) == 0:
            self.verdict.setText("This tape has no episodes.")
        self._follow(tape)
        s.start_summaries()
        if len(tape):
            self.select_episode(0)

    def _follow(self, tape: Any) -> None:
        """Poll a tape that is still being written; show the recording strip."""
        from arena_studio.core.tape.follow import GrowingTape

        if not isinstance(tape, GrowingTape):
            return
        self.following = TapeFollowing(tape, parent=self)
        self.following.episodesAdded.connect(self._on_more_episodes)
        self.following.stateChanged.connect(lambda: self.recording_line.show_tape(tape))
        self.recording_line.show_tape(tape)
        if len(tape) == 0:
            self.verdict.setText("Recording: waiting for the first episode to finish…")

    def _on_more_episodes(self, indices: list[int]) -> None:
        if self.session is None:
            return
        from arena_studio.app.replay.summary import EpisodeSummary

        self.episode_list.model.update_rows([EpisodeSummary(index=i) for i in indices])
        self.session.start_summaries(indices=indices)
        if self.prepared is None and self._pending_index is None:
            self.select_episode(indices[0])

    def close_tape(self) -> None:
        if self.following is not None:
            self.following.stop()
            self.following.deleteLater()
            self.following = None
        self.recording_line.show_tape(None)
        if self.session is not None:
            self.session.close()
            self.session.deleteLater()
        self.session = None
        self.prepared = None
        self.compare = None
        self.verdict.explain = None
        self.messages.set_report(None, None)
        self.dock_messages.setVisible(False)

    @property
    def scene_value(self) -> Scene | None:
        return None if self.session is None else self.session.scene

    # -- episodes ----------------------------------------------------------------------
    def select_episode(self, index: int, step: int | None = None) -> None:
        """Load episode ``index`` off the UI thread; it shows when ready."""
        if self.session is None or not (0 <= index < len(self.session)):
            return
        self._pending_index = index
        self._pending_step = step
        self.clock.pause()
        self.verdict.setText(f"Loading episode {index}…")
        self.session.request_episode(index)

    def wait_loaded(self, timeout_ms: int = 20000) -> bool:
        """Process events until the pending episode has arrived (screenshots, tests)."""
        loop = QEventLoop()
        timer = QTimer()
        timer.setSingleShot(True)
        timer.timeout.connect(loop.quit)
        timer.start(timeout_ms)
        while self._pending_index is not None and timer.isActive():
            loop.processEvents(QEventLoop.ProcessEventsFlag.AllEvents, 50)
        return self._pending_index is None

    def _on_episode_ready(self, prepared: PreparedEpisode | Damage) -> None:
        if prepared is None or self.session is None:
            return
        if isinstance(prepared, Damage):
            self._show_damaged(prepared)
            return
        if self._pending_index is not None and prepared.episode.index != self._pending_index:
            return
        step = self._pending_step
        self._pending_index = self._pending_step = None
        self.prepared = prepared
        self.shown_damage = None
        scene = self.session.scene
        ep = prepared.episode
        scene = episode_scene(self.session.scene, ep)  # landmarks where this episode had them
        self.canvas.set_episode(scene, prepared)
        self.clock.set_episode(ep.steps, ep.dt, prepared.event_steps)
        self.timeline.set_events(prepared.events, ep.agent_count)
        self.plots.set_episode(scene, prepared)
        self.messages.set_episode(self.session.scene, ep)
        if self._first_episode:
            self._first_episode = False
            self.fit_views()
        if step is not None:
            self.clock.seek(step)
        self.canvas.set_step(self.clock.step)
        self._update_verdict()
        self._update_compare_views()
        self.episode_list.select_episode(ep.index) if self._list_current() != ep.index else None

    def _show_damaged(self, damage: Damage) -> None:
        """A damaged episode is not shown as an episode: the canvas keeps the bare scene,
        the line under it says which episode and why, and its list row is marked."""
        if self._pending_index is not None and damage.episode != self._pending_index:
            return
        self._pending_index = self._pending_step = None
        self.prepared = None
        self.shown_damage = damage
        assert self.session is not None
        scene = self.session.scene
        self.canvas.set_episode(scene, None)
        self.plots.set_episode(scene, None)
        self.timeline.set_events((), 0)
        self.clock.set_episode(1, self.session.tape.dt)
        row = damaged_summary(damage)
        self.episode_list.model.update_rows([row])
        self.verdict.setText(
            f"Episode {damage.episode} is damaged and cannot be shown ({row.damage}). "
            "The other episodes read normally."
        )
        if self._list_current() != damage.episode:
            self.episode_list.select_episode(damage.episode)

    def _on_failed(self, message: str) -> None:
        """A background load failed: say so where the user looks, never leave "Loading…"."""
        self.last_load_error = message
        if self._pending_index is not None:
            self.verdict.setText(f"Episode {self._pending_index} cannot be shown: {message}")
            self._pending_index = self._pending_step = None
        self.statusMessage.emit(message)

    def _list_current(self) -> int | None:
        current = self.episode_list.table.currentIndex()
        if not current.isValid():
            return None
        return int(current.data(Qt.ItemDataRole.UserRole + 2).index)

    def _on_step(self, step: int) -> None:
        self.canvas.set_step(step)
        if self.canvas_b.isVisible():
            self.canvas_b.set_step(step)
        self._update_verdict()

    def go_to_diagnosis(self) -> None:
        if self.prepared is None:
            return
        step = self.prepared.diagnosis_step()
        if step is not None:
            self.clock.pause()
            self.clock.seek(step)

    def fit_views(self) -> None:
        for canvas in (self.canvas, self.canvas_b):
            canvas.auto_fit = True
            canvas.fit_scene()

    # -- verdict line ------------------------------------------------------------------
    def verdict_text(self) -> str:
        """What the line under the canvas says now (rich text)."""
        return self.verdict.text()

    def _on_verdict_link(self, link: str) -> None:
        if link == LINK_COMPARED:
            self.verdict.toggle_compared_details()
        else:
            self.go_to_diagnosis()

    def _update_verdict(self) -> None:
        compared = self.compare if self.compare_mode != "off" else None
        self.verdict.show_episodes(self.prepared, compared, self.clock.step)

    # -- list and batch ----------------------------------------------------------------
    def _on_rows(self, rows: list) -> None:
        self.episode_list.model.update_rows(rows)

    def _on_summaries_done(self) -> None:
        if self.session is None:
            return
        self.episode_list.set_progress(len(self.session), len(self.session))
        self.batch.set_stats(self.session.scene, batch_stats(self.episode_list.model.summaries()))

    def _on_messages(self, report: Any) -> None:
        """The tape's message figures arrived: fill the panel, explain misaligned failures."""
        if self.session is None:
            return
        scene = self.session.scene
        self.messages.set_report(scene, report)
        if report is not None and not self._messages_placed:
            self._place_messages_dock()
        self.dock_messages.setVisible(report is not None)
        if report is None:
            self.verdict.explain = None
        else:
            from arena_studio.core.analysis.messages import explain_choice
            from arena_studio.core.wording import LandmarkNames

            ids = [a.id for a in scene.agents]
            lms = [lm.id for lm in scene.landmarks]
            said = LandmarkNames.of(scene).names()  # landmarks by label, as on the canvas
            self.verdict.explain = lambda ep: explain_choice(report, ep, ids, lms, said)
        if self.prepared is not None:
            self.messages.set_episode(scene, self.prepared.episode)
        self._update_verdict()

    def _on_goal_clicked(self, goal: tuple[int, ...], label: str) -> None:
        self.episode_list.set_goal_filter(goal, label)
        self.dock_episodes.raise_()

    # -- compare -----------------------------------------------------------------------
    def compare_with_selected(self) -> None:
        """Compare the shown episode with the one selected in the list."""
        index = self._list_current()
        if self.session is None or index is None or self._refuse_self(index):
            return
        if self.compare_mode == "off":
            self.set_compare_mode("ghost")
        self.session.request_compare(index)

    def compare_with(self, index: int, mode: str = "ghost") -> bool:
        """Compare with episode ``index``; False (and a status line) when it is the one shown."""
        if self.session is None or self._refuse_self(index):
            return False
        self.set_compare_mode(mode)
        self.session.request_compare(index)
        return True

    def compare_with_best_success(self) -> bool:
        """Side by side with the best success of the shown episode's goal (see
        :func:`.partner.best_success`); a status line says so when there is none."""
        if self.prepared is None or self.session is None:
            return False
        from arena_studio.app.replay.partner import best_success

        rows = self.episode_list.model.summaries()
        index = best_success(rows, self.prepared.episode.index)
        if index is None:
            self.statusMessage.emit(
                f"No other episode of the goal of episode {self.prepared.episode.index}"
                " succeeded: nothing to compare it with yet."
            )
            return False
        return self.compare_with(index, "side")

    def _refuse_self(self, index: int) -> bool:
        """An episode compared with itself shows nothing new: say so and offer a partner."""
        if self.prepared is None or index != self.prepared.episode.index:
            return False
        from arena_studio.app.replay.partner import best_success

        best = best_success(self.episode_list.model.summaries(), index)
        offer = (
            f" Shift+C compares it with episode {best}, the best success of its goal."
            if best is not None
            else ""
        )
        self.statusMessage.emit(
            f"Episode {index} is the one shown: select another episode to compare with.{offer}"
        )
        return True

    def set_compare_mode(self, mode: str) -> None:
        if mode not in {m for _, m in COMPARE_MODES}:
            raise ValueError(f"unknown compare mode {mode!r}")
        self.compare_mode = mode
        self._update_verdict()
        self.view_toolbar.show_compare_mode(mode)
        self._update_compare_views()

    def _on_compare_ready(self, prepared: PreparedEpisode | None) -> None:
        self.compare = prepared
        self._update_compare_views()
        self._update_verdict()

    def _update_compare_views(self) -> None:
        other = self.compare
        mode = self.compare_mode if other is not None else "off"
        scene = self.scene_value
        self.canvas.set_ghost(other.episode if (other and mode == "ghost") else None)
        side = mode == "side" and scene is not None
        self.canvas_b.setVisible(side)
        if side and other is not None and scene is not None:
            self.canvas_b.set_episode(episode_scene(scene, other.episode), other)
            self.canvas_b.set_options(self.canvas.options)
            self.canvas_b.set_step(self.clock.step)
            self.canvas_b.caption = f"compared: episode {other.episode.index}"
            self.split.setSizes([1, 1])
        if self.prepared is not None and other is not None and mode != "off":
            self.canvas.caption = f"episode {self.prepared.episode.index}" + (
                f" with episode {other.episode.index} as ghost" if mode == "ghost" else ""
            )
            longest = max(self.prepared.episode.steps, other.episode.steps)
            self.canvas.shared_steps = self.canvas_b.shared_steps = longest
            self.timeline.set_compared_events(other.events)
            if longest != self.clock.steps:  # shared timeline spans the longer episode
                step = self.clock.step
                self.clock.set_episode(longest, self.prepared.episode.dt, self.prepared.event_steps)
                self.clock.seek(step)
        else:
            self.canvas.caption = None
            self.canvas.shared_steps = self.canvas_b.shared_steps = None
            self.timeline.set_compared_events(())
        self.canvas.viewport().update()

    # -- options, theme ----------------------------------------------------------------
    def focus_agent(self, agent: int | None) -> None:
        """Draw ``agent`` strong over a dimmed rest (None: everyone alike); clicking the
        focused agent again, or beside every agent, clears it."""
        if agent is not None and agent == self.canvas.options.focus:
            agent = None
        opts = replace(self.canvas.options, focus=agent)
        self.canvas.set_options(opts)
        self.canvas_b.set_options(opts)
        self.canvas.viewport().update()
        self.canvas_b.viewport().update()

    def _apply_options(self) -> None:
        bar = self.view_toolbar
        opts = replace(
            self.canvas.options,
            theme=self.theme.name,
            trails=bar.trails_box.isChecked(),
            trail_seconds=float(bar.trail_seconds.value()),
            pursued=bar.pursued_box.isChecked(),
            par_paths=bar.par_box.isChecked(),
        )
        self.canvas.show_legend = self.canvas_b.show_legend = bar.legend_box.isChecked()
        self.canvas.set_options(opts)
        self.canvas_b.set_options(opts)
        self.canvas.viewport().update()
        self.canvas_b.viewport().update()

    def set_theme(self, theme: Theme | str) -> None:
        self.theme = load_theme(theme) if isinstance(theme, str) else theme
        for w in (
            self.canvas,
            self.canvas_b,
            self.timeline,
            self.transport,
            self.plots,
            self.batch,
            self.episode_list,
            self.verdict,
            self.recording_line,
            self.messages,
        ):
            w.set_theme(self.theme)
        self._update_verdict()
        self._apply_options()

    # -- scene files -------------------------------------------------------------------
    def open_scene_copy(self) -> None:
        """Hand an editable copy of the tape's scene to the layout editor."""
        if self.scene_value is not None:
            self.openSceneInEditor.emit(self.scene_value)

    def scene_matches_tape(self, scene: Scene) -> bool | None:
        """True/False when a tape is open: does ``scene`` have the tape's content hash?"""
        if self.session is None:
            return None
        # the embedded scene's own hash: a tape's stored hash may be wrong (foreign writers)
        return scene.content_hash() == self.session.scene.content_hash()

    def warn_if_scene_differs(self, scene: Scene, path: str | Path) -> bool:
        """Say so when a scene opened beside the tape is not the tape's scene. True = differs."""
        same = self.scene_matches_tape(scene)
        if same is None or same:
            if same:
                self.statusMessage.emit(
                    f"{Path(path).name} is the scene this tape was recorded in."
                )
            return False
        self.warn(
            "Scene differs from the tape",
            f"{Path(path).name} is not the scene this tape was recorded in (their content "
            "hashes differ). The replay keeps using the scene stored in the tape; edits to "
            f"{Path(path).name} do not change what the tape shows.",
        )
        return True

    def check_scene_file_dialog(self) -> None:
        from arena_studio.core.scene.model import load_scene

        path, _ = QFileDialog.getOpenFileName(
            self, "Scene file to check", "", "Scenes (*.scene.json *.scene.msgpack)"
        )
        if not path:
            return
        try:
            scene = load_scene(path)
        except Exception as exc:  # a clear message, never a traceback
            QMessageBox.warning(self, "Cannot read scene", str(exc))
            return
        if not self.warn_if_scene_differs(scene, path):
            QMessageBox.information(
                self, "Same scene", f"{Path(path).name} is the scene this tape was recorded in."
            )

    def closeEvent(self, event) -> None:
        self.close_tape()
        super().closeEvent(event)

    def save_layout(self, settings: QSettings) -> None:
        settings.setValue("replay/state", self.saveState())

    def restore_layout(self, settings: QSettings) -> None:
        state = settings.value("replay/state")
        if isinstance(state, QByteArray | bytes) and self.restoreState(QByteArray(state)):
            self._docks_sized = True  # keep the user's dock sizes
