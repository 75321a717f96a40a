"""Layers: one per brush, and the order of a layer's paint runs."""

import numpy as np
import pytest

from layerplan.layers import PAINT_RUNS, layer_specs, paint_runs


def test_largest_first_puts_the_paint_with_most_to_do_first():
    # three paints on a 10 x 10 wall shown as paint 0 (error 10 everywhere): paint 2 is the best paint on 60 pixels,
    # paint 1 on 30, paint 0 nowhere it could still improve. Big areas first, details on top: general to
    # specific, common practice in painting.
    planes = np.full((10, 10, 3), 10.0, np.float32)
    planes[:6, :, 2] = 1.0
    planes[6:9, :, 1] = 1.0
    planes[9:, :, 0] = 0.0
    err = planes[:, :, 0].copy()
    ranks = paint_runs("largest first", planes, err)
    assert ranks.tolist() == [2, 1, 0]


def test_run_orders_are_permutations_and_ties_go_to_the_lighter_paint():
    rng = np.random.default_rng(1)
    planes = rng.random((8, 9, 5)).astype(np.float32)
    err = planes.max(axis=2)
    for rule in PAINT_RUNS:
        ranks = paint_runs(rule, planes, err)
        assert sorted(ranks.tolist()) == list(range(5)), rule
    # palette positions run lightest first (layerplan.palette), so these two are each other's reverse
    assert paint_runs("lightest first", planes, err).tolist() == [0, 1, 2, 3, 4]
    assert paint_runs("darkest first", planes, err).tolist() == [4, 3, 2, 1, 0]
    # nothing left to do anywhere: every score ties, and the lighter paint goes first
    assert paint_runs("largest first", planes, planes.min(axis=2)).tolist() == [0, 1, 2, 3, 4]


def test_unknown_run_rule_names_the_valid_ones():
    with pytest.raises(ValueError, match="paint runs must be one of largest first, lightest first, darkest first"):
        paint_runs("by hue", np.zeros((2, 2, 2), np.float32), np.zeros((2, 2), np.float32))


def test_stroke_cost_scales_with_the_brush_footprint():
    specs = layer_specs((25.0, 100.0), 5.0, 5.5)
    assert [s.limits.width_mm for s in specs] == [100.0, 25.0]
    assert specs[0].cost == pytest.approx(5.5 * 20 ** 2) and specs[1].cost == pytest.approx(5.5 * 5 ** 2)
