"""The weight-band chart for a species (numbers from ``vetfluid/printouts/chart.py``): shown,
printed (the page from ``vetfluid/printouts/chart_sheet.py``) and exported as formula-safe CSV."""

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

from ui.common.rows_model import Cell, RowsModel
from vetfluid.common.cautions import SHORT_CAUTION
from vetfluid.common.csvcells import csv_text
from vetfluid.physiology.delivery import STANDARD_DROP_FACTORS
from vetfluid.printouts.chart import Chart, chart
from vetfluid.printouts.chart_sheet import HEADERS, chart_cells, chart_note, chart_sheet_html
from vetfluid.tables.species import SpeciesTable


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
        printing = QPushButton("&Print…")
        printing.clicked.connect(self._print)
        preview = QPushButton("Print pre&view…")
        preview.clicked.connect(self._preview)
        for widget in (QLabel("Species"), self.species, QLabel("Drip set"), self.drop_factor):
            row.addWidget(widget)
        row.addStretch(1)
        for button in (preview, printing, export):
            row.addWidget(button)
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
        caution = QLabel(SHORT_CAUTION)
        caution.setWordWrap(True)
        layout.addWidget(caution)
        self.species.currentIndexChanged.connect(self.refresh)
        self.drop_factor.currentIndexChanged.connect(self.refresh)
        self.resize(760, 460)
        self.refresh()

    def current(self) -> Chart:
        return chart(self.species.currentData(), drop_factor=self.drop_factor.currentData(),
                     table=self.table)  # fmt: skip

    def refresh(self, *_: object) -> None:
        result = self.current()
        self.model.set_rows([[Cell(text) for text in row] for row in chart_cells(result)])
        self.note.setText(chart_note(result))

    def _print(self) -> None:
        from ui.printouts.printing import choose_printer_and_print

        choose_printer_and_print(self, self.print_to)

    def _preview(self) -> None:
        from ui.printouts.printing import show_print_preview

        show_print_preview(self, self.print_to)

    def print_to(self, printer) -> int:  # noqa: ANN001 — QPrinter
        """Print the chart as shown; returns the number of pages."""
        from ui.printouts.printing import print_sheet

        return print_sheet(chart_sheet_html(self.current()), printer)

    def _export(self) -> None:
        name, _ = QFileDialog.getSaveFileName(self, "Export chart", "", "CSV (*.csv)")
        if name:
            self.export_to(Path(name))

    def export_to(self, path: Path) -> None:
        result = self.current()
        path.write_text(csv_text(Chart.COLUMNS, result.rows()), encoding="utf-8")
