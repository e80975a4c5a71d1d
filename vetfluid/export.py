"""CSV that spreadsheets cannot turn into formulas.

A text cell starting with ``=``, ``+``, ``-``, ``@``, a tab or a carriage return is
prefixed with an apostrophe (the OWASP guidance on CSV injection); numbers are
written as numbers.
"""

from __future__ import annotations

import csv
import io
from collections.abc import Iterable, Sequence

FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r")


def safe_cell(value: object) -> object:
    """A cell as written: text that could start a formula is neutralised."""
    if isinstance(value, str) and value.startswith(FORMULA_STARTS):
        return "'" + value
    return value


def csv_text(header: Sequence[str], rows: Iterable[Sequence[object]]) -> str:
    """The rows as CSV text, every text cell made safe."""
    out = io.StringIO()
    writer = csv.writer(out, lineterminator="\n")
    writer.writerow([safe_cell(h) for h in header])
    for row in rows:
        writer.writerow([safe_cell(cell) for cell in row])
    return out.getvalue()
