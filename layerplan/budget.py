"""Fit a plan to the time or strokes there are: ``--hours H`` (with ``--crew N``) or ``--strokes N``.

The planner's one control of how much work a plan is, the stroke cost (ΔE00 a stroke must remove per
brush-width square, :class:`layerplan.settings.Settings`), is searched for the plan that comes
closest to the budget: fewer strokes for a higher cost, more for a lower. The time of a plan is its
work schedule's hours at the wall (:func:`layerplan.schedule.work_schedule`: the printed plan's time
rules, with the crew working side by side in bands of the wall), so the budget is met by the same
figures the schedule sheet prints.

The search brackets the budget by quartering or quadrupling the stroke cost from the one given, then
halves the bracket on a log scale (bisection) until a plan is within :data:`TOLERANCE` of the budget or
:data:`MAX_PLANS` plans have been made; the plan closest to the budget is kept (one at or under it when
two are as close). Each try is a whole plan, so fitting takes a few plans' time. Some time cannot be
cut by the stroke cost (the ground, and a wash per paint run): a budget under it is reported as not met,
with the plan of fewest strokes tried.

References
----------
R. L. Burden, J. D. Faires, "Numerical Analysis", 9th ed., 2011, §2.1 (the bisection method).
"""

from __future__ import annotations

import dataclasses
import math
from typing import Any, Callable

import numpy as np

from .options import MAX_STROKE_COST as OPTION_MAX_STROKE_COST
from .plan import Plan
from .settings import Settings

#: a plan within this share of the budget ends the search (our choice: a rule of thumb's own error is larger)
TOLERANCE = 0.02
#: most plans made while fitting (each is a whole plan)
MAX_PLANS = 12
#: the stroke costs searched (ΔE00 per brush-width square): from nearly every stroke to the highest the
#: option takes (:data:`layerplan.options.MAX_STROKE_COST`, where next to no stroke is worth painting)
MIN_STROKE_COST, MAX_STROKE_COST = 0.05, OPTION_MAX_STROKE_COST
#: the bracket grows or shrinks by this factor a step
_STEP = 4.0


def _noop(fraction: float, message: str) -> None:
    pass


def plan_hours(plan: Plan, *, crew: int = 1, quantity_options: dict[str, Any] | None = None) -> float:
    """Hours of the crew at the wall for a plan, by its work schedule (painters side by side)."""
    from .quantities import paint_use
    from .schedule import work_schedule

    q = {k: v for k, v in (quantity_options or {}).items()
         if k in ("coverage_m2_per_litre", "waste", "ground_coats", "stroke_coats")}
    use = paint_use(plan, **q)
    return float(work_schedule(plan, use, crew=crew)["painting_hours"])


def fit_to_budget(image: np.ndarray, settings: Settings, *, hours: float | None = None, strokes: int | None = None,
                  crew: int = 1, quantity_options: dict[str, Any] | None = None, progress=None,
                  make_plan: Callable | None = None) -> Plan:
    """The plan of ``image`` whose work comes closest to a budget of hours or strokes.

    Parameters
    ----------
    image : (h, w, 3) uint8 array, sRGB
    settings : Settings
        Everything but the stroke cost, which is searched (its value is where the search starts).
    hours : float, optional, keyword-only
        Hours of the crew at the wall (> 0): the schedule's ``painting_hours`` with ``crew`` painters.
    strokes : int, optional, keyword-only
        Strokes (>= 1), instead of ``hours``.
    crew : int, keyword-only
        Painters, for ``hours``.
    quantity_options : dict, optional, keyword-only
        Paint-use options (``ground_coats``, ``stroke_coats``...) the schedule is worked out with.
    progress : callable(fraction, message), optional
    make_plan : callable, optional
        The planner (default :func:`layerplan.pipeline.make_plan`).

    Returns
    -------
    Plan
        The closest plan, with ``extra["budget"]`` saying how close it came: ``{"hours" or "strokes": asked,
        "crew", "achieved_hours" or "achieved_strokes", "within" (share off the budget, + over, - under),
        "met" (within 5 %), "stroke_cost", "plans_tried"}``; its ``settings.stroke_cost`` is the one used.

    Raises
    ------
    ValueError
        If neither or both budgets are given, or one is out of range (the message names it).

    References
    ----------
    Burden & Faires (2011), §2.1 (bisection).
    """
    from .schedule import check_options

    if (hours is None) == (strokes is None):
        raise ValueError("give one budget: hours (with crew) or strokes")
    if hours is not None and (isinstance(hours, bool) or not isinstance(hours, (int, float))
                              or not math.isfinite(hours) or hours <= 0):
        raise ValueError(f"hours must be a number > 0, got {hours!r}")
    if strokes is not None and (isinstance(strokes, bool) or not isinstance(strokes, int) or strokes < 1):
        raise ValueError(f"strokes must be a whole number >= 1, got {strokes!r}")
    check_options(crew=crew)
    if make_plan is None:
        from .pipeline import make_plan
    report = progress or _noop
    target = float(hours if hours is not None else strokes)
    tried: dict[float, tuple[float, Plan]] = {}

    def measure(cost: float) -> float:
        cost = float(min(MAX_STROKE_COST, max(MIN_STROKE_COST, cost)))
        if cost not in tried:
            k = len(tried)

            def sub(fraction, message, k=k):
                report(min(0.99, (k + fraction) / MAX_PLANS), f"budget, plan {k + 1}: {message}")

            plan = make_plan(image, dataclasses.replace(settings, stroke_cost=cost), progress=sub)
            got = (plan_hours(plan, crew=crew, quantity_options=quantity_options) if hours is not None
                   else float(plan.stroke_count()))
            tried[cost] = (got, plan)
        return tried[cost][0]

    def close(cost: float) -> bool:
        return abs(tried[cost][0] - target) <= TOLERANCE * target

    # bracket: more work at lo (lower cost), less at hi; measure(lo) >= target >= measure(hi)
    c = float(min(MAX_STROKE_COST, max(MIN_STROKE_COST, settings.stroke_cost)))
    lo = hi = c
    if measure(c) > target:
        while measure(hi) > target and hi < MAX_STROKE_COST and len(tried) < MAX_PLANS and not close(hi):
            lo, hi = hi, min(MAX_STROKE_COST, hi * _STEP)
    else:
        while measure(lo) < target and lo > MIN_STROKE_COST and len(tried) < MAX_PLANS and not close(lo):
            hi, lo = lo, max(MIN_STROKE_COST, lo / _STEP)
    bracketed = measure(lo) >= target >= measure(hi)
    while bracketed and len(tried) < MAX_PLANS and not any(close(k) for k in tried) and hi / lo > 1.0001:
        mid = math.sqrt(lo * hi)
        if measure(mid) > target:
            lo = mid
        else:
            hi = mid
    # the closest; of two as close, the one at or under the budget
    best = min(tried, key=lambda k: (abs(tried[k][0] - target), tried[k][0] > target))
    got, plan = tried[best]
    within = (got - target) / target
    key = "hours" if hours is not None else "strokes"
    record = {key: round(target, 3) if hours is not None else int(target),
              **({"crew": int(crew)} if hours is not None else {}),
              f"achieved_{key}": round(got, 3) if hours is not None else int(got),
              "within": round(within, 4), "met": abs(within) <= 0.05, "stroke_cost": round(best, 4),
              "plans_tried": len(tried)}
    report(1.0, "plan ready" if record["met"] else "plan ready (the budget could not be met closely)")
    return dataclasses.replace(plan, extra={**plan.extra, "budget": record})


def budget_words(record: dict[str, Any]) -> str:
    """How close a fitted plan came to its budget, in a sentence (the command line prints it)."""
    if "hours" in record:
        asked, got, what = record["hours"], record["achieved_hours"], f"hours at the wall for {record['crew']}"
        text = f"{got:g} {what} (asked {asked:g})"
    else:
        asked, got = record["strokes"], record["achieved_strokes"]
        text = f"{got} strokes (asked {asked})"
    share = f"{abs(record['within']) * 100:.1f} % {'over' if record['within'] > 0 else 'under'}"
    verdict = "met" if record["met"] else "NOT met"
    return (f"budget {verdict}: {text}, {share}, at stroke cost {record['stroke_cost']:g} after "
            f"{record['plans_tried']} plans")
