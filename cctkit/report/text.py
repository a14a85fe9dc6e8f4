"""A claims verdict as text for a terminal and as CSV.

:func:`verdict_table` fits a terminal of ``width`` columns (100 by default): one row per
sample with each claim's measured value in that metric's usual precision, a mark for a
check that does not pass, then one line per claim with its pass / inconclusive / fail
counts and statistics.  :func:`verdict_detail` is the wide form (value, limit, margin with
its unit, result per cell); :func:`verdict_rows_csv` keeps every column, the sidecar's included.
Nothing here imports matplotlib.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from typing import Any

__all__ = [
    "METRIC_TEXT",
    "metric_text",
    "value_text",
    "limit_text",
    "margin_text",
    "verdict_table",
    "verdict_detail",
    "verdict_rows_csv",
    "summary_lines",
    "MARKS",
]

#: Metric -> (short column name, unit, format): the metric's usual precision, one per column.
METRIC_TEXT: dict[str, tuple[str, str, str]] = {
    "cct_K": ("CCT", "K", "{:.0f}"),
    "duv": ("Duv", "1", "{:+.4f}"),
    "x": ("x", "1", "{:.4f}"),
    "y": ("y", "1", "{:.4f}"),
    "u": ("u", "1", "{:.4f}"),
    "v": ("v", "1", "{:.4f}"),
    "u_prime": ("u'", "1", "{:.4f}"),
    "v_prime": ("v'", "1", "{:.4f}"),
    "X": ("X", "1", "{:.4g}"),
    "Y": ("Y", "1", "{:.4g}"),
    "Z": ("Z", "1", "{:.4g}"),
    "luminous_flux_lm": ("Flux", "lm", "{:.1f}"),
    "illuminance_lx": ("Illum.", "lx", "{:.1f}"),
    "luminance_cd_per_m2": ("Lumin.", "cd/m2", "{:.1f}"),
    "intensity_cd": ("Intens.", "cd", "{:.1f}"),
    "ler_lm_per_W": ("LER", "lm/W", "{:.1f}"),
    "efficacy_lm_per_W": ("Efficacy", "lm/W", "{:.1f}"),
    "power_W": ("Power", "W", "{:.2f}"),
    "sp_ratio": ("S/P", "1", "{:.3f}"),
    "melanopic_der": ("mel-DER", "1", "{:.3f}"),
    "melanopic_edi_lx": ("mel-EDI", "lx", "{:.1f}"),
    "peak_nm": ("Peak", "nm", "{:.1f}"),
    "centroid_nm": ("Centroid", "nm", "{:.1f}"),
    "fwhm_nm": ("FWHM", "nm", "{:.1f}"),
    "dominant_wavelength_nm": ("Dom. wl", "nm", "{:.1f}"),
    "purity": ("Purity", "1", "{:.3f}"),
    "Ra": ("Ra", "1", "{:.1f}"),
    "Rf": ("Rf", "1", "{:.1f}"),
    "Rg": ("Rg", "1", "{:.1f}"),
    "sdcm": ("SDCM", "steps", "{:.2f}"),
    "ansi_quadrangle": ("Quadrangle", "uv", "{:+.4f}"),  # the value is a name; the margin is in uv
    "intent_fidelity": ("Fidelity", "level", "{:.0f}"),
    "intent_preference": ("Preference", "level", "{:.0f}"),
    "intent_vividness": ("Vividness", "level", "{:.0f}"),
}
METRIC_TEXT.update({f"R{i}": (f"R{i}", "1", "{:.1f}") for i in range(1, 15)})
METRIC_TEXT.update({f"Rf_h{j}": (f"Rf,h{j}", "1", "{:.0f}") for j in range(1, 17)})
METRIC_TEXT.update({f"Rcs_h{j}": (f"Rcs,h{j}", "%", "{:+.1f}") for j in range(1, 17)})
METRIC_TEXT.update({f"Rhs_h{j}": (f"Rhs,h{j}", "1", "{:+.3f}") for j in range(1, 17)})

#: The mark after a value whose check does not pass (a pass has none).
MARKS = {"pass": " ", "inconclusive": "?", "fail": "!"}


def metric_text(metric: str) -> tuple[str, str, str]:
    """(column name, unit, number format) of a metric (unknown names: the name, no unit, 4 digits)."""
    return METRIC_TEXT.get(metric, (metric, "1", "{:.4g}"))


def _fmt(v: float, fmt: str) -> str:
    from ..formats import format_number

    return format_number(float(v), fmt)


def value_text(metric: str, value: Any) -> str:
    """A measured value in its metric's format ("n/a" where missing; names as they are)."""
    if value is None:
        return "none" if metric == "ansi_quadrangle" else "n/a"
    if isinstance(value, str):
        return value
    v = float(value)
    if not math.isfinite(v):
        return "n/a"
    return _fmt(v, metric_text(metric)[2].replace("+", "") if metric != "duv" else metric_text(metric)[2])


def limit_text(check: Mapping[str, Any], quadrangle: str | None = None) -> str:
    """A check's limits: ``>=90``, ``<=3``, ``2900..3200``, ``inside 3000K``, ``P2 or better``."""
    m = check["metric"]
    if m == "ansi_quadrangle":
        return f"inside {quadrangle}" if quadrangle else "inside"
    if m.startswith("intent_"):
        letter = {"intent_fidelity": "F", "intent_preference": "P", "intent_vividness": "V"}[m]
        return f"{letter}{int(check['max'])} or better"
    fmt = metric_text(m)[2].replace("+", "")
    lo, hi = check["min"], check["max"]

    def num(v):
        return f"{float(v):g}" if abs(float(v)) >= 1e-3 or v == 0 else _fmt(v, fmt)

    if lo is not None and hi is not None:
        return f"{num(lo)}..{num(hi)}"
    return f">={num(lo)}" if lo is not None else f"<={num(hi)}"


def margin_text(check: Mapping[str, Any]) -> str:
    """The margin with its sign and unit (``+5.7``, ``-0.0012 uv``, ``+1 level``)."""
    m = check["metric"]
    margin = check.get("margin")
    if margin is None or not math.isfinite(float(margin)):
        return "n/a"
    _, unit, fmt = metric_text(m)
    fmt = fmt if "+" in fmt else fmt.replace("{:", "{:+")
    text = _fmt(margin, fmt)
    return text if unit == "1" else f"{text} {unit}"


def _quad(claims) -> str | None:
    c = getattr(claims, "chromaticity", None)
    return f"{c.nominal_cct_K}K" if c is not None and c.ansi_quadrangle else None


def _fit(cells: Sequence[str], widths: Sequence[int], right: Sequence[bool]) -> str:
    return "  ".join(c.rjust(w) if r else c.ljust(w) for c, w, r in zip(cells, widths, right)).rstrip()


def _cut(text: str, width: int) -> str:
    return text if len(text) <= width else text[: width - 1] + "~"


def summary_lines(doc: Mapping[str, Any], claims, *, width: int = 100) -> list[str]:
    """Per claim: limit, U, pass / inconclusive / fail counts, mean, std, min, max and unit."""
    samples = doc["samples"]
    n = len(samples)
    metrics = [c["metric"] for c in samples[0]["checks"]] if samples else list(claims.metrics)
    first = samples[0]["checks"] if samples else []
    quad = _quad(claims)
    lines: list[str] = []
    head = ["claim", "limit", "U", "pass", "incon.", "fail", "mean", "std", "min", "max", "unit"]
    rows = []
    for j, m in enumerate(metrics):
        st = doc["summary"][m]
        name, unit, fmt = metric_text(m)
        U = getattr(claims, "uncertainty", {}).get(m)

        def stat(v, m=m, fmt=fmt):
            if v is None:
                return "-"
            return _fmt(v, fmt) if m == "ansi_quadrangle" else value_text(m, v)

        rows.append(
            [
                name,
                limit_text(first[j], quad) if first else "",
                "-" if U is None else f"{U:g}",
                str(st["count_pass"]),
                str(st.get("count_inconclusive", 0)),
                str(st.get("count_fail", 0)),
                stat(st["mean"]),
                "-" if st["std"] is None else stat(st["std"]).lstrip("+"),
                stat(st["min"]),
                stat(st["max"]),
                ("uv margin" if m == "ansi_quadrangle" else ("" if unit == "1" else unit)),
            ]
        )
    widths = [max(len(str(r[i])) for r in [head] + rows) for i in range(len(head))]
    right = [False, False, True, True, True, True, True, True, True, True, False]
    lines.append(f"per claim over {n} sample{'s' if n != 1 else ''}:")
    lines.append(_cut(_fit(head, widths, right), width))
    for r in rows:
        lines.append(_cut(_fit(r, widths, right), width))
    return lines


def verdict_table(doc: Mapping[str, Any], claims, *, width: int = 100) -> str:
    """The verdict for a terminal, every line at most ``width`` characters.

    Per sample: number, name, verdict, and each claim's value (in its metric's format) with
    ``!`` after a failed check and ``?`` after an inconclusive one.  Claims that do not fit
    beside the names continue in further blocks.  Then per claim: limit, U, the counts of
    pass / inconclusive / fail, and mean, standard deviation, minimum and maximum.
    """
    samples = doc["samples"]
    metrics = [c["metric"] for c in samples[0]["checks"]] if samples else list(claims.metrics)
    quad = _quad(claims)
    n = len(samples)
    lines = []
    who = " / ".join(p for p in (claims.supplier, claims.product) if p)
    lines.append(_cut(f"claims: {claims.source}" + (f" ({who})" if who else ""), width))
    first = samples[0]["checks"] if samples else []
    cols = []
    for j, m in enumerate(metrics):
        name, unit, _ = metric_text(m)
        head = [name, limit_text(first[j], quad) if first else "", f"[{unit}]" if unit != "1" else ""]
        U = getattr(claims, "uncertainty", {}).get(m)
        head[2] = (head[2] + (f" U {U:g}" if U is not None else "")).strip()
        vals = [value_text(m, s["checks"][j]["value"]) + MARKS[s["checks"][j]["result"]] for s in samples]
        w = max([len(h) for h in head] + [len(v) for v in vals] + [4])
        cols.append((head, vals, w))
    num_w = max(1, len(str(n)))
    verdict_w = len("inconclusive")
    names = [s["name"] for s in samples]
    name_w = min(max([len(x) for x in names] + [6]), 28)
    # Group claims into blocks that fit beside number, name and verdict.
    fixed = num_w + 2 + name_w + 2 + verdict_w
    if fixed + 2 + (max((c[2] for c in cols), default=0)) > width:
        name_w = max(8, width - num_w - 2 - verdict_w - 4 - max(c[2] for c in cols))
        fixed = num_w + 2 + name_w + 2 + verdict_w
    blocks: list[list[int]] = [[]]
    used = fixed
    for j, (_, _, w) in enumerate(cols):
        if blocks[-1] and used + 2 + w > width:
            blocks.append([])
            used = fixed
        blocks[-1].append(j)
        used += 2 + w
    for _b, block in enumerate(blocks):
        if len(blocks) > 1:
            lines.append(f"claims {block[0] + 1}-{block[-1] + 1} of {len(cols)}:")
        widths = [num_w, name_w, verdict_w] + [cols[j][2] for j in block]
        right = [True, False, False] + [True] * len(block)
        for r in range(3):
            left = ["#", "sample", "verdict"] if r == 0 else ["", "", ""]
            lines.append(_fit(left + [cols[j][0][r] for j in block], widths, right))
        lines.append("  ".join("-" * w for w in widths))
        for k, s in enumerate(samples):
            word = s["verdict"].upper() if s["verdict"] == "fail" else s["verdict"]
            row = [str(k + 1), _cut(s["name"], name_w), word] + [cols[j][1][k] for j in block]
            lines.append(_fit(row, widths, right))
        lines.append("")
    lines.append("marks: ! failed check, ? inconclusive (within the guard band U); limits, margins: --wide or the CSV")
    lines.append("")
    lines += summary_lines(doc, claims, width=width)
    lines.append("")
    counts = {k: sum(s["verdict"] == k for s in samples) for k in ("pass", "inconclusive", "fail")}
    if "decision" in doc:
        lines.append(_cut(f"decision rule: {doc['decision']}", width))
    lines.append(
        f"verdict: {doc['verdict'].upper()}  (samples: {counts['pass']} pass, "
        f"{counts['inconclusive']} inconclusive, {counts['fail']} fail)"
    )
    return "\n".join(lines)


def verdict_detail(doc: Mapping[str, Any], claims) -> str:
    """The wide form: one row per sample, each cell ``value [limit] margin unit result``."""
    metrics = list(claims.metrics)
    quad = _quad(claims)
    head = ["sample", "declared_id", "verdict"] + [metric_text(m)[0] for m in metrics]
    rows = []
    for s in doc["samples"]:
        cells = [s["name"], s.get("declared_id") or "-", s["verdict"].upper() if s["verdict"] != "pass" else "pass"]
        for c in s["checks"]:
            mark = c["result"].upper() if c["result"] == "fail" else c["result"]
            cells.append(f"{value_text(c['metric'], c['value'])} [{limit_text(c, quad)}] {margin_text(c)} {mark}")
        rows.append(cells)
    widths = [max(len(str(r[i])) for r in [head] + rows) for i in range(len(head))]
    lines = [
        f"claims: {claims.source}",
        "cell: value [limit] margin result",
        "  ".join(h.ljust(w) for h, w in zip(head, widths)).rstrip(),
        "  ".join("-" * w for w in widths),
    ]
    lines += ["  ".join(str(c).ljust(w) for c, w in zip(r, widths)).rstrip() for r in rows]
    lines.append("")
    lines += summary_lines(doc, claims, width=10_000)
    lines.append(f"verdict: {doc['verdict'].upper()}")
    return "\n".join(lines)


def verdict_rows_csv(doc: Mapping[str, Any], claims) -> str:
    """The verdict as CSV: one row per sample with its declared id, every sidecar column, the
    verdict, and per claim its value, limits, margin, U and result."""
    from ..formats import csv_text

    sidecar = getattr(claims, "sidecar", {}) or {}
    extra: list[str] = []
    for cols in sidecar.values():
        for k in cols:
            if k not in extra and k != "declared_id":
                extra.append(k)
    header = ["name", "declared_id"] + [f"sidecar_{k}" if k != "power_W" else "power_W" for k in extra]
    header += ["verdict"]
    for m in claims.metrics:
        header += [f"{m}_value", f"{m}_min", f"{m}_max", f"{m}_margin", f"{m}_U", f"{m}_result"]
    rows = []
    for s in doc["samples"]:
        side = sidecar.get(s["name"], {})
        row: list[Any] = [s["name"], s.get("declared_id") or side.get("declared_id")]
        row += [side.get(k) for k in extra]
        row.append(s["verdict"])
        for c in s["checks"]:
            U = (c.get("decision") or {}).get("U")
            row += [c["value"], c["min"], c["max"], c["margin"], U, c["result"]]
        rows.append(["" if v is None else v for v in row])
    return csv_text(header, rows)
