"""The option spec (layerplan/options.py): one declaration per option, read the same way by every front end."""

from __future__ import annotations

import subprocess
import sys

import pytest

from layerplan import options
from layerplan.options import OPTIONS, OptionError
from layerplan.settings import Settings

REPO = options._ROOT


# ---------------------------------------------------------------------- generated tables
def test_readme_option_table_is_the_one_the_spec_makes():
    text = (REPO / "README.md").read_text(encoding="utf-8")
    assert options._block(text) == options.options_table(), \
        "README.md's option table is out of date: run python -m layerplan.options --write"


def test_api_docstring_field_table_is_the_one_the_spec_makes():
    from layerplan.web import api

    assert options._block(api.__doc__) == options.api_table(), \
        "layerplan/web/api.py's field table is out of date: run python -m layerplan.options --write"


def test_check_command_reports_a_stale_table(tmp_path, monkeypatch):
    readme = tmp_path / "README.md"
    readme.write_text(f"# x\n\n{options.TABLE_START}\n| old |\n{options.TABLE_END}\n", encoding="utf-8")
    monkeypatch.setattr(options, "GENERATED", {readme: options.options_table})
    assert options.main(["--check"]) == 1
    assert options.main(["--write"]) == 0
    assert options.main(["--check"]) == 0
    assert options._block(readme.read_text(encoding="utf-8")) == options.options_table()
    assert readme.read_text(encoding="utf-8").startswith("# x\n\n")  # the rest of the file is kept


def test_every_option_is_in_each_table_and_the_help():
    from layerplan.cli import _parser

    readme, api = options.options_table(), options.api_table()
    plan_help = " ".join(_parser()._subparsers._group_actions[0].choices["plan"].format_help().split())
    for o in OPTIONS.values():
        assert f"`{o.flag}`" in readme and o.flag in plan_help
        if o.form:
            assert f"``{o.field}``" in api


# ------------------------------------------------- copies of limits kept light, checked here
def test_light_copies_equal_the_limits_of_the_modules_that_own_them():
    from layerplan import quantities, recipes, svg

    assert (options.MAX_MIX_PAINTS, options.MAX_PARTS, options.MAX_TOLERANCE_DE) == \
        (recipes.MAX_MIX_PAINTS, recipes.MAX_PARTS_LIMIT, recipes.MAX_TOLERANCE_DE)
    assert (OPTIONS["mix_paints"].default, OPTIONS["max_parts"].default, OPTIONS["tolerance"].default) == \
        (recipes.DEFAULT_MAX_PAINTS, recipes.DEFAULT_MAX_PARTS, recipes.DEFAULT_TOLERANCE_DE)
    assert (options.COVERAGE_M2_PER_L, options.WASTE, options.GROUND_COATS, options.STROKE_COATS) == \
        (quantities.COVERAGE_M2_PER_L, quantities.WASTE, quantities.GROUND_COATS, quantities.STROKE_COATS)
    assert options.MAX_GRID_SQUARES == svg.MAX_GRID_LINES
    from layerplan import sheets

    assert (options.PAPERS, options.DEFAULT_PAPER) == (tuple(sheets.PAPERS), sheets.DEFAULT_PAPER)
    assert options.ENLARGEMENTS_PER_LAYER == sheets.MAX_ENLARGEMENTS_PER_LAYER


def test_planning_defaults_are_the_librarys():
    s = Settings()
    for o in OPTIONS.values():
        # --detail has no default of its own: given, it sets the stroke cost (checked in tests/test_detail.py)
        if o.target == "settings" and o.kind not in ("wall", "detail"):
            assert getattr(s, o.setting) == o.default, o.name


# ------------------------------------------------------------------------------ readers
@pytest.mark.parametrize("name", [n for n, o in OPTIONS.items() if o.kind in ("whole", "number", "fraction",
                                                                                  "choice") and o.default is not None])
def test_the_default_as_shown_reads_back_as_the_default(name):
    o = OPTIONS[name]
    value = o.parse(o.default_words())
    assert value == (o.default if o.kind == "choice" else pytest.approx(o.default))


@pytest.mark.parametrize("name", [n for n, o in OPTIONS.items() if o.kind in ("whole", "number")])
def test_each_bound_is_refused_just_outside_and_accepted_on_it(name):
    o = OPTIONS[name]
    step = 1 if o.kind == "whole" else 1e-6
    if o.minimum is not None:
        with pytest.raises(OptionError) as info:
            o.parse(str(o.minimum - step if not o.strict else o.minimum))
        assert info.value.option == name and info.value.cli_message().startswith(o.flag)
        if not o.strict:
            o.parse(str(int(o.minimum) if o.kind == "whole" else o.minimum))
    if o.maximum is not None:
        with pytest.raises(OptionError):
            o.parse(str(int(o.maximum) + 1 if o.kind == "whole" else o.maximum + step))
        o.parse(str(int(o.maximum) if o.kind == "whole" else o.maximum))


@pytest.mark.parametrize("text,share", [
    ("15%", 0.15), (" 15 % ", 0.15), ("0.15", 0.15), ("12.5%", 0.125), ("0", 0.0), ("0%", 0.0), ("1", 1.0),
    ("100%", 1.0),
])
def test_shares_are_a_percentage_with_a_sign_or_a_plain_fraction(text, share):
    assert OPTIONS["waste"].parse(text) == pytest.approx(share)


@pytest.mark.parametrize("text,pattern", [
    ("15", r"got '15' \(for 15 percent write 15%\)"),  # 15 % or 1500 %? refused, not guessed
    ("150%", r"got '150%'$"), ("-5%", r"got '-5%'$"), ("-0.1", r"got '-0.1'$"), ("lots", r"got 'lots'$"),
    ("nan", r"got 'nan'$"),
])
def test_shares_out_of_range_or_ambiguous_are_refused(text, pattern):
    with pytest.raises(OptionError, match=r"^waste must be a fraction or a percentage .*" + pattern):
        OPTIONS["waste"].parse(text)


@pytest.mark.parametrize("text,mm", [
    # SI: 1 cm = 10 mm, 1 m = 1000 mm; 1 ft = 304.8 mm and 1 in = 25.4 mm exactly (NIST SP 811, App. B)
    ("50cm", 500.0), ("2ft", 609.6), ("1/2m", 500.0), ("18 in", 457.2), ("300", 300.0), ("0.25 M", 250.0),
])
def test_lengths_take_a_unit_or_are_mm(text, mm):
    assert OPTIONS["grid"].parse(text) == pytest.approx(mm)


@pytest.mark.parametrize("text,pattern", [
    ("0", r"must be > 0, got '0'"), ("-1m", r"must be > 0, got '-1m'"), ("big", r"must be a length such as"),
    ("5parsec", r"must be a length such as"), ("2,5cm", r"must be a length such as"),
])
def test_bad_lengths_are_refused(text, pattern):
    with pytest.raises(OptionError, match=pattern):
        OPTIONS["grid"].parse(text)


def test_each_front_end_names_the_option_its_own_way():
    with pytest.raises(OptionError) as info:
        OPTIONS["max_parts"].parse("40")
    e = info.value
    assert str(e) == "max parts must be a whole number from 1 to 30, got 40"
    assert e.cli_message() == "--max-parts must be a whole number from 1 to 30, got 40"
    assert e.form_message("Max parts per mix") == "Max parts per mix must be a whole number from 1 to 30, got 40"
    assert (e.option, e.field) == ("max_parts", "max_parts")
    # a unit is said where the name does not say it
    with pytest.raises(OptionError) as info:
        OPTIONS["pixel_mm"].parse("0")
    assert str(info.value) == "pixel size must be > 0 mm, got 0"
    assert info.value.cli_message() == "--pixel-mm must be > 0, got 0"


def test_settings_are_checked_by_their_options():
    with pytest.raises(OptionError, match=r"^stroke cost must be from 0 to 1000, got -1$") as info:
        Settings(stroke_cost=-1.0).validated()
    assert info.value.option == "stroke_cost"
    with pytest.raises(OptionError, match=r"^wall height must be at most 100 m, got 200 m$") as info:
        Settings(wall_height_mm=200_000.0).validated()
    assert (info.value.option, info.value.field) == ("wall", "wall_height")
    assert Settings(brushes_mm=(12.0, 100.0)).validated().brushes_mm == (100.0, 12.0)


# ------------------------------------------------------------------- the whole set together
@pytest.mark.parametrize("wall", [(1000.0, 30_000.0), (30_000.0, 1000.0)])
def test_grid_squares_are_counted_along_the_longest_side_whichever_way_the_wall_turns(wall):
    # 30 m / 100 mm = 300 squares, over the 200 allowed (layerplan/svg.py MAX_GRID_LINES)
    settings = Settings(wall_width_mm=wall[0], wall_height_mm=wall[1], brushes_mm=(200.0,), mm_per_px=50.0)
    with pytest.raises(OptionError, match=r"300 squares along the 30 m side .*use at least 150 mm") as info:
        options.check_plan(settings, {"grid_mm": 100.0}, (60, 80, 3))
    assert info.value.option == "grid"
    assert options.check_plan(settings, {"grid_mm": 150.0}, (60, 80, 3)).width_px == wall[0] / 50


def test_the_height_from_the_photo_is_checked_before_the_raster():
    # an 8:1 strip on a 20 m wide wall would be 160 m high, over the 100 m limit
    settings = Settings(wall_width_mm=20_000.0, mm_per_px=100.0, brushes_mm=(400.0,))
    with pytest.raises(OptionError, match=r"height from the photo's shape would be 160 m") as info:
        options.check_plan(settings, {}, (800, 100, 3))
    assert (info.value.option, info.value.field) == ("wall", "wall_height")
    assert info.value.cli_message().startswith("--wall: ")


def test_a_large_inventory_with_many_parts_is_refused_before_planning():
    from layerplan.recipes import MAX_TABLE_MIXES, table_size

    settings = Settings(mix_paints=4, max_parts=30).validated()
    assert table_size(64, max_paints=4, max_parts=30) > MAX_TABLE_MIXES  # the solver would refuse it too
    with pytest.raises(OptionError, match=r"64 paints, up to 4 per mix in up to 30 parts make") as info:
        options.check_plan(settings, {}, (60, 80, 3), inventory_paints=64)
    assert info.value.option == "mix_paints"
    options.check_plan(settings, {}, (60, 80, 3), inventory_paints=6)


def test_quantity_options_given_as_values_are_checked_too():
    with pytest.raises(OptionError, match=r"^coverage must be from 0.5 to 100 m²/L, got 0$"):
        options.check_plan(Settings(), {"coverage_m2_per_litre": 0.0}, (60, 80, 3))
    with pytest.raises(OptionError, match=r"^waste must be a fraction or a percentage"):
        options.check_plan(Settings(), {"waste": 15}, (60, 80, 3))


# --------------------------------------------------------------------- light to import
HEAVY = ("sklearn", "numba", "flask", "layerplan.placer", "layerplan.pipeline")


def _modules_after(code: str) -> set[str]:
    probe = f"import sys\n{code}\nprint('\\n'.join(sorted(sys.modules)))"
    done = subprocess.run([sys.executable, "-c", probe], cwd=REPO, capture_output=True, text=True, timeout=120)
    assert done.returncode == 0, done.stderr
    return set(done.stdout.split())


def _heavy(modules: set[str], names=HEAVY) -> list[str]:
    return sorted(m for m in modules if any(m == h or m.startswith(h + ".") for h in names))


def test_the_option_spec_imports_nothing_heavy():
    loaded = _modules_after("import layerplan.options")
    assert "layerplan.options" in loaded
    assert _heavy(loaded, HEAVY + ("numpy",)) == []


def test_help_imports_nothing_heavy():
    loaded = _modules_after("from layerplan.cli import main\ntry:\n    main(['plan', '--help'])\n"
                            "except SystemExit:\n    pass")
    assert "layerplan.cli" in loaded and "layerplan.options" in loaded
    assert _heavy(loaded) == []


def test_paints_and_mix_do_not_load_the_planner_or_the_web_app():
    # numba stays allowed for `mix` here: its recipes are solved by compiled kernels
    loaded = _modules_after("from layerplan.cli import main\nmain(['paints', '--json'])")
    assert _heavy(loaded) == []
    loaded = _modules_after("from layerplan.cli import main\nmain(['mix', '#6b8e23', '--json'])")
    assert _heavy(loaded, ("sklearn", "flask", "layerplan.placer", "layerplan.pipeline")) == []


# ------------------------------------------------------------- hostile values: bounds and short messages
HUGE = "1" + "0" * 400  # one followed by 400 zeros: more than a float holds


@pytest.mark.parametrize("name,bound", [
    ("ground_coats", "from 0 to 10"), ("stroke_coats", "from 1 to 10"), ("paints", "from 2 to 32"),
    ("seed", "from 0 to 4294967295"), ("max_parts", "from 1 to 30"), ("enlargements", "from 0 to 400"),
    ("stroke_cost", "from 0 to 1000"), ("coverage", "from 0.5 to 100"), ("tolerance", "from 0 to 100"),
])
def test_a_huge_number_is_refused_naming_the_option_and_its_bound_not_echoed(name, bound):
    o = OPTIONS[name]
    big = "1e+30" if o.kind == "number" else repr(10**30)  # short enough to repeat whole
    for text, said in ((HUGE, "a 401-digit number"), (str(10**30), big), ("1" * 100_000, "a 100,000-digit number")):
        with pytest.raises(OptionError) as info:
            o.parse(text)
        message = info.value.cli_message()
        assert message.startswith(o.flag) and bound in message, message
        assert len(message) < 200, message  # never the whole input back
        assert message.endswith(f"got {said}"), message
    # the same bound for a value already typed (library callers, the JSON API)
    with pytest.raises(OptionError, match=bound):
        o.check(10**400)


def test_huge_lengths_walls_and_brushes_are_refused_with_the_real_bound():
    with pytest.raises(OptionError, match=r"^work zone must be at most 100 m, got a 401-digit number$"):
        OPTIONS["reach"].parse(HUGE)
    with pytest.raises(OptionError, match=r"^work zone must be at least 100 mm, got '5cm'$"):
        OPTIONS["reach"].parse("5cm")
    with pytest.raises(OptionError, match=r"^grid spacing must be at most 100 m, got '1e3km'|^grid spacing must be"):
        OPTIONS["grid"].parse(HUGE + "m")
    with pytest.raises(OptionError, match=r"^wall width must be at most 100 m, got 1e\+149 m$"):
        OPTIONS["wall"].parse(HUGE[:150] + "x2m")
    with pytest.raises(OptionError, match=r"^wall width must be at most 100 m, got a 401-digit number$"):
        options.check_wall_side("width", 10**400)
    with pytest.raises(OptionError, match=r"^brushes: brush width must be at most 1000 mm"):
        OPTIONS["brushes"].parse(HUGE[:150])
    with pytest.raises(OptionError, match=r"^brushes: brush width must be at least 1 mm, got 0.1"):
        OPTIONS["brushes"].parse("100,0.1")
    with pytest.raises(OptionError, match=r"^at most 8 brushes, got 20,000$"):
        OPTIONS["brushes"].check([10.0] * 20_000)


def test_a_long_text_is_refused_unread_with_its_length():
    with pytest.raises(OptionError, match=r"^--wall must be at most 200 characters, got 600,000$"):
        try:
            OPTIONS["wall"].parse("4x2m" * 150_000)
        except OptionError as exc:
            raise OptionError(exc.option, exc.cli_message()) from None
    with pytest.raises(OptionError) as info:
        OPTIONS["fit"].parse("x" * 600_000)
    assert "600,000" in str(info.value) and len(str(info.value)) < 100


def test_shown_cuts_long_values_and_keeps_short_ones():
    assert options.shown("15%") == "'15%'" and options.shown(40) == "40" and options.shown(2.5) == "2.5"
    assert options.shown(HUGE) == "a 401-digit number" and options.shown(10**400) == "a 401-digit number"
    assert options.shown(10**5000).startswith("a number of about 5,0")  # beyond Python's int-to-text limit
    cut = options.shown("abc" * 10_000)
    assert cut.endswith("(30,000 characters)") and len(cut) < 60


def test_a_pixel_so_small_the_raster_overflows_is_refused_as_too_large():
    settings = Settings(wall_width_mm=4000.0, wall_height_mm=2000.0, mm_per_px=1e-320)
    with pytest.raises(OptionError, match=r"working raster of more than a trillion pixels is too large") as info:
        options.check_plan(settings, {}, (60, 80, 3))
    assert info.value.option == "pixel_mm" and len(str(info.value)) < 200


def test_check_plan_checks_the_settings_themselves_too():
    # a Settings made without .validated() (a library caller) is still checked before planning
    with pytest.raises(OptionError, match=r"^paints must be a whole number from 2 to 32, got a 51-digit number$"):
        options.check_plan(Settings(paints=10**50), {}, (60, 80, 3))
    with pytest.raises(OptionError, match=r"^ground coats must be a whole number from 0 to 10, got a 401-digit"):
        options.check_plan(Settings(), {"ground_coats": 10**400}, (60, 80, 3))
