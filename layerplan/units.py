"""Lengths as painters give them: wall sizes like ``4x2.5m`` or ``12x8ft``, brush kits like ``100,50,25,12``.

Everything inside layerplan is in millimetres; this module turns what a person types into
millimetres and back. Conversions use exact rational arithmetic, so ``12ft`` is the float
nearest 3657.6 mm, not an accumulation of rounding.

References
----------
.. [1] BIPM, The International System of Units (SI), 9th ed., 2019 (mm, cm, m).
.. [2] "Refinement of values for the yard and the pound", US Federal Register,
   1959-07-01 (the international yard and pound agreement: 1 yd = 0.9144 m exactly,
   so 1 in = 25.4 mm and 1 ft = 304.8 mm exactly).
.. [3] A. Thompson, B. N. Taylor, NIST Special Publication 811, Guide for the Use of
   the International System of Units (SI), 2008, Appendix B.
"""

from __future__ import annotations

import math
import re
from fractions import Fraction

#: millimetres per unit. mm, cm, m by the SI definitions; in and ft exact by the 1959
#: international yard and pound agreement (NIST SP 811, Appendix B: 1 in = 25.4 mm,
#: 1 ft = 0.3048 m)
UNITS_MM: dict[str, float] = {"mm": 1.0, "cm": 10.0, "m": 1000.0, "in": 25.4, "ft": 304.8}
#: the same factors as exact fractions, used for parsing
_UNITS_MM_EXACT: dict[str, Fraction] = {"mm": Fraction(1), "cm": Fraction(10), "m": Fraction(1000),
                                        "in": Fraction("25.4"), "ft": Fraction("304.8")}
#: spellings accepted for each unit (lower case)
UNIT_ALIASES: dict[str, str] = {
    "mm": "mm", "millimetre": "mm", "millimetres": "mm", "millimeter": "mm", "millimeters": "mm",
    "cm": "cm", "centimetre": "cm", "centimetres": "cm", "centimeter": "cm", "centimeters": "cm",
    "m": "m", "metre": "m", "metres": "m", "meter": "m", "meters": "m",
    "in": "in", "inch": "in", "inches": "in",
    "ft": "ft", "foot": "ft", "feet": "ft",
}
_VALID_UNITS = ", ".join(UNITS_MM)

# a number: decimal with '.' or a simple fraction such as 1/2 (brush sizes are sold as 1/2", 3/4")
_NUM = r"[-+]?(?:\d+/\d+|\d+(?:\.\d*)?|\.\d+)"
_UNIT = r"[a-z]+"
_LENGTH_RE = re.compile(rf"^\s*({_NUM})\s*({_UNIT})?\s*$")
_WALL_RE = re.compile(rf"^\s*({_NUM})\s*({_UNIT})?\s*(?:[x×*]\s*({_NUM})\s*({_UNIT})?\s*)?$")
_DECIMAL_COMMA_RE = re.compile(r"\d,\d")


def to_mm(value: float, unit: str) -> float:
    """Convert a length in ``unit`` to millimetres.

    Parameters
    ----------
    value : float
    unit : {"mm", "cm", "m", "in", "ft"}

    Returns
    -------
    float

    Raises
    ------
    ValueError
        Unknown unit (the message lists the valid ones) or a value that is not a finite number.

    References
    ----------
    NIST SP 811 (2008), Appendix B; international yard and pound agreement (1959).
    """
    unit_key = _unit(unit)
    return _finite("value", value) * UNITS_MM[unit_key]


def from_mm(mm: float, unit: str) -> float:
    """Convert millimetres to a length in ``unit`` (inverse of :func:`to_mm`).

    Raises
    ------
    ValueError
        Unknown unit or a value that is not a finite number.
    """
    unit_key = _unit(unit)
    return _finite("mm", mm) / UNITS_MM[unit_key]


def parse_wall(text: str) -> tuple[float, float | None, str]:
    """Parse a wall size such as ``4x2.5m``, ``12 ft x 8 ft`` or ``400×250cm``.

    A unit is required: a bare ``4x2.5`` is refused rather than guessed, because taking
    feet for metres would plan a wall 3.3 times too big without anyone noticing. One unit
    after the height applies to both sides (``4x2.5m``); each side may also carry its own
    (``12ft x 96in``), in which case the width's unit is the one reported. The width alone
    (``4m``) leaves the height to the photo's aspect ratio. The separator is ``x``, ``X``,
    ``×`` or ``*``; spaces are allowed anywhere between the parts. Decimals use a point;
    a decimal comma (``2,5m``) is refused with a message saying so.

    Parameters
    ----------
    text : str

    Returns
    -------
    width_mm : float
    height_mm : float or None
        ``None`` when only the width was given.
    unit : str
        The unit the size was given in, one of ``mm``, ``cm``, ``m``, ``in``, ``ft``.

    Raises
    ------
    ValueError
        Naming the text: empty, no unit, unknown unit (listing the valid ones), a decimal
        comma, a unit on the width only, not of the form WxH, or a side that is zero or
        negative.

    References
    ----------
    NIST SP 811 (2008), Appendix B; international yard and pound agreement (1959).
    """
    if not isinstance(text, str):
        raise TypeError(f"wall size must be text such as '4x2.5m', got {type(text).__name__}")
    raw = text
    t = text.strip().lower()
    if not t:
        raise ValueError(f"wall size is empty; give width x height with a unit, e.g. '4x2.5m' "
                         f"(units: {_VALID_UNITS})")
    if _DECIMAL_COMMA_RE.search(t):
        raise ValueError(f"wall size {raw!r}: use a point for decimals and no thousands separators, "
                         f"e.g. '4x2.5m'")
    m = _WALL_RE.match(t)
    if not m:
        raise ValueError(f"wall size {raw!r} is not of the form WIDTHxHEIGHT with a unit, "
                         f"e.g. '4x2.5m', '12x8ft' or '4m' (units: {_VALID_UNITS})")
    w_txt, w_unit, h_txt, h_unit = m.groups()
    if h_txt is None:
        if w_unit is None:
            raise ValueError(f"wall size {raw!r} needs a unit, e.g. '{w_txt}m' (units: {_VALID_UNITS})")
        unit = _unit_in(raw, w_unit)
        return _side_mm(raw, "width", w_txt, unit), None, unit
    if h_unit is None:
        if w_unit is None:
            raise ValueError(f"wall size {raw!r} needs a unit, e.g. '{w_txt}x{h_txt}m' (units: {_VALID_UNITS})")
        raise ValueError(f"wall size {raw!r}: give the unit after the height too, "
                         f"e.g. '{w_txt}{w_unit}x{h_txt}{w_unit}' or '{w_txt}x{h_txt}{w_unit}'")
    h_key = _unit_in(raw, h_unit)
    w_key = _unit_in(raw, w_unit) if w_unit is not None else h_key
    return _side_mm(raw, "width", w_txt, w_key), _side_mm(raw, "height", h_txt, h_key), w_key


def parse_length(text: str, *, default_unit: str = "mm") -> float:
    """Parse one length such as ``50cm``, ``2 ft``, ``1/2m`` or ``500``.

    A plain number is in ``default_unit``. Simple fractions are accepted (``1/2m``), as in
    :func:`parse_brushes`; a decimal comma is refused. The sign is kept: callers set the bounds.

    Returns
    -------
    float
        The length in millimetres.

    Raises
    ------
    ValueError
        Naming the text: empty, not a number with an optional unit, an unknown unit
        (listing the valid ones), or a decimal comma.

    References
    ----------
    NIST SP 811 (2008), Appendix B; international yard and pound agreement (1959).
    """
    if not isinstance(text, str):
        raise TypeError(f"a length must be text such as '50cm', got {type(text).__name__}")
    t = text.strip().lower()
    if _DECIMAL_COMMA_RE.search(t):
        raise ValueError(f"length {text!r}: use a point for decimals, e.g. '2.5cm'")
    m = _LENGTH_RE.match(t)
    value = _exact(m.group(1)) if m else None
    if value is None:
        raise ValueError(f"length {text!r} is not a number with a unit ({_VALID_UNITS}), e.g. '50cm' or '2ft'")
    key = _unit(default_unit) if m.group(2) is None else _unit_in(text, m.group(2), what="length")
    return float(value * _UNITS_MM_EXACT[key])


def parse_rectangle(text: str) -> tuple[float, float, float, float]:
    """Parse a rectangle of the wall such as ``1.0,1.2,0.9,1.8m``: x, y, width, height.

    x and y place the top-left corner from the wall's top-left (y down). A unit is
    required, as for the wall: one unit after the last number applies to all four
    (``1,1.2,0.9,1.8m``), and each number may carry its own (``100cm,1.2m,90cm,1.8m``).
    Commas separate the numbers, so decimals use a point.

    Returns
    -------
    (x_mm, y_mm, width_mm, height_mm) : tuple of float

    Raises
    ------
    ValueError
        Naming the text: not four numbers, no unit, an unknown unit, or a number that is
        not one.

    References
    ----------
    NIST SP 811 (2008), Appendix B; international yard and pound agreement (1959).
    """
    if not isinstance(text, str):
        raise TypeError(f"a rectangle must be text such as '1.0,1.2,0.9,1.8m', got {type(text).__name__}")
    return parse_lengths(text, 4, what="rectangle", form="X,Y,WIDTH,HEIGHT", example="1.0,1.2,0.9,1.8m")


def parse_lengths(text: str, count: int, *, what: str = "lengths", form: str = "", example: str = ""
                  ) -> tuple[float, ...]:
    """Parse ``count`` comma-separated lengths sharing the unit after the last (``1.5,1.2m``), in mm.

    Each number may carry its own unit instead; the last must have one.

    Raises
    ------
    ValueError
        Naming ``what`` and the text: the wrong count, no unit, an unknown unit, or not a number.
    """
    if not isinstance(text, str):
        raise TypeError(f"{what} must be text such as {example!r}, got {type(text).__name__}")
    items = [t.strip().lower() for t in text.split(",")]
    if len(items) != count:
        raise ValueError(f"{what} {text.strip()!r} must be {count} numbers {form} with a unit, "
                         f"e.g. {example!r} (decimals with a point)")
    found = []
    for item in items:
        m = _LENGTH_RE.match(item)
        value = _exact(m.group(1)) if m else None
        if value is None:
            raise ValueError(f"{what} {text.strip()!r}: {item!r} is not a number with an optional unit")
        found.append((value, m.group(2)))
    last = found[-1][1]
    if last is None:
        raise ValueError(f"{what} {text.strip()!r} needs a unit, e.g. '{text.strip()}m' (units: {_VALID_UNITS})")
    last = _unit_in(text, last, what=what)
    return tuple(float(v * _UNITS_MM_EXACT[last if u is None else _unit_in(text, u, what=what)])
                 for v, u in found)


def parse_brushes(text: str) -> tuple[float, ...]:
    """Parse a brush kit such as ``100,50,25,12`` (mm) or ``4in,2in,1in,1/2in``.

    Entries are separated by commas; a plain number is millimetres, or an entry may carry
    its own unit (``mm``, ``cm``, ``m``, ``in``, ``ft``). Simple fractions (``1/2in``) are
    accepted because brush sizes are sold that way. The order is kept as given.

    Parameters
    ----------
    text : str

    Returns
    -------
    tuple of float
        Brush widths in millimetres.

    Raises
    ------
    ValueError
        Naming the text or the bad entry: empty kit, an empty entry, an entry that is not
        a number, an unknown unit (listing the valid ones), or a width that is zero or
        negative.
    """
    if not isinstance(text, str):
        raise TypeError(f"brushes must be text such as '100,50,25,12', got {type(text).__name__}")
    if not text.strip():
        raise ValueError("brushes are empty; give widths in mm separated by commas, e.g. '100,50,25,12'")
    widths = []
    for i, item in enumerate(text.split(","), start=1):
        entry = item.strip().lower()
        if not entry:
            raise ValueError(f"brushes {text!r}: entry {i} is empty; give widths separated by single commas, "
                             f"e.g. '100,50,25,12'")
        m = _LENGTH_RE.match(entry)
        if not m:
            raise ValueError(f"brushes {text!r}: {item.strip()!r} is not a width; give a number in mm "
                             f"or with a unit ({_VALID_UNITS}), e.g. '100' or '4in'")
        num, unit = m.groups()
        key = "mm" if unit is None else _unit_in(text, unit, what="brushes")
        value = _exact(num)
        if value is None:
            raise ValueError(f"brushes {text!r}: {item.strip()!r} is not a width")
        width = value * _UNITS_MM_EXACT[key]
        if width <= 0:
            raise ValueError(f"brush width must be > 0 mm, got {item.strip()!r} in {text!r}")
        widths.append(float(width))
    return tuple(widths)


def _unit(unit) -> str:
    key = UNIT_ALIASES.get(unit.strip().lower()) if isinstance(unit, str) else None
    if key is None:
        raise ValueError(f"unknown unit {unit!r}; valid units: {_VALID_UNITS}")
    return key


def _unit_in(text: str, unit: str, *, what: str = "wall size") -> str:
    key = UNIT_ALIASES.get(unit)
    if key is None:
        raise ValueError(f"{what} {text!r}: unknown unit {unit!r}; valid units: {_VALID_UNITS}")
    return key


def _finite(name: str, value) -> float:
    if isinstance(value, bool):
        raise ValueError(f"{name} must be a number, got {value!r}")
    if not isinstance(value, (int, float)):
        try:
            value = float(value)
        except (TypeError, ValueError):
            raise ValueError(f"{name} must be a number, got {value!r}") from None
    if not math.isfinite(value):
        raise ValueError(f"{name} must be a finite number, got {value!r}")
    return float(value)


def _exact(num: str) -> Fraction | None:
    try:
        return Fraction(num)
    except (ValueError, ZeroDivisionError):
        return None


def _side_mm(text: str, side: str, num: str, unit: str) -> float:
    v = _exact(num)
    if v is None:
        raise ValueError(f"wall size {text!r}: {num!r} is not a number")
    if v <= 0:
        raise ValueError(f"wall {side} must be > 0, got {num} {unit} in {text!r}")
    return float(v * _UNITS_MM_EXACT[unit])
