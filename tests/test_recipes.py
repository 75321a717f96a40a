"""Tests for layerplan.recipes: the mix-recipe solver."""

import math
from functools import reduce
from pathlib import Path

import numpy as np
import pytest

from layerplan import mixing, recipes
from layerplan.colour import delta_e00, lab_to_srgb, srgb_to_lab
from layerplan.inventory import default_inventory, loads_inventory

DATA = Path(__file__).parent / "data"


@pytest.fixture(scope="module")
def inv():
    return default_inventory()


def _inv_rgb(inv):
    return np.array([p.rgb for p in inv.paints], dtype=np.uint8)


def test_a_stock_paints_own_colour_comes_back_as_that_paint_alone(inv):
    # the solver's tie-break (layerplan.recipes): of near-equal mixes the simplest wins, so a stock
    # paint's own colour comes back as that paint alone
    got = recipes.recipes_for_srgb([p.srgb for p in inv.paints], inv)
    for paint, r in zip(inv.paints, got):
        assert r.parts == ((paint.name, 1),)
        assert r.predicted_srgb == paint.srgb and r.delta_e < 0.05 and r.in_gamut


def test_the_solver_finds_back_mixes_the_model_made_at_random_ratios(inv):
    # mixes made by the model (layerplan.mixing.mix_optics_colours, a separate code path from the
    # table) at random whole-part ratios are found back: ΔE00 <= 1 and the same paints
    rng = np.random.default_rng(11)
    made = []
    for _ in range(40):
        n = int(rng.integers(2, 4))
        idx = rng.choice(len(inv), n, replace=False)
        while True:
            parts = rng.integers(1, 9, n)
            if parts.sum() <= 10:
                break
        full = np.zeros(len(inv))
        full[idx] = parts
        lab, _ = mixing.mix_optics_colours(recipes.paint_optics(inv), full)
        made.append((lab, {inv.paints[i].name for i in idx}, full))
    found = recipes.solve_recipes(np.array([m[0] for m in made]), inv)
    for (lab, names, full), r in zip(made, found):
        assert r.delta_e <= 1.0
        assert {name for name, _ in r.parts} == names
        # and the same ratio, in lowest terms
        g = reduce(math.gcd, [int(v) for v in full if v])
        assert {name: n for name, n in r.parts} == {inv.paints[i].name: int(v) // g for i, v in enumerate(full) if v}


def test_the_compiled_table_agrees_with_the_mixing_model(inv):
    # the table's compiled kernel and layerplan.mixing.mix_optics_colours compute the same formulae
    # (Duncan 1940, Kubelka & Munk 1931, Saunderson 1942) by separate code
    table = recipes.build_mix_table(inv)
    optics = recipes.paint_optics(inv)
    rows = np.random.default_rng(5).choice(len(table), 300, replace=False)
    parts = np.zeros((len(rows), len(inv)))
    for k, row in enumerate(rows):
        for i, n in zip(table.paint_idx[row], table.parts[row]):
            if i >= 0:
                parts[k, i] = n
    lab, rgb = mixing.mix_optics_colours(optics, parts)
    assert np.allclose(lab, table.lab[rows], atol=1e-9)
    assert np.array_equal(rgb, table.rgb[rows])


def test_recipes_keep_to_the_limits_in_whole_parts_in_lowest_terms(inv):
    rng = np.random.default_rng(2)
    targets = rng.uniform([15, -50, -50], [95, 50, 50], (25, 3))
    for max_paints, max_parts in ((1, 10), (2, 6), (3, 10)):
        for r in recipes.solve_recipes(targets, inv, max_paints=max_paints, max_parts=max_parts):
            parts = [n for _, n in r.parts]
            assert 1 <= len(parts) <= max_paints and sum(parts) <= max_parts
            assert all(isinstance(n, int) and n >= 1 for n in parts)
            assert reduce(math.gcd, parts) == 1
            assert parts == sorted(parts, reverse=True)  # most parts first


def test_out_of_reach_colours_are_flagged_with_the_nearest_mix(inv):
    # a screen magenta and cyan lie far outside what these earth-and-primary paints mix
    # (fact of the trade, common practice: mixed violets and turquoises are dull)
    targets = srgb_to_lab(np.array([[255, 0, 255], [0, 255, 255]], np.uint8))
    table = recipes.build_mix_table(inv)
    for lab, r in zip(targets, recipes.solve_recipes(targets, inv)):
        assert not r.in_gamut and r.delta_e > recipes.DEFAULT_TOLERANCE_DE
        # nearest achievable: brute force over the table with layerplan.colour.delta_e00 (scikit-image)
        de = delta_e00(lab[None, :], table.lab)
        assert r.delta_e == pytest.approx(de.min(), abs=recipes.SIMPLER_WITHIN_DE + 1e-9)


def test_tolerance_decides_in_gamut(inv):
    # a mix of the model itself, nudged 2 L* units: ΔE00 about 1.5-2 to the nearest mix
    lab, _ = mixing.mix_optics_colours(recipes.paint_optics(inv).take([0, 7]), [3, 1])
    nudged = lab + np.array([2.0, 0.0, 0.0])
    r_strict = recipes.solve_recipes(nudged, inv, tolerance=0.1)[0]
    r_loose = recipes.solve_recipes(nudged, inv, tolerance=5.0)[0]
    assert r_strict.delta_e == r_loose.delta_e and 0.1 < r_loose.delta_e < 5.0
    assert not r_strict.in_gamut and r_loose.in_gamut


def test_recipe_json_has_exactly_its_documented_fields(inv):
    # the recipe's JSON form, shared by `layerplan mix --json` and plan.json:
    # {"target", "parts": [{"paint", "parts"}], "predicted_srgb", "delta_e", "in_gamut"}; every paint
    # of the default set has a tint, so no "no_tint" field
    d = recipes.recipes_for_srgb(["#6b8e23"], inv)[0].to_dict()
    assert list(d) == ["target", "parts", "predicted_srgb", "delta_e", "in_gamut"]
    assert d["target"] == "#6b8e23"
    assert all(list(p) == ["paint", "parts"] for p in d["parts"])
    assert isinstance(d["in_gamut"], bool) and isinstance(d["delta_e"], float)
    # the reported ΔE00 is that of the predicted colour (recomputed with layerplan.colour)
    pred = srgb_to_lab(np.array([int(d["predicted_srgb"][i:i + 2], 16) for i in (1, 3, 5)], np.uint8))
    assert abs(float(delta_e00(pred, srgb_to_lab(np.array([0x6b, 0x8e, 0x23], np.uint8)))) - d["delta_e"]) < 0.3


def test_mixes_of_paints_without_a_tint_say_so():
    # a recipe of two or more paints names those without a tint (not the white, the fit's reference),
    # in the recipe and its JSON form; a paint alone needs no prediction and says nothing
    text = ('[[paint]]\nname = "White"\nsrgb = "#f4f3ee"\nwhite = true\n'
            '[[paint]]\nname = "Blue"\nsrgb = "#123d75"\n'
            '[[paint]]\nname = "Yellow"\nsrgb = "#f0dc28"\n'
            'tint = { srgb = "#f5ea95", paint_parts = 1, white_parts = 9 }\n')
    inv = loads_inventory(text)
    mixed, alone = recipes.recipes_for_srgb(["#7f95b5", "#123d75"], inv)
    assert len(mixed.parts) >= 2 and "Blue" in dict(mixed.parts)
    assert mixed.no_tint == ("Blue",)
    assert mixed.to_dict()["no_tint"] == list(mixed.no_tint)
    assert alone.parts == (("Blue", 1),) and alone.no_tint == () and "no_tint" not in alone.to_dict()
    assert recipes.predict_mix({"Blue": 1, "Yellow": 1}, inv)["no_tint"] == ["Blue"]
    assert "no_tint" not in recipes.predict_mix({"Yellow": 1, "White": 3}, inv)


def test_a_tint_supersedes_tinting_strength_and_changes_the_recipe():
    # a tint with white measures how strongly a paint colours a mix: a blue whose 1:9 tint is darker
    # is stronger, so the same pale blue takes more white (fewer parts of blue) from it
    def inv(tint):
        return loads_inventory('[[paint]]\nname = "White"\nsrgb = "#f4f3ee"\nwhite = true\n'
                               f'[[paint]]\nname = "Blue"\nsrgb = "#123d75"\n'
                               f'tint = {{ srgb = "{tint}", paint_parts = 1, white_parts = 9 }}\n')
    weak, strong = inv("#b3c6dc"), inv("#5a7fb0")
    lab, _ = mixing.mix_optics_colours(recipes.paint_optics(weak), [6, 1])
    assert dict(recipes.solve_recipes(lab, weak)[0].parts) == {"White": 6, "Blue": 1}
    r = dict(recipes.solve_recipes(lab, strong, max_parts=30)[0].parts)
    assert r["White"] / r["Blue"] > 6


def test_tinting_strength_changes_recipes_as_equivalent_parts():
    # definition (layerplan.mixing, paints without a tint): a paint of strength 2 counts as twice its parts, so a colour
    # made 1 Blue : 4 White at strength 1 takes 1 Blue : 8 White once Blue has strength 2
    text = '[[paint]]\nname = "White"\nsrgb = "#f4f3ee"\n[[paint]]\nname = "Blue"\nsrgb = "#123d75"\n'
    weak = loads_inventory(text)
    strong = loads_inventory(text + "tinting_strength = 2.0\n")
    lab, _ = mixing.mix_colours(_inv_rgb(weak), [4, 1])
    assert dict(recipes.solve_recipes(lab, weak)[0].parts) == {"White": 4, "Blue": 1}
    r = recipes.solve_recipes(lab, strong)[0]
    assert dict(r.parts) == {"White": 8, "Blue": 1} and r.delta_e < 0.01


def test_two_paint_ratios_in_lowest_terms_number_eulers_totient():
    # number theory (Euler's totient, e.g. Hardy & Wright): the ratios a:b with a, b >= 1,
    # gcd 1 and a + b = t number phi(t); phi(2..10) = 1, 2, 2, 4, 2, 6, 4, 6, 4 -> 31
    assert len(recipes._compositions(2, 10)) == 31
    # and the table holds every paint alone plus every pair and triple at every ratio
    inv = default_inventory()
    n = len(inv)
    table = recipes.build_mix_table(inv)
    expected = n + math.comb(n, 2) * 31 + math.comb(n, 3) * len(recipes._compositions(3, 10))
    assert len(table) == expected == recipes.table_size(n)


def test_compiled_ciede2000_matches_sharma_2005_pairs_and_scikit_image():
    # the palette search's compiled CIEDE2000 (layerplan._palette_kernels)
    from layerplan._palette_kernels import de00_to_row

    # Sharma, Wu & Dalal (2005) Table 1 (tests/data/ciede2000-sharma2005.tsv)
    rows = [line.split("\t") for line in (DATA / "ciede2000-sharma2005.tsv").read_text().splitlines()
            if line.strip() and not line.startswith("#")]
    header, rows = rows[0], rows[1:]
    vals = np.array([[float(v) for v in row] for row in rows])
    col = {name.strip(): i for i, name in enumerate(header)}
    lab1 = vals[:, [col["L1"], col["a1"], col["b1"]]]
    lab2 = np.ascontiguousarray(vals[:, [col["L2"], col["a2"], col["b2"]]])
    out = np.empty(1)
    for k in range(len(vals)):
        de00_to_row(*lab1[k], lab2[k:k + 1], out)
        assert out[0] == pytest.approx(vals[k, col["dE00"]], abs=1e-4)
    # and against scikit-image's implementation on random colours, neutrals included
    rng = np.random.default_rng(0)
    many = rng.uniform([0, -100, -100], [100, 100, 100], (5000, 3))
    many[:100, 1:] = 0.0
    res = np.empty(len(many))
    for t in ([50.0, 0.0, 0.0], [60.0, -30.0, 20.0], [30.0, 0.0, -5.0]):
        de00_to_row(*t, many, res)
        assert np.allclose(res, delta_e00(np.array(t)[None, :], many), atol=1e-9)


def test_predict_mix_matches_the_model_and_names_ignore_case(inv):
    got = recipes.predict_mix({"cool BLUE": 1, "White": 3}, inv)
    lab, srgb = mixing.mix_optics_colours(recipes.paint_optics(inv).take([7, 0]), [1, 3])
    assert got["lab"] == [round(float(v), 2) for v in lab]
    assert got["predicted_srgb"] == "#%02x%02x%02x" % tuple(srgb)
    # the predicted sRGB is the predicted CIELAB's (layerplan.colour, scikit-image)
    assert np.abs(lab_to_srgb(np.array(got["lab"])).astype(int) - srgb).max() <= 1


def test_documented_errors(inv):
    with pytest.raises(ValueError, match="unknown paint 'Purple'; the inventory has: White"):
        recipes.predict_mix({"Purple": 1}, inv)
    with pytest.raises(ValueError, match="'White' is given twice"):
        recipes.predict_mix({"White": 1, "white": 2}, inv)
    with pytest.raises(ValueError, match="parts of 'White' must be a number > 0, got 0"):
        recipes.predict_mix({"White": 0}, inv)
    with pytest.raises(ValueError, match="at least one paint"):
        recipes.predict_mix({}, inv)
    with pytest.raises(ValueError, match="max paints per mix must be a whole number from 1 to 4, got 0"):
        recipes.solve_recipes([50, 0, 0], inv, max_paints=0)
    with pytest.raises(ValueError, match="max parts must be a whole number from 1 to 30, got 31"):
        recipes.solve_recipes([50, 0, 0], inv, max_parts=31)
    with pytest.raises(ValueError, match="tolerance must be a ΔE00 from 0 to 100, got -1"):
        recipes.solve_recipes([50, 0, 0], inv, tolerance=-1)
    with pytest.raises(ValueError, match=r"target_lab must be \(N, 3\) CIELAB"):
        recipes.solve_recipes(np.zeros((2, 2)), inv)
    with pytest.raises(ValueError, match="non-finite"):
        recipes.solve_recipes([50, np.nan, 0], inv)
    with pytest.raises(ValueError, match="not a hex colour"):
        recipes.recipes_for_srgb(["#12345"], inv)
    big = loads_inventory("".join(f'[[paint]]\nname = "P{i}"\nsrgb = "#{i:02x}8080"\n' for i in range(60)))
    with pytest.raises(ValueError, match="candidate mixes .*use fewer paints per mix"):
        recipes.build_mix_table(big, max_paints=4, max_parts=20)
