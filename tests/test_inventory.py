"""Tests for layerplan.inventory: the inventory file format and its errors."""

import warnings
from importlib import resources

import numpy as np
import pytest

from layerplan.colour import delta_e00, srgb_to_lab
from layerplan.inventory import (
    MAX_INVENTORY_PAINTS,
    InventoryError,
    default_inventory,
    load_inventory,
    loads_inventory,
)
from layerplan.plan import hex_to_rgb

with warnings.catch_warnings():
    warnings.simplefilter("ignore")
    import colour

GOOD = """\
title = "Community-centre wall kit"

[[paint]]
name = "Chalk white"
srgb = "#f2f1ea"
containers_l = [4, 1.0]

[[paint]]
name = "Measured ochre"
lab = [62.0, 10.0, 50.0]
tinting_strength = 0.8
note = "  swatch 3  "
"""


def test_a_good_file_is_read_with_every_field(tmp_path):
    f = tmp_path / "kit.toml"
    f.write_text(GOOD, encoding="utf-8")
    inv = load_inventory(f)
    assert inv.title == "Community-centre wall kit"
    assert inv.names() == ["Chalk white", "Measured ochre"]
    white, ochre = inv.paints
    assert white.srgb == "#f2f1ea" and white.containers_l == (1.0, 4.0) and white.tinting_strength == 1.0
    assert ochre.tinting_strength == 0.8 and ochre.note == "swatch 3" and ochre.lab == (62.0, 10.0, 50.0)
    # the sRGB of a measured CIELAB colour agrees with colour-science's Lab -> sRGB (outside reference)
    ref = colour.XYZ_to_sRGB(colour.Lab_to_XYZ([62.0, 10.0, 50.0]))
    assert np.abs(np.array(hex_to_rgb(ochre.srgb)) - np.clip(ref, 0, 1) * 255).max() <= 1.0
    # the CIELAB of an sRGB entry is that of layerplan.colour (IEC 61966-2-1)
    assert float(delta_e00(white.lab, srgb_to_lab(np.array(hex_to_rgb("#f2f1ea"), np.uint8)))) < 1e-3


FORMAT2 = """\
title = "Hall kit"
format = 2

[[paint]]
name = "Titanium white"
srgb = "#f4f3ee"
white = true

[[paint]]
name = "Warm blue"
srgb = "#23308a"
tint = { srgb = "#8f9ad0", paint_parts = 1, white_parts = 9 }

[[paint]]
name = "Measured green"
lab = [42.0, -30.0, 10.0]
tint = { lab = [75.0, -18.0, 4.0], paint_parts = 0.5, white_parts = 4.5 }

[[paint]]
name = "Umber"
srgb = "#4d3526"
tinting_strength = 1.5
"""


def test_format_2_reads_the_white_and_each_paints_tint():
    inv = loads_inventory(FORMAT2)
    white, blue, green, umber = inv.paints
    assert inv.white is white and white.white and white.tint is None
    assert blue.tint.srgb == "#8f9ad0" and blue.tint.paint_parts == 1.0 and blue.tint.white_parts == 9.0
    assert blue.tint.paint_fraction == pytest.approx(0.1)
    assert green.tint.lab == (75.0, -18.0, 4.0) and green.tint.paint_fraction == pytest.approx(0.1)
    # the sRGB shown for a measured tint agrees with colour-science's Lab -> sRGB (outside reference)
    ref = colour.XYZ_to_sRGB(colour.Lab_to_XYZ([75.0, -18.0, 4.0]))
    assert np.abs(np.array(hex_to_rgb(green.tint.srgb)) - np.clip(ref, 0, 1) * 255).max() <= 1.0
    assert umber.tint is None and umber.tinting_strength == 1.5 and not umber.white


def test_format_1_files_read_as_before_without_white_or_tints():
    inv = loads_inventory(GOOD)
    assert inv.white is None and all(p.tint is None and not p.white for p in inv.paints)
    assert loads_inventory("format = 1\n" + GOOD) == inv


def test_a_tint_may_be_a_sub_table_of_its_own():
    # TOML 1.0: [paint.tint] after a [[paint]] header is a table of that paint, same as the inline form
    text = '[[paint]]\nname = "W"\nsrgb = "#ffffff"\nwhite = true\n[[paint]]\nname = "B"\nsrgb = "#23308a"\n' \
           '[paint.tint]\nsrgb = "#8f9ad0"\npaint_parts = 1\nwhite_parts = 9\n'
    assert loads_inventory(text).paints[1].tint == loads_inventory(FORMAT2).paints[1].tint


def test_names_are_found_ignoring_case_and_unknown_names_list_the_inventory():
    inv = loads_inventory(GOOD)
    assert inv.index("  measured OCHRE ") == 1
    with pytest.raises(ValueError, match=r"unknown paint 'Violet'; the inventory has: Chalk white, Measured ochre"):
        inv.index("Violet")


def test_equal_paints_from_different_files_are_equal_inventories():
    assert loads_inventory(GOOD, source="a.toml") == loads_inventory(GOOD, source="b.toml")
    assert hash(loads_inventory(GOOD, source="a.toml")) == hash(loads_inventory(GOOD, source="b.toml"))


def test_default_inventory_is_a_basic_set_and_says_its_colours_are_from_memory():
    inv = default_inventory()
    text = resources.files("layerplan").joinpath("data", "default_inventory.toml").read_text("utf-8")
    assert "from memory" in text.lower() and "approximate" in text.lower()
    names = [n.lower() for n in inv.names()]
    assert len(inv) >= 10 and "white" in names and "black" in names
    lab = {p.name.lower(): p.lab for p in inv.paints}
    # common practice: a wall white is near L* 95, a black paint is very dark
    assert lab["white"][0] > 90 and lab["black"][0] < 25
    # the basic set covers the hue circle, so its mixes reach every hue: reds, yellows, blues and a green
    hues = [np.degrees(np.arctan2(p.lab[2], p.lab[1])) % 360 for p in inv.paints if np.hypot(*p.lab[1:]) > 20]
    for lo, hi in ((0, 45), (70, 105), (130, 180), (260, 310)):
        assert any(lo <= h <= hi for h in hues), (lo, hi)
    # format 2: the white is marked and every other paint, black too, has a tint with it that lies
    # between the white and the paint's masstone in lightness (common practice: a tint is lighter)
    assert inv.white is not None and inv.white.name == "White"
    for p in inv.paints:
        if p is not inv.white:
            assert p.tint is not None and p.lab[0] < p.tint.lab[0] < inv.white.lab[0], p.name


# ------------------------------------------------------------------ errors
def _bad(text):
    return loads_inventory(text, source="kit.toml")


PAINT = '[[paint]]\nname = "White"\nsrgb = "#ffffff"\n'
#: a white and a blue, the blue's tint table to follow on line 8
BLUE = PAINT + 'white = true\n[[paint]]\nname = "Blue"\nsrgb = "#23308a"\n'


@pytest.mark.parametrize(
    "text, message",
    [
        ("[[paint]\nname = 1", r"kit\.toml: not valid TOML: .*line 1"),
        ('colour = "red"\n' + PAINT, r"kit\.toml: unknown top-level key 'colour'"),
        ('title = "empty"\n', r"kit\.toml: no paints: add one \[\[paint\]\] table"),
        ('paint = "White"\n', r"kit\.toml: 'paint' must be a list of \[\[paint\]\] tables"),
        ("title = 3\n" + PAINT, r"'title' must be text"),
        (PAINT + '\n[[paint]]\nsrgb = "#000000"\n', r"kit\.toml: line 5: paint 2: field 'name': missing"),
        (PAINT + '\n[[paint]]\nname = "  "\nsrgb = "#000000"\n', r"line 6: paint 2: field 'name': must be non-empty"),
        ('[[paint]]\nname = "A=B"\nsrgb = "#000000"\n', r"field 'name': may not contain '='"),
        (PAINT + '\n[[paint]]\nname = "Black"\nsrgb = "#00zz00"\n',
         r"kit\.toml: line 7: paint 2 \('Black'\): field 'srgb': not a hex colour \(#rrggbb\): '#00zz00'"),
        ('[[paint]]\nname = "Black"\nsrgb = 0\n', r"field 'srgb': must be a text hex colour"),
        ('[[paint]]\nname = "Black"\n', r"paint 1 \('Black'\): field 'srgb': give exactly one of 'srgb'"),
        ('[[paint]]\nname = "Black"\nsrgb = "#000"\nlab = [0, 0, 0]\n', r"give exactly one of 'srgb'"),
        ('[[paint]]\nname = "Grey"\nlab = [50, 0]\n', r"field 'lab': must be three numbers"),
        ('[[paint]]\nname = "Grey"\nlab = [150, 0, 0]\n', r"field 'lab': L must be from 0 to 100, got 150"),
        ('[[paint]]\nname = "Grey"\nlab = [50, 300, 0]\n', r"field 'lab': a and b must be within ±200"),
        ('[[paint]]\nname = "Grey"\nsrgb = "#808080"\ntinting_strength = 0\n',
         r"field 'tinting_strength': must be a number from 0\.01 to 50, got 0"),
        ('[[paint]]\nname = "Grey"\nsrgb = "#808080"\ntinting_strength = "high"\n', r"'tinting_strength': must be"),
        ('[[paint]]\nname = "Grey"\nsrgb = "#808080"\ncontainers_l = 4\n', r"field 'containers_l': must be a list"),
        ('[[paint]]\nname = "Grey"\nsrgb = "#808080"\ncontainers_l = [1, -4]\n',
         r"field 'containers_l': sizes must be > 0 and at most 200 litres, got -4"),
        ('[[paint]]\nname = "Grey"\nsrgb = "#808080"\nnote = 5\n', r"field 'note': must be text"),
        ('[[paint]]\nname = "Grey"\nsrgb = "#808080"\ntinting_strenght = 2\n',
         r"paint 1 \('Grey'\): field 'tinting_strenght': unknown field"),
        (PAINT + '\n[[paint]]\nname = "white"\nsrgb = "#fefefe"\n',
         r"line 6: paint 2 \('white'\): field 'name': 'white' is already used by paint 1 \(line 1\)"),
        ('paint = [{name = "White", srgb = "#fff"}, {name = "Black", srgb = "black"}]\n',
         r"kit\.toml: paint 2 \('Black'\): field 'srgb': not a hex colour"),
        ('format = 3\n' + PAINT, r"kit\.toml: 'format' must be one of 1, 2, got 3"),
        ('[[paint]]\nname = "W"\nsrgb = "#fff"\nwhite = "yes"\n',
         r"line 4: paint 1 \('W'\): field 'white': must be true or false"),
        (PAINT + 'white = true\n[[paint]]\nname = "Chalk"\nsrgb = "#eee"\nwhite = true\n',
         r"line 8: paint 2 \('Chalk'\): field 'white': 'White' \(paint 1\) is already the white"),
        (PAINT + '[[paint]]\nname = "Blue"\nsrgb = "#23308a"\n'
         'tint = { srgb = "#8f9ad0", paint_parts = 1, white_parts = 9 }\n',
         r"line 7: paint 2 \('Blue'\): field 'tint': a tint needs the white it was made with; add `white = true`"),
        (PAINT + 'white = true\ntint = { srgb = "#eee", paint_parts = 1, white_parts = 9 }\n',
         r"line 5: paint 1 \('White'\): field 'tint': the white has no tint"),
        (BLUE + 'tint = "#8f9ad0"\n',
         r"line 8: paint 2 \('Blue'\): field 'tint': must be a table like"),
        (BLUE + 'tint = { paint_parts = 1, white_parts = 9 }\n',
         r"line 8: paint 2 \('Blue'\): field 'tint\.srgb': give exactly one of 'srgb'"),
        (BLUE + 'tint = { srgb = "#8f9azz", paint_parts = 1, white_parts = 9 }\n',
         r"field 'tint\.srgb': not a hex colour"),
        (BLUE + 'tint = { lab = [120, 0, 0], paint_parts = 1, white_parts = 9 }\n',
         r"field 'tint\.lab': L must be from 0 to 100, got 120"),
        (BLUE + 'tint = { srgb = "#8f9ad0", white_parts = 9 }\n',
         r"line 8: paint 2 \('Blue'\): field 'tint\.paint_parts': missing"),
        (BLUE + 'tint = { srgb = "#8f9ad0", paint_parts = 1, white_parts = 0 }\n',
         r"field 'tint\.white_parts': must be a number > 0 and at most 1000, got 0"),
        (BLUE + 'tint = { srgb = "#8f9ad0", paint_parts = 1, white_part = 9 }\n',
         r"field 'tint\.white_part': unknown field of a tint"),
        (BLUE + 'tint = { srgb = "#101840", paint_parts = 9, white_parts = 1 }\n',
         r"line 8: paint 2 \('Blue'\): field 'tint': its lightness \(L\* 10\) should lie between the paint's \(L\* 25\)"),
        (BLUE + 'tinting_strength = 2\n'
         'tint = { srgb = "#8f9ad0", paint_parts = 1, white_parts = 9 }\n',
         r"line 8: paint 2 \('Blue'\): field 'tinting_strength': not used with a tint"),
    ],
)
def test_each_documented_error_names_file_line_entry_and_field(text, message):
    with pytest.raises(InventoryError, match=message):
        _bad(text)


def test_errors_point_at_the_line_of_the_faulty_field():
    # The line counted as a text editor counts it (1-based; TOML 1.0 allows CRLF line ends, and a
    # browser's textarea sends them: HTML Living Standard, "textarea" form submission value).
    # A field missing altogether has no line of its own: the paint's [[paint]] header is named.
    text = 'title = "Hall kit"\r\n\r\n[[paint]]\r\nname = "Chalk"\r\n# a comment\r\nsrgb = "#f2f0zz"\r\n'
    with pytest.raises(InventoryError, match=r"^edited: line 6: paint 1 \('Chalk'\): field 'srgb': not a hex"):
        loads_inventory(text, source="edited")
    text = PAINT + '\n[[paint]]\n"name" = "Grey"\nsrgb = "#808080"\ntinting_strength = 0\n'
    with pytest.raises(InventoryError, match=r"line 8: paint 2 \('Grey'\): field 'tinting_strength'"):
        loads_inventory(text, source="kit.toml")
    with pytest.raises(InventoryError, match=r"line 5: paint 2 \('Grey'\): field 'srgb': give exactly one"):
        loads_inventory(PAINT + '\n[[paint]]\nname = "Grey"\n', source="kit.toml")


def test_too_many_paints_are_refused():
    text = "".join(f'[[paint]]\nname = "P{i}"\nsrgb = "#808080"\n' for i in range(MAX_INVENTORY_PAINTS + 1))
    with pytest.raises(InventoryError, match=rf"{MAX_INVENTORY_PAINTS + 1} paints; at most {MAX_INVENTORY_PAINTS}"):
        _bad(text)


def test_file_problems_are_reported_with_the_file_name(tmp_path):
    with pytest.raises(InventoryError, match=r"missing\.toml: no such inventory file"):
        load_inventory(tmp_path / "missing.toml")
    with pytest.raises(InventoryError, match="is a folder"):
        load_inventory(tmp_path)
    f = tmp_path / "latin1.toml"
    f.write_bytes(b'[[paint]]\nname = "Ocre \xe9"\nsrgb = "#c8962e"\n')
    with pytest.raises(InventoryError, match=r"latin1\.toml: not a UTF-8 text file"):
        load_inventory(f)
    g = tmp_path / "bom.toml"
    g.write_bytes(b"\xef\xbb\xbf" + PAINT.encode())  # a UTF-8 byte-order mark is accepted
    assert load_inventory(g).names() == ["White"]


def test_the_documented_examples_are_valid_inventories():
    # the README's inventory example and this module's docstring example read as written (format 2:
    # a white, a tinted paint, a measured paint without a tint)
    import re
    import textwrap
    from pathlib import Path

    from layerplan import inventory

    readme = (Path(__file__).resolve().parents[1] / "README.md").read_text("utf-8")
    section = readme[readme.index("## Your paints and mix recipes"):]
    examples = [re.search(r"```toml\n(.*?)```", section, re.S).group(1)]
    doc = inventory.__doc__
    examples.append(textwrap.dedent(doc[doc.index("::") + 3:doc.index("Each paint gives")]))
    for text in examples:
        inv = loads_inventory(text)
        assert inv.white is not None and any(p.tint is not None for p in inv.paints)
        assert any(p.tint is None and not p.white for p in inv.paints)


# ------------------------------------------------------------------ hostile inventories
def test_a_file_nested_500_deep_is_refused_with_a_message_not_a_recursion_error():
    # about 1 kB of brackets: Python's TOML reader recurses once per level and would raise RecursionError
    for text in ("x = " + "[" * 500 + "]" * 500 + "\n", "x = " + "{a = " * 500 + "1" + "}" * 500 + "\n",
                 PAINT + "note = " + "[" * 500 + "\n"):
        with pytest.raises(InventoryError, match=r"^kit\.toml: line \d+: arrays or tables nested more than 8 "
                                                 r"deep; an inventory needs at most 2") as info:
            _bad(text)
        assert len(str(info.value)) < 200


def test_brackets_inside_strings_and_comments_do_not_count_as_nesting():
    text = (PAINT + 'note = "' + "[" * 50 + '"\n# ' + "{" * 50 + "\n"
            + '[[paint]]\nname = "Blue \'[[[[[[[[[[\'"\nsrgb = "#23308a"\n'
            + "note = '''" + "[" * 50 + "\n" + "{" * 20 + "'''\n")
    inv = _bad(text)
    assert inv.paints[0].note == "[" * 50 and inv.names()[1] == "Blue '[[[[[[[[[['"


def test_a_deep_dotted_key_is_refused_as_an_unknown_field_without_printing_it():
    with pytest.raises(InventoryError, match=r"field 'note': must be text, got a table of 1 field$"):
        _bad(PAINT + "note." + ".".join(["a"] * 2000) + " = 1\n")


def test_twenty_thousand_container_sizes_are_refused_naming_the_limit():
    # a tin list is tried size by size when the tins to buy are worked out: 20,000 made a plan take minutes
    sizes = ", ".join(f"{0.01 * (k + 1):.2f}" for k in range(20_000))
    with pytest.raises(InventoryError, match=r"field 'containers_l': at most 8 sizes, got 20,000$"):
        _bad(PAINT + f"containers_l = [{sizes}]\n")
    with pytest.raises(InventoryError, match=r"sizes must be at least 0\.01 litres \(10 mL\), got 0\.001$"):
        _bad(PAINT + "containers_l = [0.001]\n")
    assert _bad(PAINT + "containers_l = [0.25, 0.5, 1, 2.5, 5, 10, 20, 200]\n").paints[0].containers_l[-1] == 200


def test_huge_numbers_and_long_texts_are_refused_without_being_echoed():
    huge = "1" + "0" * 400
    for text, message in (
        (PAINT + f"containers_l = [{huge}]\n", r"sizes must be > 0 and at most 200 litres, got a 401-digit number$"),
        (PAINT + f"tinting_strength = {huge}.0\n", r"got inf$"),
        ('[[paint]]\nname = "Grey"\nlab = [50, ' + huge + ', 0]\n', r"must be three numbers \[L, a, b\], got"),
        (PAINT + 'note = "' + "x" * 5000 + '"\n', r"field 'note': longer than 500 characters \(5,000\)$"),
        ('title = "' + "t" * 5000 + '"\n' + PAINT, r"'title' is longer than 200 characters \(5,000\)$"),
        ('[[paint]]\nname = "' + "n" * 5000 + '"\nsrgb = "#fff"\n', r"longer than 60 characters \(5,000\)$"),
        (PAINT.replace('"#ffffff"', '"#' + "f" * 5000 + '"'), r"not a hex colour \(#rrggbb\): '#f+'… \(5,001 characters\)$"),
    ):
        with pytest.raises(InventoryError, match=message) as info:
            _bad(text)
        assert len(str(info.value)) < 300, str(info.value)


def test_an_inventory_text_over_the_size_limit_is_refused():
    from layerplan.inventory import MAX_FILE_BYTES

    with pytest.raises(InventoryError, match=r"inventory is too large \(1,000,001 characters; at most 1,000,000\)"):
        _bad(PAINT + "#" * (MAX_FILE_BYTES + 1 - len(PAINT)))


def test_dev_zero_and_other_files_that_are_not_regular_are_refused_at_once(tmp_path):
    import os

    with pytest.raises(InventoryError, match=r"^/dev/zero: not a regular file"):
        load_inventory("/dev/zero")
    fifo = tmp_path / "pipe.toml"
    os.mkfifo(fifo)  # opening a pipe with no writer would wait for ever
    with pytest.raises(InventoryError, match=r"pipe\.toml: not a regular file"):
        load_inventory(fifo)


def test_a_file_is_read_no_further_than_the_limit(tmp_path, monkeypatch):
    from layerplan import inventory

    big = tmp_path / "big.toml"
    big.write_bytes(PAINT.encode() + b"#" * 5000)
    monkeypatch.setattr(inventory, "MAX_FILE_BYTES", 1000)
    with pytest.raises(InventoryError, match=r"big\.toml: inventory file is too large \(over 1,000 bytes"):
        load_inventory(big)
