"""Core commands: ``inspect``, ``cct``, ``locus``, ``blackbody``."""

from __future__ import annotations

from pathlib import Path
from typing import Any

import typer

from ..errors import InputError
from ..formats import format_number
from .options import (
    COLUMNS_OPTION,
    CSV_DIALECT_OPTION,
    DECIMAL_OPTION,
    DELIMITER_OPTION,
    DOMINANT_WHITE_OPTION,
    INTERPOLATION_OPTION,
    JSON_OPTION,
    OBSERVER_HELP,
    OUTPUT_OPTION,
    OVERWRITE_OPTION,
    QUANTITY_HELP,
    RECURSIVE_OPTION,
    SKIP_ROWS_OPTION,
    WAVELENGTH_COLUMN_OPTION,
    csv_text,
    dumps,
    emit_json,
    info,
    input_files,
    parse_dominant_white,
    parse_interpolation,
    parse_observer,
    require_suffix,
    spectrum_file_text,
    table_layout,
    write_output,
)

# (record key, label, unit, format) for the human table of ``inspect``.
INSPECT_ROWS: tuple[tuple[str, str, str, str], ...] = (
    ("cct_K", "CCT", "K", "{:.0f}"),
    ("duv", "Duv", "", "{:+.4f}"),
    ("x", "x", "", "{:.4f}"),
    ("y", "y", "", "{:.4f}"),
    ("u", "u (CIE 1960)", "", "{:.4f}"),
    ("v", "v (CIE 1960)", "", "{:.4f}"),
    ("u_prime", "u' (CIE 1976)", "", "{:.4f}"),
    ("v_prime", "v' (CIE 1976)", "", "{:.4f}"),
    ("luminous_flux_lm", "Luminous flux", "lm", "{:.1f}"),
    ("illuminance_lx", "Illuminance", "lx", "{:.1f}"),
    ("luminance_cd_per_m2", "Luminance", "cd/m2", "{:.1f}"),
    ("intensity_cd", "Luminous intensity", "cd", "{:.1f}"),
    ("ler_lm_per_W", "LER", "lm/W", "{:.1f}"),
    *(
        (k, "Radiant total", u, "{:.5g}")
        for k, u in (
            ("radiant_total_W", "W"),
            ("radiant_total_W_per_m2", "W/m2"),
            ("radiant_total_W_per_sr_m2", "W/(sr m2)"),
            ("radiant_total_W_per_sr", "W/sr"),
        )
    ),
    *(
        (k, "Photon flux", u, "{:.5g}")
        for k, u in (
            ("photon_flux_umol_per_s", "umol/s"),
            ("photon_flux_umol_per_m2_s", "umol/(m2 s)"),
            ("photon_flux_umol_per_sr_m2_s", "umol/(sr m2 s)"),
            ("photon_flux_umol_per_sr_s", "umol/(sr s)"),
        )
    ),
    *(
        (k, label, u, "{:.5g}")
        for k, label, u in (
            ("ppf_umol_per_s", "PPF", "umol/s"),
            ("ppfd_umol_per_m2_s", "PPFD", "umol/(m2 s)"),
            ("ppf_umol_per_sr_m2_s", "PPF per sr m2", "umol/(sr m2 s)"),
            ("ppf_umol_per_sr_s", "PPF per sr", "umol/(sr s)"),
        )
    ),
    ("sp_ratio", "S/P ratio", "", "{:.3f}"),
    ("melanopic_der", "Melanopic DER", "", "{:.3f}"),
    ("melanopic_edi_lx", "Melanopic EDI", "lx", "{:.1f}"),
    ("melanopic_edl_cd_per_m2", "Melanopic EDL", "cd/m2", "{:.1f}"),
    ("melanopic_equivalent_daylight_flux_lm", "Melanopic equiv. D65 flux", "lm", "{:.1f}"),
    ("melanopic_equivalent_daylight_intensity_cd", "Melanopic equiv. D65 int.", "cd", "{:.1f}"),
    ("peak_nm", "Peak wavelength", "nm", "{:.1f}"),
    ("centroid_nm", "Centroid wavelength", "nm", "{:.1f}"),
    ("fwhm_nm", "FWHM (highest peak)", "nm", "{:.1f}"),
    ("dominant_wavelength_nm", "Dominant wavelength", "nm", "{:.1f}"),
    ("purity", "Excitation purity", "", "{:.3f}"),
    ("Ra", "Ra (CIE 13.3)", "", "{:.1f}"),
    ("R9", "R9", "", "{:.1f}"),
    ("Rf", "Rf (TM-30 / CIE 224)", "", "{:.1f}"),
    ("Rg", "Rg (TM-30)", "", "{:.1f}"),
)


def _range_key(key: str) -> str | None:
    """The record key holding the wavelength range the total ``key`` covers."""
    if key.startswith(("radiant_total", "photon_flux")) or key == "ler_lm_per_W":
        return "radiometric_range_nm"
    if key.startswith(("ppf", "ppfd")):
        return "ppf_range_nm"
    if key in ("luminous_flux_lm", "illuminance_lx", "luminance_cd_per_m2", "intensity_cd"):
        return "photometric_range_nm"
    return None


#: After this row the table says where the other alpha-opic quantities are.
ALPHA_OPIC_LAST_ROW = "melanopic_equivalent_daylight_intensity_cd"
ALPHA_OPIC_NOTE = (
    "other CIE S 026 alpha-opic quantities (S-, M-, L-cone-opic, rhodopic; totals, ELR, DER): --json\n"
    "  alpha-opic values describe the optical stimulus only; they are not medical advice"
)


def _fmt(value: Any, fmt: str) -> str:
    if value is None:
        return "n/a"
    if isinstance(value, float):
        return format_number(value, fmt)
    return str(value)


def format_records(records: list[dict[str, Any]]) -> str:
    """The human table of ``inspect``: one block per spectrum, units in their own column."""
    lines: list[str] = []
    for rec in records:
        rec = dict(rec)
        if "R" in rec and rec["R"] is not None and "R9" not in rec:
            rec["R9"] = rec["R"][8]
        lines.append(f"{rec['name']}  ({rec['source'] or 'no file'}; {rec['quantity']}, {rec['spectral_unit']})")
        for key, label, unit, fmt in INSPECT_ROWS:
            if key in rec:
                span = rec.get(_range_key(key) or "")
                over = f" over {span[0]:g}-{span[1]:g} nm" if span and None not in span else ""
                if key == "dominant_wavelength_nm" and rec.get("dominant_white"):
                    over = (
                        f" from white {rec['dominant_white']} (x {rec['dominant_white_x']:.4f}, "
                        f"y {rec['dominant_white_y']:.4f})"
                    )
                lines.append(f"  {label:<24} {_fmt(rec[key], fmt):>12}  {unit}{over}".rstrip())
            if key == ALPHA_OPIC_LAST_ROW and "melanopic_der" in rec:
                lines.append(f"  {ALPHA_OPIC_NOTE}")
        for flag in rec.get("flags", []):
            lines.append(f"  warning [{flag['code']}]: {flag['message']}")
        lines.append("")
    return "\n".join(lines)


def inspect_cmd(
    files: list[Path] = typer.Argument(
        ..., help="Spectrum files (CSV/TSV/TXT, JSON, IES TM-27 XML) or folders of them."
    ),
    quantity: str | None = typer.Option(None, "--quantity", "-q", help=QUANTITY_HELP),
    observer: str = typer.Option("2", "--observer", help=OBSERVER_HELP),
    json_out: bool = JSON_OPTION,
    output: Path | None = OUTPUT_OPTION,
    overwrite: bool = OVERWRITE_OPTION,
    recursive: bool = RECURSIVE_OPTION,
    skip_rows: int | None = SKIP_ROWS_OPTION,
    delimiter: str | None = DELIMITER_OPTION,
    decimal: str | None = DECIMAL_OPTION,
    wavelength_column: int | None = WAVELENGTH_COLUMN_OPTION,
    columns: str | None = COLUMNS_OPTION,
    repeats: bool = typer.Option(
        False,
        "--as-repeats",
        help="Take every spectrum read as a repeat scan of one "
        "sample: analyse their mean, and give the standard deviation per wavelength.",
    ),
    csv_dialect: str = CSV_DIALECT_OPTION,
    interpolation: str = INTERPOLATION_OPTION,
    dominant_white: str = DOMINANT_WHITE_OPTION,
) -> None:
    """Every measure for each spectrum: CCT, Duv, chromaticity, photometry, colour rendering."""
    from ..analysis import analyse_groups, provenance, read_files, records_csv
    from ..spectra import Quantity

    obs = parse_observer(observer)
    if quantity is not None:
        Quantity.parse(quantity, source="--quantity")
    if output is not None:
        require_suffix(output, (".json", ".csv", ".xlsx"))
    from ..spreadsheet import check_dialect

    check_dialect(csv_dialect)
    interp = parse_interpolation(interpolation)
    white = parse_dominant_white(dominant_white)
    layout = table_layout(skip_rows, delimiter, decimal, wavelength_column, columns)
    files = input_files(files, recursive=recursive)
    items = read_files(files, quantity=quantity, layout=layout)
    scans = None
    if repeats:
        from ..repeats import average_repeats

        scans = average_repeats(items)
        items = [scans.mean]
    records = analyse_groups(items, observer=obs, interpolation=interp, dominant_white=white)
    if scans is not None:
        records[0]["repeats"] = scans.summary()
    prov = provenance(interpolation=interp, used=[r.get("interpolation") for r in records])
    doc = {**prov, "spectra": records}
    if output is not None:
        if output.suffix.lower() == ".json":
            write_output(output, dumps(doc), overwrite=overwrite, inputs=files)
        else:
            write_output(
                output,
                records_csv(records),
                overwrite=overwrite,
                inputs=files,
                dialect=csv_dialect,
                provenance_doc=prov,
            )
    if json_out:
        emit_json(doc)
    else:
        typer.echo(format_records(records).rstrip("\n"))


def cct_cmd(
    xy: str | None = typer.Option(
        None, "--xy", metavar="X,Y", help="CIE 1931 chromaticity, e.g. --xy 0.3127,0.3290 (or --xy 0.3127 0.3290)."
    ),
    uv: str | None = typer.Option(None, "--uv", metavar="U,V", help="CIE 1960 chromaticity u,v."),
    uvp: str | None = typer.Option(None, "--uvp", metavar="U',V'", help="CIE 1976 chromaticity u',v'."),
    method: str = typer.Option("exact", "--method", help="exact | ohno2013 | robertson1968."),
    observer: str = typer.Option("2", "--observer", help=OBSERVER_HELP),
    json_out: bool = JSON_OPTION,
    rest: list[str] | None = typer.Argument(None, hidden=True),  # the second number of the "X Y" form
) -> None:
    """CCT and Duv of one chromaticity (from a datasheet, say)."""
    # the plain forms of this command are answered by cctkit.entry without the framework, by the same function
    from ..entry import cct_result

    doc, lines = cct_result(xy, uv, uvp, method, observer, list(rest or []))
    if json_out:
        emit_json(doc)
    else:
        for line in lines:
            typer.echo(line)
    if "warning" in doc:
        info(f"warning: {doc['warning']}")


LOCUS_RANGE_K = (500.0, 1e6)


def locus_cmd(
    observer: str = typer.Option("2", "--observer", help=OBSERVER_HELP),
    t_min: float = typer.Option(1000.0, "--from", help="Lowest temperature [K], 500 to 1000000."),
    t_max: float = typer.Option(100000.0, "--to", help="Highest temperature [K], 500 to 1000000."),
    step: float | None = typer.Option(
        None, "--step", help="Temperature step [K] (default: 10 K to 10000 K, then 100 K)."
    ),
    output: Path | None = OUTPUT_OPTION,
    overwrite: bool = OVERWRITE_OPTION,
    json_out: bool = JSON_OPTION,
    csv_out: bool = typer.Option(False, "--csv", help="Print CSV on stdout instead of the table."),
    csv_dialect: str = CSV_DIALECT_OPTION,
) -> None:
    """The Planckian locus as a table (T_K, x, y, u, v, u', v'), 500 K to 1000000 K."""
    import numpy as np

    from ..locus import default_temperatures, planckian_locus

    lo, hi = LOCUS_RANGE_K
    for option, value in (("--from", t_min), ("--to", t_max)):
        if not np.isfinite(value) or value <= 0:
            raise InputError(
                f"{option} must be positive (a temperature in kelvin, {lo:.0f} to {hi:.0f}), got {value:g}"
            )
        if not lo <= value <= hi:
            raise InputError(f"{option} must be between {lo:.0f} and {hi:.0f} K, got {value:g}")
    if not t_min < t_max:
        raise InputError(f"--from must be below --to, got {t_min:g} and {t_max:g} K")
    from ..spreadsheet import check_dialect

    check_dialect(csv_dialect)
    if step is not None:
        if not step > 0:
            raise InputError(f"--step must be positive, got {step:g}")
        if (t_max - t_min) / step > 1e6:
            raise InputError(f"--step must give at most 1e6 rows, got {step:g} K")
        T = np.arange(t_min, t_max + step / 2, step)
    else:
        T = default_temperatures()
        T = T[(T >= t_min) & (T <= t_max)]
    loc = planckian_locus(T, observer=parse_observer(observer))
    rows = loc.rows()
    header = ["T_K", "x", "y", "u", "v", "u_prime", "v_prime"]
    if output is not None:
        suffix = require_suffix(output, (".csv", ".json", ".xlsx"))
        if suffix == ".json":
            text = dumps({"observer": loc.observer, "c2_m_K": loc.c2_m_K, "locus": rows})
        else:
            text = csv_text(header, ([r[k] for k in header] for r in rows))
        write_output(output, text, overwrite=overwrite, dialect=csv_dialect)
    if json_out:
        emit_json({"observer": loc.observer, "c2_m_K": loc.c2_m_K, "locus": rows})
    elif csv_out:
        from ..spreadsheet import csv_in_dialect

        typer.echo(csv_in_dialect(csv_text(header, ([r[k] for k in header] for r in rows)), csv_dialect), nl=False)
    elif output is None:
        typer.echo(_locus_table(rows, observer=loc.observer))


def _locus_table(rows: list[dict[str, Any]], *, observer: Any) -> str:
    """The locus for people: one row per temperature, five decimals, units in the header."""
    name = {2: "CIE 1931 2°", 10: "CIE 1964 10°"}.get(observer, str(observer))
    lines = [
        f"Planckian locus, {name} observer",
        f"{'T [K]':>9}  {'x':>7}  {'y':>7}  {'u':>7}  {'v':>7}  {'u′':>7}  {'v′':>7}",
    ]
    for r in rows:
        lines.append(
            f"{r['T_K']:>9.0f}  " + "  ".join(f"{r[k]:.5f}" for k in ("x", "y", "u", "v", "u_prime", "v_prime"))
        )
    return "\n".join(lines)


def blackbody_cmd(
    T_K: float = typer.Argument(..., help="Temperature [K]."),
    output: Path | None = OUTPUT_OPTION,
    overwrite: bool = OVERWRITE_OPTION,
    json_out: bool = JSON_OPTION,
    quantity: str = typer.Option(
        "exitance", "--as", help="exitance [W/(m2 nm)] or radiance [W/(sr m2 nm)] in the file."
    ),
    csv_dialect: str = CSV_DIALECT_OPTION,
) -> None:
    """A blackbody at T_K: Wien peak, total exitance, efficacy, chromaticity; the spectrum to a file."""
    import numpy as np

    from ..cct import cct_duv
    from ..colorimetry import uv_to_xy
    from ..constants import C2_M_K, WAVELENGTH_NM
    from ..locus import planckian_uv
    from ..photometry import luminous_efficacy_of_radiation
    from ..planck import blackbody_efficacy, spectral_exitance, spectral_radiance, total_exitance, wien_peak_nm

    if not np.isfinite(T_K) or T_K <= 0:
        raise InputError(f"T_K must be positive (a temperature in kelvin, 100 to 1e6), got {T_K:g}")
    if not (100.0 <= T_K <= 1e6):
        raise InputError(f"T_K must be between 100 and 1e6 K, got {T_K:g}")
    if quantity not in ("exitance", "radiance"):
        raise InputError(f"--as must be exitance or radiance, got {quantity!r}")
    uv = planckian_uv(T_K)
    xy = uv_to_xy(uv)
    doc = {
        "T_K": T_K,
        "peak_nm": float(wien_peak_nm(T_K)),
        "exitance_W_per_m2": float(total_exitance(T_K)),
        "all_wavelength_efficacy_lm_per_W": float(blackbody_efficacy(T_K)),
        # the same definition as `inspect` of the spectrum this command writes (360-830 nm at 1 nm)
        "ler_lm_per_W": float(luminous_efficacy_of_radiation(spectral_exitance(T_K))),
        "ler_range_nm": [float(WAVELENGTH_NM[0]), float(WAVELENGTH_NM[-1])],
        "x": float(xy[0]),
        "y": float(xy[1]),
        "u": float(uv[0]),
        "v": float(uv[1]),
        "cct_K": float(cct_duv(uv).cct_K) if 1000 <= T_K <= 100000 else None,
    }
    if output is not None:
        suffix = require_suffix(output, (".csv", ".json", ".xlsx"))
        if quantity == "exitance":
            values, unit, col = spectral_exitance(T_K), "W/(m2 nm)", "spectral_exitance (W/(m2 nm))"
        else:
            values, unit, col = spectral_radiance(T_K), "W/(sr m2 nm)", "spectral_radiance (W/(sr m2 nm))"
        # exitance shares the unit of irradiance, which is how the readers take it back
        text = spectrum_file_text(
            ".json" if suffix == ".json" else ".csv",
            f"blackbody {T_K:g} K",
            values,
            quantity="irradiance" if quantity == "exitance" else "radiance",
            unit=unit,
            column=col,
            comment=f"blackbody at {T_K:g} K, Planck's law, c2 = {C2_M_K:g} m K; unit: {unit}",
        )
        write_output(output, text, overwrite=overwrite, dialect=csv_dialect)
    if json_out:
        emit_json(doc)
    else:
        typer.echo(f"Blackbody at {T_K:g} K")
        typer.echo(f"  Wien peak              {doc['peak_nm']:12.2f}  nm")
        typer.echo(f"  Total exitance         {doc['exitance_W_per_m2']:12.5g}  W/m2")
        typer.echo(
            f"  Efficacy (sigma T^4)   {doc['all_wavelength_efficacy_lm_per_W']:12.3f}  lm/W "
            "(all-wavelength: luminous exitance / sigma T^4)"
        )
        typer.echo(f"  LER, 360-830 nm        {doc['ler_lm_per_W']:12.3f}  lm/W (as `inspect` of the written spectrum)")
        typer.echo(f"  x, y                   {doc['x']:.5f}, {doc['y']:.5f}")
        typer.echo(f"  u, v (CIE 1960)        {doc['u']:.5f}, {doc['v']:.5f}")


def register(app: typer.Typer) -> None:
    app.command("inspect")(inspect_cmd)
    app.command("cct")(cct_cmd)
    app.command("locus")(locus_cmd)
    # a negative number (blackbody -5) is a value to refuse with a reason, not an unknown option
    app.command("blackbody", context_settings={"ignore_unknown_options": True})(blackbody_cmd)
