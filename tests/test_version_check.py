"""`vetfluid --version` loads every species-data file planning reads (review of 66a3521,
finding 2): each file, damaged or missing, is said in one line with one fix and exit 1,
never a version that looks sound while the first plan would fail."""

from __future__ import annotations

import shutil
import sys
from pathlib import Path

import pytest

from vetfluid import __version__

ROOT = Path(__file__).resolve().parents[1]
SHIPPED = sorted(p.name for p in (ROOT / "species_data").glob("*.csv"))


def test_the_check_covers_every_shipped_file():
    """A data file added later must be added to the check too."""
    from ui.app import SPECIES_DATA_FILES

    assert sorted(SPECIES_DATA_FILES) == SHIPPED


def _version_with(tmp_path, monkeypatch, capsys, change) -> tuple[int, str, str]:  # noqa: ANN001
    """`vetfluid --version` of a frozen bundle whose species_data/ was changed by ``change``."""
    from ui.app import main

    folder = tmp_path / "species_data"
    shutil.copytree(ROOT / "species_data", folder)
    change(folder)
    monkeypatch.setattr(sys, "frozen", True, raising=False)
    monkeypatch.setattr(sys, "_MEIPASS", str(tmp_path), raising=False)
    code = main(["vetfluid", "--version"])
    captured = capsys.readouterr()
    return code, captured.out, captured.err


def _said_once(err: str, name: str) -> None:
    assert err.startswith("vetfluid: the species data could not be read: "), err
    assert name in err and err.count("\n") == 1 and "Traceback" not in err, err
    assert err.count(" — ") == 1, err  # one cause, one fix (finding 5)
    assert err.endswith(
        " — reinstall vetfluid (a bundle: copy its whole folder again); no plan can be made "
        "until then\n"
    ), err


@pytest.mark.parametrize("name", SHIPPED)
def test_each_damaged_file_is_named(tmp_path, monkeypatch, capsys, name):
    def damage(folder: Path) -> None:
        (folder / name).write_text('id,"half a line\n', encoding="utf-8")

    code, out, err = _version_with(tmp_path, monkeypatch, capsys, damage)
    assert code == 1 and out.startswith(f"vetfluid {__version__} (species data ")
    _said_once(err, name)


@pytest.mark.parametrize("name", SHIPPED)
def test_each_missing_file_is_named(tmp_path, monkeypatch, capsys, name):
    code, out, err = _version_with(
        tmp_path, monkeypatch, capsys, lambda folder: (folder / name).unlink()
    )
    assert code == 1 and out.startswith(f"vetfluid {__version__} (species data ")
    _said_once(err, name)


def test_a_file_that_is_not_utf8_has_one_fix(tmp_path, monkeypatch, capsys):
    """It said "— save the file as UTF-8 — reinstall vetfluid": two fixes in a row."""
    code, _, err = _version_with(
        tmp_path, monkeypatch, capsys,
        lambda folder: (folder / "potassium_scale.csv").write_bytes(b"\xff\xfe\x00bad"),
    )  # fmt: skip
    assert code == 1
    _said_once(err, "potassium_scale.csv")
    assert "not UTF-8" in err


def test_a_fluid_without_its_roles_is_named(tmp_path, monkeypatch, capsys):
    """Planning refuses a fluid with no row in fluid_roles.csv; the check says so at once."""

    def drop_a_row(folder: Path) -> None:
        path = folder / "fluid_roles.csv"
        lines = path.read_text(encoding="utf-8").splitlines(keepends=True)
        path.write_text("".join(lines[:1] + lines[2:]), encoding="utf-8")

    code, _, err = _version_with(tmp_path, monkeypatch, capsys, drop_a_row)
    assert code == 1
    _said_once(err, "fluid_roles.csv")


def test_the_shipped_data_passes(capsys):
    from ui.app import main

    assert main(["vetfluid", "--version"]) == 0
    captured = capsys.readouterr()
    assert captured.err == "" and captured.out.startswith(f"vetfluid {__version__} (species ")
