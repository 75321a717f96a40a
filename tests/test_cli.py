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
        (["--paints", "1"], "paints must be a whole number from 2 to 32"),
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


@pytest.mark.parametrize(
    "extra,flag",
    [(["--paints", "40"], "--paints: "), (["--max-parts", "40"], "--max-parts: "),
     (["--mix-paints", "9"], "--mix-paints: "), (["--brushes", "50,50"], "--brushes: "),
     (["--pixel-mm", "-1"], "--pixel-mm: "), (["--stroke-cost", "-2"], "--stroke-cost: ")],
)
def test_setting_errors_name_the_option(photo, tmp_path, capsys, extra, flag):
    assert main(["plan", str(photo), "--out", str(tmp_path / "never"), *ARGS, *extra]) == 2
    assert flag in capsys.readouterr().err


def test_mix_errors_name_the_option(capsys):
    assert main(["mix", "#808080", "--max-parts", "40"]) == 2
    assert "--max-parts: max parts must be a whole number from 1 to 30, got 40" in capsys.readouterr().err


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
