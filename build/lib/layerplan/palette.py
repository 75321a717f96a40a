"""Reduce the photo to a finite set of paints: k-means in CIELAB."""

from __future__ import annotations

import numpy as np
from sklearn.cluster import KMeans
from threadpoolctl import threadpool_limits

from .colour import lab_to_srgb, srgb_to_lab

#: pixels sampled for k-means (enough for stable centres, fast on any raster)
SAMPLE_PX = 20_000
#: k-means restarts (scikit-learn's n_init)
N_INIT = 4


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
    """The plan's paints: k-means in CIELAB over the photo's pixels.

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
