"""Ordered upgrade steps for older scene documents.

``UPGRADES[n]`` turns a version-``n`` document into version ``n + 1``. Version 1 is the first
published version, so the table is empty today; the next format change adds ``UPGRADES[1]``
together with a test that loads a stored version-1 file.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from typing import Any

from arena_studio.core.scene.model import FORMAT_VERSION

Document = dict[str, Any]
UPGRADES: dict[int, Callable[[Document], Document]] = {}


def upgrade_to_current(doc: Mapping[str, Any], version: int) -> Mapping[str, Any]:
    """Apply every step from ``version`` up to :data:`FORMAT_VERSION`, in order."""
    current: Mapping[str, Any] = doc
    for step in range(version, FORMAT_VERSION):
        current = UPGRADES[step](dict(current))
        current = {**current, "version": step + 1}
    return current
