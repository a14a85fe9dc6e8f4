"""CCT/Duv throughput and accuracy: cctkit.cct_duv against colour-science, side by side, one run.

Run: .venv/bin/python benchmarks/bench_cct.py [N]
Prints points/s of each solver (cctkit on all N points, colour-science on the first
20,000 of them: it is slow) and the max error against the exact construction (points
placed at known (CCT, Duv) with the exact forward model); cctkit's exact solver beside
its numpy floor (``_cct_floor.py``: the same arithmetic with nothing else), timed taking
turns, best of 15, wall and CPU; then the error of our Ohno 2013 over 1000-20000 K, the
range its docstring quotes.
"""

from __future__ import annotations

import os
import sys
import time

import numpy as np


def best_of(fn, repeat=5):
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        out = fn()
        times.append(time.perf_counter() - t0)
    return min(times), out


def _cpu(fn) -> float:
    c0 = time.process_time()
    fn()
    return time.process_time() - c0


def main(n: int = 100_000) -> None:
    import colour
    from colour.temperature import uv_to_CCT_Ohno2013, uv_to_CCT_Robertson1968

    from cctkit.cct import cct_duv
    from cctkit.locus import uv_from_cct_duv

    rng = np.random.default_rng(1)
    T = np.exp(rng.uniform(np.log(1000), np.log(25000), n))
    D = rng.uniform(-0.05, 0.05, n)
    uv = uv_from_cct_duv(T, D)
    cmfs = colour.MSDS_CMFS["CIE 1931 2 Degree Standard Observer"]
    cct_duv(uv[:10])  # build the table once, outside the timing
    uv_to_CCT_Ohno2013(uv[:10], cmfs)

    sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
    from _cct_floor import floor_cct_duv

    floor_cct_duv(uv[:10])
    wall = {"cctkit": [], "floor": []}
    cpus = {"cctkit": [], "floor": []}
    for _ in range(15):  # taking turns, so both see the same machine
        for name, fn in (("cctkit", lambda: cct_duv(uv)), ("floor", lambda: floor_cct_duv(uv))):
            c0, t0 = time.process_time(), time.perf_counter()
            fn()
            wall[name].append(time.perf_counter() - t0)
            cpus[name].append(time.process_time() - c0)
    exact = cct_duv(uv)
    fc, fd, good = floor_cct_duv(uv)
    missed = n - int(good.sum())
    t_exact, cpu = min(wall["cctkit"]), min(cpus["cctkit"])
    t_floor, cpu_floor = min(wall["floor"]), min(cpus["floor"])

    rows = []
    t = t_exact
    rows.append(("cctkit exact", n, t, np.nanmax(np.abs(exact.cct_K - T)), np.nanmax(np.abs(exact.duv - D))))
    t, r = best_of(lambda: cct_duv(uv, method="ohno2013"), repeat=2)
    rows.append(("cctkit ohno2013", n, t, np.nanmax(np.abs(r.cct_K - T)), np.nanmax(np.abs(r.duv - D))))
    m = min(n, 20_000)
    t, ref = best_of(lambda: uv_to_CCT_Ohno2013(uv[:m], cmfs), repeat=1)
    rows.append(
        ("colour-science Ohno 2013", m, t, np.nanmax(np.abs(ref[:, 0] - T[:m])), np.nanmax(np.abs(ref[:, 1] - D[:m])))
    )
    t, ref = best_of(lambda: uv_to_CCT_Robertson1968(uv[:m]), repeat=1)
    rows.append(
        (
            "colour-science Robertson 1968",
            m,
            t,
            np.nanmax(np.abs(ref[:, 0] - T[:m])),
            np.nanmax(np.abs(ref[:, 1] - D[:m])),
        )
    )

    base = rows[0][1] / rows[0][2]
    print(f"CCT/Duv on {n} points, 1000-25000 K, |Duv| <= 0.05 (best of repeated runs)")
    print(f"{'solver':32} {'points':>8} {'points/s':>12} {'cctkit ×':>9} {'max |dT| K':>12} {'max |dDuv|':>11}")
    for name, k, t, eT, eD in rows:
        rate = k / t
        print(f"{name:32} {k:8d} {rate:12.4g} {base / rate:9.1f} {eT:12.3g} {eD:11.2g}")
    print(
        f"cctkit exact: {n / t_exact / 1e6:.2f} M points/s wall, {n / cpu / 1e6:.2f} M points/s of CPU time (best of 15; "
        f"goal 5 M/s on an idle machine; load average {os.getloadavg()[0]:.1f} on {os.cpu_count()} CPUs)"
    )
    print(
        f"numpy floor of the same arithmetic (_cct_floor.py): {n / t_floor / 1e6:.2f} M points/s wall, "
        f"{n / cpu_floor / 1e6:.2f} M/s CPU; cctkit at {t_floor / t_exact:.2f} of the floor's rate (wall), "
        f"{cpu_floor / cpu:.2f} (CPU); the floor left {missed} points' guessed node unverified (cctkit searches them); "
        f"where it did not, CCT {'bit-identical' if fc[good].tobytes() == exact.cct_K[good].tobytes() else 'DIFFERENT'}, "
        f"Duv within {np.max(np.abs(fd[good] - exact.duv[good])):.2g}"
    )
    ohno = cct_duv(uv, method="ohno2013").cct_K
    sel = T <= 20000
    err = np.abs(ohno[sel] - T[sel])
    print(
        f"cctkit ohno2013 over 1000-20000 K: max |dT| {np.nanmax(err):.3g} K, "
        f"max relative {np.nanmax(err / T[sel]):.2g}"
    )


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 100_000)
