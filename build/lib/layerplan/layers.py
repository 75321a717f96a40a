"""Layers, coarse to fine: one per brush, widest first.

Every layer aims at the same target — the photo on the working raster, judged in
CIEDE2000 against the palette — and differs in its brush. A wide brush cannot follow
fine detail, so its strokes only pay off over broad areas of one colour (block-in);
each narrower brush then earns its strokes where the wider ones left error behind.
The stroke cost scales with the brush's footprint, so every layer asks its strokes to
remove the same error per unit of wall.
"""

from __future__ import annotations

from dataclasses import dataclass

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
