"""Measurement uncertainty: the model's invariants, Monte Carlo against the GUM law, the adaptive rule, seeds."""

import json
from pathlib import Path

import numpy as np
import pytest
from typer.testing import CliRunner

from cctkit.analysis import analyse
from cctkit.cli import app
from cctkit.readers import read_spectra
from cctkit.spectra import Spectra
from cctkit.uncertainty import (
    cct_duv_jacobian,
    coverage_interval,
    gum_chromaticity,
    gum_validation,
    load_model,
    measure_columns,
    monte_carlo,
    numerical_tolerance,
    parse_model,
    uv_ellipse,
)

ROOT = Path(__file__).resolve().parents[1]
LAMP = ROOT / "spectra" / "northbeam-nb-3000-95.csv"  # radiant flux, 380-780 nm at 1 nm
MODEL = ROOT / "spectra" / "models" / "harbourside-lab-spectro.toml"
runner = CliRunner()


@pytest.fixture(scope="module")
def lamp():
    return read_spectra(LAMP)


def _model(**tables):
    return parse_model(tables)


# ---------------------------------------------------------------- invariants of the model


def test_fully_correlated_scale_leaves_relative_measures_unchanged(lamp):
    # A spectrally flat relative error cancels in every ratio of spectral sums (CIE 15:2018 eqs. 7.3,
    # 8.1; CIE 13.3 and CIE 224 normalise to Y; LER and DER are ratios): u = 0 to rounding noise.
    u_rel = 0.02
    r = monte_carlo(lamp, _model(scale={"u_rel": u_rel}, montecarlo={"draws": 2000, "seed": 3}))
    est = r.spectra[0].estimates
    for key in (
        "x",
        "y",
        "u",
        "v",
        "u_prime",
        "v_prime",
        "cct_K",
        "duv",
        "Ra",
        "R9",
        "Rf",
        "Rg",
        "ler_lm_per_W",
        "melanopic_der",
        "sp_ratio",
    ):
        e = est[key]
        assert e.u <= 1e-9 * max(abs(e.value), 1e-3), (key, e.u, e.value)
    # The luminous total scales with the error: u / value = u_rel, up to the Monte Carlo scatter of a
    # standard deviation from M draws, relative 1 / sqrt(2 (M - 1)) = 1.6 % (JCGM 101 section 7.9, from memory).
    flux = est["luminous_flux_lm"]
    assert flux.u / flux.value == pytest.approx(u_rel, rel=0.06)
    assert flux.U == 2 * flux.u


def test_uncorrelated_noise_agrees_with_the_gum_law(lamp):
    # Noise alone, small: the chromaticity is close to linear in the spectrum, so the GUM law
    # (JCGM 100 section 5.1, cov(XYZ) = W^T Sigma W and the analytic Jacobian) and the Monte Carlo
    # method must agree within the numerical tolerance: JCGM 101 section 8.2 validation.
    model = _model(
        noise={"u_rel": 0.02, "floor": 0.0},
        montecarlo={"draws": "adaptive", "tolerance_digits": 1, "block": 2000, "seed": 5},
    )
    r = monte_carlo(lamp, model, rendering=False)
    s = r.spectra[0]
    assert s.converged
    for key in ("x", "y", "u", "v"):
        e = s.estimates[key]
        d_low, d_high, delta = gum_validation(e.value, e.u_gum, e.interval_95, 1)
        assert d_low <= delta and d_high <= delta, (key, d_low, d_high, delta)
        assert e.gum_validated is True
        assert abs(e.u - e.u_gum) <= numerical_tolerance(e.u_gum, 1), key


def test_wavelength_offset_alone_matches_the_finite_difference(lamp):
    # u(CCT) = |dCCT/d(offset)| u(offset) (JCGM 100 eq. 10 for one input); the derivative by a central
    # difference of the spectrum really moved on its wavelength axis, through the ordinary resampling.
    u_off = 0.2
    h = 0.05

    def cct_at(shift):
        moved = Spectra(
            wavelength_nm=lamp.wavelength_nm + shift, values=lamp.values, names=lamp.names, quantity=lamp.quantity
        )
        return float(analyse(moved, rendering=False).cct.cct_K[0])

    slope = (cct_at(h) - cct_at(-h)) / (2 * h)
    r = monte_carlo(
        lamp, _model(wavelength={"offset_u_nm": u_off}, montecarlo={"draws": 4000, "seed": 7}), rendering=False
    )
    e = r.spectra[0].estimates["cct_K"]
    # Monte Carlo scatter of u from 4000 draws: 1.1 % relative; the second-order shift model adds less.
    assert e.u == pytest.approx(abs(slope) * u_off, rel=0.05)
    assert e.u_gum == pytest.approx(abs(slope) * u_off, rel=0.02)


# ---------------------------------------------------------------- the GUM pieces against numbers


def test_cct_duv_jacobian_matches_central_differences():
    # common practice, no source: analytic derivative against a numerical one of the solver itself
    from cctkit.cct import cct_duv

    uv = np.array([[0.2530, 0.3476], [0.2000, 0.3100], [0.2300, 0.3250]])
    res = cct_duv(uv)
    dT, dD = cct_duv_jacobian(uv, res.cct_K)
    h = 1e-7
    for k in range(2):
        e = np.zeros(2)
        e[k] = h
        p, m = cct_duv(uv + e), cct_duv(uv - e)
        np.testing.assert_allclose(dT[:, k], (p.cct_K - m.cct_K) / (2 * h), rtol=1e-4)
        np.testing.assert_allclose(dD[:, k], (p.duv - m.duv) / (2 * h), rtol=1e-4, atol=1e-6)


def test_gum_of_a_fully_correlated_scale_is_zero_for_chromaticity(lamp):
    # cov(XYZ) proportional to XYZ XYZ^T is annihilated by the Jacobian of any ratio (Euler's theorem
    # for functions homogeneous of degree 0): common practice, no source.
    g = gum_chromaticity(lamp, _model(scale={"u_rel": 0.05}))
    a = analyse(lamp, rendering=False)
    values = {
        "x": a.xy[0, 0],
        "y": a.xy[0, 1],
        "u": a.uv[0, 0],
        "v": a.uv[0, 1],
        "cct_K": a.cct.cct_K[0],
        "duv": 0.3,
    }  # Duv on the scale of the uv coordinates
    for key, value in values.items():
        assert g[key][0] <= 1e-9 * abs(value), key  # rounding noise of the cancelling sums


# ---------------------------------------------------------------- statistics of JCGM 101


def test_coverage_interval_follows_the_clause_rule():
    # JCGM 101:2008 section 7.7: M = 100, p = 0.95 -> q = 95, r = (100 - 95 + 1) / 2 = 3: [y(3), y(98)]
    y = np.arange(1.0, 101.0)
    lo, hi = coverage_interval(y)
    assert (lo, hi) == (3.0, 98.0)
    # A large normal sample: the 95 % interval approaches -/+ 1.96 (normal quantile, any table)
    z = np.sort(np.random.default_rng(1).standard_normal(200_000))
    lo, hi = coverage_interval(z)
    assert lo == pytest.approx(-1.96, abs=0.02) and hi == pytest.approx(1.96, abs=0.02)


def test_numerical_tolerance_of_the_clause():
    # JCGM 101:2008 section 7.9.2 (from memory): u = 0.0035 written 35 x 10^-4 with two
    # significant digits gives delta = 0.5 x 10^-4; with one digit, 4 x 10^-3 and delta = 0.5 x 10^-3
    assert numerical_tolerance(0.0035, 2) == pytest.approx(0.5e-4)
    assert numerical_tolerance(0.0035, 1) == pytest.approx(0.5e-3)
    assert numerical_tolerance(28.7, 2) == pytest.approx(0.5)


def test_adaptive_procedure_meets_its_tolerance(lamp):
    # JCGM 101 section 7.9.4: stop when twice the standard deviation of the stage results is within delta.
    # Two independent adaptive runs must then agree on u to about that tolerance.
    base = {"noise": {"u_rel": 0.01}, "wavelength": {"offset_u_nm": 0.2}}
    runs = []
    for seed in (11, 12):
        m = _model(**base, montecarlo={"draws": "adaptive", "tolerance_digits": 1, "block": 1000, "seed": seed})
        runs.append(monte_carlo(lamp, m, rendering=False).spectra[0])
    for s in runs:
        assert s.converged and s.stages >= 2 and s.draws_M == 1000 * s.stages
    for key in ("x", "y", "cct_K", "duv", "ler_lm_per_W"):
        a, b = runs[0].estimates[key], runs[1].estimates[key]
        delta = numerical_tolerance(a.u, 1)
        assert abs(a.u - b.u) <= 2 * delta, (key, a.u, b.u, delta)


def test_the_adaptive_rule_can_fail_to_stabilise(lamp):
    # A cap below what three digits need: the run says so instead of claiming stability.
    m = _model(
        noise={"u_rel": 0.01},
        montecarlo={"draws": "adaptive", "tolerance_digits": 3, "block": 500, "max_draws": 1000, "seed": 1},
    )
    s = monte_carlo(lamp, m, rendering=False).spectra[0]
    assert not s.converged and s.draws_M == 1000


# ---------------------------------------------------------------- plumbing


def test_columns_are_the_records_numbers(lamp):
    a = analyse(lamp)
    cols = measure_columns(a)
    rec = a.records()[0]
    for key, col in cols.items():
        expected = rec[key] if key in rec else rec["R"][int(key[1:]) - 1]
        assert col[0] == pytest.approx(expected, rel=1e-12), key


def test_type_a_from_repeats(lamp):
    # Repeat scans with a known scatter: u of the mean luminous total ~ s / sqrt(n) times the t factor
    # sqrt(nu / (nu - 2)) (JCGM 101 section 6.4.9); common practice for the numbers.
    rng = np.random.default_rng(4)
    n = 8
    factors = 1 + 0.01 * rng.standard_normal(n)
    reps = Spectra(
        wavelength_nm=lamp.wavelength_nm,
        values=lamp.values * factors[:, None],
        names=tuple(f"scan {i}" for i in range(n)),
        quantity=lamp.quantity,
    )
    r = monte_carlo(reps, _model(montecarlo={"draws": 5000, "seed": 2}), rendering=False, repeats=True)
    s = r.spectra[0]
    assert s.repeats == n and "mean of 8 scans" in s.name
    flux = s.estimates["luminous_flux_lm"]
    expected = np.std(factors, ddof=1) / np.sqrt(n) * np.sqrt((n - 1) / (n - 3)) * flux.value / factors.mean()
    assert flux.u == pytest.approx(expected, rel=0.06)
    assert flux.u_gum is None and s.estimates["x"].u < 1e-9


def test_uv_ellipse_is_the_95_percent_contour():
    cov = np.array([[4e-6, 1e-6], [1e-6, 1e-6]])
    pts = uv_ellipse([0.25, 0.35], cov)
    d = pts - [0.25, 0.35]
    m2 = np.einsum("ni,ij,nj->n", d, np.linalg.inv(cov), d)
    np.testing.assert_allclose(m2, 5.991464547107979, rtol=1e-9)  # chi-squared 2 dof, p = 0.95 (any table)


# ---------------------------------------------------------------- model files and the command line


def test_model_file_errors_name_the_key(tmp_path):
    bad = tmp_path / "m.toml"
    bad.write_text("[noise]\nu_rell = 0.01\n")
    with pytest.raises(ValueError, match=r"m.toml: unknown key \[noise\] u_rell \(did you mean 'u_rel'\?\)"):
        load_model(bad)
    bad.write_text("[calibraton]\nu_rel = 0.01\n")
    with pytest.raises(ValueError, match=r"unknown table \[calibraton\] \(did you mean 'calibration'\?\)"):
        load_model(bad)
    bad.write_text("[scale]\nu_rel = -0.01\n")
    with pytest.raises(ValueError, match=r"\[scale\] u_rel must be a finite number >= 0"):
        load_model(bad)
    bad.write_text('[montecarlo]\ndraws = "lots"\n')
    with pytest.raises(ValueError, match=r'\[montecarlo\] draws must be "adaptive" or a whole number'):
        load_model(bad)
    bad.write_text("[calibration]\nu_rel = 0.01\n")
    with pytest.raises(ValueError, match=r"\[calibration\] needs correlation_nm > 0"):
        load_model(bad)


def test_cli_bad_model_is_one_line_exit_2(tmp_path):
    bad = tmp_path / "m.toml"
    bad.write_text("[noise\nu_rel = 0.01\n")
    before = bad.read_bytes()
    r = runner.invoke(app, ["uncertainty", str(LAMP), "--model", str(bad)])
    assert r.exit_code == 2
    lines = r.output.strip().splitlines()
    assert len(lines) == 1 and "not a valid TOML uncertainty model" in lines[0]
    assert bad.read_bytes() == before


def test_same_seed_same_bytes_and_the_json_contract(tmp_path):
    model = tmp_path / "m.toml"
    text = MODEL.read_text().replace('draws = "adaptive"', "draws = 100")
    model.write_text(text)
    outs = []
    for k in range(2):
        out = tmp_path / f"u{k}.json"
        r = runner.invoke(app, ["uncertainty", str(LAMP), "--model", str(model), "--output", str(out), "--json"])
        assert r.exit_code == 0, r.output
        outs.append(out.read_bytes())
    assert outs[0] == outs[1]
    doc = json.loads(outs[0])
    assert doc["uncertainty_model"]["sha256"] and doc["uncertainty_model"]["tables"]["scale"]["u_rel"] == 0.01
    cct = doc["spectra"][0]["cct_K"]
    assert set(cct) >= {"value", "u", "U", "k", "interval_95", "draws"}
    assert cct["k"] == 2 and cct["U"] == pytest.approx(2 * cct["u"]) and cct["draws"] == 100
    assert cct["interval_95"][0] < cct["value"] < cct["interval_95"][1]
    # another seed gives other numbers (the check above can fail)
    model.write_text(text.replace("seed = 1", "seed = 2"))
    other = tmp_path / "u2.json"
    runner.invoke(app, ["uncertainty", str(LAMP), "--model", str(model), "--output", str(other)])
    assert json.loads(other.read_bytes())["spectra"][0]["cct_K"]["u"] != cct["u"]


def test_cli_table_and_csv(tmp_path):
    model = tmp_path / "m.toml"
    model.write_text(MODEL.read_text().replace('draws = "adaptive"', "draws = 100"))
    out = tmp_path / "u.csv"
    r = runner.invoke(app, ["uncertainty", str(LAMP), "--model", str(model), "--output", str(out)])
    assert r.exit_code == 0, r.output
    assert "U (k=2)" in r.stdout and "CCT" in r.stdout and "M = 100 draws" in r.stdout
    rows = out.read_text().splitlines()
    assert rows[0].startswith("name,measure,unit,value,u,U,k,interval_95_lo,interval_95_hi,draws")
    assert any(",cct_K,K," in row for row in rows)


# ---------------------------------------------------------------- decisions


def test_verify_takes_guard_bands_from_the_model_and_the_claims_file_overrides(tmp_path):
    # ISO 14253-1 / ILAC G8 guard band with U computed per sample; the typed-in [uncertainty] table
    # (Ra = 0.5, luminous_flux_lm = 30 in the demo claims) keeps precedence for its metrics.
    model = tmp_path / "m.toml"
    model.write_text(MODEL.read_text().replace('draws = "adaptive"', "draws = 100"))
    claims = ROOT / "spectra" / "claims" / "northbeam-3000K.toml"
    out = tmp_path / "v.json"
    r = runner.invoke(
        app, ["verify", str(LAMP), "--claims", str(claims), "--uncertainty-model", str(model), "--output", str(out)]
    )
    assert r.exit_code in (0, 1, 3), r.output
    doc = json.loads(out.read_text())
    assert doc["uncertainty_model"]["sha256"] == __import__("hashlib").sha256(model.read_bytes()).hexdigest()
    checks = {c["metric"]: c for c in doc["samples"][0]["checks"]}
    assert checks["Ra"]["decision"] == {
        "rule": "guard-band",
        "U": 0.5,
        "result": checks["Ra"]["result"],
        "U_source": "claims",
    }
    r9 = checks["R9"]["decision"]
    assert r9["U_source"] == "model"
    # the same U the uncertainty command reports for this sample with this model (same seed, same draws)
    u = runner.invoke(app, ["uncertainty", str(LAMP), "--model", str(model), "--json"])
    assert r9["U"] == pytest.approx(json.loads(u.stdout)["spectra"][0]["R9"]["U"], rel=1e-12)
    assert checks["sdcm"]["decision"]["U_source"] == "model" and checks["sdcm"]["decision"]["U"] > 0


def test_report_page_shows_U_beside_each_number(tmp_path, lamp):
    from conftest import pdf_page_texts

    from cctkit.report.uncertainty import write_uncertainty_report

    r = monte_carlo(lamp, _model(noise={"u_rel": 0.01}, montecarlo={"draws": 200, "seed": 1}))
    out = tmp_path / "u.pdf"
    write_uncertainty_report(r, out, date="2026-01-15", inputs=[LAMP])
    (text,) = pdf_page_texts(out)
    assert "Measurement uncertainty: NB-3000-95" in text and "U (k = 2)" in text and "95 % region" in text
    e = r.spectra[0].estimates["cct_K"]
    assert f"{e.value:.0f}" in text and f"{e.U:.1f}" in text
    with pytest.raises(ValueError, match="exists"):
        write_uncertainty_report(r, out, inputs=[LAMP])
    # same result, same date: same bytes
    again = tmp_path / "again.pdf"
    write_uncertainty_report(r, again, date="2026-01-15")
    assert again.read_bytes() == out.read_bytes()


def test_a_coloured_source_has_no_cct_and_says_so(lamp):
    # A green LED (|Duv| far above 0.05): CCT is not reported (CIE 15:2018), so it has no uncertainty either.
    wl = lamp.wavelength_nm
    green = Spectra(wavelength_nm=wl, values=np.exp(-0.5 * ((wl - 530.0) / 15.0) ** 2), names=("green",))
    r = monte_carlo(green, _model(noise={"u_rel": 0.01}, montecarlo={"draws": 100, "seed": 1}), rendering=False)
    d = r.records()[0]
    assert d["cct_K"]["value"] is None and d["cct_K"]["u"] is None and d["cct_K"]["draws"] == 0
    assert d["x"]["u"] > 0 and d["dominant_wavelength_nm"]["u"] > 0


def test_repeats_need_four_scans(tmp_path):
    r = runner.invoke(app, ["uncertainty", str(LAMP), "--model", str(MODEL), "--as-repeats"])
    assert r.exit_code == 2
    assert r.output.strip().count("\n") == 0 and "at least 4 are needed" in r.output
