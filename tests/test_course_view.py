"""The course view: observations recorded as a user would, alerts, re-planning."""

from __future__ import annotations

import numpy as np
import pytest
from PySide6.QtCore import Qt
from PySide6.QtWidgets import QApplication

from vetfluid.common.formatting import format_quantity
from vetfluid.course.model import SHOWN_STEP_MINUTES, course


@pytest.fixture(autouse=True)
def replan_saves_first(planner, answer):
    """Re-planning an unsaved plan saves it as a version first: these tests answer Save,
    for a patient named here (tests/test_records_window.py answers Cancel too)."""
    from PySide6.QtWidgets import QMessageBox

    from ui.main_window import MainWindow

    answer({"being replaced": QMessageBox.StandardButton.Save})
    planner.save_version = lambda **kw: MainWindow.save_version(
        planner, name="Course test dog", **kw
    )


@pytest.fixture()
def window(qtbot, planner):
    win = planner
    win.open_demo("dehydrated_dog")
    qtbot.waitUntil(lambda: win.session.plan is not None)
    win.details.setCurrentWidget(win.course_holder)
    assert win.course_view is not None
    return win


def record(view, hour, index_of, value, period=None):
    view.hour.setValue(hour)
    view.quantity.setCurrentIndex(view.quantity.findData(index_of))
    if period is not None:
        view.period.setValue(period)
    view.value.setText(str(value))
    view.record()


def type_weight(qtbot, view, hour, text, unit=None):
    """As a nurse does: choose Weight, (choose the unit), type the reading, press Record."""
    view.hour.setValue(hour)
    view.quantity.setCurrentIndex(view.quantity.findData("weight_kg"))
    if unit is not None:
        view.weight_unit.setCurrentText(unit)
    view.value.clear()
    qtbot.keyClicks(view.value, text)
    qtbot.mouseClick(view.record_button, Qt.MouseButton.LeftButton)


def alerts_tab_text(view):
    return view.tables.tabText(view.tables.indexOf(view.alerts_page))


def test_curves_show_the_core_course(window):
    view = window.course_view
    expected = course(window.session.plan, step_minutes=SHOWN_STEP_MINUTES)
    x, y = view.weight_curve.getData()
    assert np.allclose(y, expected.weight_kg[: len(y)])
    x, y = view.plasma_curve.getData()
    assert y[0] == pytest.approx(0)


def test_recording_observations_plots_them_and_raises_alerts(window):
    view = window.course_view
    record(view, 4, "weight_kg", 24.5)
    record(view, 8, "urine_ml", 60, period=4)  # 0.6 mL/kg/h: below the dog's 1 mL/kg/h
    assert [o.hour for o in window.session.observations] == [4, 8]
    x, y = view.weight_points.getData()
    assert list(x) == [4] and list(y) == [24.5]
    alerts = [view.alerts_model.text(r, 1) for r in range(view.alerts_model.rowCount())]
    assert any("Urine output" in a for a in alerts)


def test_bad_values_are_messages(window):
    view = window.course_view
    record(view, 2, "weight_kg", "heavy")
    assert "cannot read this weight" in view.message.text()
    record(view, 2, "serum_na", 400)
    assert "serum_na" in view.message.text()
    assert window.session.observations == []


def test_replan_keeps_the_earlier_version(qtbot, window):
    view = window.course_view
    first = window.session.plan
    view.replan()
    assert "needs a measured weight" in view.message.text()
    record(view, 6, "weight_kg", 25.0)
    view.replan()
    qtbot.waitUntil(lambda: window.session.plan is not first)
    assert window.session.plan.request.weight_kg == 25.0
    assert len(window.session.versions) == 1
    assert window.session.versions[0][0] == first.request
    assert "version 2" in view.message.text()


def test_course_view_renders(window, tmp_path):
    QApplication.processEvents()
    image = window.grab().toImage()
    assert image.save(str(tmp_path / "course.png"))
    colours = {image.pixel(x, y) for x in range(0, image.width(), 13)
               for y in range(0, image.height(), 13)}  # fmt: skip
    assert len(colours) > 8


def test_ins_and_outs_table_follows_entered_urine(window):
    # Côté 2020: insensible 20 mL/kg/day + measured urine, replaced over the next period.
    view = window.course_view
    view.ins_outs_period.setValue(6)
    record(view, 6, "urine_ml", 30, period=6)
    record(view, 12, "urine_ml", 0, period=6)
    model = view.ins_outs_model
    insensible = 20 * 24 * 6 / 24  # 24 kg dog, 6 h
    assert model.text(0, 2) == "30 mL"
    assert model.text(0, 6) == format_quantity((insensible + 30) / 6, "mL/h")
    assert model.text(1, 2) == "0 mL"


def test_planning_by_ins_and_outs_follows_each_measurement(qtbot, window):
    # a user switches an oliguric patient's plan to ins and outs, then records urine
    view = window.course_view
    view.ins_outs_period.setValue(4)
    view.ins_outs_mode.setChecked(True)
    qtbot.waitUntil(lambda: window.session.plan.request.ins_and_outs_period_h == 4)
    plan = window.session.plan
    assert {p.kind for p in plan.phases} - {"resuscitation"} == {"ins and outs"}
    record(view, 4, "urine_ml", 20, period=4)
    qtbot.waitUntil(lambda: window.session.plan.request.measured_outputs == ((20.0, 0.0),))
    plan = window.session.plan
    insensible = 20 * 24 * 4 / 24  # Côté 2020: 20 mL/kg/day, 24 kg dog, 4 h
    deficit = plan.deficit_ml / plan.request.replace_hours  # the demo's deficit, over 12 h
    second = next(p for p in plan.phases if p.start_h == 4)
    assert second.rate_ml_per_h == pytest.approx((insensible + 20) / 4 + deficit)
    first = next(p for p in plan.phases if p.kind == "ins and outs")  # the vomiting, entered
    assert first.rate_ml_per_h == pytest.approx((20 * 24 + 240) / 24 + deficit)
    assert view.ins_outs_model.text(0, 2) == "20 mL"  # the plan's own period table
    # the cli gives the same plan for the same request
    from vetfluid.planning.plan import build_plan

    assert build_plan(plan.request).phases == plan.phases
    view.ins_outs_mode.setChecked(False)
    qtbot.waitUntil(lambda: window.session.plan.request.ins_and_outs_period_h is None)
    assert window.session.plan.request.measured_outputs == ()


def test_versions_table_compares_plans(qtbot, window):
    view = window.course_view
    record(view, 6, "weight_kg", 25.0)
    first = window.session.plan
    view.replan()
    qtbot.waitUntil(lambda: window.session.plan is not first)
    QApplication.processEvents()
    model = view.versions_model
    assert model.rowCount() == 2
    assert model.text(0, 4) == "earlier, kept" and model.text(1, 4) == "current"
    assert model.text(0, 1) == "24 kg" and model.text(1, 1) == "25 kg"


def test_date_and_time_set_the_hour_and_back(window):
    from PySide6.QtCore import QDate, QDateTime, QTime

    from vetfluid.planning.demos import DEMO_DAY

    view = window.course_view  # the demo dog starts at 08:00 on the scenario's day
    day = QDate(DEMO_DAY.year, DEMO_DAY.month, DEMO_DAY.day)
    view.at.setDateTime(QDateTime(day, QTime(14, 30)))
    assert view.hour.value() == pytest.approx(6.5)
    view.at.setDateTime(QDateTime(day.addDays(1), QTime(7, 0)))
    assert view.hour.value() == pytest.approx(23.0)
    view.at.setDateTime(QDateTime(day, QTime(7, 0)))  # before the start: said, not taken
    assert "before the plan started" in view.message.text()
    assert view.hour.value() == pytest.approx(23.0)
    view.hour.setValue(48)
    assert view.at.dateTime() == QDateTime(day.addDays(2), QTime(8, 0))
    record(view, 30, "weight_kg", 24.5)
    assert view.observations_model.text(0, 0) == f"{DEMO_DAY.replace(day=2)} 14:00 (h 30)"


def test_the_oliguria_threshold_is_editable(window):
    # Foster 2018: < 1 mL/kg/h in dogs; some use 0.5. 24 kg dog, 60 mL over 4 h = 0.625
    view = window.course_view
    record(view, 4, "urine_ml", 60, period=4)

    def alert_codes():
        model = view.alerts_model
        return " ".join(model.text(r, 1) for r in range(model.rowCount()))

    assert "Urine output" in alert_codes()
    view.oliguria.setValue(0.5)
    assert "Urine output" not in alert_codes()


def test_a_reopened_ins_and_outs_plan_keeps_what_was_measured(qtbot, window):
    from dataclasses import replace

    request = replace(window.session.plan.request, ins_and_outs_period_h=6.0,
                      measured_outputs=((60.0, 0.0), (30.0, 12.0)))  # fmt: skip
    window.session.replace_request(request)  # as when a saved version is opened
    qtbot.waitUntil(lambda: window.session.plan.request == request)
    record(window.course_view, 18, "urine_ml", 20, period=6)
    expected = ((60.0, 0.0), (30.0, 12.0), (20.0, 0.0))
    qtbot.waitUntil(lambda: window.session.plan.request.measured_outputs == expected)


def test_moving_the_start_says_the_observation_times_moved(qtbot, window):
    from datetime import time

    view = window.course_view
    record(view, 3, "weight_kg", 24.3)
    window.session.update(start_time=time(9, 30))  # the demo dog starts 08:00
    qtbot.waitUntil(lambda: window.session.plan.request.start_time == time(9, 30))
    assert "moved by +1.5 h" in view.message.text()
    assert view.observations_model.text(0, 0).endswith("12:30 (h 3)")


def test_each_measurement_stands_beside_its_prediction(window):
    view = window.course_view
    record(view, 6, "weight_kg", 24.1)
    expected = course(window.session.plan, step_minutes=SHOWN_STEP_MINUTES).predicted(
        "weight_kg", 6
    )
    assert view.observations_model.text(0, 3) == format_quantity(expected, "kg")
    record(view, 7, "heart_rate_per_min", 120)
    assert view.observations_model.text(1, 3) == "—"  # the model does not predict it


def test_the_deficit_alert_and_the_predicted_column_use_one_model(window):
    # the course model's weight, not the plan's fluid balance alone, in both places
    view = window.course_view
    record(view, 8, "weight_kg", 24.2)
    predicted = course(window.session.plan, step_minutes=SHOWN_STEP_MINUTES).predicted(
        "weight_kg", 8
    )
    model = view.alerts_model
    alert = next(
        model.text(r, 1) for r in range(model.rowCount()) if "predicted" in model.text(r, 1)
    )
    assert format_quantity((predicted - 24.0) * 1000, "g") in alert
    assert view.observations_model.text(0, 3) == format_quantity(predicted, "kg")


@pytest.fixture()
def dragon(qtbot, planner):
    win = planner
    win.open_demo("cold_bearded_dragon")  # 380 g
    qtbot.waitUntil(lambda: win.session.plan is not None)
    win.details.setCurrentWidget(win.course_holder)
    assert win.course_view is not None
    return win


def test_a_weight_is_recorded_in_the_unit_chosen_beside_it(qtbot, dragon):
    # the review's case: the scale reads 352 g on a 380 g bearded dragon
    view = dragon.course_view
    view.quantity.setCurrentIndex(view.quantity.findData("weight_kg"))
    assert view.weight_unit.isVisibleTo(view) and view.weight_unit.currentText() == "g"
    type_weight(qtbot, view, 2, "352")
    assert [o.weight_kg for o in dragon.session.observations] == [pytest.approx(0.352)]
    assert view.observations_model.text(0, 2) == "352 g"
    assert view.observations_model.text(0, 3).endswith(" g")  # the prediction, in g too
    assert view.value.text() == "" and view.message.text() == ""
    # the plot draws weights in g too
    assert view.weight_plot.getAxis("left").labelText == "Weight (g)"
    x, y = view.weight_points.getData()
    assert list(x) == [2] and list(y) == [pytest.approx(352)]
    x, y = view.weight_curve.getData()
    expected = course(dragon.session.plan, step_minutes=SHOWN_STEP_MINUTES)
    assert np.allclose(y, expected.weight_kg[: len(y)] * 1000)


def test_grams_typed_with_kilograms_chosen_are_refused_with_both_weights(qtbot, dragon):
    view = dragon.course_view
    type_weight(qtbot, view, 2, "352", unit="kg")
    message = view.message.text()
    assert "352 kg" in message and "380 g" in message and "not recorded" in message
    assert "unit (g, kg or lb)" in message
    assert dragon.session.observations == []
    assert view.value.text() == "352"  # what was typed stays, to be corrected
    assert "none" in alerts_tab_text(view)  # no false overload alarm
    view.replan()  # nothing implausible to carry forward: nothing was recorded
    assert "needs a measured weight" in view.message.text()
    assert dragon.session.plan.request.weight_kg == pytest.approx(0.38)


def test_pounds_are_converted_and_shown_in_the_species_unit(qtbot, window):
    view = window.course_view  # the demo dog, 24 kg: its unit is kg
    view.quantity.setCurrentIndex(view.quantity.findData("weight_kg"))
    assert view.weight_unit.currentText() == "kg"
    type_weight(qtbot, view, 4, "53", unit="lb")
    assert window.session.observations[0].weight_kg == pytest.approx(53 * 0.45359237)
    assert view.observations_model.text(0, 2) == format_quantity(53 * 0.45359237, "kg")
    type_weight(qtbot, view, 6, "53", unit="kg")  # the same reading with kg chosen: 2.2 times
    assert "53 kg" in view.message.text() and "24 kg" in view.message.text()
    assert len(window.session.observations) == 1


def test_the_weight_unit_is_only_offered_for_a_weight(window):
    view = window.course_view
    view.quantity.setCurrentIndex(view.quantity.findData("serum_na"))
    assert not view.weight_unit.isVisibleTo(view)
    view.quantity.setCurrentIndex(view.quantity.findData("weight_kg"))
    assert view.weight_unit.isVisibleTo(view)


def test_the_alerts_tab_counts_its_alerts_in_text(qtbot, window):
    view = window.course_view
    assert alerts_tab_text(view) == "&Alerts (none)"
    record(view, 4, "urine_ml", 60, period=4)  # 0.6 mL/kg/h: below the dog's 1 mL/kg/h
    assert alerts_tab_text(view) == "&Alerts (1 ⚠)"
    record(view, 8, "urine_ml", 60, period=4)
    assert alerts_tab_text(view) == "&Alerts (2 ⚠)"
    assert view.alerts_model.rowCount() == 2
    # the plan's weight corrected after a weight was recorded: that reading is now a hard alert
    type_weight(qtbot, view, 9, "24.5")
    window.session.update(weight_kg=2.4)
    qtbot.waitUntil(lambda: window.session.plan.request.weight_kg == 2.4)
    assert alerts_tab_text(view) == "&Alerts (1 ✖)"  # 15 mL/h is no oliguria at 2.4 kg
    record(view, 12, "urine_ml", 4, period=4)  # 0.42 mL/kg/h
    assert alerts_tab_text(view) == "&Alerts (1 ✖, 1 ⚠)"  # worst first
    tooltip = view.tables.tabToolTip(view.tables.indexOf(view.alerts_page))
    assert "1 × hard limit" in tooltip and "1 × warning" in tooltip


def test_replan_refuses_a_weight_recorded_before_the_plans_weight_changed(qtbot, window):
    view = window.course_view
    type_weight(qtbot, view, 6, "24.5")
    window.session.update(weight_kg=2.4)  # someone corrects the patient's weight to 2.4 kg
    qtbot.waitUntil(lambda: window.session.plan.request.weight_kg == 2.4)
    before = window.session.plan
    view.replan()
    assert "no new plan" in view.message.text() and "24.5 kg" in view.message.text()
    assert window.session.plan is before and window.session.versions == []


def test_without_a_plan_a_weight_is_not_recorded_unchecked(qtbot, window):
    view = window.course_view
    window.session.update(weight_kg=None)  # the patient's weight was cleared on the form
    qtbot.waitUntil(lambda: window.session.plan is None)
    type_weight(qtbot, view, 2, "24.5")
    assert "no plan yet" in view.message.text() and "Nothing was recorded" in view.message.text()
    assert window.session.observations == [] and view.value.text() == "24.5"


def test_a_urine_volume_with_a_thousands_comma_is_refused_not_read_as_a_decimal(window):
    view = window.course_view
    record(view, 6, "urine_ml", "1,500", period=6)  # 1500 mL or 1.5 mL? never guessed
    assert "ambiguous" in view.message.text() and "1500" in view.message.text()
    assert window.session.observations == []
    record(view, 6, "urine_ml", "150,5", period=6)  # a decimal comma is fine
    assert window.session.observations[-1].urine_ml == 150.5


def test_a_mistyped_observation_can_be_removed_after_a_question(window, monkeypatch):
    from PySide6.QtWidgets import QMessageBox

    view = window.course_view
    record(view, 2, "serum_na", 150)
    record(view, 4, "urine_ml", 40, period=4)
    assert len(window.session.observations) == 2
    assert not view.remove_button.isEnabled()  # nothing selected yet
    view.observations_view.selectRow(1)  # the urine row (rows follow the hours)
    assert view.remove_button.isEnabled()
    asked = []
    monkeypatch.setattr(
        QMessageBox, "question", lambda *a: asked.append(a[2]) or QMessageBox.StandardButton.No
    )
    view.remove_selected()
    assert len(window.session.observations) == 2  # "No" keeps it
    assert "Urine" in asked[0] and "40 mL" in asked[0]
    monkeypatch.setattr(QMessageBox, "question", lambda *a: QMessageBox.StandardButton.Yes)
    view.remove_selected()
    assert [o.serum_na for o in window.session.observations] == [150]
    assert view.observations_model.rowCount() == 1 and "Removed" in view.message.text()


def test_urine_from_a_period_not_yet_complete_is_not_called_nothing_measured(window):
    view = window.course_view
    view.ins_outs_period.setValue(6)
    model = view.ins_outs_model
    assert model.text(0, 1).startswith("nothing measured yet")
    record(view, 2, "urine_ml", 120, period=2)  # 2 h of a 6 h period collected so far
    assert model.text(0, 1).startswith("no period measured to its end yet")


def test_replan_with_no_plan_says_so_and_makes_no_version(qtbot, window):
    window.session.update(weight_kg=None)  # the weight being retyped
    qtbot.waitUntil(lambda: window.session.plan is None)
    window.course_view.replan()
    assert "no plan to re-plan from" in window.course_view.message.text()
    assert window.session.versions == []


def test_an_observation_dated_in_the_future_is_refused_and_says_why(qtbot, window):
    """The plan is on the calendar: an hour that has not come yet cannot hold a measurement."""
    import dataclasses
    from datetime import datetime, timedelta

    tomorrow = datetime.now() + timedelta(days=1)  # noqa: DTZ005 — as the window reads it
    request = dataclasses.replace(
        window.session.plan.request, start_date=tomorrow.date(), start_time=tomorrow.time()
    )
    window.session.replace_request(request)
    qtbot.waitUntil(lambda: window.session.plan.request.start_date == tomorrow.date())
    view = window.course_view
    record(view, 2.0, "heart_rate_per_min", 120)
    assert "still to come" in view.message.text() and "set the time" in view.message.text()
    assert window.session.observations == []


def test_the_course_tab_counts_the_alerts_wherever_the_user_is(qtbot, window):
    """Recorded on the Course tab, seen from the Plan tab: the tab names how many alerts
    wait and the worst by icon; a plan edit that clears them clears the label."""
    view = window.course_view
    course_tab = window.details.indexOf(window.course_holder)
    assert window.details.tabText(course_tab) == "Co&urse"
    record(view, 4, "urine_ml", 60, period=4)  # 0.6 mL/kg/h: below the dog's 1 mL/kg/h
    window.details.setCurrentIndex(0)  # away from the Course tab
    record(view, 8, "urine_ml", 60, period=4)
    assert window.details.tabText(course_tab) == "Co&urse — 2 alerts"
    assert not window.details.tabIcon(course_tab).isNull()
    window.session.update(weight_kg=2.4)  # 15 mL/h is no oliguria at 2.4 kg
    qtbot.waitUntil(lambda: window.session.plan.request.weight_kg == 2.4)
    assert window.details.tabText(course_tab) == "Co&urse"
    assert window.details.tabIcon(course_tab).isNull()
