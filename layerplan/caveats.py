"""Caveats: what a plan cannot do as well as it was asked, each said with its fix.

They travel in plan.json's optional top-level ``warnings`` list (see :mod:`layerplan.plan`);
the command line prints them and the web plan page shows them. Pure functions of plain
data: the pipeline, the CLI and tests call the same ones.

The one caveat so far is the working raster's: the planner judges a stroke by the pixels
it covers, so it needs the narrowest brush to span at least
:data:`~layerplan.settings.MIN_PX_PER_BRUSH` pixels (our rule, see
:func:`~layerplan.settings.choose_mm_per_px`). The raster is capped at
:data:`~layerplan.settings.MAX_RASTER_PX` by default, so on a big wall a fine brush can be
narrower than a pixel: its strokes are still placed, but on a picture too coarse to show
what they paint.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from typing import Any

from .settings import HARD_MAX_RASTER_PX, MAX_RASTER_PX, MIN_PX_PER_BRUSH, choose_mm_per_px, raster_size

#: plan.json ``warnings[i].kind`` of a brush that spans fewer pixels than the rule asks
COARSE_RASTER = "coarse_raster"


def _pixels(px: int) -> str:
    return f"{px / 1e6:.1f} megapixels" if px >= 100_000 else f"{px:,} pixels"


def _limit(px: int) -> str:
    return f"{px / 1e6:g}-megapixel"


def _and(items: Sequence[str]) -> str:
    return items[0] if len(items) == 1 else ", ".join(items[:-1]) + " and " + items[-1]


def raster_warnings(size, brushes_mm: Sequence[float], *, pixel_given: bool) -> list[dict[str, Any]]:
    """The warning for brushes the working raster leaves under the pixel rule, if any.

    Parameters
    ----------
    size : layerplan.options.WorkingSize
        The wall and working raster (``wall_width_mm``, ``wall_height_mm``, ``mm_per_px``,
        ``width_px``, ``height_px``).
    brushes_mm : sequence of float
        The plan's brush widths.
    pixel_given : bool
        Whether the painter set the pixel size (``--pixel-mm``); otherwise it was chosen,
        and the raster cap is what made it coarse.

    Returns
    -------
    list of dict
        Empty when every brush spans :data:`~layerplan.settings.MIN_PX_PER_BRUSH` pixels: a
        brush passes when the pixel is no coarser than the one
        :func:`~layerplan.settings.choose_mm_per_px` would choose for it without the cap
        (rounded up to 0.01 mm as there, so a plan on the default pixel never warns without
        need). Otherwise one warning, as plan.json holds it::

            {"kind": "coarse_raster", "brushes_mm": [12.0, 25.0], "px_per_brush": [0.98, 2.04],
             "mm_per_px": 12.25, "pixel_mm_needed": 4.0, "raster_px_needed": [7500, 2500],
             "narrowest_brush_mm_needed": 37, "message": "...", "cause": "...", "fix": "..."}

        The brushes under the rule narrowest first; what the narrowest needs (a pixel, the
        raster it makes, or else the narrowest brush this raster allows); whole sentences for
        people. A raster over the limit of an explicit pixel size
        (:data:`~layerplan.settings.HARD_MAX_RASTER_PX`) is not offered as a fix: the finest
        allowed pixel is, with what it gives.
    """
    w, h, s = size.wall_width_mm, size.wall_height_mm, size.mm_per_px
    under = [b for b in sorted(set(float(b) for b in brushes_mm))
             if s > choose_mm_per_px(w, h, b, max_px=math.inf) + 1e-9]
    if not under:
        return []
    narrowest = under[0]
    wanted = choose_mm_per_px(w, h, narrowest, max_px=math.inf)
    need_w, need_h = raster_size(w, h, wanted)
    wider = math.ceil(MIN_PX_PER_BRUSH * s - 1e-9)
    spans = [f"{b / s:.2f}" for b in under]
    names = _and([f"{b:g} mm" for b in under])
    message = (f"The {names} brush{'es' if len(under) > 1 else ''} span{'' if len(under) > 1 else 's'} only "
               f"{_and(spans)} working pixels (at least {MIN_PX_PER_BRUSH:g} are needed): the planner cannot see "
               "the detail such a brush paints, so where its strokes go and what they add to the picture are rough.")
    if pixel_given:
        cause = f"The pixel size was set to {s:g} mm (--pixel-mm)."
    else:
        cause = (f"The working raster is capped at {MAX_RASTER_PX / 1e6:g} megapixels by default ({size.width_px} × "
                 f"{size.height_px} px here), so one pixel is {s:g} mm of wall: the raster limit is what makes it "
                 "this coarse.")
    now = size.width_px * size.height_px
    if need_w * need_h <= HARD_MAX_RASTER_PX:
        finer = (f"set the pixel size to {wanted:g} mm (--pixel-mm {wanted:g}, the form's Pixel size): a {need_w} × "
                 f"{need_h} px raster ({_pixels(need_w * need_h)}, {need_w * need_h / now:.1f} times the pixels of "
                 "now, and about that much more planning time)")
    else:
        # the finest pixel an explicit --pixel-mm may ask for on this wall (options.check_raster's limit)
        finest = math.ceil(math.sqrt(w * h / HARD_MAX_RASTER_PX) * 100.0 - 1e-9) / 100.0
        while math.prod(raster_size(w, h, finest)) > HARD_MAX_RASTER_PX:
            finest = round(finest + 0.01, 2)
        finer = (f"a {wanted:g} mm pixel would need a {need_w} × {need_h} px raster ({_pixels(need_w * need_h)}), "
                 f"over the {_limit(HARD_MAX_RASTER_PX)} limit")
        if finest < s:
            finer += (f"; the finest allowed, --pixel-mm {finest:g}, makes the {narrowest:g} mm brush "
                      f"{narrowest / finest:.2f} px wide")
    fix = (f"To fix it, {finer}; or use no brush narrower than {wider} mm (--brushes), which spans "
           f"{MIN_PX_PER_BRUSH:g} pixels of this raster.")
    return [{"kind": COARSE_RASTER, "brushes_mm": under, "px_per_brush": [round(b / s, 2) for b in under],
             "mm_per_px": s, "pixel_mm_needed": wanted, "raster_px_needed": [need_w, need_h],
             "narrowest_brush_mm_needed": wider, "message": message, "cause": cause, "fix": fix}]


def plan_warnings(plan) -> list[dict[str, Any]]:
    """The warnings a plan carries (plan.json ``warnings``), those people can read.

    A plan file from elsewhere may hold anything there: only entries with a text
    ``message`` are kept, and ``cause`` and ``fix`` only when they are text too.
    """
    found = plan.extra.get("warnings")
    if not isinstance(found, list):
        return []
    return [{"kind": w.get("kind"), "message": w["message"],
             **{k: w[k] for k in ("cause", "fix") if isinstance(w.get(k), str)}}
            for w in found if isinstance(w, dict) and isinstance(w.get("message"), str)]

