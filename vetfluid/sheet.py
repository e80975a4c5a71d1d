"""The treatment sheet (HTML), built from the plan's JSON so the window, the CLI's JSON
and ``vetfluid sheet PLAN.json`` print the same thing.

Sections: patient header, cautions, plan summary, the hourly schedule on the clock
with columns the nurse fills in, bag or syringe labels, findings with the reasons
given, and footnotes naming the source of every species value used — values
recalled from memory say "memory — unverified" in words, so the marking survives
black-and-white print. Every text is escaped: a patient called "<b>Rex</b>" prints
as those characters. Numbers are formatted the safe way.
"""

from __future__ import annotations

import math
from html import escape

from vetfluid.cautions import CAUTIONS
from vetfluid.delivery import DrawnUpDose, drawn_up_dose
from vetfluid.errors import InputError
from vetfluid.formatting import format_number
from vetfluid.formatting import format_quantity as q
from vetfluid.ins_and_outs import maintenance_not_given, planned_so_far
from vetfluid.plan import Plan
from vetfluid.schedule import clock_time, sites_text
from vetfluid.serialize import plan_dict
from vetfluid.units import preferred_weight_unit, weight_in_unit

SEVERITY_WORDS = {"info": "Note", "soft": "Warning", "hard": "HARD LIMIT"}
NURSE_COLUMNS = ("Rate set", "Volume given", "Weight", "HR", "RR", "MM / CRT", "Urine", "Initials")
# Discard a spiked bag or filled syringe after 24 h: common practice, no source.
DISCARD_AFTER_H = 24.0
STYLE = (
    "body { font-family: sans-serif; font-size: 9pt; } "
    "table { border-collapse: collapse; } td, th { border: 1px solid black; padding: 2px; }"
)


# A weight is printed with every figure it has, up to this many significant figures (a
# 117 g gerbil is "117 g", never "0.12 kg"); more than any scale reads.
WEIGHT_SIGNIFICANT_FIGURES = 6


def weight_text(weight_kg: float, unit: str) -> str:
    """A body weight in ``unit`` (g, kg or lb) with all its figures: ``65 g``, ``117 g``,
    ``24 kg``, ``4.25 kg``. Never rounded to fewer figures than it has (up to
    :data:`WEIGHT_SIGNIFICANT_FIGURES`): a weight that is rounded is a different weight.
    A unit that is not a weight unit raises InputError."""
    if isinstance(weight_kg, bool) or not isinstance(weight_kg, int | float):
        raise InputError("the weight is not a number", field="weight_kg", value=weight_kg)
    if not math.isfinite(weight_kg):
        raise InputError("cannot print a weight that is not finite", field="weight_kg",
                         value=weight_kg)  # fmt: skip
    value = weight_in_unit(weight_kg, unit)
    if value == 0:
        return f"0 {unit}"
    most = max(0, min(8, WEIGHT_SIGNIFICANT_FIGURES - 1 - math.floor(math.log10(abs(value)))))
    # the fewest decimals that keep the value (117.00000000000001 g is 117 g)
    decimals = next(
        (d for d in range(most) if abs(round(value, d) - value) <= 1e-9 * abs(value)), most
    )
    return f"{format_number(value, decimals=decimals)} {unit}"


def patient_weight_text(data: dict) -> str:
    """The patient's weight in a plan's JSON, in the unit the plan gives (``weight_unit``:
    the species' own, as the window shows it). A plan saved before that key existed gets
    the unit the same way the plan chooses it: from the species' typical weight in the
    values used, else from the patient's weight."""
    unit = data.get("weight_unit")
    if unit is None:
        typical = next(
            (v.get("value") for v in data.get("provenance") or ()
             if isinstance(v, dict) and v.get("parameter") == "body_weight_kg"),
            None,
        )  # fmt: skip
        if isinstance(typical, bool) or not isinstance(typical, int | float):
            typical = data["weight_kg"]
        unit = preferred_weight_unit(typical)
    return weight_text(data["weight_kg"], unit)


def table_html(rows: list[list[str]], header: list[str] | None, *, padding: int = 2) -> str:
    cells = "".join(f"<th align='left'>{escape(h)}</th>" for h in header or ())
    head = f"<tr>{cells}</tr>" if header else ""
    body = "".join("<tr>" + "".join(f"<td>{escape(c)}</td>" for c in row) + "</tr>" for row in rows)
    return f"<table width='100%' cellspacing='0' cellpadding='{padding}'>{head}{body}</table>"


def _start(data: dict):  # noqa: ANN202 — datetime.time | None
    from datetime import datetime

    start = (data.get("request") or {}).get("start_time")
    if not start:
        clocks = [e["clock"] for e in data["schedule"] if e.get("clock")]
        return datetime.strptime(clocks[0][:5], "%H:%M").time() if clocks else None
    return datetime.strptime(start, "%H:%M").time()


def _planned_at(phases: list[dict], hour: float) -> str:
    """What the schedule says for the hour starting at ``hour``: a rate or the doses due."""
    parts = []
    for p in phases:
        if p["mode"] == "continuous" and p["start_h"] <= hour < p["end_h"]:
            parts.append(q(p["rate_ml_per_h"], "mL/h"))
        elif p["mode"] == "intermittent":
            due = [
                p["start_h"] + i * p["interval_h"]
                for i in range(p["doses"])
                if hour <= p["start_h"] + i * p["interval_h"] < hour + 1
            ]
            parts += [f"dose {_dose_ml(p)}" for _ in due]
    return ", ".join(parts) or "—"


def _drawn(p: dict) -> DrawnUpDose:
    """A divided dose as drawn up, the same figures as the schedule's.

    A plan file whose figures are not numbers is refused with a ValueError, as a file
    that is not JSON is (``vetfluid sheet`` reports both as a file it cannot read).
    """
    try:
        return drawn_up_dose(ml_per_site=p["ml_per_site"], sites=p["sites_per_dose"])
    except InputError as err:
        raise ValueError(f"the {p.get('kind', '')} phase's dose: {err}") from err


def _dose_ml(p: dict) -> str:
    return q(_drawn(p).dose_ml, "mL", decimals=2)


BLOCKED_MARK = "HARD LIMIT — NOT TO BE GIVEN AS IT STANDS"


def _hard_findings(data: dict) -> list[dict]:
    return [
        f for f in data.get("findings") or () if isinstance(f, dict) and f.get("severity") == "hard"
    ]


def blocked(data: dict) -> bool:
    """Whether a plan's JSON has a hard limit: its ``hard_limit`` flag or any finding of
    severity "hard" says so (a hand-edited or older file may carry only one of them;
    either is enough to keep the plan from looking like one to give)."""
    return bool(data.get("hard_limit")) or bool(_hard_findings(data))


def page_mark(data: dict) -> str:
    """What every printed page of a plan with a hard limit says beside the cautions
    (pages get separated; the first page's warning alone is not enough)."""
    return BLOCKED_MARK if blocked(data) else ""


def _blocked_html(data: dict) -> str:
    if not blocked(data):
        return ""
    hard = [str(f.get("message", "")) for f in _hard_findings(data)]
    return (
        f"<p><b>✖ {BLOCKED_MARK}.</b> "
        + escape(" ".join(hard))
        + " The hard limits and what to do are listed under Findings.</p>"
    )


def sheet_html(
    data: dict,
    *,
    patient: dict | None = None,
    acknowledged: dict[str, str] | None = None,
    ready: bool = False,
) -> str:
    """The treatment sheet for a plan's JSON (``vetfluid-cli plan --json``)."""
    acknowledged = acknowledged or {}
    patient = patient or {}
    start = _start(data)
    end = max(p["end_h"] for p in data["phases"])
    hours = range(int(math.ceil(end)))
    name = patient.get("name") or "(patient name)"
    parts = [
        f"<html><head><style>{STYLE}</style></head><body>",
        f"<h2>Fluid treatment sheet — {escape(str(name))}</h2>",
        "<p>"
        + escape(
            f"{data['species_name']}, {patient_weight_text(data)}"
            + "".join(f" · {k}: {v}" for k, v in patient.items() if k != "name" and v)
        )
        + f"<br>Status: {'marked ready' if ready else 'NOT marked ready'}</p>",
        _blocked_html(data),
        "<p><b>Cautions:</b> " + escape(" ".join(CAUTIONS)) + "</p>",
        "<h3>Plan</h3>",
        table_html(
            [
                ["Maintenance", maintenance_text(data)],
                [
                    "Dehydration",
                    f"{data['dehydration_percent']:g} % → deficit {q(data['deficit_ml'], 'mL')}",
                ],
                ["Fluid", data["fluid"]["name"]],
                ["Route", f"{data['route'].upper()} ({data['device']})"],
                ["First 24 h", first_24h_text(data)],
            ]
            + [[f"Phase: {p['kind']}", _phase_text(p)] for p in data["phases"]],
            None,
        ),  # fmt: skip
        _ins_and_outs_html(data),
        "<h3>Schedule</h3>",
        table_html(
            [[e["clock"] or f"h {e['hour']:g}", e["phase"], e["action"]] for e in data["schedule"]],
            ["Clock", "Phase", "What to do"],
        ),
        "<h3>Hourly record (fill in)</h3>",
        table_html(
            [
                [clock_time(start, h) or f"h {h}", f"{h}", _planned_at(data["phases"], h)]
                + [""] * len(NURSE_COLUMNS)
                for h in hours
            ],
            ["Clock", "Hour", "Planned", *NURSE_COLUMNS],
            padding=6,  # room to write by hand
        ),
        "<h3>Labels</h3>",
        _labels(data, str(name), start),
        "<h3>Findings</h3>",
        table_html(
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
        sources_html(data["provenance"], data.get("sources") or {}),
        "</body></html>",
    ]
    return "".join(parts)


def sources_html(provenance: list[dict], citations: dict[str, str]) -> str:
    """Footnotes: every species value used with its basis, and the publications cited."""
    used = table_html(
        [
            [
                v.get("label") or v["parameter"],
                f"{v['value']} {v['unit']}",
                "memory — unverified" if v["basis"] == "memory" else v["basis"],
                v["source_id"] or "—",
            ]
            for v in provenance
        ],
        ["Value", "Amount", "Basis", "Source"],
    )
    cited = "".join(
        f"<li>{escape(source_id)}: {escape(citation)}</li>"
        for source_id, citation in citations.items()
    )
    return (
        "<h3>Sources of the species values used</h3>"
        + used
        + (f"<ul>{cited}</ul>" if cited else "")
    )


def maintenance_text(data: dict) -> str:
    """The maintenance line of a plan's JSON; in ins-and-outs mode it says it is not given."""
    m = data["maintenance"]
    text = f"{q(m['ml_per_day'], 'mL/day')} ({q(m['ml_per_h'], 'mL/h')}) — {m['method']}: "
    io = data.get("ins_and_outs")
    return text + m["formula"] + (f"; {maintenance_not_given(io['period_h'])}" if io else "")


def first_24h_text(data: dict) -> str:
    """The volume of hours 0–24; in ins-and-outs mode, which periods that covers."""
    end = max(p["end_h"] for p in data["phases"])
    io = data.get("ins_and_outs")
    covers = planned_so_far(end, io["period_h"] if io else None)
    so_far = f" ({covers})" if covers else ""
    return q(data["total_ml_first_24h"], "mL") + so_far


INS_AND_OUTS_HEADER = ("Period", "Urine", "Other losses", "Insensible", "Next rate")


def ins_and_outs_rows(data: dict) -> list[list[str]]:
    """The ins-and-outs period table of a plan's JSON as text (sheet and CLI)."""
    return [
        [f"h {r['start_h']:g}–{r['end_h']:g}", q(r["urine_ml"], "mL"),
         q(r["other_losses_ml"], "mL"), q(r["insensible_ml"], "mL"),
         q(r["next_rate_ml_per_h"], "mL/h")]
        for r in data["ins_and_outs"]["periods"]
    ]  # fmt: skip


def _ins_and_outs_html(data: dict) -> str:
    io = data.get("ins_and_outs")
    if not io:
        return ""
    rows = ins_and_outs_rows(data) or [["nothing measured yet", "", "", "", ""]]
    return f"<h3>Ins and outs (every {io['period_h']:g} h; Côté 2020)</h3>" + table_html(
        rows, list(INS_AND_OUTS_HEADER)
    )


def _phase_text(p: dict) -> str:
    span = f"h {p['start_h']:g}–{p['end_h']:g}"
    if p["mode"] == "continuous":
        return f"{span}: {q(p['rate_ml_per_h'], 'mL/h')}, {q(p['volume_ml'], 'mL')}"
    drawn = _drawn(p)
    return (
        f"{span}: {_dose_ml(p)} every {p['interval_h']:g} h × {p['doses']}, "
        f"{sites_text(drawn.sites)} of {q(drawn.ml_per_site, 'mL', decimals=2)}"
    )


def _labels(data: dict, name: str, start) -> str:  # noqa: ANN001
    """One label per bag or syringe: patient, fluid with additives, rate, start and discard."""
    cells = []
    weight = patient_weight_text(data)
    for p in data["phases"]:
        fluid = p.get("fluid") or data["fluid"]["name"]
        rate = (
            q(p["rate_ml_per_h"], "mL/h")
            if p["mode"] == "continuous"
            else f"{_dose_ml(p)} per dose"
        )
        begin = clock_time(start, p["start_h"]) or f"h {p['start_h']:g}"
        discard = clock_time(start, p["start_h"] + DISCARD_AFTER_H) or (
            f"h {p['start_h'] + DISCARD_AFTER_H:g}"
        )
        cells.append(
            "<td>"
            + "<br>".join(
                escape(text)
                for text in (
                    name,
                    f"{data['species_name']}, {weight}",
                    fluid,
                    f"{p['kind']}: {rate} {p['route'].upper()}",
                    f"start {begin} · discard by {discard}",
                )
            )
            + "</td>"
        )
    return "<table cellspacing='4'><tr>" + "".join(cells) + "</tr></table>"


def plan_sheet_html(
    plan: Plan, *, acknowledged: dict[str, str] | None = None, ready: bool = False,
    patient: dict | None = None,
) -> str:  # fmt: skip
    """The sheet for a plan object (the window's path to :func:`sheet_html`)."""
    return sheet_html(plan_dict(plan), patient=patient, acknowledged=acknowledged, ready=ready)
