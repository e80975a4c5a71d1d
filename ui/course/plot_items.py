"""Light plot items of our own: a plotted series (:class:`Trace`), the grid (:class:`TickGrid`),
a text pinned to a point (:class:`PlotLabel`) and an axis that remembers its bounds
(:class:`PlotAxis`).

pyqtgraph's general curve item recomputes bounds, pixel padding and finite checks on
every update and several times per repaint; with nine curves that was half of an
edit's redraw. A :class:`Trace` takes the core's arrays (always finite), builds its
polygon and bounds once per ``setData`` and only draws in ``paint``. Like any plot
item it is created once and updated in place.

pyqtgraph draws a grid as part of each axis, which makes every axis as large as its plot;
cached as pixmaps (the axes' text is costly to redraw) that was about 3 MiB for the four
timeline plots. A :class:`TickGrid` draws the same faint lines from inside the plot, so
the axes stay small.

pyqtgraph's text item is a whole text document, laid out again on every change and
re-transformed on every repaint. A :class:`PlotLabel` is one line laid out once per
change and drawn unscaled at its point.

Measured values are :class:`Markers`: a handful of symbols (and the periods they were
measured over) drawn in device pixels, with no scatter machinery behind them.

Doses given on the clock (diuretics) are :class:`DoseMarks`: a tick across the plot at
each dose, a band along its top for an infusion, each with the drug's name; laid out in
device pixels when the view changes, not on every repaint.
"""

from __future__ import annotations

import math

import numpy as np
import pyqtgraph as pg
from PySide6.QtCore import QLineF, QPointF, QRect, QRectF, Qt
from PySide6.QtGui import (
    QBrush,
    QColor,
    QFont,
    QFontMetricsF,
    QPainter,
    QPen,
    QPolygonF,
    QStaticText,
    QTransform,
)

EDGE_PX = 3.0  # a line's half-width and its antialiased edge, kept inside the bounds


def step_points(x: np.ndarray, y: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The corners of a step line where ``y[i]`` holds from ``x[i]`` until ``x[i + 1]``; the
    line ends with the step to the last value at the last x (none when the value holds)."""
    if len(x) == 0:
        return x, y
    xs, ys = np.repeat(x, 2)[1:], np.repeat(y, 2)[:-1]
    if len(y) > 1 and y[-1] == y[-2]:
        return xs[:-1], ys[:-1]
    return xs, ys


def turning_mask(x: np.ndarray, *lines: np.ndarray) -> np.ndarray:
    """Which points to keep so that each of ``lines`` (over the same ``x``) draws the same
    picture: both ends and every point where some line changes direction.

    The core's arrays are sampled every few minutes but are straight between phase changes,
    so a 36-hour line of 433 points has a dozen corners, and drawing costs by its points.
    With both axes scaled to their range, a point may go when every line through it turns
    by less than 1e-9 rad (rounding, not shape: even summed over thousands of points that
    is far below a pixel) or repeats its neighbour; a line that doubles back is kept.
    Lines sharing an x are tested together, one pass for all of them."""
    keep = np.ones(len(x), dtype=bool)
    if len(x) < 3 or not lines:
        return keep
    ys = np.array(lines, dtype=float)
    spans = ys.max(axis=1) - ys.min(axis=1)
    spans[spans == 0] = 1.0
    dx = np.diff(x) * (1.0 / ((x.max() - x.min()) or 1.0))
    dy = np.diff(ys, axis=1) / spans[:, None]
    squared = dx * dx + dy * dy  # each segment's length², per line
    dx1, dx2, dy1, dy2 = dx[:-1], dx[1:], dy[:, :-1], dy[:, 1:]
    lengths = np.sqrt(squared[:, :-1] * squared[:, 1:])  # the two lengths' product
    turn = np.abs(dx1 * dy2 - dy1 * dx2)  # |sin| of the turn × the two lengths
    straight = (turn <= 1e-9 * lengths) & (dx1 * dx2 + dy1 * dy2 > 0)
    straight |= lengths == 0
    keep[1:-1] = ~straight.all(axis=0)
    return keep


def thin(
    x: np.ndarray, keep: np.ndarray, *lines: np.ndarray, points: int = 150, sharp: float = 0.1
) -> np.ndarray:
    """Of the points ``keep`` marks (:func:`turning_mask`), about ``points`` evenly spaced
    by index, both ends, and each point where some line bends by more than ``sharp`` rad
    (axes scaled to their range): a bolus or a phase change keeps its corner.

    A smooth line turns a little at every point, so :func:`turning_mask` keeps them all:
    a 36-hour course is 433 points, a 14-day one 4033, on a plot a few hundred pixels
    wide, and drawing costs by the segment (a smooth line was most of a Course tab
    redraw). Every second pixel or so is enough for a slow curve; the error of a chord
    over a few pixels of a gentle bend is far below a pixel."""
    kept = np.flatnonzero(keep)
    if len(kept) <= points or not lines:
        return keep
    ys = np.array([line[kept] for line in lines], dtype=float)
    spans = np.ptp(ys, axis=1)
    spans[spans == 0] = 1.0
    xs = x[kept]
    dx = np.diff(xs) / ((xs[-1] - xs[0]) or 1.0)
    angles = np.arctan2(np.diff(ys, axis=1) / spans[:, None], dx)
    bend = np.abs((np.diff(angles, axis=1) + np.pi) % (2 * np.pi) - np.pi).max(axis=0)
    chosen = np.zeros(len(kept), dtype=bool)
    chosen[:: max(1, int(np.ceil(len(kept) / points)))] = True
    chosen[[0, -1]] = True
    chosen[1:-1] |= bend > sharp  # a jump bends at both its ends: both are kept
    result = np.zeros_like(keep)
    result[kept[chosen]] = True
    return result


# About one kept point every four pixels of a plot at the window's usual size: a chord over
# a few pixels of these slow curves strays well under a pixel (corners are kept besides).
DRAWN_POINTS = 60


def drawn_points(x: np.ndarray, *lines: np.ndarray) -> np.ndarray:
    """The points to draw ``lines`` (over the same ``x``) through: their corners
    (:func:`turning_mask`), thinned to about :data:`DRAWN_POINTS` with every sharp bend kept
    (:func:`thin`). One pass for all the lines of a plot or a view."""
    return thin(x, turning_mask(x, *lines), *lines, points=DRAWN_POINTS)


def step_changes(y: np.ndarray) -> np.ndarray:
    """Which points of a step line to keep: both ends and each point where the value
    changes (between them the line holds its value)."""
    keep = np.ones(len(y), dtype=bool)
    keep[1:-1] = y[1:-1] != y[:-2]
    return keep


class Trace(pg.GraphicsObject):
    """A line (``pen``) and the area between it and zero (``brush``) over (x, y).

    The area is filled without antialiasing: the line over it gives the smooth edge, and
    an antialiased fill edge is a good part of a redraw.

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
    ) -> None:
        super().__init__()
        self.opts = {
            "name": name,
            "pen": pen,
            "brush": brush,
            "stepMode": "right" if step else None,
        }
        self._x = np.zeros(0)
        self._y = np.zeros(0)
        self._polygon = QPolygonF()  # the outline to fill
        self._line = QPolygonF()  # the line through the kept points
        self._smooth = False  # some segment is slanted: worth antialiasing
        self._bounds = QRectF()
        self._padded: QRectF | None = None  # the bounds plus EDGE_PX, in data units
        self._pad: tuple[float, float] | None = None  # EDGE_PX in data units, per view scale

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
    def setData(self, x, y, corners: np.ndarray | None = None) -> None:  # noqa: N802, ANN001
        """Take new arrays; the polygon and bounds are built here, not while painting.

        ``corners`` marks the points to draw through when the caller has worked them out
        for several lines at once (:func:`turning_mask`); by default the line's own."""
        self._x = np.asarray(x, dtype=float)
        self._y = np.asarray(y, dtype=float)
        if self.opts["stepMode"]:
            keep = step_changes(self._y) if corners is None else corners
            xs, ys = step_points(self._x[keep], self._y[keep])
        else:
            keep = turning_mask(self._x, self._y) if corners is None else corners
            xs, ys = self._x[keep], self._y[keep]
        # pyqtgraph's own converter fills the polygon's memory from the arrays in one copy
        self._line = (
            pg.functions.arrayToQPolygonF(xs, ys)
            if self.opts["pen"] is not None and len(xs)
            else QPolygonF()
        )
        dx, dy = np.diff(xs), np.diff(ys)
        self._smooth = bool(np.any((dx != 0) & (dy != 0)))
        self._polygon = (
            pg.functions.arrayToQPolygonF(
                np.concatenate([xs, xs[[-1, 0]]]), np.concatenate([ys, [0.0, 0.0]])
            )  # down to zero, back
            if self.opts["brush"] is not None and len(xs)
            else QPolygonF()
        )
        self.prepareGeometryChange()
        if len(xs):
            low = min(float(ys.min()), 0.0) if self.opts["brush"] is not None else float(ys.min())
            high = max(float(ys.max()), 0.0) if self.opts["brush"] is not None else float(ys.max())
            left = float(xs.min())
            self._bounds = QRectF(left, low, float(xs.max()) - left, high - low)
        else:
            self._bounds = QRectF()
        self._padded = None
        self.update()

    # ---- drawing ----------------------------------------------------------------------------
    def viewTransformChanged(self) -> None:  # noqa: N802 (pyqtgraph's hook)
        """The padding is in pixels: work it out again when the view's scale changes."""
        self.prepareGeometryChange()
        self._pad = None
        self._padded = None

    def boundingRect(self) -> QRectF:  # noqa: N802 (Qt override)
        if self._padded is None:
            if self._pad is None:
                px, py = self.pixelVectors()
                if px is None or py is None:  # not in a view yet: no padding to know
                    return self._bounds
                self._pad = (EDGE_PX * abs(px.x()), EDGE_PX * abs(py.y()))
            dx, dy = self._pad
            self._padded = self._bounds.adjusted(-dx, -dy, dx, dy)
        return self._padded

    def paint(self, painter: QPainter, *_: object) -> None:
        if not self._polygon.isEmpty():
            painter.setRenderHint(QPainter.RenderHint.Antialiasing, False)
            painter.setPen(Qt.PenStyle.NoPen)
            painter.setBrush(self.opts["brush"])
            painter.drawPolygon(self._polygon)
        if not self._line.isEmpty():
            # One polyline in device pixels, not in data units: under a scale Qt strokes a
            # wide line into an outline and fills that, several times the work. A dash
            # pattern runs on along the whole line (drawn as separate short segments, each
            # would restart it and a dashed curve would look solid). A line along the axes
            # only (a step, a level) is drawn crisp: smoothing would only blur it.
            transform = painter.transform()
            painter.resetTransform()  # the clip is kept in device pixels
            painter.setRenderHint(QPainter.RenderHint.Antialiasing, self._smooth)
            painter.setPen(self.opts["pen"])
            painter.drawPolyline(transform.map(self._line))
            painter.setTransform(transform)  # cheaper than a save and restore of all state


def opaque_shade(colour: QColor, background: QColor, alpha: int) -> QColor:
    """``colour`` laid at ``alpha`` (of 255) over ``background``, as one opaque colour: an
    opaque line is drawn as is, a semi-transparent one blended pixel by pixel."""
    mix = [
        round((a * alpha + b * (255 - alpha)) / 255)
        for a, b in zip(colour.getRgb()[:3], background.getRgb()[:3], strict=True)
    ]
    return QColor(*mix)


class ViewSpanning(pg.GraphicsObject):
    """An item drawn across its whole view (the grid, dose marks): its bounds are the view's
    range, kept until pyqtgraph reports a change (Qt asks for them on every repaint), and
    what it laid out in device pixels is dropped with them."""

    def __init__(self) -> None:
        super().__init__()
        self._bounds: QRectF | None = None  # the view's range
        self._device: tuple | None = None  # (transform, what was laid out for it)

    def forget_layout(self) -> None:
        self.prepareGeometryChange()
        self._bounds = None
        self._device = None

    def viewRangeChanged(self) -> None:  # noqa: N802 (pyqtgraph's hook)
        self.forget_layout()

    def viewTransformChanged(self) -> None:  # noqa: N802 (pyqtgraph's hook: resized)
        self.viewRangeChanged()

    def boundingRect(self) -> QRectF:  # noqa: N802 (Qt override)
        if self._bounds is None:
            view = self.getViewBox()
            if view is None:
                return QRectF()
            self._bounds = view.viewRect()
        return self._bounds


class TickGrid(ViewSpanning):
    """Faint lines across a plot at its axes' ticks: every tick of ``x_axis`` (major lines
    darker than minor ones), and the major ticks of ``y_axis`` only (minor value lines would
    crowd a short plot). Drawn under the curves, in the axes' text colour faded into the
    background. The lines are worked out when the view's range or size changes, not on
    every repaint."""

    MAJOR_ALPHA = 51  # of 255: what pyqtgraph's grid at alpha 0.2 gives a major tick
    MINOR_ALPHA = 25

    def __init__(self, x_axis: pg.AxisItem, y_axis: pg.AxisItem) -> None:
        super().__init__()
        self.x_axis = x_axis
        self.y_axis = y_axis
        self.setZValue(-1000)
        self.set_colour(QColor("#808080"), QColor("#ffffff"))
        self._lines: tuple[list[QLineF], list[QLineF]] | None = None  # major, minor

    def set_colour(self, colour: QColor, background: QColor) -> None:
        """Lines in ``colour`` made faint against the plot's ``background``."""
        self._shades = (
            opaque_shade(colour, background, self.MAJOR_ALPHA),
            opaque_shade(colour, background, self.MINOR_ALPHA),
        )
        self.update()

    def refresh(self) -> None:
        """Work the lines out again (the axes' ticks may have moved)."""
        self.forget_layout()
        self._lines = None
        self.update()

    def viewRangeChanged(self) -> None:  # noqa: N802 (pyqtgraph's hook)
        self.refresh()

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

    def device_rects(self, transform: QTransform) -> tuple[list[QRect], list[QRect]]:
        """The lines as one-pixel-wide rectangles in device pixels, kept while
        ``transform`` (the painter's) stays the same."""
        if self._device is None or self._device[0] != transform:
            rects = tuple(
                [_pixel_rect(transform.map(line)) for line in lines] for lines in self.lines()
            )
            self._device = (QTransform(transform), rects)
        return self._device[1]

    def paint(self, painter: QPainter, *_: object) -> None:
        # Opaque rectangles in device pixels: Qt fills those row by row, where even a thin
        # line is stepped pixel by pixel and a faint one blended into each of them.
        transform = painter.transform()
        rects = self.device_rects(transform)
        painter.resetTransform()  # the clip is kept in device pixels
        painter.setRenderHint(QPainter.RenderHint.Antialiasing, False)
        painter.setPen(Qt.PenStyle.NoPen)
        for shade, lines in zip(self._shades, rects, strict=True):
            if lines:
                painter.setBrush(shade)
                painter.drawRects(lines)
        painter.setTransform(transform)  # cheaper than a save and restore of all state


def _pixel_rect(line: QLineF) -> QRect:
    """The pixels a one-pixel, unsmoothed, horizontal or vertical ``line`` covers."""
    left, top = math.floor(min(line.x1(), line.x2())), math.floor(min(line.y1(), line.y2()))
    right, bottom = math.floor(max(line.x1(), line.x2())), math.floor(max(line.y1(), line.y2()))
    return QRect(left, top, right - left + 1, bottom - top + 1)


class PlotLabel(pg.GraphicsObject):
    """A text above and left of its position (in data units), or below and left with
    ``below=True``, ``MARGIN_PX`` clear of it so a line drawn through the position stays
    readable; drawn in pixels, so it keeps its size however the plot is scaled. One line,
    or more when wider than :meth:`set_max_width` allows (a narrow plot)."""

    MARGIN_PX = 4.0

    def __init__(self, colour: str, *, below: bool = False) -> None:
        super().__init__()
        self.setFlag(self.GraphicsItemFlag.ItemIgnoresTransformations)
        self._below = below
        self._colour = QColor(colour)
        self._font = QFont()
        self._text = QStaticText()
        self._text.setTextFormat(Qt.TextFormat.PlainText)
        self._rect = QRectF()
        self._max_width: float | None = None

    def text(self) -> str:
        return self._text.text()

    def setText(self, text: str) -> None:  # noqa: N802 (the name of Qt's text items)
        """Show ``text``; laid out here, once, not on every repaint."""
        if text == self._text.text():
            return
        self._text.setText(text)
        self._lay_out()

    def set_max_width(self, pixels: float | None) -> None:
        """Break the text into lines (between words) where it is wider than ``pixels``."""
        if pixels != self._max_width:
            self._max_width = pixels
            self._lay_out()

    def _lay_out(self) -> None:
        self.prepareGeometryChange()
        self._text.setTextWidth(-1)  # its own width first, to measure it
        self._text.prepare(QTransform(), self._font)
        if self._max_width is not None and self._text.size().width() > self._max_width:
            self._text.setTextWidth(self._max_width)
            self._text.prepare(QTransform(), self._font)
        size = self._text.size()
        width, height = size.width() + self.MARGIN_PX, size.height() + self.MARGIN_PX
        self._rect = QRectF(-width, 0.0 if self._below else -height, width, height)
        self.update()

    def boundingRect(self) -> QRectF:  # noqa: N802 (Qt override)
        return self._rect

    def paint(self, painter: QPainter, *_: object) -> None:
        if self._text.text():
            painter.setFont(self._font)
            painter.setPen(self._colour)
            top = self._rect.top() + (self.MARGIN_PX if self._below else 0.0)
            painter.drawStaticText(QPointF(self._rect.left(), top), self._text)


class Markers(pg.GraphicsObject):
    """Measured values: a filled symbol (``"o"`` circle, ``"s"`` square) of ``size`` pixels
    at each (x, y) and, where ``starts`` are given, a line from each start to its x at its
    y (a value measured over a period, such as urine collected over hours).

    The points are few (what a nurse recorded), so they are drawn one by one in device
    pixels, unscaled; the bounds are built in ``setData``. ``opts`` carries the symbol,
    size, pen and brush under pyqtgraph's keys, which the legend samples read.
    """

    def __init__(
        self, *, name: str | None, colour: str, symbol: str = "o", size: float = 9.0
    ) -> None:
        super().__init__()
        if symbol not in ("o", "s"):
            raise ValueError(f"unknown symbol {symbol!r}")
        outline = QPen(QColor(colour).darker(140), 1.0)
        outline.setCosmetic(True)
        span = QPen(QColor(colour), 2.0)
        span.setCosmetic(True)
        span.setCapStyle(Qt.PenCapStyle.FlatCap)
        self.opts = {"name": name, "pen": outline, "brush": QBrush(QColor(colour)),
                     "symbol": symbol, "size": size, "span_pen": span}  # fmt: skip
        self._x = np.zeros(0)
        self._y = np.zeros(0)
        self._starts = np.zeros(0)
        self._points: list[QPointF] = []
        self._spans = QPolygonF()  # point pairs: start, end
        self._bounds = QRectF()
        self._pad: tuple[float, float] | None = None

    def implements(self, interface: str | None = None) -> bool | list[str]:
        return ["plotData"] if interface is None else interface == "plotData"

    def name(self) -> str | None:
        return self.opts["name"]

    def getData(self) -> tuple[np.ndarray, np.ndarray]:  # noqa: N802 (pyqtgraph's name)
        return self._x, self._y

    def spans(self) -> np.ndarray:
        """The start of each point's period (its own x where none was given)."""
        return self._starts

    def setData(self, x, y, starts=None) -> None:  # noqa: N802, ANN001
        self._x = np.asarray(x, dtype=float)
        self._y = np.asarray(y, dtype=float)
        self._starts = self._x if starts is None else np.asarray(starts, dtype=float)
        xs, ys, ss = self._x.tolist(), self._y.tolist(), self._starts.tolist()
        self._points = [QPointF(a, b) for a, b in zip(xs, ys, strict=True)]
        self._spans = QPolygonF(
            [p for s, a, b in zip(ss, xs, ys, strict=True) if s != a
             for p in (QPointF(s, b), QPointF(a, b))]
        )  # fmt: skip
        self.prepareGeometryChange()
        if xs:
            left, bottom = min(ss + xs), min(ys)
            self._bounds = QRectF(left, bottom, max(xs) - left, max(ys) - bottom)
        else:
            self._bounds = QRectF()
        self._pad = None
        self.update()

    def dataBounds(self, ax: int, frac: float = 1.0, orthoRange=None):  # noqa: N802, ANN001
        if len(self._x) == 0:
            return None, None
        if ax == 0:
            return self._bounds.left(), self._bounds.right()
        return self._bounds.top(), self._bounds.bottom()

    def pixelPadding(self) -> float:  # noqa: N802 (pyqtgraph's name)
        return self.opts["size"] / 2 + 1

    def viewTransformChanged(self) -> None:  # noqa: N802 (pyqtgraph's hook)
        self.prepareGeometryChange()
        self._pad = None

    def boundingRect(self) -> QRectF:  # noqa: N802 (Qt override)
        if self._pad is None:
            px, py = self.pixelVectors()
            if px is None or py is None:
                return self._bounds
            edge = self.pixelPadding()
            self._pad = (edge * abs(px.x()), edge * abs(py.y()))
        dx, dy = self._pad
        return self._bounds.adjusted(-dx, -dy, dx, dy)

    @staticmethod
    def draw_symbol(painter: QPainter, centre: QPointF, opts: dict) -> None:
        """One symbol of ``opts`` centred on ``centre`` (device pixels); the legend's too."""
        half = opts["size"] / 2
        painter.setPen(opts["pen"])
        painter.setBrush(opts["brush"])
        if opts["symbol"] == "s":
            painter.drawRect(QRectF(centre.x() - half, centre.y() - half, 2 * half, 2 * half))
        else:
            painter.drawEllipse(centre, half, half)

    def paint(self, painter: QPainter, *_: object) -> None:
        if not self._points:
            return
        transform = painter.transform()
        painter.resetTransform()  # unscaled symbols, in device pixels
        if not self._spans.isEmpty():
            painter.setRenderHint(QPainter.RenderHint.Antialiasing, False)  # level lines
            painter.setPen(self.opts["span_pen"])
            painter.drawLines(transform.map(self._spans))
        painter.setRenderHint(QPainter.RenderHint.Antialiasing, True)
        for point in self._points:
            self.draw_symbol(painter, transform.map(point), self.opts)
        painter.setTransform(transform)


class PlotAxis(pg.AxisItem):
    """pyqtgraph's axis, remembering its bounding rectangle until its geometry or tick style
    changes: Qt asks for it a few dozen times a redraw, and pyqtgraph works it out afresh
    each time."""

    def boundingRect(self) -> QRectF:  # noqa: N802 (Qt override)
        key = (self.geometry(), self.style["tickLength"], self.style["hideOverlappingLabels"])
        cached = getattr(self, "_bounds_for", None)
        if cached is None or cached[0] != key:
            cached = (key, super().boundingRect())
            self._bounds_for = cached
        return QRectF(cached[1])


class DoseMarks(ViewSpanning):
    """Doses on a plot's hour axis: each single dose a one-pixel line across the plot with a
    small triangle at its top, each infusion a band along the top from its start to its
    end (with a line at either end), and the drug's name beside each, in words.

    ``setData`` takes ``(start hour, end hour, label)`` per dose (the same hour twice for a
    single dose). The marks span the view whatever its value range, so they take no part
    in the plot's bounds (add the item with ``ignoreBounds=True``). Lines and bands are
    opaque rectangles pre-mixed with the background, as the grid's; a name that would run
    into the one before it goes on a second row, and is left out (the tick stays) when
    that is taken too."""

    LINE_ALPHA = 150  # of 255, over the background
    BAND_ALPHA = 80
    BAND_PX = 6
    HEAD_PX = 5  # half the triangle's width
    GAP_PX = 3.0

    def __init__(self) -> None:
        super().__init__()
        self.setZValue(-500)  # over the grid (-1000), under the curves
        self._doses: list[tuple[float, float, str]] = []
        self._texts: list[QStaticText] = []
        self._font = QFont()
        self._font.setPointSizeF(8.0)
        self.set_colour(QColor("#606060"), QColor("#ffffff"))

    def set_colour(self, colour: QColor, background: QColor) -> None:
        """Names in ``colour``; lines and bands in it laid over ``background``."""
        self._text_colour = QColor(colour)
        self._line = opaque_shade(colour, background, self.LINE_ALPHA)
        self._band = opaque_shade(colour, background, self.BAND_ALPHA)
        self.update()

    def doses(self) -> list[tuple[float, float, str]]:
        """What is marked: (start hour, end hour, label) per dose."""
        return list(self._doses)

    def names_drawn(self) -> list[str]:
        """The names as last laid out on screen (cut short, or left out, where crowded)."""
        return [text.text() for _, text in self._device[1][3]] if self._device else []

    def setData(self, doses) -> None:  # noqa: N802, ANN001 (the plot items' name)
        """Mark ``doses``, (start hour, end hour, label) each; the names laid out here."""
        doses = [(float(start), float(end), str(label)) for start, end, label in doses]
        if doses == self._doses:
            return
        self._doses = doses
        self._texts = []
        for _, _, label in doses:
            text = QStaticText(label)
            text.setTextFormat(Qt.TextFormat.PlainText)
            text.prepare(QTransform(), self._font)
            self._texts.append(text)
        self._device = None
        self.update()

    def device_layout(self, transform: QTransform) -> tuple:
        """Lines, bands, triangles and placed names in device pixels for ``transform``."""
        if self._device is not None and self._device[0] == transform:
            return self._device[1]
        view = transform.mapRect(self.boundingRect())
        top, height = math.floor(view.top()), max(1, math.floor(view.height()))
        lines: list[QRect] = []
        bands: list[QRect] = []
        heads: list[QPolygonF] = []
        names: list[tuple[QPointF, QStaticText]] = []
        row_px = self._texts[0].size().height() if self._texts else 0.0
        last_right = [-math.inf, -math.inf]  # where the names of each of two rows end
        for (start, end, label), text in zip(self._doses, self._texts, strict=True):
            x0 = math.floor(transform.map(QPointF(start, 0.0)).x())
            x1 = math.floor(transform.map(QPointF(end, 0.0)).x())
            if x1 > x0:  # an infusion: a band along the top between its two ends
                bands.append(QRect(x0, top, x1 - x0, self.BAND_PX))
                lines.extend(QRect(x, top, 1, height) for x in (x0, x1))
            else:
                lines.append(QRect(x0, top, 1, height))
                middle, head = x0 + 0.5, self.HEAD_PX
                heads.append(QPolygonF([QPointF(middle - head, top), QPointF(middle + head, top),
                                        QPointF(middle, top + 1.5 * head)]))  # fmt: skip
            # the name right of its mark, cut short with "…" at the plot's edge; a mark too
            # near the edge for a few letters has its name on its left, pointing at it
            left = x0 + self.GAP_PX + 1
            room = view.right() - left - 1
            if text.size().width() > room:
                fitted = self._elided(label, room)
                if fitted is not None:
                    text = fitted
                else:
                    text = self._elided(f"{label} ▸", x0 - view.left()) or text
                    left = x0 - self.GAP_PX - text.size().width()
            width = text.size().width()
            # on the first row if it is clear there, else on a second, else left out
            row = next((r for r in (0, 1) if left >= last_right[r] + self.GAP_PX), None)
            if row is not None:
                names.append((QPointF(left, top + self.BAND_PX + 1 + row * row_px), text))
                last_right[row] = left + width
        laid = (lines, bands, heads, names)
        self._device = (QTransform(transform), laid)
        return laid

    def _elided(self, label: str, room: float) -> QStaticText | None:
        """``label`` cut short with "…" to ``room`` pixels, or None when not even four
        letters and the "…" fit (then it is no use as a name)."""
        metrics = QFontMetricsF(self._font)
        shown = metrics.elidedText(label, Qt.TextElideMode.ElideRight, room)
        if len(shown) < min(len(label), 5):
            return None
        text = QStaticText(shown)
        text.setTextFormat(Qt.TextFormat.PlainText)
        text.prepare(QTransform(), self._font)
        return text

    def paint(self, painter: QPainter, *_: object) -> None:
        if not self._doses:
            return
        transform = painter.transform()
        lines, bands, heads, names = self.device_layout(transform)
        painter.resetTransform()  # device pixels; the clip is kept in them
        painter.setRenderHint(QPainter.RenderHint.Antialiasing, False)
        painter.setPen(Qt.PenStyle.NoPen)
        if bands:
            painter.setBrush(self._band)
            painter.drawRects(bands)
        painter.setBrush(self._line)
        painter.drawRects(lines)
        for head in heads:
            painter.drawPolygon(head)
        painter.setFont(self._font)
        painter.setPen(self._text_colour)
        for point, text in names:
            painter.drawStaticText(point, text)
        painter.setTransform(transform)
