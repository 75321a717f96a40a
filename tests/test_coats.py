"""Coats from what a stroke covers (layerplan/coats.py), on synthetic plans with known answers.

Trade facts checked here are common practice in wall painting: light over dark takes 2–3 coats, dark
over light one; bright reds and yellows hide poorly (transparent organic pigments). CIELAB values
of the test colours come from colour-science (a general-purpose reference library), not from
layerplan's own conversion.
"""

from __future__ import annotations

import json
import warnings

import numpy as np
import pytest

from layerplan.coats import (
    LIGHTER_2_COATS_L,
    MAX_COATS,
    MIN_SHARE,
    coat_notes,
    coats_over,
    covered_pixels,
    low_hiding,
    stroke_coats,
    with_coats,
)
from layerplan.plan import Layer, Paint, Plan, Stroke
from layerplan.raster import render, stroke_mask

with warnings.catch_warnings():
    warnings.simplefilter("ignore")  # colour-science warns that matplotlib is missing
    import colour


def ref_lab(srgb_hex: str) -> tuple[float, float, float]:
    """CIELAB (D65, 2°) of an sRGB colour by colour-science (IEC 61966-2-1, CIE 15:2004)."""
    rgb = np.array([int(srgb_hex[i:i + 2], 16) for i in (1, 3, 5)]) / 255.0
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        lab = colour.XYZ_to_Lab(colour.sRGB_to_XYZ(rgb))
    return tuple(float(v) for v in lab)


# an invented scenario: a school-yard wall in a navy ground with cream, red and yellow lettering
NEAR_WHITE, NAVY, RED, YELLOW, OCHRE, GREY = "#f4f1ea", "#1b2a55", "#d02a24", "#ffd21e", "#a0703c", "#808080"


def paint(pid: str, srgb: str) -> Paint:
    return Paint(pid, srgb, ref_lab(srgb))


def plan_of(strokes, *, ground="P2", palette=None, w=1000.0, h=600.0, s=10.0) -> Plan:
    palette = palette or [paint("P1", NEAR_WHITE), paint("P2", NAVY), paint("P3", RED), paint("P4", YELLOW)]
    return Plan(w, h, int(w / s), int(h / s), s, palette, ground, [Layer(50.0, strokes)])


def bar(pid: str, y: float, x0: float = 100.0, x1: float = 900.0, width: float = 50.0, **kw) -> Stroke:
    return Stroke(pid, width, np.array([[x0, y], [x1, y]]), **kw)


# ---------------------------------------------------------------------------------- the rule
def test_light_over_dark_takes_two_or_more_coats_dark_over_light_one():
    # common practice: light over dark 2–3 coats; a dark paint hides a light one in one coat
    white, navy = ref_lab(NEAR_WHITE), ref_lab(NAVY)
    assert white[0] - navy[0] > 60  # the reference library agrees this is a big lightness step
    assert 2 <= coats_over(white, navy) <= 3
    assert coats_over(navy, white) == 1
    # a paint over itself, or over a colour of the same lightness, needs no more than one
    assert coats_over(white, white) == 1
    assert coats_over(ref_lab(GREY), ref_lab("#7f7f85")) == 1


def test_coats_never_fall_as_the_step_gets_lighter():
    # greys from black to white under a white paint: the lighter the covered grey, the fewer coats
    under = np.array([ref_lab("#%02x%02x%02x" % (v, v, v)) for v in range(0, 256, 15)])
    white = np.array(ref_lab("#ffffff"))
    got = coats_over(white[None, :], under)
    assert np.all(np.diff(got) <= 0)
    assert got[0] >= 2 and got[-1] == 1
    assert np.all((got >= 1) & (got <= MAX_COATS))


def test_the_two_coat_threshold_sits_at_the_stated_lightness_step():
    # neutral greys either side of the documented step (L* measured by colour-science)
    light = np.array([70.0, 0.0, 0.0])
    just_under = light - [LIGHTER_2_COATS_L - 1.0, 0, 0]
    just_over = light - [LIGHTER_2_COATS_L + 1.0, 0, 0]
    assert coats_over(light, just_under) == 1
    assert coats_over(light, just_over) == 2


def test_bright_reds_and_yellows_hide_poorly_earth_colours_and_neutrals_do_not():
    # common practice: bright reds and yellows are made from transparent organic pigments; earth
    # colours (iron oxides) and neutrals hide well
    labs = np.array([ref_lab(c) for c in (RED, YELLOW, "#ff7a00", OCHRE, NAVY, GREY, NEAR_WHITE)])
    assert low_hiding(labs).tolist() == [True, True, True, False, False, False, False]
    # so a red over a near-white takes a coat more than a navy over it, though both are darker
    assert coats_over(ref_lab(RED), ref_lab(NEAR_WHITE)) == coats_over(ref_lab(NAVY), ref_lab(NEAR_WHITE)) + 1
    # and a yellow over navy takes a coat more than a neutral grey of the yellow's own lightness
    yellow = ref_lab(YELLOW)
    same_l_grey = (yellow[0], 0.0, 0.0)
    assert coats_over(yellow, ref_lab(NAVY)) == min(MAX_COATS, coats_over(same_l_grey, ref_lab(NAVY)) + 1)
    assert coats_over(yellow, ref_lab(NAVY)) >= 3


# ------------------------------------------------------------------------- on a synthetic plan
def test_near_white_bar_over_navy_ground_gets_two_coats_navy_over_it_one():
    plan = with_coats(plan_of([bar("P1", 200.0), bar("P2", 200.0, x0=300.0, x1=700.0)]))
    first, second = plan.layers[0].strokes
    assert first.coats >= 2  # light over the navy ground
    assert second.coats == 1  # navy back over the near-white
    # the picture is the same whatever the coats
    assert np.array_equal(render(plan), render(plan_of([bar("P1", 200.0), bar("P2", 200.0, x0=300.0, x1=700.0)])))


def test_covered_pixels_match_the_reference_renderer():
    # the rendering rule by its pixel-by-pixel reference (raster.stroke_mask): count what is under each stroke
    strokes = [bar("P1", 200.0), bar("P3", 230.0, width=40.0), Stroke("P4", 30.0, np.array([[150.0, 100.0],
               [500.0, 400.0], [800.0, 150.0]])), Stroke("P1", 60.0, np.array([[420.0, 260.0]]))]
    plan = plan_of(strokes)
    idx = plan.paint_index()
    canvas = np.full((plan.height_px, plan.width_px), idx[plan.ground])
    expect = []
    for s in strokes:
        mask = stroke_mask(s.path_mm, s.width_mm, plan.mm_per_px, canvas.shape)
        expect.append(np.bincount(canvas[mask], minlength=len(plan.palette)))
        canvas[mask] = idx[s.paint]
    assert np.array_equal(covered_pixels(plan)[0], np.array(expect))


def test_a_stroke_takes_the_coats_a_quarter_of_it_needs():
    # a near-white bar first laid over a near-white band, with a navy share of 10 % or 40 %
    # (the ground is navy; the band is painted first in near-white)
    def share_plan(x_band_end):
        band = Stroke("P1", 200.0, np.array([[0.0, 300.0], [x_band_end, 300.0]]))
        return plan_of([band, bar("P1", 300.0, x0=50.0, x1=950.0, width=40.0)])

    for end, coats_wanted in ((900.0, 1), (450.0, 2)):
        plan = share_plan(end)
        cover = covered_pixels(plan)[0][1]
        navy_share = cover[plan.paint_index()["P2"]] / cover.sum()
        assert (navy_share >= MIN_SHARE) == (coats_wanted > 1)
        coats, over = stroke_coats(plan)[0]
        assert coats[1] == (1 if coats_wanted == 1 else coats_over(plan.paint("P1").lab, plan.paint("P2").lab))
        assert (over[1] == plan.paint_index()["P2"]) == (coats_wanted > 1)


def test_strokes_covering_nothing_keep_one_coat():
    # a stroke wholly off the wall covers no pixel: nothing to hide
    plan = with_coats(plan_of([bar("P1", -500.0)]))
    assert plan.layers[0].strokes[0].coats == 1


def test_notes_say_which_paint_takes_more_coats_over_which():
    plan = with_coats(plan_of([bar("P1", 150.0), bar("P1", 300.0), bar("P2", 450.0)]))
    notes = coat_notes(plan)[0]
    assert [(n.paint, n.over, n.strokes) for n in notes] == [("P1", "P2", 2)]
    assert notes[0].coats == (plan.layers[0].strokes[0].coats,)
    # with every stroke given that many coats anyway, nothing is extra
    assert coat_notes(plan, minimum=max(notes[0].coats))[0] == []


# ------------------------------------------------------------------------------ plan.json
def test_coats_are_written_only_when_more_than_one_and_read_back():
    plan = with_coats(plan_of([bar("P1", 200.0), bar("P2", 400.0)]))
    doc = plan.to_dict()
    first, second = doc["layers"][0]["strokes"]
    assert first["coats"] == plan.layers[0].strokes[0].coats >= 2
    assert "coats" not in second
    again = Plan.from_json(plan.to_json())
    assert [s.coats for s in again.layers[0].strokes] == [s.coats for s in plan.layers[0].strokes]


def test_old_plan_without_coats_reads_as_one_coat():
    doc = plan_of([bar("P1", 200.0)]).to_dict()
    assert "coats" not in doc["layers"][0]["strokes"][0]
    old = Plan.from_json(json.dumps(doc))
    assert old.layers[0].strokes[0].coats == 1


@pytest.mark.parametrize("bad", [0, -1, 2.5, 2.0, "2", True, None])
def test_bad_coats_in_plan_json_are_refused_with_the_place(bad):
    doc = plan_of([bar("P1", 200.0), bar("P2", 400.0)]).to_dict()
    doc["layers"][0]["strokes"][1]["coats"] = bad
    with pytest.raises(ValueError, match=r"layer 1, stroke 2: coats must be a whole number >= 1, got "):
        Plan.from_dict(doc)


@pytest.mark.parametrize("bad", [0, 1.5, "3", False])
def test_a_stroke_refuses_bad_coats(bad):
    with pytest.raises(ValueError, match=r"stroke coats must be a whole number >= 1"):
        bar("P1", 100.0, coats=bad)


def test_a_stroke_takes_numpy_integers_as_coats():
    assert bar("P1", 100.0, coats=np.int64(3)).coats == 3
    assert type(bar("P1", 100.0, coats=np.int64(3)).coats) is int


# ------------------------------------------------------------------------- times and sheets
def test_layer_time_counts_each_coat_again_but_washes_once():
    # the sheets' rule of thumb (from memory): per stroke SECONDS_PER_STROKE plus its length at
    # STROKE_MM_PER_SECOND, once per coat; one wash per run of a paint
    from layerplan.sheets import PAINT_CHANGE_SECONDS, SECONDS_PER_STROKE, STROKE_MM_PER_SECOND, layer_time_s

    one = bar("P1", 100.0, x0=0.0, x1=1000.0)
    two = bar("P1", 200.0, x0=0.0, x1=500.0, coats=2)
    per = lambda s: SECONDS_PER_STROKE + s.length_mm() / STROKE_MM_PER_SECOND  # noqa: E731
    layer = Layer(50.0, [one, two])
    assert layer_time_s(layer) == pytest.approx(per(one) + 2 * per(two) + PAINT_CHANGE_SECONDS)
    # --stroke-coats 3 is a minimum: both strokes three times, still one run of P1
    assert layer_time_s(layer, stroke_coats=3) == pytest.approx(3 * per(one) + 3 * per(two) + PAINT_CHANGE_SECONDS)


def test_layer_sheet_says_which_paint_takes_more_coats_over_which():
    from layerplan.report import plan_html
    from layerplan.sheets import build_sheets

    plan = with_coats(plan_of([bar("P1", 150.0), bar("P1", 300.0), bar("P2", 450.0)]))
    n = plan.layers[0].strokes[0].coats
    line = f"P1: {n} coats where it covers P2 (2 strokes)"
    assert build_sheets(plan).layers[0].coats == (line,)
    assert line in plan_html(plan)
    # with --stroke-coats at that many, no stroke takes more than the rest: no line
    from layerplan.quantities import paint_use

    assert build_sheets(plan, paint_use=paint_use(plan, stroke_coats=n)).layers[0].coats == ()


def test_make_plan_gives_light_strokes_over_a_dark_ground_more_coats():
    # a navy wall with a near-white panel: the plan paints the panel over the navy ground
    from layerplan.pipeline import make_plan
    from layerplan.settings import Settings

    img = np.empty((60, 80, 3), np.uint8)
    img[:] = [int(NAVY[i:i + 2], 16) for i in (1, 3, 5)]
    img[15:45, 20:60] = [int(NEAR_WHITE[i:i + 2], 16) for i in (1, 3, 5)]
    plan = make_plan(img, Settings(paints=2, free_palette=True, wall_width_mm=800.0, wall_height_mm=600.0,
                                   mm_per_px=10.0, brushes_mm=(100.0, 50.0)))
    assert plan.paint(plan.ground).lab[0] < 30  # the navy is the ground
    light = [s for layer in plan.layers for s in layer.strokes if plan.paint(s.paint).lab[0] > 80]
    assert light, "the panel is painted"
    assert max(s.coats for s in light) >= 2
    # and what the pipeline wrote is the rule applied to its own plan
    assert [s.coats for layer in plan.layers for s in layer.strokes] == \
        [int(c) for coats, _ in stroke_coats(plan) for c in coats]


def test_web_paint_card_says_how_many_strokes_take_more_coats():
    from layerplan.web.pages import _coats_text

    plan = plan_of([bar("P1", 100.0, coats=2), bar("P1", 200.0, coats=3), bar("P1", 300.0), bar("P2", 400.0)])
    assert _coats_text(plan, "P1") == "2–3 coats on 2 strokes"
    assert _coats_text(plan, "P2") is None
