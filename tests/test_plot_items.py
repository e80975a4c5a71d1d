"""The plotted series item: the same picture from fewer points, bounds built on update."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from ui.course.plot_items import Trace, step_changes, step_points, turning_mask


def turning_points(x: np.ndarray, y: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The points of one line that turning_mask keeps."""
    keep = turning_mask(x, y)
    return x[keep], y[keep]


def distance_to_polyline(px: float, py: float, xs: np.ndarray, ys: np.ndarray) -> float:
    """Shortest distance from (px, py) to the polyline through (xs, ys)."""
    best = np.inf
    for x0, y0, x1, y1 in zip(xs[:-1], ys[:-1], xs[1:], ys[1:], strict=True):
        dx, dy = x1 - x0, y1 - y0
        t = 0.0 if dx == dy == 0 else ((px - x0) * dx + (py - y0) * dy) / (dx * dx + dy * dy)
        t = min(1.0, max(0.0, t))
        best = min(best, float(np.hypot(px - (x0 + t * dx), py - (y0 + t * dy))))
    return best


def test_step_points_hold_each_value_until_the_next_hour():
    xs, ys = step_points(np.array([0.0, 1.0, 3.0]), np.array([5.0, 2.0, 0.0]))
    assert list(zip(xs, ys, strict=True)) == [(0, 5), (1, 5), (1, 2), (3, 2), (3, 0)]


def test_a_step_that_holds_its_last_value_ends_without_a_drop():
    xs, ys = step_points(np.array([0.0, 1.0, 3.0]), np.array([5.0, 2.0, 2.0]))
    assert list(zip(xs, ys, strict=True)) == [(0, 5), (1, 5), (1, 2), (3, 2)]


def test_step_changes_keep_the_ends_and_each_new_value():
    rate = np.array([50.0, 50.0, 50.0, 10.0, 10.0, 0.0, 0.0])
    assert list(np.flatnonzero(step_changes(rate))) == [0, 3, 5, 6]


def test_lines_on_one_x_share_their_corners():
    """One pass for several lines keeps every corner of each (and only corners)."""
    hours = np.arange(0, 24.001, 1 / 12)
    given = np.where(hours < 12, 100 * hours, 1200 + 20 * (hours - 12))
    deficit = np.maximum(800 - 100 * hours, 0)  # reaches zero at 8 h
    weight = np.full_like(hours, 24.0)  # flat: no corners of its own
    keep = turning_mask(hours, given, deficit, weight)
    assert list(hours[keep]) == [0.0, 8.0, 12.0, 24.0]
    for line in (given, deficit, weight):
        np.testing.assert_allclose(np.interp(hours, hours[keep], line[keep]), line, atol=1e-9)


def test_turning_points_keep_the_corners_and_drop_the_rest():
    hours = np.arange(0, 24.001, 1 / 12)  # five-minute steps, as the core samples
    given = np.where(hours < 12, 100 * hours, 1200 + 20 * (hours - 12))
    xs, ys = turning_points(hours, given)
    assert list(xs) == [0.0, 12.0, 24.0]
    assert ys[1] == pytest.approx(1200) and ys[2] == pytest.approx(1440)


def test_a_line_that_doubles_back_keeps_its_turn():
    xs, ys = turning_points(np.array([0.0, 2.0, 1.0]), np.array([0.0, 2.0, 1.0]))
    assert len(xs) == 3


@given(
    st.lists(
        st.tuples(st.floats(0.01, 5), st.floats(-1e4, 1e4), st.integers(1, 20)),
        min_size=1,
        max_size=8,
    )
)
def test_every_dropped_point_lies_on_the_simplified_line(pieces):
    """Piecewise-straight data, as the core produces: nothing of the picture is lost."""
    xs, ys = [0.0], [0.0]
    for width, slope, samples in pieces:
        for _ in range(samples):
            xs.append(xs[-1] + width / samples)
            ys.append(ys[-1] + slope * width / samples)
    x, y = np.array(xs), np.array(ys)
    kept_x, kept_y = turning_points(x, y)
    assert kept_x[0] == x[0] and kept_x[-1] == x[-1]
    assert len(kept_x) <= len(pieces) + 1
    # at the plot's scale (both axes to their range) no point moves by a millionth
    sx, sy = np.ptp(x) or 1.0, np.ptp(y) or 1.0
    worst = max(
        distance_to_polyline(px / sx, py / sy, kept_x / sx, kept_y / sy)
        for px, py in zip(x, y, strict=True)
    )
    assert worst < 1e-6


def test_a_smooth_curve_sampled_finely_keeps_its_shape():
    """Local turns below the threshold must not add up to a visible straight cut."""
    hours = np.linspace(0, 336, 20161)  # 14 days at one-minute steps
    curve = 1 - np.exp(-hours / 100)
    kept_x, kept_y = turning_points(hours, curve)
    mid = np.interp(168, kept_x, kept_y)
    assert mid == pytest.approx(1 - np.exp(-1.68), abs=1e-4)


def test_trace_keeps_the_arrays_and_bounds_and_draws_fewer_points(qtbot):
    from PySide6.QtGui import QPen

    trace = Trace(name="Given", pen=QPen(), step=True)
    hours = np.arange(0, 6.001, 0.25)
    rate = np.where(hours < 2, 50.0, 10.0)
    trace.setData(hours, rate)
    x, y = trace.getData()
    np.testing.assert_array_equal(x, hours)
    np.testing.assert_array_equal(y, rate)
    assert trace.dataBounds(0) == (0.0, 6.0) and trace.dataBounds(1) == (10.0, 50.0)
    corners = [(p.x(), p.y()) for p in trace._line]
    assert corners == [(0, 50), (2, 50), (2, 10), (6, 10)]
    assert trace._polygon.isEmpty()  # nothing to fill without a brush
    trace.setData([], [])
    assert trace.dataBounds(0) == (None, None) and trace._line.isEmpty()


def _ink(draw, width: int = 400, height: int = 170) -> np.ndarray:
    """Which pixels ``draw`` makes dark on a white image, with antialiasing on."""
    from PySide6.QtGui import QColor, QImage, QPainter

    image = QImage(width, height, QImage.Format.Format_ARGB32_Premultiplied)
    image.fill(QColor("white"))
    painter = QPainter(image)
    painter.setRenderHint(QPainter.RenderHint.Antialiasing)
    draw(painter)
    painter.end()
    pixels = np.frombuffer(image.constBits(), np.uint8).reshape(height, width, 4)
    return pixels[..., :3].mean(axis=2) < 128


@pytest.mark.parametrize("style", ["SolidLine", "DashLine", "DotLine"])
def test_a_trace_draws_the_picture_qt_draws_for_its_polyline(qtbot, style):
    """The trace, drawn in device pixels, against Qt's own polyline in data units: the same
    ink on the same path."""
    from PySide6.QtCore import QPointF, Qt
    from PySide6.QtGui import QColor, QPainter, QPen, QPolygonF

    x = np.array([10.0, 120.0, 120.0, 250.0, 390.0])
    y = np.array([150.0, 150.0, 40.0, 100.0, 20.0])
    pen = QPen(QColor("black"), 2.5, getattr(Qt.PenStyle, style))
    trace = Trace(pen=pen)
    trace.setData(x, y)

    def polyline(painter: QPainter) -> None:
        painter.setPen(pen)
        painter.drawPolyline(QPolygonF([QPointF(a, b) for a, b in zip(x, y, strict=True)]))

    ours, reference = _ink(trace.paint), _ink(polyline)
    assert reference.sum() > 400  # the reference line is there at all
    assert (ours != reference).sum() <= 0.02 * reference.sum()


@pytest.mark.parametrize("style", ["DashLine", "DotLine"])
def test_a_dashed_curve_of_many_short_pieces_stays_dashed(qtbot, style):
    """A smooth course keeps a point every few pixels; its dashes must run on across them
    (a pattern restarted at every point inks the whole line: the Course tab once drew the
    dashed interstitium and the dotted cells as solid lines, unlike their legend)."""
    from PySide6.QtCore import Qt
    from PySide6.QtGui import QColor, QPen

    x = np.linspace(10.0, 390.0, 120)  # about 3 px apart
    y = 85.0 + 60.0 * np.sin(x / 60.0)
    solid, dashed = (
        Trace(pen=QPen(QColor("black"), 2.0)),
        Trace(pen=QPen(QColor("black"), 2.0, getattr(Qt.PenStyle, style))),
    )
    solid.setData(x, y, corners=np.ones(len(x), dtype=bool))
    dashed.setData(x, y, corners=np.ones(len(x), dtype=bool))
    full, broken = _ink(solid.paint).sum(), _ink(dashed.paint).sum()
    assert full > 400
    assert broken < 0.9 * full  # gaps (restarted at every point, it inked as much as solid)


def test_a_shaded_trace_closes_down_to_zero(qtbot):
    from PySide6.QtGui import QBrush

    area = Trace(brush=QBrush())
    area.setData([0.0, 1.0, 2.0], [3.0, 2.0, 1.0])
    points = [(p.x(), p.y()) for p in area._polygon]
    assert points == [(0, 3), (2, 1), (2, 0), (0, 0)]
    assert area.dataBounds(1) == (0.0, 3.0)


def test_tick_grid_draws_at_the_axis_ticks_in_the_text_colour(qtbot):
    import pyqtgraph as pg
    from PySide6.QtGui import QColor

    from ui.course.plot_items import TickGrid

    widget = pg.PlotWidget()
    qtbot.addWidget(widget)
    widget.resize(600, 300)
    widget.setBackground("w")
    plot = widget.getPlotItem()
    grid = TickGrid(plot.getAxis("bottom"), plot.getAxis("left"))
    plot.vb.addItem(grid, ignoreBounds=True)
    grid.set_colour(QColor("#000000"), QColor("#ffffff"))
    plot.setXRange(0, 24, padding=0)
    plot.setYRange(0, 100, padding=0)
    widget.show()
    qtbot.waitExposed(widget)
    image = widget.grab().toImage()
    assert grid.boundingRect() == plot.vb.viewRect()

    def shade(x: float, y: float) -> int:
        """The darkest pixel within one pixel of (x, y): a 1-px line may round either way."""
        point = widget.mapFromScene(plot.vb.mapViewToScene(pg.Point(x, y)))
        return min(QColor(image.pixel(point.x() + dx, point.y())).lightness() for dx in (-1, 0, 1))

    major_x = plot.getAxis("bottom").tickValues(0, 24, plot.vb.width())[0][1]
    major_x = [x for x in major_x if 0 < x < 24]
    assert major_x, "the axis has major ticks inside the range"
    for x in major_x:
        assert shade(x, 50) < 240, f"no grid line at hour {x}"
    between = (major_x[0] + (major_x[1] if len(major_x) > 1 else 24)) / 2 + 0.37
    assert shade(between, 37.3) == 255, "the grid draws only at ticks"


def test_tick_grid_works_its_lines_out_again_when_the_range_moves(qtbot):
    import pyqtgraph as pg

    from ui.course.plot_items import TickGrid

    widget = pg.PlotWidget()
    qtbot.addWidget(widget)
    widget.resize(600, 300)
    plot = widget.getPlotItem()
    grid = TickGrid(plot.getAxis("bottom"), plot.getAxis("left"))
    plot.vb.addItem(grid, ignoreBounds=True)
    plot.setXRange(0, 24, padding=0)
    plot.setYRange(0, 100, padding=0)
    widget.show()
    qtbot.waitExposed(widget)
    day = [line.x1() for line in grid.lines()[0] if line.x1() == line.x2()]
    assert grid.lines() is grid.lines()  # kept between repaints
    plot.setXRange(0, 240, padding=0)
    ten_days = [line.x1() for line in grid.lines()[0] if line.x1() == line.x2()]
    assert max(ten_days) > max(day) and ten_days != day


def test_plot_label_sits_above_left_of_its_point_at_a_fixed_pixel_size(qtbot):
    import pyqtgraph as pg
    from PySide6.QtWidgets import QApplication

    from ui.course.plot_items import PlotLabel

    widget = pg.PlotWidget()
    qtbot.addWidget(widget)
    widget.resize(600, 300)
    plot = widget.getPlotItem()
    plot.setXRange(0, 24, padding=0)
    plot.setYRange(0, 10, padding=0)
    label = PlotLabel("#d62728")
    plot.addItem(label, ignoreBounds=True)
    label.setText("overload line: +10 % = 28.51 kg")
    label.setPos(20, 5)
    widget.show()
    qtbot.waitExposed(widget)

    def placed():
        """The label's rectangle (its text and margin) and its point, in the widget's pixels."""
        QApplication.processEvents()  # the view takes its new range on the next turn
        device = label.deviceTransform(widget.viewportTransform())
        rect = device.mapRect(label.boundingRect())
        point = widget.viewportTransform().map(plot.vb.mapViewToScene(pg.Point(20, 5)))
        return rect, point

    rect, point = placed()
    assert label.text() == "overload line: +10 % = 28.51 kg"
    assert rect.width() > 100 and rect.height() > 8  # one line of text, in pixels
    assert rect.right() == pytest.approx(point.x(), abs=1)  # within a pixel
    assert rect.bottom() == pytest.approx(point.y(), abs=1)
    plot.setXRange(0, 240, padding=0)  # ten times the hours: the text keeps its size
    plot.setYRange(0, 100, padding=0)
    moved, point = placed()
    assert moved.size() == rect.size()
    assert moved.right() == pytest.approx(point.x(), abs=1)  # within a pixel
    assert moved.bottom() == pytest.approx(point.y(), abs=1)


def test_plot_axis_bounds_follow_its_geometry_and_tick_style(qtbot):
    import pyqtgraph as pg

    from ui.course.plot_items import PlotAxis

    widget = pg.PlotWidget(axisItems={"left": PlotAxis("left")})
    qtbot.addWidget(widget)
    widget.resize(600, 300)
    widget.show()
    qtbot.waitExposed(widget)
    axis = widget.getPlotItem().getAxis("left")

    def pyqtgraphs_own():
        return pg.AxisItem.boundingRect(axis)

    assert axis.boundingRect() == pyqtgraphs_own()
    widget.resize(700, 420)
    qtbot.waitUntil(lambda: axis.geometry().height() > 300)
    assert axis.boundingRect() == pyqtgraphs_own()  # a new size, new bounds
    axis.setStyle(tickLength=-12)  # ticks pointing out widen the rectangle
    assert axis.boundingRect() == pyqtgraphs_own()


def test_plot_label_below_sits_under_left_of_its_point(qtbot):
    """A floor line's label goes under it, clear of the band above."""
    import pyqtgraph as pg
    from PySide6.QtWidgets import QApplication

    from ui.course.plot_items import PlotLabel

    widget = pg.PlotWidget()
    qtbot.addWidget(widget)
    widget.resize(600, 300)
    plot = widget.getPlotItem()
    plot.setXRange(0, 24, padding=0)
    plot.setYRange(0, 10, padding=0)
    label = PlotLabel("#808080", below=True)
    plot.addItem(label, ignoreBounds=True)
    label.setText("diluting floor 50 mOsm/kg")
    label.setPos(20, 5)
    widget.show()
    qtbot.waitExposed(widget)
    QApplication.processEvents()
    rect = label.deviceTransform(widget.viewportTransform()).mapRect(label.boundingRect())
    point = widget.viewportTransform().map(plot.vb.mapViewToScene(pg.Point(20, 5)))
    assert rect.right() == pytest.approx(point.x(), abs=1)
    assert rect.top() == pytest.approx(point.y(), abs=1)  # hangs under the point


def test_markers_keep_their_points_and_spans_and_draw_them(qtbot):
    """Measured values: a symbol at each point, and a measured period as a line back to its
    start (45 mL collected over 4 h to hour 8 is a mean over hours 4–8)."""
    from PySide6.QtGui import QColor, QImage, QPainter, QTransform

    from ui.course.plot_items import Markers

    marks = Markers(name="Measured", colour="#000000", symbol="o", size=10)
    assert marks.opts["symbol"] == "o" and marks.name() == "Measured"
    marks.setData([8.0, 12.0], [0.5, 2.0], starts=[4.0, 8.0])
    x, y = marks.getData()
    assert list(x) == [8.0, 12.0] and list(y) == [0.5, 2.0]
    assert marks.dataBounds(0) == (4.0, 12.0)  # the spans count in the bounds
    assert marks.dataBounds(1) == (0.5, 2.0)

    def ink(transform: QTransform) -> np.ndarray:
        image = QImage(200, 100, QImage.Format.Format_ARGB32_Premultiplied)
        image.fill(QColor("white"))
        painter = QPainter(image)
        painter.setTransform(transform)
        marks.paint(painter)
        painter.end()
        pixels = np.frombuffer(image.constBits(), np.uint8).reshape(100, 200, 4)
        return pixels[..., :3].mean(axis=2) < 128

    # 10 px per hour, y upwards from pixel row 80, 20 px per unit
    drawn = ink(QTransform(10, 0, 0, -20, 0, 80))
    assert drawn[70, 80] and drawn[40, 120]  # each symbol at its point
    assert drawn[70, 50] and not drawn[70, 30]  # the first period's line runs back to hour 4
    assert drawn[70 - 5, 80] and not drawn[70 - 8, 80]  # 10 px symbol: 5 px either side
    marks.setData([], [])
    assert marks.dataBounds(0) == (None, None)
    assert not ink(QTransform(10, 0, 0, -20, 0, 80)).any()


def test_thinning_keeps_the_sharp_corners_and_the_shape_of_a_smooth_line():
    """A 14-day course at 5-minute steps is 4033 points on a plot a few hundred pixels
    wide: thinned to about ``points`` of them, every bend sharper than ``sharp`` kept
    (a bolus, a phase change) and the curve within a fraction of a pixel of the original."""
    from ui.course.plot_items import thin

    hours = np.arange(0, 14 * 24 + 1e-9, 5 / 60)
    smooth = 145 + 5 * np.sin(hours / 30)  # a slow drift
    jump = np.where(hours < 100, 10.0, 20.0) + hours / 100  # a step at hour 100
    keep = turning_mask(hours, smooth, jump)
    assert keep.sum() > 4000  # the smooth line turns at every point
    kept = thin(hours, keep, smooth, jump, points=150, sharp=0.1)
    assert kept[0] and kept[-1]
    assert 150 <= kept.sum() <= 160
    step = int(np.flatnonzero(hours >= 100)[0])
    assert kept[step - 1] and kept[step]  # both ends of the jump
    redrawn = np.interp(hours, hours[kept], smooth[kept])
    assert np.max(np.abs(redrawn - smooth)) <= 0.002 * np.ptp(smooth)  # < 1 px in 500
    # the stepped line is straight either side of its jump: redrawn exactly
    np.testing.assert_allclose(np.interp(hours, hours[kept], jump[kept]), jump)
    few = turning_mask(hours[:50], smooth[:50])
    assert (thin(hours[:50], few, smooth[:50], points=150) == few).all()  # few: all kept
