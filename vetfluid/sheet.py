"""The plan as a printable sheet (HTML), built from the same data as the CLI's JSON.

Every page carries the cautions; values recalled from memory are marked with
"(memory — unverified)" in words, so the marking survives black-and-white print.
"""

from __future__ import annotations

from html import escape

from vetfluid.cautions import CAUTIONS
from vetfluid.formatting import format_quantity as q
from vetfluid.plan import Plan
from vetfluid.serialize import plan_dict

SEVERITY_WORDS = {"info": "Note", "soft": "Warning", "hard": "HARD LIMIT"}


def _rows(rows: list[list[str]], header: list[str]) -> str:
    head = "".join(f"<th align='left'>{escape(h)}</th>" for h in header)
    body = "".join("<tr>" + "".join(f"<td>{escape(c)}</td>" for c in r) + "</tr>" for r in rows)
    table = "<table border='1' cellspacing='0' cellpadding='3' width='100%'>"
    return f"{table}<tr>{head}</tr>{body}</table>"


def plan_sheet_html(
    plan: Plan, *, acknowledged: dict[str, str] | None = None, ready: bool = False
) -> str:
    """The treatment sheet for one plan: patient, totals, schedule, findings, values used."""
    data = plan_dict(plan)
    acknowledged = acknowledged or {}
    m = data["maintenance"]
    cautions = "".join(f"<li>{escape(c)}</li>" for c in CAUTIONS)
    parts = [
        "<html><body style='font-family: sans-serif; font-size: 10pt'>",
        f"<h2>Fluid plan — {escape(data['species_name'])}, "
        f"{escape(q(data['weight_kg'], 'kg'))}</h2>",
        f"<p><b>Status:</b> {'marked ready' if ready else 'not marked ready'}</p>",
        "<div style='border: 1px solid black; padding: 4px'>",
        f"<b>Cautions</b><ul>{cautions}</ul></div>",
        "<h3>Totals</h3>",
        _rows(
            [
                ["Maintenance", f"{q(m['ml_per_day'], 'mL/day')} — {m['method']}: {m['formula']}"],
                [
                    "Dehydration",
                    f"{data['dehydration_percent']:g} % → deficit {q(data['deficit_ml'], 'mL')}",
                ],
                ["First 24 h", q(data["total_ml_first_24h"], "mL")],
                ["Fluid", data["fluid"]["name"]],
                ["Route", f"{data['route'].upper()} ({data['device']})"],
            ],
            ["", ""],
        ),
        "<h3>Schedule</h3>",
        _rows(
            [[e["clock"] or f"h {e['hour']:g}", e["phase"], e["action"]] for e in data["schedule"]],
            ["Clock", "Phase", "What to do"],
        ),  # fmt: skip
        "<h3>Findings</h3>",
        _rows(
            [
                [
                    SEVERITY_WORDS[f["severity"]],
                    f"{f['message']} {f['action']}",
                    acknowledged.get(f["code"], ""),
                ]
                for f in data["findings"]
            ]
            or [["—", "none", ""]],
            ["Severity", "Finding", "Reason given"],
        ),  # fmt: skip
        "<h3>Species values used</h3>",
        _rows(
            [
                [
                    v["parameter"],
                    f"{v['value']} {v['unit']}",
                    v["basis"] + (" (memory — unverified)" if v["basis"] == "memory" else ""),
                    v["source_id"] or "—",
                ]
                for v in data["provenance"]
            ],
            ["Value", "Amount", "Basis", "Source"],
        ),  # fmt: skip
        "</body></html>",
    ]
    return "".join(parts)
