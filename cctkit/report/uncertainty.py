"""The uncertainty page: every number with its U (k = 2), the 95 % region in uv, histograms of CCT and Ra.

One A4 page per spectrum of a :class:`cctkit.uncertainty.UncertaintyResult`.  The page
only draws: values, uncertainties, intervals, the uv covariance and the draws all come
from :func:`cctkit.uncertainty.monte_carlo`; the ellipse's vertices from
:func:`cctkit.uncertainty.uv_ellipse`; the locus from :func:`cctkit.locus.planckian_uv`.
"""

from __future__ import annotations

import os
from collections.abc import Iterable
from pathlib import Path

import numpy as np

__all__ = ["uncertainty_page", "write_uncertainty_report"]

_A4_IN = (8.27, 11.69)
_INK = "#111111"
_GREY = "#777777"
_FILL = "#c9d3e6"


def _text_rows(s, digits: int = 2) -> list[tuple[str, str, str, str, str, str]]:
    from ..uncertainty import TABLE_ROWS, decimals_for, unit_of

    rows = []
    for key, label in TABLE_ROWS:
        e = s.estimates.get(key)
        if e is None:
            continue
        d = decimals_for(e.u, digits)
        unit = unit_of(key, s.quantity)
        lo, hi = e.interval_95

        def f(v, dd=d):
            return "n/a" if v is None or not np.isfinite(v) else f"{v:.{dd}f}"

        gum = f(2.0 * e.u_gum, d + 1) if e.u_gum is not None else ""
        rows.append((label, f(e.value), f(e.U, d + 1), f"[{f(lo)}, {f(hi)}]", gum, "" if unit == "1" else unit))
    return rows


def _uv_chart(ax, s) -> None:
    from ..locus import planckian_uv
    from ..uncertainty import uv_ellipse

    u0, v0 = s.estimates["u"].value, s.estimates["v"].value
    cov = s.uv_covariance
    if not np.all(np.isfinite(cov)):
        ax.text(0.5, 0.5, "no chromaticity", ha="center", va="center", transform=ax.transAxes)
        return
    ell = uv_ellipse([u0, v0], cov)
    half = max(float(np.max(np.abs(ell - [u0, v0]))) * 1.6, 1e-4)
    T = np.geomspace(1000.0, 25000.0, 600)
    loc = planckian_uv(T)
    du, dv = s.kept.get("u"), s.kept.get("v")
    if du is not None and dv is not None:
        step = max(1, du.shape[0] // 1500)
        ax.plot(du[::step], dv[::step], ",", color=_GREY, alpha=0.6, rasterized=False)
    ax.plot(loc[:, 0], loc[:, 1], "-", color=_INK, lw=0.8, label="Planckian locus")
    ax.fill(ell[:, 0], ell[:, 1], color=_FILL, alpha=0.6, lw=0)
    ax.plot(ell[:, 0], ell[:, 1], "-", color="#1f4e9a", lw=1.0, label="95 % region (Monte Carlo covariance)")
    ax.plot([u0], [v0], "+", color=_INK, ms=8, mew=1.0, label="measured")
    ax.set_xlim(u0 - half, u0 + half)
    ax.set_ylim(v0 - half, v0 + half)
    ax.set_aspect("equal")
    ax.set_xlabel("u (CIE 1960)")
    ax.set_ylabel("v (CIE 1960)")
    ax.legend(loc="upper right", frameon=False)
    ax.ticklabel_format(useOffset=False)
    ax.tick_params(axis="x", labelrotation=30)


def _histogram(ax, s, key: str, label: str) -> None:
    draws = s.kept.get(key)
    e = s.estimates.get(key)
    if draws is None or e is None or not np.isfinite(draws).any():
        ax.text(0.5, 0.5, f"{label}: not computed", ha="center", va="center", transform=ax.transAxes)
        ax.set_axis_off()
        return
    d = draws[np.isfinite(draws)]
    ax.hist(d, bins=40, color=_FILL, edgecolor="#1f4e9a", lw=0.4)
    for x, style in ((e.value, "-"), (e.interval_95[0], "--"), (e.interval_95[1], "--")):
        ax.axvline(x, color=_INK, ls=style, lw=0.8)
    ax.set_xlabel(label)
    ax.set_ylabel("draws")
    ax.set_title(f"{label}: {d.shape[0]} draws; solid: value, dashed: 95 % interval", fontsize=6.5)


def uncertainty_page(
    result, index: int, *, date: str, version: str, page_label: str | None = None, footer: str | None = None
):
    """The page (a matplotlib Figure) of spectrum ``index`` of ``result``.

    Inside a full report (:func:`cctkit.report.build_report` with ``uncertainty``) the page
    carries that report's ``page_label`` ("page n of N") and ``footer`` line instead of its own.
    """
    from matplotlib.figure import Figure

    from ..uncertainty import UNCERTAINTY_CAUTION

    s = result.spectra[index]
    W, H = _A4_IN
    fig = Figure(figsize=(W, H))
    m = result.model

    def text(x, y, t, **kw):
        kw.setdefault("va", "top")
        fig.text(x / W, 1 - y / H, t, **kw)

    text(0.45, 0.45, f"Measurement uncertainty: {s.name}", fontsize=11, weight="bold")
    text(
        W - 0.45, 0.45, page_label or f"page {index + 1} of {len(result.spectra)}", fontsize=7, ha="right", color=_GREY
    )
    how = (
        f"adaptive (JCGM 101 7.9, {m.tolerance_digits} significant digits of u): {s.stages} stages, "
        + ("stable" if s.converged else "NOT stable at max_draws")
        if m.draws is None
        else "fixed number of draws"
    )
    text(0.45, 0.72, f"source {s.source}", fontsize=6.5, color=_GREY)
    text(0.45, 0.86, f"model {m.source}  SHA-256 {m.sha256}", fontsize=6.0, color=_GREY, family="monospace")
    text(0.45, 1.00, f"Monte Carlo M = {s.draws_M} draws, {how}; seed {m.seed}", fontsize=6.5, color=_GREY)

    # the table: U beside each number
    y = 1.3
    cols = (0.45, 2.25, 3.1, 3.95, 5.55, 6.45)
    heads = ("measure", "value", "U (k = 2)", "95 % interval", "U (GUM law)", "unit")
    for x, h in zip(cols, heads):
        text(x, y, h, fontsize=6.5, weight="bold")
    y += 0.17
    for row in _text_rows(s):
        for x, cell in zip(cols, row):
            text(x, y, cell, fontsize=6.5)
        y += 0.14

    ax = fig.add_axes((0.85 / W, 1 - (y + 3.9) / H, 3.4 / W, 3.4 / H))
    _uv_chart(ax, s)
    ax1 = fig.add_axes((4.75 / W, 1 - (y + 1.85) / H, 3.0 / W, 1.45 / H))
    _histogram(ax1, s, "cct_K", "CCT [K]")
    ax2 = fig.add_axes((4.75 / W, 1 - (y + 3.9) / H, 3.0 / W, 1.45 / H))
    _histogram(ax2, s, "Ra", "Ra")

    foot = H - 0.95
    text(0.45, foot, "Cautions", fontsize=6.0, weight="bold")
    lines = (
        UNCERTAINTY_CAUTION,
        "U = 2u from the Monte Carlo draws; 95 % intervals are probabilistically symmetric (JCGM 101:2008 7.7); "
        "U (GUM law) is 2u of the linearised propagation (JCGM 100:2008 5.1), for comparison.",
        "Where the two U differ, the measure is not linear over the spread of the measured spectrum.",
    )
    for k, line in enumerate(lines):
        text(0.45, foot + 0.13 + 0.11 * k, "\u2022 " + line, fontsize=5.5)
    if footer is None:
        text(W - 0.45, foot, f"cctkit {version} \u2022 report date {date}", fontsize=5.5, ha="right", color=_GREY)
    else:
        text(0.45, H - 0.47, footer, fontsize=5.2, color=_GREY, va="bottom", family="monospace")
    return fig


def write_uncertainty_report(
    result, path: str | os.PathLike, *, overwrite: bool = False, inputs: Iterable = (), date: str | None = None
) -> Path:
    """Write one uncertainty page per spectrum to the PDF ``path`` (atomically; never over an input)."""
    from matplotlib.backends.backend_pdf import PdfPages

    from .. import __version__
    from ..errors import InputError
    from ..safe_io import atomic_path
    from .build import report_style, save_pdf_page

    out = Path(path)
    if out.suffix.lower() != ".pdf":
        raise InputError(
            f"the uncertainty report is a PDF: the output must end in .pdf, got {out.name!r}", source=str(out)
        )
    from .profile import report_date

    date = report_date(date)
    info = {
        "Title": f"cctkit uncertainty: {result.spectra[0].name}"
        if len(result.spectra) == 1
        else f"cctkit uncertainty: {len(result.spectra)} spectra",
        "Creator": f"cctkit {__version__}",
        "CreationDate": None,
    }
    with report_style(), atomic_path(out, overwrite=overwrite, inputs=list(inputs)) as tmp:
        with PdfPages(tmp, metadata=info) as pdf:
            for i in range(len(result.spectra)):
                save_pdf_page(pdf, uncertainty_page(result, i, date=date, version=__version__))
    return out
