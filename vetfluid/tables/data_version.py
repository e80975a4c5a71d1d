"""The species data's version: a short SHA-256 digest of the shipped CSV files.

The data files carry no version number of their own; a digest of what they hold tells
whether two installations (or a printout and the program) rest on the same values. It
covers each ``*.csv`` file's name and bytes, in name order, with line endings read as LF
(a Windows checkout holds the same data). Method: SHA-256 (FIPS 180-4, hashlib).
"""

from __future__ import annotations

import hashlib
from pathlib import Path

from vetfluid.common.errors import InputError
from vetfluid.common.paths import resource_dir

VERSION_CHARACTERS = 12  # 48 bits: enough to tell data sets apart, short enough to read out


def species_data_version(folder: Path | None = None) -> str:
    """The first 12 hex digits of the SHA-256 of ``folder``'s CSV files (default: the
    shipped ``species_data/``)."""
    folder = Path(folder) if folder is not None else resource_dir("species_data")
    files = sorted(folder.glob("*.csv"), key=lambda path: path.name)
    if not files:
        raise InputError(
            f"no species data (*.csv) in {folder}",
            field="species_data",
            value=str(folder),
            fix="point at vetfluid's species_data folder",
        )
    digest = hashlib.sha256()
    for path in files:
        digest.update(path.name.encode() + b"\0")
        digest.update(path.read_bytes().replace(b"\r\n", b"\n") + b"\0")
    return digest.hexdigest()[:VERSION_CHARACTERS]
