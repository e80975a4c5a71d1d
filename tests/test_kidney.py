"""The kidney of the course model (issue 19) against physiology, with the source beside each
check (docs/model.md, "The kidney")."""

from __future__ import annotations

import numpy as np
import pytest

from vetfluid.course.model import course, infused_input
from vetfluid.physiology import kidney, maintenance
from vetfluid.planning.plan import PlanRequest, build_plan
from vetfluid.tables.species import load_table

reference = pytest.mark.reference


def plan_for(**changes):
    return build_plan(PlanRequest(**changes))


def load_effect(plan, fluid_id, ml_per_kg, minutes, hours, **options):
    """The course with an extra infusion, and the same course without it."""
    weight = plan.request.weight_kg
    extra = infused_input(fluid_id=fluid_id, ml_per_kg=ml_per_kg, weight_kg=weight,
                          minutes=minutes)  # fmt: skip
    return (course(plan, horizon_h=hours, extra_boluses=(extra,), **options),
            course(plan, horizon_h=hours, **options))  # fmt: skip


# ---- the pure pieces -----------------------------------------------------------------------
def test_urine_volume_is_solute_over_osmolality():
    # definition: 600 mOsm at 1200 mOsm/kg is 0.5 kg of water
    assert kidney.urine_volume_ml(600, 1200) == pytest.approx(500)
    assert maintenance.obligatory_urine_ml(600, 1200) == kidney.urine_volume_ml(600, 1200)


def test_the_water_budget_uses_the_kidneys_function_for_obligatory_urine():
    # one source of truth (issue 19): the budget's obligatory urine water is the kidney's
    # urine volume for the budget's solute at the ceiling
    table = load_table()
    budget = maintenance.water_budget(table, "dog", 20)
    assert budget.obligatory_urine_ml == kidney.urine_volume_ml(
        budget.solute_mosm_per_day, budget.ceiling_mosm_per_kg
    )


def test_a_narrowed_band_keeps_the_same_share_above_and_below_plasma():
    # our reasoning, no source: a ceiling fallen half-way to plasma raises the floor half-way
    floor, ceiling = kidney.narrowed_band(floor=50, ceiling=2300, plasma=300, ceiling_now=1300)
    assert ceiling == 1300 and floor == pytest.approx(175)
    assert kidney.narrowed_band(floor=50, ceiling=2300, plasma=300, ceiling_now=300) == (300, 300)
    # an entry past the species' ceiling is held to it
    assert kidney.narrowed_band(floor=50, ceiling=2300, plasma=300, ceiling_now=9000)[1] == 2300


@reference
def test_the_dogs_band_runs_from_50_to_its_water_deprivation_maximum():
    # van Vonderen 1997 (floor 50 mOsm/kg without vasopressin); Hardy & Osborne 1979
    # (2289 mOsm/kg after water deprivation)
    band = kidney.urine_band(load_table(), "dog")
    assert (band.floor_mosm_per_kg, band.ceiling_mosm_per_kg) == (50, 2289)
    asked = {
        excess: kidney.urine_osmolality_asked(
            tonicity_excess_mosm_per_kg=excess,
            volume_deficit_fraction=0,
            floor=50,
            ceiling=2289,
            span_mosm_per_kg=10,
            volume_deficit_for_full=0.1,
        )  # fmt: skip
        for excess in (-20, 0, 20)
    }
    assert asked[-20] == 50 and asked[20] == 2289
    assert asked[0] == pytest.approx((50 * 2289) ** 0.5)


@reference
@pytest.mark.parametrize(
    ("species_id", "ratio"),
    [
        # water-loaded geckos made urine at U/P 0.6–0.8, other lizards only 0.9–1.0
        # ("Renal ultrastructure and excretion of salt and water by three terrestrial
        # lizards", abstract): reptiles take 0.6
        ("bearded_dragon", 0.6),
        ("red_eared_slider", 0.6),
        # water-loaded roosters: U/P down to 0.37 ("Renal function in domestic fowl",
        # Am J Physiol 212:793, 1967)
        ("african_grey", 0.37),
        ("zebra_finch", 0.37),
    ],
)
def test_birds_and_reptiles_dilute_only_to_their_urine_to_plasma_floor(species_id, ratio):
    table = load_table()
    plasma = table.value(species_id, "plasma_osmolality_mosm_per_kg").number
    band = kidney.urine_band(table, species_id)
    assert band.floor_mosm_per_kg == pytest.approx(ratio * plasma)
    assert band.floor_mosm_per_kg > 50  # the mammal's floor (Guyton & Hall) is far lower


@reference
def test_a_lizards_water_load_leaves_no_more_dilute_than_its_floor():
    # the same lizard abstract: a water load's urine stays at or above U/P 0.6
    dragon = plan_for(species_id="bearded_dragon", weight_kg=0.35, body_temp_c=30)
    loaded, _ = load_effect(dragon, "dextrose_5", 20, 30, hours=12)
    plasma = load_table().value("bearded_dragon", "plasma_osmolality_mosm_per_kg").number
    urine = loaded.urine_osm_mosm_per_kg[1:]
    assert np.nanmin(urine) >= 0.6 * plasma - 1e-9
    assert np.nanmin(urine) < 0.7 * plasma  # it does dilute, down to the floor


# ---- what a clinician must see (issue 19) ----------------------------------------------------
@reference
def test_a_healthy_dog_excretes_a_water_load_as_dilute_urine():
    # Water diuresis (Guyton & Hall; van Vonderen 1997: urine down to 50 mOsm/kg after a
    # water load): most of 20 mL/kg of 5 % dextrose leaves within a few hours as dilute
    # urine, and serum Na comes back close to where it would have been.
    dog = plan_for(species_id="dog", weight_kg=20, serum_na=140)
    loaded, plain = load_effect(dog, "dextrose_5", 20, 30, hours=6)
    at_4h = 4 * 60
    extra_urine = loaded.urine_ml[at_4h] - plain.urine_ml[at_4h]
    assert extra_urine > 0.75 * 400
    assert loaded.urine_osm_mosm_per_kg[:at_4h].min() < 100
    assert abs(loaded.serum_na[at_4h] - plain.serum_na[at_4h]) < 1.0


@reference
def test_lactated_ringers_alone_for_days_drifts_na_up_and_k_down():
    # Davis 2013 (AAHA/AAFP): a replacement fluid used for maintenance drifts Na up and K
    # down, since maintenance losses are hypotonic (insensible water carries no solute) and
    # the kidney keeps excreting K. The old model had Na fall instead.
    plan = plan_for(species_id="dog", weight_kg=20, serum_na=145, serum_k=4.0,
                    fluid_id="lactated_ringers", kcl_mmol_per_l=0, dehydration_percent=1,
                    replace_hours=72)  # fmt: skip
    c = course(plan, step_minutes=5)
    assert c.serum_na[-1] > c.serum_na[0]
    assert c.serum_k[-1] < c.serum_k[0] - 0.05


@reference
def test_half_saline_with_dextrose_and_kcl_keeps_na_and_k_close():
    # Davis 2013: 0.45 % NaCl + 2.5 % dextrose with KCl is a maintenance fluid.
    plan = plan_for(species_id="dog", weight_kg=20, serum_na=145, serum_k=4.0,
                    fluid_id="nacl_0_45_dextrose_2_5", kcl_mmol_per_l=20, dehydration_percent=1,
                    replace_hours=72)  # fmt: skip
    c = course(plan, step_minutes=5)
    assert abs(c.serum_na[-1] - c.serum_na[0]) < 2.0
    assert abs(c.serum_k[-1] - c.serum_k[0]) < 0.05


@reference
def test_an_isosthenuric_cat_keeps_more_of_a_water_load():
    # Issue 19 (common practice, no source for the figures): a kidney that can neither
    # concentrate nor dilute keeps a water load, and its urine stays near plasma (USG 1.010
    # ≈ plasma osmolality).
    healthy = plan_for(species_id="cat", weight_kg=4, serum_na=155)
    renal = plan_for(species_id="cat", weight_kg=4, serum_na=155, renal_disease=True, usg=1.010)
    kept = {}
    for name, plan in (("healthy", healthy), ("renal", renal)):
        loaded, plain = load_effect(plan, "dextrose_5", 20, 30, hours=6)
        kept[name] = 80 - (loaded.urine_ml[240] - plain.urine_ml[240])
        if name == "renal":
            plasma = loaded.urine_band_mosm_per_kg[0]
            assert np.allclose(loaded.urine_osm_mosm_per_kg, plasma, rtol=0.05)
    assert kept["renal"] > kept["healthy"] + 40


@reference
def test_a_dehydrated_gerbil_concentrates_to_thousands():
    # Mongolian gerbil maximum 7503 mOsm/kg during water deprivation (gerbil_aqp2016):
    # a dehydrated gerbil's urine approaches its own ceiling.
    c = course(plan_for(species_id="mongolian_gerbil", weight_kg=0.065, dehydration_percent=7))
    assert c.urine_band_mosm_per_kg[1] == pytest.approx(7503)
    assert c.urine_osm_mosm_per_kg[1:60].min() > 0.8 * 7503


@reference
@pytest.mark.parametrize("species_id", ["bearded_dragon", "red_eared_slider"])
def test_a_reptiles_urine_never_exceeds_plasma(species_id):
    # Holz (reptile renal system): no loop of Henle, no urine above plasma.
    plan = plan_for(species_id=species_id, weight_kg=0.35, dehydration_percent=7,
                    body_temp_c=28)  # fmt: skip
    c = course(plan)
    plasma = load_table().value(species_id, "plasma_osmolality_mosm_per_kg").number
    assert np.nanmax(c.urine_osm_mosm_per_kg) <= plasma + 1e-9


@reference
def test_the_gerbils_obligatory_urine_water_is_a_fraction_of_the_dogs_per_unit_of_solute():
    # Gerbil 7503 vs dog 2289 mOsm/kg (gerbil_aqp2016; Hardy & Osborne 1979): the same solute
    # needs under a third of the water. Per kg of body weight a 65 g gerbil's higher
    # metabolic rate (Kleiber: kcal per kg ∝ W^−0.25, 4× the dog's) makes up for it.
    table = load_table()
    gerbil = maintenance.water_budget(table, "mongolian_gerbil", 0.065)
    dog = maintenance.water_budget(table, "dog", 20)
    per_mosm = {b: b.obligatory_urine_ml / b.solute_mosm_per_day for b in (gerbil, dog)}
    assert per_mosm[gerbil] < 0.35 * per_mosm[dog]
    per_kcal = {b: b.obligatory_urine_ml / b.energy_kcal_per_day for b in (gerbil, dog)}
    assert per_kcal[gerbil] < 0.35 * per_kcal[dog]


@reference
def test_hypertonic_saline_is_no_longer_eliminated_five_times_over():
    # Issue 19: 4 mL/kg of 7.2 % NaCl (80 mL in a 20 kg dog) was "eliminated" as 411 mL of
    # isotonic fluid with Na held at 151. The kidney excretes its Na in concentrated urine
    # (Hardy & Osborne 1979 ceiling): far less water than five times the dose, and Na returns.
    dog = plan_for(species_id="dog", weight_kg=20, serum_na=140)
    loaded, plain = load_effect(dog, "nacl_7_2", 4, 5, hours=36, step_minutes=5)
    extra_urine = loaded.urine_ml[-1] - plain.urine_ml[-1]
    assert extra_urine < 2 * 80
    assert loaded.serum_na[12] > plain.serum_na[12] + 3  # first it raises Na
    assert abs(loaded.serum_na[-1] - plain.serum_na[-1]) < 1.0  # then the kidney clears it


@reference
def test_isotonic_boluses_still_fade_from_the_plasma_within_half_an_hour():
    # Hahn 2020 (volume kinetics): plasma expansion peaks at the end of the infusion and
    # 15–20 % of it is left 30 min later (the natriuresis constant is calibrated to this;
    # since the kidney starts in balance, without the start-up urine the model once made, it
    # leaves 21 %: one point over the range's top, which is read off a figure).
    dog = plan_for(species_id="dog", weight_kg=20, serum_na=140)
    for fluid_id in ("nacl_0_9", "lactated_ringers"):
        loaded, plain = load_effect(dog, fluid_id, 20, 15, hours=2)
        gain = (loaded.plasma_ml - plain.plasma_ml) / 400
        assert int(np.argmax(gain)) == 15
        assert 0.14 <= gain[45] <= 0.22


def test_an_oliguric_kidney_is_held_under_the_oliguria_threshold():
    # Foster 2018 (dog): oliguria below 1 mL/kg/h (the low end of urine_output_ml_per_kg_h)
    dog = plan_for(species_id="dog", weight_kg=20, renal_disease=True)
    c = course(dog, renal_output="oliguric")
    per_kg_h = np.diff(c.urine_ml) / 20 / (c.hours[1] - c.hours[0])
    assert per_kg_h.max() <= 1.0 + 1e-9
    with pytest.raises(Exception, match="renal output"):
        course(dog, renal_output="anuric-ish")


def test_losses_by_type_move_na_as_their_composition_says():
    # Empendium table of losses (human): gastric juice Na 20–60, far below plasma; losing
    # it concentrates the rest, where an isotonic loss moves volume only.
    plan = plan_for(species_id="dog", weight_kg=20, serum_na=145, losses_ml_per_day=1000)
    vomitus = course(plan, loss_type="vomitus")
    isotonic = course(plan)
    assert vomitus.serum_na[-1] > isotonic.serum_na[-1]
    with pytest.raises(Exception, match="loss type"):
        course(plan, loss_type="sweat")


def test_the_cli_course_rows_carry_urine_and_stop_predicting_it_after_the_plan(capsys):
    """Issue 19's CLI keys: urine so far, its flow and osmolality on every row while the plan
    runs; after the plan's end the patient's own intake is taken to match its losses, so
    flow and osmolality are null rather than a figure that would read as anuria."""
    import json

    from vetfluid import cli

    code = cli.main(["course", "--demo", "dehydrated_dog", "--at", "1,24,48", "--json"])
    data = json.loads(capsys.readouterr().out)
    assert code == 0 and data["urine_predicted_until_h"] == 24
    during, end, after = data["rows"]
    floor, ceiling = data["urine_band_mosm_per_kg"]
    for row in (during, end):
        assert row["urine_ml_per_h"] > 0 and floor <= row["urine_osm_mosm_per_kg"] <= ceiling
    assert after["urine_ml_per_h"] is None and after["urine_osm_mosm_per_kg"] is None
    assert during["urine_ml"] < end["urine_ml"] <= after["urine_ml"]  # cumulative
    assert during["serum_na"] is not None and during["serum_k"] is not None  # entered


def test_an_ins_and_outs_course_gives_no_urine_figure_rather_than_zero(capsys):
    """In ins-and-outs mode urine is measured, not modelled: the rows say nothing (null)
    where a 0 would read as anuria; at hour 0 the urine shown is the first step's."""
    import json

    from vetfluid import cli

    cli.main(["course", "--species", "dog", "--weight", "20 kg", "--ins-and-outs-period", "6",
              "--measured-urine-ml", "60", "--at", "0,3", "--json"])  # fmt: skip
    rows = json.loads(capsys.readouterr().out)["rows"]
    assert all(row[k] is None for row in rows for k in ("urine_ml", "urine_ml_per_h",
                                                         "urine_osm_mosm_per_kg"))  # fmt: skip
    cli.main(["course", "--demo", "dehydrated_dog", "--at", "0,0.0833", "--json"])
    start, first_step = json.loads(capsys.readouterr().out)["rows"]
    assert start["urine_osm_mosm_per_kg"] == first_step["urine_osm_mosm_per_kg"]


def test_the_resting_urine_carries_the_resting_solute_in_what_maintenance_leaves():
    # U0 = solute ÷ water, held inside the band (docs/model.md, "The urine asked for").
    import math

    from vetfluid.physiology import kidney

    x = kidney.rest_position(solute_mosm_per_h=25.0, urine_ml_per_h=25.0, floor=50, ceiling=2500)
    assert 50 * math.exp(x * math.log(2500 / 50)) == pytest.approx(1000.0)
    assert kidney.rest_position(solute_mosm_per_h=1, urine_ml_per_h=100, floor=50,
                                ceiling=2500) == 0.0  # fmt: skip
    assert kidney.rest_position(solute_mosm_per_h=1, urine_ml_per_h=0, floor=50,
                                ceiling=2500) == 1.0  # fmt: skip


def test_a_dog_on_a_maintenance_fluid_starts_in_balance():
    # A euhydrated dog given 0.45 % NaCl + 2.5 % dextrose with KCl at its maintenance rate
    # keeps Na close (the guideline statement of issue 19): from the first hour on, not after
    # the model settles. Its urine over the first hour is about what maintenance leaves once
    # insensible and faecal water are out (the balance the rest position is set from).
    dog = plan_for(species_id="dog", weight_kg=20, serum_na=145,
                   fluid_id="nacl_0_45_dextrose_2_5")  # fmt: skip
    result = course(dog, step_minutes=5, horizon_h=24)
    first_hour = result.serum_na[12] - result.serum_na[0]
    # half the 0.5 mmol/L/h limit at most (the model once moved 0.45–0.75 in its first hour
    # while it settled; a lab cannot tell 0.25 mmol/L)
    assert abs(first_hour) < 0.25
    table = load_table()
    # insensible water leaves apart from the urine (the dog has no faecal water on record)
    assert table.get("dog", "faecal_water_ml_per_kg_day") is None
    outside = table.value("dog", "insensible_loss_ml_per_kg_day").number * 20 / 24
    expected = dog.maintenance.ml_per_h - outside
    assert result.urine_ml[12] == pytest.approx(expected, rel=0.25)


# ---- the plan's cautious path (ADH held) ---------------------------------------------------
HELD_CASES = [
    dict(species_id="mongolian_gerbil", weight_kg=0.065, dehydration_percent=7),
    dict(species_id="bearded_dragon", weight_kg=0.38, dehydration_percent=5, body_temp_c=24),
    dict(species_id="dog", weight_kg=20, serum_na=148, fluid_id="dextrose_5",
         dehydration_percent=3, replace_hours=24),
    dict(species_id="cat", weight_kg=4, serum_na=150, fluid_id="nacl_0_45",
         dehydration_percent=5, replace_hours=24),
    dict(species_id="dog", weight_kg=20, serum_na=145, fluid_id="dextrose_5"),
]  # fmt: skip


@pytest.mark.parametrize("changes", HELD_CASES, ids=lambda c: c["species_id"])
def test_the_held_kidney_stepped_on_from_the_fork_is_the_one_followed_from_hour_0(changes):
    # Our modelling identity (docs/model.md, "ADH held"): a kidney held at its rest differs
    # from a free one only once the free one asks to dilute below that rest. Stepping the
    # held kidney on from there must give the figures of following it from hour 0.
    from dataclasses import replace

    from vetfluid.planning import body

    plan = plan_for(**changes)
    free = plan.body
    held = body.with_adh_held(free)
    settings = replace(free.settings, lowest_position=free.settings.rest_position)
    whole = kidney.follow_balance(**free.loop_inputs, kidney=settings)
    if free.balance.fork is None:  # never asked below its rest: the same kidney
        assert held is free
        assert whole.urine_osm_mosm_per_kg == free.balance.urine_osm_mosm_per_kg
        return
    assert held.balance.fork is None
    for name in ("tbw_ml", "na_k_mmol", "k_mmol", "ecf_osm", "icf_osm", "urine_ml",
                 "urine_osm_mosm_per_kg", "urine_ecf_ml", "na_excreted_mmol",
                 "k_excreted_mmol", "mannitol_mosm", "hco3_excreted_mmol"):  # fmt: skip
        assert getattr(held.balance, name) == getattr(whole, name), name
    assert held.balance.lowest_position_asked == whole.lowest_position_asked
    # and the hold changed something after the fork, nothing before it
    step = free.balance.fork.step
    assert held.balance.urine_ml[:step] == free.balance.urine_ml[:step]
    assert held.balance.urine_ml != free.balance.urine_ml
