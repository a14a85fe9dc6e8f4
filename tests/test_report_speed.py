"""What the report does to be quick must not change what it draws or what a later user of matplotlib gets.

The speed itself is measured by benchmarks/bench_report.py, not here.
"""

from __future__ import annotations

import gc
import subprocess
import sys


def test_the_font_subsetter_loads_only_when_used():
    """The report's import leaves fontTools.subset unloaded (the core fonts never need it); the
    first use loads it whole, so an embedding user of matplotlib in the same process still works."""
    code = (
        "import sys\n"
        "from cctkit.report.build import _import_matplotlib\n"
        "_import_matplotlib()\n"
        "print('fontTools.varLib' in sys.modules)\n"
        "from fontTools import subset\n"
        "print(callable(subset.Subsetter), 'fontTools.varLib' in sys.modules)\n"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout.split()
    assert out == ["False", "True", "True"]


def test_process_ends_after_leaves_the_report_to_the_exit():
    """Inside, collection stays off even after a report (report_style does not turn it back on);
    on exit the objects are frozen and collection is on again."""
    from cctkit.report.build import process_ends_after, report_style

    assert gc.isenabled()
    frozen = gc.get_freeze_count()
    try:
        with process_ends_after():
            with report_style():
                assert not gc.isenabled()
            assert not gc.isenabled()  # not re-enabled by the report's own pause
        assert gc.isenabled()
        assert gc.get_freeze_count() > frozen
    finally:
        gc.unfreeze()  # this test process goes on: give the objects back to the collector


def test_spectrum_pages_drawn_over_the_previous_one_give_the_same_bytes(tmp_path, monkeypatch):
    """Spectrum pages reuse the previous page's axes; the PDF is byte for byte the one drawn on new
    figures, also across a page whose CIE 13.3 chart is a placeholder (no CCT: its frame is
    dotted, so that axes is not used again) and pages before and after it."""
    import numpy as np
    from conftest import build_report_strict as build

    from cctkit.analysis import analyse
    from cctkit.planck import spectral_exitance
    from cctkit.report import pages
    from cctkit.spectra import Quantity, Spectra

    wl = np.arange(380.0, 781.0, 5.0)

    def led(T_K, bump_nm, height):
        bb = spectral_exitance(T_K, wl)
        return bb / bb.max() + height * np.exp(-0.5 * ((wl - bump_nm) / 12.0) ** 2)

    green = np.exp(-0.5 * ((wl - 530.0) / 15.0) ** 2)  # |Duv| > 0.05: no CCT, no reference, no CRI
    values = np.stack([led(2700.0, 450.0, 0.3), green, led(5000.0, 445.0, 0.5), led(6500.0, 455.0, 1.2)])
    a = analyse(Spectra(wl, values, ("warm", "green filter", "neutral", "cool"), quantity=Quantity.RELATIVE))
    emptied = []
    empty = pages._empty
    monkeypatch.setattr(pages, "_empty", lambda ax: (emptied.append(ax), empty(ax)))
    build(a, tmp_path / "reused.pdf")
    assert len(emptied) >= 12  # most axes of pages 2-4 were drawn over, not made anew
    monkeypatch.setattr(pages, "_reusable", lambda ax, rect, kw: False)
    build(a, tmp_path / "new.pdf")
    assert (tmp_path / "reused.pdf").read_bytes() == (tmp_path / "new.pdf").read_bytes()


def test_chart_locus_lines_from_the_cache_are_the_computed_ones(tmp_path, monkeypatch):
    """The chromaticity chart's lines read back from the table cache equal, bit for bit, a fresh
    computation (and a second process-wide lookup reads the file written by the first)."""
    import numpy as np

    from cctkit.report import charts

    monkeypatch.setenv("CCTKIT_CACHE_DIR", str(tmp_path))
    charts._locus_geometry.cache_clear()
    try:
        written = charts._locus_geometry(2)
        assert list(tmp_path.glob("chart-locus-2-*.npz"))
        charts._locus_geometry.cache_clear()
        read = charts._locus_geometry(2)
        temps = sorted(read["iso"])
        fresh = charts._locus_arrays(2, temps)
        for got in (written, read):
            for key in ("locus", "duv_lines", "spectral"):
                assert np.array_equal(got[key], fresh[key])
            assert all(np.array_equal(got["iso"][t], fresh["iso"][k]) for k, t in enumerate(temps))
    finally:
        charts._locus_geometry.cache_clear()


def test_report_style_restores_the_pdf_writers_font_reader():
    from matplotlib.backends import backend_pdf

    from cctkit.report.build import report_style

    original = backend_pdf.AFM
    with report_style():
        assert backend_pdf.AFM is not original
    assert backend_pdf.AFM is original


def test_remembered_text_layout_gives_the_same_bytes(tmp_path, monkeypatch):
    """Text laid out once and remembered (build._layout_memo) draws the same PDF as text laid out
    each time it is measured or drawn; the original layout is back after the report.  On Letter
    paper with the CIE 1931 diagram, and the second build also on new axes for every page."""
    import contextlib

    import numpy as np
    from conftest import build_report_strict as build
    from matplotlib.text import Text

    from cctkit.analysis import analyse
    from cctkit.planck import spectral_exitance
    from cctkit.report import build as report_build
    from cctkit.report import pages as report_pages
    from cctkit.spectra import Quantity, Spectra

    wl = np.arange(380.0, 781.0, 5.0)
    values = np.stack([spectral_exitance(t, wl) for t in (3000.0, 5600.0)])
    a = analyse(Spectra(wl, values / values.max(), ("lamp a", "lamp b"), quantity=Quantity.RELATIVE))
    original = Text.__dict__["_get_layout"]
    build(a, tmp_path / "memo.pdf", paper="letter", diagram="xy")
    assert Text.__dict__["_get_layout"] is original
    monkeypatch.setattr(report_build, "_layout_memo", contextlib.nullcontext)
    monkeypatch.setattr(report_pages, "_reusable", lambda ax, rect, kw: False)
    build(a, tmp_path / "plain.pdf", paper="letter", diagram="xy")
    assert (tmp_path / "memo.pdf").read_bytes() == (tmp_path / "plain.pdf").read_bytes()


def test_a_report_command_run_inside_another_program_freezes_nothing(tmp_path):
    """Only a run from the console entry point (which exits next) leaves the report's objects
    uncollected; the same command run in-process (a test's runner, a script) frees them as usual."""
    from typer.testing import CliRunner

    from cctkit import cli

    src = tmp_path / "one.csv"
    src.write_text("wavelength_nm,lamp\n" + "\n".join(f"{w},{1 + w / 1000:.4f}" for w in range(380, 781, 5)) + "\n")
    assert not cli.CONSOLE_RUN
    frozen = gc.get_freeze_count()
    r = CliRunner().invoke(cli.app, ["report", str(src), "-o", str(tmp_path / "one.pdf"), "--date", "2026-01-15"])
    assert r.exit_code == 0, r.output
    assert gc.get_freeze_count() == frozen and gc.isenabled()
