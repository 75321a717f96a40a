"""The bench's Hertzmann (1998) baseline is the published method, not a strawman.

Each check names the rule of A. Hertzmann, "Painterly Rendering with Curved Brush
Strokes of Multiple Sizes", Proc. SIGGRAPH 98 (pseudocode ``paintLayer`` and
``makeSplineStroke``) that it rests on. Tiny synthetic images; no timings.
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np
import pytest
from skimage.color import deltaE_ciede2000, rgb2lab

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from bench import hertzmann as hz  # noqa: E402
from layerplan import raster  # noqa: E402
from layerplan.plan import Paint, Plan, rgb_to_hex  # noqa: E402

S = 5.0  # mm per pixel
BRUSHES = (40.0, 20.0)  # radii 4 and 2 px
PALETTE = np.array([[235, 230, 220], [200, 60, 40], [40, 60, 160], [30, 30, 30], [120, 170, 90]], np.uint8)


def _lab(rgb):
    return rgb2lab(np.asarray(rgb, np.uint8).reshape(-1, 1, 3)).reshape(-1, 3)


def picture(h=48, w=64):
    """A red disk on a blue-to-cream vertical ramp, with a dark bar: edges in every direction."""
    yy, xx = np.mgrid[0:h, 0:w].astype(float)
    t = (yy / (h - 1))[..., None]
    img = (1 - t) * PALETTE[2] + t * PALETTE[0]
    img[(yy - 0.42 * h) ** 2 + (xx - 0.62 * w) ** 2 < (0.25 * h) ** 2] = PALETTE[1]
    img[int(0.7 * h) : int(0.83 * h), int(0.1 * w) : int(0.47 * w)] = PALETTE[3]
    return np.clip(img + 0.5, 0, 255).astype(np.uint8)


def tiny_plan(img):
    h, w = img.shape[:2]
    paints = [Paint(id=f"P{i + 1}", srgb=rgb_to_hex(c), lab=tuple(_lab(c)[0])) for i, c in enumerate(PALETTE)]
    return Plan(wall_width_mm=w * S, wall_height_mm=h * S, width_px=w, height_px=h, mm_per_px=S,
                palette=paints, ground="P1")


def run(img, **kw):
    return hz.paint_layers(img, PALETTE, _lab(PALETTE), BRUSHES, S, ground=0, **kw)


def test_stroke_lengths_within_the_papers_limits():
    layers, _ = run(picture(96, 128))
    assert sum(len(layer.points_px) for layer in layers) > 20
    for layer in layers:
        for pts, stop in zip(layer.points_px, layer.stops):
            steps = len(pts) - 1
            # makeSplineStroke: at most maxStrokeLength steps ...
            assert steps <= hz.PAPER_MAX_LEN
            # ... each of length R (Hertzmann 1998: (x, y) := (x + R dx, y + R dy))
            if steps:
                assert np.allclose(np.hypot(*np.diff(pts, axis=0).T), layer.radius_px)
            # the colour test only ends a stroke once it is longer than minStrokeLength;
            # only a vanishing gradient or the picture's edge may end it sooner
            if stop in (hz.STOP_COLOUR, hz.STOP_MAX_LEN):
                assert steps >= hz.PAPER_MIN_LEN
            if stop == hz.STOP_MAX_LEN:
                assert steps == hz.PAPER_MAX_LEN
    # both of the paper's own endings are exercised, not only the picture's edge
    stops = np.concatenate([layer.stops for layer in layers])
    assert np.count_nonzero(stops == hz.STOP_COLOUR) >= 5
    assert np.count_nonzero(stops == hz.STOP_MAX_LEN) >= 5


def test_plan_strokes_are_within_length_in_mm_and_use_palette_paints_only():
    img = picture()
    plan = tiny_plan(img)
    bplan = hz.baseline_plan(img, plan, BRUSHES)
    ids = {p.id for p in plan.palette}
    for layer in bplan.layers:
        for st in layer.strokes:
            assert st.paint in ids
            assert st.width_mm == layer.brush_width_mm
            radius_mm = 0.5 * st.width_mm
            assert st.length_mm() <= hz.PAPER_MAX_LEN * radius_mm + 1e-6
    assert set(np.unique(raster.render_indices(bplan))) <= set(range(len(PALETTE)))


def test_stroke_paint_is_the_nearest_by_ciede2000():
    # reference: scikit-image's CIEDE2000 (general-purpose library), brute force
    rng = np.random.default_rng(3)
    colours = rng.uniform(0, 255, (50, 3))
    lab = rgb2lab((colours / 255.0).reshape(-1, 1, 3)).reshape(-1, 3)
    de = deltaE_ciede2000(lab[:, None, :], _lab(PALETTE)[None, :, :], channel_axis=-1)
    assert np.array_equal(hz.nearest_paints(colours, _lab(PALETTE)), np.argmin(de, axis=1))
    # a palette colour is its own nearest paint (ΔE00 = 0 by definition, Sharma et al. 2005)
    assert np.array_equal(hz.nearest_paints(PALETTE.astype(float), _lab(PALETTE)), np.arange(len(PALETTE)))


def test_first_layer_starts_a_stroke_in_every_grid_cell():
    # paint(): the canvas starts as a colour infinitely far from any other, so every cell's
    # area error exceeds T on the first layer; grid spacing f_g R with f_g = 1
    img = picture()
    layers, _ = run(img)
    h, w = img.shape[:2]
    g = layers[0].radius_px
    cells = (int(np.floor((w - 1) / g)) + 1) * (int(np.floor((h - 1) / g)) + 1)
    assert len(layers[0].points_px) == cells


def test_strokes_follow_the_normal_of_the_luminance_gradient():
    # a purely vertical luminance ramp: the gradient points along y, so with f_c = 1 every
    # step runs along x (makeSplineStroke: (dx, dy) := (-gy, gx))
    h, w = 40, 60
    ramp = np.linspace(20, 240, h)[:, None, None] * np.ones((1, w, 3))
    layers, _ = run(ramp.astype(np.uint8))
    steps = np.concatenate([np.diff(p, axis=0) for layer in layers for p in layer.points_px if len(p) > 1])
    assert len(steps) > 50
    assert np.allclose(steps[:, 1], 0.0, atol=1e-9)


def test_lowers_the_error_well_below_a_flat_canvas():
    img = picture()
    plan = tiny_plan(img)
    lab = _lab(img.reshape(-1, 3))
    flat = min(deltaE_ciede2000(lab, np.broadcast_to(_lab(c), lab.shape)).mean() for c in PALETTE)
    bplan = hz.baseline_plan(img, plan, BRUSHES)
    painted = _lab(raster.render(bplan).reshape(-1, 3))
    de = deltaE_ciede2000(lab, painted).mean()
    floor = np.min(deltaE_ciede2000(lab[:, None, :], _lab(PALETTE)[None, :, :], channel_axis=-1), axis=1).mean()
    assert de < 0.5 * flat
    assert de < floor + 0.5 * (flat - floor)


def test_painting_order_is_seeded():
    img = picture()
    a, ca = run(img, seed=1)
    b, cb = run(img, seed=1)
    c, _ = run(img, seed=2)
    assert np.array_equal(ca, cb)
    assert all(np.array_equal(x.paints, y.paints) for x, y in zip(a, b))
    # the same strokes, painted in another random order (paintLayer: "in random order")
    key = lambda layer: sorted(map(lambda p: p.tobytes(), layer.points_px))  # noqa: E731
    assert key(a[0]) == key(c[0])
    assert [p.tobytes() for p in a[0].points_px] != [p.tobytes() for p in c[0].points_px]


def test_bad_inputs_are_named():
    img = picture()
    with pytest.raises(ValueError, match=r"source must be an \(H, W, 3\) uint8 array"):
        run(img.astype(float))
    with pytest.raises(ValueError, match="mm_per_px must be > 0"):
        hz.paint_layers(img, PALETTE, _lab(PALETTE), BRUSHES, 0.0, ground=0)
    with pytest.raises(ValueError, match="min_len <= max_len"):
        run(img, min_len=5, max_len=4)
    with pytest.raises(ValueError, match="plan raster is 64x48 px"):
        hz.baseline_plan(img[:10], tiny_plan(img), BRUSHES)


def test_threshold_is_in_cielab_units_in_lab_space():
    # paintLayer: a grid cell gets a stroke when its mean difference to the canvas exceeds T. In
    # "lab" space the difference is the CIELAB distance (ΔE76, CIE 15:2004): a flat picture of a
    # colour 6 units from the ground paint is below T = 10 and above T = 5 everywhere
    ground = _lab(PALETTE[:1])[0]
    near = ground + np.array([-6.0, 0.0, 0.0])  # 6 ΔE76 darker than the ground paint
    from skimage.color import lab2rgb

    rgb = np.clip(np.round(lab2rgb(near.reshape(1, 1, 3)).reshape(3) * 255), 0, 255).astype(np.uint8)
    img = np.broadcast_to(rgb, (48, 64, 3)).copy()
    d = float(np.linalg.norm(_lab(rgb)[0] - ground))
    assert 5.0 < d < 10.0  # rounding to 8-bit sRGB keeps it between the two thresholds
    # the first layer covers everything (the canvas starts infinitely far); then only T decides.
    # Its strokes take the nearest paint, the ground colour itself, so the canvas stays d away
    above = run(img, threshold=10.0, space="lab")[0]
    below = run(img, threshold=5.0, space="lab")[0]
    cells = (48 // 2) * (64 // 2)  # the second layer's grid: spacing f_g·R = 2 px
    # T = 5: every cell of the second layer is above the threshold and gets its stroke; T = 10: only
    # the few cells at the picture's edge that the first layer's dots left unpainted
    assert len(below[1].points_px) >= 0.9 * cells
    assert len(above[1].points_px) <= 0.1 * cells


def test_unknown_space_is_refused():
    with pytest.raises(ValueError, match="space must be one of lab, rgb"):
        run(picture(), space="hsv")
