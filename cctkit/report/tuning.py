"""The tuning report of a multi-channel luminaire: channel spectra, reachable region, path and metrics.

:func:`build_tuning_report` draws a :class:`cctkit.blend.BlendPath` (it computes nothing:
every number comes from the path and the analysis of its blends).  A PDF has three
kinds of page: the fixture (channel spectra, the reachable region in CIE 1960 uv with
the path on it, drive levels along the path), the metrics along the path, and the
drive table; a PNG is one landscape picture of the first two.
"""

from __future__ import annotations

import os
from collections.abc import Iterable
from pathlib import Path
from typing import Any

import numpy as np

from . import charts
from .charts import GREY, INK, LIGHT, series_style, shorten

__all__ = [
    "build_tuning_report",
    "channel_spectra_chart",
    "reachable_region_chart",
    "drive_chart",
    "path_metric_chart",
    "TABLE_ROWS_PER_PAGE",
]

TABLE_ROWS_PER_PAGE = 52
_PNG_SIZE_PX = (1600, 1000)
_PNG_DPI = 150


def _x(path) -> np.ndarray:
    return np.asarray(path.target_cct_K, dtype=np.float64)


def channel_spectra_chart(path, ax) -> None:
    """Each channel's spectrum at full drive, in the unit of the measurement."""
    ch = path.channels
    from ..constants import WAVELENGTH_NM

    charts._band(ax)
    for k, name in enumerate(ch.names):
        st = series_style(k)
        ax.plot(
            WAVELENGTH_NM,
            ch.values[k],
            color=st["color"],
            linestyle=st["linestyle"],
            marker=st["marker"],
            markevery=(7 * k % 40, 40),
            markersize=2.5,
            lw=0.9,
            label=f"d{k + 1} {shorten(name, 18)}",
        )
    ax.set_xlim(WAVELENGTH_NM[0], WAVELENGTH_NM[-1])
    ax.set_ylim(bottom=min(0.0, float(ch.values.min())))
    ax.set_xlabel("Wavelength [nm]")
    ax.set_ylabel(f"Full drive [{ch.quantity.unit}]")
    ax.legend(loc="upper right", fontsize="x-small", frameon=False)


def reachable_region_chart(path, ax, *, zoom: bool = False) -> None:
    """The fixture's reachable region (hull of the channel chromaticities) in CIE 1960 uv, with the path.

    Targets reached are filled circles, refused ones crosses; channel chromaticities are
    numbered as in the other charts.  ``zoom`` frames the path instead of the whole region.
    """
    hull = np.asarray(path.hull_uv)
    uv_ch = path.channels.uv
    targets = np.asarray(path.target_uv)
    finite = targets[np.all(np.isfinite(targets), axis=1)]
    pts = finite if (zoom and len(finite)) else np.vstack([hull, finite])
    lo, hi = pts.min(axis=0), pts.max(axis=0)
    pad = 0.08 * (hi - lo) + (0.01 if zoom else 0.004)
    window = (lo[0] - pad[0], hi[0] + pad[0], lo[1] - pad[1], hi[1] + pad[1])
    if zoom and path.analysis is not None:
        charts.chromaticity_chart(path.analysis, ax, diagram="uv", regions=(), mark_samples=False, window=window)
    else:
        from ..locus import planckian_locus

        locus = planckian_locus(np.geomspace(1000.0, 100000.0, 200)).uv
        ax.plot(locus[:, 0], locus[:, 1], color=INK, lw=1.0, zorder=3, label="Planckian locus")
        ax.set_xlim(window[0], window[1])
        ax.set_ylim(window[2], window[3])
        ax.set_aspect("equal", adjustable="box")
        ax.set_xlabel(charts.DIAGRAMS["uv"][0])
        ax.set_ylabel(charts.DIAGRAMS["uv"][1])
    closed = np.vstack([hull, hull[:1]])
    ax.fill(
        closed[:, 0],
        closed[:, 1],
        facecolor="#eef3fa",
        edgecolor="#1f4e9a",
        lw=0.9,
        zorder=1.5,
        label="reachable region",
    )
    for k, p in enumerate(uv_ch):
        ax.plot(p[0], p[1], marker="s", ms=3.5, mfc="white", mec="#1f4e9a", mew=0.9, zorder=6, linestyle="none")
        ax.annotate(f"d{k + 1}", p, xytext=(3, -7), textcoords="offset points", fontsize=5.5, color="#1f4e9a", zorder=7)
    ok = path.ok
    ax.plot(targets[:, 0], targets[:, 1], color=INK, lw=0.6, zorder=5)
    if zoom and len(finite):
        for j in sorted({0, len(targets) - 1}):
            if np.all(np.isfinite(targets[j])):
                ax.annotate(
                    f"{path.target_cct_K[j]:.0f} K",
                    targets[j],
                    xytext=(4, 6),
                    textcoords="offset points",
                    fontsize=5.5,
                    zorder=7,
                )
    if ok.any():
        ax.plot(
            targets[ok, 0],
            targets[ok, 1],
            linestyle="none",
            marker="o",
            ms=2.2,
            color=INK,
            zorder=6,
            label="set point reached",
        )
    if (~ok).any():
        ax.plot(
            targets[~ok, 0],
            targets[~ok, 1],
            linestyle="none",
            marker="x",
            ms=3.5,
            mew=0.9,
            color="#b35900",
            zorder=6,
            label="set point refused",
        )
    ax.legend(loc="lower right", fontsize="x-small", frameon=True, framealpha=0.9, edgecolor=LIGHT)


def drive_chart(path, ax) -> None:
    """Drive level of each channel along the path (refused set points leave gaps)."""
    x = _x(path)
    for k, name in enumerate(path.channels.names):
        st = series_style(k)
        ax.plot(
            x,
            path.drives[:, k],
            color=st["color"],
            linestyle=st["linestyle"],
            marker=st["marker"],
            markersize=2.2,
            lw=0.9,
            label=f"d{k + 1} {shorten(name, 18)}",
        )
    ax.set_ylim(-0.03, 1.03)
    ax.set_ylabel("Drive level [0\u20131]")
    ax.set_xlabel("Target CCT [K]")
    ax.grid(True, color=LIGHT, lw=0.4)
    ax.legend(
        loc="upper center",
        bbox_to_anchor=(0.5, -0.2),
        fontsize="x-small",
        frameon=False,
        ncol=min(5, len(path.channels)),
    )


def path_metric_chart(
    path, ax, keys: Iterable[str], *, ylabel: str, labels: Iterable[str] | None = None, limits: Iterable[float] = ()
) -> None:
    """One or two metrics of the returned blends along the path; ``limits`` draws dashed lines."""
    x = _x(path)
    keys = list(keys)
    labels = list(labels) if labels is not None else keys
    shown = False
    for k, (key, label) in enumerate(zip(keys, labels)):
        y = path.drive_steps if key == "drive_step" else path.metrics.get(key)
        if y is None:
            continue
        st = series_style(k)
        ax.plot(
            x, y, color=st["color"], linestyle=st["linestyle"], marker=st["marker"], markersize=2.2, lw=0.9, label=label
        )
        shown = shown or bool(np.isfinite(y).any())
    for v in limits:
        ax.axhline(v, color=GREY, lw=0.7, linestyle="--")
    if not shown:
        charts.not_computed(ax, ylabel)
        return
    ax.set_ylabel(ylabel)
    ax.set_xlabel("Target CCT [K]")
    ax.grid(True, color=LIGHT, lw=0.4)
    if len(keys) > 1:
        ax.legend(loc="best", fontsize="x-small", frameon=False)


def _summary_lines(path, doc: dict[str, Any]) -> list[tuple[str, str]]:
    ch = path.channels
    obj = doc["objective"]
    cons = []
    if path.rg is not None:
        cons.append(f"Rg {path.rg[0]:g}\u2013{path.rg[1]:g}")
    if path.r9_min is not None:
        cons.append(f"R9 \u2265 {path.r9_min:g}")
    counts: dict[str, int] = {}
    for s in path.status:
        counts[s] = counts.get(s, 0) + 1
    step = doc["largest_drive_step"]
    step_text = (
        "n/a"
        if step["value"] is None
        else (
            f"{step['value']:.3f} ({step['between_target_cct_K'][0]:.0f} K \u2192 {step['between_target_cct_K'][1]:.0f} K)"
        )
    )
    lum_unit = ch.luminous_key.rsplit("_", 1)[-1]
    level = path.luminous_target[0]
    return [
        (
            "Objective",
            f"{obj['sense']} {obj['quantity']}"
            + (f" (efficacy: {obj['efficacy_basis']})" if obj["quantity"] == "efficacy" else ""),
        ),
        ("Constraints", ", ".join(cons + ["drives 0\u20131"])),
        (
            "Luminous output",
            f"{level:.4g} {lum_unit} at every set point" + (" (flat)" if path.luminous_mode == "flat" else ""),
        ),
        ("Set points", ", ".join(f"{v} {k}" for k, v in counts.items())),
        ("Largest drive step", step_text),
        ("Channels", f"{len(ch)}, {ch.quantity.value}" + (", with electrical power" if ch.power_W is not None else "")),
        ("Assumed", doc["additivity"]),
        ("Solution", doc["guarantee"]),
    ]


def _inputs_lines(doc: dict[str, Any]) -> list[tuple[str, str]]:
    return [(shorten(Path(i["path"]).name, 34), i["sha256"] or "(not from a file)") for i in doc["inputs"]]


def _fixture_page(path, doc, meta, *, paper: str, page_label: str, title: str):
    from .pages import _footer, _header, _kv_block, _Page

    page = _Page(paper)
    y = _header(
        page,
        title,
        "Channel spectra, reachable region and drive levels along the path (CIE 1960 uv, CIE 1931 2\u00b0 observer)",
        page_label,
    )
    left = page.left
    ax = page.axes(left + 0.45, y + 0.1, 3.0, 2.3)
    channel_spectra_chart(path, ax)
    ax.set_title("Channels at full drive", fontsize=7, loc="left")
    ax = page.axes(left + 4.1, y + 0.25, 3.0, 2.4)
    reachable_region_chart(path, ax)
    ax.set_title("Reachable region (whole)", fontsize=7, loc="left")
    y2 = y + 2.95
    ax = page.axes(left + 0.45, y2 + 0.25, 3.0, 2.0)
    drive_chart(path, ax)
    ax.set_title("Drive levels along the path", fontsize=7, loc="left")
    ax = page.axes(left + 4.1, y2 + 0.25, 3.0, 2.6)
    reachable_region_chart(path, ax, zoom=True)
    ax.set_title("Around the path", fontsize=7, loc="left")
    y3 = _kv_block(page, left, y2 + 3.25, _summary_lines(path, doc)[:6], label_w=1.2, value_chars=110)
    y4 = y3 + 0.2
    page.text(left, y4, "Assumptions and solution", fontsize=7, weight="bold")
    y4 = _kv_block(page, left, y4 + 0.18, _summary_lines(path, doc)[6:], label_w=1.0, value_chars=120)
    page.text(left, y4 + 0.1, "Inputs (SHA-256)", fontsize=7, weight="bold")
    _kv_block(page, left, y4 + 0.28, _inputs_lines(doc), label_w=2.2, value_chars=90)
    _footer(page, meta)
    return page.fig


def _metrics_page(path, doc, meta, *, paper: str, page_label: str, title: str):
    from .pages import _footer, _header, _Page

    page = _Page(paper)
    y = _header(
        page, title, "Every figure recomputed from the drive levels by the same measures as cctkit inspect", page_label
    )
    ch = path.channels
    lum_key = ch.luminous_key
    lum_unit = lum_key.rsplit("_", 1)[-1]
    eff_key = "efficacy_lm_per_W" if ch.power_W is not None else "ler_lm_per_W"
    eff_label = "Efficacy [lm/W electrical]" if ch.power_W is not None else "LER [lm/W]"
    panels = [
        ((lum_key,), f"Luminous output [{lum_unit}]", None, ()),
        ((eff_key,), eff_label, None, ()),
        (("Rf", "Rg"), "Rf, Rg (CIE 224 / TM-30)", ("Rf", "Rg"), tuple(path.rg) if path.rg else ()),
        (("Ra", "R9"), "Ra, R9 (CIE 13.3)", ("Ra", "R9"), (path.r9_min,) if path.r9_min is not None else ()),
        (("melanopic_der",), "Melanopic DER (CIE S 026)", None, ()),
        (("drive_step",), "Largest drive change from the previous set point [1]", None, ()),
    ]
    w, h = 3.2, 2.0
    for k, (keys, label, labels, limits) in enumerate(panels):
        col, row = k % 2, k // 2
        ax = page.axes(page.left + 0.5 + col * (w + 0.75), y + 0.25 + row * (h + 0.75), w, h)
        path_metric_chart(path, ax, keys, ylabel=label, labels=labels, limits=limits)
        ax.set_title(label, fontsize=7, loc="left")
    y_text = y + 0.25 + 3 * (h + 0.75)
    with np.errstate(invalid="ignore"):
        dev_duv = np.nanmax(np.abs(path.metrics["duv"] - path.target_duv)) if path.ok.any() else np.nan
        dev_cct = np.nanmax(np.abs(path.metrics["cct_K"] - path.target_cct_K)) if path.ok.any() else np.nan
    if np.isfinite(dev_duv):
        page.text(
            page.left,
            y_text - 0.2,
            f"Largest departure of a returned blend from its target: "
            f"|\u0394Duv| = {dev_duv:.1e}, |\u0394CCT| = {dev_cct:.1e} K (recomputed from the drive levels).",
            fontsize=6.5,
        )
    page.text(
        page.left,
        y_text,
        "Melanopic quantities describe the optical stimulus (CIE S 026); they are not "
        "medical advice. Efficacy from electrical power depends on how the power was measured.",
        fontsize=6,
        color=GREY,
    )
    _footer(page, meta)
    return page.fig


def _table_pages(path, doc, meta, *, paper: str, labels: list[str], title: str):
    from ..formats import format_number
    from .pages import _footer, _header, _Page

    ch = path.channels
    recs = doc["set_points"]
    lum_key = ch.luminous_key
    eff_key = "efficacy_lm_per_W" if ch.power_W is not None else "ler_lm_per_W"
    cols: list[tuple[str, Any, str | None]] = [
        ("target K", "target_cct_K", "{:.0f}"),
        ("Duv", "target_duv", "{:+.4f}"),
        ("status", "status", None),
    ]
    cols += [(f"d{k + 1}", ("drive", n), "{:.3f}") for k, n in enumerate(ch.names)]
    cols += [
        ("CCT K", "cct_K", "{:.1f}"),
        ("Duv", "duv", "{:+.5f}"),
        (lum_key.rsplit("_", 1)[-1], lum_key, "{:.1f}"),
        ("lm/W", eff_key, "{:.1f}"),
        ("Rf", "Rf", "{:.1f}"),
        ("Rg", "Rg", "{:.1f}"),
        ("Ra", "Ra", "{:.1f}"),
        ("R9", "R9", "{:.1f}"),
        ("mel DER", "melanopic_der", "{:.3f}"),
    ]
    n_pages = max(1, -(-len(recs) // TABLE_ROWS_PER_PAGE))
    for p in range(n_pages):
        page = _Page(paper)
        y = _header(
            page,
            title,
            "Drive table: d1\u2026 are " + ", ".join(f"d{k + 1} {n}" for k, n in enumerate(ch.names)),
            labels[p],
        )
        width = page.width
        xs = np.linspace(page.left, page.left + width, len(cols) + 1)[:-1]
        xs[3:] += 0.3 * np.linspace(1.0, 0.0, len(xs) - 3)  # the status column is wider
        for (label, _, _), x in zip(cols, xs):
            page.text(x, y + 0.05, label, fontsize=5.8, weight="bold")
        y += 0.22
        for r in recs[p * TABLE_ROWS_PER_PAGE : (p + 1) * TABLE_ROWS_PER_PAGE]:
            for (_, key, fmt), x in zip(cols, xs):
                if isinstance(key, tuple):
                    v = r["drives"][key[1]]
                else:
                    v = r.get(key)
                if fmt is None:
                    text = str(v)
                else:
                    text = "\u2013" if v is None else format_number(v, fmt)
                page.text(x, y, text, fontsize=5.6, color=INK if r["status"] == "ok" else GREY)
            y += 0.148
        refused = [r for r in recs if r["status"] != "ok"]
        if p == n_pages - 1 and refused:
            y += 0.1
            page.text(page.left, y, "Refused set points", fontsize=6.5, weight="bold")
            y += 0.16
            for r in refused[:12]:
                page.text(
                    page.left,
                    y,
                    shorten(
                        f"{r['target_cct_K']:.0f} K, Duv {r['target_duv']:+.4f}: {r['status']}: {r['reason']}"
                        if r["target_duv"] is not None
                        else f"{r['target_cct_K']:.0f} K: {r['status']}: {r['reason']}",
                        150,
                    ),
                    fontsize=5.6,
                )
                y += 0.14
            if len(refused) > 12:
                page.text(
                    page.left,
                    y,
                    f"\u2026 and {len(refused) - 12} more (see the JSON/CSV drive table)",
                    fontsize=5.6,
                    color=GREY,
                )
        _footer(page, meta)
        yield page.fig


def _picture(path, doc, meta, title: str):
    from matplotlib.figure import Figure

    w_in, h_in = _PNG_SIZE_PX[0] / _PNG_DPI, _PNG_SIZE_PX[1] / _PNG_DPI
    fig = Figure(figsize=(w_in, h_in), dpi=_PNG_DPI)
    fig.text(0.015, 0.975, title, fontsize=11, weight="bold", va="top")
    fig.text(
        0.985,
        0.975,
        f"cctkit {meta['cctkit_version']} \u2022 {meta['date']}",
        fontsize=6,
        ha="right",
        va="top",
        color=GREY,
    )

    def box(x, y, w, h):
        return fig.add_axes((x / w_in, 1 - (y + h) / h_in, w / w_in, h / h_in))

    ax = box(0.55, 0.55, 3.0, 1.9)
    channel_spectra_chart(path, ax)
    ax.set_title("Channels at full drive", fontsize=7, loc="left")
    ax = box(0.55, 3.0, 3.0, 1.7)
    drive_chart(path, ax)
    ax.set_title("Drive levels", fontsize=7, loc="left")
    ax = box(4.05, 0.45, 2.9, 2.9)
    reachable_region_chart(path, ax)
    ch = path.channels
    eff_key = "efficacy_lm_per_W" if ch.power_W is not None else "ler_lm_per_W"
    ax = box(7.55, 0.55, 2.8, 1.45)
    path_metric_chart(path, ax, ("Rf", "Rg", "R9"), ylabel="Rf, Rg, R9", labels=("Rf", "Rg", "R9"))
    ax.set_title("Colour rendering", fontsize=7, loc="left")
    ax = box(7.55, 2.45, 2.8, 1.2)
    path_metric_chart(path, ax, (eff_key,), ylabel="lm/W")
    ax.set_title("Efficacy" + (" (electrical)" if ch.power_W is not None else " of radiation"), fontsize=7, loc="left")
    ax = box(7.55, 4.1, 2.8, 1.2)
    path_metric_chart(path, ax, ("melanopic_der",), ylabel="mel. DER")
    ax.set_title("Melanopic DER", fontsize=7, loc="left")
    y = 3.95
    for label, value in _summary_lines(path, doc)[:5]:
        fig.text(4.05 / w_in, 1 - y / h_in, label, fontsize=6, va="top", weight="bold")
        fig.text(5.25 / w_in, 1 - y / h_in, shorten(value, 40), fontsize=6, va="top")
        y += 0.17
    fig.text(
        0.015,
        0.02,
        shorten("Assumed: " + doc["additivity"] + ". Melanopic quantities are not medical advice.", 200),
        fontsize=5,
        color=GREY,
    )
    return fig


def build_tuning_report(
    path,
    out: str | os.PathLike,
    *,
    overwrite: bool = False,
    inputs: Iterable = (),
    paper: str = "a4",
    date: str | None = None,
    title: str | None = None,
    document: dict | None = None,
):
    """Write the tuning report of ``path`` (a :class:`cctkit.blend.BlendPath`) to ``out`` (.pdf or .png).

    ``document`` is ``path.document()`` when the caller has it (with any inputs it added).
    Returns the :class:`cctkit.report.Report` written.
    """

    from ..safe_io import atomic_path, check_output_path
    from .build import PDF_METADATA, Report, check_options, report_meta, report_style, save_pdf_page

    target = Path(out)
    check_options(target, paper=paper)
    check_output_path(target, overwrite=overwrite, inputs=list(inputs))
    meta = report_meta(date=date)
    doc = path.document() if document is None else document
    name = title or "Tuning: " + ", ".join(path.channels.names)
    with report_style(), atomic_path(target, overwrite=overwrite, inputs=list(inputs)) as tmp:
        if target.suffix.lower() == ".png":
            fig = _picture(path, doc, meta, shorten(name, 90))
            fig.savefig(tmp, format="png", dpi=_PNG_DPI, metadata={"Software": f"cctkit {meta['cctkit_version']}"})
            return Report(path=target, kind="png", pages=("summary",), size_px=_PNG_SIZE_PX)
        from matplotlib.backends.backend_pdf import PdfPages

        n_table = max(1, -(-len(path.status) // TABLE_ROWS_PER_PAGE))
        total = 2 + n_table
        labels = [f"page {k + 1} of {total}" for k in range(total)]
        titles = []
        with PdfPages(
            tmp,
            metadata={
                "Title": name,
                "Creator": f"cctkit {meta['cctkit_version']}",
                "Subject": "Drive levels of a multi-channel luminaire along a path",
                **PDF_METADATA,
            },
        ) as pdf:
            save_pdf_page(
                pdf, _fixture_page(path, doc, meta, paper=paper, page_label=labels[0], title=shorten(name, 70))
            )
            titles.append("fixture")
            save_pdf_page(
                pdf, _metrics_page(path, doc, meta, paper=paper, page_label=labels[1], title=shorten(name, 70))
            )
            titles.append("metrics along the path")
            for k, fig in enumerate(
                _table_pages(path, doc, meta, paper=paper, labels=labels[2:], title=shorten(name, 70))
            ):
                save_pdf_page(pdf, fig)
                titles.append(f"drive table {k + 1}")
    return Report(path=target, kind="pdf", pages=tuple(titles))
