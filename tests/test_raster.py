"""The rendering rule of the plan.json contract, checked pixel by pixel."""

import math

import numpy as np

from layerplan.plan import Layer, Paint, Plan, Stroke
from layerplan.raster import render, render_indices, render_steps, stroke_mask


def _dist_point_segment(px, py, ax, ay, bx, by):
    """Plain Euclidean geometry, written independently of layerplan.raster."""
    vx, vy = bx - ax, by - ay
    L2 = vx * vx + vy * vy
    t = 0.0 if L2 == 0 else max(0.0, min(1.0, ((px - ax) * vx + (py - ay) * vy) / L2))
    return math.hypot(px - (ax + t * vx), py - (ay + t * vy))


def _reference_mask(path, width, s, h, w):
    m = np.zeros((h, w), bool)
    for i in range(h):
        for j in range(w):
            cx, cy = (j + 0.5) * s, (i + 0.5) * s
            if len(path) == 1:
                d = math.hypot(cx - path[0][0], cy - path[0][1])
            else:
                d = min(_dist_point_segment(cx, cy, *path[k], *path[k + 1]) for k in range(len(path) - 1))
            m[i, j] = d <= width / 2
    return m


def _plan(strokes, w=40, h=30, s=2.0):
    pal = [Paint("P1", "#ffffff", (100.0, 0.0, 0.0)), Paint("P2", "#ff0000", (53.24, 80.09, 67.2)),
           Paint("P3", "#0000ff", (32.3, 79.19, -107.86))]
    return Plan(w * s, h * s, w, h, s, pal, "P1", [Layer(20.0, strokes)])


def test_straight_stroke_covers_exactly_the_pixels_within_half_width():
    # A horizontal 10 mm stroke from (10, 10) to (30, 10) at 1 mm/px: pixel centres within
    # 5 mm of the segment. Hand count per row: row centre y = i + 0.5, half chord
    # sqrt(25 - dy^2) around each end cap.
    m = stroke_mask([[10, 10], [30, 10]], 10.0, 1.0, (25, 45))
    ref = _reference_mask([[10, 10], [30, 10]], 10.0, 1.0, 25, 45)
    assert np.array_equal(m, ref)
    # rows 5..14 (centres 5.5..14.5, |dy| <= 4.5) are covered; rows 4 and 15 (|dy| = 5.5) are not
    assert m[5:15].any(axis=1).all() and not m[4].any() and not m[15].any()
    # the middle row spans x centres in [5, 35]: j + 0.5 in [5, 35] -> j = 5..34, 30 pixels
    assert m[10].sum() == 30 and m[10, 5] and m[10, 34] and not m[10, 4] and not m[10, 35]


def test_curved_stroke_and_dab_match_independent_geometry():
    path = [[12.3, 40.1], [30.0, 22.2], [51.7, 31.9]]
    assert np.array_equal(stroke_mask(path, 9.0, 1.5, (40, 45)), _reference_mask(path, 9.0, 1.5, 40, 45))
    dab = [[20.0, 20.0]]
    assert np.array_equal(stroke_mask(dab, 7.0, 1.0, (40, 40)), _reference_mask(dab, 7.0, 1.0, 40, 40))


def test_strokes_are_opaque_and_applied_in_file_order():
    a = Stroke("P2", 20.0, np.array([[20.0, 30.0], [60.0, 30.0]]))
    b = Stroke("P3", 20.0, np.array([[40.0, 10.0], [40.0, 50.0]]))
    img = render(_plan([a, b]))
    # the crossing belongs to the later stroke
    assert tuple(img[15, 20]) == (0, 0, 255)
    img2 = render(_plan([b, a]))
    assert tuple(img2[15, 20]) == (255, 0, 0)
    # ground everywhere else
    assert tuple(img[0, 0]) == (255, 255, 255)
    steps = render_steps(_plan([a, b]))
    assert len(steps) == 2 and (steps[0] == 0).all() and np.array_equal(steps[1], render_indices(_plan([a, b])))


def test_row_runs_and_stroke_stack_match_independent_geometry():
    # footprint_runs (the placer's and the stroke stack's fast footprint) against the plain distance test, on
    # random strokes with vertices on the 0.1 mm grid, where pixel centres often sit exactly on a stroke's edge
    from layerplan.raster import MAX_POINTS, footprint_runs, footprint_scratch, stack_tops

    rng = np.random.default_rng(5)
    for case in range(60):
        s = float(rng.choice([1.0, 2.5, 5.0]))
        width = float(rng.choice([2.0, 5.0, 10.0, 12.5, 25.0]))
        h, w = 24, 31
        n = int(rng.integers(1, MAX_POINTS + 1))
        pts = np.round(rng.uniform(0, [w * s, h * s], size=(n, 2)) * (2 if case % 2 else 10)) / (2 if case % 2 else 10)
        runs, row_ab, row_n = footprint_scratch(h, MAX_POINTS)
        c = footprint_runs(pts, n, width, s, h, w, runs, row_ab, row_n)
        got = np.zeros((h, w), bool)
        for i, a, b in runs[:c]:
            assert not got[i, a : b + 1].any()  # runs are disjoint
            got[i, a : b + 1] = True
        assert np.array_equal(got, _reference_mask(pts.tolist(), width, s, h, w)), case
        assert not row_n.any()  # scratch left clean
    # pixel centres at a stroke's half width up to rounding (3-4-5 triangles in tenths of a mm): the rows agree with
    # the rendering rule's own test (stroke_mask) on every such borderline pixel
    h, w, s = 12, 12, 1.0
    for (dx, dy, hyp) in [(0.3, 0.4, 0.5), (0.6, 0.8, 1.0), (0.9, 1.2, 1.5), (1.2, 1.6, 2.0), (1.8, 2.4, 3.0)]:
        for sx in (-1, 1):
            for sy in (-1, 1):
                for pts in ([[5.5 + sx * dx, 6.5 + sy * dy]],
                            [[5.5 + sx * dx, 6.5 + sy * dy], [5.5 + sx * dx, 9.5 + sy * dy]],
                            [[5.5 + sx * dx, 6.5 + sy * dy], [8.5 + sx * dx, 6.5 + sy * dy]]):
                    pts = np.array(pts)
                    c = footprint_runs(pts, len(pts), 2 * hyp, s, h, w, runs, row_ab, row_n)
                    got = np.zeros((h, w), bool)
                    for i, a, b in runs[:c]:
                        got[i, a : b + 1] = True
                    assert np.array_equal(got, stroke_mask(pts, 2 * hyp, s, (h, w))), (dx, dy, sx, sy, pts)
    # the stack: top stroke and the one under it, per pixel, as the file order paints them
    strokes = [np.array([[10.0, 10.0], [60.0, 40.0]]), np.array([[30.0, 5.0]]), np.array([[5.0, 50.0], [70.0, 12.0]])]
    flat = np.concatenate(strokes)
    counts = np.array([len(p) for p in strokes], np.int64)
    starts = np.array([0, 2, 3], np.int64)
    top, top_paint, under_paint, under = stack_tops(30, 40, 2.0, flat, starts, counts, np.array([14.0, 22.0, 9.0]),
                                                    np.array([1, 2, 3], np.int64), np.ones(3, bool), 0)
    masks = [_reference_mask(p.tolist(), wd, 2.0, 30, 40) for p, wd in zip(strokes, (14.0, 22.0, 9.0))]
    for i in range(30):
        for j in range(40):
            on = [k for k in range(3) if masks[k][i, j]]
            assert top[i, j] == (on[-1] if on else -1)
            assert under[i, j] == (on[-2] if len(on) > 1 else -1)
            assert top_paint[i, j] == (on[-1] + 1 if on else 0)
            assert under_paint[i, j] == (on[-2] + 1 if len(on) > 1 else 0)
