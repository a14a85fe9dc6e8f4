"""Bad rows and columns inside one file: skipped and reported with --skip-bad, refused without it.

The messy files are invented here: a lot of synthetic white lamps (a blue band and a broad
phosphor band) with faults put into chosen rows; every expected count below follows from
where the faults were put, not from running the code.
"""

from __future__ import annotations

import csv
import io
from pathlib import Path

import numpy as np
import pytest
from typer.testing import CliRunner

from cctkit.batch import run_batch
from cctkit.cli import app
from cctkit.cli.batch import EXIT_SKIPPED
from cctkit.errors import InputError
from cctkit.readers import read_spectra
from cctkit.readers.wide import open_chunked

runner = CliRunner()
WL = np.arange(380, 781, 10.0)  # coarse spectra keep the lot fast; 41 points
N = 240  # rows of the wide lot

# row (0-based) -> (how the row is broken, the words its error must hold)
FAULTS = {
    3: ("text", "expected a number, got 'abc'"),
    17: ("nan", "missing or non-finite value at 450 nm"),
    40: ("short", "row has 40 values, the header has 41 wavelengths"),
    41: ("negative", "no signal"),
    99: ("empty", "empty cell in value column 1"),
    150: ("overflow", "missing or non-finite value at 400 nm"),
    151: ("zero", "no signal"),
    239: ("inf", "missing or non-finite value at 780 nm"),
}


def run(*args):
    return runner.invoke(app, [str(a) for a in args])


def lamp(k: int) -> np.ndarray:
    return np.exp(-0.5 * ((WL - 440 - k % 30) / 12.0) ** 2) + 0.7 * np.exp(-0.5 * ((WL - 570) / 60.0) ** 2)


def row_cells(k: int) -> list[str]:
    cells = [repr(float(v)) for v in lamp(k)]
    kind = FAULTS.get(k, (None,))[0]
    if kind == "text":
        cells[4] = "abc"
    elif kind == "nan":
        cells[7] = "NaN"
    elif kind == "short":
        cells = cells[:-1]
    elif kind == "negative":  # the whole row below zero: garbage, nothing can be computed
        cells = [repr(-float(v)) for v in lamp(k)]
    elif kind == "empty":
        cells[0] = ""
    elif kind == "overflow":
        cells[2] = "1e400"
    elif kind == "zero":
        cells = ["0"] * len(cells)
    elif kind == "inf":
        cells[-1] = "inf"
    return cells


@pytest.fixture(scope="module")
def lots(tmp_path_factory) -> dict[str, Path]:
    d = tmp_path_factory.mktemp("messy")
    header = "name," + ",".join(f"{w:g}" for w in WL) + "\n"
    messy = d / "messy.csv"
    messy.write_text(header + "".join(f"L{k:04d}," + ",".join(row_cells(k)) + "\n" for k in range(N)))
    clean = d / "clean.csv"  # the same file with the broken rows taken out by hand
    clean.write_text(
        header + "".join(f"L{k:04d}," + ",".join(row_cells(k)) + "\n" for k in range(N) if k not in FAULTS)
    )
    return {"dir": d, "messy": messy, "clean": clean}


def good_names() -> list[str]:
    return [f"L{k:04d}" for k in range(N) if k not in FAULTS]


def read_rows(path: Path) -> list[dict[str, str]]:
    return list(csv.DictReader(io.StringIO(path.read_text())))


def test_open_chunked_skips_exactly_the_bad_rows(lots):
    skipped: list[InputError] = []
    src = open_chunked(lots["messy"], chunk_size=50, skipped=skipped)
    chunks = list(src.chunks())
    names = [n for c in chunks for n in c.names]
    assert names == good_names()
    assert [e.line for e in skipped] == [k + 2 for k in sorted(FAULTS)]  # line 1 is the header
    assert {e.part for e in skipped} == {"row"}
    for e, k in zip(skipped, sorted(FAULTS)):
        assert FAULTS[k][1] in e.reason, (k, e.reason)
        assert e.source == str(lots["messy"])
    # the errors kept for the report hold no frames (a frame holds its whole chunk: in the 10^6 soak,
    # 25 such errors had doubled the reading process's memory)
    assert all(e.__traceback__ is None and e.__context__ is None for e in skipped)
    ref = np.concatenate([c.values for c in open_chunked(lots["clean"], chunk_size=50).chunks()])
    assert np.array_equal(np.concatenate([c.values for c in chunks]), ref)  # good rows read exactly
    with pytest.raises(InputError, match=r"messy\.csv:5: expected a number, got 'abc'"):
        list(open_chunked(lots["messy"], chunk_size=50).chunks())  # without the list: refused at the first


def test_batch_skip_bad_keeps_every_good_row_and_reports_each_bad_one(lots, tmp_path):
    out = tmp_path / "r.csv"
    r = run("batch", lots["messy"], "-o", out, "--skip-bad", "--no-rendering", "--workers", 1, "--chunk-size", 64)
    assert r.exit_code == EXIT_SKIPPED, r.stderr
    assert f"{N - len(FAULTS)} spectra" in r.stderr
    assert f"skipped {len(FAULTS)} rows that could not be read" in r.stderr
    rows = read_rows(out)
    assert [row["name"] for row in rows] == good_names()
    errors = read_rows(tmp_path / "r.errors.csv")
    assert [int(e["line"]) for e in errors] == [k + 2 for k in sorted(FAULTS)]
    assert all(e["skipped"] == "row" and e["file"] == str(lots["messy"]) for e in errors)
    for e, k in zip(errors, sorted(FAULTS)):
        assert FAULTS[k][1] in e["cause"]
    # the good rows' numbers are those of a file holding only them (chunks differ: BLAS rounding, 1e-10)
    ref_out = tmp_path / "ref.csv"
    assert run("batch", lots["clean"], "-o", ref_out, "--no-rendering", "--workers", 1).exit_code == 0
    ref = read_rows(ref_out)
    for key in ("cct_K", "duv", "x", "y", "ler_lm_per_W"):
        assert np.allclose([float(a[key]) for a in rows], [float(b[key]) for b in ref], rtol=1e-10, atol=0), key


def test_batch_without_skip_bad_refuses_in_one_line_and_writes_nothing(lots, tmp_path):
    out = tmp_path / "r.csv"
    r = run("batch", lots["messy"], "-o", out, "--no-rendering", "--workers", 1)
    assert r.exit_code == 2
    assert r.stderr.strip() == f"cctkit: {lots['messy']}:5: expected a number, got 'abc' in value column 5"
    assert list(tmp_path.iterdir()) == []


def test_a_file_whose_every_row_is_bad_gives_no_output(tmp_path):
    f = tmp_path / "all-bad.csv"
    f.write_text(
        "name,"
        + ",".join(f"{w:g}" for w in WL)
        + "\n"
        + "".join(f"z{k}," + ",".join(["0"] * WL.size) + "\n" for k in range(3))
    )
    out = tmp_path / "r.csv"
    r = run("batch", f, "-o", out, "--skip-bad", "--workers", 1)
    assert r.exit_code == 2 and "no spectra found" in r.stderr
    assert not out.exists()


def long_file(path: Path, bad_cell: str | None, wavelength_cell: str | None = None) -> Path:
    lines = ["wavelength (nm),a,b,c,d"]
    for i, w in enumerate(WL):
        v = float(lamp(0)[i])
        cells = [f"{w:g}", repr(v), repr(2 * v), repr(-v), repr(3 * v)]  # column c: all below zero
        if i == 6 and bad_cell is not None:
            cells[2] = bad_cell
        if i == 9 and wavelength_cell is not None:
            cells[0] = wavelength_cell
        lines.append(",".join(cells))
    path.write_text("\n".join(lines) + "\n")
    return path


def test_read_spectra_leaves_out_bad_columns_of_a_long_file(tmp_path):
    f = long_file(tmp_path / "long.csv", "n/a")
    skipped: list[InputError] = []
    s = read_spectra(f, skipped=skipped)
    assert s.names == ("a", "d")
    assert s.sources == (f"{f}#a", f"{f}#d")
    assert [(e.part, e.line) for e in skipped] == [("column", 8), ("column", None)]
    assert "spectrum 'b' left out: missing value 'n/a' in column 3" in skipped[0].reason
    assert "spectrum 'c' left out: no signal" in skipped[1].reason
    assert np.array_equal(s.values[1], 3 * lamp(0))  # the kept columns as measured
    with pytest.raises(InputError, match=r"long\.csv:8: missing value 'n/a' in column 3"):
        read_spectra(f)


def test_a_bad_wavelength_cell_still_refuses_the_file(tmp_path):
    f = long_file(tmp_path / "long.csv", None, wavelength_cell="x")
    with pytest.raises(InputError, match=r"long\.csv"):
        read_spectra(f, skipped=[])


def test_folder_member_keeps_its_good_rows(lots, tmp_path):
    folder = tmp_path / "lot"
    folder.mkdir()
    (folder / "a-messy.csv").write_bytes(lots["messy"].read_bytes())
    long_file(folder / "b-long.csv", "--")
    (folder / "c-broken.csv").write_bytes(b"\x00\x01binary")
    out = tmp_path / "r.csv"
    r = run("batch", folder, "-o", out, "--skip-bad", "--no-rendering", "--workers", 1)
    assert r.exit_code == EXIT_SKIPPED, r.stderr
    errors = read_rows(tmp_path / "r.errors.csv")
    assert [e["skipped"] for e in errors] == ["row"] * len(FAULTS) + ["column", "column", "file"]
    assert len(read_rows(out)) == N - len(FAULTS) + 2
    assert "skipped 8 rows, 2 columns, 1 file" in r.stderr


def test_parquet_rows_with_missing_values_are_skipped(tmp_path):
    pa = pytest.importorskip("pyarrow")
    pq = pytest.importorskip("pyarrow.parquet")
    cols = {f"{w:g}": [float(lamp(k)[i]) for k in range(6)] for i, w in enumerate(WL)}
    cols["420"][2] = None  # a null cell
    cols["500"][4] = float("nan")
    f = tmp_path / "lot.parquet"
    pq.write_table(pa.table(cols), f)
    skipped: list[InputError] = []
    names = [n for c in open_chunked(f, skipped=skipped).chunks() for n in c.names]
    assert names == ["lot#1", "lot#2", "lot#4", "lot#6"]
    assert [e.reason for e in skipped] == [
        "row 3: missing or non-finite value at 420 nm",
        "row 5: missing or non-finite value at 500 nm",
    ]
    with pytest.raises(InputError, match="row 3: missing value at 420 nm"):
        list(open_chunked(f).chunks())


def test_skip_bad_combines_with_resume(lots, tmp_path):
    """--resume writes through the journal; the rows and the errors are those of a plain run."""
    out = tmp_path / "r.csv"
    src = open_chunked(lots["messy"], chunk_size=64, skipped=[])
    run_batch(src, out, workers=1, rendering=False, resume=True)
    r = run(
        "batch",
        lots["messy"],
        "-o",
        tmp_path / "s.csv",
        "--skip-bad",
        "--resume",
        "--no-rendering",
        "--workers",
        1,
        "--chunk-size",
        64,
    )
    assert r.exit_code == EXIT_SKIPPED
    assert len(read_rows(tmp_path / "s.errors.csv")) == len(FAULTS)
    assert (tmp_path / "s.csv").read_bytes() == out.read_bytes()
