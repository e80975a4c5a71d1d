"""Plan-request files (``*.vfplan.json``): a patient's inputs and acknowledgements.

Our own small JSON format: ``{"format": "vetfluid-plan-request", "version": 1,
"request": {...}, "acknowledged": {code: reason}, "acknowledged_for": {code: wording}}``
where ``acknowledged_for`` holds what each warning said when its reason was given (files
written before it was kept have none). Writes are atomic (temporary
file, fsync, rename), so a crash never leaves half a file, and owner-only (0600) from the
first byte, as a patient's data is; reads check every part and say what is wrong.
"""

from __future__ import annotations

import json
import os
import tempfile
from dataclasses import dataclass
from pathlib import Path

from vetfluid.errors import InputError
from vetfluid.plan import PlanRequest
from vetfluid.serialize import REQUEST_FORMAT, REQUEST_VERSION, request_from_dict, request_to_dict

SUFFIX = ".vfplan.json"


def with_suffix(path: Path) -> Path:
    return path if path.name.endswith(SUFFIX) else path.with_name(path.name + SUFFIX)


@dataclass(frozen=True, kw_only=True)
class RequestFile:
    """What a plan-request file holds."""

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


def read_request_file(path: Path) -> RequestFile:
    """The request and acknowledgements in a file; anything malformed is an InputError."""
    path = Path(path)
    try:
        data = json.loads(path.read_text(encoding="utf-8"))
    except (UnicodeDecodeError, json.JSONDecodeError) as exc:
        raise InputError(
            f"{path.name} is not readable JSON", field="file", value=str(exc)
        ) from None
    if not isinstance(data, dict) or data.get("format") != REQUEST_FORMAT:
        raise InputError(f"{path.name} is not a vetfluid plan request", field="file")
    if data.get("version") != REQUEST_VERSION:
        raise InputError(
            f"{path.name} is version {data.get('version')!r}; this vetfluid reads version "
            f"{REQUEST_VERSION}",
            field="version",
        )
    if "request" not in data:
        raise InputError(f"{path.name} holds no request", field="request")
    acknowledged = data.get("acknowledged") or {}
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
