"""plan.json contract (documented at the top of layerplan/plan.py): serialisation and
validation, read back with Python's own json module; the Plan is frozen."""

import dataclasses
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
        (lambda d: d["settings"].update(wall_unit="furlong"), "settings.wall_unit must be one of mm, cm, m, in, ft"),
        (lambda d: d["settings"].update(wall_unit=3), "settings.wall_unit must be one of .*got 3"),
        (lambda d: d["raster"].update(mm_per_px="fine"), "malformed field: could not convert string to float"),
        (lambda d: d["layers"][0]["strokes"][0].update(path_mm=[[1, 2, 3]]), "missing or has a malformed field"),
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


def test_a_plan_is_frozen_and_holds_tuples():
    plan = _plan()
    assert isinstance(plan.palette, tuple) and isinstance(plan.layers, tuple)
    assert isinstance(plan.layers[0].strokes, tuple)
    for obj, name in ((plan, "ground"), (plan.palette[0], "srgb"), (plan.layers[0], "strokes"),
                      (plan.layers[0].strokes[0], "paint")):
        with pytest.raises(dataclasses.FrozenInstanceError):
            setattr(obj, name, "P2")
    # a changed plan is a new one; the old one stays as it was
    wider = dataclasses.replace(plan, wall_width_mm=2000.0)
    assert wider.wall_width_mm == 2000.0 and plan.wall_width_mm == 1000.0


def test_wall_unit_is_read_from_and_written_to_settings():
    doc = json.loads(_plan().to_json())
    doc["settings"] = {"wall_width_mm": 1000.0, "wall_unit": "ft", "paints": 2}  # plan.json as written so far
    plan = Plan.from_dict(doc)
    assert plan.wall_unit == "ft"
    assert plan.to_json() == json.dumps(doc, ensure_ascii=False, separators=(",", ":")) + "\n"
    # the field is the unit: a plan in other units writes them where they stood, in settings
    cm = json.loads(dataclasses.replace(plan, wall_unit="cm").to_json())
    assert list(cm["settings"].items()) == [("wall_width_mm", 1000.0), ("wall_unit", "cm"), ("paints", 2)]
    # no unit anywhere: metres, and nothing is added to the file
    assert _plan().wall_unit == "m" and json.loads(_plan().to_json())["settings"] == {"paints": 2}
    bare = Plan(1000.0, 500.0, 200, 100, 5.0, _plan().palette, "P1", wall_unit="in")
    assert json.loads(bare.to_json())["settings"] == {"wall_unit": "in"}
    assert Plan.from_json(bare.to_json()).wall_unit == "in"
    with pytest.raises(ValueError, match="wall unit must be one of mm, cm, m, in, ft; got 'yd'"):
        dataclasses.replace(plan, wall_unit="yd")


def test_recipe_and_inventory_are_read_only_views():
    recipe = {"parts": [{"paint": "White", "parts": 1}]}
    stock = [{"name": "White", "srgb": "#ffffff", "containers_l": [1.0]}, "not an entry"]
    plan = dataclasses.replace(_plan(), extra={"inventory": stock})
    paint = Paint("P3", "#ffffff", (100.0, 0.0, 0.0), extra={"recipe": recipe})
    assert paint.recipe == recipe and _plan().palette[0].recipe is None
    assert plan.inventory == (stock[0],) and _plan().inventory == ()
    with pytest.raises(TypeError):
        paint.recipe["parts"] = []
    with pytest.raises(TypeError):
        plan.inventory[0]["name"] = "Black"
    # they stay where plan.json has them
    doc = plan.to_dict()
    assert doc["inventory"] == stock


# ------------------------------------------------------------------ hostile plan.json files
def _stroke(d):
    return d["layers"][0]["strokes"][0]


@pytest.mark.parametrize("change,message", [
    # a negative or zero wall used to make `layerplan render` loop for ever drawing the grid
    (lambda d: d["wall"].update(width_mm=-1000.0), r"^plan.json wall.width_mm must be > 0 and at most 100 m, got -1000.0$"),
    (lambda d: d["wall"].update(height_mm=0), r"wall.height_mm must be > 0 and at most 100 m, got 0.0"),
    (lambda d: d["wall"].update(width_mm=1e300), r"wall.width_mm must be > 0 and at most 100 m, got 1e\+300"),
    (lambda d: d["wall"].update(width_mm=10**400), r"malformed field: int too large to convert to float"),
    # a 30000² raster is 900 megapixels: refused before anything is allocated
    (lambda d: d["raster"].update(width_px=30_000, height_px=30_000),
     r"raster of 30000x30000 px: each side must be at least 1 px and the whole at most 8 megapixels"),
    (lambda d: d["raster"].update(width_px=-5), r"raster of -5x100 px"),
    (lambda d: d["raster"].update(mm_per_px=0), r"raster.mm_per_px must be a number > 0, got 0.0"),
    (lambda d: d["raster"].update(mm_per_px=float("nan")), r"raster.mm_per_px must be a number > 0, got nan"),
    (lambda d: d["raster"].update(mm_per_px=50.0),
     r"raster width of 200 px at 50 mm a pixel is 10000 mm, but the wall is 1000 mm wide"),
    (lambda d: d["palette"][0].update(lab=[float("inf"), 0, 0]), r"paint 'P1': lab must be three finite numbers"),
    (lambda d: d["palette"][0].update(srgb="#" + "f" * 100_000), r"paint 'P1': srgb is not a hex colour .*'#fff"),
    (lambda d: d.update(palette=[{"id": f"P{i}", "srgb": "#000000", "lab": [0, 0, 0]} for i in range(40)]),
     r"palette must have 1 to 32 paints, got 40"),
    (lambda d: d.update(layers=d["layers"] * 9), r"has 9 layers; at most 8"),
    (lambda d: d["layers"][0]["brush"].update(width_mm=-50), r"layer 1: brush width must be from 1 to 1000 mm"),
    (lambda d: _stroke(d).update(width_mm=0.0), r"layer 1, stroke 1: width must be from 1 to 1000 mm, got 0.0"),
    (lambda d: _stroke(d).update(coats=10**6), r"layer 1, stroke 1: coats must be from 1 to 4, got 1000000"),
    (lambda d: _stroke(d).update(path_mm=[]), r"layer 1, stroke 1: path_mm must have at least one point"),
    (lambda d: _stroke(d).update(path_mm=[[1e308, 5.0]]), r"stroke 1: path_mm goes more than a wall's size off"),
    (lambda d: _stroke(d).update(path_mm=[[float("nan"), 5.0]]), r"stroke 1: path_mm must be finite numbers"),
    (lambda d: d.update(inventory=[{"name": "W", "containers_l": [0.01 * k for k in range(1, 20_001)]}]),
     r"inventory paint 1: containers_l must list at most 8 sizes"),
    (lambda d: d.update(inventory=[{"name": "W", "containers_l": [1e9]}]),
     r"inventory paint 1: container sizes must be from 0.01 to 200 litres, got 1000000000.0"),
])
def test_a_hostile_plan_is_refused_naming_the_field_and_its_bound(change, message):
    doc = json.loads(_plan().to_json())
    change(doc)
    with pytest.raises(ValueError, match=message) as info:
        Plan.from_json(json.dumps(doc))
    assert len(str(info.value)) < 400  # never the file back


def test_json_nested_too_deep_or_with_a_number_of_thousands_of_digits_is_a_value_error():
    with pytest.raises(ValueError, match=r"^plan.json is not a plan: arrays or objects nested too deep"):
        Plan.from_json("[" * 100_000 + "]" * 100_000)
    with pytest.raises(ValueError, match=r"^plan.json is not valid JSON: Exceeds the limit") as info:
        Plan.from_json('{"format": ' + "9" * 100_000 + "}")
    assert len(str(info.value)) < 400


def test_the_plan_limits_are_the_planners_own():
    from layerplan import coats, inventory, options
    from layerplan.plan import LIMITS

    assert LIMITS["coats"] == coats.MAX_COATS
    assert (LIMITS["brush_min_mm"], LIMITS["brush_max_mm"]) == (options.MIN_BRUSH_MM, options.MAX_BRUSH_MM)
    assert (LIMITS["inventory"], LIMITS["container_sizes"]) == (inventory.MAX_INVENTORY_PAINTS,
                                                                inventory.MAX_CONTAINER_SIZES)
    assert (LIMITS["container_min_l"], LIMITS["container_max_l"]) == (inventory.MIN_CONTAINER_L,
                                                                      inventory.MAX_CONTAINER_L)
