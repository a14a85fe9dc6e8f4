"""Commands ``verify`` (spectra against a claims file) and ``bin`` (ANSI quadrangle and SDCM bins).

Exit status of ``verify``: 0 when every check passes; 1 when any check fails;
3 when nothing fails but some check is inconclusive under a guard band (the
claim is neither shown nor refuted); 2 for bad input.
"""

from __future__ import annotations

from pathlib import Path

import typer

from ..spreadsheet import check_dialect
from .options import (
    COLUMNS_OPTION,
    CSV_DIALECT_OPTION,
    DECIMAL_OPTION,
    DELIMITER_OPTION,
    DOMINANT_WHITE_OPTION,
    INTERPOLATION_OPTION,
    JSON_OPTION,
    OVERWRITE_OPTION,
    QUANTITY_HELP,
    RECURSIVE_OPTION,
    SKIP_ROWS_OPTION,
    WAVELENGTH_COLUMN_OPTION,
    dumps,
    emit_json,
    input_files,
    parse_dominant_white,
    parse_interpolation,
    require_suffix,
    table_layout,
    write_output,
)

EXIT_FAIL = 1
EXIT_INCONCLUSIVE = 3

_OUTPUT_CSV = typer.Option(None, "--output", "-o", help="Write the per-sample table to FILE (.csv, .xlsx or .json).")


def _needs_rendering(claims) -> bool:
    rendering = {"Ra", "Rf", "Rg"} | {f"R{i}" for i in range(1, 15)}
    return bool(claims.design_intent) or any(
        lim.metric in rendering or lim.metric.startswith(("Rf_h", "Rcs_h", "Rhs_h")) for lim in claims.limits
    )


def verify_cmd(
    files: list[Path] = typer.Argument(
        ..., help="Spectrum files (CSV/TSV/TXT, JSON, IES TM-27 XML) or folders of them."
    ),
    claims_file: Path = typer.Option(..., "--claims", help="Claims file (TOML) to check the spectra against."),
    quantity: str | None = typer.Option(None, "--quantity", "-q", help=QUANTITY_HELP),
    json_out: bool = JSON_OPTION,
    output: Path | None = _OUTPUT_CSV,
    report: Path | None = typer.Option(
        None, "--report", help="Also write the PDF report, starting with the verdict pages, to FILE (.pdf)."
    ),
    overwrite: bool = OVERWRITE_OPTION,
    recursive: bool = RECURSIVE_OPTION,
    skip_rows: int | None = SKIP_ROWS_OPTION,
    delimiter: str | None = DELIMITER_OPTION,
    decimal: str | None = DECIMAL_OPTION,
    wavelength_column: int | None = WAVELENGTH_COLUMN_OPTION,
    columns: str | None = COLUMNS_OPTION,
    wide: bool = typer.Option(
        False,
        "--wide",
        help="Every cell as value [limit] margin result (wider than a terminal); the default table fits 100 columns.",
    ),
    csv_dialect: str = CSV_DIALECT_OPTION,
    interpolation: str = INTERPOLATION_OPTION,
    dominant_white: str = DOMINANT_WHITE_OPTION,
    uncertainty_model: Path | None = typer.Option(
        None,
        "--uncertainty-model",
        help="Guard bands from each sample's computed U (Monte Carlo with this "
        "instrument model, TOML); a claims file's [uncertainty] entry still overrides its metric.",
    ),
) -> None:
    """Check measured spectra against a supplier's claims; exit 0 pass, 1 fail, 3 inconclusive, 2 bad input."""
    from ..claims import format_verdict, load_claims, verdict_csv, verify

    layout = table_layout(skip_rows, delimiter, decimal, wavelength_column, columns)
    files = input_files(files, recursive=recursive)
    inputs = [*files, claims_file] + ([uncertainty_model] if uncertainty_model is not None else [])
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

    analysis = analyse_files(
        files,
        quantity=quantity,
        rendering=report is not None or _needs_rendering(claims),
        layout=layout,
        interpolation=parse_interpolation(interpolation),
        dominant_white=parse_dominant_white(dominant_white),
    )
    records = analysis.records()
    computed, model, unc_result = None, None, None
    if uncertainty_model is not None:
        computed, model, unc_result = _computed_uncertainties(
            files,
            quantity,
            uncertainty_model,
            claims,
            layout,
            dominant_white=parse_dominant_white(dominant_white),
            rendering=report is not None,
        )
    verdict = verify(records, claims, computed)
    doc = verdict.as_dict()
    traced = _traceable(doc, records, claims, interpolation=parse_interpolation(interpolation))
    if model is not None:
        traced["uncertainty_model"] = model.provenance()
    from ..safe_io import output_group

    if claims.sidecar_path:
        inputs.append(Path(claims.sidecar_path))
    with output_group():  # --output and --report: both written, or neither
        if output is not None:
            text = dumps(traced) if output.suffix.lower() == ".json" else verdict_csv(traced, claims)
            prov = {k: traced[k] for k in ("cctkit_version", "colour_science_version", "conventions")}
            write_output(
                output,
                text,
                overwrite=overwrite,
                inputs=inputs,
                dialect=csv_dialect,
                announce=False,
                provenance_doc=prov,
            )
        if report is not None:
            from ..report import build_report
            from .options import ending_process

            with ending_process():  # from the console, nothing of the report is collected: the process ends next
                rep = build_report(
                    analysis,
                    report,
                    overwrite=overwrite,
                    inputs=inputs,
                    verdict=doc,
                    claims=claims,
                    records=records,
                    uncertainty=unc_result,
                )
    from .options import info

    if output is not None:
        info(f"wrote {output}")
    if report is not None:
        info(f"wrote {report} ({len(rep.pages)} pages)")
    if json_out:
        emit_json(traced)
    else:
        typer.echo(format_verdict(doc, claims, wide=wide))
    code = {"pass": 0, "fail": EXIT_FAIL, "inconclusive": EXIT_INCONCLUSIVE}[verdict.verdict]
    if code:
        raise typer.Exit(code)


def _computed_uncertainties(
    files, quantity, model_file: Path, claims, layout=None, dominant_white: str = "E", *, rendering: bool = False
):
    """U per sample and metric from a Monte Carlo run with the instrument model, the model, and the
    run's result (``rendering``: with the colour-rendering measures, for the report's headline strip)."""
    from ..analysis import read_files
    from ..uncertainty import claim_uncertainties, grid_groups, load_model, monte_carlo
    from .options import info

    model = load_model(model_file)

    def progress(i: int, n: int, m: int) -> None:
        info(f"uncertainty: sample {i}/{n}, {m} draws")

    result = monte_carlo(
        grid_groups(read_files(files, quantity=quantity, layout=layout)),
        model,
        rendering=rendering or _needs_rendering(claims),
        progress=progress,
        dominant_white=dominant_white,
    )
    return claim_uncertainties(result, claims), model, result


def _traceable(doc: dict, records: list[dict], claims, interpolation: str = "auto") -> dict:
    """The verdict with what makes it traceable: versions, conventions, every input's SHA-256
    (of the bytes that were read and analysed)."""
    from ..analysis import provenance

    samples = [{**s, "source": r.get("source"), "sha256": r.get("sha256")} for s, r in zip(doc["samples"], records)]
    sidecar = {"sidecar": claims.sidecar_path, "sidecar_sha256": claims.sidecar_sha256} if claims.sidecar_path else {}
    return {
        **provenance(interpolation=interpolation, used=[r.get("interpolation") for r in records]),
        "claims_file": claims.source,
        "claims_sha256": claims.sha256,
        **sidecar,
        **doc,
        "samples": samples,
    }


def bin_cmd(
    files: list[Path] = typer.Argument(
        ..., help="Spectrum files (CSV/TSV/TXT, JSON, IES TM-27 XML) or folders of them."
    ),
    quantity: str | None = typer.Option(None, "--quantity", "-q", help=QUANTITY_HELP),
    ellipses: str = typer.Option(
        "iec-else-ansi",
        "--ellipses",
        help="SDCM centres and ellipses: iec-else-ansi (default, the rule verify uses: "
        "IEC 60081 lamp centre where the nominal CCT has one, else the ANSI centre with "
        "MacAdam 1942) | macadam1942 (ANSI centres) | iec60081 (lamp centres only).",
    ),
    json_out: bool = JSON_OPTION,
    output: Path | None = _OUTPUT_CSV,
    overwrite: bool = OVERWRITE_OPTION,
    recursive: bool = RECURSIVE_OPTION,
    skip_rows: int | None = SKIP_ROWS_OPTION,
    delimiter: str | None = DELIMITER_OPTION,
    decimal: str | None = DECIMAL_OPTION,
    wavelength_column: int | None = WAVELENGTH_COLUMN_OPTION,
    columns: str | None = COLUMNS_OPTION,
    csv_dialect: str = CSV_DIALECT_OPTION,
    interpolation: str = INTERPOLATION_OPTION,
) -> None:
    """ANSI C78.377 quadrangle and SDCM step of each spectrum, with counts per bin."""
    import numpy as np

    from ..binning import ELLIPSE_SETS, bin_chromaticities
    from ..errors import InputError

    if ellipses not in ELLIPSE_SETS:
        raise InputError(f"--ellipses must be one of {', '.join(ELLIPSE_SETS)}, got {ellipses!r}")
    check_dialect(csv_dialect)
    if output is not None:
        require_suffix(output, (".csv", ".json", ".xlsx"))
    from ..analysis import analyse_files

    interp = parse_interpolation(interpolation)
    layout = table_layout(skip_rows, delimiter, decimal, wavelength_column, columns)
    files = input_files(files, recursive=recursive)
    records = analyse_files(files, quantity=quantity, rendering=False, layout=layout, interpolation=interp).records()
    xy = np.array([[np.nan if r["x"] is None else r["x"], np.nan if r["y"] is None else r["y"]] for r in records])
    result = bin_chromaticities(xy, names=[r["name"] for r in records], ellipses=ellipses)
    rows = result.records()
    for row, rec in zip(rows, records):
        row["cct_K"] = rec.get("cct_K")
        row["duv"] = rec.get("duv")
    for row, rec in zip(rows, records):
        row["source"], row["sha256"] = rec.get("source"), rec.get("sha256")
    from ..analysis import provenance

    prov = provenance(interpolation=interp, used=[r.get("interpolation") for r in records])
    doc = {**prov, "ellipses": ellipses, "samples": rows, "counts": result.counts()}
    if output is not None:
        if output.suffix.lower() == ".json":
            text = dumps(doc)
        else:  # the bins, then where each sample came from (the SHA-256 of the bytes analysed)
            from ..formats import csv_text

            cols = [
                "name",
                "x",
                "y",
                "quadrangle",
                "centre",
                "sdcm_steps",
                "sdcm_bin",
                "extrapolated",
                "source",
                "sha256",
            ]
            text = csv_text(cols, ([r.get(c) for c in cols] for r in rows))
        write_output(output, text, overwrite=overwrite, inputs=files, dialect=csv_dialect, provenance_doc=prov)
    if json_out:
        emit_json(doc)
        return
    head = ["sample", "CCT [K]", "Duv", "x", "y", "quadrangle", "centre", "SDCM", "bin"]
    from ..report.text import value_text

    # One format per column: the metric's usual precision (cctkit.report.text.METRIC_TEXT).
    table = [
        [
            r["name"],
            value_text("cct_K", r["cct_K"]),
            value_text("duv", r["duv"]),
            value_text("x", r["x"]),
            value_text("y", r["y"]),
            r["quadrangle"] or "none",
            (r["centre"] or "none") + ("*" if r["extrapolated"] else ""),
            value_text("sdcm", r["sdcm_steps"]),
            "n/a" if r["sdcm_bin"] is None else str(r["sdcm_bin"]),
        ]
        for r in rows
    ]
    widths = [max(len(str(t[i])) for t in [head] + table) for i in range(len(head))]
    lines = ["  ".join(h.ljust(w) for h, w in zip(head, widths)), "  ".join("-" * w for w in widths)]
    lines += ["  ".join(str(c).ljust(w) for c, w in zip(t, widths)) for t in table]
    lines.append("")
    lines.append("counts (quadrangle: SDCM bin = samples):")
    for q, bins in doc["counts"].items():
        lines.append(f"  {q:<6} " + ", ".join(f"{b} step{'s' if b != '1' else ''}: {c}" for b, c in bins.items()))
    if any(r["extrapolated"] for r in rows):
        lines.append("* centre outside the hull of MacAdam's 1942 data: nearest ellipse used")
    lines.append(
        f"SDCM centres and ellipses: {ellipses}"
        + (" (the rule verify uses for max_sdcm)" if ellipses == "iec-else-ansi" else "")
    )
    typer.echo("\n".join(lines))


def register(app: typer.Typer) -> None:
    app.command("verify")(verify_cmd)
    app.command("bin")(bin_cmd)
