"""Mix recipes: how to mix each wanted colour from the painter's own paints.

A recipe is at most ``max_paints`` inventory paints in whole parts with a total of at
most ``max_parts`` ("2 parts Earth yellow, 1 part White"), together with the colour the
mixing model (:mod:`layerplan.mixing`: each paint's absorption and scattering fitted from
its masstone and tint, two-constant Kubelka–Munk) predicts for it and the CIEDE2000
difference to the wanted colour. A recipe mixing paints of which some have no tint in the
inventory (so they use the simpler model) names them in ``no_tint``: its prediction is
less sure.

The solver is exhaustive over that grid: every candidate mix of the inventory is
predicted once and kept as a :class:`MixTable` (cached per inventory and options, a few
tens of thousands of rows for 14 paints, 3 per mix, 10 parts), and wanted colours are
looked up against the whole table at once. Ratios are kept in lowest terms (2:2 is 1:1),
so each distinct mix appears once.

Choice among near-equals: of all mixes within :data:`SIMPLER_WITHIN_DE` of the best
ΔE00, the one with the fewest paints, then the fewest parts, then the lowest ΔE00 wins
— a difference that small is far below what a painter can see or mix to (a just
noticeable difference is about 1 ΔE00, common practice), while fewer tins and fewer parts
are easier to mix. So a stock paint's own colour comes back as that paint alone.

A colour whose best mix is more than ``tolerance`` ΔE00 away is flagged
``in_gamut = False``; its recipe is still the nearest achievable mix.

References
----------
.. [1] P. Kubelka, F. Munk (1931); D. R. Duncan (1940); E. Allen (1980); J. L. Saunderson
   (1942); S. A. Burns (2020) — see :mod:`layerplan.mixing`.
.. [2] G. Sharma, W. Wu, E. N. Dalal, "The CIEDE2000 color-difference formula:
   implementation notes, supplementary test data, and mathematical observations",
   Color Res. Appl. 30(1):21-30, 2005.
"""

from __future__ import annotations

import itertools
import math
from dataclasses import dataclass
from functools import lru_cache, reduce
from typing import Any, Mapping

import numpy as np

from . import mixing
from .colour import lab_to_srgb
from .inventory import Inventory, default_inventory
from .plan import hex_to_rgb, rgb_to_hex

DEFAULT_MAX_PAINTS = 3  # at most 3 stock paints a mix: fewer tins to open, colours stay clean (common practice)
DEFAULT_MAX_PARTS = 10  # whole parts adding up to at most 10: ratios a painter measures out by the cup
DEFAULT_TOLERANCE_DE = 3.0  # a mix within ΔE00 3 counts as reaching its colour (a few just noticeable differences)
MAX_MIX_PAINTS = 4
MAX_PARTS_LIMIT = 30
MAX_TOLERANCE_DE = 100.0
#: mixes this much worse than the best count as equal, so the simplest wins. Kept a tie-breaker
#: (far below the ~1 ΔE00 just-noticeable difference, common practice): a wider margin would
#: swap an exact 3-paint mix for a near 2-paint one, and the solver must find exact mixes back
SIMPLER_WITHIN_DE = 0.05
#: mixes predicted at a time while building a table, and searched at a time per wanted colour
_TABLE_BLOCK = 8192
#: largest candidate table built (memory and time bound: ~100 MB while building)
MAX_TABLE_MIXES = 1_500_000


@dataclass(frozen=True)
class Recipe:
    """How to mix one wanted colour.

    Attributes
    ----------
    target : str
        Wanted colour, ``#rrggbb``.
    parts : tuple of (str, int)
        (paint name, whole parts), most parts first.
    predicted_srgb : str
        ``#rrggbb`` the mixing model predicts (clipped to sRGB).
    predicted_lab : tuple of float
        CIELAB (D65, 2°) the model predicts (not clipped).
    delta_e : float
        CIEDE2000 between the wanted colour and ``predicted_lab``.
    in_gamut : bool
        ``delta_e <= tolerance``.
    no_tint : tuple of str
        Paints of a mix of two or more that have no tint in the inventory (the simpler
        model; the prediction is less sure). Empty for a paint alone.
    """

    target: str
    parts: tuple[tuple[str, int], ...]
    predicted_srgb: str
    predicted_lab: tuple[float, float, float]
    delta_e: float
    in_gamut: bool
    no_tint: tuple[str, ...] = ()

    def to_dict(self) -> dict[str, Any]:
        """The recipe's JSON form (``layerplan mix --json`` and plan.json palette entries).

        ``{"target", "parts": [{"paint", "parts"}], "predicted_srgb", "delta_e", "in_gamut"}``
        and, only when some of a mix's paints have no tint, ``"no_tint": [names]``.
        """
        out = {
            "target": self.target,
            "parts": [{"paint": name, "parts": int(n)} for name, n in self.parts],
            "predicted_srgb": self.predicted_srgb,
            "delta_e": round(float(self.delta_e), 2),
            "in_gamut": bool(self.in_gamut),
        }
        if self.no_tint:
            out["no_tint"] = list(self.no_tint)
        return out


@dataclass(frozen=True, eq=False)
class MixTable:
    """Every candidate mix of an inventory, predicted once.

    Attributes
    ----------
    names : tuple of str
        Inventory paint names; ``paint_idx`` indexes them.
    paint_idx : (M, max_paints) int16 array
        Paints of each mix, ``-1`` where unused.
    parts : (M, max_paints) int16 array
        Whole parts of each paint (0 where unused), in lowest terms.
    n_paints, total_parts : (M,) int16 arrays
    lab : (M, 3) float64 array
        Predicted CIELAB (D65, 2°).
    rgb : (M, 3) uint8 array
        Predicted sRGB, clipped.
    from_tint : (P,) bool array
        Per inventory paint: K and S fitted from a tint.
    """

    names: tuple[str, ...]
    paint_idx: np.ndarray
    parts: np.ndarray
    n_paints: np.ndarray
    total_parts: np.ndarray
    lab: np.ndarray
    rgb: np.ndarray
    from_tint: np.ndarray

    def __len__(self) -> int:
        return len(self.lab)


@lru_cache(maxsize=8)
def paint_optics(inventory: Inventory) -> mixing.PaintOptics:
    """K(λ) and S(λ) of every inventory paint (cached per inventory).

    Tinted paints are fitted from masstone and tint with the inventory's white (its
    ``tinting_strength`` the reference scattering); the others use the simpler model.
    ``from_tint`` is True for the tinted paints and for that white.

    References
    ----------
    Kubelka & Munk (1931); Duncan (1940); Allen (1980) — see :mod:`layerplan.mixing`.
    """
    paints = inventory.paints
    white = inventory.white
    nan = np.full(3, math.nan)
    optics = mixing.fit_paint_optics(
        np.array([_xyz(p.srgb, p.lab) for p in paints]),
        tinting_strength=np.array([p.tinting_strength for p in paints]),
        white_xyz=None if white is None else _xyz(white.srgb, white.lab),
        tint_xyz=np.array([_xyz(p.tint.srgb, p.tint.lab) if p.tint else nan for p in paints]),
        tint_paint_fraction=np.array([p.tint.paint_fraction if p.tint else 0.5 for p in paints]),
        white_strength=1.0 if white is None else white.tinting_strength,
    )
    # the white the tints were made with is the reference of the fit, as sure as any tinted paint
    known = optics.from_tint | np.array([p.white for p in paints])
    optics = mixing.PaintOptics(optics.absorption, optics.scattering, known)
    for a in (optics.absorption, optics.scattering, optics.from_tint):
        a.setflags(write=False)
    return optics


def _xyz(srgb: str, lab) -> np.ndarray:
    """XYZ of an inventory colour: exactly its sRGB where it was given so, else its measured CIELAB."""
    from .colour import srgb_to_lab

    rgb = np.array(hex_to_rgb(srgb), dtype=np.uint8)
    if np.allclose(srgb_to_lab(rgb), lab, atol=1e-3):  # the CIELAB is that of the sRGB (rounded)
        return mixing.srgb_to_xyz(rgb)
    return mixing.lab_to_xyz(np.asarray(lab, dtype=np.float64))


def check_options(max_paints, max_parts, tolerance=None) -> None:
    """Validate solver options; ValueError naming the option and the bad value."""
    if isinstance(max_paints, bool) or not isinstance(max_paints, int) or not 1 <= max_paints <= MAX_MIX_PAINTS:
        raise ValueError(f"max paints per mix must be a whole number from 1 to {MAX_MIX_PAINTS}, got {max_paints!r}")
    if isinstance(max_parts, bool) or not isinstance(max_parts, int) or not 1 <= max_parts <= MAX_PARTS_LIMIT:
        raise ValueError(f"max parts must be a whole number from 1 to {MAX_PARTS_LIMIT}, got {max_parts!r}")
    if tolerance is not None:
        if (
            isinstance(tolerance, bool)
            or not isinstance(tolerance, (int, float))
            or not math.isfinite(tolerance)
            or not 0 <= tolerance <= MAX_TOLERANCE_DE
        ):
            raise ValueError(f"tolerance must be a ΔE00 from 0 to {MAX_TOLERANCE_DE:g}, got {tolerance!r}")


def _compositions(n: int, max_total: int) -> np.ndarray:
    """(Q, n) int: n positive whole parts, total <= max_total, in lowest terms."""
    rows = [
        c
        for c in itertools.product(range(1, max_total - n + 2), repeat=n)
        if sum(c) <= max_total and reduce(math.gcd, c) == 1
    ]
    return np.array(rows, dtype=np.int16).reshape(-1, n)


def table_size(n_inventory: int, *, max_paints: int = DEFAULT_MAX_PAINTS, max_parts: int = DEFAULT_MAX_PARTS) -> int:
    """Number of candidate mixes :func:`build_mix_table` would make."""
    return sum(
        math.comb(n_inventory, n) * len(_compositions(n, max_parts))
        for n in range(1, min(max_paints, n_inventory, max_parts) + 1)
    )


def build_mix_table(
    inventory: Inventory, *, max_paints: int = DEFAULT_MAX_PAINTS, max_parts: int = DEFAULT_MAX_PARTS
) -> MixTable:
    """Predict every mix of at most ``max_paints`` paints in at most ``max_parts`` parts.

    Cached: the same inventory and options return the same table.

    Parameters
    ----------
    inventory : Inventory
    max_paints : int, keyword-only
        1 to :data:`MAX_MIX_PAINTS`.
    max_parts : int, keyword-only
        1 to :data:`MAX_PARTS_LIMIT`.

    Returns
    -------
    MixTable

    Raises
    ------
    ValueError
        For options out of range, or a table larger than :data:`MAX_TABLE_MIXES` (the
        message says which option to lower).

    References
    ----------
    Kubelka & Munk (1931); Duncan (1940).
    """
    if not isinstance(inventory, Inventory) or not inventory.paints:
        raise ValueError("inventory must be a non-empty Inventory")
    check_options(max_paints, max_parts)
    size = table_size(len(inventory), max_paints=max_paints, max_parts=max_parts)
    if size > MAX_TABLE_MIXES:
        raise ValueError(
            f"{len(inventory)} paints, up to {max_paints} per mix in up to {max_parts} parts make {size:,} "
            f"candidate mixes (at most {MAX_TABLE_MIXES:,}); use fewer paints per mix, fewer parts or a "
            f"smaller inventory"
        )
    return _cached_table(inventory, max_paints, max_parts)


@lru_cache(maxsize=8)
def _cached_table(inventory: Inventory, max_paints: int, max_parts: int) -> MixTable:
    n_inv = len(inventory)
    optics = paint_optics(inventory)
    idx_blocks, part_blocks = [], []
    for n in range(1, min(max_paints, n_inv, max_parts) + 1):
        comps = _compositions(n, max_parts)
        combos = np.array(list(itertools.combinations(range(n_inv), n)), dtype=np.int16).reshape(-1, n)
        idx = np.repeat(combos, len(comps), axis=0)
        parts = np.tile(comps, (len(combos), 1))
        pad = max_paints - n
        idx_blocks.append(np.pad(idx, ((0, 0), (0, pad)), constant_values=-1))
        part_blocks.append(np.pad(parts, ((0, 0), (0, pad)), constant_values=0))
    paint_idx = np.concatenate(idx_blocks)
    parts = np.concatenate(part_blocks)
    used = paint_idx >= 0
    xyz = np.empty((len(paint_idx), 3))
    # numpy in blocks (no compiled code, so the recipe commands start at once): each block's
    # (mixes × wavelengths) spectra stay a few megabytes even for the largest table allowed
    rows = np.arange(len(paint_idx))
    for start in range(0, len(paint_idx), _TABLE_BLOCK):
        block = slice(start, start + _TABLE_BLOCK)
        dense = np.zeros((len(rows[block]), n_inv))
        for j in range(max_paints):
            idx = paint_idx[block, j]
            ok = idx >= 0
            dense[np.flatnonzero(ok), idx[ok]] = parts[block, j][ok]
        xyz[block] = mixing.reflectance_to_xyz(mixing.mix_reflectance(optics, dense))
    lab, rgb = mixing.xyz_to_lab(xyz), mixing.xyz_to_srgb(xyz)
    for a in (paint_idx, parts, lab, rgb):
        a.setflags(write=False)
    return MixTable(
        names=tuple(inventory.names()),
        paint_idx=paint_idx,
        parts=parts,
        n_paints=used.sum(axis=1).astype(np.int16),
        total_parts=parts.sum(axis=1).astype(np.int16),
        lab=lab,
        rgb=rgb,
        from_tint=optics.from_tint,
    )


def solve_recipes(
    target_lab,
    inventory: Inventory | None = None,
    *,
    max_paints: int = DEFAULT_MAX_PAINTS,
    max_parts: int = DEFAULT_MAX_PARTS,
    tolerance: float = DEFAULT_TOLERANCE_DE,
    targets_srgb=None,
) -> list[Recipe]:
    """The best mix for each wanted colour.

    Parameters
    ----------
    target_lab : (N, 3) float array
        Wanted colours, CIELAB (D65, 2°).
    inventory : Inventory, optional
        The painter's paints (default: :func:`layerplan.inventory.default_inventory`).
    max_paints : int, keyword-only
        At most this many paints per mix (default 3).
    max_parts : int, keyword-only
        Whole parts per mix add up to at most this (default 10).
    tolerance : float, keyword-only
        ΔE00 within which a colour counts as mixable (``in_gamut``), default 3.
    targets_srgb : sequence of str, optional, keyword-only
        ``#rrggbb`` to report as each recipe's ``target`` (default: ``target_lab``
        converted to sRGB).

    Returns
    -------
    list of Recipe
        One per wanted colour, in order.

    Raises
    ------
    ValueError
        For a bad array or option (the message names it).

    References
    ----------
    Kubelka & Munk (1931); Duncan (1940); Sharma, Wu & Dalal (2005).
    """
    lab = np.asarray(target_lab, dtype=np.float64)
    if lab.ndim == 1:
        lab = lab[None, :]
    if lab.ndim != 2 or lab.shape[1] != 3:
        raise ValueError(f"target_lab must be (N, 3) CIELAB, got shape {np.shape(target_lab)}")
    if not np.all(np.isfinite(lab)):
        raise ValueError("target_lab has non-finite values")
    check_options(max_paints, max_parts, tolerance)
    if targets_srgb is not None and len(targets_srgb) != len(lab):
        raise ValueError(f"targets_srgb has {len(targets_srgb)} colours for {len(lab)} targets")
    inventory = default_inventory() if inventory is None else inventory
    table = build_mix_table(inventory, max_paints=max_paints, max_parts=max_parts)

    rank = table.n_paints.astype(np.float64) * (MAX_PARTS_LIMIT + 1) + table.total_parts
    from .colour import delta_e00

    de = np.empty(len(table.lab))
    recipes: list[Recipe] = []
    for i, wanted in enumerate(lab):
        for start in range(0, len(de), _TABLE_BLOCK):
            de[start : start + _TABLE_BLOCK] = delta_e00(wanted[None, :], table.lab[start : start + _TABLE_BLOCK])
        best = de.min()
        # ΔE00 <= ~120, so de / 1000 < 1 only breaks ties within the same (paints, parts) rank
        key = np.where(de <= best + SIMPLER_WITHIN_DE, rank + de / 1000.0, np.inf)
        row = int(np.argmin(key))
        target = targets_srgb[i] if targets_srgb is not None else rgb_to_hex(lab_to_srgb(wanted))
        recipes.append(_recipe(table, row, target, float(de[row]), tolerance))
    return recipes


def _recipe(table: MixTable, row: int, target: str, de: float, tolerance: float) -> Recipe:
    n = int(table.n_paints[row])
    pairs = [(int(table.paint_idx[row, j]), int(table.parts[row, j])) for j in range(n)]
    pairs.sort(key=lambda ip: (-ip[1], ip[0]))  # most parts first, then inventory order
    no_tint = tuple(table.names[i] for i, _ in pairs if not table.from_tint[i]) if n > 1 else ()
    return Recipe(
        target=target,
        parts=tuple((table.names[i], p) for i, p in pairs),
        predicted_srgb=rgb_to_hex(table.rgb[row]),
        predicted_lab=tuple(float(v) for v in table.lab[row]),
        delta_e=de,
        in_gamut=bool(de <= tolerance),
        no_tint=no_tint,
    )


def recipes_of_rows(table: MixTable, rows, *, tolerance: float = DEFAULT_TOLERANCE_DE) -> list[Recipe]:
    """The recipes of chosen rows of a mix table, each wanting exactly the colour it mixes to.

    For a palette chosen among the mixes themselves (:func:`layerplan.palette.palette_from_mixes`):
    each recipe's ``target`` is the mix's own predicted sRGB, and ``delta_e`` the CIEDE2000
    between that 8-bit colour and the unclipped prediction (rounding, or clipping for a mix
    outside sRGB).

    Parameters
    ----------
    table : MixTable
    rows : sequence of int
    tolerance : float, keyword-only

    Returns
    -------
    list of Recipe
    """
    from .colour import delta_e00, srgb_to_lab

    rows = [int(r) for r in rows]
    shown = srgb_to_lab(np.asarray(table.rgb[rows], dtype=np.uint8).reshape(-1, 3))
    de = np.atleast_1d(delta_e00(shown, table.lab[rows]))
    return [_recipe(table, r, rgb_to_hex(table.rgb[r]), float(d), tolerance) for r, d in zip(rows, de)]


def recipes_for_srgb(colours, inventory: Inventory | None = None, **options) -> list[Recipe]:
    """:func:`solve_recipes` for sRGB colours.

    Parameters
    ----------
    colours : sequence of str (``#rrggbb``) or (N, 3) uint8 array
    inventory : Inventory, optional
    **options
        ``max_paints``, ``max_parts``, ``tolerance`` as for :func:`solve_recipes`.

    Raises
    ------
    ValueError
        If a colour is not ``#rrggbb`` (the message quotes it).
    """
    from .colour import srgb_to_lab

    if isinstance(colours, np.ndarray):
        rgb = np.asarray(colours, dtype=np.uint8).reshape(-1, 3)
    else:
        rgb = np.array([hex_to_rgb(c) for c in colours], dtype=np.uint8).reshape(-1, 3)
    hexes = [rgb_to_hex(c) for c in rgb]
    return solve_recipes(srgb_to_lab(rgb), inventory, targets_srgb=hexes, **options)


def predict_mix(parts: Mapping[str, float], inventory: Inventory | None = None) -> dict[str, Any]:
    """What a given mix of inventory paints looks like.

    Parameters
    ----------
    parts : mapping of paint name -> amount (> 0; any unit)
        Names are matched ignoring case.
    inventory : Inventory, optional

    Returns
    -------
    dict
        ``{"predicted_srgb": "#rrggbb", "lab": [L, a, b]}`` (Lab rounded to 0.01), and
        ``"no_tint": [names]`` when a mix of two or more uses paints without a tint.

    Raises
    ------
    ValueError
        For an unknown paint (the message lists the inventory), a paint given twice, or
        an amount that is not a number > 0.

    References
    ----------
    Kubelka & Munk (1931); Duncan (1940).
    """
    inventory = default_inventory() if inventory is None else inventory
    if not parts:
        raise ValueError("give at least one paint and its parts")
    amounts = np.zeros(len(inventory))
    for name, amount in parts.items():
        i = inventory.index(name)
        if amounts[i] > 0:
            raise ValueError(f"paint {inventory.paints[i].name!r} is given twice")
        if isinstance(amount, bool) or not isinstance(amount, (int, float)) or not math.isfinite(amount) or amount <= 0:
            raise ValueError(f"parts of {inventory.paints[i].name!r} must be a number > 0, got {amount!r}")
        amounts[i] = float(amount)
    used = np.flatnonzero(amounts > 0)
    optics = paint_optics(inventory).take(used)
    lab, srgb = mixing.mix_optics_colours(optics, amounts[used])
    out = {"predicted_srgb": rgb_to_hex(srgb), "lab": [round(float(v), 2) for v in lab]}
    if len(used) > 1 and not optics.from_tint.all():
        out["no_tint"] = [inventory.paints[i].name for i, t in zip(used, optics.from_tint) if not t]
    return out
