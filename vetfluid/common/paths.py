"""Where things are: shipped resources and the user's data folder.

Resources (``species_data/``, ``icons/``) are found the same way from a checkout,
an editable install and a built wheel (hatchling's ``force-include`` maps the
folders to ``vetfluid/_resources/`` inside the wheel). A frozen bundle (a standalone
build made by ``scripts/build_bundle.py``, no Python needed on the clinic's machine)
carries them at the top of its own folder and looks nowhere else.
"""

from __future__ import annotations

import contextlib
import os
import sys
from pathlib import Path

from vetfluid.common.errors import InputError, printable

HOME_VARIABLE = "VETFLUID_HOME"
RESOURCE_FOLDERS = ("species_data", "icons")

_PACKAGE_DIR = Path(__file__).resolve().parents[1]  # vetfluid/, above common/


def bundle_root() -> Path | None:
    """The folder a frozen vetfluid keeps its files in; None when Python runs the sources.

    A freezer sets ``sys.frozen``. PyInstaller also sets ``sys._MEIPASS`` to the folder it
    unpacked or laid out (in a one-folder bundle, ``_internal/`` beside the executable);
    freezers without it keep their files beside the executable."""
    if not getattr(sys, "frozen", False):
        return None
    unpacked = getattr(sys, "_MEIPASS", None)
    return Path(unpacked) if unpacked else Path(sys.executable).resolve().parent


def resource_dir(name: str) -> Path:
    """The folder of a shipped resource kind (``species_data`` or ``icons``).

    A frozen bundle looks only inside itself, so a bundle missing its data says so
    instead of reading some other installation's values."""
    if name not in RESOURCE_FOLDERS:
        raise InputError(
            f"unknown resource folder {name!r}",
            field="resource",
            value=name,
            fix=f"use one of: {', '.join(RESOURCE_FOLDERS)}",
        )
    root = bundle_root()
    if root is not None:
        candidates: tuple[Path, ...] = (root / name,)
    else:
        candidates = (_PACKAGE_DIR / "_resources" / name, _PACKAGE_DIR.parent / name)
    for candidate in candidates:
        if candidate.is_dir():
            return candidate
    where = f"this bundle ({root})" if root is not None else "this installation"
    raise FileNotFoundError(f"vetfluid's {name}/ folder is missing from {where}")


def resource_file(folder: str, filename: str) -> Path:
    """A shipped file; an unknown name raises an error listing the known ones."""
    directory = resource_dir(folder)
    path = directory / filename
    if not path.is_file():
        known = sorted(p.name for p in directory.iterdir() if p.is_file())
        raise InputError(
            f"no file {filename!r} in {folder}/",
            field="resource",
            value=filename,
            fix=f"known files: {', '.join(known)}",
        )
    return path


def user_data_path() -> Path:
    """Where the user data folder is, without creating it: ``VETFLUID_HOME`` when set
    (tests always set it to a temporary folder), otherwise the platform's user data folder
    from platformdirs."""
    override = os.environ.get(HOME_VARIABLE)
    if override:
        return Path(override).expanduser()
    from platformdirs import user_data_path as platform_data_path

    return platform_data_path("vetfluid", appauthor=False)


def user_data_dir() -> Path:
    """The folder for everything vetfluid writes (overrides, records, settings).

    It holds patient records, so it is created readable by its owner only (0700; the
    folders above it, if missing, as the system makes any folder). A folder that already
    exists is left as its owner set it.

    A folder that cannot be created (a file in the way, no permission) is not an error
    here: what is read from it is simply not there, and each write into it fails with its
    own message. The window and the command lines say so at start, in words, with what to
    do (:func:`data_folder_problem`), instead of failing wherever the folder is first named.
    """
    path = user_data_path()
    with contextlib.suppress(OSError):  # said by data_folder_problem(), see above
        path.mkdir(mode=0o700, parents=True, exist_ok=True)
    return path


def data_folder_problem() -> str:
    """Why the user data folder cannot keep anything, in one line with what to do; "" when
    it can. Creates the folder as :func:`user_data_dir` does, if it can.

    The words say whether the clinic overrides kept there are read: a folder that exists
    and may be read but not written (a read-only share or mount) has them read, and only
    nothing can be saved; one that cannot be made or read has none read. The window and the
    command lines show this text as it is, so they say it alike."""
    path = user_data_path()
    named = f" (set by {HOME_VARIABLE})" if os.environ.get(HOME_VARIABLE) else ""
    try:
        path.mkdir(mode=0o700, parents=True, exist_ok=True)
    except OSError as exc:
        reason, fix = _why_not_created(path, exc)
    else:
        if not os.access(path, os.R_OK | os.X_OK):
            reason, fix = "you may not read it", "make it readable and writable for you"
        elif os.access(path, os.W_OK | os.X_OK):
            return ""
        else:  # read: the overrides in it are used (vetfluid/tables/species.py)
            return printable(
                f"the user data folder {path}{named} is read-only for you: the clinic "
                f"overrides in it are read, but nothing can be saved there — set "
                f"{HOME_VARIABLE} to a folder you can write to, or make it writable for you, "
                "then start vetfluid again"
            )
    return printable(
        f"the user data folder {path}{named} cannot be used: {reason}, so no clinic overrides "
        f"are read from it and nothing can be saved there — set {HOME_VARIABLE} to a folder "
        f"you can write to, or {fix}, then start vetfluid again"
    )


def _why_not_created(path: Path, exc: OSError) -> tuple[str, str]:
    """Why a folder could not be made, and what would let it be, in words."""
    above = path
    while not above.exists() and above != above.parent:
        above = above.parent
    if above.exists() and not above.is_dir():
        return f"{above} is a file, not a folder", "move that file away"
    if isinstance(exc, PermissionError):
        return f"you may not create folders in {above}", f"make {above} writable for you"
    return exc.strerror or str(exc), "fix what stops it being created"


def owner_only_file(path: Path) -> Path:
    """Make ``path`` exist as a file only its owner can read and write (0600), before any
    patient data goes in: a new file is created so, an existing one narrowed. Whatever then
    writes into it (Python, or Qt's PDF writer, which keeps an existing file's mode) keeps
    patient data private from the first byte (issue 17: 0600 files, 0700 folders)."""
    descriptor = os.open(path, os.O_WRONLY | os.O_CREAT, 0o600)
    os.close(descriptor)
    if os.name == "posix":
        os.chmod(path, 0o600)
    return path


def write_owner_only_text(path: Path, text: str) -> None:
    """Write text into ``path`` as an owner-only file (see :func:`owner_only_file`)."""
    owner_only_file(path)
    with open(path, "w", encoding="utf-8") as handle:
        handle.write(text)
