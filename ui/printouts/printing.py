"""Print an HTML sheet page by page with the cautions at the foot of every page."""

from __future__ import annotations

from pathlib import Path

from PySide6.QtCore import QRectF, QSizeF, Qt
from PySide6.QtGui import QPainter, QTextDocument

from vetfluid.common.cautions import SHORT_CAUTION
from vetfluid.common.paths import owner_only_file

FOOTER_LINES = 2


def print_sheet(html: str, printer, *, mark: str = "") -> int:  # noqa: ANN001 — QPrinter
    """Lay the sheet out on the printer's pages; returns the number of pages printed.
    ``mark`` (a plan with a hard limit: :func:`vetfluid.printouts.sheet.page_mark`) heads every
    page's footer."""
    painter = QPainter()
    if not painter.begin(printer):
        raise OSError("the printer could not be opened")
    try:
        page = QRectF(printer.pageLayout().paintRectPixels(printer.resolution()))
        page.moveTo(0, 0)
        footer_height = painter.fontMetrics().lineSpacing() * (FOOTER_LINES + 1)
        body = QSizeF(page.width(), page.height() - footer_height)
        document = QTextDocument()
        document.documentLayout().setPaintDevice(printer)
        document.setHtml(html)
        document.setPageSize(body)
        pages = document.pageCount()
        for number in range(pages):
            if number:
                printer.newPage()
            painter.save()
            painter.translate(0, -number * body.height())
            document.drawContents(
                painter, QRectF(0, number * body.height(), body.width(), body.height())
            )
            painter.restore()
            footer = QRectF(0, body.height(), page.width(), footer_height)
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


def choose_printer_and_print(parent, paint) -> None:  # noqa: ANN001 — QWidget, callable
    """The system print dialog, then ``paint(printer)`` if the user confirms."""
    from PySide6.QtPrintSupport import QPrintDialog, QPrinter

    printer = QPrinter(QPrinter.PrinterMode.HighResolution)
    if QPrintDialog(printer, parent).exec():
        paint(printer)


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
