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
def planner(qtbot):
    """The main window, shown, with its planner built (it follows the first paint)."""
    from ui.main_window import MainWindow

    win = MainWindow()
    qtbot.addWidget(win)
    win.resize(1400, 900)
    win.show()
    qtbot.waitUntil(lambda: win.session is not None)
    return win


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
