"""The rendering rule, in one place.

The raster pixel at row i, column j stands for the wall point
((j + 0.5)·mm_per_px, (i + 0.5)·mm_per_px). A stroke covers it when that point
lies within width_mm / 2 of the stroke's polyline (round ends and joins). The
ground covers every pixel but those of the openings; strokes are opaque and applied
in file order, layer after layer. A pixel whose centre lies inside an opening (a
window, door or vent, :mod:`layerplan.openings`, edges included) is not painted: no
stroke covers it, and pictures of the wall (final.png, the step pictures) leave it
transparent (`picture`). Index canvases still hold the ground there, so every
canvas stays a plain array of palette positions. `paint_strokes` applies that test
pixel by pixel (the reference); `footprint_runs` finds the same pixel set row by
row, exactly and faster, for the placer and the stroke stack (`stack_tops`), so
what is optimised is exactly what is rendered.
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit

from .plan import Plan

#: most vertices in one stroke's polyline (the placer's limit; sizes the footprint work arrays)
MAX_POINTS = 10


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
def capsule_chord(ax, ay, bx, by, r, y):
    """The x interval (x0, x1) where the line at height y meets the capsule A–B of radius r; x0 > x1 if it misses.

    The capsule is convex, so its section is the hull of the sections of its two end discs and of its middle slab.
    """
    r2 = r * r
    x0 = 1e300
    x1 = -1e300
    dy = y - ay
    if dy * dy <= r2:
        half = math.sqrt(r2 - dy * dy)
        x0 = min(x0, ax - half)
        x1 = max(x1, ax + half)
    dyb = y - by
    if dyb * dyb <= r2:
        half = math.sqrt(r2 - dyb * dyb)
        x0 = min(x0, bx - half)
        x1 = max(x1, bx + half)
    vx = bx - ax
    vy = by - ay
    L = math.sqrt(vx * vx + vy * vy)
    if L > 0.0:
        ux = vx / L
        uy = vy / L
        lo = -1e300
        hi = 1e300
        # along the segment: 0 <= ux (x - ax) + uy dy <= L
        if abs(ux) > 1e-12:
            a = (0.0 - uy * dy) / ux
            b = (L - uy * dy) / ux
            lo = max(lo, min(a, b))
            hi = min(hi, max(a, b))
        elif not (0.0 <= uy * dy <= L):
            hi = -1e300
        # across it: -r <= ux dy - uy (x - ax) <= r
        if abs(uy) > 1e-12:
            a = (ux * dy - r) / uy
            b = (ux * dy + r) / uy
            lo = max(lo, min(a, b))
            hi = min(hi, max(a, b))
        elif abs(ux * dy) > r:
            hi = -1e300
        if lo <= hi:
            x0 = min(x0, ax + lo)
            x1 = max(x1, ax + hi)
    return x0, x1


#: pixels whose centre is this close (mm) to a stroke's edge get the exact coverage test
_EDGE_MM = 1e-6


@njit(cache=True, nogil=True)
def footprint_scratch(h, most):
    """Work arrays for `footprint_runs` on a raster of h rows, for strokes of up to ``most`` vertices.

    Returns (runs, row_ab, row_n): room for every run (at most one per segment and row), each
    row's intervals, and their counts (zero).
    """
    return np.empty((h * most, 3), np.int32), np.zeros((h, most, 2), np.int32), np.zeros(h, np.int32)


@njit(cache=True, nogil=True)
def footprint_runs(pts, n, width_mm, s, h, w, runs, row_ab, row_n):
    """Pixels the stroke covers, exactly the rendering rule's set, as row runs; returns the run count.

    Run r is row ``runs[r, 0]``, columns ``runs[r, 1]`` to ``runs[r, 2]`` inclusive; runs are
    disjoint and ordered by row. Each segment's capsule meets a pixel row in one interval,
    found exactly (the hull of its end discs' and its middle slab's sections); only a
    pixel within _EDGE_MM of an interval's end goes through `raster.covers`. The
    intervals of a row are then merged. ``runs``, ``row_ab`` and ``row_n`` are work arrays
    from `footprint_scratch` for at least n vertices (``row_n`` is all zero on entry and on
    return).
    """
    r = 0.5 * width_mm
    r2 = r * r
    nseg = max(1, n - 1)
    m = min(n, 2)
    ymin = pts[0, 1]
    ymax = pts[0, 1]
    for p in range(1, n):
        ymin = min(ymin, pts[p, 1])
        ymax = max(ymax, pts[p, 1])
    i0 = max(0, int(math.floor((ymin - r) / s - 0.5)))
    i1 = min(h, int(math.ceil((ymax + r) / s - 0.5)) + 1)
    for sidx in range(nseg):
        ax = pts[sidx, 0]
        ay = pts[sidx, 1]
        bx = ax
        by = ay
        if n > 1:
            bx = pts[sidx + 1, 0]
            by = pts[sidx + 1, 1]
        ra = max(i0, int(math.floor((min(ay, by) - r) / s - 0.5)))
        rb = min(i1, int(math.ceil((max(ay, by) + r) / s - 0.5)) + 1)
        for i in range(ra, rb):
            y = (i + 0.5) * s
            x0, x1 = capsule_chord(ax, ay, bx, by, r, y)
            if x0 > x1 + 2 * _EDGE_MM:
                continue
            ja = max(0, int(math.ceil((x0 - _EDGE_MM) / s - 0.5)))
            jb = min(w - 1, int(math.floor((x1 + _EDGE_MM) / s - 0.5)))
            if ja <= jb:
                cx = (ja + 0.5) * s
                if (cx - x0 < _EDGE_MM or x1 - cx < _EDGE_MM) and not covers(pts[sidx : sidx + m], m, r2, cx, y):
                    ja += 1
            if ja <= jb:
                cx = (jb + 0.5) * s
                if (cx - x0 < _EDGE_MM or x1 - cx < _EDGE_MM) and not covers(pts[sidx : sidx + m], m, r2, cx, y):
                    jb -= 1
            if ja > jb:
                continue
            t = row_n[i]
            while t > 0 and row_ab[i, t - 1, 0] > ja:
                row_ab[i, t, 0] = row_ab[i, t - 1, 0]
                row_ab[i, t, 1] = row_ab[i, t - 1, 1]
                t -= 1
            row_ab[i, t, 0] = ja
            row_ab[i, t, 1] = jb
            row_n[i] += 1
    c = 0
    for i in range(i0, i1):
        k = row_n[i]
        if k == 0:
            continue
        row_n[i] = 0
        ca = row_ab[i, 0, 0]
        cb = row_ab[i, 0, 1]
        for t in range(1, k):
            if row_ab[i, t, 0] <= cb + 1:
                cb = max(cb, row_ab[i, t, 1])
            else:
                runs[c, 0] = i
                runs[c, 1] = ca
                runs[c, 2] = cb
                c += 1
                ca = row_ab[i, t, 0]
                cb = row_ab[i, t, 1]
        runs[c, 0] = i
        runs[c, 1] = ca
        runs[c, 2] = cb
        c += 1
    return c



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
    most = 2
    for k in range(len(starts)):
        most = max(most, counts[k])
    runs, row_ab, row_n = footprint_scratch(h, most)
    for k in range(len(starts)):
        if not alive[k]:
            continue
        pts = all_pts[starts[k] : starts[k] + counts[k]]
        nr = footprint_runs(pts, counts[k], widths[k], s, h, w, runs, row_ab, row_n)
        for r in range(nr):
            i = runs[r, 0]
            for j in range(runs[r, 1], runs[r, 2] + 1):
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


def picture(plan: Plan, canvas: np.ndarray) -> np.ndarray:
    """A canvas of palette positions as the wall shows it.

    Returns
    -------
    image : (H, W, 3) uint8 array, or (H, W, 4) with alpha 0 inside the openings when the
        plan has openings (they are not painted)
    """
    from .openings import plan_mask

    rgb = plan.palette_rgb()[canvas]
    shut = plan_mask(plan)
    if shut is None:
        return rgb
    h, w = canvas.shape
    alpha = np.where(shut[:h, :w], 0, 255).astype(np.uint8)
    return np.concatenate([rgb, alpha[..., None]], axis=2)


def stroke_mask(stroke_path_mm, width_mm: float, mm_per_px: float, shape) -> np.ndarray:
    """(H, W) bool mask of the pixels one stroke covers."""
    pts = np.ascontiguousarray(np.asarray(stroke_path_mm, float).reshape(-1, 2))
    canvas = np.zeros(shape, dtype=np.int16)
    paint_strokes(
        canvas, pts, np.zeros(1, np.int64), np.array([len(pts)], np.int64),
        np.array([float(width_mm)]), np.ones(1, np.int16), float(mm_per_px),
    )
    return canvas.astype(bool)
