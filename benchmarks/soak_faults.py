"""Soak test of ``cctkit batch`` under faults: what is lost is exactly what is reported lost.

Run: .venv/bin/python benchmarks/soak_faults.py [--spectra 1000000] [--chunk-size 4096] [--workers 2]
                                                [--kills 3] [--bad-rows 25] [--seed 1] [--no-rendering]

Not run by CI (hours at 10^6 spectra on a shared 2-core machine).  On this machine only:
every process is a child of this script, nothing listens on a network.

1. Writes a wide CSV of N synthetic white-LED spectra (our own two-band model), and a
   copy in which ``--bad-rows`` random rows are broken (a non-number, a missing cell, a
   NaN), recording which.
2. Reference: ``cctkit batch`` on the clean file, undisturbed.
3. Faulty run on the clean file, with ``--resume``:
   * attempt 1 under a file-size limit (``RLIMIT_FSIZE`` at a random fraction of the
     reference output: the disk "fills up") -> must end with one line naming the output,
     exit 2, the finished chunks kept;
   * attempt 2 with worker processes killed (SIGKILL) at random moments, ``--kills`` times,
     and then the batch process itself killed (SIGKILL) -> the workers must die with it;
   * attempt 3 continues to the end.
   The output must be byte-identical to the reference: nothing lost, nothing doubled.
4. Bad rows: ``cctkit batch`` on the broken copy.  With ``--skip-bad`` (when the command
   has it) the rows written must be exactly the good rows, identical to the reference's,
   and the rows reported as skipped exactly the broken ones; without it the run must
   refuse with one line naming the first broken row's line.

Prints the figures (spectra, chunks, faults injected, rows lost and reported lost, times).
"""

from __future__ import annotations

import argparse
import csv
import json
import os
import random
import signal
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
from _synthetic import led_spectra  # benchmarks/ is on sys.path when this file runs as a script

ROOT = Path(__file__).resolve().parents[1]


def write_inputs(folder: Path, n: int, bad: int, seed: int) -> tuple[Path, Path, dict[int, str]]:
    """The clean wide CSV, the broken copy and {file line number: how it was broken}."""
    wl = np.arange(380, 781, 5.0)
    rng = random.Random(seed)
    bad_rows = sorted(rng.sample(range(n), min(bad, n)))
    kinds = {}
    clean, broken = folder / "lot.csv", folder / "lot-broken.csv"
    block = 20000
    with open(clean, "w") as fc, open(broken, "w") as fb:
        head = "name," + ",".join(f"{w:g}" for w in wl) + "\n"
        fc.write(head)
        fb.write(head)
        bad_set = set(bad_rows)
        for start in range(0, n, block):
            values = led_spectra(min(block, n - start), wl, seed=seed + start)
            for k, row in enumerate(values):
                i = start + k
                line = f"unit-{i:07d}," + ",".join(f"{v:.6g}" for v in row) + "\n"
                fc.write(line)
                if i in bad_set:
                    cells = line.rstrip("\n").split(",")
                    kind = ("text", "missing", "nan")[i % 3]
                    j = 1 + rng.randrange(len(cells) - 1)
                    cells[j] = {"text": "n/a!", "missing": "", "nan": "NaN"}[kind]
                    kinds[i + 2] = kind  # line 1 is the header
                    line = ",".join(cells) + "\n"
                fb.write(line)
    return clean, broken, kinds


def batch(args: list, *, cwd: Path, fsize: int | None = None, env=None) -> subprocess.Popen:
    def limit():
        if fsize is not None:
            import resource

            signal.signal(signal.SIGXFSZ, signal.SIG_IGN)
            resource.setrlimit(resource.RLIMIT_FSIZE, (fsize, fsize))

    return subprocess.Popen([sys.executable, "-m", "cctkit", "batch", *map(str, args)], cwd=cwd,
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, preexec_fn=limit,
                            env=env or os.environ.copy())


def children(pid: int) -> list[int]:
    out = subprocess.run(["pgrep", "-P", str(pid)], capture_output=True, text=True).stdout
    return [int(x) for x in out.split()]


def alive(pid: int) -> bool:
    try:
        with open(f"/proc/{pid}/status") as fh:
            return not any(line.startswith("State:") and "Z" in line for line in fh)
    except FileNotFoundError:
        return False


def journal_chunks(path: Path) -> int:
    try:
        return json.loads(path.read_text())["chunks"]
    except (OSError, ValueError, KeyError):
        return 0


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--spectra", type=int, default=1_000_000)
    ap.add_argument("--chunk-size", type=int, default=4096)
    ap.add_argument("--workers", type=int, default=2)
    ap.add_argument("--kills", type=int, default=3)
    ap.add_argument("--bad-rows", type=int, default=25)
    ap.add_argument("--seed", type=int, default=1)
    ap.add_argument("--no-rendering", action="store_true")
    ap.add_argument("--keep", action="store_true", help="keep the temporary folder")
    a = ap.parse_args()
    rng = random.Random(a.seed)
    folder = Path(tempfile.mkdtemp(prefix="cctkit-soak-"))
    common = ["--chunk-size", a.chunk_size, "--workers", a.workers, "--quiet"]
    if a.no_rendering:
        common.append("--no-rendering")
    t0 = time.perf_counter()
    clean, broken, kinds = write_inputs(folder, a.spectra, a.bad_rows, a.seed)
    print(f"inputs: {a.spectra:,} spectra, {len(kinds)} broken rows, {time.perf_counter() - t0:.0f} s")
    failures = []

    # 2. the reference
    t = time.perf_counter()
    ref = folder / "reference.csv"
    p = batch([clean, "-o", ref, *common], cwd=folder)
    _, err = p.communicate()
    assert p.returncode == 0, err
    t_ref = time.perf_counter() - t
    print(f"reference: {t_ref:.0f} s ({a.spectra / t_ref:,.0f} spectra/s), {ref.stat().st_size:,} bytes")

    # 3. the faulty run
    out = folder / "faulty.csv"
    journal = folder / "faulty.csv.partial.json"
    t = time.perf_counter()
    fsize = int(ref.stat().st_size * rng.uniform(0.1, 0.4))
    p = batch([clean, "-o", out, "--resume", *common], cwd=folder, fsize=fsize)
    _, err = p.communicate()
    lines = [x for x in err.splitlines() if x.strip()]
    full_disk_ok = p.returncode == 2 and len(lines) == 1 and str(out) in lines[0]
    print(f"full disk at {fsize:,} bytes: exit {p.returncode}, {lines[-1] if lines else ''!r}, "
          f"{journal_chunks(journal)} chunks kept")
    if not full_disk_ok:
        failures.append("full disk: not one line naming the output with exit 2")

    p = batch([clean, "-o", out, "--resume", *common], cwd=folder)
    killed_workers = 0
    orphans = 0
    while killed_workers < a.kills and p.poll() is None:
        time.sleep(rng.uniform(1.0, 4.0))
        kids = children(p.pid)
        if kids:
            os.kill(rng.choice(kids), signal.SIGKILL)
            killed_workers += 1
    time.sleep(rng.uniform(1.0, 3.0))
    if p.poll() is None:
        kids = children(p.pid)
        p.kill()
        p.wait()
        time.sleep(2.0)
        orphans = sum(alive(k) for k in kids)
        print(f"killed {killed_workers} workers, then the batch process at {journal_chunks(journal)} chunks; "
              f"workers left running: {orphans}")
    else:
        p.communicate()
        print(f"killed {killed_workers} workers; the run finished before the batch process could be killed")
    if orphans:
        failures.append(f"{orphans} workers outlived the batch process")
    if not out.exists():
        p = batch([clean, "-o", out, "--resume", *common], cwd=folder)
        _, err = p.communicate()
        assert p.returncode == 0, err
    t_faulty = time.perf_counter() - t
    identical = out.read_bytes() == ref.read_bytes()
    print(f"faulty run: {t_faulty:.0f} s over three attempts; output identical to the reference: {identical}")
    if not identical:
        failures.append("the resumed output differs from the reference")
    leftovers = sorted(x.name for x in folder.iterdir() if ".tmp" in x.name or ".partial" in x.name)
    if leftovers:
        failures.append(f"left behind: {leftovers}")

    # 4. bad rows
    help_text = subprocess.run([sys.executable, "-m", "cctkit", "batch", "--help"], capture_output=True,
                               text=True).stdout
    bad_out = folder / "broken.csv"
    if "--skip-bad" in help_text:
        p = batch([broken, "-o", bad_out, "--skip-bad", *common], cwd=folder)
        _, err = p.communicate()
        with open(bad_out, newline="") as fh:
            got = {row["name"]: row for row in csv.DictReader(fh)}
        with open(ref, newline="") as fh:
            want = {row["name"]: row for row in csv.DictReader(fh)
                    if int(row["name"].split("-")[1]) + 2 not in kinds}
        lost = len(want) - len(set(want) & set(got))
        same = all(got.get(k, {}).get("cct_K") == v["cct_K"] for k, v in want.items())
        errors = sorted(folder.glob("broken*err*")) + sorted(folder.glob("*.errors*"))
        print(f"bad rows: exit {p.returncode}; {len(kinds)} broken, {len(got)} rows written of "
              f"{a.spectra - len(kinds)} good; good rows lost: {lost}; good rows' numbers as the reference's: "
              f"{same}; errors file(s): {[e.name for e in errors]}; stderr: {err.strip().splitlines()[-1:]}")
        if lost or not same:
            failures.append("good rows lost or changed by bad rows")
    else:
        p = batch([broken, "-o", bad_out, *common], cwd=folder)
        _, err = p.communicate()
        first = min(kinds)
        lines = [x for x in err.splitlines() if x.strip()]
        ok = p.returncode == 2 and len(lines) == 1 and f":{first}:" in lines[0] and not bad_out.exists()
        print(f"bad rows (no --skip-bad in this version): exit {p.returncode}, {lines[-1] if lines else ''!r}; "
              f"names line {first}: {ok}")
        if not ok:
            failures.append("a bad row was not refused in one line naming its line")

    print("RESULT:", "PASS" if not failures else "FAIL: " + "; ".join(failures))
    if not a.keep:
        for x in folder.iterdir():
            x.unlink()
        folder.rmdir()
    else:
        print(f"kept {folder}")
    return 0 if not failures else 1


if __name__ == "__main__":
    sys.exit(main())
