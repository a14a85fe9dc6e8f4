"""Photometric, radiant and photon totals (cctkit.photometry)."""

from __future__ import annotations

import numpy as np
import pytest
from conftest import cie_illuminant_1nm as _cie_illuminant

from cctkit.constants import KM_LM_PER_W, WAVELENGTH_NM
from cctkit.errors import InputError
from cctkit.photometry import (
    luminous_efficacy_of_radiation,
    luminous_total,
    photometry,
    photon_total_umol,
    ppf_umol,
    radiant_total,
    sp_ratio,
)
from cctkit.spectra import Quantity

# Sum of the CIE 1931 2 deg y-bar at 1 nm over 360-830 nm (plain summation, CIE 15:2018 convention).
# reference library: colour-science 0.4.7 data (MSDS_CMFS "CIE 1931 2 Degree Standard Observer",
# summed: 106.85691710117); 106.857 is also the usual value (from memory).
YBAR_SUM_1NM = 106.856917


def _sd(values: np.ndarray):
    import colour

    return colour.SpectralDistribution(dict(zip(WAVELENGTH_NM, values)))


def test_equal_energy_luminous_total_matches_reference_library():
    colour = pytest.importorskip("colour")
    flat = np.ones(471)  # 1 W/nm
    cmfs = colour.MSDS_CMFS["CIE 1931 2 Degree Standard Observer"]
    ybar_sum = float(np.sum(cmfs.copy().align(colour.SpectralShape(360, 830, 1)).values[:, 1]))
    # reference library: colour-science 0.4.7, CIE 1931 y-bar summed at 1 nm over 360-830 nm
    # (YBAR_SUM_1NM, to the 6 decimals written there)
    assert ybar_sum == pytest.approx(YBAR_SUM_1NM, abs=1e-6)
    assert ybar_sum == pytest.approx(106.857, abs=5e-4)  # the usual value, 3 decimals (from memory)
    assert luminous_total(flat) == pytest.approx(KM_LM_PER_W * ybar_sum, rel=1e-12)
    xyz = colour.sd_to_XYZ(_sd(flat), cmfs, method="Integration", k=KM_LM_PER_W)
    assert luminous_total(flat) == pytest.approx(xyz[1], rel=1e-9)  # reference library: colour-science 0.4.7


def test_ler_of_equal_energy_spectrum():
    # Km * sum(y-bar) / 471 over 360-830 nm at 1 nm: hand arithmetic from the CIE 1931 table sum above
    assert luminous_efficacy_of_radiation(np.full(471, 2.5)) == pytest.approx(
        KM_LM_PER_W * YBAR_SUM_1NM / 471, rel=1e-7
    )
    # 683.002 * 106.856917 / 471 = 154.954 (hand arithmetic)
    assert luminous_efficacy_of_radiation(np.full(471, 2.5)) == pytest.approx(154.95, abs=0.01)


def test_monochromatic_555_nm_efficacy_is_Km():
    s = np.zeros(471)
    s[555 - 360] = 1.0  # 1 W at 555 nm
    # CIE 15:2018 section 7.1: V(555 nm) = 1 (tabulated 1.0000), so 683.002 lm/W
    assert luminous_efficacy_of_radiation(s) == pytest.approx(683.002, rel=1e-6)


@pytest.mark.parametrize(
    ("name", "expected", "source"),
    [
        ("A", 1.41, "trade handbooks, from memory"),
        ("D65", 2.47, "trade handbooks, from memory"),
    ],
)
def test_sp_ratio_of_cie_illuminants(name, expected, source):
    assert sp_ratio(_cie_illuminant(name)) == pytest.approx(expected, abs=0.01), source


@pytest.mark.parametrize("name", ["A", "D65"])
def test_scotopic_and_photopic_totals_match_reference_library(name):
    colour = pytest.importorskip("colour")
    e = _cie_illuminant(name)
    sd = _sd(e)
    scot = colour.colorimetry.SDS_LEFS_SCOTOPIC["CIE 1951 Scotopic Standard Observer"]
    phot = colour.colorimetry.SDS_LEFS_PHOTOPIC["CIE 1924 Photopic Standard Observer"]
    # reference library: colour-science 0.4.7 luminous_flux (trapezoidal; the end points carry ~0 weight)
    ref_s = colour.luminous_flux(sd, scot, K_m=1700.06)
    ref_p = colour.luminous_flux(sd, phot, K_m=KM_LM_PER_W)
    p = photometry(e, Quantity.IRRADIANCE)
    assert p.scotopic[0] == pytest.approx(ref_s, rel=1e-6)
    assert p.luminous[0] == pytest.approx(ref_p, rel=1e-6)
    assert p.sp_ratio[0] == pytest.approx(ref_s / ref_p, rel=1e-6)


def test_photon_flux_of_1_W_at_555_nm():
    s = np.zeros(471)
    s[555 - 360] = 1.0
    # lambda / (h c N_A) with CODATA 2018 exact h, c, N_A: 555e-9 / 0.119627 = 4.6394 umol/s
    assert photon_total_umol(s) == pytest.approx(4.6394, abs=1e-4)
    assert ppf_umol(s) == pytest.approx(4.6394, abs=1e-4)


def test_ppf_and_photon_flux_of_flat_spectrum():
    flat = np.ones(471)  # 1 W/nm
    # hand arithmetic: sum of lambda over 400..700 nm = 301 * 550 = 165550 nm -> 165550e-9 / 0.11962657 mol
    assert ppf_umol(flat) == pytest.approx(1383.890, abs=1e-3)
    # sum of lambda over 360..830 nm = 471 * 595 = 280245 nm
    assert photon_total_umol(flat) == pytest.approx(1383.890 * 280245 / 165550, rel=1e-6)
    assert radiant_total(flat) == pytest.approx(471.0)


def test_outside_par_band_counts_only_in_total():
    s = np.zeros(471)
    s[399 - 360] = 1.0
    s[701 - 360] = 1.0
    assert ppf_umol(s) == 0.0  # 400-700 nm inclusive: ANSI/ASABE S640 band (from memory)
    assert photon_total_umol(s) > 0


def test_vectorised_over_leading_axes():
    rng = np.random.default_rng(3)
    v = rng.uniform(0, 1, (2, 3, 471))
    total = luminous_total(v)
    assert total.shape == (2, 3)
    assert total[1, 2] == pytest.approx(luminous_total(v[1, 2]))


def test_zero_spectrum_gives_nan_ratios_not_numbers():
    p = photometry(np.zeros((2, 471)), Quantity.RADIANT_FLUX)
    assert np.all(np.isnan(p.ler_lm_per_W)) and np.all(np.isnan(p.sp_ratio))
    assert p.record(0)["ler_lm_per_W"] is None


def test_record_keys_follow_the_quantity():
    flat = np.ones((1, 471))
    irr = photometry(flat, Quantity.IRRADIANCE).record(0)
    assert set(irr) == {
        "ler_lm_per_W",
        "sp_ratio",
        "illuminance_lx",
        "radiant_total_W_per_m2",
        "photon_flux_umol_per_m2_s",
        "ppfd_umol_per_m2_s",
        "radiometric_range_nm",
        "photometric_range_nm",
        "ppf_range_nm",  # every total names its range
    }
    assert irr["radiometric_range_nm"] == [360.0, 830.0] and irr["ppf_range_nm"] == [400.0, 700.0]
    flux = photometry(flat, "radiant-flux").record(0)
    # Km (CIE 15:2018 section 7.1) times the y-bar sum of the reference library (YBAR_SUM_1NM)
    assert flux["luminous_flux_lm"] == pytest.approx(KM_LM_PER_W * YBAR_SUM_1NM, rel=1e-7)
    assert flux["radiant_total_W"] == pytest.approx(471.0)
    assert "ppf_umol_per_s" in flux and "photon_flux_umol_per_s" in flux
    rel = photometry(flat, Quantity.RELATIVE).record(0)
    # relative spectra carry no absolute totals, only the ranges of LER's parts
    assert set(rel) == {"ler_lm_per_W", "sp_ratio", "radiometric_range_nm", "photometric_range_nm", "ppf_range_nm"}
    assert photometry(flat, Quantity.RADIANCE).luminous_unit == "cd/m^2"
    assert photometry(flat, Quantity.INTENSITY).photon_unit == "umol/(sr s)"


def test_wrong_grid_is_an_input_error():
    with pytest.raises(InputError, match=r"values: last axis must hold 471 samples"):
        luminous_total(np.ones((2, 401)))
    with pytest.raises(InputError, match=r"unknown quantity 'lumens'"):
        photometry(np.ones(471), "lumens")
