"""``cctkit batch`` end to end: spectra/s and peak memory, and how they scale with N.

Run: .venv/bin/python benchmarks/bench_batch.py [--sizes 1000,10000,100000] [--no-rendering] [--keep]

For each N a wide CSV of N distinct synthetic white-LED spectra (380-780 nm at
5 nm, our own two-band model) is written to a temporary folder, then
``cctkit batch`` runs on it in a child process, once in one process
(``--workers 1``) and once with the default local worker processes.  Printed per
run: wall time, spectra/s, and the peak resident memory of the child as
``wait4`` reports it (on Linux the largest of the child and its own waited-for
workers, not their sum; the input is generated in a separate process so that the
benchmark's own memory does not show in it), side by side so the ratios come from one run on one
machine.  Not run by CI.
"""

from __future__ import annotations

import argparse
import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
from _synthetic import led_spectra  # benchmarks/ is on sys.path when this file runs as a script

ROOT = Path(__file__).resolve().parents[1]
_RUNNER = "import sys\nfrom cctkit.cli import app\napp(sys.argv[1:])\n"


def write_wide_csv(path: Path, n: int, *, block: int = 5_000) -> None:
    wl = np.arange(380.0, 781.0, 5.0)
    with open(path, "w", encoding="utf-8") as fh:
        fh.write("# quantity: radiant-flux\n")
        fh.write("name," + ",".join(f"{w:g}" for w in wl) + "\n")
        for start in range(0, n, block):
            k = min(block, n - start)
            values = led_spectra(k, wl, seed=start)
            names = np.array([f"luminaire {start + i:07d}" for i in range(k)])[:, None]
            body = np.char.mod("%.6g", values)
            rows = np.concatenate([names, body], axis=1)
            fh.write("\n".join(",".join(r) for r in rows.tolist()) + "\n")


def run_child(args: list[str]) -> tuple[float, float, int, str]:
    """Wall time [s], peak RSS [MiB], exit status and stderr of one child run."""
    env = dict(os.environ, PYTHONPATH=str(ROOT) + os.pathsep + os.environ.get("PYTHONPATH", ""))
    t0 = time.perf_counter()
    proc = subprocess.Popen([sys.executable, "-c", _RUNNER, *args], stderr=subprocess.PIPE, stdout=subprocess.DEVNULL,
                            env=env, text=True)
    err = proc.stderr.read()
    _, status, usage = os.wait4(proc.pid, 0)
    elapsed = time.perf_counter() - t0
    proc.returncode = os.waitstatus_to_exitcode(status)
    return elapsed, usage.ru_maxrss / 1024.0, proc.returncode, err


def main() -> None:
    if len(sys.argv) == 4 and sys.argv[1] == "--generate":
        write_wide_csv(Path(sys.argv[2]), int(sys.argv[3]))
        return
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--sizes", default="1000,10000,100000", help="comma-separated N (add 1000000 if time allows)")
    ap.add_argument("--chunk-size", type=int, default=4096)
    ap.add_argument("--no-rendering", action="store_true")
    ap.add_argument("--workers", default="1,default", help="comma-separated worker counts to run ('default' = min(2, CPUs))")
    ap.add_argument("--keep", action="store_true", help="keep the temporary folder")
    opts = ap.parse_args()
    sizes = [int(s) for s in opts.sizes.split(",") if s]
    tmp = Path(tempfile.mkdtemp(prefix="cctkit-bench-batch-"))
    extra = ["--no-rendering"] if opts.no_rendering else []
    rows = []
    print(f"cctkit batch, wide CSV, 81 wavelengths (380-780 nm at 5 nm), chunk size {opts.chunk_size}, "
          f"rendering {'off' if opts.no_rendering else 'on'}, {os.cpu_count()} CPUs")
    for n in sizes:
        src = tmp / f"wide_{n}.csv"
        t0 = time.perf_counter()
        # in a child of its own: a large parent would show in the RSS of every child it forks next
        subprocess.run([sys.executable, __file__, "--generate", str(src), str(n)], check=True)
        gen = time.perf_counter() - t0
        size_mb = src.stat().st_size / 2**20
        for workers in opts.workers.split(","):
            out = tmp / f"out_{n}_{workers}.csv"
            args = ["batch", str(src), "--output", str(out), "--overwrite", "--quiet", "--chunk-size", str(opts.chunk_size)]
            if workers != "default":
                args += ["--workers", workers]
            t, rss, rc, err = run_child(args + extra)
            if rc != 0:
                print(f"N={n} workers={workers}: failed ({rc}): {err.strip()}")
                continue
            rows.append((n, workers, size_mb, gen, t, n / t, rss, out.stat().st_size / 2**20))
            out.unlink()
        src.unlink()
    print(f"{'N':>9} {'workers':>8} {'input MiB':>10} {'wall s':>8} {'spectra/s':>10} {'peak RSS MiB':>13} {'output MiB':>11}")
    for n, w, mb, _gen, _t, rate, rss, omb in rows:
        print(f"{n:9d} {w:>8} {mb:10.1f} {t:8.2f} {rate:10.0f} {rss:13.0f} {omb:11.1f}")
    base = {w: next((r for r in rows if r[1] == w), None) for w in opts.workers.split(",")}
    print("\nscaling (rate relative to the smallest N, same workers; RSS growth):")
    for n, w, _, _, _t, rate, rss, _ in rows:
        b = base[w]
        print(f"  N={n:<9d} workers={w:<8} rate x{rate / b[5]:.2f}  RSS x{rss / b[6]:.2f}")
    pairs = {(r[0], r[1]): r for r in rows}
    for n in sizes:
        if (n, "1") in pairs and (n, "default") in pairs:
            print(f"  N={n}: default workers / one process = {pairs[(n, 'default')][5] / pairs[(n, '1')][5]:.2f}x")
    if opts.keep:
        print(f"kept {tmp}")
    else:
        os.rmdir(tmp)


if __name__ == "__main__":
    main()
