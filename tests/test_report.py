"""PDF and PNG reports: page plan, numbers as the library computed them, safe writing."""

from __future__ import annotations

import math
import warnings
from pathlib import Path

import numpy as np
import pytest

pypdf = pytest.importorskip("pypdf")

from conftest import build_report_strict as _build  # noqa: E402
from conftest import pdf_page_texts as _text

from cctkit.analysis import analyse  # noqa: E402
from cctkit.cli import app  # noqa: E402  (registers every command, report included)
from cctkit.constants import DUV_LIMIT  # noqa: E402
from cctkit.errors import InputError  # noqa: E402
from cctkit.planck import spectral_exitance  # noqa: E402
from cctkit.readers import read_spectra  # noqa: E402
from cctkit.report import BATCH_PAGE_LIMIT, PNG_SIZE_PX, build_report, charts, pages, plan_pages  # noqa: E402  # noqa: E402
from cctkit.spectra import Quantity, Spectra, concatenate  # noqa: E402

WL = np.arange(380.0, 781.0, 5.0)


def _led_like(T_K: float, bump_nm: float, bump_height: float) -> np.ndarray:
    """A blackbody plus a Gaussian bump (synthetic; no real product)."""
    bb = spectral_exitance(T_K, WL)
    bb = bb / bb.max()
    return bb + bump_height * np.exp(-0.5 * ((WL - bump_nm) / 12.0) ** 2)


def _write_csv(path: Path, names, rows) -> Path:
    head = "wavelength_nm," + ",".join(names)
    lines = [head] + [f"{w:g}," + ",".join(f"{r[j]:.6g}" for r in rows) for j, w in enumerate(WL)]
    path.write_text("\n".join(lines) + "\n")
    return path


@pytest.fixture(scope="module")
def one_file(tmp_path_factory) -> Path:
    d = tmp_path_factory.mktemp("one")
    return _write_csv(d / "sample.csv", ["Quayside lamp A"], [_led_like(3200.0, 450.0, 0.6)])


@pytest.fixture(scope="module")
def one(one_file):
    return analyse(read_spectra(one_file, quantity="relative"))


def _spectra(n: int, *, long_names: bool = False) -> Spectra:
    T = np.linspace(2700.0, 6000.0, n)
    values = np.stack([_led_like(t, 445.0 + (k % 5), 0.3 + 0.05 * (k % 4)) for k, t in enumerate(T)])
    base = "Pier lantern with an exceptionally long descriptive catalogue name and options " if long_names else "unit "
    return Spectra(WL, values, tuple(f"{base}{k + 1:03d}" for k in range(n)), quantity=Quantity.RADIANT_FLUX)


def test_single_spectrum_pdf_has_a_signoff_page_a_spectrum_page_and_the_library_numbers(one, tmp_path):
    out = tmp_path / "r.pdf"
    rep = _build(one, out)
    assert out.read_bytes()[:5] == b"%PDF-"
    text = _text(out)
    assert len(text) == 2 == len(rep.pages) and rep.pages[0] == "sign-off and inputs"
    text = text[1:]
    rec = one.records()[0]
    for key in (
        "cct_K",
        "duv",
        "x",
        "y",
        "u_prime",
        "v_prime",
        "ler_lm_per_W",
        "sp_ratio",
        "melanopic_der",
        "Ra",
        "R9",
        "Rf",
        "Rg",
    ):
        shown = pages.format_value(rec, key)
        assert shown not in ("not computed", "n/a"), key  # the lead's analysis computes all of these
        assert shown in text[0], (key, shown)
    assert rec["sha256"][:32] in text[0]
    for standard in ("CIE 15:2018", "CIE 13.3-1995", "CIE 224:2017", "TM-30-20", "CIE S 026:2018"):
        assert standard in text[0]
    assert "IEC 62471" in text[0] and "not medical advice" in text[0]


def test_pdf_uses_the_standard_fonts_without_embedding(one, tmp_path):
    out = tmp_path / "fonts.pdf"
    _build(one, out)
    reader = pypdf.PdfReader(str(out))
    for page in reader.pages:
        fonts = page["/Resources"]["/Font"]
        names = {str(fonts[k].get_object()["/BaseFont"]) for k in fonts}
        # the PDF standard 14 fonts need no embedding (ISO 32000-1 section 9.6.2.2, from memory)
        assert names <= {"/Helvetica", "/Helvetica-Bold", "/Courier", "/Courier-Bold"}, names
    # a character outside the core fonts' set (Windows-1252) would come out as "?"
    text = _text(out)
    assert "CIE 1931 2\u00b0" in text[1] and "?" not in "".join(text)


@pytest.mark.parametrize(
    "n, expected",
    [
        (1, 2),
        (3, 5),
        (BATCH_PAGE_LIMIT, BATCH_PAGE_LIMIT + 2),
        (BATCH_PAGE_LIMIT + 1, 3),
        (100, math.ceil(100 / pages.SUMMARY_ROWS_PER_PAGE) + 2),
    ],
)
def test_page_plan(n, expected):
    plan = plan_pages(n)
    assert len(plan) == expected and plan[0] == ("cover", None)


def test_page_plan_forced_pages_for_a_batch():
    plan = plan_pages(20, pages=True)
    assert len(plan) == 1 + 1 + 1 + 20 and [k for k, _ in plan].count("sample") == 20


def test_page_plan_keeps_only_the_profile_sections():
    plan = plan_pages(3, sections=("spectra",))
    assert [k for k, _ in plan] == ["cover", "sample", "sample", "sample"]
    plan = plan_pages(30, sections=("scatter",))
    assert [k for k, _ in plan] == ["cover", "scatter"]


def test_comparison_report_pages_and_long_names(tmp_path):
    a = analyse(_spectra(3, long_names=True))
    out = tmp_path / "cmp.pdf"
    rep = _build(a, out, paper="letter", diagram="uvp")
    text = _text(out)
    assert len(text) == 5 and rep.pages[1] == "comparison"
    text = text[1:]
    recs = a.records()
    for r in recs:
        assert pages.format_value(r, "cct_K") in text[0]
        assert pages.format_value(r, "Ra") in text[0]
    box = pypdf.PdfReader(str(out)).pages[0].mediabox
    # US Letter is 8.5 x 11 in; a PDF point is 1/72 in (ISO 32000-1 section 8.3.2.3, from memory)
    assert (round(float(box.width)), round(float(box.height))) == (round(8.5 * 72), round(11 * 72))
    assert "\u2026" in text[1]  # the long name was cut with an ellipsis in the page title
    assert recs[0]["name"] in text[0]  # ... and is given in full in the comparison key


def test_large_batch_gets_summary_not_hundreds_of_pages(tmp_path):
    a = analyse(_spectra(50))
    out = tmp_path / "batch.pdf"
    rep = _build(a, out, diagram="xy")
    text = _text(out)
    assert len(text) == math.ceil(50 / pages.SUMMARY_ROWS_PER_PAGE) + 2 == len(rep.pages)
    text = text[1:]
    recs = a.records()
    for i in (0, 43):
        assert recs[i]["name"] in text[0] and pages.format_value(recs[i], "cct_K") in text[0]
    assert recs[49]["name"] in text[1]


def test_png_has_the_stated_pixel_size(one, tmp_path):
    out = tmp_path / "r.png"
    rep = _build(one, out)
    from PIL import Image

    with Image.open(out) as im:
        assert im.size == PNG_SIZE_PX == rep.size_px == (1600, 1000)


def test_out_of_range_duv_is_drawn_as_not_reported(tmp_path):
    green = np.exp(-0.5 * ((WL - 530.0) / 15.0) ** 2)  # far off the locus: |Duv| > 0.05
    a = analyse(Spectra(WL, green[None], ("green filter",), quantity=Quantity.RELATIVE))
    rec = a.records()[0]
    assert rec["cct_K"] is None and abs(rec["duv"]) > DUV_LIMIT  # CIE 15:2018 section 9.5
    out = tmp_path / "g.pdf"
    _build(a, out)
    text = _text(out)[1]
    assert f"|Duv| > {DUV_LIMIT:g}" in text and "CCT not reported" in text


def test_existing_output_is_not_overwritten(one, tmp_path):
    out = tmp_path / "keep.pdf"
    out.write_bytes(b"precious")
    with pytest.raises(InputError, match="exists; pass --overwrite"):
        build_report(one, out)
    assert out.read_bytes() == b"precious"
    build_report(one, out, overwrite=True)
    assert out.read_bytes()[:5] == b"%PDF-"


def test_bad_options_are_one_line_input_errors(one, tmp_path):
    with pytest.raises(InputError, match=r"must end in \.pdf or \.png"):
        build_report(one, tmp_path / "r.svg")
    with pytest.raises(InputError, match="paper must be one of a4, letter"):
        build_report(one, tmp_path / "r.pdf", paper="a3")
    with pytest.raises(InputError, match="diagram must be one of uv, uvp, xy"):
        build_report(one, tmp_path / "r.pdf", diagram="lab")


@pytest.mark.parametrize("suffix", [".pdf", ".png"])
def test_failure_midway_leaves_no_file(one, tmp_path, monkeypatch, suffix):
    def broken(*args, **kwargs):
        raise RuntimeError("injected chart failure")

    monkeypatch.setattr(charts, "cri_chart", broken)
    out = tmp_path / f"half{suffix}"
    with pytest.raises(RuntimeError, match="injected"):
        build_report(one, out)
    assert list(tmp_path.iterdir()) == []  # neither the report nor a temporary file


def test_charts_draw_on_a_users_own_axes(one):
    import matplotlib

    matplotlib.use("Agg")
    from matplotlib.figure import Figure

    fig = Figure(figsize=(6, 3))
    ax1, ax2 = fig.subplots(1, 2)
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        charts.chromaticity_chart(one, ax1, diagram="xy", regions=())
        charts.cri_chart(one, ax2)
    assert ax1.get_xlabel().startswith("x (CIE 1931)")
    x0, x1 = ax1.get_xlim()
    assert x0 < float(one.xy[0, 0]) < x1
    heights = [p.get_height() for p in ax2.patches]
    np.testing.assert_allclose(heights[1:], np.asarray(one.cri.R[0]))  # bars are the analysis numbers


def test_shorten():
    assert charts.shorten("abcdef", 4) == "abc\u2026"
    assert charts.shorten("/a/b/c/file.csv", 9, keep="tail") == "\u2026file.csv"
    assert charts.shorten("short", 10) == "short"


def test_cli_writes_and_refuses_overwrite(one_file, tmp_path):
    from typer.testing import CliRunner

    runner = CliRunner()
    out = tmp_path / "cli.pdf"
    r = runner.invoke(app, ["report", str(one_file), "--output", str(out), "--quantity", "relative"])
    assert r.exit_code == 0, r.output
    assert len(pypdf.PdfReader(str(out)).pages) == 2
    before = out.read_bytes()
    r = runner.invoke(app, ["report", str(one_file), "--output", str(out)])
    assert r.exit_code == 2
    assert "exists; pass --overwrite" in r.output and "Traceback" not in r.output
    assert out.read_bytes() == before
    r = runner.invoke(app, ["report", str(one_file), "--output", str(tmp_path / "x.pdf"), "--paper", "a5"])
    assert r.exit_code == 2 and "paper must be one of a4, letter" in r.output


def test_cli_refuses_to_write_over_an_input(one_file):
    from typer.testing import CliRunner

    r = CliRunner().invoke(app, ["report", str(one_file), "--output", str(one_file.with_suffix(".png")), "--overwrite"])
    assert r.exit_code == 0  # a different file is fine
    r = CliRunner().invoke(
        app, ["report", str(one_file.with_suffix(".png")), "--output", str(one_file.with_suffix(".png")), "--overwrite"]
    )
    assert r.exit_code == 2 and "over an input" in r.output


def test_demo_spectra_if_present(tmp_path):
    root = Path(__file__).resolve().parents[1] / "spectra"
    files = sorted(root.glob("*-*-*.csv"))
    files = [f for f in files if "setpoints" not in f.name][:3]
    if len(files) < 2:
        pytest.skip("demo spectra not generated")
    a = analyse(concatenate([read_spectra(f) for f in files]))
    out = tmp_path / "demo.pdf"
    _build(a, out)
    # sign-off, inputs table (several files), comparison, one page per spectrum
    assert len(_text(out)) == len(files) + 3
