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
#: --detail's words and the stroke cost each stands for (ΔE00 per brush-width square), chosen from
#: the bench's sweep of stroke costs (bench/results.md): medium is the default stroke cost
DETAIL_STROKE_COST = {"broad": 8.0, "medium": 5.5, "fine": 1.0}
#: upper bound on a seed, so it stays an ordinary integer everywhere
MAX_SEED = 2**32 - 1

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
def _show(text: str) -> str:
    return repr(text.strip())


def _bounds_rule(opt: "Option") -> str:
    lo, hi = opt.minimum, opt.maximum
    if opt.kind == "whole":
        return f"a whole number from {lo:.0f} to {hi:.0f}" if hi is not None else f"a whole number >= {lo:.0f}"
    if hi is not None:
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
        raise OptionError(opt.name, f"{{name}} must be {_bounds_rule(opt)}, got {value!r}")
    return value


def _read_number(opt: "Option", text: str) -> float:
    try:
        value = float(text.strip())
    except ValueError:
        raise OptionError(opt.name, f"{{name}} must be a number, got {_show(text)}") from None
    if not math.isfinite(value):
        raise OptionError(opt.name, f"{{name}} must be a finite number, got {_show(text)}")
    return _check_number(opt, value)


def _check_number(opt: "Option", value) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise OptionError(opt.name, f"{{name}} must be a number, got {value!r}")
    if not math.isfinite(value):
        raise OptionError(opt.name, f"{{name}} must be a finite number, got {value!r}")
    if not _in_bounds(opt, value):
        raise OptionError(opt.name, f"{{name}} must be {_bounds_rule(opt)}, got {value:g}")
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
    return _check_fraction(opt, value / 100.0 if percent else value, shown=t)


def _check_fraction(opt: "Option", value, *, shown: str | None = None) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value) \
            or not 0 <= value <= 1:
        raise OptionError(opt.name, f"{{name}} must be {_FRACTION_RULE}, got {repr(value) if shown is None else repr(shown)}")
    return float(value)


def _read_length(opt: "Option", text: str) -> float:
    try:
        mm = units.parse_length(text)
    except ValueError:
        raise OptionError(opt.name, f"{{name}} must be a length such as 50cm or 2ft (plain numbers are mm), "
                                    f"got {_show(text)}") from None
    if not math.isfinite(mm) or mm <= 0:
        raise OptionError(opt.name, f"{{name}} must be > 0, got {_show(text)}")
    return mm


def _check_length(opt: "Option", value) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value) or value <= 0:
        raise OptionError(opt.name, f"{{name}} must be > 0{{unit}}, got {value!r}")
    return float(value)


def _read_choice(opt: "Option", text: str) -> str:
    return _check_choice(opt, text.strip())


def _check_choice(opt: "Option", value) -> str:
    if value not in opt.choices:
        raise OptionError(opt.name, f"{{name}} must be one of {', '.join(opt.choices)}, got {value!r}")
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
        raise OptionError(opt.name, f"{{name}} must be true or false, got {value!r}")
    return value


def _read_wall(opt: "Option", text: str) -> tuple[float, float | None, str]:
    try:
        width, height, unit = units.parse_wall(text)
    except ValueError as exc:
        raise OptionError(opt.name, "{name}: " + str(exc)) from None
    check_wall_side("width", width, field="wall")
    if height is not None:
        check_wall_side("height", height, field="wall")
    return width, height, unit


def check_wall_side(side: str, mm, *, field: str | None = None, shown: str | None = None) -> float:
    """Check one side of the wall, in mm; ``side`` is ``"width"`` or ``"height"``.

    The message names the side; ``shown`` is the value as the painter typed it, with its
    unit (default: ``mm`` in metres).

    Raises
    ------
    OptionError
        The side is not a number > 0, or over :data:`~layerplan.settings.MAX_WALL_MM`.
    """
    number = isinstance(mm, (int, float)) and not isinstance(mm, bool)
    if shown is None:
        shown = f"{mm / 1000:g} m" if number and math.isfinite(mm) else repr(mm)
    noun, field = f"wall {side}", field or f"wall_{side}"
    if not number or not math.isfinite(mm) or mm <= 0:
        raise OptionError("wall", f"{{name}} must be > 0{{unit}}, got {shown}", field=field, noun=noun)
    if mm > MAX_WALL_MM:
        raise OptionError("wall", f"{{name}} must be at most {MAX_WALL_MM / 1000:g} m, got {shown}", field=field,
                          noun=noun)
    return float(mm)


def _read_brushes(opt: "Option", text: str) -> tuple[float, ...]:
    try:
        brushes = units.parse_brushes(text)
    except ValueError as exc:
        raise OptionError(opt.name, "{name}: " + str(exc)) from None
    return _check_brushes(opt, brushes, raw=True)


def _check_brushes(opt: "Option", value, *, raw: bool = False) -> tuple[float, ...]:
    prefix = "{name}: " if raw else ""
    try:
        brushes = tuple(float(b) for b in value)
    except (TypeError, ValueError):
        raise OptionError(opt.name, f"{prefix}brush widths must be numbers in mm, got {value!r}") from None
    if not brushes:
        raise OptionError(opt.name, f"{prefix}give at least one brush width")
    if len(brushes) > MAX_BRUSHES:
        raise OptionError(opt.name, f"{prefix}at most {MAX_BRUSHES} brushes, got {len(brushes)}")
    for b in brushes:
        if not math.isfinite(b) or b <= 0:
            raise OptionError(opt.name, f"{prefix}brush width must be > 0 mm, got {b:g}")
        if b > MAX_BRUSH_MM:
            raise OptionError(opt.name, f"{prefix}brush width must be at most {MAX_BRUSH_MM:g} mm, got {b:g}")
    if len(set(brushes)) != len(brushes):
        raise OptionError(opt.name, f"{prefix}brush widths must differ, got {', '.join(f'{b:g}' for b in brushes)}")
    return tuple(sorted(brushes, reverse=True))


def _read_file(opt: "Option", text: str) -> str:
    return _check_file(opt, text)


def _check_file(opt: "Option", value) -> str:
    if not isinstance(value, str) or not value.strip():
        raise OptionError(opt.name, f"{{name}} must be the path of an inventory file, got {value!r}")
    return value


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
        return {
            "fraction": "0.15 or 15% (a fraction or a percentage)",
            "length": "a length with a unit: 50cm, 2ft, 1/2m (plain numbers are mm)",
            "choice": " or ".join(self.choices),
            "switch": "on or off",
            "wall": "WxH with a unit (m, cm, mm, ft, in): 4x2.5m, 12x8ft; or the width alone",
            "brushes": f"widths in mm, comma-separated, or with units (4in, 2in); at most {MAX_BRUSHES}",
            "file": "a TOML inventory file",
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
           "Stroke cost", "stroke cost", "stroke_cost", "planning", minimum=0.0, metavar="DE"),
    Option("reach", "length", _S.reach_mm, "side of a work zone, what you paint from one ladder or lift position: "
           "each paint's strokes are ordered zone by zone, top of the wall first", "--reach", "Work zone (reach)",
           "work zone", "reach_mm", "planning", unit="mm", metavar="LENGTH", default_text="2m"),
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
           minimum=0.0, strict=True, unit="m²/L", metavar="M2_PER_L"),
    Option("ground_coats", "whole", GROUND_COATS, "coats of the ground", "--ground-coats", "Ground coats",
           "ground coats", "ground_coats", "quantities", _OUT, target="output", minimum=0, metavar="N"),
    Option("stroke_coats", "whole", STROKE_COATS, "least coats of any stroke; light over dark, and bright "
           "reds and yellows, get more by themselves", "--stroke-coats", "Stroke coats",
           "stroke coats", "stroke_coats", "quantities", _OUT, target="output", minimum=1, metavar="N"),
    Option("waste", "fraction", WASTE, "extra paint to buy for spills and touch-ups", "--waste", "Waste",
           "waste", "waste", "quantities", _OUT, target="output", metavar="SHARE"),
    Option("grid", "length", None, "transfer-grid square, drawn on the print and the overlay", "--grid",
           "Transfer-grid spacing", "grid spacing", "grid_mm", "quantities", _OUT, target="output", unit="mm",
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
        if o.default is None or o.kind in ("wall", "brushes"):
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
    return {o.name: getattr(args, o.dest) for o in for_command(command) if hasattr(args, o.dest)}


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
    from .settings import working_raster

    wall_w, wall_h, s, width_px, height_px = working_raster(settings, image_shape)
    if settings.wall_height_mm is None and (not math.isfinite(wall_h) or wall_h > MAX_WALL_MM):
        raise OptionError("wall", f"the height from the photo's shape would be {wall_h / 1000:g} m, over the "
                                  f"{MAX_WALL_MM / 1000:g} m limit; give the height too", field="wall_height")
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
    check_output(output)
    size = check_raster(settings, image_shape)
    check_grid(size.wall_width_mm, size.wall_height_mm, output.get("grid_mm"))
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
                     if o.kind == "file" else "command line only (the start page has Stroke cost)")
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
