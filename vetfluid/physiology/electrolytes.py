"""Electrolytes: potassium supplementation and predicted sodium change.

* Potassium scale: KCl to add per litre by serum K band, with the fastest rate
  for each band — Côté E (ed.), Clinical Veterinary Advisor: Dogs and Cats, 4th
  ed., 2020 (after Greene 1975), shipped as ``species_data/potassium_scale.csv``.
  Ceiling 0.5 mmol/kg/h (Côté 2020) — mEq and mmol are equal for K⁺.
* Sodium: Adrogué HJ, Madias NE. Hypernatremia. N Engl J Med 2000;342:1493–1499,
  in its general form for a volume V (Chen et al., Kidney360 2021):
  ΔNa = V·(infusate Na + infusate K − serum Na) / (TBW + V), TBW and V in litres;
  the familiar per-litre figure is V = 1 L. Rates come from the general form, never
  by scaling the one-litre change: for a 35 g bird TBW is 0.02 L, and one litre would
  be fifty times its body water. The plan's own Na path is the course's
  (:func:`vetfluid.planning.body.follow_body`: the Edelman balance, 1958, with the kidney).
* Potassium for other species: the scale was written for dogs and cats; for any
  other species serum K is banded by how far it lies below that species' own
  reference low (:func:`potassium_band_for_species`; derived here, no source).
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cache
from pathlib import Path

import numpy as np

from vetfluid.common.checks import require_number, require_patient_weight
from vetfluid.common.csvfiles import parse_number, read_rows
from vetfluid.common.errors import InputError, SpeciesDataError
from vetfluid.common.formatting import format_quantity as q
from vetfluid.common.formatting import hour_text
from vetfluid.common.paths import resource_dir


@dataclass(frozen=True, kw_only=True)
class PotassiumBand:
    serum_k_max: float
    kcl_mmol_per_l: float
    max_rate_ml_per_kg_h: float
    source_id: str
    basis: str
    note: str


@cache
def load_potassium_scale(data_dir: Path | None = None) -> tuple[PotassiumBand, ...]:
    """The scale, bands in ascending order of serum K."""
    path = (data_dir or resource_dir("species_data")) / "potassium_scale.csv"
    columns = ("serum_k_max_mmol_per_l", "kcl_mmol_per_l", "max_rate_ml_per_kg_h", "source_id")
    bands = []
    for location, row in read_rows(path, (*columns, "basis", "note")):
        numbers = [parse_number(row[c], location=location, column=c) for c in columns[:3]]
        if any(n is None or n <= 0 for n in numbers):
            raise SpeciesDataError("scale values must be positive numbers", location=location)
        k_max, kcl, rate = (float(n) for n in numbers if n is not None)
        if bands and k_max <= bands[-1].serum_k_max:
            raise SpeciesDataError("bands must ascend in serum K", location=location)
        bands.append(
            PotassiumBand(
                serum_k_max=k_max,
                kcl_mmol_per_l=kcl,
                max_rate_ml_per_kg_h=rate,
                source_id=row["source_id"],
                basis=row["basis"],
                note=row["note"],
            )
        )
    return tuple(bands)


def _finite(name: str, value: float, low: float, high: float, unit: str) -> float:
    return require_number(value, name, low=low, high=high, unit=unit)


def potassium_band(serum_k: float) -> PotassiumBand | None:
    """The band for a serum K (mmol/L); None above the scale (no supplementation)."""
    _finite("serum_k", serum_k, 0.5, 12, "mmol/L")
    for band in load_potassium_scale():
        if serum_k <= band.serum_k_max:
            return band
    return None


# The dog/cat scale's own reference low: its maintenance band begins above 3.5 mmol/L.
SCALE_REFERENCE_LOW_MMOL_PER_L = 3.5
SCALE_SPECIES = ("dog", "cat")


@dataclass(frozen=True, kw_only=True)
class SpeciesPotassiumBand:
    """The scale's band for a patient, with how it was found for its species."""

    band: PotassiumBand | None  # None: at or above the species' high (no KCl)
    scale_written_for_species: bool
    compared_at_mmol_per_l: float  # the serum K the scale was read at
    species_low: float
    species_high: float
    above_range: bool


def potassium_band_for_species(
    serum_k: float, *, species_id: str, species_low: float, species_high: float
) -> SpeciesPotassiumBand:
    """The KCl band for a serum K judged against the species' own reference interval.

    Dogs and cats: the published scale as it stands (Côté 2020), except that a K above
    the species' reference high gets no KCl. Every other species (derived here, no
    source): within its own range it gets the scale's maintenance band; below it, the
    scale is read at 3.5 − (species low − serum K), i.e. by how far the patient lies
    below its own reference low, as a dog's K lies below the scale's 3.5. The caller
    says that the scale was written for dogs and cats.
    """
    _finite("serum_k", serum_k, 0.5, 12, "mmol/L")
    own = species_id in SCALE_SPECIES
    above = serum_k > species_high
    if own:
        at = serum_k
    elif serum_k >= species_low:
        at = load_potassium_scale()[-1].serum_k_max  # within its own range: maintenance
    else:
        at = max(0.5, SCALE_REFERENCE_LOW_MMOL_PER_L - (species_low - serum_k))
    band = None if above else potassium_band(at)
    return SpeciesPotassiumBand(
        band=band, scale_written_for_species=own, compared_at_mmol_per_l=at,
        species_low=species_low, species_high=species_high, above_range=above,
    )  # fmt: skip


def potassium_mmol_per_kg_h(
    *, k_mmol_per_l: float, rate_ml_per_h: float, weight_kg: float
) -> float:
    """Potassium delivered (mmol/kg/h) = K concentration × rate ÷ 1000 ÷ BW."""
    require_patient_weight(weight_kg)
    return k_mmol_per_l * rate_ml_per_h / 1000.0 / weight_kg


def max_rate_for_potassium(
    *, k_mmol_per_l: float, weight_kg: float, ceiling: float
) -> float | None:
    """Fastest rate (mL/h) that keeps K at or under ``ceiling`` mmol/kg/h; None if K is 0."""
    if k_mmol_per_l <= 0:
        return None
    return ceiling * weight_kg * 1000.0 / k_mmol_per_l


def sodium_change_for_volume(
    *, serum_na: float, infusate_na: float, infusate_k: float, tbw_l: float, volume_l: float
) -> float:
    """Adrogué–Madias in its general form (Adrogué & Madias 2000; Chen et al., Kidney360
    2021): ΔNa (mmol/L) after ``volume_l`` litres = V·(Na_inf + K_inf − Na)/(TBW + V)."""
    _finite("serum_na", serum_na, 80, 230, "mmol/L")
    _finite("infusate_na", infusate_na, 0, 2000, "mmol/L")
    _finite("infusate_k", infusate_k, 0, 2000, "mmol/L")
    _finite("tbw_l", tbw_l, 1e-6, 1e5, "L")
    _finite("volume_l", volume_l, 0, 1e4, "L")
    return volume_l * (infusate_na + infusate_k - serum_na) / (tbw_l + volume_l)


def bolus_mixing_change(
    flows: list[tuple[float, float, float, float]],
    *,
    boluses_end_h: float,
    serum_na: float,
    tbw_l: float,
) -> tuple[float, float]:
    """The largest serum-Na change in any hour that starts while resuscitation boluses run,
    with nothing excreted: what is given in the hour (the boluses, and the fluid after them
    that the hour reaches) mixes into the body water (Adrogué–Madias in its general form,
    Na + K of the mixture: :func:`sodium_change_for_volume`), Na stepped through what was
    given before the hour starts. In shock the kidney cannot be counted on to excrete a
    bolus's water or salt (hypovolaemia lowers filtration and keeps ADH up), so this is the
    bolus hours' own bound beside the followed body. ``flows``: (start h, end h, mL/h,
    Na + K mmol/L) each; returns (change in mmol/L, the hour its window starts)."""
    if boluses_end_h <= 0 or not flows:
        return 0.0, 0.0

    def given(a: float, b: float) -> tuple[float, float]:  # litres, mmol of Na + K
        litres = cations = 0.0
        for s, e, rate, na_k in flows:
            volume = rate * max(min(b, e) - max(a, s), 0.0) / 1000.0
            litres += volume
            cations += volume * na_k
        return litres, cations

    turns = sorted({f[0] for f in flows} | {f[1] for f in flows})
    starts = sorted({t for t in turns if t < boluses_end_h}
                    | {t - 1.0 for t in turns if 1.0 <= t < boluses_end_h + 1.0})  # fmt: skip
    worst, at = 0.0, 0.0
    for start in starts:
        before, salt = given(0.0, start)
        na = (serum_na * tbw_l + salt) / (tbw_l + before)  # what the boluses left
        litres, cations = given(start, start + 1.0)
        if litres <= 0:
            continue
        change = sodium_change_for_volume(
            serum_na=na, infusate_na=cations / litres, infusate_k=0.0, tbw_l=tbw_l + before,
            volume_l=litres,
        )  # fmt: skip
        if abs(change) > abs(worst):
            worst, at = change, start
    return worst, at


def sodium_change_per_litre(
    *, serum_na: float, infusate_na: float, infusate_k: float, tbw_l: float
) -> float:
    """Adrogué–Madias: ΔNa (mmol/L) after 1 L = (Na_inf + K_inf − Na_serum) / (TBW + 1).
    A figure for comparison only; rates use :func:`sodium_change_for_volume`."""
    return sodium_change_for_volume(
        serum_na=serum_na, infusate_na=infusate_na, infusate_k=infusate_k, tbw_l=tbw_l,
        volume_l=1.0,
    )  # fmt: skip


def max_rate_for_sodium(
    *, serum_na: float, infusate_na_k: float, tbw_l: float, max_change_per_h: float
) -> float | None:
    """Fastest rate (mL/h) whose first hour moves serum Na by at most ``max_change_per_h``.

    From the general form: |V·d|/(TBW + V) ≤ m with d = Na_inf + K_inf − Na gives
    V ≤ m·TBW/(|d| − m) litres per hour. None when |d| ≤ 2m: then only a rate of more than
    the patient's whole body water an hour could move Na that fast — the fluid barely
    moves Na and no rate limit follows from this rule (never a runaway figure).
    """
    _finite("max_change_per_h", max_change_per_h, 0.01, 5, "mmol/L/h")
    _finite("tbw_l", tbw_l, 1e-6, 1e5, "L")
    gap = abs(infusate_na_k - serum_na)
    if gap <= 2 * max_change_per_h:
        return None
    return max_change_per_h * tbw_l / (gap - max_change_per_h) * 1000.0


def largest_hourly_change(
    hours: np.ndarray,
    serum_na: np.ndarray,
    *,
    from_hour: float = 0.0,
    until_hour: float = np.inf,
) -> tuple[float, float]:
    """The largest change of serum Na over any one hour starting at or after
    ``from_hour`` and before ``until_hour``, on a grid that holds each ``hours[i] + 1``
    too; signed, and the hour it starts."""
    ends = np.searchsorted(hours, hours + 1.0 - 1e-9)
    valid = (ends < len(hours)) & (hours >= from_hour - 1e-9) & (hours < until_hour - 1e-9)
    if not valid.any():
        return 0.0, 0.0
    starts = np.nonzero(valid)[0]
    changes = serum_na[ends[valid]] - serum_na[starts]
    i = int(np.argmax(np.abs(changes)))
    return float(changes[i]), float(hours[starts[i]])


@dataclass(frozen=True, kw_only=True)
class PotassiumSummary:
    """Potassium in a plan: what was added, what it delivers, and the limits."""

    serum_k: float | None
    kcl_mmol_per_l: float
    added_by: str  # serum-K scale | entered by hand
    bag_k_mmol_per_l: float
    mmol_per_kg_per_h: float  # at the first rate after resuscitation
    peak_rate_ml_per_h: float  # the fastest rate that carries potassium
    peak_mmol_per_kg_per_h: float  # potassium at that rate
    ceiling_mmol_per_kg_per_h: float
    max_rate_ml_per_h: float | None
    band_max_rate_ml_per_kg_h: float | None
    source_id: str | None


@dataclass(frozen=True, kw_only=True)
class SodiumSummary:
    """Predicted serum Na change for the plan's fluid (Adrogué–Madias 2000)."""

    serum_na: float
    tbw_l: float
    delta_na_per_l: float  # after one litre, for comparison with the textbook figure
    predicted_change_per_h: float  # in the first hour at the main rate (general form)
    max_change_per_h: float
    max_rate_ml_per_h: float | None  # fastest main rate within the limit, first hour
    peak_change_per_h: float = 0.0  # the plan's largest change over any hour, signed
    peak_hour: float = 0.0  # where that hour starts
    peak_phase: str = ""  # the phase it starts in
    source_id: str = "adrogue2000"


@dataclass(frozen=True, kw_only=True)
class SodiumCourse:
    """Serum Na through a plan (``vetfluid.planning.body``), read the ways the checks need it:
    the largest change in any hour of the boluses and, apart, of the replacement and
    maintenance after them (a bolus must never hide the bag), and where Na ends up."""

    start_na: float
    measured: bool  # False: followed from the species' normal Na
    carrier_change_per_h: float  # signed; windows starting after the boluses
    carrier_hour: float
    bolus_change_per_h: float  # signed; windows starting during the boluses
    bolus_hour: float
    plan_change: float  # Na when the plan ends minus Na at its start
    boluses_change: float  # Na when the boluses end minus Na at the start
    lowest: float  # the lowest and highest Na anywhere along the plan
    highest: float


def sodium_course(
    hours: np.ndarray, path: np.ndarray, *, start_na: float, measured: bool, boluses_end_h: float
) -> SodiumCourse:
    """Read a Na path (on a grid holding each ``hours[i] + 1``) into a :class:`SodiumCourse`."""
    carrier, carrier_h = largest_hourly_change(hours, path, from_hour=boluses_end_h)
    bolus, bolus_h = (
        largest_hourly_change(hours, path, until_hour=boluses_end_h)
        if boluses_end_h > 0
        else (0.0, 0.0)
    )
    return SodiumCourse(
        start_na=start_na, measured=measured, carrier_change_per_h=carrier,
        carrier_hour=carrier_h, bolus_change_per_h=bolus, bolus_hour=bolus_h,
        plan_change=float(path[-1] - path[0]),
        boluses_change=float(np.interp(boluses_end_h, hours, path) - path[0]),
        lowest=float(path.min()),
        highest=float(path.max()),
    )  # fmt: skip


def sodium_text(na: SodiumSummary) -> str:
    """The sodium line of the window, the CLI and the sheet: the plan's largest change in
    any hour, the textbook per-litre figure and the fastest main rate within the limit."""
    fastest = q(na.max_rate_ml_per_h, "mL/h") if na.max_rate_ml_per_h else "no limit"
    sign = "+" if na.peak_change_per_h > 0 else ""
    return (
        f"largest change in any hour {sign}{q(na.peak_change_per_h, 'mmol/L')} "
        f"(from {hour_text(na.peak_hour)}); ΔNa {q(na.delta_na_per_l, 'mmol/L')} per litre; "
        f"fastest rate within {q(na.max_change_per_h, 'mmol/L/h')}: {fastest}"
    )


def sodium_summary(
    *,
    serum_na: float,
    infusate_na: float,
    infusate_k: float,
    tbw_l: float,
    rate_ml_per_h: float,
    max_change_per_h: float,
    peak_change_per_h: float = 0.0,
    peak_hour: float = 0.0,
    peak_phase: str = "",
) -> SodiumSummary:
    """ΔNa per litre (for comparison), the change in the first hour at ``rate_ml_per_h``
    and the fastest rate within the limit, both by the general form; the plan's peak
    hourly change comes from the plan's body path (``vetfluid.planning.body``)."""
    per_volume = {
        "serum_na": serum_na, "infusate_na": infusate_na, "infusate_k": infusate_k,
        "tbw_l": tbw_l,
    }  # fmt: skip
    return SodiumSummary(
        serum_na=serum_na,
        tbw_l=tbw_l,
        delta_na_per_l=sodium_change_per_litre(**per_volume),
        predicted_change_per_h=sodium_change_for_volume(
            **per_volume, volume_l=rate_ml_per_h / 1000.0
        ),
        max_change_per_h=max_change_per_h,
        max_rate_ml_per_h=max_rate_for_sodium(
            serum_na=serum_na,
            infusate_na_k=infusate_na + infusate_k,
            tbw_l=tbw_l,
            max_change_per_h=max_change_per_h,
        ),  # fmt: skip
        peak_change_per_h=peak_change_per_h,
        peak_hour=peak_hour,
        peak_phase=peak_phase,
    )


# ---- ongoing losses by type ------------------------------------------------------------------
@dataclass(frozen=True, kw_only=True)
class LossComposition:
    """Typical Na and K of an ongoing loss (mmol/L); None: isotonic, at the patient's own
    Na and K of the moment (what is used when the composition is unknown). Its bicarbonate
    (None: at the patient's own) and the acid (H+) it carries away, each H+ lost leaving one
    bicarbonate behind in the body (the parietal cell returns one HCO3 to the blood for each
    H+ it secretes; textbook physiology)."""

    loss_type: str
    label: str
    na_mmol_per_l: float | None
    k_mmol_per_l: float | None
    source_id: str | None
    basis: str
    note: str
    hco3_mmol_per_l: float | None = None
    h_mmol_per_l: float = 0.0


# Human figures (no veterinary table is on record): gastric juice Na 20–60, K ≈ 14, HCO3 0,
# H+ 60–80; diarrhoea Na 30–140, K 30–70, HCO3 20–80 mmol/L (Empendium table of losses,
# "empendium_losses"); the middle of each range is used. Polyuric urine "varies greatly;
# measure it" (same table) and drain or third-space fluid is a plasma ultrafiltrate
# (Starling; recalled): both are taken as isotonic (and at the patient's own HCO3) until
# measured.
LOSS_TYPES: dict[str, LossComposition] = {
    loss.loss_type: loss
    for loss in (
        LossComposition(loss_type="isotonic", label="unknown (isotonic)", na_mmol_per_l=None,
                        k_mmol_per_l=None, source_id=None, basis="memory",
                        note="taken at the patient's own Na and K"),
        LossComposition(loss_type="vomitus", label="vomitus (gastric)", na_mmol_per_l=40.0,
                        k_mmol_per_l=14.0, source_id="empendium_losses", basis="derived",
                        note="middle of the human gastric ranges Na 20–60, H+ 60–80; K ≈ 14, "
                             "no HCO3",
                        hco3_mmol_per_l=0.0, h_mmol_per_l=70.0),
        LossComposition(loss_type="diarrhoea", label="diarrhoea", na_mmol_per_l=85.0,
                        k_mmol_per_l=50.0, source_id="empendium_losses", basis="derived",
                        note="middle of the human ranges Na 30–140, K 30–70, HCO3 20–80",
                        hco3_mmol_per_l=50.0),
        LossComposition(loss_type="polyuria", label="polyuric urine", na_mmol_per_l=None,
                        k_mmol_per_l=None, source_id="empendium_losses", basis="published",
                        note="varies greatly: measure it; isotonic until measured"),
        LossComposition(loss_type="drain", label="drain or third-space fluid",
                        na_mmol_per_l=None, k_mmol_per_l=None, source_id=None, basis="memory",
                        note="a plasma ultrafiltrate: isotonic"),
    )
}  # fmt: skip
DEFAULT_LOSS_TYPE = "isotonic"


def loss_composition(loss_type: str) -> LossComposition:
    """The typical composition of an ongoing loss by its type (:data:`LOSS_TYPES`)."""
    if loss_type not in LOSS_TYPES:
        raise InputError(
            f"unknown loss type {loss_type!r}", field="loss_type", value=loss_type,
            fix=", ".join(LOSS_TYPES),
        )  # fmt: skip
    return LOSS_TYPES[loss_type]
