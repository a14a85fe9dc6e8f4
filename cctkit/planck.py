"""Blackbody physics: Planck's law, Wien's displacement law, Stefan-Boltzmann.

All functions broadcast: ``T_K`` of shape (...) and ``wavelength_nm`` of shape (L,)
give (..., L).
"""

from __future__ import annotations

import numpy as np

from .constants import (
    C1_W_M2,
    C1L_W_M2_PER_SR,
    C2_CODATA_M_K,
    C2_M_K,
    KM_LM_PER_W,
    SIGMA_W_PER_M2_K4,
    WAVELENGTH_NM,
    WIEN_B_M_K,
)

__all__ = [
    "spectral_exitance",
    "spectral_radiance",
    "spectral_exitance_dT",
    "wien_peak_nm",
    "total_exitance",
    "blackbody_efficacy",
    "resolve_c2",
]


def resolve_c2(c2: float | str = "cie") -> float:
    """The second radiation constant [m K]: ``"cie"`` (1.4388e-2, CIE 15:2018), ``"codata"`` or a number."""
    if isinstance(c2, str):
        key = c2.strip().lower()
        if key in ("cie", "its-90", "its90"):
            return C2_M_K
        if key == "codata":
            return C2_CODATA_M_K
        raise ValueError(f"c2 must be 'cie', 'codata' or a number in m K, got {c2!r}")
    value = float(c2)
    if not (1.3e-2 < value < 1.5e-2):
        raise ValueError(f"c2 = {value!r} m K is not a plausible second radiation constant (about 1.4388e-2)")
    return value


def _x(wavelength_nm, T_K, c2):
    lam_m = np.asarray(wavelength_nm, dtype=np.float64) * 1e-9
    T = np.asarray(T_K, dtype=np.float64)[..., None]
    return lam_m, T, c2 / (lam_m * T)


def spectral_exitance(T_K, wavelength_nm=WAVELENGTH_NM, *, c2: float | str = "cie") -> np.ndarray:
    """Planck spectral exitance M(lambda, T) = c1 / (lambda^5 (exp(c2 / lambda T) - 1)).

    Parameters
    ----------
    T_K : array_like (...)
        Temperature [K].
    wavelength_nm : array_like (L,)
        Wavelength in vacuum [nm].
    c2
        Second radiation constant; CIE 15:2018 value by default.

    Returns
    -------
    ndarray (..., L)
        Spectral exitance [W m^-2 nm^-1].

    References
    ----------
    CIE 15:2018 section 9.1 (Planckian radiator); c1 from CODATA 2018.
    """
    lam_m, T, x = _x(wavelength_nm, T_K, resolve_c2(c2))
    with np.errstate(over="ignore"):
        m = C1_W_M2 / (lam_m**5 * np.expm1(x))
    return m * 1e-9


def spectral_radiance(T_K, wavelength_nm=WAVELENGTH_NM, *, c2: float | str = "cie") -> np.ndarray:
    """Planck spectral radiance L(lambda, T) [W sr^-1 m^-2 nm^-1] (exitance / pi)."""
    lam_m, T, x = _x(wavelength_nm, T_K, resolve_c2(c2))
    with np.errstate(over="ignore"):
        L = C1L_W_M2_PER_SR / (lam_m**5 * np.expm1(x))
    return L * 1e-9


def spectral_exitance_dT(T_K, wavelength_nm=WAVELENGTH_NM, *, c2: float | str = "cie") -> np.ndarray:
    """dM/dT of Planck's law [W m^-2 nm^-1 K^-1], analytic."""
    c2v = resolve_c2(c2)
    lam_m, T, x = _x(wavelength_nm, T_K, c2v)
    with np.errstate(over="ignore", invalid="ignore"):
        m = C1_W_M2 / (lam_m**5 * np.expm1(x)) * 1e-9
        factor = x / T * (-np.expm1(-x)) ** -1  # x e^x / (T (e^x - 1))
    return np.nan_to_num(m * factor, nan=0.0)


def wien_peak_nm(T_K) -> np.ndarray:
    """Wavelength of peak spectral exitance, lambda_max = b / T [nm] (CODATA 2018 b)."""
    T = np.asarray(T_K, dtype=np.float64)
    _check_T(T)
    return WIEN_B_M_K / T * 1e9


def total_exitance(T_K) -> np.ndarray:
    """Total exitance over all wavelengths, M = sigma T^4 [W m^-2] (CODATA 2018 sigma)."""
    T = np.asarray(T_K, dtype=np.float64)
    _check_T(T)
    return SIGMA_W_PER_M2_K4 * T**4


def blackbody_efficacy(T_K, *, c2: float | str = "cie") -> np.ndarray:
    """All-wavelength luminous efficacy of a blackbody [lm/W].

    Luminous exitance (683.002 * sum M V over 360-830 nm at 1 nm, where V is non-zero) over
    the Stefan-Boltzmann total sigma T^4 of *all* wavelengths.  Not the LER of a measured
    spectrum, whose radiant denominator covers only the measured range
    (:func:`cctkit.photometry.luminous_efficacy_of_radiation`); the CLI names them apart
    (``all_wavelength_efficacy_lm_per_W`` and ``ler_lm_per_W``).
    """
    from .tables import cmfs

    T = np.asarray(T_K, dtype=np.float64)
    _check_T(T)
    M = spectral_exitance(T, c2=c2)
    lum = KM_LM_PER_W * (M @ cmfs(2)[:, 1])
    return lum / total_exitance(T)


def _check_T(T: np.ndarray) -> None:
    if np.any(~np.isfinite(T)) or np.any(T <= 0):
        raise ValueError("T_K must be finite and > 0 K")
