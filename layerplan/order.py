"""Order each layer's strokes for painting.

Rule: within a layer, strokes are grouped by paint so the brush is washed as few times
as possible, and within one paint they go from the top of the wall down (drips then run
onto unpainted wall, not finished work — common practice). A stroke never moves ahead of
an earlier stroke of another paint whose pixels it must cover, so the picture after the
layer is exactly what the placer made.

Then, inside each run of one paint, :func:`short_travel` orders the strokes (and turns
some end to start) so the brush travels little while lifted. Strokes of one paint are
opaque and of one colour, so their order inside the run cannot change the picture.
The wall is cut into work zones, what a painter reaches from one ladder or lift
position; a run finishes one zone before it moves to the next, zones taken row by row
from the top in a serpentine (left to right, then right to left).
"""

from __future__ import annotations

import heapq
import math
from dataclasses import dataclass

import numpy as np
from numba import njit

from ._tour_kernels import run_tour, same_when_reversed
from .raster import covers, push_pair, stack_tops, stroke_bbox

#: most 2-opt / Or-opt move evaluations for one run, a cap on the search's work (past it the tour keeps what it
#: has, still never longer than the order it was given). Measured on random strokes in one zone: 3,000 settle
#: within about 3 million (0.5 s on one core, most of it finding each stroke end's nearest ends), 8,000 within
#: 10 million (2–4 s); zones of the default size hold far fewer and settle in milliseconds
TOUR_BUDGET = 10_000_000


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


# ------------------------------------------------------------------------------ brush travel
def work_zones(points, reach_mm: float, wall_width_mm: float) -> np.ndarray:
    """The work zone of each stroke, numbered in the order a painter visits them.

    The wall is cut into squares of ``reach_mm`` from its top-left corner; a stroke belongs
    to the square holding the centre of its bounding box. Zones are numbered row by row from
    the top, left to right in the first row, right to left in the next (a serpentine), so a
    lift or ladder moves one square at a time and works downwards (common practice: drips
    then fall on wall still to be painted).

    Parameters
    ----------
    points : list of (n_i, 2) float arrays, stroke polylines in wall mm
    reach_mm : float
        Side of a work zone.
    wall_width_mm : float

    Returns
    -------
    zones : (N,) int64 array
    """
    n = len(points)
    if n == 0:
        return np.zeros(0, dtype=np.int64)
    centre = np.array([(p.min(axis=0) + p.max(axis=0)) / 2 for p in (np.asarray(q, float).reshape(-1, 2)
                                                                     for q in points)])
    cols = max(1, math.ceil(wall_width_mm / reach_mm))
    col = np.clip(np.floor(centre[:, 0] / reach_mm), 0, cols - 1).astype(np.int64)
    row = np.maximum(np.floor(centre[:, 1] / reach_mm), 0).astype(np.int64)
    return row * cols + np.where(row % 2 == 0, col, cols - 1 - col)


def lifted_mm(paths) -> float:
    """Brush travel between strokes painted one after another: end of each to start of the next, mm."""
    if len(paths) < 2:
        return 0.0
    ends = np.array([np.asarray(p, float).reshape(-1, 2)[-1] for p in paths[:-1]])
    starts = np.array([np.asarray(p, float).reshape(-1, 2)[0] for p in paths[1:]])
    return float(np.sum(np.hypot(*(starts - ends).T)))


def painted_mm(paths) -> float:
    """Length of the strokes' polylines, mm (a dab counts 0)."""
    return float(sum(np.sum(np.hypot(*np.diff(np.asarray(p, float).reshape(-1, 2), axis=0).T)) for p in paths))


def _visits(zones: np.ndarray) -> int:
    """How many times the painter sets up at a zone: one, plus one per change of zone."""
    return int(len(zones) > 0) + int(np.count_nonzero(np.diff(zones)))


@dataclass(frozen=True)
class Travel:
    """A short-travel order for one layer and what it saves.

    Attributes
    ----------
    order : (N,) int array
        Position in the given order of each stroke, in the new painting order.
    reversed : (N,) bool array
        Per new position: the stroke is painted from its last point to its first.
    lifted_before_mm, lifted_mm : float
        Lifted-brush travel (end of each stroke to start of the next) in the given order and in the new one.
    painted_mm : float
        Length painted (the same in both orders).
    zone_visits_before, zone_visits : int
        Times the painter sets up at a work zone, in the given order and in the new one.
    reach_mm : float
        Side of a work zone.
    """

    order: np.ndarray
    reversed: np.ndarray
    lifted_before_mm: float
    lifted_mm: float
    painted_mm: float
    zone_visits_before: int
    zone_visits: int
    reach_mm: float

    def paths(self, points) -> list[np.ndarray]:
        """The polylines in the new order, reversed where the order paints them end to start."""
        return [np.asarray(points[i])[::-1].copy() if r else np.asarray(points[i])
                for i, r in zip(self.order.tolist(), self.reversed.tolist())]

    def to_dict(self) -> dict:
        """The layer's plan.json ``travel`` section (lengths in m, as a painter measures a wall)."""
        return {"painted_m": round(self.painted_mm / 1000, 2), "lifted_m": round(self.lifted_mm / 1000, 2),
                "lifted_before_m": round(self.lifted_before_mm / 1000, 2), "zone_visits": self.zone_visits,
                "zone_visits_before": self.zone_visits_before, "reach_m": round(self.reach_mm / 1000, 3)}


def short_travel(points, paints, *, reach_mm: float, wall_width_mm: float, width_mm: float, mm_per_px: float,
                 shape, budget: int = TOUR_BUDGET) -> Travel:
    """Reorder strokes inside each run of one paint so the lifted brush travels little.

    Parameters
    ----------
    points : list of (n_i, 2) float arrays
        One layer's stroke polylines in wall mm, in painting order.
    paints : (N,) int array
        Paint of each stroke; consecutive strokes of one paint form a run.
    reach_mm : float, keyword-only
        Side of a work zone (see :func:`work_zones`).
    wall_width_mm : float, keyword-only
    width_mm, mm_per_px : float, keyword-only
        The layer's brush and the raster, to check which strokes paint the same pixels backwards.
    shape : (H, W), keyword-only
        Raster size.
    budget : int, keyword-only
        Most move evaluations per run (:data:`TOUR_BUDGET`).

    Returns
    -------
    Travel

    Raises
    ------
    ValueError
        If ``reach_mm`` is not a number > 0.

    Notes
    -----
    Strokes never leave their run, so the paint sequence, and with it the picture after the
    layer, is unchanged: inside a run every stroke is opaque and of one colour, so whatever
    order they go in, each pixel the run covers ends in that colour. A stroke is turned end to
    start only when the rendering rule gives it exactly the same pixels that way round.

    Each run is toured work zone by work zone in :func:`work_zones`' order, beginning at the
    topmost stroke end of its first zone: nearest neighbour, then 2-opt and Or-opt moves (a
    chain of 1–3 strokes moved, maybe reversed) that stay inside a zone, until none shortens
    the tour or the budget is spent. A zone of more than 150 strokes of the run tries only moves
    that join a stroke end to one of its ten nearest ends (neighbour lists, as Bentley 1992
    does); smaller zones try every pair. Zoning can make a run's tour longer than the order it
    came in (a few strokes either side of a zone edge, or a short run whose given order ends
    nearer the next run's start); across the layer, each run keeps whichever of the two gives
    the shorter total travel, the walks between runs included (a two-state dynamic programme),
    so the layer never travels further than before. Only then does a run leave the zone
    order: in the community-wall sample at 4 × 2 m, 8 runs of 2–6 strokes (29 of 541 strokes).

    References
    ----------
    G. A. Croes, "A method for solving traveling-salesman problems", Oper. Res. 6(6), 1958 (2-opt).
    J. L. Bentley, "Fast algorithms for geometric traveling salesman problems", ORSA J. Comput. 4(4),
    1992 (neighbour lists).
    I. Or, "Traveling salesman-type combinatorial problems and their relation to the logistics of
    regional blood banking", PhD thesis, Northwestern University, 1976 (Or-opt).
    """
    if isinstance(reach_mm, bool) or not isinstance(reach_mm, (int, float)) or not math.isfinite(reach_mm) \
            or reach_mm <= 0:
        raise ValueError(f"work-zone size must be a number > 0 mm, got {reach_mm!r}")
    n = len(points)
    pts = [np.ascontiguousarray(np.asarray(p, dtype=np.float64).reshape(-1, 2)) for p in points]
    paints = np.asarray(paints, dtype=np.int64)
    zones = work_zones(pts, float(reach_mm), float(wall_width_mm))
    if n == 0:
        return Travel(np.zeros(0, np.int64), np.zeros(0, bool), 0.0, 0.0, 0.0, 0, 0, float(reach_mm))
    counts = np.array([len(p) for p in pts], dtype=np.int64)
    starts = np.zeros(n, dtype=np.int64)
    starts[1:] = np.cumsum(counts)[:-1]
    flat = np.concatenate(pts)
    h, w = int(shape[0]), int(shape[1])
    # the file keeps 0.01 mm: a stroke may turn round only if it paints the same pixels both as placed and as written
    flippable = (same_when_reversed(flat, starts, counts, float(width_mm), float(mm_per_px), h, w)
                 & same_when_reversed(np.round(flat, 2), starts, counts, float(width_mm), float(mm_per_px), h, w))
    A = np.array([p[0] for p in pts])
    B = np.array([p[-1] for p in pts])
    cut = np.flatnonzero(np.diff(paints)) + 1
    bounds = np.concatenate([[0], cut, [n]])
    # per run, two candidates: (order, reversed, first start, last end, travel inside)
    options = []
    for r0, r1 in zip(bounds[:-1], bounds[1:]):
        idx = np.arange(r0, r1)
        keep = (idx, np.zeros(len(idx), bool))
        by_zone = idx[np.argsort(zones[idx], kind="stable")]
        z = zones[by_zone]
        block = np.concatenate([[0], np.flatnonzero(np.diff(z)) + 1, [len(z)]]).astype(np.int64)
        seq, flip = run_tour(np.ascontiguousarray(A[by_zone]), np.ascontiguousarray(B[by_zone]), block,
                             np.ascontiguousarray(flippable[by_zone]), int(budget))
        toured = (by_zone[seq], flip.astype(bool))
        options.append([_describe(c, A, B) for c in (toured, keep)])
    choice = _cheapest(options)
    order = np.concatenate([options[k][c][0] for k, c in enumerate(choice)])
    rev = np.concatenate([options[k][c][1] for k, c in enumerate(choice)])
    before = lifted_mm(pts)
    after_paths = [pts[i][::-1] if f else pts[i] for i, f in zip(order.tolist(), rev.tolist())]
    return Travel(order.astype(np.int64), rev, before, lifted_mm(after_paths), painted_mm(pts),
                  _visits(zones), _visits(zones[order]), float(reach_mm))


def _describe(candidate, A, B):
    """(order, reversed, first start, last end, lifted travel inside) of a run's candidate order."""
    order, rev = candidate
    s = np.where(rev[:, None], B[order], A[order])
    e = np.where(rev[:, None], A[order], B[order])
    inside = float(np.sum(np.hypot(*(s[1:] - e[:-1]).T))) if len(order) > 1 else 0.0
    return order, rev, s[0], e[-1], inside


def _cheapest(options) -> list[int]:
    """Per run, which candidate (0 toured, 1 as given) makes the shortest total travel, gaps between runs included."""
    k = len(options)
    cost = np.array([o[4] for o in options[0]])
    back = np.zeros((k, 2), np.int64)
    for r in range(1, k):
        new = np.empty(2)
        for c in range(2):
            via = [cost[p] + float(np.hypot(*(options[r][c][2] - options[r - 1][p][3]))) for p in range(2)]
            back[r, c] = int(np.argmin(via))
            new[c] = via[back[r, c]] + options[r][c][4]
        cost = new
    c = int(np.argmin(cost))
    choice = [c]
    for r in range(k - 1, 0, -1):
        c = int(back[r, c])
        choice.append(c)
    return choice[::-1]
