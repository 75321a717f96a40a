"""Value study: N greys mixed from a set's black and white, evenly spaced in lightness.

A value scale is a common first painting exercise before colour (common practice): students mix
a row of greys from white to black in even steps, then paint a picture in those greys only. The
steps are even in CIELAB lightness L*, between the darkest and the lightest the set can mix (its
black and its white alone); the mix ratios come from the paint model
(:mod:`layerplan.mixing`, two-constant Kubelka–Munk), in whole parts a class can measure.

Black is much stronger than white (a drop of black greys a pot of white), so the light steps
need many parts of white to one of black; each step takes the simplest whole-part ratio within
:data:`VALUE_TOLERANCE_L` of its lightness.

References
----------
.. [1] P. Kubelka, F. Munk, "Ein Beitrag zur Optik der Farbanstriche", Z. tech. Physik 12, 1931.
.. [2] D. R. Duncan, "The colour of pigment mixtures", Proc. Phys. Soc. 52:390, 1940.
.. [3] CIE 15:2004, Colorimetry (CIELAB L*).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .inventory import Inventory

#: most whole parts of one step's mix (black + white). On a ten-step scale the lightest grey needs
#: about 1 part of black to 150 of white: a drop of black in a small pot of white (a drop is about
#: 0.05 mL, some 20 to a millilitre; from memory), so such steps are mixed beforehand (our choice)
VALUE_MAX_PARTS = 200
#: a step's mix is taken when its L* is within this of the even step (our choice; half the ±2 L*
#: a value scale is judged by, so rounding to whole parts keeps the scale even)
VALUE_TOLERANCE_L = 1.0


@dataclass(frozen=True)
class ValueStep:
    """One grey of the scale: whole parts of black and white, its wanted and predicted L*."""

    black_parts: int
    white_parts: int
    target_l: float
    predicted_lab: tuple[float, float, float]
    predicted_srgb: str


def black_and_white(inventory: Inventory) -> tuple[int, int]:
    """Indices of the set's black (the darkest paint) and white (its ``white``, else the lightest).

    Raises
    ------
    ValueError
        A set of one paint, or whose darkest and lightest are the same paint.
    """
    lightness = [p.lab[0] for p in inventory.paints]
    dark = int(np.argmin(lightness))
    light = inventory.index(inventory.white.name) if inventory.white is not None else int(np.argmax(lightness))
    if dark == light or len(inventory) < 2:
        raise ValueError("a value study needs a black and a white in the paint set")
    return dark, light


def value_scale(inventory: Inventory, steps: int) -> list[ValueStep]:
    """The greys of a value study, lightest first.

    Parameters
    ----------
    inventory : Inventory
        The paint set; its darkest paint and its white are mixed.
    steps : int
        Number of greys, >= 2; the first is the white alone and the last the black alone.

    Returns
    -------
    list of ValueStep
        L* evenly spaced from the white's to the black's (as the model predicts them), each
        with the simplest whole-part ratio within :data:`VALUE_TOLERANCE_L`, or the nearest.

    Raises
    ------
    ValueError
        If ``steps`` < 2, or the set has no black and white.

    References
    ----------
    Kubelka & Munk (1931); Duncan (1940); CIE 15:2004.
    """
    from .recipes import paint_optics
    from .mixing import mix_optics_colours

    if isinstance(steps, bool) or not isinstance(steps, int) or steps < 2:
        raise ValueError(f"a value study needs at least 2 greys, got {steps!r}")
    dark, light = black_and_white(inventory)
    optics = paint_optics(inventory).take([dark, light])
    # every whole-part mix up to the cap: (black, white) with black + white <= VALUE_MAX_PARTS
    pairs = np.array([(b, t - b) for t in range(1, VALUE_MAX_PARTS + 1) for b in range(t + 1)
                      if np.gcd(b, t - b) == 1], dtype=float)
    lab, srgb = mix_optics_colours(optics, pairs)
    lightest, darkest = float(lab[(pairs[:, 0] == 0)][0, 0]), float(lab[(pairs[:, 1] == 0)][0, 0])
    targets = np.linspace(lightest, darkest, steps)
    total = pairs.sum(axis=1)
    out = []
    for target in targets:
        off = np.abs(lab[:, 0] - target)
        close = np.flatnonzero(off <= VALUE_TOLERANCE_L)
        row = int(close[np.argmin(total[close] + off[close] / 100.0)]) if len(close) else int(np.argmin(off))
        out.append(ValueStep(int(pairs[row, 0]), int(pairs[row, 1]), round(float(target), 2),
                             tuple(round(float(v), 3) for v in lab[row]), "#%02x%02x%02x" % tuple(srgb[row])))
    return out


def value_palette(inventory: Inventory, steps: int):
    """The palette of a value study, as :func:`layerplan.pipeline.choose_palette` returns a palette.

    Returns
    -------
    rgb : (N, 3) uint8 array
    lab : (N, 3) float array
        The predicted greys, lightest first.
    recipes : list of dict
        Recipes in plan.json's form (:meth:`layerplan.recipes.Recipe.to_dict`), the target
        being the even grey.
    scale : list of ValueStep
    """
    from .colour import delta_e00
    from .mixing import lab_to_xyz, xyz_to_srgb

    dark, light = black_and_white(inventory)
    scale = value_scale(inventory, steps)
    names = inventory.paints[dark].name, inventory.paints[light].name
    rgb = np.array([[int(s.predicted_srgb[i:i + 2], 16) for i in (1, 3, 5)] for s in scale], dtype=np.uint8)
    lab = np.array([s.predicted_lab for s in scale], dtype=float)
    recipes = []
    for s, row in zip(scale, lab):
        wanted = np.array([s.target_l, 0.0, 0.0])
        target = "#%02x%02x%02x" % tuple(xyz_to_srgb(lab_to_xyz(wanted)))
        parts = [(n, p) for n, p in ((names[1], s.white_parts), (names[0], s.black_parts)) if p]
        parts.sort(key=lambda np_: -np_[1])
        de = float(delta_e00(wanted[None, :], row[None, :])[0])
        recipes.append({"target": target, "parts": [{"paint": n, "parts": int(p)} for n, p in parts],
                        "predicted_srgb": s.predicted_srgb, "delta_e": round(de, 2), "in_gamut": True})
    return rgb, lab, recipes, scale


def mix_value_palette(settings):
    """:func:`layerplan.pipeline.choose_palette`'s four results for a value study, and plan.json's section.

    Returns
    -------
    rgb, lab, recipes, inventory
        As :func:`layerplan.pipeline.choose_palette` returns them, the greys lightest first.
    section : dict
        plan.json's ``value_study``: ``{"steps": N, "black": name, "white": name, "greys": [{"paint",
        "target_l", "l", "parts": {"black", "white"}}, ...]}``.
    """
    from .inventory import default_inventory, load_inventory

    inv = default_inventory() if settings.inventory is None else load_inventory(settings.inventory)
    rgb, lab, recipes, scale = value_palette(inv, settings.value_study)
    dark, light = black_and_white(inv)
    stock = [{"name": p.name, "srgb": p.srgb, "tinting_strength": p.tinting_strength,
              "containers_l": list(p.containers_l)} for p in inv.paints]
    section = {"steps": len(scale), "black": inv.paints[dark].name, "white": inv.paints[light].name,
               "greys": [{"paint": f"P{i + 1}", "target_l": s.target_l, "l": s.predicted_lab[0],
                          "parts": {"black": s.black_parts, "white": s.white_parts}}
                         for i, s in enumerate(scale)]}
    return rgb, lab, recipes, stock, section
