"""``cctkit report``: a PDF report (or a one-page PNG summary) of measured spectra."""

from __future__ import annotations

from pathlib import Path
from typing import List, Optional

import typer

from .options import INTERPOLATION_OPTION, OVERWRITE_OPTION, parse_interpolation, QUANTITY_HELP, info

__all__ = ["report_cmd", "register"]


def report_cmd(
    files: List[Path] = typer.Argument(..., help="Spectrum files (CSV/TSV/TXT, JSON, IES TM-27 XML)."),
    output: Path = typer.Option(..., "--output", "-o", help="Report file: .pdf (full report) or .png (summary, "
                                "1600x1000 px at 150 dpi)."),
    overwrite: bool = OVERWRITE_OPTION,
    pages: bool = typer.Option(False, "--pages", help="One page per spectrum even for batches of more than 12."),
    quantity: Optional[str] = typer.Option(None, "--quantity", "-q", help=QUANTITY_HELP),
    paper: str = typer.Option("a4", "--paper", help="Paper size of the PDF: a4 | letter."),
    diagram: str = typer.Option("uv", "--diagram", help="Chromaticity diagram: uv (CIE 1960) | uvp (CIE 1976 u'v') "
                                "| xy (CIE 1931)."),
    claims_file: Optional[Path] = typer.Option(None, "--claims", help="Claims file (TOML): the PDF starts with "
                                               "the verdict of every spectrum against it."),
    interpolation: str = INTERPOLATION_OPTION,
) -> None:
    """A report an engineer can sign off: provenance, headline numbers, spectrum, chromaticity, rendering."""
    from ..report.build import check_options
    from ..safe_io import check_output_path
    from ..spectra import Quantity

    paper_key = paper.strip().lower()
    diagram_key = diagram.strip().lower().replace("'", "p").replace("\u2032", "p")
    check_options(output, paper=paper_key, diagram=diagram_key, verdict=claims_file is not None)
    if quantity is not None:
        Quantity.parse(quantity, source="--quantity")
    inputs = [*files, claims_file] if claims_file is not None else list(files)
    check_output_path(output, overwrite=overwrite, inputs=inputs)  # before reading and drawing
    claims = None
    if claims_file is not None:
        from ..claims import load_claims

        claims = load_claims(claims_file)

    from ..analysis import analyse_files
    from ..report import build_report

    # One report holds one quantity: a mix is refused with a one-line InputError.
    analysis = analyse_files(files, quantity=quantity, interpolation=parse_interpolation(interpolation))
    records = analysis.records()
    verdict = None
    if claims is not None:
        from ..claims import verify

        verdict = verify(records, claims).as_dict()
    rep = build_report(analysis, output, paper=paper_key, pages=True if pages else None, diagram=diagram_key,
                       overwrite=overwrite, inputs=inputs, verdict=verdict, claims=claims, records=records)
    if verdict is not None:
        info(f"claims verdict: {verdict['verdict']}")
    if rep.kind == "pdf":
        info(f"wrote {output} ({len(rep.pages)} page{'s' if len(rep.pages) != 1 else ''})")
    else:
        info(f"wrote {output} ({rep.size_px[0]}x{rep.size_px[1]} px)")


def register(app: typer.Typer) -> None:
    app.command("report")(report_cmd)
