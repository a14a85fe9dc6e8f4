"""Pages of a report: figures laid out in inches on A4 or Letter paper.

Each page function returns a :class:`matplotlib.figure.Figure` (no pyplot state).
Numbers on the pages are the analysis records (:meth:`cctkit.analysis.Analysis.records`)
formatted by :func:`format_value`; nothing is computed here.
"""

from __future__ import annotations

import textwrap
from collections.abc import Sequence
from typing import Any

import numpy as np

from . import charts
from .charts import GREY, INK, shorten

__all__ = [
    "PAPER_IN",
    "STANDARDS",
    "CAUTIONS",
    "HEADLINE_ROWS",
    "headline_rows",
    "format_value",
    "sample_page",
    "comparison_page",
    "summary_table_pages",
    "scatter_page",
    "summary_picture",
    "summary_cells",
    "headline_cells",
    "u_text",
    "cover_page",
    "footer_line",
    "APPROVAL_BOXES",
    "INPUT_ROWS_PER_PAGE",
    "input_rows",
    "inputs_pages",
    "SUMMARY_ROWS_PER_PAGE",
]

#: Paper sizes, portrait (width, height) [in].
PAPER_IN = {"a4": (8.27, 11.69), "letter": (8.5, 11.0)}

#: Standards and editions the numbers follow.
STANDARDS = (
    "CIE 15:2018 (colorimetry, CCT, Duv)",
    "CIE 13.3-1995 (Ra, R1\u2013R14)",
    "CIE 224:2017 (Rf)",
    "ANSI/IES TM-30-20 (Rg, hue bins)",
    "CIE S 026:2018 (alpha-opic)",
)

CAUTIONS = (
    "Results characterise the measured sample only, not a product type or production lot.",
    "Photobiological safety needs an IEC 62471 assessment; nothing here is such an assessment.",
    "Circadian (melanopic) metrics are not medical advice.",
    "Acceptance decisions follow the applicable codes and an accredited laboratory's calibration certificate.",
)

# (record key, label, unit, format).  The luminous-total row is chosen by quantity.
HEADLINE_ROWS: tuple[tuple[str, str, str, str], ...] = (
    ("cct_K", "CCT", "K", "{:.0f}"),
    ("duv", "Duv", "1", "{:+.4f}"),
    ("x", "x (CIE 1931)", "1", "{:.4f}"),
    ("y", "y (CIE 1931)", "1", "{:.4f}"),
    ("u", "u (CIE 1960)", "1", "{:.4f}"),
    ("v", "v (CIE 1960)", "1", "{:.4f}"),
    ("u_prime", "u' (CIE 1976)", "1", "{:.4f}"),
    ("v_prime", "v' (CIE 1976)", "1", "{:.4f}"),
    ("luminous_flux_lm", "Luminous flux", "lm", "{:.1f}"),
    ("illuminance_lx", "Illuminance", "lx", "{:.1f}"),
    ("luminance_cd_per_m2", "Luminance", "cd/m\u00b2", "{:.1f}"),
    ("intensity_cd", "Luminous intensity", "cd", "{:.1f}"),
    ("ler_lm_per_W", "LER", "lm/W", "{:.1f}"),
    ("sp_ratio", "S/P ratio", "1", "{:.3f}"),
    ("melanopic_der", "Melanopic DER (D65)", "1", "{:.3f}"),
    ("melanopic_edi_lx", "Melanopic EDI", "lx", "{:.1f}"),
    ("Ra", "Ra (CIE 13.3)", "1", "{:.1f}"),
    ("R9", "R9", "1", "{:.1f}"),
    ("Rf", "Rf (CIE 224 / TM-30)", "1", "{:.1f}"),
    ("Rg", "Rg (TM-30)", "1", "{:.1f}"),
)
_ROW = {r[0]: r for r in HEADLINE_ROWS}
_LUMINOUS_KEYS = ("luminous_flux_lm", "illuminance_lx", "luminance_cd_per_m2", "intensity_cd")
# Keys always shown (as "n/a" / "not computed" when absent); the others only where the quantity has them.
_ALWAYS = (
    "cct_K",
    "duv",
    "x",
    "y",
    "u",
    "v",
    "u_prime",
    "v_prime",
    "ler_lm_per_W",
    "sp_ratio",
    "melanopic_der",
    "Ra",
    "R9",
    "Rf",
    "Rg",
)

#: Rows of the batch summary table on one page.
SUMMARY_ROWS_PER_PAGE = 44


def _value(rec: dict[str, Any], key: str):
    if key == "R9":
        R = rec.get("R")
        if isinstance(R, (list, tuple)) and len(R) >= 9:
            return R[8]
        return rec.get("R9")
    return rec.get(key)


def format_value(rec: dict[str, Any], key: str) -> str:
    """The text a report prints for ``rec[key]``: the record value in the row's format.

    ``"n/a"`` where the record holds None (not meaningful, e.g. CCT at |Duv| > 0.05) and
    ``"not computed"`` where the key is absent.
    """
    if key not in rec and not (key == "R9" and "R" in rec):
        if key in _LUMINOUS_KEYS:  # a column of one luminous total, a spectrum of another quantity
            if rec.get("quantity") == "relative":
                return "rel."
            own = next((k for k in _LUMINOUS_KEYS if rec.get(k) is not None), None)
            if own is not None:  # short enough for a narrow column: 32.8 lx, 32.8k lx
                v = float(rec[own])
                unit = {"luminance_cd_per_m2": "cd/m\u00b2"}.get(own, _ROW[own][2])
                return f"{v / 1000:.1f}k {unit}" if abs(v) >= 1000 else f"{v:.1f} {unit}"
        return "not computed"
    v = _value(rec, key)
    if v is None:
        return "n/a"
    if isinstance(v, (int, float)) and not isinstance(v, bool):
        from ..formats import format_number

        return format_number(float(v), _ROW[key][3]) if key in _ROW else f"{v:g}"
    return str(v)


def headline_rows(rec: dict[str, Any]) -> list[tuple[str, str, str, str]]:
    """(label, value text, unit, flag note) for each headline of one record."""
    codes = {f["code"] for f in rec.get("flags", [])}
    out = []
    for key, label, unit, _ in HEADLINE_ROWS:
        if key not in _ALWAYS and key not in rec:
            continue
        note = ""
        if key == "cct_K" and "duv-out-of-range" in codes:
            note = "|Duv| > 0.05"
        elif key == "cct_K" and "cct-out-of-range" in codes:
            note = "outside locus"
        elif key == "duv" and "duv-out-of-range" in codes:
            note = "|Duv| > 0.05"
        elif key in ("Ra", "R9") and rec.get("cri_valid") is False:
            note = "CRI not valid"
        elif key in ("x", "y") and "range-short" in codes:
            note = "range short" if key == "x" else ""
        out.append((label, format_value(rec, key), "" if unit == "1" else unit, note))
    return out


# ---------------------------------------------------------------- layout helpers


class _Page:
    """A figure with a coordinate system in inches from the top-left corner of the paper.

    ``reuse``: the figure of an earlier page of the same layout, already written.  Its axes are
    emptied and handed out again, in order, wherever a page asks for axes at the same place
    (:meth:`axes`): a new Axes and its ticks cost about a third of a spectrum page's time, and
    a report's spectrum pages all have the same layout.  Call :meth:`finish` once the page is drawn.
    """

    MARGIN = 0.45

    def __init__(self, paper: str, landscape: bool = False, *, reuse=None):
        from matplotlib.figure import Figure

        w, h = PAPER_IN[paper]
        if landscape:
            w, h = h, w
        self.w, self.h = w, h
        self._spare: list = []
        if reuse is not None and tuple(reuse.get_size_inches()) == (w, h):
            self.fig = reuse
            for artist in [*reuse.texts, *reuse.artists, *reuse.lines, *reuse.patches, *reuse.images]:
                artist.remove()
            self._spare = list(reuse.axes)
        else:
            self.fig = Figure(figsize=(w, h))
        self.left = self.MARGIN
        self.right = w - self.MARGIN
        self.width = self.right - self.left

    def axes(self, x: float, y: float, w: float, h: float, **kw):
        """Axes whose plotting box spans x..x+w [in] from the left, y..y+h [in] from the top."""
        rect = (x / self.w, 1.0 - (y + h) / self.h, w / self.w, h / self.h)
        if self._spare:
            ax = self._spare.pop(0)
            if _reusable(ax, rect, kw):
                _empty(ax)
                return ax
            for old in [ax, *self._spare]:  # the layout differs from here on: new axes, in order
                self.fig.delaxes(old)
            self._spare = []
        return self.fig.add_axes(rect, **kw)

    def finish(self):
        """The figure, without the earlier page's axes this page did not ask for."""
        for old in self._spare:
            self.fig.delaxes(old)
        self._spare = []
        return self.fig

    def text(self, x: float, y: float, s: str, **kw):
        kw.setdefault("va", "top")
        return self.fig.text(x / self.w, 1.0 - y / self.h, s, **kw)

    def rule(self, y: float, lw: float = 0.6):
        from matplotlib.lines import Line2D

        self.fig.add_artist(
            Line2D(
                [self.left / self.w, self.right / self.w],
                [1 - y / self.h] * 2,
                transform=self.fig.transFigure,
                color=INK,
                lw=lw,
            )
        )


def _reusable(ax, rect, kw) -> bool:
    """Whether ``ax`` of an earlier page can serve as axes at ``rect`` (figure fraction) with ``kw``."""
    if set(kw) - {"sharex"} or getattr(ax, "_cctkit_placeholder", False):
        return False
    if not all(hasattr(ax, a) for a in ("_children", "_get_lines", "_get_patches_for_fill", "_left_title")):
        return False  # a matplotlib that keeps these elsewhere: new axes, only slower
    if kw.get("sharex") is not getattr(ax, "_sharex", False):
        return False
    old = ax.get_position(original=True).bounds
    return all(abs(a - b) < 1e-12 for a, b in zip(old, rect))


def _empty(ax) -> None:
    """Take everything a chart drew off ``ax``, keeping its axis objects and their ticks.

    What a chart sets on the axes itself (limits, ticks, aspect, axis on/off) it sets again on
    every page; the rest is put back as a new Axes has it: no titles or axis labels, no data
    limits, the property cycles restarted, the position as placed (a fixed aspect moved it).
    A chart that changes the frame (:func:`charts.not_computed`) marks the axes as not to be
    used again."""
    for artist in list(ax._children):
        artist.remove()
    if ax.legend_ is not None:
        ax.legend_.remove()
    ax.containers.clear()
    for text in (ax.title, ax._left_title, ax._right_title, ax.xaxis.label, ax.yaxis.label):
        text.set_text("")
    ax.ignore_existing_data_limits = True
    ax._get_lines = type(ax._get_lines)()
    ax._get_patches_for_fill = type(ax._get_patches_for_fill)("Polygon")
    ax._set_position(ax.get_position(original=True), which="active")


def _header(page: _Page, title: str, subtitle: str, page_label: str) -> float:
    page.text(page.left, page.MARGIN, shorten(title, 70), fontsize=11, weight="bold")
    page.text(page.right, page.MARGIN, page_label, fontsize=7, ha="right", color=GREY)
    page.text(page.left, page.MARGIN + 0.24, shorten(subtitle, 130), fontsize=6.5, color=GREY)
    page.rule(page.MARGIN + 0.42)
    return page.MARGIN + 0.5


def footer_line(meta: dict[str, Any], page_label: str = "", sha256: str | None = None) -> str:
    """The line every page ends with: input SHA-256, report date, software, page n of N."""
    sha = sha256 or meta.get("input_sha256") or ""
    what = (
        "input SHA-256"
        if sha256 or meta.get("input_count", 1) == 1
        else f"SHA-256 of the {meta.get('input_count')} inputs' digests"
    )
    parts = [
        f"{what} {sha}" if sha else "input not from a file",
        f"report date {meta['date']}",
        f"cctkit {meta['cctkit_version']}",
    ]
    if page_label:
        parts.append(page_label)
    return "  |  ".join(parts)


def _footer(page: _Page, meta: dict[str, Any], page_label: str = "", sha256: str | None = None) -> None:
    y0 = page.h - page.MARGIN - 0.62
    page.rule(y0, lw=0.4)
    page.text(page.left, y0 + 0.05, "Cautions", fontsize=6, weight="bold")
    for k, line in enumerate(CAUTIONS):
        page.text(page.left, y0 + 0.16 + 0.085 * k, f"- {line}", fontsize=5.2)
    page.text(
        page.left,
        page.h - page.MARGIN - 0.02,
        footer_line(meta, page_label, sha256),
        fontsize=5.2,
        color=GREY,
        va="bottom",
        family="monospace",
    )


_FOOTER_H = 0.62 + 0.1


def _kv_block(
    page: _Page,
    x: float,
    y: float,
    rows: Sequence[tuple[str, str]],
    *,
    label_w: float,
    pitch: float = 0.125,
    fontsize: float = 6.0,
    value_chars: int = 62,
    max_lines: int = 4,
) -> float:
    """Label/value lines; long values wrap (at most ``max_lines`` lines); returns the y below the block."""
    for label, value in rows:
        page.text(x, y, label, fontsize=fontsize, weight="bold")
        if label.startswith("SHA") and len(value) <= 64:  # a digest on one line, in a smaller monospace
            page.text(x + label_w, y, value, fontsize=min(fontsize, 5.0), family="monospace")
            y += pitch
            continue
        lines = textwrap.wrap(value, value_chars, break_long_words=True) or [""]
        if len(lines) > max_lines:
            lines = lines[: max_lines - 1] + [shorten(" ".join(lines[max_lines - 1 :]), value_chars)]
        for k, line in enumerate(lines):
            page.text(
                x + label_w,
                y + k * pitch,
                line,
                fontsize=fontsize,
                family="monospace" if label.startswith("SHA") else None,
            )
        y += pitch * len(lines)
    return y


def metadata_rows(rec: dict[str, Any]) -> list[tuple[str, str]]:
    """The file's own notes for the identity block: recognised keys by label, the rest on one line."""
    from ..readers.metadata import identity_rows

    meta = rec.get("metadata") or {}
    if not meta:
        return []
    shown, rest = identity_rows(meta)
    notes = [v if k.startswith("(text") else (k if not v else f"{k}: {v}") for k, v in rest]
    return shown + ([("File notes", "; ".join(notes))] if notes else [])


def provenance_rows(rec: dict[str, Any], meta: dict[str, Any]) -> list[tuple[str, str]]:
    """Identity and provenance lines of one spectrum (label, text); a value wraps to at most four lines."""
    conv = meta["conventions"]
    lo, hi = rec.get("measured_range_nm", [None, None])
    step = rec.get("measured_step_nm")
    measured = f"{lo:g}-{hi:g} nm, step {step:g} nm" if lo is not None else "unknown"
    sha = rec.get("sha256") or "(not from a file)"
    obs = rec.get("observer", 2)
    observer = "CIE 1931 2\u00b0" if obs == 2 else "CIE 1964 10\u00b0"
    from_file = metadata_rows(rec)
    rows = [
        ("Sample", rec["name"]),
        *from_file,
        ("Input file", shorten(rec.get("source") or "(not from a file)", 110, keep="tail")),
        ("SHA-256", sha),
        ("Quantity", f"{rec['quantity']} [{rec.get('spectral_unit', '')}]"),
        ("Measured", measured),
    ]
    inst = instrument_text(rec)
    if inst and not from_file:
        rows.append(("Instrument", inst + " (from the file)"))
    rows += [
        ("Observer", f"{observer} for chromaticity and CCT; rendering metrics use their standard's observer"),
        (
            "Interpolation",
            f"{rec.get('interpolation') or conv.get('interpolation_method', 'auto')} (used for this "
            f"spectrum); extrapolation: {conv['extrapolation']}",
        ),
        ("Constants", f"c2 = {conv['c2_m_K']:.4e} m\u00b7K; Km = {conv['Km_lm_per_W']} lm/W; {conv['summation']}"),
        ("CCT method", conv["cct_method"]),
        ("Standards", "; ".join(STANDARDS + ((meta["tolerance_edition"],) if meta.get("tolerance_edition") else ()))),
        (
            "Software",
            f"cctkit {meta['cctkit_version']}; tables from colour-science "
            f"{meta.get('colour_science_version') or 'n/a'}",
        ),
    ]
    return rows


_INSTRUMENT_KEYS = (
    "instrument",
    "model",
    "manufacturer",
    "serial",
    "serial_number",
    "integration_time",
    "integration_time_ms",
    "calibration",
    "calibration_date",
    "operator",
    "measured_at",
    "date",
)


def instrument_text(rec: dict[str, Any]) -> str:
    """The instrument metadata a reader found in the spectrum's file, as one line ("" when none)."""
    md = rec.get("metadata")
    if not isinstance(md, dict) or not md:
        return ""
    keys = [k for k in _INSTRUMENT_KEYS if md.get(k) not in (None, "")]
    keys += [
        k for k in sorted(md) if k not in keys and isinstance(md[k], (str, int, float)) and not isinstance(md[k], bool)
    ][: max(0, 6 - len(keys))]
    return "; ".join(f"{k.replace('_', ' ')} {md[k]}" for k in keys[:8])


def _flags_block(page: _Page, x: float, y: float, rec: dict[str, Any], *, max_lines: int = 4) -> float:
    flags = rec.get("flags", [])
    if not flags:
        page.text(x, y, "Flags: none raised", fontsize=6.3)
        return y + 0.13
    page.text(x, y, f"Flags ({len(flags)})", fontsize=6.3, weight="bold")
    y += 0.13
    shown = flags if len(flags) <= max_lines else flags[: max_lines - 1]
    for f in shown:
        page.text(x, y, shorten(f"! [{f['code']}] {f['message']}", 150), fontsize=5.8)
        y += 0.11
    if len(shown) < len(flags):
        page.text(x, y, f"... and {len(flags) - len(shown)} more (see the JSON record)", fontsize=5.8)
        y += 0.11
    return y


def ansi_bin(analysis, i: int) -> str:
    """The ANSI C78.377 quadrangle holding spectrum ``i`` ("none" outside all of them)."""
    from ..tolerance import classify_ansi

    name = classify_ansi(np.asarray(analysis.uv[i]), space="uv")
    name = name.item() if hasattr(name, "item") else name
    return str(name or "none")


_LUMINOUS_LABEL = {
    "luminous_flux_lm": "Luminous flux",
    "illuminance_lx": "Illuminance",
    "luminance_cd_per_m2": "Luminance",
    "intensity_cd": "Luminous intensity",
}


def u_text(U: float | None, unit: str = "") -> str:
    """An expanded uncertainty as the strip prints it: two significant digits and the unit ("" when unknown)."""
    import math

    if U is None or not math.isfinite(U):
        return ""
    from ..uncertainty import decimals_for

    text = f"{U:.{decimals_for(U, 2)}f}"
    return f"{text} {unit}" if unit else text


def headline_cells(
    rec: dict[str, Any], *, ansi: str = "", intents: Sequence[str] = (), U: dict[str, float] | None = None
) -> list[tuple[str, str, str, str]]:
    """The headline strip of a spectrum page: (label, value, detail, U) per cell, from the record.

    ``U`` maps record keys to expanded uncertainties (k = 2) of this spectrum
    (:class:`cctkit.uncertainty.Estimate.U`); a cell with a number that has one gets
    "U (k=2) ..." in the same units and order as its value(s), else "".
    """

    def v(key):
        return format_value(rec, key)

    unc = U or {}

    def us(*keys_units: tuple[str, str]) -> str:
        parts = [u_text(unc.get(k), unit) for k, unit in keys_units]
        if not any(parts):
            return ""
        return "U (k=2) " + " / ".join(p or "n/a" for p in parts)

    cct = v("cct_K")
    cct_text = f"{cct} K" if cct not in ("n/a", "not computed") else "CCT n/a"
    duv_note = " (|Duv| > 0.05)" if rec.get("cct_K") is None and rec.get("duv") is not None else ""
    cct_u = us(("cct_K", "K"))
    if cct_u and u_text(unc.get("duv")):
        cct_u += f"; Duv {u_text(unc.get('duv'))}"
    cells = [("CCT", cct_text, f"Duv {v('duv')}{duv_note}; ANSI {ansi or 'n/a'}", cct_u)]
    ra_note = "CRI not valid" if rec.get("cri_valid") is False else "CIE 13.3-1995"
    cells.append(("Ra / R9", f"{v('Ra')} / {v('R9')}", ra_note, us(("Ra", ""), ("R9", ""))))
    cells.append(("Rf / Rg", f"{v('Rf')} / {v('Rg')}", "ANSI/IES TM-30-20", us(("Rf", ""), ("Rg", ""))))
    lum = next((k for k in _LUMINOUS_KEYS if k in rec), None)
    if lum is not None:
        unit = _ROW[lum][2]
        cells.append((_LUMINOUS_LABEL[lum], f"{v(lum)} {unit}", rec["quantity"], us((lum, unit))))
    else:
        cells.append(("Luminous total", "relative", "no absolute scale in the data", ""))
    cells.append(
        (
            "Efficacy of radiation",
            f"{v('ler_lm_per_W')} lm/W",
            "LER; lamp efficacy needs power",
            us(("ler_lm_per_W", "lm/W")),
        )
    )
    cells.append(("Melanopic DER", v("melanopic_der"), "CIE S 026, D65 = 1", us(("melanopic_der", ""))))
    cells.append(
        ("TM-30 design intent", " ".join(intents) if intents else "none met", "Annex E levels (1 strictest)", "")
    )
    return cells


def _numbers_grid(page: _Page, y: float, rows, *, ncol: int = 3, pitch: float = 0.108) -> float:
    """(label, value, unit, note) rows in ``ncol`` columns, filled column by column; returns the y below."""
    per = -(-len(rows) // ncol)
    w = page.width / ncol
    for k, (label, value, unit, note) in enumerate(rows):
        x = page.left + (k // per) * w
        yy = y + (k % per) * pitch
        page.text(x, yy, label, fontsize=5.8)
        page.text(x + 1.45, yy, value, fontsize=5.8, ha="right", weight="bold")
        page.text(x + 1.5, yy, unit, fontsize=5.8)
        if note:
            page.text(x + 1.5 + (0.3 if unit else 0.0), yy, f"! {note}", fontsize=5.4, weight="bold")
    return y + per * pitch


def _strip(page: _Page, y: float, cells: Sequence[tuple[str, str, str, str]]) -> float:
    from matplotlib.patches import Rectangle

    with_u = any(c[3] for c in cells)
    h = 0.74 if with_u else 0.62
    below = 0.12 if with_u else 0.0  # the detail lines move down under the U line
    w = page.width / len(cells)
    for k, (label, value, detail, unc) in enumerate(cells):
        x = page.left + k * w
        page.fig.add_artist(
            Rectangle(
                (x / page.w, 1 - (y + h) / page.h),
                (w - 0.05) / page.w,
                h / page.h,
                transform=page.fig.transFigure,
                fc="#f0f0f0" if k % 2 == 0 else "white",
                ec="#9a9a9a",
                lw=0.5,
            )
        )
        chars = int((w - 0.12) / 0.042)
        page.text(x + 0.06, y + 0.06, shorten(label, chars), fontsize=5.8, color=GREY)
        size = 10.5 if len(value) <= int((w - 0.1) / 0.085) else 8.0
        page.text(
            x + 0.06,
            y + 0.2,
            shorten(value, int((w - 0.1) / (0.085 if size > 9 else 0.065))),
            fontsize=size,
            weight="bold",
        )
        if unc:
            page.text(x + 0.06, y + 0.4, shorten(unc, int((w - 0.1) / 0.034)), fontsize=5.0, weight="bold")
        lines = textwrap.wrap(detail, chars)[:2]
        for j, line in enumerate(lines):
            page.text(x + 0.06, y + 0.42 + below + 0.085 * j, line, fontsize=5.0, color=INK)
    return y + h


# ---------------------------------------------------------------- pages


def sample_page(
    analysis,
    i: int,
    rec: dict[str, Any],
    meta: dict[str, Any],
    *,
    paper: str,
    comparison,
    diagram: str,
    regions,
    page_label: str,
    identity: int | None = None,
    reuse=None,
):
    """One page for spectrum ``i``: the headline strip and the spectrum against its reference first,
    then the rendering detail (hue wheel, CIE 13.3 bars, chromaticity), then identity and provenance.

    ``reuse``: the figure of the previous spectrum page, once it is written; it is drawn over
    (its axes emptied and used again), which is quicker than a new figure."""
    p = _Page(paper, reuse=reuse)
    sub = " | ".join(t for t in (meta.get("title"), meta.get("project"), meta.get("lab")) if t)
    y = _header(p, f"{rec['name']}", sub or (rec.get("source") or ""), page_label)
    intents = (meta.get("design_intents") or {}).get(i, ())
    U = (meta.get("uncertainty_U") or {}).get(i)
    y = _strip(p, y, headline_cells(rec, ansi=ansi_bin(analysis, i), intents=intents, U=U)) + 0.12

    gx = p.left + 0.45
    full = p.right - gx
    # Spectrum and reference, difference below; legends sit above each plot.
    p.text(p.left, y, "Spectrum against its reference at the same CCT (equal Y)", fontsize=7.5, weight="bold")
    spec_top = y + 0.36
    spec_h = 1.0
    ax = p.axes(gx, spec_top, full, spec_h)
    charts.spectrum_chart(analysis, ax, index=i, comparison=comparison)
    ax.set_xlabel("")
    ax.tick_params(labelbottom=False)
    ax2 = p.axes(gx, spec_top + spec_h + 0.18, full, 0.42, sharex=ax)
    charts.difference_chart(analysis, ax2, index=i, comparison=comparison)
    y = spec_top + spec_h + 0.18 + 0.42 + 0.36

    # Rendering detail: the hue wheel (left), CIE 13.3 bars and chromaticity (right).
    p.text(p.left, y, "Colour rendering and chromaticity", fontsize=7.5, weight="bold")
    y += 0.16
    side = 2.85
    axw = p.axes(p.left, y + 0.05, side, side)
    charts.hue_wheel_chart(analysis, axw, index=i, identity=identity)
    key = (
        "Hue wheel (TM-30-20): the colour vector graphic in the middle (dashed: reference; arrows: reference "
        "to test per hue bin); around it per bin, inner ring Rcs,h [%] (hatched: less chroma), middle ring "
        "Rf,h (darker: lower fidelity), outer ring Rhs,h [1]; bin numbers outside."
    )
    for j, line in enumerate(textwrap.wrap(key, 88)):
        p.text(p.left, y + side + 0.1 + 0.085 * j, line, fontsize=5.0, color=INK)
    rx = p.left + side + 0.75
    rw = p.right - rx
    ax = p.axes(rx, y + 0.3, rw, 0.95)
    charts.cri_chart(analysis, ax, index=i)
    p.text(rx - 0.4, y, "CIE 13.3-1995 Ra and R1-R14", fontsize=6.5, weight="bold")
    cy = y + 0.3 + 0.95 + 0.3
    p.text(rx - 0.4, cy, "Chromaticity", fontsize=6.5, weight="bold")
    c_top = cy + 0.45
    cside = min(rw, y + side + 0.55 - c_top)
    axc = p.axes(rx + (rw - cside) / 2.0, c_top, cside, cside)
    charts.chromaticity_chart(analysis, axc, indices=[i], diagram=diagram, regions=regions)
    y = c_top + cside + 0.45

    # Every headline number with its unit and flag note, three columns.
    p.text(p.left, y - 0.17, "All numbers", fontsize=6.5, weight="bold")
    y = _numbers_grid(p, y, headline_rows(rec)) + 0.12
    # Identity and provenance, two columns, then flags.
    rows = provenance_rows(rec, meta)
    half = (len(rows) + 1) // 2
    yl = _kv_block(p, p.left, y, rows[:half], label_w=0.68, value_chars=62, pitch=0.105, fontsize=5.6, max_lines=2)
    yr = _kv_block(
        p,
        p.left + p.width / 2 + 0.1,
        y,
        rows[half:],
        label_w=0.68,
        value_chars=62,
        pitch=0.105,
        fontsize=5.6,
        max_lines=3,
    )
    y = max(yl, yr) + 0.04
    bottom = p.h - p.MARGIN - _FOOTER_H
    room = int((bottom - y - 0.13) / 0.11)  # flag lines that fit above the footer
    if room >= 1:
        _flags_block(p, p.left, y, rec, max_lines=min(2, room))
    elif bottom - y >= 0.1:
        p.text(p.left, y, f"Flags ({len(rec.get('flags', []))}): see the JSON record", fontsize=5.8)
    _footer(p, meta, page_label, rec.get("sha256"))
    return p.finish()


def cover_page(
    records,
    meta: dict[str, Any],
    *,
    paper: str,
    contents: Sequence[str],
    page_label: str,
    logo=None,
    inputs_page: str = "",
):
    """The sign-off page: title, sign-off fields, inputs with their SHA-256, contents and the approval block."""
    p = _Page(paper)
    title = meta.get("title") or "Spectral measurement report"
    sub = " | ".join(t for t in (meta.get("project"), meta.get("lab")) if t)
    y = _header(p, title, sub or f"{len(records)} spectr{'um' if len(records) == 1 else 'a'}", page_label)
    if logo is not None:
        h_img, w_img = logo.shape[0], logo.shape[1]
        lw = min(1.4, 0.7 * w_img / max(h_img, 1))
        lh = lw * h_img / max(w_img, 1)
        ax = p.axes(p.right - lw, y + 0.05, lw, lh)
        ax.imshow(logo, interpolation="nearest")
        ax.set_axis_off()
    fields = [
        ("Project", meta.get("project") or "(not given)"),
        ("Laboratory", meta.get("lab") or "(not given)"),
        ("Operator", meta.get("operator") or "(not given)"),
        ("Instrument", meta.get("instrument") or "(not given)"),
    ]
    from_files = sorted({instrument_text(r) for r in records} - {""})
    if from_files:
        fields.append(("From the files", "; ".join(from_files)))
    fields += [("Report date", meta["date"]), ("Notes", meta.get("notes") or "(none)")]
    p.text(p.left, y + 0.05, "Sign-off fields", fontsize=7.5, weight="bold")
    y = (
        _kv_block(p, p.left, y + 0.25, fields, label_w=1.0, value_chars=95, pitch=0.14, fontsize=7.0, max_lines=4)
        + 0.15
    )

    p.text(p.left, y, f"Inputs ({len(records)} spectra)", fontsize=7.5, weight="bold")
    y += 0.2
    p.text(p.left, y, "#", fontsize=6, weight="bold")
    p.text(p.left + 0.3, y, "Spectrum", fontsize=6, weight="bold")
    p.text(p.left + 2.2, y, "File", fontsize=6, weight="bold")
    p.text(p.left + 4.15, y, "SHA-256 of the file", fontsize=6, weight="bold")
    y += 0.14
    shown = records if len(records) <= 24 else records[:20]
    for k, r in enumerate(shown):
        p.text(p.left, y, str(k + 1), fontsize=5.8)
        p.text(p.left + 0.3, y, shorten(r["name"], 38), fontsize=5.8)
        p.text(p.left + 2.2, y, shorten(r.get("source") or "(not from a file)", 40, keep="tail"), fontsize=5.8)
        p.text(p.left + 4.15, y, r.get("sha256") or "-", fontsize=5.0, family="monospace")
        y += 0.12
    if len(shown) < len(records):
        where = f"listed with its size on {inputs_page}" if inputs_page else "in the JSON output"
        p.text(p.left, y, f"... and {len(records) - len(shown)} more: every file and SHA-256 is {where}", fontsize=5.8)
        y += 0.12
    elif inputs_page:
        p.text(p.left, y, f"Every input file with its size and SHA-256: {inputs_page}", fontsize=5.8)
        y += 0.12
    y += 0.15
    p.text(p.left, y, "Contents", fontsize=7.5, weight="bold")
    y += 0.2
    listed = list(contents) if len(contents) <= 18 else list(contents[:17]) + [f"... {len(contents) - 17} more pages"]
    col = (len(listed) + 1) // 2
    for k, line in enumerate(listed):
        x = p.left if k < col else p.left + p.width / 2
        p.text(x, y + 0.12 * (k % col), shorten(line, 70), fontsize=6.2)
    y += 0.12 * col + 0.15
    p.text(p.left, y, "Standards and conventions", fontsize=7.5, weight="bold")
    y += 0.2
    conv = meta["conventions"]
    y = _kv_block(
        p,
        p.left,
        y,
        [
            (
                "Standards",
                "; ".join(STANDARDS + ((meta["tolerance_edition"],) if meta.get("tolerance_edition") else ())),
            ),
            (
                "Conventions",
                f"{conv['summation']}; c2 = {conv['c2_m_K']:.4e} m\u00b7K; CCT: {conv['cct_method']}; "
                f"interpolation: {conv.get('interpolation_method', 'auto')}",
            ),
            (
                "Software",
                f"cctkit {meta['cctkit_version']}; tables from colour-science "
                f"{meta.get('colour_science_version') or 'n/a'}",
            ),
        ],
        label_w=1.0,
        value_chars=110,
        pitch=0.12,
        fontsize=6.0,
        max_lines=3,
    )
    _approval_block(p, p.h - p.MARGIN - _FOOTER_H - 1.45, meta)
    _footer(p, meta, page_label)
    return p.fig


#: Rows of the inputs table on one page.
INPUT_ROWS_PER_PAGE = 64


def input_rows(records, *, claims=None, uncertainty=None) -> list[dict[str, Any]]:
    """Every input file of a report, once each, in reading order: ``file``, ``role``, ``sha256`` (of
    the bytes that were read and analysed, as recorded by the readers), ``size_bytes``.

    The size is that of the file now, given only where its bytes still have the recorded SHA-256
    (so it is the size of the bytes analysed); otherwise ``size_bytes`` is None and ``note`` says why.
    """
    import os

    from ..spectra import sha256_of_file

    rows: list[dict[str, Any]] = []
    seen: dict[tuple[str, str], dict[str, Any]] = {}
    for r in records:
        key = (_file_of(r), r.get("sha256") or "")
        if not key[0]:
            continue
        if key in seen:
            seen[key]["names"].append(r["name"])
            continue
        seen[key] = {"file": key[0], "sha256": key[1], "names": [r["name"]], "role": "spectra"}
        rows.append(seen[key])
    for row in rows:
        n = len(row.pop("names"))
        row["role"] = f"{n} spectr{'um' if n == 1 else 'a'}"
    if claims is not None:
        rows.append({"file": claims.source, "sha256": claims.sha256 or "", "role": "claims"})
        if claims.sidecar_path:
            rows.append({"file": claims.sidecar_path, "sha256": claims.sidecar_sha256 or "", "role": "claims sidecar"})
    if uncertainty is not None:
        rows.append({"file": uncertainty.model.source, "sha256": uncertainty.model.sha256, "role": "uncertainty model"})
    for row in rows:
        row["size_bytes"], row["note"] = None, ""
        try:
            now = sha256_of_file(row["file"])
        except OSError:
            row["note"] = "not found now"
            continue
        if row["sha256"] and now != row["sha256"]:
            row["note"] = "changed since it was read"
        else:
            row["size_bytes"] = os.stat(row["file"]).st_size
    return rows


def _file_of(rec: dict[str, Any]) -> str:
    """The file a record was read from: its ``source`` without the "#name" that marks one spectrum of several."""
    import os

    src = rec.get("source") or ""
    mark = f"#{rec.get('name')}"
    if src.endswith(mark) and len(src) > len(mark):
        return src[: -len(mark)]
    if "#" in src and not os.path.exists(src) and os.path.exists(src.rsplit("#", 1)[0]):
        return src.rsplit("#", 1)[0]
    return src


def inputs_pages(rows: Sequence[dict[str, Any]], meta: dict[str, Any], *, paper: str, page_labels: Sequence[str]):
    """The inputs table, :data:`INPUT_ROWS_PER_PAGE` rows a page: file, role, size and SHA-256 of every input."""
    for k, label in enumerate(page_labels):
        p = _Page(paper)
        part = rows[k * INPUT_ROWS_PER_PAGE : (k + 1) * INPUT_ROWS_PER_PAGE]
        cont = f" (continued, {k + 1} of {len(page_labels)})" if len(page_labels) > 1 else ""
        y = _header(
            p,
            f"Inputs{cont}",
            f"{len(rows)} files: each with the size and the SHA-256 of the bytes that were read and analysed",
            label,
        )
        cols = ((0.0, "#"), (0.3, "File"), (3.05, "Holds"), (3.85, "Size [bytes]"), (4.75, "SHA-256"))
        for x, head in cols:
            p.text(p.left + x, y, head, fontsize=6.2, weight="bold")
        y += 0.16
        for j, row in enumerate(part):
            n = k * INPUT_ROWS_PER_PAGE + j + 1
            size = f"{row['size_bytes']:,}" if row["size_bytes"] is not None else row["note"]
            p.text(p.left, y, str(n), fontsize=5.8)
            p.text(p.left + 0.3, y, shorten(row["file"], 62, keep="tail"), fontsize=5.8)
            p.text(p.left + 3.05, y, row["role"], fontsize=5.8)
            p.text(p.left + 4.55, y, size, fontsize=5.8, ha="right")
            p.text(p.left + 4.75, y, row["sha256"] or "-", fontsize=5.0, family="monospace")
            y += 0.125
        _footer(p, meta, label)
        yield p.fig


#: The approval block's boxes: heading and the name printed in it (from the sign-off fields).
APPROVAL_BOXES = (("Prepared by", "operator"), ("Checked by", None), ("Approved for release", None))


def _approval_block(p: _Page, y: float, meta: dict[str, Any]) -> None:
    from matplotlib.patches import Rectangle

    p.text(p.left, y, "Approval", fontsize=7.5, weight="bold")
    y += 0.2
    w = (p.width - 0.2) / len(APPROVAL_BOXES)
    h = 1.1
    for k, (head, key) in enumerate(APPROVAL_BOXES):
        x = p.left + k * (w + 0.1)
        p.fig.add_artist(
            Rectangle(
                (x / p.w, 1 - (y + h) / p.h), w / p.w, h / p.h, transform=p.fig.transFigure, fc="white", ec=INK, lw=0.7
            )
        )
        p.text(x + 0.08, y + 0.08, head, fontsize=7, weight="bold")
        name = meta.get(key) if key else ""
        for j, (label, value) in enumerate((("Name", name or ""), ("Signature", ""), ("Date", ""))):
            ly = y + 0.42 + 0.25 * j
            p.text(x + 0.08, ly - 0.1, label, fontsize=6, color=GREY)
            p.fig.add_artist(_line(p, x + 0.65, x + w - 0.1, ly + 0.02))
            if value:
                p.text(x + 0.7, ly - 0.12, shorten(value, int((w - 0.8) / 0.05)), fontsize=6.5)


def _line(p: _Page, x0: float, x1: float, y: float):
    from matplotlib.lines import Line2D

    return Line2D([x0 / p.w, x1 / p.w], [1 - y / p.h] * 2, transform=p.fig.transFigure, color=INK, lw=0.5)


_COMPARE_KEYS = (
    "cct_K",
    "duv",
    "x",
    "y",
    "u_prime",
    "v_prime",
    "luminous",
    "ler_lm_per_W",
    "sp_ratio",
    "melanopic_der",
    "Ra",
    "R9",
    "Rf",
    "Rg",
)


def _luminous_key(records) -> str | None:
    for k in _LUMINOUS_KEYS:
        if any(k in r for r in records):
            return k
    return None


def _identity_key(p: _Page, x: float, y: float, k: int) -> None:
    """A small swatch of identity ``k``: its hatch and colour, with its marker on top."""
    from matplotlib.lines import Line2D
    from matplotlib.patches import Rectangle

    st = charts.series_style(k)
    p.fig.add_artist(
        Rectangle(
            ((x - 0.06) / p.w, 1 - (y + 0.05) / p.h),
            0.12 / p.w,
            0.1 / p.h,
            transform=p.fig.transFigure,
            fc="white",
            ec=st["color"],
            lw=0.6,
            hatch=st["hatch"] or None,
        )
    )
    p.fig.add_artist(
        Line2D(
            [x / p.w],
            [1 - y / p.h],
            transform=p.fig.transFigure,
            linestyle="none",
            marker=st["marker"],
            markersize=3.5,
            mfc=st["mfc"],
            mec=st["color"],
            mew=0.8,
        )
    )


def comparison_page(
    analysis, indices: Sequence[int], records, meta, *, paper: str, comparison, diagram: str, regions, page_label: str
):
    """Candidates side by side: headline table, overlaid chromaticity and overlaid spectra."""
    p = _Page(paper)
    y = _header(
        p,
        f"Comparison of {len(indices)} spectra",
        f"quantity {records[indices[0]]['quantity']}; report date {meta['date']}",
        page_label,
    )
    lum = _luminous_key(records)
    keys = [k for k in _COMPARE_KEYS if k != "luminous" or lum]
    keys = [(lum or k) if k == "luminous" else k for k in keys]  # lum is set where "luminous" is kept
    label_w = 1.45
    n = len(indices)
    col_w = (p.width - label_w) / n
    chars = max(6, int(col_w / 0.047))
    pitch = 0.15
    # Column heads: number and a two-line short name.
    for k, i in enumerate(indices):
        x = p.left + label_w + (k + 0.5) * col_w
        st = charts.series_style(k)
        p.text(x, y, f"#{k + 1}", fontsize=7, weight="bold", ha="center", color=st["color"])
        _identity_key(p, x - 0.22, y + 0.06, k)
        name = records[i]["name"]
        lines = textwrap.wrap(name, chars, break_long_words=True) or [""]
        if len(lines) > 2:
            lines = [lines[0], shorten(" ".join(lines[1:]), chars)]
        for j, line in enumerate(lines):
            p.text(x, y + 0.14 + 0.1 * j, line, fontsize=5.5, ha="center")
    y += 0.4
    p.rule(y, lw=0.3)
    y += 0.05
    for key in keys:
        label, unit = _ROW[key][1], _ROW[key][2]
        p.text(p.left, y, f"{label}" + (f" [{unit}]" if unit != "1" else ""), fontsize=6.3)
        for k, i in enumerate(indices):
            x = p.left + label_w + (k + 0.5) * col_w
            p.text(x, y, format_value(records[i], key), fontsize=6.3 if n <= 8 else 5.6, ha="center")
        y += pitch
    p.text(p.left, y, "Flags", fontsize=6.3)
    for k, i in enumerate(indices):
        codes = [f["code"] for f in records[i].get("flags", [])]
        x = p.left + label_w + (k + 0.5) * col_w
        p.text(x, y, str(len(codes)) if codes else "\u2013", fontsize=6.3, ha="center")
    y += pitch
    p.rule(y, lw=0.3)
    y += 0.08
    # Key: number -> full name and file.
    for k, i in enumerate(indices):
        r = records[i]
        flag_text = ", ".join(f["code"] for f in r.get("flags", []))
        _identity_key(p, p.left + 0.05, y + 0.04, k)
        p.text(
            p.left + 0.15,
            y,
            shorten(
                f"#{k + 1}  {r['name']}  -  {r.get('source') or 'no file'}"
                + (f"  -  flags: {flag_text}" if flag_text else ""),
                150,
            ),
            fontsize=5.6,
            color=charts.series_style(k)["color"],
        )
        y += 0.1
    y += 0.3 + 0.12 * (-(-n // 6))  # room for the legend rows above the spectra
    bottom = p.h - p.MARGIN - _FOOTER_H
    avail = bottom - y
    side = min(p.width / 2.0 - 0.55, avail * 0.6 - 0.7)
    ax = p.axes(p.left + 0.5, y + 0.15, side, side)
    charts.chromaticity_chart(analysis, ax, indices=indices, diagram=diagram, regions=regions)  # numbered
    ax = p.axes(p.left + p.width / 2.0 + 0.5, y + 0.15, p.width / 2.0 - 0.5, side)
    charts.spectra_overlay_chart(
        analysis, ax, indices=indices, comparison=comparison, labels=[f"#{k + 1}" for k in range(n)]
    )
    p.text(
        p.left + p.width / 2.0 + 0.1,
        y - 0.12 - 0.12 * (-(-n // 6)),
        "Spectra, each scaled to Y = 100",
        fontsize=7,
        weight="bold",
    )
    y_bars = y + 0.15 + side + 0.85
    if bottom - y_bars > 1.0:
        ax = p.axes(p.left + 0.5, y_bars, p.width - 0.5, bottom - y_bars - 0.35)
        charts.index_comparison_chart(analysis, ax, indices=indices)
        p.text(
            p.left,
            y_bars - 0.42,
            "Colour rendering indices by spectrum (bars in the order #1, #2, ... within each index)",
            fontsize=7,
            weight="bold",
        )
    _footer(p, meta, page_label)
    return p.fig


_SUMMARY_COLS = (
    ("#", None, 0.3),
    ("Name", "name", 1.4),
    ("CCT [K]", "cct_K", 0.5),
    ("Duv", "duv", 0.5),
    ("x", "x", 0.45),
    ("y", "y", 0.45),
    ("lum", "luminous", 0.65),
    ("LER [lm/W]", "ler_lm_per_W", 0.55),
    ("Ra", "Ra", 0.35),
    ("R9", "R9", 0.35),
    ("Rf", "Rf", 0.35),
    ("Rg", "Rg", 0.35),
    ("Flags", "flags", 0.0),
)


def summary_table_pages(analysis, records, meta, *, paper: str, page_labels: Sequence[str]):
    """The batch as a table, :data:`SUMMARY_ROWS_PER_PAGE` spectra per page; yields figures."""
    lum = _luminous_key(records)
    n = len(records)
    for page_no, start in enumerate(range(0, n, SUMMARY_ROWS_PER_PAGE)):
        p = _Page(paper)
        stop = min(n, start + SUMMARY_ROWS_PER_PAGE)
        y = _header(
            p,
            f"Batch summary: {n} spectra",
            f"spectra {start + 1}\u2013{stop} of {n}; quantity {records[0]['quantity']}",
            page_labels[page_no],
        )
        widths = [w for _, _, w in _SUMMARY_COLS]
        widths[-1] = p.width - sum(widths[:-1])
        xs = np.concatenate([[p.left], p.left + np.cumsum(widths[:-1])])
        for (head, key, _), x, _w in zip(_SUMMARY_COLS, xs, widths):
            if key == "luminous":
                head = f"{_ROW[lum][1]} [{_ROW[lum][2]}]" if lum else "Luminous"
                head = shorten(head.replace("Luminous ", "").replace("Illuminance", "E"), 14)
            p.text(x, y, head, fontsize=6, weight="bold")
        y += 0.16
        p.rule(y - 0.03, lw=0.3)
        pitch = 0.19
        for i in range(start, stop):
            r = records[i]
            for (_head, key, _), x, w in zip(_SUMMARY_COLS, xs, widths):
                if key is None:
                    text = str(i + 1)
                elif key == "name":
                    text = shorten(r["name"], int(w / 0.05))
                elif key == "flags":
                    text = shorten(", ".join(f["code"] for f in r.get("flags", [])) or "\u2013", int(w / 0.047))
                elif key == "luminous":
                    text = format_value(r, lum) if lum else "\u2013"
                else:
                    text = format_value(r, key)
                p.text(x, y, text, fontsize=5.8)
            y += pitch
            if (i - start) % 5 == 4:
                p.rule(y - 0.06, lw=0.15)
        _footer(p, meta, page_labels[page_no])
        yield p.fig


def scatter_page(analysis, records, meta, *, paper: str, comparison, diagram: str, regions, page_label: str):
    """The whole batch in one chromaticity scatter, and all spectra overlaid."""
    p = _Page(paper)
    n = len(records)
    y = _header(
        p,
        f"Batch chromaticity: {n} spectra",
        "points numbered as in the summary table"
        if n <= 12
        else "one point per spectrum; numbers and names in the summary table",
        page_label,
    )
    bottom = p.h - p.MARGIN - _FOOTER_H
    side = min(p.width - 0.6, (bottom - y) * 0.62)
    ax = p.axes(p.left + 0.55 + (p.width - 0.6 - side) / 2.0, y + 0.2, side, side)
    charts.chromaticity_chart(analysis, ax, diagram=diagram, regions=regions)
    y2 = y + side + 1.0  # below the chart's tick labels and axis label: the title, then the spectra
    ax = p.axes(p.left + 0.55, y2, p.width - 0.6, bottom - y2 - 0.45)
    charts.spectra_overlay_chart(analysis, ax, comparison=comparison, legend=n <= 12)
    p.text(p.left, y2 - 0.38, "Spectra, each scaled to Y = 100", fontsize=7, weight="bold")
    _footer(p, meta, page_label)
    return p.fig


def summary_cells(records) -> tuple[list[str], list[list[str]]]:
    """The comparison table of the PNG summary: header and one row of cell texts per spectrum.

    Columns: #, name, CCT, Duv, the luminous total of the quantity (left out for relative
    data, which have none), Ra, R9, Rf, Rg.  Each cell holds its own record value only.
    """
    lum = _luminous_key(records)
    cols: list[tuple[str, str | None]] = [("#", None), ("Name", "name"), ("CCT [K]", "cct_K"), ("Duv", "duv")]
    if lum is not None:
        cols.append((f"{_LUMINOUS_LABEL[lum].replace('Luminous ', '').capitalize()} [{_ROW[lum][2]}]", lum))
    cols += [("Ra", "Ra"), ("R9", "R9"), ("Rf", "Rf"), ("Rg", "Rg")]
    header = [c[0] for c in cols]
    rows = []
    for k, r in enumerate(records):
        row = []
        for _, key in cols:
            if key is None:
                row.append(str(k + 1))
            elif key == "name":
                row.append(shorten(r["name"], 22))
            else:
                row.append(format_value(r, key))
        rows.append(row)
    return header, rows


def _table(
    fig,
    x_in: float,
    y_in: float,
    header,
    rows,
    *,
    w_in: float,
    h_in: float,
    fontsize: float = 6.0,
    pitch: float = 0.17,
    right_from: int = 2,
) -> float:
    """Draw a table with columns as wide as their widest text (measured), numbers right-aligned."""
    from .charts import renderer_of

    r = renderer_of(fig)
    probe = fig.text(0, 0, "", fontsize=fontsize)
    widths = []
    for j in range(len(header)):
        wmax = 0.0
        for text, bold in [(header[j], True)] + [(row[j], False) for row in rows]:
            probe.set_text(text)
            probe.set_weight("bold" if bold else "normal")
            wmax = max(wmax, probe.get_window_extent(r).width / fig.dpi)
        widths.append(wmax)
    probe.remove()
    gap = 0.12
    xs = [x_in]
    for wv in widths[:-1]:
        xs.append(xs[-1] + wv + gap)
    y = y_in
    for cells, is_head in [(header, True)] + [(row, False) for row in rows]:
        for j, cell in enumerate(cells):
            right = j >= right_from
            fig.text(
                (xs[j] + (widths[j] if right else 0.0)) / w_in,
                1 - y / h_in,
                cell,
                fontsize=fontsize,
                va="top",
                weight="bold" if is_head else "normal",
                ha="right" if right else "left",
                gid="summary-head" if is_head else f"summary-cell-{j}",
            )
        y += pitch
    return y


def summary_picture(
    analysis, records, meta, *, comparison, diagram: str, regions, size_px=(1600, 1000), dpi: int = 150
):
    """A one-page summary picture (landscape) for a PNG; one spectrum or a batch."""
    from matplotlib.figure import Figure

    w_in, h_in = size_px[0] / dpi, size_px[1] / dpi
    fig = Figure(figsize=(w_in, h_in), dpi=dpi)
    n = len(records)
    rec = records[0]
    title = meta.get("title") if meta.get("title") not in (None, "", "Spectral measurement report") else None
    head = title or (f"cctkit summary - {shorten(rec['name'], 60)}" if n == 1 else f"cctkit summary - {n} spectra")
    fig.text(0.015, 0.975, shorten(head, 90), fontsize=11, weight="bold", va="top")
    fig.text(
        0.985,
        0.975,
        f"cctkit {meta['cctkit_version']} | report date {meta['date']}",
        fontsize=6,
        ha="right",
        va="top",
        color=GREY,
    )

    def box(x, y, w, h):  # inches from top-left
        return fig.add_axes((x / w_in, 1 - (y + h) / h_in, w / w_in, h / h_in))

    y = 0.5
    if n > 1:
        header, rows = summary_cells(records)
        shown = rows if n <= 24 else rows[:20]
        y = _table(fig, 0.15, y, header, shown, w_in=w_in, h_in=h_in)
        if len(shown) < n:
            fig.text(
                0.15 / w_in,
                1 - y / h_in,
                f"... and {n - len(shown)} more (see the PDF report)",
                fontsize=6,
                va="top",
                color=GREY,
            )
            y += 0.17
        if n <= charts.IDENTITIES:
            ax = box(0.55, y + 0.45, 3.3, min(2.3, 5.7 - y))
            charts.index_comparison_chart(analysis, ax)
    else:
        for label, value, unit, note in headline_rows(rec):
            fig.text(0.15 / w_in, 1 - y / h_in, label, fontsize=6.3, va="top")
            text = f"{value} {unit}".strip() + (f"  ! {note}" if note else "")
            fig.text(1.45 / w_in, 1 - y / h_in, shorten(text, 34), fontsize=6.3, va="top", weight="bold")
            y += 0.165
        flags = ", ".join(f["code"] for f in rec.get("flags", [])) or "none"
        fig.text(0.15 / w_in, 1 - y / h_in, "Flags", fontsize=6.3, va="top")
        fig.text(1.45 / w_in, 1 - y / h_in, shorten(flags, 34), fontsize=6.3, va="top", weight="bold")
        y += 0.265
        for label, value in (
            ("File", shorten(rec.get("source") or "(not from a file)", 44, keep="tail")),
            ("SHA-256", (rec.get("sha256") or "")[:16] + "..."),
            ("Quantity", f"{rec['quantity']} [{rec.get('spectral_unit', '')}]"),
            ("Measured", "{:g}-{:g} nm, step {:g} nm".format(*rec["measured_range_nm"], rec["measured_step_nm"])),
        ):
            fig.text(0.15 / w_in, 1 - y / h_in, label, fontsize=5.8, va="top", color=GREY)
            fig.text(1.45 / w_in, 1 - y / h_in, value, fontsize=5.8, va="top", color=GREY)
            y += 0.14
    std = textwrap.wrap("Standards: " + "; ".join(STANDARDS), 92)
    cautions = [c for line in CAUTIONS for c in textwrap.wrap(line, 92)]
    for k, line in enumerate(std + cautions):
        fig.text(
            0.15 / w_in,
            (0.12 + 0.11 * (len(std) + len(cautions) - 1 - k)) / h_in,
            line,
            fontsize=4.8,
            color=GREY,
            va="bottom",
        )

    if n == 1:
        ax = box(3.85, 0.75, 3.3, 2.1)
        charts.spectrum_chart(analysis, ax, index=0, comparison=comparison)
        fig.text(3.45 / w_in, 1 - 0.38 / h_in, "Spectrum and reference (equal Y)", fontsize=7, va="top", weight="bold")
        ax = box(3.85, 3.6, 3.3, 2.0)
        charts.cri_chart(analysis, ax, index=0)
        ax = box(7.85, 0.75, 2.5, 2.5)
        charts.chromaticity_chart(analysis, ax, indices=[0], diagram=diagram, regions=regions)
        ax = box(7.75, 3.55, 2.6, 2.6)
        charts.hue_wheel_chart(analysis, ax, index=0)
    else:
        idx = list(range(n))
        ax = box(4.55, 0.75, 2.75, 5.0)
        charts.spectra_overlay_chart(
            analysis, ax, comparison=comparison, labels=[f"#{k + 1}" for k in idx] if n <= charts.IDENTITIES else None
        )
        ax = box(7.75, 0.75, 2.75, 4.8)
        charts.chromaticity_chart(analysis, ax, diagram=diagram, regions=regions)
    return fig
