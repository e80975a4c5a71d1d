"""Patient data written by the window is the owner's only from the first byte (issue 17,
item 9: 0600 files): the observations export and a printed sheet as PDF."""

import os
import stat

import pytest

from vetfluid.common.paths import owner_only_file, write_owner_only_text

pytestmark = pytest.mark.skipif(os.name != "posix", reason="POSIX file modes")


def _mode(path):
    return stat.S_IMODE(path.stat().st_mode)


def test_text_written_owner_only_even_with_a_permissive_umask(tmp_path):
    old = os.umask(0)
    try:
        path = tmp_path / "observations.csv"
        write_owner_only_text(path, "hour,weight\n")
        assert _mode(path) == 0o600
        assert path.read_text(encoding="utf-8") == "hour,weight\n"
        existing = tmp_path / "old.csv"
        existing.write_text("x")
        os.chmod(existing, 0o644)
        write_owner_only_text(existing, "y")  # an existing world-readable file is narrowed
        assert _mode(existing) == 0o600
    finally:
        os.umask(old)


def test_a_printed_sheet_pdf_is_owner_only(qtbot, tmp_path):
    from ui.printouts.printing import print_sheet_to_pdf

    old = os.umask(0)
    try:
        path = tmp_path / "sheet.pdf"
        print_sheet_to_pdf("<p>Rex, 20 kg</p>", path)
        assert path.stat().st_size > 0
        assert _mode(path) == 0o600
        assert owner_only_file(path) == path
    finally:
        os.umask(old)
