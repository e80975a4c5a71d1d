"""The planning window, driven as a user would drive it (pytest-qt, offscreen)."""

from __future__ import annotations

import dataclasses
import json
import subprocess
import sys
from pathlib import Path

import pytest
from PySide6.QtCore import Qt
from PySide6.QtWidgets import QApplication

from vetfluid.common.formatting import format_quantity as q
from vetfluid.planning.demos import DEMOS

CLI = str(Path(sys.executable).with_name("vetfluid-cli"))


@pytest.fixture()
def window(planner):
    win = planner
    win.details.setCurrentWidget(win.timeline_holder)  # plots are built on first opening
    win.pages.setCurrentIndex(1)  # so is the species table
    win.pages.setCurrentIndex(0)
    win.details.setCurrentIndex(0)
    assert win.timeline_view is not None and win.species_view is not None
    return win


def wait_for_plan(qtbot, win, predicate):
    qtbot.waitUntil(lambda: win.session.plan is not None and predicate(win.session.plan))
    return win.session.plan


def test_new_window_asks_for_a_species_and_shows_the_cautions(window):
    assert window.session.plan is None
    assert "Choose a species" in window.summary.problem.text()
    assert "verify before giving" in window.cautions.text()


def test_plan_a_gerbil_from_an_empty_form(qtbot, window):
    patient = window.patient
    line = patient.species_box.lineEdit()
    qtbot.keyClicks(line, "gerbil")
    popup = patient.species_box.completer().popup()
    qtbot.waitUntil(popup.isVisible)
    qtbot.keyClick(popup, Qt.Key.Key_Down)
    qtbot.keyClick(popup, Qt.Key.Key_Return)
    qtbot.waitUntil(lambda: window.session.inputs["species_id"] == "mongolian_gerbil")
    assert patient.unit_box.currentText() == "g"  # small species default to grams
    assert "45 g–130 g" in patient.range_label.text()

    qtbot.keyClicks(patient.weight_edit, "65")
    plan = wait_for_plan(qtbot, window, lambda p: p.request.weight_kg == pytest.approx(0.065))
    assert plan.device == "divided"
    assert window.windowTitle() == "vetfluid — Mongolian gerbil, 65 g"  # its own unit
    qtbot.keyClicks(patient.weight_edit, ".25")  # every figure typed is shown, never rounded
    plan = wait_for_plan(qtbot, window, lambda p: p.request.weight_kg == pytest.approx(0.06525))
    assert window.windowTitle() == "vetfluid — Mongolian gerbil, 65.25 g"
    assert "At 65.25 g" in next(f.message for f in plan.findings if f.code == "DIVIDED_BOLUSES")
    qtbot.keyClick(patient.weight_edit, Qt.Key.Key_Backspace)
    qtbot.keyClick(patient.weight_edit, Qt.Key.Key_Backspace)
    qtbot.keyClick(patient.weight_edit, Qt.Key.Key_Backspace)

    patient.dehydration_field.setText("7")
    patient.dehydration_field.commit()
    plan = wait_for_plan(qtbot, window, lambda p: p.dehydration_percent == 7)
    assert window.summary.values["deficit"].text().startswith("7 % → 4.55 mL")
    first = plan.phases[0]
    assert window.summary.schedule_model.text(0, 3).startswith("Give ")
    assert f"in {first.sites_per_dose} sites" in window.summary.schedule_model.text(0, 3)
    # the plots follow the plan
    curves = window.timeline_view
    assert curves is not None


def test_typing_a_group_word_offers_its_species(qtbot, window):
    """A clinician types "turtle", not "chelonian": the suggestions are the two chelonians."""
    line = window.patient.species_box.lineEdit()
    qtbot.keyClicks(line, "turtle")
    completer = window.patient.species_box.completer()
    qtbot.waitUntil(completer.popup().isVisible)
    offered = [
        completer.completionModel().index(row, 0).data()
        for row in range(completer.completionModel().rowCount())
    ]
    assert [name.split(" — ")[0] for name in offered] == ["Red-eared slider", "Hermann's tortoise"]


def test_enter_or_tab_takes_the_one_species_the_text_names(qtbot, window):
    patient = window.patient
    line = patient.species_box.lineEdit()
    assert not patient.weight_edit.isEnabled()  # the unit comes from the species: it waits
    qtbot.keyClicks(line, "gerbil")
    qtbot.keyClick(line, Qt.Key.Key_Return)  # no arrow key, no click on the list
    qtbot.waitUntil(lambda: window.session.inputs["species_id"] == "mongolian_gerbil")
    assert line.cursorPosition() == 0  # the name is shown from its start
    assert patient.weight_edit.isEnabled() and patient.unit_box.currentText() == "g"

    line.clear()
    qtbot.keyClicks(line, "Pogona")  # a scientific name; Tab moves on and takes it
    line.editingFinished.emit()
    qtbot.waitUntil(lambda: window.session.inputs["species_id"] == "bearded_dragon")

    line.clear()
    qtbot.keyClicks(line, "parrot")  # two parrots: nothing is guessed, the user is told
    line.editingFinished.emit()
    qtbot.waitUntil(lambda: window.session.plan is None and "parrot" in window.session.problem)
    assert "2 species match 'parrot'" in window.summary.problem.text()
    assert window.session.inputs["species_id"] == "bearded_dragon"

    line.clear()
    qtbot.keyClicks(line, "pig")  # Guinea pig or Pigeon? never guessed by where it stands
    line.editingFinished.emit()
    qtbot.waitUntil(lambda: "Guinea pig" in window.summary.problem.text())
    assert "Pigeon" in window.summary.problem.text()
    assert window.session.inputs["species_id"] == "bearded_dragon"
    line.clear()
    qtbot.keyClicks(line, "Rat")  # the whole common name of one of four matches names it
    line.editingFinished.emit()
    qtbot.waitUntil(lambda: window.session.inputs["species_id"] == "rat")

    line.clear()
    qtbot.keyClicks(line, "rodent")  # a group: several match, and the box says so ...
    line.editingFinished.emit()
    qtbot.waitUntil(lambda: "species match 'rodent'" in window.session.problem)
    line.setText(patient.species_box.itemText(patient.species_box.findData("rat")))
    line.editingFinished.emit()  # ... until the chosen species' name is back
    qtbot.waitUntil(lambda: "match" not in window.session.problem)
    assert "body weight" in window.session.problem  # the next step, not the stale message
    assert not patient.species_box.property("problem")


def test_tab_out_of_the_species_box_lands_on_the_weight(qtbot, window):
    patient = window.patient
    line = patient.species_box.lineEdit()
    line.setFocus()
    qtbot.keyClicks(line, "bearded")
    qtbot.keyClick(line, Qt.Key.Key_Tab)  # focus leaves before the weight is enabled ...
    qtbot.waitUntil(lambda: window.session.inputs["species_id"] == "bearded_dragon")
    assert QApplication.focusWidget() is patient.weight_edit  # ... and comes back to it


def test_a_click_out_of_the_species_box_keeps_focus_where_it_was_put(qtbot, window):
    patient = window.patient
    line = patient.species_box.lineEdit()
    line.setFocus()
    qtbot.keyClicks(line, "bearded")
    target = patient.flag_boxes["renal_disease"]
    target.setFocus(Qt.FocusReason.MouseFocusReason)  # what a click on the box does
    qtbot.waitUntil(lambda: window.session.inputs["species_id"] == "bearded_dragon")
    assert QApplication.focusWidget() is target  # the species is taken; focus not stolen


def test_a_unit_typed_with_the_weight_is_read_and_shown_in_the_box(qtbot, window):
    window.patient._set_species("dog")
    window.patient.weight_edit.setText("350 g")
    window.patient._weight_changed()
    plan = wait_for_plan(qtbot, window, lambda p: p.request.weight_kg == pytest.approx(0.35))
    assert window.patient.unit_box.currentText() == "g"
    assert "WEIGHT_OUTSIDE_RANGE" in {f.code for f in plan.findings}  # below the dog's 1–90 kg


def test_an_estimate_from_findings_shows_as_unconfirmed_until_used(qtbot, window):
    window.open_demo("dehydrated_dog")
    wait_for_plan(qtbot, window, lambda p: p.request.species_id == "dog")
    patient = window.patient
    patient.dehydration_field.setText("")
    patient.dehydration_field.commit()
    patient.finding_boxes["skin_return_delayed"].setChecked(True)
    plan = wait_for_plan(qtbot, window, lambda p: p.request.dehydration_percent is None)
    assert patient.dehydration_field.placeholderText().endswith("not confirmed")
    assert (
        window.summary.values["deficit"].text().endswith("(estimated from findings, not confirmed)")
    )
    assert {f.code: f.severity for f in plan.findings}["DEHYDRATION_FROM_FINDINGS"] == "soft"
    qtbot.mouseClick(patient.use_estimate, Qt.MouseButton.LeftButton)
    plan = wait_for_plan(qtbot, window, lambda p: p.request.dehydration_percent is not None)
    assert patient.dehydration_field.text() == f"{plan.dehydration_percent:g}"
    assert "DEHYDRATION_FROM_FINDINGS" not in {f.code for f in plan.findings}
    assert "not confirmed" not in window.summary.values["deficit"].text()


def test_the_kcl_box_says_what_the_scale_chose(qtbot, window):
    window.open_demo("dehydrated_dog")  # serum K 3.3 mmol/L: KCl from the scale
    plan = wait_for_plan(qtbot, window, lambda p: p.request.species_id == "dog")
    box = window.settings_box.kcl
    assert not box.isEnabled()
    assert box.placeholderText() == f"{q(plan.potassium.kcl_mmol_per_l, 'mmol/L')} from the scale"


def test_a_second_bolus_is_marked_conditional_in_the_phase_table(qtbot, window):
    window.open_demo("dehydrated_dog")
    wait_for_plan(qtbot, window, lambda p: p.request.species_id == "dog")
    window.session.update(resuscitation_boluses=2)
    plan = wait_for_plan(qtbot, window, lambda p: p.request.resuscitation_boluses == 2)
    kinds = [window.summary.phases_model.text(r, 0) for r in range(len(plan.phases))]
    assert kinds[:2] == ["resuscitation", "resuscitation (only if still poorly perfused)"]
    assert window.summary.schedule_model.text(1, 3).startswith("If still poorly perfused")


def test_hidden_views_catch_up_when_shown(qtbot, window):
    window.open_demo("dehydrated_dog")
    wait_for_plan(qtbot, window, lambda p: p.request.species_id == "dog")
    window.details.setCurrentWidget(window.findings)
    before = window.findings.model.rowCount()
    window.details.setCurrentIndex(0)
    window.open_demo("cold_bearded_dragon")  # changed while Checks is hidden
    plan = wait_for_plan(qtbot, window, lambda p: p.request.species_id == "bearded_dragon")
    window.details.setCurrentWidget(window.findings)
    assert window.findings.model.rowCount() == len(plan.findings) != before


def test_typing_a_bad_weight_says_so_and_shows_no_plan(qtbot, window):
    window.open_demo("dehydrated_dog")
    wait_for_plan(qtbot, window, lambda p: p.request.species_id == "dog")
    window.patient.weight_edit.setText("2o")
    window.patient._weight_changed()
    qtbot.waitUntil(lambda: window.session.plan is None)
    assert "unknown weight unit 'o'" in window.summary.problem.text()  # a letter O for 0
    assert window.summary.values["first24"].text() == "—"


def test_acknowledging_a_warning_allows_ready_and_a_hard_limit_blocks_it(qtbot, window):
    window.open_demo("cold_bearded_dragon")
    plan = wait_for_plan(qtbot, window, lambda p: p.request.species_id == "bearded_dragon")
    soft = [f for f in plan.findings if f.severity == "soft"]
    assert any(f.code == "ECTOTHERM_OUTSIDE_PREFERRED_TEMP" for f in soft)
    findings = window.findings
    window.details.setCurrentWidget(findings)  # the user opens the Checks tab
    assert not findings.ready_button.isEnabled()
    model = findings.model
    for row in range(model.rowCount()):
        if model.finding(row).severity == "soft":
            assert model.setData(model.index(row, 3), "warming lamp on, re-plan in 2 h")
    assert findings.ready_button.isEnabled()
    qtbot.mouseClick(findings.ready_button, Qt.MouseButton.LeftButton)
    assert window.session.ready
    assert "ready" in findings.status.text()

    # the classic slip: 380 kg typed for a 380 g dragon
    window.patient.unit_box.setCurrentText("kg")
    window.patient.weight_edit.setText("380")
    window.patient._weight_changed()
    plan = wait_for_plan(qtbot, window, lambda p: p.request.weight_kg == 380)
    assert plan.has_hard_limit
    assert not findings.ready_button.isEnabled() and not window.session.ready
    assert "hard limit" in findings.status.text()
    assert "hard limit" in window.details.tabText(window.details.indexOf(findings))
    # the plan's numbers stay on show, under a banner that says not to give them
    window.details.setCurrentIndex(0)
    assert not window.summary.blocked.isHidden()
    assert "do not give this plan" in window.summary.blocked.text()
    assert "hard limit" in window.statusBar().currentMessage()
    window.patient.weight_edit.setText("0.38")
    window.patient._weight_changed()
    wait_for_plan(qtbot, window, lambda p: p.request.weight_kg == 0.38)
    assert window.summary.blocked.isHidden()


def test_a_reason_covers_the_warning_it_was_given_for_not_a_changed_one(qtbot, window):
    window.open_demo("small_gerbil")
    wait_for_plan(qtbot, window, lambda p: p.request.species_id == "mongolian_gerbil")
    session, findings = window.session, window.findings
    window.details.setCurrentWidget(findings)
    model = findings.model
    row = next(
        r for r in range(model.rowCount()) if model.finding(r).code == "REPLACEMENT_SLOWED_TO_ROUTE"
    )
    assert model.setData(model.index(row, 3), "owner declined IO; two nurses")
    assert not session.blockers()
    session.update(losses_ml_per_day=0.0)  # an edit that leaves the warning's words alone
    wait_for_plan(qtbot, window, lambda p: p.request.losses_ml_per_day == 0)
    assert session.acknowledged == {"REPLACEMENT_SLOWED_TO_ROUTE": "owner declined IO; two nurses"}

    session.update(replace_hours=12)  # another period asked: a different warning
    wait_for_plan(qtbot, window, lambda p: p.request.replace_hours == 12)
    assert "REPLACEMENT_SLOWED_TO_ROUTE" not in session.acknowledged
    assert [f.code for f in session.blockers()] == ["REPLACEMENT_SLOWED_TO_ROUTE"]
    assert not findings.ready_button.isEnabled()
    row = next(
        r for r in range(model.rowCount()) if model.finding(r).code == "REPLACEMENT_SLOWED_TO_ROUTE"
    )
    shown = model.data(model.index(row, 3))
    assert "the warning changed" in shown and "owner declined IO" in shown
    # the editor opens empty: leaving it must not give the old reason again unread
    assert model.data(model.index(row, 3), Qt.ItemDataRole.EditRole) == ""
    assert "owner declined IO" in model.data(model.index(row, 3), Qt.ItemDataRole.ToolTipRole)
    # named by its title (the message's first sentence), in words, never its code
    warning = next(f for f in session.blockers() if f.code == "REPLACEMENT_SLOWED_TO_ROUTE")
    assert warning.title in findings.status.text()
    assert "replacement slowed to route" not in findings.status.text().lower()

    session.update(replace_hours=24)  # back to the words the reason was given for
    wait_for_plan(qtbot, window, lambda p: p.request.replace_hours == 24)
    assert session.acknowledged == {"REPLACEMENT_SLOWED_TO_ROUTE": "owner declined IO; two nurses"}
    assert not session.blockers()


def test_a_reason_opened_from_a_file_covers_only_the_warning_it_was_saved_with(
    qtbot, window, answer
):
    from PySide6.QtWidgets import QMessageBox

    answer({"This plan, or what was recorded": QMessageBox.StandardButton.No})
    # a reason kept while its warning had gone (dehydration 0 %) is saved, the file reopened,
    # and the warning comes back with other figures: the reason must not cover it
    window.open_demo("small_gerbil")
    wait_for_plan(qtbot, window, lambda p: p.request.species_id == "mongolian_gerbil")
    session = window.session
    session.acknowledge("REPLACEMENT_SLOWED_TO_ROUTE", "owner declined IO")
    session.update(dehydration_percent=0.0)
    plan = wait_for_plan(qtbot, window, lambda p: p.request.dehydration_percent == 0)
    assert "REPLACEMENT_SLOWED_TO_ROUTE" not in {f.code for f in plan.findings}
    session.replace_request(plan.request, session.acknowledged)  # as File → Open does
    wait_for_plan(qtbot, window, lambda p: p.request.dehydration_percent == 0)
    session.update(dehydration_percent=12.0)
    plan = wait_for_plan(qtbot, window, lambda p: p.request.dehydration_percent == 12)
    assert "REPLACEMENT_SLOWED_TO_ROUTE" in {f.code for f in plan.findings}
    assert "REPLACEMENT_SLOWED_TO_ROUTE" in {f.code for f in session.blockers()}
    assert not session.mark_ready()

    # a file whose warning is in the plan it opens: the reason covers that wording
    window.open_demo("small_gerbil")
    wait_for_plan(qtbot, window, lambda p: p.request.dehydration_percent == 7)
    session.replace_request(
        session.plan.request, {"REPLACEMENT_SLOWED_TO_ROUTE": "owner declined IO"}
    )
    wait_for_plan(qtbot, window, lambda p: p.request.dehydration_percent == 7)
    assert not session.blockers()


def test_memory_values_are_marked_in_words(qtbot, window):
    window.open_demo("small_gerbil")
    plan = wait_for_plan(qtbot, window, lambda p: p.request.species_id == "mongolian_gerbil")
    window.details.setCurrentWidget(window.provenance)
    model = window.provenance.model
    memory_rows = [r for r in range(model.rowCount()) if model.text(r, 2) == "memory — unverified"]
    assert len(memory_rows) == len(plan.unverified_values) > 0
    tip = model.data(model.index(memory_rows[0], 0), Qt.ItemDataRole.ToolTipRole)
    assert "unverified" in tip


@pytest.mark.parametrize("demo_id", list(DEMOS))
def test_every_number_matches_the_cli(qtbot, window, demo_id):
    window.open_demo(demo_id)
    plan = wait_for_plan(qtbot, window, lambda p: p.request == DEMOS[demo_id].request)
    result = subprocess.run([CLI, "plan", "--demo", demo_id, "--json"], capture_output=True,
                            text=True)  # fmt: skip
    assert result.returncode in (0, 3), result.stderr
    data = json.loads(result.stdout)
    assert window.summary.values["first24"].text() == q(data["total_ml_first_24h"], "mL")
    m = data["maintenance"]
    expected = f"{q(m['ml_per_day'], 'mL/day')} ({q(m['ml_per_h'], 'mL/h')})"
    assert window.summary.values["maintenance"].text().startswith(expected)
    assert f"→ {q(data['deficit_ml'], 'mL')}" in window.summary.values["deficit"].text()
    shown = [window.summary.schedule_model.text(r, 3) for r in range(len(data["schedule"]))]
    assert shown == [e["action"] for e in data["schedule"]]
    assert window.summary.schedule_model.rowCount() == len(data["schedule"])
    window.details.setCurrentWidget(window.findings)  # views behind a tab update when shown
    model = window.findings.model
    codes = {model.finding(r).code for r in range(model.rowCount())}
    assert codes == {f["code"] for f in data["findings"]}
    assert plan.has_hard_limit == data["hard_limit"]


@pytest.mark.parametrize("demo_id", list(DEMOS))
def test_the_course_tab_models_what_the_cli_models(qtbot, window, demo_id):
    """The Course tab and ``vetfluid-cli course`` run the model at one step size: the same
    predicted weight, plasma and remaining deficit at each hour asked for."""
    from vetfluid.course.model import observed_course

    window.open_demo(demo_id)
    plan = wait_for_plan(qtbot, window, lambda p: p.request == DEMOS[demo_id].request)
    result = subprocess.run([CLI, "course", "--demo", demo_id, "--at", "3,12", "--json"],
                            capture_output=True, text=True)  # fmt: skip
    assert result.returncode in (0, 3), result.stderr
    shown, _ = observed_course(plan, [], table=window.session.table)  # as the Course tab draws
    for row in json.loads(result.stdout)["rows"]:
        for key in ("weight_kg", "plasma_ml", "remaining_deficit_ml"):
            assert shown.at(row["hour"])[key] == pytest.approx(row[key], rel=1e-9), key


@pytest.mark.parametrize("demo_id", list(DEMOS))
def test_each_view_renders_to_a_picture(qtbot, window, tmp_path, demo_id):
    window.open_demo(demo_id)
    wait_for_plan(qtbot, window, lambda p: p.request == DEMOS[demo_id].request)
    for index in range(window.details.count()):
        window.details.setCurrentIndex(index)
        QApplication.processEvents()
        image = window.grab().toImage()
        assert image.save(str(tmp_path / f"{demo_id}-{index}.png"))
        colours = {image.pixel(x, y) for x in range(0, image.width(), 13)
                   for y in range(0, image.height(), 13)}  # fmt: skip
        assert len(colours) > 8, f"view {index} looks blank"


def _cat_with_a_reason(qtbot, window, tmp_path, answer):
    """The renal cat with a reason for its overload warning; leaving it is answered No."""
    from PySide6.QtWidgets import QMessageBox

    answer({"This plan, or what was recorded": QMessageBox.StandardButton.No})
    window.open_demo("renal_cat")
    wait_for_plan(qtbot, window, lambda p: p.request.species_id == "cat")
    window.session.acknowledge("OVERLOAD_RISK", "weighing every 6 h")
    return tmp_path / "cat.vfplan.json"


def test_save_and_open_a_plan_request(qtbot, window, tmp_path, answer):
    path = _cat_with_a_reason(qtbot, window, tmp_path, answer)
    window.write_request(path)
    window.new_patient()
    qtbot.waitUntil(lambda: window.session.plan is None)
    assert window.read_request(path)
    plan = wait_for_plan(qtbot, window, lambda p: p.request.species_id == "cat")
    assert plan.request == DEMOS["renal_cat"].request
    assert window.session.acknowledged == {"OVERLOAD_RISK": "weighing every 6 h"}


def test_a_plan_file_keeps_the_words_each_reason_was_given_for(qtbot, window, tmp_path, answer):
    path = _cat_with_a_reason(qtbot, window, tmp_path, answer)
    assert window.write_request(path)
    data = json.loads(path.read_text(encoding="utf-8"))
    assert data["acknowledged_for"] == window.session.acknowledged_for
    data["acknowledged_for"]["OVERLOAD_RISK"] = "what an older plan said"
    path.write_text(json.dumps(data), encoding="utf-8")
    window.new_patient()
    assert window.read_request(path)
    wait_for_plan(qtbot, window, lambda p: p.request.species_id == "cat")
    assert "OVERLOAD_RISK" in {f.code for f in window.session.blockers()}
    assert window.session.lapsed["OVERLOAD_RISK"] == (
        "weighing every 6 h",
        "what an older plan said",
    )


def test_a_reason_without_its_words_does_not_cover_a_plan_built_after_a_failed_one(qtbot, window):
    from ui.planning.session import WORDING_NOT_KNOWN

    unknown = dataclasses.replace(DEMOS["renal_cat"].request, species_id="unicorn")
    window.session.replace_request(unknown, {"OVERLOAD_RISK": "weighing every 6 h"})
    assert window.session.plan is None and "unknown species" in window.session.problem
    form = window.patient
    assert form.species_box.currentText() == "unicorn"  # what the file said, not a blank
    assert (form.weight_edit.text(), form.unit_box.currentText()) == ("4.2", "kg")
    window.session.update(species_id="cat")  # the clinician corrects the species
    wait_for_plan(qtbot, window, lambda p: p.request.species_id == "cat")
    assert "OVERLOAD_RISK" in {f.code for f in window.session.blockers()}
    assert window.session.lapsed["OVERLOAD_RISK"] == ("weighing every 6 h", WORDING_NOT_KNOWN)


def test_opening_a_broken_file_is_a_message_not_a_crash(qtbot, window, tmp_path, monkeypatch):
    from PySide6.QtWidgets import QMessageBox

    shown = []
    monkeypatch.setattr(QMessageBox, "warning", lambda *args: shown.append(args[2]))
    path = tmp_path / "broken.vfplan.json"
    path.write_text('{"format": "vetfluid-plan-request", "request": {"species_id": "dog"}}')
    assert not window.read_request(path)
    assert shown and "broken.vfplan.json" in shown[0]


def test_print_to_pdf_carries_the_cautions(qtbot, window, tmp_path):
    from PySide6.QtPrintSupport import QPrinter

    window.open_demo("dehydrated_dog")
    wait_for_plan(qtbot, window, lambda p: p.request.species_id == "dog")
    printer = QPrinter()
    printer.setOutputFormat(QPrinter.OutputFormat.PdfFormat)
    out = tmp_path / "plan.pdf"
    printer.setOutputFileName(str(out))
    window.print_to(printer)
    assert out.stat().st_size > 1000


def test_every_printed_page_carries_the_cautions(qtbot, tmp_path, monkeypatch):
    from PySide6.QtGui import QPainter
    from PySide6.QtPrintSupport import QPrinter

    import ui.printouts.printing
    from vetfluid.common.cautions import SHORT_CAUTION
    from vetfluid.printouts.sheet import BLOCKED_MARK

    footers = []

    class RecordingPainter(QPainter):
        def drawText(self, *args):  # noqa: N802 (Qt name)
            footers.append(args[-1])
            return super().drawText(*args)

    monkeypatch.setattr(ui.printouts.printing, "QPainter", RecordingPainter)
    printer = QPrinter()
    printer.setOutputFormat(QPrinter.OutputFormat.PdfFormat)
    printer.setOutputFileName(str(tmp_path / "long.pdf"))
    long_sheet = "<html><body>" + "<p>row</p>" * 400 + "</body></html>"
    pages = ui.printouts.printing.print_sheet(long_sheet, printer)
    assert pages > 1
    assert len(footers) == pages
    assert all(SHORT_CAUTION in text for text in footers)
    assert footers[-1].endswith(f"Page {pages} of {pages}")

    # a plan with a hard limit says so at the foot of every page, pages get separated
    footers.clear()
    pages = ui.printouts.printing.print_sheet(long_sheet, printer, mark=BLOCKED_MARK)
    assert len(footers) == pages and all(t.startswith(f"✖ {BLOCKED_MARK}") for t in footers)


def test_a_blocked_plan_prints_as_not_to_be_given(qtbot, window):
    from vetfluid.printouts.sheet import BLOCKED_MARK, plan_sheet_html

    window.open_demo("cold_bearded_dragon")
    wait_for_plan(qtbot, window, lambda p: p.request.species_id == "bearded_dragon")
    assert BLOCKED_MARK not in plan_sheet_html(window.session.plan)
    window.patient.unit_box.setCurrentText("kg")
    window.patient.weight_edit.setText("380")  # the gram/kilogram slip: a hard limit
    window.patient._weight_changed()
    plan = wait_for_plan(qtbot, window, lambda p: p.request.weight_kg == 380)
    html = plan_sheet_html(plan)
    assert BLOCKED_MARK in html and "far outside the usual" in html


def test_tab_moves_down_the_inputs_in_the_order_they_are_shown(qtbot, window):
    from PySide6.QtCore import QPoint

    window.open_demo("cold_bearded_dragon")  # an ectotherm: the temperature field is live
    wait_for_plan(qtbot, window, lambda p: p.request.species_id == "bearded_dragon")
    panel = window.patient.parentWidget()
    start = window.patient.species_box
    order, widget = [], start
    for _ in range(500):  # the whole window's chain, once round
        widget = widget.nextInFocusChain()
        if widget is start:
            break
        tabbable = widget.focusPolicy() & Qt.FocusPolicy.TabFocus
        if tabbable and widget.isVisible() and widget.isEnabled() and panel.isAncestorOf(widget):
            order.append(widget)
    places = [widget.mapTo(panel, QPoint(0, 0)) for widget in order]
    rows = [(p.y() // 20, p.x()) for p in places]  # a row of the form, then left to right
    assert len(order) > 20  # patient, hydration, how to give it, labs
    assert rows == sorted(rows), [w.accessibleName() or type(w).__name__ for w in order]
    assert window.labs.fields["serum_na"] in order and window.settings_box.isAncestorOf(
        order[order.index(window.labs.fields["serum_na"]) - 1]
    )  # the labs come right after how the fluid is given


def test_window_remembers_its_size(qtbot, window, vetfluid_home):
    window.resize(1111, 777)
    window.close()
    assert (vetfluid_home / "window.ini").exists()
    from ui.main_window import MainWindow

    again = MainWindow()
    qtbot.addWidget(again)
    assert again.size().width() == 1111


def test_help_lists_cautions_and_sources(qtbot, window):
    from ui.common.help_dialog import help_html

    html = help_html(window.session.table)
    assert "Verify every volume" in html and "Hardy RM, Osborne CA" in html

    from PySide6.QtCore import QUrl
    from PySide6.QtGui import QTextDocument

    from ui.common.help_dialog import HelpDialog

    dialog = HelpDialog(window.session.table, window)
    qtbot.addWidget(dialog)
    # the legend shows each severity and basis with the icon the window uses beside it
    document = dialog.browser.document()
    for name in ("severity-hard", "severity-soft", "basis-memory"):
        assert f"src='icon:{name}'" in html
        image = document.resource(QTextDocument.ResourceType.ImageResource, QUrl(f"icon:{name}"))
        assert image is not None and not image.isNull()


def test_standard_shortcuts_exist(window):
    actions = [
        a for menu in window.menuBar().findChildren(type(window.edit_menu)) for a in menu.actions()
    ]
    shortcuts = {a.shortcut().toString() for a in actions if not a.shortcut().isEmpty()}
    for key in ("Ctrl+N", "Ctrl+O", "Ctrl+P", "Ctrl+Q", "Ctrl+Z", "Ctrl+F"):
        assert key in shortcuts, key


def test_clearing_losses_means_none_not_an_error(qtbot, window):
    window.open_demo("dehydrated_dog")
    wait_for_plan(qtbot, window, lambda p: p.request.losses_ml_per_day == 240)
    window.patient.losses_field.setText("")
    window.patient.losses_field.commit()
    wait_for_plan(qtbot, window, lambda p: p.request.losses_ml_per_day == 0)


def test_a_number_with_a_thousands_comma_is_refused_in_every_field(qtbot, window):
    window.open_demo("dehydrated_dog")
    wait_for_plan(qtbot, window, lambda p: p.request.species_id == "dog")
    window.patient.losses_field.setText("1,200")  # 1200 mL/day or 1.2? never guessed
    window.patient.losses_field.commit()
    qtbot.waitUntil(lambda: window.session.plan is None)
    assert "ambiguous" in window.summary.problem.text()
    window.patient.losses_field.setText("1200")
    window.patient.losses_field.commit()
    wait_for_plan(qtbot, window, lambda p: p.request.losses_ml_per_day == 1200)


def test_a_bad_reptile_temperature_does_not_follow_the_patient_to_a_dog(qtbot, window):
    window.open_demo("cold_bearded_dragon")
    wait_for_plan(qtbot, window, lambda p: p.request.species_id == "bearded_dragon")
    window.patient.temp_field.setText("3o")
    window.patient.temp_field.commit()
    qtbot.waitUntil(lambda: window.session.plan is None)
    window.patient._set_species("dog")
    window.patient.weight_edit.setText("20")
    window.patient._weight_changed()
    plan = wait_for_plan(qtbot, window, lambda p: p.request.species_id == "dog")
    assert plan.request.body_temp_c is None


@pytest.mark.parametrize(
    ("now", "start", "day", "said"),
    [
        ((2026, 12, 5, 10, 0), (8, 0), (2026, 12, 5), "today's"),
        # a drip started at 22:00, opened at 00:30: it began yesterday, and hour 2 is past
        ((2026, 12, 5, 0, 30), (22, 0), (2026, 12, 4), "yesterday's"),
    ],
)
def test_a_plan_without_a_start_date_goes_on_the_last_day_its_time_came(
    qtbot, planner, monkeypatch, now, start, day, said
):
    from dataclasses import replace
    from datetime import date, datetime, time

    import ui.course.course_view
    import ui.planning.plan_view
    from vetfluid.planning.demos import DEMOS

    class Clock(datetime):
        @classmethod
        def now(cls, tz=None):  # noqa: ARG003
            return datetime(*now)

    for module in (ui.planning.plan_view, ui.course.course_view):
        monkeypatch.setattr(module, "datetime", Clock)
    request = replace(DEMOS["dehydrated_dog"].request, start_date=None, start_time=time(*start))
    planner.session.replace_request(request)
    qtbot.waitUntil(lambda: planner.session.plan is not None)
    settings = planner.settings_box
    assert (
        settings.start_note.isVisible() and f"no start date; {said}" in settings.start_note.text()
    )
    assert planner.session.plan.request.start_date == date(*day)
    planner.details.setCurrentWidget(planner.course_holder)
    view = planner.course_view
    view.hour.setValue(2.0)  # two hours after the start: past in both cases
    view.quantity.setCurrentIndex(view.quantity.findData("heart_rate_per_min"))
    view.value.setText("120")
    view.record()
    assert len(planner.session.observations) == 1, view.message.text()
    planner.session.remove_observation(0)
    planner.open_demo("small_gerbil")  # a demo has its date: no note
    qtbot.waitUntil(lambda: planner.session.plan.request.species_id == "mongolian_gerbil")
    assert not settings.start_note.isVisible()


def test_the_findings_estimate_says_when_its_bands_are_not_for_this_species(qtbot, window):
    patient = window.patient
    patient.species_box.lineEdit().setText("Domestic rabbit")
    patient._species_typed()
    patient.finding_boxes["skin_return_delayed"].setChecked(True)
    assert "written for dogs and cats" in patient.estimate_label.text()
    assert "(Domestic rabbit)" in patient.estimate_label.text()
    patient.species_box.lineEdit().setText("Dog")
    patient._species_typed()
    assert "6–8 %" in patient.estimate_label.text()
    assert "written for dogs and cats" not in patient.estimate_label.text()
    # a bearded dragon is examined for a reptile's signs: the dog's are not offered, and one
    # ticked for the dog is unticked, never carried to the dragon (issue 20)
    patient.species_box.lineEdit().setText("Bearded dragon")
    patient._species_typed()
    assert not patient.finding_boxes["skin_return_delayed"].isChecked()
    assert patient.finding_boxes["skin_return_delayed"].isHidden()
    assert not patient.finding_boxes["reptile_eyes_sunken"].isHidden()
    patient.finding_boxes["reptile_eyes_sunken"].setChecked(True)
    assert "no % bands published" in patient.estimate_label.text()
    assert not patient.use_estimate.isVisible()
