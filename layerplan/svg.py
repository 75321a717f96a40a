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
    g = dwg.g(id="ground", **{"data-paint": plan.ground})
    g.set_desc(title=f"Ground: {plan.ground} over the whole surface")
    g.add(dwg.rect(insert=(0, 0), size=(_f(plan.wall_width_mm), _f(plan.wall_height_mm)),
                   fill=plan.paint(plan.ground).srgb))
    return g


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
    labels = dwg.g(fill=INK, font_size=_f(font), font_family="sans-serif", stroke="#ffffff",
                   stroke_width=_f(font * 0.18), **{"paint-order": "stroke", "text-anchor": "middle"})
    if faint:
        labels["opacity"] = str(FAINT_GRID_OPACITY[1])
        g["class"] = "faint"
    for i in range(nx):
        cx = (i + 0.5) * grid_mm if (i + 1) * grid_mm <= w else (i * grid_mm + w) / 2
        labels.add(dwg.text(column_label(i), insert=(_f(cx), _f(font * 1.1))))
    for j in range(ny):
        cy = (j + 0.5) * grid_mm if (j + 1) * grid_mm <= h else (j * grid_mm + h) / 2
        labels.add(dwg.text(str(j + 1), insert=(_f(font * 0.8), _f(cy + font * 0.35))))
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
                   grid_mm: float | None = None):
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
        shapes.add(dwg.path(d=d, fill=colours[a["paint"]] if fill else "none",
                            fill_opacity=str(OUTLINE_FILL_OPACITY) if fill else "1",
                            **{"fill-rule": "evenodd", "data-paint": a["paint"]}))
    g.add(shapes)
    if grid_mm is not None:  # over the shapes, under the labels
        g.add(_grid_group(dwg, plan, grid_mm, faint=True))
    hints = dwg.g(stroke=INK, stroke_width=_f(line * 2.5), stroke_linecap="round", fill="none")
    labels = dwg.g(fill=INK, font_family="sans-serif", stroke="#ffffff",
                   **{"paint-order": "stroke", "text-anchor": "middle"})
    for a in outline["areas"]:
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
        labels.add(dwg.text(a["paint"], insert=(_f(x), _f(y + font * 0.35)), font_size=_f(font),
                            stroke_width=_f(font * 0.2)))
    g.add(hints)
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
    if grid_mm is not None:
        dwg.add(_grid_group(dwg, plan, grid_mm))
    if outline is not None:
        g = dwg.g(id="outlines")
        g.add(_outline_group(dwg, plan, outline, fill=False))
        dwg.add(g)
    return dwg.tostring()


def outline_map_svg(plan: Plan, outline: dict[str, Any], *, grid_mm: float | None = None) -> str:
    """An outline map alone, sized to its container (for embedding in plan.html); with
    ``grid_mm``, the transfer grid drawn faintly over the shapes, under the labels."""
    dwg = _drawing(plan, responsive=True)
    dwg.add(dwg.rect(insert=(0, 0), size=(_f(plan.wall_width_mm), _f(plan.wall_height_mm)), fill="#ffffff",
                     stroke=INK, stroke_width=_f(max(plan.wall_width_mm, plan.wall_height_mm) / 500)))
    dwg.add(_outline_group(dwg, plan, outline, grid_mm=grid_mm))
    return dwg.tostring()


def grid_over_image_svg(plan: Plan, grid_mm: float, image_href: str) -> str:
    """The picture (a URL or data URI) under a labelled transfer grid, sized to its container."""
    dwg = _drawing(plan, responsive=True)
    dwg.add(dwg.image(href=image_href, insert=(0, 0),
                      size=(_f(plan.wall_width_mm), _f(plan.wall_height_mm)),
                      preserveAspectRatio="none"))
    dwg.add(_grid_group(dwg, plan, grid_mm))
    return dwg.tostring()
