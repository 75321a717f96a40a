"""Load numba's compiled code for every stage of planning and export, once per process.

Numba compiles the placer, the stroke stack, the palette search and the exporters' loops on first use, or
loads them from its on-disk cache, in every new process: about 1.3 s per process on the bench machine, but
two minutes or more on a fresh install, when nothing is cached yet. So compiling is a step of installing:
``layerplan warm`` (:func:`main`) runs :func:`warm_up` once and fills the cache, the README's first command
after ``pip install``, and from then on the first plan starts as fast as the next. The web app's fork server
calls :func:`warm_up` too (:mod:`layerplan.web.warm`), so ``serve`` compiles before its first job if nobody
ran ``layerplan warm``, and every planning process forked from it starts with the code loaded; the bench calls
it before timing anything.

Why not compile less: the cache holds over sixty compiled functions in their specialisations; compiling
them lazily per brush size would still compile all of them for the first plan (every plan uses every stage).
"""

from __future__ import annotations

import numpy as np


def warm_up():
    """Plan and export a tiny picture: two layers, one of them wide enough for the coarse search grid.

    The clean-up's pair search runs only when strokes overlap, so it is loaded explicitly.

    Returns
    -------
    image : (48, 72, 3) uint8 array
    plan : layerplan.plan.Plan
        Its plan, on a raster of the image's size (72 × 48 px at 5 mm per pixel; the 60 mm brush is 12 px).
    """
    from .export import build_files
    from .pipeline import make_plan
    from ._placer_kernels import conflicts
    from .settings import Settings

    rng = np.random.default_rng(0)
    img = (rng.random((48, 72, 3)) * 255).astype(np.uint8)
    img[:24] = (200, 40, 40)
    plan = make_plan(img, Settings(wall_width_mm=360.0, wall_height_mm=240.0, paints=3, brushes_mm=(60.0, 20.0),
                                   mm_per_px=5.0))
    build_files(plan)
    conflicts(np.full((2, 2), -1, np.int64), np.full((2, 2), -1, np.int64), np.zeros(1, np.bool_))
    return img, plan


def main() -> int:
    """``layerplan warm``: compile (or load) everything once and say how long it took."""
    import time

    t0 = time.perf_counter()
    warm_up()
    print(f"layerplan is ready: its compiled code is cached ({time.perf_counter() - t0:.0f} s)")
    return 0
