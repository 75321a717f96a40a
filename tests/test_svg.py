"""Wall-scale SVG (layerplan/svg.py), read back with Python's own XML parser
(xml.etree.ElementTree) and checked against the SVG 1.1 attributes it must carry
(W3C SVG 1.1 Second Edition: 7.7 viewBox, 7.10 units, 11.4 stroke properties)."""

from __future__ import annotations

import dataclasses
import math
import re
import xml.etree.ElementTree as ET

import numpy as np
import pytest

from layerplan.outlines import outline_maps
from layerplan.plan import Layer, Paint, Plan, Stroke
from layerplan.svg import column_label, layer_svg, overlay_svg

NS = {"svg": "http://www.w3.org/2000/svg"}
PALETTE = [Paint("P1", "#f0e8d8", (92.6, 1.5, 7.5)), Paint("P2", "#c03020", (44.0, 56.0, 46.0)),
           Paint("P3", "#2050a0", (36.0, 12.0, -50.0))]


def _plan():
    rng = np.random.default_rng(2)
    layers = []
    for width, count in ((100.0, 6), (50.0, 9), (25.0, 14)):
        strokes = [Stroke(f"P{rng.integers(2, 4)}", width, rng.uniform([0, 0], [4000, 2500], (int(rng.integers(1, 5)), 2)))
                   for _ in range(count)]
        layers.append(Layer(width, strokes))
    return Plan(4000.0, 2500.0, 400, 250, 10.0, PALETTE, "P1", layers)


def _points(d):
    """Coordinates of an 'M x,y L x,y x,y ...' path."""
    return np.array([[float(a), float(b)] for a, b in re.findall(r"(-?[\d.]+),(-?[\d.]+)", d)])


def test_document_is_the_wall_in_millimetres():
    plan = _plan()
    root = ET.fromstring(overlay_svg(plan))
    assert root.tag == "{http://www.w3.org/2000/svg}svg"
    assert root.get("width") == "4000mm" and root.get("height") == "2500mm"
    assert [float(v) for v in root.get("viewBox").split()] == [0.0, 0.0, 4000.0, 2500.0]
    ground = root.find("svg:g[@id='ground']/svg:rect", NS)
    assert ground.get("fill") == "#f0e8d8" and float(ground.get("width")) == 4000.0


def test_one_group_per_layer_one_path_per_stroke():
    plan = _plan()
    root = ET.fromstring(overlay_svg(plan))
    groups = root.findall("svg:g[@class='layer']", NS)
    assert [g.get("id") for g in groups] == ["layer-01", "layer-02", "layer-03"]
    colours = {p.id: p.srgb for p in plan.palette}
    for g, layer in zip(groups, plan.layers):
        assert g.find("svg:title", NS).text.startswith(f"Layer {plan.layers.index(layer) + 1}:")
        paths = g.findall("svg:path", NS)
        assert len(paths) == len(layer.strokes)
        for path, st in zip(paths, layer.strokes):
            assert float(path.get("stroke-width")) == st.width_mm == layer.brush_width_mm
            assert path.get("stroke-linecap") == "round" and path.get("stroke-linejoin") == "round"
            assert path.get("fill") == "none"
            assert path.get("stroke") == colours[st.paint]
            pts = _points(path.get("d"))
            expect = st.path_mm if len(st.path_mm) > 1 else np.repeat(st.path_mm, 2, axis=0)
            np.testing.assert_allclose(pts, expect, atol=0.006)  # written to 0.01 mm


def test_grid_group_has_lines_at_the_spacing_and_labels():
    # a 4 × 2.5 m wall at 50 cm: 9 vertical lines (0..4000) and 6 horizontal (0..2500);
    # columns A-H and rows 1-5, the spreadsheet A1 style (from memory)
    plan = _plan()
    root = ET.fromstring(overlay_svg(plan, grid_mm=500))
    grid = root.find("svg:g[@id='grid']", NS)
    lines = grid.findall(".//svg:line", NS)
    xs = sorted({float(l.get("x1")) for l in lines if l.get("x1") == l.get("x2")})
    ys = sorted({float(l.get("y1")) for l in lines if l.get("y1") == l.get("y2")})
    assert xs == [500.0 * i for i in range(9)]
    assert ys == [500.0 * i for i in range(6)]
    labels = [t.text for t in grid.findall(".//svg:text", NS)]
    assert labels == list("ABCDEFGH") + ["1", "2", "3", "4", "5"]
    # a 3.2 m width at 1 m: the last column is partial but still a square to label
    plan = dataclasses.replace(plan, wall_width_mm=3200.0)
    grid = ET.fromstring(overlay_svg(plan, grid_mm=1000)).find("svg:g[@id='grid']", NS)
    vx = sorted({float(l.get("x1")) for l in grid.findall(".//svg:line", NS) if l.get("x1") == l.get("x2")})
    assert vx == [0.0, 1000.0, 2000.0, 3000.0, 3200.0]
    assert [t.text for t in grid.findall(".//svg:text", NS)][:4] == ["A", "B", "C", "D"]


def test_column_labels_follow_the_a1_style():
    # spreadsheet column letters (from memory): A..Z, then AA, AB, ..., AZ, BA
    assert [column_label(i) for i in (0, 1, 25, 26, 27, 51, 52, 701, 702)] == \
        ["A", "B", "Z", "AA", "AB", "AZ", "BA", "ZZ", "AAA"]


def test_outline_maps_are_a_group_per_layer():
    plan = _plan()
    maps = outline_maps(plan)
    root = ET.fromstring(overlay_svg(plan, outlines=maps))
    sub = root.findall("svg:g[@id='outlines']/svg:g", NS)
    assert [g.get("id") for g in sub] == ["outlines-01", "outlines-02", "outlines-03"]
    assert all(g.get("display") == "none" for g in sub)  # hidden over the finished picture
    for g, m in zip(sub, maps):
        shapes = g.findall(".//svg:path", NS)
        assert len(shapes) == len(m["areas"])
        assert [p.get("data-paint") for p in shapes] == [a["paint"] for a in m["areas"]]
        assert all(p.get("fill-rule") == "evenodd" for p in shapes)
        assert [t.text for t in g.findall(".//svg:text", NS)] == [a["paint"] for a in m["areas"]]
    shown = ET.fromstring(overlay_svg(plan, outlines=maps, show_outlines=True))
    assert all(g.get("display") is None for g in shown.findall("svg:g[@id='outlines']/svg:g", NS))


def test_layer_svg_holds_only_that_layer():
    plan = _plan()
    root = ET.fromstring(layer_svg(plan, 2, grid_mm=1000))
    assert root.get("width") == "4000mm" and root.get("viewBox") == "0 0 4000 2500"
    assert root.find("svg:g[@id='ground']", NS) is None
    groups = root.findall("svg:g[@class='layer']", NS)
    assert [g.get("id") for g in groups] == ["layer-02"]
    assert len(groups[0].findall("svg:path", NS)) == len(plan.layers[1].strokes)
    assert root.find("svg:g[@id='grid']", NS) is not None


def test_dab_is_a_zero_length_round_capped_path():
    # SVG 1.1, 11.4: a zero-length subpath with round caps is drawn as a disc of the stroke width
    plan = Plan(1000.0, 1000.0, 100, 100, 10.0, PALETTE, "P1",
                [Layer(40.0, [Stroke("P2", 40.0, np.array([[300.0, 400.0]]))])])
    path = ET.fromstring(overlay_svg(plan)).find(".//svg:g[@id='layer-01']/svg:path", NS)
    pts = _points(path.get("d"))
    assert pts.tolist() == [[300.0, 400.0], [300.0, 400.0]] and path.get("stroke-linecap") == "round"


def test_bad_grid_and_layer_are_named():
    plan = _plan()
    with pytest.raises(ValueError, match=r"grid spacing must be > 0 mm, got 0"):
        overlay_svg(plan, grid_mm=0)
    with pytest.raises(ValueError, match=r"grid spacing 10 mm gives 400 squares along a 4 m side; use at least 20 mm"):
        overlay_svg(plan, grid_mm=10)
    with pytest.raises(ValueError, match=r"layer must be a number from 1 to 3, got 4"):
        layer_svg(plan, 4)


def test_markup_characters_in_names_survive_the_xml_parser():
    # XML 1.0 (W3C, Fifth Edition) 2.4 and 3.3.3: &, < and " must be escaped in attribute
    # values and & and < in text; Python's own parser must read the original names back
    odd = "P&<\"1>"
    palette = [Paint(odd, "#f0e8d8", (92.6, 1.5, 7.5)), PALETTE[1]]
    plan = Plan(1000.0, 1000.0, 100, 100, 10.0, palette, odd,
                [Layer(40.0, [Stroke(odd, 40.0, np.array([[300.0, 400.0], [600.0, 400.0]])),
                              Stroke("P2", 40.0, np.array([[300.0, 600.0], [600.0, 700.0]]))])])
    root = ET.fromstring(overlay_svg(plan, outlines=outline_maps(plan), grid_mm=250))
    assert root.find("svg:g[@id='ground']", NS).get("data-paint") == odd
    assert odd in root.find("svg:g[@id='ground']/svg:title", NS).text
    paths = root.findall("svg:g[@id='layer-01']/svg:path", NS)
    assert [p.get("data-paint") for p in paths] == [odd, "P2"]
    labels = [t.text for t in root.findall("svg:g[@id='outlines']//svg:text", NS)]
    assert odd in labels and "P2" in labels


def test_outline_map_svg_draws_the_area_a_stroke_covers():
    # a 600 mm stroke of a 100 mm round brush covers a capsule, a 600 × 100 mm rectangle plus two
    # half-discs of radius 50 mm: 600·100 + π·50² mm² (elementary geometry). Traced on 10 mm
    # pixels, the outline may stray from the true edge by up to about half a pixel all round,
    # so the area it encloses (shoelace formula) is within half a pixel × the perimeter.
    from layerplan.outlines import layer_outlines
    from layerplan.svg import outline_map_svg

    length, width, s = 600.0, 100.0, 10.0
    stroke = Stroke("P2", width, np.array([[200.0, 500.0], [200.0 + length, 500.0]]))
    plan = Plan(1000.0, 1000.0, 100, 100, s, PALETTE, "P1", [Layer(width, [stroke])])
    outline = layer_outlines(plan, 1)
    root = ET.fromstring(outline_map_svg(plan, outline))
    shapes = root.findall(".//svg:path[@data-paint]", NS)
    assert [p.get("data-paint") for p in shapes] == ["P2"]  # one area, in the stroke's paint
    assert shapes[0].get("fill") == "#c03020" and shapes[0].get("fill-rule") == "evenodd"
    rings = [_points(d) for d in re.findall(r"M([^MZ]*)Z", shapes[0].get("d"))]
    assert len(rings) == 1  # a capsule has no holes
    ring = rings[0]
    np.testing.assert_allclose(ring, outline["areas"][0]["contours_mm"][0], atol=0.006)  # written to 0.01 mm
    x, y = ring[:, 0], ring[:, 1]
    enclosed = 0.5 * abs(float(np.dot(x, np.roll(y, -1)) - np.dot(y, np.roll(x, -1))))
    capsule = length * width + math.pi * (width / 2) ** 2
    perimeter = 2 * length + math.pi * width
    assert abs(enclosed - capsule) <= 0.5 * s * perimeter
    assert x.min() == pytest.approx(200.0 - width / 2, abs=s) and x.max() == pytest.approx(800.0 + width / 2, abs=s)
    assert y.min() == pytest.approx(500.0 - width / 2, abs=s) and y.max() == pytest.approx(500.0 + width / 2, abs=s)
    # its label is drawn inside it
    label = root.find(".//svg:text", NS)
    assert label.text == "P2" and 200.0 <= float(label.get("x")) <= 800.0
    assert 450.0 <= float(label.get("y")) <= 550.0


def test_numbers_are_written_with_at_most_two_decimals():
    # Python's own float formatting (format spec ".2f", round half to even on the binary value)
    # with trailing zeros dropped
    from layerplan.svg import _f

    values = [0.0, -0.0, -0.004, 0.005, 1.005, 2.675, 10.0, 100.10, -12.5, 1234.567, 3, 1e-9]
    assert [_f(v) for v in values] == ["0", "0", "0", "0.01", "1", "2.67", "10", "100.1", "-12.5", "1234.57",
                                       "3", "0"]
    rng = np.random.default_rng(0)
    more = np.concatenate([rng.uniform(-50, 5000, 2000), np.round(rng.uniform(-5, 5, 2000), 3)]).tolist()
    assert all(float(_f(v)) == pytest.approx(round(v, 2), abs=1e-9) for v in more)


def test_projection_files_carry_the_transfer_grid():
    # steps/NN.svg, as the export writes them: each holds a grid group whose lines fall on the grid
    # square (a 4 × 2.5 m wall at 50 cm: x = 0, 500 … 4000 and y = 0, 500 … 2500) and stays the
    # wall in millimetres, so a projector or plotter sets it to scale
    from layerplan.export import build_files

    plan = _plan()
    files = build_files(plan, grid_mm=500.0)
    for n in range(1, len(plan.layers) + 1):
        root = ET.fromstring(files[f"steps/{n:02d}.svg"])
        assert root.get("width") == "4000mm" and root.get("viewBox") == "0 0 4000 2500"
        grid = root.find("svg:g[@id='grid']", NS)
        assert grid is not None and grid.get("data-spacing-mm") == "500"
        lines = grid.findall(".//svg:line", NS)
        xs = sorted({float(l.get("x1")) for l in lines if l.get("x1") == l.get("x2")})
        ys = sorted({float(l.get("y1")) for l in lines if l.get("y1") == l.get("y2")})
        assert xs == [500.0 * i for i in range(9)] and ys == [500.0 * i for i in range(6)]
        # drawn over the layer's strokes: the grid comes after the layer group
        ids = [g.get("id") for g in root.findall("svg:g", NS)]
        assert ids.index(f"layer-{n:02d}") < ids.index("grid")
    # the same square on the printed plan: a 60 cm grid moves the lines of both
    other = ET.fromstring(build_files(plan, grid_mm=600.0)["steps/01.svg"]).find("svg:g[@id='grid']", NS)
    assert other.get("data-spacing-mm") == "600"


def test_enlargement_svg_prints_at_its_scale_and_clips_to_its_squares():
    # a 1 m × 1 m part at 1:5 is 200 mm of paper (plane geometry); every area drawn meets the part,
    # shapes are clipped to it, and every label given is written with its area's paint
    from layerplan.outlines import layer_outlines
    from layerplan.svg import enlargement_svg

    plan = _plan()
    outline = layer_outlines(plan, 3)
    box = (1000.0, 500.0, 2000.0, 1500.0)
    held = [k for k, a in enumerate(outline["areas"])
            if box[0] <= a["label_mm"][0] < box[2] and box[1] <= a["label_mm"][1] < box[3]]
    labels = [{"area": k, "x": outline["areas"][k]["label_mm"][0], "y": outline["areas"][k]["label_mm"][1],
               "moved": False, "font_mm": 12.5, "half_w_mm": 8.0, "half_h_mm": 6.0} for k in held]
    root = ET.fromstring(enlargement_svg(plan, outline, box_mm=box, paper_per_wall=0.2, grid_mm=500.0,
                                         labels=labels))
    assert root.get("width") == "200mm" and root.get("height") == "200mm"
    assert root.get("viewBox") == "1000 500 1000 1000"
    shapes = root.find("svg:g[@id='areas-03']", NS)
    assert shapes.get("clip-path") == "url(#clip)" and root.find(".//svg:clipPath[@id='clip']", NS) is not None
    for p in shapes.findall("svg:path", NS):
        pts = _points(p.get("d"))
        assert pts[:, 0].max() >= box[0] and pts[:, 0].min() <= box[2]
        assert pts[:, 1].max() >= box[1] and pts[:, 1].min() <= box[3]
    texts = root.findall(".//svg:text[@class='area-label']", NS)
    assert [int(t.get("data-area")) for t in texts] == held
    assert all(t.text == outline["areas"][int(t.get("data-area"))]["paint"] for t in texts)
    names = [t.text for t in root.findall(".//svg:g[@class='square-name']/svg:text", NS)]
    assert names == ["C2", "C3", "D2", "D3"]  # columns C-D (1000-2000 mm), rows 2-3 (500-1500 mm)
