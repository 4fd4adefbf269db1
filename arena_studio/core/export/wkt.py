"""WKT export: one labelled OGC Simple Features geometry per line.

Lines starting with ``#`` are comments (content hash, caution, units). Every other line is
``LABEL<TAB>WKT`` where LABEL is ``room:<id>``, ``obstacle:<id>``, ``walkable``,
``open_area`` (rooms minus obstacles) or ``free_space:r=<radius>:<agent ids>`` (where the
centre of an agent of that radius may be). Coordinates are written at full precision, so
the geometry reloads exactly (shapely.from_wkt). Ids and the scene name are escaped
(:func:`.text_safety.escape_line`: a doubled backslash, backslash-u and 4 hex digits), so
no name can start a line or hold a TAB that would make it a forged geometry line.
"""

from __future__ import annotations

from pathlib import Path

import shapely
from shapely.geometry.base import BaseGeometry

from arena_studio.core.export.meta import provenance, write_export_bytes
from arena_studio.core.export.text_safety import escape_line, unescape_line
from arena_studio.core.geometry.regions import (
    free_space,
    obstacle_geometry,
    open_area,
    polygon,
    walkable_area,
)
from arena_studio.core.scene.model import Scene


def labelled_geometries(scene: Scene) -> list[tuple[str, BaseGeometry]]:
    out: list[tuple[str, BaseGeometry]] = []
    out += [(f"room:{escape_line(r.id)}", polygon(r.outline)) for r in scene.rooms]
    out += [(f"obstacle:{escape_line(o.id)}", obstacle_geometry(o)) for o in scene.obstacles]
    out.append(("walkable", walkable_area(scene)))
    out.append(("open_area", open_area(scene)))
    radii: dict[float, list[str]] = {}
    for agent in scene.agents:
        radii.setdefault(float(agent.radius), []).append(escape_line(agent.id))
    for radius, ids in sorted(radii.items()):
        out.append((f"free_space:r={radius:g}:{','.join(ids)}", free_space(scene, radius)))
    return out


def wkt_text(scene: Scene) -> str:
    meta = provenance(scene, "wkt")
    lines = [
        f"# arena-studio WKT export of scene '{escape_line(scene.name)}' (units: metres, x "
        "right, y up)",
        f"# content_hash: {meta['content_hash']}",
        f"# caution: {meta['caution']}",
        "# each line: LABEL<TAB>WKT",
    ]
    for label, geom in labelled_geometries(scene):
        lines.append(f"{label}\t{shapely.to_wkt(geom, rounding_precision=-1, trim=True)}")
    return "\n".join(lines) + "\n"


def read_wkt_lines(text: str) -> list[tuple[str, BaseGeometry]]:
    """Parse an export back into (label, geometry) pairs (comments skipped)."""
    out = []
    for line in text.splitlines():
        if not line.strip() or line.startswith("#"):
            continue
        label, _, wkt = line.partition("\t")
        out.append((unescape_line(label), shapely.from_wkt(wkt)))
    return out


def write_wkt(scene: Scene, path: Path) -> list[Path]:
    write_export_bytes(path, wkt_text(scene).encode("utf-8"))
    return [path]


__all__ = ["labelled_geometries", "read_wkt_lines", "wkt_text", "write_wkt"]
