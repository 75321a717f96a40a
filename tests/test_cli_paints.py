"""Tests for `layerplan paints` and `layerplan mix`: their options, output and JSON forms."""

import json
import re

import numpy as np
import pytest

from layerplan import mixing
from layerplan.cli import main
from layerplan.colour import delta_e00, srgb_to_lab
from layerplan.inventory import default_inventory
from layerplan.plan import hex_to_rgb

KIT = """\
title = "Community-centre wall kit"
[[paint]]
name = "Chalk white"
srgb = "#f2f1ea"
[[paint]]
name = "Deep blue"
srgb = "#1b3a8c"
[[paint]]
name = "Sun yellow"
srgb = "#f0c814"
"""


def run(capsys, *argv):
    capsys.readouterr()
    code = main(list(argv))
    out, err = capsys.readouterr()
    return code, out, err


@pytest.fixture
def kit(tmp_path):
    f = tmp_path / "kit.toml"
    f.write_text(KIT, encoding="utf-8")
    return str(f)


def test_paints_json_lists_name_and_srgb(capsys, kit):
    # `layerplan paints --json` -> a list of {"name", "srgb"}
    code, out, _ = run(capsys, "paints", "--json")
    assert code == 0
    assert json.loads(out) == [{"name": p.name, "srgb": p.srgb} for p in default_inventory().paints]
    code, out, _ = run(capsys, "paints", "--inventory", kit, "--json")
    assert code == 0 and [p["name"] for p in json.loads(out)] == ["Chalk white", "Deep blue", "Sun yellow"]
    code, out, _ = run(capsys, "paints", "--inventory", kit)
    assert code == 0 and "Community-centre wall kit" in out and "#1b3a8c" in out


def test_mix_json_gives_a_recipe_per_colour(capsys, kit):
    # the recipe's JSON form: {"target", "parts": [{"paint", "parts"}], "predicted_srgb", "delta_e", "in_gamut"}
    code, out, _ = run(capsys, "mix", "#1b3a8c", "ff00ff", "--inventory", kit, "--json")
    assert code == 0
    stock, magenta = json.loads(out)
    assert stock == {"target": "#1b3a8c", "parts": [{"paint": "Deep blue", "parts": 1}],
                     "predicted_srgb": "#1b3a8c", "delta_e": 0.0, "in_gamut": True}
    assert magenta["target"] == "#ff00ff" and magenta["in_gamut"] is False and magenta["delta_e"] > 3
    # the reported ΔE00 is between the target and the predicted colour (layerplan.colour, scikit-image)
    pred = srgb_to_lab(np.array(hex_to_rgb(magenta["predicted_srgb"]), np.uint8))
    assert float(delta_e00(pred, srgb_to_lab(np.array([255, 0, 255], np.uint8)))) == pytest.approx(
        magenta["delta_e"], abs=0.5)


def test_mix_options_limit_the_recipe(capsys, kit):
    code, out, _ = run(capsys, "mix", "#6b8e23", "--inventory", kit, "--json", "--mix-paints", "1")
    assert code == 0 and len(json.loads(out)[0]["parts"]) == 1
    code, out, _ = run(capsys, "mix", "#6b8e23", "--inventory", kit, "--json", "--tolerance", "100")
    assert code == 0 and json.loads(out)[0]["in_gamut"] is True


def test_mix_text_names_parts_and_cautions_to_test_a_swatch(capsys, kit):
    code, out, _ = run(capsys, "mix", "#1b3a8c", "--inventory", kit)
    assert code == 0 and "1 part  Deep blue" in out and "swatch" in out


def test_combine_predicts_the_mix(capsys, kit):
    # `mix --combine NAME=PARTS ... --json` -> {"predicted_srgb", "lab"}, with "no_tint" naming the
    # paints this inventory gives no tint for; blue and yellow paint make a green (fact of the trade,
    # common practice)
    code, out, _ = run(capsys, "mix", "--combine", "deep blue=1", "Sun yellow=2", "--inventory", kit, "--json")
    assert code == 0
    got = json.loads(out)
    lab, srgb = mixing.mix_colours(np.array([hex_to_rgb("#1b3a8c"), hex_to_rgb("#f0c814")], np.uint8), [1, 2])
    assert got == {"predicted_srgb": "#%02x%02x%02x" % tuple(srgb), "lab": [round(float(v), 2) for v in lab],
                   "no_tint": ["Deep blue", "Sun yellow"]}
    code, out, _ = run(capsys, "mix", "--combine", "deep blue=1", "Sun yellow=2", "--inventory", kit)
    assert "no tint given: prediction less sure (Deep blue, Sun yellow)" in out
    hue = np.degrees(np.arctan2(lab[2], lab[1])) % 360
    assert 100 < hue < 200


@pytest.mark.parametrize(
    "argv, message",
    [
        (["mix", "notacolour"], r"not a colour: 'notacolour'"),
        (["mix"], r"give at least one colour"),
        (["mix", "#ffffff", "--combine", "White=1"], r"either colours to mix or --combine"),
        (["mix", "--combine", "Purple=1"], r"unknown paint 'Purple'; the inventory has: White"),
        (["mix", "--combine", "White"], r"'White' is not NAME=PARTS"),
        (["mix", "--combine", "White=lots"], r"parts in 'White=lots' must be a number"),
        (["mix", "--combine", "White=-1"], r"parts in 'White=-1' must be > 0"),
        (["mix", "--combine", "White=1", "white=2"], r"paint 'white' is given twice"),
        # the mix options are read by their declarations in layerplan/options.py, whose messages
        # name the flag (the same words as `layerplan plan` and, with the form's labels, the web app)
        (["mix", "#808080", "--mix-paints", "9"], r"--mix-paints must be a whole number from 1 to 4, got 9"),
        (["mix", "#808080", "--max-parts", "0"], r"--max-parts must be a whole number from 1 to 30, got 0"),
        (["mix", "#808080", "--tolerance", "-2"], r"--tolerance must be from 0 to 100, got -2"),
        (["paints", "--inventory", "/no/such/kit.toml"], r"/no/such/kit\.toml: no such inventory file"),
    ],
)
def test_errors_go_to_stderr_with_exit_2_and_nothing_on_stdout(capsys, argv, message):
    code, out, err = run(capsys, *argv)
    assert code == 2 and out == ""
    assert err.startswith("layerplan: error: ")
    assert re.search(message, err), err


def test_a_bad_inventory_file_is_named_with_its_line(capsys, tmp_path):
    f = tmp_path / "bad.toml"
    f.write_text('[[paint]]\nname = "White"\nsrgb = "#fff"\n\n[[paint]]\nname = "Grey"\nsrgb = "#80808"\n')
    code, out, err = run(capsys, "mix", "#808080", "--inventory", str(f))
    assert code == 2 and out == ""
    assert "bad.toml: line 7: paint 2 ('Grey'): field 'srgb': not a hex colour" in err


def test_mix_refuses_long_or_huge_input_without_repeating_it(capsys):
    from layerplan.cli import main

    assert main(["mix", "#" + "a" * 100_000]) == 2
    err = capsys.readouterr().err
    assert "not a colour: '#aaa" in err and "(100,001 characters)" in err and len(err) < 300
    assert main(["mix", "--combine", "White=1e300"]) == 2
    assert "must be > 0 and at most 1000, got '1e300'" in capsys.readouterr().err
    assert main(["mix", *["#808080"] * 300]) == 2
    assert "at most 256 colours at a time, got 300" in capsys.readouterr().err
