"""The course model against physiology, with the source beside each check (docs/model.md)."""

from __future__ import annotations

import numpy as np
import pytest

from vetfluid.common.errors import InputError
from vetfluid.course.model import course, infused_input
from vetfluid.physiology.electrolytes import sodium_change_per_litre
from vetfluid.planning.plan import PlanRequest, build_plan
from vetfluid.tables.fluids import fluid

reference = pytest.mark.reference


@pytest.fixture(scope="module")
def dog():
    """A euhydrated 20 kg dog on maintenance, with healthy kidneys."""
    return build_plan(PlanRequest(species_id="dog", weight_kg=20, serum_na=140))


@pytest.fixture(scope="module")
def dog_no_excretion():
    """The same dog with oliguric renal disease: the excretion of an excess is left out and
    the urine capped, so the checks of distribution alone see every infused millilitre of an
    isotonic fluid stay in the body (the kidney's own urine runs in both courses and
    cancels)."""
    return build_plan(PlanRequest(species_id="dog", weight_kg=20, serum_na=140,
                                  renal_disease=True, renal_output="oliguric"))  # fmt: skip


def effect(plan, fluid_id, ml_per_kg, minutes, hour):
    """What an extra bolus adds to each compartment at ``hour``, as fractions of its volume."""
    base = course(plan, horizon_h=6)
    extra = infused_input(fluid_id=fluid_id, ml_per_kg=ml_per_kg, weight_kg=20, minutes=minutes)
    with_bolus = course(plan, horizon_h=6, extra_boluses=(extra,))
    i = int(round(hour * 60))
    volume = ml_per_kg * 20
    return {
        part: (getattr(with_bolus, f"{part}_ml")[i] - getattr(base, f"{part}_ml")[i]) / volume
        for part in ("plasma", "interstitial", "intracellular")
    }


@reference
def test_isotonic_bolus_settles_at_the_plasma_share_of_the_ecf(dog, dog_no_excretion):
    # Odunayo 2018: plasma 5 %, ECF 20 % of BW in dogs → about a quarter stays in plasma
    # once distributed (the usual teaching of crystalloid distribution).
    settled = effect(dog_no_excretion, "nacl_0_9", 10, 15, hour=3)
    assert settled["plasma"] == pytest.approx(0.25, abs=0.02)
    assert settled["plasma"] + settled["interstitial"] == pytest.approx(1.0, abs=0.03)
    # with healthy kidneys part of it has been excreted by then, from the plasma
    left = effect(dog, "nacl_0_9", 10, 15, hour=3)
    assert 0 < left["plasma"] < settled["plasma"]
    assert 0 < left["plasma"] + left["interstitial"] < 1


@reference
def test_fifteen_to_twenty_percent_stays_in_plasma_half_an_hour_after_an_infusion(dog):
    # Hahn 2020 (volume kinetics, people): 15–20 % of a crystalloid remains in the plasma
    # 30 min after an infusion ends. Calibration, not an independent check: the elimination
    # half-life (species_data, basis derived) was set so the model reproduces it; this test
    # keeps it reproduced for infusions of 15 and 30 min as the model changes.
    for minutes in (15, 30):
        left = effect(dog, "lactated_ringers", 20, minutes, hour=(minutes + 30) / 60)
        assert 0.15 <= left["plasma"] <= 0.20


@reference
def test_a_colloid_stays_in_the_plasma(dog, dog_no_excretion):
    # Hahn 2020: colloids have no distribution phase. Half an hour after 10 mL/kg of a
    # starch, most of it is still in the plasma; the same volume of saline has mostly left.
    starch = effect(dog_no_excretion, "hes_130_0_4_6", 10, 15, hour=0.75)
    saline = effect(dog_no_excretion, "nacl_0_9", 10, 15, hour=0.75)
    assert starch["plasma"] > 0.85 and saline["plasma"] < 0.4
    # it then lets its volume go with its half-life (3 h, colloids.csv, memory): after one
    # half-life about half of what it held has joined the interstitium
    held = effect(dog_no_excretion, "hes_130_0_4_6", 10, 1 / 60, hour=3)["plasma"]
    assert held == pytest.approx(0.25 + 0.75 * 0.5, abs=0.04)


@reference
def test_bolus_expands_plasma_first_then_distributes(dog_no_excretion):
    # Hahn 2020 (volume kinetics): plasma dilution peaks at the end of the infusion and
    # falls over the next half hour as fluid moves into the interstitium.
    end = effect(dog_no_excretion, "nacl_0_9", 10, 15, hour=0.25)["plasma"]
    later = effect(dog_no_excretion, "nacl_0_9", 10, 15, hour=0.75)["plasma"]
    assert end > 0.5 > later > 0.25


@reference
def test_five_percent_dextrose_spreads_over_total_body_water(dog_no_excretion):
    # Free water distributes in proportion to the compartments: ICF/TBW = 40/60 = two thirds
    # into the cells (Odunayo 2018 fractions; DiBartola ch. 1).
    settled = effect(dog_no_excretion, "dextrose_5", 10, 15, hour=3)
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
    assert np.allclose((c.weight_kg - 20) * 1000, c.given_ml - c.consumed_ml - c.urine_ml)
    # and each side: every phase's volume given; insensible water (Côté 2020: 20 mL/kg/day)
    # consumed for as long as the plan runs; the rest leaves as urine (the kidney)
    assert c.given_ml[-1] == pytest.approx(sum(p.volume_ml for p in plan.phases))
    assert c.consumed_ml[-1] == pytest.approx(20 * 20 / 24 * plan.end_h)
    assert np.all(np.diff(c.urine_ml) >= 0)
    end_of_replacement = int(24 * 60)
    assert c.remaining_deficit_ml[end_of_replacement] == pytest.approx(0, abs=1e-6)


@reference
def test_sodium_step_by_step_equals_adrogue_madias_for_one_litre():
    # Adrogué & Madias 2000: ΔNa = (Na_inf + K_inf − Na) / (TBW + 1) for one litre. In
    # ins-and-outs mode no urine is modelled and what leaves is isotonic at the moment's Na
    # (it moves volumes, not Na), so over a short 1 L infusion the course's Na equals the
    # closed form (the plan's own lactated Ringer's runs alongside for 10 min).
    plan = build_plan(PlanRequest(species_id="dog", weight_kg=20, serum_na=140,
                                  ins_and_outs_period_h=6, measured_outputs=((0.0, 0.0),),
                                  kcl_mmol_per_l=0))  # fmt: skip
    extra = infused_input(fluid_id="nacl_0_45", ml_per_kg=50, weight_kg=20, minutes=10)
    c = course(plan, horizon_h=1, extra_boluses=(extra,))
    closed_form = 140 + sodium_change_per_litre(serum_na=140, infusate_na=77, infusate_k=0,
                                                tbw_l=12.0)  # fmt: skip
    assert c.serum_na[10] == pytest.approx(closed_form, abs=0.02)


def test_subcutaneous_doses_are_absorbed_over_hours():
    # SC fluid is absorbed over 6–8 h (Vet Clin North Am Small Anim Pract 2017, vcna2017_sc,
    # memory; delivery.SC_ABSORPTION_H takes the shorter end): the dose weighs at once but
    # reaches the interstitium, then the plasma, over the absorption time.
    plan = build_plan(PlanRequest(species_id="mongolian_gerbil", weight_kg=0.065,
                                  dehydration_percent=7))  # fmt: skip
    c = course(plan)
    dose = plan.phases[0].dose_ml
    starting_interstitium = (0.2 - 0.05) * 65  # mL: dog/cat fractions applied to mammals
    assert c.weight_kg[0] == pytest.approx(0.065 + dose / 1000)
    assert c.interstitial_ml[0] == pytest.approx(starting_interstitium, rel=0.02)
    three_h, six_h = c.interstitial_ml[180], c.interstitial_ml[360]
    assert starting_interstitium < three_h < six_h
    assert c.plasma_ml[360] > c.plasma_ml[0]
    assert np.all(np.isfinite(c.plasma_ml)) and np.all(c.plasma_ml > 0)


def test_horizon_and_step_are_checked(dog):
    with pytest.raises(InputError):
        course(dog, horizon_h=15 * 24)
    with pytest.raises(InputError):
        course(dog, step_minutes=0)
    c = course(dog, horizon_h=14 * 24)
    assert len(c.hours) == 14 * 24 * 60 + 1


def test_after_the_plan_ends_the_state_it_left_holds():
    # Common practice, no source: after the plan the patient's own intake is taken to match
    # its losses, so only an excess is still excreted and the weight barely moves.
    plan = build_plan(PlanRequest(species_id="dog", weight_kg=20, dehydration_percent=7))
    c = course(plan, horizon_h=14 * 24)
    end = int(max(p.end_h for p in plan.phases) * 60)
    assert np.all(np.abs(c.weight_kg[end:] - c.weight_kg[end]) < 0.005 * 20)
    assert np.all(np.diff(c.weight_kg[end:]) <= 1e-12)  # nothing drunk that is not counted
    assert np.all(c.plasma_ml > 0) and np.all(c.intracellular_ml > 0)


@pytest.mark.parametrize(
    ("request_changes", "species", "reason"),
    [
        ({"renal_disease": True, "renal_output": "oliguric"}, "dog", "oliguric renal disease"),
        ({}, "ferret", "no concentrating ceiling for the species"),
        ({}, "dog", None),
    ],
)
def test_an_excess_is_not_excreted_where_that_cannot_be_trusted(request_changes, species,
                                                                reason):  # fmt: skip
    from vetfluid.tables.species import load_table

    weight = load_table().value(species, "body_weight_kg").number
    plan = build_plan(PlanRequest(species_id=species, weight_kg=weight, **request_changes))
    saline = infused_input(fluid_id="nacl_0_9", ml_per_kg=20, weight_kg=weight, minutes=15)
    c = course(plan, horizon_h=4, extra_boluses=(saline,))
    without = course(plan, horizon_h=4)
    assert c.excess_excretion_left_out == reason
    extra_urine = c.urine_ml[-1] - without.urine_ml[-1]
    assert (extra_urine > 0.1 * 20 * weight) == (reason is None)


@reference
def test_anaesthesia_cuts_the_excretion_of_a_load():
    # Hahn 2010: renal clearance of infused fluid during surgery is 10–20 % of that awake.
    def extra_urine(anaesthesia):
        plan = build_plan(PlanRequest(species_id="dog", weight_kg=20, anaesthesia=anaesthesia))
        saline = infused_input(fluid_id="nacl_0_9", ml_per_kg=20, weight_kg=20, minutes=15)
        loaded = course(plan, horizon_h=2, extra_boluses=(saline,))
        return loaded.urine_ml[-1] - course(plan, horizon_h=2).urine_ml[-1]

    awake, asleep = extra_urine(False), extra_urine(True)
    assert course(build_plan(PlanRequest(species_id="dog", weight_kg=20, anaesthesia=True))
                  ).excess_excretion_left_out is None  # fmt: skip
    assert 0 < asleep < 0.3 * awake


def test_volume_given_is_kept_by_fluid_and_adds_up(dog):
    extra = infused_input(fluid_id="hes_130_0_4_6", ml_per_kg=5, weight_kg=20, minutes=15)
    c = course(dog, horizon_h=2, extra_boluses=(extra,))
    by_fluid = c.given_by_fluid_ml
    assert set(by_fluid) == {dog.bag.name, fluid("hes_130_0_4_6").name}
    assert by_fluid[fluid("hes_130_0_4_6").name][-1] == pytest.approx(100)
    assert np.allclose(sum(by_fluid.values()), c.given_ml)


def test_the_sodium_band_is_the_correction_limit_from_the_start():
    # 0.5 mmol/L/h by default (safety_limits.csv); editable with the plan
    plan = build_plan(PlanRequest(species_id="dog", weight_kg=20, serum_na=160,
                                  max_na_change_per_h=0.4))  # fmt: skip
    c = course(plan, horizon_h=10)
    low, high = c.na_band()
    assert high[-1] == pytest.approx(164) and low[-1] == pytest.approx(156)
    assert np.all((c.serum_na >= low - 1e-9) & (c.serum_na <= high + 1e-9))  # LRS at this rate
    assert course(build_plan(PlanRequest(species_id="dog", weight_kg=20))).na_band() is None


def test_a_bolus_then_replacement_fades_in_the_plasma_while_the_weight_climbs():
    # The "done when": a dehydrated dog given a resuscitation bolus and then its
    # replacement. The bolus shows as a plasma peak that fades as it distributes
    # (Hahn 2020), and the weight climbs to the euhydrated weight (Davis 2013: 1 L ≈ 1 kg).
    plan = build_plan(PlanRequest(species_id="dog", weight_kg=20, dehydration_percent=7,
                                  replace_hours=12, resuscitation_boluses=1))  # fmt: skip
    c = course(plan)
    bolus_end = int(plan.phases[0].end_h * 60)
    change = c.change_from_start()["plasma"]
    after = change[bolus_end : bolus_end + 31]
    assert after.argmax() == 0 and after[-1] < 0.8 * after[0]  # a peak that fades in 30 min
    replaced = int(plan.main_phase.end_h * 60)
    # euhydrated, plus the bolus: the plan does not subtract it from the deficit (it says so,
    # BOLUS_NOT_SUBTRACTED, and asks for reassessment)
    bolus_l = plan.phases[0].volume_ml / 1000
    euhydrated = 20 + plan.deficit_ml / 1000
    # a dehydrated kidney holds water (ADH) until the deficit is back: 1 % of BW leeway
    assert euhydrated <= c.weight_kg[replaced] <= euhydrated + bolus_l + 0.01 * 20
    assert np.all(np.diff(c.weight_kg[bolus_end:replaced]) >= -1e-9)  # climbing, not falling


@reference
def test_pcv_and_total_solids_follow_the_plasma_dilution(dog_no_excretion):
    # Hahn 2020: volume kinetics reads plasma dilution from haemoglobin; dilution is
    # deepest at the end of an infusion and eases as the fluid distributes. Red cells and
    # plasma protein stay as they were, so PCV and TS fall with the plasma's expansion.
    from dataclasses import replace

    plan = build_plan(replace(dog_no_excretion.request, pcv_percent=45, total_solids_g_per_dl=6))
    extra = infused_input(fluid_id="lactated_ringers", ml_per_kg=20, weight_kg=20, minutes=15)
    c = course(plan, horizon_h=3, extra_boluses=(extra,))
    end, later = 15, 120
    assert c.pcv_percent[0] == pytest.approx(45) and c.total_solids_g_per_dl[0] == pytest.approx(6)
    assert c.pcv_percent[end] < c.pcv_percent[later] < 45
    assert c.total_solids_g_per_dl[end] < c.total_solids_g_per_dl[later] < 6
    # by hand at the end of the bolus: RBC = P0 · 45/55, PCV = RBC / (RBC + P)
    red_cells = c.plasma_ml[0] * 45 / 55
    assert c.pcv_percent[end] == pytest.approx(100 * red_cells / (red_cells + c.plasma_ml[end]))
    assert course(dog_no_excretion, horizon_h=1).pcv_percent is None  # no PCV entered


def test_the_course_the_plan_already_followed_is_the_course_followed_afresh():
    # The plan's sodium check followed the body on the course's grid (Plan.body); the course
    # reuses it. A causal balance gives the same figures for a prefix of the grid: the reused
    # course must equal one followed afresh, field by field, for a dog with a diuretic, an SC
    # gerbil and a reptile.
    from dataclasses import replace as with_

    from vetfluid.course.model import SHOWN_STEP_MINUTES
    from vetfluid.planning.demos import DEMOS

    dog = build_plan(PlanRequest(species_id="dog", weight_kg=20, serum_na=150, serum_k=4,
                                 diuretics=(("furosemide", 2.0, "iv", 2.0, 2.0),)))  # fmt: skip
    plans = [dog, build_plan(DEMOS["small_gerbil"].request),
             build_plan(DEMOS["cold_bearded_dragon"].request)]  # fmt: skip
    for plan in plans:
        assert plan.body is not None
        reused = course(plan, step_minutes=SHOWN_STEP_MINUTES)
        fresh = course(with_(plan, body=None), step_minutes=SHOWN_STEP_MINUTES)
        for name in ("given_ml", "urine_ml", "plasma_ml", "intracellular_ml", "weight_kg"):
            np.testing.assert_array_equal(getattr(reused, name), getattr(fresh, name))
        if fresh.serum_na is not None:
            np.testing.assert_array_equal(reused.serum_na, fresh.serum_na)
        assert reused.findings == fresh.findings
