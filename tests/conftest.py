"""Shared test setup: every test writes only into its own temporary VETFLUID_HOME."""

from __future__ import annotations

import gc
import os

import pytest

os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")


@pytest.fixture(autouse=True)
def vetfluid_home(tmp_path, monkeypatch):
    home = tmp_path / "vetfluid-home"
    home.mkdir()
    monkeypatch.setenv("VETFLUID_HOME", str(home))
    return home


@pytest.fixture(autouse=True)
def collect_qt_garbage(request):
    """After a test that built widgets, collect its cyclic garbage there and then.

    pyqtgraph's scenes and items hold each other in reference cycles; left to the cycle
    collector, they are torn down whenever it next runs, which may be in the middle of
    the next test building its own plots. Once, in a full run, that hung inside
    pyqtgraph's item bookkeeping. Collecting here, after pytest-qt has closed the test's
    widgets, tears them down while nothing else is being built."""
    yield
    if "qtbot" in request.fixturenames:
        gc.collect()


@pytest.fixture()
def planner(qtbot, monkeypatch):
    """The main window, shown, with its planner built (it follows the first paint).

    A question or message the test did not expect (and answer by patching ``QMessageBox``
    or with the ``answer`` fixture) fails the test at once instead of waiting for a click
    that never comes."""
    from PySide6.QtWidgets import QMessageBox

    from ui.main_window import MainWindow

    def unexpected(_parent, _title, text, *_args, **_kwargs):  # noqa: ANN001, ANN202
        raise AssertionError(f"the window asked a question the test did not answer: {text}")

    for kind in ("question", "warning", "information"):
        monkeypatch.setattr(QMessageBox, kind, unexpected)
    # a question whose buttons name their actions is a QMessageBox run with exec()
    monkeypatch.setattr(QMessageBox, "exec", lambda box: unexpected(None, "", box.text()))

    win = MainWindow()
    qtbot.addWidget(win)
    win.resize(1400, 900)
    win.show()
    qtbot.waitUntil(lambda: win.session is not None)
    return win


@pytest.fixture()
def answer(monkeypatch):
    """Answer the window's questions by their words, as a user would:
    ``answer({"Restore it": Yes, "This plan, or what was recorded": No})``; a message
    is answered with a callable (``lambda: shown.append(1)``). A question that matches
    none fails the test."""
    from PySide6.QtWidgets import QMessageBox

    def set_answers(answers: dict) -> None:
        def ask(_parent, _title, text, *_args, **_kwargs):  # noqa: ANN001, ANN202
            for words, button in answers.items():
                if words in text:  # a callable stands for a message: it notes it was shown
                    return button() if callable(button) else button
            raise AssertionError(f"the window asked a question the test did not answer: {text}")

        for kind in (
            "question",
            "warning",
            "information",
        ):  # a message is answered by its words too
            monkeypatch.setattr(QMessageBox, kind, ask)

        def press(box):  # noqa: ANN001, ANN202
            """A box with buttons named for their actions ("Keep as draft"): answered by
            the same words, with a standard button or the words on the button."""
            button = ask(None, "", box.text())
            if isinstance(button, str):
                named = {b.text(): b for b in box.buttons()}
                assert button in named, f"no button {button!r}: {sorted(named)}"
                button = box.standardButton(named[button])
            return QMessageBox.StandardButton(button).value

        monkeypatch.setattr(QMessageBox, "exec", press)

    return set_answers


@pytest.fixture
def pdf_text():
    """Read a PDF's text back: ligatures undone, any run of spaces, tabs or breaks as one space."""
    import re
    import unicodedata

    import pypdf

    def read(path) -> str:  # noqa: ANN001
        text = " ".join(page.extract_text() for page in pypdf.PdfReader(path).pages)
        return re.sub(r"\s+", " ", unicodedata.normalize("NFKC", text))

    return read
