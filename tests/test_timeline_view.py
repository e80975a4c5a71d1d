"""The timeline view draws the core's arrays, keeps its curve items, and reads out values."""

from __future__ import annotations

from dataclasses import replace
from datetime import time
from pathlib import Path

import numpy as np
import pytest
from PySide6.QtCore import QPointF, Qt
from PySide6.QtGui import QColor, QPalette

from ui.course.timeline_view import TimelineView
from vetfluid.common.formatting import format_quantity
from vetfluid.course.model import SHOWN_STEP_MINUTES, course
from vetfluid.course.timeline import timeline, values_at
from vetfluid.planning.plan import PlanRequest, build_plan

ROOT = Path(__file__).resolve().parents[1]
DOG = PlanRequest(
    species_id="dog", weight_kg=20, dehydration_percent=7, replace_hours=12,
    resuscitation_boluses=1, start_time=time(22, 30),
)  # fmt: skip
GERBIL = PlanRequest(species_id="mongolian_gerbil", weight_kg=0.07, dehydration_percent=6)


@pytest.fixture
def view(qtbot):
    widget = TimelineView()
    qtbot.addWidget(widget)
    widget.resize(1000, 700)
    return widget


def curve_arrays(curve):
    x, y = curve.getData()
    return np.asarray(x), np.asarray(y)


def assert_draws(view: TimelineView, tl, per_kg: float = 1.0) -> None:
    """The curves hold the core's arrays; weights in the view's unit (1000 per kg in g)."""
    pairs = (
        (view.rate_curve, tl.rate_ml_per_h),
        (view.given_curve, tl.given_ml),
        (view.needed_curve, tl.needed_ml),
        (view.deficit_curve, tl.remaining_deficit_ml),
        (view.weight_curve, tl.weight_kg * per_kg),
    )
    for curve, expected in pairs:
        x, y = curve_arrays(curve)
        np.testing.assert_array_equal(x, tl.hours)
        np.testing.assert_array_equal(y, expected)
    overload, baseline = tl.overload_weight_kg * per_kg, tl.baseline_weight_kg * per_kg
    np.testing.assert_array_equal(curve_arrays(view.overload_curve)[1], [overload] * 2)
    np.testing.assert_array_equal(curve_arrays(view.baseline_curve)[1], [baseline] * 2)
    np.testing.assert_array_equal(curve_arrays(view.overload_curve)[0], [0, tl.end_h])


def test_curves_hold_the_core_arrays(view):
    plan = build_plan(DOG)
    view.set_plan(plan)
    tl = timeline(plan)
    assert_draws(view, tl)
    assert view.rate_curve.opts["stepMode"] == "right"  # rate[i] holds from hours[i] onward
    # 10 % over the rehydrated weight, 20 kg + 7 % deficit (1.4 L ≈ 1.4 kg), and it says so
    assert view.overload_text.text() == "overload line: rehydrated 21.4 kg + 10 % = 23.54 kg"
    assert view.weight_plot.getAxis("left").labelText == "Weight (kg)"


def test_updating_keeps_the_same_items_with_new_data(view):
    view.set_plan(build_plan(DOG))
    items = [list(plot.listDataItems()) for plot in view.plots]
    curves = view.curves
    gerbil = build_plan(GERBIL)
    view.set_plan(gerbil)
    assert view.curves == curves
    assert [list(plot.listDataItems()) for plot in view.plots] == items  # nothing added, none lost
    assert all(a is b for a, b in zip(view.curves, curves, strict=True))
    tl = timeline(gerbil)
    assert_draws(view, tl, per_kg=1000.0)  # a 70 g gerbil's weight is drawn in grams
    assert view.weight_plot.getAxis("left").labelText == "Weight (g)"
    assert view.overload_text.text().endswith(f"= {tl.overload_weight_kg * 1000:.1f} g")
    low, high = view.weight_plot.vb.viewRange()[1]
    assert low <= 70 <= high  # the range moved to grams too
    given = curve_arrays(view.given_curve)[1][-1]
    assert given == pytest.approx(sum(p.volume_ml for p in gerbil.phases))
    # the deficit and maintenance to the plan's end are needed; the doses as drawn up
    # (0.01 mL marks per site) give within a mark per site and dose of that
    need = gerbil.deficit_ml + gerbil.maintenance.ml_per_h * gerbil.end_h
    marks = sum(p.doses * p.sites_per_dose for p in gerbil.phases) * 0.005
    assert given == pytest.approx(need, abs=marks + 0.01)
    assert view.rate_plot.titleLabel.text.startswith("Planned rate (divided doses")


def test_hover_read_out_at_an_hour(view):
    plan = build_plan(DOG)
    view.set_plan(plan)
    view.show_hour(6.01)
    values = values_at(timeline(plan), 6.0)
    text = view.readout.text()
    assert text.startswith("At 6 h, 04:30 (+1 d):")
    for expected in (
        format_quantity(values["rate_ml_per_h"], "mL/h"),
        format_quantity(values["given_ml"], "mL"),
        format_quantity(values["needed_ml"], "mL"),
        format_quantity(values["remaining_deficit_ml"], "mL"),
    ):
        assert expected in text
    assert "rate 169 mL/h" in text and "deficit still to give 442 mL" in text
    # the course's weight (issue 20: one weight prediction); the deficit still to give is the
    # plan's account, not a weight
    weight = course(plan, step_minutes=SHOWN_STEP_MINUTES).at(6.0)["weight_kg"]
    assert f"weight {view._weight_text(weight)}" in text and values["weight_kg"] == weight
    assert all(line.value() == 6.0 and line.isVisible() for line in view.hover_lines)
    gerbil = build_plan(GERBIL)  # on divided doses the rate is an average, and says so
    view.set_plan(gerbil)
    view.show_hour(1.0)
    assert "doses average " in view.readout.text() and "rate " not in view.readout.text()
    assert "weight 7" in view.readout.text() and view.readout.text().endswith(" g")


def test_hover_follows_a_scene_position(view, qtbot):
    view.set_plan(build_plan(DOG))
    view.show()
    qtbot.waitExposed(view)
    for plot in (view.volume_plot, view.weight_plot):
        y = plot.vb.viewRange()[1][0]
        scene_pos = plot.vb.mapViewToScene(QPointF(9.0, y + 0.5 * (plot.vb.viewRange()[1][1] - y)))
        view.on_mouse_moved(scene_pos)
        assert view.hover_hour == pytest.approx(9.0, abs=5 / 60 / 2 + 1e-9)
        assert view.readout.text().startswith("At 9 h, 07:30 (+1 d):")
    view.on_mouse_moved(QPointF(-500, -500))  # off every plot: nothing moves
    assert view.hover_hour == pytest.approx(9.0, abs=0.05)


def test_empty_view_says_so(view):
    assert "No plan yet" in view.readout.text()
    view.show_hour(3)
    assert not any(line.isVisible() for line in view.hover_lines)
    assert view.accessibleName() == "Rehydration timeline"


def test_no_plan_empties_the_view_and_keeps_its_items(view):
    view.set_plan(build_plan(DOG))
    view.show_hour(4)
    curves = view.curves
    view.set_plan(None)  # the session publishes None while an input is missing
    assert view.timeline is None and view.curves == curves
    assert all(c.getData()[0] is None or len(c.getData()[0]) == 0 for c in view.curves)
    assert "No plan yet" in view.readout.text()
    assert not any(line.isVisible() for line in view.hover_lines)
    view.set_plan(build_plan(GERBIL))
    assert_draws(view, timeline(build_plan(GERBIL)), per_kg=1000.0)


def test_axes_carry_units_and_clock_time(view):
    view.set_plan(build_plan(DOG))
    labels = [plot.getAxis("left").labelText for plot in view.plots]
    assert labels == ["Rate (mL/h)", "Volume (mL)", "Deficit (mL)", "Weight (kg)"]
    bottom = view.weight_plot.getAxis("bottom")
    assert "(h)" in bottom.labelText and "clock" in bottom.labelText
    assert bottom.tickStrings([0, 6], 1, 6) == ["0 h\n22:30", "6 h\n04:30 (+1 d)"]
    assert not any(plot.getAxis(n).autoSIPrefix for plot in view.plots for n in ("left", "bottom"))
    view.set_plan(build_plan(GERBIL))
    assert bottom.tickStrings([0, 6], 1, 6) == ["0 h", "6 h"]
    assert "clock" not in bottom.labelText
    left = view.weight_plot.getAxis("left")
    assert left.tickStrings([0.07, 0.072], 1, 0.002) == ["0.07", "0.072"]  # leading zero kept


def test_hour_ticks_fall_on_clinical_intervals(view):
    view.set_plan(build_plan(DOG))
    major, minor = view.hour_axis.tickSpacing(0, 24, 700)
    assert major[0] in (2, 3, 4, 6, 8, 12) and major[0] % minor[0] == 0


def test_weight_axis_holds_still_for_small_changes_and_always_shows_the_lines(view):
    def shown(weight_kg: float):
        tl = timeline(build_plan(replace(DOG, weight_kg=weight_kg)))
        view.set_timeline(tl)
        low, high = view.weight_plot.vb.viewRange()[1]
        lines = (float(tl.weight_kg.min()), tl.baseline_weight_kg, tl.overload_weight_kg)
        assert low < min(lines) and max(lines) < high  # every line, and room above for the label
        return low, high

    first = shown(24.0)
    assert shown(24.5) == first and shown(23.5) == first  # a digit typed: the axis stays
    moved = shown(40.0)
    assert moved[0] > first[1]  # a new patient size: a fresh fit, not the old axis stretched


def test_value_axes_grow_at_once_and_shrink_only_when_the_line_fills_little(view):
    def ceiling_after(top: float) -> float:
        view._fit_from_zero(view.volume_plot, top)
        low, high = view.volume_plot.vb.viewRange()[1]
        assert low < 0 < top < high  # the line and the 0 label are always in view
        return high / 1.05

    assert ceiling_after(24.0) == pytest.approx(25)
    assert ceiling_after(26.0) == pytest.approx(50)  # off the top: grows at once
    assert ceiling_after(24.0) == pytest.approx(50)  # back under 25 but half full: stays
    assert ceiling_after(21.0) == pytest.approx(50)  # 42 % full: stays
    assert ceiling_after(19.0) == pytest.approx(20)  # 38 % full: a fresh fit


def test_plots_share_the_hour_axis(view):
    view.set_plan(build_plan(DOG))
    view.rate_plot.setXRange(2, 8, padding=0)
    for plot in view.plots:
        assert plot.vb.viewRange()[0] == pytest.approx([2, 8])


def test_legends_name_every_curve_and_styles_differ_without_colour(view):
    view.set_plan(build_plan(DOG))
    named = {
        label.text: sample.item for plot in view.plots for sample, label in plot.legend.items
    }  # fmt: skip
    assert set(named.values()) == set(view.curves)  # every line
    assert {"Given", "Needed", "Overload line", "Predicted weight", "Entered weight"} <= set(named)
    for plot in view.plots:
        styles = [item.opts["pen"].style() for item in plot.listDataItems()]
        assert len(set(styles)) == len(styles), "two curves in one plot differ only by colour"
    assert view.needed_curve.opts["pen"].style() == Qt.PenStyle.DashLine


def test_follows_a_dark_palette(view):
    view.set_plan(build_plan(DOG))
    palette = view.palette()
    palette.setColor(QPalette.ColorRole.Base, QColor("#151515"))
    palette.setColor(QPalette.ColorRole.Text, QColor("#eeeeee"))
    view.setPalette(palette)
    assert view.graphics.backgroundBrush().color() == QColor("#151515")
    assert view.weight_plot.getAxis("left").textPen().color() == QColor("#eeeeee")


def test_accessible_description_summarises_the_plan(view):
    view.set_plan(build_plan(DOG))
    description = view.accessibleDescription()
    assert "2948 mL given" in description and "overload line at 23.54 kg" in description


def test_renders_a_picture(view, qtbot):
    view.set_plan(build_plan(DOG))
    view.show()
    qtbot.waitExposed(view)
    view.show_hour(6)
    picture = view.grab().toImage()
    assert (picture.width(), picture.height()) == (1000, 700)
    out = ROOT / "renders"
    out.mkdir(exist_ok=True)
    assert picture.save(str(out / "timeline_view.png"))
    colours = {
        picture.pixel(x, y) for x in range(0, picture.width(), 5) for y in range(0, 700, 5)
    }  # fmt: skip
    assert len(colours) > 20, "rendered timeline is blank"
    # each curve colour is on screen somewhere
    wanted = {QColor(c).rgb() & 0xFFFFFF for c in ("#3873b8", "#cf6a17", "#2e8c5a")}
    seen = {
        picture.pixel(x, y) & 0xFFFFFF for x in range(picture.width()) for y in range(0, 700, 2)
    }  # fmt: skip
    assert wanted <= seen


def test_the_hour_axis_ends_on_a_round_hour_and_holds_still_through_small_edits():
    # Our display rule (no source): a plan ending at hour 84 or 90 is shown to hour 90 or 96
    # (quarter days; whole days past four days), and an edit that moves the end within what
    # is shown leaves the axis as it is; one that more than halves it fits it afresh.
    from ui.course.timeline_view import hours_shown

    assert hours_shown(36.0, None) == 36.0
    assert hours_shown(43.0, None) == 48.0
    assert hours_shown(90.0, None) == 90.0
    assert hours_shown(100.0, None) == 120.0
    assert hours_shown(84.0, 96.0) is None  # still fits and fills more than half
    assert hours_shown(97.0, 96.0) == 120.0  # no longer fits
    assert hours_shown(24.0, 96.0) == 24.0  # less than half of it: fitted afresh


def test_the_read_out_is_shown_whole_in_a_narrow_view(view, qtbot):
    """At a 1280-pixel window the timeline is about 780 pixels wide, and a read-out can be
    longer (divided doses, a weight in grams): it goes on two lines rather than lose its end."""
    view.resize(700, 700)
    view.show()
    qtbot.waitExposed(view)
    view.set_plan(build_plan(GERBIL))
    view.show_hour(1.0)
    readout = view.readout
    assert readout.fontMetrics().horizontalAdvance(readout.text()) > readout.contentsRect().width()
    room = readout.contentsRect()
    wrap = int(Qt.TextFlag.TextWordWrap.value) if readout.wordWrap() else 0
    needed = readout.fontMetrics().boundingRect(room, wrap, readout.text())
    assert needed.width() <= room.width() and needed.height() <= room.height(), readout.text()
