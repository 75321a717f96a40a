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
            old = _gap(P, i - 1)
            new = _d(P[i - 1, 2], P[i - 1, 3], P[j, 2], P[j, 3])
            if j + 1 < m:
                old += _gap(P, j)
                new += _d(P[i, 0], P[i, 1], P[j + 1, 0], P[j + 1, 1])
            if new < old - 1e-9:
                _reverse(P, seq, flip, fixed, i, j)
                _swap_ends(P, flip, i, j)
                improved = True
        if evals > budget:
            break
    return improved, evals


@njit(cache=True, nogil=True)
def _or_opt(P, seq, flip, fixed, s, e, budget):
    """One pass of Or-opt moves inside the block [s, e): a chain of 1–3 strokes moved elsewhere, maybe reversed.

    Returns (improved, evaluations).
    """
    m = len(seq)
    improved = False
    evals = 0
    tmpP = np.empty_like(P)
    tmp_seq = np.empty_like(seq)
    tmp_flip = np.empty_like(flip)
    tmp_fixed = np.empty_like(fixed)
    for L in range(1, 4):
        i = max(s, 1)
        while i + L <= e:
            c = i + L  # first position after the chain
            last = c - 1
            can_rev = True
            for k in range(i, c):
                if fixed[k]:
                    can_rev = False
            # what taking the chain out saves
            out_gain = _gap(P, i - 1)
            if c < m:
                out_gain += _gap(P, last) - _d(P[i - 1, 2], P[i - 1, 3], P[c, 0], P[c, 1])
            best = 0.0
            best_q = -1
            best_rev = False
            for q in range(max(s - 1, 0), e):
                if i - 1 <= q <= last:
                    continue
                evals += 1
                # put the chain between q and q + 1 (q + 1 is never in the chain)
                old_q = _gap(P, q) if q + 1 < m else 0.0
                for r in range(2 if can_rev else 1):
                    if r == 0:
                        ax, ay, bx, by = P[i, 0], P[i, 1], P[last, 2], P[last, 3]
                    else:
                        ax, ay, bx, by = P[last, 2], P[last, 3], P[i, 0], P[i, 1]
                    add = _d(P[q, 2], P[q, 3], ax, ay)
                    if q + 1 < m:
                        add += _d(bx, by, P[q + 1, 0], P[q + 1, 1])
                    delta = add - old_q - out_gain
                    if delta < best - 1e-9:
                        best = delta
                        best_q = q
                        best_rev = r == 1
            if best_q >= 0:
                # rebuild positions [lo, hi] with the chain moved
                lo = min(i, best_q + 1)
                hi = max(last, best_q)
                t = 0
                if best_q < i:
                    order_a_start, order_a_end = i, c          # chain first
                    order_b_start, order_b_end = best_q + 1, i  # then what was between
                else:
                    order_a_start, order_a_end = c, best_q + 1
                    order_b_start, order_b_end = i, c
                for part in range(2):
                    chain = (part == 0) == (best_q < i)
                    a0 = order_a_start if part == 0 else order_b_start
                    a1 = order_a_end if part == 0 else order_b_end
                    if chain and best_rev:
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
                assert lo + t == hi + 1
                improved = True
            i += 1
            if evals > budget:
                return improved, evals
    return improved, evals


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
    spent = 0
    for z in range(len(block) - 1):
        s, e = block[z], block[z + 1]
        while spent < budget:
            a, ev = _two_opt(P, seq, flip, fixed, s, e, budget - spent)
            spent += ev
            b, ev = _or_opt(P, seq, flip, fixed, s, e, budget - spent)
            spent += ev
            if not (a or b):
                break
    return seq, flip
