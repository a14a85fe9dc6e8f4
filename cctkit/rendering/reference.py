"""Reference illuminants for colour rendering: Planckian, CIE daylight, and the CIE 224 blend.

Every function takes the test sources' correlated colour temperatures ``cct_K``
(shape (N,)) and returns the reference spectra on the working grid
(360-830 nm at 1 nm), shape (N, 471), vectorised over N.

Daylight (CIE 15:2018 section 4.1.2)
------------------------------------
The chromaticity of CIE daylight of correlated colour temperature T is

* 4000 K <= T <= 7000 K:   x_D = -4.6070e9/T^3 + 2.9678e6/T^2 + 0.09911e3/T + 0.244063
* 7000 K <  T <= 25000 K:  x_D = -2.0064e9/T^3 + 1.9018e6/T^2 + 0.24748e3/T + 0.237040
* y_D = -3.000 x_D^2 + 2.870 x_D - 0.275

and the spectrum is S0 + M1 S1 + M2 S2 with
M = 0.0241 + 0.2562 x_D - 0.7341 y_D, M1 = (-1.3515 - 1.7703 x_D + 5.9114 y_D) / M,
M2 = (0.0300 - 31.4424 x_D + 30.0717 y_D) / M.

About the factor 1.4388/1.4380: the D-series was defined when c2 was 1.4380e-2 m K,
and the canonical illuminants keep their historical *names* (D50, D65, ...).  The
polynomials above take T on today's scale (c2 = 1.4388e-2 m K): D65 is the
daylight of T = 6500 x 1.4388/1.4380 = 6503.6 K.  A reference illuminant for
colour rendering must have the *same CCT as the test source* on the scale that
CCT was computed with (ours is c2 = 1.4388e-2, CIE 15:2018), so the test CCT goes
into the polynomials unchanged; the factor applies only when a nominal name is
turned into a spectrum (:func:`nominal_daylight_cct_K`).  With this choice the
daylight reference of T has a CCT equal to T within a few kelvin (checked in
``tests/test_reference.py``).

M1 and M2 are rounded to three decimals by default, as CIE 15:2004 section 3.1
prescribes so that the tabulated D-illuminants are reproduced; ``round_m=False``
keeps them exact.  The effect is below 0.01 (measured on 2000 synthetic LEDs: Ra
0.006, Rf 0.003).

Outside 4000-25000 K the daylight polynomials are extrapolated; the CIE 13.3
reference uses daylight only from 5000 K, and the CIE 224 blend only from 4000 K,
so this matters only above 25000 K (reported by the callers as out of range).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..constants import WAVELENGTH_NM
from ..planck import spectral_exitance
from ..tables import cmfs, table

__all__ = [
    "Reference",
    "planckian_reference",
    "daylight_reference",
    "daylight_xy",
    "nominal_daylight_cct_K",
    "reference_cie13_3",
    "reference_cie224",
    "CIE13_3_DAYLIGHT_FROM_K",
    "CIE224_BLEND_K",
]

#: CIE 13.3-1995 section 5.1: Planckian reference below 5000 K, CIE daylight from 5000 K.
CIE13_3_DAYLIGHT_FROM_K = 5000.0
#: CIE 224:2017 section 4.2 (and ANSI/IES TM-30-20 section 4.2): blend between 4000 K and 5000 K.
CIE224_BLEND_K = (4000.0, 5000.0)
#: c2 with which the D-series was defined [m K] (CIE 15:2018 section 4.1.2, note).
_C2_D_SERIES_M_K = 1.4380e-2


@dataclass(frozen=True)
class Reference:
    """Reference spectra for N test sources.

    Attributes
    ----------
    values
        Reference spectra on the working grid, (N, 471).  Each row is scaled to
        Y = 100 (CIE 1931 2 deg, plain sum at 1 nm), so rows are comparable.
    cct_K
        The CCT each reference was built for, (N,) [K].
    kind
        Per spectrum ``"planckian"``, ``"daylight"`` or ``"blend"`` (``"none"`` where
        ``cct_K`` is NaN; the row is then NaN).
    planckian_weight
        Weight m of the Planckian component, (N,): 1 for Planckian, 0 for daylight,
        (5000 K - T) / 1000 K inside the CIE 224 blend.
    """

    values: np.ndarray
    cct_K: np.ndarray
    kind: tuple[str, ...]
    planckian_weight: np.ndarray


def _as_cct(cct_K) -> np.ndarray:
    T = np.atleast_1d(np.asarray(cct_K, dtype=np.float64))
    if T.ndim != 1:
        raise ValueError(f"cct_K must be a scalar or shape (N,), got shape {T.shape}")
    bad = np.isinf(T) | (T <= 0)
    if bad.any():
        raise ValueError(f"cct_K must be > 0 K and finite (or NaN for 'no CCT'), got {T[bad][0]!r}")
    return T


_KIND_NAMES = np.array(["planckian", "daylight", "blend", "none"], dtype=object)


def _kinds(m: np.ndarray) -> tuple[str, ...]:
    m = np.asarray(m, dtype=np.float64)
    kind = np.where(m == 1, 0, np.where(m == 0, 1, 2))
    kind[~np.isfinite(m)] = 3
    return tuple(_KIND_NAMES[kind].tolist())


def _to_Y100(values: np.ndarray, observer: int = 2) -> np.ndarray:
    Y = values @ cmfs(observer)[:, 1]
    with np.errstate(divide="ignore", invalid="ignore"):
        return values * (100.0 / Y)[:, None]


def nominal_daylight_cct_K(nominal_K) -> np.ndarray:
    """CCT [K] (c2 = 1.4388e-2 m K) of the D-illuminant named after ``nominal_K`` (e.g. 6500 -> 6503.6).

    CIE 15:2018 section 4.1.2, note on the change of c2 from 1.4380e-2 to 1.4388e-2 m K.
    """
    return np.asarray(nominal_K, dtype=np.float64) * (1.4388e-2 / _C2_D_SERIES_M_K)


def daylight_xy(cct_K) -> np.ndarray:
    """Chromaticity (x, y) of CIE daylight of correlated colour temperature ``cct_K`` [K], (N, 2).

    CIE 15:2018 section 4.1.2, eqs. for x_D (two ranges) and y_D; see the module notes.
    """
    T = _as_cct(cct_K)
    low = -4.6070e9 / T**3 + 2.9678e6 / T**2 + 0.09911e3 / T + 0.244063
    high = -2.0064e9 / T**3 + 1.9018e6 / T**2 + 0.24748e3 / T + 0.237040
    x = np.where(T <= 7000.0, low, high)
    y = -3.000 * x**2 + 2.870 * x - 0.275
    return np.stack([x, y], axis=-1)


def daylight_reference(cct_K, *, round_m: bool = True) -> Reference:
    """CIE daylight spectra S0 + M1 S1 + M2 S2 of CCT ``cct_K`` [K], scaled to Y = 100.

    Parameters
    ----------
    cct_K : array_like (N,)
        Correlated colour temperature on the c2 = 1.4388e-2 m K scale [K].
    round_m
        Round M1, M2 to three decimals (CIE 15:2004 section 3.1).

    References
    ----------
    CIE 15:2018 section 4.1.2; basis S0, S1, S2 of CIE 15:2018 Table T.2, linear to 1 nm.
    """
    T = _as_cct(cct_K)
    xy = daylight_xy(T)
    x, y = xy[:, 0], xy[:, 1]
    M = 0.0241 + 0.2562 * x - 0.7341 * y
    M1 = (-1.3515 - 1.7703 * x + 5.9114 * y) / M
    M2 = (0.0300 - 31.4424 * x + 30.0717 * y) / M
    if round_m:
        M1, M2 = np.round(M1, 3), np.round(M2, 3)
    basis = table("d_basis")  # (471, 3)
    coeff = np.stack([np.ones_like(M1), M1, M2], axis=-1)  # (N, 3)
    values = _to_Y100(coeff @ basis.T)
    m = np.where(np.isfinite(T), 0.0, np.nan)
    return Reference(values, T, _kinds(m), m)


def planckian_reference(cct_K) -> Reference:
    """Planckian radiator spectra of temperature ``cct_K`` [K] (c2 = 1.4388e-2 m K), scaled to Y = 100.

    References
    ----------
    CIE 15:2018 section 9.1; CIE 13.3-1995 section 5.1.
    """
    T = _as_cct(cct_K)
    with np.errstate(invalid="ignore"):
        values = _to_Y100(spectral_exitance(T, WAVELENGTH_NM))
    m = np.where(np.isfinite(T), 1.0, np.nan)
    return Reference(values, T, _kinds(m), m)


def reference_cie13_3(cct_K, *, round_m: bool = True) -> Reference:
    """CIE 13.3-1995 reference: Planckian below 5000 K, CIE daylight from 5000 K.

    References
    ----------
    CIE 13.3-1995 section 5.1 (reference illuminant of the same CCT as the test source).
    """
    T = _as_cct(cct_K)
    day = T >= CIE13_3_DAYLIGHT_FROM_K
    planck = T < CIE13_3_DAYLIGHT_FROM_K
    values = np.full((T.shape[0], WAVELENGTH_NM.shape[0]), np.nan)
    if planck.any():
        values[planck] = planckian_reference(T[planck]).values
    if day.any():
        values[day] = daylight_reference(T[day], round_m=round_m).values
    m = np.where(day, 0.0, np.where(planck, 1.0, np.nan))
    return Reference(values, T, _kinds(m), m)


def reference_cie224(cct_K, *, blend_observer: int = 10, round_m: bool = True) -> Reference:
    """CIE 224:2017 / ANSI/IES TM-30-20 reference: Planckian, blend, or CIE daylight.

    Below 4000 K the Planckian radiator, above 5000 K CIE daylight, and between the
    two a mixture ``m P + (1 - m) D`` with m = (5000 K - T) / 1000 K, where P and D
    are first scaled to equal Y.

    Parameters
    ----------
    cct_K : array_like (N,)
        Correlated colour temperature of each test source [K].
    blend_observer
        Observer whose Y makes P and D equal before mixing: ``10`` (CIE 1964 10 deg,
        default) or ``2``.  The CIE 224 procedure works in the 10 deg observer
        throughout; which Y its text names for the mixing step is ``# from memory``,
        not checked against the printed standard.  The choice moves Rf by less than
        0.001 (measured 1.4e-4 on 2000 synthetic LEDs; the uv of the blend by 1.4e-7,
        ``tests/test_reference.py``).

    Notes
    -----
    The returned rows are rescaled to Y = 100 (2 deg) like every :class:`Reference`;
    rendering metrics normalise again, so this scale never enters a result.

    References
    ----------
    CIE 224:2017 section 4.2; ANSI/IES TM-30-20 section 4.2 (same reference).
    """
    if blend_observer not in (2, 10):
        raise ValueError(f"blend_observer must be 2 or 10, got {blend_observer!r}")
    T = _as_cct(cct_K)
    lo, hi = CIE224_BLEND_K
    m = np.clip((hi - T) / (hi - lo), 0.0, 1.0)  # NaN stays NaN
    need_p = m > 0
    need_d = m < 1
    P = np.zeros((T.shape[0], WAVELENGTH_NM.shape[0]))
    D = np.zeros_like(P)
    if need_p.any():
        P[need_p] = _to_Y100(spectral_exitance(T[need_p], WAVELENGTH_NM), blend_observer)
    if need_d.any():
        D[need_d] = _to_Y100(daylight_reference(T[need_d], round_m=round_m).values, blend_observer)
    values = _to_Y100(m[:, None] * P + (1.0 - m)[:, None] * D)
    return Reference(values, T, _kinds(m), m)
