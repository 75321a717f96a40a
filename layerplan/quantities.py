"""Paint quantities: how much of each paint the plan uses, and what to buy.

A paint's area is what its strokes cover on the wall, overlaps counted (paint that a
later stroke hides was still used), plus the ground's area for the ground paint: the
whole surface less its openings (windows, doors, vents; the trade deducts every opening,
common practice; :func:`layerplan.openings.ground_area_m2`)::

    litres = (ground area × ground_coats + Σ stroke area × max(stroke_coats, stroke.coats))
             / coverage_m2_per_litre × (1 + waste)

The ground's coats are ``ground_coats``, except on a wall already painted (plan.json
``wall_colour``, :func:`layerplan.openings.wall_ground`): none where the wall's colour serves as
the ground, and at least the coats it takes to hide the wall's colour otherwise.

Each stroke carries its own coats (:attr:`layerplan.plan.Stroke.coats`, from what it
covers: :mod:`layerplan.coats`); ``stroke_coats`` is the least any stroke gets.

A stroke's area is the exact area of its footprint: the polyline buffered by half
the brush width (round ends and joins, as in the rendering rule), clipped to the
wall. It is integrated over horizontal scan lines: on each line the footprint is a
union of intervals (one per segment capsule, each convex), and the covered length
is integrated with Gauss–Legendre quadrature between the heights where the
footprint's outline changes form. A straight stroke comes out as
length × width + π·(width/2)² to rounding error; a polyline that crosses itself
is within about 0.2 % (the heights where two segments' outlines cross are not
located, only bracketed), and a plan's total within about 0.01 %.

Where palette entries carry a mix recipe (``extra["recipe"]``, parts by volume),
the litres of each stock paint are added up and rounded up to containers one can
buy.

References
----------
.. [1] NIST Handbook 44 (2024), Appendix C, "General Tables of Units of
   Measurement": 1 US gallon = 231 in³ = 3.785 411 784 L exactly; 1 gallon = 4 quarts.
.. [2] G. H. Golub, J. H. Welsch, "Calculation of Gauss quadrature rules",
   Math. Comp. 23:221-230, 1969 (the quadrature used for stroke areas).
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from typing import Any

import numpy as np
from numba import njit

from .openings import ground_area_m2, wall_section
from .plan import Plan
from .raster import capsule_chord

#: spreading rate of one coat of wall paint, m² per litre (≈ 350–400 sq ft per US gallon; common practice)
COVERAGE_M2_PER_L = 10.0
#: extra paint bought for spills, brush loading and touch-ups (10–15 % is common practice)
WASTE = 0.15
#: coats of the ground (common practice: two coats for an even, opaque ground)
GROUND_COATS = 2
#: least coats of any stroke (a stroke's own ``coats`` may ask for more)
STROKE_COATS = 1
#: litres in one US liquid gallon, exact by definition (NIST Handbook 44, Appendix C)
LITRES_PER_US_GALLON = 3.785411784
#: US quarts per US gallon (NIST Handbook 44, Appendix C)
US_QUARTS_PER_GALLON = 4
#: US fluid ounces per US gallon (NIST Handbook 44, Appendix C: 1 fl oz = 1/128 gal = 29.573 529 562 5 mL)
US_FL_OZ_PER_GALLON = 128
#: less than this of a paint is a trace amount, litres (10 mL, about two teaspoons: our choice). No
#: container is worth buying for it alone: a squeeze from a tube or what is left in a pot will do, so
#: entries below it carry ``"trace": True`` (their litres and containers stay as computed)
TRACE_LITRES = 0.01
#: container sizes paint is commonly sold in, litres (common practice in metric markets)
COMMON_CONTAINERS_L: tuple[float, ...] = (0.25, 0.5, 1.0, 2.5, 5.0, 10.0)
#: container sizes commonly sold in the US: quart, gallon, 5 gallons (common practice)
US_CONTAINERS_L: tuple[float, ...] = (
    LITRES_PER_US_GALLON / US_QUARTS_PER_GALLON,
    LITRES_PER_US_GALLON,
    5 * LITRES_PER_US_GALLON,
)
#: wall units that are US customary: walls given in these also get gallons and quarts
US_UNITS = ("ft", "in")
#: container sums are compared in steps of this many litres (10 mL)
_CONTAINER_STEP_L = 0.01
#: Gauss–Legendre nodes per quadrature piece of the stroke-area integral
_GL_NODES = 8
#: each piece between outline changes is split into this many sub-pieces (absorbs the
#: few kinks where two segments' outlines cross, which are not located exactly)
_SUBPIECES = 2


# ----------------------------------------------------------------- stroke area
@njit(cache=True, nogil=True)
def _covered_length(pts, n, r, y, wall_w, los, his):
    """Length of the line at height y inside the stroke, clipped to [0, wall_w]."""
    m = 0
    nseg = max(n - 1, 1)
    for k in range(nseg):
        k1 = min(k + 1, n - 1)
        if y < min(pts[k, 1], pts[k1, 1]) - r or y > max(pts[k, 1], pts[k1, 1]) + r:
            continue
        lo, hi = capsule_chord(pts[k, 0], pts[k, 1], pts[k1, 0], pts[k1, 1], r, y)
        lo = max(lo, 0.0)
        hi = min(hi, wall_w)
        if hi > lo:
            # insertion keeps (los, his) sorted by lo
            p = m
            while p > 0 and los[p - 1] > lo:
                los[p] = los[p - 1]
                his[p] = his[p - 1]
                p -= 1
            los[p] = lo
            his[p] = hi
            m += 1
    total = 0.0
    if m == 0:
        return 0.0
    cur_lo = los[0]
    cur_hi = his[0]
    for p in range(1, m):
        if los[p] > cur_hi:
            total += cur_hi - cur_lo
            cur_lo = los[p]
            cur_hi = his[p]
        elif his[p] > cur_hi:
            cur_hi = his[p]
    total += cur_hi - cur_lo
    return total


@njit(cache=True, nogil=True)
def _edge_crossings(pts, n, r, x_edge, out, c):
    """Append heights where the stroke outline crosses the vertical line x = x_edge."""
    for k in range(n):
        dx = x_edge - pts[k, 0]
        if dx * dx <= r * r:
            h = math.sqrt(r * r - dx * dx)
            out[c] = pts[k, 1] - h
            out[c + 1] = pts[k, 1] + h
            c += 2
    for k in range(n - 1):
        ax = pts[k, 0]
        ay = pts[k, 1]
        vx = pts[k + 1, 0] - ax
        vy = pts[k + 1, 1] - ay
        seg = math.hypot(vx, vy)
        if seg == 0.0 or abs(vx) < 1e-12:
            continue
        ux = vx / seg
        uy = vy / seg
        for sgn in (-1.0, 1.0):
            ox = ax + sgn * r * (-uy)
            oy = ay + sgn * r * ux
            t = (x_edge - ox) / ux
            if 0.0 <= t <= seg:
                out[c] = oy + t * uy
                c += 1
    return c


@njit(cache=True, nogil=True)
def _stroke_area(pts, n, r, wall_w, wall_h, gl_t, gl_w, subpieces):
    """Area of one stroke's footprint inside the wall rectangle, mm²."""
    ymin = pts[0, 1]
    ymax = pts[0, 1]
    for k in range(1, n):
        ymin = min(ymin, pts[k, 1])
        ymax = max(ymax, pts[k, 1])
    y0 = max(ymin - r, 0.0)
    y1 = min(ymax + r, wall_h)
    if y1 <= y0:
        return 0.0
    # heights where the outline changes form: tops/bottoms of the round ends, the
    # corners where straight sides meet round ends, crossings of the wall's sides
    nb = 3 * n + 4 * n + 2 * (2 * n + 2 * n) + 2
    br = np.empty(nb)
    c = 0
    for k in range(n):
        br[c] = pts[k, 1] - r
        br[c + 1] = pts[k, 1]
        br[c + 2] = pts[k, 1] + r
        c += 3
    for k in range(n - 1):
        vx = pts[k + 1, 0] - pts[k, 0]
        vy = pts[k + 1, 1] - pts[k, 1]
        seg = math.hypot(vx, vy)
        if seg == 0.0:
            continue
        ny = vx / seg * r
        br[c] = pts[k, 1] + ny
        br[c + 1] = pts[k, 1] - ny
        br[c + 2] = pts[k + 1, 1] + ny
        br[c + 3] = pts[k + 1, 1] - ny
        c += 4
    c = _edge_crossings(pts, n, r, 0.0, br, c)
    c = _edge_crossings(pts, n, r, wall_w, br, c)
    br[c] = y0
    br[c + 1] = y1
    c += 2
    ys = np.sort(br[:c])
    los = np.empty(max(n, 1))
    his = np.empty(max(n, 1))
    area = 0.0
    prev = y0
    for q in range(c):
        yb = min(max(ys[q], y0), y1)
        if yb - prev <= 1e-12:
            continue
        step = (yb - prev) / subpieces
        for s in range(subpieces):
            a = prev + s * step
            half = 0.5 * step
            mid = a + half
            # y = mid - half·cos(θ), θ in [0, π]: clusters nodes at both ends, which
            # removes the square-root behaviour of chords near a round end's top
            for g in range(len(gl_t)):
                theta = 0.5 * math.pi * (gl_t[g] + 1.0)
                y = mid - half * math.cos(theta)
                length = _covered_length(pts, n, r, y, wall_w, los, his)
                area += length * half * math.sin(theta) * 0.5 * math.pi * gl_w[g]
        prev = yb
    return area


@njit(cache=True, nogil=True)
def _all_stroke_areas(all_pts, starts, counts, widths, wall_w, wall_h, gl_t, gl_w, subpieces):
    out = np.empty(len(starts))
    for k in range(len(starts)):
        pts = all_pts[starts[k] : starts[k] + counts[k]]
        out[k] = _stroke_area(pts, counts[k], 0.5 * widths[k], wall_w, wall_h, gl_t, gl_w, subpieces)
    return out


_GL_T, _GL_W = np.polynomial.legendre.leggauss(_GL_NODES)


def stroke_area_mm2(path_mm, width_mm: float, *, wall_mm: tuple[float, float] | None = None) -> float:
    """Area of one stroke's footprint, optionally clipped to the wall.

    Parameters
    ----------
    path_mm : (N, 2) float array
        The stroke's polyline in wall millimetres (x, y), N >= 1.
    width_mm : float
        Brush width; the footprint is the polyline buffered by ``width_mm / 2`` with
        round ends and joins.
    wall_mm : (width, height), optional
        Clip to the rectangle [0, width] × [0, height]; default: no clipping.

    Returns
    -------
    area : float, mm²

    Raises
    ------
    ValueError
        If the width is not > 0 or the path is empty or not finite.

    References
    ----------
    Golub & Welsch (1969) for the Gauss–Legendre quadrature.
    """
    pts = np.ascontiguousarray(np.asarray(path_mm, dtype=float).reshape(-1, 2))
    if len(pts) == 0 or not np.all(np.isfinite(pts)):
        raise ValueError(f"stroke path must hold at least one finite point, got {path_mm!r}")
    if not math.isfinite(width_mm) or width_mm <= 0:
        raise ValueError(f"stroke width must be > 0 mm, got {width_mm}")
    r = 0.5 * float(width_mm)
    if wall_mm is None:
        # a box big enough to hold the whole stroke, shifted so it starts at 0
        lo = pts.min(axis=0) - r
        pts = pts - lo
        w, h = (pts.max(axis=0) + r + 1.0).tolist()
    else:
        w, h = float(wall_mm[0]), float(wall_mm[1])
    return float(_stroke_area(pts, len(pts), r, w, h, _GL_T, _GL_W, _SUBPIECES))


def stroke_areas_mm2(plan: Plan) -> list[np.ndarray]:
    """Per layer, the clipped footprint area of every stroke, mm² (file order)."""
    out = []
    for layer in plan.layers:
        if not layer.strokes:
            out.append(np.zeros(0))
            continue
        counts = np.array([len(s.path_mm) for s in layer.strokes], dtype=np.int64)
        starts = np.zeros(len(counts), dtype=np.int64)
        starts[1:] = np.cumsum(counts)[:-1]
        pts = np.ascontiguousarray(np.concatenate([np.asarray(s.path_mm, float).reshape(-1, 2)
                                                   for s in layer.strokes]))
        widths = np.array([s.width_mm for s in layer.strokes], dtype=float)
        out.append(_all_stroke_areas(pts, starts, counts, widths, float(plan.wall_width_mm),
                                     float(plan.wall_height_mm), _GL_T, _GL_W, _SUBPIECES))
    return out


# ------------------------------------------------------------------ containers
def buy_containers(litres: float, sizes_l: Sequence[float]) -> list[dict[str, Any]]:
    """The cheapest-in-volume set of containers holding at least ``litres``.

    Among the sets with the least total volume (to 10 mL), the one with the fewest
    containers; listed largest first as ``{"litres": size, "count": n}``.

    Raises
    ------
    ValueError
        If a container size is not > 0 or none is given.
    """
    sizes = sorted({float(s) for s in sizes_l}, reverse=True)
    if not sizes or any(not math.isfinite(s) or s <= 0 for s in sizes):
        raise ValueError(f"container sizes must be litres > 0, got {list(sizes_l)!r}")
    if litres <= 0:
        return []
    big = sizes[0]
    units = [max(1, int(round(s / _CONTAINER_STEP_L))) for s in sizes]
    # fill most of a large need with the largest size, then search the rest exactly
    n_big = max(0, int(math.floor(litres / big)) - 2)
    rest = litres - n_big * big
    need = max(1, int(math.ceil(rest / _CONTAINER_STEP_L - 1e-9)))
    top = need + max(units)
    INF = 1 << 30
    count = [INF] * (top + 1)
    last = [-1] * (top + 1)
    count[0] = 0
    for v in range(1, top + 1):
        for k, u in enumerate(units):
            if u <= v and count[v - u] + 1 < count[v]:
                count[v] = count[v - u] + 1
                last[v] = k
    v = next(v for v in range(need, top + 1) if count[v] < INF)
    picked = [0] * len(sizes)
    picked[0] += n_big
    while v > 0:
        k = last[v]
        picked[k] += 1
        v -= units[k]
    return [{"litres": round(s, 4), "count": c} for s, c in zip(sizes, picked) if c]


def _container_sizes(name: str, plan: Plan, containers, default: Sequence[float]) -> Sequence[float]:
    if isinstance(containers, Mapping):
        if name in containers:
            return containers[name]
    elif containers is not None:
        return containers
    for entry in plan.extra.get("inventory", []) or []:
        if isinstance(entry, Mapping) and entry.get("name") == name and entry.get("containers_l"):
            return entry["containers_l"]
    return default


def _container_prices(name: str, plan: Plan) -> tuple[dict[float, float], str] | None:
    """``({size in litres: price of one}, currency)`` of a stock paint in ``plan.extra["inventory"]``; None unpriced."""
    for entry in plan.extra.get("inventory", []) or []:
        if isinstance(entry, Mapping) and entry.get("name") == name and entry.get("container_prices"):
            sizes, prices = entry.get("containers_l") or [], entry["container_prices"]
            table = {round(float(s), 4): float(p) for s, p in zip(sizes, prices)
                     if isinstance(p, (int, float)) and not isinstance(p, bool)}
            return (table, str(entry.get("currency") or "")) if table else None
    return None


def _cost(containers: Sequence[Mapping[str, Any]], priced) -> float | None:
    """What the containers cost, or None when a size has no price (or the paint none at all)."""
    if not containers:
        return 0.0 if priced else None
    if not priced:
        return None
    table = priced[0]
    try:
        return round(sum(table[round(float(c["litres"]), 4)] * int(c["count"]) for c in containers), 2)
    except KeyError:
        return None


def _us(litres: float) -> dict[str, float]:
    gal = litres / LITRES_PER_US_GALLON
    return {"us_gallons": round(gal, 3), "us_quarts": round(gal * US_QUARTS_PER_GALLON, 3)}


# ------------------------------------------------------------------ paint use
def _check_number(name: str, value, *, minimum: float, strict: bool, whole: bool = False):
    bad = isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value)
    if not bad and whole and float(value) != int(value):
        bad = True
    if not bad:
        bad = value <= minimum if strict else value < minimum
    if bad:
        kind = "a whole number" if whole else "a number"
        rel = ">" if strict else ">="
        raise ValueError(f"{name} must be {kind} {rel} {minimum:g}, got {value!r}")


def check_options(*, coverage_m2_per_litre: float = COVERAGE_M2_PER_L, waste: float = WASTE,
                  ground_coats: int = GROUND_COATS, stroke_coats: int = STROKE_COATS) -> None:
    """Check the quantity options of :func:`paint_use` (callers check before long work).

    Raises
    ------
    ValueError
        Naming the option and the bad value.
    """
    _check_number("coverage_m2_per_litre", coverage_m2_per_litre, minimum=0, strict=True)
    _check_number("waste", waste, minimum=0, strict=False)
    _check_number("ground_coats", ground_coats, minimum=0, strict=False, whole=True)
    _check_number("stroke_coats", stroke_coats, minimum=1, strict=False, whole=True)
    if waste > 1:
        raise ValueError(f"waste is a fraction (0.15 = 15 %), at most 1, got {waste!r}")


def paint_use(
    plan: Plan,
    *,
    coverage_m2_per_litre: float = COVERAGE_M2_PER_L,
    waste: float = WASTE,
    ground_coats: int = GROUND_COATS,
    stroke_coats: int = STROKE_COATS,
    containers: Sequence[float] | Mapping[str, Sequence[float]] | None = None,
    ml_scale: bool | None = None,
) -> dict[str, Any]:
    """How much of each paint the plan uses, and the stock paints and containers to buy.

    Parameters
    ----------
    plan : Plan
    coverage_m2_per_litre : float
        Spreading rate of one coat, m² per litre (> 0).
    waste : float
        Extra fraction bought on top (>= 0; 0.15 = 15 %).
    ground_coats : int
        Coats of the ground over the whole surface (>= 0).
    stroke_coats : int
        Least coats of any stroke (>= 1): a stroke gets ``max(stroke_coats, stroke.coats)``.
    containers : sequence of float or mapping, optional
        Container sizes in litres one can buy: one list for every paint, or a mapping
        from paint name (stock paint or palette id) to its list. Default: the sizes in
        ``plan.extra["inventory"]`` (entries ``{"name", "containers_l"}``) where given,
        else :data:`COMMON_CONTAINERS_L` (:data:`US_CONTAINERS_L` for walls in ft/in).
    ml_scale : bool, optional
        Millilitre amounts, measured out from bottles already in the room rather than bought:
        every entry gets ``ml`` (to 0.1 mL), no containers and no trace flag. Default: on for
        plans of a named sheet or board (``settings.surface`` in ``plan.extra``).

    Returns
    -------
    paint_use : dict
        ``{"coverage_m2_per_litre", "waste", "ground_coats", "stroke_coats",
        "wall_area_m2", "paints": [{"paint", "area_m2", "ground_area_m2",
        "stroke_area_m2", "stroke_coat_area_m2", "strokes", "litres", "containers"}, ...],
        "stock": [{"paint", "litres", "for", "containers"}, ...], "ground_area_m2"}``;
        the top-level ``ground_area_m2`` is the wall less its openings, what the ground is
        painted on, and ``ground_coats`` the coats it gets (0 where the wall's colour serves
        as the ground; with a ``ground_note`` then, or where the ground covers that colour). For walls given
        in ft or in, every paint and stock entry also has ``us_gallons`` and
        ``us_quarts``. ``stroke_coat_area_m2`` is the stroke area counted once per coat
        (what the litres are worked from). ``stock`` is empty when no palette entry has a recipe. Every
        paint and stock entry has ``trace``: true when more than nothing but less than
        :data:`TRACE_LITRES` is needed (too little to buy a container for).
        Where the inventory prices the containers (``container_prices`` and ``currency`` of its
        entries, see :mod:`layerplan.inventory`), a stock entry whose containers all have a price
        gets ``"cost"`` (the sum of count × price, to 0.01), and the result gets
        ``"cost": {"currency", "total", "priced", "unpriced"}``: the total over the priced stock
        entries, and the names of those priced and of those with containers to buy but no price.

    Raises
    ------
    ValueError
        Naming the option and the bad value; or a recipe that is malformed.

    References
    ----------
    NIST Handbook 44, Appendix C (US gallon and quart).
    """
    check_options(coverage_m2_per_litre=coverage_m2_per_litre, waste=waste, ground_coats=ground_coats,
                  stroke_coats=stroke_coats)
    ground_coats, stroke_coats = int(ground_coats), int(stroke_coats)
    ids = plan.paint_index()
    if plan.ground not in ids:
        raise ValueError(f"ground paint {plan.ground!r} is not in the palette")
    unit = plan.wall_unit
    us = unit in US_UNITS
    if ml_scale is None:
        ml_scale = bool((plan.extra.get("settings") or {}).get("surface"))
    default_sizes = US_CONTAINERS_L if us else COMMON_CONTAINERS_L

    stroke_m2 = np.zeros(len(plan.palette))
    coat_m2 = np.zeros(len(plan.palette))  # stroke area once per coat
    n_strokes = np.zeros(len(plan.palette), dtype=int)
    for layer, areas in zip(plan.layers, stroke_areas_mm2(plan)):
        for s, a in zip(layer.strokes, areas):
            if s.paint not in ids:
                raise ValueError(f"stroke paint {s.paint!r} is not in the palette")
            stroke_m2[ids[s.paint]] += a / 1e6
            coat_m2[ids[s.paint]] += a / 1e6 * max(stroke_coats, s.coats)
            n_strokes[ids[s.paint]] += 1
    wall_m2 = plan.wall_width_mm * plan.wall_height_mm / 1e6
    ground_area = ground_area_m2(plan)
    wall = wall_section(plan)
    note = None
    if wall is not None and wall.get("serves_as_ground"):
        ground_coats, note = 0, "serves"  # the wall is that paint already: no ground to buy
    elif wall is not None:
        ground_coats, note = max(ground_coats, int(wall.get("ground_coats", 0))), "covers"
    factor = (1.0 + waste) / coverage_m2_per_litre

    paints = []
    stock: dict[str, dict[str, Any]] = {}
    for p in plan.palette:
        k = ids[p.id]
        ground_m2 = ground_area if p.id == plan.ground else 0.0
        litres = (ground_m2 * ground_coats + coat_m2[k]) * factor
        entry = {
            "paint": p.id,
            "area_m2": round(ground_m2 + stroke_m2[k], 4),
            "ground_area_m2": round(ground_m2, 4),
            "stroke_area_m2": round(float(stroke_m2[k]), 4),
            "stroke_coat_area_m2": round(float(coat_m2[k]), 4),
            "strokes": int(n_strokes[k]),
            "litres": round(litres, 3),
            "containers": buy_containers(litres, _container_sizes(p.id, plan, containers, default_sizes)),
            "trace": bool(0.0 < litres < TRACE_LITRES),
        }
        if us:
            entry.update(_us(litres))
        if ml_scale:
            _measured(entry, litres)
        paints.append(entry)
        recipe = p.extra.get("recipe")
        if recipe and litres > 0:
            parts = _recipe_parts(p.id, recipe)
            total = sum(n for _, n in parts)
            for name, n in parts:
                s = stock.setdefault(name, {"paint": name, "litres": 0.0, "for": []})
                s["litres"] += litres * n / total
                if p.id not in s["for"]:
                    s["for"].append(p.id)
    stock_list = []
    priced, unpriced, currencies, total = [], [], set(), 0.0
    for name in sorted(stock):
        s = stock[name]
        s["containers"] = buy_containers(s["litres"], _container_sizes(name, plan, containers, default_sizes))
        prices = _container_prices(name, plan) if containers is None else None
        cost = _cost(s["containers"], prices)
        if cost is not None:
            s["cost"] = cost
            priced.append(name)
            currencies.add(prices[1])
            total += cost
        elif s["containers"]:
            unpriced.append(name)
        s["trace"] = bool(0.0 < s["litres"] < TRACE_LITRES)
        litres = s["litres"]
        s["litres"] = round(litres, 3)
        if us:
            s.update(_us(s["litres"]))
        if ml_scale:
            _measured(s, litres)
        stock_list.append(s)
    if len(currencies) > 1:
        raise ValueError(f"the inventory prices paints in more than one currency ({', '.join(sorted(currencies))})")
    cost = ({"cost": {"currency": currencies.pop(), "total": round(total, 2), "priced": priced,
                      "unpriced": unpriced}} if priced else {})
    return {
        "coverage_m2_per_litre": float(coverage_m2_per_litre),
        "waste": float(waste),
        "ground_coats": ground_coats,
        "stroke_coats": stroke_coats,
        "wall_area_m2": round(wall_m2, 4),
        "wall_unit": unit,
        "paints": paints,
        "stock": stock_list,
        **cost,
        "ground_area_m2": round(ground_area, 4),
        **({"ground_note": note} if note else {}),
        **({"scale": "ml"} if ml_scale else {}),
    }


def _measured(entry: dict[str, Any], litres: float) -> None:
    """A sheet's amount: millilitres measured out of bottles in the room, nothing to buy for it."""
    entry["ml"] = round(litres * 1000.0, 1)
    entry["containers"] = []
    entry["trace"] = False


def _recipe_parts(paint_id: str, recipe) -> list[tuple[str, float]]:
    """``[(stock name, parts), ...]`` from a recipe (plan.json's ``recipe`` form), checked."""
    try:
        parts = [(str(q["paint"]), float(q["parts"])) for q in recipe["parts"]]
    except (KeyError, TypeError, ValueError) as exc:
        raise ValueError(f"paint {paint_id}: recipe needs 'parts': [{{'paint': name, 'parts': n}}, ...]; "
                         f"got {recipe!r}") from exc
    if not parts or any(not math.isfinite(n) or n < 0 for _, n in parts) or sum(n for _, n in parts) <= 0:
        raise ValueError(f"paint {paint_id}: recipe parts must be >= 0 and add up to > 0, got {recipe['parts']!r}")
    return [(name, n) for name, n in parts if n > 0]
