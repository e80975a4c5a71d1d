"""Shared records across workstations, the review's open findings (issue 21): a server down
at the start keeps the work in this computer's draft and says so once; a changed records
setting applies at once without losing the draft; the same observation entered on two
workstations is kept once and the second is told; a draft never binds to another
database's patient (a restore reuses ids); a server lost mid-session is one message.

Without a server the PostgreSQL tests are skipped (tests/conftest.py); the "unreachable"
server is a port nothing listens on (9, discard, closed here), so no network is used. The
behaviour is the project's own specification (issue 21, DEVELOPERS.md "Nothing recorded is
lost", docs/work_keeping.md): no clinical source applies, but for the call that two
identical entries of one hour are one reading: a urine collection over a stated period
(Observation.urine_ml with urine_period_h) is measured once, and counted twice it would
double the measured output the plan replaces (the ins-and-outs method, docs/model.md).
"""

from __future__ import annotations

import dataclasses

import pytest

from tests.test_work_session import (
    CAT,
    DOG,
    Clerk,
    Desk,
    open_demo,
    saved_dog,
)
from vetfluid.course.observations import Observation, observation_record
from vetfluid.records.location import server_address
from vetfluid.records.store import Records, RecordsError, _drafts_file
from vetfluid.records.work_session import Answer, Asked, NewPatient, State, WorkSession

UNREACHABLE = "postgresql://vet@127.0.0.1:9/vetfluid"


def start_here(answers: dict | None = None, path=None) -> Clerk:  # noqa: ANN001
    """A window starting on the records of the setting (the environment or the settings
    file), as the window does: a blank planner, then what the start has to say."""
    desk = Desk()
    desk.work = WorkSession.open(desk, path)
    desk.recompute()
    clerk = Clerk(desk, answers or {})
    clerk.follow(desk.work.look_at_draft())
    return clerk


def edited_dog(clerk: Clerk, dehydration_percent: float = 7.0) -> None:
    open_demo(clerk)
    clerk.desk.update(dehydration_percent=dehydration_percent)
    clerk.follow(clerk.work.autosave())


def _close(clerk: Clerk) -> None:
    clerk.follow(clerk.work.close())


# ---- 1 and 8: a server that cannot be reached ---
def test_a_server_down_at_the_start_keeps_the_work_in_this_computers_draft(monkeypatch):
    monkeypatch.setenv("VETFLUID_RECORDS_URL", UNREACHABLE)
    clerk = start_here()
    records = clerk.work.records
    assert records is not None and records.unreachable is not None
    drafts = _drafts_file(server_address(UNREACHABLE))
    [said] = [t for t in clerk.shown if "kept as the draft on this computer" in t]  # once
    assert said.count("cannot be reached") == 1 and str(drafts) in said
    assert "Plan versions cannot be saved" in said and "Records settings" in said
    assert "backup" not in said
    assert "not reachable" in clerk.work.records_label()
    edited_dog(clerk)
    assert clerk.work.state is State.UNSAVED  # written: into the draft on this computer
    with Records.open(drafts) as local:
        assert local.draft()["request"]["dehydration_percent"] == 7.0
    reply = clerk.work.save_version(patient=NewPatient(name="Rex"), author="AB")
    [refused] = reply.messages
    assert refused.text.startswith("Not saved:") and refused.text.count("cannot be reached") == 1
    assert str(drafts) in refused.text and clerk.work.state is State.UNSAVED
    _close(clerk)
    again = start_here({Asked.RESTORE_LEFT: Answer.YES})  # still down: offered all the same
    assert [q.asked for q in again.asked] == [Asked.RESTORE_LEFT]
    assert again.desk.request.dehydration_percent == 7.0
    _close(again)


def _refuse_connections(postgres_url: str, refused: bool) -> None:
    from sqlalchemy.engine import make_url

    from tests.conftest import _admin_connection

    name = make_url(postgres_url).database
    with _admin_connection() as admin:
        admin.execute(f"ALTER DATABASE {name} WITH ALLOW_CONNECTIONS {str(not refused).lower()}")
        if refused:
            admin.execute("SELECT pg_terminate_backend(pid) FROM pg_stat_activity "
                          "WHERE datname = %s", (name,))  # fmt: skip


def test_once_the_server_answers_the_draft_is_there_and_versions_are_saved(
    postgres_url, monkeypatch
):
    Records.open(url=postgres_url).close()  # the tables made while it answers
    monkeypatch.setenv("VETFLUID_RECORDS_URL", postgres_url)
    _refuse_connections(postgres_url, True)
    try:
        clerk = start_here()
        assert clerk.work.records.unreachable is not None
        edited_dog(clerk)
    finally:
        _refuse_connections(postgres_url, False)
    reply = clerk.follow(clerk.work.reconnect())
    assert "answers again" in reply.status and clerk.work.records_label() == ""
    assert clerk.work.records.draft()["request"]["dehydration_percent"] == 7.0
    assert clerk.save() == 1
    assert clerk.work.records.draft() is None  # saved: the draft is done with
    _close(clerk)


def test_a_server_lost_mid_session_is_one_message_naming_the_draft_and_no_backup(postgres_url):
    plan_request = DOG
    from vetfluid.planning.plan import build_plan

    with Records.open(url=postgres_url) as db:
        pid = db.add_patient(name="Rex", species_id="dog")
        db.save_version(patient_id=pid, plan=build_plan(plan_request), acknowledged={})
        vid = db.versions(pid)[0].id
        _refuse_connections(postgres_url, True)
        try:
            for read in (lambda: db.versions(pid), lambda: db.observations(vid),
                         lambda: db.find_patients("rex"), lambda: db.patient(pid)):  # fmt: skip
                with pytest.raises(RecordsError) as raised:
                    read()
                words = raised.value.one_line()
                assert words.count("cannot be reached") == 1 and "could not read" not in words
                assert str(db.drafts_path) in words and "backup" not in words
        finally:
            _refuse_connections(postgres_url, False)
        assert db.reach()  # tried again (at once, as a user's command asks)
        assert db.versions(pid)[0].id == vid  # and read as usual


# ---- 3: the same observation entered on two workstations ---
@pytest.fixture()
def both_on_version_1(open_records):
    """The ward saved Rex's version 1; the ICU opened it (each its own WorkSession)."""
    opened: list[Records] = []

    def on_records() -> Clerk:
        desk = Desk()
        records = open_records()
        opened.append(records)
        desk.work = WorkSession(desk, records)
        desk.recompute()
        clerk = Clerk(desk, {})
        clerk.follow(desk.work.look_at_draft())
        return clerk

    ward = on_records()
    saved_dog(ward)
    icu = on_records()
    icu.follow(icu.work.open_version(ward.work.patient_id, 1))
    yield ward, icu
    for records in opened:
        records.close()


def test_the_same_observation_from_two_workstations_is_kept_once_and_the_second_is_told(
    both_on_version_1, open_records
):
    ward, icu = both_on_version_1
    row = ward.work.saved.row_id
    urine = Observation(hour=4.0, urine_ml=60.0, urine_period_h=4.0, weight_kg=24.4)
    ward.desk.add_observation(urine)
    ward.follow(ward.work.autosave())
    icu.desk.add_observation(urine)  # typed in at the cage too, before the ICU refreshed
    reply = icu.follow(icu.work.autosave())
    [told] = reply.messages
    assert "Another workstation recorded the same observation" in told.text
    assert "hour 4: weight 24.4 kg, urine 60 mL, collected over 4 h" in told.text
    assert "kept once" in told.text and "record it again" in told.text
    with open_records() as db:
        assert db.observations(row) == [observation_record(urine)]
    # it was a second collection after all: entered again, it is kept as a second one
    icu.desk.add_observation(urine)
    assert icu.follow(icu.work.autosave()).messages == ()
    with open_records() as db:
        assert db.observations(row) == [observation_record(urine)] * 2


def test_merging_names_what_another_workstation_recorded_alike(open_records):
    from vetfluid.planning.plan import build_plan

    a, b = {"hour": 1.0, "weight_kg": 24.0}, {"hour": 2.0, "weight_kg": 24.2}
    with open_records() as db:
        pid = db.add_patient(name="Rex", species_id="dog")
        db.save_version(patient_id=pid, plan=build_plan(DOG), acknowledged={})
        vid = db.versions(pid)[0].id
        db.merge_observations(version_id=vid, observations=[a], based_on=[])  # elsewhere
        merged = db.merge_observations(version_id=vid, observations=[a, b], based_on=[])
        assert (merged.added, merged.kept_once) == (1, (a,))
        assert db.observations(vid) == [a, b]


# ---- 5: a draft never binds to another database's patient ---
def test_each_database_has_an_identity_of_its_own_made_once(open_records, tmp_path):
    with open_records() as db:
        first = db.database_id
        assert first and len(first) == 32
    with open_records() as db:
        assert db.database_id == first
    with Records.open(tmp_path / "other.sqlite") as other:
        assert other.database_id not in (None, first)


def test_an_older_database_is_given_an_identity_when_opened(open_records):
    from sqlalchemy import text

    with open_records() as db, db._engine.begin() as conn:
        conn.execute(text("DELETE FROM meta WHERE key = 'database_id'"))  # as before it
    with open_records() as db:
        made = db.database_id
        assert made
    with open_records() as db:
        assert db.database_id == made


def test_a_restore_into_the_server_gives_it_a_new_identity(postgres_url, tmp_path):
    with Records.open(url=postgres_url) as db:
        before = db.database_id
        copy = db.backup(tmp_path / "backup.sqlite")
        db.restore_into_server(copy)
        assert db.database_id not in (None, before)
    with Records.open(url=postgres_url) as db:
        assert db.database_id not in (None, before)


def _draft_of(folder) -> str:  # noqa: ANN001
    import sqlite3

    with sqlite3.connect(folder / "records.sqlite") as raw:
        return raw.execute("SELECT content_json FROM draft").fetchone()[0]


def _put_draft(path, content_json: str) -> None:  # noqa: ANN001
    import sqlite3

    with sqlite3.connect(path) as raw:
        raw.execute("DELETE FROM draft")
        raw.execute("INSERT INTO draft (id, content_json, saved_at) VALUES (1, ?, 'then')",
                    (content_json,))  # fmt: skip


def test_a_draft_written_for_another_databases_patient_is_restored_without_a_patient(tmp_path):
    """Rex (patient 1) edited and left in records A; the draft found in records B, whose
    patient 1 is Tom the cat: restored, it is no patient's, and saving asks for one."""
    a, b = tmp_path / "a", tmp_path / "b"
    a.mkdir(), b.mkdir()
    ward = start_here(path=a / "records.sqlite")
    saved_dog(ward)
    ward.desk.update(dehydration_percent=9.0)
    _close(ward)
    with Records.open(b / "records.sqlite") as other:
        assert other.add_patient(name="Tom", species_id="cat") == 1
    _put_draft(b / "records.sqlite", _draft_of(a))
    there = start_here({Asked.RESTORE_LEFT: Answer.YES}, path=b / "records.sqlite")
    [told] = [t for t in there.shown if "other records" in t]
    assert "Patient 1 (Dog)" in told and "without a patient" in told
    assert there.work.patient_id is None and there.desk.request.dehydration_percent == 9.0
    reply = there.work.save_version(author="AB")
    assert reply.ask_patient  # never version 2 of Tom
    with Records.open(b / "records.sqlite") as other:
        assert other.versions(1) == []
    _close(there)


def test_the_same_patient_after_a_restore_is_still_bound(tmp_path):
    """Records restored from a backup (a new identity) that still hold Rex as patient 1:
    the draft binds to him, by his name, species and the time he was added."""
    from sqlalchemy import text

    ward = start_here(path=tmp_path / "records.sqlite")
    saved_dog(ward)
    ward.desk.update(dehydration_percent=9.0)
    _close(ward)
    with Records.open(tmp_path / "records.sqlite") as db, db._engine.begin() as conn:
        conn.execute(text("UPDATE meta SET value = 'restored' WHERE key = 'database_id'"))
    again = start_here({Asked.RESTORE_LEFT: Answer.YES}, path=tmp_path / "records.sqlite")
    assert not [t for t in again.shown if "other records" in t]
    assert again.work.patient_id == 1
    assert again.save() == 2
    _close(again)


def test_observations_kept_for_another_databases_version_are_never_written_into_it(tmp_path):
    """Kept in the draft for version row 1 of Rex in records A; in records B row 1 is Tom's:
    not offered as a write-back into it, but as a plan, restored without a patient."""
    from tests.test_work_session import lock_versions

    a, b = tmp_path / "a", tmp_path / "b"
    a.mkdir(), b.mkdir()
    ward = start_here(path=a / "records.sqlite")
    saved_dog(ward)
    lock_versions(ward.work.records)
    ward.desk.add_observation(Observation(hour=2.0, weight_kg=24.3))
    ward.follow(ward.work.autosave())
    assert ward.work.state is State.VERSION_REFUSED
    _close(ward)
    with Records.open(b / "records.sqlite") as other:
        pid = other.add_patient(name="Tom", species_id="cat")
        from vetfluid.planning.plan import build_plan

        other.save_version(patient_id=pid, plan=build_plan(CAT), acknowledged={})
    _put_draft(b / "records.sqlite", _draft_of(a))
    there = start_here({Asked.RESTORE_LEFT: Answer.YES, Asked.RESTORE_CRASHED: Answer.YES},
                       path=b / "records.sqlite")  # fmt: skip
    assert Asked.WRITE_BACK not in [q.asked for q in there.asked]
    with Records.open(b / "records.sqlite") as other:
        assert other.observations(1) == []
    assert there.work.patient_id is None
    assert there.desk.observations == [Observation(hour=2.0, weight_kg=24.3)]
    _close(there)


# ---- 2: a changed records setting applies at once ---
def test_records_that_cannot_be_reached_leave_the_old_ones_in_use_and_say_why(monkeypatch):
    clerk = start_here()
    edited_dog(clerk)
    clerk.desk.update(dehydration_percent=8.5)  # waits for the autosave
    old = clerk.work.records
    monkeypatch.setenv("VETFLUID_RECORDS_URL", UNREACHABLE)
    reply = clerk.follow(clerk.work.switch_records())
    [said] = reply.messages
    assert said.text.startswith(
        "The new records setting cannot be used now: the records "
        "server vet@127.0.0.1:9/vetfluid cannot be reached"
    )
    assert f"The records in use stay {old.path}; your work stays with them." in said.text
    assert "server-drafts" not in said.text  # the work is not there: never said it is
    assert clerk.work.records is old and clerk.work.state is State.UNSAVED
    assert old.draft()["request"]["dehydration_percent"] == 8.5  # written first
    monkeypatch.setenv("VETFLUID_RECORDS_URL", "postgresql://vet:pw@h/db")  # refused outright
    [said] = clerk.follow(clerk.work.switch_records()).messages
    assert "holds a password" in said.text and clerk.work.records is old
    _close(clerk)


def test_the_same_records_again_change_nothing():
    clerk = start_here()
    edited_dog(clerk)
    old = clerk.work.records
    reply = clerk.follow(clerk.work.switch_records())
    assert reply.messages == () and clerk.work.records is old
    assert clerk.work.state is State.UNSAVED
    _close(clerk)


def test_with_the_server_down_the_new_setting_is_taken_when_no_records_worked(
    vetfluid_home, monkeypatch
):
    """No usable records file: a server, even unreachable, keeps the work on this computer."""
    (vetfluid_home / "records.sqlite").write_bytes(b"not a database" * 100)
    clerk = start_here()
    assert clerk.work.records is None
    edited_dog(clerk)
    monkeypatch.setenv("VETFLUID_RECORDS_URL", UNREACHABLE)
    reply = clerk.follow(clerk.work.switch_records())
    assert clerk.work.records is not None and clerk.work.records.unreachable is not None
    assert any("kept as the draft on this computer" in m.text for m in reply.messages)
    assert clerk.work.records.draft()["request"]["dehydration_percent"] == 7.0
    _close(clerk)


def test_unsaved_work_moves_into_the_new_records_and_is_no_patient_of_theirs(
    postgres_url, monkeypatch, vetfluid_home
):
    clerk = start_here()
    saved_dog(clerk)  # Rex, patient 1 of the file here
    clerk.desk.update(dehydration_percent=9.0)
    clerk.follow(clerk.work.autosave())
    monkeypatch.setenv("VETFLUID_RECORDS_URL", postgres_url)
    reply = clerk.follow(clerk.work.switch_records())
    assert reply.status.startswith("Records now: the server")
    work = clerk.work
    assert work.records.server is not None and work.state is State.UNSAVED
    assert work.patient_id is None  # patient 1 there is nobody, or somebody else
    assert work.records.draft()["request"]["dehydration_percent"] == 9.0
    with Records.open(vetfluid_home / "records.sqlite") as before:
        assert before.draft() is None  # moved, not copied
        assert [v.version for v in before.versions(1)] == [1]
    assert work.save_version(author="AB").ask_patient
    assert clerk.save() == 1  # Rex becomes a patient of the server's records
    _close(clerk)


def test_the_new_records_draft_of_another_plan_is_offered_not_overwritten(
    postgres_url, monkeypatch
):
    with Records.open(url=postgres_url) as server:  # a draft left there by another plan
        server.save_draft({"request": None, "observations": [
            observation_record(Observation(hour=1.0, weight_kg=3.9))], "closed": True,
            "tag": "another plan"})  # fmt: skip
    clerk = start_here({Asked.RESTORE_LEFT: Answer.NO})
    edited_dog(clerk)
    home_draft = clerk.work.records.path
    monkeypatch.setenv("VETFLUID_RECORDS_URL", postgres_url)
    clerk.follow(clerk.work.switch_records())
    assert [q.asked for q in clerk.asked] == [Asked.RESTORE_LEFT]  # offered, then declined
    assert any(f"({home_draft})" in text for text in clerk.shown)
    with Records.open(home_draft) as before:
        assert before.draft()["request"]["dehydration_percent"] == 7.0  # kept there
    _close(clerk)


def test_a_saved_version_on_screen_stays_the_old_records_and_asks_nothing_after(
    postgres_url, monkeypatch
):
    """Rex's version 1 with a weight recorded on it (waiting for the autosave): written
    into that version first; in the new records the plan is kept elsewhere, not work."""
    clerk = start_here()
    saved_dog(clerk)
    row = clerk.work.saved.row_id
    weight = Observation(hour=2.0, weight_kg=24.3)
    clerk.desk.add_observation(weight)
    old = clerk.work.records.path
    monkeypatch.setenv("VETFLUID_RECORDS_URL", postgres_url)
    clerk.follow(clerk.work.switch_records())
    assert clerk.work.state is State.AS_OPENED and not clerk.work.has_unsaved_work()
    assert clerk.work.records.draft() is None
    with Records.open(old) as before:
        assert before.observations(row) == [observation_record(weight)]
    open_demo(clerk, dataclasses.replace(CAT))  # leaves without a question
    assert clerk.asked == []
    _close(clerk)


def test_a_draft_for_a_version_found_while_the_server_is_down_is_said_once(
    postgres_url, monkeypatch
):
    """Observations a version refused, left in the draft; the next start finds the server
    down: the draft is offered as a plan, and the server's error is said once only."""
    from tests.test_work_session import lock_versions

    monkeypatch.setenv("VETFLUID_RECORDS_URL", postgres_url)
    ward = start_here()
    saved_dog(ward)
    lock_versions(ward.work.records)
    ward.desk.add_observation(Observation(hour=2.0, weight_kg=24.3))
    ward.follow(ward.work.autosave())
    _close(ward)
    _refuse_connections(postgres_url, True)
    try:
        again = start_here({Asked.RESTORE_CRASHED: Answer.YES, Asked.RESTORE_LEFT: Answer.YES})
        assert sum("cannot be reached (" in text for text in again.shown) == 1
        assert again.desk.observations == [Observation(hour=2.0, weight_kg=24.3)]
        _close(again)
    finally:
        _refuse_connections(postgres_url, False)
