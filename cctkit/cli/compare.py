"""Commands about reference illuminants: ``versus`` (a spectrum against its reference) and ``reference``.

``cctkit versus FILE`` reads the spectra in FILE, finds each one's CCT, builds the
reference illuminant of that CCT (CIE 224 by default, or CIE 13.3) and reports how
the test departs from it: per wavelength (both scaled to Y = 100), and per colour
sample (CAM02-UCS difference and hue shift of the 99 CIE 224 samples, U*V*W*
difference of the 14 CIE 13.3 samples).

``cctkit reference CCT_K`` builds the reference spectrum of a CCT and writes it to a
file that ``cctkit`` itself can read back.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import typer

from ..errors import InputError
from ..spreadsheet import check_dialect
from .options import (
    COLUMNS_OPTION,
    CSV_DIALECT_OPTION,
    DECIMAL_OPTION,
    DELIMITER_OPTION,
    INTERPOLATION_OPTION,
    JSON_OPTION,
    OVERWRITE_OPTION,
    QUANTITY_HELP,
    RECURSIVE_OPTION,
    SKIP_ROWS_OPTION,
    WAVELENGTH_COLUMN_OPTION,
    csv_text,
    emit_json,
    info,
    input_files,
    parse_interpolation,
    require_suffix,
    spectrum_file_text,
    table_layout,
    write_output,
)

METHOD_HELP = "Reference illuminant: cie224 (CIE 224:2017 / TM-30: Planckian, blend 4000-5000 K, daylight) or cie13.3 (Planckian below 5000 K, daylight from 5000 K)."


def _method(value: str) -> str:
    from ..rendering import canonical_method

    try:
        return canonical_method(value)
    except ValueError:
        raise InputError(f"--method must be cie224 or cie13.3, got {value!r}") from None


def _worst(values, labels, count: int = 3) -> list[tuple[str, float]]:
    import numpy as np

    order = np.argsort(-np.nan_to_num(values, nan=-np.inf))[:count]
    return [(labels[i], float(values[i])) for i in order]


def versus_cmd(
    files: list[Path] = typer.Argument(
        ...,
        help="Spectrum files (CSV/TSV/TXT, JSON, IES TM-27 XML) or folders of "
        "them; spectra of any quantity (each is scaled to Y = 100).",
    ),
    method: str = typer.Option("cie224", "--method", "-m", help=METHOD_HELP),
    quantity: str | None = typer.Option(None, "--quantity", "-q", help=QUANTITY_HELP),
    cct: float | None = typer.Option(
        None, "--cct", help="Use this CCT [K] for every spectrum instead of computing it."
    ),
    output: Path | None = typer.Option(
        None, "--output", "-o", help="Write the per-wavelength comparison to FILE (.csv or .xlsx)."
    ),
    overwrite: bool = OVERWRITE_OPTION,
    json_out: bool = JSON_OPTION,
    recursive: bool = RECURSIVE_OPTION,
    skip_rows: int | None = SKIP_ROWS_OPTION,
    delimiter: str | None = DELIMITER_OPTION,
    decimal: str | None = DECIMAL_OPTION,
    wavelength_column: int | None = WAVELENGTH_COLUMN_OPTION,
    columns: str | None = COLUMNS_OPTION,
    csv_dialect: str = CSV_DIALECT_OPTION,
    interpolation: str = INTERPOLATION_OPTION,
) -> None:
    """Each spectrum in FILES against the reference illuminant of its CCT, per wavelength and per sample."""
    import numpy as np

    from ..analysis import read_files
    from ..constants import DUV_LIMIT, VISIBLE_BAND_NM
    from ..formats import terminal_safe
    from ..rendering import REFERENCE_RANGE_K, colour_rendition, compare_to_reference, reference_cct, rendering_cct
    from ..spectra import Quantity, concatenate, to_working_grid

    ref_method = _method(method)
    if output is not None:
        require_suffix(output, (".csv", ".xlsx"))
        check_dialect(csv_dialect)
    files = input_files(files, recursive=recursive)
    items = read_files(
        files, quantity=quantity, layout=table_layout(skip_rows, delimiter, decimal, wavelength_column, columns)
    )
    # Both test and reference are compared at Y = 100, so spectra of different quantities sit side by side.
    spectra = concatenate(
        [
            to_working_grid(s, interpolation=parse_interpolation(interpolation)).scaled(1.0, Quantity.RELATIVE)
            for s in items
        ]
    )
    values = spectra.values
    n = values.shape[0]
    if cct is not None:
        if not np.isfinite(reference_cct(cct)[0]):
            raise InputError(
                f"--cct must be between {REFERENCE_RANGE_K[0]:g} and {REFERENCE_RANGE_K[1]:g} K, got {cct:g}"
            )
        T, duv = np.full(n, float(cct)), np.full(n, np.nan)
    else:
        T, duv = rendering_cct(values)
    # CIE 224's own rule for short ranges applies where the CCT is the spectrum's own (not --cct)
    rendition = colour_rendition(
        values,
        cct_K=T,
        duv=None if cct is not None else duv,
        measured_range_nm=spectra.measured_range_nm if cct is None else None,
    )
    for i in np.flatnonzero(~np.isfinite(rendition.cct_K)).tolist():
        info(
            f"warning: {spectra.names[i]}: CCT {T[i]:.0f} K / Duv {duv[i]:+.4f} is outside "
            f"{REFERENCE_RANGE_K[0]:g}-{REFERENCE_RANGE_K[1]:g} K or |Duv| > {DUV_LIMIT}; no reference, results left empty"
        )
    if cct is None:
        for i, (lo, hi, _) in enumerate(spectra.measured_range_nm):
            if np.isfinite(rendition.cct_K[i]) and (lo > VISIBLE_BAND_NM[0] or hi < VISIBLE_BAND_NM[1]):
                info(
                    f"warning: {spectra.names[i]}: measured {lo:g}-{hi:g} nm does not cover 380-780 nm: the CES "
                    "figures take the spectrum as zero where not measured (CIE 224:2017 / TM-30-20 rule)"
                )
    T = rendition.cct_K
    comp = compare_to_reference(values, T, method=ref_method, rendition=rendition)
    cri, t30 = rendition.cri, rendition.tm30

    ces_labels = [f"CES{i + 1:02d}" for i in range(comp.ces_dE.shape[1])]
    docs: list[dict[str, Any]] = []
    for i in range(n):
        # Only where the spectrum was measured (and inside 380-780 nm): extrapolated values
        # beyond the measured range say nothing about the source.
        lo, hi, _ = spectra.measured_range_nm[i]
        wl = comp.wavelength_nm
        measured = (wl >= max(lo, VISIBLE_BAND_NM[0])) & (wl <= min(hi, VISIBLE_BAND_NM[1]))
        diff = np.where(measured, np.abs(comp.difference[i]), np.nan)
        with np.errstate(invalid="ignore"):
            dev = np.nanmax(diff) if np.isfinite(diff).any() else np.nan
            at = int(np.nanargmax(diff)) if np.isfinite(dev) else None
        docs.append(
            {
                "name": spectra.names[i],
                "source": spectra.sources[i],
                "sha256": spectra.sha256[i],
                "cct_K": T[i],
                "duv": duv[i],
                "method": ref_method,
                "reference": comp.reference_kind[i],
                "Ra": cri.Ra[i],
                "R": cri.R[i],
                "cri_valid": bool(cri.valid[i]),
                "dc": cri.dc[i],
                "Rf": t30.Rf[i],
                "Rg": t30.Rg[i],
                "largest_difference_Y100": dev,
                "largest_difference_at_nm": None if at is None else float(comp.wavelength_nm[at]),
                "tcs_dE": comp.tcs_dE[i],
                "ces_dE": comp.ces_dE[i],
                "ces_hue_shift_deg": comp.ces_hue_shift_deg[i],
                "flags": [f.as_dict() for f in spectra.flags[i]],
                "metadata": spectra.metadata_of(i),
            }
        )

    if output is not None:
        header = ["wavelength_nm"]
        series = [comp.wavelength_nm]
        for i, name in enumerate(spectra.names):
            header += [f"{name}: test (Y=100)", f"{name}: reference (Y=100)", f"{name}: difference", f"{name}: ratio"]
            series += [comp.test[i], comp.reference[i], comp.difference[i], comp.ratio[i]]
        rows = zip(*[c.tolist() for c in series])
        from .. import __version__

        # where the numbers came from: the SHA-256 of the bytes analysed (comment lines our readers skip)
        origin = "".join(
            f"# input {terminal_safe(str(f))} sha256 {s.sha256[0]}; cctkit {__version__}\n"
            for f, s in zip(files, items)
        )
        from ..analysis import provenance

        prov = provenance(interpolation=parse_interpolation(interpolation), used=spectra.interpolation)
        write_output(
            output,
            origin + csv_text(header, rows),
            overwrite=overwrite,
            inputs=files,
            dialect=csv_dialect,
            provenance_doc=prov,
        )

    if json_out:
        emit_json(
            {
                "method": ref_method,
                "interpolation": list(spectra.interpolation),
                "wavelength_nm": comp.wavelength_nm,
                "spectra": [
                    dict(d, test_Y100=comp.test[i], reference_Y100=comp.reference[i], ratio=comp.ratio[i])
                    for i, d in enumerate(docs)
                ],
            }
        )
        return
    for d in docs:
        typer.echo(f"{d['name']}  against its {ref_method} reference ({d['reference']})")
        if not np.isfinite(d["cct_K"]):
            typer.echo("  no reference: CCT not available")
            typer.echo("")
            continue
        typer.echo(f"  {'CCT':<30} {d['cct_K']:10.0f}  K")
        typer.echo(f"  {'Duv':<30} {d['duv']:+10.4f}")
        valid = "" if d["cri_valid"] else "  (DC >= 5.4e-3: CIE 13.3 result not meaningful)"
        typer.echo(f"  {'Ra (CIE 13.3)':<30} {d['Ra']:10.1f}{valid}")
        typer.echo(f"  {'R9':<30} {d['R'][8]:10.1f}")
        typer.echo(f"  {'Rf / Rg (CIE 224, TM-30)':<30} {d['Rf']:6.1f} /{d['Rg']:5.1f}")
        if d["largest_difference_at_nm"] is not None:
            typer.echo(
                f"  {'largest spectral difference':<30} {d['largest_difference_Y100']:10.3g}  at "
                f"{d['largest_difference_at_nm']:.0f} nm (both scaled to Y = 100)"
            )
        worst = _worst(np.asarray(d["ces_dE"]), ces_labels)
        shifts = np.asarray(d["ces_hue_shift_deg"])
        text = ", ".join(f"{lab} dE' {val:.1f} (hue {shifts[ces_labels.index(lab)]:+.1f} deg)" for lab, val in worst)
        typer.echo(f"  {'most changed samples':<30} {text}")
        tcs = _worst(np.asarray(d["tcs_dE"]), [f"TCS{i + 1:02d}" for i in range(14)], 2)
        typer.echo(f"  {'most changed CIE 13.3 samples':<30} " + ", ".join(f"{lab} dE {v:.1f}" for lab, v in tcs))
        for flag in d["flags"]:
            typer.echo(f"  warning [{flag['code']}]: {flag['message']}")
        typer.echo("")


def reference_cmd(
    cct_K: float = typer.Argument(..., help="Correlated colour temperature [K] (1000-25000)."),
    method: str = typer.Option("cie224", "--method", "-m", help=METHOD_HELP),
    output: Path | None = typer.Option(
        None, "--output", "-o", help="Write the spectrum to FILE (.csv, .xlsx or .json)."
    ),
    overwrite: bool = OVERWRITE_OPTION,
    json_out: bool = JSON_OPTION,
    csv_dialect: str = CSV_DIALECT_OPTION,
) -> None:
    """The reference illuminant of a CCT (relative spectrum, Y = 100), optionally written to a file."""
    import numpy as np

    from ..cct import cct_duv
    from ..colorimetry import XYZ, XYZ_to_uv, XYZ_to_xy
    from ..rendering import REFERENCE_RANGE_K, reference_cct, reference_for

    ref_method = _method(method)
    if not np.isfinite(cct_K) or cct_K <= 0:
        raise InputError(
            f"CCT_K must be positive (a temperature in kelvin, {REFERENCE_RANGE_K[0]:g} to "
            f"{REFERENCE_RANGE_K[1]:g}), got {cct_K:g}"
        )
    if not np.isfinite(reference_cct(cct_K)[0]):
        raise InputError(
            f"CCT_K must be between {REFERENCE_RANGE_K[0]:g} and {REFERENCE_RANGE_K[1]:g} K, got {cct_K:g}"
        )
    suffix = require_suffix(output, (".csv", ".json", ".xlsx")) if output is not None else None
    check_dialect(csv_dialect)
    ref = reference_for([cct_K], method=ref_method)
    values = ref.values[0]
    tri = XYZ(values[None])
    xy = XYZ_to_xy(tri)[0]
    check = cct_duv(XYZ_to_uv(tri))
    name = f"{ref_method} reference {cct_K:g} K"
    doc = {
        "name": name,
        "method": ref_method,
        "cct_K": cct_K,
        "reference": ref.kind[0],
        "planckian_weight": float(ref.planckian_weight[0]),
        "x": float(xy[0]),
        "y": float(xy[1]),
        "cct_of_spectrum_K": float(check.cct_K[0]),
        "duv_of_spectrum": float(check.duv[0]),
    }
    if output is not None:
        text = spectrum_file_text(
            ".json" if suffix == ".json" else ".csv",
            name,
            values,
            quantity="relative",
            unit="",
            column="relative",
            comment=f"{name} ({ref.kind[0]}, Planckian weight {doc['planckian_weight']:g}); relative, Y = 100 (CIE 1931 2 deg)",
        )
        write_output(output, text, overwrite=overwrite, dialect=csv_dialect)
    if json_out:
        emit_json(doc)
        return
    typer.echo(f"{name}")
    typer.echo(f"  {'kind':<26} {doc['reference']}")
    typer.echo(f"  {'Planckian weight':<26} {doc['planckian_weight']:.3f}")
    typer.echo(f"  {'x, y':<26} {doc['x']:.5f}, {doc['y']:.5f}")
    typer.echo(f"  {'CCT / Duv of the spectrum':<26} {doc['cct_of_spectrum_K']:.0f} K / {doc['duv_of_spectrum']:+.4f}")


def register(app: typer.Typer) -> None:
    app.command("versus")(versus_cmd)
    app.command("reference", context_settings={"ignore_unknown_options": True})(reference_cmd)
