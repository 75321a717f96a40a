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
# Messages name each field by the label the start page shows for it (layerplan/web/forms.py LABELS);
# the bounds are the planner's own (layerplan/settings.py, recipes.check_options, quantities.check_options).
BAD_REQUESTS = [
    # (what, form overrides, image bytes or None, status, message pattern)
    ("text file named .png", {}, b"this is just some text, not a picture\n" * 20, 415, r"not an image"),
    ("truncated PNG", {}, png_bytes(np.random.default_rng(0).integers(0, 255, (64, 64, 3), np.uint8))[:400],
     400, r"truncated or corrupt"),
    ("decompression bomb", {}, _bomb_png(), 400, r"decompression bomb"),
    ("1×1 image", {}, png_bytes(np.zeros((1, 1, 3), np.uint8)), 400, r"1×1 px.*at least 16 px"),
    ("negative wall", {"wall_width": "-2"}, None, 400, r"^Width must be > 0, got -2 m$"),
    ("zero wall", {"wall_height": "0"}, None, 400, r"^Height must be > 0, got 0 m$"),
    ("absurd wall", {"wall_width": "5000"}, None, 400, r"^Width must be at most 100 m"),
    ("not a number", {"wall_width": "wide"}, None, 400, r"^Width must be a number, got 'wide'"),
    ("infinite wall", {"wall_width": "inf"}, None, 400, r"^Width must be a finite number"),
    ("500 paints", {"paints": "500"}, None, 400, r"^Number of paints must be a whole number from 2 to 32, got 500"),
    ("fractional paints", {"paints": "4.5"}, None, 400, r"^Number of paints must be a whole number .*got '4.5'"),
    ("unknown unit", {"unit": "furlong"}, None, 400, r"^Unit must be one of m, cm, mm, ft, in, got 'furlong'"),
    ("bad brushes", {"brushes": "40,,20"}, None, 400, r"^Brush widths: .*entry 2 is empty"),
    ("same brush twice", {"brushes": "40,40"}, None, 400, r"^Brush widths: brush widths must differ"),
    ("unknown kit", {"brushes": None, "kit": "spray"}, None, 400, r"^Brush kit must be one of .*got 'spray'"),
    ("unknown fit", {"fit": "stretch"}, None, 400, r"^Fit must be one of cover, contain, got 'stretch'"),
    ("negative seed", {"seed": "-1"}, None, 400, r"^Seed must be a whole number from 0 to \d+, got -1"),
    ("zero pixel", {"pixel_mm": "0"}, None, 400, r"^Pixel size \(mm\) must be > 0, got 0"),
    ("raster too big", {"wall_width": "90", "wall_height": "90", "pixel_mm": "1"}, None, 400,
     r"working raster of 90000x90000 px is too large"),
    ("raster too small", {"pixel_mm": "500"}, None, 400, r"working raster of 2x1 px is too small"),
    ("unknown inventory choice", {"inventory": "borrowed"}, None, 400, r"inventory must be one of default"),
    # recipe options (CLI --mix-paints, --max-parts, --tolerance, --stroke-cost)
    ("5 paints per mix", {"mix_paints": "5"}, None, 400, r"^Most paints per mix must be a whole number from 1 to 4, got 5"),
    ("0 parts", {"max_parts": "0"}, None, 400, r"^Max parts per mix must be a whole number from 1 to 30, got 0"),
    ("fractional parts", {"max_parts": "2.5"}, None, 400, r"^Max parts per mix must be a whole number .*got '2.5'"),
    ("negative tolerance", {"tolerance": "-1"}, None, 400, r"^Tolerance ΔE00 must be from 0 to 100, got -1"),
    ("tolerance not a number", {"tolerance": "close"}, None, 400, r"^Tolerance ΔE00 must be a number, got 'close'"),
    ("negative stroke cost", {"stroke_cost": "-0.5"}, None, 400, r"^Stroke cost must be from 0 to 1000, got -0.5"),
    ("NaN stroke cost", {"stroke_cost": "nan"}, None, 400, r"^Stroke cost must be a finite number"),
    # quantity options (CLI --coverage, --ground-coats, --stroke-coats, --waste, --grid)
    ("zero coverage", {"coverage": "0"}, None, 400, r"^Coverage m²/L must be from 0.5 to 100, got 0"),
    ("negative ground coats", {"ground_coats": "-1"}, None, 400, r"^Ground coats must be a whole number from 0 to 10, got -1"),
    ("no stroke coats", {"stroke_coats": "0"}, None, 400, r"^Stroke coats must be a whole number from 1 to 10, got 0"),
    # waste is read as on the command line: 15% or 0.15 (a plain 15 used to mean 15 % here and
    # 1500 % there, so it is now refused with the fix in the message)
    ("waste over 100 %", {"waste": "150%"}, None, 400, r"^Waste must be a fraction or a percentage .*got '150%'$"),
    ("waste not a number", {"waste": "lots%"}, None, 400, r"^Waste must be a fraction or a percentage .*got 'lots%'"),
    ("waste without a % sign", {"waste": "15"}, None, 400, r"got '15' \(for 15 percent write 15%\)$"),
    ("zero grid", {"grid": "0"}, None, 400, r"^Transfer-grid spacing must be > 0, got '0'"),
    ("grid not a length", {"grid": "big"}, None, 400, r"^Transfer-grid spacing must be a length such as 50cm"),
    # 800 mm / 1 mm = 800 squares across the 0.8 m side, over the 200 the overlay allows (layerplan/svg.py)
    ("grid too fine", {"grid": "1mm"}, None, 400,
     r"^Transfer-grid spacing of 1 mm gives 800 squares along the 0.8 m side \(at most 200\); use at least 4 mm"),
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


@pytest.mark.parametrize("fields,field", [
    ({"wall_width": "0"}, "wall_width"), ({"max_parts": "99"}, "max_parts"), ({"waste": "-5"}, "waste"),
    ({"grid": "1mm"}, "grid"), ({"brushes": "40,40"}, "brushes"),
])
def test_refusal_names_the_form_field(client, fields, field):
    r = _post(client, **fields)
    assert r.status_code == 400
    assert r.get_json()["field"] == field


def test_recipe_and_quantity_options_reach_the_plan(client):
    options = {"mix_paints": "2", "max_parts": "4", "tolerance": "5", "stroke_cost": "8", "coverage": "8",
               "ground_coats": "1", "stroke_coats": "2", "waste": "10%", "grid": "20cm"}
    r = _post(client, **options)
    assert r.status_code == 202, r.get_json()
    final = wait_for_plan(client, r.get_json()["id"])[-1]
    assert final["state"] == "done", final["message"]
    doc = json.loads(client.get(final["files"]["plan.json"]).data)
    s = doc["settings"]
    assert (s["mix_paints"], s["max_parts"], s["tolerance_de"], s["stroke_cost"]) == (2, 4, 5.0, 8.0)
    assert "web" not in s  # the web app's own bookkeeping stays out of plan.json
    for paint in doc["palette"]:  # every recipe keeps within the limits asked for
        parts = [part["parts"] for part in paint["recipe"]["parts"]]
        assert len(parts) <= 2 and sum(parts) <= 4, paint["recipe"]
    use = doc["paint_use"]
    assert (use["coverage_m2_per_litre"], use["ground_coats"], use["stroke_coats"]) == (8.0, 1, 2)
    assert use["waste"] == pytest.approx(0.10)
    # the transfer grid is drawn at 20 cm = 200 mm (SI), so 4 columns across the 0.8 m wall
    root = ET.fromstring(client.get(final["files"]["overlay.svg"]).data)
    grid = next(g for g in root.iter("{http://www.w3.org/2000/svg}g") if g.get("id") == "grid")
    assert float(grid.get("data-spacing-mm")) == 200.0
    # the stepper names the plan's own number of ground coats
    page = client.get(final["page"]).get_data(as_text=True)
    steps = json.loads(page.split('id="steps-data">', 1)[1].split("</script>", 1)[0])
    assert steps[0]["detail"] == f"one flat coat of {doc['ground']['paint']} everywhere"


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


def test_queue_limit_answers_429(tmp_path):
    # 429 Too Many Requests (RFC 6585, section 4) with Retry-After: the queue is full, the request was fine
    app = make_web_app(tmp_path / "data", MAX_QUEUED=0)
    try:
        r = app.test_client().post("/api/plans", data=plan_form(), content_type="multipart/form-data")
        assert r.status_code == 429 and r.headers["Retry-After"] == "60"
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


class _IdleRunner:
    """A job runner that never runs anything: plans stay queued."""

    def submit(self, plan_id): pass
    def cancel(self, plan_id): pass
    def shutdown(self, *, wait=False): pass


def _idle_app(tmp_path):
    return make_web_app(tmp_path / "data", JOB_RUNNER=lambda app, store: _IdleRunner())


def test_files_of_an_unfinished_plan_are_not_served(tmp_path):
    # no workers run here, so the plan stays queued
    app = _idle_app(tmp_path)
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
    assert "Your plans" in html  # the list shows this browser's own plans


def test_form_error_rerenders_the_form_with_the_message(client):
    data = plan_form(paints="500", wall_width="2.5")
    r = client.post("/plans", data=data, content_type="multipart/form-data")
    assert r.status_code == 400
    html = r.get_data(as_text=True)
    assert "Number of paints must be a whole number from 2 to 32, got 500" in html
    assert 'value="2.5"' in html and 'value="500"' in html  # what was typed is kept
    assert client.get("/api/plans").get_json()["plans"] == []
    # the field at fault is marked for the browser and for screen readers (WAI-ARIA 1.2, aria-invalid)
    paints = re.search(r'<input[^>]*id="paints"[^>]*>', html).group(0)
    assert 'aria-invalid="true"' in paints
    width = re.search(r'<input[^>]*id="wall_width"[^>]*>', html).group(0)
    assert "aria-invalid" not in width


def _kept_token(html: str) -> str | None:
    m = re.search(r'name="upload_token"[^>]*value="([0-9a-f]+)"', html)
    return m.group(1) if m else None


def test_a_refused_form_keeps_the_photo_for_the_next_try(client, app):
    photo = png_bytes(quadrants())
    r = client.post("/plans", data=plan_form(image=photo, name="hall-wall.png", wall_width="0"),
                    content_type="multipart/form-data")
    assert r.status_code == 400
    html = r.get_data(as_text=True)
    assert "Width must be &gt; 0, got 0 m" in html  # Jinja escapes ">"
    token = _kept_token(html)
    assert token, "the photo was not kept"
    assert re.search(r"using <strong[^>]*>hall-wall.png</strong> &mdash;\s*<label[^>]*>choose another</label>", html)
    assert 'id="image" name="image" required' not in html  # no need to choose it again
    kept = client.get(f"/kept-photo/{token}")
    assert kept.status_code == 200 and kept.mimetype == "image/png" and kept.data == photo

    # the second try sends the token instead of the file, and is refused again: the same token stays
    fields = {k: v for k, v in plan_form(wall_width="0").items() if k != "image"}
    r = client.post("/plans", data={**fields, "upload_token": token}, content_type="multipart/form-data")
    assert r.status_code == 400 and _kept_token(r.get_data(as_text=True)) == token

    fields = {k: v for k, v in plan_form().items() if k != "image"}
    r = client.post("/plans", data={**fields, "upload_token": token}, content_type="multipart/form-data")
    assert r.status_code == 303, r.get_data(as_text=True)
    plan_id = r.headers["Location"].rsplit("/", 1)[-1]
    store = app.extensions["layerplan"].store
    assert store.upload_path(plan_id).read_bytes() == photo
    assert store.get(plan_id).source_name == "hall-wall.png"
    assert client.get(f"/kept-photo/{token}").status_code == 404  # used, so gone
    assert not any((store.data_dir / "uploads").iterdir())


def test_a_new_photo_replaces_the_kept_one(client, app):
    r = client.post("/plans", data=plan_form(wall_width="0"), content_type="multipart/form-data")
    token = _kept_token(r.get_data(as_text=True))
    other = png_bytes(quadrants(40, 40))
    r = client.post("/plans", data={**plan_form(image=other, name="other.png"), "upload_token": token},
                    content_type="multipart/form-data")
    assert r.status_code == 303
    plan_id = r.headers["Location"].rsplit("/", 1)[-1]
    assert app.extensions["layerplan"].store.upload_path(plan_id).read_bytes() == other
    assert client.get(f"/kept-photo/{token}").status_code == 404


def test_a_photo_that_is_refused_is_not_kept(client, app):
    r = client.post("/plans", data=plan_form(image=b"not a picture at all\n" * 10, name="notes.png"),
                    content_type="multipart/form-data")
    assert r.status_code == 415
    assert _kept_token(r.get_data(as_text=True)) is None
    assert not (app.extensions["layerplan"].store.data_dir / "uploads").exists() or \
        not any((app.extensions["layerplan"].store.data_dir / "uploads").iterdir())


@pytest.mark.parametrize("token", ["0" * 32, "../../layerplan.sqlite3", "ZZ"])
def test_an_unknown_or_expired_token_asks_for_the_photo_again(client, token):
    fields = {k: v for k, v in plan_form().items() if k != "image"}
    r = client.post("/plans", data={**fields, "upload_token": token}, content_type="multipart/form-data")
    assert r.status_code == 400
    assert "the photo chosen earlier is no longer kept" in r.get_data(as_text=True)
    assert client.get(f"/kept-photo/{token}").status_code == 404


def test_kept_photos_expire(tmp_path):
    import time

    from layerplan.web.uploads import UploadStash

    stash = UploadStash(tmp_path, keep_s=0.2)
    old = stash.put(b"old photo", "old.png")
    assert stash.get(old) == (b"old photo", "old.png")
    time.sleep(0.3)
    assert stash.get(old) is None
    fresh = stash.put(b"new", "new.png")  # putting sweeps out what expired
    assert sorted(p.name for p in (tmp_path / "uploads").iterdir()) == [fresh, fresh + ".name"]
    with pytest.raises(ValueError, match=r"keep_s must be > 0, got 0"):
        UploadStash(tmp_path, keep_s=0)


def test_start_page_options_and_positive_minimums(client):
    html = client.get("/").get_data(as_text=True)
    inputs = {m.group(1): m.group(0) for m in re.finditer(r'<input[^>]*name="(\w+)"[^>]*>', html)}
    for name in ("mix_paints", "max_parts", "tolerance", "stroke_cost", "coverage", "ground_coats",
                 "stroke_coats", "waste", "grid"):
        assert name in inputs, name
    # a zero width or height is caught by the browser too (HTML Living Standard: min and rangeUnderflow)
    for name in ("wall_width", "wall_height", "pixel_mm", "coverage"):
        assert float(re.search(r'min="([^"]+)"', inputs[name]).group(1)) > 0, name
    # the form starts from the planner's and the export's own defaults (layerplan/settings.py, quantities.py)
    from layerplan import quantities
    from layerplan.settings import Settings

    def value(name):
        return re.search(r'value="([^"]*)"', inputs[name]).group(1)

    assert int(value("max_parts")) == Settings().max_parts and int(value("mix_paints")) == Settings().mix_paints
    assert float(value("tolerance")) == Settings().tolerance_de
    assert int(value("ground_coats")) == quantities.GROUND_COATS
    assert value("waste") == f"{quantities.WASTE * 100:g}%"  # a percentage, read as the CLI reads it


def test_recent_plans_tell_two_plans_of_one_photo_apart(client):
    a = _post(client, wall_width="0.8", wall_height="", paints="4").get_json()["id"]
    b = _post(client, wall_width="1.6", wall_height="1.2", paints="5").get_json()["id"]
    html = client.get("/").get_data(as_text=True)
    items = re.findall(r'<li class="plan-item[^"]*">(.*?)</li>', html, re.S)
    assert len(items) == 2
    facts = [re.sub(r"\s+", " ", re.search(r'class="plan-facts"[^>]*>(.*?)</span>', i, re.S).group(1)) for i in items]
    # newest first; a blank height follows the photo (80 × 60 px, so 0.8 m wide is 0.6 m high)
    # the surface is said as on the printed plan's cover (layerplan.wording.wall_size)
    assert facts == ["1.6 m × 1.2 m &middot; 5 paints &middot; 2 brushes &middot; seed 1",
                     "0.8 m × 0.6 m &middot; 4 paints &middot; 2 brushes &middot; seed 1"]
    assert all(re.search(r'class="when"[^>]*>\d\d \w{3} \d{4}, \d\d:\d\d UTC<', i) for i in items)
    for plan_id in (a, b):
        wait_for_plan(client, plan_id)


def test_progress_page_shows_what_is_being_planned(tmp_path):
    app = _idle_app(tmp_path)
    try:
        client = app.test_client()
        plan_id = _post(client, max_parts="4", waste="20%", grid="1ft", wall_height="").get_json()["id"]
        html = client.get(f"/plans/{plan_id}").get_data(as_text=True)
        block = html.split('id="planning-facts"', 1)[1].split("</dl>", 1)[0]
        facts = dict(re.findall(r"<dt>(.*?)</dt><dd>(.*?)</dd>", block))
        # 1 ft = 304.8 mm exactly (NIST SP 811 App. B) = 30.48 cm
        assert facts == {"Surface": "0.8 m × 0.6 m", "Paints": "4", "Brushes": "40 / 20 mm", "Pixel size": "10 mm",
                         "Seed": "1", "Max parts per mix": "4", "Waste": "20 %", "Grid": "30.48 cm"}
    finally:
        app.extensions["layerplan"].close()


def test_ground_step_and_container_text():
    # the container text is layerplan.wording.containers, the printed plan's (tests/test_wording.py)
    from layerplan.web.pages import _ground_text
    from layerplan.wording import containers

    assert _ground_text("P5", 2) == "two flat coats of P5 everywhere"
    assert _ground_text("P1", 1) == "one flat coat of P1 everywhere"
    assert _ground_text("P1", 0).startswith("P1 everywhere: no coat planned")
    # no-break spaces (U+00A0) hold one container size together; a line may break only at "+"
    text = containers([{"litres": 0.5, "count": 1}, {"litres": 4, "count": 2}], False)
    assert text == "1\u00a0×\u00a00.5\u00a0L + 2\u00a0×\u00a04\u00a0L"
    assert all(" " not in part for part in text.split(" + "))  # plain spaces only around "+"


def test_form_upload_too_large_rerenders_the_form(tmp_path):
    app = make_web_app(tmp_path / "data", MAX_CONTENT_LENGTH=50_000)
    try:
        big = png_bytes(np.random.default_rng(2).integers(0, 255, (200, 200, 3), np.uint8))
        r = app.test_client().post("/plans", data=plan_form(image=big), content_type="multipart/form-data")
        assert r.status_code == 413
        assert "the upload is too large: at most 50 kB in all" in r.get_data(as_text=True)
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


def test_amounts_on_the_plan_page_read_as_on_the_printed_plan(app):
    # litres from 0.1 L, millilitres below (1 L = 1000 mL, SI); a trace is not shown as 0; the page's
    # "volume" filter is layerplan.wording.volume, the printed plan's; a figure missing from plan.json shows nothing
    volume = app.jinja_env.filters["volume"]
    assert volume(1.8434, False) == "1.84 L"
    assert volume(0.035, False) == "35 mL"
    assert volume(0.0002, False, used=True) == "under 1 mL"
    assert volume(None, False) == ""


def test_a_foreign_page_cannot_delete_or_submit_but_our_own_pages_can(client, app):
    # Cross-site request forgery: a page elsewhere posts a plain form to us in a visitor's browser. Browsers
    # send Origin (Fetch standard, WHATWG) and Sec-Fetch-Site (W3C Fetch Metadata) on such requests.
    plan_id = _post(client).get_json()["id"]
    wait_for_plan(client, plan_id)
    evil = {"Origin": "https://elsewhere.example"}
    r = client.delete(f"/api/plans/{plan_id}", headers=evil)
    assert r.status_code == 403 and "another site" in r.get_json()["error"]
    r = client.post(f"/plans/{plan_id}/delete", headers={"Sec-Fetch-Site": "cross-site"})
    assert r.status_code == 403
    r = client.post(f"/plans/{plan_id}/delete", headers={"Referer": "https://elsewhere.example/page"})
    assert r.status_code == 403
    r = client.post("/api/plans", data=plan_form(), content_type="multipart/form-data", headers=evil)
    assert r.status_code == 403
    assert client.get(f"/api/plans/{plan_id}").status_code == 200
    assert [p["id"] for p in client.get("/api/plans").get_json()["plans"]] == [plan_id]
    # the same request from our own origin works
    own = {"Origin": "http://localhost", "Sec-Fetch-Site": "same-origin"}
    assert client.delete(f"/api/plans/{plan_id}", headers=own).status_code == 204
    assert client.get(f"/api/plans/{plan_id}").status_code == 404


# --------------------------------------------------- the command line and the API agree
from layerplan.options import form_options  # noqa: E402 - beside the tests that use it

#: the options the form and API take, by field
OPTIONS_BY_FIELD = {o.field: o for o in form_options()}


def _without_run_details(doc: dict) -> dict:
    """plan.json less what may tell one run from another (plan.json has no ids or timestamps; the
    generator line names the version that wrote it)."""
    return {k: v for k, v in doc.items() if k != "generator"}


def test_the_same_settings_make_the_same_plan_through_the_cli_and_the_api(client, tmp_path):
    # Each option is read by its one declaration (layerplan/options.py), so the same text given to
    # `layerplan plan` and to POST /api/plans must make the same plan.json, quantities included.
    from layerplan.cli import main

    photo = tmp_path / "quadrants.png"
    photo.write_bytes(png_bytes(quadrants()))
    shared = {"paints": "3", "brushes": "100,40", "pixel_mm": "20", "seed": "3", "fit": "contain",
              "stroke_cost": "6", "mix_paints": "2", "max_parts": "6", "tolerance": "4", "coverage": "8",
              "ground_coats": "1", "stroke_coats": "2", "waste": "12.5%", "grid": "1/5m"}
    argv = ["plan", str(photo), "--out", str(tmp_path / "cli"), "--quiet", "--wall", "80x50cm"]
    for name, text in shared.items():
        argv += [OPTIONS_BY_FIELD[name].flag, text]
    assert main(argv) == 0
    cli_doc = json.loads((tmp_path / "cli" / "plan.json").read_text(encoding="utf-8"))

    r = _post(client, wall_width="80", wall_height="50", unit="cm", **shared)
    assert r.status_code == 202, r.get_json()
    final = wait_for_plan(client, r.get_json()["id"])[-1]
    assert final["state"] == "done", final["message"]
    web_doc = json.loads(client.get(final["files"]["plan.json"]).data)

    assert _without_run_details(web_doc) == _without_run_details(cli_doc)
    # and the options reached the plan as given: 12.5 % = 0.125; 1/5 m = 200 mm (SI)
    use = cli_doc["paint_use"]
    assert (use["waste"], use["coverage_m2_per_litre"], use["ground_coats"], use["stroke_coats"]) == \
        (0.125, 8.0, 1, 2)
    assert cli_doc["settings"]["fit"] == "contain" and cli_doc["settings"]["max_parts"] == 6


#: a bad text for each option the form takes, refused by the option's reader or by the check of the whole set
BAD_TEXT = {"paints": "1", "brushes": "50,50", "pixel_mm": "0", "seed": "-1", "stroke_cost": "-1",
            "fit": "stretch", "free_palette": "maybe", "mix_paints": "5", "max_parts": "0", "tolerance": "101",
            "coverage": "0", "ground_coats": "-1", "stroke_coats": "0", "waste": "15", "grid": "1mm",
            "wall": "0x1m", "reach": "0m", "paper": "b5", "enlargements": "-1",
            "crew": "0", "day_hours": "25", "drying": "-1", "labour_rate": "-5",
            # the real wall: an opening past the 80 cm wall's edge, a colour that is none, a panel size of one side
            "openings": "2,0,1,1m", "wall_colour": "#12345g", "panels": "0.5m", "panel_overlap": "0cm",
            # the classroom options
            "surface": "a5", "students": "0", "spares": "15", "period_minutes": "5", "paint_set": "oils",
            "simple_mixes": "maybe", "value_study": "2"}


@pytest.mark.parametrize("name", sorted(BAD_TEXT))
def test_the_cli_and_the_api_blame_the_same_option(client, tmp_path, capsys, name):
    from layerplan.cli import main

    o = OPTIONS_BY_FIELD[name]
    photo = tmp_path / "quadrants.png"
    photo.write_bytes(png_bytes(quadrants()))
    argv = ["plan", str(photo), "--out", str(tmp_path / "never"), "--quiet", "--wall", "80x60cm",
            "--brushes", "40,20", "--pixel-mm", "10"]
    argv += [o.flag] if o.kind == "switch" else [o.flag, BAD_TEXT[name]]
    fields = {name: BAD_TEXT[name]}
    if name == "wall":
        fields.update(wall_width=None, wall_height=None, unit=None)
    r = _post(client, **fields)
    assert r.status_code == 400 and r.get_json()["field"] == name, r.get_json()
    if o.kind == "switch":  # a flag on the command line cannot be given a bad value
        return
    assert main(argv) == 2
    assert capsys.readouterr().err.startswith(f"layerplan: error: {o.flag}")
    assert not (tmp_path / "never").exists()


def test_every_form_option_has_a_bad_text_above():
    # so a new option is tried through both front ends too
    assert set(BAD_TEXT) == set(OPTIONS_BY_FIELD)
