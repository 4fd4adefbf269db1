"""Side by side on a 1280x800 screen: both panes keep a legend, inside the pane and off the
scene; team targets' arrival texts stay in view; captions and legends stay clear of the name
tags; the explanation line keeps its height bounded so the canvas keeps its share.

References: rectangles compared with shapely/GEOS (OGC Simple Features ``intersects`` and
``contains``); the scene's bounds from core.geometry.regions.bounds mapped to pixels by Qt's
QGraphicsView.mapFromScene; the window size a 1280x800 screen gives
(app.window_size.first_size, the size the app opens at).
"""

from __future__ import annotations

import math
from pathlib import Path

import shapely
from PySide6.QtCore import QPointF, QRect
from PySide6.QtGui import QFontMetricsF, QImage, QPainter

from arena_studio.app.replay.partner import best_success
from arena_studio.app.window_size import first_size
from arena_studio.core.geometry.regions import bounds
from arena_studio.render.drawing import font
from arena_studio.render.episode_cache import episode_cache
from arena_studio.render.episode_painter import text_boxes
from arena_studio.render.name_tags import paint_name_tags
from arena_studio.render.view import ViewTransform

REPO = Path(__file__).resolve().parents[2]
GREEDY = REPO / "scenes" / "greenhouse-greedy.tape"


def _box(r) -> shapely.Polygon:
    return shapely.box(r.left(), r.top(), r.right(), r.bottom())


def compare_at_1280(make_window, qtbot):
    """The main window at the size it opens at on a 1280x800 screen, side by side."""
    win = make_window()
    win.resize(first_size(QRect(0, 0, 1280, 800)))
    assert win.open_path(GREEDY)
    page = win.replay_page
    assert page.wait_loaded()
    assert page.session.wait_summaries(60000)
    qtbot.waitUntil(lambda: page.session.summaries_done, timeout=10000)
    rows = page.episode_list.model.summaries()
    shown = next(r.index for r in rows if best_success(rows, r.index) is not None)
    page.select_episode(shown)
    qtbot.waitUntil(lambda: page.prepared is not None and page.prepared.episode.index == shown)
    assert page.compare_with_best_success()
    qtbot.waitUntil(lambda: page.compare is not None and page.canvas_b.isVisible(), timeout=10000)
    qtbot.wait(100)  # the first-show dock sizing runs from the event loop
    page.fit_views()
    return win, page


def test_both_panes_keep_a_legend_inside_the_pane_and_off_the_scene(make_window, qtbot):
    _win, page = compare_at_1280(make_window, qtbot)
    minx, miny, maxx, maxy = bounds(page.scene_value)
    for canvas in (page.canvas, page.canvas_b):
        vp = canvas.viewport().rect()
        assert vp.width() < 520  # narrow: the old legend was hidden here
        legend = canvas.legend_rect()
        assert legend is not None, canvas.caption
        assert _box(vp).contains(_box(legend)), (legend, vp)
        corners = [canvas.mapFromScene(QPointF(x, y)) for x, y in ((minx, miny), (maxx, maxy))]
        scene_px = shapely.box(
            min(c.x() for c in corners), min(c.y() for c in corners),
            max(c.x() for c in corners), max(c.y() for c in corners),
        )  # fmt: skip
        assert not scene_px.intersects(_box(legend)), (canvas.caption, legend, scene_px.bounds)
        agents = [a for a, _r in canvas.legend_agent_rows()]
        assert agents == list(range(page.prepared.episode.agent_count))  # every agent listed
        # each team target's arrival text ("rover-2 3.2 s", centred under it) stays in view
        metrics = QFontMetricsF(font(11, bold=True))
        half = max(metrics.horizontalAdvance(f"{a.id} 99.9 s") for a in page.scene_value.agents)
        cache = episode_cache(canvas.scene_value, canvas.layer_episode.episode)
        assert cache.team_indices()
        for i in cache.team_indices():
            at = canvas.mapFromScene(QPointF(*canvas.scene_value.landmarks[i].position))
            assert at.x() - half / 2 >= 0 and at.x() + half / 2 <= vp.width(), (i, at)


def _tag_boxes(canvas, step: int) -> list[shapely.Polygon]:
    """The name tags as the episode painter places them in this pane at ``step``."""
    vp = canvas.viewport()
    t = canvas.viewportTransform()
    view = ViewTransform(math.hypot(t.m11(), t.m12()), t.dx(), t.dy())
    opts = canvas.options
    cache = episode_cache(canvas.scene_value, canvas.layer_episode.episode)
    size = (float(vp.width()), float(vp.height()))
    blocked = text_boxes(cache, view, 1.0, opts, size) + list(opts.tag_keep_out)
    image = QImage(vp.width(), vp.height(), QImage.Format.Format_ARGB32)
    painter = QPainter(image)
    step = min(step, cache.steps - 1)
    tags = paint_name_tags(painter, cache, step, view, canvas.theme, opts, 1.0, blocked)
    painter.end()
    return [shapely.box(*box) for _agents, box in tags]


def test_captions_and_legends_stay_clear_of_name_tags(make_window, qtbot):
    _win, page = compare_at_1280(make_window, qtbot)
    steps = page.clock.steps
    for canvas in (page.canvas, page.canvas_b):
        canvas.viewport().repaint()  # draws the caption, recording where it went
        assert canvas.caption and canvas.caption_box is not None
        keep = [_box(canvas.caption_box), _box(canvas.legend_rect())]
        for step in (0, steps // 3, 2 * steps // 3, steps - 1):
            tags = _tag_boxes(canvas, step)
            assert tags  # three agents: tags are drawn
            for tag in tags:
                assert not any(tag.intersects(k) for k in keep), (canvas.caption, step, tag)


def test_explanation_height_is_bounded_and_the_canvas_keeps_its_share(make_window, qtbot):
    _win, page = compare_at_1280(make_window, qtbot)
    line = page.verdict_box
    assert line.height() <= line.cap()
    assert "who went where</a>" in page.verdict.text()  # the compared episode in one line
    page.verdict.toggle_compared_details()
    assert "Compared: episode" in page.verdict.text() and "less</a>" in page.verdict.text()
    qtbot.wait(20)
    assert line.height() <= line.cap()
    # the panes get at least 40 % of the replay page's height (they had 35 % before)
    assert page.canvas.height() >= 0.4 * page.height(), (page.canvas.height(), page.height())


def test_the_overview_tab_gets_its_own_height_and_plots_theirs_back(make_window, qtbot):
    win = make_window()
    win.resize(first_size(QRect(0, 0, 1280, 800)))
    assert win.open_path(GREEDY)
    page = win.replay_page
    assert page.wait_loaded()
    qtbot.waitUntil(lambda: bool(page.tab_heights), timeout=5000)  # first-show sizing done
    plots = page.dock_plots.height()
    page.dock_batch.raise_()
    qtbot.waitUntil(lambda: page.dock_batch.height() > plots + 20, timeout=5000)
    # a line per landmark in the goal grid (its rows are at least 16 px: batch_view)
    rows = len(page.scene_value.landmarks)
    assert page.batch.height() >= 16 * rows + 42
    page.dock_plots.raise_()
    qtbot.waitUntil(lambda: abs(page.dock_plots.height() - plots) <= 15, timeout=5000)
