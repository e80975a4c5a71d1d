"""Formula-safe CSV: a line break inside a cell can neither split the row nor start a
new line with a live formula, read back by Python's csv reader and by pandas.

The dangerous starts (= + - @, tab, carriage return) are those of the OWASP guidance
on CSV injection ("CSV Injection", OWASP Foundation, owasp.org).
"""

from __future__ import annotations

import csv
import io
import re

import pandas as pd
import pytest

from vetfluid.common.csvcells import csv_text, safe_cell
from vetfluid.course.observations import Observation
from vetfluid.printouts.export import observations_csv

# Python's csv reader and pandas both end a record at an unquoted CR or LF.
LINE_BREAK = re.compile(r"\r\n|\r|\n|\x0b|\x0c|\x1c|\x1d|\x1e|\x85|\u2028|\u2029")
FORMULA_START = ("=", "+", "-", "@", "\t", "\r")
INJECTIONS = [
    "x\r=cmd|' /C calc'!A0",  # the case reported: a bare CR, then a formula
    "x\n=1+1",
    "x\r\n+SUM(A1)",
    "a\r-2+3",
    "b\r@cmd",
    "c\r\t=x",
    "d\n\r=x",
    "\r=x",
    "\n=x",
    "e\u2028=x",
    'f\r\r\r=HYPERLINK("http://x")',
    "=1+1",
    "plain\rtext",
]
HEADER = ("hour", "note", "volume_ml")


def _rows():
    return [(float(i), text, 10.5 + i) for i, text in enumerate(INJECTIONS)]


def _unsafe_lines(cell: str) -> list[str]:
    """Lines of a cell (split at any line break) that would start a formula."""
    return [line for line in LINE_BREAK.split(cell) if line.startswith(FORMULA_START)]


def test_a_line_break_inside_a_cell_starts_no_formula_after_it():
    for text in INJECTIONS:
        assert _unsafe_lines(safe_cell(text)) == [], repr(text)
    # the text stays what was written, one apostrophe before each dangerous line
    assert safe_cell("x\r=cmd") == "x\r'=cmd"
    assert safe_cell("a\r\n+1") == "a\r\n'+1"
    assert safe_cell("plain\rtext") == "plain\rtext"
    assert safe_cell("\r=x") == "'\r'=x"
    assert safe_cell(-5.0) == -5.0


def test_python_csv_reader_reads_every_row_back_whole():
    text = csv_text(HEADER, _rows())
    rows = list(csv.reader(io.StringIO(text, newline="")))
    assert rows[0] == list(HEADER)
    assert len(rows) == 1 + len(INJECTIONS), "a line break inside a cell split a row"
    for row, text_in in zip(rows[1:], INJECTIONS, strict=True):
        assert len(row) == len(HEADER)
        assert row[1] == safe_cell(text_in)
        for cell in row:
            assert _unsafe_lines(cell) == [], repr(cell)


def test_pandas_reads_every_row_back_whole_with_numbers_as_numbers():
    text = csv_text(HEADER, _rows())
    frame = pd.read_csv(io.StringIO(text), keep_default_na=False)
    assert list(frame.columns) == list(HEADER)
    assert frame.shape == (len(INJECTIONS), len(HEADER)), "a line break split a row"
    assert list(frame["note"]) == [safe_cell(t) for t in INJECTIONS]
    assert frame["volume_ml"].dtype.kind == "f" and frame["hour"].dtype.kind == "f"
    for cell in frame["note"]:
        assert _unsafe_lines(cell) == [], repr(cell)


def test_an_observation_note_cannot_inject_a_row():
    notes = ["x\r=cmd|' /C calc'!A0", "calm\n@SUM(1)", "ok"]
    observations = [Observation(hour=float(h), note=n) for h, n in enumerate(notes)]
    text = observations_csv(observations)
    rows = list(csv.reader(io.StringIO(text, newline="")))
    assert len(rows) == 1 + len(notes)
    assert [r[-1] for r in rows[1:]] == [safe_cell(n) for n in notes]
    frame = pd.read_csv(io.StringIO(text), keep_default_na=False)
    assert len(frame) == len(notes)
    assert all(_unsafe_lines(str(c)) == [] for c in frame.to_numpy().ravel())


@pytest.mark.parametrize("text", ["=1+1", "+SUM(A1)", "-2+3", "@cmd", "\t=x", "\rx"])
def test_a_formula_at_the_start_still_gets_its_apostrophe(text):
    assert safe_cell(text) == "'" + text
