"""Checks: every finding with its severity (icon and word), what to do, and for warnings
a reason field that acknowledges it. A hard limit blocks marking the plan ready."""

from __future__ import annotations

from PySide6.QtCore import QAbstractTableModel, QModelIndex, QPersistentModelIndex, Qt
from PySide6.QtWidgets import (
    QAbstractItemView,
    QHBoxLayout,
    QHeaderView,
    QLabel,
    QPushButton,
    QTableView,
    QVBoxLayout,
    QWidget,
)

from ui.common.icons import SEVERITY_ICONS, SEVERITY_WORDS, icon
from ui.planning.session import PlanSession
from ui.planning.shown_plan import ShownPlan
from vetfluid.common.findings import Finding
from vetfluid.tables.species import SpeciesTable

COLUMNS = ("Severity", "Finding", "What to do", "Reason (warnings)")
REASON_COLUMN = 3


class FindingsModel(QAbstractTableModel):
    """Findings of the current plan; the reason column edits the session's acknowledgements."""

    def __init__(self, session: PlanSession, parent=None) -> None:
        super().__init__(parent)
        self.session = session
        self._findings: list[Finding] = []

    def show_plan(self, plan) -> None:  # noqa: ANN001 — Plan | None
        self.beginResetModel()
        order = {"hard": 0, "soft": 1, "info": 2}
        self._findings = sorted(plan.findings, key=lambda f: order[f.severity]) if plan else []
        self.endResetModel()

    def finding(self, row: int) -> Finding:
        return self._findings[row]

    def rowCount(self, parent: QModelIndex | QPersistentModelIndex = QModelIndex()) -> int:  # noqa: N802
        return 0 if parent.isValid() else len(self._findings)

    def columnCount(self, parent: QModelIndex | QPersistentModelIndex = QModelIndex()) -> int:  # noqa: N802
        return 0 if parent.isValid() else len(COLUMNS)

    def headerData(self, section, orientation, role=Qt.ItemDataRole.DisplayRole):  # noqa: N802
        if orientation == Qt.Orientation.Horizontal and role == Qt.ItemDataRole.DisplayRole:
            return COLUMNS[section]
        return None

    def flags(self, index):
        base = super().flags(index)
        if index.column() == REASON_COLUMN and self._findings[index.row()].severity == "soft":
            return base | Qt.ItemFlag.ItemIsEditable
        return base

    def data(self, index, role=Qt.ItemDataRole.DisplayRole):
        if not index.isValid():
            return None
        f = self._findings[index.row()]
        column = index.column()
        if role in (Qt.ItemDataRole.DisplayRole, Qt.ItemDataRole.EditRole):
            if column == 0:
                return SEVERITY_WORDS[f.severity]
            if column == 1:
                return f.message  # the code is for files and logs, never for reading
            if column == 2:
                return f.action
            if f.severity == "soft":
                reason = self.session.acknowledged.get(f.code, "")
                lapsed, _ = self.session.lapsed.get(f.code, ("", ""))
                if role == Qt.ItemDataRole.EditRole:
                    # never the lapsed reason: leaving the editor would give it again
                    # unread (it is shown beside, and in full in the tooltip)
                    return reason
                if reason:
                    return f"✓ {reason}"
                if lapsed:
                    return f"⚠ the warning changed; your reason “{lapsed}” no longer covers it"
                return "type why this is acceptable…"
            return "blocks the plan" if f.severity == "hard" else ""
        if role == Qt.ItemDataRole.DecorationRole and column == 0:
            return icon(SEVERITY_ICONS[f.severity])
        if role == Qt.ItemDataRole.ToolTipRole:
            source = citation(self.session.table, f.source_id) if f.source_id else ""
            source = f"\nSource: {source}" if source else ""
            text = f"{SEVERITY_WORDS[f.severity]}: {f.message}\n{f.action}{source}"
            if f.code in self.session.lapsed:
                reason, given_for = self.session.lapsed[f.code]
                text += f"\n\nYour reason “{reason}” was given when it read: {given_for}"
            return text
        return None

    def setData(self, index, value, role=Qt.ItemDataRole.EditRole) -> bool:  # noqa: N802
        if index.column() != REASON_COLUMN or role != Qt.ItemDataRole.EditRole:
            return False
        finding = self._findings[index.row()]
        if finding.severity != "soft":
            return False
        self.session.acknowledge(finding.code, str(value))
        self.dataChanged.emit(index, index)
        return True


class FindingsView(QWidget):
    def __init__(self, session: PlanSession, parent: QWidget | None = None):
        super().__init__(parent)
        self.session = session
        self.setAccessibleName("Checks")
        layout = QVBoxLayout(self)
        self.model = FindingsModel(session, self)
        self.shown = ShownPlan(self, session, self.model.show_plan)
        self.table = QTableView()
        self.table.setModel(self.model)
        self.table.setAccessibleName("Findings")
        self.table.setWordWrap(True)
        self.table.verticalHeader().setVisible(False)
        self.table.setSelectionBehavior(QAbstractItemView.SelectionBehavior.SelectRows)
        self.table.setEditTriggers(
            QAbstractItemView.EditTrigger.DoubleClicked
            | QAbstractItemView.EditTrigger.EditKeyPressed
            | QAbstractItemView.EditTrigger.AnyKeyPressed
        )
        header = self.table.horizontalHeader()
        header.setSectionResizeMode(0, QHeaderView.ResizeMode.ResizeToContents)
        header.setSectionResizeMode(1, QHeaderView.ResizeMode.Stretch)
        header.setSectionResizeMode(2, QHeaderView.ResizeMode.Stretch)
        header.setSectionResizeMode(3, QHeaderView.ResizeMode.Interactive)
        header.resizeSection(3, 220)
        self.table.setToolTip(
            "Double-click or press F2 in the Reason column to acknowledge a warning"
        )
        layout.addWidget(self.table, 1)

        row = QHBoxLayout()
        self.status = QLabel()
        self.status.setWordWrap(True)
        self.status.setAccessibleName("Plan readiness")
        self.ready_button = QPushButton("Mark plan &ready")
        self.ready_button.setToolTip(
            "Possible when no hard limit is hit and every warning has a reason"
        )
        self.ready_button.clicked.connect(self._mark_ready)
        row.addWidget(self.status, 1)
        row.addWidget(self.ready_button)
        layout.addLayout(row)
        session.readinessChanged.connect(self._show_readiness)
        self.model.modelReset.connect(self._fit_rows)
        self._show_readiness()

    def _fit_rows(self) -> None:
        # measuring wrapped rows is costly: only for a table someone can see
        if self.isVisible():
            self.table.resizeRowsToContents()

    def showEvent(self, event) -> None:  # noqa: N802,ANN001 (Qt override)
        self.table.resizeRowsToContents()
        super().showEvent(event)

    def _mark_ready(self) -> None:
        # a slot must not hand a value back to Qt: session.mark_ready returns a bool
        self.session.mark_ready()

    def _show_readiness(self) -> None:
        blockers = self.session.blockers()
        plan = self.session.plan
        self.ready_button.setEnabled(plan is not None and not blockers and not self.session.ready)
        if plan is None:
            text = "No plan yet."
        elif self.session.ready:
            text = "✓ Plan marked ready. Verify every volume and rate before giving it."
        elif blockers:
            hard = [f for f in blockers if f.severity == "hard"]
            soft = [f for f in blockers if f.severity == "soft"]
            # each by its title (the message's first sentence; the table gives the rest),
            # one to a line: a title may hold a semicolon of its own
            parts = []
            if hard:
                parts.append(f"✖ {len(hard)} hard limit(s) block this plan:")
                parts += [f"   • {f.title}" for f in hard]
            if soft:
                parts.append(f"⚠ {len(soft)} warning(s) need a reason:")
                parts += [f"   • {f.title}" for f in soft]
            text = "\n".join(parts)
        else:
            text = "Nothing blocks this plan."
        self.status.setText(text)


def citation(table: SpeciesTable, source_id: str) -> str:
    """The publication a source id stands for, as people cite it."""
    source = table.sources.get(source_id)
    return source.citation if source is not None else "not in the list of sources"
