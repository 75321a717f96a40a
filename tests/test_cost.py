"""What the paint costs: prices in the inventory (layerplan/inventory.py), cost in paint use
(layerplan/quantities.py), the shopping list (layerplan/sheets.py) and money in words (layerplan/wording.py).

The worked example is computed by hand below, from the quantity rule the module states (area ×
coats / spreading rate × (1 + waste), a stroke's area length × width + π (width / 2)²).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from layerplan import wording
from layerplan.inventory import InventoryError, loads_inventory
from layerplan.plan import Layer, Paint, Plan, Stroke
from layerplan.quantities import paint_use

PRICED = """
title = "priced kit"
currency = "EUR"
[[paint]]
name = "White"
srgb = "#f4f4f0"
containers_l = [{ litres = 1.0, price = 15.0 }, { litres = 0.25, price = 6.0 }]
[[paint]]
name = "Blue"
srgb = "#203080"
containers_l = [{ litres = 0.25, price = 5.0 }, 1.0]
[[paint]]
name = "Red"
srgb = "#b02020"
containers_l = [0.5]
"""


def _plan(inventory_entries) -> Plan:
    """A 1 × 1 m wall in P1 (all white), one 900 mm stroke of a 100 mm brush in P2 (1 blue : 1 white)."""
    palette = [Paint("P1", "#f4f4f0", (96.0, 0.0, 1.0), extra={"recipe": {"parts": [{"paint": "White", "parts": 1}]}}),
               Paint("P2", "#8a90b8", (60.0, 5.0, -25.0),
                     extra={"recipe": {"parts": [{"paint": "Blue", "parts": 1}, {"paint": "White", "parts": 1}]}})]
    stroke = Stroke("P2", 100.0, np.array([[50.0, 500.0], [950.0, 500.0]]))
    return Plan(1000.0, 1000.0, 100, 100, 10.0, palette, "P1", [Layer(100.0, [stroke])],
                extra={"inventory": inventory_entries})


def _entries(inv):
    # as the pipeline writes plan.json's inventory (layerplan.pipeline.mix_palette)
    return [{"name": p.name, "srgb": p.srgb, "containers_l": list(p.containers_l),
             **({"container_prices": list(p.prices), "currency": inv.currency} if p.prices else {})}
            for p in inv.paints]


def test_inventory_reads_prices_beside_sizes():
    inv = loads_inventory(PRICED)
    assert inv.currency == "EUR"
    white = inv.paint("White")
    assert white.containers_l == (0.25, 1.0) and white.prices == (6.0, 15.0)  # sorted together
    assert inv.paint("Blue").prices == (5.0, None)
    assert inv.paint("Red").prices == ()


def test_worked_example_cost():
    """Hand computation (10 m²/L, 15 % waste, 2 ground coats, 1 coat a stroke; the defaults):

    ground P1: 1 m² × 2 coats / 10 × 1.15 = 0.23 L, all White;
    stroke P2: 900 × 100 + π × 50² = 97 853.98 mm² = 0.097 854 m² → / 10 × 1.15 = 0.011 253 L,
    half Blue, half White (0.005 627 L each);
    White 0.235 627 L → one 0.25 L tin, 6.00; Blue 0.005 627 L → one 0.25 L tin, 5.00; total 11.00 EUR.
    """
    plan = _plan(_entries(loads_inventory(PRICED)))
    use = paint_use(plan)
    stroke_l = (900 * 100 + math.pi * 50 ** 2) / 1e6 / 10 * 1.15
    stock = {s["paint"]: s for s in use["stock"]}
    assert stock["White"]["litres"] == pytest.approx(0.23 + stroke_l / 2, abs=1e-3)
    assert stock["White"]["containers"] == [{"litres": 0.25, "count": 1}]
    assert stock["White"]["cost"] == 6.0
    assert stock["Blue"]["cost"] == 5.0
    assert use["cost"] == {"currency": "EUR", "total": 11.0, "priced": ["Blue", "White"], "unpriced": []}


def test_larger_need_is_priced_per_container():
    # a 5 × 4 m wall: ground 20 m² × 2 / 10 × 1.15 = 4.6 L of White → 4 × 1 L + 3 × 0.25 L (4.75 L, the least
    # volume to 10 mL, then fewest tins) = 4 × 15 + 3 × 6 = 78.00 for the white alone
    plan = _plan(_entries(loads_inventory(PRICED)))
    big = Plan(5000.0, 4000.0, 500, 400, 10.0, plan.palette, "P1", plan.layers, extra=plan.extra)
    stock = {s["paint"]: s for s in paint_use(big)["stock"]}
    assert stock["White"]["containers"] == [{"litres": 1.0, "count": 4}, {"litres": 0.25, "count": 3}]
    assert stock["White"]["cost"] == 78.0


def test_unpriced_size_leaves_cost_unknown_and_says_so():
    inv = loads_inventory(PRICED.replace('{ litres = 0.25, price = 5.0 }, 1.0', '1.0, { litres = 2.0, price = 9.0 }'))
    use = paint_use(_plan(_entries(inv)))  # Blue's 0.005 L goes in a 1 L tin that has no price
    stock = {s["paint"]: s for s in use["stock"]}
    assert "cost" not in stock["Blue"]
    assert use["cost"]["unpriced"] == ["Blue"] and use["cost"]["total"] == 6.0


def test_no_prices_no_cost():
    inv = loads_inventory(PRICED.replace("currency = \"EUR\"\n", "").replace(
        "[{ litres = 1.0, price = 15.0 }, { litres = 0.25, price = 6.0 }]", "[1.0, 0.25]").replace(
        "[{ litres = 0.25, price = 5.0 }, 1.0]", "[0.25]"))
    assert "cost" not in paint_use(_plan(_entries(inv)))


@pytest.mark.parametrize("text,match", [
    (PRICED.replace('currency = "EUR"\n', ""), "a price needs the currency"),
    (PRICED.replace("price = 6.0", "price = -1"), "a price must be a number from 0"),
    (PRICED.replace("price = 6.0", "cost = 6.0"), r"\{ litres = 1.0, price = 14.5 \}"),
    (PRICED.replace('currency = "EUR"', 'currency = "Euros of 2026"'), "'currency' must be text of at most 8"),
])
def test_bad_prices_are_named(text, match):
    with pytest.raises(InventoryError, match=match):
        loads_inventory(text)


def test_money_in_words():
    assert wording.money(1204.5, "$") == "$1,204.50"
    assert wording.money(11, "EUR") == "EUR\u00a011.00"
    assert wording.money(0.5, "") == "0.50"


def test_shopping_sheet_shows_cost_per_paint_and_total():
    from layerplan.sheets import _shopping

    plan = _plan(_entries(loads_inventory(PRICED)))
    shop = _shopping(plan, paint_use(plan), "m")
    assert {r.paint: r.cost for r in shop.stock} == {"Blue": "EUR\u00a05.00", "White": "EUR\u00a06.00"}
    assert shop.total_cost == "EUR\u00a011.00"


def test_plan_page_shows_cost_per_stock_paint_and_total(client):
    """The web page's shopping list, for an inventory entered on the start page with every size priced."""
    import re
    from importlib import resources

    from conftest import plan_form, wait_for_plan

    text = resources.files("layerplan").joinpath("data", "default_inventory.toml").read_text("utf-8")
    text = 'currency = "EUR"\n' + re.sub(
        r"containers_l = \[([^\]]*)\]",
        lambda m: "containers_l = [" + ", ".join(f"{{ litres = {v.strip()}, price = {12 * float(v):.2f} }}"
                                                  for v in m.group(1).split(",") if v.strip()) + "]", text)
    assert "price = " in text  # the default set lists container sizes, so each got a price
    r = client.post("/api/plans", data=plan_form(inventory="edit", inventory_text=text),
                    content_type="multipart/form-data")
    plan_id = r.get_json()["id"]
    assert wait_for_plan(client, plan_id, timeout=240)[-1]["state"] == "done"
    use = client.get(f"/api/plans/{plan_id}").get_json()
    page = client.get(f"/plans/{plan_id}").get_data(as_text=True)
    doc = client.get(next(u for n, u in use["files"].items() if n == "plan.json")).get_json()
    cost = doc["paint_use"]["cost"]
    # the total is the sum of the stock paints' costs, each count × price (12 a litre here)
    assert cost["total"] == pytest.approx(sum(s["cost"] for s in doc["paint_use"]["stock"]))
    for s in doc["paint_use"]["stock"]:
        assert s["cost"] == pytest.approx(sum(12 * c["litres"] * c["count"] for c in s["containers"]), abs=0.01)
        assert wording.money(s["cost"], "EUR") in page
    total = re.search(r'id="stock-total">.*?<td class="num">([^<]*)</td>', page, re.S).group(1)
    assert total == wording.money(cost["total"], "EUR")
