"""Owners on a shared server (layerplan/web/owners.py): two browsers, a script with the header, the admin.

Plans here are never planned: the app's job runner is one that only records what it was
given, so each test is about who may list, view, change and delete, not about planning.
"""

from __future__ import annotations

import re

import pytest

from conftest import make_web_app, plan_form
from layerplan.web.jobs import JobRunner
from layerplan.web.owners import COOKIE, HEADER

ADMIN = "an-admin-token-for-the-tests-0123456789"


class RecordingRunner(JobRunner):
    """Takes plans and never runs them (they stay queued)."""

    def __init__(self, *_):
        self.submitted: list[str] = []

    def submit(self, plan_id):
        self.submitted.append(plan_id)

    def cancel(self, plan_id):
        pass

    def shutdown(self, *, wait=False):
        pass


@pytest.fixture
def shared(tmp_path):
    app = make_web_app(tmp_path / "data", JOB_RUNNER=RecordingRunner, ADMIN_TOKEN=ADMIN, MAX_QUEUED_PER_OWNER=0)
    yield app
    app.extensions["layerplan"].close()


def _post(client, **fields):
    r = client.post("/api/plans", data=plan_form(**fields), content_type="multipart/form-data")
    assert r.status_code == 202, r.get_json()
    return r


def test_each_browser_gets_its_own_unguessable_httponly_cookie(shared):
    a, b = shared.test_client(), shared.test_client()
    ra, rb = a.get("/"), b.get("/")
    cookies = [r.headers.get("Set-Cookie", "") for r in (ra, rb)]
    tokens = [re.match(rf"{COOKIE}=([^;]+)", c).group(1) for c in cookies]
    assert tokens[0] != tokens[1]
    # 32 random bytes in URL-safe base64 are 43 characters (RFC 4648 section 5): 256 bits, not guessable
    assert all(len(t) >= 43 for t in tokens)
    for c in cookies:
        assert "HttpOnly" in c and "SameSite=Lax" in c and "Path=/" in c
    # the browser keeps its token: the next request sends it and gets no new one
    again = a.get("/")
    assert re.match(rf"{COOKIE}={re.escape(tokens[0])}", again.headers.get("Set-Cookie", ""))
    assert HEADER not in again.headers


def test_two_browsers_see_only_their_own_plans(shared):
    a, b = shared.test_client(), shared.test_client()
    mine = _post(a).get_json()["id"]
    theirs = _post(b, seed="2").get_json()["id"]
    assert [p["id"] for p in a.get("/api/plans").get_json()["plans"]] == [mine]
    assert [p["id"] for p in b.get("/api/plans").get_json()["plans"]] == [theirs]
    page = a.get("/").get_data(as_text=True)
    assert f"/plans/{mine}" in page and f"/plans/{theirs}" not in page
    # the link is shareable: b may view a's plan, and is told it is not theirs
    status = b.get(f"/api/plans/{mine}").get_json()
    assert status["yours"] is False and a.get(f"/api/plans/{mine}").get_json()["yours"] is True
    view = b.get(f"/plans/{mine}").get_data(as_text=True)
    assert 'id="delete"' not in view and "only the person who made it" in view
    assert 'id="delete"' in a.get(f"/plans/{mine}").get_data(as_text=True)


def test_delete_needs_the_owner(shared):
    a, b = shared.test_client(), shared.test_client()
    plan_id = _post(a).get_json()["id"]
    r = b.delete(f"/api/plans/{plan_id}")
    assert r.status_code == 403 and "only the person who made this plan" in r.get_json()["error"]
    assert b.post(f"/plans/{plan_id}/delete").status_code == 403
    assert a.get(f"/api/plans/{plan_id}").status_code == 200  # still there
    assert a.delete(f"/api/plans/{plan_id}").status_code == 204
    assert a.get(f"/api/plans/{plan_id}").status_code == 404


def test_a_private_plan_is_not_found_by_others(shared):
    a, b = shared.test_client(), shared.test_client()
    plan_id = _post(a).get_json()["id"]
    assert b.patch(f"/api/plans/{plan_id}", json={"private": True}).status_code == 403
    r = a.patch(f"/api/plans/{plan_id}", json={"private": True})
    assert r.status_code == 200 and r.get_json()["private"] is True
    for url in (f"/api/plans/{plan_id}", f"/plans/{plan_id}", f"/plans/{plan_id}/photo"):
        assert b.get(url).status_code == 404, url
        assert a.get(url).status_code == 200, url
    # nor its machine programs (the owner's answer depends on whether planning has finished)
    assert b.get(f"/plans/{plan_id}/machine?format=svg").status_code == 404
    for url in (f"/plans/{plan_id}/project", f"/plans/{plan_id}/site"):
        assert b.get(url).status_code == 404, url
    assert a.get(f"/plans/{plan_id}/machine?format=svg").status_code != 404
    # others cannot even learn it exists by trying to delete it
    assert b.delete(f"/api/plans/{plan_id}").status_code == 404
    # the page's switch makes it shareable again
    assert a.post(f"/plans/{plan_id}/private", data={"private": "0"}).status_code == 303
    assert b.get(f"/api/plans/{plan_id}").status_code == 200
    # private from the start, by the form field
    hidden = _post(a, private="1").get_json()
    assert hidden["private"] is True and b.get(hidden["url"]).status_code == 404


def test_a_script_uses_the_header(shared):
    script = shared.test_client(use_cookies=False)
    first = _post(script)
    token = first.headers[HEADER]  # a client with no token is given one
    plan_id = first.get_json()["id"]
    assert script.get("/api/plans").get_json()["plans"] == []  # no token sent: someone new
    listed = script.get("/api/plans", headers={HEADER: token}).get_json()["plans"]
    assert [p["id"] for p in listed] == [plan_id]
    assert script.delete(f"/api/plans/{plan_id}").status_code == 403
    assert script.delete(f"/api/plans/{plan_id}", headers={HEADER: token}).status_code == 204


def test_the_admin_sees_and_deletes_every_plan(shared):
    a, b = shared.test_client(), shared.test_client()
    ids = {_post(a).get_json()["id"], _post(b, seed="3").get_json()["id"]}
    admin = shared.test_client(use_cookies=False)
    listed = {p["id"] for p in admin.get("/api/plans", headers={HEADER: ADMIN}).get_json()["plans"]}
    assert listed == ids
    victim = next(iter(ids))
    a.patch(f"/api/plans/{victim}", json={"private": True})
    b.patch(f"/api/plans/{victim}", json={"private": True})
    assert admin.get(f"/api/plans/{victim}", headers={HEADER: ADMIN}).status_code == 200
    assert admin.delete(f"/api/plans/{victim}", headers={HEADER: ADMIN}).status_code == 204
    # a wrong admin token is just someone new
    assert admin.get("/api/plans", headers={HEADER: ADMIN + "x"}).get_json()["plans"] == []


def test_the_admin_signs_in_in_a_browser(shared):
    browser = shared.test_client()
    _post(shared.test_client())
    r = browser.post("/admin", data={"token": "not it"})
    assert r.status_code == 403 and "not the admin token" in r.get_data(as_text=True)
    r = browser.post("/admin", data={"token": ADMIN})
    assert r.status_code == 303 and "HttpOnly" in r.headers["Set-Cookie"]
    page = browser.get("/").get_data(as_text=True)
    assert "All plans (signed in as admin)" in page and page.count('class="plan-item') == 1


def test_a_short_admin_token_is_refused_at_start(tmp_path):
    with pytest.raises(RuntimeError, match=r"ADMIN_TOKEN must be at least 16 characters \(it is 5\)"):
        make_web_app(tmp_path / "data", ADMIN_TOKEN="12345")


def test_no_admin_page_without_a_token(client):
    assert client.get("/admin").status_code == 404
