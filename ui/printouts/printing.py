"""Print an HTML sheet page by page: its title (the patient, species, weight and date:
:func:`vetfluid.printouts.sheet.page_line`) at the head of every page, the cautions at the
foot."""

from __future__ import annotations

import sqlite3
from pathlib import Path

from PySide6.QtCore import QRectF, QSizeF, QStandardPaths, Qt
from PySide6.QtGui import QPainter, QTextDocument
from PySide6.QtWidgets import QDialog, QDialogButtonBox, QFormLayout, QLabel, QLineEdit

from vetfluid.common.cautions import SHORT_CAUTION
from vetfluid.common.errors import VetfluidError
from vetfluid.common.paths import owner_only_file

FOOTER_LINES = 2


def print_sheet(html: str, printer, *, mark: str = "") -> int:  # noqa: ANN001 — QPrinter
    """Lay the sheet out on the printer's pages; returns the number of pages printed.
    The sheet's ``<title>`` heads every page (pages get separated; each must say whose it
    is); ``mark`` (a plan with a hard limit: :func:`vetfluid.printouts.sheet.page_mark`) heads
    every page's footer."""
    painter = QPainter()
    if not painter.begin(printer):
        raise OSError("the printer could not be opened")
    try:
        page = QRectF(printer.pageLayout().paintRectPixels(printer.resolution()))
        page.moveTo(0, 0)
        line = painter.fontMetrics().lineSpacing()
        footer_height = line * (FOOTER_LINES + 1)
        document = QTextDocument()
        document.documentLayout().setPaintDevice(printer)
        document.setHtml(html)
        title = document.metaInformation(QTextDocument.MetaInformation.DocumentTitle)
        header_height = line * 2 if title else 0
        body = QSizeF(page.width(), page.height() - header_height - footer_height)
        document.setPageSize(body)
        pages = document.pageCount()
        for number in range(pages):
            if number:
                printer.newPage()
            if title:
                header = QRectF(0, 0, page.width(), line)
                painter.drawText(header, int(Qt.AlignmentFlag.AlignLeft), title)
            painter.save()
            painter.translate(0, header_height - number * body.height())
            document.drawContents(
                painter, QRectF(0, number * body.height(), body.width(), body.height())
            )
            painter.restore()
            footer = QRectF(0, header_height + body.height(), page.width(), footer_height)
            foot = f"{SHORT_CAUTION}.  Page {number + 1} of {pages}"
            painter.drawText(
                footer,
                int(
                    Qt.AlignmentFlag.AlignBottom
                    | Qt.AlignmentFlag.AlignLeft
                    | Qt.TextFlag.TextWordWrap
                ),
                f"✖ {mark}.  {foot}" if mark else foot,
            )
        return pages
    finally:
        painter.end()


def choose_printer_and_print(parent, paint, *, file_path: Path | None = None) -> None:  # noqa: ANN001
    """The system print dialog, then ``paint(printer)`` if the user confirms. ``file_path``
    is what the dialog offers when the user prints to a file (a real printer stays the
    first choice where there is one); a PDF is made owner-only before Qt writes it."""
    from PySide6.QtPrintSupport import QPrintDialog, QPrinter

    printer = QPrinter(QPrinter.PrinterMode.HighResolution)
    if file_path is not None:
        printer.setDocName(file_path.stem)
        printer.setOutputFileName(str(file_path))  # this makes the printer a PDF writer…
        printer.setOutputFormat(QPrinter.OutputFormat.NativeFormat)  # …a printer again
    if QPrintDialog(printer, parent).exec():
        if printer.outputFormat() == QPrinter.OutputFormat.PdfFormat and printer.outputFileName():
            owner_only_file(Path(printer.outputFileName()))  # a patient's sheet
        paint(printer)


def documents_folder() -> Path:
    """The user's documents folder (the home folder where the system names none)."""
    found = QStandardPaths.writableLocation(QStandardPaths.StandardLocation.DocumentsLocation)
    return Path(found) if found else Path.home()


class PatientNameDialog(QDialog):
    """Whose sheet this is, asked when the plan has no saved patient: a name, or nothing
    for a line on the sheet to write it on."""

    def __init__(self, parent=None) -> None:  # noqa: ANN001 — QWidget
        super().__init__(parent)
        self.setWindowTitle("Print the treatment sheet")
        form = QFormLayout(self)
        note = QLabel(
            "This plan is not saved for a patient. The name goes on every page and label; "
            "leave it empty to print a line to write it on."
        )
        note.setWordWrap(True)
        form.addRow(note)
        self.name = QLineEdit()
        self.name.setAccessibleName("Patient name")
        self.name.setMaxLength(80)
        form.addRow("Patient &name", self.name)
        buttons = QDialogButtonBox(
            QDialogButtonBox.StandardButton.Ok | QDialogButtonBox.StandardButton.Cancel
        )
        buttons.button(QDialogButtonBox.StandardButton.Ok).setText("Print…")
        buttons.accepted.connect(self.accept)
        buttons.rejected.connect(self.reject)
        form.addRow(buttons)


def saved_patient(keeper) -> dict | None:  # noqa: ANN001 — WorkKeeper or None
    """The records' patient of the plan on screen ({"name", "client"}), or None."""
    work = getattr(keeper, "work", None)
    if work is None or work.patient_id is None or work.records is None:
        return None
    try:
        row = work.records.patient(work.patient_id)
    except (VetfluidError, sqlite3.Error):  # gone or unreadable now: ask instead
        return None
    return {"name": row.name, "client": row.client_ref}


def patient_to_print(parent, keeper) -> dict | None:  # noqa: ANN001 — QWidget, WorkKeeper
    """The patient the sheet names: the saved one, else asked (an empty name prints a line
    to write it on); None when the user cancels."""
    saved = saved_patient(keeper)
    if saved is not None:
        return saved
    dialog = PatientNameDialog(parent)
    if not dialog.exec():
        return None
    return {"name": dialog.name.text().strip()}


def proposed_sheet_path(plan, patient: dict | None) -> Path:  # noqa: ANN001 — Plan
    """Where the print dialog proposes a sheet's PDF: the patient and the date
    (:func:`vetfluid.printouts.sheet.sheet_file_name`) in the documents folder."""
    from vetfluid.printouts.sheet import sheet_file_name
    from vetfluid.records.serialize import plan_dict

    name = (patient or {}).get("name") or ""
    return documents_folder() / sheet_file_name(plan_dict(plan), name)


def show_print_preview(parent, paint) -> None:  # noqa: ANN001 — QWidget, callable
    """Qt's print preview, painted by ``paint(printer)`` (page set-up changes repaint)."""
    from PySide6.QtPrintSupport import QPrintPreviewDialog

    dialog = QPrintPreviewDialog(parent)
    dialog.paintRequested.connect(paint)
    dialog.exec()


PAGE_SIZES = {"a4": "A4", "letter": "Letter"}


def print_sheet_to_pdf(html: str, path, *, page: str = "a4", mark: str = "") -> int:  # noqa: ANN001
    """Write the sheet as a PDF on A4 or US Letter (``mark`` as in :func:`print_sheet`);
    returns the number of pages."""
    from PySide6.QtGui import QPageSize
    from PySide6.QtPrintSupport import QPrinter

    if page not in PAGE_SIZES:
        raise ValueError(f"page must be one of {', '.join(PAGE_SIZES)}")
    printer = QPrinter(QPrinter.PrinterMode.HighResolution)
    printer.setOutputFormat(QPrinter.OutputFormat.PdfFormat)
    owner_only_file(Path(path))  # a patient's sheet: owner-only before Qt writes into it
    printer.setOutputFileName(str(path))
    size = QPageSize.PageSizeId.A4 if page == "a4" else QPageSize.PageSizeId.Letter
    printer.setPageSize(QPageSize(size))
    return print_sheet(html, printer, mark=mark)
