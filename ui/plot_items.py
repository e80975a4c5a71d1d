"""Light plot items of our own: a plotted series (:class:`Trace`) and the grid (:class:`TickGrid`).

pyqtgraph's general curve item recomputes bounds, pixel padding and finite checks on
every update and several times per repaint; with nine curves that was half of an
edit's redraw. A :class:`Trace` takes the core's arrays (always finite), builds its
polygon and bounds once per ``setData`` and only draws in ``paint``. Like any plot
item it is created once and updated in place.

pyqtgraph draws a grid as part of each axis, which makes every axis as large as its plot;
cached as pixmaps (the axes' text is costly to redraw) that was about 3 MiB for the four
timeline plots. A :class:`TickGrid` draws the same faint lines from inside the plot, so
the axes stay small.
"""

from __future__ import annotations

import numpy as np
from PySide6.QtCore import QLineF, QRectF, Qt
from PySide6.QtGui import QBrush, QColor, QPainter, QPen, QPolygonF

from ui.pyqtgraph_loader import pg

EDGE_PX = 3.0  # a line's half-width and its antialiased edge, kept inside the bounds


def step_points(x: np.ndarray, y: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The corners of a step line where ``y[i]`` holds from ``x[i]`` until ``x[i + 1]``."""
    if len(x) == 0:
        return x, y
    return np.repeat(x, 2)[1:], np.repeat(y, 2)[:-1]


def turning_points(x: np.ndarray, y: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The points where the line changes direction, and both ends: the same picture.

    The core's arrays are sampled every few minutes but are straight between phase changes,
    so a 36-hour line of 433 points has a dozen corners, and stroking an antialiased line
    costs by its points. With both axes scaled to their range, a point is dropped when the
    line through it turns by less than 1e-9 rad (rounding, not shape: even summed over
    thousands of points that is far below a pixel) or when it repeats its neighbour; a
    line that doubles back is kept."""
    if len(x) < 3:
        return x, y
    xs = (x - x[0]) / (np.ptp(x) or 1.0)
    ys = (y - y[0]) / (np.ptp(y) or 1.0)
    dx1, dy1 = np.diff(xs[:-1]), np.diff(ys[:-1])
    dx2, dy2 = np.diff(xs[1:]), np.diff(ys[1:])
    lengths = np.hypot(dx1, dy1) * np.hypot(dx2, dy2)
    turn = np.abs(dx1 * dy2 - dy1 * dx2)  # |sin| of the turn × the two lengths
    straight = (lengths == 0) | ((turn <= 1e-9 * lengths) & (dx1 * dx2 + dy1 * dy2 > 0))
    keep = np.concatenate(([True], ~straight, [True]))
    return x[keep], y[keep]


class Trace(pg.GraphicsObject):
    """A line (``pen``) or the area between the line and zero (``brush``) over (x, y).

    ``step=True`` holds each value until the next x (a rate that changes in steps).
    ``opts`` carries the pen, brush and step mode under pyqtgraph's keys, which the
    legend samples read.
    """

    def __init__(
        self,
        *,
        name: str | None = None,
        pen: QPen | None = None,
        brush: QBrush | None = None,
        step: bool = False,
        antialias: bool = True,
    ) -> None:
        super().__init__()
        self.opts = {
            "name": name,
            "pen": pen,
            "brush": brush,
            "stepMode": "right" if step else None,
            "antialias": antialias,
        }
        self._x = np.zeros(0)
        self._y = np.zeros(0)
        self._polygon = QPolygonF()
        self._bounds = QRectF()
        self._padded: QRectF | None = None  # the bounds plus EDGE_PX, in data units

    # ---- what pyqtgraph's plot and legend ask of a data item --------------------------------
    def implements(self, interface: str | None = None) -> bool | list[str]:
        return ["plotData"] if interface is None else interface == "plotData"

    def name(self) -> str | None:
        return self.opts["name"]

    def getData(self) -> tuple[np.ndarray, np.ndarray]:  # noqa: N802 (pyqtgraph's name)
        return self._x, self._y

    def dataBounds(self, ax: int, frac: float = 1.0, orthoRange=None):  # noqa: N802, ANN001
        if len(self._x) == 0:
            return None, None
        if ax == 0:
            return self._bounds.left(), self._bounds.right()
        return self._bounds.top(), self._bounds.bottom()

    def pixelPadding(self) -> float:  # noqa: N802 (pyqtgraph's name)
        return EDGE_PX

    # ---- data -------------------------------------------------------------------------------
    def setData(self, x, y) -> None:  # noqa: N802, ANN001 (pyqtgraph's name; array-likes)
        """Take new arrays; the polygon and bounds are built here, not while painting."""
        self._x = np.asarray(x, dtype=float)
        self._y = np.asarray(y, dtype=float)
        xs, ys = turning_points(
            *(step_points(self._x, self._y) if self.opts["stepMode"] else (self._x, self._y))
        )
        if self.opts["brush"] is not None and len(xs):
            xs = np.concatenate((xs, [xs[-1], xs[0]]))  # down to zero and back along it
            ys = np.concatenate((ys, [0.0, 0.0]))
        self._polygon = pg.functions.arrayToQPolygonF(xs, ys) if len(xs) else QPolygonF()
        self.prepareGeometryChange()
        if len(xs):
            self._bounds = QRectF(
                float(xs.min()), float(ys.min()),
                float(xs.max() - xs.min()), float(ys.max() - ys.min()),
            )  # fmt: skip
        else:
            self._bounds = QRectF()
        self._padded = None
        self.update()

    # ---- drawing ----------------------------------------------------------------------------
    def viewTransformChanged(self) -> None:  # noqa: N802 (pyqtgraph's hook)
        """The padding is in pixels: recompute it when the view's scale changes."""
        self.prepareGeometryChange()
        self._padded = None

    def boundingRect(self) -> QRectF:  # noqa: N802 (Qt override)
        if self._padded is None:
            px, py = self.pixelVectors()
            dx = EDGE_PX * abs(px.x()) if px is not None else 0.0
            dy = EDGE_PX * abs(py.y()) if py is not None else 0.0
            self._padded = self._bounds.adjusted(-dx, -dy, dx, dy)
        return self._padded

    def paint(self, painter: QPainter, *_: object) -> None:
        if self._polygon.isEmpty():
            return
        painter.setRenderHint(QPainter.RenderHint.Antialiasing, self.opts["antialias"])
        if self.opts["brush"] is not None:
            painter.setPen(Qt.PenStyle.NoPen)
            painter.setBrush(self.opts["brush"])
            painter.drawPolygon(self._polygon)
        if self.opts["pen"] is not None:
            painter.setPen(self.opts["pen"])
            painter.setBrush(Qt.BrushStyle.NoBrush)
            painter.drawPolyline(self._polygon)


class TickGrid(pg.GraphicsObject):
    """Faint lines across a plot at its axes' ticks: every tick of ``x_axis`` (major lines
    darker than minor ones), and the major ticks of ``y_axis`` only (minor value lines would
    crowd a short plot). Drawn under the curves, in the axes' text colour. The lines are
    worked out when the view's range or size changes, not on every repaint."""

    MAJOR_ALPHA = 51  # of 255: what pyqtgraph's grid at alpha 0.2 gives a major tick
    MINOR_ALPHA = 25

    def __init__(self, x_axis: pg.AxisItem, y_axis: pg.AxisItem) -> None:
        super().__init__()
        self.x_axis = x_axis
        self.y_axis = y_axis
        self.setZValue(-1000)
        self._pens = (self._pen(QColor("#808080"), self.MAJOR_ALPHA),) * 2
        self._lines: tuple[list[QLineF], list[QLineF]] | None = None  # major, minor

    @staticmethod
    def _pen(colour: QColor, alpha: int) -> QPen:
        shade = QColor(colour)
        shade.setAlpha(alpha)
        pen = QPen(shade, 1.0)
        pen.setCosmetic(True)
        return pen

    def set_colour(self, colour: QColor) -> None:
        self._pens = (self._pen(colour, self.MAJOR_ALPHA), self._pen(colour, self.MINOR_ALPHA))
        self.update()

    def refresh(self) -> None:
        """Work the lines out again (the axes' ticks may have moved)."""
        self.prepareGeometryChange()
        self._lines = None
        self.update()

    def viewRangeChanged(self) -> None:  # noqa: N802 (pyqtgraph's hook)
        self.refresh()

    def viewTransformChanged(self) -> None:  # noqa: N802 (pyqtgraph's hook: resized)
        self.refresh()

    def boundingRect(self) -> QRectF:  # noqa: N802 (Qt override)
        view = self.getViewBox()
        return QRectF() if view is None else view.viewRect()

    def lines(self) -> tuple[list[QLineF], list[QLineF]]:
        """The major and the minor grid lines for the view's current range and size."""
        if self._lines is None:
            view = self.getViewBox()
            if view is None:
                return [], []
            rect, size = view.viewRect(), view.geometry()
            major: list[QLineF] = []
            minor: list[QLineF] = []
            x_levels = self.x_axis.tickValues(rect.left(), rect.right(), size.width())
            for level, (_spacing, hours) in enumerate(x_levels[:2]):
                (major if level == 0 else minor).extend(
                    QLineF(x, rect.top(), x, rect.bottom()) for x in hours
                )
            y_levels = self.y_axis.tickValues(rect.top(), rect.bottom(), size.height())
            if y_levels:
                major.extend(QLineF(rect.left(), y, rect.right(), y) for y in y_levels[0][1])
            self._lines = (major, minor)
        return self._lines

    def paint(self, painter: QPainter, *_: object) -> None:
        painter.setRenderHint(QPainter.RenderHint.Antialiasing, False)
        for pen, lines in zip(self._pens, self.lines(), strict=True):
            if lines:
                painter.setPen(pen)
                painter.drawLines(lines)
