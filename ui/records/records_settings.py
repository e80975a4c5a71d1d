"""Records settings: where the records are kept (this computer's file or a clinic's
PostgreSQL server), this workstation's name and the clinician's initials.

What is kept and how is the core's (:mod:`vetfluid.records.location`): the address goes
into the settings file without a password; a password typed here goes into the owner-only
``records.pgpass``; an address with a password, or one that turns TLS off, is refused in
words and nothing is written.
"""

from __future__ import annotations

from os import environ

from PySide6.QtWidgets import (
    QDialog,
    QDialogButtonBox,
    QFormLayout,
    QLabel,
    QLineEdit,
    QMessageBox,
    QWidget,
)

from vetfluid.common.errors import InputError, VetfluidError
from vetfluid.records.location import (
    URL_VARIABLE,
    RecordsSettings,
    load_settings,
    password_spelling_problem,
    save_settings,
    server_address,
    store_password,
)


class RecordsSettingsDialog(QDialog):
    """The records setting, this workstation's name and the clinician's initials."""

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.setWindowTitle("vetfluid — records settings")
        try:
            kept = load_settings()
        except InputError as exc:  # unreadable: said, and written afresh on saving
            kept = RecordsSettings()
            QMessageBox.warning(self, "vetfluid", exc.one_line())
        form = QFormLayout(self)
        self.url = QLineEdit(kept.url)
        self.url.setAccessibleName("Records server")
        self.url.setPlaceholderText("empty: the records file on this computer")
        self.url.setToolTip(
            "A clinic's PostgreSQL server shared by its workstations, written as "
            "postgresql://user@host:5432/database (no password in it). Empty: the records "
            "file in this computer's data folder."
        )
        self.password = QLineEdit()
        self.password.setAccessibleName("Server password")
        self.password.setEchoMode(QLineEdit.EchoMode.Password)
        self.password.setPlaceholderText("unchanged")
        self.password.setToolTip("Kept in a file only you can read (records.pgpass), never "
                                 "in the settings")  # fmt: skip
        self.workstation = QLineEdit(kept.workstation)
        self.workstation.setAccessibleName("Workstation name")
        self.workstation.setPlaceholderText("this computer's network name")
        self.initials = QLineEdit(kept.initials)
        self.initials.setAccessibleName("Your initials")
        self.initials.setMaxLength(6)
        # every hint whole, and room for a server address as a clinic writes one
        example = "postgresql://vetfluid@records.clinic.example:5432/vetfluid"
        for edit, widest in ((self.url, example), (self.password, None),
                             (self.workstation, None)):  # fmt: skip
            text = widest or edit.placeholderText()
            edit.setMinimumWidth(edit.fontMetrics().horizontalAdvance(text) + 24)
        form.addRow("Records &server", self.url)
        form.addRow("Server &password", self.password)
        form.addRow("&Workstation", self.workstation)
        form.addRow("Your &initials", self.initials)
        note = "Saved versions carry your initials and this workstation's name."
        if environ.get(URL_VARIABLE) is not None:
            note += f" {URL_VARIABLE} is set and chooses the records instead of this setting."
        else:
            note += (
                " A change of records applies at once: what you are working on is kept first, "
                "and records that cannot be opened leave the present ones in use."
            )
        hint = QLabel(note)
        hint.setWordWrap(True)
        form.addRow(hint)
        buttons = QDialogButtonBox(
            QDialogButtonBox.StandardButton.Save | QDialogButtonBox.StandardButton.Cancel
        )
        buttons.accepted.connect(self.accept)
        buttons.rejected.connect(self.reject)
        form.addRow(buttons)

    def accept(self) -> None:
        """Keep the settings (and the password, owner-only); a refused address says why and
        the dialog stays open."""
        settings = RecordsSettings(
            url=self.url.text().strip(),
            workstation=self.workstation.text().strip(),
            initials=self.initials.text().strip(),
        )
        try:
            if self.password.text():
                if not settings.url:
                    raise InputError("a password needs a server address", field="password")
                store_password(server_address(settings.url), self.password.text())
            save_settings(settings)
            # a password kept for another spelling of the host: said now, not at next start
            spelling = (password_spelling_problem(server_address(settings.url))
                        if settings.url and not self.password.text() else None)  # fmt: skip
        except VetfluidError as exc:  # refused, or the file could not be written
            QMessageBox.warning(self, "vetfluid", exc.one_line())
            return
        if spelling:
            QMessageBox.warning(self, "vetfluid", f"The settings are saved, but {spelling}.")
        self.password.clear()
        super().accept()
