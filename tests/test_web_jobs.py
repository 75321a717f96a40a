"""Background planning (layerplan/web/jobs.py) and plan records (layerplan/web/store.py).

Bounded concurrency with a queue beyond it, failures and crashes turned into a "failed"
state with a message, cancelling, restart recovery, and three plans at once through a
live server on 127.0.0.1.
"""

from __future__ import annotations

import json
import os
import threading
import time
import urllib.request
import uuid

import pytest

from conftest import make_web_app, plan_form, png_bytes, quadrants, wait_for_plan
from layerplan.settings import Settings
from layerplan.web.jobs import LocalProcessRunner, recover, settings_from_dict
from layerplan.web.store import PlanStore

TINY_SETTINGS = Settings(wall_width_mm=800.0, wall_height_mm=600.0, paints=4, brushes_mm=(40.0, 20.0),
                         mm_per_px=10.0, seed=1).to_dict()
#: a plan that takes several seconds (fine pixels, more brushes): long enough to interrupt
SLOW_SETTINGS = Settings(wall_width_mm=2000.0, wall_height_mm=1500.0, paints=6, brushes_mm=(80.0, 40.0, 20.0),
                         mm_per_px=5.0, seed=1).to_dict()


# -------------------------------------------------------------- worker targets for the tests
def _sleeping_target(data_dir: str, plan_id: str) -> None:
    """Marks the plan running, records when it ran, sleeps, marks it done."""
    store = PlanStore(data_dir)
    store.mark_running(plan_id)
    start = time.time()
    time.sleep(0.6)
    log = os.path.join(data_dir, f"ran-{plan_id}.json")
    with open(log, "w") as f:
        json.dump([start, time.time()], f)
    store.mark_done(plan_id)


def _crashing_target(data_dir: str, plan_id: str) -> None:
    PlanStore(data_dir).mark_running(plan_id)
    os._exit(3)  # as if the interpreter died (no chance to record anything)


def _hanging_target(data_dir: str, plan_id: str) -> None:
    PlanStore(data_dir).mark_running(plan_id)
    time.sleep(60)


def _wait_state(store: PlanStore, plan_id: str, states, timeout: float = 60.0) -> str:
    end = time.monotonic() + timeout
    while time.monotonic() < end:
        rec = store.get(plan_id)
        if rec is not None and rec.state in states:
            return rec.state
        time.sleep(0.05)
    raise AssertionError(f"plan {plan_id} not in {states} after {timeout} s: {store.get(plan_id)}")


@pytest.fixture
def store(tmp_path):
    return PlanStore(tmp_path / "data")


# --------------------------------------------------------------------------------- the store
def test_store_uses_wal_and_progress_never_decreases(store):
    # WAL lets the web threads read while a worker writes (SQLite docs, "Write-Ahead Logging")
    assert store.journal_mode() == "wal"
    plan_id = store.create(TINY_SETTINGS, b"photo")
    assert store.get(plan_id).state == "queued"
    assert store.mark_running(plan_id)
    assert not store.mark_running(plan_id)  # only a queued plan can start
    store.set_progress(plan_id, 0.5, "layer 1")
    store.set_progress(plan_id, 0.3, "layer 1 again")
    rec = store.get(plan_id)
    assert rec.progress == 0.5 and rec.message == "layer 1 again"
    assert store.mark_done(plan_id)
    store.set_progress(plan_id, 0.9, "late report")  # a finished plan is not touched
    rec = store.get(plan_id)
    assert (rec.state, rec.progress, rec.message) == ("done", 1.0, "plan ready")


def test_store_ids_are_random_and_folders_are_generated(store):
    ids = {store.create(TINY_SETTINGS, b"x", source_name="../../wall.png") for _ in range(20)}
    assert len(ids) == 20
    assert sorted(p.name for p in store.plans_dir.iterdir()) == sorted(ids)
    with pytest.raises(ValueError, match=r"not a plan id: '\.\./x'"):
        store.plan_dir("../x")
    assert store.get("../x") is None and not store.delete("../x")


def test_app_settings_round_trip(store):
    assert store.get_setting("last_kit", "hall") == "hall"
    store.put_setting("last_kit", "panel")
    store.put_setting("last_kit", {"brushes_mm": [50, 25]})
    assert PlanStore(store.data_dir).get_setting("last_kit") == {"brushes_mm": [50, 25]}


def test_settings_survive_the_database():
    s = Settings(wall_width_mm=1234.5, wall_height_mm=None, wall_unit="ft", fit="contain", paints=5,
                 brushes_mm=(12.0, 60.0), mm_per_px=7.0, seed=9, extra={"note": "kept"})
    back = settings_from_dict(json.loads(json.dumps(s.to_dict())))
    assert back == s.validated() and back.extra == {"note": "kept"}


# --------------------------------------------------------------------------------- the runner
def test_runner_bounds_concurrency_and_queues_the_rest(store):
    runner = LocalProcessRunner(store.data_dir, max_workers=2, target=_sleeping_target)
    try:
        ids = [store.create(TINY_SETTINGS, b"x") for _ in range(5)]
        for plan_id in ids:
            runner.submit(plan_id)
        most = 0
        while any(store.get(i).state != "done" for i in ids):
            most = max(most, len(runner.running()), store.count_in_state("running"))
            time.sleep(0.02)
    finally:
        runner.shutdown()
    assert most == 2
    spans = [json.load(open(store.data_dir / f"ran-{i}.json")) for i in ids]
    # at no moment were more than two plans running
    events = sorted([(a, 1) for a, _ in spans] + [(b, -1) for _, b in spans])
    level = peak = 0
    for _, step in events:
        level += step
        peak = max(peak, level)
    assert peak <= 2
    # first in, first out: the third plan waited for one of the first two to finish
    assert spans[2][0] >= min(spans[0][1], spans[1][1]) - 0.05
    assert spans[4][0] >= spans[0][0] and spans[4][0] >= spans[1][0]


def test_core_error_becomes_failed_with_its_message(store):
    runner = LocalProcessRunner(store.data_dir, max_workers=1)
    try:
        bad = store.create(TINY_SETTINGS, b"not a photo at all")  # slipped past the form checks
        good = store.create(TINY_SETTINGS, png_bytes(quadrants()))
        runner.submit(bad)
        runner.submit(good)
        assert _wait_state(store, bad, ("done", "failed")) == "failed"
        assert "is not an image" in store.get(bad).message
        assert _wait_state(store, good, ("done", "failed")) == "done"
        assert (store.out_dir(good) / "plan.json").is_file()
        assert not store.out_dir(bad).exists()
    finally:
        runner.shutdown()


def test_stored_output_options_reach_the_export(store):
    # the web app keeps the export options beside the settings (key "web"); a bad one that slipped
    # past the form still ends as a failed plan with the export's own message, not a crash
    runner = LocalProcessRunner(store.data_dir, max_workers=1)
    try:
        good = store.create({**TINY_SETTINGS, "web": {"output": {"ground_coats": 3, "grid_mm": 100.0}}},
                            png_bytes(quadrants()))
        bad = store.create({**TINY_SETTINGS, "web": {"output": {"grid_mm": 1.0}}}, png_bytes(quadrants()))
        runner.submit(good)
        runner.submit(bad)
        assert _wait_state(store, good, ("done", "failed")) == "done", store.get(good).message
        doc = json.loads((store.out_dir(good) / "plan.json").read_text())
        assert doc["paint_use"]["ground_coats"] == 3 and "web" not in doc["settings"]
        assert _wait_state(store, bad, ("done", "failed")) == "failed"
        assert "grid spacing 1 mm" in store.get(bad).message
    finally:
        runner.shutdown()


def test_a_worker_that_dies_is_retried_then_marked_failed(store):
    # a worker that dies without a word (killed, out of memory) gets its plan started again, up to the
    # attempt limit; a worker that always dies ends as failed with the exit code and the count
    runner = LocalProcessRunner(store.data_dir, max_workers=1, target=_crashing_target, max_attempts=2)
    try:
        plan_id = store.create(TINY_SETTINGS, b"x")
        runner.submit(plan_id)
        assert _wait_state(store, plan_id, ("failed",)) == "failed"
        record = store.get(plan_id)
        assert record.attempts == 2
        assert record.message == ("the planning process stopped unexpectedly (exit code 3) on each of 2 attempts; "
                                  "gave up")
    finally:
        runner.shutdown()


def _crash_once_target(data_dir: str, plan_id: str) -> None:
    """Dies on its plan's first attempt, succeeds on the next."""
    store = PlanStore(data_dir)
    store.mark_running(plan_id)
    if store.get(plan_id).attempts == 1:
        os._exit(9)
    store.mark_done(plan_id)


def test_a_worker_killed_alone_has_its_plan_retried(store):
    runner = LocalProcessRunner(store.data_dir, max_workers=1, target=_crash_once_target)
    try:
        plan_id = store.create(TINY_SETTINGS, b"x")
        runner.submit(plan_id)
        assert _wait_state(store, plan_id, ("done", "failed")) == "done"
        assert store.get(plan_id).attempts == 2
    finally:
        runner.shutdown()


def test_a_plan_over_the_time_limit_is_stopped(store):
    runner = LocalProcessRunner(store.data_dir, max_workers=1, timeout_s=1.0, target=_hanging_target)
    try:
        plan_id = store.create(TINY_SETTINGS, b"x")
        runner.submit(plan_id)
        assert _wait_state(store, plan_id, ("failed",), timeout=30) == "failed"
        assert "took longer than" in store.get(plan_id).message
        assert runner.running() == []
    finally:
        runner.shutdown()


def test_cancel_queued_and_running(store):
    runner = LocalProcessRunner(store.data_dir, max_workers=1, target=_hanging_target)
    try:
        first, second = store.create(TINY_SETTINGS, b"x"), store.create(TINY_SETTINGS, b"x")
        runner.submit(first)
        runner.submit(second)
        _wait_state(store, first, ("running",))
        assert runner.queued() == [second]
        runner.cancel(second)
        assert runner.queued() == []
        runner.cancel(first)
        assert runner.running() == []
        time.sleep(0.5)
        assert store.get(second).state == "queued"  # never started
    finally:
        runner.shutdown()


def test_runner_rejects_bad_options(store):
    with pytest.raises(ValueError, match=r"max_workers must be a whole number >= 1, got 0"):
        LocalProcessRunner(store.data_dir, max_workers=0)
    with pytest.raises(ValueError, match=r"timeout_s must be > 0, got -1"):
        LocalProcessRunner(store.data_dir, timeout_s=-1)


# ------------------------------------------------------------------------------ recovery
def test_recover_requeues_running_and_gives_up_after_max_attempts(store):
    fresh = store.create(TINY_SETTINGS, b"x")
    store.mark_running(fresh)
    store.set_progress(fresh, 0.4, "layer 2")
    tired = store.create(TINY_SETTINGS, b"x")
    for _ in range(3):  # interrupted three times already
        store._exec("UPDATE plans SET state = 'queued' WHERE id = ?", (tired,))
        store.mark_running(tired)
    waiting = store.create(TINY_SETTINGS, b"x")
    lost = store.create(TINY_SETTINGS, b"x")
    store.mark_running(lost)
    store.mark_done(lost)  # done, but its files are gone

    again = recover(store, max_attempts=3)
    assert again == [fresh, waiting]
    assert store.get(fresh).state == "queued" and store.get(fresh).progress == 0.0
    assert "re-queued after a server restart (attempt 2 of 3)" == store.get(fresh).message
    assert store.get(tired).state == "failed"
    assert "interrupted by a server stop 3 times" in store.get(tired).message
    assert store.get(lost).state == "failed" and "files are missing" in store.get(lost).message
    assert store.count_in_state("running") == 0


def test_restart_keeps_finished_plans_and_resumes_interrupted_ones(tmp_path):
    data = tmp_path / "data"
    app = make_web_app(data, WORKERS=1)
    client = app.test_client()
    finished = client.post("/api/plans", data=plan_form(), content_type="multipart/form-data").get_json()["id"]
    assert wait_for_plan(client, finished)[-1]["state"] == "done"
    store = app.extensions["layerplan"].store
    slow = store.create(SLOW_SETTINGS, png_bytes(quadrants(120, 180)))
    app.extensions["layerplan"].runner.submit(slow)
    waiting = client.post("/api/plans", data=plan_form(), content_type="multipart/form-data").get_json()["id"]
    seen = wait_for_plan(client, slow, states=("running",))
    assert seen[-1]["state"] == "running"
    # a second server on the same data directory is refused while the first runs
    with pytest.raises(RuntimeError, match=r"another layerplan server is using the data directory"):
        make_web_app(data)
    app.extensions["layerplan"].close()  # the server stops mid-plan
    assert store.get(slow).state == "running" and store.get(waiting).state == "queued"

    app2 = make_web_app(data, WORKERS=2)
    try:
        client2 = app2.test_client()
        status = client2.get(f"/api/plans/{slow}").get_json()
        assert status["state"] in ("queued", "running")
        assert "re-queued after a server restart" in status["message"] or status["state"] == "running"
        assert wait_for_plan(client2, slow, timeout=180)[-1]["state"] == "done"
        assert wait_for_plan(client2, waiting)[-1]["state"] == "done"
        done = client2.get(f"/api/plans/{finished}").get_json()
        assert done["state"] == "done" and "plan.json" in done["files"]
        assert client2.get(done["files"]["final.png"]).status_code == 200
    finally:
        app2.extensions["layerplan"].close()


# --------------------------------------------------------------------------- live server
def _http(url: str, data: bytes | None = None, headers=None):
    req = urllib.request.Request(url, data=data, headers=headers or {})
    with urllib.request.urlopen(req, timeout=30) as r:
        return r.status, json.loads(r.read())


def _multipart(fields: dict) -> tuple[bytes, str]:
    boundary = uuid.uuid4().hex
    parts = []
    for name, value in fields.items():
        if isinstance(value, tuple):
            stream, filename = value
            parts.append(f'--{boundary}\r\nContent-Disposition: form-data; name="{name}"; filename="{filename}"\r\n'
                         f"Content-Type: image/png\r\n\r\n".encode() + stream.read() + b"\r\n")
        else:
            parts.append(f'--{boundary}\r\nContent-Disposition: form-data; name="{name}"\r\n\r\n{value}\r\n'.encode())
    return b"".join(parts) + f"--{boundary}--\r\n".encode(), f"multipart/form-data; boundary={boundary}"


def test_three_plans_at_once_on_a_live_server(live_server):
    results, errors = {}, []

    def submit(n):
        try:
            body, ctype = _multipart(plan_form(seed=str(n)))
            results[n] = _http(live_server.url + "/api/plans", body, {"Content-Type": ctype})
        except Exception as exc:  # noqa: BLE001 - reported below
            errors.append(exc)

    threads = [threading.Thread(target=submit, args=(n,)) for n in range(3)]
    for t in threads:
        t.start()
    for t in threads:
        t.join()
    assert not errors
    assert sorted(status for status, _ in results.values()) == [202, 202, 202]
    ids = [body["id"] for _, body in results.values()]
    assert len(set(ids)) == 3

    most_running = 0
    last = {}
    end = time.monotonic() + 120
    while time.monotonic() < end:
        states = {i: _http(f"{live_server.url}/api/plans/{i}")[1] for i in ids}
        for i, s in states.items():
            assert s["progress"] >= last.get(i, 0.0), "progress went backwards"
            last[i] = s["progress"]
        most_running = max(most_running, sum(s["state"] == "running" for s in states.values()))
        if all(s["state"] in ("done", "failed") for s in states.values()):
            break
        time.sleep(0.1)
    assert [states[i]["state"] for i in ids] == ["done"] * 3, [states[i]["message"] for i in ids]
    assert most_running <= 2  # WORKERS=2: the third waited in the queue
    # different seeds, different plans; every plan's files are its own
    docs = [_http(live_server.url + states[i]["files"]["plan.json"])[1] for i in ids]
    assert all(d["format"] == "layerplan.plan" for d in docs)
    assert len({json.dumps(d["layers"]) for d in docs}) == 3


def test_fork_server_preloads_a_warm_planner():
    # the fork server imports layerplan.web.warm, which plans and exports a tiny picture so that numba's code is
    # loaded once there rather than in every worker; the warm-up itself must work (a failure is only logged)
    from layerplan.warm import warm_up
    from layerplan.web import jobs

    assert "layerplan.web.warm" in jobs.PRELOAD
    image, plan = warm_up()
    assert plan.width_px == image.shape[1] and plan.height_px == image.shape[0] and plan.stroke_count() > 0
