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


def _exhaustive_fwhm():
    """The former FWHM form, kept in the benchmark for the comparison."""
    import importlib.util
    from pathlib import Path

    path = Path(__file__).resolve().parents[1] / "benchmarks" / "bench_shape_dominant.py"
    spec = importlib.util.spec_from_file_location("bench_shape_dominant", path)
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    return mod.exhaustive_fwhm


def test_mask_fwhm_equals_the_former_form_bit_for_bit():
    rng = np.random.default_rng(3)
    n = 400
    s = (
        _gauss(rng.uniform(380, 800, n), rng.uniform(2, 40, n))
        + rng.uniform(0, 0.9, (n, 1)) * _gauss(rng.uniform(380, 800, n), rng.uniform(5, 80, n))
        + rng.uniform(0, 0.02, (n, 471))
    )
    new = fwhm_nm(s)
    old = _exhaustive_fwhm()(s)
    defined = np.isfinite(new)
    assert defined.sum() > n // 2
    assert np.array_equal(new[defined], old[defined])  # identical where the new rule reports a width
    # where withheld, the reason is recorded: no peak, or a band not closed inside the range
    r = spectral_shape(s)
    assert np.all(r.fwhm_status[~defined] > 0) and np.all(r.fwhm_status[defined] == 0)


def _cie(name):
    colour = pytest.importorskip("colour")
    return colour.SDS_ILLUMINANTS[name].copy().align(colour.SpectralShape(360, 830, 1)).values


def test_edge_flat_and_broadband_are_withheld_with_their_reason():
    from cctkit.planck import spectral_exitance

    bb2700 = spectral_exitance(np.array([2700.0]), WAVELENGTH_NM)[0]
    v = np.vstack([_cie("D65"), np.ones(471), bb2700, _gauss(550.0, 12.0)])
    r = spectral_shape(v)
    codes = [[f.code for f in fl] for fl in r.flags]
    # D65: peak at 460 nm (CIE 15:2018 Table T.1 tabulates its highest value, 117.8, at 460 nm; from memory)
    assert r.peak_nm[0] == pytest.approx(460.0, abs=1.0)
    assert np.isnan(r.fwhm_nm[0]) and codes[0] == ["fwhm-not-defined"]
    assert "FWHM is not defined for this broadband spectrum" in r.flags[0][0].message
    assert "830 nm" in r.flags[0][0].message  # D65 is above half its maximum at the 830 nm end
    assert np.isnan(r.peak_nm[1]) and np.isnan(r.fwhm_nm[1]) and codes[1] == ["peak-not-meaningful"]
    # a 2700 K blackbody peaks at 1073 nm (Wien: 2.8978e6 nm K / T, CIE 15:2018 / textbook): beyond 830 nm
    assert np.isnan(r.peak_nm[2]) and codes[2] == ["peak-at-range-edge"]
    assert "830 nm end of the measured range (360-830 nm)" in r.flags[2][0].message
    assert codes[3] == [] and r.fwhm_nm[3] == pytest.approx(FWHM_PER_SIGMA * 12.0, abs=0.05)


def test_measured_range_decides_the_edge():
    # A Gaussian at 560 nm measured only to 540 nm: the highest measured value is the 540 nm end.
    g = _gauss(560.0, 15.0)
    r = spectral_shape(g, measured_range_nm=[(380.0, 540.0, 1.0)])
    assert np.isnan(r.peak_nm[0]) and r.flags[0][0].code == "peak-at-range-edge"
    # measured 380-780: both crossings inside, band closed
    r = spectral_shape(g, measured_range_nm=[(380.0, 780.0, 5.0)])
    assert r.peak_nm[0] == pytest.approx(560.0, abs=0.05) and r.flags[0] == ()
    # a band whose lower half-maximum crossing lies below the measured start: FWHM withheld, peak kept
    r = spectral_shape(_gauss(420.0, 30.0), measured_range_nm=[(400.0, 780.0, 1.0)])
    assert r.peak_nm[0] == pytest.approx(420.0, abs=0.05)
    assert np.isnan(r.fwhm_nm[0]) and r.flags[0][0].code == "fwhm-not-defined"
    assert "400 nm" in r.flags[0][0].message
