"""xlsx output and CSV dialects: the workbook holds the CSV's numbers as numbers; decimal-comma CSV."""

import csv
import io
import math
from pathlib import Path

import pytest
from typer.testing import CliRunner

from cctkit.cli import app
from cctkit.spreadsheet import csv_in_dialect, csv_to_xlsx, read_xlsx_table

pytest.importorskip("openpyxl")

SPECTRA = Path(__file__).resolve().parent.parent / "spectra"
DEMO = SPECTRA / "tw-lab-setpoints.csv"
runner = CliRunner()


def run(*args):
    return runner.invoke(app, [str(a) for a in args])


def _csv_rows(text: str) -> list[list[str]]:
    return list(csv.reader(io.StringIO("".join(line for line in text.splitlines(True) if not line.startswith("#")))))


def _same_table(csv_text: str, xlsx_rows: list[list]) -> int:
    """Assert the workbook rows hold the CSV's cells: numbers as numbers, text as text. Returns numbers seen."""
    rows = _csv_rows(csv_text)
    assert len(rows) == len(xlsx_rows)
    numbers = 0
    for r, (want_row, got_row) in enumerate(zip(rows, xlsx_rows)):
        assert len(got_row) == len(want_row)
        for want, got in zip(want_row, got_row):
            if want == "":
                assert got is None
                continue
            try:
                value = float(want)
            except ValueError:
                assert got == want
                continue
            if r == 0:
                assert got == want  # the header stays text
                continue
            assert isinstance(got, (int, float)) and not isinstance(got, bool), (want, got)
            # openpyxl writes 16 significant digits ("%.16g"; a spreadsheet keeps 15)
            assert math.isclose(got, value, rel_tol=1e-15, abs_tol=0.0), (want, got)
            numbers += 1
    return numbers


def test_inspect_xlsx_holds_the_csv_numbers(tmp_path):
    r1 = run("inspect", DEMO, "--output", tmp_path / "r.csv")
    r2 = run("inspect", DEMO, "--output", tmp_path / "r.xlsx")
    assert r1.exit_code == 0 and r2.exit_code == 0, r2.output
    text = (tmp_path / "r.csv").read_text()
    assert _same_table(text, read_xlsx_table(tmp_path / "r.xlsx")) > 5 * 100
    prov = dict((k, v) for k, v in read_xlsx_table(tmp_path / "r.xlsx", "provenance")[1:])
    assert prov["cctkit_version"] and prov["conventions.c2_m_K"] == 0.014388
    import hashlib

    assert prov["input tw-lab-setpoints.csv sha256"] == hashlib.sha256(DEMO.read_bytes()).hexdigest()


@pytest.mark.parametrize(
    "args",
    [
        ("locus", "--from", "2000", "--to", "6000", "--step", "500"),
        ("blackbody", "3000"),
        ("reference", "4000"),
        ("bin", SPECTRA / "northbeam-nb-3000-95.csv"),
    ],
)
def test_every_table_output_takes_xlsx(tmp_path, args):
    assert run(*args, "--output", tmp_path / "t.csv").exit_code == 0
    r = run(*args, "--output", tmp_path / "t.xlsx")
    assert r.exit_code == 0, r.output
    assert _same_table((tmp_path / "t.csv").read_text(), read_xlsx_table(tmp_path / "t.xlsx")) > 0


def test_verify_and_versus_take_xlsx(tmp_path):
    claims = SPECTRA / "claims" / "northbeam-3000K.toml"
    lot = sorted((SPECTRA / "lot-nb3000").glob("*.csv"))[:3]
    for ext in ("csv", "xlsx"):
        r = run("verify", *lot, "--claims", claims, "--output", tmp_path / f"v.{ext}")
        assert r.exit_code in (0, 1, 3), r.output
        r = run("versus", SPECTRA / "northbeam-nb-3000-95.csv", "--output", tmp_path / f"w.{ext}")
        assert r.exit_code == 0, r.output
    for stem in ("v", "w"):
        assert _same_table((tmp_path / f"{stem}.csv").read_text(), read_xlsx_table(tmp_path / f"{stem}.xlsx")) > 0


def test_formula_like_text_stays_text(tmp_path):
    data = csv_to_xlsx("name,value\n=1+1,2.5\n@x,0123\n")
    (tmp_path / "f.xlsx").write_bytes(data)
    rows = read_xlsx_table(tmp_path / "f.xlsx")
    assert rows == [["name", "value"], ["=1+1", 2.5], ["@x", "0123"]]
    from openpyxl import load_workbook

    cell = load_workbook(tmp_path / "f.xlsx")["results"]["A2"]
    assert cell.data_type == "s"  # a string cell, not a formula


def test_semicolon_dialect_has_decimal_commas(tmp_path):
    r = run("inspect", DEMO, "--output", tmp_path / "eu.csv", "--csv-dialect", "semicolon")
    assert r.exit_code == 0, r.output
    assert run("inspect", DEMO, "--output", tmp_path / "plain.csv").exit_code == 0
    plain = _csv_rows((tmp_path / "plain.csv").read_text())
    eu = list(csv.reader(io.StringIO((tmp_path / "eu.csv").read_text()), delimiter=";"))
    assert eu[0] == plain[0]
    for a, b in zip(plain[1:], eu[1:]):
        for p, e in zip(a, b):
            try:
                value = float(p)
            except ValueError:
                assert e == p
                continue
            assert "." not in e and float(e.replace(",", ".")) == value  # exact: only the mark changed
    assert "2699,6" in (tmp_path / "eu.csv").read_text()


def test_dialect_keeps_comment_lines_and_quotes_text():
    text = '# a comment, with commas\nname,v\n"a;b, c",1.5\n'
    assert csv_in_dialect(text, "semicolon") == '# a comment, with commas\nname;v\n"a;b, c";1,5\n'
    assert csv_in_dialect(text, "comma") == text


def test_unknown_dialect_is_one_line_exit_2(tmp_path):
    r = run("inspect", DEMO, "--output", tmp_path / "x.csv", "--csv-dialect", "tab")
    assert r.exit_code == 2
    assert "--csv-dialect must be one of comma, semicolon, got 'tab'" in r.output
    assert not (tmp_path / "x.csv").exists()
