"""The printed plan's sheets as plain data: what each sheet says, with every amount already in words.

:func:`build_sheets` reads a :class:`~layerplan.plan.Plan`, its paint use, pictures and outline maps and
returns a :class:`Sheets`: the cover, paint card, shopping list, brushes and time, transfer grid (split over
further sheets when its squares print too small), one sheet per layer, and each layer's enlargements: blocks
of grid squares at a scale where the layer's narrowest brush prints at least 2 mm, every area labelled with its
paint and hatched per paint for black-and-white print. Nothing here is HTML: ``templates/sheets/`` lays the
sheets out for plan.html (:mod:`layerplan.report`),
and another exporter (a PDF, a spreadsheet) can lay out the same data. Text comes from
:mod:`layerplan.wording`, so it reads as on the web pages. Pictures are PNG data URIs (RFC 2397); maps are SVG
from :mod:`layerplan.svg`, passed on as markup.

Sizes of pictures are chosen to fit the printable area A4 (210 × 297 mm) and US Letter (215.9 × 279.4 mm)
share, so the same file prints on either; with ``paper="a3"`` or ``"tabloid"``, the box A3 (297 × 420 mm) and
Tabloid (11 × 17 in) share.

References
----------
.. [1] ISO 216:2007, Writing paper and certain classes of printed matter - Trimmed sizes - A and B series
   (A4 = 210 × 297 mm).
.. [2] ANSI/ASME Y14.1-2020, Decimal inch drawing sheet size and format (Letter, 8.5 × 11 in).
.. [3] RFC 2397, The "data" URL scheme.
.. [4] E. Imhof, "Positioning names on maps", The American Cartographer 2(2):128-144, 1975 (labels with
   leaders, see :func:`layerplan.outlines.place_labels_around`).
"""

from __future__ import annotations

import base64
import io
import math
import re
from dataclasses import dataclass, replace
from pathlib import Path
from typing import Any, Mapping

import numpy as np
from markupsafe import Markup

from . import wording as w
from .coats import CoatNote, coat_notes
from .outlines import area_pixels, layer_canvas, outline_maps, pieces_in_box, place_labels, place_labels_around
from .plan import Plan
from .batches import mix_batches
from .quantities import TRACE_LITRES, US_UNITS
from .quantities import paint_use as compute_paint_use
from .raster import picture, render_steps
from .svg import panel_key_svg, panel_svg, picture_svg
from .svg import (LABEL_EM_PER_CHAR, check_grid, column_label, enlargement_svg, grid_over_image_svg, grid_part_svg,
                  label_box_mm, outline_map_svg, paint_key_svg, square_name_boxes, area_bounds, areas_meeting)

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
#: narrowest brush on an enlargement, paper mm: a 2 mm band is about the thinnest a painter
#: on a ladder reads at arm's length without a magnifier (our choice, asked for by muralists)
MIN_BRUSH_PAPER_MM = 2.0
#: label text height on enlargements, paper mm (2.5 mm is about 7 pt capitals; ISO 3098 drawing
#: lettering starts at 2.5 mm; from memory)
ENLARGEMENT_LABEL_MM = 2.5
#: paper height an enlargement sheet keeps for its title, lead, key and caption, mm (our layout)
ENLARGEMENT_HEADER_MM = 75.0
#: most enlargement sheets per layer by default; the layer sheet says when some squares are left out
MAX_ENLARGEMENTS_PER_LAYER = 24
#: a transfer-grid square printed smaller than this (paper mm) is too small to copy from, so the
#: grid is split over further sheets at :data:`GRID_PART_SQUARE_MM` a square (our choice)
MIN_GRID_SQUARE_PAPER_MM = 12.0
GRID_PART_SQUARE_MM = 20.0


@dataclass(frozen=True)
class Paper:
    """A paper choice: the sheets are laid out in the printable box both sizes of the pair share.

    ``css_size`` is the CSS page size (W3C CSS Paged Media, ``size``) of the named sheet.
    """

    key: str
    name: str
    css_size: str
    print_w_mm: float
    print_h_mm: float


def _box(*sizes: tuple[float, float]) -> tuple[float, float]:
    return (min(w for w, _ in sizes) - 2 * PAGE_MARGIN_MM, min(h for _, h in sizes) - 2 * PAGE_MARGIN_MM)


#: A4 and A3 (ISO 216: 210 × 297, 297 × 420 mm), Letter and Tabloid (ANSI/ASME Y14.1: 8.5 × 11,
#: 11 × 17 in); each pair is laid out for the box both share, so a file made for one prints on the other
_SMALL, _LARGE = _box((210.0, 297.0), (215.9, 279.4)), _box((297.0, 420.0), (279.4, 431.8))
PAPERS: dict[str, Paper] = {p.key: p for p in (
    Paper("a4", "A4 (or Letter)", "A4", *_SMALL),
    Paper("letter", "Letter (or A4)", "letter", *_SMALL),
    Paper("a3", "A3 (or Tabloid)", "A3", *_LARGE),
    Paper("tabloid", "Tabloid (or A3)", "ledger", *_LARGE),
)}
DEFAULT_PAPER = "a4"


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
    #: the plan's warnings in words (plan.json ``warnings``: message, cause, fix), printed where the plan starts
    warnings: tuple[str, ...] = ()


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
    #: what the containers cost, in words ("" when the inventory gives no price for them)
    cost: str = ""


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
    #: the stock paints' total cost in words, and what it leaves out; None when the inventory has no prices
    total_cost: str | None = None
    cost_note: str = ""


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
    #: "P1: 2 coats where it covers P6 (12 strokes)", a line per paint and covered paint taking more coats
    coats: tuple[str, ...] = ()
    travel: str = ""


@dataclass(frozen=True)
class GridPart:
    """One sheet of a transfer grid too dense for one page: a block of squares, named like ``squares A1–H8``."""

    anchor: str
    title: str
    figure: Figure


@dataclass(frozen=True)
class Enlargement:
    """A part of a layer's outline map at a scale where its brush is readable.

    ``labelled`` counts the areas labelled here (each area of the layer is labelled on the one
    enlargement holding its label point); ``moved`` those drawn beside their area with a leader.
    """

    layer: int
    anchor: str
    title: str
    lead: str
    scale: str
    key: Figure
    map: Figure
    labelled: int
    moved: int
    crowded: int


@dataclass(frozen=True)
class ScheduleDay:
    """One day of the schedule: what is painted (task, hours in words) and what dries overnight."""

    day: int
    work: tuple[tuple[str, str], ...]
    dries: str = ""


@dataclass(frozen=True)
class ScheduleSheet:
    """The day-by-day sheet (:func:`layerplan.schedule.work_schedule` in words)."""

    lead: str
    facts: tuple[tuple[str, str], ...]
    days: tuple[ScheduleDay, ...]
    #: (task, painter, part of the wall, hours): who paints where in each layer
    shares: tuple[tuple[str, str, str, str], ...]
    idle: str
    rules: str
    weather: tuple[str, ...]


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
    paper: Paper = PAPERS[DEFAULT_PAPER]
    enlargements: tuple[Enlargement, ...] = ()
    grid_parts: tuple[GridPart, ...] = ()
    #: (layer, words) for each layer with enlargements: how many, at what scale, what was left out
    enlargement_notes: tuple[tuple[int, str], ...] = ()
    #: (layer, figure): each layer's paint key, the hatching of each paint on its maps
    layer_keys: tuple[tuple[int, Figure], ...] = ()
    #: the day-by-day sheet, when the plan was given a schedule
    schedule: ScheduleSheet | None = None
    #: a class's sheets (preparation, value scale, periods, step sheets), for a sheet or board; None for a wall
    classroom: "ClassroomSheets | None" = None

    def enlargements_of(self, n: int) -> tuple[Enlargement, ...]:
        """The enlargement sheets of layer ``n``, in print order."""
        return tuple(e for e in self.enlargements if e.layer == n)

    def enlargement_note(self, n: int) -> str:
        """What the layer sheet of layer ``n`` says about its enlargements ("" when it has none)."""
        return next((text for k, text in self.enlargement_notes if k == n), "")

    def layer_key(self, n: int) -> Figure | None:
        """The paint key of layer ``n``'s maps, or None when the layer has no areas."""
        return next((f for k, f in self.layer_keys if k == n), None)


# ------------------------------------------------------------------------------------- helpers
def wall_unit(plan: Plan) -> str:
    """The unit the wall was measured in (the one place the sheets read it)."""
    return plan.wall_unit


def _built_in_set(path) -> str | None:
    """The name of a built-in paint set given by its file (``--paint-set``), or None for the painter's own."""
    from .surfaces import PAINT_SETS, paint_set_path

    return next((f"{name} set (built in)" for name in PAINT_SETS if str(path) == paint_set_path(name)), None)


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


def layer_time_s(layer, *, stroke_coats: int = 1) -> float:
    """Rough painting time of a layer by the rule of thumb above (from memory), seconds.

    Each coat of a stroke is loaded, placed and drawn again: a stroke counts
    ``max(stroke_coats, stroke.coats)`` times. Further coats are painted with the same
    paint before the next one, so they add no washing.
    """
    coats = [max(stroke_coats, s.coats) for s in layer.strokes]
    length = sum(s.length_mm() * c for s, c in zip(layer.strokes, coats))
    changes = sum(1 for a, b in zip(layer.strokes, layer.strokes[1:]) if a.paint != b.paint)
    runs = (changes + 1) if layer.strokes else 0
    return (sum(coats) * SECONDS_PER_STROKE + length / STROKE_MM_PER_SECOND
            + runs * PAINT_CHANGE_SECONDS)


def png_uri(data: bytes) -> str:
    """A PNG as a data URI (RFC 2397), so plan.html needs no other file."""
    return "data:image/png;base64," + base64.b64encode(data).decode("ascii")


def _png(rgb: np.ndarray) -> bytes:
    from PIL import Image

    buf = io.BytesIO()
    mode = "RGBA" if rgb.shape[-1] == 4 else "RGB"  # openings are transparent (raster.picture)
    Image.fromarray(np.ascontiguousarray(rgb, dtype=np.uint8), mode).save(buf, format="PNG")
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
        for n, canvas in enumerate(steps):
            out.setdefault(f"steps/{n:02d}", _png(picture(plan, canvas)))
        out.setdefault("final", _png(picture(plan, steps[-1])))
    return out


def _fit_box(plan: Plan, max_w_mm: float, max_h_mm: float) -> float:
    """Printed width (mm) of a wall picture fitted into a box."""
    aspect = plan.wall_width_mm / plan.wall_height_mm
    return min(max_w_mm, max_h_mm * aspect)


_SVG_ID = re.compile(r'(\sid=")([^"]*")')
_SVG_REF = re.compile(r'(url\(#|\shref="#|\sxlink:href="#)([^)"]*)')


def _svg(text: str, scope: str) -> Markup:
    """Our SVG writer's output for one figure, its element ids prefixed with ``scope``.

    Every map carries the same group ids (``grid``, ``outlines-01``, ``pattern-3``…), and an HTML page
    may hold each id once; references to them (``url(#…)``, ``href="#…"``) are renamed alike, so
    nothing drawn changes.
    """
    text = _SVG_ID.sub(lambda m: f"{m.group(1)}{scope}-{m.group(2)}", text)
    return Markup(_SVG_REF.sub(lambda m: f"{m.group(1)}{scope}-{m.group(2)}", text))


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
        rows.append(("paints mixed from", "basic acrylic set (built in)" if inv is None else _built_in_set(inv)
                     or Path(str(inv)).name))
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
    for key in ("openings", "wall_colour"):  # the cover's own lines on the real wall say these (wall_facts)
        st.pop(key, None)
    for key, value in st.items():  # anything newer than this page
        if isinstance(value, (list, tuple)):
            value = ", ".join(w.number(v) if isinstance(v, (int, float)) else str(v) for v in value)
        elif isinstance(value, float):
            value = w.number(value)
        rows.append((key.replace("_", " "), "automatic" if value is None else str(value)))
    return tuple(rows)


def _cover(plan: Plan, imgs, title: str, use: dict[str, Any], unit: str) -> Cover:
    from .caveats import plan_warnings

    width, height = plan.wall_width_mm, plan.wall_height_mm
    warnings = tuple(" ".join(x[k] for k in ("message", "cause", "fix") if x.get(k)) for x in plan_warnings(plan))
    # the picture gives up height to the warnings (a heading and about five lines each), so the cover stays a page
    fig_w = _fit_box(plan, PRINT_W_MM - 16, max(50.0, 100.0 - 10.0 - 25.0 * len(warnings)) if warnings else 100.0)
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
    facts += wall_facts(plan, use, unit)
    figure = wall_picture(plan, fig_w, "The finished picture as planned, in the plan's paints.", imgs["final"],
                          "the finished picture", "cover-picture")
    return Cover(title, figure, tuple(facts), _settings_rows(plan, unit), warnings)


def wall_picture(plan: Plan, width_mm: float, caption: str, png: bytes, alt: str, scope: str) -> Figure:
    """A picture of the wall for a sheet: the PNG, with the openings hatched over it when there are any."""
    from .openings import plan_openings

    if not plan_openings(plan):
        return Figure(width_mm, caption, png_uri(png), alt)
    return Figure(width_mm, caption + " Hatched: openings, not painted.", alt=alt,
                  svg=_svg(picture_svg(plan, png_uri(png)), scope))


def wall_facts(plan: Plan, use: Mapping[str, Any], unit: str) -> list[tuple[str, str]]:
    """The cover's lines on the real wall: its openings, and the colour it is painted already."""
    from .openings import plan_openings, wall_section

    out = []
    found = plan_openings(plan)
    if found:
        shut = plan.wall_width_mm * plan.wall_height_mm / 1e6 - float(use.get("ground_area_m2", 0.0))
        out.append(("openings", f"{len(found)} (hatched), not painted: "
                                + ", ".join(f"{w.length(o.width_mm, unit)} × {w.length(o.height_mm, unit)}"
                                            for o in found)
                                + f"; the ground is charged on {w.area(use.get('ground_area_m2', 0.0), unit)}, "
                                  f"the wall less {w.area(shut, unit)} of openings"))
    wall = wall_section(plan)
    if wall is not None:
        lab = ", ".join(w.number(v, 0) for v in wall["lab"])
        if wall.get("serves_as_ground"):
            out.append(("wall colour now", f"CIELAB {lab}, within ΔE00 {w.number(wall['delta_e00'], 1)} of "
                                           f"{plan.ground}: the wall serves as the ground, no ground coats bought"))
        else:
            out.append(("wall colour now", f"CIELAB {lab} (nearest paint {wall['nearest_paint']}, ΔE00 "
                                           f"{w.number(wall['delta_e00'], 1)}): the ground {plan.ground} covers "
                                           f"it in {use.get('ground_coats', wall['ground_coats'])} coats"))
    return out


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
                   f"at least {w.count(use['stroke_coats'], 'coat')} per stroke (more where a light paint covers "
                   "a dark one, or a bright red or yellow another colour: the layer sheets say where), "
                   f"plus {w.number(use['waste'] * 100, 0)} % for spills and touch-ups. Check the spreading rate on "
                   "your tins: rough, porous or dark walls drink more.")
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
    shopping = Shopping(assumptions, stock, tuple(paints), w.volume(TRACE_LITRES, us) if any_trace else None)
    return _with_cost(shopping, use)


def _with_cost(shopping: Shopping, use: Mapping[str, Any]) -> Shopping:
    """The shopping list with what each stock paint and the whole list cost (paint_use ``cost``), where priced."""
    cost = use.get("cost")
    if not isinstance(cost, Mapping):
        return shopping
    currency = str(cost.get("currency") or "")
    by_name = {s["paint"]: s for s in use.get("stock") or []}
    stock = tuple(replace(row, cost=w.money(by_name[row.paint]["cost"], currency)
                          if "cost" in by_name.get(row.paint, {}) else "") for row in shopping.stock)
    missing = list(cost.get("unpriced") or [])
    note = (f"Not counted: {', '.join(missing)} (no price in the inventory)." if missing else "")
    return replace(shopping, stock=stock, total_cost=w.money(float(cost["total"]), currency), cost_note=note)


def _brushes(plan: Plan, use: dict[str, Any], us: bool) -> Brushes:
    ground = next(p for p in use["paints"] if p["paint"] == plan.ground)
    ground_s = ground["ground_area_m2"] * max(use["ground_coats"], 0) / GROUND_M2_PER_HOUR * 3600.0
    total = ground_s
    rows = [BrushRow("ground", None, "roller", "—", plan.ground, w.duration(ground_s) if ground_s else "—")]
    order_ix = plan.paint_index()
    for n, layer in enumerate(plan.layers, start=1):
        t = layer_time_s(layer, stroke_coats=use.get("stroke_coats", 1))
        total += t
        paints = sorted({s.paint for s in layer.strokes}, key=lambda i: order_ix[i])
        rows.append(BrushRow(f"layer {n}", n, w.brush(layer.brush_width_mm), str(len(layer.strokes)),
                             ", ".join(paints) or "—", w.duration(t) if layer.strokes else "—"))
    rate = f"{w.number(GROUND_M2_PER_HOUR)} m²" + (
        f" ({w.number(GROUND_M2_PER_HOUR * w.FT2_PER_M2, 0)} ft²)" if us else "")
    return Brushes(tuple(rows), w.duration(total), w.number(SECONDS_PER_STROKE),
                   w.number(STROKE_MM_PER_SECOND / 10), w.number(PAINT_CHANGE_SECONDS / 60), rate)


def _hours(h: float) -> str:
    return w.duration(float(h) * 3600.0) if h > 0 else "—"


def schedule_sheet(schedule: Mapping[str, Any], unit: str) -> ScheduleSheet:
    """The day-by-day sheet of a work schedule (:func:`layerplan.schedule.work_schedule`), in words."""
    crew = int(schedule["crew"])
    reach = float(schedule["reach_m"]) * 1000.0
    facts = [("crew", w.count(crew, "painter")),
             ("work", f"{_hours(schedule['hours'])} of painting in all (crew-hours)"),
             ("at the wall", f"{_hours(schedule['painting_hours'])} with the crew working side by side"),
             ("days", f"{schedule['days']}, at {w.number(schedule['hours_per_day'])} h of painting a day"),
             ("drying", f"at least {w.number(schedule['drying_hours'])} h after each ground coat and layer")]
    if "labour_cost" in schedule:
        currency = str(schedule.get("currency") or "")
        facts.append(("labour", f"{w.money(schedule['labour_cost'], currency)}: {w.number(schedule['paid_hours'])} "
                                f"paid hours ({w.count(crew, 'painter')} at the wall) at "
                                f"{w.money(schedule['labour_rate'], currency)} an hour"))
    days = tuple(ScheduleDay(int(d["day"]), tuple((x["task"], _hours(x["hours"])) for x in d["work"]),
                             f"let {d['dry_after']} dry" if d.get("dry_after") else "")
                 for d in schedule["days_list"])
    shares = []
    for task in schedule["tasks"]:
        for p in task["painters"]:
            where = (f"columns {p['columns']} ({w.length(p['band_mm'][0], unit)} to "
                     f"{w.length(p['band_mm'][1], unit)} from the left), {w.count(p['strokes'], 'stroke')}"
                     if p.get("band_mm") else str(p["columns"]))
            shares.append((task["task"], f"painter {p['painter']}", where, _hours(p["hours"])))
    idle = "; ".join(f"layer {x['layer']}: {w.count(x['painters'], 'painter')} without a part of the wall"
                     for x in schedule.get("idle_painters") or [])
    if idle:
        idle = (f"{idle} (the wall has too few {w.length(reach, unit)} work-zone columns for the whole crew to "
                "paint without sharing a ladder; they can mix paint, wash brushes and move ladders).")
    lead = (f"The wall is cut into columns of {w.length(reach, unit)} work zones (what one ladder or lift position "
            "reaches), named A, B, C… from the left. Each painter takes whole columns, a band of the wall from the "
            "top down, so no two painters share a ladder and drips fall on each painter's own unpainted wall.")
    rules = (f"Worked out from the time rules of the brushes-and-time sheet (from memory), with "
             f"{w.number(schedule['hours_per_day'])} h of painting a day per painter (from memory: an eight-hour day "
             "less setting up, breaks and washing up) and the drying wait counted through the night. Each painter "
             "washes out and reloads for each paint they use in a layer.")
    return ScheduleSheet(lead, tuple(facts), days, tuple(shares), idle, rules, tuple(schedule.get("weather") or ()))


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


def _overview_width_mm(plan: Plan, paper: Paper, reserve_mm: float = 0.0) -> float:
    """Printed width of a layer sheet's outline map (the whole wall), mm.

    ``reserve_mm`` is the height the sheet's optional lines take (see :func:`_layer_text_mm`).
    """
    # 118 mm tall at most on A4/Letter, leaving room for the paint key and the note under the map, less
    # what the sheet's optional lines take, so the sheet stays one page (never under 60 mm)
    return _fit_box(plan, paper.print_w_mm, max(60.0, 118.0 - reserve_mm) * paper.print_h_mm / PRINT_H_MM)


def _layer_text_mm(layer, coat_lines: int) -> float:
    """Height on paper of a layer sheet's optional text: the work-zone and travel line and the extra-coats list.

    Measured on the printed sheets (sheet.css at A4): a wrapped hint line pair about 10 mm, the coats
    block's two-line lead about 12 mm and each of its lines about 5 mm.
    """
    travel = 10.0 if layer.extra.get("travel") and layer.strokes else 0.0
    return travel + ((12.0 + 5.0 * coat_lines) if coat_lines else 0.0)


def _overview_labels(plan: Plan, outline: dict[str, Any], paper: Paper, reserve_mm: float = 0.0) -> dict[str, Any]:
    """The outline map with the labels its layer sheet has room for (see :func:`place_labels`)."""
    scale = _overview_width_mm(plan, paper, reserve_mm) / plan.wall_width_mm  # paper mm per wall mm
    return place_labels(outline, lambda a: label_box_mm(plan, a),
                        min_area_mm2=MIN_LABEL_PAPER_MM2 / (scale * scale))


def _layer(plan: Plan, n: int, imgs, outline: dict[str, Any], changed: float, *,
           grid_mm: float, unit: str, paper: Paper = PAPERS[DEFAULT_PAPER],
           labelled: dict[str, Any] | None = None, enlarged: bool = False, reserve_mm: float = 0.0) -> LayerSheet:
    layer = plan.layers[n - 1]
    order_ix = plan.paint_index()
    count: dict[str, int] = {}
    for s in layer.strokes:
        count[s.paint] = count.get(s.paint, 0) + 1
    pic_w = _fit_box(plan, 92.0, 62.0)
    map_w = _overview_width_mm(plan, paper, reserve_mm)
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
    if labelled is None:
        labelled = _overview_labels(plan, outline, paper, reserve_mm)
    unlabelled = sum(1 for a in labelled["areas"] if not a["label"])
    blank = (f"Blank (white) areas get no paint in this layer: the ground, {plan.ground}, stays showing there."
             if n == 1 else f"Blank (white) areas get no paint in this layer: what layer {n - 1} left stays "
                            "showing there.")
    caption = ("Where each paint shows once this layer is done, labelled with the paint id; short lines show "
               "which way the strokes run. Each paint has its own hatching (see the key), so the map reads "
               "in black-and-white print too. " + blank + " The faint grid is the transfer grid (same letters "
               "and numbers as on the transfer-grid page). Areas smaller than a quarter of a brush square "
               "are left off"
               + (f"; {unlabelled} area{'s' if unlabelled != 1 else ''} smaller than about 3 × 3 mm on this page, "
                  "or crowded by a nearby label, carry no label here: "
                  + ("the enlargement sheets after this one label every one of them." if enlarged
                     else "their hatching and colour tell the paint.") if unlabelled
                  else "."))
    before = "the ground" if n == 1 else f"layer {n - 1}"
    order = " → ".join(dict.fromkeys(s.paint for s in layer.strokes))
    lead = (f"{len(layer.strokes)} strokes change {w.number(changed * 100, 1)} % of the wall "
            f"compared with {before}. Paint in this order: {order}." if layer.strokes
            else "This layer has no strokes.")
    anchor = f"layer-{n:02d}"
    title = f"Layer {n} of {len(plan.layers)} — {w.number(layer.brush_width_mm)} mm brush" + (
        f" (≈ {w.number(layer.brush_width_mm / w.MM_PER_INCH, 1)} in)" if w.is_us(unit) else "")
    picture = wall_picture(plan, pic_w, f"The wall after layer {n}.", imgs[f"steps/{n:02d}"],
                           f"the wall after layer {n}", f"{anchor}-picture")
    map_svg = _svg(outline_map_svg(plan, labelled, grid_mm=grid_mm, paper_per_wall=map_w / plan.wall_width_mm),
                   anchor)
    return LayerSheet(n, anchor, title, lead, picture, tuple(paints), Figure(map_w, caption, svg=map_svg),
                      travel=_travel_line(layer, unit))


def _travel_line(layer, unit: str) -> str:
    """How the layer is worked across the wall and how far the brush travels (plan.json layer ``travel``)."""
    t = layer.extra.get("travel")
    if not isinstance(t, Mapping) or not layer.strokes:
        return ""
    side = w.length(t["reach_m"] * 1000, unit)
    return (f"Work zone by zone from the top ({side} squares, one ladder or lift position each; "
            f"{w.count(int(t['zone_visits']), 'set-up')}). The brush paints {w.length(t['painted_m'] * 1000, unit)} "
            f"and travels {w.length(t['lifted_m'] * 1000, unit)} lifted between strokes "
            f"({w.length(t['lifted_before_m'] * 1000, unit)} without this short-travel order).")


def coat_lines(notes: list[CoatNote]) -> tuple[str, ...]:
    """One layer's extra coats in words: "P1: 2 coats where it covers P6 (12 strokes)"."""
    lines = []
    for n in notes:
        coats = (f"{n.coats[0]}" if len(n.coats) == 1 else f"{n.coats[0]}–{n.coats[-1]}") + " coats"
        lines.append(f"{n.paint}: {coats} where it covers {n.over} ({w.count(n.strokes, 'stroke')})")
    return tuple(lines)


# --------------------------------------------------------------------------- enlargements
def _narrowest_mm(layer) -> float:
    """The narrowest brush of a layer, mm (a stroke may be narrower than the layer's brush)."""
    return min([float(s.width_mm) for s in layer.strokes] or [float(layer.brush_width_mm)])


def _scale_text(paper_per_wall: float) -> str:
    """A drawing scale, "1:12.5" (ISO 5455 writes scales as 1:X)."""
    return f"1:{w.number(1.0 / paper_per_wall, 1)}"


def _scale_bar(paper_per_wall: float, unit: str) -> tuple[float, str]:
    """A round length of wall that prints 15-60 mm long at this scale, and its words."""
    us = w.is_us(unit)
    lengths = ([3 * 25.4, 6 * 25.4, 304.8, 2 * 304.8, 3 * 304.8, 5 * 304.8, 10 * 304.8] if us
               else [50.0, 100.0, 200.0, 250.0, 500.0, 1000.0, 2000.0, 5000.0])
    fitting = [mm for mm in lengths if mm * paper_per_wall <= 60.0]
    mm = fitting[-1] if fitting else lengths[0]
    return mm, f"{w.length(mm, 'in' if us and mm < 304.8 else unit if us else 'cm')} on the wall"


def _square_names(box: tuple[float, float, float, float], grid_mm: float, part: tuple[int, int] | None) -> str:
    """The grid squares a part of the wall covers: "square C3", "squares A1–B2", "square C3, part 2 of 4"."""
    x0, y0, x1, y1 = box
    i0, j0 = math.floor(x0 / grid_mm + 1e-9), math.floor(y0 / grid_mm + 1e-9)
    i1, j1 = math.ceil(x1 / grid_mm - 1e-9) - 1, math.ceil(y1 / grid_mm - 1e-9) - 1
    first, last = f"{column_label(i0)}{j0 + 1}", f"{column_label(i1)}{j1 + 1}"
    if part is not None:
        return f"square {first}, part {part[0]} of {part[1]}"
    return f"square {first}" if first == last else f"squares {first}–{last}"


def _tiling(plan: Plan, grid_mm: float, brush_mm: float, box_w: float, box_h: float):
    """How a layer's enlargements cut the wall: (cell, columns, rows of cells per sheet, parts per square, scale).

    The scale makes ``brush_mm`` at least :data:`MIN_BRUSH_PAPER_MM` on paper; a sheet takes as many
    whole grid squares as fit its map box at that scale, then is drawn as large as they fit. A
    square too big for one sheet at that scale is cut into k × k parts.
    """
    s_min = MIN_BRUSH_PAPER_MM / brush_mm
    k = max(1, math.ceil(grid_mm * s_min / box_w - 1e-9), math.ceil(grid_mm * s_min / box_h - 1e-9))
    cell = grid_mm / k
    if k > 1:
        cols = rows = 1
    else:
        cols = max(1, min(math.floor(box_w / (cell * s_min) + 1e-9), math.ceil(plan.wall_width_mm / cell - 1e-9)))
        rows = max(1, min(math.floor(box_h / (cell * s_min) + 1e-9), math.ceil(plan.wall_height_mm / cell - 1e-9)))
    scale = min(box_w / (cols * cell), box_h / (rows * cell))
    return cell, cols, rows, k, scale


def _enlargements(plan: Plan, n: int, outline: dict[str, Any], labelled: dict[str, Any], canvas: np.ndarray, *,
                  grid_mm: float, unit: str, paper: Paper, limit: int,
                  reserve_mm: float = 0.0) -> tuple[list[Enlargement], str, Figure | None]:
    """The enlargement sheets of layer ``n``, the layer sheet's note about them, and its paint key."""
    layer = plan.layers[n - 1]
    areas = outline["areas"]
    if not layer.strokes or not areas:
        return [], "", None
    painted = canvas >= 0
    brush = _narrowest_mm(layer)
    overview = _overview_width_mm(plan, paper, reserve_mm) / plan.wall_width_mm
    unlabelled = [k for k, a in enumerate(labelled["areas"]) if not a["label"]]
    too_thin = brush * overview < MIN_BRUSH_PAPER_MM
    paints = sorted({a["paint"] for a in areas}, key=plan.paint_index().get)
    layer_key = Figure(paper.print_w_mm, "", svg=_svg(paint_key_svg(plan, paints, width_mm=paper.print_w_mm),
                                                      f"layer-{n:02d}-key"))
    if not too_thin and not unlabelled:
        return [], "", layer_key
    box_w, box_h = paper.print_w_mm, paper.print_h_mm - ENLARGEMENT_HEADER_MM
    # a layer the overview shows well enough gets its crowded squares at twice the overview's scale at least
    readable = brush if too_thin else min(brush, MIN_BRUSH_PAPER_MM / (2.0 * overview))
    cell, cols, rows, k, scale = _tiling(plan, grid_mm, readable, box_w, box_h)
    step_x, step_y = cols * cell, rows * cell
    nx = math.ceil(plan.wall_width_mm / step_x - 1e-9)
    ny = math.ceil(plan.wall_height_mm / step_y - 1e-9)
    # which sheet holds each area's label point (each area is labelled once, on that sheet)
    pts = np.array([a["label_mm"] for a in areas], dtype=float)
    tile_of = (np.minimum((pts[:, 1] // step_y).astype(int), ny - 1) * nx
               + np.minimum((pts[:, 0] // step_x).astype(int), nx - 1))
    # painted pixels per sheet (summed-area table), to skip sheets where the layer paints next to nothing
    px = float(plan.mm_per_px)
    sat = np.pad(np.cumsum(np.cumsum(painted, axis=0, dtype=np.int64), axis=1), ((1, 0), (1, 0)))
    min_px = 0.25 * (brush / px) ** 2
    want = set(tile_of[unlabelled].tolist()) if not too_thin else set()
    tiles = []
    for ty in range(ny):
        for tx in range(nx):
            box = (tx * step_x, ty * step_y, min((tx + 1) * step_x, plan.wall_width_mm),
                   min((ty + 1) * step_y, plan.wall_height_mm))
            t = ty * nx + tx
            held = np.flatnonzero(tile_of == t)
            if too_thin:
                i0, i1 = int(box[1] / px), min(painted.shape[0], math.ceil(box[3] / px))
                j0, j1 = int(box[0] / px), min(painted.shape[1], math.ceil(box[2] / px))
                count = sat[i1, j1] - sat[i0, j1] - sat[i1, j0] + sat[i0, j0]
                if count < min_px and not len(held):
                    continue
            elif t not in want:
                continue
            tiles.append((t, box, held))
    total = len(tiles)
    if total > limit:  # keep the sheets with the most areas to label, print them in wall order
        keep = sorted(sorted(range(total), key=lambda i: -len(tiles[i][2]))[:limit])
        tiles = [tiles[i] for i in keep]
    font = ENLARGEMENT_LABEL_MM / scale
    bounds = area_bounds(outline)
    pixels, area_of = area_pixels(canvas, outline, px)
    sheets = []
    for number, (t, box, held) in enumerate(tiles, start=1):
        order = sorted(held.tolist(), key=lambda i: -areas[i]["area_mm2"])
        items = []
        for i in order:
            a = areas[i]
            hw, hh = 0.5 * LABEL_EM_PER_CHAR * font * len(str(a["paint"])), 0.5 * font
            items.append({"x": a["label_mm"][0], "y": a["label_mm"][1], "half_w": hw, "half_h": hh,
                          "fits": a["label_room_mm"] >= 0.6 * font and a["area_mm2"] >= 4 * hw * hh})
        # areas reaching in from a neighbouring sheet get their paint written here too, after the rest
        box_px = (int(box[1] / px), min(canvas.shape[0], math.ceil(box[3] / px)),
                  int(box[0] / px), min(canvas.shape[1], math.ceil(box[2] / px)))
        pieces = sorted(pieces_in_box(pixels, area_of, box_px, min_px=min_px, skip=held.tolist()),
                        key=lambda p: -p["size_px"])
        for p in pieces:
            paint = str(areas[p["area"]]["paint"])
            hw, hh = 0.5 * LABEL_EM_PER_CHAR * font * len(paint), 0.5 * font
            items.append({"x": (p["j"] + 0.5) * px, "y": (p["i"] + 0.5) * px, "half_w": hw, "half_h": hh,
                          "fits": p["room_px"] * px >= 0.6 * font and p["size_px"] * px * px >= 4 * hw * hh})
        placed = place_labels_around(items, bounds=box, fixed=square_name_boxes(box, grid_mm, scale))
        labels = [{"area": i, "x": p["x"], "y": p["y"], "moved": p["moved"], "font_mm": font,
                   "half_w_mm": it["half_w"], "half_h_mm": it["half_h"]}
                  for i, it, p in zip(order, items, placed)]
        labels += [{"area": piece["area"], "x": p["x"], "y": p["y"], "moved": p["moved"], "font_mm": font,
                    "half_w_mm": it["half_w"], "half_h_mm": it["half_h"], "continued": True,
                    "anchor_mm": (it["x"], it["y"]), "room_mm": piece["room_px"] * px}
                   for piece, it, p in zip(pieces, items[len(order):], placed[len(order):])]
        part = None
        if k > 1:
            part = ((t // nx) % k * k + (t % nx) % k + 1, k * k)
        names = _square_names(box, grid_mm, part)
        anchor = f"layer-{n:02d}-part-{number:02d}"
        svg = _svg(enlargement_svg(plan, outline, box_mm=box, paper_per_wall=scale, grid_mm=grid_mm,
                                   labels=labels, bounds=bounds), anchor)
        here = sorted({areas[i]["paint"] for i in held.tolist()}
                      | {areas[i]["paint"] for i in areas_meeting(bounds, box)}, key=plan.paint_index().get)
        bar = _scale_bar(scale, unit)
        key = Figure(box_w, "", svg=_svg(paint_key_svg(plan, here, width_mm=box_w, scale_bar=bar,
                                                       paper_per_wall=scale,
                                                       brush=(brush, f"the {w.number(brush)} mm brush")),
                                         f"{anchor}-key"))
        moved = sum(1 for p in placed[:len(order)] if p["moved"])
        crowded = sum(1 for p in placed if p["clash"])
        lead = (f"Scale {_scale_text(scale)}: the {w.number(brush)} mm brush is {w.number(brush * scale, 1)} mm "
                f"wide here ({w.paper_scale(1.0 / scale, unit)}). {len(order)} area"
                f"{'s' if len(order) != 1 else ''} labelled with {'its' if len(order) == 1 else 'their'} paint"
                + (f", {moved} of them beside the area with a line to it" if moved else "")
                + (f"; {w.count(len(pieces), 'area')} reaching in from a neighbouring sheet, labelled in italics"
                   if pieces else "") + ".")
        caption = ("Areas of this layer in these squares, outlined, each paint with its own hatching (key above). "
                   "Short lines show which way the strokes run; a dot and a thin line lead from a small area to "
                   "its label. Each square is named in its top left corner, as on the transfer grid. An area "
                   "that runs over the edge of the sheet is counted on the sheet holding its widest part; its "
                   "label on the other sheet is in italics."
                   + (f" {crowded} label{'s' if crowded != 1 else ''} had no free room and overlap"
                      f"{'s' if crowded == 1 else ''} {'its' if crowded == 1 else 'their'} neighbours." if crowded
                      else ""))
        sheets.append(Enlargement(
            n, anchor, f"Layer {n}, enlargement {number} of {len(tiles)}: {names}", lead, _scale_text(scale), key,
            Figure((box[2] - box[0]) * scale, caption, svg=svg), len(order), moved, crowded))
    reason = (f"the {w.number(brush)} mm brush prints {w.number(brush * overview, 1)} mm wide on the map above"
              if too_thin else f"{w.count(len(unlabelled), 'area')} "
                               f"{'carries' if len(unlabelled) == 1 else 'carry'} no label on the map above")
    note = (f"{w.count(len(tiles), 'enlargement sheet')} follow{'s' if len(tiles) == 1 else ''} at "
            f"{_scale_text(scale)}, "
            f"because {reason}: each labels every area of its squares"
            + ("." if total == len(tiles) else
               f"; the squares of {total - len(tiles)} more sheets with paint are left out (at most {limit} sheets "
               "per layer: the ones with the most areas are kept; the map above shows the rest)."))
    return sheets, note, layer_key


def _grid_parts(plan: Plan, final: np.ndarray, grid_mm: float, unit: str, paper: Paper) -> tuple[GridPart, ...]:
    """The transfer grid over several sheets when its squares print too small on one."""
    fig_w = _fit_box(plan, PRINT_W_MM - 16, 195.0)
    if grid_mm * fig_w / plan.wall_width_mm >= MIN_GRID_SQUARE_PAPER_MM:
        return ()
    cols = max(1, int(paper.print_w_mm // GRID_PART_SQUARE_MM))
    rows = max(1, int((paper.print_h_mm - 30.0) // GRID_PART_SQUARE_MM))
    nx = math.ceil(plan.wall_width_mm / grid_mm - 1e-9)
    ny = math.ceil(plan.wall_height_mm / grid_mm - 1e-9)
    wall_rgb = picture(plan, final)
    px = float(plan.mm_per_px)
    parts = []
    blocks = [(bx, by) for by in range(0, ny, rows) for bx in range(0, nx, cols)]
    for number, (bx, by) in enumerate(blocks, start=1):
        box = (bx * grid_mm, by * grid_mm, min((bx + cols) * grid_mm, plan.wall_width_mm),
               min((by + rows) * grid_mm, plan.wall_height_mm))
        i0, i1 = int(box[1] / px), max(int(box[1] / px) + 1, min(final.shape[0], round(box[3] / px)))
        j0, j1 = int(box[0] / px), max(int(box[0] / px) + 1, min(final.shape[1], round(box[2] / px)))
        # the picture's pixels of this block, drawn over exactly the wall they cover
        shown = (j0 * px, i0 * px, j1 * px, i1 * px)
        crop = png_uri(_png(wall_rgb[i0:i1, j0:j1]))
        anchor = f"transfer-grid-part-{number:02d}"
        svg = _svg(grid_part_svg(plan, grid_mm, crop, box, image_box_mm=shown), anchor)
        names = _square_names(box, grid_mm, None)
        width = (box[2] - box[0]) / grid_mm * GRID_PART_SQUARE_MM
        parts.append(GridPart(anchor, f"Transfer grid, part {number} of {len(blocks)}: {names}",
                              Figure(width, w.paper_scale((box[2] - box[0]) / width, unit) + ".", svg=svg)))
    return tuple(parts)


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
    paper: str = DEFAULT_PAPER,
    canvases: list[np.ndarray] | None = None,
    enlargements_per_layer: int = MAX_ENLARGEMENTS_PER_LAYER,
    schedule: Mapping[str, Any] | None = None,
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
    paper : str
        A key of :data:`PAPERS`: ``"a4"`` or ``"letter"`` (the sheets fit both), ``"a3"`` or
        ``"tabloid"`` (likewise); the enlargements are cut to fit it.
    canvases : list of (H, W) int arrays, optional
        Each layer alone (:func:`layerplan.outlines.layer_canvas`, -1 where it paints nothing),
        to skip enlargements of squares the layer leaves alone; made if missing.
    enlargements_per_layer : int
        Most enlargement sheets of one layer (>= 0); the layer sheet says what was left out.
    schedule : mapping, optional
        The work schedule (:func:`layerplan.schedule.work_schedule`); adds the day-by-day sheet.

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
    if paper not in PAPERS:
        raise ValueError(f"paper must be one of {', '.join(PAPERS)}, got {paper!r}")
    if isinstance(enlargements_per_layer, bool) or not isinstance(enlargements_per_layer, int) \
            or enlargements_per_layer < 0:
        raise ValueError(f"enlargements_per_layer must be a whole number >= 0, got {enlargements_per_layer!r}")
    sheet = PAPERS[paper]
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
        kind = "Classroom painting plan" if is_classroom(plan) else "Wall painting plan"
        title = f"{kind} — {Path(source).stem}" if source else kind
    changed = [float(np.mean(steps[n] != steps[n - 1])) for n in range(1, len(steps))]
    coats_by_layer = coat_notes(plan, minimum=use.get("stroke_coats", 1))
    if canvases is None:
        canvases = [layer_canvas(plan, n) for n in range(1, len(plan.layers) + 1)]
    reserve = [_layer_text_mm(layer, len(coat_lines(notes_n))) for layer, notes_n in zip(plan.layers, coats_by_layer)]
    labelled = [_overview_labels(plan, o, sheet, r) for o, r in zip(outlines, reserve)]
    enlargements, notes, keys = [], [], []
    for n in range(1, len(plan.layers) + 1):
        more, note, key = _enlargements(plan, n, outlines[n - 1], labelled[n - 1], np.asarray(canvases[n - 1]),
                                        grid_mm=grid_mm, unit=unit, paper=sheet,
                                        limit=0 if is_classroom(plan) else enlargements_per_layer,
                                        reserve_mm=reserve[n - 1])
        enlargements += more
        if note:
            notes.append((n, note))
        if key is not None:
            keys.append((n, key))
    enlarged = {e.layer for e in enlargements}
    return Sheets(
        title=title,
        unit=unit,
        cover=_cover(plan, imgs, title, use, unit),
        paint_card=_paint_card(plan, use, us),
        shopping=_shopping(plan, use, unit),
        brushes=_brushes(plan, use, us),
        grid=_grid(plan, imgs, grid_mm, unit),
        layers=tuple(replace(_layer(plan, n, imgs, outlines[n - 1], changed[n - 1], grid_mm=grid_mm, unit=unit,
                                    paper=sheet, labelled=labelled[n - 1], enlarged=n in enlarged,
                                    reserve_mm=reserve[n - 1]),
                             coats=coat_lines(coats_by_layer[n - 1]))
                     for n in range(1, len(plan.layers) + 1)),
        paper=sheet,
        enlargements=tuple(enlargements),
        grid_parts=_grid_parts(plan, steps[-1], grid_mm, unit, sheet),
        enlargement_notes=tuple(notes),
        layer_keys=tuple(keys),
        schedule=None if schedule is None else schedule_sheet(schedule, unit),
        classroom=classroom_sheets(plan, use, imgs, outlines, grid_mm=grid_mm, paper=sheet)
        if is_classroom(plan) else None,
    )


# ------------------------------------------------------------------------------ panels (panels.html)
@dataclass(frozen=True)
class PanelSheet:
    """One panel's sheet: where it goes, its neighbours, its part of the picture and the key map."""

    number: int
    anchor: str
    title: str
    facts: tuple[tuple[str, str], ...]
    figure: Figure
    key: Figure


@dataclass(frozen=True)
class PanelDoc:
    """panels.html: a key map of every panel, then one sheet per panel, then the safety sheet."""

    title: str
    paper: Paper
    lead: str
    key: Figure
    panels: tuple[PanelSheet, ...]


def panel_sheets(plan: Plan, final: np.ndarray, panels, overlap_mm: float, *, grid_mm: float,
                 paper: str = DEFAULT_PAPER) -> PanelDoc:
    """The sheets of panels.html (:mod:`layerplan.panels`), over the finished picture ``final`` ((H, W) palette
    positions), with the transfer grid ``grid_mm`` drawn on each panel so its squares match the wall's."""
    from .panels import overlaps_of

    unit = wall_unit(plan)
    pap = PAPERS[paper]
    wall_rgb = picture(plan, final)
    px = float(plan.mm_per_px)
    key_w = _fit_box(plan, pap.print_w_mm, pap.print_h_mm * 0.6)
    size = f"{w.length(max(p.width_mm for p in panels), unit)} × {w.length(max(p.height_mm for p in panels), unit)}"
    lead = (f"{len(panels)} panels of up to {size}, in {max(p.row for p in panels)} rows, neighbours overlapping "
            f"by {w.length(overlap_mm, unit)}. Number each panel on its back with an arrow to its top, paint it "
            "flat in the studio, and put them up row by row from the top-left as the key map shows.")
    key = Figure(key_w, "Key map: the wall seen from the front, panels numbered row by row from the top-left.",
                 svg=_svg(panel_key_svg(plan, panels), "panel-key"))
    sheets = []
    for p in panels:
        x0, y0, x1, y1 = p.box
        i0, i1 = int(y0 / px), max(int(y0 / px) + 1, min(final.shape[0], math.ceil(y1 / px - 1e-9)))
        j0, j1 = int(x0 / px), max(int(x0 / px) + 1, min(final.shape[1], math.ceil(x1 / px - 1e-9)))
        shown = (j0 * px, i0 * px, j1 * px, i1 * px)
        crop = png_uri(_png(wall_rgb[i0:i1, j0:j1]))
        anchor = f"panel-{p.number:03d}"
        shared = overlaps_of(p, panels)
        fig_w = min(pap.print_w_mm, (pap.print_h_mm - 95.0) * p.width_mm / p.height_mm)
        figure = Figure(fig_w, w.paper_scale(p.width_mm / fig_w, unit) + ". Dashed: the overlap with the panel "
                        "numbered in it.", svg=_svg(panel_svg(plan, grid_mm, crop, p.box, image_box_mm=shown,
                                                              overlaps=shared), anchor))
        facts = (
            ("size", f"{w.length(p.width_mm, unit)} wide × {w.length(p.height_mm, unit)} high"),
            ("place", f"row {p.row}, column {p.column}: its top-left {w.length(x0, unit)} from the wall's left "
                      f"edge and {w.length(y0, unit)} down from its top"),
            ("overlaps", ", ".join(f"panel {n}" for n, _ in shared) or "none"),
        )
        small = Figure(min(60.0, key_w), "", svg=_svg(panel_key_svg(plan, panels, highlight=p.number), f"{anchor}-key"))
        sheets.append(PanelSheet(p.number, anchor, f"Panel {p.number} of {len(panels)}", facts, figure, small))
    title = str((plan.extra.get("source") or {}).get("image") or "Panels")
    return PanelDoc(f"{title} — panels", pap, lead, key, tuple(sheets))


# --------------------------------------------------------------------------------- classroom
#: paper height a step sheet keeps for its title, lead, paints, small picture and key, mm (our layout)
STEP_HEADER_MM = 70.0
#: width of the small "after this step" picture on a step sheet, mm (our layout)
STEP_PICTURE_MM = 45.0
#: width of a turned step sheet's side column (title, paints, picture, key), mm (our layout)
STEP_SIDE_MM = 80.0
#: who mixes a paint, in words (see :func:`layerplan.classroom.who_mixes`)
WHO_MIXES = {"stock": "straight from the bottle", "students": "students mix it at the table",
             "teacher": "mix beforehand for the whole class"}


@dataclass(frozen=True)
class ClassPaintRow:
    """A stock paint or a mix on the preparation sheet: how much per table and for the class."""

    id: str
    srgb: str | None
    mix: str  # a mix's recipe; for a stock paint, what of it goes into the teacher's mixes
    who: str
    per_student: str
    per_table: str
    total: str


@dataclass(frozen=True)
class ValueStepRow:
    """One grey of a value scale: its paint id, colour, lightness and mix."""

    id: str
    srgb: str
    lightness: str
    mix: str


@dataclass(frozen=True)
class PeriodRow:
    period: int
    steps: str
    minutes: str


@dataclass(frozen=True)
class StepPaint:
    id: str
    srgb: str
    mix: str
    who: str
    strokes: int
    areas: int


@dataclass(frozen=True)
class StepSheet:
    """A student's sheet for one layer: that step's areas outlined and labelled, at the largest scale that fits."""

    number: int
    anchor: str
    title: str
    lead: str
    scale: str
    paints: tuple[StepPaint, ...]
    picture: Figure
    key: Figure
    map: Figure
    labelled: int
    #: the page is turned (landscape), the map beside a side column
    landscape: bool = False


@dataclass(frozen=True)
class ClassroomSheets:
    """The printed plan of a sheet or board for a class (:func:`classroom_sheets`); plan.html lays it out
    with ``templates/sheets/classroom_plan.html`` in place of the wall's shopping, brush, grid and layer sheets."""

    noun: str
    surface: str
    class_line: str
    tables: str
    stock: tuple[ClassPaintRow, ...]
    mixes: tuple[ClassPaintRow, ...]
    value_scale: tuple[ValueStepRow, ...]
    value_note: str
    periods: tuple[PeriodRow, ...]
    timing: str
    steps: tuple[StepSheet, ...]


def is_classroom(plan: Plan) -> bool:
    """Whether a plan is printed for a class: a named sheet or board, a number of students, or a value study."""
    st = plan.extra.get("settings") or {}
    return bool(st.get("surface") or st.get("students") or st.get("value_study"))


def _mix_words(recipe: Mapping[str, Any] | None) -> str:
    if not recipe:
        return "mix by eye to the swatch"
    parts = recipe.get("parts") or []
    if len(parts) == 1:
        return str(parts[0]["paint"])
    return " + ".join(f"{w.number(p['parts'])} {p['paint']}" for p in parts)


def _step_map(plan: Plan, n: int, outline: dict[str, Any], *, scale: float, grid_mm: float) -> tuple[Markup, int]:
    """Layer ``n``'s outline map of the whole surface at ``scale`` (paper mm per surface mm), every area labelled."""
    areas = outline["areas"]
    box = (0.0, 0.0, float(plan.wall_width_mm), float(plan.wall_height_mm))
    font = ENLARGEMENT_LABEL_MM / scale
    order = sorted(range(len(areas)), key=lambda i: -areas[i]["area_mm2"])
    items = []
    for i in order:
        a = areas[i]
        hw, hh = 0.5 * LABEL_EM_PER_CHAR * font * len(str(a["paint"])), 0.5 * font
        items.append({"x": a["label_mm"][0], "y": a["label_mm"][1], "half_w": hw, "half_h": hh,
                      "fits": a["label_room_mm"] >= 0.6 * font and a["area_mm2"] >= 4 * hw * hh})
    placed = place_labels_around(items, bounds=box, fixed=square_name_boxes(box, grid_mm, scale))
    labels = [{"area": i, "x": p["x"], "y": p["y"], "moved": p["moved"], "font_mm": font,
               "half_w_mm": it["half_w"], "half_h_mm": it["half_h"]} for i, it, p in zip(order, items, placed)]
    svg = _svg(enlargement_svg(plan, outline, box_mm=box, paper_per_wall=scale, grid_mm=grid_mm, labels=labels,
                               bounds=area_bounds(outline)), f"step-{n:02d}")
    return svg, len(labels)


def step_layout(plan: Plan, paper: Paper) -> tuple[float, bool]:
    """(scale, landscape) of a step sheet: paper mm per surface mm of its map, and whether the page is turned.

    The map is full size (1) when the surface fits the paper upright under the sheet's header, or turned
    (landscape) beside a side column of :data:`STEP_SIDE_MM`; else the largest scale either way allows.
    """
    upright = min(1.0, paper.print_w_mm / plan.wall_width_mm,
                  (paper.print_h_mm - STEP_HEADER_MM) / plan.wall_height_mm)
    turned = min(1.0, (paper.print_h_mm - STEP_SIDE_MM) / plan.wall_width_mm, paper.print_w_mm / plan.wall_height_mm)
    return (turned, True) if turned > upright + 1e-9 else (upright, False)


def step_scale(plan: Plan, paper: Paper) -> float:
    """Paper mm per surface mm of a step sheet's map (:func:`step_layout`)."""
    return step_layout(plan, paper)[0]


def _step_sheets(plan: Plan, imgs, outlines, *, grid_mm: float, paper: Paper, noun: str) -> tuple[StepSheet, ...]:
    from .classroom import who_mixes

    scale, landscape = step_layout(plan, paper)
    key_w = STEP_SIDE_MM - 4.0 if landscape else paper.print_w_mm
    order_ix = plan.paint_index()
    out = []
    for n, (layer, outline) in enumerate(zip(plan.layers, outlines), start=1):
        count: dict[str, int] = {}
        for s in layer.strokes:
            count[s.paint] = count.get(s.paint, 0) + 1
        ids = sorted(set(count) | {a["paint"] for a in outline["areas"]}, key=order_ix.get)
        paints = []
        for pid in ids:
            recipe = plan.paint(pid).extra.get("recipe")
            paints.append(StepPaint(pid, plan.paint(pid).srgb, _mix_words(recipe), WHO_MIXES[who_mixes(recipe)],
                                    count.get(pid, 0), sum(1 for a in outline["areas"] if a["paint"] == pid)))
        svg, labelled = _step_map(plan, n, outline, scale=scale, grid_mm=grid_mm)
        anchor = f"step-{n:02d}"
        full = scale >= 1.0 - 1e-9
        scale_words = "full size (1:1): lay it under a thin sheet or trace it across" if full else (
            f"scale {_scale_text(scale)}, the largest that fits this paper "
            f"({w.paper_scale(1.0 / scale, plan.wall_unit).replace('wall', noun)})")
        brush = w.brush(layer.brush_width_mm, w.is_us(plan.wall_unit))
        lead = (f"With the {brush} brush, paint each outlined area in the paint written in it. Areas left blank "
                + ("keep the ground." if n == 1 else f"keep what step {n - 1} painted.")
                + " Let this step dry before the next.") if layer.strokes else "Nothing to paint in this step."
        paints_key = [pid for pid in ids if any(a["paint"] == pid for a in outline["areas"])]
        key = Figure(key_w, "", svg=_svg(paint_key_svg(plan, paints_key, width_mm=key_w),
                                                    f"{anchor}-key")) if paints_key else Figure(0.0)
        picture = Figure(STEP_PICTURE_MM, f"Your {noun} after step {n}.", png_uri(imgs[f"steps/{n:02d}"]),
                         f"the {noun} after step {n}")
        caption = (f"Step {n}'s areas, outlined and hatched per paint (key above), each labelled with its paint id; "
                   "a dot and a thin line lead from a small area to its label. Short lines show which way the "
                   "strokes run.")
        out.append(StepSheet(n, anchor, f"Step {n} of {len(plan.layers)} — {brush} brush", lead, scale_words,
                             tuple(paints), picture, key, Figure(plan.wall_width_mm * scale, caption, svg=svg),
                             labelled, landscape))
    return tuple(out)


def classroom_sheets(plan: Plan, use: Mapping[str, Any], imgs, outlines, *, grid_mm: float,
                     paper: Paper) -> ClassroomSheets:
    """The classroom sheets of a plan: preparation, value scale, teacher's periods, one step sheet per layer.

    Parameters
    ----------
    plan : Plan
    use : mapping
        Its paint use (:func:`layerplan.quantities.paint_use`): one sheet's amounts.
    imgs : mapping
        PNG pictures, ``"steps/NN"`` for each layer.
    outlines : list of dict
        Each layer's outline map (:func:`layerplan.outlines.outline_maps`).
    grid_mm : float
    paper : Paper

    Returns
    -------
    ClassroomSheets
        Without ``settings.students`` the class figures are for one student and no spares.

    References
    ----------
    ISO 216 (A sizes); ANSI/ASME Y14.1 (Letter, Tabloid); see :mod:`layerplan.classroom` for the figures.
    """
    from .classroom import classroom_section
    from .surfaces import SURFACES, noun as surface_noun

    st = plan.extra.get("settings") or {}
    noun = surface_noun(st)
    us = w.is_us(plan.wall_unit)
    section = classroom_section(plan, use) or classroom_section(
        _with_settings(plan, students=1, spares=0.0), use)
    key = str(st.get("surface") or "")
    size = w.wall_size(plan.wall_width_mm, plan.wall_height_mm, plan.wall_unit)
    label = SURFACES[key].label if key in SURFACES else f"{noun} of {size}"
    given = bool(st.get("students"))
    class_line = (f"{section['students']} students and {section['spares']} spare {noun}s "
                  f"({w.number(section['spare_share'] * 100, 0)} %): {section['sheets']} {noun}s in all"
                  if given else f"one {noun}" + (" (give the number of students for a class)" if key else ""))
    tables = (f"{section['tables']} table{'s' if section['tables'] != 1 else ''} of up to {section['table_size']} "
              "(common practice): put out the amount per table in a lidded pot or a palette well per paint")
    inv = {e.get("name"): e.get("srgb") for e in (plan.extra.get("inventory") or []) if isinstance(e, Mapping)}
    stock = tuple(ClassPaintRow(r["paint"], inv.get(r["paint"]), w.millilitres(r.get("premix_ml", 0.0), us)
                                if r.get("premix_ml") else "—", "", w.millilitres(r["per_student_ml"], us),
                                w.millilitres(r["per_table_ml"], us) if r["per_table_ml"] else "—",
                                w.millilitres(r["total_ml"], us))
                  for r in section["paints"])
    mixes = []
    for r in section["mixes"]:
        p = plan.paint(r["paint"])
        mixes.append(ClassPaintRow(r["paint"], p.srgb, _mix_words(p.extra.get("recipe")), WHO_MIXES[r["who"]],
                                   w.millilitres(r["per_student_ml"], us), w.millilitres(r["per_table_ml"], us),
                                   w.millilitres(r["total_ml"], us)))
    vs = plan.extra.get("value_study") or {}
    value_rows = tuple(ValueStepRow(g["paint"], plan.paint(g["paint"]).srgb, f"L* {w.number(g['l'], 1)}",
                                    (f"{g['parts']['black']} {vs.get('black', 'black')} + "
                                     f"{g['parts']['white']} {vs.get('white', 'white')}"
                                     if g["parts"]["black"] and g["parts"]["white"] else
                                     vs.get("black", "black") if g["parts"]["black"] else vs.get("white", "white")))
                       for g in vs.get("greys") or [] if g.get("paint") in plan.paint_index())
    value_note = ""
    if value_rows:
        steps_l = [g["l"] for g in vs["greys"]]
        gap = (steps_l[0] - steps_l[-1]) / max(1, len(steps_l) - 1)
        value_note = (f"{len(value_rows)} greys from {vs.get('white')} to {vs.get('black')}, about {w.number(gap, 1)} "
                      "apart in lightness (CIELAB L*), mixed in the parts given (from the paint model: black is "
                      "strong, so the light greys need only a touch of it). Paint each box of the strip below in "
                      "its grey, lightest first, before the picture.")
    periods = tuple(PeriodRow(p["period"], "; ".join(
        f"{s['step']}{' (continued)' if s.get('continued') else ''}" + ("" if s["step"] == "drying" else
                                                                         f" {w.number(s['minutes'], 0)} min")
        if s["step"] != "drying" else f"let it dry {w.number(s['minutes'], 0)} min" for s in p["steps"]),
        w.duration(p["minutes"] * 60)) for p in section["periods"])
    from .classroom import CLASS_PAINT_CHANGE_SECONDS, CLASS_SECONDS_PER_STROKE, DRYING_MINUTES, SETUP_MINUTES

    timing = (f"Periods of {w.number(section['period_minutes'], 0)} min, {w.number(SETUP_MINUTES, 0)} min of each "
              "going to setting out and clearing away. A rough guide (from memory; time your own class): about "
              f"{w.number(CLASS_SECONDS_PER_STROKE, 0)} s per stroke and {w.number(CLASS_PAINT_CHANGE_SECONDS, 0)} s "
              f"to rinse and reload at each change of paint; a layer needs about {w.number(DRYING_MINUTES, 0)} min "
              f"to dry before the next (longer in a cold or damp room), or dries between periods.")
    return ClassroomSheets(noun, label, class_line, tables, stock, tuple(mixes), value_rows, value_note, periods,
                           timing, _step_sheets(plan, imgs, outlines, grid_mm=grid_mm, paper=paper, noun=noun))


def _with_settings(plan: Plan, **settings) -> Plan:
    """The plan with some of its recorded settings changed (a new Plan; the given one is untouched)."""
    return replace(plan, extra={**plan.extra, "settings": {**(plan.extra.get("settings") or {}), **settings}})
