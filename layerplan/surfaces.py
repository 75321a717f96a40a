"""Sheet and board surfaces: the papers and canvas boards a class paints on, by name.

``--surface a3`` sets the painted surface to an A3 sheet, turned to follow the photo (portrait
for a tall photo, landscape for a wide one), with the small brushes a sheet is painted with and
millilitre amounts instead of tins. The names are the sizes' own (ISO 216 A sizes, ANSI/ASME
Y14.1 Letter and Tabloid) and canvas boards by their nominal size; they are read ignoring case.

This module imports nothing heavy: the option spec reads it.

References
----------
.. [1] ISO 216:2007, Writing paper and certain classes of printed matter - Trimmed sizes - A and B
   series (A4 = 210 × 297 mm, A3 = 297 × 420 mm, A2 = 420 × 594 mm).
.. [2] ANSI/ASME Y14.1-2020, Decimal inch drawing sheet size and format (Letter = 8.5 × 11 in,
   Tabloid = 11 × 17 in).
.. [3] International Yard and Pound Agreement (1959): 1 in = 25.4 mm exactly.
"""

from __future__ import annotations

from dataclasses import dataclass

#: inch in mm, exact (international yard and pound agreement, 1959)
_IN = 25.4


@dataclass(frozen=True)
class Surface:
    """A named sheet or board.

    Attributes
    ----------
    key : str
        The name ``--surface`` takes (lower case).
    label : str
        How the form and the printed plan name it.
    short_mm, long_mm : float
        Its sides, shorter first.
    unit : str
        The unit it is sold in (``mm``, ``in`` or ``cm``): the plan's lengths are said in it.
    kind : str
        ``sheet`` (paper) or ``board`` (canvas board): the word the printed plan uses for it.
    source : str
        Where the size comes from.
    """

    key: str
    label: str
    short_mm: float
    long_mm: float
    unit: str
    kind: str
    source: str

    def oriented(self, image_shape) -> tuple[float, float]:
        """(width_mm, height_mm) turned to follow the photo: portrait when it is taller than wide."""
        h, w = image_shape[:2]
        return (self.short_mm, self.long_mm) if h > w else (self.long_mm, self.short_mm)


SURFACES: dict[str, Surface] = {s.key: s for s in (
    Surface("a4", "A4 sheet (210 × 297 mm)", 210.0, 297.0, "mm", "sheet", "ISO 216"),
    Surface("a3", "A3 sheet (297 × 420 mm)", 297.0, 420.0, "mm", "sheet", "ISO 216"),
    Surface("a2", "A2 sheet (420 × 594 mm)", 420.0, 594.0, "mm", "sheet", "ISO 216"),
    Surface("letter", "Letter sheet (8.5 × 11 in)", 8.5 * _IN, 11 * _IN, "in", "sheet", "ANSI/ASME Y14.1"),
    Surface("tabloid", "Tabloid sheet (11 × 17 in)", 11 * _IN, 17 * _IN, "in", "sheet", "ANSI/ASME Y14.1"),
    # canvas boards by their nominal size, as they are commonly sold (common practice, from memory)
    Surface("board-8x10in", "Canvas board 8 × 10 in", 8 * _IN, 10 * _IN, "in", "board", "common practice"),
    Surface("board-9x12in", "Canvas board 9 × 12 in", 9 * _IN, 12 * _IN, "in", "board", "common practice"),
    Surface("board-11x14in", "Canvas board 11 × 14 in", 11 * _IN, 14 * _IN, "in", "board", "common practice"),
    Surface("board-24x30cm", "Canvas board 24 × 30 cm", 240.0, 300.0, "cm", "board", "common practice"),
    Surface("board-30x40cm", "Canvas board 30 × 40 cm", 300.0, 400.0, "cm", "board", "common practice"),
)}

#: brushes a sheet or board is painted with when none are given, mm: a 25 mm flat for the big
#: areas, 12 mm and 6 mm for detail (common practice for school brush sets: 1", 1/2", 1/4")
SHEET_BRUSHES_MM: tuple[float, ...] = (25.0, 12.0, 6.0)


def surface(name: str) -> Surface:
    """The surface called ``name`` (case ignored).

    Raises
    ------
    ValueError
        An unknown name; the message lists the known ones.
    """
    key = str(name).strip().lower()
    if key not in SURFACES:
        raise ValueError(f"surface must be one of {', '.join(SURFACES)}, got {name!r}")
    return SURFACES[key]


def noun(settings_or_dict) -> str:
    """What the printed plan calls the painted surface: ``sheet``, ``board`` or ``wall``."""
    key = settings_or_dict.get("surface") if isinstance(settings_or_dict, dict) \
        else getattr(settings_or_dict, "surface", None)
    if not key or str(key).lower() not in SURFACES:
        return "wall"
    return SURFACES[str(key).lower()].kind


#: built-in paint sets (``--paint-set``): the inventory file under ``layerplan/data``
PAINT_SETS: dict[str, str] = {"basic": "default_inventory.toml", "classroom": "classroom_inventory.toml"}
#: a simple mix students make themselves: two paints, at most this many parts in all (1 : 1, 2 : 1,
#: 3 : 1; our choice: ratios a child measures with a spoon without counting past four)
SIMPLE_MAX_PARTS = 4
#: most greys of a value study (a ten-step scale, white to black, is the usual long one; common practice)
MAX_VALUE_STEPS = 10


def paint_set_path(name: str) -> str:
    """The file of a built-in paint set (shipped as package data, copy it to edit)."""
    from importlib import resources

    return str(resources.files("layerplan").joinpath("data", PAINT_SETS[name]))


def with_classroom(settings):
    """Settings with a named surface, paint set, simple mixes and value study applied.

    A surface sets the size (landscape here; :func:`layerplan.settings.working_raster` turns it to
    follow the photo), the unit it is sold in and, when the brushes are the wall defaults,
    :data:`SHEET_BRUSHES_MM`. With no inventory file, the paint set's file is used (the classroom
    set on a surface). Simple mixes cap the paints per mix at 2 and the parts at
    :data:`SIMPLE_MAX_PARTS`; a value study of N greys plans with N paints. Applying it twice changes nothing.

    Raises
    ------
    layerplan.options.OptionError
        A value study of 1 or 2 greys, or over :data:`MAX_VALUE_STEPS`; students without a surface.
    """
    from dataclasses import replace

    from .options import OptionError
    from .settings import DEFAULT_BRUSHES_MM

    changes = {}
    if settings.surface:
        s = surface(settings.surface)
        changes.update(surface=s.key, wall_width_mm=s.long_mm, wall_height_mm=s.short_mm, wall_unit=s.unit)
        if tuple(settings.brushes_mm) == DEFAULT_BRUSHES_MM:
            changes["brushes_mm"] = SHEET_BRUSHES_MM
    chosen = settings.paint_set or ("classroom" if settings.surface else None)
    if chosen is not None and settings.inventory is None:
        changes["inventory"] = paint_set_path(chosen)
    if settings.simple_mixes:
        changes.update(mix_paints=min(settings.mix_paints, 2), max_parts=min(settings.max_parts, SIMPLE_MAX_PARTS))
    n = settings.value_study
    if n and not 3 <= n <= MAX_VALUE_STEPS:
        raise OptionError("value_study", f"{{name}} must be 0 (none) or from 3 to {MAX_VALUE_STEPS} greys, got {n}")
    if settings.students and not settings.surface:
        # a class's figures are one sheet or board per student; a class painting one wall together is a wall plan
        raise OptionError("students", "{name} plans one sheet or board per student: name the surface too (a4, a3, "
                                      "letter, a board...), or leave the students out for a wall the class paints "
                                      "together")
    if n:  # a value study's paints are its greys
        changes["paints"] = n
    return replace(settings, **changes) if changes else settings
