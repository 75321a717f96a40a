"""Limits of a shared server: queue per owner and in all, storage, the photo's pixels before decoding,
decodes at a time, a plan's size, kept photos, retention, and owners taken in turn by the dispatcher."""

from __future__ import annotations

import json
import os
import threading
import time

import numpy as np
import pytest

from conftest import make_web_app, plan_form, png_bytes, quadrants
from layerplan.settings import Settings
from layerplan.web import forms
from layerplan.web.housekeeping import sweep
from layerplan.web.jobs import LocalProcessRunner
from layerplan.web.store import PlanStore
from layerplan.web.uploads import UploadStash
from test_web_owners import RecordingRunner

TINY_SETTINGS = Settings(wall_width_mm=800.0, wall_height_mm=600.0, paints=4, brushes_mm=(40.0, 20.0),
                         mm_per_px=10.0, seed=1).to_dict()


@pytest.fixture
def make_app(tmp_path):
    made = []

    def make(**config):
        app = make_web_app(tmp_path / f"data{len(made)}", JOB_RUNNER=RecordingRunner, **config)
        made.append(app)
        return app

    yield make
    for app in made:
        app.extensions["layerplan"].close()


def _post(client, **fields):
    return client.post("/api/plans", data=plan_form(**fields), content_type="multipart/form-data")


class CountingDecoder:
    """Stands in for the photo decoder: counts calls and the most running at once."""

    def __init__(self, real, pause_s=0.0):
        self.real, self.pause_s = real, pause_s
        self.calls = self.now = self.most = 0
        self.lock = threading.Lock()

    def __call__(self, *args, **kwargs):
        with self.lock:
            self.calls += 1
            self.now += 1
            self.most = max(self.most, self.now)
        try:
            time.sleep(self.pause_s)
            return self.real(*args, **kwargs)
        finally:
            with self.lock:
                self.now -= 1


@pytest.fixture
def decoder(monkeypatch):
    counting = CountingDecoder(forms.load_image)
    monkeypatch.setattr(forms, "load_image", counting)
    return counting


def test_plans_per_owner_and_in_all_answer_429_before_the_photo_is_decoded(make_app, decoder):
    app = make_app(MAX_QUEUED_PER_OWNER=2, MAX_QUEUED=3)
    a, b, c = (app.test_client() for _ in range(3))
    assert [_post(a).status_code for _ in range(2)] == [202, 202]
    decoded = decoder.calls
    r = _post(a)
    assert r.status_code == 429 and r.headers["Retry-After"] == "60"
    assert "you already have 2 plans waiting or being made" in r.get_json()["error"]
    assert decoder.calls == decoded  # refused before its photo was read
    assert _post(b).status_code == 202  # someone else still gets in
    r = _post(c)
    assert r.status_code == 429 and "3 plans are already waiting or being made" in r.get_json()["error"]
    # the start page says the same, keeping the form
    page = c.post("/plans", data=plan_form(), content_type="multipart/form-data")
    assert page.status_code == 429 and "3 plans are already waiting" in page.get_data(as_text=True)


def test_a_full_data_directory_answers_507(make_app, decoder):
    app = make_app(MAX_DATA_BYTES=1)
    r = _post(app.test_client())
    assert r.status_code == 507 and "storage for plans is full (its limit is 0.001 kB)" in r.get_json()["error"]
    assert decoder.calls == 0
    assert list(app.extensions["layerplan"].store.plans_dir.iterdir()) == []


def test_the_pixel_count_is_read_from_the_header_before_decoding(make_app, decoder):
    app = make_app(MAX_PHOTO_PIXELS=4000)
    r = _post(app.test_client())  # the test photo is 80 × 60 = 4800 pixels
    assert r.status_code == 413 and r.get_json()["field"] == "image"
    assert ("the photo is 80 × 60 pixels (0.0 megapixels); this server takes at most 0.004 megapixels"
            in r.get_json()["error"])
    assert decoder.calls == 0
    assert _post(app.test_client(), image=png_bytes(quadrants(50, 60))).status_code == 202


def test_at_most_decodes_photos_are_decoded_at_once(make_app, monkeypatch):
    slow = CountingDecoder(forms.load_image, pause_s=0.3)
    monkeypatch.setattr(forms, "load_image", slow)
    app = make_app(DECODES=2, MAX_QUEUED_PER_OWNER=0)
    statuses = []

    def send():
        statuses.append(_post(app.test_client()).status_code)

    threads = [threading.Thread(target=send) for _ in range(5)]
    for t in threads:
        t.start()
    for t in threads:
        t.join()
    assert statuses == [202] * 5 and slow.calls == 5
    assert slow.most == 2


def test_no_free_decode_slot_answers_503(make_app):
    app = make_app(DECODES=1, DECODE_WAIT_S=0.2)
    slots = app.extensions["layerplan"].decodes
    assert slots.acquire(timeout=1)
    try:
        r = _post(app.test_client())
        assert r.status_code == 503 and "busy reading other photos" in r.get_json()["error"]
        assert r.headers["Retry-After"] == "30"
    finally:
        slots.release()
    assert _post(app.test_client()).status_code == 202


def test_a_plan_over_the_size_limit_is_refused_up_front(make_app):
    # the tiny plan is 80 × 60 working pixels (0.8 × 0.6 m at 10 mm), 4 paints, 2 brushes: 38,400
    app = make_app(MAX_PLAN_WORK=30_000)
    r = _post(app.test_client())
    body = r.get_json()
    assert r.status_code == 400 and body["field"] == "pixel_mm"
    assert "0.0048 megapixels × 4 paints × 2 brushes" in body["error"]
    assert "fewer paints or fewer brushes" in body["error"]
    assert _post(app.test_client(), pixel_mm="20").status_code == 202  # a quarter of the pixels


def test_bad_limits_in_the_config_are_named(tmp_path):
    with pytest.raises(RuntimeError, match=r"MAX_QUEUED_PER_OWNER must be a whole number >= 0, got -1"):
        make_web_app(tmp_path / "d", MAX_QUEUED_PER_OWNER=-1)
    with pytest.raises(RuntimeError, match=r"DECODES must be a whole number >= 1, got 0"):
        make_web_app(tmp_path / "d", DECODES=0)


def test_kept_photos_are_capped_in_bytes_oldest_first(tmp_path):
    stash = UploadStash(tmp_path, max_bytes=250)
    first = stash.put(b"a" * 100, "a.png")
    time.sleep(0.01)
    second = stash.put(b"b" * 100, "b.png")
    os.utime(stash.folder / first, (time.time() - 10, time.time() - 10))  # clearly the oldest
    third = stash.put(b"c" * 100, "c.png")
    assert stash.get(first) is None and stash.get(second) is not None and stash.get(third) is not None
    assert sum(size for _, size, _ in stash.kept()) <= 250
    assert stash.put(b"d" * 300, "d.png") is None  # alone over the cap: not kept


def test_refused_forms_cannot_fill_the_disk(make_app):
    # ten refused forms with a photo each: the stash stays under its cap
    photo = png_bytes(np.random.default_rng(0).integers(0, 255, (120, 160, 3), np.uint8))
    app = make_app(UPLOAD_STASH_BYTES=3 * len(photo))
    client = app.test_client()
    for _ in range(10):
        r = client.post("/plans", data=plan_form(image=photo, wall_width="-1"), content_type="multipart/form-data")
        assert r.status_code == 400
    kept = app.extensions["layerplan"].uploads.kept()
    assert 1 <= len(kept) <= 3 and sum(size for _, size, _ in kept) <= 3 * len(photo)


def test_finished_plans_expire_after_the_retention(tmp_path):
    store = PlanStore(tmp_path / "data")
    old, recent, waiting = (store.create(TINY_SETTINGS, b"x") for _ in range(3))
    for plan_id in (old, recent):
        store.mark_running(plan_id)
        store.mark_done(plan_id)
    store._exec("UPDATE plans SET finished_at = ? WHERE id = ?", (time.time() - 31 * 86400, old))
    store._exec("UPDATE plans SET created_at = ? WHERE id = ?", (time.time() - 90 * 86400, waiting))
    assert sweep(store, None, retention_days=30) == [old]
    assert store.get(old) is None and not store.plan_dir(old).exists()
    assert store.get(recent).state == "done" and store.get(waiting).state == "queued"
    assert sweep(store, None, retention_days=0) == []  # 0 keeps plans for good


def _timed_target(data_dir: str, plan_id: str) -> None:
    store = PlanStore(data_dir)
    store.mark_running(plan_id)
    with open(os.path.join(data_dir, f"start-{plan_id}"), "w") as f:
        f.write(repr(time.time()))
    time.sleep(0.3)
    store.mark_done(plan_id)


def test_the_turn_goes_to_the_owner_served_least_recently(tmp_path):
    from layerplan.web import jobs

    runner = LocalProcessRunner.__new__(LocalProcessRunner)  # only the queue, no dispatcher thread
    runner._queues, runner._served, runner._served_count = {}, {}, 0
    for owner, plan_id in (("a", "a1"), ("a", "a2"), ("a", "a3")):
        runner._queues.setdefault(owner, jobs.collections.deque()).append(plan_id)
    assert runner._next_waiting() == "a1"  # a is served before b has sent anything
    runner._queues.setdefault("b", jobs.collections.deque()).extend(["b1", "b2"])
    runner._queues.setdefault("c", jobs.collections.deque()).append("c1")
    assert [runner._next_waiting() for _ in range(6)] == ["b1", "c1", "a2", "b2", "a3", None]


def test_the_queue_takes_owners_in_turn(tmp_path):
    store = PlanStore(tmp_path / "data")
    runner = LocalProcessRunner(store.data_dir, max_workers=1, target=_timed_target)
    try:
        a = [store.create(TINY_SETTINGS, b"x", owner="a") for _ in range(3)]
        b = [store.create(TINY_SETTINGS, b"x", owner="b") for _ in range(2)]
        for plan_id in a + b:  # a's three plans were all sent before b's
            runner.submit(plan_id)
        end = time.monotonic() + 60
        while any(store.get(i).state != "done" for i in a + b) and time.monotonic() < end:
            time.sleep(0.05)
        starts = {i: float((store.data_dir / f"start-{i}").read_text()) for i in a + b}
    finally:
        runner.shutdown()
    order = sorted(starts, key=starts.get)
    # round robin: a, b, a, b, a, whether or not a's first plan started before b's arrived
    assert order == [a[0], b[0], a[1], b[1], a[2]], json.dumps(order)
