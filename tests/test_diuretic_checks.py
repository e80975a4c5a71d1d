"""The diuretics' safety rules (vetfluid/planning/diuretic_checks.py), each against its
source, and the table as a whole over random plans (hypothesis)."""

from __future__ import annotations

import pytest
from hypothesis import HealthCheck, event, given, settings
from hypothesis import strategies as st

from vetfluid.common.errors import InputError
from vetfluid.planning import diuretic_checks
from vetfluid.planning.plan import PlanRequest, build_plan
from vetfluid.tables import diuretics


def plan(species_id="dog", weight_kg=20.0, **changes):
    return build_plan(PlanRequest(species_id=species_id, weight_kg=weight_kg, **changes))


def found(p) -> dict[str, str]:
    return {f.code: f.severity for f in p.findings}


# ---- doses against what is on record -----------------------------------------------------------
@pytest.mark.parametrize(
    ("species_id", "weight_kg", "drug", "route", "dose"),
    [
        # no furosemide dose is on record for mice; the highest single dose on record for any
        # species is 10 mg/kg (bearded dragon SC, Parkinson & Mans 2018): 500 is a slip
        ("mouse", 0.03, "furosemide", "iv", 500.0),
        # mannitol: the highest on record is 2 g/kg (Plumb, dogs); 500 "g/kg" typed for mg/kg
        ("budgerigar", 0.035, "mannitol", "iv", 500.0),
    ],
)
def test_a_dose_far_above_anything_on_record_is_blocked_for_a_species_with_no_record(
    species_id, weight_kg, drug, route, dose
):
    p = plan(species_id, weight_kg, diuretics=((drug, dose, route, 0.0, 0.0),))
    assert found(p).get("DIURETIC_DOSE_FAR_ABOVE_RANGE") == "hard" and p.has_hard_limit
    assert "any species" in next(
        f.message for f in p.findings if f.code == "DIURETIC_DOSE_FAR_ABOVE_RANGE"
    )


def test_a_plausible_dose_with_no_record_stays_soft_and_says_what_the_course_shows():
    # 2 mg/kg furosemide in a mouse: within what is given to other species; no mouse range
    p = plan("mouse", 0.03, diuretics=(("furosemide", 2.0, "iv", 0.0, 0.0),))
    assert found(p).get("DIURETIC_NO_DOSE_ON_RECORD") == "soft" and not p.has_hard_limit
    said = next(f.message for f in p.findings if f.code == "DIURETIC_NO_DOSE_ON_RECORD")
    assert "cannot check it against a range" in said


def test_doses_that_add_up_within_a_day_are_blocked_and_close_ones_questioned():
    # a cat's furosemide IV: 0.5–5 mg/kg (Senior 2018). Five doses of 5 mg/kg within 24 min
    # are 25 mg/kg, more than 3× a day at the top single dose (diuretic_dose_hard_factor)
    hours = (0.0, 0.1, 0.2, 0.3, 0.4)
    p = plan("cat", 4.0, diuretics=tuple(("furosemide", 5.0, "iv", h, h) for h in hours))
    codes = found(p)
    assert codes.get("DIURETIC_DOSE_FAR_ABOVE_RANGE") == "hard"
    assert codes.get("DIURETIC_DOSES_CLOSE_TOGETHER") == "soft"
    # two doses 8 h apart (q8h, within Plumb's q8–24h) are neither
    spaced = plan("cat", 4.0, diuretics=(("furosemide", 2.0, "iv", 0.0, 0.0),
                                         ("furosemide", 2.0, "iv", 8.0, 8.0)))  # fmt: skip
    assert not {"DIURETIC_DOSE_FAR_ABOVE_RANGE", "DIURETIC_DOSES_CLOSE_TOGETHER"} & set(
        found(spaced)
    )


def test_infusions_running_together_are_judged_by_their_sum():
    # the dog's furosemide infusion on record: 1 mg/kg/h (acute kidney injury, Kirk)
    two = plan(diuretics=(("furosemide", 0.9, "cri", 0.0, 8.0),
                          ("furosemide", 0.9, "cri", 2.0, 8.0)))  # fmt: skip
    assert found(two).get("DIURETIC_DOSE_OUTSIDE_RANGE") == "soft"
    five = plan(diuretics=tuple(("furosemide", 0.99, "cri", float(h), 8.0) for h in range(5)))
    assert found(five).get("DIURETIC_DOSE_FAR_ABOVE_RANGE") == "hard"


# ---- the patient's state ------------------------------------------------------------------------
MANNITOL = (("mannitol", 0.5, "iv", 0.0, 0.0),)


def test_mannitol_in_anuria_is_blocked_and_in_oliguria_needs_a_test_dose():
    # Mannitol Injection USP label: contraindicated in well-established anuria; with marked
    # oliguria a test dose first (Plumb: 0.25–0.5 g/kg for oliguric kidney failure)
    oliguric = plan(renal_disease=True, renal_output="oliguric", diuretics=MANNITOL)
    assert found(oliguric).get("MANNITOL_IN_OLIGURIA") == "soft"
    assert "MANNITOL_IN_ANURIA" not in found(oliguric)
    none = plan(renal_disease=True, ins_and_outs_period_h=4.0, measured_outputs=((0.0, 0.0),),
                diuretics=MANNITOL)  # fmt: skip
    assert found(none).get("MANNITOL_IN_ANURIA") == "hard" and none.has_hard_limit
    low = plan(renal_disease=True, ins_and_outs_period_h=4.0, measured_outputs=((40.0, 0.0),),
               diuretics=MANNITOL)  # 0.5 mL/kg/h, under the dog's 1 mL/kg/h line  # fmt: skip
    assert found(low).get("MANNITOL_IN_OLIGURIA") == "soft"
    flowing = plan(renal_disease=True, ins_and_outs_period_h=4.0,
                   measured_outputs=((160.0, 0.0),), diuretics=MANNITOL)  # 2 mL/kg/h  # fmt: skip
    assert not {"MANNITOL_IN_OLIGURIA", "MANNITOL_IN_ANURIA"} & set(found(flowing))


@pytest.mark.parametrize(("percent", "code", "severity"),
                         [(4.0, None, None), (8.0, "MANNITOL_DEHYDRATED", "soft"),
                          (10.0, "MANNITOL_SEVERELY_DEHYDRATED", "hard")])  # fmt: skip
def test_mannitol_in_a_dehydrated_patient(percent, code, severity):
    # Mannitol Injection USP label: its diuresis "may obscure and intensify inadequate
    # hydration"; contraindicated in severe dehydration (DiBartola 2012: 10–12 % and more)
    codes = found(plan(dehydration_percent=percent, diuretics=MANNITOL))
    dehydration_codes = {c for c in codes if c.startswith("MANNITOL_") and "DEHYDRATED" in c}
    assert dehydration_codes == ({code} if code else set())
    if code:
        assert codes[code] == severity


def test_mannitol_with_heart_disease_needs_a_reason():
    # Mannitol Injection USP label: sudden ECF expansion may bring on congestive heart failure
    assert (
        found(plan(cardiac_disease=True, diuretics=MANNITOL)).get("MANNITOL_WITH_HEART_DISEASE")
        == "soft"
    )


def test_a_loop_diuretic_with_low_potassium_or_dehydration_needs_a_reason():
    # furosemide injection USP label 5.1: hypovolaemia, hypokalaemia; "excessive diuresis may
    # cause dehydration and blood volume reduction"
    furosemide = (("furosemide", 2.0, "iv", 0.0, 0.0),)
    low_k = plan(serum_k=2.5, diuretics=furosemide)
    assert found(low_k).get("DIURETIC_WITH_LOW_POTASSIUM") == "soft"
    assert "DIURETIC_WITH_LOW_POTASSIUM" not in found(plan(serum_k=4.0, diuretics=furosemide))
    dry = plan(dehydration_percent=8.0, diuretics=furosemide)
    assert found(dry).get("DIURETIC_WHILE_DEHYDRATED") == "soft"


def test_spironolactone_with_high_potassium_and_acetazolamide_with_acidosis():
    # pharmacology of the classes (common practice, no source): a potassium-sparing drug keeps
    # K; a carbonic-anhydrase inhibitor makes the urine carry bicarbonate away
    high_k = plan(serum_k=6.5, diuretics=(("spironolactone", 2.0, "po", 0.0, 0.0),))
    assert found(high_k).get("POTASSIUM_SPARING_WITH_HIGH_POTASSIUM") == "soft"
    acidotic = plan(serum_hco3=12.0, diuretics=(("acetazolamide", 5.0, "po", 0.0, 0.0),))
    assert found(acidotic).get("CARBONIC_ANHYDRASE_WITH_ACIDOSIS") == "soft"
    normal = plan(serum_hco3=22.0, diuretics=(("acetazolamide", 5.0, "po", 0.0, 0.0),))
    assert "CARBONIC_ANHYDRASE_WITH_ACIDOSIS" not in found(normal)


# ---- the table as a whole, over random plans ------------------------------------------------
SPECIES = ("dog", "cat", "rabbit", "ferret", "mouse", "mongolian_gerbil", "budgerigar",
           "bearded_dragon", "red_eared_slider")  # fmt: skip
WEIGHTS = {"dog": 20.0, "cat": 4.0, "rabbit": 2.0, "ferret": 1.0, "mouse": 0.03,
           "mongolian_gerbil": 0.065, "budgerigar": 0.035, "bearded_dragon": 0.35,
           "red_eared_slider": 0.8}  # fmt: skip
ROUTES = {d: diuretics.drug(d).routes for d in diuretics.load_diuretics()}


@st.composite
def doses(draw):
    drug = draw(st.sampled_from(sorted(ROUTES)))
    route = draw(st.sampled_from(ROUTES[drug]))
    top = max(r.dose_high for r in diuretics.drug(drug).rows if r.route == route)
    dose = top * draw(st.sampled_from([0.1, 0.5, 1.0, 2.0, 3.5, 10.0, 1000.0]))
    start = float(draw(st.integers(0, 47))) / 2
    end = start + float(draw(st.integers(1, 16))) if route == "cri" else start
    return (drug, round(dose, 6), route, start, end)


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(
    species_id=st.sampled_from(SPECIES),
    entered=st.lists(doses(), min_size=1, max_size=5),
    oliguric=st.booleans(),
    percent=st.sampled_from([0.0, 6.0, 12.0]),
)
def test_the_rules_never_let_a_slip_or_a_contraindication_through(
    species_id, entered, oliguric, percent
):
    """Over random doses (×0.1 to ×1000 the top of the range on record for the drug and
    route), species, kidneys and dehydration: every single dose more than the hard factor
    × the highest on record for its drug is blocked; mannitol with an oliguric kidney needs
    a test dose; any diuretic before a severe deficit is replaced is blocked; every finding
    is in words. Input the request refuses is refused in words."""
    try:
        p = plan(species_id, WEIGHTS[species_id], diuretics=tuple(entered),
                 renal_disease=oliguric, renal_output="oliguric" if oliguric else None,
                 dehydration_percent=percent)  # fmt: skip
    except InputError as exc:
        assert exc.message  # refused in words (a dose over 1000, twice at one hour …)
        event("refused by the request")
        return
    event("hard" if p.has_hard_limit else "planned")
    factor = diuretic_checks.hard_factor()
    codes = found(p)
    for drug, dose, route, _, _ in entered:
        highest = max(r.dose_high for r in diuretics.drug(drug).rows
                      if (r.route == "cri") == (route == "cri"))  # fmt: skip
        if dose > factor * highest:
            assert codes.get("DIURETIC_DOSE_FAR_ABOVE_RANGE") == "hard", (drug, dose, route)
    if oliguric and any(d[0] == "mannitol" for d in entered):
        assert codes.get("MANNITOL_IN_OLIGURIA") == "soft"
    # a dose given before the plan's replacement phases end meets a dehydrated patient
    rehydrated = max((ph.end_h for ph in p.phases if ph.kind == "replacement"), default=0.0)
    early = {d[0] for d in entered if d[3] < rehydrated - 1e-9}
    if percent >= 10 and "mannitol" in early:
        assert codes.get("MANNITOL_SEVERELY_DEHYDRATED") == "hard"
    if percent >= 10 and early - {"mannitol"}:
        assert codes.get("DIURETIC_SEVERELY_DEHYDRATED") == "hard"
    if percent >= 10 and early:
        assert p.has_hard_limit
    for f in p.findings:
        assert "_" not in f.message and f.code not in f.message


# ---- potassium entered by hand (not a diuretic, found beside them) -----------------------------
@pytest.mark.parametrize(("serum_k", "kcl", "said"), [(2.5, 0.0, True), (2.5, 60.0, False),
                                                      (4.0, 0.0, False), (3.4, 27.0, False),
                                                      (3.4, 20.0, True)])  # fmt: skip
def test_kcl_typed_below_the_scale_for_a_low_k_needs_a_reason(serum_k, kcl, said):
    # Côté 2020's scale: serum K 2.1–2.5 mmol/L calls for 60 mmol/L KCl, 3.1–3.5 for 28; a
    # bag typed with none leaves a low K falling. The bag's own K counts: lactated Ringer's
    # (the default fluid, 4 mmol/L K, USP) with 27 typed holds 31, above 28
    p = plan(serum_k=serum_k, kcl_mmol_per_l=kcl)
    assert (found(p).get("KCL_BELOW_SCALE_FOR_LOW_K") == "soft") is said


# ---- the second review's cases ---------------------------------------------------------------
def test_a_day_of_boluses_is_judged_against_the_top_single_dose_not_an_infusion_day():
    # dog furosemide IV 2–6 mg/kg (Plumb); 6 mg/kg every 2 h is 72 mg/kg a day, 12× the top
    # single dose (diuretic_dose_hard_factor 3) though a day at the 1 mg/kg/h infusion is 24
    every_2_h = plan(diuretics=tuple(("furosemide", 6.0, "iv", float(h), float(h))
                                     for h in range(0, 24, 2)))  # fmt: skip
    assert found(every_2_h).get("DIURETIC_DOSE_FAR_ABOVE_RANGE") == "hard"
    # 6 mg/kg every 8 h (18 mg/kg, 3× the top) stays unblocked
    every_8_h = plan(diuretics=tuple(("furosemide", 6.0, "iv", float(h), float(h))
                                     for h in (0, 8, 16)))  # fmt: skip
    assert "DIURETIC_DOSE_FAR_ABOVE_RANGE" not in found(every_8_h)


def test_a_route_with_no_record_is_judged_by_the_species_own_doses_by_other_routes():
    # budgerigar furosemide: 0.1667 mg/kg IM on record (Plumb, after Clubb 1986; lories are
    # easily overdosed): 29 mg/kg IV is a slip, not merely "no dose on record"
    bird = plan("budgerigar", 0.035, diuretics=(("furosemide", 29.0, "iv", 0.0, 0.0),))
    [far] = [f for f in bird.findings if f.code == "DIURETIC_DOSE_FAR_ABOVE_RANGE"]
    assert far.severity == "hard" and "budgerigar by IM" in far.message


def test_a_diuretic_given_after_the_deficit_is_replaced_meets_a_rehydrated_patient():
    # the label's concern is a body short of water: a dose after the plan's replacement
    # phases meets a rehydrated one (Mannitol Injection USP label; furosemide label 5.1)
    late = plan(dehydration_percent=10.0, replace_hours=12.0,
                diuretics=(("mannitol", 0.5, "iv", 20.0, 20.0),))  # fmt: skip
    assert not {"MANNITOL_SEVERELY_DEHYDRATED", "MANNITOL_DEHYDRATED"} & set(found(late))
    early = plan(dehydration_percent=12.0, diuretics=(("furosemide", 2.0, "iv", 0.0, 0.0),))
    assert found(early).get("DIURETIC_SEVERELY_DEHYDRATED") == "hard"


def test_a_loading_dose_and_its_infusion_are_not_an_overdose():
    # a cat on 0.66 mg/kg/h for a day with a 1 mg/kg IV load: judged apart (single doses
    # against the cat's 5 mg/kg top, the infusion against a day at the top rate on record)
    cat = plan("cat", 4.0, diuretics=(("furosemide", 1.0, "iv", 0.0, 0.0),
                                      ("furosemide", 0.66, "cri", 0.0, 24.0)))  # fmt: skip
    assert "DIURETIC_DOSE_FAR_ABOVE_RANGE" not in found(cat)


def test_spironolactone_with_no_urine_measured_is_said_in_true_words():
    anuric = plan(ins_and_outs_period_h=4.0, measured_outputs=((0.0, 0.0),), renal_disease=True,
                  diuretics=(("spironolactone", 2.0, "po", 0.0, 0.0),))  # fmt: skip
    [said] = [f for f in anuric.findings if f.code == "POTASSIUM_SPARING_WITH_HIGH_POTASSIUM"]
    assert "little or no urine" in said.message and "not entered" not in said.message


def test_a_loading_dose_at_an_infusions_start_is_not_judged_as_a_bolus():
    # Plumb: furosemide 0.66 mg/kg IV, then 0.66 mg/kg/h; Kirk: 1 mg/kg, then 1 mg/kg/h. The
    # load is an hour of the rate, below the 2–6 mg/kg bolus range, and is not "outside" it
    for rate in (0.66, 1.0):
        loaded = plan(diuretics=(("furosemide", rate, "iv", 0.0, 0.0),
                                 ("furosemide", rate, "cri", 0.0, 8.0)))  # fmt: skip
        assert "DIURETIC_DOSE_OUTSIDE_RANGE" not in found(loaded)
    alone = plan(diuretics=(("furosemide", 0.66, "iv", 0.0, 0.0),))  # no infusion: a bolus
    assert found(alone).get("DIURETIC_DOSE_OUTSIDE_RANGE") == "soft"
