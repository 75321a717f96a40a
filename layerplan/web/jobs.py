"""Background planning: a small job-runner interface and an in-process implementation.

The web app only ever calls :class:`JobRunner` (``submit``, ``cancel``, ``shutdown``) and
reads state from the :class:`~layerplan.web.store.PlanStore`. The work itself is
:func:`run_plan`, a plain function of ``(data_dir, plan_id)`` that records its own
progress and outcome in the store, so a distributed queue (any system that can call a
Python function with two strings on a machine that sees the data directory) can replace
:class:`LocalProcessRunner` without touching the views.

:class:`LocalProcessRunner` runs each plan in its own worker process (so a crash or a
runaway plan never takes the server down, and memory is returned after each plan), at
most ``max_workers`` at a time; further plans wait, taken from each owner in turn. A
worker ends with its server (even after ``kill -9``), a worker that dies alone has its
plan tried again up to :data:`MAX_ATTEMPTS` times, and the dispatcher outlives a full
disk: what the store cannot take yet is written once it can.
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

from .store import OUT_DIR, WAITING_MESSAGE, WEB_KEY, PlanStore, is_disk_full, lease_alive, process_start

log = logging.getLogger(__name__)

#: a plan interrupted by this many server stops is marked failed instead of re-queued
MAX_ATTEMPTS = 3
#: a plan running longer than this is stopped and marked failed, seconds (1 h)
DEFAULT_TIMEOUT_S = 3600.0
#: how often the dispatcher looks at its workers, seconds
POLL_S = 0.1
#: after a store error (a full disk, a locked database) the dispatcher waits this long before trying again, s
RETRY_S = 1.0
#: how often a worker checks that the server that started it still runs, seconds
WATCH_PARENT_S = 0.5
#: owners whose last turn the dispatcher remembers
MAX_REMEMBERED_OWNERS = 10_000
#: a worker's exit code when it could not record its plan's outcome (sysexits.h EX_TEMPFAIL)
EXIT_NO_VERDICT = 75
#: a worker's exit code when the server that started it is gone
EXIT_ORPHANED = 70
#: Linux prctl(2) option: a signal the kernel sends this process when its parent dies
PR_SET_PDEATHSIG = 1
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
    is raised to the caller. The plan's lease (taken by ``mark_running``) is checked
    before the files are published, and the files are written beside the plan's ``out``
    folder and renamed into place, so a page never reads a half-written plan and a
    worker that lost its lease never overwrites another's.
    """
    store = PlanStore(data_dir)
    if not store.mark_running(plan_id):
        return  # deleted (or taken by someone else) while it waited
    pid = os.getpid()
    work = store.plan_dir(plan_id) / f"{OUT_DIR}.{pid}.tmp"
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
        if work.exists():
            shutil.rmtree(work)
        write_outputs(plan, work, **options)
        if not store.holds_lease(plan_id, pid):
            return  # stopped and handed on meanwhile: the files are not ours to publish
        out = store.out_dir(plan_id)
        if out.exists():  # leftovers of an attempt a restart interrupted
            shutil.rmtree(out)
        os.replace(work, out)
        store.mark_done(plan_id, f"plan ready: {len(plan.palette)} paints, {len(plan.layers)} layers, "
                                 f"{plan.stroke_count()} strokes", pid=pid)
    except BaseException as exc:  # noqa: BLE001 - the worker must always leave a verdict
        message = describe_failure(exc)
        # one line in the log with the plan's id; a traceback only for what looks like a bug
        log.warning("plan %s failed: %s", plan_id, message)
        if not isinstance(exc, (ValueError, MemoryError, KeyboardInterrupt, SystemExit)) and not is_disk_full(exc):
            traceback.print_exc(file=sys.stderr)
        try:
            store.mark_failed(plan_id, message)
        except Exception:  # noqa: BLE001 - e.g. the database is on the full disk: the dispatcher says it
            log.warning("plan %s: its failure could not be recorded", plan_id)
            shutil.rmtree(work, ignore_errors=True)
            os._exit(EXIT_NO_VERDICT)
        if isinstance(exc, (KeyboardInterrupt, SystemExit)):
            raise
    finally:
        shutil.rmtree(work, ignore_errors=True)


def describe_failure(exc: BaseException) -> str:
    """A message for the painter: the core's own words for bad input, a plain note otherwise."""
    if is_disk_full(exc):
        return ("the server's disk is full: the plan's files could not be written. "
                "Ask whoever runs the server to free some space, then submit the photo again")
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


# ------------------------------------------------------------------------ worker processes
def die_with_server(server_pid: int, server_start: str) -> None:
    """Make this worker end when the server that started it ends, even by ``kill -9``.

    On Linux the kernel sends SIGKILL when the worker's parent (the fork server, which
    itself ends with the server) dies (prctl ``PR_SET_PDEATHSIG``); everywhere, a thread
    also checks every :data:`WATCH_PARENT_S` that the server's process (pid and start
    time) still runs.

    References
    ----------
    prctl(2), Linux man-pages: ``PR_SET_PDEATHSIG``.
    """
    import signal

    parent = os.getppid()
    if sys.platform.startswith("linux"):
        try:
            import ctypes

            libc = ctypes.CDLL(None, use_errno=True)
            libc.prctl(PR_SET_PDEATHSIG, signal.SIGKILL, 0, 0, 0)
        except (OSError, AttributeError):
            pass  # the watching thread still catches it
    if os.getppid() != parent:  # the parent went between the fork and the prctl call
        os._exit(EXIT_ORPHANED)

    def watch() -> None:
        while True:
            time.sleep(WATCH_PARENT_S)
            if os.getppid() != parent or not lease_alive(server_pid, server_start, ""):
                os._exit(EXIT_ORPHANED)

    threading.Thread(target=watch, name="layerplan-watch-server", daemon=True).start()


def _worker_main(target: Callable[[str, str], None], data_dir: str, plan_id: str, server_pid: int,
                 server_start: str) -> None:
    """What a worker process runs: tie itself to the server, then do the work."""
    die_with_server(server_pid, server_start)
    target(data_dir, plan_id)


def _package_parent() -> str:
    """The folder holding the ``layerplan`` package this server imported."""
    import layerplan

    return str(Path(layerplan.__file__).resolve().parent.parent)


_FORK_SERVER_ENV_LOCK = threading.Lock()


def start_fork_server() -> None:
    """Start multiprocessing's fork server so that it imports this server's own ``layerplan``.

    The fork server is a fresh ``python -c`` whose module path starts with the current folder
    (Python 3.11's fork server ignores the parent's ``sys.path``), so a folder that happens to
    hold a ``layerplan/`` directory would shadow the installed package in every worker. It is
    started with ``PYTHONSAFEPATH`` (no current folder) and the package's own folder first on
    ``PYTHONPATH``; the server's environment is put back afterwards.
    """
    from multiprocessing import forkserver

    with _FORK_SERVER_ENV_LOCK:
        saved = {k: os.environ.get(k) for k in ("PYTHONSAFEPATH", "PYTHONPATH")}
        os.environ["PYTHONSAFEPATH"] = "1"
        os.environ["PYTHONPATH"] = os.pathsep.join(p for p in (_package_parent(), saved["PYTHONPATH"]) if p)
        try:
            forkserver.ensure_running()
        finally:
            for key, value in saved.items():
                if value is None:
                    os.environ.pop(key, None)
                else:
                    os.environ[key] = value


# -------------------------------------------------------------------------- restart recovery
def recover(store: PlanStore, *, max_attempts: int = MAX_ATTEMPTS) -> list[str]:
    """Put the store right after a start; return the ids to (re)submit, oldest first.

    Plans left ``running`` by a stopped server are re-queued, unless they have already
    been interrupted ``max_attempts`` times, then they are marked failed with a message.
    A worker of the old server that still holds a plan's lease (it should have died with
    its server) is stopped first, so a plan never runs twice at once; one that cannot be
    stopped keeps its plan. ``done`` plans whose files went missing are marked failed.
    """
    import signal

    for plan_id in store.ids_in_state("running"):
        record = store.get(plan_id)
        if record is None:
            continue
        pid, start, host = record.lease
        if pid != os.getpid() and lease_alive(pid, start, host):
            log.warning("plan %s: a worker of the previous server (pid %s) still runs it; stopping it", plan_id, pid)
            try:
                os.kill(int(pid), signal.SIGKILL)
            except OSError:
                pass
            end = time.monotonic() + 5.0
            while lease_alive(pid, start, host) and time.monotonic() < end:
                time.sleep(0.05)
            if lease_alive(pid, start, host):
                log.warning("plan %s: worker pid %s could not be stopped; it keeps the plan", plan_id, pid)
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

    Waiting plans are taken in turn from each owner (round robin; first in, first out
    within one owner's plans), so one person's queue of big plans never holds up the rest.

    Parameters
    ----------
    data_dir : path
        The store's data directory (each worker opens the store itself).
    max_workers : int
        Plans planned at the same time; the rest wait.
    timeout_s : float
        A plan running longer is stopped and marked failed.
    start_method : str
        :mod:`multiprocessing` start method. ``"forkserver"`` (default on POSIX) forks
        workers from a clean helper process that has the planner imported already, so
        workers start fast and never inherit the web server's threads.
    target : callable
        The work, ``target(data_dir, plan_id)``; :func:`run_plan` unless a test swaps it.
    max_attempts : int
        A plan whose worker dies (killed, out of memory) is started again until it has
        been tried this many times, then marked failed.
    """

    def __init__(self, data_dir: str | os.PathLike, *, max_workers: int = 1, timeout_s: float = DEFAULT_TIMEOUT_S,
                 start_method: str | None = None, target: Callable[[str, str], None] = run_plan,
                 max_attempts: int = MAX_ATTEMPTS):
        if not isinstance(max_workers, int) or max_workers < 1:
            raise ValueError(f"max_workers must be a whole number >= 1, got {max_workers!r}")
        if not timeout_s > 0:
            raise ValueError(f"timeout_s must be > 0, got {timeout_s!r}")
        if not isinstance(max_attempts, int) or max_attempts < 1:
            raise ValueError(f"max_attempts must be a whole number >= 1, got {max_attempts!r}")
        if start_method is None:
            start_method = "forkserver" if "forkserver" in multiprocessing.get_all_start_methods() else "spawn"
        self._ctx = multiprocessing.get_context(start_method)
        if start_method == "forkserver":
            self._ctx.set_forkserver_preload(PRELOAD)
        self.data_dir = str(Path(data_dir))
        self.store = PlanStore(self.data_dir)
        self.max_workers = max_workers
        self.timeout_s = float(timeout_s)
        self.max_attempts = max_attempts
        self._target = target
        self._server = (os.getpid(), process_start(os.getpid()))
        #: owner -> that owner's waiting plan ids; the dict's order is the round-robin turn
        self._queues: dict[str, collections.deque[str]] = {}
        #: owner -> when it was last served (a count of plans started), for the turn
        self._served: dict[str, int] = {}
        self._served_count = 0
        self._running: dict[str, tuple[Any, float]] = {}
        #: verdicts the store could not take yet (a full disk): plan id -> (kind, message), tried again
        self._unsettled: dict[str, tuple[str, str]] = {}
        self._cv = threading.Condition()
        self._stopping = False
        self._wait_on_stop = False
        self._thread = threading.Thread(target=self._loop, name="layerplan-dispatcher", daemon=True)
        self._thread.start()

    # ---------------------------------------------------------------- interface
    def submit(self, plan_id: str) -> None:
        try:
            record = self.store.get(plan_id)
            owner = record.owner if record is not None else ""
        except Exception:  # noqa: BLE001 - the database is busy or full: still queue it, in the shared turn
            owner = ""
        with self._cv:
            if self._stopping:
                return  # stays queued in the store for the next start
            if plan_id not in self._running and not any(plan_id in q for q in self._queues.values()):
                self._queues.setdefault(owner, collections.deque()).append(plan_id)
            self._cv.notify_all()

    def cancel(self, plan_id: str) -> None:
        with self._cv:
            for owner, q in list(self._queues.items()):
                if plan_id in q:
                    q.remove(plan_id)
                    if not q:
                        del self._queues[owner]
            self._unsettled.pop(plan_id, None)
            entry = self._running.pop(plan_id, None)
        if entry is not None:
            _stop(entry[0])

    def running(self) -> list[str]:
        with self._cv:
            return list(self._running)

    def queued(self) -> list[str]:
        """Waiting ids in the order they will start (taking owners in turn)."""
        with self._cv:
            queues = [list(q) for q in self._queues.values()]
        order = []
        while any(queues):
            for q in queues:
                if q:
                    order.append(q.pop(0))
        return order

    def shutdown(self, *, wait: bool = False) -> None:
        with self._cv:
            if self._stopping and not self._thread.is_alive():
                return
            self._stopping = True
            self._wait_on_stop = wait
            self._queues.clear()
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
                start_fork_server()
            except Exception:  # noqa: BLE001 - the first Process.start() will try again and report
                log.exception("could not start the fork server")
        while True:
            with self._cv:
                if self._stopping and (not self._wait_on_stop or not self._running):
                    return
                try:
                    self._settle()
                    self._reap()
                    self._start_waiting()
                    pause = POLL_S
                except Exception as exc:  # noqa: BLE001 - the dispatcher must outlive a full disk
                    # one line, no traceback: a full disk or a locked database, tried again shortly
                    log.warning("dispatcher: %s: %s; trying again in %g s", type(exc).__name__, exc, RETRY_S)
                    pause = RETRY_S
                self._cv.wait(timeout=pause)

    def _next_waiting(self) -> str | None:
        """The next plan in the round-robin turn over owners: the owner served least recently goes first
        (one never served before anyone else), first in first out within one owner's plans."""
        if not self._queues:
            return None
        order = {owner: n for n, owner in enumerate(self._queues)}
        owner = min(self._queues, key=lambda o: (self._served.get(o, -1), order[o]))
        q = self._queues.pop(owner)
        plan_id = q.popleft()
        if q:
            self._queues[owner] = q
        self._served_count += 1
        self._served[owner] = self._served_count
        if len(self._served) > MAX_REMEMBERED_OWNERS:  # forget the owners served longest ago
            for old in sorted(self._served, key=self._served.get)[:len(self._served) // 2]:
                del self._served[old]
        return plan_id

    def _start_waiting(self) -> None:
        while not self._stopping and self._queues and len(self._running) < self.max_workers:
            plan_id = self._next_waiting()
            if plan_id is None:
                return
            try:
                self.store.set_message(plan_id, "starting a planning process", state="queued",
                                       replacing=WAITING_MESSAGE)
            except Exception:  # noqa: BLE001 - only a message; the plan still starts
                pass
            try:
                if self._ctx.get_start_method() == "forkserver":
                    start_fork_server()  # a fork server that died is started again with the right path
                proc = self._ctx.Process(target=_worker_main,
                                         args=(self._target, self.data_dir, plan_id, *self._server),
                                         name=f"layerplan-plan-{plan_id}", daemon=True)
                proc.start()
            except Exception as exc:  # noqa: BLE001 - e.g. out of processes
                log.warning("plan %s: could not start a worker: %s", plan_id, exc)
                self._unsettled[plan_id] = ("failed", f"could not start a planning process: {exc}")
                continue
            self._running[plan_id] = (proc, time.monotonic())

    def _settle(self) -> None:
        """Write the verdicts the store refused earlier; stop at the first that fails again."""
        for plan_id, (kind, message) in list(self._unsettled.items()):
            if kind == "failed":
                self.store.mark_failed(plan_id, message)
            else:
                if self.store.requeue(plan_id, message):
                    self._queues.setdefault(self._owner(plan_id), collections.deque()).append(plan_id)
            del self._unsettled[plan_id]

    def _owner(self, plan_id: str) -> str:
        record = self.store.get(plan_id)
        return record.owner if record is not None else ""

    def _reap(self) -> None:
        now = time.monotonic()
        for plan_id, (proc, started) in list(self._running.items()):
            if proc.exitcode is None and now - started > self.timeout_s:
                _stop(proc)
                del self._running[plan_id]
                log.warning("plan %s: over the time limit of %g s; stopped", plan_id, self.timeout_s)
                self._unsettled[plan_id] = ("failed", f"planning took longer than {self.timeout_s / 60:g} minutes "
                                                      "(this server's limit) and was stopped: try a larger pixel "
                                                      "size, fewer paints or fewer brushes")
            elif proc.exitcode is not None:
                proc.join()
                verdict = self._after_exit(plan_id, proc)  # if the store fails here, the next poll asks again
                del self._running[plan_id]
                if verdict is not None:
                    self._unsettled[plan_id] = verdict
        self._settle()

    def _after_exit(self, plan_id: str, proc) -> tuple[str, str] | None:
        """What to record for a worker that ended: nothing when it wrote its own verdict."""
        if proc.exitcode == EXIT_NO_VERDICT:
            return ("failed", "planning failed and its outcome could not be recorded (the server's disk may be "
                              "full); submit the photo again once there is space")
        record = self.store.get(plan_id)
        if record is None or record.state != "running" or record.lease[0] not in (None, proc.pid):
            return None  # it wrote its verdict, was deleted, or someone else holds it now
        # a worker that died without a word: killed, out of memory, a crashed interpreter
        said = f"the planning process stopped unexpectedly (exit code {proc.exitcode})"
        log.warning("plan %s: %s (attempt %d of %d)", plan_id, said, record.attempts, self.max_attempts)
        if record.attempts < self.max_attempts:
            return ("requeue", f"{said}; trying again (attempt {record.attempts + 1} of {self.max_attempts})")
        return ("failed", said + (f" on each of {record.attempts} attempts; gave up" if record.attempts > 1 else ""))


def _stop(proc) -> None:
    if proc.exitcode is None:
        proc.terminate()
        proc.join(timeout=5)
        if proc.exitcode is None:
            proc.kill()
            proc.join(timeout=5)
