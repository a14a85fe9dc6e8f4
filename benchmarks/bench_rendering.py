"""Colour rendering throughput: cctkit (vectorised) against colour-science (one spectrum per call).

Both sides compute CCT, CIE 13.3 Ra/R1-R14 and CIE 224 Rf with the TM-30 gamut and
hue-bin measures for the same synthetic white-LED spectra, in one run, side by side.
cctkit runs all N spectra in chunks; colour-science runs a subset (each call costs
tens of milliseconds) and its time is extrapolated per spectrum.

Each side is timed best-of ``--repeat`` runs, alternating, because the machine is shared.

Run:  .venv/bin/python benchmarks/bench_rendering.py [--n 10000] [--lib-n 30] [--chunk 2000] [--repeat 3]
"""

from __future__ import annotations

import argparse
import time
import warnings

import numpy as np

from cctkit.constants import WAVELENGTH_NM


def synthetic_leds(n: int, seed: int = 2024) -> np.ndarray:
    """N distinct phosphor-converted white LED spectra (blue Gaussian + two phosphor bands)."""
    rng = np.random.default_rng(seed)
    wl = WAVELENGTH_NM[None, :]

    def g(centre, fwhm):
        return np.exp(-4.0 * np.log(2.0) * ((wl - centre[:, None]) / fwhm[:, None]) ** 2)

    blue = g(rng.uniform(440, 460, n), rng.uniform(16, 26, n))
    green = g(rng.uniform(535, 565, n), rng.uniform(90, 120, n)) * rng.uniform(0.4, 0.9, n)[:, None]
    red = g(rng.uniform(610, 650, n), rng.uniform(40, 90, n)) * rng.uniform(0.1, 0.8, n)[:, None]
    return blue + green + red


def run_cctkit(values: np.ndarray, chunk: int) -> tuple[float, dict]:
    from cctkit.cct import cct_duv
    from cctkit.colorimetry import XYZ, XYZ_to_uv
    from cctkit.rendering import cie13_3, tm30

    # warm-up: tables and locus caches, outside the timed region
    T0 = cct_duv(XYZ_to_uv(XYZ(values[:4]))).cct_K
    cie13_3(values[:4], T0), tm30(values[:4], T0)

    t0 = time.perf_counter()
    Ra, Rf, Rg = [], [], []
    for i in range(0, values.shape[0], chunk):
        v = values[i : i + chunk]
        T = cct_duv(XYZ_to_uv(XYZ(v))).cct_K
        cri = cie13_3(v, T)
        t30 = tm30(v, T)
        Ra.append(cri.Ra), Rf.append(t30.Rf), Rg.append(t30.Rg)
    dt = time.perf_counter() - t0
    return dt, {"Ra": np.concatenate(Ra), "Rf": np.concatenate(Rf), "Rg": np.concatenate(Rg)}


def run_colour(values: np.ndarray) -> tuple[float, dict]:
    import colour

    band = (WAVELENGTH_NM >= 380) & (WAVELENGTH_NM <= 780)
    sds = [colour.SpectralDistribution(v, WAVELENGTH_NM) for v in values]
    sds_band = [colour.SpectralDistribution(v[band], WAVELENGTH_NM[band]) for v in values]
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        colour.colour_rendering_index(sds[0]), colour.colour_fidelity_index(sds_band[0], method="ANSI/IES TM-30-18")
        t0 = time.perf_counter()
        Ra, Rf, Rg = [], [], []
        for sd, sdb in zip(sds, sds_band):
            Ra.append(colour.colour_rendering_index(sd))
            spec = colour.colour_fidelity_index(sdb, additional_data=True, method="ANSI/IES TM-30-18")
            Rf.append(spec.R_f), Rg.append(spec.R_g)
        dt = time.perf_counter() - t0
    return dt, {"Ra": np.array(Ra), "Rf": np.array(Rf), "Rg": np.array(Rg)}


def main() -> None:
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--n", type=int, default=10_000, help="spectra through cctkit")
    p.add_argument("--lib-n", type=int, default=30, help="spectra through colour-science")
    p.add_argument("--chunk", type=int, default=2000, help="cctkit chunk size (bounds memory)")
    p.add_argument("--repeat", type=int, default=3, help="best of this many alternating runs of each side")
    a = p.parse_args()

    values = synthetic_leds(a.n)
    t_ours = t_lib = np.inf
    for _ in range(a.repeat):  # alternate the two sides so machine noise hits both alike
        dt, ours = run_cctkit(values, a.chunk)
        t_ours = min(t_ours, dt)
        dt, lib = run_colour(values[: a.lib_n])
        t_lib = min(t_lib, dt)

    ours_rate = a.n / t_ours
    lib_rate = a.lib_n / t_lib
    print(f"spectra: {a.n} distinct synthetic white LEDs")
    print(
        f"cctkit        CCT + CIE 13.3 + CIE 224/TM-30: {a.n:6d} spectra in {t_ours:7.3f} s "
        f"= {ours_rate:10.0f} spectra/s (chunks of {a.chunk})"
    )
    print(
        f"colour-science CRI + TM-30-18 per spectrum   : {a.lib_n:6d} spectra in {t_lib:7.3f} s "
        f"= {lib_rate:10.1f} spectra/s"
    )
    print(f"ratio (per-spectrum throughput, extrapolated): {ours_rate / lib_rate:8.0f} x")
    k = a.lib_n
    print(
        "agreement on the common subset, max |diff|: "
        f"Ra {np.max(np.abs(ours['Ra'][:k] - lib['Ra'])):.4f}, "
        f"Rf {np.max(np.abs(ours['Rf'][:k] - lib['Rf'])):.4f}, "
        f"Rg {np.max(np.abs(ours['Rg'][:k] - lib['Rg'])):.4f}"
    )
    print(
        f"ranges over all {a.n}: Ra {ours['Ra'].min():.1f}-{ours['Ra'].max():.1f}, "
        f"Rf {ours['Rf'].min():.1f}-{ours['Rf'].max():.1f}, Rg {ours['Rg'].min():.1f}-{ours['Rg'].max():.1f}"
    )


if __name__ == "__main__":
    main()
