"""CCT/Duv at the edges of the solvers' tables and of the rendering references' range."""

from __future__ import annotations

import json

import numpy as np
import pytest
from typer.testing import CliRunner

from cctkit.analysis import analyse
from cctkit.cct import cct_duv
from cctkit.cli import app
from cctkit.constants import WAVELENGTH_NM
from cctkit.locus import planckian_uv
from cctkit.planck import spectral_exitance
from cctkit.rendering import reference_cct
from cctkit.spectra import Spectra

runner = CliRunner()


@pytest.mark.parametrize("T", [1000.0, 25000.0])
def test_blackbodies_at_the_reference_range_ends_get_ra_and_rf(T, tmp_path):
    # CIE 13.3 / CIE 224: a Planckian source is its own reference below 5000 K (Ra = Rf = 100 at 1000 K);
    # at 25000 K the CIE daylight reference of that CCT applies (CIE 15:2018 section 4.1.2 to 25000 K)
    rec = analyse(Spectra(WAVELENGTH_NM, spectral_exitance(T)[None], ("bb",), quantity="irradiance")).records()[0]
    assert rec["Ra"] is not None and rec["Rf"] is not None, rec["flags"]
    if T == 1000.0:
        # CIE 13.3-1995 / CIE 224:2017: a Planckian source is its own reference below 5000 K, so Ra = Rf = 100
        assert rec["Ra"] == pytest.approx(100.0, abs=1e-6) and rec["Rf"] == pytest.approx(100.0, abs=1e-3)
    # through files, as a user does it (the CSV's rounding moves the CCT a hair either side of the bound)
    out = tmp_path / "bb.csv"
    assert runner.invoke(app, ["blackbody", f"{T:g}", "--output", str(out)]).exit_code == 0
    doc = json.loads(runner.invoke(app, ["inspect", str(out), "--json"]).stdout)
    r = doc["spectra"][0]
    assert r["Ra"] is not None and r["Rf"] is not None, r["flags"]
    assert not any(f["code"] == "cct-above-reference-range" for f in r["flags"])


def test_reference_cct_bound_tolerance():
    # common practice, no source: 1e-6 relative either side of 1000 K / 25000 K is the bound itself
    got = reference_cct([999.9995, 25000.02, 1000.0, 25000.0, 990.0, 25100.0], np.zeros(6))
    assert got[:4] == pytest.approx([1000.0, 25000.0, 1000.0, 25000.0])
    assert np.isnan(got[4]) and np.isnan(got[5])


@pytest.mark.parametrize("method", ["exact", "ohno2013"])
def test_on_locus_points_below_the_tables_give_zero_or_nothing(method):
    # a point on the Planckian locus has Duv = 0 by definition (CIE 15:2018 section 9.5): 0 or withheld
    T = np.arange(500.0, 901.0, 25.0)
    duv = cct_duv(planckian_uv(T), method=method).duv
    ok = np.isnan(duv) | (np.abs(duv) < 1e-6)
    assert ok.all(), dict(zip(T[~ok], duv[~ok]))


def test_robertson_below_its_table_is_null_with_the_range_named():
    r = cct_duv(planckian_uv(1200.0), method="robertson1968")
    # Robertson (1968) / Wyszecki & Stiles Table 1(3.11) spans 0-600 mired, i.e. 1667 K and above
    assert np.isnan(r.cct_K) and np.isnan(r.duv)
    # inside the table Robertson's interpolation is good to about 1 K near 2000 K (from memory)
    assert cct_duv(planckian_uv(2000.0), method="robertson1968").cct_K == pytest.approx(2000.0, abs=2.0)
    uv = planckian_uv(1200.0)
    res = runner.invoke(app, ["cct", "--uv", f"{uv[0]:.6f}", f"{uv[1]:.6f}", "--method", "robertson1968", "--json"])
    assert res.exit_code == 0
    doc = json.loads(res.stdout)
    assert doc["cct_K"] is None and doc["duv"] is None
    assert "robertson1968 table (1667 K and above)" in doc["warning"] and "|Duv|" not in doc["warning"]


def test_spectrum_below_the_exact_table_is_flagged_not_given_a_duv():
    rec = analyse(Spectra(WAVELENGTH_NM, spectral_exitance(600.0)[None], ("ember",))).records()[0]
    assert rec["duv"] is None and rec["cct_K"] is None
    assert "outside-cct-table" in [f["code"] for f in rec["flags"]]
