"""Backing up and restoring the patient records (issue 21, vetfluid/records/backups.py): a
file that is not a vetfluid backup is refused in words before anything changes; a restore
keeps the records as they were in an automatic backup first, on the SQLite file and on a
PostgreSQL server (the ``engine`` fixture: skipped without a server, a failure in CI).

The counts checked are those of the patients and versions each test saves itself."""

from __future__ import annotations

import os
import sqlite3
import stat
from pathlib import Path

import pytest

from vetfluid.planning.demos import DEMOS
from vetfluid.planning.plan import build_plan
from vetfluid.records.backups import (
    back_up,
    describe_records,
    describe_records_file,
    restore_records,
)
from vetfluid.records.store import DATABASE_NAME, Records, RecordsError


def _fill(records: Records, names: list[str], versions_each: int = 1) -> None:
    plan = build_plan(DEMOS["dehydrated_dog"].request)
    for name in names:
        pid = records.add_patient(name=name, species_id="dog")
        for _ in range(versions_each):
            records.save_version(patient_id=pid, plan=plan, acknowledged={}, author="AB")


def _names(records: Records) -> list[str]:
    return sorted(p.name for p in records.find_patients(""))


def _restore_to(open_records, backup: Path):  # noqa: ANN202 — Restored
    """Restore into the test's records, file or server."""
    if "://" in open_records.where:
        return restore_records(backup, url=open_records.where)
    return restore_records(backup, path=Path(open_records.where))


def test_a_backup_says_what_it_holds(open_records, tmp_path):
    with open_records() as records:
        _fill(records, ["Rex", "Tess"], versions_each=2)
        summary = back_up(records, tmp_path / "copy.sqlite")
        assert summary == describe_records(records)
    assert (summary.patients, summary.versions) == (2, 4)
    assert summary.words() == "2 patients, 4 plan versions"
    assert summary.newest_saved_at  # when the newest version was saved
    assert stat.S_IMODE(os.stat(tmp_path / "copy.sqlite").st_mode) == 0o600


def test_a_restore_keeps_what_it_replaces_first(open_records, tmp_path):
    """Saved after the backup, Milo is gone from the records once it is restored, and is in
    the automatic backup made first: nothing saved is lost."""
    with open_records() as records:
        _fill(records, ["Rex", "Tess"])
        back_up(records, tmp_path / "monday.sqlite")
        _fill(records, ["Milo"])
    restored = _restore_to(open_records, tmp_path / "monday.sqlite")
    assert (restored.backup.patients, restored.before.patients) == (2, 3)
    with open_records() as records:
        assert _names(records) == ["Rex", "Tess"]
        assert records.versions(records.find_patients("Rex")[0].id)  # readable, whole
    kept = restored.kept_at
    assert kept.parent.name == "backups" and kept.is_file()
    assert stat.S_IMODE(os.stat(kept).st_mode) == 0o600
    with Records.open(kept) as copy:
        assert _names(copy) == ["Milo", "Rex", "Tess"]


@pytest.mark.parametrize(
    ("content", "words"),
    [
        (b"", "is not a vetfluid records backup: it is empty"),
        (b'{"format": "vetfluid-plan-request"}', "it is not a database file"),
        (b"SQLite format 3\x00" + b"\x00" * 200, "may be damaged"),
    ],
)
def test_a_file_that_is_not_a_backup_is_refused_and_nothing_changes(
    open_records, tmp_path, content, words
):
    with open_records() as records:
        _fill(records, ["Rex"])
    chosen = tmp_path / "chosen.sqlite"
    chosen.write_bytes(content)
    with pytest.raises(RecordsError, match=words) as refused:
        _restore_to(open_records, chosen)
    assert "nothing was restored" in refused.value.one_line()
    with open_records() as records:
        assert _names(records) == ["Rex"]


def test_another_programs_database_is_not_a_backup(tmp_path):
    other = tmp_path / "clinic-billing.sqlite"
    with sqlite3.connect(other) as db:
        db.execute("CREATE TABLE invoices (id INTEGER PRIMARY KEY)")
    with pytest.raises(RecordsError, match="a database, but not one of vetfluid's records"):
        describe_records_file(other)


def test_a_backup_from_a_newer_vetfluid_is_refused(tmp_path):
    newer = tmp_path / "newer.sqlite"
    with Records.open(newer):
        pass
    with sqlite3.connect(newer) as db:
        db.execute("UPDATE meta SET value = '99' WHERE key = 'schema_version'")
    with pytest.raises(RecordsError, match="written by a newer vetfluid"):
        describe_records_file(newer)


def test_a_folder_or_a_missing_file_is_not_a_backup(tmp_path):
    for path in (tmp_path, tmp_path / "gone.sqlite"):
        with pytest.raises(RecordsError, match="not a vetfluid records backup: it is not a file"):
            describe_records_file(path)


def test_the_records_file_is_neither_written_over_nor_restored_from_itself(vetfluid_home):
    path = vetfluid_home / DATABASE_NAME
    with Records.open(path) as records:
        _fill(records, ["Rex"])
        with pytest.raises(RecordsError, match="is the records file itself"):
            back_up(records, path)
    with pytest.raises(RecordsError, match="is the records file itself"):
        restore_records(path, path=path)
    with Records.open(path) as records:
        assert _names(records) == ["Rex"]


def test_a_damaged_records_file_is_kept_as_it_lay_and_replaced(tmp_path, vetfluid_home):
    """The case a restore is for: the records file cannot be opened. Its bytes (and its
    -wal) are kept in the automatic backup folder, and the backup takes its place."""
    with Records.open(tmp_path / "good.sqlite") as good:
        _fill(good, ["Rex"])
    path = vetfluid_home / DATABASE_NAME
    path.write_bytes(b"SQLite format 3\x00" + b"\x13" * 5000)  # damaged past its header
    path.with_name(DATABASE_NAME + "-wal").write_bytes(b"half a journal")
    # read-only: a failed read-write open of it lets SQLite remove that -wal whenever its
    # connection is finally closed (at garbage collection), which made this test pass by luck
    with pytest.raises(RecordsError):
        describe_records_file(path)
    restored = restore_records(tmp_path / "good.sqlite", path=path)
    assert restored.before is None and restored.kept_at.read_bytes()[:16] == b"SQLite format 3\x00"
    assert restored.kept_at.read_bytes() == b"SQLite format 3\x00" + b"\x13" * 5000
    kept_wal = restored.kept_at.with_name(restored.kept_at.name + "-wal")
    assert kept_wal.read_bytes() == b"half a journal"
    with Records.open(path) as records:
        assert _names(records) == ["Rex"]


def test_restoring_where_there_were_no_records_yet(tmp_path, vetfluid_home):
    """A new workstation: no records file yet; nothing to keep, the backup becomes it."""
    with Records.open(tmp_path / "good.sqlite") as good:
        _fill(good, ["Rex", "Tess"])
    restored = restore_records(tmp_path / "good.sqlite", path=vetfluid_home / DATABASE_NAME)
    assert restored.kept_at is None and restored.before is None
    with Records.open(vetfluid_home / DATABASE_NAME) as records:
        assert _names(records) == ["Rex", "Tess"]
