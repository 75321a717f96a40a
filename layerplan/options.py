"""Every planning, mixing, quantity and print option, declared once.

Each :class:`Option` gives a name, how its text is read (one parser per kind: whole
numbers, numbers, fractions, lengths, choices), its bounds, default and help, its
command-line flag and its web form field (the JSON API takes the same fields) and label.
The command line (:mod:`layerplan.cli`, :func:`layerplan.cli_paints.add_mix_options`),
the web form (:mod:`layerplan.web.forms`), the API's field table (:mod:`layerplan.web.api`)
and the README's option table are all made from :data:`OPTIONS`, so they cannot disagree.

A bad value raises :class:`OptionError`, which carries the option's name: each front end
names the option its own way (``--grid`` on the command line, "Transfer-grid spacing" on
the start page) without reading the message. :func:`check_plan` checks the whole set
together (grid squares against the wall, the working raster, the mix table an inventory
makes) once the photo's shape is known, before any planning.

Fractions and percentages are read one way everywhere: ``15%`` (a percent sign) or a
plain fraction ``0.15``. A plain number above 1 is refused rather than guessed, since
reading ``15`` as 15 % or as 1500 % would each be wrong for somebody.

This module imports nothing heavy (no numpy, numba, Flask): ``layerplan --help`` reads it.

Run ``python -m layerplan.options --write`` to rewrite the README's option table and the
API docstring's field table after changing an option (``--check`` only compares).
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Callable, Iterable, Mapping

from . import units
from .classroom import PERIOD_MINUTES, SPARE_SHARE
from .surfaces import MAX_VALUE_STEPS, PAINT_SETS, SIMPLE_MAX_PARTS, SURFACES
from .settings import (DEFAULT_WALL_WIDTH_MM, FITS, HARD_MAX_RASTER_PX, MAX_BRUSHES, MAX_PAINTS, MAX_WALL_MM,
                       MIN_PAINTS, MIN_RASTER_SIDE_PX, Settings)

# Limits and defaults owned by heavy modules (recipes and quantities import numba, svg imports
# svgwrite and numpy). They are repeated here so that reading the options stays light;
# tests/test_options.py checks that each copy equals its source.
#: recipes.MAX_MIX_PAINTS, MAX_PARTS_LIMIT, MAX_TOLERANCE_DE
MAX_MIX_PAINTS, MAX_PARTS, MAX_TOLERANCE_DE = 4, 30, 100.0
#: quantities.COVERAGE_M2_PER_L (≈ 350–400 sq ft per US gallon; common practice), WASTE (10–15 %,
#: common practice), GROUND_COATS (two for an even ground, common practice), STROKE_COATS
COVERAGE_M2_PER_L, WASTE, GROUND_COATS, STROKE_COATS = 10.0, 0.15, 2, 1
#: svg.MAX_GRID_LINES: most transfer-grid squares along the longest side
MAX_GRID_SQUARES = 200
#: sheets.PAPERS and DEFAULT_PAPER: the papers plan.html can be laid out for (A4 and Letter share a
#: layout, as do A3 and Tabloid)
PAPERS, DEFAULT_PAPER = ("a4", "letter", "a3", "tabloid"), "a4"
#: sheets.MAX_ENLARGEMENTS_PER_LAYER: most enlargement sheets of one layer by default; and the most we
#: allow (about 30 KB of plan.html each: 400 is some 12 MB a layer)
ENLARGEMENTS_PER_LAYER, MAX_ENLARGEMENTS_PER_LAYER = 24, 400
#: overlap of neighbouring panels by default, mm: a band to glue or trim (our choice, from memory of cloth
#: and board murals: a few centimetres)
PANEL_OVERLAP_MM = 50.0
#: --detail's words and the stroke cost each stands for (ΔE00 per brush-width square), chosen from
#: the bench's sweep of stroke costs (bench/results.md): medium is the default stroke cost
DETAIL_STROKE_COST = {"broad": 8.0, "medium": 5.5, "fine": 1.0}
#: upper bound on a seed, so it stays an ordinary integer everywhere
MAX_SEED = 2**32 - 1
#: most coats of the ground or of any stroke: two or three is the rule, a deep red on black may take
#: five (common practice); ten leaves room and keeps litres and painting times ordinary numbers
MAX_COATS = 10
#: spreading rates we accept, m²/L: tins say about 6 to 16 (common practice, from memory); 0.5 is a
#: thick textured coating, 100 nothing sold for walls. The floor also keeps litres finite.
MIN_COVERAGE_M2_PER_L, MAX_COVERAGE_M2_PER_L = 0.5, 100.0
#: highest stroke cost: at 1000 ΔE00 per brush-width square no stroke is worth painting any more
MAX_STROKE_COST = 1000.0
#: smallest work zone, mm (less than an arm's reach means nothing to a painter)
MIN_REACH_MM = 100.0
#: smallest transfer-grid square, mm (a chalk line is about that wide)
MIN_GRID_MM = 1.0
#: narrowest brush, mm (a fine liner; common practice)
MIN_BRUSH_MM = 1.0
#: longest text an option takes as typed (a wall size or a brush kit is a few dozen characters):
#: longer text is refused unread, so a pasted page is neither parsed nor repeated back
MAX_TEXT_CHARS = 200
#: longest inventory path (PATH_MAX on Linux)
MAX_PATH_CHARS = 4096
#: longest value a message repeats whole; longer ones are cut and measured (see :func:`shown`)
SHOWN_CHARS = 40
#: most students of one class plan (a year group painting together; our bound), and the shortest and
#: longest class period we plan for, minutes (our bounds)
MAX_STUDENTS, MIN_PERIOD_MINUTES, MAX_PERIOD_MINUTES = 500, 10.0, 240.0

#: first and last line of the generated tables in README.md and layerplan/web/api.py
TABLE_START = "<!-- options table: made by `python -m layerplan.options --write`; edit layerplan/options.py -->"
TABLE_END = "<!-- end of options table -->"


class OptionError(ValueError):
    """A bad option value, or options that do not go together.

    Parameters
    ----------
    option : str
        Name of the option at fault (a key of :data:`OPTIONS`).
    problem : str
        The message, with ``{name}`` where the option is named and ``{unit}`` where its
        unit is said when the name does not say it (a flag or a form label does).
    field : str, optional, keyword-only
        The web form field at fault when it is not the option's own (the wall has three).
    noun : str, optional, keyword-only
        A closer name than the option's own (``wall height`` for the wall).

    ``str(exc)`` names the option in plain words (for library callers);
    :meth:`cli_message` and :meth:`form_message` name it as each front end does.
    """

    def __init__(self, option: str, problem: str, *, field: str | None = None, noun: str | None = None):
        self.option = option
        self.problem = problem
        self.noun = noun
        spec = OPTIONS[option]
        self.field = field or spec.field
        super().__init__(self.message_for(noun or spec.noun, unit=spec.unit))

    def message_for(self, name: str, *, unit: str = "") -> str:
        """The message with the option called ``name``."""
        return self.problem.replace("{name}", name).replace("{unit}", f" {unit}" if unit else "")

    @property
    def flag(self) -> str:
        """The command-line flag of the option at fault."""
        return OPTIONS[self.option].flag

    def cli_message(self) -> str:
        """The message naming the command-line flag (``--grid of 1 mm gives ...``)."""
        if "{name}" not in self.problem or self.noun is not None:
            return f"{self.flag}: {self}"
        return self.message_for(self.flag)

    def form_message(self, label: str) -> str:
        """The message naming the form field by its ``label``."""
        if "{name}" not in self.problem:
            return f"{label}: {self}"
        return self.message_for(label)


# ------------------------------------------------------------------------------ readers
_DIGITS_RE = re.compile(r"[-+]?\d+(?:\.\d*)?")


def shown(value) -> str:
    """A value as a message repeats it: short ones whole, long ones cut and measured.

    ``'15%'`` stays ``'15%'``; a 100,000-character field reads ``a 100,000-digit number``
    or ``'xxxx…' (100,000 characters)``, so a refusal never sends kilobytes back.
    """
    if isinstance(value, bool) or value is None:
        return repr(value)
    if isinstance(value, int):
        try:
            digits = len(str(abs(value)))
        except ValueError:  # past Python's limit on int-to-text conversion (4300 digits)
            return f"a number of about {int(value.bit_length() * math.log10(2)) + 1:,} digits"
        return repr(value) if digits <= SHOWN_CHARS else f"a {digits:,}-digit number"
    if isinstance(value, float):
        return f"{value:g}"
    if isinstance(value, str):
        t = value.strip()
        if len(t) <= SHOWN_CHARS:
            return repr(t)
        if _DIGITS_RE.fullmatch(t):
            return f"a {len(t.lstrip('+-').split('.')[0]):,}-digit number"
        return f"{t[:SHOWN_CHARS - 10]!r}… ({len(t):,} characters)"
    text = repr(value)
    return text if len(text) <= SHOWN_CHARS else f"{text[:SHOWN_CHARS - 10]}… ({len(text):,} characters)"


def _is_finite(value) -> bool:
    """``math.isfinite`` that says False for an int too large for a float instead of raising."""
    try:
        return math.isfinite(value)
    except OverflowError:
        return False


def _show(text: str) -> str:
    return shown(text)


def _bounds_rule(opt: "Option") -> str:
    lo, hi = opt.minimum, opt.maximum
    if opt.kind == "whole":
        return f"a whole number from {lo:.0f} to {hi:.0f}" if hi is not None else f"a whole number >= {lo:.0f}"
    if hi is not None:
        if opt.strict:
            return f"> {lo:g} and at most {hi:g}{{unit}}"
        return f"from {lo:g} to {hi:g}{{unit}}"
    return f"{'>' if opt.strict else '>='} {lo:g}{{unit}}"


def _in_bounds(opt: "Option", value: float) -> bool:
    if opt.minimum is not None and (value <= opt.minimum if opt.strict else value < opt.minimum):
        return False
    return opt.maximum is None or value <= opt.maximum


def _read_whole(opt: "Option", text: str) -> int:
    try:
        value = int(text.strip())
    except ValueError:
        raise OptionError(opt.name, f"{{name}} must be {_bounds_rule(opt)}, got {_show(text)}") from None
    return _check_whole(opt, value)


def _check_whole(opt: "Option", value) -> int:
    if isinstance(value, bool) or not isinstance(value, int) or not _in_bounds(opt, value):
        raise OptionError(opt.name, f"{{name}} must be {_bounds_rule(opt)}, got {shown(value)}")
    return value


def _read_number(opt: "Option", text: str) -> float:
    try:
        value = float(text.strip())
    except ValueError:
        raise OptionError(opt.name, f"{{name}} must be a number, got {_show(text)}") from None
    if not math.isfinite(value):
        if _DIGITS_RE.match(text.strip()):  # digits too many for a float: out of bounds, not "inf"
            raise OptionError(opt.name, f"{{name}} must be {_bounds_rule(opt)}, got {_show(text)}")
        raise OptionError(opt.name, f"{{name}} must be a finite number, got {_show(text)}")
    return _check_number(opt, value)


def _check_number(opt: "Option", value) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise OptionError(opt.name, f"{{name}} must be a number, got {shown(value)}")
    if isinstance(value, int) and not _is_finite(value):
        raise OptionError(opt.name, f"{{name}} must be {_bounds_rule(opt)}, got {shown(value)}")
    if not math.isfinite(value):
        raise OptionError(opt.name, f"{{name}} must be a finite number, got {value!r}")
    if not _in_bounds(opt, value):
        raise OptionError(opt.name, f"{{name}} must be {_bounds_rule(opt)}, got {shown(float(value))}")
    return float(value)


_FRACTION_RULE = "a fraction or a percentage (0 to 1, or 0% to 100%), such as 0.15 or 15%"


def _read_fraction(opt: "Option", text: str) -> float:
    t = text.strip()
    percent = t.endswith("%")
    try:
        value = float(t[:-1].strip() if percent else t)
    except ValueError:
        raise OptionError(opt.name, f"{{name}} must be {_FRACTION_RULE}, got {_show(text)}") from None
    if not math.isfinite(value):
        raise OptionError(opt.name, f"{{name}} must be {_FRACTION_RULE}, got {_show(text)}")
    if not percent and value > 1:  # 15 could mean 15 % or 1500 %: ask rather than guess
        hint = f" (for {value:g} percent write {value:g}%)" if value <= 100 else ""
        raise OptionError(opt.name, f"{{name}} must be {_FRACTION_RULE}, got {_show(text)}{hint}")
    return _check_fraction(opt, value / 100.0 if percent else value, typed=t)


def _check_fraction(opt: "Option", value, *, typed: str | None = None) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not _is_finite(value) \
            or not 0 <= value <= 1:
        said = shown(value if typed is None else typed)
        raise OptionError(opt.name, f"{{name}} must be {_FRACTION_RULE}, got {said}")
    return float(value)


def _length_bounds(opt: "Option", mm: float, said: str) -> float:
    """A length in mm against the option's bounds (lengths have no range word: the side at fault is said)."""
    if opt.minimum is not None and mm < opt.minimum:
        raise OptionError(opt.name, f"{{name}} must be at least {opt.minimum:g} mm, got {said}")
    if opt.maximum is not None and mm > opt.maximum:
        raise OptionError(opt.name, f"{{name}} must be at most {opt.maximum / 1000:g} m, got {said}")
    return mm


def _read_length(opt: "Option", text: str) -> float:
    try:
        mm = units.parse_length(text)
    except OverflowError:  # more digits than a float holds
        mm = math.inf
    except ValueError:
        raise OptionError(opt.name, f"{{name}} must be a length such as 50cm or 2ft (plain numbers are mm), "
                                    f"got {_show(text)}") from None
    if mm <= 0:
        raise OptionError(opt.name, f"{{name}} must be > 0, got {_show(text)}")
    if not math.isfinite(mm) and opt.maximum is None:
        raise OptionError(opt.name, f"{{name}} must be a finite length, got {_show(text)}")
    return _length_bounds(opt, mm, _show(text))


def _check_length(opt: "Option", value) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)) or value <= 0:
        raise OptionError(opt.name, f"{{name}} must be > 0{{unit}}, got {shown(value)}")
    if not _is_finite(value):
        if opt.maximum is None or (isinstance(value, float) and math.isnan(value)):
            raise OptionError(opt.name, f"{{name}} must be a finite length{{unit}}, got {shown(value)}")
        return _length_bounds(opt, math.inf, shown(value))
    return _length_bounds(opt, float(value), f"{float(value):g} mm")


def _read_choice(opt: "Option", text: str) -> str:
    typed = text.strip()  # case is ignored (--surface A3, --paper A4), the value is the choice's own spelling
    return _check_choice(opt, next((c for c in opt.choices if c.lower() == typed.lower()), typed))


def _check_choice(opt: "Option", value) -> str:
    if value not in opt.choices:
        raise OptionError(opt.name, f"{{name}} must be one of {', '.join(opt.choices)}, got {shown(value)}")
    return value


def _read_switch(opt: "Option", text: str) -> bool:
    t = text.strip().lower()
    if t in ("1", "on", "true", "yes"):
        return True
    if t in ("", "0", "off", "false", "no"):
        return False
    raise OptionError(opt.name, f"{{name}} must be on or off (1 or 0), got {_show(text)}")


def _check_switch(opt: "Option", value) -> bool:
    if not isinstance(value, bool):
        raise OptionError(opt.name, f"{{name}} must be true or false, got {shown(value)}")
    return value


def _read_wall(opt: "Option", text: str) -> tuple[float, float | None, str]:
    try:
        width, height, unit = units.parse_wall(text)
    except OverflowError:  # a side with more digits than a float holds
        raise OptionError("wall", f"{{name}} must be at most {MAX_WALL_MM / 1000:g} m a side, got {_show(text)}",
                          field="wall") from None
    except ValueError as exc:
        raise OptionError(opt.name, "{name}: " + str(exc)) from None
    check_wall_side("width", width, field="wall")
    if height is not None:
        check_wall_side("height", height, field="wall")
    return width, height, unit


def check_wall_side(side: str, mm, *, field: str | None = None, shown: str | None = None) -> float:
    """Check one side of the wall, in mm; ``side`` is ``"width"`` or ``"height"``.

    The message names the side; ``shown`` is the value as the painter typed it, with its
    unit (default: ``mm`` in metres); a long one is cut (:func:`layerplan.options.shown`).

    Raises
    ------
    OptionError
        The side is not a number > 0, or over :data:`~layerplan.settings.MAX_WALL_MM`.
    """
    number = isinstance(mm, (int, float)) and not isinstance(mm, bool)
    finite = number and _is_finite(mm)
    if shown is None:
        shown = f"{float(mm) / 1000:g} m" if finite else _show(mm) if number else _show(repr(mm))
    elif len(shown) > SHOWN_CHARS:
        shown = _show(shown)
    noun, field = f"wall {side}", field or f"wall_{side}"
    if not number or mm != mm or mm <= 0:  # mm != mm: NaN
        raise OptionError("wall", f"{{name}} must be > 0{{unit}}, got {shown}", field=field, noun=noun)
    if not finite or mm > MAX_WALL_MM:
        raise OptionError("wall", f"{{name}} must be at most {MAX_WALL_MM / 1000:g} m, got {shown}", field=field,
                          noun=noun)
    return float(mm)


def _read_brushes(opt: "Option", text: str) -> tuple[float, ...]:
    try:
        brushes = units.parse_brushes(text)
    except OverflowError:  # a width with more digits than a float holds
        raise OptionError(opt.name, f"{{name}}: brush width must be at most {MAX_BRUSH_MM:g} mm, "
                                    f"got {_show(text)}") from None
    except ValueError as exc:
        raise OptionError(opt.name, "{name}: " + str(exc)) from None
    return _check_brushes(opt, brushes, raw=True)


def _check_brushes(opt: "Option", value, *, raw: bool = False) -> tuple[float, ...]:
    prefix = "{name}: " if raw else ""
    if hasattr(value, "__len__") and len(value) > MAX_BRUSHES:
        raise OptionError(opt.name, f"{prefix}at most {MAX_BRUSHES} brushes, got {len(value):,}")
    try:
        brushes = tuple(float(b) for b in value)
    except OverflowError:
        raise OptionError(opt.name, f"{prefix}brush width must be at most {MAX_BRUSH_MM:g} mm, "
                                    f"got {shown(value)}") from None
    except (TypeError, ValueError):
        raise OptionError(opt.name, f"{prefix}brush widths must be numbers in mm, got {shown(value)}") from None
    if not brushes:
        raise OptionError(opt.name, f"{prefix}give at least one brush width")
    if len(brushes) > MAX_BRUSHES:
        raise OptionError(opt.name, f"{prefix}at most {MAX_BRUSHES} brushes, got {len(brushes)}")
    for b in brushes:
        if not math.isfinite(b) or b <= 0:
            raise OptionError(opt.name, f"{prefix}brush width must be > 0 mm, got {b:g}")
        if b < MIN_BRUSH_MM:
            raise OptionError(opt.name, f"{prefix}brush width must be at least {MIN_BRUSH_MM:g} mm, got {b:g}")
        if b > MAX_BRUSH_MM:
            raise OptionError(opt.name, f"{prefix}brush width must be at most {MAX_BRUSH_MM:g} mm, got {b:g}")
    if len(set(brushes)) != len(brushes):
        raise OptionError(opt.name, f"{prefix}brush widths must differ, got {', '.join(f'{b:g}' for b in brushes)}")
    return tuple(sorted(brushes, reverse=True))


def _read_file(opt: "Option", text: str) -> str:
    return _check_file(opt, text)


def _check_file(opt: "Option", value) -> str:
    if not isinstance(value, str) or not value.strip() or "\0" in value:
        raise OptionError(opt.name, f"{{name}} must be the path of an inventory file, got {shown(value)}")
    if len(value) > MAX_PATH_CHARS:
        raise OptionError(opt.name, f"{{name}}: a path of at most {MAX_PATH_CHARS:,} characters, "
                                    f"got {len(value):,}")
    return value


#: most openings one wall takes (a wall with more windows than this is a facade: plan it in parts)
MAX_OPENINGS = 50


def _read_openings(opt: "Option", text: str) -> tuple[tuple[float, float, float, float], ...]:
    # one flag gives one rectangle; the web form's field may hold several, one a line or ';'-separated
    parts = [p for p in re.split(r"[;\n]", text) if p.strip()]
    out = []
    for part in parts:
        try:
            out.append(units.parse_rectangle(part))
        except ValueError as exc:
            raise OptionError(opt.name, "{name}: " + str(exc)) from None
    return _check_openings(opt, tuple(out))


def _check_openings(opt: "Option", value) -> tuple[tuple[float, float, float, float], ...]:
    try:
        rects = tuple(tuple(float(v) for v in r) for r in value)
    except (TypeError, ValueError):
        raise OptionError(opt.name, f"{{name}} must be rectangles (x, y, width, height) in mm, got {value!r}") \
            from None
    if len(rects) > MAX_OPENINGS:
        raise OptionError(opt.name, f"{{name}}: at most {MAX_OPENINGS} openings, got {len(rects)}")
    for x, y, w, h in (r if len(r) == 4 else (math.nan,) * 4 for r in rects):
        if not all(math.isfinite(v) for v in (x, y, w, h)):
            raise OptionError(opt.name, f"{{name}} must be four finite lengths x, y, width, height, got {value!r}")
        if w <= 0 or h <= 0:
            raise OptionError(opt.name, f"{{name}} must have a width and height > 0, got {w:g} x {h:g} mm")
        if x < 0 or y < 0:
            raise OptionError(opt.name, f"{{name}} must start inside the wall (x and y >= 0 from its top-left), "
                                        f"got x {x:g} mm, y {y:g} mm")
    return rects


def check_openings_fit(wall_width_mm: float, wall_height_mm: float, openings) -> None:
    """Check that every opening lies inside the wall and that they leave some wall to paint.

    Raises
    ------
    OptionError
        Naming the opening (by its number, as given) that reaches past the wall's edge, or
        saying that the openings cover the whole wall.
    """
    for n, (x, y, w, h) in enumerate(openings, start=1):
        if x + w > wall_width_mm + 1e-6 or y + h > wall_height_mm + 1e-6:
            raise OptionError("openings", f"{{name}}: opening {n} ({x / 1000:g}, {y / 1000:g} m, "
                                          f"{w / 1000:g} x {h / 1000:g} m) reaches past the "
                                          f"{wall_width_mm / 1000:g} x {wall_height_mm / 1000:g} m wall")
    # the union of the rectangles, on the grid of their edges (they may overlap)
    xs = sorted({0.0, wall_width_mm, *(v for x, _, w, _ in openings for v in (x, x + w))})
    ys = sorted({0.0, wall_height_mm, *(v for _, y, _, h in openings for v in (y, y + h))})
    shut = sum((x1 - x0) * (y1 - y0) for x0, x1 in zip(xs, xs[1:]) for y0, y1 in zip(ys, ys[1:])
               if any(x <= x0 and x1 <= x + w and y <= y0 and y1 <= y + h for x, y, w, h in openings))
    if openings and shut >= wall_width_mm * wall_height_mm - 1e-6:
        raise OptionError("openings", "{name} cover the whole wall: nothing is left to paint")


def _read_colour(opt: "Option", text: str) -> str:
    return _check_colour(opt, text.strip())


def _check_colour(opt: "Option", value) -> str:
    rule = "a colour #rrggbb or CIELAB L,a,b such as 92,0,3"
    if not isinstance(value, str):
        raise OptionError(opt.name, f"{{name}} must be {rule}, got {value!r}")
    t = value.strip().lower()
    if re.fullmatch(r"#[0-9a-f]{6}", t):
        return t
    parts = t.split(",")
    try:
        lab = [float(p) for p in parts]
    except ValueError:
        lab = []
    if len(lab) != 3 or not all(math.isfinite(v) for v in lab):
        raise OptionError(opt.name, f"{{name}} must be {rule}, got {value!r}")
    if not 0 <= lab[0] <= 100 or abs(lab[1]) > 128 or abs(lab[2]) > 128:
        raise OptionError(opt.name, f"{{name}}: CIELAB L* must be 0 to 100 and a*, b* within ±128, got {value!r}")
    return ",".join(f"{v:g}" for v in lab)


def _read_photo(opt: "Option", text: str) -> str:
    return _check_photo(opt, text)


def _check_photo(opt: "Option", value) -> str:
    if not isinstance(value, str) or not value.strip():
        raise OptionError(opt.name, f"{{name}} must be the path of a photo (JPEG, PNG, WebP or TIFF), got {value!r}")
    return value


def _read_corners(opt: "Option", text: str) -> tuple[float, ...]:
    try:
        values = tuple(float(t) for t in text.split(","))
    except ValueError:
        values = ()
    return _check_corners(opt, values, shown=text)


def _check_corners(opt: "Option", value, *, shown=None) -> tuple[float, ...]:
    try:
        values = tuple(float(v) for v in value)
    except (TypeError, ValueError):
        values = ()
    if len(values) != 8 or not all(math.isfinite(v) for v in values):
        raise OptionError(opt.name, "{name} must be 8 numbers x1,y1,...,x4,y4: the wall's top-left, top-right, "
                                    f"bottom-right and bottom-left in photo pixels, got {shown if shown else value!r}")
    return values


def _read_panel_size(opt: "Option", text: str) -> tuple[float, float]:
    try:
        size = units.parse_lengths(text, 2, what="panel size", form="WIDTH,HEIGHT", example="1.5,1.2m")
    except ValueError as exc:
        raise OptionError(opt.name, "{name}: " + str(exc)) from None
    return _check_panel_size(opt, size)


def _check_panel_size(opt: "Option", value) -> tuple[float, float]:
    try:
        w, h = (float(v) for v in value)
    except (TypeError, ValueError):
        raise OptionError(opt.name, f"{{name}} must be a width and height in mm, got {value!r}") from None
    if not (math.isfinite(w) and math.isfinite(h) and w > 0 and h > 0):
        raise OptionError(opt.name, f"{{name}} must have a width and height > 0, got {value!r}")
    return w, h
def _read_detail(opt: "Option", text: str) -> float:
    word = text.strip().lower()
    if word not in DETAIL_STROKE_COST:
        raise OptionError(opt.name, f"{{name}} must be one of {', '.join(DETAIL_STROKE_COST)}, got {_show(text)}")
    return DETAIL_STROKE_COST[word]


#: kind -> (reader of typed text, checker of a value already typed)
_KINDS: dict[str, tuple[Callable, Callable]] = {
    "whole": (_read_whole, _check_whole), "number": (_read_number, _check_number),
    "fraction": (_read_fraction, _check_fraction), "length": (_read_length, _check_length),
    "choice": (_read_choice, _check_choice), "switch": (_read_switch, _check_switch),
    "wall": (_read_wall, None), "brushes": (_read_brushes, _check_brushes), "file": (_read_file, _check_file),
    "openings": (_read_openings, _check_openings), "colour": (_read_colour, _check_colour),
    "photo": (_read_photo, _check_photo), "corners": (_read_corners, _check_corners),
    "panel_size": (_read_panel_size, _check_panel_size),
    "detail": (_read_detail, _check_number),
}
#: widest brush we accept, mm (a 1 m squeegee or roller is already more than any brush)
MAX_BRUSH_MM = 1000.0


# ------------------------------------------------------------------------------- the spec
@dataclass(frozen=True)
class Option:
    """One option, as every front end shows and reads it.

    Attributes
    ----------
    name : str
        The option's key in :data:`OPTIONS` and its form and JSON field.
    kind : str
        How its text is read: ``whole``, ``number``, ``fraction`` (``15%`` or ``0.15``),
        ``length`` (``50cm``, ``2ft``; plain numbers are mm), ``choice``, ``switch``,
        ``wall`` (``4x2.5m``), ``brushes`` (``100,50,25``) or ``file``.
    default : object
        The value when none is given (``None``: chosen from the other options; see ``default_text``).
    help : str
        One sentence for ``--help``, the README and the API table.
    flag : str
        Command-line flag.
    label : str
        The start page's label; web messages name the option by it.
    noun : str
        How messages to library callers name it (``max parts``).
    setting : str
        What it sets: a :class:`~layerplan.settings.Settings` field (``target="settings"``)
        or a keyword of :func:`layerplan.export.write_outputs` (``target="output"``).
    group : str
        ``planning``, ``mixing`` or ``quantities`` (help sections and the README table).
    commands : tuple of str
        The ``layerplan`` commands that take it.
    minimum, maximum : float, optional
        Bounds of a number (``strict``: the minimum itself is refused).
    choices : tuple of str
    unit : str
        Unit of the stored value, said in messages that do not name it otherwise.
    metavar : str, optional
        Placeholder in ``--help``.
    default_text : str, optional
        How the default reads in help and tables, when it is not simply the value.
    form : bool
        Whether the web form and JSON API take it (the inventory file is uploaded instead).
    """

    name: str
    kind: str
    default: Any
    help: str
    flag: str
    label: str
    noun: str
    setting: str
    group: str
    commands: tuple[str, ...] = ("plan",)
    target: str = "settings"
    minimum: float | None = None
    maximum: float | None = None
    strict: bool = False
    choices: tuple[str, ...] = ()
    unit: str = ""
    metavar: str | None = None
    default_text: str | None = None
    form: bool = True

    @property
    def field(self) -> str:
        """The web form and JSON API field."""
        return self.name

    @property
    def dest(self) -> str:
        """The attribute argparse stores it under."""
        return self.flag.lstrip("-").replace("-", "_")

    def parse(self, text: str):
        """Read the option from text as a person typed it; raises :class:`OptionError`."""
        if not isinstance(text, str):
            raise TypeError(f"{self.name}: text expected, got {type(text).__name__}")
        limit = MAX_PATH_CHARS if self.kind == "file" else MAX_TEXT_CHARS
        if len(text) > limit:  # refused unread: neither parsed nor repeated back
            if _DIGITS_RE.fullmatch(text.strip()):  # a number: say its bound, as for a shorter one
                if self.kind in ("whole", "number"):
                    raise OptionError(self.name, f"{{name}} must be {_bounds_rule(self)}, got {_show(text)}")
                if self.kind == "length" and self.maximum is not None:
                    _length_bounds(self, math.inf, _show(text))
            raise OptionError(self.name, f"{{name}} must be at most {limit:,} characters, "
                                         f"got {len(text):,}")
        return _KINDS[self.kind][0](self, text)

    def check(self, value):
        """Check a value already typed (library callers); return it normalised."""
        checker = _KINDS[self.kind][1]
        return value if checker is None else checker(self, value)

    def rule(self) -> str:
        """What values it takes, in words (help and tables)."""
        if self.kind in ("whole", "number"):
            rule = _bounds_rule(self).replace("{unit}", f" {self.unit}" if self.unit else "")
            return rule.replace("a whole number", "whole number")
        if self.kind == "length" and self.minimum is not None:
            return (f"a length with a unit: 50cm, 2ft, 1/2m (plain numbers are mm); from {self.minimum:g} mm "
                    f"to {self.maximum / 1000:g} m")
        return {
            "fraction": "0.15 or 15% (a fraction or a percentage)",
            "length": "a length with a unit: 50cm, 2ft, 1/2m (plain numbers are mm)",
            "choice": " or ".join(self.choices),
            "switch": "on or off",
            "wall": "WxH with a unit (m, cm, mm, ft, in): 4x2.5m, 12x8ft; or the width alone",
            "brushes": f"widths in mm, comma-separated, or with units (4in, 2in); at most {MAX_BRUSHES}, "
                       f"each from {MIN_BRUSH_MM:g} to {MAX_BRUSH_MM:g} mm",
            "file": "a TOML inventory file",
            "openings": "X,Y,W,H with a unit: 1.0,1.2,0.9,1.8m (repeat the flag; in the form one a line)",
            "colour": "#rrggbb, or CIELAB L,a,b",
            "photo": "a JPEG, PNG, WebP or TIFF file",
            "corners": "x1,y1,x2,y2,x3,y3,x4,y4 in photo pixels: top-left, top-right, bottom-right, bottom-left",
            "panel_size": "W,H with a unit: 1.5,1.2m",
            "detail": " or ".join(f"{w} ({c:g})" for w, c in DETAIL_STROKE_COST.items()),
        }[self.kind]

    def default_words(self) -> str:
        """The default, as help and tables show it."""
        if self.default_text is not None:
            return self.default_text
        if self.kind == "fraction":
            return f"{self.default * 100:g}%"
        if self.kind == "switch":
            return "off"
        if self.kind == "brushes":
            return ",".join(f"{b:g}" for b in self.default)
        if isinstance(self.default, float):
            return f"{self.default:g}"
        return str(self.default)

    def help_text(self) -> str:
        """``--help`` text: the sentence, the values it takes and the default."""
        if self.kind == "switch":  # a flag on the command line: given or not
            return self.help
        text = f"{self.help}; {self.rule()} (default {self.default_words()})"
        return text.replace("%", "%%")  # argparse formats help with %


_MIX, _OUT = ("plan", "mix"), ("plan", "render")
#: a class's options: set when planning, or changed when rendering (layerplan.classroom.with_class)
_CLASS = ("plan", "render")
#: the planning defaults are the library's own (a ``Settings()`` made with no arguments)
_S = Settings()

OPTIONS: dict[str, Option] = {o.name: o for o in (
    # --- planning
    Option("wall", "wall", None, "size of the painted surface", "--wall", "Surface", "wall", "wall_width_mm",
           "planning", unit="mm", metavar="WxH",
           default_text=f"{DEFAULT_WALL_WIDTH_MM / 1000:g} m wide, height from the photo"),
    Option("fit", "choice", _S.fit, "cover fills the surface and crops the overhang; contain fits the whole "
           "photo inside and pads with the ground paint", "--fit", "Fit", "fit", "fit", "planning", choices=FITS),
    Option("paints", "whole", _S.paints, "number of paints", "--paints", "Number of paints", "paints", "paints",
           "planning", minimum=MIN_PAINTS, maximum=MAX_PAINTS, metavar="N"),
    Option("brushes", "brushes", _S.brushes_mm, "brush widths, one layer each, widest first", "--brushes",
           "Brush widths", "brushes", "brushes_mm", "planning", metavar="LIST"),
    Option("pixel_mm", "number", None, "wall size of one working pixel", "--pixel-mm", "Pixel size (mm)",
           "pixel size", "mm_per_px", "planning", minimum=0.0, strict=True, unit="mm", metavar="MM",
           default_text="the narrowest brush spans 3 px, at most 2 megapixels"),
    Option("seed", "whole", _S.seed, "seed for every random choice: same inputs and seed, same plan", "--seed", "Seed",
           "seed", "seed", "planning", minimum=0, maximum=MAX_SEED, metavar="N"),
    Option("stroke_cost", "number", _S.stroke_cost, "colour error (ΔE00 per brush-width square) a stroke "
           "must remove to be painted; lower for more detail, higher for fewer strokes", "--stroke-cost",
           "Stroke cost", "stroke cost", "stroke_cost", "planning", minimum=0.0, maximum=MAX_STROKE_COST, metavar="DE"),
    Option("reach", "length", _S.reach_mm, "side of a work zone, what you paint from one ladder or lift position: "
           "each paint's strokes are ordered zone by zone, top of the wall first", "--reach", "Work zone (reach)",
           "work zone", "reach_mm", "planning", minimum=MIN_REACH_MM, maximum=MAX_WALL_MM, unit="mm", metavar="LENGTH",
           default_text="2m"),
    # --- mixing
    Option("inventory", "file", None, "the paints you own, to mix recipes from", "--inventory", "Paint inventory",
           "inventory", "inventory", "mixing", metavar="FILE", default_text="a basic acrylic set", form=False),
    Option("free_palette", "switch", _S.free_palette, "keep the photo's own colours instead of the colours the recipes "
           "will mix to", "--free-palette", "Keep the photo's own colours", "free_palette", "free_palette",
           "mixing"),
    Option("mix_paints", "whole", _S.mix_paints, "most inventory paints in one mix", "--mix-paints",
           "Most paints per mix", "max paints per mix", "mix_paints", "mixing", _MIX, minimum=1,
           maximum=MAX_MIX_PAINTS, metavar="N"),
    Option("max_parts", "whole", _S.max_parts, "whole parts of a mix add up to at most this", "--max-parts",
           "Max parts per mix", "max parts", "max_parts", "mixing", _MIX, minimum=1, maximum=MAX_PARTS, metavar="N"),
    Option("tolerance", "number", _S.tolerance_de, "a colour counts as mixable within this CIEDE2000",
           "--tolerance", "Tolerance ΔE00", "tolerance", "tolerance_de", "mixing", _MIX, minimum=0.0,
           maximum=MAX_TOLERANCE_DE, metavar="DE"),
    # --- quantities and printing
    Option("coverage", "number", COVERAGE_M2_PER_L, "spreading rate of one coat (check your tins)", "--coverage",
           "Coverage m²/L", "coverage", "coverage_m2_per_litre", "quantities", _OUT, target="output",
           minimum=MIN_COVERAGE_M2_PER_L, maximum=MAX_COVERAGE_M2_PER_L, unit="m²/L", metavar="M2_PER_L"),
    Option("ground_coats", "whole", GROUND_COATS, "coats of the ground", "--ground-coats", "Ground coats",
           "ground coats", "ground_coats", "quantities", _OUT, target="output", minimum=0, maximum=MAX_COATS,
           metavar="N"),
    Option("stroke_coats", "whole", STROKE_COATS, "least coats of any stroke; light over dark, and bright "
           "reds and yellows, get more by themselves", "--stroke-coats", "Stroke coats",
           "stroke coats", "stroke_coats", "quantities", _OUT, target="output", minimum=1, maximum=MAX_COATS,
           metavar="N"),
    Option("waste", "fraction", WASTE, "extra paint to buy for spills and touch-ups", "--waste", "Waste",
           "waste", "waste", "quantities", _OUT, target="output", metavar="SHARE"),
    Option("grid", "length", None, "transfer-grid square, drawn on the print and the overlay", "--grid",
           "Transfer-grid spacing", "grid spacing", "grid_mm", "quantities", _OUT, target="output", unit="mm",
           minimum=MIN_GRID_MM, maximum=MAX_WALL_MM,
           metavar="LENGTH",
           default_text=f"50cm, or 2ft for walls in ft or in; 10cm or 4in on small boards; "
                        f"at most {MAX_GRID_SQUARES} squares along the longest side"),
    Option("paper", "choice", DEFAULT_PAPER, "paper the printed plan is laid out for; a4 and letter give sheets "
           "that print on either, as do a3 and tabloid (bigger enlargements, fewer sheets)", "--paper",
           "Paper", "paper", "paper", "quantities", _OUT, target="output", choices=PAPERS),
    Option("enlargements", "whole", ENLARGEMENTS_PER_LAYER, "most enlargement sheets of one layer in the printed "
           "plan (the squares with the most areas are kept); 0 for none", "--enlargements",
           "Enlargements per layer", "enlargements per layer", "enlargements_per_layer", "quantities", _OUT,
           target="output", minimum=0, maximum=MAX_ENLARGEMENTS_PER_LAYER, metavar="N"),
    # --- work schedule, labour cost and time budget (layerplan.schedule, layerplan.budget); schedule.HOURS_PER_DAY,
    # DRYING_HOURS and MAX_CREW are repeated here to keep this module light (tests/test_schedule.py compares them)
    Option("crew", "whole", 1, "painters sharing the work; each takes whole columns of work zones, so no two share a "
           "ladder (the schedule sheet says who paints where)", "--crew", "Crew", "crew", "crew", "quantities", _OUT,
           target="output", minimum=1, maximum=50, metavar="N"),
    Option("day_hours", "number", 6.0, "painting hours a painter puts in a day at the wall", "--day-hours",
           "Painting hours a day", "painting hours a day", "hours_per_day", "quantities", _OUT, target="output",
           minimum=0.0, maximum=24.0, strict=True, unit="h", metavar="H"),
    Option("drying", "number", 4.0, "hours each ground coat and layer dries before the next goes on (acrylics: 2-4 h "
           "at 20 °C, longer when cold or damp)", "--drying-hours", "Drying hours", "drying time", "drying_hours",
           "quantities", _OUT, target="output", minimum=0.0, maximum=336.0, unit="h", metavar="H"),
    Option("labour_rate", "number", None, "pay for one painter-hour at the wall, in the inventory's currency: the "
           "schedule adds the labour cost", "--labour-rate", "Labour rate (per hour)", "labour rate", "labour_rate",
           "quantities", _OUT, target="output", minimum=0.0, metavar="RATE", default_text="none"),
    Option("hours", "number", None, "fit the plan to this many hours of the crew at the wall (with --crew): the "
           "stroke cost is raised or lowered until the schedule fits, and the plan says how close it came",
           "--hours", "Time budget (hours)", "time budget", "hours", "planning", target="budget", minimum=0.0,
           strict=True, unit="h", metavar="H", default_text="none (use --stroke-cost)", form=False),
    Option("strokes", "whole", None, "fit the plan to about this many strokes (instead of --hours)", "--strokes",
           "Stroke budget", "stroke budget", "strokes", "planning", target="budget", minimum=1, maximum=1_000_000,
           metavar="N", default_text="none", form=False),
    # --- the real wall: openings, the colour it already has
    Option("openings", "openings", (), "a window, door or vent: the rectangle's top-left corner from the wall's "
           "top-left, then its width and height; not painted, not charged for", "--opening", "Openings",
           "openings", "openings", "planning", unit="mm", metavar="X,Y,W,H", default_text="none"),
    Option("wall_colour", "colour", None, "the colour the wall is painted already: when a paint of the plan "
           "matches it, that paint's ground coats are not bought", "--wall-colour", "Wall colour now",
           "wall colour", "wall_colour", "planning", metavar="COLOUR", default_text="not known"),
    Option("site_photo", "photo", None, "a photo of the wall: the plan's pictures are laid into it inside "
           "--corners (mockup.png, mockups/NN.png), for the client and the permit", "--site-photo",
           "Site photo", "site photo", "site_photo", "quantities", _OUT, target="output", metavar="FILE",
           default_text="none", form=False),
    Option("corners", "corners", None, "the wall's four corners in the site photo", "--corners", "Wall corners",
           "corners", "site_corners", "quantities", _OUT, target="output", metavar="X1,Y1,...,X4,Y4",
           default_text="none", form=False),
    Option("panels", "panel_size", None, "split the design into numbered panels or cloth strips of this size, "
           "painted off the wall: panels.html gives each its sheet and a key map", "--panels", "Panel size",
           "panel size", "panels_mm", "quantities", _OUT, target="output", unit="mm", metavar="W,H",
           default_text="none (painted on the wall)"),
    Option("panel_overlap", "length", PANEL_OVERLAP_MM, "overlap of neighbouring panels, to glue or trim",
           "--panel-overlap", "Panel overlap", "panel overlap", "panel_overlap_mm", "quantities", _OUT,
           target="output", unit="mm", metavar="LENGTH", default_text="5cm"),
    # --- classroom: sheet and board surfaces, a class, a limited set, value studies (layerplan.surfaces,
    # layerplan.classroom); a class's figures are planned with the plan, so they are settings
    Option("surface", "choice", None, "a named sheet or board instead of a wall size, turned to follow the "
           "photo: small brushes, the classroom paint set and amounts in mL follow", "--surface",
           "Sheet or board", "surface", "surface", "planning", choices=tuple(SURFACES), metavar="NAME",
           default_text="none (the wall size)"),
    # the class itself may change at render time too (`layerplan render --students 28`): no new strokes
    Option("students", "whole", None, "students painting the plan, one sheet each: the plan adds a preparation "
           "sheet, one step sheet per layer and a teacher's sheet", "--students", "Students", "students",
           "students", "planning", _CLASS, minimum=1, maximum=MAX_STUDENTS, metavar="N", default_text="no class"),
    Option("spares", "fraction", None, "spare sheets on top of one per student, for do-overs and "
           "latecomers", "--spares", "Spare sheets", "spares", "spares", "planning", _CLASS, metavar="SHARE",
           default_text=f"{SPARE_SHARE * 100:g}%"),
    Option("period_minutes", "number", None, "length of a class period; the teacher's sheet "
           "splits the layers into periods", "--period-minutes", "Class period (min)", "class period",
           "period_minutes", "planning", _CLASS, minimum=MIN_PERIOD_MINUTES, maximum=MAX_PERIOD_MINUTES,
           unit="min", metavar="MIN", default_text=f"{PERIOD_MINUTES:g}"),
    Option("paint_set", "choice", None, "the built-in set to mix from when no inventory is given: classroom is a "
           "primary triad with black and white", "--paint-set", "Paint set", "paint set", "paint_set", "mixing",
           choices=tuple(PAINT_SETS), default_text="classroom on a sheet or board, else basic"),
    Option("simple_mixes", "switch", _S.simple_mixes, "plan only with stock paints and two-paint mixes "
           f"students can make (at most {SIMPLE_MAX_PARTS} parts)", "--simple-mixes", "Only simple mixes",
           "simple_mixes", "simple_mixes", "mixing"),
    Option("value_study", "whole", _S.value_study, "paint in this many greys mixed from the set's black and "
           "white, evenly spaced in lightness, with a value scale to paint first; 0 for colour",
           "--value-study", "Value study (greys)", "value study", "value_study", "planning", minimum=0,
           maximum=MAX_VALUE_STEPS, metavar="N"),
    # --- detail: the stroke cost in a painter's words (read into a stroke cost; given, it sets --stroke-cost)
    Option("detail", "detail", None, "how much detail to paint: broad for a quick, loose wall with few strokes, "
           "fine for faces and lettering at many more strokes; sets the stroke cost (in brackets) for you",
           "--detail", "Detail", "detail", "stroke_cost", "planning", minimum=0.0, metavar="LEVEL",
           default_text="as the stroke cost says", form=False),
)}

GROUP_TITLES = {"planning": "planning", "mixing": "paints and mix recipes", "quantities": "quantities and printing"}


def for_command(command: str) -> list[Option]:
    """The options a ``layerplan`` command takes, in declaration order."""
    return [o for o in OPTIONS.values() if command in o.commands]


def form_options(target: str | None = None) -> list[Option]:
    """The options the web form and JSON API take (``target``: only ``settings`` or ``output`` ones)."""
    return [o for o in OPTIONS.values() if o.form and (target is None or o.target == target)]


def form_defaults() -> dict[str, str]:
    """What the start page's fields hold before anyone types: each option's default as text."""
    out = {}
    for o in form_options():
        if o.default is None or o.kind in ("wall", "brushes", "openings"):
            out[o.field] = ""
        elif o.kind == "switch":
            out[o.field] = "1" if o.default else ""
        else:
            out[o.field] = o.default_words()
    return out


# ------------------------------------------------------------------------- command line
def add_cli_options(parser, command: str, *, names: Iterable[str] | None = None) -> None:
    """Add ``command``'s options to an argparse parser, in one argument group per option group.

    Each value is read by the option's own parser as argparse reads the command line; a bad
    value raises :class:`OptionError` out of ``parse_args`` (see :class:`CliOptionError`).
    """
    chosen = [o for o in for_command(command) if names is None or o.name in set(names)]
    groups: dict[str, Any] = {}
    for o in chosen:
        if o.group not in groups:
            groups[o.group] = parser.add_argument_group(GROUP_TITLES[o.group])
        g = groups[o.group]
        if o.kind == "switch":
            g.add_argument(o.flag, dest=o.dest, action="store_true", help=o.help_text())
        elif o.kind == "openings":  # repeatable: one rectangle per flag
            g.add_argument(o.flag, dest=o.dest, type=_cli_reader(o), action="append", default=None,
                           metavar=o.metavar, help=o.help_text())
        else:
            g.add_argument(o.flag, dest=o.dest, type=_cli_reader(o), default=o.default, metavar=o.metavar,
                           help=o.help_text())


class CliOptionError(Exception):
    """An :class:`OptionError` on its way out of argparse.

    argparse turns a ``ValueError`` raised while reading a value into its own "invalid
    value" message, losing ours; this is not a ``ValueError``, so it passes through and
    the command line reports ``error`` with the flag at fault.
    """

    def __init__(self, error: OptionError):
        super().__init__(error.cli_message())
        self.error = error


def _cli_reader(o: Option) -> Callable[[str], Any]:
    def read(text: str):
        try:
            return o.parse(text)
        except OptionError as exc:
            raise CliOptionError(exc) from None

    read.__name__ = o.name
    return read


def values_from_cli(args, command: str) -> dict[str, Any]:
    """Option name -> value, from parsed arguments of ``command``."""
    values = {o.name: getattr(args, o.dest) for o in for_command(command) if hasattr(args, o.dest)}
    if values.get("openings") is not None:  # one tuple of rectangles per flag given
        values["openings"] = OPTIONS["openings"].check(tuple(r for given in values["openings"] for r in given))
    return values


# ------------------------------------------------------------------------- settings
def settings_kwargs(values: Mapping[str, Any]) -> dict[str, Any]:
    """:class:`~layerplan.settings.Settings` keywords from option values (options not given are left out)."""
    kw: dict[str, Any] = {}
    for name, value in values.items():
        o = OPTIONS[name]
        if o.target != "settings" or (value is None and o.name != "inventory"):
            continue
        if o.kind == "wall":
            kw["wall_width_mm"], kw["wall_height_mm"], kw["wall_unit"] = value
        else:
            kw[o.setting] = value
    return kw


def output_kwargs(values: Mapping[str, Any], *, keep_none: bool = False) -> dict[str, Any]:
    """:func:`layerplan.export.write_outputs` keywords from option values."""
    return {OPTIONS[n].setting: v for n, v in values.items()
            if OPTIONS[n].target == "output" and (keep_none or v is not None)}


def check_settings(settings) -> None:
    """Check every field of a :class:`~layerplan.settings.Settings` against its option.

    Raises
    ------
    OptionError
        Naming the option and the bad value.
    """
    check_wall_side("width", settings.wall_width_mm, field="wall_width")
    if settings.wall_height_mm is not None:
        check_wall_side("height", settings.wall_height_mm, field="wall_height")
    for o in OPTIONS.values():
        if o.target != "settings" or o.kind == "wall":
            continue
        value = getattr(settings, o.setting)
        if value is None and o.default is None:
            continue
        o.check(value)


def check_output(options: Mapping[str, Any]) -> dict[str, Any]:
    """Check :func:`layerplan.export.write_outputs` keywords (``grid_mm``, quantities); return them normalised."""
    by_setting = {o.setting: o for o in OPTIONS.values() if o.target == "output"}
    out = dict(options)
    for key, value in options.items():
        o = by_setting.get(key)
        if o is not None and value is not None:
            out[key] = o.check(value)
    return out


# ------------------------------------------------------------- the whole set, before planning
@dataclass(frozen=True)
class WorkingSize:
    """The wall and working raster a set of options and a photo give."""

    wall_width_mm: float
    wall_height_mm: float
    mm_per_px: float
    width_px: int
    height_px: int


def check_raster(settings, image_shape) -> WorkingSize:
    """The wall and working raster for a photo, with their limits checked.

    A missing wall height follows the photo's aspect ratio; a missing pixel size is chosen
    (:func:`layerplan.settings.choose_mm_per_px`).

    Raises
    ------
    OptionError
        The height from the photo's shape is over :data:`~layerplan.settings.MAX_WALL_MM`
        (the wall's), or the raster is over ``HARD_MAX_RASTER_PX`` or has a side under
        ``MIN_RASTER_SIDE_PX`` (the pixel size's).
    """
    from .settings import choose_mm_per_px, working_raster

    h, w = image_shape[:2]
    wall_w = float(settings.wall_width_mm)
    wall_h = float(settings.wall_height_mm) if settings.wall_height_mm is not None else wall_w * h / w
    if settings.wall_height_mm is None and (not math.isfinite(wall_h) or wall_h > MAX_WALL_MM):
        raise OptionError("wall", f"the height from the photo's shape would be {wall_h / 1000:g} m, over the "
                                  f"{MAX_WALL_MM / 1000:g} m limit; give the height too", field="wall_height")
    s = settings.mm_per_px or choose_mm_per_px(wall_w, wall_h, min(settings.brushes_mm))
    # counted in floats first: a pixel of 1e-300 mm makes more pixels than an int conversion takes
    w_px, h_px = wall_w / s, wall_h / s
    if not w_px * h_px <= HARD_MAX_RASTER_PX * 1.01:
        said = f"{round(w_px)}x{round(h_px)} px" if max(w_px, h_px) < 1e12 else "more than a trillion pixels"
        raise OptionError("pixel_mm", f"working raster of {said} is too large (at most "
                                      f"{HARD_MAX_RASTER_PX / 1e6:g} megapixels); use a {{name}} coarser than "
                                      f"{s:g} mm")
    wall_w, wall_h, s, width_px, height_px = working_raster(settings, image_shape)
    if width_px * height_px > HARD_MAX_RASTER_PX:
        raise OptionError("pixel_mm", f"working raster of {width_px}x{height_px} px is too large (at most "
                                      f"{HARD_MAX_RASTER_PX / 1e6:g} megapixels); use a {{name}} coarser than "
                                      f"{s:g} mm")
    if min(width_px, height_px) < MIN_RASTER_SIDE_PX:
        raise OptionError("pixel_mm", f"working raster of {width_px}x{height_px} px is too small (at least "
                                      f"{MIN_RASTER_SIDE_PX} px a side); use a {{name}} finer than {s:g} mm")
    return WorkingSize(wall_w, wall_h, s, width_px, height_px)


def check_grid(wall_width_mm: float, wall_height_mm: float, grid_mm: float | None) -> None:
    """Check a transfer-grid square against the wall, whichever way round the wall is.

    Raises
    ------
    OptionError
        More than :data:`MAX_GRID_SQUARES` squares along the longest side.
    """
    if grid_mm is None:
        return  # the default square always fits (50 cm on the 100 m wall limit is 200 squares)
    longest = max(wall_width_mm, wall_height_mm)
    if longest / grid_mm > MAX_GRID_SQUARES:
        raise OptionError("grid", f"{{name}} of {grid_mm:g} mm gives {math.ceil(longest / grid_mm)} squares along "
                                  f"the {longest / 1000:g} m side (at most {MAX_GRID_SQUARES}); use at least "
                                  f"{math.ceil(longest / MAX_GRID_SQUARES):g} mm")


def check_mix_table(inventory_paints: int, mix_paints: int, max_parts: int) -> None:
    """Check that an inventory of ``inventory_paints`` makes a mix table the solver will build.

    Raises
    ------
    OptionError
        Too many candidate mixes (``recipes.MAX_TABLE_MIXES``); blames the paints per mix.
    """
    from .recipes import MAX_TABLE_MIXES, table_size  # late: recipes pulls in numba

    size = table_size(inventory_paints, max_paints=mix_paints, max_parts=max_parts)
    if size > MAX_TABLE_MIXES:
        raise OptionError("mix_paints", f"{inventory_paints} paints, up to {mix_paints} per mix in up to "
                                        f"{max_parts} parts make {size:,} candidate mixes (at most "
                                        f"{MAX_TABLE_MIXES:,}); lower the {{name}} or the max parts, or list "
                                        f"fewer paints")


def check_plan(settings, output: Mapping[str, Any], image_shape, *, inventory_paints: int | None = None
               ) -> WorkingSize:
    """Check the whole set of options for a photo, before any planning.

    Parameters
    ----------
    settings : Settings
        Validated planning settings.
    output : mapping
        :func:`layerplan.export.write_outputs` keywords (``grid_mm`` and the quantities).
    image_shape : tuple
        The photo's ``(h, w, ...)``: a blank wall height follows it.
    inventory_paints : int, optional, keyword-only
        Paints in the inventory recipes will be mixed from (``None``: the default set).

    Returns
    -------
    WorkingSize

    Raises
    ------
    OptionError
        Naming the option at fault: the wall, the pixel size, the grid, the mix options or
        a quantity option.
    """
    check_settings(settings)
    check_output(output)
    size = check_raster(settings, image_shape)
    check_grid(size.wall_width_mm, size.wall_height_mm, output.get("grid_mm"))
    check_openings_fit(size.wall_width_mm, size.wall_height_mm, getattr(settings, "openings", ()))
    panels = output.get("panels_mm")
    overlap = output.get("panel_overlap_mm", PANEL_OVERLAP_MM)
    if panels is not None and overlap is not None and overlap >= min(panels):
        raise OptionError("panel_overlap", f"{{name}} of {overlap:g} mm must be less than the panel's sides "
                                           f"({min(panels):g} mm)")
    if inventory_paints is not None:
        check_mix_table(inventory_paints, settings.mix_paints, settings.max_parts)
    return size


# ---------------------------------------------------------------------------- tables
def _cell(text: str) -> str:
    return text.replace("|", "\\|")


def options_table() -> str:
    """The README's option table (Markdown), between :data:`TABLE_START` and :data:`TABLE_END`."""
    rows = [TABLE_START, "", "| option | web / API field | what it sets | values | default |",
            "| --- | --- | --- | --- | --- |"]
    for o in OPTIONS.values():
        commands = "" if o.commands == ("plan",) else f" ({', '.join(o.commands)})"
        fieldname = (f"`{o.field}` ({o.label})" if o.form else "upload or edit on the start page"
                     if o.kind == "file" else "command line only (the start page has Stroke cost)"
                     if o.name == "detail" else "command line only")
        if o.name == "wall":
            fieldname = "`wall_width`, `wall_height`, `unit`, or `wall` (Surface)"
        if o.name == "brushes":
            fieldname = "`brushes` (Brush widths), or `kit`"
        rows.append(f"| `{o.flag}`{commands} | {_cell(fieldname)} | {_cell(o.help)} | {_cell(o.rule())} "
                    f"| {_cell(o.default_words())} |")
    rows += ["", TABLE_END]
    return "\n".join(rows)


def api_table() -> str:
    """The field table of ``POST /api/plans`` for :mod:`layerplan.web.api`'s docstring."""
    import textwrap

    width = max(len(o.field) for o in form_options()) + 6
    lines = [TABLE_START]
    for o in form_options():
        text = f"{o.help}; {o.rule()} (``{o.flag}``, default {o.default_words()})"
        lines += textwrap.wrap(text, 110, initial_indent=f"``{o.field}``".ljust(width),
                               subsequent_indent=" " * width, break_on_hyphens=False)
    lines.append(TABLE_END)
    return "\n".join(lines)


def _block(text: str) -> str | None:
    start, end = text.find(TABLE_START), text.find(TABLE_END)
    if start < 0 or end < start:
        return None
    return text[start:end + len(TABLE_END)]


_ROOT = Path(__file__).resolve().parents[1]
#: file -> the table it carries
GENERATED = {_ROOT / "README.md": options_table, Path(__file__).resolve().parent / "web" / "api.py": api_table}


def stale_files() -> list[Path]:
    """Files whose generated table differs from the options (or that have none)."""
    return [path for path, make in GENERATED.items() if _block(path.read_text(encoding="utf-8")) != make()]


def write_tables() -> list[Path]:
    """Rewrite the generated tables in place; return the files changed."""
    changed = []
    for path, make in GENERATED.items():
        text = path.read_text(encoding="utf-8")
        old = _block(text)
        if old is None:
            raise ValueError(f"{path.name} has no {TABLE_START!r} ... {TABLE_END!r} block to fill")
        if old != make():
            path.write_text(text.replace(old, make()), encoding="utf-8")
            changed.append(path)
    return changed


def main(argv=None) -> int:
    import argparse
    import sys

    p = argparse.ArgumentParser(prog="python -m layerplan.options",
                                description="Print or rewrite the option tables made from layerplan/options.py.")
    what = p.add_mutually_exclusive_group()
    what.add_argument("--readme", action="store_true", help="print the README's option table")
    what.add_argument("--api", action="store_true", help="print the API docstring's field table")
    what.add_argument("--write", action="store_true", help="rewrite both tables in place")
    what.add_argument("--check", action="store_true", help="exit 1 if a table is out of date")
    args = p.parse_args(argv)
    if args.write:
        for path in write_tables():
            print(f"rewrote the table in {path}", file=sys.stderr)
        return 0
    if args.check:
        stale = stale_files()
        for path in stale:
            print(f"{path}: option table out of date; run python -m layerplan.options --write", file=sys.stderr)
        return 1 if stale else 0
    print(api_table() if args.api else options_table())
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
