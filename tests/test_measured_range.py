"""Totals over what was measured, the coverage rule, and files nothing can be computed from."""

from __future__ import annotations

import json

import numpy as np
import pytest
from conftest import illuminant_A_spd
from typer.testing import CliRunner

from cctkit.analysis import analyse
from cctkit.cli import app
from cctkit.constants import KM_LM_PER_W
from cctkit.spectra import Spectra

runner = CliRunner()
H, C, NA = 6.62607015e-34, 299792458.0, 6.02214076e23  # CODATA 2018 (exact)


def _V(wl):
    from cctkit.tables import table

    return np.interp(wl, np.arange(360.0, 831.0), table("cmf_2")[:, 1], left=0.0, right=0.0)


def record(wl, values, quantity="irradiance"):
    return analyse(Spectra(wl, np.asarray(values)[None], ("s",), quantity=quantity), rendering=False).records()[0]


@pytest.mark.parametrize(("lo", "hi"), [(380, 780), (400, 700), (350, 1000)])
def test_totals_are_plain_sums_over_the_measured_range_at_1nm(lo, hi):
    wl = np.arange(lo, hi + 1, 1.0)
    s = illuminant_A_spd(wl) / 100.0
    r = record(wl, s)
    # common practice (the definition of each quantity): plain sums over the measured data, 1 nm step
    radiant = s.sum()
    photons = (s * wl * 1e-9 / (H * C) / NA * 1e6).sum()
    par = (wl >= 400) & (wl <= 700)
    luminous = KM_LM_PER_W * (s * _V(wl)).sum()
    assert r["radiant_total_W_per_m2"] == pytest.approx(radiant, rel=1e-12)
    assert r["photon_flux_umol_per_m2_s"] == pytest.approx(photons, rel=1e-12)
    assert r["ppfd_umol_per_m2_s"] == pytest.approx((s * wl * 1e-9 / (H * C) / NA * 1e6)[par].sum(), rel=1e-12)
    assert r["ler_lm_per_W"] == pytest.approx(luminous / radiant, rel=1e-9)
    assert r["illuminance_lx"] == pytest.approx(luminous, rel=1e-9)
    assert r["radiometric_range_nm"] == [lo, hi]
    assert r["photometric_range_nm"] == [max(lo, 360), min(hi, 830)]


def test_tungsten_measured_to_1000nm_counts_its_infrared():
    wl = np.arange(350, 1001, 1.0)
    s = illuminant_A_spd(wl)
    r = record(wl, s)
    inside = (wl >= 360) & (wl <= 830)
    # the infrared beyond 830 nm is measured radiant power: it counts (definition of LER)
    assert r["ler_lm_per_W"] < KM_LM_PER_W * (s * _V(wl)).sum() / s[inside].sum()
    assert r["ler_lm_per_W"] == pytest.approx(KM_LM_PER_W * (s * _V(wl)).sum() / s.sum(), rel=1e-9)


def test_5nm_fluorescent_measured_400_700_against_plain_sums():
    colour = pytest.importorskip("colour")
    sd = colour.SDS_ILLUMINANTS["FL2"]  # reference library: CIE FL2, 5 nm
    wl, v = sd.wavelengths, sd.values
    m = (wl >= 400) & (wl <= 700)
    r = record(wl[m], v[m])
    # plain 5 nm sums over what was measured (common practice); the luminous part is summed on the
    # 1 nm working grid after Sprague interpolation, so LER agrees to ~1e-5 (measured 7e-6)
    assert r["radiant_total_W_per_m2"] == pytest.approx(5.0 * v[m].sum(), rel=1e-12)
    assert r["ler_lm_per_W"] == pytest.approx(KM_LM_PER_W * (v[m] * _V(wl[m])).sum() / v[m].sum(), rel=1e-4)
    assert "range-short" in [f["code"] for f in r["flags"]]


def test_non_uniform_grid_sums_each_sample_times_its_interval():
    wl = np.array([380.0, 390, 400, 450, 500, 550, 600, 700, 780])
    s = np.ones_like(wl)
    # a flat spectrum: the radiant total is the measured width plus half a step at each end (no halving)
    r = record(wl, s)
    assert r["radiant_total_W_per_m2"] == pytest.approx(400.0 + 10.0 / 2 + 80.0 / 2)  # common practice, no source


def test_blackbody_all_wavelength_efficacy_against_stefan_boltzmann():
    from cctkit.planck import blackbody_efficacy, spectral_exitance

    T = 6500.0
    sigma = 5.670374419e-8  # CODATA 2018
    # Planck's law integrated numerically over 50 nm - 1 mm gives sigma T^4 (the all-wavelength total)
    lam = np.geomspace(50e-9, 1e-3, 400_000)
    c1, c2 = 2 * np.pi * H * C**2, H * C / 1.380649e-23
    M = c1 / lam**5 / np.expm1(c2 / (lam * T))
    assert np.trapezoid(M, lam) == pytest.approx(sigma * T**4, rel=1e-6)
    lum = KM_LM_PER_W * (spectral_exitance(T) @ _V(np.arange(360.0, 831.0)))
    assert blackbody_efficacy(T) == pytest.approx(lum / (sigma * T**4), rel=1e-12)
    assert 94 < blackbody_efficacy(T) < 97  # about 95 lm/W near 6500 K  # from memory


def test_blackbody_and_inspect_agree_on_what_ler_means(tmp_path):
    out = tmp_path / "bb.json"
    doc = json.loads(runner.invoke(app, ["blackbody", "6500", "--json", "--output", str(out)]).stdout)
    rec = json.loads(runner.invoke(app, ["inspect", str(out), "--json"]).stdout)["spectra"][0]
    assert doc["ler_lm_per_W"] == pytest.approx(rec["ler_lm_per_W"], rel=1e-12)
    assert doc["ler_range_nm"] == rec["radiometric_range_nm"] == [360.0, 830.0]
    assert doc["all_wavelength_efficacy_lm_per_W"] < 0.6 * doc["ler_lm_per_W"]
    assert "luminous_efficacy_lm_per_W" not in doc


def test_coverage_rule_withholds_the_totals_a_short_range_cannot_carry():
    wl = np.arange(420, 681, 5.0)
    s = illuminant_A_spd(wl)
    r = record(wl, s)
    # 420-680 nm leaves 7.3 % of the S-cone-opic and 1.3 % of the melanopic integral uncovered (> 1 %),
    # 0.25 % of V(lambda) (< 1 %): our documented coverage rule (cctkit.photometry.COVERAGE_LIMIT)
    assert r["s_cone_opic_der"] is None and r["melanopic_der"] is None and r["melanopic_edi_lx"] is None
    assert r["m_cone_opic_der"] is not None and r["illuminance_lx"] is not None
    msgs = [f["message"] for f in r["flags"] if f["code"] == "coverage-short"]
    # 92.70 %: the share of the CIE S 026 Table 2 s-cone-opic integral inside 420-680 nm (summed from that table)
    assert any(m.startswith("s_cone_opic quantities withheld") and "92.70 %" in m for m in msgs), msgs
    assert any(m.startswith("melanopic quantities withheld") for m in msgs)
    narrow = record(np.arange(500, 601, 1.0), np.ones(101))
    assert narrow["illuminance_lx"] is None and narrow["ler_lm_per_W"] is None
    assert narrow["radiant_total_W_per_m2"] == pytest.approx(101.0)  # what was measured still counts


def _csv(path, wl, values):
    path.write_text("wavelength_nm,value\n" + "".join(f"{w:g},{v:g}\n" for w, v in zip(wl, values)))
    return path


@pytest.mark.parametrize(
    ("wl", "values", "cause"),
    [
        (np.arange(900, 1700, 5.0), np.ones(160), "no measured data in 380-780 nm"),
        (np.arange(380, 781, 5.0), np.zeros(81), "no signal"),
    ],
)
@pytest.mark.parametrize("command", [["inspect"], ["versus"], ["bin"], ["report", "--output", "x.pdf"]])
def test_nothing_to_compute_is_refused_with_the_file_named(tmp_path, wl, values, cause, command):
    f = _csv(tmp_path / "dark.csv", wl, values)
    args = [command[0], str(f), *[str(tmp_path / a) if a.endswith(".pdf") else a for a in command[1:]]]
    r = runner.invoke(app, args)
    assert r.exit_code == 2
    assert len(r.output.strip().splitlines()) == 1 and str(f) in r.output and cause in r.output


def test_batch_writes_a_flagged_row_instead(tmp_path):
    wl = np.arange(380, 781, 5.0)
    folder = tmp_path / "lot"
    folder.mkdir()
    _csv(folder / "a.csv", wl, illuminant_A_spd(wl))
    _csv(folder / "b.csv", wl, np.zeros_like(wl))
    out = tmp_path / "out.csv"
    r = runner.invoke(app, ["batch", str(folder), "--output", str(out), "--workers", "1"])
    assert r.exit_code == 0, r.output
    import csv

    rows = list(csv.DictReader(out.open()))
    assert len(rows) == 2
    assert "no-signal" in rows[1]["flags"] and rows[1]["cct_K"] == "" and rows[1]["Ra"] == ""
    assert rows[0]["cct_K"] != ""
