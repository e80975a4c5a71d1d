"""File ▸ Back up records… and File ▸ Restore records from a backup… (issue 21,
ui/records/backup_dialogs.py): said in words, asked before anything is replaced, the
records as they were kept first, refused for a file that is not a backup, the records
opened again afterwards; on the SQLite file and on a PostgreSQL server.

Questions and messages are answered by their words (``answer``, tests/conftest.py); one no
test answered fails at once."""

from __future__ import annotations

from pathlib import Path

import pytest
from PySide6.QtWidgets import QMessageBox

from vetfluid.records.backups import describe_records_file

REPLACE = "Replace the records with the backup"  # the question a restore asks first
LEAVE = "This plan, or what was recorded"  # the question leaving unsaved work asks


@pytest.fixture()
def window(qtbot, monkeypatch, request):
    """The main window on the test's records: the SQLite file, or (``server`` in the
    test's parameters) a new database on the test server."""
    from ui.main_window import MainWindow

    if getattr(request, "param", "sqlite") == "postgresql":
        monkeypatch.setenv("VETFLUID_RECORDS_URL", request.getfixturevalue("postgres_url"))
    win = MainWindow()
    qtbot.addWidget(win)
    win.resize(1200, 800)
    win.show()
    qtbot.waitUntil(lambda: win.session is not None)
    assert win.records is not None, win.keeper.work.problem
    return win


def _save(qtbot, window, name: str, demo: str = "dehydrated_dog") -> None:  # noqa: ANN001
    window.open_demo(demo)
    qtbot.waitUntil(lambda: window.session.plan is not None and window.session.plan.request
                    .species_id == ("dog" if demo == "dehydrated_dog" else "cat"))  # fmt: skip
    assert window.save_version(name=name, author="AB") is not None


def _names(window) -> list[str]:  # noqa: ANN001
    return sorted(p.name for p in window.records.find_patients(""))


@pytest.mark.parametrize("window", ["sqlite", "postgresql"], indirect=True)
def test_a_backup_says_where_and_how_much(qtbot, window, answer, monkeypatch, tmp_path):
    _save(qtbot, window, "Rex")
    shown = []
    answer({})  # nothing but the message below
    monkeypatch.setattr(QMessageBox, "information", _noting(shown))
    target = window.back_up_records(tmp_path / "monday.sqlite")
    assert target == tmp_path / "monday.sqlite"
    text = shown[0]
    assert "Backed up 1 patient, 1 plan version from" in text
    assert str(tmp_path / "monday.sqlite") in text and window.records.where in text
    summary = describe_records_file(target)
    assert (summary.patients, summary.versions) == (1, 1)


def _noting(shown: list):  # noqa: ANN202
    """A message box that notes its words (the test reads them afterwards)."""

    def note(_parent, _title, text, *_args, **_kwargs):  # noqa: ANN001, ANN202
        shown.append(text)
        return QMessageBox.StandardButton.Ok

    return note


@pytest.mark.parametrize("window", ["sqlite", "postgresql"], indirect=True)
def test_a_restore_asks_first_keeps_the_records_and_reopens_them(
    qtbot, window, answer, monkeypatch, tmp_path, vetfluid_home
):
    _save(qtbot, window, "Rex")
    monkeypatch.setattr(QMessageBox, "information", _noting([]))
    window.back_up_records(tmp_path / "monday.sqlite")
    _save(qtbot, window, "Tess", demo="renal_cat")  # saved after the backup
    asked, told = [], []
    answer({
        REPLACE: lambda: asked.append(window.restore_question.text()) or "Replace the records",
        "Restored": lambda: told.append(True),
    })  # fmt: skip
    monkeypatch.setattr(QMessageBox, "information", _noting(told))
    assert window.restore_records(tmp_path / "monday.sqlite")
    question = asked[0]
    assert question.startswith("Replace the records with the backup monday.sqlite?\n\n")
    assert "In the records now: 2 patients, 2 plan versions (" in question  # and where:
    assert window.records.where in question  # the file, or the server
    assert "In the backup: 1 patient, 1 plan version, the newest saved " in question
    assert "Anything saved after the backup was made will no longer be in the records" in question
    assert f"copied into {vetfluid_home / 'backups'}, so nothing saved is lost" in question
    # reopened, holding the backup's records; the screen put away (the saved plan needed
    # no question)
    assert window.records is not None and _names(window) == ["Rex"]
    assert window.session.plan is None
    message = told[-1]
    assert "Restored 1 patient, 1 plan version from monday.sqlite" in message
    assert "The records as they were (2 patients, 2 plan versions) are kept in:" in message
    kept = Path(message.rsplit("\n", 1)[-1])
    summary = describe_records_file(kept)
    assert (summary.patients, summary.versions) == (2, 2)
    # the records work as before: a new version is saved into the restored records
    _save(qtbot, window, "Milo")
    assert _names(window) == ["Milo", "Rex"]


def test_a_file_that_is_not_a_backup_is_refused_in_words(qtbot, window, answer, tmp_path):
    _save(qtbot, window, "Rex")
    plan_file = tmp_path / "rex.vfplan"
    plan_file.write_text('{"format": "vetfluid-plan-request"}', encoding="utf-8")
    warned = []
    answer(
        {
            "rex.vfplan is not a vetfluid records backup: it is not a database file.\n\n"
            "Choose a backup": lambda: warned.append(True)
        }
    )  # asked nothing else
    assert not window.restore_records(plan_file)
    assert warned == [True]
    assert _names(window) == ["Rex"]


def test_cancel_leaves_everything_as_it_was(qtbot, window, answer, tmp_path, vetfluid_home):
    _save(qtbot, window, "Rex")
    with_one = tmp_path / "one.sqlite"
    answer({"Backed up": lambda: None, REPLACE: QMessageBox.StandardButton.Cancel})
    window.back_up_records(with_one)
    _save(qtbot, window, "Tess", demo="renal_cat")
    assert not window.restore_records(with_one)
    assert _names(window) == ["Rex", "Tess"]
    assert window.session.plan is not None  # the plan on screen stays
    assert not (vetfluid_home / "backups").exists()


def test_unsaved_work_is_asked_about_before_a_restore(qtbot, window, answer, tmp_path):
    """The plan on screen, not saved, is put away as leaving it asks: Cancel there
    restores nothing."""
    _save(qtbot, window, "Rex")
    answer({"Backed up": lambda: None})
    window.back_up_records(tmp_path / "one.sqlite")
    window.session.update(weight_kg=25.0)  # an unsaved change
    qtbot.waitUntil(lambda: window.session.plan.request.weight_kg == 25.0)
    answer({REPLACE: "Replace the records", LEAVE: "Cancel"})
    assert not window.restore_records(tmp_path / "one.sqlite")
    assert window.session.plan.request.weight_kg == 25.0
    assert window.records is not None and _names(window) == ["Rex"]


def test_a_restore_and_a_records_setting_reopen_the_records_the_one_way(
    qtbot, window, answer, monkeypatch, tmp_path
):
    """Review of commits 66a3521 and 6f4c2a9: the restore reopened the records by giving
    the keeper a work session of its own making, beside the keeper's own way for a changed
    setting. Both go through the keeper's ``reopen_records`` now, and after either the
    records label and the retry timer follow the records in use."""
    from ui.records.records_settings import RecordsSettingsDialog

    ROOT = Path(__file__).resolve().parents[1]
    for source in (ROOT / "ui").rglob("*.py"):
        if source.name == "work_keeper.py":
            continue
        text = source.read_text(encoding="utf-8")
        for second_way in ("WorkSession.open(", "keeper.work =", "switch_records("):
            assert second_way not in text, f"{source.name} reopens the records itself"

    keeper, reopened = window.keeper, []
    one_way = keeper.reopen_records

    def noted(**where: object) -> None:
        reopened.append(keeper.work.state.name)
        one_way(**where)

    monkeypatch.setattr(keeper, "reopen_records", noted)
    _save(qtbot, window, "Rex")
    answer({"Backed up": lambda: None, REPLACE: "Replace the records", "Restored": lambda: None})
    window.back_up_records(tmp_path / "monday.sqlite")
    assert window.restore_records(tmp_path / "monday.sqlite")
    assert reopened == ["CLOSED"] and window.records is not None
    assert not keeper.records_state.isVisibleTo(window) and not keeper.reconnect_timer.isActive()

    def exec_(dialog) -> int:  # noqa: ANN001 — the settings saved as they are
        dialog.accept()
        return dialog.result()

    monkeypatch.setattr(RecordsSettingsDialog, "exec", exec_)
    answer({})
    assert window.records_settings()
    assert reopened == ["CLOSED", "AS_OPENED"] and window.records is not None
    assert not keeper.records_state.isVisibleTo(window) and not keeper.reconnect_timer.isActive()
