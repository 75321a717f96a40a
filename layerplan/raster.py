"""The rendering rule, in one place.

The raster pixel at row i, column j stands for the wall point
((j + 0.5)·mm_per_px, (i + 0.5)·mm_per_px). A stroke covers it when that point
lies within width_mm / 2 of the stroke's polyline (round ends and joins). The
ground covers every pixel; strokes are opaque and applied in file order, layer
after layer. The placer finds footprints with the same coverage test (`covers`), so
what it optimises is exactly what is rendered.
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit

from .plan import Plan


@njit(cache=True, nogil=True)
def stroke_bbox(pts, n, half_w, s, h, w):
    """Pixel rows/cols [i0, i1) x [j0, j1) that may be covered by a stroke."""
    xmin = pts[0, 0]
    xmax = pts[0, 0]
    ymin = pts[0, 1]
    ymax = pts[0, 1]
    for p in range(1, n):
        xmin = min(xmin, pts[p, 0])
        xmax = max(xmax, pts[p, 0])
        ymin = min(ymin, pts[p, 1])
        ymax = max(ymax, pts[p, 1])
    j0 = max(0, int(math.floor((xmin - half_w) / s - 0.5)))
    j1 = min(w, int(math.ceil((xmax + half_w) / s - 0.5)) + 1)
    i0 = max(0, int(math.floor((ymin - half_w) / s - 0.5)))
    i1 = min(h, int(math.ceil((ymax + half_w) / s - 0.5)) + 1)
    return i0, i1, j0, j1


@njit(cache=True, nogil=True)
def covers(pts, n, half_w2, cx, cy):
    """True when the point (cx, cy) lies within the stroke (squared half width)."""
    if n == 1:
        dx = cx - pts[0, 0]
        dy = cy - pts[0, 1]
        return dx * dx + dy * dy <= half_w2
    for p in range(n - 1):
        ax = pts[p, 0]
        ay = pts[p, 1]
        bx = pts[p + 1, 0]
        by = pts[p + 1, 1]
        vx = bx - ax
        vy = by - ay
        wx = cx - ax
        wy = cy - ay
        vv = vx * vx + vy * vy
        t = 0.0
        if vv > 0.0:
            t = (wx * vx + wy * vy) / vv
            if t < 0.0:
                t = 0.0
            elif t > 1.0:
                t = 1.0
        dx = wx - t * vx
        dy = wy - t * vy
        if dx * dx + dy * dy <= half_w2:
            return True
    return False


@njit(cache=True, nogil=True)
def stack_tops(h, w, s, all_pts, starts, counts, widths, paints, alive, ground):
    """Per pixel: the top stroke, its paint, and the stroke and paint just under it.

    Strokes are applied in order (those with ``alive[k]`` False are skipped); -1 and ``ground``
    stand for "no stroke". Used by the painting order and by the placer's clean-up and relaxation.
    """
    top_idx = np.full((h, w), -1, np.int64)
    top_paint = np.full((h, w), ground, np.int64)
    under_paint = np.full((h, w), ground, np.int64)
    under_idx = np.full((h, w), -1, np.int64)
    for k in range(len(starts)):
        if not alive[k]:
            continue
        pts = all_pts[starts[k] : starts[k] + counts[k]]
        half = 0.5 * widths[k]
        i0, i1, j0, j1 = stroke_bbox(pts, counts[k], half, s, h, w)
        for i in range(i0, i1):
            cy = (i + 0.5) * s
            for j in range(j0, j1):
                if covers(pts, counts[k], half * half, (j + 0.5) * s, cy):
                    under_paint[i, j] = top_paint[i, j]
                    under_idx[i, j] = top_idx[i, j]
                    top_paint[i, j] = paints[k]
                    top_idx[i, j] = k
    return top_idx, top_paint, under_paint, under_idx


@njit(cache=True, nogil=True)
def push_pair(out, c, a, b):
    """Store the pair (a, b) at row c of an (N, 2) int64 array, doubling it when full; returns the array."""
    if c == out.shape[0]:
        bigger = np.empty((2 * c + 16, 2), np.int64)
        bigger[:c] = out[:c]
        out = bigger
    out[c, 0] = a
    out[c, 1] = b
    return out


@njit(cache=True, nogil=True)
def paint_strokes(canvas, all_pts, starts, counts, widths, paints, s):
    """Apply strokes in order to an (H, W) index canvas, in place."""
    h, w = canvas.shape
    for k in range(len(starts)):
        pts = all_pts[starts[k] : starts[k] + counts[k]]
        half_w = 0.5 * widths[k]
        half_w2 = half_w * half_w
        i0, i1, j0, j1 = stroke_bbox(pts, counts[k], half_w, s, h, w)
        for i in range(i0, i1):
            cy = (i + 0.5) * s
            for j in range(j0, j1):
                cx = (j + 0.5) * s
                if covers(pts, counts[k], half_w2, cx, cy):
                    canvas[i, j] = paints[k]


def pack_strokes(strokes, paint_index):
    """Flatten a list of `Stroke` into the arrays `paint_strokes` takes."""
    n = len(strokes)
    counts = np.array([len(s.path_mm) for s in strokes], dtype=np.int64)
    starts = np.zeros(n, dtype=np.int64)
    if n:
        starts[1:] = np.cumsum(counts)[:-1]
    pts = (
        np.concatenate([np.asarray(s.path_mm, float).reshape(-1, 2) for s in strokes])
        if n
        else np.zeros((0, 2))
    )
    widths = np.array([s.width_mm for s in strokes], dtype=np.float64)
    paints = np.array([paint_index[s.paint] for s in strokes], dtype=np.int16)
    return pts, starts, counts, widths, paints


def paint_layer(canvas: np.ndarray, plan: Plan, layer, paint_index=None) -> np.ndarray:
    """Apply one layer's strokes, in file order, to an (H, W) int16 canvas of palette positions, in place."""
    if layer.strokes:
        idx = plan.paint_index() if paint_index is None else paint_index
        pts, starts, counts, widths, paints = pack_strokes(layer.strokes, idx)
        paint_strokes(canvas, np.ascontiguousarray(pts), starts, counts, widths, paints, float(plan.mm_per_px))
    return canvas


def _walls(plan: Plan, layers):
    """The wall after the ground, then after each of ``layers``: one canvas, updated in place."""
    idx = plan.paint_index()
    canvas = np.full((plan.height_px, plan.width_px), idx[plan.ground], dtype=np.int16)
    yield canvas
    for layer in layers:
        yield paint_layer(canvas, plan, layer, idx)


def render_indices(plan: Plan, *, upto_layer: int | None = None) -> np.ndarray:
    """Paint index of every raster pixel after the ground and the first layers.

    Parameters
    ----------
    plan : Plan
    upto_layer : int, optional
        Number of layers to apply (default: all).

    Returns
    -------
    canvas : (H, W) int16 array of palette positions
    """
    for canvas in _walls(plan, plan.layers if upto_layer is None else plan.layers[:upto_layer]):
        pass
    return canvas


def render(plan: Plan, *, upto_layer: int | None = None) -> np.ndarray:
    """The plan rendered by the rendering rule.

    Returns
    -------
    image : (H, W, 3) uint8 array, each pixel the ``srgb`` of its paint
    """
    return plan.palette_rgb()[render_indices(plan, upto_layer=upto_layer)]


def render_steps(plan: Plan) -> list[np.ndarray]:
    """Cumulative (H, W) index canvases: ground only, then after each layer."""
    return [canvas.copy() for canvas in _walls(plan, plan.layers)]


def stroke_mask(stroke_path_mm, width_mm: float, mm_per_px: float, shape) -> np.ndarray:
    """(H, W) bool mask of the pixels one stroke covers."""
    pts = np.ascontiguousarray(np.asarray(stroke_path_mm, float).reshape(-1, 2))
    canvas = np.zeros(shape, dtype=np.int16)
    paint_strokes(
        canvas, pts, np.zeros(1, np.int64), np.array([len(pts)], np.int64),
        np.array([float(width_mm)]), np.ones(1, np.int16), float(mm_per_px),
    )
    return canvas.astype(bool)
