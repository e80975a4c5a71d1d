"""Where the records are kept and who saves into them: one setting chooses the engine.

* ``VETFLUID_RECORDS_URL`` (or the settings file's ``url``, set in the window's Records
  settings) names a PostgreSQL server, ``postgresql://user@host:port/database``; empty:
  the SQLite file in the user data folder, as always.
* A password is never part of that setting: a URL holding one is refused. The password
  is kept where libpq looks for it, in a ``.pgpass``-style file readable by its owner
  only: ``records.pgpass`` in the user data folder (written by :func:`store_password`)
  when it holds a line for the server, else libpq's own choice, ``PGPASSFILE`` or
  ``~/.pgpass`` (libpq reads one password file only: ours is named only when it has the
  server's password, so a user's own file keeps working). libpq ignores a password file
  others can read (PostgreSQL 15 documentation, 34.16); such a file is named, with the
  fix, before connecting (:func:`password_file_problem`).
* The settings file and ``records.pgpass`` are written atomically: a new owner-only file
  beside the old one, on disk, renamed onto it (:func:`write_atomically`).
* The settings file is read strictly: a value that is not text (``null``, a number) is
  refused in words, never read as the text "None".
* TLS whenever the server offers it: ``sslmode`` is ``prefer`` unless the URL asks for
  more (``require``, ``verify-ca``, ``verify-full``); ``disable`` and ``allow`` are refused.
* Each version records its author's initials and the workstation it was saved from:
  ``VETFLUID_WORKSTATION``, else the settings file's ``workstation``, else the computer's
  network name.
"""

from __future__ import annotations

import contextlib
import ipaddress
import json
import os
import socket
import tempfile
from dataclasses import asdict, dataclass
from pathlib import Path

from vetfluid.common.errors import InputError, VetfluidError
from vetfluid.common.paths import user_data_dir

URL_VARIABLE = "VETFLUID_RECORDS_URL"
WORKSTATION_VARIABLE = "VETFLUID_WORKSTATION"
SETTINGS_NAME = "records-settings.json"
PASSFILE_NAME = "records.pgpass"
_SCHEMES = ("postgresql", "postgres", "postgresql+psycopg")
SSL_MODES = ("prefer", "require", "verify-ca", "verify-full")  # TLS when offered, or more
CONNECT_TIMEOUT_S = 5
DEFAULT_PORT = 5432
# the names of this computer itself: one server, however its address is written
_LOOPBACK_NAMES = ("localhost", "localhost.localdomain")


@dataclass(frozen=True, kw_only=True)
class RecordsSettings:
    """What the settings file keeps (never a password)."""

    url: str = ""  # empty: the SQLite file in the user data folder
    workstation: str = ""  # empty: the computer's network name
    initials: str = ""  # the clinician's initials, put on each version saved


def settings_file() -> Path:
    return user_data_dir() / SETTINGS_NAME


def load_settings() -> RecordsSettings:
    """The saved settings; a missing file is the defaults, an unreadable one is said."""
    path = settings_file()
    if not path.exists():
        return RecordsSettings()
    try:
        stored = json.loads(path.read_text(encoding="utf-8"))
    except RecursionError:  # nested thousands deep: Python's parser gives up
        raise InputError(
            f"the records settings {path} cannot be read (nested too deep to be settings)",
            field="records settings",
            fix="set them again in Records settings, or delete the file",
        ) from None
    except (OSError, ValueError) as exc:
        raise InputError(
            f"the records settings {path} cannot be read ({exc})",
            field="records settings",
            fix="set them again in Records settings, or delete the file",
        ) from None
    if not isinstance(stored, dict):
        raise InputError(
            f"the records settings {path} are not settings (not a JSON object)",
            field="records settings",
            fix="set them again in Records settings, or delete the file",
        )
    known = RecordsSettings.__dataclass_fields__
    for key, value in stored.items():
        if key in known and not isinstance(value, str):
            raise InputError(
                f"the records settings {path} gives the {key} as {_json_words(value)}, not as text",
                field="records settings",
                fix=f'write the {key} in quotes (e.g. "{key}": ""), or set it again in '
                "Records settings",
            )
    return RecordsSettings(**{k: v for k, v in stored.items() if k in known})


def _json_words(value: object) -> str:
    """A JSON value as the file says it (null, 12, true), or what it is (a list)."""
    if isinstance(value, list):
        return "a list"
    if isinstance(value, dict):
        return "an object"
    return json.dumps(value)


def write_atomically(path: Path, text: str) -> None:
    """Replace ``path`` with ``text`` whole or not at all: written into a new owner-only file
    (0600 from its creation, before any byte) in the same folder, flushed to disk, renamed
    onto ``path`` (POSIX ``rename``: the old file or the new one, never part of one), and
    the rename made durable. VetfluidError, the old file untouched, when it cannot be."""
    folder = path.parent
    try:
        handle, name = tempfile.mkstemp(dir=folder, prefix=f".{path.name}.", suffix=".partial")
    except OSError as exc:
        raise VetfluidError(
            f"{path.name} could not be written in {folder}: {exc.strerror}",
            fix="check that the folder is writable and the disk has space",
        ) from exc
    staging = Path(name)
    try:
        with os.fdopen(handle, "w", encoding="utf-8") as out:
            out.write(text)
            out.flush()
            os.fsync(out.fileno())
        os.replace(staging, path)
        if os.name == "posix":  # the rename itself on disk (folders cannot be opened on Windows)
            directory = os.open(folder, os.O_RDONLY)
            try:
                os.fsync(directory)
            finally:
                os.close(directory)
    except OSError as exc:
        raise VetfluidError(
            f"{path.name} could not be written ({exc.strerror}); the earlier one is unchanged",
            fix="check that the folder is writable and the disk has space",
        ) from exc
    finally:
        with contextlib.suppress(FileNotFoundError):
            staging.unlink()


def save_settings(settings: RecordsSettings) -> None:
    """Write the settings, owner-only and atomically; a server address holding a password
    is refused."""
    if settings.url.strip():
        server_address(settings.url)  # refuses a password, a foreign scheme, TLS turned off
    write_atomically(settings_file(), json.dumps(asdict(settings), indent=2) + "\n")


def records_url() -> str:
    """The setting that chooses the engine: the environment first, then the settings file
    ("" for the SQLite file)."""
    given = os.environ.get(URL_VARIABLE)
    if given is not None:
        return given.strip()
    return load_settings().url.strip()


def workstation_name() -> str:
    given = os.environ.get(WORKSTATION_VARIABLE, "").strip()
    if given:
        return given
    try:
        kept = load_settings().workstation.strip()
    except InputError:
        kept = ""
    return kept or socket.gethostname()


@dataclass(frozen=True, kw_only=True)
class ServerAddress:
    """A PostgreSQL server as the records reach it (no password in it)."""

    host: str
    port: int
    database: str
    user: str
    sslmode: str
    options: tuple[tuple[str, str], ...] = ()

    @property
    def label(self) -> str:
        """What the user is shown: user@host:port/database (an IPv6 host in brackets,
        RFC 3986 3.2.2: ``vet@[::1]:5432/vetfluid``)."""
        host = f"[{self.host}]" if ":" in self.host else self.host
        return f"{self.user}@{host}:{self.port}/{self.database}"

    @property
    def identity(self) -> str:
        """The server, database and user however the address was written: the host in
        lower case (a trailing dot dropped, an IPv6 address in its shortest form, this
        computer's names and loopback addresses as ``localhost``), the port always given.
        Keys this workstation's drafts for the server."""
        host = self.host.strip().rstrip(".").lower()
        try:
            parsed = ipaddress.ip_address(host.strip("[]"))
        except ValueError:
            parsed = None
        if host in _LOOPBACK_NAMES or (parsed is not None and parsed.is_loopback):
            host = "localhost"
        elif parsed is not None:
            host = f"[{parsed.compressed}]" if parsed.version == 6 else parsed.compressed
        return f"{self.user}@{host}:{self.port}/{self.database}"

    def spellings(self) -> tuple[str, ...]:
        """Labels this server was keyed by before :attr:`identity`: the address as written
        (and in lower case), and, for this computer itself, its usual names."""
        hosts = [self.host, self.host.lower()]
        if self.identity.split("@", 1)[1].startswith("localhost:"):
            hosts += ["localhost", "127.0.0.1", "::1", "localhost.localdomain"]
        return tuple(dict.fromkeys(
            f"{self.user}@{h}:{self.port}/{self.database}" for h in hosts
        ))  # fmt: skip

    def sqlalchemy_url(self):  # noqa: ANN201 — sqlalchemy.URL
        from sqlalchemy import URL

        return URL.create(
            "postgresql+psycopg", username=self.user, host=self.host, port=self.port,
            database=self.database,
        )  # fmt: skip

    def connect_args(self) -> dict[str, object]:
        """libpq's parameters: TLS when offered (or more), a bounded wait for an unreachable
        server, and our owner-only password file when it has a line for this server (else
        none: libpq reads ``PGPASSFILE`` or ``~/.pgpass``, as it would without vetfluid)."""
        args: dict[str, object] = dict(self.options)
        args.update(sslmode=self.sslmode, connect_timeout=CONNECT_TIMEOUT_S,
                    application_name="vetfluid")  # fmt: skip
        kept = password_file()
        if _has_entry(kept, self):
            args["passfile"] = str(kept)
        return args

    def passfile_used(self) -> Path | None:
        """The password file libpq reads for this server: ours when it has a line for it,
        else ``PGPASSFILE``, else ``~/.pgpass`` (None: none of them exists)."""
        ours = password_file()
        if _has_entry(ours, self):
            return ours
        given = os.environ.get("PGPASSFILE")
        theirs = Path(given) if given else Path.home() / ".pgpass"
        return theirs if theirs.is_file() else None


def password_file() -> Path:
    """The owner-only password file vetfluid writes (``records.pgpass``)."""
    return user_data_dir() / PASSFILE_NAME


def _fields(line: str) -> list[str]:
    """One line of a password file split at its unescaped colons, escapes undone."""
    fields, current, escaped = [], [], False
    for ch in line:
        if escaped:
            current.append(ch)
            escaped = False
        elif ch == "\\":
            escaped = True
        elif ch == ":" and len(fields) < 4:
            fields.append("".join(current))
            current = []
        else:
            current.append(ch)
    fields.append("".join(current))
    return fields


def _has_entry(path: Path, address: ServerAddress) -> bool:
    """Whether the password file has a line libpq would take for ``address`` (each of
    host, port, database and user equal, or ``*``; PostgreSQL 15 documentation, 34.16)."""
    try:
        text = path.read_text(encoding="utf-8")
    except (OSError, UnicodeDecodeError):
        return False
    wanted = (address.host, str(address.port), address.database, address.user)
    for line in text.splitlines():
        if not line.strip() or line.lstrip().startswith("#"):
            continue
        fields = _fields(line)
        if len(fields) == 5 and all(f in ("*", w) for f, w in zip(fields, wanted, strict=False)):
            return True
    return False


def password_spelling_problem(address: ServerAddress) -> str | None:
    """Why the password kept in ``records.pgpass`` will not be used for ``address``, in
    words, or None: kept for the same server written another way (127.0.0.1 for
    localhost). libpq matches the host as written (PostgreSQL 15 documentation, 34.16),
    so the server would be reached without it when vetfluid next starts."""
    path = password_file()
    if _has_entry(path, address):
        return None
    try:
        text = path.read_text(encoding="utf-8")
    except (OSError, UnicodeDecodeError):
        return None
    for line in text.splitlines():
        fields = _fields(line)
        if len(fields) != 5 or fields[0] == "*" or not fields[1].isdigit():
            continue
        kept = ServerAddress(host=fields[0], port=int(fields[1]), database=fields[2],
                             user=fields[3], sslmode=address.sslmode)  # fmt: skip
        if kept.identity == address.identity:
            return (
                f"the password kept in {path} is for the server written as {fields[0]}, "
                f"and this address writes it as {address.host}: the PostgreSQL client "
                "matches the host as written, so it would not send it. Give the password "
                "again here (it is kept for this spelling), or write the host as before"
            )
    return None


def password_file_problem(address: ServerAddress) -> str | None:
    """Why the password file libpq would read for ``address`` cannot be used, in words, or
    None. On POSIX systems libpq ignores one that its group or others may read (PostgreSQL
    15 documentation, 34.16) and the server then only says "no password supplied"."""
    if os.name != "posix":
        return None
    used = address.passfile_used()
    if used is None:
        return None
    try:
        mode = used.stat().st_mode & 0o777
    except OSError:
        return None
    if not mode & 0o077:
        return None
    return (
        f"the password file {used} can be read by others (its permissions are {mode:o}), so "
        "the PostgreSQL client ignores it and sends no password; make it readable by you only: "
        f"chmod 600 {used}"
        + (" (or give the password again in File ▸ Records settings, which rewrites it "
           "owner-only)" if used == password_file() else "")
    )  # fmt: skip


def server_address(url: str) -> ServerAddress:
    """Read a records URL naming a PostgreSQL server; InputError for anything else, a
    password in it, or TLS turned off."""
    from sqlalchemy.engine import make_url
    from sqlalchemy.exc import ArgumentError

    field = "records server"
    try:
        parsed = make_url(url.strip())
    except (ArgumentError, ValueError):
        # never the address itself in the message: a mistyped one may hold a password
        raise InputError(
            "the records server address cannot be read as one", field=field,
            fix="write it as postgresql://user@host:5432/database (no password in it)",
        ) from None  # fmt: skip
    if parsed.drivername not in _SCHEMES:
        raise InputError(
            f"records are kept on PostgreSQL servers, not {_shortened(parsed.drivername)!r}",
            field=field,
            fix="write it as postgresql://user@host:5432/database, or leave it empty for the "
            "file on this computer",
        )  # fmt: skip
    if parsed.password is not None:
        raise InputError(
            "the server address holds a password, which would be kept in plain text",
            field=field,
            fix=f"remove it from the address; give it in Records settings (kept in "
            f"{PASSFILE_NAME}, readable by you only) or in your own .pgpass file",
        )
    if not parsed.host or not parsed.database or not parsed.username:
        raise InputError(
            "the server address needs a user, a host and a database", field=field,
            fix="write it as postgresql://user@host:5432/database",
        )  # fmt: skip
    try:
        port = parsed.port
    except ValueError:
        port = -1
    if port is not None and not 1 <= port <= 65535:  # TCP ports (RFC 793: 16 bits, 0 none)
        raise InputError(
            "the server address gives a port outside 1 to 65535", field=field,
            fix="write the server's port (PostgreSQL's is usually 5432), or leave it out",
        )  # fmt: skip
    query = {k: v if isinstance(v, str) else v[-1] for k, v in parsed.query.items()}
    sslmode = query.pop("sslmode", "prefer").lower()
    if sslmode not in SSL_MODES:
        raise InputError(
            f"sslmode={sslmode} would send patient records unencrypted", field=field,
            fix="leave sslmode out (TLS whenever the server offers it) or use require, "
            "verify-ca or verify-full",
        )  # fmt: skip
    if {"password", "passfile", "sslpassword"} & set(query):
        raise InputError(
            "the server address names a password, a password file or a key's passphrase",
            field=field, fix=f"remove it; the password is kept in {PASSFILE_NAME}",
        )  # fmt: skip
    if {"host", "hostaddr", "port", "dbname", "user"} & set(query):
        # libpq would take these over the address shown, and the password kept for it
        raise InputError(
            "the server address names its host, port, database or user again after the ?",
            field=field, fix="write each once, as postgresql://user@host:5432/database",
        )  # fmt: skip
    return ServerAddress(
        host=parsed.host, port=parsed.port or DEFAULT_PORT, database=parsed.database,
        user=parsed.username, sslmode=sslmode, options=tuple(sorted(query.items())),
    )  # fmt: skip


def _shortened(text: str, limit: int = 40) -> str:
    """Text from an address as said back to the user: at most ``limit`` characters."""
    return text if len(text) <= limit else text[: limit - 1] + "…"


def _escaped(part: str) -> str:
    return part.replace("\\", "\\\\").replace(":", "\\:")


def _password_lines(path: Path) -> list[str]:
    """The lines of our password file, kept when a password is added; VetfluidError, in
    words naming the file, when it cannot be read (never written over: the passwords of
    other servers may be in it)."""
    if path.is_dir():
        why, fix = "is a folder, not a password file", "move it away, then give the password again"
    else:
        try:
            return path.read_text(encoding="utf-8").splitlines()
        except FileNotFoundError:
            return []
        except UnicodeDecodeError:
            why = "is not UTF-8 text (written in another encoding)"
            fix = "save it as UTF-8 in a text editor, or move it away and give the password again"
        except OSError as exc:
            why = f"cannot be read ({exc.strerror})"
            fix = (f"make it readable by you only (chmod 600 {path}), or move it away and "
                   "give the password again")  # fmt: skip
    raise VetfluidError(f"the password file {path} {why}; the password was not kept", fix=fix)


def store_password(address: ServerAddress, password: str) -> Path:
    """Keep the password for ``address`` in the owner-only ``records.pgpass`` (libpq's
    format: host:port:database:user:password), replacing an earlier one for it; written
    atomically, the new file 0600 before the password goes in."""
    if "\n" in password or "\r" in password:
        raise InputError("a password cannot hold a line break", field="password")
    path = password_file()
    key = ":".join(_escaped(p) for p in (address.host, str(address.port), address.database,
                                         address.user))  # fmt: skip
    lines = [line for line in _password_lines(path) if not line.startswith(key + ":")]
    lines.append(f"{key}:{_escaped(password)}")
    write_atomically(path, "\n".join(lines) + "\n")
    return path
