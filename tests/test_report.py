"""The printable plan (layerplan/report.py), read back with Python's own HTML parser
(html.parser) and Pillow: every section issue 5 lists, every paint, embedded pictures only.
"""

from __future__ import annotations

import base64
import io
import re
from html.parser import HTMLParser

import numpy as np
import pytest
from PIL import Image

from layerplan.outlines import outline_maps
from layerplan.plan import Layer, Paint, Plan, Stroke
from layerplan.quantities import paint_use
from layerplan.report import (
    PAINT_CHANGE_SECONDS,
    SECONDS_PER_STROKE,
    STROKE_MM_PER_SECOND,
    colour_name,
    layer_time_s,
    plan_html,
)
from layerplan.raster import render


def _plan(unit="m", w=4000.0, h=2500.0):
    palette = [Paint("P1", "#f0e8d8", (92.6, 1.5, 7.5)), Paint("P2", "#c03020", (44.0, 56.0, 46.0)),
               Paint("P3", "#2050a0", (36.0, 12.0, -50.0)), Paint("P4", "#306030", (36.8, -27.0, 19.6))]
    palette[1].extra["recipe"] = {"target": "#c03020", "parts": [{"paint": "Warm red", "parts": 3},
                                                                {"paint": "Earth red", "parts": 1}],
                                  "predicted_srgb": "#c03020", "delta_e": 1.2, "in_gamut": True}
    palette[3].extra["recipe"] = {"target": "#306030", "parts": [{"paint": "Leaf green", "parts": 2},
                                                                {"paint": "Carbon black", "parts": 1}],
                                  "predicted_srgb": "#406a40", "delta_e": 5.4, "in_gamut": False}
    rng = np.random.default_rng(5)
    layers = []
    for width, count in ((100.0, 8), (50.0, 12)):
        strokes = []
        for _ in range(count):
            c = rng.uniform([200, 200], [w - 200, h - 200])
            strokes.append(Stroke(f"P{rng.integers(2, 5)}", width, np.array([c, c + rng.uniform(-300, 300, 2)])))
        strokes.sort(key=lambda s: s.paint)
        layers.append(Layer(width, strokes))
    return Plan(w, h, int(w / 20), int(h / 20), 20.0, palette, "P1", layers,
                {"settings": {"wall_unit": unit, "paints": 4, "brushes_mm": [100.0, 50.0]}})


class _Doc(HTMLParser):
    """Collects sections by id, their text, and every embedded resource."""

    def __init__(self):
        super().__init__()
        self.sections, self.srcs, self.links, self.styles, self._stack = {}, [], [], [], []
        self.text: dict[str, list[str]] = {}
        self._in_style = False

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        if tag == "section":
            self._stack.append(a.get("id"))
            self.sections[a.get("id")] = a.get("class", "")
        if tag == "img":
            self.srcs.append(a["src"])
        if tag in ("image",):
            self.srcs.append(a.get("xlink:href") or a.get("href"))
        if tag in ("link", "script"):
            self.links.append(a)
        self._in_style = tag == "style"

    def handle_endtag(self, tag):
        if tag == "section":
            self._stack.pop()
        self._in_style = False

    def handle_data(self, data):
        if self._in_style:
            self.styles.append(data)
        for sid in self._stack:
            self.text.setdefault(sid, []).append(data)

    def section_text(self, sid):
        return " ".join(" ".join(self.text.get(sid, [])).split())


def _parse(text):
    d = _Doc()
    d.feed(text)
    return d


@pytest.fixture(scope="module")
def plan_and_html():
    plan = _plan()
    return plan, plan_html(plan, outlines=outline_maps(plan))


def test_every_section_is_there_in_order(plan_and_html):
    plan, text = plan_and_html
    doc = _parse(text)
    expect = ["cover", "paint-card", "shopping", "brushes", "transfer-grid", "layer-01", "layer-02", "safety"]
    assert list(doc.sections) == expect
    assert all("sheet" in cls for cls in doc.sections.values())
    assert text.count('class="sheet layer"') == len(plan.layers)


def test_paint_card_shows_every_id_colour_recipe_and_flag(plan_and_html):
    plan, text = plan_and_html
    doc = _parse(text)
    card = doc.section_text("paint-card")
    for p in plan.palette:
        assert p.id in card and p.srgb in card and colour_name(p.lab) in card
        assert f"background:{p.srgb}" in text
    assert "3 Warm red + 1 Earth red" in card and "1.2" in card
    assert "2 Leaf green + 1 Carbon black" in card and "5.4" in card
    rows = {m.group(1): m.group(2) for m in re.finditer(r'<tr id="paint-(P\d+)">(.*?)</tr>', text, re.S)}
    assert sorted(rows) == ["P1", "P2", "P3", "P4"]
    assert "out of reach" in rows["P4"] and "#406a40" in rows["P4"]  # flagged, with the nearest mix shown
    assert all("out of reach" not in rows[k] for k in ("P1", "P2", "P3"))
    use = paint_use(plan)
    for p in use["paints"]:
        assert f"{p['litres']:.2f}".rstrip("0").rstrip(".") + " L" in card


def test_shopping_list_names_stock_paints_and_containers(plan_and_html):
    plan, text = plan_and_html
    shop = _parse(text).section_text("shopping")
    use = paint_use(plan)
    for s in use["stock"]:
        assert s["paint"] in shop
    for p in plan.palette:
        assert p.id in shop
    # the ground, without a recipe: 2.3 L -> one 2.5 L tin (common sizes, common practice)
    assert "1 × 2.5 L" in shop
    assert "10 m² per litre per coat" in shop and "15 %" in shop


def test_brushes_state_the_rule_of_thumb(plan_and_html):
    plan, text = plan_and_html
    brushes = _parse(text).section_text("brushes")
    assert "from memory" in brushes and "rule of thumb" in brushes.lower()
    for n, layer in enumerate(plan.layers, start=1):
        assert f"layer {n}" in brushes and f"{layer.brush_width_mm:g} mm" in brushes


def test_layer_time_rule_worked_by_hand():
    # three strokes of 1 m, 0.5 m and a dab; paints A, A, B: two runs of paint
    strokes = [Stroke("A", 50.0, np.array([[0.0, 0.0], [1000.0, 0.0]])),
               Stroke("A", 50.0, np.array([[0.0, 0.0], [300.0, 400.0]])),
               Stroke("B", 50.0, np.array([[5.0, 5.0]]))]
    expect = 3 * SECONDS_PER_STROKE + 1500.0 / STROKE_MM_PER_SECOND + 2 * PAINT_CHANGE_SECONDS
    assert layer_time_s(Layer(50.0, strokes)) == pytest.approx(expect)


def test_layer_pages_have_picture_paints_brush_and_outline_map(plan_and_html):
    plan, text = plan_and_html
    doc = _parse(text)
    maps = outline_maps(plan)
    for n, layer in enumerate(plan.layers, start=1):
        sid = f"layer-{n:02d}"
        page = doc.section_text(sid)
        assert f"Layer {n} of {len(plan.layers)}" in page and f"{layer.brush_width_mm:g} mm brush" in page
        for paint in {s.paint for s in layer.strokes}:
            assert paint in page
        body = text[text.index(f'id="{sid}"'):]
        body = body[:body.index("</section>")]
        assert body.count("<img") == 1 and body.count("<svg") == 1
        # the outline map labels every area with its paint id
        labels = re.findall(r"<text[^>]*>(P\d+)</text>", body)
        assert sorted(labels) == sorted(a["paint"] for a in maps[n - 1]["areas"])


def test_transfer_grid_is_at_the_real_spacing(plan_and_html):
    plan, text = plan_and_html
    grid = _parse(text).section_text("transfer-grid")
    assert "50 cm × 50 cm" in grid and "8 columns (A–H" in grid and "5 rows (1–5" in grid
    other = _parse(plan_html(plan, grid_mm=1000)).section_text("transfer-grid")
    assert "100 cm × 100 cm" in other and "4 columns (A–D" in other


def test_safety_and_swatch_note(plan_and_html):
    _, text = plan_and_html
    doc = _parse(text)
    safety = doc.section_text("safety").lower()
    for word in ("ladder", "scaffold", "ventilation", "mask", "pigment", "lead", "test", "sanding",
                 "local", "licensed"):
        assert word in safety, word
    assert "test swatch" in doc.section_text("paint-card")
    assert "screen" in doc.section_text("cover").lower()


def test_self_contained_with_print_css(plan_and_html):
    plan, text = plan_and_html
    doc = _parse(text)
    assert doc.links == []  # no external stylesheet or script
    assert "http://" not in text.replace('xmlns="http://www.w3.org/2000/svg"', "").replace(
        "http://www.w3.org/1999/xlink", "").replace("http://www.w3.org/2001/xml-events", "")
    css = " ".join(doc.styles)
    assert "@page" in css and "@media print" in css and "break-after: page" in css
    # pictures are PNG data URIs (RFC 2397) of the working raster; the cover's is the final render
    assert doc.srcs and all(s.startswith("data:image/png;base64,") for s in doc.srcs)
    first = Image.open(io.BytesIO(base64.b64decode(doc.srcs[0].split(",", 1)[1])))
    assert first.size == (plan.width_px, plan.height_px)
    assert np.array_equal(np.asarray(first.convert("RGB")), render(plan))


def test_images_given_are_used_and_checked(tmp_path):
    plan = _plan()
    marker = np.zeros((plan.height_px, plan.width_px, 3), np.uint8)
    marker[:, :, 1] = 200
    buf = io.BytesIO()
    Image.fromarray(marker).save(buf, format="PNG")
    path = tmp_path / "final.png"
    path.write_bytes(buf.getvalue())
    doc = _parse(plan_html(plan, images={"final.png": path}))
    cover = Image.open(io.BytesIO(base64.b64decode(doc.srcs[0].split(",", 1)[1])))
    assert np.array_equal(np.asarray(cover.convert("RGB")), marker)
    with pytest.raises(ValueError, match=r"image 'final' is not a PNG file"):
        plan_html(plan, images={"final": b"GIF89a..."})
    with pytest.raises(ValueError, match=r"image 'steps/01.png': cannot read"):
        plan_html(plan, images={"steps/01.png": tmp_path / "missing.png"})
    with pytest.raises(ValueError, match=r"grid spacing must be > 0 mm, got -5"):
        plan_html(plan, grid_mm=-5)
    with pytest.raises(ValueError, match=r"outlines has 1 maps but the plan has 2 layers"):
        plan_html(plan, outlines=outline_maps(plan)[:1])



def test_steps_given_are_used_and_checked():
    # the wall after each layer, as the rendering rule gives it (raster.render_steps): given or
    # rendered, the same plan; the "changed" share on each layer sheet comes from them
    from layerplan.raster import render_steps

    plan = _plan()
    steps = render_steps(plan)
    assert plan_html(plan, steps=steps) == plan_html(plan)
    share = 100 * float(np.mean(steps[2] != steps[1]))
    text = _parse(plan_html(plan, steps=steps)).section_text("layer-02")
    assert f"change {share:.1f}".rstrip("0").rstrip(".") in text
    with pytest.raises(ValueError, match=r"steps must be 3 canvases of 125 × 200 px \(the ground, then each layer\)"):
        plan_html(plan, steps=steps[:2])
    with pytest.raises(ValueError, match=r"steps must be 3 canvases"):
        plan_html(plan, steps=[c[:10] for c in steps])

def test_walls_in_feet_show_gallons():
    plan = _plan(unit="ft", w=12 * 304.8, h=8 * 304.8)
    doc = _parse(plan_html(plan, grid_mm=2 * 304.8))
    assert "gal" in doc.section_text("shopping") and " qt" in doc.section_text("shopping")
    assert "12 ft × 8 ft" in doc.section_text("cover")
    assert "2 ft × 2 ft" in doc.section_text("transfer-grid")


@pytest.mark.parametrize("srgb, word", [
    # the sRGB primaries and secondaries (IEC 61966-2-1) by their everyday names
    ((255, 0, 0), "red"), ((0, 255, 0), "green"), ((0, 0, 255), "blue"), ((255, 255, 0), "yellow"),
    ((255, 128, 0), "orange"), ((128, 0, 128), "purple"),
    # neutrals: a* = b* = 0 is achromatic by the definition of CIELAB (CIE 15:2004)
    ((255, 255, 255), "white"), ((0, 0, 0), "black"), ((128, 128, 128), "grey"),
    # everyday names of dark orange and light red (common usage, from memory)
    ((139, 69, 19), "brown"), ((255, 182, 193), "pink"),
])
def test_colour_names(srgb, word):
    from layerplan.colour import srgb_to_lab

    name = colour_name(srgb_to_lab(np.array(srgb, np.uint8)))
    assert word in name.split() or name.endswith(word), name
