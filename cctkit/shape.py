"""Shape of a spectrum: peak wavelength, centroid wavelength, full width at half maximum.

All measures work on the working grid (360-830 nm at 1 nm), shape (..., 471), vectorised
over the leading axes.  Values are taken as they are: no baseline is subtracted, so dark
noise or a broad pedestal under a peak is part of the maximum and of the half-maximum level.

Where the measures have no meaning they are withheld (NaN / null) with a reason, judged
inside the measured range (``measured_range_nm``, clipped to 360-830 nm; the whole grid when
it is not given) -- our conventions, no source:

* **peak at the edge** (:data:`PEAK_AT_EDGE`): the highest value lies on the first or last
  whole nanometre of the measured range, so the true peak may lie outside it (every
  blackbody below about 3500 K measured to 830 nm);
* **flat** (:data:`PEAK_FLAT`): the values vary by less than :data:`FLAT_LIMIT` (1 %) of the
  maximum over the measured range (illuminant E): no peak to speak of;
* **FWHM** needs a peak and a closed band around it: the spectrum must be below half its
  maximum at both ends of the measured range, so both half-maximum crossings exist inside it
  and the band does not run on past them (:data:`FWHM_BROADBAND` otherwise: D65 is above
  half its maximum at 780-830 nm, and FWHM is not defined for such a broadband spectrum).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from .constants import WAVELENGTH_NM
from .errors import Flag
from .formats import finite_or_none as _num
from .photometry import grid_values

__all__ = [
    "ShapeMeasures",
    "spectral_shape",
    "peak_wavelength_nm",
    "centroid_wavelength_nm",
    "fwhm_nm",
    "FLAT_LIMIT",
    "PEAK_OK",
    "PEAK_AT_EDGE",
    "PEAK_FLAT",
    "NO_SIGNAL",
    "FWHM_BROADBAND",
    "FWHM_NO_PEAK",
]

_STEP_NM = 1.0
#: A spectrum whose values span less than this share of its maximum over the measured range is flat
#: (common practice, no source: 1 % is well above the ripple of a smooth source and well below any band).
FLAT_LIMIT = 0.01
#: Reasons a peak is withheld (``ShapeMeasures.peak_status``).
PEAK_OK, PEAK_AT_EDGE, PEAK_FLAT, NO_SIGNAL = 0, 1, 2, 3
#: Reasons a FWHM is withheld (``ShapeMeasures.fwhm_status``); 0 = reported.
FWHM_BROADBAND, FWHM_NO_PEAK = 1, 2


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


def _range_index(measured_range_nm, n_spectra: int) -> tuple[np.ndarray, np.ndarray]:
    """First and last working-grid index inside each measured range (clipped to the grid), (N,) each."""
    last = WAVELENGTH_NM.shape[0] - 1
    if measured_range_nm is None:
        return np.zeros(n_spectra, dtype=np.intp), np.full(n_spectra, last, dtype=np.intp)
    from .spectra import range_array

    rng = range_array(measured_range_nm)
    if rng.shape[0] != n_spectra:
        raise ValueError(f"measured_range_nm must give one (lo, hi) per spectrum ({n_spectra}), got {rng.shape[0]}")
    first = np.clip(np.ceil(rng[:, 0] - WAVELENGTH_NM[0] - 1e-9), 0, last).astype(np.intp)
    end = np.clip(np.floor(rng[:, 1] - WAVELENGTH_NM[0] + 1e-9), 0, last).astype(np.intp)
    return first, np.maximum(end, first)


def _status(v: np.ndarray, i: np.ndarray, first: np.ndarray, last: np.ndarray) -> np.ndarray:
    """:data:`PEAK_OK`, :data:`PEAK_AT_EDGE`, :data:`PEAK_FLAT` or :data:`NO_SIGNAL` per spectrum, (M,)."""
    top, bottom = _range_extremes(v, first, last)
    status = np.full(v.shape[0], PEAK_OK, dtype=np.int8)
    status[(i <= first) | (i >= last)] = PEAK_AT_EDGE
    status[top - bottom <= FLAT_LIMIT * top] = PEAK_FLAT
    status[~(v.max(axis=-1) > 0)] = NO_SIGNAL
    return status


def _range_extremes(v: np.ndarray, first: np.ndarray, last: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Maximum and minimum of each row over its index range [first, last], in one pass (``reduceat``)."""
    m, n = v.shape
    if m == 0:
        return np.zeros(0), np.zeros(0)
    flat = np.ascontiguousarray(v).ravel()
    bounds = np.empty(2 * m, dtype=np.intp)
    bounds[0::2] = np.arange(m) * n + first
    bounds[1::2] = np.arange(m) * n + last + 1
    if bounds[-1] >= flat.size:
        bounds = bounds[:-1]  # the last range runs to the end of the array
    return np.maximum.reduceat(flat, bounds)[0::2], np.minimum.reduceat(flat, bounds)[0::2]


def _fwhm(v: np.ndarray, i: np.ndarray, y_peak: np.ndarray, first: np.ndarray, last: np.ndarray):
    """FWHM [nm] by the half-maximum crossings nearest the peak, and where the band is closed, (M,) each.

    Boolean masks of the samples below half maximum on each side of the peak; the nearest one
    on each side is the last True on the left and the first True on the right (``argmax``).
    """
    n = v.shape[-1]
    half = 0.5 * y_peak
    below = v < half[:, None]
    idx = np.arange(n)
    rows = np.arange(v.shape[0])
    # argmax of a contiguous boolean row stops at its first True: the left side is searched mirrored
    right = below & (idx > i[:, None])
    left_mirrored = below[:, ::-1] & (idx > (n - 1 - i)[:, None])
    hi = np.argmax(right, axis=-1)
    lo_m = np.argmax(left_mirrored, axis=-1)
    found = right[rows, hi] & left_mirrored[rows, lo_m] & (y_peak > 0)
    lo_c = np.clip(n - 1 - lo_m, 0, n - 2)
    hi_c = np.clip(hi, 1, n - 1)

    def crossing(outer: np.ndarray, inner: np.ndarray) -> np.ndarray:
        y_out = v[rows, outer]
        y_in = v[rows, inner]
        with np.errstate(divide="ignore", invalid="ignore"):
            f = (half - y_out) / (y_in - y_out)
        return WAVELENGTH_NM[outer] + f * (WAVELENGTH_NM[inner] - WAVELENGTH_NM[outer])

    width = np.where(found, crossing(hi_c, hi_c - 1) - crossing(lo_c, lo_c + 1), np.nan)
    closed = (v[rows, first] < half) & (v[rows, last] < half)
    return width, closed


def _measures(values: Any, measured_range_nm=None):
    v = grid_values(values)
    lead = v.shape[:-1]
    v2 = v.reshape(-1, v.shape[-1])
    first, last = _range_index(measured_range_nm, v2.shape[0])
    i, delta, y_peak = _peak(v2)
    status = _status(v2, i, first, last)
    peak = np.where(status == PEAK_OK, WAVELENGTH_NM[i] + delta * _STEP_NM, np.nan)
    width, closed = _fwhm(v2, i, y_peak, first, last)
    fwhm_status = np.where(status != PEAK_OK, FWHM_NO_PEAK, np.where(closed, 0, FWHM_BROADBAND)).astype(np.int8)
    width = np.where(fwhm_status == 0, width, np.nan)
    return peak.reshape(lead), width.reshape(lead), status.reshape(lead), fwhm_status.reshape(lead), first, last


def peak_wavelength_nm(values: Any, *, measured_range_nm=None) -> np.ndarray:
    """Wavelength of the highest sample, refined by a parabola through it and its two neighbours [nm].

    The refinement is the vertex of the parabola through three 1 nm samples, limited to
    +-0.5 nm; when the three samples are not concave, the sample wavelength is returned.
    NaN for a spectrum whose maximum is not positive, whose highest value lies at an end of
    the measured range (``measured_range_nm``, one (lo, hi) per spectrum; default the grid),
    or that is flat (module notes).
    """
    return _measures(values, measured_range_nm)[0]


def centroid_wavelength_nm(values: Any) -> np.ndarray:
    """Power-weighted mean wavelength sum(lambda S) / sum(S) over 360-830 nm [nm]; NaN if sum(S) <= 0."""
    v = grid_values(values)
    total = v.sum(axis=-1)
    with np.errstate(divide="ignore", invalid="ignore"):
        c = (v @ WAVELENGTH_NM) / np.where(total > 0, total, 1.0)
    return np.where(total > 0, c, np.nan)


def fwhm_nm(values: Any, *, measured_range_nm=None) -> np.ndarray:
    """Full width at half maximum of the highest peak [nm].

    The half-maximum level is half the parabola-refined peak value (see
    :func:`peak_wavelength_nm`).  From the highest sample the spectrum is followed outwards
    on each side to the first sample below that level; the crossing is placed by linear
    interpolation between that sample and its inner neighbour.  NaN where the peak is
    withheld, and where the spectrum is not below half maximum at both ends of the measured
    range (the crossings must lie inside it and close the band: module notes).
    """
    return _measures(values, measured_range_nm)[1]


def _grid_nm(k: int) -> str:
    return f"{WAVELENGTH_NM[k]:g}"


@dataclass(frozen=True)
class ShapeMeasures:
    """Peak, centroid and FWHM of N spectra [nm], arrays of shape (N,).

    ``peak_status`` / ``fwhm_status`` say why a value is withheld (module constants); ``flags``
    holds the sentence for each spectrum whose peak or FWHM is withheld (not for no signal).
    """

    peak_nm: np.ndarray
    centroid_nm: np.ndarray
    fwhm_nm: np.ndarray
    peak_status: np.ndarray | None = None
    fwhm_status: np.ndarray | None = None
    flags: tuple[tuple[Flag, ...], ...] = ()

    def record(self, i: int) -> dict[str, float | None]:
        return {
            "peak_nm": _num(self.peak_nm[i]),
            "centroid_nm": _num(self.centroid_nm[i]),
            "fwhm_nm": _num(self.fwhm_nm[i]),
        }

    def columns(self) -> dict[str, np.ndarray]:
        """The fields of :meth:`record` for every spectrum at once (NaN where a record has None)."""
        return {"peak_nm": self.peak_nm, "centroid_nm": self.centroid_nm, "fwhm_nm": self.fwhm_nm}


def _flags(status, fwhm_status, first, last, v) -> tuple[tuple[Flag, ...], ...]:
    """One flag per spectrum whose peak or FWHM is withheld, built for those rows only."""
    out: list[tuple[Flag, ...]] = [()] * status.shape[0]
    span = lambda k: f"{_grid_nm(first[k])}-{_grid_nm(last[k])} nm"  # noqa: E731
    for k in np.flatnonzero(status == PEAK_AT_EDGE).tolist():
        end = first[k] if v[k, first[k]] >= v[k, last[k]] else last[k]
        out[k] = (
            Flag(
                "peak-at-range-edge",
                f"the highest value lies at the {_grid_nm(end)} nm end of the measured range ({span(k)}): "
                "the peak may lie outside it; peak wavelength and FWHM withheld",
            ),
        )
    for k in np.flatnonzero(status == PEAK_FLAT).tolist():
        out[k] = (
            Flag(
                "peak-not-meaningful",
                f"the spectrum varies by less than {FLAT_LIMIT:.0%} of its maximum over {span(k)} (flat): "
                "a peak wavelength has no meaning and FWHM is not defined; both withheld",
            ),
        )
    y_peak = _peak(v)[2]  # the level FWHM is judged at
    for k in np.flatnonzero(fwhm_status == FWHM_BROADBAND).tolist():
        half = 0.5 * y_peak[k]
        ends = [e for e in (first[k], last[k]) if v[k, e] >= half]
        where = " and ".join(f"{_grid_nm(e)} nm" for e in ends)
        out[k] = (
            Flag(
                "fwhm-not-defined",
                f"FWHM is not defined for this broadband spectrum: it is at or above half its maximum at "
                f"{where}, the end{'s' if len(ends) > 1 else ''} of the measured range ({span(k)}); "
                "FWHM withheld",
            ),
        )
    return tuple(out)


def spectral_shape(values: Any, *, measured_range_nm=None) -> ShapeMeasures:
    """Peak wavelength, centroid wavelength and FWHM of spectra on the working grid, (N, 471).

    ``measured_range_nm`` (one (lo, hi[, step]) per spectrum, as ``Spectra.measured_range_nm``)
    decides where the peak is at an edge and where FWHM's crossings must lie; default the grid.
    """
    v = np.atleast_2d(grid_values(values))
    peak, width, status, fwhm_status, first, last = _measures(v, measured_range_nm)
    flagged = (status == PEAK_AT_EDGE) | (status == PEAK_FLAT) | (fwhm_status == FWHM_BROADBAND)
    flags = _flags(status, fwhm_status, first, last, v) if flagged.any() else ((),) * v.shape[0]
    return ShapeMeasures(
        peak_nm=peak,
        centroid_nm=centroid_wavelength_nm(v),
        fwhm_nm=width,
        peak_status=status,
        fwhm_status=fwhm_status,
        flags=flags,
    )
