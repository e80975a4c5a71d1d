"""The weight-band chart for a species (numbers from ``vetfluid/chart.py``), with CSV export."""

from __future__ import annotations

from pathlib import Path

from PySide6.QtWidgets import (
    QAbstractItemView,
    QComboBox,
    QDialog,
    QFileDialog,
    QHBoxLayout,
    QHeaderView,
    QLabel,
    QPushButton,
    QTableView,
    QVBoxLayout,
    QWidget,
)

from ui.rows_model import Cell, RowsModel
from vetfluid.chart import Chart, chart
from vetfluid.delivery import STANDARD_DROP_FACTORS
from vetfluid.export import csv_text
from vetfluid.formatting import format_quantity as q
from vetfluid.species import SpeciesTable

HEADERS = ("Weight", "Maintenance a day", "Maintenance an hour", "Deficit per 5 %", "Bolus", "Drip")
UNITS = ("kg", "mL", "mL/h", "mL", "mL", "drops/min")


class ChartDialog(QDialog):
    def __init__(self, table: SpeciesTable, species_id: str, parent: QWidget | None = None):
        super().__init__(parent)
        self.table = table
        self.setWindowTitle("vetfluid — weight-band chart")
        layout = QVBoxLayout(self)
        row = QHBoxLayout()
        self.species = QComboBox()
        self.species.setAccessibleName("Species")
        for sid in table.species_ids():
            self.species.addItem(table.species(sid).common_name, sid)
        self.species.setCurrentIndex(max(0, self.species.findData(species_id)))
        self.drop_factor = QComboBox()
        self.drop_factor.setAccessibleName("Drop factor")
        for factor in STANDARD_DROP_FACTORS:
            self.drop_factor.addItem(f"{factor} drops/mL", factor)
        self.drop_factor.setCurrentIndex(self.drop_factor.findData(20))
        export = QPushButton("&Export CSV…")
        export.clicked.connect(self._export)
        for widget in (QLabel("Species"), self.species, QLabel("Drip set"), self.drop_factor):
            row.addWidget(widget)
        row.addStretch(1)
        row.addWidget(export)
        layout.addLayout(row)
        self.model = RowsModel(list(HEADERS))
        view = QTableView()
        view.setModel(self.model)
        view.setAccessibleName("Weight bands")
        view.verticalHeader().setVisible(False)
        view.setEditTriggers(QAbstractItemView.EditTrigger.NoEditTriggers)
        view.horizontalHeader().setSectionResizeMode(QHeaderView.ResizeMode.ResizeToContents)
        view.horizontalHeader().setStretchLastSection(True)
        layout.addWidget(view)
        self.note = QLabel()
        self.note.setWordWrap(True)
        layout.addWidget(self.note)
        self.species.currentIndexChanged.connect(self.refresh)
        self.drop_factor.currentIndexChanged.connect(self.refresh)
        self.resize(760, 460)
        self.refresh()

    def current(self) -> Chart:
        return chart(self.species.currentData(), drop_factor=self.drop_factor.currentData(),
                     table=self.table)  # fmt: skip

    def refresh(self, *_: object) -> None:
        result = self.current()
        self.model.set_rows(
            [
                [Cell("—" if v is None else q(v, unit)) for v, unit in zip(row, UNITS, strict=True)]
                for row in result.rows()
            ]
        )
        weight = self.table.value(result.species_id, "body_weight_kg")
        flag = " (range recalled, unverified)" if weight.unverified else ""
        self.note.setText(
            f"Maintenance by the {result.method} method{flag}; bolus only where a continuous "
            "line is practical; deficit per 5 % = body weight × 50 mL (Davis 2013)."
        )

    def _export(self) -> None:
        name, _ = QFileDialog.getSaveFileName(self, "Export chart", "", "CSV (*.csv)")
        if name:
            self.export_to(Path(name))

    def export_to(self, path: Path) -> None:
        result = self.current()
        path.write_text(csv_text(Chart.COLUMNS, result.rows()), encoding="utf-8")
