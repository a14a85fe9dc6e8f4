"""Dominant / complementary wavelength and excitation purity (cctkit.dominant)."""

from __future__ import annotations

import numpy as np
import pytest

from cctkit.dominant import EQUAL_ENERGY_XY, dominant_wavelength, dominant_wavelength_of_spectra, spectral_locus_xy
from cctkit.errors import InputError


def _points_inside_locus(n: int, seed: int) -> np.ndarray:
    from matplotlib.path import Path

    rng = np.random.default_rng(seed)
    xy = np.column_stack([rng.uniform(0.01, 0.74, n), rng.uniform(0.005, 0.84, n)])
    return xy[Path(spectral_locus_xy()).contains_points(xy)]


# Whites: illuminant E, and D65 (0.3127, 0.3290) and A (0.44757, 0.40745) in CIE 1931 xy: CIE 15:2018,
# colorimetric data of the CIE illuminants (from memory: D65 0.31272, 0.32903; A 0.44758, 0.40745);
# the reference library colour-science 0.4.7 computes 0.31271, 0.32901 and 0.44757, 0.40744 from its
# spectra.  They only choose the white; the expected values come from the reference library below.
@pytest.mark.parametrize("white", [EQUAL_ENERGY_XY, (0.3127, 0.3290), (0.44757, 0.40745)])
def test_against_reference_library(white):
    colour = pytest.importorskip("colour")
    xy = _points_inside_locus(600, seed=7)
    W = np.array(white)
    r = dominant_wavelength(xy, white_xy=W)
    wl, xy_wl, xy_cwl = colour.dominant_wavelength(xy, W)  # reference library: colour-science 0.4.7
    pe = colour.excitation_purity(xy, W)
    # colour-science reports the 1 nm locus sample nearest the crossing; ours interpolates along the segment
    assert np.all(np.sign(r.dominant_wavelength_nm) == np.sign(wl))
    assert np.abs(np.abs(r.dominant_wavelength_nm) - np.abs(wl)).max() <= 0.5
    # the boundary point itself and the purity agree to numerical precision
    assert r.boundary_xy == pytest.approx(xy_wl, abs=1e-6)
    assert r.purity == pytest.approx(pe, abs=1e-6)
    purple = wl < 0
    assert np.array_equal(r.is_purple, purple)
    assert np.abs(r.complementary_wavelength_nm[purple] + wl[purple]).max() <= 0.5


def test_spectral_colours_are_their_own_dominant_wavelength():
    locus = spectral_locus_xy()
    lam = np.array([450.0, 500.0, 555.0, 600.0])
    xy = locus[(lam - 360).astype(int)]
    r = dominant_wavelength(xy)
    # CIE 15:2018 section 9.1: a point on the spectral locus has purity 1 and its own wavelength
    assert r.dominant_wavelength_nm == pytest.approx(lam, abs=1e-6)
    assert r.purity == pytest.approx(np.ones(4), abs=1e-9)


def test_purple_gets_negative_complementary():
    locus = spectral_locus_xy()
    mid_purple = 0.5 * (locus[0] + locus[-1])  # on the purple line
    sample = 0.5 * (mid_purple + np.array(EQUAL_ENERGY_XY))
    r = dominant_wavelength(sample)
    assert bool(r.is_purple)
    assert float(r.dominant_wavelength_nm) < 0
    assert float(r.purity) == pytest.approx(0.5, abs=1e-9)  # half-way from white to the purple line
    assert float(r.complementary_wavelength_nm) == pytest.approx(-float(r.dominant_wavelength_nm))
    # Greens are the complements of purples: seen from E, the purple line's ends (360 and 830 nm)
    # have complementary wavelengths 570 and 494 nm (reference library: colour-science 0.4.7
    # dominant_wavelength just inside each end, 1 nm samples; ours 569.6 and 493.9).
    assert 490 < float(r.complementary_wavelength_nm) < 570
    colour = pytest.importorskip("colour")
    lib_wl = float(colour.dominant_wavelength(sample, np.array(EQUAL_ENERGY_XY))[0])  # -515 nm
    # reference library: colour-science 0.4.7 (nearest 1 nm sample, hence 0.5 nm as above)
    assert float(r.complementary_wavelength_nm) == pytest.approx(-lib_wl, abs=0.5)


def test_white_point_and_nan():
    r = dominant_wavelength(np.array([[1 / 3, 1 / 3], [np.nan, 0.3]]))
    assert np.isnan(r.dominant_wavelength_nm).all()
    assert r.purity[0] == 0.0 and np.isnan(r.purity[1])
    assert r.record(0) == {"dominant_wavelength_nm": None, "purity": 0.0}


def test_leading_shape_and_spectra_entry():
    xy = _points_inside_locus(200, seed=2)[:48].reshape(4, 12, 2)
    assert dominant_wavelength(xy).purity.shape == (4, 12)
    from cctkit.constants import WAVELENGTH_NM

    narrow = np.exp(-0.5 * ((WAVELENGTH_NM - 590.0) / 3.0) ** 2)
    r = dominant_wavelength_of_spectra(narrow)
    # A narrow band lies near the spectral locus at its peak.  reference library: colour-science 0.4.7
    # dominant_wavelength and excitation_purity of the same 1 nm samples: 590 nm (nearest 1 nm sample,
    # hence 0.5 nm as above; ours 589.90) and purity 0.999937.
    colour = pytest.importorskip("colour")
    lib_xy = colour.XYZ_to_xy(colour.sd_to_XYZ(colour.SpectralDistribution(narrow, WAVELENGTH_NM)))
    lib_pe = float(colour.excitation_purity(lib_xy, np.array(EQUAL_ENERGY_XY)))
    assert r.dominant_wavelength_nm[0] == pytest.approx(590.0, abs=0.5)
    assert r.purity[0] == pytest.approx(lib_pe, abs=1e-6) and r.purity[0] <= 1.0  # purity 1 is the locus


def test_bad_input():
    with pytest.raises(InputError, match=r"xy: last axis must hold the two chromaticity coordinates"):
        dominant_wavelength(np.ones((3, 3)))
    with pytest.raises(InputError, match=r"white_xy: expected finite"):
        dominant_wavelength(np.ones(2) * 0.3, white_xy=(np.nan, 0.3))
