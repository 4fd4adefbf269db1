"""SVG export: a clean vector drawing of the scene, sized in millimetres.

Drawn with xml.etree (no Qt): the walkable area, obstacles, walls, landmarks (reach circle,
mark and a ``<text>`` label), starts (an arrow for a pose, the outline for a region), a scale
bar and a caution line. Colours come from our light palette
(resources/palettes/light.json). One SVG user unit is one millimetre on paper; the drawing
is scaled so its longer side is at most :data:`MAX_SIDE_MM`. The content hash and caution
are in ``<metadata>`` and ``<desc>``.
"""

from __future__ import annotations

import contextlib
import json
import math
import xml.etree.ElementTree as ET
from collections.abc import Iterator, Sequence
from pathlib import Path

from shapely.geometry import Polygon
from shapely.geometry.base import BaseGeometry

from arena_studio.core.export.label_place import Box, LabelPlacement, place_labels, start_marks
from arena_studio.core.export.meta import provenance, write_export_bytes
from arena_studio.core.geometry.regions import bounds, obstacle_geometry, open_area, walkable_area
from arena_studio.core.resources import resource_path
from arena_studio.core.scene.model import Scene

SVG_NS = "http://www.w3.org/2000/svg"
MAX_SIDE_MM = 250.0
MARGIN_MM = 12.0
NICE_STEPS = (1, 2, 5)
MARK_MM = 1.1  # radius of a landmark's dot
LABEL_FONT_MM = 3.0
LABEL_PAD_MM = 0.4  # kept clear around a label's text
START_FONT_MM = 2.6


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

    def __init__(self, scene: Scene, labels: Sequence[Box] = ()) -> None:
        """The scene's bounds set the scale; the paper then grows to hold ``labels`` (world
        boxes placed outside the rooms), so the scene keeps its size on paper."""
        minx, miny, maxx, maxy = bounds(scene, margin=0.5)
        span = max(maxx - minx, maxy - miny, 1e-9)
        self.scale = MAX_SIDE_MM / span  # mm per metre
        edge = 1.0 / self.scale  # 1 mm of paper beyond a label
        for x0, y0, x1, y1 in labels:
            minx, miny = min(minx, x0 - edge), min(miny, y0 - edge)
            maxx, maxy = max(maxx, x1 + edge), max(maxy, y1 + edge)
        self.minx, self.maxy = minx, maxy
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


@contextlib.contextmanager
def _part(
    parent: ET.Element, what: str, failures: list[str], c: _Canvas, **attrs: object
) -> Iterator[ET.Element]:
    """A ``<g>`` for one part of the drawing. When the part cannot be drawn (geometry that
    GEOS cannot process, values out of range) the group is emptied and holds a visible
    note instead, and ``could not draw WHAT (reason)`` goes to ``failures`` once."""
    group = _el(parent, "g", **attrs)
    try:
        yield group
    except Exception as exc:  # an export never fails on one bad part of a scene
        for child in list(group):
            group.remove(child)
        text = " ".join(str(exc).split())[:160]
        message = f"could not draw {what} ({type(exc).__name__}: {text})"
        if message not in failures:
            failures.append(message)
        group.set("class", "could-not-draw")
        note = _el(
            group,
            "text",
            x=f"{MARGIN_MM:.3f}",
            y=f"{MARGIN_MM + 4.0 * len(failures):.3f}",
            font_family="sans-serif",
            font_size="3",
            fill="#c82828",
        )
        note.text = f"could not draw {what}"


def _safe_places(scene: Scene, failures: list[str]) -> tuple[LabelPlacement, ...]:
    try:
        return _label_places(scene, _Canvas(scene).scale)
    except Exception as exc:  # labels then sit nowhere; the landmarks part says so
        failures.append(f"could not place the labels ({type(exc).__name__})")
        return ()


def svg_tree(
    scene: Scene, theme: str = "light", failures: list[str] | None = None
) -> ET.ElementTree:
    """The drawing; parts that cannot be drawn become visible notes listed in ``failures``."""
    failures = [] if failures is None else failures
    colors = palette(theme)
    places = _safe_places(scene, failures)
    c = _Canvas(scene, [p.box for p in places])
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

    with _part(root, "the rooms", failures, c, id="walkable") as area:
        _el(
            area,
            "path",
            d=c.path(walkable_area(scene)),
            fill=colors["room_fill"],
            fill_rule="evenodd",
            stroke="none",
        )
    with _part(root, "the obstacles", failures, c, id="obstacles") as obstacles:
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
    with _part(root, "the walls", failures, c, id="walls") as walls:
        _el(
            walls,
            "path",
            d=c.path(open_area(scene)),
            fill="none",
            stroke=colors["wall"],
            stroke_width="0.6",
            stroke_linejoin="round",
        )

    fill, opacity = _color(colors["start_region"])
    with _part(root, "the starts", failures, c, id="starts") as starts:
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
            label_xy = c.xy(*_start_label_point(agent.start.pose, agent.start.region))
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

    with _part(root, "the landmarks", failures, c, id="landmarks") as marks:
        # labels that could not be placed are left out; the marks are still drawn
        spots: Sequence[LabelPlacement | None] = places or [None] * len(scene.landmarks)
        if scene.landmarks and not places:
            note = _el(marks, "text", x=f"{MARGIN_MM:.3f}", y=f"{MARGIN_MM:.3f}", font_size="3")
            note.set("fill", "#c82828")
            note.text = "could not place the labels"
        for lm, place in zip(scene.landmarks, spots, strict=True):
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
            _el(group, "circle", cx=f"{cx:.3f}", cy=f"{cy:.3f}", r=f"{MARK_MM}", fill=color)
            if place is None:
                continue
            x, y, anchor = _label_xy(c, place)
            if not place.clear:  # no clear place was left: a backdrop, as on screen
                _label_backdrop(group, c, place.box, colors["room_fill"])
            label = _el(
                group,
                "text",
                x=f"{x:.3f}",
                y=f"{y:.3f}",
                text_anchor=anchor,
                font_family="sans-serif",
                font_size=f"{LABEL_FONT_MM:g}",
                fill=colors["landmark_text"],
            )
            label.text = lm.label

    with _part(root, "the scale bar", failures, c, id="scale-bar") as scale_bar:
        bar_m = nice_length((c.width - 2 * MARGIN_MM) / c.scale / 4)
        x0, y0 = MARGIN_MM, c.height - 8.0
        x1 = x0 + bar_m * c.scale
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


def text_box_mm(text: str, font_mm: float) -> tuple[float, float]:
    """Approximate (width, height) in mm of a sans-serif text line, padding included.

    Sans-serif glyphs average about 0.55 em wide and a line (ascent + descent) is about
    1.2 em (common practice, no source); no font is at hand to measure.
    """
    return (0.55 * font_mm * len(text) + 2 * LABEL_PAD_MM, 1.2 * font_mm + 2 * LABEL_PAD_MM)


def _start_label_point(
    pose: tuple[float, float, float] | None, region: tuple[tuple[float, float], ...] | None
) -> tuple[float, float]:
    """World point an agent's id label hangs from: its start pose, or its region's centre."""
    if pose is not None:
        return (pose[0], pose[1])
    x, y = Polygon(region).centroid.coords[0]
    return (float(x), float(y))


def _label_places(scene: Scene, scale: float) -> tuple[LabelPlacement, ...]:
    """Label boxes in world metres at ``scale`` mm per metre, clear of the start marks and
    their id labels. No frame: the paper grows to hold a label set outside the rooms."""
    mm = 1.0 / scale  # metres per mm
    sizes = [text_box_mm(lm.label, LABEL_FONT_MM) for lm in scene.landmarks]
    avoid = start_marks(scene, 0.0, 1.8)
    for agent in scene.agents:  # the id text: 2 mm right of the point, baseline 3.5 mm below
        x, y = _start_label_point(agent.start.pose, agent.start.region)
        w = 0.55 * START_FONT_MM * len(agent.id)
        top, bottom = 3.5 - 0.95 * START_FONT_MM, 3.5 + 0.25 * START_FONT_MM
        avoid.append((x + 2.0 * mm, y - bottom * mm, x + (2.0 + w) * mm, y - top * mm))
    return place_labels(
        scene,
        [(w * mm, h * mm) for w, h in sizes],
        MARK_MM * mm,
        0.7 * mm,
        clearance=0.3 * mm,  # half the 0.6 mm wall stroke
        avoid=avoid,
    )


def _label_backdrop(group: ET.Element, c: _Canvas, box: Box, room_fill: str) -> None:
    """The screen's translucent label backdrop (drawing.label), so a label that must cross
    a wall or another mark stays readable."""
    x0, y0 = c.xy(box[0], box[3])
    x1, y1 = c.xy(box[2], box[1])
    fill, opacity = _color(room_fill)
    _el(
        group,
        "rect",
        x=f"{x0:.3f}",
        y=f"{y0:.3f}",
        width=f"{x1 - x0:.3f}",
        height=f"{y1 - y0:.3f}",
        rx="0.6",
        fill=fill,
        fill_opacity=f"{0.8 * float(opacity):.3f}",
    )


def _label_xy(c: _Canvas, place: LabelPlacement) -> tuple[float, float, str]:
    """SVG text x, baseline y (mm, y down) and text-anchor for a placed label box."""
    x0, y0, x1, y1 = place.box
    left, top = c.xy(x0, y1)
    right, bottom = c.xy(x1, y0)
    # the baseline sits about 0.35 em below the line's middle (DejaVu-like metrics
    # [memory]: ascent 0.93 em, descent 0.24 em)
    baseline = (top + bottom) / 2 + 0.35 * LABEL_FONT_MM
    if place.align == "left":
        return left + LABEL_PAD_MM, baseline, "start"
    if place.align == "right":
        return right - LABEL_PAD_MM, baseline, "end"
    return (left + right) / 2, baseline, "middle"


def svg_bytes(scene: Scene, theme: str = "light", failures: list[str] | None = None) -> bytes:
    tree = svg_tree(scene, theme, failures)
    ET.indent(tree)
    root = tree.getroot()
    assert root is not None
    return ET.tostring(root, encoding="utf-8", xml_declaration=True) + b"\n"


def write_svg(scene: Scene, path: Path, failures: list[str] | None = None) -> list[Path]:
    write_export_bytes(path, svg_bytes(scene, failures=failures))
    return [path]


__all__ = [
    "LABEL_FONT_MM",
    "LABEL_PAD_MM",
    "MARGIN_MM",
    "MARK_MM",
    "MAX_SIDE_MM",
    "NICE_STEPS",
    "START_FONT_MM",
    "SVG_NS",
    "nice_length",
    "palette",
    "svg_bytes",
    "svg_tree",
    "text_box_mm",
    "write_svg",
]
