"""Swatch cards: measure your own paints from a phone photo.

A swatch card is an A4 sheet (ISO 216, 210 × 297 mm, printed at actual size) with two boxes
for each paint of an inventory: its **masstone** (the paint as it comes from the tin) and its
**tint** (one measured part of the paint with so many parts of the inventory's white, by
volume). The white gets one box. The card also carries

* four corner marks: a black ring with a black dot in its middle (our own design), found in
  the photo to undo the perspective (a plane-to-plane homography, Hartley & Zisserman 2004);
* a code strip of 32 black or white cells between the top marks, which tells which corner is
  which and checks that the photo is of the card printed for this inventory (tint ratio,
  number of paints, which is the white, and a check number of the paint names);
* a neutral grey patch, printed as sRGB #777777 (CIELAB L* 50, a mid grey), the colour
  reference the photo is balanced on;
* a 100 mm scale bar to check the card was printed at actual size.

:func:`card_svg` writes the card; :func:`read_card` finds it in a photo and measures each box:

1. the corner marks are found in a local-contrast threshold of the photo (connected
   components, scikit-image ``measure.label``/``regionprops``): a dark ring whose hole holds
   a dark dot at its centre, of the expected proportions;
2. a projective transform (``skimage.transform.ProjectiveTransform``) maps card millimetres
   to photo pixels; of the four ways the marks can be matched to the card's corners, the one
   whose code strip reads correctly is kept;
3. colours are worked on in linear sRGB (IEC 61966-2-1). Uneven light is taken out with the
   bare paper: a smooth (cubic) surface is fitted, per channel and robustly, to the paper
   between the boxes, and every sample is divided by it;
4. the colour of the light is taken out on the grey patch: each channel is scaled so the
   patch comes out as its printed grey — von Kries's coefficient rule (von Kries 1902) applied
   to the photo's linear channels, as camera white balance does (a diagonal transform; see
   Finlayson, Drew & Funt 1994 on why the channels matter);
5. each box is measured as the interquartile mean (the mean of the middle half, robust like
   the median) of a grid of samples over its middle half, so brush marks, specks and a little
   paint over the edge do not move it.

The result is an inventory (format 2, see :mod:`layerplan.inventory`): each paint's masstone
``srgb`` and its ``tint = {srgb, paint_parts, white_parts}``, and ``white = true`` on the white.

Limits: a phone's own tone curve is taken to be the sRGB curve, and the printed grey to be
the grey asked for; a printer whose greys are not neutral, or glare on wet or glossy paint,
shifts every colour. Glue a photographer's grey card over the patch for better light balance.

References
----------
.. [1] J. von Kries, "Chromatic adaptation", Festschrift der Albrecht-Ludwigs-Universität,
   1902 (trans. in D. L. MacAdam, Sources of Color Science, MIT Press, 1970).
.. [2] G. D. Finlayson, M. S. Drew, B. V. Funt, "Spectral sharpening: sensor transformations
   for improved color constancy", J. Opt. Soc. Am. A 11(5):1553-1563, 1994.
.. [3] R. Hartley, A. Zisserman, Multiple View Geometry in Computer Vision, 2nd ed., Cambridge
   University Press, 2004, ch. 4 (estimating a homography from point matches).
.. [4] IEC 61966-2-1:1999, Multimedia systems and equipment - Colour measurement and
   management - Default RGB colour space - sRGB.
.. [5] ISO 216:2007, Writing paper and certain classes of printed matter - Trimmed sizes
   (A4 = 210 × 297 mm).
"""

from __future__ import annotations

import hashlib
import json
import math
import os
import tempfile
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from .inventory import Inventory
from .plan import hex_to_rgb, rgb_to_hex

#: the card's paper, A4 portrait, mm (ISO 216)
CARD_W_MM, CARD_H_MM = 210.0, 297.0
#: corner-mark centres, mm from the card's top-left corner (clockwise from top-left)
MARK_CENTRES_MM = ((16.0, 16.0), (194.0, 16.0), (194.0, 281.0), (16.0, 281.0))
#: corner mark: outer radius of the black ring, radius of its white hole, radius of the black dot, mm
MARK_R_MM, MARK_HOLE_R_MM, MARK_DOT_R_MM = 7.0, 4.5, 2.5
#: code strip: cells, left edge, top, cell width and height, mm
CODE_CELLS, CODE_X_MM, CODE_Y_MM, CODE_CELL_W_MM, CODE_CELL_H_MM = 32, 41.0, 13.0, 4.0, 6.0
#: fixed cells at both ends of the code strip (they tell a readable strip from anything else)
CODE_START, CODE_END = (1, 0, 1), (0, 1)
#: paint grid: columns, rows, left edge of each column, top of the grid, row pitch, mm
GRID_COLUMNS, GRID_ROWS = 3, 7
GRID_X_MM = (14.0, 80.0, 146.0)
GRID_TOP_MM, ROW_PITCH_MM = 58.0, 28.0
#: a swatch box, mm (big enough to brush an even patch; its middle half is measured)
BOX_W_MM, BOX_H_MM, BOX_GAP_MM = 24.0, 18.0, 2.0
#: the most paints one card holds
MAX_CARD_PAINTS = GRID_COLUMNS * GRID_ROWS
#: the grey reference patch, mm, and its printed colour: sRGB #777777, CIELAB L* ≈ 50 (a mid grey)
GREY_RECT_MM = (75.0, 259.0, 60.0, 16.0)
GREY_SRGB = "#777777"
#: the default tint: 1 part paint to 9 parts white by volume (a reduction with white, as in
#: tinting-strength tests; common practice)
DEFAULT_TINT = (1, 9)
#: tint parts the code strip can carry
MAX_PAINT_PARTS, MAX_WHITE_PARTS = 16, 32
#: a white is a paint at least this light and at most this colourful (CIELAB L*, C*ab) — our choice
WHITE_MIN_L, WHITE_MAX_C = 85.0, 12.0
#: a box measured within this CIEDE2000 of the bare paper is taken to be unpainted (our choice)
BLANK_DE = 2.5
#: the photo is searched for the corner marks at most this many pixels along its longer side
DETECT_MAX_SIDE_PX = 1600
#: the middle part of a box that is measured, as a fraction of its width and height
SAMPLE_FRACTION = 0.5
#: paper is sampled this far from anything printed or painted, mm
PAPER_CLEARANCE_MM = 2.5
#: degree of the smooth surface fitted to the light on the paper (a cubic follows a light falling off
#: across the card and towards the photo's corners; the paper gives thousands of points for its 10 terms)
LIGHT_DEGREE = 3
#: the version of the card's layout (in the code strip's hash, so an old card is not misread)
LAYOUT_VERSION = 1


class SwatchError(ValueError):
    """A card that cannot be made or a photo that cannot be read; the message says what is wrong."""


# ----------------------------------------------------------------------------------- the layout
@dataclass(frozen=True)
class Box:
    """One swatch box: ``kind`` is "masstone" or "tint"; x, y (top-left), w, h in card mm."""

    paint: str
    kind: str
    x: float
    y: float
    w: float
    h: float

    @property
    def centre(self) -> tuple[float, float]:
        return (self.x + self.w / 2, self.y + self.h / 2)


@dataclass(frozen=True)
class CardLayout:
    """Where everything is on a swatch card (card mm, origin top-left, y down).

    Attributes
    ----------
    names : tuple of str
        The paints, in inventory order.
    white : int
        Index of the white in ``names``.
    tint : (paint_parts, white_parts)
    title : str
    boxes : tuple of Box
    labels : tuple of (x, y, text, size_mm)
        Text printed on the card (baseline left point).
    code : tuple of int
        The code strip's cells, 1 = black.
    ink : tuple of (x, y, w, h)
        Every area that is printed or painted (paper is sampled elsewhere).
    """

    names: tuple[str, ...]
    white: int
    tint: tuple[int, int]
    title: str
    boxes: tuple[Box, ...]
    labels: tuple[tuple[float, float, str, float], ...]
    code: tuple[int, ...]
    ink: tuple[tuple[float, float, float, float], ...]

    def code_cells(self) -> list[tuple[float, float, float, float, int]]:
        """(x, y, w, h, bit) of each code cell."""
        return [(CODE_X_MM + i * CODE_CELL_W_MM, CODE_Y_MM, CODE_CELL_W_MM, CODE_CELL_H_MM, b)
                for i, b in enumerate(self.code)]

    def paper_points(self, step_mm: float = 3.0) -> np.ndarray:
        """(N, 2) card-mm points of bare paper, at least :data:`PAPER_CLEARANCE_MM` from any ink."""
        xs = np.arange(8.0, CARD_W_MM - 8.0 + 1e-9, step_mm)
        ys = np.arange(8.0, CARD_H_MM - 8.0 + 1e-9, step_mm)
        gx, gy = np.meshgrid(xs, ys)
        pts = np.column_stack([gx.ravel(), gy.ravel()])
        keep = np.ones(len(pts), dtype=bool)
        c = PAPER_CLEARANCE_MM
        for x, y, w, h in self.ink:
            keep &= ~((pts[:, 0] > x - c) & (pts[:, 0] < x + w + c) & (pts[:, 1] > y - c) & (pts[:, 1] < y + h + c))
        for cx, cy in MARK_CENTRES_MM:
            keep &= np.hypot(pts[:, 0] - cx, pts[:, 1] - cy) > MARK_R_MM + c
        return pts[keep]


def _code_bits(names, white: int, tint: tuple[int, int]) -> tuple[int, ...]:
    """The 32 cells: start, tint parts, number of paints, the white's index, a check of the names, end."""
    digest = hashlib.sha256(json.dumps([LAYOUT_VERSION, [n.casefold() for n in names]]).encode("utf-8")).digest()

    def bits(value: int, n: int) -> list[int]:
        return [(value >> (n - 1 - k)) & 1 for k in range(n)]

    body = (bits(tint[0] - 1, 4) + bits(tint[1] - 1, 5) + bits(len(names) - 1, 5) + bits(white, 5)
            + bits(digest[0], 8))
    return tuple(CODE_START) + tuple(body) + tuple(CODE_END)


def _decode_bits(bits) -> dict[str, int] | None:
    """The fields of a code strip, or None if its fixed cells are wrong."""
    bits = list(bits)
    if tuple(bits[:3]) != CODE_START or tuple(bits[-2:]) != CODE_END:
        return None

    def value(a: int, n: int) -> int:
        return int("".join(str(b) for b in bits[a:a + n]), 2)

    return {"paint_parts": value(3, 4) + 1, "white_parts": value(7, 5) + 1, "paints": value(12, 5) + 1,
            "white": value(17, 5), "check": value(22, 8)}


def find_white(inventory: Inventory, white: str | None = None) -> int:
    """Index of the paint tints are made with.

    The paint named ``white``; else the one the inventory marks ``white = true``; else the
    only paint lighter than L* 85 and less colourful than C*ab 12.

    Raises
    ------
    SwatchError
        If no paint or more than one could be the white (the message says to name it).
    """
    if white is not None:
        try:
            return inventory.index(white)
        except ValueError as exc:
            raise SwatchError(f"--white: {exc}") from None
    marked = [i for i, p in enumerate(inventory.paints) if getattr(p, "white", False) is True]
    named = getattr(inventory, "white", None)  # an inventory that names its white (format 2)
    if not marked and isinstance(getattr(named, "name", None), str):
        marked = [inventory.index(named.name)]
    if len(marked) == 1:
        return marked[0]
    light = [i for i, p in enumerate(inventory.paints)
             if p.lab[0] >= WHITE_MIN_L and math.hypot(p.lab[1], p.lab[2]) <= WHITE_MAX_C]
    if len(light) == 1:
        return light[0]
    which = ", ".join(inventory.paints[i].name for i in light) if light else "none looks white"
    raise SwatchError(f"which paint are tints made with? ({which}); name it with --white NAME")


def check_tint(tint) -> tuple[int, int]:
    """``(paint_parts, white_parts)`` checked, or from text "1:9"; SwatchError naming the bad value."""
    if isinstance(tint, str):
        left, sep, right = tint.partition(":")
        try:
            parsed = (int(left), int(right)) if sep else None
        except ValueError:
            parsed = None
        if parsed is None:
            raise SwatchError(f"tint must be PAINT:WHITE in whole parts, e.g. 1:9; got {tint!r}")
        tint = parsed
    a, b = tint
    if not (isinstance(a, int) and isinstance(b, int) and 1 <= a <= MAX_PAINT_PARTS and 1 <= b <= MAX_WHITE_PARTS):
        raise SwatchError(f"tint must be 1 to {MAX_PAINT_PARTS} parts paint to 1 to {MAX_WHITE_PARTS} parts white, "
                          f"got {a}:{b}")
    return (a, b)


def card_layout(inventory: Inventory, *, white: str | None = None, tint=DEFAULT_TINT) -> CardLayout:
    """The swatch card for an inventory.

    Parameters
    ----------
    inventory : Inventory
        At most :data:`MAX_CARD_PAINTS` paints.
    white : str, optional, keyword-only
        The paint tints are made with (default: see :func:`find_white`).
    tint : (int, int) or str, keyword-only
        Parts of paint and of white in each tint box, by volume (default 1 : 9).

    Returns
    -------
    CardLayout

    Raises
    ------
    SwatchError
        Too many paints, no white, or a bad tint.
    """
    if not isinstance(inventory, Inventory) or not inventory.paints:
        raise SwatchError("the inventory has no paints")
    if len(inventory) > MAX_CARD_PAINTS:
        raise SwatchError(f"{len(inventory)} paints do not fit one swatch card (at most {MAX_CARD_PAINTS}); "
                          "split the inventory into smaller files and print a card for each")
    tint = check_tint(tint)
    w = find_white(inventory, white)
    names = tuple(inventory.names())
    boxes, labels = [], []
    ink: list[tuple[float, float, float, float]] = []
    title = inventory.title or "my paints"
    heading = f"Swatch card: {title}"
    labels.append((14.0, 30.0, heading if len(heading) <= 70 else heading[:69] + "…", 4.5))
    text = (f"Brush each paint thickly into its first box (two coats, no paper showing). For the second box mix "
            f"{tint[0]} part{'s' if tint[0] != 1 else ''} of the paint with {tint[1]} part{'s' if tint[1] != 1 else ''}"
            f" of {names[w]}, by volume.",
            "Let it dry fully (acrylic dries darker), then photograph the whole card, flat, in daylight, without glare"
            " or shadow.",
            "Keep the corner marks, the strip at the top and the grey patch clean. Read it with: layerplan swatches"
            " --read PHOTO",
            "Read each paint's safety sheet (some pigments are harmful); wear gloves and ventilate. In class, use "
            "non-toxic paints only.")
    for k, line in enumerate(text):
        labels.append((14.0, 38.0 + k * 5.0, line, 2.6))
    ink.append((12.0, 24.0, 186.0, 8.0))
    ink.append((12.0, 34.0, 186.0, 21.0))
    for i, name in enumerate(names):
        col, row = divmod(i, GRID_ROWS)
        x0, y0 = GRID_X_MM[col], GRID_TOP_MM + row * ROW_PITCH_MM
        labels.append((x0, y0 + 3.5, name, 3.2))
        ink.append((x0, y0, 2 * BOX_W_MM + BOX_GAP_MM, 4.5))
        boxes.append(Box(name, "masstone", x0, y0 + 5.0, BOX_W_MM, BOX_H_MM))
        labels.append((x0, y0 + 26.0, "as it comes" if i != w else "the white, as it comes", 2.2))
        if i != w:
            boxes.append(Box(name, "tint", x0 + BOX_W_MM + BOX_GAP_MM, y0 + 5.0, BOX_W_MM, BOX_H_MM))
            labels.append((x0 + BOX_W_MM + BOX_GAP_MM, y0 + 26.0, f"{tint[0]} : {tint[1]} with white", 2.2))
        ink.append((x0, y0 + 5.0, 2 * BOX_W_MM + BOX_GAP_MM, BOX_H_MM))
        ink.append((x0, y0 + 23.5, 2 * BOX_W_MM + BOX_GAP_MM, 3.5))
    gx, gy, gw, gh = GREY_RECT_MM
    labels.append((gx, gy - 1.5, "grey reference: do not paint (a photographer's 18 % grey card may be glued over it)",
                   2.4))
    ink.append((gx, gy - 4.5, 115.0, 4.0))
    ink.append(GREY_RECT_MM)
    labels.append((55.0, 291.0, "This line is 100 mm long when the card is printed at actual size.", 2.4))
    ink.append((54.0, 280.0, 102.0, 12.0))
    ink.append((CODE_X_MM, CODE_Y_MM, CODE_CELLS * CODE_CELL_W_MM, CODE_CELL_H_MM))
    return CardLayout(names, w, tint, title, tuple(boxes), tuple(labels), _code_bits(names, w, tint), tuple(ink))


def card_svg(layout: CardLayout) -> str:
    """The swatch card as an SVG document at true size (A4, millimetre units).

    Drawn by the template ``templates/swatches/card.svg`` over the layout.

    References
    ----------
    W3C, Scalable Vector Graphics (SVG) 1.1, §7 (``width``/``height`` in mm with a ``viewBox``).
    """
    from .report import environment

    return environment().get_template("swatches/card.svg").render(
        card=layout, width_mm=CARD_W_MM, height_mm=CARD_H_MM, marks=MARK_CENTRES_MM, mark_r=MARK_R_MM,
        hole_r=MARK_HOLE_R_MM, dot_r=MARK_DOT_R_MM, cells=layout.code_cells(), grey=GREY_RECT_MM,
        grey_srgb=GREY_SRGB)


# --------------------------------------------------------------------------------- colour helpers
def srgb_to_linear(v: np.ndarray) -> np.ndarray:
    """sRGB values 0–1 to linear light (IEC 61966-2-1)."""
    v = np.asarray(v, dtype=np.float64)
    return np.where(v <= 0.04045, v / 12.92, ((v + 0.055) / 1.055) ** 2.4)


def linear_to_srgb(v: np.ndarray) -> np.ndarray:
    """Linear light to sRGB values 0–1, clipped (IEC 61966-2-1)."""
    v = np.clip(np.asarray(v, dtype=np.float64), 0.0, 1.0)
    return np.where(v <= 0.0031308, v * 12.92, 1.055 * v ** (1 / 2.4) - 0.055)


def _hex_of_linear(v) -> str:
    return rgb_to_hex(np.round(linear_to_srgb(v) * 255.0).astype(int))


# ------------------------------------------------------------------------------- finding the card
def find_marks(photo: np.ndarray) -> list[np.ndarray]:
    """Where the card's four corner marks may be in a photo: (4, 2) pixel (x, y) sets, most likely first.

    One set when the photo shows four marks; when something else in the picture looks like a
    mark too, the sets of four most alike in size that span the largest area (the code strip
    then tells the right one).

    Raises
    ------
    SwatchError
        If fewer than four marks are found.
    """
    from skimage.color import rgb2gray
    from scipy.ndimage import uniform_filter
    from skimage.measure import label, regionprops
    from PIL import Image

    h, w = photo.shape[:2]
    scale = min(1.0, DETECT_MAX_SIDE_PX / max(h, w))
    if scale < 1.0:  # shrunk as 8-bit first: a 12-megapixel photo in floating point would take 300 MB
        size = (max(1, round(w * scale)), max(1, round(h * scale)))
        small = np.asarray(Image.fromarray(photo).resize(size, Image.Resampling.BOX))
        scale = size[0] / w
    else:
        small = photo
    gray = rgb2gray(small)
    # dark against its surroundings: a local threshold copes with light falling off across the card
    size = max(3, int(max(gray.shape) / 12))
    local = uniform_filter(uniform_filter(gray, size), size)  # a box filter twice: a cheap smooth local mean
    dark = gray < 0.6 * local
    lab = label(dark, connectivity=2)
    min_area = (max(gray.shape) / 150.0) ** 2
    # specks and letters are dropped before measuring shapes (a photo has thousands of them)
    small = np.bincount(lab.ravel()) < min_area
    small[0] = True
    lab[small[lab]] = 0
    found = []
    for region in regionprops(lab):
        filled = region.image_filled
        hole = filled & ~region.image
        f_area = filled.sum()
        if f_area == 0:
            continue
        hole_ratio = hole.sum() / f_area
        # the ring's hole holds the white ring and the dot: (4.5 / 7)² ≈ 0.41 of the mark
        if not 0.2 < hole_ratio < 0.65:
            continue
        r0, c0, r1, c1 = region.bbox
        sub = lab[r0:r1, c0:c1]
        inner = hole & (sub > 0) & (sub != region.label)
        dot_ratio = inner.sum() / f_area
        # the dot is (2.5 / 7)² ≈ 0.13 of the mark
        if not 0.05 < dot_ratio < 0.3:
            continue
        rr, cc = np.nonzero(inner)
        dot = np.array([cc.mean() + c0, rr.mean() + r0])
        fr, fc = np.nonzero(filled)
        centre = np.array([fc.mean() + c0, fr.mean() + r0])
        size = math.sqrt(f_area)
        if np.hypot(*(dot - centre)) > 0.15 * size:
            continue
        if region.solidity < 0.3 or (filled.sum() / region.area_convex) < 0.85:
            continue
        found.append((f_area, dot))
    if len(found) < 4:
        raise SwatchError(f"no swatch card found in the photo: {len(found)} of its 4 corner marks seen. Photograph "
                          "the whole card, flat and sharp, in even light, with all four corners in the picture")
    return [np.array([d for _, d in four]) / scale for four in _likely_fours(found)]


#: at most this many sets of four marks are tried
MAX_MARK_SETS = 10


def _likely_fours(found):
    """Sets of four marks, most alike in size and spanning the largest quadrilateral first."""
    import itertools

    if len(found) == 4:
        return [found]
    found = sorted(found, key=lambda f: -f[0])[:10]
    scored = []
    for combo in itertools.combinations(found, 4):
        areas = np.array([a for a, _ in combo])
        pts = np.array([d for _, d in combo])
        spread = areas.max() / areas.min()
        if spread > 3.0:
            continue
        quad = _order_clockwise(pts)
        x, y = quad[:, 0], quad[:, 1]
        area = 0.5 * abs(np.dot(x, np.roll(y, -1)) - np.dot(y, np.roll(x, -1)))
        scored.append((area / spread, combo))
    if not scored:
        raise SwatchError("no swatch card found in the photo: the marks seen are not the card's four corners")
    scored.sort(key=lambda sc: -sc[0])
    return [list(combo) for _, combo in scored[:MAX_MARK_SETS]]


def _order_clockwise(pts: np.ndarray) -> np.ndarray:
    """Points sorted by angle about their mean: clockwise as seen (image y points down)."""
    c = pts.mean(axis=0)
    return pts[np.argsort(np.arctan2(pts[:, 1] - c[1], pts[:, 0] - c[0]))]


def _sampler(photo: np.ndarray):
    """A function giving the photo's linear sRGB at (N, 2) pixel (x, y) points (bilinear)."""
    from scipy.ndimage import map_coordinates

    channels = [np.ascontiguousarray(photo[..., k]) for k in range(3)]

    def sample(xy: np.ndarray) -> np.ndarray:
        coords = [xy[:, 1], xy[:, 0]]
        vals = np.column_stack([map_coordinates(c, coords, order=1, mode="nearest") for c in channels])
        return srgb_to_linear(vals / 255.0)

    return sample


def _grid_in(x: float, y: float, w: float, h: float, n: int) -> np.ndarray:
    """(n*n, 2) points evenly over the middle of a rectangle (card mm)."""
    fx = (np.arange(n) + 0.5) / n
    gx, gy = np.meshgrid(x + fx * w, y + fx * h)
    return np.column_stack([gx.ravel(), gy.ravel()])


def _light_terms(pts: np.ndarray) -> np.ndarray:
    """The terms of a cubic surface over the card (its log is fitted to the paper's light)."""
    u = pts[:, 0] / CARD_W_MM - 0.5
    v = pts[:, 1] / CARD_H_MM - 0.5
    return np.column_stack([u ** i * v ** (d - i) for d in range(LIGHT_DEGREE + 1) for i in range(d + 1)])


def _fit_light(pts: np.ndarray, values: np.ndarray) -> np.ndarray:
    """Light-surface coefficients (terms, 3) per channel, fitted robustly (outliers: 3 MADs, refit)."""
    A = _light_terms(pts)
    keep = np.ones(len(pts), dtype=bool)
    coef = None
    for _ in range(4):
        coef, *_ = np.linalg.lstsq(A[keep], np.log(np.maximum(values[keep], 1e-4)), rcond=None)
        resid = np.abs(np.log(np.maximum(values, 1e-4)) - A @ coef).max(axis=1)
        mad = np.median(resid[keep]) + 1e-6
        new = resid < max(3.0 * 1.4826 * mad, 0.01)
        if new.sum() < 12 or np.array_equal(new, keep):
            break
        keep = new
    return coef


@dataclass(frozen=True)
class CardReading:
    """What :func:`read_card` measured.

    Attributes
    ----------
    layout : CardLayout
    colours : dict
        ``(paint, kind) -> "#rrggbb"`` for every box measured as painted.
    blank : tuple of (paint, kind)
        Boxes that look unpainted (the colour of the bare paper).
    paper_srgb : str
        The bare paper, as balanced.
    marks_px : (4, 2) array
        The corner marks in the photo, clockwise from the card's top-left.
    """

    layout: CardLayout
    colours: dict[tuple[str, str], str]
    blank: tuple[tuple[str, str], ...]
    paper_srgb: str
    marks_px: np.ndarray


def read_card(photo: np.ndarray, inventory: Inventory) -> CardReading:
    """Find a painted swatch card in a photo and measure its boxes.

    Parameters
    ----------
    photo : (H, W, 3) uint8 array
        sRGB, as :func:`layerplan.load.load_image` reads it.
    inventory : Inventory
        The inventory the card was printed from (its code strip is checked against it).

    Returns
    -------
    CardReading

    Raises
    ------
    SwatchError
        No card in the photo, an unreadable code strip, or a card printed for another
        inventory (the message says which).

    References
    ----------
    von Kries (1902); Finlayson, Drew & Funt (1994); Hartley & Zisserman (2004); IEC 61966-2-1.
    """
    from skimage.transform import ProjectiveTransform

    photo = np.asarray(photo)
    if photo.ndim != 3 or photo.shape[2] != 3 or photo.dtype != np.uint8:
        raise SwatchError(f"the photo must be an (H, W, 3) uint8 sRGB image, got {photo.dtype} {photo.shape}")
    candidates = find_marks(photo)
    sample = _sampler(photo)
    src = np.array(MARK_CENTRES_MM)
    best = None
    for marks in candidates:
        marks = _order_clockwise(marks)
        for k in range(4):  # which mark is the card's top-left: the one the code strip reads from
            dst = np.roll(marks, -k, axis=0)
            tform = ProjectiveTransform.from_estimate(src, dst)
            if not tform:
                continue
            bits, contrast = _read_code(tform, sample)
            fields = _decode_bits(bits)
            # the strip sits by the top marks: the grey patch by the bottom ones checks those too
            if fields is not None and (best is None or contrast > best[3]) and _grey_in_place(tform, sample):
                best = (tform, dst, fields, contrast)
        if best is not None:
            break
    if best is None:
        raise SwatchError("found four corner marks but cannot read the card's code strip (the row of black and "
                          "white cells at the top): is the whole card in the photo, sharp and free of glare?")
    tform, dst, fields, _ = best
    layout = _layout_for(inventory, fields)

    def at(pts_mm):
        return sample(tform(pts_mm))

    # uneven light, from the bare paper
    paper_mm = layout.paper_points()
    offsets = np.array([[0.0, 0.0], [0.6, 0.0], [-0.6, 0.0], [0.0, 0.6], [0.0, -0.6]])
    paper = np.median(np.stack([at(paper_mm + o) for o in offsets]), axis=0)
    coef = _fit_light(paper_mm, paper)

    def flat(pts_mm, values):
        return values / np.exp(_light_terms(pts_mm) @ coef)

    def measure(x, y, w, h):
        f = SAMPLE_FRACTION
        pts = _grid_in(x + w * (1 - f) / 2, y + h * (1 - f) / 2, w * f, h * f, 24)
        return _midmean(flat(pts, at(pts)))

    # the light's colour, from the grey patch (von Kries: one gain per linear channel)
    grey = measure(*GREY_RECT_MM)
    grey_ref = srgb_to_linear(np.array(hex_to_rgb(GREY_SRGB)) / 255.0)
    if np.any(grey <= 0.02):
        raise SwatchError("the grey patch is too dark in the photo to balance on: is it covered or in shadow?")
    gain = grey_ref / grey
    paper_lin = np.median(flat(paper_mm, paper), axis=0) * gain
    from .colour import delta_e00, srgb_to_lab

    paper_lab = srgb_to_lab(np.array(hex_to_rgb(_hex_of_linear(paper_lin)), dtype=np.uint8))
    colours: dict[tuple[str, str], str] = {}
    blank = []
    for box in layout.boxes:
        value = measure(box.x, box.y, box.w, box.h) * gain
        hexed = _hex_of_linear(value)
        lab = srgb_to_lab(np.array(hex_to_rgb(hexed), dtype=np.uint8))
        is_white = box.paint == layout.names[layout.white]
        if not is_white and float(delta_e00(lab, paper_lab)) < BLANK_DE:
            blank.append((box.paint, box.kind))
            continue
        colours[(box.paint, box.kind)] = hexed
    return CardReading(layout, colours, tuple(blank), _hex_of_linear(paper_lin), dst)


def _midmean(values: np.ndarray) -> np.ndarray:
    """Per channel, the mean of the middle half of the values (the interquartile mean).

    As robust as the median to brush marks and specks, but it averages away the photo's
    8-bit steps where the median would land on one of them (a 1 % error in a dark channel).
    """
    v = np.sort(values, axis=0)
    n = len(v)
    return v[n // 4: max(n // 4 + 1, n - n // 4)].mean(axis=0)


def _grey_in_place(tform, sample) -> bool:
    """Whether the grey patch is where the card has it: an even patch, much darker than the paper below it."""
    luminance = np.array([0.2126, 0.7152, 0.0722])  # IEC 61966-2-1 (Rec. 709 primaries)
    gx, gy, gw, gh = GREY_RECT_MM
    grey = sample(tform(_grid_in(gx + 0.2 * gw, gy + 0.2 * gh, 0.6 * gw, 0.6 * gh, 8))) @ luminance
    paper = sample(tform(_grid_in(gx, gy + gh + 2.0, gw, 1.5, 8))) @ luminance
    level, spread = np.median(grey), np.subtract(*np.percentile(grey, [75, 25]))
    ratio = level / max(float(np.median(paper)), 1e-6)
    return bool(0.08 < ratio < 0.5 and spread < 0.2 * level)


def _read_code(tform, sample) -> tuple[list[int], float]:
    """The code strip's cells (1 = dark) and how clearly they read (dark/light contrast)."""
    cells = [(CODE_X_MM + i * CODE_CELL_W_MM, CODE_Y_MM, CODE_CELL_W_MM, CODE_CELL_H_MM) for i in range(CODE_CELLS)]
    levels = []
    for x, y, w, h in cells:
        pts = _grid_in(x + w * 0.25, y + h * 0.25, w * 0.5, h * 0.5, 5)
        levels.append(float(np.median(sample(tform(pts)) @ np.array([0.2126, 0.7152, 0.0722]))))
    levels = np.array(levels)
    # the paper just above the strip is the light level the cells are judged against
    above = _grid_in(CODE_X_MM, CODE_Y_MM - 4.0, CODE_CELLS * CODE_CELL_W_MM, 2.0, 12)
    paper = float(np.median(sample(tform(above)) @ np.array([0.2126, 0.7152, 0.0722])))
    if paper <= 0:
        return [0] * CODE_CELLS, 0.0
    rel = levels / paper
    bits = [int(v < 0.45) for v in rel]
    dark, light = rel[np.array(bits) == 1], rel[np.array(bits) == 0]
    contrast = float(light.mean() - dark.mean()) if len(dark) and len(light) else 0.0
    return bits, contrast


def _layout_for(inventory: Inventory, fields: dict[str, int]) -> CardLayout:
    """The layout the code strip describes, checked against the inventory."""
    if fields["paints"] != len(inventory):
        raise SwatchError(f"this card was printed for {fields['paints']} paints, but the inventory has "
                          f"{len(inventory)}: give the inventory the card was printed from (--inventory)")
    if not 0 <= fields["white"] < len(inventory):
        raise SwatchError("the card's code strip does not read correctly (its white is not one of the paints)")
    layout = card_layout(inventory, white=inventory.paints[fields["white"]].name,
                         tint=(fields["paint_parts"], fields["white_parts"]))
    expected = _decode_bits(layout.code)
    if expected["check"] != fields["check"]:
        raise SwatchError("this card was printed for paints with other names than the inventory's: give the "
                          "inventory the card was printed from (--inventory)")
    return layout


# ----------------------------------------------------------------------------- the inventory file
def _toml_string(text: str) -> str:
    # a JSON string is a TOML basic string (the same escapes, TOML 1.0 "String")
    return json.dumps(text, ensure_ascii=False)


def inventory_toml(reading: CardReading, inventory: Inventory) -> str:
    """The measured paints as an inventory file (format 2), TOML text.

    Each paint gets its masstone ``srgb`` and, where its tint box was painted, ``tint``; the
    white gets ``white = true``. Tin sizes and notes are kept from ``inventory``. A paint whose
    masstone box is blank is left out (a comment says so).

    Raises
    ------
    SwatchError
        If no box was painted.
    """
    import tomllib

    layout = reading.layout
    white_name = layout.names[layout.white]
    if not any(paint != white_name for paint, _ in reading.colours):  # the white's box may just be paper
        raise SwatchError("no painted boxes found on the card: paint the boxes, let them dry, and photograph again")
    lines = ["# Paints measured from a photo of a layerplan swatch card (layerplan swatches --read).",
             "# Colours are as the photo showed them, balanced on the card's grey patch: photos and",
             "# screens shift colour, so check each against its paint before mixing litres.",
             f"# The bare paper read as {reading.paper_srgb}."]
    if inventory.title:
        lines.append(f"title = {_toml_string(inventory.title)}")
    a, b = layout.tint
    for i, p in enumerate(inventory.paints):
        masstone = reading.colours.get((p.name, "masstone"))
        lines.append("")
        if masstone is None:
            lines.append(f"# {p.name}: its box was not painted, so it is left out")
            continue
        lines.append("[[paint]]")
        lines.append(f"name = {_toml_string(p.name)}")
        lines.append(f"srgb = \"{masstone}\"")
        if i == layout.white:
            lines.append("white = true")
        else:
            tint = reading.colours.get((p.name, "tint"))
            if tint is None:
                lines.append("# its tint box was not painted: mixes with it are predicted less surely")
            else:
                lines.append(f"tint = {{ srgb = \"{tint}\", paint_parts = {a}, white_parts = {b} }}")
            strength = getattr(p, "tinting_strength", 1.0)
            if tint is None and strength != 1.0:  # without a tint, the old guide still helps
                lines.append(f"tinting_strength = {strength:g}")
        if p.containers_l:
            lines.append("containers_l = [" + ", ".join(f"{c:g}" for c in p.containers_l) + "]")
        if p.note:
            lines.append(f"note = {_toml_string(p.note)}")
    text = "\n".join(lines) + "\n"
    tomllib.loads(text)  # what we write must read back
    return text


def write_new_file(path, data: bytes) -> Path:
    """Write ``data`` to a new file, atomically; an existing file is never replaced.

    Raises
    ------
    SwatchError
        If ``path`` exists or its folder does not.
    """
    out = Path(path)
    if out.exists():
        raise SwatchError(f"{out} already exists; give another --out (nothing was written)")
    if not out.parent.is_dir():
        raise SwatchError(f"{out.parent} is not a folder; give an --out in an existing folder")
    fd, tmp = tempfile.mkstemp(prefix=f".{out.name}.", dir=out.parent)
    try:
        with os.fdopen(fd, "wb") as f:
            f.write(data)
        os.link(tmp, out)  # fails, rather than replaces, if the file appeared meanwhile
    except FileExistsError:
        raise SwatchError(f"{out} already exists; give another --out (nothing was written)") from None
    finally:
        os.unlink(tmp)
    return out


def paint_colours(inventory: Inventory) -> list[dict[str, Any]]:
    """``[{"name", "srgb", "white"}]`` for the card's listing on the web page."""
    try:
        w = find_white(inventory)
    except SwatchError:
        w = -1
    return [{"name": p.name, "srgb": p.srgb, "white": i == w} for i, p in enumerate(inventory.paints)]


__all__ = ["Box", "CardLayout", "CardReading", "SwatchError", "card_layout", "card_svg",
           "find_marks", "find_white", "inventory_toml", "read_card", "write_new_file"]
