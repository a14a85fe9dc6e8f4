"""Every provenance block names the interpolation actually used (inspect JSON/xlsx, bin, the report's meta)."""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from typer.testing import CliRunner

from cctkit.cli import app

DEMO = Path(__file__).resolve().parents[1] / "spectra" / "tw-lab-setpoints.csv"  # 0.5 nm steps: resampled


def run(*args):
    return CliRunner().invoke(app, [str(a) for a in args])


def test_inspect_json_and_xlsx_name_the_method_used(tmp_path):
    r = run("inspect", DEMO, "--interpolation", "linear", "--json")
    assert r.exit_code == 0, r.output
    conv = json.loads(r.stdout)["conventions"]
    assert conv["interpolation_method"] == "linear"
    assert conv["interpolation_used"] == "linear (5 spectra)"
    pytest.importorskip("openpyxl")
    from cctkit.spreadsheet import read_xlsx_table

    r = run("inspect", DEMO, "--interpolation", "pchip", "--output", tmp_path / "r.xlsx")
    assert r.exit_code == 0, r.output
    prov = dict((k, v) for k, v in read_xlsx_table(tmp_path / "r.xlsx", "provenance")[1:])
    assert prov["conventions.interpolation_method"] == "pchip"
    assert prov["conventions.interpolation_used"] == "pchip (5 spectra)"


def test_report_meta_states_the_method_used_not_the_default():
    from cctkit.analysis import analyse_files
    from cctkit.report.build import report_meta

    recs = analyse_files([DEMO], rendering=False, interpolation="linear").records()
    meta = report_meta(records=recs, date="2026-12-01")
    assert meta["conventions"]["interpolation_method"] == "linear (5 spectra)"
    recs = analyse_files([DEMO], rendering=False).records()  # auto: Sprague for uniform steps (CIE 167)
    assert report_meta(records=recs, date="2026-12-01")["conventions"]["interpolation_method"] == "sprague (5 spectra)"
