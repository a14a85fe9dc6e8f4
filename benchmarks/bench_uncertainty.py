"""Monte Carlo uncertainty (cctkit.uncertainty) beside the plain analyse() rate, measured in one run.

Run: .venv/bin/python benchmarks/bench_uncertainty.py [--draws 10000] [--lot 100] [--lot-draws 2000]

1. ``analyse()`` of as many distinct spectra as the Monte Carlo run draws (every measure,
   colour rendering included): the plain rate.
2. One spectrum, ``--draws`` draws (fixed M) through every measure with every component of
   the lab model in ``spectra/models/harbourside-lab-spectro.toml``; target <= 2 s.
3. A lot of ``--lot`` spectra x ``--lot-draws`` draws each; target <= 30 s.

Spectra are the benchmarks' synthetic white LEDs measured at 5 nm over 380-780 nm
(so the draws go through the Sprague resampling as measured data do).  Not run by CI.
"""

from __future__ import annotations

import argparse
import time
from pathlib import Path

import numpy as np
from _synthetic import led_spectra  # benchmarks/ is on sys.path when this file runs as a script

from cctkit.analysis import analyse
from cctkit.spectra import Quantity, Spectra
from cctkit.uncertainty import load_model, monte_carlo

ROOT = Path(__file__).resolve().parents[1]


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--draws", type=int, default=10_000)
    ap.add_argument("--lot", type=int, default=100)
    ap.add_argument("--lot-draws", type=int, default=2000)
    args = ap.parse_args()
    wl = np.arange(380.0, 781.0, 5.0)
    model = load_model(ROOT / "spectra" / "models" / "harbourside-lab-spectro.toml")

    def spectra(n: int, seed: int = 7) -> Spectra:
        return Spectra(
            wavelength_nm=wl,
            values=led_spectra(n, wl, seed=seed),
            names=tuple(f"s{i}" for i in range(n)),
            quantity=Quantity.RADIANT_FLUX,
        )

    warm = spectra(50)
    analyse(warm)
    monte_carlo(warm.select(0), model.replace_draws(200))

    many = spectra(args.draws, seed=8)
    t0, c0 = time.perf_counter(), time.process_time()
    analyse(many)
    t_plain, c_plain = time.perf_counter() - t0, time.process_time() - c0
    print(
        f"analyse(), {args.draws} distinct spectra, every measure: {t_plain:.2f} s wall, {c_plain:.2f} s CPU "
        f"({args.draws / t_plain:,.0f} spectra/s)"
    )

    one = spectra(1, seed=9)
    t0, c0 = time.perf_counter(), time.process_time()
    r = monte_carlo(one, model.replace_draws(args.draws))
    t_one, c_one = time.perf_counter() - t0, time.process_time() - c0
    e = r.spectra[0].estimates
    print(
        f"Monte Carlo, 1 spectrum x {args.draws} draws, every measure: {t_one:.2f} s wall, {c_one:.2f} s CPU "
        "(target <= 2 s); "
        f"{t_one / t_plain:.2f} x the plain analyse() time of as many spectra; "
        f"CCT {e['cct_K'].value:.0f} K, u {e['cct_K'].u:.1f} K (GUM {e['cct_K'].u_gum:.1f} K)"
    )

    lot = spectra(args.lot, seed=10)
    done = [0]

    def progress(i, n, m):
        done[0] = i

    t0, c0 = time.perf_counter(), time.process_time()
    monte_carlo(lot, model.replace_draws(args.lot_draws), progress=progress)
    t_lot, c_lot = time.perf_counter() - t0, time.process_time() - c0
    total = args.lot * args.lot_draws
    print(
        f"Monte Carlo, {args.lot} spectra x {args.lot_draws} draws ({total:,} analyses): {t_lot:.2f} s wall, "
        f"{c_lot:.2f} s CPU "
        f"(target <= 30 s); {total / t_lot:,.0f} draws/s against the plain {args.draws / t_plain:,.0f} spectra/s"
    )


if __name__ == "__main__":
    main()
