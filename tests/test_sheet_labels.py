"""The treatment sheet's labels, pages and rows (issue 20, "The sheet and the labels" and
"Sheets by taxon and mode"): one label per bag or syringe used, the patient on every page,
one row per dose for divided doses, observation columns by taxon, diuretic lines on the
clock with amounts that never round to nothing."""

from __future__ import annotations

import math
import re
from dataclasses import replace
from datetime import date, time

import pytest

from vetfluid import cli
from vetfluid.common.errors import InputError
from vetfluid.planning.demos import DEMO_DAY, DEMOS
from vetfluid.planning.plan import PlanRequest, build_plan
from vetfluid.printouts import labels as lab
from vetfluid.printouts.sheet import NURSE_COLUMNS, date_text, sheet_file_name, sheet_html
from vetfluid.records.serialize import plan_dict, request_from_dict, request_to_dict


def data_for(request: PlanRequest) -> dict:
    return plan_dict(build_plan(request))


def dog() -> dict:
    return data_for(DEMOS["dehydrated_dog"].request)


def labels_block(html: str) -> str:
    return html.split(">Labels</h3>", 1)[1].split("<h3>", 1)[0]


def hourly_block(html: str) -> str:
    return html.split("(fill in)</h3>", 1)[1].split("<h3>", 1)[0]


def header_cells(block: str) -> list[str]:
    return re.findall(r"<th[^>]*>([^<]*)</th>", block)


# ---- bags: the request's choice, or by the phase's volume -------------------------------------
def test_a_bag_size_is_250_500_or_1000_ml_or_left_to_the_plan():
    # the sizes lactated Ringer's is sold in (Fresenius Kabi NDC 63323-164; Baxter LR,
    # DailyMed archive 14649): 250, 500 and 1000 mL
    base = DEMOS["dehydrated_dog"].request
    for size in (250, 500, 1000, 500.0):
        assert replace(base, bag_size_ml=size).bag_size_ml == size
    for wrong in (750, 0, -500, 2000, float("nan")):
        with pytest.raises(InputError) as err:
            replace(base, bag_size_ml=wrong)
        assert err.value.field == "bag_size_ml"
    chosen = replace(base, bag_size_ml=500.0)
    assert request_from_dict(request_to_dict(chosen)) == chosen


def test_the_cli_takes_a_bag_size(capsys):
    import json

    args = ["plan", "--species", "dog", "--weight", "24 kg", "--bag-size", "500", "--json"]
    assert cli.main(args) == 0
    assert json.loads(capsys.readouterr().out)["request"]["bag_size_ml"] == 500
    assert cli.main(["plan", "--species", "dog", "--weight", "24 kg", "--bag-size", "750"]) == 2
    assert "bag" in capsys.readouterr().err.lower()


def test_the_demo_dog_needs_four_litre_bags_one_label_each():
    """Replacement 2755.7 mL over 12 h at 229.6 mL/h: three 1000 mL bags (1000, 1000, 755.7
    mL); maintenance 835.7 mL: one more. Each bag follows the one before when it runs out:
    1000 mL at 229.64 mL/h lasts 4.355 h, so bag 2 goes up at 12:21 (08:00 + 4 h 21 min)."""
    data = dog()
    bags = [x for x in lab.labels(data) if x.kind == "bag"]
    assert [(b.phase_index, b.number, b.of, b.container_ml) for b in bags] == [
        (0, 1, 3, 1000), (0, 2, 3, 1000), (0, 3, 3, 1000), (1, 1, 1, 1000),
    ]  # fmt: skip
    replacement = data["phases"][0]
    assert sum(b.give_ml for b in bags[:3]) == pytest.approx(replacement["volume_ml"])
    assert bags[1].start_h == pytest.approx(1000 / replacement["rate_ml_per_h"])
    assert bags[0].discard_h == pytest.approx(bags[1].start_h)  # used up as the next goes up
    assert bags[2].discard_h == pytest.approx(12.0)  # its share given when the phase ends
    html = sheet_html(data)
    block = labels_block(html)
    assert block.count("<td") == 4
    assert "bag 2 of 3" in block and "start 12:21" in block
    assert "give 755.7 mL of the 1000 mL" in block or "give 756 mL of the 1000 mL" in block


def test_a_chosen_size_sets_every_bag_and_small_phases_get_small_bags():
    data = data_for(replace(DEMOS["dehydrated_dog"].request, bag_size_ml=500.0))
    bags = [x for x in lab.labels(data) if x.kind == "bag"]
    assert {b.container_ml for b in bags} == {500}
    assert len([b for b in bags if b.phase_index == 0]) == math.ceil(2755.65 / 500)  # 6
    # the renal cat (Davis 2013 figures in the plan): 486.7 mL over 24 h fits a 500 mL bag,
    # 117.4 mL of maintenance a 250 mL bag
    cat = [x for x in lab.labels(data_for(DEMOS["renal_cat"].request)) if x.kind == "bag"]
    assert [(b.phase_index, b.container_ml) for b in cat] == [(0, 500), (1, 250)]


def test_no_bag_hangs_longer_than_24_hours():
    """A slow replacement over 48 h: no bag runs past 24 h after it went up (common practice,
    no source; CDC 2002 made no recommendation for IV fluid hang time)."""
    data = data_for(PlanRequest(species_id="cat", weight_kg=4.2, dehydration_percent=3,
                                replace_hours=48, bag_size_ml=1000.0, start_time=time(8, 0),
                                start_date=DEMO_DAY))  # fmt: skip
    phase = data["phases"][0]
    assert phase["rate_ml_per_h"] * 24 < 1000  # one litre would hang longer than a day
    bags = [x for x in lab.labels(data) if x.kind == "bag" and x.phase_index == 0]
    assert len(bags) == 2 and all(b.discard_h - b.start_h <= 24 + 1e-9 for b in bags)
    assert bags[0].hang_limited and bags[1].start_h == pytest.approx(24.0)
    assert bags[0].give_ml == pytest.approx(phase["rate_ml_per_h"] * 24)
    assert "24 h hang limit" in labels_block(sheet_html(data))


def test_additives_are_given_for_the_bag_on_the_label_not_for_a_litre():
    """KCl 28 mmol/L from 2 mEq/mL concentrate is 14 mL per litre (28 ÷ 2): 7 mL in a 500 mL
    bag. 2.5 % dextrose w/v from 50 % in the whole bag, the KCl's volume in it (the C1V1 =
    C2V2 dilution of any pharmacy text): a litre with 10 mL KCl takes 1010 × 2.5 ÷ 47.5 =
    53.2 mL; a 250 mL bag with 2.5 mL takes 252.5 × 2.5 ÷ 47.5 = 13.3 mL. A 500 mL bag
    labelled with the litre's 14 mL would hold twice the K."""
    data = data_for(replace(DEMOS["dehydrated_dog"].request, bag_size_ml=500.0))
    block = labels_block(sheet_html(data))
    assert "add 7 mL potassium chloride concentrate 2 mEq/mL (14 mmol KCl)" in block
    assert "14 mL" not in block.replace("(14 mmol", "")
    assert "1000 mL +" not in block
    litre = labels_block(sheet_html(dog()))
    assert "add 14 mL potassium chloride concentrate 2 mEq/mL (28 mmol KCl)" in litre
    sweet = data_for(PlanRequest(species_id="dog", weight_kg=20, kcl_mmol_per_l=20,
                                 dextrose_percent=2.5, bag_size_ml=250.0))  # fmt: skip
    assert "53.2 mL" in sweet["fluid"]["name"]  # the plan's own litre
    assert sweet["fluid"]["dextrose_g_per_l"] == pytest.approx(25.0)  # 2.5 % of the whole bag
    block = labels_block(sheet_html(sweet))
    assert "add 13.3 mL 50% dextrose" in block
    assert "add 2.5 mL potassium chloride concentrate 2 mEq/mL (5 mmol KCl)" in block  # 20 × 0.25


def test_a_bolus_bag_is_its_own_bag_with_nothing_added():
    data = data_for(PlanRequest(species_id="dog", weight_kg=24, resuscitation_boluses=1,
                                kcl_mmol_per_l=20, start_time=time(8, 0)))  # fmt: skip
    bolus = next(x for x in lab.labels(data) if x.phase_index == 0)
    assert bolus.kind == "bag" and bolus.container_ml == 500  # 360 mL (15 mL/kg × 24 kg)
    cell = labels_block(sheet_html(data)).split("<td")[1]
    assert "with nothing added" in cell and "add " not in cell


# ---- syringes ---------------------------------------------------------------------------------
def test_a_syringe_pump_gets_one_label_per_syringe_changed_at_24_hours_at_the_latest():
    data = data_for(PlanRequest(species_id="rat", weight_kg=0.2, dehydration_percent=5,
                                route="iv", device="syringe", start_time=time(8, 0)))  # fmt: skip
    syringes = [x for x in lab.labels(data) if x.kind == "syringe"]
    assert syringes
    for s in syringes:
        phase = data["phases"][s.phase_index]
        assert s.discard_h - s.start_h <= 24 + 1e-9
        assert s.give_ml <= 60 + 1e-9  # the request's 60 mL syringe
        assert s.start_h >= phase["start_h"] - 1e-9
    replacement = [s for s in syringes if s.phase_index == 0]
    total = data["phases"][0]["volume_ml"]
    assert sum(s.give_ml for s in replacement) >= total - 1e-6  # loaded to the 0.1 mL mark up


def test_divided_doses_get_a_label_per_dose_and_a_stock_bag_per_day():
    """The demo gerbil: 4 doses a day over the 84 h its replacement is slowed to and 2 in
    maintenance; the doses are drawn from a 250 mL bag discarded 24 h after it was opened."""
    data = data_for(DEMOS["small_gerbil"].request)
    found = lab.labels(data)
    doses = [x for x in found if x.kind == "dose"]
    assert len(doses) == sum(p["doses"] for p in data["phases"])
    stock = [x for x in found if x.kind == "stock bag"]
    assert [(s.container_ml, s.start_h, s.discard_h) for s in stock] == [
        (250, 0.0, 24.0), (250, 24.0, 48.0), (250, 48.0, 72.0), (250, 72.0, 96.0),
    ]  # fmt: skip
    block = labels_block(sheet_html(data))
    assert "4 sites × 0.64 mL = 2.56 mL per dose" in block
    assert "1 mL syringe per site" in block


# ---- the patient on every page ----------------------------------------------------------------
def test_no_name_prints_a_line_to_write_it_on_never_a_placeholder():
    html = sheet_html(dog())
    assert "(patient name)" not in html
    assert "Name: ____" in html
    title = re.search(r"<title>(.*)</title>", html).group(1)
    assert "Name: ____" in title and "Dog, 24 kg" in title and date_text(DEMO_DAY) in title


def test_the_page_line_names_the_patient_species_weight_and_date():
    html = sheet_html(dog(), patient={"name": "Rex & Co"})
    title = re.search(r"<title>(.*)</title>", html).group(1)
    assert title == f"Rex &amp; Co · Dog, 24 kg · {date_text(DEMO_DAY)}"
    undated = plan_dict(build_plan(PlanRequest(species_id="dog", weight_kg=20)))
    assert "date: ____" in re.search(r"<title>(.*)</title>", sheet_html(undated)).group(1)


def test_every_pdf_page_carries_the_name(capsys, tmp_path):
    import json

    import pypdf

    from ui.app import sheet_command

    plan = tmp_path / "plan.json"
    plan.write_text(json.dumps(data_for(DEMOS["small_gerbil"].request)), encoding="utf-8")
    out = tmp_path / "sheet.pdf"
    assert sheet_command([str(plan), "-o", str(out), "--patient-name", "Pip"]) == 0
    pages = [re.sub(r"\s+", " ", p.extract_text()) for p in pypdf.PdfReader(out).pages]
    assert len(pages) > 1
    assert all("Pip · Mongolian gerbil, 65 g · " + date_text(DEMO_DAY) in p for p in pages)


def test_the_proposed_file_name_is_the_patient_and_the_date():
    assert sheet_file_name(dog(), "Rex") == "Rex 2026-12-01 fluid sheet.pdf"
    assert sheet_file_name(dog(), "R/e:x*") == "R-e-x- 2026-12-01 fluid sheet.pdf"
    assert sheet_file_name(dog(), "") == "Dog 2026-12-01 fluid sheet.pdf"
    undated = plan_dict(build_plan(PlanRequest(species_id="dog", weight_kg=20)))
    assert sheet_file_name(undated, "Rex") == "Rex fluid sheet.pdf"


# ---- rows by mode, columns by taxon ---------------------------------------------------------
def test_divided_doses_get_one_row_per_dose_time():
    data = data_for(DEMOS["small_gerbil"].request)
    hourly = hourly_block(sheet_html(data))
    rows = re.findall(r"<tr><td>(\d\d:\d\d[^<]*)</td>", hourly)
    times = sorted(
        p["start_h"] + i * p["interval_h"] for p in data["phases"] for i in range(p["doses"])
    )
    assert len(rows) == len(times) == 16  # not 96 hourly rows
    assert rows[:2] == ["10:00", "16:00"]  # the demo starts at 10:00, doses every 6 h
    assert "Rate set" not in header_cells(hourly)


@pytest.mark.parametrize(
    ("request_", "wanted", "absent"),
    [
        # the columns for reptiles and birds (common practice, no source)
        (DEMOS["cold_bearded_dragon"].request,
         ["Body or encl. °C", "Weight", "Urates / faeces", "Demeanour"], ["HR", "MM / CRT"]),
        (PlanRequest(species_id="budgerigar", weight_kg=0.035, dehydration_percent=5,
                     start_time=time(8, 0)),
         ["Weight", "Droppings", "Respiratory effort"], ["HR", "MM / CRT", "Urine"]),
        (DEMOS["dehydrated_dog"].request, list(NURSE_COLUMNS), []),
    ],
)  # fmt: skip
def test_the_observation_columns_follow_the_taxon(request_, wanted, absent):
    cells = header_cells(hourly_block(sheet_html(data_for(request_))))
    assert all(w in cells for w in wanted) and not any(a in cells for a in absent)


# ---- diuretics on the clock -------------------------------------------------------------------
def _budgie_with_furosemide() -> dict:
    return data_for(PlanRequest(species_id="budgerigar", weight_kg=0.035, dehydration_percent=5,
                                start_time=time(8, 0), start_date=date(2026, 12, 1),
                                diuretics=(("furosemide", 1.0, "im", 1.5, 1.5),
                                           ("furosemide", 0.01, "cri", 2.0, 6.5))))  # fmt: skip


def test_a_dose_at_half_past_stands_with_its_clock_time_and_an_infusion_ends_on_the_clock():
    html = sheet_html(_budgie_with_furosemide())
    hourly = hourly_block(html)
    # 1 mg/kg × 35 g = 0.035 mg; 0.01 mg/kg/h × 35 g = 0.00035 mg/h (not 0 mg/h)
    assert "09:30: Furosemide 1 mg/kg IM = 0.035 mg" in hourly
    assert "Furosemide infusion 0.01 mg/kg/h IV = 0.00035 mg/h until 14:30" in html
    assert " 0 mg" not in html.replace(" 0 mg/kg", "")
    assert "until hour" not in html


def test_a_dose_at_half_past_lands_in_its_hour_row():
    data = data_for(PlanRequest(species_id="dog", weight_kg=20, start_time=time(8, 0),
                                diuretics=(("furosemide", 2.0, "iv", 1.5, 1.5),)))  # fmt: skip
    hourly = hourly_block(sheet_html(data))
    row = hourly.split("<td>09:00</td>", 1)[1].split("</tr>", 1)[0]
    assert "09:30: Furosemide 2 mg/kg IV = 40 mg" in row
    assert "Furosemide" not in hourly.split("<td>10:00</td>", 1)[1].split("</tr>", 1)[0]


def test_mannitol_shows_the_volume_of_the_20_percent_solution():
    """0.5 g/kg × 20 kg = 10 g; 20 % w/v is 0.2 g/mL (diuretics.csv: "20 % mannitol",
    kirk_aki), so 10 g ÷ 0.2 g/mL = 50 mL."""
    data = data_for(PlanRequest(species_id="dog", weight_kg=20, start_time=time(8, 0),
                                diuretics=(("mannitol", 0.5, "iv", 0.5, 0.5),)))  # fmt: skip
    html = sheet_html(data)
    assert "Mannitol 0.5 g/kg IV = 10 g (50 mL of 20 % mannitol)" in html
    assert "08:30: Mannitol" in hourly_block(html)


def test_a_plan_file_with_another_bag_size_is_refused_and_an_older_one_keeps_its_words():
    data = dog()
    data["request"]["bag_size_ml"] = 7
    with pytest.raises(InputError, match="bag size"):
        sheet_html(data)
    budgie = _budgie_with_furosemide()
    for dose in budgie["diuretics"]:  # a plan file from before the figures were kept
        for key in ("amount", "amount_unit"):
            del dose[key]
    assert "Furosemide 1 mg/kg IM = 0.035 mg" in sheet_html(budgie)  # the schedule's words


def test_a_stock_bag_never_claims_more_than_it_holds():
    # Review finding: 624 mL SC doses for a 20 kg dog drawn from 250 mL bags were labelled as
    # two bags giving 624 mL each. Each dose takes as many bags as it needs, each giving at
    # most what it holds.
    from vetfluid.planning.plan import PlanRequest, build_plan
    from vetfluid.printouts.labels import labels
    from vetfluid.records.serialize import plan_dict

    plan = build_plan(PlanRequest(species_id="dog", weight_kg=20.0, dehydration_percent=0,
                                  route="sc", bag_size_ml=250))  # fmt: skip
    stock = [b for b in labels(plan_dict(plan)) if b.kind == "stock bag"]
    assert stock and all(b.give_ml <= b.container_ml + 1e-9 for b in stock)
    doses = sum(p.dose_ml * p.doses for p in plan.phases if p.mode == "intermittent")
    assert sum(b.give_ml for b in stock) >= doses - 1e-6


# ---- labels travel without the page: they carry the plan's status ------------------------------
def test_a_blocked_plan_prints_no_labels_to_cut_out():
    # Review finding: a hard-limit plan printed ready-to-cut labels on a page of their own;
    # a label stuck on a syringe keeps no page banner (common practice: a label says what
    # is in the container and that it may be given).
    data = data_for(PlanRequest(species_id="dog", weight_kg=0.02))  # the g/kg slip: hard
    block = labels_block(sheet_html(data))
    assert "<td" not in block  # no label cells
    assert "not to be given" in block.lower()


def test_labels_of_a_plan_not_marked_ready_say_so_on_each_label():
    data = dog()
    unready = labels_block(sheet_html(data, ready=False))
    cells = re.findall(r"<td[^>]*>(.*?)</td>", unready)
    assert cells and all("NOT MARKED READY" in c for c in cells)
    ready = labels_block(sheet_html(data, ready=True))
    assert "NOT MARKED READY" not in ready


def test_a_syringe_pump_gets_one_label_per_fill_the_schedule_loads():
    # Review finding: a fill loaded up to the next 0.1 mL mark ran 24.1 h at its rate, and
    # the labels invented a 0.1 mL syringe for the last 0.6 h beside the next fill (a nurse
    # could run the wrong rate). A syringe runs until the next fill or the phase's end.
    data = data_for(PlanRequest(species_id="budgerigar", weight_kg=0.035, dehydration_percent=8,
                                route="io", device="syringe", replace_hours=48))  # fmt: skip
    found = [x for x in lab.labels(data) if x.kind == "syringe"]
    fills = [(i, f["hour"]) for i, p in enumerate(data["phases"])
             for f in p.get("syringe_fills") or ()]  # fmt: skip
    assert [(x.phase_index, x.start_h) for x in found] == fills
    for x in found:
        phase = data["phases"][x.phase_index]
        later = [f["hour"] for f in phase["syringe_fills"] if f["hour"] > x.start_h]
        assert x.discard_h == pytest.approx(min(later) if later else phase["end_h"])


def test_a_long_or_broken_name_keeps_the_page_line_whole():
    # Review finding: a 79-character name pushed the date off every page's head, and a line
    # break in the name split it.
    data = dog()
    title = re.search(r"<title>(.*)</title>", sheet_html(data, patient={"name": "A" * 79}))
    assert "Dog, 24 kg" in title.group(1) and date_text(DEMO_DAY) in title.group(1)
    assert "A" * 40 not in title.group(1) and "…" in title.group(1)
    broken = sheet_html(data, patient={"name": "Rex\nthe dog"})
    assert "Rex the dog · Dog, 24 kg" in re.search(r"<title>(.*)</title>", broken).group(1)


def test_each_soak_has_its_row_in_the_record():
    # Review finding: soaks were on the schedule but had no row to record them in.
    data = data_for(PlanRequest(species_id="hermanns_tortoise", weight_kg=0.8, route="epicoel",
                                soaks_per_day=2, dose_interval_h=24))  # fmt: skip
    soaks = [e["hour"] for e in data["schedule"] if e["phase"] == "soak"]
    assert soaks
    hourly = hourly_block(sheet_html(data))
    assert hourly.count("soak (not counted as fluid given)") == len(soaks)
