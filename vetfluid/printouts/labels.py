"""The containers a plan uses, one label each: every bag, every syringe a pump runs, every
divided dose drawn up, and the bag the divided doses are drawn from.

Rules (stated on the sheet under the labels):

* **Hang time.** A bag or a filled syringe is discarded 24 h after it is opened or filled
  at the latest: common practice, no source. The CDC guideline says nothing either way:
  "No recommendation for the hang time of intravenous fluids" (O'Grady NP et al.,
  Guidelines for the prevention of intravascular catheter-related infections, MMWR Recomm
  Rep 2002;51(RR-10), Appendix B; its 72 h is for giving sets, not for the fluid).
* **Bag size.** The clinician's choice (``PlanRequest.bag_size_ml``: 250, 500 or 1000 mL,
  the sizes lactated Ringer's is sold in); otherwise, for each phase, the smallest of them
  that holds what one bag gives in that phase (the phase's volume, or 24 h at its rate if
  less), and 1000 mL bags when even that is more than a litre. Our rule, no source.
* **One phase, its own bags.** A new bag goes up where a phase begins, so each label has one
  rate; a bag goes up when the one before it has given its share (at the phase's rate) or
  has hung 24 h. Overfill and the volume added with KCl or dextrose are not counted: a bag
  is taken to hold its nominal volume, so it never runs short.
* **Syringe pumps.** The syringes the schedule loads, each split again where it would run
  longer than 24 h (loaded to the next 0.1 mL mark, as the schedule loads them).
* **Divided doses.** One label per dose (drawn up and given at once); the doses are drawn
  from a stock bag opened at the first dose it serves and discarded 24 h later.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

from vetfluid.common.errors import InputError
from vetfluid.common.formatting import format_quantity as q
from vetfluid.physiology.delivery import HANG_LIMIT_H, drawn_up_dose, syringe_load_ml
from vetfluid.planning.plan import BAG_SIZES_ML
from vetfluid.tables import fluids

EPSILON = 1e-9


@dataclass(frozen=True, kw_only=True)
class Label:
    """One container: ``kind`` is "bag", "syringe" (a pump's), "dose" (a divided dose's
    syringes) or "stock bag" (what divided doses are drawn from); ``number`` of ``of``
    within its phase (stock bags: within the plan); ``container_ml`` the bag's size or what
    the syringe is loaded with; ``give_ml`` what it gives; hours on the plan's clock."""

    kind: str
    phase_index: int
    number: int
    of: int
    container_ml: float
    give_ml: float
    start_h: float
    discard_h: float
    hang_limited: bool = False  # discarded at the hang limit with fluid still in it


def bag_size_ml(one_bag_ml: float, chosen: float | None) -> float:
    """The bag for a phase: ``chosen`` when given, else the smallest of
    :data:`~vetfluid.planning.plan.BAG_SIZES_ML` holding ``one_bag_ml``, else the largest."""
    if chosen is not None:
        return float(chosen)
    return next((size for size in BAG_SIZES_ML if size >= one_bag_ml - EPSILON), BAG_SIZES_ML[-1])


def _chosen(data: dict) -> float | None:
    """The bag size the request chose; one a plan file gives outside the sizes is refused."""
    chosen = (data.get("request") or {}).get("bag_size_ml")
    if chosen is None:
        return None
    if isinstance(chosen, bool) or chosen not in BAG_SIZES_ML:
        raise InputError(
            "the bag size must be 250, 500 or 1000 mL", field="bag_size_ml", value=chosen
        )
    return float(chosen)


def _bags(index: int, phase: dict, chosen: float | None) -> list[Label]:
    """A continuous phase's bags, each giving at most its size and at most 24 h of the rate."""
    volume, rate = float(phase["volume_ml"]), float(phase["rate_ml_per_h"])
    if volume <= EPSILON or rate <= EPSILON:
        return []
    day_ml = rate * HANG_LIMIT_H
    size = bag_size_ml(min(volume, day_ml), chosen)
    share = min(size, day_ml)
    count = max(1, math.ceil(volume / share - EPSILON))
    bags = []
    for number in range(count):
        given_before = number * share
        give = min(share, volume - given_before)
        start = phase["start_h"] + given_before / rate
        bags.append(
            Label(
                kind="bag", phase_index=index, number=number + 1, of=count, container_ml=size,
                give_ml=give, start_h=start, discard_h=start + give / rate,
                hang_limited=share < size - EPSILON and give >= share - EPSILON,
            )
        )  # fmt: skip
    return bags


def _syringes(index: int, phase: dict) -> list[Label]:
    """A syringe pump's syringes: the schedule's fills, each running until the next fill or
    the phase's end (what a fill holds beyond that, loaded up to the syringe's mark, is
    discarded with it), and split where it would run past the hang limit."""
    rate = float(phase.get("rate_ml_per_h") or 0.0)
    fills = [f for f in phase["syringe_fills"] if float(f["ml"]) > EPSILON]
    pieces: list[tuple[float, float, float, bool]] = []  # (start h, mL, runs h, hang-limited)
    if rate <= EPSILON:
        fills = []
    for number, fill in enumerate(fills):
        start, loaded = float(fill["hour"]), float(fill["ml"])
        until = float(fills[number + 1]["hour"]) if number + 1 < len(fills) else phase["end_h"]
        runs = min(loaded / rate, until - start)
        while runs > HANG_LIMIT_H + EPSILON:
            piece = syringe_load_ml(rate * HANG_LIMIT_H)
            pieces.append((start, piece, HANG_LIMIT_H, True))
            start += HANG_LIMIT_H
            runs -= HANG_LIMIT_H
            loaded -= rate * HANG_LIMIT_H
        pieces.append((start, syringe_load_ml(loaded), runs, False))
    return [
        Label(
            kind="syringe", phase_index=index, number=number + 1, of=len(pieces),
            container_ml=loaded, give_ml=loaded, start_h=start, discard_h=start + runs,
            hang_limited=limited,
        )
        for number, (start, loaded, runs, limited) in enumerate(pieces)
    ]  # fmt: skip


def splits_the_schedules_syringes(data: dict) -> bool:
    """Whether the labels change a pump's syringe where the schedule does not (a syringe
    that would run longer than the hang limit)."""
    return any(x.kind == "syringe" and x.hang_limited for x in labels(data))


def dose_hours(phase: dict) -> list[float]:
    """The hours a divided phase's doses are given at."""
    return [phase["start_h"] + i * phase["interval_h"] for i in range(phase["doses"])]


def _doses(index: int, phase: dict) -> list[Label]:
    drawn = drawn_up_dose(ml_per_site=phase["ml_per_site"], sites=phase["sites_per_dose"])
    hours = dose_hours(phase)
    return [
        Label(kind="dose", phase_index=index, number=number + 1, of=len(hours),
              container_ml=drawn.dose_ml, give_ml=drawn.dose_ml, start_h=hour, discard_h=hour)
        for number, hour in enumerate(hours)
    ]  # fmt: skip


def _stock_bags(data: dict, doses: list[Label]) -> list[Label]:
    """The bags divided doses are drawn from: one opened at the first dose it serves, used
    for the doses of the same fluid within 24 h while it holds them, then discarded."""
    chosen = _chosen(data)
    phases = data["phases"]
    bags: list[Label] = []

    def key(dose: Label) -> tuple:  # doses of one fluid share a bag
        phase = phases[dose.phase_index]
        return phase.get("fluid"), phase.get("kcl_mmol_per_l")

    waiting = sorted(doses, key=lambda d: d.start_h)
    while waiting:
        first = waiting[0]
        window = [d for d in waiting if key(d) == key(first)
                  and d.start_h < first.start_h + HANG_LIMIT_H - EPSILON]  # fmt: skip
        size = bag_size_ml(sum(d.give_ml for d in window), chosen)
        if first.give_ml > size + EPSILON:
            # one dose larger than a bag is drawn from as many bags as it needs, each giving
            # at most what it holds (never a label claiming more than its bag)
            left = first.give_ml
            while left > EPSILON:
                give = min(size, left)
                bags.append(Label(
                    kind="stock bag", phase_index=first.phase_index, number=len(bags) + 1,
                    of=0, container_ml=size, give_ml=give, start_h=first.start_h,
                    discard_h=first.start_h + HANG_LIMIT_H, hang_limited=True,
                ))  # fmt: skip
                left -= give
            waiting = waiting[1:]
            continue
        served, held = [], 0.0
        for d in window:
            if held + d.give_ml > size + EPSILON and served:
                break
            served.append(d)
            held += d.give_ml
        bags.append(
            Label(kind="stock bag", phase_index=first.phase_index, number=len(bags) + 1, of=0,
                  container_ml=size, give_ml=held, start_h=first.start_h,
                  discard_h=first.start_h + HANG_LIMIT_H, hang_limited=True)
        )  # fmt: skip
        waiting = [d for d in waiting if d not in served]
    return [replace(b, of=len(bags)) for b in bags]


def labels(data: dict) -> list[Label]:
    """Every container a plan's JSON uses, phase by phase; the stock bags of divided doses
    after the doses."""
    chosen = _chosen(data)
    found: list[Label] = []
    doses: list[Label] = []
    for index, phase in enumerate(data["phases"]):
        if phase["mode"] == "intermittent":
            doses += _doses(index, phase)
        elif phase.get("syringe_fills"):
            found += _syringes(index, phase)
        else:
            found += _bags(index, phase, chosen)
    return found + doses + _stock_bags(data, doses)


# The plan writes its bag as the recipe for one litre: "lactated Ringer's 1000 mL + …"
# (fluids.with_additive); a label names the fluid and gives the recipe for its own bag.
LITRE_RECIPE = " 1000 mL + "


def base_fluid_name(phase_fluid: str) -> str:
    """The fluid of a phase without the litre's recipe: ``lactated Ringer's``."""
    return phase_fluid.split(LITRE_RECIPE, 1)[0]


def additions(data: dict, phase: dict, bag_ml: float) -> list[str]:
    """What to add to one bag of ``bag_ml``, as the plan makes up its litre
    (:func:`vetfluid.tables.fluids.additive_volumes`: 28 mmol/L KCl from 2 mEq/mL is 7 mL in
    500 mL). A bolus of the fluid with nothing added has nothing to add."""
    fluid = data["fluid"]
    if (phase.get("fluid") or fluid["name"]) != fluid["name"]:
        return []
    kcl = phase.get("kcl_mmol_per_l") or 0.0
    wanted = (data.get("request") or {}).get("dextrose_percent") or 0.0
    kcl_ml, dextrose_ml = fluids.additive_volumes(
        bag_ml, kcl_mmol_per_l=kcl, dextrose_percent=wanted
    )
    lines = []
    if kcl_ml > 0:
        concentrate = fluids.fluid(fluids.KCL_CONCENTRATE_ID)
        mmol = kcl * bag_ml / 1000.0
        lines.append(f"add {q(kcl_ml, 'mL')} {concentrate.name} ({q(mmol, 'mmol')} KCl)")
    if dextrose_ml > 0:
        concentrate = fluids.fluid(fluids.DEXTROSE_CONCENTRATE_ID)
        lines.append(f"add {q(dextrose_ml, 'mL')} {concentrate.name}")
    return lines
