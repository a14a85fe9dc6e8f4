"""Blending a five-channel fixture along a 48-point path: solver time against a brute-force search.

For the demo's HL-Wash5 channels (spectra/hl-wash5/) and the path 1800-6500 K in 100 K
steps on the Planckian locus at constant output, in one run:

* efficacy (linear programs, HiGHS), then melanopic maximum, timed best of ``--repeat``;
* fidelity (maximum Rf with Rg 95-110: candidate search + SLSQP), timed best of ``--repeat``;
* beside each, a brute-force search of the same set points (two drives on a grid, the other
  three solved exactly, every feasible blend scored: the linear objective for efficacy, Rf and
  Rg through the rendering measures for fidelity), with the objective it reaches.

Targets (issue 14): efficacy path <= 1 s, 48-point fidelity path <= 10 s.  The machine is
shared and noisy: the load average is printed with the figures.

Run:  .venv/bin/python benchmarks/bench_blend.py [--repeat 2] [--grid 41]
"""

from __future__ import annotations

import argparse
import os
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
CHANNELS = ROOT / "spectra" / "hl-wash5" / "hl-wash5-channels.csv"
POWER = ROOT / "spectra" / "hl-wash5" / "hl-wash5-power.csv"


def best_of(repeat: int, fn):
    times, out = [], None
    for _ in range(repeat):
        t0 = time.perf_counter()
        out = fn()
        times.append(time.perf_counter() - t0)
    return min(times), out


def brute_force(channels, path, n: int, *, fidelity: bool, rg=(95.0, 110.0)):
    """Best blend of each reached set point over an n x n grid of the first two drives."""
    from cctkit.blend import _direction
    from cctkit.rendering import tm30

    M = channels.XYZ.T
    levels = np.linspace(0.0, 1.0, n)
    G = np.stack(np.meshgrid(levels, levels, indexing="ij"), axis=-1).reshape(-1, 2)
    cost = channels.power_W
    out = np.full(len(path.status), np.nan)
    for i in np.flatnonzero(path.ok):
        target = path.luminous_target[i] * _direction(path.target_uv[i])
        rest = np.linalg.solve(M[:, 2:], target[:, None] - M[:, :2] @ G.T).T
        ok = np.all((rest >= 0) & (rest <= 1), axis=1)
        D = np.hstack([G, rest])[ok]
        if not len(D):
            continue
        if fidelity:
            r = tm30(D @ channels.values, np.full(len(D), path.target_cct_K[i]))
            keep = (r.Rg >= rg[0]) & (r.Rg <= rg[1])
            if keep.any():
                out[i] = float(np.max(r.Rf[keep]))
        else:
            out[i] = float(np.min(D @ cost))
    return out


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeat", type=int, default=2)
    parser.add_argument("--grid", type=int, default=41, help="grid points per drive of the brute-force search")
    args = parser.parse_args()

    from cctkit.blend import read_channels, solve_blend_path

    channels = read_channels([CHANNELS], power=POWER)
    T = np.arange(1800.0, 6501.0, 100.0)
    solve_blend_path(channels, T[:2], 0.0, objective="fidelity")  # warm-up: tables, imports
    load = os.getloadavg()[0] if hasattr(os, "getloadavg") else float("nan")
    print(
        f"HL-Wash5, {len(channels)} channels, {T.size} set points 1800-6500 K, Duv 0, flat output; "
        f"load average {load:.1f} on {os.cpu_count()} CPUs"
    )

    t_eff, eff = best_of(args.repeat, lambda: solve_blend_path(channels, T, 0.0, objective="efficacy"))
    t_mel, _ = best_of(args.repeat, lambda: solve_blend_path(channels, T, 0.0, objective="melanopic"))
    from threadpoolctl import threadpool_limits

    t0 = time.perf_counter()
    with threadpool_limits(limits=1, user_api="blas"):  # as the solver runs
        grid_cost = brute_force(channels, eff, args.grid, fidelity=False)
    t_grid = time.perf_counter() - t0
    lp_cost = eff.drives @ channels.power_W
    gap = np.nanmax((grid_cost - lp_cost) / lp_cost)
    print(
        f"efficacy path   {t_eff:6.2f} s ({t_eff / T.size * 1000:.1f} ms per set point; target <= 1 s); "
        f"melanopic path {t_mel:.2f} s"
    )
    print(
        f"  brute force {args.grid}x{args.grid} grid: {t_grid:.2f} s ({t_grid / t_eff:.1f}x the LP path); "
        f"its best power is {100 * gap:.3f} % above the LP optimum at worst (never below: "
        f"{bool(np.all(np.isnan(grid_cost) | (grid_cost >= lp_cost * (1 - 1e-9))))})"
    )

    t_fid, fid = best_of(
        args.repeat, lambda: solve_blend_path(channels, T, 0.0, objective="fidelity", rg=(95.0, 110.0))
    )
    t0 = time.perf_counter()
    with threadpool_limits(limits=1, user_api="blas"):
        grid_rf = brute_force(channels, fid, args.grid, fidelity=True)
    t_grid = time.perf_counter() - t0
    rf = fid.metrics["Rf"]
    step, at = fid.largest_step()
    print(
        f"fidelity path   {t_fid:6.2f} s ({t_fid / T.size * 1000:.0f} ms per set point; target <= 10 s); "
        f"{int(fid.ok.sum())}/{T.size} reached, Rf {np.nanmin(rf):.1f}-{np.nanmax(rf):.1f}, "
        f"largest drive step {step:.3f}"
    )
    diff = rf - grid_rf
    print(
        f"  brute force {args.grid}x{args.grid} grid through tm30: {t_grid:.2f} s ({t_grid / t_fid:.1f}x); "
        f"solver Rf minus grid-best Rf: min {np.nanmin(diff):+.2f}, median {np.nanmedian(diff):+.2f}, "
        f"max {np.nanmax(diff):+.2f}"
    )


if __name__ == "__main__":
    main()
