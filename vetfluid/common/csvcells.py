"""CSV that spreadsheets cannot turn into formulas.

A text cell starting with ``=``, ``+``, ``-``, ``@``, a tab or a carriage return is
prefixed with an apostrophe (OWASP Foundation, "CSV Injection"), and so is every line
of a cell after a line break: a reader that ends a row at a bare CR would otherwise
start a new row with a live formula. A cell with a line break is always quoted, so a CR
or LF inside it never ends the row; numbers are written as numbers.
"""

from __future__ import annotations

import csv
import io
import re
from collections.abc import Iterable, Sequence

FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r")
# Every line boundary str.splitlines knows (CR, LF, CR LF, VT, FF, FS, GS, RS, NEL, LS, PS):
# wider than what csv readers split at, so no reader finds a line we left live.
_LINE_BREAK = re.compile(r"(\r\n|[\r\n\x0b\x0c\x1c\x1d\x1e\x85\u2028\u2029])")


def safe_cell(value: object) -> object:
    """A cell as written: text whose first line, or any line after a line break, could
    start a formula gets an apostrophe before that line; other values pass unchanged."""
    if not isinstance(value, str):
        return value
    parts = _LINE_BREAK.split(value)  # text, break, text, break, … text
    for i in range(2, len(parts), 2):
        if parts[i].startswith(FORMULA_STARTS):
            parts[i] = "'" + parts[i]
    return ("'" if value.startswith(FORMULA_STARTS) else "") + "".join(parts)


def csv_text(header: Sequence[str], rows: Iterable[Sequence[object]]) -> str:
    """The rows as CSV text, every text cell made safe; a row with a line break in a cell
    has all its text quoted (numbers stay bare), since the csv module quotes only the
    breaks that are in its line terminator ("\n" here: a bare CR would end the row)."""
    out = io.StringIO()
    plain = csv.writer(out, lineterminator="\n")
    quoted = csv.writer(out, lineterminator="\n", quoting=csv.QUOTE_NONNUMERIC)
    for row in (header, *rows):
        cells = [safe_cell(cell) for cell in row]
        breaks = any(isinstance(c, str) and _LINE_BREAK.search(c) for c in cells)
        (quoted if breaks else plain).writerow(cells)
    return out.getvalue()
