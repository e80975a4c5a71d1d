"""The species table view: model checks, edits through the undo stack, filters, export, render."""

from __future__ import annotations

import csv
from pathlib import Path

import pytest
from PySide6.QtCore import QItemSelectionModel, Qt
from PySide6.QtGui import QFontMetrics
from PySide6.QtWidgets import QAbstractButton, QComboBox, QLabel, QLineEdit, QTableView

from ui.tables.species_view import (
    BASIS_ROLE,
    MARKER_DERIVED,
    MARKER_MEMORY,
    MARKER_OVERRIDE,
    ORIGIN_ROLE,
    UNVERIFIED_TEXT,
    SpeciesTableModel,
    SpeciesTableView,
    column_label,
)
from vetfluid.common.formatting import format_number
from vetfluid.tables import overrides
from vetfluid.tables.species import load_table

ROOT = Path(__file__).resolve().parents[1]
DISPLAY = Qt.ItemDataRole.DisplayRole
TOOLTIP = Qt.ItemDataRole.ToolTipRole


@pytest.fixture
def view(qtbot):
    widget = SpeciesTableView()
    qtbot.addWidget(widget)
    return widget


def _cell(model, species_id, parameter, role=DISPLAY):
    return model.data(model.index_of(species_id, parameter), role)


def _words(text):
    """Text with line wrapping undone."""
    return " ".join(text.split())


def _proxy_ids(view):
    proxy = view.proxy
    return [proxy.index(r, 0).data(Qt.ItemDataRole.DisplayRole) for r in range(proxy.rowCount())]


def _proxy_species(view):
    proxy, model = view.proxy, view.model
    return [
        model.species_id(proxy.mapToSource(proxy.index(r, 0)).row())
        for r in range(proxy.rowCount())
    ]


def test_model_and_proxy_pass_the_model_tester(qtmodeltester, view):
    qtmodeltester.check(SpeciesTableModel())
    qtmodeltester.check(view.proxy)


def test_rows_are_species_and_columns_identity_then_parameters():
    model = SpeciesTableModel()
    table = load_table()
    assert model.rowCount() == len(table.species_ids())
    assert model.columnCount() == 3 + len(table.definitions)
    assert [model.headerData(c, Qt.Orientation.Horizontal) for c in range(3)] == [
        "Common name",
        "Scientific name",
        "Taxon group",
    ]
    assert model.headerData(3, Qt.Orientation.Horizontal) == "body weight\n[kg]"
    assert model.headerData(0, Qt.Orientation.Vertical) == table.species_ids()[0]
    row = table.species_ids().index("mongolian_gerbil")
    assert model.data(model.index(row, 0)) == "Mongolian gerbil"
    assert model.data(model.index(row, 1)) == "Meriones unguiculatus"
    assert not model.flags(model.index(row, 0)) & Qt.ItemFlag.ItemIsEditable
    assert model.flags(model.index(row, 3)) & Qt.ItemFlag.ItemIsEditable


def test_column_label_drops_only_the_unit_words():
    assert column_label("plasma_osmolality_mosm_per_kg", "mOsm/kg") == "plasma osmolality"
    assert column_label("maintenance_ml_per_kg_day", "mL/kg/day") == "maintenance"
    assert column_label("preferred_temp_c", "°C") == "preferred temp"
    assert column_label("q10", "ratio") == "Q10"
    assert column_label("serum_na_mmol_per_l", "mmol/L") == "serum Na"
    assert (
        column_label("total_body_water_fraction", "fraction of BW") == "total body water fraction"
    )


def test_cells_carry_text_markers_for_basis_and_origin():
    model = SpeciesTableModel()
    table = load_table()
    # memory: marker and the unverified text in the tooltip
    memory = table.value("mongolian_gerbil", "blood_volume_ml_per_kg")
    assert memory.basis == "memory"
    shown = _cell(model, "mongolian_gerbil", "blood_volume_ml_per_kg")
    assert shown == f"{format_number(memory.value)} {MARKER_MEMORY}"
    tip = _words(_cell(model, "mongolian_gerbil", "blood_volume_ml_per_kg", TOOLTIP))
    assert UNVERIFIED_TEXT in tip
    assert _cell(model, "mongolian_gerbil", "blood_volume_ml_per_kg", BASIS_ROLE) == "memory"
    # published: no marker, the citation in the tooltip
    published = table.value("mongolian_gerbil", "body_weight_kg")
    assert published.basis == "published"
    assert _cell(model, "mongolian_gerbil", "body_weight_kg") == format_number(published.value)
    citation = table.sources[published.source_id].citation
    tip = _words(_cell(model, "mongolian_gerbil", "body_weight_kg", TOOLTIP))
    assert _words(citation) in tip
    assert "shipped with vetfluid" in tip
    # derived, inherited from a group: a flag shown as yes/no with its marker
    derived = table.value("bearded_dragon", "usg_interpretable")
    assert (derived.basis, derived.origin) == ("derived", "inherited")
    assert _cell(model, "bearded_dragon", "usg_interpretable") == f"no {MARKER_DERIVED}"
    assert _cell(model, "bearded_dragon", "usg_interpretable", ORIGIN_ROLE) == "inherited"
    assert "inherited from" in _cell(model, "bearded_dragon", "usg_interpretable", TOOLTIP)
    font = _cell(model, "bearded_dragon", "usg_interpretable", Qt.ItemDataRole.FontRole)
    assert font.italic()


def test_editing_a_cell_saves_an_override_and_undo_redo_restore(qtbot):
    model = SpeciesTableModel()
    messages = []
    model.messageChanged.connect(messages.append)
    shipped = load_table().value("dog", "body_weight_kg")
    index = model.index_of("dog", "body_weight_kg")
    with qtbot.waitSignal(model.tableChanged):
        assert model.setData(index, "25")
    assert messages[-1].startswith("✓ Saved Dog · body_weight_kg = 25 kg as a clinic override")
    on_disk = overrides.get_override(species_id="dog", parameter="body_weight_kg")
    assert on_disk.value == 25.0
    assert (on_disk.low, on_disk.high, on_disk.unit) == (shipped.low, shipped.high, "kg")
    assert model.data(index) == f"25 {MARKER_OVERRIDE} {MARKER_MEMORY}"
    assert "clinic override" in model.data(index, TOOLTIP)
    assert model.data(index, ORIGIN_ROLE) == "override"
    assert model.data(index, BASIS_ROLE) == "memory"
    assert model.undo_stack.count() == 1

    with qtbot.waitSignal(model.tableChanged):
        model.undo_stack.undo()
    assert overrides.read_overrides() == []
    assert model.data(index, ORIGIN_ROLE) == "shipped"
    assert (
        messages[-1]
        == f"Undo: Dog · body_weight_kg is now {format_number(shipped.value)} kg (shipped)."
    )
    assert model.data(index) == f"{format_number(shipped.value)} {MARKER_MEMORY}"

    with qtbot.waitSignal(model.tableChanged):
        model.undo_stack.redo()
    assert overrides.get_override(species_id="dog", parameter="body_weight_kg").value == 25.0
    assert model.data(index, ORIGIN_ROLE) == "override"


def test_undo_of_a_second_edit_returns_to_the_first_override():
    model = SpeciesTableModel()
    index = model.index_of("cat", "blood_volume_ml_per_kg")
    assert model.setData(index, "58")
    assert model.setData(index, "62.5")
    assert load_table().value("cat", "blood_volume_ml_per_kg").value == 62.5
    model.undo_stack.undo()
    assert overrides.get_override(species_id="cat", parameter="blood_volume_ml_per_kg").value == 58
    assert model.data(index).startswith("58 ")
    model.undo_stack.undo()
    assert overrides.read_overrides() == []


def test_reset_selected_removes_the_override_and_is_undoable(view, qtbot):
    model = view.model
    assert model.setData(model.index_of("rat", "plasma_osmolality_mosm_per_kg"), "310")
    assert model.setData(model.index_of("mouse", "plasma_osmolality_mosm_per_kg"), "305")
    selection = view.table_view.selectionModel()
    for species_id in ("rat", "mouse", "dog"):  # the dog has no override: skipped
        source = model.index_of(species_id, "plasma_osmolality_mosm_per_kg")
        selection.select(view.proxy.mapFromSource(source), QItemSelectionModel.SelectionFlag.Select)
    with qtbot.waitSignal(view.tableChanged):
        view.reset_action.trigger()
    assert overrides.read_overrides() == []
    assert "Reset 2 value(s)" in view.message.text()
    assert _cell(model, "rat", "plasma_osmolality_mosm_per_kg", ORIGIN_ROLE) == "inherited"
    view.undo_action.trigger()  # one step puts both back
    assert {r.species_id for r in overrides.read_overrides()} == {"rat", "mouse"}
    view.redo_action.trigger()
    assert overrides.read_overrides() == []


def test_reset_on_a_species_cell_removes_its_groups_override_and_says_so(view, qtbot):
    """A clinic value on the rodent group shows in the rat's cell; resetting it there
    removes the group's row (the one that is in the file) and says the whole group is back
    on its shipped value."""
    overrides.set_override(species_id="group_rodent", parameter="bolus_minutes", value=20)
    view.model.reload()
    model = view.model
    assert _cell(model, "rat", "bolus_minutes", ORIGIN_ROLE) == "override"
    selection = view.table_view.selectionModel()
    source = model.index_of("rat", "bolus_minutes")
    selection.select(view.proxy.mapFromSource(source), QItemSelectionModel.SelectionFlag.Select)
    with qtbot.waitSignal(view.tableChanged):
        view.reset_action.trigger()
    assert overrides.read_overrides() == []
    assert "every species in it is back on its shipped value" in view.message.text()
    view.undo_action.trigger()
    assert [(r.species_id, r.value) for r in overrides.read_overrides()] == [("group_rodent", 20.0)]


def test_reset_without_an_override_says_so(view):
    selection = view.table_view.selectionModel()
    source = view.model.index_of("dog", "body_weight_kg")
    selection.select(view.proxy.mapFromSource(source), QItemSelectionModel.SelectionFlag.Select)
    view.reset_action.trigger()
    assert "Nothing to reset" in view.message.text()
    assert view.undo_stack.count() == 0


@pytest.mark.parametrize(
    ("typed", "words"),
    [
        ("abc", "not a number"),
        ("1,5", "comma"),
        ("1000", "outside the range"),
        ("-3", "negative"),
        ("", "needs a value"),
    ],
)
def test_bad_input_shows_a_message_and_changes_nothing(view, qtbot, typed, words):
    model = view.model
    assert model.setData(model.index_of("cat", "body_weight_kg"), "4.5")  # a file to protect
    before = overrides.overrides_file().read_bytes()
    index = model.index_of("dog", "body_weight_kg")
    shown = model.data(index)
    with qtbot.assertNotEmitted(view.tableChanged):
        assert model.setData(index, typed) is False
    assert words in view.message.text()
    assert view.message.text().startswith("⚠ Not saved")
    assert overrides.overrides_file().read_bytes() == before
    assert model.data(index) == shown
    assert view.undo_stack.count() == 1


def test_a_failing_undo_is_reported_not_raised(view):
    model = view.model
    assert model.setData(model.index_of("dog", "bolus_ml_per_kg"), "18")
    with overrides.overrides_file().open("a", encoding="utf-8", newline="") as handle:
        handle.write(
            "cat,body_weight_kg,4,,,kg,,memory,typed,by,hand\n"
        )  # a row that cannot be read
    before = overrides.overrides_file().read_bytes()
    view.undo_action.trigger()
    assert view.message.text().startswith("⚠ Undo failed, nothing changed")
    assert "wrong number of fields" in view.message.text()
    assert overrides.overrides_file().read_bytes() == before


def test_filter_by_text_and_by_group(view):
    table = load_table()
    view.filter_edit.setText("gerbil")
    assert _proxy_ids(view) == ["Mongolian gerbil"]
    view.filter_edit.setText("MERIONES")  # scientific name, any case
    assert _proxy_species(view) == ["mongolian_gerbil"]
    view.filter_edit.clear()
    assert view.proxy.rowCount() == len(table.species_ids())

    view.group_combo.setCurrentIndex(view.group_combo.findText("rodent"))
    rodents = [s for s in table.species_ids() if table.species(s).taxon_group == "rodent"]
    assert _proxy_species(view) == rodents
    view.filter_edit.setText("rat")  # ids, names and scientific names (Mesocricetus auratus)
    assert _proxy_species(view) == [s.id for s in table.search("rat") if s.taxon_group == "rodent"]
    assert {"rat", "kangaroo_rat", "fat_sand_rat"} <= set(_proxy_species(view))
    assert "mouse" not in _proxy_species(view)
    view.group_combo.setCurrentIndex(view.group_combo.findText("non-passerine bird"))
    assert _proxy_species(view) == []
    view.group_combo.setCurrentIndex(view.group_combo.findText(view.ALL_GROUPS))
    view.filter_edit.clear()
    assert view.proxy.rowCount() == len(table.species_ids())


def test_sorting_a_value_column_sorts_by_number_with_missing_values_last(view):
    table = load_table()
    column = view.model.index_of("dog", "max_urine_osmolality_mosm_per_kg").column()
    view.table_view.sortByColumn(column, Qt.SortOrder.AscendingOrder)
    ids = _proxy_species(view)
    values = [table.get(s, "max_urine_osmolality_mosm_per_kg") for s in ids]
    numbers = [v.value for v in values if v is not None]
    assert numbers == sorted(numbers) and len(numbers) > 3
    first_missing = next(i for i, v in enumerate(values) if v is None)
    assert all(v is None for v in values[first_missing:])


def test_export_writes_the_effective_table(view, tmp_path):
    assert view.model.setData(view.model.index_of("jerboa", "blood_volume_ml_per_kg"), "66.6")
    path = tmp_path / "table.csv"
    count = view.export_to(path)
    with path.open(newline="", encoding="utf-8") as handle:
        rows = list(csv.DictReader(handle))
    table = load_table()
    expected = [
        (v.species_id, v.parameter, overrides.stored_text(v.value), v.origin, v.basis)
        for v in table
    ]
    got = [(r["species_id"], r["parameter"], r["value"], r["origin"], r["basis"]) for r in rows]
    assert got == expected
    assert count == len(rows)
    assert ("jerboa", "blood_volume_ml_per_kg", "66.6", "override", "memory") in got
    assert f"Exported {count} values" in view.message.text()
    assert view.export_to(tmp_path / "missing" / "table.csv") == 0
    assert view.message.text().startswith("⚠ Not exported")


def test_keyboard_f2_edits_and_delete_resets(view, qtbot):
    view.show()
    qtbot.waitExposed(view)
    table_view = view.table_view
    source = view.model.index_of("chinchilla", "bolus_ml_per_kg")
    table_view.setCurrentIndex(view.proxy.mapFromSource(source))
    table_view.setFocus()
    qtbot.waitUntil(table_view.hasFocus)
    qtbot.keyClick(table_view, Qt.Key.Key_F2)
    editor = table_view.focusWidget()
    assert isinstance(editor, QLineEdit)
    editor.selectAll()
    qtbot.keyClicks(editor, "7.5")
    with qtbot.waitSignal(view.tableChanged):
        qtbot.keyClick(editor, Qt.Key.Key_Return)
    assert overrides.get_override(species_id="chinchilla", parameter="bolus_ml_per_kg").value == 7.5
    qtbot.waitUntil(table_view.hasFocus)
    table_view.selectionModel().select(
        view.proxy.mapFromSource(source), QItemSelectionModel.SelectionFlag.ClearAndSelect
    )
    with qtbot.waitSignal(view.tableChanged):
        qtbot.keyClick(table_view, Qt.Key.Key_Delete)
    assert overrides.read_overrides() == []


def test_flag_and_method_cells_edit_with_a_drop_down(view, qtbot):
    view.show()
    qtbot.waitExposed(view)
    source = view.model.index_of("cat", "usg_interpretable")
    view.table_view.setCurrentIndex(view.proxy.mapFromSource(source))
    view.table_view.edit(view.proxy.mapFromSource(source))
    editor = view.table_view.focusWidget()
    assert isinstance(editor, QComboBox)
    assert [editor.itemText(i) for i in range(editor.count())] == ["yes", "no"]
    assert editor.currentText() == "yes"


def test_every_control_is_named_and_explained(view):
    controls = view.findChildren(QAbstractButton) + view.findChildren(QLineEdit)
    controls += view.findChildren(QComboBox) + view.findChildren(QTableView)
    assert len(controls) >= 7
    for control in controls:
        assert control.accessibleName(), control
        if not isinstance(control, QTableView):
            assert control.toolTip(), control.accessibleName()
    for action in (view.undo_action, view.redo_action, view.reset_action, view.export_action):
        assert action.toolTip()
    assert "Delete" in view.reset_action.toolTip()
    legend = view.findChild(QLabel, "species_legend").text()
    for marker in (MARKER_MEMORY, MARKER_DERIVED, MARKER_OVERRIDE):
        assert f"<b>{marker}</b>" in legend
    assert "recalled from memory — unverified" in legend


def test_render_to_png_is_readable(view):
    assert view.model.setData(view.model.index_of("dog", "body_weight_kg"), "25")
    view.resize(1200, 700)
    view.show()
    view.table_view.resizeColumnsToContents()
    renders = ROOT / "renders"
    renders.mkdir(exist_ok=True)
    picture = view.grab()
    assert picture.save(str(renders / "species_view.png"))
    image = picture.toImage()
    colours = {image.pixel(x, y) for x in range(0, image.width(), 9)
               for y in range(0, image.height(), 9)}  # fmt: skip
    assert len(colours) > 4, "render is blank"
    # nothing cut off: every button shows its whole text, every header its longest line
    for button in view.findChildren(QAbstractButton):
        if button.isVisible():
            assert button.width() >= button.sizeHint().width(), button.text()
    header = view.table_view.horizontalHeader()
    metrics = QFontMetrics(header.font())
    for column in range(view.model.columnCount()):
        text = view.model.headerData(column, Qt.Orientation.Horizontal)
        widest = max(metrics.horizontalAdvance(line) for line in text.split("\n"))
        assert header.sectionSize(column) >= widest, text
