"""Plan files (``*.vfplan``; those written before were ``*.vfplan.json``): a patient's
inputs and acknowledgements.

Our own small JSON format: ``{"format": "vetfluid-plan-request", "version": 1,
"request": {...}, "acknowledged": {code: reason}, "acknowledged_for": {code: wording}}``
where ``acknowledged_for`` holds what each warning said when its reason was given (files
written before it was kept have none). Writes are atomic (temporary
file, fsync, rename), so a crash never leaves half a file, and owner-only (0600) from the
first byte, as a patient's data is; reads check every part and say what is wrong.

The extension is our own, ``.vfplan``, so a desktop can open plan files with vetfluid by
double-click (Windows associates by the last extension only: ``.vfplan.json`` was a JSON
file there). The content is the same JSON; a file is read by its content, whatever its name,
so files saved as ``*.vfplan.json`` still open everywhere.
"""

from __future__ import annotations

import json
import os
import stat
import tempfile
from dataclasses import dataclass
from pathlib import Path
from typing import NoReturn

from vetfluid.common.errors import InputError, printable
from vetfluid.planning.plan import PlanRequest
from vetfluid.records.serialize import (
    REQUEST_FORMAT,
    REQUEST_VERSION,
    request_from_dict,
    request_to_dict,
)

SUFFIX = ".vfplan"  # what new plan files are saved as
EARLIER_SUFFIX = ".vfplan.json"  # what they were saved as before; still read
SUFFIXES = (SUFFIX, EARLIER_SUFFIX)


def with_suffix(path: Path) -> Path:
    """``path`` as a plan file is written: kept when it already ends in ``.vfplan`` (or the
    earlier ``.vfplan.json``), else with ``.vfplan`` added (``rex`` → ``rex.vfplan``,
    ``rex.json`` → ``rex.json.vfplan``: nothing the user typed is dropped)."""
    path = Path(path)
    if path.name.lower().endswith(SUFFIXES):
        return path
    return path.with_name(path.name + SUFFIX)


@dataclass(frozen=True, kw_only=True)
class RequestFile:
    """What a plan file holds."""

    request: PlanRequest
    acknowledged: dict[str, str]
    acknowledged_for: dict[str, str] | None  # None: written before the wording was kept


def write_request_file(
    path: Path,
    request: PlanRequest,
    acknowledged: dict[str, str],
    *,
    acknowledged_for: dict[str, str] | None = None,
) -> Path:
    """Write the file atomically; returns the path written (the suffix added if missing)."""
    path = with_suffix(Path(path))
    data = {
        "format": REQUEST_FORMAT,
        "version": REQUEST_VERSION,
        "request": request_to_dict(request),
        "acknowledged": dict(acknowledged),
    }
    if acknowledged_for is not None:
        data["acknowledged_for"] = dict(acknowledged_for)
    # a new, owner-only file beside the target (a stale one a crash left is not reused)
    descriptor, name = tempfile.mkstemp(dir=path.parent, prefix=f".{path.name}.", suffix=".tmp")
    temp = Path(name)
    try:
        with os.fdopen(descriptor, "w", encoding="utf-8") as handle:
            json.dump(data, handle, indent=2, ensure_ascii=False)
            handle.flush()
            os.fsync(handle.fileno())
        temp.replace(path)
    finally:
        temp.unlink(missing_ok=True)
    return path


# A plan file is a few kilobytes (a long ins-and-outs course, tens); a file larger than
# this is not one, and is not read into memory. The one limit for every reader of plan
# files (the window, `vetfluid sheet`). Set by us, no clinical source.
MAX_FILE_BYTES = 2_000_000
UTF8_BOM = b"\xef\xbb\xbf"  # UTF-8's byte order mark (Unicode 15, section 23.8)


def read_json_file(path: Path, *, what: str) -> object:
    """A JSON file's content, read with guards: a regular file of at most
    :data:`MAX_FILE_BYTES`, UTF-8 (with or without a byte order mark, as Windows Notepad
    saves it), JSON (NaN and Infinity are read, for the caller's checks to refuse by key),
    nested and with numbers no deeper or longer than Python's reader can take. Anything
    else, a missing or unreadable file too, is an InputError saying in words what is wrong.
    ``what``: what the file should be ("a vetfluid plan file")."""
    path = Path(path)
    try:
        info = path.stat()
        if stat.S_ISDIR(info.st_mode):
            raise InputError(f"{path.name} is a folder, not {what}")
        if not stat.S_ISREG(info.st_mode):  # a pipe or a device, that might never end
            raise InputError(f"{path.name} is not a file", fix=f"give {what}")
        if info.st_size > MAX_FILE_BYTES:
            raise InputError(
                f"{path.name} is too large to be {what} ({info.st_size:,} bytes; at most "
                f"{MAX_FILE_BYTES:,})"
            )
        with path.open("rb") as handle:
            raw = handle.read(MAX_FILE_BYTES + 1)
    except OSError as exc:
        raise _unreadable(path, exc) from exc
    if len(raw) > MAX_FILE_BYTES:  # grew while being read
        raise InputError(f"{path.name} is too large to be {what}")
    try:
        return json.loads(raw.removeprefix(UTF8_BOM).decode("utf-8"))
    except UnicodeDecodeError:
        _refused(path, "it is not UTF-8 text", fix="save it as UTF-8 text")
    except RecursionError:
        reason = "it is nested too deeply"
    except json.JSONDecodeError as exc:
        reason = f"{exc.msg} at line {exc.lineno}, column {exc.colno}"
    except ValueError:  # Python's integer reader refuses a number of thousands of digits
        reason = "it holds a number with too many digits"
    _refused(path, reason)


def _refused(path: Path, reason: str, *, fix: str | None = None) -> NoReturn:
    raise InputError(f"{path.name} is not readable JSON ({reason})", fix=fix)


def _unreadable(path: Path, exc: OSError) -> InputError:
    """An OSError met reading ``path``, in words (never Python's "[Errno 2] …")."""
    shown = printable(str(path))[:300]
    if isinstance(exc, FileNotFoundError):
        return InputError(f"no such file: {shown}", fix="check the file's name and folder")
    if isinstance(exc, PermissionError):
        return InputError(f"you may not read {shown}", fix="ask for it to be made readable")
    return InputError(f"{shown} cannot be read: {(exc.strerror or str(exc)).lower()}")


def read_request_file(path: Path) -> RequestFile:
    """The request and acknowledgements in a file; anything malformed is an InputError
    naming the key (the request's keys are checked by :func:`request_from_dict`)."""
    path = Path(path)
    data = read_json_file(path, what="a vetfluid plan file")
    if not isinstance(data, dict) or data.get("format") != REQUEST_FORMAT:
        raise InputError(f"{path.name} is not a vetfluid plan file")
    return request_file_from_data(data, name=path.name)


def request_file_from_data(data: dict, *, name: str) -> RequestFile:
    """A plan file's content (already JSON-decoded, its format checked)."""
    version = data.get("version")
    if isinstance(version, bool) or version != REQUEST_VERSION:  # true == 1 in Python
        shown = repr(version) if isinstance(version, int | float | str | bool) else "not a number"
        raise InputError(
            f"{name} is version {shown[:40]}; this vetfluid reads version {REQUEST_VERSION}",
            field="version",
        )
    if "request" not in data:
        raise InputError(f"{name} holds no request", field="request")
    acknowledged = data.get("acknowledged")
    acknowledged = {} if acknowledged is None else acknowledged
    if not _codes_to_text(acknowledged):
        raise InputError("acknowledgements must map finding codes to reasons", field="acknowledged")
    wording = data.get("acknowledged_for")
    if wording is not None and not _codes_to_text(wording):
        raise InputError(
            "acknowledged_for must map finding codes to what each warning said",
            field="acknowledged_for",
        )
    return RequestFile(
        request=request_from_dict(data["request"]), acknowledged=acknowledged,
        acknowledged_for=wording,
    )  # fmt: skip


def _codes_to_text(value: object) -> bool:
    return isinstance(value, dict) and all(
        isinstance(k, str) and isinstance(v, str) for k, v in value.items()
    )
