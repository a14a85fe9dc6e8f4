"""The Planckian locus, computed from Planck's law and the CIE colour-matching functions.

The locus is ours: Planck spectral exitance at temperature T (c2 = 1.4388e-2 m K
by default, CIE 15:2018 section 9.1) summed against the observer's CMFs at
1 nm over 360-830 nm (CIE 15:2018 practice, no end-point halving) gives XYZ(T),
hence the chromaticity in CIE 1960 uv, CIE 1976 u'v' and CIE 1931 xy.  The CCT
solvers, isotemperature lines, reference spectra and charts all read this one
definition.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .colorimetry import XYZ_to_uv, uv_to_uvp, uv_to_xy
from .planck import resolve_c2, spectral_exitance, spectral_exitance_dT
from .tables import cmfs

__all__ = [
    "T_MIN_K",
    "T_MAX_K",
    "Locus",
    "planckian_uv",
    "planckian_uv_dT",
    "planckian_locus",
    "locus_normal",
    "uv_from_cct_duv",
    "isotemperature_line",
]

#: Temperature range of the locus cctkit reports on [K].
T_MIN_K = 1000.0
T_MAX_K = 100_000.0


def planckian_uv(T_K, *, observer: int = 2, c2: float | str = "cie") -> np.ndarray:
    """CIE 1960 uv of the Planckian radiator at ``T_K``, (...) -> (..., 2)."""
    M = spectral_exitance(np.asarray(T_K, dtype=np.float64), c2=c2)
    return XYZ_to_uv(M @ cmfs(observer))


def planckian_uv_dT(T_K, *, observer: int = 2, c2: float | str = "cie") -> tuple[np.ndarray, np.ndarray]:
    """uv of the locus and its exact derivative d(uv)/dT [1/K], each (..., 2)."""
    T = np.asarray(T_K, dtype=np.float64)
    cm = cmfs(observer)
    X, Y, Z = np.moveaxis(spectral_exitance(T, c2=c2) @ cm, -1, 0)
    dX, dY, dZ = np.moveaxis(spectral_exitance_dT(T, c2=c2) @ cm, -1, 0)
    D = X + 15.0 * Y + 3.0 * Z
    dD = dX + 15.0 * dY + 3.0 * dZ
    u = 4.0 * X / D
    v = 6.0 * Y / D
    du = 4.0 * (dX * D - X * dD) / D**2
    dv = 6.0 * (dY * D - Y * dD) / D**2
    return np.stack([u, v], axis=-1), np.stack([du, dv], axis=-1)


def locus_normal(T_K, *, observer: int = 2, c2: float | str = "cie") -> tuple[np.ndarray, np.ndarray]:
    """Locus point and the unit normal pointing *above* the locus (towards larger v), each (..., 2).

    The tangent t = d(uv)/dT points towards lower u as T rises; the normal is t
    turned by -90 degrees, n = (t_v, -t_u) / |t|.
    """
    uv, d = planckian_uv_dT(T_K, observer=observer, c2=c2)
    n = np.stack([d[..., 1], -d[..., 0]], axis=-1)
    n /= np.linalg.norm(n, axis=-1, keepdims=True)
    return uv, n


def uv_from_cct_duv(cct_K, duv=0.0, *, observer: int = 2, c2: float | str = "cie") -> np.ndarray:
    """The inverse of CCT/Duv: the uv at distance ``duv`` from the locus point at ``cct_K``
    along the locus normal (positive above), (...) -> (..., 2).
    """
    T = np.asarray(cct_K, dtype=np.float64)
    duv = np.asarray(duv, dtype=np.float64)
    T, duv = np.broadcast_arrays(T, duv)
    uv, n = locus_normal(T, observer=observer, c2=c2)
    return uv + duv[..., None] * n


def isotemperature_line(cct_K: float, duv=np.linspace(-0.05, 0.05, 21), *, observer: int = 2) -> np.ndarray:
    """Points of the isotemperature line at ``cct_K`` for the given Duv values, (len(duv), 2) in uv."""
    duv = np.asarray(duv, dtype=np.float64)
    return uv_from_cct_duv(np.full(duv.shape, float(cct_K)), duv, observer=observer)


@dataclass(frozen=True)
class Locus:
    """The Planckian locus sampled at ``T_K``: chromaticities in three diagrams."""

    T_K: np.ndarray
    uv: np.ndarray
    uvp: np.ndarray
    xy: np.ndarray
    observer: int
    c2_m_K: float

    def rows(self) -> list[dict[str, float]]:
        return [
            {
                "T_K": float(t),
                "x": float(a[0]),
                "y": float(a[1]),
                "u": float(b[0]),
                "v": float(b[1]),
                "u_prime": float(c[0]),
                "v_prime": float(c[1]),
            }
            for t, a, b, c in zip(self.T_K, self.xy, self.uv, self.uvp)
        ]


def default_temperatures() -> np.ndarray:
    """1000-100000 K: 10 K steps to 10000 K, then 100 K steps (a dense table for plotting tools)."""
    return np.concatenate([np.arange(1000.0, 10000.0, 10.0), np.arange(10000.0, 100000.0 + 1, 100.0)])


def planckian_locus(T_K=None, *, observer: int = 2, c2: float | str = "cie") -> Locus:
    """The Planckian locus at ``T_K`` (default :func:`default_temperatures`)."""
    T = default_temperatures() if T_K is None else np.asarray(T_K, dtype=np.float64)
    uv = planckian_uv(T, observer=observer, c2=c2)
    return Locus(T_K=T, uv=uv, uvp=uv_to_uvp(uv), xy=uv_to_xy(uv), observer=int(observer), c2_m_K=resolve_c2(c2))
