"""A read-only table model over rows of text, each cell with an optional tooltip and icon."""

from __future__ import annotations

from dataclasses import dataclass, field

from PySide6.QtCore import QAbstractTableModel, QModelIndex, QPersistentModelIndex, Qt
from PySide6.QtGui import QIcon

Index = QModelIndex | QPersistentModelIndex


@dataclass(frozen=True)
class Cell:
    text: str
    tooltip: str = ""
    icon: QIcon | None = field(default=None, compare=False)


class RowsModel(QAbstractTableModel):
    def __init__(self, headers: list[str], parent=None) -> None:
        super().__init__(parent)
        self._headers = headers
        self._rows: list[list[Cell]] = []

    def set_rows(self, rows: list[list[Cell]]) -> None:
        self.beginResetModel()
        self._rows = rows
        self.endResetModel()

    def rowCount(self, parent: Index = QModelIndex()) -> int:  # noqa: N802 (Qt override)
        return 0 if parent.isValid() else len(self._rows)

    def columnCount(self, parent: Index = QModelIndex()) -> int:  # noqa: N802
        return 0 if parent.isValid() else len(self._headers)

    def data(self, index: Index, role: int = Qt.ItemDataRole.DisplayRole):
        if not index.isValid() or index.row() >= len(self._rows):
            return None
        cell = self._rows[index.row()][index.column()]
        if role in (Qt.ItemDataRole.DisplayRole, Qt.ItemDataRole.AccessibleTextRole):
            return cell.text
        if role == Qt.ItemDataRole.ToolTipRole:
            return cell.tooltip or None
        if role == Qt.ItemDataRole.DecorationRole:
            return cell.icon
        return None

    def headerData(
        self, section: int, orientation: Qt.Orientation, role: int = Qt.ItemDataRole.DisplayRole
    ):  # noqa: N802,E501
        if role == Qt.ItemDataRole.DisplayRole and orientation == Qt.Orientation.Horizontal:
            return self._headers[section]
        return None

    def text(self, row: int, column: int) -> str:
        return self._rows[row][column].text
