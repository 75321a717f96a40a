"""Coats: how many coats each stroke takes to hide the paint it goes over.

A stroke that goes much lighter than what is under it, or is a bright red, orange or
yellow, lets the old colour show through one coat. The plan says so per stroke
(:attr:`layerplan.plan.Stroke.coats`) from the rule below, and quantities and times
count those coats.

The rule of thumb, for a paint over one covered paint (all of it common practice in
wall painting; the numbers are our choice, from memory, to match it):

* One coat where the new paint is no more than :data:`LIGHTER_2_COATS_L` L* lighter
  than what it covers (a similar or a darker colour: dark paints absorb light and hide
  in one coat of opaque mural paint).
* Two coats where it is more than that lighter, three where it is more than
  :data:`LIGHTER_3_COATS_L` lighter (light over dark takes 2–3 coats; a light tan over a
  navy is a step of about 40–60 L*, a white over one about 80).
* One more coat for a low-hiding paint (:func:`low_hiding`: a bright red, orange,
  yellow or magenta, made from naturally transparent organic pigments; earth reds and
  ochres, duller, hide well) wherever it covers a colour at least :data:`VISIBLE_DE00`
  away by CIEDE2000.
* At most :data:`MAX_COATS`.

Deep colours mixed in a clear base can need a second coat even over a lighter colour
(common practice); the rule leaves that to the least coats the painter asks of every
stroke (``--stroke-coats``), which it never lowers.

Lightness difference drives the count because it is what shows through most: a light
film has little absorption and hides only by scattering, so it needs more film over a
dark ground (Kubelka 1948); paint makers measure hiding as the contrast ratio of a film
over black and white (ASTM D2805, ISO 6504-3), a lightness contrast.

A stroke covers many pixels, and they may hold different paints. Each covered pixel
needs the coats the rule gives for the paint on it at the moment the stroke is painted
(the picture before the stroke, in file order, by the rendering rule of
:mod:`layerplan.raster`); the stroke takes the most coats that at least
:data:`MIN_SHARE` of its pixels need. Smaller patches are touched up, which the waste
allowance of :mod:`layerplan.quantities` covers.

References
----------
.. [1] P. Kubelka, "New contributions to the optics of intensely light-scattering
   materials. Part I", J. Opt. Soc. Am. 38(5):448–457, 1948 (hiding of a film over a
   ground).
.. [2] ASTM D2805, Standard Test Method for Hiding Power of Paints by Reflectometry;
   ISO 6504-3, Paints and varnishes — Determination of hiding power — Part 3 (contrast
   ratio of a film over black and white).
.. [3] CIE 15:2004, Colorimetry, 3rd ed. (CIELAB L*, chroma C*ab, hue angle h_ab).
.. [4] G. Sharma, W. Wu, E. N. Dalal, "The CIEDE2000 color-difference formula:
   implementation notes, supplementary test data, and mathematical observations",
   Color Res. Appl. 30(1):21–30, 2005.
.. [5] Trade advice, common practice: light over dark needs 2–4 coats
   (https://content.lamorindapainting.com/blog/interior-painting/15-painting-over-dark-colors-how-many-coats);
   bright reds and yellows hide poorly, being made from transparent organic pigments, and
   dramatic colour changes rarely cover in one coat
   (https://www.valspar.com/en/how-to/tips-for-success/get-the-best-paint-coverage.html);
   the difference in value (lightness) is what most decides how much an undercoat shows
   (http://bluedoorpainters.com/the-value-of-coverage).
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass

import numpy as np
from numba import njit

from .colour import delta_e00
from .plan import Plan
from .raster import footprint_runs, footprint_scratch, pack_strokes

#: a paint more than this many L* lighter than what it covers takes 2 coats (light over dark;
#: common practice, the number our choice from memory)
LIGHTER_2_COATS_L = 20.0
#: ... and more than this many L* lighter, 3 coats (white or cream over navy, black, deep red)
LIGHTER_3_COATS_L = 50.0
#: a low-hiding paint gets one more coat over a colour at least this far away, ΔE00 (a plain,
#: at-a-glance difference; our choice)
VISIBLE_DE00 = 10.0
#: most coats the rule asks for (common practice: 2–4 coats light over dark)
MAX_COATS = 4
#: low-hiding paints: chroma C*ab at least this (bright, clean colours; duller earth reds and
#: ochres, whose iron-oxide pigments hide well, stay below; our choice from memory)
LOW_HIDING_CHROMA = 40.0
#: ... with a CIELAB hue angle from magenta through red and orange to yellow, degrees (h_ab
#: about 0–40° red, 50–70° orange, 80–100° yellow; wraps through 0°)
LOW_HIDING_HUE_DEG = (330.0, 105.0)
#: a stroke takes the most coats that at least this share of its covered pixels need (our
#: choice: a quarter of a stroke showing through is a blotch; smaller patches are touched up)
MIN_SHARE = 0.25


def low_hiding(lab) -> np.ndarray:
    """Whether paints are low-hiding: bright reds, oranges, yellows and magentas.

    Parameters
    ----------
    lab : (..., 3) float array
        CIELAB (D65) of the paints.

    Returns
    -------
    (...) bool array
        True where chroma C*ab >= :data:`LOW_HIDING_CHROMA` and the hue angle h_ab lies in
        :data:`LOW_HIDING_HUE_DEG`.

    References
    ----------
    CIE 15:2004 (C*ab, h_ab); bright reds and yellows are made from transparent organic
    pigments and hide poorly (common practice; see the module's references).
    """
    lab = np.asarray(lab, dtype=float)
    chroma = np.hypot(lab[..., 1], lab[..., 2])
    hue = np.degrees(np.arctan2(lab[..., 2], lab[..., 1])) % 360.0
    lo, hi = LOW_HIDING_HUE_DEG
    in_band = (hue >= lo) | (hue <= hi) if lo > hi else (hue >= lo) & (hue <= hi)
    return (chroma >= LOW_HIDING_CHROMA) & in_band


def coats_over(paint_lab, covered_lab) -> np.ndarray:
    """Coats a paint takes to hide a covered paint, by the rule of thumb of this module.

    Parameters
    ----------
    paint_lab : (..., 3) float array
        CIELAB of the new paint.
    covered_lab : (..., 3) float array
        CIELAB of the paint under it (broadcast against ``paint_lab``).

    Returns
    -------
    (...) int array
        Coats, 1 to :data:`MAX_COATS`.

    References
    ----------
    Kubelka (1948); ASTM D2805; CIE 15:2004; Sharma et al. (2005) for CIEDE2000; common
    practice (see the module's references).
    """
    new = np.asarray(paint_lab, dtype=float)
    old = np.asarray(covered_lab, dtype=float)
    new, old = np.broadcast_arrays(new, old)
    lighter = new[..., 0] - old[..., 0]
    coats = 1 + (lighter > LIGHTER_2_COATS_L).astype(int) + (lighter > LIGHTER_3_COATS_L).astype(int)
    coats += low_hiding(new) & (delta_e00(new, old) >= VISIBLE_DE00)
    return np.minimum(coats, MAX_COATS)


@njit(cache=True, nogil=True)
def _covered_counts(canvas, all_pts, starts, counts, widths, paints, s, n_paints):
    """Per stroke, its covered pixels counted by the paint on them just before it; paints ``canvas`` in place."""
    h, w = canvas.shape
    out = np.zeros((len(starts), n_paints), np.int64)
    most = 2
    for k in range(len(starts)):
        most = max(most, counts[k])
    runs, row_ab, row_n = footprint_scratch(h, most)
    for k in range(len(starts)):
        pts = all_pts[starts[k] : starts[k] + counts[k]]
        nr = footprint_runs(pts, counts[k], widths[k], s, h, w, runs, row_ab, row_n)
        for r in range(nr):
            i = runs[r, 0]
            for j in range(runs[r, 1], runs[r, 2] + 1):
                out[k, canvas[i, j]] += 1
                canvas[i, j] = paints[k]
    return out


def covered_pixels(plan: Plan) -> list[np.ndarray]:
    """What each stroke paints over: per layer, an (S, K) int array of pixel counts.

    Row k of layer n counts the pixels stroke k covers by the palette position of the paint
    on them just before it is painted (the ground, then the strokes in file order, by the
    rendering rule of :mod:`layerplan.raster`).

    Parameters
    ----------
    plan : Plan

    Returns
    -------
    list of (S_n, K) int64 arrays
        One per layer; K is the palette size.
    """
    idx = plan.paint_index()
    canvas = np.full((plan.height_px, plan.width_px), idx[plan.ground], dtype=np.int16)
    out = []
    for layer in plan.layers:
        if not layer.strokes:
            out.append(np.zeros((0, len(plan.palette)), np.int64))
            continue
        pts, starts, counts, widths, paints = pack_strokes(layer.strokes, idx)
        out.append(_covered_counts(canvas, np.ascontiguousarray(pts), starts, counts, widths, paints,
                                   float(plan.mm_per_px), len(plan.palette)))
    return out


def _decide(cover: np.ndarray, paints: np.ndarray, table: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Coats of each stroke and the covered paint that decides them (-1 where one coat does)."""
    need = table[paints]  # (S, K): coats over each covered paint
    total = cover.sum(axis=1)
    coats = np.ones(len(paints), dtype=int)
    for n in range(2, MAX_COATS + 1):
        share = np.where(need >= n, cover, 0).sum(axis=1)
        coats[(total > 0) & (share >= MIN_SHARE * total)] = n
    # the paint it covers most among those that need its coats
    decisive = np.where(need >= coats[:, None], cover, 0)
    over = np.where(coats > 1, decisive.argmax(axis=1), -1)
    return coats, over


def stroke_coats(plan: Plan) -> list[tuple[np.ndarray, np.ndarray]]:
    """Coats of every stroke by the rule of this module, from what it covers.

    Parameters
    ----------
    plan : Plan

    Returns
    -------
    list of (coats, over)
        Per layer: ``coats`` an (S,) int array (1 to :data:`MAX_COATS`), and ``over`` the
        palette position of the covered paint that decides them (the most covered among
        those needing that many coats), -1 where one coat does.

    References
    ----------
    See the module's references.
    """
    lab = plan.palette_lab()
    table = coats_over(lab[:, None, :], lab[None, :, :])
    idx = plan.paint_index()
    out = []
    for layer, cover in zip(plan.layers, covered_pixels(plan)):
        paints = np.array([idx[s.paint] for s in layer.strokes], dtype=int)
        out.append(_decide(cover, paints, table) if len(paints) else (np.ones(0, int), np.full(0, -1)))
    return out


def with_coats(plan: Plan) -> Plan:
    """The plan with every stroke's ``coats`` set from what it covers (a new Plan; the picture is unchanged).

    References
    ----------
    See the module's references.
    """
    layers = []
    for layer, (coats, _) in zip(plan.layers, stroke_coats(plan)):
        strokes = tuple(s if s.coats == int(c) else dataclasses.replace(s, coats=int(c))
                        for s, c in zip(layer.strokes, coats))
        layers.append(dataclasses.replace(layer, strokes=strokes))
    return dataclasses.replace(plan, layers=tuple(layers))


@dataclass(frozen=True)
class CoatNote:
    """Strokes of one paint that take more than one coat where they cover one other paint."""

    paint: str
    over: str
    coats: tuple[int, ...]  # the counts among these strokes, fewest first
    strokes: int


def coat_notes(plan: Plan, *, minimum: int = 1) -> list[list[CoatNote]]:
    """Per layer, which paints take more than one coat, and over which paint, for the sheets.

    Parameters
    ----------
    plan : Plan
        Its strokes' ``coats`` are what is reported (with at least ``minimum``); the
        covered paint is found again from the pixels: the one the stroke covers most among
        those needing that many coats by the rule, else the one it covers most.
    minimum : int
        Coats every stroke gets anyway (the quantities' ``stroke_coats``); only strokes
        above it are listed.

    Returns
    -------
    list of list of CoatNote
        One list per layer, in palette order of the paint, then of the covered paint.
    """
    lab = plan.palette_lab()
    table = coats_over(lab[:, None, :], lab[None, :, :])
    idx = plan.paint_index()
    ids = [p.id for p in plan.palette]
    out = []
    for layer, cover in zip(plan.layers, covered_pixels(plan)):
        groups: dict[tuple[int, int], list[int]] = {}
        for s, row in zip(layer.strokes, cover):
            coats = max(s.coats, minimum)
            if coats <= max(minimum, 1) or not row.any():
                continue
            p = idx[s.paint]
            decisive = np.where(table[p] >= coats, row, 0)
            if not decisive.any():  # coats set by hand beyond the rule: name what it covers most
                decisive = np.where(np.arange(len(row)) != p, row, 0)
            q = int(decisive.argmax()) if decisive.any() else p
            groups.setdefault((p, q), []).append(coats)
        out.append([CoatNote(ids[p], ids[q], tuple(sorted(set(c))), len(c)) for (p, q), c in sorted(groups.items())])
    return out
