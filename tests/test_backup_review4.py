"""The fourth review of backing up and restoring (the final adversarial review's findings
1–6): a draft with no database identity never binds to whoever has its patient id after
the records changed; a restore replaces the records the window has open, the ones it
describes; a backup whose rows are not what vetfluid writes is refused in words; a killed
restore leaves nothing behind for long; a failed restore leaves the session as it was;
only the meta rows vetfluid knows come from a backup.

The expected behaviour is the review's (each test names its finding) and the project's own
specification (DEVELOPERS.md, "Nothing recorded is lost"); SQLite's documentation is the
source for its column types (sqlite.org/datatype3.html, "typeof")."""

# the window fixture is tests/test_backup_window.py's, imported; tests name it as a parameter
# ruff: noqa: F811

from __future__ import annotations

import os
import sqlite3
import stat
import time
from pathlib import Path

import pytest
from PySide6.QtWidgets import QMessageBox

from tests.test_backup_review3 import LEAVE, REPLACE, _backup_of, _fill, _names
from tests.test_backup_window import window  # noqa: F401
from vetfluid.planning.demos import DEMOS
from vetfluid.records.backups import back_up, restore_records
from vetfluid.records.serialize import request_to_dict
from vetfluid.records.store import DATABASE_NAME, Records, RecordsError


def _legacy_draft(patient_id: int, **more: object) -> dict:
    """A draft as a vetfluid before database identities wrote it: a patient id, no
    database_id, no patient mark."""
    return {
        "for_version": None, "request": request_to_dict(DEMOS["dehydrated_dog"].request),
        "acknowledged": {}, "acknowledged_for": {}, "observations": [],
        "patient_id": patient_id, "known_latest": 1, "closed": False, "tag": "old", **more,
    }  # fmt: skip


def _bella_versions(records: Records) -> list[int]:
    bella = next(p for p in records.find_patients("") if p.name == "Bella")
    return [v.version for v in records.versions(bella.id)]


# ---- 1: a draft with no database identity never binds by id alone after a restore -------------
def test_a_draft_carried_over_a_restore_is_stamped_with_the_old_records(tmp_path, vetfluid_home):
    backup = _backup_of(tmp_path, ["Bella"])  # patient 1 there is Bella
    path = vetfluid_home / DATABASE_NAME
    with Records.open(path) as records:
        _fill(records, ["Max"])  # patient 1 here is Max
        old_identity = records.database_id
        max_mark = records.patient(1)
        records.save_draft(_legacy_draft(1, database_id=old_identity))  # these records' own
    restore_records(backup, path=path)
    with Records.open(path) as records:
        kept = records.draft()
        assert records.database_id != old_identity
    assert kept["database_id"] == old_identity
    assert kept["patient"] == {"name": "Max", "species_id": "dog",
                               "created_at": max_mark.created_at}  # fmt: skip


def test_a_screen_with_no_database_identity_is_not_saved_into_another_patient(
    qtbot, window, answer, monkeypatch, tmp_path, vetfluid_home
):
    from ui.records.records_view import NewPatientDialog

    backup = _backup_of(tmp_path, ["Bella"])
    _save(qtbot, window, "Max")
    window.session.update(weight_kg=33.0)
    qtbot.waitUntil(lambda: window.session.plan.request.weight_kg == 33.0)
    work = window.keeper.work
    work._database_id, work._patient_mark = None, None  # as before identities existed
    told = []
    answer({REPLACE: "Replace the records", LEAVE: "Keep as draft", "Restored": lambda: None,
            "was written for": lambda: told.append(1),
            "Restore it?": QMessageBox.StandardButton.Yes})  # fmt: skip
    assert window.restore_records(backup)
    assert window.session.plan.request.weight_kg == 33.0
    assert told, "the user was not told the draft came from other records"
    monkeypatch.setattr(NewPatientDialog, "exec", lambda _self: 0)
    assert window.save_version(author="ZZ") is None  # asked for the patient; cancelled
    assert _bella_versions(window.records) == [1]


def test_a_legacy_draft_binds_only_when_its_patient_mark_matches(tmp_path, vetfluid_home):
    from vetfluid.records.work_session import WorkSession

    with Records.open(vetfluid_home / DATABASE_NAME) as records:
        _fill(records, ["Bella"])
        bella = records.patient(1)
        work = WorkSession(screen=None, records=records)
        assert work._binds(_legacy_draft(1)) is False  # no identity, no mark
        mark = {"name": "Bella", "species_id": "dog", "created_at": bella.created_at}
        assert work._binds(_legacy_draft(1, patient=mark)) is True
        assert work._binds(_legacy_draft(1, patient={**mark, "name": "Max"})) is False


def test_a_legacy_draft_left_in_the_file_is_offered_without_a_patient(
    qtbot, answer, monkeypatch, vetfluid_home
):
    from ui.main_window import MainWindow
    from ui.records.records_view import NewPatientDialog

    with Records.open(vetfluid_home / DATABASE_NAME) as records:
        _fill(records, ["Bella"])
        records.save_draft(_legacy_draft(1))
    told = []
    answer({"Restore it?": QMessageBox.StandardButton.Yes,
            "was written for": lambda: told.append(1)})  # fmt: skip
    win = MainWindow()
    qtbot.addWidget(win)
    win.show()
    qtbot.waitUntil(lambda: win.session is not None and win.session.plan is not None)
    assert told and win.keeper.work.patient_id is None
    monkeypatch.setattr(NewPatientDialog, "exec", lambda _self: 0)
    assert win.save_version(author="ZZ") is None
    assert _bella_versions(win.records) == [1]


def test_a_server_restore_stamps_this_workstations_draft(postgres_url, tmp_path):
    backup = _backup_of(tmp_path, ["Bella"])
    with Records.open(url=postgres_url) as records:
        _fill(records, ["Max"])
        old_identity = records.database_id
        records.save_draft(_legacy_draft(1, database_id=old_identity))
    restore_records(backup, url=postgres_url)
    with Records.open(url=postgres_url) as records:
        kept = records.draft()
        assert records.database_id != old_identity
    assert kept["database_id"] == old_identity and kept["patient"]["name"] == "Max"


# ---- 2: the restore replaces the records the window has open --------------------------------
def test_a_restore_replaces_the_records_the_window_has_open(
    qtbot, window, answer, monkeypatch, tmp_path, vetfluid_home, postgres_url
):
    backup = _backup_of(tmp_path, ["Bella"])
    _save(qtbot, window, "Max")
    with Records.open(url=postgres_url) as server:
        _fill(server, ["Rex"])
    # the setting changed meanwhile (another window, or a switch that failed)
    monkeypatch.setenv("VETFLUID_RECORDS_URL", postgres_url)
    asked = []
    answer({REPLACE: lambda: asked.append(window.restore_question.text()) or "Replace the records",
            "Restored": lambda: None})  # fmt: skip
    assert window.restore_records(backup)
    assert str(vetfluid_home / DATABASE_NAME) in asked[0]
    with Records.open(vetfluid_home / DATABASE_NAME) as records:
        assert _names(records) == ["Bella"]
    with Records.open(url=postgres_url) as server:
        assert _names(server) == ["Rex"]  # the clinic's server untouched
    assert window.records.path == vetfluid_home / DATABASE_NAME


def test_with_no_records_open_a_restore_never_goes_to_a_server_the_settings_name(
    qtbot, window, answer, monkeypatch, tmp_path
):
    """With no records open (the settings' server could not be opened), the question can
    only describe the file on this computer: a restore into the server the settings name
    would replace every workstation's records unasked. It is refused in words; nothing is
    restored anywhere."""
    import vetfluid.records.backups as backups

    backup = _backup_of(tmp_path, ["Bella"])
    monkeypatch.setattr(window.keeper.work, "records", None)
    monkeypatch.setenv("VETFLUID_RECORDS_URL", "postgresql://vet@records.invalid:5432/vf")
    restored = []
    monkeypatch.setattr(backups, "_restore_records", lambda *a, **k: restored.append(a))
    said = []
    answer({"not open now": lambda: said.append(1)})
    assert window.restore_records(backup) is False
    assert said and not restored


# ---- 3: a backup whose rows are not what vetfluid writes is refused in words ---------------
# our tables remade without column types, as another program could: SQLite then stores a
# number as a number (sqlite.org/datatype3.html, 3.1 "Determination Of Column Affinity")
UNTYPED_PATIENTS = (
    "CREATE TABLE p2 AS SELECT * FROM patients; DROP TABLE patients; CREATE TABLE patients "
    "(id INTEGER PRIMARY KEY, name, species_id, sex, birth_date, age_text, client_ref, notes, "
    "created_at); INSERT INTO patients SELECT * FROM p2; DROP TABLE p2; "
)
UNTYPED_OBSERVATIONS = (
    "CREATE TABLE o2 AS SELECT * FROM observations; DROP TABLE observations; CREATE TABLE "
    "observations (id INTEGER PRIMARY KEY, plan_version_id, observation_json, recorded_at); "
    "INSERT INTO observations SELECT * FROM o2; DROP TABLE o2; "
)
ODD = {
    "version_text": ("DROP TRIGGER plan_versions_no_update; UPDATE plan_versions SET "
                     "version = 'abc'", "version number"),
    "version_negative": ("DROP TRIGGER plan_versions_no_update; UPDATE plan_versions SET "
                         "version = -5", "version number"),
    "version_zero": ("DROP TRIGGER plan_versions_no_update; UPDATE plan_versions SET "
                     "version = 0", "version number"),
    "patient_id_text": ("CREATE TABLE p2 AS SELECT * FROM patients; DROP TABLE patients; "
                        "CREATE TABLE patients (id TEXT PRIMARY KEY, name, species_id, sex, "
                        "birth_date, age_text, client_ref, notes, created_at); INSERT INTO "
                        "patients SELECT 'abc', name, species_id, sex, birth_date, age_text, "
                        "client_ref, notes, created_at FROM p2; DROP TABLE p2",
                        "patient number"),
    "name_number": (UNTYPED_PATIENTS + "UPDATE patients SET name = 42", "name"),
    "name_missing": (UNTYPED_PATIENTS + "UPDATE patients SET name = NULL", "name"),
    "name_empty": ("UPDATE patients SET name = '  '", "name"),
    "species_number": ("UPDATE patients SET species_id = 7", "species"),
    "species_odd": ("UPDATE patients SET species_id = 'Dog; drop'", "species"),
    "created_number": (UNTYPED_PATIENTS + "UPDATE patients SET created_at = 12345",
                       "created"),
    "request_not_json": ("DROP TRIGGER plan_versions_no_update; UPDATE plan_versions SET "
                         "request_json = 'not json'", "plan"),
    "plan_bytes": ("DROP TRIGGER plan_versions_no_update; UPDATE plan_versions SET "
                   "plan_json = x'fffe'", "plan"),
    "observation_bytes": ("INSERT INTO observations (plan_version_id, observation_json, "
                          "recorded_at) VALUES (1, x'ff00', '2020')", "observation"),
    "recorded_number": (UNTYPED_OBSERVATIONS + "INSERT INTO observations (plan_version_id, "
                        "observation_json, recorded_at) VALUES (1, '{}', 1)", "observation"),
    "observation_orphan": ("PRAGMA foreign_keys = OFF; INSERT INTO observations "
                           "(plan_version_id, observation_json, recorded_at) VALUES "
                           "(999, '{}', '2020')", "observation of no plan version"),
    "version_orphan": ("PRAGMA foreign_keys = OFF; INSERT INTO plan_versions (patient_id, "
                       "version, request_json, plan_json, acknowledged_json, author, "
                       "created_at, program_version, workstation) SELECT 77, 1, request_json, "
                       "plan_json, acknowledged_json, author, created_at, program_version, "
                       "workstation FROM plan_versions", "plan version of no patient"),
    "version_twice": ("CREATE TABLE v2 AS SELECT * FROM plan_versions; DROP TABLE "
                      "plan_versions; CREATE TABLE plan_versions (id INTEGER PRIMARY KEY, "
                      "patient_id, version, request_json, plan_json, acknowledged_json, "
                      "author, created_at, program_version, workstation); INSERT INTO "
                      "plan_versions SELECT * FROM v2; INSERT INTO plan_versions SELECT id + "
                      "100, patient_id, version, request_json, plan_json, acknowledged_json, "
                      "author, created_at, program_version, workstation FROM v2; DROP TABLE v2",
                      "same version number"),
    "id_too_large": ("PRAGMA foreign_keys = OFF; DROP TRIGGER plan_versions_no_update; "
                     "UPDATE patients SET id = 9223372036854775807; UPDATE plan_versions SET "
                     "patient_id = 9223372036854775807", "patient number"),
}  # fmt: skip


@pytest.mark.parametrize("case", sorted(ODD))
def test_a_backup_with_odd_rows_is_refused_in_words(case, tmp_path, vetfluid_home):
    sql, named = ODD[case]
    backup = _backup_of(tmp_path, ["Bella"])
    with sqlite3.connect(backup) as db:
        db.executescript(sql)
    db.close()
    path = vetfluid_home / DATABASE_NAME
    with Records.open(path) as records:
        _fill(records, ["Max"])
        identity = records.database_id
    with pytest.raises(RecordsError) as refused:
        restore_records(backup, path=path)
    words = refused.value.one_line()
    assert named in words and "nothing was restored" in words, words
    with Records.open(path) as records:
        assert _names(records) == ["Max"] and records.database_id == identity


def test_a_patient_of_a_species_no_longer_in_the_table_is_restored(tmp_path, vetfluid_home):
    """A clinic's records may hold a species since removed from the table (find_patients
    reads them by id): a well-formed id is restored, never refused."""
    backup = _backup_of(tmp_path, ["Bella"])
    with sqlite3.connect(backup) as db:
        db.execute("UPDATE patients SET species_id = 'quokka'")
    db.close()
    restore_records(backup, path=vetfluid_home / DATABASE_NAME)
    with Records.open(vetfluid_home / DATABASE_NAME) as records:
        assert records.patient(1).species_id == "quokka"


# ---- the window ------------------------------------------------------------------------------
def _save(qtbot, window, name: str) -> None:  # noqa: ANN001
    window.open_demo("dehydrated_dog")
    qtbot.waitUntil(lambda: window.session.plan is not None)
    assert window.save_version(name=name, author="AB") is not None


# ---- 4: a restore killed midway leaves nothing behind for long -----------------------------
def _gone_pid() -> int:
    """A process number no process has now."""
    pid = 4_000_000
    while True:
        try:
            os.kill(pid, 0)
        except ProcessLookupError:
            return pid
        except OSError:  # there, but another user's
            pid += 1
            continue
        pid += 1


def _aged(path: Path) -> Path:
    old = time.time() - 3600  # an hour ago: before this process started
    os.utime(path, (old, old))
    return path


@pytest.mark.skipif(os.name != "posix", reason="process numbers are probed on POSIX")
def test_leftovers_of_a_killed_restore_are_removed_and_nothing_else(tmp_path, vetfluid_home):
    from vetfluid.records.store import RESTORE_AREA
    from vetfluid.records.work_session import WorkSession

    area = vetfluid_home / RESTORE_AREA
    area.mkdir(mode=0o700)
    dead = area / f"restore-{_gone_pid()}-abc123"
    dead.mkdir()
    (dead / DATABASE_NAME).write_bytes(b"x" * 1000)
    _aged(dead)
    live = area / f"restore-{os.getpid()}-def456"  # a restore under way in this process
    live.mkdir()
    _aged(live)
    # staged beside the records file by an earlier vetfluid (no process in the name) and
    # by this one (its process gone)
    staged = [vetfluid_home / f".{DATABASE_NAME}.k2j4h5_1.restoring{side}"
              for side in ("", "-wal")]  # fmt: skip
    staged.append(vetfluid_home / f".{DATABASE_NAME}.{_gone_pid()}-zz9.restoring")
    for leftover in staged:
        leftover.write_bytes(b"x")
        _aged(leftover)
    fresh = vetfluid_home / f".{DATABASE_NAME}.{_gone_pid()}-new.restoring"
    fresh.write_bytes(b"x")  # younger than this process: not touched
    users = [vetfluid_home / f".{DATABASE_NAME}.notes", vetfluid_home / "my.restoring",
             vetfluid_home / f".{DATABASE_NAME}.a.restoring.txt"]  # fmt: skip
    for kept in users:
        kept.write_bytes(b"mine")
        _aged(kept)
    WorkSession.open(screen=None).records.close()
    assert not dead.exists()
    assert not any(p.exists() for p in staged)
    assert live.exists() and fresh.exists()
    assert all(p.read_bytes() == b"mine" for p in users)


def test_a_restore_keeps_its_files_in_an_owner_only_place_and_removes_them(
    tmp_path, vetfluid_home, monkeypatch
):
    from vetfluid.records import store

    backup = _backup_of(tmp_path, ["Bella"])
    seen: list[tuple[Path, int, int]] = []
    opened = store.Records._open_file.__func__

    def noting(cls, path):  # noqa: ANN001, ANN202
        if path.parent.parent.name == store.RESTORE_AREA:
            seen.append((path, stat.S_IMODE(path.parent.stat().st_mode),
                         stat.S_IMODE(path.stat().st_mode) if path.exists() else 0))  # fmt: skip
        return opened(cls, path)

    monkeypatch.setattr(store.Records, "_open_file", classmethod(noting))
    before = set(Path(store.tempfile.gettempdir()).glob("vetfluid-restore-*"))
    restore_records(backup, path=vetfluid_home / DATABASE_NAME)
    assert seen and all(folder == 0o700 and mode in (0, 0o600) for _, folder, mode in seen)
    assert set(Path(store.tempfile.gettempdir()).glob("vetfluid-restore-*")) == before
    assert list((vetfluid_home / store.RESTORE_AREA).iterdir()) == []
    assert not list(vetfluid_home.glob(".*.restoring*"))


# ---- 5: a restore that failed leaves the session as it was -----------------------------------
def _refused_backup(tmp_path: Path) -> Path:
    """A backup the restore refuses after the question (a version number vetfluid never
    writes: finding 3)."""
    backup = _backup_of(tmp_path, ["Bella"], name="odd.sqlite")
    with sqlite3.connect(backup) as db:
        db.executescript(ODD["version_text"][0])
    db.close()
    return backup


def test_a_failed_restore_offers_no_other_windows_draft(
    qtbot, window, answer, tmp_path, vetfluid_home
):
    backup = _refused_backup(tmp_path)
    _save(qtbot, window, "Max")
    with Records.open(vetfluid_home / DATABASE_NAME) as other_window:  # its autosave
        other_window.save_draft(_legacy_draft(None, tag="another-window"))
    not_restored = []
    answer({REPLACE: "Replace the records",
            "were not restored": lambda: not_restored.append(1)})  # fmt: skip
    assert not window.restore_records(backup)  # any draft question fails the test
    assert not_restored and window.records is not None
    with Records.open(vetfluid_home / DATABASE_NAME) as records:
        assert records.draft()["tag"] == "another-window"  # left for its window


def test_a_failed_restore_offers_back_this_windows_own_draft(qtbot, window, answer, tmp_path):
    backup = _refused_backup(tmp_path)
    _save(qtbot, window, "Max")
    window.session.update(weight_kg=33.0)
    qtbot.waitUntil(lambda: window.session.plan.request.weight_kg == 33.0)
    answer({REPLACE: "Replace the records", LEAVE: "Keep as draft",
            "were not restored": lambda: None,
            "Restore it?": QMessageBox.StandardButton.Yes})  # fmt: skip
    assert not window.restore_records(backup)
    assert window.session.plan is not None and window.session.plan.request.weight_kg == 33.0


# ---- 6: only the meta rows vetfluid writes come from a backup -------------------------------
@pytest.mark.parametrize("engine", ["sqlite", "postgresql"])
def test_only_known_meta_rows_are_restored(engine, tmp_path, vetfluid_home, request):
    backup = _backup_of(tmp_path, ["Bella"])
    with sqlite3.connect(backup) as db:
        db.executescript("UPDATE meta SET value = 'CAFE' WHERE key = 'database_id'; INSERT "
                         "INTO meta VALUES ('evil', 'x'), ('schema_version2', '9')")  # fmt: skip
    db.close()
    if engine == "sqlite":
        place = {"path": vetfluid_home / DATABASE_NAME}
    else:
        place = {"url": request.getfixturevalue("postgres_url")}
    restore_records(backup, **place)
    with Records.open(place.get("path"), url=place.get("url")) as records:
        with records._connection() as conn:
            stored = dict(conn.exec_driver_sql("SELECT key, value FROM meta").fetchall())
    assert set(stored) == {"schema_version", "database_id"}
    assert stored["database_id"] != "CAFE"


# ---- the quick review of the fourth: what the sweep must never touch, a legacy draft -----------
def test_a_folder_in_the_temporary_folder_named_like_an_old_restore_is_never_removed(
    tmp_path, monkeypatch
):
    """A data folder (or any folder of the user's) under the system's temporary folder,
    named as an earlier vetfluid named its restore folders, once went whole, records and
    all, at the next records open: the sweep removes nothing outside vetfluid's own places."""
    import tempfile

    from vetfluid.records.store import remove_restore_leftovers
    from vetfluid.records.work_session import WorkSession

    temporary = tmp_path / "tmp"
    temporary.mkdir()
    monkeypatch.setattr(tempfile, "tempdir", str(temporary))
    home = temporary / "vetfluid-restore-clinic"
    home.mkdir()
    monkeypatch.setenv("VETFLUID_HOME", str(home))
    with Records.open(home / DATABASE_NAME) as records:
        _fill(records, ["Rex"])
    _aged(home)
    remove_restore_leftovers()  # as a restore does before it opens anything
    WorkSession.open(screen=None).records.close()
    with Records.open(home / DATABASE_NAME) as records:
        assert _names(records) == ["Rex"]


@pytest.mark.skipif(os.name != "posix", reason="process numbers are probed on POSIX")
@pytest.mark.parametrize("pid", ["3000000000", "99999999999999999999"])
def test_a_process_number_out_of_range_in_a_leftovers_name_stops_nothing(pid, vetfluid_home):
    """A name with a process number the system cannot even ask about (over the C range)
    once stopped every start with a traceback: such a file is taken as another process's,
    and kept."""
    from vetfluid.records.store import RESTORE_AREA
    from vetfluid.records.work_session import WorkSession

    area = vetfluid_home / RESTORE_AREA
    area.mkdir(mode=0o700)
    odd = area / f"restore-{pid}-abc"
    odd.mkdir()
    beside = vetfluid_home / f".{DATABASE_NAME}.{pid}-abc.restoring"
    beside.write_bytes(b"x")
    _aged(odd), _aged(beside)
    WorkSession.open(screen=None).records.close()
    assert odd.exists() and beside.exists()


def test_a_restore_never_binds_a_legacy_draft_to_whoever_has_its_id(tmp_path, vetfluid_home):
    """A draft an earlier vetfluid wrote (a patient id, no identity, no mark) may have been
    written for another animal in other records: a restore carries it over as it is, so it
    is still offered without a patient, never stamped with the mark of whoever has that id."""
    from vetfluid.records.work_session import WorkSession

    with Records.open(vetfluid_home / DATABASE_NAME) as records:
        _fill(records, ["Max"])
        records.save_draft(_legacy_draft(1))
        backup = tmp_path / "same.sqlite"
        back_up(records, backup)
    restore_records(backup, path=vetfluid_home / DATABASE_NAME)
    with Records.open(vetfluid_home / DATABASE_NAME) as records:
        draft = records.draft()
        assert draft is not None and "database_id" not in draft and "patient" not in draft
        assert WorkSession(screen=None, records=records)._binds(draft) is False
