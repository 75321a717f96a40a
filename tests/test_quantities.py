"""Paint quantities (layerplan/quantities.py), checked against hand-worked examples,
plane geometry, an independent Monte Carlo estimate and NIST Handbook 44."""

from __future__ import annotations

import math

import numpy as np
import pytest

from layerplan.plan import Layer, Paint, Plan, Stroke
from layerplan.quantities import (
    COMMON_CONTAINERS_L,
    LITRES_PER_US_GALLON,
    US_CONTAINERS_L,
    buy_containers,
    paint_use,
    stroke_area_mm2,
)


def _plan(layers=(), *, w=4000.0, h=2500.0, unit="m", palette=None, s=10.0):
    palette = palette or [Paint("P1", "#f0f0f0", (95.0, 0.0, 0.0)), Paint("P2", "#c03020", (45.0, 55.0, 45.0)),
                          Paint("P3", "#2050a0", (35.0, 10.0, -50.0))]
    return Plan(w, h, int(round(w / s)), int(round(h / s)), s, palette, "P1", list(layers),
                {"settings": {"wall_unit": unit}})


def _use(plan, name="P2", **kw):
    return next(p for p in paint_use(plan, **kw)["paints"] if p["paint"] == name)


# ------------------------------------------------------------------ hand-worked
def test_ground_only_wall_hand_worked():
    # Worked by hand: a 4 × 2.5 m wall = 10 m², ground only, 2 coats at
    # 10 m²/L = 2 L, plus 15 % = 2.3 L.
    use = paint_use(_plan())
    ground = use["paints"][0]
    assert ground["paint"] == "P1"
    assert ground["area_m2"] == pytest.approx(10.0)
    assert ground["litres"] == pytest.approx(2.3)
    assert [p["litres"] for p in use["paints"][1:]] == [0.0, 0.0]
    for key, value in {"coverage_m2_per_litre": 10.0, "waste": 0.15, "ground_coats": 2, "stroke_coats": 1}.items():
        assert use[key] == value


def test_options_enter_the_formula_as_written():
    # litres = (ground area × ground coats + stroke area × stroke coats) / coverage × (1 + waste)
    # worked by hand: wall 10 m²; one straight 1 m × 0.1 m stroke = 0.1 + π·0.05² m².
    st = Stroke("P2", 100.0, np.array([[1000.0, 1000.0], [2000.0, 1000.0]]))
    plan = _plan([Layer(100.0, [st])])
    stroke_m2 = 0.1 + math.pi * 0.05 ** 2
    use = paint_use(plan, coverage_m2_per_litre=8.0, waste=0.1, ground_coats=3, stroke_coats=2)
    by = {p["paint"]: p for p in use["paints"]}
    assert by["P1"]["litres"] == pytest.approx(10.0 * 3 / 8.0 * 1.1, abs=1e-3)
    assert by["P2"]["litres"] == pytest.approx(stroke_m2 * 2 / 8.0 * 1.1, abs=1e-3)
    assert by["P2"]["area_m2"] == pytest.approx(stroke_m2, abs=1e-4)
    assert by["P2"]["strokes"] == 1
    # the ground paint's own strokes add to its ground area
    plan = _plan([Layer(100.0, [Stroke("P1", 100.0, st.path_mm)])])
    assert _use(plan, "P1")["area_m2"] == pytest.approx(10.0 + stroke_m2, abs=1e-4)


def test_overlaps_are_counted():
    # paint hidden by a later stroke was still used, so it is bought: the same stroke twice is twice the paint
    path = np.array([[500.0, 500.0], [900.0, 700.0]])
    one = _use(_plan([Layer(50.0, [Stroke("P2", 50.0, path)])]))
    two = _use(_plan([Layer(50.0, [Stroke("P2", 50.0, path), Stroke("P3", 50.0, path)]),
                      Layer(25.0, [Stroke("P2", 25.0, path)])]))
    single_25 = math.hypot(400, 200) * 25 + math.pi * 12.5 ** 2
    assert two["stroke_area_m2"] == pytest.approx(one["stroke_area_m2"] + single_25 / 1e6, abs=1e-4)


# ------------------------------------------------------------------ coats per stroke
def test_each_coat_adds_the_stroke_area_over_the_coverage():
    # worked by hand: a straight 1 m × 0.1 m stroke is 0.1 + π·0.05² m² (plane geometry); at 10 m²/L
    # and no waste, one coat is that ÷ 10 L, and each further coat adds exactly as much again
    path = np.array([[1000.0, 1000.0], [2000.0, 1000.0]])
    area = 0.1 + math.pi * 0.05 ** 2
    one = _use(_plan([Layer(100.0, [Stroke("P2", 100.0, path)])]), waste=0.0)
    three = _use(_plan([Layer(100.0, [Stroke("P2", 100.0, path, coats=3)])]), waste=0.0)
    assert one["litres"] == pytest.approx(area / 10.0, abs=1e-3)
    assert three["litres"] - one["litres"] == pytest.approx(2 * area / 10.0, abs=2e-3)
    assert three["stroke_coat_area_m2"] == pytest.approx(3 * area, abs=1e-4)
    # the area covered is the same: coats add paint, not wall
    assert three["stroke_area_m2"] == one["stroke_area_m2"]


def test_stroke_coats_option_is_a_minimum():
    # two equal strokes, one asking for 3 coats: --stroke-coats 2 lifts the other to 2 and leaves the 3
    a = np.array([[500.0, 500.0], [1500.0, 500.0]])
    b = a + [0.0, 1000.0]
    plan = _plan([Layer(100.0, [Stroke("P2", 100.0, a), Stroke("P2", 100.0, b, coats=3)])])
    area = 0.1 + math.pi * 0.05 ** 2  # each stroke, plane geometry
    use = _use(plan, stroke_coats=2, waste=0.0, coverage_m2_per_litre=8.0)
    assert use["stroke_coat_area_m2"] == pytest.approx((2 + 3) * area, abs=1e-4)
    assert use["litres"] == pytest.approx((2 + 3) * area / 8.0, abs=1e-3)
    assert paint_use(plan, stroke_coats=2)["stroke_coats"] == 2
    # a minimum of 4 is above both
    assert _use(plan, stroke_coats=4, waste=0.0)["stroke_coat_area_m2"] == pytest.approx(8 * area, abs=1e-4)


def test_a_plan_without_coats_costs_what_it_did():
    # an old plan.json (no "coats" on its strokes) reads as one coat each: the old formula, unchanged
    st = Stroke("P3", 50.0, np.array([[200.0, 300.0], [900.0, 700.0]]))
    doc = _plan([Layer(50.0, [st])]).to_dict()
    assert "coats" not in doc["layers"][0]["strokes"][0]
    old = Plan.from_dict(doc)
    area = math.hypot(700, 400) * 50 + math.pi * 25 ** 2  # mm², plane geometry
    assert _use(old, "P3")["litres"] == pytest.approx(area / 1e6 / 10.0 * 1.15, abs=1e-3)


# --------------------------------------------------------------------- geometry
@pytest.mark.parametrize("length, width, angle", [(300.0, 50.0, 0.0), (1000.0, 100.0, 30.0),
                                                   (37.0, 12.0, 90.0), (250.0, 25.0, 137.0)])
def test_straight_stroke_is_rectangle_plus_two_half_discs(length, width, angle):
    # plane geometry: a segment buffered by w/2 with round ends = L·w + π(w/2)²
    t = math.radians(angle)
    a = np.array([2000.0, 2000.0])
    b = a + length * np.array([math.cos(t), math.sin(t)])
    got = stroke_area_mm2(np.array([a, b]), width, wall_mm=(5000.0, 5000.0))
    assert got == pytest.approx(length * width + math.pi * (width / 2) ** 2, rel=1e-9)


def test_dab_is_a_disc():
    # plane geometry: a single point with a round brush is a disc of area π r²
    assert stroke_area_mm2([[100.0, 100.0]], 30.0) == pytest.approx(math.pi * 15.0 ** 2, rel=1e-9)


def test_right_angle_polyline_by_inclusion_exclusion():
    # Two capsules meeting at a right angle (legs a, b, radius r): each is a·2r + πr²; their
    # overlap is the joint disc plus the corner square outside it: πr² + r² − πr²/4.
    a, b, r = 300.0, 200.0, 25.0
    expect = (2 * r * a + math.pi * r * r) + (2 * r * b + math.pi * r * r) - (0.75 * math.pi * r * r + r * r)
    got = stroke_area_mm2([[100.0, 100.0], [100.0 + a, 100.0], [100.0 + a, 100.0 + b]], 2 * r)
    assert got == pytest.approx(expect, rel=1e-9)


def test_clipped_to_the_wall_by_symmetry():
    # a stroke running along the top edge has exactly half its footprint on the wall;
    # one along the left edge likewise; one wholly outside has none
    w = 50.0
    full = 300 * w + math.pi * (w / 2) ** 2
    assert stroke_area_mm2([[100.0, 0.0], [400.0, 0.0]], w, wall_mm=(1000.0, 1000.0)) == pytest.approx(full / 2)
    assert stroke_area_mm2([[0.0, 100.0], [0.0, 400.0]], w, wall_mm=(1000.0, 1000.0)) == pytest.approx(full / 2)
    assert stroke_area_mm2([[1100.0, 100.0], [1400.0, 100.0]], w, wall_mm=(1000.0, 1000.0)) == 0.0


def _monte_carlo_area(path, width, wall, n=400_000, seed=3):
    """Independent estimate: the share of random points within width/2 of the polyline."""
    rng = np.random.default_rng(seed)
    p = np.asarray(path, float)
    r = width / 2
    lo = np.maximum(p.min(0) - r, 0)
    hi = np.minimum(p.max(0) + r, wall)
    pts = rng.uniform(lo, hi, (n, 2))
    inside = np.zeros(n, bool)
    for a, b in zip(p[:-1], p[1:]):
        v = b - a
        t = np.clip(((pts - a) @ v) / (v @ v), 0, 1)
        inside |= ((pts - a - np.outer(t, v)) ** 2).sum(1) <= r * r
    box = float(np.prod(hi - lo))
    f = inside.mean()
    return box * f, box * math.sqrt(f * (1 - f) / n)


@pytest.mark.parametrize("path, width, wall", [
    ([[10, 10], [200, 80], [60, 150], [250, 200], [90, 20]], 40.0, (1000.0, 1000.0)),  # crosses itself
    ([[0, 0], [300, 300]], 50.0, (1000.0, 1000.0)),  # starts in the wall's corner
    ([[5, 5], [100, 5], [100, 12], [8, 14]], 30.0, (90.0, 1000.0)),  # doubles back, clipped on the right
])
def test_self_overlapping_and_clipped_strokes_match_monte_carlo(path, width, wall):
    # the definition sampled directly (point within width/2 of any segment), 400k points:
    # agree within 4 standard errors plus the documented 0.2 % bound
    expect, se = _monte_carlo_area(path, width, wall)
    got = stroke_area_mm2(path, width, wall_mm=wall)
    assert abs(got - expect) <= 4 * se + 0.002 * expect


# ------------------------------------------------------------------ US units
def test_us_gallon_is_231_cubic_inches():
    # NIST Handbook 44, Appendix C: 1 gal = 231 in³; 1 in = 2.54 cm exactly, so
    # 1 gal = 231 × 16.387064 cm³ = 3785.411784 cm³
    assert LITRES_PER_US_GALLON == pytest.approx(231 * 2.54 ** 3 / 1000, rel=1e-15)
    # NIST Handbook 44, Appendix C table: 1 L = 0.264 172 05 gal
    assert 1 / LITRES_PER_US_GALLON == pytest.approx(0.26417205, abs=5e-9)


def test_walls_in_feet_also_get_gallons_and_quarts():
    # a 12 × 8 ft wall is 96 sq ft = 8.9187 m² (1 ft = 0.3048 m); 2 coats, 10 m²/L, 15 %
    plan = _plan(w=12 * 304.8, h=8 * 304.8, unit="ft")
    ground = paint_use(plan)["paints"][0]
    litres = 96 * 0.3048 ** 2 * 2 / 10 * 1.15
    assert ground["litres"] == pytest.approx(litres, abs=1e-3)
    assert ground["us_gallons"] == pytest.approx(litres / 3.785411784, abs=1e-3)
    assert ground["us_quarts"] == pytest.approx(4 * litres / 3.785411784, abs=1e-3)  # 4 qt = 1 gal (NIST HB 44)
    # US walls round up to US container sizes (quarts, gallons; common practice): 2.17 qt -> 3 qt,
    # less than a 4-qt gallon
    assert ground["containers"] == [{"litres": round(US_CONTAINERS_L[0], 4), "count": 3}]
    # 4 × the same wall: 8.67 qt -> 2 gal + 1 qt (9 qt) rather than 3 gal or 9 single quarts
    big = paint_use(_plan(w=24 * 304.8, h=16 * 304.8, unit="ft"))["paints"][0]
    assert big["containers"] == [{"litres": round(US_CONTAINERS_L[1], 4), "count": 2},
                                 {"litres": round(US_CONTAINERS_L[0], 4), "count": 1}]
    assert "us_gallons" not in paint_use(_plan())["paints"][0]


# ------------------------------------------------------------------ containers
def test_containers_least_volume_then_fewest():
    # hand-worked with the common sizes 0.25/0.5/1/2.5/5/10 L (common practice)
    assert buy_containers(1.5, COMMON_CONTAINERS_L) == [{"litres": 1.0, "count": 1}, {"litres": 0.5, "count": 1}]
    assert buy_containers(0.1, COMMON_CONTAINERS_L) == [{"litres": 0.25, "count": 1}]
    assert buy_containers(2.3, COMMON_CONTAINERS_L) == [{"litres": 2.5, "count": 1}]
    assert buy_containers(123.4, COMMON_CONTAINERS_L) == [
        {"litres": 10.0, "count": 12}, {"litres": 2.5, "count": 1}, {"litres": 1.0, "count": 1}]
    # only 0.75 L and 3 L tins: 1.5 L is exactly two small ones, 2.5 L needs one 3 L
    assert buy_containers(1.5, [0.75, 3.0]) == [{"litres": 0.75, "count": 2}]
    assert buy_containers(2.5, [0.75, 3.0]) == [{"litres": 3.0, "count": 1}]
    assert buy_containers(0.0, COMMON_CONTAINERS_L) == []


def _with_recipes(plan):
    plan.palette[0].extra["recipe"] = {"parts": [{"paint": "White", "parts": 9}, {"paint": "Yellow", "parts": 1}],
                                       "delta_e": 0.8, "in_gamut": True}
    plan.palette[1].extra["recipe"] = {"parts": [{"paint": "Red", "parts": 3}, {"paint": "White", "parts": 1}],
                                       "delta_e": 1.1, "in_gamut": True}
    return plan


def test_recipes_add_up_per_stock_paint():
    # hand-worked: ground 2.3 L at 9:1 -> 2.07 L white + 0.23 L yellow; a 1 m × 0.1 m stroke of P2
    # (0.10785 m², 1 coat, 15 %) = 0.012403 L at 3:1 -> 0.009302 L red + 0.003101 L white
    st = Stroke("P2", 100.0, np.array([[1000.0, 1000.0], [2000.0, 1000.0]]))
    use = paint_use(_with_recipes(_plan([Layer(100.0, [st])])))
    stock = {s["paint"]: s for s in use["stock"]}
    p2 = (0.1 + math.pi * 0.05 ** 2) / 10 * 1.15
    assert stock["White"]["litres"] == pytest.approx(2.07 + p2 / 4, abs=1e-3)
    assert stock["Yellow"]["litres"] == pytest.approx(0.23, abs=1e-3)
    assert stock["Red"]["litres"] == pytest.approx(p2 * 3 / 4, abs=1e-3)
    assert stock["White"]["for"] == ["P1", "P2"]
    # 2.073 L of white: 2 × 1 L + 0.25 L = 2.25 L is the least volume of common sizes that holds it
    assert stock["White"]["containers"] == [{"litres": 1.0, "count": 2}, {"litres": 0.25, "count": 1}]


def test_inventory_container_sizes_are_used():
    # sizes from the painter's inventory (its containers_l) win over the common sizes
    plan = _with_recipes(_plan())
    plan.extra["inventory"] = [{"name": "White", "srgb": "#ffffff", "containers_l": [0.75, 4.0]}]
    stock = {s["paint"]: s for s in paint_use(plan)["stock"]}
    assert stock["White"]["containers"] == [{"litres": 0.75, "count": 3}]  # 2.07 L -> 3 × 0.75 = 2.25 L
    assert stock["Yellow"]["containers"] == [{"litres": 0.25, "count": 1}]
    explicit = {s["paint"]: s for s in paint_use(plan, containers={"White": [5.0]})["stock"]}
    assert explicit["White"]["containers"] == [{"litres": 5.0, "count": 1}]


# ----------------------------------------------------------------------- errors
@pytest.mark.parametrize("kw, match", [
    ({"coverage_m2_per_litre": 0}, r"coverage_m2_per_litre must be a number > 0, got 0"),
    ({"coverage_m2_per_litre": float("nan")}, r"coverage_m2_per_litre must be"),
    ({"waste": -0.1}, r"waste must be a number >= 0, got -0.1"),
    ({"waste": 15}, r"waste is a fraction"),
    ({"ground_coats": 1.5}, r"ground_coats must be a whole number >= 0, got 1.5"),
    ({"stroke_coats": 0}, r"stroke_coats must be a whole number >= 1, got 0"),
    ({"containers": [0.0, 1.0]}, r"container sizes must be litres > 0"),
])
def test_bad_options_are_named(kw, match):
    with pytest.raises(ValueError, match=match):
        paint_use(_plan(), **kw)


def test_bad_recipe_and_stroke_are_named():
    plan = _plan()
    plan.palette[0].extra["recipe"] = {"parts": [{"name": "White"}]}
    with pytest.raises(ValueError, match=r"paint P1: recipe needs 'parts'"):
        paint_use(plan)
    plan.palette[0].extra["recipe"] = {"parts": [{"paint": "White", "parts": 0}]}
    with pytest.raises(ValueError, match=r"paint P1: recipe parts must be >= 0 and add up to > 0"):
        paint_use(plan)
    with pytest.raises(ValueError, match=r"stroke width must be > 0 mm, got 0"):
        stroke_area_mm2([[0, 0], [1, 1]], 0.0)
    with pytest.raises(ValueError, match=r"stroke path must hold at least one finite point"):
        stroke_area_mm2(np.zeros((0, 2)), 10.0)
    bad = _plan([Layer(50.0, [Stroke("P9", 50.0, np.array([[10.0, 10.0]]))])])
    with pytest.raises(ValueError, match=r"stroke paint 'P9' is not in the palette"):
        paint_use(bad)


def test_trace_amounts_are_flagged_and_litres_stay_numbers():
    # hand-worked: a 100 mm stroke of a 10 mm brush covers 100 × 10 + π·5² = 1078.5 mm²;
    # at 10 m²/L plus 15 % that is 1.0785e-3 × 1.15 / 10 = 1.24e-4 L, under 10 mL: a trace.
    # The ground, 10 m² × 2 coats, needs 2.3 L: not a trace; an unused paint needs nothing.
    from layerplan.quantities import TRACE_LITRES

    st = Stroke("P2", 10.0, np.array([[1000.0, 1000.0], [1100.0, 1000.0]]))
    plan = _plan([Layer(10.0, [st])])
    plan.palette[1].extra["recipe"] = {"parts": [{"paint": "White", "parts": 1}, {"paint": "Black", "parts": 1}]}
    use = paint_use(plan)
    by = {p["paint"]: p for p in use["paints"]}
    assert TRACE_LITRES == 0.01
    assert by["P2"]["litres"] == pytest.approx(0.000124, abs=5e-4) and isinstance(by["P2"]["litres"], float)
    assert [by[k]["trace"] for k in ("P1", "P2", "P3")] == [False, True, False]
    # the smallest container is still worked out (the report says "trace" instead of prescribing it)
    assert by["P2"]["containers"] == [{"litres": 0.25, "count": 1}]
    # each stock paint gets half of 0.124 mL: rounds to 0 L, yet flagged as a trace, not as nothing
    assert [(s["paint"], s["litres"], s["trace"]) for s in use["stock"]] == [("Black", 0.0, True),
                                                                             ("White", 0.0, True)]
