"""Diuretics, the type of ongoing losses and the urine output of a diseased kidney, entered
in the window (issue 19, "In the window, the sheet and the CLI"), driven as a user would
(pytest-qt, offscreen).

The doses used are those on record in species_data/diuretics.csv: furosemide for a dog
2–6 mg/kg IV (Plumb's Veterinary Drug Handbook, "plumb_vdh"), by infusion 0.66 mg/kg/h
(Plumb's) or 1 mg/kg/h (Kirk's, acute kidney injury); no diuretic is on record for a
Mongolian gerbil.
"""

from __future__ import annotations

import pytest
from PySide6.QtCore import Qt

from vetfluid.planning.demos import DEMOS

FUROSEMIDE_IV_DOG = ("furosemide", 2.0, "iv", 0.0, 0.0)  # Plumb's: 2–6 mg/kg IV


def wait_for_plan(qtbot, win, predicate):
    qtbot.waitUntil(lambda: win.session.plan is not None and predicate(win.session.plan))
    return win.session.plan


def _dog(qtbot, win):
    win.open_demo("dehydrated_dog")
    wait_for_plan(qtbot, win, lambda p: p.request.species_id == "dog")
    return win.settings_box.diuretics


def _choose(box, data) -> None:
    index = box.findData(data)
    assert index >= 0, f"{data!r} is not offered: {[box.itemText(i) for i in range(box.count())]}"
    box.setCurrentIndex(index)
    box.activated.emit(index)


def _add(qtbot, view, *, drug="furosemide", route="iv", dose="2", hours="0"):
    _choose(view.drug, drug)
    _choose(view.route, route)
    view.dose.setText(dose)
    if route == "cri":
        start, end = hours.split(";")
        view.start.setText(start)
        view.end.setText(end)
    else:
        view.hours.setText(hours)
    qtbot.mouseClick(view.add_button, Qt.MouseButton.LeftButton)


def test_adding_doses_builds_a_request_with_them_and_lists_them(qtbot, planner):
    view = _dog(qtbot, planner)
    assert view.doses_model.rowCount() == 0
    # the dog's drugs on record are offered by name, the unit is the table's
    offered = [view.drug.itemData(i) for i in range(view.drug.count())]
    assert "furosemide" in offered and "mannitol" in offered
    _choose(view.drug, "furosemide")
    _choose(view.route, "iv")
    assert view.dose_unit.text() == "mg/kg"
    assert "2–6 mg/kg" in view.usual.text()  # Plumb's range for a dog, IV
    _add(qtbot, view, dose="2", hours="0, 8")
    plan = wait_for_plan(qtbot, planner, lambda p: len(p.request.diuretics) == 2)
    assert plan.request.diuretics == (FUROSEMIDE_IV_DOG, ("furosemide", 2.0, "iv", 8.0, 8.0))
    assert view.message.text() == ""
    assert view.doses_model.rowCount() == 2
    # the list gives the clock and what the core works out for this 24 kg dog: 48 mg
    assert view.doses_model.text(0, 0) == "08:00 (hour 0)"
    assert view.doses_model.text(0, 1) == "Furosemide 2 mg/kg IV = 48 mg"
    assert view.doses_model.text(1, 0) == "16:00 (hour 8)"
    # on the schedule too, at its hour
    rows = planner.summary.schedule_model
    assert any("Furosemide 2 mg/kg IV" in rows.text(r, 3) for r in range(rows.rowCount()))


def test_an_infusion_takes_a_rate_from_and_to(qtbot, planner):
    view = _dog(qtbot, planner)
    _choose(view.drug, "furosemide")
    _choose(view.route, "cri")
    assert view.dose_unit.text() == "mg/kg/h"
    assert view.start.isVisible() and not view.hours.isVisible()
    _add(qtbot, view, route="cri", dose="0,66", hours="2;10")  # a decimal comma is read
    plan = wait_for_plan(qtbot, planner, lambda p: len(p.request.diuretics) == 1)
    assert plan.request.diuretics == (("furosemide", 0.66, "cri", 2.0, 10.0),)
    assert "until hour 10" in view.doses_model.text(0, 1)
    # an end before the start is refused beside the field, and nothing is added
    _add(qtbot, view, route="cri", dose="1", hours="10;2")
    assert "after its start" in view.message.text()
    assert view.doses_model.rowCount() == 1 and len(planner.session.inputs["diuretics"]) == 1


@pytest.mark.parametrize(
    ("dose", "hours", "said"),
    [
        ("abc", "0", "not a number"),
        ("", "0", "dose"),
        ("1,500", "0", "ambiguous"),  # thousands or decimal? never guessed
        ("0", "0", "more than 0"),
        ("2", "", "hour"),
        ("2", "0, x", "not a number"),
        ("2", "-1", "between 0"),
        ("2", "1,5", "ambiguous"),  # hours 1 and 5, or hour 1.5? never guessed
    ],
)
def test_bad_input_is_said_beside_the_field_and_nothing_is_added(qtbot, planner, dose, hours, said):
    view = _dog(qtbot, planner)
    _add(qtbot, view, dose=dose, hours=hours)
    assert said in view.message.text()
    assert view.message.isVisible()
    assert view.doses_model.rowCount() == 0
    assert planner.session.inputs["diuretics"] == ()
    assert planner.session.plan is not None  # the plan on screen stays


def test_a_dose_outside_the_range_is_a_warning_in_the_checks_until_removed(qtbot, planner):
    view = _dog(qtbot, planner)
    _add(qtbot, view, dose="10", hours="0")  # Plumb's dog range is 2–6 mg/kg IV
    wait_for_plan(qtbot, planner, lambda p: len(p.request.diuretics) == 1)
    planner.details.setCurrentWidget(planner.findings)
    model = planner.findings.model
    shown = [model.finding(r) for r in range(model.rowCount())]
    outside = [f for f in shown if f.code == "DIURETIC_DOSE_OUTSIDE_RANGE"]
    assert outside and outside[0].severity == "soft"
    assert "Furosemide 10 mg/kg IV is outside the 2–6 mg/kg" in outside[0].message
    view.doses.selectRow(0)
    qtbot.mouseClick(view.remove_button, Qt.MouseButton.LeftButton)
    plan = wait_for_plan(qtbot, planner, lambda p: p.request.diuretics == ())
    assert not any(f.code.startswith("DIURETIC") for f in plan.findings)
    assert view.doses_model.rowCount() == 0
    assert not view.remove_button.isEnabled()  # nothing left to remove


def test_a_species_with_no_diuretic_on_record_says_so(qtbot, planner):
    planner.open_demo("small_gerbil")
    wait_for_plan(qtbot, planner, lambda p: p.request.species_id == "mongolian_gerbil")
    view = planner.settings_box.diuretics
    assert not view.add_button.isEnabled()
    assert "No diuretic dose is on record for the Mongolian gerbil" in view.note.text()


def test_the_type_of_ongoing_losses_reaches_the_request(qtbot, planner):
    _dog(qtbot, planner)
    box = planner.patient.loss_type
    words = [box.itemText(i) for i in range(box.count())]
    assert "Vomitus (gastric)" in words and box.currentData() == "isotonic"
    _choose(box, "vomitus")
    plan = wait_for_plan(qtbot, planner, lambda p: p.request.loss_type == "vomitus")
    assert plan.request.losses_ml_per_day == 240.0


def test_urine_output_is_chosen_only_with_renal_disease(qtbot, planner):
    _dog(qtbot, planner)
    patient = planner.patient
    assert not patient.renal_output.isEnabled()
    assert patient.renal_output.currentText() == "not known"
    patient.flag_boxes["renal_disease"].setChecked(True)
    assert patient.renal_output.isEnabled()
    _choose(patient.renal_output, "oliguric")
    wait_for_plan(qtbot, planner, lambda p: p.request.renal_output == "oliguric")
    # no renal disease: no urine output of a diseased kidney, and the plan still builds
    patient.flag_boxes["renal_disease"].setChecked(False)
    plan = wait_for_plan(qtbot, planner, lambda p: not p.request.renal_disease)
    assert plan.request.renal_output is None
    assert not patient.renal_output.isEnabled()
    assert patient.renal_output.currentText() == "not known"


def test_a_saved_version_reopens_with_its_diuretics_and_losses(qtbot, planner):
    view = _dog(qtbot, planner)
    _add(qtbot, view, dose="2", hours="0, 8")
    _choose(planner.patient.loss_type, "vomitus")
    planner.patient.flag_boxes["renal_disease"].setChecked(True)
    _choose(planner.patient.renal_output, "polyuric")
    request = wait_for_plan(
        qtbot, planner, lambda p: p.request.renal_output == "polyuric" and bool(p.request.diuretics)
    ).request
    assert planner.save_version(name="Rex", author="AB") == 1
    planner.new_patient()
    qtbot.waitUntil(lambda: planner.session.plan is None)
    assert view.doses_model.rowCount() == 0
    patient = planner.records.find_patients("Rex")[0]
    planner.load_version(patient.id, 1)
    plan = wait_for_plan(qtbot, planner, lambda p: p.request.diuretics != ())
    assert plan.request == request
    assert view.doses_model.rowCount() == 2
    assert planner.patient.loss_type.currentData() == "vomitus"
    assert planner.patient.renal_output.currentData() == "polyuric"
    assert planner.patient.renal_output.isEnabled()


def test_the_course_plots_mark_each_dose_on_the_time_axis(qtbot, planner):
    view = _dog(qtbot, planner)
    planner.details.setCurrentWidget(planner.course_holder)
    qtbot.waitUntil(lambda: planner.course_view is not None)
    course = planner.course_view
    marks = course.dose_marks
    assert set(marks) >= {id(course.urine_plot), id(course.na_plot)}
    assert all(m.doses() == [] for m in marks.values())
    _add(qtbot, view, dose="2", hours="0, 8")
    _add(qtbot, view, route="cri", dose="0.66", hours="12;20")
    wait_for_plan(qtbot, planner, lambda p: len(p.request.diuretics) == 3)
    qtbot.waitUntil(lambda: len(marks[id(course.urine_plot)].doses()) == 3)
    for mark in marks.values():
        assert mark.doses() == [
            (0.0, 0.0, "Furosemide"),
            (8.0, 8.0, "Furosemide"),
            (12.0, 20.0, "Furosemide infusion"),
        ]
    # drawn: the names are on screen (the infusion's cut short where the plot ends)
    course.graphics.grab()
    drawn = marks[id(course.urine_plot)].names_drawn()
    assert drawn[:2] == ["Furosemide", "Furosemide"]
    assert drawn[2].startswith("Furosemid") and len(drawn) == 3
    # the same items, updated in place, and none drawn once the doses are gone
    items = dict(marks)
    view.doses.selectAll()
    qtbot.mouseClick(view.remove_button, Qt.MouseButton.LeftButton)
    wait_for_plan(qtbot, planner, lambda p: p.request.diuretics == ())
    qtbot.waitUntil(lambda: marks[id(course.urine_plot)].doses() == [])
    assert course.dose_marks == items


def test_the_demo_request_is_untouched_by_the_new_inputs(qtbot, planner):
    _dog(qtbot, planner)  # a demo opened and not edited is the demo, no default added
    assert planner.session.plan.request == DEMOS["dehydrated_dog"].request


def test_a_mark_near_the_plot_end_names_its_drug_to_its_left(qtbot):
    """A dose at the last hour shown has no room on its right: its name goes on its left,
    pointing at it, rather than off the plot; two names never overlap."""
    import pyqtgraph as pg

    from ui.course.plot_items import DoseMarks

    plot = pg.PlotWidget()
    qtbot.addWidget(plot)
    plot.resize(400, 200)
    marks = DoseMarks()
    plot.addItem(marks, ignoreBounds=True)
    plot.setXRange(0, 24, padding=0)
    plot.setYRange(0, 1, padding=0)
    marks.setData([(0.0, 0.0, "Furosemide"), (0.5, 0.5, "Mannitol"), (24.0, 24.0, "Furosemide")])
    plot.show()
    plot.grab()
    lines, bands, heads, names = marks._device[1]
    assert len(lines) == 3 and len(heads) == 3 and not bands
    texts = [text.text() for _, text in names]
    assert texts == ["Furosemide", "Mannitol", "Furosemide ▸"]
    (first, _), (second, _), (last, _) = names
    assert second.y() > first.y()  # the crowded second name on a row of its own
    assert last.x() < marks._device[0].map(pg.QtCore.QPointF(24.0, 0)).x()
    marks.setData([(2.0, 10.0, "Furosemide infusion")])
    plot.grab()
    lines, bands, heads, names = marks._device[1]
    assert len(bands) == 1 and len(lines) == 2 and not heads  # a band and its two ends


def test_a_bicarbonate_typed_in_the_labs_reaches_the_plan_and_a_slip_is_flagged(qtbot, planner):
    """The labs take a serum HCO3 (issue 19); a K of 4.2 typed there reads as a severe
    acidosis and the Checks tab asks to confirm it (SERUM_HCO3_SEVERELY_LOW, common practice)."""
    window = planner
    window.open_demo("dehydrated_dog")
    field = window.labs.fields["serum_hco3"]
    field.setText("4.2")
    field.editingFinished.emit()
    qtbot.waitUntil(lambda: window.session.plan is not None
                    and window.session.plan.request.serum_hco3 == 4.2)  # fmt: skip
    assert "SERUM_HCO3_SEVERELY_LOW" in {f.code for f in window.session.plan.findings}
