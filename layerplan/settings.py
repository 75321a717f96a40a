"""Planning settings, validated once at the edge (CLI, web, library callers)."""

from __future__ import annotations

import math
from dataclasses import asdict, dataclass, field, replace
from typing import Any

#: default brush kit, mm: a 100 mm block-in brush down to a 12 mm detail brush (common practice
#: for wall work: 4", 2", 1", 1/2" flats)
DEFAULT_BRUSHES_MM: tuple[float, ...] = (100.0, 50.0, 25.0, 12.0)
#: default wall width when none is given
DEFAULT_WALL_WIDTH_MM = 3000.0
#: the narrowest brush should span at least this many working pixels
MIN_PX_PER_BRUSH = 3.0
#: default cap on the working raster, pixels (keeps planning within memory and minutes)
MAX_RASTER_PX = 2_000_000
#: hard limit for an explicit --pixel-mm
HARD_MAX_RASTER_PX = 8_000_000
MIN_PAINTS, MAX_PAINTS = 2, 32
MAX_BRUSHES = 8
#: largest wall side we accept, mm (100 m: bigger than any mural wall we expect)
MAX_WALL_MM = 100_000.0
#: smallest working raster side, px (below it a plan cannot show anything)
MIN_RASTER_SIDE_PX = 8
FITS = ("cover", "contain")
#: ΔE00 a stroke must remove per (brush width)² of wall. Our choice between fidelity and work on the
#: ladder: on the bench photos it keeps plans near 1.1 × the palette's floor with a fifth or less of the
#: strokes of the Hertzmann (1998) baseline (bench/results.md); lower it for more detail, raise it for fewer strokes
DEFAULT_STROKE_COST = 5.5
#: side of a work zone, mm: about what a painter reaches from one ladder or scaffold-tower or lift position
#: (common practice, from memory: an arm's span either side and a little over head height)
DEFAULT_REACH_MM = 2000.0


@dataclass(frozen=True)
class Settings:
    """Everything that decides a plan besides the photo.

    Parameters
    ----------
    wall_width_mm : float
        Width of the painted surface.
    wall_height_mm : float or None
        Height; ``None`` takes it from the photo's aspect ratio.
    wall_unit : str
        Unit the painter gave the size in (``m``, ``cm``, ``mm``, ``ft``, ``in``); display only.
    fit : {"cover", "contain"}
        ``cover`` scales the photo to cover the wall and centre-crops; ``contain``
        fits it inside and pads with the ground paint.
    paints : int
        Size of the finite paint set, 2–32.
    brushes_mm : tuple of float
        Brush widths; one layer per brush, widest first.
    mm_per_px : float or None
        Wall size of one working pixel; ``None`` picks one (see :func:`choose_mm_per_px`).
    seed : int
        Seed for every random choice: same inputs and seed give the same plan.
    stroke_cost : float
        What a stroke must earn: the ΔE00 it removes, summed over its pixels, must exceed
        ``stroke_cost`` × (brush width in pixels)².
    inventory : str or None
        Path of the painter's inventory file (TOML, see :mod:`layerplan.inventory`);
        ``None`` mixes from the default set shipped with layerplan.
    free_palette : bool
        ``True`` keeps the raw k-means colours (each with its nearest recipe); by default the
        paints are chosen among the colours the inventory mixes (recipes are reported either way).
    mix_paints : int
        At most this many inventory paints per mix recipe (1–4).
    max_parts : int
        Whole parts of a recipe add up to at most this (1–30).
    tolerance_de : float
        A paint counts as mixable when its recipe is within this CIEDE2000 (0–100).
    reach_mm : float
        Side of a square work zone (one ladder or lift position): each paint's strokes in a
        layer are painted zone by zone (:func:`layerplan.order.short_travel`).
    openings : tuple of (x_mm, y_mm, width_mm, height_mm)
        Windows, doors and vents: rectangles of the wall, top-left corner from the wall's
        top-left, that are not painted (:mod:`layerplan.openings`).
    wall_colour : str or None
        The colour the wall is already painted, ``#rrggbb`` or ``L,a,b`` (CIELAB); ``None``
        when not known (:mod:`layerplan.openings`, :func:`~layerplan.openings.wall_ground`).
    surface : str or None
        A named sheet or board (a key of :data:`layerplan.surfaces.SURFACES`): sets the size
        (turned to follow the photo), small brushes unless others are given, the classroom
        paint set unless an inventory is given, and millilitre amounts.
    paint_set : {"basic", "classroom"} or None
        The built-in set recipes are mixed from when no inventory is given; ``None``: the
        classroom set on a sheet or board, the basic set otherwise.
    simple_mixes : bool
        Plan only with stock paints and two-paint mixes of at most
        :data:`layerplan.surfaces.SIMPLE_MAX_PARTS` parts, which students mix themselves.
    value_study : int
        0, or the number of greys (3–10) of a value study mixed from the set's black and white.
    students, spares, period_minutes
        A class: how many students paint it (None: no class), spare sheets as a share of
        them, and the length of a class period in minutes (None: the defaults of
        :mod:`layerplan.classroom`, 10 % and 45 minutes).
    """

    wall_width_mm: float = DEFAULT_WALL_WIDTH_MM
    wall_height_mm: float | None = None
    wall_unit: str = "m"
    fit: str = "cover"
    paints: int = 8
    brushes_mm: tuple[float, ...] = DEFAULT_BRUSHES_MM
    mm_per_px: float | None = None
    seed: int = 0
    stroke_cost: float = DEFAULT_STROKE_COST
    inventory: str | None = None
    free_palette: bool = False
    mix_paints: int = 3  # the solver's defaults (layerplan.recipes): 3 paints, 10 parts, ΔE00 3
    max_parts: int = 10
    tolerance_de: float = 3.0
    reach_mm: float = DEFAULT_REACH_MM
    openings: tuple[tuple[float, float, float, float], ...] = ()
    wall_colour: str | None = None
    # --- classroom: sheet surfaces, a class, a limited set, value studies (layerplan.surfaces, .classroom)
    surface: str | None = None
    paint_set: str | None = None
    simple_mixes: bool = False
    value_study: int = 0
    students: int | None = None
    spares: float | None = None  # None: layerplan.classroom.SPARE_SHARE
    period_minutes: float | None = None  # None: layerplan.classroom.PERIOD_MINUTES
    extra: dict[str, Any] = field(default_factory=dict, compare=False)

    def validated(self) -> "Settings":
        """Return a checked, normalised copy (brushes sorted widest first).

        Each field is checked by its option (:mod:`layerplan.options`), so a library caller,
        the command line and the web app get the same bounds.

        Raises
        ------
        layerplan.options.OptionError
            A ``ValueError`` naming the setting and the bad value.
        """
        from .options import OPTIONS, check_settings  # late: options imports this module

        from .surfaces import with_classroom  # late: keeps this module free of the surface table

        check_settings(self)
        return with_classroom(replace(self, brushes_mm=OPTIONS["brushes"].check(self.brushes_mm)))

    def to_dict(self) -> dict[str, Any]:
        d = asdict(self)
        d["brushes_mm"] = list(self.brushes_mm)
        # a wall with no openings and no known colour writes the settings it always did
        d["openings"] = [list(o) for o in self.openings]
        for key in ("openings", "wall_colour"):
            if not d[key]:
                d.pop(key)
        extra = d.pop("extra")
        # the classroom fields are written only when used, so a wall plan's file is as before
        for key in _CLASSROOM_FIELDS:
            if d[key] == getattr(Settings, key):
                del d[key]
        d.update(extra)
        return d


#: the classroom fields of :class:`Settings`, left out of :meth:`Settings.to_dict` at their defaults
_CLASSROOM_FIELDS = ("surface", "paint_set", "simple_mixes", "value_study", "students", "spares", "period_minutes")


def choose_mm_per_px(wall_width_mm: float, wall_height_mm: float, narrowest_brush_mm: float,
                     *, max_px: int = MAX_RASTER_PX) -> float:
    """Default working-pixel size.

    Fine enough that the narrowest brush spans ``MIN_PX_PER_BRUSH`` pixels, but no finer
    than keeps the raster within ``max_px`` pixels. Rounded up to 0.01 mm.
    """
    s = narrowest_brush_mm / MIN_PX_PER_BRUSH
    s = max(s, math.sqrt(wall_width_mm * wall_height_mm / max_px))
    return math.ceil(s * 100.0 - 1e-9) / 100.0


def raster_size(wall_width_mm: float, wall_height_mm: float, mm_per_px: float) -> tuple[int, int]:
    """(width_px, height_px) of the working raster: the wall divided into whole pixels."""
    return max(1, int(round(wall_width_mm / mm_per_px))), max(1, int(round(wall_height_mm / mm_per_px)))


def working_raster(settings: Settings, image_shape) -> tuple[float, float, float, int, int]:
    """Wall size and working raster for a photo: ``(wall_w_mm, wall_h_mm, mm_per_px, width_px, height_px)``.

    A missing wall height follows the photo's aspect ratio; a missing pixel size comes from
    :func:`choose_mm_per_px`. The limits (``MAX_WALL_MM``, ``HARD_MAX_RASTER_PX``,
    ``MIN_RASTER_SIDE_PX``) are checked by :func:`layerplan.options.check_raster`, for every caller.
    """
    h, w = image_shape[:2]
    wall_w = float(settings.wall_width_mm)
    wall_h = float(settings.wall_height_mm) if settings.wall_height_mm is not None else wall_w * h / w
    if getattr(settings, "surface", None):  # a named sheet or board turns to follow the photo
        from .surfaces import surface

        wall_w, wall_h = surface(settings.surface).oriented(image_shape)
    s = settings.mm_per_px or choose_mm_per_px(wall_w, wall_h, min(settings.brushes_mm))
    width_px, height_px = raster_size(wall_w, wall_h, s)
    return wall_w, wall_h, s, width_px, height_px
