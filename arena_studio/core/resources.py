"""Where bundled files live: ``resources/`` (schemas, palettes, icons) and ``scenes/`` (demos).

In a source checkout or an editable install they sit beside the package; a wheel maps them
into ``arena_studio/_bundled/`` (see pyproject.toml). This module is the one place that knows.
"""

from __future__ import annotations

from functools import cache
from pathlib import Path

_PACKAGE = Path(__file__).resolve().parent.parent


@cache
def _root(name: str) -> Path:
    for candidate in (_PACKAGE / "_bundled" / name, _PACKAGE.parent / name):
        if candidate.is_dir():
            return candidate
    raise FileNotFoundError(f"arena_studio installation is missing its '{name}' folder")


def resource_path(*parts: str) -> Path:
    """Path of a file under resources/, e.g. ``resource_path("schema", "scene.schema.json")``."""
    return _root("resources").joinpath(*parts)


def demo_path(*parts: str) -> Path:
    """Path of a bundled demo scene or tape under scenes/."""
    return _root("scenes").joinpath(*parts)


DEFAULT_DEMO_SCENE = "greenhouse.scene.json"


__all__ = ["DEFAULT_DEMO_SCENE", "demo_path", "resource_path"]
