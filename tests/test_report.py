"""The printable plan (layerplan/report.py), read back with Python's own HTML parser
(html.parser) and Pillow: every sheet a painter needs (cover, paint card, shopping list, brushes, transfer grid, layers,
safety), every paint, embedded pictures only; ids unique.
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
from layerplan.report import plan_html
from layerplan.sheets import PAINT_CHANGE_SECONDS, SECONDS_PER_STROKE, STROKE_MM_PER_SECOND, layer_time_s
from layerplan.wording import colour_name
from layerplan.raster import render


def _plan(unit="m", w=4000.0, h=2500.0, **extra):
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
                {"settings": {"wall_unit": unit, "paints": 4, "brushes_mm": [100.0, 50.0]}, **extra})


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
    got = list(doc.sections)
    # each layer sheet is followed by its enlargements (none for a layer the overview shows well)
    layers = [s for s in got if re.fullmatch(r"layer-\d\d", s)]
    expect = ["cover", "paint-card", "shopping", "brushes", "transfer-grid"]
    for sid in layers:
        expect += [sid] + [s for s in got if re.fullmatch(rf"{sid}-part-\d\d", s)]
    assert got == expect + ["safety"]
    assert layers == ["layer-01", "layer-02"]
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
    for p in use["paints"]:  # litres from 0.1 L up, millilitres below (SI: 1 L = 1000 mL)
        if p["litres"] >= 0.1:
            assert f"{p['litres']:.2f}".rstrip("0").rstrip(".") + " L" in card
        else:
            assert f"{p['litres'] * 1000:.0f} mL" in card


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
        assert body.count("<img") == 1 and body.count("<svg") == 2  # the map and its paint key
        # the outline map labels areas with their paint id: only paints of areas there, and
        # no two label boxes overlap (plane geometry; text about 0.62 em per character)
        texts = [(float(x), float(y), float(f), t) for f, x, y, t in re.findall(
            r'<text class="area-label"[^>]*font-size="([\d.]+)"[^>]*x="([\d.]+)" y="([\d.]+)"[^>]*>(P\d+)</text>',
            body)]
        assert texts and {t for *_, t in texts} <= {a["paint"] for a in maps[n - 1]["areas"]}
        for i, (x, y, f, t) in enumerate(texts):
            for x2, y2, f2, t2 in texts[i + 1:]:
                apart_x = abs(x - x2) >= 0.31 * (f * len(t) + f2 * len(t2))
                apart_y = abs(y - y2) >= 0.5 * (f + f2)
                assert apart_x or apart_y, (t, x, y, t2, x2, y2)
        # the transfer grid, faint, with the transfer-grid page's letters and numbers (8 × 5 at 50 cm)
        faint = body[body.index('class="faint"'):]
        grid_labels = re.findall(r"<text[^>]*>([A-Z]+|\d+)</text>", faint)
        assert grid_labels[:8] == list("ABCDEFGH") and grid_labels[8:13] == ["1", "2", "3", "4", "5"]
        assert ("the ground, P1, stays showing" if n == 1 else f"what layer {n - 1} left stays") in page


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


def _board():
    """A 60 × 40 cm board: ground P1, one short 10 mm stroke of P2 (mixed 1 White + 1 Black)."""
    palette = [Paint("P1", "#f0e8d8", (92.6, 1.5, 7.5)), Paint("P2", "#c03020", (44.0, 56.0, 46.0))]
    palette[1].extra["recipe"] = {"target": "#c03020", "predicted_srgb": "#c03020", "delta_e": 0.5,
                                  "in_gamut": True, "parts": [{"paint": "White", "parts": 1},
                                                              {"paint": "Black", "parts": 1}]}
    st = Stroke("P2", 10.0, np.array([[100.0, 100.0], [200.0, 100.0]]))
    return Plan(600.0, 400.0, 300, 200, 2.0, palette, "P1", [Layer(10.0, [st])],
                {"settings": {"wall_unit": "cm"}})


def test_small_amounts_in_millilitres_and_trace_amounts_not_tins():
    # hand-worked: ground 0.6 × 0.4 m = 0.24 m², 2 coats at 10 m²/L plus 15 %: 0.0552 L = 55 mL;
    # the stroke 100 × 10 + π·5² mm² = 1.08e-3 m²: 0.124 mL, each stock paint half of it
    plan = _board()
    use = paint_use(plan)
    assert use["paints"][0]["litres"] == pytest.approx(0.055, abs=1e-3)  # plan.json keeps litres
    doc = _parse(plan_html(plan, paint_use=use))
    shop, card = doc.section_text("shopping"), doc.section_text("paint-card")
    assert "55 mL" in shop and "55 mL" in card and "under 1 mL" in card
    assert " 0 L" not in shop and " 0 L" not in card
    # stock paints of a trace amount: no tin prescribed, a trace said, the smallest named as a fallback
    assert shop.count("trace: use what you have, or 1 × 0.25 L (the smallest)") == 2
    assert "trace amount" in shop and "under 10 mL" in shop
    # the ground paint, 55 mL, is more than a trace: one 0.25 L tin (common sizes, common practice)
    assert "1 × 0.25 L" in shop.replace("or 1 × 0.25 L", "")


def test_paint_card_shows_the_colour_the_photo_wanted_beside_the_mix():
    # snapped palette: the plan's colour is the mix (white), the photo wanted pale blue
    plan = _plan()
    p1 = plan.palette[0]
    p1.extra["recipe"] = {"target": "#a8c8f0", "predicted_srgb": p1.srgb, "delta_e": 19.0, "in_gamut": False,
                          "parts": [{"paint": "White", "parts": 1}]}
    text = plan_html(plan)
    row = re.search(r'<tr id="paint-P1">(.*?)</tr>', text, re.S).group(1)
    assert "background:#a8c8f0" in row and f"background:{p1.srgb}" in row
    assert row.index("background:#a8c8f0") < row.index(f"background:{p1.srgb}")  # photo, then mix
    assert ">photo<" in row and ">mix<" in row and "out of reach" in row
    # #a8c8f0 has CIELAB hue angle about 260° (CIE 15:2004): a blue
    assert re.search(r"photo: [a-z ]*blue <", row)
    card = _parse(text).section_text("paint-card")
    assert "difference between the two" in card and "the colour the photo wanted" in card
    assert "planned colour" not in card


def test_walls_in_feet_get_feet_square_feet_and_a_2_ft_grid():
    # 1 ft = 0.3048 m exactly (1959 agreement); 1 US gal = 3.785411784 L (NIST Handbook 44, App. C)
    from layerplan.export import build_files
    from layerplan.report import default_grid_mm

    assert default_grid_mm("ft") == pytest.approx(609.6) and default_grid_mm("in") == pytest.approx(609.6)
    assert default_grid_mm("m") == 500.0 and default_grid_mm("cm") == 500.0
    plan = _plan(unit="ft", w=12 * 304.8, h=8 * 304.8)
    plan.extra["settings"].update(wall_width_mm=12 * 304.8, wall_height_mm=8 * 304.8)
    doc = _parse(plan_html(plan))  # no grid given: 2 ft
    grid = doc.section_text("transfer-grid")
    assert "2 ft × 2 ft" in grid and "6 columns (A–F" in grid and "4 rows (1–4" in grid
    cover, shop = doc.section_text("cover"), doc.section_text("shopping")
    assert "96 ft² (8.92 m²)" in cover  # 12 × 8 ft = 96 ft² = 8.918 m²
    assert "12 ft wide, 8 ft tall" in cover and "3657.6" not in cover and "(mm)" not in cover
    # 10 m²/L = 10 / 0.3048² ft² per L × 3.785411784 L/gal = 407.5 ft² per US gallon
    assert "10 m² per litre (about 407 ft² per US gallon)" in shop
    assert re.search(r"\d ft² \([\d.]+ m²\)", shop)
    files = build_files(plan)  # the export default follows the unit too
    assert 'data-spacing-mm="609.6"' in files["overlay.svg"].decode()


def test_settings_are_in_plain_words():
    plan = _plan()
    plan.extra["settings"] = {"wall_width_mm": 4000.0, "wall_height_mm": None, "wall_unit": "m", "fit": "cover",
                              "paints": 5, "brushes_mm": [100.0, 50.0], "mm_per_px": None, "seed": 0,
                              "stroke_cost": 5.0, "inventory": None, "free_palette": False, "mix_paints": 3,
                              "max_parts": 10, "tolerance_de": 3.0}
    rows = dict(re.findall(r"<tr><td>([^<]*)</td><td>([^<]*)</td></tr>",
                           re.search(r"Settings used.*?</table>", plan_html(plan), re.S).group(0)))
    assert rows["paints mixed from"] == "basic acrylic set (built in)"
    assert rows["palette"] == "snapped to mixable colours"
    assert rows["mix tolerance"] == "ΔE00 3"
    assert rows["mixes"] == "at most 3 paints and 10 parts per mix"
    assert rows["paints"] == "5 asked, 4 after merging colours that mix the same"  # the plan has 4
    assert rows["surface as given"] == "4 m wide, height from the photo"
    for raw in ("inventory", "free palette", "tolerance de", "mix paints", "max parts", "wall width (mm)"):
        assert raw not in rows, raw
    assert "automatic" not in rows.get("inventory", "")


def test_default_grid_is_finer_on_small_surfaces():
    # 50 cm squares on walls, 10 cm on a 60 × 40 cm board (common practice: squaring up a drawing);
    # 2 ft / 4 in for surfaces measured in feet (1 ft = 304.8 mm exactly, 1959 agreement)
    from layerplan.report import default_grid_mm

    assert default_grid_mm("m", shorter_side_mm=2000.0) == 500.0
    assert default_grid_mm("cm", shorter_side_mm=400.0) == 100.0
    assert default_grid_mm("ft", shorter_side_mm=2438.4) == 609.6
    assert default_grid_mm("in", shorter_side_mm=600.0) == 101.6
    assert default_grid_mm("m") == 500.0


class _Ids(HTMLParser):
    def __init__(self):
        super().__init__()
        self.ids: list[str] = []

    def handle_starttag(self, tag, attrs):
        self.ids += [v for k, v in attrs if k == "id"]


@pytest.mark.parametrize("unit", ["m", "ft"])
def test_element_ids_are_unique(unit):
    # an id names one element of a document (HTML Living Standard, "The id attribute"): every SVG map
    # carries its own grid and outline groups, so theirs are scoped to their sheet
    plan = _plan(unit=unit)
    parser = _Ids()
    parser.feed(plan_html(plan))
    ids = parser.ids
    assert len(ids) == len(set(ids)), sorted({i for i in ids if ids.count(i) > 1})
    # the links of the brushes sheet still find their layer sheets
    assert {f"layer-{n:02d}" for n in range(1, len(plan.layers) + 1)} <= set(ids)


def test_text_from_the_plan_is_escaped():
    # the source image's name comes from the user: it must arrive as text, not markup (autoescaping)
    plan = _plan(source={"image": "<b onload=x>hall & stair.png"})
    text = plan_html(plan)
    assert "<b onload" not in text and "&lt;b onload=x&gt;hall &amp; stair" in text
    assert _parse(text).section_text("cover").startswith("Wall painting plan — <b onload=x>hall & stair")


def test_style_sheet_matches_the_printable_area():
    # A4 is 210 mm wide (ISO 216), Letter 279.4 mm tall (ANSI/ASME Y14.1): with 12 mm margins a sheet is
    # 186 mm wide; the pictures are sized in Python to the same box the CSS gives the sheet
    from layerplan.resources import static_dir
    from layerplan.sheets import PAGE_MARGIN_MM, PRINT_W_MM

    css = (static_dir() / "sheet.css").read_text(encoding="utf-8")
    assert PRINT_W_MM == 210.0 - 2 * 12.0 and PAGE_MARGIN_MM == 12.0
    assert f"@page {{ margin: {PAGE_MARGIN_MM:g}mm; }}" in css
    assert re.search(rf"\.sheet \{{[^}}]*max-width: {PRINT_W_MM:g}mm", css)
    assert re.search(rf"@media print[\s\S]*\.sheet \{{[^}}]*width: {PRINT_W_MM:g}mm", css)
    assert css in plan_html(_plan())  # inlined whole: the file prints with no other file


def test_the_sheets_are_plain_data_another_exporter_can_read():
    # what plan.html shows, without HTML: the wording module's text and the plan's own figures
    from layerplan.sheets import build_sheets
    from layerplan.wording import wall_size

    plan = _plan(unit="ft", w=12 * 304.8, h=8 * 304.8)
    sheets = build_sheets(plan)
    assert dict(sheets.cover.facts)["surface"] == wall_size(plan.wall_width_mm, plan.wall_height_mm, "ft")
    assert [r.id for r in sheets.paint_card.rows] == [p.id for p in plan.palette]
    assert [s.number for s in sheets.layers] == [1, 2]
    use = paint_use(plan)
    assert [s.paint for s in sheets.shopping.stock] == [s["paint"] for s in use["stock"]]
    for row in sheets.shopping.stock + sheets.shopping.paints:  # no markup in the text fields
        assert not any("<" in str(v) for v in vars(row).values())


# ------------------------------------------------------------------------- enlargements
def _fine_plan(unit="m", w=6000.0, h=3000.0, corner=False):
    """A 6 × 3 m wall with a 100, a 25 and a 12 mm layer: at 186 mm across (1:32) the 12 mm brush is
    0.4 mm on paper, so its layer needs enlargements; ``corner`` keeps the fine strokes in one corner."""
    palette = [Paint(f"P{k + 1}", srgb, (90.0 - 8 * k, 0.0, 0.0)) for k, srgb in
               enumerate(["#f0e8d8", "#c03020", "#2050a0", "#306030", "#e0b030", "#805030", "#d0d0d0"])]
    rng = np.random.default_rng(11)
    layers = []
    for width, count in ((100.0, 10), (25.0, 60), (12.0, 120)):
        lo = np.array([100.0, 100.0])
        hi = np.array([1400.0, 900.0]) if corner and width < 100 else np.array([w - 100, h - 100])
        strokes = []
        for _ in range(count):
            c = rng.uniform(lo, hi)
            strokes.append(Stroke(f"P{rng.integers(2, 8)}", width, np.array([c, c + rng.uniform(-120, 120, 2)])))
        strokes.sort(key=lambda s: s.paint)
        layers.append(Layer(width, strokes))
    return Plan(w, h, int(w / 4), int(h / 4), 4.0, palette, "P1", layers,
                {"settings": {"wall_unit": unit, "paints": 7, "brushes_mm": [100.0, 25.0, 12.0]}})


@pytest.fixture(scope="module")
def fine():
    from layerplan.sheets import build_sheets

    plan = _fine_plan()
    maps = outline_maps(plan)
    sheets = build_sheets(plan, outlines=maps)
    from layerplan.report import render_sheets

    return plan, maps, sheets, render_sheets(sheets)


class _Labels(HTMLParser):
    """Every area label (``<text class="area-label">``) of a document, and every id and url(#…) reference."""

    def __init__(self):
        super().__init__()
        self.labels, self.ids, self.refs, self._open = [], [], [], None

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        if "id" in a:
            self.ids.append(a["id"])
        for v in a.values():
            self.refs += re.findall(r"url\(#([^)]+)\)", v or "")
        if tag == "text" and a.get("class") == "area-label":
            self._open = [int(a["data-layer"]), int(a["data-area"]), ""]
            self.labels.append(self._open)

    def handle_data(self, data):
        if self._open is not None:
            self._open[2] += data

    def handle_endtag(self, tag):
        if tag == "text":
            self._open = None


def test_every_area_of_every_layer_is_labelled_on_some_sheet(fine):
    # count them: the outline maps (layerplan.outlines) list the areas; plan.html must label each one, with
    # its own paint, on the overview or on an enlargement
    plan, maps, sheets, text = fine
    p = _Labels()
    p.feed(text)
    assert sheets.enlargements  # the 12 mm layer cannot be read at 1:32
    for n, outline in enumerate(maps, start=1):
        got = {k for layer, k, _ in p.labels if layer == n}
        assert got == set(range(len(outline["areas"]))), n
        for layer, k, word in p.labels:
            if layer == n:
                assert word == outline["areas"][k]["paint"]
    # and on the enlargements of a layer each area is labelled exactly once
    enlarged = [(int(a), int(b)) for a, b in re.findall(
        r'class="area-label" data-area="(\d+)" data-layer="(\d+)"',
        "".join(str(e.map.svg) for e in sheets.enlargements))]
    assert len(enlarged) == len(set(enlarged))


def _svg_scale(svg: str) -> tuple[float, tuple[float, float, float, float]]:
    """Paper mm per wall mm of an SVG printed at its own size (width in mm over the viewBox width)."""
    width = float(re.search(r'<svg[^>]*\swidth="([\d.]+)mm"', svg).group(1))
    box = tuple(float(v) for v in re.search(r'<svg[^>]*\sviewBox="([^"]+)"', svg).group(1).split())
    return width / box[2], box


def test_the_narrowest_brush_prints_at_least_2_mm_on_every_enlargement(fine):
    # the figure's width (mm, as printed) over the wall it shows (its viewBox, mm of wall) is the scale;
    # brush × scale is the brush on paper (plane geometry), and the map fits the printable box
    from layerplan.sheets import MIN_BRUSH_PAPER_MM

    plan, _, sheets, text = fine
    for e in sheets.enlargements:
        scale, box = _svg_scale(str(e.map.svg))
        narrowest = min(s.width_mm for s in plan.layers[e.layer - 1].strokes)
        assert narrowest * scale >= MIN_BRUSH_PAPER_MM - 1e-6, e.title
        assert e.map.width_mm == pytest.approx(box[2] * scale, rel=1e-3)
        assert e.map.width_mm <= sheets.paper.print_w_mm + 1e-6
        assert box[3] * scale <= sheets.paper.print_h_mm
        assert f'style="width:{e.map.width_mm:.1f}mm"' in text  # printed at that width
        assert f"1:{1 / scale:.1f}".rstrip("0").rstrip(".") in e.lead or "1:" in e.lead


def test_no_enlargement_for_squares_the_layer_leaves_alone():
    # fine strokes only in the top left 1.4 × 0.9 m: sheets only where the layer's own canvas paints
    from layerplan.outlines import layer_canvas
    from layerplan.sheets import build_sheets

    plan = _fine_plan(corner=True)
    sheets = build_sheets(plan)
    fine_layers = {e.layer for e in sheets.enlargements}
    assert 3 in fine_layers
    for e in sheets.enlargements:
        _, (x, y, bw, bh) = _svg_scale(str(e.map.svg))
        painted = layer_canvas(plan, e.layer) >= 0
        s = plan.mm_per_px
        part = painted[int(y / s):int(np.ceil((y + bh) / s)), int(x / s):int(np.ceil((x + bw) / s))]
        assert part.any(), e.title
    # the 1.4 × 0.9 m corner is far less than the wall: fewer sheets than the wall cut at that scale
    whole = build_sheets(_fine_plan())
    assert len([e for e in sheets.enlargements if e.layer == 3]) < len([e for e in whole.enlargements if e.layer == 3])


def test_each_paint_has_its_own_pattern_in_black_and_white(fine):
    # hatching, not tint alone: every paint's pattern has a different motif (lines at another angle, grid,
    # dots, rings, dashes, or the same at another spacing), and areas of different paints use different ones
    from layerplan.svg import paint_pattern

    plan, maps, sheets, text = fine
    motifs = [paint_pattern(k) for k in range(33)]
    assert len(set(motifs)) == 33  # enough for the 32 paints the planner allows
    for e in sheets.enlargements:
        svg = str(e.map.svg)
        pats = re.findall(r'<pattern [^>]*data-motif="([^"]+)"[^>]*data-paint="([^"]+)"[^>]*id="([^"]+)"', svg)
        assert len({m for m, _, _ in pats}) == len({p for _, p, _ in pats}) == len(pats) > 1
        # what is left once colour is gone (a black-and-white printer's view): the drawing differs per paint
        grey = [re.sub(r'(fill|data-paint|id|data-motif)="[^"]*"', "", body)
                for body in re.findall(r"(<pattern [\s\S]*?</pattern>)", svg)]
        assert len(set(grey)) == len(grey) == len(pats)
        motif_of = {i: m for m, _, i in pats}
        fills = set(re.findall(r'data-paint="([^"]+)" fill="url\(#([^)]+)\)"', svg))
        assert fills and len({motif_of[f] for _, f in fills}) == len({p for p, _ in fills})
    # the same paint gets the same pattern on every sheet
    every = re.findall(r'<pattern [^>]*data-motif="([^"]+)"[^>]*data-paint="([^"]+)"', text)
    assert all(len({m for m, p in every if p == paint}) == 1 for _, paint in every)


def test_every_reference_in_the_file_finds_its_element(fine):
    # ids are scoped per figure (HTML: an id names one element); a pattern or clip path must still be found
    _, _, _, text = fine
    p = _Labels()
    p.feed(text)
    assert len(p.ids) == len(set(p.ids))
    assert p.refs and set(p.refs) <= set(p.ids)
    # labels sit on white boxes, not on a white outline drawn first (``paint-order``), which not every
    # SVG renderer honours (WeasyPrint, which a PDF export may use, paints the outline over the letters)
    assert "paint-order" not in text
    for e in fine[2].enlargements:
        assert str(e.map.svg).count("<rect") - 2 >= str(e.map.svg).count('class="area-label"')  # a box each


def test_enlargements_name_their_squares_and_have_a_key_and_scale_bar(fine):
    plan, _, sheets, text = fine
    doc = _parse(text)
    for e in sheets.enlargements:
        page = doc.section_text(e.anchor)
        assert re.search(r"squares? [A-Z]+\d+", page) and "Scale 1:" in page
        names = re.findall(r'class="square-name"', str(e.map.svg))
        assert names
        key = str(e.key.svg)
        assert 'id="' + e.anchor + '-key-scale-bar"' in key and "on the wall" in key
        # the brush sample in the key is drawn at the sheet's scale
        scale, _ = _svg_scale(str(e.map.svg))
        narrowest = min(s.width_mm for s in plan.layers[e.layer - 1].strokes)
        drawn = float(re.search(r'class="brush-sample"[^>]*stroke-width="([\d.]+)"', key).group(1))
        assert drawn == pytest.approx(narrowest * scale, abs=0.01)
    # the layer sheet says how many enlargements follow
    for n in {e.layer for e in sheets.enlargements}:
        count = len(sheets.enlargements_of(n))
        assert f"{count} enlargement sheet" in doc.section_text(f"layer-{n:02d}")


def test_a3_gives_bigger_sheets_and_its_page_size(fine):
    # A3 is 297 × 420 mm (ISO 216), Tabloid 11 × 17 in (ANSI/ASME Y14.1): the box both share inside 12 mm
    # margins is 255.4 × 396 mm; fewer sheets hold the same wall at the same brush width
    from layerplan.report import render_sheets
    from layerplan.sheets import build_sheets

    plan, maps, small, _ = fine
    big = build_sheets(plan, outlines=maps, paper="a3")
    assert (big.paper.print_w_mm, big.paper.print_h_mm) == pytest.approx((279.4 - 24, 420 - 24))
    assert len(big.enlargements) < len(small.enlargements)
    assert all(e.map.width_mm <= big.paper.print_w_mm + 1e-6 for e in big.enlargements)
    html = render_sheets(big)
    assert "@page { size: A3 portrait; }" in html
    assert "@page { size: letter portrait; }" in render_sheets(build_sheets(plan, outlines=maps, paper="letter"))
    with pytest.raises(ValueError, match="paper must be one of a4, letter, a3, tabloid, got 'b5'"):
        build_sheets(plan, outlines=maps, paper="b5")


def test_enlargements_are_capped_and_the_layer_sheet_says_so(fine):
    from layerplan.sheets import build_sheets

    plan, maps, sheets, _ = fine
    full = len(sheets.enlargements_of(3))
    capped = build_sheets(plan, outlines=maps, enlargements_per_layer=2)
    assert len(capped.enlargements_of(3)) == 2 < full
    assert f"the squares of {full - 2} more sheets with paint are left out" in capped.enlargement_note(3)
    with pytest.raises(ValueError, match="enlargements_per_layer must be a whole number >= 0"):
        build_sheets(plan, outlines=maps, enlargements_per_layer=-1)


def test_a_dense_transfer_grid_is_split_over_sheets_naming_every_square_once():
    # 20 × 8 m at 25 cm squares: 80 × 32 squares, 2.3 mm each across 186 mm (too small to copy from);
    # the parts together name each square (column letters A… spreadsheet style, rows from 1) exactly once
    from layerplan.sheets import GRID_PART_SQUARE_MM, build_sheets
    from layerplan.svg import column_label

    palette = [Paint("P1", "#f0e8d8", (92.6, 1.5, 7.5)), Paint("P2", "#c03020", (44.0, 56.0, 46.0))]
    plan = Plan(20000.0, 8000.0, 500, 200, 40.0, palette, "P1",
                [Layer(200.0, [Stroke("P2", 200.0, np.array([[1000.0, 1000.0], [5000.0, 2000.0]]))])],
                {"settings": {"wall_unit": "m"}})
    sheets = build_sheets(plan, grid_mm=250.0)
    assert len(sheets.grid_parts) > 1
    named = re.findall(r'class="square-name"[^>]*>|<text[^>]*>([A-Z]+\d+)</text>',
                       "".join(str(p.figure.svg) for p in sheets.grid_parts))
    named = [n for n in named if n]
    expect = [f"{column_label(i)}{j + 1}" for i in range(80) for j in range(32)]
    assert sorted(named) == sorted(expect)
    for part in sheets.grid_parts:
        scale = part.figure.width_mm / float(re.search(r'viewBox="[^ ]+ [^ ]+ ([\d.]+)', str(part.figure.svg)).group(1))
        assert 250.0 * scale == pytest.approx(GRID_PART_SQUARE_MM)
        assert part.figure.width_mm <= sheets.paper.print_w_mm
    assert not build_sheets(_plan()).grid_parts  # 8 × 5 squares of 23 mm need no split


def test_the_enlargements_option_reaches_plan_html():
    # --enlargements N, through the export as the CLI and the web call it: N sheets a layer at most, 0 for none
    from layerplan.export import build_files

    plan = _fine_plan(corner=True)
    counts = {}
    for n in (0, 1, 24):
        text = build_files(plan, enlargements_per_layer=n)["plan.html"].decode("utf-8")
        per_layer = [len(re.findall(rf'<section class="sheet enlargement" id="layer-{k:02d}-part-', text))
                     for k in range(1, len(plan.layers) + 1)]
        assert max(per_layer) <= n
        counts[n] = sum(per_layer)
    assert counts[0] == 0 < counts[1] < counts[24]


def test_a_square_too_big_for_one_sheet_is_cut_into_parts():
    # a 3 mm brush must print 2 mm: 1:1.5 at least, so a 50 cm square (333 mm of paper) cannot fit a
    # 186 × 180 mm map box; it is cut 2 × 2, each part named, each at a scale keeping the brush 2 mm
    from layerplan.sheets import MIN_BRUSH_PAPER_MM, build_sheets

    rng = np.random.default_rng(1)
    palette = [Paint("P1", "#f0e8d8", (92.6, 1.5, 7.5)), Paint("P2", "#c03020", (44.0, 56.0, 46.0)),
               Paint("P3", "#2050a0", (36.0, 12.0, -50.0))]
    strokes = [Stroke(f"P{rng.integers(2, 4)}", 3.0, rng.uniform(50, 950, (2, 2))) for _ in range(30)]
    plan = Plan(1000.0, 1000.0, 1000, 1000, 1.0, palette, "P1", [Layer(3.0, strokes)], {"settings": {"wall_unit": "m"}})
    sheets = build_sheets(plan, grid_mm=500.0)
    names = [re.search(r"square ([A-Z]\d), part (\d) of (\d)", e.title).groups() for e in sheets.enlargements]
    assert names and all(total == "4" for *_, total in names) and len(set(names)) == len(names)
    for e in sheets.enlargements:
        scale, box = _svg_scale(str(e.map.svg))
        assert 3.0 * scale >= MIN_BRUSH_PAPER_MM - 1e-6 and box[2] == pytest.approx(250.0)
        assert e.map.width_mm <= sheets.paper.print_w_mm and box[3] * scale <= sheets.paper.print_h_mm
    assert sum(e.labelled for e in sheets.enlargements) == len(outline_maps(plan)[0]["areas"])


def test_every_area_part_on_an_enlargement_carries_its_paint(fine):
    # reference: scipy.ndimage.label (4-connected, its default structure) on the layer's own canvas, paint by
    # paint; every area with at least a quarter of a brush square inside a sheet's part of the wall is labelled
    # on that sheet, in upright type if the sheet holds its label point, else in italics
    from scipy import ndimage

    from layerplan.outlines import layer_canvas

    plan, maps, sheets, _ = fine
    labelled = {}  # (layer, paint) -> scipy's areas of that paint in that layer
    for n, outline in enumerate(maps, start=1):
        canvas = layer_canvas(plan, n)
        for paint in {a["paint"] for a in outline["areas"]}:
            labelled[n, paint] = ndimage.label(canvas == plan.paint_index()[paint])[0]
    for e in sheets.enlargements:
        s = plan.mm_per_px
        _, (x, y, bw, bh) = _svg_scale(str(e.map.svg))
        i0, i1, j0, j1 = int(y / s), int(np.ceil((y + bh) / s)), int(x / s), int(np.ceil((x + bw) / s))
        brush = min(st.width_mm for st in plan.layers[e.layer - 1].strokes)
        svg = str(e.map.svg)
        written = {int(k) for k in re.findall(r'class="area-label[^"]*" data-area="(\d+)"', svg)}
        for k, a in enumerate(maps[e.layer - 1]["areas"]):
            lab = labelled[e.layer, a["paint"]]
            pi, pj = int(a["label_mm"][1] / s), int(a["label_mm"][0] / s)
            inside = int(np.sum(lab[i0:i1, j0:j1] == lab[pi, pj]))
            if inside >= 0.25 * (brush / s) ** 2:
                assert k in written, (e.title, k)
        italic = re.findall(r'class="area-label continued" data-area="(\d+)"', svg)
        assert all(not (x <= maps[e.layer - 1]["areas"][int(k)]["label_mm"][0] < x + bw
                        and y <= maps[e.layer - 1]["areas"][int(k)]["label_mm"][1] < y + bh) for k in italic)
