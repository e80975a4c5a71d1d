"""The diuretics' safety checks, as one table of rules (:data:`RULES`).

Each rule reads the doses and the patient (:class:`Given`) and returns what it concerns, in
words; :func:`check_diuretics` turns every rule that concerns something into one finding of
the rule's code and severity. The window, the CLI, plan files and the printed sheet all read
these findings from the plan. Sources beside each rule:

* **Dose against the range on record** (``species_data/diuretics.csv``, per species and
  route): outside every range a soft finding; more than ``diuretic_dose_hard_factor`` × its
  top a slip (mg for g, a decimal point), blocked. A route with no dose on record for the
  species is judged against the species' own doses by its other routes, and a species with
  none against the highest dose on record for the drug in any species, by the same factor.
  So are a day's single doses of one drug added up (against the top single dose) and a
  day's infusions (against a day at the top rate), apart: an infusion rate × 24 h is no
  licence for the same total in boluses. Infusions running together are judged by their sum.
* **Doses close together**: the same drug twice within :data:`CLOSE_DOSES_H` is most
  likely one dose entered twice (common practice, no source; a furosemide injection's label
  gives a second dose no sooner than 2 h after the first).
* **Mannitol** (Mannitol Injection USP prescribing information, Warnings and Precautions:
  ``mannitol_label``): contraindicated in established anuria (blocked: urine measured under a
  tenth of the oliguria line); with marked oliguria a test dose first (soft: an oliguric
  kidney, or urine measured below the line); its diuresis "may obscure and intensify
  inadequate hydration or hypovolemia" (a dose before the plan has replaced a deficit: soft,
  from severe dehydration blocked, as the label contraindicates it); the ECF expansion "may
  lead to fulminating congestive heart failure" (heart disease: soft).
* **Loop, thiazide, potassium-sparing and carbonic-anhydrase diuretics** (furosemide
  injection USP prescribing information, 5.1: ``furosemide_label``): hypovolaemia and
  hypokalaemia; "excessive diuresis may cause dehydration and blood volume reduction" (a
  dose before the deficit is replaced: soft, from severe dehydration blocked; a serum K
  below the species' interval with a loop, thiazide or carbonic-anhydrase drug: soft).
* **Potassium-sparing** with a serum K above the species' interval or little or no urine,
  and a **carbonic-anhydrase inhibitor** with a serum bicarbonate below it (it makes the
  urine carry bicarbonate): soft (pharmacology of the class, common practice, no source).
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from vetfluid.common.formatting import format_quantity as q
from vetfluid.common.formatting import hour_text
from vetfluid.planning.ledger import Ledger
from vetfluid.planning.schedule import DIURETIC_ROUTE_WORDS, DiureticDose
from vetfluid.tables import diuretics
from vetfluid.tables.diuretics import DiureticRow
from vetfluid.tables.limits import limit
from vetfluid.tables.species import SpeciesTable

CLOSE_DOSES_H = 1.0  # the same drug again sooner than this: a doubled entry (no source)
DEHYDRATED_PERCENT = 5.0  # dehydration detectable on examination (DiBartola 2012: < 5 % is not)
SEVERELY_DEHYDRATED_PERCENT = 10.0  # DiBartola 2012's scale: 10–12 % and more is severe
DAY_H = 24.0
NO_URINE_SHARE = 0.1  # urine under a tenth of the oliguria line is taken as anuria (no source)
# the classes that take water out with them (mannitol has its own rules)
WATER_LOSING = ("loop", "thiazide", "potassium_sparing", "carbonic_anhydrase_inhibitor")


@dataclass(frozen=True, kw_only=True)
class Patient:
    """What the rules read of the patient (None: not entered)."""

    species_name: str
    dehydration_percent: float
    rehydrated_h: float  # the hour the plan has replaced the deficit (0: none to replace)
    renal_output: str | None  # "oliguric", "polyuric" or None
    cardiac_disease: bool
    serum_k: float | None
    k_low: float | None
    k_high: float | None
    serum_hco3: float | None
    hco3_low: float | None
    urine_measured_low: bool  # ins and outs: the last period's urine below the oliguria line
    urine_measured_none: bool  # … under a tenth of it (NO_URINE_SHARE): anuria

    @property
    def makes_little_urine(self) -> bool:
        return self.renal_output == "oliguric" or self.urine_measured_low

    @property
    def high_k(self) -> bool:
        return self.serum_k is not None and self.k_high is not None and self.serum_k > self.k_high


@dataclass(frozen=True, kw_only=True)
class Given:
    """The doses, the patient and where their ranges are on record."""

    doses: tuple[DiureticDose, ...]
    patient: Patient
    table: SpeciesTable
    species_id: str

    def rows(self, dose: DiureticDose) -> tuple[DiureticRow, ...]:
        return diuretics.rows_for(self.table, self.species_id, dose.drug_id, dose.route)

    def own_rows(self, drug_id: str, *, infusion: bool) -> list[DiureticRow]:
        """The rows the species has for a drug by any route: single doses, or infusions."""
        routes = {r.route for r in diuretics.drug(drug_id).rows if (r.route == "cri") == infusion}
        table, sid = self.table, self.species_id
        return [r for route in sorted(routes)
                for r in diuretics.rows_for(table, sid, drug_id, route)]  # fmt: skip

    def of_class(self, *classes: str) -> tuple[DiureticDose, ...]:
        return tuple(d for d in self.doses if d.drug_class in classes)

    def by_drug(self) -> dict[str, list[DiureticDose]]:
        found: dict[str, list[DiureticDose]] = {}
        for dose in self.doses:
            found.setdefault(dose.drug_id, []).append(dose)
        return found


@dataclass(frozen=True)
class Rule:
    code: str
    severity: str  # "hard", "soft" or "info"; FROM_LIMIT: the hard factor's own in safety_limits
    concerns: Callable[[Given], tuple[str, ...]]  # what it concerns, in words; () if nothing
    says: Callable[[Given, str], str]  # the finding's sentence, from the joined concerns
    action: str
    source_id: str | Callable[[Given], str | None] | None = None


FROM_LIMIT = "from safety_limits.csv"


# ---- the pieces the rules share -------------------------------------------------------------
def dose_words(dose: DiureticDose) -> str:
    """``furosemide 20 mg/kg IV`` (an infusion: ``furosemide 2 mg/kg/h by IV infusion``)."""
    given = f"{dose.name} {dose.dose:g} {dose.unit}"
    return f"{given} by IV infusion" if dose.infusion else (
        f"{given} {DIURETIC_ROUTE_WORDS[dose.route]}"
    )  # fmt: skip


def effect_modelled(table: SpeciesTable, species_id: str, dose: DiureticDose) -> bool:
    """Whether the course can show this dose's effect: mannitol by its osmoles; any other
    drug needs onset, peak and duration on record for the species (an infusion: those of
    an IV dose)."""
    if dose.drug_class == "osmotic":
        return bool(diuretics.rows_for(table, species_id, dose.drug_id, dose.route))
    route = "iv" if dose.infusion else dose.route
    return diuretics.timing(table, species_id, dose.drug_id, route) is not None


def hard_factor() -> float:
    """``diuretic_dose_hard_factor`` (safety_limits.csv): past this × the top, a slip."""
    return limit("diuretic_dose_hard_factor").value


def _highest_anywhere(drug_id: str, *, infusion: bool) -> float:
    """The top of the highest range on record for the drug in any species: single doses
    (mg/kg or g/kg), or infusions (mg/kg/h)."""
    rows = [r for r in diuretics.drug(drug_id).rows if (r.route == "cri") == infusion]
    return max((r.dose_high for r in rows), default=0.0)


def _top(given: Given, dose: DiureticDose) -> tuple[float, str]:
    """The top of the range a dose is judged against, and whose it is: the species' own for
    the route; else the species' own by its other routes (a bird's IM dose is no licence for
    ten times that IV); else the highest for the drug in any species."""
    rows = given.rows(dose)
    if rows:
        where = given.table.species(rows[0].species_id).common_name.lower()
        return max(r.dose_high for r in rows), f"the {where}"
    own = given.own_rows(dose.drug_id, infusion=dose.infusion)
    if own:
        routes = "/".join(dict.fromkeys(DIURETIC_ROUTE_WORDS[r.route] for r in own))
        return max(r.dose_high for r in own), f"the {given.patient.species_name} by {routes}"
    return _highest_anywhere(dose.drug_id, infusion=dose.infusion), "any species"


def _day_top(given: Given, drug_id: str, *, infusion: bool) -> float:
    """The top single dose (or infusion rate) on record for the species by any route, else
    for any species: what a day of single doses (or a day's infusion) is judged against."""
    own = given.own_rows(drug_id, infusion=infusion)
    return max((r.dose_high for r in own), default=0.0) or _highest_anywhere(
        drug_id, infusion=infusion
    )


def _most_in_a_day(singles: list[DiureticDose]) -> tuple[float, float]:
    """The most of one drug's single doses within any 24 h (per kg) and the hour that day
    starts (a day with the most begins at a dose): a sliding window over the sorted hours."""
    ordered = sorted(singles, key=lambda d: d.start_h)
    hours = np.array([d.start_h for d in ordered])
    before = np.concatenate(([0.0], np.cumsum([d.dose for d in ordered])))
    ends = np.searchsorted(hours, hours + DAY_H - 1e-9)
    totals = before[ends] - before[:-1]
    i = int(np.argmax(totals))
    return float(totals[i]), float(hours[i])


def _most_infused_in_a_day(infusions: list[DiureticDose]) -> tuple[float, float]:
    """The most of one drug's infusions within any 24 h (per kg: rate × hours) and the hour
    that day starts: the most begins at an infusion's start or ends at an infusion's end."""
    best, start = 0.0, 0.0
    for s in sorted({d.start_h for d in infusions} | {d.end_h - DAY_H for d in infusions}):
        total = sum(d.dose * max(0.0, min(d.end_h, s + DAY_H) - max(d.start_h, s))
                    for d in infusions)  # fmt: skip
        if total > best + 1e-12:
            best, start = total, s
    return best, max(start, 0.0)


def _concurrent(doses: list[DiureticDose]) -> tuple[float, float] | None:
    """The highest summed rate of infusions of one drug running at once, and from when;
    None unless two or more overlap (one alone is judged as a dose)."""
    infusions = [d for d in doses if d.infusion]
    best = None
    for s in sorted({d.start_h for d in infusions}):
        running = [d for d in infusions if d.start_h <= s < d.end_h]
        if len(running) > 1:
            rate = sum(d.dose for d in running)
            if best is None or rate > best[0]:
                best = (rate, s)
    return best


def _sentence(text: str) -> str:
    return text[:1].upper() + text[1:] + "."


def _names(doses: tuple[DiureticDose, ...] | list[DiureticDose]) -> tuple[str, ...]:
    return tuple(dict.fromkeys(d.name for d in doses))


# ---- doses against what is on record ----------------------------------------------------------
def _far_above(given: Given) -> tuple[str, ...]:
    factor, words = hard_factor(), []
    for dose in dict.fromkeys(given.doses):  # the same dose at several hours is judged once
        top, whose = _top(given, dose)
        if top and dose.dose > factor * top:
            words.append(f"{dose_words(dose)} is more than {factor:g}× the top dose on record "
                         f"for {whose} ({q(top, dose.unit)})")  # fmt: skip
    for drug_id, doses in given.by_drug().items():
        running = _concurrent(doses)
        if running is not None:
            infusion = next(d for d in doses if d.infusion)
            top, whose = _top(given, infusion)
            if top and running[0] > factor * top:
                words.append(f"{infusion.name} infusions running together from "
                             f"{hour_text(running[1])} add up to {q(running[0], infusion.unit)}, "
                             f"more than {factor:g}× the top on record for {whose}")  # fmt: skip
        singles = [d for d in doses if not d.infusion]
        if len(singles) > 1:  # one alone is judged as a dose
            day, start = _most_in_a_day(singles)
            top = _day_top(given, drug_id, infusion=False)
            if top and day > factor * top:
                words.append(f"{doses[0].name} doses add up to {q(day, singles[0].unit)} within "
                             f"24 h from {hour_text(start)}, more than {factor:g}× the top "
                             f"single dose on record ({q(top, singles[0].unit)})")  # fmt: skip
        infusions = [d for d in doses if d.infusion]
        if len(infusions) > 1:
            day, start = _most_infused_in_a_day(infusions)
            rate = _day_top(given, drug_id, infusion=True)
            unit = infusions[0].unit.removesuffix("/h")
            if rate and day > factor * rate * DAY_H:
                words.append(f"{doses[0].name} infusions add up to {q(day, unit)} within 24 h "
                             f"from {hour_text(start)}, more than {factor:g}× a day at the top "
                             f"rate on record ({q(rate * DAY_H, unit)})")  # fmt: skip
    return tuple(dict.fromkeys(words))


def _loading_dose(given: Given, dose: DiureticDose) -> bool:
    """A single IV dose at an infusion's start, of the same drug, no larger than an hour of
    its rate: that infusion's loading dose (Plumb: 0.66 mg/kg IV then 0.66 mg/kg/h; Kirk:
    1 mg/kg then 1 mg/kg/h), not judged against the bolus range."""
    return dose.route == "iv" and any(
        d.infusion and d.drug_id == dose.drug_id and abs(d.start_h - dose.start_h) < 1e-9
        and dose.dose <= d.dose * 1.0 + 1e-9
        for d in given.doses
    )  # fmt: skip


def _outside(given: Given) -> tuple[str, ...]:
    factor, words = hard_factor(), []
    for dose in dict.fromkeys(given.doses):
        rows = given.rows(dose)
        if not rows or any(r.dose_low - 1e-9 <= dose.dose <= r.dose_high + 1e-9 for r in rows):
            continue
        if _loading_dose(given, dose):
            continue
        if dose.dose > factor * max(r.dose_high for r in rows):
            continue  # blocked as a slip instead
        ranges = " or ".join(dict.fromkeys(r.range_text() for r in rows))
        where = given.table.species(rows[0].species_id).common_name.lower()
        recalled = " (recalled, unverified)" if all(r.dose_basis == "memory" for r in rows) else ""
        words.append(f"{dose_words(dose)} is outside the {ranges} on record for the {where}"
                     + recalled)  # fmt: skip
    for doses in given.by_drug().values():
        running = _concurrent(doses)
        if running is None:
            continue
        infusion = next(d for d in doses if d.infusion)
        rows = given.rows(infusion)
        top = max((r.dose_high for r in rows), default=0.0)
        if rows and top < running[0] <= factor * top:
            words.append(f"{infusion.name} infusions running together from "
                         f"{hour_text(running[1])} add up to {q(running[0], infusion.unit)}, "
                         f"above the {q(top, infusion.unit)} on record")  # fmt: skip
    return tuple(words)


def _range_source(given: Given) -> str | None:
    """The source of the range the first dose outside its range is judged against."""
    for dose in given.doses:
        rows = given.rows(dose) or given.own_rows(dose.drug_id, infusion=dose.infusion)
        if rows and not any(r.dose_low - 1e-9 <= dose.dose <= r.dose_high + 1e-9 for r in rows):
            return rows[0].dose_source_id
    return None


def _no_dose_on_record(given: Given) -> tuple[str, ...]:
    factor = hard_factor()
    return tuple(
        dose_words(d) for d in dict.fromkeys(given.doses)
        if not given.rows(d) and not d.dose > factor * _top(given, d)[0]
    )  # fmt: skip


def _no_dose_words(given: Given, concerns: str) -> str:
    modelled = all(effect_modelled(given.table, given.species_id, d)
                   for d in given.doses if not given.rows(d))  # fmt: skip
    course = (
        "the course shows its effect from the timing on record for a related species"
        if modelled
        else "the course does not show its effect"
    )
    return (
        f"No dose for the {given.patient.species_name} by this route is on record for "
        f"{concerns}: the plan cannot check it against a range, and {course}."
    )


def _close_together(given: Given) -> tuple[str, ...]:
    words = []
    for doses in given.by_drug().values():
        hours = sorted(d.start_h for d in doses if not d.infusion)
        for a, b in zip(hours, hours[1:], strict=False):
            if b - a < CLOSE_DOSES_H:
                minutes = round((b - a) * 60)
                words.append(f"{doses[0].name} at {hour_text(a)} and again {minutes} min later")
                break
    return tuple(words)


def _not_modelled(given: Given) -> tuple[str, ...]:
    return tuple(
        dose_words(d) for d in dict.fromkeys(given.doses)
        if given.rows(d) and not effect_modelled(given.table, given.species_id, d)
    )  # fmt: skip


# ---- the patient's state ------------------------------------------------------------------------
def _mannitol_no_urine(given: Given) -> tuple[str, ...]:
    if given.of_class("osmotic") and given.patient.urine_measured_none:
        return ("no urine measured in the last period (anuria)",)
    return ()


def _mannitol_little_urine(given: Given) -> tuple[str, ...]:
    p = given.patient
    if not given.of_class("osmotic") or p.urine_measured_none:
        return ()
    if p.renal_output == "oliguric":
        return ("an oliguric kidney",)
    if p.urine_measured_low:
        return ("urine measured below the oliguria line",)
    return ()


def _dehydrated_by(low: float, high: float, *classes: str) -> Callable[[Given], tuple[str, ...]]:
    """The drugs of these classes given before the plan has replaced a deficit of ``low`` to
    ``high`` % (a dose after the deficit is replaced meets a rehydrated patient)."""

    def concerns(given: Given) -> tuple[str, ...]:
        p = given.patient
        if not low <= p.dehydration_percent < high:
            return ()
        return _names([d for d in given.of_class(*classes) if d.start_h < p.rehydrated_h - 1e-9])

    return concerns


def _dehydrated_words(given: Given, concerns: str, harm: str) -> str:
    p = given.patient
    by = hour_text(p.rehydrated_h)
    return (f"{_sentence(concerns)[:-1]} before the plan has replaced the "
            f"{p.dehydration_percent:g} % deficit (by {by}): {harm}")  # fmt: skip


def _heart(given: Given) -> tuple[str, ...]:
    return _names(given.of_class("osmotic")) if given.patient.cardiac_disease else ()


def _low_k(given: Given) -> tuple[str, ...]:
    p = given.patient
    if p.serum_k is None or p.k_low is None or p.serum_k >= p.k_low:
        return ()
    return _names(given.of_class("loop", "thiazide", "carbonic_anhydrase_inhibitor"))


def _high_k_sparing(given: Given) -> tuple[str, ...]:
    p = given.patient
    if not (p.high_k or p.makes_little_urine or p.urine_measured_none):
        return ()
    return _names(given.of_class("potassium_sparing"))


def _sparing_words(given: Given, concerns: str) -> str:
    p = given.patient
    why = [f"serum K is {q(p.serum_k, 'mmol/L')}, above this species' interval"] if p.high_k else []
    if p.makes_little_urine or p.urine_measured_none:
        why.append("little or no urine flows to carry potassium out")
    return f"{_sentence(concerns)[:-1]} keeps potassium in the body, and {' and '.join(why)}."


def _acidosis(given: Given) -> tuple[str, ...]:
    p = given.patient
    if p.serum_hco3 is None or p.hco3_low is None or p.serum_hco3 >= p.hco3_low:
        return ()
    return _names(given.of_class("carbonic_anhydrase_inhibitor"))


# ---- the table --------------------------------------------------------------------------------
# fmt: off
RULES: tuple[Rule, ...] = (
    Rule("DIURETIC_DOSE_FAR_ABOVE_RANGE", FROM_LIMIT, _far_above, lambda g, c: _sentence(c),
         "Check the unit (mg/kg, or g/kg for mannitol), the decimal point and the hours; this "
         "is not given as entered.", _range_source),
    Rule("DIURETIC_DOSE_OUTSIDE_RANGE", "soft", _outside, lambda g, c: _sentence(c),
         "Check the dose and its unit; give a reason if it is meant.", _range_source),
    Rule("DIURETIC_NO_DOSE_ON_RECORD", "soft", _no_dose_on_record, _no_dose_words,
         "Check the dose in a formulary for this species; give a reason if it is meant."),
    Rule("DIURETIC_DOSES_CLOSE_TOGETHER", "soft", _close_together,
         lambda g, c: _sentence(f"{c}: most likely one dose entered twice"),
         "Enter each dose once, at its own hour; a larger dose is one dose of that size."),
    Rule("MANNITOL_IN_ANURIA", "hard", _mannitol_no_urine,
         lambda g, c: (f"Mannitol with {c}: what the kidney cannot pass stays in the body and "
                       "draws water into the circulation (volume overload, pulmonary oedema)."),
         "Do not give mannitol until urine flows; restore perfusion and measure urine output.",
         "mannitol_label"),
    Rule("MANNITOL_IN_OLIGURIA", "soft", _mannitol_little_urine,
         lambda g, c: (f"Mannitol with {c}: if urine does not follow, it stays in the body and "
                       "draws water into the circulation (volume overload, pulmonary oedema)."),
         "Give a test dose first and go on only if urine flow rises within the hour; measure "
         "urine output, or give a reason.", "mannitol_label"),
    Rule("MANNITOL_SEVERELY_DEHYDRATED", "hard",
         _dehydrated_by(SEVERELY_DEHYDRATED_PERCENT, float("inf"), "osmotic"),
         lambda g, c: _dehydrated_words(g, c, "its diuresis takes more water out of a body "
                                        "already short of it (severe dehydration)."),
         "Give it after the deficit is replaced; mannitol is not given in severe dehydration.",
         "mannitol_label"),
    Rule("MANNITOL_DEHYDRATED", "soft",
         _dehydrated_by(DEHYDRATED_PERCENT, SEVERELY_DEHYDRATED_PERCENT, "osmotic"),
         lambda g, c: _dehydrated_words(g, c, "its diuresis may hide and deepen the deficit."),
         "Give it after the deficit is replaced, or give a reason; measure urine output and "
         "weigh.", "mannitol_label"),
    Rule("MANNITOL_WITH_HEART_DISEASE", "soft", _heart,
         lambda g, c: ("Mannitol with heart disease: it first expands the ECF, which can bring "
                       "on congestive heart failure."),
         "Give a reason if it is meant; watch breathing rate and effort, and weigh.",
         "mannitol_label"),
    Rule("DIURETIC_SEVERELY_DEHYDRATED", "hard",
         _dehydrated_by(SEVERELY_DEHYDRATED_PERCENT, float("inf"), *WATER_LOSING),
         lambda g, c: _dehydrated_words(g, c, "a diuretic takes more water out of a body "
                                        "already short of it (severe dehydration, shock)."),
         "Give it after the deficit is replaced and perfusion is restored.", "furosemide_label"),
    Rule("DIURETIC_WHILE_DEHYDRATED", "soft",
         _dehydrated_by(DEHYDRATED_PERCENT, SEVERELY_DEHYDRATED_PERCENT, *WATER_LOSING),
         lambda g, c: _dehydrated_words(g, c, "a diuretic takes more water out of a body "
                                        "already short of it (hypovolaemia)."),
         "Give it after the deficit is replaced, or give a reason; measure urine output and "
         "weigh.", "furosemide_label"),
    Rule("DIURETIC_WITH_LOW_POTASSIUM", "soft", _low_k,
         lambda g, c: (f"{_sentence(c)[:-1]} with serum K {q(g.patient.serum_k, 'mmol/L')}, "
                       "below this species' interval: it makes the urine carry potassium away."),
         "Correct potassium first or with it (KCl in the fluid); recheck K in 4–6 h.",
         "furosemide_label"),
    Rule("POTASSIUM_SPARING_WITH_HIGH_POTASSIUM", "soft", _high_k_sparing, _sparing_words,
         "Do not give it while K is high or little urine flows, or give a reason; recheck K."),
    Rule("CARBONIC_ANHYDRASE_WITH_ACIDOSIS", "soft", _acidosis,
         lambda g, c: (f"{_sentence(c)[:-1]} makes the urine carry bicarbonate away, and serum "
                       "bicarbonate is already below this species' interval (acidosis)."),
         "Do not give it while acidotic, or give a reason; recheck blood gases."),
    Rule("DIURETIC_EFFECT_NOT_MODELLED", "info", _not_modelled,
         lambda g, c: (f"No onset and duration for the {g.patient.species_name} are on record for "
                       f"{c}: the course does not show its effect on urine, sodium or "
                       "potassium."),
         "Measure urine output and recheck Na and K after it is given."),
)
# fmt: on


def check_diuretics(ledger: Ledger, doses: tuple[DiureticDose, ...], patient: Patient) -> None:
    """Every rule of :data:`RULES` that concerns these doses and this patient, as a finding
    of its code and severity."""
    if not doses:
        return
    given = Given(doses=doses, patient=patient, table=ledger.table, species_id=ledger.species_id)
    for rule in RULES:
        concerns = rule.concerns(given)
        if not concerns:
            continue
        joined = "; ".join(dict.fromkeys(concerns))
        severity = (limit("diuretic_dose_hard_factor").severity if rule.severity == FROM_LIMIT
                    else rule.severity)  # fmt: skip
        source = rule.source_id(given) if callable(rule.source_id) else rule.source_id
        ledger.add(severity, rule.code, rule.says(given, joined), rule.action, source)
