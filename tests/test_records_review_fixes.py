"""Second review of the shared records (commit ead0e4b): a changed records setting never
detaches observations waiting for their saved version; a changed TLS option is applied;
password and settings files that cannot be read are refused in words.

The behaviour is the project's own specification (DEVELOPERS.md "Nothing recorded is lost",
docs/work_keeping.md); the password file's format and libpq's use of it are the PostgreSQL
15 documentation, 34.16 "The Password File"; sslmode is 34.19 "SSL Support".
"""

from __future__ import annotations

import pytest

from tests.test_records_shared import _close, start_here
from tests.test_work_session import lock_versions, saved_dog
from vetfluid.common.errors import VetfluidError
from vetfluid.course.observations import Observation, observation_record
from vetfluid.records.store import Records
from vetfluid.records.work_session import Answer, Asked, State


# ---- 2: a draft waiting for its version stays with its records ---
def test_observations_waiting_for_their_version_stay_with_its_records_on_a_switch(
    postgres_url, monkeypatch, vetfluid_home
):
    clerk = start_here({Asked.WRITE_BACK: Answer.YES})
    saved_dog(clerk)  # Rex, version 1 in the file here
    row = clerk.work.saved.row_id
    lock_versions(clerk.work.records)
    weight = Observation(hour=2.0, weight_kg=24.3)
    clerk.desk.add_observation(weight)
    clerk.follow(clerk.work.autosave())
    assert clerk.work.state is State.VERSION_REFUSED
    monkeypatch.setenv("VETFLUID_RECORDS_URL", postgres_url)
    clerk.follow(clerk.work.switch_records())
    with Records.open(vetfluid_home / "records.sqlite") as before:
        kept = before.draft()
    assert kept["for_version"] == row and kept["observations"] == [observation_record(weight)]
    [told] = [t for t in clerk.shown if "version 1" in t and "records.sqlite" in t]
    assert "Rex" in told or "Dog" in told
    assert clerk.work.records.draft() is None  # never a plan of nobody's in the new records
    monkeypatch.delenv("VETFLUID_RECORDS_URL")
    clerk.follow(clerk.work.switch_records())  # back: written into the version, as asked
    assert Asked.WRITE_BACK in [q.asked for q in clerk.asked]
    with Records.open(vetfluid_home / "records.sqlite") as before:
        assert before.observations(row) == [observation_record(weight)]
    _close(clerk)


def test_observations_waiting_for_a_server_down_stay_in_its_drafts_on_a_switch(
    postgres_url, monkeypatch, vetfluid_home
):
    """The adversarial case: the server goes down with a weight waiting for version 1;
    the setting changes to the file here. The weight stays in the server's drafts file on
    this computer, for version 1, and goes into it once the server is used again."""
    from tests.test_records_shared import _refuse_connections

    monkeypatch.setenv("VETFLUID_RECORDS_URL", postgres_url)
    clerk = start_here({Asked.WRITE_BACK: Answer.YES})
    saved_dog(clerk)
    row, drafts = clerk.work.saved.row_id, clerk.work.records.drafts_path
    weight = Observation(hour=2.0, weight_kg=24.3)
    _refuse_connections(postgres_url, True)
    try:
        clerk.desk.add_observation(weight)
        clerk.follow(clerk.work.autosave())
        assert clerk.work.state is State.VERSION_REFUSED
        monkeypatch.delenv("VETFLUID_RECORDS_URL")
        clerk.follow(clerk.work.switch_records())
        assert clerk.work.records.server is None
        assert any(str(drafts) in t and "version 1" in t for t in clerk.shown)
        assert clerk.work.records.draft() is None
        with Records.open(drafts) as local:
            assert local.draft()["for_version"] == row
    finally:
        _refuse_connections(postgres_url, False)
    monkeypatch.setenv("VETFLUID_RECORDS_URL", postgres_url)
    clerk.follow(clerk.work.switch_records())
    assert Asked.WRITE_BACK in [q.asked for q in clerk.asked]
    with Records.open(url=postgres_url) as server:
        assert server.observations(row) == [observation_record(weight)]
    _close(clerk)


# ---- 4: a password file that cannot be read ---
@pytest.mark.parametrize("damage", ["latin-1", "a folder", "unreadable"])
def test_a_password_file_that_cannot_be_read_is_refused_in_words(damage, monkeypatch):
    import pathlib

    from vetfluid.records.location import password_file, server_address, store_password

    kept = password_file()
    if damage == "latin-1":  # edited by hand in another encoding
        kept.write_bytes(b"h:1:d:u:caf\xe9\n")
    elif damage == "a folder":
        kept.mkdir()
    else:  # permissions taken away (root reads every file: the refusal is made here)
        kept.write_text("h:1:d:u:x\n", encoding="utf-8")
        read = pathlib.Path.read_text

        def refused_read(self, *args, **kwargs):  # noqa: ANN001, ANN002, ANN003, ANN202
            if self == kept:
                raise PermissionError(13, "Permission denied", str(self))
            return read(self, *args, **kwargs)

        monkeypatch.setattr(pathlib.Path, "read_text", refused_read)
    address = server_address("postgresql://vet@db.example:5432/vetfluid")
    with pytest.raises(VetfluidError) as refused:
        store_password(address, "secret")
    said = str(refused.value)
    assert str(kept) in said and "secret" not in said
    assert refused.value.fix  # what to do


def test_the_records_settings_dialog_refuses_a_password_file_it_cannot_read(
    qtbot, planner, answer, vetfluid_home
):
    from ui.records.records_settings import RecordsSettingsDialog
    from vetfluid.records.location import password_file

    password_file().write_bytes(b"h:1:d:u:caf\xe9\n")  # another encoding
    told = []
    answer({"not UTF-8": lambda: told.append(1)})
    dialog = RecordsSettingsDialog(planner)
    qtbot.addWidget(dialog)
    dialog.url.setText("postgresql://vet@records.clinic:5432/vetfluid")
    dialog.password.setText("s3cret")
    dialog.accept()
    assert told and dialog.result() == 0  # said, and the dialog stays open
    assert password_file().read_bytes() == b"h:1:d:u:caf\xe9\n"  # never written over


# ---- 5: settings nested too deep to be read ---
def test_settings_nested_too_deep_are_refused_in_words():
    from vetfluid.common.errors import InputError
    from vetfluid.records.location import load_settings, settings_file

    settings_file().write_text('{"url":' + "[" * 100000 + "]" * 100000 + "}", encoding="utf-8")
    with pytest.raises(InputError) as refused:
        load_settings()
    assert str(settings_file()) in str(refused.value)


# ---- 3: a changed connection option is applied, not taken for "the same records" ---
def test_a_changed_connection_option_is_applied_at_once_on_the_same_records(
    postgres_url, monkeypatch
):
    monkeypatch.setenv("VETFLUID_RECORDS_URL", postgres_url)
    clerk = start_here()
    saved_dog(clerk)
    patient = clerk.work.patient_id
    monkeypatch.setenv("VETFLUID_RECORDS_URL", postgres_url + "?keepalives=1")
    clerk.follow(clerk.work.switch_records())
    assert clerk.work.records.server.options == (("keepalives", "1"),)  # in use now
    assert clerk.work.patient_id == patient  # the same records: still Rex's version 1
    assert clerk.work.state is State.ON_VERSION
    _close(clerk)


def test_a_stricter_sslmode_is_applied_or_refused_in_words_never_ignored(postgres_url, monkeypatch):
    monkeypatch.setenv("VETFLUID_RECORDS_URL", postgres_url)
    clerk = start_here()
    monkeypatch.setenv("VETFLUID_RECORDS_URL", postgres_url + "?sslmode=verify-full")
    clerk.follow(clerk.work.switch_records())
    applied = clerk.work.records.server.sslmode == "verify-full"
    refused = any("cannot be used now" in t for t in clerk.shown)
    assert applied != refused, clerk.shown  # one or the other, said
    _close(clerk)


def test_a_password_kept_for_another_spelling_of_the_host_is_said_at_once():
    from vetfluid.records.location import (
        password_spelling_problem,
        server_address,
        store_password,
    )

    store_password(server_address("postgresql://vet@127.0.0.1:5432/vetfluid"), "secret")
    problem = password_spelling_problem(server_address("postgresql://vet@localhost:5432/vetfluid"))
    assert problem and "127.0.0.1" in problem and "localhost" in problem
    assert "secret" not in problem
    assert password_spelling_problem(server_address("postgresql://vet@127.0.0.1/vetfluid")) is None


# ---- 6: words ---
def test_a_wrong_password_is_said_to_be_refused_not_unreachable(postgres_url):
    from vetfluid.records.location import server_address, store_password

    store_password(server_address(postgres_url), "not the password")
    with Records.open(url=postgres_url, allow_unreachable=True) as records:
        said = records.unreachable.one_line()
    assert "refused the password" in said and "cannot be reached" not in said
    assert "not the password" not in said


@pytest.mark.parametrize("port", ["0", "65536", "70000"])
def test_a_port_outside_1_to_65535_is_refused_at_once(port):
    from vetfluid.common.errors import InputError
    from vetfluid.records.location import server_address

    with pytest.raises(InputError, match="port"):
        server_address(f"postgresql://vet@db.example:{port}/vetfluid")


def test_a_very_long_address_is_shortened_in_what_is_said():
    from vetfluid.common.errors import InputError
    from vetfluid.records.location import server_address

    with pytest.raises(InputError) as refused:
        server_address("x" * 5000 + "://vet@db.example/vetfluid")
    assert len(refused.value.one_line()) < 400


def test_settings_that_are_not_an_object_say_what_to_do():
    from vetfluid.common.errors import InputError
    from vetfluid.records.location import load_settings, settings_file

    settings_file().write_text("[1, 2]", encoding="utf-8")
    with pytest.raises(InputError) as refused:
        load_settings()
    assert refused.value.fix and "Records settings" in refused.value.fix


def test_the_question_after_a_crash_says_which_plan_it_restores():
    from tests.test_work_session import open_demo

    clerk = start_here()
    open_demo(clerk)
    clerk.desk.update(dehydration_percent=9.0)
    clerk.follow(clerk.work.autosave())  # then vetfluid stops: no close
    clerk.work.records.close()
    again = start_here({Asked.RESTORE_CRASHED: Answer.NO})
    [question] = [q for q in again.asked if q.asked is Asked.RESTORE_CRASHED]
    assert "Dog" in question.text and "kg" in question.text
    _close(again)
