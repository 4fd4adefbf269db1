"""Exports of a scene for simulators and documents: json, msgpack, npz, wkt, svg, grid.

Every export carries the scene's content hash (:meth:`Scene.content_hash`) and the caution
that it is a simulation aid, in whatever way its format allows (a comment, metadata, an
array or a small sidecar file). Every file is written atomically.

Public API::

    from arena_studio.core.export import FORMATS, export_scene, ExportError, CAUTION
    written = export_scene(scene, "npz", "out.npz")   # -> list of paths written
"""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path

from arena_studio.core.errors import ArenaError
from arena_studio.core.scene.model import Scene

CAUTION = (
    "Simulation aid only: scenes, reachability and par times are not a safety assessment. "
    "Layouts for real robots near people need a site survey, a risk assessment and the local "
    "safety rules and standards."
)

#: Default occupancy grid cell size (m).
DEFAULT_RESOLUTION = 0.05


class ExportError(ArenaError):
    """An export could not be made (bad option, too large, cannot write); says why."""


def _writer(fmt: str) -> Callable[..., list[Path]]:
    if fmt in ("json", "msgpack"):
        from arena_studio.core.export.scene_file import write_scene_export

        return write_scene_export
    if fmt == "npz":
        from arena_studio.core.export.npz import write_npz

        return write_npz
    if fmt == "wkt":
        from arena_studio.core.export.wkt import write_wkt

        return write_wkt
    if fmt == "svg":
        from arena_studio.core.export.svg import write_svg

        return write_svg
    if fmt == "grid":
        from arena_studio.core.export.grid import write_grid

        return write_grid
    raise ExportError(f"unknown export format {fmt!r} (expected one of {', '.join(FORMATS)})")


FORMATS: tuple[str, ...] = ("json", "msgpack", "npz", "wkt", "svg", "grid")


def export_scene(
    scene: Scene,
    fmt: str,
    out: str | Path,
    resolution: float = DEFAULT_RESOLUTION,
    clearance: float = 0.0,
) -> list[Path]:
    """Write ``scene`` as ``fmt`` to ``out``; returns every path written. ``resolution`` and
    ``clearance`` (metres kept from walls and obstacles) apply to the grid."""
    writer = _writer(fmt)
    target = Path(out)
    if target.is_dir():
        raise ExportError(f"{target}: is a folder; give a file name")
    if not target.parent.exists():
        raise ExportError(f"{target.parent}: no such folder")
    try:
        if fmt in ("json", "msgpack"):
            return writer(scene, target, fmt)
        if fmt == "grid":
            return writer(scene, target, resolution, clearance)
        return writer(scene, target)
    except OSError as exc:
        raise ExportError(f"{target}: cannot write ({exc.strerror or exc})") from None


__all__ = ["CAUTION", "DEFAULT_RESOLUTION", "FORMATS", "ExportError", "export_scene"]
