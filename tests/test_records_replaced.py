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

from sqlalchemy import text

from tests.test_work_session import Clerk, Desk, saved_dog
from vetfluid.course.observations import Observation
from vetfluid.records.store import Records
from vetfluid.records.work_session import State, WorkSession


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
