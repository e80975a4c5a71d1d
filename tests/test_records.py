"""Patient records: versions never overwritten, nothing lost on a crash, clear refusals."""

from __future__ import annotations

import json
import os
import random
import signal
import sqlite3
import stat
import subprocess
import sys
import textwrap
import time
from pathlib import Path

import pytest

from vetfluid.demos import DEMOS
from vetfluid.errors import InputError
from vetfluid.plan import build_plan
from vetfluid.records import Records, RecordsError

ROOT = Path(__file__).resolve().parents[1]


@pytest.fixture()
def records(tmp_path):
    with Records.open(tmp_path / "records.sqlite") as db:
        yield db


def test_new_file_is_owner_only_wal_with_foreign_keys(records):
    mode = stat.S_IMODE(os.stat(records.path).st_mode)
    assert mode == 0o600
    with sqlite3.connect(records.path) as raw:
        assert raw.execute("PRAGMA journal_mode").fetchone()[0] == "wal"
    assert records._db.execute("PRAGMA foreign_keys").fetchone()[0] == 1


def test_versions_are_added_never_overwritten(records):
    pid = records.add_patient(name="Rex", species_id="dog", client_ref="C-12")
    plan = build_plan(DEMOS["dehydrated_dog"].request)
    assert records.save_version(patient_id=pid, plan=plan, acknowledged={}, author="AB") == 1
    assert records.save_version(patient_id=pid, plan=plan, acknowledged={"X": "why"}) == 2
    versions = records.versions(pid)
    assert [v.version for v in versions] == [1, 2]
    assert versions[0].request["species_id"] == "dog" and versions[0].author == "AB"
    assert versions[1].acknowledged == {"X": "why"}
    assert versions[0].plan["total_ml_first_24h"] == pytest.approx(plan.total_ml_first_24h)
    with pytest.raises(sqlite3.DatabaseError, match="immutable"):
        records._db.execute("UPDATE plan_versions SET author = 'Z'")
    with pytest.raises(sqlite3.DatabaseError, match="immutable"):
        records._db.execute("DELETE FROM plan_versions")


def test_observations_follow_the_screen_and_keep_their_recording_time(records):
    pid = records.add_patient(name="Rex", species_id="dog")
    plan = build_plan(DEMOS["dehydrated_dog"].request)
    records.save_version(
        patient_id=pid, plan=plan, acknowledged={}, observations=[{"hour": 2.0, "weight_kg": 24.4}]
    )
    vid = records.versions(pid)[0].id
    first_recorded = records._db.execute("SELECT recorded_at FROM observations").fetchone()[0]
    later = [{"hour": 2.0, "weight_kg": 24.4}, {"hour": 6.0, "weight_kg": 24.9}]
    assert records.keep_observations(version_id=vid, observations=later)
    assert records.observations(vid) == later
    # nothing changed, nothing written
    assert not records.keep_observations(version_id=vid, observations=later)
    times = [r[0] for r in records._db.execute("SELECT recorded_at FROM observations ORDER BY id")]
    assert times[0] == first_recorded
    # the nurse removed the first
    assert records.keep_observations(version_id=vid, observations=later[1:])
    assert records.observations(vid) == later[1:]


def test_a_damaged_observation_row_is_returned_as_text_not_a_crash(records):
    pid = records.add_patient(name="Rex", species_id="dog")
    records.save_version(patient_id=pid, plan=build_plan(DEMOS["dehydrated_dog"].request),
                         acknowledged={})  # fmt: skip
    vid = records.versions(pid)[0].id
    records.add_observation(version_id=vid, observation={"hour": 1.0, "weight_kg": 24.2})
    records._db.execute(
        "INSERT INTO observations (plan_version_id, observation_json, recorded_at)"
        " VALUES (?, '{\"hour\": 2', 'now')",
        (vid,),
    )
    assert records.observations(vid) == [{"hour": 1.0, "weight_kg": 24.2}, '{"hour": 2']
    # nobody saw the damaged row, so nobody removed it: keeping what is on screen leaves it
    records.keep_observations(version_id=vid, observations=[{"hour": 1, "weight_kg": 24.2}])
    assert records.observations(vid) == [{"hour": 1.0, "weight_kg": 24.2}, '{"hour": 2']


def test_search_patients_by_name_species_or_client(records):
    records.add_patient(name="Rex", species_id="dog", client_ref="C-12")
    records.add_patient(name="Spike", species_id="bearded_dragon")
    assert [p.name for p in records.find_patients("rex")] == ["Rex"]
    assert [p.name for p in records.find_patients("dragon")] == ["Spike"]
    assert [p.name for p in records.find_patients("C-12")] == ["Rex"]
    assert [p.name for p in records.find_patients("'; DROP TABLE patients; --")] == []
    assert len(records.find_patients()) == 2  # parameters only: the text above was harmless


def test_draft_is_kept_and_offered_back(tmp_path):
    path = tmp_path / "records.sqlite"
    with Records.open(path) as db:
        db.save_draft({"request": {"species_id": "cat"}, "acknowledged": {}})
    with Records.open(path) as db:
        assert db.draft()["request"]["species_id"] == "cat"
        db.clear_draft()
        assert db.draft() is None


def test_backup_restore_and_export_import(records, tmp_path):
    pid = records.add_patient(name="Rex", species_id="dog")
    plan = build_plan(DEMOS["dehydrated_dog"].request)
    records.save_version(patient_id=pid, plan=plan, acknowledged={})
    vid = records.versions(pid)[0].id
    records.add_observation(version_id=vid, observation={"hour": 4, "weight_kg": 24.5})
    copy = records.backup(tmp_path / "backup.sqlite")
    with Records.open(copy) as restored:
        assert restored.versions(pid)[0].version == 1
    target = tmp_path / "restored.sqlite"
    Records.restore(copy, target)
    with Records.open(target) as restored:
        assert restored.observations(vid) == [{"hour": 4, "weight_kg": 24.5}]
    exported = json.loads(json.dumps(records.export_patient(pid)))
    new_id = records.import_patient(exported)
    assert new_id != pid
    assert records.export_patient(new_id)["plan_versions"] == exported["plan_versions"]
    with pytest.raises(InputError):
        records.import_patient({"format": "something else"})


def test_a_newer_schema_is_refused_and_left_untouched(tmp_path):
    path = tmp_path / "records.sqlite"
    Records.open(path).close()
    with sqlite3.connect(path) as raw:
        raw.execute("UPDATE meta SET value = '99' WHERE key = 'schema_version'")
    before = path.read_bytes()
    with pytest.raises(RecordsError, match="newer vetfluid"):
        Records.open(path)
    assert path.read_bytes() == before


def test_a_corrupted_or_foreign_file_is_refused_and_left_untouched(tmp_path):
    path = tmp_path / "records.sqlite"
    path.write_bytes(b"this is not a database" * 100)
    before = path.read_bytes()
    with pytest.raises(RecordsError, match="not a usable vetfluid records file"):
        Records.open(path)
    assert path.read_bytes() == before
    Records.open(tmp_path / "other.sqlite").close()  # the program can still open another file


def test_a_read_only_folder_is_a_clear_message(tmp_path, monkeypatch):
    import errno

    import vetfluid.records

    def refuse(*args, **kwargs):
        raise PermissionError(errno.EACCES, "Permission denied")

    monkeypatch.setattr(vetfluid.records.os, "open", refuse)  # as a read-only folder answers
    with pytest.raises(RecordsError, match="cannot create.*Permission denied"):
        Records.open(tmp_path / "records.sqlite")
    assert not (tmp_path / "records.sqlite").exists()


def test_a_full_disk_is_a_clear_message_and_keeps_what_was_saved(records):
    pid = records.add_patient(name="Rex", species_id="dog")
    plan = build_plan(DEMOS["dehydrated_dog"].request)
    records.save_version(patient_id=pid, plan=plan, acknowledged={})
    records.save_draft({"request": {"species_id": "dog"}})
    pages = records._db.execute("PRAGMA page_count").fetchone()[0]
    records._db.execute(f"PRAGMA max_page_count = {pages}")  # SQLite now answers "disk is full"
    with pytest.raises(RecordsError, match="full"):
        for _ in range(200):
            records.save_version(patient_id=pid, plan=plan, acknowledged={})
    assert records.versions(pid)[0].version == 1
    assert records.draft() == {"request": {"species_id": "dog"}}


WRITER = textwrap.dedent(
    """
    import sys
    from vetfluid.demos import DEMOS
    from vetfluid.plan import build_plan
    from vetfluid.records import Records

    db = Records.open(sys.argv[1])
    pid = db.find_patients("Kill")[0].id if db.find_patients("Kill") else db.add_patient(
        name="Kill", species_id="dog")
    plan = build_plan(DEMOS["dehydrated_dog"].request)
    print("ready", flush=True)
    while True:
        number = db.save_version(patient_id=pid, plan=plan, acknowledged={"A": "b"})
        print(number, flush=True)
    """
)


def test_kill_during_saves_never_loses_a_returned_version(tmp_path):
    """SIGKILL a process saving versions in a loop, 50 times at random moments."""
    path = tmp_path / "kill.sqlite"
    rng = random.Random(20261201)
    confirmed: set[int] = set()
    runs = 50
    for _ in range(runs):
        child = subprocess.Popen([sys.executable, "-c", WRITER, str(path)],
                                 stdout=subprocess.PIPE, text=True, cwd=ROOT)  # fmt: skip
        assert child.stdout is not None
        assert child.stdout.readline().strip() == "ready"
        time.sleep(rng.uniform(0.0, 0.08))
        child.send_signal(signal.SIGKILL)
        out, _ = child.communicate()
        confirmed.update(int(line) for line in out.split() if line.isdigit())
        with sqlite3.connect(path) as raw:
            assert raw.execute("PRAGMA integrity_check").fetchone()[0] == "ok"
    with Records.open(path) as db:
        pid = db.find_patients("Kill")[0].id
        saved = {v.version for v in db.versions(pid)}
    assert confirmed, "no save completed in any run"
    assert confirmed <= saved
    print(f"kill test: {runs} runs, {len(confirmed)} confirmed saves, {len(saved)} on disk")


def test_compare_two_versions():
    from vetfluid.records import compare_versions
    from vetfluid.serialize import plan_dict

    first = plan_dict(build_plan(DEMOS["dehydrated_dog"].request))
    from dataclasses import replace

    second = plan_dict(build_plan(replace(DEMOS["dehydrated_dog"].request, weight_kg=25.0,
                                          dehydration_percent=4)))  # fmt: skip
    rows = {what: (a, b, differs) for what, a, b, differs in compare_versions(first, second)}
    assert rows["Weight"] == ("24 kg", "25 kg", True)
    assert rows["Dehydration"][2] and rows["Fluid"][2] is False
    assert rows["Phase 1"][0].startswith("replacement h 0–12")


def test_compare_gives_divided_doses_as_drawn_up():
    import re
    from dataclasses import replace

    from vetfluid.records import compare_versions
    from vetfluid.serialize import plan_dict

    request = DEMOS["small_gerbil"].request
    first = plan_dict(build_plan(request))
    second = plan_dict(build_plan(replace(request, weight_kg=0.075)))
    rows = {what: (a, b) for what, a, b, _ in compare_versions(first, second)}
    for side, data in enumerate((first, second)):
        for i, p in enumerate(data["phases"]):
            assert p["mode"] == "intermittent"
            # the schedule's words for this phase's doses: "Give D mL SC in N sites, S mL per site"
            action = next(e["action"] for e in data["schedule"] if e["phase"] == p["kind"])
            dose, sites, per_site = re.fullmatch(
                r"Give (\S+) mL SC in (\d+) sites?, (\S+) mL per site", action
            ).groups()
            shown = rows[f"Phase {i + 1}"][side]
            assert f": {dose} mL every {p['interval_h']:g} h" in shown
            assert shown.endswith(f"{sites} sites of {per_site} mL")


def _store_draft_text(records, text: str) -> None:
    """A draft row holding ``text`` as it is, as a disk cut short or another program
    might leave it."""
    records._write(
        "INSERT INTO draft (id, content_json, saved_at) VALUES (1, ?, ?)",
        (text, "2026-12-04T06:00:00+00:00"),
    )


@pytest.mark.parametrize("stored", ['{"request": {"species_id": "dog"', "[1, 2]", "null"])
def test_a_draft_that_cannot_be_read_is_set_aside_in_a_file_not_lost(tmp_path, stored):
    """Cut short, or not a draft at all: never offered, never overwritten unseen; the text
    is kept in an owner-only file beside the records, and the error says where."""
    with Records.open(tmp_path / "records.sqlite") as records:
        _store_draft_text(records, stored)
        with pytest.raises(RecordsError, match="set aside as") as raised:
            records.draft()
        [kept] = tmp_path.glob("records-unreadable-draft-*.txt")
        assert str(kept) in str(raised.value)
        assert kept.read_text() == stored and kept.stat().st_mode & 0o777 == 0o600
        assert records.draft() is None  # the next autosave writes over nothing unseen


def test_a_draft_that_is_not_utf8_is_set_aside_byte_for_byte(tmp_path):
    with Records.open(tmp_path / "records.sqlite") as records:
        records._db.execute(
            "INSERT INTO draft (id, content_json, saved_at) "
            "VALUES (1, CAST(X'7B227265717565737422FF' AS TEXT), 'x')"
        )
        with pytest.raises(RecordsError, match="set aside as"):
            records.draft()
        [kept] = tmp_path.glob("records-unreadable-draft-*.txt")
        assert kept.read_bytes() == b'{"request"\xff'


def test_a_draft_that_cannot_be_set_aside_stays_and_is_not_overwritten(tmp_path, monkeypatch):
    """No room for the copy: the draft stays where it is, saving a new draft is refused,
    and once the copy can be written it is set aside as usual."""
    import errno
    import os

    import vetfluid.records as records_module

    real_open = os.open

    def no_space(path, *args, **kwargs):
        if "unreadable-draft" in str(path):
            raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC), str(path))
        return real_open(path, *args, **kwargs)

    with Records.open(tmp_path / "records.sqlite") as records:
        _store_draft_text(records, "[cut")
        monkeypatch.setattr(records_module.os, "open", no_space)
        with pytest.raises(RecordsError, match="nor copied"):
            records.draft()
        with pytest.raises(RecordsError, match="nor copied"):
            records.save_draft({"request": None})  # tries the copy again, refused
        stored = records._db.execute("SELECT content_json FROM draft").fetchone()[0]
        assert stored == "[cut"
        monkeypatch.undo()
        records.save_draft({"request": None})  # the copy is made first, then the draft saved
        assert records.last_set_aside.read_text() == "[cut"
        assert records.draft() == {"request": None}


def test_a_set_aside_copy_that_cannot_be_written_leaves_no_half_file(tmp_path, monkeypatch):
    """The file is created but the disk fills while writing: no empty copy is left, the
    draft stays, and the error is a RecordsError (not an OSError out of a Qt slot)."""
    import errno
    import os

    import vetfluid.records as records_module

    real_fdopen = os.fdopen

    def full_disk(handle, *args, **kwargs):
        out = real_fdopen(handle, *args, **kwargs)

        def write(_data):
            raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))

        out.write = write
        return out

    with Records.open(tmp_path / "records.sqlite") as records:
        _store_draft_text(records, "[cut")
        monkeypatch.setattr(records_module.os, "fdopen", full_disk)
        with pytest.raises(RecordsError, match="nor copied"):
            records.draft()
        assert list(tmp_path.glob("records-unreadable-draft-*")) == []
        assert records._db.execute("SELECT content_json FROM draft").fetchone()[0] == "[cut"


def test_merging_kept_observations_adds_what_is_missing_and_applies_the_users_removals(
    tmp_path,
):
    """Kept in a draft while the version was locked: A was there, the user removed X and
    recorded B; meanwhile C reached the version. Merged: A, C and B; X gone; an
    unreadable stored row untouched."""
    a, x = {"hour": 1.0, "weight_kg": 24.0}, {"hour": 1.5, "weight_kg": 42.0}
    b, c = {"hour": 2.0, "weight_kg": 24.2}, {"hour": 3.0, "heart_rate_per_min": 120}
    with Records.open(tmp_path / "records.sqlite") as records:
        version = _version_of_a_dog(records)
        records.keep_observations(version_id=version, observations=[a, x, c])
        records._write(
            "INSERT INTO observations (plan_version_id, observation_json, recorded_at)"
            " VALUES (?, ?, ?)",
            (version, "{cut", "2026-12-04T06:00:00+00:00"),
        )
        added = records.merge_observations(version_id=version, observations=[a, b],
                                           based_on=[a, x])  # fmt: skip
        assert added == 1
        stored = records.observations(version)
        assert sorted(map(str, stored)) == sorted(map(str, [a, c, b, "{cut"]))
        # with nothing known of what it held, nothing is removed
        assert records.merge_observations(version_id=version, observations=[x]) == 1
        assert x in records.observations(version)


def _version_of_a_dog(records) -> int:
    pid = records.add_patient(name="Rex", species_id="dog")
    records.save_version(patient_id=pid, plan=build_plan(DEMOS["dehydrated_dog"].request),
                         acknowledged={})  # fmt: skip
    return records.versions(pid)[0].id


def test_merging_leaves_a_removal_made_on_the_version_since(tmp_path):
    """A on the version, B kept in the draft ([A, B], held [A]); A then removed from the
    reopened version: B arrives, A stays removed; B typed again meanwhile is not doubled;
    an unreadable item among the kept ones is stored as it is."""
    a, b = {"hour": 1.0, "weight_kg": 24.0}, {"hour": 2.0, "weight_kg": 24.2}
    with Records.open(tmp_path / "records.sqlite") as records:
        version = _version_of_a_dog(records)
        records.keep_observations(version_id=version, observations=[])  # A removed since
        assert records.merge_observations(version_id=version, observations=[a, b],
                                          based_on=[a]) == 1  # fmt: skip
        assert records.observations(version) == [b]
        assert records.merge_observations(version_id=version, observations=[a, b],
                                          based_on=[a]) == 0  # fmt: skip
        records.merge_observations(version_id=version, observations=["{newer", b], based_on=[])
        assert records.observations(version) == [b, "{newer"]


def test_a_failed_read_of_observations_is_a_records_error(tmp_path):
    with Records.open(tmp_path / "records.sqlite") as records:
        version = _version_of_a_dog(records)
        records._db.execute("DROP TABLE observations")  # as a damaged file would read
        with pytest.raises(RecordsError, match="could not read the observations"):
            records.observations(version)
