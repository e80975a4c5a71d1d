"""Routes as practised for exotic and small patients, dosing as it is done (the clinician's
interval and sites per dose), and resuscitation for birds and reptiles (issue 20).

Sources are named beside each check; species values recalled are `memory` in
species_data/parameters.csv and say so there.
"""

from __future__ import annotations

import json
import math

import pytest

from vetfluid import cli
from vetfluid.common.errors import InputError
from vetfluid.planning.plan import PlanRequest, build_plan
from vetfluid.records.request_file import read_request_file, write_request_file


def plan_for(**kw):
    return build_plan(PlanRequest(**kw))


def finding(plan, code):
    return next((f for f in plan.findings if f.code == code), None)


def divided(plan):
    return [p for p in plan.phases if p.mode == "intermittent"]


def provenance(plan, parameter):
    return next(v for v in plan.provenance if v.parameter == parameter)


# ---- dosing the way it is done ------------------------------------------------------------
def test_a_gerbil_every_8_h_in_2_sites_gets_3_doses_a_day_and_is_told_the_time():
    # A 70 g gerbil, 7 % dehydrated (4.9 mL). SC at most 10 mL/kg per site (0.7 mL; the
    # dog and cat limit, Vet Clin North Am 2017, applied to rodents — memory; a mouse's
    # good-practice SC volume is also 10 mL/kg in the University of Wyoming table).
    plan = plan_for(species_id="mongolian_gerbil", weight_kg=0.07, dehydration_percent=7,
                    dose_interval_h=8, max_sites_per_dose=2)  # fmt: skip
    phases = divided(plan)
    assert phases and all(p.interval_h == pytest.approx(8) for p in phases)
    assert all(p.sites_per_dose <= 2 and p.ml_per_site <= 0.7 + 1e-9 for p in phases)
    first_day = [e for e in plan.schedule if e.hour < 24 and e.action.startswith("Give ")]
    assert len(first_day) == 3  # not 24 injections a day: 3 doses of at most 2 sites
    # 3 doses of 1.4 mL are 4.2 mL a day, less than the gerbil's maintenance: the deficit is
    # never replaced, so the plan is blocked and says how long the most SC can give (every
    # 6 h, 4 sites of 0.7 mL) would take
    assert 3 * 1.4 < plan.maintenance.ml_per_day
    said = finding(plan, "DOSES_FALL_SHORT")
    assert said is not None and said.severity == "hard"
    assert "1.4 mL" in said.message and "every 8 h" in said.message
    surplus_ml_per_h = 4 * 0.7 / 6 - plan.maintenance.ml_per_h
    hours = math.ceil(plan.deficit_ml / surplus_ml_per_h / 6) * 6
    assert f"{hours:g} h" in said.action, said.action
    assert "IO" in said.action  # a line gives what the doses cannot


def test_a_deficit_too_big_for_the_doses_is_replaced_over_longer_not_in_more_sites():
    # A 300 g rat, 8 % dehydrated, SC every 6 h in at most 4 sites of 10 mL/kg (3 mL).
    # Each dose then holds at most 12 mL: the deficit is replaced over as many whole 6 h
    # intervals as the room above maintenance takes, and the plan says how long.
    plan = plan_for(species_id="rat", weight_kg=0.3, dehydration_percent=8,
                    dose_interval_h=6, max_sites_per_dose=4)  # fmt: skip
    room_ml_per_h = 12.0 / 6 - plan.maintenance.ml_per_h
    assert room_ml_per_h > 0
    hours = math.ceil(round(plan.deficit_ml / room_ml_per_h / 6, 9)) * 6
    replacement = next(p for p in plan.phases if p.kind == "replacement")
    assert replacement.end_h == pytest.approx(hours)
    assert hours > 24  # longer than the 24 h asked
    assert all(p.sites_per_dose <= 4 and p.dose_ml <= 12.0 + 1e-9 for p in divided(plan))
    said = finding(plan, "REPLACEMENT_SLOWED_TO_ROUTE")
    assert said is not None and said.severity == "soft"
    assert f"{hours:g} h" in said.message
    # the deficit is given in full: replacement volume = deficit + maintenance over its hours,
    # each site drawn to the 0.1 mL marks (within half a mark per site and dose)
    given, marks = replacement.volume_ml, 0.05 * replacement.sites_per_dose * replacement.doses
    assert given == pytest.approx(plan.deficit_ml + plan.maintenance.ml_per_h * hours, abs=marks)


def test_a_bearded_dragon_intracoelomic_every_24_h():
    # One intracoelomic injection a day of at most 10 mL/kg (5–20 mL/kg recalled, memory):
    # 3.8 mL for a 380 g dragon, below its maintenance of 20 mL/kg/day (10–30 mL/kg/day,
    # LafeberVet "Fluid Administration in Reptiles"): the 5 % deficit is never replaced at
    # that interval, so the plan is blocked; with no deficit it is only a warning (the
    # patient may drink).
    plan = plan_for(species_id="bearded_dragon", weight_kg=0.38, dehydration_percent=5,
                    body_temp_c=29, route="icoel", dose_interval_h=24)  # fmt: skip
    phases = divided(plan)
    assert plan.route == "icoel"
    assert all(p.interval_h == pytest.approx(24) and p.sites_per_dose == 1 for p in phases)
    assert all(p.dose_ml <= 3.8 + 1e-9 for p in phases)
    assert len([e for e in plan.schedule if e.hour < 24 and e.action.startswith("Give ")]) == 1
    assert finding(plan, "DOSES_FALL_SHORT").severity == "hard"
    assert finding(plan, "ICOEL_DOSE_TOO_LARGE") is None
    kept = plan_for(species_id="bearded_dragon", weight_kg=0.38, body_temp_c=29, route="icoel",
                    dose_interval_h=24)  # fmt: skip
    assert finding(kept, "DOSES_FALL_SHORT").severity == "soft"


def test_without_a_chosen_interval_doses_stay_within_the_usual_sites():
    # Issue 20: a 70 g gerbil had been planned 24 SC injections a day (6 sites every 6 h).
    # Left to the plan, a dose holds at most the usual 4 sites (delivery.MAX_SITES_PER_DOSE,
    # common practice) and a deficit that does not fit is replaced more slowly, said with
    # how long it takes, never by adding sites.
    gerbil = plan_for(species_id="mongolian_gerbil", weight_kg=0.065, dehydration_percent=7)
    assert all(p.sites_per_dose <= 4 for p in gerbil.phases)
    slowed = finding(gerbil, "REPLACEMENT_SLOWED_TO_ROUTE")
    assert slowed.severity == "soft" and "84 h (3.5 days)" in slowed.message
    assert finding(gerbil, "DIVIDED_TOO_MANY_SITES") is None
    # the same deficit fits a dog's doses: nothing is slowed
    dog = plan_for(species_id="dog", weight_kg=20, dehydration_percent=5, route="sc",
                   device="divided")  # fmt: skip
    assert finding(dog, "REPLACEMENT_SLOWED_TO_ROUTE") is None


@pytest.mark.parametrize(
    ("change", "words"),
    [({"dose_interval_h": 5}, "6, 8, 12 or 24"),
     ({"dose_interval_h": 48}, "6, 8, 12 or 24"),
     ({"max_sites_per_dose": 0}, "sites per dose"),
     ({"max_sites_per_dose": 11}, "sites per dose"),
     ({"max_sites_per_dose": 2.5}, "sites per dose"),
     ({"soaks_per_day": 9}, "soaks a day")],
)  # fmt: skip
def test_dosing_choices_out_of_range_are_refused_in_words(change, words):
    with pytest.raises(InputError, match=words):
        PlanRequest(species_id="mongolian_gerbil", weight_kg=0.07, **change)


def test_a_dosing_interval_for_a_line_is_refused():
    with pytest.raises(InputError, match="divided"):
        plan_for(species_id="dog", weight_kg=20, dehydration_percent=5, dose_interval_h=8)


def test_more_than_one_site_into_one_cavity_is_refused():
    # the peritoneum and the coelom are one space each: punctures do not make room
    with pytest.raises(InputError, match="one injection"):
        plan_for(species_id="mongolian_gerbil", weight_kg=0.07, route="ip",
                 max_sites_per_dose=2)  # fmt: skip


# ---- routes as practised --------------------------------------------------------------------
def test_a_gerbil_ip_dose_is_held_to_its_limit():
    # IP at most 10 mL/kg per injection in rodents (rat good-practice volume, Diehl 2001 as
    # reproduced; memory): 0.7 mL for 70 g. A 7 % deficit over 24 h needs far more a dose:
    # the plan holds each injection to the limit and says what that means for the deficit,
    # whether or not the clinician chose the interval (one injection per dose on this route).
    plan = plan_for(species_id="mongolian_gerbil", weight_kg=0.07, dehydration_percent=7,
                    route="ip")  # fmt: skip
    assert plan.route == "ip" and plan.device == "divided"
    assert all(p.dose_ml <= 0.7 + 1e-9 and p.sites_per_dose == 1 for p in divided(plan))
    assert {"DOSES_FALL_SHORT", "REPLACEMENT_SLOWED_TO_ROUTE"} & {f.code for f in plan.findings}
    # at the clinician's interval each injection is held to the limit too
    held = plan_for(species_id="mongolian_gerbil", weight_kg=0.07, dehydration_percent=7,
                    route="ip", dose_interval_h=8)  # fmt: skip
    assert all(p.dose_ml <= 0.7 + 1e-9 and p.sites_per_dose == 1 for p in divided(held))
    assert finding(held, "ONE_SITE_DOSE_TOO_LARGE") is None
    value = provenance(held, "max_site_volume_ip_ml_per_kg")
    assert value.number == 10 and value.basis == "memory"


def test_a_mouse_ip_limit_is_the_published_table_value():
    # University of Wyoming needle-gauge table: mouse IP 20 µL/g (= 20 mL/kg)
    plan = plan_for(species_id="mouse", weight_kg=0.03, dehydration_percent=5, route="ip",
                    dose_interval_h=12)  # fmt: skip
    value = provenance(plan, "max_site_volume_ip_ml_per_kg")
    assert (value.number, value.basis, value.source_id) == (20, "published", "uwyo_volumes")


@pytest.mark.parametrize(
    ("species_id", "weight_kg", "route"),
    [
        ("budgerigar", 0.035, "ip"),  # no peritoneal cavity for fluids in a bird: air sacs
        ("dog", 20, "ip"),
        ("dog", 20, "epicoel"),
        ("bearded_dragon", 0.38, "epicoel"),  # between plastron and pectoral girdle: chelonians
        ("ferret", 1, "oral"),
    ],  # no oral volume on record for it
)
def test_a_route_not_for_the_taxon_is_refused(species_id, weight_kg, route):
    with pytest.raises(InputError, match="not planned for"):
        plan_for(species_id=species_id, weight_kg=weight_kg, route=route)


def test_oral_fluids_for_a_budgerigar_are_held_to_half_its_crop():
    # LafeberVet "Tube Feeding Birds": crop volume about 50 mL/kg; begin with one third
    # to one half of it in the critically ill — 25 mL/kg a tube, 0.875 mL for 35 g
    plan = plan_for(species_id="budgerigar", weight_kg=0.035, dehydration_percent=5,
                    route="oral", dose_interval_h=8)  # fmt: skip
    assert all(p.dose_ml <= 0.875 + 1e-9 and p.sites_per_dose == 1 for p in divided(plan))
    value = provenance(plan, "max_site_volume_oral_ml_per_kg")
    assert (value.number, value.basis, value.source_id) == (25, "derived", "lafeber_tube_feeding")
    assert "Give 0." in plan.schedule[0].action and "by mouth" in plan.schedule[0].action


def test_an_epicoelomic_dose_for_a_tortoise():
    plan = plan_for(species_id="hermanns_tortoise", weight_kg=2, dehydration_percent=5,
                    body_temp_c=28, route="epicoel", dose_interval_h=24)  # fmt: skip
    assert plan.route == "epicoel"
    assert all(p.sites_per_dose == 1 and p.dose_ml <= 20 + 1e-9 for p in divided(plan))


@pytest.mark.parametrize(
    ("route", "fluid_id", "dextrose"),
    [("ip", "nacl_0_45", 0.0),  # only warm isotonic crystalloids SC or IP (Clinician's Brief)
     ("ip", "lactated_ringers", 2.5),  # no dextrose SC or IP (same; Vet Clin North Am 2017)
     ("oral", "dextrose_5", 0.0),  # by mouth only isotonic crystalloids: restricted, no source
     ("oral", "hes_130_0_4_6", 0.0)],
)  # fmt: skip
def test_fluids_not_for_the_route_are_blocked(route, fluid_id, dextrose):
    species = {"ip": ("mongolian_gerbil", 0.07), "oral": ("budgerigar", 0.035)}[route]
    plan = plan_for(species_id=species[0], weight_kg=species[1], dehydration_percent=5,
                    route=route, fluid_id=fluid_id, dextrose_percent=dextrose,
                    dose_interval_h=8)  # fmt: skip
    assert plan.has_hard_limit
    assert {f.code for f in plan.findings} & {"FLUID_NOT_FOR_SC", "ROUTE_DEXTROSE_LIMIT"}


def test_isotonic_ip_fluid_passes_the_route_checks():
    plan = plan_for(species_id="mongolian_gerbil", weight_kg=0.07, dehydration_percent=2,
                    route="ip", dose_interval_h=8)  # fmt: skip
    codes = {f.code for f in plan.findings}
    assert not codes & {"FLUID_NOT_FOR_SC", "ROUTE_DEXTROSE_LIMIT", "ROUTE_POTASSIUM_LIMIT"}


# ---- soaking: recorded, never counted ----------------------------------------------------------
def test_soaking_is_recorded_but_not_counted_as_intake():
    request = dict(species_id="hermanns_tortoise", weight_kg=0.8, dehydration_percent=5,
                   body_temp_c=28)  # fmt: skip
    without = plan_for(**request)
    soaked = plan_for(soaks_per_day=2, **request)
    assert soaked.phases == without.phases  # nothing added to what is given
    assert soaked.total_ml_first_24h == without.total_ml_first_24h
    soaks = [e for e in soaked.schedule if e.phase == "soak"]
    assert len([e for e in soaks if e.hour < 24]) == 2
    assert all("not counted" in e.action for e in soaks)
    assert finding(soaked, "SOAKING_NOT_COUNTED").severity == "info"
    assert not [e for e in without.schedule if e.phase == "soak"]


def test_soaking_a_dog_is_refused():
    with pytest.raises(InputError, match="not planned for"):
        plan_for(species_id="dog", weight_kg=20, soaks_per_day=1)


# ---- resuscitation for birds and reptiles ------------------------------------------------------
def test_a_budgerigar_io_bolus_is_10_ml_per_kg_with_its_source():
    # LafeberVet "Fluid Therapy in the Avian Patient": "One to three bolus infusions of
    # crystalloids (10 ml/kg) … IV or IO"
    plan = plan_for(species_id="budgerigar", weight_kg=0.035, route="io", device="syringe",
                    resuscitation_boluses=1)  # fmt: skip
    res = plan.resuscitation
    assert res.bolus_ml_per_kg == 10 and res.bolus_ml == pytest.approx(0.35)
    assert res.bolus_from == "species bolus"
    bolus = provenance(plan, "bolus_ml_per_kg")
    assert (bolus.source_id, bolus.basis) == ("lafeber_avian_fluids", "published")
    assert plan.phases[0].kind == "resuscitation" and plan.phases[0].route == "io"
    # the 10 mL/kg bolus over the bird's 15 min runs at 40 mL/kg/h: no rate finding (the
    # hourly ceiling is one blood volume, 100 mL/kg, Glomski & Pica 2011)
    assert not plan.has_hard_limit, [f.code for f in plan.findings]


def test_a_reptile_bolus_is_its_own_not_a_quarter_of_blood_volume():
    plan = plan_for(species_id="bearded_dragon", weight_kg=0.38, route="io", device="syringe",
                    resuscitation_boluses=1, body_temp_c=29)  # fmt: skip
    res = plan.resuscitation
    assert res.bolus_from == "species bolus"
    assert res.bolus_ml_per_kg == 5  # recalled (memory), shown as unverified
    assert provenance(plan, "bolus_ml_per_kg").unverified


def test_a_small_patient_in_shock_is_offered_the_io_route():
    plan = plan_for(species_id="budgerigar", weight_kg=0.035, resuscitation_boluses=1)
    said = finding(plan, "RESUSCITATION_NEEDS_LINE")
    assert said.severity == "hard" and "IO" in said.action


# ---- plan files and the command line ---------------------------------------------------------
def test_plan_files_keep_the_dosing_choices_and_old_files_still_open(tmp_path):
    request = PlanRequest(species_id="mongolian_gerbil", weight_kg=0.07, dehydration_percent=7,
                          dose_interval_h=8, max_sites_per_dose=2)  # fmt: skip
    path = write_request_file(tmp_path / "gerbil", request, {})
    assert read_request_file(path).request == request
    data = json.loads(path.read_text())
    for key in ("dose_interval_h", "max_sites_per_dose", "soaks_per_day"):
        del data["request"][key]  # as a file written before these fields existed
    path.write_text(json.dumps(data))
    opened = read_request_file(path).request
    assert (opened.dose_interval_h, opened.max_sites_per_dose, opened.soaks_per_day) == (
        None, None, 0,
    )  # fmt: skip


def test_the_cli_takes_the_interval_the_sites_and_the_new_routes(capsys):
    code = cli.main(["plan", "--species", "mongolian_gerbil", "--weight", "70 g",
                     "--dehydration", "7", "--dose-interval", "8", "--max-sites", "2",
                     "--json"])  # fmt: skip
    data = json.loads(capsys.readouterr().out)
    assert code == 3  # these doses never replace the deficit: blocked, the plan still shown
    assert data["request"]["dose_interval_h"] == 8 and data["request"]["max_sites_per_dose"] == 2
    assert {p["interval_h"] for p in data["phases"]} == {8}
    code = cli.main(["plan", "--species", "hermanns_tortoise", "--weight", "800 g",
                     "--route", "epicoel", "--soaks", "2", "--dose-interval", "24"])  # fmt: skip
    out = capsys.readouterr().out
    assert code == 0 and "epicoelomic" in out and "Soak" in out
    code = cli.main(["plan", "--species", "mongolian_gerbil", "--weight", "70 g", "--route",
                     "ip", "--dose-interval", "7"])  # fmt: skip
    assert code == 2 and "6, 8, 12 or 24" in capsys.readouterr().err


def test_a_one_site_route_is_never_spread_over_sites_by_default():
    # Review finding: left to the plan, an epicoelomic dose was given "in 2 sites" though the
    # route is one injection per dose (delivery.ONE_SITE_ROUTES); the plan now holds it to
    # one site and says how long replacement takes at that.
    plan = build_plan(PlanRequest(species_id="red_eared_slider", weight_kg=0.25,
                                  dehydration_percent=5, route="epicoel"))  # fmt: skip
    assert all(p.sites_per_dose == 1 for p in plan.phases if p.mode == "intermittent")
    assert all("in 1 site" in e.action for e in plan.schedule if e.phase != "diuretic")


@pytest.mark.parametrize(("species_id", "weight_kg", "route"),
                         [("mongolian_gerbil", 0.065, "ip"), ("bearded_dragon", 0.38, "oral"),
                          ("red_eared_slider", 1.0, None)])  # fmt: skip
def test_a_route_without_an_absorption_figure_says_it_is_taken_as_sc(species_id, weight_kg, route):
    # Only SC absorption has a figure on record (6–8 h, Vet Clin North Am 2017); the plan
    # says when another route's doses borrow it (docs/model.md), and not for SC itself.
    plan = plan_for(species_id=species_id, weight_kg=weight_kg, route=route,
                    body_temp_c=28 if species_id != "mongolian_gerbil" else None)  # fmt: skip
    said = finding(plan, "ABSORPTION_TAKEN_AS_SC")
    assert said is not None and said.severity == "info" and "6 h" in said.message
    sc = plan_for(species_id="mongolian_gerbil", weight_kg=0.065)
    assert finding(sc, "ABSORPTION_TAKEN_AS_SC") is None


def test_an_interval_with_ins_and_outs_is_refused_not_overridden():
    # Review finding: a 6 h interval with a 4 h ins-and-outs period gave doses every 4 h
    # and never said the 6 h chosen was not used.
    with pytest.raises(InputError, match="ins-and-outs"):
        PlanRequest(species_id="rat", weight_kg=0.35, route="sc", device="divided",
                    ins_and_outs_period_h=4, dose_interval_h=6)  # fmt: skip


def test_a_snake_is_never_given_an_intraosseous_line():
    # Anatomy (common practice, no source): a snake has no limbs, so no limb bone for an
    # intraosseous needle. Review finding: a 400 g corn snake on a pump was planned "IO,
    # the usual line in a patient this small", and every shortfall advised an IO line.
    pump = plan_for(species_id="corn_snake", weight_kg=0.4, device="pump")
    assert pump.route == "iv" and finding(pump, "LINE_ASSUMED_IO") is None
    with pytest.raises(InputError, match="intraosseous"):
        build_plan(PlanRequest(species_id="corn_snake", weight_kg=0.4, route="io"))
    short = plan_for(species_id="corn_snake", weight_kg=0.4, dehydration_percent=8,
                     dose_interval_h=24, max_sites_per_dose=1)  # fmt: skip
    said = finding(short, "DOSES_FALL_SHORT")
    assert "an IV line" in said.action and "IO" not in said.action
    lizard = plan_for(species_id="bearded_dragon", weight_kg=0.38, device="pump", body_temp_c=29)
    assert lizard.route == "io"  # a lizard has limb bones
