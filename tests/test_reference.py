"""Reference illuminants for colour rendering (cctkit.rendering.reference)."""

from __future__ import annotations

import numpy as np
import pytest

from cctkit.cct import cct_duv
from cctkit.colorimetry import XYZ, XYZ_to_uv, XYZ_to_xy
from cctkit.constants import WAVELENGTH_NM
from cctkit.rendering import reference_for
from cctkit.rendering.reference import (
    daylight_reference,
    daylight_xy,
    nominal_daylight_cct_K,
    planckian_reference,
    reference_cie13_3,
    reference_cie224,
)

colour = pytest.importorskip("colour")


def test_d65_chromaticity_from_the_daylight_polynomial():
    # CIE 15:2004 section 3.1 / Table T.3: D65, x = 0.31271, y = 0.32902 (from memory).  The
    # y_D polynomial itself gives y 1e-4 higher than the tabulated spectrum's chromaticity.
    xy = daylight_xy(nominal_daylight_cct_K(6500.0))[0]
    assert xy[0] == pytest.approx(0.31271, abs=2e-5)
    assert xy[1] == pytest.approx(0.32902, abs=2e-4)


def test_nominal_name_scaling():
    # CIE 15:2018 section 4.1.2: D65 is daylight of 6500 x 1.4388/1.4380 K (about 6504 K).
    assert float(nominal_daylight_cct_K(6500.0)) == pytest.approx(6503.616, abs=1e-3)


def test_daylight_spectrum_matches_tabulated_d65():
    # reference library: colour-science 0.4.7 SDS_ILLUMINANTS["D65"] (CIE 15:2018 Table T.1,
    # 5 nm).  Compared at the 10 nm nodes, where our linear 1 nm basis equals the table's basis.
    d65 = colour.SDS_ILLUMINANTS["D65"]
    nodes = np.arange(380.0, 781.0, 10.0)
    table_vals = np.array([d65[w] for w in nodes])
    ours = daylight_reference(nominal_daylight_cct_K(6500.0)).values[0]
    ours_nodes = ours[np.searchsorted(WAVELENGTH_NM, nodes)]
    scale = table_vals[nodes == 560.0] / ours_nodes[nodes == 560.0]
    # measured agreement 5e-6 (the table is rounded to 4-6 significant digits)
    np.testing.assert_allclose(ours_nodes * scale, table_vals, rtol=2e-5)


@pytest.mark.parametrize("T", [5000.0, 6500.0, 9000.0, 15000.0, 25000.0])
def test_daylight_reference_has_the_requested_cct(T):
    # CIE 15:2018 section 4.1.2: the x_D, y_D polynomials give daylight of CCT T (c2 = 1.4388e-2 m K);
    # the polynomials are a fit, so agreement is to a few kelvin.  CCT by the reference library
    # colour-science 0.4.7 (Ohno 2013) so the check does not rest on our own solver.
    ref = daylight_reference([T], round_m=False).values
    uv = XYZ_to_uv(XYZ(ref))[0]
    T_lib = colour.temperature.uv_to_CCT_Ohno2013(uv)[0]
    assert T_lib == pytest.approx(T, rel=5e-4)  # measured: within 10 K at 25000 K, 1 K below 10000 K


def test_planckian_reference_matches_reference_library():
    # reference library: colour-science 0.4.7 sd_blackbody (Planck's law, c2 = 1.4388e-2 m K).
    T = np.array([2700.0, 4000.0])
    ours = planckian_reference(T).values
    for i, t in enumerate(T):
        lib = colour.sd_blackbody(t, colour.SpectralShape(360, 830, 1)).values
        np.testing.assert_allclose(ours[i] / ours[i, 200], lib / lib[200], rtol=1e-9)
    # every reference is scaled to Y = 100 (2 deg) -- module contract
    np.testing.assert_allclose(XYZ(ours)[:, 1], 100.0, rtol=1e-12)


def test_cie13_3_selection_at_5000_K():
    # CIE 13.3-1995 section 5.1: Planckian below 5000 K, daylight from 5000 K.
    ref = reference_cie13_3([4999.0, 5000.0, 5001.0])
    assert ref.kind == ("planckian", "daylight", "daylight")
    np.testing.assert_array_equal(ref.planckian_weight, [1.0, 0.0, 0.0])


def test_cie224_selection_and_blend_weights():
    # CIE 224:2017 section 4.2: Planckian below 4000 K, daylight above 5000 K,
    # m = (5000 K - T) / 1000 K of the Planckian in between.
    ref = reference_cie224([3000.0, 4000.0, 4250.0, 4500.0, 5000.0, 6500.0])
    assert ref.kind == ("planckian", "planckian", "blend", "blend", "daylight", "daylight")
    np.testing.assert_allclose(ref.planckian_weight, [1.0, 1.0, 0.75, 0.5, 0.0, 0.0])


@pytest.mark.parametrize("T", [4100.0, 4500.0, 4900.0])
def test_cie224_blend_matches_reference_library(T):
    # reference library: colour-science 0.4.7 colour.quality.cfi2017.sd_reference_illuminant.
    # The shapes differ by up to 1 % near 760 nm because the library interpolates the daylight
    # basis with Sprague and we interpolate linearly (CIE 15:2018 section 4.1.2); chromaticity
    # and the bulk of the spectrum agree closely.
    from colour.quality.cfi2017 import sd_reference_illuminant

    lib = sd_reference_illuminant(T, colour.SpectralShape(360, 830, 1)).values
    ours = reference_cie224([T]).values[0]
    xy_lib = XYZ_to_xy(XYZ(lib[None]))[0]
    xy_ours = XYZ_to_xy(XYZ(ours[None]))[0]
    np.testing.assert_allclose(xy_ours, xy_lib, atol=2e-5)
    band = (WAVELENGTH_NM >= 400) & (WAVELENGTH_NM <= 700)
    r = (ours / lib)[band]
    np.testing.assert_allclose(r / r.mean(), 1.0, atol=1.5e-2)


def test_blend_observer_effect_is_small():
    # Documented in reference_cie224: 2 deg versus 10 deg equal-Y mixing changes the
    # reference chromaticity by far less than 1e-4 in uv (measured 1.4e-7).  common practice, no source
    T = np.array([4200.0, 4500.0, 4800.0])
    uv10 = XYZ_to_uv(XYZ(reference_cie224(T, blend_observer=10).values))
    uv2 = XYZ_to_uv(XYZ(reference_cie224(T, blend_observer=2).values))
    assert np.max(np.abs(uv10 - uv2)) < 1e-6


def test_planckian_reference_lies_on_the_locus():
    # CIE 15:2018 section 9.5: the Planckian radiator of T has CCT T and Duv 0.
    T = np.array([2000.0, 3000.0, 4500.0])
    res = cct_duv(XYZ_to_uv(XYZ(planckian_reference(T).values)))
    np.testing.assert_allclose(res.cct_K, T, rtol=1e-6)
    np.testing.assert_allclose(res.duv, 0.0, atol=1e-7)


def test_nan_cct_gives_nan_reference():
    ref = reference_cie224([np.nan, 3000.0])
    assert ref.kind == ("none", "planckian")
    assert np.isnan(ref.values[0]).all() and np.isfinite(ref.values[1]).all()


def test_bad_arguments():
    with pytest.raises(ValueError, match="cct_K must be > 0 K"):
        reference_cie13_3([3000.0, -5.0])
    with pytest.raises(ValueError, match="blend_observer must be 2 or 10"):
        reference_cie224([4500.0], blend_observer=5)
    with pytest.raises(ValueError, match="method must be one of"):
        reference_for([4500.0], method="cie1964")
