"""Fit the photo to the wall and resample it to the working raster."""

from __future__ import annotations

import numpy as np
from PIL import Image

from .settings import FITS


def fit_to_wall(image: np.ndarray, width_px: int, height_px: int, *, fit: str = "cover"):
    """Scale a photo onto the working raster of the wall.

    Parameters
    ----------
    image : (h, w, 3) uint8 array
    width_px, height_px : int
        Working raster size.
    fit : {"cover", "contain"}
        ``cover`` scales the photo so it covers the whole wall and crops the overhang
        equally from both sides; ``contain`` scales it to fit inside the wall, centred,
        leaving bands that the ground paint fills.

    Returns
    -------
    target : (height_px, width_px, 3) uint8 array
        The photo on the raster (bands, if any, are black until the ground is known).
    inside : (height_px, width_px) bool array
        True where the photo lies, False in ``contain`` bands.

    Notes
    -----
    Resampling is Lanczos (Pillow), which low-pass filters when it shrinks, so fine
    detail below one working pixel averages out instead of aliasing.

    References
    ----------
    C. E. Duchon, "Lanczos filtering in one and two dimensions", J. Appl. Meteor.
    18:1016-1022, 1979.
    """
    if fit not in FITS:
        raise ValueError(f"fit must be one of {', '.join(FITS)}, got {fit!r}")
    h, w = image.shape[:2]
    pil = Image.fromarray(np.ascontiguousarray(image, dtype=np.uint8), "RGB")
    inside = np.ones((height_px, width_px), dtype=bool)
    if fit == "cover":
        scale = max(width_px / w, height_px / h)
        box_w, box_h = width_px / scale, height_px / scale
        # the crop box, kept inside the photo: along the side that fits exactly, rounding can put it a hair outside
        x0, y0 = max(0.0, (w - box_w) / 2.0), max(0.0, (h - box_h) / 2.0)
        box = (x0, y0, min(float(w), x0 + box_w), min(float(h), y0 + box_h))
        out = pil.resize((width_px, height_px), Image.Resampling.LANCZOS, box=box)
        return np.asarray(out, dtype=np.uint8).copy(), inside
    scale = min(width_px / w, height_px / h)
    new_w = max(1, min(width_px, int(round(w * scale))))
    new_h = max(1, min(height_px, int(round(h * scale))))
    small = np.asarray(pil.resize((new_w, new_h), Image.Resampling.LANCZOS), dtype=np.uint8)
    target = np.zeros((height_px, width_px, 3), dtype=np.uint8)
    inside[:] = False
    x0, y0 = (width_px - new_w) // 2, (height_px - new_h) // 2
    target[y0 : y0 + new_h, x0 : x0 + new_w] = small
    inside[y0 : y0 + new_h, x0 : x0 + new_w] = True
    return target, inside
