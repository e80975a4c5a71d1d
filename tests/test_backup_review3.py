"""The third review of backing up and restoring (the adversarial review's findings 1–8):
a draft kept before a restore waits in the restored records; a restore that cannot start is
said in words and the records are opened again; a backup's own triggers, views and odd
tables never come along; backups read on read-only media and leave nothing beside them; a
read-only data folder is said as such; the reason a save was refused after a restore comes
before the patient is asked; a restore into a server held open by another workstation
stops in words; the small ones (the records file itself, a folder, a restore's wording).

The expected behaviour is the review's (each test names its finding); SQLite's own
documentation is the source for how it reads files: "immutable" URI parameter and
"PRAGMA journal_mode" (sqlite.org/uri.html, sqlite.org/pragma.html#pragma_journal_mode)."""

# the window fixture is tests/test_backup_window.py's, imported; tests name it as a parameter
# ruff: noqa: F811

from __future__ import annotations

import contextlib
import os
import shutil
import sqlite3
import subprocess
from pathlib import Path

import pytest
from PySide6.QtWidgets import QMessageBox

from tests.test_backup_window import window  # noqa: F401
from vetfluid.planning.demos import DEMOS
from vetfluid.planning.plan import build_plan
from vetfluid.records.backups import back_up, describe_records_file, restore_records
from vetfluid.records.store import DATABASE_NAME, Records, RecordsError

REPLACE = "Replace the records with the backup"
LEAVE = "This plan, or what was recorded"


def _fill(records: Records, names: list[str]) -> None:
    plan = build_plan(DEMOS["dehydrated_dog"].request)
    for name in names:
        pid = records.add_patient(name=name, species_id="dog")
        records.save_version(patient_id=pid, plan=plan, acknowledged={}, author="AB")


def _names(records: Records) -> list[str]:
    return sorted(p.name for p in records.find_patients(""))


def _backup_of(tmp_path: Path, names: list[str], name: str = "backup.sqlite") -> Path:
    with Records.open(tmp_path / f"source-{name}") as source:
        _fill(source, names)
        back_up(source, tmp_path / name)
    return tmp_path / name


@contextlib.contextmanager
def _read_only_folder(folder: Path):
    """``folder`` as a read-only file system (a tmpfs remounted read-only, as the review
    did): root ignores file modes, so only a read-only mount shows what read-only media
    do. Skipped where mounting is not permitted."""
    folder.mkdir(parents=True, exist_ok=True)
    if os.geteuid() != 0 or shutil.which("mount") is None:
        pytest.skip("needs root to mount a read-only file system")
    if subprocess.run(["mount", "-t", "tmpfs", "-o", "size=16m", "tmpfs", str(folder)],
                      capture_output=True).returncode:  # fmt: skip
        pytest.skip("mounting a tmpfs is not permitted here")
    try:
        yield lambda: subprocess.run(
            ["mount", "-o", "remount,ro", str(folder)], check=True, capture_output=True
        )
    finally:
        subprocess.run(["umount", "-l", str(folder)], capture_output=True)


# ---- 1: the draft kept before a restore on this computer waits in the restored records ------
def test_the_draft_waits_in_the_restored_file(tmp_path, vetfluid_home):
    backup = _backup_of(tmp_path, ["Rex"])
    path = vetfluid_home / DATABASE_NAME
    with Records.open(path) as records:
        _fill(records, ["Tess"])
        records.save_draft({"request": {"weight_kg": 25.0}, "note": "kept as draft"})
    restore_records(backup, path=path)
    with Records.open(path) as records:
        assert _names(records) == ["Rex"]
        assert records.draft() == {"request": {"weight_kg": 25.0}, "note": "kept as draft"}


def test_keep_as_draft_before_a_restore_is_offered_back(qtbot, window, answer, tmp_path):
    _save(qtbot, window, "Max")
    answer({"Backed up": lambda: None})
    window.back_up_records(tmp_path / "b.sqlite")
    window.session.update(weight_kg=25.0)  # unsaved
    qtbot.waitUntil(lambda: window.session.plan.request.weight_kg == 25.0)
    offered = []
    answer({
        REPLACE: "Replace the records", LEAVE: "Keep as draft", "Restored": lambda: None,
        "other records": lambda: None,
        "Restore it?": lambda: offered.append(True) or QMessageBox.StandardButton.Yes,
    })  # fmt: skip
    assert window.restore_records(tmp_path / "b.sqlite")
    assert offered, "the draft kept before the restore was not offered back"
    assert window.session.plan is not None and window.session.plan.request.weight_kg == 25.0


# ---- 2: a restore that cannot start is said in words; the records are open again ------------
def test_a_restore_that_cannot_start_says_why_in_words(tmp_path, vetfluid_home):
    backup = _backup_of(tmp_path, ["Rex"])
    path = vetfluid_home / DATABASE_NAME
    with Records.open(path) as records:
        _fill(records, ["Tess"])
    (vetfluid_home / "backups").write_text("a file, not a folder")
    with pytest.raises(RecordsError) as refused:
        restore_records(backup, path=path)
    words = refused.value.one_line()
    assert "nothing was restored" in words and "backups" in words
    with Records.open(path) as records:
        assert _names(records) == ["Tess"]


def test_the_window_reopens_the_records_after_a_restore_that_failed(
    qtbot, window, answer, tmp_path, vetfluid_home
):
    _save(qtbot, window, "Max")
    answer({"Backed up": lambda: None})
    window.back_up_records(tmp_path / "b.sqlite")
    (vetfluid_home / "backups").write_text("a file, not a folder")
    warned = []
    answer({REPLACE: "Replace the records",
            "were not restored": lambda: warned.append(True)})  # fmt: skip
    assert not window.restore_records(tmp_path / "b.sqlite")
    assert warned == [True]
    assert window.records is not None  # open again: later work is kept, not lost on close
    _save(qtbot, window, "Zed")
    assert _names(window.records) == ["Max", "Zed"]


def test_the_records_are_reopened_whatever_the_restore_raises(
    qtbot, window, answer, monkeypatch, tmp_path
):
    from ui.records import backup_dialogs

    _save(qtbot, window, "Max")
    answer({"Backed up": lambda: None})
    window.back_up_records(tmp_path / "b.sqlite")

    def broken(_backup, **_where):  # noqa: ANN001, ANN003, ANN202 — nobody foresaw it
        raise RuntimeError("unforeseen")

    monkeypatch.setattr(backup_dialogs, "restore_records", broken)
    answer({REPLACE: "Replace the records"})
    with pytest.raises(RuntimeError):
        window.restore_records(tmp_path / "b.sqlite")
    assert window.records is not None


# ---- 3: nothing of the backup's own schema comes along --------------------------------------
def test_a_backups_own_trigger_is_not_restored(tmp_path, vetfluid_home):
    backup = _backup_of(tmp_path, ["Max", "Bella"])
    with contextlib.closing(sqlite3.connect(backup)) as db, db:
        db.execute(
            "CREATE TRIGGER tr AFTER INSERT ON patients BEGIN DELETE FROM observations; "
            "UPDATE patients SET name = 'WRONG PATIENT' WHERE id <> new.id; END"
        )
    path = vetfluid_home / DATABASE_NAME
    restore_records(backup, path=path)
    with Records.open(path) as records:
        _fill(records, ["Luna"])
        assert _names(records) == ["Bella", "Luna", "Max"]
    with contextlib.closing(sqlite3.connect(path)) as db:
        names = {n for (n,) in db.execute("SELECT name FROM sqlite_master WHERE type='trigger'")}
    assert names == {"plan_versions_no_update", "plan_versions_no_delete"}


@pytest.mark.parametrize(
    "change",
    [
        "ALTER TABLE patients RENAME TO p2; CREATE TABLE patients (x)",
        "DROP TABLE observations; CREATE VIEW observations AS SELECT 1",
    ],
    ids=["wrong columns", "a view"],
)
def test_a_backup_with_other_tables_is_refused(tmp_path, vetfluid_home, change):
    backup = _backup_of(tmp_path, ["Max"])
    with contextlib.closing(sqlite3.connect(backup)) as db:
        db.executescript(change)
    path = vetfluid_home / DATABASE_NAME
    with Records.open(path) as records:
        _fill(records, ["Tess"])
    with pytest.raises(RecordsError, match="nothing was restored"):
        describe_records_file(backup)
    with pytest.raises(RecordsError, match="nothing was restored"):
        restore_records(backup, path=path)
    with Records.open(path) as records:
        assert _names(records) == ["Tess"]


# ---- 4: backups read on read-only media, and leave nothing beside them -----------------------
def test_a_backup_is_one_file_and_reading_it_leaves_nothing_beside(tmp_path):
    backup = _backup_of(tmp_path, ["Rex"])
    with contextlib.closing(sqlite3.connect(backup)) as db:
        assert db.execute("PRAGMA journal_mode").fetchone()[0] == "delete"
    describe_records_file(backup)
    assert sorted(p.name for p in tmp_path.iterdir() if p.name.startswith("backup")) == [
        "backup.sqlite"
    ]


def test_a_backup_on_read_only_media_is_restored(tmp_path, vetfluid_home):
    good = _backup_of(tmp_path, ["Rex"])
    media = tmp_path / "usb"
    with _read_only_folder(media) as make_read_only:
        shutil.copyfile(good, media / "b.sqlite")
        make_read_only()
        assert describe_records_file(media / "b.sqlite").patients == 1
        restore_records(media / "b.sqlite", path=vetfluid_home / DATABASE_NAME)
        with Records.open(vetfluid_home / DATABASE_NAME) as records:
            assert _names(records) == ["Rex"]


# ---- 5: a read-only data folder is said as such --------------------------------------------
def test_a_read_only_data_folder_is_not_called_damaged(tmp_path):
    folder = tmp_path / "home"
    with _read_only_folder(folder) as make_read_only:
        with Records.open(folder / DATABASE_NAME) as records:
            _fill(records, ["Rex"])
        make_read_only()
        with pytest.raises(RecordsError) as refused:
            Records.open(folder / DATABASE_NAME)
    words = refused.value.one_line()
    assert "read-only" in words and "restore" not in words and "not a usable" not in words


# ---- 6: the reason a save was refused comes before the patient is asked ----------------------
def test_the_records_replaced_reason_comes_before_the_patient_is_asked(
    qtbot, window, answer, monkeypatch, tmp_path, vetfluid_home
):
    from ui.records.records_view import NewPatientDialog

    _save(qtbot, window, "Rex")
    backup = _backup_of(tmp_path, ["Tess"])
    window.session.update(weight_kg=33.0)
    qtbot.waitUntil(lambda: window.session.plan.request.weight_kg == 33.0)
    restore_records(backup, path=vetfluid_home / DATABASE_NAME)  # another program, meanwhile
    shown = []
    answer({"The records were replaced": lambda: shown.append("reason")})
    monkeypatch.setattr(NewPatientDialog, "exec", lambda _self: shown.append("dialog") or 0)
    assert window.save_version(author="AB") is None
    assert shown == ["reason", "dialog"]


# ---- 7: a restore into a server held open elsewhere stops in words --------------------------
def test_a_restore_into_a_server_held_open_stops_in_words(postgres_url, tmp_path, monkeypatch):
    import psycopg

    from vetfluid.records import store
    from vetfluid.records.location import server_address

    backup = _backup_of(tmp_path, ["Rex"])
    with Records.open(url=postgres_url) as records:
        _fill(records, ["Tess"])
    monkeypatch.setattr(store, "RESTORE_LOCK_WAIT_S", 1)
    address = server_address(postgres_url)
    with psycopg.connect(address.sqlalchemy_url().render_as_string(hide_password=False)
                         .replace("postgresql+psycopg", "postgresql"),
                         **address.connect_args()) as other:  # fmt: skip
        other.execute("SELECT * FROM patients").fetchall()  # a transaction left open
        with pytest.raises(RecordsError) as refused:
            restore_records(backup, url=postgres_url)
        other.rollback()
    words = refused.value.one_line()
    assert "another workstation" in words and "nothing was changed" in words.lower()
    with Records.open(url=postgres_url) as records:
        assert _names(records) == ["Tess"]


# ---- 8: the small ones -----------------------------------------------------------------------
def test_restoring_from_the_records_file_itself_is_refused_before_any_question(
    qtbot, window, answer, vetfluid_home, tmp_path
):
    _save(qtbot, window, "Rex")
    window.session.update(weight_kg=25.0)
    qtbot.waitUntil(lambda: window.session.plan.request.weight_kg == 25.0)
    link = tmp_path / "link.sqlite"
    link.symlink_to(vetfluid_home / DATABASE_NAME)
    refused = []
    answer({"is the records file itself": lambda: refused.append(True)})  # nothing else
    for chosen in (vetfluid_home / DATABASE_NAME, link):
        assert not window.restore_records(chosen)
        assert window.session.plan.request.weight_kg == 25.0  # still on screen
    assert refused == [True, True]


def test_a_backup_onto_a_folder_says_it_is_a_folder(tmp_path, vetfluid_home):
    with Records.open(vetfluid_home / DATABASE_NAME) as records:
        _fill(records, ["Rex"])
        with pytest.raises(RecordsError) as refused:
            back_up(records, tmp_path)
    words = refused.value.one_line()
    assert "is a folder" in words and "Errno" not in words and "disk" not in words


def test_the_leave_question_of_a_restore_speaks_of_the_restore(qtbot, window, answer, tmp_path):
    _save(qtbot, window, "Rex")
    answer({"Backed up": lambda: None})
    window.back_up_records(tmp_path / "b.sqlite")
    window.session.update(weight_kg=25.0)
    qtbot.waitUntil(lambda: window.session.plan.request.weight_kg == 25.0)
    asked = []
    question = window.keeper.work
    answer({REPLACE: "Replace the records",
            LEAVE: lambda: asked.append(question._question.text) or "Cancel"})  # fmt: skip
    assert not window.restore_records(tmp_path / "b.sqlite")
    assert "other plan" not in asked[0] and "restored from the backup" in asked[0]


# ---- the window ------------------------------------------------------------------------------


def _save(qtbot, window, name: str) -> None:  # noqa: ANN001
    window.open_demo("dehydrated_dog")
    qtbot.waitUntil(lambda: window.session.plan is not None)
    assert window.save_version(name=name, author="AB") is not None
