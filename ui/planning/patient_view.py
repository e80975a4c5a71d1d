"""The patient form: species, weight with unit, flags, temperature, hydration, losses; and
the optional laboratory values (:class:`LabsView`, placed after how the fluid is given).

Each field writes into the :class:`~ui.planning.session.PlanSession`; text that cannot be
read is reported to the session (which then shows no plan) and marked on the
field. Nothing is computed here: the dehydration estimate and the usual ranges
come from the core.
"""

from __future__ import annotations

import re

from PySide6.QtCore import QEvent, QObject, QSignalBlocker, Qt
from PySide6.QtWidgets import (
    QApplication,
    QCheckBox,
    QComboBox,
    QCompleter,
    QFormLayout,
    QGroupBox,
    QHBoxLayout,
    QLabel,
    QLineEdit,
    QPushButton,
    QScrollArea,
    QVBoxLayout,
    QWidget,
)

from ui.planning.session import PlanSession
from vetfluid.common.errors import InputError
from vetfluid.common.formatting import format_number, format_quantity
from vetfluid.common.units import (
    WEIGHT_UNITS,
    parse_weight_kg,
    preferred_weight_unit,
    read_decimal,
    weight_in_unit,
)
from vetfluid.physiology.electrolytes import DEFAULT_LOSS_TYPE, LOSS_TYPES
from vetfluid.physiology.hydration import (
    TABLE_NAMES,
    estimate_dehydration,
    findings_caveat,
    load_findings,
)

# Optional numeric inputs: request field → (label, unit, placeholder, tooltip)
LAB_FIELDS = {
    "serum_na": ("Serum Na", "mmol/L", "not measured", "Serum sodium; drives the sodium checks"),
    "serum_k": ("Serum K", "mmol/L", "not measured", "Serum potassium; picks KCl from the scale"),
    "serum_hco3": (
        "Serum HCO₃",
        "mmol/L",
        "not measured",
        "Serum bicarbonate (total CO₂); the course follows it. Not the base excess, not the pH",
    ),
    "usg": ("USG", "", "e.g. 1.012", "Urine specific gravity (mammals only)"),
    "urine_osmolality": (
        "Urine osmolality",
        "mOsm/kg",
        "not measured",
        "Measured urine osmolality",
    ),
    "pcv_percent": ("PCV", "%", "not measured", "Packed cell volume, recorded with the plan"),
    "total_solids_g_per_dl": ("Total solids", "g/dL", "not measured", "Recorded with the plan"),
}
TYPED_UNIT = re.compile(r"[a-zA-Z]+$")  # the unit at the end of "350 g" or "20kg"
# How a diseased kidney behaves (PlanRequest.renal_output): None when not stated
RENAL_OUTPUT_CHOICES = ((None, "not known"), ("oliguric", "oliguric"), ("polyuric", "polyuric"))
FLAG_FIELDS = {
    "neonate": "Neonate",
    "cardiac_disease": "Cardiac disease",
    "renal_disease": "Renal disease",
    "anaesthesia": "Under anaesthesia",
}


def compact(box: QComboBox, characters: int) -> None:
    """Let a combo box with long entries shrink to the column instead of widening it."""
    box.setSizeAdjustPolicy(QComboBox.SizeAdjustPolicy.AdjustToMinimumContentsLengthWithIcon)
    box.setMinimumContentsLength(characters)


def buddy_label(text: str, buddy: QWidget) -> QLabel:
    """A form label whose &-shortcut moves focus to ``buddy`` (rows holding a layout need it)."""
    label = QLabel(text)
    label.setBuddy(buddy)
    return label


def mark_field(widget: QWidget, problem: str) -> None:
    """Show a problem on a field in words (tooltip) and by a property the style marks."""
    widget.setProperty("problem", bool(problem))
    widget.setToolTip(problem or widget.property("helpText") or "")
    widget.style().unpolish(widget)
    widget.style().polish(widget)


class NumberField(QLineEdit):
    """A line edit for an optional number that writes into one request field."""

    def __init__(
        self,
        session: PlanSession,
        name: str,
        placeholder: str,
        help_text: str,
        *,
        empty: float | None = None,
    ):
        super().__init__()
        self.session, self.name = session, name
        self.empty = empty  # what an empty field means (None: not measured; 0: none)
        self.setPlaceholderText(placeholder)
        self.setProperty("helpText", help_text)
        self.setToolTip(help_text)
        self.setAccessibleName(help_text)
        self.editingFinished.connect(self.commit)
        self.textEdited.connect(self.commit)

    def commit(self) -> None:
        try:
            value = read_decimal(self.text(), field=self.name)
        except InputError as exc:
            mark_field(self, f"{exc.message} — {exc.fix}")
            label = self.property("helpText")
            self.session.set_field_error(self.name, f"{label}: {self.text()!r} is {exc.message}")
            return
        mark_field(self, "")
        self.session.update(**{self.name: self.empty if value is None else value})

    def show_value(self, value: float | None) -> None:
        with QSignalBlocker(self):
            self.setText("" if value is None else format_number(value, decimals=4))
        mark_field(self, "")


class PatientView(QWidget):
    def __init__(self, session: PlanSession, parent: QWidget | None = None):
        super().__init__(parent)
        self.session = session
        self.setAccessibleName("Patient")
        layout = QVBoxLayout(self)

        # -- species and weight ---------------------------------------------------------
        who = QGroupBox("Patient")
        form = QFormLayout(who)
        self.species_box = QComboBox()
        self.species_box.setEditable(True)
        self.species_box.setInsertPolicy(QComboBox.InsertPolicy.NoInsert)
        compact(self.species_box, 24)
        self.species_box.setAccessibleName("Species")
        self.species_box.setToolTip("Type part of a common name, scientific name or group")
        self.species_box.lineEdit().setPlaceholderText("type to search, e.g. gerbil")
        for sid in session.table.species_ids():
            self.species_box.addItem(session.table.choice_label(sid), sid)
        completer = QCompleter(self.species_box.model(), self.species_box)
        completer.setFilterMode(Qt.MatchFlag.MatchContains)
        completer.setCaseSensitivity(Qt.CaseSensitivity.CaseInsensitive)
        completer.setCompletionMode(QCompleter.CompletionMode.PopupCompletion)
        self.species_box.setCompleter(completer)
        # the suggestions as wide as the longest choice: its group words must not be cut off
        widest = max(
            (self.species_box.fontMetrics().horizontalAdvance(self.species_box.itemText(i))
             for i in range(self.species_box.count())),
            default=0,
        ) + 4 * self.species_box.fontMetrics().averageCharWidth()  # fmt: skip
        completer.popup().setMinimumWidth(widest)
        self.species_box.view().setMinimumWidth(widest)
        completer.activated[str].connect(self._species_text_chosen)
        self.species_box.activated.connect(self._species_index_chosen)
        # Enter or Tab after typing part of a name takes the species it names, if only one
        # (Tab with the suggestions open moves focus without the line edit's signal, so
        # where focus goes is watched too)
        self.species_box.lineEdit().editingFinished.connect(self._species_typed)
        QApplication.instance().focusChanged.connect(self._focus_moved)
        # only Tab (or Enter, focus staying) leads on to the weight; a click elsewhere goes
        # where it was aimed. Focus events name no reason here, so the key is watched (on the
        # suggestions too: with them open they receive the keys)
        self._tabbed_out = False
        for watched in (self.species_box, self.species_box.lineEdit(), completer.popup()):
            watched.installEventFilter(self)
        form.addRow("&Species", self.species_box)
        # the field shows the common and scientific name (the whole choice would be cut);
        # the groups the search also matches are said in full beneath it
        self.species_groups = QLabel()
        self.species_groups.setWordWrap(True)
        self.species_groups.setAccessibleName("Species groups")
        form.addRow("", self.species_groups)

        self.weight_edit = QLineEdit()
        self.weight_edit.setPlaceholderText("weight")
        self.weight_edit.setAccessibleName("Body weight")
        self.weight_edit.setProperty("helpText", "Body weight; choose the unit beside it")
        self.unit_box = QComboBox()
        self.unit_box.addItems(list(WEIGHT_UNITS))
        self.unit_box.setAccessibleName("Weight unit")
        self.unit_box.setToolTip("Unit of the weight: g, kg or lb")
        self.range_label = QLabel()
        self.range_label.setAccessibleName("Usual weight range")
        row = QHBoxLayout()
        row.addWidget(self.weight_edit, 2)
        row.addWidget(self.unit_box, 1)
        form.addRow(buddy_label("&Weight", self.weight_edit), row)
        form.addRow("", self.range_label)
        self.weight_edit.textEdited.connect(self._weight_changed)
        self.unit_box.activated.connect(self._weight_changed)

        self.flag_boxes: dict[str, QCheckBox] = {}
        flags = QHBoxLayout()
        flags_two = QHBoxLayout()
        for i, (name, label) in enumerate(FLAG_FIELDS.items()):
            box = QCheckBox(label)
            box.setAccessibleName(label)
            if name != "renal_disease":  # renal disease also decides the urine output
                box.toggled.connect(lambda on, n=name: self.session.update(**{n: on}))
            self.flag_boxes[name] = box
            (flags if i < 2 else flags_two).addWidget(box)
        self.flag_boxes["renal_disease"].toggled.connect(self._renal_changed)
        form.addRow("Stage, flags", flags)
        form.addRow("", flags_two)
        # how the diseased kidney behaves in the course: only said of a diseased kidney
        self.renal_output = QComboBox()
        for value, label in RENAL_OUTPUT_CHOICES:
            self.renal_output.addItem(label, value)
        self.renal_output.setAccessibleName("Urine output of the diseased kidney")
        self.renal_output.setProperty(
            "helpText",
            "With renal disease: is the patient passing little urine (oliguric) or a lot "
            "(polyuric)? The course models the kidney accordingly; tick Renal disease first.",
        )
        self.renal_output.setToolTip(self.renal_output.property("helpText"))
        compact(self.renal_output, 10)
        self.renal_output.activated.connect(
            lambda _: self.session.update(renal_output=self.renal_output.currentData())
        )
        form.addRow(buddy_label("Ur&ine output", self.renal_output), self.renal_output)

        self.temp_field = NumberField(
            session, "body_temp_c", "not measured", "Body temperature (°C)"
        )
        self.temp_label = QLabel()
        form.addRow("Body &temp. (°C)", self.temp_field)
        form.addRow("", self.temp_label)
        # a puppy's or kitten's age sets its body water, maintenance and the dextrose check
        self.age_field = NumberField(
            session, "age_weeks", "adult", "Age in weeks (puppies and kittens under 6 months)"
        )
        form.addRow("A&ge (weeks)", self.age_field)
        layout.addWidget(who)

        # -- hydration --------------------------------------------------------------------
        hyd = QGroupBox("Hydration")
        hform = QFormLayout(hyd)
        self.dehydration_field = NumberField(
            session, "dehydration_percent", "0", "Estimated dehydration, % of body weight"
        )
        hform.addRow("&Dehydration (%)", self.dehydration_field)
        hform.addRow(QLabel("Or tick what you find on examination:"))
        self.finding_boxes: dict[str, QCheckBox] = {}
        # every taxon's findings, each shown only for a patient of its taxon (a reptile is
        # not examined for capillary refill); the band and the table in the tooltip
        self.finding_taxon: dict[str, str] = {}
        for fid, finding in load_findings().items():
            if finding.percent_low == 0:  # "nothing detectable" is the empty choice
                continue
            box = QCheckBox(finding.label)
            box.setAccessibleName(finding.label)
            band = (f"{finding.percent_low:g}–{finding.percent_high:g} %"
                    if finding.percent_low is not None else "no % band published")  # fmt: skip
            recalled = " (recalled, unverified)" if finding.basis == "memory" else ""
            box.setToolTip(f"{band}: {TABLE_NAMES[finding.taxon]}{recalled}")
            box.toggled.connect(self._findings_changed)
            self.finding_boxes[fid] = box
            self.finding_taxon[fid] = finding.taxon
            hform.addRow(box)
        self.estimate_label = QLabel()
        self.estimate_label.setWordWrap(True)
        self.use_estimate = QPushButton("Use estimate")
        self.use_estimate.setToolTip("Copy the low end of the estimated band into Dehydration")
        self.use_estimate.clicked.connect(self._use_estimate)
        hform.addRow(self.estimate_label)
        hform.addRow(self.use_estimate)
        self.losses_field = NumberField(
            session,
            "losses_ml_per_day",
            "0",
            "Ongoing losses (vomiting, diarrhoea, polyuria), mL/day",
            empty=0.0,
        )
        # what the losses are: their typical Na and K come from the core's list
        self.loss_type = QComboBox()
        for loss in LOSS_TYPES.values():
            self.loss_type.addItem(loss.label[:1].upper() + loss.label[1:], loss.loss_type)
            self.loss_type.setItemData(
                self.loss_type.count() - 1, _loss_tooltip(loss), Qt.ItemDataRole.ToolTipRole
            )
        self.loss_type.setAccessibleName("Type of ongoing losses")
        self.loss_type.setToolTip("What the ongoing losses are: sets their Na and K in the course")
        compact(self.loss_type, 12)
        self.loss_type.activated.connect(
            lambda _: self.session.update(loss_type=self.loss_type.currentData())
        )
        row = QHBoxLayout()
        row.addWidget(self.losses_field, 1)
        row.addWidget(self.loss_type, 2)
        hform.addRow(buddy_label("Ongoing &losses (mL/day)", self.losses_field), row)
        layout.addWidget(hyd)
        layout.setContentsMargins(0, 0, 0, 0)

        session.inputsReplaced.connect(self.load_inputs)
        self.load_inputs()

    # ---- from the session into the widgets --------------------------------------------------
    def load_inputs(self, *_: object) -> None:
        inputs = self.session.inputs
        sid = inputs.get("species_id")
        with QSignalBlocker(self.species_box):
            index = self.species_box.findData(sid) if sid else -1
            self.species_box.setCurrentIndex(index)
            if index < 0:  # none, or one this table lacks (the plan line names it)
                self.species_box.setEditText(sid or "")
        known = sid if index >= 0 else None
        self._show_species_name(known)
        self._show_species_context(known)
        weight = inputs.get("weight_kg")
        if weight is not None:
            unit = (
                preferred_weight_unit(self.session.table.value(known, "body_weight_kg").number)
                if known
                else "kg"  # shown, not lost, until a species this table knows is chosen
            )
            with QSignalBlocker(self.unit_box):
                self.unit_box.setCurrentText(unit)
            with QSignalBlocker(self.weight_edit):
                self.weight_edit.setText(format_number(weight_in_unit(weight, unit), decimals=4))
        else:
            with QSignalBlocker(self.weight_edit):
                self.weight_edit.clear()
        for name, box in self.flag_boxes.items():
            with QSignalBlocker(box):
                box.setChecked(bool(inputs.get(name)))
        self._show_renal_output(inputs.get("renal_output"), bool(inputs.get("renal_disease")))
        with QSignalBlocker(self.loss_type):
            self.loss_type.setCurrentIndex(
                max(0, self.loss_type.findData(inputs.get("loss_type") or DEFAULT_LOSS_TYPE))
            )
        self.temp_field.show_value(inputs.get("body_temp_c"))
        self.age_field.show_value(inputs.get("age_weeks"))
        self.dehydration_field.show_value(inputs.get("dehydration_percent"))
        self.losses_field.show_value(inputs.get("losses_ml_per_day") or None)
        chosen = set(inputs.get("dehydration_findings") or ())
        for fid, box in self.finding_boxes.items():
            with QSignalBlocker(box):
                box.setChecked(fid in chosen)
            box.setVisible(self.finding_taxon[fid] == self._taxon())
        self._show_estimate(tuple(f for f in self.finding_boxes if f in chosen))

    def focus_species(self) -> None:
        """Bring the species field into view at the top of the input panel and put the
        cursor in it, its text selected (New patient, Find species): focus alone does not
        scroll the panel, and a panel left scrolled down hides the field."""
        panel = self.parentWidget()
        while panel is not None and not isinstance(panel, QScrollArea):
            panel = panel.parentWidget()
        if panel is not None:
            panel.verticalScrollBar().setValue(0)
        self.species_box.setFocus(Qt.FocusReason.ShortcutFocusReason)
        self.species_box.lineEdit().selectAll()

    def _species_name(self, sid: str | None) -> str:
        """What the field shows of a chosen species: its common and scientific name."""
        if sid not in self.session.table.species_by_id:
            return ""
        species = self.session.table.species(sid)
        return f"{species.common_name} — {species.scientific_name}"

    def _show_species_name(self, sid: str | None) -> None:
        """The chosen species' names in the field (the start shown), its groups beneath it
        and the whole choice on hover; nothing beneath while none is chosen."""
        name = self._species_name(sid)
        if name:
            with QSignalBlocker(self.species_box):
                self.species_box.setEditText(name)
            groups = ", ".join(self.session.table.group_names(sid))
            self.species_groups.setText(groups)
            self.species_box.setToolTip(self.species_box.itemText(self.species_box.findData(sid)))
        else:
            self.species_groups.setText("")
            self.species_box.setToolTip("Type part of a common name, scientific name or group")
        self.species_groups.setVisible(bool(name))
        self.species_box.lineEdit().setCursorPosition(0)  # the start of the name, not its end

    def _show_species_context(self, sid: str | None) -> None:
        """Usual weight range and, for ectotherms, the preferred temperature range."""
        # the weight waits for the species: its unit (g or kg) comes from the species, and
        # a number typed before would be read in whatever unit the box happened to show
        self.weight_edit.setEnabled(bool(sid))
        self.unit_box.setEnabled(bool(sid))
        self.weight_edit.setPlaceholderText("weight" if sid else "choose a species first")
        if not sid:
            self.range_label.setText("Choose a species first.")
            self.temp_field.setEnabled(False)
            self.temp_label.setText("")
            return
        table = self.session.table
        weight = table.value(sid, "body_weight_kg")
        unit = preferred_weight_unit(weight.number)
        low, high = weight.low or weight.number, weight.high or weight.number
        marker = " (recalled, unverified)" if weight.unverified else ""
        self.range_label.setText(
            f"usual {format_quantity(weight_in_unit(low, unit), unit)}–"
            f"{format_quantity(weight_in_unit(high, unit), unit)}{marker}"
        )
        ectotherm = table.species(sid).is_ectotherm
        self.temp_field.setEnabled(ectotherm)
        if not ectotherm and (self.temp_field.text() or self.session.inputs.get("body_temp_c")):
            # a temperature (or a typing error in it) must not linger for an endotherm
            self.temp_field.show_value(None)
            self.session.update(body_temp_c=None)
        if ectotherm:
            pref = table.value(sid, "preferred_temp_c")
            lo, hi = pref.low or pref.number, pref.high or pref.number
            flag = " (recalled, unverified)" if pref.unverified else ""
            self.temp_label.setText(
                f"preferred {format_quantity(lo, '°C')}–{format_quantity(hi, '°C')}{flag}"
            )
        else:
            self.temp_label.setText("not needed for endotherms")

    def _show_renal_output(self, renal_output: str | None, renal_disease: bool) -> None:
        with QSignalBlocker(self.renal_output):
            self.renal_output.setCurrentIndex(max(0, self.renal_output.findData(renal_output)))
        self.renal_output.setEnabled(renal_disease)

    # ---- from the widgets into the session ---------------------------------------------------
    def _renal_changed(self, on: bool) -> None:
        """Renal disease on or off; off, the urine output of a diseased kidney goes with it
        (the core refuses one without the other), and the box shows so."""
        if on:
            self.renal_output.setEnabled(True)
            self.session.update(renal_disease=True)
            return
        self._show_renal_output(None, False)
        self.session.update(renal_disease=False, renal_output=None)

    def _species_index_chosen(self, index: int) -> None:
        self._set_species(self.species_box.itemData(index))

    def _species_text_chosen(self, text: str) -> None:
        index = self.species_box.findText(text)
        if index >= 0:
            with QSignalBlocker(self.species_box):
                self.species_box.setCurrentIndex(index)
            self._set_species(self.species_box.itemData(index))

    def _species_typed(self) -> None:
        """Enter or Tab after typing: take the species the text names — the only entry
        that contains it, or the one whose common or scientific name or id it is —
        otherwise say which match, never guess ("pig": Guinea pig or Pigeon?)."""
        text = self.species_box.currentText().strip()
        sid = self.session.inputs.get("species_id")
        chosen = self.species_box.findData(sid) if sid else -1
        if not text:
            return
        if chosen >= 0 and text in (self.species_box.itemText(chosen), self._species_name(sid)):
            if self.species_box.property("problem"):
                self._set_species(sid)  # clears a message left by earlier text
            return
        wanted = text.casefold()
        table = self.session.table
        ids = [self.species_box.itemData(i) for i in range(self.species_box.count())]
        matches = [
            i for i, name in enumerate(self.species_box.itemText(i) for i in range(len(ids)))
            if wanted in name.casefold()
        ]  # fmt: skip
        named = [
            i for i in matches
            if wanted in (ids[i], table.species(ids[i]).common_name.casefold(),
                          table.species(ids[i]).scientific_name.casefold())
        ]  # fmt: skip
        if len(matches) != 1 and len(named) == 1:
            matches = named
        if len(matches) == 1:
            with QSignalBlocker(self.species_box):
                self.species_box.setCurrentIndex(matches[0])
            self._set_species(ids[matches[0]])
            self._to_weight_if_empty()
            return
        if matches:
            names = [table.species(ids[i]).common_name for i in matches]
            listed = ", ".join(names[:4]) + (
                f" and {len(names) - 4} more" if len(names) > 4 else ""
            )
            problem = f"{len(matches)} species match {text!r} ({listed}): pick one from the list"
        else:
            problem = (
                f"no species matches {text!r}: try a common name, a scientific name or a group"
            )
        mark_field(self.species_box, problem)
        self.session.set_field_error("species_id", f"Species: {problem}")

    def eventFilter(self, watched: QObject, event: QEvent) -> bool:  # noqa: N802 (Qt override)
        if event.type() == QEvent.Type.KeyPress:
            self._tabbed_out = event.key() == Qt.Key.Key_Tab
        elif event.type() == QEvent.Type.FocusIn:
            self._tabbed_out = False
        return super().eventFilter(watched, event)

    def _focus_moved(self, old: QWidget | None, new: QWidget | None) -> None:
        box = (self.species_box, self.species_box.lineEdit())
        if old in box and new is not None and new not in box:  # None: another window's turn
            self._species_typed()

    def _to_weight_if_empty(self) -> None:
        """After a species is taken with Enter, or with Tab (focus has then already passed
        the weight, disabled while no species was chosen), go to the weight, the next thing
        to type. Focus that left by a click stays where the user put it."""
        focus = QApplication.focusWidget()
        box = (self.species_box, self.species_box.lineEdit())
        if not self.weight_edit.text() and (
            focus in box or (self._tabbed_out and (focus is None or self.isAncestorOf(focus)))
        ):
            self.weight_edit.setFocus(Qt.FocusReason.TabFocusReason)

    def _set_species(self, sid: str | None) -> None:
        if not sid:
            return
        mark_field(self.species_box, "")
        self._show_species_name(sid)
        self._show_species_context(sid)
        unit = preferred_weight_unit(self.session.table.value(sid, "body_weight_kg").number)
        weight = self.session.inputs.get("weight_kg")
        with QSignalBlocker(self.unit_box):
            self.unit_box.setCurrentText(unit)
        if weight is not None:
            # keep the weight itself; only its display changes unit (never the number alone)
            with QSignalBlocker(self.weight_edit):
                self.weight_edit.setText(format_number(weight_in_unit(weight, unit), decimals=4))
        self.session.update(species_id=sid)
        self._show_findings_for_taxon()
        self._show_estimate(self._chosen_findings())  # its caveat depends on the species

    def _weight_changed(self, *_: object) -> None:
        text = self.weight_edit.text().strip()
        if not text:
            mark_field(self.weight_edit, "")
            self.session.update(weight_kg=None)
            return
        try:
            # a unit typed with the number ("350 g") wins over the box, which then follows it
            kg = parse_weight_kg(text, default_unit=self.unit_box.currentText())
        except InputError as exc:
            mark_field(self.weight_edit, f"{exc.message} — {exc.fix or ''}")
            self.session.set_field_error("weight_kg", f"Weight {text!r}: {exc.message}")
            return
        mark_field(self.weight_edit, "")
        typed_unit = TYPED_UNIT.search(text)
        if typed_unit and typed_unit.group(0).lower() in WEIGHT_UNITS:
            with QSignalBlocker(self.unit_box):
                self.unit_box.setCurrentText(typed_unit.group(0).lower())
        self.session.update(weight_kg=kg)

    def _taxon(self) -> str:
        sid = self.session.inputs.get("species_id")
        table = self.session.table
        return table.taxon_class(sid) if sid in table.species_by_id else "mammal"

    def _show_findings_for_taxon(self) -> None:
        """Only the findings of the patient's taxon are offered; a ticked finding of another
        taxon (the species changed) is unticked, never carried to the new patient."""
        taxon = self._taxon()
        dropped = False
        for fid, box in self.finding_boxes.items():
            mine = self.finding_taxon[fid] == taxon
            box.setVisible(mine)
            if not mine and box.isChecked():
                with QSignalBlocker(box):
                    box.setChecked(False)
                dropped = True
        if dropped:
            self.session.update(dehydration_findings=self._chosen_findings())

    def _chosen_findings(self) -> tuple[str, ...]:
        return tuple(fid for fid, box in self.finding_boxes.items() if box.isChecked())

    def _findings_changed(self, *_: object) -> None:
        chosen = self._chosen_findings()
        self._show_estimate(chosen)
        self.session.update(dehydration_findings=chosen)

    def _show_estimate(self, chosen: tuple[str, ...]) -> None:
        taxon = self._taxon()
        try:
            estimate = estimate_dehydration(chosen, taxon=taxon)
        except InputError:  # a finding of another taxon: the plan line says so in words
            chosen = ()
            estimate = None
        if not chosen or estimate is None:
            self.estimate_label.setText("Tick what you find to see the estimated band.")
            # no findings, no figure to use: the button goes, not left greyed with an old one
            self.use_estimate.setText("Use estimate")
            self.use_estimate.hide()
            self.dehydration_field.setPlaceholderText("0")
            return
        sid = self.session.inputs.get("species_id")
        caveat = (
            findings_caveat(sid, self.session.table.species(sid).common_name, taxon)
            if sid in self.session.table.species_by_id
            else ""
        )
        if estimate.suggested_percent is None:  # a reptile's signs: no published band
            self.dehydration_field.setPlaceholderText("type the % you estimate")
            self.estimate_label.setText(
                f"Signs of dehydration recorded ({estimate.table_name}). {caveat}".rstrip()
            )
            self.use_estimate.hide()
            return
        # an empty field now means the estimate, not 0: say so where the number would be
        self.dehydration_field.setPlaceholderText(
            f"{estimate.suggested_percent:g} from findings — not confirmed"
        )
        self.estimate_label.setText(
            f"Findings suggest {estimate.percent_low:g}–{estimate.percent_high:g} % "
            f"({estimate.table_name}). The plan uses {estimate.suggested_percent:g}\u00a0% "
            f"until you confirm it: click the button or type the % above. {caveat}".rstrip()
        )
        self.use_estimate.setText(f"Use {estimate.suggested_percent:g} %")
        self.use_estimate.show()
        self._estimate = estimate.suggested_percent

    def _use_estimate(self) -> None:
        self.dehydration_field.show_value(self._estimate)
        self.session.update(dehydration_percent=self._estimate)


def _loss_tooltip(loss) -> str:  # noqa: ANN001 — electrolytes.LossComposition
    """A loss type's typical composition in words, as the core's list gives it."""
    recalled = " (recalled, unverified)" if loss.basis == "memory" else ""
    if loss.na_mmol_per_l is None:
        return f"{loss.note}{recalled}"
    return (f"Na {format_quantity(loss.na_mmol_per_l, 'mmol/L')}, "
            f"K {format_quantity(loss.k_mmol_per_l, 'mmol/L')}: {loss.note}{recalled}")  # fmt: skip


class LabsView(QGroupBox):
    """Optional laboratory values; each writes into the session like the patient form."""

    def __init__(self, session: PlanSession, parent: QWidget | None = None):
        super().__init__("Laboratory (optional)", parent)
        self.session = session
        self.setAccessibleName("Laboratory values")
        form = QFormLayout(self)
        self.fields: dict[str, NumberField] = {}
        for name, (label, unit, placeholder, tip) in LAB_FIELDS.items():
            field = NumberField(session, name, placeholder, tip)
            self.fields[name] = field
            form.addRow(f"{label} ({unit})" if unit else label, field)
        session.inputsReplaced.connect(self.load_inputs)
        self.load_inputs()

    def load_inputs(self, *_: object) -> None:
        inputs = self.session.inputs
        for name, field in self.fields.items():
            field.show_value(inputs.get(name))
