"""One exception tree for the core.

Every error names the field, the bad value and the fix, so the CLI can print one
line and the window can show the message where the user acted.
"""

from __future__ import annotations

import unicodedata
from typing import Any


def printable(text: object) -> str:
    """Text safe to echo on one line of a terminal or a status bar: control and format
    characters (newline, ESC of an ANSI colour, bidirectional overrides) shown as the
    escapes ``repr`` uses (``\\n``, ``\\x1b``, ``\\u202e``), everything else as typed."""
    return "".join(
        repr(ch)[1:-1] if unicodedata.category(ch) in ("Cc", "Cf", "Zl", "Zp") else ch
        for ch in str(text)
    )


class VetfluidError(Exception):
    """Base of every error the core raises on purpose."""

    def __init__(
        self, message: str, *, field: str | None = None, value: Any = None, fix: str | None = None
    ) -> None:
        self.message = message
        self.field = field
        self.value = value
        self.fix = fix
        super().__init__(self.one_line())

    def one_line(self) -> str:
        """The message, the field and the fix on one line (for stderr and status bars);
        what the user typed and is echoed in them is escaped (:func:`printable`)."""
        parts = []
        if self.field:
            parts.append(f"{self.field}: ")
        parts.append(self.message)
        if self.fix:
            parts.append(f" — {self.fix}")
        return printable("".join(parts))


class InputError(VetfluidError):
    """A value the user entered cannot be used (wrong type, unit, range)."""


class SpeciesDataError(VetfluidError):
    """The species table (shipped or a clinic override) is malformed.

    ``location`` is ``file:line`` so the person editing the CSV can go straight there.
    """

    def __init__(self, message: str, *, location: str, fix: str | None = None) -> None:
        self.location = location
        super().__init__(f"{location}: {message}", fix=fix)


class LimitExceeded(VetfluidError):
    """A hard safety limit was hit where the caller asked for a value, not a finding."""
