"""The course view: what the core predicts (`vetfluid/course/model.py`) and what was
recorded against it, and re-planning.

Six plots sharing the hour axis: on the left body water, serum Na (with its correction
limit) and weight; on the right the kidney's urine output in mL/kg/h against the
oliguria line, urine osmolality between the species' diluting floor and concentrating
ceiling, and serum K (when a K was entered) against the species' reference interval.
Urine is predicted only while the plan runs (`Course.outputs_end_h`); its per-kg flow,
the oliguria line and the measured flows come from `vetfluid/course/urine.py`. Items are
created once and updated with ``setData`` (see DEVELOPERS.md, "The window").

Entering an observation takes a date and time (or the hour of the plan), a quantity
and a value; a weight also takes its unit (g, kg or lb, by default the one the species'
weight is usually given in) and is checked against the plan's weight by the core before
it is recorded. Everything else (alerts, curves) is recomputed by the core.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from datetime import datetime

import numpy as np
import pyqtgraph as pg
from PySide6.QtCore import QDateTime, QEvent, QSignalBlocker, Qt
from PySide6.QtGui import QPalette
from PySide6.QtWidgets import (
    QAbstractItemView,
    QCheckBox,
    QComboBox,
    QDateTimeEdit,
    QDoubleSpinBox,
    QGraphicsItem,
    QHBoxLayout,
    QHeaderView,
    QLabel,
    QLineEdit,
    QMessageBox,
    QPushButton,
    QSpinBox,
    QSplitter,
    QTableView,
    QTabWidget,
    QVBoxLayout,
    QWidget,
)

from ui.common.icons import SEVERITY_ICONS, SEVERITY_WORDS, icon
from ui.common.qt_dates import from_qt, to_qt
from ui.common.rows_model import Cell, RowsModel
from ui.course.plot_items import DoseMarks, Markers, PlotLabel, drawn_points
from ui.course.timeline_view import (
    HourClockAxis,
    LineSample,
    SafeNumberAxis,
    _pen,
    apply_palette,
    configure_pyqtgraph,
    curve,
    hours_shown,
    nice_ceiling,
    pin_legend,
    set_title,
    show_grid,
)
from ui.planning.session import PlanSession
from ui.planning.shown_plan import ShownPlan
from vetfluid.common.errors import VetfluidError
from vetfluid.common.findings import SEVERITIES
from vetfluid.common.formatting import format_number
from vetfluid.common.formatting import format_quantity as q
from vetfluid.common.units import WEIGHT_UNITS, parse_weight_kg, read_decimal, weight_in_unit
from vetfluid.course.model import observed_course
from vetfluid.course.observations import (
    Observation,
    check_observation,
    ins_and_outs_from_observations,
    observed_series,
)
from vetfluid.course.urine import (
    band_unverified,
    measured_flow,
    measured_osmolality,
    oliguria_line,
    predicted_flow,
    predicted_osmolality,
)
from vetfluid.planning.diuretic_checks import effect_modelled as diuretic_effect_modelled
from vetfluid.planning.schedule import hours_since

# What can be recorded: field → (label, unit); a weight is typed and shown in a chosen unit
QUANTITIES = {
    "weight_kg": ("Weight", "kg"),
    "urine_ml": ("Urine output", "mL"),
    "other_losses_ml": ("Other losses", "mL"),
    "serum_na": ("Serum Na", "mmol/L"),
    "serum_k": ("Serum K", "mmol/L"),
    "usg": ("Urine specific gravity", ""),
    "urine_osmolality": ("Urine osmolality", "mOsm/kg"),
    "pcv_percent": ("PCV", "%"),
    "total_solids_g_per_dl": ("Total solids", "g/dL"),
    "heart_rate_per_min": ("Heart rate", "/min"),
    "respiratory_rate_per_min": ("Respiratory rate", "/min"),
    "crt_s": ("CRT", "s"),
    "mucous_membranes": ("Mucous membranes", ""),
    "note": ("Note", ""),
}
# the Alerts tab says in text, not colour alone, how many alerts wait and how severe
SEVERITY_MARKS = {"hard": "✖", "soft": "⚠", "info": "ℹ"}
PLASMA, INTERSTITIAL, CELLS, NA, WEIGHT = "#1f77b4", "#2ca02c", "#9467bd", "#d62728", "#8c564b"
URINE, OSMOLALITY, POTASSIUM = "#b7790f", "#9c4f96", "#16878a"  # amber, plum, teal
OLIGURIA, NEUTRAL = "#cf3f38", "#8c8c8c"  # brick red (as the overload line), grey
TEXT_SLACK_PX, MIN_TEXT_PX = 4, 100  # a title or label short of its plot's width; at least
LEFT_AXIS_PX = 62  # the same on every plot, so the hour axes of a column line up
LEGEND_PX = 142  # legends beside their plots, never over the curves
X_MARGIN_FRACTION = 0.01
UNVERIFIED = " (unverified)"  # a recalled value (basis memory), short enough for a line
NA_TITLE, K_TITLE = "Serum Na", "Serum K"
URINE_TITLE, OSMOLALITY_TITLE = "Urine output", "Urine osmolality"


class CourseView(QWidget):
    def __init__(
        self,
        session: PlanSession,
        parent: QWidget | None = None,
        *,
        before_replan: Callable[[], bool] | None = None,
    ) -> None:
        super().__init__(parent)
        configure_pyqtgraph()
        self.session = session
        self._before_replan = before_replan  # False: the user cancelled (the window saves first)
        self._shown_start = None  # the plan start the observations were last shown against
        self.setAccessibleName("Course")
        layout = QVBoxLayout(self)

        # -- recording an observation ---------------------------------------------------------
        entry = QHBoxLayout()
        self.hour = QDoubleSpinBox()
        self.hour.setRange(0, 14 * 24)
        self.hour.setDecimals(2)
        self.hour.setSingleStep(0.5)
        self.hour.setSuffix(" h")
        self.hour.setAccessibleName("Hour of the observation")
        self.hour.setToolTip("Hours since the start of the plan")
        self.at = QDateTimeEdit()
        self.at.setDisplayFormat("yyyy-MM-dd HH:mm")
        self.at.setCalendarPopup(True)
        self.at.setAccessibleName("Date and time of the observation")
        self.at.setToolTip("When it was measured; sets the hour from the plan's start")
        self.at.dateTimeChanged.connect(self._moment_changed)
        self.hour.valueChanged.connect(self._hour_changed)
        self.quantity = QComboBox()
        for key, (label, unit) in QUANTITIES.items():
            self.quantity.addItem(label if not unit or key == "weight_kg" else f"{label} ({unit})",
                                  key)  # fmt: skip
        self.quantity.setAccessibleName("What was measured")
        self.quantity.currentIndexChanged.connect(self._quantity_changed)
        self.value = QLineEdit()
        self.value.setPlaceholderText("value")
        self.value.setAccessibleName("Measured value")
        self.value.returnPressed.connect(self.record)
        self.weight_unit = QComboBox()
        self.weight_unit.addItems(list(WEIGHT_UNITS))
        self.weight_unit.setAccessibleName("Unit of the measured weight")
        self.weight_unit.setToolTip(
            "Unit of the scale reading: g, kg or lb (starts at the unit this species' weight "
            "is usually given in)"
        )
        self._unit_species: str | None = None  # the species the unit was last set for
        self.period = QDoubleSpinBox()
        self.period.setRange(0.5, 48)
        self.period.setValue(4)
        self.period.setSuffix(" h collected")
        self.period.setAccessibleName("Urine collection period")
        self.period.setToolTip("Urine: the period over which the volume was collected")
        self.record_button = QPushButton("&Record")
        self.record_button.setToolTip("Add this observation to the course")
        self.record_button.clicked.connect(self.record)
        self.replan_button = QPushButton("Re-&plan from now")
        self.replan_button.setToolTip(
            "Start a new plan version from the latest weight and labs; the plan it replaces\n"
            "is kept in the patient's record with its observations (saved first if it is not)"
        )
        self.replan_button.clicked.connect(self.replan)
        for widget in (QLabel("At"), self.at, QLabel("="), self.hour, self.quantity,
                       self.value, self.weight_unit, self.period,
                       self.record_button):  # fmt: skip
            entry.addWidget(widget)
        entry.addStretch(1)
        entry.addWidget(self.replan_button)
        layout.addLayout(entry)
        self.message = QLabel()
        self.message.setWordWrap(True)
        self.message.setAccessibleName("Course message")
        layout.addWidget(self.message)

        # -- plots: water, Na and weight on the left; the kidney's urine and K on the right --
        split = QSplitter(Qt.Orientation.Vertical)
        self.graphics = pg.GraphicsLayoutWidget()
        self.graphics.setAccessibleName("Course plots")
        for column in (1, 3):
            self.graphics.ci.layout.setColumnFixedWidth(column, LEGEND_PX)
        for column in (0, 2):
            # the two columns of plots equally wide, whatever their titles: Qt shrinks each
            # from the same (unreachable) preferred width by the same fraction
            self.graphics.ci.layout.setColumnPreferredWidth(column, 10_000)
        self.volume_plot = self._plot(0, 0, "Change in body water", "Change (mL)")
        self.na_plot = self._plot(1, 0, NA_TITLE, "Na (mmol/L)")
        self.weight_plot = self._plot(2, 0, "Body weight", "Weight (kg)", bottom=True)
        self.urine_plot = self._plot(0, 2, URINE_TITLE, "Urine (mL/kg/h)")
        self.osm_plot = self._plot(1, 2, OSMOLALITY_TITLE, "Osmolality (mOsm/kg)")
        self.k_plot = self._plot(2, 2, K_TITLE, "K (mmol/L)", bottom=True)
        self._plotted_weight_unit = "kg"
        self.plots = (self.volume_plot, self.na_plot, self.weight_plot,
                      self.urine_plot, self.osm_plot, self.k_plot)  # fmt: skip
        for plot in self.plots[1:]:
            plot.setXLink(self.volume_plot)
        dash, dot = Qt.PenStyle.DashLine, Qt.PenStyle.DotLine
        self.plasma_curve = curve(self.volume_plot, name="Plasma", pen=_pen(PLASMA, width=2.5))
        self.interstitial_curve = curve(
            self.volume_plot, name="Interstitium", pen=_pen(INTERSTITIAL, width=2.0, style=dash)
        )
        self.cells_curve = curve(self.volume_plot, name="Cells",
                                 pen=_pen(CELLS, width=2.0, style=dot))  # fmt: skip
        self.na_curve = curve(self.na_plot, name="Predicted", pen=_pen(NA, width=2.5))
        # the correction limit: where Na may be without changing faster than allowed
        band_pen = _pen(NA, width=1.2, style=dash)
        self.na_band_low = curve(self.na_plot, name="Limit", pen=band_pen)
        self.na_band_high = curve(self.na_plot, pen=band_pen)
        reference_pen = _pen(NEUTRAL, width=1.5, style=dash)  # the species' normal range
        self.na_low = curve(self.na_plot, name="Reference", pen=reference_pen)
        self.na_high = curve(self.na_plot, pen=reference_pen)
        self.na_points = self._markers(self.na_plot, NA)
        self.weight_curve = curve(self.weight_plot, name="Predicted", pen=_pen(WEIGHT, width=2.5))
        self.weight_points = self._markers(self.weight_plot, WEIGHT, symbol="s")
        self.urine_curve = curve(self.urine_plot, name="Predicted", pen=_pen(URINE, width=2.5))
        self.oliguria_curve = curve(
            self.urine_plot, name="Oliguria line",
            pen=_pen(OLIGURIA, width=2.0, style=Qt.PenStyle.DashDotLine),
        )  # fmt: skip
        self.urine_points = self._markers(self.urine_plot, URINE)  # a mean over its collection
        self.osm_curve = curve(self.osm_plot, name="Urine", pen=_pen(OSMOLALITY, width=2.5))
        self.plasma_osm_curve = curve(self.osm_plot, name="Plasma",
                                      pen=_pen(NEUTRAL, width=1.5, style=dot))  # fmt: skip
        edge_pen = _pen(OSMOLALITY, width=1.5, style=dash)
        self.ceiling_curve = curve(self.osm_plot, name="Floor, ceiling", pen=edge_pen)
        self.floor_curve = curve(self.osm_plot, pen=edge_pen)
        self.osm_points = self._markers(self.osm_plot, OSMOLALITY)  # measured (USG converted)
        self.k_curve = curve(self.k_plot, name="Predicted", pen=_pen(POTASSIUM, width=2.5))
        self.k_low = curve(self.k_plot, name="Reference", pen=reference_pen)
        self.k_high = curve(self.k_plot, pen=reference_pen)
        self.k_points = self._markers(self.k_plot, POTASSIUM)
        self.data_items = (
            self.plasma_curve, self.interstitial_curve, self.cells_curve, self.na_curve,
            self.na_band_low, self.na_band_high, self.na_low, self.na_high, self.na_points,
            self.weight_curve,
            self.weight_points, self.urine_curve, self.oliguria_curve, self.urine_points,
            self.osm_curve, self.plasma_osm_curve, self.ceiling_curve, self.floor_curve,
            self.osm_points, self.k_curve, self.k_low, self.k_high, self.k_points,
        )  # fmt: skip
        # the lines' values in words, at their right-hand ends
        self.oliguria_text = self._label(self.urine_plot, OLIGURIA)
        self.urine_end_text = self._label(self.urine_plot, NEUTRAL)
        self.urine_note = self._label(self.urine_plot, NEUTRAL, below=True)  # top right
        self.ceiling_text = self._label(self.osm_plot, OSMOLALITY)
        self.floor_text = self._label(self.osm_plot, OSMOLALITY)
        self.floor_text_below = self._label(self.osm_plot, OSMOLALITY, below=True)
        self.osm_end_text = self._label(self.osm_plot, NEUTRAL)
        self.osm_unread_text = self._label(self.osm_plot, NEUTRAL, below=True)  # top right
        self.k_text = self._label(self.k_plot, NEUTRAL)
        self.na_text = self._label(self.na_plot, NEUTRAL)
        self.labels = (self.oliguria_text, self.urine_end_text, self.urine_note, self.ceiling_text,
                       self.floor_text, self.floor_text_below, self.osm_end_text,
                       self.osm_unread_text, self.k_text, self.na_text)  # fmt: skip
        # the diuretic doses on the time axis of every plot (the drug's name at each)
        self.dose_marks: dict[int, DoseMarks] = {}
        for plot in self.plots:
            marks = DoseMarks()
            plot.addItem(marks, ignoreBounds=True)
            self.dose_marks[id(plot)] = marks
        self._y_ranges: dict[int, tuple[float, float]] = {}  # what each value axis shows
        self._x_end: float | None = None
        for plot in self.plots:
            pin_legend(self.graphics, plot.legend)
        self._text_px: float | None = None  # how wide a title may be drawn
        for plot in self.plots:
            plot.vb.sigResized.connect(lambda _vb, plot=plot: self._fit_labels(plot))
        self._apply_palette()
        self.graphics.viewport().installEventFilter(self)  # titles and labels follow its width
        split.addWidget(self.graphics)

        bottom = QTabWidget()
        bottom.setAccessibleName("Course tables")
        self.tables = bottom
        self.observations_model = RowsModel(["When", "Measured", "Value", "Predicted"])
        self.alerts_model = RowsModel(["Severity", "Alert", "What to do"])
        self.ins_outs_model = RowsModel(
            ["Period", "Hours", "Urine", "Other losses", "Insensible", "Give next", "Next rate"]
        )
        self.versions_model = RowsModel(["Version", "Weight", "Deficit", "First 24 h", "Status"])
        for model, name in (
            (self.observations_model, "&Observations"),
            (self.alerts_model, "&Alerts"),
            (self.ins_outs_model, "&Ins and outs"),
            (self.versions_model, "Plan &versions"),
        ):
            page = QWidget()
            page_layout = QVBoxLayout(page)
            page_layout.setContentsMargins(0, 0, 0, 0)
            if model is self.ins_outs_model:
                page_layout.addLayout(self._ins_outs_controls())
            if model is self.alerts_model:
                page_layout.addLayout(self._alert_controls())
            if model is self.observations_model:
                page_layout.addLayout(self._observation_controls())
            view = QTableView()
            view.setModel(model)
            view.setAccessibleName(name.replace("&", ""))
            view.verticalHeader().setVisible(False)
            view.setEditTriggers(QAbstractItemView.EditTrigger.NoEditTriggers)
            view.setWordWrap(True)
            view.horizontalHeader().setSectionResizeMode(QHeaderView.ResizeMode.ResizeToContents)
            view.horizontalHeader().setStretchLastSection(True)
            if model is self.alerts_model:  # long sentences: wrap them, never push one off
                for column in (1, 2):
                    view.horizontalHeader().setSectionResizeMode(
                        column, QHeaderView.ResizeMode.Stretch
                    )
                view.verticalHeader().setSectionResizeMode(QHeaderView.ResizeMode.ResizeToContents)
            page_layout.addWidget(view)
            bottom.addTab(page, name)
            if model is self.observations_model:
                self.observations_view = view
                view.setSelectionBehavior(QAbstractItemView.SelectionBehavior.SelectRows)
                view.setSelectionMode(QAbstractItemView.SelectionMode.SingleSelection)
                view.selectionModel().selectionChanged.connect(self._observation_selected)
            if model is self.alerts_model:
                self.alerts_page = page
        split.addWidget(bottom)
        split.setStretchFactor(0, 3)
        split.setStretchFactor(1, 1)
        layout.addWidget(split, 1)

        self._earlier_plans: dict = {}  # PlanRequest → Plan of earlier versions
        self._shown_rows: dict[int, list[list[Cell]]] = {}  # each table's rows on screen
        self._observation_rows: list[int] = []  # table row → index in session.observations
        self._quantity_changed()
        self.shown = ShownPlan(self, session, self.refresh)
        session.observationsChanged.connect(lambda: self.refresh(session.plan))

    def _plot(self, row: int, col: int, title: str, label: str, *, bottom: bool = False):
        axes = {"left": SafeNumberAxis("left"), "bottom": HourClockAxis()}  # ticks "6 h"
        plot = self.graphics.addPlot(row=row, col=col, title=title, axisItems=axes,
                                     enableMenu=False)  # fmt: skip
        plot.setLabel("left", label)
        if bottom:
            plot.setLabel("bottom", "Time from the plan's start")
        # no "(x0.001)" on a value axis; the hidden top and right axes would otherwise
        # re-typeset their empty label on every range change
        for name in ("left", "bottom", "top", "right"):
            plot.getAxis(name).enableAutoSIPrefix(False)
        plot.getAxis("left").setWidth(LEFT_AXIS_PX)
        show_grid(plot)
        plot.setMouseEnabled(x=True, y=False)
        plot.setMenuEnabled(False)
        plot.hideButtons()
        for name in ("left", "bottom"):  # each axis a pixmap, redrawn when its range moves
            plot.getAxis(name).setCacheMode(QGraphicsItem.CacheMode.DeviceCoordinateCache)
        plot.legend = pg.LegendItem(labelTextSize="9pt", sampleType=LineSample, frame=False)
        self.graphics.addItem(plot.legend, row=row, col=col + 1)
        for container in (plot.vb, plot.legend):  # neither draws anything itself
            container.setFlag(QGraphicsItem.GraphicsItemFlag.ItemHasNoContents)
        return plot

    @staticmethod
    def _markers(plot, colour: str, *, symbol: str = "o") -> Markers:  # noqa: ANN001
        item = Markers(name="Measured", colour=colour, symbol=symbol, size=9)
        plot.addItem(item)
        return item

    @staticmethod
    def _label(plot, colour: str, *, below: bool = False) -> PlotLabel:  # noqa: ANN001
        item = PlotLabel(colour, below=below)
        plot.addItem(item, ignoreBounds=True)
        return item

    def changeEvent(self, event) -> None:  # noqa: N802,ANN001 (Qt override)
        if event.type() == QEvent.Type.PaletteChange:
            self._apply_palette()
        super().changeEvent(event)

    def eventFilter(self, watched, event) -> bool:  # noqa: N802,ANN001 (Qt override)
        if watched is self.graphics.viewport() and event.type() == QEvent.Type.Resize:
            self._fit_texts()
        return False

    def _apply_palette(self) -> None:
        palette = self.palette()
        apply_palette(palette, self.graphics, self.plots)
        text, base = (palette.color(role) for role in (QPalette.ColorRole.Text,
                                                        QPalette.ColorRole.Base))  # fmt: skip
        for marks in self.dose_marks.values():
            marks.set_colour(text, base)
        self._text_px = None  # the palette set each title again, on one line
        self._fit_texts()

    def _fit_texts(self) -> None:
        """Titles go on more lines where the plots are narrow (a 1280-pixel window): each
        plot column has what its legend, its value axis and the layout's spacing leave of
        the view's width, and a plot is at least as wide as its title."""
        layout = self.graphics.ci.layout
        left, _top, right, _bottom = layout.getContentsMargins()
        fixed = 2 * (LEGEND_PX + LEFT_AXIS_PX) + 3 * layout.horizontalSpacing() + left + right
        pixels = max((self.graphics.viewport().width() - fixed) / 2 - TEXT_SLACK_PX, MIN_TEXT_PX)
        if pixels == self._text_px:
            return
        self._text_px = pixels
        colour = self.palette().color(QPalette.ColorRole.Text)
        for plot in self.plots:
            set_title(plot, plot.titleLabel.text, colour, pixels)
        for column in (0, 2):  # the same least width: the columns shrink alike, whatever
            layout.setColumnMinimumWidth(column, pixels + LEFT_AXIS_PX)  # their titles

    def _fit_labels(self, plot) -> None:  # noqa: ANN001 — PlotItem
        """A label on a line goes on more lines where it is wider than its plot: it ends at
        the plan's end, the x margin short of the plot's right edge."""
        f = X_MARGIN_FRACTION
        width = plot.vb.width() * (1 + f) / (1 + 2 * f) - 2 * PlotLabel.MARGIN_PX
        for label in self.labels:
            if label in plot.items:
                label.set_max_width(max(width, MIN_TEXT_PX))

    def _alert_controls(self) -> QHBoxLayout:
        row = QHBoxLayout()
        label = QLabel("&Oliguria below")
        self.oliguria = QDoubleSpinBox()
        self.oliguria.setRange(0.0, 5.0)
        self.oliguria.setSingleStep(0.25)
        self.oliguria.setDecimals(2)
        self.oliguria.setSuffix(" mL/kg/h")
        self.oliguria.setSpecialValueText("the species' normal low end")
        self.oliguria.setAccessibleName("Oliguria threshold")
        self.oliguria.setToolTip(
            "Urine output below this raises an alert. Default: the low end of the species' "
            "normal urine output (dogs and cats 1 mL/kg/h; Foster JD 2018); 0.5 or 0.25 "
            "mL/kg/h are also used"
        )
        self.oliguria.valueChanged.connect(lambda _: self.refresh(self.session.plan))
        label.setBuddy(self.oliguria)
        row.addWidget(label)
        row.addWidget(self.oliguria)
        row.addStretch(1)
        return row

    def _ins_outs_controls(self) -> QHBoxLayout:
        row = QHBoxLayout()
        self.ins_outs_mode = QCheckBox("Plan &by ins and outs:")
        self.ins_outs_mode.setAccessibleName("Plan by ins and outs")
        self.ins_outs_mode.setToolTip(
            "For oliguric or anuric patients: the plan gives, each period, insensible loss + "
            "the urine and other losses recorded over the period before (Côté 2020)"
        )
        self.ins_outs_mode.toggled.connect(self._ins_outs_mode_changed)
        row.addWidget(self.ins_outs_mode)
        row.addWidget(QLabel("replace measured urine and other losses plus insensible loss every"))
        self.ins_outs_period = QSpinBox()
        self.ins_outs_period.setRange(1, 24)
        self.ins_outs_period.setValue(6)
        self.ins_outs_period.setSuffix(" h")
        self.ins_outs_period.setAccessibleName("Ins-and-outs period")
        self.ins_outs_period.setToolTip(
            "Côté 2020: replace over the next 4–6 h (interval recalled)"
        )
        self.ins_outs_period.valueChanged.connect(self._ins_outs_period_changed)
        row.addWidget(self.ins_outs_period)
        row.addStretch(1)
        return row

    def _ins_outs_mode_changed(self, on: bool) -> None:
        self.session.set_ins_and_outs(float(self.ins_outs_period.value()) if on else None)

    def _ins_outs_period_changed(self, _: int) -> None:
        if self.ins_outs_mode.isChecked():
            self._ins_outs_mode_changed(True)
        else:
            self.refresh(self.session.plan)

    def _moment_changed(self, value: QDateTime) -> None:
        start = self.session.plan.start_moment if self.session.plan else None
        if start is None:
            return
        try:
            hour = hours_since(start, from_qt(value))
        except VetfluidError as exc:
            self.message.setText(f"⚠ {exc.one_line()}")
            return
        self.message.setText("")
        with QSignalBlocker(self.hour):
            self.hour.setValue(hour)

    def _hour_changed(self, hour: float) -> None:
        moment = self.session.plan.moment_at(hour) if self.session.plan else None
        shown = to_qt(moment) if moment is not None else None
        if shown is not None and shown != self.at.dateTime():
            # set only when it moves: the field and every widget behind it repaint
            with QSignalBlocker(self.at):
                self.at.setDateTime(shown)

    def _quantity_changed(self, *_: object) -> None:
        self.period.setVisible(self.quantity.currentData() == "urine_ml")
        self.weight_unit.setVisible(self.quantity.currentData() == "weight_kg")

    def _follow_species(self, plan) -> None:  # noqa: ANN001 — Plan | None
        """A new species starts the unit chooser at the unit its weight is usually given in
        (``Plan.weight_unit``, as on the patient form); a choice made for it is left alone."""
        sid = plan.request.species_id if plan is not None else None
        if sid is not None and sid != self._unit_species:
            self._unit_species = sid
            self.weight_unit.setCurrentText(plan.weight_unit)

    # ---- user actions ------------------------------------------------------------------------
    def record(self) -> None:
        key = self.quantity.currentData()
        text = self.value.text().strip()
        plan = self.session.plan
        try:
            if key in ("note", "mucous_membranes"):
                value: object = text
            elif key == "weight_kg":
                if plan is None:
                    self.message.setText(
                        "⚠ A weight is checked against the plan's weight, and there is no plan "
                        "yet: complete the patient's details first. Nothing was recorded."
                    )
                    return
                value = parse_weight_kg(text, default_unit=self.weight_unit.currentText())
            else:
                value = read_decimal(text, field=key)  # "1,500" mL is refused, not read as 1.5
                if value is None:
                    raise ValueError(text)
            extra = {"urine_period_h": self.period.value()} if key == "urine_ml" else {}
            observation = Observation(hour=self.hour.value(), **{key: value}, **extra)
            if plan is not None:
                check_observation(
                    plan, observation, weight_unit=self.weight_unit.currentText(),
                    now=datetime.now(),  # noqa: DTZ005 — the plan's times are the ward's local times
                )  # fmt: skip
        except ValueError:
            self.message.setText(f"⚠ {text!r} is not a number — type digits, e.g. 21.4")
            return
        except VetfluidError as exc:
            self.message.setText(f"⚠ {exc.one_line()}")
            return
        self.message.setText("")
        self.value.clear()
        self.session.add_observation(observation)

    def _observation_controls(self) -> QHBoxLayout:
        row = QHBoxLayout()
        self.remove_button = QPushButton("Remove the selected observation…")
        self.remove_button.setToolTip(
            "Take a mistyped observation out of this course, and out of the saved version\n"
            "it was written to if this plan is that version, unchanged (others keep theirs)"
        )
        self.remove_button.setEnabled(False)
        self.remove_button.clicked.connect(self.remove_selected)
        row.addWidget(self.remove_button)
        row.addStretch(1)
        return row

    def _observation_selected(self, *_: object) -> None:
        self.remove_button.setEnabled(self._selected_observation() is not None)

    def _selected_observation(self) -> int | None:
        rows = self.observations_view.selectionModel().selectedRows()
        if not rows or rows[0].row() >= len(self._observation_rows):
            return None
        return self._observation_rows[rows[0].row()]

    def remove_selected(self) -> None:
        """Remove the observation of the selected row, once the user confirms it."""
        number = self._selected_observation()
        if number is None:
            return
        row = self.observations_view.selectionModel().selectedRows()[0].row()
        what = " ".join(self.observations_model.text(row, c) for c in (1, 2))
        answer = QMessageBox.question(
            self,
            "Remove observation",
            f"Remove “{what}” recorded at {self.observations_model.text(row, 0)} from this "
            "course? If this plan is a saved version, unchanged, it is removed from that "
            "version too; other versions keep their own observations.",
        )
        if answer == QMessageBox.StandardButton.Yes:
            self.session.remove_observation(number)
            self.message.setText(f"Removed {what}.")

    def replan(self) -> None:
        try:
            request = self.session.replan_request()  # what is wrong is said before any question
            if request is None:
                self.message.setText(
                    "⚠ There is no plan to re-plan from: correct the inputs first."
                )
                return
            if self._before_replan is not None and not self._before_replan():
                return
            self.session.replan(request)
        except VetfluidError as exc:
            self.message.setText(f"⚠ {exc.one_line()}")
            return
        versions = len(self.session.versions)
        self.message.setText(
            f"New plan version {versions + 1} from the current state; "
            f"{versions} earlier version(s) kept."
        )

    # ---- drawing -----------------------------------------------------------------------------
    def refresh(self, plan) -> None:  # noqa: ANN001 — Plan | None
        observations = list(self.session.observations)
        self._say_if_start_moved(plan, observations)
        self._follow_species(plan)
        if plan is None:
            self._show_observations(observations, None, None)
            for item in self.data_items:
                item.setData([], [])
            for label in self.labels:
                label.setText("")
            for marks in self.dose_marks.values():
                marks.setData([])
            self._show_rows(self.alerts_model, [])
            self._count_alerts([])
            return
        self._hour_changed(self.hour.value())  # the date and time follow the plan's start
        # the plan and every observation, within the model's 14 days; an oliguria threshold
        # of 0 shows as the species' default
        threshold = self.oliguria.value() or None
        result, found = observed_course(
            plan, observations, oliguria_ml_per_kg_h=threshold, table=self.session.table
        )
        self._show_observations(observations, result, plan)
        self._set_x_range(float(result.hours[-1]))
        full = [result.plasma_ml, result.interstitial_ml, result.intracellular_ml,
                result.weight_kg, result.osmolality_mosm_per_kg, result.serum_na,
                result.serum_k]  # fmt: skip
        corners = drawn_points(result.hours, *[a for a in full if a is not None])  # one pass
        self._draw_water(result, observations, plan, corners)
        self._draw_urine(result, observations, plan, threshold, corners)
        self._draw_potassium(result, observations, plan, corners)
        self._mark_doses(plan)
        rows = []
        for finding in found:
            rows.append(
                [
                    Cell(SEVERITY_WORDS[finding.severity], "",
                         icon(SEVERITY_ICONS[finding.severity])),
                    Cell(finding.message),
                    Cell(finding.action),
                ]
            )  # fmt: skip
        self._show_rows(self.alerts_model, rows)
        self._count_alerts(found)
        self._show_ins_and_outs(plan, observations)
        self._show_versions(plan)

    # ---- the plots ---------------------------------------------------------------------------
    def _draw_water(self, result, observations, plan, corners) -> None:  # noqa: ANN001
        """Body water, serum Na against its correction limit and the species' reference
        interval, weight (in the species' unit). ``corners``: the grid points to draw."""
        h = result.hours
        change = result.change_from_start()
        per_kg = weight_in_unit(1.0, plan.weight_unit)  # a lizard in g, as in the table below
        weight = result.weight_kg * per_kg
        lines = [change["plasma"], change["interstitial"], change["intracellular"], weight]
        for item, values in zip(
            (self.plasma_curve, self.interstitial_curve, self.cells_curve, self.weight_curve),
            lines, strict=True,
        ):  # fmt: skip
            item.setData(h, values, corners)
        self._fit_y(self.volume_plot, lines[:3], headroom=0.1)
        band = result.na_band()
        na_h, na_values = observed_series(observations, "serum_na")
        self.na_points.setData(na_h, na_values)
        if result.serum_na is not None and band is not None:
            self.na_curve.setData(h, result.serum_na, corners)
            ends = [h[0], h[-1]]  # the limits are straight: their two ends draw them
            self.na_band_low.setData(ends, [band[0][0], band[0][-1]])
            self.na_band_high.setData(ends, [band[1][0], band[1][-1]])
            limit = format_number(result.na_max_change_per_h)
            title = f"{NA_TITLE} (limit ±{limit} mmol/L/h)"
        else:
            for item in (self.na_curve, self.na_band_low, self.na_band_high):
                item.setData([], [])
            title = f"{NA_TITLE}: enter a Na to predict it"
        self._set_title(self.na_plot, title)
        reference = self._draw_reference(
            "serum_na_mmol_per_l", plan, float(h[-1]), self.na_low, self.na_high, self.na_text
        )
        # the limit runs far off over days: the axis follows the Na, the lines leave it
        shown = [a for a in (result.serum_na, na_values, reference) if a is not None]
        self._fit_y(self.na_plot, shown, minimum_span=10.0, headroom=0.25)
        if plan.weight_unit != self._plotted_weight_unit:
            self._plotted_weight_unit = plan.weight_unit
            self.weight_plot.setLabel("left", f"Weight ({plan.weight_unit})")
            self._y_ranges.pop(id(self.weight_plot), None)  # the old range is in the old unit
        hours, weights_kg = observed_series(observations, "weight_kg")
        self.weight_points.setData(hours, weights_kg * per_kg)
        self._fit_y(self.weight_plot, [weight, weights_kg * per_kg],
                    minimum_span=0.02 * float(weight[0]))  # fmt: skip

    def _draw_urine(self, result, observations, plan, threshold, corners) -> None:  # noqa: ANN001
        """Urine flow against the oliguria line, measured flows, and the osmolality in its
        band; nothing predicted after the plan's end (the line stops, and says why)."""
        weight_kg = plan.request.weight_kg
        end_h = float(result.hours[-1])
        flow_h, flow = predicted_flow(result, weight_kg=weight_kg)
        self.urine_curve.setData(flow_h, flow, drawn_points(flow_h, flow))
        starts, ends, measured = measured_flow(observations, plan_weight_kg=weight_kg)
        self.urine_points.setData(ends, measured, starts=starts)
        line = oliguria_line(self.session.table, plan.request.species_id,
                             chosen_ml_per_kg_h=threshold)  # fmt: skip
        self.urine_note.setText("" if line else "no oliguria threshold on record")
        if line is None:
            self.oliguria_curve.setData([], [])
            self.oliguria_text.setText("")
        else:
            self.oliguria_curve.setData([0.0, end_h], [line.ml_per_kg_h] * 2)
            said = " (chosen)" if line.chosen else (UNVERIFIED if line.value.unverified else "")
            self.oliguria_text.setText(f"oliguria below {q(line.ml_per_kg_h, 'mL/kg/h')}{said}")
            self.oliguria_text.setPos(end_h, line.ml_per_kg_h)
        self._fit_y(self.urine_plot, [flow, measured, [line.ml_per_kg_h] if line else []],
                    zero=True, headroom=0.3)  # fmt: skip
        if line is None and id(self.urine_plot) in self._y_ranges:
            self.urine_note.setPos(end_h, self._y_ranges[id(self.urine_plot)][1])
        osm_h, osm = predicted_osmolality(result)
        self.osm_curve.setData(osm_h, osm, drawn_points(osm_h, osm))
        seen_h, seen, not_read = measured_osmolality(
            observations, self.session.table, plan.request.species_id
        )
        self.osm_points.setData(seen_h, seen)
        self.plasma_osm_curve.setData(result.hours, result.osmolality_mosm_per_kg, corners)
        band = result.urine_band_mosm_per_kg
        if band is None:
            for item in (self.ceiling_curve, self.floor_curve):
                item.setData([], [])
            self.ceiling_text.setText("")
            self.floor_text.setText("")
            self.floor_text_below.setText("")
        else:
            floor, ceiling = band
            self.floor_curve.setData([0.0, end_h], [floor, floor])
            self.ceiling_curve.setData([0.0, end_h], [ceiling, ceiling])
            floor_recalled, ceiling_recalled = band_unverified(result)
            narrowed = plan.request.renal_disease  # the title says so; the ends are derived
            self.ceiling_text.setText(
                f"concentrating ceiling {q(ceiling, 'mOsm/kg')}"
                + (UNVERIFIED if ceiling_recalled and not narrowed else "")
            )
            self.ceiling_text.setPos(end_h, ceiling)
            # the floor's words above it, unless the band is narrow: then under it, in
            # fewer words (the legend names the line), as a short plot has little room there
            under = floor > 0.2 * ceiling
            floor_words = f"{'floor' if under else 'diluting floor'} {q(floor, 'mOsm/kg')}" + (
                UNVERIFIED if floor_recalled and not narrowed else ""
            )  # fmt: skip
            self.floor_text.setText("" if under else floor_words)
            self.floor_text_below.setText(floor_words if under else "")
            (self.floor_text_below if under else self.floor_text).setPos(end_h, floor)
        self._fit_y(self.osm_plot, [osm, result.osmolality_mosm_per_kg, band or [], seen],
                    zero=True, headroom=0.2)  # fmt: skip
        # a USG this species' urine does not allow reading is kept, never drawn: said
        self.osm_unread_text.setText(
            f"{not_read} USG not drawn: not read in this species (urates, mucus)" if not_read
            else ""
        )  # fmt: skip
        if not_read and id(self.osm_plot) in self._y_ranges:
            self.osm_unread_text.setPos(end_h, self._y_ranges[id(self.osm_plot)][1])
        # why the urine lines stop: outputs are predicted while the plan runs
        stops = len(flow_h) > 0 and result.outputs_end_h < end_h - 1e-9
        for label, hours, values in ((self.urine_end_text, flow_h, flow),
                                     (self.osm_end_text, osm_h, osm)):  # fmt: skip
            label.setText("plan ends: no urine predicted after" if stops else "")
            if stops:
                label.setPos(float(hours[-1]), float(values[-1]))
        if len(flow_h) == 0:
            why = "ins and outs" if plan.request.ins_and_outs_period_h is not None else (
                "no kidney values"
            )  # fmt: skip
            self._set_title(self.urine_plot, f"{URINE_TITLE}: not predicted ({why})")
            self._set_title(self.osm_plot, f"{OSMOLALITY_TITLE}: not predicted")
        else:
            self._set_title(self.urine_plot, URINE_TITLE)
            self._set_title(
                self.osm_plot,
                f"{OSMOLALITY_TITLE}, band narrowed (renal)"
                if plan.request.renal_disease and result.urine_band_mosm_per_kg is not None
                else OSMOLALITY_TITLE,
            )

    def _mark_doses(self, plan) -> None:  # noqa: ANN001 — Plan
        """Each diuretic dose at its hour on every plot, by the drug's name; a dose whose
        effect the course leaves out (no onset and duration on record, or an ins-and-outs
        plan, where urine is measured) says so, so a flat urine line is not read as the
        drug doing nothing."""
        sid, table = plan.request.species_id, self.session.table
        measured = plan.request.ins_and_outs_period_h is not None
        doses = []
        for dose in plan.diuretics:
            name = dose.name[:1].upper() + dose.name[1:]
            label = f"{name} infusion" if dose.infusion else name
            if measured or not diuretic_effect_modelled(table, sid, dose):
                label += " (effect not modelled)"
            doses.append((dose.start_h, dose.end_h, label))
        for marks in self.dose_marks.values():
            marks.setData(doses)

    def _draw_potassium(self, result, observations, plan, corners) -> None:  # noqa: ANN001
        """Serum K (when one was entered) against the species' reference interval."""
        h = result.hours
        if result.serum_k is not None:
            self.k_curve.setData(h, result.serum_k, corners)
            self._set_title(self.k_plot, K_TITLE)
        else:
            self.k_curve.setData([], [])
            self._set_title(self.k_plot, f"{K_TITLE}: enter a K to predict it")
        k_h, k_values = observed_series(observations, "serum_k")
        self.k_points.setData(k_h, k_values)
        reference = self._draw_reference(
            "serum_k_mmol_per_l", plan, float(h[-1]), self.k_low, self.k_high, self.k_text
        )
        shown = [a for a in (result.serum_k, k_values, reference) if a is not None]
        self._fit_y(self.k_plot, shown, minimum_span=2.0, headroom=0.25)

    def _draw_reference(self, parameter, plan, end_h, low_line, high_line, label):  # noqa: ANN001, ANN202
        """The species' reference interval of ``parameter`` as two lines, its range in
        words over the upper one (unverified when recalled); the (low, high) drawn, or None."""
        normal = self.session.table.get(plan.request.species_id, parameter)
        if normal is None or normal.low is None or normal.high is None:
            low_line.setData([], [])
            high_line.setData([], [])
            label.setText("")
            return None
        low, high = normal.low, normal.high
        low_line.setData([0.0, end_h], [low, low])
        high_line.setData([0.0, end_h], [high, high])
        label.setText(  # the legend names the line "Reference"
            f"{format_number(low)}–{q(high, normal.unit)}"
            + (UNVERIFIED if normal.unverified else "")
        )
        label.setPos(end_h, high)
        return (low, high)

    def _set_title(self, plot, text: str) -> None:  # noqa: ANN001 — PlotItem
        if plot.titleLabel.text != text:  # setting a title relays out the plot
            colour = self.palette().color(QPalette.ColorRole.Text)
            set_title(plot, text, colour, self._text_px)

    def _set_x_range(self, end_h: float) -> None:
        end = hours_shown(end_h, self._x_end)
        if end is not None:
            self._x_end = end
            margin = X_MARGIN_FRACTION * end
            self.volume_plot.setLimits(xMin=-margin, xMax=end + margin)
            self.volume_plot.setXRange(-margin, end + margin, padding=0.0)

    def _fit_y(self, plot, series, *, zero: bool = False, headroom: float = 0.15,
               minimum_span: float = 0.0) -> None:  # noqa: ANN001 — PlotItem, arrays  # fmt: skip
        """Show every value of ``series`` on round bounds (from zero with ``zero``), with
        ``headroom`` above for the labels, and at least the height of the plot's tallest
        label (a short plot, a label on two lines). The axis holds still while the values
        stay inside it and it is not more than twice as wide as a fresh fit: an edit typed
        digit by digit does not make it jump, nor redraw its text, at every keystroke."""
        values = [float(f(a)) for a in series if len(a) for f in (np.min, np.max)]
        if not values:
            return
        tallest = max((label.boundingRect().height() for label in self.labels
                       if label in plot.items and label.text()), default=0.0)  # fmt: skip
        share = min((tallest + PlotLabel.MARGIN_PX) / max(plot.vb.height(), 1.0), 0.6)
        headroom = max(headroom, share / (1.0 - share))
        low, high = (0.0 if zero else min(values)), max(values)
        if high - low < minimum_span:
            middle = (high + low) / 2
            low, high = middle - minimum_span / 2, middle + minimum_span / 2
        span = (high - low) or abs(high) or 1.0
        step = nice_ceiling(span / 4)
        top = math.ceil((high + headroom * span) / step) * step
        bottom = -0.06 * top if zero else math.floor((low - 0.05 * span) / step) * step
        shown = self._y_ranges.get(id(plot))
        if (
            shown is not None
            and shown[0] <= min(bottom + step, low)
            and shown[1] >= high + headroom * span
            and shown[1] - shown[0] <= 2 * (top - bottom)
        ):
            return
        self._y_ranges[id(plot)] = (bottom, top)
        plot.setYRange(bottom, top, padding=0.0)

    def _count_alerts(self, found) -> None:  # noqa: ANN001 — Finding sequence
        """The Alerts tab's label: how many alerts wait, by severity, worst first."""
        counts = {s: sum(f.severity == s for f in found) for s in reversed(SEVERITIES)}
        present = [(s, n) for s, n in counts.items() if n]
        marks = ", ".join(f"{n} {SEVERITY_MARKS[s]}" for s, n in present)
        words = ", ".join(f"{n} × {SEVERITY_WORDS[s].lower()}" for s, n in present)
        index = self.tables.indexOf(self.alerts_page)
        text = f"&Alerts ({marks or 'none'})"
        if self.tables.tabText(index) != text:  # a new tab text lays the tab bar out again
            self.tables.setTabText(index, text)
        self.tables.setTabToolTip(index, f"Alerts: {words}" if words else "No alerts")

    def _show_rows(self, model: RowsModel, rows: list[list[Cell]]) -> None:
        """New rows for a table, unless they are the rows it shows: resetting a model lays
        its view out again (and drops the selection), which was half of an edit's redraw."""
        if self._shown_rows.get(id(model)) != rows:
            self._shown_rows[id(model)] = rows
            model.set_rows(rows)

    def _show_ins_and_outs(self, plan, observations) -> None:  # noqa: ANN001
        period = plan.request.ins_and_outs_period_h
        with QSignalBlocker(self.ins_outs_mode), QSignalBlocker(self.ins_outs_period):
            self.ins_outs_mode.setChecked(period is not None)
            if period is not None:
                self.ins_outs_period.setValue(int(round(period)))
        if period is not None:  # the plan's own periods: what it gives rests on these
            self._ins_outs_rows(
                plan.ins_and_outs, urine_recorded=any(o.urine_ml is not None for o in observations)
            )
            return
        insensible = self.session.table.get(
            plan.request.species_id, "insensible_loss_ml_per_kg_day"
        )
        if insensible is None:
            self._show_rows(self.ins_outs_model,
                [[Cell("—"), Cell("no insensible loss on record for this species")]
                 + [Cell("")] * 5]
            )  # fmt: skip
            return
        table = ins_and_outs_from_observations(
            observations, weight_kg=plan.request.weight_kg,
            insensible_ml_per_kg_day=insensible.number,
            period_h=float(self.ins_outs_period.value()),
        )  # fmt: skip
        self._ins_outs_rows(table, urine_recorded=any(o.urine_ml is not None for o in observations))

    def _ins_outs_rows(self, table, *, urine_recorded: bool = False) -> None:  # noqa: ANN001
        if not table:
            # urine counts once a whole period's collection is in: say so, not "nothing"
            said = (
                "no period measured to its end yet (urine is counted once its collection "
                "covers the whole period): the first period gives insensible loss"
                if urine_recorded
                else "nothing measured yet: the first period gives insensible loss"
            )
            self._show_rows(self.ins_outs_model, [[Cell("—"), Cell(said)] + [Cell("")] * 5])
            return
        self._show_rows(self.ins_outs_model,
            [
                [Cell(str(r.period)), Cell(f"{r.start_h:g}–{r.end_h:g}"), Cell(q(r.urine_ml, "mL")),
                 Cell(q(r.other_losses_ml, "mL")), Cell(q(r.insensible_ml, "mL")),
                 Cell(q(r.replace_ml, "mL")), Cell(q(r.next_rate_ml_per_h, "mL/h"))]
                for r in table
            ]
        )  # fmt: skip

    def _show_versions(self, plan) -> None:  # noqa: ANN001
        from vetfluid.planning.plan import build_plan

        rows = []
        for number, (request, _) in enumerate(self.session.versions, start=1):
            # earlier versions never change: build each once, not on every refresh
            if request not in self._earlier_plans:
                self._earlier_plans[request] = build_plan(request, self.session.table)
            earlier = self._earlier_plans[request]
            rows.append(self._version_row(number, earlier, "earlier, kept"))
        rows.append(self._version_row(len(self.session.versions) + 1, plan, "current"))
        self._show_rows(self.versions_model, rows)

    @staticmethod
    def _version_row(number: int, plan, status: str) -> list[Cell]:  # noqa: ANN001
        return [
            Cell(str(number)),
            Cell(q(weight_in_unit(plan.request.weight_kg, plan.weight_unit), plan.weight_unit)),
            Cell(f"{plan.dehydration_percent:g} % → {q(plan.deficit_ml, 'mL')}"),
            Cell(q(plan.total_ml_first_24h, "mL")),
            Cell(status),
        ]

    def _say_if_start_moved(self, plan, observations) -> None:  # noqa: ANN001
        """Observations keep their hour of the plan: moving the start moves their dates."""
        start = plan.start_moment if plan is not None else None
        moved = self._shown_start is not None and start is not None and start != self._shown_start
        if moved and observations:
            shift = (start - self._shown_start).total_seconds() / 3600
            self.message.setText(
                f"⚠ The plan's start moved by {shift:+g} h. The {len(observations)} recorded "
                "observation(s) keep their hour of the plan, so their dates and times moved "
                "with it; check them."
            )
        self._shown_start = start

    def _when(self, hour: float) -> str:
        moment = self.session.plan.moment_at(hour) if self.session.plan else None
        return f"h {hour:g}" if moment is None else f"{moment:%Y-%m-%d %H:%M} (h {hour:g})"

    def _show_observations(self, observations: list[Observation], result, plan) -> None:  # noqa: ANN001
        """Each measurement, beside what the model predicted for it where it predicts one;
        weights in the unit this species' weight is usually given in."""
        weight_unit = plan.weight_unit if plan is not None else "kg"
        rows = []
        self._observation_rows = []
        for number, obs in enumerate(observations):
            for key, (label, unit) in QUANTITIES.items():
                value = getattr(obs, key)
                if value in (None, ""):
                    continue
                if key == "weight_kg":
                    unit = weight_unit
                    value = weight_in_unit(value, unit)
                if isinstance(value, int | float):
                    shown = q(float(value), unit) if unit else f"{value:g}"
                    if key == "urine_ml":
                        shown += f" over {q(obs.urine_period_h or 0, 'h')}"
                else:
                    shown = str(value)
                predicted = result.predicted(key, obs.hour) if result is not None else None
                if predicted is not None and key == "weight_kg":
                    predicted = weight_in_unit(predicted, unit)
                expected = "—" if predicted is None else q(predicted, unit)
                rows.append([Cell(self._when(obs.hour)), Cell(label), Cell(shown), Cell(expected)])
                self._observation_rows.append(number)
        self._show_rows(self.observations_model, rows)
        self._observation_selected()
