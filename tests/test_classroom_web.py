"""The web app's classroom choices: offered with the surface size, made from the option spec, planned as
the command line plans them (sizes: ISO 216 for A4)."""

from __future__ import annotations

import json

from conftest import plan_form, wait_for_plan

from layerplan.options import OPTIONS
from layerplan.web.forms import CLASSROOM_OPTIONS


def test_the_start_page_offers_the_classroom_choices_with_the_surface(client):
    page = client.get("/").get_data(as_text=True)
    surface = page[page.index("<legend>Surface</legend>"):]
    surface = surface[:surface.index("</fieldset>")]
    for o in CLASSROOM_OPTIONS:  # every one, labelled as the option spec labels it
        assert f'name="{o.field}"' in surface and o.label in surface
    for key in OPTIONS["surface"].choices:
        assert f'<option value="{key}"' in surface
    assert 'name="wall_width" step="any" min="0.001" required' not in page  # a sheet needs no width


def test_a_sheet_for_a_class_is_planned_from_the_form(client):
    form = plan_form(wall_width="", wall_height="", surface="A4", students="12", spares="0%", brushes="25,12",
                     pixel_mm="5")
    r = client.post("/api/plans", data=form, content_type="multipart/form-data")
    assert r.status_code == 202, r.get_json()
    final = wait_for_plan(client, r.get_json()["id"])[-1]
    assert final["state"] == "done", final["message"]
    doc = json.loads(client.get(final["files"]["plan.json"]).data)
    assert sorted((doc["wall"]["width_mm"], doc["wall"]["height_mm"])) == [210.0, 297.0]  # ISO 216 A4
    assert doc["classroom"]["students"] == 12 and doc["classroom"]["sheets"] == 12
    page = client.get(f"/plans/{r.get_json()['id']}").get_data(as_text=True)
    assert "ASTM D4236" in page and "ladder" not in page.lower()


def test_a_bad_class_size_is_a_400_naming_the_field(client):
    r = client.post("/api/plans", data=plan_form(students="lots"), content_type="multipart/form-data")
    assert r.status_code == 400
    body = r.get_json()
    assert body["field"] == "students" and "Students" in body["error"]


def test_the_plan_list_says_the_sheet_and_the_class():
    from layerplan.web.pages import plan_summary

    facts = dict(plan_summary({"surface": "a3", "students": 25, "wall_width_mm": 420.0, "wall_height_mm": 297.0,
                               "wall_unit": "mm", "brushes_mm": [25.0, 12.0, 6.0], "paints": 5})["facts"])
    assert facts["Sheet or board"] == "A3 sheet (297 × 420 mm)" and facts["Students"] == "25"  # ISO 216 A3
