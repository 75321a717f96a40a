"""The `Plan`: the one object every stage produces, and every exporter reads.

Its serialisation is the versioned plan.json contract (format ``layerplan.plan``,
version 1). The names and meanings below must hold because other tools read them::

    {"format": "layerplan.plan", "version": 1,
     "wall":   {"width_mm": 4000.0, "height_mm": 2500.0},
     "raster": {"width_px": 800, "height_px": 500, "mm_per_px": 5.0},
     "palette": [{"id": "P1", "srgb": "#rrggbb", "lab": [L, a, b]}, ...],
     "ground": {"paint": "P1"},
     "layers": [{"brush": {"width_mm": 100.0},
                 "strokes": [{"paint": "P2", "width_mm": 100.0,
                              "path_mm": [[x, y], ...], "coats": 2}, ...]}, ...]}

Optional per layer: ``"runs": [{"paint": "P4", "strokes": 120}, ...]``, the layer's paints
in painting order, each painted in one run of that many strokes; the strokes of a run are
consecutive in ``strokes``, runs in this order (absent in plans made before runs).

Coordinates are wall millimetres, origin top-left, x right, y down. A stroke's
``coats`` (a whole number >= 1) is how many coats it takes to hide what it covers
(:mod:`layerplan.coats`); it is written only when more than 1, and a stroke without it
has 1, so plans made before the field read unchanged. A layer may
carry ``"travel"`` (optional; absent in older plans): ``{"painted_m", "lifted_m",
"lifted_before_m", "zone_visits", "zone_visits_before", "reach_m"}``, the length the
brush paints, the lifted-brush travel from each stroke's last point to the next one's
first in file order (and in the order before :func:`layerplan.order.short_travel`), how
many times the painter sets up at a work zone, and the zone's side. Further
sections (``settings``, ``stats``, ``inventory``, ``paint_use``, ...) may be added
freely; they travel in ``Plan.extra`` so a plan read and written again keeps them.
The ones several modules read have typed access on the objects: ``settings.wall_unit``
is :attr:`Plan.wall_unit`, ``inventory`` is :attr:`Plan.inventory` and a palette
entry's ``recipe`` is :attr:`Paint.recipe`; they are still written where they always
were, so the file does not change.

An optional top-level ``schedule`` (absent in plans written before it) is the work schedule the
exporter worked out from the plan and its ``paint_use`` (:func:`layerplan.schedule.work_schedule`):
``{"hours": crew-hours of painting, "crew": painters, "days": working days, "painting_hours": hours the
crew is at the wall, "hours_per_day", "drying_hours", "reach_m", "tasks": [...], "days_list": [...],
"idle_painters": [...], "weather": [...]}`` plus ``"labour_rate"``, ``"paid_hours"``, ``"labour_cost"``
(and ``"currency"``) with a labour rate. Like ``paint_use`` it is derived: reading a plan never needs it,
and ``layerplan render`` works it out again. An optional ``budget`` says how a plan was fitted to a time
or stroke budget (:func:`layerplan.budget.fit_to_budget`): ``{"hours" or "strokes": asked, "crew",
"achieved_hours", "strokes_made", "stroke_cost", "plans_tried", "within"}``.

An optional top-level ``warnings`` list says what the plan could not do as well as asked,
each entry ``{"kind", "message", "cause", "fix", ...}`` (whole sentences, plus the figures
behind them; :mod:`layerplan.caveats`). Absent means none: a plan the working raster
serves well has no such key, so its file is unchanged.

:meth:`Plan.from_dict` checks what a hand-edited or hostile file could get wrong before any
exporter reads it (:data:`LIMITS`): a wall of 0 to 100 m a side, a raster of at most 8
megapixels that matches the wall at its pixel size, finite numbers, at most 32 paints and 8
layers, strokes of a known paint with a brush of 1 to 1000 mm, 1 to 4 coats and finite points
near the wall, and container sizes as an inventory allows them.

An optional top-level ``openings`` list holds the wall's windows, doors and vents, each
``{"x_mm", "y_mm", "width_mm", "height_mm"}`` (top-left corner from the wall's top-left):
no ground and no stroke is painted there, and pictures leave them transparent
(:mod:`layerplan.openings`). An optional ``wall_colour`` section says what colour the wall
is already and what that means for the ground: ``{"lab", "nearest_paint", "delta_e00",
"tolerance_de", "serves_as_ground", "ground_coats"}``. Both are absent on a plain wall, so
its file is unchanged.

Classroom plans (a named sheet or board, a class, a value study; :mod:`layerplan.classroom`) may carry
two more optional top-level sections, absent otherwise::

    "classroom": {"students": 25, "spares": 3, "spare_share": 0.1, "sheets": 28, "table_size": 6,
                  "tables": 5, "period_minutes": 45.0,
                  "paints": [{"paint": "White", "per_student_ml": 35.4, "total_ml": 991.2,
                              "per_table_ml": 198.2}, ...],
                  "mixes": [{"paint": "P2", "who": "teacher", "per_student_ml": 4.3, ...}, ...],
                  "periods": [{"period": 1, "steps": [{"step": "layer 1", "minutes": 5.3}, ...],
                               "minutes": 34.2}, ...]}
    "value_study": {"steps": 5, "black": "Black", "white": "White",
                    "greys": [{"paint": "P1", "target_l": 96.16, "l": 96.165,
                               "parts": {"black": 0, "white": 1}}, ...]}

``classroom.paints`` are the stock paints put out (by name), ``mixes`` the plan's paints (by id)
with who mixes each (``stock``, ``students`` or ``teacher``); totals include the spare sheets.
``classroom`` is written with ``paint_use`` (it is worked from it); ``value_study`` by the planner.
A sheet's ``paint_use`` then has ``"scale": "ml"`` and each entry an ``ml`` amount and no containers.

A `Plan` and its parts are frozen: stages and exporters read them and never write
into them. A changed plan is a new one, made with :func:`dataclasses.replace`
(``replace(plan, extra={**plan.extra, "source": ...})``).
"""

from __future__ import annotations

import json
import math
from collections.abc import Mapping
from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Any

import numpy as np

from .settings import HARD_MAX_RASTER_PX, MAX_BRUSHES, MAX_PAINTS, MAX_WALL_MM
from .units import UNITS_MM

FORMAT = "layerplan.plan"
VERSION = 1
#: the wall unit of plans that do not name one (plan.json ``settings.wall_unit``)
DEFAULT_WALL_UNIT = "m"
#: what :meth:`Plan.from_dict` accepts. The raster, paints and layers are the planner's own
#: limits (layerplan.settings); brush widths those of the brushes option and coats those of
#: layerplan.coats (MAX_COATS, repeated here: coats imports the planner); container sizes those of
#: an inventory file (layerplan.inventory, which imports this module). Strokes and points are
#: far above what the planner makes at its 8-megapixel limit, yet keep a file to minutes of work.
LIMITS: Mapping[str, float] = MappingProxyType({
    "wall_mm": MAX_WALL_MM, "raster_px": HARD_MAX_RASTER_PX, "paints": MAX_PAINTS, "layers": MAX_BRUSHES,
    "brush_min_mm": 1.0, "brush_max_mm": 1000.0, "coats": 4, "strokes": 2_000_000, "points": 20_000_000,
    "inventory": 64, "container_sizes": 8, "container_min_l": 0.01, "container_max_l": 200.0,
})


@dataclass(frozen=True)
class Paint:
    """One paint of the plan's finite palette.

    Parameters
    ----------
    id : str
        Short label painted on the plan ("P1", "P2", ...).
    srgb : str
        ``#rrggbb`` colour used to render the plan.
    lab : tuple of float
        CIELAB (D65, 2°) of ``srgb``.
    extra : dict
        Further per-paint sections (e.g. ``recipe``), kept verbatim; read, never written.
    """

    id: str
    srgb: str
    lab: tuple[float, float, float]
    extra: dict[str, Any] = field(default_factory=dict)

    def __post_init__(self):
        object.__setattr__(self, "lab", tuple(self.lab))

    @property
    def rgb(self) -> tuple[int, int, int]:
        """The colour as three 0–255 integers."""
        return hex_to_rgb(self.srgb)

    @property
    def recipe(self) -> Mapping[str, Any] | None:
        """The mix recipe (plan.json ``palette[i].recipe``), read-only; None if there is none.

        ``{"parts": [{"paint": stock name, "parts": n}, ...], "target", "predicted_srgb",
        "delta_e", "in_gamut"}`` as :mod:`layerplan.recipes` writes it; plan.json files also
        carry the optional ``"batch": [{"paint": stock name, "litres": x}, ...]`` (the paint's
        litres split into its stock paints, :mod:`layerplan.batches`). It stays in
        ``extra`` so the palette entry is written back unchanged.
        """
        recipe = self.extra.get("recipe")
        return MappingProxyType(recipe) if isinstance(recipe, Mapping) else None


@dataclass(frozen=True)
class Stroke:
    """One brush stroke: a polyline painted with a round brush, opaque.

    ``path_mm`` is an (N, 2) float array of wall millimetres (x, y), N >= 1. ``coats``
    (a whole number >= 1, default 1) is how many coats the stroke takes to hide the
    paint it covers (:mod:`layerplan.coats`); the picture is the same however many.

    Raises
    ------
    ValueError
        If ``coats`` is not a whole number >= 1.
    """

    paint: str
    width_mm: float
    path_mm: np.ndarray
    coats: int = 1

    def __post_init__(self):
        coats = self.coats
        if type(coats) is not int:
            coats = _whole_coats(coats)
            object.__setattr__(self, "coats", coats)
        if coats < 1:
            raise ValueError(f"stroke coats must be a whole number >= 1, got {coats!r}")

    def length_mm(self) -> float:
        """Length of the polyline (0 for a single-point dab)."""
        if len(self.path_mm) < 2:
            return 0.0
        return float(np.sum(np.hypot(*np.diff(self.path_mm, axis=0).T)))


@dataclass(frozen=True)
class Layer:
    """All strokes made with one brush, in painting order (``strokes`` is kept as a tuple)."""

    brush_width_mm: float
    strokes: tuple[Stroke, ...] = ()
    extra: dict[str, Any] = field(default_factory=dict)

    def __post_init__(self):
        object.__setattr__(self, "strokes", tuple(self.strokes))


@dataclass(frozen=True)
class Plan:
    """A complete painting plan at wall scale.

    Attributes
    ----------
    wall_width_mm, wall_height_mm : float
        Size of the painted surface.
    width_px, height_px : int
        Working raster; one pixel stands for ``mm_per_px`` millimetres of wall.
    mm_per_px : float
    palette : tuple of Paint
        (A list given is kept as a tuple.)
    ground : str
        Palette id of the flat first coat over the whole surface.
    layers : tuple of Layer
        Widest brush first. (A list given is kept as a tuple.)
    extra : dict
        Further top-level sections (``settings``, ``stats``, ``inventory``...), kept
        verbatim; read, never written.
    wall_unit : str
        Unit the wall was measured in (a key of :data:`layerplan.units.UNITS_MM`): lengths,
        areas, the default transfer grid and the container sizes follow it. In plan.json it
        is ``settings.wall_unit``. Default: ``extra["settings"]["wall_unit"]`` where given
        (plans made before the field), else :data:`DEFAULT_WALL_UNIT`.

    Raises
    ------
    ValueError
        If ``wall_unit`` is not a known unit.
    """

    wall_width_mm: float
    wall_height_mm: float
    width_px: int
    height_px: int
    mm_per_px: float
    palette: tuple[Paint, ...]
    ground: str
    layers: tuple[Layer, ...] = ()
    extra: dict[str, Any] = field(default_factory=dict)
    wall_unit: str | None = None

    def __post_init__(self):
        object.__setattr__(self, "palette", tuple(self.palette))
        object.__setattr__(self, "layers", tuple(self.layers))
        unit = self.wall_unit
        if unit is None:
            settings = self.extra.get("settings")
            unit = settings.get("wall_unit", DEFAULT_WALL_UNIT) if isinstance(settings, Mapping) else DEFAULT_WALL_UNIT
        if not isinstance(unit, str) or unit not in UNITS_MM:
            raise ValueError(f"wall unit must be one of {', '.join(UNITS_MM)}; got {unit!r}")
        object.__setattr__(self, "wall_unit", unit)

    @property
    def inventory(self) -> tuple[Mapping[str, Any], ...]:
        """The stock paints the recipes were mixed from (plan.json ``inventory``), read-only.

        Entries ``{"name", "srgb", "tinting_strength", "containers_l"}`` as the pipeline
        writes them; empty when the plan has none. Entries that are not mappings are left out.
        """
        entries = self.extra.get("inventory")
        if not isinstance(entries, (list, tuple)):
            return ()
        return tuple(MappingProxyType(e) for e in entries if isinstance(e, Mapping))

    # ------------------------------------------------------------------ lookups
    def paint_index(self) -> dict[str, int]:
        """Map palette id -> position in ``palette``."""
        return {p.id: i for i, p in enumerate(self.palette)}

    def paint(self, paint_id: str) -> Paint:
        """The palette entry with this id."""
        for p in self.palette:
            if p.id == paint_id:
                return p
        raise KeyError(f"no paint {paint_id!r} in the palette")

    def palette_rgb(self) -> np.ndarray:
        """(K, 3) uint8 colours in palette order."""
        return np.array([p.rgb for p in self.palette], dtype=np.uint8).reshape(-1, 3)

    def palette_lab(self) -> np.ndarray:
        """(K, 3) float CIELAB in palette order."""
        return np.array([p.lab for p in self.palette], dtype=float).reshape(-1, 3)

    def stroke_count(self) -> int:
        return sum(len(layer.strokes) for layer in self.layers)

    # ------------------------------------------------------------ serialising
    def to_dict(self) -> dict[str, Any]:
        """The plan.json document (a plain, JSON-ready dict)."""
        doc: dict[str, Any] = {
            "format": FORMAT,
            "version": VERSION,
            "wall": {"width_mm": _num(self.wall_width_mm), "height_mm": _num(self.wall_height_mm)},
            "raster": {
                "width_px": int(self.width_px),
                "height_px": int(self.height_px),
                "mm_per_px": _num(self.mm_per_px),
            },
            "palette": [
                {"id": p.id, "srgb": p.srgb, "lab": [round(float(v), 3) for v in p.lab], **p.extra}
                for p in self.palette
            ],
            "ground": {"paint": self.ground},
            "layers": [
                {
                    "brush": {"width_mm": _num(layer.brush_width_mm)},
                    **layer.extra,
                    "strokes": [
                        {
                            "paint": s.paint,
                            "width_mm": _num(s.width_mm),
                            "path_mm": [[_num(x), _num(y)] for x, y in np.asarray(s.path_mm, float)],
                            # one coat is the rule, so only the exceptions are written
                            **({"coats": s.coats} if s.coats > 1 else {}),
                        }
                        for s in layer.strokes
                    ],
                }
                for layer in self.layers
            ],
        }
        for key, value in self.extra.items():
            if key not in doc:
                doc[key] = value
        # wall_unit is written where plans have always carried it, in place inside settings
        settings = doc.get("settings")
        if isinstance(settings, Mapping):
            if "wall_unit" in settings or self.wall_unit != DEFAULT_WALL_UNIT:
                doc["settings"] = {**settings, "wall_unit": self.wall_unit}
        elif self.wall_unit != DEFAULT_WALL_UNIT:
            doc["settings"] = {"wall_unit": self.wall_unit}
        return doc

    def to_json(self) -> str:
        """Deterministic JSON text: the same plan gives the same bytes."""
        return json.dumps(self.to_dict(), ensure_ascii=False, separators=(",", ":")) + "\n"

    @classmethod
    def from_dict(cls, doc: dict[str, Any]) -> "Plan":
        """Read a plan.json document, checking the parts of the contract.

        Raises
        ------
        ValueError
            If the document is not a layerplan plan, has another version, a required
            field is missing or malformed, a stroke's ``coats`` is not a whole number
            >= 1, or ``settings.wall_unit`` is not a known unit (the message names it).
        """
        if not isinstance(doc, dict) or doc.get("format") != FORMAT:
            raise ValueError(f"not a layerplan plan: 'format' must be {FORMAT!r}")
        if doc.get("version") != VERSION:
            raise ValueError(f"unsupported plan version {doc.get('version')!r}; this layerplan reads {VERSION}")
        settings = doc.get("settings")
        unit = settings.get("wall_unit", DEFAULT_WALL_UNIT) if isinstance(settings, dict) else DEFAULT_WALL_UNIT
        if not isinstance(unit, str) or unit not in UNITS_MM:
            raise ValueError(f"plan.json settings.wall_unit must be one of {', '.join(UNITS_MM)}; got {unit!r}")
        try:
            wall, raster = doc["wall"], doc["raster"]
            palette = [
                Paint(
                    id=str(p["id"]),
                    srgb=str(p["srgb"]),
                    lab=tuple(float(v) for v in p["lab"]),
                    extra={k: v for k, v in p.items() if k not in ("id", "srgb", "lab")},
                )
                for p in doc["palette"]
            ]
            layers = []
            for layer in doc["layers"]:
                strokes = [
                    Stroke(
                        paint=str(s["paint"]),
                        width_mm=float(s["width_mm"]),
                        path_mm=np.asarray(s["path_mm"], dtype=float).reshape(-1, 2),
                        coats=_read_coats(s.get("coats", 1), len(layers) + 1, k + 1),
                    )
                    for k, s in enumerate(layer["strokes"])
                ]
                layers.append(
                    Layer(
                        brush_width_mm=float(layer["brush"]["width_mm"]),
                        strokes=strokes,
                        extra={k: v for k, v in layer.items() if k not in ("brush", "strokes")},
                    )
                )
            plan = cls(
                wall_width_mm=float(wall["width_mm"]),
                wall_height_mm=float(wall["height_mm"]),
                width_px=int(raster["width_px"]),
                height_px=int(raster["height_px"]),
                mm_per_px=float(raster["mm_per_px"]),
                palette=palette,
                ground=str(doc["ground"]["paint"]),
                layers=layers,
                extra={
                    k: v
                    for k, v in doc.items()
                    if k not in ("format", "version", "wall", "raster", "palette", "ground", "layers")
                },
                wall_unit=unit,
            )
        except (KeyError, TypeError, IndexError, ValueError, OverflowError) as exc:
            # ValueError: a number or a path that does not parse ("abc", [[1, 2, 3]]); OverflowError:
            # a number too large for a float or an int (1e999 px)
            raise ValueError(f"plan.json is missing or has a malformed field: {_cut(str(exc))}") from exc
        ids = plan.paint_index()
        if plan.ground not in ids:
            raise ValueError(f"ground paint {_said(plan.ground)} is not in the palette")
        for n, layer in enumerate(plan.layers):
            for s in layer.strokes:
                if s.paint not in ids:
                    raise ValueError(f"layer {n + 1}: stroke paint {_said(s.paint)} is not in the palette")
        _check_sizes(plan)
        return plan

    @classmethod
    def from_json(cls, text: str) -> "Plan":
        """Read plan.json text (see :meth:`from_dict`).

        Raises
        ------
        ValueError
            Not JSON (or nested too deep to read, or a number of thousands of digits), or
            any reason of :meth:`from_dict`.
        """
        try:
            doc = json.loads(text)
        except RecursionError:
            raise ValueError("plan.json is not a plan: arrays or objects nested too deep to read") from None
        except ValueError as exc:  # JSONDecodeError, or an integer past Python's 4300-digit limit
            raise ValueError(f"plan.json is not valid JSON: {_cut(str(exc))}") from None
        return cls.from_dict(doc)


def _cut(text: str, limit: int = 300) -> str:
    return text if len(text) <= limit else text[:limit - 1] + "…"


def _said(value) -> str:
    """A value as a message repeats it, cut short (a hostile file may hold megabytes in one field)."""
    text = repr(value) if not isinstance(value, (dict, list)) else f"a {type(value).__name__}"
    return _cut(text, 40)


def _finite(x) -> bool:
    return isinstance(x, float) and math.isfinite(x)


def _check_sizes(plan: "Plan") -> None:
    """The limits of :data:`LIMITS`, on a plan read from a file (names the field and its bound)."""
    for name, mm in (("wall.width_mm", plan.wall_width_mm), ("wall.height_mm", plan.wall_height_mm)):
        if not _finite(mm) or not 0 < mm <= LIMITS["wall_mm"]:
            raise ValueError(f"plan.json {name} must be > 0 and at most {LIMITS['wall_mm'] / 1000:g} m, "
                             f"got {_said(mm)}")
    s, w_px, h_px = plan.mm_per_px, plan.width_px, plan.height_px
    if not _finite(s) or s <= 0:
        raise ValueError(f"plan.json raster.mm_per_px must be a number > 0, got {_said(s)}")
    if w_px < 1 or h_px < 1 or w_px * h_px > LIMITS["raster_px"]:
        raise ValueError(f"plan.json raster of {_said(w_px)}x{_said(h_px)} px: each side must be at least 1 px "
                         f"and the whole at most {LIMITS['raster_px'] / 1e6:g} megapixels")
    # the raster is the wall divided into pixels (layerplan.settings.raster_size); a pixel's slack
    # either way, and 1 %, allow for rounding and for files written by other tools
    for side, mm, px in (("width", plan.wall_width_mm, w_px), ("height", plan.wall_height_mm, h_px)):
        if abs(px * s - mm) > s + 0.01 * mm:
            raise ValueError(f"plan.json raster {side} of {px} px at {s:g} mm a pixel is {px * s:g} mm, but the "
                             f"wall is {mm:g} mm {'wide' if side == 'width' else 'high'}")
    if not plan.palette or len(plan.palette) > LIMITS["paints"]:
        raise ValueError(f"plan.json palette must have 1 to {LIMITS['paints']:g} paints, got {len(plan.palette)}")
    for p in plan.palette:
        try:
            p.rgb
        except (ValueError, AttributeError):
            raise ValueError(f"plan.json paint {_said(p.id)}: srgb is not a hex colour (#rrggbb): "
                             f"{_said(p.srgb)}") from None
        if len(p.lab) != 3 or not all(math.isfinite(v) for v in p.lab):
            raise ValueError(f"plan.json paint {_said(p.id)}: lab must be three finite numbers")
    if len(plan.layers) > LIMITS["layers"]:
        raise ValueError(f"plan.json has {len(plan.layers)} layers; at most {LIMITS['layers']:g} (one a brush)")
    strokes = points = 0
    margin = max(plan.wall_width_mm, plan.wall_height_mm)  # strokes may overhang the edge, not go far off
    lo, hi = LIMITS["brush_min_mm"], LIMITS["brush_max_mm"]
    for n, layer in enumerate(plan.layers, start=1):
        if not _finite(layer.brush_width_mm) or not lo <= layer.brush_width_mm <= hi:
            raise ValueError(f"plan.json layer {n}: brush width must be from {lo:g} to {hi:g} mm, "
                             f"got {_said(layer.brush_width_mm)}")
        strokes += len(layer.strokes)
        if strokes > LIMITS["strokes"]:
            raise ValueError(f"plan.json has more than {LIMITS['strokes']:,.0f} strokes")
        for k, st in enumerate(layer.strokes, start=1):
            where = f"plan.json layer {n}, stroke {k}"
            if not _finite(st.width_mm) or not lo <= st.width_mm <= hi:
                raise ValueError(f"{where}: width must be from {lo:g} to {hi:g} mm, got {_said(st.width_mm)}")
            if st.coats > LIMITS["coats"]:
                raise ValueError(f"{where}: coats must be from 1 to {LIMITS['coats']:g}, got {_said(st.coats)}")
            path = st.path_mm
            points += len(path)
            if len(path) < 1:
                raise ValueError(f"{where}: path_mm must have at least one point")
            if points > LIMITS["points"]:
                raise ValueError(f"plan.json has more than {LIMITS['points']:,.0f} stroke points")
            if not np.isfinite(path).all():
                raise ValueError(f"{where}: path_mm must be finite numbers")
            if (path < -margin).any() or (path[:, 0] > plan.wall_width_mm + margin).any() \
                    or (path[:, 1] > plan.wall_height_mm + margin).any():
                raise ValueError(f"{where}: path_mm goes more than a wall's size off the wall")
    _check_inventory(plan.extra.get("inventory"))


def _check_inventory(entries) -> None:
    """plan.json ``inventory``: container sizes as an inventory file allows them (they are tried one by one)."""
    if entries is None:
        return
    if not isinstance(entries, list) or len(entries) > LIMITS["inventory"]:
        raise ValueError(f"plan.json inventory must be a list of at most {LIMITS['inventory']:g} paints")
    lo, hi = LIMITS["container_min_l"], LIMITS["container_max_l"]
    for i, e in enumerate(entries, start=1):
        sizes = e.get("containers_l", []) if isinstance(e, Mapping) else []
        if not isinstance(sizes, list) or len(sizes) > LIMITS["container_sizes"]:
            raise ValueError(f"plan.json inventory paint {i}: containers_l must list at most "
                             f"{LIMITS['container_sizes']:g} sizes")
        for c in sizes:
            if isinstance(c, bool) or not isinstance(c, (int, float)) or not lo <= c <= hi:
                raise ValueError(f"plan.json inventory paint {i}: container sizes must be from {lo:g} to {hi:g} "
                                 f"litres, got {_said(c)}")


def _whole_coats(value) -> int:
    """A coats value as an int (numpy integers too); bools, fractions and text are refused."""
    if isinstance(value, (bool, np.bool_)) or not isinstance(value, (int, np.integer)):
        raise ValueError(f"stroke coats must be a whole number >= 1, got {value!r}")
    return int(value)


def _read_coats(value, layer: int, stroke: int) -> int:
    """plan.json's ``coats`` of one stroke, checked (JSON integers only: 2, not 2.0 or "2")."""
    if isinstance(value, bool) or not isinstance(value, int) or value < 1:
        raise ValueError(f"layer {layer}, stroke {stroke}: coats must be a whole number >= 1, got {value!r}")
    return value


def _num(x: float) -> float | int:
    """A float rounded to 0.01 for the file (keeps files small and stable)."""
    v = round(float(x), 2)
    if not math.isfinite(v):
        raise ValueError(f"non-finite number in plan: {x}")
    return v


def hex_to_rgb(text: str) -> tuple[int, int, int]:
    """``"#rrggbb"`` -> (r, g, b) integers.

    Raises
    ------
    ValueError
        If ``text`` is not a 6-digit hex colour.
    """
    s = text.strip().lstrip("#")
    if len(s) == 3:
        s = "".join(c * 2 for c in s)
    if len(s) != 6 or any(c not in "0123456789abcdefABCDEF" for c in s):
        raise ValueError(f"not a hex colour (#rrggbb): {text!r}")
    return int(s[0:2], 16), int(s[2:4], 16), int(s[4:6], 16)


def rgb_to_hex(rgb) -> str:
    """(r, g, b) 0–255 -> ``"#rrggbb"``."""
    r, g, b = (int(v) for v in rgb)
    return f"#{r:02x}{g:02x}{b:02x}"
