"""Peak, centroid and FWHM (cctkit.shape)."""

from __future__ import annotations

import numpy as np
import pytest

from cctkit.constants import WAVELENGTH_NM
from cctkit.errors import InputError
from cctkit.shape import centroid_wavelength_nm, fwhm_nm, peak_wavelength_nm, spectral_shape

FWHM_PER_SIGMA = 2.0 * np.sqrt(2.0 * np.log(2.0))  # Gaussian: FWHM = 2 sqrt(2 ln 2) sigma (textbook identity)


def _gauss(centre, sigma):
    centre = np.asarray(centre, dtype=float)[..., None]
    sigma = np.asarray(sigma, dtype=float)[..., None]
    return np.exp(-0.5 * ((WAVELENGTH_NM - centre) / sigma) ** 2)


def test_gaussians_peak_centroid_fwhm_in_one_batch():
    centres = np.array([450.0, 532.3, 589.7, 630.5, 660.25])
    sigmas = np.array([5.0, 10.0, 20.0, 8.5, 12.0])
    r = spectral_shape(3.7 * _gauss(centres, sigmas))
    # parabolic refinement on 1 nm samples: bias well under 0.05 nm for sigma >= 5 nm (common practice, no source)
    assert r.peak_nm == pytest.approx(centres, abs=0.05)
    # linear interpolation at the half-maximum crossings: error << 0.05 nm for sigma >= 5 nm
    assert r.fwhm_nm == pytest.approx(FWHM_PER_SIGMA * sigmas, abs=0.05)
    # a symmetric peak far from the grid ends has its centroid at the centre
    assert r.centroid_nm == pytest.approx(centres, abs=1e-6)


def test_peak_on_a_sample_needs_no_refinement():
    assert peak_wavelength_nm(_gauss(555.0, 10.0)) == pytest.approx(555.0, abs=1e-9)


def test_highest_of_two_peaks():
    s = _gauss(450.0, 9.0) + 0.6 * _gauss(600.0, 40.0)
    assert peak_wavelength_nm(s) == pytest.approx(450.0, abs=0.05)
    # The broad pedestal adds 0.6 exp(-0.5 (150/40)^2) = 5.3e-4 of the peak at 450 nm and widens the
    # 21.193 nm of the bare Gaussian to 21.208 nm (numpy on a 0.001 nm grid, here by hand); measured on
    # the 1 nm grid: 21.218 nm, +0.024 nm.  Tolerance 0.05 nm, the interpolation bound used above.
    assert fwhm_nm(s) == pytest.approx(FWHM_PER_SIGMA * 9.0, abs=0.05)


def test_fwhm_nan_when_the_half_maximum_is_not_reached():
    rising = np.linspace(0.0, 1.0, 471)  # maximum at 830 nm, never half on the right
    flat = np.ones(471)
    edge = _gauss(365.0, 20.0)  # left half-maximum crossing falls outside 360 nm
    out = fwhm_nm(np.vstack([rising, flat, edge]))
    assert np.all(np.isnan(out))


def test_centroid_of_a_two_line_spectrum():
    s = np.zeros(471)
    s[450 - 360] = 1.0
    s[650 - 360] = 3.0
    assert centroid_wavelength_nm(s) == pytest.approx((450 + 3 * 650) / 4)  # weighted mean by definition


def test_zero_spectrum_is_nan_everywhere():
    r = spectral_shape(np.zeros((1, 471)))
    assert np.isnan(r.peak_nm[0]) and np.isnan(r.centroid_nm[0]) and np.isnan(r.fwhm_nm[0])
    assert r.record(0) == {"peak_nm": None, "centroid_nm": None, "fwhm_nm": None}


def test_leading_axes_kept():
    s = _gauss(np.full((2, 3), 500.0), np.full((2, 3), 15.0))
    assert peak_wavelength_nm(s).shape == (2, 3)
    assert fwhm_nm(s).shape == (2, 3)


def test_bad_grid():
    with pytest.raises(InputError, match=r"values: last axis must hold 471 samples"):
        peak_wavelength_nm(np.ones(470))
