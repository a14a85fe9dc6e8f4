"""`cctkit inspect` end to end on the demo spectra and on doubtful data."""

import json
from pathlib import Path

import numpy as np
import pytest
from typer.testing import CliRunner

from cctkit.cli import app
from cctkit.constants import KM_LM_PER_W

SPECTRA = Path(__file__).resolve().parent.parent / "spectra"
runner = CliRunner()


def inspect_json(*args):
    r = runner.invoke(app, ["inspect", *map(str, args), "--json"])
    assert r.exit_code == 0, r.output
    return json.loads(r.stdout)


def write_csv(path, wl, values, header="wavelength_nm,value"):
    lines = [header] + [f"{w:g},{v:.9g}" for w, v in zip(wl, values)]
    path.write_text("\n".join(lines) + "\n")
    return path


def test_json_document_has_the_promised_keys():
    doc = inspect_json(SPECTRA / "northbeam-nb-3000-95.csv")
    assert doc["cctkit_version"] and doc["conventions"]["c2_m_K"] == 1.4388e-2  # CIE 15:2018 section 9.1
    (rec,) = doc["spectra"]
    for key in (
        "name",
        "cct_K",
        "duv",
        "x",
        "y",
        "u",
        "v",
        "u_prime",
        "v_prime",
        "luminous_flux_lm",
        "ler_lm_per_W",
        "sp_ratio",
        "melanopic_der",
        "peak_nm",
        "centroid_nm",
        "fwhm_nm",
        "dominant_wavelength_nm",
        "purity",
        "Ra",
        "R",
        "Rf",
        "Rg",
        "Rf_h",
        "Rcs_h",
        "Rhs_h",
        "sha256",
    ):
        assert key in rec, key
    # 14 test colour samples (CIE 13.3-1995), 16 hue bins (ANSI/IES TM-30-20), 99 CES (CIE 224:2017)
    assert len(rec["R"]) == 14 and len(rec["Rf_h"]) == 16 and len(rec["Rf_i"]) == 99
    assert rec["quantity"] == "radiant-flux"


def test_numbers_match_the_reference_library():
    # reference library: colour-science 0.4 on the same 1 nm data (CCT, Ra, Rf).
    import colour

    from cctkit.readers import read_spectra
    from cctkit.spectra import to_working_grid

    s = to_working_grid(read_spectra(SPECTRA / "vell-vo-4000-90.csv"))
    sd = colour.SpectralDistribution(s.values[0], s.wavelength_nm)
    rec = inspect_json(SPECTRA / "vell-vo-4000-90.csv")["spectra"][0]
    XYZ = colour.sd_to_XYZ(sd, method="Integration", k=KM_LM_PER_W)
    assert rec["luminous_flux_lm"] == pytest.approx(XYZ[1], rel=1e-8)
    ref = colour.temperature.uv_to_CCT_Ohno2013(colour.UCS_to_uv(colour.XYZ_to_UCS(XYZ)))
    assert rec["cct_K"] == pytest.approx(ref[0], abs=1.0) and rec["duv"] == pytest.approx(ref[1], abs=1e-4)
    assert rec["Ra"] == pytest.approx(colour.colour_rendering_index(sd), abs=0.05)
    assert rec["Rf"] == pytest.approx(colour.colour_fidelity_index(sd, method="ANSI/IES TM-30-18"), abs=0.05)


def test_same_input_gives_identical_bytes(tmp_path):
    a, b = tmp_path / "a.json", tmp_path / "b.json"
    for out in (a, b):
        assert (
            runner.invoke(app, ["inspect", str(SPECTRA / "tw-lab-setpoints.csv"), "--output", str(out)]).exit_code == 0
        )
    assert a.read_bytes() == b.read_bytes()
    c1, c2 = tmp_path / "a.csv", tmp_path / "b.csv"
    for out in (c1, c2):
        assert (
            runner.invoke(app, ["inspect", str(SPECTRA / "tw-lab-setpoints.csv"), "--output", str(out)]).exit_code == 0
        )
    assert c1.read_bytes() == c2.read_bytes()
    header = c1.read_text().splitlines()[0].split(",")
    assert {"R9", "Rf_h16", "sha256"} <= set(header)


def test_mixed_quantities_are_analysed_in_input_order():
    doc = inspect_json(SPECTRA / "tw-lab-setpoints.csv", SPECTRA / "caldera-cl-2700-80.csv")
    names = [r["name"] for r in doc["spectra"]]
    assert names[-1] == "CL-2700-80" and len(names) == 6
    assert "illuminance_lx" in doc["spectra"][0] and "luminous_flux_lm" in doc["spectra"][-1]


def test_short_range_is_warned(tmp_path):
    wl = np.arange(400, 701, 5.0)
    f = write_csv(tmp_path / "short.csv", wl, np.exp(-0.5 * ((wl - 560) / 60) ** 2))
    rec = inspect_json(f, "--quantity", "relative")["spectra"][0]
    assert "range-short" in [w["code"] for w in rec["flags"]]
    r = runner.invoke(app, ["inspect", str(f)])
    assert "warning [range-short]" in r.output and "does not cover 380-780 nm" in r.output


def test_far_from_locus_cct_is_withheld(tmp_path):
    # A green LED (peak 530 nm): |Duv| >> 0.05, so CCT is not meaningful  # CIE 15:2018 section 9.5
    wl = np.arange(380, 781, 1.0)
    f = write_csv(tmp_path / "green.csv", wl, np.exp(-0.5 * ((wl - 530) / 15) ** 2))
    rec = inspect_json(f)["spectra"][0]
    assert rec["cct_K"] is None and abs(rec["duv"]) > 0.05
    assert "duv-out-of-range" in [w["code"] for w in rec["flags"]]
    assert rec["Ra"] is None and "no-rendering" in [w["code"] for w in rec["flags"]]


def test_dc_validity_is_flagged(tmp_path):
    # Duv about -0.02: inside the CCT domain but DC >= 5.4e-3, CIE 13.3 says Ra is not meaningful
    from cctkit.constants import WAVELENGTH_NM
    from cctkit.planck import spectral_exitance

    wl = WAVELENGTH_NM
    v = spectral_exitance(3000.0) * (
        1 + 0.6 * np.exp(-0.5 * ((wl - 620) / 25) ** 2) + 0.5 * np.exp(-0.5 * ((wl - 450) / 20) ** 2)
    )
    f = write_csv(tmp_path / "pinkish.csv", wl, v / v.max())
    rec = inspect_json(f)["spectra"][0]
    assert rec["cri_dc"] >= 5.4e-3 and rec["cri_valid"] is False  # CIE 13.3-1995 section 5.3
    assert "cri-not-meaningful" in [w["code"] for w in rec["flags"]]


def test_unknown_quantity_is_one_line():
    r = runner.invoke(app, ["inspect", str(SPECTRA / "northbeam-nb-3000-95.csv"), "--quantity", "lumens"])
    assert r.exit_code == 2
    assert r.output.strip().count("\n") == 0 and "unknown quantity 'lumens'" in r.output


def test_rendering_uses_the_2_degree_cct_whatever_the_observer():
    # CIE 13.3-1995 and CIE 224:2017 define the reference at the CIE 1931 2 deg CCT.
    from cctkit.analysis import analyse
    from cctkit.readers import read_spectra

    s = read_spectra(SPECTRA / "caldera-cl-2700-80.csv")
    a2, a10 = analyse(s), analyse(s, observer=10)
    assert a10.cct.cct_K[0] != a2.cct.cct_K[0]  # the 10 deg CCT differs...
    assert a10.cri.Ra[0] == pytest.approx(a2.cri.Ra[0], abs=1e-9)  # ...the indices do not (to rounding)
    assert a10.tm30.Rf[0] == pytest.approx(a2.tm30.Rf[0], abs=1e-9)


def test_no_reference_above_25000K(tmp_path):
    # The CIE daylight polynomials are defined to 25000 K (CIE 15:2018 section 4.1.2): no Ra there.
    from cctkit.constants import WAVELENGTH_NM
    from cctkit.planck import spectral_exitance

    f = write_csv(tmp_path / "bb40k.csv", WAVELENGTH_NM, spectral_exitance(40000.0) / spectral_exitance(40000.0).max())
    rec = inspect_json(f)["spectra"][0]
    assert rec["cct_K"] == pytest.approx(40000, abs=0.01) and rec["Ra"] is None
    assert "cct-above-reference-range" in [w["code"] for w in rec["flags"]]
