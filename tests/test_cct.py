"""CCT and Duv: the exact solver, the published methods, and the reference library."""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from cctkit.cct import cct_duv
from cctkit.colorimetry import XYZ, XYZ_to_uv, xy_to_uv
from cctkit.locus import planckian_uv, uv_from_cct_duv


def brute_force(uv, observer=2):
    """Nearest locus point by direct minimisation of the true distance (no tables)."""
    from scipy.optimize import minimize_scalar

    def dist(m):
        return float(np.sum((planckian_uv(1e6 / m, observer=observer) - uv) ** 2))

    ms = np.linspace(10, 1000, 2000)
    d = np.sum((planckian_uv(1e6 / ms) - uv) ** 2, axis=-1)
    i = int(np.argmin(d))
    r = minimize_scalar(
        dist, bounds=(ms[max(i - 1, 0)], ms[min(i + 1, ms.size - 1)]), method="bounded", options={"xatol": 1e-10}
    )
    return 1e6 / r.x


def test_round_trip_thousands_of_points(rng):
    # Round trip on 20,000 random (CCT, Duv): <= 1 mK over 1000-25000 K, |Duv| <= 0.05  # project requirement
    T = np.exp(rng.uniform(np.log(1000), np.log(25000), 20000))
    D = rng.uniform(-0.05, 0.05, T.size)
    r = cct_duv(uv_from_cct_duv(T, D))
    assert np.max(np.abs(r.cct_K - T)) <= 1e-3
    assert np.max(np.abs(r.duv - D)) <= 1e-9


def test_round_trip_to_100000K(rng):
    T = np.exp(rng.uniform(np.log(25000), np.log(100000), 5000))
    D = rng.uniform(-0.05, 0.05, T.size)
    r = cct_duv(uv_from_cct_duv(T, D))
    assert np.max(np.abs(r.cct_K - T)) <= 0.01


def test_exact_agrees_with_brute_force_minimisation(rng):
    pts = uv_from_cct_duv(rng.uniform(1500, 20000, 8), rng.uniform(-0.04, 0.04, 8))
    got = cct_duv(pts).cct_K
    ref = np.array([brute_force(p) for p in pts])
    assert np.allclose(got, ref, rtol=0, atol=2e-3)


@pytest.mark.parametrize(
    "xy, cct, source",
    [
        ((0.44758, 0.40745), 2856, "CIE 15:2018, illuminant A: 2856 K"),
        ((0.31272, 0.32903), 6504, "CIE 15:2018, illuminant D65: 6504 K"),
    ],
)
def test_cie_illuminant_ccts(xy, cct, source):
    r = cct_duv(xy_to_uv(np.array(xy)))
    assert float(r.cct_K) == pytest.approx(cct, abs=1.0), source


def test_d65_duv_is_positive():
    # D65 lies above the Planckian locus, Duv about +0.0032  # from memory (trade fact)
    r = cct_duv(xy_to_uv(np.array([0.31272, 0.32903])))
    assert float(r.duv) == pytest.approx(0.0032, abs=0.0001)


def test_against_reference_library_ohno2013(rng):
    # reference library: colour-science 0.4 uv_to_CCT_Ohno2013 with the same 360-830 nm CMFs.
    import colour
    from colour.temperature import uv_to_CCT_Ohno2013

    cmfs = colour.MSDS_CMFS["CIE 1931 2 Degree Standard Observer"]
    T = rng.uniform(1500, 20000, 40)
    D = rng.uniform(-0.03, 0.03, 40)
    uv = uv_from_cct_duv(T, D)
    ref = uv_to_CCT_Ohno2013(uv, cmfs)
    r = cct_duv(uv)
    # colour-science's Ohno 2013 is an approximation; documented accuracy about 1 K (relative 1e-4)
    assert np.allclose(r.cct_K, ref[:, 0], rtol=2e-4)
    assert np.allclose(r.duv, ref[:, 1], atol=1e-4)


def test_our_ohno2013_and_robertson1968_are_close_to_exact(rng):
    T = rng.uniform(2000, 15000, 500)
    D = rng.uniform(-0.02, 0.02, 500)
    uv = uv_from_cct_duv(T, D)
    ohno = cct_duv(uv, method="ohno2013")
    rob = cct_duv(uv, method="robertson1968")
    # Ohno (2013) reports errors within about 1 K with a 1 % table  # Ohno, LEUKOS 10(1), 2014
    assert np.nanmax(np.abs(ohno.cct_K - T) / T) < 3e-4
    assert np.nanmax(np.abs(ohno.duv - D)) < 2e-4
    # Robertson's method with a 10-mired table is good to a few K  # from memory
    assert np.nanmax(np.abs(rob.cct_K - T) / T) < 2e-3


def test_leading_shape_is_kept():
    uv = uv_from_cct_duv(np.full((3, 4), 4000.0), np.zeros((3, 4)))
    r = cct_duv(uv)
    assert r.cct_K.shape == (3, 4) and r.duv.shape == (3, 4)


def test_out_of_domain_points():
    r = cct_duv(np.array([[0.5, 0.1], [np.nan, 0.3], [0.25, 0.40]]))
    assert np.isnan(r.cct_K[1]) and np.isnan(r.duv[1])
    assert not r.in_domain[2]  # far above the locus: |Duv| > 0.05 (CIE 15:2018 section 9.5)


def test_bad_arguments():
    with pytest.raises(ValueError, match="method must be one of"):
        cct_duv(np.array([0.2, 0.3]), method="mccamy")
    with pytest.raises(ValueError, match=r"shape \(\.\.\., 2\)"):
        cct_duv(np.array([0.2, 0.3, 0.1]))


@settings(max_examples=200, deadline=None)
@given(st.floats(1000, 100000), st.floats(-0.05, 0.05))
def test_round_trip_property(T, D):
    r = cct_duv(uv_from_cct_duv(np.array([T]), np.array([D])))
    assert abs(float(r.cct_K[0]) - T) <= max(1e-3, 1e-7 * T)
    assert abs(float(r.duv[0]) - D) <= 1e-9


def test_blackbody_spectrum_gives_its_own_temperature():
    from cctkit.planck import spectral_exitance

    T = np.array([1800.0, 2700.0, 5000.0, 12000.0])
    uv = XYZ_to_uv(XYZ(spectral_exitance(T)))
    r = cct_duv(uv)
    assert np.allclose(r.cct_K, T, atol=1e-3)
    assert np.allclose(r.duv, 0, atol=1e-10)
