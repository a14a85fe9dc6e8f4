"""Tristimulus values and chromaticity coordinates.

Conventions (CIE 15:2018): plain summation at 1 nm over 360-830 nm, no
end-point halving.  For absolute quantities the photopic normalisation
k = Km = 683.002 lm/W makes Y the luminous quantity; for relative spectra
``XYZ`` is the plain sum (callers normalise as their metric requires).
Chromaticity arrays keep their components on the last axis, (..., 2).
"""

from __future__ import annotations

import numpy as np

from .tables import cmfs

__all__ = [
    "safe_divide",
    "XYZ",
    "products_in_blocks",
    "ROW_ALIGN",
    "XYZ_to_xy",
    "XYZ_to_uv",
    "XYZ_to_uvp",
    "xy_to_uv",
    "uv_to_xy",
    "uv_to_uvp",
    "uvp_to_uv",
    "xy_to_XYZ",
]


def XYZ(values: np.ndarray, *, observer: int = 2) -> np.ndarray:
    """Tristimulus sums X, Y, Z of spectra on the working grid, (N, 471) -> (N, 3).

    No normalisation constant is applied; multiply by Km for absolute photometric units.
    """
    values = np.asarray(values, dtype=np.float64)
    return values @ cmfs(observer)


#: Row alignment of blocked matrix products: a multiple of the row tile of the BLAS matrix kernels
#: (OpenBLAS: 4 on Haswell/Zen, 16 on SkylakeX).  A BLAS rounds only the rows of an incomplete last
#: tile differently, so products of blocks starting on multiples of it keep the bits of the whole product.
ROW_ALIGN = 16


def products_in_blocks(values: np.ndarray, weights, *, block: int = 512) -> list[np.ndarray]:
    """``values @ w`` for each ``w`` in ``weights`` (vectors or matrices), reading ``values`` once, block by block.

    Each block of rows stays in the processor's cache while every product uses it.  With one BLAS
    thread (as :func:`cctkit.analysis.analyse` runs) the results are the bits of the plain products
    over all rows: the blocks start on multiples of :data:`ROW_ALIGN` rows.
    """
    if block % ROW_ALIGN:
        raise ValueError(f"block must be a multiple of {ROW_ALIGN} rows, got {block}")
    v = np.asarray(values, dtype=np.float64)
    n = v.shape[0]
    out = [np.empty((n,) + np.shape(w)[1:]) for w in weights]
    for s in range(0, n, block):
        rows = v[s : s + block]
        for w, o in zip(weights, out):
            np.matmul(rows, w, out=o[s : s + block])
    return out


def safe_divide(a, b):
    """a / b, NaN where b is 0 (no warnings)."""
    with np.errstate(divide="ignore", invalid="ignore"):
        q = np.asarray(np.true_divide(a, b))
        if q.dtype != np.float64:  # other precisions: the plain form, whose result type numpy decides
            return np.where(b != 0, a / np.where(b != 0, b, 1.0), np.nan)
    zero = np.asarray(b) == 0
    if zero.any():  # one pass over b when nothing is zero: the same values as dividing where b != 0
        q = np.array(q, copy=True)
        np.copyto(q, np.nan, where=zero)
    return q


def XYZ_to_xy(XYZ: np.ndarray) -> np.ndarray:
    """CIE 1931 x, y (CIE 15:2018 eq. 7.3), (..., 3) -> (..., 2)."""
    XYZ = np.asarray(XYZ, dtype=np.float64)
    s = XYZ.sum(axis=-1)
    return np.stack([safe_divide(XYZ[..., 0], s), safe_divide(XYZ[..., 1], s)], axis=-1)


def XYZ_to_uv(XYZ: np.ndarray) -> np.ndarray:
    """CIE 1960 UCS u, v (CIE 15:2018 section 8.1, note), (..., 3) -> (..., 2)."""
    XYZ = np.asarray(XYZ, dtype=np.float64)
    d = XYZ[..., 0] + 15.0 * XYZ[..., 1] + 3.0 * XYZ[..., 2]
    return np.stack([safe_divide(4.0 * XYZ[..., 0], d), safe_divide(6.0 * XYZ[..., 1], d)], axis=-1)


def XYZ_to_uvp(XYZ: np.ndarray) -> np.ndarray:
    """CIE 1976 UCS u', v' (CIE 15:2018 eq. 8.1), (..., 3) -> (..., 2)."""
    uv = XYZ_to_uv(XYZ)
    return uv_to_uvp(uv)


def uv_to_uvp(uv: np.ndarray) -> np.ndarray:
    """u' = u, v' = 1.5 v."""
    uv = np.asarray(uv, dtype=np.float64)
    return np.stack([uv[..., 0], 1.5 * uv[..., 1]], axis=-1)


def uvp_to_uv(uvp: np.ndarray) -> np.ndarray:
    """u = u', v = v' / 1.5."""
    uvp = np.asarray(uvp, dtype=np.float64)
    return np.stack([uvp[..., 0], uvp[..., 1] / 1.5], axis=-1)


def xy_to_uv(xy: np.ndarray) -> np.ndarray:
    """CIE 1931 xy -> CIE 1960 uv: u = 4x/(-2x+12y+3), v = 6y/(-2x+12y+3)."""
    xy = np.asarray(xy, dtype=np.float64)
    d = -2.0 * xy[..., 0] + 12.0 * xy[..., 1] + 3.0
    return np.stack([safe_divide(4.0 * xy[..., 0], d), safe_divide(6.0 * xy[..., 1], d)], axis=-1)


def uv_to_xy(uv: np.ndarray) -> np.ndarray:
    """CIE 1960 uv -> CIE 1931 xy: x = 3u/(2u-8v+4), y = 2v/(2u-8v+4)."""
    uv = np.asarray(uv, dtype=np.float64)
    d = 2.0 * uv[..., 0] - 8.0 * uv[..., 1] + 4.0
    return np.stack([safe_divide(3.0 * uv[..., 0], d), safe_divide(2.0 * uv[..., 1], d)], axis=-1)


def xy_to_XYZ(xy: np.ndarray, Y: np.ndarray | float = 1.0) -> np.ndarray:
    """xy and luminance factor Y -> XYZ, (..., 2) -> (..., 3)."""
    xy = np.asarray(xy, dtype=np.float64)
    Y = np.broadcast_to(np.asarray(Y, dtype=np.float64), xy.shape[:-1])
    X = safe_divide(xy[..., 0] * Y, xy[..., 1])
    Z = safe_divide((1.0 - xy[..., 0] - xy[..., 1]) * Y, xy[..., 1])
    return np.stack([X, Y, Z], axis=-1)
