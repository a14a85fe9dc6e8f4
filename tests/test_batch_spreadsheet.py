"""batch writes .xlsx and the semicolon CSV dialect like the other table-writing commands;
--quiet and --verbose work before or after the command."""

from __future__ import annotations

import csv
import io
import re
from pathlib import Path

import numpy as np
import pytest
from typer.testing import CliRunner

from cctkit.cli import app
from cctkit.errors import InputError
from cctkit.spreadsheet import XLSX_MAX_ROWS, csv_file_to_xlsx, read_xlsx_table

runner = CliRunner()
WL = np.arange(380, 781, 5.0)
DEMO = Path(__file__).resolve().parent.parent / "spectra" / "northbeam-nb-3000-95.csv"


def run(*args):
    return runner.invoke(app, [str(a) for a in args])


@pytest.fixture(scope="module")
def lot(tmp_path_factory) -> Path:
    """An invented wide lot of 12 white lamps; two names that a spreadsheet would run as formulas."""
    d = tmp_path_factory.mktemp("xlsx")
    names = [f"W{k:02d}" for k in range(12)]
    names[3], names[7] = "=1+2", "@SUM(A1)"
    body = "".join(
        f"{n},"
        + ",".join(
            repr(float(v))
            for v in np.exp(-0.5 * ((WL - 445 - k) / 11.0) ** 2) + 0.9 * np.exp(-0.5 * ((WL - 575 + 3 * k) / 55.0) ** 2)
        )
        + "\n"
        for k, n in enumerate(names)
    )
    f = d / "lot.csv"
    f.write_text("name," + ",".join(f"{w:g}" for w in WL) + "\n" + body)
    return f


@pytest.fixture(scope="module")
def comma_csv(lot, tmp_path_factory) -> list[list[str]]:
    out = tmp_path_factory.mktemp("ref") / "r.csv"
    r = run("batch", lot, "-o", out, "--workers", 1)
    assert r.exit_code == 0, r.stderr
    return list(csv.reader(io.StringIO(out.read_text())))


def is_number(cell: str) -> bool:
    return re.fullmatch(r"[-+]?(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?", cell) is not None


def test_batch_xlsx_holds_the_csv_numbers_as_numbers(lot, comma_csv, tmp_path):
    out = tmp_path / "r.xlsx"
    r = run("batch", lot, "-o", out, "--workers", 1)
    assert r.exit_code == 0, r.stderr
    sheet = read_xlsx_table(out)
    assert [list(map(str, row)) for row in sheet[:1]] == comma_csv[:1]  # the header
    assert len(sheet) == len(comma_csv) == 13
    numbers = 0
    for xrow, crow in zip(sheet[1:], comma_csv[1:]):
        assert len(xrow) == len(crow)
        for x, c in zip(xrow, crow):
            if c == "":
                assert x is None
            elif is_number(c) and not re.fullmatch(r"[-+]?0\d+", c):
                assert isinstance(x, (int, float)) and not isinstance(x, bool), (c, x)
                # openpyxl stores floats with 16 significant digits (%.16g): equal to 1e-15 relative
                assert x == pytest.approx(float(c), rel=1e-15, abs=0), (c, x)
                numbers += 1
            else:
                assert x == c  # text stays text
    assert numbers > 12 * 100  # most of some 250 columns are numbers
    names = [row[0] for row in sheet[1:]]
    assert names[3] == "'=1+2" and names[7] == "'@SUM(A1)"  # neutralised as in the CSV, and typed as text
    provenance = dict((row[0], row[1]) for row in read_xlsx_table(out, "provenance")[1:])
    assert provenance["cctkit_version"] and provenance["input"] == str(lot)


def test_batch_semicolon_dialect_changes_only_separators_and_decimal_marks(lot, comma_csv, tmp_path):
    out = tmp_path / "r.csv"
    r = run("batch", lot, "-o", out, "--csv-dialect", "semicolon", "--workers", 1)
    assert r.exit_code == 0, r.stderr
    semi = list(csv.reader(io.StringIO(out.read_text()), delimiter=";"))
    assert semi[0] == comma_csv[0]
    assert len(semi) == len(comma_csv)
    for srow, crow in zip(semi[1:], comma_csv[1:]):
        assert len(srow) == len(crow)
        for s, c in zip(srow, crow):
            if is_number(c):
                assert "." not in s and s.replace(",", ".") == c
            else:
                assert s == c


def test_batch_refuses_combinations_that_cannot_work(lot, tmp_path):
    r = run("batch", lot, "-o", tmp_path / "r.parquet", "--csv-dialect", "semicolon")
    assert r.exit_code == 2 and r.stderr.strip() == "cctkit: --csv-dialect applies to .csv output, not .parquet"
    r = run("batch", lot, "-o", tmp_path / "r.xlsx", "--resume")
    assert r.exit_code == 2 and r.stderr.strip() == "cctkit: --resume works with .csv output"
    r = run("batch", lot, "-o", tmp_path / "r.csv", "--csv-dialect", "tab")
    assert r.exit_code == 2 and "--csv-dialect must be one of comma, semicolon" in r.stderr
    assert list(tmp_path.iterdir()) == []


def test_a_table_too_long_for_a_worksheet_is_refused_before_writing(tmp_path):
    rows = tmp_path / "rows.csv"
    rows.write_text("n\n" + "1\n" * XLSX_MAX_ROWS)  # one row more than a sheet holds under a header
    out = tmp_path / "r.xlsx"
    with pytest.raises(InputError, match=r"1,048,576 rows do not fit in one worksheet \(at most 1,048,575\)"):
        csv_file_to_xlsx(rows, out)
    assert not out.exists()


def test_quiet_and_verbose_after_the_command(tmp_path, lot):
    quiet = run("inspect", DEMO, "--output", tmp_path / "a.json", "--quiet")
    assert quiet.exit_code == 0, quiet.stderr
    assert "wrote" not in quiet.stderr and (tmp_path / "a.json").exists()
    loud = run("inspect", DEMO, "--output", tmp_path / "b.json")
    assert "wrote" in loud.stderr  # the same command without --quiet says so
    verbose = run("cct", "--xy", "0.3127,0.3290", "--verbose")
    assert verbose.exit_code == 0 and re.search(r"cctkit: finished in \d+\.\d\d s \(exit status 0\)", verbose.stderr)
    batch = run("batch", lot, "-o", tmp_path / "r.csv", "--workers", 1, "--no-rendering", "--verbose")
    assert batch.exit_code == 0 and "finished in" in batch.stderr and "wrote" in batch.stderr
    hushed = run("batch", lot, "-o", tmp_path / "s.csv", "--workers", 1, "--no-rendering", "--quiet")
    assert hushed.exit_code == 0 and hushed.stderr == ""
    both = run("cct", "--xy", "0.3127,0.3290", "--quiet", "--verbose")
    assert both.exit_code == 2 and "exclude each other" in both.stderr
    # after `--` nothing is an option: a file named --quiet is a file (here: not found)
    literal = run("inspect", "--", "--quiet")
    assert literal.exit_code == 2 and "--quiet" in literal.stderr and "not found" in literal.stderr
