"""The real wall (layerplan/openings.py): windows, doors and vents, and the colour the wall has.

Checked against the rendering rule's own reference (:func:`layerplan.raster.paint_strokes`,
pixel by pixel), against areas and litres worked by hand with the trade's rule that every
opening is deducted from the painted area (common practice in painters' estimating), and
against CIEDE2000 (Sharma et al. 2005) for the wall's colour.
"""

from __future__ import annotations

import json

import numpy as np
import pytest
from PIL import Image
from skimage import data

from layerplan.cli import main
from layerplan.coats import coats_over
from layerplan.openings import (Opening, colour_lab, ground_area_m2, opening_mask, plan_mask, union_area_mm2,
                                wall_ground)
from layerplan.options import OPTIONS, OptionError, check_openings_fit
from layerplan.pipeline import make_plan
from layerplan.plan import Paint, Plan
from layerplan.quantities import paint_use
from layerplan.raster import picture, render_steps, stroke_mask
from layerplan.settings import Settings

#: a 1.6 × 1.2 m wall with two windows and a door, the scenario a muralist meets (our own invention)
OPENINGS = ((200.0, 150.0, 300.0, 400.0), (1050.0, 150.0, 300.0, 400.0), (650.0, 600.0, 300.0, 600.0))


@pytest.fixture(scope="module")
def wall_plan():
    photo = data.astronaut()[::4, ::4]  # scikit-image's test photo, 128 × 128
    settings = Settings(wall_width_mm=1600.0, wall_height_mm=1200.0, brushes_mm=(80.0, 30.0), paints=5,
                        mm_per_px=10.0, openings=OPENINGS, seed=3)
    return make_plan(photo, settings)


# ------------------------------------------------------------------ reading the option
def test_opening_option_reads_metres_and_own_units():
    assert OPTIONS["openings"].parse("1.0,1.2,0.9,1.8m") == ((1000.0, 1200.0, 900.0, 1800.0),)
    # each number may carry its own unit; 1 ft = 304.8 mm exactly (NIST SP 811, Appendix B)
    assert OPTIONS["openings"].parse("1ft,0,50cm,2ft") == ((304.8, 0.0, 500.0, 609.6),)
    # the web form's field: one a line
    assert len(OPTIONS["openings"].parse("0,0,1,1m\n2,0,1,1m")) == 2


@pytest.mark.parametrize("text,message", [
    ("1,1.2,0.9,1.8", "needs a unit"),
    ("1,1.2,0.9m", "must be 4 numbers"),
    ("1,1.2,0,1.8m", "width and height > 0"),
    ("-1,1.2,0.9,1.8m", "start inside the wall"),
    ("1,1.2,0.9,1.8parsecs", "unknown unit"),
])
def test_bad_openings_are_refused_with_a_reason(text, message):
    with pytest.raises(OptionError, match=message):
        OPTIONS["openings"].parse(text)


def test_openings_must_fit_the_wall_and_leave_some_of_it():
    with pytest.raises(OptionError, match="opening 2 .* reaches past the 2 x 1 m wall"):
        check_openings_fit(2000.0, 1000.0, [(0, 0, 500, 500), (1800, 0, 500, 500)])
    with pytest.raises(OptionError, match="cover the whole wall"):
        check_openings_fit(2000.0, 1000.0, [(0, 0, 1200, 1000), (1000, 0, 1000, 1000)])
    with pytest.raises(OptionError, match="at most 50 openings"):
        OPTIONS["openings"].check([(0, 0, 1, 1)] * 51)


def test_cli_takes_repeated_openings_and_refuses_one_past_the_wall(tmp_path):
    photo = tmp_path / "p.png"
    Image.fromarray(data.astronaut()[::8, ::8]).save(photo)
    args = ["plan", str(photo), "--wall", "1x0.8m", "--pixel-mm", "20", "--brushes", "100,50", "--paints", "3",
            "--quiet", "--out", str(tmp_path / "out")]
    assert main([*args, "--opening", "0.1,0.1,0.3,0.3m", "--opening", "0.6,0.2,0.2,0.6m"]) == 0
    doc = json.loads((tmp_path / "out" / "plan.json").read_text())
    assert doc["openings"][1] == {"x_mm": 600.0, "y_mm": 200.0, "width_mm": 200.0, "height_mm": 600.0}
    # hand-worked: 0.8 m² less 0.09 and 0.12 m² of openings
    assert doc["paint_use"]["ground_area_m2"] == pytest.approx(0.59)
    assert main([*args[:-1], str(tmp_path / "out2"), "--opening", "0.9,0.1,0.3,0.3m"]) != 0
    assert not (tmp_path / "out2").exists()


# ------------------------------------------------------------------ the rule and the areas
def test_mask_holds_the_pixels_whose_centre_is_inside():
    # pixel (i, j) stands for the point ((j + 0.5) s, (i + 0.5) s): the rendering rule (layerplan/raster.py)
    mask = opening_mask([Opening(10.0, 0.0, 20.0, 10.0)], (3, 5), 10.0)
    assert mask.tolist() == [[False, True, True, False, False], [False] * 5, [False] * 5]


def test_union_of_overlapping_openings_counts_the_overlap_once():
    # hand-worked: two 2 × 2 squares overlapping in a 1 × 1 square cover 4 + 4 − 1 = 7
    assert union_area_mm2([Opening(0, 0, 2, 2), Opening(1, 1, 2, 2)]) == pytest.approx(7.0)


def _plan_with(openings=(), wall_colour=None):
    palette = [Paint("P1", "#f0f0f0", (95.0, 0.0, 0.0)), Paint("P2", "#2050a0", (35.0, 10.0, -50.0))]
    extra = {"settings": {"wall_unit": "m"}}
    if openings:
        extra["openings"] = [Opening(*o).to_dict() for o in openings]
    if wall_colour is not None:
        extra["wall_colour"] = wall_colour
    return Plan(4000.0, 2500.0, 400, 250, 10.0, palette, "P1", [], extra)


def test_ground_area_and_litres_deduct_a_window_and_a_door():
    # Worked by hand. The trade deducts every opening from the painted area (common practice).
    # 4 × 2.5 m wall = 10 m²; window 0.9 × 1.2 = 1.08 m², door 0.9 × 2.1 = 1.89 m²; ground 7.03 m².
    # 2 coats at 10 m²/L = 1.406 L, plus 15 % waste = 1.6169 L.
    plan = _plan_with([(500, 600, 900, 1200), (2600, 400, 900, 2100)])
    use = paint_use(plan)
    assert use["wall_area_m2"] == pytest.approx(10.0)
    assert use["ground_area_m2"] == pytest.approx(7.03) == ground_area_m2(plan)
    ground = use["paints"][0]
    assert ground["ground_area_m2"] == pytest.approx(7.03)
    assert ground["litres"] == pytest.approx(1.617, abs=5e-4)


def test_a_wall_in_the_ground_paint_buys_no_ground_coats():
    plan = _plan_with(wall_colour={"serves_as_ground": True, "ground_coats": 0})
    use = paint_use(plan)
    assert use["ground_coats"] == 0 and use["paints"][0]["litres"] == 0.0 and use["ground_note"] == "serves"


def test_wall_colour_close_to_a_paint_serves_as_the_ground():
    pal = np.array([[95.0, 0.0, 0.0], [35.0, 10.0, -50.0], [60.0, 40.0, 30.0]])
    # a wall 1 L* off the dark blue: ΔE00 under the mixing tolerance (3), so it is that paint
    chosen, wall = wall_ground(pal, 0, (36.0, 10.0, -50.0), tolerance_de=3.0)
    assert chosen == 1 and wall["serves_as_ground"] and wall["ground_coats"] == 0
    # a navy wall (L* 20) under the white ground: 75 L* lighter takes 3 coats by the coats rule
    chosen, wall = wall_ground(pal, 0, (20.0, 5.0, -30.0), tolerance_de=3.0)
    assert chosen == 0 and not wall["serves_as_ground"]
    assert wall["ground_coats"] == int(coats_over(pal[0], np.array([20.0, 5.0, -30.0]))) == 3
    # #ffffff is CIELAB (100, 0, 0) (CIE 15:2004, D65 white point)
    assert colour_lab("#ffffff") == pytest.approx((100.0, 0.0, 0.0), abs=0.01)


# ------------------------------------------------------------------ a planned wall
def test_no_stroke_covers_a_pixel_centre_inside_an_opening(wall_plan):
    shut = plan_mask(wall_plan)
    assert shut is not None and shut.sum() == 30 * 40 * 2 + 30 * 60  # pixel centres, 10 mm pixels
    assert wall_plan.stroke_count() > 20  # the photo is painted around them
    for layer in wall_plan.layers:
        for s in layer.strokes:
            # stroke_mask is the rendering rule applied pixel by pixel (raster.paint_strokes)
            assert not (stroke_mask(s.path_mm, s.width_mm, wall_plan.mm_per_px, shut.shape) & shut).any()


def test_openings_are_transparent_in_every_picture_and_written_in_plan_json(wall_plan, tmp_path):
    shut = plan_mask(wall_plan)
    for canvas in render_steps(wall_plan):
        alpha = picture(wall_plan, canvas)[..., 3]
        assert np.array_equal(alpha == 0, shut)
    from layerplan.export import write_outputs

    write_outputs(wall_plan, tmp_path / "plan")
    final = np.asarray(Image.open(tmp_path / "plan" / "final.png"))
    assert final.shape[2] == 4 and np.array_equal(final[..., 3] == 0, shut)
    doc = json.loads((tmp_path / "plan" / "plan.json").read_text())
    assert [tuple(o.values()) for o in doc["openings"]] == list(OPENINGS)
    # hand-worked: 1.92 m² less 2 × 0.12 and 0.18 m²
    assert doc["paint_use"]["ground_area_m2"] == pytest.approx(1.5)
    assert Plan.from_dict(doc).extra["openings"] == doc["openings"]  # read back unchanged
    svg = (tmp_path / "plan" / "overlay.svg").read_text()
    assert svg.count('class="opening"') == 3
    html = (tmp_path / "plan" / "plan.html").read_text()
    assert "Hatched: openings, not painted." in html


def test_a_plan_without_openings_has_no_key_and_an_opaque_picture():
    plan = _plan_with()
    assert "openings" not in plan.to_dict() and plan_mask(plan) is None
    canvas = np.zeros((plan.height_px, plan.width_px), np.int16)
    assert picture(plan, canvas).shape[2] == 3


def test_web_form_takes_openings_and_names_the_field_when_one_is_past_the_wall(client):
    from conftest import plan_form

    bad = client.post("/api/plans", data=plan_form(wall_width="2", wall_height="1", unit="m",
                                                   openings="0.2,0.2,0.5,0.5m\n1.8,0.2,0.5,0.5m"),
                      content_type="multipart/form-data")
    assert bad.status_code == 400
    assert "Openings" in bad.get_json()["error"] and "opening 2" in bad.get_json()["error"]
    page = client.get("/")
    assert b'name="openings"' in page.data and b'name="wall_colour"' in page.data
