"""plan.html: the printable plan a painter takes to the wall and to the paint shop.

One self-contained HTML file: pictures embedded as data URIs, maps as inline SVG, CSS
inline. Printing gives one section per sheet; every section is laid out to fit the
printable area both A4 (210 × 297 mm) and US Letter (215.9 × 279.4 mm) share, so the
same file prints on either.

Sections: cover, paint card, shopping list, brushes and time, transfer grid, one
sheet per layer, safety.

References
----------
.. [1] ISO 216:2007, Writing paper and certain classes of printed matter - Trimmed
   sizes - A and B series (A4 = 210 × 297 mm).
.. [2] ANSI/ASME Y14.1-2020, Decimal inch drawing sheet size and format (Letter,
   8.5 × 11 in = 215.9 × 279.4 mm).
.. [3] W3C, CSS Paged Media Module Level 3 (``@page``) and CSS Fragmentation Module
   Level 3 (``break-after: page``).
.. [4] RFC 2397, The "data" URL scheme.
"""

from __future__ import annotations

import base64
import html
import io
import math
from pathlib import Path
from typing import Any, Mapping

import numpy as np

from .outlines import outline_maps, place_labels
from .plan import Plan
from .raster import render_steps
from .quantities import (
    LITRES_PER_US_GALLON,
    TRACE_LITRES,
    US_FL_OZ_PER_GALLON,
    US_UNITS,
    paint_use as compute_paint_use,
)
from .svg import check_grid, column_label, grid_over_image_svg, label_box_mm, outline_map_svg

#: default transfer-grid square, mm (50 cm: a comfortable square to copy freehand; common practice)
GRID_MM = 500.0
#: default transfer-grid square for walls measured in ft or in, mm (2 ft, exact; common practice)
GRID_MM_US = 2 * 304.8
#: foot in metres, exact (international yard and pound agreement, 1959)
M_PER_FT = 0.3048
#: square feet in a square metre
FT2_PER_M2 = 1.0 / (M_PER_FT * M_PER_FT)
#: volumes under this are printed in millilitres, litres (0.1 L = 100 mL)
ML_BELOW_L = 0.1
#: an area of an outline map gets a label only when it covers at least this much of the
#: printed page, mm² (3 × 3 mm, about a label's own size: smaller shapes vanish under their
#: label; our choice); see :func:`layerplan.outlines.place_labels` for the other rules
MIN_LABEL_PAPER_MM2 = 9.0
#: printable width and height both A4 and Letter leave inside 12 mm margins, mm
#: (A4 is 210 mm wide, Letter 279.4 mm tall: the box is 186 × 255.4 mm)
PAGE_MARGIN_MM = 12.0
PRINT_W_MM = 210.0 - 2 * PAGE_MARGIN_MM
PRINT_H_MM = 279.4 - 2 * PAGE_MARGIN_MM
#: time rule of thumb (from memory; a rough guide, a painter's own pace will differ):
#: load, place and lift a stroke
SECONDS_PER_STROKE = 5.0
#: ... plus the brush moving along the wall
STROKE_MM_PER_SECOND = 250.0
#: ... plus washing out and reloading at each change of paint within a layer
PAINT_CHANGE_SECONDS = 180.0
#: rolling the ground, m² per hour per coat (from memory, common practice for a roller on a wall)
GROUND_M2_PER_HOUR = 10.0
#: inch in mm, exact (international yard and pound agreement, 1959)
MM_PER_INCH = 25.4
_PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"


# ----------------------------------------------------------------- colour names
#: hue families by CIELAB hue angle h_ab (degrees, D65): (upper bound, name, typical L*)
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


# -------------------------------------------------------------------- helpers
def _e(text: Any) -> str:
    return html.escape(str(text), quote=True)


def _num(v: float, digits: int = 2) -> str:
    s = f"{float(v):.{digits}f}"
    if "." in s:
        s = s.rstrip("0").rstrip(".")
    return "0" if s in ("", "-0") else s


def _png_uri(data: bytes) -> str:
    return "data:image/png;base64," + base64.b64encode(data).decode("ascii")


def _png(rgb: np.ndarray) -> bytes:
    from PIL import Image

    buf = io.BytesIO()
    Image.fromarray(np.ascontiguousarray(rgb, dtype=np.uint8), "RGB").save(buf, format="PNG")
    return buf.getvalue()


def _load_images(plan: Plan, images: Mapping[str, Any] | None, steps: list[np.ndarray]) -> dict[str, bytes]:
    """Normalise ``images`` to {"final": png, "steps/NN": png}; render what is missing."""
    out: dict[str, bytes] = {}
    for key, value in (images or {}).items():
        name = str(key)
        name = name[:-4] if name.endswith(".png") else name
        if isinstance(value, (bytes, bytearray, memoryview)):
            data = bytes(value)
        elif isinstance(value, (str, Path)):
            try:
                data = Path(value).read_bytes()
            except OSError as exc:
                raise ValueError(f"image {key!r}: cannot read {value}: {exc.strerror or exc}") from exc
        else:
            raise ValueError(f"image {key!r} must be PNG bytes or a path, got {type(value).__name__}")
        if not data.startswith(_PNG_SIGNATURE):
            raise ValueError(f"image {key!r} is not a PNG file")
        out[name] = data
    need = ["final"] + [f"steps/{n:02d}" for n in range(len(plan.layers) + 1)]
    if any(k not in out for k in need):
        rgb = plan.palette_rgb()
        for n, canvas in enumerate(steps):
            out.setdefault(f"steps/{n:02d}", _png(rgb[canvas]))
        out.setdefault("final", _png(rgb[steps[-1]]))
    return out


def _fit_box(plan: Plan, max_w_mm: float, max_h_mm: float) -> float:
    """Printed width (mm) of a wall picture fitted into a box."""
    aspect = plan.wall_width_mm / plan.wall_height_mm
    return min(max_w_mm, max_h_mm * aspect)


#: a surface whose shorter side is under this many default squares gets the small-surface grid
SMALL_SURFACE_SQUARES = 3
#: grid square for small boards and sheets: 10 cm, or 4 in (common practice for squaring up a drawing)
GRID_MM_SMALL, GRID_MM_SMALL_US = 100.0, 4 * 25.4


def default_grid_mm(unit: str, *, shorter_side_mm: float | None = None) -> float:
    """The default transfer-grid square: 50 cm, or 2 ft for walls measured in ft/in.

    A surface whose shorter side holds fewer than ``SMALL_SURFACE_SQUARES`` such squares (a
    classroom board, a sheet) gets 10 cm, or 4 in, so the grid still has squares to copy.
    """
    us = unit in US_UNITS
    big = GRID_MM_US if us else GRID_MM
    if shorter_side_mm is not None and shorter_side_mm < SMALL_SURFACE_SQUARES * big:
        return GRID_MM_SMALL_US if us else GRID_MM_SMALL
    return big


def _length(mm: float, unit: str) -> str:
    if unit == "ft":
        inches = mm / MM_PER_INCH
        ft, inch = divmod(round(inches * 2) / 2, 12)
        return f"{int(ft)} ft {_num(inch, 1)} in" if inch else f"{int(ft)} ft"
    if unit == "in":
        return f"{_num(mm / MM_PER_INCH, 1)} in"
    if unit == "mm":
        return f"{_num(mm, 0)} mm"
    if unit == "cm":
        return f"{_num(mm / 10, 1)} cm"
    return f"{_num(mm / 1000, 3)} m"


def _is_trace(entry: Mapping[str, Any]) -> bool:
    """Less than a trace amount (the ``trace`` flag, or worked out for older plan files)."""
    if "trace" in entry:
        return bool(entry["trace"])
    return 0 < float(entry["litres"]) < TRACE_LITRES or (float(entry["litres"]) == 0 and bool(entry.get("for")))


def _containers(containers: list[dict[str, Any]], us: bool, trace: bool = False) -> str:
    if not containers:
        return "—"
    if trace:
        return (f"trace: use what you have, or 1 × {_container_size(float(containers[-1]['litres']), us)} "
                "(the smallest)")
    return " + ".join(f"{c['count']} × {_container_size(float(c['litres']), us)}" for c in containers)


def _container_size(size: float, us: bool) -> str:
    if us:
        for factor, word in ((0.25, "qt"), (1.0, "gal"), (5.0, "gal")):
            if abs(size - factor * LITRES_PER_US_GALLON) < 5e-3:
                return "1 qt" if word == "qt" else f"{_num(factor)} gal"
    return _num(size, 3) + " L"


def format_litres(litres: float, us: bool, *, used: bool = False) -> str:
    """A volume to read: litres from 0.1 L up, millilitres below ("35 mL"); US fluid
    ounces or gallons beside for walls in ft/in. ``used``: more than nothing, even if it
    rounds to 0."""
    litres = float(litres)
    if litres >= ML_BELOW_L - 5e-4:
        text = f"{_num(litres, 2)} L"
        if us:  # gallons from a gallon up, quarts from a quart, else fluid ounces (NIST HB 44, App. C)
            gal = litres / LITRES_PER_US_GALLON
            text += (f" ({_num(gal, 2)} gal = {_num(gal * 4, 1)} qt)" if gal >= 1 - 5e-3 else
                     f" ({_num(gal * 4, 1)} qt)" if gal >= 0.25 - 5e-3 else
                     f" ({_num(gal * US_FL_OZ_PER_GALLON, 1)} fl oz)")
        return text
    if litres <= 0 and not used:
        return "0 L"
    ml = litres * 1000.0
    if ml < 0.5:
        return "under 1 mL" + (" (under 0.1 fl oz)" if us else "")
    text = f"{_num(ml, 0)} mL"
    if us:
        text += f" ({_num(litres / LITRES_PER_US_GALLON * US_FL_OZ_PER_GALLON, 1)} fl oz)"
    return text


def _volume(entry: dict[str, Any], us: bool) -> str:
    used = bool(entry.get("trace") or entry.get("for") or entry.get("strokes") or entry.get("ground_area_m2"))
    return format_litres(entry["litres"], us, used=used)


def _area(m2: float, unit: str) -> str:
    """An area to read: m² (cm² under 0.1 m²), or ft² with m² beside for walls in ft/in."""
    m2 = float(m2)
    if unit in US_UNITS:
        ft2 = m2 * FT2_PER_M2
        if 0 < ft2 < 1:
            return f"{_num(ft2 * 144, 0)} in² ({_num(m2 * 1e4, 0)} cm²)"
        return f"{_num(ft2, 1)} ft² ({_num(m2, 2)} m²)"
    if 0 < m2 < 0.1:
        return f"{_num(m2 * 1e4, 0)} cm²"
    return f"{_num(m2, 2)} m²"


def _coverage(m2_per_litre: float, us: bool) -> str:
    text = f"{_num(m2_per_litre, 1)} m² per litre"
    if us:
        text += f" (about {_num(m2_per_litre * FT2_PER_M2 * LITRES_PER_US_GALLON, 0)} ft² per US gallon)"
    return text


def _lab_of(srgb: str) -> np.ndarray:
    from .colour import srgb_to_lab

    h = srgb.lstrip("#")
    return srgb_to_lab(np.array([int(h[i:i + 2], 16) for i in (0, 2, 4)], dtype=np.uint8))


def _swatch(srgb: str, *, big: bool = False) -> str:
    cls = "swatch big" if big else "swatch"
    return f'<span class="{cls}" style="background:{_e(srgb)}"></span>'


def _recipe_text(recipe: Mapping[str, Any]) -> str:
    parts = recipe.get("parts") or []
    return " + ".join(f"{_e(_num(p['parts']))} {_e(p['paint'])}" for p in parts)


def _duration(seconds: float) -> str:
    minutes = max(1, int(round(seconds / 60.0)))
    h, m = divmod(minutes, 60)
    if h == 0:
        return f"{m} min"
    if m == 0:
        return f"{h} h"
    return f"{h} h {m} min"


def layer_time_s(layer) -> float:
    """Rough painting time of a layer by the rule of thumb above (from memory), seconds."""
    length = sum(s.length_mm() for s in layer.strokes)
    changes = sum(1 for a, b in zip(layer.strokes, layer.strokes[1:]) if a.paint != b.paint)
    runs = (changes + 1) if layer.strokes else 0
    return (len(layer.strokes) * SECONDS_PER_STROKE + length / STROKE_MM_PER_SECOND
            + runs * PAINT_CHANGE_SECONDS)


# --------------------------------------------------------------------- styles
_CSS = f"""
:root {{ --ink: #1d1d1b; --soft: #6b6760; --rule: #cfcac0; --paper: #fffdf8; --flag: #a33b00; }}
* {{ box-sizing: border-box; }}
body {{ margin: 0; background: #e9e6df; color: var(--ink);
       font: 10.5pt/1.45 "Helvetica Neue", Arial, "Liberation Sans", sans-serif; }}
.sheet {{ background: var(--paper); max-width: {PRINT_W_MM:g}mm; margin: 8mm auto; padding: 8mm;
         box-shadow: 0 1px 4px rgba(0,0,0,.15); }}
h1 {{ font-size: 20pt; margin: 0 0 2mm; }}
h2 {{ font-size: 14pt; margin: 0 0 3mm; border-bottom: 1.5pt solid var(--ink); padding-bottom: 1mm; }}
h3 {{ font-size: 11pt; margin: 4mm 0 1.5mm; }}
p {{ margin: 1.5mm 0; }}
.lead {{ color: var(--soft); }}
figure {{ margin: 3mm auto; max-width: 100%; }}
figure img, figure svg {{ display: block; width: 100%; height: auto; border: 0.3mm solid var(--rule);
                         image-rendering: pixelated; }}
figcaption {{ font-size: 8.5pt; color: var(--soft); margin-top: 1mm; }}
table {{ border-collapse: collapse; width: 100%; margin: 2mm 0; font-size: 9.5pt; }}
th, td {{ text-align: left; padding: 1.2mm 1.5mm; border-bottom: 0.3mm solid var(--rule); vertical-align: top; }}
th {{ font-size: 8.5pt; text-transform: uppercase; letter-spacing: .03em; color: var(--soft); }}
td.num, th.num {{ text-align: right; white-space: nowrap; }}
.swatch {{ display: inline-block; width: 7mm; height: 7mm; border: 0.3mm solid var(--ink);
          vertical-align: middle; border-radius: 1mm; }}
.swatch.big {{ width: 14mm; height: 10mm; }}
.pair {{ display: inline-flex; gap: 1mm; text-align: center; line-height: 1.1; }}
.pair .swatch.big {{ width: 11mm; }}
.pid {{ font-weight: 700; font-size: 11pt; }}
.flag {{ color: var(--flag); font-weight: 700; }}
.note {{ border: 0.4mm solid var(--ink); border-radius: 1.5mm; padding: 2mm 3mm; margin: 3mm 0;
        background: #f6f1e4; }}
.note strong {{ display: block; margin-bottom: .5mm; }}
.grid2 {{ display: grid; grid-template-columns: 1fr 1fr; gap: 2mm 6mm; }}
.facts td:first-child {{ color: var(--soft); width: 38%; }}
ul {{ margin: 1mm 0 2mm 5mm; padding-left: 3mm; }}
li {{ margin: .6mm 0; }}
.small {{ font-size: 8.5pt; color: var(--soft); }}
.layer-top {{ display: grid; grid-template-columns: auto 1fr; gap: 0 5mm; align-items: start; }}
.layer-top figure {{ margin: 0; }}
table.compact {{ font-size: 8.5pt; margin: 0; }}
table.compact td, table.compact th {{ padding: .5mm 1mm; }}
table.compact .swatch {{ width: 4.5mm; height: 4.5mm; }}
td.hint {{ white-space: nowrap; }}
* {{ -webkit-print-color-adjust: exact; print-color-adjust: exact; }}
@page {{ margin: {PAGE_MARGIN_MM:g}mm; }}
@media print {{
  body {{ background: none; font-size: 10pt; }}
  .sheet {{ box-shadow: none; margin: 0; padding: 0; max-width: none; width: {PRINT_W_MM:g}mm;
           break-after: page; page-break-after: always; }}
  .sheet:last-of-type {{ break-after: auto; page-break-after: auto; }}
  h2, h3, tr, figure, .note {{ break-inside: avoid; page-break-inside: avoid; }}
  h2, h3 {{ break-after: avoid; page-break-after: avoid; }}
}}
"""


# ------------------------------------------------------------------- sections
def _figure(inner: str, width_mm: float, caption: str = "") -> str:
    cap = f"<figcaption>{caption}</figcaption>" if caption else ""
    return f'<figure style="width:{width_mm:.1f}mm">{inner}{cap}</figure>'


def _settings_rows(plan: Plan, unit: str) -> list[tuple[str, str]]:
    """The settings a plan was made with, in plain words."""
    st = dict(plan.extra.get("settings") or {})
    us = unit in US_UNITS
    rows: list[tuple[str, str]] = []
    w, h = st.pop("wall_width_mm", None), st.pop("wall_height_mm", None)
    st.pop("wall_unit", None)
    if w is not None:
        rows.append(("surface as given", f"{_length(float(w), unit)} wide, "
                     + (f"{_length(float(h), unit)} tall" if h is not None else "height from the photo")))
    fit = st.pop("fit", None)
    if fit is not None:
        rows.append(("fit", {"cover": "fill the surface, crop the overhang",
                             "contain": "whole photo inside, edges in the ground paint"}.get(fit, str(fit))))
    asked = st.pop("paints", None)
    free = st.pop("free_palette", None)
    if asked is not None:
        got = len(plan.palette)
        text = f"{asked}" if got == asked else (
            f"{asked} asked, {got} after merging colours that mix the same" if not free else
            f"{asked} asked, {got} after merging colours that came out the same")
        rows.append(("paints", text))
    if "inventory" in st:
        inv = st.pop("inventory")
        rows.append(("paints mixed from", "basic acrylic set (built in)" if inv is None else Path(str(inv)).name))
    if free is not None:
        rows.append(("palette", "the photo's own colours" if free else "snapped to mixable colours"))
    mix, parts = st.pop("mix_paints", None), st.pop("max_parts", None)
    if mix is not None or parts is not None:
        bits = ([f"{mix} paint{'s' if mix != 1 else ''}"] if mix is not None else []) \
            + ([f"{parts} parts"] if parts is not None else [])
        rows.append(("mixes", "at most " + " and ".join(bits) + " per mix"))
    tol = st.pop("tolerance_de", None)
    if tol is not None:
        rows.append(("mix tolerance", f"ΔE00 {_num(tol, 1)}"))
    brushes = st.pop("brushes_mm", None)
    if brushes:
        text = ", ".join(_num(b) for b in brushes) + " mm"
        if us:
            text += " (" + ", ".join(_num(b / MM_PER_INCH, 1) for b in brushes) + " in)"
        rows.append(("brushes", text))
    if "mm_per_px" in st:
        v = st.pop("mm_per_px")
        rows.append(("pixel size", f"{_num(plan.mm_per_px)} mm" + (" (automatic)" if v is None else "")))
    cost = st.pop("stroke_cost", None)
    if cost is not None:
        rows.append(("stroke threshold", f"ΔE00 {_num(cost)} per brush-width square"))
    seed = st.pop("seed", None)
    if seed is not None:
        rows.append(("random seed", str(seed)))
    for key, value in st.items():  # anything newer than this page
        if isinstance(value, (list, tuple)):
            value = ", ".join(_num(v) if isinstance(v, (int, float)) else str(v) for v in value)
        elif isinstance(value, float):
            value = _num(value)
        rows.append((key.replace("_", " "), "automatic" if value is None else str(value)))
    return rows


def _cover(plan: Plan, imgs, title: str, use: dict[str, Any], unit: str) -> str:
    w, h = plan.wall_width_mm, plan.wall_height_mm
    fig_w = _fit_box(plan, PRINT_W_MM - 16, 100.0)
    scale = w / fig_w
    us = unit in US_UNITS
    rows = [f"<tr><td>{_e(k)}</td><td>{_e(v)}</td></tr>" for k, v in _settings_rows(plan, unit)]
    stats = plan.extra.get("stats") or {}
    source = (plan.extra.get("source") or {}).get("image")
    facts = [
        ("surface", f"{_length(w, unit)} × {_length(h, unit)}"
                    + (f" ({_num(w / 1000, 3)} × {_num(h / 1000, 3)} m)" if unit in US_UNITS else "")),
        ("area", _area(w * h / 1e6, unit)),
        ("working picture", f"{plan.width_px} × {plan.height_px} px, 1 px = {_num(plan.mm_per_px)} mm of wall"),
        ("picture above", (f"1 in on paper ≈ {_length(scale * MM_PER_INCH, 'ft')} on the wall"
                           if us else f"1 mm on paper ≈ {_num(scale, 0)} mm on the wall")
                          + f" (scale about 1:{_num(scale, 0)}) when printed {_num(fig_w, 0)} mm wide"),
        ("paints", f"{len(plan.palette)} (ground: {plan.ground})"),
        ("layers", f"{len(plan.layers)}, brushes "
                   + ", ".join(f"{_num(l.brush_width_mm)} mm" for l in plan.layers)),
        ("strokes", f"{plan.stroke_count()}"),
    ]
    if source:
        facts.insert(0, ("from", str(source)))
    if "mean_delta_e_final" in stats:
        facts.append(("match to the photo", f"mean ΔE00 {_num(stats['mean_delta_e_final'], 1)} "
                                            "(CIEDE2000; under about 2 reads as the same colour at a glance)"))
    total_l = sum(p["litres"] for p in use["paints"])
    facts.append(("paint in all", f"about {format_litres(total_l, us, used=True)}"))
    fact_rows = "".join(f"<tr><td>{_e(k)}</td><td>{_e(v)}</td></tr>" for k, v in facts)
    return f"""
<section class="sheet" id="cover">
  <h1>{_e(title)}</h1>
  <p class="lead">A layered painting plan: block in with the widest brush, finish with the narrowest.
  Made with layerplan.</p>
  {_figure(f'<img alt="the finished picture" src="{_png_uri(imgs["final"])}">', fig_w,
           "The finished picture as planned, in the plan's paints.")}
  <div class="grid2">
    <div><h3>The wall</h3><table class="facts compact">{fact_rows}</table></div>
    <div><h3>Settings used</h3><table class="facts compact">{''.join(rows) or '<tr><td>—</td></tr>'}</table></div>
  </div>
  {_screen_note()}
</section>"""


def _screen_note() -> str:
    return ('<div class="note" id="screen-note"><strong>Screen and print colours are not paint colours.</strong>'
            "Monitors, printers and light on the wall all shift colour. Mix a test swatch of every paint first, "
            "let it dry (acrylic dries darker), and compare it on the wall in daylight before mixing the full "
            "amount.</div>")


def _paint_card(plan: Plan, use: dict[str, Any], us: bool) -> str:
    litres = {p["paint"]: p for p in use["paints"]}
    layers_of: dict[str, list[int]] = {}
    for n, layer in enumerate(plan.layers, start=1):
        for s in layer.strokes:
            lst = layers_of.setdefault(s.paint, [])
            if not lst or lst[-1] != n:
                lst.append(n)
    rows = []
    any_recipe = False
    for p in plan.palette:
        recipe = p.extra.get("recipe")
        name = f"{_e(colour_name(p.lab))}<br><span class='small'>{_e(p.srgb)}</span>"
        swatches = _swatch(p.srgb, big=True)
        if recipe:
            any_recipe = True
            de = recipe.get("delta_e")
            in_gamut = recipe.get("in_gamut", True)
            mix = _recipe_text(recipe)
            de_text = "—" if de is None else _num(de, 1)
            if not in_gamut:
                de_text += ' <span class="flag">out of reach</span>'
            target = str(recipe.get("target") or p.srgb)
            predicted = str(recipe.get("predicted_srgb") or p.srgb)
            # the colour the photo wanted beside what the mix gives (the same when the mix is exact)
            swatches = (f"<span class='pair'><span>{_swatch(target, big=True)}<br><span class='small'>photo"
                        f"</span></span><span>{_swatch(predicted, big=True)}<br><span class='small'>mix</span>"
                        "</span></span>")
            if target.lower() != predicted.lower():
                wanted = colour_name(p.lab if target.lower() == p.srgb.lower() else _lab_of(target))
                mixed = colour_name(p.lab if predicted.lower() == p.srgb.lower() else _lab_of(predicted))
                name = (f"{_e(mixed)}<br><span class='small'>mix {_e(predicted)}, photo {_e(target)}</span>"
                        if wanted == mixed else
                        f"mix: {_e(mixed)} <span class='small'>{_e(predicted)}</span><br>"
                        f"photo: {_e(wanted)} <span class='small'>{_e(target)}</span>")
                if p.srgb.lower() not in (target.lower(), predicted.lower()):
                    name += f"<br><span class='small'>on the maps {_e(p.srgb)}</span>"
        else:
            mix, de_text = '<span class="small">no recipe: mix by eye to the swatch, or have it tinted</span>', "—"
        used = []
        if p.id == plan.ground:
            used.append("ground")
        if layers_of.get(p.id):
            used.append("layers " + ", ".join(str(n) for n in layers_of[p.id]))
        rows.append(
            f'<tr id="paint-{_e(p.id)}"><td>{swatches}</td><td class="pid">{_e(p.id)}</td>'
            f"<td>{name}</td>"
            f"<td>{mix}</td><td class='num'>{de_text}</td>"
            f"<td class='num'>{_e(_volume(litres[p.id], us))}</td><td>{_e('; '.join(used) or 'not used')}</td></tr>"
        )
    head = ("<tr><th></th><th>id</th><th>colour</th><th>mix (parts by volume)</th><th class='num'>ΔE00</th>"
            "<th class='num'>to mix</th><th>used for</th></tr>")
    snapped = not (plan.extra.get("settings") or {}).get("free_palette", False)
    explain = ("Swatches: <b>photo</b> is the colour the photo wanted there, <b>mix</b> what the recipe is "
               "predicted to give (Kubelka–Munk mixing model). "
               + ("The plan's pictures and maps use the mix colours (palette snapped to mixable colours). "
                  if snapped else "The plan's pictures and maps use the photo's colours. ")
               + "ΔE00 is the CIEDE2000 difference between the two; about 1 is barely visible, above 3 is "
               "plain to see. <span class='flag'>Out of reach</span> means the paints on hand cannot get "
               "closer: the nearest mix is given — consider buying a stock colour nearer the photo's."
               if any_recipe else
               "No mix recipes in this plan: match each paint to its swatch by eye, or take the swatch "
               "(printed on paper, see the note below) to a paint shop for tinting.")
    return f"""
<section class="sheet" id="paint-card">
  <h2>Paint card</h2>
  <p class="lead">Every paint of the plan, with its id as written on the maps.</p>
  <table class="paints">{head}{''.join(rows)}</table>
  <p class="small">{explain}</p>
  {_screen_note()}
</section>"""


def _shopping(plan: Plan, use: dict[str, Any], unit: str) -> str:
    us = unit in US_UNITS
    inv = {e.get("name"): e for e in (plan.extra.get("inventory") or []) if isinstance(e, Mapping)}
    assumptions = (f"Worked out at {_coverage(use['coverage_m2_per_litre'], us)} per coat, "
                   f"{use['ground_coats']} coat{'s' if use['ground_coats'] != 1 else ''} of ground, "
                   f"{use['stroke_coats']} coat{'s' if use['stroke_coats'] != 1 else ''} per stroke, "
                   f"plus {_num(use['waste'] * 100, 0)} % for spills and touch-ups. Check the spreading rate on "
                   "your tins: rough, porous or dark walls drink more, and light colours over dark need extra coats.")
    out = []
    if use.get("stock"):
        rows = []
        for s in use["stock"]:
            sw = _swatch(inv[s["paint"]]["srgb"]) if s["paint"] in inv and inv[s["paint"]].get("srgb") else ""
            rows.append(f"<tr><td>{sw} {_e(s['paint'])}</td><td class='num'>{_e(_volume(s, us))}</td>"
                        f"<td>{_e(_containers(s['containers'], us, _is_trace(s)))}</td>"
                        f"<td>{_e(', '.join(s['for']))}</td></tr>")
        out.append("<h3>Stock paints to buy</h3><table class='stock compact'><tr><th>paint</th><th class='num'>needed</th>"
                   f"<th>buy</th><th>goes into</th></tr>{''.join(rows)}</table>")
    rows = []
    for p, e in zip(plan.palette, use["paints"]):
        how = "mix from stock" if p.extra.get("recipe") else "buy tinted, or mix"
        buy = "—" if p.extra.get("recipe") else _containers(e["containers"], us, _is_trace(e))
        rows.append(f"<tr><td>{_swatch(p.srgb)} <span class='pid'>{_e(p.id)}</span></td>"
                    f"<td class='num'>{_e(_area(e['area_m2'], unit))}</td><td class='num'>{_e(_volume(e, us))}</td>"
                    f"<td>{_e(how)}</td><td>{_e(buy)}</td></tr>")
    out.append("<h3>Each paint of the plan</h3><table class='mixed compact'><tr><th>paint</th><th class='num'>area</th>"
               f"<th class='num'>amount</th><th>how</th><th>containers</th></tr>{''.join(rows)}</table>")
    if any(_is_trace(e) for e in list(use.get("stock") or []) + list(use["paints"])):
        out.append(f"<p class='small'>A <b>trace amount</b> is under {format_litres(TRACE_LITRES, us)}: too little to "
                   "buy a container for. A squeeze from an artist's tube or what is left in a pot will do; buy "
                   "the smallest container only if you have none. Mix small amounts by measuring the parts "
                   "with a spoon or a syringe.</p>")
    extra = ("<h3>Also</h3><ul><li>primer or sealer if the wall is new plaster, bare or patchy</li>"
             "<li>clear exterior or anti-graffiti varnish for outdoor walls (follow the maker's guidance)</li>"
             "<li>mixing tubs with lids and labels (write the paint id on each), stirrers, a measuring cup for "
             "parts</li><li>roller and tray for the ground; chalk line or pencil and a level for the grid</li>"
             "<li>drop cloths, masking tape, rags, water or cleaner for the brushes</li></ul>")
    return f"""
<section class="sheet" id="shopping">
  <h2>Shopping list</h2>
  <p class="lead">{_e(assumptions)}</p>
  {''.join(out)}
  {extra}
</section>"""


def _brushes(plan: Plan, use: dict[str, Any], us: bool = False) -> str:
    rows = []
    ground = next(p for p in use["paints"] if p["paint"] == plan.ground)
    ground_s = ground["ground_area_m2"] * max(use["ground_coats"], 0) / GROUND_M2_PER_HOUR * 3600.0
    total = ground_s
    rows.append(f"<tr><td>ground</td><td>roller</td><td class='num'>—</td><td>{_e(plan.ground)}</td>"
                f"<td class='num'>{_e(_duration(ground_s) if ground_s else '—')}</td></tr>")
    for n, layer in enumerate(plan.layers, start=1):
        t = layer_time_s(layer)
        total += t
        paints = sorted({s.paint for s in layer.strokes}, key=lambda i: plan.paint_index()[i])
        inches = layer.brush_width_mm / MM_PER_INCH
        rows.append(f"<tr><td><a href='#layer-{n:02d}'>layer {n}</a></td>"
                    f"<td>{_e(_num(layer.brush_width_mm))} mm (≈ {_e(_num(inches, 1))} in)</td>"
                    f"<td class='num'>{len(layer.strokes)}</td><td>{_e(', '.join(paints) or '—')}</td>"
                    f"<td class='num'>{_e(_duration(t) if layer.strokes else '—')}</td></tr>")
    return f"""
<section class="sheet" id="brushes">
  <h2>Brushes and time</h2>
  <p class="lead">One layer per brush, widest first. Let each layer dry before the next.</p>
  <table><tr><th>step</th><th>brush</th><th class="num">strokes</th><th>paints</th><th class="num">time</th></tr>
  {''.join(rows)}
  <tr><td colspan="4"><strong>in all</strong> (painting only, without drying, set-up and breaks)</td>
  <td class="num"><strong>{_e(_duration(total))}</strong></td></tr></table>
  <p class="small">Rule of thumb used for the times (from memory, a rough guide only; your own pace will
  differ, so time the first few square metres and scale): about {_num(SECONDS_PER_STROKE)} s per stroke to load,
  place and lift the brush, plus 1 s for every {_num(STROKE_MM_PER_SECOND / 10)} cm the brush travels, plus
  {_num(PAINT_CHANGE_SECONDS / 60)} min to wash out and reload at each change of paint; the ground at about
  {_num(GROUND_M2_PER_HOUR)} m²{f" ({_num(GROUND_M2_PER_HOUR * FT2_PER_M2, 0)} ft²)" if us else ""} per hour per
  coat with a roller (common practice).</p>
</section>"""


def _grid_section(plan: Plan, imgs, grid_mm: float, unit: str) -> str:
    fig_w = _fit_box(plan, PRINT_W_MM - 16, 195.0)
    nx = math.ceil(plan.wall_width_mm / grid_mm - 1e-9)
    ny = math.ceil(plan.wall_height_mm / grid_mm - 1e-9)
    svg = grid_over_image_svg(plan, grid_mm, _png_uri(imgs["final"]))
    side = _length(grid_mm, unit) if unit in US_UNITS else f"{_num(grid_mm / 10, 1)} cm"
    last_w = plan.wall_width_mm - (nx - 1) * grid_mm
    last_h = plan.wall_height_mm - (ny - 1) * grid_mm
    partial = []
    if last_w < grid_mm - 0.5:
        partial.append(f"column {column_label(nx - 1)} is {_length(last_w, unit)} wide")
    if last_h < grid_mm - 0.5:
        partial.append(f"row {ny} is {_length(last_h, unit)} tall")
    part = (" The last " + " and the last ".join(partial) + ".") if partial else ""
    return f"""
<section class="sheet" id="transfer-grid">
  <h2>Transfer grid</h2>
  <p class="lead">Each square is {_e(side)} × {_e(side)} on the wall: {nx} columns (A–{column_label(nx - 1)}, from
  the left) by {ny} rows (1–{ny}, from the top).{_e(part)}</p>
  {_figure(svg, fig_w, "The finished picture under the grid; " + (
      f"1 in on paper ≈ {_length(plan.wall_width_mm / fig_w * MM_PER_INCH, 'ft')} on the wall." if unit in US_UNITS
      else f"1 mm on paper ≈ {_num(plan.wall_width_mm / fig_w, 0)} mm on the wall."))}
  <p>Mark the same grid on the wall after the ground has dried: measure from one top corner, snap chalk lines
  or draw light pencil lines with a level, and write the column letters and row numbers small in the corners.
  Then copy the picture square by square, using where lines cross the squares' edges as guides
  (the grid method; common practice).</p>
</section>"""


def _layer_section(plan: Plan, n: int, imgs, outline: dict[str, Any], steps_changed: float, *,
                   grid_mm: float, unit: str = "m") -> str:
    layer = plan.layers[n - 1]
    order_ix = plan.paint_index()
    count: dict[str, int] = {}
    for s in layer.strokes:
        count[s.paint] = count.get(s.paint, 0) + 1
    pic_w = _fit_box(plan, 92.0, 62.0)
    map_w = _fit_box(plan, PRINT_W_MM, 140.0)
    hints: dict[str, dict[str, float]] = {}
    for a in outline["areas"]:
        d = hints.setdefault(a["paint"], {})
        d[a["hint"]] = d.get(a["hint"], 0.0) + a["area_mm2"]
    rows = []
    for pid in sorted(set(count) | set(hints), key=order_ix.get):
        d = hints.get(pid, {})
        rows.append(
            f"<tr><td>{_swatch(plan.paint(pid).srgb)} <b>{_e(pid)}</b></td>"
            f"<td class='num'>{count.get(pid, 0)}</td>"
            f"<td class='num'>{sum(1 for a in outline['areas'] if a['paint'] == pid)}</td>"
            f"<td class='num'>{_e(_area(sum(d.values()) / 1e6, unit))}</td>"
            f"<td class='hint'>{_e(max(d, key=d.get) if d else '—')}</td></tr>")
    # labels: only where the shape is big enough on this page and the label clears the others
    paper = map_w / plan.wall_width_mm  # paper mm per wall mm
    labelled = place_labels(outline, lambda a: label_box_mm(plan, a),
                            min_area_mm2=MIN_LABEL_PAPER_MM2 / (paper * paper))
    unlabelled = sum(1 for a in labelled["areas"] if not a["label"])
    blank = (f"Blank (white) areas get no paint in this layer: the ground, {plan.ground}, stays showing there."
             if n == 1 else f"Blank (white) areas get no paint in this layer: what layer {n - 1} left stays "
                            "showing there.")
    caption = ("Where each paint shows once this layer is done, labelled with the paint id; short lines show "
               "which way the strokes run. " + blank + " The faint grid is the transfer grid (same letters "
               "and numbers as on the transfer-grid page). Areas smaller than a quarter of a brush square "
               "are left off"
               + (f"; {unlabelled} area{'s' if unlabelled != 1 else ''} smaller than about 3 × 3 mm on this page, "
                  "or crowded by a nearby label, carry no label: their colour tells the paint." if unlabelled
                  else "."))
    before = "the ground" if n == 1 else f"layer {n - 1}"
    order = " → ".join(dict.fromkeys(s.paint for s in layer.strokes))
    new = (f"{len(layer.strokes)} strokes change {_num(steps_changed * 100, 1)} % of the wall "
           f"compared with {before}. Paint in this order: {order}." if layer.strokes
           else "This layer has no strokes.")
    return f"""
<section class="sheet layer" id="layer-{n:02d}">
  <h2>Layer {n} of {len(plan.layers)} — {_e(_num(layer.brush_width_mm))} mm brush{
      f" (≈ {_num(layer.brush_width_mm / MM_PER_INCH, 1)} in)" if unit in US_UNITS else ""}</h2>
  <p class="lead">{_e(new)}</p>
  <div class="layer-top">
  {_figure(f'<img alt="the wall after layer {n}" src="{_png_uri(imgs[f"steps/{n:02d}"])}">', pic_w,
           f"The wall after layer {n}.")}
  <table class="compact"><tr><th>paint</th><th class="num">strokes</th><th class="num">areas</th>
  <th class="num">showing</th><th>strokes run</th></tr>{''.join(rows)}</table>
  </div>
  {_figure(outline_map_svg(plan, labelled, grid_mm=grid_mm), map_w, _e(caption))}
</section>"""


def _safety() -> str:
    return """
<section class="sheet" id="safety">
  <h2>Safety</h2>
  <p class="lead">General cautions, not a substitute for training. Follow your local building and safety codes,
  the paint makers' safety data sheets, and the site owner's rules; for scaffolds, lifts, lead paint or
  anything you are unsure of, use licensed, trained professionals.</p>
  <h3>Working at height</h3>
  <ul><li>Use a ladder, step-up platform or scaffold rated for the load, on firm level ground; never stand on
  the top steps or overreach — move the ladder instead.</li>
  <li>Keep three points of contact on a ladder; have a second person foot it and keep the area below clear.</li>
  <li>Scaffolds and mobile towers need guard rails and locked wheels, and in many places must be put up and
  inspected by a competent person. Powered lifts need training.</li>
  <li>Keep paint, tools and cables tidy so nobody trips; stop work in high wind, rain or poor light outdoors.</li></ul>
  <h3>Ventilation, dust and masks</h3>
  <ul><li>Work with good airflow; solvent-based paints, varnishes, sprays and cleaners need more ventilation and
  often a respirator with the right cartridges — read the safety data sheet.</li>
  <li>Sanding, scraping and spraying make dust and mist: wear a well-fitting particulate mask (FFP2/N95 or
  better) and eye protection, and clean up with a damp cloth or an H-class/HEPA vacuum rather than sweeping.</li>
  <li>Wear gloves; wash hands before eating, drinking or smoking.</li></ul>
  <h3>Pigments</h3>
  <ul><li>Some artists' pigments are toxic (for example those based on cadmium, cobalt, chromium, lead or
  manganese). Check the label and safety data sheet, prefer safer alternatives, and never eat or drink while
  mixing.</li>
  <li>Keep paint and mixing tubs labelled and away from children and pets; dispose of rinse water and leftovers
  as local rules require, not down storm drains.</li></ul>
  <h3>Old walls and lead</h3>
  <ul><li>Walls painted before about 1980 (dates vary by country) may carry lead paint. Test before sanding,
  scraping or heat-stripping: use a recognised test kit or a laboratory, or a certified inspector.</li>
  <li>If lead is found, do not dry-sand or burn it off. Paint over sound surfaces only where the rules allow, and
  leave removal to licensed lead-safe contractors.</li>
  <li>Old walls may also hide asbestos-containing plaster or fillers: do not drill or sand suspect material
  until it has been checked.</li></ul>
</section>"""


# ------------------------------------------------------------------ public API
def plan_html(
    plan: Plan,
    *,
    images: Mapping[str, Any] | None = None,
    grid_mm: float | None = None,
    outlines: list[dict[str, Any]] | None = None,
    paint_use: dict[str, Any] | None = None,
    title: str | None = None,
    steps: list[np.ndarray] | None = None,
) -> str:
    """The printable plan as one self-contained HTML document.

    Parameters
    ----------
    plan : Plan
    images : mapping, optional
        PNG pictures as bytes or file paths: ``"final"`` (the finished picture) and
        ``"steps/NN"`` (the wall after layer NN; ``steps/00`` is the ground), with or
        without ``.png``. Any missing picture is rendered from the plan.
    grid_mm : float, optional
        Transfer-grid square, mm of wall; default :func:`default_grid_mm` (500 mm, or
        2 ft = 609.6 mm for walls measured in ft or in).
    outlines : list of dict, optional
        Outline maps (:func:`layerplan.outlines.outline_maps`); computed if missing.
    paint_use : dict, optional
        Quantities (:func:`layerplan.quantities.paint_use`); default ``plan.extra["paint_use"]``,
        else computed with the default options.
    title : str, optional
        Heading of the cover; default from the source image's name.
    steps : list of (H, W) int arrays, optional
        The wall after the ground and after each layer, as
        :func:`layerplan.raster.render_steps` gives them; rendered if missing.

    Returns
    -------
    html : str

    Raises
    ------
    ValueError
        If an image is not a PNG or cannot be read, the grid spacing is unusable, or the
        outline maps or steps do not match the plan's layers.

    References
    ----------
    ISO 216 (A4); ANSI/ASME Y14.1 (Letter); W3C CSS Paged Media and Fragmentation.
    """
    unit = plan.wall_unit
    if grid_mm is None:
        grid_mm = default_grid_mm(unit, shorter_side_mm=min(plan.wall_width_mm, plan.wall_height_mm))
    grid_mm = check_grid(plan, grid_mm)
    if steps is None:
        steps = render_steps(plan)
    elif len(steps) != len(plan.layers) + 1 or any(np.shape(c) != (plan.height_px, plan.width_px) for c in steps):
        raise ValueError(f"steps must be {len(plan.layers) + 1} canvases of {plan.height_px} × {plan.width_px} px "
                         "(the ground, then each layer)")
    imgs = _load_images(plan, images, steps)
    if outlines is None:
        outlines = outline_maps(plan)
    if len(outlines) != len(plan.layers):
        raise ValueError(f"outlines has {len(outlines)} maps but the plan has {len(plan.layers)} layers")
    use = paint_use or plan.extra.get("paint_use") or compute_paint_use(plan)
    if {p["paint"] for p in use["paints"]} != set(plan.paint_index()):
        raise ValueError("paint_use does not list the same paints as the plan's palette")
    us = unit in US_UNITS
    if title is None:
        source = (plan.extra.get("source") or {}).get("image")
        title = f"Wall painting plan — {Path(source).stem}" if source else "Wall painting plan"

    changed = [float(np.mean(steps[n] != steps[n - 1])) for n in range(1, len(steps))]
    body = [
        _cover(plan, imgs, title, use, unit),
        _paint_card(plan, use, us),
        _shopping(plan, use, unit),
        _brushes(plan, use, us),
        _grid_section(plan, imgs, grid_mm, unit),
        *(_layer_section(plan, n, imgs, outlines[n - 1], changed[n - 1], grid_mm=grid_mm, unit=unit)
          for n in range(1, len(plan.layers) + 1)),
        _safety(),
    ]
    return ("<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n"
            "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n"
            f"<title>{_e(title)}</title>\n<style>{_CSS}</style>\n</head>\n<body>\n"
            + "\n".join(body) + "\n</body>\n</html>\n")
