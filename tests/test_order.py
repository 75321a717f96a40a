"""Painting order: grouped by paint, picture unchanged."""

import numpy as np

from layerplan.order import painting_order
from layerplan.plan import Layer, Paint, Plan, Stroke
from layerplan.raster import render_indices


def _random_strokes(n, seed, k=4, size=200.0):
    rng = np.random.default_rng(seed)
    pts = [np.round(rng.uniform(0, size, size=(rng.integers(1, 4), 2)) * 10) / 10 for _ in range(n)]
    paints = rng.integers(0, k, size=n)
    return pts, paints


def _render(pts, paints, order, width, s, shape):
    pal = [Paint(f"P{i + 1}", "#000000", (0.0, 0.0, 0.0)) for i in range(5)]
    strokes = [Stroke(f"P{paints[i] + 1}", width, pts[i]) for i in order]
    plan = Plan(shape[1] * s, shape[0] * s, shape[1], shape[0], s, pal, "P5", [Layer(width, strokes)])
    return render_indices(plan)


def _switches(paints):
    return int(np.count_nonzero(np.diff(paints)))


def test_order_keeps_the_picture_and_groups_paints():
    width, s, shape = 18.0, 2.0, (100, 100)
    for seed in range(5):
        pts, paints = _random_strokes(120, seed)
        order = painting_order(pts, paints, width, s, shape)
        assert sorted(order.tolist()) == list(range(len(pts)))
        before = _render(pts, paints, range(len(pts)), width, s, shape)
        after = _render(pts, paints, order, width, s, shape)
        assert np.array_equal(before, after)
        assert _switches(paints[order]) < _switches(paints)


def test_non_overlapping_strokes_group_fully_and_go_top_down():
    # eight separate dabs in two paints: one brush wash, top of the wall first within a paint
    pts = [np.array([[20.0 + 40 * (i % 4), 20.0 + 60 * (i // 4)]]) for i in range(8)]
    paints = np.array([0, 1, 0, 1, 1, 0, 1, 0])
    order = painting_order(pts, paints, 10.0, 1.0, (120, 180))
    assert _switches(paints[order]) == 1
    for p in (0, 1):
        ys = [pts[i][0, 1] for i in order if paints[i] == p]
        assert ys == sorted(ys)


# ------------------------------------------------------------------------------ brush travel
# Lengths below are measured with math.dist / math.hypot (Python's own Euclidean distance), not with the
# module's helpers, so the travel figures are checked from outside.
import math

import pytest
from skimage import data as skdata

from layerplan._tour_kernels import same_when_reversed
from layerplan.order import short_travel, work_zones
from layerplan.raster import stroke_mask


def _lifted(paths):
    return sum(math.dist(a[-1], b[0]) for a, b in zip(paths, paths[1:]))


def _travel(pts, paints, reach=1000.0, wall_w=2000.0, width=12.0, s=4.0, shape=(500, 500), **kw):
    return short_travel(pts, paints, reach_mm=reach, wall_width_mm=wall_w, width_mm=width, mm_per_px=s,
                        shape=shape, **kw)


def _wall_strokes(n, seed, k=4, wall=(2000.0, 2000.0), sort=False):
    """Random short polylines (1–5 points) anywhere on the wall, paints in runs or mixed."""
    rng = np.random.default_rng(seed)
    pts = []
    for _ in range(n):
        p = rng.uniform((0, 0), wall, size=(1, 2)) + np.cumsum(rng.normal(0, 40, size=(rng.integers(1, 6), 2)), axis=0)
        pts.append(np.clip(p, 0, np.array(wall) - 1e-3))
    paints = rng.integers(0, k, size=n)
    return pts, (np.sort(paints) if sort else paints)


def _runs(paints):
    cut = np.flatnonzero(np.diff(paints)) + 1
    return np.split(np.arange(len(paints)), cut)


def test_a_reversed_stroke_paints_the_same_pixels():
    # The rendering rule's footprint is every point within half a width of the polyline (raster.py), a set
    # that does not depend on which way the polyline is drawn (geometry). In floating point a pixel centre
    # exactly on the edge can round either way, which happens on the half-pixel grid: there the tour's
    # check must say so, and those strokes keep their direction.
    rng = np.random.default_rng(5)
    shape, s = (60, 80), 1.0
    differ = 0
    for trial in range(400):
        n = int(rng.integers(2, 8))
        width = float(rng.choice([3.0, 6.0, 10.0, 12.5]))
        pts = rng.uniform(5, 75, size=(n, 2))
        if trial % 2:  # on the half-pixel grid: ties between a pixel centre and the edge happen here
            pts = np.round(pts * 2) / 2
        pts[:, 1] = np.clip(pts[:, 1], 5, 55)
        fwd = stroke_mask(pts, width, s, shape)
        back = stroke_mask(pts[::-1], width, s, shape)
        ok = same_when_reversed(np.ascontiguousarray(pts), np.zeros(1, np.int64), np.array([n], np.int64),
                                width, s, shape[0], shape[1])[0]
        assert fwd.any()
        # the check the tour relies on says exactly whether the two masks agree
        assert ok == np.array_equal(fwd, back)
        if trial % 2 == 0:
            assert ok, f"stroke {trial} paints different pixels backwards"
        differ += not ok
    assert differ < 20  # ties are rare even on the grid


def test_travel_is_never_longer_than_file_order():
    for seed in range(12):
        for sort in (False, True):
            pts, paints = _wall_strokes(int(np.random.default_rng(seed).integers(2, 150)), seed, sort=sort)
            for reach in (300.0, 1000.0, 5000.0):
                t = _travel(pts, paints, reach=reach)
                assert sorted(t.order.tolist()) == list(range(len(pts)))
                assert np.array_equal(paints[t.order], paints), "a stroke left its run"
                paths = t.paths(pts)
                assert t.lifted_before_mm == pytest.approx(_lifted(pts))
                assert t.lifted_mm == pytest.approx(_lifted(paths))
                assert t.lifted_mm <= t.lifted_before_mm + 1e-6
                assert t.painted_mm == pytest.approx(sum(math.dist(a, b) for p in pts for a, b in zip(p, p[1:])))


def test_big_zones_searched_by_nearest_ends_keep_every_rule():
    # over 150 strokes of a run in one zone take the neighbour-list search (_tour_kernels.NEAR_FROM)
    for seed, sort in ((0, True), (1, False)):
        pts, paints = _wall_strokes(700, seed, k=2, sort=sort)
        t = _travel(pts, paints, reach=5000.0)
        assert sorted(t.order.tolist()) == list(range(len(pts)))
        assert np.array_equal(paints[t.order], paints)
        assert t.lifted_mm == pytest.approx(_lifted(t.paths(pts)))
        assert t.lifted_mm <= t.lifted_before_mm
        if sort:  # two long runs: the tour cuts the sweep across the wall several times over
            assert t.lifted_mm < t.lifted_before_mm / 4
    width, s, shape = 18.0, 2.0, (100, 100)
    pts, paints = _random_strokes(600, 7, k=2)
    order = painting_order(pts, paints, width, s, shape)
    pts, paints = [pts[i] for i in order], paints[order]
    assert max(len(r) for r in _runs(paints)) > 150
    t = short_travel(pts, paints, reach_mm=1000.0, wall_width_mm=200.0, width_mm=width, mm_per_px=s, shape=shape)
    assert np.array_equal(_render(pts, paints, range(len(pts)), width, s, shape),
                          _render(t.paths(pts), paints[t.order], range(len(pts)), width, s, shape))


def test_travel_shrinks_a_lot_when_runs_are_long():
    # one run per paint, strokes in random order: a tour should cut the sweep across the wall several times over
    pts, paints = _wall_strokes(800, 3, sort=True)
    t = _travel(pts, paints)
    assert t.lifted_mm < t.lifted_before_mm / 4


def test_the_picture_after_the_layer_is_unchanged():
    # strokes overlap heavily (a 200 mm square, 18 mm brush), so any move across runs would show
    width, s, shape = 18.0, 2.0, (100, 100)
    for seed in range(5):
        pts, paints = _random_strokes(150, seed)
        order = painting_order(pts, paints, width, s, shape)
        pts, paints = [pts[i] for i in order], paints[order]
        t = short_travel(pts, paints, reach_mm=80.0, wall_width_mm=200.0, width_mm=width, mm_per_px=s, shape=shape)
        assert t.reversed.any()
        before = _render(pts, paints, range(len(pts)), width, s, shape)
        new_pts = t.paths(pts)
        after = _render(new_pts, paints[t.order], range(len(pts)), width, s, shape)
        assert np.array_equal(before, after)


def test_a_run_finishes_each_zone_before_the_next_from_the_top_in_a_serpentine():
    wall = (4000.0, 3000.0)
    reach = 1000.0
    pts, paints = _wall_strokes(600, 9, k=3, wall=wall)
    pts = [pts[i] for i in np.argsort(paints, kind="stable")]
    paints = np.sort(paints)
    t = _travel(pts, paints, reach=reach, wall_w=wall[0], shape=(750, 1000))
    paths = t.paths(pts)
    new_paints = paints[t.order]
    for run in _runs(new_paints):
        # the zone of each stroke, worked out here from its box centre: 1 m squares from the top-left corner
        zs = []
        for i in run:
            c = (paths[i].min(axis=0) + paths[i].max(axis=0)) / 2
            row, col = int(c[1] // reach), min(int(c[0] // reach), 3)
            zs.append((row, col if row % 2 == 0 else 3 - col))  # serpentine: odd rows right to left
        finished = set()
        for a, b in zip(zs, zs[1:]):
            if a != b:
                finished.add(a)
                assert b not in finished, "the run came back to a finished zone"
                assert b > a, "zones go row by row from the top, serpentine"
        # the run starts at the topmost stroke end of its first zone
        first = [i for i, z in zip(run, zs) if z == zs[0]]
        top = min(min(paths[i][0][1], paths[i][-1][1]) for i in first)
        assert paths[run[0]][0][1] == pytest.approx(top)
    assert t.zone_visits < t.zone_visits_before


def test_work_zones_number_a_serpentine():
    # centres of 3 × 2 zones of 1 m on a 3 m wide wall: first row left to right, second right to left
    centres = [(500, 500), (1500, 500), (2500, 500), (2500, 1500), (1500, 1500), (500, 1500)]
    zones = work_zones([np.array([c], float) for c in centres], 1000.0, 3000.0)
    assert zones.tolist() == sorted(zones.tolist()) and len(set(zones.tolist())) == 6


def test_hatching_is_painted_back_and_forth():
    # ten parallel 1 m strokes 100 mm apart: the shortest tour paints them alternately left-right and
    # right-left, lifting the brush 100 mm between them (geometry), where file order lifts it ~1 m each time
    pts = [np.array([[0.0, 100.0 * i + 50], [1000.0, 100.0 * i + 50]]) for i in range(10)]
    t = _travel(pts, np.zeros(10, int), reach=2000.0, wall_w=1000.0, width=20.0, s=5.0, shape=(200, 200))
    assert t.lifted_mm == pytest.approx(900.0)
    assert t.reversed.sum() == 5


def test_a_grid_of_dabs_is_toured_close_to_the_shortest_path():
    # 10 × 10 dabs 100 mm apart, shuffled: no open path is shorter than 99 steps of 100 mm (geometry)
    rng = np.random.default_rng(2)
    pts = [np.array([[100.0 * (i % 10) + 50, 100.0 * (i // 10) + 50]]) for i in rng.permutation(100)]
    t = _travel(pts, np.zeros(100, int), reach=5000.0, wall_w=1000.0)
    assert 9900.0 - 1e-6 <= t.lifted_mm <= 1.1 * 9900.0


def test_a_work_zone_must_be_positive():
    pts, paints = _wall_strokes(5, 0)
    for bad in (0.0, -1.0, float("nan")):
        with pytest.raises(ValueError, match="work-zone size must be a number > 0 mm"):
            _travel(pts, paints, reach=bad)


@pytest.fixture(scope="module")
def small_plan():
    from layerplan.pipeline import make_plan
    from layerplan.settings import Settings

    return make_plan(skdata.coffee(), Settings(wall_width_mm=3000.0, wall_height_mm=2000.0, mm_per_px=12.0,
                                               brushes_mm=(100.0, 50.0, 25.0), paints=5, reach_mm=1000.0, seed=2))


def test_a_real_plan_reports_its_travel_and_a_second_tour_keeps_its_picture(small_plan):
    plan = small_plan
    idx = plan.paint_index()
    from layerplan.plan import Layer
    from layerplan.raster import render_steps
    import dataclasses

    assert plan.extra["settings"]["reach_mm"] == 1000.0
    new_layers = []
    for layer in plan.layers:
        assert layer.extra["travel"]["reach_m"] == 1.0
        paths = [s.path_mm for s in layer.strokes]
        t = layer.extra["travel"]
        # the figures written are those of the file's own stroke order
        assert t["lifted_m"] == pytest.approx(_lifted(paths) / 1000, abs=0.006)
        assert t["painted_m"] == pytest.approx(sum(s.length_mm() for s in layer.strokes) / 1000, abs=0.006)
        assert t["lifted_m"] <= t["lifted_before_m"] and t["zone_visits"] <= t["zone_visits_before"]
        # shuffle inside each run (another file order with the same picture) and tour it again
        paints = np.array([idx[s.paint] for s in layer.strokes])
        rng = np.random.default_rng(0)
        shuffled = np.concatenate([rng.permutation(r) for r in _runs(paints)])
        pts = [paths[i] for i in shuffled]
        tr = short_travel(pts, paints[shuffled], reach_mm=1000.0, wall_width_mm=plan.wall_width_mm,
                          width_mm=layer.brush_width_mm, mm_per_px=plan.mm_per_px,
                          shape=(plan.height_px, plan.width_px))
        assert tr.lifted_mm <= tr.lifted_before_mm
        # every run is worked zone by zone from the top, unless keeping the order it came in was shorter
        zones = work_zones(pts, 1000.0, plan.wall_width_mm)
        np_order = np.asarray(tr.order)
        kept = 0
        for r in _runs(paints[shuffled]):
            z = zones[np_order[r]]
            if np.any(np.diff(z) < 0):
                assert np.array_equal(np_order[r], r)
                kept += len(r)
        assert kept <= 0.1 * len(pts)
        strokes = [dataclasses.replace(layer.strokes[shuffled[i]], path_mm=p)
                   for i, p in zip(tr.order, tr.paths(pts))]
        new_layers.append(Layer(layer.brush_width_mm, strokes, layer.extra))
    toured = dataclasses.replace(plan, layers=tuple(new_layers))
    for a, b in zip(render_steps(plan), render_steps(toured)):
        assert np.array_equal(a, b)


def test_the_layer_sheet_says_the_travel(small_plan):
    from layerplan.sheets import _travel_line

    layer = small_plan.layers[-1]
    t = layer.extra["travel"]
    line = _travel_line(layer, "m")
    # figures in the wall's unit, as plan.json gives them
    assert f"{t['lifted_m']:g} m lifted" in line and f"paints {t['painted_m']:g} m" in line
    assert "1 m squares" in line and f"{t['zone_visits']} set-up" in line


def test_given_runs_stay_together_in_their_order_and_keep_the_picture():
    # One run per paint: the placer made the layer's picture for its paints painted run by run, so the order
    # must keep each paint's strokes together, runs in the order given, and may only reorder inside a run
    # (same paint: the picture cannot change); within a run, top of the wall first (common practice: drips
    # fall on unpainted wall)
    width, s, shape = 18.0, 2.0, (100, 100)
    for seed in range(4):
        pts, paints = _random_strokes(120, seed)
        runs = list(np.random.default_rng(seed).permutation(4))
        run_of = np.array([runs.index(q) for q in range(4)])
        placed_for = np.argsort(run_of[paints], kind="stable")  # the order the placer judged strokes in
        order = painting_order(pts, paints, width, s, shape, runs=runs)
        assert sorted(order.tolist()) == list(range(len(pts)))
        assert list(dict.fromkeys(paints[order].tolist())) == [int(q) for q in runs]
        assert _switches(paints[order]) == len(runs) - 1
        assert np.array_equal(_render(pts, paints, order, width, s, shape),
                              _render(pts, paints, placed_for, width, s, shape))
        for q in runs:
            ys = [pts[i][:, 1].min() for i in order if paints[i] == q]
            assert ys == sorted(ys)
