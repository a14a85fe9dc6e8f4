"""Commands ``verify`` (spectra against a claims file) and ``bin`` (ANSI quadrangle and SDCM bins).

Exit status of ``verify``: 0 when every check passes; 1 when any check fails;
3 when nothing fails but some check is inconclusive under a guard band (the
claim is neither shown nor refuted); 2 for bad input.
"""

from __future__ import annotations

from pathlib import Path
from typing import List, Optional

import typer

from ..spreadsheet import check_dialect
from .options import (
    INTERPOLATION_OPTION,
    parse_interpolation,
    CSV_DIALECT_OPTION,
    JSON_OPTION,
    OVERWRITE_OPTION,
    QUANTITY_HELP,
    dumps,
    emit_json,
    require_suffix,
    write_output,
)

EXIT_FAIL = 1
EXIT_INCONCLUSIVE = 3

_OUTPUT_CSV = typer.Option(None, "--output", "-o", help="Write the per-sample table to FILE (.csv, .xlsx or .json).")


def _needs_rendering(claims) -> bool:
    rendering = {"Ra", "Rf", "Rg"} | {f"R{i}" for i in range(1, 15)}
    return any(lim.metric in rendering for lim in claims.limits)


def verify_cmd(
    files: List[Path] = typer.Argument(..., help="Spectrum files (CSV/TSV/TXT, JSON, IES TM-27 XML)."),
    claims_file: Path = typer.Option(..., "--claims", help="Claims file (TOML) to check the spectra against."),
    quantity: Optional[str] = typer.Option(None, "--quantity", "-q", help=QUANTITY_HELP),
    json_out: bool = JSON_OPTION,
    output: Optional[Path] = _OUTPUT_CSV,
    report: Optional[Path] = typer.Option(None, "--report", help="Also write the PDF report, starting with the "
                                          "verdict pages, to FILE (.pdf)."),
    overwrite: bool = OVERWRITE_OPTION,
    csv_dialect: str = CSV_DIALECT_OPTION,
    interpolation: str = INTERPOLATION_OPTION,
) -> None:
    """Check measured spectra against a supplier's claims; exit 0 pass, 1 fail, 3 inconclusive, 2 bad input."""
    from ..claims import format_verdict, load_claims, verdict_csv, verify

    inputs = [*files, claims_file]
    check_dialect(csv_dialect)
    if output is not None:
        require_suffix(output, (".csv", ".json", ".xlsx"))
    if report is not None:
        from ..errors import InputError
        from ..safe_io import check_output_path

        require_suffix(report, (".pdf",), option="--report")
        if output is not None and report.resolve() == output.resolve():
            raise InputError("--report and --output name the same file", source=str(report))
        check_output_path(report, overwrite=overwrite, inputs=inputs)  # before the slow part
    claims = load_claims(claims_file)
    # The report draws colour rendering, so it needs the full analysis.
    from ..analysis import analyse_files

    analysis = analyse_files(files, quantity=quantity, rendering=report is not None or _needs_rendering(claims),
                             interpolation=parse_interpolation(interpolation))
    records = analysis.records()
    verdict = verify(records, claims)
    doc = verdict.as_dict()
    traced = _traceable(doc, records, claims_file, interpolation=parse_interpolation(interpolation))
    if output is not None:
        text = dumps(traced) if output.suffix.lower() == ".json" else verdict_csv(doc, claims)
        write_output(output, text, overwrite=overwrite, inputs=inputs, dialect=csv_dialect)
    if report is not None:
        from ..report import build_report
        from .options import info

        rep = build_report(analysis, report, overwrite=overwrite, inputs=inputs, verdict=doc, claims=claims,
                           records=records)
        info(f"wrote {report} ({len(rep.pages)} pages)")
    if json_out:
        emit_json(traced)
    else:
        typer.echo(format_verdict(doc, claims))
    code = {"pass": 0, "fail": EXIT_FAIL, "inconclusive": EXIT_INCONCLUSIVE}[verdict.verdict]
    if code:
        raise typer.Exit(code)


def _traceable(doc: dict, records: list[dict], claims_file: Path, interpolation: str = "auto") -> dict:
    """The verdict with what makes it traceable: versions, conventions, every input's SHA-256."""
    from ..analysis import provenance
    from ..spectra import sha256_of_file

    samples = [{**s, "source": r.get("source"), "sha256": r.get("sha256")} for s, r in zip(doc["samples"], records)]
    return {**provenance(interpolation=interpolation), "claims_file": str(claims_file), "claims_sha256": sha256_of_file(claims_file),
            **doc, "samples": samples}


def bin_cmd(
    files: List[Path] = typer.Argument(..., help="Spectrum files (CSV/TSV/TXT, JSON, IES TM-27 XML)."),
    quantity: Optional[str] = typer.Option(None, "--quantity", "-q", help=QUANTITY_HELP),
    ellipses: str = typer.Option("macadam1942", "--ellipses",
                                 help="SDCM centres and ellipses: macadam1942 (ANSI centres) | iec60081 (lamp centres)."),
    json_out: bool = JSON_OPTION,
    output: Optional[Path] = _OUTPUT_CSV,
    overwrite: bool = OVERWRITE_OPTION,
    csv_dialect: str = CSV_DIALECT_OPTION,
    interpolation: str = INTERPOLATION_OPTION,
) -> None:
    """ANSI C78.377 quadrangle and SDCM step of each spectrum, with counts per bin."""
    import numpy as np

    from ..binning import ELLIPSE_SETS, bin_chromaticities
    from ..claims import cell_text as _fmt
    from ..errors import InputError

    if ellipses not in ELLIPSE_SETS:
        raise InputError(f"--ellipses must be one of {', '.join(ELLIPSE_SETS)}, got {ellipses!r}")
    check_dialect(csv_dialect)
    if output is not None:
        require_suffix(output, (".csv", ".json", ".xlsx"))
    from ..analysis import analyse_files

    interp = parse_interpolation(interpolation)
    records = analyse_files(files, quantity=quantity, rendering=False, interpolation=interp).records()
    xy = np.array([[np.nan if r["x"] is None else r["x"], np.nan if r["y"] is None else r["y"]] for r in records])
    result = bin_chromaticities(xy, names=[r["name"] for r in records], ellipses=ellipses)
    rows = result.records()
    for row, rec in zip(rows, records):
        row["cct_K"] = rec.get("cct_K")
        row["duv"] = rec.get("duv")
    for row, rec in zip(rows, records):
        row["source"], row["sha256"] = rec.get("source"), rec.get("sha256")
    from ..analysis import provenance

    doc = {**provenance(interpolation=interp), "ellipses": ellipses, "samples": rows, "counts": result.counts()}
    if output is not None:
        text = dumps(doc) if output.suffix.lower() == ".json" else result.csv()
        write_output(output, text, overwrite=overwrite, inputs=files, dialect=csv_dialect)
    if json_out:
        emit_json(doc)
        return
    head = ["sample", "CCT [K]", "Duv", "x", "y", "quadrangle", "centre", "SDCM", "bin"]
    table = [[r["name"], _fmt(r["cct_K"]), _fmt(r["duv"]), f"{r['x']:.4f}", f"{r['y']:.4f}",
              r["quadrangle"] or "none", r["centre"] + ("*" if r["extrapolated"] else ""),
              _fmt(r["sdcm_steps"]), "n/a" if r["sdcm_bin"] is None else str(r["sdcm_bin"])] for r in rows]
    widths = [max(len(str(t[i])) for t in [head] + table) for i in range(len(head))]
    lines = ["  ".join(h.ljust(w) for h, w in zip(head, widths)), "  ".join("-" * w for w in widths)]
    lines += ["  ".join(str(c).ljust(w) for c, w in zip(t, widths)) for t in table]
    lines.append("")
    lines.append("counts (quadrangle: SDCM bin = samples):")
    for q, bins in doc["counts"].items():
        lines.append(f"  {q:<6} " + ", ".join(f"{b} step{'s' if b != '1' else ''}: {c}" for b, c in bins.items()))
    if any(r["extrapolated"] for r in rows):
        lines.append("* centre outside the hull of MacAdam's 1942 data: nearest ellipse used")
    typer.echo("\n".join(lines))


def register(app: typer.Typer) -> None:
    app.command("verify")(verify_cmd)
    app.command("bin")(bin_cmd)
