"""Compiled kernels of the stroke placer: the hot loops, over plain arrays and records.

:mod:`layerplan.placer` is the Python side: it validates its arguments and packs them
into what these functions read. A brush's limits come in as one record (fields named as
in :class:`layerplan.placer.BrushLimits`, plus ``max_turn_rad`` and ``cos_max_turn``),
the placement search's knobs as another, and the relaxation's per-pixel stroke stack as
one tuple ``(top_idx, top_paint, under_idx, under_paint, stale)``. Everything here trusts
its inputs.

Stroke points are kept on a 0.1 mm grid (:func:`_round_grid`) so plan.json holds them
exactly.

References
----------
A. Hertzmann, "Paint by Relaxation", Proc. Computer Graphics International, 2001.
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit

from .raster import MAX_POINTS, footprint_runs, footprint_scratch, push_pair



#: the gain of a stroke that would cover a pixel inside an opening: less than any real one
SHUT_GAIN = -1e30


@njit(cache=True, nogil=True)
def _touches(shut, pix_i, pix_j, n):
    """Whether any of the n listed pixels is inside an opening."""
    for c in range(n):
        if shut[pix_i[c], pix_j[c]]:
            return True
    return False


@njit(cache=True, nogil=True)
def _round_grid(v):
    """v on the 0.1 mm grid of stroke points."""
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
def _best_paint(sums, k):
    """The largest of ``sums[:k]`` and its paint (the first on ties)."""
    best = -1e30
    bq = 0
    for q in range(k):
        if sums[q] > best:
            best = sums[q]
            bq = q
    return best, bq


@njit(cache=True, nogil=True)
def _footprint_gain(pts, n, width_mm, s, planes, err, toprank, allow, sums, runs, row_ab, row_n):
    """Gain of painting the stroke with each paint in its run; returns (best gain, best paint, run count).

    A pixel counts for paint q only when no stroke of a later run of this layer covers it
    (``allow[max(toprank, 0), q]``): the stroke is slotted into q's run and shows only where
    nothing painted after that run lies on top. The pixels are `raster.footprint_runs`'s
    (exactly the rendering rule's set), left in ``runs``. A footprint reaching a pixel marked
    ``toprank == K`` (an opening of the wall) is worth :data:`SHUT_GAIN`.
    """
    h, w, k = planes.shape
    c = footprint_runs(pts, n, width_mm, s, h, w, runs, row_ab, row_n)
    for q in range(k):
        sums[q] = 0.0
    for t in range(c):
        i = runs[t, 0]
        for j in range(runs[t, 1], runs[t, 2] + 1):
            e = np.float64(err[i, j])
            r = toprank[i, j]
            if r >= k:
                return SHUT_GAIN, 0, c  # an opening (above every run): no stroke may cover it
            if r <= 0:
                for q in range(k):
                    sums[q] += e - planes[i, j, q]
            else:
                for q in range(k):
                    sums[q] += allow[r, q] * (e - planes[i, j, q])
    best, bq = _best_paint(sums, k)
    return best, bq, c


@njit(cache=True, nogil=True)
def _block_gain(pts, n, width_mm, s_c, gain_c, sums, runs, row_ab, row_n):
    """`_footprint_gain` on the coarse grid: ``gain_c[bi, bj, q]`` holds the block's gain for paint q."""
    h, w, k = gain_c.shape
    c = footprint_runs(pts, n, width_mm, s_c, h, w, runs, row_ab, row_n)
    for q in range(k):
        sums[q] = 0.0
    for t in range(c):
        i = runs[t, 0]
        for j in range(runs[t, 1], runs[t, 2] + 1):
            for q in range(k):
                sums[q] += gain_c[i, j, q]
    best, bq = _best_paint(sums, k)
    return best, bq, c


@njit(cache=True, nogil=True)
def layer_room(planes, err, toprank, allow):
    """Error still removable at each pixel by a stroke of this layer, flattened: the current error minus the
    best a paint whose run can still show there would leave (never negative)."""
    h, w, k = planes.shape
    out = np.zeros(h * w, np.float64)
    for i in range(h):
        for j in range(w):
            row = allow[max(toprank[i, j], 0)]
            best = 1e30
            for q in range(k):
                if row[q] > 0.0 and planes[i, j, q] < best:
                    best = planes[i, j, q]
            d = np.float64(err[i, j]) - best
            if d > 0.0:
                out[i * w + j] = d
    return out


@njit(cache=True, nogil=True)
def _valid(pts, n, brush, wall):
    """Check a candidate polyline against the brush's limits and the wall (width, height in mm).

    Every rule of :class:`layerplan.placer.BrushLimits` is checked here, and only here.
    """
    min_seg = brush.min_segment_mm
    max_seg = brush.max_segment_mm
    wall_w, wall_h = wall
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
            if (ex * dx + ey * dy) < brush.cos_max_turn * le * L - 1e-9:
                return False
    length = total + brush.width_mm
    return length >= brush.min_length_mm - 1e-6 and length <= brush.max_length_mm + 1e-6


@njit(cache=True, nogil=True)
def _angle_at(theta, x, y, s):
    h, w = theta.shape
    j = min(w - 1, max(0, int(x / s)))
    i = min(h - 1, max(0, int(y / s)))
    return theta[i, j]


@njit(cache=True, nogil=True)
def _propose(cur, n, cand, theta, s, brush, moves, bend):
    """One random local move of the stroke cur[:n] into cand (which holds a copy of cur).

    Lengthen at either end turning toward the isophote, shorten, shift, turn, or bend a
    vertex (by ``bend`` × 0.25 brush widths, standard deviation); ``moves`` holds the
    cumulative probabilities of the six moves in that order (lengthen at one end counts
    twice). Steps scale with the brush width. Returns the candidate's vertex count, or 0
    when the move does not apply.
    """
    step = brush.width_mm
    max_turn = brush.max_turn_rad
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
def place_births(planes, canvas, err, runs_of, grid, theta, births, brush, search, s, wall, moves, bend, seed, out,
                 start_count):
    """Place strokes for one layer from the given birth pixels; returns the stroke count.

    ``runs_of = (rank, allow, toprank)``: each paint's run in this layer (``rank``, (K,)), the
    table ``allow[r, q] = rank[q] >= r`` and, per pixel, the run of the last stroke of this
    layer over it (-1 where none; updated). A new stroke of paint q goes into q's run: it
    shows only where no stroke of a later run covers it, and it is judged by that.

    Moves are judged on the evaluation grid ``grid = (gain_c, f)``: the gain of each paint
    summed over f×f pixel blocks (kept up to date as strokes are painted), or, when f == 1,
    on the raster itself (``gain_c`` unused). A stroke is painted only if its exact gain on
    the raster beats its cost, and then with its exact best paint. ``search`` holds the
    stroke cost and the refinement's ``tries``, ``patience``, ``probe`` and ``give_up``;
    strokes go to ``out = (points, vertex counts, paints, gains)`` from position
    ``start_count`` on.
    """
    np.random.seed(seed)
    h, w, k = planes.shape
    rank, allow, toprank = runs_of
    gain_c, f = grid
    out_pts, out_n, out_paint, out_gain = out
    width_mm = brush.width_mm
    cost = search.cost
    give_up = search.give_up
    s_c = s * f
    runs, row_ab, row_n = footprint_scratch(h, MAX_POINTS)
    runs_c, row_ab_c, row_n_c = footprint_scratch(gain_c.shape[0], MAX_POINTS)
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
        # room left at the birth pixel for a paint whose run can still show there
        row = allow[max(toprank[bi, bj], 0)]
        room = False
        for q in range(k):
            if row[q] > 0.0 and planes[bi, bj, q] < err[bi, bj]:
                room = True
                break
        if not room:
            continue
        # start as a dab on the birth pixel; the moves grow it along the isophotes (n typed int64, not
        # the literal 1, so the helpers keep one compiled form)
        n = np.int64(1)
        cur[0, 0] = _round_grid(min(max((bj + 0.5) * s, 0.0), wall[0]))
        cur[0, 1] = _round_grid(min(max((bi + 0.5) * s, 0.0), wall[1]))
        if not _valid(cur, n, brush, wall):
            continue
        if f > 1:
            gain, paint, nr = _block_gain(cur, n, width_mm, s_c, gain_c, sums, runs_c, row_ab_c, row_n_c)
        else:
            gain, paint, nr = _footprint_gain(cur, n, width_mm, s, planes, err, toprank, allow, sums, runs, row_ab,
                                              row_n)
        fails = 0
        for t in range(search.tries):
            if fails >= search.patience:
                break
            # a stroke still far from paying its cost after a few moves is not worth refining
            if t == search.probe and gain < give_up * cost:
                break
            for p in range(n):
                cand[p, 0] = cur[p, 0]
                cand[p, 1] = cur[p, 1]
            m = _propose(cur, n, cand, theta, s, brush, moves, bend)
            if m == 0:
                fails += 1
                continue
            if not _valid(cand, m, brush, wall):
                fails += 1
                continue
            if f > 1:
                g2, q2, _ = _block_gain(cand, m, width_mm, s_c, gain_c, sums, runs_c, row_ab_c, row_n_c)
            else:
                g2, q2, _ = _footprint_gain(cand, m, width_mm, s, planes, err, toprank, allow, sums, runs, row_ab,
                                            row_n)
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
        if f > 1 and gain <= give_up * cost:
            continue
        if f > 1 or gain > cost:
            # exact, and the last evaluation may have been a refused move: the kept stroke's pixels again
            gain, paint, nr = _footprint_gain(cur, n, width_mm, s, planes, err, toprank, allow, sums, runs, row_ab,
                                              row_n)
        if gain > cost:
            rq = rank[paint]
            for c in range(nr):
                i = runs[c, 0]
                for j in range(runs[c, 1], runs[c, 2] + 1):
                    r_old = toprank[i, j]
                    if r_old > rq:
                        continue  # a later run covers it: the stroke is hidden here
                    if f > 1:
                        # the block's gain for every paint, before and after this pixel changes
                        bi_ = i // f
                        bj_ = j // f
                        old_row = allow[max(r_old, 0)]
                        new_row = allow[max(rq, 0)]
                        e_old = np.float64(err[i, j])
                        e_new = np.float64(planes[i, j, paint])
                        for q in range(k):
                            pq = planes[i, j, q]
                            gain_c[bi_, bj_, q] += new_row[q] * (e_new - pq) - old_row[q] * (e_old - pq)
                    canvas[i, j] = paint
                    err[i, j] = planes[i, j, paint]
                    toprank[i, j] = rq
            for p in range(n):
                out_pts[count, p, 0] = cur[p, 0]
                out_pts[count, p, 1] = cur[p, 1]
            out_n[count] = n
            out_paint[count] = paint
            out_gain[count] = gain
            count += 1
    return count


@njit(cache=True, nogil=True)
def contributions(planes, top_idx, top_paint, under_paint, n):
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
def conflicts(top_idx, under_idx, candidate):
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


@njit(cache=True, nogil=True)
def _visible(st, paint, old_i, old_j, nold, stack, planes, vis_i, vis_j, vis_d, vis_s):
    """The pixels of stroke st's footprint where it is on top: the error change if each showed the paint under it,
    and whether that paint is stale. Returns their count."""
    top_idx, _, _, under_paint, stale = stack
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
def stroke_keys(layer_of, paints, ranks):
    """Painting position of every stroke: layer, then its paint's run in that layer, then its number."""
    n = layer_of.shape[0]
    k = ranks.shape[1]
    out = np.empty(n, np.int64)
    for t in range(n):
        out[t] = (layer_of[t] * (k + 1) + ranks[layer_of[t], paints[t]]) * n + t
    return out


@njit(cache=True, nogil=True)
def relax_pass(planes, stack, all_pts, counts, paints, alive, layer_of, runs_of, thetas, brushes, costs, s, wall,
               tries, seed, delete, moves, bend, shut):
    """One relaxation pass over every live stroke; returns the energy change (≤ 0).

    ``stack = (top_idx, top_paint, under_idx, under_paint, stale)`` is the per-pixel stroke stack
    (updated) in painting order; ``runs_of = (ranks, allow, keys)``: each paint's run per layer
    ((L, K)), the tables ``allow[l, r, q] = ranks[l, q] >= r`` and each stroke's painting position
    (:func:`stroke_keys`, updated when a stroke changes paint and so moves to another run).
    ``brushes``, ``costs`` and ``thetas`` are indexed by ``layer_of``.

    For stroke k, a candidate geometry F' with paint q changes the finished picture only where
    k is on top after or before the move: pixels of F' where k, in q's run, lies above every
    other stroke take q, and pixels of the old footprint F where k was on top but no longer is
    show the stroke just under k. The (top, under) stack is kept exact after each accepted move
    except where the "under" became unknown (k uncovered a pixel, had been directly under the
    top, or went below the stroke under it): those are marked stale, and a candidate needing a
    stale "under" is refused (or kept from the paints of earlier runs) until the next pass
    rebuilds the stack. A candidate covering a pixel of ``shut`` ((H, W) bool: inside an
    opening of the wall) is refused. Deleting k (energy change: the error it uncovers minus its cost) is
    tried first.
    """
    np.random.seed(seed)
    h, w, k = planes.shape
    top_idx, top_paint, under_idx, under_paint, stale = stack
    ranks, allow, keys = runs_of
    n_strokes = counts.shape[0]
    stamp = np.zeros((h, w), np.int32)
    stamp_id = 0
    cap = 1
    for t in range(n_strokes):
        r_px = int(math.ceil(brushes[layer_of[t]].width_mm / s)) + 2
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
        brush = brushes[lay]
        width = brush.width_mm
        last_run = 0
        for q in range(k):
            last_run = max(last_run, ranks[lay, q])
        # painting positions: k in the first run of its layer, and the first of the next layer
        key_first = lay * (k + 1) * n_strokes + st
        key_next = (lay + 1) * (k + 1) * n_strokes
        n = counts[st]
        for p in range(n):
            cur[p, 0] = all_pts[st, p, 0]
            cur[p, 1] = all_pts[st, p, 1]
        paint = paints[st]
        stamp_id += 1
        old_id = stamp_id
        nold = _footprint_px(cur, n, width, s, h, w, stamp, old_id, old_i, old_j, runs, row_ab, row_n)
        nvis = _visible(st, paint, old_i, old_j, nold, stack, planes, vis_i, vis_j, vis_d, vis_s)
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
            _uncover(st, old_i, old_j, nold, stamp, -1, stack)
            alive[st] = False
            total += uncover - costs[lay]
            continue
        # recolour in place, then random local moves; each candidate takes its best paint (and that paint's run)
        for t in range(tries + 1):
            m = n
            for p in range(n):
                cand[p, 0] = cur[p, 0]
                cand[p, 1] = cur[p, 1]
            if t > 0:
                m = _propose(cur, n, cand, thetas[lay], s, brush, moves, bend)
                if m == 0:
                    continue
                if not _valid(cand, m, brush, wall):
                    continue
            stamp_id += 1
            new_id = stamp_id
            nnew = _footprint_px(cand, m, width, s, h, w, stamp, new_id, new_i, new_j, runs, row_ab, row_n)
            if _touches(shut, new_i, new_j, nnew):
                continue
            for q in range(k):
                sums[q] = 0.0
            base = 0.0
            # a pixel where k is on top but the stroke under it is unknown: k must not go to an earlier run
            stale_top = False
            for c in range(nnew):
                i = new_i[c]
                j = new_j[c]
                tp = top_idx[i, j]
                # thr: the lowest run of this layer at which k shows above o, the highest other stroke here
                # (0: any run; within one run the stroke with the lower number is painted first)
                if tp == st:
                    o = under_idx[i, j]
                    if stale[i, j]:
                        stale_top = True
                        o = -1
                else:
                    o = tp
                thr = 0
                if o >= 0:
                    ko = keys[o]
                    if ko >= key_next:
                        continue  # under a stroke of a later layer, whatever its paint
                    if ko > key_first:
                        # same layer: k in run r comes after o when (lay (k + 1) + r) N + st > key of o
                        thr = (ko - key_first) // n_strokes + 1
                        if tp != st and thr > last_run:
                            continue  # under a stroke painted after every run k could go to
                shown = np.float64(planes[i, j, top_paint[i, j]])
                if thr == 0:
                    # k shows here with any paint
                    base -= shown
                    for q in range(k):
                        sums[q] += planes[i, j, q]
                else:
                    # error here: ``hidden`` if k ends below o, paint q's if it shows
                    hidden = np.float64(planes[i, j, under_paint[i, j]]) if tp == st else shown
                    base += hidden - shown
                    for q in range(k):
                        sums[q] += allow[lay, thr, q] * (planes[i, j, q] - hidden)
            ok = True
            for v in range(nvis):
                if stamp[vis_i[v], vis_j[v]] != new_id:
                    if vis_s[v]:
                        ok = False
                        break
                    base += vis_d[v]
            if not ok:
                continue
            r_cur = ranks[lay, paint]
            bq = -1
            bd = 1e300
            for q in range(k):
                if stale_top and ranks[lay, q] < r_cur:
                    continue
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
                key_new = (lay * (k + 1) + ranks[lay, bq]) * n_strokes + st
                _apply_move(st, bq, key_new, new_i, new_j, nnew, old_i, old_j, nold, stamp, new_id, stack, keys)
                keys[st] = key_new
                paints[st] = bq
                total += d
                paint = bq
                # the applied footprint is the stroke's footprint from here on
                old_i[:nnew] = new_i[:nnew]
                old_j[:nnew] = new_j[:nnew]
                nold = nnew
                nvis = _visible(st, paint, old_i, old_j, nold, stack, planes, vis_i, vis_j, vis_d, vis_s)
        counts[st] = n
        paints[st] = paint
    return total


@njit(cache=True, nogil=True)
def _uncover(st, old_i, old_j, nold, stamp, keep_id, stack):
    """Take stroke st off the stack at the old footprint's pixels not stamped keep_id.

    Where st was on top, the stroke under it shows; its own "under" is then unknown, as is the
    "under" of pixels where st was just under the top: both are marked stale.
    """
    top_idx, top_paint, under_idx, under_paint, stale = stack
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
def _apply_move(st, q, key_new, new_i, new_j, nnew, old_i, old_j, nold, stamp, new_id, stack, keys):
    """Update the (top, under) stack after stroke st moved from footprint old to new (stamped new_id) with paint q,
    and so to painting position ``key_new`` (``keys[st]`` still holds the old one)."""
    _uncover(st, old_i, old_j, nold, stamp, new_id, stack)
    top_idx, top_paint, under_idx, under_paint, stale = stack
    key_old = keys[st]
    for c in range(nnew):
        i = new_i[c]
        j = new_j[c]
        t = top_idx[i, j]
        if t == st:
            u = under_idx[i, j]
            if stale[i, j] or u < 0 or keys[u] < key_new:
                # still on top (a stale pixel only allowed a later run)
                top_paint[i, j] = q
            else:
                # went below the stroke under it; what lies between is unknown
                top_idx[i, j] = u
                top_paint[i, j] = under_paint[i, j]
                under_idx[i, j] = st
                under_paint[i, j] = q
                stale[i, j] = True
        elif t < 0 or keys[t] < key_new:
            under_idx[i, j] = t
            under_paint[i, j] = top_paint[i, j]
            top_idx[i, j] = st
            top_paint[i, j] = q
            stale[i, j] = False
        elif not stale[i, j]:
            u = under_idx[i, j]
            if u == st:
                under_paint[i, j] = q
                if key_new < key_old:
                    # it went down: another stroke may now be just under the top
                    stale[i, j] = True
            elif u < 0 or keys[u] < key_new:
                under_idx[i, j] = st
                under_paint[i, j] = q
