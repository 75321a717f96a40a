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
