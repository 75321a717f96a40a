"""Wall-scale SVG: the strokes in wall millimetres, for editing, printing and projecting.

The document's ``width``/``height`` are the wall in mm and its ``viewBox`` is the wall
in mm, so one user unit is one millimetre of wall. Inside: a ``ground`` group (one
rectangle), then one group per layer (``id="layer-01"`` …, each with a ``<title>``)
holding one ``<path>`` per stroke (stroke-width = the brush width, round caps and
joins, the paint's colour, in painting order), then an optional transfer ``grid``
group and an ``outlines`` group with one sub-group of outline maps per layer.

A single-point stroke (a dab) is a zero-length path; with round caps SVG renderers
draw it as a disc of the brush width (SVG 1.1, 11.4 'stroke-linecap').

References
----------
.. [1] W3C, Scalable Vector Graphics (SVG) 1.1 (Second Edition), 2011: 7.7 (viewBox),
   7.10 (units: mm), 11.4 (stroke properties), 8.3 (path data).
"""

from __future__ import annotations

import math
from typing import Any, Sequence

import numpy as np
import svgwrite

from .plan import Plan

#: most grid lines we draw along one side (finer grids are unreadable and huge)
MAX_GRID_LINES = 200
#: outline and grid line colour
INK = "#1a1a1a"
#: what outline fills show of the paint colour (light enough to read the labels)
OUTLINE_FILL_OPACITY = 0.45
#: a faint transfer grid (drawn over outline maps to find where a shape goes): line and label opacity
FAINT_GRID_OPACITY = (0.35, 0.75)
#: width of a label's text per character, in font sizes (sans-serif capitals and digits run
#: 0.55-0.67 em; from memory), for keeping direction ticks and other labels off it
LABEL_EM_PER_CHAR = 0.62


#: how opaque the white box behind a label is, so it reads over lines and hatching (our choice)
HALO_OPACITY = 0.8


def _halo_group(dwg):
    return dwg.g(fill="#ffffff", fill_opacity=str(HALO_OPACITY), **{"class": "halos"})


def _halo(dwg, group, text: str, x: float, baseline: float, font: float, *, anchor: str = "middle") -> None:
    """A white box behind a text, added to ``group``.

    A box rather than a white outline drawn first (``paint-order: stroke``): not every SVG renderer
    honours that property (WeasyPrint paints the outline over the letters, hiding them).
    """
    width = LABEL_EM_PER_CHAR * font * len(text) + 0.3 * font
    left = x - width / 2 if anchor == "middle" else x - 0.15 * font
    group.add(dwg.rect(insert=(_f(left), _f(baseline - 0.85 * font)), size=(_f(width), _f(1.05 * font)),
                       rx=_f(0.15 * font)))


def _f(v: float) -> str:
    """A coordinate for the file: at most two decimals, no trailing zeros."""
    s = f"{float(v):.2f}".rstrip("0").rstrip(".")
    return "0" if s in ("-0", "") else s


def path_data(path_mm) -> str:
    """SVG path data for a polyline; a single point becomes a zero-length segment."""
    pts = [(float(x), float(y)) for x, y in path_mm]
    if len(pts) == 1:
        pts = pts * 2
    head = f"M{_f(pts[0][0])},{_f(pts[0][1])}"
    return head + "L" + " ".join(f"{_f(x)},{_f(y)}" for x, y in pts[1:])


def column_label(i: int) -> str:
    """Grid column label: 0 -> A, 25 -> Z, 26 -> AA (spreadsheet style)."""
    s = ""
    i += 1
    while i:
        i, r = divmod(i - 1, 26)
        s = chr(65 + r) + s
    return s


def check_grid(plan: Plan, grid_mm) -> float:
    """Validate a transfer-grid spacing for this wall; return it as float.

    Raises
    ------
    ValueError
        If the spacing is not > 0 mm or gives more than :data:`MAX_GRID_LINES` squares
        along a side.
    """
    if isinstance(grid_mm, bool) or not isinstance(grid_mm, (int, float)) or not math.isfinite(grid_mm) \
            or grid_mm <= 0:
        raise ValueError(f"grid spacing must be > 0 mm, got {grid_mm!r}")
    longest = max(plan.wall_width_mm, plan.wall_height_mm)
    if longest / grid_mm > MAX_GRID_LINES:
        raise ValueError(
            f"grid spacing {grid_mm:g} mm gives {math.ceil(longest / grid_mm)} squares along a "
            f"{longest / 1000:g} m side; use at least {math.ceil(longest / MAX_GRID_LINES):g} mm"
        )
    return float(grid_mm)


def _drawing(plan: Plan, *, responsive: bool = False) -> svgwrite.Drawing:
    w, h = plan.wall_width_mm, plan.wall_height_mm
    size = ("100%", "100%") if responsive else (f"{_f(w)}mm", f"{_f(h)}mm")
    dwg = svgwrite.Drawing(size=size, viewBox=f"0 0 {_f(w)} {_f(h)}", profile="full", debug=False)
    if responsive:
        dwg.attribs.pop("height", None)
    return dwg


def _ground_group(dwg, plan: Plan):
    from .openings import plan_openings

    found = plan_openings(plan)
    g = dwg.g(id="ground", **{"data-paint": plan.ground})
    g.set_desc(title=f"Ground: {plan.ground} over the whole surface" + (" but the openings" if found else ""))
    rect = dwg.rect(insert=(0, 0), size=(_f(plan.wall_width_mm), _f(plan.wall_height_mm)),
                    fill=plan.paint(plan.ground).srgb)
    if found:  # the ground is not painted in an opening: masked out (openings may overlap)
        mask = dwg.mask(id="wall-less-openings")
        mask.add(dwg.rect(insert=(0, 0), size=(_f(plan.wall_width_mm), _f(plan.wall_height_mm)), fill="#ffffff"))
        for o in found:
            mask.add(dwg.rect(insert=(_f(o.x_mm), _f(o.y_mm)), size=(_f(o.width_mm), _f(o.height_mm)), fill="#000000"))
        dwg.defs.add(mask)
        rect["mask"] = "url(#wall-less-openings)"
    g.add(rect)
    return g


#: hatching of openings: line spacing and width as a share of the wall's longer side (our choice:
#: reads as "not painted" at any print size, like the hatching of openings on a builder's drawing)
OPENING_HATCH, OPENING_LINE = 1 / 120, 1 / 900


def openings_group(dwg, plan: Plan, *, box_mm: tuple[float, float, float, float] | None = None):
    """The plan's openings (windows, doors, vents) as hatched, outlined rectangles, each titled with
    its size; ``None`` when it has none. ``box_mm`` sizes the hatching for a drawing of part of the wall."""
    from .openings import plan_openings

    found = plan_openings(plan)
    if not found:
        return None
    x0, y0, x1, y1 = box_mm or (0.0, 0.0, plan.wall_width_mm, plan.wall_height_mm)
    side = max(x1 - x0, y1 - y0)
    t, lw = side * OPENING_HATCH, side * OPENING_LINE
    pat = dwg.pattern(id="opening-hatch", insert=(0, 0), size=(_f(t), _f(t)), patternUnits="userSpaceOnUse",
                      patternTransform="rotate(45)")
    pat.add(dwg.rect(insert=(0, 0), size=(_f(t), _f(t)), fill="#ffffff"))
    pat.add(dwg.line(start=(0, _f(t / 2)), end=(_f(t), _f(t / 2)), stroke=INK, stroke_width=_f(lw)))
    dwg.defs.add(pat)
    g = dwg.g(id="openings", **{"class": "openings"})
    g.set_desc(title=f"Openings (not painted): {len(found)}")
    for n, o in enumerate(found, start=1):
        r = dwg.rect(insert=(_f(o.x_mm), _f(o.y_mm)), size=(_f(o.width_mm), _f(o.height_mm)),
                     fill="url(#opening-hatch)", stroke=INK, stroke_width=_f(2 * lw),
                     **{"class": "opening", "data-opening": str(n)})
        r.set_desc(title=f"Opening {n}: {_f(o.width_mm)} × {_f(o.height_mm)} mm, not painted")
        g.add(r)
    return g


def _add_openings(dwg, plan: Plan, **kw) -> None:
    g = openings_group(dwg, plan, **kw)
    if g is not None:
        dwg.add(g)


def _layer_group(dwg, plan: Plan, n: int):
    layer = plan.layers[n - 1]
    colours = {p.id: p.srgb for p in plan.palette}
    g = dwg.g(id=f"layer-{n:02d}", **{"class": "layer", "data-brush-mm": _f(layer.brush_width_mm)})
    g.set_desc(title=f"Layer {n}: {_f(layer.brush_width_mm)} mm brush, {len(layer.strokes)} strokes")
    for s in layer.strokes:
        g.add(dwg.path(d=path_data(s.path_mm), fill="none", stroke=colours[s.paint],
                       stroke_width=_f(s.width_mm), stroke_linecap="round", stroke_linejoin="round",
                       **{"data-paint": s.paint}))
    return g


def _grid_group(dwg, plan: Plan, grid_mm: float, *, faint: bool = False):
    grid_mm = check_grid(plan, grid_mm)
    w, h = plan.wall_width_mm, plan.wall_height_mm
    line = max(w, h) / 800.0
    font = min(grid_mm * 0.35, max(w, h) / 45.0)
    g = dwg.g(id="grid", **{"data-spacing-mm": _f(grid_mm)})
    g.set_desc(title=f"Transfer grid: {_f(grid_mm / 10)} cm squares; columns A, B, … from the left, "
                     f"rows 1, 2, … from the top")
    lines = dwg.g(stroke=INK, stroke_width=_f(line), stroke_opacity=str(FAINT_GRID_OPACITY[0]) if faint else "0.8")
    nx, ny = math.ceil(w / grid_mm - 1e-9), math.ceil(h / grid_mm - 1e-9)
    for i in range(nx + 1):
        x = min(i * grid_mm, w)
        lines.add(dwg.line(start=(_f(x), 0), end=(_f(x), _f(h))))
    for j in range(ny + 1):
        y = min(j * grid_mm, h)
        lines.add(dwg.line(start=(0, _f(y)), end=(_f(w), _f(y))))
    g.add(lines)
    halos = _halo_group(dwg)
    labels = dwg.g(fill=INK, font_size=_f(font), font_family="sans-serif", **{"text-anchor": "middle"})
    if faint:
        labels["opacity"] = halos["opacity"] = str(FAINT_GRID_OPACITY[1])
        g["class"] = "faint"
    for i in range(nx):
        cx = (i + 0.5) * grid_mm if (i + 1) * grid_mm <= w else (i * grid_mm + w) / 2
        _halo(dwg, halos, column_label(i), cx, font * 1.1, font)
        labels.add(dwg.text(column_label(i), insert=(_f(cx), _f(font * 1.1))))
    for j in range(ny):
        cy = (j + 0.5) * grid_mm if (j + 1) * grid_mm <= h else (j * grid_mm + h) / 2
        _halo(dwg, halos, str(j + 1), font * 0.8, cy + font * 0.35, font)
        labels.add(dwg.text(str(j + 1), insert=(_f(font * 0.8), _f(cy + font * 0.35))))
    g.add(halos)
    g.add(labels)
    return g


def label_font_mm(plan: Plan, area: dict[str, Any]) -> float:
    """Font size (mm of wall) of an outline-map label: readable (about 5-9 pt) when the
    whole wall is printed 15-18 cm across, bigger in roomier areas."""
    lo, hi = max(plan.wall_width_mm, plan.wall_height_mm) / 95.0, max(plan.wall_width_mm, plan.wall_height_mm) / 50.0
    return min(max(area["label_room_mm"] * 1.2, lo), hi)


def label_box_mm(plan: Plan, area: dict[str, Any]) -> tuple[float, float]:
    """Half width and half height (mm of wall) of an area's label text."""
    font = label_font_mm(plan, area)
    return 0.5 * LABEL_EM_PER_CHAR * font * len(str(area["paint"])), 0.5 * font


def _outline_group(dwg, plan: Plan, outline: dict[str, Any], *, hidden: bool = False, fill: bool = True,
                   grid_mm: float | None = None, patterns: dict[str, str] | None = None):
    n = int(outline["layer"])
    colours = {p.id: p.srgb for p in plan.palette}
    w, h = plan.wall_width_mm, plan.wall_height_mm
    extra = {"data-layer": str(n)}
    if hidden:
        extra["display"] = "none"
    g = dwg.g(id=f"outlines-{n:02d}", **extra)
    g.set_desc(title=f"Layer {n}: areas each paint covers, labelled with the paint id")
    line = max(w, h) / 1000.0
    shapes = dwg.g(stroke=INK, stroke_width=_f(line), stroke_linejoin="round")
    for a in outline["areas"]:
        d = " ".join("M" + " ".join(f"{_f(x)},{_f(y)}" for x, y in c) + "Z" for c in a["contours_mm"])
        if patterns is not None:  # the tint under a hatching of its own, for black-and-white print
            shapes.add(dwg.path(d=d, fill=f"url(#{patterns[a['paint']]})",
                                **{"fill-rule": "evenodd", "data-paint": a["paint"]}))
            continue
        shapes.add(dwg.path(d=d, fill=colours[a["paint"]] if fill else "none",
                            fill_opacity=str(OUTLINE_FILL_OPACITY) if fill else "1",
                            **{"fill-rule": "evenodd", "data-paint": a["paint"]}))
    g.add(shapes)
    if grid_mm is not None:  # over the shapes, under the labels
        g.add(_grid_group(dwg, plan, grid_mm, faint=True))
    hints = dwg.g(stroke=INK, stroke_width=_f(line * 2.5), stroke_linecap="round", fill="none")
    halos = _halo_group(dwg)
    labels = dwg.g(fill=INK, font_family="sans-serif", **{"text-anchor": "middle"})
    for k, a in enumerate(outline["areas"]):
        if a.get("label") is False:  # left unlabelled (see layerplan.outlines.place_labels)
            continue
        x, y = a["label_mm"]
        font = label_font_mm(plan, a)
        if a["direction_deg"] is not None and a["hint"] != "mixed":
            # a tick each side of the label, leaving the text clear
            t = math.radians(a["direction_deg"])
            c, sn = math.cos(t), math.sin(t)
            bw, bh = label_box_mm(plan, a)
            gap = min(bw / abs(c) if abs(c) > 1e-9 else math.inf, bh / abs(sn) if abs(sn) > 1e-9 else math.inf)
            gap += 0.25 * font
            half = max(a["label_room_mm"], gap + 0.8 * font)
            for sign in (-1.0, 1.0):
                hints.add(dwg.line(start=(_f(x + sign * gap * c), _f(y + sign * gap * sn)),
                                   end=(_f(x + sign * half * c), _f(y + sign * half * sn))))
        _halo(dwg, halos, str(a["paint"]), x, y + font * 0.35, font)
        labels.add(dwg.text(a["paint"], insert=(_f(x), _f(y + font * 0.35)), font_size=_f(font),
                            **{"class": "area-label", "data-layer": str(n), "data-area": str(k)}))
    g.add(hints)
    g.add(halos)
    g.add(labels)
    return g


def _outline_list(outlines) -> list[dict[str, Any]]:
    if outlines is None:
        return []
    if isinstance(outlines, dict):
        return [outlines]
    return list(outlines)


def overlay_svg(plan: Plan, *, grid_mm: float | None = None,
                outlines: Sequence[dict[str, Any]] | None = None,
                show_outlines: bool = False) -> str:
    """The whole plan as one wall-scale SVG document.

    Parameters
    ----------
    plan : Plan
    grid_mm : float, optional
        Add a transfer-grid group at this spacing (mm).
    outlines : list of dict, optional
        Outline maps (:func:`layerplan.outlines.outline_maps`) to add as an
        ``outlines`` group, one sub-group per layer.
    show_outlines : bool
        Outline sub-groups are hidden (``display="none"``) unless this is true,
        because over the finished picture they hide it; switch them on in an editor.

    Returns
    -------
    svg : str

    Raises
    ------
    ValueError
        If the grid spacing is unusable (see :func:`check_grid`).

    References
    ----------
    W3C SVG 1.1 (Second Edition), 2011.
    """
    if grid_mm is not None:
        check_grid(plan, grid_mm)
    dwg = _drawing(plan)
    dwg.set_desc(title=f"layerplan overlay: {_f(plan.wall_width_mm)} × {_f(plan.wall_height_mm)} mm wall, "
                       f"{len(plan.layers)} layers, {plan.stroke_count()} strokes")
    dwg.add(_ground_group(dwg, plan))
    for n in range(1, len(plan.layers) + 1):
        dwg.add(_layer_group(dwg, plan, n))
    _add_openings(dwg, plan)
    if grid_mm is not None:
        dwg.add(_grid_group(dwg, plan, grid_mm))
    maps = _outline_list(outlines)
    if maps:
        g = dwg.g(id="outlines")
        for o in maps:
            g.add(_outline_group(dwg, plan, o, hidden=not show_outlines))
        dwg.add(g)
    return dwg.tostring()


def layer_svg(plan: Plan, n: int, *, grid_mm: float | None = None,
              outline: dict[str, Any] | None = None) -> str:
    """One layer's strokes alone (no ground, no other layers), for projecting.

    Parameters
    ----------
    plan : Plan
    n : int
        Layer number, 1 = the first (widest) layer.
    grid_mm : float, optional
        Add the transfer grid.
    outline : dict, optional
        This layer's outline map, drawn over the strokes (unfilled).

    Raises
    ------
    ValueError
        If ``n`` is not a layer of the plan or the grid spacing is unusable.
    """
    if isinstance(n, bool) or not isinstance(n, int) or not 1 <= n <= len(plan.layers):
        raise ValueError(f"layer must be a number from 1 to {len(plan.layers)}, got {n!r}")
    if grid_mm is not None:
        check_grid(plan, grid_mm)
    dwg = _drawing(plan)
    layer = plan.layers[n - 1]
    dwg.set_desc(title=f"layerplan layer {n} of {len(plan.layers)}: {_f(layer.brush_width_mm)} mm brush")
    dwg.add(_layer_group(dwg, plan, n))
    _add_openings(dwg, plan)
    if grid_mm is not None:
        dwg.add(_grid_group(dwg, plan, grid_mm))
    if outline is not None:
        g = dwg.g(id="outlines")
        g.add(_outline_group(dwg, plan, outline, fill=False))
        dwg.add(g)
    return dwg.tostring()


def outline_map_svg(plan: Plan, outline: dict[str, Any], *, grid_mm: float | None = None,
                    paper_per_wall: float | None = None) -> str:
    """An outline map alone, sized to its container (for embedding in plan.html); with
    ``grid_mm``, the transfer grid drawn faintly over the shapes, under the labels. With
    ``paper_per_wall`` (paper mm per wall mm of the printed map) each paint's areas are filled
    with its hatching pattern (:func:`paint_pattern`) over the tint, so they differ in
    black-and-white print too."""
    dwg = _drawing(plan, responsive=True)
    patterns = None
    if paper_per_wall is not None:
        paints = sorted({a["paint"] for a in outline["areas"]}, key=plan.paint_index().get)
        patterns = _pattern_defs(dwg, plan, paints, paper_per_wall=paper_per_wall)
    dwg.add(dwg.rect(insert=(0, 0), size=(_f(plan.wall_width_mm), _f(plan.wall_height_mm)), fill="#ffffff",
                     stroke=INK, stroke_width=_f(max(plan.wall_width_mm, plan.wall_height_mm) / 500)))
    _add_openings(dwg, plan)
    dwg.add(_outline_group(dwg, plan, outline, grid_mm=grid_mm, patterns=patterns))
    return dwg.tostring()


def picture_svg(plan: Plan, image_href: str) -> str:
    """The picture (a URL or data URI) with the plan's openings hatched over it, sized to its container."""
    dwg = _drawing(plan, responsive=True)
    dwg.add(dwg.image(href=image_href, insert=(0, 0),
                      size=(_f(plan.wall_width_mm), _f(plan.wall_height_mm)),
                      preserveAspectRatio="none"))
    _add_openings(dwg, plan)
    return dwg.tostring()


def grid_over_image_svg(plan: Plan, grid_mm: float, image_href: str) -> str:
    """The picture (a URL or data URI) under a labelled transfer grid, sized to its container."""
    dwg = _drawing(plan, responsive=True)
    dwg.add(dwg.image(href=image_href, insert=(0, 0),
                      size=(_f(plan.wall_width_mm), _f(plan.wall_height_mm)),
                      preserveAspectRatio="none"))
    _add_openings(dwg, plan)
    dwg.add(_grid_group(dwg, plan, grid_mm))
    return dwg.tostring()


# ------------------------------------------------------------------ black-and-white patterns
#: hatching motifs, so areas of different paints differ in black-and-white print too (not by tint
#: alone): (name, element, angle in degrees). Paint k of the palette gets motif k mod the count;
#: beyond that the motifs come again at a coarser spacing (see :func:`paint_pattern`)
PATTERN_MOTIFS = (
    ("plain", None, 0), ("lines", "line", 0), ("lines", "line", 90), ("lines", "line", 45),
    ("lines", "line", 135), ("grid", "grid", 0), ("grid", "grid", 45), ("dots", "dot", 0),
    ("rings", "ring", 0), ("dashes", "dash", 0), ("dashes", "dash", 90),
)
#: one pattern tile, paper mm (fine enough to show in a 3 mm area, coarse enough for a laser printer)
PATTERN_TILE_MM = 2.2
#: hatching line width, paper mm (about the finest line office printers hold; from memory)
PATTERN_LINE_MM = 0.15


def paint_pattern(k: int) -> tuple[str, str | None, float, float]:
    """Pattern of palette position ``k``: (motif name, element, angle, spacing factor).

    Different ``k`` below ``3 * len(PATTERN_MOTIFS)`` give different patterns.
    """
    name, element, angle = PATTERN_MOTIFS[k % len(PATTERN_MOTIFS)]
    return name, element, float(angle), 1.0 + 0.8 * (k // len(PATTERN_MOTIFS))


def _pattern_defs(dwg, plan: Plan, paints, *, paper_per_wall: float) -> dict[str, str]:
    """A ``<pattern>`` per paint (tint of the paint under a hatching motif) in ``dwg``'s defs.

    Sizes are paper mm converted to the drawing's units by ``paper_per_wall``; returns the
    pattern id of each paint (by palette position, so any paint id is safe in an id).
    """
    index = plan.paint_index()
    ids = {}
    for pid in paints:
        k = index[pid]
        name, element, angle, factor = paint_pattern(k)
        t = PATTERN_TILE_MM * factor / paper_per_wall
        lw = PATTERN_LINE_MM * (1.0 + 0.3 * (factor - 1.0)) / paper_per_wall
        pid_ = f"pattern-{k + 1}"
        extra = {"data-paint": pid, "data-motif": f"{name}-{angle:g}-{factor:g}"}
        if angle:
            extra["patternTransform"] = f"rotate({angle:g})"
        pat = dwg.pattern(id=pid_, insert=(0, 0), size=(_f(t), _f(t)), patternUnits="userSpaceOnUse", **extra)
        pat.add(dwg.rect(insert=(0, 0), size=(_f(t), _f(t)), fill=plan.paint(pid).srgb,
                         fill_opacity=str(OUTLINE_FILL_OPACITY)))
        ink = {"stroke": INK, "stroke_width": _f(lw), "stroke_opacity": "0.8"}
        if element == "line":
            pat.add(dwg.line(start=(0, _f(t / 2)), end=(_f(t), _f(t / 2)), **ink))
        elif element == "grid":
            pat.add(dwg.line(start=(0, _f(t / 2)), end=(_f(t), _f(t / 2)), **ink))
            pat.add(dwg.line(start=(_f(t / 2), 0), end=(_f(t / 2), _f(t)), **ink))
        elif element == "dot":
            pat.add(dwg.circle(center=(_f(t / 2), _f(t / 2)), r=_f(t * 0.16), fill=INK, fill_opacity="0.8"))
        elif element == "ring":
            pat.add(dwg.circle(center=(_f(t / 2), _f(t / 2)), r=_f(t * 0.28), fill="none", **ink))
        elif element == "dash":
            pat.add(dwg.line(start=(_f(t * 0.15), _f(t / 2)), end=(_f(t * 0.6), _f(t / 2)), **ink))
        dwg.defs.add(pat)
        ids[pid] = pid_
    return ids


def paint_key_svg(plan: Plan, paints, *, width_mm: float, scale_bar: tuple[float, str] | None = None,
                  paper_per_wall: float = 1.0, brush: tuple[float, str] | None = None) -> str:
    """The key of an enlargement sheet, drawn in paper mm: each paint's id beside its pattern,
    then a scale bar (``(wall mm, words)``) and the brush's width at the sheet's scale."""
    paints = list(paints)
    cell_w, cell_h, gap = 21.0, 9.0, 2.0
    per_row = max(1, int((width_mm + gap) // (cell_w + gap)))
    rows = math.ceil(len(paints) / per_row) if paints else 0
    extra_h = 9.0 if scale_bar or brush else 0.0
    height = rows * (cell_h + gap) + extra_h + 1.0
    dwg = svgwrite.Drawing(size=(f"{_f(width_mm)}mm", f"{_f(height)}mm"),
                           viewBox=f"0 0 {_f(width_mm)} {_f(height)}", profile="full", debug=False)
    pats = _pattern_defs(dwg, plan, paints, paper_per_wall=1.0)
    for i, pid in enumerate(paints):
        x = (i % per_row) * (cell_w + gap)
        y = (i // per_row) * (cell_h + gap) + 0.5
        dwg.add(dwg.rect(insert=(_f(x), _f(y)), size=("11", _f(cell_h)), fill=f"url(#{pats[pid]})",
                         stroke=INK, stroke_width="0.25", **{"data-paint": pid}))
        dwg.add(dwg.text(pid, insert=(_f(x + 12.5), _f(y + cell_h / 2 + 1.3)), font_size="3.8",
                         font_family="sans-serif", font_weight="bold", fill=INK))
    y = rows * (cell_h + gap) + 1.0
    x = 0.0
    if scale_bar:
        wall_mm, words = scale_bar
        length = wall_mm * paper_per_wall
        g = dwg.g(id="scale-bar", stroke=INK, stroke_width="0.3")
        g.add(dwg.line(start=(0, _f(y + 3)), end=(_f(length), _f(y + 3))))
        for xx in (0.0, length):
            g.add(dwg.line(start=(_f(xx), _f(y + 1.5)), end=(_f(xx), _f(y + 4.5))))
        dwg.add(g)
        dwg.add(dwg.text(words, insert=(_f(length + 2), _f(y + 4)), font_size="3", font_family="sans-serif",
                         fill=INK))
        x = length + 2 + 0.62 * 3 * len(words) + 6
    if brush:
        wall_mm, words = brush
        w = wall_mm * paper_per_wall
        dwg.add(dwg.line(start=(_f(x + w / 2), _f(y + 3)), end=(_f(x + 12), _f(y + 3)), stroke=INK,
                         stroke_width=_f(w), stroke_linecap="round", **{"class": "brush-sample"}))
        dwg.add(dwg.text(words, insert=(_f(x + 14 + w / 2), _f(y + 4)), font_size="3", font_family="sans-serif",
                         fill=INK))
    return dwg.tostring()


def _square_name(i: int, j: int) -> str:
    return f"{column_label(i)}{j + 1}"


#: square names on enlargements: text height, paper mm, and inset from the square's corner
SQUARE_NAME_MM, SQUARE_NAME_INSET_MM = 2.6, 0.6


def square_name_boxes(box_mm: tuple[float, float, float, float], grid_mm: float,
                      paper_per_wall: float) -> list[tuple[float, float, float, float]]:
    """Where :func:`enlargement_svg` writes each square's name: (x, y, half width, half height), wall mm."""
    x0, y0, x1, y1 = box_mm
    font = SQUARE_NAME_MM / paper_per_wall
    out = []
    for i in range(math.floor(x0 / grid_mm + 1e-9), math.ceil(x1 / grid_mm - 1e-9)):
        for j in range(math.floor(y0 / grid_mm + 1e-9), math.ceil(y1 / grid_mm - 1e-9)):
            hw = 0.5 * LABEL_EM_PER_CHAR * font * len(_square_name(i, j))
            out.append((max(i * grid_mm, x0) + SQUARE_NAME_INSET_MM / paper_per_wall + hw,
                        max(j * grid_mm, y0) + 0.55 * font, hw, 0.55 * font))
    return out


def area_bounds(outline: dict[str, Any]) -> np.ndarray:
    """(N, 4) float: each area's outside contour's bounding box (x0, y0, x1, y1), mm of wall."""
    out = np.zeros((len(outline["areas"]), 4))
    for k, a in enumerate(outline["areas"]):
        pts = np.asarray(a["contours_mm"][0], dtype=float)
        out[k] = pts[:, 0].min(), pts[:, 1].min(), pts[:, 0].max(), pts[:, 1].max()
    return out


def areas_meeting(bounds: np.ndarray, box_mm: tuple[float, float, float, float]) -> list[int]:
    """Indices of the areas whose bounding box (:func:`area_bounds`) meets ``box_mm``."""
    x0, y0, x1, y1 = box_mm
    hit = (bounds[:, 2] >= x0) & (bounds[:, 0] <= x1) & (bounds[:, 3] >= y0) & (bounds[:, 1] <= y1)
    return np.flatnonzero(hit).tolist()


def enlargement_svg(plan: Plan, outline: dict[str, Any], *, box_mm: tuple[float, float, float, float],
                    paper_per_wall: float, grid_mm: float, labels: Sequence[dict[str, Any]],
                    bounds: np.ndarray | None = None) -> str:
    """Part of a layer's outline map at a readable scale, for an enlargement sheet.

    Parameters
    ----------
    plan : Plan
    outline : dict
        The layer's outline map (:func:`layerplan.outlines.layer_outlines`).
    box_mm : (x0, y0, x1, y1)
        The part of the wall shown, mm of wall.
    paper_per_wall : float
        Paper mm per wall mm: the document is ``(x1 - x0) · paper_per_wall`` mm wide, so it
        prints at scale.
    grid_mm : float
        Transfer-grid square; its lines are drawn and each square named in its corner.
    labels : list of dict
        Labels placed by :func:`layerplan.outlines.place_labels_around`: ``area`` (index into
        ``outline["areas"]``), ``x``, ``y`` (the label, wall mm), ``moved`` (drawn away from
        its area, with a leader line to the area's label point), ``font_mm``, ``half_w_mm``,
        ``half_h_mm``; for a part of an area counted on another sheet, ``continued`` (set in
        italics), ``anchor_mm`` (its point here) and ``room_mm``.
    bounds : (N, 4) array, optional
        :func:`area_bounds` of the outline, if the caller has it already.

    Returns
    -------
    svg : str

    References
    ----------
    W3C SVG 1.1 (Second Edition), 2011: 14.3 (clipping paths), 13.3 (patterns).
    """
    x0, y0, x1, y1 = box_mm
    w, h = x1 - x0, y1 - y0
    s = paper_per_wall
    dwg = svgwrite.Drawing(size=(f"{_f(w * s)}mm", f"{_f(h * s)}mm"),
                           viewBox=f"{_f(x0)} {_f(y0)} {_f(w)} {_f(h)}", profile="full", debug=False)
    areas = outline["areas"]
    n = int(outline["layer"])
    inside = areas_meeting(area_bounds(outline) if bounds is None else bounds, box_mm)
    pats = _pattern_defs(dwg, plan, sorted({areas[k]["paint"] for k in inside}, key=plan.paint_index().get),
                         paper_per_wall=s)
    clip = dwg.defs.add(dwg.clipPath(id="clip"))
    clip.add(dwg.rect(insert=(_f(x0), _f(y0)), size=(_f(w), _f(h))))
    dwg.add(dwg.rect(insert=(_f(x0), _f(y0)), size=(_f(w), _f(h)), fill="#ffffff"))
    _add_openings(dwg, plan, box_mm=box_mm)
    shapes = dwg.g(id=f"areas-{n:02d}", stroke=INK, stroke_width=_f(0.22 / s), stroke_linejoin="round",
                   clip_path="url(#clip)")
    for k in inside:
        a = areas[k]
        d = " ".join("M" + " ".join(f"{_f(x)},{_f(y)}" for x, y in c) + "Z" for c in a["contours_mm"])
        shapes.add(dwg.path(d=d, fill=f"url(#{pats[a['paint']]})",
                            **{"fill-rule": "evenodd", "data-paint": a["paint"], "data-area": str(k)}))
    dwg.add(shapes)
    # the transfer grid, with each square's name in its top left corner
    g = dwg.g(id="grid", **{"data-spacing-mm": _f(grid_mm)})
    lines = dwg.g(stroke=INK, stroke_width=_f(0.4 / s), stroke_opacity="0.75")
    i0, i1 = math.floor(x0 / grid_mm + 1e-9), math.ceil(x1 / grid_mm - 1e-9)
    j0, j1 = math.floor(y0 / grid_mm + 1e-9), math.ceil(y1 / grid_mm - 1e-9)
    for i in range(i0, i1 + 1):
        x = min(max(i * grid_mm, x0), x1)
        lines.add(dwg.line(start=(_f(x), _f(y0)), end=(_f(x), _f(y1))))
    for j in range(j0, j1 + 1):
        y = min(max(j * grid_mm, y0), y1)
        lines.add(dwg.line(start=(_f(x0), _f(y)), end=(_f(x1), _f(y))))
    g.add(lines)
    font = SQUARE_NAME_MM / s
    halos = _halo_group(dwg)
    names = dwg.g(fill=INK, font_size=_f(font), font_family="sans-serif", font_weight="bold",
                  **{"class": "square-name"})
    for i in range(i0, i1):
        for j in range(j0, j1):
            nx_, ny_ = max(i * grid_mm, x0) + SQUARE_NAME_INSET_MM / s, max(j * grid_mm, y0) + font * 0.9
            _halo(dwg, halos, _square_name(i, j), nx_, ny_, font, anchor="start")
            names.add(dwg.text(_square_name(i, j), insert=(_f(nx_), _f(ny_))))
    g.add(halos)
    g.add(names)
    dwg.add(g)
    line = 0.3 / s
    hints = dwg.g(stroke=INK, stroke_width=_f(line), stroke_linecap="round", fill="none", **{"class": "directions"})
    leaders = dwg.g(stroke=INK, stroke_width=_f(0.18 / s), fill="none", **{"class": "leaders"})
    halos = _halo_group(dwg)
    texts = dwg.g(fill=INK, font_family="sans-serif", font_weight="bold", **{"text-anchor": "middle"})
    for lab in labels:
        a = areas[lab["area"]]
        ax, ay = lab.get("anchor_mm") or a["label_mm"]
        room = lab.get("room_mm", a["label_room_mm"])
        x, y, f = lab["x"], lab["y"], lab["font_mm"]
        if a["direction_deg"] is not None and a["hint"] != "mixed":
            # a short line through the area along its strokes (beside the label when it sits there)
            t = math.radians(a["direction_deg"])
            c, sn = math.cos(t), math.sin(t)
            half = max(room, 1.2 / s)
            if lab["moved"]:
                hints.add(dwg.line(start=(_f(ax - half * c), _f(ay - half * sn)),
                                   end=(_f(ax + half * c), _f(ay + half * sn))))
            else:
                bw, bh = lab["half_w_mm"], lab["half_h_mm"]
                gap = min(bw / abs(c) if abs(c) > 1e-9 else math.inf, bh / abs(sn) if abs(sn) > 1e-9 else math.inf)
                gap += 0.25 * f
                half = max(half, gap + 0.8 * f)
                for sign in (-1.0, 1.0):
                    hints.add(dwg.line(start=(_f(ax + sign * gap * c), _f(ay + sign * gap * sn)),
                                       end=(_f(ax + sign * half * c), _f(ay + sign * half * sn))))
        if lab["moved"]:
            leaders.add(dwg.line(start=(_f(ax), _f(ay)), end=(_f(x), _f(y))))
            leaders.add(dwg.circle(center=(_f(ax), _f(ay)), r=_f(0.35 / s), fill=INK, stroke="none"))
        _halo(dwg, halos, str(a["paint"]), x, y + f * 0.35, f)
        extra = {"class": "area-label", "data-layer": str(n), "data-area": str(lab["area"])}
        if lab.get("continued"):  # the area is counted on the neighbouring sheet holding most of it
            extra.update({"class": "area-label continued", "font-style": "italic"})
        texts.add(dwg.text(a["paint"], insert=(_f(x), _f(y + f * 0.35)), font_size=_f(f), **extra))
    dwg.add(hints)
    dwg.add(leaders)
    dwg.add(halos)
    dwg.add(texts)
    dwg.add(dwg.rect(insert=(_f(x0), _f(y0)), size=(_f(w), _f(h)), fill="none", stroke=INK,
                     stroke_width=_f(0.5 / s)))
    return dwg.tostring()


def grid_part_svg(plan: Plan, grid_mm: float, image_href: str, box_mm: tuple[float, float, float, float], *,
                  image_box_mm: tuple[float, float, float, float] | None = None) -> str:
    """A block of transfer-grid squares over that part of the picture, each square named in its
    corner, sized to its container. The picture covers ``image_box_mm`` (default ``box_mm``)."""
    x0, y0, x1, y1 = box_mm
    ix0, iy0, ix1, iy1 = image_box_mm or box_mm
    w, h = x1 - x0, y1 - y0
    dwg = svgwrite.Drawing(size=("100%", "100%"), viewBox=f"{_f(x0)} {_f(y0)} {_f(w)} {_f(h)}", profile="full",
                           debug=False)
    dwg.attribs.pop("height", None)
    dwg.add(dwg.image(href=image_href, insert=(_f(ix0), _f(iy0)), size=(_f(ix1 - ix0), _f(iy1 - iy0)),
                      preserveAspectRatio="none"))
    _add_openings(dwg, plan, box_mm=box_mm)
    g = dwg.g(id="grid", **{"data-spacing-mm": _f(grid_mm)})
    lines = dwg.g(stroke=INK, stroke_width=_f(max(w, h) / 500.0), stroke_opacity="0.85")
    i0, i1 = round(x0 / grid_mm), math.ceil(x1 / grid_mm - 1e-9)
    j0, j1 = round(y0 / grid_mm), math.ceil(y1 / grid_mm - 1e-9)
    for i in range(i0, i1 + 1):
        x = min(i * grid_mm, x1)
        lines.add(dwg.line(start=(_f(x), _f(y0)), end=(_f(x), _f(y1))))
    for j in range(j0, j1 + 1):
        y = min(j * grid_mm, y1)
        lines.add(dwg.line(start=(_f(x0), _f(y)), end=(_f(x1), _f(y))))
    g.add(lines)
    font = min(grid_mm * 0.22, max(w, h) / 30.0)
    halos = _halo_group(dwg)
    names = dwg.g(fill=INK, font_size=_f(font), font_family="sans-serif", **{"class": "square-name"})
    for i in range(i0, i1):
        for j in range(j0, j1):
            at = (i * grid_mm + font * 0.3, j * grid_mm + font * 1.05)
            _halo(dwg, halos, _square_name(i, j), *at, font, anchor="start")
            names.add(dwg.text(_square_name(i, j), insert=(_f(at[0]), _f(at[1]))))
    g.add(halos)
    g.add(names)
    dwg.add(g)
    return dwg.tostring()


# ------------------------------------------------------------------ panels painted off the wall
def panel_key_svg(plan: Plan, panels, *, highlight: int | None = None) -> str:
    """The key map of panels: the wall with every panel outlined and numbered (``highlight`` filled), the
    openings hatched, sized to its container."""
    dwg = _drawing(plan, responsive=True)
    w, h = plan.wall_width_mm, plan.wall_height_mm
    side = max(w, h)
    dwg.add(dwg.rect(insert=(0, 0), size=(_f(w), _f(h)), fill="#ffffff", stroke=INK, stroke_width=_f(side / 300)))
    _add_openings(dwg, plan)
    g = dwg.g(id="panels", fill="none", stroke=INK, stroke_width=_f(side / 500))
    labels = dwg.g(fill=INK, font_family="sans-serif", **{"text-anchor": "middle"})
    for p in panels:
        extra = {"class": "panel", "data-panel": str(p.number)}
        if p.number == highlight:
            extra.update({"fill": "#ffd54a", "fill-opacity": "0.6", "class": "panel this"})
        g.add(dwg.rect(insert=(_f(p.x_mm), _f(p.y_mm)), size=(_f(p.width_mm), _f(p.height_mm)), **extra))
        font = min(p.width_mm, p.height_mm) * 0.3
        at = (_f(p.x_mm + p.width_mm / 2), _f(p.y_mm + p.height_mm / 2 + font * 0.35))
        labels.add(dwg.text(str(p.number), insert=at, font_size=_f(font)))
    dwg.add(g)
    dwg.add(labels)
    return dwg.tostring()


def panel_svg(plan: Plan, grid_mm: float, image_href: str, box_mm: tuple[float, float, float, float], *,
              image_box_mm: tuple[float, float, float, float], overlaps) -> str:
    """One panel: its part of the picture under the transfer grid, the bands it shares with its neighbours
    shaded and numbered with the neighbour's number, its openings hatched; sized to its container."""
    x0, y0, x1, y1 = box_mm
    w, h = x1 - x0, y1 - y0
    side = max(w, h)
    text = grid_part_svg(plan, grid_mm, image_href, box_mm, image_box_mm=image_box_mm)
    extra = svgwrite.Drawing(profile="full", debug=False)
    g = extra.g(id="overlaps", **{"class": "overlaps"})
    for other, (a, b, c, d) in overlaps:
        g.add(extra.rect(insert=(_f(a), _f(b)), size=(_f(c - a), _f(d - b)), fill="#ffffff", fill_opacity="0.55",
                         stroke=INK, stroke_width=_f(side / 400), stroke_dasharray=f"{_f(side / 60)},{_f(side / 120)}",
                         **{"class": "overlap", "data-neighbour": str(other)}))
        font = min(c - a, d - b, side / 12) * 0.6
        g.add(extra.text(f"→ {other}", insert=(_f((a + c) / 2), _f((b + d) / 2 + font * 0.35)), font_size=_f(font),
                         fill=INK, font_family="sans-serif", **{"text-anchor": "middle"}))
    g.add(extra.rect(insert=(_f(x0), _f(y0)), size=(_f(w), _f(h)), fill="none", stroke=INK,
                     stroke_width=_f(side / 250)))
    return text.replace("</svg>", g.tostring() + "</svg>")
