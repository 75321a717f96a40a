"""Synthetic photos of a painted swatch card, for tests/test_swatches.py.

The card is painted from its layout (layerplan.swatches.CardLayout) at a few pixels per mm in
linear-light reflectances, then photographed: placed on a table in perspective
(skimage.transform.warp), lit by an uneven, coloured light, encoded as sRGB (IEC 61966-2-1),
given sensor noise and saved as JPEG (Pillow) — the things a phone photo does to it.
"""

from __future__ import annotations

import io

import numpy as np
from PIL import Image
from skimage.transform import ProjectiveTransform, warp

from layerplan.plan import hex_to_rgb
from layerplan.swatches import (CARD_H_MM, CARD_W_MM, GREY_RECT_MM, GREY_SRGB, MARK_CENTRES_MM, MARK_DOT_R_MM,
                                MARK_HOLE_R_MM, MARK_R_MM, linear_to_srgb, srgb_to_linear)

#: bare office paper, linear reflectance per channel (a little blue, as brightened paper is; our choice)
PAPER = np.array([0.82, 0.84, 0.88])
#: toner black, linear reflectance (our choice)
INK = np.array([0.03, 0.03, 0.03])


def lin(hex_colour: str) -> np.ndarray:
    return srgb_to_linear(np.array(hex_to_rgb(hex_colour)) / 255.0)


def paint_card(layout, colours: dict, *, px_per_mm: float = 4.0, rng=None) -> np.ndarray:
    """(H, W, 3) linear reflectance of the printed and painted card; ``colours``: (paint, kind) -> hex."""
    h, w = int(CARD_H_MM * px_per_mm), int(CARD_W_MM * px_per_mm)
    img = np.ones((h, w, 3)) * PAPER
    yy, xx = np.mgrid[0:h, 0:w]
    xm, ym = (xx + 0.5) / px_per_mm, (yy + 0.5) / px_per_mm

    def rect(x, y, rw, rh):  # the pixels whose centres fall in a card-mm rectangle
        c0, c1 = int(np.ceil(x * px_per_mm - 0.5)), int(np.ceil((x + rw) * px_per_mm - 0.5))
        r0, r1 = int(np.ceil(y * px_per_mm - 0.5)), int(np.ceil((y + rh) * px_per_mm - 0.5))
        return slice(max(r0, 0), max(r1, 0)), slice(max(c0, 0), max(c1, 0))
    for cx, cy in MARK_CENTRES_MM:
        r = np.hypot(xm - cx, ym - cy)
        img[((r <= MARK_R_MM) & (r >= MARK_HOLE_R_MM)) | (r <= MARK_DOT_R_MM)] = INK
    for x, y, cw, ch, bit in layout.code_cells():
        if bit:
            img[rect(x, y, cw, ch)] = INK
    gx, gy, gw, gh = GREY_RECT_MM
    img[rect(gx, gy, gw, gh)] = lin(GREY_SRGB)
    rng = rng or np.random.default_rng(0)
    specks = rng.random((h, w)) < 0.3
    texture = 1.0 + 0.03 * rng.standard_normal((h, w, 1))
    for x, y, tw, size in [(l[0], l[1], len(l[2]) * l[3] * 0.5, l[3]) for l in layout.labels]:
        # text: specks of ink along the line
        band = rect(x, y - size * 0.7, tw, size * 0.7)
        img[band][specks[band]] = INK
    for box in layout.boxes:
        colour = colours.get((box.paint, box.kind))
        if colour is None:
            continue
        # a painted patch spills a little past its box, with some brush texture
        inside = rect(box.x - 0.5, box.y - 0.5, box.w + 1.0, box.h + 1.0)
        img[inside] = lin(colour) * texture[inside]
    # paper and print are not perfectly even: a blotchy 2 % texture at about a millimetre
    from scipy.ndimage import gaussian_filter

    grain = gaussian_filter(rng.standard_normal((h, w)), px_per_mm * 0.5)
    img *= (1.0 + 0.02 * grain / grain.std())[..., None]
    return np.clip(img, 0, 1)


def photograph(card: np.ndarray, *, corners_px, size=(1200, 1600), light=(1.0, 0.85, 0.62), gradient=0.35,
               exposure=0.95, noise=2.0, jpeg_quality=85, rng=None) -> bytes:
    """A JPEG of the card on a table: ``corners_px`` are where the card's corners land (TL, TR, BR, BL)."""
    rng = rng or np.random.default_rng(1)
    H, W = size
    ch, cw = card.shape[:2]
    tform = ProjectiveTransform.from_estimate(np.array(corners_px, float),
                                              np.array([[0, 0], [cw, 0], [cw, ch], [0, ch]], float))
    table = np.ones((H, W, 3)) * np.array([0.25, 0.17, 0.10]) * (1 + 0.2 * rng.standard_normal((H, W, 1)))
    warped = warp(card, tform, output_shape=(H, W), order=1, cval=-1.0)
    scene = np.where(warped >= 0, warped, np.clip(table, 0, 1))
    yy, xx = np.mgrid[0:H, 0:W]
    u, v = xx / W - 0.5, yy / H - 0.5
    field = (1.0 + gradient * (u + 0.5 * v)) * (1.0 - 0.5 * (u * u + v * v))
    lit = scene * field[..., None] * np.array(light) * exposure
    encoded = linear_to_srgb(lit) * 255.0 + noise * rng.standard_normal(lit.shape)
    rgb = np.clip(np.round(encoded), 0, 255).astype(np.uint8)
    buf = io.BytesIO()
    Image.fromarray(rgb).save(buf, format="JPEG", quality=jpeg_quality)
    return buf.getvalue()
