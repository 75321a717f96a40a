"""Batches: each mixed paint's whole amount split into the stock paints that make it.

A recipe gives parts by volume ("3 Warm blue + 1 Cool yellow"); the quantities stage
(:func:`layerplan.quantities.paint_use`) gives the litres of that paint the plan needs.
Their product is the batch: how much of each tin goes into the one pot the whole colour
is mixed in (common practice: mix each colour's whole quantity in one batch, so touch-ups
and later strokes match)::

    litres of stock paint i = paint's litres × parts_i / Σ parts

The split is rounded to 0.1 mL (four decimals of a litre) by largest remainders, so the
amounts of a batch add up exactly to the paint's litres as paint_use states them.

In plan.json a mixed paint's recipe carries it as the optional field ``recipe.batch``:
``[{"paint": stock name, "litres": x}, ...]``, in the recipe's order.

References
----------
.. [1] M. Balinski, H. P. Young, *Fair Representation*, 2nd ed., Brookings, 2001
   (largest-remainder rounding, Hamilton's method).
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from typing import Any

from .plan import Plan

#: batch amounts are given in steps of this many litres (0.1 mL: finer than anyone measures paint,
#: so rounding never moves a batch off its ratio visibly; paint_use's litres are multiples of it)
BATCH_STEP_L = 1e-4


def split_batch(litres: float, parts) -> list[dict[str, Any]]:
    """Split ``litres`` of a mix into its paints by their parts by volume.

    Parameters
    ----------
    litres : float
        The whole amount of the mixed paint, >= 0.
    parts : sequence of (name, parts)
        The recipe; parts > 0.

    Returns
    -------
    list of dict
        ``[{"paint": name, "litres": x}, ...]`` in the order given; the litres are rounded
        to :data:`BATCH_STEP_L` and add up to ``litres`` rounded to that step.

    Raises
    ------
    ValueError
        If ``litres`` is negative or not finite, or a part is not a number > 0.

    References
    ----------
    Balinski & Young (2001), largest-remainder rounding.
    """
    if isinstance(litres, bool) or not isinstance(litres, (int, float)) or not math.isfinite(litres) or litres < 0:
        raise ValueError(f"batch litres must be a number >= 0, got {litres!r}")
    pairs = [(str(name), n) for name, n in parts]
    if not pairs or any(isinstance(n, bool) or not isinstance(n, (int, float)) or not math.isfinite(n) or n <= 0
                        for _, n in pairs):
        raise ValueError(f"batch parts must be numbers > 0, got {list(parts)!r}")
    total_parts = float(sum(n for _, n in pairs))
    steps = int(round(litres / BATCH_STEP_L))
    exact = [steps * n / total_parts for _, n in pairs]
    whole = [math.floor(x) for x in exact]
    # the steps left over go to the largest remainders (ties: the paint listed first)
    order = sorted(range(len(pairs)), key=lambda i: (-(exact[i] - whole[i]), i))
    for i in order[: steps - sum(whole)]:
        whole[i] += 1
    return [{"paint": name, "litres": round(k * BATCH_STEP_L, 4)} for (name, _), k in zip(pairs, whole)]


def mix_batches(plan: Plan, paint_use: Mapping[str, Any]) -> dict[str, list[dict[str, Any]]]:
    """The batch of every mixed paint of a plan.

    Parameters
    ----------
    plan : Plan
        Palette entries with a recipe (``Paint.recipe``, parts by volume) are batched.
    paint_use : mapping
        :func:`layerplan.quantities.paint_use` of the plan (its ``paints[i].litres``).

    Returns
    -------
    dict
        Palette id -> ``[{"paint": stock name, "litres": x}, ...]`` (see :func:`split_batch`);
        paints without a recipe are left out.

    Raises
    ------
    ValueError
        If paint_use does not list a mixed paint, or a recipe is malformed.
    """
    litres = {e.get("paint"): e.get("litres") for e in paint_use.get("paints") or [] if isinstance(e, Mapping)}
    out: dict[str, list[dict[str, Any]]] = {}
    for p in plan.palette:
        recipe = p.recipe
        if not recipe:
            continue
        if p.id not in litres:
            raise ValueError(f"paint_use has no amount for the mixed paint {p.id}")
        try:
            parts = [(q["paint"], q["parts"]) for q in recipe["parts"]]
        except (KeyError, TypeError) as exc:
            raise ValueError(f"paint {p.id}: recipe needs 'parts': [{{'paint': name, 'parts': n}}, ...]") from exc
        parts = [(name, n) for name, n in parts if isinstance(n, (int, float)) and not isinstance(n, bool) and n > 0]
        if not parts:
            raise ValueError(f"paint {p.id}: recipe has no parts > 0")
        out[p.id] = split_batch(float(litres[p.id]), parts)
    return out


def with_batches(plan: Plan, paint_use: Mapping[str, Any]) -> Plan:
    """A new plan whose recipes carry their ``batch`` (plan.json ``recipe.batch``); ``plan`` is unchanged."""
    import dataclasses

    batches = mix_batches(plan, paint_use)
    if not batches:
        return plan
    palette = [dataclasses.replace(p, extra={**p.extra, "recipe": {**p.extra["recipe"], "batch": batches[p.id]}})
               if p.id in batches else p for p in plan.palette]
    return dataclasses.replace(plan, palette=palette)
