"""Colour conversions and colour difference.

sRGB (IEC 61966-2-1) to CIELAB under D65 with the CIE 1931 2° observer, and the
CIEDE2000 colour difference. scikit-image's implementations are used; this module
fixes the conventions (uint8 input, float Lab output, chunked evaluation so large
rasters stay within memory).

References
----------
.. [1] IEC 61966-2-1:1999, Multimedia systems and equipment - Colour measurement
   and management - Part 2-1: Default RGB colour space - sRGB.
.. [2] CIE 15:2004, Colorimetry, 3rd ed.
.. [3] G. Sharma, W. Wu, E. N. Dalal, "The CIEDE2000 color-difference formula:
   implementation notes, supplementary test data, and mathematical observations",
   Color Res. Appl. 30(1):21-30, 2005.
"""

from __future__ import annotations

import numpy as np
from skimage import color as _skcolor

#: rows of pixels per chunk when comparing a raster with a palette colour
_CHUNK_PX = 1 << 18


def srgb_to_lab(rgb) -> np.ndarray:
    """sRGB to CIELAB (D65, 2°).

    Parameters
    ----------
    rgb : (..., 3) uint8 array, or float array in [0, 1]

    Returns
    -------
    lab : (..., 3) float64 array

    References
    ----------
    IEC 61966-2-1:1999; CIE 15:2004.
    """
    a = np.asarray(rgb)
    if a.dtype == np.uint8:
        a = a.astype(np.float64) / 255.0
    return _skcolor.rgb2lab(a.reshape(-1, 1, 3), illuminant="D65", observer="2").reshape(a.shape)


def lab_to_srgb(lab) -> np.ndarray:
    """CIELAB (D65, 2°) to sRGB uint8, clipping out-of-gamut colours.

    Parameters
    ----------
    lab : (..., 3) float array

    Returns
    -------
    rgb : (..., 3) uint8 array
    """
    a = np.asarray(lab, dtype=np.float64)
    rgb = _skcolor.lab2rgb(a.reshape(-1, 1, 3), illuminant="D65", observer="2").reshape(a.shape)
    return np.clip(np.round(rgb * 255.0), 0, 255).astype(np.uint8)


def delta_e00(lab1, lab2) -> np.ndarray:
    """CIEDE2000 colour difference (kL = kC = kH = 1).

    Parameters
    ----------
    lab1, lab2 : (..., 3) float arrays, broadcastable

    Returns
    -------
    de : (...) float64 array

    References
    ----------
    Sharma, Wu & Dalal (2005).
    """
    a, b = np.broadcast_arrays(np.asarray(lab1, float), np.asarray(lab2, float))
    return _skcolor.deltaE_ciede2000(a, b, channel_axis=-1)


def error_planes(target_lab: np.ndarray, palette_lab: np.ndarray) -> np.ndarray:
    """CIEDE2000 from every palette colour to every target pixel.

    Parameters
    ----------
    target_lab : (H, W, 3) float array
    palette_lab : (K, 3) float array

    Returns
    -------
    planes : (H, W, K) float32 array, ``planes[i, j, k]`` = ΔE00(paint k, pixel (i, j))

    References
    ----------
    Sharma, Wu & Dalal (2005).
    """
    h, w, _ = target_lab.shape
    flat = target_lab.reshape(-1, 3)
    out = np.empty((flat.shape[0], len(palette_lab)), dtype=np.float32)
    for k, lab in enumerate(np.asarray(palette_lab, float)):
        for start in range(0, flat.shape[0], _CHUNK_PX):
            part = flat[start : start + _CHUNK_PX]
            out[start : start + _CHUNK_PX, k] = delta_e00(part, lab[None, :])
    return out.reshape(h, w, len(palette_lab))


def mean_delta_e00(rgb_a: np.ndarray, rgb_b: np.ndarray) -> float:
    """Mean CIEDE2000 between two (H, W, 3) uint8 images of the same size."""
    if rgb_a.shape != rgb_b.shape:
        raise ValueError(f"images differ in size: {rgb_a.shape} vs {rgb_b.shape}")
    la = srgb_to_lab(rgb_a).reshape(-1, 3)
    lb = srgb_to_lab(rgb_b).reshape(-1, 3)
    total = 0.0
    for start in range(0, la.shape[0], _CHUNK_PX):
        total += float(np.sum(delta_e00(la[start : start + _CHUNK_PX], lb[start : start + _CHUNK_PX])))
    return total / max(1, la.shape[0])
