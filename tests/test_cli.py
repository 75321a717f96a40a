"""layerplan plan: outputs, determinism, bad input leaves nothing that looks finished."""

import json

import numpy as np
import pytest
from PIL import Image

from conftest import quadrants
from layerplan.cli import main
from layerplan.plan import Plan
from layerplan.raster import render, render_steps

ARGS = ["--wall", "80x60cm", "--pixel-mm", "10", "--brushes", "100,50,20", "--paints", "4", "--quiet"]


@pytest.fixture
def photo(tmp_path):
    path = tmp_path / "quadrants.png"
    Image.fromarray(quadrants()).save(path)
    return path


def test_plan_writes_the_contract_and_final_png_is_the_render(photo, tmp_path):
    out = tmp_path / "plan"
    assert main(["plan", str(photo), "--out", str(out), *ARGS]) == 0
    doc = json.loads((out / "plan.json").read_text())
    assert doc["format"] == "layerplan.plan" and doc["wall"] == {"width_mm": 800.0, "height_mm": 600.0}
    plan = Plan.from_dict(doc)
    final = np.asarray(Image.open(out / "final.png").convert("RGB"))
    assert np.array_equal(final, render(plan))
    steps = sorted(p.name for p in (out / "steps").glob("*.png"))
    assert steps == [f"{n:02d}.png" for n in range(len(plan.layers) + 1)]
    rgb = plan.palette_rgb()
    for n, canvas in enumerate(render_steps(plan)):
        assert np.array_equal(np.asarray(Image.open(out / "steps" / f"{n:02d}.png").convert("RGB")), rgb[canvas])
    svg = (out / "overlay.svg").read_text()
    assert 'width="800mm"' in svg and 'height="600mm"' in svg
    assert not list(tmp_path.glob(".plan.partial-*"))


def test_same_seed_gives_byte_identical_plan_json(photo, tmp_path):
    for name in ("a", "b"):
        assert main(["plan", str(photo), "--out", str(tmp_path / name), "--seed", "5", *ARGS]) == 0
    assert (tmp_path / "a" / "plan.json").read_bytes() == (tmp_path / "b" / "plan.json").read_bytes()


def test_progress_bar_goes_to_stderr(photo, tmp_path, capsys):
    args = [a for a in ARGS if a != "--quiet"]
    assert main(["plan", str(photo), "--out", str(tmp_path / "p"), *args]) == 0
    err = capsys.readouterr().err
    assert "[100%]" in err and "layer 1 of 3" in err


@pytest.mark.parametrize(
    "extra,message",
    [
        (["--paints", "1"], "--paints must be a whole number from 2 to 32, got 1"),
        (["--wall", "0x2m"], "--wall"),
        (["--wall", "4x2.5parsecs"], "--wall"),
        (["--brushes", "fat"], "--brushes"),
    ],
)
def test_bad_arguments_exit_non_zero_and_write_nothing(photo, tmp_path, capsys, extra, message):
    out = tmp_path / "never"
    assert main(["plan", str(photo), "--out", str(out), *ARGS, *extra]) == 2
    assert message in capsys.readouterr().err
    assert not out.exists() and not list(tmp_path.glob(".never*"))


def test_not_an_image_exits_non_zero_and_writes_nothing(tmp_path, capsys):
    fake = tmp_path / "holiday.png"
    fake.write_text("this is not a picture")
    out = tmp_path / "never"
    assert main(["plan", str(fake), "--out", str(out), *ARGS]) == 2
    assert "holiday.png" in capsys.readouterr().err
    assert not out.exists()


def test_refuses_to_overwrite_a_folder_that_is_not_a_plan(photo, tmp_path, capsys):
    out = tmp_path / "mywork"
    out.mkdir()
    (out / "notes.txt").write_text("keep me")
    assert main(["plan", str(photo), "--out", str(out), *ARGS]) == 2
    assert "refusing to overwrite" in capsys.readouterr().err
    assert (out / "notes.txt").read_text() == "keep me"


def test_replanning_into_a_plan_folder_replaces_it(photo, tmp_path):
    out = tmp_path / "p"
    assert main(["plan", str(photo), "--out", str(out), *ARGS]) == 0
    (out / "steps" / "99.png").write_bytes(b"stale")
    assert main(["plan", str(photo), "--out", str(out), *ARGS]) == 0
    assert not (out / "steps" / "99.png").exists()


# Every option error starts with the flag at fault. (The settings' errors used to read
# "--paints: paints must ..." and the quantity options' "--coverage must ..."; both now read the
# second way, from the one option spec in layerplan/options.py.)
@pytest.mark.parametrize(
    "extra,flag",
    [(["--paints", "40"], "--paints"), (["--max-parts", "40"], "--max-parts"),
     (["--mix-paints", "9"], "--mix-paints"), (["--brushes", "50,50"], "--brushes"),
     (["--pixel-mm", "-1"], "--pixel-mm"), (["--stroke-cost", "-2"], "--stroke-cost"),
     (["--seed", "-3"], "--seed"), (["--tolerance", "101"], "--tolerance"), (["--fit", "stretch"], "--fit"),
     (["--waste", "15"], "--waste"), (["--grid", "0"], "--grid"), (["--wall", "200x1m"], "--wall")],
)
def test_setting_errors_name_the_option(photo, tmp_path, capsys, extra, flag):
    assert main(["plan", str(photo), "--out", str(tmp_path / "never"), *ARGS, *extra]) == 2
    err = capsys.readouterr().err
    assert err.startswith(f"layerplan: error: {flag} ") or err.startswith(f"layerplan: error: {flag}: "), err
    assert not (tmp_path / "never").exists()


def test_mix_errors_name_the_option(capsys):
    assert main(["mix", "#808080", "--max-parts", "40"]) == 2
    assert "--max-parts must be a whole number from 1 to 30, got 40" in capsys.readouterr().err


def test_a_wrong_out_folder_is_refused_before_planning(photo, tmp_path, capsys, monkeypatch):
    import layerplan.pipeline

    def never(*a, **k):
        raise AssertionError("planned although the output folder was refused")

    monkeypatch.setattr(layerplan.pipeline, "make_plan", never)
    out = tmp_path / "mywork"
    out.mkdir()
    (out / "notes.txt").write_text("keep me")
    assert main(["plan", str(photo), "--out", str(out), *ARGS]) == 2
    assert "--out: output folder" in capsys.readouterr().err


def _refuse_planning(monkeypatch):
    import layerplan.pipeline

    def never(*a, **k):
        raise AssertionError("planned although an option was refused")

    monkeypatch.setattr(layerplan.pipeline, "make_plan", never)


@pytest.mark.parametrize("wall", ["1x30m", "30x1m"])
def test_a_too_fine_grid_is_refused_before_planning_whichever_way_the_wall_turns(photo, tmp_path, capsys,
                                                                                monkeypatch, wall):
    # 30 m / 10 cm = 300 squares along the long side, over the 200 the overlay draws (layerplan/svg.py);
    # the tall wall used to be planned in full and then refused at export
    _refuse_planning(monkeypatch)
    args = ["--wall", wall, "--pixel-mm", "50", "--brushes", "200", "--paints", "2", "--quiet", "--grid", "10cm"]
    assert main(["plan", str(photo), "--out", str(tmp_path / "never"), *args]) == 2
    err = capsys.readouterr().err
    assert "--grid of 100 mm gives 300 squares along the 30 m side (at most 200); use at least 150 mm" in err
    assert not (tmp_path / "never").exists()


def test_a_height_from_the_photo_is_checked_with_the_raster_before_planning(tmp_path, capsys, monkeypatch):
    # a 20 × 400 px strip on a 1 m wide wall would be 20 m high: 1 mm pixels make 1000 × 20000 px,
    # over the 8-megapixel limit (layerplan/settings.py HARD_MAX_RASTER_PX)
    _refuse_planning(monkeypatch)
    strip = tmp_path / "strip.png"
    Image.fromarray(np.full((400, 20, 3), 128, np.uint8)).save(strip)
    assert main(["plan", str(strip), "--out", str(tmp_path / "never"), "--wall", "1m", "--pixel-mm", "1",
                 "--quiet"]) == 2
    assert ("working raster of 1000x20000 px is too large (at most 8 megapixels); use a --pixel-mm coarser "
            "than 1 mm") in capsys.readouterr().err


def test_grid_lengths_read_as_on_the_web_form(photo, tmp_path):
    # a simple fraction with a unit, as brush sizes are sold (1/2 m = 500 mm, SI)
    out = tmp_path / "p"
    assert main(["plan", str(photo), "--out", str(out), *ARGS, "--grid", "1/2m", "--waste", "12.5%"]) == 0
    svg = (out / "overlay.svg").read_text()
    assert 'data-spacing-mm="500"' in svg
    assert json.loads((out / "plan.json").read_text())["paint_use"]["waste"] == pytest.approx(0.125)


@pytest.mark.parametrize("text,share", [("0.15", 0.15), ("15%", 0.15), ("0", 0.0), ("100%", 1.0), ("1", 1.0)])
def test_waste_is_a_fraction_or_a_percentage(text, share):
    from layerplan.options import OPTIONS

    assert OPTIONS["waste"].parse(text) == pytest.approx(share)


def test_a_plain_waste_over_one_is_refused_not_guessed(photo, tmp_path, capsys):
    assert main(["plan", str(photo), "--out", str(tmp_path / "never"), *ARGS, "--waste", "15"]) == 2
    assert "(for 15 percent write 15%)" in capsys.readouterr().err


def test_help_shows_each_options_default_and_rule(capsys):
    from layerplan.options import OPTIONS

    with pytest.raises(SystemExit) as info:
        main(["plan", "--help"])
    assert info.value.code == 0
    text = " ".join(capsys.readouterr().out.split())
    for o in OPTIONS.values():
        assert o.flag in text
    assert "0.15 or 15%" in text and "whole number from 2 to 32 (default 8)" in text
