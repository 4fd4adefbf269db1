"""Error types that name the place where input went wrong."""

from __future__ import annotations


class ArenaError(Exception):
    """Base class for every error arena_studio reports to a user."""


class SceneFormatError(ArenaError, ValueError):
    """A scene document is malformed; ``where`` is a field path like ``landmarks[3].label``."""

    def __init__(self, where: str, problem: str, source: str | None = None) -> None:
        self.where = where
        self.problem = problem
        self.source = source
        super().__init__(self._text())

    def _text(self) -> str:
        place = f"{self.where}: " if self.where else ""
        prefix = f"{self.source}: " if self.source else ""
        return f"{prefix}{place}{self.problem}"

    def with_source(self, source: str) -> SceneFormatError:
        """Return the same error, now also naming the file it came from."""
        return SceneFormatError(self.where, self.problem, source)


__all__ = ["ArenaError", "SceneFormatError"]
