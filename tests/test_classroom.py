"""Classroom plans: sheet surfaces, a class's paint, value studies, step sheets, classroom safety.

Outside facts and where they come from:

- A sizes: ISO 216:2007 (A4 = 210 × 297 mm, A3 = 297 × 420 mm, A2 = 420 × 594 mm).
- Letter and Tabloid: ANSI/ASME Y14.1-2020 (8.5 × 11 in, 11 × 17 in), with 1 in = 25.4 mm exactly
  (International Yard and Pound Agreement, 1959).
- CIELAB L* of the predicted greys is measured with scikit-image's ``skimage.color.rgb2lab``
  (sRGB, D65, 2°; CIE 15:2004), not with layerplan's own conversion.
- Tables of about six, a class period of about 45 minutes and about 10 % spare sheets: common practice.
- ASTM D4236 is the US standard practice for labelling art materials for chronic health hazards.
"""

from __future__ import annotations

import math
import re

import numpy as np
import pytest
import skimage.color
import skimage.data

from layerplan import classroom, surfaces
from layerplan.options import OPTIONS, OptionError, check_raster
from layerplan.plan import hex_to_rgb
from layerplan.settings import DEFAULT_BRUSHES_MM, Settings

MM_PER_INCH = 25.4  # exact, International Yard and Pound Agreement (1959)


def _photo(wide: bool = True) -> np.ndarray:
    img = skimage.data.coffee()[::5, ::5]  # 80 × 120 px, wider than tall
    return img if wide else np.ascontiguousarray(img.transpose(1, 0, 2))


def _lightness(srgb: str) -> float:
    """L* of an sRGB colour by scikit-image (the outside reference)."""
    rgb = np.array(hex_to_rgb(srgb), dtype=float).reshape(1, 1, 3) / 255.0
    return float(skimage.color.rgb2lab(rgb)[0, 0, 0])


@pytest.fixture(scope="module")
def class_plan():
    """An A4 sheet for 25 students: two brushes, a coarse raster so it plans in seconds."""
    from layerplan.pipeline import make_plan

    return make_plan(_photo(), Settings(surface="a4", brushes_mm=(25.0, 12.0), students=25, mm_per_px=4.0))


@pytest.fixture(scope="module")
def value_plan():
    from layerplan.pipeline import make_plan

    return make_plan(_photo(), Settings(surface="a4", brushes_mm=(25.0, 12.0), students=25, value_study=5,
                                        mm_per_px=4.0))


# ------------------------------------------------------------------------------------ surfaces
@pytest.mark.parametrize("key, short_mm, long_mm", [
    ("a4", 210, 297), ("a3", 297, 420), ("a2", 420, 594),  # ISO 216
    ("letter", 8.5 * MM_PER_INCH, 11 * MM_PER_INCH), ("tabloid", 11 * MM_PER_INCH, 17 * MM_PER_INCH),  # Y14.1
])
def test_surface_sizes_are_the_standard_ones(key, short_mm, long_mm):
    s = surfaces.SURFACES[key]
    assert (s.short_mm, s.long_mm) == pytest.approx((short_mm, long_mm), abs=0.01)


def test_surface_names_are_read_ignoring_case_and_bad_ones_are_named():
    assert OPTIONS["surface"].parse("A3") == "a3"
    assert OPTIONS["surface"].parse(" Board-9x12IN ") == "board-9x12in"
    with pytest.raises(OptionError, match=r"surface must be one of a4, a3, .* got 'a5'"):
        OPTIONS["surface"].parse("a5")


def test_a_sheet_turns_to_follow_the_photo():
    settings = Settings(surface="a3").validated()
    wide = check_raster(settings, (100, 200, 3))
    tall = check_raster(settings, (200, 100, 3))
    assert (wide.wall_width_mm, wide.wall_height_mm) == (420.0, 297.0)  # ISO 216 A3, landscape
    assert (tall.wall_width_mm, tall.wall_height_mm) == (297.0, 420.0)  # and portrait


def test_a_sheet_gets_small_brushes_and_the_classroom_set_unless_given():
    s = Settings(surface="letter").validated()
    assert s.brushes_mm == surfaces.SHEET_BRUSHES_MM and max(s.brushes_mm) <= 25.0
    assert s.inventory.endswith("classroom_inventory.toml") and s.wall_unit == "in"
    own = Settings(surface="letter", brushes_mm=(20.0, 8.0), inventory="mine.toml").validated()
    assert own.brushes_mm == (20.0, 8.0) and own.inventory == "mine.toml"
    assert Settings().validated().brushes_mm == DEFAULT_BRUSHES_MM  # a wall is unchanged


def test_the_classroom_set_is_a_primary_triad_with_black_and_white():
    from layerplan.inventory import load_inventory

    inv = load_inventory(surfaces.paint_set_path("classroom"))
    lab = {p.name: p.lab for p in inv.paints}
    assert len(inv) == 5 and inv.white is not None
    hues = sorted(math.degrees(math.atan2(b, a)) % 360 for L, a, b in lab.values() if math.hypot(a, b) > 30)
    # a red, a yellow and a blue (CIELAB hue angles, CIE 15:2004): three chromatic paints far apart in hue
    assert len(hues) == 3 and min(np.diff(hues + [hues[0] + 360])) > 60
    assert min(L for L, _, _ in lab.values()) < 20  # a black


def test_simple_mixes_are_two_paints_in_a_few_parts(class_plan):
    from layerplan.pipeline import make_plan

    plan = make_plan(_photo(), Settings(surface="a4", brushes_mm=(25.0,), simple_mixes=True, mm_per_px=5.0))
    for p in plan.palette:
        parts = [q["parts"] for q in p.extra["recipe"]["parts"]]
        assert len(parts) <= 2 and sum(parts) <= surfaces.SIMPLE_MAX_PARTS
        assert classroom.who_mixes(p.extra["recipe"]) in ("stock", "students")


# ------------------------------------------------------------------------------- quantities
def test_a_sheet_is_measured_in_ml_and_never_rounds_up_to_a_tin(class_plan):
    from layerplan.quantities import paint_use

    use = paint_use(class_plan)
    assert use["scale"] == "ml"
    for entry in use["paints"] + use["stock"]:
        assert entry["containers"] == [] and not entry["trace"]
        assert entry["ml"] == pytest.approx(entry["litres"] * 1000, abs=0.6)
    assert any(e["ml"] > 0 for e in use["paints"])


def test_class_quantities_scale_with_students_and_spares(class_plan):
    from layerplan.quantities import paint_use
    from layerplan.sheets import _with_settings

    use = paint_use(class_plan)
    small = classroom.classroom_section(_with_settings(class_plan, students=10, spares=0.1), use)
    big = classroom.classroom_section(_with_settings(class_plan, students=20, spares=0.25), use)
    assert (small["spares"], small["sheets"]) == (1, 11)  # 10 % of 10, rounded up
    assert (big["spares"], big["sheets"]) == (5, 25)
    one = {e["paint"]: e["ml"] for e in use["stock"]}
    assert one and {r["paint"] for r in small["paints"]} == set(one)
    for s, b in zip(small["paints"], big["paints"]):
        assert s["per_student_ml"] == b["per_student_ml"] == pytest.approx(one[s["paint"]], abs=0.05)
        assert s["total_ml"] == pytest.approx(one[s["paint"]] * 11, abs=0.1)
        assert b["total_ml"] == pytest.approx(one[s["paint"]] * 25, abs=0.1)
        # per table of about six (common practice): what the teacher does not mix beforehand, split over the tables
        assert s["per_table_ml"] * small["tables"] + s["premix_ml"] == \
            pytest.approx(s["total_ml"], abs=0.1 * small["tables"] + 0.1)
    assert small["tables"] == 2 and big["tables"] == 4


def test_a_class_needs_a_student_and_spares_are_a_fraction():
    with pytest.raises(ValueError, match="students must be a whole number >= 1, got 0"):
        classroom.class_size(0, 0.1)
    with pytest.raises(ValueError, match="spares must be a fraction"):
        classroom.class_size(25, 10)


# ------------------------------------------------------------------------------- value study
@pytest.mark.parametrize("steps", range(3, surfaces.MAX_VALUE_STEPS + 1))
def test_value_steps_are_even_in_lightness(steps):
    from layerplan.inventory import default_inventory, load_inventory
    from layerplan.value_study import value_scale

    for inv in (default_inventory(), load_inventory(surfaces.paint_set_path("classroom"))):
        scale = value_scale(inv, steps)
        measured = [_lightness(s.predicted_srgb) for s in scale]
        even = np.linspace(measured[0], measured[-1], steps)
        assert np.max(np.abs(np.array(measured) - even)) <= 2.0, measured
        assert (scale[0].black_parts, scale[-1].white_parts) == (0, 0)  # white alone, black alone
        assert all(s.black_parts + s.white_parts <= 200 for s in scale)


def test_a_value_study_plans_in_greys_of_black_and_white(value_plan):
    assert len(value_plan.palette) == 5
    for p in value_plan.palette:
        L, a, b = skimage.color.rgb2lab(np.array(hex_to_rgb(p.srgb), float).reshape(1, 1, 3) / 255)[0, 0]
        assert math.hypot(a, b) < 3.0  # neutral by scikit-image's CIELAB
        assert {q["paint"] for q in p.extra["recipe"]["parts"]} <= {"Black", "White"}
    assert [g["paint"] for g in value_plan.extra["value_study"]["greys"]] == [p.id for p in value_plan.palette]


def test_a_value_study_of_two_greys_is_refused():
    with pytest.raises(OptionError, match="value study must be 0 .none. or from 3 to 10 greys, got 2"):
        Settings(value_study=2).validated()


# ------------------------------------------------------------------------------- periods
def test_layers_split_into_class_periods_with_drying_between():
    room = classroom.PERIOD_MINUTES - classroom.SETUP_MINUTES
    periods = classroom.class_periods([("layer 1", 10.0), ("layer 2", 30.0), ("layer 3", 80.0)],
                                      classroom.PERIOD_MINUTES)
    assert all(p["minutes"] <= room + 1e-6 for p in periods)
    names = [s["step"] for p in periods for s in p["steps"] if s["step"] != "drying"]
    assert names[:2] == ["layer 1", "layer 2"] and set(names[2:]) == {"layer 3"}
    # layer 2 cannot follow layer 1 in the same period: 10 + 20 min drying + 30 > 35
    assert [s["step"] for s in periods[0]["steps"]] == ["layer 1"]
    painted = sum(s["minutes"] for p in periods for s in p["steps"] if s["step"] == "layer 3")
    assert painted == pytest.approx(80.0, abs=0.2) and len(periods) == 2 + math.ceil(80 / room)
    with pytest.raises(ValueError, match="class period must be longer"):
        classroom.class_periods([("layer 1", 5.0)], 8.0)


# ------------------------------------------------------------------------------- printed plan
@pytest.fixture(scope="module")
def class_html(class_plan):
    from layerplan.report import plan_html

    return plan_html(class_plan, paper="a3")


def test_a_classroom_plan_has_no_ladder_scaffold_or_roller(class_html):
    text = re.sub(r"<[^>]+>", " ", class_html)
    assert not re.search(r"ladder|scaffold|roller|lead paint", text, re.IGNORECASE)
    assert "ASTM D4236" in text and "No food or drink" in text and "school" in text
    assert "classroom set (built in)" in text  # the paints it was mixed from, by the set's name


def test_one_step_sheet_per_layer_full_size_when_it_fits(class_plan, class_html):
    from layerplan.sheets import PAPERS, step_layout, step_scale

    assert len(re.findall(r'<section class="sheet step[^"]*" id="step-\d\d"', class_html)) == len(class_plan.layers)
    # an A4 sheet (ISO 216: 297 × 210 landscape here) fits the box A3 and Tabloid share, turned: 1:1
    assert step_layout(class_plan, PAPERS["a3"]) == (1.0, True)
    assert class_html.count("full size (1:1)") == len(class_plan.layers)
    # on A4 paper it does not fit, and gets the largest scale that does
    s = step_scale(class_plan, PAPERS["a4"])
    assert s < 1 and class_plan.wall_width_mm * s <= PAPERS["a4"].print_w_mm + 1e-9
    for n in range(1, len(class_plan.layers) + 1):
        assert f'id="step-{n:02d}"' in class_html


def test_the_preparation_sheet_is_in_ml_without_tins(class_html):
    prep = class_html[class_html.index('id="classroom-prep"'):class_html.index('id="classroom-teacher"')]
    assert "mL" in prep and "per table" in prep
    assert not re.search(r"\d\s*×\s*[\d.]+\s*L\b", prep.replace("\u00a0", " "))
    assert "trace: use what you have" not in class_html


def test_plan_json_carries_the_classroom_section(class_plan, tmp_path):
    import json

    from layerplan.export import build_files
    from layerplan.plan import Plan

    files = build_files(class_plan)
    doc = json.loads(files["plan.json"])
    c = doc["classroom"]
    assert (c["students"], c["sheets"]) == (25, 28)  # 25 and 10 % spares rounded up
    assert all({"paint", "per_student_ml", "total_ml"} <= set(r) for r in c["paints"])
    assert Plan.from_json(files["plan.json"].decode()).extra["classroom"] == c  # read back unchanged


def test_what_the_teacher_mixes_beforehand_is_not_put_out_on_the_tables(value_plan):
    from layerplan.quantities import paint_use

    use = paint_use(value_plan)
    c = classroom.classroom_section(value_plan, use)
    by_id = {m["paint"]: m for m in c["mixes"]}
    premixed = [m for m in c["mixes"] if m["who"] == "teacher"]
    assert premixed  # a light grey of 1 part black to many of white is not a mix for the tables
    black = next(r for r in c["paints"] if r["paint"] == "Black")
    expected = 0.0
    for m in premixed:
        parts = {q["paint"]: q["parts"] for q in value_plan.paint(m["paint"]).extra["recipe"]["parts"]}
        expected += m["per_student_ml"] * parts.get("Black", 0) / sum(parts.values())
    assert black["premix_ml"] == pytest.approx(expected * c["sheets"], abs=0.2 + 0.05 * len(by_id))
    assert black["per_table_ml"] * c["tables"] + black["premix_ml"] == pytest.approx(black["total_ml"], abs=0.6)


def test_the_class_defaults_are_the_classroom_modules():
    # one source for each trade figure: tables of about six, 10 % spares, 45-minute periods (common practice)
    assert (classroom.SPARE_SHARE, classroom.PERIOD_MINUTES, classroom.TABLE_SIZE) == (0.1, 45.0, 6)
    assert OPTIONS["spares"].parse(OPTIONS["spares"].default_words()) == classroom.SPARE_SHARE
    assert OPTIONS["period_minutes"].parse(OPTIONS["period_minutes"].default_words()) == classroom.PERIOD_MINUTES
    section = classroom.classroom_section(_plan_of(Settings(surface="a4", students=20)), _no_paint())
    assert (section["spare_share"], section["period_minutes"], section["spares"]) == (0.1, 45.0, 2)


def test_a_value_study_plans_as_many_paints_as_greys():
    assert Settings(value_study=7).validated().paints == 7


def test_students_need_a_sheet_each(tmp_path, capsys):
    from layerplan.cli import main

    with pytest.raises(OptionError, match="students plans one sheet or board per student"):
        Settings(students=25).validated()
    photo = tmp_path / "coffee.png"
    from PIL import Image

    Image.fromarray(_photo()).save(photo)
    assert main(["plan", str(photo), "--out", str(tmp_path / "never"), "--quiet", "--students", "25"]) == 2
    assert capsys.readouterr().err.startswith("layerplan: error: --students plans one sheet or board")
    assert not (tmp_path / "never").exists()


def test_render_changes_the_class_and_keeps_the_strokes(class_plan, tmp_path, capsys):
    import json

    from layerplan.cli import main
    from layerplan.export import write_outputs

    write_outputs(class_plan, tmp_path / "plan")
    src = tmp_path / "plan" / "plan.json"
    assert main(["render", str(src), "--out", str(tmp_path / "again"), "--students", "30", "--spares", "0%"]) == 0
    doc = json.loads((tmp_path / "again" / "plan.json").read_text())
    before = json.loads(src.read_text())
    assert (doc["classroom"]["students"], doc["classroom"]["sheets"]) == (30, 30)
    assert doc["layers"] == before["layers"]  # the same strokes
    assert "period_minutes" not in doc["settings"] and doc["classroom"]["period_minutes"] == 45.0  # not given
    first = before["classroom"]["paints"][0]
    again = doc["classroom"]["paints"][0]
    assert again["total_ml"] == pytest.approx(first["per_student_ml"] * 30, abs=0.1)


def test_render_refuses_a_class_for_a_wall(tmp_path, capsys):
    from layerplan.cli import main
    from layerplan.export import write_outputs
    from layerplan.pipeline import make_plan

    wall = make_plan(_photo(), Settings(wall_width_mm=800.0, brushes_mm=(80.0,), mm_per_px=20.0))
    write_outputs(wall, tmp_path / "wall")
    assert main(["render", str(tmp_path / "wall" / "plan.json"), "--out", str(tmp_path / "x"),
                 "--students", "20"]) == 2
    assert "--students: this plan is of a wall" in capsys.readouterr().err
    assert not (tmp_path / "x").exists()


def _plan_of(settings):
    """A plan with no strokes made with ``settings`` (enough for a class's figures)."""
    from layerplan.plan import Layer, Paint, Plan

    st = settings.validated()
    return Plan(wall_width_mm=st.wall_width_mm, wall_height_mm=st.wall_height_mm, width_px=10, height_px=10,
                mm_per_px=st.wall_width_mm / 10, palette=[Paint(id="P1", srgb="#ffffff", lab=(100.0, 0.0, 0.0))],
                ground="P1", layers=[Layer(brush_width_mm=25.0, strokes=[])], extra={"settings": st.to_dict()})


def _no_paint():
    return {"paints": [], "stock": [], "stroke_coats": 1}
