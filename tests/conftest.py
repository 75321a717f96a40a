"""Shared fixtures. Sections below are owned by the test modules that use them."""

from __future__ import annotations

import numpy as np
import pytest

# ---------------------------------------------------------------- synthetic images

QUADRANT_COLOURS = np.array(
    [[200, 40, 40], [40, 160, 60], [40, 70, 200], [240, 220, 90]], dtype=np.uint8
)


def quadrants(h: int = 60, w: int = 80) -> np.ndarray:
    """Four flat quadrants in four colours: a plan should reproduce it almost exactly."""
    img = np.empty((h, w, 3), dtype=np.uint8)
    img[: h // 2, : w // 2] = QUADRANT_COLOURS[0]
    img[: h // 2, w // 2 :] = QUADRANT_COLOURS[1]
    img[h // 2 :, : w // 2] = QUADRANT_COLOURS[2]
    img[h // 2 :, w // 2 :] = QUADRANT_COLOURS[3]
    return img


@pytest.fixture
def quadrant_image():
    return quadrants()
