"""Reports: every input's size and SHA-256 in lot-size PDFs, U (k = 2) in the headline strip,
printable text found without building ticks, and quiet font lookup."""

from __future__ import annotations

import hashlib
import logging
from pathlib import Path

import pypdf
import pytest
from typer.testing import CliRunner

from cctkit.analysis import analyse_files
from cctkit.cli import app
from cctkit.errors import InputError

ROOT = Path(__file__).resolve().parents[1]
SPECTRA = ROOT / "spectra"
CLAIMS = SPECTRA / "claims" / "northbeam-3000K.toml"
MODEL = SPECTRA / "models" / "harbourside-lab-spectro.toml"
runner = CliRunner()


def _text(path: Path) -> list[str]:
    return [p.extract_text() for p in pypdf.PdfReader(str(path)).pages]


def _flat(s: str) -> str:
    return "".join(s.split())


def _lot() -> list[Path]:
    files = [SPECTRA / "northbeam-nb-3000-95.csv", *sorted((SPECTRA / "lot-nb3000").glob("*.csv"))]
    if len(files) < 10:
        pytest.skip("demo spectra not generated")
    return files


def test_verify_report_lists_every_input_with_size_and_sha256(tmp_path):
    files = _lot()
    out = tmp_path / "lot.pdf"
    r = runner.invoke(app, ["verify", *map(str, files), "--claims", str(CLAIMS), "--report", str(out)])
    assert r.exit_code in (0, 1, 3), r.output
    pages = _text(out)
    inputs = _flat(" ".join(p for p in pages if p.startswith("Inputs")))
    assert inputs, "no inputs page"
    assert "Inputs" in pages[-1]  # the table closes the report
    from cctkit.claims import load_claims

    claims = load_claims(CLAIMS)
    expected = [*files, CLAIMS] + ([Path(claims.sidecar_path)] if claims.sidecar_path else [])
    for f in expected:
        data = f.read_bytes()
        # hashlib on the bytes of the file: the reference the report's digest must equal
        assert hashlib.sha256(data).hexdigest() in inputs, f.name
        assert f"{len(data):,}" in inputs, f.name
        assert f.name in inputs
    # the sign-off page points to the table
    assert "Everyinputfilewithitssize" in _flat(pages[0]) or "listedwithitssizeon" in _flat(pages[0])


def test_many_spectra_report_lists_every_file_once(tmp_path):
    files = _lot()[:14]
    out = tmp_path / "many.pdf"
    r = runner.invoke(app, ["report", *map(str, files), "-o", str(out), "--date", "2026-01-15"])
    assert r.exit_code == 0, r.output
    inputs = " ".join(p for p in _text(out) if p.startswith("Inputs"))
    assert "14 files" in inputs
    for f in files:
        assert hashlib.sha256(f.read_bytes()).hexdigest() in _flat(inputs)


def test_one_wide_file_is_one_input_and_a_changed_file_gets_no_size(tmp_path):
    from cctkit.report.pages import input_rows

    src = tmp_path / "two.csv"
    src.write_text("wavelength_nm,a,b\n" + "\n".join(f"{w},{1 + w / 1000:.4f},{2 - w / 1000:.4f}"
                                                      for w in range(380, 781, 5)) + "\n")
    recs = analyse_files([src], quantity="relative").records()
    rows = input_rows(recs)
    assert len(rows) == 1 and rows[0]["role"] == "2 spectra" and rows[0]["size_bytes"] == src.stat().st_size
    src.write_text("changed")
    rows = input_rows(recs)
    assert rows[0]["size_bytes"] is None and rows[0]["note"] == "changed since it was read"


@pytest.fixture(scope="module")
def nb_with_u():
    from cctkit.readers import read_spectra
    from cctkit.uncertainty import load_model, monte_carlo

    f = SPECTRA / "northbeam-nb-3000-95.csv"
    if not f.exists():
        pytest.skip("demo spectra not generated")
    model = load_model(MODEL)
    from dataclasses import replace

    model = replace(model, draws=400)  # a fixed, small M: the page shows whatever U the run gives
    return analyse_files([f]), monte_carlo(read_spectra(f), model)


def test_headline_strip_shows_u_beside_each_number_that_has_one(tmp_path, nb_with_u):
    from cctkit.report import build_report
    from cctkit.report.pages import u_text

    analysis, unc = nb_with_u
    out = tmp_path / "u.pdf"
    rep = build_report(analysis, out, date="2026-01-15", uncertainty=unc)
    # the model file is a second input, so the inputs table closes the report
    assert rep.pages == ("sign-off and inputs", "spectrum: NB-3000-95", "uncertainty: NB-3000-95", "inputs")
    page = _text(out)[1]
    est = unc.spectra[0].estimates
    flat = _flat(page)
    assert _flat(f"U (k=2) {u_text(est['cct_K'].U, 'K')}") in flat
    assert _flat(f"U (k=2) {u_text(est['Ra'].U)} / {u_text(est['R9'].U)}") in flat
    assert _flat(f"U (k=2) {u_text(est['Rf'].U)} / {u_text(est['Rg'].U)}") in flat
    assert _flat(f"U (k=2) {u_text(est['luminous_flux_lm'].U, 'lm')}") in flat
    assert _flat(f"U (k=2) {u_text(est['ler_lm_per_W'].U, 'lm/W')}") in flat
    assert _flat(f"U (k=2) {u_text(est['melanopic_der'].U)}") in flat
    assert page.count("U (k=2)") == 6  # the design-intent cell has no U
    # two significant digits: 41.6 lm prints as 42 lm (the uncertainty page keeps three)
    assert u_text(41.6, "lm") == "42 lm" and u_text(0.2136) == "0.21" and u_text(float("nan")) == ""
    # the uncertainty page follows with the report's own page numbers and footer
    third = _text(out)[2]
    assert "Measurement uncertainty" in third and "page 3 of 4" in third and analysis.records()[0]["sha256"] in _flat(third)
    # without a result: no U line
    plain = tmp_path / "plain.pdf"
    build_report(analysis, plain, date="2026-01-15")
    assert "U (k=2)" not in _text(plain)[1]


def test_uncertainty_of_other_spectra_is_refused(tmp_path, nb_with_u):
    from cctkit.report import build_report

    _, unc = nb_with_u
    other = analyse_files([SPECTRA / "caldera-cl-2700-80.csv"])
    with pytest.raises(InputError, match="is not the report's"):
        build_report(other, tmp_path / "x.pdf", date="2026-01-15", uncertainty=unc)
    assert not (tmp_path / "x.pdf").exists()


def test_cli_report_with_uncertainty_model(tmp_path):
    f = SPECTRA / "northbeam-nb-3000-95.csv"
    if not f.exists():
        pytest.skip("demo spectra not generated")
    model = tmp_path / "m.toml"
    model.write_text(MODEL.read_text().replace('draws = "adaptive"', "draws = 200"))
    out = tmp_path / "r.pdf"
    r = runner.invoke(app, ["report", str(f), "-o", str(out), "--uncertainty-model", str(model), "--date",
                            "2026-01-15"])
    assert r.exit_code == 0, r.output
    pages = _text(out)
    assert "U (k=2)" in pages[1] and "Measurement uncertainty" in pages[2]
    # the model is an input: listed with its SHA-256
    assert hashlib.sha256(model.read_bytes()).hexdigest() in _flat(pages[-1])
    bad = tmp_path / "bad.toml"
    bad.write_text("[montecarlo]\ndraws = \"lots\"\n")
    r = runner.invoke(app, ["report", str(f), "-o", str(tmp_path / "b.pdf"), "--uncertainty-model", str(bad)])
    assert r.exit_code == 2 and "draws" in r.output and not (tmp_path / "b.pdf").exists()


def test_fixed_tick_labels_are_made_printable_without_building_ticks(tmp_path):
    from matplotlib.backends.backend_pdf import PdfPages
    from matplotlib.figure import Figure

    from cctkit.report.build import report_style, save_pdf_page

    with report_style():
        fig = Figure(figsize=(3, 2))
        ax = fig.add_axes((0.2, 0.3, 0.7, 0.6))
        ax.set_xticks([0, 1], ["\u22651 lm", "\u03bb 2"])
        ax.set_title("\u0394 u\u2032v\u2032")
        with PdfPages(tmp_path / "t.pdf") as pdf:
            save_pdf_page(pdf, fig)
    text = _text(tmp_path / "t.pdf")[0]
    assert ">=1 lm" in text and "lambda 2" in text and "d u'v'" in text and "?" not in text


def test_reports_log_no_font_warnings(tmp_path, nb_with_u, caplog):
    # The core Helvetica/Courier have weight "medium" where "normal" is asked: the same weight,
    # which matplotlib would announce as a warning on every report (the demo printed them).
    from cctkit.report.uncertainty import write_uncertainty_report

    _, unc = nb_with_u
    with caplog.at_level(logging.INFO, logger="matplotlib.font_manager"):
        write_uncertainty_report(unc, tmp_path / "u.pdf", date="2026-01-15")
    assert not [r for r in caplog.records if r.levelno >= logging.WARNING], caplog.text
