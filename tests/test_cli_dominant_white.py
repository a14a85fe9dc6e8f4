"""--dominant-white on the commands that report dominant wavelength: chosen, stated, refused when bad."""

from __future__ import annotations

import csv
import json
from pathlib import Path

import numpy as np
import pytest
from typer.testing import CliRunner

from cctkit.cli import app
from cctkit.dominant import dominant_wavelength

DEMO = Path(__file__).resolve().parents[1] / "spectra" / "northbeam-nb-3000-95.csv"


def run(*args):
    return CliRunner().invoke(app, [str(a) for a in args])


def test_inspect_names_and_uses_the_white():
    default = json.loads(run("inspect", DEMO, "--json").stdout)["spectra"][0]
    r = run("inspect", DEMO, "--json", "--dominant-white", "d65")
    assert r.exit_code == 0, r.output
    rec = json.loads(r.stdout)["spectra"][0]
    assert default["dominant_white"] == "E" and rec["dominant_white"] == "D65"
    # D65, CIE 1931 xy: CIE 15:2018 Table T.3 (from memory; checked against colour-science in test_dominant.py)
    assert (rec["dominant_white_x"], rec["dominant_white_y"]) == (0.31272, 0.32903)
    # the same chromaticity seen from D65 through the library (its check against the reference library
    # colour-science is in tests/test_dominant.py)
    lib = dominant_wavelength(np.array([rec["x"], rec["y"]]), white_xy=(0.31272, 0.32903))
    assert rec["dominant_wavelength_nm"] == pytest.approx(float(lib.dominant_wavelength_nm), abs=1e-9)
    assert rec["dominant_wavelength_nm"] != pytest.approx(default["dominant_wavelength_nm"], abs=0.1)
    table = run("inspect", DEMO, "--dominant-white", "0.31,0.33").output
    assert "from white 0.31,0.33 (x 0.3100, y 0.3300)" in table


def test_bad_white_is_one_line_exit_2():
    r = run("inspect", DEMO, "--dominant-white", "D75")
    assert r.exit_code == 2
    assert r.output.strip() == (
        "cctkit: --dominant-white: white point must be one of E, D65, D50, A or x,y (e.g. 0.3127,0.3290), got 'D75'"
    )


def test_batch_rows_carry_the_white(tmp_path):
    r = run("batch", DEMO, "--output", tmp_path / "b.csv", "--dominant-white", "A", "--no-rendering", "--workers", "1")
    assert r.exit_code == 0, r.output
    row = next(csv.DictReader((tmp_path / "b.csv").open()))
    # illuminant A, x: CIE 15:2018 Table T.3 (from memory; checked against colour-science in test_dominant.py)
    assert row["dominant_white"] == "A" and float(row["dominant_white_x"]) == 0.44758
