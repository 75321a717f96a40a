"""plan.pdf (layerplan/pdf.py), read back with pypdf, a general-purpose PDF reader: one A4 page
per sheet of plan.html, in its order, the safety sheet's text present, the pictures embedded,
nothing fetched from outside the file.

Outside references: ISO 216:2007 (A4 = 210 × 297 mm); ISO 32000-1:2008 §8.3.2.3 (PDF user
space: 1/72 inch a unit, so a page's /MediaBox is in points) and §7.5.2 (the %PDF- header).
"""

from __future__ import annotations

import base64
import io
from html.parser import HTMLParser

import pytest
from PIL import Image
from pypdf import PdfReader

import layerplan.pdf as pdf
from conftest import quadrants
from layerplan.cli import main
from layerplan.export import build_files
from layerplan.pipeline import make_plan
from layerplan.settings import Settings

A4_MM = (210.0, 297.0)  # ISO 216:2007
#: how far a page may be from A4; ISO 216 allows ±2 mm on sides of 150–600 mm, a PDF writer needs far less
A4_TOLERANCE_MM = 0.5
MM_PER_PT = 25.4 / 72.0  # ISO 32000-1 §8.3.2.3: default user space unit 1/72 inch


class _Sheets(HTMLParser):
    """The printed plan's sheets (``<section class="sheet">``) in order: id, title (its h1 or h2), h3 headings."""

    def __init__(self):
        super().__init__()
        self.sheets: list[dict] = []
        self._in: str | None = None

    def handle_starttag(self, tag, attrs):
        attrs = dict(attrs)
        if tag == "section" and "sheet" in (attrs.get("class") or "").split():
            self.sheets.append({"id": attrs.get("id"), "title": "", "h3": []})
        if tag in ("h1", "h2") and self.sheets and not self.sheets[-1]["title"]:
            self._in = "title"
        if tag == "h3" and self.sheets:
            self._in = "h3"
            self.sheets[-1]["h3"].append("")

    def handle_endtag(self, tag):
        if tag in ("h1", "h2", "h3"):
            self._in = None

    def handle_data(self, data):
        if self._in == "title":
            self.sheets[-1]["title"] += data
        elif self._in == "h3":
            self.sheets[-1]["h3"][-1] += data


def _words(text: str) -> str:
    return " ".join(text.split())


def _sheets(html: str) -> list[dict]:
    parser = _Sheets()
    parser.feed(html)
    for sheet in parser.sheets:
        sheet["title"], sheet["h3"] = _words(sheet["title"]), [_words(h) for h in sheet["h3"]]
    return parser.sheets


@pytest.fixture(scope="module")
def printed():
    """A small real plan's plan.html and plan.pdf, as the export writes them."""
    settings = Settings(wall_width_mm=800.0, wall_height_mm=600.0, paints=4, brushes_mm=(40.0, 20.0),
                        mm_per_px=5.0, seed=1)
    files = build_files(make_plan(quadrants(), settings))
    return files["plan.html"].decode("utf-8"), files["plan.pdf"]


def test_one_page_per_sheet_in_the_order_of_plan_html(printed):
    html, data = printed
    assert data.startswith(b"%PDF-")  # ISO 32000-1 §7.5.2
    sheets = _sheets(html)
    reader = PdfReader(io.BytesIO(data))
    assert len(sheets) >= 7  # cover, paint card, shopping, brushes, grid, a sheet per layer (2), safety
    assert len(reader.pages) == len(sheets)
    for page, sheet in zip(reader.pages, sheets):
        assert sheet["title"] and sheet["title"] in _words(page.extract_text()), sheet["id"]


def test_pages_are_a4(printed):
    for page in PdfReader(io.BytesIO(printed[1])).pages:
        box = page.mediabox
        size_mm = (float(box.width) * MM_PER_PT, float(box.height) * MM_PER_PT)
        assert size_mm == pytest.approx(A4_MM, abs=A4_TOLERANCE_MM)


def test_the_safety_sheet_is_printed(printed):
    html, data = printed
    safety = next(s for s in _sheets(html) if s["id"] == "safety")
    pages = [_words(p.extract_text()) for p in PdfReader(io.BytesIO(data)).pages]
    text = next(p for p in pages if safety["title"] in p)
    # every caution heading of the sheet, and the lead-paint caution in particular, is on the page
    assert safety["h3"] and all(h in text for h in safety["h3"])
    assert "lead paint" in text.lower()


def test_the_pictures_are_embedded(printed):
    cover = PdfReader(io.BytesIO(printed[1])).pages[0]
    assert len(cover.images) >= 1  # the finished picture, a PNG data URI in plan.html


def _png(colour) -> bytes:
    buf = io.BytesIO()
    Image.new("RGB", (4, 4), colour).save(buf, format="PNG")
    return buf.getvalue()


def test_only_pictures_inside_the_file_are_drawn(tmp_path):
    # a local file named in the HTML is not read (a plan's text must not reach the disk or the network)
    (tmp_path / "local.png").write_bytes(_png("red"))
    inside = "data:image/png;base64," + base64.b64encode(_png("blue")).decode("ascii")
    page = ('<!DOCTYPE html><html><body><section class="sheet"><h2>Test</h2><img src="{}" alt="x">'
            "</section></body></html>")
    drawn = PdfReader(io.BytesIO(pdf.plan_pdf(page.format(inside)))).pages[0]
    refused = PdfReader(io.BytesIO(pdf.plan_pdf(page.format((tmp_path / "local.png").as_uri())))).pages[0]
    assert len(drawn.images) == 1 and len(refused.images) == 0


def test_making_a_pdf_leaves_pillow_refusing_truncated_photos(printed):
    from PIL import ImageFile

    from layerplan.load import ImageError, load_image

    pdf.plan_pdf(printed[0])
    assert ImageFile.LOAD_TRUNCATED_IMAGES is False  # Pillow's default, which layerplan.load relies on
    buf = io.BytesIO()
    Image.fromarray(quadrants(64, 64)).save(buf, format="PNG")
    with pytest.raises(ImageError, match="truncated or corrupt"):
        load_image(buf.getvalue()[: len(buf.getvalue()) // 2])


def test_the_same_html_gives_the_same_bytes(printed):
    assert pdf.plan_pdf(printed[0]) == printed[1]


def test_without_weasyprint_the_plan_is_still_written_and_the_cli_says_why(monkeypatch, tmp_path, capsys):
    pdf.unavailable.cache_clear()
    monkeypatch.setitem(__import__("sys").modules, "weasyprint", None)  # import fails as if not installed
    try:
        reason = pdf.unavailable()
        assert reason is not None and "not installed" in reason
        with pytest.raises(RuntimeError, match="cannot write plan.pdf"):
            pdf.plan_pdf("<!DOCTYPE html><html></html>")
        image = tmp_path / "q.png"
        Image.fromarray(quadrants()).save(image)
        out = tmp_path / "plan"
        assert main(["plan", str(image), "--out", str(out), "--wall", "80x60cm", "--pixel-mm", "5",
                     "--brushes", "40,20", "--paints", "4", "--quiet"]) == 0
        assert (out / "plan.html").is_file() and (out / "plan.json").is_file() and not (out / "plan.pdf").exists()
        assert "plan.pdf was not written" in capsys.readouterr().err
    finally:
        pdf.unavailable.cache_clear()


def test_the_web_page_offers_the_pdf(client):
    from conftest import plan_form, wait_for_plan

    plan_id = client.post("/api/plans", data=plan_form(pixel_mm="5")).get_json()["id"]
    final = wait_for_plan(client, plan_id)[-1]
    assert final["state"] == "done" and "plan.pdf" in final["files"]
    page = client.get(f"/plans/{plan_id}").get_data(as_text=True)
    assert 'id="dl-plan-pdf"' in page and 'type="application/pdf"' in page
    served = client.get(final["files"]["plan.pdf"])
    assert served.status_code == 200 and served.mimetype == "application/pdf"
    assert len(PdfReader(io.BytesIO(served.data)).pages) >= 7
