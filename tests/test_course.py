"""The course model against physiology, with the source beside each check (docs/model.md)."""

from __future__ import annotations

import numpy as np
import pytest

from vetfluid.course import bolus_input, course
from vetfluid.electrolytes import sodium_change_per_litre
from vetfluid.errors import InputError
from vetfluid.fluids import composition, fluid
from vetfluid.plan import PlanRequest, build_plan

reference = pytest.mark.reference


@pytest.fixture(scope="module")
def dog():
    return build_plan(PlanRequest(species_id="dog", weight_kg=20, serum_na=140))


def effect(plan, fluid_id, ml_per_kg, minutes, hour):
    """What an extra bolus adds to each compartment at ``hour``, as fractions of its volume."""
    base = course(plan, horizon_h=6)
    extra = bolus_input(fluid_id=fluid_id, ml_per_kg=ml_per_kg, weight_kg=20, minutes=minutes)
    with_bolus = course(plan, horizon_h=6, extra_boluses=(extra,))
    i = int(round(hour * 60))
    volume = ml_per_kg * 20
    return {
        part: (getattr(with_bolus, f"{part}_ml")[i] - getattr(base, f"{part}_ml")[i]) / volume
        for part in ("plasma", "interstitial", "intracellular")
    }


@reference
def test_isotonic_bolus_settles_at_the_plasma_share_of_the_ecf(dog):
    # Odunayo 2018: plasma 5 %, ECF 20 % of BW in dogs → about a quarter stays in plasma
    # once distributed (the usual teaching of crystalloid distribution).
    settled = effect(dog, "nacl_0_9", 10, 15, hour=3)
    assert settled["plasma"] == pytest.approx(0.25, abs=0.02)
    assert settled["plasma"] + settled["interstitial"] == pytest.approx(1.0, abs=0.03)


@reference
def test_bolus_expands_plasma_first_then_distributes(dog):
    # Hahn 2020 (volume kinetics): plasma dilution peaks at the end of the infusion and
    # falls over the next half hour as fluid moves into the interstitium.
    end = effect(dog, "nacl_0_9", 10, 15, hour=0.25)["plasma"]
    later = effect(dog, "nacl_0_9", 10, 15, hour=0.75)["plasma"]
    assert end > 0.5 > later > 0.25


@reference
def test_five_percent_dextrose_spreads_over_total_body_water(dog):
    # Free water distributes in proportion to the compartments: ICF/TBW = 40/60 = two thirds
    # into the cells (Odunayo 2018 fractions; DiBartola ch. 1).
    settled = effect(dog, "dextrose_5", 10, 15, hour=3)
    assert settled["intracellular"] == pytest.approx(2 / 3, abs=0.01)
    assert settled["plasma"] == pytest.approx(0.05 / 0.6, abs=0.01)


@reference
def test_hypertonic_saline_expands_plasma_by_more_than_its_volume(dog):
    # 4 mL/kg of 7.2 % NaCl draws water out of the cells (veterinary fluid therapy texts;
    # Ajito 1999): plasma grows by more than the volume given.
    after = effect(dog, "nacl_7_2", 4, 5, hour=5 / 60)
    assert after["plasma"] > 1.0
    assert after["intracellular"] < -1.0


@reference
def test_weight_change_equals_net_fluid_balance():
    # Davis 2013: 1 kg lost ≈ 1 L.
    plan = build_plan(PlanRequest(species_id="dog", weight_kg=20, dehydration_percent=7))
    c = course(plan)
    assert np.allclose((c.weight_kg - 20) * 1000, c.given_ml - c.consumed_ml)
    end_of_replacement = int(24 * 60)
    assert c.remaining_deficit_ml[end_of_replacement] == pytest.approx(0, abs=1e-6)


@reference
def test_sodium_step_by_step_equals_adrogue_madias_for_one_litre(dog):
    # Adrogué & Madias 2000: ΔNa = (Na_inf + K_inf − Na) / (TBW + 1) for one litre. The
    # course model's losses leave at the starting Na, so over a short 1 L infusion the
    # step-by-step Na equals the closed form on the TBW left after those losses.
    extra = bolus_input(fluid_id="nacl_0_45", ml_per_kg=50, weight_kg=20, minutes=10)
    c = course(dog, horizon_h=1, extra_boluses=(extra,))
    i = 10  # minutes: end of the litre
    maintenance_ml = c.given_ml[i] - 1000.0  # the plan's own lactated Ringer's runs alongside
    lrs_na_k = dog.fluid_na_mmol_per_l + dog.fluid_k_mmol_per_l
    lost_l = c.consumed_ml[i] / 1000.0
    half_saline_na = composition(fluid("nacl_0_45")).na_mmol_per_l  # 77 mmol/L from 4.5 g/L
    exact = (140 * (12.0 - lost_l) + half_saline_na + lrs_na_k * maintenance_ml / 1000.0) / (
        12.0 - lost_l + 1.0 + maintenance_ml / 1000.0
    )
    assert c.serum_na[i] == pytest.approx(exact, abs=1e-9)
    closed_form = 140 + sodium_change_per_litre(serum_na=140, infusate_na=77, infusate_k=0,
                                                tbw_l=12.0)  # fmt: skip
    assert c.serum_na[i] == pytest.approx(closed_form, abs=0.01)


def test_subcutaneous_doses_enter_the_interstitium():
    plan = build_plan(PlanRequest(species_id="mongolian_gerbil", weight_kg=0.065,
                                  dehydration_percent=7))  # fmt: skip
    c = course(plan)
    starting_interstitium = (0.2 - 0.05) * 65  # mL: dog/cat fractions applied to mammals
    assert c.interstitial_ml[0] - starting_interstitium > 0.9 * plan.phases[0].dose_ml
    assert c.plasma_ml[0] == pytest.approx(0.05 * 65, rel=0.02)  # plasma refills later
    assert c.plasma_ml[60] > c.plasma_ml[0]
    assert np.all(np.isfinite(c.plasma_ml)) and np.all(c.plasma_ml > 0)


def test_horizon_and_step_are_checked(dog):
    with pytest.raises(InputError):
        course(dog, horizon_h=15 * 24)
    with pytest.raises(InputError):
        course(dog, step_minutes=0)
    c = course(dog, horizon_h=14 * 24)
    assert len(c.hours) == 14 * 24 * 60 + 1
