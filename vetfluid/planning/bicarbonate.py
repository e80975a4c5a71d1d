"""Serum bicarbonate followed through a plan (only when a serum HCO3 was entered): the
body's bicarbonate over an apparent space, raised by the fluids' base precursors as they are
metabolised, moved by losses of each type and by acetazolamide's bicarbonaturia, and brought
back by a healthy kidney. The plan's own check and the course use this one function
(docs/model.md, "Bicarbonate")."""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from vetfluid.common.arrays import decaying_sum, linear_steps
from vetfluid.common.formatting import format_quantity as q
from vetfluid.common.formatting import hour_text
from vetfluid.physiology import electrolytes
from vetfluid.planning import body
from vetfluid.planning.ledger import Ledger
from vetfluid.tables.limits import limit
from vetfluid.tables.species import SpeciesTable, SpeciesValue

if TYPE_CHECKING:
    from vetfluid.planning.plan import PlanRequest

# Lactate leaves the blood with a half-life of 14.7 min in healthy people (lactate
# elimination in man, 1979, "lactate_elimination1979"; 18.8 min with cirrhosis); the same
# half-life is used for acetate and gluconate (memory: acetate is recalled to be used
# faster, and much gluconate to leave unchanged in the urine, so the acetate-gluconate
# fluid's base is overstated).
BASE_PRECURSOR_HALF_LIFE_MIN = 14.7
# Where the bicarbonate figures and checks come from (species_data/sources.csv).
BICARBONATE_SOURCES = ("lactate_elimination1979", "waddell2016", "plumb_vdh_bicarbonate",
                       "empendium_losses", "zitek2018")  # fmt: skip


def follow_bicarbonate(
    table: SpeciesTable,
    request: PlanRequest,
    *,
    hco3_0: float,
    ecf_ml: np.ndarray,
    step_h: float,
    base_in_mmol: np.ndarray,
    lost_ml: np.ndarray,
    losses: electrolytes.LossComposition | None,
    drug_hco3_mmol: list[float] | None,
    kidney_acts: bool,
) -> tuple[np.ndarray, list[SpeciesValue]]:
    """Serum bicarbonate (mmol/L) at each grid point, and the species values used.

    The body's bicarbonate B (mmol) spreads over an apparent space V(t) = ECF(t) + S, S the
    buffers outside the ECF (``bicarbonate_space_fraction`` × W − ECF₀, at least 0; the ECF
    alone where the species has no value), and HCO3 = B / V. Per step:
    B += base metabolised (the fluids' lactate, acetate and gluconate, first-order with
    :data:`BASE_PRECURSOR_HALF_LIFE_MIN`) + loss × (H+ − HCO3 of its type) (a loss of
    unknown type at the patient's own HCO3) − a drug's bicarbonaturia × HCO3 / set point;
    then a healthy kidney brings HCO3 towards its set point (the entered HCO3 held within
    the species' reference interval) with ``hco3_renal_return_h``:
    B ← V·set + (B − V·set)·e^(−Δt/τ). Dilution needs no term: a bicarbonate-free fluid
    enlarges V around the same B. The return is left out with renal disease, with no kidney
    (ins and outs), where the species has no normal or time constant on record, and in each
    step in which acetazolamide makes the urine carry bicarbonate (it blocks the proximal
    reabsorption the return stands for; our modelling choice, docs/model.md)."""
    sid, w = request.species_id, request.weight_kg
    used: list[SpeciesValue] = []
    space = table.get(sid, "bicarbonate_space_fraction")
    outside = 0.0
    if space is not None:
        used.append(space)
        outside = max(space.number * w * 1000.0 - float(ecf_ml[0]), 0.0)
    normal = table.get(sid, "serum_hco3_mmol_per_l")
    return_h = table.get(sid, "hco3_renal_return_h")
    set_point, keep = hco3_0, 1.0
    if normal is not None:
        used.append(normal)
        low = normal.low if normal.low is not None else normal.number
        high = normal.high if normal.high is not None else normal.number
        set_point = min(max(hco3_0, low), high)
    if kidney_acts and not request.renal_disease and normal is not None and return_h is not None:
        used.append(return_h)
        keep = math.exp(-step_h / return_h.number)
    volume = ecf_ml + outside
    # what reaches the body from the precursors each step: they are metabolised first-order
    kept = math.exp(-math.log(2) * step_h * 60.0 / BASE_PRECURSOR_HALF_LIFE_MIN)
    precursors = decaying_sum(body.increments(base_in_mmol), kept)  # left after each step's dose
    base = np.concatenate(([0.0], precursors[:-1])) * (1.0 - kept)
    lost = np.diff(lost_ml, prepend=0.0)
    own = losses is None or losses.hco3_mmol_per_l is None  # a loss at the patient's own HCO3
    # each step is linear in B: B_i = a_i·B_(i−1) + b_i (loss, base, drug, then the kidney)
    share_lost = lost[1:] / volume[:-1] if own else 0.0
    added = base[1:] + (
        0.0 if own else lost[1:] * (losses.h_mmol_per_l - losses.hco3_mmol_per_l) / 1000.0
    )
    drug = 0.0
    keep = np.full(len(volume) - 1, keep)
    if drug_hco3_mmol is not None:
        taken = np.diff(np.asarray(drug_hco3_mmol))[: len(volume) - 1]
        drug = taken * 1000.0 / (volume[1:] * set_point)  # share of B: HCO3/set point × amount
        # while the drug acts it blocks the proximal reabsorption the return stands for: no
        # return in those steps (docs/model.md, "Bicarbonate"; our modelling choice)
        keep[taken > 0.0] = 1.0
    a = keep * (1.0 - drug) * (1.0 - share_lost)
    b = keep * (1.0 - drug) * added + (1.0 - keep) * set_point * volume[1:] / 1000.0
    return linear_steps(hco3_0 * volume[0] / 1000.0, a, b) * 1000.0 / volume, used


# An entered serum bicarbonate outside these bounds is a slip, not a patient: a value typed
# into the wrong box (a Na of 140, a Cl of 110), a base excess (−5) or a missing decimal
# point. Plausibility bounds set by us, no source: life-threatening acidosis and alkalosis
# lie inside (healthy dogs 20–24 mmol/L, Waddell 2016). A predicted one past them is no
# prediction either.
SERUM_HCO3_RANGE_MMOL_PER_L = (3.0, 60.0)
# a predicted bicarbonate is said once it is this far past its interval (common practice, no
# source: a dog's 20–24 mmol/L interval is narrower than the model's certainty)
HCO3_MARGIN_MMOL_PER_L = 2.0


def implausible_from(hco3: np.ndarray) -> int | None:
    """The first grid point at which a followed bicarbonate leaves
    :data:`SERUM_HCO3_RANGE_MMOL_PER_L` (or stops being a number); None if it never does."""
    low, high = SERUM_HCO3_RANGE_MMOL_PER_L
    out = ~np.isfinite(hco3) | (hco3 < low) | (hco3 > high)
    return int(np.argmax(out)) if out.any() else None


def drift(hco3: np.ndarray, normal: SpeciesValue | None) -> tuple[int, float] | None:
    """Where a followed bicarbonate lies furthest past the species' interval, by more than
    :data:`HCO3_MARGIN_MMOL_PER_L` and more than 1 mmol/L from where it started, and the
    bound it passed; with no interval on record (birds, reptiles) only a fall under
    ``hco3_confirm_below_mmol_per_l`` (safety_limits.csv, common practice). None: it stays."""
    if normal is not None:
        low = normal.low if normal.low is not None else normal.number
        high = normal.high if normal.high is not None else normal.number
    else:
        low, high = limit("hco3_confirm_below_mmol_per_l").value, math.inf
    outside = np.maximum(hco3 - high, low - hco3)
    worst = int(np.argmax(outside))
    if outside[worst] <= HCO3_MARGIN_MMOL_PER_L or abs(hco3[worst] - hco3[0]) <= 1.0:
        return None
    return worst, (high if hco3[worst] > high else low)


@dataclass(frozen=True, kw_only=True)
class Causes:
    """What in the plan moves bicarbonate, for the words of the remedy."""

    carbonic_anhydrase_drug: bool  # acetazolamide given
    losses: bool  # ongoing losses entered
    bag_has_base: bool  # the fluid carries lactate, acetate or gluconate


def check_plan_bicarbonate(
    ledger: Ledger,
    hours: np.ndarray,
    hco3: np.ndarray,
    normal: SpeciesValue | None,
    causes: Causes,
) -> None:
    """The plan's own check on the bicarbonate it drives (the same function the course
    follows it with): past what a patient's can be, blocked; far past the species'
    interval (:func:`drift`), soft. The remedy names what in this plan moves it."""
    gone = implausible_from(hco3)
    if gone is not None:
        value = float(hco3[gone])
        rising = bool(np.isfinite(value) and value > hco3[0])
        ledger.add(
            "hard", "BICARBONATE_BEYOND_REACH",
            f"By {hour_text(float(hours[gone]))} this plan takes serum bicarbonate to "
            f"{q(value, 'mmol/L') if np.isfinite(value) else 'nothing'}, past what any "
            "patient's can be.",
            "Check the losses entered, their type and unit. " + remedy(rising, causes)
            + " This plan is not given as it stands.",
        )  # fmt: skip
        return
    moved = drift(hco3, normal)
    if moved is None:
        return
    i, bound = moved
    value = float(hco3[i])
    ledger.add(
        "soft", "BICARBONATE_LEAVES_RANGE",
        f"This plan takes serum bicarbonate to {q(value, 'mmol/L')} by "
        f"{hour_text(float(hours[i]))}, {'above' if value > bound else 'below'} "
        f"{q(bound, 'mmol/L')}.",
        remedy(value > bound, causes) + " Measure the acid–base status again within 12–24 h, "
        "or give a reason.",
        None if normal is None else normal.source_id,
    )  # fmt: skip


def remedy(rising: bool, causes: Causes) -> str:
    """What turns the drift, by what moves it in this plan (common practice, no source): a
    carbonic-anhydrase inhibitor's bicarbonaturia; losses that carry bicarbonate out (made
    good by a buffered fluid) or gastric acid out (made good by chloride, 0.9 % NaCl); a
    fluid without buffer diluting it, or a buffered one raising it."""
    if not rising and causes.carbonic_anhydrase_drug:
        if causes.bag_has_base:
            return (
                "Acetazolamide makes the urine carry bicarbonate away faster than the "
                "fluid's buffer restores it: reconsider it."
            )
        return (
            "Acetazolamide makes the urine carry bicarbonate away: reconsider it, or give a "
            "buffered fluid such as lactated Ringer's with it."
        )
    if not rising and causes.losses:
        if causes.bag_has_base:
            return (
                "The losses carry away more bicarbonate than the fluid's buffer restores: "
                "measure blood gases; bicarbonate may be needed."
            )
        return "Replace the losses with a buffered fluid such as lactated Ringer's."
    if not rising:
        return (
            "The fluid carries no buffer and dilutes bicarbonate: a buffered fluid such as "
            "lactated Ringer's holds it."
        )
    if causes.losses and causes.bag_has_base:
        return (
            "Replace the losses with 0.9 % NaCl rather than a buffered fluid; its chloride "
            "lets the kidney pass bicarbonate, which this model does not follow."
        )
    if causes.losses:
        return (
            "The losses carry away gastric acid; the fluid is already without buffer, and "
            "its chloride lets the kidney pass bicarbonate, which this model does not "
            "follow: measure before changing the fluid."
        )
    return (
        "The fluid's buffer (lactate, acetate, gluconate) raises it: a fluid without "
        "buffer, such as 0.9 % NaCl, does not."
    )
