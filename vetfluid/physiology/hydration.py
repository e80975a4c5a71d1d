"""Hydration: dehydration estimate from findings, deficit, free-water deficit.

* Findings, one table per taxon (``species_data/dehydration_findings.csv``, column
  ``taxon``); each is a display aid, and the clinician confirms the percentage.
  Mammals: DiBartola SP (ed.), Fluid, Electrolyte, and Acid-Base Disorders in Small
  Animal Practice, 4th ed., 2012, Table 14-4 (p. 335, after Muir & DiBartola 1983),
  written for dogs and cats; it has eyes *possibly* sunken and membranes *possibly* dry at
  6–8 %, sunken eyes and dry membranes at 10–12 %, and the findings are split the same way.
  Birds: the bands Wildpro gives for cranes after avian texts (bird skin is inelastic, so
  tenting is read over the hocks); the ulnar-vein refill sign is recalled (memory).
  Reptiles: the signs Highfield (Tortoise Trust) describes, with no % bands, because no
  source found gives any: the clinician enters the % (:class:`DehydrationEstimate` then
  has no band).
* Deficit: body weight (kg) × fraction dehydrated = litres (1 kg lost ≈ 1 L);
  Davis H et al., 2013 AAHA/AAFP Fluid Therapy Guidelines; DiBartola 2012.
* Free-water deficit: TBW × (Na_patient / Na_normal − 1), TBW = fraction × BW
  (0.6 in adult dogs and cats); the standard formula as in veterinary case
  commentaries, with the species' own body-water fraction and normal Na.
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from functools import cache
from pathlib import Path

from vetfluid.common.checks import require_number
from vetfluid.common.csvfiles import parse_number, read_rows
from vetfluid.common.errors import InputError, SpeciesDataError
from vetfluid.common.formatting import weeks_text
from vetfluid.common.paths import resource_dir
from vetfluid.tables.species import SpeciesTable, SpeciesValue

# The mammal table comes from a text on dogs and cats (DiBartola 2012); other mammals use
# it as a rough guide.
FINDINGS_WRITTEN_FOR = ("dog", "cat")
TAXA = ("mammal", "bird", "reptile")
# what each taxon's table is, as the estimate names it
TABLE_NAMES = {
    "mammal": "DiBartola 2012, Table 14-4 (dogs and cats)",
    "bird": "Wildpro, dehydration in cranes (bird bands)",
    "reptile": "Highfield, Tortoise Trust (reptile signs; no % bands published)",
}

# Findings of earlier versions that covered two rows of Table 14-4 (banded 6–8 % whether
# the sign was doubtful or plain). Which row a patient showed only the examiner knows, so
# a request naming one is refused with both choices, never mapped by guess:
# old id → (what it read, the ids it became).
RETIRED_FINDINGS: dict[str, tuple[str, tuple[str, ...]]] = {
    "eyes_sunken": ("Eyes sunken in orbits", ("eyes_possibly_sunken", "eyes_clearly_sunken")),
    "membranes_dry": ("Dry mucous membranes", ("membranes_possibly_dry", "membranes_clearly_dry")),
}


def findings_caveat(species_id: str, common_name: str, taxon: str = "mammal") -> str:
    """What an estimate from the findings rests on, for a species its table was not written
    for; empty for dogs and cats."""
    if taxon == "bird":
        return (
            "These bands were described for cranes (Wildpro); bird skin is inelastic, so "
            f"take the estimate for this {common_name.lower()} as a rough guide."
        )
    if taxon == "reptile":
        return (
            "No source found gives % bands for reptiles: the signs are recorded, and the % is "
            "yours to enter."
        )
    if species_id in FINDINGS_WRITTEN_FOR:
        return ""
    return (
        "These bands were written for dogs and cats (DiBartola 2012); vetfluid has none for "
        f"this species ({common_name}), so take the estimate as a rough guide."
    )


@dataclass(frozen=True, kw_only=True)
class ClinicalFinding:
    finding_id: str
    taxon: str  # mammal | bird | reptile: whose examination it belongs to
    label: str
    percent_low: float | None  # None: the sign has no published % band (reptiles)
    percent_high: float | None
    source_id: str
    basis: str


@dataclass(frozen=True, kw_only=True)
class DehydrationEstimate:
    """The band the entered findings point to; the clinician confirms a value in it. A
    reptile's signs have no band (``percent_low`` None): the % is the clinician's."""

    percent_low: float | None
    percent_high: float | None
    findings: tuple[str, ...]
    source_id: str
    taxon: str = "mammal"

    @property
    def suggested_percent(self) -> float | None:
        """The low end of the band: the cautious starting point, to be confirmed."""
        return self.percent_low

    @property
    def table_name(self) -> str:
        """Which table the estimate used, in words."""
        return TABLE_NAMES[self.taxon]


@cache
def load_findings(data_dir: Path | None = None) -> dict[str, ClinicalFinding]:
    """The findings tables of every taxon, keyed by finding id."""
    path = (data_dir or resource_dir("species_data")) / "dehydration_findings.csv"
    table: dict[str, ClinicalFinding] = {}
    columns = ("finding_id", "taxon", "label", "percent_low", "percent_high", "source_id",
               "basis")  # fmt: skip
    for location, row in read_rows(path, columns):
        low = parse_number(row["percent_low"], location=location, column="percent_low")
        high = parse_number(row["percent_high"], location=location, column="percent_high")
        if row["taxon"] not in TAXA:
            raise SpeciesDataError(f"taxon must be one of {', '.join(TAXA)}", location=location)
        banded = low is not None and high is not None
        if (low is None) != (high is None) or (banded and not 0 <= low <= high <= 100):
            raise SpeciesDataError(
                "percent_low ≤ percent_high within 0–100, or both empty (no band)",
                location=location,
            )
        if row["taxon"] != "reptile" and not banded:
            raise SpeciesDataError("a mammal's or bird's finding needs its band", location=location)
        if row["finding_id"] in table:
            raise SpeciesDataError(f"duplicate finding {row['finding_id']!r}", location=location)
        table[row["finding_id"]] = ClinicalFinding(
            finding_id=row["finding_id"],
            taxon=row["taxon"],
            label=row["label"],
            percent_low=low,
            percent_high=high,
            source_id=row["source_id"],
            basis=row["basis"],
        )
    return table


def check_finding_ids(finding_ids: tuple[str, ...] | list[str]) -> None:
    """Refuse unknown findings, and retired ones with both choices named (the taxon is
    checked when the species is known: :func:`estimate_dehydration`)."""
    table = load_findings()
    retired = [f for f in finding_ids if f in RETIRED_FINDINGS and f not in table]
    if retired:
        raise _retired_error(retired, table)
    unknown = [f for f in finding_ids if f not in table]
    if unknown:
        by_taxon = "; ".join(
            f"{taxon}s: {', '.join(f for f, v in table.items() if v.taxon == taxon)}"
            for taxon in TAXA
        )
        raise InputError(f"unknown finding(s) {', '.join(unknown)}", field="findings",
                         value=unknown, fix=f"use the patient's own: {by_taxon}")  # fmt: skip


def findings_for(taxon: str) -> dict[str, ClinicalFinding]:
    """The findings a patient of this taxon is examined for, in file order."""
    if taxon not in TAXA:
        raise InputError(f"unknown taxon {taxon!r}", field="taxon", value=taxon,
                         fix=", ".join(TAXA))  # fmt: skip
    return {k: f for k, f in load_findings().items() if f.taxon == taxon}


def estimate_dehydration(
    finding_ids: tuple[str, ...] | list[str], taxon: str = "mammal"
) -> DehydrationEstimate:
    """% dehydration band from clinical findings of the patient's taxon: the most severe
    finding sets the band (mammals: DiBartola 2012, Table 14-4; birds: Wildpro's crane
    bands; reptiles: signs only, no band). An empty list means nothing was detectable.
    A finding of another taxon's examination (capillary refill in a bearded dragon) is
    refused in words; so is one the table split (``RETIRED_FINDINGS``), with both choices
    named: plan files, drafts and the CLI say so rather than drop it.
    """
    check_finding_ids(finding_ids)  # unknown or retired: refused in words
    table = load_findings()
    own = findings_for(taxon)
    foreign = [f for f in finding_ids if f not in own]
    if foreign:
        raise InputError(
            f"{', '.join(table[f].label.lower() for f in foreign)}: not part of a {taxon}'s "
            "examination",
            field="findings",
            value=foreign,
            fix=f"use the {taxon} findings: "
            + ", ".join(f"{f.finding_id} ({f.label.lower()})" for f in own.values()),
        )
    chosen = [table[f] for f in finding_ids]
    if taxon == "reptile":
        source = next((f.source_id for f in chosen if f.source_id), "highfield_dehydration")
        return DehydrationEstimate(percent_low=None, percent_high=None, source_id=source,
                                   findings=tuple(f.finding_id for f in chosen),
                                   taxon=taxon)  # fmt: skip
    if not chosen:
        chosen = [next(f for f in own.values() if f.percent_low == 0)]
    worst = max(chosen, key=lambda f: (f.percent_low, f.percent_high))
    return DehydrationEstimate(
        percent_low=worst.percent_low,
        percent_high=worst.percent_high,
        findings=tuple(f.finding_id for f in chosen),
        source_id=worst.source_id,
        taxon=taxon,
    )


def _retired_error(retired: list[str], table: dict[str, ClinicalFinding]) -> InputError:
    """The refusal of findings the table split in two, naming both choices with their bands."""

    def choice(finding_id: str) -> str:
        finding = table[finding_id]
        band = f"{finding.percent_low:g}–{finding.percent_high:g} %"
        return f"{finding_id} ({finding.label.lower()}, {band})"

    parts = [
        f"{old_id} ({RETIRED_FINDINGS[old_id][0].lower()}) is now two findings, as in "
        f"DiBartola's table: {' or '.join(choice(new) for new in RETIRED_FINDINGS[old_id][1])}"
        for old_id in retired
    ]
    return InputError(
        "; ".join(parts),
        field="findings",
        value=retired,
        fix="re-examine the patient and name the one that fits",
    )


def _check_weight(weight_kg: float) -> None:
    require_number(weight_kg, "weight_kg", positive=True, unit="kg")


def check_percent(percent: float) -> float:
    """A dehydration percentage in 0–20 (above 15% death is imminent; DiBartola 2012)."""
    return require_number(
        percent,
        "dehydration",
        low=0,
        high=20,
        unit="%",
        fix="enter the estimated percentage, e.g. 7",
    )


def deficit_ml(weight_kg: float, dehydration_percent: float) -> float:
    """Fluid deficit in mL: BW (kg) × fraction dehydrated × 1000 (Davis 2013; DiBartola 2012)."""
    _check_weight(weight_kg)
    return weight_kg * check_percent(dehydration_percent) / 100.0 * 1000.0


def free_water_deficit_ml(
    *, weight_kg: float, serum_na: float, normal_na: float, tbw_fraction: float
) -> float:
    """Free-water deficit in mL: TBW × (Na / Na_normal − 1) × 1000; 0 when Na ≤ normal.

    TBW (L) = ``tbw_fraction`` × BW (kg). Standard formula (0.6 × BW in adult
    dogs and cats).
    """
    _check_weight(weight_kg)
    for name, value in (("serum_na", serum_na), ("normal_na", normal_na)):
        require_number(value, name, low=80, high=230, unit="mmol/L")
    require_number(tbw_fraction, "tbw_fraction", low=0.01, high=0.99)
    if serum_na <= normal_na:
        return 0.0
    return tbw_fraction * weight_kg * (serum_na / normal_na - 1.0) * 1000.0


def euhydrated_weight_kg(*, weight_kg: float, deficit_ml: float) -> float:
    """The weight once the deficit is replaced: entered weight + deficit (1 L ≈ 1 kg,
    Davis 2013)."""
    _check_weight(weight_kg)
    require_number(deficit_ml, "deficit_ml", low=0)
    return weight_kg + deficit_ml / 1000.0


# Puppies' and kittens' body water falls from about 80 % of body weight at birth to the
# adults' 60 % over the first six months (DiBartola 2012, ch. 1, as read in the research notes;
# the straight line between them is our assumption).
GROWN_AT_WEEKS = 26.0
# The species that timeline was read for; a rodent or a bird grows up on another clock, and
# more body water than it has would make every sodium change look smaller.
AGED_BY_WEEKS = ("dog", "cat")


def body_water_fraction(
    table: SpeciesTable,
    species_id: str,
    *,
    neonate: bool,
    weight_kg: float,
    age_weeks: float | None = None,
) -> SpeciesValue:
    """Total body water as a fraction of body weight: the adults' value, for a patient
    whose age is given the value for that age (:data:`GROWN_AT_WEEKS`; dogs and cats only,
    :data:`AGED_BY_WEEKS`: another species' age is said and not used), or for a neonate
    the neonatal value where the species or its group has one (dogs and cats: up to 0.8 of
    body weight against 0.6 in adults, Odunayo 2018). Neonates of other taxa keep the
    adult value; the plan says so. A "neonate" already within the adults' weight range
    keeps the adult value too: more body water would make every sodium change look
    smaller, and a flag left ticked must never soften a limit."""
    adult_low = table.value(species_id, "body_weight_kg")
    grown = weight_kg >= (adult_low.low if adult_low.low is not None else adult_low.number)
    young = table.get(species_id, "neonate_total_body_water_fraction")
    by_age = age_weeks is not None and species_id in AGED_BY_WEEKS
    if by_age and young is not None and age_weeks < GROWN_AT_WEEKS:
        # by age: from the neonates' value at birth to the adults' at six months
        adult = table.value(species_id, "total_body_water_fraction")
        share = max(age_weeks, 0.0) / GROWN_AT_WEEKS
        fraction = young.number + (adult.number - young.number) * share
        return replace(
            young, value=fraction, low=None, high=None, basis="derived",
            note=f"{weeks_text(age_weeks)} old: between {young.number:.0%} at birth and the "
                 f"adults' {adult.number:.0%} at {GROWN_AT_WEEKS:g} weeks (DiBartola 2012, "
                 "ch. 1: body water falls over the first six months; a straight line, our "
                 "assumption)",
        )  # fmt: skip
    if by_age:  # grown, or no young value: the adults' (the flag is moot)
        return table.value(species_id, "total_body_water_fraction")
    if neonate and not grown:
        young = table.get(species_id, "neonate_total_body_water_fraction")
        if young is not None:
            return young
    return table.value(species_id, "total_body_water_fraction")


def overload_weight_kg(*, weight_kg: float, deficit_ml: float, gain_fraction: float) -> float:
    """The weight that marks overhydration: the euhydrated weight plus ``gain_fraction``.

    A gain of 10 % or more over baseline marks overhydration (Pardo M et al., 2024 AAHA
    guidelines). For a dehydrated patient the baseline is taken as the euhydrated weight,
    entered weight + deficit (1 L ≈ 1 kg, Davis 2013), so replacing the deficit itself is
    never read as overload.
    """
    require_number(gain_fraction, "gain_fraction", positive=True, high=1)
    return euhydrated_weight_kg(weight_kg=weight_kg, deficit_ml=deficit_ml) * (1.0 + gain_fraction)
