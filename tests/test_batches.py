"""Batches (layerplan/batches.py): each mixed paint's litres split into its stock paints.

Checked against hand-worked examples and the defining properties: a batch adds up to the
paint's litres (paint_use), and its amounts stand in the recipe's ratio (parts by volume).
Mixing each colour's whole quantity in one batch is common practice.
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest

from layerplan import wording
from layerplan.batches import BATCH_STEP_L, mix_batches, split_batch, with_batches
from layerplan.export import build_files
from layerplan.plan import Layer, Paint, Plan, Stroke
from layerplan.quantities import paint_use
from layerplan.sheets import build_sheets


def _recipe(*parts):
    return {"recipe": {"parts": [{"paint": n, "parts": k} for n, k in parts], "target": "#336699",
                       "predicted_srgb": "#336699", "delta_e": 0.5, "in_gamut": True}}


def _plan(unit="m"):
    # a 4 × 2.5 m wall; P2 (3 Warm blue + 1 Cool yellow) painted in one straight 1 m stroke of a 100 mm brush,
    # P3 (7 White + 2 Earth red + 1 Black) in a 2 m one
    palette = [Paint("P1", "#f0f0f0", (95.0, 0.0, 0.0), _recipe(("White", 1))),
               Paint("P2", "#305060", (33.0, -8.0, -12.0), _recipe(("Warm blue", 3), ("Cool yellow", 1))),
               Paint("P3", "#c0a0a0", (69.0, 13.0, 6.0), _recipe(("White", 7), ("Earth red", 2), ("Black", 1)))]
    layers = [Layer(100.0, [Stroke("P2", 100.0, np.array([[500.0, 500.0], [1500.0, 500.0]])),
                            Stroke("P3", 100.0, np.array([[500.0, 1500.0], [2500.0, 1500.0]]))])]
    return Plan(4000.0, 2500.0, 400, 250, 10.0, palette, "P1", layers, {"settings": {"wall_unit": unit}})


def test_split_hand_worked():
    # worked by hand: 2.3 L of a 3 : 1 mix is 1.725 L + 0.575 L
    batch = split_batch(2.3, [("Warm blue", 3), ("Cool yellow", 1)])
    assert batch == [{"paint": "Warm blue", "litres": 1.725}, {"paint": "Cool yellow", "litres": 0.575}]
    # worked by hand: 1 L of 1 : 1 : 1 is 333.3 + 333.3 + 333.3 mL, and the 0.1 mL left over goes to the first
    batch = split_batch(1.0, [("A", 1), ("B", 1), ("C", 1)])
    assert [b["litres"] for b in batch] == [0.3334, 0.3333, 0.3333]


@pytest.mark.parametrize("seed", range(20))
def test_batch_adds_up_and_keeps_the_ratio(seed):
    rng = np.random.default_rng(seed)
    litres = round(float(rng.uniform(0.0, 30.0)), 3)
    parts = [(f"paint {k}", int(n)) for k, n in enumerate(rng.integers(1, 11, int(rng.integers(1, 5))))]
    batch = split_batch(litres, parts)
    assert [b["paint"] for b in batch] == [n for n, _ in parts]
    assert sum(b["litres"] for b in batch) == pytest.approx(litres, abs=1e-9)
    total = sum(n for _, n in parts)
    for b, (_, n) in zip(batch, parts):  # each amount within one rounding step of its share
        assert abs(b["litres"] - litres * n / total) <= BATCH_STEP_L + 1e-12


def test_plan_batches_match_paint_use():
    plan = _plan()
    use = paint_use(plan)
    batches = mix_batches(plan, use)
    assert set(batches) == {"P1", "P2", "P3"}
    for entry in use["paints"]:
        assert sum(b["litres"] for b in batches[entry["paint"]]) == pytest.approx(entry["litres"], abs=1e-9)
    # worked by hand: a straight 1 m stroke of a 100 mm brush covers 0.1 + π·0.05² m²; at 10 m²/L plus 15 %
    p2 = (0.1 + math.pi * 0.05 ** 2) / 10.0 * 1.15
    blue, yellow = batches["P2"]
    assert blue["litres"] == pytest.approx(0.75 * p2, abs=1e-3) and yellow["litres"] == pytest.approx(0.25 * p2,
                                                                                                     abs=1e-3)
    # summed over the paints they go into, the batches are the stock paints' amounts to buy
    for s in use["stock"]:
        from_batches = sum(b["litres"] for bs in batches.values() for b in bs if b["paint"] == s["paint"])
        assert from_batches == pytest.approx(s["litres"], abs=1e-3)


def test_with_batches_leaves_the_plan_alone():
    plan = _plan()
    before = plan.to_json()
    batched = with_batches(plan, paint_use(plan))
    assert plan.to_json() == before
    assert batched.palette[1].recipe["batch"][0]["paint"] == "Warm blue"


def test_plan_json_sheets_and_words_carry_the_batch():
    plan = _plan()
    files = build_files(plan)
    doc = json.loads(files["plan.json"])
    use = {e["paint"]: e for e in doc["paint_use"]["paints"]}
    for p in doc["palette"]:
        batch = p["recipe"]["batch"]
        assert sum(b["litres"] for b in batch) == pytest.approx(use[p["id"]]["litres"], abs=1e-9)
    sheets = build_sheets(plan, paint_use=doc["paint_use"])
    p2 = next(r for r in sheets.paint_card.rows if r.id == "P2")
    expected = wording.batch(doc["palette"][1]["recipe"]["batch"], False)
    assert p2.batch == expected and "Warm blue" in expected and " + " in expected
    assert next(r for r in sheets.shopping.paints if r.id == "P2").batch == expected
    html = files["plan.html"].decode()
    assert "whole batch: " + expected in html


def test_batch_words():
    # volumes as the rest of the plan says them: mL below 0.1 L, fl oz beside for walls in ft/in
    items = [{"paint": "Warm blue", "litres": 1.5}, {"paint": "Cool yellow", "litres": 0.05}]
    assert wording.batch(items, False) == "1.5 L Warm blue + 50 mL Cool yellow"
    assert "fl oz" in wording.batch(items, True)
    assert wording.batch([], False) == "—"


def test_bad_batch_input_is_refused():
    with pytest.raises(ValueError, match="batch litres must be a number >= 0"):
        split_batch(-1.0, [("A", 1)])
    with pytest.raises(ValueError, match="batch parts must be numbers > 0"):
        split_batch(1.0, [("A", 0)])
    plan = _plan()
    with pytest.raises(ValueError, match="no amount for the mixed paint P2"):
        mix_batches(plan, {"paints": [{"paint": "P1", "litres": 1.0}]})


def test_web_plan_page_says_the_batch():
    from layerplan.web.pages import _batch_text

    plan = _plan(unit="ft")
    use = paint_use(plan)
    p2 = plan.paint("P2")
    expected = wording.batch(mix_batches(plan, use)["P2"], True)
    # a plan.json written before recipe.batch existed: worked out from its paint_use
    assert _batch_text(plan, p2, use) == expected and "fl oz" in expected
    # a plan.json that carries it: read as written
    stored = with_batches(plan, use).paint("P2")
    assert _batch_text(plan, stored, use) == expected
    assert _batch_text(plan, Paint("P9", "#000000", (0.0, 0.0, 0.0)), use) == ""  # no recipe, no batch
