"""SVG export: a clean vector drawing of the scene, sized in millimetres.

Drawn with xml.etree (no Qt): the walkable area, obstacles, walls, landmarks (reach circle,
mark and a ``<text>`` label), starts (an arrow for a pose, the outline for a region), a scale
bar and a caution line. Colours come from our light palette
(resources/palettes/light.json). One SVG user unit is one millimetre on paper; the drawing
is scaled so its longer side is at most :data:`MAX_SIDE_MM`. The content hash and caution
are in ``<metadata>`` and ``<desc>``.
"""

from __future__ import annotations

import json
import math
import xml.etree.ElementTree as ET
from pathlib import Path

from shapely.geometry import Polygon
from shapely.geometry.base import BaseGeometry

from ..geometry import bounds, inward_normals, obstacle_geometry, open_area, walkable_area
from ..resources import resource_path
from ..scene import Scene
from .meta import provenance, write_export_bytes

SVG_NS = "http://www.w3.org/2000/svg"
MAX_SIDE_MM = 250.0
MARGIN_MM = 12.0
NICE_STEPS = (1, 2, 5)


def palette(name: str = "light") -> dict[str, str]:
    data = json.loads(resource_path("palettes", f"{name}.json").read_text(encoding="utf-8"))
    return dict(data["colors"])


def _color(hex_color: str) -> tuple[str, str]:
    """'#RRGGBBAA' -> ('#RRGGBB', opacity) (SVG 1.1 readers ignore 8-digit colours)."""
    if len(hex_color) == 9:
        return hex_color[:7], f"{int(hex_color[7:], 16) / 255:.3f}"
    return hex_color, "1"


def nice_length(target: float) -> float:
    """Largest 1, 2 or 5 times a power of ten not above ``target`` (scale bar length)."""
    if target <= 0:
        return 1.0
    power = 10 ** math.floor(math.log10(target))
    return max(s * power for s in NICE_STEPS if s * power <= target)


class _Canvas:
    """World metres (y up) -> paper millimetres (y down)."""

    def __init__(self, scene: Scene) -> None:
        minx, miny, maxx, maxy = bounds(scene, margin=0.5)
        self.minx, self.maxy = minx, maxy
        span = max(maxx - minx, maxy - miny, 1e-9)
        self.scale = MAX_SIDE_MM / span  # mm per metre
        self.width = (maxx - minx) * self.scale + 2 * MARGIN_MM
        self.height = (maxy - miny) * self.scale + 2 * MARGIN_MM + 10.0  # room for the bar

    def xy(self, x: float, y: float) -> tuple[float, float]:
        return (
            MARGIN_MM + (x - self.minx) * self.scale,
            MARGIN_MM + (self.maxy - y) * self.scale,
        )

    def path(self, geom: BaseGeometry) -> str:
        parts = []
        for poly in getattr(geom, "geoms", [geom]):
            if not isinstance(poly, Polygon) or poly.is_empty:
                continue
            for ring in (poly.exterior, *poly.interiors):
                pts = [self.xy(x, y) for x, y in ring.coords[:-1]]
                parts.append("M " + " L ".join(f"{px:.3f} {py:.3f}" for px, py in pts) + " Z")
        return " ".join(parts)


def _el(parent: ET.Element, tag: str, **attrs: object) -> ET.Element:
    return ET.SubElement(parent, tag, {k.replace("_", "-"): str(v) for k, v in attrs.items()})


def svg_tree(scene: Scene, theme: str = "light") -> ET.ElementTree:
    colors = palette(theme)
    c = _Canvas(scene)
    meta = provenance(scene, "svg")
    root = ET.Element(
        "svg",
        {
            "xmlns": SVG_NS,
            "version": "1.1",
            "width": f"{c.width:.2f}mm",
            "height": f"{c.height:.2f}mm",
            "viewBox": f"0 0 {c.width:.3f} {c.height:.3f}",
        },
    )
    ET.SubElement(root, "title").text = scene.name
    ET.SubElement(
        root, "desc"
    ).text = f"{meta['caution']} Scene content hash {meta['content_hash']}."
    metadata = ET.SubElement(root, "metadata")
    metadata.text = json.dumps(meta, sort_keys=True)
    _el(
        root,
        "rect",
        x=0,
        y=0,
        width=f"{c.width:.3f}",
        height=f"{c.height:.3f}",
        fill=colors["background"],
    )

    area = _el(root, "g", id="walkable")
    _el(
        area,
        "path",
        d=c.path(walkable_area(scene)),
        fill=colors["room_fill"],
        fill_rule="evenodd",
        stroke="none",
    )
    obstacles = _el(root, "g", id="obstacles")
    for obstacle in scene.obstacles:
        _el(
            obstacles,
            "path",
            id=f"obstacle-{obstacle.id}",
            d=c.path(obstacle_geometry(obstacle)),
            fill=colors["obstacle_fill"],
            stroke=colors["obstacle_edge"],
            stroke_width="0.3",
        )
    walls = _el(root, "g", id="walls")
    _el(
        walls,
        "path",
        d=c.path(open_area(scene)),
        fill="none",
        stroke=colors["wall"],
        stroke_width="0.6",
        stroke_linejoin="round",
    )

    starts = _el(root, "g", id="starts")
    fill, opacity = _color(colors["start_region"])
    for agent in scene.agents:
        if agent.start.region is not None:
            _el(
                starts,
                "path",
                id=f"start-{agent.id}",
                d=c.path(Polygon(agent.start.region)),
                fill=fill,
                fill_opacity=opacity,
                stroke=colors["start"],
                stroke_width="0.3",
                stroke_dasharray="1.2 0.8",
            )
        elif agent.start.pose is not None:
            x, y, heading = agent.start.pose
            r = max(agent.radius * c.scale, 1.2)
            tip = c.xy(
                x + math.cos(heading) * agent.radius * 1.8,
                y + math.sin(heading) * agent.radius * 1.8,
            )
            cx, cy = c.xy(x, y)
            group = _el(starts, "g", id=f"start-{agent.id}")
            _el(
                group,
                "circle",
                cx=f"{cx:.3f}",
                cy=f"{cy:.3f}",
                r=f"{r:.3f}",
                fill="none",
                stroke=colors["start"],
                stroke_width="0.4",
            )
            _el(
                group,
                "line",
                x1=f"{cx:.3f}",
                y1=f"{cy:.3f}",
                x2=f"{tip[0]:.3f}",
                y2=f"{tip[1]:.3f}",
                stroke=colors["start"],
                stroke_width="0.5",
            )
        label_xy = c.xy(
            *(
                agent.start.pose[:2]
                if agent.start.pose
                else Polygon(agent.start.region).centroid.coords[0]
            )
        )
        text = _el(
            starts,
            "text",
            x=f"{label_xy[0] + 2:.3f}",
            y=f"{label_xy[1] + 3.5:.3f}",
            font_family="sans-serif",
            font_size="2.6",
            fill=colors["start"],
        )
        text.text = agent.id

    marks = _el(root, "g", id="landmarks")
    normals = inward_normals(scene)
    for lm, (nx, ny) in zip(scene.landmarks, normals, strict=True):
        color = colors["landmark_wall" if lm.mount == "wall" else "landmark_free"]
        cx, cy = c.xy(*lm.position)
        group = _el(marks, "g", id=f"landmark-{lm.id}")
        _el(
            group,
            "circle",
            cx=f"{cx:.3f}",
            cy=f"{cy:.3f}",
            r=f"{lm.reach_radius * c.scale:.3f}",
            fill="none",
            stroke=color,
            stroke_width="0.3",
            stroke_dasharray="0.8 0.6",
        )
        _el(group, "circle", cx=f"{cx:.3f}", cy=f"{cy:.3f}", r="1.1", fill=color)
        # Labels go into the room: a wall landmark's label follows its wall's inward normal
        # (left of a right-hand wall, below a top wall); a free one runs right of its mark,
        # or left where it would leave the paper (sans-serif glyphs average about 0.55 em
        # wide; common practice, no source).
        x, y, anchor = _label_place(cx, cy, nx, ny, lm.mount == "wall")
        if anchor == "start" and x + 0.55 * 3.0 * len(lm.label) > c.width - 1.0:
            x, anchor = cx - 1.8, "end"
        label = _el(
            group,
            "text",
            x=f"{x:.3f}",
            y=f"{y:.3f}",
            text_anchor=anchor,
            font_family="sans-serif",
            font_size="3",
            fill=colors["landmark_text"],
        )
        label.text = lm.label

    bar_m = nice_length((c.width - 2 * MARGIN_MM) / c.scale / 4)
    x0, y0 = MARGIN_MM, c.height - 8.0
    x1 = x0 + bar_m * c.scale
    scale_bar = _el(root, "g", id="scale-bar")
    _el(
        scale_bar,
        "path",
        d=f"M {x0:.3f} {y0 - 1.2:.3f} L {x0:.3f} {y0:.3f} L {x1:.3f} "
        f"{y0:.3f} L {x1:.3f} {y0 - 1.2:.3f}",
        fill="none",
        stroke=colors["scale_bar"],
        stroke_width="0.5",
    )
    bar_text = _el(
        scale_bar,
        "text",
        x=f"{(x0 + x1) / 2:.3f}",
        y=f"{y0 - 1.8:.3f}",
        text_anchor="middle",
        font_family="sans-serif",
        font_size="3",
        fill=colors["scale_bar"],
    )
    bar_text.text = f"{bar_m:g} m"
    note = _el(
        root,
        "text",
        x=f"{c.width - MARGIN_MM:.3f}",
        y=f"{c.height - 3.0:.3f}",
        text_anchor="end",
        font_family="sans-serif",
        font_size="2.2",
        fill=colors["text_muted"],
    )
    note.text = "Simulation aid, not a safety assessment."
    return ET.ElementTree(root)


def _label_place(
    cx: float, cy: float, nx: float, ny: float, on_wall: bool
) -> tuple[float, float, str]:
    """Text position (mm, y down) and text-anchor for a landmark label."""
    gap = 1.8
    if on_wall and abs(nx) >= abs(ny):  # a vertical wall: beside the mark, into the room
        return (cx + gap, cy + 1.0, "start") if nx > 0 else (cx - gap, cy + 1.0, "end")
    if on_wall:  # a horizontal wall: below a top wall, above a bottom one (y runs down)
        return (cx, cy + gap + 2.6, "middle") if ny < 0 else (cx, cy - gap - 0.6, "middle")
    return cx + gap, cy - gap, "start"


def svg_bytes(scene: Scene, theme: str = "light") -> bytes:
    tree = svg_tree(scene, theme)
    ET.indent(tree)
    root = tree.getroot()
    assert root is not None
    return ET.tostring(root, encoding="utf-8", xml_declaration=True) + b"\n"


def write_svg(scene: Scene, path: Path) -> list[Path]:
    write_export_bytes(path, svg_bytes(scene))
    return [path]
