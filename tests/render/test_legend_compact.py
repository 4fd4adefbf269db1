"""The compact legend: chips that flow within the width given, never overlap, always list the
agents, drop roles and marks to stay under the height given, and find the agent under a point.

Reference: shapely/GEOS box geometry (OGC Simple Features ``intersects``/``within``) for the
chips' rectangles; the agent count from the episode's pose array.
"""

from __future__ import annotations

import numpy as np
import pytest
import shapely
from PySide6.QtCore import QPointF
from PySide6.QtGui import QImage, QPainter

from arena_studio.core.tape.episode import Episode
from arena_studio.render.legend_compact import agent_at, compact_layout, paint_compact_legend
from arena_studio.render.options import FrameOptions
from arena_studio.render.theme import load_theme

from .demo_episode import demo_episode, greenhouse


def _box(r) -> shapely.Polygon:
    return shapely.box(r.left(), r.top(), r.right(), r.bottom())


@pytest.mark.parametrize("width", [180.0, 300.0, 520.0])
def test_chips_flow_inside_the_width_without_overlap(qapp, width):
    scene = greenhouse()
    ep = demo_episode(scene)
    layout = compact_layout(scene, ep, FrameOptions(), width, 1000.0)
    outline = shapely.box(0, 0, layout.size.width(), layout.size.height())
    assert layout.size.width() <= width
    boxes = [_box(c.rect) for c in layout.chips]
    for i, a in enumerate(boxes):
        assert a.within(outline)
        for b in boxes[i + 1 :]:
            assert not a.intersects(b) or a.intersection(b).area == 0
    agents = [c.arg for c in layout.chips if c.kind == "agent"]
    assert agents == list(range(ep.poses.shape[1]))  # every agent, in scene order
    kinds = {c.kind for c in layout.chips}
    assert "role" in kinds and "mark" in kinds  # room enough: everything shown


def test_sections_are_dropped_to_fit_the_height_agents_stay(qapp):
    scene = greenhouse()
    ep = demo_episode(scene)
    full = compact_layout(scene, ep, FrameOptions(), 260.0, 1000.0)
    short = compact_layout(scene, ep, FrameOptions(), 260.0, full.size.height() - 1)
    assert short.size.height() < full.size.height()
    assert {c.kind for c in short.chips} < {c.kind for c in full.chips}
    tiny = compact_layout(scene, ep, FrameOptions(), 260.0, 1.0)
    assert {c.kind for c in tiny.chips} == {"agent"}
    only = compact_layout(scene, ep, FrameOptions(), 260.0, 1000.0, sections_up_to=1)
    assert {c.kind for c in only.chips} == {"agent"}


def test_a_big_team_is_capped_and_counted(qapp):
    scene = greenhouse()
    poses = np.zeros((2, 40, 3))
    poses[:, :, 0] = np.linspace(1.0, 9.0, 40)
    poses[:, :, 1] = 2.0
    layout = compact_layout(scene, Episode(0, 0.1, poses), FrameOptions(), 400.0, 1000.0)
    agents = [c for c in layout.chips if c.kind == "agent"]
    more = [c for c in layout.chips if c.kind == "more"]
    assert len(agents) < 40 and len(more) == 1
    assert str(40 - len(agents)) in more[0].text  # says how many are left out


def test_agent_at_finds_each_chip_and_paint_marks_the_focused_one(qapp):
    scene = greenhouse()
    ep = demo_episode(scene)
    layout = compact_layout(scene, ep, FrameOptions(), 300.0, 1000.0)
    for chip in layout.chips:
        expected = chip.arg if chip.kind == "agent" else None
        assert agent_at(layout, chip.rect.center()) == expected
    assert agent_at(layout, QPointF(-5, -5)) is None
    theme = load_theme("light")

    def drawn(options: FrameOptions) -> QImage:
        image = QImage(320, 200, QImage.Format.Format_ARGB32)
        image.fill(0)
        painter = QPainter(image)
        paint_compact_legend(painter, QPointF(0, 0), layout, theme, options)
        painter.end()
        return image

    plain, focused = drawn(FrameOptions()), drawn(FrameOptions(focus=1))
    chip = next(c for c in layout.chips if c.kind == "agent" and c.arg == 1)
    other = next(c for c in layout.chips if c.kind == "agent" and c.arg == 0)

    def differs(rect) -> int:
        return sum(
            plain.pixel(x, y) != focused.pixel(x, y)
            for x in range(int(rect.left()), int(rect.right()))
            for y in range(int(rect.top()), int(rect.bottom()))
        )

    assert differs(chip.rect) > 0 and differs(other.rect) == 0  # only its chip changes
