"""Owners in a real browser: two browser profiles (two students) on one server. Plans are never planned
here (a job runner that only takes them), so each test is about what each person sees."""

from __future__ import annotations

import pytest

from conftest import LiveServer, make_web_app
from test_web_browser import SAMPLE, browser  # noqa: F401 - the module's Chromium fixture
from test_web_owners import RecordingRunner

pytestmark = pytest.mark.browser


@pytest.fixture
def shared_server(tmp_path):
    app = make_web_app(tmp_path / "data", JOB_RUNNER=RecordingRunner)
    srv = LiveServer(app)
    yield srv
    srv.close()
    app.extensions["layerplan"].close()


def _student(browser):  # noqa: F811 - the fixture imported above
    context = browser.new_context(viewport={"width": 1280, "height": 900})
    return context, context.new_page()


def test_two_students_see_their_own_plans_and_share_by_link(browser, shared_server):  # noqa: F811
    (ca, a), (cb, b) = _student(browser), _student(browser)
    try:
        a.goto(shared_server.url + "/")
        a.set_input_files("#image", str(SAMPLE))
        a.fill("#wall_width", "2")
        a.fill("#wall_height", "1")
        a.click("#submit")
        a.wait_for_selector("#progress")
        link = a.url
        a.goto(shared_server.url + "/")
        assert a.locator(".plan-item").count() == 1
        b.goto(shared_server.url + "/")
        assert b.locator(".plan-item").count() == 0 and "No plans yet" in b.inner_text(".recent")
        b.goto(link)  # the link passed on: b may look, not delete
        assert b.query_selector("#delete") is None
        assert "only the person who made it can change or delete it" in b.inner_text("#sharing")
        a.goto(link)
        a.click("#private")
        a.wait_for_selector("text=Private: only you")
        response = b.goto(link)
        assert response.status == 404
    finally:
        ca.close()
        cb.close()
