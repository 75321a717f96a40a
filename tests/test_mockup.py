"""The plan on a photo of the site (layerplan/mockup.py): the wall's corners land where they were marked.

Checked against plane geometry (the shoelace formula for the area of the marked quadrilateral)
and against where the pixels land in the warped photo, not against the transform itself.
"""

from __future__ import annotations

import json

import numpy as np
import pytest
from PIL import Image
from skimage import data

from layerplan.cli import main
from layerplan.mockup import check_corners, mockup

#: a wall seen from below and to the left: its four corners in a 400 × 300 px photo (our own scenario)
CORNERS = np.array([[60.0, 40.0], [350.0, 70.0], [330.0, 260.0], [80.0, 280.0]])


def _shoelace(p):
    x, y = p[:, 0], p[:, 1]
    return 0.5 * abs(np.dot(x, np.roll(y, -1)) - np.dot(y, np.roll(x, -1)))


def test_the_warped_wall_fills_the_marked_quadrilateral_to_its_corners():
    picture = np.full((50, 80, 3), 255, np.uint8)  # a white wall
    site = np.zeros((300, 400, 3), np.uint8)  # a black photo
    out = mockup(picture, site, CORNERS)
    covered = out[..., 0] > 127
    ys, xs = np.nonzero(covered)
    centres = np.stack([xs + 0.5, ys + 0.5], axis=1)  # pixel i spans [i, i + 1): its centre is i + 0.5
    for corner in CORNERS:
        # the covered pixel nearest each marked corner is within a pixel of it
        assert np.min(np.hypot(*(centres - corner).T)) <= 1.0
    # the covered area is the quadrilateral's (shoelace formula), to within its outline's pixels
    perimeter = np.sum(np.hypot(*(np.roll(CORNERS, -1, axis=0) - CORNERS).T))
    assert abs(covered.sum() - _shoelace(CORNERS)) <= perimeter


def test_picture_corners_land_on_the_marked_corners():
    # a picture with one coloured pixel at each corner: each lands within a pixel of its marked corner
    picture = np.zeros((40, 60, 3), np.uint8)
    marks = [(0, 0, (255, 0, 0)), (0, 59, (0, 255, 0)), (39, 59, (0, 0, 255)), (39, 0, (255, 255, 0))]
    for i, j, c in marks:
        picture[i, j] = c
    out = mockup(picture, np.zeros((300, 400, 3), np.uint8), CORNERS).astype(int)
    for (i, j, c), corner in zip(marks, CORNERS):
        hit = np.all(np.abs(out - np.array(c)) < 60, axis=2) & (out.sum(axis=2) > 60)
        ys, xs = np.nonzero(hit)
        assert len(xs), f"corner colour {c} not found"
        assert np.min(np.hypot(xs + 0.5 - corner[0], ys + 0.5 - corner[1])) <= 1.0


@pytest.mark.parametrize("corners,message", [
    ([1, 2, 3], "four x,y points"),
    ([[60, 40], [350, 70], [80, 280], [330, 260]], "in that order"),
    ([[60, 40], [450, 70], [330, 260], [80, 280]], "corner 2 .* outside the 400 x 300 px"),
])
def test_bad_corners_are_refused(corners, message):
    with pytest.raises(ValueError, match=message):
        check_corners(corners, (300, 400, 3))


def test_cli_writes_the_mockups_and_refuses_corners_off_the_photo(tmp_path):
    photo = tmp_path / "p.png"
    Image.fromarray(data.astronaut()[::8, ::8]).save(photo)
    site = tmp_path / "site.png"
    Image.fromarray(data.coffee()[::2, ::2]).save(site)  # 300 × 200 px
    args = ["plan", str(photo), "--wall", "1x0.8m", "--pixel-mm", "20", "--brushes", "100,50", "--paints", "3",
            "--quiet", "--site-photo", str(site)]
    corners = "20,20,280,30,270,180,30,190"
    assert main([*args, "--corners", corners, "--out", str(tmp_path / "out")]) == 0
    out = tmp_path / "out"
    shot = np.asarray(Image.open(out / "mockup.png"))
    assert shot.shape == (200, 300, 3)
    # outside the wall the site photo is untouched
    assert np.array_equal(shot[:10, :10], np.asarray(Image.open(site))[:10, :10])
    layers = len(json.loads((out / "plan.json").read_text())["layers"])
    assert sorted(p.name for p in (out / "mockups").iterdir()) == [f"{n:02d}.png" for n in range(layers + 1)]
    assert main([*args, "--corners", "20,20,380,30,270,180,30,190", "--out", str(tmp_path / "bad")]) == 2
    assert not (tmp_path / "bad").exists()


def test_web_lays_a_finished_plan_into_an_uploaded_photo(client):
    import io

    from conftest import plan_form, png_bytes, wait_for_plan

    plan_id = client.post("/api/plans", data=plan_form(), content_type="multipart/form-data").get_json()["id"]
    assert wait_for_plan(client, plan_id)[-1]["state"] == "done"
    assert b"/site" in client.get(f"/plans/{plan_id}").data  # linked from the plan page
    site = np.zeros((120, 160, 3), np.uint8)

    def post(corners, **extra):
        return client.post(f"/plans/{plan_id}/site", content_type="multipart/form-data",
                           data={"photo": (io.BytesIO(png_bytes(site)), "wall.png"), "corners": corners, **extra})

    good = post("10,10,150,20,140,110,20,100")
    assert good.status_code == 200 and good.mimetype == "image/png"
    shot = np.asarray(Image.open(io.BytesIO(good.data)))
    assert shot.shape == (120, 160, 3)
    assert shot[60, 80].any() and not shot[2, 2].any()  # the plan inside the corners, the photo outside
    assert post("10,10,150,20,140,110,20,100", step="0").status_code == 200
    bad = post("10,10,150,20,140,110")
    assert bad.status_code == 400 and "Wall corners" in bad.get_json()["error"]
    crossed = post("10,10,140,110,150,20,20,100")
    assert crossed.status_code == 400 and "in that order" in crossed.get_json()["error"]
    assert client.get("/plans/nosuch/site").status_code == 404
