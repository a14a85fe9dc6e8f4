"""Shape of a spectrum: peak wavelength, centroid wavelength, full width at half maximum.

All measures work on the working grid (360-830 nm at 1 nm), shape (..., 471), vectorised
over the leading axes.  Values are taken as they are: no baseline is subtracted, so dark
noise or a broad pedestal under a peak is part of the maximum and of the half-maximum level.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from .constants import WAVELENGTH_NM
from .formats import finite_or_none as _num
from .photometry import grid_values

__all__ = ["ShapeMeasures", "spectral_shape", "peak_wavelength_nm", "centroid_wavelength_nm", "fwhm_nm"]

_STEP_NM = 1.0


def _peak(v: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Index of the highest sample, parabolic offset in samples (-0.5..0.5) and refined peak value."""
    n = v.shape[-1]
    i = np.argmax(v, axis=-1)
    y0 = np.take_along_axis(v, i[..., None], axis=-1)[..., 0]
    left = np.take_along_axis(v, np.clip(i - 1, 0, n - 1)[..., None], axis=-1)[..., 0]
    right = np.take_along_axis(v, np.clip(i + 1, 0, n - 1)[..., None], axis=-1)[..., 0]
    interior = (i > 0) & (i < n - 1)
    curvature = left - 2.0 * y0 + right
    usable = interior & (curvature < 0)
    with np.errstate(divide="ignore", invalid="ignore"):
        delta = np.where(usable, 0.5 * (left - right) / np.where(usable, curvature, -1.0), 0.0)
    delta = np.clip(delta, -0.5, 0.5)
    y_peak = y0 - 0.25 * (left - right) * delta
    return i, delta, y_peak


def peak_wavelength_nm(values: Any) -> np.ndarray:
    """Wavelength of the highest sample, refined by a parabola through it and its two neighbours [nm].

    The refinement is the vertex of the parabola through three 1 nm samples, limited to
    +-0.5 nm; at the ends of the grid, or when the three samples are not concave, the sample
    wavelength is returned.  NaN for a spectrum whose maximum is not positive.
    """
    v = grid_values(values)
    i, delta, _ = _peak(v)
    peak = WAVELENGTH_NM[i] + delta * _STEP_NM
    return np.where(v.max(axis=-1) > 0, peak, np.nan)


def centroid_wavelength_nm(values: Any) -> np.ndarray:
    """Power-weighted mean wavelength sum(lambda S) / sum(S) over 360-830 nm [nm]; NaN if sum(S) <= 0."""
    v = grid_values(values)
    total = v.sum(axis=-1)
    with np.errstate(divide="ignore", invalid="ignore"):
        c = (v @ WAVELENGTH_NM) / np.where(total > 0, total, 1.0)
    return np.where(total > 0, c, np.nan)


def fwhm_nm(values: Any) -> np.ndarray:
    """Full width at half maximum of the highest peak [nm].

    The half-maximum level is half the parabola-refined peak value (see
    :func:`peak_wavelength_nm`).  From the highest sample the spectrum is followed outwards
    on each side to the first sample below that level; the crossing is placed by linear
    interpolation between that sample and its inner neighbour.  NaN when either side never
    falls below half maximum inside 360-830 nm, or when the maximum is not positive.
    """
    v = grid_values(values)
    n = v.shape[-1]
    i, _, y_peak = _peak(v)
    half = 0.5 * y_peak
    below = v < half[..., None]
    idx = np.arange(n)
    # nearest sample below half maximum on each side of the peak (-1 / n when there is none)
    left_candidates = np.where(below & (idx < i[..., None]), idx, -1)
    lo = left_candidates.max(axis=-1)
    right_candidates = np.where(below & (idx > i[..., None]), idx, n)
    hi = right_candidates.min(axis=-1)
    found = (lo >= 0) & (hi < n) & (y_peak > 0)
    lo_c = np.clip(lo, 0, n - 2)
    hi_c = np.clip(hi, 1, n - 1)

    def crossing(outer: np.ndarray, inner: np.ndarray) -> np.ndarray:
        y_out = np.take_along_axis(v, outer[..., None], axis=-1)[..., 0]
        y_in = np.take_along_axis(v, inner[..., None], axis=-1)[..., 0]
        with np.errstate(divide="ignore", invalid="ignore"):
            f = (half - y_out) / (y_in - y_out)
        return WAVELENGTH_NM[outer] + f * (WAVELENGTH_NM[inner] - WAVELENGTH_NM[outer])

    left_nm = crossing(lo_c, lo_c + 1)
    right_nm = crossing(hi_c, hi_c - 1)
    return np.where(found, right_nm - left_nm, np.nan)


@dataclass(frozen=True)
class ShapeMeasures:
    """Peak, centroid and FWHM of N spectra [nm], arrays of shape (N,)."""

    peak_nm: np.ndarray
    centroid_nm: np.ndarray
    fwhm_nm: np.ndarray

    def record(self, i: int) -> dict[str, float | None]:
        return {
            "peak_nm": _num(self.peak_nm[i]),
            "centroid_nm": _num(self.centroid_nm[i]),
            "fwhm_nm": _num(self.fwhm_nm[i]),
        }

    def columns(self) -> dict[str, np.ndarray]:
        """The fields of :meth:`record` for every spectrum at once (NaN where a record has None)."""
        return {"peak_nm": self.peak_nm, "centroid_nm": self.centroid_nm, "fwhm_nm": self.fwhm_nm}


def spectral_shape(values: Any) -> ShapeMeasures:
    """Peak wavelength, centroid wavelength and FWHM of spectra on the working grid, (N, 471)."""
    v = np.atleast_2d(grid_values(values))
    return ShapeMeasures(peak_nm=peak_wavelength_nm(v), centroid_nm=centroid_wavelength_nm(v), fwhm_nm=fwhm_nm(v))
