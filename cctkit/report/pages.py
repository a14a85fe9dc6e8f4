"""Pages of a report: figures laid out in inches on A4 or Letter paper.

Each page function returns a :class:`matplotlib.figure.Figure` (no pyplot state).
Numbers on the pages are the analysis records (:meth:`cctkit.analysis.Analysis.records`)
formatted by :func:`format_value`; nothing is computed here.
"""

from __future__ import annotations

import textwrap
from typing import Any, Sequence

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
    "CIE S 026:2018 (\u03b1-opic)",
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
    ("u_prime", "u\u2032 (CIE 1976)", "1", "{:.4f}"),
    ("v_prime", "v\u2032 (CIE 1976)", "1", "{:.4f}"),
    ("luminous_flux_lm", "Luminous flux", "lm", "{:.1f}"),
    ("illuminance_lx", "Illuminance", "lx", "{:.1f}"),
    ("luminance_cd_per_m2", "Luminance", "cd\u00b7m\u207b\u00b2", "{:.1f}"),
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
_ALWAYS = ("cct_K", "duv", "x", "y", "u", "v", "u_prime", "v_prime", "ler_lm_per_W", "sp_ratio",
           "melanopic_der", "Ra", "R9", "Rf", "Rg")

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
        return _ROW[key][3].format(float(v)) if key in _ROW else f"{v:g}"
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
    """A figure with a coordinate system in inches from the top-left corner of the paper."""

    MARGIN = 0.45

    def __init__(self, paper: str, landscape: bool = False):
        from matplotlib.figure import Figure

        w, h = PAPER_IN[paper]
        if landscape:
            w, h = h, w
        self.w, self.h = w, h
        self.fig = Figure(figsize=(w, h))
        self.left = self.MARGIN
        self.right = w - self.MARGIN
        self.width = self.right - self.left

    def axes(self, x: float, y: float, w: float, h: float, **kw):
        """Axes whose plotting box spans x..x+w [in] from the left, y..y+h [in] from the top."""
        return self.fig.add_axes((x / self.w, 1.0 - (y + h) / self.h, w / self.w, h / self.h), **kw)

    def text(self, x: float, y: float, s: str, **kw):
        kw.setdefault("va", "top")
        return self.fig.text(x / self.w, 1.0 - y / self.h, s, **kw)

    def rule(self, y: float, lw: float = 0.6):
        from matplotlib.lines import Line2D

        self.fig.add_artist(Line2D([self.left / self.w, self.right / self.w], [1 - y / self.h] * 2,
                                   transform=self.fig.transFigure, color=INK, lw=lw))


def _header(page: _Page, title: str, subtitle: str, page_label: str) -> float:
    page.text(page.left, page.MARGIN, shorten(title, 70), fontsize=11, weight="bold")
    page.text(page.right, page.MARGIN, page_label, fontsize=7, ha="right", color=GREY)
    page.text(page.left, page.MARGIN + 0.24, shorten(subtitle, 130), fontsize=6.5, color=GREY)
    page.rule(page.MARGIN + 0.42)
    return page.MARGIN + 0.5


def _footer(page: _Page, meta: dict[str, Any]) -> None:
    y0 = page.h - page.MARGIN - 0.62
    page.rule(y0, lw=0.4)
    page.text(page.left, y0 + 0.05, "Cautions", fontsize=6, weight="bold")
    for k, line in enumerate(CAUTIONS):
        page.text(page.left, y0 + 0.16 + 0.1 * k, f"\u2022 {line}", fontsize=5.5)
    page.text(page.right, y0 + 0.05,
              f"cctkit {meta['cctkit_version']} \u2022 report date {meta['date']}", fontsize=5.5, ha="right",
              color=GREY)


_FOOTER_H = 0.62 + 0.1


def _kv_block(page: _Page, x: float, y: float, rows: Sequence[tuple[str, str]], *, label_w: float,
              pitch: float = 0.125, fontsize: float = 6.0, value_chars: int = 62) -> float:
    """Label/value lines; long values wrap (at most 3 lines); returns the y below the block."""
    for label, value in rows:
        page.text(x, y, label, fontsize=fontsize, weight="bold")
        lines = textwrap.wrap(value, value_chars, break_long_words=True) or [""]
        if len(lines) > 4:
            lines = lines[:3] + [shorten(" ".join(lines[3:]), value_chars)]
        for k, line in enumerate(lines):
            page.text(x + label_w, y + k * pitch, line, fontsize=fontsize,
                      family="DejaVu Sans Mono" if label.startswith("SHA") else None)
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
    measured = f"{lo:g}\u2013{hi:g} nm, step {step:g} nm" if lo is not None else "unknown"
    sha = rec.get("sha256") or "(not from a file)"
    obs = rec.get("observer", 2)
    observer = "CIE 1931 2\u00b0" if obs == 2 else "CIE 1964 10\u00b0"
    return [
        ("Sample", rec["name"]),
        *metadata_rows(rec),
        ("Input file", shorten(rec.get("source") or "(not from a file)", 110, keep="tail")),
        ("SHA-256", sha),
        ("Quantity", f"{rec['quantity']} [{rec.get('spectral_unit', '')}]"),
        ("Measured", measured),
        ("Observer", f"{observer} for chromaticity and CCT; rendering metrics use their standard's observer"),
        ("Interpolation", f"{conv['interpolation']}; extrapolation: {conv['extrapolation']}"),
        ("Constants", f"c2 = {conv['c2_m_K']:.4e} m\u00b7K; Km = {conv['Km_lm_per_W']} lm/W; "
                      f"{conv['summation']}"),
        ("CCT method", conv["cct_method"]),
        ("Standards", "; ".join(STANDARDS + ((meta["tolerance_edition"],) if meta.get("tolerance_edition") else ()))),
        ("Software", f"cctkit {meta['cctkit_version']}; tables from colour-science "
                     f"{meta.get('colour_science_version') or 'n/a'}"),
        ("Report date", meta["date"]),
    ]


def _headline_block(page: _Page, x: float, y: float, w: float, rec: dict[str, Any], *, extra=()) -> float:
    page.text(x, y, "Headline numbers", fontsize=7.5, weight="bold")
    y += 0.18
    pitch = 0.118
    for label, value, unit, note in headline_rows(rec):
        page.text(x, y, label, fontsize=6.3)
        page.text(x + 1.55, y, value, fontsize=6.3, ha="right", weight="bold")
        page.text(x + 1.6, y, unit, fontsize=6.3)
        if note:
            page.text(x + 2.05, y, f"\u25b2 {note}", fontsize=5.8, weight="bold")
        y += pitch
    for label, value in extra:
        page.text(x, y, label, fontsize=6.3)
        page.text(x + 1.55, y, value, fontsize=6.3, ha="right", weight="bold")
        y += pitch
    return y


def _flags_block(page: _Page, x: float, y: float, rec: dict[str, Any], *, max_lines: int = 4) -> float:
    flags = rec.get("flags", [])
    if not flags:
        page.text(x, y, "Flags: none raised", fontsize=6.3)
        return y + 0.13
    page.text(x, y, f"Flags ({len(flags)})", fontsize=6.3, weight="bold")
    y += 0.13
    shown = flags if len(flags) <= max_lines else flags[: max_lines - 1]
    for f in shown:
        page.text(x, y, shorten(f"\u25b2 [{f['code']}] {f['message']}", 150), fontsize=5.8)
        y += 0.11
    if len(shown) < len(flags):
        page.text(x, y, f"\u2026 and {len(flags) - len(shown)} more (see the JSON record)", fontsize=5.8)
        y += 0.11
    return y


def _ansi_text(analysis, i: int) -> tuple[tuple[str, str], ...]:
    from ..tolerance import classify_ansi

    name = classify_ansi(np.asarray(analysis.uv[i]), space="uv")
    name = name.item() if hasattr(name, "item") else name
    return (("ANSI C78.377 quadrangle", name or "none"),)


# ---------------------------------------------------------------- pages


def sample_page(analysis, i: int, rec: dict[str, Any], meta: dict[str, Any], *, paper: str, comparison,
                diagram: str, regions, page_label: str):
    """One page for spectrum ``i``: identity, headline numbers, spectrum, chromaticity, colour rendering."""
    p = _Page(paper)
    y = _header(p, f"Spectrum report \u2014 {rec['name']}", f"{rec.get('source') or ''}", page_label)
    half = p.width / 2.0
    # Identity/provenance (left) and headline numbers (right).
    p.text(p.left, y, "Identity and provenance", fontsize=7.5, weight="bold")
    y_left = _kv_block(p, p.left, y + 0.18, provenance_rows(rec, meta), label_w=0.72, value_chars=58)
    y_right = _headline_block(p, p.left + half + 0.35, y, half - 0.35, rec, extra=_ansi_text(analysis, i))
    y = max(y_left, y_right) + 0.04
    y = _flags_block(p, p.left, y, rec) + 0.1

    bottom = p.h - p.MARGIN - _FOOTER_H
    avail = bottom - y
    # Rows: spectrum+difference | chromaticity ; CRI bars | vector graphic ; Rf,h | Rcs,h.
    # Each panel: a bold heading, room for the chart's own note line, the plot, its x label.
    head, note, xlab = 0.14, 0.2, 0.34
    r1 = avail * 0.38
    r2 = avail * 0.33
    r3 = avail - r1 - r2
    gx = p.left + 0.45
    lw = p.width * 0.56 - 0.45
    cx = p.left + p.width * 0.56 + 0.55
    cw = p.right - cx
    # Row 1
    top = y + head + note
    plot_h = r1 - head - note - xlab
    spec_h = plot_h * 0.66
    ax = p.axes(gx, top, lw, spec_h)
    charts.spectrum_chart(analysis, ax, index=i, comparison=comparison)
    ax.set_xlabel("")
    ax.tick_params(labelbottom=False)
    p.text(p.left, y, "Spectrum and its reference at the same CCT (equal Y)", fontsize=7, weight="bold")
    ax2 = p.axes(gx, top + spec_h + 0.05, lw, plot_h - spec_h - 0.05, sharex=ax)
    charts.difference_chart(analysis, ax2, index=i, comparison=comparison)
    side = min(cw, plot_h)
    axc = p.axes(cx + (cw - side) / 2.0, top, side, side)
    charts.chromaticity_chart(analysis, axc, indices=[i], diagram=diagram, regions=regions)
    p.text(cx - 0.45, y, "Chromaticity", fontsize=7, weight="bold")
    # Row 2
    y2 = y + r1
    plot_h = r2 - head - note - xlab + 0.1
    ax = p.axes(gx, y2 + head + note, lw, plot_h)
    charts.cri_chart(analysis, ax, index=i)
    p.text(p.left, y2, "CIE 13.3-1995 colour rendering", fontsize=7, weight="bold")
    side = min(cw, plot_h)
    axv = p.axes(cx + (cw - side) / 2.0, y2 + head + note, side, side)
    charts.vector_graphic_chart(analysis, axv, index=i)
    p.text(cx - 0.45, y2, "TM-30 colour vector graphic", fontsize=7, weight="bold")
    # Row 3
    y3 = y2 + r2
    bw = (p.width - 0.45 - 0.55) / 2.0
    plot_h = r3 - head - 0.05 - xlab
    ax = p.axes(gx, y3 + head + 0.05, bw, plot_h)
    charts.hue_fidelity_chart(analysis, ax, index=i)
    p.text(p.left, y3, "TM-30 local fidelity Rf,h", fontsize=7, weight="bold")
    ax = p.axes(gx + bw + 0.55, y3 + head + 0.05, bw, plot_h)
    charts.chroma_shift_chart(analysis, ax, index=i)
    p.text(gx + bw + 0.1, y3, "TM-30 local chroma shift Rcs,h", fontsize=7, weight="bold")
    _footer(p, meta)
    return p.fig


_COMPARE_KEYS = ("cct_K", "duv", "x", "y", "u_prime", "v_prime", "luminous", "ler_lm_per_W", "sp_ratio",
                 "melanopic_der", "Ra", "R9", "Rf", "Rg")


def _luminous_key(records) -> str | None:
    for k in _LUMINOUS_KEYS:
        if any(k in r for r in records):
            return k
    return None


def comparison_page(analysis, indices: Sequence[int], records, meta, *, paper: str, comparison, diagram: str,
                    regions, page_label: str):
    """Candidates side by side: headline table, overlaid chromaticity and overlaid spectra."""
    p = _Page(paper)
    y = _header(p, f"Comparison of {len(indices)} spectra",
                f"quantity {records[indices[0]]['quantity']}; report date {meta['date']}", page_label)
    lum = _luminous_key(records)
    keys = [k for k in _COMPARE_KEYS if k != "luminous" or lum]
    keys = [lum if k == "luminous" else k for k in keys]
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
        codes = ", ".join(f["code"] for f in r.get("flags", []))
        p.text(p.left, y, shorten(f"#{k + 1}  {r['name']}  \u2014  {r.get('source') or 'no file'}"
                                  + (f"  \u2014 flags: {codes}" if codes else ""), 150), fontsize=5.6)
        y += 0.1
    y += 0.15
    bottom = p.h - p.MARGIN - _FOOTER_H
    avail = bottom - y
    side = min(p.width / 2.0 - 0.55, avail * 0.6 - 0.5)
    ax = p.axes(p.left + 0.5, y + 0.15, side, side)
    charts.chromaticity_chart(analysis, ax, indices=indices, diagram=diagram, regions=regions)  # numbered
    ax = p.axes(p.left + p.width / 2.0 + 0.5, y + 0.15, p.width / 2.0 - 0.5, side)
    charts.spectra_overlay_chart(analysis, ax, indices=indices, comparison=comparison,
                                 labels=[f"#{k + 1}" for k in range(n)])
    ax.set_title("Spectra, each scaled to Y = 100", fontsize=7, loc="left")
    y_bars = y + 0.15 + side + 0.55
    if bottom - y_bars > 1.0:
        ax = p.axes(p.left + 0.5, y_bars, p.width - 0.5, bottom - y_bars - 0.35)
        charts.index_comparison_chart(analysis, ax, indices=indices)
        ax.set_title("Colour rendering indices by spectrum (bars in the order #1, #2, ...)", fontsize=7, loc="left")
    _footer(p, meta)
    return p.fig


_SUMMARY_COLS = (
    ("#", None, 0.3), ("Name", "name", 1.4), ("CCT [K]", "cct_K", 0.5), ("Duv", "duv", 0.5),
    ("x", "x", 0.45), ("y", "y", 0.45), ("lum", "luminous", 0.65), ("LER [lm/W]", "ler_lm_per_W", 0.55),
    ("Ra", "Ra", 0.35), ("R9", "R9", 0.35), ("Rf", "Rf", 0.35), ("Rg", "Rg", 0.35), ("Flags", "flags", 0.0),
)


def summary_table_pages(analysis, records, meta, *, paper: str, page_labels: Sequence[str]):
    """The batch as a table, :data:`SUMMARY_ROWS_PER_PAGE` spectra per page; yields figures."""
    lum = _luminous_key(records)
    n = len(records)
    for page_no, start in enumerate(range(0, n, SUMMARY_ROWS_PER_PAGE)):
        p = _Page(paper)
        stop = min(n, start + SUMMARY_ROWS_PER_PAGE)
        y = _header(p, f"Batch summary: {n} spectra", f"spectra {start + 1}\u2013{stop} of {n}; quantity "
                    f"{records[0]['quantity']}", page_labels[page_no])
        widths = [w for _, _, w in _SUMMARY_COLS]
        widths[-1] = p.width - sum(widths[:-1])
        xs = np.concatenate([[p.left], p.left + np.cumsum(widths[:-1])])
        for (head, key, _), x, w in zip(_SUMMARY_COLS, xs, widths):
            if key == "luminous":
                head = f"{_ROW[lum][1]} [{_ROW[lum][2]}]" if lum else "Luminous"
                head = shorten(head.replace("Luminous ", "").replace("Illuminance", "E"), 14)
            p.text(x, y, head, fontsize=6, weight="bold")
        y += 0.16
        p.rule(y - 0.03, lw=0.3)
        pitch = 0.19
        for i in range(start, stop):
            r = records[i]
            for (head, key, _), x, w in zip(_SUMMARY_COLS, xs, widths):
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
        _footer(p, meta)
        yield p.fig


def scatter_page(analysis, records, meta, *, paper: str, comparison, diagram: str, regions, page_label: str):
    """The whole batch in one chromaticity scatter, and all spectra overlaid."""
    p = _Page(paper)
    n = len(records)
    y = _header(p, f"Batch chromaticity: {n} spectra", "points numbered as in the summary table"
                if n <= 12 else "one point per spectrum; numbers and names in the summary table", page_label)
    bottom = p.h - p.MARGIN - _FOOTER_H
    side = min(p.width - 0.6, (bottom - y) * 0.62)
    ax = p.axes(p.left + 0.55 + (p.width - 0.6 - side) / 2.0, y + 0.2, side, side)
    charts.chromaticity_chart(analysis, ax, diagram=diagram, regions=regions)
    y2 = y + side + 0.65
    ax = p.axes(p.left + 0.55, y2, p.width - 0.6, bottom - y2 - 0.45)
    charts.spectra_overlay_chart(analysis, ax, comparison=comparison, legend=n <= 12)
    ax.set_title("Spectra, each scaled to Y = 100", fontsize=7, loc="left")
    _footer(p, meta)
    return p.fig


def summary_picture(analysis, records, meta, *, comparison, diagram: str, regions, size_px=(1600, 1000),
                    dpi: int = 150):
    """A one-page summary picture (landscape) for a PNG; one spectrum or a batch."""
    from matplotlib.figure import Figure

    w_in, h_in = size_px[0] / dpi, size_px[1] / dpi
    fig = Figure(figsize=(w_in, h_in), dpi=dpi)
    n = len(records)
    rec = records[0]
    title = f"cctkit summary \u2014 {shorten(rec['name'], 60)}" if n == 1 else f"cctkit summary \u2014 {n} spectra"
    fig.text(0.015, 0.975, title, fontsize=11, weight="bold", va="top")
    fig.text(0.985, 0.975, f"cctkit {meta['cctkit_version']} \u2022 {meta['date']}", fontsize=6, ha="right",
             va="top", color=GREY)

    def box(x, y, w, h):  # inches from top-left
        return fig.add_axes((x / w_in, 1 - (y + h) / h_in, w / w_in, h / h_in))

    lines: list[tuple[str, str]] = []
    if n == 1:
        for label, value, unit, note in headline_rows(rec):
            lines.append((label, f"{value} {unit}".strip() + (f"  \u25b2 {note}" if note else "")))
        lines.append(("Flags", ", ".join(f["code"] for f in rec.get("flags", [])) or "none"))
    y = 0.5
    if n > 1:
        # A compact comparison table: the headline numbers side by side, one row per spectrum.
        lum = _luminous_key(records)
        lum_unit = {"luminous_flux_lm": "lm", "illuminance_lx": "lx", "luminance_cd_per_m2": "cd/m\u00b2",
                    "intensity_cd": "cd"}.get(lum or "", "")
        cols = [("#", None, 0.0), ("name", None, 0.2), ("CCT K", "cct_K", 1.22), ("Duv", "duv", 1.58),
                (lum_unit or "Y", lum, 2.02), ("Ra", "Ra", 2.42), ("R9", "R9", 2.7), ("Rf", "Rf", 2.98),
                ("Rg", "Rg", 3.26)]
        for label, _, x in cols:
            fig.text((0.15 + x) / w_in, 1 - y / h_in, label, fontsize=6, va="top", weight="bold")
        y += 0.2
        shown = records[:22] if n <= 24 else records[:20]
        for k, r in enumerate(shown):
            for label, key, x in cols:
                if key is None:
                    text = f"{k + 1}" if label == "#" else shorten(r["name"], 16)
                else:
                    text = format_value(r, key) if key else "n/a"
                fig.text((0.15 + x) / w_in, 1 - y / h_in, text, fontsize=6, va="top")
            y += 0.17
        if len(shown) < n:
            fig.text(0.15 / w_in, 1 - y / h_in, f"\u2026 and {n - len(shown)} more (see the PDF report)",
                     fontsize=6, va="top", color=GREY)
            y += 0.17
        if n <= 12:
            ax = box(0.55, y + 0.35, 3.05, min(2.4, 5.6 - y))
            charts.index_comparison_chart(analysis, ax)
    for label, value in lines:
        fig.text(0.15 / w_in, 1 - y / h_in, label, fontsize=6.3, va="top")
        fig.text(1.45 / w_in, 1 - y / h_in, shorten(value, 34), fontsize=6.3, va="top", weight="bold")
        y += 0.165
    if n == 1:
        y += 0.1
        for label, value in (("File", shorten(rec.get("source") or "(not from a file)", 44, keep="tail")),
                             ("SHA-256", (rec.get("sha256") or "")[:16] + "\u2026"),
                             ("Quantity", f"{rec['quantity']} [{rec.get('spectral_unit', '')}]"),
                             ("Measured", "{:g}\u2013{:g} nm, step {:g} nm".format(*rec["measured_range_nm"],
                                                                                rec["measured_step_nm"]))):
            fig.text(0.15 / w_in, 1 - y / h_in, label, fontsize=5.8, va="top", color=GREY)
            fig.text(1.45 / w_in, 1 - y / h_in, value, fontsize=5.8, va="top", color=GREY)
            y += 0.14
    std = textwrap.wrap("Standards: " + "; ".join(STANDARDS), 92)
    cautions = [c for line in CAUTIONS for c in textwrap.wrap(line, 92)]
    for k, line in enumerate(std + cautions):
        fig.text(0.15 / w_in, (0.12 + 0.11 * (len(std) + len(cautions) - 1 - k)) / h_in, line, fontsize=4.8,
                 color=GREY, va="bottom")

    if n == 1:
        ax = box(3.85, 0.5, 3.3, 2.35)
        charts.spectrum_chart(analysis, ax, index=0, comparison=comparison)
        ax.set_title("Spectrum and reference (equal Y)", fontsize=7, loc="left")
        ax = box(3.85, 3.6, 3.3, 2.35)
        charts.cri_chart(analysis, ax, index=0)
        ax = box(7.85, 0.75, 2.5, 2.5)
        charts.chromaticity_chart(analysis, ax, indices=[0], diagram=diagram, regions=regions)
        ax = box(7.9, 3.9, 2.1, 2.1)
        charts.vector_graphic_chart(analysis, ax, index=0)
    else:
        idx = list(range(n))
        ax = box(4.35, 0.5, 2.85, 5.3)
        charts.spectra_overlay_chart(analysis, ax, comparison=comparison,
                                     labels=[f"#{k + 1}" for k in idx] if n <= 12 else None)
        ax.set_title("Spectra (Y = 100)", fontsize=7, loc="left")
        ax = box(7.75, 0.75, 2.75, 4.8)
        charts.chromaticity_chart(analysis, ax, diagram=diagram, regions=regions)
    return fig
