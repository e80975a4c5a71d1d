"""The kidney: the urine osmolality band, the urine the body asks for, and the water and
solute it excretes step by step.

Pure functions and one step loop on plain floats; the equations and their sources are in
``docs/model.md`` ("The kidney"). In short:

* **Band** (:func:`urine_band`). Urine osmolality lies between the species' diluting
  floor (``min_urine_osmolality_mosm_per_kg``; dog 50 mOsm/kg, van Vonderen IK et al.,
  J Vet Intern Med 1997) and its concentrating ceiling (the maximum urine osmolality, or
  U/P × plasma for birds and reptiles; reptiles U/P 1, Holz). Renal disease narrows the band
  towards plasma (isosthenuria): an entered USG or urine osmolality sets the ceiling
  (never below plasma), and the floor comes up in the same proportion (our reasoning, no
  source); with no urine entered a diseased kidney is taken as isosthenuric.
* **Urine asked for** (:func:`urine_osmolality_asked`). ADH moves the urine from floor to
  ceiling over ``adh_response_span_mosm_per_kg`` of plasma tonicity, centred on the set
  point, evenly in log osmolality (each step of tonicity changes the urine flow of a
  given solute load by the same factor; our modelling choice). An ECF deficit adds a
  volume drive: at ``adh_volume_deficit_fraction`` of the euhydrated ECF it alone
  takes the urine to the ceiling (recalled human figure, memory).
* **Solute** (:func:`follow_balance`). Na is excreted in proportion to the ECF above its
  euhydrated size (pressure natriuresis; its rate constant is the calibrated
  ``crystalloid_elimination_half_life_min``, Hahn 2020); none while the ECF is below it,
  as elimination slows with hypovolaemia (Drobin & Hahn 1999), and a tenth to a fifth as
  much under anaesthesia (Hahn 2010). K excretion follows intake with
  ``urine_k_adaptation_h``, never below ``urine_k_min_mmol_per_kg_day``, starting from the
  intake of a maintenance fluid at the scale's maintenance band (Côté 2020). Other solute
  (urea, phosphate, ammonium …) leaves at the water budget's solute load
  (:func:`solute_load_mosm_per_day`).
* **Volume**: urine water = osmoles excreted ÷ urine osmolality (:func:`urine_volume_ml`,
  the one function the plan's water budget uses for obligatory urine water too).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from vetfluid.common.checks import require_number
from vetfluid.common.errors import InputError
from vetfluid.tables.species import SpeciesTable, SpeciesValue

# Renal clearance of infused fluid during surgery is 10–20 % of that in conscious
# volunteers (Hahn RG, Anesthesiology 2010;113:470–481, "hahn2010"); the middle is used.
ANAESTHESIA_EXCRETION_FRACTION = 0.15
# Elimination falls with a volume deficit (Drobin D, Hahn RG, Anesthesiology 1999;90:81–91,
# "drobin1999"): here the volume-driven natriuresis stops while the ECF is below its
# euhydrated size.
RENAL_SOURCES = ("hahn2010", "drobin1999")
NEWTON_STEPS = 8  # the urine-osmolality equation converges from below in a few steps


def _positive(name: str, value: float) -> float:
    return require_number(value, name, positive=True)


# ---- the band ----------------------------------------------------------------------------
def concentrating_ceiling(
    table: SpeciesTable, species_id: str
) -> tuple[float, str, list[SpeciesValue]]:
    """The species' maximum urine osmolality: measured, or U/P ratio × plasma osmolality
    (birds: Skadhauge 1974; reptiles U/P 1, Holz)."""
    plasma = table.value(species_id, "plasma_osmolality_mosm_per_kg")
    direct = table.get(species_id, "max_urine_osmolality_mosm_per_kg")
    if direct is not None:
        return direct.number, "species maximum", [direct]
    ratio = table.get(species_id, "max_urine_plasma_ratio")
    if ratio is not None:
        return ratio.number * plasma.number, "U/P × plasma", [ratio, plasma]
    raise InputError(
        "No urine-concentrating ceiling (maximum urine osmolality or urine-to-plasma ratio) "
        f"is on record for this species ({table.species(species_id).common_name}), so the "
        "minimum water need cannot be estimated.",
        field="max_urine_osmolality_mosm_per_kg",
        value=None,
        fix="Enter the patient's USG or urine osmolality, or add the value to the species table.",
    )


def urine_volume_ml(solute_mosm: float, osmolality_mosm_per_kg: float) -> float:
    """Urine water (mL) that carries ``solute_mosm`` at ``osmolality_mosm_per_kg``:
    solute ÷ osmolality × 1000. At the concentrating ceiling this is the obligatory urine
    water of the water budget; the course uses it at the osmolality the body asks for."""
    require_number(solute_mosm, "solute_mosm", low=0)
    return solute_mosm / _positive("urine osmolality", osmolality_mosm_per_kg) * 1000.0


def narrowed_band(
    *, floor: float, ceiling: float, plasma: float, ceiling_now: float
) -> tuple[float, float]:
    """A diseased kidney's band: the ceiling it still reaches (never below plasma nor
    above the species' ceiling) and a floor raised towards plasma in the same proportion
    (isosthenuria at both ends when the ceiling has fallen to plasma). Our reasoning, no
    source: a kidney that cannot concentrate cannot dilute well either (issue 19)."""
    top = min(max(ceiling_now, plasma), ceiling)
    kept = (top - plasma) / (ceiling - plasma) if ceiling > plasma else 1.0
    return plasma - (plasma - floor) * kept, top


@dataclass(frozen=True, kw_only=True)
class UrineBand:
    """Where the urine osmolality can lie (mOsm/kg) and why."""

    floor_mosm_per_kg: float
    ceiling_mosm_per_kg: float
    plasma_mosm_per_kg: float
    narrowed_by: str | None  # None: the species' own band
    provenance: tuple[SpeciesValue, ...]


def urine_band(
    table: SpeciesTable,
    species_id: str,
    *,
    renal_disease: bool = False,
    entered_mosm_per_kg: float | None = None,
) -> UrineBand:
    """The species' band from diluting floor to concentrating ceiling (reptiles never above
    plasma), narrowed towards isosthenuria with renal disease (:func:`narrowed_band`): by
    the patient's urine when one was entered, else to plasma."""
    plasma = table.value(species_id, "plasma_osmolality_mosm_per_kg")
    floor = table.value(species_id, "min_urine_osmolality_mosm_per_kg")
    ceiling, _, ceiling_values = concentrating_ceiling(table, species_id)
    used = [floor, *ceiling_values, plasma]
    low, high, narrowed_by = min(floor.number, plasma.number), ceiling, None
    if renal_disease:
        entered = plasma.number if entered_mosm_per_kg is None else entered_mosm_per_kg
        low, high = narrowed_band(floor=low, ceiling=high, plasma=plasma.number,
                                  ceiling_now=entered)  # fmt: skip
        narrowed_by = (
            "renal disease, no urine entered (isosthenuria)"
            if entered_mosm_per_kg is None
            else "renal disease and the urine entered"
        )
    return UrineBand(
        floor_mosm_per_kg=low, ceiling_mosm_per_kg=max(high, low), plasma_mosm_per_kg=plasma.number,
        narrowed_by=narrowed_by, provenance=tuple(dict.fromkeys(used)),
    )  # fmt: skip


def urine_osmolality_asked(
    *,
    tonicity_excess_mosm_per_kg: float,
    volume_deficit_fraction: float,
    floor: float,
    ceiling: float,
    span_mosm_per_kg: float,
    volume_deficit_for_full: float,
) -> float:
    """The urine osmolality ADH asks for: floor × (ceiling/floor)^x with
    x = ½ + (tonicity excess + span × deficit / deficit for a full response) / span,
    held within 0…1 (see the module docstring)."""
    drive = tonicity_excess_mosm_per_kg + span_mosm_per_kg * max(volume_deficit_fraction, 0.0) / (
        volume_deficit_for_full
    )
    x = min(max(0.5 + drive / span_mosm_per_kg, 0.0), 1.0)
    return floor * (ceiling / floor) ** x


# ---- solute load (shared with the water budget) ------------------------------------------
def solute_load_mosm_per_day(kcal_per_day: float, solute_mosm_per_kcal: float) -> float:
    """Osmotic solute the kidney excretes a day: maintenance energy × solute per kcal
    (``urine_solute_mosm_per_kcal``; for urate excretors the dissolved part only)."""
    return _positive("kcal_per_day", kcal_per_day) * _positive("solute per kcal",
                                                               solute_mosm_per_kcal)  # fmt: skip


# ---- the step loop -------------------------------------------------------------------------
@dataclass(frozen=True, kw_only=True)
class KidneySettings:
    """One patient's kidney for :func:`follow_balance` (rates per hour)."""

    floor_mosm_per_kg: float
    ceiling_mosm_per_kg: float
    span_mosm_per_kg: float
    volume_deficit_for_full: float
    set_na_mmol_per_l: float  # tonicity is measured from here (2 × Na)
    natriuresis_per_h: float  # k_e on the ECF above its euhydrated size; 0: left out
    other_solute_mosm_per_h: float  # urea, phosphate …: the water budget's solute load
    k_start_mmol_per_h: float
    k_min_mmol_per_h: float
    k_time_constant_h: float
    urine_cap_ml_per_h: float | None = None  # oliguric kidney: at most this much urine


@dataclass(frozen=True, kw_only=True)
class Balance:
    """Body water and exchangeable solute at each grid point (lists of floats)."""

    tbw_ml: list[float]
    na_k_mmol: list[float]  # exchangeable Na + K (Edelman): serum Na = this ÷ TBW
    k_mmol: list[float]  # exchangeable K
    ecf_osm: list[float]  # effective mOsm in the ECF, and in the ICF
    icf_osm: list[float]
    urine_ml: list[float]  # cumulative
    urine_osm_mosm_per_kg: list[float]
    urine_ecf_ml: list[float]  # per step: the ECF the kidney's excretion took (from plasma)
    na_excreted_mmol: list[float]  # cumulative urine Na, and K
    k_excreted_mmol: list[float]


def _solve_urine_x(d0: float, k: float, b: float, span: float, log_ratio: float) -> float:
    """x in [0, 1] with x = ½ + (d0 + k·b·e^(−L·x)) / span: the urine osmolality position
    after the water it carries has left (tonicity rises by k per mL). h(x) is increasing and
    concave, so Newton from x = 0 climbs monotonically to the root."""
    if b <= 0.0:
        return min(max(0.5 + d0 / span, 0.0), 1.0)
    c = k * b / span

    def h(x: float) -> float:
        return x - 0.5 - d0 / span - c * math.exp(-log_ratio * x)

    if h(0.0) >= 0.0:
        return 0.0
    if h(1.0) <= 0.0:
        return 1.0
    x = 0.0
    for _ in range(NEWTON_STEPS):
        e = c * math.exp(-log_ratio * x)
        step = (x - 0.5 - d0 / span - e) / (1.0 + log_ratio * e)
        x -= step
        if abs(step) < 1e-12:
            break
    return min(x, 1.0)


def follow_balance(
    *,
    step_h: float,
    water_in_ml: list[float],
    na_in_mmol: list[float],
    k_in_mmol: list[float],
    ecf_osm_in: list[float],
    free_water_out_ml: list[float],
    loss_out_ml: list[float],
    loss_na_k_mmol_per_ml: float | None,
    loss_k_mmol_per_ml: float | None,
    tbw0_ml: float,
    ecf0_ml: float,
    ecf_ref_ml: float,
    osmolality0: float,
    na0: float,
    k0: float,
    kidney: KidneySettings | None,
    basal_steps: int,
) -> Balance:
    """Step body water and solute through a grid: per step, what went in (water, Na, K,
    effective osmoles entering the ECF), solute-free water out (insensible), losses out
    (at the given Na + K per mL, or isotonic at the moment's Na and K when None), then the
    kidney (:class:`KidneySettings`; None: no urine is modelled).

    Serum Na = (Na + K)ₑ / TBW (Edelman 1958; Adrogué & Madias 2000); every input and
    output moves it by its own water and Na + K (electrolyte-free water balance; Shah &
    Bhave, Front Med 2018). ECF/ICF share the water in osmotic equilibrium; K and its
    anion sit in the ICF. Salts count φ = osmolality₀ / (2 Na₀) mOsm per mmol of cation in
    the compartments, so an isotonic loss takes osmolality₀ per litre as before.
    The kidney's basal excretion (K, other solute) runs for ``basal_steps`` steps (the plan);
    after it the patient's own intake is taken to match it, and only the volume-driven
    natriuresis goes on. Input lists hold one increment per step (index 0 is hour 0).
    """
    n = len(water_in_ml)
    phi = osmolality0 / (2.0 * na0)
    w, pool = tbw0_ml, na0 * tbw0_ml / 1000.0
    icf0 = tbw0_ml - ecf0_ml
    k_pool0 = na0 * icf0 / 1000.0  # the ICF's cation is K: K_e ≈ Na₀ × ICF₀ (Edelman)
    k_pool = k_pool0
    o_ecf, o_icf = osmolality0 * ecf0_ml / 1000.0, osmolality0 * icf0 / 1000.0
    urine = na_out = k_out = 0.0
    tbw, na_k, ks, oe, oi = [], [], [], [], []
    urine_total, urine_osm, urine_ecf, na_sum, k_sum = [], [], [], [], []
    if kidney is not None:
        floor, ceiling = kidney.floor_mosm_per_kg, kidney.ceiling_mosm_per_kg
        log_ratio = math.log(ceiling / floor) if ceiling > floor else 0.0
        span = kidney.span_mosm_per_kg
        k_rate = kidney.k_start_mmol_per_h
        k_keep = math.exp(-step_h / kidney.k_time_constant_h)
        take = -math.expm1(-kidney.natriuresis_per_h * step_h)
        osm_now = floor * math.exp(0.5 * log_ratio)
    else:
        osm_now = math.nan
    last_change = max(
        (i for i in range(n) if water_in_ml[i] or na_in_mmol[i] or k_in_mmol[i]
         or free_water_out_ml[i] or loss_out_ml[i]),
        default=0,
    )  # fmt: skip
    i = 0
    while i < n:
        # what goes in
        w += water_in_ml[i]
        k_step = k_in_mmol[i]
        pool += na_in_mmol[i] + k_step
        k_pool += k_step
        o_ecf += ecf_osm_in[i]
        o_icf += 2.0 * phi * k_step
        # solute-free water out, then losses
        w -= free_water_out_ml[i]
        lost = loss_out_ml[i]
        if lost:
            na_now = pool / w * 1000.0
            serum_k = k0 * k_pool / k_pool0
            per_ml_na_k = (
                na_now / 1000.0 if loss_na_k_mmol_per_ml is None else loss_na_k_mmol_per_ml
            )
            per_ml_k = serum_k / 1000.0 if loss_k_mmol_per_ml is None else loss_k_mmol_per_ml
            pool -= per_ml_na_k * lost
            k_pool -= per_ml_k * lost
            o_ecf -= 2.0 * phi * (per_ml_na_k - per_ml_k) * lost
            o_icf -= 2.0 * phi * per_ml_k * lost
            w -= lost
        ecf_taken = volume = 0.0
        if kidney is not None and i > 0:
            total_osm = o_ecf + o_icf
            ecf = w * o_ecf / total_osm
            na_now = pool / w * 1000.0
            above = ecf - ecf_ref_ml
            e_na = take * above * na_now / 1000.0 if above > 0.0 else 0.0
            if i <= basal_steps:
                target = max(k_step / step_h, kidney.k_min_mmol_per_h)
                k_rate = target + (k_rate - target) * k_keep
                e_k = k_rate * step_h
                other = kidney.other_solute_mosm_per_h * step_h
            else:
                e_k = other = 0.0
            solute = 2.0 * (e_na + e_k) + other
            pool_after = pool - e_na - e_k
            deficit = -above / ecf_ref_ml if above < 0.0 else 0.0
            d0 = 2.0 * (pool_after / w * 1000.0 - kidney.set_na_mmol_per_l)
            d0 += span * deficit / kidney.volume_deficit_for_full
            # tonicity rises by 2·Na/W per mL of water taken (mOsm/kg per mL)
            x = _solve_urine_x(d0, 2.0 * pool_after * 1000.0 / (w * w),
                               solute * 1000.0 / floor, span, log_ratio)  # fmt: skip
            osm_now = floor * math.exp(log_ratio * x)
            volume = solute / osm_now * 1000.0
            cap = kidney.urine_cap_ml_per_h
            if cap is not None and volume > cap * step_h:
                scale = cap * step_h / volume  # solute that cannot leave stays in the body
                volume, e_na, e_k, solute = (
                    volume * scale,
                    e_na * scale,
                    e_k * scale,
                    solute * scale,
                )
            if volume:
                before = ecf
                pool -= e_na + e_k
                k_pool -= e_k
                o_ecf -= 2.0 * phi * e_na
                o_icf -= 2.0 * phi * e_k
                w -= volume
                urine += volume
                na_out += e_na
                k_out += e_k
                ecf_taken = before - w * o_ecf / (o_ecf + o_icf)
        tbw.append(w)
        na_k.append(pool)
        ks.append(k_pool)
        oe.append(o_ecf)
        oi.append(o_icf)
        urine_total.append(urine)
        urine_osm.append(osm_now)
        urine_ecf.append(ecf_taken)
        na_sum.append(na_out)
        k_sum.append(k_out)
        i += 1
        if i > max(last_change, basal_steps) + 1 and volume < 1e-9:
            break  # nothing goes in or out any more: the state holds
    rest = n - len(tbw)
    if rest:
        for values in (tbw, na_k, ks, oe, oi, urine_total, urine_osm, na_sum, k_sum):
            values.extend([values[-1]] * rest)
        urine_ecf.extend([0.0] * rest)
    return Balance(
        tbw_ml=tbw, na_k_mmol=na_k, k_mmol=ks, ecf_osm=oe, icf_osm=oi, urine_ml=urine_total,
        urine_osm_mosm_per_kg=urine_osm, urine_ecf_ml=urine_ecf, na_excreted_mmol=na_sum,
        k_excreted_mmol=k_sum,
    )  # fmt: skip
