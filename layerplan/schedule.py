"""The work schedule: crew-hours, days, who paints which part of the wall, and when.

Built from the same rules of thumb as the printed plan's time estimate (:mod:`layerplan.sheets`;
each from memory, a rough guide that a painter should check against their own pace):

* a stroke takes :data:`~layerplan.sheets.SECONDS_PER_STROKE` to load, place and lift the brush,
  plus the brush's travel at :data:`~layerplan.sheets.STROKE_MM_PER_SECOND`, both again for each
  further coat of that stroke (from memory);
* each run of one paint costs :data:`~layerplan.sheets.PAINT_CHANGE_SECONDS` to wash out and reload
  (from memory), for every painter who paints in that run;
* the ground is rolled at :data:`~layerplan.sheets.GROUND_M2_PER_HOUR` per coat (from memory,
  common practice for a roller on a wall).

And the schedule's own:

* a painter paints :data:`HOURS_PER_DAY` hours a day at the wall (from memory: an eight-hour day less
  setting up, breaks and washing up);
* acrylic wall paint is dry enough to paint over after about :data:`DRYING_HOURS` hours (common
  practice, from memory: makers say 2–4 h at 20 °C; longer when cold or damp); the schedule waits that
  long after each ground coat and each layer, counting the night too;
* painters never share a ladder: the wall is cut into the work zones of
  :func:`layerplan.order.work_zones` (one ladder or lift position square), and each painter takes
  whole columns of zones, a band of the wall top to bottom (so their drips fall on their own unpainted
  wall, common practice), the bands balanced so that each painter's share of the layer's time is as
  even as whole columns allow. A wall with fewer zone columns than painters leaves some painters
  without a band (said in the schedule): more would share ladders.

With one painter the hours are exactly the printed plan's time estimate.

The schedule is worked out from a plan and its paint use, once, and handed to the exporters
(:class:`layerplan.export.ExportInputs`), which write it as plan.json's ``schedule`` section and the
printed plan's day-by-day sheet; the :class:`~layerplan.plan.Plan` itself is never changed.
"""

from __future__ import annotations

import math
from typing import Any, Mapping

import numpy as np

from .order import work_zones
from .plan import Plan
from .settings import DEFAULT_REACH_MM

#: painting hours a painter puts in a day at the wall (from memory: 8 h less set-up, breaks, washing up)
HOURS_PER_DAY = 6.0
#: hours to wait after a coat or layer before the next goes over it (common practice, from memory: 2–4 h at 20 °C)
DRYING_HOURS = 4.0
#: most painters a schedule is worked out for
MAX_CREW = 50
#: when acrylic paint may go on, in words (common practice: makers ask for 10 °C or above, in air and wall, while
#: it is applied and dries, and no rain until it has dried; from memory for the rest)
WEATHER_NOTES = (
    "Acrylic paint needs 10 °C or above, in the air and on the wall, while it goes on and while it dries "
    "(common practice; the tin gives the maker's own limit).",
    "No rain, dew or frost on the wall until each coat has dried; outdoors, check the forecast for the day and "
    "the night after (common practice).",
    "Avoid full hot sun and strong wind on the area being painted: the paint dries before it levels and laps "
    "show (from memory).",
    "Drying times grow in cold and damp weather: wait longer than the schedule says when the paint still feels "
    "cool or tacky (from memory).",
)


def _check(name: str, value, *, minimum: float, maximum: float | None = None, strict: bool = False,
           whole: bool = False) -> float:
    bad = isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value)
    if not bad and whole and int(value) != value:
        bad = True
    if not bad:
        bad = (value <= minimum if strict else value < minimum) or (maximum is not None and value > maximum)
    if bad:
        kind = "a whole number" if whole else "a number"
        rule = f"{'>' if strict else '>='} {minimum:g}" + (f" and at most {maximum:g}" if maximum is not None else "")
        raise ValueError(f"{name} must be {kind} {rule}, got {value!r}")
    return float(value)


def check_options(*, crew: int = 1, hours_per_day: float = HOURS_PER_DAY, drying_hours: float = DRYING_HOURS,
                  labour_rate: float | None = None) -> None:
    """Check the options of :func:`work_schedule` (callers check before long work).

    Raises
    ------
    ValueError
        Naming the option and the bad value.
    """
    _check("crew", crew, minimum=1, maximum=MAX_CREW, whole=True)
    _check("hours_per_day", hours_per_day, minimum=0, maximum=24, strict=True)
    _check("drying_hours", drying_hours, minimum=0, maximum=24 * 14)
    if labour_rate is not None:
        _check("labour_rate", labour_rate, minimum=0)


def _balanced_bands(load: np.ndarray, k: int) -> list[tuple[int, int]]:
    """Cut columns 0..C-1 into k contiguous bands [a, b) keeping the largest band's load least (exact)."""
    c = len(load)
    pre = np.concatenate([[0.0], np.cumsum(load)])
    INF = float("inf")
    best = [[INF] * (c + 1) for _ in range(k + 1)]
    cut = [[0] * (c + 1) for _ in range(k + 1)]
    best[0][0] = 0.0
    for j in range(1, k + 1):
        for e in range(j, c + 1):
            for s in range(j - 1, e):
                v = max(best[j - 1][s], pre[e] - pre[s])
                if v < best[j][e] - 1e-12:
                    best[j][e], cut[j][e] = v, s
    bands, e = [], c
    for j in range(k, 0, -1):
        s = cut[j][e]
        bands.append((s, e))
        e = s
    return bands[::-1]


def _column_letters(a: int, b: int) -> str:
    from .svg import column_label  # the transfer grid's own column names (A, B, ... Z, AA)

    return column_label(a) if b - a == 1 else f"{column_label(a)}–{column_label(b - 1)}"


def layer_shares(plan: Plan, layer, *, crew: int, reach_mm: float, stroke_coats: int = 1) -> list[dict[str, Any]]:
    """Each painter's share of one layer: ``{"painter", "columns", "band_mm", "strokes", "seconds"}``.

    Painters take whole columns of work zones (see the module notes); a painter's time is their
    strokes by the stroke rule plus a wash and reload for each run of one paint they paint in.
    """
    from .sheets import PAINT_CHANGE_SECONDS, SECONDS_PER_STROKE, STROKE_MM_PER_SECOND

    strokes = layer.strokes
    cols = max(1, math.ceil(plan.wall_width_mm / reach_mm - 1e-9))
    if strokes:
        zone = work_zones([s.path_mm for s in strokes], reach_mm, plan.wall_width_mm)
        row, c = zone // cols, zone % cols
        col = np.where(row % 2 == 0, c, cols - 1 - c)
    else:
        col = np.zeros(0, np.int64)
    coats = np.array([max(stroke_coats, s.coats) for s in strokes], float)
    secs = coats * SECONDS_PER_STROKE + np.array([s.length_mm() for s in strokes]) * coats / STROKE_MM_PER_SECOND
    load = np.bincount(col, weights=secs, minlength=cols) if len(strokes) else np.zeros(cols)
    k = min(crew, cols)
    shares = []
    for p, (a, b) in enumerate(_balanced_bands(load, k), start=1):
        mine = np.flatnonzero((col >= a) & (col < b))
        paints = [strokes[i].paint for i in mine]
        runs = (1 + sum(1 for x, y in zip(paints, paints[1:]) if x != y)) if paints else 0
        shares.append({"painter": p, "columns": _column_letters(a, b),
                       "band_mm": [round(a * reach_mm, 1), round(min(b * reach_mm, plan.wall_width_mm), 1)],
                       "strokes": int(len(mine)), "seconds": float(secs[mine].sum() + runs * PAINT_CHANGE_SECONDS)})
    return shares


class _Clock:
    """Painting hours inside daily windows [24 d, 24 d + hours_per_day), wall-clock hours otherwise."""

    def __init__(self, hours_per_day: float):
        self.h = hours_per_day

    def start(self, t: float) -> float:
        """The first painting moment at or after ``t``."""
        day = math.floor(t / 24.0 + 1e-12)
        return t if t - 24.0 * day < self.h - 1e-9 else 24.0 * (day + 1)

    def work(self, t: float, hours: float) -> tuple[float, list[tuple[int, float]]]:
        """Paint ``hours`` from ``t``: the end time, and the hours painted on each day."""
        chunks = []
        left = hours
        t = self.start(t)
        while left > 1e-9:
            day = math.floor(t / 24.0 + 1e-12)
            room = 24.0 * day + self.h - t
            take = min(room, left)
            chunks.append((day, take))
            left -= take
            t += take
            if left > 1e-9:
                t = 24.0 * (day + 1)
        return t, chunks


def work_schedule(plan: Plan, paint_use: Mapping[str, Any], *, crew: int = 1, hours_per_day: float = HOURS_PER_DAY,
                  drying_hours: float = DRYING_HOURS, labour_rate: float | None = None,
                  reach_mm: float | None = None) -> dict[str, Any]:
    """The plan's work schedule (plan.json's ``schedule`` section).

    Parameters
    ----------
    plan : Plan
    paint_use : mapping
        :func:`layerplan.quantities.paint_use` of the plan (ground area and coats, least stroke coats;
        its ``cost`` for the currency of a labour cost).
    crew : int
        Painters (1 to :data:`MAX_CREW`).
    hours_per_day : float
        Painting hours a painter puts in a day (0 < h <= 24).
    drying_hours : float
        Wait after each ground coat and layer before the next goes on (>= 0).
    labour_rate : float, optional
        Pay for one painter-hour at the wall, in the inventory's currency; gives ``labour_cost``.
    reach_mm : float, optional
        Side of a work zone; default the plan's ``settings.reach_mm``, else
        :data:`~layerplan.settings.DEFAULT_REACH_MM`.

    Returns
    -------
    schedule : dict
        ``{"hours": crew-hours of work, "crew", "days", "painting_hours": hours the crew is at the wall
        (elapsed, painters working side by side), "hours_per_day", "drying_hours", "reach_m",
        "tasks": [{"task", "layer", "hours", "span_hours", "start_day", "end_day", "painters": [{"painter",
        "columns", "band_mm", "strokes", "hours"}]}], "days_list": [{"day", "work": [{"task", "hours"}],
        "dry_after": task or None}], "idle_painters": [...], "weather": [...]}``, plus
        ``"labour_rate"``, ``"paid_hours"`` (painting hours × crew) and ``"labour_cost"`` with a labour
        rate (and ``"currency"`` when the paint use is priced). Days count from 1.

    Raises
    ------
    ValueError
        Naming the option and the bad value.
    """
    from .sheets import GROUND_M2_PER_HOUR

    check_options(crew=crew, hours_per_day=hours_per_day, drying_hours=drying_hours, labour_rate=labour_rate)
    crew = int(crew)
    if reach_mm is None:
        reach_mm = float((plan.extra.get("settings") or {}).get("reach_mm") or DEFAULT_REACH_MM)
    _check("reach_mm", reach_mm, minimum=0, strict=True)
    stroke_coats = int(paint_use.get("stroke_coats", 1))
    cols = max(1, math.ceil(plan.wall_width_mm / reach_mm - 1e-9))
    tasks: list[dict[str, Any]] = []
    ground = next((p for p in paint_use["paints"] if p["paint"] == plan.ground), None)
    coats = int(paint_use.get("ground_coats", 0))
    if ground and coats and ground["ground_area_m2"] > 0:
        per_coat = ground["ground_area_m2"] / GROUND_M2_PER_HOUR  # hours for one roller
        k = min(crew, cols)
        for c in range(1, coats + 1):
            tasks.append({"task": f"ground, coat {c} of {coats}", "layer": 0, "hours": per_coat,
                          "span_hours": per_coat / k,
                          "painters": [{"painter": p, "columns": "whole wall, a share each", "band_mm": None,
                                        "strokes": 0, "hours": per_coat / k} for p in range(1, k + 1)]})
    idle = []
    for n, layer in enumerate(plan.layers, start=1):
        if not layer.strokes:
            continue
        shares = layer_shares(plan, layer, crew=crew, reach_mm=reach_mm, stroke_coats=stroke_coats)
        hours = [s["seconds"] / 3600.0 for s in shares]
        if len(shares) < crew:
            idle.append({"layer": n, "painters": crew - len(shares)})
        tasks.append({"task": f"layer {n} ({layer.brush_width_mm:g} mm brush)", "layer": n, "hours": sum(hours),
                      "span_hours": max(hours),
                      "painters": [{**{k: v for k, v in s.items() if k != "seconds"}, "hours": h}
                                   for s, h in zip(shares, hours)]})
    clock = _Clock(float(hours_per_day))
    t = 0.0
    days: dict[int, dict[str, Any]] = {}
    for i, task in enumerate(tasks):
        start = clock.start(t)
        end, chunks = clock.work(start, task["span_hours"])
        task["start_day"], task["end_day"] = (chunks[0][0] + 1, chunks[-1][0] + 1) if chunks else (0, 0)
        for day, h in chunks:
            days.setdefault(day, {"day": day + 1, "work": [], "dry_after": None})["work"].append(
                {"task": task["task"], "hours": round(h, 2)})
        if chunks and i + 1 < len(tasks):
            days[chunks[-1][0]]["dry_after"] = task["task"]
        t = end + float(drying_hours) if i + 1 < len(tasks) else end
    total = sum(x["hours"] for x in tasks)
    painting = sum(x["span_hours"] for x in tasks)
    out: dict[str, Any] = {
        "hours": round(total, 2), "crew": crew, "days": (max(days) + 1) if days else 0,
        "painting_hours": round(painting, 2), "hours_per_day": float(hours_per_day),
        "drying_hours": float(drying_hours), "reach_m": round(reach_mm / 1000.0, 3),
        "tasks": [{**x, "hours": round(x["hours"], 2), "span_hours": round(x["span_hours"], 2),
                   "painters": [{**p, "hours": round(p["hours"], 2)} for p in x["painters"]]} for x in tasks],
        "days_list": [days[d] for d in sorted(days)],
        "idle_painters": idle,
        "weather": list(WEATHER_NOTES),
    }
    if labour_rate is not None:
        paid = painting * crew
        out.update({"labour_rate": float(labour_rate), "paid_hours": round(paid, 2),
                    "labour_cost": round(paid * float(labour_rate), 2)})
        cost = paint_use.get("cost")
        if isinstance(cost, Mapping) and cost.get("currency"):
            out["currency"] = cost["currency"]
    return out
