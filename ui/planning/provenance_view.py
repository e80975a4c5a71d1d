"""Values used: every species value the plan rests on, with its basis and source.

Values recalled from memory carry a marker icon *and* the words "memory —
unverified"; the tooltip gives the citation or says the value is unverified.
"""

from __future__ import annotations

from PySide6.QtCore import Qt
from PySide6.QtWidgets import (
    QAbstractItemView,
    QHeaderView,
    QLabel,
    QTableView,
    QVBoxLayout,
    QWidget,
)

from ui.common.icons import BASIS_ICONS, BASIS_WORDS, icon
from ui.common.rows_model import Cell, RowsModel
from ui.planning.session import PlanSession
from ui.planning.shown_plan import ShownPlan
from vetfluid.common.formatting import table_value_text
from vetfluid.tables.species import SpeciesTable, SpeciesValue


def basis_key(value: SpeciesValue) -> str:
    """The marker to show: a clinic override outranks the basis of what it replaced."""
    return "override" if value.origin == "override" else value.basis


def shown_value(value: SpeciesValue) -> str:
    if isinstance(value.value, bool):
        return "yes" if value.value else "no"
    if isinstance(value.value, float):

        def shown(number: float) -> str:
            return table_value_text(number, basis=value.basis)

        text = shown(value.value)
        if value.low is not None and value.high is not None:
            text += f" ({shown(value.low)}–{shown(value.high)})"
        return text
    return str(value.value)


def _amount(value: SpeciesValue) -> str:
    """The value with its unit (a flag alone: ``yes``, never ``yes yes/no``)."""
    if isinstance(value.value, bool) or not value.unit:
        return shown_value(value)
    return f"{shown_value(value)} {value.unit}"


def group_words(table: SpeciesTable, group_id: str) -> str:
    """A taxon group as people name it: ``the lizards and snakes group`` (its id, e.g.
    ``group_squamate``, is for the data files only)."""
    group = table.species_by_id.get(group_id)
    return f"the {group.common_name.lower()} group" if group is not None else "a taxon group"


def origin_words(value: SpeciesValue, table: SpeciesTable) -> str:
    """Where the value comes from, in words: shipped, clinic override or the group it is
    inherited from."""
    if value.origin == "inherited":
        return f"inherited from {group_words(table, value.defined_on)}"
    return {"shipped": "shipped with vetfluid", "override": "clinic override"}[value.origin]


def origin_short(value: SpeciesValue, table: SpeciesTable) -> str:
    """The Origin column: ``shipped``, ``clinic override`` or ``from Lizards and snakes``
    (the tooltip says it in full)."""
    if value.origin == "inherited":
        group = table.species_by_id.get(value.defined_on)
        return f"from {group.common_name}" if group is not None else "from a taxon group"
    return {"shipped": "shipped", "override": "clinic override"}[value.origin]


def provenance_tooltip(value: SpeciesValue, table: SpeciesTable) -> str:
    origin = origin_words(value, table)
    if value.source_id and value.source_id in table.sources:
        source = table.sources[value.source_id].citation
    else:
        source = "no source on record"
    lines = [
        f"{value.label or value.parameter}: {shown_value(value)} {value.unit}",
        f"Origin: {origin}",
    ]
    if value.unverified:
        lines.append("Recalled from memory — unverified, not checked against a publication.")
        if value.source_id:
            lines.append(f"Believed to come from: {source}")
    else:
        lines.append(f"Source: {source}")
    if value.note:
        lines.append(value.note)
    return "\n".join(lines)


class ProvenanceView(QWidget):
    def __init__(self, session: PlanSession, parent: QWidget | None = None):
        super().__init__(parent)
        self.session = session
        self.setAccessibleName("Values used")
        layout = QVBoxLayout(self)
        self.summary = QLabel()
        self.summary.setWordWrap(True)
        layout.addWidget(self.summary)
        # the amount carries its unit: one short column less leaves the names their room
        self.model = RowsModel(["Value", "Amount", "Basis", "Origin", "Source"])
        self.table = QTableView()
        self.table.setModel(self.model)
        self.table.setAccessibleName("Species values used by the plan")
        self.table.verticalHeader().setVisible(False)
        self.table.setSelectionBehavior(QAbstractItemView.SelectionBehavior.SelectRows)
        self.table.setEditTriggers(QAbstractItemView.EditTrigger.NoEditTriggers)
        header = self.table.horizontalHeader()
        header.setSectionResizeMode(QHeaderView.ResizeMode.ResizeToContents)
        # the value's name takes what room is left and wraps between words, never cut: the
        # short columns (the source last) are always whole; the origin wraps too
        header.setSectionResizeMode(0, QHeaderView.ResizeMode.Stretch)
        header.setSectionResizeMode(3, QHeaderView.ResizeMode.Stretch)
        header.setStretchLastSection(False)
        self.table.setWordWrap(True)
        self.table.setTextElideMode(Qt.TextElideMode.ElideNone)
        layout.addWidget(self.table, 1)
        self.shown = ShownPlan(self, session, self.show_plan)

    def show_plan(self, plan) -> None:  # noqa: ANN001 — Plan | None
        if plan is None:
            self.model.set_rows([])
            self.summary.setText("No plan yet.")
            return
        table = self.session.table
        rows = []
        for value in plan.provenance:
            key = basis_key(value)
            tip = provenance_tooltip(value, table)
            rows.append(
                [
                    Cell(value.label or value.parameter, tip),
                    Cell(_amount(value), tip),
                    Cell(BASIS_WORDS[key], tip, icon(BASIS_ICONS[key])),
                    Cell(origin_short(value, table), tip),
                    Cell(value.source_id or "—", tip),
                ]
            )
        self.model.set_rows(rows)
        self.table.resizeRowsToContents()  # a wrapped name gets its lines
        memory = len(plan.unverified_values)
        self.summary.setText(
            f"This plan uses {len(plan.provenance)} species values; {memory} of them were recalled "
            "from memory and are marked “memory — unverified”. Hover a row for its source."
        )
