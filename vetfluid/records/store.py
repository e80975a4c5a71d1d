"""Patient records that never lose data: SQLite in the user data folder, or a clinic's
PostgreSQL server shared by its workstations (issue 21), through one toolkit.

* One set of tables and statements for both engines (SQLAlchemy Core,
  :mod:`vetfluid.records.schema`); the engine is chosen by one setting
  (:mod:`vetfluid.records.location`: ``VETFLUID_RECORDS_URL`` or the window's Records
  settings); without it, the SQLite file in the user data folder.
* SQLite: WAL journal, foreign keys on, ``synchronous=FULL``, one ``BEGIN IMMEDIATE``
  transaction per save, so a crash or power cut loses at most the save in progress.
  PostgreSQL: one transaction per save, committed durably by the server.
* Several workstations at once: a new version's number is taken under a lock on its
  patient's row (``SELECT … FOR UPDATE``; on SQLite the write lock of ``BEGIN
  IMMEDIATE``), as the highest number so far plus one, in the transaction that inserts
  it; two saves of the same patient are thus one after the other: numbers never collide,
  never skip, and nothing is overwritten. A save that knew of the patient's versions up to
  N (``known_latest``) is told which were saved meanwhile, by whom and where.
* Created in one transaction: a database with no tables at all (an empty file, or the one
  page ``PRAGMA journal_mode = WAL`` writes first, as a kill during creation leaves it; an
  empty server database) holds nothing of the user's and is finished as a new one.
* A schema version in ``meta`` with forward migrations (new databases are built as schema
  1 and migrated in the same transaction, so every database has one layout); one from a
  newer vetfluid, one whose schema version is missing or not a version, one that is not
  a vetfluid database or is damaged, is refused with a clear message and left untouched.
* Opening stays fast at a clinic's size (50,000 patients, 500,000 versions,
  ``scripts/make_clinic_records.py``, ``tests/test_records_scale_benchmark.py``): SQLite
  checks the small tables read at once (``meta``, ``patients``, ``draft``) with
  ``PRAGMA quick_check``; the plan versions, gigabytes by then, are checked as each is
  read (a damaged page is a RecordsError then), in full by :meth:`restore`.
* Plans are immutable versions (triggers refuse UPDATE and DELETE); saving always
  adds a version with the request, the computed plan, the findings, the reasons
  given for acknowledged warnings, the author's initials, the workstation, a timestamp
  and the program version.
* The draft being edited belongs to the workstation: on SQLite it is in the records file;
  with a server it is in an SQLite file on this computer (``server-drafts-….sqlite`` in
  the user data folder, keyed on the server's :attr:`~ServerAddress.identity`, not on how
  its address is written; a file kept under an older spelling is carried over), so a
  server that cannot be reached leaves it on the local disk (the server's own ``draft``
  table, kept so both engines have one schema, stays empty).
* A server that cannot be reached: :meth:`Records.open` with ``allow_unreachable`` opens
  the local drafts all the same (:attr:`Records.unreachable` says why); every read or write
  of the server tries it again (at most every :data:`RETRY_AFTER_S` seconds unless asked,
  :meth:`Records.reach`), and once it answers the records are as usual. A connection lost
  mid-session is said the same way: one message naming the server, the local draft and
  what to check (:class:`RecordsUnreachable`).
* Each database has an identity of its own (``database_id`` in ``meta``, made once), so a
  draft can tell which database its patient ids belong to: a restore (into a server or
  into the SQLite file) gives the records a new one, since ids are reused after it; every
  write by id reads it again in its own transaction (:class:`RecordsReplaced`).
* The SQLite file is created readable by its owner only, before SQLite writes its first
  byte (SQLite gives its ``-wal`` and ``-shm`` files the same mode); so are backups and
  restored files. Only parameterised SQL.
* Backup: SQLite through its online backup; a server's records are copied, table by
  table, into a new SQLite records file; either is written beside its target and renamed
  onto it when whole. Restore is into an SQLite file, one transaction. One patient with
  every version exports to and imports from plain JSON.
"""

from __future__ import annotations

import contextlib
import hashlib
import json
import os
import re
import sqlite3
import tempfile
import time
import uuid
from collections.abc import Iterator
from contextlib import closing
from dataclasses import dataclass
from datetime import UTC, datetime
from pathlib import Path

from sqlalchemy import (
    Connection,
    Engine,
    LargeBinary,
    cast,
    create_engine,
    event,
    func,
    inspect,
    or_,
    select,
    text,
)
from sqlalchemy.exc import DBAPIError, OperationalError, SQLAlchemyError
from sqlalchemy.pool import StaticPool

from vetfluid import __version__
from vetfluid.common.errors import InputError, VetfluidError
from vetfluid.common.paths import user_data_dir
from vetfluid.records import schema
from vetfluid.records.location import (
    ServerAddress,
    password_file_problem,
    records_url,
    server_address,
    workstation_name,
)
from vetfluid.records.schema import (
    SCHEMA_VERSION,
    TABLES,
    draft,
    meta,
    patients,
    plan_versions,
)

DATABASE_NAME = "records.sqlite"
EXPORT_FORMAT = "vetfluid-patient"
# How every vetfluid has written its schema version: a whole number from 1, in ASCII
# digits (a few more than any real version, so a newer vetfluid's is still read as newer).
_VERSION_TEXT = re.compile(r"[1-9][0-9]{0,8}")
# The small tables read as soon as the file opens, checked then (the others at reading).
_CHECKED_AT_OPEN = ("meta", "patients", "draft")
# One lock for building or migrating a server's schema (pg_advisory_xact_lock's key):
# two workstations starting at once do it one after the other.
_SCHEMA_LOCK = 0x76657466  # "vetf"
# A server that did not answer is tried again by the reads and writes that need it at most
# this often (a host that drops packets holds each try for the connect timeout).
RETRY_AFTER_S = 10.0
# A restore into a server waits at most this long for the tables' locks (another
# workstation's transaction under way), then stops in words instead of freezing the window.
RESTORE_LOCK_WAIT_S = 10.0
# the keys of ``meta`` vetfluid writes: a backup's other rows are never copied
META_KEYS = ("schema_version", "database_id")
# the largest id a record can have: the server's INTEGER columns (PostgreSQL 15
# documentation, 8.1.1 "Integer Types": -2147483648 to +2147483647)
_LARGEST_ID = 2_147_483_647
_PATIENT_COLUMNS = ("id", "name", "species_id", "sex", "birth_date", "age_text", "client_ref",
                    "notes", "created_at")  # fmt: skip


class RecordsError(VetfluidError):
    """The records database cannot be used as asked (the message says why and what to do)."""


class RecordsUnreachable(RecordsError):
    """The records server cannot be reached (or refused this computer); the draft is kept on
    this computer. The message says where, and what to check."""


class RecordsReplaced(RecordsError):
    """The records were replaced since they were read (a backup restored into them, their
    database identity changed): nothing was written by id, since the ids may now be other
    patients'. ``database_id``: the identity they have now."""

    def __init__(self, message: str, *, database_id: str | None) -> None:
        super().__init__(message)
        self.database_id = database_id


class DraftSetAside(RecordsError):
    """The stored draft could not be read and was moved, as stored, to ``path``."""

    def __init__(self, message: str, *, path: Path, fix: str) -> None:
        super().__init__(message, fix=fix)
        self.path = path


def _json_or_text(text: str) -> object:
    try:
        return json.loads(text)
    except json.JSONDecodeError:
        return text


def _reason(exc: BaseException) -> str:
    """What the database said, without the statement SQLAlchemy adds to it."""
    original = getattr(exc, "orig", None)
    return str(original if original is not None else exc).strip().splitlines()[0]


# what libpq and the server say when the password is wrong or missing (PostgreSQL 15,
# src/backend/libpq/auth.c and src/interfaces/libpq/fe-auth.c)
_PASSWORD_REFUSED = ("password authentication failed", "no password supplied")


def _lost_connection(exc: BaseException) -> bool:
    """Whether a server error means it cannot be reached: the connection could not be
    made (libpq gives no SQLSTATE then), was dropped (SQLAlchemy's disconnect test), or
    the server said so (class 08, connection exception; 57P, operator intervention:
    PostgreSQL 15 documentation, Appendix A)."""
    if not isinstance(exc, DBAPIError):
        return False
    if exc.connection_invalidated:
        return True
    state = getattr(exc.orig, "sqlstate", None)
    return isinstance(exc, OperationalError) and (state is None or state[:2] == "08"
                                                  or state[:3] == "57P")  # fmt: skip


def observation_key(record: object) -> str | None:
    """One observation however it was written (4 or 4.0, key order), or None when the
    record is not a readable observation."""
    from vetfluid.course.observations import observation_from_record, observation_record

    try:
        fields = observation_record(observation_from_record(record))
    except VetfluidError:
        return None
    numbers = {k: float(v) if type(v) is int else v for k, v in fields.items()}
    return json.dumps(numbers, sort_keys=True)


def _now() -> str:
    return datetime.now(UTC).isoformat(timespec="seconds")


def _fsync(path: Path) -> None:
    """Make a written file, or a rename in a folder, durable (folders: not on Windows)."""
    if path.is_dir() and os.name != "posix":
        return
    descriptor = os.open(path, os.O_RDONLY)
    try:
        os.fsync(descriptor)
    finally:
        os.close(descriptor)


def _private(path: Path) -> None:
    """Make ``path`` (created empty if missing) and its SQLite side files owner-only
    before anything is written into them: a file an older vetfluid left readable to all
    is narrowed before more patient data goes in."""
    with contextlib.suppress(FileExistsError):  # an existing file is narrowed below
        os.close(os.open(path, os.O_CREAT | os.O_EXCL | os.O_WRONLY, 0o600))
    for side in ("", "-wal", "-shm", "-journal"):
        kept = path.with_name(path.name + side)
        if kept.exists() and kept.stat().st_mode & 0o077:
            os.chmod(kept, 0o600)


def _not_writable(folder: Path) -> str | None:
    """Why nothing can be written in ``folder`` (a read-only disk, no permission), or None.
    Tried by creating a file there: root and network shares ignore ``os.access``."""
    try:
        with tempfile.TemporaryFile(dir=folder):
            return None
    except OSError as exc:
        return exc.strerror or str(exc)


# A restore's own temporary files: in this folder of the user data folder (owner-only),
# one folder per restore named after the process; a restore killed midway leaves them, and
# they are removed at the next records open or restore (remove_restore_leftovers).
RESTORE_AREA = ".restoring"
_RESTORE_FOLDER = re.compile(r"restore-(\d+)-[A-Za-z0-9_]+")
# what the replacement of an unusable records file stages beside it (pid-free: an earlier
# vetfluid's, from tempfile.mkstemp). The system's temporary folder is never swept: a folder
# there named as an earlier vetfluid named its restore folders may be anything of the
# user's, a data folder with its records included; the system clears it.
_STAGED_BESIDE = r"\.{name}\.(?:(\d+)-)?[A-Za-z0-9_]+\.restoring(?:-wal|-shm|-journal)?"
_STARTED = time.time()  # when this process loaded the records (what is older is no restore of it)


def _running(pid: int) -> bool:
    """Whether process ``pid`` is running (where that cannot be told: taken as running)."""
    if pid == os.getpid():
        return True
    if os.name != "posix":
        return True  # no harmless probe there; its files are in use then and stay anyway
    try:
        os.kill(pid, 0)  # signal 0: only asks whether it exists (POSIX kill(2))
    except ProcessLookupError:
        return False
    except (OSError, OverflowError, ValueError):
        return True  # someone else's process, or a number that cannot be asked: running
    return True


def _left_behind(path: Path, pid: str | None) -> bool:
    """A restore's file or folder left by a process that is gone: older than this process
    and (named with its process) that process no longer running."""
    try:
        older = path.lstat().st_mtime < _STARTED
    except OSError:
        return False
    return older and (pid is None or not _running(int(pid)))


def _remove(path: Path) -> None:
    import shutil

    with contextlib.suppress(OSError):
        if path.is_dir() and not path.is_symlink():
            shutil.rmtree(path)
        else:
            path.unlink()


def remove_restore_leftovers(records_file: Path | None = None) -> None:
    """Remove what a restore killed midway left: its folders in the user data folder's
    restore area, and what it staged beside ``records_file`` (``.records.sqlite.….restoring``
    and its side files). Only names of that pattern, in those two places, older than this
    process, whose process is no longer running: never the user's files, never a restore
    under way. Errors are ignored (tried again next time)."""
    area = user_data_dir() / RESTORE_AREA
    places: list[tuple[Path, re.Pattern]] = [(area, _RESTORE_FOLDER)]
    if records_file is not None:
        beside = re.compile(_STAGED_BESIDE.format(name=re.escape(Path(records_file).name)))
        places.append((Path(records_file).parent, beside))
    for folder, pattern in places:
        try:
            entries = list(folder.iterdir())
        except OSError:
            continue
        for entry in entries:
            found = pattern.fullmatch(entry.name)
            if found is not None and _left_behind(entry, found.group(1)):
                _remove(entry)


@contextlib.contextmanager
def _restore_folder() -> Iterator[Path]:
    """A new owner-only folder for one restore's temporary files, in the user data
    folder's restore area (named after this process: a later start knows it from a
    restore under way); removed when the restore ends."""
    import shutil

    area = user_data_dir() / RESTORE_AREA
    area.mkdir(mode=0o700, exist_ok=True)
    if area.stat().st_mode & 0o077:
        os.chmod(area, 0o700)
    folder = Path(tempfile.mkdtemp(dir=area, prefix=f"restore-{os.getpid()}-"))  # 0700
    try:
        yield folder
    finally:
        shutil.rmtree(folder, ignore_errors=True)


def open_backup(path: Path, *, live: bool = False) -> sqlite3.Connection:
    """A backup opened read-only without writing anything beside it (no -wal, no -shm),
    so one on read-only media is read too: SQLite's ``immutable`` URI parameter
    (sqlite.org/uri.html). A -wal left beside it (a records file copied while in use) may
    hold part of it: then (and for ``live``, the records file in use) read as SQLite reads
    a live file, read-only."""
    wal = path.with_name(path.name + "-wal")
    live = live or (wal.exists() and wal.stat().st_size > 0)
    uri = f"{path.resolve().as_uri()}?mode=ro{'' if live else '&immutable=1'}"
    return sqlite3.connect(uri, uri=True)


def check_layout(db: sqlite3.Connection, name: str) -> int:
    """The schema version of an SQLite records file (a backup), after checking that each
    of our tables is a table with the very columns vetfluid gave it at that version:
    RecordsError in words otherwise (a view in a table's place, a table of other columns),
    ending "nothing was restored". What else the file holds (triggers, views, other
    tables) is never restored: :meth:`Records.restore` copies rows only."""
    fix = "choose a backup that vetfluid wrote (File ▸ Back up records…)"
    try:
        version = _stored_schema_version(db, name)
    except RecordsError as exc:
        raise RecordsError(f"{exc.message}; nothing was restored", fix=fix) from exc
    expected = schema.MetaData()
    schema._tables(expected, schema_version=version)
    kinds = dict(db.execute("SELECT name, type FROM sqlite_master"))
    for table in expected.sorted_tables:
        if kinds.get(table.name) != "table":
            raise RecordsError(
                f"{name} is not a vetfluid records backup: its {table.name} is not one of "
                "vetfluid's tables; nothing was restored",
                fix=fix,
            )
        columns = {row[1] for row in db.execute(f'PRAGMA table_info("{table.name}")')}
        if columns != {c.name for c in table.columns}:
            raise RecordsError(
                f"{name} is not a vetfluid records backup: its table {table.name} has other "
                "columns than vetfluid's; nothing was restored",
                fix=fix,
            )
    return version


def _not_a_number(column: str) -> str:
    """SQL true when ``column`` is not a record number vetfluid gives (a whole number from 1
    up to the server's largest)."""
    return f"(typeof({column}) != 'integer' OR {column} NOT BETWEEN 1 AND {_LARGEST_ID})"


def _not_words(*columns: str) -> str:
    return "(" + " OR ".join(f"typeof({c}) != 'text'" for c in columns) + ")"


def _not_an_object(column: str) -> str:
    """SQL true when ``column`` is not a JSON object stored as text (SQLite's JSON1:
    json_valid, json_type; sqlite.org/json1.html)."""
    return (
        f"(CASE WHEN typeof({column}) != 'text' THEN 1 WHEN NOT json_valid({column}) THEN 1 "
        f"ELSE json_type({column}) != 'object' END)"
    )


# What each row of a backup must be for vetfluid to read it back: (table, SQL true for a row
# that is not, what that is in words). Species: a well-formed species id, not necessarily
# one in today's table (a clinic's records may keep a species since removed from it, and
# find_patients reads those by id).
_ROW_CHECKS = (
    ("patients", _not_a_number("id"), "a patient number that is not a whole number from 1"),
    ("patients", "(typeof(name) != 'text' OR trim(name) = '')", "a patient whose name is "
     "not given in words"),
    ("patients", "(typeof(species_id) != 'text' OR species_id NOT GLOB '[a-z]*' OR "
     "species_id GLOB '*[^a-z0-9_]*')", "a patient whose species is not a species id"),
    ("patients", _not_words("sex", "birth_date", "age_text", "client_ref", "notes"),
     "a patient whose details (sex, birth date, age, client, notes) are not words"),
    ("patients", _not_words("created_at"), "a patient whose time created is not a date"),
    ("plan_versions", f"({_not_a_number('id')} OR {_not_a_number('patient_id')})",
     "a plan version whose patient number is not a whole number from 1"),
    ("plan_versions", _not_a_number("version"), "a plan version whose version number is not "
     "a whole number from 1"),
    ("plan_versions", f"({_not_an_object('request_json')} OR {_not_an_object('plan_json')} "
     f"OR {_not_an_object('acknowledged_json')})", "a saved plan that cannot be read as one"),
    ("plan_versions", _not_words("author", "created_at", "program_version"),
     "a plan version whose author, time saved or program version is not words"),
    ("plan_versions", _not_words("workstation"),  # from schema 3 (the table has it then)
     "a plan version whose workstation is not words"),
    ("plan_versions", "patient_id NOT IN (SELECT id FROM patients)",
     "a plan version of no patient in it"),
    ("plan_versions", "SELECT count(*) FROM (SELECT 1 FROM plan_versions GROUP BY "
     "patient_id, version HAVING count(*) > 1)",  # a whole query: sorted once, never n²
     "two plan versions of one patient with the same version number"),
    ("observations", f"({_not_a_number('id')} OR {_not_a_number('plan_version_id')} OR "
     f"{_not_words('observation_json', 'recorded_at')})", "an observation that is not "
     "stored as vetfluid stores one (as words, with the time recorded)"),
    ("observations", "plan_version_id NOT IN (SELECT id FROM plan_versions)",
     "an observation of no plan version in it"),
)  # fmt: skip


def check_rows(db: sqlite3.Connection, name: str, schema_version: int) -> None:
    """Every row of a backup (an SQLite records file, its layout checked by
    :func:`check_layout`) as vetfluid writes it: record numbers whole numbers from 1,
    version numbers from 1 and one per patient, words where words are stored, saved plans
    readable as JSON objects, no version or observation without its patient or version.
    RecordsError in words naming the first thing that is not, ending "nothing was
    restored": a row vetfluid cannot read back is refused before anything changes, never
    found by a save that then fails."""
    fix = "choose another backup (one that vetfluid wrote: File ▸ Back up records…)"
    for table, odd, words in _ROW_CHECKS:
        if "workstation" in odd and schema_version < 3:
            continue  # no such column before schema 3
        query = odd if odd.startswith("SELECT") else f"SELECT count(*) FROM {table} WHERE {odd}"
        count = db.execute(query).fetchone()[0]
        if count:
            rows = f"{count} row{'s' if count != 1 else ''}"
            raise RecordsError(
                f"{name} holds {words} ({rows} of its {table}), which vetfluid does not "
                "write; nothing was restored",
                fix=fix,
            )


def _blank(connection: Connection) -> bool:
    """No table at all: a new database, or a first creation cut short. Nothing the user
    entered can be in it."""
    if connection.dialect.name == "sqlite":
        return connection.exec_driver_sql("SELECT count(*) FROM sqlite_master").scalar() == 0
    return not inspect(connection).get_table_names()


def _stored_schema_version(db: Connection | sqlite3.Connection, name: str) -> int:
    """The schema version a vetfluid records database says it holds. Missing, not a whole
    number from 1, or newer than this vetfluid reads: RecordsError saying so. No
    ``meta`` table: sqlite3.DatabaseError (not a vetfluid database at all)."""
    query = "SELECT value FROM meta WHERE key = 'schema_version'"
    try:
        if isinstance(db, sqlite3.Connection):
            row = db.execute(query).fetchone()
        else:
            row = db.exec_driver_sql(query).fetchone()
    except (sqlite3.OperationalError, DBAPIError) as exc:
        if "no such table" in str(exc) or "does not exist" in str(exc):
            raise sqlite3.DatabaseError("no vetfluid schema") from None
        raise
    fix = "restore a backup of the records, or open another records file"
    if row is None:
        raise RecordsError(
            f"{name} does not give its schema version (the layout of the records it holds): "
            "its meta table has no schema_version; it was left untouched",
            fix=fix,
        )
    stored = row[0]
    if not (isinstance(stored, str) and _VERSION_TEXT.fullmatch(stored)):
        shown = repr(stored) if len(repr(stored)) <= 24 else repr(stored)[:20] + "…"
        raise RecordsError(
            f"{name} gives its schema version (the layout of the records it holds) as "
            f"{shown}, which no vetfluid writes (a whole number from 1); it was left untouched",
            fix=fix,
        )
    version = int(stored)
    if version > SCHEMA_VERSION:
        raise RecordsError(
            f"{name} was written by a newer vetfluid (schema {version}; this one reads up to "
            f"{SCHEMA_VERSION}); it was left untouched",
            fix="update vetfluid, or open another records file",
        )
    return version


@dataclass(frozen=True, kw_only=True)
class PatientRow:
    id: int
    name: str
    species_id: str
    sex: str
    birth_date: str
    age_text: str
    client_ref: str
    notes: str
    created_at: str


@dataclass(frozen=True, kw_only=True)
class VersionRow:
    id: int
    patient_id: int
    version: int
    request: dict
    plan: dict
    acknowledged: dict
    author: str
    created_at: str
    program_version: str
    workstation: str = ""  # the computer it was saved from ("" before schema 3)


@dataclass(frozen=True, kw_only=True)
class OtherVersion:
    """A version of the same patient another save put in meanwhile."""

    version: int
    author: str
    workstation: str
    created_at: str


@dataclass(frozen=True, kw_only=True)
class Merged:
    """What merging observations into a version did: how many it added, and those this
    screen recorded that another workstation had meanwhile recorded the same (hour and
    every value alike): kept once, as one measurement entered twice."""

    added: int
    kept_once: tuple[dict, ...] = ()


@dataclass(frozen=True, kw_only=True)
class Saved:
    """A version just saved: its number, and the versions saved meanwhile (numbers above
    the latest the saver knew of, below this one), oldest first."""

    number: int
    meanwhile: tuple[OtherVersion, ...] = ()


def _sqlite_engine(path: Path) -> tuple[Engine, sqlite3.Connection]:
    """One connection to the file for the records' whole life (StaticPool): transactions are
    begun by hand, ``BEGIN IMMEDIATE`` for a write, so one writer at a time waits its turn
    instead of failing halfway through."""
    raw = sqlite3.connect(path, timeout=10, isolation_level=None, check_same_thread=False)
    raw.execute("PRAGMA foreign_keys = ON")
    raw.execute("PRAGMA synchronous = FULL")
    engine = create_engine("sqlite://", creator=lambda: raw, poolclass=StaticPool)
    _begin_by_hand(engine)
    return engine, raw


def _begin_by_hand(engine: Engine) -> None:
    @event.listens_for(engine, "begin")
    def begin(connection: Connection) -> None:
        write = connection.get_execution_options().get("vetfluid_write", False)
        connection.exec_driver_sql("BEGIN IMMEDIATE" if write else "BEGIN")


def _server_engine(address: ServerAddress) -> Engine:
    """A small pool of connections to the server; a connection the server dropped is
    noticed before use (pre-ping) and replaced, so a restart of the server costs one
    failed save, not the session. The password file is chosen for each new connection
    (a password given in Records settings meanwhile is used)."""
    engine = create_engine(
        address.sqlalchemy_url(), connect_args=address.connect_args(), pool_size=2,
        max_overflow=2, pool_pre_ping=True, pool_timeout=10,
    )  # fmt: skip

    @event.listens_for(engine, "do_connect")
    def choose_password_file(_dialect, _record, _cargs, cparams: dict) -> None:  # noqa: ANN001
        cparams.pop("passfile", None)
        cparams.update(address.connect_args())

    return engine


def _copy_tables(source: Connection, into: Connection) -> None:
    """Every patient, version and observation (ids kept) and the meta rows ``into`` lacks,
    of the keys vetfluid writes (:data:`META_KEYS`; a backup's other rows stay behind), in
    chunks; inside both connections' transactions."""
    kept = {k for (k,) in into.execute(select(meta.c.key))}
    rows = source.execute(select(meta).where(meta.c.key.in_(META_KEYS))).mappings().all()
    if new := [dict(r) for r in rows if r["key"] not in kept]:
        into.execute(meta.insert(), new)
    for table in (patients, plan_versions, schema.observations):
        result = source.execution_options(yield_per=2000).execute(
            select(table).order_by(table.c.id)
        )
        for chunk in result.mappings().partitions():
            into.execute(table.insert(), [dict(r) for r in chunk])


def _drafts_name(label: str) -> Path:
    digest = hashlib.sha256(label.encode("utf-8")).hexdigest()[:12]
    return user_data_dir() / f"server-drafts-{digest}.sqlite"


def _drafts_file(address: ServerAddress) -> Path:
    """This workstation's drafts for one server, on the local disk: keyed on the server,
    database and user (:attr:`ServerAddress.identity`), however the address is written."""
    return _drafts_name(address.identity)


def _older_drafts_files(address: ServerAddress) -> list[Path]:
    """Drafts files an earlier vetfluid kept for this server under another key (the
    address as it was written: ``127.0.0.1`` or ``localhost``, a host in capitals)."""
    new = _drafts_file(address)
    found = (_drafts_name(label) for label in address.spellings())
    return [old for old in dict.fromkeys(found) if old != new and old.exists()]


def _carry_over(old: Path, target: Path) -> str | None:
    """Bring the draft of an older drafts file into ``target``: the whole file renamed when
    ``target`` does not exist yet, else its draft copied when ``target`` has none (the
    older file then removed: it holds nothing else). A draft that cannot be moved stays
    where it is; the returned words say where (None: carried over)."""
    kept = (
        f"A draft kept for this server under an older spelling of its address is in {old}; "
        "it was left there because {why}."
    )
    try:
        older = Records._open_file(old)
    except RecordsError as exc:
        return kept.format(why=f"it cannot be opened ({exc.message})")
    try:
        if older.find_patients(limit=1):  # not a drafts file after all: never touched
            return kept.format(why="the file holds patients")
        stored = older._stored_draft()
        if not target.exists():
            older._db.execute("PRAGMA wal_checkpoint(TRUNCATE)")  # nothing left beside it
            older.close()  # SQLite removes the -wal and -shm of the last connection closed
            os.replace(old, target)
            _fsync(target.parent)
            for side in ("-wal", "-shm"):  # empty ones a crash may have left
                old.with_name(old.name + side).unlink(missing_ok=True)
            return None
        with Records._open_file(target) as newer:
            if stored is not None:
                if newer._stored_draft() is not None:
                    return kept.format(why="a newer draft for the server waits to be offered")
                try:
                    text_ = stored.decode("utf-8")
                except UnicodeDecodeError:
                    return kept.format(why="it cannot be read as text")
                newer._write(draft.insert().values(id=1, content_json=text_, saved_at=_now()))
        older.close()
        for side in ("", "-wal", "-shm", "-journal"):
            old.with_name(old.name + side).unlink(missing_ok=True)
        return None
    except (RecordsError, OSError, sqlite3.Error) as exc:
        return kept.format(why=f"it could not be moved ({exc})")
    finally:
        older.close()


class Records:
    """One records database; open it with :meth:`open`."""

    def __init__(
        self,
        engine: Engine,
        *,
        path: Path | None = None,
        raw: sqlite3.Connection | None = None,
        server: ServerAddress | None = None,
        drafts: Records | None = None,
    ) -> None:
        self._engine = engine
        self._db = raw  # SQLite: the one connection (backups, checks); None on a server
        self.path = path  # the SQLite file; None on a server
        self.server = server
        self._drafts = drafts  # on a server: this workstation's drafts, on its own disk
        self._tx: Connection | None = None  # the transaction under way, if any
        self.workstation = workstation_name()
        self._unreadable_draft = False  # the stored draft could be neither read nor set aside
        self.last_set_aside: Path | None = None  # where save_draft moved such a draft at last
        # on a server: why it cannot be reached now (None: it answers)
        self.unreachable: RecordsError | None = None
        self._last_try = float("-inf")  # when reaching it was last tried (time.monotonic)
        self._preparing = False
        self.database_id: str | None = None  # this database's own identity (meta)
        self.notices: list[str] = []  # said once to the user when the records open

    @property
    def where(self) -> str:
        """Where the records are, in words: the file, or the server."""
        return str(self.path) if self.server is None else f"the server {self.server.label}"

    @property
    def _name(self) -> str:
        return self.path.name if self.server is None else f"the records server {self.server.label}"

    @property
    def engine(self) -> str:
        return "sqlite" if self.server is None else "postgresql"

    # ---- opening ---------------------------------------------------------------------------
    @classmethod
    def open(
        cls,
        path: Path | None = None,
        *,
        url: str | None = None,
        server: ServerAddress | None = None,
        allow_unreachable: bool = False,
    ) -> Records:
        """Open (or create) the records: ``path`` an SQLite file; else ``server`` (records
        open elsewhere, reached as they were); else ``url`` (else the records setting,
        :func:`vetfluid.records.location.records_url`) a server; else the SQLite file in the
        user data folder. A newer, foreign or damaged one is refused.

        ``allow_unreachable``: a server that cannot be used now still opens this
        workstation's drafts, with :attr:`unreachable` saying why; it is tried again as
        the records are used (:meth:`reach`)."""
        if path is None and server is not None:
            return cls._open_server(server, allow_unreachable=allow_unreachable)
        if path is None:
            try:
                url = records_url() if url is None else url.strip()
                address = server_address(url) if url else None
            except InputError as exc:  # a refused address, an unreadable settings file
                raise RecordsError(exc.message, fix=exc.fix) from None
            if address is not None:
                return cls._open_server(address, allow_unreachable=allow_unreachable)
        return cls._open_file(Path(path) if path is not None else user_data_dir() / DATABASE_NAME)

    @classmethod
    def _open_file(cls, path: Path) -> Records:
        if not path.exists():
            try:
                # created owner-only before SQLite writes anything into it
                os.close(os.open(path, os.O_CREAT | os.O_EXCL | os.O_WRONLY, 0o600))
            except FileExistsError:
                pass  # another vetfluid created it meanwhile: opened as it finds it
            except OSError as exc:
                raise RecordsError(
                    f"cannot create the records file {path}: {exc.strerror}",
                    fix="choose a folder you can write to, or free some disk space",
                ) from exc
        raw = None
        try:
            engine, raw = _sqlite_engine(path)
            records = cls(engine, path=path, raw=raw)
            records._prepare()
        except (sqlite3.DatabaseError, DBAPIError) as exc:
            if raw is not None:
                raw.close()
            if (why := _not_writable(path.parent)) is not None:
                raise RecordsError(
                    f"the folder of the records file {path} is read-only ({why}): nothing "
                    "can be saved there, so the records were not opened; they are unchanged",
                    fix="make that folder writable again (a disk mounted read-only, a full "
                    "or locked drive, its permissions), or choose another user data folder, "
                    "then start vetfluid again",
                ) from exc
            raise RecordsError(
                f"{path.name} is not a usable vetfluid records file ({_reason(exc)}); it was "
                "left untouched",
                fix="open another file or restore a backup",
            ) from exc
        except RecordsError:
            raw.close()
            raise
        return records

    @classmethod
    def _open_server(cls, address: ServerAddress, *, allow_unreachable: bool = False) -> Records:
        target = _drafts_file(address)
        notices = [n for old in _older_drafts_files(address) if (n := _carry_over(old, target))]
        drafts = cls._open_file(target)
        records = cls(_server_engine(address), server=address, drafts=drafts)
        records.notices = notices
        try:
            records._prepare_server()
        except RecordsError as exc:
            if not allow_unreachable:
                records.close()
                raise
            records.unreachable = exc
            records._last_try = time.monotonic()
        return records

    def _prepare_server(self) -> None:
        """Reach the server and make its tables ready; RecordsError (RecordsUnreachable
        when it cannot be reached) saying why, where the draft is and what to check."""
        problem = password_file_problem(self.server)
        if problem is not None:
            raise RecordsError(f"{self._name} cannot be used: {problem}",
                               fix=self._draft_kept_words())  # fmt: skip
        self._preparing = True
        try:
            self._prepare()
        except (DBAPIError, SQLAlchemyError, sqlite3.DatabaseError) as exc:
            if _lost_connection(exc):
                raise self._unreachable_error(exc) from exc
            raise RecordsError(f"{self._name} cannot be used ({_reason(exc)})",
                               fix=self._draft_kept_words()) from exc  # fmt: skip
        except RecordsError as exc:
            raise RecordsError(exc.message, fix=self._draft_kept_words()) from exc
        finally:
            self._preparing = False

    def _draft_kept_words(self) -> str:
        return (
            f"the draft is kept on this computer, in {self._drafts.path}; plan versions "
            "cannot be saved or opened until the server answers. Check that this computer is "
            "on the clinic's network, that the server is running, and the server address "
            "and password in File ▸ Records settings"
        )

    def _unreachable_error(self, exc: BaseException) -> RecordsUnreachable:
        reason = _reason(exc)
        # libpq gives no SQLSTATE when a connection fails: its words tell a refused password
        if any(words in reason for words in _PASSWORD_REFUSED):
            return RecordsUnreachable(
                f"{self._name} refused the password ({reason})",
                fix="give the password again in File ▸ Records settings (or check the user "
                f"name); {self._draft_kept_words()}",
            )
        return RecordsUnreachable(f"{self._name} cannot be reached ({reason})",
                                  fix=self._draft_kept_words())  # fmt: skip

    def reach(self, *, force: bool = True) -> bool:
        """Whether the server answers (the SQLite file: always). One that could not be
        reached is tried again (``force``: now; else not sooner than :data:`RETRY_AFTER_S`
        after the last try): once it answers, :attr:`unreachable` is None again."""
        if self.server is None or self.unreachable is None:
            return True
        if not force and time.monotonic() - self._last_try < RETRY_AFTER_S:
            return False
        self._last_try = time.monotonic()
        try:
            self._prepare_server()
        except RecordsError as exc:
            self.unreachable = exc
            return False
        self.unreachable = None
        return True

    def _check_reached(self) -> None:
        """Before a read or write of the server: one known unreachable is tried again (not
        more often than every RETRY_AFTER_S); still unreachable, its error at once."""
        if self.server is None or self._preparing or self.unreachable is None:
            return
        if not self.reach(force=False):
            raise self.unreachable

    def _failed(self, exc: BaseException, error: RecordsError) -> RecordsError:
        """The error to raise for a database error: on a server that cannot be reached, the
        one message that says so (remembered: the next use tries again), else ``error``."""
        if self.server is not None and _lost_connection(exc):
            self.unreachable = self._unreachable_error(exc)
            return self.unreachable
        return error

    def _prepare(self) -> None:
        """Finish a database with no tables, refuse one that is not ours or is damaged,
        bring an older schema up to date."""
        with self._connection() as conn:
            blank = _blank(conn)
        if blank and self._create():
            self.database_id = self._database_identity()
            return
        with self._connection() as conn:
            version = _stored_schema_version(conn, self._name)
            tables = set(inspect(conn).get_table_names())
        missing = [t for t in TABLES if t not in tables]
        if missing:
            raise sqlite3.DatabaseError(f"its table {', '.join(missing)} is missing")
        if self._db is not None:
            for table in _CHECKED_AT_OPEN:  # never an unknown name: that would check everything
                check = self._db.execute(f"PRAGMA quick_check({table})").fetchone()[0]
                if check != "ok":
                    raise sqlite3.DatabaseError(f"integrity check failed: {check}")
        while version < SCHEMA_VERSION:
            try:
                with self._transaction() as conn:
                    self._lock_schema(conn)
                    # read again under the lock: another vetfluid may have done it
                    version = _stored_schema_version(conn, self._name)
                    if version < SCHEMA_VERSION:
                        version = schema.migrate(conn, version)
            except (sqlite3.OperationalError, DBAPIError) as exc:
                raise RecordsError(
                    f"{self._name} holds records in an older layout (schema {version}) "
                    f"that could not be brought up to date ({_reason(exc)}); it was left as "
                    "it was",
                    fix="check that the file and its folder are writable and the disk has "
                    "space (or that you may change the server's tables), then start vetfluid "
                    "again",
                ) from exc
        self.database_id = self._database_identity()

    def _database_identity(self) -> str:
        """This database's own identity (``database_id`` in ``meta``): made once, by the
        first vetfluid to open it (under the schema lock), then only read."""
        query = select(meta.c.value).where(meta.c.key == "database_id")
        with self._connection() as conn:
            kept = conn.execute(query).scalar()
        if kept is not None:
            return kept
        with self._transaction() as conn:
            self._lock_schema(conn)
            kept = conn.execute(query).scalar()  # another vetfluid may have made it
            if kept is None:
                kept = uuid.uuid4().hex
                conn.execute(meta.insert().values(key="database_id", value=kept))
        return kept

    def read_identity(self) -> str | None:
        """The database identity read again now (a restore since changes it); kept as
        :attr:`database_id`. None: not reached."""
        try:
            with self._connection() as conn:
                now = conn.execute(select(meta.c.value).where(meta.c.key == "database_id")).scalar()
        except (DBAPIError, sqlite3.Error, RecordsError):
            return self.database_id  # said by the write that follows
        if now is not None:
            self.database_id = now
        return self.database_id

    def _create(self) -> bool:
        """Build the whole schema in one transaction: killed before it commits, the
        database is left with no tables and finished at the next start. False when another
        vetfluid built it meanwhile."""
        if self._db is not None:
            self._db.execute("PRAGMA journal_mode = WAL")  # only ever on a file with no tables
        with self._transaction() as conn:
            self._lock_schema(conn)
            if not _blank(conn):
                return False
            schema.create_latest(conn)
        return True

    @staticmethod
    def _lock_schema(conn: Connection) -> None:
        """On a server: one workstation at a time builds or migrates the tables (SQLite's
        ``BEGIN IMMEDIATE`` already holds the file's write lock)."""
        if conn.dialect.name == "postgresql":
            conn.execute(text("SELECT pg_advisory_xact_lock(:key)"), {"key": _SCHEMA_LOCK})

    def close(self) -> None:
        self._engine.dispose()
        if self._db is not None:
            self._db.close()
        if self._drafts is not None:
            self._drafts.close()

    def __enter__(self) -> Records:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    # ---- connections and transactions -------------------------------------------------------
    @contextlib.contextmanager
    def _connection(self) -> Iterator[Connection]:
        """A connection to read with: the transaction under way, or one of its own (its
        read-only transaction ended when done)."""
        if self._tx is not None:
            yield self._tx
            return
        self._check_reached()
        with self._engine.connect() as conn:
            yield conn

    @contextlib.contextmanager
    def _transaction(self) -> Iterator[Connection]:
        """One write transaction (SQLite: ``BEGIN IMMEDIATE``), committed when the block
        ends, rolled back on an error; inside another, part of it."""
        if self._tx is not None:
            yield self._tx
            return
        self._check_reached()
        with self._engine.connect() as conn:
            conn = conn.execution_options(vetfluid_write=True)
            with conn.begin():
                self._tx = conn
                try:
                    yield conn
                finally:
                    self._tx = None

    def _write(self, statement, params: dict | tuple | None = None) -> int:  # noqa: ANN001
        """One statement in its own transaction (SQLAlchemy's, or SQL text with the
        driver's own placeholders); disk errors become a clear message. Returns the new
        row's id (an insert), else 0."""
        try:
            with self._transaction() as conn:
                if isinstance(statement, str):
                    return conn.exec_driver_sql(statement, params or ()).lastrowid or 0
                result = conn.execute(statement, params or {})
                inserted = result.inserted_primary_key if result.is_insert else None
                return int(inserted[0]) if inserted and inserted[0] is not None else 0
        except (DBAPIError, sqlite3.OperationalError) as exc:
            raise self._failed(exc, RecordsError(
                f"could not save to {self._name}: {_reason(exc)}",
                fix="check that the disk has space and the folder is writable (or that the "
                "server can be reached); nothing was lost",
            )) from exc  # fmt: skip

    # ---- patients --------------------------------------------------------------------------
    def add_patient(
        self,
        *,
        name: str,
        species_id: str,
        sex: str = "",
        birth_date: str = "",
        age_text: str = "",
        client_ref: str = "",
        notes: str = "",
    ) -> int:
        if not name.strip():
            raise InputError("a patient needs a name", field="name", value=name)
        if not species_id.strip():
            raise InputError("a patient needs a species", field="species_id", value=species_id)
        return self._write(
            patients.insert().values(
                name=name.strip(), species_id=species_id, sex=sex, birth_date=birth_date,
                age_text=age_text, client_ref=client_ref, notes=notes, created_at=_now(),
            )
        )  # fmt: skip

    def _read(self, statement, what: str) -> list:  # noqa: ANN001
        """Rows of a query; a database that cannot answer is a RecordsError."""
        try:
            with self._connection() as conn:
                return conn.execute(statement).fetchall()
        except (DBAPIError, sqlite3.DatabaseError) as exc:
            raise self._failed(exc, RecordsError(
                f"could not read {what} in {self._name}: {_reason(exc)}",
                fix="restore a backup" if self.server is None else "check the server",
            )) from exc  # fmt: skip

    def patient(self, patient_id: int) -> PatientRow:
        rows = self._read(
            select(*(patients.c[c] for c in _PATIENT_COLUMNS)).where(patients.c.id == patient_id),
            "the patient",
        )
        if not rows:
            raise InputError(f"no patient {patient_id}", field="patient", value=patient_id)
        return PatientRow(**dict(zip(_PATIENT_COLUMNS, rows[0], strict=True)))

    def find_patients(self, text: str = "", *, limit: int = 50) -> list[PatientRow]:
        """Recent patients whose name, species or client reference contains ``text`` (in
        any case). The species matches by the words people use, as the species search does
        (:meth:`vetfluid.tables.species.SpeciesTable.search`: common or scientific name, the
        groups it belongs to: "bearded dragon", "reptile"), or by its id (a clinic's species
        since removed from the table)."""
        from vetfluid.tables.species import load_table

        words = text.strip()
        query = select(*(patients.c[c] for c in _PATIENT_COLUMNS))
        if words:
            like = f"%{words}%"
            species = [s.id for s in load_table().search(words)]
            if self._db is not None:  # SQLite's LIKE is already blind to case
                found = [c.like(like) for c in (patients.c.name, patients.c.species_id,
                                                patients.c.client_ref)]  # fmt: skip
            else:  # lower() LIKE: a third of ILIKE's time on PostgreSQL (its case folding)
                found = [func.lower(c).like(func.lower(like)) for c in (patients.c.name,
                         patients.c.species_id, patients.c.client_ref)]  # fmt: skip
            if species:
                found.append(patients.c.species_id.in_(species))
            query = query.where(or_(*found))
        rows = self._read(query.order_by(patients.c.id.desc()).limit(limit), "the patients")
        return [PatientRow(**dict(zip(_PATIENT_COLUMNS, r, strict=True))) for r in rows]

    # ---- plan versions ---------------------------------------------------------------------
    def save_version(
        self,
        *,
        patient_id: int,
        plan,  # noqa: ANN001 — vetfluid.planning.plan.Plan
        acknowledged: dict[str, str],
        author: str = "",
        observations: list[dict] | tuple[dict, ...] = (),
        known_latest: int | None = None,
        workstation: str | None = None,
    ) -> int:
        """Save the plan as the patient's next version with the observations recorded on
        it so far (one transaction: all or nothing); returns its number. See
        :meth:`save_new_version` for what was saved meanwhile."""
        return self.save_new_version(
            patient_id=patient_id, plan=plan, acknowledged=acknowledged, author=author,
            observations=observations, known_latest=known_latest, workstation=workstation,
        ).number  # fmt: skip

    def save_new_version(
        self,
        *,
        patient_id: int,
        plan,  # noqa: ANN001 — vetfluid.planning.plan.Plan
        acknowledged: dict[str, str],
        author: str = "",
        observations: list[dict] | tuple[dict, ...] = (),
        known_latest: int | None = None,
        workstation: str | None = None,
        database_id: str | None = None,
    ) -> Saved:
        """Save the plan as the patient's next version, by ``author`` (initials) from
        ``workstation`` (this one by default), with its observations: one transaction.

        The number is the highest so far plus one, read under a lock on the patient's row
        (SQLite: the file's write lock), so saves of one patient from several workstations
        follow one another: no number is taken twice or skipped. ``known_latest``: the
        latest version the saver knew of; the versions above it saved meanwhile are
        returned with the number. ``database_id``: the database the patient id was read
        in; other records now (a restore since): RecordsReplaced, nothing written."""
        from vetfluid.records.serialize import plan_dict, request_to_dict

        request_json = json.dumps(request_to_dict(plan.request), ensure_ascii=False)
        plan_json = json.dumps(plan_dict(plan), ensure_ascii=False)
        ack_json = json.dumps(dict(acknowledged), ensure_ascii=False)
        v = plan_versions.c
        try:
            with self._transaction() as conn:
                locked = conn.execute(
                    select(patients.c.id).where(patients.c.id == patient_id).with_for_update()
                ).first()
                self._same_database(conn, database_id)  # after the lock: a restore waits
                if locked is None:
                    raise InputError(f"no patient {patient_id}", field="patient", value=patient_id)
                latest = conn.execute(
                    select(func.coalesce(func.max(v.version), 0)).where(v.patient_id == patient_id)
                ).scalar_one()
                meanwhile = ()
                if known_latest is not None and latest > known_latest:
                    meanwhile = tuple(
                        OtherVersion(version=r[0], author=r[1], workstation=r[2], created_at=r[3])
                        for r in conn.execute(
                            select(v.version, v.author, v.workstation, v.created_at)
                            .where(v.patient_id == patient_id, v.version > known_latest)
                            .order_by(v.version)
                        )
                    )
                number = int(latest) + 1
                version_id = conn.execute(
                    plan_versions.insert().values(
                        patient_id=patient_id, version=number, request_json=request_json,
                        plan_json=plan_json, acknowledged_json=ack_json, author=author,
                        workstation=self.workstation if workstation is None else workstation,
                        created_at=_now(), program_version=__version__,
                    )
                ).inserted_primary_key[0]  # fmt: skip
                if observations:
                    conn.execute(
                        schema.observations.insert(),
                        [{"plan_version_id": version_id, "recorded_at": _now(),
                          "observation_json": json.dumps(o, ensure_ascii=False)}
                         for o in observations],
                    )  # fmt: skip
        except (DBAPIError, sqlite3.OperationalError) as exc:
            raise self._failed(exc, RecordsError(
                f"could not save the plan to {self._name}: {_reason(exc)}",
                fix=self._kept_fix("the plan on screen is unchanged"),
            )) from exc  # fmt: skip
        return Saved(number=number, meanwhile=meanwhile)

    def _kept_fix(self, unchanged: str) -> str:
        if self._drafts is None:
            return f"check the disk and the folder; {unchanged}"
        return (
            f"check the network and the server; {unchanged}, and the draft keeps it on this "
            f"computer ({self._drafts.path})"
        )

    def latest_version(self, patient_id: int) -> int:
        """The patient's highest version number (0: none yet)."""
        v = plan_versions.c
        rows = self._read(
            select(func.coalesce(func.max(v.version), 0)).where(v.patient_id == patient_id),
            "the plan versions",
        )
        return int(rows[0][0])

    def versions(self, patient_id: int) -> list[VersionRow]:
        """The patient's versions, oldest first. A damaged page among them (the versions
        are not checked when the file opens: gigabytes at a clinic's size) is a
        RecordsError."""
        v = plan_versions.c
        try:
            rows = self._read(
                select(v.id, v.patient_id, v.version, v.request_json, v.plan_json,
                       v.acknowledged_json, v.author, v.created_at, v.program_version,
                       v.workstation)
                .where(v.patient_id == patient_id).order_by(v.version),
                "the plan versions",
            )  # fmt: skip
        except RecordsUnreachable:
            raise  # said once, as it is: no backup mends a network
        except RecordsError as exc:
            raise RecordsError(
                exc.message, fix="restore a backup; the versions of other patients may still be "
                "read" if self.server is None else "check the server",
            ) from exc  # fmt: skip
        versions = []
        for r in rows:
            try:
                request, plan, acknowledged = (json.loads(r[3]), json.loads(r[4]),
                                               json.loads(r[5]))  # fmt: skip
            except (TypeError, ValueError) as exc:  # a damaged row: said, never a traceback
                raise RecordsError(
                    f"version {r[2]} of patient {patient_id} in {self._name} cannot be "
                    f"read ({exc})",
                    fix="restore a backup; the other patients' versions may still be read",
                ) from exc
            versions.append(
                VersionRow(id=r[0], patient_id=r[1], version=r[2], request=request, plan=plan,
                           acknowledged=acknowledged, author=r[6], created_at=r[7],
                           program_version=r[8], workstation=r[9])
            )  # fmt: skip
        return versions

    def add_observation(self, *, version_id: int, observation: dict) -> int:
        return self._write(
            schema.observations.insert().values(
                plan_version_id=version_id, recorded_at=_now(),
                observation_json=json.dumps(observation, ensure_ascii=False),
            )
        )  # fmt: skip

    def observations(self, version_id: int) -> list:
        """The observations recorded on a version, oldest first. A row whose text is not
        readable is returned as that text, for the caller to count as unreadable."""
        o = schema.observations.c
        try:
            rows = self._read(
                select(o.observation_json).where(o.plan_version_id == version_id).order_by(o.id),
                "the observations",
            )
        except RecordsUnreachable:
            raise
        except RecordsError as exc:
            raise RecordsError(exc.message) from exc
        return [_json_or_text(r[0]) for r in rows]

    def merge_observations(
        self,
        *,
        version_id: int,
        observations: list,
        based_on: list | None = None,
        database_id: str | None = None,
    ) -> Merged:
        """Bring into a version the observations kept for it (in a draft, or on another
        workstation's screen) while it could not take them. With ``based_on`` (what it held
        when they were kept): those added since then that it still lacks are added, and
        those removed since then are removed, so what was recorded on it or removed from
        it meanwhile stands. Without ``based_on``: those it lacks are added and nothing is
        removed. An item that cannot be read is stored as it is, for the reader to count.
        One transaction, the version locked: two workstations merging at once take turns.

        The same observation (hour and every value alike) recorded here and, since
        ``based_on``, on another workstation is kept once: two entries of one reading (two
        urine collections of the same period and volume are one collection, counted twice
        they would double the measured output); :attr:`Merged.kept_once` names them, for the
        user to be told and to record it again if it really was a second measurement.
        ``database_id``: the database the version id was read in; other records now (a
        restore since): RecordsReplaced, nothing written."""
        from collections import Counter

        def counted(records: list) -> Counter:
            return Counter(k for r in records if (k := observation_key(r)) is not None)

        try:
            with self._transaction() as conn:
                self._lock_version(conn, version_id)
                self._same_database(conn, database_id)
                current = [r for r in self.observations(version_id)
                           if observation_key(r) is not None]  # fmt: skip
                ours, now = counted(observations), counted(current)
                given = {observation_key(r): r for r in observations}
                once: list = []
                if based_on is None:
                    removed, added = Counter(), ours - now
                else:
                    before = counted(based_on)
                    removed = before - ours
                    wanted = Counter({k: n - max(before[k], now[k]) for k, n in ours.items()})
                    added = +wanted  # the unary plus keeps the positive counts only
                    # entered here and there since the version was read: one reading
                    both = (ours - before) & (now - before)
                    once = [given[k] for k in both.elements()]
                kept = []
                for record in current:
                    key = observation_key(record)
                    if removed[key]:
                        removed[key] -= 1
                    else:
                        kept.append(record)
                kept += [given[k] for k in added.elements()]
                unreadable = [r for r in observations if observation_key(r) is None]
                self.keep_observations(version_id=version_id, observations=kept + unreadable)
        except (DBAPIError, sqlite3.OperationalError) as exc:
            raise self._failed(exc, RecordsError(
                f"could not save the observations to {self._name}: {_reason(exc)}",
                fix=self._kept_fix("the observations on screen are unchanged"),
            )) from exc  # fmt: skip
        return Merged(added=sum(added.values()), kept_once=tuple(once))

    def _same_database(self, conn: Connection, expected: str | None) -> None:
        """Read the database identity again in the write's own transaction (after its row
        lock: a restore, which truncates the tables, waits for it or has committed): when it
        is no longer ``expected``, RecordsReplaced. None: nothing to check."""
        if expected is None:
            return
        now = conn.execute(select(meta.c.value).where(meta.c.key == "database_id")).scalar()
        if now == expected:
            return
        if now is not None:
            self.database_id = now  # these records are this database from here on
        raise RecordsReplaced(
            f"{self._name} were replaced since the plan was opened (a backup restored into "
            "them, or other records), so its patient and version numbers may now be other "
            "patients'; nothing was written by number",
            database_id=now,
        )

    @staticmethod
    def _lock_version(conn: Connection, version_id: int) -> None:
        """On a server, hold the version's row until the transaction ends (its
        observations are changed by one workstation at a time); SQLite's write lock does."""
        conn.execute(
            select(plan_versions.c.id).where(plan_versions.c.id == version_id).with_for_update()
        )

    def keep_observations(
        self, *, version_id: int, observations: list[dict], database_id: str | None = None
    ) -> bool:
        """Make the version's stored observations the ones given (one transaction).

        Rows already stored keep their time of recording; only the ones the user added or
        removed change. A stored row that cannot be read as an observation is never
        touched: the user never saw it, so never removed it. Returns whether anything
        was written."""
        o = schema.observations.c
        try:
            with self._transaction() as conn:
                self._lock_version(conn, version_id)
                self._same_database(conn, database_id)
                stored = conn.execute(
                    select(o.id, o.observation_json).where(o.plan_version_id == version_id)
                ).fetchall()
                unmatched = [(observation_key(x), x) for x in observations]
                removed = []
                for row_id, text_ in stored:
                    key = observation_key(_json_or_text(text_))
                    if key is None:
                        continue  # unreadable: left as it is
                    match = next((i for i, (k, _) in enumerate(unmatched) if k == key), None)
                    if match is None:
                        removed.append(row_id)
                    else:
                        del unmatched[match]
                if not removed and not unmatched:
                    return False
                if removed:
                    conn.execute(schema.observations.delete().where(o.id.in_(removed)))
                if unmatched:
                    conn.execute(
                        schema.observations.insert(),
                        [{"plan_version_id": version_id, "recorded_at": _now(),
                          "observation_json": json.dumps(x, ensure_ascii=False)}
                         for _, x in unmatched],
                    )  # fmt: skip
        except (DBAPIError, sqlite3.OperationalError) as exc:
            raise self._failed(exc, RecordsError(
                f"could not save the observations to {self._name}: {_reason(exc)}",
                fix=self._kept_fix("the observations on screen are unchanged"),
            )) from exc  # fmt: skip
        return True

    # ---- the draft being edited (this workstation's) -----------------------------------------
    @property
    def drafts_path(self) -> Path:
        """The file on this computer that keeps the draft."""
        return self.path if self._drafts is None else self._drafts.path

    def save_draft(self, content: dict) -> None:
        """Replace the draft; refused while the stored one can be neither read nor set
        aside (:meth:`draft`), so that it is never overwritten unseen."""
        if self._drafts is not None:
            self._drafts.save_draft(content)
            self.last_set_aside, self._drafts.last_set_aside = self._drafts.last_set_aside, None
            return
        if self._unreadable_draft:  # try the copy again first; still refused if it fails
            self.last_set_aside = self.set_aside_draft()
        stored = json.dumps(content, ensure_ascii=False)
        try:
            with self._transaction() as conn:  # replaced whole, or not at all
                conn.execute(draft.delete())
                conn.execute(draft.insert().values(id=1, content_json=stored, saved_at=_now()))
        except (DBAPIError, sqlite3.OperationalError) as exc:
            raise RecordsError(
                f"could not save to {self._name}: {_reason(exc)}",
                fix="check that the disk has space and the folder is writable; nothing was lost",
            ) from exc

    def _stored_draft(self) -> bytes | None:
        """The draft's bytes as stored (SQLite hands text back as it was written, UTF-8 or
        not)."""
        try:
            with self._connection() as conn:
                row = conn.execute(
                    select(cast(draft.c.content_json, LargeBinary)).where(draft.c.id == 1)
                ).first()
        except (DBAPIError, sqlite3.DatabaseError) as exc:
            raise RecordsError(
                f"the draft in {self._name} cannot be read: {_reason(exc)}",
                fix="nothing was restored from it",
            ) from exc
        return None if row is None else bytes(row[0])

    def draft_kept_over_restore(self) -> bytes | None:
        """The stored draft (this workstation's) as a restore carries it over: a draft of
        these records (their identity) is stamped with it and the patient's mark (name,
        species, when added; read here when the draft has none), so the restored records,
        with an identity of their own, take it as a draft from other records: bound to the
        patient with that id there only if it is the same patient, else offered without
        one. Anything else (no identity: an earlier vetfluid's), as stored: it binds to no
        one by its id alone."""
        stored = (self._drafts or self)._stored_draft()
        if stored is None or self.database_id is None:
            return stored
        try:
            content = json.loads(stored.decode("utf-8"))
        except ValueError:
            return stored  # unreadable: carried over as it is, set aside when read
        patient_id = content.get("patient_id") if isinstance(content, dict) else None
        if type(patient_id) is not int or content.get("database_id") != self.database_id:
            # no patient; another database's; or an earlier vetfluid's, with no identity,
            # which may have been written for another animal: stamping it with the mark of
            # whoever has its id here would bind it to them after the restore
            return stored
        mark = content.get("patient")
        if not isinstance(mark, dict):
            try:
                row = self.patient(patient_id)
                mark = {"name": row.name, "species_id": row.species_id,
                        "created_at": row.created_at}  # fmt: skip
            except (InputError, RecordsError):
                mark = None  # no such patient here: it binds to nobody after the restore
        content.update(database_id=self.database_id, patient=mark)
        return json.dumps(content, ensure_ascii=False).encode("utf-8")

    def draft(self) -> dict | None:
        """The plan last being edited, or None. A stored draft that cannot be read as one
        (cut short, not UTF-8, not an object) is set aside in a file beside the records,
        never offered and never overwritten unseen; RecordsError says where it went. While
        it cannot be set aside it stays, and :meth:`save_draft` refuses to replace it."""
        if self._drafts is not None:
            return self._drafts.draft()
        stored = self._stored_draft()
        if stored is None:
            return None
        try:
            content = json.loads(stored.decode("utf-8"))
        except ValueError:  # cut short, or not UTF-8 at all
            content = None
        if isinstance(content, dict):
            return content
        kept = self._move_aside(stored)
        raise DraftSetAside(
            f"the draft in {self._name} could not be read; it was set aside as {kept}",
            path=kept,
            fix="nothing was restored from it; the file holds what was stored",
        )

    def set_aside_draft(self) -> Path | None:
        """Move the stored draft, byte for byte, into a new file beside the records: one
        that reads but cannot be restored. None when there is no draft."""
        if self._drafts is not None:
            return self._drafts.set_aside_draft()
        stored = self._stored_draft()
        return None if stored is None else self._move_aside(stored)

    def _move_aside(self, stored: bytes) -> Path:
        kept = self._set_aside(stored)
        self._unreadable_draft = False
        self.clear_draft()
        return kept

    def _set_aside(self, stored: bytes) -> Path:
        """Write an unreadable draft, byte for byte, to a new owner-only file beside the
        records; RecordsError (and the draft kept in place) when it cannot be written."""
        stamp = datetime.now(UTC).strftime("%Y%m%dT%H%M%S")
        for attempt in range(100):
            suffix = f"-{attempt}" if attempt else ""
            kept = self.path.with_name(f"{self.path.stem}-unreadable-draft-{stamp}{suffix}.txt")
            try:
                handle = os.open(kept, os.O_CREAT | os.O_EXCL | os.O_WRONLY, 0o600)
            except FileExistsError:
                continue
            except OSError as exc:
                raise self._not_set_aside(kept, exc) from exc
            try:
                with os.fdopen(handle, "wb") as out:
                    out.write(stored)
            except OSError as exc:  # created but not written (a full disk): no half copy
                kept.unlink(missing_ok=True)
                raise self._not_set_aside(kept, exc) from exc
            return kept
        self._unreadable_draft = True
        raise RecordsError(f"the draft in {self._name} cannot be read, nor copied aside")

    def _not_set_aside(self, kept: Path, exc: OSError) -> RecordsError:
        self._unreadable_draft = True
        return RecordsError(
            f"the draft in {self._name} cannot be read, nor copied to {kept.name}: {exc.strerror}",
            fix="free some disk space; the draft stays in the records until then",
        )

    def clear_draft(self) -> None:
        if self._drafts is not None:
            self._drafts.clear_draft()
            return
        self._write(draft.delete().where(draft.c.id == 1))

    # ---- backup, export ----------------------------------------------------------------------
    def backup(self, target: Path) -> Path:
        """A consistent copy as an SQLite records file, safe while the records are in use:
        SQLite's online backup, or a server's tables copied in one repeatable-read
        transaction.

        It is written into a new owner-only file beside ``target`` and renamed onto it
        once whole and on disk, so ``target`` holds the previous copy or the whole new
        one, never part of one (a file SQLite finds cut short reads as empty)."""
        target = Path(target)
        if target.is_dir():
            raise RecordsError(
                f"{target} is a folder, not a file: a backup is one file",
                fix="choose a name for the backup file in that folder; the records are unchanged",
            )
        try:
            handle, name = tempfile.mkstemp(  # owner-only (0600) from its first byte
                dir=target.parent, prefix=f".{target.name}.", suffix=".partial"
            )
        except OSError as exc:
            raise RecordsError(
                f"cannot write a backup in {target.parent}: {exc.strerror}",
                fix="choose a folder you can write to; the records are unchanged",
            ) from exc
        os.close(handle)
        staging = Path(name)
        try:
            if self._db is not None:
                with closing(sqlite3.connect(staging)) as copy:
                    self._db.backup(copy)
            else:
                self._copy_server_into(staging)
            # one file, no -wal: read on read-only media, and nothing left beside it
            with closing(sqlite3.connect(staging)) as copy:
                copy.execute("PRAGMA journal_mode = DELETE")
            _fsync(staging)
            os.replace(staging, target)
            _fsync(target.parent)
        except (OSError, sqlite3.Error, SQLAlchemyError) as exc:
            raise RecordsError(
                f"could not write the backup {target.name}: {_reason(exc)}",
                fix="check the disk has space and the folder is writable; the records are "
                "unchanged",
            ) from exc
        finally:
            staging.unlink(missing_ok=True)
        return target

    def _copy_server_into(self, staging: Path) -> None:
        """The server's records, every table as one snapshot, into a new SQLite records file."""
        copy = Records._open_file(staging)  # the empty file is finished as a new records file
        try:
            with self._engine.connect() as source:
                source = source.execution_options(isolation_level="REPEATABLE READ")
                with source.begin(), copy._transaction() as into:
                    _copy_tables(source, into)
        finally:
            copy.close()

    def restore_into_server(self, backup: Path) -> None:
        """Replace the server's records with a backup (an SQLite records file, checked as
        :meth:`restore` checks it and brought to this schema): one transaction, so the
        server holds what it held or the whole backup; other workstations wait meanwhile."""
        if self.server is None:
            raise RecordsError("these records are a file: restore it with Records.restore")
        try:  # this workstation's draft, stamped as from the records as they are now
            draft_before = self._drafts._stored_draft() if self._drafts else None
            draft_kept = self.draft_kept_over_restore()
        except RecordsError:  # unreadable: left as it is (it binds to nobody by id alone)
            draft_before = draft_kept = None
        with _restore_folder() as folder:  # owner-only, removed at the end
            staging = folder / DATABASE_NAME
            Records.restore(backup, staging)  # checked whole and ours, copied aside
            with Records._open_file(staging) as copy:  # an older backup migrated forward
                try:
                    with copy._connection() as source, self._transaction() as into:
                        # another workstation's open transaction must not freeze this one
                        into.exec_driver_sql(
                            f"SET LOCAL lock_timeout = {int(RESTORE_LOCK_WAIT_S * 1000)}"
                        )
                        into.exec_driver_sql("TRUNCATE observations, plan_versions, patients")
                        into.execute(meta.delete().where(meta.c.key != "schema_version"))
                        _copy_tables(source, into)
                        # ids are reused from here on: drafts made before must not bind
                        # to whoever now has their patient's id
                        identity = uuid.uuid4().hex
                        into.execute(meta.delete().where(meta.c.key == "database_id"))
                        into.execute(meta.insert().values(key="database_id", value=identity))
                        for table in ("patients", "plan_versions", "observations"):
                            into.exec_driver_sql(
                                f"SELECT setval(pg_get_serial_sequence('{table}', 'id'), "
                                f"COALESCE((SELECT max(id) FROM {table}), 0) + 1, false)"
                            )
                except (DBAPIError, sqlite3.Error) as exc:
                    if getattr(getattr(exc, "orig", None), "sqlstate", None) == "55P03":
                        raise RecordsError(  # lock_not_available: the lock_timeout ran out
                            f"another workstation holds the records on {self._name} open (a "
                            "save or a search under way), so the restore could not begin; "
                            "nothing was changed",
                            fix="try again when the other workstations are idle (or have "
                            "closed vetfluid)",
                        ) from exc
                    raise RecordsError(
                        f"could not restore {Path(backup).name} to {self._name}: {_reason(exc)}",
                        fix="check the server can be reached; it holds what it held",
                    ) from exc
            self.database_id = identity
        if draft_kept is not None and draft_kept != draft_before and self._drafts is not None:
            with contextlib.suppress(RecordsError, sqlite3.Error, DBAPIError):
                with self._drafts._transaction() as conn:  # replaced whole, or not at all
                    conn.execute(draft.delete())
                    kept = draft_kept.decode("utf-8")
                    conn.execute(draft.insert().values(id=1, content_json=kept, saved_at=_now()))

    @staticmethod
    def restore(backup: Path, target: Path, *, draft_kept: bytes | None = None) -> None:
        """Copy a backup's records over ``target``: one transaction in the target (SQLite's
        online backup), so it holds what it held or the whole backup, even if cut short.

        The backup is checked first (whole file, :func:`check_layout`), read without
        writing anything beside it (:func:`open_backup`). Its rows, and nothing else (none
        of its triggers, views or other tables), go into a freshly created records file
        at this schema beside ``target`` (an older backup brought forward first, in a
        private folder); that file goes into ``target``, owner-only before anything is
        written into it.

        The restored records get a database identity of their own, as a restore into a
        server does: their ids are reused from here on (the backup's patient 2 is not the
        patient 2 saved after it), so a window or a draft that read ids in the records
        before sees other records (:class:`RecordsReplaced`). ``draft_kept``: the draft
        the records held (as stored), kept in the restored ones, so a plan kept as the
        draft before the restore is offered back as promised (never the backup's own)."""
        backup, target = Path(backup), Path(target)
        if not backup.is_file():  # SQLite would create it, and restore an empty file
            raise RecordsError(f"there is no backup {backup}; nothing was restored")
        try:
            with _restore_folder() as folder:  # owner-only, removed at the end
                copied = folder / DATABASE_NAME
                _private(copied)  # owner-only before SQLite writes into it
                with closing(open_backup(backup)) as source:
                    if source.execute("PRAGMA integrity_check").fetchone()[0] != "ok":
                        raise RecordsError(f"{backup.name} is damaged; nothing was restored")
                    layout = check_layout(source, backup.name)
                    check_rows(source, backup.name, layout)
                    with closing(sqlite3.connect(copied)) as copy:
                        source.backup(copy)
                staging = folder / f"fresh-{DATABASE_NAME}"  # created owner-only
                with (
                    Records._open_file(copied) as older,  # brought to this schema
                    Records._open_file(staging) as fresh,  # a new schema, a new identity
                ):
                    with older._connection() as rows, fresh._transaction() as into:
                        _copy_tables(rows, into)
                        if draft_kept is not None:
                            try:  # as it was stored: text, or bytes an unreadable one was
                                kept: str | bytes = draft_kept.decode("utf-8")
                            except UnicodeDecodeError:
                                kept = draft_kept
                            into.exec_driver_sql(
                                "INSERT INTO draft (id, content_json, saved_at) VALUES (1, ?, ?)",
                                (kept, _now()),
                            )
                    _private(target)
                    with closing(sqlite3.connect(target, timeout=10)) as copy:
                        fresh._db.backup(copy)
        except RecordsError as exc:
            if "nothing was restored" in exc.message:
                raise
            raise RecordsError(
                f"{backup.name} cannot be restored: {exc.message}; nothing was restored",
                fix="choose another backup",
            ) from exc
        except (OSError, sqlite3.Error, SQLAlchemyError) as exc:
            raise RecordsError(
                f"could not restore {backup.name} to {target.name}: {_reason(exc)}",
                fix="check that the backup is a vetfluid records file and the folder is "
                f"writable; {target.name} holds what it held",
            ) from exc

    def export_patient(self, patient_id: int) -> dict:
        patient = self.patient(patient_id)
        return {
            "format": EXPORT_FORMAT,
            "version": 1,
            "patient": {k: getattr(patient, k) for k in PatientRow.__dataclass_fields__},
            "plan_versions": [
                {
                    "version": v.version,
                    "request": v.request,
                    "plan": v.plan,
                    "acknowledged": v.acknowledged,
                    "author": v.author,
                    "workstation": v.workstation,
                    "created_at": v.created_at,
                    "program_version": v.program_version,
                    "observations": self.observations(v.id),
                }
                for v in self.versions(patient_id)
            ],
        }

    def import_patient(self, data: dict) -> int:
        """Import an exported patient as a new patient with all its versions (one transaction)."""
        if not isinstance(data, dict) or data.get("format") != EXPORT_FORMAT:
            raise InputError("not a vetfluid patient export", field="file")
        patient = data.get("patient") or {}
        try:
            with self._transaction() as conn:
                new_id = conn.execute(
                    patients.insert().values(
                        **{k: str(patient.get(k, "")) for k in ("name", "species_id", "sex",
                           "birth_date", "age_text", "client_ref", "notes")}, created_at=_now(),
                    )
                ).inserted_primary_key[0]  # fmt: skip
                for v in data.get("plan_versions", []):
                    version_id = conn.execute(
                        plan_versions.insert().values(
                            patient_id=new_id, version=int(v["version"]),
                            request_json=json.dumps(v["request"]), plan_json=json.dumps(v["plan"]),
                            acknowledged_json=json.dumps(v.get("acknowledged", {})),
                            author=str(v.get("author", "")),
                            workstation=str(v.get("workstation", "")),
                            created_at=str(v.get("created_at", _now())),
                            program_version=str(v.get("program_version", "")),
                        )
                    ).inserted_primary_key[0]  # fmt: skip
                    for obs in v.get("observations", []):
                        conn.execute(
                            schema.observations.insert().values(
                                plan_version_id=version_id, recorded_at=_now(),
                                observation_json=json.dumps(obs, ensure_ascii=False),
                            )
                        )  # fmt: skip
        except (KeyError, TypeError, ValueError) as exc:
            raise InputError(f"the patient export is incomplete: {exc}", field="file") from None
        except (DBAPIError, sqlite3.OperationalError) as exc:
            raise RecordsError(f"could not import the patient into {self._name}: "
                               f"{_reason(exc)}") from exc  # fmt: skip
        return int(new_id)


COMPARED = (
    ("weight_kg", "Weight", "kg"),
    ("dehydration_percent", "Dehydration", "%"),
    ("deficit_ml", "Deficit", "mL"),
    ("total_ml_first_24h", "First 24 h", "mL"),
)


def compare_versions(a: dict, b: dict) -> list[tuple[str, str, str, bool]]:
    """What differs between two saved plans (their JSON): (what, in a, in b, differs).
    Divided doses are compared as drawn up (:func:`vetfluid.physiology.delivery.drawn_up_dose`)."""
    from vetfluid.common.formatting import format_quantity
    from vetfluid.physiology.delivery import drawn_up_dose
    from vetfluid.planning.schedule import spread_text

    def quantity(value: object, unit: str) -> str:
        return "—" if value is None else format_quantity(float(value), unit)

    rows = [
        (label, quantity(a.get(key), unit), quantity(b.get(key), unit))
        for key, label, unit in COMPARED
    ]
    rows.append(("Fluid", a["fluid"]["name"], b["fluid"]["name"]))
    rows.append(("Route", f"{a['route']} ({a['device']})", f"{b['route']} ({b['device']})"))

    def phase(data: dict, i: int) -> str:
        if i >= len(data["phases"]):
            return "—"
        p = data["phases"][i]
        if p["mode"] == "continuous":
            rate = quantity(p.get("rate_ml_per_h"), "mL/h")
        else:  # as drawn up, the figures the schedule and the sheet give
            drawn = drawn_up_dose(ml_per_site=p.get("ml_per_site"), sites=p.get("sites_per_dose"))
            rate = (
                f"{format_quantity(drawn.dose_ml, 'mL', decimals=2)} every "
                f"{p.get('interval_h'):g} h, {spread_text(p.get('route', ''), drawn)}"
            )
        return f"{p['kind']} h {p['start_h']:g}–{p['end_h']:g}: {rate}"

    for i in range(max(len(a["phases"]), len(b["phases"]))):
        rows.append((f"Phase {i + 1}", phase(a, i), phase(b, i)))
    codes_a = {f["code"] for f in a["findings"]}
    codes_b = {f["code"] for f in b["findings"]}
    rows.append(("Findings", ", ".join(sorted(codes_a)) or "—", ", ".join(sorted(codes_b)) or "—"))
    return [(what, left, right, left != right) for what, left, right in rows]
