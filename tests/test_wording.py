"""How amounts are said (layerplan/wording.py), and that the web page and the printed plan say them alike.

Unit facts: 1 in = 25.4 mm and 1 ft = 0.3048 m exactly (international yard and pound agreement, 1959);
1 US gallon = 3.785411784 L = 4 quarts = 128 US fluid ounces (NIST Handbook 44, Appendix C);
1 L = 1000 mL and 1 m² = 10 000 cm² (SI). Container sizes are those layerplan.quantities buys.
"""

from __future__ import annotations

import json
import re
from html.parser import HTMLParser

import pytest

from conftest import plan_form, wait_for_plan
from layerplan import wording
from layerplan.quantities import COMMON_CONTAINERS_L, LITRES_PER_US_GALLON, US_CONTAINERS_L

NBSP = "\u00a0"


# ----------------------------------------------------------------------------- single functions
@pytest.mark.parametrize("mm, unit, text", [
    (3500.0, "m", "3.5 m"), (1500.0, "cm", "150 cm"), (12.0, "mm", "12 mm"),
    (12 * 304.8, "ft", "12 ft"),                      # 12 ft exactly
    (12.5 * 304.8, "ft", "12 ft 6 in"),               # 0.5 ft = 6 in
    (18.5 * 25.4, "in", "18.5 in"),
])
def test_lengths_in_the_walls_unit(mm, unit, text):
    assert wording.length(mm, unit) == text


def test_wall_size_gives_metres_beside_feet():
    # 12 ft = 3.6576 m, 8 ft = 2.4384 m (1959 agreement), to the mm
    assert wording.wall_size(12 * 304.8, 8 * 304.8, "ft") == "12 ft × 8 ft (3.658 × 2.438 m)"
    assert wording.wall_size(4000.0, 2500.0, "m") == "4 m × 2.5 m"


def test_areas():
    # 96 ft² = 96 × 0.3048² m² = 8.918 m²; 0.05 m² = 500 cm²; 0.05 ft² = 7.2 in² (144 in² per ft²)
    assert wording.area(96 * 0.3048 ** 2, "ft") == "96 ft² (8.92 m²)"
    assert wording.area(0.05, "m") == "500 cm²"
    assert wording.area(0.05 * 0.3048 ** 2, "in") == "7 in² (46 cm²)"
    assert wording.area(2.5, "cm") == "2.5 m²"


def test_volumes_in_litres_millilitres_and_us_measures():
    assert wording.volume(1.8434, False) == "1.84 L"
    assert wording.volume(0.035, False) == "35 mL"              # 0.035 L = 35 mL
    assert wording.volume(0.0002, False) == "under 1 mL"
    assert wording.volume(0.0, False) == "0 L" and wording.volume(0.0, False, used=True) == "under 1 mL"
    # 1 gal and 2 gal: gallons with quarts beside; a litre is 1.057 qt; 35 mL = 1.18 fl oz
    assert wording.volume(LITRES_PER_US_GALLON, True) == "3.79 L (1 gal = 4 qt)"
    assert wording.volume(1.0, True) == "1 L (1.1 qt)"
    assert wording.volume(0.035, True) == "35 mL (1.2 fl oz)"


def test_container_sizes_are_named_as_sold():
    # US sizes by their names (quart = gal / 4); metric sizes in litres
    names = [wording.container_size(size, True) for size in US_CONTAINERS_L]
    assert names == ["1 qt", "1 gal", "5 gal"]
    assert [wording.container_size(size, False) for size in COMMON_CONTAINERS_L] == [
        "0.25 L", "0.5 L", "1 L", "2.5 L", "5 L", "10 L"]
    # a size that is no US size stays in litres, even on a wall in feet
    assert wording.container_size(2.5, True) == "2.5 L"


def test_containers_hold_together_and_trace_amounts_buy_nothing():
    text = wording.containers([{"litres": US_CONTAINERS_L[1], "count": 1},
                               {"litres": US_CONTAINERS_L[0], "count": 3}], True)
    assert text == f"1{NBSP}×{NBSP}1{NBSP}gal + 3{NBSP}×{NBSP}1{NBSP}qt"
    assert all(" " not in part for part in text.split(" + "))  # a line breaks only at "+"
    trace = {"litres": 0.004, "trace": True, "containers": [{"litres": 0.25, "count": 1}]}
    assert wording.buy(trace, False).replace(NBSP, " ") == "trace: use what you have, or 1 × 0.25 L (the smallest)"
    assert wording.containers([], False) == "—"
    # plan files older than the trace flag: worked out from the litres (10 mL, layerplan.quantities)
    assert wording.is_trace({"litres": 0.004}) and not wording.is_trace({"litres": 0.4})


def test_coverage_and_durations():
    # 10 m²/L = 10 / 0.3048² ft²/L × 3.785411784 L/gal = 407.4 ft² per gallon
    assert wording.coverage(10.0, True) == "10 m² per litre (about 407 ft² per US gallon)"
    assert wording.coverage(8.5, False) == "8.5 m² per litre"
    assert [wording.duration(s) for s in (10, 45 * 60, 7200, 3900)] == ["1 min", "45 min", "2 h", "1 h 5 min"]


# ----------------------------------------------------------------- the web page and the printed plan
class _Tables(HTMLParser):
    """Every table of a page: its id and class, and each row's cell texts (entities decoded, spaces kept)."""

    def __init__(self):
        super().__init__()
        self.tables: list[dict] = []
        self.ids: list[str] = []
        self._cell: list[str] | None = None

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        if "id" in a:
            self.ids.append(a["id"])
        if tag == "table":
            self.tables.append({"id": a.get("id"), "class": a.get("class", ""), "rows": []})
        elif tag == "tr" and self.tables:
            self.tables[-1]["rows"].append([])
        elif tag in ("td", "th"):
            self._cell = []

    def handle_endtag(self, tag):
        if tag in ("td", "th") and self._cell is not None:
            self.tables[-1]["rows"][-1].append(re.sub(r"[ \t\r\n]+", " ", "".join(self._cell)).strip())
            self._cell = None

    def handle_data(self, data):
        if self._cell is not None:
            self._cell.append(data)

    def table(self, *, id=None, cls=None):
        found = [t for t in self.tables if (id and t["id"] == id) or (cls and cls in t["class"].split())]
        assert len(found) == 1, (id, cls, [(t["id"], t["class"]) for t in self.tables])
        return found[0]["rows"]


def _parse(text):
    doc = _Tables()
    doc.feed(text)
    return doc


#: three paints of our own invention, without container sizes of their own: the stock to buy then comes in
#: the sizes sold where the wall is measured (layerplan.quantities: litres, or US quarts and gallons)
OWN_PAINTS = """title = "Yard kit"
[[paint]]
name = "Chalk"
srgb = "#f2f0ea"
[[paint]]
name = "Deep teal"
srgb = "#1f5c5a"
[[paint]]
name = "Brick"
srgb = "#a0442c"
"""


@pytest.mark.parametrize("unit, width, height", [("ft", "12", "8"), ("m", "3", "2")])
def test_web_page_and_printed_plan_say_the_same_containers(client, unit, width, height):
    data = plan_form(unit=unit, wall_width=width, wall_height=height, brushes="200mm,100mm", pixel_mm="40",
                     inventory="edit")
    data["inventory_text"] = OWN_PAINTS
    r = client.post("/api/plans", data=data, content_type="multipart/form-data")
    assert r.status_code == 202, r.get_json()
    final = wait_for_plan(client, r.get_json()["id"])[-1]
    assert final["state"] == "done", final["message"]
    page = _parse(client.get(f"/plans/{final['id']}").get_data(as_text=True))
    printed = _parse(client.get(final["files"]["plan.html"]).get_data(as_text=True))
    doc = json.loads(client.get(final["files"]["plan.json"]).data)
    stock = doc["paint_use"]["stock"]
    assert stock, "an inventory gives every plan colour a recipe, so there are stock paints to buy"

    # the stock list: paint -> (amount, what to buy), on the page and on paper
    on_page = {row[0]: (row[2], row[3]) for row in page.table(id="stock-list")[1:]}
    on_paper = {row[0]: (row[1], row[2]) for row in printed.table(cls="stock")[1:]}
    assert on_page == on_paper and set(on_page) == {s["paint"] for s in stock}
    sold = ["1 qt", "1 gal", "5 gal"] if unit == "ft" else ["0.25 L", "0.5 L", "1 L", "2.5 L", "5 L", "10 L"]
    sold = [size.replace(" ", NBSP) for size in sold]
    for _, buy in on_page.values():
        # "3 × 1 qt", never "3 × 0.9464 L", for a wall in feet: US quart, gallon, 5 gallons (common practice)
        for part in buy.removeprefix("trace: use what you have, or ").removesuffix(" (the smallest)").split(" + "):
            count, size = part.split("\u00a0×\u00a0")
            assert int(count) >= 1 and size in sold, buy
    # and the amount of every plan paint reads the same in both
    card = {row[1]: row[5] for row in printed.table(cls="paints")[1:]}
    page_card = {row[0].split()[0]: row[3] for row in page.table(cls="paint-card")[1:]}
    assert page_card == card
    if unit == "ft":
        assert all("qt" in text or "fl oz" in text or "gal" in text for text in card.values())
    # the colour in words: the page names each paint as the printed card does (its plan colour, CIELAB)
    names = {row[1]: row[2] for row in printed.table(cls="paints")[1:]}
    page_names = {row[0].split()[0]: row[1] for row in page.table(cls="paint-card")[1:]}
    for paint in doc["palette"]:
        said = wording.colour_name(paint["lab"])
        assert page_names[paint["id"]] == paint["srgb"] + said and said in names[paint["id"]]  # code<br>name
    # ids unique on both (an id names one element: HTML Living Standard, "The id attribute")
    for ids in (page.ids, printed.ids):
        assert len(ids) == len(set(ids)), sorted(i for i in ids if ids.count(i) > 1)
