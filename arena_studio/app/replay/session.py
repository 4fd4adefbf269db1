"""An open tape in the viewer: its episode rows, the selected episode, the compared one.

Opening reads only the tape's header and index (fast, even for thousands of episodes) and
fills the list with placeholder rows; a worker thread then computes each episode's metrics
and the whole tape's occupancy grid. Selecting an episode decodes and prepares it on another
worker thread; the newest selection wins.
"""

from __future__ import annotations

import contextlib
from collections.abc import Callable, Iterator
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from PySide6.QtCore import QObject, Signal

from arena_studio.app.replay.batch_stats import Occupancy
from arena_studio.app.replay.events import episode_event_marks
from arena_studio.app.replay.loader import CORE_LOCK, BackgroundCall, StreamWorker
from arena_studio.app.replay.prepared import EventMark, PreparedEpisode, prepare_episode
from arena_studio.app.replay.summary import EpisodeSummary, damaged_summary, summarise_episode
from arena_studio.core.scene.model import Scene
from arena_studio.core.tape.damage import Damage, EpisodeDamaged
from arena_studio.core.tape.episode import Episode

#: shuffles and resamples behind the message figures (as ``arena-studio stats``)
REPORT_PERMUTATIONS = 1000


@dataclass(frozen=True)
class MessageInput:
    """The parts of an episode the message figures read (the poses stay behind)."""

    index: int
    messages: tuple[Any, ...]
    pursued_goals: Any
    success: bool
    aligned: bool


def _metrics_for(scene: Scene, episode: Episode) -> Any:
    from arena_studio.core.analysis.metrics import episode_metrics

    return episode_metrics(scene, episode)


def _findings_for(scene: Scene, episode: Episode) -> list[Any]:
    """Where this recording disagrees with its scene (never stops the episode loading)."""
    from arena_studio.core.tape_checks import check_episode

    try:
        return check_episode(scene, episode)
    except Exception:  # a checker problem must not keep the episode from showing
        return []


def mismatch_marks(scene: Scene, findings: list[Any]) -> tuple[EventMark, ...]:
    """Timeline marks for recording-vs-scene findings."""
    ids = [a.id for a in scene.agents]
    return tuple(
        EventMark(
            step=int(f.step or 0),
            kind="mismatch",
            agent=ids.index(f.agent) if f.agent in ids else None,
            text=f"{f.code}: {f.message}",
        )
        for f in findings
    )


def load_prepared(scene: Scene, episode: Episode) -> PreparedEpisode:
    """Metrics, events, per-step arrays and the frame painter's cache for one episode."""
    with CORE_LOCK:
        return _load_prepared(scene, episode)


def _load_prepared(scene: Scene, episode: Episode) -> PreparedEpisode:
    from arena_studio.core.tape.episode_scene import episode_scene
    from arena_studio.render.episode_cache import episode_cache

    scene = episode_scene(scene, episode)  # the episode's own landmark positions, if any

    metrics = _metrics_for(scene, episode)
    findings = _findings_for(scene, episode)
    events = episode_event_marks(scene, episode, metrics) + mismatch_marks(scene, findings)
    prepared = prepare_episode(scene, episode, metrics=metrics)
    prepared = PreparedEpisode(
        episode=prepared.episode,
        speeds=prepared.speeds,
        reward_so_far=prepared.reward_so_far,
        targets=prepared.targets,
        distances=prepared.distances,
        events=tuple(sorted(events, key=lambda m: m.step)),
        metrics=metrics,
        extra={**prepared.extra, "findings": findings},
    )
    cache = episode_cache(scene, episode)  # built here, off the UI thread; frames only slice it
    # par-time paths plan routes with shapely; compute them here (under CORE_LOCK) so that
    # turning them on never plans on the UI thread while a worker uses the same geometry
    with contextlib.suppress(Exception):  # no plan: the option just shows no paths
        cache.par_time_paths()
    return prepared


class ReplaySession(QObject):
    """Owns the open tape and the background work on it."""

    rowsReady = Signal(object)  # list[EpisodeSummary]
    progress = Signal(int, int)
    summariesDone = Signal()
    occupancyReady = Signal(object)  # Occupancy
    episodeReady = Signal(object)  # PreparedEpisode (the selected one), or its Damage
    compareReady = Signal(object)  # PreparedEpisode or None
    messagesReady = Signal(object)  # MessageReport, or None when no episode has messages
    failed = Signal(str)

    def __init__(self, tape: Any, parent: QObject | None = None) -> None:
        super().__init__(parent)
        self.tape = tape
        self.scene: Scene = tape.scene
        self.path = Path(getattr(tape, "path", "") or "")
        self._worker: StreamWorker | None = None
        self._episode_call = BackgroundCall(self)
        self._episode_call.done.connect(lambda _t, p: self.episodeReady.emit(p))
        self._episode_call.failed.connect(lambda _t, m: self.failed.emit(m))
        self._compare_call = BackgroundCall(self)
        self._compare_call.done.connect(lambda _t, p: self.compareReady.emit(p))
        self._compare_call.failed.connect(lambda _t, m: self.failed.emit(m))
        self.occupancy = Occupancy.empty(self.scene)
        self.summaries_done = False
        #: per episode index: what the message figures need (messages, goals, success)
        self.message_inputs: dict[int, MessageInput] = {}
        self.message_report: Any = None
        self._message_call = BackgroundCall(self)
        self._message_call.done.connect(self._on_report)
        self._message_call.failed.connect(lambda _t, m: self.messagesReady.emit(None))
        self._earlier: list[StreamWorker] = []

    def __len__(self) -> int:
        return len(self.tape)

    # -- the list ----------------------------------------------------------------------
    def start_summaries(
        self, reopen: Callable[[], Any] | None = None, indices: list[int] | None = None
    ) -> None:
        """Compute every episode's row (and the occupancy grid) on a worker thread.

        ``reopen`` gives the worker its own tape reader (file handles are not shared);
        ``indices`` limits the work to those episodes (a growing tape's new ones).
        """
        scene = self.scene
        occupancy = self.occupancy
        opener = reopen or self._reopen
        wanted = list(range(len(self.tape))) if indices is None else list(indices)

        def produce(stop: Callable[[], bool]) -> Iterator[EpisodeSummary]:
            tape = opener()
            for i in wanted:
                if stop():
                    return
                try:
                    episode = tape.episode(i)
                except EpisodeDamaged as exc:  # the damage stays in its row
                    yield damaged_summary(exc.damage)
                    continue
                occupancy.add(episode.poses, episode.dt)
                try:
                    with CORE_LOCK:  # released between episodes so a selection gets in
                        row = summarise_episode(scene, episode)
                except Exception as exc:  # one bad episode must not stop the list
                    row = EpisodeSummary(
                        index=i, diagnosis=f"cannot compute metrics: {exc}", loaded=True
                    )
                if episode.messages:
                    self.message_inputs[i] = MessageInput(
                        i, episode.messages, episode.pursued_goals, bool(row.success),
                        row.aligned is True,
                    )
                yield row

        if self._worker is not None:  # earlier work on a growing tape: let it finish
            self._earlier.append(self._worker)
        self._worker = StreamWorker(produce, len(wanted), self)
        self._worker.batchReady.connect(self._on_batch)
        self._worker.progress.connect(self.progress)
        self._worker.failed.connect(self.failed)
        self._worker.finished.connect(self._on_finished)
        self._worker.start()

    def _reopen(self) -> Any:
        from arena_studio.core.tape import open_tape
        from arena_studio.core.tape.follow import GrowingTape

        if isinstance(self.tape, GrowingTape):
            return self.tape  # it reads by offsets it already knows; rescanning costs the file
        return open_tape(self.path)

    def _on_batch(self, batch: list[EpisodeSummary]) -> None:
        self.rowsReady.emit(batch)

    def _on_finished(self) -> None:
        self.summaries_done = True
        self.occupancyReady.emit(self.occupancy)
        self.summariesDone.emit()
        self._start_report()

    def _start_report(self) -> None:
        """Message figures over every episode read so far, off the UI thread."""
        inputs = [self.message_inputs[i] for i in sorted(self.message_inputs)]
        scene = self.scene

        def compute() -> Any:
            from arena_studio.core.analysis.messages import message_report

            if not any(isinstance(r, dict) and "value" in r for m in inputs for r in m.messages):
                return None
            report = message_report(
                inputs,  # type: ignore[arg-type]  (the fields the report reads)
                [a.id for a in scene.agents],
                [lm.id for lm in scene.landmarks],
                successes=[m.success for m in inputs],
                aligned=[m.aligned for m in inputs],
                permutations=REPORT_PERMUTATIONS,
                resamples=REPORT_PERMUTATIONS,
            )
            return report if report.speakers else None

        self._message_call.submit(compute)

    def _on_report(self, _token: int, report: Any) -> None:
        self.message_report = report
        self.messagesReady.emit(report)

    def wait_summaries(self, timeout_ms: int = 60000) -> bool:
        return self._worker is None or self._worker.wait(timeout_ms)

    def wait_idle(self, timeout_s: float = 120.0) -> None:
        """Wait for every background computation of this session (tests and shutdown):
        they share the core lock, so work left running would hold up the next session."""
        self.wait_summaries(int(timeout_s * 1000))
        for call in (self._episode_call, self._compare_call, self._message_call):
            call.wait_idle(timeout_s)

    # -- episodes ----------------------------------------------------------------------
    def request_episode(self, index: int) -> int:
        """Prepare episode ``index`` off the UI thread; ``episodeReady`` brings the
        :class:`PreparedEpisode`, or the episode's ``Damage`` record when it is damaged."""
        scene, tape = self.scene, self.tape

        def load() -> PreparedEpisode | Damage:
            try:
                episode = tape.episode(index)
            except EpisodeDamaged as exc:
                return exc.damage
            return load_prepared(scene, episode)

        return self._episode_call.submit(load)

    def request_compare(self, index: int | None) -> None:
        if index is None:
            self._compare_call.submit(lambda: None)
            return
        scene, tape = self.scene, self.tape
        self._compare_call.submit(lambda: load_prepared(scene, tape.episode(index)))

    def load_now(self, index: int) -> PreparedEpisode:
        """Blocking load (screenshots, tests)."""
        return load_prepared(self.scene, self.tape.episode(index))

    def close(self) -> None:
        for worker in self._earlier:
            worker.stop()
        self._earlier.clear()
        if self._worker is not None:
            self._worker.stop()
            self._worker = None
        self._episode_call.shutdown(5.0)
        self._message_call.shutdown(5.0)
        self._compare_call.shutdown(5.0)
