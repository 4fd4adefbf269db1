"""Frame options: what an episode frame shows (shared by the viewer, stills and clips)."""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class FrameOptions:
    """What an episode frame shows. Sizes in pixels are multiplied by ``ui_scale``."""

    theme: str = "light"
    trails: bool = True
    trail_seconds: float = 4.0
    trail_bands: int = 4
    fast_trails: bool = False  # 1-pixel trails always (interactive scrubbing); else auto
    roles: str = "auto"  # "auto" (tape labels when present), "derived", "tape", "none"
    team_goal: bool = True
    pursued: bool = True
    par_paths: bool = False
    collisions: bool = True
    numbers: str = "auto"  # "auto" (beyond 6 agents), "always", "never"
    name_tags: bool = True  # a name beside each moving body (teams of up to 12)
    focus: int | None = None  # one agent drawn strong over a dimmed rest (big teams)
    #: pixel boxes (x0, y0, x1, y1) name tags keep clear of: overlays drawn over the frame
    tag_keep_out: tuple[tuple[float, float, float, float], ...] = ()
    legend: bool = True
    clock: bool = True
    title: str | None = None
    caption: str | None = None
    #: a "who went where" line under the scene (core.analysis.who_went_where)
    statement: bool = True
    grid: bool = False
    scale_bar: bool = True
    landmark_labels: bool = True
    ui_scale: float | None = None  # None: from the output height (720 px = 1.0)
