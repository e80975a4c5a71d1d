"""The independent safety oracle (issue 16): every plan past a physiological bound is
blocked (a hard finding) or flagged (a soft one) by a finding that says so, or refused
outright.

Requests are generated across every species in the table, weights across and far beyond
each species' range (g/kg slips included), every library fluid (concentrates, hypertonic
saline and the colloid too), every route and delivery, boluses, replacement periods,
dehydration, added KCl and dextrose, serum Na and K, and the patient flags. Each plan
that builds is checked by ``tests/oracle_bounds.py`` with its own arithmetic (never the
plan builder's checks); the bounds and their sources are written there.

The ordinary run checks 300 plans, the long run 10,000 (refused requests come on top):

    python3 dev.py test tests/test_safety_oracle.py -m oracle

Both are derandomised, so a run gives the same plans on every machine.
"""

from __future__ import annotations

import dataclasses
from types import SimpleNamespace

import oracle_bounds as oracle
import pytest
from hypothesis import HealthCheck, assume, event, given, settings
from hypothesis import strategies as st
from test_hazard_log import code_in_core

from vetfluid.common.errors import InputError, LimitExceeded
from vetfluid.common.findings import Finding
from vetfluid.planning.plan import DEVICES, ROUTES, PlanRequest, build_plan
from vetfluid.planning.schedule import Phase
from vetfluid.tables import fluids
from vetfluid.tables.species import MAINTENANCE_METHODS, load_table

TABLE = load_table()
SPECIES = sorted(s for s in TABLE.species_ids() if TABLE.species(s).rank == "species")
FLUIDS = sorted(fluids.load_fluids())
FAST_PLANS = 300  # plans built and checked by the ordinary run (refused requests on top)
LONG_PLANS = 10_000  # plans built and checked by the long run (refused requests on top)
REQUEST_FIELDS = {f.name for f in dataclasses.fields(PlanRequest)}


# ---- the requests -----------------------------------------------------------------------------
@st.composite
def weights(draw: st.DrawFn, species_id: str) -> float:
    """Within the species' range, around it, far beyond it, and the g/kg slips."""
    value = TABLE.value(species_id, "body_weight_kg")
    low = value.low if value.low is not None else value.number
    high = value.high if value.high is not None else value.number
    return draw(
        st.one_of(
            st.floats(low, high),
            st.floats(low / 5, high * 5),
            st.floats(low / 50, high * 50),
            st.sampled_from([value.number * 1000, value.number / 1000, high * 1000, low / 1000]),
        )
    )


def maybe(strategy: st.SearchStrategy) -> st.SearchStrategy:
    return st.one_of(st.none(), strategy)


LINE_DEVICES = ("pump", "gravity", "syringe")


@st.composite
def routes_and_devices(draw: st.DrawFn) -> tuple[str | None, str | None]:
    """Mostly a delivery that suits the route (a line for IV/IO, divided doses elsewhere),
    sometimes any pairing (refused when it does not fit), sometimes the plan's default."""
    route = draw(maybe(st.sampled_from(ROUTES)))
    if route is None:  # the plan chooses: a line for a big patient, divided doses for a small one
        return None, draw(st.sampled_from([*[None] * 6, *DEVICES]))
    fitting = st.sampled_from(LINE_DEVICES) if route in oracle.LINE_ROUTES else st.just("divided")
    device = draw(st.one_of(st.none(), fitting, fitting, fitting, st.sampled_from(DEVICES)))
    return route, device


@st.composite
def requests(draw: st.DrawFn) -> dict:
    """The keyword arguments of one PlanRequest (a dict, so a refused one is still shown)."""
    species_id = draw(st.sampled_from(SPECIES))
    route, device = draw(routes_and_devices())
    kwargs = {
        "species_id": species_id,
        "weight_kg": draw(weights(species_id)),
        "fluid_id": draw(st.sampled_from(FLUIDS)),
        "route": route,
        "device": device,
        # a gravity drip needs its set's drop factor; leaving it out is refused
        "drop_factor": draw(st.sampled_from([10, 15, 20, 60, 10, 15, 20, 60, None]))
        if device in ("gravity", None)
        else None,
        "resuscitation_boluses": draw(st.integers(0, 10)),
        "replace_hours": draw(st.floats(1, 96)),
        "dehydration_percent": draw(maybe(st.floats(0, 15))),
        "losses_ml_per_day": draw(st.one_of(st.just(0.0), st.floats(0, 100))),
        "maintenance_method": draw(st.sampled_from([None] * 4 + list(MAINTENANCE_METHODS))),
        "body_temp_c": draw(maybe(st.floats(15, 42))),
        "kcl_mmol_per_l": draw(
            maybe(st.one_of(st.floats(0, 200), st.sampled_from([20, 28, 35, 40, 60, 80])))
        ),
        "dextrose_percent": draw(st.one_of(st.just(0.0), st.floats(0, 9))),
        "serum_na": draw(maybe(st.floats(100, 200))),
        "serum_k": draw(maybe(st.floats(1.5, 9))),
        "max_na_change_per_h": draw(maybe(st.floats(0.1, 2))),
        "cardiac_disease": draw(st.booleans()),
        "renal_disease": draw(st.booleans()),
        "anaesthesia": draw(st.booleans()),
        "neonate": draw(st.booleans()),
        "syringe_size_ml": draw(st.sampled_from([60.0, 20.0, 10.0])),
        # ins and outs where the species has an insensible loss on record (else refused)
        "ins_and_outs_period_h": draw(st.sampled_from([None] * 6 + [2.0, 4.0, 6.0]))
        if TABLE.get(species_id, "insensible_loss_ml_per_kg_day") is not None or draw(st.booleans())
        else None,
    }
    if "bolus_fluid_id" in REQUEST_FIELDS:  # a bolus fluid of its own, where requests take one
        kwargs["bolus_fluid_id"] = draw(maybe(st.sampled_from(FLUIDS)))
    return kwargs


# ---- the check ---------------------------------------------------------------------------------
def _unanswered_text(breach: oracle.Breach, plan, request) -> str:  # noqa: ANN001
    findings = [(f.severity, f.code) for f in plan.findings]
    return (
        f"{breach.rule}: {breach.detail}; needs one of {', '.join(breach.codes)} at least "
        f"{breach.needs}; the plan has {findings or 'none'}; request {request}"
    )


def bag_agrees(request: PlanRequest, plan) -> bool:  # noqa: ANN001
    """Na, K and osmolarity of the plan's bag and bolus fluid within 0.5 % of the oracle's own
    mixing (or 0.05 mmol/L where a fluid holds next to none)."""
    carrier = next((p for p in plan.phases if p.kind != "resuscitation"), None)
    pairs = [(plan.bolus_fluid, oracle.bolus_fluid_id(request), None)]
    if carrier is not None:
        pairs.append((plan.bag, request.fluid_id, carrier))
    for shown, fluid_id, phase in pairs:
        mine = oracle.bag_composition(
            fluid_id,
            kcl_mmol_per_l=phase.kcl_mmol_per_l if phase else 0.0,
            dextrose_percent=request.dextrose_percent if phase else 0.0,
        )
        theirs = fluids.composition(shown)
        for ours, printed in (
            (mine.na_mmol_per_l, theirs.na_mmol_per_l),
            (mine.k_mmol_per_l, theirs.k_mmol_per_l),
            (mine.osmolarity_mosm_per_l, theirs.osmolarity_mosm_per_l),
        ):
            if abs(ours - printed) > max(0.005 * abs(ours), 0.05):
                return False
    return True


def check_plan(kwargs: dict) -> bool:
    """Build the plan; a refusal is a block. Every bound the plan passes must be answered
    by one of the findings that bound names (oracle.RULES), at least as severe as it needs.
    Returns whether a plan was built.

    One assertion per bound, each on its own line, so hypothesis reports (and shrinks)
    each kind of unflagged plan as a failure of its own."""
    try:
        request = PlanRequest(**kwargs)
        plan = build_plan(request, TABLE)
    except (InputError, LimitExceeded) as exc:
        event(f"refused ({type(exc).__name__}: {exc.field})")
        return False  # a refusal blocks the plan, as a hard finding would
    event("built")
    # the oracle mixes the bag itself; the bag the plan prints must be that bag
    assert bag_agrees(request, plan), f"the plan's bag {plan.bag.name} is not the bag mixed"
    found = oracle.breaches(request, plan, TABLE)
    for breach in found:
        event(f"past a bound: {breach.rule}")
    open_ = {b.rule: b for b in found if not oracle.answered(plan, b)}

    def why(rule: str) -> str:
        return _unanswered_text(open_[rule], plan, request)

    assert "weight_unit_slip" not in open_, why("weight_unit_slip")
    assert "weight_outside_range" not in open_, why("weight_outside_range")
    assert "concentrate_as_bag" not in open_, why("concentrate_as_bag")
    assert "hypertonic_as_bag" not in open_, why("hypertonic_as_bag")
    assert "concentrate_as_bolus" not in open_, why("concentrate_as_bolus")
    assert "bolus_leaves_ecf" not in open_, why("bolus_leaves_ecf")
    assert "hypertonic_bolus_dose" not in open_, why("hypertonic_bolus_dose")
    assert "hypertonic_bolus_fast" not in open_, why("hypertonic_bolus_fast")
    assert "potassium_rate" not in open_, why("potassium_rate")
    assert "sc_potassium" not in open_, why("sc_potassium")
    assert "kcl_with_high_serum_k" not in open_, why("kcl_with_high_serum_k")
    assert "sodium_change" not in open_, why("sodium_change")
    assert "sodium_change_during_boluses" not in open_, why("sodium_change_during_boluses")
    assert "sodium_change_assumed_normal" not in open_, why("sodium_change_assumed_normal")
    assert "hourly_volume" not in open_, why("hourly_volume")
    assert "not_for_extravascular" not in open_, why("not_for_extravascular")
    assert "peripheral_osmolarity" not in open_, why("peripheral_osmolarity")
    assert "peripheral_osmolarity_bolus" not in open_, why("peripheral_osmolarity_bolus")
    assert "site_volume" not in open_, why("site_volume")
    assert "dose_volume" not in open_, why("dose_volume")
    assert "absurd_sites" not in open_, why("absurd_sites")
    assert "site_limit_unknown" not in open_, why("site_limit_unknown")
    assert "colloid_daily" not in open_, why("colloid_daily")
    assert "anaesthesia_rate" not in open_, why("anaesthesia_rate")
    assert not open_, why(next(iter(open_)))  # a bound added to the oracle but not above
    return True


_SETTINGS = {
    "deadline": None,
    "derandomize": True,  # the same plans on every run and machine (CI is reproducible)
    "database": None,
    "suppress_health_check": [HealthCheck.too_slow, HealthCheck.filter_too_much],
}


@settings(max_examples=FAST_PLANS, **_SETTINGS)
@given(requests())
def test_no_plan_past_a_bound_goes_unflagged(kwargs):
    # a refused request is a block, checked (no crash) but not counted among the plans
    assume(check_plan(kwargs))


@pytest.mark.oracle
@pytest.mark.timeout(3600)
def test_no_plan_past_a_bound_goes_unflagged_long_run(request):
    """LONG_PLANS plans built and checked; refused requests come on top."""
    if "oracle" not in (request.config.getoption("markexpr") or ""):
        pytest.skip("the long oracle run: pytest -m oracle tests/test_safety_oracle.py")
    built = []

    @settings(max_examples=LONG_PLANS, **_SETTINGS)
    @given(requests())
    def every_plan(kwargs):
        assume(check_plan(kwargs))  # as above: LONG_PLANS plans, refusals on top
        built.append(True)

    every_plan()
    assert len(built) >= LONG_PLANS


# ---- the oracle itself against worked examples and the hazards the issue reproduced ---------
# These give the oracle phases written by hand (the plans the issue reproduced), so they test
# the oracle's arithmetic, whatever the plan builder does today.
def _phase(kind: str, start_h: float, end_h: float, *, route: str = "iv", **figures) -> Phase:
    if "rate_ml_per_h" in figures:
        volume = figures["rate_ml_per_h"] * (end_h - start_h)
        return Phase(kind=kind, mode="continuous", start_h=start_h, end_h=end_h,
                     volume_ml=volume, route=route, **figures)  # fmt: skip
    volume = figures["dose_ml"] * figures["doses"]
    return Phase(kind=kind, mode="intermittent", start_h=start_h, end_h=end_h, volume_ml=volume,
                 route=route, **figures)  # fmt: skip


def _rules(phases: list[Phase], **request) -> set[str]:
    """The bounds a plan made of these phases passes, for this request."""
    plan = SimpleNamespace(phases=tuple(phases), findings=())
    return {b.rule for b in oracle.breaches(PlanRequest(**request), plan, TABLE)}


DOG = {"species_id": "dog", "weight_kg": 20.0}
CAT = {"species_id": "cat", "weight_kg": 4.0}


@pytest.mark.reference
def test_sodium_change_general_form_is_the_one_litre_formula_at_one_litre():
    # Adrogué & Madias, N Engl J Med 2000: change per litre = (Na_inf + K_inf − Na)/(TBW + 1).
    # 0.45 % NaCl (77) into a 60 kg patient (TBW 0.5 × 60 = 30 L) at Na 160: −83/31.
    assert oracle.sodium_change(
        serum_na=160, litres=1.0, infusate_na_plus_k=77, tbw_l=30
    ) == pytest.approx(-83 / 31)
    # Chen et al., Kidney360 2021: for any volume V the change is V·(…)/(TBW + V); scaling
    # the one-litre change by V misjudges a small patient by (TBW + 1)/(TBW + V).
    tbw = 0.6 * 0.035  # a 35 g budgerigar
    exact = oracle.sodium_change(serum_na=150, litres=0.0029, infusate_na_plus_k=0, tbw_l=tbw)
    linear = 0.0029 * (0 - 150) / (tbw + 1)
    assert exact / linear == pytest.approx((tbw + 1) / (tbw + 0.0029))


@pytest.mark.reference
def test_bag_mixing_matches_the_labels():
    # Labels (USP): 0.9 % NaCl Na 154 mmol/L, 308 mOsm/L; KCl concentrate 2 mEq/mL, so
    # 20 mmol in a litre adds 10 mL: Na 154/1.010, K 20/1.010.
    mix = oracle.bag_composition("nacl_0_9", kcl_mmol_per_l=20, dextrose_percent=0)
    assert mix.na_mmol_per_l == pytest.approx(154 / 1.010, rel=2e-3)
    assert mix.k_mmol_per_l == pytest.approx(20 / 1.010, rel=2e-3)
    # 5 % dextrose made from 50 %: 111 mL into the litre, 50 g hydrous/L in the whole; its
    # glucose is no effective osmole, so the salt's 308 mOsm/L is diluted by 1.111
    dex = oracle.bag_composition("nacl_0_9", kcl_mmol_per_l=0, dextrose_percent=5)
    assert dex.dextrose_g_per_l * 198.17 / 180.16 == pytest.approx(50, rel=2e-3)
    assert dex.effective_mosm_per_l == pytest.approx(308 / 1.1111, rel=2e-3)


def test_a_textbook_plan_passes_no_bound():
    # Davis 2013: a 20 kg dog, 7 % dehydrated, lactated Ringer's over 12 h, by pump, and the
    # plan the builder makes of it.
    request = PlanRequest(**DOG, dehydration_percent=7, replace_hours=12, serum_na=145,
                          serum_k=4)  # fmt: skip
    assert not oracle.breaches(request, build_plan(request, TABLE), TABLE)
    # the same by hand: 1400 mL over 12 h + 132·20^0.75 mL/day maintenance
    rate = 1400 / 12 + 132 * 20**0.75 / 24
    phases = [_phase("replacement", 0, 12, rate_ml_per_h=rate),
              _phase("maintenance", 12, 24, rate_ml_per_h=132 * 20**0.75 / 24)]  # fmt: skip
    assert not _rules(phases, **DOG, serum_na=145)


def test_potassium_ceiling():
    # Côté 2020 scale: serum K < 2.0 → 80 mEq/L at most 6 mL/kg/h, 0.48 mmol/kg/h in 0.9 %
    # NaCl: inside the 0.5 ceiling. 40 mEq/L at 18 mL/kg/h (0.7 mmol/kg/h) is past it.
    at_scale = [_phase("replacement", 0, 24, rate_ml_per_h=6 * 20, kcl_mmol_per_l=80)]
    assert "potassium_rate" not in _rules(at_scale, **DOG, fluid_id="nacl_0_9")
    past = [_phase("replacement", 0, 24, rate_ml_per_h=18 * 20, kcl_mmol_per_l=40)]
    assert "potassium_rate" in _rules(past, **DOG, fluid_id="nacl_0_9")


@pytest.mark.parametrize(
    ("request_", "phases", "rule"),
    [
        # hazard 1: KCl concentrate as the bag of a 20 kg dog, 8 %: ≈ 11.9 mmol/kg/h of K
        (
            {**DOG, "fluid_id": "kcl_2_meq_per_ml"},
            [_phase("replacement", 0, 24, rate_ml_per_h=118.7)],
            "concentrate_as_bag",
        ),
        (
            {**DOG, "fluid_id": "kcl_2_meq_per_ml"},
            [_phase("replacement", 0, 24, rate_ml_per_h=118.7)],
            "potassium_rate",
        ),
        # hazard 1: 2.8 L of 50 % dextrose, of 7.2 % NaCl
        (
            {**DOG, "fluid_id": "dextrose_50"},
            [_phase("replacement", 0, 24, rate_ml_per_h=118.7)],
            "concentrate_as_bag",
        ),
        (
            {**DOG, "fluid_id": "nacl_7_2"},
            [_phase("replacement", 0, 24, rate_ml_per_h=118.7)],
            "hypertonic_as_bag",
        ),
        # hazard 1: "Bolus 300 mL of potassium chloride concentrate over 15 min"
        (
            {**DOG, "fluid_id": "kcl_2_meq_per_ml"},
            [_phase("resuscitation", 0, 0.25, rate_ml_per_h=1200)],
            "concentrate_as_bolus",
        ),
        # hazard 1: 5 % dextrose as a shock bolus
        (
            {**DOG, "fluid_id": "dextrose_5"},
            [_phase("resuscitation", 0, 0.25, rate_ml_per_h=1200)],
            "bolus_leaves_ecf",
        ),
        # 15 mL/kg of 7.2 % NaCl, over 15 min, then over 2 min: dog 4–7 mL/kg over ≥ 5 min
        (
            {**DOG, "fluid_id": "nacl_7_2"},
            [_phase("resuscitation", 0, 0.25, rate_ml_per_h=1200)],
            "hypertonic_bolus_dose",
        ),
        (
            {**DOG, "fluid_id": "nacl_7_2"},
            [_phase("resuscitation", 0, 2 / 60, rate_ml_per_h=80 * 30)],
            "hypertonic_bolus_fast",
        ),
        # hazard 3: SC fluid at 80 mEq/L K (DiBartola: 30–35 mEq/L)
        (
            CAT,
            [
                _phase(
                    "maintenance",
                    0,
                    24,
                    route="sc",
                    dose_ml=40,
                    doses=3,
                    interval_h=8,
                    sites_per_dose=4,
                    ml_per_site=10,
                    kcl_mmol_per_l=80,
                )
            ],
            "sc_potassium",
        ),
        # hazard 3: KCl for a cat at serum K 8.5
        (
            {**CAT, "serum_k": 8.5},
            [_phase("maintenance", 0, 24, rate_ml_per_h=10, kcl_mmol_per_l=20)],
            "kcl_with_high_serum_k",
        ),
        # hazard 9: 489 mL SC in 1 h for a 4 kg cat, 12 %
        (
            CAT,
            [
                _phase(
                    "replacement",
                    0,
                    1,
                    route="sc",
                    dose_ml=489,
                    doses=1,
                    interval_h=1,
                    sites_per_dose=4,
                    ml_per_site=122.25,
                )
            ],
            "hourly_volume",
        ),
        (
            CAT,
            [
                _phase(
                    "replacement",
                    0,
                    1,
                    route="sc",
                    dose_ml=489,
                    doses=1,
                    interval_h=1,
                    sites_per_dose=4,
                    ml_per_site=122.25,
                )
            ],
            "site_volume",
        ),
        # hazard 9: a 30 g mouse, 1,000,000 mL SC in 3,333,334 sites
        (
            {"species_id": "mouse", "weight_kg": 0.03},
            [
                _phase(
                    "replacement",
                    0,
                    1,
                    route="sc",
                    dose_ml=1e6,
                    doses=1,
                    interval_h=1,
                    sites_per_dose=3_333_334,
                    ml_per_site=0.3,
                )
            ],
            "absurd_sites",
        ),
        # hazard 2: 2.9 mL/h of 5 % dextrose for a 35 g budgerigar
        (
            {
                "species_id": "budgerigar",
                "weight_kg": 0.035,
                "fluid_id": "dextrose_5",
                "serum_na": 150,
            },
            [_phase("maintenance", 0, 24, rate_ml_per_h=2.9)],
            "sodium_change",
        ),
        # hazard 2: a 4 kg cat at Na 175 on 5 % dextrose whose Na falls 0.63 mmol/L/h
        # (TBW 2.4 L; 12 mL/h in, 3.3 mL/h of insensible water out, 20 mL/kg/day, Côté
        # 2020: 175·2.4/2.4087 − 175)
        (
            {**CAT, "fluid_id": "dextrose_5", "serum_na": 175},
            [_phase("maintenance", 0, 24, rate_ml_per_h=12)],
            "sodium_change",
        ),
        # the g/kg slip: a 20 kg dog entered as 0.02 kg
        (
            {"species_id": "dog", "weight_kg": 0.02},
            [_phase("maintenance", 0, 24, rate_ml_per_h=0.1)],
            "weight_unit_slip",
        ),
        # SC: dextrose, and a fluid twice plasma
        (
            {**CAT, "fluid_id": "nacl_0_45_dextrose_2_5"},
            [
                _phase(
                    "maintenance",
                    0,
                    24,
                    route="sc",
                    dose_ml=20,
                    doses=3,
                    interval_h=8,
                    sites_per_dose=1,
                    ml_per_site=20,
                )
            ],
            "not_for_extravascular",
        ),
        # 9 % dextrose in lactated Ringer's (≈ 730 mOsm/L) into a peripheral vein
        (
            {**DOG, "dextrose_percent": 9},
            [_phase("maintenance", 0, 24, rate_ml_per_h=50)],
            "peripheral_osmolarity",
        ),
        # 4 mL/kg of 7.2 % NaCl as the bolus (label: 2464 mOsm/L) into a peripheral vein, and
        # the bag after it within 600 mOsm/L: the bolus' rule, not the bag's
        (  # 50 % dextrose (about 2500 mOsm/L) as a bolus into a peripheral vein; hypertonic
            # saline's own small dose is exempt (it has dose and time bounds of its own)
            {**DOG, "bolus_fluid_id": "dextrose_50"},
            [
                _phase("resuscitation", 0, 0.25, rate_ml_per_h=320),
                _phase("maintenance", 0.25, 24, rate_ml_per_h=50),
            ],
            "peripheral_osmolarity_bolus",
        ),
        # a 4 kg cat at Na 175 given 20 mL/kg of lactated Ringer's (Na + K 134) in 15 min:
        # Na falls 0.08·(134 − 175)/(2.4 + 0.08) = 1.3 mmol/L while the bolus runs
        (
            {**CAT, "serum_na": 175},
            [
                _phase("resuscitation", 0, 0.25, rate_ml_per_h=320),
                _phase("maintenance", 0.25, 24, rate_ml_per_h=0.1),
            ],
            "sodium_change_during_boluses",
        ),
        # hydroxyethyl starch: 40 mL/kg in a day against about 20
        (
            {**DOG, "fluid_id": "hes_130_0_4_6"},
            [_phase("maintenance", 0, 24, rate_ml_per_h=40 * 20 / 24)],
            "colloid_daily",
        ),
    ],  # fmt: skip
)
def test_the_oracle_sees_each_hazard(request_, phases, rule):
    assert rule in _rules(phases, **request_)


def test_a_bolus_and_the_fluids_after_it_are_separate_bounds():
    # each has its own finding, so a finding about the boluses must not answer the bag's
    # bound: 50 % dextrose (about 2500 mOsm/L) as the bolus, lactated Ringer's (273 mOsm/L)
    # after it
    osmolarity = _rules(
        [_phase("resuscitation", 0, 0.25, rate_ml_per_h=320),
         _phase("maintenance", 0.25, 24, rate_ml_per_h=50)],
        **DOG, bolus_fluid_id="dextrose_50",
    )  # fmt: skip
    assert "peripheral_osmolarity_bolus" in osmolarity
    assert "peripheral_osmolarity" not in osmolarity
    # Na 175 in a 4 kg cat (TBW 2.4 L): 20 mL/kg of lactated Ringer's in 15 min moves it
    # 1.3 mmol/L; 0.1 mL/h after it next to nothing
    sodium = _rules(
        [_phase("resuscitation", 0, 0.25, rate_ml_per_h=320),
         _phase("maintenance", 0.25, 24, rate_ml_per_h=0.1)],
        **CAT, serum_na=175,
    )  # fmt: skip
    assert "sodium_change_during_boluses" in sodium
    assert "sodium_change" not in sodium


def _finding(code: str, severity: str = "hard") -> Finding:
    return Finding(severity=severity, code=code, message="x")


# 40 mmol/L K in 0.9 % NaCl at 18 mL/kg/h for a 20 kg dog: 0.7 mmol/kg/h, past Côté 2020's
# 0.5 mmol/kg/h ceiling (a hard bound)
K_PAST_CEILING = (_phase("replacement", 0, 24, rate_ml_per_h=18 * 20, kcl_mmol_per_l=40),)


def _unanswered(phases: tuple[Phase, ...], *findings: Finding, **request) -> set[str]:
    """The bounds a plan of these phases passes that these findings leave unanswered."""
    plan = SimpleNamespace(phases=phases, findings=findings)
    return {b.rule for b in oracle.unanswered(PlanRequest(**request), plan, TABLE)}


def test_an_unrelated_finding_does_not_answer_a_breach():
    # open hazard 7 as it was: any hard finding (here a rate no pump can set) passed a
    # potassium rate past the ceiling; only the ceiling's own finding answers it now
    request = {**DOG, "fluid_id": "nacl_0_9"}
    unrelated = _finding("RATE_TOO_SMALL_TO_SET")
    assert "potassium_rate" in _unanswered(K_PAST_CEILING, unrelated, **request)
    assert "potassium_rate" not in _unanswered(
        K_PAST_CEILING, unrelated, _finding("POTASSIUM_ABOVE_CEILING"), **request
    )


def test_the_answering_finding_needs_the_severity_the_bound_asks_for():
    request = {**DOG, "fluid_id": "nacl_0_9"}
    for severity in ("info", "soft"):  # a hard bound: a warning is not a block
        mild = _finding("POTASSIUM_ABOVE_CEILING", severity)
        assert "potassium_rate" in _unanswered(K_PAST_CEILING, mild, **request)
    # a soft bound (anaesthesia, Davis 2013: below 10 mL/kg/h): soft or hard answers, info not
    fast = (_phase("maintenance", 0, 24, rate_ml_per_h=12 * 20),)
    for severity, answered in (("info", False), ("soft", True), ("hard", True)):
        found = _unanswered(fast, _finding("ANAESTHESIA_RATE", severity), **DOG, anaesthesia=True)
        assert ("anaesthesia_rate" not in found) is answered, severity


def test_a_weight_unit_slip_answers_every_bound():
    # the g/kg slip blocks the plan and makes every per-kg figure meaningless: once the weight
    # is corrected the plan is built again and every check runs again
    slip = _finding("WEIGHT_UNIT_SLIP")
    assert not _unanswered(K_PAST_CEILING, slip, **DOG, fluid_id="nacl_0_9", anaesthesia=True)


def test_every_bound_names_codes_the_core_raises_at_the_severity_it_needs():
    # a misspelt code, or one the core only ever gives as a warning for a bound that must
    # block, would leave that bound answerable by nothing
    for rule, bound in oracle.RULES.items():
        for code in (*bound.codes, *oracle.ANSWERS_EVERY_RULE):
            exists, severities = code_in_core(code)
            assert exists, f"{rule}: {code} is no finding code in vetfluid/"
            strong_enough = {"hard"} if bound.needs == "hard" else {"soft", "hard"}
            assert severities is None or severities & strong_enough, (
                f"{rule}: the core gives {code} only as {sorted(severities)}"
            )


def test_a_bound_outside_the_table_is_refused():
    with pytest.raises(KeyError):
        oracle.Breach(rule="no_such_bound", detail="x")


def test_hourly_ceiling_is_the_shock_dose_else_blood_volume():
    # Davis 2013: dog shock dose 80–90 mL/kg; where the table has none, one blood volume.
    assert oracle.hourly_ceiling_ml_per_kg(TABLE, "dog") == (
        TABLE.value("dog", "shock_dose_ml_per_kg").number,
        "shock dose",
    )
    for species_id in SPECIES:
        if TABLE.get(species_id, "shock_dose_ml_per_kg") is None:
            assert oracle.hourly_ceiling_ml_per_kg(TABLE, species_id) == (
                TABLE.value(species_id, "blood_volume_ml_per_kg").number,
                "blood volume",
            )
