"""Pigment mixing: each paint's absorption and scattering, two-constant Kubelka–Munk.

Paints mix by subtracting light, not by averaging screen colours, so a mix is predicted
from each paint's absorption K(λ) and scattering S(λ):

1. **Reflectance from a colour.** A colour fixes only three numbers; a reflectance
   spectrum (380–780 nm, 5 nm) is recovered by Burns's (2020) smoothest bounded
   reconstruction, LHTSS: of all spectra ``R = (tanh z + 1) / 2`` (so 0 < R < 1) with
   exactly the colour's XYZ under D65 / CIE 1931 2°, the one with the least squared
   slope of ``z``, solved by Newton's method on its Lagrange conditions. The linear
   spectral primary decomposition of Mallett & Yuksel (2019) is kept as ``"mallett2019"``.
2. **Surface.** A paint film reflects part of the light at its surface and traps part
   of the light inside; Saunderson's (1942) correction turns a colour as seen into the
   film's internal reflectance before Kubelka–Munk and back after, with
   :data:`SAUNDERSON_K1` and :data:`SAUNDERSON_K2` (surface reflection excluded from the
   colour, as a painter judging a swatch in diffuse light sees it).
3. **Each paint's K and S.** An opaque layer's ``K/S = (1 − R)² / 2R`` (Kubelka & Munk
   1931). A masstone gives only that ratio; a tint of the paint with the inventory's white
   gives the rest: with the white's ``S`` as the reference (its tinting strength, 1 if not
   given) and the tint made of fractions ``c_p`` of paint and ``c_w`` of white, Duncan's
   rule (below) solved for the paint's scattering gives, per wavelength,
   ``S = S_w · (c_w / c_p) · (q_t − q_w) / (q_m − q_t)`` with ``q_m, q_t, q_w`` the K/S of
   the masstone, tint and white, and ``K = q_m · S`` (the usual two-point calibration of
   colorant formulation; Allen 1980). Wavelengths where the tint does not lie between
   white and masstone carry no information; ``S`` is interpolated there from its neighbours.
   **A paint without a tint** falls back to the simpler model: it scatters alike at all
   wavelengths, ``S = tinting_strength`` (1 if not given), ``K = q_m · S`` — the
   single-constant model (Berns & Mohammadi 2007) with parts weighted by tinting strength.
   Its mixes are less sure.
4. **Mixing.** Duncan's (1940) rule, two-constant Kubelka–Munk:
   ``(K/S)_mix = Σ cᵢ Kᵢ / Σ cᵢ Sᵢ`` with ``cᵢ`` the parts of each paint, back to internal
   reflectance with ``R = 1 + K/S − √((K/S)² + 2·K/S)``, then Saunderson's correction.
5. **Colour of the mix.** Tristimulus values with the CIE 1931 2° observer under
   illuminant D65 (CIE 15:2004), normalised so the perfect white reflector has Y = 1,
   then CIELAB against that white and sRGB (IEC 61966-2-1) for display.

The colour-matching functions, illuminant and Mallett–Yuksel basis are package data
(``layerplan/data/*.csv``, each headed by its source and licence), so mixing needs only numpy.

**Why these choices, measured.** On measured oil paints (Geldof et al. 2018, the Revigo
spectra, CC0: six pigments, each a masstone, a ~10 % tint with zinc white and a ~50 %
tint, mass fractions), each pigment fitted from the *colours* of its masstone and ~10 %
tint, with zinc white's colour as the white, predicts the ~50 % tint's colour within
(mean / median ΔE00):

===========  ==========  ================================  ===============================
upsampling   surface     single-constant, masstone only    two-constant, masstone + tint
===========  ==========  ================================  ===============================
Mallett      none        7.5 / 7.0 (the former model)      2.8 / 2.7
Mallett      Saunderson  7.6 / 6.9                         2.2 / 2.6
Burns        none        7.2 / 6.5                         2.6 / 2.1
Burns        Saunderson  7.3 / 6.5                         **1.9 / 1.3** (this module)
===========  ==========  ================================  ===============================

(the single-constant rows with the white at tinting strength 1, their best; per pigment, this
module's errors are 1.0 cochineal lake, 0.9 minium, 0.6 vermilion, 1.7 viridian, 3.3
ultramarine, 4.2 chrome yellow), and ultramarine + chrome yellow fitted this way mix to
green (CIELAB hue 139°, 153°, 170° at 1:3, 1:1, 3:1; the tests check both). The tint is
what matters; of the rest, Burns's smooth spectra beat Mallett's step-shaped ones (mean
and median), are bounded in (0, 1) as Kubelka–Munk needs and take a small Newton solve
per colour, done once per inventory; Saunderson's correction helps with either. All of
this still guesses spectra from colours, so recipes are a starting point for the
painter's own test swatch.

References
----------
.. [1] P. Kubelka, F. Munk, "Ein Beitrag zur Optik der Farbanstriche",
   Zeitschrift für technische Physik 12:593–601, 1931.
.. [2] D. R. Duncan, "The colour of pigment mixtures", Proceedings of the Physical
   Society 52(3):390–401, 1940.
.. [3] E. Allen, "Colorant formulation and shading", in F. Grum, C. J. Bartleson (eds.),
   Optical Radiation Measurements, vol. 2: Color Measurement, Academic Press, 1980.
.. [4] J. L. Saunderson, "Calculation of the color of pigmented plastics", Journal of
   the Optical Society of America 32(12):727–736, 1942.
.. [5] S. A. Burns, "Numerical methods for smoothest reflectance reconstruction",
   Color Research & Application 45(1):8–21, 2020.
.. [6] I. Mallett, C. Yuksel, "Spectral Primary Decomposition for Rendering with sRGB
   Reflectance", Eurographics Symposium on Rendering (DL-only track), 2019.
.. [7] R. S. Berns, M. Mohammadi, "Single-constant simplification of Kubelka-Munk
   turbid-media theory for paint systems — a review", Color Res. Appl. 32(3):201–207, 2007.
.. [8] M. Geldof, A. Proaño Gaibor, E. Kirchner, F. Ligterink, "Reconstructing Van Gogh's
   palette to determine the optical characteristics of his paints", Heritage Science 6:17, 2018.
.. [9] CIE 15:2004, Colorimetry, 3rd ed.; IEC 61966-2-1:1999 (sRGB).
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache
from importlib import resources

import numpy as np

#: reflectance floor: K/S is infinite at R = 0 (only pure #000000 reaches it)
R_MIN = 1e-4
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


def xyz_weights() -> np.ndarray:
    """(W, 3) weights that turn a reflectance into XYZ: D65 × CIE 1931 2° colour-matching
    functions, normalised so the perfect white reflector has Y = 1 (read-only)."""
    w = _tables()["weights"]
    w.setflags(write=False)
    return w


def wavelengths_nm() -> np.ndarray:
    """(W,) wavelengths of every spectrum in this module, nm (380–780 in 5 nm steps)."""
    return _tables()["wavelengths"].copy()


def white_xyz() -> np.ndarray:
    """(3,) XYZ of the perfect white reflector under D65, CIE 1931 2°, Y = 1."""
    return _tables()["white"].copy()


#: Saunderson (1942) constants. k1, the film's external reflectance, is 0.04 for a binder of
#: refractive index 1.5 (Fresnel, normal incidence), but colours here are judged against a
#: white seen the same way, so the loss is in the reference: with k1 = 0 a perfect white
#: stays white and every colour has a film (on the Revigo paints k1 = 0.04 gave mean ΔE00
#: 1.89, k1 = 0 1.93: no measurable difference). k2, the share of light inside the film
#: reflected back in at its surface (0.4–0.6 are the usual values; 0.6 fitted the Revigo
#: oil paints best of those, see the module docstring)
SAUNDERSON_K1 = 0.0
SAUNDERSON_K2 = 0.6
#: scattering limits relative to the white's (a paint's S fitted from a tint is kept within)
S_MIN, S_MAX = 1e-3, 1e3
#: Newton iterations of the LHTSS solve per continuation stage, and the stages (target blended
#: from a flat 50 % grey, where the solve starts, to the colour: robust for saturated colours)
_LHTSS_ITERATIONS = 40
_LHTSS_STAGES = (0.5, 0.8, 1.0)
#: XYZ residual at which the LHTSS solve stops (Y = 1 for the perfect white)
_LHTSS_TOL = 1e-10
#: bound on z = artanh(2R − 1): R from 3.8e-11 to 1 − 3.8e-11
_Z_MAX = 12.0
DEFAULT_UPSAMPLING = "burns2020"
_EDGE_SHRINK = 1e-6


def _srgb_decode(v: np.ndarray) -> np.ndarray:
    """Encoded sRGB in [0, 1] to linear (IEC 61966-2-1)."""
    return np.where(v <= 0.04045, v / 12.92, ((v + 0.055) / 1.055) ** 2.4)


def _srgb_encode(v: np.ndarray) -> np.ndarray:
    """Linear sRGB to encoded, clipped to [0, 1] (IEC 61966-2-1)."""
    v = np.clip(v, 0.0, 1.0)
    return np.where(v <= 0.0031308, 12.92 * v, 1.055 * v ** (1.0 / 2.4) - 0.055)


@lru_cache(maxsize=1)
def _srgb_to_xyz_matrix() -> np.ndarray:
    """(3, 3) linear sRGB -> XYZ as the packaged spectral tables integrate it.

    The XYZ of the Mallett & Yuksel basis spectra under these colour-matching functions and D65:
    it maps sRGB white to this module's white exactly, so an sRGB colour's CIELAB here agrees with
    that of :mod:`layerplan.colour` (the IEC matrix's white differs from the integrated one by a
    few parts in 10 000, about 0.01 ΔE00).
    """
    t = _tables()
    return (t["basis"].T @ t["weights"]).T


def srgb_to_xyz(rgb) -> np.ndarray:
    """CIE XYZ (D65, white Y = 1) of sRGB colours: (..., 3) uint8 -> (..., 3) float64.

    References
    ----------
    IEC 61966-2-1:1999.
    """
    v = np.asarray(rgb, dtype=np.uint8).astype(np.float64) / 255.0
    return _srgb_decode(v) @ _srgb_to_xyz_matrix().T


@lru_cache(maxsize=1)
def _slope_matrix() -> np.ndarray:
    """(W, W) DᵀD for first differences D: the squared-slope penalty of LHTSS."""
    n = len(_tables()["wavelengths"])
    d = np.diff(np.eye(n), axis=0)
    return d.T @ d


def _reflectance_burns2020(xyz: np.ndarray) -> np.ndarray:
    """(N, W) LHTSS reflectances of (N, 3) XYZ (Burns 2020), batched Newton solve."""
    t = _tables()
    a = t["weights"].T  # (3, W): XYZ = a @ R
    n = a.shape[1]
    dtd = _slope_matrix()
    grey = 0.5 * t["white"]
    # the perfect white and black need R of exactly 1 or 0, which R = (tanh z + 1) / 2 only reaches at
    # infinity: aim a hair (1e-6 of the way) towards grey, far below what anyone can see
    xyz = grey + (1.0 - _EDGE_SHRINK) * (xyz - grey)
    z = np.zeros((len(xyz), n))
    lam = np.zeros((len(xyz), 3))
    for alpha in _LHTSS_STAGES:
        target = grey + alpha * (xyz - grey)
        active = np.arange(len(xyz))
        for _ in range(_LHTSS_ITERATIONS):
            zz, ll = z[active], lam[active]
            th = np.tanh(zz)
            sech2 = 1.0 - th * th
            d1 = 0.5 * sech2
            atl = ll @ a
            f_z = zz @ dtd + d1 * atl
            f_c = (0.5 * (th + 1.0)) @ a.T - target[active]
            busy = (np.abs(f_c).max(axis=1) > _LHTSS_TOL) | (np.abs(f_z).max(axis=1) > 1e-8)
            if not busy.any():
                break
            active, zz, ll, th, sech2, atl, f_z, f_c = (v[busy] for v in (active, zz, ll, th, sech2, atl, f_z, f_c))
            # floor the slope of R(z) so a colour at the edge (R at 0 or 1 everywhere) keeps a solvable system
            d1 = np.maximum(0.5 * sech2, 1e-9)
            jac = np.zeros((len(active), n + 3, n + 3))
            jac[:, :n, :n] = dtd
            jac[:, np.arange(n), np.arange(n)] += -sech2 * th * atl
            jac[:, :n, n:] = d1[:, :, None] * a.T[None]
            jac[:, n:, :n] = a[None] * d1[:, None, :]
            rhs = -np.concatenate([f_z, f_c], axis=1)
            try:
                step = np.linalg.solve(jac, rhs[..., None])[..., 0]
            except np.linalg.LinAlgError:  # a degenerate row: least squares for each row instead
                step = np.stack([np.linalg.lstsq(j, r, rcond=None)[0] for j, r in zip(jac, rhs)])
            step = np.nan_to_num(step)
            z[active] = np.clip(zz + np.clip(step[:, :n], -2.0, 2.0), -_Z_MAX, _Z_MAX)
            lam[active] = ll + step[:, n:]
    return 0.5 * (np.tanh(z) + 1.0)


def _reflectance_mallett2019(xyz: np.ndarray) -> np.ndarray:
    """(N, W) reflectances of (N, 3) XYZ by Mallett & Yuksel's (2019) sRGB basis (linear sRGB clipped)."""
    t = _tables()
    lin = np.clip(xyz @ t["xyz_to_rgb"].T, 0.0, 1.0)
    return np.clip(lin @ t["basis"].T, 0.0, 1.0)


#: spectral upsampling methods: name -> (N, 3) XYZ to (N, W) reflectance
UPSAMPLING = {"burns2020": _reflectance_burns2020, "mallett2019": _reflectance_mallett2019}


def _check_method(method: str):
    if method not in UPSAMPLING:
        raise ValueError(f"upsampling method must be one of {', '.join(UPSAMPLING)}, got {method!r}")
    return UPSAMPLING[method]


def reflectance_from_xyz(xyz, *, method: str = DEFAULT_UPSAMPLING) -> np.ndarray:
    """Reflectance spectra with the given CIE XYZ (D65, 2°, white Y = 1).

    Parameters
    ----------
    xyz : (..., 3) float array
        Colours inside the object-colour solid (any sRGB colour is).
    method : {"burns2020", "mallett2019"}, keyword-only
        Burns's (2020) smoothest bounded reconstruction (LHTSS, the default) or Mallett &
        Yuksel's (2019) sRGB basis (colours outside sRGB clipped to it first).

    Returns
    -------
    reflectance : (..., W) float64 array in [0, 1], sampled at :func:`wavelengths_nm`

    Raises
    ------
    ValueError
        For a last axis other than 3, non-finite values or an unknown method.

    References
    ----------
    Burns (2020); Mallett & Yuksel (2019); CIE 15:2004.
    """
    fn = _check_method(method)
    x = np.asarray(xyz, dtype=np.float64)
    if x.ndim == 0 or x.shape[-1] != 3:
        raise ValueError(f"xyz must have a last axis of 3 (X, Y, Z), got shape {x.shape}")
    if not np.all(np.isfinite(x)):
        raise ValueError("xyz values must be finite")
    flat = x.reshape(-1, 3)
    return fn(flat).reshape(x.shape[:-1] + (-1,))


def reflectance_from_srgb(rgb, *, method: str = DEFAULT_UPSAMPLING) -> np.ndarray:
    """Reflectance spectra of sRGB colours (see :func:`reflectance_from_xyz`).

    Parameters
    ----------
    rgb : (..., 3) uint8 array, or float array of encoded sRGB in [0, 1]
    method : {"burns2020", "mallett2019"}, keyword-only

    Returns
    -------
    reflectance : (..., W) float64 array in [0, 1], sampled at :func:`wavelengths_nm`

    Raises
    ------
    ValueError
        If the last axis is not 3, float values lie outside [0, 1], or the method is unknown.

    References
    ----------
    Burns (2020); Mallett & Yuksel (2019); IEC 61966-2-1:1999.
    """
    fn = _check_method(method)
    a = np.asarray(rgb)
    if a.ndim == 0 or a.shape[-1] != 3:
        raise ValueError(f"rgb must have a last axis of 3 (r, g, b), got shape {a.shape}")
    if a.dtype == np.uint8:
        v = a.astype(np.float64) / 255.0
    else:
        v = a.astype(np.float64)
        if not np.all(np.isfinite(v)) or v.min(initial=0.0) < 0.0 or v.max(initial=0.0) > 1.0:
            raise ValueError("float rgb values must lie in [0, 1]")
    lin = _srgb_decode(v).reshape(-1, 3)
    if method == "mallett2019":  # exactly the published decomposition, no round trip through XYZ
        out = np.clip(lin @ _tables()["basis"].T, 0.0, 1.0)
    else:
        out = fn(lin @ _srgb_to_xyz_matrix().T)
    return out.reshape(a.shape[:-1] + (-1,))


def lab_to_xyz(lab) -> np.ndarray:
    """CIE XYZ (D65, 2°, white Y = 1) of CIELAB; the inverse of :func:`xyz_to_lab`.

    References
    ----------
    CIE 15:2004.
    """
    lab = np.asarray(lab, dtype=np.float64)
    fy = (lab[..., 0] + 16.0) / 116.0
    f = np.stack([fy + lab[..., 1] / 500.0, fy, fy - lab[..., 2] / 200.0], axis=-1)
    v = np.where(f**3 > _LAB_EPS, f**3, (116.0 * f - 16.0) / _LAB_KAPPA)
    return v * _tables()["white"]


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


def internal_reflectance(observed) -> np.ndarray:
    """A film's internal reflectance from the reflectance seen (Saunderson 1942, inverted).

    ``R_i = R / ((1 − k1)(1 − k2) + k2·R)``, clipped to [:data:`R_MIN`, 1] (with k1 > 0, a
    colour lighter than a film can look, ``R > 1 − k1``, would be the perfect internal white).

    References
    ----------
    Saunderson (1942).
    """
    r = np.asarray(observed, dtype=np.float64)
    k1, k2 = SAUNDERSON_K1, SAUNDERSON_K2
    return np.clip(r / ((1.0 - k1) * (1.0 - k2) + k2 * r), R_MIN, 1.0)


def observed_reflectance(internal) -> np.ndarray:
    """The reflectance seen of a film of internal reflectance ``R_i`` (Saunderson 1942).

    ``R = (1 − k1)(1 − k2)·R_i / (1 − k2·R_i)``: light entering, reflected inside and
    trapped partly by the surface; the surface's own reflection is left out.

    References
    ----------
    Saunderson (1942).
    """
    ri = np.asarray(internal, dtype=np.float64)
    k1, k2 = SAUNDERSON_K1, SAUNDERSON_K2
    return (1.0 - k1) * (1.0 - k2) * ri / (1.0 - k2 * ri)


@dataclass(frozen=True, eq=False)
class PaintOptics:
    """Kubelka–Munk absorption and scattering of each paint, relative to the white's.

    Attributes
    ----------
    absorption : (P, W) float64 array
        K(λ), at :func:`wavelengths_nm`.
    scattering : (P, W) float64 array
        S(λ), > 0.
    from_tint : (P,) bool array
        True where K and S were fitted from a tint; False for the simpler model.
    """

    absorption: np.ndarray
    scattering: np.ndarray
    from_tint: np.ndarray

    def __len__(self) -> int:
        return len(self.absorption)

    def take(self, idx) -> "PaintOptics":
        """The optics of the paints at ``idx`` (a list of positions)."""
        idx = np.asarray(idx, dtype=int)
        return PaintOptics(self.absorption[idx], self.scattering[idx], self.from_tint[idx])


def fit_paint_optics(
    masstone_xyz,
    *,
    tinting_strength=None,
    white_xyz=None,
    tint_xyz=None,
    tint_paint_fraction=None,
    white_strength: float = 1.0,
    method: str = DEFAULT_UPSAMPLING,
) -> PaintOptics:
    """Each paint's K(λ) and S(λ) from its masstone and, where given, a tint with white.

    Parameters
    ----------
    masstone_xyz : (P, 3) float array
        Each paint's own colour, CIE XYZ (D65, 2°, white Y = 1).
    tinting_strength : (P,) float array, optional, keyword-only
        Scattering of paints without a tint (the simpler model), default 1 each.
    white_xyz : (3,) float array, optional, keyword-only
        The white the tints were made with; needed if any tint is given.
    tint_xyz : (P, 3) float array, optional, keyword-only
        Each paint's tint colour; a row of NaN where the paint has none.
    tint_paint_fraction : (P,) float array, optional, keyword-only
        Share of the paint in its tint, ``paint_parts / (paint_parts + white_parts)``, in (0, 1).
    white_strength : float, keyword-only
        The white's scattering, the reference of the fitted S (default 1).
    method : str, keyword-only
        Spectral upsampling (:data:`UPSAMPLING`).

    Returns
    -------
    PaintOptics

    Raises
    ------
    ValueError
        For shapes that disagree, a tint without its white or fraction, or fractions
        outside (0, 1).

    References
    ----------
    Kubelka & Munk (1931); Duncan (1940); Allen (1980); Saunderson (1942); Burns (2020).
    """
    m = np.asarray(masstone_xyz, dtype=np.float64).reshape(-1, 3)
    p = len(m)
    strength = np.ones(p) if tinting_strength is None else np.asarray(tinting_strength, dtype=np.float64).reshape(-1)
    if strength.shape != (p,) or not np.all(np.isfinite(strength)) or np.any(strength <= 0):
        raise ValueError(f"tinting_strength must be {p} numbers > 0")
    if tint_xyz is None:
        tint = np.full((p, 3), np.nan)
    else:
        tint = np.asarray(tint_xyz, dtype=np.float64).reshape(-1, 3)
        if tint.shape != (p, 3):
            raise ValueError(f"tint_xyz must have one row per paint ({p}), got shape {np.shape(tint_xyz)}")
    has_tint = np.all(np.isfinite(tint), axis=1)
    q_m = ks_from_reflectance(internal_reflectance(reflectance_from_xyz(m, method=method)))
    s = np.repeat(strength[:, None], q_m.shape[1], axis=1)
    if has_tint.any():
        if white_xyz is None:
            raise ValueError("a tint needs the white it was made with (white_xyz)")
        frac = None if tint_paint_fraction is None else np.asarray(tint_paint_fraction, dtype=np.float64).reshape(-1)
        if frac is None or frac.shape != (p,) or not np.all((frac[has_tint] > 0) & (frac[has_tint] < 1)):
            raise ValueError("tint_paint_fraction must give each tinted paint's share of its tint, in (0, 1)")
        white_r = reflectance_from_xyz(np.asarray(white_xyz, dtype=np.float64).reshape(1, 3), method=method)
        q_w = ks_from_reflectance(internal_reflectance(white_r))[0]
        q_t = ks_from_reflectance(internal_reflectance(reflectance_from_xyz(tint[has_tint], method=method)))
        f = frac[has_tint][:, None]
        s[has_tint] = white_strength * _scattering_from_tint(q_m[has_tint], q_t, q_w, f)
    return PaintOptics(absorption=q_m * s, scattering=s, from_tint=has_tint)


def _scattering_from_tint(q_m, q_t, q_w, frac) -> np.ndarray:
    """(T, W) S relative to the white's, from masstone, tint and white K/S (Duncan's rule solved)."""
    num = q_t - q_w
    den = q_m - q_t
    # the tint carries information only where it lies clearly between white and masstone
    valid = (num > 1e-6 * (1.0 + q_t)) & (den > 1e-6 * (1.0 + q_t))
    s = np.full(q_m.shape, np.nan)
    ratio = (1.0 - frac) / frac
    s[valid] = (np.broadcast_to(ratio, q_m.shape)[valid] * num[valid] / den[valid])
    s = np.log(np.clip(s, S_MIN, S_MAX))
    x = np.arange(q_m.shape[1])
    for row in range(len(s)):
        good = valid[row]
        if not good.any():
            s[row] = 0.0  # nothing to fit: as strong as the white
        elif not good.all():
            s[row, ~good] = np.interp(x[~good], x[good], s[row, good])
    return np.exp(s)


def _check_parts(n_paints: int, parts) -> tuple[np.ndarray, bool]:
    c = np.asarray(parts, dtype=np.float64)
    single = c.ndim == 1
    c = np.atleast_2d(c)
    if c.ndim != 2 or c.shape[1] != n_paints:
        raise ValueError(f"parts must have one column per paint ({n_paints}), got shape {np.shape(parts)}")
    if not np.all(np.isfinite(c)) or np.any(c < 0):
        raise ValueError("parts must be finite and >= 0")
    if np.any(c.sum(axis=1) <= 0):
        raise ValueError("every mix needs some paint (parts sum to 0)")
    return c, single


def mix_reflectance(optics: PaintOptics, parts) -> np.ndarray:
    """Reflectance seen of mixes of paints (two-constant Kubelka–Munk, Duncan's rule).

    Parameters
    ----------
    optics : PaintOptics
        The paints (:func:`fit_paint_optics`).
    parts : (P,) or (M, P) float array
        Amount of each paint in each mix (any unit: parts, ml); each row needs a positive total.

    Returns
    -------
    reflectance : (W,) or (M, W) float64 array

    Raises
    ------
    ValueError
        If shapes disagree, or parts are negative, non-finite or all zero in a mix.

    References
    ----------
    Kubelka & Munk (1931); Duncan (1940); Saunderson (1942).
    """
    if not isinstance(optics, PaintOptics):
        raise ValueError("optics must be a PaintOptics (see fit_paint_optics)")
    c, single = _check_parts(len(optics), parts)
    out = _mix(optics, c)
    return out[0] if single else out


def _mix(optics: PaintOptics, c: np.ndarray) -> np.ndarray:
    """(M, W) reflectance seen of mixes with parts (M, P) >= 0, each row a positive total."""
    ks = (c @ optics.absorption) / (c @ optics.scattering)
    return observed_reflectance(reflectance_from_ks(ks))


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
    """Predicted colour of mixing sRGB paints given without tints (the simpler model).

    Each paint scatters alike at all wavelengths, ``S = tinting_strength`` (default 1); see
    the module docstring. For paints with tints use :func:`fit_paint_optics` and
    :func:`mix_optics_colours`.

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
    Burns (2020); Kubelka & Munk (1931); Saunderson (1942); Berns & Mohammadi (2007); CIE 15:2004.
    """
    xyz = srgb_to_xyz(np.asarray(rgb, dtype=np.uint8).reshape(-1, 3))
    return mix_optics_colours(fit_paint_optics(xyz, tinting_strength=tinting_strength), parts)


def mix_optics_colours(optics: PaintOptics, parts) -> tuple[np.ndarray, np.ndarray]:
    """CIELAB and sRGB of mixes of paints with known optics.

    Parameters
    ----------
    optics : PaintOptics
    parts : (P,) or (M, P) float array

    Returns
    -------
    lab : (3,) or (M, 3) float64 CIELAB (D65, 2°)
    srgb : (3,) or (M, 3) uint8, clipped to the sRGB gamut

    References
    ----------
    Duncan (1940); CIE 15:2004.
    """
    xyz = reflectance_to_xyz(mix_reflectance(optics, parts))
    return xyz_to_lab(xyz), xyz_to_srgb(xyz)
