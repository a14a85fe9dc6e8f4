"""The claims-verdict pages of a report: what was claimed, what each sample showed, the batch.

The pages draw a verdict document (:meth:`cctkit.claims.Verdict.as_dict`) and the
:class:`cctkit.claims.Claims` it was checked against.  Every value, limit, margin,
uncertainty U and statistic printed here is read from that document; the
chromaticity chart takes the claimed ANSI C78.377 quadrangle and the SDCM ellipse
from :mod:`cctkit.tolerance`.  Nothing is computed here.

Pass, FAIL and inconclusive read in greyscale: every result is written as a word,
non-passing table cells are hatched (FAIL: diagonal lines, inconclusive: dots),
and the chart marks samples by marker shape (see :data:`VERDICT_STYLE`).
"""

from __future__ import annotations

import math
import textwrap
from collections.abc import Iterator, Sequence
from typing import Any

import numpy as np

from . import charts
from .charts import GREY, INK, shorten
from .pages import _FOOTER_H, HEADLINE_ROWS, _footer, _header, _Page

__all__ = [
    "VERDICT_STYLE",
    "VERDICT_ROWS_PER_PAGE",
    "VERDICT_COLUMNS_PER_PAGE",
    "verdict_page_count",
    "verdict_pages",
    "verdict_page",
    "verdict_table_pages",
    "verdict_chart",
    "claim_outlines",
    "check_verdict_matches",
    "chromaticity_verdicts",
]

#: How each result is drawn: word, chart marker, marker face, table hatch.
VERDICT_STYLE: dict[str, dict[str, Any]] = {
    "pass": {"word": "pass", "marker": "o", "mfc": "white", "hatch": None, "size": 3.6},
    "fail": {"word": "FAIL", "marker": "X", "mfc": INK, "hatch": "////", "size": 5.5},
    "inconclusive": {"word": "inconclusive", "marker": "^", "mfc": "#9a9a9a", "hatch": "....", "size": 5.0},
}
#: Sample rows of the verdict table on one page.
VERDICT_ROWS_PER_PAGE = 34
#: Claim columns of the verdict table on one page (more claims continue on further pages).
VERDICT_COLUMNS_PER_PAGE = 6

# Metric -> (label, unit, value format).  Headline rows first, then names only claims use.
_LABELS: dict[str, tuple[str, str, str]] = {k: (lab, unit, fmt) for k, lab, unit, fmt in HEADLINE_ROWS}
_LABELS.update(
    {
        "efficacy_lm_per_W": ("Efficacy", "lm/W", "{:.1f}"),
        "power_W": ("Power", "W", "{:.2f}"),
        "sdcm": ("SDCM", "steps", "{:.2f}"),
        "ansi_quadrangle": ("Quadrangle", "", "{}"),
        "peak_nm": ("Peak", "nm", "{:.1f}"),
        "centroid_nm": ("Centroid", "nm", "{:.1f}"),
        "fwhm_nm": ("FWHM", "nm", "{:.1f}"),
        "dominant_wavelength_nm": ("Dominant wavelength", "nm", "{:.1f}"),
        "purity": ("Purity", "1", "{:.3f}"),
        "radiant_total_W": ("Radiant flux", "W", "{:.4g}"),
        "radiant_total_W_per_m2": ("Irradiance", "W/m\u00b2", "{:.4g}"),
        "radiant_total_W_per_sr_m2": ("Radiance", "W/(sr\u00b7m\u00b2)", "{:.4g}"),
        "radiant_total_W_per_sr": ("Radiant intensity", "W/sr", "{:.4g}"),
        "photon_flux_umol_per_s": ("Photon flux", "\u00b5mol/s", "{:.4g}"),
        "ppf_umol_per_s": ("PPF", "\u00b5mol/s", "{:.4g}"),
        "ppfd_umol_per_m2_s": ("PPFD", "\u00b5mol/(m\u00b2\u00b7s)", "{:.4g}"),
    }
)
_LABELS.update({f"R{i}": (f"R{i}", "1", "{:.1f}") for i in range(1, 15)})
_LABELS.update(
    {
        "Ra": ("Ra", "1", "{:.1f}"),
        "Rf": ("Rf", "1", "{:.1f}"),
        "Rg": ("Rg", "1", "{:.1f}"),
        "luminous_flux_lm": ("Flux", "lm", "{:.1f}"),
    }
)


def _label(metric: str) -> tuple[str, str]:
    label, unit, _ = _LABELS.get(metric, (metric, "", "{:g}"))
    return label, ("" if unit == "1" else unit)


def _value_text(metric: str, value) -> str:
    if value is None:
        return "none" if metric == "ansi_quadrangle" else "n/a"
    if isinstance(value, str):
        return value
    v = float(value)
    if not math.isfinite(v):
        return "n/a"
    return _LABELS.get(metric, (None, None, "{:.4g}"))[2].format(v)


def _num(v) -> str:
    """A limit or U exactly as the document holds it (up to six significant digits)."""
    return f"{float(v):g}"


def _limit_text(check: dict, quadrangle: str | None) -> str:
    if check["metric"] == "ansi_quadrangle":
        return f"inside ANSI {quadrangle}" if quadrangle else "inside"
    lo, hi = check["min"], check["max"]
    if lo is not None and hi is not None:
        return f"{_num(lo)} to {_num(hi)}"
    return f">= {_num(lo)}" if lo is not None else f"<= {_num(hi)}"


def check_verdict_matches(records: Sequence[dict], doc: dict) -> None:
    """Raise :class:`cctkit.errors.InputError` unless ``doc`` holds the samples of ``records``, in order."""
    from ..errors import InputError

    names = [r["name"] for r in records]
    got = [s["name"] for s in doc.get("samples", [])]
    if names != got:
        raise InputError(
            f"the verdict is for {len(got)} sample(s) that are not the {len(names)} spectra of the "
            "report (names or order differ)",
            source="verdict",
        )


# ---------------------------------------------------------------- chart


def claim_outlines(claims) -> tuple[charts.Outline, ...]:
    """The claimed ANSI quadrangle (solid) and ``max_sdcm``-step ellipse (dashed) as chart outlines."""
    from .. import tolerance as tol
    from ..claims import sdcm_ellipse

    c = claims.chromaticity
    if c is None:
        return ()
    out = []
    if c.ansi_quadrangle:
        q = tol.ansi_quadrangle(c.nominal_cct_K)
        out.append(charts.Outline(f"ANSI {q.name}", np.asarray(q.corners_xy), "xy", "-"))
    if c.max_sdcm is not None:
        e = sdcm_ellipse(c)
        out.append(charts.ellipse_outline(e, c.max_sdcm, label=f"{e.name} {c.max_sdcm:g} SDCM"))
    return tuple(out)


def _ellipse_text(claims) -> str:
    from ..claims import sdcm_ellipse

    c = claims.chromaticity
    e = sdcm_ellipse(c)
    where = (
        "IEC 60081 Annex D lamp ellipse"
        if c.sdcm_centre == "iec"
        else "MacAdam (1942) ellipse interpolated at the ANSI quadrangle centre"
    )
    extra = " (outside MacAdam's data: nearest ellipse)" if e.extrapolated else ""
    return f"within {c.max_sdcm:g} SDCM of {e.name} (x {e.centre_xy[0]:.4f}, y {e.centre_xy[1]:.4f}), {where}{extra}"


def _zoom_window(
    outlines: Sequence[charts.Outline], diagram: str, half_min: float
) -> tuple[float, float, float, float] | None:
    """A square window around the claimed SDCM ellipse (else the quadrangle), in ``diagram`` coordinates.

    ``outlines`` are those of :func:`claim_outlines` (the ellipse, when claimed, comes last).
    """
    if not outlines:
        return None
    target = outlines[-1]  # the ellipse when claimed: the smaller region
    pts = charts._convert(target.points, target.space, diagram)
    lo, hi = pts.min(axis=0), pts.max(axis=0)
    c = 0.5 * (lo + hi)
    half = max(float(np.max(hi - lo)) * 0.5 * 1.6, half_min)
    return c[0] - half, c[0] + half, c[1] - half, c[1] + half


_MAX_NUMBERED = 10  # more numbers than this in one view would overlap; the table holds them


def _count_numbered(pts, verdicts, win, outside) -> int:
    def within(w):
        if w is None:
            return np.ones(len(pts), dtype=bool)
        return (pts[:, 0] >= w[0]) & (pts[:, 0] <= w[1]) & (pts[:, 1] >= w[2]) & (pts[:, 1] <= w[3])

    show = (verdicts != "pass") & np.all(np.isfinite(pts), axis=1) & within(win)
    if outside is not None:
        show &= ~within(outside)
    return int(show.sum())


CHROMATICITY_METRICS = ("ansi_quadrangle", "sdcm")


def chromaticity_verdicts(doc: dict) -> tuple[np.ndarray, str]:
    """Each sample's verdict on the chromaticity claims alone (quadrangle, SDCM), and its basis.

    A sample that fails on flux but sits inside the claimed regions is a pass here: the chart
    shows where the chromaticity is.  Without chromaticity claims, the overall verdict is used
    and the basis reads "overall".
    """
    from ..claims import combine_results

    out = []
    any_chroma = False
    for s in doc["samples"]:
        results = [c["result"] for c in s["checks"] if c["metric"] in CHROMATICITY_METRICS]
        any_chroma |= bool(results)
        out.append(combine_results(results) if results else s["verdict"])
    return np.array(out, dtype=object), ("chromaticity" if any_chroma else "overall")


def verdict_chart(
    analysis,
    ax,
    doc: dict,
    claims,
    *,
    diagram: str = "uv",
    zoom: bool = False,
    legend: bool = True,
    number_outside=None,
    outlines: Sequence[charts.Outline] | None = None,
) -> list:
    """Chromaticity chart of the verdict: claimed regions and every sample, marked by its
    chromaticity verdict (:func:`chromaticity_verdicts`).

    Draws :func:`cctkit.report.charts.chromaticity_chart` with the outlines of
    :func:`claim_outlines`, then marks each sample by its verdict (:data:`VERDICT_STYLE`:
    pass open circle, FAIL cross, inconclusive triangle).  Samples that do not pass carry
    their number in the verdict table (up to ten numbers in one view).  ``zoom`` narrows the view to the claimed SDCM
    ellipse (or the quadrangle when no ellipse is claimed); ``number_outside`` (a window
    x0, x1, y0, y1) numbers only the points outside it, where a zoom shows the others.
    ``outlines`` are :func:`claim_outlines` of ``claims`` when the caller has them already.
    Returns the legend handles (drawn on ``ax`` when ``legend``).
    """
    from matplotlib.lines import Line2D

    outlines = claim_outlines(claims) if outlines is None else tuple(outlines)
    win = _zoom_window(outlines, diagram, 0.002) if zoom else None
    # The chart draws the locus, lines and regions; the verdict marks the samples by result.
    charts.chromaticity_chart(
        analysis, ax, diagram=diagram, regions=outlines, annotate=False, mark_samples=False, window=win
    )
    if win is not None:
        win = (*ax.get_xlim(), *ax.get_ylim())  # the window as widened to equal scales
        for t in ax.texts:  # labels: keep those inside the zoomed box, clipped
            x, y = t.xy if hasattr(t, "xy") else t.get_position()
            if win[0] <= x <= win[1] and win[2] <= y <= win[3]:
                t.set_clip_path(ax.patch)
                t.set_clip_on(True)
            else:
                t.set_visible(False)
    pts = np.asarray({"uv": analysis.uv, "uvp": analysis.uvp, "xy": analysis.xy}[diagram], dtype=np.float64)
    verdicts, basis = chromaticity_verdicts(doc)
    n_numbered = _count_numbered(pts, verdicts, win, number_outside)
    handles = []
    for key in ("pass", "inconclusive", "fail"):
        st = VERDICT_STYLE[key]
        sel = verdicts == key
        n = int(sel.sum())
        size = st["size"] * (1.5 if zoom else 1.0)
        ax.plot(
            pts[sel, 0],
            pts[sel, 1],
            linestyle="none",
            marker=st["marker"],
            markersize=size,
            mfc=st["mfc"],
            mec=INK,
            mew=0.7,
            zorder=6 if key != "pass" else 5,
            label=f"verdict-{key}",
        )
        handles.append(
            Line2D(
                [],
                [],
                linestyle="none",
                marker=st["marker"],
                markersize=st["size"] * 1.3,
                mfc=st["mfc"],
                mec=INK,
                mew=0.7,
                label=f"{basis} {st['word']} ({n})",
            )
        )
        if key != "pass" and n_numbered <= _MAX_NUMBERED:
            for k in np.flatnonzero(sel):
                inside = win is None or (win[0] <= pts[k, 0] <= win[1] and win[2] <= pts[k, 1] <= win[3])
                o = number_outside
                if o is not None and o[0] <= pts[k, 0] <= o[1] and o[2] <= pts[k, 1] <= o[3]:
                    continue
                if np.all(np.isfinite(pts[k])) and inside:
                    t = ax.annotate(
                        f"#{k + 1}",
                        pts[k],
                        xytext=(4, 3),
                        textcoords="offset points",
                        fontsize=5.5,
                        weight="bold",
                        zorder=7,
                        bbox={"boxstyle": "square,pad=0.05", "fc": "white", "ec": "none", "alpha": 0.8},
                    )
                    t._cctkit_movable = True
    charts.declutter(ax)
    for o in outlines:
        style: Any = o.linestyle  # one of matplotlib's line style names
        handles.append(Line2D([], [], color="#4d4d4d", lw=0.7, linestyle=style, label=o.label))
    if legend:
        ax.legend(
            handles=handles,
            loc="upper left",
            bbox_to_anchor=(1.02, 1.0),
            fontsize=6,
            frameon=False,
            borderaxespad=0.0,
            handlelength=2.2,
        )
    return handles


# ---------------------------------------------------------------- pages


def _metrics(doc: dict) -> list[str]:
    return [c["metric"] for c in doc["samples"][0]["checks"]] if doc["samples"] else []


def _column_groups(metrics: Sequence[str]) -> list[list[str]]:
    k = VERDICT_COLUMNS_PER_PAGE
    return [list(metrics[i : i + k]) for i in range(0, len(metrics), k)] or [[]]


def verdict_page_count(doc: dict) -> int:
    """Pages the verdict takes: the overview, then the table (row pages x column groups)."""
    rows = math.ceil(len(doc["samples"]) / VERDICT_ROWS_PER_PAGE)
    return 1 + rows * len(_column_groups(_metrics(doc)))


def _counts(doc: dict) -> dict[str, int]:
    out = {"pass": 0, "fail": 0, "inconclusive": 0}
    for s in doc["samples"]:
        out[s["verdict"]] += 1
    return out


def _decision_rows(doc: dict, claims) -> list[tuple[str, str]]:
    metrics = _metrics(doc)
    with_u = [(m, claims.uncertainty[m]) for m in metrics if m in claims.uncertainty]
    if "decision" in doc and with_u:
        us = "; ".join(
            f"{_label(m)[0]} U = {_num(u)}" + (f" {_label(m)[1]}" if _label(m)[1] else "") for m, u in with_u
        )
        plain = [m for m in metrics if m not in dict(with_u)]
        rule = (
            f"{doc['decision']}. Guard band: pass when inside the limit by at least U, FAIL when outside "
            f"by at least U, inconclusive in between."
        )
        rows = [("Decision rule", rule), ("Expanded U (k = 2)", us)]
        if plain:
            rows.append(
                (
                    "Simple acceptance",
                    ", ".join(_label(m)[0] for m in plain) + ": pass within the limit (limit included), else FAIL",
                )
            )
        return rows
    return [
        (
            "Decision rule",
            "simple acceptance: a value passes when within its limits (limits included); no uncertainty U given",
        )
    ]


def _kv(
    page: _Page, x: float, y: float, rows, *, label_w: float, chars: int, pitch: float = 0.13, fontsize: float = 6.3
) -> float:
    for label, value in rows:
        page.text(x, y, label, fontsize=fontsize, weight="bold")
        lines = textwrap.wrap(value, chars) or [""]
        for k, line in enumerate(lines):
            page.text(x + label_w, y + k * pitch, line, fontsize=fontsize)
        y += pitch * len(lines) + 0.03
    return y


def _verdict_badge(page: _Page, x: float, y: float, verdict: str):
    """The overall verdict in a box: a hatched strip at the left (FAIL: lines, inconclusive: dots)
    beside the words, which stay on white.  Returns (strip, word) artists."""
    from matplotlib.patches import Rectangle

    st = VERDICT_STYLE[verdict]
    w, h, strip = 1.6, 0.34, 0.28
    page.fig.add_artist(
        Rectangle(
            (x / page.w, 1 - (y + h) / page.h),
            w / page.w,
            h / page.h,
            transform=page.fig.transFigure,
            fc="white",
            ec=INK,
            lw=1.0,
        )
    )
    band = page.fig.add_artist(
        Rectangle(
            (x / page.w, 1 - (y + h) / page.h),
            strip / page.w,
            h / page.h,
            transform=page.fig.transFigure,
            fc="white",
            ec=INK,
            lw=1.0,
            hatch=st["hatch"] or None,
        )
    )
    word = page.text(
        x + strip + (w - strip) / 2,
        y + h / 2,
        f"verdict: {st['word'].upper() if verdict != 'pass' else 'PASS'}",
        fontsize=10,
        weight="bold",
        ha="center",
        va="center",
    )
    return band, word


def verdict_page(analysis, doc: dict, claims, meta: dict, *, paper: str, diagram: str = "uv", page_label: str):
    """The verdict overview: claims, decision rule, overall verdict, batch summary and the chart."""
    p = _Page(paper)
    n = len(doc["samples"])
    cnt = _counts(doc)
    who = " \u2014 ".join(t for t in (claims.supplier, claims.product) if t)
    header_y = _header(
        p,
        f"Claims verdict — {claims.supplier or claims.product or 'supplier not named'}",
        f"{n} sample{'s' if n != 1 else ''} checked against {who or claims.source}",
        page_label,
    )
    outlines = claim_outlines(claims)
    quad = None
    if claims.chromaticity is not None and claims.chromaticity.ansi_quadrangle:
        quad = f"{claims.chromaticity.nominal_cct_K}K"
    rows = [
        ("Claims file", claims.source),
        ("Supplier", claims.supplier or "(not given)"),
        ("Product", claims.product or "(not given)"),
    ]
    c = claims.chromaticity
    if c is not None:
        chroma = []
        if c.ansi_quadrangle:
            from ..tolerance import ANSI_EDITION

            chroma.append(f"inside the {ANSI_EDITION} {quad} quadrangle")
        if c.max_sdcm is not None:
            chroma.append(_ellipse_text(claims))
        rows.append(("Chromaticity", f"nominal {c.nominal_cct_K} K: " + "; ".join(chroma)))
    rows += _decision_rows(doc, claims)
    y = _kv(p, p.left, header_y + 0.02, rows, label_w=1.05, chars=92)
    _verdict_badge(p, p.right - 1.6, header_y, doc["verdict"])
    y += 0.05
    p.text(
        p.left,
        y,
        f"Samples: {cnt['pass']} pass, {cnt['inconclusive']} inconclusive, {cnt['fail']} FAIL "
        f"(of {n}). A sample fails if any check fails; it is inconclusive if none fails and any is "
        f"inconclusive.",
        fontsize=6.5,
    )
    y += 0.2
    nonpass = [(k + 1, s) for k, s in enumerate(doc["samples"]) if s["verdict"] != "pass"]
    if nonpass:
        text = "; ".join(
            f"#{k} {s['name']} {VERDICT_STYLE[s['verdict']]['word']} "
            f"({', '.join(_label(ch['metric'])[0] for ch in s['checks'] if ch['result'] != 'pass')})"
            for k, s in nonpass
        )
        lines = textwrap.wrap("Not passing: " + text, 150)
        if len(lines) > 4:
            lines = lines[:3] + [shorten(" ".join(lines[3:]), 150)]
        for line in lines:
            p.text(p.left, y, line, fontsize=6.3)
            y += 0.12
    y += 0.12

    # Batch summary: one row per claim.
    p.text(
        p.left,
        y,
        "Batch summary (statistics of the measured values over all samples; ANSI quadrangle: of the "
        "uv margin to the nearest edge)",
        fontsize=7.5,
        weight="bold",
    )
    y += 0.2
    cols = (
        ("Claim", 1.2),
        ("Limit", 0.95),
        ("U (k = 2)", 0.55),
        ("pass/incon./FAIL", 0.95),
        ("Mean", 0.7),
        ("Std", 0.7),
        ("Min", 0.7),
        ("Max", 0.7),
        ("Unit", 0.5),
    )
    xs = np.concatenate([[p.left], p.left + np.cumsum([w for _, w in cols[:-1]])])
    for (head, _), x in zip(cols, xs):
        p.text(x, y, head, fontsize=6.3, weight="bold")
    y += 0.15
    p.rule(y - 0.03, lw=0.3)
    first = doc["samples"][0]["checks"]
    for check in first:
        m = check["metric"]
        st = doc["summary"][m]
        label, unit = _label(m)
        U = claims.uncertainty.get(m)

        def stat(v: Any, m: str = m) -> str:
            if m == "ansi_quadrangle":
                return "n/a" if v is None else f"{v:+.4f}"
            return _value_text(m, v)

        cells = [
            label,
            _limit_text(check, quad),
            "\u2013" if U is None else _num(U),
            f"{st['count_pass']} / {st.get('count_inconclusive', 0)} / {st.get('count_fail', 0)}",
            stat(st["mean"]),
            stat(st["std"]).lstrip("+"),
            stat(st["min"]),
            stat(st["max"]),
            "uv" if m == "ansi_quadrangle" else unit,
        ]
        for text, x in zip(cells, xs):
            p.text(x, y, text, fontsize=6.3)
        y += 0.15
    p.rule(y - 0.03, lw=0.3)
    y += 0.12

    # Charts: the whole batch, and a zoom on the claimed ellipse.
    p.text(
        p.left,
        y,
        "Chromaticity of the samples against the claimed regions (markers: the result of the "
        "chromaticity claims alone; the table gives every claim)",
        fontsize=7.5,
        weight="bold",
    )
    y += 0.2
    bottom = p.h - p.MARGIN - _FOOTER_H
    gap = 0.78
    side = min((p.width - 2 * gap + 0.2) / 2.0, bottom - y - 0.95)
    x0 = p.left + gap - 0.2
    ax = p.axes(x0, y + 0.25, side, side)
    axz = p.axes(x0 + side + gap, y + 0.25, side, side) if outlines else None
    zoom_win = None
    if axz is not None:  # drawn first: the whole-batch view numbers only the points outside the zoom
        verdict_chart(analysis, axz, doc, claims, diagram=diagram, zoom=True, legend=False, outlines=outlines)
        zoom_win = (*axz.get_xlim(), *axz.get_ylim())
    handles = verdict_chart(
        analysis, ax, doc, claims, diagram=diagram, legend=False, number_outside=zoom_win, outlines=outlines
    )
    ax.set_title("whole batch; " + ax.get_title(loc="left"), fontsize=5.5, color=GREY, loc="left")
    if axz is not None:
        from matplotlib.patches import Rectangle

        x_lo, x_hi = axz.get_xlim()
        y_lo, y_hi = axz.get_ylim()
        ax.add_patch(
            Rectangle(
                (x_lo, y_lo), x_hi - x_lo, y_hi - y_lo, fill=False, ec=GREY, lw=0.6, linestyle=(0, (1, 1)), zorder=4
            )
        )
        ax.annotate(
            "zoom →",
            (x_hi, y_hi),
            xytext=(2, 2),
            textcoords="offset points",
            fontsize=5.5,
            color=GREY,
            ha="left",
            va="bottom",
        )
        axz.set_title(f"zoom (dotted box at left) on {outlines[-1].label}", fontsize=5.5, color=GREY, loc="left")
    p.fig.legend(
        handles=handles,
        loc="upper center",
        ncol=len(handles),
        fontsize=6.3,
        frameon=False,
        bbox_to_anchor=(0.5, 1.0 - (y + 0.25 + side + 0.42) / p.h),
        handlelength=2.4,
        title=None,
    )
    _footer(p, meta, page_label)
    return p.fig


def _cell_hatch(p: _Page, x: float, y: float, w: float, h: float, hatch: str) -> None:
    from matplotlib.patches import Rectangle

    p.fig.add_artist(
        Rectangle(
            (x / p.w, 1 - (y + h) / p.h),
            w / p.w,
            h / p.h,
            transform=p.fig.transFigure,
            fc="white",
            ec="#555555",
            lw=0.4,
            hatch=hatch,
            zorder=0,
        )
    )


def _band(p: _Page, y: float, h: float) -> None:
    from matplotlib.patches import Rectangle

    p.fig.add_artist(
        Rectangle(
            (p.left / p.w, 1 - (y + h) / p.h),
            p.width / p.w,
            h / p.h,
            transform=p.fig.transFigure,
            fc="#f2f2f2",
            ec="none",
            zorder=-1,
        )
    )


def _marker(p: _Page, x: float, y: float, verdict: str) -> None:
    from matplotlib.lines import Line2D

    st = VERDICT_STYLE[verdict]
    p.fig.add_artist(
        Line2D(
            [x / p.w],
            [1 - y / p.h],
            transform=p.fig.transFigure,
            linestyle="none",
            marker=st["marker"],
            markersize=st["size"],
            mfc=st["mfc"],
            mec=INK,
            mew=0.7,
        )
    )


def _wrap_cell(text: str, chars: int) -> list[str]:
    """A header cell's text in at most two lines of ``chars``, never cut mid-number."""
    lines = textwrap.wrap(text, max(6, chars), break_long_words=False) or [""]
    if len(lines) > 2:
        lines = [lines[0], shorten(" ".join(lines[1:]), max(6, chars))]
    return lines


def verdict_table_pages(doc: dict, claims, meta: dict, *, paper: str, page_labels: Sequence[str]) -> Iterator[Any]:
    """The verdict table: one row per sample, one column per claim (value and result); yields figures.

    :data:`VERDICT_ROWS_PER_PAGE` samples and :data:`VERDICT_COLUMNS_PER_PAGE` claims a page.
    """
    samples = doc["samples"]
    n = len(samples)
    groups = _column_groups(_metrics(doc))
    quad = f"{claims.chromaticity.nominal_cct_K}K" if claims.chromaticity is not None else None
    k_page = 0
    for start in range(0, n, VERDICT_ROWS_PER_PAGE):
        stop = min(n, start + VERDICT_ROWS_PER_PAGE)
        for g, metrics in enumerate(groups):
            p = _Page(paper)
            part = f"; claims {g + 1} of {len(groups)} groups" if len(groups) > 1 else ""
            y = _header(
                p,
                f"Claims verdict by sample ({n} samples)",
                f"samples {start + 1}\u2013{stop} of {n}{part}; {claims.source}",
                page_labels[k_page],
            )
            k_page += 1
            name_w, verdict_w, num_w = 1.4, 0.9, 0.3
            col_w = (p.width - num_w - name_w - verdict_w) / max(1, len(metrics))
            x_cols = p.left + num_w + name_w + verdict_w + col_w * np.arange(len(metrics))
            p.text(p.left, y, "#", fontsize=6.5, weight="bold")
            p.text(p.left + num_w, y, "Sample", fontsize=6.5, weight="bold")
            if any(s.get("declared_id") for s in samples[start:stop]):
                p.text(p.left + num_w, y + 0.12, "declared id", fontsize=5.8, color=GREY)
            p.text(p.left + num_w + name_w, y, "Verdict", fontsize=6.5, weight="bold")
            first = samples[0]["checks"]
            by_metric = {c["metric"]: c for c in first}
            for m, x in zip(metrics, x_cols):
                label, unit = _label(m)
                head = label + (f" [{unit}]" if unit else "")
                unit_below = len(head) * 0.056 > col_w - 0.05
                if unit_below:
                    head = label
                p.text(x + 0.05, y, shorten(head, int((col_w - 0.05) / 0.056)), fontsize=6.5, weight="bold")
                U = claims.uncertainty.get(m)
                lim = _limit_text(by_metric[m], quad if m != "ansi_quadrangle" else None)
                if m == "ansi_quadrangle" and quad:
                    lim = f"inside {quad}"
                if unit_below and unit:
                    lim += f" {unit}"
                lim += f", U {_num(U)}" if U is not None else ""
                for j, line in enumerate(_wrap_cell(lim, int((col_w - 0.05) / 0.045))):
                    p.text(x + 0.05, y + 0.12 + 0.09 * j, line, fontsize=5.8)
            y += 0.36
            p.rule(y - 0.04, lw=0.4)
            pitch = 0.235
            for i in range(start, stop):
                s = samples[i]
                top = y - 0.03
                if (i - start) % 2 == 1:
                    _band(p, top, pitch)
                p.text(p.left, y, str(i + 1), fontsize=6.3)
                p.text(p.left + num_w, y, shorten(s["name"], int(name_w / 0.048)), fontsize=6.3)
                did = s.get("declared_id")
                if did:
                    p.text(p.left + num_w, y + 0.1, shorten(did, int(name_w / 0.042)), fontsize=5.5, color=GREY)
                _marker(p, p.left + num_w + name_w + 0.06, y + 0.06, s["verdict"])
                word = VERDICT_STYLE[s["verdict"]]["word"]
                p.text(
                    p.left + num_w + name_w + 0.16,
                    y,
                    word,
                    fontsize=6.5,
                    weight="bold" if s["verdict"] != "pass" else "normal",
                )
                checks = {c["metric"]: c for c in s["checks"]}
                for m, x in zip(metrics, x_cols):
                    c = checks[m]
                    r = c["result"]
                    st = VERDICT_STYLE[r]
                    if st["hatch"]:
                        _cell_hatch(p, x + 0.02, top, col_w - 0.04, pitch - 0.01, st["hatch"])
                    box = {"boxstyle": "square,pad=0.08", "fc": "white", "ec": "none"} if st["hatch"] else None
                    p.text(x + 0.05, y, _value_text(m, c["value"]), fontsize=6.3, bbox=box)
                    p.text(
                        x + 0.05,
                        y + 0.1,
                        st["word"],
                        fontsize=5.6,
                        bbox=box,
                        weight="bold" if r != "pass" else "normal",
                        color=INK if r != "pass" else GREY,
                    )
                y += pitch
            p.rule(y - 0.04, lw=0.4)
            y += 0.06
            key = (
                "Each cell: measured value, then the result of its check. Hatched cells do not pass: "
                "diagonal lines FAIL, dots inconclusive. Markers as in the chart: circle pass, triangle "
                "inconclusive, cross FAIL."
            )
            for line in textwrap.wrap(key, 150):
                p.text(p.left, y, line, fontsize=6)
                y += 0.11
            if any(c["metric"] == "ansi_quadrangle" for c in first):
                p.text(
                    p.left,
                    y,
                    "ANSI quadrangle: the value is the quadrangle that holds the sample "
                    "(none: outside all ANSI C78.377 quadrangles).",
                    fontsize=6,
                )
                y += 0.11
            _footer(p, meta, page_labels[k_page - 1])
            yield p.fig


def verdict_pages(
    analysis, doc: dict, claims, meta: dict, *, paper: str, diagram: str = "uv", page_labels: Sequence[str]
) -> Iterator[tuple[str, Any]]:
    """All verdict pages as (title, figure): the overview, then the table pages."""
    yield (
        "claims verdict",
        verdict_page(analysis, doc, claims, meta, paper=paper, diagram=diagram, page_label=page_labels[0]),
    )
    for k, fig in enumerate(verdict_table_pages(doc, claims, meta, paper=paper, page_labels=page_labels[1:])):
        yield f"claims verdict table {k + 1}", fig
