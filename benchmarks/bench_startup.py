"""Start-up: short commands end to end in fresh processes, beside plain Python and a bare numpy import.

Run:  .venv/bin/python benchmarks/bench_startup.py [--repeat 15]

Every case runs in a new process, the cases taking turns so that the machine's load falls on all of
them alike; the best (least disturbed) run of each is reported, and the median beside it.  The
table cache and the compiled modules are warmed once first, as any installed copy has them after
its first run.  Targets:
``cctkit cct --xy`` within 0.2 s and ``cctkit --help`` within 0.25 s on an idle machine; on a
loaded one compare the ratios to ``python -c 'import numpy'``, which every measuring command needs.
"""

from __future__ import annotations

import argparse
import os
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
TARGETS_S = {"cctkit --help": 0.25, "cctkit cct --xy 0.3127,0.3290": 0.2}


def _run(args: list[str], env: dict) -> tuple[float, float]:
    """Wall time and CPU time (user + system, from the kernel's accounting of the child) [s]."""
    t0 = time.perf_counter()
    proc = subprocess.Popen(args, env=env, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    _, status, usage = os.wait4(proc.pid, 0)
    wall = time.perf_counter() - t0
    proc.returncode = os.waitstatus_to_exitcode(status)
    if proc.returncode != 0:
        raise RuntimeError(f"{' '.join(args)} failed ({proc.returncode})")
    return wall, usage.ru_utime + usage.ru_stime


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeat", type=int, default=15)
    args = parser.parse_args(argv)
    py = sys.executable
    exe = str(Path(py).with_name("cctkit"))
    cctkit = [exe] if Path(exe).exists() else [py, "-m", "cctkit"]
    spectrum = str(ROOT / "spectra" / "northbeam-nb-3000-95.csv")
    with tempfile.TemporaryDirectory() as tmp:
        env = dict(os.environ, CCTKIT_CACHE_DIR=str(Path(tmp) / "cache"))
        env.pop("PYTHONDONTWRITEBYTECODE", None)  # an installed copy has its compiled modules
        cases = {
            "python -c pass": [py, "-c", "pass"],
            "python -c 'import numpy'": [py, "-c", "import numpy"],
            "cctkit --help": [*cctkit, "--help"],
            "cctkit cct --xy 0.3127,0.3290": [*cctkit, "cct", "--xy", "0.3127,0.3290"],
            "cctkit inspect (one file)": [*cctkit, "inspect", spectrum],
        }
        for argv_ in cases.values():  # warm the table cache, the compiled modules and the file system
            _run(argv_, env)
        times: dict[str, list[float]] = {k: [] for k in cases}
        cpu: dict[str, list[float]] = {k: [] for k in cases}
        for _ in range(args.repeat):
            for name, argv_ in cases.items():
                wall, used = _run(argv_, env)
                times[name].append(wall)
                cpu[name].append(used)
    numpy_best = min(times["python -c 'import numpy'"])
    numpy_cpu = min(cpu["python -c 'import numpy'"])
    load = os.getloadavg()
    print(
        f"start-up, best and median of {args.repeat} runs taking turns; load average "
        f"{load[0]:.2f} {load[1]:.2f} {load[2]:.2f} on {os.cpu_count()} CPUs"
    )
    print("(CPU = user + system time of the process: on a loaded machine closer to an idle machine's wall time)")
    print(
        f"{'command':<32} {'best [s]':>8} {'median [s]':>10} {'best/numpy':>10} {'best CPU [s]':>12} "
        f"{'CPU/numpy':>9} {'target [s]':>10}  met"
    )
    for name, ts in times.items():
        best = min(ts)
        target = TARGETS_S.get(name)
        met = "" if target is None else ("yes" if best <= target else "no")
        c = min(cpu[name])
        print(
            f"{name:<32} {best:>8.3f} {statistics.median(ts):>10.3f} {best / numpy_best:>10.2f} {c:>12.3f} "
            f"{c / numpy_cpu:>9.2f} {'' if target is None else f'{target:.2f}':>10}  {met}"
        )
    return 0


if __name__ == "__main__":
    sys.exit(main())
