"""The weight-band chart as a printable page (HTML, laid out by ``ui/printouts/printing.py``).

Same numbers as the chart dialog and ``vetfluid-cli chart``; the cautions in full,
and footnotes naming the source and basis of every species value the chart used —
values recalled from memory say so in words, which survives black-and-white print.
"""

from __future__ import annotations

from html import escape

from vetfluid.common.cautions import CAUTIONS
from vetfluid.common.formatting import format_quantity as q
from vetfluid.printouts.chart import Chart
from vetfluid.printouts.sheet import STYLE, sources_html, table_html

HEADERS = ("Weight", "Maintenance a day", "Maintenance an hour", "Deficit per 5 %", "Bolus", "Drip")
UNITS = ("kg", "mL", "mL/h", "mL", "mL", "drops/min")
NO_LINE = "no line"  # bolus column where a continuous line is not practical


def chart_cells(chart: Chart) -> list[list[str]]:
    """The chart's rows as safely formatted text (shared by the dialog and the page).
    Species lighter than 1 kg throughout show their weight in grams, as they are weighed;
    the drip column is worded as the schedule words it (:meth:`Chart.drip_texts`)."""
    grams = float(chart.weight_kg.max()) < 1.0
    cells = []
    for (weight, *rest), drip in zip(chart.rows(), chart.drip_texts(), strict=True):
        first = q(weight * 1000.0, "g") if grams else q(weight, "kg")
        units = UNITS[1:-1]  # the numbers between the weight and the drip
        numbers = [
            NO_LINE if v is None else q(v, u)
            for v, u in zip(rest[: len(units)], units, strict=True)
        ]
        cells.append([first, *numbers, drip])
    return cells


def chart_note(chart: Chart) -> str:
    """How the columns were computed, with the unverified values named."""
    unverified = sorted({v.label or v.parameter for v in chart.provenance if v.unverified})
    flag = (
        f" Recalled, not checked against a publication: {', '.join(unverified)}."
        if unverified
        else ""
    )
    return (
        f"Maintenance by the {chart.method} method; bolus only where a continuous line is "
        "practical; deficit per 5 % = body weight × 50 mL (Davis 2013); drip rate for "
        f"{chart.drop_factor:g} drops/mL.{flag}"
    )


def chart_sheet_html(chart: Chart) -> str:
    """One printable page: the chart, how it was computed, the cautions and the sources."""
    return "".join(
        [
            f"<html><head><style>{STYLE}</style></head><body>",
            f"<h2>Weight-band fluid chart — {escape(chart.species_name)}</h2>",
            "<p><b>Cautions:</b> " + escape(" ".join(CAUTIONS)) + "</p>",
            table_html(chart_cells(chart), list(HEADERS), padding=4),
            f"<p>{escape(chart_note(chart))}</p>",
            sources_html([v.provenance() for v in chart.provenance], chart.citations),
            "</body></html>",
        ]
    )
