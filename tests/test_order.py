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
