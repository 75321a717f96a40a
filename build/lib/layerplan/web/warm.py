"""Imported once by the fork server that starts planning processes: load the planner's compiled code there.

Each worker is then forked with the code already loaded (:func:`layerplan.warm.warm_up`), about 1.3 s sooner
than loading it itself.
"""

from __future__ import annotations

import logging

from ..warm import warm_up

log = logging.getLogger(__name__)

try:
    warm_up()
except Exception:  # noqa: BLE001 - a failure here must not stop the fork server; workers then load the code themselves
    log.exception("warming up the planner failed")
