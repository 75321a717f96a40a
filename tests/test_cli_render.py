"""`layerplan plan` writes the printable outputs, and `layerplan render` rebuilds them
from a plan.json with other quantity options. Quantities are checked against the usual
estimate (area × coats ÷ spreading rate, plus the waste allowance; common practice) worked
by hand; bad options exit non-zero leaving nothing behind."""

from __future__ import annotations

import json
import xml.etree.ElementTree as ET

import numpy as np
import pytest
from PIL import Image

from layerplan.cli import main

ARGS = ["--wall", "80x60cm", "--pixel-mm", "10", "--brushes", "100,50", "--paints", "3", "--quiet"]
NS = {"svg": "http://www.w3.org/2000/svg"}


@pytest.fixture(scope="module")
def planned(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("render")
    img = np.zeros((60, 80, 3), np.uint8)
    img[:30, :40] = (200, 40, 40)
    img[:30, 40:] = (40, 160, 60)
    img[30:] = (240, 220, 90)
    photo = tmp / "three.png"
    Image.fromarray(img).save(photo)
    out = tmp / "plan"
    assert main(["plan", str(photo), "--out", str(out), "--coverage", "8", "--waste", "10%",
                 "--ground-coats", "3", "--grid", "20cm", *ARGS]) == 0
    return tmp, out


def _ground_litres(doc):
    use = doc["paint_use"]
    return next(p["litres"] for p in use["paints"] if p["paint"] == doc["ground"]["paint"])


def test_plan_writes_html_svgs_and_quantities(planned):
    _, out = planned
    doc = json.loads((out / "plan.json").read_text())
    assert doc["paint_use"]["coverage_m2_per_litre"] == 8.0 and doc["paint_use"]["waste"] == 0.1
    # area × coats ÷ spreading rate × (1 + waste), by hand (common practice): 0.48 m² × 3 coats / 8 m²/L × 1.1, plus the
    # ground paint's own strokes, each by its coats (a light stroke over a dark area takes more than one)
    ground = next(p for p in doc["paint_use"]["paints"] if p["paint"] == doc["ground"]["paint"])
    expect = (0.48 * 3 + ground["stroke_coat_area_m2"]) / 8 * 1.1
    assert ground["litres"] == pytest.approx(expect, abs=1e-3)
    html = (out / "plan.html").read_text()
    assert 'id="safety"' in html and html.count('class="sheet layer"') == len(doc["layers"])
    svg = ET.parse(out / "overlay.svg").getroot()
    assert svg.get("width") == "800mm"
    grid = svg.find("svg:g[@id='grid']", NS)
    assert grid is not None and grid.get("data-spacing-mm") == "200"
    for n, layer in enumerate(doc["layers"], start=1):
        step = ET.parse(out / "steps" / f"{n:02d}.svg").getroot()
        assert len(step.findall("svg:g[@id='layer-%02d']/svg:path" % n, NS)) == len(layer["strokes"])


def test_render_rebuilds_with_new_options_and_keeps_strokes(planned):
    tmp, out = planned
    again = tmp / "again"
    assert main(["render", str(out / "plan.json"), "--out", str(again), "--coverage", "16", "--waste", "0",
                 "--ground-coats", "1"]) == 0
    old = json.loads((out / "plan.json").read_text())
    new = json.loads((again / "plan.json").read_text())
    assert new["layers"] == old["layers"]

    def without_batch(palette):  # a recipe's batch follows the quantities (layerplan.batches)
        return [{**p, "recipe": {k: v for k, v in p["recipe"].items() if k != "batch"}} if "recipe" in p else p
                for p in palette]

    assert without_batch(new["palette"]) == without_batch(old["palette"])
    litres = {p["paint"]: p["litres"] for p in new["paint_use"]["paints"]}
    for p in new["palette"]:
        if "recipe" in p:
            assert sum(b["litres"] for b in p["recipe"]["batch"]) == pytest.approx(litres[p["id"]], abs=1e-9)
    ground = next(p for p in new["paint_use"]["paints"] if p["paint"] == new["ground"]["paint"])
    assert ground["litres"] == pytest.approx((0.48 * 1 + ground["stroke_coat_area_m2"]) / 16, abs=1e-3)
    assert _ground_litres(new) < _ground_litres(old)
    assert (again / "plan.html").exists() and (again / "final.png").read_bytes() == (out / "final.png").read_bytes()


@pytest.mark.parametrize("extra, message", [
    (["--waste", "lots"], "--waste must be a fraction or a percentage"),
    (["--coverage", "0"], "--coverage must be from 0.5 to 100, got 0"),  # the same words as the web form's
    (["--ground-coats", "-1"], "--ground-coats must be a whole number from 0 to 10, got -1"),
    (["--stroke-coats", "0"], "--stroke-coats must be a whole number from 1 to 10, got 0"),
    (["--grid", "5parsec"], "--grid must be a length such as 50cm"),
    (["--grid", "1mm"], "--grid of 1 mm gives 800 squares"),  # checked before writing, naming the flag
])
def test_render_bad_options_leave_nothing(planned, extra, message, capsys):
    tmp, out = planned
    dest = tmp / "bad"
    assert main(["render", str(out / "plan.json"), "--out", str(dest), *extra]) == 2
    assert message in capsys.readouterr().err
    assert not dest.exists() and not list(tmp.glob(".bad.partial-*"))


def test_render_refuses_what_is_not_a_plan(planned, capsys):
    tmp, out = planned
    assert main(["render", str(out / "final.png"), "--out", str(tmp / "x")]) == 2
    assert "is not a plan.json" in capsys.readouterr().err
    (tmp / "other.json").write_text('{"format": "something else"}')
    assert main(["render", str(tmp / "other.json"), "--out", str(tmp / "x")]) == 2
    assert "not a layerplan plan" in capsys.readouterr().err
    assert main(["render", str(tmp / "missing.json"), "--out", str(tmp / "x")]) == 2
    assert "is not a file" in capsys.readouterr().err
    assert not (tmp / "x").exists()


def _tree(folder):
    return {str(p.relative_to(folder)): p.read_bytes() for p in sorted(folder.rglob("*")) if p.is_file()}


def test_render_is_byte_for_byte_repeatable(planned):
    # same plan.json -> the same bytes in every file, also from another process with another
    # string-hash seed (Python randomises str hashes per process unless PYTHONHASHSEED is set)
    import os
    import subprocess
    import sys

    tmp, out = planned
    first, second = tmp / "again-1", tmp / "again-2"
    for dest, seed in ((first, "1"), (second, "2")):
        env = dict(os.environ, PYTHONHASHSEED=seed)
        subprocess.run([sys.executable, "-m", "layerplan", "render", str(out / "plan.json"), "--out", str(dest),
                        "--coverage", "8", "--waste", "10%", "--ground-coats", "3", "--grid", "20cm"],
                       check=True, env=env, capture_output=True)
    a, b = _tree(first), _tree(second)
    assert sorted(a) == sorted(_tree(out)) and "steps/01.svg" in a and "plan.html" in a
    assert a == b
    assert a == _tree(out)  # the same options as `layerplan plan` had: the same files


def test_step_pictures_follow_the_rendering_rule(planned):
    # steps/NN.png is the wall after layer NN by the rendering rule (raster.render_steps),
    # and final.png the wall after the last layer
    from layerplan.plan import Plan
    from layerplan.raster import render_steps

    _, out = planned
    plan = Plan.from_json((out / "plan.json").read_text())
    rgb = plan.palette_rgb()
    steps = render_steps(plan)
    for n, canvas in enumerate(steps):
        assert np.array_equal(np.asarray(Image.open(out / "steps" / f"{n:02d}.png").convert("RGB")), rgb[canvas])
    assert np.array_equal(np.asarray(Image.open(out / "final.png").convert("RGB")), rgb[steps[-1]])


@pytest.mark.parametrize("umask, mode", [(0o022, 0o755), (0o027, 0o750), (0o077, 0o700)])
def test_finished_folder_mode_follows_the_umask(planned, umask, mode):
    # POSIX mkdir(2): a new folder gets mode 0777 & ~umask; the finished plan folder must too,
    # not the 0700 of its temporary folder (so a web server or another user can read it)
    import os
    import stat

    tmp, out = planned
    dest = tmp / f"mode-{umask:o}"
    old = os.umask(umask)
    try:
        assert main(["render", str(out / "plan.json"), "--out", str(dest)]) == 0
    finally:
        os.umask(old)
    assert stat.S_IMODE(dest.stat().st_mode) == mode
    assert stat.S_IMODE((dest / "steps").stat().st_mode) == mode
    assert stat.S_IMODE((dest / "plan.json").stat().st_mode) == mode & 0o666
    assert not list(dest.glob(".mode*"))


def test_render_follows_the_wall_unit_in_plan_json(planned):
    # plan.json keeps the wall unit as settings.wall_unit: a plan measured in feet gets US
    # gallons beside litres (1 US gal = 3.785411784 L, NIST Handbook 44, App. C) and keeps its unit
    tmp, out = planned
    doc = json.loads((out / "plan.json").read_text())
    assert doc["settings"]["wall_unit"] == "cm"  # `--wall 80x60cm`
    assert all("us_gallons" not in p for p in doc["paint_use"]["paints"])
    doc["settings"]["wall_unit"] = "ft"
    src, dest = tmp / "feet.json", tmp / "feet"
    src.write_text(json.dumps(doc))
    assert main(["render", str(src), "--out", str(dest)]) == 0
    new = json.loads((dest / "plan.json").read_text())
    assert new["settings"] == doc["settings"] and list(new) == list(doc)
    for p in new["paint_use"]["paints"]:
        assert p["us_gallons"] == pytest.approx(p["litres"] / 3.785411784, abs=1e-3)
