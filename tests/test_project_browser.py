"""The projector view (/plans/<id>/project, templates/project.html, static/project.js) in a real browser.

What a muralist does at night: step through the layers with the arrow keys, drag the four
corners onto the wall's, and find them where they left them on the next visit. The corner
check reads the transform back through the browser's own DOMMatrix (W3C Geometry Interfaces
Module Level 1), not through our JavaScript.
"""

from __future__ import annotations

import pytest

from conftest import LiveServer, make_web_app, plan_form, wait_for_plan
from test_web_browser import CHROMIUM, CHROMIUM_ARGS, _need_browser

pytestmark = pytest.mark.browser


@pytest.fixture(scope="module")
def planned(tmp_path_factory):
    _need_browser()
    app = make_web_app(tmp_path_factory.mktemp("project") / "data", WORKERS=1)
    client = app.test_client()
    answer = client.post("/api/plans", data=plan_form(), content_type="multipart/form-data")
    assert answer.status_code in (200, 201, 202), answer.get_data(as_text=True)
    plan_id = answer.get_json()["id"]
    states = wait_for_plan(client, plan_id)
    assert states[-1]["state"] == "done", states[-1]
    srv = LiveServer(app)
    yield srv, plan_id
    srv.close()
    app.extensions["layerplan"].close()


@pytest.fixture(scope="module")
def browser():
    _need_browser()
    from playwright.sync_api import sync_playwright

    with sync_playwright() as p:
        b = p.chromium.launch(executable_path=CHROMIUM, args=CHROMIUM_ARGS)
        yield b
        b.close()


def _stage_corner(page, u: float, v: float):
    """Where the stage's point (u, v) (fractions of its size) lands on screen, by the browser's matrix."""
    return page.evaluate(
        """([u, v]) => {
            const st = document.getElementById('stage');
            const m = new DOMMatrix(getComputedStyle(st).transform);
            const p = m.transformPoint(new DOMPoint(u * st.offsetWidth, v * st.offsetHeight));
            return [p.x / p.w, p.y / p.w];
        }""", [u, v])


def test_projector_steps_layers_and_remembers_its_corners(browser, planned):
    srv, plan_id = planned
    context = browser.new_context(viewport={"width": 1200, "height": 800})
    page = context.new_page()
    errors = []
    page.on("pageerror", lambda exc: errors.append(str(exc)))
    page.goto(f"{srv.url}/plans/{plan_id}/project")
    page.wait_for_selector("#stage svg")
    assert page.text_content("#layer-label").startswith("Layer 1 of 2")
    assert page.evaluate("getComputedStyle(document.body).backgroundColor") == "rgb(0, 0, 0)"
    page.keyboard.press("ArrowRight")
    page.wait_for_function("document.getElementById('stage').dataset.shown === '2'")
    assert page.text_content("#layer-label").startswith("Layer 2 of 2")
    assert page.query_selector("#stage svg .layer") is not None  # the strokes, drawn on black
    page.keyboard.press("ArrowRight")  # past the last layer: stays there
    assert page.text_content("#layer-label").startswith("Layer 2 of 2")
    page.keyboard.press("ArrowLeft")
    page.wait_for_function("document.getElementById('stage').dataset.shown === '1'")

    # drag the bottom-right corner to where the wall's is (keystone from a projector below)
    box = page.query_selector(".corner[data-corner='2']").bounding_box()
    start = (box["x"] + box["width"] / 2, box["y"] + box["height"] / 2)
    target = (start[0] - 90.0, start[1] - 40.0)
    page.mouse.move(*start)
    page.mouse.down()
    page.mouse.move(target[0], target[1], steps=8)
    page.mouse.up()
    x, y = _stage_corner(page, 1.0, 1.0)
    assert abs(x - target[0]) <= 1.0 and abs(y - target[1]) <= 1.0

    # another visit on this device: the corners, the layer and the grid switch come back
    page.keyboard.press("g")
    page.reload()
    page.wait_for_selector("#stage svg")
    x, y = _stage_corner(page, 1.0, 1.0)
    assert abs(x - target[0]) <= 1.0 and abs(y - target[1]) <= 1.0
    assert page.text_content("#layer-label").startswith("Layer 1 of 2")
    assert "grid" not in page.evaluate("document.body.className")
    context.close()
    assert not errors, errors


def test_projector_page_of_a_missing_plan_is_404(planned):
    import urllib.error
    import urllib.request

    srv, _ = planned
    with pytest.raises(urllib.error.HTTPError) as err:
        urllib.request.urlopen(f"{srv.url}/plans/nosuchplan/project")
    assert err.value.code == 404


def test_click_the_wall_corners_on_a_site_photo(browser, planned, tmp_path):
    from PIL import Image
    from skimage import data

    srv, plan_id = planned
    photo = tmp_path / "site.png"
    Image.fromarray(data.coffee()).save(photo)  # scikit-image's test photo, 600 × 400 px, as the "site"
    context = browser.new_context(viewport={"width": 1200, "height": 900})
    page = context.new_page()
    errors = []
    page.on("pageerror", lambda exc: errors.append(str(exc)))
    page.goto(f"{srv.url}/plans/{plan_id}/site")
    page.set_input_files("#site-photo", str(photo))
    page.wait_for_function("document.getElementById('site-image').naturalWidth === 600")
    box = page.query_selector("#site-image").bounding_box()
    scale = box["width"] / 600.0
    for x, y in ((100, 80), (500, 60), (520, 330), (90, 350)):  # photo pixels
        page.mouse.click(box["x"] + x * scale, box["y"] + y * scale)
    page.wait_for_selector("#site-result:not([hidden])", timeout=60_000)
    page.wait_for_function("document.getElementById('site-result').naturalWidth > 0")
    assert page.evaluate("document.getElementById('site-result').naturalWidth") == 600
    assert "Done" in page.text_content("#site-status")
    assert page.get_attribute("#site-download", "href").startswith("blob:")
    context.close()
    assert not errors, errors


def test_openings_typed_on_the_start_page_are_drawn_on_the_preview(browser, planned, tmp_path):
    from PIL import Image

    srv, _ = planned
    photo = tmp_path / "p.png"
    Image.new("RGB", (400, 200), (120, 160, 200)).save(photo)  # 2:1, as the 4 × 2 m wall: no crop
    context = browser.new_context(viewport={"width": 1200, "height": 900})
    page = context.new_page()
    page.goto(srv.url + "/")
    page.set_input_files("#image", str(photo))
    page.wait_for_function("document.getElementById('photo-preview').naturalWidth === 400")
    page.fill("#wall_width", "4")
    page.fill("#wall_height", "2")
    page.fill("#openings", "1,0.5,1,1m\n3,1,0.5,1m")
    rects = page.evaluate("""() => Array.from(document.querySelectorAll('#openings-preview rect.opening'))
        .map(r => ['x', 'y', 'width', 'height'].map(k => parseFloat(r.getAttribute(k))))""")
    # 100 photo px per metre of wall: the rectangles in the photo's own pixels
    assert rects == [[100.0, 50.0, 100.0, 100.0], [300.0, 100.0, 50.0, 100.0]]
    preview = page.query_selector("#photo-preview").bounding_box()
    drawn = page.query_selector("#openings-preview").bounding_box()
    assert abs(drawn["x"] - preview["x"]) < 1 and abs(drawn["width"] - preview["width"]) < 1
    context.close()
