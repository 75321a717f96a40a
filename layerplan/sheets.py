"""The printed plan's sheets as plain data: what each sheet says, with every amount already in words.

:func:`build_sheets` reads a :class:`~layerplan.plan.Plan`, its paint use, pictures and outline maps and
returns a :class:`Sheets`: the cover, paint card, shopping list, brushes and time, transfer grid, one sheet per
layer. Nothing here is HTML: ``templates/sheets/`` lays the sheets out for plan.html (:mod:`layerplan.report`),
and another exporter (a PDF, a spreadsheet) can lay out the same data. Text comes from
:mod:`layerplan.wording`, so it reads as on the web pages. Pictures are PNG data URIs (RFC 2397); maps are SVG
from :mod:`layerplan.svg`, passed on as markup.

Sizes of pictures are chosen to fit the printable area A4 (210 × 297 mm) and US Letter (215.9 × 279.4 mm)
share, so the same file prints on either.

References
----------
.. [1] ISO 216:2007, Writing paper and certain classes of printed matter - Trimmed sizes - A and B series
   (A4 = 210 × 297 mm).
.. [2] ANSI/ASME Y14.1-2020, Decimal inch drawing sheet size and format (Letter, 8.5 × 11 in).
.. [3] RFC 2397, The "data" URL scheme.
"""

from __future__ import annotations

import base64
import io
import math
import re
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Mapping

import numpy as np
from markupsafe import Markup

from . import wording as w
from .outlines import outline_maps, place_labels
from .plan import Plan
from .batches import mix_batches
from .quantities import TRACE_LITRES, US_UNITS
from .quantities import paint_use as compute_paint_use
from .raster import render_steps
from .svg import check_grid, column_label, grid_over_image_svg, label_box_mm, outline_map_svg

#: default transfer-grid square, mm (50 cm: a comfortable square to copy freehand; common practice)
GRID_MM = 500.0
#: default transfer-grid square for walls measured in ft or in, mm (2 ft, exact; common practice)
GRID_MM_US = 2 * 304.8
#: a surface whose shorter side is under this many default squares gets the small-surface grid
SMALL_SURFACE_SQUARES = 3
#: grid square for small boards and sheets: 10 cm, or 4 in (common practice for squaring up a drawing)
GRID_MM_SMALL, GRID_MM_SMALL_US = 100.0, 4 * 25.4
#: an area of an outline map gets a label only when it covers at least this much of the
#: printed page, mm² (3 × 3 mm, about a label's own size: smaller shapes vanish under their
#: label; our choice); see :func:`layerplan.outlines.place_labels` for the other rules
MIN_LABEL_PAPER_MM2 = 9.0
#: printable width and height both A4 and Letter leave inside 12 mm margins, mm
#: (A4 is 210 mm wide, Letter 279.4 mm tall: the box is 186 × 255.4 mm); static/sheet.css uses the same
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
_PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"


# ----------------------------------------------------------------------------------- the model
@dataclass(frozen=True)
class Figure:
    """A picture on a sheet: a PNG (``image_uri``, a data URI) or our own SVG (``svg``), ``width_mm`` wide."""

    width_mm: float
    caption: str = ""
    image_uri: str | None = None
    alt: str = ""
    svg: Markup | None = None


@dataclass(frozen=True)
class Cover:
    title: str
    figure: Figure
    facts: tuple[tuple[str, str], ...]
    settings: tuple[tuple[str, str], ...]


@dataclass(frozen=True)
class Swatch:
    """A colour patch; ``label`` under it when two stand side by side ("photo", "mix")."""

    srgb: str
    label: str = ""


@dataclass(frozen=True)
class Line:
    """One line of a cell: ``text``, then ``small`` in smaller print."""

    text: str
    small: str = ""


@dataclass(frozen=True)
class PaintRow:
    id: str
    swatches: tuple[Swatch, ...]
    name: tuple[Line, ...]
    mix: str | None  # the recipe in parts by volume, None without a recipe
    delta_e: str
    out_of_reach: bool
    amount: str
    used_for: str
    batch: str | None = None  # the whole amount split into stock paints, None without a recipe


@dataclass(frozen=True)
class PaintCard:
    rows: tuple[PaintRow, ...]
    any_recipe: bool
    snapped: bool  # the plan's colours are the mixes' (palette snapped to mixable colours)


@dataclass(frozen=True)
class StockRow:
    paint: str
    srgb: str | None
    amount: str
    buy: str
    goes_into: str


@dataclass(frozen=True)
class PaintUseRow:
    id: str
    srgb: str
    area: str
    amount: str
    how: str
    buy: str
    batch: str | None = None  # the whole amount split into stock paints, None without a recipe


@dataclass(frozen=True)
class Shopping:
    assumptions: str
    stock: tuple[StockRow, ...]
    paints: tuple[PaintUseRow, ...]
    trace: str | None  # the trace amount in words, when some entry is one


@dataclass(frozen=True)
class BrushRow:
    step: str
    layer: int | None  # the layer sheet this row points to
    brush: str
    strokes: str
    paints: str
    time: str


@dataclass(frozen=True)
class Brushes:
    rows: tuple[BrushRow, ...]
    total: str
    seconds_per_stroke: str
    cm_per_second: str
    change_minutes: str
    ground_rate: str


@dataclass(frozen=True)
class TransferGrid:
    side: str
    columns: int
    rows: int
    last_column: str
    partial: tuple[str, ...]  # "column F is 1 ft wide", when the last squares are cut short
    figure: Figure


@dataclass(frozen=True)
class LayerPaint:
    id: str
    srgb: str
    strokes: int
    areas: int
    showing: str
    runs: str


@dataclass(frozen=True)
class LayerSheet:
    number: int
    anchor: str
    title: str
    lead: str
    picture: Figure
    paints: tuple[LayerPaint, ...]
    map: Figure


@dataclass(frozen=True)
class Sheets:
    """Every sheet of a printed plan, in print order (the safety sheet is fixed text of the template)."""

    title: str
    unit: str
    cover: Cover
    paint_card: PaintCard
    shopping: Shopping
    brushes: Brushes
    grid: TransferGrid
    layers: tuple[LayerSheet, ...]


# ------------------------------------------------------------------------------------- helpers
def wall_unit(plan: Plan) -> str:
    """The unit the wall was measured in (the one place the sheets read it)."""
    return plan.wall_unit


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


def layer_time_s(layer) -> float:
    """Rough painting time of a layer by the rule of thumb above (from memory), seconds."""
    length = sum(s.length_mm() for s in layer.strokes)
    changes = sum(1 for a, b in zip(layer.strokes, layer.strokes[1:]) if a.paint != b.paint)
    runs = (changes + 1) if layer.strokes else 0
    return (len(layer.strokes) * SECONDS_PER_STROKE + length / STROKE_MM_PER_SECOND
            + runs * PAINT_CHANGE_SECONDS)


def png_uri(data: bytes) -> str:
    """A PNG as a data URI (RFC 2397), so plan.html needs no other file."""
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


_SVG_ID = re.compile(r'(\sid=")([^"]*")')


def _svg(text: str, scope: str) -> Markup:
    """Our SVG writer's output for one figure, its element ids prefixed with ``scope``.

    Every map carries the same group ids (``grid``, ``outlines-01``…), and an HTML page may hold each id
    once; our SVG never refers to its own ids, so renaming them changes nothing drawn.
    """
    return Markup(_SVG_ID.sub(lambda m: f"{m.group(1)}{scope}-{m.group(2)}", text))


# -------------------------------------------------------------------------------------- sheets
def _settings_rows(plan: Plan, unit: str) -> tuple[tuple[str, str], ...]:
    """The settings a plan was made with, in plain words."""
    st = dict(plan.extra.get("settings") or {})
    us = w.is_us(unit)
    rows: list[tuple[str, str]] = []
    width, height = st.pop("wall_width_mm", None), st.pop("wall_height_mm", None)
    st.pop("wall_unit", None)
    if width is not None:
        rows.append(("surface as given", f"{w.length(float(width), unit)} wide, "
                     + (f"{w.length(float(height), unit)} tall" if height is not None else "height from the photo")))
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
        rows.append(("mix tolerance", f"ΔE00 {w.number(tol, 1)}"))
    brushes = st.pop("brushes_mm", None)
    if brushes:
        text = ", ".join(w.number(b) for b in brushes) + " mm"
        if us:
            text += " (" + ", ".join(w.number(b / w.MM_PER_INCH, 1) for b in brushes) + " in)"
        rows.append(("brushes", text))
    if "mm_per_px" in st:
        v = st.pop("mm_per_px")
        rows.append(("pixel size", f"{w.number(plan.mm_per_px)} mm" + (" (automatic)" if v is None else "")))
    cost = st.pop("stroke_cost", None)
    if cost is not None:
        rows.append(("stroke threshold", f"ΔE00 {w.number(cost)} per brush-width square"))
    seed = st.pop("seed", None)
    if seed is not None:
        rows.append(("random seed", str(seed)))
    for key, value in st.items():  # anything newer than this page
        if isinstance(value, (list, tuple)):
            value = ", ".join(w.number(v) if isinstance(v, (int, float)) else str(v) for v in value)
        elif isinstance(value, float):
            value = w.number(value)
        rows.append((key.replace("_", " "), "automatic" if value is None else str(value)))
    return tuple(rows)


def _cover(plan: Plan, imgs, title: str, use: dict[str, Any], unit: str) -> Cover:
    width, height = plan.wall_width_mm, plan.wall_height_mm
    fig_w = _fit_box(plan, PRINT_W_MM - 16, 100.0)
    scale = width / fig_w
    stats = plan.extra.get("stats") or {}
    source = (plan.extra.get("source") or {}).get("image")
    facts = [
        ("surface", w.wall_size(width, height, unit)),
        ("area", w.area(width * height / 1e6, unit)),
        ("working picture", f"{plan.width_px} × {plan.height_px} px, 1 px = {w.number(plan.mm_per_px)} mm of wall"),
        ("picture above", w.paper_scale(scale, unit)
         + f" (scale about 1:{w.number(scale, 0)}) when printed {w.number(fig_w, 0)} mm wide"),
        ("paints", f"{len(plan.palette)} (ground: {plan.ground})"),
        ("layers", f"{len(plan.layers)}, brushes " + ", ".join(w.brush(l.brush_width_mm, False) for l in plan.layers)),
        ("strokes", f"{plan.stroke_count()}"),
    ]
    if source:
        facts.insert(0, ("from", str(source)))
    if "mean_delta_e_final" in stats:
        facts.append(("match to the photo", f"mean ΔE00 {w.number(stats['mean_delta_e_final'], 1)} "
                                            "(CIEDE2000; under about 2 reads as the same colour at a glance)"))
    total_l = sum(p["litres"] for p in use["paints"])
    facts.append(("paint in all", f"about {w.volume(total_l, w.is_us(unit), used=True)}"))
    figure = Figure(fig_w, "The finished picture as planned, in the plan's paints.", png_uri(imgs["final"]),
                    "the finished picture")
    return Cover(title, figure, tuple(facts), _settings_rows(plan, unit))


def _name_lines(p, recipe: Mapping[str, Any] | None) -> tuple[Line, ...]:
    """The colour cell of the paint card: a name in words and the sRGB code(s)."""
    lines = (Line(w.colour_name(p.lab)), Line("", p.srgb))
    if not recipe:
        return lines
    target = str(recipe.get("target") or p.srgb)
    predicted = str(recipe.get("predicted_srgb") or p.srgb)
    if target.lower() == predicted.lower():
        return lines
    wanted = w.colour_name(p.lab) if target.lower() == p.srgb.lower() else w.colour_name_of_srgb(target)
    mixed = w.colour_name(p.lab) if predicted.lower() == p.srgb.lower() else w.colour_name_of_srgb(predicted)
    if wanted == mixed:
        lines = (Line(mixed), Line("", f"mix {predicted}, photo {target}"))
    else:
        lines = (Line(f"mix: {mixed}", predicted), Line(f"photo: {wanted}", target))
    if p.srgb.lower() not in (target.lower(), predicted.lower()):
        lines += (Line("", f"on the maps {p.srgb}"),)
    return lines


def _paint_card(plan: Plan, use: dict[str, Any], us: bool) -> PaintCard:
    entries = {p["paint"]: p for p in use["paints"]}
    batches = mix_batches(plan, use)
    layers_of: dict[str, list[int]] = {}
    for n, layer in enumerate(plan.layers, start=1):
        for s in layer.strokes:
            lst = layers_of.setdefault(s.paint, [])
            if not lst or lst[-1] != n:
                lst.append(n)
    rows = []
    for p in plan.palette:
        recipe = p.extra.get("recipe") or None
        if recipe:
            de = recipe.get("delta_e")
            target = str(recipe.get("target") or p.srgb)
            predicted = str(recipe.get("predicted_srgb") or p.srgb)
            # the colour the photo wanted beside what the mix gives (the same when the mix is exact)
            swatches = (Swatch(target, "photo"), Swatch(predicted, "mix"))
            mix = " + ".join(f"{w.number(part['parts'])} {part['paint']}" for part in recipe.get("parts") or [])
            delta_e = "—" if de is None else w.number(de, 1)
            out_of_reach = not recipe.get("in_gamut", True)
        else:
            swatches, mix, delta_e, out_of_reach = (Swatch(p.srgb),), None, "—", False
        used = (["ground"] if p.id == plan.ground else []) + (
            ["layers " + ", ".join(str(n) for n in layers_of[p.id])] if layers_of.get(p.id) else [])
        batch = w.batch(batches[p.id], us) if p.id in batches and entries[p.id]["litres"] > 0 else None
        rows.append(PaintRow(p.id, swatches, _name_lines(p, recipe), mix, delta_e, out_of_reach,
                             w.amount(entries[p.id], us), "; ".join(used) or "not used", batch))
    snapped = not (plan.extra.get("settings") or {}).get("free_palette", False)
    return PaintCard(tuple(rows), any(p.extra.get("recipe") for p in plan.palette), snapped)


def _shopping(plan: Plan, use: dict[str, Any], unit: str) -> Shopping:
    us = w.is_us(unit)
    inv = {e.get("name"): e for e in (plan.extra.get("inventory") or []) if isinstance(e, Mapping)}
    assumptions = (f"Worked out at {w.coverage(use['coverage_m2_per_litre'], us)} per coat, "
                   f"{w.count(use['ground_coats'], 'coat')} of ground, "
                   f"{w.count(use['stroke_coats'], 'coat')} per stroke, "
                   f"plus {w.number(use['waste'] * 100, 0)} % for spills and touch-ups. Check the spreading rate on "
                   "your tins: rough, porous or dark walls drink more, and light colours over dark need extra coats.")
    stock = tuple(StockRow(s["paint"], (inv.get(s["paint"]) or {}).get("srgb") or None, w.amount(s, us),
                           w.buy(s, us), ", ".join(s["for"])) for s in use.get("stock") or [])
    paints = []
    batches = mix_batches(plan, use)
    for p, e in zip(plan.palette, use["paints"]):
        mixed = bool(p.extra.get("recipe"))
        batch = w.batch(batches[p.id], us) if p.id in batches and e["litres"] > 0 else None
        paints.append(PaintUseRow(p.id, p.srgb, w.area(e["area_m2"], unit), w.amount(e, us),
                                  "mix from stock" if mixed else "buy tinted, or mix",
                                  "—" if mixed else w.buy(e, us), batch))
    any_trace = any(w.is_trace(e) for e in list(use.get("stock") or []) + list(use["paints"]))
    return Shopping(assumptions, stock, tuple(paints), w.volume(TRACE_LITRES, us) if any_trace else None)


def _brushes(plan: Plan, use: dict[str, Any], us: bool) -> Brushes:
    ground = next(p for p in use["paints"] if p["paint"] == plan.ground)
    ground_s = ground["ground_area_m2"] * max(use["ground_coats"], 0) / GROUND_M2_PER_HOUR * 3600.0
    total = ground_s
    rows = [BrushRow("ground", None, "roller", "—", plan.ground, w.duration(ground_s) if ground_s else "—")]
    order_ix = plan.paint_index()
    for n, layer in enumerate(plan.layers, start=1):
        t = layer_time_s(layer)
        total += t
        paints = sorted({s.paint for s in layer.strokes}, key=lambda i: order_ix[i])
        rows.append(BrushRow(f"layer {n}", n, w.brush(layer.brush_width_mm), str(len(layer.strokes)),
                             ", ".join(paints) or "—", w.duration(t) if layer.strokes else "—"))
    rate = f"{w.number(GROUND_M2_PER_HOUR)} m²" + (
        f" ({w.number(GROUND_M2_PER_HOUR * w.FT2_PER_M2, 0)} ft²)" if us else "")
    return Brushes(tuple(rows), w.duration(total), w.number(SECONDS_PER_STROKE),
                   w.number(STROKE_MM_PER_SECOND / 10), w.number(PAINT_CHANGE_SECONDS / 60), rate)


def _grid(plan: Plan, imgs, grid_mm: float, unit: str) -> TransferGrid:
    fig_w = _fit_box(plan, PRINT_W_MM - 16, 195.0)
    nx = math.ceil(plan.wall_width_mm / grid_mm - 1e-9)
    ny = math.ceil(plan.wall_height_mm / grid_mm - 1e-9)
    last_w = plan.wall_width_mm - (nx - 1) * grid_mm
    last_h = plan.wall_height_mm - (ny - 1) * grid_mm
    partial = []
    if last_w < grid_mm - 0.5:
        partial.append(f"column {column_label(nx - 1)} is {w.length(last_w, unit)} wide")
    if last_h < grid_mm - 0.5:
        partial.append(f"row {ny} is {w.length(last_h, unit)} tall")
    svg = _svg(grid_over_image_svg(plan, grid_mm, png_uri(imgs["final"])), "transfer-grid")
    caption = ("The finished picture under the grid; "
               + w.paper_scale(plan.wall_width_mm / fig_w, unit) + ".")
    return TransferGrid(w.grid_side(grid_mm, unit), nx, ny, column_label(nx - 1), tuple(partial),
                        Figure(fig_w, caption, svg=svg))


def _layer(plan: Plan, n: int, imgs, outline: dict[str, Any], changed: float, *,
           grid_mm: float, unit: str) -> LayerSheet:
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
    paints = []
    for pid in sorted(set(count) | set(hints), key=order_ix.get):
        d = hints.get(pid, {})
        paints.append(LayerPaint(pid, plan.paint(pid).srgb, count.get(pid, 0),
                                 sum(1 for a in outline["areas"] if a["paint"] == pid),
                                 w.area(sum(d.values()) / 1e6, unit), max(d, key=d.get) if d else "—"))
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
    lead = (f"{len(layer.strokes)} strokes change {w.number(changed * 100, 1)} % of the wall "
            f"compared with {before}. Paint in this order: {order}." if layer.strokes
            else "This layer has no strokes.")
    anchor = f"layer-{n:02d}"
    title = f"Layer {n} of {len(plan.layers)} — {w.number(layer.brush_width_mm)} mm brush" + (
        f" (≈ {w.number(layer.brush_width_mm / w.MM_PER_INCH, 1)} in)" if w.is_us(unit) else "")
    picture = Figure(pic_w, f"The wall after layer {n}.", png_uri(imgs[f"steps/{n:02d}"]), f"the wall after layer {n}")
    map_svg = _svg(outline_map_svg(plan, labelled, grid_mm=grid_mm), anchor)
    return LayerSheet(n, anchor, title, lead, picture, tuple(paints), Figure(map_w, caption, svg=map_svg))


# ------------------------------------------------------------------------------------ entry point
def build_sheets(
    plan: Plan,
    *,
    images: Mapping[str, Any] | None = None,
    grid_mm: float | None = None,
    outlines: list[dict[str, Any]] | None = None,
    paint_use: dict[str, Any] | None = None,
    title: str | None = None,
    steps: list[np.ndarray] | None = None,
) -> Sheets:
    """The printed plan's sheets as plain data (the options of :func:`layerplan.report.plan_html`).

    Parameters
    ----------
    plan : Plan
    images : mapping, optional
        PNG pictures as bytes or file paths: ``"final"`` (the finished picture) and
        ``"steps/NN"`` (the wall after layer NN; ``steps/00`` is the ground), with or
        without ``.png``. Any missing picture is rendered from the plan.
    grid_mm : float, optional
        Transfer-grid square, mm of wall; default :func:`default_grid_mm`.
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
    Sheets

    Raises
    ------
    ValueError
        If an image is not a PNG or cannot be read, the grid spacing is unusable, or the
        outline maps, steps or paint use do not match the plan.

    References
    ----------
    ISO 216 (A4); ANSI/ASME Y14.1 (Letter); RFC 2397 (data URIs).
    """
    unit = wall_unit(plan)
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
    us = w.is_us(unit)
    if title is None:
        source = (plan.extra.get("source") or {}).get("image")
        title = f"Wall painting plan — {Path(source).stem}" if source else "Wall painting plan"
    changed = [float(np.mean(steps[n] != steps[n - 1])) for n in range(1, len(steps))]
    return Sheets(
        title=title,
        unit=unit,
        cover=_cover(plan, imgs, title, use, unit),
        paint_card=_paint_card(plan, use, us),
        shopping=_shopping(plan, use, unit),
        brushes=_brushes(plan, use, us),
        grid=_grid(plan, imgs, grid_mm, unit),
        layers=tuple(_layer(plan, n, imgs, outlines[n - 1], changed[n - 1], grid_mm=grid_mm, unit=unit)
                     for n in range(1, len(plan.layers) + 1)),
    )
