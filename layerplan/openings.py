"""The real wall: its openings (windows, doors, vents) and the colour it is painted already.

An opening is a rectangle of the wall, ``(x_mm, y_mm, width_mm, height_mm)``, its top-left
corner measured from the wall's top-left (x right, y down, as every plan coordinate). It is
not painted: no ground, no stroke. A working pixel is inside an opening when its centre
(the point the rendering rule of :mod:`layerplan.raster` tests) lies inside the rectangle,
edges included. The trade measures a wall's painted area as the whole wall less its
openings (common practice: painters' estimating deducts every window and door), which is
what the ground is charged on (:func:`ground_area_m2`).

The wall's colour: when it is already within :func:`match_tolerance_de` of a paint the
palette has, that paint serves as the ground and no ground coats are bought; otherwise the
ground goes over it, with as many coats as it takes to hide it (the rule of
:mod:`layerplan.coats`, the one strokes get their coats by).

plan.json carries ``"openings": [{"x_mm", "y_mm", "width_mm", "height_mm"}, ...]`` and,
when the wall's colour was given, ``"wall_colour": {...}`` (:func:`wall_ground`); both are
absent on a plain rectangle of unknown colour.

References
----------
.. [1] G. Sharma, W. Wu, E. N. Dalal, "The CIEDE2000 color-difference formula:
   implementation notes, supplementary test data, and mathematical observations",
   Color Res. Appl. 30(1):21–30, 2005.
.. [2] Deducting openings from the painted area of a wall: common practice in painters'
   estimating (measure the wall, subtract each window and door).
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np

from .plan import Plan


@dataclass(frozen=True)
class Opening:
    """One window, door or vent: a rectangle of the wall that is not painted (mm, top-left origin)."""

    x_mm: float
    y_mm: float
    width_mm: float
    height_mm: float

    def to_dict(self) -> dict[str, float]:
        return {"x_mm": round(self.x_mm, 3), "y_mm": round(self.y_mm, 3), "width_mm": round(self.width_mm, 3),
                "height_mm": round(self.height_mm, 3)}

    @property
    def box(self) -> tuple[float, float, float, float]:
        """``(x0, y0, x1, y1)`` in wall mm."""
        return self.x_mm, self.y_mm, self.x_mm + self.width_mm, self.y_mm + self.height_mm


def as_openings(rects: Iterable) -> tuple[Opening, ...]:
    """Openings from ``(x, y, w, h)`` tuples (settings) or plan.json's dicts."""
    out = []
    for r in rects:
        if isinstance(r, Mapping):
            out.append(Opening(float(r["x_mm"]), float(r["y_mm"]), float(r["width_mm"]), float(r["height_mm"])))
        else:
            x, y, w, h = (float(v) for v in r)
            out.append(Opening(x, y, w, h))
    return tuple(out)


def plan_openings(plan: Plan) -> tuple[Opening, ...]:
    """The plan's openings (plan.json ``openings``; none in plans made before it)."""
    return as_openings(plan.extra.get("openings") or ())


def opening_mask(openings: Iterable[Opening], shape, mm_per_px: float) -> np.ndarray:
    """(H, W) bool: working pixels whose centre lies inside an opening (edges included).

    Parameters
    ----------
    openings : iterable of Opening
    shape : (H, W)
    mm_per_px : float
    """
    h, w = shape[:2]
    cx = (np.arange(w) + 0.5) * mm_per_px
    cy = (np.arange(h) + 0.5) * mm_per_px
    mask = np.zeros((h, w), dtype=bool)
    for o in openings:
        x0, y0, x1, y1 = o.box
        cols = (cx >= x0) & (cx <= x1)
        rows = (cy >= y0) & (cy <= y1)
        mask |= rows[:, None] & cols[None, :]
    return mask


def plan_mask(plan: Plan) -> np.ndarray | None:
    """:func:`opening_mask` of a plan's raster; None when the plan has no openings."""
    found = plan_openings(plan)
    if not found:
        return None
    return opening_mask(found, (plan.height_px, plan.width_px), plan.mm_per_px)


def union_area_mm2(openings: Iterable[Opening], wall_mm: tuple[float, float] | None = None) -> float:
    """Area covered by the openings, mm², overlaps counted once (clipped to the wall when given).

    Exact: the rectangles' edges cut the plane into cells, each wholly inside or outside the union.
    """
    boxes = [o.box for o in openings]
    if wall_mm is not None:
        boxes = [(max(0.0, a), max(0.0, b), min(wall_mm[0], c), min(wall_mm[1], d)) for a, b, c, d in boxes]
        boxes = [b for b in boxes if b[2] > b[0] and b[3] > b[1]]
    if not boxes:
        return 0.0
    xs = sorted({v for b in boxes for v in (b[0], b[2])})
    ys = sorted({v for b in boxes for v in (b[1], b[3])})
    total = 0.0
    for x0, x1 in zip(xs, xs[1:]):
        for y0, y1 in zip(ys, ys[1:]):
            if any(b[0] <= x0 and x1 <= b[2] and b[1] <= y0 and y1 <= b[3] for b in boxes):
                total += (x1 - x0) * (y1 - y0)
    return total


def ground_area_m2(plan: Plan) -> float:
    """The ground's painted area: the wall less its openings, m² (common practice: openings are deducted)."""
    wall = plan.wall_width_mm * plan.wall_height_mm
    return (wall - union_area_mm2(plan_openings(plan), (plan.wall_width_mm, plan.wall_height_mm))) / 1e6


# ------------------------------------------------------------------------ the wall's colour
def colour_lab(text: str) -> tuple[float, float, float]:
    """CIELAB (D65) of a colour as the ``--wall-colour`` option holds it: ``#rrggbb`` or ``L,a,b``."""
    from .colour import srgb_to_lab
    from .plan import hex_to_rgb

    if text.startswith("#"):
        lab = srgb_to_lab(np.array([[hex_to_rgb(text)]], dtype=np.uint8))[0, 0]
        return tuple(float(v) for v in lab)
    return tuple(float(v) for v in text.split(","))


def match_tolerance_de(tolerance_de: float) -> float:
    """ΔE00 within which the wall counts as a palette paint.

    The same tolerance a mix recipe must meet to count as its paint (``--tolerance``,
    default 3): the plan already treats any colour that close as that paint, so a wall that
    close is that paint too, and painting it again buys nothing the eye would see.
    """
    return float(tolerance_de)


def wall_ground(palette_lab: np.ndarray, ground: int, wall_lab, *, tolerance_de: float) -> tuple[int, dict[str, Any]]:
    """The ground given the colour the wall already is.

    Parameters
    ----------
    palette_lab : (K, 3) float array
    ground : int
        The palette position the photo chose (:func:`layerplan.ground.choose_ground`).
    wall_lab : (3,) float
        CIELAB of the wall's colour now.
    tolerance_de : float
        See :func:`match_tolerance_de`.

    Returns
    -------
    ground : int
        The palette paint nearest the wall when it is within the tolerance (the wall serves
        as the ground: no ground coats), else ``ground`` unchanged.
    wall : dict
        plan.json's ``wall_colour`` section: ``{"lab", "nearest_paint" (index), "delta_e00",
        "tolerance_de", "serves_as_ground", "ground_coats"}``; ``ground_coats`` is 0 when the
        wall serves, else the coats the ground takes to hide the wall by
        :func:`layerplan.coats.coats_over` (at least the plan's ground coats, see quantities).

    References
    ----------
    Sharma et al. (2005), CIEDE2000.
    """
    from .coats import coats_over
    from .colour import delta_e00

    wall = np.asarray(wall_lab, dtype=float).reshape(1, 3)
    de = delta_e00(np.asarray(palette_lab, dtype=float), wall)
    nearest = int(np.argmin(de))
    tol = match_tolerance_de(tolerance_de)
    serves = bool(de[nearest] <= tol)
    chosen = nearest if serves else int(ground)
    coats = 0 if serves else int(coats_over(np.asarray(palette_lab[chosen], float), wall[0]))
    return chosen, {"lab": [round(float(v), 3) for v in wall[0]], "nearest_paint": nearest,
                    "delta_e00": round(float(de[nearest]), 3), "tolerance_de": tol,
                    "serves_as_ground": serves, "ground_coats": coats}


def wall_section(plan: Plan) -> Mapping[str, Any] | None:
    """plan.json's ``wall_colour`` section (the wall's colour and what it means for the ground), or None."""
    wall = plan.extra.get("wall_colour")
    return wall if isinstance(wall, Mapping) else None
