"""Fitting a plan to a budget of hours or strokes (layerplan/budget.py, ``layerplan plan --hours/--strokes``).

A plan's hours are checked here by working its schedule out again from the plan alone
(layerplan.quantities.paint_use, layerplan.schedule.work_schedule), not by trusting the budget's record.
"""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

from layerplan.budget import fit_to_budget
from layerplan.quantities import paint_use
from layerplan.schedule import work_schedule
from layerplan.settings import Settings

REPO = Path(__file__).resolve().parents[1]


@pytest.fixture(scope="module")
def coffee():
    """scikit-image's coffee photo, small (75 × 100 px)."""
    from skimage import data, transform

    return (transform.resize(data.coffee(), (75, 100), anti_aliasing=True) * 255).astype(np.uint8)


#: a 1.5 × 1.125 m board, two brushes, 10 mm pixels: a plan takes about a second
SMALL = Settings(wall_width_mm=1500, wall_height_mm=1125, paints=5, brushes_mm=(60, 30), mm_per_px=10, seed=2,
                 reach_mm=750)


def _hours(plan, crew):
    return work_schedule(plan, paint_use(plan), crew=crew)["painting_hours"]


@pytest.mark.parametrize("asked,crew", [(1.1, 1), (0.6, 2)])
def test_hours_budget_is_met_within_five_percent(coffee, asked, crew):
    plan = fit_to_budget(coffee, SMALL, hours=asked, crew=crew)
    got = _hours(plan, crew)
    assert abs(got - asked) / asked <= 0.05
    record = plan.extra["budget"]
    assert record["met"] and record["achieved_hours"] == pytest.approx(got, abs=0.01) and record["crew"] == crew
    assert plan.extra["settings"]["stroke_cost"] == pytest.approx(record["stroke_cost"], rel=1e-3)


def test_stroke_budget_is_met_within_five_percent(coffee):
    plan = fit_to_budget(coffee, SMALL, strokes=100)
    assert abs(plan.stroke_count() - 100) <= 5
    assert plan.extra["budget"]["achieved_strokes"] == plan.stroke_count()


def test_budget_under_what_cannot_be_cut_is_reported_not_met(coffee):
    # the ground alone (1.6875 m² × 2 coats / 10 m²/h = 0.3375 h) takes longer than six minutes
    plan = fit_to_budget(coffee, SMALL, hours=0.1)
    record = plan.extra["budget"]
    assert not record["met"] and record["within"] > 0.05
    assert _hours(plan, 1) >= 0.335  # the ground is never cut


@pytest.mark.parametrize("kw,match", [({}, "give one budget"), ({"hours": 1.0, "strokes": 5}, "give one budget"),
                                      ({"hours": -1.0}, "hours must be"), ({"strokes": 0}, "strokes must be")])
def test_bad_budgets_are_named(coffee, kw, match):
    with pytest.raises(ValueError, match=match):
        fit_to_budget(coffee, SMALL, **kw)


def test_cli_fits_and_says_how_close(coffee, tmp_path):
    from PIL import Image

    photo = tmp_path / "coffee.png"
    Image.fromarray(coffee).save(photo)
    base = [sys.executable, "-m", "layerplan", "plan", str(photo), "--wall", "1.5x1.125m", "--paints", "5",
            "--brushes", "60,30", "--pixel-mm", "10", "--seed", "2", "--reach", "75cm", "--enlargements", "0",
            "--quiet"]
    both = subprocess.run(base + ["--out", str(tmp_path / "x"), "--hours", "1", "--strokes", "9"], cwd=REPO,
                          capture_output=True, text=True)
    assert both.returncode == 2 and "one budget" in both.stderr and not (tmp_path / "x").exists()
    done = subprocess.run(base + ["--out", str(tmp_path / "out"), "--hours", "1.1"], cwd=REPO, capture_output=True,
                          text=True, timeout=600)
    assert done.returncode == 0, done.stderr
    assert "budget met" in done.stderr
    doc = json.loads((tmp_path / "out" / "plan.json").read_text())
    assert abs(doc["schedule"]["painting_hours"] - 1.1) / 1.1 <= 0.05
    assert doc["budget"]["hours"] == 1.1
