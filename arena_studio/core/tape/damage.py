"""Damage kept to one episode: what is wrong with it and where, so the rest still reads.

A tape written by another program, or a copy that lost a few bytes, may hold one episode
with a non-finite pose or one chunk whose checksum no longer matches. That episode is
marked damaged (a :class:`Damage` record); every other episode reads as usual. Reading the
damaged episode raises :class:`EpisodeDamaged`, a :class:`TapeError` that carries the record.
"""

from __future__ import annotations

from dataclasses import dataclass

from arena_studio.core.tape.format import TapeError


@dataclass(frozen=True)
class Damage:
    """Why one episode cannot be read, and where in it (fields are None when unknown)."""

    episode: int
    reason: str
    step: int | None = None
    agent: int | None = None
    chunk: int | None = None  # chunk number inside the episode, from 0
    byte: int | None = None  # file offset of the damaged record

    @property
    def place(self) -> str:
        """Where inside the episode, e.g. ``step 4 agent 1`` or ``chunk 2 (byte 1234)``."""
        parts = []
        if self.chunk is not None:
            parts.append(f"chunk {self.chunk}")
        if self.step is not None:
            parts.append(f"step {self.step}")
        if self.agent is not None:
            parts.append(f"agent {self.agent}")
        if self.byte is not None:
            parts.append(f"byte {self.byte}")
        return " ".join(parts)

    def text(self) -> str:
        """One line for a user: ``episode 3 step 4 agent 1: pose is not a finite number``."""
        place = self.place
        return f"episode {self.episode}{' ' + place if place else ''}: {self.reason}"

    def to_dict(self) -> dict[str, object]:
        return {
            "episode": self.episode,
            "reason": self.reason,
            "step": self.step,
            "agent": self.agent,
            "chunk": self.chunk,
            "byte": self.byte,
        }


class EpisodeDamaged(TapeError):
    """One episode of an otherwise readable tape is damaged; ``damage`` says what and where."""

    def __init__(
        self, source: str, damage: Damage, where: str | None = None, problem: str | None = None
    ) -> None:
        """``where`` and ``problem`` keep the text of the error found while decoding, when
        there was one; otherwise both come from ``damage``."""
        if where is None:
            place = damage.place
            where = f"episode {damage.episode}{' ' + place if place else ''}"
        super().__init__(source, where, damage.reason if problem is None else problem)
        self.damage = damage


__all__ = ["Damage", "EpisodeDamaged"]
