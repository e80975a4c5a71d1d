"""The wheel ships species_data/ and icons/, and the locator finds them when installed."""

from __future__ import annotations

import subprocess
import sys
import zipfile
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def test_wheel_carries_the_data_and_finds_it_when_installed(tmp_path):
    out = tmp_path / "dist"
    subprocess.run(
        [sys.executable, "-m", "pip", "wheel", "--no-deps", "--no-build-isolation", "-q",
         "-w", str(out), str(ROOT)],
        check=True, capture_output=True,
    )  # fmt: skip
    wheel = next(out.glob("vetfluid-*.whl"))
    names = set(zipfile.ZipFile(wheel).namelist())
    for shipped in (ROOT / "species_data").glob("*.csv"):
        assert f"vetfluid/_resources/species_data/{shipped.name}" in names
    assert "vetfluid/_resources/icons/vetfluid.svg" in names
    assert "ui/app.py" in names

    target = tmp_path / "site"
    subprocess.run(
        [sys.executable, "-m", "pip", "install", "--no-deps", "-q", "--target", str(target),
         str(wheel)],
        check=True, capture_output=True,
    )  # fmt: skip
    probe = (
        f"import sys; sys.path.insert(0, {str(target)!r}); "
        "from vetfluid.common.paths import resource_dir; "
        "from vetfluid.tables.species import load_table; "
        "print(resource_dir('species_data')); print(len(load_table().species_ids()))"
    )
    result = subprocess.run(
        [sys.executable, "-c", probe], capture_output=True, text=True, check=True, cwd=tmp_path
    )
    located, count = result.stdout.split()
    assert Path(located).is_relative_to(target)
    assert int(count) >= 30


def test_checkout_locator_finds_the_top_level_folders():
    from vetfluid.common.paths import resource_dir

    assert resource_dir("species_data") == ROOT / "species_data"
    assert resource_dir("icons") == ROOT / "icons"


def test_unknown_resources_list_the_known_ones():
    import pytest

    from vetfluid.common.errors import InputError
    from vetfluid.common.paths import resource_dir, resource_file

    with pytest.raises(InputError, match="species_data, icons"):
        resource_dir("sounds")
    with pytest.raises(InputError, match="parameters.csv"):
        resource_file("species_data", "parameter.csv")


def test_vetfluid_home_replaces_the_user_data_folder(tmp_path, monkeypatch):
    from vetfluid.common.paths import user_data_dir
    from vetfluid.tables.species import overrides_dir

    monkeypatch.setenv("VETFLUID_HOME", str(tmp_path / "clinic"))
    assert user_data_dir() == tmp_path / "clinic"
    assert (tmp_path / "clinic").is_dir()
    assert overrides_dir() == tmp_path / "clinic" / "overrides"


def _bundle_folder(root: Path) -> Path:
    """A folder laid out as scripts/build_bundle.py lays out a bundle's data: the shipped
    species_data/ and icons/ at its top."""
    import shutil

    for name in ("species_data", "icons"):
        shutil.copytree(ROOT / name, root / name)
    return root


def test_a_frozen_bundle_finds_its_data_in_its_own_folder(tmp_path, monkeypatch):
    """PyInstaller sets sys.frozen and sys._MEIPASS (the one-folder bundle's _internal/,
    PyInstaller manual, "Run-time information"); the data is read from there, and the
    species data's version is that of the files shipped."""
    from vetfluid.common.paths import bundle_root, resource_dir, resource_file
    from vetfluid.tables.data_version import species_data_version

    unpacked = _bundle_folder(tmp_path / "_internal")
    monkeypatch.setattr(sys, "frozen", True, raising=False)
    monkeypatch.setattr(sys, "_MEIPASS", str(unpacked), raising=False)
    assert bundle_root() == unpacked
    assert resource_dir("species_data") == unpacked / "species_data"
    assert resource_file("icons", "vetfluid.svg") == unpacked / "icons" / "vetfluid.svg"
    assert species_data_version() == species_data_version(ROOT / "species_data")


def test_a_frozen_app_without_meipass_looks_beside_its_executable(tmp_path, monkeypatch):
    """Freezers that set sys.frozen without sys._MEIPASS keep data beside the executable
    (cx_Freeze FAQ, "Using data files": the folder of sys.executable)."""
    from vetfluid.common.paths import resource_dir

    folder = _bundle_folder(tmp_path / "app")
    monkeypatch.setattr(sys, "frozen", True, raising=False)
    monkeypatch.delattr(sys, "_MEIPASS", raising=False)
    monkeypatch.setattr(sys, "executable", str(folder / "vetfluid"))
    assert resource_dir("icons") == folder / "icons"


def test_a_frozen_bundle_missing_its_data_says_so_and_reads_no_other_copy(tmp_path, monkeypatch):
    """A bundle without species_data/ must not fall back to a checkout's or an installed
    wheel's values: the clinic would plan from data the bundle does not carry."""
    import pytest

    from vetfluid.common.paths import resource_dir

    (tmp_path / "_internal").mkdir()
    monkeypatch.setattr(sys, "frozen", True, raising=False)
    monkeypatch.setattr(sys, "_MEIPASS", str(tmp_path / "_internal"), raising=False)
    with pytest.raises(FileNotFoundError, match="missing from this bundle"):
        resource_dir("species_data")
