"""Panels (layerplan/panels.py): the design split into numbered panels that cover the wall with the stated overlap.

Checked with plane geometry: the union of the panels is the wall (exact area by the cells the
panels' edges cut, and a fine sampling of points), each panel fits its cloth, and neighbours
share a band exactly the overlap wide.
"""

from __future__ import annotations

import numpy as np
import pytest
from PIL import Image
from skimage import data

from layerplan.cli import main
from layerplan.openings import Opening, union_area_mm2
from layerplan.panels import overlaps_of, panel_layout


@pytest.mark.parametrize("wall,size,overlap", [
    ((6000.0, 3000.0), (1500.0, 1200.0), 50.0),   # a 6 × 3 m wall in 1.5 × 1.2 m cloth
    ((4000.0, 2500.0), (1370.0, 2500.0), 100.0),  # full-height strips of 1.37 m cloth
    ((1000.0, 800.0), (1500.0, 1200.0), 50.0),    # one panel bigger than the wall
])
def test_panels_cover_the_wall_with_the_stated_overlap(wall, size, overlap):
    panels = panel_layout(wall, size, overlap)
    boxes = [Opening(p.x_mm, p.y_mm, p.width_mm, p.height_mm) for p in panels]
    assert union_area_mm2(boxes) == pytest.approx(wall[0] * wall[1])
    for p in panels:
        assert p.width_mm <= size[0] + 1e-9 and p.height_mm <= size[1] + 1e-9
        assert p.x_mm >= 0 and p.y_mm >= 0 and p.box[2] <= wall[0] + 1e-9 and p.box[3] <= wall[1] + 1e-9
        for other, (x0, y0, x1, y1) in overlaps_of(p, panels):
            q = panels[other - 1]
            if q.row == p.row and abs(q.column - p.column) == 1:
                assert x1 - x0 == pytest.approx(overlap)  # side by side: a band the overlap wide
            if q.column == p.column and abs(q.row - p.row) == 1:
                assert y1 - y0 == pytest.approx(overlap)
    # every point of the wall (a fine sampling) lies on a panel
    xs, ys = np.meshgrid(np.linspace(0, wall[0], 97), np.linspace(0, wall[1], 53))
    on = np.zeros(xs.shape, bool)
    for p in panels:
        x0, y0, x1, y1 = p.box
        on |= (xs >= x0) & (xs <= x1) & (ys >= y0) & (ys <= y1)
    assert on.all()
    # numbered row by row from the top-left
    assert [p.number for p in panels] == list(range(1, len(panels) + 1))
    assert [(p.row, p.column) for p in panels] == sorted((p.row, p.column) for p in panels)


def test_bad_panels_are_refused():
    with pytest.raises(ValueError, match="less than the panel's sides"):
        panel_layout((4000.0, 2000.0), (1000.0, 1000.0), 1000.0)
    with pytest.raises(ValueError, match="at most 400"):
        panel_layout((100000.0, 100000.0), (100.0, 100.0), 10.0)


def test_cli_writes_panels_html_with_a_sheet_each(tmp_path):
    photo = tmp_path / "p.png"
    Image.fromarray(data.astronaut()[::8, ::8]).save(photo)
    out = tmp_path / "out"
    assert main(["plan", str(photo), "--wall", "1.2x0.8m", "--pixel-mm", "20", "--brushes", "100,50", "--paints",
                 "3", "--quiet", "--panels", "0.5,0.5m", "--panel-overlap", "4cm", "--out", str(out)]) == 0
    html = (out / "panels.html").read_text()
    # 1.2 m in steps of 0.46 m: 3 columns; 0.8 m: 2 rows
    assert html.count('class="sheet panel"') == 6 and "Panel 6 of 6" in html
    # shared bands seen from both panels: 4 side by side, 3 one above the other, and the 4 corner squares
    # where diagonal neighbours meet (3 × 2 grid)
    assert html.count('class="overlap"') == 2 * (4 + 3 + 4)
    assert "Working at height" in html  # the safety sheet goes with the panels
    assert main(["plan", str(photo), "--wall", "1.2x0.8m", "--quiet", "--panels", "0.5m",
                 "--out", str(tmp_path / "bad")]) == 2


def test_the_web_form_makes_panels_html(client):
    from conftest import plan_form, wait_for_plan

    page = client.get("/")
    assert b'name="panels"' in page.data and b'name="panel_overlap"' in page.data
    plan_id = client.post("/api/plans", data=plan_form(panels="0.5,0.4m", panel_overlap="5cm"),
                          content_type="multipart/form-data").get_json()["id"]
    assert wait_for_plan(client, plan_id)[-1]["state"] == "done"
    html = client.get(f"/api/plans/{plan_id}/files/panels.html").get_data(as_text=True)
    # hand-worked: the 0.8 × 0.6 m wall in 0.5 × 0.4 m panels, 5 cm overlap: 2 columns, 2 rows
    assert html.count('class="sheet panel"') == 4
    bad = client.post("/api/plans", data=plan_form(panels="0.5,0.4m", panel_overlap="50cm"),
                      content_type="multipart/form-data")
    assert bad.status_code == 400 and bad.get_json()["field"] == "panel_overlap"
