"""The playback clock: which step of an episode is on screen, and how it moves.

Playback is driven by wall time, not by timer ticks: every tick computes where the replay
*should* be (start position + elapsed seconds x speed / dt) and jumps there, so a slow frame
drops steps instead of slowing the replay down. The clock only moves an integer step; nothing
here decodes or copies episode data, so scrubbing costs one signal.
"""

from __future__ import annotations

import bisect
import math
from collections.abc import Callable, Iterable

from PySide6.QtCore import QElapsedTimer, QObject, QTimer, Signal

#: speeds offered by the speed box and the faster/slower actions (x real time)
SPEEDS: tuple[float, ...] = (0.1, 0.25, 0.5, 1.0, 2.0, 4.0, 8.0, 16.0)
MIN_SPEED, MAX_SPEED = SPEEDS[0], SPEEDS[-1]
TICK_MS = 15  # a little faster than 60 Hz; frames still follow wall time


class PlaybackClock(QObject):
    """Current step, play/pause, speed, loop range and event stops for one (shared) timeline.

    ``now`` returns seconds of wall time; tests pass a fake one and call :meth:`tick`.
    """

    stepChanged = Signal(int)
    playingChanged = Signal(bool)
    speedChanged = Signal(float)
    loopChanged = Signal(object)  # (first, last) or None
    lengthChanged = Signal(int)

    def __init__(
        self,
        parent: QObject | None = None,
        now: Callable[[], float] | None = None,
    ) -> None:
        super().__init__(parent)
        self._steps = 1
        self._dt = 0.1
        self._step = 0
        self._speed = 1.0
        self._loop: tuple[int, int] | None = None
        self._event_steps: list[int] = []
        self._playing = False
        self._anchor_pos = 0.0  # fractional step at the moment playback (re)started
        self._anchor_time = 0.0
        if now is None:
            elapsed = QElapsedTimer()
            elapsed.start()
            now = lambda: elapsed.nsecsElapsed() * 1e-9  # noqa: E731
        self._now = now
        self._timer = QTimer(self)
        self._timer.setInterval(TICK_MS)
        self._timer.timeout.connect(self.tick)

    # -- configuration -----------------------------------------------------------------
    def set_episode(self, steps: int, dt: float, event_steps: Iterable[int] = ()) -> None:
        """Point the clock at an episode of ``steps`` steps; keeps the step when it fits."""
        if dt <= 0 or not math.isfinite(dt):
            raise ValueError(f"time step must be a positive number of seconds, got {dt!r}")
        self.pause()
        self._steps = max(int(steps), 1)
        self._dt = float(dt)
        self._event_steps = sorted({int(s) for s in event_steps if 0 <= s < self._steps})
        self._loop = None
        self.loopChanged.emit(None)
        self.lengthChanged.emit(self._steps)
        self._set_step(min(self._step, self._steps - 1), force=True)

    def set_event_steps(self, event_steps: Iterable[int]) -> None:
        self._event_steps = sorted({int(s) for s in event_steps if 0 <= s < self._steps})

    @property
    def steps(self) -> int:
        return self._steps

    @property
    def dt(self) -> float:
        return self._dt

    @property
    def step(self) -> int:
        return self._step

    @property
    def time(self) -> float:
        return self._step * self._dt

    @property
    def playing(self) -> bool:
        return self._playing

    @property
    def speed(self) -> float:
        return self._speed

    @property
    def loop(self) -> tuple[int, int] | None:
        return self._loop

    @property
    def event_steps(self) -> tuple[int, ...]:
        return tuple(self._event_steps)

    # -- moving ------------------------------------------------------------------------
    def seek(self, step: int) -> None:
        """Jump to ``step`` (clamped). While playing, playback continues from there."""
        self._set_step(int(step))
        if self._playing:
            self._restart_anchor()

    def seek_time(self, seconds: float) -> None:
        self.seek(round(seconds / self._dt))

    def step_by(self, delta: int) -> None:
        self.pause()
        self.seek(self._step + delta)

    def jump_seconds(self, seconds: float) -> None:
        """Move by ``seconds`` of episode time (at least one step)."""
        steps = round(seconds / self._dt)
        if steps == 0:
            steps = 1 if seconds > 0 else -1
        self.seek(self._step + steps)

    def home(self) -> None:
        self.seek(self._loop[0] if self._loop else 0)

    def end(self) -> None:
        self.pause()
        self.seek(self._loop[1] if self._loop else self._steps - 1)

    def next_event(self) -> bool:
        """Go to the first event after the current step; False when there is none."""
        i = bisect.bisect_right(self._event_steps, self._step)
        if i >= len(self._event_steps):
            return False
        self.pause()
        self.seek(self._event_steps[i])
        return True

    def previous_event(self) -> bool:
        i = bisect.bisect_left(self._event_steps, self._step) - 1
        if i < 0:
            return False
        self.pause()
        self.seek(self._event_steps[i])
        return True

    # -- playing -----------------------------------------------------------------------
    def play(self) -> None:
        if self._playing:
            return
        first, last = self._range()
        if self._step >= last:  # at the end: start again from the beginning of the range
            self._set_step(first)
        self._playing = True
        self._restart_anchor()
        self._timer.start()
        self.playingChanged.emit(True)

    def pause(self) -> None:
        if not self._playing:
            return
        self._playing = False
        self._timer.stop()
        self.playingChanged.emit(False)

    def toggle(self) -> None:
        if self._playing:
            self.pause()
        else:
            self.play()

    def set_speed(self, speed: float) -> None:
        speed = float(min(max(speed, MIN_SPEED), MAX_SPEED))
        if speed == self._speed:
            return
        self._speed = speed
        if self._playing:
            self._restart_anchor()
        self.speedChanged.emit(speed)

    def faster(self) -> None:
        i = bisect.bisect_right(SPEEDS, self._speed + 1e-9)
        self.set_speed(SPEEDS[min(i, len(SPEEDS) - 1)])

    def slower(self) -> None:
        i = bisect.bisect_left(SPEEDS, self._speed - 1e-9) - 1
        self.set_speed(SPEEDS[max(i, 0)])

    def set_loop(self, first: int | None, last: int | None = None) -> None:
        """Loop playback over steps ``first..last`` (inclusive); ``None`` clears the loop."""
        if first is None or last is None:
            self._loop = None
        else:
            a, b = sorted((int(first), int(last)))
            a, b = max(a, 0), min(b, self._steps - 1)
            self._loop = (a, b) if b > a else None
        self.loopChanged.emit(self._loop)
        if self._loop and not (self._loop[0] <= self._step <= self._loop[1]):
            self.seek(self._loop[0])

    def tick(self) -> None:
        """Advance to where wall time says playback is; drops steps when frames are slow."""
        if not self._playing:
            return
        first, last = self._range()
        elapsed = self._now() - self._anchor_time
        pos = self._anchor_pos + elapsed * self._speed / self._dt
        past_end = pos >= last + 1 if self._loop else pos >= last
        if past_end:
            if self._loop:
                span = last - first + 1
                pos = first + (pos - first) % span
                self._anchor_pos, self._anchor_time = pos, self._now()
            else:
                self._set_step(last)
                self.pause()
                return
        self._set_step(math.floor(pos + 1e-9))

    # -- internals ---------------------------------------------------------------------
    def _range(self) -> tuple[int, int]:
        return self._loop if self._loop else (0, self._steps - 1)

    def _restart_anchor(self) -> None:
        self._anchor_pos = float(self._step)
        self._anchor_time = self._now()

    def _set_step(self, step: int, force: bool = False) -> None:
        step = min(max(step, 0), self._steps - 1)
        if step != self._step or force:
            self._step = step
            self.stepChanged.emit(step)
