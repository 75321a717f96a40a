"""Stroke placer: energy, limits, known answers."""

import math

import numpy as np
import pytest

from layerplan.colour import error_planes, srgb_to_lab
from layerplan.placer import BrushLimits, orientation_field, place_layer
from layerplan.raster import stroke_mask


def _setup(img, pal_rgb):
    lab = srgb_to_lab(img)
    planes = error_planes(lab, srgb_to_lab(np.array(pal_rgb, np.uint8)))
    return lab, planes


def _noisy_blobs(seed=0, h=48, w=64):
    rng = np.random.default_rng(seed)
    img = np.full((h, w, 3), (230, 220, 200), np.uint8)
    yy, xx = np.mgrid[:h, :w]
    for colour in ([180, 40, 40], [40, 90, 170], [60, 140, 60]):
        cy, cx, r = rng.integers(0, h), rng.integers(0, w), rng.integers(6, 14)
        img[(yy - cy) ** 2 + (xx - cx) ** 2 < r * r] = colour
    return img


@pytest.mark.parametrize("s, width, cost", [(5.0, 20.0, 30.0), (2.0, 24.0, 400.0)])
def test_every_stroke_lowers_the_energy_and_gains_are_exact(s, width, cost):
    # Energy of Hertzmann (2001) "Paint by Relaxation": summed colour error + cost per stroke. The second case is
    # a 12 px brush, refined on 2x2 pixel blocks before its exact check (placer.EVAL_BRUSH_PX)
    img = _noisy_blobs()
    pal = [[230, 220, 200], [180, 40, 40], [40, 90, 170], [60, 140, 60]]
    lab, planes = _setup(img, pal)
    canvas = np.zeros(img.shape[:2], np.int16)
    err = np.ascontiguousarray(planes[:, :, 0])
    res = place_layer(planes, canvas, err, orientation_field(lab, 0.1 * width / s), BrushLimits.for_brush(width),
                      mm_per_px=s, wall_mm=(img.shape[1] * s, img.shape[0] * s), cost=cost, seed=1)
    assert len(res.points) > 3
    # replay the strokes in placement order and recompute the energy from scratch
    replay = np.zeros(img.shape[:2], np.int64)
    energy = planes[:, :, 0].sum(dtype=np.float64)
    for pts, paint, gain in zip(res.points, res.paints, res.gains):
        m = stroke_mask(pts, width, s, replay.shape)
        before = planes[np.arange(replay.shape[0])[:, None], np.arange(replay.shape[1]), replay][m].sum(dtype=float)
        after = planes[:, :, paint][m].sum(dtype=float)
        assert gain > cost
        assert before - after == pytest.approx(gain, rel=1e-4, abs=1e-3)
        replay[m] = paint
        new_energy = energy - gain + cost
        assert new_energy < energy
        energy = new_energy
    assert np.array_equal(replay, canvas)
    assert res.error_after < res.error_before


def _assert_within(p, lim, wall):
    """Every brush limit and the wall, checked on the polyline itself."""
    seg = np.diff(p, axis=0)
    lens = np.hypot(seg[:, 0], seg[:, 1])
    assert lim.min_length_mm - 1e-6 <= lens.sum() + lim.width_mm <= lim.max_length_mm + 1e-6
    assert ((lens >= lim.min_segment_mm - 1e-6) & (lens <= lim.max_segment_mm + 1e-6)).all()
    cos_turn = math.cos(math.radians(lim.max_turn_deg))
    for a, b in zip(seg[:-1], seg[1:]):
        assert np.dot(a, b) >= cos_turn * np.linalg.norm(a) * np.linalg.norm(b) - 1e-6
    assert (p >= 0).all() and (p[:, 0] <= wall[0]).all() and (p[:, 1] <= wall[1]).all()


def test_brush_limits_hold_for_every_stroke():
    img = _noisy_blobs(seed=4)
    pal = [[230, 220, 200], [180, 40, 40], [40, 90, 170], [60, 140, 60]]
    lab, planes = _setup(img, pal)
    s, width = 4.0, 12.0
    lim = BrushLimits.for_brush(width)
    canvas = np.zeros(img.shape[:2], np.int16)
    err = np.ascontiguousarray(planes[:, :, 0])
    wall = (img.shape[1] * s, img.shape[0] * s)
    res = place_layer(planes, canvas, err, orientation_field(lab, 1.5), lim, mm_per_px=s, wall_mm=wall,
                      cost=5.0, seed=2)
    assert len(res.points) > 5
    for p in res.points:
        _assert_within(p, lim, wall)
        # points sit on the 0.1 mm grid, so plan.json stores them exactly
        assert np.allclose(p * 10, np.round(p * 10), atol=1e-9)


def test_limits_other_than_the_defaults_reach_the_compiled_search():
    # every field of BrushLimits is packed into one record for the compiled code: tighter limits than
    # for_brush's (shorter strokes, closer vertices, gentler turns) must hold in placing and in relaxing
    from layerplan.placer import relax_strokes

    img = _noisy_blobs(seed=4)
    pal = [[230, 220, 200], [180, 40, 40], [40, 90, 170], [60, 140, 60]]
    lab, planes = _setup(img, pal)
    s, width = 4.0, 12.0
    lim = BrushLimits(width_mm=width, min_length_mm=width, max_length_mm=3.0 * width, min_segment_mm=0.6 * width,
                      max_segment_mm=1.1 * width, max_turn_deg=20.0)
    canvas = np.zeros(img.shape[:2], np.int16)
    err = np.ascontiguousarray(planes[:, :, 0])
    wall = (img.shape[1] * s, img.shape[0] * s)
    theta = orientation_field(lab, 1.5)
    res = place_layer(planes, canvas, err, theta, lim, mm_per_px=s, wall_mm=wall, cost=5.0, seed=2)
    assert len(res.points) > 5
    assert max(len(p) for p in res.points) >= 3  # strokes still grow beyond a dab
    for p in res.points:
        _assert_within(p, lim, wall)
    pts, _, _, change = relax_strokes(planes, 0, res.points, np.zeros(len(res.points), int), res.paints, [lim], [5.0],
                                      [theta], mm_per_px=s, wall_mm=wall, seed=1, passes=2, tries=60)
    assert change < 0.0
    assert any(len(a) != len(b) or not np.array_equal(a, b) for a, b in zip(pts, res.points))  # strokes moved
    for p in pts:
        _assert_within(p, lim, wall)


def test_placer_is_deterministic_under_a_seed():
    img = _noisy_blobs(seed=5)
    pal = [[230, 220, 200], [180, 40, 40], [40, 90, 170], [60, 140, 60]]
    lab, planes = _setup(img, pal)
    runs = []
    for seed in (3, 3, 4):
        canvas = np.zeros(img.shape[:2], np.int16)
        err = np.ascontiguousarray(planes[:, :, 0])
        res = place_layer(planes, canvas, err, orientation_field(lab, 2.0), BrushLimits.for_brush(15.0),
                          mm_per_px=5.0, wall_mm=(320.0, 240.0), cost=10.0, seed=seed)
        runs.append((np.concatenate(res.points).tobytes(), res.paints.tobytes()))
    assert runs[0] == runs[1]
    assert runs[0] != runs[2]


def test_prune_takes_away_a_stroke_painted_over_and_keeps_the_rest():
    from layerplan.placer import prune_strokes

    img = np.zeros((20, 40, 3), np.uint8)
    img[:, :20] = (200, 40, 40)
    img[:, 20:] = (40, 90, 170)
    lab, planes = _setup(img, [[200, 40, 40], [40, 90, 170]])
    s = 1.0
    hidden = np.array([[30.0, 10.0]])             # a blue dab ...
    cover = np.array([[26.0, 10.0], [34.0, 10.0]])  # ... painted over by a wider blue stroke
    useful = np.array([[25.0, 5.0], [35.0, 5.0]])
    points = [hidden, cover, useful]
    keep = prune_strokes(planes, 0, points, [4.0, 10.0, 6.0], [1, 1, 1], mm_per_px=s)
    assert keep.tolist() == [False, True, True]


def test_every_stroke_of_a_plan_improves_the_finished_picture():
    # Property of the plan, checked by brute force: painting it without any one stroke
    # leaves a picture with more total CIEDE2000 error (Sharma et al. 2005).
    from layerplan.pipeline import make_plan
    from layerplan.plan import Plan
    from layerplan.raster import render_indices
    from layerplan.settings import Settings

    img = _noisy_blobs(seed=9, h=36, w=48)
    plan = make_plan(img, Settings(wall_width_mm=480.0, wall_height_mm=360.0, mm_per_px=10.0, paints=4,
                                   brushes_mm=(60.0, 30.0), free_palette=True, stroke_cost=2.0))
    lab = srgb_to_lab(img)
    planes = error_planes(lab, plan.palette_lab())
    rows, cols = np.indices(planes.shape[:2])

    def total(p):
        return planes[rows, cols, render_indices(p)].sum(dtype=float)

    full = total(plan)
    assert 3 <= plan.stroke_count() <= 120
    doc = plan.to_dict()
    for n, layer in enumerate(doc["layers"]):
        for k in range(len(layer["strokes"])):
            d = json_copy(doc)
            del d["layers"][n]["strokes"][k]
            assert total(Plan.from_dict(d)) > full, (n, k)


def json_copy(doc):
    import json

    return json.loads(json.dumps(doc))


def _two_layers(seed):
    """Strokes of two layers placed on the noisy blobs, as the pipeline does before clean-up."""
    img = _noisy_blobs(seed=seed)
    pal = [[230, 220, 200], [180, 40, 40], [40, 90, 170], [60, 140, 60]]
    lab, planes = _setup(img, pal)
    s = 4.0
    wall = (img.shape[1] * s, img.shape[0] * s)
    canvas = np.zeros(img.shape[:2], np.int16)
    err = np.ascontiguousarray(planes[:, :, 0])
    limits, costs, thetas, points, paints, layer_of = [], [], [], [], [], []
    for n, width in enumerate((24.0, 12.0)):
        lim = BrushLimits.for_brush(width)
        theta = orientation_field(lab, 0.5 * width / s)
        cost = 5.0 * (width / s) ** 2
        res = place_layer(planes, canvas, err, theta, lim, mm_per_px=s, wall_mm=wall, cost=cost, seed=n)
        limits.append(lim)
        costs.append(cost)
        thetas.append(theta)
        points += res.points
        paints += list(res.paints)
        layer_of += [n] * len(res.points)
    return planes, s, wall, limits, costs, thetas, points, np.array(paints), np.array(layer_of)


def _energy(planes, s, limits, costs, points, paints, layer_of, alive):
    """Energy of Hertzmann (2001), "Paint by Relaxation", from scratch: render in file order, sum ΔE00, add costs."""
    idx = np.zeros(planes.shape[:2], np.int64)
    e = 0.0
    for pts, q, lay, a in zip(points, paints, layer_of, alive):
        if a:
            idx[stroke_mask(pts, limits[lay].width_mm, s, idx.shape)] = q
            e += costs[lay]
    rows, cols = np.indices(idx.shape)
    return planes[rows, cols, idx].sum(dtype=float) + e


@pytest.mark.parametrize("delete", [True, False])
def test_relaxation_lowers_the_finished_energy_by_what_it_reports(delete):
    from layerplan.placer import relax_strokes

    planes, s, wall, limits, costs, thetas, points, paints, layer_of = _two_layers(seed=6)
    assert len(points) > 10
    before = _energy(planes, s, limits, costs, points, paints, layer_of, np.ones(len(points), bool))
    new_pts, new_paints, alive, change = relax_strokes(
        planes, 0, points, layer_of, paints, limits, costs, thetas, mm_per_px=s, wall_mm=wall, seed=1,
        passes=2, tries=30, delete=delete)
    after = _energy(planes, s, limits, costs, new_pts, new_paints, layer_of, alive)
    assert change < 0.0
    assert after - before == pytest.approx(change, rel=1e-4, abs=1e-2)
    if not delete:
        assert alive.all()
    # the moved strokes still obey their brush
    for p, lay in zip(new_pts, layer_of):
        _assert_within(p, limits[lay], wall)
        assert np.allclose(p * 10, np.round(p * 10), atol=1e-9)


def test_relaxation_is_deterministic_under_a_seed():
    from layerplan.placer import relax_strokes

    planes, s, wall, limits, costs, thetas, points, paints, layer_of = _two_layers(seed=8)
    runs = []
    for seed in (2, 2, 3):
        p, q, alive, _ = relax_strokes(planes, 0, points, layer_of, paints, limits, costs, thetas, mm_per_px=s,
                                       wall_mm=wall, seed=seed, passes=2, tries=60)
        runs.append((np.concatenate(p).tobytes(), q.tobytes(), alive.tobytes()))
    assert runs[0] == runs[1]
    assert runs[0] != runs[2]


def test_block_sums_add_up_every_pixel_once():
    # the coarse grid wide brushes are refined on: plain sums over f x f blocks, partial blocks at the far edges
    from layerplan.placer import block_sums

    a = np.random.default_rng(3).random((11, 13, 3)).astype(np.float32)
    b = block_sums(a, 4)
    assert b.shape == (3, 4, 3) and b.dtype == np.float32
    for i in range(3):
        for j in range(4):
            assert np.allclose(b[i, j], a[4 * i : 4 * i + 4, 4 * j : 4 * j + 4].sum(axis=(0, 1)), rtol=1e-6)
    assert np.isclose(b.sum(dtype=np.float64), a.sum(dtype=np.float64), rtol=1e-6)


def _render_in_order(planes, s, widths, points, paints, order, canvas=None):
    """Paint strokes opaque in the given order by the rendering rule (layerplan.raster.stroke_mask)."""
    idx = np.zeros(planes.shape[:2], np.int64) if canvas is None else canvas.astype(np.int64).copy()
    for k in order:
        idx[stroke_mask(points[k], widths[k], s, idx.shape)] = paints[k]
    return idx


@pytest.mark.parametrize("s, width, cost", [(4.0, 12.0, 20.0), (2.0, 24.0, 400.0)])
def test_strokes_placed_into_runs_show_as_placed_when_painted_run_by_run(s, width, cost):
    # One run per paint: the layer is painted paint by paint in the order `ranks` gives, each run's strokes
    # together. The placer slots every stroke into its paint's run, so the picture it builds must be the one
    # the rendering rule paints run by run, and the gains it reports must add up to the error it removed
    # (energy of Hertzmann 2001). The second case runs the coarse search grid of wide brushes.
    img = _noisy_blobs(seed=2)
    pal = [[230, 220, 200], [180, 40, 40], [40, 90, 170], [60, 140, 60]]
    lab, planes = _setup(img, pal)
    ranks = np.array([3, 0, 2, 1])  # red first, then green, then blue, the light paint last
    canvas = np.zeros(img.shape[:2], np.int16)
    err = np.ascontiguousarray(planes[:, :, 0])
    res = place_layer(planes, canvas, err, orientation_field(lab, 0.5 * width / s), BrushLimits.for_brush(width),
                      mm_per_px=s, wall_mm=(img.shape[1] * s, img.shape[0] * s), cost=cost, seed=3, ranks=ranks)
    assert len(res.points) > 5
    assert list(res.ranks) == list(ranks)
    # the placer had to slot strokes under later runs: placing order is not run order
    assert np.any(np.diff(ranks[res.paints]) < 0)
    run_order = np.argsort(ranks[res.paints], kind="stable")
    widths = [width] * len(res.points)
    painted = _render_in_order(planes, s, widths, res.points, res.paints, run_order)
    assert np.array_equal(painted, canvas)
    # any order inside a run paints the same picture
    shuffled = np.lexsort((np.random.default_rng(0).random(len(res.points)), ranks[res.paints]))
    assert np.array_equal(_render_in_order(planes, s, widths, res.points, res.paints, shuffled), canvas)
    rows, cols = np.indices(canvas.shape)
    assert planes[rows, cols, painted].sum(dtype=float) == pytest.approx(
        res.error_before - res.gains.sum(), rel=1e-5)
    assert (res.gains > cost).all()


def test_paint_runs_must_be_a_permutation():
    img = _noisy_blobs(seed=2)
    pal = [[230, 220, 200], [180, 40, 40], [40, 90, 170], [60, 140, 60]]
    lab, planes = _setup(img, pal)
    canvas = np.zeros(img.shape[:2], np.int16)
    err = np.ascontiguousarray(planes[:, :, 0])
    with pytest.raises(ValueError, match="paint runs must give each of the 4 paints its own run"):
        place_layer(planes, canvas, err, orientation_field(lab, 1.0), BrushLimits.for_brush(12.0), mm_per_px=4.0,
                    wall_mm=(256.0, 192.0), cost=20.0, seed=0, ranks=[0, 0, 1, 2])


def test_relaxation_in_runs_lowers_the_energy_painted_run_by_run_by_what_it_reports():
    # With runs, the painting order is layer, then the paint's run in that layer, then stroke number
    # (placer.painting_keys); a recoloured stroke moves to its new paint's run. The energy of the finished
    # picture painted in that order, recomputed from scratch (Hertzmann 2001), must fall by what relaxation says.
    from layerplan.placer import painting_keys, relax_strokes

    img = _noisy_blobs(seed=6)
    pal = [[230, 220, 200], [180, 40, 40], [40, 90, 170], [60, 140, 60]]
    lab, planes = _setup(img, pal)
    s = 4.0
    wall = (img.shape[1] * s, img.shape[0] * s)
    canvas = np.zeros(img.shape[:2], np.int16)
    err = np.ascontiguousarray(planes[:, :, 0])
    ranks = np.array([[3, 0, 2, 1], [0, 3, 1, 2]])
    limits, costs, thetas, points, paints, layer_of = [], [], [], [], [], []
    for n, width in enumerate((24.0, 12.0)):
        lim = BrushLimits.for_brush(width)
        theta = orientation_field(lab, 0.5 * width / s)
        cost = 5.0 * (width / s) ** 2
        res = place_layer(planes, canvas, err, theta, lim, mm_per_px=s, wall_mm=wall, cost=cost, seed=n,
                          ranks=ranks[n])
        limits.append(lim)
        costs.append(cost)
        thetas.append(theta)
        points += res.points
        paints += list(res.paints)
        layer_of += [n] * len(res.points)
    paints, layer_of = np.array(paints), np.array(layer_of)
    widths = [limits[n].width_mm for n in layer_of]

    def energy(pts, q, alive):
        order = [k for k in np.argsort(painting_keys(layer_of, q, ranks), kind="stable") if alive[k]]
        idx = _render_in_order(planes, s, widths, pts, q, order)
        rows, cols = np.indices(idx.shape)
        return planes[rows, cols, idx].sum(dtype=float) + sum(costs[layer_of[k]] for k in order)

    # the placer's picture is the one painted run by run
    order = np.argsort(painting_keys(layer_of, paints, ranks), kind="stable")
    assert np.array_equal(_render_in_order(planes, s, widths, points, paints, order), canvas)
    # give every other stroke a wrong paint, so relaxation has strokes to recolour, i.e. to move between runs
    paints = np.where(np.arange(len(paints)) % 2 == 1, (paints + 1) % 4, paints)
    before = energy(points, paints, np.ones(len(points), bool))
    new_pts, new_paints, alive, change = relax_strokes(
        planes, 0, points, layer_of, paints, limits, costs, thetas, mm_per_px=s, wall_mm=wall, seed=1,
        passes=3, tries=40, ranks=ranks)
    assert change < 0.0
    assert energy(new_pts, new_paints, alive) - before == pytest.approx(change, rel=1e-4, abs=1e-2)
    assert np.count_nonzero(new_paints != paints) >= 3  # strokes changed paint, and so run
    for p, lay in zip(new_pts, layer_of):
        _assert_within(p, limits[lay], wall)
