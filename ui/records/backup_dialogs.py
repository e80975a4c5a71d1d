"""File ▸ Back up records… and File ▸ Restore records from a backup… (issue 21): the
window's side of :mod:`vetfluid.records.backups`, for the SQLite file on this computer and
for a clinic's PostgreSQL server alike.

Backing up writes a copy while the records stay in use and says where, and how many
patients and versions it holds. Restoring replaces what the records hold, so it asks first,
saying what is replaced by what; the plan on screen is put away as leaving it would (the
usual question when it is not saved); the records as they are are copied into the user
data folder's ``backups/`` first; and the records are opened again afterwards, their draft
offered as at a start. A file that is not a vetfluid backup is refused in words, before
anything changes.
"""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING

from PySide6.QtWidgets import QApplication, QFileDialog, QMessageBox

from vetfluid.records.backups import (
    AUTOMATIC_FOLDER,
    BACKUP_SUFFIX,
    RecordsSummary,
    back_up,
    describe_records,
    describe_records_file,
    restore_records,
    same_file,
    suggested_backup_name,
)
from vetfluid.records.store import DATABASE_NAME, RecordsError

if TYPE_CHECKING:
    from PySide6.QtWidgets import QMainWindow

BACKUP_FILTER = f"vetfluid records backup (*{BACKUP_SUFFIX})"
OPEN_FILTER = f"{BACKUP_FILTER};;All files (*)"
TITLE = "vetfluid — records backup"


def _busy(work):  # noqa: ANN001, ANN202 — a callable, and what it returns
    """Run ``work`` under the wait cursor: a clinic's records take seconds to copy."""
    from PySide6.QtCore import Qt

    QApplication.setOverrideCursor(Qt.CursorShape.WaitCursor)
    try:
        return work()
    finally:
        QApplication.restoreOverrideCursor()


def said(exc: RecordsError) -> str:
    """An error as a message box says it: what is wrong, then, on its own line, what to do."""
    from vetfluid.common.errors import printable

    fix = printable(exc.fix or "")
    return printable(exc.message) + (f".\n\n{fix[:1].upper()}{fix[1:]}." if fix else ".")


# ---- backing up ------------------------------------------------------------------------------
def back_up_records(window: QMainWindow, target: Path | None = None) -> Path | None:
    """Write a backup of the records the window has open to ``target`` (asked with a file
    dialog when None); the path written, or None when nothing was (said why)."""
    window.build_planner()
    records = window.records
    if records is None:
        QMessageBox.warning(
            window, TITLE,
            "The records are not open, so there is nothing to back up now.\n\n"
            f"Why: {window.keeper.work.problem or 'no records file is open'}.\n\n"
            "To bring back records from a backup, use File ▸ Restore records from a backup…",
        )  # fmt: skip
        return None
    if target is None:
        dialog = QFileDialog(window, "Back up records", str(Path.home()), BACKUP_FILTER)
        dialog.setAcceptMode(QFileDialog.AcceptMode.AcceptSave)
        dialog.setDefaultSuffix(BACKUP_SUFFIX.lstrip("."))  # the overwrite question's name
        dialog.selectFile(suggested_backup_name())
        if not (dialog.exec() and dialog.selectedFiles()):
            return None
        target = Path(dialog.selectedFiles()[0])
    window.keeper.autosave()  # what waits for the autosave goes into the records first
    try:
        summary = _busy(lambda: back_up(records, target))
    except RecordsError as exc:
        QMessageBox.warning(window, TITLE, f"The backup was not written.\n\n{said(exc)}")
        return None
    QMessageBox.information(
        window, TITLE,
        f"Backed up {summary.words()} from {records.where} into:\n{target}\n\n"
        "Keep a copy away from this computer (a USB drive, the clinic's file server). "
        "File ▸ Restore records from a backup… brings it back.",
    )  # fmt: skip
    window.statusBar().showMessage(f"Records backed up to {target}")
    return target


# ---- restoring -------------------------------------------------------------------------------
def restore_from_backup(window: QMainWindow, backup: Path | None = None) -> bool:
    """Replace the records with ``backup`` (asked with a file dialog when None), as the
    module says; True when they were replaced."""
    from vetfluid.common.paths import user_data_dir
    from vetfluid.records.work_session import Opening

    window.build_planner()
    if backup is None:
        name, _ = QFileDialog.getOpenFileName(
            window, "Restore records from a backup", str(Path.home()), OPEN_FILTER
        )
        if not name:
            return False
        backup = Path(name)
    here = window.records.path if window.records is not None else None
    if window.records is None:
        # none open: the question can only describe this computer's file, so a server the
        # settings name is never the target (it would replace every workstation's records)
        if _settings_name_a_server():
            QMessageBox.warning(window, TITLE, NOT_OPEN_WORDS.format(
                why=window.keeper.work.problem or "they could not be opened"))  # fmt: skip
            return False
        here = user_data_dir() / DATABASE_NAME
    try:
        if here is not None and same_file(backup, here):  # before any question
            raise RecordsError(
                f"{backup.name} is the records file itself, not a backup of it",
                fix="choose a backup written elsewhere; nothing was restored",
            )
        coming = describe_records_file(backup)
    except RecordsError as exc:
        QMessageBox.warning(window, TITLE, said(exc))
        return False
    if not ask_to_replace(window, backup, coming, user_data_dir() / AUTOMATIC_FOLDER):
        return False
    # the plan on screen is put away first, as leaving it asks (it may be saved or kept as a
    # draft: then it is in the copy made before the restore)
    ours = {window.keeper.work.tag}  # the plans this window may keep as the draft for it
    if not window.keeper.leave_for(Opening(status="Restoring the records…", restoring=True)):
        window.statusBar().showMessage("Nothing was restored.")
        return False
    # the records this window has open, the ones the question described (the setting may
    # name others since: another window changed it, or a switch to them failed)
    open_now = window.records
    path = open_now.path if open_now is not None else here
    server = open_now.server if open_now is not None else None
    ours.add(window.keeper.work.tag)
    if not window.keeper.close():  # asked, and kept: the records stay as they are
        window.statusBar().showMessage("Nothing was restored.")
        return False
    # the records unchanged (a restore that failed): only this window's own draft is
    # offered back, never one another vetfluid window keeps in the same records
    only: frozenset[str] | None = frozenset(ours)
    try:  # whatever happens, the records are opened again: work after it is kept
        try:
            restored = _busy(lambda: restore_records(backup, path=path, server=server))
        except RecordsError as exc:
            QMessageBox.warning(
                window, TITLE,
                f"The records were not restored; they hold what they held.\n\n{said(exc)}",
            )  # fmt: skip
            return False
        only = None  # restored: the draft carried over is offered, as at a start
        QMessageBox.information(window, TITLE, restored_words(backup, restored))
    finally:
        window.keeper.reopen_records(path=path, server=server, only=only)
    window.statusBar().showMessage(f"Records restored from {backup.name}")
    return True


NOT_OPEN_WORDS = (
    "The records the settings name are not open now ({why}), so none are restored: a "
    "restore replaces the records this window has open.\n\nOpen them first (check File ▸ "
    "Records settings… and the server), then restore."
)


def _settings_name_a_server() -> bool:
    """Whether the records setting names a server (an unreadable setting counts: it is not
    known to be this computer's file)."""
    from vetfluid.common.errors import VetfluidError
    from vetfluid.records.location import records_url

    try:
        return bool(records_url())
    except VetfluidError:
        return True


def ask_to_replace(
    window: QMainWindow, backup: Path, coming: RecordsSummary, kept_in: Path
) -> bool:
    """Ask before replacing the records: what is there now, what the backup holds, where
    the records as they are will be kept. Cancel is the default."""
    records = window.records
    if records is not None:
        place = f"on {records.where}" if records.server is not None else f"in {records.where}"
        try:
            now = f"{describe_records(records).words()} ({place})"
        except RecordsError as exc:
            now = f"not counted now ({exc.message}) ({place})"
        server = records.server is not None
    else:
        now = f"they cannot be opened now ({window.keeper.work.problem})"
        server = False
    newest = coming.newest_words()
    everywhere = ", on every workstation that uses this server" if server else ""
    text = (
        f"Replace the records with the backup {backup.name}?\n\n"
        f"In the records now: {now}\n"
        f"In the backup: {coming.words()}"
        f"{f', the newest saved {newest}' if newest else ''}\n\n"
        f"Anything saved after the backup was made will no longer be in the records"
        f"{everywhere}.\n\n"
        f"Before that, the records as they are now are copied into {kept_in}, so nothing "
        "saved is lost: they can be restored from there."
    )
    box = QMessageBox(QMessageBox.Icon.Warning, TITLE, text, parent=window)
    box.addButton(QMessageBox.StandardButton.Yes).setText("Replace the records")
    box.addButton(QMessageBox.StandardButton.Cancel)
    box.setDefaultButton(QMessageBox.StandardButton.Cancel)
    box.setEscapeButton(QMessageBox.StandardButton.Cancel)
    window.restore_question = box  # reachable while open (the picture in the tests)
    return QMessageBox.StandardButton(box.exec()) is QMessageBox.StandardButton.Yes


def restored_words(backup: Path, restored) -> str:  # noqa: ANN001 — backups.Restored
    """What a restore did, and where the records as they were are kept."""
    text = f"Restored {restored.backup.words()} from {backup.name} into {restored.where}.\n\n"
    if restored.kept_at is None:
        return text + "There were no records here before, so nothing was replaced."
    if restored.before is None:
        return (
            text + "The records file could not be opened; it is kept, as it was, in:\n"
            f"{restored.kept_at}"
        )
    return text + (
        f"The records as they were ({restored.before.words()}) are kept in:\n{restored.kept_at}"
    )
