"""The plan builder: one patient request in, a checked, timed fluid plan out.

Phases follow the trade's three-phase frame (Pardo M et al., 2024 AAHA Fluid
Therapy Guidelines): resuscitation when asked for (boluses with reassessment),
replacement of the deficit over the chosen period plus maintenance plus ongoing
losses, then maintenance. Every species value used is carried in
``Plan.provenance`` with its basis, and every safety check becomes a
:class:`~vetfluid.common.findings.Finding`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace
from datetime import date, datetime, time, timedelta
from functools import partial

import numpy as np

from vetfluid.common.checks import require_number, require_patient_weight
from vetfluid.common.errors import InputError
from vetfluid.common.findings import Finding, worst
from vetfluid.common.formatting import format_quantity, hour_text
from vetfluid.common.units import preferred_weight_unit, weight_text
from vetfluid.physiology import delivery, electrolytes, hydration, maintenance, resuscitation
from vetfluid.physiology.ins_and_outs import InsAndOutsRow, ins_and_outs
from vetfluid.planning import bicarbonate, body, diuretic_checks, safety, schedule
from vetfluid.planning.bicarbonate import SERUM_HCO3_RANGE_MMOL_PER_L
from vetfluid.planning.ledger import Ledger
from vetfluid.planning.schedule import DiureticDose, Phase, ScheduleEntry
from vetfluid.tables import diuretics, fluid_roles, fluids
from vetfluid.tables.limits import limit
from vetfluid.tables.species import SpeciesTable, SpeciesValue, load_table

# cvc: a central venous catheter; epicoel: epicoelomic (chelonians); ip: intraperitoneal
# (small rodents); oral: by mouth, crop or stomach tube
ROUTES = ("iv", "cvc", "io", "sc", "icoel", "epicoel", "ip", "oral")
DEVICES = ("pump", "gravity", "syringe", "divided")
LINE_ROUTES = safety.LINE_ROUTES
# Per-site limit parameter for each bolus route. A species without the route's value is not
# planned that way (species_data/parameters.csv says which taxa have each route).
SITE_LIMIT_PARAMETER = {
    "sc": "max_site_volume_sc_ml_per_kg",
    "icoel": "max_site_volume_icoel_ml_per_kg",
    "epicoel": "max_site_volume_epicoel_ml_per_kg",
    "ip": "max_site_volume_ip_ml_per_kg",
    "oral": "max_site_volume_oral_ml_per_kg",
}
# Where each route is planned, for the message that refuses it elsewhere.
ROUTE_TAXA = {
    "sc": "most species", "icoel": "reptiles", "epicoel": "chelonians",
    "ip": "small rodents", "oral": "birds, reptiles, small rodents and rabbits",
}  # fmt: skip
# Soaking (a shallow warm bath, chelonians and lizards): recorded, never counted as intake.
# At most four a day (a software bound; lay sources give two to three, memory).
MAX_SOAKS_PER_DAY = 4
# A diuretic as entered: drug id, dose in the table's unit (mg/kg, g/kg; mg/kg/h for an
# infusion), route (iv, im, sc, po, or cri for an infusion), start hour and end hour on the
# plan's clock (the same hour for a single dose).
Diuretic = tuple[str, float, str, float, float]
# How a diseased kidney behaves in the course (vetfluid.course.model): None when not stated.
RENAL_OUTPUTS = ("oliguric", "polyuric")
# A bound on the doses one plan lists, against damaged files (common practice, no source):
# four doses a day for two months is 240.
MAX_DIURETIC_DOSES = 500
# Software bound on a dose in any of the table's units (common practice, no source): far
# above every range on record (the largest, mannitol, 2 g/kg; furosemide 10 mg/kg).
MAX_DIURETIC_DOSE = 1000.0
MAINTENANCE_TAIL_H = 12.0  # maintenance runs to hour 24, and at least 12 h after replacement
# Bag sizes a clinician may choose: the 250, 500 and 1000 mL bags lactated Ringer's is sold
# in (Fresenius Kabi NDC 63323-164; Baxter, DailyMed archive 14649).
BAG_SIZES_ML = (250.0, 500.0, 1000.0)


@dataclass(frozen=True, kw_only=True)
class PlanRequest:
    """Everything the clinician entered. Values are validated on construction."""

    species_id: str
    weight_kg: float
    dehydration_percent: float | None = None
    dehydration_findings: tuple[str, ...] = ()
    replace_hours: float = 24.0
    losses_ml_per_day: float = 0.0
    maintenance_method: str | None = None
    fluid_id: str = "lactated_ringers"
    bolus_fluid_id: str | None = None  # the resuscitation bolus fluid; None: the plan's fluid
    route: str | None = None
    device: str | None = None
    drop_factor: float | None = None
    resuscitation_boluses: int = 0
    body_temp_c: float | None = None
    serum_na: float | None = None
    serum_k: float | None = None
    serum_hco3: float | None = None  # mmol/L; followed over the course when entered
    usg: float | None = None
    urine_osmolality: float | None = None
    kcl_mmol_per_l: float | None = None
    dextrose_percent: float = 0.0
    start_time: time | None = None
    start_date: date | None = None  # with start_time, puts the plan on the calendar
    cardiac_disease: bool = False
    renal_disease: bool = False
    anaesthesia: bool = False
    neonate: bool = False
    age_weeks: float | None = None  # puppies and kittens: body water, maintenance, dextrose
    max_na_change_per_h: float | None = None
    syringe_size_ml: float = 60.0  # the syringe the pump takes
    bag_size_ml: float | None = None  # one of BAG_SIZES_ML; None: by each phase's volume
    pcv_percent: float | None = None  # recorded with the plan; followed over the course
    total_solids_g_per_dl: float | None = None
    # Ins-and-outs mode (oliguric or anuric patients): fluid by periods of this many hours,
    # each giving insensible loss + what was measured over the period before it.
    ins_and_outs_period_h: float | None = None
    measured_outputs: tuple[tuple[float, float], ...] = ()  # (urine mL, other mL) per period
    diuretics: tuple[Diuretic, ...] = ()  # on the schedule, the sheet and in the course
    loss_type: str = electrolytes.DEFAULT_LOSS_TYPE  # what the ongoing losses are
    renal_output: str | None = None  # with renal disease: "oliguric", "polyuric" or not stated
    # Divided doses as the clinician gives them: every 6, 8, 12 or 24 h, in at most this many
    # sites; None: the plan chooses (the longest interval whose dose fits the usual sites).
    dose_interval_h: float | None = None
    max_sites_per_dose: int | None = None
    soaks_per_day: int = 0  # warm shallow baths (chelonians, lizards): recorded, not counted

    def __post_init__(self) -> None:
        require_patient_weight(self.weight_kg)
        if self.dehydration_percent is not None:
            hydration.check_percent(self.dehydration_percent)
        _require(self.replace_hours, "replace_hours", 1, 96, "h")
        _require(self.losses_ml_per_day, "losses_ml_per_day", 0, 1e6, "mL/day")
        _require(self.dextrose_percent, "dextrose_percent", 0, 10, "%")
        _require(self.syringe_size_ml, "syringe_size_ml", 1, 100, "mL")
        if self.bag_size_ml is not None and self.bag_size_ml not in BAG_SIZES_ML:
            raise InputError(
                "the bag size must be 250, 500 or 1000 mL", field="bag_size_ml",
                value=self.bag_size_ml, fix="choose 250, 500 or 1000 mL, or leave it out",
            )  # fmt: skip
        if self.ins_and_outs_period_h is not None:
            _require(self.ins_and_outs_period_h, "ins_and_outs_period_h", 1, 24, "h")
        elif self.measured_outputs:
            raise InputError(
                "measured outputs belong to an ins-and-outs plan",
                field="measured_outputs", fix="give the ins-and-outs period too",
            )  # fmt: skip
        _check_measured(self.measured_outputs)
        _check_dosing(self.dose_interval_h, self.max_sites_per_dose, self.soaks_per_day)
        if self.ins_and_outs_period_h is not None and self.dose_interval_h is not None:
            # its doses follow each measured period: another interval would be overridden
            raise InputError(
                "an ins-and-outs plan gives a dose at the start of each measured period, "
                "not at a chosen interval",
                field="dose_interval_h", value=self.dose_interval_h,
                fix="leave the dosing interval empty, or plan without ins and outs",
            )  # fmt: skip
        _check_ins_and_outs_size(self.ins_and_outs_period_h, self.measured_outputs)
        if self.start_date is not None and self.start_time is None:
            raise InputError(
                "a start date needs a start time", field="start_time", value=None,
                fix="give the clock time of hour 0 too",
            )  # fmt: skip
        if self.route is not None and self.route not in ROUTES:
            raise InputError(
                f"unknown route {self.route!r}",
                field="route",
                value=self.route,
                fix=", ".join(ROUTES),
            )
        if self.device is not None and self.device not in DEVICES:
            raise InputError(
                f"unknown delivery {self.device!r}",
                field="device",
                value=self.device,
                fix=", ".join(DEVICES),
            )
        if self.drop_factor is not None:
            delivery.check_drop_factor(self.drop_factor)
        if not (
            isinstance(self.resuscitation_boluses, int) and 0 <= self.resuscitation_boluses <= 10
        ):
            raise InputError(
                "resuscitation boluses must be a whole number from 0 to 10",
                field="resuscitation_boluses",
                value=self.resuscitation_boluses,
            )
        for name, low, high, unit in (
            ("age_weeks", 0, 52 * 30, "weeks"),
            ("serum_na", 80, 230, "mmol/L"),
            ("serum_k", 0.5, 12, "mmol/L"),
            ("urine_osmolality", 20, 12000, "mOsm/kg"),
            ("kcl_mmol_per_l", 0, 200, "mmol/L"),
            ("max_na_change_per_h", *MAX_NA_CHANGE_RANGE_MMOL_PER_L_H, "mmol/L/h"),
            ("body_temp_c", -5, 50, "°C"),
            ("pcv_percent", 3, 90, "%"),
            ("total_solids_g_per_dl", 1, 15, "g/dL"),
        ):
            value = getattr(self, name)
            if value is not None:
                _require(value, name, low, high, unit)
        if self.usg is not None:
            maintenance.usg_to_osmolality(self.usg)
        if self.serum_hco3 is not None:
            _check_bicarbonate(self.serum_hco3)
        electrolytes.loss_composition(self.loss_type)  # an unknown type is refused by name
        _check_renal_output(self.renal_output, renal_disease=self.renal_disease)
        _check_diuretics(self.diuretics)
        if self.dehydration_findings:
            hydration.check_finding_ids(self.dehydration_findings)
        fluids.fluid(self.fluid_id)  # an unknown fluid is refused by name
        if self.bolus_fluid_id is not None:
            fluids.fluid(self.bolus_fluid_id)

    @property
    def resuscitation_fluid_id(self) -> str:
        """The fluid the resuscitation boluses are given as."""
        return self.bolus_fluid_id or self.fluid_id


def _weight_text(weight_kg: float, ledger: Ledger) -> str:
    """The patient's weight in the unit its species' weight is usually given in, with all
    its figures (65 g, 117.5 g), as Plan.weight_unit chooses it."""
    return weight_text(weight_kg, preferred_weight_unit(ledger.value("body_weight_kg").number))


def _require(value: object, name: str, low: float, high: float, unit: str) -> None:
    require_number(value, name, low=low, high=high, unit=unit)


def _check_bicarbonate(value: object) -> None:
    """An entered serum bicarbonate within :data:`SERUM_HCO3_RANGE_MMOL_PER_L`, refused in
    words that name the likely slip."""
    low, high = SERUM_HCO3_RANGE_MMOL_PER_L
    require_number(
        value, "serum_hco3", low=low, high=high, unit="mmol/L",
        fix="serum bicarbonate (HCO3) is usually 15–30 mmol/L: check that a sodium (about "
        "140) or a chloride (about 110) was not typed into the bicarbonate box, and that a "
        "base excess was not typed instead",
    )  # fmt: skip


def consumed_ml(outflow: tuple[tuple[float, float], ...], end_h: float, hours):  # noqa: ANN001, ANN201
    """Volume that has left the patient by each hour: piecewise constant rates
    ``(from hour, mL/h)``. After the plan's last phase (``end_h``) the patient's own
    intake is taken to match its losses, so nothing more is counted."""
    t = np.minimum(np.asarray(hours, dtype=float), end_h)
    starts = [start for start, _ in outflow]
    ends = [*starts[1:], np.inf]
    total = np.zeros_like(t)
    for start, end, (_, rate) in zip(starts, ends, outflow, strict=True):
        # minimum(maximum()) rather than clip: the same, without clip's per-call overhead
        total = total + rate * np.minimum(np.maximum(t - start, 0.0), end - start)
    return total if total.ndim else float(total)


# Software bounds, checked before any work (issue 17: plan time grew with the periods),
# not clinical values (common practice, no source): hourly ins-and-outs for three weeks is
# 504 periods, and no stay measured period by period lasts 60 days without the plan being
# started afresh.
MAX_INS_AND_OUTS_PERIODS = 500
# The Na correction limit a clinician may set (plan and `vetfluid-cli sodium` alike): the
# shipped 0.5 mmol/L/h (Adrogué & Madias 2000) lies well inside; the ends are plausibility
# bounds (common practice, no source).
MAX_NA_CHANGE_RANGE_MMOL_PER_L_H = (0.05, 5.0)
MAX_PLAN_HORIZON_H = 60 * 24.0


def _check_ins_and_outs_size(
    period_h: float | None, measured: tuple[tuple[float, float], ...]
) -> None:
    """Refuse more measured periods, or a longer plan, than a clinic could need."""
    if period_h is None:
        return
    if len(measured) > MAX_INS_AND_OUTS_PERIODS:
        raise InputError(
            f"{len(measured)} measured ins-and-outs periods is more than the "
            f"{MAX_INS_AND_OUTS_PERIODS} periods one plan holds",
            field="measured_outputs", value=len(measured),
            fix="start a new plan from today's weight and measurements",
        )  # fmt: skip
    horizon_h = (len(measured) + 1) * float(period_h)
    if horizon_h > MAX_PLAN_HORIZON_H:
        raise InputError(
            f"{len(measured)} measured periods of {float(period_h):g} h run the plan to "
            f"{horizon_h:g} hours, longer than the {MAX_PLAN_HORIZON_H:g} hours (60 days) one "
            "plan covers",
            field="measured_outputs", value=len(measured),
            fix="start a new plan from today's weight and measurements",
        )  # fmt: skip


def _check_renal_output(renal_output: object, *, renal_disease: bool) -> None:
    if renal_output is None:
        return
    if renal_output not in RENAL_OUTPUTS:
        raise InputError(f"unknown renal output {renal_output!r}", field="renal_output",
                         value=renal_output, fix=", ".join(RENAL_OUTPUTS))  # fmt: skip
    if not renal_disease:
        raise InputError(
            f"a renal output ({renal_output}) describes a diseased kidney",
            field="renal_output", value=renal_output,
            fix="tick renal disease, or leave the renal output out",
        )  # fmt: skip


def _check_diuretics(doses: object) -> None:
    """Each diuretic: a drug on record, a route it is given by, a dose above 0, hours on
    the plan's clock (an infusion from its start to a later end, a single dose at one)."""
    if not isinstance(doses, tuple) or not all(isinstance(d, tuple) and len(d) == 5
                                               for d in doses):  # fmt: skip
        raise InputError(
            "diuretics must be (drug, dose, route, start hour, end hour) per dose",
            field="diuretics", value=None,
        )  # fmt: skip
    if len(doses) > MAX_DIURETIC_DOSES:
        raise InputError(f"{len(doses)} diuretic doses is more than the {MAX_DIURETIC_DOSES} "
                         "one plan holds", field="diuretics", value=len(doses))  # fmt: skip
    for drug_id, dose, route, start_h, end_h in doses:
        if not isinstance(drug_id, str) or not isinstance(route, str):
            raise InputError("a diuretic's drug and route are ids", field="diuretics", value=None)
        drug = diuretics.drug(drug_id)
        if route not in drug.routes:
            kind = "an infusion" if route == "cri" else f"by the route {route!r}"
            raise InputError(
                f"no {drug.name} dose given as {kind} is on record" if route == "cri"
                else f"no {drug.name} dose {kind} is on record",
                field="diuretic route", value=None, fix=", ".join(drug.routes),
            )  # fmt: skip
        unit = drug.dose_unit(route)
        require_number(dose, f"{drug.name} dose", positive=True, high=MAX_DIURETIC_DOSE,
                       unit=unit)  # fmt: skip
        for hour in (start_h, end_h):
            require_number(hour, f"{drug.name} hour", low=0, high=MAX_PLAN_HORIZON_H, unit="h")
        if route == "cri" and not end_h > start_h:
            raise InputError(
                f"a {drug.name} infusion needs an end hour after its start", field="diuretics",
                value=None, fix="give the hours it starts and ends, e.g. 2 and 10",
            )  # fmt: skip
        if route != "cri" and end_h != start_h:
            raise InputError(
                f"a single {drug.name} dose is given at one hour", field="diuretics",
                value=None, fix="give the same start and end hour, or an infusion",
            )  # fmt: skip
    # the same drug twice at one hour is a slip (a doubled entry or "0,0"), never two doses
    given_at = [(drug_id, float(start_h)) for drug_id, _, route, start_h, _ in doses
                if route != "cri"]  # fmt: skip
    twice = sorted({entry for entry in given_at if given_at.count(entry) > 1})
    if twice:
        drug_id, hour = twice[0]
        raise InputError(
            f"{diuretics.drug(drug_id).name} is entered twice at hour {hour:g}",
            field="diuretics", value=None,
            fix="enter each dose once; a larger dose is one dose of that size",
        )  # fmt: skip


def _check_dosing(interval_h: object, sites: object, soaks: object) -> None:
    """The clinician's interval (:data:`delivery.CHOSEN_INTERVALS_H`), most sites per dose
    (1 to :data:`delivery.MOST_SITES_CHOSEN`) and soaks a day, refused in words."""
    if interval_h is not None and (
        isinstance(interval_h, bool) or not isinstance(interval_h, int | float)
        or float(interval_h) not in delivery.CHOSEN_INTERVALS_H
    ):  # fmt: skip
        raise InputError(
            f"a dosing interval of {interval_h!r} h is not one the plan gives",
            field="dose_interval_h", value=interval_h,
            fix="give divided doses every 6, 8, 12 or 24 h, or leave it to the plan",
        )  # fmt: skip
    most = delivery.MOST_SITES_CHOSEN
    if sites is not None and (
        isinstance(sites, bool) or not isinstance(sites, int) or not 1 <= sites <= most
    ):
        raise InputError(
            f"the most sites per dose must be a whole number from 1 to {most}",
            field="max_sites_per_dose", value=sites,
            fix="give how many injection sites one dose may use, or leave it to the plan",
        )  # fmt: skip
    if isinstance(soaks, bool) or not isinstance(soaks, int) or not 0 <= soaks <= MAX_SOAKS_PER_DAY:
        raise InputError(
            f"soaks a day must be a whole number from 0 to {MAX_SOAKS_PER_DAY}",
            field="soaks_per_day", value=soaks,
        )  # fmt: skip


def _check_measured(measured: object) -> None:
    if not isinstance(measured, tuple) or not all(
        isinstance(m, tuple) and len(m) == 2 for m in measured
    ):
        raise InputError(
            "measured outputs must be (urine mL, other losses mL) per period",
            field="measured_outputs", value=measured,
        )  # fmt: skip
    for urine, other in measured:
        require_number(urine, "measured urine", low=0, high=1e6, unit="mL")
        require_number(other, "measured other losses", low=0, high=1e6, unit="mL")


@dataclass(frozen=True, kw_only=True)
class Plan:
    """A checked, timed fluid plan; every number traceable to the request and the table."""

    request: PlanRequest
    species_name: str
    maintenance: maintenance.Maintenance
    dehydration_percent: float
    dehydration_estimate: hydration.DehydrationEstimate | None
    deficit_ml: float
    free_water_deficit_ml: float | None
    phases: tuple[Phase, ...]
    schedule: tuple[ScheduleEntry, ...]
    fluid_name: str
    fluid_na_mmol_per_l: float
    fluid_k_mmol_per_l: float
    tonicity: fluids.Tonicity
    route: str
    device: str
    resuscitation: resuscitation.Resuscitation | None
    potassium: electrolytes.PotassiumSummary | None
    sodium: electrolytes.SodiumSummary | None
    water_budget: maintenance.WaterBudget | None
    findings: tuple[Finding, ...]
    provenance: tuple[SpeciesValue, ...] = field(repr=False)
    bag: fluids.Fluid = field(repr=False)  # the fluid with its additives
    bolus_fluid: fluids.Fluid = field(repr=False)  # the plain fluid, for boluses
    citations: dict[str, str] = field(default_factory=dict, repr=False)  # source id → citation
    # What leaves the patient: (from hour, mL/h), each rate until the next; maintenance and
    # losses, or in ins-and-outs mode insensible loss + what was measured.
    outflow: tuple[tuple[float, float], ...] = ((0.0, 0.0),)
    ins_and_outs: tuple[InsAndOutsRow, ...] = ()  # the period table, in ins-and-outs mode
    diuretics: tuple[DiureticDose, ...] = ()  # the diuretics on the clock
    # the body as the plan's sodium check followed it (kidney free to dilute), on the
    # course's grid: the course reuses it rather than follow the same body again
    body: body.BodyCourse | None = field(default=None, repr=False, compare=False)

    @property
    def end_h(self) -> float:
        return max(p.end_h for p in self.phases)

    @property
    def start_moment(self) -> datetime | None:
        """Hour 0 on the calendar, when the plan has a start date and time."""
        r = self.request
        if r.start_date is None or r.start_time is None:
            return None
        return datetime.combine(r.start_date, r.start_time)

    def moment_at(self, hour: float) -> datetime | None:
        """The date and time of an hour of the plan, when it is on the calendar."""
        start = self.start_moment
        return None if start is None else start + timedelta(hours=hour)

    def consumed_ml(self, hours):  # noqa: ANN001, ANN201 — float or array in, same out
        """Volume that has left the patient by each hour, as the plan assumes it
        (:func:`consumed_ml`)."""
        return consumed_ml(self.outflow, self.end_h, hours)

    @property
    def regimen(self) -> body.Regimen:
        """What the body is given and loses under this plan (:mod:`vetfluid.planning.body`)."""
        return body.Regimen(
            request=self.request, phases=self.phases, bag=self.bag,
            bolus_fluid=self.bolus_fluid, diuretics=self.diuretics,
            maintenance=self.maintenance, deficit_ml=self.deficit_ml,
            consumed_ml=self.consumed_ml,
        )  # fmt: skip

    @property
    def total_ml_first_24h(self) -> float:
        return sum(p.volume_between(0.0, 24.0) for p in self.phases)

    @property
    def weight_unit(self) -> str:
        """g or kg: the unit this species' weight is usually given in (a 65 g gerbil,
        not 0.065 kg), as the patient form chooses it (units.preferred_weight_unit)."""
        typical = next(
            (v.number for v in self.provenance if v.parameter == "body_weight_kg"),
            self.request.weight_kg,
        )
        return preferred_weight_unit(typical)

    @property
    def has_hard_limit(self) -> bool:
        return worst(self.findings) == "hard"

    def unacknowledged(self, acknowledged: dict[str, str]) -> list[Finding]:
        """What blocks 'ready': every hard finding, and soft ones without a written reason."""
        return [
            f
            for f in self.findings
            if f.severity == "hard"
            or (f.severity == "soft" and not acknowledged.get(f.code, "").strip())
        ]

    @property
    def main_phase(self) -> Phase:
        """The first phase after resuscitation (replacement, else maintenance)."""
        return next(p for p in self.phases if p.kind != "resuscitation")

    @property
    def unverified_values(self) -> list[SpeciesValue]:
        return [v for v in self.provenance if v.unverified]


# ---- building ----------------------------------------------------------------------------------
def _route_and_device(ledger: Ledger, request: PlanRequest) -> tuple[str, str]:
    """A line when the patient is big enough, divided boluses otherwise."""
    line_min = ledger.value("continuous_line_min_kg")
    small = request.weight_kg < line_min.number
    chelonian = ledger.species.taxon_group == "chelonian"
    line_asked = request.device in ("pump", "gravity", "syringe")
    marrow = _intraosseous_possible(ledger)
    if request.route == "io" and not marrow:
        raise InputError(
            f"an intraosseous line is not possible in a {ledger.species.common_name.lower()}: "
            "it has no limb bone to take the needle",
            field="route", value="io",
            fix="choose IV (a vein), or divided doses under the skin or into the coelom",
        )  # fmt: skip
    if small and line_asked:
        # a line asked for in a small patient: the marrow, not a vein (a snake has none)
        default_route = "io" if marrow else "iv"
    else:
        default_route = "iv" if not small else ("icoel" if chelonian else "sc")
    route = request.route or default_route
    device = request.device or ("pump" if route in LINE_ROUTES else "divided")
    if route not in LINE_ROUTES and device != "divided":
        raise InputError(
            f"{schedule.route_text(route)} fluids are given as divided boluses, not by {device}",
            field="device",
            value=device,
            fix="choose divided boluses, or an IV/IO route",
        )
    if route in LINE_ROUTES and device == "divided":
        raise InputError(
            "divided boluses are planned for SC, intracoelomic, epicoelomic, IP or oral routes",
            field="device",
            value=device,
            fix="choose a pump, syringe pump or gravity drip for a line",
        )
    _check_route_for_species(ledger, request, route=route, device=device)
    if device == "gravity" and request.drop_factor is None:
        raise InputError(
            "a gravity drip needs the giving set's drop factor",
            field="drop_factor",
            value=None,
            fix="enter the drops/mL printed on the set (10, 15, 20 or 60)",
        )
    if small and request.route is None and line_asked and marrow:
        ledger.add(
            "info",
            "LINE_ASSUMED_IO",
            f"At {_weight_text(request.weight_kg, ledger)} a line is planned as intraosseous, "
            "the usual line in a patient this small.",
            "Choose IV instead if a vein is catheterised.",
            line_min.source_id,
        )
    elif small and request.route is None:
        ledger.add(
            "info",
            "DIVIDED_BOLUSES",
            f"At {_weight_text(request.weight_kg, ledger)} this patient is below the "
            f"{format_quantity(line_min.number, 'kg')} at which a continuous line is practical; "
            "fluids are planned as divided boluses.",
            "Choose an IV or IO route instead if a line is in place.",
            line_min.source_id,
        )
    if device == "divided" and route != "sc":
        ledger.add(
            "info",
            "ABSORPTION_TAKEN_AS_SC",
            f"No absorption time for {schedule.route_text(route)} doses is on record: the "
            f"course and the sodium check take each dose as absorbed over "
            f"{delivery.SC_ABSORPTION_H:g} h, as fluid under the skin.",
            "Read the predicted course as an estimate; weigh the patient and reassess often.",
        )
    return route, device


def _intraosseous_possible(ledger: Ledger) -> bool:
    """Whether the species can take an intraosseous line (``intraosseous_possible``;
    absent: yes — only snakes, with no limb bones, say no)."""
    value = ledger.table.get(ledger.species_id, "intraosseous_possible")
    return value is None or bool(value.value)


def _line_words(ledger: Ledger) -> str:
    """The line that gives any rate, for this species: ``an IO or IV line`` (a snake: IV)."""
    return "an IO or IV line" if _intraosseous_possible(ledger) else "an IV line"


def _check_route_for_species(
    ledger: Ledger, request: PlanRequest, *, route: str, device: str
) -> None:
    """A divided route is planned only for a species with its volume limit on record (IP in
    small rodents, epicoelomic in chelonians, …: species_data/parameters.csv); the
    clinician's interval and sites belong to divided doses, and a route into one space or by
    mouth takes one injection or tube per dose (delivery.ONE_SITE_ROUTES)."""
    parameter = SITE_LIMIT_PARAMETER.get(route)
    if parameter is not None and ledger.table.get(request.species_id, parameter) is None:
        label = ledger.table.definitions[parameter].label
        raise InputError(
            f"{schedule.route_text(route)} fluids are not planned for "
            f"{ledger.species.common_name}: no “{label}” is on record for it (this route is "
            f"planned for {ROUTE_TAXA[route]})",
            field="route", value=route,
            fix="choose another route, or add the value with its source as a clinic override",
        )  # fmt: skip
    chosen = request.dose_interval_h is not None or request.max_sites_per_dose is not None
    if chosen and device != "divided":
        raise InputError(
            f"a dosing interval and sites per dose are for divided doses, not a {device}",
            field="dose_interval_h" if request.dose_interval_h is not None
            else "max_sites_per_dose",
            value=request.dose_interval_h or request.max_sites_per_dose,
            fix="leave them out for a line, or choose divided boluses",
        )  # fmt: skip
    sites = request.max_sites_per_dose
    if sites is not None and sites > 1 and route in delivery.ONE_SITE_ROUTES:
        raise InputError(
            f"{schedule.route_text(route)} fluids are one injection (or one tube) per dose, "
            f"not {sites} sites",
            field="max_sites_per_dose", value=sites,
            fix="give 1 site, or leave it to the plan; more punctures do not make room",
        )  # fmt: skip


def _species_potassium_band(
    ledger: Ledger, request: PlanRequest
) -> electrolytes.SpeciesPotassiumBand | None:
    """The serum-K scale's band for this patient, judged against its species' own
    reference interval (:func:`electrolytes.potassium_band_for_species`)."""
    if request.serum_k is None:
        return None
    normal = ledger.value("serum_k_mmol_per_l")
    return electrolytes.potassium_band_for_species(
        request.serum_k, species_id=request.species_id,
        species_low=normal.low if normal.low is not None else normal.number,
        species_high=normal.high if normal.high is not None else normal.number,
    )  # fmt: skip


def _potassium_to_add(
    request: PlanRequest, band: electrolytes.SpeciesPotassiumBand | None
) -> float:
    """KCl (mmol) to add per litre: by hand, else from the serum-K scale, else none."""
    if request.kcl_mmol_per_l is not None:
        return request.kcl_mmol_per_l
    if band is not None and band.band is not None:
        return band.band.kcl_mmol_per_l
    return 0.0


def _kcl_within_route(ledger: Ledger, request: PlanRequest, *, kcl: float, route: str) -> float:
    """The scale's KCl, lowered so the bag holds no more potassium than its route allows
    (route_limits.csv: 35 mmol/L under the skin, DiBartola 2012), with a note saying so."""
    limits = [r for r in fluid_roles.route_limits(route) if r.limit == "max_k_mmol_per_l"]
    if kcl <= 0 or not limits:
        return kcl
    most = min(r.value for r in limits)
    own_k = fluids.composition(fluids.fluid(request.fluid_id)).k_mmol_per_l
    # added KCl is diluted by its own volume (2 mmol/mL): k_bag = (own·1000 + x)/(1000 + x/2)
    room = max(0.0, (most - own_k) * 1000.0 / (1000.0 - most / 2.0))
    if kcl <= room + 1e-9:
        return kcl
    ledger.add(
        "info",
        "KCL_HELD_TO_ROUTE",
        f"The serum-K scale asks for {format_quantity(kcl, 'mmol/L')} KCl; "
        f"{schedule.route_text(route)} fluid may hold at most {format_quantity(most, 'mmol/L')}"
        f" potassium, so {format_quantity(room, 'mmol/L', decimals=1)} is added.",
        "Recheck serum K in 4–6 h; for more potassium give it IV where the rate can be set.",
        limits[0].source_id,
    )
    return room


def _bag(request: PlanRequest, kcl_mmol_per_l: float) -> fluids.Fluid:
    """The chosen fluid as a nurse makes it up (:func:`fluids.additive_volumes`): a
    1000 mL bag, the KCl concentrate, then the 50 % dextrose; named by that recipe."""
    base = fluids.fluid(request.fluid_id)
    kcl_ml, dextrose_ml = fluids.additive_volumes(
        1000.0, kcl_mmol_per_l=kcl_mmol_per_l, dextrose_percent=request.dextrose_percent
    )
    bag, volume_ml = base, 1000.0
    parts = [f"{base.name} {format_quantity(volume_ml, 'mL')}"]
    for concentrate_id, added_ml in ((fluids.KCL_CONCENTRATE_ID, kcl_ml),
                                     (fluids.DEXTROSE_CONCENTRATE_ID, dextrose_ml)):  # fmt: skip
        if added_ml <= 0:
            continue
        concentrate = fluids.fluid(concentrate_id)
        bag = fluids.with_additive(
            bag, bag_volume_ml=volume_ml, additive=concentrate, additive_ml=added_ml
        ).fluid
        volume_ml += added_ml
        parts.append(f"{concentrate.name} {format_quantity(added_ml, 'mL')}")
    return bag if bag is base else replace(bag, name=" + ".join(parts))


def _dehydration(
    ledger: Ledger, request: PlanRequest, *, species_name: str
) -> tuple[float, hydration.DehydrationEstimate | None]:
    """The % used: entered, else the low end of the findings band, else 0.

    The band is an estimate the clinician confirms (DiBartola 2012 gives a band, not a
    number): used unconfirmed, it is a soft limit, so a plan is not ready on it unless
    someone enters the % or says why the estimate stands."""
    taxon = ledger.table.taxon_class(request.species_id)
    estimate = (
        hydration.estimate_dehydration(request.dehydration_findings, taxon=taxon)
        if request.dehydration_findings
        else None
    )
    if request.dehydration_percent is not None:
        entered = request.dehydration_percent
        low = estimate.percent_low if estimate is not None else None
        below = estimate is not None and (
            (low is not None and entered < low - 1e-9) or (low is None and entered <= 0)
        )
        if below:  # the % typed says less than the signs ticked: one of them is a slip
            band = (f"{low:g}–{estimate.percent_high:g} %" if low is not None
                    else "dehydration, with no published % band")  # fmt: skip
            ledger.add(
                "soft",
                "DEHYDRATION_BELOW_FINDINGS",
                f"The dehydration entered, {entered:g} %, is below what the findings ticked "
                f"point to ({band}; {estimate.table_name}): the deficit may be too small.",
                "Check the findings and the % entered; enter the % the examination supports.",
                estimate.source_id or None,
            )
        return entered, estimate
    if estimate is None:
        return 0.0, None
    if estimate.suggested_percent is None:  # a reptile's signs: no published band
        ledger.add(
            "hard",
            "DEHYDRATION_PERCENT_NEEDED",
            "The signs recorded say this patient is dehydrated, but no published table gives "
            f"a % for them ({estimate.table_name}): the plan has no deficit to replace.",
            "Enter the dehydration % you estimate from the signs, the weight lost and the history.",
            estimate.source_id or None,
        )
        return 0.0, estimate
    ledger.add(
        "soft",
        "DEHYDRATION_FROM_FINDINGS",
        f"Findings suggest {estimate.percent_low:g}–{estimate.percent_high:g} % dehydration; "
        f"the plan uses {estimate.suggested_percent:g} %, not yet confirmed. "
        + f"({estimate.table_name}) "
        + hydration.findings_caveat(request.species_id, species_name, taxon),
        f"Enter the dehydration % yourself to confirm it ({estimate.suggested_percent:g} % or "
        "another), or acknowledge why the estimate stands.",
        estimate.source_id,
    )
    return estimate.suggested_percent, estimate


def _resuscitation_phases(
    ledger: Ledger, request: PlanRequest, *, route: str, drop_factor: float | None
) -> tuple[list[Phase], resuscitation.Resuscitation | None]:
    """Boluses one after another, each followed by reassessment; never with KCl."""
    if not request.resuscitation_boluses:
        return [], None
    if route not in LINE_ROUTES:
        ledger.add(
            "hard",
            "RESUSCITATION_NEEDS_LINE",
            f"Resuscitation boluses cannot be given {schedule.route_text(route)}.",
            "Place an IV or IO line for shock.",
        )
        return [], None
    bolus_fluid = fluids.fluid(request.resuscitation_fluid_id)
    roles = fluid_roles.roles(bolus_fluid.fluid_id)
    res = resuscitation.resuscitation(
        ledger.table, request.species_id, request.weight_kg, route=route,
        fluid_dose_ml_per_kg=roles.bolus_max_ml_per_kg if roles.resuscitation else None,
        fluid_min_minutes=roles.bolus_min_minutes,
    )  # fmt: skip
    ledger.use(*res.provenance)
    phases = []
    hour = 0.0
    count = request.resuscitation_boluses
    for number in range(1, count + 1):
        end = hour + res.minutes / 60.0
        phases.append(
            schedule.continuous_phase(
                kind="resuscitation",
                start_h=hour,
                end_h=end,
                rate_ml_per_h=res.rate_ml_per_h,
                route=route,
                drop_factor=drop_factor,
                kcl_mmol_per_l=0.0,
                fluid_name=f"{bolus_fluid.name} with nothing added",
                note=f"bolus {number} of {count}; reassess before the next; no KCl or "
                "dextrose in a resuscitation bolus",
            )
        )
        hour = end
    safety.check_bolus_fluid(ledger, bolus_fluid, roles, res, count)
    safety.check_hypertonic_in_hypernatraemia(
        ledger, bolus_fluid=bolus_fluid, serum_na=request.serum_na,
        normal=ledger.value("serum_na_mmol_per_l"),
    )  # fmt: skip
    if roles.bolus_max_ml_per_kg is None:
        safety.check_boluses(ledger, res, count)
    return phases, res


Segment = tuple[str, float, float, float]  # kind, start h, end h, mL/h


def _standard_segments(
    *, start_h: float, deficit_ml: float, replace_hours: float, background_ml_per_h: float
) -> list[Segment]:
    """Replacement (deficit + maintenance + losses), then maintenance to hour 24 or later."""
    segments = []
    hour = start_h
    if deficit_ml > 0:
        end = hour + replace_hours
        segments.append(
            ("replacement", hour, end, deficit_ml / replace_hours + background_ml_per_h)
        )
        hour = end
    segments.append(
        ("maintenance", hour, max(24.0, hour + MAINTENANCE_TAIL_H), background_ml_per_h)
    )
    return segments


def _ins_and_outs_segments(
    ledger: Ledger, request: PlanRequest, *, start_h: float, deficit_ml: float
) -> tuple[list[Segment], tuple[InsAndOutsRow, ...], tuple[tuple[float, float], ...]]:
    """Ins-and-outs periods from hour 0: each gives insensible loss + the urine and other
    losses measured over the period before it (before the first: the losses entered), plus
    its share of the deficit over ``replace_hours``. The plan runs to the end of the
    period after the last one measured; it is recalculated as each period is measured.
    Returns the segments, the period table and the outflow (measured, then assumed)."""
    period = float(request.ins_and_outs_period_h or 0.0)
    insensible = ledger.value("insensible_loss_ml_per_kg_day")
    per_day = insensible.number * request.weight_kg
    rows = tuple(
        ins_and_outs(
            weight_kg=request.weight_kg, insensible_ml_per_kg_day=insensible.number,
            period_h=period, measured=list(request.measured_outputs),
        )
    )  # fmt: skip
    replace_end = start_h + request.replace_hours
    # nothing measured before the first period: insensible loss + the losses entered, and no
    # urine (the safe guess for an oliguric patient)
    first_guess = (per_day + request.losses_ml_per_day) / 24.0

    def deficit_rate(a: float, b: float) -> float:
        overlap = max(0.0, min(b, replace_end) - max(a, start_h))
        return deficit_ml / request.replace_hours * overlap / (b - a) if deficit_ml > 0 else 0.0

    def needs(number: int) -> float:  # what the period before it measured, or the best guess
        if number == 0 or not rows:
            return first_guess
        return rows[min(number, len(rows)) - 1].next_rate_ml_per_h

    segments: list[Segment] = []
    # every period measured, the next one, and at least the period after the boluses
    # (bolus ends are sums of minutes: 6 × 20 min can come to 1.9999999999999998 h)
    for number in range(max(len(rows) + 1, math.floor(start_h / period + 1e-9) + 1)):
        a, b = max(number * period, start_h), (number + 1) * period
        if b - a > 1e-6:  # periods taken up by resuscitation boluses are skipped
            segments.append(("ins and outs", a, b, needs(number) + deficit_rate(a, b)))
    # what leaves: the measured periods, then insensible loss + the last period measured
    outflow = tuple((r.start_h, r.replace_ml / period) for r in rows) + (
        (len(rows) * period, rows[-1].replace_ml / period if rows else first_guess),
    )
    return segments, rows, outflow


def _fluid_phases(
    ledger: Ledger,
    segments: list[Segment],
    *,
    route: str,
    device: str,
    drop_factor: float | None,
    kcl_mmol_per_l: float,
    fluid_name: str,
    syringe_size_ml: float,
    ceiling: delivery.DoseCeiling | None = None,
) -> list[Phase]:
    """The segments as phases for the chosen delivery (continuous or divided boluses; with
    the clinician's interval and sites, each dose at most ``ceiling``)."""
    if device == "divided":
        site_limit = ledger.value(SITE_LIMIT_PARAMETER[route])
        return [
            schedule.intermittent_phase(
                kind=kind,
                start_h=start,
                end_h=end,
                need_ml_per_h=rate,
                route=route,
                per_site_limit_ml=site_limit.number * ledger.weight_kg,
                kcl_mmol_per_l=kcl_mmol_per_l,
                fluid_name=fluid_name,
                interval_h=ceiling.interval_h if ceiling else None,
                sites_at_most=ceiling.sites if ceiling else None,
            )
            for kind, start, end, rate in segments
        ]
    return [
        schedule.continuous_phase(
            kind=kind,
            start_h=start,
            end_h=end,
            rate_ml_per_h=rate,
            route=route,
            drop_factor=drop_factor,
            kcl_mmol_per_l=kcl_mmol_per_l,
            fluid_name=fluid_name,
            syringe_size_ml=syringe_size_ml if device == "syringe" else None,
        )
        for kind, start, end, rate in segments
    ]


# The longest a replacement is stretched to fit the clinician's doses: a week. Beyond it the
# plan keeps the period asked and says how long the doses would take (common practice, no
# source: a plan is re-made daily, and a deficit left for longer is not a plan).
MAX_REPLACEMENT_AT_DOSES_H = 7 * 24.0


def _chosen_ceiling(
    ledger: Ledger, request: PlanRequest, segments: list[Segment], *, route: str, device: str
) -> delivery.DoseCeiling | None:
    """The most one divided dose holds at the clinician's interval and sites (None for a
    line): sites not given are the route's usual most (:func:`delivery.most_sites`: one
    injection a dose into a space, one tube by mouth); an interval not given is the longest
    whose first dose fits those sites (:func:`delivery.divided_boluses`).

    Doses are held to their sites even when nothing was chosen: a deficit that does not fit
    is replaced more slowly and the plan says how long it takes, never by spreading each
    dose over more sites or punctures (issue 20: a 70 g gerbil had been planned 24
    injections a day, a tortoise two punctures of its coelom a dose)."""
    if device != "divided":
        return None
    limit_ml = ledger.value(SITE_LIMIT_PARAMETER[route]).number * ledger.weight_kg
    sites = request.max_sites_per_dose or delivery.most_sites(route)
    interval = request.dose_interval_h or delivery.divided_boluses(
        need_ml_per_h=segments[0][3], per_site_limit_ml=limit_ml, route=route,
        sites_at_most=sites,
    ).interval_h  # fmt: skip
    return delivery.dose_ceiling(
        route=route, interval_h=float(interval), sites=sites, per_site_limit_ml=limit_ml
    )


def _dose_words(ceiling: delivery.DoseCeiling) -> str:
    """``every 8 h at most 1.4 mL SC (2 sites of 0.7 mL, 10 mL/kg per site)``."""
    route = schedule.route_text(ceiling.route)
    per_site = format_quantity(ceiling.ml_per_site, "mL", decimals=2)
    sites = f"{schedule.sites_text(ceiling.sites)} of {per_site}"
    if ceiling.route == "oral":
        sites = "one go"
    return (
        f"every {ceiling.interval_h:g} h at most "
        f"{format_quantity(ceiling.dose_ml, 'mL', decimals=2)} {route} ({sites})"
    )


def _duration(hours: float) -> str:
    """``36 h``; from two days on with the days beside: ``72 h (3 days)``; past a week in
    days only: ``about 128 days``."""
    if hours > MAX_REPLACEMENT_AT_DOSES_H:
        return f"about {hours / 24:.0f} days"
    return f"{hours:g} h" if hours < 48 else f"{hours:g} h ({hours / 24:.3g} days)"


def _what_would(
    ledger: Ledger,
    request: PlanRequest,
    *,
    deficit_ml: float,
    background_ml_per_h: float,
    besides: delivery.DoseCeiling | None = None,
) -> str:
    """What would replace the deficit: each divided route the species has, every 6 h in its
    usual most sites, with the time it takes (not the doses ``besides``, already said); and
    a line, which gives the need at any rate."""
    options = []
    for route, parameter in SITE_LIMIT_PARAMETER.items():
        value = ledger.table.get(request.species_id, parameter)
        if value is None:
            continue
        best = delivery.dose_ceiling(
            route=route, interval_h=min(delivery.DIVIDED_INTERVALS_H),
            sites=delivery.most_sites(route), per_site_limit_ml=value.number * ledger.weight_kg,
        )  # fmt: skip
        if besides is not None and (best.route, best.interval_h, best.sites) == (
            besides.route, besides.interval_h, besides.sites,
        ):  # fmt: skip
            continue
        if deficit_ml <= 0:  # maintenance alone: the routes whose doses give it
            if best.ml_per_h >= background_ml_per_h:
                options.append(f"{_dose_words(best)} gives it")
            continue
        hours = delivery.replacement_hours(
            deficit_ml=deficit_ml, background_ml_per_h=background_ml_per_h, ceiling=best
        )
        if hours is not None and hours <= MAX_REPLACEMENT_AT_DOSES_H:
            options.append(f"{_dose_words(best)} replaces it in {_duration(hours)}")
    found = "; ".join(options) + "; " if options else ""
    return found + f"{_line_words(ledger)} gives the need at any rate."


def _faster_doses(ceiling: delivery.DoseCeiling) -> str:
    """What the clinician may still change on this route: ``, or choose more sites or a
    shorter interval`` — only what is left (never an interval under the shortest allowed,
    never more sites on a route of one injection or tube a dose)."""
    more_sites = ceiling.route not in delivery.ONE_SITE_ROUTES
    shorter = ceiling.interval_h > min(delivery.CHOSEN_INTERVALS_H)
    words = [w for w, ok in (("more sites", more_sites), ("a shorter interval", shorter)) if ok]
    return f", or choose {' or '.join(words)}" if words else ""


def _within_the_doses(
    ledger: Ledger,
    request: PlanRequest,
    segments: list[Segment],
    ceiling: delivery.DoseCeiling,
    *,
    deficit_ml: float,
    background_ml_per_h: float,
) -> list[Segment]:
    """The segments as the clinician's doses give them: when replacement needs more a dose
    than ``ceiling`` holds, it runs over as many whole intervals as the room above
    maintenance and losses takes (:func:`delivery.replacement_hours`), never in more sites;
    maintenance then runs whole intervals to hour 24 and at least 12 h on. When the doses
    give no more than maintenance (or would take over a week), the period asked stays, each
    dose holds the most it can, and the plan says so (soft). Ins-and-outs periods keep
    their hours; a period needing more than the doses give is said the same way."""
    interval = ceiling.interval_h
    short = [s for s in segments if s[3] * interval > ceiling.dose_ml + 1e-9]
    if not short:
        if request.ins_and_outs_period_h is not None:
            return segments
    a_day = format_quantity(ceiling.ml_per_h * 24.0, "mL")
    needs = format_quantity(background_ml_per_h * 24.0, "mL")
    hours = (
        delivery.replacement_hours(
            deficit_ml=deficit_ml, background_ml_per_h=background_ml_per_h, ceiling=ceiling
        )
        if deficit_ml > 0 else 0.0
    )  # fmt: skip
    if (
        short
        and request.ins_and_outs_period_h is None
        and deficit_ml > 0
        and (hours is not None and hours <= MAX_REPLACEMENT_AT_DOSES_H)
    ):
        ledger.add(
            "soft", "REPLACEMENT_SLOWED_TO_ROUTE",
            f"Doses {_dose_words(ceiling)} replace the {format_quantity(deficit_ml, 'mL')} "
            f"deficit in {_duration(hours)}, not the "
            f"{request.replace_hours:g} h chosen: a dose holds no more than its sites.",
            "Accept the slower replacement and weigh daily"
            + _faster_doses(ceiling)
            + ". Other ways: "
            + _what_would(ledger, request, deficit_ml=deficit_ml,
                          background_ml_per_h=background_ml_per_h, besides=ceiling),
        )  # fmt: skip
    elif short:
        # a deficit these doses never replace (or not within a week) leaves the patient as
        # dehydrated as it came, or worse: blocked. Doses short of maintenance alone stay a
        # warning (the patient may drink or eat; the reason says so)
        unreplaced = deficit_ml > 0 and request.ins_and_outs_period_h is None
        against = (
            "the measured outputs and losses" if request.ins_and_outs_period_h is not None
            else "maintenance and losses"
        )  # fmt: skip
        ledger.add(
            "hard" if unreplaced else "soft", "DOSES_FALL_SHORT",
            f"Doses {_dose_words(ceiling)} give {a_day} a day against {needs} a day of "
            f"{against}"
            + (
                f" and the {format_quantity(deficit_ml, 'mL')} deficit: at this interval the "
                + ("deficit is never replaced." if hours is None
                   else f"deficit would take {_duration(hours)}.")
                if deficit_ml > 0 else "."
            ),
            "To replace it: " + _what_would(ledger, request, deficit_ml=deficit_ml,
                                            background_ml_per_h=background_ml_per_h),
        )  # fmt: skip
        hours = request.replace_hours
    else:
        hours = request.replace_hours
    if request.ins_and_outs_period_h is not None:
        return segments
    rebuilt: list[Segment] = []
    hour = segments[0][1]
    if deficit_ml > 0:
        rate = deficit_ml / hours + background_ml_per_h
        rebuilt.append(("replacement", hour, hour + hours, rate))
        hour += hours
    tail = math.ceil(round(max(24.0 - hour, MAINTENANCE_TAIL_H) / interval, 9)) * interval
    rebuilt.append(("maintenance", hour, hour + tail, background_ml_per_h))
    return rebuilt


def _potassium(
    request: PlanRequest,
    *,
    kcl: float,
    bag_k: float,
    phases: tuple[Phase, ...],
    main: Phase,
    k_band: electrolytes.SpeciesPotassiumBand | None,
) -> electrolytes.PotassiumSummary | None:
    if kcl <= 0 and request.serum_k is None:
        return None
    w = request.weight_kg
    ceiling = limit("potassium_max_mmol_per_kg_h")
    band = k_band.band if k_band is not None else None
    peak = max(p.average_ml_per_h for p in phases if p.kind != "resuscitation")

    def per_kg_h(rate: float) -> float:
        return electrolytes.potassium_mmol_per_kg_h(
            k_mmol_per_l=bag_k, rate_ml_per_h=rate, weight_kg=w
        )

    return electrolytes.PotassiumSummary(
        serum_k=request.serum_k,
        kcl_mmol_per_l=kcl,
        added_by="entered by hand" if request.kcl_mmol_per_l is not None else "serum-K scale",
        bag_k_mmol_per_l=bag_k,
        mmol_per_kg_per_h=per_kg_h(main.average_ml_per_h),
        peak_rate_ml_per_h=peak,
        peak_mmol_per_kg_per_h=per_kg_h(peak),
        ceiling_mmol_per_kg_per_h=ceiling.value,
        max_rate_ml_per_h=electrolytes.max_rate_for_potassium(
            k_mmol_per_l=bag_k, weight_kg=w, ceiling=ceiling.value
        ),
        band_max_rate_ml_per_kg_h=band.max_rate_ml_per_kg_h if band else None,
        source_id=ceiling.source_id,
    )


def build_plan(request: PlanRequest, table: SpeciesTable | None = None) -> Plan:
    """Build the plan for a request (pure: same request and table, same plan)."""
    table = table or load_table()
    if table.species(request.species_id).rank != "species":
        raise InputError(
            f"{request.species_id!r} is a taxon group, not a species",
            field="species",
            value=request.species_id,
            fix="pick a species; groups only hold shared defaults",
        )
    ledger = Ledger(table, request.species_id, weight_kg=request.weight_kg)
    w = request.weight_kg
    safety.check_weight(ledger, w, neonate=request.neonate)
    safety.check_losses(ledger, request.losses_ml_per_day, w)

    maint = maintenance.maintenance(
        table, request.species_id, w, method=request.maintenance_method,
        body_temp_c=request.body_temp_c,
    )  # fmt: skip
    ledger.use(*maint.provenance)
    safety.check_temperature(ledger, request.body_temp_c, maint)
    safety.check_bicarbonate(ledger, request.serum_hco3)
    species_name = table.species(request.species_id).common_name
    percent, estimate = _dehydration(ledger, request, species_name=species_name)
    safety.check_shock_range(ledger, percent, boluses=request.resuscitation_boluses,
                             taxon=ledger.table.taxon_class(request.species_id))  # fmt: skip
    safety.check_dehydration_entry(ledger, percent=percent)
    deficit = hydration.deficit_ml(w, percent)
    background = maint.ml_per_h + request.losses_ml_per_day / 24.0

    plasma = ledger.value("plasma_osmolality_mosm_per_kg")
    route, device = _route_and_device(ledger, request)
    k_band = _species_potassium_band(ledger, request)
    kcl = _potassium_to_add(request, k_band)
    safety.note_potassium_band(
        ledger, k_band, by_hand=request.kcl_mmol_per_l is not None,
        kcl_by_hand=request.kcl_mmol_per_l,
        fluid_k_mmol_per_l=fluids.composition(fluids.fluid(request.fluid_id)).k_mmol_per_l,
    )  # fmt: skip
    if request.kcl_mmol_per_l is None:  # the scale never chooses more than the route takes
        kcl = _kcl_within_route(ledger, request, kcl=kcl, route=route)
    bag = _bag(request, kcl)
    bag_comp = fluids.composition(bag)
    base = fluids.fluid(request.fluid_id)
    # the bag as given, additives in: one reading for the words and the route's limits
    tone = fluids.tonicity(
        bag,
        plasma_osmolality_mosm_per_kg=plasma.number,
        band_fraction=limit("tonicity_band_fraction").value,
    )
    drop_factor = request.drop_factor if device == "gravity" else None
    safety.check_carrier(ledger, base, fluid_roles.roles(base.fluid_id))
    safety.check_fluid_for_route(
        ledger, route=route, fluid_name=bag.name, tonicity=tone,
        dextrose_g_per_l=bag_comp.dextrose_g_per_l, colloid=bag.colloid is not None,
    )  # fmt: skip
    safety.check_route_limits(
        ledger, route=route, bag=bag, composition=bag_comp, plasma_mosm_per_kg=plasma.number
    )
    safety.check_reptile_dextrose(ledger, request.dextrose_percent)

    bolus_phases, res = _resuscitation_phases(ledger, request, route=route, drop_factor=drop_factor)
    start_h = bolus_phases[-1].end_h if bolus_phases else 0.0
    period_table: tuple[InsAndOutsRow, ...] = ()
    outflow: tuple[tuple[float, float], ...] = ((0.0, background),)
    if request.ins_and_outs_period_h is None:
        segments = _standard_segments(
            start_h=start_h, deficit_ml=deficit, replace_hours=request.replace_hours,
            background_ml_per_h=background,
        )  # fmt: skip
    else:
        segments, period_table, outflow = _ins_and_outs_segments(
            ledger, request, start_h=start_h, deficit_ml=deficit
        )
        safety.note_ins_and_outs(ledger, measured_periods=len(period_table))
        safety.check_measured_urine(
            ledger, request.measured_outputs, period_h=request.ins_and_outs_period_h,
            weight_kg=w,
        )  # fmt: skip
    ceiling = _chosen_ceiling(ledger, request, segments, route=route, device=device)
    if ceiling is not None:
        segments = _within_the_doses(
            ledger, request, segments, ceiling, deficit_ml=deficit, background_ml_per_h=background
        )
    fluid_phases = _fluid_phases(
        ledger, segments, route=route, device=device, drop_factor=drop_factor,
        kcl_mmol_per_l=kcl, fluid_name=bag.name, syringe_size_ml=request.syringe_size_ml,
        ceiling=ceiling,
    )  # fmt: skip
    phases = (*bolus_phases, *fluid_phases)
    main = fluid_phases[0]
    safety.check_set_rates(ledger, [rate for *_, rate in segments], tuple(fluid_phases),
                           device=device)  # fmt: skip
    safety.check_rates_against_shock_dose(ledger, phases, w)
    safety.check_volume_per_hour(ledger, phases, w)
    safety.check_colloid(
        ledger, bag=bag, bolus_fluid=fluids.fluid(request.resuscitation_fluid_id), phases=phases,
        weight_kg=w,
    )  # fmt: skip
    safety.check_divided_sites(
        ledger, phases,
        site_limit_ml=(
            ledger.value(SITE_LIMIT_PARAMETER[route]).number * w if device == "divided" else None
        ),
        one_site_limit=(
            ledger.value(SITE_LIMIT_PARAMETER[route])
            if device == "divided" and route in delivery.ONE_SITE_ROUTES and route != "icoel"
            else None
        ),
    )  # fmt: skip
    safety.check_dose_spacing(ledger, phases)
    end_h = max(ph.end_h for ph in phases)
    safety.check_predicted_gain(
        ledger, phases, consumed=lambda hour: consumed_ml(outflow, end_h, hour),
        weight_kg=w, deficit_ml=deficit,
    )  # fmt: skip

    potassium = _potassium(
        request, kcl=kcl, bag_k=bag_comp.k_mmol_per_l, phases=phases, main=main, k_band=k_band
    )
    if potassium is not None:
        safety.check_potassium(ledger, potassium, weight_kg=w, route=route, device=device)
    safety.check_potassium_delivery(
        ledger, phases, weight_kg=w, bag_k=bag_comp.k_mmol_per_l,
        bolus_k=fluids.composition(fluids.fluid(request.resuscitation_fluid_id)).k_mmol_per_l,
    )  # fmt: skip

    sodium, free_water = None, None
    tbw = hydration.body_water_fraction(
        table,
        request.species_id,
        neonate=request.neonate,
        weight_kg=w,
        age_weeks=request.age_weeks,
    )
    max_change = request.max_na_change_per_h or limit("sodium_max_correction_mmol_per_l_h").value

    normal = ledger.value("serum_na_mmol_per_l")
    # no Na measured: the plan is followed from the species' normal Na
    start_na = request.serum_na if request.serum_na is not None else normal.number
    doses = _diuretic_doses(request)
    regimen = body.Regimen(
        request=request, phases=phases, bag=bag,
        bolus_fluid=fluids.fluid(request.resuscitation_fluid_id), diuretics=doses,
        maintenance=maint, deficit_ml=deficit,
        consumed_ml=lambda hours: consumed_ml(outflow, end_h, hours),
    )  # fmt: skip
    followed = _followed_body(regimen, table, ledger)
    sodium_of = partial(_sodium_course, start_na=start_na, measured=request.serum_na is not None,
                        boluses_end_h=start_h)  # fmt: skip
    na_course = sodium_of(followed)
    # with ADH held where it rests: a kidney that never asked to dilute below that is the
    # same kidney (body.with_adh_held returns it as it is)
    held_body = body.with_adh_held(followed)
    held = na_course if held_body is followed else sodium_of(held_body)
    fastest = electrolytes.max_rate_for_sodium(
        serum_na=start_na, infusate_na_k=bag_comp.na_mmol_per_l + bag_comp.k_mmol_per_l,
        tbw_l=tbw.number * w, max_change_per_h=max_change,
    )  # fmt: skip
    bolus_comp = fluids.composition(regimen.bolus_fluid)
    flows = [
        (
            p.start_h,
            p.end_h,
            p.rate_ml_per_h or 0.0,
            bolus_comp.na_mmol_per_l + bolus_comp.k_mmol_per_l,
        )
        for p in bolus_phases
    ]
    flows += [
        (
            p.start_h,
            p.end_h,
            p.volume_ml / max(p.end_h - p.start_h, 1e-9),
            bag_comp.na_mmol_per_l + bag_comp.k_mmol_per_l,
        )
        for p in fluid_phases
    ]
    mixing = electrolytes.bolus_mixing_change(
        flows, boluses_end_h=start_h, serum_na=start_na, tbw_l=tbw.number * w
    )  # fmt: skip
    safety.check_sodium(
        ledger, na_course, held=held, normal=normal, max_change_per_h=max_change,
        bag_na_k=bag_comp.na_mmol_per_l + bag_comp.k_mmol_per_l, bag_name=bag.name,
        diuretic_names=tuple(dict.fromkeys(d.name for d in doses)),
        carrier_phase=_phase_at(phases, na_course.carrier_hour).kind,
        fastest_carrier_ml_per_h=fastest, bolus_mixing=mixing,
    )  # fmt: skip
    if request.serum_na is not None:
        ledger.use(tbw)
        sodium = electrolytes.sodium_summary(
            serum_na=request.serum_na, infusate_na=bag_comp.na_mmol_per_l,
            infusate_k=bag_comp.k_mmol_per_l, tbw_l=tbw.number * w,
            rate_ml_per_h=main.average_ml_per_h, max_change_per_h=max_change,
            peak_change_per_h=na_course.carrier_change_per_h,
            peak_hour=na_course.carrier_hour,
            peak_phase=_phase_at(phases, na_course.carrier_hour).kind,
        )  # fmt: skip
        reference_high = normal.high if normal.high is not None else normal.number
        if request.serum_na > reference_high:
            free_water = hydration.free_water_deficit_ml(
                weight_kg=w, serum_na=request.serum_na, normal_na=normal.number,
                tbw_fraction=tbw.number,
            )  # fmt: skip
            safety.note_free_water(
                ledger, serum_na=request.serum_na, reference_high=reference_high,
                free_water_ml=free_water, max_change=max_change,
            )  # fmt: skip

    budget = _water_budget(ledger, request)
    heart_or_kidney = request.cardiac_disease or request.renal_disease
    safety.check_urine(ledger, usg=request.usg, budget=budget, overload_risk=heart_or_kidney)
    safety.check_budget_against_maintenance(
        ledger, budget=budget, maintenance_ml_per_day=maint.ml_per_day,
        overload_risk=heart_or_kidney,
    )  # fmt: skip
    safety.check_maintenance_covers_insensible(
        ledger, maintenance_ml_per_day=maint.ml_per_day, given_ml_per_day=outflow[-1][1] * 24.0
    )
    # the period the plan replaces over: the one asked, or longer where the doses slowed it
    replacing = [p for p in fluid_phases if p.kind == "replacement"]
    safety.check_replacement_speed(
        ledger, deficit_ml=deficit,
        replace_hours=replacing[-1].end_h - replacing[0].start_h if replacing
        else request.replace_hours,
    )  # fmt: skip
    safety.suggest_syringe_pump(ledger, device=device, phases=tuple(fluid_phases))
    safety.check_overload(
        ledger, cardiac=request.cardiac_disease, renal=request.renal_disease, weight_kg=w,
        deficit_ml=deficit, replace_hours=request.replace_hours,
        background_ml_per_h=outflow[-1][1],  # maintenance and losses, or the measured outputs
    )  # fmt: skip
    if request.anaesthesia:
        safety.check_anaesthesia(ledger, phases, w)
    if request.neonate:
        young = table.get(request.species_id, "neonate_total_body_water_fraction")
        safety.note_neonate(ledger, neonatal_water=young, used_water=tbw,
                            age_weeks=request.age_weeks)  # fmt: skip
    safety.check_paediatric(
        ledger, species_id=request.species_id, age_weeks=request.age_weeks, weight_kg=w,
        maintenance_ml_per_day=maint.ml_per_day,
        dextrose_g_per_l=fluids.composition(bag).dextrose_g_per_l, line=route in LINE_ROUTES,
    )  # fmt: skip
    tail = fluid_phases[-1]
    safety.check_isotonic_maintenance(
        ledger, fluid_name=base.name, fluid_na=bag_comp.na_mmol_per_l,
        running_h=tail.end_h - main.start_h, maintenance_h=tail.hours, tonicity=tone,
    )  # fmt: skip
    if deficit > 0 and res is not None:
        ledger.add(
            "info",
            "BOLUS_NOT_SUBTRACTED",
            "Resuscitation volume is not subtracted from the deficit.",
            "Reassess hydration after resuscitation and re-plan.",
        )
    if doses:
        patient = _diuretic_patient(ledger, request, percent or 0.0, phases)
        diuretic_checks.check_diuretics(ledger, doses, patient)
    late = [d for d in doses if d.end_h > end_h + 1e-9 or d.start_h >= end_h - 1e-9]
    if late:  # the body is followed with the plan's intake and outputs only while it runs
        what = (f"{late[0].name} runs to {hour_text(late[0].end_h)}" if late[0].infusion
                else f"{late[0].name} at {hour_text(late[0].start_h)} is given")  # fmt: skip
        ledger.add(
            "soft", "DIURETIC_AFTER_PLAN_END",
            f"{what[:1].upper()}{what[1:]}, after the plan's fluids end ({hour_text(end_h)}): "
            "the plan's checks stop there, and the course goes on with its urine and no fluid "
            "given.",
            "Extend the plan to cover the diuretic, or plan the diuretic on its own and measure "
            "urine output, weight and Na.",
        )  # fmt: skip
    soaks = _soaks(ledger, request, end_h=end_h)
    safety.note_unverified(ledger)

    return Plan(
        request=request,
        species_name=ledger.species.common_name,
        maintenance=maint,
        dehydration_percent=percent,
        dehydration_estimate=estimate,
        deficit_ml=deficit,
        free_water_deficit_ml=free_water,
        phases=phases,
        schedule=schedule.schedule_entries(
            phases,
            request.start_time,
            doses,
            soaks=soaks,
        ),  # fmt: skip
        fluid_name=bag.name,
        fluid_na_mmol_per_l=bag_comp.na_mmol_per_l,
        fluid_k_mmol_per_l=bag_comp.k_mmol_per_l,
        tonicity=tone,
        route=route,
        device=device,
        resuscitation=res,
        potassium=potassium,
        sodium=sodium,
        water_budget=budget,
        findings=tuple(ledger.findings),
        provenance=tuple(ledger.values.values()),
        bag=bag,
        bolus_fluid=fluids.fluid(request.resuscitation_fluid_id),
        citations=ledger.table.citations(ledger.values.values()),
        outflow=outflow,
        ins_and_outs=period_table,
        diuretics=doses,
        body=followed,
    )


def _soaks(ledger: Ledger, request: PlanRequest, *, end_h: float) -> tuple[ScheduleEntry, ...]:
    """Soaks in a shallow warm bath, evenly through each day while the plan runs, for a
    taxon with soaking on record (soak_water_temp_c: chelonians and lizards). Recorded on
    the schedule, never counted as intake (what is drunk or taken in through the cloaca is
    not measured), so the phases, the totals and the course do not include it."""
    if not request.soaks_per_day:
        return ()
    water = ledger.table.get(request.species_id, "soak_water_temp_c")
    if water is None:
        raise InputError(
            f"soaking is not planned for {ledger.species.common_name}: no soaking water "
            "temperature is on record for it (soaking is planned for chelonians and lizards)",
            field="soaks_per_day", value=request.soaks_per_day,
            fix="leave soaking out, or add the value with its source as a clinic override",
        )  # fmt: skip
    ledger.use(water)
    minutes = ledger.value("soak_minutes")
    every = 24.0 / request.soaks_per_day
    hours = tuple(i * every for i in range(math.ceil(round(end_h / every, 9))))
    ledger.add(
        "info", "SOAKING_NOT_COUNTED",
        f"{len(hours)} soak(s) in shallow warm water are on the schedule "
        f"({request.soaks_per_day} a day); what the patient drinks or takes in while soaking "
        "is not measured, so it is not counted in the fluid given, the totals or the course.",
        "Weigh before and after soaking days; watch throughout (a weak patient can drown).",
        water.source_id,
    )  # fmt: skip
    return tuple(
        schedule.soak_entries(
            hours=hours, start=request.start_time, water_temp_c=water.number,
            minutes=minutes.number,
        )
    )  # fmt: skip


def _diuretic_patient(
    ledger: Ledger, request: PlanRequest, dehydration_percent: float, phases: tuple[Phase, ...]
) -> diuretic_checks.Patient:
    """What the diuretic rules read of the patient. The species' K and bicarbonate intervals
    are read only where a value was entered to compare (else they would be listed as used);
    the deficit counts as replaced when the plan's replacement phases end."""
    k = ledger.value("serum_k_mmol_per_l") if request.serum_k is not None else None
    hco3 = ledger.get("serum_hco3_mmol_per_l") if request.serum_hco3 is not None else None
    urine_low = urine_none = False
    if request.ins_and_outs_period_h is not None and request.measured_outputs:
        normal = ledger.get("urine_output_ml_per_kg_h")
        if normal is not None:
            line = normal.low if normal.low is not None else normal.number
            last_urine = request.measured_outputs[-1][0]
            flow = last_urine / request.ins_and_outs_period_h / request.weight_kg
            urine_low = flow < line
            urine_none = flow < diuretic_checks.NO_URINE_SHARE * line
    replaced = [p.end_h for p in phases if p.kind == "replacement"]
    return diuretic_checks.Patient(
        species_name=ledger.species.common_name.lower(),
        dehydration_percent=dehydration_percent,
        rehydrated_h=max(replaced, default=0.0) if dehydration_percent > 0 else 0.0,
        renal_output=request.renal_output if request.renal_disease else None,
        cardiac_disease=request.cardiac_disease,
        serum_k=request.serum_k,
        k_low=None if k is None else (k.low if k.low is not None else k.number),
        k_high=None if k is None else (k.high if k.high is not None else k.number),
        serum_hco3=request.serum_hco3,
        hco3_low=None if hco3 is None else (hco3.low if hco3.low is not None else hco3.number),
        urine_measured_low=urine_low,
        urine_measured_none=urine_none,
    )


def _diuretic_doses(request: PlanRequest) -> tuple[DiureticDose, ...]:
    """The request's diuretics as doses on the clock, in order of the hour, each with what
    it is for this patient (mg or g, mg/h for an infusion)."""
    doses = []
    for drug_id, dose, route, start_h, end_h in request.diuretics:
        drug = diuretics.drug(drug_id)
        unit = drug.dose_unit(route)
        doses.append(
            DiureticDose(
                drug_id=drug_id, name=drug.name, drug_class=drug.drug_class, dose=dose,
                unit=unit, route=route, start_h=start_h, end_h=end_h,
                amount=dose * request.weight_kg, amount_unit=unit.replace("/kg", ""),
            )
        )  # fmt: skip
    return tuple(sorted(doses, key=lambda d: d.start_h))


def _phase_at(phases: tuple[Phase, ...], hour: float) -> Phase:
    """The phase running at an hour (the last one after the plan ends)."""
    return next((p for p in phases if p.start_h <= hour < p.end_h), phases[-1])


def _followed_body(regimen: body.Regimen, table: SpeciesTable, ledger: Ledger) -> body.BodyCourse:
    """The body through the plan as the course follows it (:func:`body.follow_body`: the
    kidney, insensible water, losses by type and the diuretics), on the course's grid, until
    the last dose under the skin is absorbed and an hour after that, so every hour the plan
    moves Na in is seen whole."""
    request = regimen.request
    step_h = body.STEP_MINUTES / 60.0
    followed = body.follow_body(
        regimen, table, hours=body.grid(body.checked_until_h(regimen, table) + 1.0, step_h),
        step_h=step_h, loss_type=request.loss_type, renal_output=request.renal_output,
    )  # fmt: skip
    ledger.use(*followed.provenance)
    valid = len(followed.hours)
    if followed.beyond_h is not None:  # the body's figures stop being numbers there
        valid = max(int(np.searchsorted(followed.hours, followed.beyond_h - 1e-9)), 1)
        ledger.add(
            "hard", "PLAN_BEYOND_THE_BODY",
            f"By {hour_text(followed.beyond_h)} this plan takes more water or salt out of the "
            "patient than its body holds (losses, outputs or diuretics far above what is given).",
            "Check the losses, outputs and doses entered and their units.",
        )  # fmt: skip
    safety.check_ecf_contraction(ledger, followed.hours[:valid], followed.ecf_ml[:valid],
                                 followed.ecf0_ml)  # fmt: skip
    if request.serum_hco3 is not None and followed.base_in_mmol is not None:
        kidney_acts = followed.settings is not None
        hco3, used = bicarbonate.follow_bicarbonate(
            table, request, hco3_0=request.serum_hco3, ecf_ml=followed.ecf_ml, step_h=step_h,
            base_in_mmol=followed.base_in_mmol, lost_ml=followed.lost_ml,
            losses=followed.losses if kidney_acts else None,
            drug_hco3_mmol=followed.balance.hco3_excreted_mmol, kidney_acts=kidney_acts,
        )  # fmt: skip
        ledger.use(*used)
        normal = table.get(request.species_id, "serum_hco3_mmol_per_l")
        causes = bicarbonate.Causes(
            carbonic_anhydrase_drug=any(d.drug_class == "carbonic_anhydrase_inhibitor"
                                        for d in regimen.diuretics),
            losses=request.losses_ml_per_day > 0,
            bag_has_base=body.base_mmol_per_l(fluids.composition(regimen.bag)) > 0,
        )  # fmt: skip
        bicarbonate.check_plan_bicarbonate(ledger, followed.hours[:valid], hco3[:valid], normal,
                                           causes)  # fmt: skip
    return followed


def _sodium_course(
    followed: body.BodyCourse,
    *,
    start_na: float,
    measured: bool,
    boluses_end_h: float,
) -> electrolytes.SodiumCourse:
    """Serum Na through a followed body, read while the body still holds water. The Na that
    sets tonicity is read: mannitol's dilution of the measured Na is no correction."""
    hours, path = followed.hours, followed.tonicity_na
    beyond = followed.beyond_h
    if beyond is not None:
        keep = max(int(np.searchsorted(hours, beyond - 1e-9)), 1)
        hours, path = hours[:keep], path[:keep]
    return electrolytes.sodium_course(
        hours, path, start_na=start_na, measured=measured, boluses_end_h=boluses_end_h
    )


def _water_budget(ledger: Ledger, request: PlanRequest) -> maintenance.WaterBudget | None:
    """The budget with the patient's own urine data where the taxon can use them."""
    usg_ok = ledger.value("usg_interpretable")
    try:
        budget = maintenance.water_budget(
            ledger.table, request.species_id, request.weight_kg, body_temp_c=request.body_temp_c,
            usg=request.usg if usg_ok.value else None, urine_osmolality=request.urine_osmolality,
        )  # fmt: skip
    except InputError as exc:
        ledger.add("info", "NO_CONCENTRATING_CEILING", exc.message, exc.fix or "")
        return None
    ledger.use(*budget.provenance)
    return budget
