"""Draws :mod:`vetfluid.course.timeline`: four stacked plots sharing the hour axis.

From top to bottom: the planned rate (mL/h, a step), cumulative volume given
against the volume needed (mL), the deficit still to replace (mL), and the
predicted body weight (kg) with the overload line. Every number drawn or written
comes from the core (:func:`vetfluid.course.timeline.timeline`, :func:`values_at`,
:func:`tick_labels`, :func:`vetfluid.common.formatting.format_quantity`); this module
only places it on screen.

Each curve is created once in ``__init__`` and updated with ``setData``. Curves
differ in line style as well as colour (solid, dashed, dotted, dash-dot) so they
read without colour vision; the colours are mid-tone so they hold on light and
dark palettes.
"""

from __future__ import annotations

import math

import pyqtgraph as pg
from PySide6.QtCore import QEvent, QPointF, QRectF, Qt
from PySide6.QtGui import QColor, QFont, QFontMetricsF, QPainter, QPalette, QTextOption
from PySide6.QtWidgets import QGraphicsItem, QLabel, QVBoxLayout, QWidget

from ui.course.plot_items import Markers, PlotAxis, PlotLabel, TickGrid, Trace, drawn_points
from vetfluid.common.formatting import format_number, format_quantity
from vetfluid.common.units import weight_in_unit
from vetfluid.course.timeline import Timeline, tick_labels, timeline, values_at
from vetfluid.planning.plan import Plan
from vetfluid.planning.schedule import clock_time

# Our own palette: mid-tone hues legible on a white and on a near-black background.
RATE_COLOUR = "#3873b8"  # azure
GIVEN_COLOUR = "#3873b8"
NEEDED_COLOUR = "#cf6a17"  # burnt orange
DEFICIT_COLOUR = "#9c4f96"  # plum
WEIGHT_COLOUR = "#2e8c5a"  # pine green
OVERLOAD_COLOUR = "#cf3f38"  # brick red
NEUTRAL_COLOUR = "#8c8c8c"  # entered weight, hover line

LEFT_AXIS_WIDTH = 74  # px, the same on every plot so the hour axes line up
LEGEND_WIDTH = 150  # px, legends sit beside the plots, never over the curves
X_MARGIN_FRACTION = 0.01  # a sliver either side so a step at hour 0 clears the axis
SHRINK_BELOW = 0.4  # a value axis refits down once its line fills less than this of it
HOUR_STEPS = (0.25, 0.5, 1.0, 2.0, 3.0, 4.0, 6.0, 8.0, 12.0, 24.0, 48.0)
EDGE_TEXT_PX = 40  # tick text may run this far past either end of the hour axis
TICK_PX_HOURS = 55.0  # room for "12 h"
TICK_PX_CLOCK = 110.0  # room for "04:30 (+1 d)" under it
RATE_TITLE = "Planned rate"
RATE_TITLE_DIVIDED = "Planned rate (divided doses shown spread over their interval)"
EMPTY_READOUT = "No plan yet: the timeline appears once a plan is built."

_configured = False


def nice_ceiling(value: float) -> float:
    """The next 1, 2, 2.5 or 5 × 10^k at or above ``value`` (axis bounds that move rarely)."""
    if value <= 0:
        return 1.0
    power = 10 ** math.floor(math.log10(value))
    for factor in (1.0, 2.0, 2.5, 5.0, 10.0):
        if value <= factor * power * (1 + 1e-9):
            return factor * power
    return 10.0 * power


def hours_shown(end_h: float, shown_h: float | None) -> float | None:
    """The last hour a plot's time axis shows for a course ending at ``end_h``: rounded up to
    a whole quarter day (a whole day past four days), or None to keep ``shown_h`` while the
    course still fits it and fills more than half of it — an edit that moves the plan's end
    by an hour or two neither shifts every hour axis nor redraws its text."""
    step = 6.0 if end_h <= 96.0 else 24.0
    fresh = max(math.ceil(end_h / step - 1e-9) * step, step)
    if shown_h is not None and end_h <= shown_h + 1e-9 and shown_h <= 2.0 * fresh:
        return None
    return fresh


def pin_legend(graphics: pg.GraphicsLayoutWidget, legend: pg.LegendItem) -> None:
    """Keep a legend its own height, at the top of its cell (no spread-out rows)."""
    legend.updateSize()
    legend.setMaximumHeight(legend.height())
    graphics.ci.layout.setAlignment(legend, Qt.AlignmentFlag.AlignTop | Qt.AlignmentFlag.AlignLeft)


def set_title(plot: pg.PlotItem, text: str, colour: QColor, wrap_px: float | None = None) -> None:
    """The plot's title in the views' style; on more lines when wider than ``wrap_px``
    (a plot is at least as wide as its title: a long one would widen its plot and push
    what stands beside it out of the view)."""
    item = plot.titleLabel.item
    item.setTextWidth(-1)  # its own width first, to measure it
    plot.setTitle(text, color=colour.name(), size="9pt")
    if wrap_px is not None and item.boundingRect().width() > wrap_px:
        item.document().setDefaultTextOption(QTextOption(Qt.AlignmentFlag.AlignHCenter))
        item.setTextWidth(wrap_px)
        plot.titleLabel.updateMin()  # the label takes the wrapped size in the layout


def apply_palette(palette: QPalette, graphics: pg.GraphicsLayoutWidget, plots) -> None:  # noqa: ANN001
    """Plot background and text from the widget's palette (light or dark)."""
    base = palette.color(QPalette.ColorRole.Base)
    text = palette.color(QPalette.ColorRole.Text)
    graphics.setBackground(base)
    for plot in plots:
        for name in ("left", "bottom"):
            axis = plot.getAxis(name)
            axis.setPen(text)
            axis.setTextPen(text)
        plot.grid.set_colour(text, base)
        set_title(plot, plot.titleLabel.text, text)
        plot.legend.setLabelTextColor(text)
        for _sample, label in plot.legend.items:
            label.setText(label.text, color=text.name())


def configure_pyqtgraph() -> None:
    """Set pyqtgraph's global options once per process (antialiased lines)."""
    global _configured
    if not _configured:
        pg.setConfigOptions(antialias=True)
        _configured = True


def show_grid(plot: pg.PlotItem, hour_axis: pg.AxisItem | None = None) -> None:
    """Faint grid lines at the hour ticks (of ``hour_axis`` when given, so stacked plots
    share their verticals) and at the major value ticks, drawn by a :class:`TickGrid`
    inside the plot; the value axis labels its major ticks only."""
    plot.getAxis("left").setStyle(maxTickLevel=0)
    plot.grid = TickGrid(hour_axis or plot.getAxis("bottom"), plot.getAxis("left"))
    plot.vb.addItem(plot.grid, ignoreBounds=True)


def _pen(colour: str, *, width: float = 2.0, style: Qt.PenStyle = Qt.PenStyle.SolidLine):
    pen = pg.mkPen(colour, width=width, style=style)
    pen.setCosmetic(True)
    return pen


def _brush(colour: str, alpha: int):
    c = QColor(colour)
    c.setAlpha(alpha)
    return pg.mkBrush(c)


def curve(plot: pg.PlotItem, **opts) -> Trace:
    """One series on ``plot``, entered in its legend when it has a name."""
    item = Trace(**opts)
    plot.addItem(item)
    return item


class SafeNumberAxis(PlotAxis):
    """A value axis whose tick text follows the safe-number rules (0.5, never .5 or 5.0)."""

    def tickStrings(self, values, scale, spacing):  # noqa: N802 (Qt override)
        places = _places(spacing * scale)
        return [format_number(v * scale, decimals=places) for v in values]


def _places(spacing: float) -> int:
    """Decimals that show a tick spacing (1 → 0, 0.25 → 2, 0.002 → 3)."""
    text = f"{spacing:.8f}".rstrip("0")
    return min(8, len(text.split(".")[1])) if "." in text else 0


class HourClockAxis(PlotAxis):
    """The hour axis: ticks on whole clinical intervals (1, 2, 3, 4, 6, 12 h …), each
    labelled in hours, and with the clock time beneath when the plan has a start time."""

    def __init__(self) -> None:
        super().__init__("bottom")
        self.timeline: Timeline | None = None
        self.setStyle(maxTextLevel=0, autoExpandTextSpace=True)

    def tickSpacing(self, minVal, maxVal, size):  # noqa: N802, N803 (Qt override)
        span = abs(maxVal - minVal)
        if span == 0 or size <= 0:
            return []
        clock = self.timeline is not None and self.timeline.start_time is not None
        fit = max(1.0, size / (TICK_PX_CLOCK if clock else TICK_PX_HOURS))
        major = next((s for s in HOUR_STEPS if span / s <= fit), HOUR_STEPS[-1])
        minor = next((s for s in reversed(HOUR_STEPS) if s < major and major % s == 0), major / 2)
        return [(major, 0.0), (minor, 0.0)]

    def tickStrings(self, values, scale, spacing):  # noqa: N802 (Qt override)
        if self.timeline is None:
            return [format_quantity(v, "h") for v in values]
        return list(tick_labels(self.timeline, values))

    def _two_row_height(self) -> int:
        """Ticks, two lines of tick text and the axis label, with a little air between."""
        line = QFontMetricsF(self.style["tickFont"] or QFont()).lineSpacing()
        label = self.label.boundingRect().height()
        return int(
            self.style["tickLength"] + self.style["tickTextOffset"][1] + 2 * line + label + 4
        )

    def boundingRect(self):  # noqa: N802 (Qt override)
        """Leave room for the first and last tick text to run past the plot's edges."""
        return super().boundingRect().adjusted(-EDGE_TEXT_PX, 0, EDGE_TEXT_PX, 0)

    def set_timeline(self, tl: Timeline) -> bool:
        """Take a new timeline; True when the ticks may have moved (new start or span)."""
        two_rows = tl.start_time is not None
        changed = (self.timeline is None) or ((self.timeline.start_time is not None) != two_rows)
        same_ticks = (
            self.timeline is not None
            and self.timeline.start_time == tl.start_time
            and self.timeline.end_h == tl.end_h
        )
        self.timeline = tl
        if same_ticks:
            return False  # the labels depend only on the start time and the span: keep them
        if changed:
            self.setLabel(
                "Time from start (h), clock time below" if two_rows else "Time from start (h)"
            )
            self.setHeight(self._two_row_height() if two_rows else None)
        self.picture = None
        self.update()
        return True


class LineSample(pg.ItemSample):
    """Legend sample showing a curve's line style (dash pattern) without its fill, or a
    :class:`Markers` item's symbol on a short line (a value measured over a period)."""

    WIDTH = 34

    def __init__(self, item) -> None:
        super().__init__(item)
        self.setFixedWidth(self.WIDTH)

    def boundingRect(self):  # noqa: N802 (Qt override)
        return QRectF(0, 0, self.WIDTH, 20)

    def paint(self, p, *args) -> None:
        if not self.item.isVisible():
            super().paint(p, *args)  # pyqtgraph's hidden-curve eye
            return
        p.setRenderHint(QPainter.RenderHint.Antialiasing)
        opts = self.item.opts
        if isinstance(self.item, Markers):
            p.setPen(opts["span_pen"])
            p.drawLine(QPointF(6, 11), QPointF(self.WIDTH / 2, 11))
            Markers.draw_symbol(p, QPointF(self.WIDTH / 2, 11), opts)
            return
        p.setPen(pg.mkPen(opts["pen"]))
        p.drawLine(QPointF(1, 11), QPointF(self.WIDTH - 1, 11))


class TimelineView(QWidget):
    """The rehydration timeline of one plan, with a hover read-out."""

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        configure_pyqtgraph()
        self.setObjectName("timelineView")
        self.setAccessibleName("Rehydration timeline")
        self.setAccessibleDescription(EMPTY_READOUT)
        self.timeline: Timeline | None = None
        self.hover_hour: float | None = None
        # what is on screen, so unchanged ranges and titles are not set again
        self._y_ranges: dict[int, tuple[float, float]] = {}
        self._ceilings: dict[int, float] = {}  # each value plot's round ceiling
        self._x_end: float | None = None
        self._shown_title = ""
        self.weight_unit = "kg"  # the species' own unit: a gerbil's weight is drawn in g

        self.readout = QLabel(EMPTY_READOUT, self)
        self.readout.setObjectName("timelineReadout")
        self.readout.setAccessibleName("Timeline values at the pointer")
        # Plain text, not selectable: a selectable label keeps a whole text document and
        # lays it out again on every change, and the read-out changes with every edit and
        # pointer move. The same values are in the plan's tables and the view's description.
        self.readout.setTextFormat(Qt.TextFormat.PlainText)
        # Opaque, in the plots' colours: a new read-out repaints itself only, not the tabs
        # and frames beneath it.
        self.readout.setBackgroundRole(QPalette.ColorRole.Base)
        self.readout.setForegroundRole(QPalette.ColorRole.Text)
        self.readout.setAutoFillBackground(True)
        self.readout.setContentsMargins(LEFT_AXIS_WIDTH, 4, 4, 4)
        # A fixed size (kept to the view's width in resizeEvent): new read-out text must not
        # ask every layout up to the window to recompute, which a hover would do each move.
        # Two lines: at 1280 pixels the read-out is wider than the view and would be cut.
        self.readout.setWordWrap(True)
        lines = 2 * self.readout.fontMetrics().lineSpacing()
        self.readout.setFixedSize(400, lines + 8)  # and the top and bottom margins

        self.graphics = pg.GraphicsLayoutWidget(self)
        self.graphics.setAccessibleName("Timeline plots")
        self.graphics.ci.layout.setColumnFixedWidth(1, LEGEND_WIDTH)
        layout = QVBoxLayout(self)
        layout.setContentsMargins(0, 0, 0, 0)
        layout.setSpacing(0)
        layout.addWidget(self.readout)
        layout.addWidget(self.graphics, 1)

        self.hour_axis = HourClockAxis()
        self.rate_plot = self._add_plot(0, RATE_TITLE, "Rate (mL/h)")
        self.volume_plot = self._add_plot(1, "Cumulative volume", "Volume (mL)")
        self.deficit_plot = self._add_plot(2, "Deficit still to replace", "Deficit (mL)")
        self.weight_plot = self._add_plot(3, "Predicted body weight", "Weight (kg)", self.hour_axis)
        self.plots = (self.rate_plot, self.volume_plot, self.deficit_plot, self.weight_plot)
        for plot in self.plots:
            # Replaying an axis' recorded drawing (text and all) is most of a redraw; keep
            # each axis as a pixmap instead, redrawn only when its range or size changes.
            for name in ("left", "bottom"):
                plot.getAxis(name).setCacheMode(QGraphicsItem.CacheMode.DeviceCoordinateCache)
        for plot in self.plots[1:]:
            plot.setXLink(self.rate_plot)

        dash, dot = Qt.PenStyle.DashLine, Qt.PenStyle.DotLine
        self.rate_curve = curve(
            self.rate_plot, name="Planned rate", pen=_pen(RATE_COLOUR, width=2.5),
            brush=_brush(RATE_COLOUR, 50), step=True,
        )  # fmt: skip
        self.given_curve = curve(self.volume_plot, name="Given", pen=_pen(GIVEN_COLOUR, width=2.5))
        self.needed_curve = curve(
            self.volume_plot, name="Needed", pen=_pen(NEEDED_COLOUR, width=2.0, style=dash)
        )
        self.deficit_curve = curve(
            self.deficit_plot, name="Deficit still to give", pen=_pen(DEFICIT_COLOUR, width=2.5),
            brush=_brush(DEFICIT_COLOUR, 45),
        )  # fmt: skip
        self.weight_curve = curve(
            self.weight_plot, name="Predicted weight", pen=_pen(WEIGHT_COLOUR, width=2.5)
        )
        self.overload_curve = curve(
            self.weight_plot, name="Overload line",
            pen=_pen(OVERLOAD_COLOUR, width=2.0, style=Qt.PenStyle.DashDotLine),
        )  # fmt: skip
        self.baseline_curve = curve(
            self.weight_plot, name="Entered weight", pen=_pen(NEUTRAL_COLOUR, width=1.5, style=dot)
        )
        self.curves = (
            self.rate_curve, self.given_curve, self.needed_curve, self.deficit_curve,
            self.weight_curve, self.overload_curve, self.baseline_curve,
        )  # fmt: skip
        for plot in self.plots:
            self._pin_legend(plot.legend)
        self.overload_text = PlotLabel(OVERLOAD_COLOUR)
        self.weight_plot.addItem(self.overload_text, ignoreBounds=True)

        hover_pen = _pen(NEUTRAL_COLOUR, width=1.0, style=dash)
        self.hover_lines = tuple(pg.InfiniteLine(angle=90, pen=hover_pen) for _ in self.plots)
        for plot, line in zip(self.plots, self.hover_lines, strict=True):
            line.setVisible(False)
            plot.addItem(line, ignoreBounds=True)
        self.graphics.scene().sigMouseMoved.connect(self.on_mouse_moved)
        self._apply_palette()

    # ---- building ---------------------------------------------------------------------------
    def _add_plot(self, row: int, title: str, y_label: str, bottom: pg.AxisItem | None = None):
        axes = {"left": SafeNumberAxis("left"), "bottom": bottom or PlotAxis("bottom")}
        plot = self.graphics.addPlot(row=row, col=0, title=title, axisItems=axes, enableMenu=False)
        plot.setLabel("left", y_label)
        # never "(x0.001)" on a dose axis; and the hidden top and right axes would otherwise
        # re-typeset their empty label on every range change
        for name in ("left", "bottom", "top", "right"):
            plot.getAxis(name).enableAutoSIPrefix(False)
        plot.getAxis("left").setWidth(LEFT_AXIS_WIDTH)
        show_grid(plot, self.hour_axis)
        plot.setMouseEnabled(x=True, y=False)
        plot.setMenuEnabled(False)
        plot.hideButtons()
        if bottom is None:
            plot.getAxis("bottom").setStyle(showValues=False)
            plot.getAxis("bottom").setTickPen(pg.mkPen(None))  # the grid marks the hours
        legend = pg.LegendItem(labelTextSize="9pt", sampleType=LineSample, frame=False)
        self.graphics.addItem(legend, row=row, col=1)
        plot.legend = legend  # plot.plot(name=…) enters each curve in it
        # Neither draws anything itself (no border, no frame): Qt then skips their paint.
        for container in (plot.vb, legend):
            container.setFlag(QGraphicsItem.GraphicsItemFlag.ItemHasNoContents)
        return plot

    def _pin_legend(self, legend: pg.LegendItem) -> None:
        pin_legend(self.graphics, legend)

    def _apply_palette(self) -> None:
        apply_palette(self.palette(), self.graphics, self.plots)

    def changeEvent(self, event: QEvent) -> None:  # noqa: N802 (Qt override)
        if event.type() == QEvent.Type.PaletteChange:
            self._apply_palette()
        super().changeEvent(event)

    # ---- data -------------------------------------------------------------------------------
    def set_plan(self, plan: Plan | None) -> None:
        """Draw a plan (its timeline is computed by the core); ``None`` empties the view."""
        if plan is None:
            self.clear_timeline()
        else:
            self.set_timeline(timeline(plan), weight_unit=plan.weight_unit)

    def clear_timeline(self) -> None:
        """No plan to draw (e.g. an input is missing): empty curves, keep the items."""
        self.timeline = None
        for curve in self.curves:
            curve.setData([], [])
        self.overload_text.setText("")
        for line in self.hover_lines:
            line.setVisible(False)
        self.readout.setText(EMPTY_READOUT)
        self.setAccessibleDescription(EMPTY_READOUT)

    def set_timeline(self, tl: Timeline, *, weight_unit: str = "kg") -> None:
        """Draw a timeline: every curve keeps its item and takes the new arrays; weights
        are drawn and written in ``weight_unit`` (g or kg)."""
        self.timeline = tl
        if weight_unit != self.weight_unit:
            self.weight_unit = weight_unit
            self.weight_plot.setLabel("left", f"Weight ({weight_unit})")
            self._y_ranges.pop(id(self.weight_plot), None)  # the old range is in the old unit
        per_kg = weight_in_unit(1.0, weight_unit)
        hours = tl.hours
        self.rate_curve.setData(hours, tl.rate_ml_per_h)
        lines = {
            self.given_curve: tl.given_ml,
            self.needed_curve: tl.needed_ml,
            self.deficit_curve: tl.remaining_deficit_ml,
            self.weight_curve: tl.weight_kg * per_kg,
        }
        corners = drawn_points(hours, *lines.values())  # one pass for the four lines
        for item, values in lines.items():
            item.setData(hours, values, corners)
        ends = [0.0, tl.end_h]
        self.overload_curve.setData(ends, [tl.overload_weight_kg * per_kg] * 2)
        self.baseline_curve.setData(ends, [tl.baseline_weight_kg * per_kg] * 2)
        # the line is 10 % over the weight once rehydrated, not over the weight entered
        label = (
            f"overload line: rehydrated {self._weight_text(tl.euhydrated_weight_kg)} "
            f"+ {format_number(tl.overload_gain_percent)} % = "
            f"{self._weight_text(tl.overload_weight_kg)}"
        )
        self.overload_text.setText(label)
        self.overload_text.setPos(tl.end_h, tl.overload_weight_kg * per_kg)
        title = RATE_TITLE_DIVIDED if tl.has_divided_doses else RATE_TITLE
        if title != self._shown_title:
            self._shown_title = title
            self.rate_plot.setTitle(
                title, color=self.palette().color(QPalette.ColorRole.Text).name(), size="9pt"
            )
        if self.hour_axis.set_timeline(tl):
            for plot in self.plots:
                plot.grid.refresh()  # the grids follow the hour axis' ticks
        for plot, series in zip(
            self.plots[:3], (tl.rate_ml_per_h, tl.given_ml, tl.remaining_deficit_ml), strict=True
        ):
            top = max(
                float(series.max()), float(tl.needed_ml.max()) if plot is self.plots[1] else 0.0
            )
            self._fit_from_zero(plot, top)
        self._fit_weight_range(tl, per_kg)
        end = hours_shown(tl.end_h, self._x_end)
        if end is not None:
            self._x_end = end
            margin = X_MARGIN_FRACTION * end
            self.rate_plot.setLimits(xMin=-margin, xMax=end + margin)
            self.rate_plot.setXRange(-margin, end + margin, padding=0.0)
        self.setAccessibleDescription(self._summary(tl))
        self.show_hour(self.hover_hour if self.hover_hour is not None else 0.0)

    def _set_y_range(self, plot, low: float, high: float) -> None:  # noqa: ANN001 — PlotItem
        """Change a y range only when it really changes: an unchanged axis keeps its cached
        tick picture, which is most of the cost of a redraw."""
        if self._y_ranges.get(id(plot)) != (low, high):
            self._y_ranges[id(plot)] = (low, high)
            plot.setYRange(low, high, padding=0.0)

    def _fit_from_zero(self, plot, top: float) -> None:  # noqa: ANN001 — PlotItem
        """Show 0 to a round ceiling above ``top``, growing at once when the line would run
        off the plot but shrinking only when it fills less than ``SHRINK_BELOW`` of it: an
        edit that moves the top across a round number does not make the axis jump back
        and forth (nor redraw it) at every keystroke."""
        ceiling = self._ceilings.get(id(plot))
        if ceiling is None or not SHRINK_BELOW * ceiling <= top <= ceiling:
            ceiling = nice_ceiling(top)
            self._ceilings[id(plot)] = ceiling
        self._set_y_range(plot, -0.1 * ceiling, ceiling * 1.05)  # room for the 0 label

    def _fit_weight_range(self, tl: Timeline, per_kg: float) -> None:
        """Show the weight, the entered weight and the overload line, with room for its label.

        The axis stays where it is while the lines still sit inside it (a tenth of a step
        from the bottom, three quarters of one from the top for the label) and it is
        not much wider than a fresh fit: a weight typed digit by digit does not make the
        whole plot jump, nor redraw its axis, at every keystroke."""
        low = min(float(tl.weight_kg.min()), tl.baseline_weight_kg) * per_kg
        high = max(float(tl.weight_kg.max()), tl.overload_weight_kg) * per_kg
        step = nice_ceiling((high - low) / 4) or 1.0
        bottom = math.floor(low / step) * step - 0.5 * step
        top = math.ceil(high / step) * step + step
        shown = self._y_ranges.get(id(self.weight_plot))
        if (
            shown is not None
            and shown[0] <= low - 0.1 * step
            and shown[1] >= high + 0.75 * step
            and shown[1] - shown[0] <= 1.5 * (top - bottom)
        ):
            return
        self._set_y_range(self.weight_plot, bottom, top)

    # ---- hover ------------------------------------------------------------------------------
    def on_mouse_moved(self, scene_pos: QPointF) -> None:
        """Follow the pointer: the hour under it in whichever plot it is over."""
        for plot in self.plots:
            if plot.vb.sceneBoundingRect().contains(scene_pos):
                self.show_hour(plot.vb.mapSceneToView(scene_pos).x())
                return

    def show_hour(self, hour: float) -> None:
        """Move the hover line to ``hour`` (snapped to the grid) and write the values there."""
        if self.timeline is None:
            return
        values = values_at(self.timeline, hour)
        self.hover_hour = values["hour"]
        for line in self.hover_lines:
            line.setPos(values["hour"])
            line.setVisible(True)
        self.readout.setText(self.readout_text(values))

    def resizeEvent(self, event) -> None:  # noqa: N802,ANN001 (Qt override)
        margins = self.layout().contentsMargins()
        self.readout.setFixedWidth(max(0, event.size().width() - margins.left() - margins.right()))
        super().resizeEvent(event)

    def readout_text(self, values: dict[str, float]) -> str:
        """The read-out line for one grid point's values."""
        tl = self.timeline
        when = format_quantity(values["hour"], "h")
        clock = clock_time(tl.start_time, values["hour"]) if tl is not None else None
        if clock:
            when += f", {clock}"
        return f"At {when}:  " + "  ·  ".join(
            (
                # a divided dose's rate is an average: never to be read as a pump setting
                ("doses average " if tl is not None and tl.divided_at(values["hour"]) else "rate ")
                + format_quantity(values["rate_ml_per_h"], "mL/h"),
                f"given {format_quantity(values['given_ml'], 'mL')}",
                f"needed {format_quantity(values['needed_ml'], 'mL')}",
                f"deficit still to give {format_quantity(values['remaining_deficit_ml'], 'mL')}",
                f"weight {self._weight_text(values['weight_kg'])}",
            )
        )

    def _weight_text(self, kg: float) -> str:
        """A weight in the view's unit, to 0.1 g (10 g above 1 kg in kg), so hour-to-hour
        fluid shifts show."""
        if self.weight_unit == "g":
            return format_quantity(weight_in_unit(kg, "g"), "g", decimals=1)
        return format_quantity(kg, "kg", decimals=4 if abs(kg) < 1 else 2)

    def _summary(self, tl: Timeline) -> str:
        return (
            f"Timeline over {format_quantity(tl.end_h, 'h')}: "
            f"{format_quantity(float(tl.given_ml[-1]), 'mL')} given in all; deficit "
            f"{format_quantity(tl.deficit_ml, 'mL')}; predicted weight from "
            f"{self._weight_text(tl.baseline_weight_kg)} to "
            f"{self._weight_text(float(tl.weight_kg[-1]))}; "
            f"overload line at {self._weight_text(tl.overload_weight_kg)}."
        )
