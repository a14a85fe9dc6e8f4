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

import functools
import textwrap
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

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
    "hue_wheel_chart",
    "number_text",
    "declutter",
    "layout_problems",
    "measured_mask",
    "IDENTITIES",
]

#: Chromaticity diagrams a chart can be drawn in, with their axis names.
DIAGRAMS = {
    "uv": ("u (CIE 1960) [1]", "v (CIE 1960) [1]"),
    "uvp": ("u' (CIE 1976) [1]", "v' (CIE 1976) [1]"),
    "xy": ("x (CIE 1931) [1]", "y (CIE 1931) [1]"),
}

INK = "#111111"
GREY = "#777777"
LIGHT = "#d9d9d9"
# One identity per spectrum, the same on every chart of a report: a colour for screens,
# and a marker, a hatch and a line style that keep the spectra apart in a greyscale print.
# Twelve of each, chosen so that no two identities share colour, marker or hatch.
IDENTITY_COLOURS = (
    "#1b1b1b",
    "#1f4e9a",
    "#b35900",
    "#2d7a3a",
    "#7a1f6b",
    "#8a6d00",
    "#0e7c86",
    "#a3243b",
    "#5448c8",
    "#6b6b6b",
    "#c0569b",
    "#4a6b00",
)
IDENTITY_MARKERS = ("o", "s", "^", "D", "v", "P", "X", "<", ">", "h", "*", "p")
IDENTITY_HATCHES = ("", "////", "....", "xxxx", "\\\\\\\\", "++++", "oo", "----", "||||", "**", "OO", "..//")
IDENTITY_LINES = ("-", "--", "-.", ":")
#: Spectra that get an identity of their own; larger batches are drawn as one grey cloud.
IDENTITIES = len(IDENTITY_COLOURS)


def _bin_arrows(ax, c, s, tx, ty) -> None:
    """The sixteen hue-bin arrows, reference point (c, s) to test point (tx, ty), as one artist
    (an arrow each was a tenth of a page's drawing time)."""
    ax.quiver(
        c,
        s,
        tx - c,
        ty - s,
        angles="xy",
        scale_units="xy",
        scale=1.0,
        color=INK,
        width=0.004,
        headwidth=4.0,
        headlength=5.0,
        headaxislength=4.5,
        zorder=3.5,
    )


def series_style(i: int) -> dict[str, Any]:
    """The identity of spectrum ``i`` of a report: colour, line style, marker, hatch, marker face.

    Identities 0-11 differ in every one of colour, marker and hatch, so twelve spectra stay
    apart in greyscale; beyond twelve they repeat.
    """
    k = i % IDENTITIES
    return {
        "color": IDENTITY_COLOURS[k],
        "linestyle": IDENTITY_LINES[k % len(IDENTITY_LINES)],
        "marker": IDENTITY_MARKERS[k],
        "hatch": IDENTITY_HATCHES[k],
        "mfc": "white" if k % 2 else IDENTITY_COLOURS[k],
    }


def number_text(value: float, fmt: str = "{:.0f}") -> str:
    """``fmt.format(value)`` with no negative zero (a chroma shift of -0.3 % reads "0", not "-0")."""
    from ..formats import format_number

    text = format_number(float(value), fmt)
    return text.lstrip("+") if text.startswith("+") and float(text) == 0.0 else text


# ---------------------------------------------------------------- text layout


def renderer_of(fig):
    """A renderer for measuring text on ``fig`` (an Agg canvas is attached when it has none)."""
    canvas = fig.canvas
    if not hasattr(canvas, "get_renderer"):
        from matplotlib.backends.backend_agg import FigureCanvasAgg

        canvas = FigureCanvasAgg(fig)
    return canvas.get_renderer()


def _shown_texts(ax) -> list:
    return [t for t in ax.texts if t.get_visible() and t.get_text().strip()]


def text_collisions(texts, renderer, *, pad_px: float = 0.0) -> list[tuple[Any, Any]]:
    """Pairs of visible texts whose boxes (as drawn by ``renderer``) overlap."""
    boxes = [(t, t.get_window_extent(renderer)) for t in texts if t.get_visible() and t.get_text().strip()]
    out = []
    for a in range(len(boxes)):
        ba = boxes[a][1].expanded(1.0, 1.0).padded(pad_px)
        for b in range(a + 1, len(boxes)):
            if ba.overlaps(boxes[b][1]):
                out.append((boxes[a][0], boxes[b][0]))
    return out


def layout_problems(ax) -> list[str]:
    """What is wrong with the text of a chart: labels overlapping each other or the axes frame.

    Empty for a chart drawn by this module (each chart calls :func:`declutter`).
    """
    r = renderer_of(ax.figure)
    ax.apply_aspect()
    frame = ax.get_window_extent(r)
    texts = _shown_texts(ax)
    out = [f"{a.get_text()!r} overlaps {b.get_text()!r}" for a, b in text_collisions(texts, r)]
    for t in texts:
        if getattr(t, "_cctkit_outside", False):
            continue
        bb = t.get_window_extent(r)
        if not (
            frame.x0 - 0.5 <= bb.x0 and bb.x1 <= frame.x1 + 0.5 and frame.y0 - 0.5 <= bb.y0 and bb.y1 <= frame.y1 + 0.5
        ):
            out.append(f"{t.get_text()!r} crosses the axes frame")
    leg = ax.get_legend()
    if leg is not None:
        lb = leg.get_window_extent(r)
        out += [f"{t.get_text()!r} under the legend" for t in texts if t.get_window_extent(r).overlaps(lb)]
    return out


_OFFSETS_PT = ((3, 3), (3, -8), (-9, 3), (-9, -8), (5, -2), (-11, -2), (-2, 5), (-2, -10))


def declutter(ax) -> None:
    """Keep the chart's labels apart: highest ``zorder`` first, each label placed where it
    overlaps no label already placed, the legend or the axes frame; an annotation tries
    the offsets of :data:`_OFFSETS_PT` around its point; a label that fits nowhere is hidden.

    Labels marked ``_cctkit_outside`` (drawn beside the axes on purpose) are left alone, and so
    are labels marked ``_cctkit_fixed``: placed by construction where no other label can reach
    (the hue wheel's ring values and bin numbers); measuring them cost a tenth of a page.
    :func:`layout_problems` still checks both kinds.
    """
    from matplotlib.text import Annotation

    r = renderer_of(ax.figure)
    ax.apply_aspect()
    frame = ax.get_window_extent(r)
    placed = []
    leg = ax.get_legend()
    if leg is not None:
        placed.append(leg.get_window_extent(r))

    def fits(bb) -> bool:
        inside = frame.x0 <= bb.x0 and bb.x1 <= frame.x1 and frame.y0 <= bb.y0 and bb.y1 <= frame.y1
        return inside and not any(bb.overlaps(p) for p in placed)

    texts = [
        t
        for t in _shown_texts(ax)
        if not getattr(t, "_cctkit_outside", False) and not getattr(t, "_cctkit_fixed", False)
    ]
    for t in sorted(texts, key=lambda t: -t.get_zorder()):
        tries: list[tuple[int, int] | None] = [None]
        if isinstance(t, Annotation) and t.anncoords == "offset points" and getattr(t, "_cctkit_movable", False):
            tries = list(_OFFSETS_PT)
        for off in tries:
            if off is not None:
                t.xyann = off
            bb = t.get_window_extent(r)
            if fits(bb):
                placed.append(bb)
                break
        else:
            t.set_visible(False)


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
        return "\u2026" + text[-(width - 1) :]
    return text[: width - 1].rstrip() + "\u2026"


def not_computed(ax, what: str) -> None:
    """Mark ``ax`` as a placeholder: ``what`` was not computed for this report."""
    ax._cctkit_placeholder = True  # its frame is changed: a later page does not draw on it again
    ax.set_xticks([])
    ax.set_yticks([])
    for side in ax.spines.values():
        side.set_linestyle(":")
        side.set_edgecolor(GREY)
    ax.text(
        0.5,
        0.5,
        f"{what}\nnot computed",
        transform=ax.transAxes,
        ha="center",
        va="center",
        color=GREY,
        fontsize="small",
    )


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


def row_first_legend(ax, handles, labels, *, ncol: int, **kw):
    """A legend read row by row (#1 #2 #3 / #4 #5 #6), though matplotlib fills columns first."""
    ncol = max(1, min(ncol, len(handles)))
    rows = -(-len(handles) // ncol)
    order = []
    for c in range(ncol):
        for r in range(rows):
            k = r * ncol + c
            if k < len(handles):
                order.append(k)
    return ax.legend([handles[k] for k in order], [labels[k] for k in order], ncol=ncol, **kw)


# ---------------------------------------------------------------- spectra


def _band(ax) -> None:
    lo, hi = VISIBLE_BAND_NM
    ax.axvspan(lo, hi, color="#f2f2f2", zorder=0, lw=0)
    ax.axvline(lo, color=LIGHT, lw=0.6, zorder=0)
    ax.axvline(hi, color=LIGHT, lw=0.6, zorder=0)


def measured_mask(analysis, index: int, wavelength_nm) -> np.ndarray:
    """True where ``wavelength_nm`` lies inside the range spectrum ``index`` was measured over.

    Outside it the working-grid values are extrapolated (the nearest measured value repeated),
    not measured: charts draw them apart.
    """
    wl = np.asarray(wavelength_nm, dtype=np.float64)
    ranges = getattr(analysis.spectra, "measured_range_nm", ())
    if not ranges or index >= len(ranges) or ranges[index] is None:
        return np.ones(wl.shape, dtype=bool)
    lo, hi = float(ranges[index][0]), float(ranges[index][1])
    return (wl >= lo - 1e-9) & (wl <= hi + 1e-9)


def _split(wl, y, mask):
    """``y`` where measured and NaN elsewhere; and the extrapolated part joined to it."""
    measured = np.where(mask, y, np.nan)
    near_gap = np.convolve((~mask).astype(int), [1, 1, 1], mode="same") > 0
    return measured, np.where(near_gap, y, np.nan)


def spectrum_chart(analysis, ax, *, index: int = 0, comparison=None, legend: bool = True) -> None:
    """Test spectrum and its reference illuminant at the same CCT, both scaled to Y = 100.

    The scaling (equal luminance, CIE 1931 2 deg) and the reference (CIE 224:2017
    Planckian / daylight / blend) are those of :func:`cctkit.rendering.compare_to_reference`.
    The shaded band is 380-780 nm, the range CIE 15:2018 requires a measurement to cover.
    Working-grid values outside the measured range (extrapolated) are drawn thin and dotted.
    The legend sits above the plot, clear of the curves.
    """
    cmp = comparison if comparison is not None else reference_comparison(analysis)
    wl = cmp.wavelength_nm
    _band(ax)
    test = cmp.test[index]
    ref = cmp.reference[index]
    mask = measured_mask(analysis, index, wl)
    measured, extra = _split(wl, test, mask)
    ax.plot(wl, measured, color=INK, lw=1.0, label="test source (measured)")
    if not mask.all():
        ax.plot(wl, extra, color=GREY, lw=0.7, linestyle=(0, (1, 1.5)), label="extrapolated, not measured")
    has_ref = bool(np.all(np.isfinite(ref)))
    if has_ref:
        kind = cmp.reference_kind[index]
        ax.plot(wl, ref, color=GREY, lw=1.0, linestyle="--", label=f"reference ({kind}, {cmp.cct_K[index]:.0f} K)")
    else:
        t = ax.text(
            0.98,
            0.95,
            "no reference: CCT not reported",
            transform=ax.transAxes,
            ha="right",
            va="top",
            color=GREY,
            fontsize="small",
        )
        t.set_zorder(5)
    ax.set_xlim(wl[0], wl[-1])
    top = np.nanmax(np.concatenate([test, ref if has_ref else test]))
    ax.set_ylim(min(0.0, float(np.nanmin(test))), 1.08 * top if np.isfinite(top) and top > 0 else 1.0)
    ax.set_ylabel("Rel. power [Y = 100]")
    ax.set_xlabel("Wavelength [nm]")
    ax.text(
        0.5 * sum(VISIBLE_BAND_NM),
        0.0,
        "380-780 nm",
        transform=ax.get_xaxis_transform(),
        ha="center",
        va="bottom",
        fontsize="x-small",
        color=GREY,
        zorder=1,
    )
    if legend:
        ax.legend(
            loc="lower left",
            bbox_to_anchor=(0.0, 1.0),
            fontsize="x-small",
            frameon=False,
            ncol=3,
            borderaxespad=0.2,
            handlelength=2.0,
        )
    declutter(ax)


def difference_chart(analysis, ax, *, index: int = 0, comparison=None) -> None:
    """Test minus reference per wavelength, on the Y = 100 scale of :func:`spectrum_chart`.

    Only the measured range is filled (grey: test above, hatched: test below); the
    extrapolated tail is a dotted line.
    """
    cmp = comparison if comparison is not None else reference_comparison(analysis)
    wl = cmp.wavelength_nm
    d = cmp.difference[index]
    _band(ax)
    ax.axhline(0.0, color=GREY, lw=0.6)
    ax.set_xlim(wl[0], wl[-1])
    ax.set_xlabel("Wavelength [nm]")
    ax.set_ylabel("Test - ref. [Y = 100]")
    if not np.all(np.isfinite(d)):
        ax.text(
            0.5,
            0.5,
            "no reference: CCT not reported",
            transform=ax.transAxes,
            ha="center",
            va="center",
            color=GREY,
            fontsize="small",
        )
        ax.set_ylim(-1, 1)
        return
    mask = measured_mask(analysis, index, wl)
    ax.fill_between(wl, 0.0, d, where=(d >= 0) & mask, color="#bdbdbd", lw=0, label="test above")
    ax.fill_between(
        wl, 0.0, d, where=(d < 0) & mask, facecolor="white", edgecolor=GREY, hatch="////", lw=0, label="test below"
    )
    measured, extra = _split(wl, d, mask)
    ax.plot(wl, measured, color=INK, lw=0.7)
    if not mask.all():
        ax.plot(wl, extra, color=GREY, lw=0.7, linestyle=(0, (1, 1.5)))
    lim = float(np.max(np.abs(d[mask] if mask.any() else d))) * 1.15 or 1.0
    ax.set_ylim(-lim, lim)
    ax.legend(
        loc="lower right", bbox_to_anchor=(1.0, 1.0), fontsize="x-small", frameon=False, ncol=2, borderaxespad=0.1
    )


def spectra_overlay_chart(
    analysis,
    ax,
    *,
    indices: Sequence[int] | None = None,
    comparison=None,
    labels: Sequence[str] | None = None,
    legend: bool = True,
) -> None:
    """Several test spectra overlaid, each scaled to Y = 100 (so their shapes compare).

    Up to :data:`IDENTITIES` spectra each get their identity (:func:`series_style`); the
    legend sits above the plot.  Extrapolated tails are left out (only measured data drawn).
    """
    cmp = comparison if comparison is not None else reference_comparison(analysis)
    idx = list(range(len(analysis))) if indices is None else list(indices)
    wl = cmp.wavelength_nm
    _band(ax)
    many = len(idx) > IDENTITIES
    for k, i in enumerate(idx):
        y = np.where(measured_mask(analysis, i, wl), cmp.test[i], np.nan)
        if many:
            ax.plot(wl, y, color=INK, lw=0.4, alpha=0.35)
            continue
        st = series_style(k)
        label = labels[k] if labels is not None else f"{k + 1}"
        ax.plot(
            wl,
            y,
            color=st["color"],
            linestyle=st["linestyle"],
            marker=st["marker"],
            mfc=st["mfc"],
            markevery=(5 * k % 40, 40),
            markersize=3,
            lw=0.9,
            label=label,
        )
    ax.set_xlim(wl[0], wl[-1])
    ax.set_ylim(bottom=min(0.0, float(np.nanmin(cmp.test[idx]))))
    ax.set_xlabel("Wavelength [nm]")
    ax.set_ylabel("Rel. power [Y = 100]")
    if legend and not many:
        h, lab = ax.get_legend_handles_labels()
        row_first_legend(
            ax,
            h,
            lab,
            ncol=6,
            loc="lower left",
            bbox_to_anchor=(0.0, 1.0),
            fontsize="x-small",
            frameon=False,
            borderaxespad=0.2,
            handlelength=2.2,
            columnspacing=1.0,
        )
    if many:
        ax.text(
            0.99,
            0.97,
            f"{len(idx)} spectra",
            transform=ax.transAxes,
            ha="right",
            va="top",
            fontsize="small",
            color=GREY,
        )


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


@functools.lru_cache(maxsize=4)
def _locus_geometry(observer: int) -> dict[str, Any]:
    """The lines every chromaticity chart draws, in CIE 1960 uv, computed once per observer:
    the Planckian locus, the constant-Duv lines, the isotemperature lines of :data:`_ISO_LEVELS`
    (:func:`cctkit.locus.uv_from_cct_duv`, i.e. :func:`cctkit.locus.isotemperature_line`) and
    the spectrum locus (the colour-matching functions' chromaticities).

    Kept in the table cache (:func:`cctkit.tables.cached_arrays`) beside the tables they come
    from: computing them was a tenth of a one-spectrum report's drawing time."""
    import hashlib

    from ..constants import C2_M_K
    from ..tables import cached_arrays

    temps = sorted({t for level in _ISO_LEVELS for t in level})
    # the cache key names everything the lines depend on besides the tables and versions
    recipe = repr((observer, C2_M_K, DUV_LIMIT, _LOCUS_T, _DUV_LINES, temps)).encode()
    key = f"chart-locus-{observer}-{hashlib.sha256(recipe).hexdigest()[:16]}"
    arr = cached_arrays(key, lambda: _locus_arrays(observer, temps), ("locus", "duv_lines", "iso", "spectral"))
    return {
        "locus": arr["locus"],
        "duv_lines": arr["duv_lines"],
        "iso": dict(zip(temps, arr["iso"])),
        "spectral": arr["spectral"],
    }


#: Temperatures the locus and the constant-Duv lines are drawn through (start, stop [K], points).
_LOCUS_T = (1000.0, 100000.0, 700)


def _locus_arrays(observer: int, temps: list[int]) -> dict[str, np.ndarray]:
    from ..analysis import one_blas_thread
    from ..colorimetry import XYZ_to_uv
    from ..locus import locus_normal
    from ..tables import cmfs

    T = np.geomspace(_LOCUS_T[0], _LOCUS_T[1], int(_LOCUS_T[2]))
    duvs = np.asarray(_DUV_LINES, dtype=np.float64)
    # uv_from_cct_duv is uv(T) + Duv n(T): the locus and its normal once per temperature, not per line.
    # One BLAS thread: the cached lines are the same bits whoever computes them first.
    with one_blas_thread():
        uv, n = locus_normal(T, observer=observer)
        iso_uv, iso_n = locus_normal(np.asarray(temps, dtype=np.float64), observer=observer)
    duv_lines = uv[None, :, :] + duvs[:, None, None] * n[None, :, :]
    grid = np.linspace(-DUV_LIMIT, DUV_LIMIT, 41)
    iso = iso_uv[:, None, :] + grid[None, :, None] * iso_n[:, None, :]
    with np.errstate(all="ignore"):
        spectral = XYZ_to_uv(np.asarray(cmfs(observer), dtype=np.float64))
    return {
        "locus": uv,
        "duv_lines": duv_lines,
        "iso": iso,
        "spectral": spectral[np.all(np.isfinite(spectral), axis=1)],
    }


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


def _near(line: np.ndarray, win, grow: float = 2.0) -> np.ndarray:
    """The points of ``line`` within the window widened by ``grow`` of its size on every side,
    with one neighbour beyond, so the drawn part runs past the axes edge (clipped there)."""
    w, h = win[1] - win[0], win[3] - win[2]
    big = (win[0] - grow * w, win[1] + grow * w, win[2] - grow * h, win[3] + grow * h)
    keep = _inside(line, big)
    keep = np.convolve(keep.astype(int), [1, 1, 1], mode="same") > 0
    return line[keep]


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
    if diagram not in DIAGRAMS:
        raise ValueError(f"diagram must be one of {', '.join(DIAGRAMS)}, got {diagram!r}")
    observer = int(analysis.observer)
    idx = list(range(len(analysis))) if indices is None else list(indices)
    sample = {"uv": analysis.uv, "uvp": analysis.uvp, "xy": analysis.xy}[diagram][idx]
    win = (
        _window(np.asarray(sample, dtype=np.float64), diagram, observer=observer)
        if window is None
        else tuple(float(w) for w in window)
    )

    geo = _locus_geometry(observer)
    locus = _convert(geo["locus"], "uv", diagram)
    for duv, line_uv in zip(_DUV_LINES, geo["duv_lines"]):
        line = _near(_convert(line_uv, "uv", diagram), win)  # draw only what is shown
        if line.shape[0] < 2:
            continue
        ax.plot(line[:, 0], line[:, 1], color=GREY, lw=0.5, linestyle=":", zorder=1)
        inside = np.flatnonzero(_inside(line, win))
        if inside.size:
            j = inside[len(inside) // 2]
            ax.text(
                line[j, 0],
                line[j, 1],
                f"{duv:+.2f}",
                fontsize=5,
                color=GREY,
                ha="center",
                va="center",
                zorder=2,
                bbox={"boxstyle": "square,pad=0.05", "fc": "white", "ec": "none"},
            )
    locus = _near(locus, win)
    ax.plot(locus[:, 0], locus[:, 1], color=INK, lw=1.1, zorder=3, label="Planckian locus")
    spectral = _convert(geo["spectral"], "uv", diagram)
    if spectral.size:  # the spectrum locus, closed by the line of purples
        closed = np.vstack([spectral, spectral[:1]])
        ax.plot(closed[:, 0], closed[:, 1], color=INK, lw=0.8, zorder=3, gid="spectrum-locus")

    win = _fit_box(ax, win)
    ax.set_xlim(win[0], win[1])
    ax.set_ylim(win[2], win[3])
    placed: list[float] = []
    span_x = win[1] - win[0]
    for level in _ISO_LEVELS:
        for t in level:
            line = _convert(geo["iso"][t], "uv", diagram)
            inside = np.flatnonzero(_inside(line, win))
            if inside.size < 2:
                continue
            j = inside[0]  # the low-Duv end inside the window
            fx = (line[j, 0] - win[0]) / span_x
            if any(abs(fx - p) < 0.17 for p in placed):
                continue  # too close to a line already labelled: leave this level out here
            placed.append(fx)
            ax.plot(line[:, 0], line[:, 1], color=GREY, lw=0.6, zorder=2)
            ax.text(
                line[j, 0],
                line[j, 1],
                f"{t} K",
                fontsize=5.5,
                color=INK,
                ha="center",
                va="bottom",
                zorder=4,
                bbox={"boxstyle": "square,pad=0.1", "fc": "white", "ec": "none"},
                clip_on=True,
            )

    # ANSI C78.377 quadrangles are defined for the 2 deg observer: not drawn by default on a 10 deg diagram.
    outlines = (ansi_outlines() if observer == 2 else ()) if regions is None else tuple(regions)
    drawn_region = False
    for o in outlines:
        pts = _convert(o.points, o.space, diagram)
        if not _inside(pts, win).any():
            continue
        closed = np.vstack([pts, pts[:1]])
        ax.plot(closed[:, 0], closed[:, 1], color="#4d4d4d", lw=0.7, linestyle=o.linestyle, zorder=2, label=None)
        top = pts[np.argmax(pts[:, 1])]  # label above the highest corner, clear of the centre
        if _inside(top[None], win)[0]:
            ax.annotate(
                o.label,
                top,
                xytext=(0, 1.5),
                textcoords="offset points",
                fontsize=5,
                color="#4d4d4d",
                ha="center",
                va="bottom",
                zorder=2,
            )
        drawn_region = True

    annotate = (1 < len(idx) <= IDENTITIES) if annotate is None else annotate
    pts = np.asarray(sample, dtype=np.float64)
    if not mark_samples:
        pass
    elif len(idx) <= IDENTITIES:
        for k, p in enumerate(pts):
            st = series_style(k)
            lab = legend_labels[k] if legend_labels is not None else None
            ax.plot(
                p[0],
                p[1],
                linestyle="none",
                marker=st["marker"],
                markersize=5,
                mfc=st["mfc"],
                mec=st["color"],
                mew=1.0,
                zorder=5,
                label=lab,
            )
    else:
        ax.plot(
            pts[:, 0], pts[:, 1], linestyle="none", marker="o", markersize=2.5, mfc="white", mec=INK, mew=0.6, zorder=5
        )
    if annotate and mark_samples:
        for k, p in enumerate(pts):
            if np.all(np.isfinite(p)):
                t = ax.annotate(
                    str(k + 1),
                    p,
                    xytext=(3, 3),
                    textcoords="offset points",
                    fontsize=5,
                    zorder=6,
                    color=series_style(k)["color"],
                )
                t._cctkit_movable = True

    ax.set_aspect("equal", adjustable="box")
    ax.set_xlabel(DIAGRAMS[diagram][0])
    ax.set_ylabel(DIAGRAMS[diagram][1])
    notes = ["solid: locus and isotemperature lines", "dotted: Duv in steps of 0.01"]
    if observer != 2:
        notes.insert(0, "CIE 1964 10\u00b0 observer")
    if drawn_region:
        notes.append("outlines: ANSI C78.377 quadrangles" if regions is None else "outlines: tolerance regions")
    width_in = ax.get_position().width * ax.figure.get_figwidth()
    ax.set_title(textwrap.fill("; ".join(notes), max(20, int(width_in / 0.037))), fontsize=5.5, color=GREY, loc="left")
    if legend_labels is not None and len(idx) <= IDENTITIES and mark_samples:
        ax.legend(loc="lower right", fontsize="x-small", frameon=True, framealpha=0.9, edgecolor=LIGHT)
    declutter(ax)


# ---------------------------------------------------------------- colour rendering


def _bar_labels(ax, xs, values, fmt="{:.0f}", fontsize=5.5) -> None:
    for x, v in zip(xs, values):
        if np.isfinite(v):
            text = number_text(v, fmt)
            up = not text.startswith("-")
            ax.text(x, v, text, ha="center", va="bottom" if up else "top", fontsize=fontsize)


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
        note += f"; NOT VALID: DC = {dc:.4f} >= {DC_LIMIT:g}"
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
        ax.plot(np.append(tx, tx[0]), np.append(ty, ty[0]), color=INK, lw=1.1, marker="o", markersize=2.2, label="test")
        _bin_arrows(ax, c, s, tx, ty)
    for k in range(16):
        ax.text(1.33 * c[k], 1.33 * s[k], str(k + 1), ha="center", va="center", fontsize=5, color=GREY)
    ax.set_xlim(-1.45, 1.45)
    ax.set_ylim(-1.45, 1.45)
    ax.set_aspect("equal", adjustable="box")
    ax.set_xticks([-1, 0, 1])
    ax.set_yticks([-1, 0, 1])
    ax.set_xlabel("a' / C'ref [1]")
    ax.set_ylabel("b' / C'ref [1]")
    rf = float(np.asarray(t.Rf)[index])
    rg = float(np.asarray(t.Rg)[index])
    if np.isfinite(rf):
        ax.set_title(f"Rf {rf:.0f}   Rg {rg:.0f}", fontsize=6.5, loc="right")
    ax.legend(loc="lower left", bbox_to_anchor=(1.01, 0.0), fontsize=5, frameon=False, borderpad=0.1, handlelength=1.5)


def index_comparison_chart(
    analysis, ax, *, indices: Sequence[int] | None = None, legend_labels: Sequence[str] | None = None
) -> None:
    """Ra, R9, Rf and Rg of several spectra as grouped bars, each spectrum in its identity.

    Bars carry the spectrum's colour and hatch (:func:`series_style`), in the order #1, #2, ...
    within each group; the legend reads row by row and sits above the plot, clear of the bars.
    Values are written on the bars for up to six spectra.
    """
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
    width = 0.84 / len(idx)
    lo = 0.0
    handles = []
    for k, i in enumerate(idx):
        st = series_style(k)
        vals = np.array([s[1][i] for s in series], dtype=np.float64)
        xs = np.arange(len(series)) - 0.42 + (k + 0.5) * width
        bars = ax.bar(
            xs,
            np.nan_to_num(vals),
            width=width * 0.9,
            facecolor="white",
            edgecolor=st["color"],
            lw=0.8,
            hatch=st["hatch"] or None,
            label=legend_labels[k] if legend_labels else f"#{k + 1}",
        )
        handles.append(bars)
        if len(idx) <= 6:
            _bar_labels(ax, xs, vals, fontsize=5)
        lo = min(lo, float(np.nanmin(vals)) if np.any(np.isfinite(vals)) else 0.0)
    ax.axhline(0.0, color=INK, lw=0.5)
    ax.set_xticks(np.arange(len(series)), [s[0] for s in series])
    ax.set_ylim(min(0.0, lo - 12.0), 118)
    ax.set_ylabel("Index [1]")
    labels = [h.get_label() for h in handles]
    row_first_legend(
        ax,
        handles,
        labels,
        ncol=min(len(idx), 6),
        loc="lower left",
        bbox_to_anchor=(0.0, 1.0),
        fontsize=5.5,
        frameon=False,
        borderaxespad=0.2,
        handlelength=2.4,
        handleheight=1.2,
        columnspacing=1.2,
    )
    declutter(ax)


# ---------------------------------------------------------------- TM-30 hue wheel


#: Rings of the hue wheel, inner to outer radius, in units of the reference circle.
_RING_RCS = (1.42, 1.82)
_RING_RF = (1.86, 2.26)
_RING_RHS = (2.30, 2.70)
_RING_BIN = 2.86


def _wedges(ax, r0, r1, angles, **kw):
    """One collection of ring sectors r0..r1 between each (a0, a1) of ``angles`` [rad]: a single
    artist per ring draws much faster than a patch per sector; ``kw`` as for a PatchCollection."""
    from matplotlib.collections import PatchCollection
    from matplotlib.patches import Wedge

    patches = [Wedge((0.0, 0.0), r1, np.degrees(a0), np.degrees(a1), width=r1 - r0) for a0, a1 in angles]
    if patches:
        ax.add_collection(PatchCollection(patches, **kw), autolim=False)


def hue_wheel_chart(analysis, ax, *, index: int = 0, identity: int | None = None) -> None:
    """TM-30 rendering detail in one wheel: the colour vector graphic in the middle and, in the
    hue-bin sectors around it, Rcs,h [%] (inner ring), Rf,h (middle ring) and Rhs,h [1] (outer ring).

    The vector graphic is the standard's (:func:`cctkit.rendering.tm30.vector_graphic_xy`):
    the reference circle (dashed) and the test polygon, with an arrow per bin from the
    reference to the test.  Rings: a chroma decrease is hatched; the Rf,h sector is shaded
    darker the lower the fidelity (white at 100, dark grey at 50 and below); a hue shift
    is written with its sign.  Bin numbers run round the outside.  Readable in greyscale.
    """
    from ..rendering.tm30 import chroma_shift_percent, vector_graphic_xy

    t = _tm30(analysis, ax, "TM-30 hue-bin measures")
    if t is None:
        return
    colour = INK if identity is None else series_style(identity)["color"]
    ref_xy, test_xy = vector_graphic_xy(t)
    c, s = ref_xy[index, :, 0], ref_xy[index, :, 1]
    tx, ty = test_xy[index, :, 0], test_xy[index, :, 1]
    theta = np.arctan2(s, c)
    half = np.pi / 16.0
    circle = np.linspace(0.0, 2.0 * np.pi, 181)
    rcs = chroma_shift_percent(t)[index]
    rf = np.asarray(t.Rf_h[index], dtype=np.float64)
    rhs = np.asarray(t.Rhs_h[index], dtype=np.float64)
    sectors = [(theta[j] - half, theta[j] + half) for j in range(16)]
    decrease = [bool(np.isfinite(rcs[j]) and rcs[j] < -0.5) for j in range(16)]
    shades = [1.0 - 0.7 * np.clip((100.0 - rf[j]) / 50.0, 0.0, 1.0) if np.isfinite(rf[j]) else 1.0 for j in range(16)]
    _wedges(
        ax,
        *_RING_RCS,
        [a for a, d in zip(sectors, decrease) if not d],
        facecolor="white",
        edgecolor=LIGHT,
        linewidth=0.4,
    )
    _wedges(
        ax,
        *_RING_RCS,
        [a for a, d in zip(sectors, decrease) if d],
        facecolor="white",
        edgecolor=GREY,
        linewidth=0.4,
        hatch="////",
    )
    _wedges(
        ax, *_RING_RF, sectors, facecolor=[str(round(float(v), 3)) for v in shades], edgecolor="white", linewidth=0.6
    )
    _wedges(ax, *_RING_RHS, sectors, facecolor="white", edgecolor=LIGHT, linewidth=0.4)
    for j in range(16):
        dec, shade = decrease[j], shades[j]
        for ring, text, dark in (
            (_RING_RCS, number_text(rcs[j], "{:+.0f}") if np.isfinite(rcs[j]) else "n/a", False),
            (_RING_RF, number_text(rf[j], "{:.0f}") if np.isfinite(rf[j]) else "n/a", shade < 0.55),
            (_RING_RHS, number_text(rhs[j], "{:+.2f}") if np.isfinite(rhs[j]) else "n/a", False),
        ):
            r = 0.5 * (ring[0] + ring[1])
            # Sixteen sectors of at least 0.3 in of arc at the page's size hold at most five
            # characters each: these labels cannot meet (fixed by construction; the layout tests check).
            ax.text(
                r * np.cos(theta[j]),
                r * np.sin(theta[j]),
                text,
                ha="center",
                va="center",
                fontsize=4.8,
                color="white" if dark else INK,
                zorder=4,
                bbox={"boxstyle": "square,pad=0.05", "fc": "white", "ec": "none"}
                if ring is _RING_RCS and dec
                else None,
            )._cctkit_fixed = True
        ax.text(
            _RING_BIN * np.cos(theta[j]),
            _RING_BIN * np.sin(theta[j]),
            str(j + 1),
            ha="center",
            va="center",
            fontsize=5.2,
            weight="bold",
            color=GREY,
            zorder=4,
        )._cctkit_fixed = True
    for r in (0.8, 1.2):
        ax.plot(r * np.cos(circle), r * np.sin(circle), color=LIGHT, lw=0.5, linestyle=":", zorder=1)
    ax.plot(np.cos(circle), np.sin(circle), color=GREY, lw=1.0, linestyle="--", zorder=2)
    if not np.all(np.isfinite(tx)):
        ax.text(0, 0, "no result", ha="center", va="center", color=GREY)
    else:
        ax.fill(tx, ty, facecolor="none", edgecolor=colour, lw=1.2, zorder=3)
        ax.plot(tx, ty, linestyle="none", marker="o", markersize=2.0, color=colour, zorder=3)
        _bin_arrows(ax, c, s, tx, ty)
    lim = _RING_BIN + 0.2
    ax.set_xlim(-lim, lim)
    ax.set_ylim(-lim, lim)
    ax.set_aspect("equal", adjustable="box")
    ax.set_axis_off()
    rf_all = float(np.asarray(t.Rf)[index])
    rg_all = float(np.asarray(t.Rg)[index])
    if np.isfinite(rf_all):
        ax.text(
            0.0,
            -0.12,
            f"Rf {rf_all:.0f}\nRg {rg_all:.0f}",
            ha="center",
            va="center",
            fontsize=6,
            weight="bold",
            zorder=5,
            bbox={"boxstyle": "round,pad=0.2", "fc": "white", "ec": LIGHT, "lw": 0.4},
        )
    declutter(ax)
