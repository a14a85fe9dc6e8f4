"""Assembling a report: the page plan, the PDF (vector, fonts embedded) and the PNG summary.

:func:`build_report` writes through :func:`cctkit.safe_io.atomic_path`: the file
appears complete or not at all, an existing file is kept unless ``overwrite``,
and an input is never written over.  matplotlib is imported here, inside the
functions; pages are :class:`matplotlib.figure.Figure` objects drawn without
pyplot, with the report settings held in an ``rc_context`` (nothing global changes).
"""

from __future__ import annotations

import gc
import math
import os
from collections.abc import Iterable, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from ..errors import InputError

__all__ = [
    "BATCH_PAGE_LIMIT",
    "PNG_SIZE_PX",
    "PNG_DPI",
    "REPORT_SUFFIXES",
    "Report",
    "plan_pages",
    "build_report",
    "check_options",
    "report_meta",
    "process_ends_after",
]

#: Batches larger than this get a summary table and a scatter instead of a page per spectrum.
BATCH_PAGE_LIMIT = 12
#: Pixel size of the PNG summary picture (width, height) and its resolution [dpi].
PNG_SIZE_PX = (1600, 1000)
PNG_DPI = 150
#: Output suffixes a report can be written as.
REPORT_SUFFIXES = (".pdf", ".png")

_RC = {
    # The PDF uses the standard Helvetica (no font embedding or subsetting: fast, and every
    # viewer has it); text is kept within its Windows-1252 character set.  PNGs use DejaVu Sans.
    "pdf.use14corefonts": True,
    "pdf.compression": 6,
    "font.family": "sans-serif",
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
    "axes.unicode_minus": False,  # U+2212 is not in the PDF core fonts' character set
    "svg.fonttype": "none",
    "svg.hashsalt": "cctkit",  # no random ids: the same inputs give the same bytes
    "path.simplify": True,
}


@dataclass(frozen=True)
class Report:
    """What was written: the path, the kind (``"pdf"``/``"png"``) and the page titles (PDF)."""

    path: Path
    kind: str
    pages: tuple[str, ...]
    size_px: tuple[int, int] | None = None


def plan_pages(n: int, *, pages: bool | None = None, sections: Sequence[str] | None = None) -> list[tuple[str, Any]]:
    """The page plan of a report on ``n`` spectra: a list of (kind, argument).

    * the sign-off page ("cover") always comes first (and, with more than one input file, the
      inputs table comes last; it is planned by :func:`build_report`, like the verdict pages);
    * one spectrum: its page;
    * 2 to :data:`BATCH_PAGE_LIMIT` spectra: a comparison page, then one page per spectrum;
    * more: summary table pages (paginated) and a chromaticity scatter page, plus one page per
      spectrum only when ``pages`` is True.

    ``pages=False`` leaves out the per-spectrum pages at any size (except for a single spectrum).
    ``sections`` (of :data:`cctkit.report.profile.SECTIONS`) keeps only those kinds of page
    ("spectra" are the per-spectrum pages); verdict pages are planned by :func:`build_report`.
    """
    from .pages import SUMMARY_ROWS_PER_PAGE
    from .profile import SECTIONS

    if n < 1:
        raise InputError("a report needs at least one spectrum")
    keep = set(SECTIONS if sections is None else sections)
    if n == 1:
        plan: list[tuple[str, Any]] = [("sample", 0)]
    elif n <= BATCH_PAGE_LIMIT:
        plan = [("comparison", tuple(range(n)))]
        if pages is not False:
            plan += [("sample", i) for i in range(n)]
    else:
        plan = [("summary", k) for k in range(math.ceil(n / SUMMARY_ROWS_PER_PAGE))] + [("scatter", None)]
        if pages:
            plan += [("sample", i) for i in range(n)]
    kind_section = {"sample": "spectra", "comparison": "comparison", "summary": "summary", "scatter": "scatter"}
    return [("cover", None)] + [(k, a) for k, a in plan if kind_section[k] in keep]


def report_meta(*, date: str | None = None, signoff=None, records: Sequence[dict] = ()) -> dict[str, Any]:
    """Provenance of the report itself: versions, conventions, the report date, sign-off fields,
    and the SHA-256 of its inputs (the file's own for one input; for several, the SHA-256 of
    their digests listed in order, so every page can carry one line that names the whole input)."""
    import hashlib

    from ..analysis import provenance
    from ..tolerance import ANSI_EDITION
    from .profile import SignOff, report_date

    so = signoff if signoff is not None else SignOff()
    # the methods the spectra were actually resampled by (each record's), not the option's default
    used = [r.get("interpolation") for r in records if r.get("interpolation")]
    meta = dict(provenance(used=used))
    if used:
        meta["conventions"]["interpolation_method"] = meta["conventions"]["interpolation_used"]
    meta["date"] = report_date(date or so.date)
    meta["tolerance_edition"] = f"{ANSI_EDITION} (quadrangles)"
    for key in ("title", "project", "lab", "operator", "instrument", "notes"):
        meta[key] = getattr(so, key)
    digests = list(dict.fromkeys(r.get("sha256") or "" for r in records))
    digests = [d for d in digests if d]
    meta["input_count"] = len(digests)
    if len(digests) == 1:
        meta["input_sha256"] = digests[0]
    elif digests:
        meta["input_sha256"] = hashlib.sha256("\n".join(digests).encode("ascii")).hexdigest()
    else:
        meta["input_sha256"] = ""
    return meta


def design_intents(analysis) -> dict[int, tuple[str, ...]]:
    """The TM-30-20 Annex E levels each spectrum meets (:mod:`cctkit.rendering.intents`), by index."""
    t = analysis.tm30
    if t is None:
        return {}
    from ..rendering.intents import level_names, levels
    from ..rendering.tm30 import chroma_shift_percent

    lv = levels(t.Rf, t.Rg, np.asarray(t.Rf_h)[:, 0], chroma_shift_percent(t)[:, 0])
    return {i: tuple(level_names(lv, i)) for i in range(len(analysis))}


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
        raise InputError(f"report output must end in {' or '.join(REPORT_SUFFIXES)}, got {out.name!r}", source=str(out))
    if paper not in PAPER_IN:
        raise InputError(f"paper must be one of {', '.join(PAPER_IN)}, got {paper!r}", source="--paper")
    if diagram not in DIAGRAMS:
        raise InputError(f"diagram must be one of {', '.join(DIAGRAMS)}, got {diagram!r}", source="--diagram")
    if verdict and out.suffix.lower() != ".pdf":
        raise InputError(
            f"the claims verdict is part of the PDF report: the output must end in .pdf, got {out.name!r}",
            source=str(out),
        )


def build_report(
    analysis,
    path: str | os.PathLike,
    *,
    paper: str | None = None,
    pages: bool | None = None,
    diagram: str = "uv",
    regions: Sequence | None = None,
    overwrite: bool = False,
    inputs: Iterable = (),
    date: str | None = None,
    verdict: dict | None = None,
    claims=None,
    records: Sequence[dict] | None = None,
    signoff=None,
    uncertainty=None,
) -> Report:
    """Write the report of ``analysis`` to ``path`` (``.pdf``: full report, ``.png``: one-page summary).

    Parameters
    ----------
    analysis
        A :class:`cctkit.analysis.Analysis` (parts still ``None`` are drawn as "not computed").
    path
        Output file; its suffix picks the format.
    paper
        ``"a4"`` (default) or ``"letter"`` (PDF pages; the PNG has a fixed pixel size); None takes
        the profile's paper, else A4.
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
        Report date printed on every page (ISO ``YYYY-MM-DD``); default the profile's date, else
        ``SOURCE_DATE_EPOCH``, else today (:func:`cctkit.report.profile.report_date`).
    verdict, claims
        A verdict document (:meth:`cctkit.claims.Verdict.as_dict`) of these spectra and the
        :class:`cctkit.claims.Claims` it was checked against: the PDF then starts with the
        verdict pages (:mod:`cctkit.report.verdict`).  Give both or neither; PDF only.
    records
        ``analysis.records()`` when the caller already has them (computed here otherwise).
    signoff
        A :class:`cctkit.report.profile.SignOff`: title, project, lab, operator, instrument,
        notes, date, paper, logo and sections (default: a plain title, every section).
    uncertainty
        A :class:`cctkit.uncertainty.UncertaintyResult` of the same spectra in the same order
        (:func:`cctkit.uncertainty.monte_carlo`): each spectrum page's headline strip then shows
        U (k = 2) beside every number that has one, and is followed by that spectrum's
        uncertainty page (:func:`cctkit.report.uncertainty.uncertainty_page`).  PDF only.

    Returns
    -------
    Report

    Notes
    -----
    The same inputs and options give the same bytes: the PDF carries no creation time and
    the report date is a field (``date``), not the clock, once it is given.
    """
    from .profile import SignOff

    so = signoff if signoff is not None else SignOff()
    paper = paper or so.paper or "a4"
    out = Path(path)
    suffix = out.suffix.lower()
    check_options(out, paper=paper, diagram=diagram, verdict=verdict is not None)
    if (verdict is None) != (claims is None):
        raise InputError(
            "a verdict page needs both the verdict and the claims it was checked against",
            source="verdict" if claims is None else "claims",
        )
    from ..safe_io import atomic_path, check_output_path

    check_output_path(out, overwrite=overwrite, inputs=list(inputs))  # fail before the slow part
    logo = None
    if so.logo is not None:
        from .profile import read_logo

        logo = read_logo(Path(so.logo))
    records = analysis.records() if records is None else list(records)
    if len(records) != len(analysis):
        raise InputError(f"{len(records)} records for an analysis of {len(analysis)} spectra", source="records")
    if verdict is not None:
        from .verdict import check_verdict_matches

        check_verdict_matches(records, verdict)
    meta = report_meta(date=date, signoff=so, records=records)
    meta["design_intents"] = design_intents(analysis)
    if uncertainty is not None:
        meta["uncertainty_U"] = uncertainty_of(uncertainty, records)
    from ..analysis import one_blas_thread

    # One BLAS thread, as in analyse(): the same numbers on any machine, and no idle BLAS threads
    # spinning beside the drawing (a fifth more CPU time on a one-spectrum report).
    with report_style(), one_blas_thread():
        from .charts import reference_comparison

        comparison = reference_comparison(analysis)
        with atomic_path(out, overwrite=overwrite, inputs=list(inputs)) as tmp:
            if suffix == ".png":
                _write_png(analysis, records, meta, tmp, comparison=comparison, diagram=diagram, regions=regions)
                return Report(path=out, kind="png", pages=("summary",), size_px=PNG_SIZE_PX)
            titles = _write_pdf(
                analysis,
                records,
                meta,
                tmp,
                paper=paper,
                pages=pages,
                comparison=comparison,
                diagram=diagram,
                regions=regions,
                verdict=verdict,
                claims=claims,
                sections=so.sections,
                logo=logo,
                uncertainty=uncertainty,
            )
    return Report(path=out, kind="pdf", pages=tuple(titles))


def uncertainty_of(result, records: Sequence[dict]) -> dict[int, dict[str, float]]:
    """U (k = 2) per spectrum index and record key from an uncertainty result of the same spectra.

    Raises :class:`cctkit.errors.InputError` when the result is of other spectra (count, name or
    SHA-256 of the file differ).
    """
    spectra = result.spectra
    if len(spectra) != len(records):
        raise InputError(
            f"the uncertainty result has {len(spectra)} spectra, the report {len(records)}", source="uncertainty"
        )
    out: dict[int, dict[str, float]] = {}
    for i, (s, r) in enumerate(zip(spectra, records)):
        if s.name != r.get("name") or (s.sha256 and r.get("sha256") and s.sha256 != r.get("sha256")):
            raise InputError(
                f"the uncertainty result's spectrum {i + 1} ({s.name!r}) is not the report's ({r.get('name')!r})",
                source="uncertainty",
            )
        out[i] = {k: float(e.U) for k, e in s.estimates.items() if e.U is not None and math.isfinite(e.U)}
    return out


# Characters outside Windows-1252 (the PDF core fonts' set) and what the PDF prints instead.
_PDF_TEXT = {
    "\u2265": ">=",
    "\u2264": "<=",
    "\u2192": "->",
    "\u2190": "<-",
    "\u0394": "d",
    "\u2212": "-",
    "\u2032": "'",
    "\u2033": "''",
    "\u03b1": "alpha",
    "\u03b2": "beta",
    "\u03b3": "gamma",
    "\u03c3": "sigma",
    "\u03bb": "lambda",
    "\u03bc": "\u00b5",
    "\u25b2": "!",
    "\u207b": "-",
    "\u2248": "~",
    "\u221a": "sqrt",
    "\u2009": " ",
    "\u202f": " ",
}


def pdf_text(text: str) -> str:
    """``text`` with every character the PDF core fonts lack replaced (see :data:`_PDF_TEXT`;
    others by their ASCII decomposition, else "?")."""
    import unicodedata

    out = []
    for ch in text:
        try:
            ch.encode("cp1252")
            out.append(ch)
        except UnicodeEncodeError:
            alt = _PDF_TEXT.get(ch)
            if alt is None:
                alt = unicodedata.normalize("NFKD", ch).encode("ascii", "ignore").decode("ascii") or "?"
            out.append(alt)
    return "".join(out)


def save_pdf_page(pdf, fig) -> None:
    """Add ``fig`` to an open :class:`matplotlib.backends.backend_pdf.PdfPages`, its text made
    printable in the core fonts (:func:`pdf_text`)."""
    for t in _texts(fig):
        s = t.get_text()
        if s and not s.isascii():
            t.set_text(pdf_text(s))
    pdf.savefig(fig)
    if _young_gc.active and gc.get_count()[0] > GC_STEP:
        gc.collect()  # the pages before (see :class:`_young_gc`)


def _texts(fig):
    """Every text of ``fig`` that can be drawn, found without making tick objects: an axis
    contributes its label and offset text, and its fixed tick labels are made printable in
    place (``Figure.findobj`` would build every tick of every axis, a third of a page's time)."""
    from matplotlib.axis import Axis
    from matplotlib.text import Text
    from matplotlib.ticker import FixedFormatter, FuncFormatter

    stack = [fig]
    while stack:
        a = stack.pop()
        if isinstance(a, Text):
            yield a
        if isinstance(a, Axis):
            stack += [a.label, a.offsetText]
            # Tick labels given as text (set_ticks(..., labels) makes one of these) are written at
            # draw time by the formatter: make its output printable there.
            for fmt, setter in (
                (a.get_major_formatter(), a.set_major_formatter),
                (a.get_minor_formatter(), a.set_minor_formatter),
            ):
                if isinstance(fmt, (FixedFormatter, FuncFormatter)) and not getattr(fmt, "_cctkit_printable", False):
                    wrapped = FuncFormatter(lambda x, pos=None, f=fmt: pdf_text(str(f(x, pos))))
                    wrapped._cctkit_printable = True
                    setter(wrapped)
            continue
        stack.extend(a.get_children())


#: Metadata every report PDF carries: no clock, so the same inputs give the same bytes.
PDF_METADATA = {"CreationDate": None}


def report_style():
    """The context reports are drawn in: :data:`_RC` and quiet font lookup (see :class:`_quiet_font_lookup`)."""
    from contextlib import ExitStack

    _import_matplotlib()
    from matplotlib import rc_context

    stack = ExitStack()
    stack.enter_context(rc_context(_RC))
    stack.enter_context(_quiet_font_lookup())
    stack.enter_context(_font_memo())
    stack.enter_context(_core_font_heights())
    stack.enter_context(_afm_read_once())
    stack.enter_context(_layout_memo())
    stack.enter_context(_young_gc())
    return stack


def _import_matplotlib() -> None:
    """Import the parts of matplotlib a report uses, without writing its artists' ``set()`` help.

    Each of matplotlib's ~100 artist classes composes, as it is defined, a help text listing all
    its properties (``help(Line2D.set)``); that took about a fifth of the import, which is a
    third of a one-spectrum report's time.  Nothing but those help texts uses it, so it is
    skipped: in a process that drew a report they read "Supported properties are" with an empty
    list.  Does nothing once matplotlib's figure module is loaded.

    The font subsetter the PDF backend imports (``fontTools.subset``, a sixth of the import) is
    made a lazy module (:func:`_lazy_module`): it loads on first use, which the core fonts of a
    report never make."""
    import sys

    if "matplotlib.figure" in sys.modules:
        return
    _lazy_module("fontTools.subset")
    from matplotlib import artist

    compose = getattr(artist, "kwdoc", None)
    if compose is None:  # a matplotlib without this helper: import as usual, only slower
        import matplotlib.backends.backend_pdf  # noqa: F401
        import matplotlib.figure  # noqa: F401

        return
    artist.kwdoc = lambda artist: ""
    try:
        import matplotlib.backends.backend_pdf  # noqa: F401
        import matplotlib.figure  # noqa: F401
    finally:
        artist.kwdoc = compose


def _lazy_module(name: str) -> None:
    """Put a module that loads on first attribute access in place of ``name`` (a submodule), unless
    it is loaded already or cannot be found (:class:`importlib.util.LazyLoader`)."""
    import importlib.util
    import sys

    if name in sys.modules:
        return
    parent, _, leaf = name.rpartition(".")
    try:
        spec = importlib.util.find_spec(name)
    except ImportError:
        return
    if spec is None or spec.loader is None or not hasattr(spec.loader, "exec_module"):
        return
    spec.loader = importlib.util.LazyLoader(spec.loader)
    module = importlib.util.module_from_spec(spec)
    sys.modules[name] = module
    spec.loader.exec_module(module)
    # bound on its package too, so "from package import leaf" takes it without loading it
    setattr(sys.modules[parent], leaf, module)


class _young_gc:
    """Pause Python's automatic garbage collection while a report is drawn; collect in large steps.

    A page makes ~100,000 objects (artists, transforms, paths) that live until the page is
    written, so the collector, which runs whenever 700 more objects exist, walked them again and
    again: 10-15 % of a 12-spectrum report's drawing time.  :func:`save_pdf_page` collects only
    once :data:`GC_STEP` objects have been made since the last collection, which keeps a long
    report's memory bounded (a figure refers to itself, so only a collection frees it).  The
    setting is restored on exit."""

    active = 0

    def __enter__(self):
        _young_gc.active += 1
        if _young_gc.active == 1:
            self._was = gc.isenabled()
            gc.disable()
        return self

    def __exit__(self, *exc):
        _young_gc.active -= 1
        if not _young_gc.active and self._was:
            gc.enable()
        return False


class process_ends_after:
    """For a command whose process ends once its report is written (the CLI): no garbage collection
    of the report's objects at all.

    Inside, automatic collection is off (so :class:`_young_gc` does not turn it back on when the
    report is done); on exit every object is moved to the permanent generation
    (:func:`gc.freeze`) and collection is restored.  Otherwise the first collection after a
    report walks the ~300,000 objects a 12-spectrum report leaves (0.3-0.4 s) and the interpreter
    walks them again as it exits, only to free memory the process gives back anyway.  Not for a
    long-running program: what the report made is then never collected."""

    def __enter__(self):
        self._was = gc.isenabled()
        gc.disable()
        return self

    def __exit__(self, *exc):
        gc.freeze()
        if self._was:
            gc.enable()
        return False


#: Objects made since the last garbage collection after which a report page collects (about 10 pages).
GC_STEP = 1_000_000


class _core_font_heights:
    """Measure core-font text by each glyph's real top and bottom while a report is drawn.

    matplotlib reads an AFM glyph box (left, bottom, right, top) as (left, bottom, width,
    height) when it measures a string for the PDF core fonts, so a glyph that starts high
    (' ° * and the accents) made its line about half a line too tall: a label such as
    "u' (CIE 1976)" aligned by its top sat half a line below its row.  The original is
    restored on exit."""

    def __enter__(self):
        from matplotlib import _afm

        self._cls = _afm.AFM
        self._orig = _afm.AFM.__dict__["get_str_bbox_and_descent"]

        memo: dict = {}

        def get_str_bbox_and_descent(afm, s):
            key = (id(afm), s)
            found = memo.get(key)
            if found is None:
                found = memo[key] = (afm, measure(afm, s))  # the font kept: its id stays its own
            return found[1]

        def measure(afm, s):
            if not len(s):
                return 0, 0, 0, 0, 0
            width, last, left, bottom, top = 0.0, "", 0, 0, 0
            for c in s:
                if c == "\n":
                    continue
                name = _afm.uni2type1.get(ord(c), f"uni{ord(c):04X}")
                if name not in afm._metrics_by_name:
                    name = "question"
                wx, _, (x0, y0, _x1, y1) = afm._metrics_by_name[name]
                width += wx + afm._kern.get((last, name), 0)
                left, bottom, top = min(left, x0), min(bottom, y0), max(top, y1)
                last = name
            return left, bottom, width, top - bottom, -bottom

        self._cls.get_str_bbox_and_descent = get_str_bbox_and_descent
        return self

    def __exit__(self, *exc):
        self._cls.get_str_bbox_and_descent = self._orig
        return False


class _layout_memo:
    """Remember how each text is laid out (its lines, their sizes and offsets) while a report is drawn.

    matplotlib lays a text out anew every time it is measured or drawn (a tick label three or
    four times a page: its box, its axis's and its siblings' boxes, then drawing), although the
    result depends only on what the key below holds, never on where the text stands.  The
    memo holds the original's own results, so the pages are the same bytes; texts that wrap to
    the figure or use TeX are laid out as usual.  Restored on exit."""

    def __enter__(self):
        from matplotlib.text import Text

        self._cls = Text
        self._orig = Text.__dict__["_get_layout"]
        layout = self._orig
        memo: dict = {}

        def _get_layout(text, renderer):
            if text.get_wrap() or text.get_usetex():
                return layout(text, renderer)
            base = getattr(renderer, "_renderer", renderer)  # the PDF writer's mixed-mode wrapper
            try:
                key = (
                    type(base),
                    text.figure.dpi,
                    text.get_text(),
                    text.get_parse_math(),
                    hash(text.get_fontproperties()),
                    text._linespacing,
                    text._get_multialignment(),
                    text.get_rotation(),
                    text._horizontalalignment,
                    text._verticalalignment,
                    text.get_rotation_mode(),
                )
            except AttributeError:  # a matplotlib that keeps these otherwise: no memo
                return layout(text, renderer)
            found = memo.get(key)
            if found is None:
                found = memo[key] = layout(text, renderer)
            return found

        Text._get_layout = _get_layout
        return self

    def __exit__(self, *exc):
        self._cls._get_layout = self._orig
        return False


class _afm_read_once:
    """Let the PDF writer name each core font from the metrics already read for measuring text.

    matplotlib reads a core font's metrics file once to measure text and again, whole, when it
    writes the font's entry at the end of the file, only to take its name from it (3 fonts, a
    twentieth of a one-spectrum report).  Restored on exit; a no-op where matplotlib differs."""

    def __enter__(self):
        from matplotlib.backends import _backend_pdf_ps, backend_pdf

        self._mod, self._orig = backend_pdf, backend_pdf.__dict__.get("AFM")
        read = getattr(_backend_pdf_ps, "_cached_get_afm_from_fname", None)
        if self._orig is None or read is None:
            self._mod = None
            return self

        def afm(fh):
            name = getattr(fh, "name", None)
            return read(name) if isinstance(name, str) else self._orig(fh)

        backend_pdf.AFM = afm
        return self

    def __exit__(self, *exc):
        if self._mod is not None:
            self._mod.AFM = self._orig
        return False


class _font_memo:
    """Remember matplotlib's font lookups while a report is drawn (its settings do not change then).

    matplotlib answers every lookup from its own cache, but only after rebuilding the key from
    eleven settings each time, and it searches anew for every font size; a page of ~400 texts
    makes ~1,400 lookups, which took a fifth of a one-spectrum report's drawing time.  The
    original lookup is restored on exit."""

    def __enter__(self):
        from matplotlib import font_manager as fm

        self._fm = fm
        self._module, self._manager = fm.findfont, fm.fontManager.__dict__.get("findfont")
        lookup = fm.fontManager.findfont
        memo: dict = {}
        # When every known font is scalable the size takes no part in the choice (matplotlib
        # scores a scalable font's size 0), so one lookup serves every size of a face.
        sizeless = all(f.size == "scalable" for f in (*fm.fontManager.ttflist, *fm.fontManager.afmlist))

        def findfont(prop, fontext="ttf", directory=None, fallback_to_default=True, rebuild_if_missing=True):
            fp = fm.FontProperties._from_any(prop)
            # FontProperties compare by their hash (as matplotlib's own lookup cache takes them),
            # which is cheaper than copying the properties on every lookup
            key = (hash(fp), fontext, directory, fallback_to_default, rebuild_if_missing)
            found = memo.get(key)
            if found is None:
                fp = fp.copy()  # a copy: a text may change its properties later
                if sizeless:
                    fp.set_size(10.0)
                found = memo[key] = lookup(fp, fontext, directory, fallback_to_default, rebuild_if_missing)
            return found

        fm.findfont = findfont
        fm.fontManager.findfont = findfont
        return self

    def __exit__(self, *exc):
        self._fm.findfont = self._module
        if self._manager is None:
            del self._fm.fontManager.findfont
        else:
            self._fm.fontManager.findfont = self._manager
        return False


class _quiet_font_lookup:
    """Silence matplotlib's notes that the core Helvetica has "medium" where "normal" was asked
    (the same weight); restored on exit."""

    def __enter__(self):
        import logging

        self._log = logging.getLogger("matplotlib.font_manager")
        self._level = self._log.level
        self._log.setLevel(logging.ERROR)
        return self

    def __exit__(self, *exc):
        self._log.setLevel(self._level)
        return False


def _write_png(analysis, records, meta, tmp: Path, *, comparison, diagram, regions) -> None:
    from .pages import summary_picture

    fig = summary_picture(
        analysis,
        records,
        meta,
        comparison=comparison,
        diagram=diagram,
        regions=regions,
        size_px=PNG_SIZE_PX,
        dpi=PNG_DPI,
    )
    fig.savefig(tmp, format="png", dpi=PNG_DPI, metadata={"Software": f"cctkit {meta['cctkit_version']}"})


def _title(kind: str, arg, records) -> str:
    if kind == "cover":
        return "sign-off and inputs"
    if kind == "sample":
        return f"spectrum: {records[arg]['name']}"
    if kind == "comparison":
        return "comparison"
    if kind == "uncertainty":
        return f"uncertainty: {records[arg]['name']}"
    if kind == "summary":
        return f"summary table {arg + 1}"
    return "chromaticity scatter"


def _write_pdf(
    analysis,
    records,
    meta,
    tmp: Path,
    *,
    paper,
    pages,
    comparison,
    diagram,
    regions,
    verdict=None,
    claims=None,
    sections=None,
    logo=None,
    uncertainty=None,
) -> list[str]:
    from matplotlib.backends.backend_pdf import PdfPages

    from . import pages as pg
    from .profile import SECTIONS

    sections = SECTIONS if sections is None else sections
    plan = plan_pages(len(records), pages=pages, sections=sections)
    if uncertainty is not None:  # each spectrum page is followed by its uncertainty page
        plan = [
            e
            for kind, arg in plan
            for e in ([(kind, arg), ("uncertainty", arg)] if kind == "sample" else [(kind, arg)])
        ]
    n_verdict = 0
    if verdict is not None and "verdict" in sections:
        from .verdict import verdict_page_count

        n_verdict = verdict_page_count(verdict)
    # More than one input file: a table of every one, with its size and SHA-256, as the last page(s)
    # (always, like the sign-off page: no profile can leave out what makes the report traceable).
    input_list = pg.input_rows(records, claims=claims, uncertainty=uncertainty)
    n_inputs = math.ceil(len(input_list) / pg.INPUT_ROWS_PER_PAGE) if len(input_list) > 1 else 0
    total = n_verdict + len(plan) + n_inputs
    labels = [f"page {k + 1} of {total}" for k in range(total)]
    labels_v = labels[1:]
    labels_in = labels[total - n_inputs :]
    contents = [f"{labels[0]}: {_title('cover', None, records)}"]
    contents += [
        f"{labels_v[k]}: claims verdict" + (" (overview)" if k == 0 else f" table {k}") for k in range(n_verdict)
    ]
    contents += [f"{labels[1 + n_verdict + k]}: {_title(kind, arg, records)}" for k, (kind, arg) in enumerate(plan[1:])]
    contents += [f"{labels_in[k]}: inputs, sizes and SHA-256" for k in range(n_inputs)]
    titles: list[str] = []
    n_summary = sum(1 for kind, _ in plan if kind == "summary")
    summary_figs = None
    info = {
        "Title": shorten_title(meta, records),
        "Creator": f"cctkit {meta['cctkit_version']}",
        "Subject": "CCT, Duv, chromaticity, photometry and colour rendering of measured spectra",
        **PDF_METADATA,
    }
    with PdfPages(tmp, metadata=info) as pdf:
        fig = pg.cover_page(
            records,
            meta,
            paper=paper,
            contents=contents,
            page_label=labels[0],
            logo=logo,
            inputs_page=labels_in[0] if n_inputs else "",
        )
        titles.append(_title("cover", None, records))
        save_pdf_page(pdf, fig)
        if n_verdict:
            from .verdict import verdict_pages

            for title, fig in verdict_pages(
                analysis, verdict, claims, meta, paper=paper, diagram=diagram, page_labels=labels_v[:n_verdict]
            ):
                titles.append(title)
                save_pdf_page(pdf, fig)
        body = labels_v[n_verdict : total - 1 - n_inputs]
        last_sample = None  # the previous spectrum page's figure, drawn over by the next one
        for k, (kind, arg) in enumerate(plan[1:]):
            common = {"paper": paper}
            if kind == "sample":
                ident = arg if len(records) <= BATCH_PAGE_LIMIT else None
                fig = pg.sample_page(
                    analysis,
                    arg,
                    records[arg],
                    meta,
                    comparison=comparison,
                    diagram=diagram,
                    regions=regions,
                    page_label=body[k],
                    identity=ident,
                    reuse=last_sample,
                    **common,
                )
                last_sample = fig
            elif kind == "comparison":
                fig = pg.comparison_page(
                    analysis,
                    list(arg),
                    records,
                    meta,
                    comparison=comparison,
                    diagram=diagram,
                    regions=regions,
                    page_label=body[k],
                    **common,
                )
            elif kind == "uncertainty":
                from .uncertainty import uncertainty_page

                fig = uncertainty_page(
                    uncertainty,
                    arg,
                    date=meta["date"],
                    version=meta["cctkit_version"],
                    page_label=body[k],
                    footer=pg.footer_line(meta, body[k], records[arg].get("sha256")),
                )
            elif kind == "summary":
                if summary_figs is None:
                    summary_figs = pg.summary_table_pages(
                        analysis, records, meta, page_labels=body[k : k + n_summary], **common
                    )
                fig = next(summary_figs)
            else:
                fig = pg.scatter_page(
                    analysis,
                    records,
                    meta,
                    comparison=comparison,
                    diagram=diagram,
                    regions=regions,
                    page_label=body[k],
                    **common,
                )
            titles.append(_title(kind, arg, records))
            save_pdf_page(pdf, fig)
        for fig in pg.inputs_pages(input_list, meta, paper=paper, page_labels=labels_in):
            titles.append("inputs")
            save_pdf_page(pdf, fig)
    return titles


def shorten_title(meta: dict[str, Any], records) -> str:
    """The PDF's document title: the report title, else what it covers."""
    if meta.get("title") and meta["title"] != "Spectral measurement report":
        return meta["title"]
    return f"cctkit report: {records[0]['name']}" if len(records) == 1 else f"cctkit report: {len(records)} spectra"
