"""Swatch cards in the web app (layerplan/web/swatches.py): the page, the card download, reading a photo.

Status codes and JSON error bodies as the rest of the API (RFC 9110 for 200/400); the card is
checked as an A4 SVG (ISO 216) and the inventory as TOML (TOML 1.0, read with tomllib).
"""

from __future__ import annotations

import io
import tomllib
import xml.etree.ElementTree as ET

from PIL import Image
from skimage import data

from layerplan.inventory import default_inventory
from layerplan.swatches import card_layout

from swatch_photos import paint_card, photograph
from test_swatches import SHOTS, _de, _painted_colours

SVG = "{http://www.w3.org/2000/svg}"
MINE = b'''title = "Mural kit"
[[paint]]
name = "Chalk white"
srgb = "#f2f0ea"
[[paint]]
name = "Ochre"
srgb = "#c8962e"
[[paint]]
name = "Deep blue"
srgb = "#1f2f6b"
'''


def test_the_page_is_linked_from_the_start_page(client):
    start = client.get("/")
    assert 'href="/swatches"' in start.get_data(as_text=True)
    page = client.get("/swatches")
    assert page.status_code == 200
    html = page.get_data(as_text=True)
    assert 'action="/api/swatches/card"' in html and 'action="/api/swatches/read"' in html
    assert "safety sheet" in html  # the pigment caution stays shown


def test_card_for_the_default_and_an_uploaded_inventory(client):
    r = client.post("/api/swatches/card", data={"inventory": "default"})
    assert r.status_code == 200 and r.mimetype == "image/svg+xml"
    assert "attachment" in r.headers["Content-Disposition"]
    root = ET.fromstring(r.data)
    assert root.get("width") == "210.0mm" and root.get("height") == "297.0mm"  # A4, ISO 216
    r = client.post("/api/swatches/card", data={"inventory": "upload", "tint": "1:4",
                                                "inventory_file": (io.BytesIO(MINE), "mine.toml")},
                    content_type="multipart/form-data")
    assert r.status_code == 200
    root = ET.fromstring(r.data)
    boxes = [e for e in root.iter(f"{SVG}rect") if e.get("class") in ("masstone", "tint")]
    assert [(b.get("data-paint"), b.get("class")) for b in boxes] == [
        ("Chalk white", "masstone"), ("Ochre", "masstone"), ("Ochre", "tint"), ("Deep blue", "masstone"),
        ("Deep blue", "tint")]
    assert "1 : 4 with white" in " ".join(t.text for t in root.iter(f"{SVG}text"))
    # a file chosen but the radio left at the basic set: the file is meant
    r = client.post("/api/swatches/card", data={"inventory": "default",
                                                "inventory_file": (io.BytesIO(MINE), "mine.toml")},
                    content_type="multipart/form-data")
    assert "Chalk white" in r.get_data(as_text=True)


def test_bad_card_requests_get_400_with_an_error(client):
    for form, words in (({"inventory": "default", "tint": "lots"}, "tint must be PAINT:WHITE"),
                        ({"inventory": "default", "white": "Chalk"}, "unknown paint 'Chalk'"),
                        ({"inventory": "upload"}, "no inventory file was sent"),
                        ({"inventory": "edit", "inventory_text": "[[paint]]\nname = 3\n"}, "field 'name'")):
        r = client.post("/api/swatches/card", data=form)
        assert r.status_code == 400, form
        assert words in r.get_json()["error"], (form, r.get_json())


def test_reading_a_photo_gives_an_inventory_file(client):
    inv = default_inventory()
    layout = card_layout(inv)
    colours = _painted_colours(layout, seed=3)
    jpeg = photograph(paint_card(layout, colours), size=(1600, 1200), **SHOTS["tilted, warm light"])
    r = client.post("/api/swatches/read", data={"inventory": "default", "photo": (io.BytesIO(jpeg), "card.jpg")},
                    content_type="multipart/form-data")
    assert r.status_code == 200, r.get_data(as_text=True)
    assert r.mimetype == "application/toml" and "attachment" in r.headers["Content-Disposition"]
    doc = tomllib.loads(r.get_data(as_text=True))
    assert [p["name"] for p in doc["paint"]] == inv.names()
    for p in doc["paint"]:
        assert _de(p["srgb"], colours[(p["name"], "masstone")]) <= 2.0


def test_bad_photos_get_400_with_an_error(client):
    buf = io.BytesIO()
    Image.fromarray(data.astronaut()).save(buf, format="JPEG")
    cases = ((buf.getvalue(), "no swatch card found in the photo"),
             (b"not an image at all", "image"),
             (None, "no photo"))
    for body, words in cases:
        form = {"inventory": "default"}
        if body is not None:
            form["photo"] = (io.BytesIO(body), "photo.jpg")
        r = client.post("/api/swatches/read", data=form, content_type="multipart/form-data")
        assert r.status_code == 400
        assert words in r.get_json()["error"], r.get_json()
