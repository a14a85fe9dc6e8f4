"""Dominant wavelength, complementary wavelength and excitation purity (CIE 15:2018 section 9.1).

In the CIE 1931 xy diagram a straight line is drawn from the white point W through the
sample S.  Where it meets the spectral locus (360-830 nm, built from the CIE 1931 2 deg
CMFs at 1 nm and joined point to point) beyond S lies the dominant wavelength; where it
meets the locus on the other side of W lies the complementary wavelength.  Samples whose
ray meets the purple line (the straight line joining the 360 nm and 830 nm ends of the
locus) instead have no dominant wavelength; they are described by their complementary
wavelength.

Conventions (ours, written down here and in DEVELOPERS.md):

* White point: equal-energy illuminant E (x = y = 1/3) by default, because cctkit measures
  self-luminous sources; CIE 15:2018 section 9.1 uses the white point of the illuminant
  for object colours, which ``white_xy`` accepts.
* ``dominant_wavelength_nm`` is signed: for purples it is minus the complementary
  wavelength (the usual notation, also that of the reference library colour-science);
  ``is_purple`` says which.  ``complementary_wavelength_nm`` is given for every sample
  whose backward ray meets the spectral locus (NaN where it meets the purple line).
* Wavelengths are interpolated linearly along the segment of the locus that the ray
  crosses, so they are not restricted to whole nanometres.  Beyond about 700 nm the locus
  points nearly coincide, so a dominant wavelength there is poorly defined; the first
  crossing along the ray (the shortest such wavelength on ties) is reported.
* Excitation purity p_e = |S - W| / |B - W|, where B is the boundary point (on the
  spectral locus or, for purples, on the purple line) beyond S.  p_e = 0 at the white
  point (where no dominant wavelength exists: NaN) and p_e > 1 outside the locus.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache
from typing import Any

import numpy as np

from .constants import WAVELENGTH_NM
from .errors import InputError
from .photometry import grid_values

__all__ = [
    "EQUAL_ENERGY_XY",
    "DominantWavelength",
    "dominant_wavelength",
    "dominant_wavelength_of_spectra",
    "spectral_locus_xy",
]

#: Chromaticity of the equal-energy illuminant E (CIE 15:2018 section 9.1: x = y = 1/3).
EQUAL_ENERGY_XY = (1.0 / 3.0, 1.0 / 3.0)

_CHUNK = 2048  # samples per block: bounds the (samples x 471 segments) work arrays to ~8 MB each
_EPS = 1e-12


@lru_cache(maxsize=2)
def spectral_locus_xy(observer: int = 2) -> np.ndarray:
    """xy of the spectral locus 360-830 nm at 1 nm, (471, 2), for the 2 deg or 10 deg observer."""
    from .colorimetry import XYZ_to_xy
    from .tables import cmfs

    xy = XYZ_to_xy(cmfs(observer))
    xy.setflags(write=False)
    return xy


def _cross(ax, ay, bx, by):
    return ax * by - ay * bx


def _hits(S: np.ndarray, W: np.ndarray, locus: np.ndarray):
    """For each sample, ray parameter of the first forward boundary crossing and the backward locus crossing."""
    A = np.vstack([locus[:-1], locus[-1:]])  # segments i -> i+1, then the purple line 830 -> 360
    B = np.vstack([locus[1:], locus[:1]])
    ex, ey = (B - A)[:, 0], (B - A)[:, 1]
    dx = (S[:, 0] - W[:, 0])[:, None]
    dy = (S[:, 1] - W[:, 1])[:, None]
    rx = A[None, :, 0] - W[:, 0][:, None]
    ry = A[None, :, 1] - W[:, 1][:, None]
    den = _cross(dx, dy, ex[None, :], ey[None, :])
    ok = np.abs(den) > _EPS
    safe = np.where(ok, den, 1.0)
    t = _cross(rx, ry, ex[None, :], ey[None, :]) / safe
    s = _cross(rx, ry, dx, dy) / safe
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
    # the backward ray counts only if it meets the spectral locus before (or instead of) the purple line
    back_is_spectral = np.isfinite(t_back) & (t_back >= back_any.max(axis=1) - 1e-12)
    rows = np.arange(len(S))
    s_fwd = np.clip(s[rows, j_fwd], 0.0, 1.0)
    s_back = np.clip(s[rows, j_back], 0.0, 1.0)
    return t_fwd, j_fwd, s_fwd, t_back, j_back, s_back, back_is_spectral, n_seg - 1


@dataclass(frozen=True)
class DominantWavelength:
    """Dominant/complementary wavelength and excitation purity, arrays of the samples' leading shape.

    Attributes
    ----------
    dominant_wavelength_nm
        Dominant wavelength [nm]; for purples minus the complementary wavelength; NaN at the white point.
    complementary_wavelength_nm
        Complementary wavelength [nm] where the backward ray meets the spectral locus, else NaN.
    purity
        Excitation purity (dimensionless, 0 at the white point, 1 on the locus or purple line).
    is_purple
        True where the forward ray meets the purple line.
    boundary_xy
        xy of the boundary point beyond the sample, (..., 2).
    """

    dominant_wavelength_nm: np.ndarray
    complementary_wavelength_nm: np.ndarray
    purity: np.ndarray
    is_purple: np.ndarray
    boundary_xy: np.ndarray

    def record(self, i: int) -> dict[str, float | None]:
        from .formats import finite_or_none

        return {
            "dominant_wavelength_nm": finite_or_none(self.dominant_wavelength_nm[i]),
            "purity": finite_or_none(self.purity[i]),
        }

    def columns(self) -> dict[str, np.ndarray]:
        """The fields of :meth:`record` for every spectrum at once (NaN where a record has None)."""
        return {"dominant_wavelength_nm": self.dominant_wavelength_nm, "purity": self.purity}


def dominant_wavelength(xy: Any, *, white_xy: Any = EQUAL_ENERGY_XY, observer: int = 2) -> DominantWavelength:
    """Dominant (or complementary) wavelength and excitation purity of chromaticities.

    Parameters
    ----------
    xy : array_like (..., 2)
        CIE 1931 (observer 2) or 1964 (observer 10) chromaticity of the samples.
    white_xy : array_like (2,) or (..., 2)
        White point; equal-energy E by default (see the module notes).
    observer
        2 or 10: which observer's spectral locus (360-830 nm) bounds the diagram.

    Returns
    -------
    DominantWavelength

    References
    ----------
    CIE 15:2018 section 9.1 (dominant wavelength, complementary wavelength, excitation purity).
    """
    S = np.asarray(xy, dtype=np.float64)
    if S.ndim == 0 or S.shape[-1] != 2:
        raise InputError(f"xy: last axis must hold the two chromaticity coordinates x, y, got shape {S.shape}")
    W = np.asarray(white_xy, dtype=np.float64)
    if W.ndim == 0 or W.shape[-1] != 2 or not np.all(np.isfinite(W)):
        raise InputError(f"white_xy: expected finite (x, y), got {white_xy!r}")
    lead = np.broadcast_shapes(S.shape[:-1], W.shape[:-1])
    S = np.broadcast_to(S, lead + (2,)).reshape(-1, 2)
    W = np.broadcast_to(W, lead + (2,)).reshape(-1, 2)
    locus = spectral_locus_xy(observer)
    wl = WAVELENGTH_NM

    n = S.shape[0]
    dom = np.full(n, np.nan)
    comp = np.full(n, np.nan)
    purity = np.full(n, np.nan)
    purple = np.zeros(n, dtype=bool)
    boundary = np.full((n, 2), np.nan)
    for start in range(0, n, _CHUNK):  # blocks of samples bound memory; each block is vectorised
        sl = slice(start, start + _CHUNK)
        s_xy, w_xy = S[sl], W[sl]
        finite = np.all(np.isfinite(s_xy), axis=1)
        at_white = finite & (np.hypot(*(s_xy - w_xy).T) <= 1e-12)
        t_f, j_f, s_f, t_b, j_b, s_b, back_ok, purple_index = _hits(np.where(finite[:, None], s_xy, w_xy), w_xy, locus)
        found = finite & ~at_white & np.isfinite(t_f)
        is_purple = found & (j_f == purple_index)
        lam_f = wl[np.minimum(j_f, wl.shape[0] - 2)] + s_f
        lam_b = np.where(back_ok & finite & ~at_white, wl[np.minimum(j_b, wl.shape[0] - 2)] + s_b, np.nan)
        dom[sl] = np.where(found, np.where(is_purple, -lam_b, lam_f), np.nan)
        comp[sl] = lam_b
        with np.errstate(divide="ignore"):
            purity[sl] = np.where(found, 1.0 / t_f, np.where(at_white, 0.0, np.nan))
        purple[sl] = is_purple
        t_used = np.where(found, t_f, 0.0)[:, None]
        boundary[sl] = np.where(found[:, None], w_xy + t_used * (s_xy - w_xy), np.nan)
    return DominantWavelength(
        dominant_wavelength_nm=dom.reshape(lead),
        complementary_wavelength_nm=comp.reshape(lead),
        purity=purity.reshape(lead),
        is_purple=purple.reshape(lead),
        boundary_xy=boundary.reshape(lead + (2,)),
    )


def dominant_wavelength_of_spectra(
    values: Any, *, white_xy: Any = EQUAL_ENERGY_XY, observer: int = 2
) -> DominantWavelength:
    """:func:`dominant_wavelength` of spectra on the working grid, (N, 471), via their xy."""
    from .colorimetry import XYZ, XYZ_to_xy

    v = np.atleast_2d(grid_values(values))
    return dominant_wavelength(XYZ_to_xy(XYZ(v, observer=observer)), white_xy=white_xy, observer=observer)
