"""The palette stage: paints chosen among the colours the inventory mixes (layerplan.palette).

Floors and separations are measured with colour-science's CIEDE2000 (``colour.delta_E``,
method "CIE 2000"), a reference outside the project, on scikit-image's public-domain photos
downsampled to keep the tests fast.
"""

import numpy as np
import pytest
from PIL import Image

from conftest import QUADRANT_COLOURS, quadrants
from layerplan import palette
from layerplan.colour import error_planes, srgb_to_lab
from layerplan.inventory import default_inventory
from layerplan.pipeline import choose_palette
from layerplan.plan import hex_to_rgb
from layerplan.recipes import build_mix_table, solve_recipes
from layerplan.settings import Settings

colour_science = pytest.importorskip("colour")


def _de00(lab1, lab2):
    """colour-science's CIEDE2000 (the outside reference)."""
    return colour_science.delta_E(np.asarray(lab1, float), np.asarray(lab2, float), method="CIE 2000")


def _floor(lab_img, pal_lab):
    """Mean over pixels of the CIEDE2000 to the nearest paint, by colour-science."""
    px = lab_img.reshape(-1, 1, 3)
    return float(_de00(px, np.asarray(pal_lab)[None, :, :]).min(axis=1).mean())


def _photo(name, scale=4):
    from skimage import data

    img = getattr(data, name)()[..., :3]
    h, w = img.shape[:2]
    small = Image.fromarray(img).resize((w // scale, h // scale), Image.Resampling.LANCZOS)
    return np.asarray(small, dtype=np.uint8)


def _snapped_kmeans(lab_img, k, seed):
    """The former default: k-means colours, each replaced by its recipe's predicted colour."""
    inside = np.ones(lab_img.shape[:2], bool)
    _, km_lab = palette.palette_from_image(lab_img, inside, k, seed=seed)
    found = solve_recipes(km_lab, default_inventory())
    rgb = np.unique(np.array([hex_to_rgb(r.predicted_srgb) for r in found], np.uint8), axis=0)
    return srgb_to_lab(rgb)


@pytest.fixture(scope="module", params=["coffee", "astronaut", "chelsea"])
def photo_palette(request):
    img = _photo(request.param)
    lab = srgb_to_lab(img)
    rgb, pal_lab, recipes, _ = choose_palette(lab, np.ones(img.shape[:2], bool), Settings(paints=8, seed=0))
    return request.param, lab, rgb, pal_lab, recipes


def test_mixable_palette_floor_is_never_worse_than_snapped_kmeans(photo_palette):
    name, lab, _, pal_lab, _ = photo_palette
    ours = _floor(lab, pal_lab)
    snapped = _floor(lab, _snapped_kmeans(lab, 8, seed=0))
    assert ours <= snapped, f"{name}: floor {ours:.3f} vs snapped k-means {snapped:.3f}"


def test_floor_by_the_product_matches_colour_science(photo_palette):
    # the floor the bench and plan.json report (layerplan.colour.error_planes) is the reference's
    _, lab, _, pal_lab, _ = photo_palette
    ours = float(error_planes(lab, pal_lab).min(axis=2).mean(dtype=np.float64))
    assert ours == pytest.approx(_floor(lab, pal_lab), abs=1e-3)


def test_no_two_paints_closer_than_the_separation(photo_palette):
    _, _, _, pal_lab, _ = photo_palette
    d = _de00(pal_lab[:, None, :], pal_lab[None, :, :])
    d[np.eye(len(pal_lab), dtype=bool)] = np.inf
    assert d.min() >= palette.MIN_SEPARATION_DE


def test_every_paint_is_a_mix_and_shown_as_its_recipe_predicts(photo_palette):
    _, _, rgb, pal_lab, recipes = photo_palette
    assert len(rgb) == 8 and np.all(np.diff(pal_lab[:, 0]) <= 0)  # lightest first
    table = build_mix_table(default_inventory())
    shown = {tuple(c) for c in table.rgb}
    for c, r in zip(rgb, recipes):
        assert tuple(c) in shown  # a colour of the mix table, not a free one
        assert r["predicted_srgb"] == r["target"] == "#%02x%02x%02x" % tuple(c)
        assert 1 <= len(r["parts"]) <= 3 and sum(p["parts"] for p in r["parts"]) <= 10


def test_flat_colours_get_their_nearest_mixes():
    # a known answer: four flat quadrants and four paints: each quadrant's best paint is the mix
    # nearest to it (the recipe solver's exhaustive answer); the search must find it or as near
    img = quadrants()
    lab = srgb_to_lab(img)
    _, pal_lab, _, _ = choose_palette(lab, np.ones(img.shape[:2], bool), Settings(paints=4, seed=0))
    assert len(pal_lab) == 4
    best = [r.delta_e for r in solve_recipes(srgb_to_lab(QUADRANT_COLOURS), default_inventory())]
    got = _de00(srgb_to_lab(QUADRANT_COLOURS)[:, None, :], pal_lab[None, :, :]).min(axis=1)
    # within half a ΔE00 of the exhaustive nearest mix (the shown colour is rounded to 8-bit sRGB)
    assert np.all(got <= np.array(best) + 0.5), (got, best)


def test_a_flat_photo_gets_one_paint():
    img = np.full((30, 40, 3), (120, 130, 140), np.uint8)
    rgb, _, _, _ = choose_palette(srgb_to_lab(img), np.ones((30, 40), bool), Settings(paints=6, seed=0))
    assert len(rgb) == 1


def _wall_with_a_door():
    """A sunlit wall (ochre to cream), a sky band, and a small dark door (0.7 % of the picture)."""
    h, w = 120, 160
    xx = np.mgrid[0:h, 0:w][1]
    img = np.zeros((h, w, 3), np.uint8)
    img[..., 0] = 200 + xx * 50 // w
    img[..., 1] = 150 + xx * 80 // w
    img[..., 2] = 90 + xx * 100 // w
    img[:30] = (150, 190, 230)
    img[90:104, 70:80] = (60, 30, 25)
    return img, srgb_to_lab(np.array([60, 30, 25], np.uint8))


def test_a_small_distinct_door_keeps_a_paint_of_its_own():
    img, door = _wall_with_a_door()
    lab, inside = srgb_to_lab(img), np.ones(img.shape[:2], bool)
    table = build_mix_table(default_inventory())
    mixes = srgb_to_lab(np.unique(table.rgb, axis=0))
    nearest_mix = _de00(door[None, :], mixes).min()
    rows = palette.palette_from_mixes(lab, inside, 4, mixes, seed=0)
    assert _de00(door[None, :], mixes[rows]).min() <= nearest_mix + 0.5
    # by area alone the door's few pixels lose their paint to the wall's shades: the contrast
    # share of the weighting is what keeps it
    by_area = palette.palette_from_mixes(lab, inside, 4, mixes, seed=0, edge_share=0.0)
    assert _de00(door[None, :], mixes[by_area]).min() > 20


def test_same_seed_same_palette():
    img = _photo("chelsea", scale=6)
    lab, inside = srgb_to_lab(img), np.ones(img.shape[:2], bool)
    a = choose_palette(lab, inside, Settings(paints=6, seed=2))[0]
    b = choose_palette(lab, inside, Settings(paints=6, seed=2))[0]
    assert np.array_equal(a, b)


def test_weighted_sample_weights_sum_to_one_and_favour_edges():
    img, _ = _wall_with_a_door()
    lab = srgb_to_lab(img)
    bins, weight = palette.weighted_sample(lab, np.ones(img.shape[:2], bool), seed=0)
    assert weight.sum() == pytest.approx(1.0)
    assert np.all(weight > 0) and len(bins) == len(weight)
    # the door holds 0.7 % of the pixels; with its outline counted by contrast it weighs more
    door_bin = np.argmin(_de00(bins, srgb_to_lab(np.array([60, 30, 25], np.uint8))[None, :]))
    assert weight[door_bin] > 140 / (120 * 160)
