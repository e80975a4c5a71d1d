"""Plain-data views of core results, shared by the CLI (JSON), the window and print.

One function per result, so every surface shows the same numbers. Keys are
stable and documented in README.md.
"""

from __future__ import annotations

import contextlib
import math
from dataclasses import MISSING, asdict, fields
from datetime import date, datetime, time
from types import UnionType
from typing import Union, get_args, get_origin, get_type_hints

from vetfluid.common.cautions import CAUTIONS
from vetfluid.common.errors import InputError
from vetfluid.physiology import delivery
from vetfluid.planning.plan import Plan, PlanRequest
from vetfluid.planning.schedule import DiureticDose, Phase, diuretic_text
from vetfluid.tables import fluids
from vetfluid.tables.species import SpeciesTable, SpeciesValue


def value_dict(value: SpeciesValue) -> dict[str, object]:
    return value.provenance()


def phase_dict(phase: Phase) -> dict[str, object]:
    data: dict[str, object] = {
        "kind": phase.kind,
        "mode": phase.mode,
        "route": phase.route,
        "start_h": phase.start_h,
        "end_h": phase.end_h,
        "volume_ml": phase.volume_ml,
        "kcl_mmol_per_l": phase.kcl_mmol_per_l,
        "fluid": phase.fluid_name or None,
    }
    # beside the planned figures, what the nurse gives: a divided dose as drawn up
    # (sites × the per-site volume to the syringe's marks, as the schedule says), and
    # whether a gravity drip's drops can be counted (if not, the schedule times it by
    # the bag's volume marks)
    if phase.mode == "continuous":
        data["rate_ml_per_h"] = phase.rate_ml_per_h
        data["drops_per_min"] = phase.drops_per_min
        data["seconds_per_drop"] = phase.seconds_per_drop
        data["syringe_fills"] = [{"hour": h, "ml": ml} for h, ml in phase.syringe_fills]
        if phase.drops_per_min is not None:
            data["drops_countable"] = delivery.countable(phase.drops_per_min)
    else:
        data.update(
            dose_ml=phase.dose_ml,
            interval_h=phase.interval_h,
            doses=phase.doses,
            sites_per_dose=phase.sites_per_dose,
            ml_per_site=phase.ml_per_site,
            drawn_up=asdict(
                delivery.drawn_up_dose(
                    ml_per_site=phase.ml_per_site or 0.0, sites=phase.sites_per_dose
                )
            ),
        )
    if phase.note:
        data["note"] = phase.note
    return data


def diuretic_dict(dose: DiureticDose) -> dict[str, object]:
    """One diuretic dose on the clock, with the words the schedule gives it."""
    return {
        "drug_id": dose.drug_id, "drug": dose.name, "class": dose.drug_class,
        "dose": dose.dose, "unit": dose.unit, "route": dose.route, "start_h": dose.start_h,
        "end_h": dose.end_h, "amount": dose.amount, "amount_unit": dose.amount_unit,
        "text": diuretic_text(dose),
    }  # fmt: skip


def plan_dict(plan: Plan) -> dict[str, object]:
    """The plan as JSON-ready data (see README: "Plan JSON")."""
    main = plan.main_phase
    budget = plan.water_budget
    request = plan.request
    data: dict[str, object] = {
        "species_id": request.species_id,
        "species_name": plan.species_name,
        "weight_kg": request.weight_kg,
        # the unit this species' weight is given in (a 65 g gerbil, not 0.065 kg), so
        # what is printed from the JSON shows the weight as the window does
        "weight_unit": plan.weight_unit,
        "maintenance": {
            "ml_per_day": plan.maintenance.ml_per_day,
            "ml_per_h": plan.maintenance.ml_per_h,
            "method": plan.maintenance.method,
            "formula": plan.maintenance.formula,
            "temperature_factor": plan.maintenance.temperature_factor,
            "body_temp_c": plan.maintenance.body_temp_c,
            "provenance": [value_dict(v) for v in plan.maintenance.provenance],
        },
        "dehydration_percent": plan.dehydration_percent,
        "dehydration_estimate": (
            {
                "percent_low": plan.dehydration_estimate.percent_low,
                "percent_high": plan.dehydration_estimate.percent_high,
                "findings": list(plan.dehydration_estimate.findings),
                "source_id": plan.dehydration_estimate.source_id,
            }
            if plan.dehydration_estimate
            else None
        ),
        "deficit_ml": plan.deficit_ml,
        "losses_ml_per_day": request.losses_ml_per_day,
        "free_water_deficit_ml": plan.free_water_deficit_ml,
        "fluid": {
            "fluid_id": request.fluid_id,
            "name": plan.fluid_name,
            "na_mmol_per_l": plan.fluid_na_mmol_per_l,
            "k_mmol_per_l": plan.fluid_k_mmol_per_l,
            # dextrose monohydrate in the bag, additives included (g/L; ÷ 10 is % w/v)
            "dextrose_g_per_l": fluids.composition(plan.bag).dextrose_hydrous_g_per_l,
            "tonicity": plan.tonicity.effective_class,
            "tonicity_words": fluids.tonicity_words(plan.tonicity),
            "tonicity_band": fluids.tonicity_band_text(plan.tonicity),
            "tonicity_in_bag": plan.tonicity.in_vitro_class,
            "osmolarity_ratio_to_plasma": plan.tonicity.in_vitro_ratio,
        },
        "route": plan.route,
        "device": plan.device,
        "phases": [phase_dict(p) for p in plan.phases],
        "total_ml_first_24h": plan.total_ml_first_24h,
        "delivery": {
            "device": plan.device,
            "drop_factor": request.drop_factor if plan.device == "gravity" else None,
            "rate_ml_per_h": main.rate_ml_per_h,
            "drops_per_min": main.drops_per_min,
            "seconds_per_drop": main.seconds_per_drop,
            "dose_ml": main.dose_ml,
            "interval_h": main.interval_h,
        },
        "schedule": [
            {"hour": e.hour, "clock": e.clock, "phase": e.phase, "action": e.action}
            for e in plan.schedule
        ],
        "diuretics": [diuretic_dict(d) for d in plan.diuretics],
        "findings": [f.as_dict() for f in plan.findings],
        "hard_limit": plan.has_hard_limit,
        "provenance": [value_dict(v) for v in plan.provenance],
        "sources": dict(plan.citations),
        "cautions": list(CAUTIONS),
        "request": request_to_dict(plan.request),
    }
    if plan.resuscitation is not None:
        r = plan.resuscitation
        data["resuscitation"] = {
            "bolus_ml_per_kg": r.bolus_ml_per_kg,
            "bolus_ml": r.bolus_ml,
            "minutes": r.minutes,
            "rate_ml_per_h": r.rate_ml_per_h,
            "cap_ml_per_kg": r.cap_ml_per_kg,
            "cap_ml": r.cap_ml,
            "cap_from": r.cap_from,
            "bolus_from": r.bolus_from,
            "max_boluses": r.max_boluses,
            "reassess": r.reassess,
        }
    if request.ins_and_outs_period_h is not None:
        data["ins_and_outs"] = {
            "period_h": request.ins_and_outs_period_h,
            "periods": [asdict(row) for row in plan.ins_and_outs],
        }
    if plan.potassium is not None:
        data["potassium"] = asdict(plan.potassium)
    if plan.sodium is not None:
        data["sodium"] = asdict(plan.sodium)
    if budget is not None:
        data["water_budget"] = {
            "energy_kcal_per_day": budget.energy_kcal_per_day,
            "solute_mosm_per_day": budget.solute_mosm_per_day,
            "ceiling_mosm_per_kg": budget.ceiling_mosm_per_kg,
            "ceiling_from": budget.ceiling_from,
            "obligatory_urine_ml_per_day": budget.obligatory_urine_ml,
            "isosthenuric_urine_ml_per_day": budget.isosthenuric_urine_ml,
            "insensible_ml_per_day": budget.insensible_ml,
            "faecal_ml_per_day": budget.faecal_ml,
            "minimum_ml_per_day": budget.minimum_ml,
        }
    return data


def species_dict(table: SpeciesTable) -> dict[str, object]:
    """The effective table: every species with every value, plus the sources."""
    return {
        "species": [
            {
                "id": s.id,
                "common_name": s.common_name,
                "scientific_name": s.scientific_name,
                "taxon_group": s.taxon_group,
                "thermoregulation": s.thermoregulation,
                "nitrogen_excretion": s.nitrogen_excretion,
                "values": {k: value_dict(v) for k, v in table.effective(s.id).items()},
            }
            for s in (table.species(i) for i in table.species_ids())
        ],
        "sources": [
            {"source_id": s.source_id, "citation": s.citation, "year": s.year, "kind": s.kind}
            for s in table.sources.values()
        ],
        "cautions": list(CAUTIONS),
    }


COMPOSITION_KEYS = ("na", "k", "cl", "ca", "mg", "lactate", "acetate", "gluconate")


def fluid_dict(fluid: fluids.Fluid) -> dict[str, object]:
    comp = fluids.composition(fluid)
    data: dict[str, object] = {
        "fluid_id": fluid.fluid_id,
        "name": fluid.name,
        "kind": fluid.kind,
        "basis": fluid.basis,
        "source_id": fluid.source_id or None,
        "solutes_g_per_l": {a.solute.solute_id: a.g_per_l for a in fluid.solutes},
    }
    for key in COMPOSITION_KEYS:
        data[key] = comp.mmol_per_l(key)
    data.update(
        dextrose_g_per_l=comp.dextrose_hydrous_g_per_l,
        glucose_anhydrous_g_per_l=comp.dextrose_g_per_l,
        osmolarity_mosm_per_l=comp.osmolarity_mosm_per_l,
        effective_osmolarity_mosm_per_l=comp.effective_osmolarity_mosm_per_l,
        kcal_per_l=comp.kcal_per_l,
    )
    return data


REQUEST_FORMAT = "vetfluid-plan-request"
REQUEST_VERSION = 1


def request_to_dict(request: PlanRequest) -> dict[str, object]:
    """A request as plain data (start time ``HH:MM``, date ``YYYY-MM-DD``), for saving and
    the CLI."""
    data = {f.name: getattr(request, f.name) for f in fields(PlanRequest)}
    data["dehydration_findings"] = list(request.dehydration_findings)
    data["measured_outputs"] = [list(m) for m in request.measured_outputs]
    data["diuretics"] = [list(d) for d in request.diuretics]
    data["start_time"] = request.start_time.strftime("%H:%M") if request.start_time else None
    data["start_date"] = request.start_date.isoformat() if request.start_date else None
    return data


# Bounds of a request's text and lists, against files edited by hand or damaged: an id or
# a clock time is short; a list of findings or measured periods is far shorter than this.
# Parsing cost bounds, set by us (no clinical source); PlanRequest's own ranges apply after.
MAX_TEXT_CHARS = 200
MAX_LIST_ITEMS = 10_000


LISTS = {
    "dehydration_findings": "a list of finding ids",
    "measured_outputs": "a list of [urine mL, other losses mL], one per period",
    "diuretics": "a list of [drug, dose, route, start hour, end hour], one per dose",
}


def _shown(name: object) -> str:
    """A key as a message may show it: quoted, escaped, cut short (one line, no markup)."""
    text = repr(name)
    return text if len(text) <= 40 else text[:39] + "…"


def _wrong(name: str, what: str, value: object, fix: str | None = None) -> InputError:
    return InputError(f"{name} must be {what}", field=name, value=value, fix=fix)


def _read_value(name: str, hint: object, value: object) -> object:
    """``value`` checked against the PlanRequest field type ``hint`` (JSON kinds only:
    true/false for a flag, a whole number for a count, a finite number for a measure)."""
    args = get_args(hint)
    if get_origin(hint) in (Union, UnionType) and type(None) in args:
        if value is None:
            return None
        (hint,) = [a for a in args if a is not type(None)]
        args = get_args(hint)
    if hint is bool:
        if not isinstance(value, bool):
            raise _wrong(name, "true or false", value, "write JSON true or false, no quotes")
        return value
    if hint is int:
        # JSON has one kind of number: 2.0 is the count 2 (a spreadsheet or another tool may
        # write it so); 2.5 is no count
        if isinstance(value, float) and math.isfinite(value) and value.is_integer():
            return int(value)
        if isinstance(value, bool) or not isinstance(value, int):
            raise _wrong(name, "a whole number", value)
        return value
    if hint is float:
        if isinstance(value, bool) or not isinstance(value, int | float):
            raise _wrong(name, "a number", value)
        try:
            number = float(value)
        except OverflowError:  # an integer with hundreds of digits
            number = math.inf
        if not math.isfinite(number):
            raise _wrong(name, "a finite number", None)
        return number
    if hint is str:
        if not isinstance(value, str) or not value or len(value) > MAX_TEXT_CHARS:
            raise _wrong(name, f"text of 1 to {MAX_TEXT_CHARS} characters", None)
        if not value.isprintable():  # a line break or escape would reach a terminal raw
            raise _wrong(name, "printable text, without line breaks or control characters", None)
        return value
    if hint is time:
        if isinstance(value, str) and len(value) == 5:
            with contextlib.suppress(ValueError):  # not a clock time: refused below
                return datetime.strptime(value, "%H:%M").time()
        raise InputError("start time must be HH:MM", field=name, value=None)
    if hint is date:
        if isinstance(value, str) and len(value) == 10:
            with contextlib.suppress(ValueError):  # not a date: refused below
                return date.fromisoformat(value)
        raise InputError("start date must be YYYY-MM-DD", field=name, value=None)
    if get_origin(hint) is tuple:
        if not isinstance(value, list | tuple) or len(value) > MAX_LIST_ITEMS:
            raise _wrong(name, f"{LISTS.get(name, 'a list')} (at most {MAX_LIST_ITEMS})", None)
        if len(args) == 2 and args[1] is Ellipsis:
            return tuple(_read_value(name, args[0], item) for item in value)
        if len(value) != len(args):
            raise _wrong(name, f"a list of {len(args)} items per entry", None)
        return tuple(_read_value(name, a, item) for a, item in zip(args, value, strict=True))
    raise TypeError(f"PlanRequest field {name} has a type this reader does not know: {hint}")


def request_from_dict(data: dict[str, object]) -> PlanRequest:
    """Rebuild a request from plain data (a plan file, a stored version, a draft).

    Every key is checked against the declared type of its PlanRequest field before the
    request is built (which then applies its ranges): unknown and missing keys, and
    values of the wrong kind, raise InputError naming the key."""
    if not isinstance(data, dict):
        raise InputError(
            "a plan file must hold a JSON object of the plan's inputs", field="request", value=None
        )
    hints = get_type_hints(PlanRequest)
    declared = {f.name: f for f in fields(PlanRequest)}
    unknown = sorted((k for k in data if k not in declared), key=str)
    if unknown:
        shown = ", ".join(_shown(k) for k in unknown[:5]) + (", …" if len(unknown) > 5 else "")
        raise InputError(
            f"unknown field(s) {shown}", field="request", value=None,
            fix=f"known fields: {', '.join(declared)}",
        )  # fmt: skip
    for name, spec in declared.items():
        if name not in data and spec.default is MISSING and spec.default_factory is MISSING:
            raise InputError(f"{name} is required", field=name, value=None)
    values = {
        name: () if name == "dehydration_findings" and value is None  # as older files wrote
        else _read_value(name, hints[name], value)
        for name, value in data.items()
    }  # fmt: skip
    try:
        return PlanRequest(**values)
    except TypeError as exc:  # not expected after the checks above; refused all the same
        raise InputError(str(exc), field="request", value=None) from None
