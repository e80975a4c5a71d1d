"""The kidney: the urine osmolality band, the urine the body asks for, and the water and
solute it excretes step by step.

Pure functions and one step loop on plain floats; the equations and their sources are in
``docs/model.md`` ("The kidney"). In short:

* **Band** (:func:`urine_band`). Urine osmolality lies between the species' diluting
  floor (``min_urine_osmolality_mosm_per_kg``; dog 50 mOsm/kg, van Vonderen IK et al.,
  J Vet Intern Med 1997; or U/P × plasma, ``min_urine_plasma_ratio``, for birds and
  reptiles: :func:`diluting_floor`) and its concentrating ceiling (the maximum urine osmolality, or
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
* **Diuretics** (:class:`DiureticAction`, :data:`CLASS_EFFECTS`). Each class acts where it
  acts in the nephron, scaled by its intensity at each step: extra Na excretion (a share of
  the ECF's Na per hour) with K alongside; a loop diuretic pulls both ends of the band to
  plasma (no medullary gradient, no diluting segment); a thiazide raises the floor (the
  cortical diluting segment); a potassium-sparing drug holds back a share of K excretion
  (Jeunesse 2007); mannitol is an effective osmole in the ECF, excreted with its half-life,
  and washes the band towards plasma by its share of the urine's solute. A
  carbonic-anhydrase inhibitor's Na leaves with bicarbonate (``Balance.hco3_excreted_mmol``,
  for the course's bicarbonate; docs/model.md, "Bicarbonate").
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

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


# ---- diuretics (docs/model.md, "Diuretics") ------------------------------------------------
@dataclass(frozen=True, kw_only=True)
class ClassEffect:
    """What one class of diuretic does at intensity 1 (the low end of its dose range at its
    peak; :func:`intensity`)."""

    natriuresis_per_h: float  # share of the ECF's Na excreted per hour
    k_per_na: float  # mmol K excreted with each mmol of that Na
    floor_to_plasma: float  # share of the way the diluting floor is raised to plasma
    ceiling_to_plasma: float  # share of the way the concentrating ceiling falls to plasma
    k_spared: float  # share of K excretion held back
    hco3_per_na: float = 0.0  # mmol HCO3 carried with each mmol of that Na (normal plasma)


# The loop's natriuresis is set so a 20 kg dog at intensity 1 excretes about 1 mmol/kg/h of
# Na (our calibration, memory: several times the urine flow, as Harada 2015 saw, without a
# measured figure); the other classes in proportion to the most Na each can make the kidney
# excrete, as a share of the filtered load (loop 25 %, thiazide 5 %, carbonic-anhydrase
# inhibitor 4 %, potassium-sparing 2 %: pharmacology textbooks, recalled, memory). K with
# the Na: 0.2 (loop) and 0.3 (thiazide, acetazolamide) mmol per mmol (recalled, memory).
# A loop diuretic abolishes both the medullary gradient and the diluting segment (the thick
# ascending limb does both): the band goes to plasma. A thiazide blocks the cortical
# diluting segment only: the floor rises half-way (our choice, no source). Spironolactone
# holds back 20 % of K excretion at intensity 1, 24 % at the steady state of 2 mg/kg a day
# (urine K −22 % at 2 mg/kg/day in healthy dogs, Jeunesse 2007, "jeunesse2007"), with a
# small natriuresis (none was measurable in healthy dogs; the "small").
# Bicarbonate: a carbonic-anhydrase inhibitor blocks proximal bicarbonate reabsorption, so
# its Na (and K) leave as bicarbonate salts: 1 mmol HCO3 per mmol of its Na at a normal
# plasma bicarbonate (recalled, memory; the course scales it with the filtered bicarbonate).
# Loop and thiazide diuretics lose Na with Cl: none (the contraction of the ECF around its
# bicarbonate follows in the course; their distal H+ loss is left out).
CLASS_EFFECTS = {
    "loop": ClassEffect(natriuresis_per_h=0.035, k_per_na=0.2, floor_to_plasma=1.0,
                        ceiling_to_plasma=1.0, k_spared=0.0),
    "thiazide": ClassEffect(natriuresis_per_h=0.007, k_per_na=0.3, floor_to_plasma=0.5,
                            ceiling_to_plasma=0.0, k_spared=0.0),
    "carbonic_anhydrase_inhibitor": ClassEffect(natriuresis_per_h=0.0056, k_per_na=0.3,
                                                floor_to_plasma=0.0, ceiling_to_plasma=0.0,
                                                k_spared=0.0, hco3_per_na=1.0),
    "potassium_sparing": ClassEffect(natriuresis_per_h=0.0028, k_per_na=0.0,
                                     floor_to_plasma=0.0, ceiling_to_plasma=0.0, k_spared=0.2),
}  # fmt: skip
# Dose–response: intensity = ceiling × E / (ceiling − 1 + E) for an exposure E (dose ÷ the
# reference dose, summed over the doses' profiles): 1 at the reference dose, rising towards
# the ceiling with larger doses, an Emax curve as furosemide's in dogs (Emax models, J Vet
# Pharmacol Ther 2016, PMID 27166146); the ceiling of 1.5 is our choice, no source.
INTENSITY_CEILING = 1.5
# A loop diuretic's urine stays near plasma even at modest doses, and an infusion's is
# there throughout (Adin 2003 saw more diuresis from 0.66 mg/kg/h than from boluses): the
# band's shift is complete from half the reference intensity on (our choice, no source).
BAND_FULL_AT_INTENSITY = 0.5
# Mannitol: given as 20 % (200 g/L) over 15–20 min (Kirk's ch. 191, "kirk_aki"; Plumb,
# "plumb_vdh_older"), the longer end; excreted by filtration with a half-life of 2.2 h
# (people with normal kidneys; recalled, memory).
MANNITOL_G_PER_L = 200.0
MANNITOL_MINUTES = 20.0
MANNITOL_HALF_LIFE_H = 2.2
# In an osmotic diuresis the urine comes close to plasma (textbook physiology, common
# practice, no source): here the band reaches plasma once mannitol is this share of the
# urine's solute, and in proportion below it (our choice, no source).
MANNITOL_WASHOUT_SHARE = 0.25
# Where the constants above come from (species_data/sources.csv).
DIURETIC_SOURCES = ("jeunesse2007", "adin2003", "kirk_aki", "plumb_vdh_older")


def intensity(exposure):  # noqa: ANN001, ANN201 — a float or an array of them (≥ 0)
    """The Emax dose–response (:data:`INTENSITY_CEILING`): 0 → 0, 1 → 1, ∞ → the ceiling."""
    top = INTENSITY_CEILING
    return top * exposure / (top - 1.0 + exposure)


def effect_profile(*, onset_h: float | None, peak_h: float, duration_h: float,
                   hours: list[float]) -> list[float]:  # fmt: skip
    """A dose's effect (0–1) at hours after it: none before the onset (from the dose when
    none is on record), rising evenly to 1 at the peak, falling evenly to 0 at the end of
    its duration (our modelling choice between the three times on record)."""
    start = onset_h or 0.0
    values = []
    for t in hours:
        if t < start or t >= duration_h:
            values.append(0.0)
        elif t <= peak_h:
            values.append(1.0 if peak_h == start else (t - start) / (peak_h - start))
        else:
            values.append((duration_h - t) / (duration_h - peak_h))
    return values


@dataclass(frozen=True, kw_only=True)
class DiureticAction:
    """What the diuretics do at each step of the grid (lists of floats, one per step), for
    :func:`follow_balance`; build it with :meth:`from_intensities`."""

    na_share_per_h: list[float]  # share of the ECF's Na excreted per hour
    k_share_per_h: list[float]  # K excreted per hour, as a share of the ECF's Na
    floor_shift: list[float]  # 0–1 of the way from the floor to plasma
    ceiling_shift: list[float]  # 0–1 of the way from the ceiling to plasma
    k_kept: list[float]  # the share of K excretion that still happens
    hco3_share_per_h: list[float] | None  # HCO3 excreted per hour, share of the ECF's Na
    mannitol_in_mosm: list[float] | None  # mannitol's osmoles entering the ECF per step
    mannitol_keep: float  # share of the mannitol left after one step
    first_step: int
    last_step: int  # nothing acts after this step (mannitol still leaves)

    @classmethod
    def from_intensities(
        cls,
        intensities: dict[str, np.ndarray],
        *,
        steps: int,
        step_h: float,
        mannitol_in_mosm: list[float] | None = None,
    ) -> DiureticAction:
        """Sum the classes' effects (:data:`CLASS_EFFECTS`) at each step's intensity."""
        na, k = np.zeros(steps), np.zeros(steps)
        floor, ceiling, kept = np.zeros(steps), np.zeros(steps), np.ones(steps)
        hco3 = np.zeros(steps)
        acting = np.zeros(steps, dtype=bool)
        if mannitol_in_mosm is not None:
            acting |= np.asarray(mannitol_in_mosm) != 0
        for name, values in intensities.items():
            effect, level = CLASS_EFFECTS[name], np.asarray(values, dtype=float)
            acting |= level != 0
            na += effect.natriuresis_per_h * level
            k += effect.natriuresis_per_h * effect.k_per_na * level
            hco3 += effect.natriuresis_per_h * effect.hco3_per_na * level
            full = np.minimum(level / BAND_FULL_AT_INTENSITY, 1.0)
            floor = np.maximum(floor, effect.floor_to_plasma * full)
            ceiling = np.maximum(ceiling, effect.ceiling_to_plasma * full)
            kept -= effect.k_spared * level
        where = np.flatnonzero(acting)
        na, k, floor, ceiling = na.tolist(), k.tolist(), floor.tolist(), ceiling.tolist()
        kept = np.maximum(kept, 0.0).tolist()
        return cls(
            na_share_per_h=na, k_share_per_h=k, floor_shift=floor, ceiling_shift=ceiling,
            k_kept=kept, hco3_share_per_h=hco3.tolist() if hco3.any() else None,
            mannitol_in_mosm=mannitol_in_mosm,
            mannitol_keep=math.exp(-math.log(2) / MANNITOL_HALF_LIFE_H * step_h),
            first_step=int(where[0]) if where.size else 0,
            last_step=int(where[-1]) if where.size else -1,
        )  # fmt: skip


def _positive(name: str, value: float) -> float:
    return require_number(value, name, positive=True)


# ---- the band ----------------------------------------------------------------------------
def _measured_or_ratio(
    table: SpeciesTable,
    species_id: str,
    *,
    measured: str,
    ratio: str,
    how: str,
    missing: str,
    so: str,
    fix: str,
) -> tuple[float, str, list[SpeciesValue]]:
    """A band end: the species' measured value, or its U/P ratio × plasma osmolality; with
    neither on record, refused in words (``missing`` is not on record, ``so`` follows)."""
    plasma = table.value(species_id, "plasma_osmolality_mosm_per_kg")
    direct = table.get(species_id, measured)
    if direct is not None:
        return direct.number, how, [direct]
    share = table.get(species_id, ratio)
    if share is not None:
        return share.number * plasma.number, "U/P × plasma", [share, plasma]
    raise InputError(
        f"{missing} is on record for this species ({table.species(species_id).common_name}), "
        f"so {so}.",
        field=measured,
        value=None,
        fix=fix,
    )


def concentrating_ceiling(
    table: SpeciesTable, species_id: str
) -> tuple[float, str, list[SpeciesValue]]:
    """The species' maximum urine osmolality: measured, or U/P ratio × plasma osmolality
    (birds: Skadhauge 1974; reptiles U/P 1, Holz)."""
    return _measured_or_ratio(
        table, species_id, measured="max_urine_osmolality_mosm_per_kg",
        ratio="max_urine_plasma_ratio", how="species maximum",
        missing="No urine-concentrating ceiling (maximum urine osmolality or urine-to-plasma "
        "ratio)", so="the minimum water need cannot be estimated",
        fix="Enter the patient's USG or urine osmolality, or add the value to the species table.",
    )  # fmt: skip


def diluting_floor(table: SpeciesTable, species_id: str) -> tuple[float, str, list[SpeciesValue]]:
    """The species' least urine osmolality: measured, or U/P ratio × plasma osmolality
    (water-loaded lizards U/P 0.6–1.0, "Renal ultrastructure and excretion of salt and water
    by three terrestrial lizards"; water-loaded fowl 0.37, "Renal function in domestic fowl",
    Am J Physiol 1967)."""
    return _measured_or_ratio(
        table, species_id, measured="min_urine_osmolality_mosm_per_kg",
        ratio="min_urine_plasma_ratio", how="species minimum",
        missing="No diluting floor (least urine osmolality or urine-to-plasma ratio)",
        so="the course cannot follow its urine", fix="Add the value to the species table.",
    )  # fmt: skip


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
    floor, _, floor_values = diluting_floor(table, species_id)
    ceiling, _, ceiling_values = concentrating_ceiling(table, species_id)
    used = [*floor_values, *ceiling_values, plasma]
    low, high, narrowed_by = min(floor, plasma.number), ceiling, None
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
# Of the urine's solute load, the share that is not Na or K salts (urea, phosphate, …): the
# model excretes Na and K itself, so only this share is "other" solute (recalled: about half
# of a person's urine osmoles on a mixed diet are urea; memory, no veterinary figure).
NON_ELECTROLYTE_SHARE = 0.5


def solute_load_mosm_per_day(kcal_per_day: float, solute_mosm_per_kcal: float) -> float:
    """Osmotic solute the kidney excretes a day: maintenance energy × solute per kcal
    (``urine_solute_mosm_per_kcal``; for urate excretors the dissolved part only)."""
    return _positive("kcal_per_day", kcal_per_day) * _positive("solute per kcal",
                                                               solute_mosm_per_kcal)  # fmt: skip


def rest_position(
    *, solute_mosm_per_h: float, urine_ml_per_h: float, floor: float, ceiling: float
) -> float:
    """Where ADH stands in a patient in balance, as a position from the diluting floor (0) to
    the concentrating ceiling (1) on the log scale the model moves along: the resting
    solute carried in the water that maintenance leaves for urine, U₀ = solute ÷ water,
    held inside the band (no urine water left: the ceiling). Our modelling choice: the
    patient starts in balance, so the first hours show what the fluids do, not the model
    settling (docs/model.md, "The urine asked for")."""
    if ceiling <= floor:
        return 0.5
    if urine_ml_per_h <= 0.0:
        return 1.0
    osm = min(max(solute_mosm_per_h / urine_ml_per_h * 1000.0, floor), ceiling)
    return math.log(osm / floor) / math.log(ceiling / floor)


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
    # where ADH stands at the set point, 0 (the floor) to 1 (the ceiling): the urine of a
    # patient in balance on its maintenance (:func:`rest_position`)
    rest_position: float = 0.5
    # the lowest ADH goes: 0 lets the urine dilute to the floor; the rest position holds ADH
    # where it is (non-osmotic release in a sick patient: the plan's cautious path)
    lowest_position: float = 0.0
    # a diseased kidney that still makes urine cannot hold Na back: it excretes at least what
    # is given, followed with the natriuresis time constant (a healthy kidney keeps the Na
    # of a deficit's replacement until the ECF is full)
    na_follows_intake: bool = False


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
    mannitol_mosm: list[float] | None = None  # mannitol in the ECF, when any was given
    # HCO3 a carbonic-anhydrase inhibitor made the urine carry (cumulative, at a normal
    # plasma bicarbonate), when one acted
    hco3_excreted_mmol: list[float] | None = None
    # the lowest position ADH asked for (before any hold; None: no kidney): with ADH held at
    # a position at or below it, the hold changes nothing
    lowest_position_asked: float | None = None
    # where a kidney free to dilute first asked for urine below its resting position: up to
    # there the same kidney with ADH held at rest is this one (:func:`follow_balance`'s
    # ``resume``); None when it never asked, or was held already
    fork: Fork | None = None


@dataclass(frozen=True)
class Fork:
    """The step loop's state at the start of ``step`` (see :attr:`Balance.fork`)."""

    step: int
    state: tuple[float, ...]  # in the order follow_balance unpacks it


def _solve_urine_x(
    d0: float, k: float, b: float, span: float, log_ratio: float, hint: float = 0.0
) -> float:
    """x in [0, 1] with x = ½ + (d0 + k·b·e^(−L·x)) / span: the urine osmolality position
    after the water it carries has left (tonicity rises by k per mL). h(x) is increasing and
    concave, so Newton from any point below the root climbs monotonically to it; from a point
    above it, one Newton step lands below it (the tangent lies above a concave h). ``hint``
    (the last step's x) saves most steps: the urine changes little from step to step."""
    offset = 0.5 + d0 / span
    if b <= 0.0:
        return 0.0 if offset < 0.0 else 1.0 if offset > 1.0 else offset
    c = k * b / span
    if 0.0 - offset - c >= 0.0:  # h(0) ≥ 0
        return 0.0
    # h(1) ≤ 0 ⇔ 1 − offset ≤ c·e^(−L): tested first without the exponential (e^(−L) ≤ 1)
    if 1.0 - offset <= c and 1.0 - offset - c * math.exp(-log_ratio) <= 0.0:
        return 1.0
    x = hint  # the last step's x, inside [0, 1]
    for _ in range(NEWTON_STEPS):
        e = c * math.exp(-log_ratio * x)
        step = (x - offset - e) / (1.0 + log_ratio * e)
        x -= step
        if x < 0.0:
            x = 0.0
        # Newton squares the error: after a step under 1e-7 the next would be under
        # (L/2)·1e-14, far below anything the urine osmolality can show
        if -1e-7 < step < 1e-7:
            break
    return x if x < 1.0 else 1.0


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
    drugs: DiureticAction | None = None,
    resume: Balance | None = None,
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

    ``resume``: a balance followed with the same inputs by a kidney free to dilute; this
    (held) kidney takes its figures up to its :attr:`Balance.fork` and steps on from there,
    the same numbers as a run from hour 0 at a fraction of the cost.
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
    mannitol, mannitol_in = 0.0, None  # mannitol in the ECF (mOsm), and what enters it
    mannitol_left: list[float] | None = None
    hco3_out, hco3_sum = 0.0, None  # bicarbonate a drug made the urine carry
    if kidney is None:
        drugs = None  # no kidney modelled: nothing for a diuretic to act on
    if drugs is not None:
        mannitol_in = drugs.mannitol_in_mosm
        mannitol_left = [] if mannitol_in is not None else None
        hco3_sum = [] if drugs.hco3_share_per_h is not None else None
    if kidney is not None:
        floor, ceiling = kidney.floor_mosm_per_kg, kidney.ceiling_mosm_per_kg
        log_ratio = math.log(ceiling / floor) if ceiling > floor else 0.0
        span = kidney.span_mosm_per_kg
        k_rate = kidney.k_start_mmol_per_h
        k_keep = math.exp(-step_h / kidney.k_time_constant_h)
        take = -math.expm1(-kidney.natriuresis_per_h * step_h)
        osm_now = floor * math.exp(kidney.rest_position * log_ratio)
        x_last, lowest = kidney.rest_position, kidney.lowest_position
        na_rate = 0.0
        asked = math.inf
    else:
        osm_now = math.nan
    last_change = max(n - 1, 0)  # the last step anything goes in or out, found from the end
    while last_change > 0 and not (
        water_in_ml[last_change] or na_in_mmol[last_change] or k_in_mmol[last_change]
        or free_water_out_ml[last_change] or loss_out_ml[last_change]
    ):  # fmt: skip
        last_change -= 1
    if drugs is not None:
        last_change = max(last_change, drugs.last_step)
    # the settings read once, not every step (the loop runs thousands of steps per plan)
    stop_after = max(last_change, basal_steps) + 1
    first_drug_step = drugs.first_step if drugs is not None else n
    if kidney is not None:
        na_follows, k_min = kidney.na_follows_intake, kidney.k_min_mmol_per_h
        other_per_step = kidney.other_solute_mosm_per_h * step_h
        set_na, deficit_for_full = kidney.set_na_mmol_per_l, kidney.volume_deficit_for_full
        rest_offset, cap = kidney.rest_position - 0.5, kidney.urine_cap_ml_per_h
    # where this kidney first asks below its rest is where a held one would part from it
    watch = -1.0
    if kidney is not None and resume is None and kidney.lowest_position < kidney.rest_position:
        watch = kidney.rest_position
    fork: Fork | None = None
    i = 0
    if resume is not None and resume.fork is not None:
        i = resume.fork.step
        (w, pool, k_pool, o_ecf, o_icf, mannitol, urine, na_out, k_out, hco3_out, k_rate,
         na_rate, x_last, osm_now, asked) = resume.fork.state  # fmt: skip
        tbw, na_k, ks = resume.tbw_ml[:i], resume.na_k_mmol[:i], resume.k_mmol[:i]
        oe, oi, urine_total = resume.ecf_osm[:i], resume.icf_osm[:i], resume.urine_ml[:i]
        urine_osm, urine_ecf = resume.urine_osm_mosm_per_kg[:i], resume.urine_ecf_ml[:i]
        na_sum, k_sum = resume.na_excreted_mmol[:i], resume.k_excreted_mmol[:i]
        if mannitol_left is not None:
            mannitol_left = resume.mannitol_mosm[:i]
        if hco3_sum is not None:
            hco3_sum = resume.hco3_excreted_mmol[:i]
    while i < n:
        # what goes in
        w += water_in_ml[i]
        k_step = k_in_mmol[i]
        pool += na_in_mmol[i] + k_step
        k_pool += k_step
        o_ecf += ecf_osm_in[i]
        o_icf += 2.0 * phi * k_step
        if mannitol_in is not None:
            mannitol += mannitol_in[i]  # its osmoles are in ecf_osm_in already
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
            k_was, na_was = k_rate, na_rate  # as the step found them (a fork keeps them)
            e_na = take * above * na_now / 1000.0 if above > 0.0 else 0.0
            if na_follows and i <= basal_steps:
                na_target = na_in_mmol[i] / step_h
                na_rate = na_target + (na_rate - na_target) * (1.0 - take)
                e_na = max(e_na, na_rate * step_h)
            if i <= basal_steps:
                target = k_step / step_h
                if target < k_min:
                    target = k_min
                k_rate = target + (k_rate - target) * k_keep
                e_k = k_rate * step_h
                other = other_per_step
            else:
                e_k = other = 0.0
            low, ratio, e_m, e_h = floor, log_ratio, 0.0, 0.0
            if first_drug_step <= i:
                e_na, e_k, e_m, e_h, low, ratio = _drug_step(
                    drugs, i, step_h=step_h, e_na=e_na, e_k=e_k, other=other,
                    mannitol=mannitol, ecf_na=ecf * na_now / 1000.0,
                    plasma=total_osm / w * 1000.0, floor=floor, ceiling=ceiling,
                )  # fmt: skip
            solute = 2.0 * (e_na + e_k) + other + e_m
            pool_after = pool - e_na - e_k
            deficit = -above / ecf_ref_ml if above < 0.0 else 0.0
            d0 = 2.0 * (pool_after / w * 1000.0 - set_na)
            d0 += span * (deficit / deficit_for_full + rest_offset)
            if mannitol:
                d0 += (mannitol - e_m) / w * 1000.0  # an effective osmole: ADH sees it
            # tonicity rises by 2·Na/W per mL of water taken (mOsm/kg per mL)
            x = _solve_urine_x(d0, 2.0 * pool_after * 1000.0 / (w * w),
                               solute * 1000.0 / low, span, ratio, x_last)  # fmt: skip
            if x < asked:
                if x < watch and fork is None:
                    fork = Fork(i, (
                        tbw[-1], na_k[-1], ks[-1], oe[-1], oi[-1],
                        mannitol_left[-1] if mannitol_left is not None else 0.0,
                        urine_total[-1], na_sum[-1], k_sum[-1],
                        hco3_sum[-1] if hco3_sum is not None else 0.0,
                        k_was, na_was, x_last, urine_osm[-1], asked,
                    ))  # fmt: skip
                asked = x
            x_last = x
            if x < lowest:
                x = lowest
            osm_now = low * math.exp(ratio * x)
            volume = solute / osm_now * 1000.0
            if cap is not None and volume > cap * step_h:
                scale = cap * step_h / volume  # solute that cannot leave stays in the body
                volume, e_na, e_k, e_m, e_h, solute = (
                    volume * scale,
                    e_na * scale,
                    e_k * scale,
                    e_m * scale,
                    e_h * scale,
                    solute * scale,
                )
            if volume:
                before = ecf
                pool -= e_na + e_k
                k_pool -= e_k
                o_ecf -= 2.0 * phi * e_na + e_m
                o_icf -= 2.0 * phi * e_k
                mannitol -= e_m
                w -= volume
                urine += volume
                na_out += e_na
                k_out += e_k
                hco3_out += e_h
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
        if mannitol_left is not None:
            mannitol_left.append(mannitol)
        if hco3_sum is not None:
            hco3_sum.append(hco3_out)
        i += 1
        if i > stop_after and volume < 1e-9:
            break  # nothing goes in or out any more: the state holds
    rest = n - len(tbw)
    if rest:
        for values in (tbw, na_k, ks, oe, oi, urine_total, urine_osm, na_sum, k_sum,
                       *([mannitol_left] if mannitol_left is not None else []),
                       *([hco3_sum] if hco3_sum is not None else [])):  # fmt: skip
            values.extend([values[-1]] * rest)
        urine_ecf.extend([0.0] * rest)
    return Balance(
        tbw_ml=tbw, na_k_mmol=na_k, k_mmol=ks, ecf_osm=oe, icf_osm=oi, urine_ml=urine_total,
        urine_osm_mosm_per_kg=urine_osm, urine_ecf_ml=urine_ecf, na_excreted_mmol=na_sum,
        k_excreted_mmol=k_sum, mannitol_mosm=mannitol_left, hco3_excreted_mmol=hco3_sum,
        lowest_position_asked=None if kidney is None else asked, fork=fork,
    )  # fmt: skip


def _drug_step(
    drugs: DiureticAction,
    i: int,
    *,
    step_h: float,
    e_na: float,
    e_k: float,
    other: float,
    mannitol: float,
    ecf_na: float,
    plasma: float,
    floor: float,
    ceiling: float,
) -> tuple[float, float, float, float, float, float]:
    """One step of the diuretics: Na, K, mannitol and bicarbonate excreted, and the band's
    floor and log ratio as the drugs leave it (see :data:`CLASS_EFFECTS`)."""
    e_m = mannitol * (1.0 - drugs.mannitol_keep) if mannitol > 0.0 else 0.0
    e_h = 0.0
    if i <= drugs.last_step:
        if drugs.hco3_share_per_h is not None:
            e_h = drugs.hco3_share_per_h[i] * step_h * ecf_na
        e_na += drugs.na_share_per_h[i] * step_h * ecf_na
        e_k = (e_k + drugs.k_share_per_h[i] * step_h * ecf_na) * drugs.k_kept[i]
        low_shift, high_shift = drugs.floor_shift[i], drugs.ceiling_shift[i]
    else:
        low_shift = high_shift = 0.0
    if e_m:  # an osmotic diuresis washes the band towards plasma (MANNITOL_WASHOUT_SHARE)
        share = e_m / (2.0 * (e_na + e_k) + other + e_m) / MANNITOL_WASHOUT_SHARE
        low_shift, high_shift = max(low_shift, min(share, 1.0)), max(high_shift, min(share, 1.0))
    if not (low_shift or high_shift):
        return e_na, e_k, e_m, e_h, floor, math.log(ceiling / floor) if ceiling > floor else 0.0
    low = floor + (plasma - floor) * low_shift if plasma > floor else floor
    high = ceiling - (ceiling - plasma) * high_shift if ceiling > plasma else ceiling
    # the drug moves the urine towards plasma within what this kidney can make, never past
    # its band (a diseased kidney's narrowed ceiling included)
    low = min(low, ceiling)
    high = max(min(high, ceiling), low)
    return e_na, e_k, e_m, e_h, low, math.log(high / low)
