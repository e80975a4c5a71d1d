"""What people read shows words, never internal codes or ids (issue 16; house rule 8).

A finding's code (``ISOTONIC_FOR_MAINTENANCE``), a taxon group's id (``group_reptile``),
a species id (``bearded_dragon``) and a fluid id (``lactated_ringers``) belong in the JSON
and the logs. The window, the command line's text, the printed treatment sheet and the
weight-band chart give the finding's message, the species' common name, the group's name
and the fluid's name instead. Each surface is rendered for demo patients and for a bearded
dragon whose values are inherited from its groups and recalled from memory, and its text
is searched for every code and id that plan carries.

The command line's listings name a species or fluid id only as the value of the option
that chooses it (``--species bearded_dragon``): that is what a user types.
"""

from __future__ import annotations

import html
import re
from collections.abc import Iterable

import pytest

from vetfluid import cli
from vetfluid.planning.demos import DEMOS
from vetfluid.planning.plan import Plan, PlanRequest, build_plan
from vetfluid.printouts.chart import chart
from vetfluid.printouts.chart_sheet import chart_sheet_html
from vetfluid.printouts.sheet import sheet_html
from vetfluid.records.serialize import plan_dict
from vetfluid.tables import fluids
from vetfluid.tables.species import load_table

DEMO_IDS = ("dehydrated_dog", "cold_bearded_dragon", "small_gerbil", "renal_cat")
BRACKETED_CODE = re.compile(r"\[[A-Z][A-Z0-9_]{3,}\]")  # "[ISOTONIC_FOR_MAINTENANCE]"
BARE_CODE = re.compile(r"\b[A-Z][A-Z0-9]*(?:_[A-Z0-9]+)+\b")  # "DIVIDED_BOLUSES"
GROUP_ID = re.compile(r"\bgroup_[a-z_]+")  # "group_mammal"
OPTION_VALUE = re.compile(r"--(?:species|fluid) \S+")  # what a user types, on purpose


def ids_with_words() -> set[str]:
    """Every species, group and fluid id that is not itself an ordinary word ("dog" and
    "cat" are both: they cannot be told apart from the text, and need not be)."""
    table = load_table()
    return {i for i in (*table.species_by_id, *fluids.load_fluids()) if "_" in i}


def codes_and_ids_in(text: str, plans: Iterable[Plan] = ()) -> list[str]:
    """Every finding code, group id, species id or fluid id found in ``text``; a plan's own
    finding codes are searched for as words too (``NEONATE`` has no underscore)."""
    found = BRACKETED_CODE.findall(text) + BARE_CODE.findall(text) + GROUP_ID.findall(text)
    for plan in plans:
        found += [f.code for f in plan.findings if re.search(rf"\b{f.code}\b", text)]
        # a code merely lower-cased is still a code: "need a reason: overload risk; …" (as
        # an item of a list; "SC, divided boluses" is the route in words, not a code)
        found += [f.code for f in plan.findings if "_" in f.code and re.search(
            rf"(?:^|[:;]\s*){re.escape(code_as_words(f.code))}\s*(?:;|$)", text, re.MULTILINE
        )]  # fmt: skip
    found += [i for i in ids_with_words() if re.search(rf"(?<![\w-]){re.escape(i)}\b", text)]
    return found


def code_as_words(code: str) -> str:
    """A finding code with its underscores as spaces, in lower case: how codes once showed
    in the Checks tab's status line."""
    return code.replace("_", " ").lower()


def bearded_dragon_with_memory_from_its_group() -> Plan:
    """The cold bearded dragon: values inherited from the reptile and squamate groups,
    several recalled from memory (the case the group ids used to show through)."""
    plan = build_plan(DEMOS["cold_bearded_dragon"].request)
    inherited_memory = [
        v for v in plan.provenance if v.origin == "inherited" and v.basis == "memory"
    ]
    assert inherited_memory, "the case this test is about: a memory value from a group"
    assert any(v.defined_on.startswith("group_") for v in inherited_memory)
    return plan


def test_the_search_finds_what_it_is_meant_to_find():
    """The search itself, on text with each kind of code or id in it (so a pass below
    means the codes are absent, not that the search is blind)."""
    plan = bearded_dragon_with_memory_from_its_group()
    code = plan.findings[0].code
    for text in (
        f"lactated Ringer's [{code}]",
        f"{code}: the message",
        "inherited from group_reptile",
        "Bearded dragon (bearded_dragon)",
        "Give lactated_ringers SC",
        "Bolus of kcl_2_meq_per_ml",
        f"⚠ 1 warning(s) need a reason: {code_as_words(code)}",
    ):
        assert codes_and_ids_in(text, [plan]), text
    assert not codes_and_ids_in("HARD LIMIT — NOT TO BE GIVEN AS IT STANDS; Na 140 mmol/L")
    assert not codes_and_ids_in(OPTION_VALUE.sub("", "plan it with --species bearded_dragon"))


# ---- the command line's text ---------------------------------------------------------------
def cli_text(capsys, *args: str) -> str:
    cli.main(list(args))
    return capsys.readouterr().out


@pytest.mark.parametrize("demo_id", DEMO_IDS)
def test_the_text_plan_and_course_give_words(capsys, demo_id):
    plan = build_plan(DEMOS[demo_id].request)
    for command in ("plan", "course"):
        text = cli_text(capsys, command, "--demo", demo_id)
        assert "Findings" in text
        for finding in plan.findings:  # each finding by what it says
            assert finding.message in text
        assert codes_and_ids_in(text, [plan]) == [], command


def test_the_text_plan_names_the_group_a_value_is_inherited_from(capsys):
    plan = bearded_dragon_with_memory_from_its_group()
    text = cli_text(capsys, "plan", "--demo", "cold_bearded_dragon")
    assert "inherited from the reptiles group" in text
    assert codes_and_ids_in(text, [plan]) == []


def test_the_listings_name_ids_only_as_the_option_to_type(capsys):
    species = cli_text(capsys, "species", "--species", "bearded_dragon")
    assert "--species bearded_dragon" in species
    assert "inherited from the reptiles group" in species
    listed = cli_text(capsys, "fluids")
    assert "lactated Ringer's" in listed and "--fluid lactated_ringers" in listed
    sodium = cli_text(capsys, "sodium", "--species", "dog", "--weight", "20 kg",
                      "--serum-na", "160", "--fluid", "dextrose_5")  # fmt: skip
    assert "5% dextrose" in sodium
    for text in (species, listed, sodium):
        assert codes_and_ids_in(OPTION_VALUE.sub("", text)) == []


# ---- the printed treatment sheet and the weight-band chart ---------------------------------
def page_text(page: str) -> str:
    """What a printed HTML page says: its text without the markup."""
    return html.unescape(re.sub(r"<[^>]+>", " ", page))


@pytest.mark.parametrize("demo_id", DEMO_IDS)
def test_the_treatment_sheet_gives_words(demo_id):
    plan = build_plan(DEMOS[demo_id].request)
    text = page_text(sheet_html(plan_dict(plan), patient={"name": "Pip"}))
    for finding in plan.findings:
        assert finding.message in text
    assert codes_and_ids_in(text, [plan]) == []


def test_the_sheet_names_the_route_and_device_in_words():
    from dataclasses import replace

    request = replace(DEMOS["cold_bearded_dragon"].request, route="icoel", device="divided")
    data = plan_dict(build_plan(request))
    text = page_text(sheet_html(data))
    assert "intracoelomic, divided boluses" in text  # not "ICOEL (divided)"
    assert "ICOEL (" not in text and "(divided)" not in text


@pytest.mark.parametrize("species_id", ["bearded_dragon", "dog", "budgerigar"])
def test_the_chart_page_gives_words(species_id):
    text = page_text(chart_sheet_html(chart(species_id)))
    assert codes_and_ids_in(text) == []


# ---- the window -----------------------------------------------------------------------------
def window_text(win, *, skip=None) -> list[str]:  # noqa: ANN001 — MainWindow, QWidget
    """Everything the window shows or says: labels, buttons, tabs, box entries with their
    tooltips, every cell, column header and tooltip of every table, status and title
    (``skip``: a part left out, read by a test of its own)."""
    from PySide6.QtCore import Qt
    from PySide6.QtWidgets import (
        QAbstractButton,
        QAbstractItemView,
        QComboBox,
        QLabel,
        QLineEdit,
        QStatusBar,
        QTabWidget,
        QWidget,
    )

    roles = (
        Qt.ItemDataRole.DisplayRole,
        Qt.ItemDataRole.ToolTipRole,
        Qt.ItemDataRole.AccessibleTextRole,
    )
    texts = [win.windowTitle()]
    for w in [win, *win.findChildren(QWidget)]:
        if skip is not None and (w is skip or skip.isAncestorOf(w)):
            continue
        texts += [w.toolTip(), w.accessibleName(), w.accessibleDescription(), w.statusTip()]
        if isinstance(w, QLabel | QAbstractButton):
            texts.append(w.text())
        if isinstance(w, QLineEdit):
            texts.append(w.placeholderText())
        if isinstance(w, QStatusBar):
            texts.append(w.currentMessage())
        if isinstance(w, QComboBox):
            for i in range(w.count()):
                texts += [w.itemText(i), w.itemData(i, Qt.ItemDataRole.ToolTipRole)]
        if isinstance(w, QTabWidget):
            for i in range(w.count()):
                texts += [w.tabText(i), w.tabToolTip(i)]
        if isinstance(w, QAbstractItemView) and w.model() is not None:
            model = w.model()
            for column in range(model.columnCount()):
                texts += [model.headerData(column, Qt.Orientation.Horizontal, r) for r in roles]
                for row in range(model.rowCount()):
                    texts += [model.index(row, column).data(r) for r in roles]
    return [str(t) for t in texts if t]


def visit_every_tab(qtbot, win) -> None:  # noqa: ANN001
    """Views behind a tab show the plan once opened (ui/planning/shown_plan.py): open them all."""
    for index in range(win.details.count()):
        win.details.setCurrentIndex(index)
        qtbot.wait(1)
    win.pages.setCurrentIndex(1)
    win.pages.setCurrentIndex(0)
    win.details.setCurrentWidget(win.findings)
    assert win.course_view is not None and win.species_view is not None


@pytest.mark.parametrize("demo_id", DEMO_IDS)
def test_the_window_gives_words(qtbot, planner, demo_id):
    win = planner
    win.open_demo(demo_id)
    qtbot.waitUntil(lambda: win.session.plan is not None)
    plan = win.session.plan
    visit_every_tab(qtbot, win)
    texts = window_text(win, skip=win.species_view)  # the same for every patient: below
    shown = "\n".join(texts)
    for finding in plan.findings:  # each finding by what it says, on the Checks tab
        assert finding.message in shown
    offending = [t for t in texts if codes_and_ids_in(t, [plan])]
    assert offending == []


def test_the_species_table_gives_words(qtbot, planner):
    """Every cell of the species table, its tooltip and what a screen reader says (the row
    headers keep the ids: the species table is where the data files' keys are edited)."""
    win = planner
    win.open_demo("cold_bearded_dragon")
    qtbot.waitUntil(lambda: win.session.plan is not None)
    visit_every_tab(qtbot, win)
    texts = window_text(win.species_view)
    assert any("inherited from Reptiles" in t for t in texts)
    assert [t for t in texts if codes_and_ids_in(t)] == []


def test_the_window_names_the_group_of_an_inherited_value(qtbot, planner):
    from PySide6.QtCore import Qt

    win = planner
    win.open_demo("cold_bearded_dragon")
    qtbot.waitUntil(lambda: win.session.plan is not None)
    win.details.setCurrentWidget(win.provenance)
    model = win.provenance.model
    origins = {model.text(r, 3) for r in range(model.rowCount())}
    assert {"from Reptiles", "from Lizards and snakes"} <= origins
    row = next(r for r in range(model.rowCount()) if model.text(r, 3) == "from Reptiles")
    tip = model.data(model.index(row, 3), Qt.ItemDataRole.ToolTipRole)
    assert "inherited from the reptiles group" in tip


def test_an_input_error_names_the_field_as_the_form_does(qtbot, planner):
    win = planner
    win.open_demo("dehydrated_dog")
    qtbot.waitUntil(lambda: win.session.plan is not None)
    win.session.update(replace_hours=0.5)  # a plan file could hold it; the box cannot
    qtbot.waitUntil(lambda: win.session.plan is None)
    assert "replace_hours" not in win.session.problem
    assert "Replace deficit over" in win.session.problem


def test_the_records_dialogs_give_words(qtbot, planner):
    from ui.records.records_view import OpenPatientDialog

    win = planner
    win.open_demo("renal_cat")
    qtbot.waitUntil(lambda: win.session.plan is not None)
    plan = win.session.plan
    win.save_version(name="Tigger", author="AB")
    win.session.update(dehydration_percent=8.0)  # a larger deficit: the overload rate changes
    qtbot.waitUntil(lambda: win.session.plan.request.dehydration_percent == 8.0)
    win.save_version(author="AB")
    dialog = OpenPatientDialog(win.records)
    qtbot.addWidget(dialog)
    assert dialog.patients.item(0).text().startswith("Tigger — Cat")
    dialog.versions.selectAll()
    compare = dialog.compare()
    qtbot.addWidget(compare)
    rows = [[compare.model.text(r, c) for c in range(4)] for r in range(compare.model.rowCount())]
    findings = next(row for row in rows if row[0] == "Findings")
    assert plan.findings[0].message in findings[2]
    texts = [dialog.patients.item(i).text() for i in range(dialog.patients.count())]
    offending = [t for t in texts + [c for row in rows for c in row] if codes_and_ids_in(t, [plan])]
    assert offending == []
    # the same codes, but a warning now gives another rate: the words differ, and so it says
    assert findings[2] != findings[3] and findings[1] == "≠ differs"
    route = next(row for row in rows if row[0] == "Route")
    assert route[2] == "IV, infusion pump"


def test_the_open_dialog_gives_a_lizards_weight_in_grams(qtbot, planner):
    """A 380 g dragon's saved version is listed as 380 g, as its plan gives it (the species
    is weighed in g: units.preferred_weight_unit), never as 0.38 kg; so is the comparison."""
    from ui.records.records_view import OpenPatientDialog

    win = planner
    win.open_demo("cold_bearded_dragon")
    qtbot.waitUntil(lambda: win.session.plan is not None)
    assert win.session.plan.request.weight_kg == pytest.approx(0.38)
    win.save_version(name="Spike", author="AB")
    win.session.update(weight_kg=0.3804)  # re-weighed: 0.4 g more, still "0.38 kg"
    qtbot.waitUntil(lambda: win.session.plan.request.weight_kg == 0.3804)
    win.save_version(author="AB")
    dialog = OpenPatientDialog(win.records)
    qtbot.addWidget(dialog)
    listed = [dialog.versions.item(i).text() for i in range(dialog.versions.count())]
    assert [" · 380.4 g · " in listed[0], " · 380 g · " in listed[1]] == [True, True]
    assert not any("kg" in text for text in listed)
    dialog.versions.selectAll()
    compare = dialog.compare()
    qtbot.addWidget(compare)
    rows = [[compare.model.text(r, c) for c in range(4)] for r in range(compare.model.rowCount())]
    weight = next(row for row in rows if row[0] == "Weight")
    assert weight == ["Weight", "≠ differs", "380 g", "380.4 g"]


# ---- titles: a finding in a line, for summary lines ----------------------------------------
@pytest.mark.parametrize(
    ("message", "title"),
    [
        ("Potassium would run at 0.77 mmol/kg/h, above the 0.5 mmol/kg/h ceiling.",
         "Potassium would run at 0.77 mmol/kg/h, above the 0.5 mmol/kg/h ceiling"),
        # the fact comes first, the problem after the semicolon: the title keeps both
        ("No serum Na was entered; from a normal 145 mmol/L this plan would make it fall "
         "0.78 mmol/L in the hour, faster than 0.5 mmol/L/h. Measure it.",
         "No serum Na was entered; from a normal 145 mmol/L this plan would make it fall "
         "0.78 mmol/L in the hour, faster than 0.5 mmol/L/h"),
        ("The deficit of 1920 mL is replaced over 4 h: faster than the guidelines.",
         "The deficit of 1920 mL is replaced over 4 h: faster than the guidelines"),
        # a full stop inside brackets or before a digit ends nothing
        ("Urine at 330 mOsm/kg (e.g. USG 1.012) is close to plasma. The kidney needs more.",
         "Urine at 330 mOsm/kg (e.g. USG 1.012) is close to plasma"),
        ("Dextrose-containing fluids caused severe hyperglycaemia in dehydrated bearded "
         "dragons.", "Dextrose-containing fluids caused severe hyperglycaemia in dehydrated "
         "bearded dragons"),
        ("Weight without a full stop", "Weight without a full stop"),
    ],
)  # fmt: skip
def test_a_findings_title_is_its_messages_first_sentence(message, title):
    from vetfluid.common.findings import Finding

    finding = Finding(severity="soft", code="SOME_CODE", message=message)
    assert finding.title == title


@pytest.mark.parametrize("demo_id", DEMO_IDS)
def test_every_finding_has_a_title_in_words(demo_id):
    plan = build_plan(DEMOS[demo_id].request)
    for finding in plan.findings:
        assert finding.title and finding.message.startswith(finding.title)
        assert finding.title[-1] not in ";:,. " and "\n" not in finding.title
        assert codes_and_ids_in(finding.title, [plan]) == []


def test_the_checks_status_line_names_warnings_by_their_titles(qtbot, planner):
    win = planner
    win.open_demo("cold_bearded_dragon")
    qtbot.waitUntil(lambda: win.session.plan is not None)
    win.details.setCurrentWidget(win.findings)
    status = win.findings.status.text()
    blockers = win.session.blockers()
    assert blockers, "the case this test is about: warnings still needing a reason"
    for finding in blockers:
        assert finding.title in status
    assert codes_and_ids_in(status, [win.session.plan]) == []


# ---- messages of the core that reach people ------------------------------------------------
def test_a_species_with_no_concentrating_ceiling_is_named_in_words(capsys):
    """A guinea pig has neither a maximum urine osmolality nor a U/P ratio on record: the
    note that says so names the species as people do (the window, CLI and sheet show it)."""
    plan = build_plan(PlanRequest(species_id="guinea_pig", weight_kg=0.9))
    note = next(f for f in plan.findings if f.code == "NO_CONCENTRATING_CEILING")
    assert "Guinea pig" in note.message
    assert codes_and_ids_in(note.message + " " + note.action, [plan]) == []
    text = cli_text(capsys, "plan", "--species", "guinea_pig", "--weight", "900 g")
    assert note.message in text and codes_and_ids_in(text, [plan]) == []


def test_a_missing_species_value_is_named_by_its_label_and_the_species_name():
    from vetfluid.common.errors import InputError

    table = load_table()
    assert table.get("guinea_pig", "max_urine_plasma_ratio") is None  # the case in question
    with pytest.raises(InputError) as raised:
        table.value("guinea_pig", "max_urine_plasma_ratio")
    error = raised.value
    assert error.field == "max_urine_plasma_ratio"  # the key stays for files and logs
    assert table.definitions["max_urine_plasma_ratio"].label in error.message
    assert "Guinea pig" in error.message
    assert "max_urine_plasma_ratio" not in error.message and "guinea_pig" not in error.message


def test_an_unknown_fluid_lists_the_ids_to_type_with_their_names():
    from vetfluid.common.errors import InputError

    with pytest.raises(InputError) as raised:
        fluids.fluid("ringers_lactate")
    fix = raised.value.fix or ""
    assert fix.startswith("fluid ids you can type: ")
    for fluid_id, fluid in fluids.load_fluids().items():
        assert f"{fluid_id} ({fluid.name})" in fix


def test_a_plan_file_with_an_unknown_fluid_is_refused_in_readable_words(
    planner, monkeypatch, tmp_path
):
    import json

    from PySide6.QtWidgets import QMessageBox

    from vetfluid.records.request_file import write_request_file

    path = write_request_file(tmp_path / "pip", DEMOS["dehydrated_dog"].request, {})
    data = json.loads(path.read_text(encoding="utf-8"))
    data["request"]["fluid_id"] = "ringers_lactate"  # typed by hand, not a fluid we have
    path.write_text(json.dumps(data), encoding="utf-8")
    shown: list[str] = []

    def note(_parent, _title, text, *_args, **_kwargs):  # noqa: ANN001, ANN202
        shown.append(text)

    monkeypatch.setattr(QMessageBox, "warning", note)
    assert not planner.read_request(path)
    assert len(shown) == 1
    assert "Could not open pip.vfplan:" in shown[0] and "ringers_lactate" in shown[0]
    for fluid in fluids.load_fluids().values():  # every choice by the name on its bag
        assert fluid.name in shown[0]
