"""Command-line conventions a new user runs into: each test is a defect seen once, kept fixed."""

import json
import os
import re
import subprocess
import sys
from pathlib import Path

import pytest
from typer.testing import CliRunner

from cctkit.cli import app

ROOT = Path(__file__).resolve().parent.parent
SPECTRA = ROOT / "spectra"
runner = CliRunner()
COMMANDS = ("inspect", "cct", "locus", "blackbody", "versus", "reference", "verify", "bin", "report", "batch")


def run(*args):
    return runner.invoke(app, [str(a) for a in args])


def test_cct_takes_the_comma_form_and_the_help_shows_it():
    comma = run("cct", "--xy", "0.3127,0.3290", "--json")
    spaced = run("cct", "--xy", "0.3127", "0.3290", "--json")
    assert comma.exit_code == 0, comma.output
    assert json.loads(comma.stdout) == json.loads(spaced.stdout)
    assert json.loads(comma.stdout)["cct_K"] == pytest.approx(6504, abs=2)  # D65 xy, CIE 15:2018: 6504 K (from memory)
    assert run("cct", "--uvp", "0.1978,0.4683", "--json").exit_code == 0
    text = run("cct", "--help").output
    assert "--xy X,Y" in text and "0.3127,0.3290" in text and "<float" not in text


def test_cct_bad_pairs_are_one_line():
    r = run("cct", "--xy", "0.3127")
    assert r.exit_code == 2 and "--xy takes two numbers separated by a comma" in r.output
    r = run("cct", "--xy", "0.3127,0.3290", "0.7")
    assert r.exit_code == 2 and "unexpected argument '0.7'" in r.output


@pytest.mark.parametrize("command", COMMANDS)
def test_usage_lines_have_no_braces(command):
    usage = next(line for line in run(command, "--help").output.splitlines() if line.startswith("Usage:"))
    assert "{" not in usage and "}" not in usage
    assert re.fullmatch(r"Usage: \S+ \w+ \[OPTIONS\]( \[?[A-Z_]+(\.\.\.)?\]?)*", usage), usage


def test_locus_prints_a_table_for_people_and_csv_on_request(tmp_path):
    r = run("locus", "--from", "2000", "--to", "2100", "--step", "50")
    assert r.exit_code == 0
    lines = r.stdout.splitlines()
    assert lines[0] == "Planckian locus, CIE 1931 2° observer" and lines[1].split()[:3] == ["T", "[K]", "x"]
    assert lines[2].split()[:3] == [
        "2000",
        "0.52668",
        "0.41330",
    ]  # 2000 K: x 0.5267, y 0.4133, CIE 15 locus (from memory)
    assert "," not in "\n".join(lines[1:])
    csv = run("locus", "--from", "2000", "--to", "2100", "--step", "50", "--csv")
    assert csv.stdout.splitlines()[0] == "T_K,x,y,u,v,u_prime,v_prime" and len(csv.stdout.splitlines()) == 4
    out = run("locus", "--from", "2000", "--to", "2100", "--step", "50", "--output", tmp_path / "l.csv")
    assert out.stdout == "" and (tmp_path / "l.csv").read_text() == csv.stdout


@pytest.mark.parametrize(
    "args, name",
    [
        (("blackbody", "-5"), "T_K"),
        (("reference", "-5"), "CCT_K"),
        (("locus", "--from", "-5"), "--from"),
        (("locus", "--to", "-300"), "--to"),
    ],
)
def test_negative_temperatures_must_be_positive(args, name):
    r = run(*args)
    assert r.exit_code == 2
    assert f"{name} must be positive" in r.output and "No such option" not in r.output
    assert len(r.output.strip().splitlines()) == 1


def test_locus_range_is_stated_and_matches_the_readme():
    r = run("locus", "--from", "499")
    assert r.exit_code == 2 and "--from must be between 500 and 1000000 K, got 499" in r.output
    assert run("locus", "--from", "500", "--to", "510", "--step", "10", "--csv").exit_code == 0
    assert "500 to 1000000" in run("locus", "--help").output
    readme = (ROOT / "README.md").read_text()
    locus_line = next(line for line in readme.splitlines() if line.startswith("cctkit locus"))
    described = readme[readme.index(locus_line) :].splitlines()[1]
    assert "500" in described and "1,000,000 K" in described


def test_progress_is_plain_lines_when_not_a_terminal(tmp_path):
    r = run("batch", SPECTRA / "tw-lab-setpoints.csv", "--output", tmp_path / "b.csv", "--progress")
    assert r.exit_code == 0, r.output
    assert "\r" not in r.output
    progress = [line for line in r.output.splitlines() if "spectra/s" in line and not line.startswith("wrote")]
    assert progress and all(re.fullmatch(r"[\d,]+(/[\d,]+)? spectra .*spectra/s.*", line) for line in progress)


def test_progress_draws_a_live_bar_on_a_terminal():
    from cctkit.progress import Progress

    class Terminal:
        def __init__(self):
            self.text = []

        def write(self, s):
            self.text.append(s)

        def flush(self):
            pass

        def isatty(self):
            return True

    term = Terminal()
    p = Progress(10, stream=term)
    assert p.live
    p.update(10)
    p.finish()
    assert "10/10 spectra" in "".join(term.text)


def test_quiet_and_verbose(tmp_path):
    demo = SPECTRA / "northbeam-nb-3000-95.csv"
    loud = runner.invoke(app, ["inspect", str(demo), "--output", str(tmp_path / "a.json")])
    assert "wrote" in loud.output
    quiet = runner.invoke(app, ["--quiet", "inspect", str(demo), "--output", str(tmp_path / "b.json")])
    assert quiet.exit_code == 0 and "wrote" not in quiet.output and (tmp_path / "b.json").exists()
    verbose = runner.invoke(app, ["--verbose", "cct", "--xy", "0.3127,0.3290"])
    assert verbose.exit_code == 0 and re.search(r"cctkit: finished in \d+\.\d\d s", verbose.output)
    both = runner.invoke(app, ["--quiet", "--verbose", "cct", "--xy", "0.3127,0.3290"])
    assert both.exit_code == 2 and "exclude each other" in both.output


def test_shell_completion_works_as_documented(monkeypatch):
    env = {**os.environ, "COMP_WORDS": "cctkit ins", "COMP_CWORD": "1", "_CCTKIT_COMPLETE": "complete_bash"}
    r = subprocess.run([sys.executable, "-m", "cctkit"], env=env, capture_output=True, text=True)
    # python -m names the program after the module; the console script is what users complete
    exe = Path(sys.executable).with_name("cctkit")
    if exe.exists():
        r = subprocess.run([str(exe)], env=env, capture_output=True, text=True)
        assert r.stdout.split() == ["inspect"]
    # the framework finds the user's shell among the process's parents; a test run with no shell among them (a
    # detached job) would find none and print "Shell not supported", so the search answers bash here
    import shellingham

    monkeypatch.setattr(shellingham, "detect_shell", lambda *a, **k: ("bash", "/bin/bash"))
    script = run("--show-completion", "bash")
    assert script.exit_code == 0, script.output
    assert "complete -o default -F" in script.output  # a bash completion script
    readme = (ROOT / "README.md").read_text()
    assert "--install-completion" in readme


def test_help_imports_no_heavy_or_optional_library():
    names = ("colour", "matplotlib", "scipy", "pyarrow", "dask", "pandas", "openpyxl", "rich.progress")
    code = f"import sys; from cctkit.cli import app; print(sorted(m for m in {names!r} if m in sys.modules))"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
    assert out.strip() == "[]"
