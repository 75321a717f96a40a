"""Pigment mixing: spectral upsampling and single-constant Kubelka–Munk.

Paints mix by subtracting light, not by averaging screen colours, so a mix is predicted
from reflectance spectra:

1. **Reflectance of each paint from its colour.** An sRGB colour fixes only three
   numbers; a spectrum is recovered with the spectral primary decomposition of Mallett &
   Yuksel (2019): the linear sRGB value weights three fixed basis spectra, 380–780 nm in
   5 nm steps (colour-science's ``RGB_to_sd_Mallett2019`` does the same; the tests compare).
2. **Mixing.** Per wavelength, the Kubelka–Munk ratio of absorption to scattering is
   ``K/S = (1 − R)² / 2R`` (Kubelka & Munk 1931). In the single-constant simplification
   used for paints (all paints taken to scatter alike; Berns & Mohammadi 2007; Allen 1980)
   the mix's K/S is the concentration-weighted mean of the paints' K/S, each paint's
   parts multiplied by its tinting strength:
   ``(K/S)_mix = Σ cᵢ tᵢ (K/S)ᵢ / Σ cᵢ tᵢ``. Back to reflectance with the inverse,
   ``R = 1 + K/S − √((K/S)² + 2·K/S)``. (With the strengths this equals the two-constant
   model with ``Kᵢ, Sᵢ ∝ tᵢ``; a paint alone is unchanged whatever its strength.)
3. **Colour of the mix.** Tristimulus values with the CIE 1931 2° observer under
   illuminant D65 (CIE 15:2004), normalised so the perfect white reflector has Y = 1,
   then CIELAB against that white and sRGB (IEC 61966-2-1) for display.

The basis spectra, colour-matching functions and illuminant are package data
(``layerplan/data/*.csv``, each headed by its source and licence), so mixing needs only numpy.

Why Mallett & Yuksel (2019) rather than Jakob & Hanika (2019), Otsu et al. (2018) or
Meng et al. (2015): (a) every sRGB colour, including the gamut corners, gets a
reflectance inside [0, 1], which Kubelka–Munk needs (R ≤ 1, and R > 0 except for pure
black, which is floored at :data:`R_MIN`); (b) its basis was fitted for exactly the
illuminant and observer used here, so a paint's own colour comes back unchanged
(round trip under 0.01 ΔE00); (c) it is linear and closed-form, so a whole inventory is
upsampled in microseconds with no optimiser that can fail to converge — Jakob & Hanika's
fit takes 0.1–1 s per colour in colour-science, Meng's more. The price: its spectra are
step-like (edges near 490 and 590 nm) rather than smooth, so mixes of complementary
hues (a deep blue with a yellow) come out a little duller and bluer than the smooth
sigmoid spectra of Jakob & Hanika would give. All of these methods guess a spectrum
from three numbers, so recipes are a starting point for the painter's own test swatch.

References
----------
.. [1] P. Kubelka, F. Munk, "Ein Beitrag zur Optik der Farbanstriche",
   Zeitschrift für technische Physik 12:593–601, 1931.
.. [2] R. S. Berns, M. Mohammadi, "Single-constant simplification of Kubelka-Munk
   turbid-media theory for paint systems — a review", Color Res. Appl. 32(3):201–207, 2007.
.. [3] E. Allen, "Colorant formulation and shading", in F. Grum, C. J. Bartleson (eds.),
   Optical Radiation Measurements, vol. 2: Color Measurement, Academic Press, 1980.
.. [4] I. Mallett, C. Yuksel, "Spectral Primary Decomposition for Rendering with sRGB
   Reflectance", Eurographics Symposium on Rendering (DL-only track), 2019.
.. [5] CIE 15:2004, Colorimetry, 3rd ed.; IEC 61966-2-1:1999 (sRGB).
"""

from __future__ import annotations

from functools import lru_cache
from importlib import resources

import numpy as np

#: reflectance floor: K/S is infinite at R = 0 (only pure #000000 reaches it)
R_MIN = 1e-4
#: rows of mixes evaluated at once (bounds memory: rows × 81 wavelengths × 8 bytes)
_CHUNK_ROWS = 32768
#: CIE 1976 L*a*b* constants (CIE 15:2004)
_LAB_EPS = 216.0 / 24389.0
_LAB_KAPPA = 24389.0 / 27.0


#: linear sRGB from XYZ (D65): the four-decimal matrix of IEC 61966-2-1:1999 (also colour-science's for sRGB)
_XYZ_TO_SRGB = ((3.2406, -1.5372, -0.4986), (-0.9689, 1.8758, 0.0415), (0.0557, -0.2040, 1.0570))
#: package data (layerplan/data): file -> its columns; each file's header names its source and licence
_TABLE_FILES = {
    "cie1931_2deg_cmf.csv": ("wavelength_nm", "x_bar", "y_bar", "z_bar"),
    "cie_d65.csv": ("wavelength_nm", "relative_power"),
    "mallett2019_srgb_basis.csv": ("wavelength_nm", "red", "green", "blue"),
}


def _read_table(name: str) -> np.ndarray:
    """(W, columns) float64 array of one packaged CSV table, its header checked."""
    text = resources.files("layerplan").joinpath("data", name).read_text("utf-8")
    lines = [line for line in text.splitlines() if line.strip() and not line.startswith("#")]
    if tuple(lines[0].split(",")) != _TABLE_FILES[name]:
        raise RuntimeError(f"layerplan/data/{name}: columns {lines[0]!r}, expected {','.join(_TABLE_FILES[name])}")
    return np.array([[float(v) for v in line.split(",")] for line in lines[1:]], dtype=np.float64)


@lru_cache(maxsize=1)
def _tables():
    """Basis spectra, weighted colour-matching functions and white point (built once).

    Read from package data rather than from colour-science at run time: importing that
    library takes seconds, and only these three small tables are needed.
    """
    cmf, d65, basis = (_read_table(name) for name in _TABLE_FILES)
    wavelengths = basis[:, 0]  # 380–780 nm, 5 nm: the basis's own sampling
    if not (np.array_equal(cmf[:, 0], wavelengths) and np.array_equal(d65[:, 0], wavelengths)):
        raise RuntimeError("layerplan/data: the spectral tables are not sampled at the same wavelengths")
    weights = d65[:, 1:2] * cmf[:, 1:]  # (W, 3)
    weights = weights / np.sum(weights[:, 1])  # perfect white reflector: Y = 1
    white = weights.sum(axis=0)
    return {
        "wavelengths": wavelengths,
        "basis": np.ascontiguousarray(basis[:, 1:]),  # (W, 3): red, green, blue
        "weights": weights,
        "white": white,
        "xyz_to_rgb": np.array(_XYZ_TO_SRGB, dtype=np.float64),
    }


def wavelengths_nm() -> np.ndarray:
    """(W,) wavelengths of every spectrum in this module, nm (380–780 in 5 nm steps)."""
    return _tables()["wavelengths"].copy()


def white_xyz() -> np.ndarray:
    """(3,) XYZ of the perfect white reflector under D65, CIE 1931 2°, Y = 1."""
    return _tables()["white"].copy()


def _srgb_decode(v: np.ndarray) -> np.ndarray:
    """Encoded sRGB in [0, 1] to linear (IEC 61966-2-1)."""
    return np.where(v <= 0.04045, v / 12.92, ((v + 0.055) / 1.055) ** 2.4)


def _srgb_encode(v: np.ndarray) -> np.ndarray:
    """Linear sRGB to encoded, clipped to [0, 1] (IEC 61966-2-1)."""
    v = np.clip(v, 0.0, 1.0)
    return np.where(v <= 0.0031308, 12.92 * v, 1.055 * v ** (1.0 / 2.4) - 0.055)


def reflectance_from_srgb(rgb) -> np.ndarray:
    """Reflectance spectra of sRGB colours (Mallett & Yuksel 2019).

    Parameters
    ----------
    rgb : (..., 3) uint8 array, or float array of encoded sRGB in [0, 1]

    Returns
    -------
    reflectance : (..., W) float64 array in [0, 1], sampled at :func:`wavelengths_nm`

    Raises
    ------
    ValueError
        If the last axis is not 3 or float values lie outside [0, 1].

    References
    ----------
    Mallett & Yuksel (2019); IEC 61966-2-1:1999.
    """
    a = np.asarray(rgb)
    if a.ndim == 0 or a.shape[-1] != 3:
        raise ValueError(f"rgb must have a last axis of 3 (r, g, b), got shape {a.shape}")
    if a.dtype == np.uint8:
        v = a.astype(np.float64) / 255.0
    else:
        v = a.astype(np.float64)
        if not np.all(np.isfinite(v)) or v.min(initial=0.0) < 0.0 or v.max(initial=0.0) > 1.0:
            raise ValueError("float rgb values must lie in [0, 1]")
    return np.clip(_srgb_decode(v) @ _tables()["basis"].T, 0.0, 1.0)


def ks_from_reflectance(reflectance) -> np.ndarray:
    """Kubelka–Munk K/S of an opaque layer from its reflectance: (1 − R)² / 2R.

    ``R`` is clipped to [:data:`R_MIN`, 1] first, so K/S is finite and >= 0.

    References
    ----------
    Kubelka & Munk (1931); Allen (1980).
    """
    r = np.clip(np.asarray(reflectance, dtype=np.float64), R_MIN, 1.0)
    return (1.0 - r) ** 2 / (2.0 * r)


def reflectance_from_ks(ks) -> np.ndarray:
    """Reflectance of an opaque layer from its K/S: 1 + K/S − √((K/S)² + 2·K/S).

    The inverse of :func:`ks_from_reflectance` for R in (0, 1].

    References
    ----------
    Kubelka & Munk (1931); Allen (1980).
    """
    q = np.asarray(ks, dtype=np.float64)
    return 1.0 + q - np.sqrt(q * q + 2.0 * q)


def mix_reflectance(reflectances, parts, *, tinting_strength=None) -> np.ndarray:
    """Reflectance of mixes of paints (single-constant Kubelka–Munk).

    Parameters
    ----------
    reflectances : (P, W) float array
        The paints' own reflectances (e.g. from :func:`reflectance_from_srgb`).
    parts : (P,) or (M, P) float array
        Amount of each paint in each mix (any unit: parts, grams, ml); each row needs a
        positive total.
    tinting_strength : (P,) float array, optional, keyword-only
        Each paint's parts are multiplied by it (default 1 for all).

    Returns
    -------
    reflectance : (W,) or (M, W) float64 array

    Raises
    ------
    ValueError
        If shapes disagree, or parts are negative, non-finite or all zero in a mix.

    References
    ----------
    Kubelka & Munk (1931); Berns & Mohammadi (2007).
    """
    refl = np.asarray(reflectances, dtype=np.float64)
    if refl.ndim != 2:
        raise ValueError(f"reflectances must be (paints, wavelengths), got shape {refl.shape}")
    c = np.asarray(parts, dtype=np.float64)
    single = c.ndim == 1
    c = np.atleast_2d(c)
    if c.ndim != 2 or c.shape[1] != refl.shape[0]:
        raise ValueError(f"parts must have one column per paint ({refl.shape[0]}), got shape {np.shape(parts)}")
    if not np.all(np.isfinite(c)) or np.any(c < 0):
        raise ValueError("parts must be finite and >= 0")
    if tinting_strength is not None:
        t = np.asarray(tinting_strength, dtype=np.float64).reshape(-1)
        if t.shape != (refl.shape[0],) or not np.all(np.isfinite(t)) or np.any(t <= 0):
            raise ValueError(f"tinting_strength must be {refl.shape[0]} numbers > 0")
        c = c * t
    totals = c.sum(axis=1, keepdims=True)
    if np.any(totals <= 0):
        raise ValueError("every mix needs some paint (parts sum to 0)")
    out = _mix_weights(ks_from_reflectance(refl), c / totals)
    return out[0] if single else out


def _mix_weights(ks: np.ndarray, weights: np.ndarray) -> np.ndarray:
    """(M, W) reflectance of mixes with normalised weights (M, P) of paints' K/S (P, W)."""
    return reflectance_from_ks(weights @ ks)


def reflectance_to_xyz(reflectance) -> np.ndarray:
    """CIE XYZ (CIE 1931 2°, D65, perfect white Y = 1) of reflectance spectra.

    Parameters
    ----------
    reflectance : (..., W) float array sampled at :func:`wavelengths_nm`

    Returns
    -------
    xyz : (..., 3) float64 array

    References
    ----------
    CIE 15:2004.
    """
    return np.asarray(reflectance, dtype=np.float64) @ _tables()["weights"]


def xyz_to_lab(xyz) -> np.ndarray:
    """CIE 1976 L*a*b* of XYZ, relative to the perfect white under D65, 2°.

    References
    ----------
    CIE 15:2004.
    """
    v = np.asarray(xyz, dtype=np.float64) / _tables()["white"]
    f = np.where(v > _LAB_EPS, np.cbrt(v), (_LAB_KAPPA * v + 16.0) / 116.0)
    return np.stack(
        [116.0 * f[..., 1] - 16.0, 500.0 * (f[..., 0] - f[..., 1]), 200.0 * (f[..., 1] - f[..., 2])], axis=-1
    )


def xyz_to_srgb(xyz) -> np.ndarray:
    """sRGB uint8 of XYZ (D65), out-of-gamut colours clipped per channel.

    References
    ----------
    IEC 61966-2-1:1999.
    """
    lin = np.asarray(xyz, dtype=np.float64) @ _tables()["xyz_to_rgb"].T
    return np.round(_srgb_encode(lin) * 255.0).astype(np.uint8)


def reflectance_to_lab(reflectance) -> np.ndarray:
    """CIELAB (D65, 2°) of reflectance spectra: (..., W) -> (..., 3)."""
    return xyz_to_lab(reflectance_to_xyz(reflectance))


def mix_colours(rgb, parts, *, tinting_strength=None) -> tuple[np.ndarray, np.ndarray]:
    """Predicted colour of mixing sRGB paints in the given parts.

    Parameters
    ----------
    rgb : (P, 3) uint8 array
        The paints' colours.
    parts : (P,) or (M, P) float array
    tinting_strength : (P,) float array, optional, keyword-only

    Returns
    -------
    lab : (3,) or (M, 3) float64 CIELAB (D65, 2°)
    srgb : (3,) or (M, 3) uint8, clipped to the sRGB gamut

    References
    ----------
    Mallett & Yuksel (2019); Kubelka & Munk (1931); Berns & Mohammadi (2007); CIE 15:2004.
    """
    refl = reflectance_from_srgb(np.asarray(rgb, dtype=np.uint8).reshape(-1, 3))
    xyz = reflectance_to_xyz(mix_reflectance(refl, parts, tinting_strength=tinting_strength))
    return xyz_to_lab(xyz), xyz_to_srgb(xyz)


def mix_table_colours(rgb, weights) -> tuple[np.ndarray, np.ndarray]:
    """CIELAB and sRGB of many mixes at once, evaluated in chunks.

    Parameters
    ----------
    rgb : (P, 3) uint8 array
    weights : (M, P) float array
        Normalised effective weights (parts × tinting strength, each row summing to 1).

    Returns
    -------
    lab : (M, 3) float64
    srgb : (M, 3) uint8

    References
    ----------
    Kubelka & Munk (1931); Berns & Mohammadi (2007); CIE 15:2004.
    """
    ks = ks_from_reflectance(reflectance_from_srgb(np.asarray(rgb, dtype=np.uint8).reshape(-1, 3)))
    w = np.asarray(weights, dtype=np.float64)
    lab = np.empty((len(w), 3))
    srgb = np.empty((len(w), 3), dtype=np.uint8)
    for start in range(0, len(w), _CHUNK_ROWS):
        xyz = reflectance_to_xyz(_mix_weights(ks, w[start : start + _CHUNK_ROWS]))
        lab[start : start + _CHUNK_ROWS] = xyz_to_lab(xyz)
        srgb[start : start + _CHUNK_ROWS] = xyz_to_srgb(xyz)
    return lab, srgb
