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
.. [3] P. F. Felzenszwalb, D. P. Huttenlocher, "Distance transforms of sampled
   functions", Theory of Computing 8:415-428, 2012 (exact Euclidean distance
   transform, for the label points).
.. [4] A. Rosenfeld, J. L. Pfaltz, "Sequential operations in digital picture
   processing", J. ACM 13(4):471-494, 1966; K. Wu, E. Otoo, K. Suzuki, "Optimizing
   two-pass connected-component labeling algorithms", Pattern Analysis and
   Applications 12:117-135, 2009 (labelling the areas).

The tracing, distance transform and labelling are compiled (numba) and give exactly
what ``skimage.measure.find_contours``, ``scipy.ndimage.distance_transform_edt`` and
``scipy.ndimage.label`` give (the tests hold them to it); those ran per area and were
most of the export time.
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np
from numba import njit

from .plan import Plan
from .raster import paint_layer

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


@njit(cache=True, nogil=True)
def _find_root(parent, a):
    while parent[a] != a:
        parent[a] = parent[parent[a]]
        a = parent[a]
    return a


@njit(cache=True, nogil=True)
def _components(canvas):
    """Connected areas of equal value (4-connected; values < 0 are no area), all paints at once.

    Two-pass labelling with union-find (Rosenfeld & Pfaltz 1966; Wu, Otoo & Suzuki 2009),
    numbered 1, 2, ... in the row order of each area's first pixel, so the areas of one
    value come in the order ``scipy.ndimage.label`` numbers them on that value's mask.

    Returns
    -------
    labels : (H, W) int32, 0 outside every area
    value, size, i0, i1, j0, j1 : (count + 1,) int64 per label (index 0 unused):
        the area's value, its pixel count and its bounding box [i0, i1) × [j0, j1)
    """
    h, w = canvas.shape
    prov = np.zeros((h, w), dtype=np.int32)
    parent = np.empty(h * w + 1, dtype=np.int32)
    parent[0] = 0
    n = 0
    for i in range(h):
        for j in range(w):
            v = canvas[i, j]
            if v < 0:
                continue
            up = prov[i - 1, j] if i > 0 and canvas[i - 1, j] == v else 0
            left = prov[i, j - 1] if j > 0 and canvas[i, j - 1] == v else 0
            if up == 0 and left == 0:
                n += 1
                parent[n] = n
                prov[i, j] = n
            elif up == 0:
                prov[i, j] = left
            elif left == 0:
                prov[i, j] = up
            else:
                ru = _find_root(parent, up)
                rl = _find_root(parent, left)
                if ru != rl:
                    parent[max(ru, rl)] = min(ru, rl)
                prov[i, j] = min(ru, rl)
    final = np.zeros(n + 1, dtype=np.int32)
    count = 0
    labels = np.zeros((h, w), dtype=np.int32)
    for i in range(h):
        for j in range(w):
            p = prov[i, j]
            if p == 0:
                continue
            r = _find_root(parent, p)
            if final[r] == 0:
                count += 1
                final[r] = count
            labels[i, j] = final[r]
    value = np.zeros(count + 1, dtype=np.int64)
    size = np.zeros(count + 1, dtype=np.int64)
    i0 = np.full(count + 1, h, dtype=np.int64)
    i1 = np.zeros(count + 1, dtype=np.int64)
    j0 = np.full(count + 1, w, dtype=np.int64)
    j1 = np.zeros(count + 1, dtype=np.int64)
    for i in range(h):
        for j in range(w):
            lab = labels[i, j]
            if lab == 0:
                continue
            value[lab] = canvas[i, j]
            size[lab] += 1
            i0[lab] = min(i0[lab], i)
            i1[lab] = max(i1[lab], i + 1)
            j0[lab] = min(j0[lab], j)
            j1[lab] = max(j1[lab], j + 1)
    return labels, value, size, i0, i1, j0, j1


@njit(cache=True, nogil=True)
def _crop_mask(labels, lab, i0, i1, j0, j1):
    """``labels[i0:i1, j0:j1] == lab`` with a one-pixel border of False around it."""
    m = np.zeros((i1 - i0 + 2, j1 - j0 + 2), dtype=np.bool_)
    for i in range(i0, i1):
        for j in range(j0, j1):
            if labels[i, j] == lab:
                m[i - i0 + 1, j - j0 + 1] = True
    return m


@njit(cache=True, nogil=True)
def _trace(m):
    """Marching squares at the half level over a binary image whose border is False.

    Gives exactly what ``skimage.measure.find_contours(m.astype(float), 0.5)`` gives (its
    defaults: low values 8-connected, so high ones 4-connected; the same case table,
    segment order and joining of segments into contours, so the same start point and
    direction of each contour and the same order of contours), compiled: that one joins
    the segments in Python.

    Returns
    -------
    points : (P, 2) float64 of (row, col)
    offsets : (K + 1,) int64, contour k is ``points[offsets[k]:offsets[k + 1]]``
    """
    h, w = m.shape
    nh = h * (w - 1)  # points on horizontal pixel edges first, then on vertical ones
    npts = nh + (h - 1) * w
    # one pass to count the segments, so the node arrays are just big enough
    nseg = 0
    for r in range(h - 1):
        for c in range(w - 1):
            case = (1 if m[r, c] else 0) + (2 if m[r, c + 1] else 0) + (4 if m[r + 1, c] else 0) \
                + (8 if m[r + 1, c + 1] else 0)
            if case == 6 or case == 9:
                nseg += 2
            elif case != 0 and case != 15:
                nseg += 1
    segs = np.empty((nseg, 2), dtype=np.int64)
    k = 0
    for r in range(h - 1):
        for c in range(w - 1):
            case = (1 if m[r, c] else 0) + (2 if m[r, c + 1] else 0) + (4 if m[r + 1, c] else 0) \
                + (8 if m[r + 1, c + 1] else 0)
            if case == 0 or case == 15:
                continue
            top = r * (w - 1) + c
            bottom = (r + 1) * (w - 1) + c
            left = nh + r * w + c
            right = nh + r * w + c + 1
            # scikit-image's table for vertex_connect_high=False (low values on the left)
            if case == 1:
                a, b = top, left
            elif case == 2:
                a, b = right, top
            elif case == 3:
                a, b = right, left
            elif case == 4:
                a, b = left, bottom
            elif case == 5:
                a, b = top, bottom
            elif case == 6:
                segs[k, 0] = right
                segs[k, 1] = top
                k += 1
                a, b = left, bottom
            elif case == 7:
                a, b = right, bottom
            elif case == 8:
                a, b = bottom, right
            elif case == 9:
                segs[k, 0] = top
                segs[k, 1] = left
                k += 1
                a, b = bottom, right
            elif case == 10:
                a, b = bottom, top
            elif case == 11:
                a, b = bottom, left
            elif case == 12:
                a, b = left, right
            elif case == 13:
                a, b = top, right
            else:  # 14
                a, b = left, top
            segs[k, 0] = a
            segs[k, 1] = b
            k += 1
    # join segments as scikit-image's _assemble_contours does, with linked lists for its deques
    starts = np.full(npts, -1, dtype=np.int64)  # point -> contour starting there
    ends = np.full(npts, -1, dtype=np.int64)  # point -> contour ending there
    node_pt = np.empty(2 * nseg + 1, dtype=np.int64)
    node_next = np.full(2 * nseg + 1, -1, dtype=np.int64)
    first = np.empty(nseg + 1, dtype=np.int64)
    last = np.empty(nseg + 1, dtype=np.int64)
    alive = np.zeros(nseg + 1, dtype=np.bool_)
    nodes = 0
    count = 0
    for s in range(nseg):
        a = segs[s, 0]
        b = segs[s, 1]
        tail = starts[b]
        starts[b] = -1
        head = ends[a]
        ends[a] = -1
        if tail >= 0 and head >= 0:
            if tail == head:  # close the contour
                node_pt[nodes] = b
                node_next[last[head]] = nodes
                last[head] = nodes
                nodes += 1
            elif tail > head:  # tail came second: append it to head
                node_next[last[head]] = first[tail]
                last[head] = last[tail]
                alive[tail] = False
                starts[node_pt[first[head]]] = head
                ends[node_pt[last[head]]] = head
            else:  # head came second: put it in front of tail
                starts[node_pt[first[head]]] = -1
                node_next[last[head]] = first[tail]
                first[tail] = first[head]
                alive[head] = False
                starts[node_pt[first[tail]]] = tail
                ends[node_pt[last[tail]]] = tail
        elif tail < 0 and head < 0:  # a new contour
            node_pt[nodes] = a
            node_pt[nodes + 1] = b
            node_next[nodes] = nodes + 1
            first[count] = nodes
            last[count] = nodes + 1
            alive[count] = True
            starts[a] = count
            ends[b] = count
            nodes += 2
            count += 1
        elif head < 0:  # prepend to tail
            node_pt[nodes] = a
            node_next[nodes] = first[tail]
            first[tail] = nodes
            starts[a] = tail
            nodes += 1
        else:  # append to head
            node_pt[nodes] = b
            node_next[last[head]] = nodes
            last[head] = nodes
            ends[b] = head
            nodes += 1
    total = 0
    kept = 0
    for c in range(count):
        if alive[c]:
            kept += 1
            q = first[c]
            while True:
                total += 1
                if q == last[c]:
                    break
                q = node_next[q]
    points = np.empty((total, 2), dtype=np.float64)
    offsets = np.zeros(kept + 1, dtype=np.int64)
    p = 0
    kk = 0
    for c in range(count):
        if not alive[c]:
            continue
        q = first[c]
        while True:
            pt = node_pt[q]
            if pt < nh:
                points[p, 0] = pt // (w - 1)
                points[p, 1] = pt % (w - 1) + 0.5
            else:
                points[p, 0] = (pt - nh) // w + 0.5
                points[p, 1] = (pt - nh) % w
            p += 1
            if q == last[c]:
                break
            q = node_next[q]
        kk += 1
        offsets[kk] = p
    return points, offsets


@njit(cache=True, nogil=True)
def _deepest(m):
    """The pixel of ``m`` farthest from any False pixel (the first in row order) and its squared distance.

    Exact Euclidean distance transform, a column pass then the lower envelope of parabolas
    along rows (Felzenszwalb & Huttenlocher 2012); ``m`` must have a False border. The same
    distances as ``scipy.ndimage.distance_transform_edt``.
    """
    h, w = m.shape
    g = np.empty((h, w), dtype=np.float64)
    big = float(h + w)
    for c in range(w):
        d = big
        for r in range(h):
            d = 0.0 if not m[r, c] else d + 1.0
            g[r, c] = d
        d = big
        for r in range(h - 1, -1, -1):
            d = 0.0 if not m[r, c] else d + 1.0
            if d < g[r, c]:
                g[r, c] = d
    v = np.empty(w, dtype=np.int64)
    z = np.empty(w + 1, dtype=np.float64)
    f = np.empty(w, dtype=np.float64)
    best = -1.0
    bi = 0
    bj = 0
    for r in range(h):
        for c in range(w):
            f[c] = g[r, c] * g[r, c]
        k = 0
        v[0] = 0
        z[0] = -np.inf
        z[1] = np.inf
        for q in range(1, w):
            s = ((f[q] + q * q) - (f[v[k]] + v[k] * v[k])) / (2.0 * (q - v[k]))
            while s <= z[k]:
                k -= 1
                s = ((f[q] + q * q) - (f[v[k]] + v[k] * v[k])) / (2.0 * (q - v[k]))
            k += 1
            v[k] = q
            z[k] = s
            z[k + 1] = np.inf
        k = 0
        for q in range(w):
            while z[k + 1] < q:
                k += 1
            d2 = (q - v[k]) * (q - v[k]) + f[v[k]]
            if d2 > best:
                best = d2
                bi = r
                bj = q
    return bi, bj, best


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
    return paint_layer(np.full((plan.height_px, plan.width_px), -1, dtype=np.int16), plan, plan.layers[n - 1])


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
    canvas: np.ndarray | None = None,
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
    canvas : (H, W) int16, optional
        :func:`layer_canvas` of this layer, if the caller has it already.

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
        If ``n`` is not a layer of the plan, a tolerance or area is negative, or
        ``canvas`` is not the plan's raster size.

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
    if canvas is None:
        canvas = layer_canvas(plan, n)
    elif np.shape(canvas) != (plan.height_px, plan.width_px):
        raise ValueError(f"canvas must be the plan's raster, {plan.height_px} × {plan.width_px} px, "
                         f"got shape {np.shape(canvas)}")
    strokes = plan.layers[n - 1].strokes
    # wall mm of every half-pixel position, rounded once: contour points lie on that lattice
    # (x = (k / 2)·s, the same float as from the contour's own coordinates)
    x_mm = np.array([round((k - 1) / 2 * s, 1) for k in range(2 * plan.width_px + 3)])
    y_mm = np.array([round((k - 1) / 2 * s, 1) for k in range(2 * plan.height_px + 3)])
    areas: list[dict[str, Any]] = []
    labels, value, size, top, bottom, left, right = _components(np.asarray(canvas, dtype=np.int16))
    sums = _direction_sums(strokes, plan.paint_index(), labels, value, s)
    ids = [p.id for p in plan.palette]
    # paint by paint (palette order), each paint's areas in row order of their first pixel
    order = np.argsort(value[1:], kind="stable") + 1
    for lab in order[size[order] >= max(min_px, 1)].tolist():
        paint = ids[value[lab]]
        i0, j0 = int(top[lab]), int(left[lab])
        crop = _crop_mask(labels, lab, i0, int(bottom[lab]), j0, int(right[lab]))
        points, offsets = _trace(crop)
        contours = []
        for a, b in zip(offsets[:-1].tolist(), offsets[1:].tolist()):
            c = simplify(points[a:b], tol_px)
            if len(c) < 4:  # closed: first point repeated, so a triangle has 4
                continue
            xy = np.column_stack([(c[:, 1] - 1 + j0 + 0.5) * s, (c[:, 0] - 1 + i0 + 0.5) * s])
            contours.append((-abs(_shoelace(xy)), len(contours), c))
        if not contours:
            continue
        # the outside first: the contour enclosing the largest area
        contours.sort()
        li, lj, d2 = _deepest(crop)
        li, lj = np.intp(li), np.intp(lj)  # numpy integers, so label_mm rounds as it always has
        angle, coherence = _direction(sums[lab])
        areas.append({
            "paint": paint,
            "area_mm2": round(float(size[lab]) * s * s, 1),
            "contours_mm": [[[x, y] for x, y in zip(x_mm[(2 * c[:, 1]).astype(np.int64) + 2 * j0].tolist(),
                                                    y_mm[(2 * c[:, 0]).astype(np.int64) + 2 * i0].tolist())]
                            for _, _, c in contours],
            "label_mm": [round((lj - 1 + j0 + 0.5) * s, 1), round((li - 1 + i0 + 0.5) * s, 1)],
            "label_room_mm": round(math.sqrt(d2) * s, 1),
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
    return 0.5 * float(np.dot(x, np.concatenate((y[1:], y[:1]))) - np.dot(y, np.concatenate((x[1:], x[:1]))))


def _direction_sums(strokes, paint_index: dict[str, int], labels: np.ndarray, value: np.ndarray,
                    s: float) -> np.ndarray:
    """Per area label, over the strokes of its paint that reach it: (Σ l·cos 2θ, Σ l·sin 2θ, Σ l).

    ``θ`` is a segment's angle and ``l`` its length; strokes are added in file order.
    """
    h, w = labels.shape
    count = len(value) - 1
    acc = np.zeros((count + 1, 3))
    if not strokes:
        return acc
    paths = [np.asarray(st.path_mm, float).reshape(-1, 2) for st in strokes]
    d = np.zeros((len(paths), 3))
    for k, p in enumerate(paths):
        if len(p) >= 2:
            v = np.diff(p, axis=0)
            seg = np.hypot(v[:, 0], v[:, 1])
            ok = seg > 0
            v, seg = v[ok], seg[ok]
            if len(seg):
                d[k] = (np.sum((v[:, 0] ** 2 - v[:, 1] ** 2) / seg), np.sum(2 * v[:, 0] * v[:, 1] / seg),
                        np.sum(seg))
    # sample along each path at most half a brush apart to find the areas it reaches
    # (all strokes at once: the first point, then m evenly spaced points on each segment)
    widths = np.array([st.width_mm for st in strokes], dtype=float)
    paint = np.array([paint_index[st.paint] for st in strokes], dtype=np.int64)
    counts = np.array([len(p) for p in paths])
    pts = np.concatenate(paths)
    last = np.cumsum(counts) - 1
    a_ix = np.setdiff1d(np.arange(len(pts) - 1), last[:-1], assume_unique=True)
    a, b = pts[a_ix], pts[a_ix + 1]
    step = np.repeat(np.maximum(0.5 * widths, s), counts - 1)
    m = np.maximum(1, np.ceil(np.hypot(*(b - a).T) / step)).astype(np.int64)
    rep = np.repeat(np.arange(len(m)), m)
    t = (np.arange(1, len(rep) + 1) - np.repeat(np.cumsum(m) - m, m)) / m[rep]
    samples = np.concatenate([pts[last - counts + 1], a[rep] + t[:, None] * (b[rep] - a[rep])])
    owner = np.concatenate([np.arange(len(paths)), np.repeat(np.repeat(np.arange(len(paths)), counts - 1), m)])
    j = np.clip((samples[:, 0] / s).astype(int), 0, w - 1)
    i = np.clip((samples[:, 1] / s).astype(int), 0, h - 1)
    key = np.unique(owner * (count + 1) + labels[i, j])  # by stroke, then area
    lab, who = key % (count + 1), key // (count + 1)
    hit = (lab > 0) & (value[lab] == paint[who])  # an area of the stroke's own paint
    np.add.at(acc, lab[hit], d[who[hit]])  # stroke by stroke, as adding them one at a time would
    return acc


def _direction(sums) -> tuple[float | None, float]:
    """(mean stroke axis in degrees or None, coherence) from :func:`_direction_sums` of an area.

    Axes are averaged on doubled angles, weighted by segment length, so strokes run
    either way along a line count alike (Mardia & Jupp, Directional Statistics, 2000).
    """
    c2, s2, total = sums
    if total <= 0:
        return None, 0.0
    angle = (0.5 * math.degrees(math.atan2(s2, c2))) % 180.0
    return angle, min(1.0, math.hypot(c2, s2) / total)


def place_labels(
    outline: dict[str, Any],
    box_mm,
    *,
    min_area_mm2: float,
    min_height: float = 0.6,
    same_paint_gap: float = 1.0,
    gap: float = 0.2,
) -> dict[str, Any]:
    """Decide which areas of an outline map get a label, so labels stay readable.

    Greedy, largest area first. An area is left unlabelled (``"label": False``) when

    * it is smaller than ``min_area_mm2`` (too small to show a shape under its label),
    * it is thinner than ``min_height`` label heights (``2 · label_room_mm``: the label
      would spill over its edges), or
    * its label would overlap one already placed: boxes are kept ``gap`` label heights
      apart, and labels of the same paint a further ``same_paint_gap`` label widths apart
      (no "P5P5" where one paint's areas crowd together).

    Parameters
    ----------
    outline : dict
        An outline map (:func:`layer_outlines`).
    box_mm : callable
        ``box_mm(area) -> (half_width, half_height)`` of the area's label, mm of wall
        (see :func:`layerplan.svg.label_box_mm`).
    min_area_mm2 : float
        Smallest area, mm² of wall, that gets a label (>= 0).
    min_height, same_paint_gap, gap : float
        As above (>= 0).

    Returns
    -------
    outline : dict
        A copy whose areas each carry ``"label"`` (bool); the contours are shared, not copied.

    Raises
    ------
    ValueError
        If an option is not a number >= 0.
    """
    for name, v in (("min_area_mm2", min_area_mm2), ("min_height", min_height),
                    ("same_paint_gap", same_paint_gap), ("gap", gap)):
        if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v) or v < 0:
            raise ValueError(f"{name} must be a number >= 0, got {v!r}")
    areas = [dict(a) for a in outline["areas"]]
    placed: list[tuple[str, float, float, float, float]] = []  # paint, x, y, half width, half height
    for k in sorted(range(len(areas)), key=lambda k: -areas[k]["area_mm2"]):
        a = areas[k]
        bw, bh = box_mm(a)
        x, y = a["label_mm"]
        ok = a["area_mm2"] >= min_area_mm2 and 2.0 * a["label_room_mm"] >= min_height * 2.0 * bh
        for paint, px, py, pw, ph in placed if ok else ():
            pad = gap * max(bh, ph) * 2.0
            pad_x = pad + (same_paint_gap * 2.0 * max(bw, pw) if paint == a["paint"] else 0.0)
            pad_y = pad + (same_paint_gap * 2.0 * max(bh, ph) if paint == a["paint"] else 0.0)
            if abs(x - px) < bw + pw + pad_x and abs(y - py) < bh + ph + pad_y:
                ok = False
                break
        a["label"] = bool(ok)
        if ok:
            placed.append((a["paint"], x, y, bw, bh))
    return {**outline, "areas": areas}


def place_labels_around(
    items: list[dict[str, Any]],
    *,
    bounds: tuple[float, float, float, float],
    gap: float = 0.3,
    rings: int = 4,
    fixed: list[tuple[float, float, float, float]] = (),
) -> list[dict[str, Any]]:
    """Place a label for every item, moving it off its point (for a leader line) when it does not fit.

    Greedy in the order given (largest areas first, say). An item whose label fits inside its
    area (``fits``) is tried at its own point first; every item is then tried on rings of 8 to
    16 positions around its point, 1 to ``rings`` label heights further out each, and takes the
    first position where its box overlaps no box placed so far (kept ``gap`` label heights
    apart), covers no other item's point and stays inside ``bounds``. An item with no free
    position is put on its own point all the same (``clash``), so every item is labelled.
    Cartographers call this point-feature label placement with leaders (after Imhof 1975).

    Parameters
    ----------
    items : list of dict
        ``x``, ``y`` (the point), ``half_w``, ``half_h`` (the label's half size) and ``fits``
        (bool), all in one unit.
    bounds : (x0, y0, x1, y1)
        Labels stay inside.
    gap : float
        Clearance between labels, in label heights (>= 0).
    rings : int
        How far out a label may go, in label heights (>= 0).
    fixed : list of (x, y, half_w, half_h)
        Boxes already on the map (other text) that labels keep clear of, as of each other.

    Returns
    -------
    placed : list of dict
        Per item, in the given order: ``x``, ``y`` (the label's centre), ``moved`` (not on
        its point) and ``clash`` (overlapping, for want of room).

    References
    ----------
    E. Imhof, "Positioning names on maps", The American Cartographer 2(2):128-144, 1975.
    """
    n, m = len(items), len(fixed)
    px = np.array([it["x"] for it in items], dtype=float)
    py = np.array([it["y"] for it in items], dtype=float)
    bx0, by0, bx1, by1 = bounds
    cx, cy = np.empty(m + n), np.empty(m + n)
    hw, hh = np.empty(m + n), np.empty(m + n)
    for k, (fx, fy, fw, fh) in enumerate(fixed):
        cx[k], cy[k], hw[k], hh[k] = fx, fy, fw, fh
    out = []
    angles = [np.linspace(0, 2 * np.pi, 8 + 4 * min(r, 2), endpoint=False) for r in range(rings + 1)]
    for i, it in enumerate(items):
        bw, bh = float(it["half_w"]), float(it["half_h"])
        x, y = float(it["x"]), float(it["y"])
        cands = [(x, y, False)] if it["fits"] else []
        for r in range(1, rings + 1):
            dist = r * 2.0 * bh * (1.0 + gap) + (bw if r == 1 else 0.0) * 0.5
            for t in angles[r]:
                cands.append((x + (dist + bw * abs(math.cos(t))) * math.cos(t), y + dist * math.sin(t), True))
        best = None
        for qx, qy, moved in cands:
            if qx - bw < bx0 or qx + bw > bx1 or qy - bh < by0 or qy + bh > by1:
                continue
            if m + i:
                j = m + i
                pad = gap * 2.0 * np.maximum(bh, hh[:j])
                if np.any((np.abs(qx - cx[:j]) < bw + hw[:j] + pad) & (np.abs(qy - cy[:j]) < bh + hh[:j] + pad)):
                    continue
            others = (np.abs(px - qx) < bw) & (np.abs(py - qy) < bh)
            others[i] = False
            if np.any(others):
                continue
            best = (qx, qy, moved)
            break
        clash = best is None
        if clash:
            best = (x, y, False)
        cx[m + i], cy[m + i], hw[m + i], hh[m + i] = best[0], best[1], bw, bh
        out.append({"x": best[0], "y": best[1], "moved": best[2], "clash": clash})
    return out


def area_pixels(canvas: np.ndarray, outline: dict[str, Any], mm_per_px: float) -> tuple[np.ndarray, np.ndarray]:
    """Which area of ``outline`` each pixel of ``canvas`` belongs to.

    Returns
    -------
    labels : (H, W) int32
        Connected areas of ``canvas`` as :func:`layer_outlines` finds them (0 outside every area).
    area_of : (count + 1,) int64
        For each label, the index of its area in ``outline["areas"]``, or -1 for the areas too small
        to be on the map.
    """
    labels, *_ = _components(np.asarray(canvas, dtype=np.int16))
    area_of = np.full(int(labels.max()) + 1, -1, dtype=np.int64)
    h, w = labels.shape
    for k, a in enumerate(outline["areas"]):
        # the label point is the centre of the area's deepest pixel
        j = min(w - 1, max(0, round(a["label_mm"][0] / mm_per_px - 0.5)))
        i = min(h - 1, max(0, round(a["label_mm"][1] / mm_per_px - 0.5)))
        if labels[i, j]:
            area_of[labels[i, j]] = k
    return labels, area_of


def pieces_in_box(labels: np.ndarray, area_of: np.ndarray, box_px: tuple[int, int, int, int], *,
                  min_px: float, skip=()) -> list[dict[str, Any]]:
    """The parts of areas inside a box of pixels (rows i0:i1, columns j0:j1), each with a point well inside.

    For an area reaching into a box from outside it, a label point for the part inside: the part's
    pixel farthest from its edge or the box's (exact Euclidean distance, as for :func:`layer_outlines`).

    Returns
    -------
    pieces : list of dict
        ``area`` (index), ``i``, ``j`` (the point's pixel), ``room_px`` (its distance to the edge) and
        ``size_px``, for the areas not in ``skip`` with at least ``min_px`` pixels inside the box.
    """
    i0, i1, j0, j1 = box_px
    crop = labels[i0:i1, j0:j1]
    out = []
    skip = set(skip)
    found, counts = np.unique(crop, return_counts=True)
    for lab, count in zip(found.tolist(), counts.tolist()):
        k = int(area_of[lab]) if lab else -1
        if k < 0 or k in skip or count < min_px:
            continue
        mask = np.zeros((crop.shape[0] + 2, crop.shape[1] + 2), dtype=np.bool_)
        mask[1:-1, 1:-1] = crop == lab
        li, lj, d2 = _deepest(mask)
        out.append({"area": k, "i": i0 + li - 1, "j": j0 + lj - 1, "room_px": math.sqrt(d2), "size_px": count})
    return out
