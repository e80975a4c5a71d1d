"""Patients in the records database: find one, see its plan versions, open one.

The records themselves (SQLite or a clinic's PostgreSQL server, immutable versions) are in
``vetfluid/records/store.py``; this dialog only lists and chooses.
"""

from __future__ import annotations

from PySide6.QtWidgets import (
    QDialog,
    QDialogButtonBox,
    QFormLayout,
    QHeaderView,
    QLabel,
    QLineEdit,
    QListWidget,
    QListWidgetItem,
    QMessageBox,
    QPushButton,
    QTableView,
    QVBoxLayout,
    QWidget,
)

from ui.common.icons import SEVERITY_WORDS
from ui.common.rows_model import Cell, RowsModel
from vetfluid.common.errors import VetfluidError
from vetfluid.common.formatting import format_quantity as q
from vetfluid.printouts.sheet import patient_weight_text, route_and_device_text
from vetfluid.records.store import Records, VersionRow, compare_versions
from vetfluid.tables.species import load_table


def species_words(species_id: str) -> str:
    """A species as people name it ("Bearded dragon"); its id only when this species table
    no longer has it (a record saved with a clinic's own species, since removed)."""
    species = load_table().species_by_id.get(species_id)
    return species.common_name if species is not None else species_id


def _findings_words(plan: dict) -> str:
    """A saved plan's findings by what they say, worst first (their codes are for files)."""
    order = {"hard": 0, "soft": 1, "info": 2}
    found = sorted(plan.get("findings") or (), key=lambda f: order.get(f.get("severity"), 3))
    return (
        "\n".join(
            f"{SEVERITY_WORDS.get(f.get('severity'), '')}: {f.get('message', '')}" for f in found
        )
        or "—"
    )


def _in_words(row: tuple[str, str, str, bool], first: dict, second: dict) -> tuple:
    """The comparison rows that carry ids or codes, in words. Findings differ when their
    words do: a warning with the same code may give another rate."""
    what, a, b, differs = row
    if what == "Findings":
        left, right = _findings_words(first), _findings_words(second)
        return what, left, right, differs or left != right
    if what == "Route":
        return what, route_and_device_text(first), route_and_device_text(second), differs
    if what == "Weight":  # in the species' own unit, every figure: 380 g and 380.4 g differ
        left, right = patient_weight_text(first), patient_weight_text(second)
        return what, left, right, differs or left != right
    return row


class OpenPatientDialog(QDialog):
    """Search recent patients by name, species or client reference; pick a version."""

    def __init__(self, records: Records, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.records = records
        self.setWindowTitle("vetfluid — open a patient")
        layout = QVBoxLayout(self)
        self.search = QLineEdit()
        self.search.setPlaceholderText("name, species or client reference")
        self.search.setAccessibleName("Find a patient")
        self.search.textChanged.connect(self._find)
        layout.addWidget(self.search)
        self.patients = QListWidget()
        self.patients.setAccessibleName("Patients")
        self.patients.currentItemChanged.connect(self._show_versions)
        layout.addWidget(self.patients, 2)
        layout.addWidget(QLabel("Plan versions (never overwritten):"))
        self.versions = QListWidget()
        self.versions.setAccessibleName("Plan versions")
        self.versions.itemDoubleClicked.connect(self.accept)
        self.versions.setSelectionMode(QListWidget.SelectionMode.ExtendedSelection)
        self.versions.setToolTip("Select two versions (Ctrl+click) and press Compare")
        layout.addWidget(self.versions, 1)
        self.compare_button = QPushButton("&Compare two versions")
        self.compare_button.clicked.connect(self.compare)
        layout.addWidget(self.compare_button)
        buttons = QDialogButtonBox(
            QDialogButtonBox.StandardButton.Open | QDialogButtonBox.StandardButton.Cancel
        )
        buttons.accepted.connect(self.accept)
        buttons.rejected.connect(self.reject)
        layout.addWidget(buttons)
        self.resize(520, 520)
        self._find("")

    def _find(self, text: str) -> None:
        self.patients.clear()
        for patient in self.records.find_patients(text):
            label = f"{patient.name} — {species_words(patient.species_id)}"
            if patient.client_ref:
                label += f" · {patient.client_ref}"
            item = QListWidgetItem(label)
            item.setData(256, patient.id)  # Qt.UserRole
            self.patients.addItem(item)
        if self.patients.count():
            self.patients.setCurrentRow(0)

    def _show_versions(self, item: QListWidgetItem | None, _previous=None) -> None:  # noqa: ANN001
        self.versions.clear()
        if item is None:
            return
        for version in reversed(self.records.versions(item.data(256))):
            plan = version.plan
            where = f" at {version.workstation}" if version.workstation else ""
            text = (
                f"v{version.version} · {version.created_at} · {version.author or 'no initials'}"
                f"{where} · {patient_weight_text(plan)} · {plan['dehydration_percent']:g} % · "
                f"first 24 h {q(plan['total_ml_first_24h'], 'mL')}"
            )
            entry = QListWidgetItem(text)
            entry.setData(256, version.version)
            self.versions.addItem(entry)
        if self.versions.count():
            self.versions.setCurrentRow(0)

    def compare(self) -> CompareDialog | None:
        """Show the two selected versions side by side (differences marked in words)."""
        patient = self.patients.currentItem()
        picked = sorted(item.data(256) for item in self.versions.selectedItems())
        if patient is None or len(picked) != 2:
            QMessageBox.information(self, "vetfluid", "Select exactly two versions to compare.")
            return None
        by_number = {v.version: v for v in self.records.versions(patient.data(256))}
        try:
            dialog = CompareDialog(by_number[picked[0]], by_number[picked[1]], self)
        except VetfluidError as exc:  # a stored plan this version of vetfluid cannot read
            QMessageBox.warning(self, "vetfluid", f"These versions cannot be compared: {exc}")
            return None
        dialog.show()
        return dialog

    def chosen(self) -> tuple[int, int] | None:
        """(patient id, version number) of the selection, or None."""
        patient, version = self.patients.currentItem(), self.versions.currentItem()
        if patient is None or version is None:
            return None
        return patient.data(256), version.data(256)


class NewPatientDialog(QDialog):
    """Name, client reference and the author's initials for a first save."""

    def __init__(self, species_id: str, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.setWindowTitle("vetfluid — save as a new patient")
        form = QFormLayout(self)
        self.name = QLineEdit()
        self.name.setAccessibleName("Patient name")
        self.client = QLineEdit()
        self.client.setAccessibleName("Client reference")
        self.initials = QLineEdit()
        self.initials.setAccessibleName("Your initials")
        self.initials.setMaxLength(6)
        form.addRow("Species", QLabel(species_words(species_id)))
        form.addRow("Patient &name", self.name)
        form.addRow("&Client reference", self.client)
        form.addRow("Your &initials", self.initials)
        buttons = QDialogButtonBox(
            QDialogButtonBox.StandardButton.Save | QDialogButtonBox.StandardButton.Cancel
        )
        buttons.accepted.connect(self.accept)
        buttons.rejected.connect(self.reject)
        form.addRow(buttons)


class CompareDialog(QDialog):
    def __init__(self, first: VersionRow, second: VersionRow, parent: QWidget | None = None):
        super().__init__(parent)
        self.setWindowTitle(f"vetfluid — version {first.version} and version {second.version}")
        layout = QVBoxLayout(self)
        self.model = RowsModel(["", "", f"Version {first.version}", f"Version {second.version}"])
        rows = [_in_words(r, first.plan, second.plan)
                for r in compare_versions(first.plan, second.plan)]  # fmt: skip
        self.model.set_rows(
            [[Cell(what), Cell("≠ differs" if differs else "same"), Cell(a), Cell(b)]
             for what, a, b, differs in rows]
        )  # fmt: skip
        view = QTableView()
        view.setModel(self.model)
        view.setAccessibleName("Version comparison")
        view.verticalHeader().setVisible(False)
        view.setWordWrap(True)
        header = view.horizontalHeader()
        for column, mode in enumerate((QHeaderView.ResizeMode.ResizeToContents,) * 2
                                      + (QHeaderView.ResizeMode.Stretch,) * 2):  # fmt: skip
            header.setSectionResizeMode(column, mode)
        view.resizeRowsToContents()
        layout.addWidget(view)
        self.view = view
        self.resize(900, 460)
