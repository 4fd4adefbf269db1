"""Landmark labels as the scene painter draws them: clear of walls and of each other.

Reference: shapely/GEOS for the OGC Simple Features predicates (OGC 06-103r4 6.1.15): a drawn
label box (the rectangle ``drawing.label`` returns, mapped back to metres) must lie ``within``
the open area or, for a wall-mounted mark, be ``disjoint`` from the rooms; two boxes collide
when their interiors meet (DE-9IM ``T********``). Pillow reads the painted image back (an
independent PNG decoder) to see that text was drawn inside each box.
"""

from __future__ import annotations

import io

import numpy as np
import pytest
from PIL import Image
from PySide6.QtCore import QRectF
from PySide6.QtGui import QImage, QPainter
from shapely.geometry import Polygon, box

from arena_studio.core.geometry.regions import open_area, walkable_area
from arena_studio.core.resources import demo_path
from arena_studio.core.scene.model import Agent, Landmark, Room, Scene, Start, load_scene
from arena_studio.render import scene_painter
from arena_studio.render.frame import png_bytes
from arena_studio.render.scene_painter import SceneOptions, label_places, paint_scene
from arena_studio.render.theme import load_theme
from arena_studio.render.view import ViewTransform

INTERIORS_MEET = "T********"  # DE-9IM, OGC 06-103r4 6.1.15
DEMOS = ["lab-wing", "greenhouse", "parking-level"]


def _paint(scene: Scene, size: tuple[int, int], monkeypatch: pytest.MonkeyPatch):
    """Paint the scene; return the image, the view and every label rectangle drawn."""
    drawn: list[QRectF] = []
    real = scene_painter.label

    def recording(*args, **kwargs):
        rect = real(*args, **kwargs)
        drawn.append(rect)
        return rect

    monkeypatch.setattr(scene_painter, "label", recording)
    img = QImage(size[0], size[1], QImage.Format.Format_RGB32)
    view = ViewTransform.fit_scene(scene, QRectF(0, 0, *size))
    painter = QPainter(img)
    paint_scene(painter, scene, view, load_theme("light"), SceneOptions(scale_bar=False), size)
    painter.end()
    return img, view, drawn


def _world_box(view: ViewTransform, rect: QRectF) -> Polygon:
    x0, y1 = view.to_world(rect.left(), rect.top())
    x1, y0 = view.to_world(rect.right(), rect.bottom())
    return box(x0, y0, x1, y1)


def _corridor_scene() -> Scene:
    """A 12 m x 1.4 m corridor with five free landmarks 0.7 m apart and a wall sign."""
    corridor = Room("c", ((0.0, 0.0), (12.0, 0.0), (12.0, 1.4), (0.0, 1.4)))
    lms = [
        Landmark(f"m{i}", f"marker no. {i}", (3.0 + 0.7 * i, 0.7), 0.3, "free") for i in range(5)
    ]
    lms.append(Landmark("w", "sign", (0.0, 0.7), 0.3, "wall"))
    agent = Agent("a", 0.2, 1.0, 1.0, Start(pose=(10.0, 0.7, 0.0)))
    return Scene(name="corridor", rooms=(corridor,), landmarks=tuple(lms), agents=(agent,))


def _check_drawn(scene: Scene, view: ViewTransform, drawn: list[QRectF]) -> None:
    assert len(drawn) == len(scene.landmarks)  # every label drawn once, none dropped
    boxes = [_world_box(view, r) for r in drawn]
    tol = 1e-6  # floating round trip metres -> pixels -> metres
    area, rooms = open_area(scene).buffer(tol), walkable_area(scene).buffer(-tol)
    for lm, b in zip(scene.landmarks, boxes, strict=True):
        assert b.within(area) or (lm.mount == "wall" and b.disjoint(rooms)), lm.label
    for i, b in enumerate(boxes):
        for j in range(i + 1, len(boxes)):
            assert not b.buffer(-tol).relate_pattern(boxes[j], INTERIORS_MEET), (i, j)


def test_corridor_labels_are_drawn_clear_of_walls_and_each_other(qapp, monkeypatch):
    scene = _corridor_scene()
    _, view, drawn = _paint(scene, (1000, 300), monkeypatch)
    _check_drawn(scene, view, drawn)


@pytest.mark.parametrize("name", DEMOS)
def test_demo_scene_labels_are_clear_in_a_still(qapp, monkeypatch, name):
    scene = load_scene(demo_path(f"{name}.scene.json"))
    img, view, drawn = _paint(scene, (1280, 720), monkeypatch)
    _check_drawn(scene, view, drawn)
    assert all(p.clear for p in label_places(scene, view, 1.0, (1280, 720), True))
    # Pillow: each box holds dark text pixels (landmark_text is near-black on the floor)
    rgb = np.asarray(Image.open(io.BytesIO(png_bytes(img))).convert("L"), dtype=np.int16)
    for rect in drawn:
        inner = rgb[
            int(rect.top()) + 3 : int(rect.bottom()) - 2,
            int(rect.left()) + 3 : int(rect.right()) - 2,
        ]
        assert (inner < 110).sum() > 20, rect


def test_labels_move_with_the_zoom_but_stay_clear(qapp, monkeypatch):
    # a small still: text is larger against the rooms, so more labels have to move; the
    # ones that found a clear place still must not meet (shapely)
    scene = load_scene(demo_path("lab-wing.scene.json"))
    view = ViewTransform.fit_scene(scene, QRectF(0, 0, 640, 400))
    places = label_places(scene, view, 1.0, (640, 400), True)
    clear = [box(*p.box) for p in places if p.clear]
    for i, b in enumerate(clear):
        for j in range(i + 1, len(clear)):
            assert not b.relate_pattern(clear[j], INTERIORS_MEET)
    assert places == label_places(scene, view, 1.0, (640, 400), True)  # deterministic
