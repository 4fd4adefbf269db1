"""The runs page: opens the demo sweep, a click on a curve point lists its tapes, and opening
one shows it in the replay with its failed cooperative episodes first."""

from __future__ import annotations

import os
import shutil
from pathlib import Path

import numpy as np
import pytest

from arena_studio.core.runs import curve_rows, load_runs, scan_sweep
from arena_studio.core.runs.analysis import Settings

REPO = Path(__file__).resolve().parents[2]
DEMO_SWEEP = REPO / "scenes" / "sweep-demo"

pytestmark = pytest.mark.gui


@pytest.fixture(autouse=True)
def _cache(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setenv("ARENA_STUDIO_CACHE_DIR", str(tmp_path / "cache"))


@pytest.fixture
def sweep_copy(tmp_path: Path) -> Path:
    """Two conditions of the demo sweep (a copy: the test may add tapes)."""
    root = tmp_path / "sweep"
    for cond in ("one-goal", "own-goals"):
        shutil.copytree(DEMO_SWEEP / cond, root / cond)
    return root


def test_page_shows_curves_final_and_heat_map(main_window, sweep_copy: Path, qtbot) -> None:
    assert main_window.open_path(sweep_copy)
    page = main_window.runs_page
    assert page.wait_loaded()
    assert main_window.mode == "runs"
    assert page.metric_box.currentText() == "success"
    # the curves are the core tables (computed here independently with the same settings)
    runs, _ = load_runs(scan_sweep(sweep_copy))
    expected = curve_rows(runs, "success", settings=Settings(reps=page.settings.reps))
    assert [(r.group, r.step, r.iqm, r.ci_low) for r in page.rows] == [
        (r.group, r.step, r.iqm, r.ci_low) for r in expected
    ]
    assert page.final_table.rowCount() == 2 and page.matrix.columnCount() == 2
    m = page.heat_data
    assert m.values.shape == (len(m.goals), 6) and np.isfinite(m.values).any()


def test_bands_are_drawn_quickly_then_refined_to_the_cli_count(
    main_window, sweep_copy: Path, qtbot
) -> None:
    from arena_studio.app.runs.runs_page import FIRST_REPS
    from arena_studio.core.runs.stats import DEFAULT_REPS

    main_window.open_path(sweep_copy)
    page = main_window.runs_page
    page.loader.wait()
    qtbot.waitUntil(lambda: page.rows != [], timeout=60000)
    assert page.shown_reps == FIRST_REPS  # the quick pass is on screen first
    runs, _ = load_runs(scan_sweep(sweep_copy))
    qtbot.waitUntil(lambda: page.shown_reps == DEFAULT_REPS, timeout=60000)  # after the pause
    # refined bands equal the command line's (same seed, its 10,000 replicates)
    cli = curve_rows(runs, "success", settings=Settings(reps=DEFAULT_REPS))
    assert [(r.ci_low, r.ci_high) for r in page.rows] == [(r.ci_low, r.ci_high) for r in cli]


def test_click_point_lists_tapes_and_opens_replay(main_window, sweep_copy: Path, qtbot) -> None:
    main_window.open_path(sweep_copy)
    page = main_window.runs_page
    assert page.wait_loaded()
    curve = next(i for i in page.curves.getPlotItem().listDataItems() if i.name() == "own-goals")
    scatter = curve.scatter
    points = scatter.points()
    # a real click on the first point of the curve (step 0)
    from PySide6.QtCore import QPoint, Qt

    view = page.curves
    target = points[0].pos()
    scene_pos = curve.getViewBox().mapViewToScene(target)
    pixel = view.mapFromScene(scene_pos)
    qtbot.mouseClick(view.viewport(), Qt.MouseButton.LeftButton, pos=QPoint(pixel.x(), pixel.y()))
    assert page.tape_list.count() == 4, page.tapes_label.text()
    assert "own-goals at step 0" in page.tapes_label.text()
    # open the tape with the most failed cooperative episodes
    best = max(
        range(page.tape_list.count()),
        key=lambda i: len(page.tape_list.item(i).data(Qt.ItemDataRole.UserRole)[1]),
    )
    page.tape_list.setCurrentRow(best)
    path, failed = page.tape_list.currentItem().data(Qt.ItemDataRole.UserRole)
    assert failed, "the demo sweep's early own-goals tapes fail cooperative goals"
    page.open_selected_tape()
    replay = main_window.replay_page
    assert main_window.mode == "replay" and str(replay.session.path) == path
    assert replay.wait_loaded()
    assert replay.prepared.episode.index == failed[0]
    # the list shows the failed cooperative episodes only, as the sweep figures counted them
    replay.session.wait_summaries(30000)
    qtbot.waitUntil(
        lambda: sorted(s.index for s in replay.episode_list.visible_summaries()) == failed,
        timeout=20000,
    )


def test_new_tape_appears_when_finished(main_window, sweep_copy: Path, qtbot) -> None:
    main_window.open_path(sweep_copy)
    page = main_window.runs_page
    assert page.wait_loaded()
    before = len(page.runs)
    extra = sweep_copy / "own-goals" / "seed9"
    extra.mkdir()
    shutil.copy(sweep_copy / "own-goals" / "seed1" / "step0.tape", extra / "step0.tape.partial")
    page.reload()
    assert page.wait_loaded()
    assert len(page.runs) == before and len(page.data.recording) == 1
    (extra / "step0.tape.partial").rename(extra / "step0.tape")
    # the watched folder reloads by itself after a short pause
    qtbot.waitUntil(lambda: len(page.runs) == before + 1, timeout=15000)


@pytest.mark.parametrize("theme", ["light", "dark"])
@pytest.mark.parametrize("size", [(1280, 800), (1920, 1080)])
def test_screens(make_window, sweep_copy: Path, tmp_path: Path, theme: str, size) -> None:
    win = make_window(theme)
    win.resize(*size)
    win.open_path(DEMO_SWEEP)
    page = win.runs_page
    assert page.wait_loaded()
    page.select_cell("own-goals", 40000)
    out = tmp_path / f"runs-{theme}-{size[0]}.png"
    assert win.grab().save(str(out))
    # the picture is the window at its size (read back with Pillow, the reference decoder)
    from PIL import Image

    with Image.open(out) as im:
        assert im.size == size
        colours = len(np.unique(np.asarray(im.convert("RGB")).reshape(-1, 3), axis=0))
    assert colours > 50  # curves, bands and the heat map were drawn, not an empty page
    keep = os.environ.get("ARENA_STUDIO_KEEP_SCREENS")
    if keep:  # developers look at every screen: set this to a folder to keep them
        shutil.copy(out, Path(keep) / out.name)


@pytest.mark.parametrize("theme", ["light", "dark"])
def test_legend_and_titles_are_readable(main_window, sweep_copy: Path, theme: str) -> None:
    """Reference: WCAG 2.1 contrast ratio, at least 4.5:1 for normal text (SC 1.4.3)."""
    import pyqtgraph as pg
    from PySide6.QtGui import QColor

    from tests.app.test_dropdown_contrast import contrast

    main_window.open_path(sweep_copy)
    page = main_window.runs_page
    assert page.wait_loaded()
    page.set_theme(theme)
    background = page.theme.qcolor("room_fill").getRgb()[:3]
    colours = []
    for widget in (page.curves, page.pair):
        legend = widget.getPlotItem().legend
        colours += [label.opts["color"] for _sample, label in legend.items]
    colours += [w.getPlotItem().titleLabel.opts["color"] for w in (page.pair, page.heat)]
    assert len(colours) >= 4
    for colour in colours:
        # None means pyqtgraph's default foreground, as LabelItem.setText resolves it
        rgb = QColor(pg.mkColor(colour or pg.getConfigOption("foreground"))).getRgb()[:3]
        assert contrast(rgb, background) >= 4.5, (theme, colour)
