"""The plan: its settings (phases, fluid, route, delivery, additives, start) and its results
(totals, phases, the schedule on the clock). Every number shown comes from the core plan.
"""

from __future__ import annotations

import re
from datetime import datetime, time, timedelta

from PySide6.QtCore import QDateTime, QSignalBlocker, Qt, QTimer
from PySide6.QtWidgets import (
    QAbstractItemView,
    QComboBox,
    QDateTimeEdit,
    QDoubleSpinBox,
    QFormLayout,
    QGridLayout,
    QGroupBox,
    QHBoxLayout,
    QHeaderView,
    QLabel,
    QLineEdit,
    QPushButton,
    QSpinBox,
    QTableView,
    QVBoxLayout,
    QWidget,
)

from ui.common.qt_dates import from_qt, to_qt
from ui.common.rows_model import Cell, RowsModel
from ui.planning.patient_view import NumberField, buddy_label, compact, mark_field
from ui.planning.session import PlanSession
from ui.planning.shown_plan import ShownPlan
from vetfluid.common.errors import InputError
from vetfluid.common.formatting import format_quantity as q
from vetfluid.common.units import read_decimal
from vetfluid.physiology.delivery import (
    CHOSEN_INTERVALS_H,
    MOST_SITES_CHOSEN,
    ONE_SITE_ROUTES,
    STANDARD_DROP_FACTORS,
)
from vetfluid.physiology.electrolytes import sodium_text
from vetfluid.physiology.ins_and_outs import maintenance_not_given, planned_so_far
from vetfluid.planning.plan import BAG_SIZES_ML, LINE_ROUTES, MAX_SOAKS_PER_DAY, Plan
from vetfluid.planning.schedule import clock_time, diuretic_text, rate_or_dose_text, route_text
from vetfluid.printouts.sheet import DEVICE_WORDS
from vetfluid.records.serialize import fluid_dict
from vetfluid.tables import diuretics, fluid_roles, fluids

ROUTE_CHOICES = (
    (None, "Automatic (by weight)"),
    ("iv", "IV, peripheral vein"),
    ("cvc", "IV, central line"),
    ("io", "IO"),
    ("sc", "SC"),
    ("icoel", "Intracoelomic"),
    ("epicoel", "Epicoelomic (chelonians)"),
    ("ip", "IP (small rodents)"),
    ("oral", "Oral / gavage"),
)
# Divided doses as the clinician gives them (delivery.CHOSEN_INTERVALS_H, MOST_SITES_CHOSEN)
INTERVAL_CHOICES = ((None, "Plan chooses"), *((h, f"every {h:g} h") for h in CHOSEN_INTERVALS_H))
SITES_CHOICES = ((None, "Usual most"), *((n, str(n)) for n in range(1, MOST_SITES_CHOSEN + 1)))
SOAK_CHOICES = ((0, "None"), *((n, f"{n} a day") for n in range(1, MAX_SOAKS_PER_DAY + 1)))
DEVICE_CHOICES = (
    (None, "Automatic"),
    ("pump", "Infusion pump"),
    ("gravity", "Gravity drip"),
    ("syringe", "Syringe pump"),
    ("divided", "Divided boluses"),
)
METHOD_CHOICES = (
    (None, "Species default"),
    ("linear", "Linear (mL/kg/day)"),
    ("allometric", "Allometric (a·BW^b)"),
    ("energy", "Energy-based (K·BW^b kcal)"),
)


def _choice_box(choices: tuple, name: str, tooltip: str) -> QComboBox:
    box = QComboBox()
    for value, label in choices:
        box.addItem(label, value)
    box.setAccessibleName(name)
    box.setToolTip(tooltip)
    compact(box, 14)
    return box


def _select(box: QComboBox, value: object) -> None:
    with QSignalBlocker(box):
        box.setCurrentIndex(max(0, box.findData(value)))


def fluid_tooltip(fluid_id: str, plan: Plan | None) -> str:
    """Composition of a fluid and, with a plan, its tonicity against this patient's plasma."""
    data = fluid_dict(fluids.fluid(fluid_id))
    ions = ", ".join(
        f"{key.capitalize()} {q(data[key], 'mmol/L')}"
        for key in ("na", "k", "cl", "ca", "mg", "lactate", "acetate", "gluconate")
        if data[key]
    )
    lines = [data["name"], ions or "no electrolytes"]
    if data["dextrose_g_per_l"]:
        lines.append(f"dextrose {q(data['dextrose_g_per_l'], 'g/L')}")
    lines.append(f"calculated {q(data['osmolarity_mosm_per_l'], 'mOsm/L')}")
    if data["basis"] == "memory":
        lines.append("formula recalled from memory — unverified")
    if plan is not None:
        tone = fluids.tonicity(
            fluids.fluid(fluid_id),
            plasma_osmolality_mosm_per_kg=plan.tonicity.plasma_osmolality_mosm_per_kg,
            band_fraction=plan.tonicity.band_fraction,
        )
        lines.append(f"against this patient's plasma: {fluids.tonicity_words(tone)}")
        lines.append(fluids.tonicity_band_text(tone))
    return "\n".join(lines)


class PlanSettings(QGroupBox):
    """How the plan is given: durations, fluid, route, delivery, additives, start time."""

    def __init__(self, session: PlanSession, parent: QWidget | None = None):
        super().__init__("How to give it", parent)
        self.session = session
        form = QFormLayout(self)

        self.replace_hours = QDoubleSpinBox()
        self.replace_hours.setRange(1, 96)
        self.replace_hours.setDecimals(1)
        self.replace_hours.setSuffix(" h")
        self.replace_hours.setAccessibleName("Replace the deficit over")
        self.replace_hours.setToolTip("Period over which the deficit is replaced (usually 12–24 h)")
        self.replace_hours.valueChanged.connect(lambda v: session.update(replace_hours=v))
        form.addRow("&Replace deficit over", self.replace_hours)

        self.boluses = QSpinBox()
        self.boluses.setRange(0, 10)
        self.boluses.setAccessibleName("Resuscitation boluses")
        self.boluses.setToolTip("Boluses to give first, each followed by reassessment")
        self.boluses.valueChanged.connect(lambda v: session.update(resuscitation_boluses=v))
        form.addRow("Resuscitation &boluses", self.boluses)

        self.shock_fluid = QComboBox()
        self.shock_fluid.setAccessibleName("Bolus fluid")
        self.shock_fluid.setToolTip(
            "The fluid of the resuscitation boluses: the plan's fluid, or a resuscitation "
            "fluid of its own (7.2% sodium chloride is one small dose only)"
        )
        compact(self.shock_fluid, 18)
        self.shock_fluid.addItem("Same as the fluid", None)
        for fluid_id in fluid_roles.resuscitation_fluids():
            self.shock_fluid.addItem(fluids.fluid(fluid_id).name, fluid_id)
        self.shock_fluid.activated.connect(
            lambda _: session.update(bolus_fluid_id=self.shock_fluid.currentData())
        )
        form.addRow("Bolus f&luid", self.shock_fluid)

        self.method = _choice_box(
            METHOD_CHOICES, "Maintenance method", "How maintenance is estimated"
        )
        self.method.activated.connect(
            lambda _: session.update(maintenance_method=self.method.currentData())
        )
        form.addRow("&Maintenance method", self.method)

        self.fluid = QComboBox()
        self.fluid.setAccessibleName("Fluid")
        compact(self.fluid, 18)
        for fluid_id in fluid_roles.carriers():  # concentrates and hypertonic saline never
            self.fluid.addItem(fluids.fluid(fluid_id).name, fluid_id)
        self.fluid.activated.connect(lambda _: session.update(fluid_id=self.fluid.currentData()))
        form.addRow("&Fluid", self.fluid)

        self.route = _choice_box(ROUTE_CHOICES, "Route", "Automatic: a line above the species' "
                                 "line weight, divided boluses below it")  # fmt: skip
        self.route.activated.connect(self._route_changed)
        form.addRow("R&oute", self.route)

        self.device = _choice_box(DEVICE_CHOICES, "Delivery", "How the fluid is delivered")
        self.device.activated.connect(self._device_changed)
        self.drop_factor = QComboBox()
        self.drop_factor.setEditable(True)
        self.drop_factor.addItems([str(n) for n in STANDARD_DROP_FACTORS])
        self.drop_factor.setAccessibleName("Drop factor, drops per mL")
        self.drop_factor.setToolTip("Drops per mL of the giving set (printed on its packet)")
        self.drop_factor.currentTextChanged.connect(self._drop_factor_changed)
        row = QHBoxLayout()
        row.addWidget(self.device, 2)
        row.addWidget(QLabel("drops/mL"))
        row.addWidget(self.drop_factor, 1)
        form.addRow(buddy_label("&Delivery", self.device), row)
        # divided doses as given: the interval and the sites, shown only for divided doses
        self.dose_interval = _choice_box(
            INTERVAL_CHOICES, "Dose every",
            "Divided doses every 6, 8, 12 or 24 h; a dose never holds more than its sites "
            "allow, so the plan says how long replacement then takes",
        )  # fmt: skip
        self.dose_interval.activated.connect(
            lambda _: session.update(dose_interval_h=self.dose_interval.currentData())
        )
        form.addRow("Dose e&very", self.dose_interval)
        self.max_sites = _choice_box(
            SITES_CHOICES, "Sites per dose at most",
            "The most injection sites one dose may use (SC); into one cavity or by mouth it "
            "is always one",
        )  # fmt: skip
        self.max_sites.activated.connect(
            lambda _: session.update(max_sites_per_dose=self.max_sites.currentData())
        )
        form.addRow("Sites per dose at most", self.max_sites)
        self.soaks = _choice_box(
            SOAK_CHOICES, "Soaks a day",
            "Shallow warm baths (chelonians and lizards): on the schedule, never counted as "
            "fluid given",
        )  # fmt: skip
        self.soaks.activated.connect(
            lambda _: session.update(soaks_per_day=self.soaks.currentData())
        )
        form.addRow("Soa&ks a day", self.soaks)
        self._dosing_form = form
        session.planChanged.connect(self._show_dosing)
        self.bag_size = _choice_box(
            ((None, "By each phase's volume"), *((size, f"{size:g} mL") for size in BAG_SIZES_ML)),
            "Bag size", "The bag size the labels count bags of (250, 500 or 1000 mL)",
        )  # fmt: skip
        self.bag_size.activated.connect(
            lambda _: session.update(bag_size_ml=self.bag_size.currentData())
        )
        form.addRow("Ba&g size", self.bag_size)

        self.kcl_mode = _choice_box(
            ((None, "From the serum-K scale"), ("hand", "By hand")),
            "Potassium chloride",
            "KCl per litre from the published serum-K scale, or entered by hand",
        )
        self.kcl_mode.activated.connect(self._kcl_mode_changed)
        session.planChanged.connect(self._show_scale_kcl)
        self.kcl = NumberField(session, "kcl_mmol_per_l", "mmol/L", "KCl to add per litre, mmol/L")
        # one under the other: beside the choice, the box was too narrow for what the scale
        # chose ("40 mmol/L from the scale" was cut)
        form.addRow(buddy_label("&KCl added", self.kcl_mode), self.kcl_mode)
        form.addRow("", self.kcl)
        self.dextrose = NumberField(
            session, "dextrose_percent", "0", "Dextrose to add, % w/v", empty=0.0
        )
        form.addRow("De&xtrose added (%)", self.dextrose)
        self.max_na = NumberField(
            session, "max_na_change_per_h", "0.5 (default)", "Maximum serum Na change, mmol/L/h"
        )
        form.addRow("Max Na change (mmol/L/h)", self.max_na)

        self.start = QDateTimeEdit()
        self.start.setDisplayFormat("yyyy-MM-dd HH:mm")
        self.start.setCalendarPopup(True)
        self.start.setAccessibleName("Start date and time")
        self.start.setToolTip("Date and clock time of hour 0 of the plan")
        self.start.dateTimeChanged.connect(self._start_changed)
        form.addRow("&Start at", self.start)
        self.start_note = QLabel()
        self.start_note.setWordWrap(True)
        self.start_note.setAccessibleName("Start note")
        self.start_note.hide()
        form.addRow("", self.start_note)

        # diuretics last: given beside the fluid, on the same clock
        self.diuretics = DiureticsView(session)
        form.addRow(self.diuretics)

        session.inputsReplaced.connect(self.load_inputs)
        session.planChanged.connect(self._plan_changed)
        self.load_inputs()

    def load_inputs(self, *_: object) -> None:
        inputs = self.session.inputs
        with QSignalBlocker(self.replace_hours):
            self.replace_hours.setValue(inputs["replace_hours"])
        with QSignalBlocker(self.boluses):
            self.boluses.setValue(inputs["resuscitation_boluses"])
        _select(self.method, inputs["maintenance_method"])
        _select(self.fluid, inputs["fluid_id"])
        _select(self.shock_fluid, inputs["bolus_fluid_id"])
        _select(self.route, inputs["route"])
        _select(self.device, inputs["device"])
        interval = inputs.get("dose_interval_h")
        _select(self.dose_interval, None if interval is None else float(interval))
        _select(self.max_sites, inputs.get("max_sites_per_dose"))
        _select(self.soaks, inputs.get("soaks_per_day") or 0)
        bag = inputs.get("bag_size_ml")
        _select(self.bag_size, None if bag is None else float(bag))
        with QSignalBlocker(self.drop_factor):
            self.drop_factor.setCurrentText(format_drop(inputs["drop_factor"]))
        self.drop_factor.setEnabled(inputs["device"] == "gravity")
        by_hand = inputs["kcl_mmol_per_l"] is not None
        _select(self.kcl_mode, "hand" if by_hand else None)
        self.kcl.show_value(inputs["kcl_mmol_per_l"])
        self.kcl.setEnabled(by_hand)
        self.dextrose.show_value(inputs["dextrose_percent"] or None)
        self.max_na.show_value(inputs["max_na_change_per_h"])
        start, day = inputs["start_time"], inputs["start_date"]
        # a plan opened with a clock time but no date (saved before plans had dates) is put
        # on the last day that time came, today or yesterday (a drip started at 22:00 and
        # opened at 00:30 began yesterday): said beside the field, not done silently
        self.start_note.setVisible(start is not None and day is None)
        if start is None or day is None:
            # a plan in the window always sits on the calendar; shown, so the user sees it
            now = datetime.now()  # noqa: DTZ005 — the ward's local time
            start = start or time(now.hour, now.minute - now.minute % 5)
            if day is None:
                day = now.date() if start <= now.time() else now.date() - timedelta(days=1)
                which = "today's" if day == now.date() else "yesterday's"
                self.start_note.setText(
                    f"⚠ This plan had no start date; {which} is assumed — check it."
                )
            self.session.update(start_time=start, start_date=day)
        with QSignalBlocker(self.start):
            self.start.setDateTime(to_qt(datetime.combine(day, start)))

    def _route_changed(self, _: int) -> None:
        route = self.route.currentData()
        changes: dict[str, object] = {"route": route}
        if route in LINE_ROUTES:  # a line: no dosing interval or sites
            changes.update(dose_interval_h=None, max_sites_per_dose=None)
        elif route in ONE_SITE_ROUTES:  # one injection or tube a dose
            changes.update(max_sites_per_dose=None)
        self.session.update(**changes)
        _select(self.max_sites, self.session.inputs["max_sites_per_dose"])
        _select(self.dose_interval, self.session.inputs["dose_interval_h"])

    def _show_dosing(self, plan: Plan | None) -> None:
        """The interval and sites only for divided doses (sites only where a dose may use
        more than one); soaking only for a taxon with soaking on record. What is shown
        follows the plan the core built; while an input is invalid nothing changes."""
        if plan is None:
            return
        divided = plan.device == "divided"
        soaking = self.session.table.get(plan.request.species_id, "soak_water_temp_c")
        shown = {
            self.dose_interval: divided,
            self.max_sites: divided and plan.route not in ONE_SITE_ROUTES,
            self.soaks: soaking is not None,
        }
        for widget, visible in shown.items():
            if self._dosing_form.isRowVisible(widget) != visible:
                self._dosing_form.setRowVisible(widget, visible)

    def _device_changed(self, _: int) -> None:
        device = self.device.currentData()
        self.drop_factor.setEnabled(device == "gravity")
        changes = {"device": device}
        if device in ("pump", "gravity", "syringe"):  # a line: no dosing interval or sites
            changes.update(dose_interval_h=None, max_sites_per_dose=None)
        if device == "gravity":
            changes["drop_factor"] = float(self.drop_factor.currentText() or 20)
        self.session.update(**changes)
        _select(self.max_sites, self.session.inputs["max_sites_per_dose"])
        _select(self.dose_interval, self.session.inputs["dose_interval_h"])

    def _drop_factor_changed(self, text: str) -> None:
        try:
            value = float(text)
        except ValueError:
            self.session.set_field_error("drop_factor", f"Drop factor {text!r} is not a number")
            return
        self.session.update(drop_factor=value)

    def _show_scale_kcl(self, plan: Plan | None) -> None:
        """With KCl from the scale the box is disabled: its grey text says what was chosen."""
        potassium = plan.potassium if plan is not None else None
        from_scale = potassium is not None and plan.request.kcl_mmol_per_l is None
        text = f"{q(potassium.kcl_mmol_per_l, 'mmol/L')} from the scale" if from_scale else "mmol/L"
        if self.kcl.placeholderText() != text:
            self.kcl.setPlaceholderText(text)
            tip = self.kcl.property("helpText")
            self.kcl.setToolTip(f"{text} (serum-K scale). {tip}" if from_scale else tip)

    def _kcl_mode_changed(self, _: int) -> None:
        by_hand = self.kcl_mode.currentData() == "hand"
        self.kcl.setEnabled(by_hand)
        if by_hand:
            self.kcl.setFocus()
            self.kcl.commit()
        else:
            self.kcl.show_value(None)
            self.session.update(kcl_mmol_per_l=None)

    def _start_changed(self, value: QDateTime) -> None:
        self.start_note.hide()  # the user has set it
        moment = from_qt(value)
        self.session.update(start_time=moment.time(), start_date=moment.date())

    def _plan_changed(self, plan: Plan | None) -> None:
        # the tooltips depend only on the patient's plasma and the chosen fluid; touching
        # the combo's items on every edit would relay out the window
        key = (
            plan.tonicity.plasma_osmolality_mosm_per_kg if plan else None,
            self.fluid.currentData(),
        )
        if key == getattr(self, "_tooltip_key", None):
            return
        self._tooltip_key = key
        for i in range(self.fluid.count()):
            self.fluid.setItemData(
                i, fluid_tooltip(self.fluid.itemData(i), plan), Qt.ItemDataRole.ToolTipRole
            )
        self.fluid.setToolTip(fluid_tooltip(self.fluid.currentData(), plan))


# hours typed as "1,5": two doses (hours 1 and 5) or one at 1.5? never guessed
AMBIGUOUS_HOURS = re.compile(r"\s*(\d+),(\d+)\s*")
HOURS_FIX = "type the hours of the plan's clock, e.g. 0, 8, 16 (half past: 0.5)"


def _capital(text: str) -> str:
    return text[:1].upper() + text[1:]


def read_hours(text: str) -> tuple[float, ...]:
    """The hours of single doses typed as ``0, 8, 16`` (commas, semicolons or spaces between
    them), each read by the core's reader; ``1,5`` is refused as ambiguous."""
    pair = AMBIGUOUS_HOURS.fullmatch(text)
    if pair:
        first, second = pair.groups()
        raise InputError(
            "these hours are ambiguous", field="hour", value=text,
            fix=f"write {first}, {second} for two doses, or {first}.{second} for one",
        )  # fmt: skip
    parts = [part for part in re.split(r"[,;\s]+", text.strip()) if part]
    if not parts:
        raise InputError("no hour is given", field="hour", value=text, fix=HOURS_FIX)
    hours = []
    for part in parts:
        try:
            hour = read_decimal(part, field="hour")
        except InputError as exc:
            raise InputError(f"{part!r} is {exc.message}", field="hour", value=part,
                             fix=HOURS_FIX) from None  # fmt: skip
        hours.append(hour)
    return tuple(hours)


class DiureticsView(QGroupBox):
    """Diuretic doses: the drug (those on record for the species, by name), its route, the
    dose in the table's unit with the usual range on record, and the hours on the plan's
    clock (an infusion: its rate, from an hour to an hour). The doses entered are listed
    with what the core works out for this patient; one can be removed. Nothing is computed
    here: the ranges are the table's, the amounts the plan's, every check the core's."""

    def __init__(self, session: PlanSession, parent: QWidget | None = None):
        super().__init__("Diuretics", parent)
        self.session = session
        self.setAccessibleName("Diuretics")
        self._species: str | None = ""  # the species the drugs were listed for
        self._shown: list[tuple[int, tuple[str, str]]] = []  # (dose index, (when, words))
        self._clock_start: object = ""  # the start the clock hint was written for
        form = QFormLayout(self)
        self.note = QLabel()
        self.note.setWordWrap(True)
        self.note.setAccessibleName("Diuretics on record")
        form.addRow(self.note)

        self.drug = QComboBox()
        self.drug.setAccessibleName("Diuretic drug")
        self.drug.setToolTip("The diuretics with a dose on record for this species")
        compact(self.drug, 12)
        self.drug.activated.connect(self._drug_changed)
        form.addRow(buddy_label("Dru&g", self.drug), self.drug)
        self.route = QComboBox()
        self.route.setAccessibleName("Diuretic route")
        self.route.setToolTip("The routes with a dose on record for this drug and species")
        compact(self.route, 10)
        self.route.activated.connect(self._route_changed)
        form.addRow("Route", self.route)

        self.dose = QLineEdit()
        self.dose.setAccessibleName("Diuretic dose")
        self.dose.setPlaceholderText("dose")
        self.dose.setProperty("helpText", "The dose each time, in the unit beside it")
        self.dose.returnPressed.connect(self.add)
        self.dose_unit = QLabel()
        self.dose_unit.setAccessibleName("Unit of the diuretic dose")
        row = QHBoxLayout()
        row.addWidget(self.dose, 1)
        row.addWidget(self.dose_unit, 1)
        self.dose_label = buddy_label("Dose", self.dose)
        form.addRow(self.dose_label, row)
        self.usual = QLabel()
        self.usual.setWordWrap(True)
        self.usual.setAccessibleName("Usual diuretic dose")
        form.addRow("", self.usual)

        self.hours = QLineEdit()
        self.hours.setAccessibleName("Hours of the diuretic doses")
        self.hours.setPlaceholderText("e.g. 0, 8, 16")
        self.hours.setProperty("helpText", "Hours from the plan's start, one dose at each: "
                               "0, 8, 16 (half past: 0.5)")  # fmt: skip
        self.hours.setToolTip(self.hours.property("helpText"))
        self.hours.returnPressed.connect(self.add)
        form.addRow(buddy_label("At &hour(s)", self.hours), self.hours)
        self.start = QLineEdit()
        self.start.setAccessibleName("Hour the diuretic infusion starts")
        self.start.setPlaceholderText("e.g. 2")
        self.end = QLineEdit()
        self.end.setAccessibleName("Hour the diuretic infusion ends")
        self.end.setPlaceholderText("e.g. 10")
        for edit in (self.start, self.end):
            edit.setProperty("helpText", "Hours from the plan's start")
            edit.setToolTip(edit.property("helpText"))
            edit.returnPressed.connect(self.add)
        row = QHBoxLayout()
        row.addWidget(self.start, 1)
        row.addWidget(QLabel("to hour"))
        row.addWidget(self.end, 1)
        form.addRow(buddy_label("From &hour", self.start), row)
        self._infusion_row = row
        self.clock_hint = QLabel()
        self.clock_hint.setAccessibleName("The plan's clock")
        form.addRow("", self.clock_hint)

        self.add_button = QPushButton("Add dose")
        self.add_button.setToolTip("Put this diuretic on the plan, the schedule and the sheet")
        self.add_button.clicked.connect(self.add)
        form.addRow("", self.add_button)
        self.message = QLabel()
        self.message.setWordWrap(True)
        self.message.setAccessibleName("Diuretic problem")
        self.message.hide()
        form.addRow(self.message)

        self.doses_model = RowsModel(["When", "Diuretic"])
        self.doses = PlanSummary._table(self.doses_model, "Diuretic doses entered")
        self.doses.setSelectionMode(QAbstractItemView.SelectionMode.ExtendedSelection)
        self.doses.selectionModel().selectionChanged.connect(self._selection_changed)
        # wrapped rows change height as the columns settle: the table's height follows
        refit = QTimer(self.doses, singleShot=True, interval=0)
        refit.timeout.connect(self._fit_list)
        self.doses.horizontalHeader().sectionResized.connect(refit.start)
        self.remove_button = QPushButton("Remove selected dose")
        self.remove_button.setToolTip("Take the selected diuretic dose(s) off the plan")
        self.remove_button.setEnabled(False)
        self.remove_button.clicked.connect(self.remove_selected)
        form.addRow(self.doses)
        form.addRow("", self.remove_button)
        self._fit_list()

        session.inputsReplaced.connect(self.load_inputs)
        session.planChanged.connect(self._plan_changed)
        self.load_inputs()

    # ---- from the session into the widgets --------------------------------------------------
    def load_inputs(self, *_: object) -> None:
        self.say("")
        self._follow_species()
        self._show_doses(self.session.plan)

    def _plan_changed(self, plan: Plan | None) -> None:
        self._follow_species()
        self._show_doses(plan)
        start = plan.request.start_time if plan is not None else None
        if start != self._clock_start:
            self._clock_start = start
            self.clock_hint.setText(
                f"hour 0 is {start:%H:%M}, the plan's start" if start is not None else ""
            )

    def _follow_species(self) -> None:
        """List the drugs with a dose on record for the species (again when it changes)."""
        sid = self.session.inputs.get("species_id")
        if sid == self._species:
            return
        self._species = sid
        table = self.session.table
        known = sid in table.species_by_id
        self._routes: dict[str, tuple[str, ...]] = {}
        if known:
            for drug in diuretics.load_diuretics().values():
                routes = tuple(r for r in drug.routes
                               if diuretics.rows_for(table, sid, drug.drug_id, r))  # fmt: skip
                if routes:
                    self._routes[drug.drug_id] = routes
        chosen = self.drug.currentData()
        with QSignalBlocker(self.drug):
            self.drug.clear()
            for drug_id in self._routes:
                self.drug.addItem(_capital(diuretics.drug(drug_id).name), drug_id)
            self.drug.setCurrentIndex(max(0, self.drug.findData(chosen)))
        if not known:
            self.note.setText("Choose a species first.")
        elif not self._routes:
            name = table.species(sid).common_name
            self.note.setText(
                f"No diuretic dose is on record for the {name}: none can be entered here "
                "(the plan could not check it)."
            )
        self.note.setVisible(not self._routes)
        for widget in (self.drug, self.route, self.dose, self.hours, self.start, self.end,
                       self.add_button):  # fmt: skip
            widget.setEnabled(bool(self._routes))
        self._drug_changed()

    def _drug_changed(self, *_: object) -> None:
        chosen = self.route.currentData()
        with QSignalBlocker(self.route):
            self.route.clear()
            for route in self._routes.get(self.drug.currentData(), ()):
                words = "IV infusion (a rate)" if route == "cri" else diuretics.ROUTE_WORDS[route]
                self.route.addItem(words, route)
            self.route.setCurrentIndex(max(0, self.route.findData(chosen)))
        self._route_changed()

    def _route_changed(self, *_: object) -> None:
        """The unit, the usual dose and the hours as the drug's route takes them."""
        drug_id, route = self.drug.currentData(), self.route.currentData()
        infusion = route == "cri"
        form: QFormLayout = self.layout()
        form.setRowVisible(self.hours, not infusion)
        form.setRowVisible(self._infusion_row, infusion)
        self.dose_label.setText("Rat&e" if infusion else "Dos&e")
        if drug_id is None or route is None:
            self.dose_unit.setText("")
            self.usual.setText("")
            return
        self.dose_unit.setText(diuretics.drug(drug_id).dose_unit(route))
        rows = diuretics.rows_for(self.session.table, self._species, drug_id, route)
        ranges = " or ".join(dict.fromkeys(r.range_text() for r in rows))
        recalled = any(r.dose_basis == "memory" for r in rows)
        self.usual.setText(f"usual {ranges}" + (" (recalled, unverified)" if recalled else ""))
        self.usual.setToolTip("\n".join(dict.fromkeys(r.note for r in rows if r.note)))

    def _show_doses(self, plan: Plan | None) -> None:
        """The doses entered, in order of the hour, in the plan's words where it has them
        (with the amount for this patient) and the clock time of each."""
        doses = self.session.inputs.get("diuretics") or ()
        worded = {}
        if plan is not None:
            for d in plan.diuretics:
                clock = clock_time(plan.request.start_time, d.start_h)
                worded[(d.drug_id, d.dose, d.route, d.start_h, d.end_h)] = (
                    f"{clock} (hour {d.start_h:g})" if clock else f"hour {d.start_h:g}",
                    diuretic_text(d),
                )  # fmt: skip
        shown = [
            (index, worded.get(tuple(dose)) or _dose_words(dose))
            for index, dose in sorted(enumerate(doses), key=lambda e: (e[1][3], e[0]))
        ]
        if shown == self._shown:
            return
        self._shown = shown
        self.doses_model.set_rows([[Cell(when), Cell(words, words)] for _, (when, words) in shown])
        self._fit_list()
        self._selection_changed()

    def _fit_list(self) -> None:
        """The table as tall as its doses (one row at least, six at most, then it
        scrolls): an empty one stays small, a wrapped dose is not hidden under the next."""
        self.doses.resizeRowsToContents()
        rows = min(self.doses_model.rowCount(), 6)
        rows_px = (
            sum(self.doses.rowHeight(r) for r in range(rows))
            if rows
            else self.doses.verticalHeader().defaultSectionSize()
        )
        header = self.doses.horizontalHeader().sizeHint().height()
        self.doses.setFixedHeight(header + rows_px + 2 * self.doses.frameWidth() + 2)

    def say(self, text: str) -> None:
        """A problem with what was typed, beside the fields ("" clears it)."""
        self.message.setText(f"⚠ {text}" if text else "")
        self.message.setVisible(bool(text))

    # ---- from the widgets into the session ---------------------------------------------------
    def add(self) -> None:
        """Read what was typed with the core's readers, let the core check the doses, and
        enter them; anything wrong is said beside the fields and nothing is entered."""
        drug_id, route = self.drug.currentData(), self.route.currentData()
        if drug_id is None or route is None:
            return
        for edit in (self.dose, self.hours, self.start, self.end):
            mark_field(edit, "")
        unit = self.dose_unit.text()
        try:
            dose = read_decimal(self.dose.text(), field="dose")
            if dose is None:
                raise InputError("no dose is given", field="dose", value=None,
                                 fix=f"type the dose in {unit}, e.g. 2")  # fmt: skip
        except InputError as exc:
            self._refuse(self.dose, f"Dose: {exc.message} — {exc.fix}")
            return
        try:
            if route == "cri":
                start = read_decimal(self.start.text(), field="hour")
                end = read_decimal(self.end.text(), field="hour")
                if start is None or end is None:
                    raise InputError("an infusion needs the hour it starts and the hour it "
                                     "ends", field="hour", value=None,
                                     fix="e.g. from hour 2 to hour 10")  # fmt: skip
                new = ((drug_id, dose, route, start, end),)
            else:
                new = tuple((drug_id, dose, route, h, h) for h in read_hours(self.hours.text()))
        except InputError as exc:
            hours = self.start if route == "cri" else self.hours
            self._refuse(hours, f"Hour: {exc.message} — {exc.fix}")
            return
        entered = tuple(self.session.inputs.get("diuretics") or ())
        twice = [d for d in new if any(e[0] == d[0] and e[3] == d[3] for e in entered)]
        if twice or len(set(new)) < len(new):
            at = twice[0][3] if twice else new[0][3]
            self._refuse(self.hours if route != "cri" else self.start,
                         f"{_capital(diuretics.drug(drug_id).name)} at hour {at:g} is already "
                         "entered: remove it first to change it")  # fmt: skip
            return
        refused = self.session.diuretics_refused((*entered, *new))
        if refused is not None:
            field = (refused.field or "").lower()
            where = self.dose if "dose" in field else (
                self.start if route == "cri" else self.hours
            )  # fmt: skip
            self._refuse(where, self.session.in_words(refused))
            return
        self.say("")
        self.hours.clear()
        self.session.update(diuretics=(*entered, *new))
        self._show_doses(self.session.plan)

    def _refuse(self, widget: QWidget, text: str) -> None:
        mark_field(widget, text)
        self.say(text)

    def _selection_changed(self, *_: object) -> None:
        self.remove_button.setEnabled(bool(self.doses.selectionModel().selectedRows()))

    def remove_selected(self) -> None:
        rows = self.doses.selectionModel().selectedRows()
        gone = {self._shown[index.row()][0] for index in rows if index.row() < len(self._shown)}
        if not gone:
            return
        doses = self.session.inputs.get("diuretics") or ()
        self.say("")
        self.session.update(diuretics=tuple(d for i, d in enumerate(doses) if i not in gone))
        self._show_doses(self.session.plan)


def _dose_words(dose: tuple) -> tuple[str, str]:
    """A dose the plan has not (yet) worded: ``hour 8``, ``Furosemide 2 mg/kg IV``."""
    drug_id, amount, route, start_h, end_h = dose
    try:
        drug = diuretics.drug(drug_id)
        name, unit = _capital(drug.name), drug.dose_unit(route)
    except InputError:  # a dose from a file naming a drug or route not on record
        name, unit = str(drug_id), ""
    if route == "cri":
        return f"hour {start_h:g}", f"{name} infusion {amount:g} {unit} until hour {end_h:g}"
    words = diuretics.ROUTE_WORDS.get(route, route)
    return f"hour {start_h:g}", f"{name} {amount:g} {unit} {words}"


def format_drop(value: float | None) -> str:
    return "20" if value is None else f"{value:g}"


class PlanSummary(QWidget):
    """Totals, phases and the schedule of the current plan."""

    def __init__(self, session: PlanSession, parent: QWidget | None = None):
        super().__init__(parent)
        self.session = session
        layout = QVBoxLayout(self)
        self.problem = QLabel()
        self.problem.setObjectName("problem")
        self.problem.setWordWrap(True)
        self.problem.setAccessibleName("Input problem")
        layout.addWidget(self.problem)
        # A plan with a hard limit still shows its numbers (to see what to change), so it
        # must not look like one to give: a banner above them says so in words.
        self.blocked = QLabel()
        self.blocked.setObjectName("blocked")
        self.blocked.setWordWrap(True)
        self.blocked.setAccessibleName("Plan blocked")
        self.blocked.setStyleSheet(
            "QLabel#blocked { border: 2px solid palette(text); padding: 6px; font-weight: 600; }"
        )
        self.blocked.hide()
        layout.addWidget(self.blocked)

        totals = QGroupBox("Totals")
        self.grid = QGridLayout(totals)
        self.values: dict[str, QLabel] = {}
        for row, (key, label) in enumerate(
            (
                ("maintenance", "Maintenance"),
                ("deficit", "Deficit"),
                ("first24", "First 24 h"),
                ("fluid", "Fluid"),
                ("route", "Route"),
                ("potassium", "Potassium"),
                ("sodium", "Sodium"),
            )
        ):
            name = QLabel(f"<b>{label}</b>")
            value = QLabel("—")
            value.setWordWrap(True)
            value.setAccessibleName(label)
            value.setObjectName(f"total_{key}")
            self.grid.addWidget(name, row, 0)
            self.grid.addWidget(value, row, 1)
            self.values[key] = value
        self.grid.setColumnStretch(1, 1)
        layout.addWidget(totals)

        self.phases_model = RowsModel(["Phase", "Hours", "Rate or dose", "Volume", "Route"])
        self.phases_view = self._table(self.phases_model, "Phases")
        # the room left goes to the rate or dose (what the nurse reads), not to the route
        phases_header = self.phases_view.horizontalHeader()
        phases_header.setStretchLastSection(False)
        phases_header.setSectionResizeMode(2, QHeaderView.ResizeMode.Stretch)
        layout.addWidget(QLabel("<b>Phases</b>"))
        layout.addWidget(self.phases_view, 1)
        self.schedule_model = RowsModel(["Clock", "Hour", "Phase", "What to do"])
        self.schedule_view = self._table(self.schedule_model, "Schedule")
        layout.addWidget(QLabel("<b>Schedule</b>"))
        layout.addWidget(self.schedule_view, 2)

        self.shown = ShownPlan(self, session, self.show_plan)
        session.problemChanged.connect(self._show_problem)
        self._show_problem(session.problem)

    @staticmethod
    def _table(model: RowsModel, name: str) -> QTableView:
        view = QTableView()
        view.setModel(model)
        view.setAccessibleName(name)
        view.setSelectionBehavior(QAbstractItemView.SelectionBehavior.SelectRows)
        view.setEditTriggers(QAbstractItemView.EditTrigger.NoEditTriggers)
        view.setWordWrap(True)
        view.verticalHeader().setVisible(False)
        view.horizontalHeader().setSectionResizeMode(QHeaderView.ResizeMode.ResizeToContents)
        view.horizontalHeader().setStretchLastSection(True)
        # rows measured before the columns had their final widths stay too tall (or cut
        # wrapped text): measure again once the widths settle, once per turn of the loop
        refit = QTimer(view, singleShot=True, interval=0)
        refit.timeout.connect(view.resizeRowsToContents)
        view.horizontalHeader().sectionResized.connect(refit.start)
        return view

    def _show_problem(self, problem: str) -> None:
        self.problem.setText(f"⚠ {problem}" if problem else "")
        self.problem.setVisible(bool(problem))

    def _show_blocked(self, plan: Plan | None) -> None:
        hard = [f for f in plan.findings if f.severity == "hard"] if plan else []
        if hard:
            more = f" (and {len(hard) - 1} more)" if len(hard) > 1 else ""
            self.blocked.setText(
                f"✖ Hard limit — do not give this plan as it stands: {hard[0].message}{more} "
                "Change the inputs; the Checks tab says what to do."
            )
        if self.blocked.isHidden() == bool(hard):
            self.blocked.setVisible(bool(hard))

    def show_plan(self, plan: Plan | None) -> None:
        self._show_blocked(plan)
        if plan is None:
            for label in self.values.values():
                label.setText("—")
                label.setToolTip("")
            self.phases_model.set_rows([])
            self.schedule_model.set_rows([])
            return
        m = plan.maintenance
        maintenance = (
            f"{q(m.ml_per_day, 'mL/day')} ({q(m.ml_per_h, 'mL/h')}) — {m.method}: {m.formula}"
        )
        period = plan.request.ins_and_outs_period_h
        if period is not None:
            maintenance += f"; {maintenance_not_given(period)} — Course tab"
        self.values["maintenance"].setText(maintenance)
        deficit = f"{plan.dehydration_percent:g} % → {q(plan.deficit_ml, 'mL')}"
        if plan.request.dehydration_percent is None and plan.dehydration_estimate is not None:
            deficit += " (estimated from findings, not confirmed)"
        if plan.free_water_deficit_ml is not None:
            deficit += f"; free-water deficit {q(plan.free_water_deficit_ml, 'mL')}"
        self.values["deficit"].setText(deficit)
        first24 = q(plan.total_ml_first_24h, "mL")
        covers = planned_so_far(plan.end_h, period)
        if covers:
            first24 += f" ({covers})"
        self.values["first24"].setText(first24)
        self.values["fluid"].setText(
            f"{plan.fluid_name} — Na {q(plan.fluid_na_mmol_per_l, 'mmol/L')}, "
            f"K {q(plan.fluid_k_mmol_per_l, 'mmol/L')}; {fluids.tonicity_words(plan.tonicity)}"
        )
        self.values["fluid"].setToolTip(fluids.tonicity_band_text(plan.tonicity))
        self.values["route"].setText(f"{route_text(plan.route)}, {DEVICE_WORDS[plan.device]}")
        k = plan.potassium
        self.values["potassium"].setText(
            f"{q(k.kcl_mmol_per_l, 'mmol/L')} KCl added ({k.added_by}); "
            f"{q(k.peak_mmol_per_kg_per_h, 'mmol/kg/h')} at the fastest rate "
            f"(ceiling {q(k.ceiling_mmol_per_kg_per_h, 'mmol/kg/h')})"
            if k
            else "no serum K entered, no KCl added"
        )
        na = plan.sodium
        self.values["sodium"].setText(sodium_text(na) if na else "no serum Na entered")
        boluses = 0
        rows = []
        for phase in plan.phases:
            boluses += phase.kind == "resuscitation"
            # a bolus after the first is given only if the patient still needs it
            rows.append(
                _phase_row(phase, conditional=phase.kind == "resuscitation" and boluses > 1)
            )
        self.phases_model.set_rows(rows)
        self.phases_view.resizeRowsToContents()  # a few rows: cheap
        self.schedule_model.set_rows(
            [
                [Cell(e.clock or "—"), Cell(f"{e.hour:g}"), Cell(e.phase), Cell(e.action)]
                for e in plan.schedule
            ]
        )
        if self.isVisible():  # measuring wrapped rows is costly: only when on screen
            self.schedule_view.resizeRowsToContents()

    def showEvent(self, event) -> None:  # noqa: N802,ANN001 (Qt override)
        self.schedule_view.resizeRowsToContents()
        super().showEvent(event)


def _phase_row(p, *, conditional: bool = False) -> list[Cell]:  # noqa: ANN001 — Phase
    kind = f"{p.kind} (only if still poorly perfused)" if conditional else p.kind
    return [
        Cell(kind, p.note),
        Cell(f"{p.start_h:g}–{p.end_h:g}"),
        Cell(rate_or_dose_text(p)),
        Cell(q(p.volume_ml, "mL")),
        Cell(route_text(p.route)),
    ]
