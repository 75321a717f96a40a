"""Tests for layerplan.mixing: spectral upsampling and single-constant Kubelka–Munk."""

import warnings

import numpy as np
import pytest

from layerplan import mixing
from layerplan.colour import delta_e00, srgb_to_lab
from layerplan.plan import hex_to_rgb

with warnings.catch_warnings():
    warnings.simplefilter("ignore")  # colour-science warns that matplotlib is absent
    import colour
    from colour.recovery import RGB_to_sd_Mallett2019


def _rgb(*hexes):
    return np.array([hex_to_rgb(h) for h in hexes], dtype=np.uint8)


def _chroma_hue(lab):
    lab = np.asarray(lab, float)
    return float(np.hypot(lab[1], lab[2])), float(np.degrees(np.arctan2(lab[2], lab[1])) % 360.0)


# ------------------------------------------------------------------ Kubelka–Munk formulae
def test_ks_of_half_reflectance_is_a_quarter_and_back():
    # Kubelka & Munk (1931): K/S = (1 - R)^2 / 2R; worked by hand: R = 0.5 -> 0.25 / 1 = 0.25,
    # and the inverse R = 1 + 0.25 - sqrt(0.0625 + 0.5) = 1.25 - 0.75 = 0.5.
    assert mixing.ks_from_reflectance(0.5) == pytest.approx(0.25, abs=1e-15)
    assert mixing.reflectance_from_ks(0.25) == pytest.approx(0.5, abs=1e-15)
    # a perfect white has no absorption (Kubelka & Munk 1931)
    assert mixing.ks_from_reflectance(1.0) == 0.0
    assert mixing.reflectance_from_ks(0.0) == 1.0


def test_ks_reflectance_round_trip_over_the_whole_range():
    # Kubelka & Munk (1931); Allen (1980): R∞ = 1 + K/S - sqrt((K/S)^2 + 2 K/S) inverts K/S(R)
    r = np.linspace(mixing.R_MIN, 1.0, 2001)
    assert np.allclose(mixing.reflectance_from_ks(mixing.ks_from_reflectance(r)), r, rtol=1e-9, atol=1e-12)
    ks = mixing.ks_from_reflectance(r)
    assert np.all(np.diff(ks) < 0)  # darker layers absorb more: K/S falls as R rises


def test_inverse_formula_matches_allens_form():
    # Allen (1980) writes the inverse as R∞ = a - b with a = 1 + K/S, b = sqrt(a^2 - 1);
    # algebraically the same as our form, computed independently here.
    q = np.geomspace(1e-6, 1e4, 500)
    a = 1.0 + q
    assert np.allclose(mixing.reflectance_from_ks(q), a - np.sqrt(a * a - 1.0), rtol=1e-7)


# ------------------------------------------------------------------ spectral upsampling
def test_reflectance_matches_colour_science_mallett2019():
    # outside reference: colour-science's own RGB_to_sd_Mallett2019 (Mallett & Yuksel 2019)
    rng = np.random.default_rng(7)
    rgb = rng.integers(0, 256, (20, 3)).astype(np.uint8)
    ours = mixing.reflectance_from_srgb(rgb)
    for c, r in zip(rgb, ours):
        sd = RGB_to_sd_Mallett2019(colour.models.eotf_sRGB(c / 255.0))
        assert np.allclose(sd.wavelengths, mixing.wavelengths_nm())
        assert np.allclose(r, np.clip(sd.values, 0, 1), atol=1e-12)


def test_xyz_matches_colour_science_integration():
    # outside reference: colour.sd_to_XYZ with the CIE 1931 2° observer and D65 (CIE 15:2004),
    # which scales the perfect white to Y = 100
    rgb = _rgb("#6b8e23", "#c8962e", "#123d75")
    refl = mixing.reflectance_from_srgb(rgb)
    shape = colour.SpectralShape(380, 780, 5)
    cmfs = colour.MSDS_CMFS["CIE 1931 2 Degree Standard Observer"].copy().align(shape)
    d65 = colour.SDS_ILLUMINANTS["D65"].copy().align(shape)
    for r, xyz in zip(refl, mixing.reflectance_to_xyz(refl)):
        sd = colour.SpectralDistribution(dict(zip(mixing.wavelengths_nm(), r)))
        ref = colour.sd_to_XYZ(sd, cmfs, d65, method="Integration") / 100.0
        assert np.allclose(xyz, ref, atol=1e-6)
    # the white point is D65's: x, y = 0.3127, 0.3290 (CIE 15:2004, 4 decimals)
    w = mixing.white_xyz()
    assert w[1] == pytest.approx(1.0)
    assert w[0] / w.sum() == pytest.approx(0.3127, abs=2e-4)
    assert w[1] / w.sum() == pytest.approx(0.3290, abs=2e-4)


def test_srgb_reflectance_srgb_round_trip_within_half_a_delta_e():
    # sRGB -> reflectance -> sRGB within ΔE00 0.5 for in-gamut colours, half the ~1 ΔE00 just noticeable
    # difference (common practice): the round trip is invisible. The target CIELAB comes from
    # layerplan.colour (scikit-image), ΔE00 cross-checked with colour-science
    rng = np.random.default_rng(3)
    rgb = np.vstack([rng.integers(0, 256, (500, 3)), [[0, 0, 255], [255, 255, 0], [255, 255, 255], [1, 1, 1]]])
    rgb = rgb.astype(np.uint8)
    refl = mixing.reflectance_from_srgb(rgb)
    assert refl.min() >= 0.0 and refl.max() <= 1.0  # physically valid reflectances
    lab = mixing.reflectance_to_lab(refl)
    de = delta_e00(lab, srgb_to_lab(rgb))
    assert de.max() < 0.5
    de_cs = colour.delta_E(lab, srgb_to_lab(rgb), method="CIE 2000")
    assert np.allclose(de, de_cs, atol=1e-6)
    back = mixing.xyz_to_srgb(mixing.reflectance_to_xyz(refl))
    assert np.abs(back.astype(int) - rgb).max() <= 1


# ------------------------------------------------------------------ mixing
def test_a_paint_mixed_with_itself_is_itself():
    # single-constant Kubelka–Munk (Berns & Mohammadi 2007): a mix of equal K/S has that K/S
    r = mixing.reflectance_from_srgb(_rgb("#c8962e"))[0]
    both = np.stack([r, r])
    for parts in ([1, 1], [1, 7], [3, 2]):
        assert np.allclose(mixing.mix_reflectance(both, parts), r, atol=1e-12)
    assert np.allclose(mixing.mix_reflectance(both, [1, 3], tinting_strength=[5.0, 0.2]), r, atol=1e-12)


def test_blue_and_yellow_make_green_where_screen_averaging_makes_grey():
    # fact of the trade (common practice): blue and yellow paint mix to green, while averaging
    # the same two screen colours gives grey. These two are chosen so their sRGB mean is neutral.
    blue, yellow = "#2a5bd7", "#d6a528"
    lab, srgb = mixing.mix_colours(_rgb(blue, yellow), [1, 1])
    chroma, hue = _chroma_hue(lab)
    assert 120.0 <= hue <= 190.0  # CIELAB hue of greens (from memory: sRGB green is at about 136°)
    assert srgb[1] > srgb[0] and srgb[1] > srgb[2]  # green is the strongest channel
    avg = srgb_to_lab(np.round(_rgb(blue, yellow).mean(axis=0)).astype(np.uint8))
    avg_chroma, _ = _chroma_hue(avg)
    assert chroma > 15.0 and avg_chroma < 0.2 * chroma


@pytest.mark.parametrize("paint", ["#cc2f23", "#a01a3c", "#f3b11c", "#23308a", "#1f7048", "#903c28", "#c8962e"])
def test_white_gives_a_lighter_tint_of_similar_hue(paint):
    # fact of the trade (common practice): adding white lightens a colour without changing
    # its hue much; more white, lighter still
    rgb = _rgb("#f4f3ee", paint)
    own = srgb_to_lab(rgb[1])
    _, hue0 = _chroma_hue(own)
    lab, _ = mixing.mix_colours(rgb, np.array([[1, 1], [3, 1]]))
    assert own[0] + 3.0 < lab[0, 0] < lab[1, 0]
    for tint in lab:
        _, hue = _chroma_hue(tint)
        assert abs((hue - hue0 + 180.0) % 360.0 - 180.0) < 12.0


def test_tinting_strength_counts_as_extra_parts():
    # definition of tinting strength in the model (layerplan.mixing docstring): strength t
    # multiplies a paint's parts, so 1:1 with strength 2 equals 2:1 with strength 1
    refl = mixing.reflectance_from_srgb(_rgb("#123d75", "#f4f3ee"))
    strong = mixing.mix_reflectance(refl, [1, 1], tinting_strength=[2.0, 1.0])
    assert np.allclose(strong, mixing.mix_reflectance(refl, [2, 1]), atol=1e-12)
    assert not np.allclose(strong, mixing.mix_reflectance(refl, [1, 1]), atol=1e-3)


def test_mix_lies_between_its_paints_in_lightness():
    # Kubelka–Munk: the mix K/S lies between the paints' K/S at every wavelength, so its
    # reflectance (and lightness) lies between theirs
    refl = mixing.reflectance_from_srgb(_rgb("#282828", "#f0dc28"))
    m = mixing.mix_reflectance(refl, [1, 4])
    assert np.all(m >= refl.min(axis=0) - 1e-12) and np.all(m <= refl.max(axis=0) + 1e-12)


# ------------------------------------------------------------------ errors
def test_bad_arguments_are_refused_with_a_message():
    refl = mixing.reflectance_from_srgb(_rgb("#123d75", "#f4f3ee"))
    with pytest.raises(ValueError, match="last axis of 3"):
        mixing.reflectance_from_srgb(np.zeros((2, 4), np.uint8))
    with pytest.raises(ValueError, match=r"lie in \[0, 1\]"):
        mixing.reflectance_from_srgb(np.array([0.2, 1.5, 0.0]))
    with pytest.raises(ValueError, match="one column per paint"):
        mixing.mix_reflectance(refl, [1, 2, 3])
    with pytest.raises(ValueError, match="finite and >= 0"):
        mixing.mix_reflectance(refl, [1, -1])
    with pytest.raises(ValueError, match="sum to 0"):
        mixing.mix_reflectance(refl, [0, 0])
    with pytest.raises(ValueError, match="tinting_strength must be 2 numbers > 0"):
        mixing.mix_reflectance(refl, [1, 1], tinting_strength=[1.0, 0.0])
    with pytest.raises(ValueError, match="reflectances must be"):
        mixing.mix_reflectance(refl[0], [1])


# ------------------------------------------------------------------ packaged tables
def _published(table, wavelengths):
    """colour-science's own table rows at the given wavelengths (no interpolation)."""
    rows = np.searchsorted(table.wavelengths, wavelengths)
    assert np.array_equal(table.wavelengths[rows], wavelengths)
    return table.values[rows]


def test_packaged_tables_are_colour_sciences():
    # outside reference: colour-science 0.4.7's datasets for the Mallett & Yuksel (2019) basis, the
    # CIE 1931 2° observer and illuminant D65 (CIE 15:2004), which layerplan/data carries as CSV
    from colour.recovery import MSDS_BASIS_FUNCTIONS_sRGB_MALLETT2019 as basis

    t = mixing._tables()
    wl = mixing.wavelengths_nm()
    assert np.array_equal(wl, np.arange(380.0, 781.0, 5.0))
    assert np.array_equal(wl, basis.wavelengths)
    assert np.array_equal(t["basis"], basis.values)
    cmfs = _published(colour.MSDS_CMFS["CIE 1931 2 Degree Standard Observer"], wl)
    d65 = _published(colour.SDS_ILLUMINANTS["D65"], wl)
    ours = {name: mixing._read_table(name)[:, 1:] for name in ("cie1931_2deg_cmf.csv", "cie_d65.csv")}
    assert np.array_equal(ours["cie1931_2deg_cmf.csv"], cmfs)
    assert np.array_equal(ours["cie_d65.csv"][:, 0], d65)
    # the weights as colour-science's align() would give them: its interpolator returns the table's own
    # values to within rounding (and 1e-23 where the table has z̄ = 0)
    aligned = (colour.SDS_ILLUMINANTS["D65"].copy().align(basis.shape).values[:, None]
               * colour.MSDS_CMFS["CIE 1931 2 Degree Standard Observer"].copy().align(basis.shape).values)
    assert np.allclose(t["weights"], aligned / aligned[:, 1].sum(), rtol=1e-14, atol=1e-20)
    # IEC 61966-2-1's XYZ -> linear sRGB matrix, as colour-science's sRGB colourspace holds it
    assert np.array_equal(t["xyz_to_rgb"], colour.RGB_COLOURSPACES["sRGB"].matrix_XYZ_to_RGB)


def test_srgb_matrix_is_the_inverse_of_the_primaries_matrix():
    # IEC 61966-2-1:1999: primaries R (0.64, 0.33), G (0.30, 0.60), B (0.15, 0.06), white D65
    # (0.3127, 0.3290); the standard rounds the inverse of the RGB -> XYZ matrix to 4 decimals
    xy = np.array([[0.64, 0.33], [0.30, 0.60], [0.15, 0.06]])
    xyz = np.column_stack([xy[:, 0] / xy[:, 1], np.ones(3), (1 - xy.sum(axis=1)) / xy[:, 1]]).T
    white = np.array([0.3127 / 0.3290, 1.0, (1 - 0.3127 - 0.3290) / 0.3290])
    m = xyz * np.linalg.solve(xyz, white)
    assert np.allclose(mixing._tables()["xyz_to_rgb"], np.linalg.inv(m), atol=6e-4)


def test_mixing_does_not_import_colour_science():
    # colour-science is a test reference only: mixing reads its tables from package data
    import subprocess
    import sys
    from pathlib import Path

    probe = ("import sys; from layerplan import mixing; mixing.mix_colours([[255, 255, 255], [0, 0, 255]], [1, 1]); "
             "import layerplan; print(layerplan.__file__, 'colour' in sys.modules)")
    done = subprocess.run([sys.executable, "-c", probe], cwd=Path(__file__).resolve().parents[1],
                          capture_output=True, text=True, timeout=60, check=True)
    path, loaded = done.stdout.split()
    assert Path(path).resolve().parent == Path(__file__).resolve().parents[1] / "layerplan"
    assert loaded == "False"
