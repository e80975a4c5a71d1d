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
    # the records in the test's own SQLite file unless a test chooses a server
    monkeypatch.delenv("VETFLUID_RECORDS_URL", raising=False)
    monkeypatch.setenv("VETFLUID_WORKSTATION", "test-workstation")
    return home


# ---- a PostgreSQL server for the records tests (issue 21) -----------------------------------
# scripts/records_server.sh starts one and prints these; .ci/run sets
# VETFLUID_TEST_POSTGRES_REQUIRED=1 as well, so that a missing server fails the run instead
# of skipping every PostgreSQL test.
POSTGRES_URL = os.environ.get("VETFLUID_TEST_POSTGRES_URL", "")
POSTGRES_PASSFILE = os.environ.get("VETFLUID_TEST_POSTGRES_PASSFILE", "")
POSTGRES_REQUIRED = os.environ.get("VETFLUID_TEST_POSTGRES_REQUIRED") == "1"
ENGINES = ("sqlite", "postgresql")


def _admin_connection():  # noqa: ANN202
    import psycopg

    return psycopg.connect(POSTGRES_URL, passfile=POSTGRES_PASSFILE, autocommit=True,
                           connect_timeout=5)  # fmt: skip


@pytest.fixture()
def postgres_url(vetfluid_home, monkeypatch):
    """A new, empty database on the test server, as a records URL without a password; the
    password is in the user data folder's owner-only records.pgpass, as the window keeps
    it. Dropped after the test. No server: a skip, or a failure when CI said there is one."""
    import uuid

    from sqlalchemy.engine import make_url

    from vetfluid.records.location import server_address, store_password

    if not POSTGRES_URL:
        message = ("no PostgreSQL server for the records tests: start one with "
                   "scripts/records_server.sh and export what it prints")  # fmt: skip
        if POSTGRES_REQUIRED:
            pytest.fail(message)
        pytest.skip(message)
    name = f"vf_{uuid.uuid4().hex[:16]}"
    with _admin_connection() as admin:
        admin.execute(f"CREATE DATABASE {name}")
    url = make_url(POSTGRES_URL).set(database=name).render_as_string(hide_password=False)
    password = _password_for(make_url(url))
    store_password(server_address(url), password)
    yield url
    with _admin_connection() as admin:
        admin.execute(f"DROP DATABASE IF EXISTS {name} WITH (FORCE)")


def _password_for(url) -> str:  # noqa: ANN001
    """The test server's password, from the pgpass file scripts/records_server.sh wrote."""
    from pathlib import Path

    for line in Path(POSTGRES_PASSFILE).read_text(encoding="utf-8").splitlines():
        host, port, _database, user, password = line.split(":", 4)
        if (host, int(port), user) == (url.host, url.port, url.username):
            return password
    raise AssertionError(f"no password for {url.username}@{url.host} in {POSTGRES_PASSFILE}")


@pytest.fixture(params=ENGINES)
def engine(request):
    """Each engine in turn: "sqlite" or "postgresql" (the server's database then ready)."""
    if request.param == "postgresql":
        request.getfixturevalue("postgres_url")
    return request.param


class RecordsPlace:
    """Where a test's records are (``where``: the SQLite file, or the server's URL);
    calling it opens them."""

    def __init__(self, where: str) -> None:
        self.where = where

    def __call__(self):  # noqa: ANN204
        from vetfluid.records.store import Records

        if "://" in self.where:
            return Records.open(url=self.where)
        return Records.open(self.where)


@pytest.fixture()
def open_records(engine, tmp_path, request):
    """Open the test's records, on the engine of the run: the same records each call."""
    if engine == "postgresql":
        return RecordsPlace(request.getfixturevalue("postgres_url"))
    return RecordsPlace(str(tmp_path / "records.sqlite"))


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
