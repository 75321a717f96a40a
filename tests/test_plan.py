"""plan.json contract: serialisation and validation."""

import json

import numpy as np
import pytest

from layerplan.plan import Layer, Paint, Plan, Stroke, hex_to_rgb, rgb_to_hex


def _plan():
    pal = [Paint("P1", "#f0e0d0", (90.0, 2.0, 5.0)), Paint("P2", "#102030", (12.0, -1.0, -9.0))]
    s = Stroke("P2", 50.0, np.array([[10.25, 20.5], [110.0, 20.5]]))
    return Plan(1000.0, 500.0, 200, 100, 5.0, pal, "P1", [Layer(50.0, [s])], extra={"settings": {"paints": 2}})


def test_contract_names_hold():
    doc = json.loads(_plan().to_json())
    assert doc["format"] == "layerplan.plan" and doc["version"] == 1
    assert doc["wall"] == {"width_mm": 1000.0, "height_mm": 500.0}
    assert doc["raster"] == {"width_px": 200, "height_px": 100, "mm_per_px": 5.0}
    assert doc["palette"][0] == {"id": "P1", "srgb": "#f0e0d0", "lab": [90.0, 2.0, 5.0]}
    assert doc["ground"] == {"paint": "P1"}
    stroke = doc["layers"][0]["strokes"][0]
    assert doc["layers"][0]["brush"] == {"width_mm": 50.0}
    assert stroke == {"paint": "P2", "width_mm": 50.0, "path_mm": [[10.25, 20.5], [110.0, 20.5]]}
    assert doc["settings"] == {"paints": 2}


def test_round_trip_is_byte_identical():
    text = _plan().to_json()
    assert Plan.from_json(text).to_json() == text


@pytest.mark.parametrize(
    "change,message",
    [
        (lambda d: d.update(format="other"), "not a layerplan plan"),
        (lambda d: d.update(version=99), "unsupported plan version"),
        (lambda d: d.pop("wall"), "missing or has a malformed field"),
        (lambda d: d["ground"].update(paint="P9"), "ground paint 'P9' is not in the palette"),
        (lambda d: d["layers"][0]["strokes"][0].update(paint="Q"), "stroke paint 'Q' is not in the palette"),
    ],
)
def test_bad_plans_are_refused_with_a_clear_message(change, message):
    doc = json.loads(_plan().to_json())
    change(doc)
    with pytest.raises(ValueError, match=message):
        Plan.from_dict(doc)


def test_not_json():
    with pytest.raises(ValueError, match="not valid JSON"):
        Plan.from_json("{nope")


def test_hex_colours():
    assert hex_to_rgb("#0a0B0c") == (10, 11, 12) and rgb_to_hex((10, 11, 12)) == "#0a0b0c"
    with pytest.raises(ValueError, match="not a hex colour"):
        hex_to_rgb("#12345g")
