"""``cctkit report``: a PDF report (or a one-page PNG summary) of measured spectra."""

from __future__ import annotations

from pathlib import Path

import typer

from .options import (
    COLUMNS_OPTION,
    DECIMAL_OPTION,
    DELIMITER_OPTION,
    DOMINANT_WHITE_OPTION,
    INTERPOLATION_OPTION,
    OVERWRITE_OPTION,
    QUANTITY_HELP,
    RECURSIVE_OPTION,
    SKIP_ROWS_OPTION,
    WAVELENGTH_COLUMN_OPTION,
    info,
    input_files,
    parse_dominant_white,
    parse_interpolation,
    table_layout,
)

__all__ = ["report_cmd", "register"]


def report_cmd(
    files: list[Path] = typer.Argument(
        ..., help="Spectrum files (CSV/TSV/TXT, JSON, IES TM-27 XML) or folders of them."
    ),
    output: Path = typer.Option(
        ..., "--output", "-o", help="Report file: .pdf (full report) or .png (summary, 1600x1000 px at 150 dpi)."
    ),
    overwrite: bool = OVERWRITE_OPTION,
    pages: bool = typer.Option(False, "--pages", help="One page per spectrum even for batches of more than 12."),
    quantity: str | None = typer.Option(None, "--quantity", "-q", help=QUANTITY_HELP),
    paper: str | None = typer.Option(
        None, "--paper", help="Paper size of the PDF: a4 | letter (default: the profile's, else a4)."
    ),
    diagram: str = typer.Option(
        "uv", "--diagram", help="Chromaticity diagram: uv (CIE 1960) | uvp (CIE 1976 u'v') | xy (CIE 1931)."
    ),
    claims_file: Path | None = typer.Option(
        None,
        "--claims",
        help="Claims file (TOML): the PDF starts with "
        "the verdict of every spectrum against it; the exit status is "
        "verify's (0 pass, 1 fail, 3 inconclusive).",
    ),
    profile: Path | None = typer.Option(
        None,
        "--profile",
        help="Report profile (.toml or .json): sign-off "
        "fields, date, paper, logo, sections; the options below win over it.",
    ),
    title: str | None = typer.Option(None, "--title", help="Report title."),
    project: str | None = typer.Option(None, "--project", help="Project the measurements belong to."),
    lab: str | None = typer.Option(None, "--lab", help="Laboratory that measured."),
    operator: str | None = typer.Option(None, "--operator", help="Who measured (printed as 'prepared by')."),
    instrument: str | None = typer.Option(
        None, "--instrument", help="Instrument used (the files' own instrument metadata is printed beside it)."
    ),
    notes: str | None = typer.Option(None, "--notes", help="Free notes for the sign-off page."),
    date: str | None = typer.Option(
        None, "--date", help="Report date YYYY-MM-DD (default: the profile's, else SOURCE_DATE_EPOCH, else today)."
    ),
    sections: str | None = typer.Option(
        None,
        "--sections",
        help="Comma list of the pages to include: verdict,comparison,spectra,summary,scatter (default all).",
    ),
    recursive: bool = RECURSIVE_OPTION,
    skip_rows: int | None = SKIP_ROWS_OPTION,
    delimiter: str | None = DELIMITER_OPTION,
    decimal: str | None = DECIMAL_OPTION,
    wavelength_column: int | None = WAVELENGTH_COLUMN_OPTION,
    columns: str | None = COLUMNS_OPTION,
    interpolation: str = INTERPOLATION_OPTION,
    dominant_white: str = DOMINANT_WHITE_OPTION,
    uncertainty_model: Path | None = typer.Option(
        None,
        "--uncertainty-model",
        help="Instrument uncertainty model (TOML, as for `cctkit uncertainty`): "
        "the headline strip shows U (k = 2) beside each number and each spectrum page is followed by its "
        "uncertainty page (PDF).",
    ),
) -> None:
    """A report an engineer can sign off: sign-off page, headline numbers, spectrum, rendering, chromaticity."""
    from ..errors import InputError
    from ..report.build import check_options
    from ..report.profile import SignOff, load_profile
    from ..safe_io import check_output_path
    from ..spectra import Quantity

    signoff = load_profile(profile) if profile is not None else SignOff()
    signoff = signoff.merged(
        title=title,
        project=project,
        lab=lab,
        operator=operator,
        instrument=instrument,
        notes=notes,
        date=date,
        sections=sections,
    )
    paper_key = (paper or signoff.paper or "a4").strip().lower()
    diagram_key = diagram.strip().lower().replace("'", "p").replace("\u2032", "p")
    check_options(output, paper=paper_key, diagram=diagram_key, verdict=claims_file is not None)
    if quantity is not None:
        Quantity.parse(quantity, source="--quantity")
    layout = table_layout(skip_rows, delimiter, decimal, wavelength_column, columns)
    files = input_files(files, recursive=recursive)
    inputs = [*files, claims_file] if claims_file is not None else list(files)
    if profile is not None:
        inputs.append(profile)
    if signoff.logo is not None:
        inputs.append(signoff.logo)
    if uncertainty_model is not None:
        inputs.append(uncertainty_model)
        if output.suffix.lower() != ".pdf":
            raise InputError(f"--uncertainty-model goes with a PDF report, got {output.name!r}", source=str(output))
    check_output_path(output, overwrite=overwrite, inputs=inputs)  # before reading and drawing
    model = None
    if uncertainty_model is not None:  # a bad model file is refused before the slow part
        from ..uncertainty import load_model

        model = load_model(uncertainty_model)
    claims = None
    if claims_file is not None:
        from ..claims import load_claims

        claims = load_claims(claims_file)

    from ..analysis import analyse_files
    from ..report import build_report

    # Spectra of different quantities share one report: colour results for all, totals each in its unit.
    analysis = analyse_files(
        files,
        quantity=quantity,
        layout=layout,
        interpolation=parse_interpolation(interpolation),
        dominant_white=parse_dominant_white(dominant_white),
    )
    records = analysis.records()
    unc = None
    if model is not None:
        from ..analysis import read_files
        from ..uncertainty import grid_groups, monte_carlo

        unc = monte_carlo(
            grid_groups(read_files(files, quantity=quantity, layout=layout)),
            model,
            progress=lambda i, n, m: info(f"uncertainty: spectrum {i}/{n}, {m} draws"),
        )
    verdict = None
    if claims is not None:
        from ..claims import verify

        verdict = verify(records, claims).as_dict()
    from .options import ending_process

    with ending_process():  # from the console, nothing of the report is collected: the process ends next
        rep = build_report(
            analysis,
            output,
            paper=paper_key,
            pages=True if pages else None,
            diagram=diagram_key,
            overwrite=overwrite,
            inputs=inputs,
            verdict=verdict,
            claims=claims,
            records=records,
            signoff=signoff,
            uncertainty=unc,
        )
    if verdict is not None:
        info(f"claims verdict: {verdict['verdict']}")
    if rep.kind == "pdf":
        info(f"wrote {output} ({len(rep.pages)} page{'s' if len(rep.pages) != 1 else ''})")
    else:
        width, height = rep.size_px or (0, 0)
        info(f"wrote {output} ({width}x{height} px)")
    if verdict is not None and verdict["verdict"] != "pass":
        from .verify import EXIT_FAIL, EXIT_INCONCLUSIVE

        raise typer.Exit(EXIT_FAIL if verdict["verdict"] == "fail" else EXIT_INCONCLUSIVE)


def register(app: typer.Typer) -> None:
    app.command("report")(report_cmd)
