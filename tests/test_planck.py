"""Blackbody physics against CODATA constants and numerical integration of Planck's law."""

import numpy as np
import pytest
from scipy.integrate import quad
from scipy.optimize import minimize_scalar

from cctkit import planck
from cctkit.constants import C2_CODATA_M_K, C2_M_K, SIGMA_W_PER_M2_K4, WIEN_B_M_K


def test_constants_match_codata():
    # CODATA 2018: c2 = 1.438776877e-2 m K, b = 2.897771955e-3 m K, sigma = 5.670374419e-8 W m-2 K-4
    assert C2_CODATA_M_K == pytest.approx(1.438776877e-2, rel=1e-9)
    assert C2_M_K == 1.4388e-2  # CIE 15:2018 section 9.1
    # sigma from h, c, k: 2 pi^5 k^4 / (15 h^3 c^2)  # CODATA 2018 (exact defining constants)
    from cctkit.constants import C_M_PER_S, H_J_S, K_B_J_PER_K

    sigma = 2 * np.pi**5 * K_B_J_PER_K**4 / (15 * H_J_S**3 * C_M_PER_S**2)
    assert sigma == pytest.approx(SIGMA_W_PER_M2_K4, rel=1e-9)


@pytest.mark.parametrize("T", [1000.0, 2856.0, 5778.0, 6504.0, 20000.0])
def test_wien_peak_is_the_maximum_of_planck(T):
    # Wien's law with CODATA b vs the numerical maximum of Planck's law with CODATA c2.
    res = minimize_scalar(
        lambda lam: -planck.spectral_exitance(T, np.array([lam]), c2="codata")[0],
        bracket=(0.5 * WIEN_B_M_K / T * 1e9, WIEN_B_M_K / T * 1e9, 2 * WIEN_B_M_K / T * 1e9),
        tol=1e-12,
    )
    assert res.x == pytest.approx(planck.wien_peak_nm(T), rel=1e-7)


@pytest.mark.parametrize("T", [300.0, 2856.0, 6504.0])
def test_stefan_boltzmann_is_the_integral_of_planck(T):
    # Integral of Planck spectral exitance over all wavelengths (CODATA c2) equals sigma T^4.
    peak = planck.wien_peak_nm(T)
    f = lambda lam: planck.spectral_exitance(T, np.array([lam]), c2="codata")[0]  # noqa: E731
    total = sum(
        quad(f, a, b, limit=200, epsabs=0)[0]
        for a, b in [(peak / 50, peak), (peak, 10 * peak), (10 * peak, 2000 * peak)]
    )
    assert total == pytest.approx(planck.total_exitance(T), rel=1e-6)


def test_radiance_is_exitance_over_pi():
    # Lambertian blackbody: M = pi L  # Planck's law, common practice
    T = np.array([2000.0, 6500.0])
    assert np.allclose(planck.spectral_exitance(T), np.pi * planck.spectral_radiance(T), rtol=1e-12)


def test_temperature_derivative_is_exact():
    T = np.array([1500.0, 4000.0, 30000.0])
    h = T * 1e-6
    numeric = (planck.spectral_exitance(T + h) - planck.spectral_exitance(T - h)) / (2 * h[:, None])
    assert np.allclose(planck.spectral_exitance_dT(T), numeric, rtol=1e-7)


def test_blackbody_efficacy_at_6600K_is_near_its_maximum():
    # The luminous efficacy of blackbody radiation peaks near 6600 K at about 95 lm/W  # from memory
    T = np.linspace(3000, 12000, 181)
    eff = planck.blackbody_efficacy(T)
    assert 6000 < T[np.argmax(eff)] < 7200
    assert 90 < eff.max() < 100


def test_bad_temperature_is_rejected():
    with pytest.raises(ValueError, match="T_K must be finite"):
        planck.total_exitance(-5.0)
    with pytest.raises(ValueError, match="c2"):
        planck.resolve_c2("ipts-68")
