"""The species data's version: a short hash of what the shipped CSV files hold, so the About
box (and anyone comparing two installations) can tell whether two copies hold the same data."""

from __future__ import annotations

import hashlib
import shutil

import pytest

from vetfluid.common.errors import InputError
from vetfluid.common.paths import resource_dir
from vetfluid.tables.data_version import species_data_version


@pytest.fixture()
def data_copy(tmp_path):
    folder = tmp_path / "species_data"
    shutil.copytree(resource_dir("species_data"), folder)
    return folder


def test_the_version_is_a_short_hex_digest_of_the_shipped_data():
    version = species_data_version()
    assert len(version) == 12
    int(version, 16)  # hexadecimal
    assert species_data_version(resource_dir("species_data")) == version


def test_a_copy_has_the_same_version_and_a_changed_value_does_not(data_copy):
    assert species_data_version(data_copy) == species_data_version()
    parameters = data_copy / "parameters.csv"
    parameters.write_bytes(parameters.read_bytes().replace(b"145,140,155", b"145,140,156", 1))
    assert species_data_version(data_copy) != species_data_version()


def test_a_renamed_file_or_an_added_one_changes_it_but_other_files_do_not(data_copy):
    before = species_data_version(data_copy)
    (data_copy / "notes.txt").write_text("not data")  # only the CSV files are the data
    assert species_data_version(data_copy) == before
    (data_copy / "extra.csv").write_text("a,b\n")
    assert species_data_version(data_copy) != before
    (data_copy / "extra.csv").unlink()
    (data_copy / "fluids.csv").rename(data_copy / "fluids2.csv")
    assert species_data_version(data_copy) != before


def test_line_endings_do_not_change_it(data_copy):
    # a checkout on Windows may turn LF into CRLF: the same data, the same version
    before = species_data_version(data_copy)
    for path in data_copy.glob("*.csv"):
        path.write_bytes(path.read_bytes().replace(b"\r\n", b"\n").replace(b"\n", b"\r\n"))
    assert species_data_version(data_copy) == before


def test_it_is_sha256_over_names_and_contents_in_name_order(data_copy):
    # the method written out independently (hashlib's SHA-256, FIPS 180-4)
    digest = hashlib.sha256()
    for path in sorted(data_copy.glob("*.csv"), key=lambda p: p.name):
        digest.update(path.name.encode() + b"\0")
        digest.update(path.read_bytes().replace(b"\r\n", b"\n") + b"\0")
    assert species_data_version(data_copy) == digest.hexdigest()[:12]


def test_a_folder_without_data_is_refused_in_words(tmp_path):
    with pytest.raises(InputError, match="no species data"):
        species_data_version(tmp_path)
