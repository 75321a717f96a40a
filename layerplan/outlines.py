"""Outline maps: per layer, the areas each paint covers, as simplified contours.

A layer's area for a paint is where that layer leaves the paint showing once all
its strokes are on (strokes are opaque and applied in file order, as in the
rendering rule). Each connected area (4-connected pixels) is traced with
marching squares at the half level, simplified with Douglas–Peucker, and moved to
wall millimetres. An area comes with a point well inside it for its label (the
pixel farthest from its edge) and a hint of which way the strokes there run.

Contours use the even-odd rule: an area's first contour is its outside, any
further ones are holes.

References
----------
.. [1] W. E. Lorensen, H. E. Cline, "Marching cubes: a high resolution 3D surface
   construction algorithm", SIGGRAPH 1987 (2-D form: marching squares, as in
   ``skimage.measure.find_contours``).
.. [2] D. H. Douglas, T. K. Peucker, "Algorithms for the reduction of the number of
   points required to represent a digitized line or its caricature",
   Cartographica 10(2):112-122, 1973 (as ``skimage.measure.approximate_polygon``,
   compiled here with numba).
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np
from numba import njit
from scipy import ndimage as ndi
from skimage import measure

from .plan import Plan
from .raster import pack_strokes, paint_strokes

#: default contour simplification, as a fraction of the layer's brush width ...
TOLERANCE_BRUSH_FRACTION = 1 / 10
#: ... and never under this many pixels (pixel centres lie 0.35-0.5 px inside a traced
#: contour, so half a pixel keeps thin strokes' areas within a few per cent)
TOLERANCE_MIN_PX = 0.5
#: areas smaller than this fraction of a brush square are left off the map (too small to label)
MIN_AREA_BRUSH_FRACTION = 0.25
#: below this coherence of stroke directions an area's strokes are called "mixed"
MIXED_BELOW = 0.5


@njit(cache=True, nogil=True)
def _douglas_peucker_keep(pts, tol):
    """Douglas & Peucker (1973): which points of a polyline to keep at tolerance ``tol``.

    The same simplification as ``skimage.measure.approximate_polygon`` (distance to the
    segment, so a closed contour's coinciding ends measure distance to that point),
    compiled: that one loops in Python, too slow for the thousands of contours of a fine
    layer.
    """
    n = len(pts)
    keep = np.zeros(n, dtype=np.bool_)
    keep[0] = True
    keep[n - 1] = True
    stack = np.empty((n, 2), dtype=np.int64)
    top = 0
    stack[0, 0] = 0
    stack[0, 1] = n - 1
    top = 1
    while top > 0:
        top -= 1
        i0 = stack[top, 0]
        i1 = stack[top, 1]
        if i1 - i0 < 2:
            continue
        ax = pts[i0, 0]
        ay = pts[i0, 1]
        vx = pts[i1, 0] - ax
        vy = pts[i1, 1] - ay
        vv = vx * vx + vy * vy
        best = -1.0
        at = -1
        for k in range(i0 + 1, i1):
            wx = pts[k, 0] - ax
            wy = pts[k, 1] - ay
            t = 0.0
            if vv > 0.0:
                t = min(1.0, max(0.0, (wx * vx + wy * vy) / vv))
            d = math.hypot(wx - t * vx, wy - t * vy)
            if d > best:
                best = d
                at = k
        if best > tol:
            keep[at] = True
            stack[top, 0] = i0
            stack[top, 1] = at
            stack[top + 1, 0] = at
            stack[top + 1, 1] = i1
            top += 2
    return keep


def simplify(coords: np.ndarray, tolerance: float) -> np.ndarray:
    """Douglas–Peucker simplification of an (N, 2) polyline (closed if first == last)."""
    c = np.ascontiguousarray(coords, dtype=np.float64)
    if len(c) < 3 or tolerance <= 0:
        return c
    return c[_douglas_peucker_keep(c, float(tolerance))]


def layer_canvas(plan: Plan, n: int) -> np.ndarray:
    """(H, W) int16: palette position layer ``n`` (1-based) leaves showing, -1 where it paints nothing.

    Raises
    ------
    ValueError
        If ``n`` is not a layer number of the plan.
    """
    _check_layer(plan, n)
    canvas = np.full((plan.height_px, plan.width_px), -1, dtype=np.int16)
    layer = plan.layers[n - 1]
    if layer.strokes:
        pts, starts, counts, widths, paints = pack_strokes(layer.strokes, plan.paint_index())
        paint_strokes(canvas, np.ascontiguousarray(pts), starts, counts, widths, paints, float(plan.mm_per_px))
    return canvas


def _check_layer(plan: Plan, n) -> None:
    if isinstance(n, bool) or not isinstance(n, (int, np.integer)) or not 1 <= n <= len(plan.layers):
        raise ValueError(f"layer must be a number from 1 to {len(plan.layers)}, got {n!r}")


def _hint_word(angle_deg: float | None, coherence: float) -> str:
    if angle_deg is None:
        return "dabs"
    if coherence < MIXED_BELOW:
        return "mixed"
    a = angle_deg % 180.0
    if a < 22.5 or a >= 157.5:
        return "horizontal"
    if 67.5 <= a < 112.5:
        return "vertical"
    # y points down the wall: 0–90° runs down to the right
    return "diagonal ↘" if a < 90 else "diagonal ↗"


def layer_outlines(
    plan: Plan,
    n: int,
    *,
    tolerance_mm: float | None = None,
    min_area_mm2: float | None = None,
) -> dict[str, Any]:
    """Outline map of one layer.

    Parameters
    ----------
    plan : Plan
    n : int
        Layer number, 1 = the first (widest) layer.
    tolerance_mm : float, optional
        Largest distance a simplified contour may stray from the traced one;
        default a tenth of the brush width, at least half a pixel.
    min_area_mm2 : float, optional
        Smaller areas are left off; default a quarter of a brush width squared.

    Returns
    -------
    outline : dict
        ``{"layer": n, "brush_width_mm": w, "areas": [{"paint", "area_mm2",
        "contours_mm": [[[x, y], ...], ...], "label_mm": [x, y], "label_room_mm",
        "direction_deg", "coherence", "hint"}, ...]}``. ``direction_deg`` is the
        strokes' mean axis, degrees from the x axis towards y (down), in [0, 180),
        or ``None`` for dabs; ``coherence`` in [0, 1] says how well they agree (mean
        resultant length of the doubled angles); ``hint`` is one of "horizontal",
        "vertical", "diagonal ↘", "diagonal ↗", "mixed" (coherence under 0.5) or "dabs".

    Raises
    ------
    ValueError
        If ``n`` is not a layer of the plan, or a tolerance or area is negative.

    References
    ----------
    Lorensen & Cline (1987); Douglas & Peucker (1973).
    """
    _check_layer(plan, n)
    s = float(plan.mm_per_px)
    brush = float(plan.layers[n - 1].brush_width_mm)
    if tolerance_mm is None:
        tolerance_mm = max(TOLERANCE_MIN_PX * s, brush * TOLERANCE_BRUSH_FRACTION)
    if min_area_mm2 is None:
        min_area_mm2 = MIN_AREA_BRUSH_FRACTION * brush * brush
    for name, v in (("tolerance_mm", tolerance_mm), ("min_area_mm2", min_area_mm2)):
        if not isinstance(v, (int, float)) or not math.isfinite(v) or v < 0:
            raise ValueError(f"{name} must be a number >= 0, got {v!r}")
    tol_px = tolerance_mm / s
    min_px = min_area_mm2 / (s * s)
    canvas = layer_canvas(plan, n)
    strokes = plan.layers[n - 1].strokes
    areas: list[dict[str, Any]] = []
    for k in np.unique(canvas[canvas >= 0]):
        paint = plan.palette[int(k)].id
        labels, count = ndi.label(canvas == k)  # 4-connected, as find_contours traces them
        if count == 0:
            continue
        sizes = np.bincount(labels.ravel(), minlength=count + 1)
        dirs = _directions(strokes, paint, labels, s, count)
        for lab, sl in enumerate(ndi.find_objects(labels), start=1):
            if sl is None or sizes[lab] < max(min_px, 1):
                continue
            i0, j0 = sl[0].start, sl[1].start
            crop = np.pad(labels[sl] == lab, 1)
            contours = []
            for c in measure.find_contours(crop.astype(np.float32), 0.5):
                c = simplify(c, tol_px)
                if len(c) < 4:  # closed: first point repeated, so a triangle has 4
                    continue
                xy = np.column_stack([(c[:, 1] - 1 + j0 + 0.5) * s, (c[:, 0] - 1 + i0 + 0.5) * s])
                contours.append(xy)
            if not contours:
                continue
            # the outside first: the contour enclosing the largest area
            contours.sort(key=lambda xy: -abs(_shoelace(xy)))
            dist = ndi.distance_transform_edt(crop)
            li, lj = np.unravel_index(int(np.argmax(dist)), dist.shape)
            angle, coherence = dirs[lab]
            areas.append({
                "paint": paint,
                "area_mm2": round(float(sizes[lab]) * s * s, 1),
                "contours_mm": [[[round(float(x), 1), round(float(y), 1)] for x, y in xy] for xy in contours],
                "label_mm": [round((lj - 1 + j0 + 0.5) * s, 1), round((li - 1 + i0 + 0.5) * s, 1)],
                "label_room_mm": round(float(dist[li, lj]) * s, 1),
                "direction_deg": None if angle is None else round(angle, 1),
                "coherence": round(coherence, 3),
                "hint": _hint_word(angle, coherence),
            })
    areas.sort(key=lambda a: (a["paint"], a["label_mm"][1], a["label_mm"][0]))
    return {"layer": int(n), "brush_width_mm": brush, "areas": areas}


def outline_maps(plan: Plan, **options) -> list[dict[str, Any]]:
    """:func:`layer_outlines` for every layer, first to last."""
    return [layer_outlines(plan, n, **options) for n in range(1, len(plan.layers) + 1)]


def _shoelace(xy: np.ndarray) -> float:
    x, y = xy[:, 0], xy[:, 1]
    return 0.5 * float(np.dot(x, np.roll(y, -1)) - np.dot(y, np.roll(x, -1)))


def _directions(strokes, paint: str, labels: np.ndarray, s: float, count: int):
    """Per area label: (mean stroke axis in degrees or None, coherence).

    Axes are averaged on doubled angles, weighted by segment length, so strokes run
    either way along a line count alike (Mardia & Jupp, Directional Statistics, 2000).
    """
    h, w = labels.shape
    acc = np.zeros((count + 1, 3))  # sum l·cos 2θ, sum l·sin 2θ, sum l
    for st in strokes:
        if st.paint != paint:
            continue
        p = np.asarray(st.path_mm, float).reshape(-1, 2)
        if len(p) >= 2:
            v = np.diff(p, axis=0)
            seg = np.hypot(v[:, 0], v[:, 1])
            ok = seg > 0
            v, seg = v[ok], seg[ok]
            d = np.array([np.sum((v[:, 0] ** 2 - v[:, 1] ** 2) / seg), np.sum(2 * v[:, 0] * v[:, 1] / seg),
                          np.sum(seg)]) if len(seg) else np.zeros(3)
            # sample along the path at most half a brush apart to find the areas it reaches
            step = max(0.5 * st.width_mm, s)
            samples = [p[:1]]
            for a, b, l in zip(p[:-1], p[1:], np.hypot(*np.diff(p, axis=0).T)):
                m = max(1, int(math.ceil(l / step)))
                t = (np.arange(1, m + 1) / m)[:, None]
                samples.append(a + t * (b - a))
            samples = np.concatenate(samples)
        else:
            d = np.zeros(3)
            samples = p
        j = np.clip((samples[:, 0] / s).astype(int), 0, w - 1)
        i = np.clip((samples[:, 1] / s).astype(int), 0, h - 1)
        hit = np.unique(labels[i, j])
        hit = hit[hit > 0]
        acc[hit] += d
    out = {}
    for lab in range(1, count + 1):
        c2, s2, total = acc[lab]
        if total <= 0:
            out[lab] = (None, 0.0)
            continue
        angle = (0.5 * math.degrees(math.atan2(s2, c2))) % 180.0
        out[lab] = (angle, min(1.0, math.hypot(c2, s2) / total))
    return out
