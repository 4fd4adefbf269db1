"""Identity palettes stay distinguishable and visible, in both themes.

Sources:
- colorspacious 1.1.2: CAM02-UCS (Luo, Cui & Li 2006) and its "sRGB1+CVD" space, which
  implements Machado, Oliveira & Fernandes 2009 (IEEE TVCG 15(6)) colour-vision simulation;
  ``deltaE`` is the Euclidean distance in CAM02-UCS. Output clipped to [0, 1] as the
  colorspacious docs advise for display.
- WCAG 2.1, definition "relative luminance" and "contrast ratio"; success criterion 1.4.11
  (non-text contrast) asks 3:1 for graphical objects against adjacent colours.
Thresholds (20 normal, 15 under each simulation at severity 100) come from issue 6.
"""

from __future__ import annotations

import itertools
import json

import numpy as np
import pytest
from colorspacious import cspace_convert, deltaE

from arena_studio.core.resources import resource_path

THEMES = ("light", "dark")
CVD = ("deuteranomaly", "protanomaly", "tritanomaly")


def _doc(theme: str) -> dict:
    return json.loads(resource_path("palettes", f"{theme}.json").read_text(encoding="utf-8"))


def _rgb(hexcode: str) -> np.ndarray:
    h = hexcode.lstrip("#")[:6]
    return np.array([int(h[i : i + 2], 16) for i in (0, 2, 4)], dtype=float) / 255.0


def wcag_luminance(rgb: np.ndarray) -> float:
    # WCAG 2.1 relative luminance: sRGB channel linearisation with the 0.04045 knee
    # (the spec text says 0.03928; both give the same result for 8-bit values), weights
    # 0.2126 / 0.7152 / 0.0722.
    c = np.where(rgb <= 0.04045, rgb / 12.92, ((rgb + 0.055) / 1.055) ** 2.4)
    return float(c @ np.array([0.2126, 0.7152, 0.0722]))


def contrast_ratio(a: np.ndarray, b: np.ndarray) -> float:
    la, lb = sorted((wcag_luminance(a), wcag_luminance(b)), reverse=True)
    return (la + 0.05) / (lb + 0.05)  # WCAG 2.1 contrast ratio


def test_wcag_formula_matches_the_standard_endpoints():
    # WCAG 2.1: black on white is 21:1; a colour against itself is 1:1.
    assert contrast_ratio(np.zeros(3), np.ones(3)) == pytest.approx(21.0)
    assert contrast_ratio(_rgb("#777777"), _rgb("#777777")) == pytest.approx(1.0)
    # #767676 on white is the well-known 4.54:1 minimum grey for AA text [memory]
    assert contrast_ratio(_rgb("#767676"), np.ones(3)) == pytest.approx(4.54, abs=0.01)


def _simulate(rgb: np.ndarray, kind: str | None) -> np.ndarray:
    if kind is None:
        return rgb
    space = {"name": "sRGB1+CVD", "cvd_type": kind, "severity": 100}
    return np.clip(cspace_convert(rgb, space, "sRGB1"), 0.0, 1.0)


def _min_delta(colors: list[np.ndarray], kind: str | None) -> tuple[float, tuple[int, int]]:
    sims = [_simulate(c, kind) for c in colors]
    best = (np.inf, (-1, -1))
    for i, j in itertools.combinations(range(len(sims)), 2):
        d = float(deltaE(sims[i], sims[j], input_space="sRGB1", uniform_space="CAM02-UCS"))
        best = min(best, (d, (i, j)))
    return best


@pytest.mark.parametrize("theme", THEMES)
def test_first_six_identity_colours_differ_for_normal_vision(theme):
    colors = [_rgb(h) for h in _doc(theme)["identity"][:6]]
    assert len(colors) == 6
    d, pair = _min_delta(colors, None)
    assert d >= 20.0, f"{theme}: identity colours {pair} only {d:.1f} apart (CAM02-UCS)"


@pytest.mark.parametrize("theme", THEMES)
@pytest.mark.parametrize("kind", CVD)
def test_first_six_identity_colours_differ_under_cvd_simulation(theme, kind):
    colors = [_rgb(h) for h in _doc(theme)["identity"][:6]]
    d, pair = _min_delta(colors, kind)
    assert d >= 15.0, f"{theme}/{kind}: identity colours {pair} only {d:.1f} apart"


@pytest.mark.parametrize("theme", THEMES)
@pytest.mark.parametrize("canvas", ["background", "room_fill"])
def test_every_identity_colour_has_3_to_1_contrast_with_the_canvas(theme, canvas):
    doc = _doc(theme)
    ground = _rgb(doc["colors"][canvas])
    for i, hexcode in enumerate(doc["identity"]):
        ratio = contrast_ratio(_rgb(hexcode), ground)
        assert ratio >= 3.0, f"{theme}: identity[{i}] {hexcode} on {canvas} is {ratio:.2f}:1"


def test_simulation_leaves_greys_alone():
    # colorspacious / Machado 2009: achromatic colours are unchanged by the simulation
    grey = np.array([0.5, 0.5, 0.5])
    for kind in CVD:
        assert np.allclose(_simulate(grey, kind), grey, atol=1e-3)


@pytest.mark.parametrize("theme", THEMES)
def test_palette_files_keep_every_colour_role_the_painters_use(theme):
    # Not an outside source: the painters ask for these names; a missing one is a KeyError.
    need = {
        "background",
        "room_fill",
        "wall",
        "doorway",
        "obstacle_fill",
        "obstacle_edge",
        "landmark_free",
        "landmark_wall",
        "landmark_text",
        "target_highlight",
        "start",
        "start_region",
        "text",
        "text_muted",
        "scale_bar",
        "path",
        "error",
        "warning",
        "info",
        "grid_minor",
        "grid_major",
    }
    assert need <= set(_doc(theme)["colors"])
    assert len(_doc(theme)["identity"]) >= 8


def _hue_deg(rgb: np.ndarray) -> float:
    # CAM02-UCS hue angle: atan2(b', a') of the J'a'b' coordinates (colorspacious)
    _, a, b = cspace_convert(rgb, "sRGB1", "CAM02-UCS")
    return float(np.degrees(np.arctan2(b, a)) % 360.0)


def _hue_gap(h1: float, h2: float) -> float:
    d = abs(h1 - h2) % 360.0
    return min(d, 360.0 - d)


@pytest.mark.parametrize("theme", THEMES)
@pytest.mark.parametrize("role", ["landmark_free", "landmark_wall"])
def test_landmark_marks_never_share_a_hue_with_identity_colours(theme, role):
    """A landmark must never read as an agent: its hue stays 30 degrees (CAM02-UCS hue
    angle) from every identity colour, and it is as far from each of them (deltaE in
    CAM02-UCS) as identity colours must be from each other (20, above)."""
    doc = _doc(theme)
    mark = _rgb(doc["colors"][role])
    for i, hexcode in enumerate(doc["identity"]):
        ident = _rgb(hexcode)
        gap = _hue_gap(_hue_deg(mark), _hue_deg(ident))
        assert gap >= 30.0, f"{theme}: {role} within {gap:.0f} deg of identity[{i}]"
        d = float(deltaE(mark, ident, input_space="sRGB1", uniform_space="CAM02-UCS"))
        assert d >= 20.0, f"{theme}: {role} only {d:.1f} from identity[{i}] {hexcode}"
    # WCAG 2.1 SC 1.4.11: a graphical object needs 3:1 against what it is drawn on
    ratio = contrast_ratio(mark, _rgb(doc["colors"]["room_fill"]))
    assert ratio >= 3.0, f"{theme}: {role} on room_fill is {ratio:.2f}:1"


def test_hue_angle_reference_points():
    # CAM02-UCS hue of pure sRGB red lies near 30 degrees and of pure blue near 260-270
    # (colorspacious conversions, [memory] for the rough angles)
    assert 15 <= _hue_deg(np.array([1.0, 0.0, 0.0])) <= 45
    assert 240 <= _hue_deg(np.array([0.0, 0.0, 1.0])) <= 290
