"""The report's charts for notebooks and scripts: each draws one analysis onto a matplotlib Axes.

Every function has the form ``chart(analysis, index=None, ax=None, **options) -> Axes``:

* ``analysis`` is what :func:`cctkit.analyse` returns;
* ``index`` picks one spectrum (0-based); ``None`` means every spectrum where the chart
  can show several (chromaticity, spectrum, indices) and the first one elsewhere;
* ``ax`` is drawn on when given, else a new figure is made (``matplotlib.pyplot``).

They are thin doors to :mod:`cctkit.report.charts`, the functions the PDF and PNG reports
draw with, so a notebook and a report show the same picture.  matplotlib is imported only
when a chart is drawn.

Example::

    import cctkit
    a = cctkit.analyse(cctkit.read_spectra("spectra/tw-lab-setpoints.csv"))
    cctkit.plot.chromaticity(a)
    cctkit.plot.rendering(a, 0)
"""

from __future__ import annotations

from typing import Any

__all__ = [
    "chromaticity",
    "spectrum",
    "difference",
    "rendering",
    "hue_fidelity",
    "chroma_shift",
    "vector_graphic",
    "indices",
]


def _axes(ax: Any, size: tuple[float, float] = (6.0, 4.0)) -> Any:
    if ax is not None:
        return ax
    import matplotlib.pyplot as plt

    _, ax = plt.subplots(figsize=size, layout="constrained")
    return ax


def _index(analysis: Any, index: int | None) -> int:
    n = len(analysis)
    if index is None:
        return 0
    i = int(index)
    if not -n <= i < n:
        raise ValueError(f"index must be between 0 and {n - 1} for an analysis of {n} spectra, got {index!r}")
    return i % n


def _one(chart: str, analysis: Any, index: int | None, ax: Any, size: tuple[float, float] = (6.0, 4.0)) -> Any:
    """Draw the report chart ``chart`` (a name in :mod:`cctkit.report.charts`) for one spectrum."""
    from .report import charts

    ax = _axes(ax, size)
    getattr(charts, chart)(analysis, ax, index=_index(analysis, index))
    return ax


def chromaticity(analysis: Any, index: int | None = None, ax: Any = None, *, diagram: str = "uv") -> Any:
    """The region around the Planckian locus with each spectrum's chromaticity.

    ``diagram`` is ``"uv"`` (CIE 1960), ``"uvp"`` (CIE 1976 u'v') or ``"xy"`` (CIE 1931).
    """
    from .report import charts

    if diagram not in charts.DIAGRAMS:
        raise ValueError(f"diagram must be one of {', '.join(charts.DIAGRAMS)}, got {diagram!r}")
    ax = _axes(ax, (5.0, 5.0))
    picked = None if index is None else [_index(analysis, index)]
    shown = picked if picked is not None else list(range(len(analysis)))
    labels = [analysis.spectra.names[i] for i in shown]
    charts.chromaticity_chart(analysis, ax, indices=picked, diagram=diagram, legend_labels=labels)
    return ax


def spectrum(analysis: Any, index: int | None = None, ax: Any = None) -> Any:
    """One spectrum with its reference illuminant (both Y = 100), or every spectrum when ``index`` is None."""
    from .report import charts

    ax = _axes(ax)
    if index is None and len(analysis) > 1:
        charts.spectra_overlay_chart(analysis, ax)
    else:
        charts.spectrum_chart(analysis, ax, index=_index(analysis, index))
    return ax


def difference(analysis: Any, index: int | None = None, ax: Any = None) -> Any:
    """Test minus reference per wavelength (both Y = 100)."""
    return _one("difference_chart", analysis, index, ax)


def rendering(analysis: Any, index: int | None = None, ax: Any = None) -> Any:
    """CIE 13.3 Ra and R1-R14 as bars."""
    return _one("cri_chart", analysis, index, ax)


def hue_fidelity(analysis: Any, index: int | None = None, ax: Any = None) -> Any:
    """TM-30 local fidelity Rf,h per hue bin."""
    return _one("hue_fidelity_chart", analysis, index, ax)


def chroma_shift(analysis: Any, index: int | None = None, ax: Any = None) -> Any:
    """TM-30 local chroma shift Rcs,h per hue bin [%]."""
    return _one("chroma_shift_chart", analysis, index, ax)


def vector_graphic(analysis: Any, index: int | None = None, ax: Any = None) -> Any:
    """TM-30 colour vector graphic of one spectrum."""
    return _one("vector_graphic_chart", analysis, index, ax, (5.0, 5.0))


def indices(analysis: Any, index: int | None = None, ax: Any = None) -> Any:
    """Ra, R9, Rf and Rg side by side, for every spectrum (or the one at ``index``)."""
    from .report import charts

    ax = _axes(ax)
    charts.index_comparison_chart(analysis, ax, indices=None if index is None else [_index(analysis, index)])
    return ax
