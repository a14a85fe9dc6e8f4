"""``cctkit blend``: drive levels of a multi-channel luminaire along a path of target whites.

The command reads the channel spectra (one column per channel, each measured alone at
full drive), solves every set point with :func:`cctkit.blend.solve_blend_path` and
prints the drive table; ``--output`` writes it as CSV or JSON, ``--report`` draws the
tuning report (:mod:`cctkit.report.tuning`).
"""

from __future__ import annotations

from pathlib import Path

import typer

from ..errors import InputError
from .options import JSON_OPTION, OVERWRITE_OPTION, QUANTITY_HELP, emit_json, info, require_suffix, write_output

__all__ = ["blend_cmd", "register"]

_OBJECTIVES_MAX = ("efficacy", "fidelity", "melanopic")
_OBJECTIVES_MIN = ("melanopic",)


def _objective(maximise: str | None, minimise: str | None) -> tuple[str, str]:
    if maximise is not None and minimise is not None:
        raise InputError("give --maximise or --minimise, not both")
    if minimise is not None:
        key = minimise.strip().lower()
        if key not in _OBJECTIVES_MIN:
            raise InputError(f"--minimise must be {' | '.join(_OBJECTIVES_MIN)}, got {minimise!r}")
        return key, "min"
    key = (maximise or "efficacy").strip().lower()
    if key not in _OBJECTIVES_MAX:
        raise InputError(f"--maximise must be {' | '.join(_OBJECTIVES_MAX)}, got {maximise!r}")
    return key, "max"


def _power(text: str | None):
    """A power file path, or a comma list of watts in channel order."""
    if text is None:
        return None
    p = Path(text)
    if p.suffix.lower() in (".csv", ".txt") or p.exists():
        return p
    try:
        return [float(v) for v in text.split(",")]
    except ValueError:
        raise InputError(
            f"--power must be a CSV file (channel,power_W) or a comma list of watts, got {text!r}"
        ) from None


def _luminous(text: str):
    key = text.strip().lower()
    if key == "flat":
        return "flat"
    try:
        value = float(key)
    except ValueError:
        raise InputError(f"--luminous must be 'flat' or a number, got {text!r}") from None
    if not value > 0 or value == float("inf"):
        raise InputError(f"--luminous must be a positive number, got {text!r}")
    return value


def _fmt(v, spec: str, width: int) -> str:
    from ..formats import format_number

    return ("-" if v is None else format_number(v, spec)).rjust(width)


def blend_cmd(
    files: list[Path] = typer.Argument(
        ...,
        help="Channel spectra: one column per channel, each measured alone at "
        "full drive (several files are joined; one grid, one quantity).",
    ),
    cct: str | None = typer.Option(
        None,
        "--cct",
        help="Target CCTs [K]: FIRST:LAST:STEP (inclusive) or a comma list, e.g. 1800:6500:100 or 2700,3000,4000.",
    ),
    points: Path | None = typer.Option(
        None, "--points", help="Set points from a CSV file with header cct_K,duv (instead of --cct/--duv)."
    ),
    duv: str = typer.Option(
        "0",
        "--duv",
        help="Target Duv: a number (|Duv| <= 0.05; negative as --duv=-0.003) or "
        "'ansi' for the ANSI C78.377 centre line (2580-7040 K).",
    ),
    maximise: str | None = typer.Option(None, "--maximise", help="efficacy (default) | fidelity | melanopic."),
    minimise: str | None = typer.Option(None, "--minimise", help="melanopic."),
    rg: str | None = typer.Option(None, "--rg", help="Keep TM-30 Rg within LO:HI, e.g. 95:110."),
    r9_floor: float | None = typer.Option(None, "--r9-floor", help="Keep CIE 13.3 R9 at or above this value."),
    luminous: str = typer.Option(
        "flat",
        "--luminous",
        help="Luminous output at every set point, in the luminous "
        "unit of the channels (lm for radiant flux, lx for irradiance), or 'flat': the "
        "highest output every reachable set point can give.",
    ),
    power: str | None = typer.Option(
        None,
        "--power",
        help="Electrical power of each channel at full drive: a "
        "CSV file (channel,power_W) or a comma list of watts in channel order. "
        "Efficacy is then lm/W electrical, otherwise the LER.",
    ),
    quantity: str | None = typer.Option(None, "--quantity", "-q", help=QUANTITY_HELP),
    output: Path | None = typer.Option(None, "--output", "-o", help="Write the drive table to FILE (.csv or .json)."),
    report: Path | None = typer.Option(None, "--report", help="Write the tuning report to FILE (.pdf or .png)."),
    overwrite: bool = OVERWRITE_OPTION,
    json_out: bool = JSON_OPTION,
) -> None:
    """Drive levels (0-1) of each channel for every set point of a path of target whites.

    Channels are assumed additive (a channel at level d emits d times its full-drive
    spectrum).  Set points the fixture cannot reach are listed with the reason.
    """
    import numpy as np

    from ..blend import parse_cct_path, parse_duv, parse_range, read_channels, read_points, solve_blend_path
    from ..safe_io import check_output_path

    objective, sense = _objective(maximise, minimise)
    if (cct is None) == (points is None):
        raise InputError("give the set points with --cct (and --duv) or with --points FILE, one of the two")
    rg_bounds = parse_range(rg, option="--rg") if rg is not None else None
    if r9_floor is not None and not np.isfinite(r9_floor):
        raise InputError(f"--r9-floor must be a number, got {r9_floor!r}")
    level = _luminous(luminous)
    power_arg = _power(power)
    inputs = [*files] + ([points] if points is not None else []) + ([power_arg] if isinstance(power_arg, Path) else [])
    suffix = require_suffix(output, (".csv", ".json")) if output is not None else None
    if report is not None:
        from ..report.build import check_options

        check_options(report)
    for target in (output, report):
        if target is not None:
            check_output_path(target, overwrite=overwrite, inputs=inputs)
    if output is not None and report is not None and output.resolve() == report.resolve():
        raise InputError("--output and --report name the same file", source=str(output))

    duv_target: np.ndarray | float | str
    if points is not None:
        T, duv_target = read_points(points)
    else:
        assert cct is not None  # one of the two, checked above
        T = parse_cct_path(cct)
        duv_target = parse_duv(duv)
    channels = read_channels(files, quantity=quantity, power=power_arg)

    step = max(1, len(T) // 10)

    def progress(done: int, total: int) -> None:
        if done == total or done % step == 0:
            info(f"set point {done}/{total}")

    result = solve_blend_path(
        channels,
        T,
        duv_target,
        objective=objective,
        sense=sense,
        luminous=level,
        rg=rg_bounds,
        r9_min=r9_floor,
        progress=progress if len(T) > 1 else None,
    )
    doc = result.document()
    if points is not None:
        from ..spectra import sha256_of_file

        doc["inputs"].append({"path": str(points), "sha256": sha256_of_file(points)})
    if report is not None:
        from ..report.tuning import build_tuning_report

        build_tuning_report(
            result,
            report,
            overwrite=overwrite,
            inputs=inputs,
            document=doc,
            title=f"Tuning: {files[0].stem}" + (f" and {len(files) - 1} more" if len(files) > 1 else ""),
        )
        info(f"wrote {report}")
    if output is not None:
        from ..formats import dumps

        write_output(output, result.csv() if suffix == ".csv" else dumps(doc), overwrite=overwrite, inputs=inputs)
    if json_out:
        emit_json(doc)
        return
    _print_table(result, doc)


def _print_table(result, doc) -> None:
    ch = result.channels
    lum_key = ch.luminous_key
    unit = lum_key.rsplit("_", 1)[-1] if "_" in lum_key else ""
    eff = "efficacy_lm_per_W" if ch.power_W is not None else "ler_lm_per_W"
    obj = doc["objective"]
    typer.echo(f"{len(ch)} channels: " + ", ".join(f"d{k + 1} = {n}" for k, n in enumerate(ch.names)))
    typer.echo(
        f"objective: {obj['sense']} {obj['quantity']} (efficacy basis: {obj['efficacy_basis']}); "
        f"luminous output: {doc['luminous_target']}"
    )
    head = (
        f"{'target K':>8} {'Duv':>7}  {'status':<16}"
        + "".join(f"{'d' + str(k + 1):>6}" for k in range(len(ch)))
        + f" {'CCT K':>7} {'Duv':>8} {unit:>7} {'lm/W':>6} {'Rf':>5} {'Rg':>5} {'Ra':>5} {'R9':>6} {'melDER':>6}"
    )
    typer.echo(head)
    for r in doc["set_points"]:
        line = f"{_fmt(r['target_cct_K'], '{:.0f}', 8)} {_fmt(r['target_duv'], '{:+.4f}', 7)}  {r['status']:<16}"
        if r["status"] == "ok":
            line += "".join(_fmt(r["drives"][n], "{:.3f}", 6) for n in ch.names)
            line += (
                f" {_fmt(r['cct_K'], '{:.1f}', 7)} {_fmt(r['duv'], '{:+.5f}', 8)} {_fmt(r[lum_key], '{:.1f}', 7)}"
                f" {_fmt(r[eff], '{:.1f}', 6)} {_fmt(r['Rf'], '{:.1f}', 5)} {_fmt(r['Rg'], '{:.1f}', 5)}"
                f" {_fmt(r['Ra'], '{:.1f}', 5)} {_fmt(r['R9'], '{:.1f}', 6)} {_fmt(r['melanopic_der'], '{:.3f}', 6)}"
            )
        else:
            line += f"  {r['reason']}"
        typer.echo(line)
    step = doc["largest_drive_step"]
    if step["value"] is not None:
        a, b = step["between_target_cct_K"]
        typer.echo(f"largest drive step between neighbouring set points: {step['value']:.3f} ({a:.0f} K -> {b:.0f} K)")
    n_ok = sum(r["status"] == "ok" for r in doc["set_points"])
    typer.echo(
        f"{n_ok} of {len(doc['set_points'])} set points reached.  {doc['guarantee'][0].upper() + doc['guarantee'][1:]}."
    )
    typer.echo(f"Assumed: {doc['additivity']}.")


def register(app: typer.Typer) -> None:
    app.command("blend")(blend_cmd)
