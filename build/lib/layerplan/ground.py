"""Choose the ground: the flat first coat over the whole surface."""

from __future__ import annotations

import numpy as np


def choose_ground(planes: np.ndarray, inside: np.ndarray) -> int:
    """The palette paint that is the nearest colour over the largest area.

    Painting the commonest colour first leaves the least wall to cover with strokes.
    Ties go to the lower palette position (the lighter paint).

    Parameters
    ----------
    planes : (H, W, K) float array of ΔE00 from each paint to each pixel
    inside : (H, W) bool array, pixels of the photo (bands of a ``contain`` fit do not vote)

    Returns
    -------
    index : int, palette position of the ground paint
    """
    nearest = np.argmin(planes[inside], axis=1)
    counts = np.bincount(nearest, minlength=planes.shape[2])
    return int(np.argmax(counts))
