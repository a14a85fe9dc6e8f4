"""Folders and lots: folder input equals its files, batch --skip-bad, mixed quantities, repeat scans."""

from __future__ import annotations

import csv
import io
import json
from pathlib import Path

import numpy as np
import pytest
from typer.testing import CliRunner

from cctkit.analysis import analyse_files
from cctkit.cli import app
from cctkit.cli.batch import EXIT_SKIPPED
from cctkit.errors import InputError
from cctkit.readers import folder_files, read_spectra
from cctkit.repeats import average_repeats
from cctkit.spectra import Quantity, Spectra

runner = CliRunner()
WL = np.arange(380, 781, 20.0)  # small spectra keep a lot of 1,000 files fast


def run(*args):
    return runner.invoke(app, [str(a) for a in args])


def lamp(peak_nm: float, gain: float) -> np.ndarray:
    """An invented white lamp: blue band plus a broad yellow band."""
    return np.exp(-0.5 * ((WL - peak_nm) / 15.0) ** 2) + gain * np.exp(-0.5 * ((WL - 580) / 70.0) ** 2)


def write_csv(path: Path, values, unit: str | None = None, notes: str = "") -> Path:
    u = f" ({unit})" if unit else ""
    path.write_text(notes + f"wavelength (nm),lamp{u}\n" + "".join(f"{w:g},{float(v)!r}\n" for w, v in zip(WL, values)))
    return path


@pytest.fixture
def lot(tmp_path) -> Path:
    folder = tmp_path / "lot"
    (folder / "sub").mkdir(parents=True)
    write_csv(folder / "b.csv", lamp(450, 1.1), "W/nm", notes="Operator: Ana\n")
    write_csv(folder / "a.csv", lamp(455, 0.9), "W/nm")
    (folder / "c.json").write_text(
        json.dumps({"quantity": "radiant-flux", "wavelength_nm": WL.tolist(), "values": lamp(448, 1.3).tolist()})
    )
    (folder / "notes.md").write_text("not a spectrum")  # unknown extension: not read
    (folder / ".hidden.csv").write_text("junk")  # hidden: not read
    write_csv(folder / "sub" / "d.csv", lamp(460, 1.0), "W/nm")
    return folder


def test_folder_files_sorted_known_extensions(lot):
    assert [Path(f).name for f in folder_files(lot)] == ["a.csv", "b.csv", "c.json"]
    assert [Path(f).relative_to(lot).as_posix() for f in folder_files(lot, recursive=True)] == [
        "a.csv",
        "b.csv",
        "c.json",
        "sub/d.csv",
    ]


@pytest.mark.parametrize("command", ["inspect", "bin", "versus"])
def test_folder_equals_its_files(lot, command):
    files = folder_files(lot)
    by_folder = run(command, lot, "--json")
    by_files = run(command, *files, "--json")
    assert by_folder.exit_code == 0, by_folder.stderr
    assert json.loads(by_folder.stdout) == json.loads(by_files.stdout)
    deep = run(command, lot, "--recursive", "--json")
    assert deep.exit_code == 0, deep.stderr
    assert json.loads(deep.stdout) == json.loads(run(command, *folder_files(lot, recursive=True), "--json").stdout)


def test_folder_in_verify_and_report(lot, tmp_path):
    claims = tmp_path / "claims.toml"
    claims.write_text("[limits]\ncct_K = { min = 1000, max = 20000 }\n")
    r = run("verify", lot, "--claims", claims, "--json")
    assert r.exit_code in (0, 1, 3), r.stderr
    assert len(json.loads(r.stdout)["samples"]) == 3
    r = run("report", lot, "--output", tmp_path / "lot.png")
    assert r.exit_code == 0, r.stderr


def test_empty_folder_is_refused(tmp_path):
    (tmp_path / "empty").mkdir()
    r = run("inspect", tmp_path / "empty")
    assert r.exit_code == 2
    assert f"{tmp_path / 'empty'}: folder holds no spectrum files" in r.stderr


# --------------------------------------------------------------------------- batch --skip-bad


@pytest.fixture(scope="module")
def big_lot(tmp_path_factory) -> tuple[Path, list[str]]:
    folder = tmp_path_factory.mktemp("lot1000")
    rows = "".join(f"{w:g},{float(v)!r}\n" for w, v in zip(WL, lamp(452, 1.0)))
    for k in range(1000):
        (folder / f"s{k:04d}.csv").write_text(f"Serial: {k}\nwavelength (nm),lamp (W/nm)\n" + rows)
    bad = ["s0007.csv", "s0500.csv", "s0999.csv"]
    (folder / bad[0]).write_text("wavelength (nm),lamp (W/nm)\n" + rows.replace("400,", "400x,", 1))
    (folder / bad[1]).write_bytes(b"\x00\x01binary")
    (folder / bad[2]).write_text("wavelength (nm),lamp (lx)\n" + rows)
    return folder, bad


def test_batch_skip_bad_lot_of_1000(big_lot, tmp_path):
    folder, bad = big_lot
    out = tmp_path / "r.csv"
    r = run("batch", folder, "--output", out, "--skip-bad", "--no-rendering", "--workers", 1)
    assert r.exit_code == EXIT_SKIPPED, r.stderr
    assert "997 spectra" in r.stderr and "skipped 3 files" in r.stderr
    rows = list(csv.DictReader(io.StringIO(out.read_text())))
    assert len(rows) == 997
    assert json.loads(rows[0]["metadata"]) == {"Serial": "0"}
    errors = list(csv.DictReader(io.StringIO((tmp_path / "r.errors.csv").read_text())))
    assert [Path(e["file"]).name for e in errors] == bad
    assert errors[0]["line"] == "3" and "'400x'" in errors[0]["cause"]
    assert errors[1]["line"] == "" and "binary file" in errors[1]["cause"]
    assert "'lx' is a photometric unit" in errors[2]["cause"]


def test_batch_without_skip_bad_stops_at_the_first_bad_file(big_lot, tmp_path):
    folder, bad = big_lot
    out = tmp_path / "r.csv"
    r = run("batch", folder, "--output", out, "--no-rendering", "--workers", 1, "--chunk-size", 4)
    assert r.exit_code == 2
    assert r.stderr.strip() == f"cctkit: {folder / bad[0]}:3: text among the data rows (a second header?): '400x'"
    assert not out.exists() and not (tmp_path / "r.errors.csv").exists()
    assert list(tmp_path.iterdir()) == []  # nothing half-written


def test_batch_skip_bad_clean_run_exits_0_with_an_empty_errors_file(lot, tmp_path):
    out = tmp_path / "r.csv"
    r = run("batch", lot, "--output", out, "--skip-bad", "--workers", 1)
    assert r.exit_code == 0, r.stderr
    assert (tmp_path / "r.errors.csv").read_text() == "file,line,skipped,cause\n"


# --------------------------------------------------------------------------- mixed quantities


def test_mixed_quantities_in_one_report(tmp_path):
    flux = write_csv(tmp_path / "supplier_a.csv", lamp(450, 1.1), "W/nm")
    rel = write_csv(tmp_path / "supplier_b.csv", lamp(455, 0.9))
    irr = tmp_path / "supplier_c.json"
    irr.write_text(
        json.dumps({"quantity": "irradiance", "wavelength_nm": WL.tolist(), "values": (0.01 * lamp(448, 1.2)).tolist()})
    )
    a = analyse_files([flux, rel, irr])
    recs = a.records()
    assert [r["quantity"] for r in recs] == ["radiant-flux", "relative", "irradiance"]
    assert recs[0]["luminous_flux_lm"] > 0 and recs[2]["illuminance_lx"] > 0
    assert "luminous_flux_lm" not in recs[1] and "illuminance_lx" not in recs[1]
    # colour results equal those of each file analysed alone
    for f, r in zip([flux, rel, irr], recs):
        alone = analyse_files([f], rendering=False).records()[0]
        assert r["cct_K"] == pytest.approx(alone["cct_K"], rel=1e-12)
        assert r["x"] == pytest.approx(alone["x"], rel=1e-12)
    assert all(r["Ra"] is not None for r in recs)
    out = tmp_path / "mixed.png"
    r = run("report", flux, rel, irr, "--output", out)
    assert r.exit_code == 0, r.stderr
    assert out.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    r = run("versus", flux, rel, irr, "--json")
    assert r.exit_code == 0, r.stderr
    assert len(json.loads(r.stdout)["spectra"]) == 3


def test_quantity_conflict_names_file_and_both_quantities(tmp_path):
    irr = tmp_path / "stated.json"
    irr.write_text(
        json.dumps({"quantity": "irradiance", "wavelength_nm": WL.tolist(), "values": lamp(450, 1).tolist()})
    )
    r = run("report", irr, "--quantity", "radiance", "--output", tmp_path / "x.pdf")
    assert r.exit_code == 2
    assert r.stderr.strip() == (f"cctkit: {irr}: the file states quantity 'irradiance' but 'radiance' was asked for")
    assert not (tmp_path / "x.pdf").exists()


# --------------------------------------------------------------------------- repeat scans


def test_average_of_repeat_columns_keeps_the_spread(tmp_path):
    base = lamp(452, 1.0)
    scans = np.stack([base * 0.98, base * 1.00, base * 1.02])
    p = tmp_path / "repeats.csv"
    p.write_text(
        "Integration time: 50 ms\nwavelength (nm),scan 1 (W/nm),scan 2 (W/nm),scan 3 (W/nm)\n"
        + "".join(f"{w:g}," + ",".join(repr(float(v)) for v in scans[:, i]) + "\n" for i, w in enumerate(WL))
    )
    rep = average_repeats(read_spectra(p))
    assert rep.count == 3 and len(rep.mean) == 1
    np.testing.assert_allclose(rep.mean.values[0], base, rtol=1e-14)
    # sample standard deviation of (0.98, 1.00, 1.02) x is 0.02 x (n - 1 = 2 in the denominator)  # GUM 4.2.2
    np.testing.assert_allclose(rep.std_dev, 0.02 * base, rtol=1e-10)
    np.testing.assert_allclose(rep.std_dev_of_mean, 0.02 * base / np.sqrt(3), rtol=1e-10)
    assert rep.mean.metadata_of(0)["Integration time"] == "50 ms"
    r = run("inspect", p, "--as-repeats", "--json")
    assert r.exit_code == 0, r.stderr
    rec = json.loads(r.stdout)["spectra"]
    assert len(rec) == 1 and rec[0]["repeats"]["count"] == 3
    assert rec[0]["repeats"]["std_dev"] == pytest.approx(rep.std_dev.tolist(), rel=1e-12)


def test_average_of_repeat_files_on_different_grids(tmp_path):
    a = write_csv(tmp_path / "a.csv", lamp(452, 1.0), "W/nm")
    wl5 = np.arange(380, 781, 5.0)
    b = tmp_path / "b.csv"
    b.write_text(
        "wavelength (nm),lamp (W/nm)\n"
        + "".join(f"{w:g},{float(v)!r}\n" for w, v in zip(wl5, np.interp(wl5, WL, lamp(452, 1.0))))
    )
    rep = average_repeats([read_spectra(a), read_spectra(b)])
    assert rep.mean.wavelength_nm.shape == (471,)  # brought to the working grid first
    assert rep.count == 2


def test_average_refuses_mixed_quantities_and_single_scan(tmp_path):
    flux = read_spectra(write_csv(tmp_path / "f.csv", lamp(452, 1.0), "W/nm"))
    rel = read_spectra(write_csv(tmp_path / "r.csv", lamp(452, 1.0)))
    with pytest.raises(
        InputError,
        match=r"repeat scans must be of one quantity: .*f\.csv is radiant-flux, "
        r"this one is relative",
    ):
        average_repeats([flux, rel])
    with pytest.raises(InputError, match=r"at least 2 scans, got 1"):
        average_repeats(flux)
    assert isinstance(flux, Spectra) and flux.quantity is Quantity.RADIANT_FLUX


def test_mixed_table_cells_mark_relative_and_other_totals():
    from cctkit.report.pages import format_value

    assert format_value({"quantity": "relative"}, "luminous_flux_lm") == "rel."
    assert format_value({"quantity": "irradiance", "illuminance_lx": 32.84}, "luminous_flux_lm") == "32.8 lx"
    assert format_value({"quantity": "radiance", "luminance_cd_per_m2": 32822.6}, "luminous_flux_lm") == "32.8k cd/m²"
    assert format_value({"quantity": "radiant-flux", "luminous_flux_lm": 810.04}, "luminous_flux_lm") == "810.0"
