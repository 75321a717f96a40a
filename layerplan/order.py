"""Order each layer's strokes for painting.

Rule: within a layer, strokes are grouped by paint so the brush is washed as few times
as possible, and within one paint they go from the top of the wall down (drips then run
onto unpainted wall, not finished work — common practice). A stroke never moves ahead of
an earlier stroke of another paint whose pixels it must cover, so the picture after the
layer is exactly what the placer made.
"""

from __future__ import annotations

import heapq

import numpy as np
from numba import njit

from .raster import covers, push_pair, stack_tops, stroke_bbox


@njit(cache=True, nogil=True)
def _must_precede(last, all_pts, starts, counts, paints, width, s):
    """Edges (a, b): stroke a must be painted before stroke b."""
    h, w = last.shape
    half2 = 0.25 * width * width
    out = np.empty((1024, 2), np.int64)
    c = 0
    for k in range(len(starts)):
        pts = all_pts[starts[k] : starts[k] + counts[k]]
        i0, i1, j0, j1 = stroke_bbox(pts, counts[k], 0.5 * width, s, h, w)
        for i in range(i0, i1):
            for j in range(j0, j1):
                top = last[i, j]
                if top == k or top < 0 or paints[top] == paints[k]:
                    continue
                if covers(pts, counts[k], half2, (j + 0.5) * s, (i + 0.5) * s):
                    out = push_pair(out, c, k, top)
                    c += 1
    return out[:c]


def painting_order(points, paints, width_mm: float, mm_per_px: float, shape, *, runs=None) -> np.ndarray:
    """A painting order for one layer's strokes that leaves the picture unchanged.

    Parameters
    ----------
    points : list of (n_i, 2) float arrays, stroke polylines in wall mm, in placement order
    paints : (N,) int array, palette position of each stroke
    width_mm : float
    mm_per_px : float
    shape : (H, W) of the raster
    runs : sequence of int, optional
        The layer's paints (palette positions) in the order of their runs, as the placer made
        the picture for: every stroke of ``runs[0]`` comes first, then every stroke of
        ``runs[1]``, and so on; strokes are only reordered inside a run (same paint, so the
        picture cannot change). Every paint of ``paints`` must be in it.

    Returns
    -------
    order : (N,) int array, a permutation of ``range(N)``

    Notes
    -----
    The final colour of a pixel is that of the last stroke over it. Every stroke of
    another paint over that pixel must stay before that last stroke; strokes of the same
    paint may swap freely. Among the orders that respect this, a greedy topological sort
    keeps the current paint while it can and otherwise switches to the paint with the most
    strokes ready, taking the topmost ready stroke first.

    References
    ----------
    A. B. Kahn, "Topological sorting of large networks", Commun. ACM 5(11), 1962.
    """
    n = len(points)
    if n == 0:
        return np.zeros(0, dtype=np.int64)
    paints = np.asarray(paints, dtype=np.int64)
    if runs is not None:
        run_of = {int(q): r for r, q in enumerate(runs)}
        top_y = np.array([float(p[:, 1].min()) for p in points])
        return np.lexsort((top_y, [run_of[int(q)] for q in paints])).astype(np.int64)
    counts = np.array([len(p) for p in points], dtype=np.int64)
    starts = np.zeros(n, dtype=np.int64)
    starts[1:] = np.cumsum(counts)[:-1]
    all_pts = np.ascontiguousarray(np.concatenate(points).reshape(-1, 2), dtype=np.float64)
    # the last stroke over each pixel: the one whose paint shows there after the layer
    last = stack_tops(shape[0], shape[1], float(mm_per_px), all_pts, starts, counts, np.full(n, float(width_mm)),
                      paints, np.ones(n, dtype=np.bool_), -1)[0]
    edges = _must_precede(last, all_pts, starts, counts, paints, float(width_mm), float(mm_per_px))
    if len(edges):
        edges = np.unique(edges, axis=0)
    indeg = np.bincount(edges[:, 1], minlength=n) if len(edges) else np.zeros(n, np.int64)
    succ_order = np.argsort(edges[:, 0], kind="stable") if len(edges) else np.zeros(0, np.int64)
    succ = edges[succ_order, 1] if len(edges) else np.zeros(0, np.int64)
    succ_start = np.searchsorted(edges[succ_order, 0], np.arange(n + 1)) if len(edges) else np.zeros(n + 1, np.int64)
    top_y = np.array([float(p[:, 1].min()) for p in points])
    ready: dict[int, list] = {}
    for i in np.flatnonzero(indeg == 0):
        heapq.heappush(ready.setdefault(int(paints[i]), []), (top_y[i], int(i)))
    order = []
    current = None
    while len(order) < n:
        if current is None or not ready.get(current):
            current = max((len(v), -k) for k, v in ready.items() if v)
            current = -current[1]
        _, i = heapq.heappop(ready[current])
        order.append(i)
        for t in succ[succ_start[i] : succ_start[i + 1]]:
            indeg[t] -= 1
            if indeg[t] == 0:
                heapq.heappush(ready.setdefault(int(paints[t]), []), (top_y[t], int(t)))
    return np.asarray(order, dtype=np.int64)
