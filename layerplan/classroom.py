"""A class painting one plan: paint for every student, tables to set out, class periods.

Pure figures from a plan and its paint use (:func:`layerplan.quantities.paint_use`), for plan.json's
``classroom`` section and the printed plan's preparation and teacher's sheets
(:mod:`layerplan.sheets`). One plan is painted once per student, on a sheet each, plus spare sheets
for do-overs and latecomers; paint is set out per table and measured in millilitres.

Who mixes what:

- a paint that is one stock paint alone is poured straight from the bottle (``"stock"``);
- a mix of two stock paints in at most :data:`~layerplan.surfaces.SIMPLE_MAX_PARTS` parts is
  mixed by the students themselves at the table (``"students"``);
- anything else (three paints, or a ratio such as 1 : 28) is mixed beforehand by the teacher,
  for the whole class at once, so every sheet gets the same colour (``"teacher"``).

The class's time is worked out with classroom figures of our own, not a muralist's: students paint
small strokes quickly but rinse between paints, and a period loses time to setting out and
clearing away; layers dry between periods, or within one when the drying time fits.
"""

from __future__ import annotations

import math
from typing import Any, Mapping

from .surfaces import SIMPLE_MAX_PARTS

#: students at one table sharing one set of paint pots (about six; common practice)
TABLE_SIZE = 6
#: spare sheets, share of the class (about one in ten; common practice)
SPARE_SHARE = 0.1
#: class period, minutes (common practice)
PERIOD_MINUTES = 45.0
#: minutes of a period spent setting out paint and clearing away (from memory: about five each)
SETUP_MINUTES = 10.0
#: touch-dry time of a thin layer of school acrylic or poster paint on paper, minutes (from memory;
#: longer in a cold or damp room)
DRYING_MINUTES = 20.0
#: a student's pace (from memory, our rough guide): load, place and lift a small stroke, seconds
CLASS_SECONDS_PER_STROKE = 6.0
#: ... plus rinsing, blotting and reloading at each change of paint, seconds
CLASS_PAINT_CHANGE_SECONDS = 30.0
#: minutes to mix and paint a value-scale strip before a value study (from memory)
VALUE_SCALE_MINUTES = 15.0


def class_size(students: int, spares: float) -> tuple[int, int, int]:
    """(spare sheets, sheets in all, tables) for a class: spares rounded up, tables of :data:`TABLE_SIZE`.

    Raises
    ------
    ValueError
        ``students`` not a whole number >= 1, or ``spares`` not a fraction 0–1.
    """
    if isinstance(students, bool) or not isinstance(students, int) or students < 1:
        raise ValueError(f"students must be a whole number >= 1, got {students!r}")
    if isinstance(spares, bool) or not isinstance(spares, (int, float)) or not 0 <= spares <= 1:
        raise ValueError(f"spares must be a fraction from 0 to 1 (0.1 = 10 %), got {spares!r}")
    extra = math.ceil(students * float(spares) - 1e-9)
    return extra, students + extra, math.ceil(students / TABLE_SIZE)


def who_mixes(recipe: Mapping[str, Any] | None) -> str:
    """``stock`` (one paint alone), ``students`` (two paints, few parts) or ``teacher`` (beforehand)."""
    if not recipe:
        return "teacher"
    parts = [int(p["parts"]) for p in recipe.get("parts") or [] if p.get("parts")]
    if len(parts) <= 1:
        return "stock"
    if len(parts) == 2 and sum(parts) <= SIMPLE_MAX_PARTS:
        return "students"
    return "teacher"


def layer_minutes(layer, *, stroke_coats: int = 1) -> float:
    """A student's painting time of one layer on one sheet, minutes (our rough guide, from memory)."""
    coats = sum(max(stroke_coats, s.coats) for s in layer.strokes)
    runs = (sum(1 for a, b in zip(layer.strokes, layer.strokes[1:]) if a.paint != b.paint) + 1) if layer.strokes \
        else 0
    return (coats * CLASS_SECONDS_PER_STROKE + runs * CLASS_PAINT_CHANGE_SECONDS) / 60.0


def class_periods(minutes: list[tuple[str, float]], period_minutes: float) -> list[dict[str, Any]]:
    """Split the steps of a sheet into class periods.

    Parameters
    ----------
    minutes : list of (step name, minutes)
        In painting order; a step must be dry before the next starts.
    period_minutes : float
        Length of a period; :data:`SETUP_MINUTES` of it go to setting out and clearing away.

    Returns
    -------
    list of dict
        ``[{"period": 1, "steps": [{"step": "layer 1", "minutes": 12.5}, ...], "minutes": m}, ...]``:
        a step starts in the same period as the one before only when :data:`DRYING_MINUTES` and the
        step both fit; a step longer than a period goes on into the next ones (``"continued"``).

    Raises
    ------
    ValueError
        A period no longer than its setting-out time.
    """
    room = float(period_minutes) - SETUP_MINUTES
    if room <= 0:
        raise ValueError(f"a class period must be longer than the {SETUP_MINUTES:g} minutes of setting out "
                         f"and clearing away, got {period_minutes:g}")
    periods: list[dict[str, Any]] = []
    used = room  # no period open yet
    for name, need in minutes:
        need = max(float(need), 1.0)
        wait = DRYING_MINUTES if periods and periods[-1]["steps"] else 0.0
        if used + wait + need > room + 1e-9:
            periods.append({"period": len(periods) + 1, "steps": [], "minutes": 0.0})
            used, wait = 0.0, 0.0
        elif wait:
            periods[-1]["steps"].append({"step": "drying", "minutes": wait})
            used += wait
        left, first = need, True
        while left > 1e-9:
            take = min(left, room - used)
            if take <= 1e-9:
                periods.append({"period": len(periods) + 1, "steps": [], "minutes": 0.0})
                used = 0.0
                continue
            periods[-1]["steps"].append({"step": name, "minutes": round(take, 1),
                                         **({} if first else {"continued": True})})
            used += take
            left -= take
            first = False
        periods[-1]["minutes"] = round(used, 1)
    for p in periods:
        p["minutes"] = round(sum(s["minutes"] for s in p["steps"]), 1)
    return periods


def classroom_section(plan, use: Mapping[str, Any]) -> dict[str, Any] | None:
    """plan.json's ``classroom`` section, or None for a plan without a class (no ``settings.students``).

    Parameters
    ----------
    plan : Plan
        Its ``extra["settings"]`` gives ``students``, ``spares`` and ``period_minutes``.
    use : mapping
        The plan's paint use: one sheet's amounts.

    Returns
    -------
    dict
        ``{"students", "spares", "spare_share", "sheets", "table_size", "tables", "period_minutes",
        "paints": [{"paint": stock name, "per_student_ml", "total_ml", "per_table_ml", "premix_ml"}, ...],
        "mixes": [{"paint": palette id, "who", "per_student_ml", "total_ml", "per_table_ml"}, ...],
        "periods": [...]}``; totals are for every sheet, spares included (see :func:`class_periods`). A
        stock paint's ``premix_ml`` goes into the teacher's mixes beforehand and ``per_table_ml`` is the
        rest, put out on each table; a mix's ``per_table_ml`` is its pot per table.
    """
    st = plan.extra.get("settings") or {}
    students = st.get("students")
    if not students:
        return None
    share = float(SPARE_SHARE if st.get("spares") is None else st["spares"])
    period = float(PERIOD_MINUTES if st.get("period_minutes") is None else st["period_minutes"])
    spares, sheets, tables = class_size(int(students), share)

    def ml(entry) -> float:
        return float(entry["ml"]) if "ml" in entry else float(entry["litres"]) * 1000.0

    def row(paint: str, per: float, **more) -> dict[str, Any]:
        return {"paint": paint, **more, "per_student_ml": round(per, 1), "total_ml": round(per * sheets, 1),
                "per_table_ml": round(per * sheets / tables, 1)}

    by_id = {p.id: p for p in plan.palette}
    mixes = [row(e["paint"], ml(e), who=who_mixes(by_id[e["paint"]].extra.get("recipe")))
             for e in use["paints"] if ml(e) > 0]
    # each stock paint's share of the mixes: what goes on the tables, and what the teacher mixes beforehand
    premix: dict[str, float] = {}
    for m in mixes:
        recipe = by_id[m["paint"]].extra.get("recipe") or {}
        parts = [(str(q["paint"]), float(q["parts"])) for q in recipe.get("parts") or [] if q.get("parts")]
        total = sum(n for _, n in parts)
        if m["who"] == "teacher" and total > 0:
            for name, n in parts:
                premix[name] = premix.get(name, 0.0) + m["per_student_ml"] * n / total
    paints = []
    for s in use.get("stock") or []:
        entry = row(s["paint"], ml(s))
        before = min(premix.get(s["paint"], 0.0), ml(s))
        entry["premix_ml"] = round(before * sheets, 1)
        entry["per_table_ml"] = round((ml(s) - before) * sheets / tables, 1)
        paints.append(entry)
    stroke_coats = int(use.get("stroke_coats", 1))
    steps = ([("value scale", VALUE_SCALE_MINUTES)] if plan.extra.get("value_study") else []) + \
        [(f"layer {n}", layer_minutes(layer, stroke_coats=stroke_coats))
         for n, layer in enumerate(plan.layers, start=1) if layer.strokes]
    return {"students": int(students), "spares": spares, "spare_share": share, "sheets": sheets,
            "table_size": TABLE_SIZE, "tables": tables, "period_minutes": period,
            "paints": paints, "mixes": mixes, "periods": class_periods(steps, period)}


#: the settings of a class that ``layerplan render`` may change without planning again
CLASS_SETTINGS = ("students", "spares", "period_minutes")


def with_class(plan, values: Mapping[str, Any]):
    """The plan with its class changed (``students``, ``spares``, ``period_minutes``; None: unchanged).

    The strokes stay as planned: only the class's figures follow. Returns a new Plan.

    Raises
    ------
    layerplan.options.OptionError
        A value out of its option's bounds, or students for a plan that is not of a sheet or board.
    """
    from dataclasses import replace

    from .options import OPTIONS, OptionError

    given = {k: OPTIONS[k].check(values[k]) for k in CLASS_SETTINGS if values.get(k) is not None}
    if not given:
        return plan
    settings = {**(plan.extra.get("settings") or {}), **given}
    if settings.get("students") and not settings.get("surface"):
        raise OptionError("students", "{name}: this plan is of a wall, not of a sheet or board, so it has no "
                                      "sheet per student; plan it again with a surface")
    return replace(plan, extra={**plan.extra, "settings": settings})
