"""Report speed: a one-spectrum PDF and a 12-spectrum PDF, end to end including start-up.

Run:  .venv/bin/python benchmarks/bench_report.py [--repeat 3]

Each case runs ``cctkit report`` in a fresh process (start-up, reading, analysis, drawing,
writing) and, side by side in the same run, ``cctkit inspect`` of the same files (start-up,
reading and analysis without drawing), so the ratio shows what the report itself costs on
this (shared, noisy) machine.  The targets are 1.5 s for one spectrum and 6 s for twelve.
The best of ``--repeat`` runs is reported (the least disturbed by other work), its wall time
beside its CPU time (user + system: what the run itself cost, whatever else the machine did),
and the load average before and after.
"""

from __future__ import annotations

import argparse
import os
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
TARGETS_S = {1: 1.5, 12: 6.0}


def _write(path: Path, n: int) -> Path:
    """``n`` LED-like synthetic spectra (blackbody plus a blue peak) at 5 nm, 380-780 nm."""
    sys.path.insert(0, str(ROOT))
    from cctkit.planck import spectral_exitance

    wl = np.arange(380.0, 781.0, 5.0)
    T = np.linspace(2700.0, 6500.0, n)
    bb = spectral_exitance(T, wl)
    values = bb / bb.max(axis=1, keepdims=True) + 0.3 * np.exp(-0.5 * ((wl - 450.0) / 11.0) ** 2)
    head = "wavelength_nm," + ",".join(f"bench lamp {k + 1}" for k in range(n))
    rows = [f"{w:g}," + ",".join(f"{values[j, i]:.6g}" for j in range(n)) for i, w in enumerate(wl)]
    path.write_text(head + "\n" + "\n".join(rows) + "\n")
    return path


def _run(args: list[str], env: dict) -> tuple[float, float]:
    """Wall time and CPU time (user + system) of one run of ``args`` [s]."""
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    t0 = time.perf_counter()
    subprocess.run(args, check=True, env=env, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    wall = time.perf_counter() - t0
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    return wall, (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeat", type=int, default=3)
    args = parser.parse_args(argv)
    exe = str(Path(sys.executable).with_name("cctkit"))
    with tempfile.TemporaryDirectory() as tmp:
        d = Path(tmp)
        env = dict(os.environ, CCTKIT_CACHE_DIR=str(d / "cache"), SOURCE_DATE_EPOCH="1764633600")
        # An installed copy has its table cache and its compiled bytecode after the first run:
        # warm both once (a PYTHONDONTWRITEBYTECODE set in the shell would recompile every module
        # on every run, which no installed copy does).
        env.pop("PYTHONDONTWRITEBYTECODE", None)
        warm = _write(d / "warm.csv", 1)
        _run([exe, "inspect", str(warm), "--quantity", "radiant-flux"], env)
        _run([exe, "report", str(warm), "-q", "radiant-flux", "-o", str(d / "warm.pdf")], env)
        print(f"load average before: {' '.join(f'{x:.2f}' for x in os.getloadavg())} ({os.cpu_count()} CPUs)")
        print(
            f"{'spectra':>7}  {'report wall [s]':>15}  {'report CPU [s]':>14}  {'inspect wall [s]':>16}  "
            f"{'inspect CPU [s]':>15}  {'report/inspect (wall)':>21}  {'target [s]':>10}  pages"
        )
        for n in (1, 12):
            src = _write(d / f"in{n}.csv", n)
            out = d / f"out{n}.pdf"
            rep, ins = [], []
            for _ in range(args.repeat):
                rep.append(_run([exe, "report", str(src), "-q", "radiant-flux", "-o", str(out), "--overwrite"], env))
                ins.append(_run([exe, "inspect", str(src), "-q", "radiant-flux"], env))
            from pypdf import PdfReader

            pages = len(PdfReader(str(out)).pages)
            best, base = min(rep), min(ins)
            print(
                f"{n:>7}  {best[0]:>15.2f}  {best[1]:>14.2f}  {base[0]:>16.2f}  {base[1]:>15.2f}  "
                f"{best[0] / base[0]:>21.2f}  {TARGETS_S[n]:>10.1f}  {pages}"
            )
        print(f"load average after:  {' '.join(f'{x:.2f}' for x in os.getloadavg())}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
