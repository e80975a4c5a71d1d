"""Where the records are kept and who saves into them: one setting chooses the engine.

* ``VETFLUID_RECORDS_URL`` (or the settings file's ``url``, set in the window's Records
  settings) names a PostgreSQL server, ``postgresql://user@host:port/database``; empty:
  the SQLite file in the user data folder, as always.
* A password is never part of that setting: a URL holding one is refused. The password
  is kept where libpq looks for it, in a ``.pgpass``-style file readable by its owner
  only: ``records.pgpass`` in the user data folder (written by :func:`store_password`),
  else ``PGPASSFILE`` or ``~/.pgpass``; libpq itself ignores such a file when others can
  read it.
* TLS whenever the server offers it: ``sslmode`` is ``prefer`` unless the URL asks for
  more (``require``, ``verify-ca``, ``verify-full``); ``disable`` and ``allow`` are refused.
* Each version records its author's initials and the workstation it was saved from:
  ``VETFLUID_WORKSTATION``, else the settings file's ``workstation``, else the computer's
  network name.
"""

from __future__ import annotations

import json
import os
import socket
from dataclasses import asdict, dataclass
from pathlib import Path

from vetfluid.common.errors import InputError
from vetfluid.common.paths import user_data_dir, write_owner_only_text

URL_VARIABLE = "VETFLUID_RECORDS_URL"
WORKSTATION_VARIABLE = "VETFLUID_WORKSTATION"
SETTINGS_NAME = "records-settings.json"
PASSFILE_NAME = "records.pgpass"
_SCHEMES = ("postgresql", "postgres", "postgresql+psycopg")
SSL_MODES = ("prefer", "require", "verify-ca", "verify-full")  # TLS when offered, or more
CONNECT_TIMEOUT_S = 5


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
    except (OSError, ValueError) as exc:
        raise InputError(
            f"the records settings {path} cannot be read ({exc})",
            field="records settings",
            fix="set them again in Records settings, or delete the file",
        ) from None
    if not isinstance(stored, dict):
        raise InputError(f"the records settings {path} are not settings", field="records settings")
    known = RecordsSettings.__dataclass_fields__
    return RecordsSettings(**{k: str(v) for k, v in stored.items() if k in known})


def save_settings(settings: RecordsSettings) -> None:
    """Write the settings, owner-only; a server address holding a password is refused."""
    if settings.url.strip():
        server_address(settings.url)  # refuses a password, a foreign scheme, TLS turned off
    write_owner_only_text(settings_file(), json.dumps(asdict(settings), indent=2) + "\n")


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
        """What the user is shown: user@host:port/database."""
        return f"{self.user}@{self.host}:{self.port}/{self.database}"

    def sqlalchemy_url(self):  # noqa: ANN201 — sqlalchemy.URL
        from sqlalchemy import URL

        return URL.create(
            "postgresql+psycopg", username=self.user, host=self.host, port=self.port,
            database=self.database,
        )  # fmt: skip

    def connect_args(self) -> dict[str, object]:
        """libpq's parameters: TLS when offered (or more), the owner-only password file,
        a bounded wait for an unreachable server."""
        args: dict[str, object] = dict(self.options)
        args.update(sslmode=self.sslmode, connect_timeout=CONNECT_TIMEOUT_S,
                    application_name="vetfluid")  # fmt: skip
        kept = user_data_dir() / PASSFILE_NAME
        if kept.exists():
            args["passfile"] = str(kept)
        return args


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
            f"records are kept on PostgreSQL servers, not {parsed.drivername!r}", field=field,
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
        host=parsed.host, port=parsed.port or 5432, database=parsed.database,
        user=parsed.username, sslmode=sslmode, options=tuple(sorted(query.items())),
    )  # fmt: skip


def _escaped(part: str) -> str:
    return part.replace("\\", "\\\\").replace(":", "\\:")


def store_password(address: ServerAddress, password: str) -> Path:
    """Keep the password for ``address`` in the owner-only ``records.pgpass`` (libpq's
    format: host:port:database:user:password), replacing an earlier one for it."""
    if "\n" in password or "\r" in password:
        raise InputError("a password cannot hold a line break", field="password")
    path = user_data_dir() / PASSFILE_NAME
    key = ":".join(_escaped(p) for p in (address.host, str(address.port), address.database,
                                         address.user))  # fmt: skip
    lines = []
    if path.exists():
        lines = [line for line in path.read_text(encoding="utf-8").splitlines()
                 if not line.startswith(key + ":")]  # fmt: skip
    lines.append(f"{key}:{_escaped(password)}")
    write_owner_only_text(path, "\n".join(lines) + "\n")
    return path
