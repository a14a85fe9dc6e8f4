"""Assembling a report: the page plan, the PDF (vector, fonts embedded) and the PNG summary.

:func:`build_report` writes through :func:`cctkit.safe_io.atomic_path`: the file
appears complete or not at all, an existing file is kept unless ``overwrite``,
and an input is never written over.  matplotlib is imported here, inside the
functions; pages are :class:`matplotlib.figure.Figure` objects drawn without
pyplot, with the report settings held in an ``rc_context`` (nothing global changes).
"""

from __future__ import annotations

import datetime as _dt
import math
import os
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Iterable, Sequence

from ..errors import InputError

__all__ = ["BATCH_PAGE_LIMIT", "PNG_SIZE_PX", "PNG_DPI", "REPORT_SUFFIXES", "Report", "plan_pages", "build_report",
           "check_options", "report_meta"]

#: Batches larger than this get a summary table and a scatter instead of a page per spectrum.
BATCH_PAGE_LIMIT = 12
#: Pixel size of the PNG summary picture (width, height) and its resolution [dpi].
PNG_SIZE_PX = (1600, 1000)
PNG_DPI = 150
#: Output suffixes a report can be written as.
REPORT_SUFFIXES = (".pdf", ".png")

_RC = {
    "pdf.fonttype": 42,  # TrueType, embedded
    "ps.fonttype": 42,
    "font.family": "DejaVu Sans",
    "font.size": 7.0,
    "axes.titlesize": 7.0,
    "axes.labelsize": 6.5,
    "axes.linewidth": 0.6,
    "xtick.labelsize": 6.0,
    "ytick.labelsize": 6.0,
    "xtick.major.width": 0.5,
    "ytick.major.width": 0.5,
    "xtick.major.size": 2.5,
    "ytick.major.size": 2.5,
    "legend.fontsize": 6.0,
    "hatch.linewidth": 0.5,
    "axes.unicode_minus": True,
    "svg.fonttype": "none",
}


@dataclass(frozen=True)
class Report:
    """What was written: the path, the kind (``"pdf"``/``"png"``) and the page titles (PDF)."""

    path: Path
    kind: str
    pages: tuple[str, ...]
    size_px: tuple[int, int] | None = None


def plan_pages(n: int, *, pages: bool | None = None) -> list[tuple[str, Any]]:
    """The page plan of a report on ``n`` spectra: a list of (kind, argument).

    * one spectrum: its page;
    * 2 to :data:`BATCH_PAGE_LIMIT` spectra: a comparison page, then one page per spectrum;
    * more: summary table pages (paginated) and a chromaticity scatter page, plus one page per
      spectrum only when ``pages`` is True.

    ``pages=False`` leaves out the per-spectrum pages at any size (except for a single spectrum).
    """
    from .pages import SUMMARY_ROWS_PER_PAGE

    if n < 1:
        raise InputError("a report needs at least one spectrum")
    if n == 1:
        return [("sample", 0)]
    if n <= BATCH_PAGE_LIMIT:
        plan: list[tuple[str, Any]] = [("comparison", tuple(range(n)))]
        if pages is not False:
            plan += [("sample", i) for i in range(n)]
        return plan
    plan = [("summary", k) for k in range(math.ceil(n / SUMMARY_ROWS_PER_PAGE))] + [("scatter", None)]
    if pages:
        plan += [("sample", i) for i in range(n)]
    return plan


def report_meta(*, date: str | None = None) -> dict[str, Any]:
    """Provenance of the report itself: versions, conventions, date (ISO, today by default)."""
    from ..analysis import provenance
    from ..tolerance import ANSI_EDITION

    meta = dict(provenance())
    meta["date"] = date or _dt.date.today().isoformat()
    meta["tolerance_edition"] = f"{ANSI_EDITION} (quadrangles)"
    return meta


def check_options(path: str | os.PathLike, *, paper: str = "a4", diagram: str = "uv", verdict: bool = False) -> None:
    """Raise :class:`cctkit.errors.InputError` unless :func:`build_report` accepts these options.

    ``path`` must end in one of :data:`REPORT_SUFFIXES`, ``paper`` be a key of
    :data:`cctkit.report.pages.PAPER_IN` and ``diagram`` one of
    :data:`cctkit.report.charts.DIAGRAMS`; a ``verdict`` needs a PDF.  Cheap: callers
    run it before reading any input.
    """
    from .charts import DIAGRAMS
    from .pages import PAPER_IN

    out = Path(path)
    if out.suffix.lower() not in REPORT_SUFFIXES:
        raise InputError(f"report output must end in {' or '.join(REPORT_SUFFIXES)}, got {out.name!r}",
                         source=str(out))
    if paper not in PAPER_IN:
        raise InputError(f"paper must be one of {', '.join(PAPER_IN)}, got {paper!r}", source="--paper")
    if diagram not in DIAGRAMS:
        raise InputError(f"diagram must be one of {', '.join(DIAGRAMS)}, got {diagram!r}", source="--diagram")
    if verdict and out.suffix.lower() != ".pdf":
        raise InputError(f"the claims verdict is part of the PDF report: the output must end in .pdf, "
                         f"got {out.name!r}", source=str(out))


def build_report(
    analysis,
    path: str | os.PathLike,
    *,
    paper: str = "a4",
    pages: bool | None = None,
    diagram: str = "uv",
    regions: Sequence | None = None,
    overwrite: bool = False,
    inputs: Iterable = (),
    date: str | None = None,
    verdict: dict | None = None,
    claims=None,
    records: Sequence[dict] | None = None,
) -> Report:
    """Write the report of ``analysis`` to ``path`` (``.pdf``: full report, ``.png``: one-page summary).

    Parameters
    ----------
    analysis
        A :class:`cctkit.analysis.Analysis` (parts still ``None`` are drawn as "not computed").
    path
        Output file; its suffix picks the format.
    paper
        ``"a4"`` (default) or ``"letter"`` (PDF pages; the PNG has a fixed pixel size).
    pages
        One page per spectrum for batches above :data:`BATCH_PAGE_LIMIT` when True; never when
        False; automatic when None (see :func:`plan_pages`).
    diagram
        Chromaticity diagram: ``"uv"`` (CIE 1960, default), ``"uvp"`` (CIE 1976) or ``"xy"`` (CIE 1931).
    regions
        Outlines for the chromaticity charts (:class:`cctkit.report.charts.Outline`); None draws the
        ANSI C78.377 quadrangles of :mod:`cctkit.tolerance`, ``()`` none.
    overwrite
        Replace an existing file.
    inputs
        Input files, which are never written over.
    date
        Report date printed on every page (ISO ``YYYY-MM-DD``; today by default).
    verdict, claims
        A verdict document (:meth:`cctkit.claims.Verdict.as_dict`) of these spectra and the
        :class:`cctkit.claims.Claims` it was checked against: the PDF then starts with the
        verdict pages (:mod:`cctkit.report.verdict`).  Give both or neither; PDF only.
    records
        ``analysis.records()`` when the caller already has them (computed here otherwise).

    Returns
    -------
    Report
    """
    out = Path(path)
    suffix = out.suffix.lower()
    check_options(out, paper=paper, diagram=diagram, verdict=verdict is not None)
    if (verdict is None) != (claims is None):
        raise InputError("a verdict page needs both the verdict and the claims it was checked against",
                         source="verdict" if claims is None else "claims")
    from ..safe_io import atomic_path, check_output_path

    check_output_path(out, overwrite=overwrite, inputs=list(inputs))  # fail before the slow part
    from matplotlib import rc_context

    records = analysis.records() if records is None else list(records)
    if len(records) != len(analysis):
        raise InputError(f"{len(records)} records for an analysis of {len(analysis)} spectra", source="records")
    if verdict is not None:
        from .verdict import check_verdict_matches

        check_verdict_matches(records, verdict)
    meta = report_meta(date=date)
    with rc_context(_RC):
        from .charts import reference_comparison

        comparison = reference_comparison(analysis)
        with atomic_path(out, overwrite=overwrite, inputs=list(inputs)) as tmp:
            if suffix == ".png":
                _write_png(analysis, records, meta, tmp, comparison=comparison, diagram=diagram, regions=regions)
                return Report(path=out, kind="png", pages=("summary",), size_px=PNG_SIZE_PX)
            titles = _write_pdf(analysis, records, meta, tmp, paper=paper, pages=pages, comparison=comparison,
                                diagram=diagram, regions=regions, verdict=verdict, claims=claims)
    return Report(path=out, kind="pdf", pages=tuple(titles))


def _write_png(analysis, records, meta, tmp: Path, *, comparison, diagram, regions) -> None:
    from .pages import summary_picture

    fig = summary_picture(analysis, records, meta, comparison=comparison, diagram=diagram, regions=regions,
                          size_px=PNG_SIZE_PX, dpi=PNG_DPI)
    fig.savefig(tmp, format="png", dpi=PNG_DPI, metadata={"Software": f"cctkit {meta['cctkit_version']}"})


def _write_pdf(analysis, records, meta, tmp: Path, *, paper, pages, comparison, diagram, regions,
               verdict=None, claims=None) -> list[str]:
    from matplotlib.backends.backend_pdf import PdfPages

    from . import pages as pg

    plan = plan_pages(len(records), pages=pages)
    n_verdict = 0
    if verdict is not None:
        from .verdict import verdict_page_count

        n_verdict = verdict_page_count(verdict)
    total = n_verdict + len(plan)
    labels = [f"page {k + 1} of {total}" for k in range(total)]
    titles: list[str] = []
    n_summary = sum(1 for kind, _ in plan if kind == "summary")
    summary_figs = None
    info = {
        "Title": f"cctkit report: {records[0]['name']}" if len(records) == 1 else f"cctkit report: {len(records)} spectra",
        "Creator": f"cctkit {meta['cctkit_version']}",
        "Subject": "CCT, Duv, chromaticity, photometry and colour rendering of measured spectra",
    }
    with PdfPages(tmp, metadata=info) as pdf:
        if verdict is not None:
            from .verdict import verdict_pages

            for title, fig in verdict_pages(analysis, verdict, claims, meta, paper=paper, diagram=diagram,
                                            page_labels=labels[:n_verdict]):
                titles.append(title)
                pdf.savefig(fig)
        labels = labels[n_verdict:]
        for k, (kind, arg) in enumerate(plan):
            common = {"paper": paper}
            if kind == "sample":
                fig = pg.sample_page(analysis, arg, records[arg], meta, comparison=comparison, diagram=diagram,
                                     regions=regions, page_label=labels[k], **common)
                titles.append(f"spectrum: {records[arg]['name']}")
            elif kind == "comparison":
                fig = pg.comparison_page(analysis, list(arg), records, meta, comparison=comparison,
                                         diagram=diagram, regions=regions, page_label=labels[k], **common)
                titles.append("comparison")
            elif kind == "summary":
                if summary_figs is None:
                    summary_figs = pg.summary_table_pages(analysis, records, meta,
                                                          page_labels=labels[k:k + n_summary], **common)
                fig = next(summary_figs)
                titles.append(f"summary table {arg + 1}")
            else:
                fig = pg.scatter_page(analysis, records, meta, comparison=comparison, diagram=diagram,
                                      regions=regions, page_label=labels[k], **common)
                titles.append("chromaticity scatter")
            pdf.savefig(fig)
    return titles
