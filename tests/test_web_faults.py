"""Faults a shared server meets: a full disk (patched ENOSPC and SQLite's "database or disk is full"),
``kill -9`` of a worker and of the server, a restart with a worker of the old server still running,
a start from a folder that holds another ``layerplan/``, and a data directory out of step with its
records."""

from __future__ import annotations

import errno
import json
import os
import signal
import socket
import sqlite3
import subprocess
import sys
import time
import urllib.request
from pathlib import Path

import pytest

from conftest import REPO_ROOT, make_web_app, plan_form, png_bytes, quadrants, wait_for_plan
from layerplan.settings import Settings
from layerplan.web import jobs
from layerplan.web.jobs import LocalProcessRunner, recover, run_plan
from layerplan.web.store import DB_NAME, PlanStore, process_start
from test_web_jobs import _multipart

TINY_SETTINGS = Settings(wall_width_mm=800.0, wall_height_mm=600.0, paints=4, brushes_mm=(40.0, 20.0),
                         mm_per_px=10.0, seed=1).to_dict()
DISK_FULL = sqlite3.OperationalError("database or disk is full")  # SQLite's own words for SQLITE_FULL


def _post(client, **fields):
    return client.post("/api/plans", data=plan_form(**fields), content_type="multipart/form-data")


# ------------------------------------------------------------------------------- full disk
@pytest.mark.parametrize("where", ["photo", "database"])
def test_a_full_disk_at_submit_answers_507_and_leaves_nothing(tmp_path, monkeypatch, where):
    app = make_web_app(tmp_path / "data", JOB_RUNNER=lambda app, store: _NoRunner())
    try:
        store = app.extensions["layerplan"].store
        if where == "photo":
            real = Path.write_bytes

            def write_bytes(self, data):
                if self.name.startswith("upload"):
                    raise OSError(errno.ENOSPC, "No space left on device")
                return real(self, data)

            monkeypatch.setattr(Path, "write_bytes", write_bytes)
        else:
            real_exec = store._exec

            def exec_(sql, args=()):
                if sql.lstrip().startswith("INSERT INTO plans"):
                    raise DISK_FULL
                return real_exec(sql, args)

            monkeypatch.setattr(store, "_exec", exec_)
        r = _post(app.test_client())
        assert r.status_code == 507 and "disk is full" in r.get_json()["error"]
        assert list(store.plans_dir.iterdir()) == [] and store.all_ids() == []  # no folder, no record
        monkeypatch.undo()  # space is back: the next plan is taken
        assert _post(app.test_client()).status_code == 202
    finally:
        app.extensions["layerplan"].close()


def test_a_full_disk_while_writing_a_plan_fails_it_with_a_message(tmp_path, monkeypatch, caplog):
    store = PlanStore(tmp_path / "data")
    plan_id = store.create(TINY_SETTINGS, png_bytes(quadrants()))
    import layerplan.export

    def full(*args, **kwargs):
        raise OSError(errno.ENOSPC, "No space left on device")

    monkeypatch.setattr(layerplan.export, "write_outputs", full)
    run_plan(str(store.data_dir), plan_id)  # in this process, so the patch holds
    record = store.get(plan_id)
    assert record.state == "failed" and record.message.startswith("the server's disk is full")
    assert sorted(p.name for p in store.plan_dir(plan_id).iterdir()) == ["upload"]  # no partial files
    lines = [r for r in caplog.records if plan_id in r.getMessage()]
    assert len(lines) == 1 and lines[0].exc_info is None  # one line with the plan's id, no traceback


def _crashing_target(data_dir: str, plan_id: str) -> None:
    PlanStore(data_dir).mark_running(plan_id)
    os._exit(3)


def _quick_target(data_dir: str, plan_id: str) -> None:
    store = PlanStore(data_dir)
    store.mark_running(plan_id)
    store.mark_done(plan_id)


def _wait(predicate, timeout=30.0, what="condition"):
    end = time.monotonic() + timeout
    while time.monotonic() < end:
        if predicate():
            return
        time.sleep(0.05)
    raise AssertionError(f"{what} not met after {timeout} s")


def test_the_dispatcher_outlives_a_full_disk_and_resumes(tmp_path, monkeypatch):
    store = PlanStore(tmp_path / "data")
    runner = LocalProcessRunner(store.data_dir, max_workers=1, target=_crashing_target, max_attempts=1)
    try:
        full = {"on": True}
        real = {name: getattr(runner.store, name) for name in ("get", "mark_failed", "set_message", "requeue")}

        def refusing(name):
            def call(*args, **kwargs):
                if full["on"]:
                    raise DISK_FULL
                return real[name](*args, **kwargs)
            return call

        for name in real:
            monkeypatch.setattr(runner.store, name, refusing(name))
        first = store.create(TINY_SETTINGS, b"x")
        runner.submit(first)
        _wait(lambda: store.get(first).state == "running", 60, "the worker starting")
        time.sleep(1.5)  # the worker died while the disk was full: its verdict cannot be written yet
        assert store.get(first).state == "running"
        assert runner._thread.is_alive()
        full["on"] = False  # space is back: no restart needed
        _wait(lambda: store.get(first).state == "failed", what="the delayed verdict")
        assert "stopped unexpectedly (exit code 3)" in store.get(first).message
        runner._target = _quick_target
        second = store.create(TINY_SETTINGS, b"x")
        runner.submit(second)
        _wait(lambda: store.get(second).state == "done", what="a new plan after the disk was freed")
    finally:
        runner.shutdown()


# ------------------------------------------------------------------------------ lease, start
def test_a_plan_is_taken_by_one_worker_only(tmp_path):
    store = PlanStore(tmp_path / "data")
    plan_id = store.create(TINY_SETTINGS, b"x")
    assert store.mark_running(plan_id, pid=os.getpid())
    assert not store.mark_running(plan_id, pid=os.getpid() + 1)  # the second taker is refused
    assert store.holds_lease(plan_id) and not store.holds_lease(plan_id, os.getpid() + 1)
    assert not store.mark_done(plan_id, pid=os.getpid() + 1)  # nor may it publish
    assert store.get(plan_id).lease[:2] == (os.getpid(), process_start(os.getpid()))


def test_a_restart_stops_a_worker_of_the_old_server_before_planning_again(tmp_path):
    store = PlanStore(tmp_path / "data")
    plan_id = store.create(TINY_SETTINGS, b"x")
    old_worker = subprocess.Popen([sys.executable, "-c", "import time; time.sleep(60)"])
    try:
        time.sleep(0.2)
        assert store.mark_running(plan_id, pid=old_worker.pid)
        assert recover(store) == [plan_id]
        assert old_worker.wait(timeout=10) == -signal.SIGKILL
        assert store.get(plan_id).state == "queued"
    finally:
        if old_worker.poll() is None:
            old_worker.kill()


def test_start_repairs_folders_and_records_that_disagree(tmp_path, caplog):
    data = tmp_path / "data"
    store = PlanStore(data)
    orphan = store.plans_dir / "0123456789abcdef"  # a folder whose submit never wrote its record
    orphan.mkdir()
    (orphan / "upload").write_bytes(b"x")
    lost = store.create(TINY_SETTINGS, b"x")
    kept = store.create(TINY_SETTINGS, b"x")
    (store.plan_dir(kept) / "out.999.tmp").mkdir()  # a worker stopped while writing
    import shutil

    shutil.rmtree(store.plan_dir(lost))
    app = make_web_app(data, JOB_RUNNER=lambda app, store: _NoRunner())
    try:
        assert not orphan.exists()
        assert store.get(lost).state == "failed" and "folder is missing" in store.get(lost).message
        assert store.plan_dir(lost).is_dir()
        assert sorted(p.name for p in store.plan_dir(kept).iterdir()) == ["upload"]
        # no folder without a record, no record without a folder
        assert {p.name for p in store.plans_dir.iterdir()} == set(store.all_ids())
        said = " ".join(r.getMessage() for r in caplog.records)
        assert "removed 1 plan folders that had no record" in said and "1 plans had lost their folder" in said
    finally:
        app.extensions["layerplan"].close()


class _NoRunner(jobs.JobRunner):
    def submit(self, plan_id):
        pass

    def cancel(self, plan_id):
        pass

    def shutdown(self, *, wait=False):
        pass


# ---------------------------------------------------------------------- a real server, kill -9
def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def _serve(cwd: Path, data: Path, port: int) -> subprocess.Popen:
    """``layerplan serve`` as a process of its own, started in ``cwd``, using this checkout's package."""
    code = (f"import sys; sys.path.insert(0, {str(REPO_ROOT)!r}); from layerplan.cli import main; "
            f"sys.exit(main(['serve', '--port', '{port}', '--data-dir', {str(data)!r}, '--workers', '1']))")
    env = {k: v for k, v in os.environ.items() if k not in ("PYTHONPATH", "PYTHONSAFEPATH")}
    proc = subprocess.Popen([sys.executable, "-c", code], cwd=cwd, env=env, stdout=subprocess.DEVNULL,
                            stderr=subprocess.DEVNULL)
    end = time.monotonic() + 60
    while time.monotonic() < end:
        try:
            urllib.request.urlopen(f"http://127.0.0.1:{port}/api/kits", timeout=2).read()
            return proc
        except OSError:
            assert proc.poll() is None, "the server stopped at start"
            time.sleep(0.2)
    proc.kill()
    raise AssertionError("the server did not start")


def _lease(data: Path, plan_id: str):
    with sqlite3.connect(data / DB_NAME, timeout=10) as db:
        return db.execute("SELECT state, lease_pid, attempts FROM plans WHERE id = ?", (plan_id,)).fetchone()


def _dead(pid: int) -> bool:
    try:
        with open(f"/proc/{pid}/stat") as f:
            return f.read().rsplit(")", 1)[1].split()[0] in ("Z", "X")  # a zombie has finished
    except FileNotFoundError:
        return True


@pytest.mark.slow
def test_kill_9_of_a_worker_and_of_the_server(tmp_path):
    # started in a folder that holds a layerplan/ of its own: the workers must still import the real package
    cwd = tmp_path / "elsewhere"
    (cwd / "layerplan").mkdir(parents=True)
    (cwd / "layerplan" / "__init__.py").write_text("raise ImportError('a stray copy, not the package')\n")
    data, port = tmp_path / "data", _free_port()
    server = _serve(cwd, data, port)
    url = f"http://127.0.0.1:{port}"
    try:
        fields = plan_form(image=png_bytes(quadrants(120, 180)), wall_width="2", wall_height="1.5", paints="6",
                           brushes="80,40,20", pixel_mm="8")
        body, ctype = _multipart(fields)
        with urllib.request.urlopen(urllib.request.Request(url + "/api/plans", data=body,
                                                           headers={"Content-Type": ctype}), timeout=30) as r:
            plan_id = json.loads(r.read())["id"]
        _wait(lambda: (_lease(data, plan_id) or ("",))[0] == "running" and _lease(data, plan_id)[1], 60,
              "the plan running")
        first = _lease(data, plan_id)[1]
        os.kill(first, signal.SIGKILL)  # the worker alone: its plan is tried again
        _wait(lambda: _lease(data, plan_id)[1] not in (None, first), 60, "a second attempt")
        state, second, attempts = _lease(data, plan_id)
        assert state == "running" and attempts == 2
        server.send_signal(signal.SIGKILL)  # now the server
        server.wait(timeout=10)
        _wait(lambda: _dead(second), 10, "the worker ending with its server")
        server = _serve(cwd, data, port)
        end = time.monotonic() + 180
        while time.monotonic() < end:
            with urllib.request.urlopen(f"{url}/api/plans/{plan_id}", timeout=30) as r:
                status = json.loads(r.read())
            if status["state"] in ("done", "failed"):
                break
            time.sleep(0.2)
        assert status["state"] == "done", status["message"]
        assert status["attempts"] == 3 and "plan.json" in status["files"]
    finally:
        server.kill()
        server.wait(timeout=10)
