"""Reports an engineer can sign off: a vector PDF (A4 or Letter) and a one-page PNG summary.

Reports only draw: numbers come from :func:`cctkit.analysis.analyse` and the library
functions it and the charts call.  Importing this package does not import matplotlib.

* :func:`build_report` -- write a PDF or PNG report of an analysis.
* :mod:`cctkit.report.charts` -- each chart as ``chart(analysis, ax, ...)`` for use in your own figures.
* :mod:`cctkit.report.pages` -- the page layouts.
"""

from __future__ import annotations

from .build import BATCH_PAGE_LIMIT, PNG_DPI, PNG_SIZE_PX, Report, build_report, check_options, plan_pages

__all__ = ["build_report", "check_options", "plan_pages", "Report", "BATCH_PAGE_LIMIT", "PNG_SIZE_PX", "PNG_DPI"]
