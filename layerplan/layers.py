"""Layers, coarse to fine: one per brush, widest first.

Every layer aims at the same target — the photo on the working raster, judged in
CIEDE2000 against the palette — and differs in its brush. A wide brush cannot follow
fine detail, so its strokes only pay off over broad areas of one colour (block-in);
each narrower brush then earns its strokes where the wider ones left error behind.
The stroke cost scales with the brush's footprint, so every layer asks its strokes to
remove the same error per unit of wall.

Within a layer each paint is painted in one run, so the brush is washed once per paint.
The order of the runs is fixed before the layer is placed (:func:`paint_runs`), and the
placer slots every stroke into its paint's run, so the picture it optimises is the one
painted run by run.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .placer import BrushLimits


@dataclass(frozen=True)
class LayerSpec:
    """What one layer paints with and what a stroke must earn there."""

    number: int
    limits: BrushLimits
    cost: float
    direction_sigma_px: float
    tries: int = 300
    patience: int = 80


def layer_specs(brushes_mm, mm_per_px: float, stroke_cost: float) -> list[LayerSpec]:
    """One LayerSpec per brush, widest first.

    Parameters
    ----------
    brushes_mm : sequence of float
    mm_per_px : float
    stroke_cost : float
        ΔE00 a stroke must remove per (brush width)² of wall.

    Returns
    -------
    list of LayerSpec
    """
    out = []
    for n, width in enumerate(sorted(brushes_mm, reverse=True)):
        w_px = width / mm_per_px
        out.append(
            LayerSpec(
                number=n + 1,
                limits=BrushLimits.for_brush(float(width)),
                cost=float(stroke_cost) * w_px * w_px,
                direction_sigma_px=max(1.0, 0.5 * w_px),
            )
        )
    return out


def _largest_first(planes, err):
    # the error each paint could take away where it is the best paint: the paint with most to do goes on first,
    # the small areas (details) in later runs, on top of it
    best = planes.argmin(axis=2)
    room = np.maximum(err - planes.min(axis=2), 0.0).astype(np.float64)
    return np.bincount(best.ravel(), weights=room.ravel(), minlength=planes.shape[2])


def _lightest_first(planes, err):
    # palette positions run lightest first (layerplan.palette.lightest_first)
    return -np.arange(planes.shape[2], dtype=np.float64)


def _darkest_first(planes, err):
    return np.arange(planes.shape[2], dtype=np.float64)


#: rules for the order of a layer's runs: each scores the paints from the picture before the layer (higher first)
PAINT_RUNS = {"largest first": _largest_first, "lightest first": _lightest_first, "darkest first": _darkest_first}
DEFAULT_PAINT_RUNS = "largest first"


def paint_runs(rule: str, planes: np.ndarray, err: np.ndarray) -> np.ndarray:
    """The run of each paint in the next layer: 0 for the paint painted first.

    Parameters
    ----------
    rule : str
        A key of :data:`PAINT_RUNS`.
    planes : (H, W, K) float32 array, ΔE00 from each paint to each target pixel
    err : (H, W) float32 array, ΔE00 of the picture before the layer

    Returns
    -------
    ranks : (K,) int64 array, a permutation of 0 … K − 1 (ties: the lighter paint first)

    Raises
    ------
    ValueError
        If ``rule`` is not one of :data:`PAINT_RUNS` (the message lists them).
    """
    if rule not in PAINT_RUNS:
        raise ValueError(f"paint runs must be one of {', '.join(PAINT_RUNS)}; got {rule!r}")
    score = PAINT_RUNS[rule](planes, err)
    order = np.lexsort((np.arange(len(score)), -score))
    ranks = np.empty(len(score), dtype=np.int64)
    ranks[order] = np.arange(len(score))
    return ranks
