"""How layerplan says amounts: volumes, lengths, areas, containers, coverage, durations, colour names.

One module, so the printed plan (``templates/sheets/``), the web pages (``templates/*.html``, where these
functions are Jinja filters) and any other exporter write the same amount the same way: a 12 × 8 ft wall needs
``3 × 1 qt`` on paper and on screen. Everything here returns plain text (no HTML); templates escape it.

Units: lengths come in mm, areas in m², volumes in litres (the units of plan.json). ``unit`` is the unit the
wall was measured in (``"m"``, ``"cm"``, ``"mm"``, ``"ft"``, ``"in"``); walls in ft or in (``us``) also get
US customary figures.

References
----------
.. [1] NIST Handbook 44 (2024), Appendix C: General Tables of Units of Measurement (US gallon = 3.785411784 L,
   4 quarts, 128 fluid ounces).
.. [2] International Yard and Pound Agreement (1959): 1 ft = 0.3048 m, 1 in = 25.4 mm.
.. [3] CIE 15:2004, Colorimetry (CIELAB lightness L*, chroma C*ab and hue angle h_ab).
"""

from __future__ import annotations

import math
from typing import Any, Iterable, Mapping

from .quantities import LITRES_PER_US_GALLON, TRACE_LITRES, US_FL_OZ_PER_GALLON, US_QUARTS_PER_GALLON, US_UNITS

#: inch in mm, exact (international yard and pound agreement, 1959)
MM_PER_INCH = 25.4
#: foot in metres, exact (international yard and pound agreement, 1959)
M_PER_FT = 0.3048
#: square feet in a square metre
FT2_PER_M2 = 1.0 / (M_PER_FT * M_PER_FT)
#: volumes under this are said in millilitres, litres (0.1 L = 100 mL)
ML_BELOW_L = 0.1
#: a container size within this many litres of a US size is named by it (5 mL: sizes are stored to 1 mL)
_US_SIZE_TOLERANCE_L = 5e-3
#: joins the count, "×" and size of one container, so "3 × 1 qt" never splits across lines (U+00A0)
_NBSP = "\u00a0"


def is_us(unit: str) -> bool:
    """True for walls measured in US customary units (ft, in), which also get gallons and square feet."""
    return str(unit) in US_UNITS


def number(value: float, digits: int = 2) -> str:
    """A number with at most ``digits`` decimals and no trailing zeros: 2.50 -> "2.5", -0.0 -> "0"."""
    s = f"{float(value):.{digits}f}"
    if "." in s:
        s = s.rstrip("0").rstrip(".")
    return "0" if s in ("", "-0") else s


# ------------------------------------------------------------------------------ lengths and areas
def length(mm: float, unit: str) -> str:
    """A length in the wall's unit: "3.5 m", "150 cm", "12 ft 6 in" (to the half inch), "18.5 in"."""
    mm = float(mm)
    if unit == "ft":
        ft, inch = divmod(round(mm / MM_PER_INCH * 2) / 2, 12)
        return f"{int(ft)} ft {number(inch, 1)} in" if inch else f"{int(ft)} ft"
    if unit == "in":
        return f"{number(mm / MM_PER_INCH, 1)} in"
    if unit == "mm":
        return f"{number(mm, 0)} mm"
    if unit == "cm":
        return f"{number(mm / 10, 1)} cm"
    return f"{number(mm / 1000, 3)} m"


def wall_size(width_mm: float, height_mm: float, unit: str) -> str:
    """A surface's size: "4 m × 2.5 m", or "12 ft × 8 ft (3.658 × 2.438 m)" for walls in ft/in."""
    text = f"{length(width_mm, unit)} × {length(height_mm, unit)}"
    if is_us(unit):
        text += f" ({number(float(width_mm) / 1000, 3)} × {number(float(height_mm) / 1000, 3)} m)"
    return text


def area(m2: float, unit: str) -> str:
    """An area: m² (cm² under 0.1 m²), or ft² with m² beside for walls in ft/in (in² under 1 ft²)."""
    m2 = float(m2)
    if is_us(unit):
        ft2 = m2 * FT2_PER_M2
        if 0 < ft2 < 1:
            return f"{number(ft2 * 144, 0)} in² ({number(m2 * 1e4, 0)} cm²)"
        return f"{number(ft2, 1)} ft² ({number(m2, 2)} m²)"
    if 0 < m2 < 0.1:
        return f"{number(m2 * 1e4, 0)} cm²"
    return f"{number(m2, 2)} m²"


def grid_side(mm: float, unit: str) -> str:
    """The side of a transfer-grid square: in cm for metric walls (as squares are chalked), else ft/in."""
    return length(mm, unit) if is_us(unit) else f"{number(float(mm) / 10, 1)} cm"


def paper_scale(wall_mm_per_paper_mm: float, unit: str) -> str:
    """What a printed picture's paper length stands for on the wall: "1 mm on paper ≈ 21 mm on the wall"."""
    scale = float(wall_mm_per_paper_mm)
    if is_us(unit):
        return f"1 in on paper ≈ {length(scale * MM_PER_INCH, 'ft')} on the wall"
    return f"1 mm on paper ≈ {number(scale, 0)} mm on the wall"


# ------------------------------------------------------------------------------------- volumes
def volume(litres: float, us: bool, *, used: bool = False) -> str:
    """A volume: litres from 0.1 L up, millilitres below ("35 mL"); US fluid ounces, quarts or gallons
    beside for walls in ft/in. ``used``: more than nothing, even if it rounds to 0 ("under 1 mL")."""
    litres = float(litres)
    if litres >= ML_BELOW_L - 5e-4:
        text = f"{number(litres, 2)} L"
        if us:  # gallons from a gallon up, quarts from a quart, else fluid ounces (NIST HB 44, App. C)
            gal = litres / LITRES_PER_US_GALLON
            qt = gal * US_QUARTS_PER_GALLON
            text += (f" ({number(gal, 2)} gal = {number(qt, 1)} qt)" if gal >= 1 - 5e-3 else
                     f" ({number(qt, 1)} qt)" if gal >= 1 / US_QUARTS_PER_GALLON - 5e-3 else
                     f" ({number(gal * US_FL_OZ_PER_GALLON, 1)} fl oz)")
        return text
    if litres <= 0 and not used:
        return "0 L"
    ml = litres * 1000.0
    if ml < 0.5:
        return "under 1 mL" + (" (under 0.1 fl oz)" if us else "")
    text = f"{number(ml, 0)} mL"
    if us:
        text += f" ({number(litres / LITRES_PER_US_GALLON * US_FL_OZ_PER_GALLON, 1)} fl oz)"
    return text


def millilitres(ml: float, us: bool = False) -> str:
    """A measured-out amount for sheets and classes: "3.5 mL", "40 mL", "1.25 L" from a litre up (never
    a container); "under 0.5 mL" for a touch; US fluid ounces beside when ``us``."""
    ml = float(ml)
    if ml >= 1000.0:
        text = f"{number(ml / 1000.0, 2)} L"
    elif ml <= 0:
        text = "0 mL"
    elif ml < 0.5:
        text = "under 0.5 mL"
    else:
        text = f"{number(ml, 1 if ml < 10 else 0)} mL"
    if us and ml > 0:
        text += f" ({number(ml / 1000.0 / LITRES_PER_US_GALLON * US_FL_OZ_PER_GALLON, 1)} fl oz)"
    return text


def amount(entry: Mapping[str, Any], us: bool) -> str:
    """The volume of a paint or stock entry of :func:`layerplan.quantities.paint_use`; an entry that is
    used at all (strokes, ground, a recipe) never reads "0 L"."""
    used = bool(entry.get("trace") or entry.get("for") or entry.get("strokes") or entry.get("ground_area_m2"))
    if "ml" in entry:  # a sheet's amount, measured out rather than bought
        return millilitres(entry["ml"], us) if entry["ml"] or not used else "under 0.5 mL"
    return volume(entry["litres"], us, used=used)


def is_trace(entry: Mapping[str, Any]) -> bool:
    """Less than a trace amount (the entry's ``trace`` flag, or worked out for plan files older than it)."""
    if "trace" in entry:
        return bool(entry["trace"])
    litres = float(entry["litres"])
    return 0 < litres < TRACE_LITRES or (litres == 0 and bool(entry.get("for")))


def container_size(litres: float, us: bool) -> str:
    """A container: "2.5 L", or by its US name for walls in ft/in ("1 qt", "1 gal", "5 gal")."""
    litres = float(litres)
    if us:
        for gallons in (1 / US_QUARTS_PER_GALLON, 1.0, 5.0):
            if abs(litres - gallons * LITRES_PER_US_GALLON) < _US_SIZE_TOLERANCE_L:
                return "1 qt" if gallons < 1 else f"{number(gallons)} gal"
    return number(litres, 3) + " L"


def containers(items: Iterable[Mapping[str, Any]], us: bool, *, trace: bool = False) -> str:
    """Containers to buy, ``[{"litres": 2.5, "count": 1}, {"litres": 1, "count": 2}]`` -> "1 × 2.5 L + 2 × 1 L".

    One container size is held together by no-break spaces (a line may break only at "+"). ``trace``:
    too little to buy for; the smallest container is named as a fallback. No containers -> "—".
    """
    items = [c for c in items if isinstance(c, Mapping)]
    if not items:
        return "—"
    if trace:
        smallest = container_size(items[-1]["litres"], us).replace(" ", _NBSP)
        return f"trace: use what you have, or 1{_NBSP}×{_NBSP}{smallest} (the smallest)"
    return " + ".join(f"{c.get('count', 1)}{_NBSP}×{_NBSP}{container_size(c['litres'], us).replace(' ', _NBSP)}"
                      for c in items)


def buy(entry: Mapping[str, Any], us: bool) -> str:
    """What to buy for a paint or stock entry of :func:`layerplan.quantities.paint_use`."""
    if "ml" in entry:  # a sheet's amount: measured out of bottles in the room, never a new tin
        return "measure out from the bottles you have"
    return containers(entry.get("containers") or [], us, trace=is_trace(entry))


def batch(items: Iterable[Mapping[str, Any]], us: bool) -> str:
    """A mixed paint's batch, ``[{"paint": "Warm blue", "litres": 1.5}, ...]`` (:mod:`layerplan.batches`) ->
    "1.5 L Warm blue + 500 mL Cool yellow"; an empty batch -> "—"."""
    items = [b for b in items if isinstance(b, Mapping)]
    if not items:
        return "—"
    return " + ".join(f"{volume(b['litres'], us, used=True)} {b['paint']}" for b in items)


def coverage(m2_per_litre: float, us: bool) -> str:
    """A spreading rate: "10 m² per litre", with ft² per US gallon beside for walls in ft/in."""
    text = f"{number(m2_per_litre, 1)} m² per litre"
    if us:
        text += f" (about {number(float(m2_per_litre) * FT2_PER_M2 * LITRES_PER_US_GALLON, 0)} ft² per US gallon)"
    return text


def count(n: int, noun: str, plural: str | None = None) -> str:
    """ "1 coat", "2 coats"."""
    return f"{n} {noun if n == 1 else plural or noun + 's'}"


def brush(width_mm: float, us: bool = True) -> str:
    """A brush width: "50 mm (≈ 2 in)", or "50 mm" when ``us`` is false."""
    text = f"{number(width_mm)} mm"
    return text + f" (≈ {number(float(width_mm) / MM_PER_INCH, 1)} in)" if us else text


# ------------------------------------------------------------------------------------ money
def money(amount: float, currency: str) -> str:
    """An amount of money to the cent: "€12.50", "$1,204.00", "EUR 12.50" (a code is set apart, a sign is not)."""
    text = f"{float(amount):,.2f}"
    if not currency:
        return text
    return f"{currency}{_NBSP}{text}" if currency.isalpha() else f"{currency}{text}"


# ------------------------------------------------------------------------------------ durations
def duration(seconds: float) -> str:
    """A working time to the minute, at least 1 min: "45 min", "2 h", "1 h 5 min"."""
    minutes = max(1, int(round(float(seconds) / 60.0)))
    h, m = divmod(minutes, 60)
    if h == 0:
        return f"{m} min"
    if m == 0:
        return f"{h} h"
    return f"{h} h {m} min"


# --------------------------------------------------------------------------------- colour names
#: hue families by CIELAB hue angle h_ab (degrees, D65): (upper bound, name, typical L*); our own naming
_HUES = (
    (20.0, "rose", 55.0),
    (50.0, "red", 50.0),
    (75.0, "orange", 65.0),
    (95.0, "golden yellow", 80.0),
    (118.0, "yellow", 90.0),
    (132.0, "yellow-green", 80.0),
    (170.0, "green", 60.0),
    (215.0, "teal", 60.0),
    (312.0, "blue", 45.0),
    (345.0, "purple", 45.0),
    (360.0, "rose", 55.0),
)


def colour_name(lab) -> str:
    """A plain descriptive name for a CIELAB colour, e.g. "dark muted blue".

    Our own simple naming: neutral colours (chroma C*ab < 8) by lightness from black to
    white; others by a hue family from the hue angle h_ab, with "light"/"dark" from L*
    against the family's usual lightness and "greyish"/"muted"/"vivid" from the chroma.
    A few everyday words replace a family where they fit better: brown (dark orange or
    red-orange), olive (dark yellow), pink (light rose or red), cream (pale, weak yellow).

    Parameters
    ----------
    lab : sequence of 3 floats, CIELAB (D65, 2°)

    Returns
    -------
    name : str

    References
    ----------
    CIE 15:2004, Colorimetry (CIELAB lightness L*, chroma C*ab and hue angle h_ab).
    """
    L, a, b = (float(v) for v in lab)
    c = math.hypot(a, b)
    h = math.degrees(math.atan2(b, a)) % 360.0
    if c < 8.0:
        tint = ""
        if c >= 3.0 and 15.0 < L < 92.0:
            tint = "warm " if 20.0 <= h < 120.0 else "cool " if 180.0 <= h < 320.0 else ""
        if L < 16:
            return "black" if not tint else f"{tint}near-black"
        if L < 38:
            return f"{tint}dark grey"
        if L < 62:
            return f"{tint}grey"
        if L < 92:
            return f"{tint}light grey"
        return "white" if c < 3.0 else "off-white"
    name, ref = next((n, r) for top, n, r in _HUES if h < top)
    d = L - ref
    if name in ("orange", "red") and 35.0 <= h < 95.0 and L < 52.0:
        name, d = "brown", L - 40.0
    elif name in ("golden yellow", "yellow", "yellow-green") and L < 62.0:
        name, d = "olive", L - 50.0
    elif name in ("rose", "red") and L > 72.0:
        name, d = "pink", L - 80.0
    elif name in ("golden yellow", "yellow") and L > 85.0 and c < 30.0:
        name, d = "cream", 0.0
    light = "very dark " if d < -25 else "dark " if d < -10 else "pale " if d > 25 else "light " if d > 10 else ""
    chroma = "greyish " if c < 18 else "muted " if c < 35 else "vivid " if c > 75 else ""
    return f"{light}{chroma}{name}"


def colour_name_of_srgb(srgb: str) -> str:
    """:func:`colour_name` of a ``#rrggbb`` colour (IEC 61966-2-1 sRGB, D65)."""
    import numpy as np

    from .colour import srgb_to_lab

    h = str(srgb).lstrip("#")
    return colour_name(srgb_to_lab(np.array([int(h[i:i + 2], 16) for i in (0, 2, 4)], dtype=np.uint8)))
