"""Compiled (numba) loops of the brush-travel tour; :func:`layerplan.order.short_travel` packs their inputs.

A run's strokes are points with two ends: the brush goes down at a stroke's start and comes up at
its end, then travels lifted to the next stroke's start. A stroke that may be painted either way
round (its pixels are the same both ways) can have its ends swapped. The tour is an open path
over the strokes, cut into work-zone blocks that are visited in a fixed order; every move keeps
each block's strokes inside the block.
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit

from .raster import covers, stroke_bbox


@njit(cache=True, nogil=True)
def same_when_reversed(all_pts, starts, counts, width, s, h, w):
    """For each stroke, True when painting its polyline backwards covers exactly the same pixels.

    Mathematically it always does (a round brush's footprint is the set of points within half a
    width of the polyline, whichever way it is drawn), but `raster.covers` works per segment from
    its first point, so a pixel centre exactly on the edge could round the other way. This checks
    every pixel of the stroke's box by the rendering rule itself.
    """
    n = len(starts)
    out = np.ones(n, np.bool_)
    half2 = 0.25 * width * width
    for k in range(n):
        m = counts[k]
        if m < 2:
            continue
        pts = all_pts[starts[k] : starts[k] + m]
        rev = pts[::-1].copy()
        i0, i1, j0, j1 = stroke_bbox(pts, m, 0.5 * width, s, h, w)
        same = True
        for i in range(i0, i1):
            cy = (i + 0.5) * s
            for j in range(j0, j1):
                cx = (j + 0.5) * s
                if covers(pts, m, half2, cx, cy) != covers(rev, m, half2, cx, cy):
                    same = False
                    break
            if not same:
                break
        out[k] = same
    return out


@njit(cache=True, nogil=True)
def _d(ax, ay, bx, by):
    return math.sqrt((ax - bx) * (ax - bx) + (ay - by) * (ay - by))


@njit(cache=True, nogil=True)
def _gap(P, k):
    """Lifted travel from the end of position k to the start of position k + 1 (P: x0, y0, x1, y1 per position)."""
    return _d(P[k, 2], P[k, 3], P[k + 1, 0], P[k + 1, 1])


@njit(cache=True, nogil=True)
def _reversal_shortens(P, i, j, m):
    """Whether painting strokes ``i..j`` of the tour backwards (a 2-opt move) makes the lifted travel shorter."""
    old = _gap(P, i - 1)
    new = _d(P[i - 1, 2], P[i - 1, 3], P[j, 2], P[j, 3])
    if j + 1 < m:
        old += _gap(P, j)
        new += _d(P[i, 0], P[i, 1], P[j + 1, 0], P[j + 1, 1])
    return new < old - 1e-9


@njit(cache=True, nogil=True)
def _reverse(P, seq, flip, fixed, i, j):
    """Reverse the order of positions i..j (`_swap_ends` then turns each stroke end to start)."""
    while i < j:
        for c in range(4):
            t = P[i, c]
            P[i, c] = P[j, c]
            P[j, c] = t
        t2 = seq[i]
        seq[i] = seq[j]
        seq[j] = t2
        tb = flip[i]
        flip[i] = flip[j]
        flip[j] = tb
        tb = fixed[i]
        fixed[i] = fixed[j]
        fixed[j] = tb
        i += 1
        j -= 1


@njit(cache=True, nogil=True)
def _swap_ends(P, flip, i, j):
    for k in range(i, j + 1):
        x, y = P[k, 0], P[k, 1]
        P[k, 0] = P[k, 2]
        P[k, 1] = P[k, 3]
        P[k, 2] = x
        P[k, 3] = y
        flip[k] = not flip[k]


@njit(cache=True, nogil=True)
def _nearest_neighbour(A, B, block, flippable):
    """Greedy tour: zone by zone, always the nearest free stroke end of the current zone.

    The first stroke is the one with the topmost end (then leftmost), begun there.
    """
    m = len(A)
    seq = np.empty(m, np.int64)
    flip = np.zeros(m, np.bool_)
    used = np.zeros(m, np.bool_)
    pos = 0
    px = 0.0
    py = 0.0
    for z in range(len(block) - 1):
        for _ in range(block[z], block[z + 1]):
            best = -1
            best_d = 1e300
            best_f = False
            for k in range(block[z], block[z + 1]):
                if used[k]:
                    continue
                for f in range(2 if flippable[k] else 1):
                    qx = B[k, 0] if f else A[k, 0]
                    qy = B[k, 1] if f else A[k, 1]
                    if pos == 0:
                        d = qy * 1e7 + qx  # topmost, then leftmost (walls are far under 1e7 mm)
                    else:
                        d = _d(px, py, qx, qy)
                    if d < best_d:
                        best_d = d
                        best = k
                        best_f = f == 1
            used[best] = True
            seq[pos] = best
            flip[pos] = best_f
            px = A[best, 0] if best_f else B[best, 0]
            py = A[best, 1] if best_f else B[best, 1]
            pos += 1
    return seq, flip


@njit(cache=True, nogil=True)
def _two_opt(P, seq, flip, fixed, s, e, budget):
    """One pass of 2-opt moves (reverse positions i..j) inside the block [s, e); returns (improved, evaluations)."""
    m = len(seq)
    improved = False
    evals = 0
    for i in range(max(s, 1), e):
        for j in range(i, e):
            if fixed[j]:
                break  # this and every longer segment holds a stroke that must keep its direction
            evals += 1
            if _reversal_shortens(P, i, j, m):
                _reverse(P, seq, flip, fixed, i, j)
                _swap_ends(P, flip, i, j)
                improved = True
        if evals > budget:
            break
    return improved, evals


@njit(cache=True, nogil=True)
def _chain_out(P, i, last):
    """What taking the chain of positions i..last out of the path saves (its two edges, less the one closing up)."""
    m = len(P)
    gain = _gap(P, i - 1)
    if last + 1 < m:
        gain += _gap(P, last) - _d(P[i - 1, 2], P[i - 1, 3], P[last + 1, 0], P[last + 1, 1])
    return gain


@njit(cache=True, nogil=True)
def _chain_in(P, i, last, q, rev):
    """Change in travel from putting the chain i..last (reversed or not) between q and q + 1, less what it saves out."""
    m = len(P)
    if rev:
        ax, ay, bx, by = P[last, 2], P[last, 3], P[i, 0], P[i, 1]
    else:
        ax, ay, bx, by = P[i, 0], P[i, 1], P[last, 2], P[last, 3]
    add = _d(P[q, 2], P[q, 3], ax, ay)
    if q + 1 < m:
        add += _d(bx, by, P[q + 1, 0], P[q + 1, 1]) - _gap(P, q)
    return add


@njit(cache=True, nogil=True)
def _move_chain(P, seq, flip, fixed, pos, i, last, q, rev, tmpP, tmp_seq, tmp_flip, tmp_fixed):
    """Move positions i..last (reversed when ``rev``) to just after position q (outside the chain)."""
    c = last + 1
    lo = min(i, q + 1)
    hi = max(last, q)
    if q < i:
        parts = ((i, c, True), (q + 1, i, False))   # chain first, then what was between
    else:
        parts = ((c, q + 1, False), (i, c, True))
    t = 0
    for a0, a1, chain in parts:
        if chain and rev:
            for k in range(a1 - 1, a0 - 1, -1):
                tmpP[t, 0], tmpP[t, 1], tmpP[t, 2], tmpP[t, 3] = P[k, 2], P[k, 3], P[k, 0], P[k, 1]
                tmp_seq[t] = seq[k]
                tmp_flip[t] = not flip[k]
                tmp_fixed[t] = fixed[k]
                t += 1
        else:
            for k in range(a0, a1):
                for cc in range(4):
                    tmpP[t, cc] = P[k, cc]
                tmp_seq[t] = seq[k]
                tmp_flip[t] = flip[k]
                tmp_fixed[t] = fixed[k]
                t += 1
    for k in range(t):
        for cc in range(4):
            P[lo + k, cc] = tmpP[k, cc]
        seq[lo + k] = tmp_seq[k]
        flip[lo + k] = tmp_flip[k]
        fixed[lo + k] = tmp_fixed[k]
        pos[seq[lo + k]] = lo + k
    return hi


@njit(cache=True, nogil=True)
def _any_fixed(fixed, i, j):
    for k in range(i, j + 1):
        if fixed[k]:
            return True
    return False


@njit(cache=True, nogil=True)
def _or_opt(P, seq, flip, fixed, pos, s, e, budget, tmp):
    """One pass of Or-opt moves inside the block [s, e): a chain of 1–3 strokes moved elsewhere, maybe reversed.

    Every insertion point of the block is tried. Returns (improved, evaluations).
    """
    improved = False
    evals = 0
    tmpP, tmp_seq, tmp_flip, tmp_fixed = tmp
    for L in range(1, 4):
        i = max(s, 1)
        while i + L <= e:
            last = i + L - 1
            can_rev = not _any_fixed(fixed, i, last)
            out_gain = _chain_out(P, i, last)
            best = 0.0
            best_q = -1
            best_rev = False
            for q in range(max(s - 1, 0), e):
                if i - 1 <= q <= last:
                    continue
                evals += 1
                for r in range(2 if can_rev else 1):
                    delta = _chain_in(P, i, last, q, r == 1) - out_gain
                    if delta < best - 1e-9:
                        best = delta
                        best_q = q
                        best_rev = r == 1
            if best_q >= 0:
                _move_chain(P, seq, flip, fixed, pos, i, last, best_q, best_rev, tmpP, tmp_seq, tmp_flip, tmp_fixed)
                improved = True
            i += 1
            if evals > budget:
                return improved, evals
    return improved, evals


@njit(cache=True, nogil=True)
def _neighbours(A, B, s, e, K):
    """For each end of the strokes s..e-1, the K nearest ends of other strokes there (ids 2·row + side; -1 pads).

    Row r of the result is end id 2·(s + r // 2) + r % 2.
    """
    n = e - s
    nb = np.full((2 * n, K), -1, np.int64)
    bd = np.empty(K, np.float64)
    for r in range(s, e):
        for side in range(2):
            px = B[r, 0] if side else A[r, 0]
            py = B[r, 1] if side else A[r, 1]
            bd[:] = 1e300
            row = nb[2 * (r - s) + side]
            for t in range(s, e):
                if t == r:
                    continue
                for side2 in range(2):
                    qx = B[t, 0] if side2 else A[t, 0]
                    qy = B[t, 1] if side2 else A[t, 1]
                    d = (px - qx) * (px - qx) + (py - qy) * (py - qy)
                    if d < bd[K - 1]:
                        k = K - 1
                        while k > 0 and bd[k - 1] > d:
                            bd[k] = bd[k - 1]
                            row[k] = row[k - 1]
                            k -= 1
                        bd[k] = d
                        row[k] = 2 * t + side2
    return nb


@njit(cache=True, nogil=True)
def _end_id(seq, flip, k, end):
    """Id of the end (``end`` True) or start of the stroke at position k."""
    return 2 * seq[k] + (1 if flip[k] != end else 0)


@njit(cache=True, nogil=True)
def _near_pass(P, seq, flip, fixed, pos, nb, s, e, tmp):
    """2-opt and Or-opt moves that join a stroke end to one of its nearest ends (neighbour lists).

    For big zones, where trying every pair is too slow. Returns (improved, evaluations).
    """
    m = len(seq)
    improved = False
    evals = 0
    K = nb.shape[1]
    tmpP, tmp_seq, tmp_flip, tmp_fixed = tmp
    for i in range(max(s, 1), e):
        # 2-opt joining the end before position i to a near end further on: reverse i..j
        a = _end_id(seq, flip, i - 1, True) if i - 1 >= s else -1
        if a >= 0:
            for c in nb[2 * (a // 2 - s) + a % 2]:
                if c < 0:
                    break
                j = pos[c // 2]
                if j < i or j >= e or c != _end_id(seq, flip, j, True) or _any_fixed(fixed, i, j):
                    continue
                evals += 1
                if _reversal_shortens(P, i, j, m):
                    _reverse(P, seq, flip, fixed, i, j)
                    _swap_ends(P, flip, i, j)
                    for k in range(i, j + 1):
                        pos[seq[k]] = k
                    improved = True
                    break
        # 2-opt joining the start at position i to a near start before it: reverse j..i-1
        a = _end_id(seq, flip, i, False)
        for c in nb[2 * (a // 2 - s) + a % 2]:
            if c < 0:
                break
            j = pos[c // 2]
            if j < max(s, 1) or j > i - 1 or c != _end_id(seq, flip, j, False) or _any_fixed(fixed, j, i - 1):
                continue
            evals += 1
            old = _gap(P, j - 1) + _gap(P, i - 1)
            new = _d(P[j - 1, 2], P[j - 1, 3], P[i - 1, 2], P[i - 1, 3]) + _d(P[j, 0], P[j, 1], P[i, 0], P[i, 1])
            if new < old - 1e-9:
                _reverse(P, seq, flip, fixed, j, i - 1)
                _swap_ends(P, flip, j, i - 1)
                for k in range(j, i):
                    pos[seq[k]] = k
                improved = True
                break
        # Or-opt: chains starting at i, put next to a near end
        for L in range(1, 4):
            last = i + L - 1
            if last >= e:
                break
            can_rev = not _any_fixed(fixed, i, last)
            out_gain = _chain_out(P, i, last)
            best = 0.0
            best_q = -1
            best_rev = False
            for which in range(2):
                a = _end_id(seq, flip, i, False) if which == 0 else _end_id(seq, flip, last, True)
                for c in nb[2 * (a // 2 - s) + a % 2]:
                    if c < 0:
                        break
                    k = pos[c // 2]
                    if k < s or k >= e or i <= k <= last:
                        continue
                    is_end = c == _end_id(seq, flip, k, True)
                    # chain start next to an end: after k, forwards; next to a start: before k, reversed;
                    # chain end next to a start: before k, forwards; next to an end: after k, reversed
                    q = k if is_end else k - 1
                    rev = (which == 0) != is_end
                    if (rev and not can_rev) or q < max(s - 1, 0) or i - 1 <= q <= last:
                        continue
                    evals += 1
                    delta = _chain_in(P, i, last, q, rev) - out_gain
                    if delta < best - 1e-9:
                        best = delta
                        best_q = q
                        best_rev = rev
            if best_q >= 0:
                _move_chain(P, seq, flip, fixed, pos, i, last, best_q, best_rev, tmpP, tmp_seq, tmp_flip, tmp_fixed)
                improved = True
                break
    return improved, evals


#: a zone with more strokes than this is searched through neighbour lists first (every pair after)
NEAR_FROM = 150
#: nearest stroke ends kept per end
NEAR_K = 10


@njit(cache=True, nogil=True)
def run_tour(A, B, block, flippable, budget):
    """A short open tour over one run's strokes, zone block by zone block.

    Parameters
    ----------
    A, B : (m, 2) float64, each stroke's start and end (wall mm), sorted by work zone
    block : (z + 1,) int64, zone z holds strokes block[z] .. block[z + 1] - 1, zones in visiting order
    flippable : (m,) bool, strokes that may be painted end to start
    budget : int, most move evaluations (the search stops there, keeping what it has)

    Returns
    -------
    seq : (m,) int64, the strokes (rows of A) in painting order
    flip : (m,) bool, per position: painted end to start
    """
    m = len(A)
    seq, flip = _nearest_neighbour(A, B, block, flippable)
    P = np.empty((m, 4), np.float64)
    fixed = np.empty(m, np.bool_)
    for k in range(m):
        q = seq[k]
        if flip[k]:
            P[k, 0], P[k, 1], P[k, 2], P[k, 3] = B[q, 0], B[q, 1], A[q, 0], A[q, 1]
        else:
            P[k, 0], P[k, 1], P[k, 2], P[k, 3] = A[q, 0], A[q, 1], B[q, 0], B[q, 1]
        fixed[k] = not flippable[q]
    pos = np.empty(m, np.int64)
    for k in range(m):
        pos[seq[k]] = k
    tmp = (np.empty_like(P), np.empty_like(seq), np.empty_like(flip), np.empty_like(fixed))
    spent = 0
    for z in range(len(block) - 1):
        s, e = block[z], block[z + 1]
        if e - s > NEAR_FROM:
            nb = _neighbours(A, B, s, e, min(NEAR_K, 2 * (e - s) - 2))
            while spent < budget:
                a, ev = _near_pass(P, seq, flip, fixed, pos, nb, s, e, tmp)
                spent += ev
                if not a:
                    break
            continue  # trying every pair of a big zone costs far more than it saves
        while spent < budget:
            a, ev = _two_opt(P, seq, flip, fixed, s, e, budget - spent)
            spent += ev
            for k in range(s, e):
                pos[seq[k]] = k
            b, ev = _or_opt(P, seq, flip, fixed, pos, s, e, budget - spent, tmp)
            spent += ev
            if not (a or b):
                break
    return seq, flip
