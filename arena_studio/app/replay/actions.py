"""Replay actions as data: id, menu title, default shortcut, and what each does to the clock.

The replay window builds its QActions from :data:`REPLAY_ACTIONS`, so the menu, the
transport buttons, the README table and the shortcut test all read the same list.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

from PySide6.QtCore import QObject, Qt
from PySide6.QtGui import QAction, QKeySequence

from arena_studio.app.replay.transport import PlaybackClock


@dataclass(frozen=True)
class ReplayAction:
    id: str
    title: str
    shortcuts: tuple[str, ...]
    tip: str
    run: Callable[[PlaybackClock], object]


REPLAY_ACTIONS: tuple[ReplayAction, ...] = (
    ReplayAction("play", "Play", ("Space",), "Play or pause", lambda c: c.toggle()),
    ReplayAction("step_fwd", "Step forward", ("Right",), "One step later", lambda c: c.step_by(1)),
    ReplayAction("step_back", "Step back", ("Left",), "One step earlier", lambda c: c.step_by(-1)),
    ReplayAction(
        "jump_fwd",
        "Jump 1 s forward",
        ("Shift+Right",),
        "One second later",
        lambda c: c.jump_seconds(1.0),
    ),
    ReplayAction(
        "jump_back",
        "Jump 1 s back",
        ("Shift+Left",),
        "One second earlier",
        lambda c: c.jump_seconds(-1.0),
    ),
    ReplayAction("home", "Go to start", ("Home",), "First step", lambda c: c.home()),
    ReplayAction("end", "Go to end", ("End",), "Last step", lambda c: c.end()),
    ReplayAction(
        "next_event",
        "Next event",
        ("N",),
        "Go to the next event on the timeline",
        lambda c: c.next_event(),
    ),
    ReplayAction(
        "prev_event",
        "Previous event",
        ("P",),
        "Go to the previous event on the timeline",
        lambda c: c.previous_event(),
    ),
    ReplayAction("faster", "Faster", ("]",), "Double the playback speed", lambda c: c.faster()),
    ReplayAction("slower", "Slower", ("[",), "Halve the playback speed", lambda c: c.slower()),
    ReplayAction(
        "loop_start",
        "Loop from here",
        ("L",),
        "Start a loop range at the current step",
        lambda c: c.set_loop(c.step, (c.loop[1] if c.loop else c.steps - 1)),
    ),
    ReplayAction(
        "loop_end",
        "Loop to here",
        ("Shift+L",),
        "End the loop range at the current step",
        lambda c: c.set_loop((c.loop[0] if c.loop else 0), c.step),
    ),
    ReplayAction(
        "loop_clear", "No loop", ("Alt+L",), "Clear the loop range", lambda c: c.set_loop(None)
    ),
)


def build_actions(clock: PlaybackClock, parent: QObject) -> dict[str, QAction]:
    """QActions for every replay action, wired to ``clock``; shortcuts live on the window."""
    out: dict[str, QAction] = {}
    for spec in REPLAY_ACTIONS:
        action = QAction(spec.title, parent)
        action.setObjectName(f"replay.{spec.id}")
        action.setShortcuts([QKeySequence(s) for s in spec.shortcuts])
        action.setShortcutContext(Qt.ShortcutContext.WindowShortcut)
        keys = ", ".join(spec.shortcuts)
        action.setToolTip(f"{spec.tip} ({keys})")
        action.setStatusTip(spec.tip)
        action.triggered.connect(lambda _checked=False, run=spec.run: run(clock))
        out[spec.id] = action
    return out


def shortcut_table() -> str:
    """Markdown table of the replay shortcuts (kept in sync with the README by a test)."""
    lines = ["| key | action |", "|---|---|"]
    for spec in REPLAY_ACTIONS:
        lines.append(f"| {' / '.join(spec.shortcuts)} | {spec.title} |")
    return "\n".join(lines)
