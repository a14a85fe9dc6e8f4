"""``cctkit cct`` answered without the command-line framework gives the framework's bytes.

The console entry point (:mod:`cctkit.entry`) answers the plain forms of ``cct`` itself, for
start-up time (benchmarks/bench_startup.py measures it); everything else goes to the full
command line.  These tests hold the two equal, byte for byte, and check what falls through.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys

import pytest
from typer.testing import CliRunner

from cctkit import entry
from cctkit.cli import app

runner = CliRunner()

SAME = [
    ["cct", "--xy", "0.3127,0.3290"],
    ["cct", "--xy", "0.3127,0.3290", "--json"],
    ["--quiet", "cct", "--uv", "0.2,0.31"],
    ["cct", "--uvp", "0.2,0.47", "--json", "--quiet"],
    ["cct", "--xy", "0.4369;0.4041", "--method", "ohno2013"],
    ["cct", "--method", "robertson1968", "--xy", "0.4369,0.4041", "--json"],
    ["cct", "--xy", "0.3127,0.3290", "--observer", "10"],
    ["cct", "--xy", "0.3127,0.3290", "--observer", "10°", "--json"],
    ["cct", "--xy", "0.25,0.40"],  # |Duv| > 0.05: CCT withheld, a warning on stderr
    ["cct", "--xy", "0.25,0.40", "--json"],
    ["cct", "--xy", "0.25,0.40", "--quiet"],
    ["cct", "--uv", "0.19,0.20", "--json"],  # nearest locus point beyond the table: both withheld
]


@pytest.mark.parametrize("argv", SAME, ids=lambda a: " ".join(a))
def test_quick_cct_prints_what_the_full_command_prints(argv, capsys):
    full = runner.invoke(app, argv)
    assert full.exit_code == 0, full.output
    assert entry._quick_cct(argv) is True
    out, err = capsys.readouterr()
    assert out == full.stdout
    assert err == full.stderr


FALL_THROUGH = [
    ["cct", "--help"],
    ["cct"],
    ["cct", "--xy", "0.3127", "0.3290"],  # the "X Y" form: a positional word
    ["cct", "--xy=0.3127,0.3290"],
    ["cct", "--xy", "0.3127,0.3290", "--xy", "0.3,0.3"],
    ["cct", "--xy", "0.3127,0.3290", "--uv", "0.2,0.3"],  # refused by the command, in its words
    ["cct", "--xy", "2,3"],
    ["cct", "--xy", "-0.1,0.3"],
    ["cct", "--xy", "0.3127,0.3290", "--verbose"],
    ["cct", "--xy", "0.3127,0.3290", "--method", "mccamy"],
    ["cct", "--xy", "0.3127,0.3290", "--observer", "5"],
    ["cct", "--xy", "0.3127,0.3290", "--jsn"],
    ["inspect", "x.csv"],
    ["--version"],
    [],
]


@pytest.mark.parametrize("argv", FALL_THROUGH, ids=lambda a: " ".join(a) or "(none)")
def test_anything_else_goes_to_the_full_command_line_with_nothing_printed(argv, capsys):
    assert entry._quick_cct(argv) is False
    assert capsys.readouterr() == ("", "")


def test_the_entry_point_answers_cct_without_the_framework(tmp_path):
    code = (
        "import sys; sys.argv = ['cctkit', 'cct', '--xy', '0.3127,0.3290', '--json']; "
        "from cctkit.entry import main; main(); "
        "print(sorted(m for m in sys.modules if m.split('.')[0] in ('typer', 'click', 'pydantic')), file=sys.stderr)"
    )
    r = subprocess.run(
        [sys.executable, "-c", code],
        capture_output=True,
        text=True,
        check=True,
        env={**os.environ, "CCTKIT_CACHE_DIR": str(tmp_path / "cache")},
    )
    assert r.stderr.strip().splitlines()[-1] == "[]"
    doc = json.loads(r.stdout)
    # D65 xy (0.3127, 0.3290): CCT 6504 K, Duv +0.0032  # CIE 15:2018 Table 9.1 (from memory)
    assert doc["cct_K"] == pytest.approx(6504, abs=1) and doc["duv"] == pytest.approx(0.0032, abs=1e-4)
    # a bad value falls through to the full command line: one line, exit status 2
    bad = subprocess.run(
        [sys.executable, "-m", "cctkit", "cct", "--xy", "2,3"],
        capture_output=True,
        text=True,
        env={**os.environ, "CCTKIT_CACHE_DIR": str(tmp_path / "cache")},
    )
    assert bad.returncode == 2 and bad.stdout == ""
    assert bad.stderr.strip() == "cctkit: --xy values must be chromaticity coordinates between 0 and 1, got 2 3"
