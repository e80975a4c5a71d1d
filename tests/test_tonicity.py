"""One rule for tonicity words: a fluid against the species' own plasma osmolality.

Checks are against a published classification of the usual crystalloids: "IV Fluid
Safety", Hospital Pharmacy Technician's Letter (Therapeutic Research Center, 2016, updated
2025) — lactated Ringer's (275 mOsm/L) and 0.9 % NaCl (308) isosmotic/isotonic,
hypotonic below 250 mOsm/L, hypertonic from 375 mOsm/L, and 5 % dextrose (252 mOsm/L) "an
isosmotic solution that behaves like a hypotonic solution once administered". That
reference is written against human plasma (280–295 mOsm/kg); our band (±20 %, common
practice, no source) is applied to each species' own plasma osmolality.
"""

from __future__ import annotations

from datetime import time

import pytest

from vetfluid.planning import safety
from vetfluid.planning.ledger import Ledger
from vetfluid.planning.plan import PlanRequest, build_plan
from vetfluid.tables.fluids import (
    Fluid,
    SoluteAmount,
    fluid,
    load_solutes,
    tonicity,
    tonicity_band_text,
    tonicity_words,
)
from vetfluid.tables.limits import limit
from vetfluid.tables.species import load_table


def _plasma(species_id: str) -> float:
    return load_table().value(species_id, "plasma_osmolality_mosm_per_kg").number


def _every_species() -> list[tuple[str, float]]:
    table = load_table()
    return [(sid, _plasma(sid)) for sid in table.species_ids()]


def _saline(percent: float) -> Fluid:
    """x % NaCl made up from the library's sodium chloride (g/L = 10 × %)."""
    return Fluid(
        fluid_id=f"nacl_{percent:g}_test",
        name=f"{percent:g}% sodium chloride",
        kind="crystalloid",
        solutes=(SoluteAmount(solute=load_solutes()["nacl"], g_per_l=10 * percent),),
        basis="derived",
        note="made up for the test",
    )


def test_the_band_is_read_from_the_limits_table_not_a_second_default():
    # one rule: the classification without an explicit band uses safety_limits.csv
    band = limit("tonicity_band_fraction").value
    assert tonicity(fluid("nacl_0_9"), plasma_osmolality_mosm_per_kg=300).band_fraction == band


def test_the_band_is_twenty_percent():
    # ±20 %: common practice, no source — the narrowest round band in which lactated
    # Ringer's (273 mOsm/L) reads isotonic against every plasma on record (≤ 327 mOsm/kg,
    # Hispaniolan Amazon, Beaufrère 2011) while 0.45 % NaCl (154) stays hypotonic
    assert limit("tonicity_band_fraction").value == pytest.approx(0.2)


@pytest.mark.reference
def test_lactated_ringers_is_isotonic_for_dog_cat_and_birds_under_one_rule():
    # TRC "IV Fluid Safety": lactated Ringer's is listed isosmotic/isotonic
    for species_id in ("dog", "cat", "budgerigar", "african_grey", "hispaniolan_amazon"):
        plasma = _plasma(species_id)
        tone = tonicity(fluid("lactated_ringers"), plasma_osmolality_mosm_per_kg=plasma)
        assert (tone.in_vitro_class, tone.effective_class) == ("isotonic", "isotonic"), species_id
        assert tonicity_words(tone) == "isotonic", species_id


@pytest.mark.reference
def test_replacement_crystalloids_read_isotonic_for_every_species_on_record():
    # TRC "IV Fluid Safety": 0.9 % NaCl and lactated Ringer's isosmotic/isotonic
    for fluid_id in ("lactated_ringers", "nacl_0_9", "balanced_acetate_gluconate"):
        for species_id, plasma in _every_species():
            tone = tonicity(fluid(fluid_id), plasma_osmolality_mosm_per_kg=plasma)
            assert tonicity_words(tone) == "isotonic", (fluid_id, species_id)


@pytest.mark.reference
def test_half_strength_saline_is_hypotonic_for_every_species():
    # TRC "IV Fluid Safety": below 250 mOsm/L is hypotonic; 0.45 % NaCl is 154 mOsm/L
    for species_id, plasma in _every_species():
        tone = tonicity(fluid("nacl_0_45"), plasma_osmolality_mosm_per_kg=plasma)
        assert tonicity_words(tone) == "hypotonic", species_id


@pytest.mark.reference
@pytest.mark.parametrize("percent", [3.0, 7.2])
def test_three_and_seven_point_two_percent_saline_are_hypertonic(percent):
    # TRC "IV Fluid Safety": from 375 mOsm/L hypertonic; 3 % NaCl ≈ 1027, 7.2 % ≈ 2464 mOsm/L
    made = _saline(percent)
    for species_id, plasma in _every_species():
        tone = tonicity(made, plasma_osmolality_mosm_per_kg=plasma)
        assert tonicity_words(tone) == "hypertonic", species_id
    library = tonicity(fluid("nacl_7_2"), plasma_osmolality_mosm_per_kg=_plasma("cat"))
    assert tonicity_words(library) == "hypertonic"


@pytest.mark.reference
@pytest.mark.parametrize("species_id", ["dog", "cat"])
def test_five_percent_dextrose_is_isosmotic_in_the_bag_and_hypotonic_in_the_body(species_id):
    # TRC "IV Fluid Safety": 5 % dextrose (252 mOsm/L) is "an isosmotic solution that
    # behaves like a hypotonic solution once administered" (glucose is taken up and burnt)
    tone = tonicity(fluid("dextrose_5"), plasma_osmolality_mosm_per_kg=_plasma(species_id))
    assert (tone.in_vitro_class, tone.effective_class) == ("isotonic", "hypotonic")
    words = tonicity_words(tone)
    assert words.startswith("iso-osmotic in the bag, hypotonic in the body")
    assert "glucose" in words


def test_five_percent_dextrose_is_hypotonic_in_the_body_for_every_species():
    # whatever the bag reads against a species' plasma, its glucose leaves free water
    for species_id, plasma in _every_species():
        tone = tonicity(fluid("dextrose_5"), plasma_osmolality_mosm_per_kg=plasma)
        words = tonicity_words(tone)
        assert "in the bag" in words and "hypotonic in the body" in words, species_id
        assert "isotonic" not in words, species_id


def test_fifty_percent_dextrose_is_hyperosmotic_in_the_bag_and_hypotonic_in_the_body():
    # 2523 mOsm/L in the bag; nothing of it stays an effective osmole once burnt
    tone = tonicity(fluid("dextrose_50"), plasma_osmolality_mosm_per_kg=300)
    assert tonicity_words(tone).startswith("hyperosmotic in the bag, hypotonic in the body")


def test_the_band_text_names_the_band_the_plasma_and_its_basis():
    tone = tonicity(fluid("lactated_ringers"), plasma_osmolality_mosm_per_kg=310)
    text = tonicity_band_text(tone)
    assert "±20 %" in text and "310 mOsm/kg" in text
    assert "248–372 mOsm/L" in text  # 310 × 0.8 and × 1.2
    assert "common practice, no source" in text
    assert "glucose" not in text  # nothing of lactated Ringer's is burnt away
    dextrose = tonicity_band_text(tonicity(fluid("dextrose_5"), plasma_osmolality_mosm_per_kg=310))
    assert "glucose" in dextrose


def test_the_band_text_is_short_enough_to_hover():
    tone = tonicity(fluid("dextrose_5"), plasma_osmolality_mosm_per_kg=300)
    assert len(tonicity_band_text(tone)) < 450


def test_a_cat_plan_on_lactated_ringers_reads_isotonic():
    # the plan's totals, the CLI and the window read plan.tonicity: one rule for all
    plan = build_plan(PlanRequest(species_id="cat", weight_kg=4, start_time=time(8, 0)))
    assert tonicity_words(plan.tonicity) == "isotonic"


def test_the_maintenance_note_words_tonicity_by_the_rule_and_not_as_near_plasma():
    cat_plasma = _plasma("cat")
    tone = tonicity(fluid("lactated_ringers"), plasma_osmolality_mosm_per_kg=cat_plasma)
    ledger = Ledger(load_table(), "cat", weight_kg=4)
    safety.check_isotonic_maintenance(
        ledger, fluid_name="lactated Ringer's", fluid_na=130.0, running_h=36,
        maintenance_h=12, tonicity=tone,
    )  # fmt: skip
    (note,) = [f for f in ledger.findings if f.code == "ISOTONIC_FOR_MAINTENANCE"]
    assert "near plasma" not in note.message
    assert "isotonic against this patient's plasma" in note.message
    bare = Ledger(load_table(), "cat", weight_kg=4)
    safety.check_isotonic_maintenance(
        bare, fluid_name="lactated Ringer's", fluid_na=130.0, running_h=36, maintenance_h=12
    )
    (said,) = [f for f in bare.findings if f.code == "ISOTONIC_FOR_MAINTENANCE"]
    assert "near plasma" not in said.message and "tonic" not in said.message.split(";")[0]


def test_the_window_words_tonicity_by_the_rule_with_the_band_on_hover(qtbot):
    from ui.planning.plan_view import PlanSummary, fluid_tooltip
    from ui.planning.session import PlanSession

    request = PlanRequest(species_id="cat", weight_kg=4, start_time=time(8, 0))
    plan = build_plan(request)
    session = PlanSession(request)
    summary = PlanSummary(session)
    qtbot.addWidget(summary)
    summary.show_plan(plan)
    label = summary.values["fluid"]
    assert label.text().endswith("; isotonic")
    assert label.toolTip() == tonicity_band_text(plan.tonicity)
    tip = fluid_tooltip("dextrose_5", plan)
    d5 = tonicity(fluid("dextrose_5"), plasma_osmolality_mosm_per_kg=_plasma("cat"))
    assert tonicity_words(d5) in tip and tonicity_band_text(d5) in tip


def test_the_plans_tonicity_words_read_the_bag_with_its_additives():
    # Review finding: lactated Ringer's + 5 % dextrose by mouth was called "isotonic" on the
    # Fluid line while its 498 mOsm/L (1.56 × plasma) was blocked for the route. One
    # reading: in the bag every particle counts; in the body glucose is burnt (the
    # classification of Hospital Pharmacy Technician's Letter 2016, as in fluids.tonicity).
    from vetfluid.planning.plan import PlanRequest, build_plan
    from vetfluid.tables.fluids import tonicity_words

    plan = build_plan(PlanRequest(species_id="pigeon", weight_kg=0.4, route="oral",
                                  dextrose_percent=5))  # fmt: skip
    words = tonicity_words(plan.tonicity)
    assert words.startswith("hyperosmotic in the bag")
    assert any(f.code == "ROUTE_OSMOLARITY_LIMIT" for f in plan.findings)
