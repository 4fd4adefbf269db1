"""Search for identity palettes that pass the palette tests (run by hand, not by pytest).

    .venv/bin/python tests/render/palette_search.py light
    .venv/bin/python tests/render/palette_search.py dark

Candidates: an sRGB grid filtered by the WCAG 2.1 contrast bound against the theme's
"background" and "room_fill" colours; score: the smallest pairwise CAM02-UCS distance
(colorspacious, Luo et al. 2006) under normal vision / 20 and under each Machado et al. 2009
simulation at severity 100 / 15. A greedy start plus random swaps maximise the worst score.
The result is a starting point; the palettes in resources/palettes/ are hand-tuned from it.
"""

from __future__ import annotations

import json
import sys
from pathlib import Path

import numpy as np
from colorspacious import cspace_convert

ROOT = Path(__file__).resolve().parents[2]
CVD = ("deuteranomaly", "protanomaly", "tritanomaly")


def relative_luminance(rgb: np.ndarray) -> np.ndarray:
    """WCAG 2.1 relative luminance of sRGB values in 0..1."""
    c = np.where(rgb <= 0.04045, rgb / 12.92, ((rgb + 0.055) / 1.055) ** 2.4)
    return c @ np.array([0.2126, 0.7152, 0.0722])


def contrast(l1: np.ndarray, l2: float) -> np.ndarray:
    hi, lo = np.maximum(l1, l2), np.minimum(l1, l2)
    return (hi + 0.05) / (lo + 0.05)


def hex_rgb(text: str) -> np.ndarray:
    t = text.lstrip("#")
    return np.array([int(t[i : i + 2], 16) for i in (0, 2, 4)]) / 255.0


def views(rgb: np.ndarray) -> list[np.ndarray]:
    out = [cspace_convert(rgb, "sRGB1", "CAM02-UCS")]
    for kind in CVD:
        space = {"name": "sRGB1+CVD", "cvd_type": kind, "severity": 100}
        sim = np.clip(cspace_convert(rgb, space, "sRGB1"), 0, 1)
        out.append(cspace_convert(sim, "sRGB1", "CAM02-UCS"))
    return out


def main(
    theme: str, n: int = 6, seed: int = 1, iters: int = 40000, min_chroma: float = 30.0
) -> None:
    doc = json.loads((ROOT / "resources" / "palettes" / f"{theme}.json").read_text())
    lums = [relative_luminance(hex_rgb(doc["colors"][k])) for k in ("background", "room_fill")]
    g = np.arange(0, 256, 8) / 255.0
    rgb = np.stack(np.meshgrid(g, g, g, indexing="ij"), -1).reshape(-1, 3)
    lum = relative_luminance(rgb)
    ok = np.ones(len(rgb), bool)
    for lb in lums:
        ok &= contrast(lum, lb) >= 3.3  # a little headroom over 3:1
    jch = cspace_convert(rgb, "sRGB1", "JCh")
    ok &= jch[:, 1] >= min_chroma  # CIECAM02 chroma: keep the palette colourful
    rgb = rgb[ok]
    vs = views(rgb)
    weights = (1 / 20, 1 / 15, 1 / 15, 1 / 15)
    rng = np.random.default_rng(seed)

    def score(idx: np.ndarray) -> float:
        worst = np.inf
        for v, w in zip(vs, weights, strict=True):
            p = v[idx]
            d = np.sqrt(((p[:, None] - p[None]) ** 2).sum(-1))
            d[np.diag_indices(len(idx))] = np.inf
            worst = min(worst, d.min() * w)
        return float(worst)

    best_idx, best = None, -1.0
    for _restart in range(8):
        idx = rng.choice(len(rgb), n, replace=False)
        s = score(idx)
        for _ in range(iters // 8):
            j = rng.integers(n)
            trial = idx.copy()
            trial[j] = rng.integers(len(rgb))
            if len(set(trial.tolist())) < n:
                continue
            ts = score(trial)
            if ts >= s:
                idx, s = trial, ts
        if s > best:
            best_idx, best = idx, s
    assert best_idx is not None
    # two extra colours (agents 7 and 8 also carry numbers): farthest from the six, normal vision
    chosen = list(best_idx)
    for _ in range(2):
        d = np.sqrt(((vs[0][:, None] - vs[0][chosen][None]) ** 2).sum(-1)).min(1)
        chosen.append(int(d.argmax()))
    hexes = ["#" + "".join(f"{round(c * 255):02X}" for c in rgb[i]) for i in chosen]
    print(theme, "score", round(best, 3), hexes)


if __name__ == "__main__":
    main(
        sys.argv[1] if len(sys.argv) > 1 else "light",
        seed=int(sys.argv[2]) if len(sys.argv) > 2 else 1,
        min_chroma=float(sys.argv[3]) if len(sys.argv) > 3 else 30.0,
    )
