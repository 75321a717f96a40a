"""Colour conversions and CIEDE2000 against published values."""

from pathlib import Path

import colour as colour_science
import numpy as np
import pytest

from layerplan.colour import delta_e00, error_planes, lab_to_srgb, mean_delta_e00, srgb_to_lab

DATA = Path(__file__).parent / "data"


def _sharma_pairs():
    rows = [line.split("\t") for line in (DATA / "ciede2000-sharma2005.tsv").read_text().splitlines()
            if line and not line.startswith("#")]
    header, body = rows[0], rows[1:]
    assert header[:8] == ["pair", "L1", "a1", "b1", "L2", "a2", "b2", "dE00"]
    return np.array([[float(v) for v in r[1:8]] for r in body])


def test_ciede2000_matches_sharma_wu_dalal_2005_table1():
    # Source: Sharma, Wu & Dalal (2005), Table 1 (tests/data/ciede2000-sharma2005.tsv, 4 decimals)
    t = _sharma_pairs()
    assert len(t) >= 17
    got = delta_e00(t[:, 0:3], t[:, 3:6])
    np.testing.assert_allclose(got, t[:, 6], atol=1e-4)
    # the formula is symmetric in its two colours (Sharma et al. 2005, section 3)
    np.testing.assert_allclose(delta_e00(t[:, 3:6], t[:, 0:3]), t[:, 6], atol=1e-4)


# sRGB -> CIELAB (D65, 2°). Values from memory of B. Lindbloom's published calculator
# (brucelindbloom.com), and cross-checked below against colour-science (a reference library).
PUBLISHED_LAB = [
    ((255, 255, 255), (100.0, 0.0, 0.0)),
    ((0, 0, 0), (0.0, 0.0, 0.0)),
    ((255, 0, 0), (53.2408, 80.0925, 67.2032)),
    ((0, 255, 0), (87.7347, -86.1827, 83.1793)),
    ((0, 0, 255), (32.2970, 79.1875, -107.8602)),
]


@pytest.mark.parametrize("rgb,lab", PUBLISHED_LAB)
def test_srgb_to_lab_published_values(rgb, lab):
    got = srgb_to_lab(np.array(rgb, dtype=np.uint8))
    np.testing.assert_allclose(got, lab, atol=0.02)


def test_srgb_to_lab_agrees_with_colour_science():
    # Reference library: colour-science, sRGB (IEC 61966-2-1) -> XYZ -> Lab, D65 2°.
    rng = np.random.default_rng(1)
    rgb = rng.integers(0, 256, size=(200, 3)).astype(np.uint8)
    d65 = colour_science.CCS_ILLUMINANTS["CIE 1931 2 Degree Standard Observer"]["D65"]
    xyz = colour_science.sRGB_to_XYZ(rgb / 255.0)
    ref = colour_science.XYZ_to_Lab(xyz, d65)
    np.testing.assert_allclose(srgb_to_lab(rgb), ref, atol=0.05)


def test_lab_round_trip_is_exact_on_8_bit_colours():
    rng = np.random.default_rng(2)
    rgb = rng.integers(0, 256, size=(500, 3)).astype(np.uint8)
    assert np.array_equal(lab_to_srgb(srgb_to_lab(rgb)), rgb)


def test_error_planes_are_ciede2000_per_paint():
    rng = np.random.default_rng(3)
    target = srgb_to_lab(rng.integers(0, 256, size=(7, 9, 3)).astype(np.uint8))
    pal = srgb_to_lab(np.array([[10, 20, 30], [200, 100, 50]], dtype=np.uint8))
    planes = error_planes(target, pal)
    assert planes.shape == (7, 9, 2) and planes.dtype == np.float32
    for k in range(2):
        np.testing.assert_allclose(planes[:, :, k], delta_e00(target, pal[k]), rtol=1e-5, atol=1e-4)


def test_mean_delta_e_refuses_images_of_different_size():
    with pytest.raises(ValueError, match="differ in size"):
        mean_delta_e00(np.zeros((2, 2, 3), np.uint8), np.zeros((3, 2, 3), np.uint8))
