"""Maintenance fluid: linear, allometric and energy-based methods, and the water budget.

Methods (each a pure function; the species table supplies the constants with
their basis):

* linear — rate (mL/kg/day) × BW; e.g. 60 mL/kg/day (DiBartola 2012, Table 14-9).
* allometric — a · BW^b mL/day; the 2013 AAHA/AAFP guideline formulas
  132 · BW^0.75 (dogs) and 80 · BW^0.75 (cats) (Davis H et al. 2013).
* energy — maintenance energy = multiple × basal K · BW^b kcal/day, water ≈ 1 mL
  per kcal. K · BW^b is basal (standard) metabolism (Kleiber 1961 70 · W^0.75 for
  placental mammals; Lasiewski & Dawson 1967 for birds; Andrews & Pough 1985
  exponent for squamates); "1 mL per kcal" applies to the maintenance energy
  requirement, about twice basal in housed eutherians (National Research Council,
  Nutrient Requirements of Nonhuman Primates, 2nd rev. ed. 2003, p. 47) and
  1.5 × basal in caged birds (Duerr & Gage, Hand-Rearing Birds, 2nd ed., Table B.1).
  The multiple is the species parameter ``maintenance_energy_multiple``.
* ectotherms — rates scale with body temperature by Q10 (Bennett & Dawson 1976):
  factor = Q10^((T − T_ref)/10). The energy constant is quoted at
  ``energy_reference_temp_c``; the linear reptile rate is taken to apply at the
  species' preferred temperature, so it is scaled from there (our reasoning,
  shown in the formula).

Water budget: insensible + faecal + urine water. The obligatory urine water is
the osmotic solute load divided by the concentrating ceiling (the species'
maximum urine osmolality, U/P × plasma, or a ceiling from the patient's USG or
urine osmolality, never above what the species can make). A patient whose
ceiling has fallen to plasma (isosthenuria) needs more water for the same load.

Birds and reptiles concentrate weakly, yet that is no reason to give them more
water: their nitrogen leaves as precipitated urate, which carries no osmotic water,
so only the dissolved solute counts (``urine_solute_mosm_per_kcal`` holds that
part for them), and cloaca, colon and bladder take water back after the kidney.
The bird U/P ceilings were measured on the urine of the droppings, after the
cloaca (Skadhauge 1974), so they already include what the cloaca did; the budgerigar
and the zebra finch live on dry seed without drinking (Skadhauge 1976). For reptiles
the water taken back after the kidney is not on record, so their urine water here is
the kidney's, an upper estimate. ``WaterBudget.nitrogen_as_urate`` tells the checks
not to turn a weak species ceiling into advice to give more water.
"""

from __future__ import annotations

from dataclasses import dataclass

from vetfluid.common.checks import require_number
from vetfluid.common.errors import InputError
from vetfluid.physiology import kidney
from vetfluid.tables.species import MAINTENANCE_METHODS, SpeciesTable, SpeciesValue

# Urine osmolality from USG: mOsm/kg ≈ (USG − 1) × this factor. There is no agreed
# conversion constant (USG–osmolality correlation r 0.87–0.99, Mösch M et al.,
# J Vet Diagn Invest 2020); 30 000 puts isosthenuria (USG 1.010) at plasma
# (≈ 300 mOsm/kg). Common practice, no source — shown as memory wherever used.
USG_TO_MOSM_FACTOR = 30_000.0
# An entered urine (osmolality, or USG converted) counts as above what the species can
# make only past its recorded ceiling by more than this: plasma osmolality, and the urine
# ceiling with it, rises 7–13 % in dehydrated birds (Skadhauge 1976), and published maxima
# are means of individual maxima (dog 2289 mOsm/kg, Hardy & Osborne 1979, against 2610 in
# an older table: 14 % more). The recorded high end of the maximum counts where larger.
ENTERED_CEILING_TOLERANCE = 1.15


def _positive(name: str, value: float) -> float:
    return require_number(value, name, positive=True)


def linear_ml_per_day(weight_kg: float, ml_per_kg_day: float) -> float:
    """Linear maintenance: rate × BW (mL/day). E.g. 60 mL/kg/day (DiBartola 2012)."""
    return _positive("weight_kg", weight_kg) * _positive("ml_per_kg_day", ml_per_kg_day)


def allometric_ml_per_day(weight_kg: float, a: float, b: float) -> float:
    """Allometric maintenance a · BW^b mL/day (Davis 2013: dog 132·BW^0.75, cat 80·BW^0.75)."""
    return _positive("a", a) * _positive("weight_kg", weight_kg) ** _positive("b", b)


def energy_kcal_per_day(weight_kg: float, k: float, exponent: float) -> float:
    """Energy expenditure K · BW^b kcal/day (Kleiber 1961: 70 · W^0.75 for placental mammals)."""
    return _positive("k", k) * _positive("weight_kg", weight_kg) ** _positive("exponent", exponent)


def q10_factor(body_temp_c: float, reference_temp_c: float, q10: float) -> float:
    """Metabolic scaling with temperature: Q10^((T − T_ref)/10) (Bennett & Dawson 1976)."""
    require_number(
        body_temp_c, "body_temp_c", low=-5, high=50, unit="°C",
        fix="enter the measured body (cloacal) temperature in °C",
    )  # fmt: skip
    return _positive("q10", q10) ** ((body_temp_c - reference_temp_c) / 10.0)


@dataclass(frozen=True, kw_only=True)
class Maintenance:
    """The maintenance volume with the method, the formula shown to the user, and its inputs."""

    ml_per_day: float
    method: str
    formula: str
    temperature_factor: float
    body_temp_c: float | None
    provenance: tuple[SpeciesValue, ...]

    @property
    def ml_per_h(self) -> float:
        return self.ml_per_day / 24.0


def _temperature(
    table: SpeciesTable, species_id: str, body_temp_c: float | None, reference: SpeciesValue
) -> tuple[float, float | None, list[SpeciesValue]]:
    """Q10 factor for ectotherms (1 for endotherms) and the values it used."""
    species = table.species(species_id)
    if not species.is_ectotherm:
        return 1.0, None, []
    q10 = table.value(species_id, "q10")
    preferred = table.value(species_id, "preferred_temp_c")
    temp = preferred.number if body_temp_c is None else body_temp_c
    factor = q10_factor(temp, reference.number, q10.number)
    return factor, temp, [q10, preferred, reference]


def maintenance(
    table: SpeciesTable,
    species_id: str,
    weight_kg: float,
    *,
    method: str | None = None,
    body_temp_c: float | None = None,
) -> Maintenance:
    """Maintenance for one patient by the species' default method or the one asked for.

    For ectotherms without an entered temperature the preferred temperature is
    used; the planner reports that as a finding.
    """
    _positive("weight_kg", weight_kg)
    default = table.value(species_id, "maintenance_method")
    chosen = method or str(default.value)
    if chosen not in MAINTENANCE_METHODS:
        raise InputError(
            f"unknown maintenance method {chosen!r}",
            field="maintenance_method",
            value=chosen,
            fix=", ".join(MAINTENANCE_METHODS),
        )
    used: list[SpeciesValue] = [] if method else [default]
    if chosen == "linear":
        rate = table.value(species_id, "maintenance_ml_per_kg_day")
        base = linear_ml_per_day(weight_kg, rate.number)
        formula = f"{rate.number:g} mL/kg/day × {weight_kg:.4g} kg"
        used.append(rate)
        reference = table.get(species_id, "preferred_temp_c")
    elif chosen == "allometric":
        a = table.value(species_id, "maintenance_allometric_a")
        b = table.value(species_id, "maintenance_allometric_b")
        base = allometric_ml_per_day(weight_kg, a.number, b.number)
        formula = f"{a.number:g} × {weight_kg:.4g}^{b.number:g} mL/day"
        used += [a, b]
        reference = table.get(species_id, "preferred_temp_c")
    else:
        k = table.value(species_id, "energy_k_kcal_per_day")
        b = table.value(species_id, "energy_exponent")
        multiple = table.value(species_id, "maintenance_energy_multiple")
        water = table.value(species_id, "water_ml_per_kcal")
        basal = energy_kcal_per_day(weight_kg, k.number, b.number)
        base = basal * _positive("maintenance_energy_multiple", multiple.number) * water.number
        formula = (
            f"{multiple.number:g} × {k.number:g} × {weight_kg:.4g}^{b.number:g} kcal/day "
            f"(maintenance = {multiple.number:g} × basal) × {water.number:g} mL/kcal"
        )
        used += [k, b, multiple, water]
        reference = table.get(species_id, "energy_reference_temp_c")
    factor, temp = 1.0, None
    if reference is not None and table.species(species_id).is_ectotherm:
        factor, temp, temp_values = _temperature(table, species_id, body_temp_c, reference)
        used += [v for v in temp_values if v not in used]
        q10 = table.value(species_id, "q10").number
        formula += f" × {q10:g}^(({temp:g} − {reference.number:g}) / 10)"
    return Maintenance(
        ml_per_day=base * factor,
        method=chosen,
        formula=formula,
        temperature_factor=factor,
        body_temp_c=temp,
        provenance=tuple(used),
    )


# ---- water budget ------------------------------------------------------------------------------
@dataclass(frozen=True, kw_only=True)
class WaterBudget:
    """Daily water budget (mL/day) with the concentrating ceiling it assumed.

    ``obligatory_urine_ml`` is the least urine that can carry the solute load at
    the ceiling; ``isosthenuric_urine_ml`` is the same load at plasma osmolality,
    to show what a patient who has lost concentrating ability needs.
    ``energy_kcal_per_day`` is maintenance energy (``energy_multiple`` × basal).
    ``entered_mosm_per_kg`` is the patient's urine as entered (osmolality, or USG
    converted); the ceiling used never exceeds ``species_ceiling_mosm_per_kg``, and
    ``entered_above_species`` says the entry is past what the species can make
    (beyond ``entered_limit_mosm_per_kg``): a likely mis-entry or contaminated sample.
    """

    energy_kcal_per_day: float
    energy_multiple: float
    solute_mosm_per_day: float
    ceiling_mosm_per_kg: float
    ceiling_from: str  # species maximum | U/P × plasma | USG | urine osmolality
    plasma_mosm_per_kg: float
    obligatory_urine_ml: float
    isosthenuric_urine_ml: float
    insensible_ml: float | None
    faecal_ml: float | None
    provenance: tuple[SpeciesValue, ...]
    species_ceiling_mosm_per_kg: float | None = None
    entered_mosm_per_kg: float | None = None
    entered_from: str | None = None  # USG | urine osmolality
    entered_limit_mosm_per_kg: float | None = None
    nitrogen_as_urate: bool = False

    @property
    def minimum_ml(self) -> float:
        """Insensible + faecal + obligatory urine water, counting only what is on record."""
        return self.obligatory_urine_ml + (self.insensible_ml or 0.0) + (self.faecal_ml or 0.0)

    @property
    def extra_if_isosthenuric_ml(self) -> float:
        return self.isosthenuric_urine_ml - self.obligatory_urine_ml

    @property
    def entered_above_species(self) -> bool:
        """The entered urine is more concentrated than the species can make."""
        return (
            self.entered_mosm_per_kg is not None
            and self.entered_limit_mosm_per_kg is not None
            and self.entered_mosm_per_kg > self.entered_limit_mosm_per_kg
        )

    @property
    def at_species_ceiling(self) -> bool:
        """The ceiling used is the species' own (nothing the patient's urine lowered)."""
        return (
            self.species_ceiling_mosm_per_kg is not None
            and self.ceiling_mosm_per_kg >= self.species_ceiling_mosm_per_kg
        )


def obligatory_urine_ml(solute_mosm: float, ceiling_mosm_per_kg: float) -> float:
    """Obligatory urine water (mL) = solute load (mOsm) ÷ ceiling (mOsm/kg) × 1000: the
    kidney's urine volume at its ceiling (:func:`kidney.urine_volume_ml`, the one function
    the course uses too)."""
    _positive("solute_mosm", solute_mosm)
    return kidney.urine_volume_ml(solute_mosm, _positive("ceiling", ceiling_mosm_per_kg))


def usg_to_osmolality(usg: float) -> float:
    """Approximate urine osmolality (mOsm/kg) from USG: (USG − 1) × 30 000 (memory, see above)."""
    if not (isinstance(usg, int | float) and 1.000 <= usg <= 1.080):
        raise InputError(
            "USG must be between 1.000 and 1.080", field="usg", value=usg, fix="e.g. 1.012"
        )
    return max((usg - 1.0) * USG_TO_MOSM_FACTOR, 1.0)


concentrating_ceiling = kidney.concentrating_ceiling  # the species' ceiling lives with the kidney


def entered_urine_limit(table: SpeciesTable, species_id: str) -> float | None:
    """The most concentrated urine an entry may show before it counts as beyond the species:
    the larger of the recorded high end of the maximum and the ceiling × the tolerance
    (``ENTERED_CEILING_TOLERANCE``, reasons above). None when no ceiling is on record."""
    try:
        ceiling, _, values = concentrating_ceiling(table, species_id)
    except InputError:
        return None
    recorded_high = values[0].high if values[0].high is not None else values[0].number
    if values[0].parameter == "max_urine_plasma_ratio":
        recorded_high *= values[1].number
    return max(recorded_high, ceiling * ENTERED_CEILING_TOLERANCE)


def water_budget(
    table: SpeciesTable,
    species_id: str,
    weight_kg: float,
    *,
    body_temp_c: float | None = None,
    usg: float | None = None,
    urine_osmolality: float | None = None,
) -> WaterBudget:
    """Daily water budget: insensible + faecal + obligatory urine water.

    Solute load = maintenance energy (multiple × K · BW^b, Q10-scaled for
    ectotherms) × urine solute per kcal (for urate excretors the dissolved part
    only). The ceiling is the patient's measured urine osmolality, else USG
    converted, else the species' maximum; a patient's urine counts only between
    plasma (a dilute sample shows what the kidney does now, not the most it can
    do) and the species' ceiling (more is a mis-entry or contamination).
    """
    energy = maintenance(table, species_id, weight_kg, method="energy", body_temp_c=body_temp_c)
    water = table.value(species_id, "water_ml_per_kcal")
    multiple = table.value(species_id, "maintenance_energy_multiple")
    kcal = energy.ml_per_day / water.number
    solute_rate = table.value(species_id, "urine_solute_mosm_per_kcal")
    plasma = table.value(species_id, "plasma_osmolality_mosm_per_kg")
    used = [*energy.provenance, solute_rate, plasma]
    try:
        species_ceiling, species_source, ceiling_values = concentrating_ceiling(table, species_id)
    except InputError:
        if urine_osmolality is None and usg is None:
            raise
        species_ceiling, species_source, ceiling_values = None, None, []
    entered, entered_from = None, None
    if urine_osmolality is not None:
        entered, entered_from = _positive("urine_osmolality", urine_osmolality), "urine osmolality"
    elif usg is not None:
        entered, entered_from = usg_to_osmolality(usg), "USG"
    if entered is None or (species_ceiling is not None and entered >= species_ceiling):
        # the species' own ceiling: nothing entered, or an entry at or above it
        ceiling, source = float(species_ceiling), str(species_source)
        used += [v for v in ceiling_values if v not in used]
    else:
        ceiling, source = max(entered, plasma.number), str(entered_from)
    solute = kidney.solute_load_mosm_per_day(kcal, solute_rate.number)
    insensible = table.get(species_id, "insensible_loss_ml_per_kg_day")
    faecal = table.get(species_id, "faecal_water_ml_per_kg_day")
    used += [v for v in (insensible, faecal) if v is not None]
    return WaterBudget(
        energy_kcal_per_day=kcal,
        energy_multiple=multiple.number,
        solute_mosm_per_day=solute,
        ceiling_mosm_per_kg=ceiling,
        ceiling_from=source,
        plasma_mosm_per_kg=plasma.number,
        obligatory_urine_ml=obligatory_urine_ml(solute, ceiling),
        isosthenuric_urine_ml=obligatory_urine_ml(solute, plasma.number),
        insensible_ml=insensible.number * weight_kg if insensible else None,
        faecal_ml=faecal.number * weight_kg if faecal else None,
        provenance=tuple(used),
        species_ceiling_mosm_per_kg=species_ceiling,
        entered_mosm_per_kg=entered,
        entered_from=entered_from,
        entered_limit_mosm_per_kg=entered_urine_limit(table, species_id) if entered else None,
        nitrogen_as_urate=table.species(species_id).nitrogen_excretion == "uric acid",
    )
