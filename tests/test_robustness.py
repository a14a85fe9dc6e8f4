"""Faults, load and hostile input: each guarantee of the README's Reliability section, tested.

Memory cases run the command in a child process under an address-space limit
(``resource.setrlimit(RLIMIT_AS)``), so a regression fails the test instead of the machine.
"""

from __future__ import annotations

import errno
import json
import os
import subprocess
import sys
import textwrap
from pathlib import Path

import numpy as np
import pytest
from typer.testing import CliRunner

from cctkit import safe_io
from cctkit.cli import app
from cctkit.errors import InputError
from cctkit.limits import MAX_POINTS, MAX_SPECTRA

ROOT = Path(__file__).resolve().parent.parent / "spectra"
LAMP = ROOT / "northbeam-nb-3000-95.csv"
CLAIMS = ROOT / "claims" / "northbeam-3000K.toml"
runner = CliRunner()

#: Address space allowed to a child running one command [bytes]: 1.5 GiB (common practice, no source:
#: the interpreter, numpy, scipy and the tables need about 0.6 GiB of it).
LIMIT_AS = 1536 * 1024 * 1024


def run_limited(
    args: list[str], *, cwd: Path, limit_as: int = LIMIT_AS, fsize: int | None = None, timeout: float = 120
) -> subprocess.CompletedProcess:
    """``cctkit ARGS`` in a child process under resource limits; returns the finished process."""
    code = textwrap.dedent(f"""
        import resource, signal, sys
        resource.setrlimit(resource.RLIMIT_AS, ({limit_as}, {limit_as}))
        fsize = {fsize!r}
        if fsize is not None:
            signal.signal(signal.SIGXFSZ, signal.SIG_IGN)  # a write past the limit fails with EFBIG
            resource.setrlimit(resource.RLIMIT_FSIZE, (fsize, fsize))
        from cctkit.cli import main
        sys.argv = ["cctkit"] + {args!r}
        main()
    """)
    return subprocess.run(
        [sys.executable, "-c", code],
        cwd=cwd,
        capture_output=True,
        text=True,
        timeout=timeout,
        env={**os.environ, "OPENBLAS_NUM_THREADS": "1", "OMP_NUM_THREADS": "1"},
    )


def one_line(text: str) -> str:
    lines = [line for line in text.splitlines() if line.strip()]
    assert len(lines) == 1, text
    assert "Traceback" not in text
    return lines[0]


def claims_with(tmp_path: Path, samples: str = "", name: str = "c.toml") -> Path:
    p = tmp_path / name
    p.write_text("[limits]\nRa = { min = 80 }\n" + samples)
    return p


# --------------------------------------------------------------------------- bounded reads


def test_claims_fifo_and_device_are_refused_at_once(tmp_path):
    fifo = tmp_path / "claims.toml"
    os.mkfifo(fifo)
    p = run_limited(["verify", str(LAMP), "--claims", str(fifo)], cwd=tmp_path, timeout=60)  # would hang
    assert p.returncode == 2
    assert "not a regular file" in one_line(p.stderr) and str(fifo) in p.stderr
    r = runner.invoke(app, ["verify", str(LAMP), "--claims", "/dev/zero"])  # would eat memory
    assert r.exit_code == 2 and "/dev/zero: cannot read claims file (is not a regular file" in one_line(r.output)


@pytest.mark.parametrize(
    "sidecar, reason",
    [
        ("/dev/zero", "absolute path"),
        ("/etc/passwd", "absolute path"),
        ("../power.csv", "leaves the claims file's folder"),
        ("sub/../../power.csv", "leaves the claims file's folder"),
        ("link.csv", "outside the claims file's folder"),
        ("fifo.csv", "not a regular file"),
    ],
)
def test_sidecar_is_confined_to_the_claims_folder(tmp_path, sidecar, reason):
    inner = tmp_path / "claims"
    inner.mkdir()
    (tmp_path / "power.csv").write_text("name,power_W\nx,10\n")
    (inner / "link.csv").symlink_to(tmp_path / "power.csv")
    os.mkfifo(inner / "fifo.csv")
    c = claims_with(inner, f'[samples]\nsidecar = "{sidecar}"\n')
    r = runner.invoke(app, ["verify", str(LAMP), "--claims", str(c)])
    assert r.exit_code == 2
    assert reason in one_line(r.output)


def test_claims_file_size_and_nesting_limits(tmp_path):
    from cctkit.claims import MAX_CLAIMS_BYTES

    big = tmp_path / "big.toml"
    big.write_text("[limits]\nRa = { min = 80 }\n" + "# padding\n" * (MAX_CLAIMS_BYTES // 10 + 1))
    r = runner.invoke(app, ["verify", str(LAMP), "--claims", str(big)])
    assert r.exit_code == 2 and f"over the limit of {MAX_CLAIMS_BYTES} bytes" in one_line(r.output)
    deep = tmp_path / "deep.toml"
    deep.write_text("x = " + "[" * 5000 + "]" * 5000 + "\n")
    r = runner.invoke(app, ["verify", str(LAMP), "--claims", str(deep)])
    assert r.exit_code == 2 and "deep.toml" in one_line(r.output)


def test_spectrum_from_a_device_or_fifo_is_refused(tmp_path):
    os.mkfifo(tmp_path / "pipe.csv")
    p = run_limited(["inspect", str(tmp_path / "pipe.csv")], cwd=tmp_path, timeout=60)
    assert p.returncode == 2 and "not a regular file" in one_line(p.stderr)
    r = runner.invoke(app, ["inspect", "/dev/zero"])
    assert r.exit_code == 2 and "not a regular file" in one_line(r.output)


# --------------------------------------------------------------------------- resource limits


def test_point_limit_under_a_memory_limit(tmp_path):
    n = MAX_POINTS + 1
    wl = np.linspace(360.0, 830.0, n)
    f = tmp_path / "fine.csv"
    f.write_text("wavelength,v\n" + "".join(f"{w:.6f},1\n" for w in wl))
    p = run_limited(["inspect", str(f)], cwd=tmp_path)
    assert p.returncode == 2
    assert f"{n} wavelength points, over the limit of {MAX_POINTS}" in one_line(p.stderr)


def test_spectra_limit_points_to_batch_under_a_memory_limit(tmp_path):
    n = MAX_SPECTRA + 1
    f = tmp_path / "many.json"
    wl = list(range(380, 781, 20))
    f.write_text(
        json.dumps({"wavelength_nm": wl, "spectra": [{"name": f"s{i}", "values": [1.0] * len(wl)} for i in range(n)]})
    )
    p = run_limited(["inspect", str(f)], cwd=tmp_path)
    assert p.returncode == 2, p.stderr
    line = one_line(p.stderr)
    assert f"{n} spectra" in line and "cctkit batch" in line
    for command in (
        ["versus"],
        ["bin"],
        ["report", "--output", str(tmp_path / "r.pdf")],
        ["verify", "--claims", str(CLAIMS)],
    ):
        r = runner.invoke(app, [command[0], str(f), *command[1:]])
        assert r.exit_code == 2, r.output
        assert f"{n} spectra" in one_line(r.output) and "cctkit batch" in r.output
    assert not (tmp_path / "r.pdf").exists()


# --------------------------------------------------------------------------- outputs


def test_verify_output_never_replaces_the_sidecar(tmp_path):
    d = tmp_path / "claims"
    d.mkdir()
    sidecar = d / "power.csv"
    sidecar.write_text("name,power_W\nNB-3000-95,10.4\n")
    before = sidecar.read_bytes()
    c = claims_with(d, '[samples]\nsidecar = "power.csv"\n')
    r = runner.invoke(app, ["verify", str(LAMP), "--claims", str(c), "--output", str(sidecar), "--overwrite"])
    assert r.exit_code == 2 and "refusing to write over an input file" in one_line(r.output)
    assert sidecar.read_bytes() == before


def test_no_overwrite_is_enforced_at_the_final_step(tmp_path):
    out = tmp_path / "out.csv"
    with pytest.raises(InputError, match="appeared while the command ran"):
        with safe_io.atomic_path(out) as tmp:
            tmp.write_text("ours\n")
            out.write_text("someone else's\n")  # created while "the command ran"
    assert out.read_text() == "someone else's\n"
    assert [p.name for p in tmp_path.iterdir()] == ["out.csv"]  # no temporary file left


def test_two_outputs_are_all_or_nothing(tmp_path, monkeypatch):
    csv_out, pdf_out = tmp_path / "v.csv", tmp_path / "v.pdf"
    real_link = os.link

    def link(src, dst, *a, **k):
        if str(dst).endswith(".pdf"):
            raise OSError(errno.ENOSPC, "No space left on device", str(dst))
        return real_link(src, dst, *a, **k)

    monkeypatch.setattr(os, "link", link)
    with pytest.raises(InputError, match=r"v\.pdf: cannot write the output \(No space left on device\)"):
        with safe_io.output_group():
            safe_io.atomic_write(csv_out, "a,b\n")
            safe_io.atomic_write(pdf_out, b"%PDF")
    assert list(tmp_path.iterdir()) == []  # neither output, no temporary file
    # with --overwrite, a replaced first output is restored
    monkeypatch.setattr(os, "link", real_link)
    csv_out.write_text("old\n")

    def fail_second(src, dst):
        if str(dst).endswith(".pdf"):
            raise OSError(errno.EROFS, "Read-only file system", str(dst))
        return os.rename(src, dst)

    monkeypatch.setattr(os, "replace", fail_second)
    with pytest.raises(InputError, match="Read-only file system"):
        with safe_io.output_group():
            safe_io.atomic_write(csv_out, "new\n", overwrite=True)
            safe_io.atomic_write(pdf_out, b"%PDF", overwrite=True)
    assert csv_out.read_text() == "old\n" and sorted(p.name for p in tmp_path.iterdir()) == ["v.csv"]


def test_verify_writes_both_outputs_in_one_group(tmp_path, monkeypatch):
    import cctkit.report as report

    def no_room(analysis, path, **k):  # the report fails after the CSV was staged
        with safe_io.atomic_path(path, overwrite=k.get("overwrite", False), inputs=k.get("inputs", ())):
            raise OSError(errno.ENOSPC, "No space left on device")

    monkeypatch.setattr(report, "build_report", no_room)
    r = runner.invoke(
        app,
        [
            "verify",
            str(LAMP),
            "--claims",
            str(CLAIMS),
            "--output",
            str(tmp_path / "v.csv"),
            "--report",
            str(tmp_path / "v.pdf"),
        ],
    )
    assert r.exit_code == 2 and "v.pdf: cannot write the output (No space left" in one_line(r.output)
    assert list(tmp_path.iterdir()) == []


def test_full_disk_names_the_file_and_leaves_nothing(tmp_path):
    # RLIMIT_FSIZE makes every write past 4 KiB fail (EFBIG), as a full disk would (ENOSPC).
    out = tmp_path / "all.csv"
    p = run_limited(["inspect", str(LAMP), "--output", str(out)], cwd=tmp_path, fsize=4096)
    assert p.returncode == 2
    line = one_line(p.stderr)
    assert str(out) in line and "File too large" in line
    assert list(tmp_path.iterdir()) == []


def test_read_only_folder_names_the_file(tmp_path, monkeypatch):
    import tempfile

    def read_only(*a, **k):
        raise OSError(errno.EROFS, "Read-only file system")

    monkeypatch.setattr(tempfile, "mkstemp", read_only)
    out = tmp_path / "x.json"
    r = runner.invoke(app, ["inspect", str(LAMP), "--output", str(out)])
    assert r.exit_code == 2
    line = one_line(r.output)
    assert str(out) in line and "Read-only file system" in line


# --------------------------------------------------------------------------- untrusted text


def _named(tmp_path: Path, name: str) -> Path:
    wl = list(range(380, 781, 5))
    f = tmp_path / "named.json"
    values = [float(np.exp(-(((w - 560) / 120) ** 2))) + 0.1 for w in wl]
    f.write_text(json.dumps({"wavelength_nm": wl, "spectra": [{"name": name, "values": values}]}))
    return f


def test_terminal_escapes_in_names_are_made_visible(tmp_path):
    hostile = "lamp\x1b]0;pwned\x07\x1b[2J\x9b31m\u202e"
    f = _named(tmp_path, hostile)
    for args in (["bin", str(f)], ["inspect", str(f), "--json"]):
        r = runner.invoke(app, args)
        assert r.exit_code == 0, r.output
        for ch in ("\x1b", "\x07", "\x9b", "\u202e"):
            assert ch not in r.stdout
        assert "lamp\\x1b]0;pwned" in r.stdout or "lamp\\u001b]0;pwned" in r.stdout
    assert json.loads(r.stdout)["spectra"][0]["name"] == hostile  # the JSON value itself is kept


@pytest.mark.parametrize("name", ["=1+2", "+cmd|' /C calc'!A0", "-2+3", "@SUM(A1)"])
def test_formula_cells_are_neutralised_numbers_stay_numbers(tmp_path, name):
    import csv

    f = _named(tmp_path, name)
    out = tmp_path / "o.csv"
    r = runner.invoke(app, ["inspect", str(f), "--output", str(out)])
    assert r.exit_code == 0, r.output
    rows = list(csv.DictReader(out.open(newline="")))
    assert rows[0]["name"] == "'" + name
    assert float(rows[0]["duv"]) == pytest.approx(float(rows[0]["duv"]))  # still a plain number
    from cctkit.formats import csv_cell

    assert csv_cell("-0.0012") == "-0.0012" and csv_cell("+1e3") == "+1e3" and csv_cell(-1.5) == -1.5
    assert csv_cell("\tx") == "'\tx" and csv_cell("\r=x") == "'\r=x"


# --------------------------------------------------------------------------- messages


def test_bin_gives_no_centre_without_chromaticity():
    from cctkit.binning import bin_chromaticities

    r = bin_chromaticities(np.array([[np.nan, np.nan], [0.4339, 0.4033]]), ellipses="macadam1942")
    assert r.centre[0] is None and r.sdcm_bin[0] == -1
    assert r.centre[1] == "3000K"  # ANSI C78.377-2017 3000 K centre x 0.4339, y 0.4033


def test_runtime_warnings_are_one_line(tmp_path):
    import warnings

    from cctkit.cli import _one_line_warnings

    r = runner.invoke(app, ["inspect", str(LAMP)])
    assert r.exit_code == 0
    with _one_line_warnings():
        import contextlib
        import io

        buf = io.StringIO()
        with contextlib.redirect_stderr(buf):
            warnings.warn("invalid value encountered in divide", RuntimeWarning)
            warnings.warn("invalid value encountered in divide", RuntimeWarning)
    assert buf.getvalue() == "cctkit: warning: invalid value encountered in divide\n"


def test_interrupt_is_one_line_exit_130(tmp_path):
    import signal
    import time

    big = tmp_path / "lot.json"
    wl = list(range(380, 781, 5))
    rng = np.random.default_rng(1)
    big.write_text(
        json.dumps(
            {
                "wavelength_nm": wl,
                "spectra": [
                    {"name": f"s{i}", "values": (rng.random(len(wl)) + 0.5).tolist()} for i in range(MAX_SPECTRA)
                ],
            }
        )
    )
    proc = subprocess.Popen(
        [sys.executable, "-m", "cctkit", "report", str(big), "--output", "r.pdf"],
        cwd=tmp_path,
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
    )

    def cpu_s() -> float:  # the child's own CPU time: past start-up whatever the machine's load
        fields = Path(f"/proc/{proc.pid}/stat").read_text().rsplit(")", 1)[1].split()
        return (int(fields[11]) + int(fields[12])) / os.sysconf("SC_CLK_TCK")

    end = time.monotonic() + 60
    while proc.poll() is None and cpu_s() < 1.0 and time.monotonic() < end:
        time.sleep(0.05)
    proc.send_signal(signal.SIGINT)
    out, err = proc.communicate(timeout=60)
    assert proc.returncode == 130
    assert one_line(err) == "cctkit: interrupted; nothing was written"
    assert not (tmp_path / "r.pdf").exists()


def test_internal_errors_name_no_python_types(monkeypatch):
    import cctkit.analysis as analysis

    def broken(*a, **k):
        raise KeyError("cct_K")

    monkeypatch.setattr(analysis, "analyse_groups", broken)
    r = runner.invoke(app, ["inspect", str(LAMP)])
    assert r.exit_code == 1
    line = one_line(r.output)
    assert "KeyError" not in line and "internal error" in line


# --------------------------------------------------------------------------- no visible data (verify)


@pytest.mark.parametrize(
    "case, wavelengths, values, reason",
    [
        # NIR only (a spectrometer's 900-1700 nm head), UV only, and angstroms read as nm (3800-7800 "nm")
        ("nir", np.arange(900.0, 1701.0, 5.0), None, "no measured data in 380-780 nm"),
        ("uv", np.arange(250.0, 371.0, 1.0), None, "no measured data in 380-780 nm"),
        ("angstrom", np.arange(3800.0, 7801.0, 50.0), None, "no measured data in 380-780 nm"),
        ("negative", np.arange(380.0, 781.0, 5.0), -1.0, "no signal"),
        ("zero", np.arange(380.0, 781.0, 5.0), 0.0, "no signal"),
    ],
)
def test_verify_never_passes_a_spectrum_without_visible_data(tmp_path, case, wavelengths, values, reason):
    v = np.full(wavelengths.size, values) if values is not None else 1.0 + 0.1 * np.sin(wavelengths / 40.0)
    f = tmp_path / f"{case}.csv"
    f.write_text("wavelength,v\n" + "".join(f"{w:g},{x!r}\n" for w, x in zip(wavelengths, v)))
    claims = claims_with(tmp_path)
    r = runner.invoke(app, ["verify", str(f), "--claims", str(claims), "--output", str(tmp_path / "v.csv")])
    assert r.exit_code == 2, r.output  # never PASS (exit 0), never a number from extrapolation
    line = one_line(r.output)
    assert reason in line and f"{case}.csv" in line
    assert not (tmp_path / "v.csv").exists()


def test_absurd_wavelengths_and_denormal_values_are_one_line(tmp_path):
    f = tmp_path / "huge.csv"
    f.write_text("wavelength,v\n380,1\n500,1\n600,1\n700,1\n1e308,1\n")
    r = runner.invoke(app, ["inspect", str(f)])
    assert r.exit_code == 2 and "wavelength 1e+308 nm is outside" in one_line(r.output)
    tiny = tmp_path / "tiny.csv"  # denormal values: no colour signal, flagged, no traceback
    tiny.write_text("wavelength,v\n" + "".join(f"{w},5e-320\n" for w in range(380, 781, 5)))
    r = runner.invoke(app, ["inspect", str(tiny), "--json"])
    assert r.exit_code == 0 and "Traceback" not in r.stderr
    flags = [f["code"] for f in json.loads(r.stdout)["spectra"][0]["flags"]]
    assert "no-chromaticity" in flags
    assert all(line.startswith("cctkit: warning: ") for line in r.stderr.splitlines())  # one line per warning
