"""The treatment sheet (HTML), built from the plan's JSON so the window, the CLI's JSON
and ``vetfluid sheet PLAN.json`` print the same thing.

Sections: patient header, cautions, plan summary, the record on the clock with columns
the nurse fills in (one row an hour, or one per dose for divided doses; what to watch by
taxon), one label per bag or syringe used (:mod:`vetfluid.printouts.labels`), findings
with the reasons given, and footnotes naming the source of every species value used. The
title (patient or a line for the name, species, weight, date) heads every printed page.
Values recalled from memory say "memory — unverified" in words, so the marking survives
black-and-white print. Every text is escaped: a patient called "<b>Rex</b>" prints as
those characters. Numbers are formatted the safe way.
"""

from __future__ import annotations

import math
import re
from collections.abc import Callable
from datetime import date, datetime, time, timedelta
from html import escape

from vetfluid.common.cautions import CAUTIONS
from vetfluid.common.errors import InputError
from vetfluid.common.formatting import entered_number, format_number
from vetfluid.common.formatting import format_quantity as q
from vetfluid.common.units import preferred_weight_unit, weight_text
from vetfluid.physiology.delivery import DrawnUpDose, drawn_up_dose
from vetfluid.physiology.electrolytes import SodiumSummary, sodium_text
from vetfluid.physiology.hydration import RETIRED_FINDINGS, load_findings
from vetfluid.physiology.ins_and_outs import maintenance_not_given, planned_so_far
from vetfluid.planning.plan import Plan
from vetfluid.planning.schedule import (
    DIURETIC_ROUTE_WORDS,
    clock_time,
    route_text,
    sites_text,
    spread_text,
)
from vetfluid.printouts import labels as containers
from vetfluid.records.serialize import plan_dict
from vetfluid.tables.species import load_table

SEVERITY_WORDS = {"info": "Note", "soft": "Warning", "hard": "HARD LIMIT"}
# Routes and devices as the trade writes them (the plan's JSON keeps its short ids).
DEVICE_WORDS = {
    "pump": "infusion pump",
    "gravity": "gravity drip",
    "syringe": "syringe pump",
    "divided": "divided boluses",
}
# What the nurse fills in: how the fluid went in (a rate set and the volume given; a divided
# dose's volume and the sites used), what to watch by taxon (the columns for
# reptiles and birds: common practice, no source), and who did it.
DELIVERY_COLUMNS = {
    "continuous": ("Rate set", "Volume given"),
    "divided": ("Volume given", "Sites"),
}
TAXON_COLUMNS = {
    "mammal": ("Weight", "HR", "RR", "MM / CRT", "Urine"),
    "reptile": ("Body or encl. °C", "Weight", "Urates / faeces", "Demeanour"),
    "bird": ("Weight", "Droppings", "Respiratory effort"),
}
NURSE_COLUMNS = (*DELIVERY_COLUMNS["continuous"], *TAXON_COLUMNS["mammal"], "Initials")
# A line to write on where no name was given (never a placeholder that reads as a name).
NAME_LINE = "Name: ______________________"
DATE_LINE = "date: ____________"
LABELS_PER_ROW = 3  # wide enough to read a fluid's name with its additives
# Rows of labels per page (a row is at most about 11 lines of 9 pt: four fit an A4 or
# Letter page); the labels start on a page of their own, so none is split by a page break.
LABEL_ROWS_PER_PAGE = 4
# 20 % w/v mannitol holds 0.2 g/mL (the strength species_data/diuretics.csv's dosing notes
# give, kirk_aki): grams ÷ 0.2 = mL.
MANNITOL_G_PER_ML = 0.2
STYLE = (
    "body { font-family: sans-serif; font-size: 9pt; } "
    "table { border-collapse: collapse; } td, th { border: 1px solid black; padding: 2px; }"
)


def route_and_device_text(data: dict) -> str:
    """How the plan is given, as the window says it: ``IV, infusion pump``."""
    return f"{route_text(data['route'])}, {DEVICE_WORDS.get(data['device'], data['device'])}"


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


def table_html(
    rows: list[list[str] | str],
    header: list[str] | None,
    *,
    padding: int = 2,
    widths: dict[str, int] | None = None,
) -> str:
    """A table of text (escaped). A row that is one string is a heading across the whole
    table (a new day in the hourly record); ``widths``: a header's share of the width, %."""
    widths = widths or {}
    cells = "".join(
        f"<th align='left'{f' width={widths[h]}%' if h in widths else ''}>{escape(h)}</th>"
        for h in header or ()
    )
    head = f"<tr>{cells}</tr>" if header else ""
    span = max((len(r) for r in [header or [], *rows] if not isinstance(r, str)), default=1)
    body = "".join(
        f"<tr><td colspan='{span}'><b>{escape(row)}</b></td></tr>"
        if isinstance(row, str)
        else "<tr>" + "".join(f"<td>{escape(c)}</td>" for c in row) + "</tr>"
        for row in rows
    )
    return f"<table width='100%' cellspacing='0' cellpadding='{padding}'>{head}{body}</table>"


def _start(data: dict) -> time | None:
    start = (data.get("request") or {}).get("start_time")
    if not start:
        clocks = [e["clock"] for e in data["schedule"] if e.get("clock")]
        return datetime.strptime(clocks[0][:5], "%H:%M").time() if clocks else None
    return datetime.strptime(start, "%H:%M").time()


WEEKDAYS = ("Mon", "Tue", "Wed", "Thu", "Fri", "Sat", "Sun")
MONTHS = ("Jan", "Feb", "Mar", "Apr", "May", "Jun", "Jul", "Aug", "Sep", "Oct", "Nov", "Dec")


def date_text(day: date, *, year: bool = True) -> str:
    """A date no reader can take the wrong way round: ``Tue 1 Dec 2026`` (English names,
    whatever the locale; 01/12 is 1 December to some and 12 January to others)."""
    text = f"{WEEKDAYS[day.weekday()]} {day.day} {MONTHS[day.month - 1]}"
    return f"{text} {day.year}" if year else text


def _start_date(data: dict) -> date | None:
    """The date of hour 0 in a plan's JSON; a date that is not YYYY-MM-DD is refused."""
    day = (data.get("request") or {}).get("start_date")
    if not day:
        return None
    try:
        return date.fromisoformat(day)
    except (TypeError, ValueError):
        raise InputError(
            "the start date is not a date", field="start_date", value=day, fix="YYYY-MM-DD"
        ) from None


def sheet_clock(start: time | None, day: date | None, hour: float) -> str:
    """The clock of an hour of the plan: ``20:00``; on a later day ``00:00 (+1 d, Wed 2
    Dec)`` when the date of hour 0 is known (the window's ``(+1 d)`` with the date it
    means), else ``00:00 (+1 d)``; without a start time ``h 16``."""
    if start is None:
        return f"h {hour:g}"
    if day is None:
        return clock_time(start, hour) or f"h {hour:g}"
    moment = datetime.combine(day, start) + timedelta(hours=hour)
    days = (moment.date() - day).days
    later = f" (+{days} d, {date_text(moment.date(), year=False)})" if days else ""
    return moment.strftime("%H:%M") + later


def hour_zero_text(data: dict) -> str:
    """When hour 0 is, with a blank to write in what was not entered."""
    start, day = _start(data), _start_date(data)
    if start is None:
        return "Hour 0: clock time not entered — write it here: ____________"
    if day is None:
        return f"Hour 0: {start:%H:%M}, date not entered — write it here: ____________"
    return f"Hour 0: {date_text(day)}, {start:%H:%M}"


# A resuscitation bolus after the first is given only if the patient is still poorly
# perfused when reassessed (vetfluid.planning.schedule words it so); the sheet says it wherever it
# lists such a bolus, so none reads as routine.
CONDITIONAL = "only if still poorly perfused at reassessment"


def bolus_numbers(phases: list[dict]) -> dict[int, int]:
    """Each resuscitation bolus's number (1, 2, …) by its index in ``phases``, counted as
    the schedule counts them; a number above 1 is a bolus given only if still needed."""
    numbers: dict[int, int] = {}
    for index, p in enumerate(phases):
        if p["kind"] == "resuscitation" and p["mode"] == "continuous":
            numbers[index] = len(numbers) + 1
    return numbers


def _conditional(phases: list[dict], index: int) -> bool:
    return bolus_numbers(phases).get(index, 1) > 1


def _planned_at(phases: list[dict], hour: float, start: time | None) -> str:
    """What the schedule plans for the hour starting at ``hour``: each rate that runs in
    it (from when, if it starts within the hour), each bolus in the hour it starts (later
    ones only if still poorly perfused; an hour it runs on into says it is still
    running, so no bolus is read as due twice) and each divided dose due."""
    numbers = bolus_numbers(phases)
    parts = []
    for index, p in enumerate(phases):
        if p["mode"] == "continuous" and p["start_h"] < hour + 1 and p["end_h"] > hour:
            rate = q(p["rate_ml_per_h"], "mL/h")
            if index in numbers:
                number = numbers[index]
                if p["start_h"] < hour:  # started in an earlier hour, listed there: once only
                    until = clock_time(start, p["end_h"]) or "h " + format(p["end_h"], "g")
                    name = "bolus" if number == 1 else f"bolus {number} ({CONDITIONAL})"
                    parts.append(f"{name} still running until {until} ({rate})")
                    continue
                parts.append(_bolus_text(p, number))
                continue
            if p["start_h"] > hour:
                when = clock_time(start, p["start_h"])
                rate = f"from {when[:5] if when else 'h ' + format(p['start_h'], 'g')}: {rate}"
            parts.append(rate)
        elif p["mode"] == "intermittent":
            due = [
                p["start_h"] + i * p["interval_h"]
                for i in range(p["doses"])
                if hour <= p["start_h"] + i * p["interval_h"] < hour + 1
            ]
            parts += [f"dose {_dose_ml(p)}" for _ in due]
    return "; ".join(parts) or "—"


DOSE_WORDS = ("drug", "unit", "route", "amount_unit")
DOSE_FIGURES = ("dose", "amount", "end_h")


def diuretic_line(dose: dict, clock: Callable[[float], str]) -> str:
    """One diuretic dose in words, its amount to two significant figures below 1 (0.035 mg,
    0.00035 mg/h: never rounded to 0), an infusion's end on the clock (``until 14:30``),
    mannitol with the mL of its 20 % solution beside the grams (10 g = 50 mL). A plan file
    without the figures keeps the schedule's words."""
    figures = [dose.get(k) for k in DOSE_FIGURES]
    if not all(isinstance(dose.get(k), str) for k in DOSE_WORDS) or not all(
        isinstance(f, int | float) and not isinstance(f, bool) and math.isfinite(f) for f in figures
    ):
        return str(dose["text"])
    drug = str(dose["drug"])
    name = drug[:1].upper() + drug[1:]
    route = str(dose["route"])
    given = (
        f"{entered_number(dose['dose'])} {dose['unit']} "
        f"{DIURETIC_ROUTE_WORDS.get(route, route.upper())}"
    )
    amount = q(dose["amount"], str(dose["amount_unit"]))
    if route == "cri":
        return f"{name} infusion {given} = {amount} until {clock(dose['end_h'])}"
    if dose.get("drug_id") == "mannitol" and dose["amount_unit"] == "g":
        amount += f" ({q(dose['amount'] / MANNITOL_G_PER_ML, 'mL')} of 20 % mannitol)"
    return f"{name} {given} = {amount}"


def _doses_in_order(data: dict) -> list[dict]:
    """The diuretic doses by their hour, as the schedule lists them (a stable sort)."""
    return sorted(data.get("diuretics") or [], key=lambda d: d["start_h"])


def _bolus_text(p: dict, number: int) -> str:
    """A bolus where it starts: ``bolus 360 mL in 15 min (1440 mL/h)``; a later one only if
    still poorly perfused."""
    minutes = (p["end_h"] - p["start_h"]) * 60
    rate = q(p["rate_ml_per_h"], "mL/h")
    bolus = f"{q(p['volume_ml'], 'mL')} in {minutes:.0f} min ({rate})"
    return f"bolus {bolus}" if number == 1 else f"bolus {number} ({CONDITIONAL}): {bolus}"


def _diuretics_at(
    data: dict, hour: float, clock: Callable[[float], str], *, until: float | None = None
) -> list[str]:
    """The diuretic doses given from ``hour`` up to ``until`` (the next hour when not
    given; an infusion where it starts), each with its own clock time, so a dose at half
    past stands in its hour's row as ``09:30: Furosemide …``."""
    end = hour + 1 if until is None else until
    return [
        f"{clock(d['start_h'])}: {diuretic_line(d, clock)}"
        for d in _doses_in_order(data)
        if hour <= d["start_h"] < end
    ]


def diuretics_text(data: dict, clock: Callable[[float], str]) -> str | None:
    """Every diuretic dose with its clock time, or None when there is none."""
    doses = _doses_in_order(data)
    return "; ".join(f"{clock(d['start_h'])}: {diuretic_line(d, clock)}" for d in doses) or None


def _schedule_rows(data: dict, clock: Callable[[float], str]) -> list[list[str]]:
    """The schedule on the clock; its diuretic entries in the sheet's words
    (:func:`diuretic_line`), in the order the schedule lists them."""
    doses = iter(_doses_in_order(data))
    rows = []
    for e in data["schedule"]:
        action = e["action"]
        if e["phase"] == "diuretic":
            dose = next(doses, None)
            if dose is not None and dose["start_h"] == e["hour"]:
                action = diuretic_line(dose, clock)
        rows.append([clock(e["hour"]), e["phase"], action])
    return rows


def taxon(data: dict) -> str:
    """ "bird", "reptile" or "mammal": the species' group in the species table (a species
    this vetfluid does not know prints the mammal columns, as every sheet did before)."""
    try:
        return load_table().taxon_class(str(data.get("species_id")))
    except KeyError:
        return "mammal"


def divided(data: dict) -> bool:
    """Whether the plan is given as divided doses (rows per dose, not per hour)."""
    return any(p["mode"] == "intermittent" for p in data["phases"])


def nurse_columns(data: dict) -> tuple[str, ...]:
    """The columns the nurse fills in, by how the plan is given and the patient's taxon."""
    mode = "divided" if divided(data) else "continuous"
    return (*DELIVERY_COLUMNS[mode], *TAXON_COLUMNS[taxon(data)], "Initials")


def _day_heading(start: time | None, day: date | None, hour: float, last: date | None) -> str:
    """A heading with the date where a new day begins ("" when the day is the same)."""
    if start is None or day is None:
        return ""
    moment = datetime.combine(day, start) + timedelta(hours=hour)
    if moment.date() == last:
        return ""
    days = (moment.date() - day).days
    return f"{date_text(moment.date())}" + (f" (+{days} d)" if days else "")


def _soak_hours(data: dict) -> set[float]:
    """The hours of the soaks the schedule records (an adjunct, not fluid given)."""
    return {float(e["hour"]) for e in data.get("schedule") or () if e.get("phase") == "soak"}


def _row_times(data: dict) -> list[float]:
    """The times of a divided plan's rows: each dose, each continuous phase's start (a
    bolus), each diuretic dose and each soak."""
    times = {h for p in data["phases"] if p["mode"] == "intermittent"
             for h in containers.dose_hours(p)}  # fmt: skip
    times |= {p["start_h"] for p in data["phases"] if p["mode"] == "continuous"}
    times |= {d["start_h"] for d in data.get("diuretics") or []}
    times |= _soak_hours(data)
    return sorted(times)


def _hourly_rows(
    data: dict, hours: range, start: time | None, day: date | None
) -> list[list[str] | str]:
    """The record the nurse fills in: clock (``00:30 (+1 d)`` as the window gives it), hour,
    what is planned, blanks; one row an hour, or for divided doses one row per dose time;
    when the date of hour 0 is known, a heading with the date where each new day begins."""

    def clock(hour: float) -> str:
        return sheet_clock(start, day, hour)

    times = _row_times(data) if divided(data) else [float(h) for h in hours]
    blanks = [""] * len(nurse_columns(data))
    rows: list[list[str] | str] = []
    last: date | None = None
    for h in times:
        heading = _day_heading(start, day, h, last)
        if heading:
            rows.append(heading)
            last = (datetime.combine(day, start) + timedelta(hours=h)).date()  # type: ignore[arg-type]
        if divided(data):  # each dose time its own row: the doses given at that very time
            fluids_planned = _planned_at_time(data["phases"], h)
            given = _diuretics_at(data, h, clock, until=h + 1e-9)
        else:
            fluids_planned = _planned_at(data["phases"], h, start)
            given = _diuretics_at(data, h, clock)
        soak = ["soak (not counted as fluid given)"] if h in _soak_hours(data) else []
        planned = "; ".join([p for p in (fluids_planned,) if p != "—"] + given + soak) or "—"
        rows.append([clock_time(start, h) or f"h {h:g}", f"{h:g}", planned, *blanks])
    return rows


def _planned_at_time(phases: list[dict], hour: float) -> str:
    """What a divided plan gives at ``hour``: each dose due then, as drawn up, and each
    continuous phase (a bolus) that starts then."""
    parts = []
    for index, p in enumerate(phases):
        if p["mode"] == "intermittent":
            for due in containers.dose_hours(p):
                if abs(due - hour) < 1e-9:
                    drawn = _drawn(p)
                    parts.append(
                        f"dose {_dose_ml(p)} {route_text(p['route'])}: "
                        f"{spread_text(p['route'], drawn)}"
                    )
        elif abs(p["start_h"] - hour) < 1e-9:
            number = bolus_numbers(phases).get(index)
            parts.append(
                _bolus_text(p, number) if number else f"set {q(p['rate_ml_per_h'], 'mL/h')}"
            )
    return "; ".join(parts) or "—"


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


FLAG_WORDS = (
    ("renal_disease", "renal disease"),
    ("cardiac_disease", "cardiac disease"),
    ("neonate", "neonate"),
    ("anaesthesia", "under anaesthesia"),
)


def finding_words(finding_id: str) -> str:
    """A clinical finding as the findings table words it ("Mucous membranes possibly dry",
    ``hydration.load_findings``); one an earlier vetfluid split, as it read then
    (``hydration.RETIRED_FINDINGS``); one this vetfluid does not know, said to be unknown
    (a plan file from elsewhere still prints)."""
    known = load_findings().get(finding_id)
    if known is not None:
        return known.label
    if finding_id in RETIRED_FINDINGS:
        return RETIRED_FINDINGS[finding_id][0]
    return f"a finding this vetfluid does not know (“{finding_id}”)"


def _dehydration_input(data: dict, request: dict) -> str:
    """The dehydration %, and whether it was entered or is an unconfirmed estimate; the
    findings in words (their ids are for files)."""
    percent = data["dehydration_percent"]
    estimate = data.get("dehydration_estimate")
    words = "; ".join(finding_words(str(f)) for f in estimate["findings"]) if estimate else ""
    band = ""
    if estimate and estimate.get("percent_low") is not None:
        band = f"{estimate['percent_low']:g}–{estimate['percent_high']:g} % from findings ({words})"
    elif estimate:  # a reptile's signs: no published band
        band = f"signs with no published % band ({words})"
    if "dehydration_percent" not in request:  # a file without the request
        return f"{percent:g} % (whether entered or estimated is not in this plan file)"
    if request["dehydration_percent"] is not None:
        if estimate and estimate.get("percent_low") is None:
            return f"{percent:g} %, entered (signs: {words})"
        return f"{percent:g} %, entered" + (f" (findings suggested {band})" if band else "")
    if estimate and estimate.get("percent_low") is None:
        return f"NOT ENTERED: {band}; the dehydration % must be entered"
    if estimate:
        return f"{percent:g} %, ESTIMATED {band}, NOT CONFIRMED by the clinician"
    return f"{percent:g} % (none entered and no findings given)"


def patient_inputs_rows(data: dict) -> list[list[str]]:
    """What was entered about the patient, as the plan's JSON carries it: the flags, an
    ectotherm's body temperature, dehydration (entered, or estimated and not confirmed),
    ongoing losses and the labs entered (only those)."""
    request = data.get("request") or {}
    flags = [words for key, words in FLAG_WORDS if request.get(key)]
    rows = [["Flags", ", ".join(flags) if flags else "none (renal, cardiac, neonate, anaesthesia)"]]
    age = request.get("age_weeks")
    if isinstance(age, int | float) and not isinstance(age, bool):
        rows.append(["Age", f"{entered_number(age)} weeks"])
    temperature = request.get("body_temp_c")
    if temperature is not None:
        factor = (data.get("maintenance") or {}).get("temperature_factor")
        scaled = (
            f"; maintenance scaled × {format_number(factor)} for this temperature"
            if factor is not None and factor != 1
            else ""
        )
        rows.append(["Body temperature", f"{entered_number(temperature)} °C{scaled}"])
    rows.append(["Dehydration", _dehydration_input(data, request)])
    if request.get("losses_ml_per_day"):
        rows.append(["Ongoing losses", f"{entered_number(request['losses_ml_per_day'])} mL/day"])
    labs = [
        f"{label} {entered_number(request[key])}{unit}"
        for key, label, unit in (
            ("serum_na", "Na", " mmol/L"),
            ("serum_k", "K", " mmol/L"),
            ("usg", "USG", ""),
            ("urine_osmolality", "urine osmolality", " mOsm/kg"),
            ("pcv_percent", "PCV", " %"),
            ("total_solids_g_per_dl", "TS", " g/dL"),
        )
        if request.get(key) is not None
    ]
    rows.append(["Labs", " · ".join(labs) if labs else "none entered"])
    return rows


def sodium_line(data: dict) -> str:
    """The sodium line of a plan's JSON, as the window and the CLI give it."""
    sodium = data.get("sodium")
    return sodium_text(SodiumSummary(**sodium)) if sodium else "no serum Na entered"


def potassium_text(data: dict) -> str:
    """The potassium line of a plan's JSON, as the window gives it: KCl added and how it
    was chosen, the K in the bag, and mmol/kg/h at the fastest rate against its ceiling."""
    k = data.get("potassium")
    if not k:
        return "no serum K entered, no KCl added"
    return (
        f"{q(k['kcl_mmol_per_l'], 'mmol/L')} KCl added ({k['added_by']}): "
        f"K {q(k['bag_k_mmol_per_l'], 'mmol/L')} in the bag; "
        f"{q(k['peak_mmol_per_kg_per_h'], 'mmol/kg/h')} at the fastest rate "
        f"({q(k['peak_rate_ml_per_h'], 'mL/h')}; "
        f"ceiling {q(k['ceiling_mmol_per_kg_per_h'], 'mmol/kg/h')})"
    )


def additive_lines(data: dict, phase: dict) -> list[str]:
    """What was added to a phase's bag, by its strength in the bag (``K 31.6 mmol/L in the
    bag (KCl 28 mmol/L added)``), beside the mL of concentrate in the fluid's name.
    Resuscitation boluses run the fluid with nothing added."""
    fluid = data["fluid"]
    if (phase.get("fluid") or fluid["name"]) != fluid["name"]:
        return []
    lines = []
    if phase.get("kcl_mmol_per_l"):
        lines.append(
            f"K {q(fluid['k_mmol_per_l'], 'mmol/L')} in the bag "
            f"(KCl {q(phase['kcl_mmol_per_l'], 'mmol/L')} added)"
        )
    dextrose = fluid.get("dextrose_g_per_l")
    if (data.get("request") or {}).get("dextrose_percent") and dextrose is not None:
        lines.append(f"dextrose {q(dextrose / 10.0, '%')} in the bag")  # g/L → % w/v
    return lines


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
    start, day = _start(data), _start_date(data)

    def clock(hour: float) -> str:
        return sheet_clock(start, day, hour)

    end = max(p["end_h"] for p in data["phases"])
    hours = range(int(math.ceil(end)))
    name = " ".join(str(patient.get("name") or "").split()) or NAME_LINE  # one line
    parts = [
        f"<html><head><title>{escape(page_line(data, name))}</title>"
        f"<style>{STYLE}</style></head><body>",
        f"<h2>Fluid treatment sheet — {escape(str(name))}</h2>",
        "<p>"
        + escape(
            f"{data['species_name']}, {patient_weight_text(data)}"
            + "".join(f" · {k}: {v}" for k, v in patient.items() if k != "name" and v)
        )
        + f"<br>{escape(hour_zero_text(data))}"
        + f"<br>Status: {'marked ready' if ready else 'NOT marked ready'}</p>",
        _blocked_html(data),
        "<p><b>Cautions:</b> " + escape(" ".join(CAUTIONS)) + "</p>",
        "<h3>Patient inputs</h3>",
        table_html(patient_inputs_rows(data), None),
        "<h3>Plan</h3>",
        table_html(
            [
                ["Maintenance", maintenance_text(data)],
                [
                    "Dehydration",
                    f"{data['dehydration_percent']:g} % → deficit {q(data['deficit_ml'], 'mL')}",
                ],
                ["Fluid", data["fluid"]["name"]],
                ["Potassium", potassium_text(data)],
                ["Sodium", sodium_line(data)],
                ["Route", route_and_device_text(data)],
                ["First 24 h", first_24h_text(data)],
            ]
            + ([["Diuretics", diuretics_text(data, clock)]] if data.get("diuretics") else [])
            + [
                [
                    f"Phase: {p['kind']}",
                    _phase_text(p)
                    + (
                        f" — bolus {bolus_numbers(data['phases'])[i]}, {CONDITIONAL}"
                        if _conditional(data["phases"], i)
                        else ""
                    ),
                ]
                for i, p in enumerate(data["phases"])
            ],
            None,
        ),  # fmt: skip
        _ins_and_outs_html(data),
        "<h3>Schedule</h3>",
        table_html(_schedule_rows(data, clock), ["Clock", "Phase", "What to do"]),
        f"<h3>{'Record of each dose' if divided(data) else 'Hourly record'} (fill in)</h3>",
        table_html(
            _hourly_rows(data, hours, start, day),
            ["Clock", "Hour", "Planned", *nurse_columns(data)],
            padding=6,  # room to write by hand
            widths={"Clock": 13, "Planned": 22, "Demeanour": 11, "Initials": 8},
        ),
        "<h3 style='page-break-before: always'>Labels</h3>",
        _labels(data, str(name), clock, ready=ready),
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


# A page's head line keeps the species, weight and date in view: a longer name is cut.
PAGE_NAME_CHARS = 40


def page_line(data: dict, name: str) -> str:
    """What heads every printed page (the sheet's title): the patient's name (or a line to
    write it on; one line, cut at :data:`PAGE_NAME_CHARS`), species, weight and the date of
    hour 0 (or a line for it)."""
    day = _start_date(data)
    when = date_text(day) if day is not None else DATE_LINE
    name = " ".join(str(name or "").split())
    if len(name) > PAGE_NAME_CHARS:
        name = name[: PAGE_NAME_CHARS - 1].rstrip() + "…"
    return f"{name or NAME_LINE} · {data['species_name']}, {patient_weight_text(data)} · {when}"


# Characters no file name may hold on Windows, macOS or Linux, and control characters.
UNSAFE_IN_FILE_NAMES = re.compile(r'[\\/:*?"<>|\x00-\x1f\x7f]')


def sheet_file_name(data: dict, name: str) -> str:
    """The file a printed sheet is proposed as: ``Rex 2026-12-01 fluid sheet.pdf`` (the
    species where no name was given, no date where hour 0 has none); characters a file
    name cannot hold become ``-``."""
    who = UNSAFE_IN_FILE_NAMES.sub("-", " ".join(str(name).split()))[:60].strip(" .")
    who = who or UNSAFE_IN_FILE_NAMES.sub("-", data["species_name"])
    day = _start_date(data)
    return f"{who} {day.isoformat()} fluid sheet.pdf" if day else f"{who} fluid sheet.pdf"


def _amount(value: dict) -> str:
    """A species value with its unit, the safe way (``20 kg``, not ``20.0 kg``); a yes/no
    value as ``yes`` or ``no``."""
    number = value["value"]
    if isinstance(number, bool):
        return "yes" if number else "no"
    if isinstance(number, int | float):
        return f"{entered_number(number)} {value['unit']}"
    return f"{number} {value['unit']}"


def sources_html(provenance: list[dict], citations: dict[str, str]) -> str:
    """Footnotes: every species value used with its basis, and the publications cited."""
    used = table_html(
        [
            [
                v.get("label") or v["parameter"],
                _amount(v),
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
    phases = data["phases"]
    maybe = sum(
        p["rate_ml_per_h"] * max(0.0, min(24.0, p["end_h"]) - p["start_h"])
        for i, p in enumerate(phases)
        if _conditional(phases, i)
    )
    if maybe > 0:
        so_far += f", of which {q(maybe, 'mL')} in boluses given {CONDITIONAL}"
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
        f"{spread_text(p['route'], drawn)}"
    )


def _rate_text(p: dict) -> str:
    """A continuous phase's rate as it is set: a syringe pump's to 0.01 mL/h below 10 mL/h
    (as the schedule gives it), any other to the safe figures."""
    rate = p["rate_ml_per_h"]
    if p.get("syringe_fills"):
        return q(rate, "mL/h", decimals=2 if rate < 10 else 1)
    return q(rate, "mL/h")


def _label_lines(data: dict, label: containers.Label, clock: Callable[[float], str]) -> list[str]:
    """What one container's label says, below the patient's name, species and weight."""
    p = data["phases"][label.phase_index]
    fluid = containers.base_fluid_name(p.get("fluid") or data["fluid"]["name"])
    size = q(label.container_ml, "mL")
    hang = f" ({q(containers.HANG_LIMIT_H, 'h')} hang limit)" if label.hang_limited else ""
    if label.kind == "dose":
        drawn = _drawn(p)
        per_site = drawn.ml_per_site
        syringe_ml = (data.get("request") or {}).get("syringe_size_ml") or 0
        syringes = (
            "1 mL syringe per site (0.01 mL marks)" if per_site < 1
            else f"{math.ceil(per_site / syringe_ml - 1e-9)} syringes per site"
            if syringe_ml and per_site > syringe_ml else "one syringe per site"
        )  # fmt: skip
        given = (
            f"{sites_text(drawn.sites)} × {q(per_site, 'mL', decimals=2)} = {_dose_ml(p)} per dose"
        )
        if p["route"] == "oral":  # one go by mouth or tube: no sites
            given = f"{_dose_ml(p)} per dose by mouth or tube, in one go"
            syringes = syringes.replace(" per site", "")
        return [
            fluid,
            f"{p['kind']} · {route_text(p['route'])} dose {label.number} of {label.of}",
            given,
            syringes,
            f"draw up at {clock(label.start_h)}; give at once, then discard the syringes",
        ]
    if label.kind == "stock bag":
        return [
            f"{fluid}, {size} bag",
            *containers.additions(data, p, label.container_ml),
            *additive_lines(data, p),
            f"stock bag {label.number} of {label.of}: the divided doses are drawn from it "
            f"({q(label.give_ml, 'mL', decimals=2)})",
            f"opened {clock(label.start_h)} · discard by {clock(label.discard_h)}{hang}",
        ]
    numbers = bolus_numbers(data["phases"])
    conditional = (
        [f"bolus {numbers[label.phase_index]}: {CONDITIONAL.upper()}"]
        if numbers.get(label.phase_index, 1) > 1
        else []
    )
    if label.kind == "syringe":
        return [
            fluid,
            *additive_lines(data, p),
            f"{p['kind']} · syringe {label.number} of {label.of}: load {q(label.give_ml, 'mL')}",
            f"{_rate_text(p)} {route_text(p['route'])}, syringe pump",
            f"start {clock(label.start_h)} · discard by {clock(label.discard_h)}{hang}",
        ]
    whole = label.give_ml >= label.container_ml - 0.05
    give = f"give {size}" if whole else f"give {q(label.give_ml, 'mL')} of the {size}"
    return [
        f"{fluid}, {size} bag",
        *containers.additions(data, p, label.container_ml),
        *additive_lines(data, p),
        f"{p['kind']} · bag {label.number} of {label.of}: {give}",
        f"{_rate_text(p)} {route_text(p['route'])}",
        *conditional,
        f"start {clock(label.start_h)} · discard by {clock(label.discard_h)}{hang}",
    ]


def labels_note(data: dict) -> str:
    """The rules the labels follow, said under them."""
    chosen = (data.get("request") or {}).get("bag_size_ml")
    size = (
        f"{q(chosen, 'mL')} bags, as chosen"
        if chosen
        else "for each phase the smallest of 250, 500 and 1000 mL that holds what one bag "
        "gives (1000 mL when more)"
    )
    note = (
        f"One label per bag or syringe. Bags: {size}; a new bag where each phase begins. "
        f"Discard a bag or a filled syringe at the latest {q(containers.HANG_LIMIT_H, 'h')} "
        "after it was opened or filled: common practice, no source (the CDC guideline of "
        "2002, O'Grady et al., makes no recommendation for the hang time of IV fluids)."
    )
    if containers.splits_the_schedules_syringes(data):
        note += (
            " The schedule changes the pump's syringe when it is empty; the labels add a "
            "fresh syringe every 24 h before that."
        )
    return note


# A label is cut out and stuck on its bag or syringe: the page's banner does not go with it.
NOT_READY_LABEL = "NOT MARKED READY — check the plan before use"


def _labels(data: dict, name: str, clock: Callable[[float], str], *, ready: bool) -> str:
    """One label per bag or syringe (:func:`vetfluid.printouts.labels.labels`): patient,
    fluid and what to add to this bag, rate or dose, start and discard on the clock
    (``clock``: :func:`sheet_clock` of an hour). A plan with a hard limit gets none; a plan
    not marked ready says so on every label."""
    if blocked(data):
        return (
            f"<p><b>✖ No labels: {BLOCKED_MARK.lower()}.</b> Resolve the hard limits and "
            "print again.</p>"
        )
    who = [escape(name), escape(f"{data['species_name']}, {patient_weight_text(data)}")]
    if not ready:
        who.insert(0, f"<b>{escape(NOT_READY_LABEL)}</b>")
    cells = []
    for label in containers.labels(data):
        what, *middle, when = (escape(t) for t in _label_lines(data, label, clock))
        # the fluid and the times in bold: what a nurse checks first
        lines = [*who, f"<b>{what}</b>", *middle, f"<b>{when}</b>"]
        cells.append("<td width='33%'>" + "<br>".join(lines) + "</td>")
    rows = [cells[i : i + LABELS_PER_ROW] for i in range(0, len(cells), LABELS_PER_ROW)]
    pages = [rows[i : i + LABEL_ROWS_PER_PAGE] for i in range(0, len(rows), LABEL_ROWS_PER_PAGE)]
    tables = [
        "<table width='100%' cellspacing='4'"
        + (" style='page-break-after: always'" if number < len(pages) - 1 else "")
        + ">"
        + "".join("<tr>" + "".join(row) + "</tr>" for row in page)
        + "</table>"
        for number, page in enumerate(pages)
    ]
    return "".join(tables) + f"<p>{escape(labels_note(data))}</p>"


def plan_sheet_html(
    plan: Plan, *, acknowledged: dict[str, str] | None = None, ready: bool = False,
    patient: dict | None = None,
) -> str:  # fmt: skip
    """The sheet for a plan object (the window's path to :func:`sheet_html`)."""
    return sheet_html(plan_dict(plan), patient=patient, acknowledged=acknowledged, ready=ready)


# ---- checking a plan's JSON before printing it (``vetfluid sheet PLAN.json``) -----------------
# A plan file may be edited by hand or damaged; the sheet prints one row per hour and one
# entry per dose, so its size follows these figures. Bounds set by us (no clinical source):
# the longest plan the core builds (60 days, plan.MAX_PLAN_HORIZON_H; 30 pages, about 4 s
# to print) and counts above any plan it builds (at most 500 ins-and-outs periods).
MAX_SHEET_H = 60 * 24.0
MAX_PHASES = 600
MAX_ENTRIES = 5_000  # schedule rows, findings, values used, periods
MAX_DOSES = 2_000  # divided doses over all phases
MAX_TEXT = 5_000  # characters of one text
MAX_DEPTH = 12  # a plan's JSON nests 5 deep

NUMBER, HOUR, TEXT, WHOLE, FLAG, ANY = "number", "hour", "text", "whole", "flag", "any"


def _opt(spec: object) -> tuple:
    return ("optional", spec)


def _list(spec: object, most: int = MAX_ENTRIES) -> tuple:
    return ("list", spec, most)


def _one_of(*words: str) -> tuple:
    return ("one of", words)


TEXT_MAP = ("text map",)
PERIOD_NUMBERS = ("urine_ml", "other_losses_ml", "insensible_ml", "next_rate_ml_per_h")
PERIOD = {k: NUMBER for k in PERIOD_NUMBERS} | {"start_h": HOUR, "end_h": HOUR}
# The keys the sheet reads, with what each must be; other keys (a later vetfluid's) are
# left alone but every number anywhere must be finite.
PLAN_SCHEMA: dict[str, object] = {
    "species_name": TEXT,
    "weight_kg": NUMBER,
    "weight_unit": _opt(TEXT),
    "maintenance": {"ml_per_day": NUMBER, "ml_per_h": NUMBER, "method": TEXT, "formula": TEXT,
                    "temperature_factor": _opt(NUMBER)},
    "dehydration_percent": NUMBER,
    # a reptile's signs have no % band: both ends null (hydration.DehydrationEstimate)
    "dehydration_estimate": _opt({"percent_low": _opt(NUMBER), "percent_high": _opt(NUMBER),
                                  "findings": _list(TEXT)}),
    "deficit_ml": NUMBER,
    "fluid": {"name": TEXT, "k_mmol_per_l": NUMBER, "dextrose_g_per_l": _opt(NUMBER)},
    "route": TEXT,
    "device": TEXT,
    "phases": _list(
        {"kind": TEXT, "mode": _one_of("continuous", "intermittent"), "route": TEXT,
         "start_h": HOUR, "end_h": HOUR, "volume_ml": NUMBER, "fluid": _opt(TEXT),
         "kcl_mmol_per_l": _opt(NUMBER), "rate_ml_per_h": _opt(NUMBER),
         "interval_h": _opt(NUMBER), "doses": _opt(WHOLE), "ml_per_site": _opt(NUMBER),
         "sites_per_dose": _opt(WHOLE)},
        MAX_PHASES,
    ),
    "total_ml_first_24h": NUMBER,
    "schedule": _list({"hour": HOUR, "clock": _opt(TEXT), "phase": TEXT, "action": TEXT}),
    "diuretics": _opt(_list({"start_h": HOUR, "end_h": HOUR, "text": TEXT})),
    "findings": _list({"severity": _one_of(*SEVERITY_WORDS), "message": TEXT, "action": TEXT,
                       "code": TEXT}),
    "hard_limit": _opt(FLAG),
    "provenance": _list({"parameter": TEXT, "value": ANY, "unit": _opt(TEXT), "basis": TEXT,
                         "source_id": _opt(TEXT), "label": _opt(TEXT)}),
    "sources": _opt(TEXT_MAP),
    "potassium": _opt({"kcl_mmol_per_l": NUMBER, "added_by": TEXT, "bag_k_mmol_per_l": NUMBER,
                       "peak_mmol_per_kg_per_h": NUMBER, "peak_rate_ml_per_h": NUMBER,
                       "ceiling_mmol_per_kg_per_h": NUMBER}),
    "sodium": _opt({"serum_na": NUMBER, "tbw_l": NUMBER, "delta_na_per_l": NUMBER,
                    "predicted_change_per_h": NUMBER, "max_change_per_h": NUMBER,
                    "max_rate_ml_per_h": _opt(NUMBER), "peak_change_per_h": _opt(NUMBER),
                    "peak_hour": _opt(NUMBER), "peak_phase": _opt(TEXT),
                    "source_id": _opt(TEXT)}),
    "ins_and_outs": _opt({"period_h": NUMBER, "periods": _list(PERIOD, MAX_PHASES)}),
    "request": _opt(
        {key: _opt(FLAG) for key, _ in FLAG_WORDS}
        | {key: _opt(NUMBER) for key in ("dehydration_percent", "body_temp_c",
                                          "losses_ml_per_day", "serum_na", "serum_k", "usg",
                                          "urine_osmolality", "pcv_percent",
                                          "total_solids_g_per_dl", "dextrose_percent")}
        | {"start_time": _opt(TEXT), "start_date": _opt(TEXT)}
    ),
}  # fmt: skip
CLOSED = ("sodium",)  # read as a whole (SodiumSummary): no other keys


def _refuse(path: str, what: str) -> InputError:
    return InputError(f"must be {what}", field=path, value=None)


def _key(key: str) -> str:
    """A JSON key as a message shows it: a plain name as it is, any other quoted, escaped
    and cut short (one line)."""
    return key if key.isidentifier() and len(key) <= 40 else repr(key)[:40]


def _finite_everywhere(data: object) -> None:
    """Every number in the JSON finite (NaN printed "nan" on a sheet) and no nesting
    deeper than a plan's; walked without recursion."""
    stack: list[tuple[str, object, int]] = [("", data, 0)]
    while stack:
        path, value, depth = stack.pop()
        if depth > MAX_DEPTH:
            raise _refuse(path, f"nested at most {MAX_DEPTH} deep, as a plan is")
        if isinstance(value, dict):
            stack += [
                (f"{path}.{_key(k)}" if path else _key(k), v, depth + 1) for k, v in value.items()
            ]
        elif isinstance(value, list):
            stack += [(f"{path}[{i}]", v, depth + 1) for i, v in enumerate(value)]
        elif isinstance(value, int | float) and not isinstance(value, bool):
            try:
                finite = math.isfinite(value)
            except OverflowError:  # an integer with hundreds of digits
                finite = False
            if not finite:
                raise InputError(
                    "is not finite (NaN, Infinity or a number of hundreds of digits)",
                    field=path, value=None,
                )  # fmt: skip


def _check(path: str, value: object, spec: object) -> None:
    if isinstance(spec, tuple) and spec[0] == "optional":
        if value is not None:
            _check(path, value, spec[1])
    elif spec in (NUMBER, HOUR):
        if isinstance(value, bool) or not isinstance(value, int | float):
            raise _refuse(path, "a number")
        if spec == HOUR and not 0 <= value <= MAX_SHEET_H:
            raise _refuse(path, f"an hour from 0 to {MAX_SHEET_H:g} (the longest plan printed)")
        if abs(value) > 1e12:  # finite, but past any volume, rate or weight a sheet prints
            raise _refuse(path, "a number of at most 1e12")
    elif spec == TEXT:
        if not isinstance(value, str) or len(value) > MAX_TEXT:
            raise _refuse(path, f"text of at most {MAX_TEXT} characters")
    elif spec == WHOLE:
        if isinstance(value, bool) or not isinstance(value, int):
            raise _refuse(path, "a whole number")
    elif spec == FLAG:
        if not isinstance(value, bool):
            raise _refuse(path, "true or false")
    elif spec == ANY:
        if not (value is None or isinstance(value, bool | int | float | str)):
            raise _refuse(path, "a number, true or false, or text")
    elif spec == TEXT_MAP:
        if (
            not isinstance(value, dict)
            or len(value) > MAX_ENTRIES
            or not all(isinstance(v, str) and len(v) <= MAX_TEXT for v in value.values())
        ):
            raise _refuse(path, "a mapping of source ids to citations")
    elif isinstance(spec, tuple) and spec[0] == "one of":
        if value not in spec[1]:
            raise _refuse(path, "one of " + ", ".join(spec[1]))
    elif isinstance(spec, tuple) and spec[0] == "list":
        if not isinstance(value, list) or len(value) > spec[2]:
            raise _refuse(path, f"a list of at most {spec[2]} entries")
        for index, item in enumerate(value):
            _check(f"{path}[{index}]", item, spec[1])
    elif isinstance(spec, dict):
        if not isinstance(value, dict):
            raise _refuse(path, "a mapping")
        for key, inner in spec.items():
            given = value.get(key)
            if given is None and not (isinstance(inner, tuple) and inner[0] == "optional"):
                raise _refuse(f"{path}.{key}", "given")
            _check(f"{path}.{key}", given, inner)
    else:  # pragma: no cover — a schema entry this checker does not know
        raise TypeError(f"unknown schema entry {spec!r}")


def check_plan_json(data: object) -> dict:
    """A plan's JSON checked before printing (``vetfluid sheet``): the keys the sheet
    reads with the right kinds (:data:`PLAN_SCHEMA`), every number finite, hours within
    :data:`MAX_SHEET_H`, phases, entries and doses counted within bounds, so a damaged
    or hand-edited file is refused in one line naming the key instead of printing "nan",
    failing half-way or running away. Returns the data."""
    if not isinstance(data, dict):
        kind = {list: "list", str: "text"}.get(type(data), "value")
        raise InputError(f"it holds a JSON {kind}, not a plan", field=None, value=None)
    _finite_everywhere(data)
    for key, spec in PLAN_SCHEMA.items():
        given = data.get(key)
        if given is None and key not in ("weight_unit", "dehydration_estimate", "hard_limit",
                                          "sources", "potassium", "sodium", "ins_and_outs",
                                          "request"):  # fmt: skip
            raise _refuse(key, "given")
        _check(key, given, spec)
    for key in CLOSED:
        known = PLAN_SCHEMA[key][1]  # type: ignore[index]
        extra = [k for k in data.get(key) or {} if k not in known]
        if extra:
            raise _refuse(f"{key}.{str(extra[0])[:40]}", "left out (not a key of a plan)")
    if not data["phases"]:
        raise _refuse("phases", "at least one phase")
    doses = 0
    for index, phase in enumerate(data["phases"]):
        where = f"phases[{index}]"
        if phase["end_h"] < phase["start_h"]:
            raise _refuse(f"{where}.end_h", "at or after its start_h")
        if phase["mode"] == "continuous":
            _check(f"{where}.rate_ml_per_h", phase.get("rate_ml_per_h"), NUMBER)
            continue
        for key, spec in (("interval_h", NUMBER), ("doses", WHOLE), ("ml_per_site", NUMBER),
                          ("sites_per_dose", WHOLE)):  # fmt: skip
            _check(f"{where}.{key}", phase.get(key), spec)
        if not 0 < phase["interval_h"] <= MAX_SHEET_H:
            raise _refuse(f"{where}.interval_h", f"more than 0 and at most {MAX_SHEET_H:g} h")
        doses += phase["doses"]
        if not 0 <= phase["doses"] or doses > MAX_DOSES:
            raise _refuse(f"{where}.doses", f"from 0 to {MAX_DOSES} over all phases")
    io = data.get("ins_and_outs")
    if io and not 0 < io["period_h"] <= MAX_SHEET_H:
        raise _refuse("ins_and_outs.period_h", f"more than 0 and at most {MAX_SHEET_H:g} h")
    return data
