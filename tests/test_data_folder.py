"""A user data folder that cannot be made or written (finding 11): named in words with
what to do (vetfluid/common/paths.py, ``data_folder_problem``), never a traceback wherever
the folder is first named; the records say they cannot be opened."""

from __future__ import annotations

import os
import stat

import pytest

from vetfluid.common.paths import data_folder_problem, user_data_dir
from vetfluid.records.store import Records, RecordsError


def test_a_usable_folder_is_no_problem_and_is_made_owner_only(tmp_path, monkeypatch):
    monkeypatch.setenv("VETFLUID_HOME", str(tmp_path / "new" / "vetfluid"))
    assert data_folder_problem() == ""
    assert stat.S_IMODE(os.stat(tmp_path / "new" / "vetfluid").st_mode) == 0o700


@pytest.mark.parametrize("under", [False, True])
def test_a_file_in_the_way_is_named(tmp_path, monkeypatch, under):
    in_the_way = tmp_path / "vetfluid-data"
    in_the_way.write_text("not a folder", encoding="utf-8")
    home = in_the_way / "vetfluid" if under else in_the_way
    monkeypatch.setenv("VETFLUID_HOME", str(home))
    assert user_data_dir() == home  # named, not raised: reading finds nothing there
    assert data_folder_problem() == (
        f"the user data folder {home} (set by VETFLUID_HOME) cannot be used: {in_the_way} is "
        "a file, not a folder, so no clinic overrides are read from it and nothing can be "
        "saved there — set VETFLUID_HOME to a folder you can write to, or move that file "
        "away, then start vetfluid again"
    )
    with pytest.raises(RecordsError, match="cannot create the records file"):
        Records.open()  # the window's keeper shows this, and has no records


@pytest.mark.skipif(os.name != "posix" or os.geteuid() == 0, reason="root may write anywhere")
def test_a_folder_one_may_not_write_in_is_named(tmp_path, monkeypatch):
    locked = tmp_path / "locked"
    locked.mkdir(mode=0o500)
    try:
        monkeypatch.setenv("VETFLUID_HOME", str(locked / "vetfluid"))
        problem = data_folder_problem()
        assert f"you may not create folders in {locked}" in problem
        assert f"make {locked} writable for you" in problem
    finally:
        locked.chmod(0o700)


def _answered_as_for_a_clinician(monkeypatch, home, *, readable: bool) -> None:
    """``os.access`` answered for ``home`` as it is for a clinician whose folder is read-only
    (``readable``) or closed to them altogether; as root here, every folder is writable. A
    read-only bind mount answers so for root too (access(2): EROFS)."""
    real = os.access

    def access(path, mode, *args, **kwargs):  # noqa: ANN001, ANN202
        if os.fspath(path) == str(home):
            return readable and not mode & os.W_OK
        return real(path, mode, *args, **kwargs)

    monkeypatch.setattr(os, "access", access)


def test_a_read_only_folder_is_named(tmp_path, monkeypatch):
    """Finding (review of 66a3521, 1): a folder one may read but not write. Its clinic
    overrides ARE read, so the words say only that nothing can be saved there."""
    monkeypatch.setenv("VETFLUID_HOME", str(tmp_path))
    _answered_as_for_a_clinician(monkeypatch, tmp_path, readable=True)
    assert data_folder_problem() == (
        f"the user data folder {tmp_path} (set by VETFLUID_HOME) is read-only for you: the "
        "clinic overrides in it are read, but nothing can be saved there — set VETFLUID_HOME "
        "to a folder you can write to, or make it writable for you, then start vetfluid again"
    )


def test_a_folder_one_may_not_read_is_named(tmp_path, monkeypatch):
    monkeypatch.setenv("VETFLUID_HOME", str(tmp_path))
    _answered_as_for_a_clinician(monkeypatch, tmp_path, readable=False)
    assert data_folder_problem() == (
        f"the user data folder {tmp_path} (set by VETFLUID_HOME) cannot be used: you may not "
        "read it, so no clinic overrides are read from it and nothing can be saved there — "
        "set VETFLUID_HOME to a folder you can write to, or make it readable and writable for "
        "you, then start vetfluid again"
    )


def test_the_cli_says_the_overrides_of_a_read_only_folder_are_read(tmp_path, monkeypatch,
                                                                   capsys):  # fmt: skip
    """`vetfluid-cli` reads and shows the clinic override kept in a read-only folder, and
    says only that nothing can be saved there (it said "no clinic overrides are read")."""
    from vetfluid import cli
    from vetfluid.tables.overrides import set_override

    monkeypatch.setenv("VETFLUID_HOME", str(tmp_path))
    set_override(species_id="dog", parameter="bolus_minutes", value=25)
    _answered_as_for_a_clinician(monkeypatch, tmp_path, readable=True)
    assert cli.main(["species", "--species", "dog"]) == 0
    captured = capsys.readouterr()
    assert "bolus_minutes" in captured.out and "25 min" in captured.out
    assert "(override)" in captured.out
    assert captured.err == f"vetfluid-cli: {data_folder_problem()}\n"
    assert "the clinic overrides in it are read" in captured.err
    assert "no clinic overrides are read" not in captured.err


def test_a_name_with_a_control_character_is_shown_escaped(tmp_path, monkeypatch):
    in_the_way = tmp_path / "x\x1b[31m"
    in_the_way.write_text("", encoding="utf-8")
    monkeypatch.setenv("VETFLUID_HOME", str(in_the_way))
    problem = data_folder_problem()
    assert "\x1b" not in problem and "x\\x1b[31m" in problem
