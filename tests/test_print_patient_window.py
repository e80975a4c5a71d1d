"""Printing from the window (issue 20, "The sheet and the labels"): the patient's name on
every page, asked for when the plan has no saved patient (blank: a line to write it on, never
a placeholder), the file proposed from the patient and the date in the documents folder, and
the bag size chosen beside the delivery."""

from __future__ import annotations

import re
from pathlib import Path

import pytest

from vetfluid.planning.demos import DEMO_DAY


@pytest.fixture()
def printed(monkeypatch, tmp_path):
    """The print dialog, answered: it notes the file name it was offered, prints to a PDF in
    ``tmp_path`` (never into the real documents folder) and returns the pages' text."""
    from PySide6.QtPrintSupport import QPrintDialog, QPrinter

    offered: list[str] = []
    out = tmp_path / "printed.pdf"

    def accept(dialog) -> int:  # noqa: ANN001
        printer = dialog.printer()
        offered.append(printer.outputFileName())
        printer.setOutputFormat(QPrinter.OutputFormat.PdfFormat)
        printer.setOutputFileName(str(out))
        return 1

    monkeypatch.setattr(QPrintDialog, "exec", accept)

    def pages() -> list[str]:
        import pypdf

        return [re.sub(r"\s+", " ", p.extract_text()) for p in pypdf.PdfReader(out).pages]

    return offered, pages, out


def _name_dialog(monkeypatch, answer: str | None) -> list[int]:
    """Answer the name question with ``answer`` (None: cancel); returns how often it asked."""
    from ui.printouts.printing import PatientNameDialog

    asked: list[int] = []

    def exec_(dialog) -> int:  # noqa: ANN001
        asked.append(1)
        if answer is None:
            return 0
        dialog.name.setText(answer)
        return 1

    monkeypatch.setattr(PatientNameDialog, "exec", exec_)
    return asked


def test_without_a_saved_patient_printing_asks_the_name_and_every_page_carries_it(
    qtbot, planner, monkeypatch, printed
):
    offered, pages, _ = printed
    planner.open_demo("dehydrated_dog")
    qtbot.waitUntil(lambda: planner.session.plan is not None)
    asked = _name_dialog(monkeypatch, "Bella")
    planner.print_plan()
    assert asked == [1]
    text = pages()
    assert len(text) > 1 and all("Bella · Dog, 24 kg · Tue 1 Dec 2026" in p for p in text)
    assert "(patient name)" not in " ".join(text)
    # the file proposed: the patient and the date, in the documents folder
    from PySide6.QtCore import QStandardPaths

    documents = QStandardPaths.writableLocation(
        QStandardPaths.StandardLocation.DocumentsLocation
    ) or str(Path.home())
    assert offered == [str(Path(documents) / f"Bella {DEMO_DAY.isoformat()} fluid sheet.pdf")]


def test_a_blank_name_prints_a_line_and_cancel_prints_nothing(qtbot, planner, monkeypatch, printed):
    offered, pages, out = printed
    planner.open_demo("small_gerbil")
    qtbot.waitUntil(lambda: planner.session.plan is not None)
    _name_dialog(monkeypatch, None)
    planner.print_plan()
    assert offered == [] and not out.exists()  # cancelled: no print dialog, no sheet
    _name_dialog(monkeypatch, "   ")
    planner.print_plan()
    assert all("Name: ____" in p for p in pages())
    assert offered[-1].endswith(f"Mongolian gerbil {DEMO_DAY.isoformat()} fluid sheet.pdf")


def test_a_saved_patient_is_printed_without_asking(qtbot, planner, monkeypatch, printed):
    _, pages, _ = printed
    planner.open_demo("renal_cat")
    qtbot.waitUntil(lambda: planner.session.plan is not None)
    assert planner.save_version(name="Tom", author="AB") == 1
    asked = _name_dialog(monkeypatch, "not this")
    planner.print_plan()
    assert asked == [] and all(p.startswith("Tom · Cat, 4.2 kg") for p in pages())


def test_the_bag_size_is_chosen_beside_the_delivery(qtbot, planner):
    planner.open_demo("dehydrated_dog")
    qtbot.waitUntil(lambda: planner.session.plan is not None)
    box = planner.settings_box.bag_size
    assert box.currentData() is None  # by each phase's volume
    box.setCurrentIndex(box.findData(500.0))
    box.activated.emit(box.currentIndex())
    qtbot.waitUntil(lambda: planner.session.plan.request.bag_size_ml == 500.0)
