"""Stroke placement: stochastic hill climbing per layer, the hot loop of the planner.

Energy (after Hertzmann 2001): the summed CIEDE2000 between the canvas and the
target over every pixel, plus ``cost`` per stroke. A stroke is born where the
remaining error is largest, grown along the image's isophotes and then refined by
random local moves (shift, turn, lengthen, shorten, bend); each candidate takes the
paint that lowers the error most over its footprint (recolour), and a move is kept
only when it lowers the energy. The stroke is painted only if it lowers the energy,
i.e. removes more error than it costs.

Data layout, chosen for speed: ``planes`` is (H, W, K) float32 so the K paint errors
of a pixel are contiguous; a candidate's gain for every paint is one pass over its
footprint. Footprints are the row runs of :func:`layerplan.raster.footprint_runs`,
exactly the rendering rule's pixels, so what is optimised is exactly what is rendered.
Brushes much wider than a few pixels are refined on block sums of the planes and
checked exactly before they are painted. After the last layer, `relax_strokes`
revisits every stroke against the finished picture.

One run per paint: a layer paints each paint in one run, in an order fixed before it is
placed (``ranks``). A new stroke is slotted into its paint's run, under the strokes of later
runs already placed, and judged only by the pixels where it will show; relaxation and the
clean-up use the same painting order (`painting_keys`), so the picture optimised is the one
painted run by run.

Openings (windows, doors, vents; :mod:`layerplan.openings`) reach the placer as a mask of
the pixels whose centre lies in one (``shut``). While a layer is placed they are marked as
under a run later than every paint's (``toprank`` = K, whose row of the run table lets no
paint through): their error never counts, no stroke is born there, and a candidate whose
footprint reaches one is worth nothing, so it is refined away or not placed. Relaxation
refuses any move onto one. So no stroke of a plan covers a pixel centre inside an opening.

This module is the Python side: it checks and packs the inputs of the compiled kernels in
:mod:`layerplan._placer_kernels`. A brush's limits reach them as one record
(:data:`BRUSH_RECORD`, packed by :func:`brush_records`), so a new limit is a field of
`BrushLimits` and a check in the kernels' ``_valid``.

References
----------
A. Hertzmann, "Paint by Relaxation", Proc. Computer Graphics International, 2001.
A. Hertzmann, "Painterly Rendering with Curved Brush Strokes of Multiple Sizes",
Proc. SIGGRAPH 1998.
J. Bigun, G. Granlund, "Optimal orientation detection of linear symmetry", ICCV 1987
(structure tensor for stroke directions).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, fields

import numpy as np

from . import _placer_kernels as kernels
from .raster import MAX_POINTS, stack_tops

#: after this many refinement moves a stroke must have reached GIVE_UP × its cost, or it is dropped
PROBE = 12
GIVE_UP = 0.7
#: wide brushes are refined on a grid of f×f pixel blocks, f = brush px // EVAL_BRUSH_PX (exact check before painting)
EVAL_BRUSH_PX = 5
#: relative odds of the local moves (lengthen at the end, lengthen at the start, shorten, shift, turn, bend)
#: and the bend size, when placing a stroke and when relaxing the finished picture; relaxation mostly
#: needs small bends (on chelsea: about 40 % more energy removed per pass than uniform odds)
PLACE_MOVES, PLACE_BEND = (2.0, 2.0, 0.5, 1.0, 1.0, 2.0), 0.6
RELAX_MOVES, RELAX_BEND = (0.5, 0.5, 0.5, 1.0, 1.0, 8.0), 0.5
#: relaxation passes over all strokes after the last layer, and moves tried per stroke and pass; deleting
#: strokes by their cost is off: on the bench it gave worse pictures for the same stroke count
RELAX_PASSES, RELAX_TRIES, RELAX_DELETE = 3, 60, False
#: gain taken off a coarse evaluation block per opening pixel in it (far more than any stroke can earn),
#: so refinement on the coarse grid keeps wide brushes off openings; the exact check refuses the rest
SHUT_PENALTY = 1e9
#: the placement search's knobs as the compiled code reads them (see `place_layer`)
SEARCH_RECORD = np.dtype([("cost", np.float64), ("tries", np.int64), ("patience", np.int64), ("probe", np.int64),
                          ("give_up", np.float64)])


def _cumulative(odds) -> np.ndarray:
    c = np.cumsum(np.asarray(odds, dtype=np.float64))
    return c / c[-1]


@dataclass(frozen=True)
class BrushLimits:
    """What one brush can paint in one stroke.

    Lengths are tip to tail, round ends included, so a single dab is one brush width long.

    Attributes
    ----------
    width_mm : float
    min_length_mm, max_length_mm : float
        Stroke length limits (default 1 and 12 brush widths).
    min_segment_mm, max_segment_mm : float
        Spacing of polyline vertices (0.5 to 1.5 brush widths).
    max_turn_deg : float
        Largest change of direction at one vertex (bounded curvature).
    """

    width_mm: float
    min_length_mm: float
    max_length_mm: float
    min_segment_mm: float
    max_segment_mm: float
    max_turn_deg: float

    @classmethod
    def for_brush(cls, width_mm: float) -> "BrushLimits":
        """Default limits for a round-ended brush of this width (our own rule of thumb)."""
        return cls(
            width_mm=width_mm,
            min_length_mm=width_mm,
            max_length_mm=12.0 * width_mm,
            min_segment_mm=0.5 * width_mm,
            max_segment_mm=1.5 * width_mm,
            max_turn_deg=60.0,
        )


#: `BrushLimits` as the compiled code reads it: its fields, then the turn limit in radians and its cosine
BRUSH_RECORD = np.dtype([(f.name, np.float64) for f in fields(BrushLimits)]
                        + [("max_turn_rad", np.float64), ("cos_max_turn", np.float64)])


def brush_records(limits) -> np.ndarray:
    """Pack brush limits for the compiled kernels.

    Parameters
    ----------
    limits : sequence of BrushLimits

    Returns
    -------
    records : (L,) BRUSH_RECORD array
    """
    out = np.zeros(len(limits), dtype=BRUSH_RECORD)
    for f in fields(BrushLimits):
        out[f.name] = [getattr(lim, f.name) for lim in limits]
    out["max_turn_rad"] = [math.radians(lim.max_turn_deg) for lim in limits]
    out["cos_max_turn"] = [math.cos(math.radians(lim.max_turn_deg)) for lim in limits]
    return out


def block_sums(a: np.ndarray, f: int) -> np.ndarray:
    """Sums over f×f pixel blocks of the first two axes (partial blocks at the far edges), in a's dtype."""
    h, w = a.shape[:2]
    cols = np.arange(0, w, f)
    out = np.empty((len(range(0, h, f)), len(cols)) + a.shape[2:], dtype=a.dtype)
    for n, i in enumerate(range(0, h, f)):
        # one band of rows at a time, in float64: no full-size float64 copy of the planes
        out[n] = np.add.reduceat(a[i : i + f].sum(axis=0, dtype=np.float64), cols, axis=0)
    return out


def orientation_field(lab: np.ndarray, sigma_px: float) -> np.ndarray:
    """Isophote angle (radians, in wall x/y) of the target's lightness at a brush's scale.

    Parameters
    ----------
    lab : (H, W, 3) float array
    sigma_px : float
        Integration scale of the structure tensor (about the brush width in pixels).

    Returns
    -------
    theta : (H, W) float64 array

    References
    ----------
    Bigun & Granlund (1987); Hertzmann (1998) paints along the normal of the gradient.
    """
    from skimage.feature import structure_tensor

    arr, arc, acc = structure_tensor(lab[..., 0], sigma=max(0.5, sigma_px), order="rc")
    # dominant gradient direction in x (cols) / y (rows); isophotes run across it
    phi = 0.5 * np.arctan2(2.0 * arc, acc - arr)
    return np.ascontiguousarray(phi + 0.5 * np.pi)


def run_table(ranks) -> np.ndarray:
    """``allow[..., r, q] = ranks[..., q] >= r`` for r = 0 … K, as float64 (the kernels multiply by it).

    Parameters
    ----------
    ranks : (K,) or (L, K) int array, the run of each paint (per layer)

    Returns
    -------
    allow : (K + 1, K) or (L, K + 1, K) float64 array
    """
    ranks = np.asarray(ranks, dtype=np.int64)
    k = ranks.shape[-1]
    r = np.arange(k + 1).reshape((k + 1, 1))
    return np.ascontiguousarray((ranks[..., None, :] >= r).astype(np.float64))


def check_ranks(ranks, k: int) -> np.ndarray:
    """``ranks`` as a (K,) int64 array of runs 0 … K − 1; None means one run for all paints.

    Raises
    ------
    ValueError
        If ``ranks`` has the wrong length or is not a permutation of 0 … K − 1 (nor all zero).
    """
    if ranks is None:
        return np.zeros(k, dtype=np.int64)
    ranks = np.asarray(ranks, dtype=np.int64)
    if ranks.shape != (k,) or not (np.array_equal(np.sort(ranks), np.arange(k)) or not ranks.any()):
        raise ValueError(f"paint runs must give each of the {k} paints its own run 0 … {k - 1}, got {ranks.tolist()}")
    return ranks


@dataclass
class LayerResult:
    """Strokes placed in one layer, in placing order; painted run by run (``ranks``) they show as placed."""

    points: list[np.ndarray]
    paints: np.ndarray
    gains: np.ndarray
    error_before: float
    error_after: float
    cost: float
    #: (K,) the run of each paint in this layer (all zero: one run for every paint, painted as placed)
    ranks: np.ndarray = None


def place_layer(planes, canvas, err, theta, limits: BrushLimits, *, mm_per_px: float, wall_mm, cost: float,
                seed: int, rounds: int = 10, tries: int = 300, patience: int = 80, ranks=None,
                shut=None, progress=None) -> LayerResult:
    """Place one layer's strokes on the canvas, in place.

    Parameters
    ----------
    planes : (H, W, K) float32 array, ΔE00 from each paint to each target pixel
    canvas : (H, W) int16 array, paint index per pixel (updated)
    err : (H, W) float32 array, current ΔE00 per pixel (updated)
    theta : (H, W) float64 array, stroke direction field
    limits : BrushLimits
    mm_per_px : float
    wall_mm : (float, float), wall width and height
    cost : float
        Energy cost of one stroke (ΔE00 × pixels).
    seed : int
    rounds : int
        Birth rounds; each samples new births where the remaining error is largest.
    tries, patience : int
        Refinement moves per stroke, and how many failures in a row end it.
    ranks : (K,) int array, optional
        The layer's paint order: paint q is painted in run ``ranks[q]`` (a permutation of
        0 … K − 1), each paint's strokes together. Every new stroke goes into its paint's run,
        under the strokes of later runs placed before it, and is judged by what shows. None:
        no runs, each stroke painted after the ones placed before it.
    shut : (H, W) bool array, optional
        Pixels inside an opening: never counted, never covered by a stroke.
    progress : callable(fraction, message), optional

    Returns
    -------
    LayerResult
        The canvas and ``err`` are the picture after the layer painted run by run.

    Raises
    ------
    ValueError
        If ``ranks`` is not a permutation of the paints' positions.

    References
    ----------
    Hertzmann (2001), "Paint by Relaxation".
    """
    h, w, k = planes.shape
    ranks = check_ranks(ranks, k)
    allow = run_table(ranks)
    toprank = np.full((h, w), -1, dtype=np.int64)
    if shut is not None:
        toprank[shut] = k  # above every run: nothing shows there (see the module's notes on openings)
    rng = np.random.default_rng(seed)
    w_px = limits.width_mm / mm_per_px
    f = max(1, int(w_px // EVAL_BRUSH_PX))
    if f > 1:
        # the gain of each paint per block; no stroke of this layer yet, so every paint shows everywhere
        gain_c = block_sums(err, f).astype(np.float64)[..., None] - block_sums(planes, f).astype(np.float64)
        if shut is not None:
            gain_c -= SHUT_PENALTY * block_sums(shut.astype(np.float64), f)[..., None]
    else:
        gain_c = np.zeros((1, 1, k), dtype=np.float64)
    per_round = max(16, int(h * w / max(1.0, w_px * w_px)))
    max_strokes = per_round * rounds
    out_pts = np.zeros((max_strokes, MAX_POINTS, 2))
    out_n = np.zeros(max_strokes, np.int64)
    out_paint = np.zeros(max_strokes, np.int64)
    out_gain = np.zeros(max_strokes, np.float64)
    out = (out_pts, out_n, out_paint, out_gain)
    grid = (gain_c, f)
    runs_of = (ranks, allow, toprank)
    brush = brush_records([limits])[0]
    search = np.array((cost, tries, patience, PROBE, GIVE_UP), dtype=SEARCH_RECORD)[()]
    wall = (float(wall_mm[0]), float(wall_mm[1]))
    moves = _cumulative(PLACE_MOVES)
    before = float(err.sum(dtype=np.float64))
    count = 0
    for r in range(rounds):
        room = kernels.layer_room(planes, err, toprank, allow)
        total = room.sum()
        if total <= cost:
            break
        n_births = min(per_round, int(np.count_nonzero(room)))
        if n_births == 0:
            break
        flat = rng.choice(h * w, size=n_births, replace=False, p=room / total)
        births = np.stack([flat // w, flat % w], axis=1).astype(np.int64)
        prev = count
        count = kernels.place_births(
            planes, canvas, err, runs_of, grid, theta, births, brush, search, float(mm_per_px), wall, moves,
            PLACE_BEND, int(seed * 1000 + r), out, count,
        )
        if progress is not None:
            progress((r + 1) / rounds, f"{count} strokes")
        # a round that placed few strokes for its births means the layer has done its work
        if count - prev < 0.03 * n_births:
            break
    points = [out_pts[i, : out_n[i]].copy() for i in range(count)]
    return LayerResult(
        points=points,
        paints=out_paint[:count].copy(),
        gains=out_gain[:count].copy(),
        error_before=before,
        error_after=float(err.sum(dtype=np.float64)),
        cost=float(cost),
        ranks=ranks,
    )


def painting_keys(layer_of, paints, ranks) -> np.ndarray:
    """Where each stroke comes in the painting: by layer, then its paint's run in the layer, then its number.

    Parameters
    ----------
    layer_of, paints : (N,) int arrays
    ranks : (L, K) int array, the run of each paint per layer

    Returns
    -------
    keys : (N,) int64 array; sorting the strokes by it gives the painting (file) order
    """
    return kernels.stroke_keys(np.asarray(layer_of, dtype=np.int64), np.asarray(paints, dtype=np.int64),
                               np.ascontiguousarray(ranks, dtype=np.int64))


def prune_strokes(planes, ground: int, points, widths, paints, *, mm_per_px: float, max_passes: int = 30):
    """Take away strokes that later strokes made useless: hidden, or no better than what is under them.

    A stroke placed early can be painted over later. Removing stroke k changes only the
    pixels where it is on top, which then show the paint just under it; if that removes no
    error, the stroke is work for nothing. Each pass removes every such stroke, except pairs
    that meet (one directly under the other), whose effects would not add up; passes repeat
    until every stroke left improves the finished picture. Removing strokes by their cost as
    well was tried: it gave worse pictures for the same number of strokes (see bench/).

    Parameters
    ----------
    planes : (H, W, K) float32 array
    ground : int, palette position of the ground
    points : list of (n_i, 2) arrays in wall mm, in painting (file) order over all layers
    widths, paints : (N,) arrays
    mm_per_px : float

    Returns
    -------
    keep : (N,) bool array

    References
    ----------
    Hertzmann (2001), "Paint by Relaxation" (deleting strokes as an energy-lowering move).
    """
    n = len(points)
    alive = np.ones(n, dtype=np.bool_)
    if n == 0:
        return alive
    h, w, _ = planes.shape
    counts = np.array([len(p) for p in points], dtype=np.int64)
    starts = np.zeros(n, dtype=np.int64)
    starts[1:] = np.cumsum(counts)[:-1]
    all_pts = np.ascontiguousarray(np.concatenate(points).reshape(-1, 2), dtype=np.float64)
    widths = np.asarray(widths, dtype=np.float64)
    paints = np.asarray(paints, dtype=np.int64)
    for _ in range(max_passes):
        top_idx, top_paint, under_paint, under_idx = stack_tops(
            h, w, float(mm_per_px), all_pts, starts, counts, widths, paints, alive, int(ground))
        gain = kernels.contributions(planes, top_idx, top_paint, under_paint, n)
        candidate = alive & (gain <= 0.0)
        if not candidate.any():
            break
        pairs = kernels.conflicts(top_idx, under_idx, candidate)
        blocked = np.zeros(n, dtype=np.bool_)
        # least useful first; a stroke meeting one already chosen waits for the next pass
        partners: dict[int, list[int]] = {}
        for a, b in np.unique(pairs, axis=0) if len(pairs) else []:
            partners.setdefault(int(a), []).append(int(b))
            partners.setdefault(int(b), []).append(int(a))
        for k in np.flatnonzero(candidate)[np.argsort(gain[candidate], kind="stable")]:
            if blocked[k]:
                continue
            alive[k] = False
            for other in partners.get(int(k), ()):
                blocked[other] = True
    return alive


def relax_strokes(planes, ground: int, points, layer_of, paints, limits, costs, thetas, *, mm_per_px: float,
                  wall_mm, seed: int, passes: int = RELAX_PASSES, tries: int = RELAX_TRIES, delete: bool = RELAX_DELETE,
                  ranks=None, shut=None, progress=None):
    """Revisit every stroke of the finished picture and keep local moves that lower its energy.

    After all layers are placed, each stroke in turn may be deleted, recoloured, shifted,
    turned, lengthened, shortened or bent; a change is kept only if it lowers the energy of
    the *finished* picture, Σ ΔE00 + cost per stroke. Strokes are opaque and painted in
    order — by layer, then by their paint's run in the layer (``ranks``), then by number
    (:func:`painting_keys`) — so a change to stroke k shows only where no stroke painted after
    it covers it; a recoloured stroke moves to its new paint's run. A per-pixel stack (top
    stroke, and the stroke and paint just under it) gives the exact change. The stack is
    rebuilt before each pass.

    Parameters
    ----------
    planes : (H, W, K) float32 array
    ground : int, palette position of the ground
    points : list of (n_i, 2) arrays in wall mm, layer after layer (placing order within a layer)
    layer_of : (N,) int array, layer position of each stroke (into ``limits``, ``costs``, ``thetas``)
    paints : (N,) int array
    limits : list of BrushLimits, one per layer
    costs : sequence of float, stroke cost per layer
    thetas : list of (H, W) float arrays, stroke direction field per layer
    mm_per_px : float
    wall_mm : (float, float)
    seed : int
    passes : int
        Relaxation passes over all strokes (default `RELAX_PASSES`, as the planner uses).
    tries : int
        Random local moves tried per stroke and pass (default `RELAX_TRIES`).
    delete : bool
        Whether deleting a stroke is one of the moves (default `RELAX_DELETE`: off).
    ranks : (L, K) int array, optional
        The run of each paint per layer (see `place_layer`); None: no runs, strokes painted in
        the order given.
    shut : (H, W) bool array, optional
        Pixels inside an opening: no move may make a stroke cover one.
    progress : callable(fraction, message), optional
        Called after each pass.

    Returns
    -------
    points : list of (n_i, 2) arrays
    paints : (N,) int64 array
    alive : (N,) bool array, False for deleted strokes
    change : float, energy change (≤ 0)

    References
    ----------
    Hertzmann (2001), "Paint by Relaxation".
    """
    n = len(points)
    alive = np.ones(n, dtype=np.bool_)
    paints = np.asarray(paints, dtype=np.int64).copy()
    if n == 0:
        return [], paints, alive, 0.0
    h, w, k = planes.shape
    layer_of = np.asarray(layer_of, dtype=np.int64)
    if ranks is None:
        ranks = np.zeros((len(limits), k), dtype=np.int64)
    ranks = np.ascontiguousarray(np.stack([check_ranks(r, k) for r in ranks]))
    allow = run_table(ranks)
    counts = np.array([len(p) for p in points], dtype=np.int64)
    pts3 = np.zeros((n, MAX_POINTS, 2), dtype=np.float64)
    for i, p in enumerate(points):
        pts3[i, : len(p)] = p
    brushes = brush_records(limits)
    widths = brushes["width_mm"].copy()
    th = np.ascontiguousarray(np.stack(thetas), dtype=np.float64)
    costs = np.asarray(costs, dtype=np.float64)
    wall = (float(wall_mm[0]), float(wall_mm[1]))
    shut = np.zeros((h, w), dtype=np.bool_) if shut is None else np.ascontiguousarray(shut, dtype=np.bool_)
    moves = _cumulative(RELAX_MOVES)
    change = 0.0
    for r in range(passes):
        keys = painting_keys(layer_of, paints, ranks)
        # the stack is built in painting order, then its stroke numbers mapped back
        order = np.argsort(keys, kind="stable")
        counts_o = counts[order]
        starts = np.zeros(n, dtype=np.int64)
        starts[1:] = np.cumsum(counts_o)[:-1]
        flat = np.ascontiguousarray(np.concatenate([pts3[i, : counts[i]] for i in order]))
        top_o, top_paint, under_paint, under_o = stack_tops(
            h, w, float(mm_per_px), flat, starts, counts_o, widths[layer_of[order]], paints[order], alive[order],
            int(ground))
        back = np.append(order, -1)  # position -1 (no stroke) stays -1
        top_idx = back[top_o]
        under_idx = back[under_o]
        stale = np.zeros((h, w), dtype=np.bool_)
        stack = (top_idx, top_paint, under_idx, under_paint, stale)
        change += kernels.relax_pass(
            planes, stack, pts3, counts, paints, alive, layer_of, (ranks, allow, keys), th, brushes, costs,
            float(mm_per_px), wall, int(tries), int(seed * 1000 + r), bool(delete), moves, RELAX_BEND, shut)
        if progress is not None:
            progress((r + 1) / passes, f"pass {r + 1} of {passes}")
    return [pts3[i, : counts[i]].copy() for i in range(n)], paints, alive, float(change)
