"""Charts of a report, each a function ``chart(analysis, ax, ...)`` that draws on a given Axes.

A library user can put any of them in a figure of their own::

    import matplotlib.pyplot as plt
    from cctkit.report import charts
    fig, ax = plt.subplots()
    charts.chromaticity_chart(analysis, ax, diagram="uvp")

Charts only draw: every number comes from :class:`cctkit.analysis.Analysis` or from a
library function (:func:`cctkit.rendering.compare_to_reference`, :mod:`cctkit.locus`,
:mod:`cctkit.tolerance`).  Where a part of the analysis has not been computed the chart
says so instead of failing.  Charts are readable in greyscale: series differ by line
style and marker, not by colour alone.  matplotlib is imported by the caller (the
functions use only Axes methods), so importing this module costs nothing.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Sequence

import textwrap

import numpy as np

from ..constants import DUV_LIMIT, VISIBLE_BAND_NM

__all__ = [
    "DIAGRAMS",
    "Outline",
    "series_style",
    "shorten",
    "not_computed",
    "reference_comparison",
    "spectrum_chart",
    "difference_chart",
    "spectra_overlay_chart",
    "chromaticity_chart",
    "ansi_outlines",
    "ellipse_outline",
    "cri_chart",
    "hue_fidelity_chart",
    "chroma_shift_chart",
    "vector_graphic_chart",
    "index_comparison_chart",
]

#: Chromaticity diagrams a chart can be drawn in, with their axis names.
DIAGRAMS = {
    "uv": ("u (CIE 1960) [1]", "v (CIE 1960) [1]"),
    "uvp": ("u\u2032 (CIE 1976) [1]", "v\u2032 (CIE 1976) [1]"),
    "xy": ("x (CIE 1931) [1]", "y (CIE 1931) [1]"),
}

INK = "#111111"
GREY = "#777777"
LIGHT = "#d9d9d9"
# Dark, well-separated hues for screens; every series also has its own line style and
# marker, so a greyscale print stays legible.
_SERIES_COLOURS = ("#1b1b1b", "#1f4e9a", "#b35900", "#2d7a3a", "#7a1f6b", "#8a6d00")
_SERIES_LINES = ("-", "--", "-.", ":")
_SERIES_MARKERS = ("o", "s", "^", "D", "v", "P", "X", "<", ">", "h", "*", "p")


def series_style(i: int) -> dict[str, Any]:
    """Colour, line style and marker of series ``i`` (distinct in greyscale for i < 12)."""
    return {
        "color": _SERIES_COLOURS[i % len(_SERIES_COLOURS)],
        "linestyle": _SERIES_LINES[i % len(_SERIES_LINES)],
        "marker": _SERIES_MARKERS[i % len(_SERIES_MARKERS)],
    }


def shorten(text: str, width: int, *, keep: str = "end") -> str:
    """``text`` cut to at most ``width`` characters with an ellipsis.

    ``keep="end"`` keeps the start (names); ``keep="tail"`` keeps the end (file paths).
    """
    text = " ".join(str(text).split())
    if len(text) <= width:
        return text
    if width <= 1:
        return "\u2026"
    if keep == "tail":
        return "\u2026" + text[-(width - 1):]
    return text[: width - 1].rstrip() + "\u2026"


def not_computed(ax, what: str) -> None:
    """Mark ``ax`` as a placeholder: ``what`` was not computed for this report."""
    ax.set_xticks([])
    ax.set_yticks([])
    for side in ax.spines.values():
        side.set_linestyle(":")
        side.set_edgecolor(GREY)
    ax.text(0.5, 0.5, f"{what}\nnot computed", transform=ax.transAxes, ha="center", va="center",
            color=GREY, fontsize="small")


def _finite(x) -> bool:
    try:
        return bool(np.isfinite(float(x)))
    except (TypeError, ValueError):
        return False


def reported_cct_K(analysis) -> np.ndarray:
    """The CCT of each spectrum where the analysis reports one (|Duv| <= 0.05), else NaN [K]."""
    return np.where(analysis.cct.in_domain, np.asarray(analysis.cct.cct_K, dtype=np.float64), np.nan)


def reference_comparison(analysis):
    """:func:`cctkit.rendering.compare_to_reference` of every spectrum of ``analysis``.

    The reference is built at the reported CCT; where no CCT is reported (|Duv| > 0.05)
    the reference row is NaN and charts say "no reference".
    """
    from ..rendering import Rendition, compare_to_reference

    rendition = None
    if analysis.cri is not None and analysis.tm30 is not None:  # reuse what analyse() computed
        rendition = Rendition(cct_K=analysis.tm30.cct_K, duv=analysis.cct.duv, cri=analysis.cri, tm30=analysis.tm30)
    with np.errstate(all="ignore"):
        return compare_to_reference(analysis.spectra.values, reported_cct_K(analysis), rendition=rendition)


# ---------------------------------------------------------------- spectra


def _band(ax) -> None:
    lo, hi = VISIBLE_BAND_NM
    ax.axvspan(lo, hi, color="#f2f2f2", zorder=0, lw=0)
    ax.axvline(lo, color=LIGHT, lw=0.6, zorder=0)
    ax.axvline(hi, color=LIGHT, lw=0.6, zorder=0)


def spectrum_chart(analysis, ax, *, index: int = 0, comparison=None, legend: bool = True) -> None:
    """Test spectrum and its reference illuminant at the same CCT, both scaled to Y = 100.

    The scaling (equal luminance, CIE 1931 2 deg) and the reference (CIE 224:2017
    Planckian / daylight / blend) are those of :func:`cctkit.rendering.compare_to_reference`.
    The shaded band is 380-780 nm, the range CIE 15:2018 requires a measurement to cover.
    """
    cmp = comparison if comparison is not None else reference_comparison(analysis)
    wl = cmp.wavelength_nm
    _band(ax)
    test = cmp.test[index]
    ref = cmp.reference[index]
    ax.plot(wl, test, color=INK, lw=1.0, label="test source")
    has_ref = bool(np.all(np.isfinite(ref)))
    if has_ref:
        kind = cmp.reference_kind[index]
        ax.plot(wl, ref, color=GREY, lw=1.0, linestyle="--",
                label=f"reference ({kind}, {cmp.cct_K[index]:.0f} K)")
    else:
        ax.text(0.98, 0.95, "no reference: CCT not reported", transform=ax.transAxes, ha="right", va="top",
                color=GREY, fontsize="small")
    ax.set_xlim(wl[0], wl[-1])
    top = np.nanmax(np.concatenate([test, ref if has_ref else test]))
    ax.set_ylim(min(0.0, float(np.nanmin(test))), 1.08 * top if np.isfinite(top) and top > 0 else 1.0)
    ax.set_ylabel("Rel. power [Y = 100]")
    ax.set_xlabel("Wavelength [nm]")
    ax.text(0.5 * sum(VISIBLE_BAND_NM), 0.0, "380\u2013780 nm", transform=ax.get_xaxis_transform(),
            ha="center", va="bottom", fontsize="x-small", color=GREY)
    if legend:
        ax.legend(loc="upper left", fontsize="x-small", frameon=False)


def difference_chart(analysis, ax, *, index: int = 0, comparison=None) -> None:
    """Test minus reference per wavelength, on the Y = 100 scale of :func:`spectrum_chart`."""
    cmp = comparison if comparison is not None else reference_comparison(analysis)
    wl = cmp.wavelength_nm
    d = cmp.difference[index]
    _band(ax)
    ax.axhline(0.0, color=GREY, lw=0.6)
    ax.set_xlim(wl[0], wl[-1])
    ax.set_xlabel("Wavelength [nm]")
    ax.set_ylabel("\u0394 [Y = 100]")
    if not np.all(np.isfinite(d)):
        ax.text(0.5, 0.5, "no reference: CCT not reported", transform=ax.transAxes, ha="center", va="center",
                color=GREY, fontsize="small")
        ax.set_ylim(-1, 1)
        return
    ax.fill_between(wl, 0.0, d, where=d >= 0, color="#bdbdbd", lw=0, step=None, label="test above")
    ax.fill_between(wl, 0.0, d, where=d < 0, facecolor="white", edgecolor=GREY, hatch="////", lw=0,
                    label="test below")
    ax.plot(wl, d, color=INK, lw=0.7)
    lim = float(np.max(np.abs(d))) * 1.15 or 1.0
    ax.set_ylim(-lim, lim)
    ax.legend(loc="upper right", fontsize="x-small", frameon=False, ncol=2)


def spectra_overlay_chart(analysis, ax, *, indices: Sequence[int] | None = None, comparison=None,
                          labels: Sequence[str] | None = None, legend: bool = True) -> None:
    """Several test spectra overlaid, each scaled to Y = 100 (so their shapes compare)."""
    cmp = comparison if comparison is not None else reference_comparison(analysis)
    idx = list(range(len(analysis))) if indices is None else list(indices)
    wl = cmp.wavelength_nm
    _band(ax)
    many = len(idx) > 12
    for k, i in enumerate(idx):
        if many:
            ax.plot(wl, cmp.test[i], color=INK, lw=0.4, alpha=0.35)
            continue
        st = series_style(k)
        label = labels[k] if labels is not None else f"{k + 1}"
        ax.plot(wl, cmp.test[i], color=st["color"], linestyle=st["linestyle"], marker=st["marker"],
                markevery=(5 * k % 40, 40), markersize=3, lw=0.9, label=label)
    ax.set_xlim(wl[0], wl[-1])
    ax.set_ylim(bottom=min(0.0, float(np.nanmin(cmp.test[idx]))))
    ax.set_xlabel("Wavelength [nm]")
    ax.set_ylabel("Rel. power [Y = 100]")
    if legend and not many:
        ax.legend(loc="upper left", fontsize="x-small", frameon=False, ncol=2 if len(idx) > 4 else 1)
    if many:
        ax.text(0.99, 0.97, f"{len(idx)} spectra", transform=ax.transAxes, ha="right", va="top",
                fontsize="small", color=GREY)


# ---------------------------------------------------------------- chromaticity


@dataclass(frozen=True)
class Outline:
    """A closed outline to draw on a chromaticity chart (tolerance quadrangle, SDCM ellipse, ...).

    ``points`` (M, 2) are in ``space`` (``"uv"``, ``"uvp"`` or ``"xy"``); they are converted
    to the chart's diagram with the :mod:`cctkit.colorimetry` functions.  Straight edges
    between few corners stay straight in every diagram (the maps between them are
    projective), so four corners are enough for a quadrangle.
    """

    label: str
    points: np.ndarray
    space: str = "xy"
    linestyle: str = "-"


def _convert(points, space: str, diagram: str) -> np.ndarray:
    from ..colorimetry import uv_to_uvp, uv_to_xy, uvp_to_uv, xy_to_uv

    p = np.asarray(points, dtype=np.float64)
    if space == diagram:
        return p
    uv = p if space == "uv" else (uvp_to_uv(p) if space == "uvp" else xy_to_uv(p))
    if diagram == "uv":
        return uv
    return uv_to_uvp(uv) if diagram == "uvp" else uv_to_xy(uv)


def ansi_outlines() -> tuple[Outline, ...]:
    """The ANSI C78.377 quadrangles of :mod:`cctkit.tolerance` as outlines."""
    from ..tolerance import ansi_quadrangles

    return tuple(Outline(q.name, np.asarray(q.corners_xy), "xy", "-") for q in ansi_quadrangles())


def ellipse_outline(ellipse, steps: float = 1.0, *, label: str | None = None) -> Outline:
    """A :class:`cctkit.tolerance.Ellipse` at ``steps`` SDCM as an outline."""
    from ..tolerance import ellipse_boundary_xy

    name = label if label is not None else f"{ellipse.name} {steps:g}-step"
    return Outline(name, ellipse_boundary_xy(ellipse, steps), "xy", "--")


# Round CCTs whose isotemperature lines may be drawn, coarse to fine.
_ISO_LEVELS = (
    (2000, 3000, 4000, 5000, 6500, 10000, 20000),
    (1500, 2500, 3500, 4500, 5700, 8000, 15000),
    (2200, 2700, 6000, 7000, 12000),
    (1800, 2400, 2600, 2800, 3200, 3800, 4200, 5300, 9000),
)
_DUV_LINES = (-0.05, -0.04, -0.03, -0.02, -0.01, 0.01, 0.02, 0.03, 0.04, 0.05)
_MIN_HALF_SPAN = {"uv": (0.022, 0.016), "uvp": (0.022, 0.024), "xy": (0.035, 0.03)}


def _window(points: np.ndarray, diagram: str, *, observer: int = 2) -> tuple[float, float, float, float]:
    pts = points[np.all(np.isfinite(points), axis=1)]
    hu, hv = _MIN_HALF_SPAN[diagram]
    if pts.size == 0:
        from ..locus import planckian_uv

        pts = _convert(planckian_uv(np.array([4000.0]), observer=observer), "uv", diagram)
    lo = pts.min(axis=0)
    hi = pts.max(axis=0)
    c = 0.5 * (lo + hi)
    half = np.maximum(0.5 * (hi - lo) * 1.25, [hu, hv])
    return float(c[0] - half[0]), float(c[0] + half[0]), float(c[1] - half[1]), float(c[1] + half[1])


def _fit_box(ax, win):
    """Widen the window so one unit is as long on both axes of ``ax`` (no distortion of distances)."""
    pos = ax.get_position()
    w_in = pos.width * ax.figure.get_figwidth()
    h_in = pos.height * ax.figure.get_figheight()
    x0, x1, y0, y1 = win
    sx, sy = (x1 - x0) / w_in, (y1 - y0) / h_in  # data units per inch
    s = max(sx, sy)
    cx, cy = 0.5 * (x0 + x1), 0.5 * (y0 + y1)
    return cx - 0.5 * s * w_in, cx + 0.5 * s * w_in, cy - 0.5 * s * h_in, cy + 0.5 * s * h_in


def _inside(p: np.ndarray, win) -> np.ndarray:
    return (p[:, 0] >= win[0]) & (p[:, 0] <= win[1]) & (p[:, 1] >= win[2]) & (p[:, 1] <= win[3])


def chromaticity_chart(
    analysis,
    ax,
    *,
    indices: Sequence[int] | None = None,
    diagram: str = "uv",
    regions: Sequence[Outline] | None = None,
    annotate: bool | None = None,
    legend_labels: Sequence[str] | None = None,
    mark_samples: bool = True,
    window: tuple[float, float, float, float] | None = None,
) -> None:
    """The region around the Planckian locus with the sample point(s).

    Draws the Planckian locus (:func:`cctkit.locus.planckian_locus`), isotemperature
    lines at round CCTs (:func:`cctkit.locus.isotemperature_line`, Duv -0.05...+0.05),
    lines of constant Duv every 0.01 (:func:`cctkit.locus.uv_from_cct_duv`) and the
    chromaticity of each spectrum.  Locus and lines are those of the analysis's observer
    (``analysis.observer``: CIE 1931 2 deg or CIE 1964 10 deg), the observer its
    chromaticities are in.

    Parameters
    ----------
    analysis
        A :class:`cctkit.analysis.Analysis`.
    ax
        matplotlib Axes to draw on.
    indices
        Spectra to plot (default all).
    diagram
        ``"uv"`` (CIE 1960, default), ``"uvp"`` (CIE 1976 u'v') or ``"xy"`` (CIE 1931).
    regions
        Extra outlines (:class:`Outline`: tolerance quadrangles, SDCM ellipses).  ``None``
        draws the ANSI C78.377 quadrangles of :mod:`cctkit.tolerance` that fall in the
        window (2 deg observer only: they are defined for it); ``()`` draws none.
    annotate
        Number the points 1, 2, ... (default: when more than one and at most 12 points).
    legend_labels
        Legend text per plotted point (at most 12 points get a legend).
    mark_samples
        Draw the sample points (False: the caller marks them in its own style).
    window
        The view (x0, x1, y0, y1) in ``diagram`` coordinates, before it is widened to equal
        scales on both axes (default: around the points).
    """
    from ..locus import isotemperature_line, planckian_locus, uv_from_cct_duv

    if diagram not in DIAGRAMS:
        raise ValueError(f"diagram must be one of {', '.join(DIAGRAMS)}, got {diagram!r}")
    observer = int(analysis.observer)
    idx = list(range(len(analysis))) if indices is None else list(indices)
    sample = {"uv": analysis.uv, "uvp": analysis.uvp, "xy": analysis.xy}[diagram][idx]
    win = _window(np.asarray(sample, dtype=np.float64), diagram, observer=observer) if window is None else \
        tuple(float(w) for w in window)

    T = np.geomspace(1000.0, 100000.0, 700)
    locus = _convert(planckian_locus(T, observer=observer).uv, "uv", diagram)
    for duv in _DUV_LINES:
        line = _convert(uv_from_cct_duv(T, np.full_like(T, duv), observer=observer), "uv", diagram)
        ax.plot(line[:, 0], line[:, 1], color=GREY, lw=0.5, linestyle=":", zorder=1)
        inside = np.flatnonzero(_inside(line, win))
        if inside.size:
            j = inside[len(inside) // 2]
            ax.text(line[j, 0], line[j, 1], f"{duv:+.2f}", fontsize=5, color=GREY, ha="center", va="center",
                    zorder=2, bbox={"boxstyle": "square,pad=0.05", "fc": "white", "ec": "none"})
    ax.plot(locus[:, 0], locus[:, 1], color=INK, lw=1.1, zorder=3, label="Planckian locus")

    win = _fit_box(ax, win)
    ax.set_xlim(win[0], win[1])
    ax.set_ylim(win[2], win[3])
    placed: list[float] = []
    span_x = win[1] - win[0]
    duv_grid = np.linspace(-DUV_LIMIT, DUV_LIMIT, 41)
    for level in _ISO_LEVELS:
        for t in level:
            line = _convert(isotemperature_line(float(t), duv_grid, observer=observer), "uv", diagram)
            inside = np.flatnonzero(_inside(line, win))
            if inside.size < 2:
                continue
            j = inside[0]  # the low-Duv end inside the window
            fx = (line[j, 0] - win[0]) / span_x
            if any(abs(fx - p) < 0.17 for p in placed):
                continue  # too close to a line already labelled: leave this level out here
            placed.append(fx)
            ax.plot(line[:, 0], line[:, 1], color=GREY, lw=0.6, zorder=2)
            ax.text(line[j, 0], line[j, 1], f"{t} K", fontsize=5.5, color=INK, ha="center", va="bottom",
                    zorder=4, bbox={"boxstyle": "square,pad=0.1", "fc": "white", "ec": "none"})

    # ANSI C78.377 quadrangles are defined for the 2 deg observer: not drawn by default on a 10 deg diagram.
    outlines = (ansi_outlines() if observer == 2 else ()) if regions is None else tuple(regions)
    drawn_region = False
    for o in outlines:
        pts = _convert(o.points, o.space, diagram)
        if not _inside(pts, win).any():
            continue
        closed = np.vstack([pts, pts[:1]])
        ax.plot(closed[:, 0], closed[:, 1], color="#4d4d4d", lw=0.7, linestyle=o.linestyle, zorder=2,
                label=None)
        top = pts[np.argmax(pts[:, 1])]  # label above the highest corner, clear of the centre
        if _inside(top[None], win)[0]:
            ax.annotate(o.label, top, xytext=(0, 1.5), textcoords="offset points", fontsize=5, color="#4d4d4d",
                        ha="center", va="bottom", zorder=2)
        drawn_region = True

    annotate = (1 < len(idx) <= 12) if annotate is None else annotate
    pts = np.asarray(sample, dtype=np.float64)
    if not mark_samples:
        pass
    elif len(idx) <= 12:
        for k, p in enumerate(pts):
            st = series_style(k)
            lab = legend_labels[k] if legend_labels is not None else None
            ax.plot(p[0], p[1], linestyle="none", marker=st["marker"], markersize=5, mfc="white" if k % 2 else
                    st["color"], mec=st["color"], mew=1.0, zorder=5, label=lab)
    else:
        ax.plot(pts[:, 0], pts[:, 1], linestyle="none", marker="o", markersize=2.5, mfc="white", mec=INK,
                mew=0.6, zorder=5)
    if annotate and mark_samples:
        for k, p in enumerate(pts):
            if np.all(np.isfinite(p)):
                ax.annotate(str(k + 1), p, xytext=(3, 3), textcoords="offset points", fontsize=5, zorder=6)

    ax.set_aspect("equal", adjustable="box")
    ax.set_xlabel(DIAGRAMS[diagram][0])
    ax.set_ylabel(DIAGRAMS[diagram][1])
    notes = ["solid: locus and isotemperature lines", "dotted: Duv in steps of 0.01"]
    if observer != 2:
        notes.insert(0, "CIE 1964 10\u00b0 observer")
    if drawn_region:
        notes.append("outlines: ANSI C78.377 quadrangles" if regions is None else "outlines: tolerance regions")
    width_in = ax.get_position().width * ax.figure.get_figwidth()
    ax.set_title(textwrap.fill("; ".join(notes), max(20, int(width_in / 0.037))), fontsize=5.5, color=GREY,
                 loc="left")
    if legend_labels is not None and len(idx) <= 12 and mark_samples:
        ax.legend(loc="lower right", fontsize="x-small", frameon=True, framealpha=0.9, edgecolor=LIGHT)


# ---------------------------------------------------------------- colour rendering


def _bar_labels(ax, xs, values, fmt="{:.0f}", fontsize=5.5) -> None:
    for x, v in zip(xs, values):
        if np.isfinite(v):
            ax.text(x, v, fmt.format(v), ha="center", va="bottom" if v >= 0 else "top", fontsize=fontsize)


def cri_chart(analysis, ax, *, index: int = 0) -> None:
    """CIE 13.3-1995 Ra and R1-R14 as bars; R9 (strong red) hatched and named."""
    from ..rendering import DC_LIMIT

    cri = analysis.cri
    if cri is None:
        not_computed(ax, "CIE 13.3 colour rendering")
        return
    R = np.asarray(cri.R[index], dtype=np.float64)
    Ra = float(np.asarray(cri.Ra)[index])
    values = np.concatenate([[Ra], R])
    names = ["Ra"] + [f"R{i}" for i in range(1, 15)]
    xs = np.arange(values.size, dtype=float)
    xs[1:] += 0.6  # a gap between the general index and the special ones
    if not np.all(np.isfinite(values)):
        not_computed(ax, "CIE 13.3 colour rendering (no CCT)")
        return
    bars = ax.bar(xs, values, width=0.75, color="#bdbdbd", edgecolor=INK, lw=0.5)
    bars[0].set_facecolor("#636363")
    bars[9].set_facecolor("white")
    bars[9].set_hatch("xxxx")
    _bar_labels(ax, xs, values)
    ax.axhline(0.0, color=INK, lw=0.5)
    ax.set_xticks(xs, names, fontsize=6)
    lo = min(0.0, float(np.min(values)) - 12.0)
    ax.set_ylim(lo, 112)
    ax.set_ylabel("Index [1]")
    ax.set_xlim(xs[0] - 0.7, xs[-1] + 0.7)
    valid = bool(np.asarray(cri.valid)[index])
    note = "R1\u2013R8 average to Ra; R9 (strong red) hatched"
    if not valid:
        dc = float(np.asarray(cri.dc)[index])
        note += f"; NOT VALID: DC = {dc:.4f} \u2265 {DC_LIMIT:g}"
    ax.set_title(note, fontsize=6, loc="left", color=INK if not valid else GREY)


def _tm30(analysis, ax, what: str):
    t = analysis.tm30
    if t is None:
        not_computed(ax, what)
    return t


_BIN_X = np.arange(1, 17)


def hue_fidelity_chart(analysis, ax, *, index: int = 0) -> None:
    """TM-30-20 local fidelity Rf,h1-Rf,h16 per hue bin."""
    t = _tm30(analysis, ax, "TM-30 hue-bin fidelity")
    if t is None:
        return
    v = np.asarray(t.Rf_h[index], dtype=np.float64)
    ax.bar(_BIN_X, v, width=0.75, color="#bdbdbd", edgecolor=INK, lw=0.5)
    _bar_labels(ax, _BIN_X, v, fontsize=5)
    ax.set_xticks(_BIN_X, [str(i) for i in _BIN_X], fontsize=6)
    ax.set_xlim(0.3, 16.7)
    ax.set_ylim(0, 112)
    ax.set_xlabel("Hue bin [1\u201316]")
    ax.set_ylabel("Rf,h [1]")


def chroma_shift_chart(analysis, ax, *, index: int = 0) -> None:
    """TM-30-20 local chroma shift Rcs,h1-Rcs,h16 [%]; decreases hatched."""
    t = _tm30(analysis, ax, "TM-30 chroma shift")
    if t is None:
        return
    from ..rendering.tm30 import chroma_shift_percent

    v = chroma_shift_percent(t)[index]
    bars = ax.bar(_BIN_X, v, width=0.75, color="#bdbdbd", edgecolor=INK, lw=0.5)
    for b, x in zip(bars, v):
        if x < 0:
            b.set_facecolor("white")
            b.set_hatch("////")
    _bar_labels(ax, _BIN_X, v, fontsize=5)
    ax.axhline(0.0, color=INK, lw=0.5)
    ax.set_xticks(_BIN_X, [str(i) for i in _BIN_X], fontsize=6)
    ax.set_xlim(0.3, 16.7)
    lim = max(10.0, float(np.nanmax(np.abs(v))) * 1.3) if np.any(np.isfinite(v)) else 10.0
    ax.set_ylim(-lim, lim)
    ax.set_xlabel("Hue bin [1\u201316]")
    ax.set_ylabel("Rcs,h [%]")


def vector_graphic_chart(analysis, ax, *, index: int = 0) -> None:
    """TM-30 colour vector graphic: reference circle and test polygon, normalised.

    The vertices come from :func:`cctkit.rendering.tm30.vector_graphic_xy`; this only draws.
    """
    from ..rendering.tm30 import vector_graphic_xy

    t = _tm30(analysis, ax, "TM-30 colour vector graphic")
    if t is None:
        return
    ref_xy, test_xy = vector_graphic_xy(t)
    c, s = ref_xy[index, :, 0], ref_xy[index, :, 1]
    tx, ty = test_xy[index, :, 0], test_xy[index, :, 1]
    circle = np.linspace(0.0, 2.0 * np.pi, 181)
    for edge in np.arange(16) * (2.0 * np.pi / 16.0):
        ax.plot([0, 1.45 * np.cos(edge)], [0, 1.45 * np.sin(edge)], color=LIGHT, lw=0.4, zorder=0)
    for r in (0.8, 1.2):
        ax.plot(r * np.cos(circle), r * np.sin(circle), color=LIGHT, lw=0.5, linestyle=":", zorder=0)
    ax.plot(np.cos(circle), np.sin(circle), color=GREY, lw=1.0, linestyle="--", label="reference")
    if not np.all(np.isfinite(tx)):
        ax.text(0, 0, "no result", ha="center", va="center", color=GREY)
    else:
        ax.plot(np.append(tx, tx[0]), np.append(ty, ty[0]), color=INK, lw=1.1, marker="o", markersize=2.2,
                label="test")
        for k in range(16):
            ax.annotate("", (tx[k], ty[k]), (c[k], s[k]),
                        arrowprops={"arrowstyle": "-|>", "lw": 0.5, "color": INK, "mutation_scale": 5})
    for k in range(16):
        ax.text(1.33 * c[k], 1.33 * s[k], str(k + 1), ha="center", va="center", fontsize=5, color=GREY)
    ax.set_xlim(-1.45, 1.45)
    ax.set_ylim(-1.45, 1.45)
    ax.set_aspect("equal", adjustable="box")
    ax.set_xticks([-1, 0, 1])
    ax.set_yticks([-1, 0, 1])
    ax.set_xlabel("a\u2032 / C\u2032ref [1]")
    ax.set_ylabel("b\u2032 / C\u2032ref [1]")
    rf = float(np.asarray(t.Rf)[index])
    rg = float(np.asarray(t.Rg)[index])
    if np.isfinite(rf):
        ax.set_title(f"Rf {rf:.0f}   Rg {rg:.0f}", fontsize=6.5, loc="right")
    ax.legend(loc="lower left", bbox_to_anchor=(1.01, 0.0), fontsize=5, frameon=False, borderpad=0.1,
              handlelength=1.5)


def index_comparison_chart(analysis, ax, *, indices: Sequence[int] | None = None) -> None:
    """Ra, R9, Rf and Rg of several spectra as grouped bars (one hatch per spectrum)."""
    cri = analysis.cri
    t = analysis.tm30
    if cri is None and t is None:
        not_computed(ax, "colour rendering")
        return
    idx = list(range(len(analysis))) if indices is None else list(indices)
    nan = np.full(len(analysis), np.nan)
    series = [
        ("Ra", np.asarray(cri.Ra) if cri is not None else nan),
        ("R9", np.asarray(cri.R)[:, 8] if cri is not None else nan),
        ("Rf", np.asarray(t.Rf) if t is not None else nan),
        ("Rg", np.asarray(t.Rg) if t is not None else nan),
    ]
    hatches = ("", "////", "....", "xxxx", "\\\\", "++", "oo", "--", "||", "**", "OO", "..//")
    width = 0.8 / len(idx)
    lo = 0.0
    for k, i in enumerate(idx):
        vals = np.array([s[1][i] for s in series], dtype=np.float64)
        xs = np.arange(len(series)) - 0.4 + (k + 0.5) * width
        shade = ("#636363", "#bdbdbd", "white")[k % 3]
        ax.bar(xs, np.nan_to_num(vals), width=width * 0.92, color=shade, edgecolor=INK, lw=0.5,
               hatch=hatches[k % len(hatches)], label=f"#{k + 1}")
        if len(idx) <= 6:
            _bar_labels(ax, xs, vals, fontsize=5)
        lo = min(lo, float(np.nanmin(vals)) if np.any(np.isfinite(vals)) else 0.0)
    ax.axhline(0.0, color=INK, lw=0.5)
    ax.set_xticks(np.arange(len(series)), [s[0] for s in series])
    ax.set_ylim(min(0.0, lo - 12.0), 125)
    ax.set_ylabel("Index [1]")
    ax.legend(loc="upper right", fontsize=5.5, frameon=False, ncol=min(len(idx), 6))
