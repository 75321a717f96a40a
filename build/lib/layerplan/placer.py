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
from dataclasses import dataclass

import numpy as np
from numba import njit

from .raster import MAX_POINTS, footprint_runs, footprint_scratch, push_pair, stack_tops

#: stroke points are kept on a 0.1 mm grid so plan.json holds them exactly
POINT_GRID_MM = 0.1
START_DAB = True
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


@njit(cache=True, nogil=True)
def _round_grid(v):
    return np.round(v * 10.0) / 10.0


@njit(cache=True, nogil=True)
def _footprint_px(pts, n, width_mm, s, h, w, stamp, stamp_id, buf_i, buf_j, runs, row_ab, row_n):
    """`raster.footprint_runs` as a pixel list in buf_i/buf_j, each pixel marked ``stamp[i, j] = stamp_id``.

    Returns the list's length.
    """
    nr = footprint_runs(pts, n, width_mm, s, h, w, runs, row_ab, row_n)
    c = 0
    for r in range(nr):
        i = runs[r, 0]
        for j in range(runs[r, 1], runs[r, 2] + 1):
            stamp[i, j] = stamp_id
            buf_i[c] = i
            buf_j[c] = j
            c += 1
    return c


@njit(cache=True, nogil=True)
def _footprint_gain(pts, n, width_mm, s, planes, err, sums, runs, row_ab, row_n):
    """Gain of painting the stroke with each paint; returns (best gain, best paint, run count).

    The pixels are `raster.footprint_runs`'s (exactly the rendering rule's set), left in ``runs``.
    """
    h, w, k = planes.shape
    c = footprint_runs(pts, n, width_mm, s, h, w, runs, row_ab, row_n)
    base = 0.0
    for q in range(k):
        sums[q] = 0.0
    for t in range(c):
        i = runs[t, 0]
        for j in range(runs[t, 1], runs[t, 2] + 1):
            base += err[i, j]
            for q in range(k):
                sums[q] += planes[i, j, q]
    best = -1e30
    bq = 0
    for q in range(k):
        g = base - sums[q]
        if g > best:
            best = g
            bq = q
    return best, bq, c


@njit(cache=True, nogil=True)
def _valid(pts, n, width_mm, min_len, max_len, min_seg, max_seg, cos_max_turn, wall_w, wall_h):
    """Check a candidate polyline against the brush limits and the wall."""
    for p in range(n):
        if pts[p, 0] < 0.0 or pts[p, 0] > wall_w or pts[p, 1] < 0.0 or pts[p, 1] > wall_h:
            return False
    total = 0.0
    for p in range(n - 1):
        dx = pts[p + 1, 0] - pts[p, 0]
        dy = pts[p + 1, 1] - pts[p, 1]
        L = math.sqrt(dx * dx + dy * dy)
        if L < min_seg - 1e-6 or L > max_seg + 1e-6:
            return False
        total += L
        if p > 0:
            ex = pts[p, 0] - pts[p - 1, 0]
            ey = pts[p, 1] - pts[p - 1, 1]
            le = math.sqrt(ex * ex + ey * ey)
            if (ex * dx + ey * dy) < cos_max_turn * le * L - 1e-9:
                return False
    length = total + width_mm
    return length >= min_len - 1e-6 and length <= max_len + 1e-6


@njit(cache=True, nogil=True)
def _angle_at(theta, x, y, s):
    h, w = theta.shape
    j = min(w - 1, max(0, int(x / s)))
    i = min(h - 1, max(0, int(y / s)))
    return theta[i, j]


@njit(cache=True, nogil=True)
def _propose(cur, n, cand, theta, s, step, max_turn, moves, bend):
    """One random local move of the stroke cur[:n] into cand (which holds a copy of cur).

    Lengthen at either end turning toward the isophote, shorten, shift, turn, or bend a
    vertex (by ``bend`` × 0.25 brush widths, standard deviation); ``moves`` holds the
    cumulative probabilities of the six moves in that order (lengthen at one end counts
    twice). Returns the candidate's vertex count, or 0 when the move does not apply.
    """
    m = n
    u = np.random.random()
    move = 0
    while move < 5 and u > moves[move]:
        move += 1
    if move <= 1:
        # lengthen at one end, turning toward the isophote there
        if n >= MAX_POINTS:
            return 0
        at_end = np.random.randint(0, 2) == 1 or n == 1
        if n == 1:
            ang = _angle_at(theta, cur[0, 0], cur[0, 1], s)
            ex = cur[0, 0]
            ey = cur[0, 1]
            dirx = math.cos(ang)
            diry = math.sin(ang)
        elif at_end:
            ex = cur[n - 1, 0]
            ey = cur[n - 1, 1]
            dirx = cur[n - 1, 0] - cur[n - 2, 0]
            diry = cur[n - 1, 1] - cur[n - 2, 1]
        else:
            ex = cur[0, 0]
            ey = cur[0, 1]
            dirx = cur[0, 0] - cur[1, 0]
            diry = cur[0, 1] - cur[1, 1]
        ln = math.sqrt(dirx * dirx + diry * diry)
        if ln <= 0.0:
            return 0
        dirx /= ln
        diry /= ln
        ang = _angle_at(theta, ex, ey, s)
        tx = math.cos(ang)
        ty = math.sin(ang)
        if tx * dirx + ty * diry < 0.0:
            tx = -tx
            ty = -ty
        # blend toward the isophote with a random wobble, then clamp the turn
        cur_a = math.atan2(diry, dirx)
        want = math.atan2(ty, tx)
        d = want - cur_a
        while d > math.pi:
            d -= 2 * math.pi
        while d < -math.pi:
            d += 2 * math.pi
        d += np.random.normal() * 0.3
        d = max(-max_turn, min(max_turn, d))
        na = cur_a + d
        seg_len = step * (0.75 + 0.5 * np.random.random())
        nx = _round_grid(ex + seg_len * math.cos(na))
        ny = _round_grid(ey + seg_len * math.sin(na))
        if at_end:
            cand[n, 0] = nx
            cand[n, 1] = ny
        else:
            for p in range(n, 0, -1):
                cand[p, 0] = cand[p - 1, 0]
                cand[p, 1] = cand[p - 1, 1]
            cand[0, 0] = nx
            cand[0, 1] = ny
        m = n + 1
    elif move == 2:
        # shorten: drop one end vertex
        if n <= 1:
            return 0
        if np.random.randint(0, 2) == 1:
            m = n - 1
        else:
            for p in range(n - 1):
                cand[p, 0] = cur[p + 1, 0]
                cand[p, 1] = cur[p + 1, 1]
            m = n - 1
    elif move == 3:
        # shift the whole stroke
        dx = np.random.normal() * 0.3 * step
        dy = np.random.normal() * 0.3 * step
        for p in range(n):
            cand[p, 0] = _round_grid(cur[p, 0] + dx)
            cand[p, 1] = _round_grid(cur[p, 1] + dy)
    elif move == 4:
        # turn about the centroid
        if n <= 1:
            return 0
        mx = 0.0
        my = 0.0
        for p in range(n):
            mx += cur[p, 0]
            my += cur[p, 1]
        mx /= n
        my /= n
        da = np.random.normal() * 0.25
        ca = math.cos(da)
        sa = math.sin(da)
        for p in range(n):
            ox = cur[p, 0] - mx
            oy = cur[p, 1] - my
            cand[p, 0] = _round_grid(mx + ca * ox - sa * oy)
            cand[p, 1] = _round_grid(my + sa * ox + ca * oy)
    else:
        # bend: move one vertex
        p = np.random.randint(0, n)
        cand[p, 0] = _round_grid(cur[p, 0] + np.random.normal() * 0.25 * bend * step)
        cand[p, 1] = _round_grid(cur[p, 1] + np.random.normal() * 0.25 * bend * step)
    return m

@njit(cache=True, nogil=True)
def _place_layer(planes, best_err, canvas, err, planes_c, err_c, f, theta, births, width_mm, s,
                 cost, min_len, max_len, min_seg, max_seg, max_turn, wall_w, wall_h,
                 tries, patience, probe, give_up, seed, start_dab, moves, bend, out_pts, out_n, out_paint, out_gain,
                 start_count):
    """Place strokes for one layer from the given birth pixels; returns the stroke count.

    Moves are judged on the evaluation grid (planes_c, err_c: sums over f×f pixel blocks; the
    full raster itself when f == 1, err_c then a float64 copy of err); a stroke is painted only
    if its exact gain on the raster beats its cost, and then with its exact best paint.
    """
    np.random.seed(seed)
    h, w, k = planes.shape
    cos_max_turn = math.cos(max_turn)
    step = width_mm
    s_c = s * f
    runs, row_ab, row_n = footprint_scratch(h, MAX_POINTS)
    runs_c, row_ab_c, row_n_c = footprint_scratch(planes_c.shape[0], MAX_POINTS)
    sums = np.empty(k, np.float64)
    cur = np.zeros((MAX_POINTS, 2), np.float64)
    cand = np.zeros((MAX_POINTS, 2), np.float64)
    count = start_count
    max_strokes = out_pts.shape[0]
    for b in range(births.shape[0]):
        if count >= max_strokes:
            break
        bi = births[b, 0]
        bj = births[b, 1]
        if err[bi, bj] - best_err[bi, bj] <= 0.0:
            continue
        cx = (bj + 0.5) * s
        cy = (bi + 0.5) * s
        a = theta[bi, bj]
        hx = 0.5 * step * math.cos(a)
        hy = 0.5 * step * math.sin(a)
        # start as a one-segment stroke through the birth pixel, or a dab if that won't fit
        n = 2
        if start_dab:
            n = 1
            cur[0, 0] = _round_grid(min(max(cx, 0.0), wall_w))
            cur[0, 1] = _round_grid(min(max(cy, 0.0), wall_h))
        cur[0, 0] = _round_grid(cx - hx) if n == 2 else cur[0, 0]
        cur[0, 1] = _round_grid(cy - hy) if n == 2 else cur[0, 1]
        cur[1, 0] = _round_grid(cx + hx)
        cur[1, 1] = _round_grid(cy + hy)
        if not _valid(cur, n, width_mm, min_len, max_len, min_seg, max_seg, cos_max_turn, wall_w, wall_h):
            n = 1
            cur[0, 0] = _round_grid(min(max(cx, 0.0), wall_w))
            cur[0, 1] = _round_grid(min(max(cy, 0.0), wall_h))
            if not _valid(cur, n, width_mm, min_len, max_len, min_seg, max_seg, cos_max_turn, wall_w, wall_h):
                continue
        gain, paint, nr = _footprint_gain(cur, n, width_mm, s_c, planes_c, err_c, sums, runs_c, row_ab_c, row_n_c)
        fails = 0
        for t in range(tries):
            if fails >= patience:
                break
            # a stroke still far from paying its cost after a few moves is not worth refining
            if t == probe and gain < give_up * cost:
                break
            for p in range(n):
                cand[p, 0] = cur[p, 0]
                cand[p, 1] = cur[p, 1]
            m = _propose(cur, n, cand, theta, s, step, max_turn, moves, bend)
            if m == 0:
                fails += 1
                continue
            if not _valid(cand, m, width_mm, min_len, max_len, min_seg, max_seg, cos_max_turn, wall_w, wall_h):
                fails += 1
                continue
            g2, q2, _ = _footprint_gain(cand, m, width_mm, s_c, planes_c, err_c, sums, runs_c, row_ab_c, row_n_c)
            if g2 > gain + 1e-9:
                gain = g2
                paint = q2
                n = m
                for p in range(m):
                    cur[p, 0] = cand[p, 0]
                    cur[p, 1] = cand[p, 1]
                fails = 0
            else:
                fails += 1
        if f > 1:
            if gain <= give_up * cost:
                continue
            gain, paint, nr = _footprint_gain(cur, n, width_mm, s, planes, err, sums, runs, row_ab, row_n)
        elif gain > cost:
            # the last evaluation may have been a refused move: the kept stroke's pixels again
            nr = footprint_runs(cur, n, width_mm, s, h, w, runs, row_ab, row_n)
        if gain > cost:
            for c in range(nr):
                i = runs[c, 0]
                for j in range(runs[c, 1], runs[c, 2] + 1):
                    if f > 1:
                        err_c[i // f, j // f] += planes[i, j, paint] - err[i, j]
                    else:
                        err_c[i, j] = planes[i, j, paint]
                    canvas[i, j] = paint
                    err[i, j] = planes[i, j, paint]
            for p in range(n):
                out_pts[count, p, 0] = cur[p, 0]
                out_pts[count, p, 1] = cur[p, 1]
            out_n[count] = n
            out_paint[count] = paint
            out_gain[count] = gain
            count += 1
    return count


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


@dataclass
class LayerResult:
    """Strokes placed in one layer (before ordering)."""

    points: list[np.ndarray]
    paints: np.ndarray
    gains: np.ndarray
    error_before: float
    error_after: float
    cost: float


def place_layer(planes, canvas, err, theta, limits: BrushLimits, *, mm_per_px: float, wall_mm, cost: float,
                seed: int, rounds: int = 10, tries: int = 300, patience: int = 80, progress=None) -> LayerResult:
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
    progress : callable(fraction, message), optional

    Returns
    -------
    LayerResult

    References
    ----------
    Hertzmann (2001), "Paint by Relaxation".
    """
    h, w, k = planes.shape
    best_err = planes.min(axis=2)
    rng = np.random.default_rng(seed)
    w_px = limits.width_mm / mm_per_px
    f = max(1, int(w_px // EVAL_BRUSH_PX))
    # one compiled form for both cases: the search grid's error is always float64
    if f > 1:
        planes_c = block_sums(planes, f)
        err_c = block_sums(err, f).astype(np.float64)
    else:
        planes_c, err_c = planes, err.astype(np.float64)
    per_round = max(16, int(h * w / max(1.0, w_px * w_px)))
    max_strokes = per_round * rounds
    out_pts = np.zeros((max_strokes, MAX_POINTS, 2))
    out_n = np.zeros(max_strokes, np.int64)
    out_paint = np.zeros(max_strokes, np.int64)
    out_gain = np.zeros(max_strokes, np.float64)
    before = float(err.sum(dtype=np.float64))
    count = 0
    for r in range(rounds):
        room = (err - best_err).ravel().astype(np.float64)
        np.maximum(room, 0.0, out=room)
        total = room.sum()
        if total <= cost:
            break
        n_births = min(per_round, int(np.count_nonzero(room)))
        if n_births == 0:
            break
        flat = rng.choice(h * w, size=n_births, replace=False, p=room / total)
        births = np.stack([flat // w, flat % w], axis=1).astype(np.int64)
        prev = count
        count = _place_layer(
            planes, best_err, canvas, err, planes_c, err_c, f, theta, births,
            float(limits.width_mm), float(mm_per_px),
            float(cost), float(limits.min_length_mm), float(limits.max_length_mm), float(limits.min_segment_mm),
            float(limits.max_segment_mm), math.radians(limits.max_turn_deg), float(wall_mm[0]), float(wall_mm[1]),
            int(tries), int(patience), PROBE, GIVE_UP, int(seed * 1000 + r), START_DAB, _cumulative(PLACE_MOVES),
            PLACE_BEND, out_pts, out_n, out_paint, out_gain, count,
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
    )


@njit(cache=True, nogil=True)
def _contributions(planes, top_idx, top_paint, under_paint, n):
    """Error each stroke removes from the final picture: what would show without it, minus what shows."""
    h, w, _ = planes.shape
    out = np.zeros(n, np.float64)
    for i in range(h):
        for j in range(w):
            t = top_idx[i, j]
            if t >= 0:
                out[t] += planes[i, j, under_paint[i, j]] - planes[i, j, top_paint[i, j]]
    return out


@njit(cache=True, nogil=True)
def _conflicts(top_idx, under_idx, candidate):
    """Pairs (top, under) of candidate strokes that meet at a pixel: removing both is not additive."""
    h, w = top_idx.shape
    out = np.empty((256, 2), np.int64)
    c = 0
    for i in range(h):
        for j in range(w):
            t = top_idx[i, j]
            u = under_idx[i, j]
            if t >= 0 and u >= 0 and candidate[t] and candidate[u]:
                out = push_pair(out, c, t, u)
                c += 1
    return out[:c]


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
        gain = _contributions(planes, top_idx, top_paint, under_paint, n)
        candidate = alive & (gain <= 0.0)
        if not candidate.any():
            break
        pairs = _conflicts(top_idx, under_idx, candidate)
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


@njit(cache=True, nogil=True)
def _visible(st, paint, old_i, old_j, nold, top_idx, under_paint, stale, planes, vis_i, vis_j, vis_d, vis_s):
    """The pixels of stroke st's footprint where it is on top: the error change if each showed the paint under it,
    and whether that paint is stale. Returns their count."""
    c = 0
    for t in range(nold):
        i = old_i[t]
        j = old_j[t]
        if top_idx[i, j] == st:
            vis_i[c] = i
            vis_j[c] = j
            vis_d[c] = planes[i, j, under_paint[i, j]] - planes[i, j, paint]
            vis_s[c] = stale[i, j]
            c += 1
    return c


@njit(cache=True, nogil=True)
def _relax_pass(planes, top_idx, top_paint, under_idx, under_paint, stale, all_pts, counts, paints, alive,
                layer_of, thetas, widths, costs, min_len, max_len, min_seg, max_seg, max_turn, wall_w, wall_h,
                s, tries, seed, delete, moves, bend):
    """One relaxation pass over every live stroke, in file order; returns the energy change (≤ 0).

    For stroke k, a candidate geometry F' with paint q changes the finished picture only where
    k is on top after or before the move: pixels of F' not covered by a later stroke take q, and
    pixels of the old footprint F where k was on top but F' no longer covers show the paint just
    under k. The (top, under) stack is kept exact after each accepted move except for the
    "under" of pixels k uncovered (or had been directly under the top): those are marked stale,
    and a candidate needing a stale "under" is refused until the next pass rebuilds the stack.
    Deleting k (energy change: the error it uncovers minus its cost) is tried first.
    """
    np.random.seed(seed)
    h, w, k = planes.shape
    n_strokes = counts.shape[0]
    stamp = np.zeros((h, w), np.int32)
    stamp_id = 0
    cap = 1
    for t in range(n_strokes):
        r_px = int(math.ceil(widths[layer_of[t]] / s)) + 2
        cap = max(cap, (2 * r_px + 2) * (2 * r_px + 2) * MAX_POINTS * 2)
    cap = min(cap, h * w)
    old_i = np.empty(cap, np.int32)
    old_j = np.empty(cap, np.int32)
    new_i = np.empty(cap, np.int32)
    new_j = np.empty(cap, np.int32)
    vis_i = np.empty(cap, np.int32)
    vis_j = np.empty(cap, np.int32)
    vis_d = np.empty(cap, np.float64)
    vis_s = np.empty(cap, np.bool_)
    sums = np.empty(k, np.float64)
    runs, row_ab, row_n = footprint_scratch(h, MAX_POINTS)
    cur = np.zeros((MAX_POINTS, 2), np.float64)
    cand = np.zeros((MAX_POINTS, 2), np.float64)
    total = 0.0
    for st in range(n_strokes):
        if not alive[st]:
            continue
        lay = layer_of[st]
        width = widths[lay]
        cos_max_turn = math.cos(max_turn[lay])
        n = counts[st]
        for p in range(n):
            cur[p, 0] = all_pts[st, p, 0]
            cur[p, 1] = all_pts[st, p, 1]
        paint = paints[st]
        stamp_id += 1
        old_id = stamp_id
        nold = _footprint_px(cur, n, width, s, h, w, stamp, old_id, old_i, old_j, runs, row_ab, row_n)
        nvis = _visible(st, paint, old_i, old_j, nold, top_idx, under_paint, stale, planes, vis_i, vis_j, vis_d, vis_s)
        # delete: k's visible pixels show what is under them
        uncover = 0.0
        ok = True
        for v in range(nvis):
            if vis_s[v]:
                ok = False
                break
            uncover += vis_d[v]
        if delete and ok and uncover - costs[lay] < -1e-9:
            # stamp ids are never negative: every pixel of the old footprint is uncovered
            _uncover(st, old_i, old_j, nold, stamp, -1, top_idx, top_paint, under_idx, under_paint, stale)
            alive[st] = False
            total += uncover - costs[lay]
            continue
        # recolour in place, then random local moves; each candidate takes its best paint
        for t in range(tries + 1):
            m = n
            for p in range(n):
                cand[p, 0] = cur[p, 0]
                cand[p, 1] = cur[p, 1]
            if t > 0:
                m = _propose(cur, n, cand, thetas[lay], s, width, max_turn[lay], moves, bend)
                if m == 0:
                    continue
                if not _valid(cand, m, width, min_len[lay], max_len[lay], min_seg[lay], max_seg[lay], cos_max_turn,
                              wall_w, wall_h):
                    continue
            stamp_id += 1
            new_id = stamp_id
            nnew = _footprint_px(cand, m, width, s, h, w, stamp, new_id, new_i, new_j, runs, row_ab, row_n)
            for q in range(k):
                sums[q] = 0.0
            base = 0.0
            for c in range(nnew):
                i = new_i[c]
                j = new_j[c]
                if top_idx[i, j] <= st:
                    base -= planes[i, j, top_paint[i, j]]
                    for q in range(k):
                        sums[q] += planes[i, j, q]
            ok = True
            for v in range(nvis):
                if stamp[vis_i[v], vis_j[v]] != new_id:
                    if vis_s[v]:
                        ok = False
                        break
                    base += vis_d[v]
            if not ok:
                continue
            bq = 0
            bd = 1e300
            for q in range(k):
                if sums[q] < bd:
                    bd = sums[q]
                    bq = q
            d = base + bd
            if d < -1e-9:
                # keep the move and climb from the better stroke
                n = m
                for p in range(m):
                    cur[p, 0] = cand[p, 0]
                    cur[p, 1] = cand[p, 1]
                    all_pts[st, p, 0] = cand[p, 0]
                    all_pts[st, p, 1] = cand[p, 1]
                # the old footprint and the stack still describe the stroke as it was: apply now
                _apply_move(st, bq, new_i, new_j, nnew, old_i, old_j, nold, stamp, top_idx, top_paint, under_idx,
                            under_paint, stale, new_id)
                total += d
                paint = bq
                # the applied footprint is the stroke's footprint from here on
                old_i[:nnew] = new_i[:nnew]
                old_j[:nnew] = new_j[:nnew]
                nold = nnew
                nvis = _visible(st, paint, old_i, old_j, nold, top_idx, under_paint, stale, planes, vis_i, vis_j,
                                vis_d, vis_s)
        counts[st] = n
        paints[st] = paint
    return total


@njit(cache=True, nogil=True)
def _uncover(st, old_i, old_j, nold, stamp, keep_id, top_idx, top_paint, under_idx, under_paint, stale):
    """Take stroke st off the stack at the old footprint's pixels not stamped keep_id.

    Where st was on top, the stroke under it shows; its own "under" is then unknown, as is the
    "under" of pixels where st was just under the top: both are marked stale.
    """
    for c in range(nold):
        i = old_i[c]
        j = old_j[c]
        if stamp[i, j] == keep_id:
            continue
        if top_idx[i, j] == st:
            top_idx[i, j] = under_idx[i, j]
            top_paint[i, j] = under_paint[i, j]
            stale[i, j] = True
        elif under_idx[i, j] == st:
            stale[i, j] = True


@njit(cache=True, nogil=True)
def _apply_move(st, q, new_i, new_j, nnew, old_i, old_j, nold, stamp, top_idx, top_paint, under_idx, under_paint,
                stale, new_id):
    """Update the (top, under) stack after stroke st moved from footprint old to new (stamped new_id) with paint q."""
    _uncover(st, old_i, old_j, nold, stamp, new_id, top_idx, top_paint, under_idx, under_paint, stale)
    for c in range(nnew):
        i = new_i[c]
        j = new_j[c]
        t = top_idx[i, j]
        if t == st:
            top_paint[i, j] = q
        elif t < st:
            under_idx[i, j] = t
            under_paint[i, j] = top_paint[i, j]
            top_idx[i, j] = st
            top_paint[i, j] = q
            stale[i, j] = False
        elif not stale[i, j]:
            u = under_idx[i, j]
            if u == st:
                under_paint[i, j] = q
            elif u < st:
                under_idx[i, j] = st
                under_paint[i, j] = q


def relax_strokes(planes, ground: int, points, layer_of, paints, limits, costs, thetas, *, mm_per_px: float,
                  wall_mm, seed: int, passes: int = 2, tries: int = 20, delete: bool = True, progress=None):
    """Revisit every stroke of the finished picture and keep local moves that lower its energy.

    After all layers are placed, each stroke in turn (file order) may be deleted, recoloured,
    shifted, turned, lengthened, shortened or bent; a change is kept only if it lowers the
    energy of the *finished* picture, Σ ΔE00 + cost per stroke. Strokes are opaque and painted
    in file order, so a change to stroke k shows only where no later stroke covers it; a
    per-pixel stack (top stroke, and the stroke and paint just under it) gives the exact
    change. The stack is rebuilt before each pass.

    Parameters
    ----------
    planes : (H, W, K) float32 array
    ground : int, palette position of the ground
    points : list of (n_i, 2) arrays in wall mm, in file order over all layers
    layer_of : (N,) int array, layer position of each stroke (into ``limits``, ``costs``, ``thetas``)
    paints : (N,) int array
    limits : list of BrushLimits, one per layer
    costs : sequence of float, stroke cost per layer
    thetas : list of (H, W) float arrays, stroke direction field per layer
    mm_per_px : float
    wall_mm : (float, float)
    seed : int
    passes : int
        Relaxation passes over all strokes.
    tries : int
        Random local moves tried per stroke and pass.
    delete : bool
        Whether deleting a stroke is one of the moves.
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
    h, w, _ = planes.shape
    layer_of = np.asarray(layer_of, dtype=np.int64)
    counts = np.array([len(p) for p in points], dtype=np.int64)
    pts3 = np.zeros((n, MAX_POINTS, 2), dtype=np.float64)
    for i, p in enumerate(points):
        pts3[i, : len(p)] = p
    widths = np.array([lim.width_mm for lim in limits], dtype=np.float64)
    th = np.ascontiguousarray(np.stack(thetas), dtype=np.float64)
    arr = lambda f: np.array([f(lim) for lim in limits], dtype=np.float64)  # noqa: E731
    change = 0.0
    for r in range(passes):
        counts_c = counts.copy()
        starts = np.zeros(n, dtype=np.int64)
        starts[1:] = np.cumsum(counts_c)[:-1]
        flat = np.ascontiguousarray(np.concatenate([pts3[i, : counts_c[i]] for i in range(n)]))
        top_idx, top_paint, under_paint, under_idx = stack_tops(
            h, w, float(mm_per_px), flat, starts, counts_c, widths[layer_of], paints, alive, int(ground))
        stale = np.zeros((h, w), dtype=np.bool_)
        change += _relax_pass(
            planes, top_idx, top_paint, under_idx, under_paint, stale, pts3, counts, paints, alive, layer_of, th,
            widths, np.asarray(costs, dtype=np.float64), arr(lambda lim: lim.min_length_mm),
            arr(lambda lim: lim.max_length_mm), arr(lambda lim: lim.min_segment_mm),
            arr(lambda lim: lim.max_segment_mm), np.radians(arr(lambda lim: lim.max_turn_deg)),
            float(wall_mm[0]), float(wall_mm[1]), float(mm_per_px), int(tries), int(seed * 1000 + r),
            bool(delete), _cumulative(RELAX_MOVES), RELAX_BEND)
        if progress is not None:
            progress((r + 1) / passes, f"pass {r + 1} of {passes}")
    return [pts3[i, : counts[i]].copy() for i in range(n)], paints, alive, float(change)
