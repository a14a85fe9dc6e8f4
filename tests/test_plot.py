"""cctkit.plot: the report's charts on any Axes, one implementation with the report."""

from pathlib import Path

import numpy as np
import pytest

matplotlib = pytest.importorskip("matplotlib")
matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402

import cctkit  # noqa: E402
from cctkit import plot  # noqa: E402
from cctkit.report import charts  # noqa: E402

SPECTRA = Path(__file__).resolve().parent.parent / "spectra"
CHARTS = {  # public function -> the report's chart it draws with
    "chromaticity": "chromaticity_chart",
    "spectrum": "spectrum_chart",
    "difference": "difference_chart",
    "rendering": "cri_chart",
    "hue_fidelity": "hue_fidelity_chart",
    "chroma_shift": "chroma_shift_chart",
    "vector_graphic": "vector_graphic_chart",
    "indices": "index_comparison_chart",
}


@pytest.fixture(scope="module")
def analysis():
    return cctkit.analyse(cctkit.read_spectra(SPECTRA / "tw-lab-setpoints.csv"))


@pytest.mark.parametrize("name", sorted(CHARTS))
def test_each_chart_draws_on_the_given_axes(analysis, name):
    fig, ax = plt.subplots()
    try:
        out = getattr(plot, name)(analysis, 1, ax)
        assert out is ax
        assert ax.lines or ax.patches or ax.collections  # something was drawn
    finally:
        plt.close(fig)


@pytest.mark.parametrize("name", sorted(CHARTS))
def test_each_chart_makes_its_own_figure(analysis, name):
    ax = getattr(plot, name)(analysis)
    try:
        assert ax.figure is not None and (ax.lines or ax.patches or ax.collections)
    finally:
        plt.close(ax.figure)


@pytest.mark.parametrize("name", sorted(CHARTS))
def test_the_report_and_the_api_share_one_chart(analysis, name, monkeypatch):
    calls = []
    target = CHARTS[name]
    monkeypatch.setattr(charts, target, lambda *a, **k: calls.append((a, k)))
    if name == "spectrum":  # several spectra without an index draw the overlay chart
        monkeypatch.setattr(charts, "spectra_overlay_chart", lambda *a, **k: calls.append((a, k)))
    fig, ax = plt.subplots()
    try:
        getattr(plot, name)(analysis, 2, ax)
    finally:
        plt.close(fig)
    assert len(calls) == 1 and calls[0][0][0] is analysis and calls[0][0][1] is ax


def test_index_none_shows_every_spectrum_where_it_can(analysis):
    ax = plot.chromaticity(analysis)
    try:
        labels = [t.get_text() for t in ax.get_legend().get_texts()]
        assert labels[-len(analysis) :] == list(analysis.spectra.names)
    finally:
        plt.close(ax.figure)
    ax = plot.spectrum(analysis)
    try:
        assert len([line for line in ax.lines if len(line.get_xdata()) > 100]) >= len(analysis)
    finally:
        plt.close(ax.figure)


def test_rendering_bars_are_the_analysis_values(analysis):
    ax = plot.rendering(analysis, 3)
    try:
        heights = [p.get_height() for p in ax.patches][:15]
        want = np.concatenate([[analysis.cri.Ra[3]], analysis.cri.R[3]])
        assert np.allclose(heights, want, rtol=0, atol=1e-12)
    finally:
        plt.close(ax.figure)


def test_bad_index_and_diagram_name_the_argument(analysis):
    with pytest.raises(ValueError, match="index must be between 0 and 4 for an analysis of 5 spectra, got 9"):
        plot.rendering(analysis, 9)
    with pytest.raises(ValueError, match="diagram must be one of uv, uvp, xy, got 'lab'"):
        plot.chromaticity(analysis, diagram="lab")
