"""The error type of the robot importers."""

from __future__ import annotations

from arena_studio.core.errors import ArenaError


class RobotImportError(ArenaError, ValueError):
    """Bad map or bag input; the message names the file and the field or topic."""


__all__ = ["RobotImportError"]
