"""Dominant wavelength and FWHM: the sorted search / boolean-mask forms against the exhaustive forms, one run.

Run: .venv/bin/python benchmarks/bench_shape_dominant.py [N]
Prints, for N chromaticities (dominant wavelength, white E) and N synthetic spectra (FWHM),
the time of the exhaustive form kept here (every sample against all 471 boundary segments;
FWHM by integer ``np.where`` candidates and min/max) and of the library's form, their ratio,
and whether the results are identical bit for bit.

The exhaustive forms live here only, for this comparison; ``tests/test_dominant.py`` and
``tests/test_shape.py`` load them from this file to hold the library's results equal to them.
"""

from __future__ import annotations

import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent))


def exhaustive_hits(S: np.ndarray, W: np.ndarray, locus: np.ndarray):
    """Crossings of each sample's line through its white with every boundary segment (the former library form)."""

    def cross(ax, ay, bx, by):
        return ax * by - ay * bx

    A = np.vstack([locus[:-1], locus[-1:]])
    B = np.vstack([locus[1:], locus[:1]])
    ex, ey = (B - A)[:, 0], (B - A)[:, 1]
    dx = (S[:, 0] - W[:, 0])[:, None]
    dy = (S[:, 1] - W[:, 1])[:, None]
    rx = A[None, :, 0] - W[:, 0][:, None]
    ry = A[None, :, 1] - W[:, 1][:, None]
    den = cross(dx, dy, ex[None, :], ey[None, :])
    ok = np.abs(den) > 1e-12
    safe = np.where(ok, den, 1.0)
    t = cross(rx, ry, ex[None, :], ey[None, :]) / safe
    s = cross(rx, ry, dx, dy) / safe
    on_segment = ok & (s >= -1e-9) & (s <= 1.0 + 1e-9)
    n_seg = A.shape[0]
    purple = np.arange(n_seg) == n_seg - 1
    fwd_t = np.where(on_segment & (t > 0), t, np.inf)
    j_fwd = np.argmin(fwd_t, axis=1)
    t_fwd = fwd_t[np.arange(len(S)), j_fwd]
    back_t = np.where(on_segment & (t < 0) & ~purple[None, :], t, -np.inf)
    back_any = np.where(on_segment & (t < 0), t, -np.inf)
    j_back = np.argmax(back_t, axis=1)
    t_back = back_t[np.arange(len(S)), j_back]
    back_is_spectral = np.isfinite(t_back) & (t_back >= back_any.max(axis=1) - 1e-12)
    rows = np.arange(len(S))
    s_fwd = np.clip(s[rows, j_fwd], 0.0, 1.0)
    s_back = np.clip(s[rows, j_back], 0.0, 1.0)
    return t_fwd, j_fwd, s_fwd, t_back, j_back, s_back, back_is_spectral, n_seg - 1


def exhaustive_dominant(xy, white_xy=(1 / 3, 1 / 3), observer: int = 2, chunk: int = 2048):
    """(dominant, complementary, purity, is_purple, boundary_xy) by :func:`exhaustive_hits`."""
    from cctkit.dominant import block_from_hits, spectral_locus_xy

    S = np.asarray(xy, dtype=np.float64).reshape(-1, 2)
    W = np.broadcast_to(np.asarray(white_xy, dtype=np.float64), S.shape)
    locus = spectral_locus_xy(observer)
    n = S.shape[0]
    dom, comp, purity = np.full(n, np.nan), np.full(n, np.nan), np.full(n, np.nan)
    purple, boundary = np.zeros(n, dtype=bool), np.full((n, 2), np.nan)
    for start in range(0, n, chunk):
        sl = slice(start, start + chunk)
        dom[sl], comp[sl], purity[sl], purple[sl], boundary[sl] = block_from_hits(
            S[sl], W[sl], lambda s_xy, w_xy: exhaustive_hits(s_xy, w_xy, locus)
        )
    return dom, comp, purity, purple, boundary


def exhaustive_fwhm(v: np.ndarray) -> np.ndarray:
    """FWHM [nm] of (N, 471) spectra by integer candidates and min/max (the former library form)."""
    from cctkit.constants import WAVELENGTH_NM
    from cctkit.shape import _peak

    n = v.shape[-1]
    i, _, y_peak = _peak(v)
    half = 0.5 * y_peak
    below = v < half[..., None]
    idx = np.arange(n)
    lo = np.where(below & (idx < i[..., None]), idx, -1).max(axis=-1)
    hi = np.where(below & (idx > i[..., None]), idx, n).min(axis=-1)
    found = (lo >= 0) & (hi < n) & (y_peak > 0)
    lo_c, hi_c = np.clip(lo, 0, n - 2), np.clip(hi, 1, n - 1)

    def crossing(outer, inner):
        y_out = np.take_along_axis(v, outer[..., None], axis=-1)[..., 0]
        y_in = np.take_along_axis(v, inner[..., None], axis=-1)[..., 0]
        with np.errstate(divide="ignore", invalid="ignore"):
            f = (half - y_out) / (y_in - y_out)
        return WAVELENGTH_NM[outer] + f * (WAVELENGTH_NM[inner] - WAVELENGTH_NM[outer])

    return np.where(found, crossing(hi_c, hi_c - 1) - crossing(lo_c, lo_c + 1), np.nan)


def points_inside_locus(n: int, seed: int = 7) -> np.ndarray:
    """Chromaticities drawn uniformly inside the 2 deg spectral locus (and the purple line)."""
    from matplotlib.path import Path as MplPath

    from cctkit.dominant import spectral_locus_xy

    rng = np.random.default_rng(seed)
    xy = np.column_stack([rng.uniform(0.0, 0.75, 3 * n), rng.uniform(0.0, 0.85, 3 * n)])
    return xy[MplPath(spectral_locus_xy()).contains_points(xy)][:n]


def best_of(fn, repeat=3):
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        out = fn()
        times.append(time.perf_counter() - t0)
    return min(times), out


def same(a, b) -> bool:
    return all(np.array_equal(x, y, equal_nan=True) for x, y in zip(a, b))


def main(n: int = 200_000) -> None:
    from _synthetic import led_spectra

    from cctkit.constants import WAVELENGTH_NM
    from cctkit.dominant import dominant_wavelength
    from cctkit.shape import _fwhm, _measures, _peak, _range_index

    def library_fwhm(v):  # the same scope as exhaustive_fwhm: peak, then the crossings
        i, _, y = _peak(v)
        return _fwhm(v, i, y, *_range_index(None, v.shape[0]))[0]

    xy = points_inside_locus(n)
    dominant_wavelength(xy[:10])  # build the locus and its angular index outside the timing
    t_old, old = best_of(lambda: exhaustive_dominant(xy))
    t_new, r = best_of(lambda: dominant_wavelength(xy))
    new = (r.dominant_wavelength_nm, r.complementary_wavelength_nm, r.purity, r.is_purple, r.boundary_xy)
    v = led_spectra(n // 4, WAVELENGTH_NM)
    t_fold, f_old = best_of(lambda: exhaustive_fwhm(v))
    t_fnew, f_core = best_of(lambda: library_fwhm(v))
    t_shape, f_new = best_of(lambda: _measures(v)[1])
    defined = np.isfinite(f_new)
    print(f"{'measure':34} {'N':>8} {'exhaustive s':>13} {'library s':>10} {'ratio':>7}  identical")
    print(
        f"{'dominant wavelength + purity (E)':34} {xy.shape[0]:8d} {t_old:13.3f} {t_new:10.3f} {t_old / t_new:7.1f}  "
        f"{same(old, new)}"
    )
    print(
        f"{'FWHM (LED spectra, 471 nm grid)':34} {v.shape[0]:8d} {t_fold:13.3f} {t_fnew:10.3f} {t_fold / t_fnew:7.1f}  "
        f"{np.array_equal(f_old[defined], f_new[defined]) and np.array_equal(f_old, f_core, equal_nan=True)} "
        f"(where defined: {int(defined.sum())} of {v.shape[0]})"
    )
    print(f"{'  + peak/flat/edge rules (_measures)':34} {v.shape[0]:8d} {'':13} {t_shape:10.3f}")


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 200_000)
