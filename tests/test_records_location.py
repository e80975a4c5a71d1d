"""Where the records are and how the password reaches the server (issue 21, the review's
findings 4, 7, 8, 10 and 12): the settings file read strictly, both files written
atomically, the password file chosen so a user's own ~/.pgpass or PGPASSFILE still works,
a password file others can read named as the fault, a server's drafts file keyed on the
server and not on how its address is spelled, an IPv6 host shown as one.

The behaviour is the project's own specification and libpq's documented conventions
(PostgreSQL 15 documentation, 34.16 "The Password File": the fields host:port:database:
username:password, ``*`` matching anything, ``\\:`` and ``\\\\`` escaped, and "on Unix
systems, the permissions on a password file must disallow any access to world or group;
achieve this by a command such as chmod 0600 ~/.pgpass. If the permissions are less strict
than this, the file will be ignored"; 34.1.2 "Parameter Key Words": ``passfile``, default
``PGPASSFILE`` else ``~/.pgpass``), RFC 3986 section 3.2.2 (an IPv6 literal in a URI is
written in square brackets), and POSIX ``rename`` (the new name refers to the whole new
file or the old one, never a part): no clinical source applies.
"""

from __future__ import annotations

import hashlib
import json
import os
import socket
import stat

import pytest

from vetfluid.common.errors import InputError, VetfluidError
from vetfluid.records import location
from vetfluid.records.location import (
    RecordsSettings,
    load_settings,
    save_settings,
    server_address,
    settings_file,
    store_password,
    workstation_name,
)
from vetfluid.records.store import Records, RecordsError, _drafts_file

UNREACHABLE = "postgresql://vet@127.0.0.1:9/vetfluid"  # nothing listens on port 9


# ---- finding 10: a value that is not text ----------------------------------------------------
@pytest.mark.parametrize("key", ["url", "workstation", "initials"])
@pytest.mark.parametrize(("value", "said"), [(None, "null"), (12, "12"), (True, "true"),
                                             (["AB"], "a list")])  # fmt: skip
def test_a_setting_that_is_not_text_is_refused_in_words_never_read_as_none(key, value, said):
    settings_file().write_text(json.dumps({key: value}), encoding="utf-8")
    with pytest.raises(InputError) as raised:
        load_settings()
    words = raised.value.one_line()
    assert f"gives the {key} as {said}" in words and "None" not in words
    assert "in quotes" in words  # what to write instead


def test_a_null_workstation_name_is_never_the_text_none(monkeypatch):
    monkeypatch.delenv("VETFLUID_WORKSTATION")
    settings_file().write_text('{"workstation": null, "initials": null}', encoding="utf-8")
    assert workstation_name() == socket.gethostname()
    with pytest.raises(RecordsError, match="gives the workstation as null"):
        Records.open()  # the setting that chooses the records cannot be read: said


# ---- finding 12: written atomically ------------------------------------------------------------
def test_the_settings_are_written_whole_or_not_at_all(monkeypatch, vetfluid_home):
    save_settings(RecordsSettings(initials="AB"))

    def power_cut(_descriptor: int) -> None:
        raise OSError(5, "Input/output error")

    monkeypatch.setattr(location.os, "fsync", power_cut)
    with pytest.raises(VetfluidError, match="could not be written"):
        save_settings(RecordsSettings(initials="CK", workstation="ward-2"))
    assert load_settings().initials == "AB"  # the old file, whole
    assert sorted(p.name for p in vetfluid_home.iterdir()) == ["records-settings.json"]


def test_the_password_file_is_owner_only_before_the_password_goes_in(monkeypatch, vetfluid_home):
    """Each write goes into a new file beside the target, renamed onto it once on disk; the
    file holding the password is 0600 when the password reaches the disk."""
    modes, renames = [], []
    real_fsync, real_replace = os.fsync, os.replace

    def fsync(descriptor: int) -> None:
        mode = os.fstat(descriptor).st_mode
        if stat.S_ISREG(mode):
            modes.append(stat.S_IMODE(mode))
        real_fsync(descriptor)

    def replace(source, target) -> None:  # noqa: ANN001
        renames.append((os.path.dirname(source), os.path.basename(target)))
        real_replace(source, target)

    monkeypatch.setattr(location.os, "fsync", fsync)
    monkeypatch.setattr(location.os, "replace", replace)
    kept = store_password(server_address("postgresql://vet@records.clinic/vf"), "s3cret")
    assert modes == [0o600] and renames == [(str(vetfluid_home), "records.pgpass")]
    assert stat.S_IMODE(kept.stat().st_mode) == 0o600


# ---- finding 12: an IPv6 host -----------------------------------------------------------------
@pytest.mark.parametrize(("url", "label"), [
    ("postgresql://vet@[::1]:5433/vf", "vet@[::1]:5433/vf"),
    ("postgresql://vet@[fe80::1]/vf", "vet@[fe80::1]:5432/vf"),
    ("postgresql://vet@records.clinic/vf", "vet@records.clinic:5432/vf"),
])  # fmt: skip
def test_an_ipv6_host_is_shown_in_brackets_with_its_port(url, label):
    assert server_address(url).label == label


# ---- finding 4: the drafts file follows the server, not the spelling ---------------------------
@pytest.mark.parametrize("other", [
    "postgresql://vet@LOCALHOST/vetfluid",
    "postgresql://vet@localhost:5432/vetfluid",
    "postgresql://vet@[::1]:5432/vetfluid",
    "postgres://vet@127.0.0.1/vetfluid",
])  # fmt: skip
def test_one_server_spelled_another_way_keeps_the_same_drafts_file(other):
    assert _drafts_file(server_address(other)) == _drafts_file(
        server_address("postgresql://vet@127.0.0.1:5432/vetfluid")
    )


@pytest.mark.parametrize("other", [
    "postgresql://vet@127.0.0.1:5433/vetfluid",
    "postgresql://ward@127.0.0.1/vetfluid",
    "postgresql://vet@127.0.0.1/other",
    "postgresql://vet@records.clinic/vetfluid",
])  # fmt: skip
def test_another_server_database_or_user_has_drafts_of_its_own(other):
    assert _drafts_file(server_address(other)) != _drafts_file(
        server_address("postgresql://vet@127.0.0.1:5432/vetfluid")
    )


def _old_drafts_file(home, label: str):  # noqa: ANN001, ANN202
    """Where vetfluid kept a server's drafts before: keyed on the address as written."""
    return home / f"server-drafts-{hashlib.sha256(label.encode()).hexdigest()[:12]}.sqlite"


def test_a_draft_kept_under_an_older_spelling_is_carried_over(vetfluid_home):
    """Written 127.0.0.1 then, localhost now (nothing listens on port 9 either way)."""
    old = _old_drafts_file(vetfluid_home, "vet@127.0.0.1:9/vetfluid")
    with Records.open(old) as kept:
        kept.save_draft({"request": None, "observations": [{"hour": 1.0, "weight_kg": 4.2}]})
    url = "postgresql://vet@LocalHost:9/vetfluid"
    with Records.open(url=url, allow_unreachable=True) as db:
        assert db.draft() == {"request": None, "observations": [{"hour": 1.0, "weight_kg": 4.2}]}
        assert db.drafts_path == _drafts_file(server_address(url))
    assert not old.exists()  # moved, not copied: one draft, not two


def test_an_older_draft_beside_a_newer_one_is_kept_and_said(vetfluid_home):
    old = _old_drafts_file(vetfluid_home, "vet@127.0.0.1:9/vetfluid")
    with Records.open(old) as kept:
        kept.save_draft({"request": None, "observations": [], "note": "older"})
    with Records.open(_drafts_file(server_address(UNREACHABLE))) as newer:
        newer.save_draft({"request": None, "observations": [], "note": "newer"})
    with Records.open(url=UNREACHABLE, allow_unreachable=True) as db:
        assert db.draft()["note"] == "newer"
        assert any(str(old) in notice for notice in db.notices)
    assert old.exists()


# ---- finding 7: the user's own password file ----------------------------------------------------
def test_our_password_file_is_used_only_for_a_server_it_has_a_password_for(vetfluid_home):
    store_password(server_address("postgresql://vet@records.clinic/vf"), "s3cret")
    ours = str(vetfluid_home / "records.pgpass")
    assert server_address("postgresql://vet@records.clinic/vf").connect_args()["passfile"] == ours
    for other in ("postgresql://vet@other.clinic/vf", "postgresql://ward@records.clinic/vf",
                  "postgresql://vet@records.clinic:5433/vf"):  # fmt: skip
        # libpq then reads PGPASSFILE, else ~/.pgpass, as it would without vetfluid
        assert "passfile" not in server_address(other).connect_args()


def test_a_wildcard_line_written_by_hand_counts_as_an_entry(vetfluid_home):
    (vetfluid_home / "records.pgpass").write_text("*:*:vf:vet:s3cret\n", encoding="utf-8")
    os.chmod(vetfluid_home / "records.pgpass", 0o600)
    assert "passfile" in server_address("postgresql://vet@anywhere:6000/vf").connect_args()


def test_the_users_own_passfile_connects_when_ours_has_no_entry_for_the_server(
    postgres_url, vetfluid_home, tmp_path, monkeypatch
):
    """The password only in the user's PGPASSFILE (ours keeps another server's): it opens."""
    from sqlalchemy.engine import make_url

    from tests.conftest import _password_for

    address = server_address(postgres_url)
    mine = tmp_path / "my.pgpass"
    mine.write_text(f"{address.host}:{address.port}:*:{address.user}:"
                    f"{_password_for(make_url(postgres_url))}\n", encoding="utf-8")  # fmt: skip
    os.chmod(mine, 0o600)
    monkeypatch.setenv("PGPASSFILE", str(mine))
    (vetfluid_home / "records.pgpass").unlink()
    store_password(server_address("postgresql://vet@records.clinic/vf"), "another")
    with Records.open(url=postgres_url) as db:
        assert db.add_patient(name="Rex", species_id="dog") == 1


# ---- finding 8: a password file others can read -------------------------------------------------
@pytest.mark.skipif(os.name != "posix", reason="libpq checks the mode on POSIX systems only")
@pytest.mark.parametrize("mode", [0o644, 0o640, 0o604])
def test_a_password_file_others_can_read_is_named_with_the_fix(mode, vetfluid_home):
    kept = store_password(server_address(UNREACHABLE), "s3cret")
    os.chmod(kept, mode)
    with pytest.raises(RecordsError) as raised:
        Records.open(url=UNREACHABLE)
    words = raised.value.one_line()
    assert str(kept) in words and f"{mode:o}" in words
    assert "ignores it" in words and f"chmod 600 {kept}" in words
    assert "no password supplied" not in words


@pytest.mark.skipif(os.name != "posix", reason="libpq checks the mode on POSIX systems only")
def test_the_users_own_passfile_that_others_can_read_is_named_too(tmp_path, monkeypatch):
    mine = tmp_path / "my.pgpass"
    mine.write_text("127.0.0.1:9:*:vet:s3cret\n", encoding="utf-8")
    os.chmod(mine, 0o644)
    monkeypatch.setenv("PGPASSFILE", str(mine))
    with pytest.raises(RecordsError, match=f"chmod 600 {mine}"):
        Records.open(url=UNREACHABLE)
