"""Background planning: a small job-runner interface and an in-process implementation.

The web app only ever calls :class:`JobRunner` (``submit``, ``cancel``, ``shutdown``) and
reads state from the :class:`~layerplan.web.store.PlanStore`. The work itself is
:func:`run_plan`, a plain function of ``(data_dir, plan_id)`` that records its own
progress and outcome in the store, so a distributed queue (any system that can call a
Python function with two strings on a machine that sees the data directory) can replace
:class:`LocalProcessRunner` without touching the views.

:class:`LocalProcessRunner` runs each plan in its own worker process (so a crash or a
runaway plan never takes the server down, and memory is returned after each plan), at
most ``max_workers`` at a time; further plans wait in a first-in first-out queue.
"""

from __future__ import annotations

import abc
import collections
import dataclasses
import logging
import multiprocessing
import os
import shutil
import sys
import threading
import time
import traceback
from pathlib import Path
from typing import Any, Callable

from .store import WAITING_MESSAGE, WEB_KEY, PlanStore

log = logging.getLogger(__name__)

#: a plan interrupted by this many server stops is marked failed instead of re-queued
MAX_ATTEMPTS = 3
#: a plan running longer than this is stopped and marked failed, seconds (1 h)
DEFAULT_TIMEOUT_S = 3600.0
#: how often the dispatcher looks at its workers, seconds
POLL_S = 0.1
#: progress is written to the database at most this often, seconds (unless the stage changes)
PROGRESS_EVERY_S = 0.25
#: share of the bar given to planning; the rest is writing the files
PLANNING_SHARE = 0.95
#: modules the fork server imports once, so each worker starts warm (``warm`` also loads the compiled code:
#: about 1.3 s less per plan)
PRELOAD = ["layerplan.web.jobs", "layerplan.load", "layerplan.pipeline", "layerplan.export", "layerplan.web.warm"]


# ---------------------------------------------------------------------------- the interface
class JobRunner(abc.ABC):
    """What the web app needs from a job system.

    A runner is handed plan ids whose record is ``queued`` in the store; it must
    eventually run :func:`run_plan` for each (or leave the record ``queued`` for the
    next start). It never reports back directly: the store is the only channel.
    """

    @abc.abstractmethod
    def submit(self, plan_id: str) -> None:
        """Queue a plan for planning."""

    @abc.abstractmethod
    def cancel(self, plan_id: str) -> None:
        """Forget a queued plan or stop a running one (before it is deleted)."""

    @abc.abstractmethod
    def shutdown(self, *, wait: bool = False) -> None:
        """Stop. ``wait=False`` stops running plans at once (they stay ``running`` in the
        store and :func:`recover` picks them up on the next start); ``wait=True`` lets
        them finish first. Queued plans stay queued either way."""

    def running(self) -> list[str]:
        """Ids this runner is planning right now (for display and tests)."""
        return []


# ------------------------------------------------------------------------------- the work
def run_plan(data_dir: str, plan_id: str) -> None:
    """Plan one stored upload and write its outputs; record progress and the outcome.

    Runs in a worker. Any exception becomes state ``failed`` with a message; nothing
    is raised to the caller.
    """
    store = PlanStore(data_dir)
    if not store.mark_running(plan_id):
        return  # deleted (or taken by someone else) while it waited
    try:
        from layerplan.export import write_outputs
        from layerplan.load import load_image
        from layerplan.pipeline import make_plan

        record = store.get(plan_id)
        if record is None:
            return
        stored = dict(record.settings)
        options = dict((stored.pop(WEB_KEY, None) or {}).get("output") or {})
        settings = _with_inventory(settings_from_dict(stored), store.inventory_path(plan_id))
        image = load_image(store.upload_path(plan_id).read_bytes())
        report = _ProgressWriter(store, plan_id)
        report(0.0, "loading the photo")
        plan = make_plan(image, settings, progress=lambda f, m: report(PLANNING_SHARE * float(f), m))
        report(PLANNING_SHARE, "writing the plan files")
        if record.source_name and "source" not in plan.extra:  # a new plan, not a change to make_plan's
            plan = dataclasses.replace(plan, extra={**plan.extra, "source": {"image": record.source_name}})
        out = store.out_dir(plan_id)
        if out.exists():  # leftovers of an attempt a restart interrupted
            shutil.rmtree(out)
        write_outputs(plan, out, **options)
        store.mark_done(plan_id, f"plan ready: {len(plan.palette)} paints, {len(plan.layers)} layers, "
                                 f"{plan.stroke_count()} strokes")
    except BaseException as exc:  # noqa: BLE001 - the worker must always leave a verdict
        store.mark_failed(plan_id, describe_failure(exc))
        if not isinstance(exc, (ValueError, MemoryError)):
            traceback.print_exc(file=sys.stderr)
        if isinstance(exc, (KeyboardInterrupt, SystemExit)):
            raise


def describe_failure(exc: BaseException) -> str:
    """A message for the painter: the core's own words for bad input, a plain note otherwise."""
    if isinstance(exc, ValueError):
        return str(exc) or "the photo or settings were refused"
    if isinstance(exc, MemoryError):
        return "ran out of memory while planning: try a larger pixel size, fewer brushes or a smaller surface"
    if isinstance(exc, (KeyboardInterrupt, SystemExit)):
        return "planning was stopped"
    return f"internal error while planning ({type(exc).__name__}: {exc})"


class _ProgressWriter:
    """Progress callback that writes to the store, throttled, never going backwards."""

    def __init__(self, store: PlanStore, plan_id: str):
        self.store, self.plan_id = store, plan_id
        self.last_t, self.last_f, self.last_msg = 0.0, -1.0, None

    def __call__(self, fraction: float, message: str) -> None:
        now = time.monotonic()
        fraction = max(self.last_f, min(max(float(fraction), 0.0), 1.0))
        if message == self.last_msg and now - self.last_t < PROGRESS_EVERY_S:
            return
        self.store.set_progress(self.plan_id, fraction, message)
        self.last_t, self.last_f, self.last_msg = now, fraction, message


def settings_from_dict(d: dict[str, Any]):
    """Rebuild :class:`~layerplan.settings.Settings` from its ``to_dict()`` form (unknown keys go to ``extra``)."""
    from layerplan.settings import Settings

    names = {f.name for f in dataclasses.fields(Settings)} - {"extra"}
    known = {k: v for k, v in d.items() if k in names}
    if "brushes_mm" in known:
        known["brushes_mm"] = tuple(float(b) for b in known["brushes_mm"])
    extra = {k: v for k, v in d.items() if k not in names}
    return Settings(**known, extra=extra).validated()


def _with_inventory(settings, path: Path):
    """Hand the painter's own inventory (a TOML file in the plan folder) to the planner.

    The recipe stage takes it as the setting ``inventory`` (a path to the file); a build
    without that setting cannot honour the request, and says so rather than silently
    mixing from the default set.
    """
    if not path.is_file():
        return settings
    if "inventory" in {f.name for f in dataclasses.fields(settings)}:
        return dataclasses.replace(settings, inventory=str(path))
    raise ValueError("this layerplan cannot plan with a custom paint inventory yet; choose the default set")


# -------------------------------------------------------------------------- restart recovery
def recover(store: PlanStore, *, max_attempts: int = MAX_ATTEMPTS) -> list[str]:
    """Put the store right after a start; return the ids to (re)submit, oldest first.

    Plans left ``running`` by a stopped server are re-queued, unless they have already
    been interrupted ``max_attempts`` times, then they are marked failed with a message.
    ``done`` plans whose files went missing are marked failed. Nothing stays ``running``.
    """
    for plan_id in store.ids_in_state("running"):
        record = store.get(plan_id)
        if record is None:
            continue
        if record.attempts >= max_attempts:
            store.mark_failed(plan_id, f"planning was interrupted by a server stop {record.attempts} times; "
                                       "gave up. Submit the photo again, perhaps with a larger pixel size.")
        else:
            store.requeue(plan_id, f"re-queued after a server restart (attempt {record.attempts + 1} "
                                   f"of {max_attempts})")
    for plan_id in store.ids_in_state("done"):
        if not (store.out_dir(plan_id) / "plan.json").is_file():
            store.mark_failed(plan_id, "the plan's files are missing from the data directory",
                              from_states=("done",))
    return store.ids_in_state("queued")


# ------------------------------------------------------------------ in-process implementation
class LocalProcessRunner(JobRunner):
    """Run plans in worker processes on this machine, at most ``max_workers`` at once.

    Parameters
    ----------
    data_dir : path
        The store's data directory (each worker opens the store itself).
    max_workers : int
        Plans planned at the same time; the rest wait in a FIFO queue.
    timeout_s : float
        A plan running longer is stopped and marked failed.
    start_method : str
        :mod:`multiprocessing` start method. ``"forkserver"`` (default on POSIX) forks
        workers from a clean helper process that has the planner imported already, so
        workers start fast and never inherit the web server's threads.
    target : callable
        The work, ``target(data_dir, plan_id)``; :func:`run_plan` unless a test swaps it.
    """

    def __init__(self, data_dir: str | os.PathLike, *, max_workers: int = 1, timeout_s: float = DEFAULT_TIMEOUT_S,
                 start_method: str | None = None, target: Callable[[str, str], None] = run_plan):
        if not isinstance(max_workers, int) or max_workers < 1:
            raise ValueError(f"max_workers must be a whole number >= 1, got {max_workers!r}")
        if not timeout_s > 0:
            raise ValueError(f"timeout_s must be > 0, got {timeout_s!r}")
        if start_method is None:
            start_method = "forkserver" if "forkserver" in multiprocessing.get_all_start_methods() else "spawn"
        self._ctx = multiprocessing.get_context(start_method)
        if start_method == "forkserver":
            self._ctx.set_forkserver_preload(PRELOAD)
        self.data_dir = str(Path(data_dir))
        self.store = PlanStore(self.data_dir)
        self.max_workers = max_workers
        self.timeout_s = float(timeout_s)
        self._target = target
        self._queue: collections.deque[str] = collections.deque()
        self._running: dict[str, tuple[Any, float]] = {}
        self._cv = threading.Condition()
        self._stopping = False
        self._wait_on_stop = False
        self._thread = threading.Thread(target=self._loop, name="layerplan-dispatcher", daemon=True)
        self._thread.start()

    # ---------------------------------------------------------------- interface
    def submit(self, plan_id: str) -> None:
        with self._cv:
            if self._stopping:
                return  # stays queued in the store for the next start
            if plan_id not in self._queue and plan_id not in self._running:
                self._queue.append(plan_id)
            self._cv.notify_all()

    def cancel(self, plan_id: str) -> None:
        with self._cv:
            try:
                self._queue.remove(plan_id)
            except ValueError:
                pass
            entry = self._running.pop(plan_id, None)
        if entry is not None:
            _stop(entry[0])

    def running(self) -> list[str]:
        with self._cv:
            return list(self._running)

    def queued(self) -> list[str]:
        with self._cv:
            return list(self._queue)

    def shutdown(self, *, wait: bool = False) -> None:
        with self._cv:
            if self._stopping and not self._thread.is_alive():
                return
            self._stopping = True
            self._wait_on_stop = wait
            self._queue.clear()
            self._cv.notify_all()
        self._thread.join()
        with self._cv:
            workers = list(self._running.values())
            self._running.clear()
        for proc, _ in workers:
            _stop(proc)

    # ---------------------------------------------------------------- dispatcher
    def _loop(self) -> None:
        if self._ctx.get_start_method() == "forkserver":
            try:  # start the fork server now (it imports the planner), not on the first plan
                from multiprocessing import forkserver
                forkserver.ensure_running()
            except Exception:  # noqa: BLE001 - the first Process.start() will try again and report
                log.exception("could not start the fork server")
        while True:
            with self._cv:
                self._reap()
                if self._stopping and (not self._wait_on_stop or not self._running):
                    return
                while not self._stopping and self._queue and len(self._running) < self.max_workers:
                    plan_id = self._queue.popleft()
                    self.store.set_message(plan_id, "starting a planning process", state="queued",
                                           replacing=WAITING_MESSAGE)
                    try:
                        proc = self._ctx.Process(target=self._target, args=(self.data_dir, plan_id),
                                                 name=f"layerplan-plan-{plan_id}", daemon=True)
                        proc.start()
                    except Exception as exc:  # noqa: BLE001 - e.g. out of processes
                        log.exception("could not start a worker for %s", plan_id)
                        self.store.mark_failed(plan_id, f"could not start a planning process: {exc}")
                        continue
                    self._running[plan_id] = (proc, time.monotonic())
                self._cv.wait(timeout=POLL_S)

    def _reap(self) -> None:
        now = time.monotonic()
        for plan_id, (proc, started) in list(self._running.items()):
            if proc.exitcode is None and now - started > self.timeout_s:
                _stop(proc)
                del self._running[plan_id]
                self.store.mark_failed(plan_id, f"planning took longer than {self.timeout_s / 60:g} minutes "
                                                "and was stopped: try a larger pixel size or fewer brushes")
            elif proc.exitcode is not None:
                proc.join()
                del self._running[plan_id]
                # a worker that ended normally has already written done/failed; this only
                # catches one that died (killed, out of memory, crashed interpreter)
                self.store.mark_failed(plan_id, f"the planning process stopped unexpectedly "
                                                f"(exit code {proc.exitcode})")


def _stop(proc) -> None:
    if proc.exitcode is None:
        proc.terminate()
        proc.join(timeout=5)
        if proc.exitcode is None:
            proc.kill()
            proc.join(timeout=5)
