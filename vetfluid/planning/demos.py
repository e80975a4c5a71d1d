"""Demo patients: invented cases of our own for trying vetfluid. Not real animals.

Each demo is a plain set of plan inputs, so the window (File → Demo patients)
and the CLI (``vetfluid-cli plan --demo ID``) build exactly the same plan. All of
them start on one invented day of the scenario, DEMO_DAY.
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import date, time

from vetfluid.common.errors import InputError
from vetfluid.planning.plan import PlanRequest

DEMO_DAY = date(2026, 12, 1)  # the scenario's day; invented like the patients


@dataclass(frozen=True, kw_only=True)
class Demo:
    demo_id: str
    title: str
    story: str
    request: PlanRequest


DEMOS: dict[str, Demo] = {
    demo.demo_id: demo
    for demo in (
        Demo(
            demo_id="dehydrated_dog",
            title="Demo: dehydrated dog after two days of vomiting",
            story="Invented demo patient. 24 kg dog, about 8 % dehydrated, still vomiting "
            "(about 240 mL a day), serum K 3.3 mmol/L.",
            request=PlanRequest(
                species_id="dog",
                weight_kg=24.0,
                dehydration_percent=8.0,
                replace_hours=12.0,
                losses_ml_per_day=240.0,
                serum_k=3.3,
                serum_na=146.0,
                start_time=time(8, 0),
                start_date=DEMO_DAY,
            ),
        ),
        Demo(
            demo_id="cold_bearded_dragon",
            title="Demo: bearded dragon kept too cold",
            story="Invented demo patient. 380 g bearded dragon, sluggish, body temperature "
            "24 °C (below its preferred range), about 5 % dehydrated.",
            request=PlanRequest(
                species_id="bearded_dragon",
                weight_kg=0.38,
                dehydration_percent=5.0,
                body_temp_c=24.0,
                start_time=time(9, 0),
                start_date=DEMO_DAY,
            ),
        ),
        Demo(
            demo_id="small_gerbil",
            title="Demo: Mongolian gerbil too small for a line",
            story="Invented demo patient. 65 g gerbil, off water for a day, about 7 % "
            "dehydrated; too small for a continuous line.",
            request=PlanRequest(
                species_id="mongolian_gerbil",
                weight_kg=0.065,
                dehydration_percent=7.0,
                replace_hours=24.0,
                start_time=time(10, 0),
                start_date=DEMO_DAY,
            ),
        ),
        Demo(
            demo_id="renal_cat",
            title="Demo: cat with kidney disease and dilute urine",
            story="Invented demo patient. 4.2 kg cat with chronic kidney disease, USG 1.011, "
            "about 6 % dehydrated.",
            request=PlanRequest(
                species_id="cat",
                weight_kg=4.2,
                dehydration_percent=6.0,
                replace_hours=24.0,
                usg=1.011,
                renal_disease=True,
                start_time=time(14, 0),
                start_date=DEMO_DAY,
            ),
        ),
    )
}


def demo(demo_id: str) -> Demo:
    """One demo by id; an unknown id lists the known ones."""
    if demo_id not in DEMOS:
        raise InputError(
            f"unknown demo {demo_id!r}", field="demo", value=demo_id, fix=", ".join(DEMOS)
        )
    return DEMOS[demo_id]
