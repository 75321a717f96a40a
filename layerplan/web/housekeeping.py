"""Keeping a shared server's data directory in order: old plans expire, kept photos are swept.

:func:`sweep` is one pass; :class:`Housekeeper` runs it at start and then every
``every_s`` seconds in a background thread. A pass that fails (a locked database, a full
disk) is logged in one line and tried again on the next turn.
"""

from __future__ import annotations

import logging
import threading
import time

from .store import PlanStore
from .uploads import UploadStash

log = logging.getLogger(__name__)

#: finished plans (done or failed) are deleted this many days after they finished (0: kept for good)
RETENTION_DAYS = 30.0
#: how often the housekeeper looks, seconds (10 minutes)
EVERY_S = 600.0
_DAY_S = 86400.0


def sweep(store: PlanStore, uploads: UploadStash | None, *, retention_days: float,
          now: float | None = None) -> list[str]:
    """Delete finished plans older than ``retention_days`` and expired kept photos; return the plans deleted.

    Plans still queued or running are never touched.
    """
    now = time.time() if now is None else now
    gone = []
    if retention_days > 0:
        for plan_id in store.finished_before(now - retention_days * _DAY_S):
            if store.delete(plan_id):
                gone.append(plan_id)
    if uploads is not None:
        uploads.sweep(now)
    if gone:
        log.info("housekeeping: deleted %d plans finished more than %g days ago", len(gone), retention_days)
    return gone


class Housekeeper:
    """Run :func:`sweep` now and every ``every_s`` seconds until :meth:`stop`."""

    def __init__(self, store: PlanStore, uploads: UploadStash | None, *, retention_days: float = RETENTION_DAYS,
                 every_s: float = EVERY_S, on_sweep=None):
        if not retention_days >= 0:
            raise ValueError(f"retention_days must be >= 0, got {retention_days!r}")
        if not every_s > 0:
            raise ValueError(f"every_s must be > 0, got {every_s!r}")
        self.store, self.uploads = store, uploads
        self.retention_days, self.every_s = float(retention_days), float(every_s)
        self.on_sweep = on_sweep
        self._stop = threading.Event()
        self._thread = threading.Thread(target=self._loop, name="layerplan-housekeeper", daemon=True)
        self._thread.start()

    def _loop(self) -> None:
        while True:
            try:
                if sweep(self.store, self.uploads, retention_days=self.retention_days) and self.on_sweep:
                    self.on_sweep()
            except Exception as exc:  # noqa: BLE001 - tried again next turn
                log.warning("housekeeping: %s: %s; trying again in %g s", type(exc).__name__, exc, self.every_s)
            if self._stop.wait(self.every_s):
                return

    def stop(self) -> None:
        self._stop.set()
        self._thread.join(timeout=10)
