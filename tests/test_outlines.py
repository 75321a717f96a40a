"""Outline maps (layerplan/outlines.py): the contours must cover what each paint covers.

Reference: the layer's own mask, built stroke by stroke with the rendering rule
(``raster.stroke_mask``), against the contours filled back in by scikit-image's
``polygon2mask`` with the even-odd rule; and plane geometry for the direction hints.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from skimage.draw import polygon2mask
from skimage.measure import points_in_poly

from layerplan.outlines import layer_outlines, outline_maps
from layerplan.plan import Layer, Paint, Plan, Stroke
from layerplan.raster import stroke_mask

PALETTE = [Paint("P1", "#f0e8d8", (92.6, 1.5, 7.5)), Paint("P2", "#c03020", (44.0, 56.0, 46.0)),
           Paint("P3", "#2050a0", (36.0, 12.0, -50.0)), Paint("P4", "#e0b030", (76.0, 6.0, 68.0))]


def _plan(layers, w=2000.0, h=1250.0, s=5.0):
    return Plan(w, h, int(w / s), int(h / s), s, PALETTE, "P1", layers)


def _random_plan(seed=0):
    rng = np.random.default_rng(seed)
    layers = []
    for width, count in ((80.0, 25), (40.0, 50), (20.0, 80)):
        strokes = []
        for _ in range(count):
            a = rng.uniform(0, math.pi)
            length = rng.uniform(1, 6) * width
            c = rng.uniform([0, 0], [2000, 1250])
            t = np.linspace(-0.5, 0.5, int(rng.integers(2, 4)))[:, None]
            strokes.append(Stroke(f"P{rng.integers(2, 5)}", width, c + t * length * np.array([math.cos(a), math.sin(a)])))
        layers.append(Layer(width, strokes))
    return _plan(layers)


def _layer_masks(plan, n):
    """{paint: mask} of what layer n leaves showing, by the rendering rule, stroke by stroke."""
    shape = (plan.height_px, plan.width_px)
    owner = np.full(shape, "", dtype=object)
    for st in plan.layers[n - 1].strokes:
        owner[stroke_mask(st.path_mm, st.width_mm, plan.mm_per_px, shape)] = st.paint
    return {p.id: owner == p.id for p in plan.palette if (owner == p.id).any()}


def _fill(areas, plan):
    """Contours back to a raster (pixel centres), even-odd within each area."""
    shape = (plan.height_px, plan.width_px)
    out = {}
    for a in areas:
        m = np.zeros(shape, bool)
        for c in a["contours_mm"]:
            rc = np.array(c)[:, ::-1] / plan.mm_per_px - 0.5  # (x, y) mm -> (row, col)
            m ^= polygon2mask(shape, rc)
        out[a["paint"]] = out.get(a["paint"], np.zeros(shape, bool)) | m
    return out


def test_outline_maps_cover_each_paints_area():
    # outlines a painter can trace: rasterised contours vs the layer's mask, IoU >= 0.9 for every paint of
    # every layer
    plan = _random_plan()
    maps = outline_maps(plan)
    assert [m["layer"] for m in maps] == [1, 2, 3]
    for n, outline in enumerate(maps, start=1):
        masks = _layer_masks(plan, n)
        filled = _fill(outline["areas"], plan)
        assert set(filled) == set(masks)
        for paint, mask in masks.items():
            inter = np.logical_and(mask, filled[paint]).sum()
            union = np.logical_or(mask, filled[paint]).sum()
            assert inter / union >= 0.9, (n, paint, inter / union)


def test_label_points_lie_inside_their_areas():
    # each label is inside the area's outside contour and outside its holes (even-odd rule)
    plan = _random_plan(seed=4)
    for outline in outline_maps(plan):
        for a in outline["areas"]:
            inside = [points_in_poly([a["label_mm"]], np.array(c))[0] for c in a["contours_mm"]]
            assert sum(inside) % 2 == 1, a


def test_ring_has_a_hole():
    # a closed square loop of a 40 mm brush: one area with an outside and one hole; the hole's
    # centre is not painted (its distance to the loop, 200 mm, exceeds the half width)
    loop = np.array([[600.0, 300.0], [1000.0, 300.0], [1000.0, 700.0], [600.0, 700.0], [600.0, 300.0]])
    plan = _plan([Layer(40.0, [Stroke("P2", 40.0, loop)])])
    areas = layer_outlines(plan, 1)["areas"]
    assert len(areas) == 1 and len(areas[0]["contours_mm"]) == 2
    outside, hole = (np.array(c) for c in areas[0]["contours_mm"])
    assert points_in_poly([[800.0, 500.0]], outside)[0] and points_in_poly([[800.0, 500.0]], hole)[0]
    # area of a square ring of side 400 mm, width 40 mm, round outer corners (plane geometry):
    # outer 440² with corners rounded by r = 20 mm, minus inner 360²
    expect = 440 ** 2 - (4 - math.pi) * 20 ** 2 - 360 ** 2
    assert areas[0]["area_mm2"] == pytest.approx(expect, rel=0.03)


@pytest.mark.parametrize("end, angle, word", [((1400.0, 600.0), 0.0, "horizontal"),
                                               ((1000.0, 1000.0), 90.0, "vertical"),
                                               ((1300.0, 900.0), 45.0, "diagonal ↘"),
                                               ((1300.0, 300.0), 135.0, "diagonal ↗")])
def test_direction_hint_follows_the_stroke(end, angle, word):
    # y runs down the wall, angles from +x towards +y: a stroke's axis is its direction mod 180°,
    # the same whichever end it starts from
    for path in ([[1000.0, 600.0], end], [end, [1000.0, 600.0]]):
        plan = _plan([Layer(60.0, [Stroke("P3", 60.0, np.array(path))])])
        (area,) = layer_outlines(plan, 1)["areas"]
        assert area["direction_deg"] == pytest.approx(angle, abs=0.1)
        assert area["coherence"] == pytest.approx(1.0)
        assert area["hint"] == word


def test_crossed_strokes_are_mixed_and_dabs_have_no_direction():
    # two equal strokes at right angles cancel on doubled angles (mean resultant length 0)
    cross = [Stroke("P2", 40.0, np.array([[800.0, 600.0], [1200.0, 600.0]])),
             Stroke("P2", 40.0, np.array([[1000.0, 400.0], [1000.0, 800.0]]))]
    dab = Stroke("P4", 40.0, np.array([[300.0, 300.0]]))
    plan = _plan([Layer(40.0, cross + [dab])])
    by = {a["paint"]: a for a in layer_outlines(plan, 1)["areas"]}
    assert by["P2"]["coherence"] == pytest.approx(0.0, abs=1e-9) and by["P2"]["hint"] == "mixed"
    assert by["P4"]["direction_deg"] is None and by["P4"]["hint"] == "dabs"


def test_later_strokes_hide_earlier_ones_and_small_bits_are_left_off():
    # P3 laid over the middle of P2 splits P2 in two; a sliver smaller than min_area is dropped
    under = Stroke("P2", 100.0, np.array([[400.0, 600.0], [1600.0, 600.0]]))
    over = Stroke("P3", 100.0, np.array([[1000.0, 300.0], [1000.0, 900.0]]))
    plan = _plan([Layer(100.0, [under, over])])
    areas = layer_outlines(plan, 1)["areas"]
    assert sorted(a["paint"] for a in areas) == ["P2", "P2", "P3"]
    total = {p: sum(a["area_mm2"] for a in areas if a["paint"] == p) for p in ("P2", "P3")}
    # plane geometry: P2's capsule minus the 100 × 100 mm square P3 covers
    assert total["P2"] == pytest.approx(1200 * 100 + math.pi * 50 ** 2 - 100 * 100, rel=0.02)
    assert len(layer_outlines(plan, 1, min_area_mm2=1e6)["areas"]) == 0


def test_bad_arguments_are_named():
    plan = _random_plan()
    with pytest.raises(ValueError, match=r"layer must be a number from 1 to 3, got 0"):
        layer_outlines(plan, 0)
    with pytest.raises(ValueError, match=r"layer must be a number from 1 to 3, got 4"):
        layer_outlines(plan, 4)
    with pytest.raises(ValueError, match=r"tolerance_mm must be a number >= 0, got -1"):
        layer_outlines(plan, 1, tolerance_mm=-1)


def test_simplification_stays_within_tolerance_like_scikit_image():
    # Douglas & Peucker (1973): every traced point lies within the tolerance of the simplified
    # line; and about as many points are kept as scikit-image's approximate_polygon keeps
    from skimage.draw import disk
    from skimage.measure import approximate_polygon, find_contours

    from layerplan.outlines import simplify

    rng = np.random.default_rng(7)
    img = np.zeros((200, 200))
    for _ in range(15):
        rr, cc = disk(rng.uniform(20, 180, 2), rng.uniform(5, 25), shape=img.shape)
        img[rr, cc] = 1
    for c in find_contours(np.pad(img, 1), 0.5):
        for tol in (0.5, 1.5):
            s = simplify(c, tol)
            seg_a, seg_b = s[:-1], s[1:]
            v = seg_b - seg_a
            w = c[:, None, :] - seg_a[None, :, :]
            tt = np.clip((w * v[None]).sum(-1) / np.maximum((v * v).sum(-1), 1e-12)[None], 0, 1)
            d = np.linalg.norm(w - tt[..., None] * v[None], axis=-1).min(axis=1)
            assert d.max() <= tol + 1e-9
            ref = approximate_polygon(c, tolerance=tol)
            assert abs(len(s) - len(ref)) <= max(2, 0.1 * len(ref))


def _random_masks(seed, count):
    """Binary images with a False border: noise of several densities (holes, saddles, diagonal touches)."""
    rng = np.random.default_rng(seed)
    for _ in range(count):
        h, w = (int(v) for v in rng.integers(1, 30, 2))
        m = np.zeros((h + 2, w + 2), bool)
        m[1:-1, 1:-1] = rng.random((h, w)) < rng.uniform(0.2, 0.8)
        yield m


def test_tracing_matches_scikit_image_find_contours():
    # the compiled marching squares must give what scikit-image's find_contours gives
    # (Lorensen & Cline 1987): the same contours, in the same order, from the same start
    # point in the same direction, since simplification depends on all of these
    from skimage.measure import find_contours

    from layerplan.outlines import _trace

    for m in _random_masks(1, 400):
        ref = find_contours(m.astype(np.float32), 0.5)
        pts, off = _trace(m)
        mine = [pts[a:b] for a, b in zip(off[:-1], off[1:])]
        assert len(mine) == len(ref)
        for a, b in zip(mine, ref):
            np.testing.assert_array_equal(a, b)


def test_deepest_point_matches_scipy_distance_transform():
    # exact Euclidean distance transform (Felzenszwalb & Huttenlocher 2012) against scipy's
    # distance_transform_edt: the same farthest pixel (first in row order) and distance
    from scipy.ndimage import distance_transform_edt

    from layerplan.outlines import _deepest

    for m in _random_masks(2, 400):
        d = distance_transform_edt(m)
        i, j = np.unravel_index(int(np.argmax(d)), d.shape)
        bi, bj, d2 = _deepest(m)
        assert (bi, bj) == (i, j) and math.sqrt(d2) == d[i, j]


def test_areas_match_scipy_label():
    # 4-connected areas of equal value, all values at once, against scipy.ndimage.label on
    # each value's mask: the same areas, numbered in the same order, same sizes and boxes
    from scipy import ndimage as ndi

    from layerplan.outlines import _components

    rng = np.random.default_rng(3)
    for _ in range(60):
        canvas = rng.integers(-1, 4, size=tuple(int(v) for v in rng.integers(1, 40, 2))).astype(np.int16)
        labels, value, size, i0, i1, j0, j1 = _components(canvas)
        assert ((labels > 0) == (canvas >= 0)).all()
        for k in range(4):
            ref, count = ndi.label(canvas == k)
            mine = np.flatnonzero(value == k)
            mine = mine[mine > 0]
            assert len(mine) == count
            for n, (lab, sl) in enumerate(zip(mine, ndi.find_objects(ref)), start=1):
                np.testing.assert_array_equal(labels == lab, ref == n)
                assert size[lab] == (ref == n).sum()
                assert (i0[lab], i1[lab], j0[lab], j1[lab]) == (sl[0].start, sl[0].stop, sl[1].start, sl[1].stop)


def test_a_given_canvas_gives_the_same_map_and_a_wrong_one_is_named():
    from layerplan.outlines import layer_canvas

    plan = _random_plan(seed=2)
    assert layer_outlines(plan, 2, canvas=layer_canvas(plan, 2)) == layer_outlines(plan, 2)
    with pytest.raises(ValueError, match=r"canvas must be the plan's raster, 250 × 400 px, got shape \(10, 10\)"):
        layer_outlines(plan, 1, canvas=np.zeros((10, 10), np.int16))


# ------------------------------------------------------------------ labels
def _area(paint, x, y, area, room=50.0):
    return {"paint": paint, "area_mm2": area, "contours_mm": [], "label_mm": [x, y], "label_room_mm": room,
            "direction_deg": 0.0, "coherence": 1.0, "hint": "horizontal"}


def _box(_a):  # every label 20 mm wide, 10 mm tall (half sizes)
    return 10.0, 5.0


def test_labels_keep_clear_of_each_other_and_skip_tiny_areas():
    from layerplan.outlines import place_labels

    # plane geometry on axis-aligned label boxes 20 × 10 mm
    outline = {"layer": 1, "brush_width_mm": 20.0, "areas": [
        _area("P2", 100, 100, 5000),  # the biggest: placed first
        _area("P2", 130, 100, 4000),  # same paint, 30 mm off: boxes 10 mm apart, closer than a label's width
        _area("P3", 100, 114, 3000),  # other paint, boxes 4 mm apart (more than 0.2 label heights = 2 mm)
        _area("P3", 100, 122, 2500),  # same paint as the one above, 8 mm below it: the boxes overlap
        _area("P4", 400, 400, 99),    # under the smallest labelled area (100 mm²)
        _area("P4", 600, 600, 2000, room=2.0),  # 4 mm thin: under 0.6 of the 10 mm label height
        _area("P2", 800, 100, 1000),  # same paint far away: labelled
    ]}
    got = place_labels(outline, _box, min_area_mm2=100.0)
    assert [a["label"] for a in got["areas"]] == [True, False, True, False, False, False, True]
    assert "label" not in outline["areas"][0]  # the input is left as it was
    assert got["areas"][0]["contours_mm"] is outline["areas"][0]["contours_mm"]
    with pytest.raises(ValueError, match=r"min_area_mm2 must be a number >= 0, got -1"):
        place_labels(outline, _box, min_area_mm2=-1)
    with pytest.raises(ValueError, match=r"gap must be a number >= 0, got nan"):
        place_labels(outline, _box, min_area_mm2=1, gap=float("nan"))


def test_direction_ticks_leave_the_label_clear():
    # one horizontal stroke: its two ticks lie on the stroke's axis and start outside the
    # label's box (plane geometry: the label is centred on the label point)
    import xml.etree.ElementTree as ET

    from layerplan.svg import label_box_mm, outline_map_svg

    plan = _plan([Layer(80.0, [Stroke("P2", 80.0, np.array([[200.0, 600.0], [1800.0, 600.0]]))])])
    outline = layer_outlines(plan, 1)
    (area,) = outline["areas"]
    x, y = area["label_mm"]
    half_w, _ = label_box_mm(plan, area)
    root = ET.fromstring(outline_map_svg(plan, outline))
    lines = [e for e in root.iter() if e.tag.endswith("line")]
    assert len(lines) == 2
    for ln in lines:
        x1, y1, x2, y2 = (float(ln.get(k)) for k in ("x1", "y1", "x2", "y2"))
        assert y1 == pytest.approx(y, abs=0.01) and y2 == pytest.approx(y, abs=0.01)
        assert min(abs(x1 - x), abs(x2 - x)) > half_w
    assert {x1 < x for x1 in [float(ln.get("x1")) for ln in lines]} == {True, False}  # one each side


def test_place_labels_around_labels_every_item_without_overlap_when_there_is_room():
    # plane geometry: two label boxes overlap when their centres are closer than the half sizes' sum
    # on both axes; a crowded cluster of points is labelled all the same, off the points, with leaders
    from layerplan.outlines import place_labels_around

    rng = np.random.default_rng(3)
    pts = np.concatenate([rng.uniform(40, 60, (12, 2)), rng.uniform(0, 200, (20, 2))])
    items = [{"x": float(x), "y": float(y), "half_w": 3.0, "half_h": 2.0, "fits": k >= 12}
             for k, (x, y) in enumerate(pts)]
    placed = place_labels_around(items, bounds=(0.0, 0.0, 200.0, 200.0))
    assert len(placed) == len(items)
    ok = [p for p in placed if not p["clash"]]
    assert len(ok) >= len(items) - 2  # room enough on a 200 × 200 field for nearly all
    for i, a in enumerate(placed):
        assert 0.0 <= a["x"] - 3.0 and a["x"] + 3.0 <= 200.0 or a["clash"]
        for b in placed[i + 1:]:
            if a["clash"] or b["clash"]:
                continue
            assert abs(a["x"] - b["x"]) >= 6.0 or abs(a["y"] - b["y"]) >= 4.0
    # an item whose label does not fit its area never sits on its point (it gets a leader instead)
    for it, p in zip(items, placed):
        if not it["fits"] and not p["clash"]:
            assert p["moved"] and (p["x"], p["y"]) != (it["x"], it["y"])
        if it["fits"] and not p["moved"]:
            assert (p["x"], p["y"]) == (it["x"], it["y"])
    # no label box covers another item's point
    for i, p in enumerate(placed):
        if p["clash"]:
            continue
        for j, it in enumerate(items):
            if j != i:
                assert not (abs(it["x"] - p["x"]) < 3.0 and abs(it["y"] - p["y"]) < 2.0)
