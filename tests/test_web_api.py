"""The JSON API and the form pages, through Flask's test client (layerplan/web/api.py, pages.py, forms.py).

Every route and every documented refusal is exercised; refusals must be a 4xx with
``{"error": ...}`` naming the problem, must not create a plan, and must leave the server
serving (a good plan submitted alongside still finishes).
"""

from __future__ import annotations

import io
import json
import re
import struct
import xml.etree.ElementTree as ET
import zlib

import numpy as np
import pytest
from PIL import Image

from conftest import TINY_PLAN, make_web_app, plan_form, png_bytes, quadrants, wait_for_plan
from layerplan.plan import Plan

#: plan ids are 16 hex digits (layerplan/web/store.py)
ID_RE = r"^[0-9a-f]{16}$"


def _post(client, **kw):
    return client.post("/api/plans", data=plan_form(**kw), content_type="multipart/form-data")


def _plan_dirs(app):
    return sorted(p.name for p in app.extensions["layerplan"].store.plans_dir.iterdir())


def _png_chunk(kind: bytes, data: bytes) -> bytes:
    # PNG chunk layout: length, type, data, CRC-32 over type+data (ISO/IEC 15948:2004, 5.3)
    return struct.pack(">I", len(data)) + kind + data + struct.pack(">I", zlib.crc32(kind + data) & 0xFFFFFFFF)


def _bomb_png(side: int = 20_000) -> bytes:
    """A valid PNG header declaring side × side pixels (400 megapixels) with almost no data."""
    ihdr = struct.pack(">IIBBBBB", side, side, 8, 2, 0, 0, 0)  # 8-bit RGB (ISO/IEC 15948:2004, 11.2.2)
    idat = zlib.compress(b"\x00" * 1000)
    return b"\x89PNG\r\n\x1a\n" + _png_chunk(b"IHDR", ihdr) + _png_chunk(b"IDAT", idat) + _png_chunk(b"IEND", b"")


# ------------------------------------------------------------------------- the happy path
def test_submit_poll_and_fetch_outputs(client):
    r = _post(client)
    assert r.status_code == 202
    body = r.get_json()
    assert re.match(ID_RE, body["id"])
    assert body["url"] == f"/api/plans/{body['id']}"
    assert r.headers["Location"] == body["url"]
    assert body["state"] in ("queued", "running")

    seen = wait_for_plan(client, body["id"])
    final = seen[-1]
    assert final["state"] == "done", final["message"]
    progress = [s["progress"] for s in seen]
    assert progress == sorted(progress), "progress went backwards"
    assert progress[-1] == 1.0
    assert set(final) >= {"id", "state", "progress", "message", "files"}
    for name in ("plan.json", "final.png", "overlay.svg", "steps/00.png", "steps/02.png"):
        assert final["files"][name] == f"/api/plans/{body['id']}/files/{name}"

    r = client.get(final["files"]["plan.json"])
    assert r.status_code == 200 and r.mimetype == "application/json"
    plan = Plan.from_json(r.get_data(as_text=True))
    # 0.8 m × 0.6 m = 800 × 600 mm (SI: 1 m = 1000 mm); 10 mm pixels -> 80 × 60 px
    assert (plan.wall_width_mm, plan.wall_height_mm) == (800.0, 600.0)
    assert (plan.width_px, plan.height_px) == (80, 60)
    assert [layer.brush_width_mm for layer in plan.layers] == [40.0, 20.0]
    assert len(plan.palette) == 4

    r = client.get(final["files"]["final.png"])
    assert r.mimetype == "image/png"
    assert Image.open(io.BytesIO(r.data)).size == (80, 60)

    r = client.get(final["files"]["overlay.svg"])
    assert r.mimetype == "image/svg+xml"
    root = ET.fromstring(r.data)
    assert root.tag.endswith("svg") and root.get("width") == "800mm"

    r = client.get(final["files"]["overlay.svg"] + "?download=1")
    assert r.headers["Content-Disposition"].startswith("attachment")


def test_list_and_delete(client, app):
    ids = [_post(client).get_json()["id"] for _ in range(2)]
    listed = client.get("/api/plans").get_json()["plans"]
    assert [p["id"] for p in listed] == ids[::-1]  # newest first
    wait_for_plan(client, ids[0])

    r = client.delete(f"/api/plans/{ids[0]}")
    assert r.status_code == 204
    assert client.get(f"/api/plans/{ids[0]}").status_code == 404
    assert ids[0] not in _plan_dirs(app)
    # deleting a plan that may still be queued or running stops it and removes it too
    assert client.delete(f"/api/plans/{ids[1]}").status_code == 204
    assert client.get("/api/plans").get_json()["plans"] == []
    r = client.delete(f"/api/plans/{ids[1]}")
    assert r.status_code == 404
    assert "no plan" in r.get_json()["error"]


def test_brush_kits_route(client):
    kits = client.get("/api/kits").get_json()["kits"]
    assert kits and all(k["brushes_mm"] == sorted(k["brushes_mm"], reverse=True) for k in kits)
    # a kit chosen by name plans with its widths
    kit = kits[-1]
    r = _post(client, brushes=None, kit=kit["id"])
    assert r.status_code == 202
    assert r.get_json()["settings"]["brushes_mm"] == kit["brushes_mm"]


def test_wall_in_feet_is_converted_exactly(client):
    # 1 ft = 304.8 mm exactly (international yard and pound agreement, 1959; NIST SP 811 App. B)
    r = _post(client, wall_width="3", wall_height="2", unit="ft", pixel_mm="20")
    assert r.status_code == 202
    s = r.get_json()["settings"]
    assert s["wall_width_mm"] == pytest.approx(914.4) and s["wall_height_mm"] == pytest.approx(609.6)
    assert s["wall_unit"] == "ft"


def test_height_follows_the_photo_when_blank(client):
    # quadrants() is 80 × 60 px, so a 0.8 m wide wall is 0.6 m high
    r = _post(client, wall_height="")
    assert r.status_code == 202
    wait_for_plan(client, r.get_json()["id"])
    plan = Plan.from_json(client.get(f"/api/plans/{r.get_json()['id']}/files/plan.json").get_data(as_text=True))
    assert plan.wall_height_mm == pytest.approx(600.0)


# ------------------------------------------------------------------------------- refusals
BAD_REQUESTS = [
    # (what, form overrides, image bytes or None, status, message pattern)
    ("text file named .png", {}, b"this is just some text, not a picture\n" * 20, 415, r"not an image"),
    ("truncated PNG", {}, png_bytes(np.random.default_rng(0).integers(0, 255, (64, 64, 3), np.uint8))[:400],
     400, r"truncated or corrupt"),
    ("decompression bomb", {}, _bomb_png(), 400, r"decompression bomb"),
    ("1×1 image", {}, png_bytes(np.zeros((1, 1, 3), np.uint8)), 400, r"1×1 px.*at least 16 px"),
    ("negative wall", {"wall_width": "-2"}, None, 400, r"wall_width must be > 0, got -2 m"),
    ("zero wall", {"wall_height": "0"}, None, 400, r"wall_height must be > 0, got 0 m"),
    ("absurd wall", {"wall_width": "5000"}, None, 400, r"wall_width must be at most 100 m"),
    ("not a number", {"wall_width": "wide"}, None, 400, r"wall_width must be a number, got 'wide'"),
    ("infinite wall", {"wall_width": "inf"}, None, 400, r"wall_width must be a finite number"),
    ("500 paints", {"paints": "500"}, None, 400, r"paints must be a whole number from 2 to 32, got 500"),
    ("fractional paints", {"paints": "4.5"}, None, 400, r"paints must be a whole number, got '4.5'"),
    ("unknown unit", {"unit": "furlong"}, None, 400, r"unknown unit 'furlong'; valid units: m, cm, mm, ft, in"),
    ("bad brushes", {"brushes": "40,,20"}, None, 400, r"entry 2 is empty"),
    ("same brush twice", {"brushes": "40,40"}, None, 400, r"brush widths must differ"),
    ("unknown kit", {"brushes": None, "kit": "spray"}, None, 400, r"unknown brush kit 'spray'"),
    ("unknown fit", {"fit": "stretch"}, None, 400, r"fit must be one of cover, contain, got 'stretch'"),
    ("negative seed", {"seed": "-1"}, None, 400, r"seed must be a whole number >= 0"),
    ("raster too big", {"wall_width": "90", "wall_height": "90", "pixel_mm": "1"}, None, 400,
     r"working raster of 90000x90000 px is too large"),
    ("raster too small", {"pixel_mm": "500"}, None, 400, r"working raster of 2x1 px is too small"),
    ("unknown inventory choice", {"inventory": "borrowed"}, None, 400, r"inventory must be one of default"),
]


@pytest.mark.parametrize("what,fields,image,status,pattern", BAD_REQUESTS, ids=[b[0] for b in BAD_REQUESTS])
def test_bad_input_is_refused_with_a_message(client, app, what, fields, image, status, pattern):
    before = _plan_dirs(app)
    r = _post(client, image=image, **fields)
    assert r.status_code == status, r.get_data(as_text=True)
    assert r.mimetype == "application/json"
    assert re.search(pattern, r.get_json()["error"]), r.get_json()["error"]
    assert _plan_dirs(app) == before, "a refused request left a plan behind"
    assert client.get("/api/plans").get_json()["plans"] == []


@pytest.mark.parametrize("what,fields,image,status,pattern", BAD_REQUESTS, ids=[b[0] for b in BAD_REQUESTS])
def test_parse_plan_request_raises(what, fields, image, status, pattern):
    from werkzeug.datastructures import FileStorage, MultiDict

    from layerplan.web.forms import RequestError, parse_plan_request

    data = plan_form(image=image, **fields)
    stream, name = data.pop("image")
    with pytest.raises(RequestError, match=pattern) as info:
        parse_plan_request(MultiDict(data), {"image": FileStorage(stream, filename=name)})
    assert info.value.status == status


def test_missing_photo(client):
    r = client.post("/api/plans", data=dict(TINY_PLAN), content_type="multipart/form-data")
    assert r.status_code == 400
    assert re.search(r"no photo: send the image file in the form field 'image'", r.get_json()["error"]), r.get_json()["error"]
    r = client.post("/api/plans", data=plan_form(image=b""), content_type="multipart/form-data")
    assert r.status_code == 400
    assert "empty" in r.get_json()["error"]


def test_upload_over_the_size_limit_is_413(tmp_path):
    app = make_web_app(tmp_path / "data", MAX_CONTENT_LENGTH=200_000)
    try:
        client = app.test_client()
        big = png_bytes(np.random.default_rng(1).integers(0, 255, (400, 400, 3), np.uint8))  # ~480 kB, noise
        assert len(big) > 200_000
        r = client.post("/api/plans", data=plan_form(image=big), content_type="multipart/form-data")
        assert r.status_code == 413
        assert re.search(r"too large: at most 200 kB", r.get_json()["error"]), r.get_json()["error"]
        # and the server carries on
        r = client.post("/api/plans", data=plan_form(), content_type="multipart/form-data")
        assert r.status_code == 202
    finally:
        app.extensions["layerplan"].close()


def test_bad_input_does_not_disturb_a_plan_in_progress(client):
    good = _post(client).get_json()["id"]
    for _, fields, image, status, _ in BAD_REQUESTS[:6]:
        assert _post(client, image=image, **fields).status_code == status
    assert wait_for_plan(client, good)[-1]["state"] == "done"
    again = _post(client).get_json()["id"]
    assert wait_for_plan(client, again)[-1]["state"] == "done"


def test_queue_limit_answers_503(tmp_path):
    app = make_web_app(tmp_path / "data", MAX_QUEUED=0)
    try:
        r = app.test_client().post("/api/plans", data=plan_form(), content_type="multipart/form-data")
        assert r.status_code == 503 and r.headers["Retry-After"] == "60"
        assert re.search(r"0 plans are already waiting", r.get_json()["error"]), r.get_json()["error"]
    finally:
        app.extensions["layerplan"].close()


def test_unknown_ids_and_methods(client):
    r = client.get("/api/plans/0123456789abcdef")
    assert r.status_code == 404 and "no plan with id '0123456789abcdef'" in r.get_json()["error"]
    r = client.get("/api/plans/../../etc")
    assert r.status_code == 404 and r.mimetype == "application/json"
    r = client.put("/api/plans")
    assert r.status_code == 405 and "method not allowed" in r.get_json()["error"]
    r = client.get("/api/nothing-here")
    assert r.status_code == 404 and r.mimetype == "application/json"


# ----------------------------------------------------------------- files stay inside the plan
def test_file_route_serves_only_the_plans_outputs(client, app):
    plan_id = _post(client, name="../../evil.png").get_json()["id"]
    assert wait_for_plan(client, plan_id)[-1]["state"] == "done"
    store = app.extensions["layerplan"].store
    base = f"/api/plans/{plan_id}/files/"
    for name in ("../upload", "../../layerplan.sqlite3", "%2e%2e/upload", "..%2fupload", "/etc/passwd",
                 "steps/../../upload", "upload", "steps", "plan.json/", "nonexistent.png"):
        r = client.get(base + name, follow_redirects=True)  # "files//etc" is redirected to "files/etc"
        assert r.status_code == 404, name
        assert r.mimetype == "application/json"
    # the client's file name is shown, never used as a path
    record = client.get(f"/api/plans/{plan_id}").get_json()
    assert record["source_name"] == "evil.png"
    everything = [p.name for p in store.data_dir.rglob("*")]
    assert "evil.png" not in everything
    assert (store.plan_dir(plan_id) / "upload").read_bytes() == png_bytes(quadrants())


def test_files_of_an_unfinished_plan_are_not_served(tmp_path):
    # no workers run here, so the plan stays queued
    class Idle:
        def submit(self, plan_id): pass
        def cancel(self, plan_id): pass
        def shutdown(self, *, wait=False): pass

    app = make_web_app(tmp_path / "data", JOB_RUNNER=lambda app, store: Idle())
    try:
        client = app.test_client()
        plan_id = _post(client).get_json()["id"]
        status = client.get(f"/api/plans/{plan_id}").get_json()
        assert status["state"] == "queued" and status["files"] == {}
        r = client.get(f"/api/plans/{plan_id}/files/plan.json")
        assert r.status_code == 404 and "queued" in r.get_json()["error"]
    finally:
        app.extensions["layerplan"].close()


# ------------------------------------------------------------------------------------ pages
def test_start_page_has_the_form(client):
    r = client.get("/")
    assert r.status_code == 200
    html = r.get_data(as_text=True)
    for field in ('name="image"', 'name="wall_width"', 'name="wall_height"', 'name="unit"', 'name="paints"',
                  'name="kit"', 'name="brushes"', 'name="fit"'):
        assert field in html
    assert "Recent plans" in html


def test_form_error_rerenders_the_form_with_the_message(client):
    data = plan_form(paints="500", wall_width="2.5")
    r = client.post("/plans", data=data, content_type="multipart/form-data")
    assert r.status_code == 400
    html = r.get_data(as_text=True)
    assert "paints must be a whole number from 2 to 32, got 500" in html
    assert 'value="2.5"' in html and 'value="500"' in html  # what was typed is kept
    assert client.get("/api/plans").get_json()["plans"] == []


def test_form_upload_too_large_rerenders_the_form(tmp_path):
    app = make_web_app(tmp_path / "data", MAX_CONTENT_LENGTH=50_000)
    try:
        big = png_bytes(np.random.default_rng(2).integers(0, 255, (200, 200, 3), np.uint8))
        r = app.test_client().post("/plans", data=plan_form(image=big), content_type="multipart/form-data")
        assert r.status_code == 413
        assert "the photo is too large" in r.get_data(as_text=True)
        assert 'id="plan-form"' in r.get_data(as_text=True)
    finally:
        app.extensions["layerplan"].close()


def test_form_submit_view_and_delete(client):
    r = client.post("/plans", data=plan_form(), content_type="multipart/form-data")
    assert r.status_code == 303
    page = r.headers["Location"]
    plan_id = page.rsplit("/", 1)[-1]
    assert page == f"/plans/{plan_id}"
    html = client.get(page).get_data(as_text=True)
    assert 'id="progress"' in html or 'id="stepper"' in html

    wait_for_plan(client, plan_id)
    html = client.get(page).get_data(as_text=True)
    doc = json.loads(client.get(f"/api/plans/{plan_id}/files/plan.json").data)
    assert 'id="stepper"' in html and 'id="step-slider"' in html
    for paint in doc["palette"]:  # the paint card lists every paint of the plan
        assert paint["id"] in html and paint["srgb"] in html
    steps = json.loads(html.split('id="steps-data">', 1)[1].split("</script>", 1)[0])
    assert [s["url"].rsplit("/", 1)[-1] for s in steps] == ["00.png", "01.png", "02.png"]
    assert "overlay.svg" in html and "plan.json" in html
    assert client.get(f"/plans/{plan_id}/photo").mimetype == "image/png"

    r = client.post(f"/plans/{plan_id}/delete")
    assert r.status_code == 303 and r.headers["Location"] == "/"
    r = client.get(page)
    assert r.status_code == 404 and "no plan" in r.get_data(as_text=True)


def test_failed_plan_page_shows_the_message(client, app):
    store = app.extensions["layerplan"].store
    plan_id = store.create({"wall_width_mm": 800.0}, b"x")
    store.mark_failed(plan_id, "the photo could not be read")
    html = client.get(f"/plans/{plan_id}").get_data(as_text=True)
    assert "the photo could not be read" in html and 'role="alert"' in html


# ------------------------------------------------------------------------------ serve command
@pytest.mark.parametrize("argv,pattern", [
    (["serve", "--port", "0"], r"--port must be from 1 to 65535, got 0"),
    (["serve", "--port", "5000", "--workers", "0"], r"--workers must be at least 1, got 0"),
])
def test_serve_refuses_bad_options(argv, pattern, capsys):
    from layerplan.cli import main

    assert main(argv) == 2
    assert re.search(pattern, capsys.readouterr().err)


def test_serve_refuses_a_data_dir_in_use(app, capsys):
    from layerplan.cli import main

    assert main(["serve", "--port", "5999", "--data-dir", app.config["DATA_DIR"]]) == 2
    assert "another layerplan server is using the data directory" in capsys.readouterr().err


# ------------------------------------------------------------------------- paint inventory
# Two paints of our own invention; the recipes of every plan colour must use only these.
TWO_PAINTS = """title = "Hall kit"
[[paint]]
name = "Chalk"
srgb = "#f2f0ea"
[[paint]]
name = "Deep teal"
srgb = "#1f5c5a"
"""


@pytest.mark.parametrize("how", ["edit", "upload"])
def test_plan_with_the_painters_own_inventory(client, how):
    fields = {"inventory": how}
    data = plan_form(**fields)
    if how == "edit":
        data["inventory_text"] = TWO_PAINTS
    else:
        data["inventory_file"] = (io.BytesIO(TWO_PAINTS.encode()), "my-paints.toml")
    r = client.post("/api/plans", data=data, content_type="multipart/form-data")
    assert r.status_code == 202, r.get_json()
    final = wait_for_plan(client, r.get_json()["id"])[-1]
    assert final["state"] == "done", final["message"]
    doc = json.loads(client.get(final["files"]["plan.json"]).data)
    used = {part["paint"] for p in doc["palette"] for part in p["recipe"]["parts"]}
    assert used and used <= {"Chalk", "Deep teal"}


@pytest.mark.parametrize("how,extra,pattern", [
    ("edit", {"inventory_text": "[[paint]]\nname = \"Chalk\"\n"}, r"give exactly one of 'srgb'"),
    ("edit", {"inventory_text": "   "}, r"inventory text is empty"),
    ("edit", {"inventory_text": "[[paint]\n"}, r"not valid TOML"),
    ("upload", {}, r"no inventory file was sent"),
    ("upload", {"inventory_file": (io.BytesIO(b"\xff\xfe\x00bad"), "x.toml")}, r"not UTF-8 text"),
])
def test_bad_inventory_is_refused(client, how, extra, pattern):
    data = plan_form(inventory=how)
    data.update(extra)
    r = client.post("/api/plans", data=data, content_type="multipart/form-data")
    assert r.status_code == 400
    assert re.search(pattern, r.get_json()["error"]), r.get_json()["error"]
