"""CIE S 026/E:2018 alpha-opic quantities (cctkit.alphaopic)."""

from __future__ import annotations

import numpy as np
import pytest

from cctkit.alphaopic import (
    ALPHA_OPIC_NAMES,
    CIRCADIAN_CAUTION,
    D65_ELR_W_PER_LM,
    action_spectra,
    alpha_opic,
    govardovskii2000,
    melanopic_action_spectrum,
)
from cctkit.constants import KE_MEL_D65_W_PER_LM, WAVELENGTH_NM
from cctkit.errors import InputError
from cctkit.photometry import luminous_total
from cctkit.spectra import Quantity, Spectra, to_working_grid

from conftest import cie_illuminant_1nm as _cie_illuminant

# CIE S 026/E:2018 Table 2, alpha-opic ELR of D65 [mW/lm] (from memory), published to 4 decimals
PUBLISHED_D65_ELR_mW_PER_LM = [
    ("s_cone", 0.8173),
    ("m_cone", 1.4558),
    ("l_cone", 1.6289),
    ("rhodopic", 1.4497),
]


@pytest.mark.parametrize(("name", "expected_mW"), PUBLISHED_D65_ELR_mW_PER_LM)
def test_d65_cone_and_rhodopic_elr_match_cie_s026_table_2(name, expected_mW):
    k = ALPHA_OPIC_NAMES.index(name)
    elr = alpha_opic(_cie_illuminant("D65")).elr_W_per_lm[0, k]
    # CIE S 026/E:2018 Table 2 (from memory); tolerance = half a unit of the published last digit
    assert elr * 1e3 == pytest.approx(expected_mW, abs=5e-5)


def test_d65_via_working_grid_resampling_stays_close():
    # Our to_working_grid uses Sprague (CIE 167) on the 5 nm D65; CIE tabulates D65 at 1 nm by linear
    # interpolation.  The difference moves the ELRs by up to 2e-4 relative (measured 1.8e-4 for s-cone).
    colour = pytest.importorskip("colour")
    sd = colour.SDS_ILLUMINANTS["D65"]
    g = to_working_grid(Spectra(sd.wavelengths, sd.values[None], ("D65",))).values
    elr = alpha_opic(g).elr_W_per_lm[0, :4] * 1e3
    assert elr == pytest.approx([v for _, v in PUBLISHED_D65_ELR_mW_PER_LM], rel=3e-4)  # CIE S 026 Table 2


def test_d65_der_of_cones_and_rods_is_one():
    # denominators are the published Table 2 values, so this is a check against CIE S 026/E:2018 Table 2
    der = alpha_opic(_cie_illuminant("D65")).der[0, :4]
    assert der == pytest.approx(np.ones(4), abs=1e-4)


def test_melanopic_d65_der_near_one_with_known_gap():
    # CIE S 026/E:2018: mel-DER(D65) = 1 by definition of the published 1.3262 mW/lm.  Our construction
    # of s_mel (module notes) measures 1.3179 mW/lm, a gap of -0.63 %; this bound catches a broken
    # construction, the strict check below records that the published table is not reproduced.
    der = alpha_opic(_cie_illuminant("D65")).melanopic_der[0]
    assert der == pytest.approx(1.0, abs=0.01)


@pytest.mark.xfail(strict=True, reason="s_mel built from template + lens model misses CIE S 026 by 0.6 % at D65")
def test_melanopic_d65_der_is_one_to_1e_3():
    assert alpha_opic(_cie_illuminant("D65")).melanopic_der[0] == pytest.approx(1.0, abs=1e-3)  # CIE S 026/E:2018


def test_melanopic_action_spectrum_shape():
    s = melanopic_action_spectrum()
    assert s.max() == pytest.approx(1.0)
    # CIE S 026/E:2018: peak at 490 nm (from memory); the construction peaks at 492 nm (measured)
    assert abs(WAVELENGTH_NM[np.argmax(s)] - 490.0) <= 2.0
    # CIE S 026/E:2018 table: s_mel(480 nm) = 0.9656 (from memory); the construction gives 0.949 (measured)
    assert s[480 - 360] == pytest.approx(0.9656, abs=0.02)
    assert np.all(s[(WAVELENGTH_NM < 380) | (WAVELENGTH_NM > 780)] == 0)  # S 026 tabulates 380-780 nm


@pytest.mark.xfail(strict=True, reason="construction peaks at 492 nm, s_mel(480) = 0.949 vs 0.9656 published")
def test_melanopic_action_spectrum_matches_published_points():
    s = melanopic_action_spectrum()
    assert WAVELENGTH_NM[np.argmax(s)] == 490.0  # CIE S 026/E:2018 (from memory)
    assert s[480 - 360] == pytest.approx(0.9656, abs=1e-3)  # CIE S 026/E:2018 table (from memory)


def test_govardovskii_template_peaks_at_lambda_max():
    # Govardovskii et al. (2000): the alpha band is normalised to 1 at lambda_max
    lam = np.arange(400.0, 600.0, 0.1)
    g = govardovskii2000(lam, 480.0)
    assert lam[np.argmax(g)] == pytest.approx(480.0, abs=0.5)
    assert g.max() == pytest.approx(1.0, abs=0.01)


def test_cone_spectra_are_cie_2006_fundamentals():
    from cctkit.tables import table

    s = action_spectra()
    lms = table("lms_10")
    assert np.array_equal(s[:, 0], lms[:, 2]) and np.array_equal(s[:, 2], lms[:, 0])
    assert np.array_equal(s[:, 3], table("v_scotopic"))


def test_edi_of_d65_at_1000_lx():
    e = _cie_illuminant("D65")
    e = e * 1000.0 / luminous_total(e)
    a = alpha_opic(e[None], Quantity.IRRADIANCE)
    # CIE S 026/E:2018 definition: D65 at 1000 lx has alpha-opic EDI = 1000 lx (Table 2 denominators)
    assert a.edi[0, :4] == pytest.approx(np.full(4, 1000.0), abs=0.1)
    # EDI = DER x illuminance (CIE S 026/E:2018 definitions; a consistency check, not an outside value)
    assert a.melanopic_edi[0] == pytest.approx(a.melanopic_der[0] * 1000.0, rel=1e-9)
    # melanopic irradiance = EDI x 1.3262 mW/lm (CIE S 026 Table 2 value in cctkit.constants)
    assert a.radiant[0, 4] == pytest.approx(a.melanopic_edi[0] * KE_MEL_D65_W_PER_LM, rel=1e-12)
    rec = a.record(0)
    assert set(rec) == {"melanopic_der", "melanopic_edi_lx"}
    assert set(alpha_opic(e[None], Quantity.RADIANT_FLUX).record(0)) == {"melanopic_der"}


def test_vectorised_and_zero_spectrum():
    e = _cie_illuminant("D65")
    batch = np.vstack([e, 3.0 * e, np.zeros(471)])
    a = alpha_opic(batch)
    assert a.elr_W_per_lm.shape == (3, 5)
    assert a.der[1] == pytest.approx(a.der[0])  # ELR and DER do not depend on the level
    assert np.all(np.isnan(a.der[2])) and a.record(2)["melanopic_der"] is None
    assert D65_ELR_W_PER_LM[4] == KE_MEL_D65_W_PER_LM


def test_caution_text_and_bad_input():
    assert "not medical advice" in CIRCADIAN_CAUTION
    with pytest.raises(InputError, match=r"values: last axis must hold 471 samples"):
        alpha_opic(np.ones((1, 81)))
