"""vetfluid-cli: the headless command line (never imports Qt).

Exit codes: 0 a usable answer; 3 the plan was computed but a hard limit was hit,
by the plan or (``course``) by the course predicted from it (the findings say which);
2 invalid input (one line on stderr naming the field, the bad value and the fix).
"""

from __future__ import annotations

import argparse
import json
import os
import sys
from collections.abc import Callable, Sequence
from datetime import date, datetime, time
from typing import TYPE_CHECKING, NoReturn

from vetfluid.common.cautions import CAUTIONS, SHORT_CAUTION
from vetfluid.common.errors import InputError, VetfluidError, printable
from vetfluid.common.formatting import format_number, format_quantity

if TYPE_CHECKING:
    from vetfluid.planning.plan import Plan
    from vetfluid.planning.schedule import Phase

EXIT_OK, EXIT_INPUT, EXIT_HARD_LIMIT = 0, 2, 3


def _exit_codes_text(*, course: bool) -> str:
    """The exit codes as --help gives them (the module docstring's, in words)."""
    hit = "by the plan or by the course predicted from it" if course else "by the plan"
    return (f"Exit codes: 0 a usable answer; 3 a hard limit was hit {hit} (the findings "
            "say which; do not give it as it stands); 2 invalid input (one line on stderr "
            "naming the option, the bad value and the fix).")  # fmt: skip


class _Parser(argparse.ArgumentParser):
    """argparse that reports bad input as one line and exit code 2."""

    def error(self, message: str) -> NoReturn:
        # self.prog is "vetfluid-cli" for the top level, "vetfluid-cli plan" for a command
        self.exit(EXIT_INPUT, f"vetfluid-cli: {printable(message)} — see `{self.prog} --help`\n")


def _number(text: str) -> float:
    """An option's number, read as every number the user types is
    (:func:`vetfluid.common.units.read_number`: digits 0–9, decimal point or comma)."""
    from vetfluid.common.units import read_number

    try:
        return read_number(text, field="number")
    except InputError as exc:
        raise argparse.ArgumentTypeError(f"{exc.message} ({text!r}) — {exc.fix}") from None


def _whole(text: str) -> int:
    """An option's whole number (:func:`vetfluid.common.units.read_whole_number`)."""
    from vetfluid.common.units import read_whole_number

    try:
        return read_whole_number(text, field="number")
    except InputError as exc:
        raise argparse.ArgumentTypeError(f"{exc.message} ({text!r}) — {exc.fix}") from None


def _start_time(text: str) -> time:
    try:
        return datetime.strptime(text, "%H:%M").time()
    except ValueError:
        raise argparse.ArgumentTypeError(f"start time {text!r} must be HH:MM, e.g. 08:30") from None


def _comma_numbers(text: str, *, field: str, what: str, example: str) -> tuple[float, ...]:
    """Numbers typed separated by commas (``0,8,16``), each read as every typed number is
    (:func:`vetfluid.common.units.read_number`). An empty entry (``0,,16``, a comma at
    either end, nothing at all) is refused, never skipped: a number may have been left
    out, and the list without it would be silently another plan."""
    from vetfluid.common.units import read_number

    fix = f"give {what} separated by commas, e.g. {example}"
    if not text.strip():
        raise InputError(f"is empty: it needs {what}", field=field, value=text, fix=fix)
    parts = text.split(",")
    for place, part in enumerate(parts, start=1):
        if not part.strip():
            raise InputError(
                f"entry {place} of {text!r} is empty: a number may have been left out",
                field=field, value=text,
                fix=f"type a number between every two commas and none at either end, "
                f"e.g. {example}",
            )  # fmt: skip
    try:
        return tuple(read_number(part, field=field) for part in parts)
    except InputError as exc:
        raise InputError(f"in {text!r}: {exc.message}", field=field, value=text,
                         fix=fix) from None  # fmt: skip


def _comma_option(what: str, example: str) -> Callable[[str], tuple[float, ...]]:
    """An option's comma list (:func:`_comma_numbers`), refused while the options are read
    (argparse names the option)."""

    def read(text: str) -> tuple[float, ...]:
        try:
            return _comma_numbers(text, field="", what=what, example=example)
        except InputError as exc:
            raise argparse.ArgumentTypeError(f"{exc.message} — {exc.fix}") from None

    return read


_volumes = _comma_option("volumes in mL", "60,45")


def _measured(
    urine: tuple[float, ...], other: tuple[float, ...]
) -> tuple[tuple[float, float], ...]:
    if other and len(other) != len(urine):
        raise InputError(
            "give one other-losses volume per measured urine period",
            field="measured_other_ml", value=other, fix="or leave --measured-other-ml out",
        )  # fmt: skip
    return tuple(zip(urine, other or (0.0,) * len(urine), strict=True))


_diuretic_hours = _comma_option("hours", "0,8,16")


def _diuretics(args: argparse.Namespace) -> tuple[tuple[str, float, str, float, float], ...]:
    """The diuretic options as the request's doses: one dose at each hour of --diuretic-at,
    or an infusion from its first to its second hour. The route of a dose is
    --diuretic-route, or the table's only one for the drug; never assumed."""
    drug, dose, rate, hours = args.diuretic, args.diuretic_dose, args.diuretic_cri, args.diuretic_at
    if drug is None:
        typed = (("--diuretic-dose", dose), ("--diuretic-cri", rate), ("--diuretic-at", hours),
                 ("--diuretic-route", args.diuretic_route))  # fmt: skip
        given = [flag for flag, value in typed if value is not None]
        if given:
            raise InputError(
                f"{', '.join(given)} needs --diuretic ID", field="--diuretic", value=None,
                fix="name the drug, e.g. --diuretic furosemide",
            )  # fmt: skip
        return ()
    if (dose is None) == (rate is None):
        raise InputError(
            "give the dose each time (--diuretic-dose) or an infusion rate (--diuretic-cri)",
            field="--diuretic-dose", value=None,
            fix="e.g. --diuretic-dose 2 --diuretic-at 0,8 (mg/kg; mannitol g/kg)",
        )  # fmt: skip
    if hours is None:
        raise InputError("give the hours it is given at", field="--diuretic-at", value=None,
                         fix="e.g. --diuretic-at 0,8,16 (an infusion: START,END)")  # fmt: skip
    if rate is not None:
        if len(hours) != 2:
            raise InputError(
                "an infusion runs from one hour to another", field="--diuretic-at", value=None,
                fix="give START,END with --diuretic-cri, e.g. --diuretic-at 2,10",
            )  # fmt: skip
        if args.diuretic_route not in (None, "iv"):  # never given by another route unsaid
            raise InputError(
                f"an infusion (--diuretic-cri) runs IV, not {args.diuretic_route.upper()}",
                field="--diuretic-route", value=args.diuretic_route,
                fix="leave --diuretic-route out (or say iv) for the infusion, or give "
                "--diuretic-dose instead of --diuretic-cri for doses by that route",
            )  # fmt: skip
        return ((drug, rate, "cri", hours[0], hours[1]),)
    from vetfluid.tables.diuretics import drug as find_drug

    routes = [r for r in find_drug(drug).routes if r != "cri"]
    route = args.diuretic_route or (routes[0] if len(routes) == 1 else None)
    if route is None:  # never a route assumed: a dragon's SC dose is not an IV one
        raise InputError(
            f"{drug} is on record by {', '.join(r.upper() for r in routes)}: say which",
            field="--diuretic-route", value=None,
            fix=f"add --diuretic-route {' or '.join(routes)}",
        )  # fmt: skip
    return tuple((drug, dose, route, h, h) for h in hours)


def _start_date(text: str) -> date:
    try:
        return date.fromisoformat(text)
    except ValueError:
        raise argparse.ArgumentTypeError(
            f"start date {text!r} must be YYYY-MM-DD, e.g. 2026-12-02"
        ) from None


def _add_plan_arguments(parser: argparse.ArgumentParser, *, only_given: bool = False) -> None:
    """The patient and plan options shared by `plan` and `course`.

    ``only_given`` leaves the patient and plan options without defaults, so parsing
    yields just the ones typed (to refuse them beside --demo, see :func:`_demo_conflicts`).
    """
    parser.add_argument("--demo", help="plan for a demo patient (see README) instead of --species")
    patient = parser.add_argument_group(
        "the patient and the plan (give these, or --demo for an invented patient, not both)"
    )
    inputs: list[argparse.Action] = []

    def add(*flags: str, **options: object) -> None:
        inputs.append(patient.add_argument(*flags, **options))  # type: ignore[arg-type]

    add("--species", help="species id (see `vetfluid-cli species`)")
    add("--weight", help='body weight with unit, e.g. "20 kg" or "350 g"')
    add("--dehydration", type=_number, help="estimated dehydration, %% of body weight")
    add("--finding", action="append", default=[], help="clinical finding id (repeatable)")
    add("--replace-hours", type=_number, default=24.0, help="period to replace the deficit (h)")
    add("--losses-ml-per-day", type=_number, default=0.0, help="ongoing losses (mL/day)")
    add("--maintenance-method", choices=("linear", "allometric", "energy"))
    add("--fluid", default="lactated_ringers", help="fluid id (see `vetfluid-cli fluids`)")
    add(
        "--shock-fluid", dest="shock_fluid",
        help="fluid id of the resuscitation boluses, when not the plan's fluid",
    )  # fmt: skip
    add(
        "--route", choices=("iv", "cvc", "io", "sc", "icoel", "epicoel", "ip", "oral"),
        help="cvc: a central line; icoel: intracoelomic; epicoel: epicoelomic (chelonians); "
        "ip: intraperitoneal (small rodents); oral: by mouth, crop or stomach tube",
    )  # fmt: skip
    add("--device", choices=("pump", "gravity", "syringe", "divided"))
    add("--drop-factor", type=_number, help="giving set drops/mL (implies a gravity drip)")
    add(
        "--dose-interval",
        type=_number,
        metavar="H",
        help="divided doses every H hours: 6, 8, 12 or 24 (default: the plan chooses)",
    )
    add(
        "--max-sites",
        type=_whole,
        metavar="N",
        help="divided doses in at most N sites each (default: the route's usual most)",
    )
    add(
        "--soaks",
        type=_whole,
        default=0,
        metavar="N",
        help="soaks a day in shallow warm water (chelonians, lizards): recorded, not counted",
    )
    add("--boluses", type=_whole, default=0, help="resuscitation boluses to plan first")
    add("--body-temp-c", type=_number, help="body temperature (ectotherms)")
    add("--serum-na", type=_number, help="serum sodium, mmol/L")
    add("--serum-k", type=_number, help="serum potassium, mmol/L")
    add("--serum-hco3", type=_number, help="serum bicarbonate, mmol/L (followed in the course)")
    add("--usg", type=_number, help="urine specific gravity")
    add("--urine-osm", type=_number, help="urine osmolality, mOsm/kg")
    add("--kcl-mmol-per-l", type=_number, help="KCl to add per litre, by hand")
    add("--dextrose-percent", type=_number, default=0.0, help="dextrose to add, %% w/v")
    add("--start", type=_start_time, help="clock time of hour 0, HH:MM")
    add("--start-date", type=_start_date, help="date of hour 0, YYYY-MM-DD")
    add(
        "--ins-and-outs-period",
        type=_number,
        metavar="H",
        help="plan by ins and outs in periods of H hours (oliguric patients)",
    )
    add(
        "--measured-urine-ml",
        type=_volumes,
        default=(),
        metavar="V1,V2,…",
        help="urine measured over each ins-and-outs period so far, mL",
    )
    add(
        "--measured-other-ml",
        type=_volumes,
        default=(),
        metavar="V1,V2,…",
        help="other measured losses (vomit, diarrhoea, drains) per period, mL",
    )
    add(
        "--loss-type",
        help="what the ongoing losses are: isotonic (the default, when not "
        "known), vomitus, diarrhoea, polyuria or drain",
    )
    add(
        "--renal-output",
        choices=("oliguric", "polyuric"),
        help="with --renal: how the diseased kidney behaves in the course",
    )
    add(
        "--diuretic",
        metavar="ID",
        help="a diuretic: furosemide, hydrochlorothiazide, "
        "spironolactone, mannitol or acetazolamide (doses: species_data/diuretics.csv)",
    )
    add(
        "--diuretic-dose",
        type=_number,
        metavar="X",
        help="the diuretic's dose each time: mg/kg (mannitol: g/kg)",
    )
    add(
        "--diuretic-at",
        type=_diuretic_hours,
        metavar="H1,H2,…",
        help="hours on the plan's clock it is given at (with --diuretic-cri: START,END)",
    )
    add(
        "--diuretic-route",
        choices=("iv", "im", "sc", "po"),
        help="how each dose is given (needed when the drug is on record by several routes)",
    )
    add(
        "--diuretic-cri",
        type=_number,
        metavar="RATE",
        help="furosemide as a constant-rate infusion instead, mg/kg/h, from START to END "
        "of --diuretic-at",
    )
    add("--max-na-change", type=_number, help="maximum Na change, mmol/L/h")
    add("--syringe-ml", type=_number, default=60.0, help="syringe size, mL")
    add(
        "--bag-size",
        type=_number,
        metavar="ML",
        help="bag size, mL: 250, 500 or 1000 (default: by each phase's volume)",
    )
    add("--pcv", type=_number, help="packed cell volume, %% (recorded with the plan)")
    add("--ts", type=_number, help="total solids, g/dL (recorded with the plan)")
    add(
        "--age-weeks",
        type=_number,
        metavar="WEEKS",
        help="age in weeks (puppies and kittens: body water, maintenance, dextrose)",
    )
    for flag in ("cardiac", "renal", "anaesthesia", "neonate"):
        add(f"--{flag}", action="store_true", help=f"patient flag: {flag}")
    parser.add_argument("--json", action="store_true")
    parser.set_defaults(plan_input_flags={a.dest: a.option_strings[0] for a in inputs})
    if only_given:
        for action in inputs:
            action.default = argparse.SUPPRESS


def _parser(*, only_given: bool = False) -> argparse.ArgumentParser:
    """The command line; ``only_given``: see :func:`_add_plan_arguments`."""
    parser = _Parser(
        prog="vetfluid-cli", description="Headless fluid-therapy planning. " + SHORT_CAUTION
    )
    sub = parser.add_subparsers(dest="command", required=True, parser_class=_Parser)

    species = sub.add_parser("species", help="the effective species table with sources")
    species.add_argument("--species", help="show one species only")
    species.add_argument("--json", action="store_true")

    fluids_cmd = sub.add_parser("fluids", help="the fluid library with computed composition")
    fluids_cmd.add_argument("--json", action="store_true")

    plan = sub.add_parser(
        "plan", help="build a fluid plan for one patient", epilog=_exit_codes_text(course=False)
    )
    _add_plan_arguments(plan, only_given=only_given)

    course = sub.add_parser(
        "course", help="body water, weight and Na over the course of a plan",
        epilog=_exit_codes_text(course=True),
    )  # fmt: skip
    _add_plan_arguments(course, only_given=only_given)
    course.add_argument(
        "--bolus-ml-per-kg", type=_number, help="an extra IV bolus at hour 0, mL/kg"
    )
    course.add_argument("--bolus-fluid", default="nacl_0_9", help="fluid id of the extra bolus")
    course.add_argument("--bolus-minutes", type=_number, default=15.0, help="bolus duration, min")
    course.add_argument("--at", default="0,1,4,12,24", help="hours to report, e.g. 0,0.5,2,24")
    course.add_argument("--horizon-h", type=_number, help="hours to simulate (up to 336)")

    chart = sub.add_parser("chart", help="weight-band quick-reference chart for a species")
    chart.add_argument("--species", required=True)
    chart.add_argument("--drop-factor", type=_number, default=20.0)
    chart.add_argument("--bands", type=_whole, default=10)
    chart_format = chart.add_mutually_exclusive_group()
    chart_format.add_argument("--json", action="store_true")
    chart_format.add_argument("--csv", action="store_true")

    sodium = sub.add_parser("sodium", help="predicted serum Na change per litre (Adrogué–Madias)")
    sodium.add_argument("--species", required=True)
    sodium.add_argument("--weight", required=True)
    sodium.add_argument("--serum-na", required=True, type=_number)
    sodium.add_argument("--fluid", required=True)
    sodium.add_argument(
        "--max-na-change", type=_number, help="mmol/L/h (default from the limits table)"
    )
    sodium.add_argument("--json", action="store_true")
    return parser


# ---- commands -----------------------------------------------------------------------------------
def _emit(data: object) -> None:
    json.dump(data, sys.stdout, indent=2, ensure_ascii=False)
    sys.stdout.write("\n")


def _cautions_text() -> str:
    return "\n".join(f"! {c}" for c in CAUTIONS)


def _shown(value: object, basis: str) -> str:
    from vetfluid.common.formatting import table_value_text

    if isinstance(value, bool):
        return "yes" if value else "no"
    return table_value_text(value, basis=basis) if isinstance(value, float) else str(value)


def _basis_mark(basis: str) -> str:
    return {"memory": "[memory — unverified]", "derived": "[derived]"}.get(basis, "")


def _range(v: dict) -> str:
    if v["low"] is None or v["high"] is None:
        return ""
    return f" ({_shown(v['low'], v['basis'])}–{_shown(v['high'], v['basis'])})"


def _origin_words(v: dict, group_names: dict[str, str]) -> str:
    """Where a value comes from, in words: a group by its name ("inherited from the
    reptiles group"), never its id (``group_reptile`` is for the data files)."""
    if v["origin"] != "inherited":
        return v["origin"]
    group = group_names.get(v["defined_on"])
    return f"inherited from the {group.lower()} group" if group else "inherited from a group"


def _group_names() -> dict[str, str]:
    """Row id → common name of every species and taxon group in the table."""
    from vetfluid.tables.species import load_table

    return {sid: row.common_name for sid, row in load_table().species_by_id.items()}


def _value_line(name: str, v: dict, group_names: dict[str, str]) -> str:
    """One species value for a person: value, range, unit, basis, source and origin."""
    mark = f" {_basis_mark(v['basis'])}" if v["basis"] != "published" else ""
    origin = _origin_words(v, group_names)
    source = v["source_id"] or "—"
    return (
        f"  {name:34} {_shown(v['value'], v['basis'])}{_range(v)} {v['unit']}  {v['basis']}{mark}"
        f"  source={source}  ({origin})"
    )


def cmd_species(args: argparse.Namespace) -> int:
    from vetfluid.records.serialize import species_dict
    from vetfluid.tables.species import load_table

    table = load_table()
    data = species_dict(table)
    if args.species:
        table.species(args.species)
        data["species"] = [s for s in data["species"] if s["id"] == args.species]
    if args.json:
        _emit(data)
        return EXIT_OK
    names = {sid: row.common_name for sid, row in table.species_by_id.items()}
    for sp in data["species"]:
        # the id only as what to type: the option that plans this species
        print(f"\n{sp['common_name']} ({sp['scientific_name']}) — {sp['taxon_group']}; "
              f"plan it with --species {sp['id']}")  # fmt: skip
        for name, v in sp["values"].items():
            print(_value_line(name, v, names))
    print("\nSources:")
    for s in data["sources"]:
        print(f"  {s['source_id']:22} {s['citation']}")
    print("\n" + _cautions_text())
    return EXIT_OK


FLUID_COLUMNS = (("Na", "na", 6, 0), ("K", "k", 7, 1), ("Cl", "cl", 6, 0), ("Ca", "ca", 5, 2),
                 ("Mg", "mg", 5, 2), ("dextrose g/L", "dextrose_g_per_l", 13, 0),
                 ("mOsm/L", "osmolarity_mosm_per_l", 8, 0))  # fmt: skip


def cmd_fluids(args: argparse.Namespace) -> int:
    from vetfluid.records.serialize import fluid_dict
    from vetfluid.tables.fluids import load_fluids

    data = [fluid_dict(f) for f in load_fluids().values()]
    if args.json:
        _emit({"fluids": data, "cautions": list(CAUTIONS)})
        return EXIT_OK
    header = "".join(f" {title:>{width}}" for title, _, width, _ in FLUID_COLUMNS)
    name_width = max(len(f["name"]) for f in data)
    print(f"{'fluid':{name_width}}{header}  basis")
    for f in data:
        cells = "".join(f" {f[key]:{width}.{places}f}" for _, key, width, places in FLUID_COLUMNS)
        print(f"{f['name']:{name_width}}{cells}  {f['basis']} {_basis_mark(f['basis'])}".rstrip())
    print(
        "(ions in mmol/L, computed from g/L with the molar masses in solutes.csv, "
        "from IUPAC standard atomic weights)\n"
    )
    # the ids only as what to type: the option that chooses each fluid
    print("To plan with a fluid, give its --fluid value:")
    for f in data:
        print(f"  {f['name']:{name_width}}  --fluid {f['fluid_id']}")
    print()
    print(_cautions_text())
    return EXIT_OK


def _request(args: argparse.Namespace):  # noqa: ANN202 — PlanRequest, imported lazily
    from vetfluid.common.units import parse_weight_kg
    from vetfluid.planning.plan import PlanRequest

    if args.demo:
        from vetfluid.planning.demos import demo

        return demo(args.demo).request
    for flag, value in (("--species", args.species), ("--weight", args.weight)):
        if not value:
            raise InputError("is required", field=flag, value=None, fix="or use --demo")

    device = args.device or ("gravity" if args.drop_factor is not None else None)
    return PlanRequest(
        species_id=args.species,
        weight_kg=parse_weight_kg(args.weight),
        dehydration_percent=args.dehydration,
        dehydration_findings=tuple(args.finding),
        replace_hours=args.replace_hours,
        losses_ml_per_day=args.losses_ml_per_day,
        maintenance_method=args.maintenance_method,
        fluid_id=args.fluid,
        bolus_fluid_id=args.shock_fluid,
        route=args.route,
        device=device,
        drop_factor=args.drop_factor,
        resuscitation_boluses=args.boluses,
        body_temp_c=args.body_temp_c,
        serum_na=args.serum_na,
        serum_k=args.serum_k,
        serum_hco3=args.serum_hco3,
        usg=args.usg,
        urine_osmolality=args.urine_osm,
        kcl_mmol_per_l=args.kcl_mmol_per_l,
        dextrose_percent=args.dextrose_percent,
        start_time=args.start,
        start_date=args.start_date,
        ins_and_outs_period_h=args.ins_and_outs_period,
        measured_outputs=_measured(args.measured_urine_ml, args.measured_other_ml),
        cardiac_disease=args.cardiac,
        renal_disease=args.renal,
        anaesthesia=args.anaesthesia,
        neonate=args.neonate,
        age_weeks=args.age_weeks,
        max_na_change_per_h=args.max_na_change,
        syringe_size_ml=args.syringe_ml,
        dose_interval_h=args.dose_interval,
        max_sites_per_dose=args.max_sites,
        soaks_per_day=args.soaks,
        bag_size_ml=args.bag_size,
        pcv_percent=args.pcv,
        total_solids_g_per_dl=args.ts,
        diuretics=_diuretics(args),
        loss_type=_loss_type(args.loss_type),
        renal_output=args.renal_output,
    )


def _loss_type(typed: str | None) -> str:
    """--loss-type, or the core's default when the option is left out (losses of unknown
    kind taken as isotonic); typed but empty it is refused, never taken as that default."""
    from vetfluid.physiology.electrolytes import DEFAULT_LOSS_TYPE, LOSS_TYPES

    if typed is None:
        return DEFAULT_LOSS_TYPE
    if not typed.strip():
        raise InputError(
            "is empty: say what the ongoing losses are", field="--loss-type", value=typed,
            fix=f"give one of {', '.join(LOSS_TYPES)}, or leave --loss-type out when it is not "
            f"known (then {DEFAULT_LOSS_TYPE})",
        )  # fmt: skip
    return typed


def _q(value: float | None, unit: str) -> str:
    return "—" if value is None else format_quantity(value, unit)


def _phase_line(phase: Phase) -> str:
    """One phase in the figures the schedule and the window give
    (:func:`vetfluid.planning.schedule.rate_or_dose_text`): a gravity drip in drops/min only when
    they can be counted, a divided dose as drawn up (sites × the volume per site)."""
    from vetfluid.planning.schedule import rate_or_dose_text

    span = f"h {phase.start_h:g}–{phase.end_h:g}"
    total = f"total {_q(phase.volume_ml, 'mL')}"
    return f"  {phase.kind:14} {span:14} {rate_or_dose_text(phase)}  {total}"


def print_plan(plan: Plan) -> None:
    """The plan as a readable sheet for a person at a terminal."""
    from vetfluid.physiology.electrolytes import sodium_text
    from vetfluid.printouts.sheet import (
        first_24h_text,
        ins_and_outs_rows,
        maintenance_text,
        patient_weight_text,
        potassium_text,
        route_and_device_text,
    )
    from vetfluid.records.serialize import plan_dict

    data = plan_dict(plan)
    fl = data["fluid"]
    rows = [
        ("Maintenance", maintenance_text(data)),
        ("Dehydration", f"{data['dehydration_percent']:g} % → deficit "
                        f"{_q(data['deficit_ml'], 'mL')}"),
        ("Free water", _q(data["free_water_deficit_ml"], "mL")
         if data["free_water_deficit_ml"] is not None else None),
        ("Fluid", f"{fl['name']} ({fl['tonicity_words']}; Na "
                  f"{_q(fl['na_mmol_per_l'], 'mmol/L')}, K {_q(fl['k_mmol_per_l'], 'mmol/L')})"),
        ("Route", route_and_device_text(data)),
        ("First 24 h", first_24h_text(data)),
    ]  # fmt: skip
    if "potassium" in data:
        rows.append(("Potassium", potassium_text(data)))
    if plan.sodium is not None:
        rows.append(("Sodium", sodium_text(plan.sodium)))
    print(f"Fluid plan — {data['species_name']}, {patient_weight_text(data)}")
    for label, text in rows:
        if text is not None:
            print(f"  {label:13} {text}")
    print("\nPhases")
    for phase in plan.phases:
        print(_phase_line(phase))
    if "ins_and_outs" in data:
        io = data["ins_and_outs"]
        print(f"\nIns and outs (every {io['period_h']:g} h; the next period replaces these)")
        for period, urine, other, insensible, rate in ins_and_outs_rows(data):
            print(f"  {period}: urine {urine}, other {other}, insensible {insensible} "
                  f"→ {rate} next")  # fmt: skip
        if not io["periods"]:
            print("  nothing measured yet")
    print("\nSchedule")
    for e in data["schedule"]:
        when = e["clock"] or f"h {e['hour']:g}"
        print(f"  {when:>12}  {e['action']}")
    print("\nFindings")
    _print_findings(data["findings"])
    memory = [v for v in data["provenance"] if v["basis"] == "memory"]
    print(f"\nSpecies values used ({len(memory)} recalled from memory, marked *):")
    names = _group_names()
    for v in data["provenance"]:
        star = "*" if v["basis"] == "memory" else " "
        print(f"  {star}{_value_line(v['parameter'], v, names)[1:]}")
    print("\n" + _cautions_text())


def _print_findings(findings: list[dict]) -> None:
    """Each finding in words, worst first: its severity, what it says and what to do. The
    code is for the JSON output and the logs, never for reading."""
    from vetfluid.printouts.sheet import SEVERITY_WORDS

    order = {"hard": 0, "soft": 1, "info": 2}
    for f in sorted(findings, key=lambda f: order.get(f["severity"], 3)):
        print(f"  {SEVERITY_WORDS[f['severity']]}: {f['message']} {f['action']}".rstrip())
    if not findings:
        print("  none")


def cmd_plan(args: argparse.Namespace) -> int:
    from vetfluid.planning.plan import build_plan
    from vetfluid.records.serialize import plan_dict

    plan = build_plan(_request(args))
    if args.json:
        _emit(plan_dict(plan))
    else:
        print_plan(plan)
    return EXIT_HARD_LIMIT if plan.has_hard_limit else EXIT_OK


def cmd_chart(args: argparse.Namespace) -> int:
    from vetfluid.common.csvcells import csv_text
    from vetfluid.printouts.chart import Chart, chart
    from vetfluid.printouts.chart_sheet import chart_note
    from vetfluid.records.serialize import value_dict
    from vetfluid.tables.species import load_table

    table = load_table()
    result = chart(args.species, drop_factor=args.drop_factor, bands=args.bands, table=table)
    if args.csv:
        sys.stdout.write(csv_text(Chart.COLUMNS, result.rows()))
        return EXIT_OK
    if args.json:
        _emit({
            "species_id": result.species_id, "method": result.method,
            "drop_factor": result.drop_factor, "columns": list(Chart.COLUMNS),
            "rows": result.rows(),
            "provenance": [value_dict(v) for v in result.provenance],
            "sources": result.citations, "cautions": list(CAUTIONS),
        })  # fmt: skip
        return EXIT_OK
    species = table.species(args.species)
    print(f"Weight bands — {species.common_name} (maintenance: {result.method}; "
          f"drops/min at {result.drop_factor:g} drops/mL)")  # fmt: skip
    print(
        f"{'weight':>10} {'mL/day':>10} {'mL/h':>8} {'per 5 %':>9} {'bolus':>9} {'drops/min':>10}"
    )
    for (w, day, hour, five, bolus, *_), drip in zip(
        result.rows(), result.drip_texts(), strict=True
    ):
        print(f"{_q(w, 'kg'):>10} {_q(day, 'mL'):>10} {_q(hour, 'mL/h'):>11} {_q(five, 'mL'):>9} "
              f"{_q(bolus, 'mL'):>9} {drip:>15}")  # fmt: skip
    print("(bolus — where a continuous line is not practical)")
    print(chart_note(result) + "\n")
    print(_cautions_text())
    return EXIT_OK


def cmd_sodium(args: argparse.Namespace) -> int:
    from vetfluid.common.checks import require_number
    from vetfluid.common.units import parse_weight_kg
    from vetfluid.physiology import electrolytes
    from vetfluid.planning.plan import MAX_NA_CHANGE_RANGE_MMOL_PER_L_H
    from vetfluid.tables import fluid_roles, fluids
    from vetfluid.tables.limits import limit
    from vetfluid.tables.species import load_table

    table = load_table()
    weight = parse_weight_kg(args.weight)
    tbw = table.value(args.species, "total_body_water_fraction")
    if not fluid_roles.roles(args.fluid).carrier:  # the rate found is an infusion's
        raise InputError(
            f"{fluids.fluid(args.fluid).name} is not infused as the bag",
            field="--fluid", value=args.fluid,
            fix="choose a fluid that may run as the bag: " + ", ".join(fluid_roles.carriers()),
        )  # fmt: skip
    comp = fluids.composition(fluids.fluid(args.fluid))
    change = electrolytes.sodium_change_per_litre(
        serum_na=args.serum_na, infusate_na=comp.na_mmol_per_l,
        infusate_k=comp.k_mmol_per_l, tbw_l=tbw.number * weight,
    )  # fmt: skip
    max_change = limit("sodium_max_correction_mmol_per_l_h").value
    if args.max_na_change is not None:  # the plan's own range (PlanRequest), never a default
        low, high = MAX_NA_CHANGE_RANGE_MMOL_PER_L_H
        max_change = require_number(
            args.max_na_change, "--max-na-change", low=low, high=high, unit="mmol/L/h"
        )
    data = {
        "species_id": args.species,
        "weight_kg": weight,
        "serum_na": args.serum_na,
        "fluid_id": args.fluid,
        "infusate_na_plus_k": comp.na_mmol_per_l + comp.k_mmol_per_l,
        "tbw_l": tbw.number * weight,
        "tbw_fraction": tbw.provenance(),
        "delta_na_per_l": change,
        "max_change_per_h": max_change,
        "max_rate_ml_per_h": electrolytes.max_rate_for_sodium(
            serum_na=args.serum_na,
            infusate_na_k=comp.na_mmol_per_l + comp.k_mmol_per_l,
            tbw_l=tbw.number * weight,
            max_change_per_h=max_change,
        ),  # fmt: skip
        "method": "Adrogué–Madias, general form: ΔNa = V·(infusate Na + K − serum Na) / "
        "(TBW + V); per litre V = 1 L; the fastest rate moves Na by the limit in one hour",
        "source_id": "adrogue2000",
        "cautions": list(CAUTIONS),
    }
    if args.json:
        _emit(data)
        return EXIT_OK
    print(f"TBW {_q(data['tbw_l'], 'L')} ({tbw.number:g} × BW, {tbw.basis})")
    print(f"ΔNa after 1 L of {fluids.fluid(args.fluid).name}: {_q(change, 'mmol/L')}")
    fastest = data["max_rate_ml_per_h"]
    print(
        f"Fastest rate within {_q(max_change, 'mmol/L/h')}: {_q(fastest, 'mL/h')}"
        if fastest is not None
        # Na + K of the fluid within the limit of the patient's Na: no rate moves Na faster
        else f"Fastest rate within {_q(max_change, 'mmol/L/h')}: none from this rule — "
        f"{fluids.fluid(args.fluid).name} barely moves a Na of "
        f"{format_quantity(args.serum_na, 'mmol/L', decimals=1)}, so no rate limit follows "
        "from it (set the rate by the volume the patient needs)"
    )
    print("\n" + _cautions_text())
    return EXIT_OK


def _hours(text: str) -> list[float]:
    hours = list(_comma_numbers(text, field="--at", what="hours", example="0,1,24"))
    if any(h < 0 for h in hours):
        raise InputError("--at needs hours of 0 or more", field="--at", value=text)
    return hours


COURSE_KEYS = ("plasma_ml", "interstitial_ml", "intracellular_ml", "weight_kg",
               "remaining_deficit_ml", "given_ml", "urine_ml", "urine_ml_per_h",
               "urine_osm_mosm_per_kg", "serum_na", "serum_k")  # fmt: skip
# the column headings people read (the JSON keeps the keys above); each figure has its unit
COURSE_HEADINGS = ("plasma", "interstitial", "intracellular", "weight",
                   "deficit left", "given", "urine so far", "urine flow",
                   "urine osmolality", "serum Na", "serum K")  # fmt: skip
# shown only when a serum bicarbonate was entered (its row key too)
COURSE_HCO3_KEY, COURSE_HCO3_HEADING = "serum_hco3", "serum HCO3"
COURSE_UNITS = {"serum_na": "mmol/L", "serum_k": "mmol/L", "serum_hco3": "mmol/L",
                "urine_ml_per_h": "mL/h", "urine_osm_mosm_per_kg": "mOsm/kg"}  # fmt: skip
# Most decimals a figure of the course is printed with (a display choice, not a clinical
# value): finer than this is the integrator's rounding (5.7e-14 mL), not fluid.
COURSE_MOST_DECIMALS = {"serum_na": 1, "serum_k": 1, "serum_hco3": 1,
                        "urine_osm_mosm_per_kg": 0}  # fmt: skip
COURSE_MOST_DECIMALS_OTHERWISE = 2


def _course_cell(row: dict, key: str, weight_unit: str) -> str:
    """One figure of the course table the safe way (:mod:`vetfluid.common.formatting`), with its
    unit; the weight in the species' own unit (a lizard in g), as the Course tab plots it."""
    from vetfluid.common.formatting import default_decimals
    from vetfluid.common.units import weight_in_unit

    value = row[key]
    if value is None:
        return "—"
    unit = weight_unit if key == "weight_kg" else COURSE_UNITS.get(key, "mL")
    if key == "weight_kg":
        value = weight_in_unit(value, weight_unit)
    most = COURSE_MOST_DECIMALS.get(key, COURSE_MOST_DECIMALS_OTHERWISE)
    return format_quantity(value, unit, decimals=min(default_decimals(value), most))


def cmd_course(args: argparse.Namespace) -> int:
    from vetfluid.common.checks import require_number
    from vetfluid.common.findings import worst
    from vetfluid.common.units import weight_text
    from vetfluid.course.model import MAX_HORIZON_H, SHOWN_STEP_MINUTES, bolus_input, course
    from vetfluid.planning.plan import build_plan
    from vetfluid.records.serialize import diuretic_dict

    hours = _hours(args.at)
    if args.horizon_h is not None:
        require_number(args.horizon_h, "--horizon-h", positive=True, high=MAX_HORIZON_H, unit="h")
        beyond = [h for h in hours if h > args.horizon_h]
        if beyond:  # never reported at the horizon's last hour in their place
            raise InputError(
                f"hours {', '.join(f'{h:g}' for h in beyond)} are beyond the horizon of "
                f"{args.horizon_h:g} h",
                field="--at", value=args.at,
                fix="leave those hours out, or give a --horizon-h that reaches them",
            )  # fmt: skip
    plan = build_plan(_request(args))
    extra = ()
    if args.bolus_ml_per_kg:
        extra = (
            bolus_input(fluid_id=args.bolus_fluid, ml_per_kg=args.bolus_ml_per_kg,
                        weight_kg=plan.request.weight_kg, minutes=args.bolus_minutes),
        )  # fmt: skip
    horizon = args.horizon_h if args.horizon_h is not None else max(max(hours), plan.end_h)
    result = course(  # at the window's step: the same figures as the Course tab
        plan, horizon_h=horizon, extra_boluses=extra, step_minutes=SHOWN_STEP_MINUTES
    )
    rows = [result.at(h) for h in hours]
    keys, headings = COURSE_KEYS, COURSE_HEADINGS
    if result.serum_hco3 is None:  # not entered: not predicted, and no key for it
        for row in rows:
            del row[COURSE_HCO3_KEY]
    else:
        keys, headings = (*keys, COURSE_HCO3_KEY), (*headings, COURSE_HCO3_HEADING)
    data = {
        "species_id": plan.request.species_id,
        "weight_kg": plan.request.weight_kg,
        "rows": rows,
        "model": "docs/model.md",
        "urine_band_mosm_per_kg": result.urine_band_mosm_per_kg,
        "urine_predicted_until_h": result.outputs_end_h,
        "excess_excretion_modelled": result.excess_excretion_left_out is None,
        "excess_excretion_left_out_for": result.excess_excretion_left_out,
        "diuretics": [diuretic_dict(d) for d in plan.diuretics],
        "diuretics_not_modelled": list(result.diuretics_not_modelled),
        "provenance": [v.provenance() for v in result.provenance],
        "findings": [f.as_dict() for f in plan.findings],
        "course_findings": [f.as_dict() for f in result.findings],
        "cautions": list(CAUTIONS),
    }
    if args.json:
        _emit(data)
    else:
        weight = weight_text(plan.request.weight_kg, plan.weight_unit)
        print(f"Course — {plan.species_name}, {weight}")
        print(f"{'hour':>6} " + " ".join(f"{k:>17}" for k in headings))
        for row in rows:
            cells = " ".join(f"{_course_cell(row, k, plan.weight_unit):>17}" for k in keys)
            print(f"{format_number(row['hour'], decimals=2):>6} {cells}")
        if result.urine_band_mosm_per_kg:
            floor, ceiling = result.urine_band_mosm_per_kg
            print(
                f"Urine osmolality kept within {format_quantity(floor, 'mOsm/kg')} (most "
                f"dilute) and {format_quantity(ceiling, 'mOsm/kg')} (most concentrated)."
            )
        if any(row["hour"] > result.outputs_end_h for row in rows):
            print(f"After the plan ends (hour {format_number(result.outputs_end_h)}) the "
                  "patient's own intake is taken to match its losses: urine flow and "
                  "osmolality are not predicted beyond it (—).")  # fmt: skip
        if result.excess_excretion_left_out:
            print("The kidneys' excretion of a fluid excess is left out: "
                  f"{result.excess_excretion_left_out}.")  # fmt: skip
        for dose in plan.diuretics:
            print(f"Diuretic at hour {format_number(dose.start_h)}: {diuretic_dict(dose)['text']}")
        if result.diuretics_not_modelled:
            print("Not shown in the course (no onset and duration on record): "
                  f"{'; '.join(result.diuretics_not_modelled)}.")  # fmt: skip
        if data["course_findings"]:
            print("\nPredicted by the course")
            _print_findings(data["course_findings"])
        print("\nFindings of the plan")
        _print_findings(data["findings"])
        print("\n" + _cautions_text())
    # the course's own hard finding (its figures stop being a prediction) blocks as the
    # plan's does: a script reading only the exit code must not take it for a usable answer
    blocked = plan.has_hard_limit or worst(result.findings) == "hard"
    return EXIT_HARD_LIMIT if blocked else EXIT_OK


COMMANDS = {
    "species": cmd_species,
    "fluids": cmd_fluids,
    "plan": cmd_plan,
    "course": cmd_course,
    "chart": cmd_chart,
    "sodium": cmd_sodium,
}


def _demo_conflicts(args: argparse.Namespace, argv: Sequence[str] | None) -> None:
    """Refuse patient or plan options typed beside --demo.

    A demo is a whole invented patient with its own inputs (the same plan as the
    window's demo), so an option beside it would be silently left out. Layering the
    options on the demo instead would give a plan that is neither the demo nor the
    patient the user described, so both together are refused. Output options (--json)
    and the course's own options (--at, --bolus-ml-per-kg, …) are not plan inputs.
    """
    if not getattr(args, "demo", None):
        return
    typed = vars(_parser(only_given=True).parse_args(argv))
    flags = [flag for dest, flag in args.plan_input_flags.items() if dest in typed]
    if flags:
        raise InputError(
            f"a demo patient comes with all its own inputs, so {', '.join(flags)} "
            f"would not be used",
            field="--demo", value=args.demo,
            fix=f"leave out {', '.join(flags)} to plan the demo as it is, or leave out --demo "
            "and give the whole patient (--species, --weight and the rest)",
        )  # fmt: skip


def _report_data_folder(command: str) -> None:
    """When the user data folder cannot be used (a file in its way, no permission), say so
    in one line on stderr, with whether the clinic's overrides kept there are read (a
    read-only folder's are; otherwise the answer on stdout rests on the shipped values).
    No command here writes into it, so each still answers."""
    if command == "fluids":  # the only command that reads no species value
        return
    from vetfluid.common.paths import data_folder_problem

    problem = data_folder_problem()
    if problem:
        sys.stderr.write(f"vetfluid-cli: {problem}\n")  # says if the overrides are read


def _report_ignored_overrides(command: str) -> None:
    """Each clinic override left out (file:line, why, what applies), one line on stderr:
    the answer on stdout uses the shipped values instead."""
    if command == "fluids":  # the only command that reads no species value
        return
    from vetfluid.tables.species import load_table

    for notice in load_table().notices:
        sys.stderr.write(f"vetfluid-cli: clinic override {notice.one_line()}\n")


def main(argv: Sequence[str] | None = None) -> int:
    args = _parser().parse_args(argv)
    try:
        _demo_conflicts(args, argv)
        _report_data_folder(args.command)
        _report_ignored_overrides(args.command)
        return COMMANDS[args.command](args)
    except InputError as exc:
        sys.stderr.write(f"vetfluid-cli: invalid input — {exc.one_line()}\n")
        return EXIT_INPUT
    except VetfluidError as exc:
        sys.stderr.write(f"vetfluid-cli: {exc.one_line()}\n")
        return EXIT_INPUT
    except BrokenPipeError:
        # the reader (e.g. `head`) closed the pipe: stop quietly, as Unix tools do
        os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())
        return EXIT_OK


if __name__ == "__main__":
    sys.exit(main())
