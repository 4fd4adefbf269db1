"""Painting never raises: balanced painter states, a visible placeholder, one report.

A scene or tape can hold values that geometry code cannot process (a vertex at -1e308, a
bow-tie start region, a huge radius). An exception raised in the middle of painting used to
leave the painter with saved states open, which Qt does not survive. Every paint path goes
through these helpers instead:

- :func:`saved` pairs ``save()`` with a ``restore()`` that runs even when drawing fails, so
  the painter is balanced whatever happens inside;
- :func:`guarded` runs one part of a picture (rooms, trails, a frame): when it fails, the
  painter is restored, a placeholder (a crossed box and a one-line reason) is drawn where
  the part would have been, and the failure is reported once through :func:`set_reporter`
  (the app shows it in the status bar; batch commands print one line on stderr).
"""

from __future__ import annotations

import contextlib
import functools
import sys
from collections.abc import Callable, Iterator
from typing import Any

from PySide6.QtCore import QRectF, Qt
from PySide6.QtGui import QPainter, QPen

from arena_studio.render.theme import Theme, load_theme

#: Longest reason shown in a placeholder or a report line.
MAX_REASON = 160

Reporter = Callable[[str], None]


def _stderr_reporter(message: str) -> None:
    with contextlib.suppress(OSError, ValueError):  # stderr closed: nowhere left to say it
        print(f"arena-studio: warning: {message}", file=sys.stderr)


_reporter: Reporter = _stderr_reporter
_reported: set[str] = set()


def set_reporter(reporter: Reporter | None) -> Reporter:
    """Send paint failures to ``reporter`` (None: stderr). Returns the previous reporter."""
    global _reporter
    previous = _reporter
    _reporter = reporter or _stderr_reporter
    return previous


def reset_reports() -> None:
    """Forget what was reported, so the same failure is reported again (a new document)."""
    _reported.clear()


def reason(exc: BaseException) -> str:
    """``TypeName: message`` on one line, shortened with its full length stated."""
    text = " ".join(str(exc).split())
    if len(text) > MAX_REASON:
        text = f"{text[:MAX_REASON]}... ({len(text)} characters)"
    return f"{type(exc).__name__}: {text}" if text else type(exc).__name__


def report(what: str, exc: BaseException) -> None:
    """Report ``could not draw WHAT (reason)`` once per distinct message."""
    message = f"could not draw {what} ({reason(exc)})"
    if message in _reported:
        return
    _reported.add(message)
    try:
        _reporter(message)
    except Exception:  # a broken reporter must not bring painting down either
        _stderr_reporter(message)


@contextlib.contextmanager
def saved(painter: QPainter) -> Iterator[QPainter]:
    """``painter.save()`` ... ``painter.restore()``, restored even when the body raises."""
    painter.save()
    try:
        yield painter
    finally:
        painter.restore()


@contextlib.contextmanager
def guarded(
    painter: QPainter, what: str, rect: QRectF | None = None, theme: Theme | None = None
) -> Iterator[None]:
    """Run a part of a picture; a failure becomes a placeholder and one report, not a raise.

    ``rect`` is where the part would be (device pixels); without one the placeholder is a
    line of text at the top left of the painter's device."""
    try:
        with saved(painter):
            yield
    except Exception as exc:  # geometry and data errors of any kind: never past a paint path
        report(what, exc)
        placeholder(painter, what, rect, theme)


def guarded_paint_event(what: str) -> Callable[[Callable[..., None]], Callable[..., None]]:
    """Decorate a widget's ``paintEvent``: a failure is reported once and the widget shows
    a placeholder instead of raising out of Qt's event loop."""

    def decorate(method: Callable[..., None]) -> Callable[..., None]:
        @functools.wraps(method)
        def paint_event(widget: Any, event: Any) -> None:
            failed = False
            try:
                method(widget, event)
            except Exception as exc:  # the method's painter ends when its frame is freed
                report(what, exc)
                failed = True
            if failed:
                with contextlib.suppress(Exception):
                    painter = QPainter(widget)
                    placeholder(painter, what, QRectF(widget.rect()).adjusted(1, 1, -1, -1))
                    painter.end()

        return paint_event

    return decorate


def placeholder(
    painter: QPainter, what: str, rect: QRectF | None = None, theme: Theme | None = None
) -> None:
    """A crossed box (when ``rect`` is given) and ``could not draw WHAT`` in the theme's
    error colour on its background; never raises."""
    try:
        theme = theme or load_theme("light")
        with saved(painter):
            painter.resetTransform()
            painter.setClipping(False)
            painter.setOpacity(1.0)
            color = theme.qcolor("error")
            painter.setPen(QPen(color, 2.0))
            painter.setBrush(Qt.BrushStyle.NoBrush)
            slot = int(getattr(painter, "_arena_placeholders", 0))
            painter._arena_placeholders = slot + 1  # type: ignore[attr-defined]
            if rect is not None and rect.isValid():
                painter.drawRect(rect)
                painter.drawLine(rect.topLeft(), rect.bottomRight())
                painter.drawLine(rect.topRight(), rect.bottomLeft())
                origin = rect.topLeft()
            else:
                origin = QRectF(0, 0, 1, 1).topLeft()
            box = QRectF(origin.x() + 8, origin.y() + 8 + 20 * slot, 520, 20)
            painter.fillRect(box, theme.qcolor("background", alpha=0.9))
            painter.drawText(
                box.adjusted(6, 0, 0, 0),
                int(Qt.AlignmentFlag.AlignVCenter | Qt.AlignmentFlag.AlignLeft),
                f"could not draw {what}",
            )
    except Exception:  # the placeholder itself must never raise
        pass


__all__ = [
    "guarded",
    "guarded_paint_event",
    "placeholder",
    "reason",
    "report",
    "reset_reports",
    "saved",
    "set_reporter",
]
