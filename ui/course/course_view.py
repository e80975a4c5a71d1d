"""The course view: body-water compartments, serum Na and weight predicted by the core
(`vetfluid/course/model.py`), the observations recorded against them, and re-planning.

Entering an observation takes a date and time (or the hour of the plan), a quantity
and a value; a weight also takes its unit (g, kg or lb, by default the one the species'
weight is usually given in) and is checked against the plan's weight by the core before
it is recorded. Everything else (alerts, curves) is recomputed by the core.
"""

from __future__ import annotations

from collections.abc import Callable
from datetime import datetime

import pyqtgraph as pg
from PySide6.QtCore import QDateTime, QEvent, QSignalBlocker, Qt
from PySide6.QtWidgets import (
    QAbstractItemView,
    QCheckBox,
    QComboBox,
    QDateTimeEdit,
    QDoubleSpinBox,
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
from ui.course.timeline_view import (
    SafeNumberAxis,
    _pen,
    apply_palette,
    configure_pyqtgraph,
    pin_legend,
    show_grid,
)
from ui.planning.session import PlanSession
from ui.planning.shown_plan import ShownPlan
from vetfluid.common.errors import VetfluidError
from vetfluid.common.findings import SEVERITIES
from vetfluid.common.formatting import format_quantity as q
from vetfluid.common.units import WEIGHT_UNITS, parse_weight_kg, read_decimal, weight_in_unit
from vetfluid.course.model import observed_course
from vetfluid.course.observations import (
    Observation,
    check_observation,
    ins_and_outs_from_observations,
    observed_series,
)
from vetfluid.planning.schedule import hours_since

# What can be recorded: field → (label, unit); a weight is typed and shown in a chosen unit
QUANTITIES = {
    "weight_kg": ("Weight", "kg"),
    "urine_ml": ("Urine output", "mL"),
    "other_losses_ml": ("Other losses", "mL"),
    "serum_na": ("Serum Na", "mmol/L"),
    "serum_k": ("Serum K", "mmol/L"),
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

        # -- plots -----------------------------------------------------------------------------
        split = QSplitter(Qt.Orientation.Vertical)
        self.graphics = pg.GraphicsLayoutWidget()
        self.graphics.setAccessibleName("Course plots")
        self.volume_plot = self._plot(0, "Body water: change from the start", "Change (mL)")
        self.na_plot = self._plot(1, "Serum sodium", "Na (mmol/L)")
        self.weight_plot = self._plot(2, "Body weight", "Weight (kg)", hours=True)
        self._plotted_weight_unit = "kg"
        for plot in (self.na_plot, self.weight_plot):
            plot.setXLink(self.volume_plot)
        dash = Qt.PenStyle.DashLine
        self.plasma_curve = self.volume_plot.plot(name="Plasma", pen=_pen(PLASMA, width=2.5))
        self.interstitial_curve = self.volume_plot.plot(
            name="Interstitium", pen=_pen(INTERSTITIAL, width=2.0, style=dash)
        )
        self.cells_curve = self.volume_plot.plot(
            name="Cells", pen=_pen(CELLS, width=2.0, style=Qt.PenStyle.DotLine)
        )
        self.na_curve = self.na_plot.plot(name="Predicted Na", pen=_pen(NA, width=2.5))
        self.na_points = self.na_plot.plot(
            name="Measured Na", pen=None, symbol="o", symbolBrush=NA, symbolSize=9
        )
        # the correction limit: where Na may be without changing faster than allowed
        band_pen = _pen(NA, width=1.2, style=Qt.PenStyle.DashLine)
        self.na_band_low = self.na_plot.plot(name="Correction limit", pen=band_pen)
        self.na_band_high = self.na_plot.plot(pen=band_pen)
        self.weight_curve = self.weight_plot.plot(
            name="Predicted weight", pen=_pen(WEIGHT, width=2.5)
        )
        self.weight_points = self.weight_plot.plot(
            name="Measured weight", pen=None, symbol="s", symbolBrush=WEIGHT, symbolSize=9
        )
        self.plots = (self.volume_plot, self.na_plot, self.weight_plot)
        for plot in self.plots:
            pin_legend(self.graphics, plot.legend)
        apply_palette(self.palette(), self.graphics, self.plots)
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
        self._observation_rows: list[int] = []  # table row → index in session.observations
        self._quantity_changed()
        self.shown = ShownPlan(self, session, self.refresh)
        session.observationsChanged.connect(lambda: self.refresh(session.plan))

    def _plot(self, row: int, title: str, label: str, *, hours: bool = False):
        plot = self.graphics.addPlot(
            row=row, col=0, title=title, axisItems={"left": SafeNumberAxis("left")},
            enableMenu=False,
        )  # fmt: skip
        plot.setLabel("left", label)
        if hours:
            plot.setLabel("bottom", "Time from start (h)")
        else:
            plot.getAxis("bottom").setStyle(showValues=False)
        for name in ("left", "bottom", "top", "right"):  # see timeline_view._add_plot
            plot.getAxis(name).enableAutoSIPrefix(False)
        show_grid(plot)
        plot.setMenuEnabled(False)
        plot.hideButtons()
        # the default sample draws symbols too (measured points); no filled curves here
        plot.legend = pg.LegendItem(labelTextSize="9pt", frame=False)
        self.graphics.addItem(plot.legend, row=row, col=1)
        return plot

    def changeEvent(self, event) -> None:  # noqa: N802,ANN001 (Qt override)
        if event.type() == QEvent.Type.PaletteChange:
            apply_palette(self.palette(), self.graphics, self.plots)
        super().changeEvent(event)

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
        if moment is not None:
            with QSignalBlocker(self.at):
                self.at.setDateTime(to_qt(moment))

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
            for curve in (
                self.plasma_curve,
                self.interstitial_curve,
                self.cells_curve,
                self.na_curve,
                self.na_points,
                self.na_band_low,
                self.na_band_high,
                self.weight_curve,
                self.weight_points,
            ):
                curve.setData([], [])  # fmt: skip
            self.alerts_model.set_rows([])
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
        h = result.hours
        change = result.change_from_start()
        self.plasma_curve.setData(h, change["plasma"])
        self.interstitial_curve.setData(h, change["interstitial"])
        self.cells_curve.setData(h, change["intracellular"])
        band = result.na_band()
        if result.serum_na is not None and band is not None:
            self.na_curve.setData(h, result.serum_na)
            self.na_band_low.setData(h, band[0])
            self.na_band_high.setData(h, band[1])
        else:
            for curve in (self.na_curve, self.na_band_low, self.na_band_high):
                curve.setData([], [])
        title = "Serum sodium" + (
            f" (dashed: ±{result.na_max_change_per_h:g} mmol/L per hour from the start)"
            if result.serum_na is not None
            else " — enter a serum Na to predict it"
        )
        if self.na_plot.titleLabel.text != title:  # setting a title relays out the plot
            self.na_plot.setTitle(title)
        self.na_points.setData(*observed_series(observations, "serum_na"))
        # weights drawn in the species' own unit (a lizard in g), as in the table below
        if plan.weight_unit != self._plotted_weight_unit:
            self._plotted_weight_unit = plan.weight_unit
            self.weight_plot.setLabel("left", f"Weight ({plan.weight_unit})")
        per_kg = weight_in_unit(1.0, plan.weight_unit)
        self.weight_curve.setData(h, result.weight_kg * per_kg)
        hours, weights_kg = observed_series(observations, "weight_kg")
        self.weight_points.setData(hours, weights_kg * per_kg)
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
        self.alerts_model.set_rows(rows)
        self._count_alerts(found)
        self._show_ins_and_outs(plan, observations)
        self._show_versions(plan)

    def _count_alerts(self, found) -> None:  # noqa: ANN001 — Finding sequence
        """The Alerts tab's label: how many alerts wait, by severity, worst first."""
        counts = {s: sum(f.severity == s for f in found) for s in reversed(SEVERITIES)}
        present = [(s, n) for s, n in counts.items() if n]
        marks = ", ".join(f"{n} {SEVERITY_MARKS[s]}" for s, n in present)
        words = ", ".join(f"{n} × {SEVERITY_WORDS[s].lower()}" for s, n in present)
        index = self.tables.indexOf(self.alerts_page)
        self.tables.setTabText(index, f"&Alerts ({marks or 'none'})")
        self.tables.setTabToolTip(index, f"Alerts: {words}" if words else "No alerts")

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
            self.ins_outs_model.set_rows(
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
            self.ins_outs_model.set_rows([[Cell("—"), Cell(said)] + [Cell("")] * 5])
            return
        self.ins_outs_model.set_rows(
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
        self.versions_model.set_rows(rows)

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
        self.observations_model.set_rows(rows)
        self._observation_selected()
