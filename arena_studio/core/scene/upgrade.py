"""Ordered upgrade steps for older scene documents.

``UPGRADES[n]`` turns a version-``n`` document into version ``n + 1``; each step has a test
that loads a stored file of the older version (tests/data/version1.scene.json).

- 1 -> 2: version 2 adds the optional ``underlay`` (a reference image under the layout).
  A version-1 document cannot hold one, so a version-1 file that has it is refused.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from typing import Any

from arena_studio.core.errors import SceneFormatError
from arena_studio.core.scene.model import FORMAT_VERSION

Document = dict[str, Any]


def _v1_to_v2(doc: Document) -> Document:
    if "underlay" in doc:
        raise SceneFormatError("underlay", "needs version 2 (this file says version 1)")
    return doc


UPGRADES: dict[int, Callable[[Document], Document]] = {1: _v1_to_v2}


def upgrade_to_current(doc: Mapping[str, Any], version: int) -> Mapping[str, Any]:
    """Apply every step from ``version`` up to :data:`FORMAT_VERSION`, in order."""
    current: Mapping[str, Any] = doc
    for step in range(version, FORMAT_VERSION):
        current = UPGRADES[step](dict(current))
        current = {**current, "version": step + 1}
    return current


__all__ = ["UPGRADES", "Document", "upgrade_to_current"]
