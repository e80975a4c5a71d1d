"""Controls named in the hazard log (docs/hazards.md) that no other test proved.

Each test names its source; rules of thumb say "common practice, no source".
"""

import pytest

from vetfluid.errors import InputError
from vetfluid.plan import PlanRequest, build_plan


def plan_for(**kw):
    return build_plan(PlanRequest(**kw))


def severity_of(plan, code):
    return next((f.severity for f in plan.findings if f.code == code), None)


def test_dextrose_for_a_reptile_is_a_warning():
    # Parkinson & Mans 2020: dextrose fluids caused severe hyperglycaemia in bearded dragons
    plan = plan_for(species_id="bearded_dragon", weight_kg=0.35, route="io", device="syringe",
                    dextrose_percent=2.5)  # fmt: skip
    assert severity_of(plan, "REPTILE_DEXTROSE") == "soft"


def test_more_than_60_mmol_per_l_of_potassium_into_a_peripheral_vein_is_a_warning():
    # Above 60 mEq/L not through a peripheral line (safety_limits.csv, lyons2018)
    plan = plan_for(species_id="cat", weight_kg=4, kcl_mmol_per_l=80, route="iv")
    assert severity_of(plan, "KCL_PERIPHERAL_CONCENTRATION") == "soft"
    central = plan_for(species_id="cat", weight_kg=4, kcl_mmol_per_l=80, route="cvc")
    assert severity_of(central, "KCL_PERIPHERAL_CONCENTRATION") is None


def test_running_faster_than_the_scales_rate_for_the_band_is_a_warning():
    # Côté 2020: serum K < 2.0 → 80 mEq/L at most 6 mL/kg/h. In 0.9 % NaCl (no K of its
    # own) the 0.5 mmol/kg/h ceiling allows 6.25 mL/kg/h, so 6.1 mL/kg/h is over the band's
    # rate but under the ceiling: a warning. (In lactated Ringer's every band's rate is
    # already over the ceiling, which blocks the plan first.)
    plan = plan_for(species_id="dog", weight_kg=10, serum_k=1.8, fluid_id="nacl_0_9",
                    losses_ml_per_day=721)  # fmt: skip
    k = plan.potassium
    assert 60 < k.peak_rate_ml_per_h < 62.5 and k.peak_mmol_per_kg_per_h < 0.5
    assert severity_of(plan, "POTASSIUM_RATE_ABOVE_BAND") == "soft"
    assert severity_of(plan, "POTASSIUM_ABOVE_CEILING") is None


def test_resuscitation_boluses_under_the_skin_are_blocked():
    # Shock needs an IV or IO line (Davis 2013); SC fluid takes 6–8 h to absorb
    plan = plan_for(species_id="dog", weight_kg=20, route="sc", device="divided",
                    resuscitation_boluses=1)  # fmt: skip
    assert severity_of(plan, "RESUSCITATION_NEEDS_LINE") == "hard"


def test_sc_doses_closer_than_absorption_are_a_warning():
    # SC fluid is absorbed over 6–8 h (Vet Clin North Am 2017): a 4 h replacement period
    # gives doses closer than that
    plan = plan_for(species_id="mongolian_gerbil", weight_kg=0.065, dehydration_percent=5,
                    replace_hours=4)  # fmt: skip
    assert severity_of(plan, "DOSES_CLOSER_THAN_ABSORPTION") == "soft"


def test_a_hypernatraemic_patient_is_told_its_free_water_deficit():
    # 0.6 × 20 × (170/145 − 1) L (free-water deficit, standard; dog normal Na 145, memory)
    plan = plan_for(species_id="dog", weight_kg=20, serum_na=170, fluid_id="nacl_0_45")
    assert severity_of(plan, "FREE_WATER_DEFICIT") == "info"
    note = next(f for f in plan.findings if f.code == "FREE_WATER_DEFICIT")
    assert "2069 mL" in note.message


@pytest.mark.parametrize(
    ("field", "value"),
    [
        ("serum_na", 4.2),  # a potassium typed into the sodium field
        ("serum_k", 145),  # a sodium typed into the potassium field
        ("urine_osmolality", 1.030),  # a USG typed as urine osmolality
        ("usg", 1200),  # an osmolality typed as USG
        ("kcl_mmol_per_l", 400),  # more KCl than any bag is made up with
        ("dextrose_percent", 50),  # the concentrate's strength typed as the bag's
    ],
)
def test_a_lab_or_additive_in_the_wrong_field_or_unit_is_refused(field, value):
    # The accepted ranges do not overlap (serum Na 80–230, K 0.5–12 mmol/L; USG 1.000–1.080
    # against osmolality 20–12000 mOsm/kg; KCl 0–200 mmol/L; dextrose 0–10 %), so a swap or
    # a unit slip is refused with the field named rather than planned.
    with pytest.raises(InputError) as refused:
        PlanRequest(species_id="dog", weight_kg=20, **{field: value})
    assert refused.value.field == field


def test_the_window_offers_only_fluids_that_may_take_each_role(qtbot, planner):
    # fluid_roles.csv: concentrates are additives only; 7.2 % NaCl is one small bolus only
    from vetfluid import fluid_roles

    settings = planner.settings_box

    def offered(box):
        return [box.itemData(i) for i in range(box.count())]

    assert offered(settings.fluid) == list(fluid_roles.carriers())
    assert not {"kcl_2_meq_per_ml", "dextrose_50", "nacl_7_2"} & set(offered(settings.fluid))
    assert offered(settings.shock_fluid) == [None, *fluid_roles.resuscitation_fluids()]
    assert not {"dextrose_5", "nacl_0_45", "kcl_2_meq_per_ml"} & set(offered(settings.shock_fluid))
