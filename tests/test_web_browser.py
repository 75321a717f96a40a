"""The web app in a real browser: Debian's Chromium driven by Playwright against a live server.

What a person does and sees: choose a photo (preview), send the form, watch the bar move
and the plan appear, step through the layers, open the print plan, download the SVG, see
a refused upload explained on the form, delete a plan.

Skipped when /usr/bin/chromium is missing, unless LAYERPLAN_REQUIRE_BROWSER=1 (set by
.ci/run), in which case the tests fail instead.
"""

from __future__ import annotations

import os
import xml.etree.ElementTree as ET

import pytest

from conftest import REPO_ROOT, LiveServer, make_web_app

pytestmark = pytest.mark.browser

CHROMIUM = "/usr/bin/chromium"
CHROMIUM_ARGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking",
                 "--disable-component-update", "--disable-sync", "--no-first-run"]
SAMPLE = REPO_ROOT / "sample_images" / "community-wall.png"  # 900 × 450 px, drawn by make_samples.py
#: seconds to wait for a plan to be made in the browser
PLAN_TIMEOUT_MS = 180_000


def _need_browser():
    missing = None
    if not os.path.exists(CHROMIUM):
        missing = f"{CHROMIUM} is not installed (apt-get install -y chromium)"
    else:
        try:
            import playwright.sync_api  # noqa: F401
        except ImportError:
            missing = "the playwright Python package is not installed"
    if missing:
        if os.environ.get("LAYERPLAN_REQUIRE_BROWSER") == "1":
            pytest.fail(f"browser tests are required (LAYERPLAN_REQUIRE_BROWSER=1) but {missing}")
        pytest.skip(missing)


@pytest.fixture(scope="module")
def browser():
    _need_browser()
    from playwright.sync_api import sync_playwright

    with sync_playwright() as p:
        b = p.chromium.launch(executable_path=CHROMIUM, args=CHROMIUM_ARGS)
        yield b
        b.close()


@pytest.fixture(scope="module")
def server(tmp_path_factory):
    app = make_web_app(tmp_path_factory.mktemp("browser") / "data", WORKERS=1)
    srv = LiveServer(app)
    yield srv
    srv.close()
    app.extensions["layerplan"].close()


@pytest.fixture
def page(browser):
    context = browser.new_context(viewport={"width": 1280, "height": 900}, accept_downloads=True)
    pg = context.new_page()
    errors = []
    pg.on("pageerror", lambda exc: errors.append(str(exc)))
    yield pg
    context.close()
    assert not errors, f"JavaScript errors on the page: {errors}"


def _distinct_colours(page, selector: str) -> int:
    """Distinct RGB colours in an <img> as the browser decoded it (read back through a canvas)."""
    return page.evaluate(
        """(sel) => {
            const img = document.querySelector(sel);
            const c = document.createElement('canvas');
            c.width = img.naturalWidth; c.height = img.naturalHeight;
            const g = c.getContext('2d');
            g.drawImage(img, 0, 0);
            const d = g.getImageData(0, 0, c.width, c.height).data;
            const seen = new Set();
            for (let i = 0; i < d.length; i += 4) seen.add((d[i] << 16) | (d[i + 1] << 8) | d[i + 2]);
            return seen.size;
        }""",
        selector,
    )


def _wait_image(page, selector: str):
    page.wait_for_function("(sel) => { const i = document.querySelector(sel); return i && i.complete && i.naturalWidth > 0; }",
                           arg=selector)


def _fill_plan_form(page, server, *, width="2", height="1", kit="hall", pixel_mm="8"):
    page.goto(server.url + "/")
    page.set_input_files("#image", str(SAMPLE))
    _wait_image(page, "#photo-preview")
    assert page.is_visible("#photo-preview")
    assert page.evaluate("document.querySelector('#photo-preview').naturalWidth") == 900
    assert "900 × 450 px" in page.text_content("#photo-info")
    page.fill("#wall_width", width)
    page.fill("#wall_height", height)
    page.select_option("#kit", kit)
    page.click("details.more summary")
    page.fill("input[name=pixel_mm]", pixel_mm)


@pytest.fixture(scope="module")
def made_plan(browser, server):
    """Make one plan through the form, recording the bar as it moves; return (plan url, bar readings)."""
    context = browser.new_context(viewport={"width": 1280, "height": 900})
    pg = context.new_page()
    _fill_plan_form(pg, server)
    assert pg.input_value("#brushes").replace(" ", "") == "100.0,50.0,25.0,12.0"  # the kit's widths shown
    pg.click("#submit")
    pg.wait_for_selector("#progress, #stepper")
    facts = pg.inner_text("#planning-facts") if pg.query_selector("#planning-facts") else None
    readings = []
    for _ in range(PLAN_TIMEOUT_MS // 100):
        try:
            if pg.query_selector("#stepper"):
                break
            bar = pg.query_selector("#progress .bar")
            if bar:
                readings.append((int(bar.get_attribute("aria-valuenow")), pg.text_content("#stage")))
        except Exception:  # the page navigated to the finished plan between two reads
            pass
        pg.wait_for_timeout(100)
    pg.wait_for_selector("#stepper", timeout=PLAN_TIMEOUT_MS)
    url = pg.url
    context.close()
    return url, readings, facts


def test_bar_moves_while_planning(made_plan):
    url, readings, facts = made_plan
    values = [v for v, _ in readings]
    assert values, "the progress view was never shown"
    assert values == sorted(values), f"the bar went backwards: {values}"
    assert any(0 < v < 100 for v in values), f"the bar never showed progress in between: {values}"
    assert len(set(values)) >= 2, f"the bar did not move: {values}"
    stages = {s for _, s in readings}
    # the stage line follows the planner: besides the line shown while the process starts, at
    # least one of the planner's own stages is caught (which ones depends on the poll timing and
    # the machine: on a fast one the layers can pass between two polls)
    planner_stages = ("fitting", "choosing", "mixing", "measuring", "layer", "relaxing", "taking away",
                      "ordering")
    assert len(stages) >= 2 and any(s.startswith(planner_stages) for s in stages), stages
    # while it waits, the page says what is being planned: the 2 × 1 m surface, 8 paints, the hall kit
    if facts is not None:  # (a very fast plan may be done before the progress view is read)
        text = " ".join(facts.split())
        assert "SURFACE 2 m × 1 m" in text and "PAINTS 8" in text and "BRUSHES 100 / 50 / 25 / 12 mm" in text, text


def test_step_through_the_layers(page, made_plan):
    url = made_plan[0]
    page.goto(url)
    _wait_image(page, "#step-image")
    # 2 m wide at 8 mm a pixel = 250 px (layerplan/settings.py raster_size)
    assert page.evaluate("document.querySelector('#step-image').naturalWidth") == 250
    assert page.text_content("#step-label") == "Layer 4 of 4"
    assert page.is_disabled("#step-next")
    final_colours = _distinct_colours(page, "#step-image")

    page.click("#step-prev")
    assert page.text_content("#step-label") == "Layer 3 of 4"
    assert page.get_attribute("#step-image", "src").endswith("/steps/03.png")
    assert "25 mm brush" in page.text_content("#step-detail")

    page.locator("#step-slider").fill("0")
    assert page.text_content("#step-label") == "Ground"
    # the plan's own ground coats (2 by default, layerplan/quantities.py GROUND_COATS; common practice)
    ground = page.evaluate("""[...document.querySelectorAll('.paint-card tbody tr')]
        .find(tr => [...tr.querySelectorAll('.tag')].some(t => t.textContent.trim() === 'ground'))
        .querySelector('strong').textContent.trim()""")
    assert page.text_content("#step-detail") == f"two flat coats of {ground} everywhere"
    _wait_image(page, "#step-image")
    page.wait_for_function("document.querySelector('#step-image').src.endsWith('/steps/00.png')")
    page.wait_for_function("document.querySelector('#step-image').complete")
    # the ground covers every pixel with one paint (plan.json's rendering rule, layerplan/raster.py)
    assert _distinct_colours(page, "#step-image") == 1
    assert final_colours > 1
    assert page.is_disabled("#step-prev")

    page.keyboard.press("ArrowRight")
    assert page.text_content("#step-label") == "Layer 1 of 4"
    assert "100 mm brush" in page.text_content("#step-detail")

    # the paint card shows every paint as a swatch
    swatches = page.eval_on_selector_all(".paint-card .swatch", "els => els.map(e => getComputedStyle(e).backgroundColor)")
    assert len(swatches) == int(page.text_content(".facts div:nth-child(2) dd"))
    assert len(set(swatches)) == len(swatches)


def test_shopping_list_sizes_stay_on_one_line(page, made_plan):
    page.goto(made_plan[0])
    # every container ("1 × 0.5 L", alone, in a sum, or in a trace amount's sentence) is measured on its own
    cells = page.eval_on_selector_all(".shopping td.buy", """els => els.flatMap(td => {
        const node = td.firstChild, text = td.textContent;
        return [...text.matchAll(/\\d+\\u00a0×\\u00a0[\\d.]+\\u00a0(?:L|qt|gal)/g)].map(m => {
            const r = document.createRange(); r.setStart(node, m.index); r.setEnd(node, m.index + m[0].length);
            return [m[0], new Set([...r.getClientRects()].map(x => Math.round(x.top))).size];
        });
    })""")
    assert cells, "no shopping list"
    for text, lines in cells:  # one container size is never split across lines
        assert lines == 1, (text, lines)


def test_download_the_svg(page, made_plan):
    url = made_plan[0]
    page.goto(url)
    with page.expect_download() as info:
        page.click("#dl-overlay-svg")
    download = info.value
    assert download.suggested_filename.endswith("overlay.svg")
    root = ET.parse(download.path()).getroot()
    assert root.tag == "{http://www.w3.org/2000/svg}svg"
    # the SVG is at wall size, 2 m × 1 m, so it prints or projects to scale (width/height in mm)
    assert (root.get("width"), root.get("height")) == ("2000mm", "1000mm")


def test_open_the_print_plan(page, made_plan):
    url = made_plan[0]
    page.goto(url)
    with page.context.expect_page() as info:
        page.click("#dl-plan-html")
    printable = info.value
    printable.wait_for_load_state()
    assert printable.url.endswith("/files/plan.html")
    text = printable.text_content("body")
    ids = page.eval_on_selector_all(".paint-card tbody strong", "els => els.map(e => e.textContent.trim())")
    assert ids and all(i in text for i in ids)  # the printable plan names every paint of the plan


def test_refused_upload_is_explained_on_the_form(page, server):
    page.goto(server.url + "/")
    page.set_input_files("#image", {"name": "wall-notes.png", "mimeType": "image/png",
                                    "buffer": b"shopping list: white, ochre, two rollers\n"})
    page.fill("#wall_width", "4.5")
    page.click("#submit")
    page.wait_for_selector("#form-error")
    message = page.text_content("#form-error")
    assert "wall-notes.png" in message and "not an image" in message
    assert page.input_value("#wall_width") == "4.5"  # what was typed is kept


def test_zero_width_is_caught_in_the_browser(page, server):
    page.goto(server.url + "/")
    page.set_input_files("#image", str(SAMPLE))
    page.fill("#wall_width", "0")
    page.click("#submit")
    # constraint validation (HTML Living Standard, "min" attribute: rangeUnderflow) keeps the form here
    assert page.evaluate("document.querySelector('#wall_width').validity.rangeUnderflow")
    assert page.url == server.url + "/" and not page.query_selector("#form-error")


def test_a_refused_form_keeps_the_photo(page, server):
    _fill_plan_form(page, server, kit="quick", pixel_mm="20")
    page.fill("#grid", "1mm")  # too fine for a 2 m wall: only the server can tell
    page.click("#submit")
    page.wait_for_selector("#form-error")
    assert "Transfer-grid spacing of 1 mm gives 2000 squares" in page.text_content("#form-error")
    assert page.get_attribute("#grid", "aria-invalid") == "true"
    assert " ".join(page.text_content("#photo-info").split()) == "using community-wall.png — choose another"
    _wait_image(page, "#photo-preview")
    assert page.evaluate("document.querySelector('#photo-preview').naturalWidth") == 900  # the kept photo
    assert not page.evaluate("document.querySelector('#image').required")
    assert page.input_value("#wall_width") == "2" and page.input_value("#grid") == "1mm"
    page.fill("#grid", "50cm")
    page.click("#submit")
    page.wait_for_selector("#progress, #stepper")
    assert page.text_content("h1") == "community-wall.png"  # planned from the kept photo


def test_delete_a_plan(page, server):
    _fill_plan_form(page, server, kit="quick", pixel_mm="20")
    page.click("#submit")
    # delete from the finished plan's page: the progress view reloads itself when the plan
    # is done, and a click landing during that reload would be lost
    page.wait_for_selector("#stepper", timeout=PLAN_TIMEOUT_MS)
    plan_url = page.url
    page.on("dialog", lambda dialog: dialog.accept())
    page.click("#delete")
    page.wait_for_url(server.url + "/")
    links = page.eval_on_selector_all(".plan-list a", "els => els.map(e => e.href)")
    assert plan_url not in links
    assert page.goto(plan_url).status == 404


def test_the_wall_scale_drawing_fits_the_window(page, made_plan):
    # overlay.svg is 2 m × 1 m in millimetres (far wider than any screen at CSS's 96 px per inch); the page
    # fits it whole into the window by CSS, keeping its 2:1 shape, and the file itself is left at wall size
    url = made_plan[0]
    page.goto(url)
    page.locator("#overlay-image").scroll_into_view_if_needed()
    _wait_image(page, "#overlay-image")
    box = page.locator("#overlay-image").bounding_box()
    view = page.viewport_size
    assert 0 < box["width"] <= view["width"] and 0 < box["height"] <= view["height"]
    assert box["width"] / box["height"] == pytest.approx(2.0, rel=0.02)
    src = page.get_attribute("#overlay-image", "src")
    assert src.endswith("/overlay.svg")
    svg = page.request.get(page.url.split("/plans/")[0] + src if src.startswith("/") else src).text()
    root = ET.fromstring(svg)
    assert (root.get("width"), root.get("height")) == ("2000mm", "1000mm")
