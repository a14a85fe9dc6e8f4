"""The Planckian locus against published tables and the reference library."""

import numpy as np
import pytest

from cctkit.colorimetry import XYZ, XYZ_to_xy, uv_to_xy, xy_to_uv
from cctkit.locus import isotemperature_line, locus_normal, planckian_locus, planckian_uv, uv_from_cct_duv


def robertson_rows():
    from colour.temperature.robertson1968 import DATA_ISOTEMPERATURE_LINES_ROBERTSON1968

    rows = np.asarray(DATA_ISOTEMPERATURE_LINES_ROBERTSON1968)
    return rows[rows[:, 0] > 0]


def test_locus_matches_robertson_table_to_five_decimals():
    # Wyszecki & Stiles (1982) Table 1(3.11), Robertson's isotemperature lines, 10-600 mired,
    # locus u, v printed to 5 decimals (as carried by colour-science's dataset).
    rows = robertson_rows()
    uv = planckian_uv(1e6 / rows[:, 0])
    assert np.abs(uv - rows[:, 1:3]).max() <= 0.5e-5 + 1e-9  # the table's rounding


def test_locus_matches_reference_library():
    # reference library: colour-science 0.4 CCT_to_uv_Ohno2013 at Duv = 0, same 360-830 nm CMFs.
    import colour
    from colour.temperature import CCT_to_uv_Ohno2013

    cmfs = colour.MSDS_CMFS["CIE 1931 2 Degree Standard Observer"]
    T = np.array([1000.0, 1667.0, 2700.0, 4000.0, 6500.0, 10000.0, 25000.0, 100000.0])
    ref = CCT_to_uv_Ohno2013(np.stack([T, np.zeros_like(T)], axis=-1), cmfs)
    assert np.allclose(planckian_uv(T), ref, atol=1e-12)


def test_ten_degree_locus_matches_reference_library():
    import colour
    from colour.temperature import CCT_to_uv_Ohno2013

    cmfs = colour.MSDS_CMFS["CIE 1964 10 Degree Standard Observer"]
    T = np.array([2000.0, 5000.0, 9000.0])
    ref = CCT_to_uv_Ohno2013(np.stack([T, np.zeros_like(T)], axis=-1), cmfs)  # reference library: colour-science 0.4
    assert np.allclose(planckian_uv(T, observer=10), ref, atol=1e-12)


def test_inverse_offsets_along_the_normal():
    # The point at Duv from the locus is at that distance and perpendicular to the locus.
    T = np.array([2000.0, 3000.0, 6500.0])
    for duv in (-0.02, 0.01):
        p = uv_from_cct_duv(T, duv)
        L, n = locus_normal(T)
        assert np.allclose(np.linalg.norm(p - L, axis=-1), abs(duv), rtol=1e-12)
        # above = towards larger v  # CIE 15:2018 section 9.5 sign convention
        assert np.all(np.sign(p[:, 1] - L[:, 1]) == np.sign(duv))


def test_isotemperature_line_is_straight():
    pts = isotemperature_line(4000.0, np.linspace(-0.05, 0.05, 11))
    d = pts - pts[0]
    cross = d[:, 0] * d[-1, 1] - d[:, 1] * d[-1, 0]
    assert np.abs(cross).max() < 1e-15


def test_locus_table_covers_1000_to_100000K():
    loc = planckian_locus()
    assert loc.T_K[0] == 1000.0 and loc.T_K[-1] == 100000.0
    assert np.allclose(uv_to_xy(loc.uv), loc.xy)
    assert np.allclose(xy_to_uv(loc.xy), loc.uv)
    row = loc.rows()[0]
    assert set(row) >= {"T_K", "x", "y", "u", "v"}


def test_illuminant_A_formula_lies_on_the_locus(tmp_path):
    # CIE 15:2018: illuminant A x = 0.44758, y = 0.40745 (2 deg)  # from memory
    # The published values come from 5 nm data; at 1 nm over 360-830 nm y differs by ~1e-5.
    from conftest import illuminant_A_spd

    from cctkit.constants import WAVELENGTH_NM

    xy = XYZ_to_xy(XYZ(illuminant_A_spd(WAVELENGTH_NM)[None, :]))[0]
    assert xy == pytest.approx([0.44758, 0.40745], abs=2e-5)
