"""Records replaced under a running workstation (a backup restored into the server, review
of commit ead0e4b): nothing the screen holds is written by id into whoever now has that id.

The behaviour is the project's own specification (DEVELOPERS.md "Nothing recorded is lost",
docs/work_keeping.md): no clinical source applies. A restore reuses patient and version ids
(Records.restore_into_server resets the id sequences to the backup's), so patient 1 may be
another animal afterwards; here that is made by hand (a new database identity, patient 1
renamed), and, on a server, by a real restore.
"""

from __future__ import annotations

import json

import pytest
from sqlalchemy import text

from tests.test_work_session import Clerk, Desk, saved_dog
from vetfluid.course.observations import Observation
from vetfluid.records.store import Records
from vetfluid.records.work_session import Autosave, State, WorkSession


def _on_records(open_records) -> Clerk:  # noqa: ANN001
    desk = Desk()
    desk.work = WorkSession(desk, open_records())
    desk.recompute()
    clerk = Clerk(desk, {})
    clerk.follow(desk.work.look_at_draft())
    return clerk


def _replace_by_hand(open_records) -> None:  # noqa: ANN001
    """Another database now: a new identity, and its patient 1 is Max the cat."""
    with open_records() as db, db._engine.begin() as conn:
        conn.execute(text("UPDATE meta SET value = 'replaced' WHERE key = 'database_id'"))
        conn.execute(text("UPDATE patients SET name = 'Max', species_id = 'cat' WHERE id = 1"))


def _replaced_words(clerk: Clerk) -> list[str]:
    return [t for t in clerk.shown if "restored" in t and "draft" in t]


def test_observations_are_never_written_into_a_version_of_records_replaced_meanwhile(
    open_records,
):
    ward = _on_records(open_records)
    saved_dog(ward)
    row_id = ward.work.saved.row_id
    _replace_by_hand(open_records)
    ward.desk.add_observation(Observation(hour=2.0, weight_kg=24.3))
    ward.follow(ward.work.autosave())
    with open_records() as db:
        assert db.observations(row_id) == []  # never into Max's version
        draft = db.draft()
    assert draft["patient_id"] is None and draft["for_version"] is None
    assert len(draft["observations"]) == 1  # the work is kept, as a draft
    assert ward.work.patient_id is None and ward.work.state is State.UNSAVED
    assert _replaced_words(ward), ward.shown
    ward.work.records.close()


def test_a_new_version_is_never_saved_for_the_patient_who_now_has_the_id(open_records):
    ward = _on_records(open_records)
    saved_dog(ward)
    _replace_by_hand(open_records)
    ward.desk.update(dehydration_percent=9.0)
    reply = ward.work.save_version(author="AB")
    ward.follow(reply)
    assert reply.ask_patient  # saving asks which patient it is
    with open_records() as db:
        assert [v.version for v in db.versions(1)] == [1]  # Max's: untouched
        draft = db.draft()
    assert draft is not None and draft["patient_id"] is None
    assert json.dumps(draft["request"]).count("9.0")  # the edit is kept
    assert ward.work.patient_id is None
    assert _replaced_words(ward), ward.shown
    ward.work.records.close()


def test_a_real_restore_into_the_server_is_noticed_by_a_workstation_left_running(
    postgres_url, tmp_path
):
    with Records.open(url=postgres_url) as db:
        empty = db.backup(tmp_path / "empty.sqlite")

    def place() -> Records:
        return Records.open(url=postgres_url)

    ward = _on_records(place)
    saved_dog(ward)
    row_id = ward.work.saved.row_id
    with Records.open(url=postgres_url) as admin:
        admin.restore_into_server(empty)
        max_id = admin.add_patient(name="Max", species_id="cat")
    assert max_id == ward.work.patient_id  # the id is reused
    ward.desk.add_observation(Observation(hour=2.0, weight_kg=24.3))
    ward.follow(ward.work.autosave())
    ward.desk.update(dehydration_percent=9.0)
    reply = ward.work.save_version(author="AB")
    ward.follow(reply)
    assert reply.ask_patient
    with Records.open(url=postgres_url) as db:
        assert db.versions(max_id) == [] and db.observations(row_id) == []
    assert _replaced_words(ward), ward.shown
    ward.work.records.close()


# ---- a restore from the window (backups.restore_records) into records another window has open --
def test_a_restore_gives_the_records_a_new_identity_so_a_window_left_open_writes_nothing(
    open_records, tmp_path
):
    """Review of commit 66a3521: restored into the SQLite file, the backup's own database
    identity came with it, so a second window on the file saw the same database and wrote
    by ids the restore had given to other patients. Here Tom (id 2) is added after the
    backup; after the restore Max takes id 2; the window still holding Tom must write
    nothing into Max. The server already had this (restore_into_server); both are checked."""
    from vetfluid.planning.demos import DEMOS
    from vetfluid.planning.plan import build_plan
    from vetfluid.records.backups import back_up, restore_records
    from vetfluid.records.store import RecordsReplaced

    plan = build_plan(DEMOS["dehydrated_dog"].request)
    with open_records() as db:
        db.add_patient(name="Rex", species_id="dog")
        back_up(db, tmp_path / "monday.sqlite")
    other_window = open_records()  # opened before the restore, left open across it
    tom = other_window.add_patient(name="Tom", species_id="dog")
    seen_as = other_window.database_id
    if "://" in open_records.where:
        restore_records(tmp_path / "monday.sqlite", url=open_records.where)
    else:
        restore_records(tmp_path / "monday.sqlite", path=tmp_path / "records.sqlite")
    with open_records() as db:
        assert db.database_id != seen_as  # another database, as far as ids go
        max_id = db.add_patient(name="Max", species_id="cat")
    assert max_id == tom  # the id is reused
    with pytest.raises(RecordsReplaced):
        other_window.save_new_version(
            patient_id=tom, plan=plan, acknowledged={}, author="AB", database_id=seen_as
        )
    with open_records() as db:
        assert db.versions(max_id) == []  # nothing of Tom's went into Max
    other_window.close()


def test_a_work_session_left_open_across_a_restore_from_the_window_keeps_its_work_as_a_draft(
    open_records, tmp_path
):
    """The same, as a second window's work session sees it: Rex's version 1 on screen, the
    records restored from a backup taken before Rex was saved, another patient given Rex's
    ids; the observation recorded next goes into the draft, never into that patient."""
    from vetfluid.records.backups import back_up, restore_records

    with open_records() as db:
        back_up(db, tmp_path / "empty.sqlite")
    ward = _on_records(open_records)
    saved_dog(ward)
    row_id = ward.work.saved.row_id
    if "://" in open_records.where:
        restore_records(tmp_path / "empty.sqlite", url=open_records.where)
    else:
        restore_records(tmp_path / "empty.sqlite", path=tmp_path / "records.sqlite")
    with open_records() as db:  # Max's first version takes Rex's version's row
        max_id = db.add_patient(name="Max", species_id="cat")
        db.save_version(patient_id=max_id, plan=ward.desk.plan, acknowledged={}, author="CD")
        assert db.versions(max_id)[0].id == row_id
    ward.desk.add_observation(Observation(hour=2.0, weight_kg=24.3))
    ward.follow(ward.work.autosave())
    with open_records() as db:
        assert db.observations(row_id) == []
        draft = db.draft()
    assert draft is not None and draft["patient_id"] is None
    assert len(draft["observations"]) == 1  # the work is kept, as a draft
    assert ward.work.state is State.UNSAVED and _replaced_words(ward), ward.shown
    ward.work.records.close()


# ---- the state after a Save the replaced records refused ---------------------------------------
@pytest.mark.parametrize("draft_takes_it", [True, False])
def test_a_save_refused_because_the_records_were_replaced_leaves_the_state_right_at_once(
    open_records, monkeypatch, draft_takes_it
):
    """Review of commit 6f4c2a9: Save on the unchanged saved version, the records replaced
    meanwhile: nothing is saved, the ids are dropped, and the work is kept as the draft, so
    the state is UNSAVED there and then (it stayed ON_VERSION until the next autosave);
    when the draft cannot take it either, NOT_WRITTEN, retried (docs/work_keeping.md)."""
    from vetfluid.records.store import RecordsError

    ward = _on_records(open_records)
    saved_dog(ward)
    assert ward.work.state is State.ON_VERSION
    _replace_by_hand(open_records)
    if not draft_takes_it:

        def full(_content: dict) -> None:
            raise RecordsError("the disk is full")

        monkeypatch.setattr(ward.work.records, "save_draft", full)
    reply = ward.work.save_version(author="AB")
    assert reply.ask_patient and reply.saved_number is None
    assert ward.work.state is (State.UNSAVED if draft_takes_it else State.NOT_WRITTEN)
    assert ward.work.has_unsaved_work() and ward.work.saved is None
    assert reply.autosave is Autosave.START  # kept trying
    ward.work.records.close()
