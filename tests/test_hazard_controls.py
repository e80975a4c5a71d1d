"""Controls named in the hazard log (docs/hazards.md) that no other test proved.

Each test names its source; rules of thumb say "common practice, no source".
"""

import pytest

from vetfluid.common.errors import InputError
from vetfluid.planning.plan import PlanRequest, build_plan


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
    # that the dog's doses can give gives doses closer than that
    plan = plan_for(species_id="dog", weight_kg=20, dehydration_percent=1, replace_hours=4,
                    route="sc", device="divided")  # fmt: skip
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
    from vetfluid.tables import fluid_roles

    settings = planner.settings_box

    def offered(box):
        return [box.itemData(i) for i in range(box.count())]

    assert offered(settings.fluid) == list(fluid_roles.carriers())
    assert not {"kcl_2_meq_per_ml", "dextrose_50", "nacl_7_2"} & set(offered(settings.fluid))
    assert offered(settings.shock_fluid) == [None, *fluid_roles.resuscitation_fluids()]
    assert not {"dextrose_5", "nacl_0_45", "kcl_2_meq_per_ml"} & set(offered(settings.shock_fluid))


def test_a_syringe_pump_rate_for_a_finch_is_set_in_hundredths_not_rounded_to_nothing():
    # 75 mL/kg/day (species table) × 13 g = 0.041 mL/h: a syringe pump set in 0.1 mL/h
    # steps would run 0 mL/h; in 0.01 mL/h steps (common practice, no source) it runs 0.04.
    plan = plan_for(species_id="zebra_finch", weight_kg=0.013, route="io", device="syringe",
                    dehydration_percent=8)  # fmt: skip
    maintenance = next(p for p in plan.phases if p.kind == "maintenance")
    assert maintenance.rate_ml_per_h == pytest.approx(0.04)
    assert all(load > 0 for _, load in maintenance.syringe_fills)
    assert "set 0.04 mL/h" in " ".join(e.action for e in plan.schedule)
    assert severity_of(plan, "RATE_TOO_SMALL_TO_SET") is None


def test_a_rate_no_pump_can_set_is_blocked():
    # A 1 g hatchling: 0.003 mL/h rounds to 0 on a syringe pump — it would give nothing.
    plan = plan_for(species_id="zebra_finch", weight_kg=0.001, route="io", device="syringe",
                    neonate=True)  # fmt: skip
    assert severity_of(plan, "RATE_TOO_SMALL_TO_SET") == "hard"


# ---- found by the adversarial review ----------------------------------------------------
def test_an_implausible_urine_measurement_is_questioned_before_it_is_given_back():
    # 800 mL in 4 h from a 4 kg cat is 50 mL/kg/h, against a normal 1–2 (Foster 2018)
    plan = plan_for(species_id="cat", weight_kg=4, ins_and_outs_period_h=4,
                    measured_outputs=((800.0, 0.0),), renal_disease=True)  # fmt: skip
    assert severity_of(plan, "MEASURED_URINE_IMPLAUSIBLE") == "soft"
    usual = plan_for(species_id="cat", weight_kg=4, ins_and_outs_period_h=4,
                     measured_outputs=((20.0, 0.0),), renal_disease=True)  # fmt: skip
    assert severity_of(usual, "MEASURED_URINE_IMPLAUSIBLE") is None


def test_anaesthesia_rate_is_checked_in_every_period_not_only_the_first():
    # < 10 mL/kg/h under anaesthesia (Davis 2013): the second ins-and-outs period gives
    # back 150 mL of urine in 4 h, 10.2 mL/kg/h in a 4 kg cat
    plan = plan_for(species_id="cat", weight_kg=4, ins_and_outs_period_h=4,
                    measured_outputs=((150.0, 0.0),), anaesthesia=True)  # fmt: skip
    assert severity_of(plan, "ANAESTHESIA_RATE") == "soft"


def test_an_intracoelomic_dose_beyond_what_the_coelom_holds_is_blocked():
    # 12 % of a 1 kg slider over 12 h in 6-hourly doses would be 65 mL/kg at a time into one
    # cavity, above the 5–20 mL/kg intracoelomic range (recalled). The plan holds each dose
    # to one injection of the usual 10 mL/kg and replaces over longer instead (issue 20)...
    plan = plan_for(species_id="red_eared_slider", weight_kg=1, dehydration_percent=12,
                    route="icoel", replace_hours=12)  # fmt: skip
    doses = [p for p in plan.phases if p.mode == "intermittent"]
    assert all(p.sites_per_dose == 1 and p.dose_ml <= 10 + 1e-9 for p in doses)
    assert severity_of(plan, "REPLACEMENT_SLOWED_TO_ROUTE") == "soft"
    # ...and the check behind it still refuses such a dose wherever it came from
    from vetfluid.planning import safety
    from vetfluid.planning.ledger import Ledger
    from vetfluid.planning.schedule import intermittent_phase
    from vetfluid.tables.species import load_table

    ledger = Ledger(load_table(), "red_eared_slider", weight_kg=1.0)
    big = intermittent_phase(kind="replacement", start_h=0, end_h=6, need_ml_per_h=65 / 6,
                             route="icoel", per_site_limit_ml=10.0, kcl_mmol_per_l=0.0)  # fmt: skip
    safety.check_divided_sites(ledger, (big,), site_limit_ml=10.0)
    assert {f.code: f.severity for f in ledger.findings}["ICOEL_DOSE_TOO_LARGE"] == "hard"


def test_a_gravity_drip_for_a_mouse_is_a_warning_not_a_note():
    plan = plan_for(species_id="mouse", weight_kg=0.03, dehydration_percent=8, route="io",
                    device="gravity", drop_factor=60)  # fmt: skip
    assert severity_of(plan, "SYRINGE_PUMP_SUGGESTED") == "soft"


def test_boluses_beyond_one_blood_volume_are_blocked():
    # 10 × 15 mL/kg in a rabbit is 150 mL/kg against a blood volume of 55–65 mL/kg
    plan = plan_for(species_id="rabbit", weight_kg=2, resuscitation_boluses=10)
    assert severity_of(plan, "BOLUSES_ABOVE_BLOOD_VOLUME") == "hard"


def test_a_dehydration_typed_as_a_fraction_is_questioned():
    plan = plan_for(species_id="dog", weight_kg=20, dehydration_percent=0.08)
    assert severity_of(plan, "DEHYDRATION_UNDER_ONE_PERCENT") == "soft"


def test_the_sodium_command_refuses_a_concentrate_as_an_infusion():
    import subprocess
    import sys

    done = subprocess.run(
        [sys.executable, "-m", "vetfluid.cli", "sodium", "--species", "cat", "--weight", "4 kg",
         "--serum-na", "140", "--fluid", "kcl_2_meq_per_ml"],
        capture_output=True, text=True, check=False,
    )  # fmt: skip
    assert done.returncode == 2
    assert "not infused as the bag" in done.stderr and "Traceback" not in done.stderr


@pytest.mark.parametrize(
    ("fluid_id", "ml_per_kg", "minutes", "words"),
    [("kcl_2_meq_per_ml", 5, 15, "not given as a bolus"),
     ("dextrose_5", 10, 15, "not given as a bolus"),
     ("nacl_7_2", 100, 15, "at most 4 mL/kg"),
     ("nacl_7_2", 4, 1, "at least 5 min")],
)  # fmt: skip
def test_the_courses_extra_bolus_is_held_to_the_fluids_roles(fluid_id, ml_per_kg, minutes, words):
    from vetfluid.course.model import bolus_input

    with pytest.raises(InputError, match=words):
        bolus_input(fluid_id=fluid_id, ml_per_kg=ml_per_kg, weight_kg=4, minutes=minutes)


def test_a_rate_the_pump_rounds_far_from_the_need_is_a_warning():
    # A 4 g hatchling: 75 mL/kg/day is 0.0125 mL/h, set as 0.01 mL/h — 20 % less
    plan = plan_for(species_id="zebra_finch", weight_kg=0.004, route="io", device="syringe",
                    neonate=True)  # fmt: skip
    assert severity_of(plan, "RATE_ROUNDED_FAR") == "soft"


# ---- found by the oracle naming its answers -------------------------------------------------
def test_potassium_from_overlapping_sc_doses_is_held_to_the_ceiling():
    # SC fluid is absorbed over 6–8 h (Vet Clin North Am 2017): doses every 4 h overlap, and
    # what reaches the rat in the hour from hour 4 is 0.63 mmol/kg/h of K, past Côté 2020's 0.5
    plan = plan_for(species_id="rat", weight_kg=0.3, dehydration_percent=8, replace_hours=8,
                    kcl_mmol_per_l=30, route="sc", device="divided",
                    max_sites_per_dose=10)  # fmt: skip
    assert severity_of(plan, "POTASSIUM_ABOVE_CEILING") == "hard"


def test_overlapping_sc_doses_count_under_anaesthesia():
    plan = plan_for(species_id="mouse", weight_kg=0.03, dehydration_percent=1, replace_hours=4,
                    route="sc", device="divided", anaesthesia=True,
                    max_sites_per_dose=10)  # fmt: skip
    assert severity_of(plan, "ANAESTHESIA_RATE") == "soft"


def test_an_sc_bag_made_hypertonic_by_its_additives_is_blocked():
    # lactated Ringer's + 80 mmol/L KCl is about 416 mOsm/L: beyond the 0.9 % NaCl + 35 mEq/L
    # KCl (about 378 mOsm/L) usually given under the skin (DiBartola 2012, recalled)
    plan = plan_for(species_id="cat", weight_kg=4, dehydration_percent=5, route="sc",
                    device="divided", kcl_mmol_per_l=80)  # fmt: skip
    assert severity_of(plan, "ROUTE_OSMOLARITY_LIMIT") == "hard"
    usual = plan_for(species_id="cat", weight_kg=4, dehydration_percent=5, route="sc",
                     device="divided", fluid_id="nacl_0_9", kcl_mmol_per_l=35)  # fmt: skip
    assert severity_of(usual, "ROUTE_OSMOLARITY_LIMIT") is None


# ---- found by the second adversarial review ----------------------------------------------
def test_a_typed_sodium_limit_never_lifts_the_block():
    # 5% dextrose for a cat at 175 over 6 h moves Na about 4.5 mmol/L/h: blocked at twice
    # the shipped 0.5 (Adrogué & Madias 2000) whatever limit is typed
    plan = plan_for(species_id="cat", weight_kg=4, dehydration_percent=8, serum_na=175,
                    fluid_id="dextrose_5", replace_hours=6, max_na_change_per_h=5)  # fmt: skip
    assert severity_of(plan, "SODIUM_CHANGE_TOO_FAST") == "hard"
    assert severity_of(plan, "SODIUM_LIMIT_RAISED") == "soft"


def test_sodium_moving_within_the_reference_interval_is_not_a_correction():
    # A cat's Na stays within 147–162 on lactated Ringer's over 6 h: no sodium finding
    plan = plan_for(species_id="cat", weight_kg=4, dehydration_percent=10, replace_hours=6)
    assert severity_of(plan, "SODIUM_CHANGE_TOO_FAST") is None
    assert severity_of(plan, "SODIUM_BOLUS_CHANGE") is None


def test_hypertonic_saline_for_a_hypernatraemic_patient_is_blocked():
    plan = plan_for(species_id="dog", weight_kg=20, dehydration_percent=8, serum_na=165,
                    resuscitation_boluses=1, bolus_fluid_id="nacl_7_2")  # fmt: skip
    assert severity_of(plan, "HYPERTONIC_SALINE_IN_HYPERNATRAEMIA") == "hard"


def test_a_neonate_flag_on_an_adult_weight_keeps_adult_body_water_and_the_block():
    request = dict(species_id="dog", weight_kg=30, dehydration_percent=10,
                   fluid_id="nacl_0_9", serum_na=118, replace_hours=5)  # fmt: skip
    adult = plan_for(**request)
    flagged = plan_for(neonate=True, **request)
    assert severity_of(adult, "SODIUM_CHANGE_TOO_FAST") == "hard"
    assert severity_of(flagged, "SODIUM_CHANGE_TOO_FAST") == "hard"
    assert severity_of(flagged, "NEONATE_AT_ADULT_WEIGHT") == "soft"


def test_intracoelomic_doses_are_scheduled_to_fit_one_injection():
    # The coelom is one cavity: a chelonian at maintenance gets doses that fit one injection
    # (5–20 mL/kg, recalled) rather than "punctures"
    plan = plan_for(species_id="hermanns_tortoise", weight_kg=0.8, body_temp_c=28)
    assert all(p.sites_per_dose == 1 for p in plan.phases if p.mode == "intermittent")
    assert severity_of(plan, "ICOEL_MORE_THAN_ONE_INJECTION") is None


def test_divided_doses_are_never_closer_than_their_interval():
    # SC fluid is absorbed over 6–8 h (Vet Clin North Am 2017); 20 h is not a whole number
    # of 6 h intervals, so the doses are spread a little wider, never closer
    plan = plan_for(species_id="rabbit", weight_kg=2.5, dehydration_percent=5, route="sc",
                    device="divided", replace_hours=20)  # fmt: skip
    assert all(p.interval_h >= 6 for p in plan.phases if p.mode == "intermittent")
    assert severity_of(plan, "DOSES_CLOSER_THAN_ABSORPTION") is None


def test_the_serum_k_scale_stops_at_what_the_route_takes():
    # Côté 2020 scale: K 2.8 → 40 mmol/L KCl; SC fluid at most 35 mmol/L K (DiBartola 2012)
    plan = plan_for(species_id="cat", weight_kg=4, dehydration_percent=6, route="sc",
                    device="divided", serum_k=2.8)  # fmt: skip
    assert plan.potassium.bag_k_mmol_per_l == pytest.approx(35, abs=0.01)
    assert severity_of(plan, "ROUTE_POTASSIUM_LIMIT") is None
    assert severity_of(plan, "KCL_HELD_TO_ROUTE") == "info"


def test_dehydration_in_the_shock_band_without_a_bolus_is_a_warning():
    # DiBartola 2012, Table 14-4: 12–15 % dehydration brings signs of shock (weak pulses,
    # cold limbs); shock is treated with boluses before the deficit is replaced.
    plan = plan_for(species_id="dog", weight_kg=20, dehydration_percent=14)
    assert severity_of(plan, "DEHYDRATION_IN_SHOCK_RANGE") == "soft"
    with_bolus = plan_for(species_id="dog", weight_kg=20, dehydration_percent=14,
                          resuscitation_boluses=1)  # fmt: skip
    assert severity_of(with_bolus, "DEHYDRATION_IN_SHOCK_RANGE") is None
    assert severity_of(plan_for(species_id="dog", weight_kg=20, dehydration_percent=10),
                       "DEHYDRATION_IN_SHOCK_RANGE") is None  # fmt: skip
