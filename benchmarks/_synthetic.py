"""Synthetic white-LED spectra shared by the benchmarks (our own two-band model, not measured data)."""

from __future__ import annotations

import numpy as np


def led_spectra(n: int, wavelength_nm: np.ndarray, seed: int = 7) -> np.ndarray:
    """n distinct phosphor-converted white LEDs [W/nm], shape (n, len(wavelength_nm)).

    Each is a blue Gaussian (peak 438-465 nm, sigma 8-12 nm) plus a broad phosphor band
    (peak 540-615 nm, sigma 45-70 nm, 0.35-1.8 times the blue), and for some a narrow
    red phosphor at 631 nm; all parameters drawn from ``numpy.random.default_rng(seed)``.
    """
    rng = np.random.default_rng(seed)
    blue = rng.uniform(438.0, 465.0, (n, 1))
    blue_w = rng.uniform(8.0, 12.0, (n, 1))
    ratio = rng.uniform(0.35, 1.8, (n, 1))
    peak = rng.uniform(540.0, 615.0, (n, 1))
    width = rng.uniform(45.0, 70.0, (n, 1))
    red = rng.uniform(0.0, 0.4, (n, 1))  # some have a narrow red phosphor too
    wl = np.asarray(wavelength_nm, dtype=np.float64)[None, :]
    v = (
        np.exp(-0.5 * ((wl - blue) / blue_w) ** 2)
        + ratio * np.exp(-0.5 * ((wl - peak) / width) ** 2)
        + red * np.exp(-0.5 * ((wl - 631.0) / 6.0) ** 2)
    )
    return 0.01 * v
