"""Reports: every input's size and SHA-256 in lot-size PDFs, U (k = 2) in the headline strip,
printable text found without building ticks, and quiet font lookup."""

from __future__ import annotations

import hashlib
import logging
from pathlib import Path

import numpy as np
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
    src.write_text(
        "wavelength_nm,a,b\n"
        + "\n".join(f"{w},{1 + w / 1000:.4f},{2 - w / 1000:.4f}" for w in range(380, 781, 5))
        + "\n"
    )
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
    assert (
        "Measurement uncertainty" in third
        and "page 3 of 4" in third
        and analysis.records()[0]["sha256"] in _flat(third)
    )
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
    r = runner.invoke(
        app, ["report", str(f), "-o", str(out), "--uncertainty-model", str(model), "--date", "2026-01-15"]
    )
    assert r.exit_code == 0, r.output
    pages = _text(out)
    assert "U (k=2)" in pages[1] and "Measurement uncertainty" in pages[2]
    # the model is an input: listed with its SHA-256
    assert hashlib.sha256(model.read_bytes()).hexdigest() in _flat(pages[-1])
    bad = tmp_path / "bad.toml"
    bad.write_text('[montecarlo]\ndraws = "lots"\n')
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


# ---------------------------------------------------------------- TM-30 Annex E on constructed spectra
#
# Spectra built to sit just either side of an Annex E threshold: a 3500 K Planckian radiator
# reshaped by one parameter, the parameter found where the computed metric crosses the
# threshold.  The levels then come from the same path as the report's (analyse ->
# report.build.design_intents).  Thresholds: cctkit.rendering.intents.CRITERIA (from memory of
# TM-30-20 Annex E, not checked against the published table).

_WL = np.arange(360.0, 831.0, 1.0)


def _planck_3500():
    from cctkit.planck import spectral_exitance

    b = spectral_exitance(np.array([3500.0]), _WL)[0]
    return b / b.max()


def _gauss(centre, width):
    return np.exp(-0.5 * ((_WL - centre) / width) ** 2)


# yellow: a notch (a < 0) saturates reds and widens the gamut, a bump (a > 0) does the opposite;
# redshift: more light at 615 nm and less at 665 nm (a > 0) or the reverse, a hue shift of the
# reds that lowers Rf and Rf,h1 with the gamut nearly unchanged.
_FAMILIES = {
    "yellow": lambda a: _planck_3500() * (1.0 + a[:, None] * _gauss(575.0, 22.0)),
    "redshift": lambda a: _planck_3500() * (1.0 + a[:, None] * (_gauss(615.0, 18.0) - _gauss(665.0, 18.0))),
}


def _tm30_of(values):
    from cctkit.analysis import analyse
    from cctkit.rendering.tm30 import chroma_shift_percent
    from cctkit.spectra import Spectra

    a = analyse(
        Spectra(wavelength_nm=_WL, values=values, quantity="relative", names=tuple(f"s{k}" for k in range(len(values))))
    )
    t = a.tm30
    return a, {
        "Rf": np.asarray(t.Rf),
        "Rg": np.asarray(t.Rg),
        "Rf_h1": np.asarray(t.Rf_h)[:, 0],
        "Rcs_h1": chroma_shift_percent(t)[:, 0],
    }


def _straddle(family, lo, hi, metric, threshold):
    """Two spectra of ``family`` whose ``metric`` lies just below and just above ``threshold``."""
    for _ in range(2):  # a coarse grid, then a fine one between the two that straddle
        grid = np.linspace(lo, hi, 161)
        _, m = _tm30_of(_FAMILIES[family](grid))
        side = m[metric] >= threshold
        k = np.flatnonzero(side[:-1] != side[1:])
        assert k.size == 1, (family, metric, threshold, m[metric][[0, -1]])
        lo, hi = grid[k[0]], grid[k[0] + 1]
    return _FAMILIES[family](np.array([lo, hi]))


@pytest.mark.parametrize(
    "family, lo, hi, metric, level, above, below",
    [
        # (family, parameter range, metric, the criterion whose threshold is crossed, strictest level
        #  met with the metric at/above the threshold, and just below it)
        ("redshift", 0.2, 0.6, "Rf", "F1", 1, 2),
        ("redshift", 0.6, 1.0, "Rf", "F2", 2, 3),
        ("redshift", -1.1, -0.85, "Rf_h1", "F3", 3, 0),
        ("yellow", -0.35, -0.25, "Rcs_h1", "P1", 1, 2),
        ("yellow", -0.2, 0.0, "Rcs_h1", "P2", 2, 3),
        ("yellow", 0.0, 0.13, "Rcs_h1", "P3", 3, 0),
        ("yellow", -0.7, -0.5, "Rg", "V2", 2, 3),
    ],
)
def test_annex_e_levels_of_spectra_either_side_of_a_threshold(family, lo, hi, metric, level, above, below):
    from cctkit.rendering import intents
    from cctkit.report.build import design_intents

    crit = next(c for c in intents.CRITERIA if c.name == level)
    threshold = {"Rf": crit.Rf_min, "Rg": crit.Rg_min, "Rf_h1": crit.Rf_h1_min, "Rcs_h1": crit.Rcs_h1_min}[metric]
    values = _straddle(family, lo, hi, metric, threshold)
    analysis, m = _tm30_of(values)
    up = int(np.argmax(m[metric]))
    down = 1 - up
    assert m[metric][down] < threshold <= m[metric][up]
    assert m[metric][up] - m[metric][down] < 0.05  # both spectra sit right at the threshold
    intent = crit.intent
    lv = intents.levels(m["Rf"], m["Rg"], m["Rf_h1"], m["Rcs_h1"])[intent]
    assert (int(lv[up]), int(lv[down])) == (above, below), {k: v.tolist() for k, v in m.items()}
    # the report shows the same levels
    shown = design_intents(analysis)
    prefix = intents.INTENTS[intent]
    assert (f"{prefix}{above}" in shown[up]) if above else not any(n.startswith(prefix) for n in shown[up])
    assert (f"{prefix}{below}" in shown[down]) if below else not any(n.startswith(prefix) for n in shown[down])


def test_labels_with_quotes_or_degrees_sit_on_their_row(tmp_path):
    # A label aligned by its top must share the baseline of its neighbours whatever glyphs it
    # holds; with the core fonts, "u' (CIE 1976)" sat about half a line lower (defect seen on
    # the comparison table and the "All numbers" grid).
    from matplotlib.backends.backend_pdf import PdfPages
    from matplotlib.figure import Figure

    from cctkit.report.build import report_style, save_pdf_page

    labels = ["x (CIE 1931)", "u' (CIE 1976)", "v\u2032 (CIE 1976)", "2\u00b0 observer", "R*"]
    with report_style():
        fig = Figure(figsize=(6, 1))
        for k, s in enumerate(labels):
            fig.text(0.02 + 0.19 * k, 0.8, s, va="top", fontsize=8)
        with PdfPages(tmp_path / "q.pdf") as pdf:
            save_pdf_page(pdf, fig)
    baselines = {}

    def visit(text, cm, tm, font, size):
        if text.strip():
            baselines[text.strip()] = tm[5] * cm[3] + cm[5]

    pypdf.PdfReader(str(tmp_path / "q.pdf")).pages[0].extract_text(visitor_text=visit)
    ys = [y for t, y in baselines.items()]
    assert len(ys) == len(labels), baselines
    assert max(ys) - min(ys) < 0.5, baselines  # [pt]


def test_hue_wheel_ring_labels_never_meet_at_the_page_size():
    # The ring values and bin numbers skip the de-clutter (fixed by construction); at the size
    # the spectrum page draws the wheel (2.85 in) none may overlap, cross the frame or be hidden,
    # for every unit of the lot and for worst-case texts.
    from matplotlib.figure import Figure

    from cctkit.report import charts
    from cctkit.report.build import report_style

    lot = analyse_files(_lot()[:12])
    with report_style():
        for i in range(len(lot)):
            fig = Figure(figsize=(8.27, 11.69))
            ax = fig.add_axes((0.05, 0.4, 2.85 / 8.27, 2.85 / 11.69))
            charts.hue_wheel_chart(lot, ax, index=i, identity=i)
            assert charts.layout_problems(ax) == [], i
            fixed = [t for t in ax.texts if getattr(t, "_cctkit_fixed", False)]
            assert len(fixed) == 16 * 4 and all(t.get_visible() for t in fixed)
        widest = [t for t in fixed if t.get_text()]
        for t in widest:  # the longest texts a ring can hold
            t.set_text({"4.8": "-0.27", "5.2": "16"}.get(f"{t.get_fontsize():g}", "-0.27"))
        assert charts.layout_problems(ax) == []


def test_report_style_pauses_garbage_collection_and_restores_it():
    """Drawing runs with automatic collection paused and core-font measurements remembered;
    both are undone on exit, and a remembered measurement equals a fresh one."""
    import gc

    from matplotlib import _afm

    from cctkit.report.build import report_style

    assert gc.isenabled()
    original = _afm.AFM.__dict__["get_str_bbox_and_descent"]
    with report_style():
        assert not gc.isenabled()
        with report_style():  # nested: still paused after the inner one ends
            pass
        assert not gc.isenabled()
        from matplotlib import font_manager as fm

        font = _afm.AFM  # the patched class
        path = fm.findfont(fm.FontProperties(family="Helvetica"), fontext="afm")
        fonts = []
        for _ in range(2):
            with open(path, "rb") as fh:
                fonts.append(font(fh))
        first = fonts[0].get_str_bbox_and_descent("u' (CIE 1976)")
        assert fonts[0].get_str_bbox_and_descent("u' (CIE 1976)") == first  # remembered
        assert fonts[1].get_str_bbox_and_descent("u' (CIE 1976)") == first  # another font object: measured
        assert first[3] > 0  # a height
    assert gc.isenabled()
    assert _afm.AFM.__dict__["get_str_bbox_and_descent"] is original
