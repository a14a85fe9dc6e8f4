"""The claims-verdict pages of the PDF report: placement, numbers as the verdict holds them, greyscale marks.

The numbers checked here come from the verdict document of :func:`cctkit.claims.verify`
and from :mod:`cctkit.tolerance`; the report only prints and draws them, so each test
holds the page against those documents (the verdicts themselves are checked against
published sources in tests/test_claims.py and tests/test_tolerance.py).
"""

from __future__ import annotations

import re
import warnings
from pathlib import Path

import numpy as np
import pytest

pypdf = pytest.importorskip("pypdf")

from conftest import build_report_strict as _build  # noqa: E402
from conftest import pdf_page_texts as _text
from typer.testing import CliRunner  # noqa: E402

from cctkit.analysis import analyse  # noqa: E402
from cctkit.claims import load_claims, parse_claims, verify  # noqa: E402
from cctkit.cli import app  # noqa: E402
from cctkit.errors import InputError  # noqa: E402
from cctkit.planck import spectral_exitance  # noqa: E402
from cctkit.readers import read_spectra  # noqa: E402
from cctkit.report import build_report, charts  # noqa: E402
from cctkit.report import verdict as vd
from cctkit.spectra import Quantity, Spectra, concatenate  # noqa: E402

ROOT = Path(__file__).resolve().parents[1]
SPECTRA = ROOT / "spectra"
CLAIMS = SPECTRA / "claims" / "northbeam-3000K.toml"
WORDS = {"pass": "pass", "fail": "FAIL", "inconclusive": "inconclusive"}

pytestmark = pytest.mark.skipif(not CLAIMS.exists(), reason="demo spectra not generated")


def _lot_files() -> list[Path]:
    return [SPECTRA / "northbeam-nb-3000-95.csv", *sorted((SPECTRA / "lot-nb3000").glob("*.csv"))]


@pytest.fixture(scope="module")
def lot():
    """The demo lot (25 samples) with its claims and verdict document."""
    claims = load_claims(CLAIMS)
    analysis = analyse(concatenate([read_spectra(f) for f in _lot_files()]))
    doc = verify(analysis.records(), claims).as_dict()
    return analysis, claims, doc


@pytest.fixture(scope="module")
def lot_pdf(lot, tmp_path_factory):
    analysis, claims, doc = lot
    out = tmp_path_factory.mktemp("verdict") / "lot.pdf"
    rep = _build(analysis, out, verdict=doc, claims=claims)
    return out, rep


def test_verdict_pages_come_first_and_add_to_the_page_count(lot, lot_pdf, tmp_path):
    analysis, claims, doc = lot
    out, rep = lot_pdf
    plain = _build(analysis, tmp_path / "plain.pdf")
    n_verdict = vd.verdict_page_count(doc)
    assert n_verdict == 2  # 25 samples and 6 claims: the overview and one table page
    assert len(rep.pages) == len(plain.pages) + n_verdict
    assert len(_text(out)) == len(rep.pages)
    assert rep.pages[0] == "sign-off and inputs"  # the approval block stays on the first page
    assert rep.pages[1 : 1 + n_verdict] == ("claims verdict", "claims verdict table 1")
    assert rep.pages[1 + n_verdict :] == plain.pages[1:]
    text = _text(out)
    assert "Claims verdict \u2014 Northbeam Lighting" in text[1]
    assert f"page 2 of {len(rep.pages)}" in text[1]
    assert f"page {len(rep.pages)} of {len(rep.pages)}" in text[-1]


def test_overview_shows_claims_rule_and_the_verdict_summary(lot, lot_pdf):
    analysis, claims, doc = lot
    page = _text(lot_pdf[0])[1]
    flat = " ".join(page.split())
    for part in (claims.source, claims.supplier, claims.product):
        assert part in flat
    assert f"verdict: {doc['verdict'].upper()}" in flat
    assert "guard-band (ISO 14253-1, ILAC G8)" in flat  # the verdict document's decision rule
    for metric, U in claims.uncertainty.items():
        assert f"U = {U:g}" in flat, metric
    n = len(doc["samples"])
    for metric, st in doc["summary"].items():
        # pass / inconclusive / FAIL counts per claim, adding up to the samples
        assert st["count_pass"] + st["count_inconclusive"] + st["count_fail"] == n
        assert f"{st['count_pass']} / {st['count_inconclusive']} / {st['count_fail']}" in flat, metric
    # Statistics as the verdict document has them, in the report's formats.
    assert f"{doc['summary']['luminous_flux_lm']['mean']:.1f}" in flat
    assert f"{doc['summary']['sdcm']['max']:.2f}" in flat
    assert f"{doc['summary']['ansi_quadrangle']['min']:+.4f}" in flat
    counts = {k: sum(s["verdict"] == k for s in doc["samples"]) for k in WORDS}
    assert f"Samples: {counts['pass']} pass, {counts['inconclusive']} inconclusive, {counts['fail']} FAIL" in flat


def test_table_names_every_sample_with_its_verdict_and_the_claim_limits(lot, lot_pdf):
    analysis, claims, doc = lot
    table = _text(lot_pdf[0])[2]
    samples = doc["samples"]
    starts = []
    for k, s in enumerate(samples, start=1):
        m = re.search(rf"^{k} {re.escape(s['name'])}$", table, flags=re.M)
        assert m, s["name"]
        starts.append(m.start())
    starts.append(table.index("Each cell"))
    for k, s in enumerate(samples):
        row = table[starts[k] : starts[k + 1]]
        word = WORDS[s["verdict"]]
        assert row.split()[2 + bool(claims.declared_id)] == word, (s["name"], row[:80])
        for c in s["checks"]:
            assert (
                WORDS[
                    c["decision"]["result"]
                    if "decision" in c
                    else {True: "pass", False: "fail", None: "inconclusive"}[c["pass"]]
                ]
                in row
            )
        if s["verdict"] == "pass":
            assert "FAIL" not in row and "inconclusive" not in row
    # The limits as the verdict document has them.
    for c in samples[0]["checks"]:
        if c["min"] is not None:
            assert f">= {c['min']:g}" in table, c["metric"]
        if c["max"] is not None:
            assert f"<= {c['max']:g}" in table, c["metric"]
        if "decision" in c:
            assert f"U {c['decision']['U']:g}" in table, c["metric"]
    # A value as the document has it: sample U05's SDCM step count (2 decimals).
    u05 = next(s for s in samples if s["name"].endswith("U05"))
    sdcm = next(c for c in u05["checks"] if c["metric"] == "sdcm")
    assert f"{sdcm['value']:.2f}" in table


def test_chart_marks_pass_and_fail_by_marker_shape_and_draws_the_claimed_regions(lot):
    from matplotlib.figure import Figure

    from cctkit import tolerance as tol
    from cctkit.colorimetry import xy_to_uv

    analysis, claims, doc = lot
    fig = Figure(figsize=(4, 4))
    ax = fig.add_axes((0.15, 0.15, 0.7, 0.7))
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        vd.verdict_chart(analysis, ax, doc, claims, diagram="uv")
    lines = {ln.get_label(): ln for ln in ax.lines if ln.get_label().startswith("verdict-")}
    assert set(lines) == {"verdict-pass", "verdict-fail", "verdict-inconclusive"}
    assert not charts.layout_problems(ax)
    markers = {k: (ln.get_marker(), ln.get_markerfacecolor()) for k, ln in lines.items()}
    assert len({m for m, _ in markers.values()}) == 3  # three shapes: greyscale-readable
    assert markers["verdict-pass"][0] != markers["verdict-fail"][0]
    # No point keeps the chart's own single-style marker: every sample is drawn once, by verdict.
    marked = [ln for ln in ax.lines if ln.get_marker() not in ("None", None, "")]
    assert sum(len(ln.get_xdata()) for ln in marked) == len(doc["samples"])
    # Marked by the chromaticity checks alone (quadrangle and SDCM), not the overall verdict.
    verdicts = np.array([_chroma_result(s) for s in doc["samples"]])
    for key in WORDS:
        ln = lines[f"verdict-{key}"]
        np.testing.assert_array_equal(
            np.column_stack([ln.get_xdata(), ln.get_ydata()]), np.asarray(analysis.uv)[verdicts == key]
        )
    # The claimed quadrangle and ellipse come from cctkit.tolerance.
    quad_uv = np.asarray(tol.ansi_quadrangle(3000).corners_uv)
    ell_uv = xy_to_uv(tol.ellipse_boundary_xy(tol.iec60081_ellipse(3000), 3.0))
    drawn = [np.column_stack([ln.get_xdata(), ln.get_ydata()]) for ln in ax.lines]
    assert any(d.shape == (5, 2) and np.allclose(d[:4], quad_uv, atol=1e-12) for d in drawn)
    assert any(d.shape == (ell_uv.shape[0] + 1, 2) and np.allclose(d[:-1], ell_uv, atol=1e-12) for d in drawn)
    styles = {o.label: o.linestyle for o in vd.claim_outlines(claims)}
    assert styles == {"ANSI 3000K": "-", "F3000 3 SDCM": "--"}  # told apart by line style, not colour


def _chroma_result(sample) -> str:
    results = [c["result"] for c in sample["checks"] if c["metric"] in ("ansi_quadrangle", "sdcm")]
    return "fail" if "fail" in results else ("inconclusive" if "inconclusive" in results else "pass")


def test_chart_marks_a_sample_that_fails_on_flux_only_as_a_chromaticity_pass(lot):
    from matplotlib.figure import Figure

    analysis, claims, doc = lot
    flux_only = [k for k, s in enumerate(doc["samples"]) if s["verdict"] == "fail" and _chroma_result(s) == "pass"]
    assert flux_only  # the demo lot has units that fail on flux or efficacy inside the ellipse
    fig = Figure(figsize=(4, 4))
    ax = fig.add_axes((0.15, 0.15, 0.7, 0.7))
    vd.verdict_chart(analysis, ax, doc, claims)
    passed = next(ln for ln in ax.lines if ln.get_label() == "verdict-pass")
    pts = np.column_stack([passed.get_xdata(), passed.get_ydata()])
    for k in flux_only:
        assert any(np.allclose(p, np.asarray(analysis.uv)[k]) for p in pts)


def test_badge_words_do_not_sit_on_the_hatching(lot):
    from cctkit.report.pages import _Page

    p = _Page("a4")
    band, word = vd._verdict_badge(p, 5.0, 1.0, "fail")
    r = charts.renderer_of(p.fig)
    assert band.get_hatch() and not band.get_window_extent(r).overlaps(word.get_window_extent(r))


def test_table_head_gives_a_two_sided_limit_in_full(lot, tmp_path):
    analysis = analyse(_batch(4), rendering=False)
    claims = parse_claims(
        {
            "limits": {
                "duv": {"min": -0.006, "max": 0.006},
                "cct_K": {"min": 2900, "max": 3200},
                "x": {"min": 0.41},
                "y": {"max": 0.42},
                "u_prime": {"min": 0.24},
                "v_prime": {"min": 0.5},
            }
        },
        source="two.toml",
    )
    doc = verify(analysis.records(), claims).as_dict()
    out = tmp_path / "two.pdf"
    _build(analysis, out, verdict=doc, claims=claims, pages=False)
    table = " ".join(_text(out)[2].split())
    assert "-0.006 to 0.006" in table and "2900 to 3200" in table


def test_table_hatches_exactly_the_cells_that_do_not_pass(lot):
    from cctkit.report.build import report_meta

    analysis, claims, doc = lot
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        (fig,) = list(
            vd.verdict_table_pages(doc, claims, report_meta(date="2026-01-15"), paper="a4", page_labels=["page 2 of 2"])
        )
    hatches = [a.get_hatch() for a in fig.artists if getattr(a, "get_hatch", lambda: None)()]
    want = {"fail": 0, "inconclusive": 0}
    for s in doc["samples"]:
        for c in s["checks"]:
            r = (
                c["decision"]["result"]
                if "decision" in c
                else {True: "pass", False: "fail", None: "inconclusive"}[c["pass"]]
            )
            if r != "pass":
                want[r] += 1
    assert want["fail"] > 0 and want["inconclusive"] > 0  # the demo lot has both
    assert hatches.count(vd.VERDICT_STYLE["fail"]["hatch"]) == want["fail"]
    assert hatches.count(vd.VERDICT_STYLE["inconclusive"]["hatch"]) == want["inconclusive"]


# ---------------------------------------------------------------- many samples, many claims

WL = np.arange(380.0, 781.0, 5.0)


def _batch(n: int) -> Spectra:
    T = np.linspace(2850.0, 3250.0, n)
    bb = spectral_exitance(T, WL)
    values = bb / bb.max(axis=1, keepdims=True) * 0.01
    return Spectra(WL, values, tuple(f"pier lamp {k + 1:03d}" for k in range(n)), quantity=Quantity.RADIANT_FLUX)


def test_many_samples_and_claims_paginate_rows_and_columns(tmp_path):
    n = vd.VERDICT_ROWS_PER_PAGE + 6
    analysis = analyse(_batch(n), rendering=False)
    limits = {
        "cct_K": {"min": 2900, "max": 3200},
        "duv": {"min": -0.006, "max": 0.006},
        "x": {"min": 0.41},
        "y": {"max": 0.42},
        "u_prime": {"min": 0.24},
        "v_prime": {"min": 0.5},
        "peak_nm": {"min": 500},
        "radiant_total_W": {"min": 0.0},
    }
    claims = parse_claims(
        {
            "claims": {"supplier": "Quay Works"},
            "limits": limits,
            "chromaticity": {"nominal_cct_K": 3000, "ansi_quadrangle": True, "max_sdcm": 5},
        },
        source="many.toml",
    )
    doc = verify(analysis.records(), claims).as_dict()
    assert len(claims.metrics) == 10  # two column groups of at most 6
    assert vd.verdict_page_count(doc) == 1 + 2 * 2
    out = tmp_path / "many.pdf"
    rep = _build(analysis, out, verdict=doc, claims=claims, pages=False)
    assert rep.pages[1:6] == ("claims verdict",) + tuple(f"claims verdict table {k}" for k in range(1, 5))
    text = _text(out)
    tables = text[2:6]
    names = [s["name"] for s in doc["samples"]]
    # Each row page (both column groups) lists its samples once; together all samples, in order.
    for group in (tables[0::2], tables[1::2]):
        found = [nm for t in group for nm in re.findall(r"^\d+ (pier lamp \d{3})\b", t, flags=re.M)]
        assert found == names
    # Every claim has a column head on some table page.
    heads = " ".join(tables)
    for metric in ("CCT", "Duv", "Peak", "SDCM", "Quadrangle"):
        assert metric in heads


def test_bad_verdict_arguments_are_one_line_input_errors(lot, tmp_path):
    analysis, claims, doc = lot
    with pytest.raises(InputError, match="needs both the verdict and the claims"):
        build_report(analysis, tmp_path / "a.pdf", verdict=doc)
    with pytest.raises(InputError, match="part of the PDF report"):
        build_report(analysis, tmp_path / "a.png", verdict=doc, claims=claims)
    short = {**doc, "samples": doc["samples"][:-1]}
    with pytest.raises(InputError, match="not the 25 spectra of the report"):
        build_report(analysis, tmp_path / "a.pdf", verdict=short, claims=claims)
    assert not (tmp_path / "a.pdf").exists() and not (tmp_path / "a.png").exists()


# ---------------------------------------------------------------- command line

runner = CliRunner()


def test_cli_report_and_verify_write_the_verdict_report(tmp_path):
    files = [str(f) for f in _lot_files()]
    out = tmp_path / "report.pdf"
    res = runner.invoke(app, ["report", *files, "--claims", str(CLAIMS), "--output", str(out), "--date", "2026-01-15"])
    assert res.exit_code == 1, res.output  # a failing verdict: verify's exit status, and the report is written
    first = _text(out)[1]
    assert "Claims verdict" in first and "verdict: FAIL" in first

    out2 = tmp_path / "verify.pdf"
    res = runner.invoke(
        app, ["verify", *files, "--claims", str(CLAIMS), "--report", str(out2)], env={"SOURCE_DATE_EPOCH": "1768435200"}
    )  # 2026-01-15
    assert res.exit_code == 1, res.output  # the lot fails (exit status of verify unchanged)
    assert _text(out2)[:3] == _text(out)[:3]  # the same sign-off and verdict pages from either command
    assert "Claims verdict" in _text(out2)[1]
    assert len(_text(out2)) == len(_text(out))

    res = runner.invoke(app, ["verify", *files, "--claims", str(CLAIMS), "--report", str(tmp_path / "v.png")])
    assert res.exit_code == 2 and "--report must end in .pdf" in res.output
    res = runner.invoke(app, ["verify", *files, "--claims", str(CLAIMS), "--report", str(out2)])
    assert res.exit_code == 2 and "--overwrite" in res.output
    res = runner.invoke(app, ["report", *files, "--claims", str(CLAIMS), "--output", str(tmp_path / "r.png")])
    assert res.exit_code == 2 and "must end in .pdf" in res.output
