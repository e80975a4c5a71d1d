"""Backing up the patient records and restoring them from a backup, as the window's File
menu does it (issue 21), on top of :class:`vetfluid.records.store.Records`' own ``backup``,
``restore`` and ``restore_into_server``.

* A backup is an SQLite records file (whichever engine the records are on). Before
  anything is restored, the file chosen is read, read-only, and refused in words unless
  it is one: an SQLite database with vetfluid's tables and a schema version this vetfluid
  reads (:func:`describe_records_file`). ``Records.restore`` then checks it whole.
* Restoring replaces what the records hold, so the records as they are come first into
  an automatic backup in the user data folder (``backups/``, owner-only; the name says
  when): nothing saved is lost by a restore, and the words say where that copy is. A
  records file that cannot even be opened (damaged) is copied as it lies, byte for byte,
  its ``-wal`` beside it, and the backup restored into a new file put in its place.
* On a server, the server's records are replaced in one transaction
  (``Records.restore_into_server``); on SQLite, the file is written through SQLite's online
  backup in one transaction (``Records.restore``). Either holds what it held, or the whole
  backup.
"""

from __future__ import annotations

import os
import shutil
import sqlite3
import tempfile
from contextlib import closing
from dataclasses import dataclass
from datetime import datetime
from pathlib import Path

from vetfluid.common.errors import InputError
from vetfluid.common.paths import user_data_dir
from vetfluid.records.location import ServerAddress, records_url, server_address
from vetfluid.records.schema import SCHEMA_VERSION
from vetfluid.records.store import (
    DATABASE_NAME,
    Records,
    RecordsError,
    check_layout,
    open_backup,
    remove_restore_leftovers,
)

BACKUP_SUFFIX = ".sqlite"  # a backup is an SQLite records file, as the one on this computer
AUTOMATIC_FOLDER = "backups"  # in the user data folder: the copies made before a restore
_SQLITE_HEADER = b"SQLite format 3\x00"  # the first 16 bytes of every SQLite database
_TABLES = ("meta", "patients", "plan_versions", "observations")


@dataclass(frozen=True, kw_only=True)
class RecordsSummary:
    """What a records file or server holds, as a clinician counts it."""

    patients: int
    versions: int
    newest_saved_at: str | None  # when the newest plan version was saved (ISO, UTC); None: none

    def words(self) -> str:
        """ "12 patients, 30 plan versions", counted in words a user reads."""
        patients = f"{self.patients} patient{'s' if self.patients != 1 else ''}"
        versions = f"{self.versions} plan version{'s' if self.versions != 1 else ''}"
        return f"{patients}, {versions}"

    def newest_words(self) -> str:
        """When the newest version was saved, in this computer's time ("" when none)."""
        if not self.newest_saved_at:
            return ""
        try:
            moment = datetime.fromisoformat(self.newest_saved_at).astimezone()
        except ValueError:
            return self.newest_saved_at
        return moment.strftime("%Y-%m-%d %H:%M")


@dataclass(frozen=True, kw_only=True)
class Restored:
    """A restore done: what came in, where it went, and where the records as they were
    are kept (``kept_at`` None: there were none; ``before`` None: none, or they could not be
    opened and were copied as they lay)."""

    backup: RecordsSummary
    where: str
    kept_at: Path | None
    before: RecordsSummary | None


def describe_records_file(path: Path, *, live: bool = False) -> RecordsSummary:
    """What an SQLite records file (a backup, or the file on this computer) holds, read
    read-only; RecordsError in words when it is not a vetfluid records file this vetfluid
    reads. Only its header, layout and counts are read: ``Records.restore`` checks a
    backup whole before it copies anything. Nothing is written beside it (it may be on
    read-only media); ``live``: the records file in use, read as SQLite reads a live one."""
    path = Path(path)
    name = path.name
    not_ours = "is not a vetfluid records backup"
    fix = "choose a backup that vetfluid wrote (File ▸ Back up records…); nothing was restored"
    try:
        if not path.is_file():
            raise RecordsError(f"{name} {not_ours}: it is not a file", fix=fix)
        with path.open("rb") as handle:
            header = handle.read(len(_SQLITE_HEADER))
    except OSError as exc:
        raise RecordsError(f"{name} cannot be read: {exc.strerror}", fix=fix) from exc
    if header != _SQLITE_HEADER:
        kind = "it is empty" if not header else "it is not a database file"
        raise RecordsError(f"{name} {not_ours}: {kind}", fix=fix)
    try:
        with closing(open_backup(path, live=live)) as db:
            present = {row[0] for row in db.execute("SELECT name FROM sqlite_master")}
            missing = [t for t in _TABLES if t not in present]
            if missing:
                raise RecordsError(
                    f"{name} {not_ours}: it is a database, but not one of vetfluid's records",
                    fix=fix,
                )
            row = db.execute("SELECT value FROM meta WHERE key = 'schema_version'").fetchone()
            version = row[0] if row is not None else None
            if not (isinstance(version, str) and version.isdigit() and version.isascii()):
                raise RecordsError(
                    f"{name} {not_ours}: it does not say which layout of records it holds",
                    fix=fix,
                )
            if int(version) > SCHEMA_VERSION:
                raise RecordsError(
                    f"{name} was written by a newer vetfluid (records layout {int(version)}; "
                    f"this one reads up to {SCHEMA_VERSION}); nothing was restored",
                    fix="restore it with that vetfluid or a newer one",
                )
            check_layout(db, name)  # a view or other columns in our tables' place
            patients = db.execute("SELECT count(*) FROM patients").fetchone()[0]
            versions, newest = db.execute(
                "SELECT count(*), max(created_at) FROM plan_versions"
            ).fetchone()
    except sqlite3.DatabaseError as exc:  # a damaged file, or one cut short
        raise RecordsError(
            f"{name} cannot be read as vetfluid records ({exc}); it may be damaged",
            fix="choose another backup; nothing was restored",
        ) from exc
    return RecordsSummary(patients=patients, versions=versions, newest_saved_at=newest)


def describe_records(records: Records) -> RecordsSummary:
    """What open records hold: the file's counts, or the server's (read through a
    connection of its own, with the records' own address and password file)."""
    if records.server is None:
        return describe_records_file(records.path, live=True)
    from sqlalchemy import create_engine, func, select
    from sqlalchemy.exc import SQLAlchemyError

    from vetfluid.records.schema import patients, plan_versions

    address = records.server
    engine = create_engine(address.sqlalchemy_url(), connect_args=address.connect_args())
    try:
        with engine.connect() as conn:
            count = conn.execute(select(func.count()).select_from(patients)).scalar_one()
            versions, newest = conn.execute(
                select(func.count(), func.max(plan_versions.c.created_at))
            ).one()
    except SQLAlchemyError as exc:
        raise RecordsError(
            f"the records server {address.label} cannot be read now",
            fix="check the network and the server; nothing was changed",
        ) from exc
    finally:
        engine.dispose()
    return RecordsSummary(patients=count, versions=versions, newest_saved_at=newest)


def suggested_backup_name(now: datetime | None = None) -> str:
    """``vetfluid-records-2025-03-14-0830.sqlite``: a backup's name that says when."""
    moment = now or datetime.now()
    return f"vetfluid-records-{moment:%Y-%m-%d-%H%M}{BACKUP_SUFFIX}"


def automatic_backup_path(now: datetime | None = None) -> Path:
    """A new name in the user data folder's ``backups/`` (made owner-only) for the copy of
    the records taken before a restore; never one already there."""
    folder = user_data_dir() / AUTOMATIC_FOLDER
    try:
        folder.mkdir(mode=0o700, exist_ok=True)
    except OSError as exc:  # a file of that name, no permission, a full disk
        why = "a file has that name" if folder.is_file() else exc.strerror or str(exc)
        raise RecordsError(
            f"the folder {folder}, where the records as they are would be copied first, "
            f"cannot be made ({why}); nothing was restored",
            fix="move or rename what is in the way (or free some disk space), then restore again",
        ) from exc
    moment = now or datetime.now()
    stem = f"records-before-restore-{moment:%Y-%m-%d-%H%M%S}"
    for attempt in range(1000):
        path = folder / f"{stem}{f'-{attempt}' if attempt else ''}{BACKUP_SUFFIX}"
        if not path.exists():
            return path
    raise RecordsError(f"no free name for a backup in {folder}", fix="clear out old backups")


def same_file(a: Path, b: Path) -> bool:
    """Whether ``a`` and ``b`` are one file, however written (a backup must never be
    written over, or restored from, the records file itself)."""
    try:
        return Path(a).resolve() == Path(b).resolve() or (
            Path(a).exists() and Path(b).exists() and os.path.samefile(a, b)
        )
    except OSError:
        return False


def restore_records(
    backup: Path,
    *,
    path: Path | None = None,
    url: str | None = None,
    server: ServerAddress | None = None,
) -> Restored:
    """Replace the records with ``backup``: an SQLite file (``path``), a server (``server``,
    as records open in a window reach it, or ``url``), else the records the setting names
    (a window passes the records it has open, the ones its question described: the setting
    may have changed since). The records must not be open in this
    program meanwhile (the window closes its own first). The records as they are go first
    into :func:`automatic_backup_path`; the backup is refused in words unless it is a
    vetfluid records file (:func:`describe_records_file`). RecordsError says what went
    wrong, and that the records hold what they held."""
    try:
        remove_restore_leftovers(
            Path(path) if path is not None else user_data_dir() / DATABASE_NAME
        )
        return _restore_records(Path(backup), path=path, url=url, server=server)
    except OSError as exc:  # a disk error no step foresaw: said, never raised raw
        raise RecordsError(
            f"the records could not be restored ({exc.strerror or exc}); nothing was restored",
            fix="check that the user data folder is writable and the disk has space, then "
            "restore again",
        ) from exc


def _restore_records(
    backup: Path, *, path: Path | None, url: str | None, server: ServerAddress | None
) -> Restored:
    coming = describe_records_file(backup)
    if path is None and server is not None:
        return _restore_into_server(backup, coming, server)
    if path is None:
        try:
            url = records_url() if url is None else url
        except InputError as exc:  # an unreadable settings file: said, nothing done
            raise RecordsError(f"{exc.message}; nothing was restored", fix=exc.fix) from None
        if url:
            try:
                address = server_address(url)
            except InputError as exc:
                raise RecordsError(f"{exc.message}; nothing was restored", fix=exc.fix) from None
            return _restore_into_server(backup, coming, address)
        path = user_data_dir() / DATABASE_NAME
    return _restore_into_file(backup, coming, Path(path))


def _restore_into_server(backup: Path, coming: RecordsSummary, address: ServerAddress) -> Restored:
    with Records.open(server=address) as records:
        before = describe_records(records)
        kept = records.backup(automatic_backup_path())
        records.restore_into_server(backup)
        return Restored(backup=coming, where=records.where, kept_at=kept, before=before)


def _restore_into_file(backup: Path, coming: RecordsSummary, path: Path) -> Restored:
    if same_file(backup, path):
        raise RecordsError(
            f"{backup.name} is the records file itself, not a backup of it",
            fix="choose a backup written elsewhere; nothing was restored",
        )
    kept = automatic_backup_path()
    try:
        current = Records.open(path) if path.exists() else None
    except RecordsError:  # damaged or not ours: kept as it lies, then replaced
        return _replace_unusable_file(backup, coming, path, kept)
    if current is None:  # no records yet: nothing to keep
        Records.restore(backup, path)
        return Restored(backup=coming, where=str(path), kept_at=None, before=None)
    with current:
        before = describe_records(current)
        current.backup(kept)
        try:  # the plan kept as the draft waits in the restored records, as promised,
            # stamped as from these records: it never binds by patient id alone there
            draft_kept = current.draft_kept_over_restore()
        except RecordsError:  # unreadable: it is in the copy kept above
            draft_kept = None
    Records.restore(backup, path, draft_kept=draft_kept)
    return Restored(backup=coming, where=str(path), kept_at=kept, before=before)


def _replace_unusable_file(
    backup: Path, coming: RecordsSummary, path: Path, kept: Path
) -> Restored:
    """A records file that cannot be opened: copied as it lies (with its -wal and -shm, so
    nothing in it is lost), then the backup is restored into a new file beside it that
    replaces it once whole."""
    try:
        for side in ("", "-wal", "-shm"):
            source = path.with_name(path.name + side)
            if source.exists():
                target = kept.with_name(kept.name + side)
                shutil.copyfile(source, target)
                os.chmod(target, 0o600)
    except OSError as exc:
        raise RecordsError(
            f"the records file {path.name} could not be copied aside ({exc.strerror}); "
            "nothing was restored",
            fix="free some disk space in the user data folder",
        ) from exc
    # beside it (renamed onto it), named after this process: a later start removes it when
    # a kill left it (remove_restore_leftovers)
    handle, name = tempfile.mkstemp(
        dir=path.parent, prefix=f".{path.name}.{os.getpid()}-", suffix=".restoring"
    )
    os.close(handle)
    staging = Path(name)
    try:
        Records.restore(backup, staging)
        for side in ("-wal", "-shm"):  # the old file's, copied aside above; never the new one's
            path.with_name(path.name + side).unlink(missing_ok=True)
        os.replace(staging, path)
    except OSError as exc:
        raise RecordsError(
            f"the backup could not be put in place of {path.name} ({exc.strerror})",
            fix=f"the file as it was is kept in {kept}",
        ) from exc
    finally:
        for side in ("", "-journal", "-wal", "-shm"):
            staging.with_name(staging.name + side).unlink(missing_ok=True)
    return Restored(backup=coming, where=str(path), kept_at=kept, before=None)


def back_up(records: Records, target: Path) -> RecordsSummary:
    """Write a backup of open ``records`` to ``target`` (``Records.backup``: consistent
    while in use, whole or not at all) and say what it holds, read back from the file
    written. Never over the records file itself."""
    if records.path is not None and same_file(records.path, target):
        raise RecordsError(
            f"{Path(target).name} is the records file itself",
            fix="choose another name or folder for the backup; the records are unchanged",
        )
    written = records.backup(Path(target))
    return describe_records_file(written)
