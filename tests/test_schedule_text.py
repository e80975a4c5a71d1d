"""The schedule's words: conditional boluses, countable drips, drops/min of the rate
shown, divided doses as drawn up, and the treatment sheet agreeing with the schedule.

Check values are worked by hand with the standard infusion arithmetic (drops/min =
mL/h × drop factor ÷ 60; seconds per drop = 60 ÷ drops/min), the 0.01 mL marks of a
1 mL syringe (common practice, no source) and the two-drops-a-second counting limit
(:data:`vetfluid.physiology.delivery.COUNTABLE_DROPS_PER_MIN`, common practice, no source).
"""

from __future__ import annotations

import dataclasses
import re

import pytest

from vetfluid.common.errors import InputError
from vetfluid.physiology import delivery
from vetfluid.planning.demos import DEMOS
from vetfluid.planning.plan import PlanRequest, build_plan
from vetfluid.planning.schedule import (
    continuous_phase,
    intermittent_phase,
    rate_or_dose_text,
    schedule_entries,
)
from vetfluid.printouts.sheet import sheet_html
from vetfluid.records.serialize import plan_dict

CONDITION = "If still poorly perfused at reassessment: bolus "


def _bolus(start_h: float, *, drop_factor: float | None = None):
    # 360 mL over 15 min = 1440 mL/h (360 × 60 / 15)
    return continuous_phase(kind="resuscitation", start_h=start_h, end_h=start_h + 0.25,
                            rate_ml_per_h=1440, route="iv", drop_factor=drop_factor,
                            kcl_mmol_per_l=0.0)  # fmt: skip


def _drip(rate_ml_per_h: float, drop_factor: float):
    phase = continuous_phase(kind="replacement", start_h=0, end_h=12, rate_ml_per_h=rate_ml_per_h,
                             route="iv", drop_factor=drop_factor, kcl_mmol_per_l=0.0)  # fmt: skip
    return phase, schedule_entries((phase,), None)[0].action


# ==== boluses =============================================================================


def test_only_the_first_bolus_is_given_outright_later_ones_if_still_poorly_perfused():
    entries = schedule_entries((_bolus(0), _bolus(0.25), _bolus(0.5)), None)
    first, *later = [e.action for e in entries]
    assert first.startswith("Bolus 360 mL IV over 15 min") and first.endswith("then reassess")
    assert "If still" not in first
    for action in later:
        assert action.startswith(CONDITION + "360 mL IV over 15 min"), action
        assert action.endswith("then reassess")
    assert [e.hour for e in entries] == [0, 0.25, 0.5]  # the time stays reserved


def test_demo_dog_with_two_boluses_the_second_is_conditional_and_keeps_its_time():
    request = dataclasses.replace(DEMOS["dehydrated_dog"].request, resuscitation_boluses=2)
    plan = build_plan(request)
    boluses = [e for e in plan.schedule if e.phase == "resuscitation"]
    assert len(boluses) == 2
    assert boluses[0].action.startswith("Bolus ")
    assert boluses[1].action.startswith(CONDITION)
    # the demo starts at 08:00; each bolus runs its phase's minutes
    starts = [p.start_h for p in plan.phases if p.kind == "resuscitation"]
    assert [e.hour for e in boluses] == starts and starts[1] > starts[0]
    assert boluses[1].clock != boluses[0].clock


# ==== countable drips =====================================================================


@pytest.mark.parametrize(
    ("rate", "factor", "drops", "seconds"),
    [
        (120, 60, "120 drops/min", "0.5 s"),  # 120 × 60 ÷ 60 = 120; 60 ÷ 120 = 0.5 s
        (360, 20, "120 drops/min", "0.5 s"),  # 360 × 20 ÷ 60 = 120
        (30, 20, "10 drops/min", "6 s"),  # 30 × 20 ÷ 60 = 10; 60 ÷ 10 = 6 s
    ],
)
def test_a_drip_up_to_two_drops_a_second_shows_drops_to_count(rate, factor, drops, seconds):
    _, action = _drip(rate, factor)
    assert f" = {drops} (1 drop every {seconds})" in action, action
    assert "too fast" not in action


@pytest.mark.parametrize(
    ("rate", "factor", "marks"),
    [
        (124, 60, "31 mL every 15 min"),  # 124 drops/min; 124 mL/h × 15 ÷ 60 = 31 mL
        (366, 20, "91.5 mL every 15 min"),  # 366 × 20 ÷ 60 = 122 drops/min; 366 ÷ 4 = 91.5
    ],
)
def test_a_drip_faster_than_two_drops_a_second_is_timed_by_the_bag(rate, factor, marks):
    _, action = _drip(rate, factor)
    assert "too fast to count drops" in action and "bag's volume marks" in action
    assert marks in action, action
    assert "drops/min" not in action


def test_a_gravity_bolus_is_timed_by_the_bag_not_480_drops_a_minute():
    # 1440 mL/h × 20 drops/mL ÷ 60 = 480 drops/min, eight a second
    action = schedule_entries((_bolus(0, drop_factor=20),), None)[0].action
    assert "480" not in action and "drops/min" not in action
    assert "too fast to count drops" in action and "360 mL in 15 min" in action
    assert action.endswith("then reassess")


def test_a_slow_gravity_bolus_shows_drops_and_their_spacing():
    # 60 mL over 15 min = 240 mL/h; at 20 drops/mL 240 × 20 ÷ 60 = 80 drops/min,
    # 60 ÷ 80 = 0.75 s per drop
    phase = continuous_phase(kind="resuscitation", start_h=0, end_h=0.25, rate_ml_per_h=240,
                             route="iv", drop_factor=20, kcl_mmol_per_l=0.0)  # fmt: skip
    action = schedule_entries((phase,), None)[0].action
    assert "(240 mL/h = 80 drops/min, 1 drop every 0.75 s)" in action, action


@pytest.mark.parametrize("bad", [-1, float("nan"), "80"])
def test_countable_refuses_a_bad_rate(bad):
    with pytest.raises(InputError):
        delivery.countable(bad)


# ==== drops/min of the rate shown =========================================================


def test_drops_per_min_are_those_of_the_rate_shown():
    # The review's case: a plan rate of 139.5 mL/h was shown as "140 mL/h" beside the
    # 46.5 drops/min of 139.5 mL/h. 140 × 20 ÷ 60 = 46.67 drops/min; 60 ÷ 46.67 = 1.29 s.
    phase, action = _drip(139.5, 20)
    assert phase.rate_ml_per_h == 140
    assert "Set 140 mL/h = 46.7 drops/min (1 drop every 1.29 s)" in action, action


@pytest.mark.parametrize(
    ("rate", "shown"),
    [(229.64, 230), (69.637, 69.6), (4.567, 4.57), (0.384, 0.38), (1440, 1440)],
)
def test_a_drip_runs_the_rate_to_the_figures_shown(rate, shown):
    # three significant figures from 1 mL/h, two below (vetfluid.common.formatting)
    assert delivery.drip_ml_per_h(rate) == pytest.approx(shown)


def test_every_drip_line_in_a_plan_agrees_with_its_rate():
    request = dataclasses.replace(DEMOS["dehydrated_dog"].request, device="gravity",
                                  drop_factor=20)  # fmt: skip
    for entry in build_plan(request).schedule:
        match = re.search(r"Set ([\d.]+) mL/h = ([\d.]+) drops/min", entry.action)
        assert match, entry.action
        rate, drops = float(match[1]), float(match[2])
        assert drops == pytest.approx(rate * 20 / 60, abs=0.05), entry.action


# ==== divided doses =======================================================================


def _divided(need_ml_per_h: float, per_site_limit_ml: float):
    phase = intermittent_phase(kind="replacement", start_h=0, end_h=12,
                               need_ml_per_h=need_ml_per_h, route="sc",
                               per_site_limit_ml=per_site_limit_ml, kcl_mmol_per_l=0.0)  # fmt: skip
    return phase, schedule_entries((phase,), None)


def test_a_divided_dose_is_the_sites_times_the_volume_drawn_up():
    # 0.375 mL/h with 0.65 mL per site: 12 h → 4.5 mL on 7 sites, 8 h → 3 mL on 5 sites
    # (both over the 4-site limit), 6 h → 2.25 mL on 4 sites of 0.5625 mL, drawn up as
    # 0.56 mL (0.01 mL marks); 4 × 0.56 = 2.24 mL is what the nurse gives.
    phase, entries = _divided(0.375, 0.65)
    assert phase.interval_h == 6 and phase.sites_per_dose == 4
    assert [e.action for e in entries] == ["Give 2.24 mL SC in 4 sites, 0.56 mL per site"] * 2


def test_one_more_site_when_the_limit_would_force_every_site_a_mark_short():
    # A 3.9 g finch at 10 mL/kg per site: at most 0.039 mL a site. 0.00975 mL/h × 12 h =
    # 0.117 mL: 3 sites of 0.039 mL would each be drawn down to 0.03 mL (0.09 mL, 23 %
    # short); 4 sites of 0.02925 mL are drawn as 0.03 mL, 0.12 mL, within half a mark each.
    # Arithmetic; the 0.01 mL marks of a 1 mL syringe are common practice, no source.
    phase, entries = _divided(0.00975, 0.039)
    assert (phase.sites_per_dose, phase.ml_per_site, phase.dose_ml) == (4, 0.03, 0.12)
    assert abs(phase.dose_ml - 0.117) <= 0.005 * phase.sites_per_dose


def test_a_site_limit_below_the_smallest_mark_is_a_hard_limit_on_the_plan():
    # a 0.5 g "gerbil" (a slip for 50 g) at 10 mL/kg per site: 0.005 mL a site, under the
    # 0.01 mL mark; the site is drawn as the smallest mark and the plan cannot be ready
    assert delivery.draw_up_ml(0.004, at_most=0.005) == 0.01
    plan = build_plan(PlanRequest(species_id="mongolian_gerbil", weight_kg=0.0005,
                                  dehydration_percent=5))  # fmt: skip
    finding = next(f for f in plan.findings if f.code == "SITE_BELOW_SMALLEST_MARK")
    assert finding.severity == "hard" and "0.005 mL" in finding.message
    assert "SITE_BELOW_SMALLEST_MARK" not in {
        f.code for f in build_plan(DEMOS["small_gerbil"].request).findings
    }


@pytest.mark.parametrize(
    ("need_ml_per_h", "limit_ml", "route", "sites", "per_site"),
    [
        # 437 g slider, intracoelomic: 4.373 mL fits its one injection (nearest mark 4.4 mL
        # is above it, drawn as 4.3 mL): still one puncture, never split for accuracy
        (4.373 / 12, 4.373, "icoel", 1, 4.3),
        # 150 g patient SC (1.5 mL a site): 1.02 mL is one site drawn as 1.0 mL, the nearest
        # 0.1 mL mark and within the limit; not two sites of 0.51 mL for 0.02 mL more
        (1.02 / 12, 1.5, "sc", 1, 1.0),
    ],
)  # fmt: skip
def test_no_extra_site_unless_the_limit_forced_every_site_down(
    need_ml_per_h, limit_ml, route, sites, per_site
):
    phase = intermittent_phase(kind="replacement", start_h=0, end_h=12,
                               need_ml_per_h=need_ml_per_h, route=route,
                               per_site_limit_ml=limit_ml, kcl_mmol_per_l=0.0)  # fmt: skip
    assert phase.interval_h == 12
    assert (phase.sites_per_dose, phase.ml_per_site) == (sites, per_site)


def test_one_site_is_singular():
    # 0.05 mL/h × 12 h = 0.6 mL, under the 1 mL site limit: one site
    _, entries = _divided(0.05, 1.0)
    assert entries[0].action == "Give 0.6 mL SC in 1 site, 0.6 mL per site"


def test_gerbil_demo_doses_add_up_and_say_sites():
    for entry in build_plan(DEMOS["small_gerbil"].request).schedule:
        match = re.fullmatch(r"Give ([\d.]+) mL SC in (\d+) sites?, ([\d.]+) mL per site",
                             entry.action)  # fmt: skip
        assert match, entry.action
        dose, sites, per_site = float(match[1]), int(match[2]), float(match[3])
        assert dose == pytest.approx(sites * per_site, abs=1e-9), entry.action


@pytest.mark.parametrize(
    ("per_site", "sites", "error_field"),
    [(0.5, 0, "sites"), (0.5, 1.5, "sites"), (0.5, True, "sites"), (-0.1, 2, "ml_per_site"),
     (float("nan"), 2, "ml_per_site"), (None, 2, "ml_per_site")],
)  # fmt: skip
def test_drawn_up_dose_refuses_bad_figures(per_site, sites, error_field):
    with pytest.raises(InputError) as err:
        delivery.drawn_up_dose(ml_per_site=per_site, sites=sites)
    assert err.value.field == error_field


# ==== the treatment sheet =================================================================


def _dose_figures(text: str) -> list[str]:
    return re.findall(r"Give ([\d.]+) mL", text)


def test_sheet_shows_the_divided_doses_the_schedule_gives():
    data = plan_dict(build_plan(DEMOS["small_gerbil"].request))
    html = sheet_html(data)
    given = {float(f) for e in data["schedule"] for f in _dose_figures(e["action"])}
    assert given
    planned = {float(f) for f in re.findall(r"dose ([\d.]+) mL", html)}
    per_dose = {float(f) for f in re.findall(r"([\d.]+) mL per dose", html)}
    phase_text = {float(f) for f in re.findall(r"h [\d.]+–[\d.]+: ([\d.]+) mL every", html)}
    assert planned == given and per_dose == given and phase_text == given
    assert "site(s)" not in html


def test_sheet_refuses_a_plan_file_with_a_dose_that_is_not_a_number():
    data = plan_dict(build_plan(DEMOS["small_gerbil"].request))
    data["phases"][0]["ml_per_site"] = None
    with pytest.raises(ValueError, match="replacement phase's dose"):
        sheet_html(data)


def test_phase_summaries_give_the_figures_the_schedule_gives():
    """The window's phase table and the schedule must not disagree (3.39 vs 3.42 mL)."""
    gerbil = build_plan(DEMOS["small_gerbil"].request)
    # at most 4 sites a dose: the need for 6 h (3.39 mL) does not fit 4 × 0.65 mL (10 mL/kg
    # a site), so the replacement is slowed to 84 h, whose need for 6 h (2.58 mL) is drawn
    # as 4 × 0.64 mL on the 0.01 mL marks
    assert rate_or_dose_text(gerbil.phases[0]) == "2.56 mL every 6 h × 14, 4 sites of 0.64 mL"
    assert "2.56 mL" in gerbil.schedule[0].action
    spread = build_plan(dataclasses.replace(DEMOS["small_gerbil"].request, max_sites_per_dose=6))
    # per site 3.39 / 6 = 0.565 → 0.57 mL (0.01 mL marks); 6 × 0.57 = 3.42 mL
    assert rate_or_dose_text(spread.phases[0]) == "3.42 mL every 6 h × 4, 6 sites of 0.57 mL"
    told = next(f.message for f in spread.findings if f.code == "DIVIDED_TOO_MANY_SITES")
    assert "3.42 mL" in told and "0.57 mL" in told  # the finding quotes the same figures
    assert rate_or_dose_text(_bolus(0, drop_factor=20)) == "1440 mL/h (too fast to count drops)"
    phase, action = _drip(140, 20)  # 140 × 20 / 60 = 46.67 drops/min
    assert rate_or_dose_text(phase) == "140 mL/h = 46.7 drops/min"
    assert "46.7 drops/min" in action
    pump = continuous_phase(kind="replacement", start_h=0, end_h=12, rate_ml_per_h=140,
                            route="iv", drop_factor=None, kcl_mmol_per_l=0.0)  # fmt: skip
    assert rate_or_dose_text(pump) == "140 mL/h"


def test_a_syringe_is_filled_for_a_day_at_most():
    # a filled syringe hangs 24 h at the latest (common practice, no source; CDC 2002 made no
    # recommendation for fluid hang time): 60 mL at 1.3 mL/h would run 46 h, so it is loaded
    # with a day's 31.2 mL and a fresh one follows
    from vetfluid.planning.schedule import syringe_fills

    fills = syringe_fills(start_h=0.0, end_h=48.0, rate_ml_per_h=1.3, size_ml=60.0)
    assert [round(h, 6) for h, _ in fills] == [0.0, 24.0]
    assert all(ml <= 31.2 + 1e-9 for _, ml in fills)
    assert sum(ml for _, ml in fills) >= 1.3 * 48 - 0.2


def test_a_diuretic_on_the_schedule_never_reads_0_mg_and_ends_on_the_minute():
    from vetfluid.planning.schedule import DiureticDose, diuretic_text

    tiny = DiureticDose(drug_id="furosemide", name="furosemide", drug_class="loop", dose=0.01,
                        unit="mg/kg/h", route="cri", start_h=2.0, end_h=6.5, amount=0.00035,
                        amount_unit="mg/h")  # fmt: skip
    text = diuretic_text(tiny)
    assert "0.00035 mg/h" in text and "until hour 6 h 30 min" in text
