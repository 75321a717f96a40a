"""make_plan: photo + settings -> Plan. The one entry point for CLI, web and tests."""

from __future__ import annotations

import dataclasses

import numpy as np

from . import __version__
from .caveats import raster_warnings
from .coats import with_coats
from .colour import delta_e00, error_planes, srgb_to_lab
from .fit import fit_to_wall
from .ground import choose_ground
from .openings import as_openings, colour_lab, opening_mask, wall_ground
from .layers import DEFAULT_PAINT_RUNS, PAINT_RUNS, layer_specs, paint_runs
from .order import painting_order, short_travel
from .palette import lightest_first, palette_from_image, palette_from_mixes
from .placer import orientation_field, painting_keys, place_layer, prune_strokes, relax_strokes
from .plan import Layer, Paint, Plan, Stroke, rgb_to_hex
from .raster import render_steps
from .options import check_raster
from .settings import Settings

#: share of the progress bar given to each phase (planning strokes dominates)
_P_PREP, _P_LAYERS, _P_RELAX = 0.12, 0.5, 0.3


def _noop(fraction: float, message: str) -> None:
    pass


def choose_palette(target_lab: np.ndarray, inside: np.ndarray, settings: Settings):
    """The plan's paints and their mix recipes from the painter's paints.

    Parameters
    ----------
    target_lab : (H, W, 3) float array
        The photo on the raster, CIELAB.
    inside : (H, W) bool array
        Pixels that belong to the photo.
    settings : Settings
        ``paints``, ``seed``, ``inventory`` (file path or None for the default set),
        ``free_palette``, ``mix_paints``, ``max_parts``, ``tolerance_de``.

    Returns
    -------
    rgb : (K', 3) uint8 array
    lab : (K', 3) float array
        The palette to plan with, lightest first. By default the paints are chosen among the
        colours the inventory mixes (:func:`layerplan.palette.palette_from_mixes`), so the
        preview shows what the painter will get. With ``free_palette``, the k-means colours
        as they fall (:func:`layerplan.palette.palette_from_image`), each with the nearest mix
        reported beside it.
    recipes : list of dict
        One recipe (:meth:`layerplan.recipes.Recipe.to_dict` form) per returned paint.
    inventory : list of dict
        The stock paints, ``{"name", "srgb", "tinting_strength", "containers_l"}``, for plan.json; a paint
        with priced containers also has ``"container_prices"`` (per size, None where unpriced) and ``"currency"``.

    Raises
    ------
    layerplan.inventory.InventoryError
        If the inventory file is missing or wrong (a ValueError naming file, line and field).

    References
    ----------
    Kubelka & Munk (1931); Berns & Mohammadi (2007); Mallett & Yuksel (2019) — see
    :mod:`layerplan.mixing`; Kaufman & Rousseeuw (1990) for the choice among mixes.
    """
    from .inventory import default_inventory, load_inventory
    from .recipes import MAX_PARTS_LIMIT, build_mix_table, recipes_of_rows, solve_recipes

    inv = default_inventory() if settings.inventory is None else load_inventory(settings.inventory)
    # prices travel with their sizes (and their currency), only where the inventory gives them
    stock = [{"name": p.name, "srgb": p.srgb, "tinting_strength": p.tinting_strength,
              "containers_l": list(p.containers_l),
              **({"container_prices": list(p.prices), "currency": inv.currency} if p.prices else {})}
             for p in inv.paints]
    if settings.free_palette:
        rgb, lab = palette_from_image(target_lab, inside, settings.paints, seed=settings.seed)
        found = solve_recipes(lab, inv, max_paints=settings.mix_paints, max_parts=settings.max_parts,
                              tolerance=settings.tolerance_de, targets_srgb=[rgb_to_hex(c) for c in rgb])
        return rgb, lab, [r.to_dict() for r in found], stock
    table = build_mix_table(inv, max_paints=settings.mix_paints, max_parts=settings.max_parts)
    # one row per colour shown (8-bit sRGB), the simplest mix of it: fewest paints, then fewest parts
    rank = table.n_paints.astype(np.int64) * (MAX_PARTS_LIMIT + 1) + table.total_parts
    by_rank = np.argsort(rank, kind="stable")
    _, first = np.unique(table.rgb[by_rank], axis=0, return_index=True)
    rows = by_rank[np.sort(first)]
    mixes_lab = srgb_to_lab(np.asarray(table.rgb[rows]))
    chosen = rows[palette_from_mixes(target_lab, inside, settings.paints, mixes_lab, seed=settings.seed,
                                     rank=rank[rows])]
    rgb = np.asarray(table.rgb[chosen], dtype=np.uint8).reshape(-1, 3)
    rgb, lab, order = lightest_first(rgb, srgb_to_lab(rgb))
    found = recipes_of_rows(table, chosen[order], tolerance=settings.tolerance_de)
    return rgb, lab, [r.to_dict() for r in found], stock


def make_plan(image: np.ndarray, settings: Settings, *, progress=None, runs: str | None = DEFAULT_PAINT_RUNS) -> Plan:
    """Plan a layered painting of a photo at wall scale.

    Parameters
    ----------
    image : (h, w, 3) uint8 array, sRGB
    settings : Settings
    progress : callable(fraction, message), optional
        Called with non-decreasing fractions in [0, 1].
    runs : str or None
        How each layer's paint runs are ordered (a key of :data:`layerplan.layers.PAINT_RUNS`):
        every paint of a layer is painted in one run, and the strokes are placed for that
        order; each layer's ``runs`` (plan.json) lists them. None places strokes freely, one on
        top of the other, and groups them by paint afterwards only where the picture allows
        (several runs of a paint per layer); the bench compares the two.

    Returns
    -------
    Plan

    Raises
    ------
    ValueError
        If a setting is out of range (the message names it).

    References
    ----------
    Hertzmann, "Paint by Relaxation", 2001 (energy); Sharma et al. 2005 (CIEDE2000).
    """
    report = progress or _noop
    if runs is not None and runs not in PAINT_RUNS:
        raise ValueError(f"runs must be one of {', '.join(PAINT_RUNS)} or None; got {runs!r}")
    settings = settings.validated()
    image = np.asarray(image)
    if image.ndim != 3 or image.shape[2] != 3 or image.dtype != np.uint8:
        raise ValueError(f"image must be an (H, W, 3) uint8 array, got {image.dtype} {image.shape}")
    # the front ends ran this check already (with the others, before queueing); library callers get it here
    size = check_raster(settings, image.shape)
    wall_w, wall_h, s = size.wall_width_mm, size.wall_height_mm, size.mm_per_px
    width_px, height_px = size.width_px, size.height_px
    report(0.0, "fitting the photo to the wall")
    target, inside = fit_to_wall(image, width_px, height_px, fit=settings.fit)

    # windows, doors and vents: not painted, so they choose no paint and no stroke covers them
    openings = as_openings(settings.openings)
    shut = opening_mask(openings, (height_px, width_px), s) if openings else None
    voting = inside if shut is None else inside & ~shut
    if not voting.any():
        raise ValueError("the openings leave no pixel of the photo on the wall to plan from")

    report(0.03, "choosing paints")
    target_lab = srgb_to_lab(target)
    value_study = None
    if settings.value_study:  # greys of the set's black and white, matched on lightness alone
        from .value_study import mix_value_palette

        pal_rgb, pal_lab, recipes, inventory, value_study = mix_value_palette(settings)
        target_lab[..., 1:] = 0.0
    else:
        pal_rgb, pal_lab, recipes, inventory = choose_palette(target_lab, voting, settings)

    report(0.06, "measuring colour error")
    planes = error_planes(target_lab, pal_lab)
    ground = choose_ground(planes, voting)
    wall = None
    if settings.wall_colour is not None:
        # a wall already painted close to a paint of the palette is that paint's ground
        ground, wall = wall_ground(pal_lab, ground, colour_lab(settings.wall_colour),
                                   tolerance_de=settings.tolerance_de)
    if not inside.all():
        # contain bands are meant to stay ground: measure them against the ground paint
        planes[~inside] = delta_e00(pal_lab, pal_lab[ground][None, :]).astype(np.float32)
        target_lab[~inside] = pal_lab[ground]
    if shut is not None:
        planes[shut] = 0.0  # nothing to match in an opening: its error never counts
    canvas = np.full((height_px, width_px), ground, dtype=np.int16)
    err = np.ascontiguousarray(planes[:, :, ground])

    def wall_mean(a, **kw):  # the mean over the painted wall (openings are not painted)
        return a.mean(**kw) if shut is None else a[~shut].mean(**kw)

    stats = {"mean_delta_e_ground": round(float(wall_mean(err)), 4),
             "mean_delta_e_floor": round(float(wall_mean(planes.min(axis=2))), 4)}

    ids = [f"P{i + 1}" for i in range(len(pal_rgb))]
    palette = [
        Paint(id=ids[i], srgb=rgb_to_hex(pal_rgb[i]), lab=tuple(round(float(v), 3) for v in pal_lab[i]),
              extra={"recipe": recipes[i]})
        for i in range(len(pal_rgb))
    ]
    specs = layer_specs(settings.brushes_mm, s, settings.stroke_cost)
    placed = []
    thetas = []
    span = _P_LAYERS / len(specs)
    for n, spec in enumerate(specs):
        base = _P_PREP + n * span
        label = f"layer {spec.number} of {len(specs)} ({spec.limits.width_mm:g} mm brush)"
        report(base, label)
        theta = orientation_field(target_lab, spec.direction_sigma_px)
        thetas.append(theta)

        def sub(fraction, message, base=base, label=label):
            report(base + span * min(1.0, fraction), f"{label}: {message}")

        # the order of the layer's paint runs is fixed from the picture before it, then placed for
        ranks = None if runs is None else paint_runs(runs, planes, err)
        placed.append(place_layer(
            planes, canvas, err, theta, spec.limits, mm_per_px=s, wall_mm=(wall_w, wall_h),
            cost=spec.cost, seed=settings.seed * 7919 + spec.number, progress=sub,
            tries=spec.tries, patience=spec.patience, ranks=ranks, shut=shut,
        ))
    relax_label = "relaxing strokes against the finished picture"
    report(_P_PREP + _P_LAYERS, relax_label)

    def relaxed(fraction, message):
        report(_P_PREP + _P_LAYERS + _P_RELAX * fraction, f"{relax_label}: {message}")

    layer_of = np.concatenate([np.full(len(r.points), n) for n, r in enumerate(placed)]).astype(int)
    ranks_all = np.stack([r.ranks for r in placed])
    all_points, all_paints, alive, _ = relax_strokes(
        planes, ground, [p for r in placed for p in r.points], layer_of, np.concatenate([r.paints for r in placed]),
        [spec.limits for spec in specs], [spec.cost for spec in specs], thetas, mm_per_px=s,
        wall_mm=(wall_w, wall_h), seed=settings.seed * 7919, ranks=ranks_all, shut=shut, progress=relaxed,
    )
    report(_P_PREP + _P_LAYERS + _P_RELAX, "taking away strokes later ones hid")
    # painting order: layer by layer, run by run (relaxation may have moved a stroke to another paint's run)
    live = np.flatnonzero(alive)
    live = live[np.argsort(painting_keys(layer_of, all_paints, ranks_all)[live], kind="stable")]
    keep = np.zeros(len(alive), dtype=bool)
    keep[live] = prune_strokes(
        planes, ground, [all_points[i] for i in live], np.array([specs[n].limits.width_mm for n in layer_of[live]]),
        all_paints[live], mm_per_px=s,
    )
    painted = live[keep[live]]
    report(0.97, "ordering strokes for painting")
    layers = []
    for n, spec in enumerate(specs):
        mine = painted[layer_of[painted] == n]
        points = [all_points[i] for i in mine]
        paints = all_paints[mine]
        extra = {}
        if runs is None:
            order = painting_order(points, paints, spec.limits.width_mm, s, (height_px, width_px))
        else:
            # the layer's paints in run order; painting_order keeps each run together, ordering only inside it
            run_paints = [int(q) for q in np.argsort(ranks_all[n]) if np.any(paints == q)]
            order = painting_order(points, paints, spec.limits.width_mm, s, (height_px, width_px), runs=run_paints)
            extra["runs"] = [{"paint": ids[q], "strokes": int(np.count_nonzero(paints == q))} for q in run_paints]
        points, paints = [points[i] for i in order], paints[order]
        # inside each run (one paint, so the picture does not depend on it) a short path for the brush
        travel = short_travel(points, paints, reach_mm=settings.reach_mm, wall_width_mm=wall_w,
                              width_mm=spec.limits.width_mm, mm_per_px=s, shape=(height_px, width_px))
        strokes = [Stroke(paint=ids[int(paints[i])], width_mm=spec.limits.width_mm, path_mm=path)
                   for i, path in zip(travel.order, travel.paths(points))]
        extra["travel"] = travel.to_dict()
        layers.append(Layer(brush_width_mm=spec.limits.width_mm, strokes=strokes, extra=extra))
    plan = Plan(
        wall_width_mm=wall_w, wall_height_mm=wall_h, width_px=width_px, height_px=height_px, mm_per_px=s,
        palette=palette, ground=ids[ground], layers=layers, wall_unit=settings.wall_unit,
    )
    # coats from what each stroke covers, once the painting order is fixed
    plan = with_coats(plan)
    # error after each layer, from the plan itself
    steps = [wall_mean(np.take_along_axis(planes, c[..., None].astype(np.intp), axis=2)[..., 0], dtype=np.float64)
             for c in render_steps(plan)]
    stats["mean_delta_e_final"] = round(float(steps[-1]), 4)
    stats["layers"] = [
        {"strokes": len(layer.strokes), "placed": len(r.points),
         "mean_delta_e_before": round(float(steps[n]), 4), "mean_delta_e_after": round(float(steps[n + 1]), 4)}
        for n, (layer, r) in enumerate(zip(layers, placed))
    ]
    # brushes the raster leaves under the pixel rule: said in the plan, with the fix (absent when none)
    warned = raster_warnings(size, settings.brushes_mm, pixel_given=settings.mm_per_px is not None)
    plan = dataclasses.replace(plan, extra={"generator": f"layerplan {__version__}", "settings": settings.to_dict(),
                                            "stats": stats, "inventory": inventory,
                                            **({"warnings": warned} if warned else {}),
                                            **({"openings": [o.to_dict() for o in openings]} if openings else {}),
                                            **({"wall_colour": {**wall, "nearest_paint": ids[wall["nearest_paint"]]}}
                                               if wall is not None else {}),
                                            **({"value_study": value_study} if value_study else {})})
    report(1.0, "plan ready")
    return plan
