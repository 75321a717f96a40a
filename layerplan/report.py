"""plan.html: the printable plan a painter takes to the wall and to the paint shop.

One self-contained HTML file: pictures embedded as data URIs, maps as inline SVG, CSS
inline (``static/sheet.css``). Printing gives one section per sheet; every section is laid
out to fit the printable area both A4 (210 × 297 mm) and US Letter (215.9 × 279.4 mm)
share, so the same file prints on either.

Sections: cover, paint card, shopping list, brushes and time, transfer grid (and its
parts when too dense for one sheet), one sheet per layer each followed by its
enlargements, safety. What they say is :func:`layerplan.sheets.build_sheets`; how it
is laid out is the Jinja2 templates in ``templates/sheets/`` (autoescaped). No Flask is
needed, so the command line renders the same file as the web app.

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

from functools import lru_cache
from typing import Any, Mapping

import numpy as np

from .resources import static_dir, template_dir
from .sheets import (  # noqa: F401  (the names plan.html's readers have always imported from here)
    GRID_MM,
    GRID_MM_SMALL,
    GRID_MM_SMALL_US,
    GRID_MM_US,
    PAINT_CHANGE_SECONDS,
    SECONDS_PER_STROKE,
    STROKE_MM_PER_SECOND,
    Sheets,
    build_sheets,
    default_grid_mm,
    layer_time_s,
)
from .plan import Plan

#: the printed plan's template, under :func:`layerplan.resources.template_dir`
TEMPLATE = "sheets/plan.html"
#: the printed plan of a sheet or board for a class (layerplan.sheets.ClassroomSheets)
CLASSROOM_TEMPLATE = "sheets/classroom_plan.html"
#: its style sheet, under :func:`layerplan.resources.static_dir`, inlined into every plan.html
STYLESHEET = "sheet.css"


@lru_cache(maxsize=1)
def environment():
    """The Jinja2 environment of the printed sheets: autoescaped, undefined names are errors."""
    from jinja2 import Environment, FileSystemLoader, StrictUndefined

    return Environment(loader=FileSystemLoader(str(template_dir())), autoescape=True,
                       undefined=StrictUndefined, trim_blocks=True, lstrip_blocks=True,
                       keep_trailing_newline=True)


def render_sheets(sheets: Sheets) -> str:
    """Lay out :class:`~layerplan.sheets.Sheets` as one self-contained HTML document."""
    from markupsafe import Markup

    css = (static_dir() / STYLESHEET).read_text(encoding="utf-8")
    template = CLASSROOM_TEMPLATE if getattr(sheets, "classroom", None) is not None else TEMPLATE
    return environment().get_template(template).render(sheets=sheets, css=Markup(css))


def plan_html(
    plan: Plan,
    *,
    images: Mapping[str, Any] | None = None,
    grid_mm: float | None = None,
    outlines: list[dict[str, Any]] | None = None,
    paint_use: dict[str, Any] | None = None,
    title: str | None = None,
    steps: list[np.ndarray] | None = None,
    paper: str = "a4",
    canvases: list[np.ndarray] | None = None,
    enlargements_per_layer: int | None = None,
    schedule: dict[str, Any] | None = None,
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
    paper : str
        ``"a4"``, ``"letter"``, ``"a3"`` or ``"tabloid"`` (:data:`layerplan.sheets.PAPERS`).
    canvases : list of (H, W) int arrays, optional
        Each layer alone (:func:`layerplan.outlines.layer_canvas`); made if missing.
    enlargements_per_layer : int, optional
        Most enlargement sheets of one layer; default
        :data:`layerplan.sheets.MAX_ENLARGEMENTS_PER_LAYER`.
    schedule : dict, optional
        The work schedule (:func:`layerplan.schedule.work_schedule`): adds the day-by-day sheet.

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
    return render_sheets(build_sheets(plan, images=images, grid_mm=grid_mm, outlines=outlines,
                                      paint_use=paint_use, title=title, steps=steps, paper=paper,
                                      canvases=canvases, schedule=schedule, **({} if enlargements_per_layer is None else
                                                            {"enlargements_per_layer": enlargements_per_layer})))
