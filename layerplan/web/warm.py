"""Imported once by the fork server that starts planning processes: load the planner's compiled code there.

Numba compiles the placer, the stroke stack and the exporters' loops on first use, or loads them from its
on-disk cache, in every new process (about 1.3 s per plan on the bench machine, about a minute on a fresh
install). Planning a tiny picture in the fork server does that once; each worker is forked from it with the
code already loaded.
"""

from __future__ import annotations

import logging

log = logging.getLogger(__name__)


def warm_up() -> None:
    """Plan and export a tiny picture: two layers, one of them wide enough for the coarse search grid."""
    import numpy as np

    from ..export import build_files
    from ..pipeline import make_plan
    from ..settings import Settings

    rng = np.random.default_rng(0)
    img = (rng.random((24, 36, 3)) * 255).astype(np.uint8)
    img[:12] = (200, 40, 40)
    plan = make_plan(img, Settings(wall_width_mm=360.0, wall_height_mm=240.0, paints=3, brushes_mm=(60.0, 20.0),
                                   mm_per_px=5.0))
    build_files(plan)


try:
    warm_up()
except Exception:  # noqa: BLE001 - a failure here must not stop the fork server; workers then load the code themselves
    log.exception("warming up the planner failed")
