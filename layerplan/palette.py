"""Reduce the photo to a finite set of paints.

Two ways, one entry each:

- :func:`palette_from_mixes` (the default plan): the K paints are chosen directly among the
  colours the painter's inventory can mix (the recipe table's predictions), so that the photo's
  CIEDE2000 floor — every pixel its nearest paint — is as low as the mixes allow. It is a
  k-medoids problem over a weighted pixel sample: greedy seeding, then swaps (Kaufman &
  Rousseeuw's PAM), then each paint refined among all the mixes near it, with every distance a
  CIEDE2000 and no two paints closer than :data:`MIN_SEPARATION_DE`.
- :func:`palette_from_image` (``--free-palette``): k-means in CIELAB, colours as they fall.
"""

from __future__ import annotations

import numpy as np

from .colour import lab_to_srgb, srgb_to_lab

#: pixels sampled for k-means (enough for stable centres, fast on any raster)
SAMPLE_PX = 20_000
#: k-means restarts (scikit-learn's n_init)
N_INIT = 4

#: no two paints of a mixable palette closer than this ΔE00: a few just-noticeable differences
#: (about 1 ΔE00, common practice), so two tins never hold what a painter sees as one colour
MIN_SEPARATION_DE = 3.0
#: share of the sample's weight given by local contrast rather than by area. A small distinct
#: feature (a door, an eye) has much edge for its area, so this keeps it a paint of its own
#: where area alone would merge it into a neighbour; the rest (by area) keeps the floor low
EDGE_SHARE = 0.25
#: sample pixels are pooled in CIELAB cubes of this side (ΔE76) before the search: a bin's
#: spread stays near the separation between paints, and the search gets ~10× fewer rows
BIN_LAB = 3.0
#: candidate mixes for the global search: one (the simplest mix) per CIELAB cube of this side;
#: the refinement afterwards looks at the mixes within :data:`REFINE_LAB` of each paint
CANDIDATE_LAB = 6.0
REFINE_LAB = 4.5
#: ... one mix per CIELAB cube of this side among those. Measured on the bench photos: finer
#: grids (candidates 4.5, bins 2.5, refinement 0.5) lower the floor by 0.02–0.08 ΔE00 for 3× the time
REFINE_STEP = 1.5
#: swap passes at most (each tries every paint against every candidate; it stops when none helps)
MAX_SWAP_PASSES = 6


def sample_pixels(lab: np.ndarray, *, seed: int, n: int = SAMPLE_PX) -> np.ndarray:
    """A seeded random sample of rows of an (N, 3) pixel array (all rows if N <= n)."""
    if len(lab) <= n:
        return lab
    rng = np.random.default_rng(seed)
    pick = np.sort(rng.choice(len(lab), size=n, replace=False))
    return lab[pick]


def kmeans_lab(sample: np.ndarray, k: int, *, seed: int) -> np.ndarray:
    """k-means centres of a CIELAB sample.

    Parameters
    ----------
    sample : (N, 3) float array of CIELAB
    k : int
    seed : int

    Returns
    -------
    centres : (k', 3) float array, k' <= k (fewer when the sample has fewer distinct colours)

    References
    ----------
    S. Lloyd, "Least squares quantization in PCM", IEEE Trans. Inf. Theory 28(2), 1982;
    D. Arthur, S. Vassilvitskii, "k-means++: the advantages of careful seeding", SODA 2007.
    """
    distinct = np.unique(np.round(sample, 6), axis=0)
    if len(distinct) <= k:
        return distinct.astype(float)
    # imported here: scikit-learn takes about a second to import, and only this path uses it
    from sklearn.cluster import KMeans
    from threadpoolctl import threadpool_limits

    km = KMeans(n_clusters=k, n_init=N_INIT, random_state=seed)
    # one thread: on a 20 000-pixel sample the thread start-up costs more than it saves,
    # and the result is the same either way
    with threadpool_limits(1):
        km.fit(sample)
    return km.cluster_centers_.astype(float)


def lightest_first(rgb: np.ndarray, lab: np.ndarray):
    """Palette colours ordered lightest first (then by a*, b*), as palette ids run P1 = lightest."""
    order = np.lexsort((lab[:, 2], lab[:, 1], -lab[:, 0]))
    return rgb[order], lab[order], order


def palette_from_image(target_lab: np.ndarray, inside: np.ndarray, k: int, *, seed: int):
    """The plan's paints with ``--free-palette``: k-means in CIELAB over the photo's pixels.

    Parameters
    ----------
    target_lab : (H, W, 3) float array, the photo on the raster in CIELAB
    inside : (H, W) bool array, pixels that belong to the photo
    k : int
        Number of paints wanted.
    seed : int

    Returns
    -------
    rgb : (k', 3) uint8 array
        Paint colours, lightest first, duplicates (after rounding to 8-bit sRGB) removed.
    lab : (k', 3) float array
        CIELAB of exactly those sRGB colours.

    References
    ----------
    Lloyd (1982); Arthur & Vassilvitskii (2007); CIE 15:2004 for CIELAB.
    """
    lab = target_lab[inside].reshape(-1, 3)
    centres = kmeans_lab(sample_pixels(lab, seed=seed), k, seed=seed)
    rgb = np.unique(lab_to_srgb(centres), axis=0)
    rgb, lab, _ = lightest_first(rgb, srgb_to_lab(rgb))
    return rgb, lab


# ------------------------------------------------------------------ mixable palette
def weighted_sample(target_lab: np.ndarray, inside: np.ndarray, *, seed: int, n: int = SAMPLE_PX,
                    edge_share: float = EDGE_SHARE):
    """A seeded pixel sample of the photo, pooled into CIELAB bins, each with its weight.

    A pixel's weight is ``(1 − edge_share)`` shared by area plus ``edge_share`` shared by its
    local contrast (the CIELAB distance across its neighbours, ΔE76), so the weights sum to 1.

    Parameters
    ----------
    target_lab : (H, W, 3) float array
    inside : (H, W) bool array
    seed : int
    n : int
        Pixels sampled (all of them when the photo has fewer).
    edge_share : float
        In [0, 1].

    Returns
    -------
    lab : (B, 3) float64 array
        Weighted mean CIELAB of each bin.
    weight : (B,) float64 array
        Summing to 1.
    """
    h, w, _ = target_lab.shape
    ys, xs = np.nonzero(inside)
    if len(ys) > n:
        rng = np.random.default_rng(seed)
        pick = np.sort(rng.choice(len(ys), size=n, replace=False))
        ys, xs = ys[pick], xs[pick]
    lab = np.asarray(target_lab[ys, xs], dtype=np.float64)
    # central differences, clamped at the border: contrast of the pixel's own neighbourhood
    dx = target_lab[ys, np.minimum(xs + 1, w - 1)] - target_lab[ys, np.maximum(xs - 1, 0)]
    dy = target_lab[np.minimum(ys + 1, h - 1), xs] - target_lab[np.maximum(ys - 1, 0), xs]
    contrast = np.sqrt((dx.astype(np.float64) ** 2).sum(axis=1) + (dy.astype(np.float64) ** 2).sum(axis=1))
    weight = np.full(len(lab), (1.0 - edge_share) / len(lab))
    total = contrast.sum()
    weight += edge_share * (contrast / total if total > 0 else 1.0 / len(lab))
    keys = np.floor(lab / BIN_LAB).astype(np.int64)
    _, bin_of = np.unique(keys, axis=0, return_inverse=True)
    bin_of = bin_of.ravel()
    wsum = np.bincount(bin_of, weights=weight)
    mean = np.stack([np.bincount(bin_of, weights=weight * lab[:, c]) for c in range(3)], axis=1) / wsum[:, None]
    return mean, wsum / wsum.sum()


def delta_e00_matrix(lab_a, lab_b) -> np.ndarray:
    """CIEDE2000 (kL = kC = kH = 1) between every colour of ``lab_a`` and every colour of ``lab_b``.

    Parameters
    ----------
    lab_a : (A, 3) float array
    lab_b : (B, 3) float array

    Returns
    -------
    de : (A, B) float32 array

    References
    ----------
    Sharma, Wu & Dalal (2005).
    """
    from ._palette_kernels import de00_to_row

    a = np.asarray(lab_a, dtype=np.float64).reshape(-1, 3)
    b = np.ascontiguousarray(lab_b, dtype=np.float64).reshape(-1, 3)
    out = np.empty((len(a), len(b)), dtype=np.float32)
    row = np.empty(len(b))
    for i in range(len(a)):
        de00_to_row(a[i, 0], a[i, 1], a[i, 2], b, row)
        out[i] = row
    return out


def _thin(lab: np.ndarray, side: float, rank: np.ndarray) -> np.ndarray:
    """Indices of one colour per CIELAB cube of ``side`` (the lowest ``rank`` in each)."""
    keys = np.floor(lab / side).astype(np.int64)
    order = np.lexsort((rank, keys[:, 2], keys[:, 1], keys[:, 0]))
    k = keys[order]
    first = np.ones(len(order), dtype=bool)
    first[1:] = np.any(k[1:] != k[:-1], axis=1)
    return np.sort(order[first])


def _cost(dist: np.ndarray, weight: np.ndarray, chosen) -> float:
    return float(weight @ dist[:, chosen].min(axis=1))


class _TooClose:
    """Per candidate, which candidates lie within the separation of it (rows made on demand)."""

    def __init__(self, lab: np.ndarray, min_de: float):
        self.lab, self.min_de, self.rows = lab, min_de, {}

    def __getitem__(self, chosen) -> np.ndarray:
        for c in chosen:
            if c not in self.rows:
                self.rows[c] = delta_e00_matrix(self.lab[c : c + 1], self.lab)[0] < self.min_de
        return np.array([self.rows[c] for c in chosen]).reshape(len(chosen), len(self.lab))


def _capped(dist, weight, base):
    from ._palette_kernels import capped_costs

    out = np.empty(dist.shape[1])
    capped_costs(dist, weight, np.minimum(base, np.float32(1e30)).astype(np.float32), out)
    return out


def _medoids(dist: np.ndarray, weight: np.ndarray, sep: _TooClose, k: int, start=None) -> list[int]:
    """Greedy seeding then best-improvement swaps, on a (bins × candidates) ΔE00 matrix.

    ``sep[chosen]`` (len(chosen) × candidates, bool) is True where a candidate is too close to
    a chosen paint; a paint is only added or swapped in where it is far enough from the others.
    Greedy stops early when no candidate lowers the cost (a picture of fewer colours).
    """
    m = dist.shape[1]
    chosen: list[int] = list(start or [])
    best = dist[:, chosen].min(axis=1) if chosen else np.full(dist.shape[0], np.inf, dtype=dist.dtype)
    while len(chosen) < k:
        allowed = ~sep[chosen].any(axis=0) if chosen else np.ones(m, dtype=bool)
        if not allowed.any():
            break
        gains = _capped(dist, weight, best)
        gains = np.where(allowed, gains, np.inf)
        c = int(np.argmin(gains))
        if chosen and gains[c] >= float(weight @ best) - 1e-9:
            break
        chosen.append(c)
        best = np.minimum(best, dist[:, c])
    for _ in range(MAX_SWAP_PASSES):
        current = _cost(dist, weight, chosen)
        move = None
        for j in range(len(chosen)):
            others = chosen[:j] + chosen[j + 1:]
            base = dist[:, others].min(axis=1) if others else np.full(dist.shape[0], np.inf, dtype=dist.dtype)
            costs = _capped(dist, weight, base)
            allowed = ~sep[others].any(axis=0) if others else np.ones(m, dtype=bool)
            costs = np.where(allowed, costs, np.inf)
            c = int(np.argmin(costs))
            if costs[c] < current - 1e-7 and (move is None or costs[c] < move[0]):
                move = (float(costs[c]), j, c)
        if move is None:
            break
        chosen[move[1]] = move[2]
    return chosen


def palette_from_mixes(target_lab: np.ndarray, inside: np.ndarray, k: int, mixes_lab: np.ndarray, *,
                       seed: int, rank=None, min_separation_de: float = MIN_SEPARATION_DE,
                       edge_share: float = EDGE_SHARE) -> np.ndarray:
    """The plan's paints chosen among the colours the inventory can mix.

    Minimises the photo's CIEDE2000 floor (each pixel its nearest paint) over a weighted pixel
    sample (:func:`weighted_sample`), choosing every paint from ``mixes_lab``: greedy seeding,
    best-improvement swaps over a thinned candidate set (one mix per CIELAB cube of
    :data:`CANDIDATE_LAB`, the simplest by ``rank``), then the same swaps over the mixes within
    :data:`REFINE_LAB` of each paint (one per cube of :data:`REFINE_STEP`). No two paints end up
    closer than ``min_separation_de``.

    Parameters
    ----------
    target_lab : (H, W, 3) float array, the photo on the raster in CIELAB
    inside : (H, W) bool array, pixels that belong to the photo
    k : int
        Number of paints wanted (fewer come back when fewer lower the floor).
    mixes_lab : (M, 3) float array
        CIELAB of every mixable colour (as it will be shown: the CIELAB of its 8-bit sRGB).
    seed : int, keyword-only
    rank : (M,) array, optional, keyword-only
        Preference among near-equal mixes (lower first: fewer paints, fewer parts).
    min_separation_de : float, keyword-only
    edge_share : float, keyword-only
        See :func:`weighted_sample`.

    Returns
    -------
    rows : (k',) int array
        Indices into ``mixes_lab`` of the chosen paints, in no particular order.

    References
    ----------
    L. Kaufman, P. J. Rousseeuw, "Partitioning Around Medoids (Program PAM)", in Finding
    Groups in Data, Wiley, 1990, ch. 2; Sharma, Wu & Dalal (2005) for CIEDE2000.
    """
    mixes_lab = np.ascontiguousarray(mixes_lab, dtype=np.float64)
    rank = np.zeros(len(mixes_lab)) if rank is None else np.asarray(rank, dtype=np.float64)
    bins, weight = weighted_sample(target_lab, inside, seed=seed, edge_share=edge_share)
    cand = _thin(mixes_lab, CANDIDATE_LAB, rank)
    dist = delta_e00_matrix(bins, mixes_lab[cand])
    sep = _TooClose(mixes_lab[cand], min_separation_de)
    chosen = [int(cand[i]) for i in _medoids(dist, weight, sep, k)]
    # refinement: the chosen paints and every mix near one of them, searched the same way
    near = np.zeros(len(mixes_lab), dtype=bool)
    for c in chosen:
        near |= np.sum((mixes_lab - mixes_lab[c]) ** 2, axis=1) <= REFINE_LAB**2
    local = np.flatnonzero(near)
    local = local[_thin(mixes_lab[local], REFINE_STEP, rank[local])]
    local = np.union1d(local, chosen)
    dist = delta_e00_matrix(bins, mixes_lab[local])
    sep = _TooClose(mixes_lab[local], min_separation_de)
    start = [int(np.searchsorted(local, c)) for c in chosen]
    refined = _medoids(dist, weight, sep, len(start), start=start)
    return local[np.array(refined, dtype=np.int64)]
