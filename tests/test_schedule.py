"""The work schedule (layerplan/schedule.py), its plan.json section and its printed sheet.

The time rules are the printed plan's (layerplan/sheets.py: 5 s a stroke, 250 mm/s, 3 min a paint
change, 10 m²/h rolling; from memory); the worked example below is computed by hand from them.
10 °C and no rain for acrylics is common practice (makers' tins say so).
"""

from __future__ import annotations

import json

import numpy as np
import pytest

from layerplan import options, schedule
from layerplan.plan import Layer, Paint, Plan, Stroke
from layerplan.quantities import paint_use
from layerplan.schedule import work_schedule


def _wall(strokes_per_column=1, columns=4, reach=1000.0) -> Plan:
    """A 4 × 1 m wall in P1; in one 50 mm layer, 500 mm horizontal P2 strokes, each column of 1 m zones alike."""
    strokes = [Stroke("P2", 50.0, np.array([[c * reach + 250.0, 200.0 + 100 * k], [c * reach + 750.0, 200.0 + 100 * k]]))
               for c in range(columns) for k in range(strokes_per_column)]
    return Plan(columns * reach, 1000.0, 80, 20, 50.0,
                [Paint("P1", "#eeeeee", (94.0, 0.0, 0.0)), Paint("P2", "#223388", (25.0, 15.0, -45.0))], "P1",
                [Layer(50.0, strokes)], extra={"settings": {"reach_mm": reach}})


def test_worked_example_two_painters():
    """By hand: each stroke 5 s + 500 mm / 250 mm/s = 7 s; two painters take columns A–B and C–D, two
    strokes and one paint each: 2 × 7 + 180 = 194 s apiece, 388 s of crew time. Ground 4 m² × 2 coats
    / 10 m²/h = 0.8 h, 0.4 h a coat shared by two: 0.2 h each coat at the wall.
    Clock (6 h a day, 4 h drying): coat 1 0–0.2 h, dry to 4.2; coat 2 4.2–4.4, dry to 8.4, past the
    day's 6 h, so the layer goes on day 2. Two days.
    """
    plan = _wall()
    s = work_schedule(plan, paint_use(plan), crew=2, hours_per_day=6, drying_hours=4)
    layer = s["tasks"][-1]
    assert [p["columns"] for p in layer["painters"]] == ["A–B", "C–D"]
    assert [p["hours"] for p in layer["painters"]] == [round(194 / 3600, 2)] * 2
    assert s["hours"] == pytest.approx(0.8 + 388 / 3600, abs=0.01)
    assert s["painting_hours"] == pytest.approx(0.4 + 194 / 3600, abs=0.01)
    assert s["days"] == 2
    assert [t["start_day"] for t in s["tasks"]] == [1, 1, 2]
    assert s["days_list"][0]["dry_after"] == "ground, coat 2 of 2"


def test_no_drying_fits_one_day():
    plan = _wall()
    s = work_schedule(plan, paint_use(plan), crew=2, hours_per_day=6, drying_hours=0)
    assert s["days"] == 1


def test_one_painter_takes_the_printed_plans_time():
    from layerplan.sheets import GROUND_M2_PER_HOUR, layer_time_s

    plan = _wall(strokes_per_column=3)
    use = paint_use(plan)
    s = work_schedule(plan, use, crew=1)
    sheet_hours = (use["wall_area_m2"] * use["ground_coats"] / GROUND_M2_PER_HOUR
                   + sum(layer_time_s(layer) for layer in plan.layers) / 3600)
    assert s["hours"] == pytest.approx(sheet_hours, abs=0.01)
    assert s["painting_hours"] == s["hours"]


def test_painters_never_share_a_zone_and_cover_every_stroke():
    plan = _wall(strokes_per_column=2, columns=7, reach=800.0)
    s = work_schedule(plan, paint_use(plan), crew=3)
    layer = s["tasks"][-1]
    bands = [p["band_mm"] for p in layer["painters"]]
    assert len(bands) == 3
    for (a0, a1), (b0, b1) in zip(bands, bands[1:]):
        assert a1 <= b0  # side by side, never overlapping
    assert sum(p["strokes"] for p in layer["painters"]) == len(plan.layers[0].strokes)


def test_more_painters_than_columns_are_said_idle():
    plan = _wall(columns=2)
    s = work_schedule(plan, paint_use(plan), crew=4)
    assert s["idle_painters"] == [{"layer": 1, "painters": 2}]


def test_labour_cost_is_paid_hours_times_rate():
    plan = _wall()
    s = work_schedule(plan, paint_use(plan), crew=2, labour_rate=25.0)
    # by hand (the worked example above): 2 painters × (0.4 h + 194 s) at the wall = 0.9078 h, at 25 an hour 22.69
    assert s["paid_hours"] == pytest.approx(2 * (0.4 + 194 / 3600), abs=0.005)
    assert s["labour_cost"] == pytest.approx(2 * (0.4 + 194 / 3600) * 25.0, abs=0.005)


def test_weather_notes_say_ten_degrees_and_no_rain():
    s = work_schedule(_wall(), paint_use(_wall()))
    text = " ".join(s["weather"])
    assert "10 °C" in text and "rain" in text  # common practice for acrylics


@pytest.mark.parametrize("kw,match", [({"crew": 0}, "crew must be"), ({"crew": 1.5}, "crew must be a whole"),
                                      ({"hours_per_day": 25}, "hours_per_day"), ({"drying_hours": -1}, "drying_hours"),
                                      ({"labour_rate": -3}, "labour_rate")])
def test_bad_options_are_named(kw, match):
    with pytest.raises(ValueError, match=match):
        work_schedule(_wall(), paint_use(_wall()), **kw)


def test_option_defaults_are_the_schedules():
    assert options.OPTIONS["day_hours"].default == schedule.HOURS_PER_DAY
    assert options.OPTIONS["drying"].default == schedule.DRYING_HOURS
    assert options.OPTIONS["crew"].maximum == schedule.MAX_CREW


def test_plan_json_and_printed_plan_carry_the_schedule():
    from layerplan.export import build_files

    plan = _wall()
    files = build_files(plan, crew=2, drying_hours=4.0, enlargements_per_layer=0)
    doc = json.loads(files["plan.json"])
    assert doc["schedule"]["crew"] == 2 and doc["schedule"]["days"] == 2
    assert "schedule" not in plan.extra  # derived figures are written to the file, never into the plan
    html = files["plan.html"].decode()
    assert 'id="schedule"' in html and "day 2" in html and "painter 2" in html
    # a plan read back without the key still loads and exports again
    again = Plan.from_json(files["plan.json"].decode())
    assert json.loads(build_files(again, crew=2, enlargements_per_layer=0)["plan.json"])["schedule"] == doc["schedule"]
