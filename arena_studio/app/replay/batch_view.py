"""Batch view: how the whole tape went, at a glance.

Left, the success-by-goal grid: one- and two-target goals sit in a triangle over the
landmarks (a one-target goal on the diagonal, the pair (i, j) at row i, column j), goals with
more targets in a row below; each cell is shaded by its success rate on a single-hue ramp and
shows the rate and counts. Click a cell to filter the episode list to that goal. Beside it,
alignment and aligned-vs-misaligned success as bars. Right, where agents spent their time,
as an occupancy shading over the scene.
"""

from __future__ import annotations

import numpy as np
from PySide6.QtCore import QRectF, QSize, Qt, Signal
from PySide6.QtGui import QColor, QImage, QMouseEvent, QPainter, QPen
from PySide6.QtWidgets import QHBoxLayout, QSizePolicy, QWidget

from arena_studio.app.replay.batch_stats import BatchStats, GoalStat, Occupancy
from arena_studio.core.scene.model import Scene
from arena_studio.core.wording import LandmarkNames
from arena_studio.render.paint_guard import guarded_paint_event
from arena_studio.render.scene_painter import SceneOptions, paint_scene
from arena_studio.render.theme import Theme, load_theme
from arena_studio.render.view import ViewTransform


def ramp(theme: Theme, rate: float) -> QColor:
    """Success rate 0..1 -> a colour from the canvas paper to a deep teal (one hue, so the
    order reads the same for every kind of colour vision)."""
    lo = theme.qcolor("room_fill")
    hi = theme.qcolor("landmark_free")
    r = float(min(max(rate, 0.0), 1.0)) ** 0.8
    return QColor.fromRgbF(
        lo.redF() + (hi.redF() - lo.redF()) * r,
        lo.greenF() + (hi.greenF() - lo.greenF()) * r,
        lo.blueF() + (hi.blueF() - lo.blueF()) * r,
    )


def fit_text(p: QPainter, rect: QRectF, text: str, align: Qt.AlignmentFlag) -> float:
    """Draw ``text`` in ``rect`` at the largest font size (down to 6 pt) whose lines fit
    whole, so a cell reads "100%", never a cut ".00%"; returns the size used."""
    from PySide6.QtGui import QFontMetricsF

    font = p.font()
    size = font.pointSizeF() if font.pointSizeF() > 0 else 9.0
    while size > 6.0:
        metrics = QFontMetricsF(font)
        lines = text.split("\n")
        wide = max(metrics.horizontalAdvance(line) for line in lines)
        if wide <= rect.width() and metrics.height() * len(lines) <= rect.height() + 1:
            break
        size -= 0.5
        font.setPointSizeF(size)
    old = p.font()
    p.setFont(font)
    p.drawText(rect, align, text)
    p.setFont(old)
    return size


def _luminance(c: QColor) -> float:
    """WCAG 2.1 relative luminance, used to pick black or white cell text."""

    def lin(v: float) -> float:
        return v / 12.92 if v <= 0.04045 else ((v + 0.055) / 1.055) ** 2.4

    return 0.2126 * lin(c.redF()) + 0.7152 * lin(c.greenF()) + 0.0722 * lin(c.blueF())


#: the narrowest goal cell ("100%" at the smallest text size)
MIN_CELL_W = 22.0


class GoalGrid(QWidget):
    goalClicked = Signal(object, str)  # goal tuple, label

    def __init__(self, theme: Theme | None = None, parent=None) -> None:
        super().__init__(parent)
        self._theme = theme or load_theme("light")
        self._scene: Scene | None = None
        self._stats: BatchStats | None = None
        self._cells: list[tuple[QRectF, GoalStat]] = []
        self.setMinimumSize(240, 110)
        self.setSizePolicy(QSizePolicy.Policy.Expanding, QSizePolicy.Policy.Expanding)
        self.setMouseTracking(True)

    def sizeHint(self) -> QSize:
        return QSize(420, 300)

    def set_theme(self, theme: Theme) -> None:
        self._theme = theme
        self.update()

    def set_data(self, scene: Scene, stats: BatchStats) -> None:
        self._scene, self._stats = scene, stats
        self.update()

    def cells(self) -> list[tuple[QRectF, GoalStat]]:
        return list(self._cells)

    def mousePressEvent(self, event: QMouseEvent) -> None:
        for rect, stat in self._cells:
            if rect.contains(event.position()):
                self.goalClicked.emit(stat.goal, stat.label)
                return

    def mouseMoveEvent(self, event: QMouseEvent) -> None:
        for rect, stat in self._cells:
            if rect.contains(event.position()):
                self.setToolTip(
                    f"{stat.label}: {stat.successes} of {stat.episodes} succeeded "
                    f"({stat.rate:.0%}). Click to list these episodes."
                )
                self.setCursor(Qt.CursorShape.PointingHandCursor)
                return
        self.setToolTip("")
        self.unsetCursor()

    @guarded_paint_event("the goal table")
    def paintEvent(self, _event) -> None:
        p = QPainter(self)
        p.setRenderHint(QPainter.RenderHint.Antialiasing)
        theme = self._theme
        p.fillRect(self.rect(), theme.qcolor("room_fill"))
        self._cells = []
        if self._scene is None or self._stats is None or not self._stats.goals:
            p.setPen(theme.qcolor("text_muted"))
            p.drawText(self.rect(), Qt.AlignmentFlag.AlignCenter, "No scored episodes yet")
            p.end()
            return
        names = LandmarkNames.of(self._scene)  # labels, told apart when two are the same
        labels = [names.name(lm.id) for lm in self._scene.landmarks]
        n = len(labels)
        small = [g for g in self._stats.goals if len(g.goal) <= 2]
        large = [g for g in self._stats.goals if len(g.goal) > 2]
        fm = p.fontMetrics()
        head_w = min(max((fm.horizontalAdvance(f"{n}  {t}") for t in labels), default=40) + 10, 150)
        # the cells come first: row names give up width (and shrink) before a column is cut
        head_w = max(min(head_w, self.width() - 8 - MIN_CELL_W * max(n, 1)), 28.0)
        rows_h = self.height() - 24 - 18 - (34 if large else 0)
        cw = max(min((self.width() - head_w - 8) / max(n, 1), 90.0), MIN_CELL_W)  # cells may be
        ch = max(min((rows_h - 4) / max(n, 1), 60.0), 16.0)  # wider than tall
        x0, y0 = head_w, 24.0
        p.setPen(theme.qcolor("text"))
        title = "Success by goal (row + column: a two-target goal)"
        if fm.horizontalAdvance(title) > self.width() - 8:  # a narrow panel: the short title
            title = "Success by goal"
        p.drawText(QRectF(4, 2, self.width() - 8, 20), Qt.AlignmentFlag.AlignLeft, title)
        y0 += 18.0  # column heads
        p.setPen(theme.qcolor("text_muted"))
        # column heads that do not fit become numbers, and the rows carry the same numbers:
        # a cut "We…" names nothing, "1" beside "1 West valve" does
        numbered = any(fm.horizontalAdvance(t) > cw - 2 for t in labels)
        heads = [str(j + 1) for j in range(n)] if numbered else labels
        for j, text in enumerate(heads):
            p.drawText(QRectF(x0 + j * cw, y0 - 18, cw, 16), Qt.AlignmentFlag.AlignCenter, text)
        for i, text in enumerate(labels):
            y = y0 + i * ch
            shown = f"{i + 1}  {text}" if numbered else text
            fit_text(
                p,
                QRectF(2, y, head_w - 6, ch),
                shown,
                Qt.AlignmentFlag.AlignRight | Qt.AlignmentFlag.AlignVCenter,
            )
        for stat in small:
            i = stat.goal[0]
            j = stat.goal[-1]
            rect = QRectF(x0 + j * cw + 1, y0 + i * ch + 1, cw - 2, ch - 2)
            self._paint_cell(p, rect, stat, diagonal=(i == j))
        if large:
            y = self.height() - 32.0
            w = max((self.width() - 8) / len(large), 40)
            for k, stat in enumerate(large):
                self._paint_cell(
                    p, QRectF(4 + k * w, y, w - 4, 28), stat, diagonal=False, wide=True
                )
        p.end()

    def _paint_cell(
        self, p: QPainter, rect: QRectF, stat: GoalStat, diagonal: bool, wide: bool = False
    ) -> None:
        theme = self._theme
        fill = ramp(theme, stat.rate)
        p.setPen(QPen(theme.qcolor("wall" if diagonal else "grid_major"), 1.2 if diagonal else 1.0))
        p.setBrush(fill)
        p.drawRoundedRect(rect, 3, 3)
        light = _luminance(fill) > 0.25
        p.setPen(QColor("#111111") if light else QColor("#FFFFFF"))
        text = f"{stat.rate:.0%}\n{stat.successes}/{stat.episodes}"
        if wide:
            text = f"{stat.label}: {stat.rate:.0%} ({stat.successes}/{stat.episodes})"
        if rect.height() < 30 and not wide:
            text = (
                f"{stat.rate:.0%}"
                if rect.width() < 70
                else f"{stat.rate:.0%} ({stat.successes}/{stat.episodes})"
            )
        fit_text(p, rect.adjusted(1, 0, -1, 0), text, Qt.AlignmentFlag.AlignCenter)
        self._cells.append((rect, stat))


class RateBars(QWidget):
    """Alignment rate and success of aligned vs misaligned episodes, as labelled bars."""

    def __init__(self, theme: Theme | None = None, parent=None) -> None:
        super().__init__(parent)
        self._theme = theme or load_theme("light")
        self._stats: BatchStats | None = None
        self.setMinimumSize(260, 92)
        self.setSizePolicy(QSizePolicy.Policy.Expanding, QSizePolicy.Policy.Preferred)

    def set_theme(self, theme: Theme) -> None:
        self._theme = theme
        self.update()

    def set_stats(self, stats: BatchStats) -> None:
        self._stats = stats
        self.update()

    def rows(self) -> list[tuple[str, float | None, str]]:
        s = self._stats
        if s is None:
            return []

        def frac(pair: tuple[int, int]) -> tuple[float | None, str]:
            hits, total = pair
            return (hits / total if total else None), f"{hits}/{total}"

        a_rate, a_txt = frac(s.aligned_success)
        m_rate, m_txt = frac(s.misaligned_success)
        n_aligned = s.aligned_success[1]
        return [
            ("Success, all", s.success_rate, f"{s.successes}/{s.scored}"),
            ("Aligned", s.alignment_rate, f"{n_aligned}/{s.scored}"),
            ("Success, aligned", a_rate, a_txt),
            ("Success, misaligned", m_rate, m_txt),
        ]

    @guarded_paint_event("the success bars")
    def paintEvent(self, _event) -> None:
        p = QPainter(self)
        theme = self._theme
        p.fillRect(self.rect(), theme.qcolor("room_fill"))
        rows = self.rows()
        label_w = 132.0
        for k, (name, rate, note) in enumerate(rows):
            y = 4 + k * 22.0
            p.setPen(theme.qcolor("text"))
            p.drawText(QRectF(6, y, label_w, 20), Qt.AlignmentFlag.AlignVCenter, name)
            track = QRectF(label_w, y + 4, max(self.width() - label_w - 96, 30), 12)
            p.setPen(Qt.PenStyle.NoPen)
            p.setBrush(theme.qcolor("background"))
            p.drawRect(track)
            if rate is not None:
                p.setBrush(ramp(theme, 1.0))
                p.drawRect(QRectF(track.left(), track.top(), track.width() * rate, track.height()))
            p.setPen(theme.qcolor("text"))
            shown = "-" if rate is None else f"{rate:.0%}"
            p.drawText(
                QRectF(track.right() + 6, y, 104, 20),
                Qt.AlignmentFlag.AlignVCenter,
                f"{shown}  ({note})",
            )
        p.end()


class OccupancyView(QWidget):
    """The scene with a shading of where agents spent time (darker = longer)."""

    def __init__(self, theme: Theme | None = None, parent=None) -> None:
        super().__init__(parent)
        self._theme = theme or load_theme("light")
        self._scene: Scene | None = None
        self._occ: Occupancy | None = None
        self.setMinimumSize(200, 110)

    def sizeHint(self) -> QSize:
        return QSize(420, 300)

    def set_theme(self, theme: Theme) -> None:
        self._theme = theme
        self.update()

    def set_data(self, scene: Scene, occupancy: Occupancy | None) -> None:
        self._scene, self._occ = scene, occupancy
        self.update()

    def heat_image(self) -> QImage | None:
        """Occupancy as an ARGB image: one colour, alpha by sqrt of the share of time."""
        occ = self._occ
        if occ is None or not np.any(occ.seconds > 0):
            return None
        # log scale: a few seconds in a cell show, hours in another do not drown them
        share = np.log1p(occ.seconds / occ.dt_floor()) / np.log1p(
            occ.seconds.max() / occ.dt_floor()
        )
        share = np.where(occ.seconds > 0, 0.25 + 0.75 * share, 0.0)
        alpha = np.flipud(np.clip(share * 230, 0, 255)).astype(np.uint8)  # row 0 at the top
        color = self._theme.qcolor("selection")
        h, w = alpha.shape
        rgba = np.empty((h, w, 4), dtype=np.uint8)
        # premultiplied BGRA for Format_ARGB32_Premultiplied
        a = alpha.astype(np.float64) / 255.0
        rgba[..., 0] = (color.blue() * a).astype(np.uint8)
        rgba[..., 1] = (color.green() * a).astype(np.uint8)
        rgba[..., 2] = (color.red() * a).astype(np.uint8)
        rgba[..., 3] = alpha
        image = QImage(rgba.data, w, h, 4 * w, QImage.Format.Format_ARGB32_Premultiplied)
        return image.copy()  # own the pixels

    @guarded_paint_event("the overview map")
    def paintEvent(self, _event) -> None:
        p = QPainter(self)
        theme = self._theme
        p.fillRect(self.rect(), theme.qcolor("background"))
        if self._scene is None:
            p.end()
            return
        header = 20.0
        view = ViewTransform.fit_scene(
            self._scene, (0, header, self.width(), self.height() - header), 8
        )
        paint_scene(
            p,
            self._scene,
            view,
            theme,
            SceneOptions(
                scale_bar=False,
                starts=False,
                fill_background=False,
                label_keep_out=((0.0, 0.0, float(self.width()), header),),  # the title line
            ),
            size=(self.width(), self.height()),
        )
        image = self.heat_image()
        if image is not None and self._occ is not None:
            minx, miny, maxx, maxy = self._occ.extent
            top_left = view.to_px(minx, maxy)
            bottom_right = view.to_px(maxx, miny)
            p.setRenderHint(QPainter.RenderHint.SmoothPixmapTransform)
            p.drawImage(QRectF(top_left, bottom_right), image)
        p.setPen(theme.qcolor("text"))
        fit_text(
            p,
            QRectF(4, 0, self.width() - 8, header),
            "Time spent here, all episodes (darker = longer)",
            Qt.AlignmentFlag.AlignVCenter | Qt.AlignmentFlag.AlignLeft,
        )
        p.end()


class BatchPanel(QWidget):
    goalClicked = Signal(object, str)

    def __init__(self, theme: Theme | None = None, parent=None) -> None:
        super().__init__(parent)
        theme = theme or load_theme("light")
        self.grid = GoalGrid(theme, self)
        self.bars = RateBars(theme, self)
        self.occupancy = OccupancyView(theme, self)
        layout = QHBoxLayout(self)  # side by side: each part gets the dock's full height
        layout.setContentsMargins(2, 2, 2, 2)
        layout.addWidget(self.grid, 3)
        layout.addWidget(self.bars, 2)
        layout.addWidget(self.occupancy, 3)
        self.grid.goalClicked.connect(self.goalClicked)

    def set_theme(self, theme: Theme) -> None:
        for w in (self.grid, self.bars, self.occupancy):
            w.set_theme(theme)

    def set_stats(self, scene: Scene, stats: BatchStats) -> None:
        self.grid.set_data(scene, stats)
        self.bars.set_stats(stats)

    def set_occupancy(self, scene: Scene, occupancy: Occupancy | None) -> None:
        self.occupancy.set_data(scene, occupancy)
