"""CIE 13.3-1995 colour rendering index: Ra and the special indices R1-R14.

Vectorised over N spectra and the 14 test colour samples at once.

Procedure (CIE 13.3-1995 sections 5-6), with the CIE 1931 2 deg observer:

1. Reference of the same CCT as the test source (:func:`~.reference.reference_cie13_3`).
2. Source and sample tristimulus values by plain summation at 1 nm over 360-830 nm
   (CIE 15:2018 practice), each source scaled to Y = 100.
3. CIE 1960 uv of source and samples; the chromaticity distance
   DC = |uv_test - uv_ref| must be below 5.4e-3 for the result to be meaningful.
4. Von Kries adaptation in uv (CIE 13.3 eq. 5): with c = (4 - u - 10 v)/v and
   d = (1.708 v + 0.404 - 1.481 u)/v,
   u' = (10.872 + 0.404 (c_r/c_k) c_i - 4 (d_r/d_k) d_i) / (16.518 + 1.481 (c_r/c_k) c_i - (d_r/d_k) d_i),
   v' = 5.520 / (16.518 + 1.481 (c_r/c_k) c_i - (d_r/d_k) d_i).
5. CIE 1964 U*V*W*: W* = 25 Y^(1/3) - 17, U* = 13 W* (u - u_r), V* = 13 W* (v - v_r),
   with the reference white (u_r, v_r) as origin for both test and reference.
6. R_i = 100 - 4.6 dE_i (Euclidean in U*V*W*); Ra = mean of R1..R8.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..colorimetry import safe_divide
from ..tables import cmfs, table

__all__ = ["Cri13Result", "cie13_3", "cie13_3_samples", "DC_LIMIT"]

#: Largest chromaticity distance between test source and reference for a meaningful
#: CRI -- CIE 13.3-1995 section 5.3 (5.4e-3 in CIE 1960 uv).
DC_LIMIT = 5.4e-3


@dataclass(frozen=True)
class Cri13Result:
    """CIE 13.3-1995 colour rendering of N spectra.

    Attributes
    ----------
    Ra : (N,)
        General colour rendering index (mean of R1..R8).
    R : (N, 14)
        Special colour rendering indices R1..R14.
    dE : (N, 14)
        Colour difference in CIE 1964 U*V*W* between each sample under test and reference.
    dc : (N,)
        Chromaticity distance DC between test source and reference, CIE 1960 uv.
    valid : (N,)
        ``dc < 5.4e-3`` (CIE 13.3-1995 section 5.3).
    cct_K : (N,)
        CCT the reference was built for [K].
    reference : tuple of str
        ``"planckian"`` or ``"daylight"`` per spectrum (``"none"`` where ``cct_K`` is NaN,
        and then every index is NaN and ``valid`` is False).
    """

    Ra: np.ndarray
    R: np.ndarray
    dE: np.ndarray
    dc: np.ndarray
    valid: np.ndarray
    cct_K: np.ndarray
    reference: tuple[str, ...]


def _check_values(values) -> np.ndarray:
    v = np.asarray(values, dtype=np.float64)
    if v.ndim == 1:
        v = v[None, :]
    if v.ndim != 2 or v.shape[1] != 471:
        raise ValueError(f"values must have shape (N, 471) on the working grid, got {v.shape}")
    return v


def _source_and_samples(values: np.ndarray, reflect: np.ndarray, cmf: np.ndarray):
    """XYZ of sources (N, 3) scaled to Y = 100 and of samples under them (N, S, 3)."""
    XYZ_w = values @ cmf  # (N, 3)
    k = 100.0 / XYZ_w[:, 1]
    # sample i: sum_l S(l) rho_i(l) cmf(l): (N, L) x (L, S*3) in one product
    weights = (reflect[:, :, None] * cmf[:, None, :]).reshape(reflect.shape[0], -1)  # (L, S*3)
    XYZ_s = (values @ weights).reshape(values.shape[0], reflect.shape[1], 3)
    return XYZ_w * k[:, None], XYZ_s * k[:, None, None]


def _uv(XYZ: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """CIE 1960 u, v of (..., 3) as two arrays: the arithmetic of :func:`cctkit.colorimetry.XYZ_to_uv`, unstacked."""
    d = XYZ[..., 0] + 15.0 * XYZ[..., 1] + 3.0 * XYZ[..., 2]
    return safe_divide(4.0 * XYZ[..., 0], d), safe_divide(6.0 * XYZ[..., 1], d)


def _cd(u: np.ndarray, v: np.ndarray):
    c = (4.0 - u - 10.0 * v) / v
    d = (1.708 * v + 0.404 - 1.481 * u) / v
    return c, d


def cie13_3_samples(values, reference_values, *, reflectances: np.ndarray | None = None):
    """Per-sample colour differences dE (N, S) and DC (N,) of test against given reference spectra.

    The building block of :func:`cie13_3`, exposed so that any reference (or sample set)
    can be used.  ``reflectances`` defaults to the 14 CIE 13.3 samples, (471, S).
    """
    test = _check_values(values)
    ref = _check_values(reference_values)
    rho = table("tcs_1995") if reflectances is None else np.asarray(reflectances, dtype=np.float64)
    with np.errstate(divide="ignore", invalid="ignore"):
        return _samples(test, ref, rho)


def _samples(test: np.ndarray, ref: np.ndarray, rho: np.ndarray):
    cmf = cmfs(2)
    XYZ_k, XYZ_ki = _source_and_samples(test, rho, cmf)
    XYZ_r, XYZ_ri = _source_and_samples(ref, rho, cmf)
    return _differences(XYZ_k, XYZ_ki, XYZ_r, XYZ_ri)


def _scaled(rows: np.ndarray, xyz: slice, samples: slice):
    """Source XYZ (n, 3) scaled to Y = 100 and its samples' XYZ (n, S, 3) from weight-matrix rows."""
    k = 100.0 / rows[:, xyz.start + 1]
    s = rows[:, samples]
    return rows[:, xyz] * k[:, None], s.reshape(s.shape[0], s.shape[1] // 3, 3) * k[:, None, None]  # no -1: N may be 0


def differences_from_rows(test_rows: np.ndarray, ref_rows: np.ndarray, xyz: slice, samples: slice):
    """dE (N, S) and DC (N,) from rows of :func:`.tristimulus.rendering_rows` (any scale per row)."""
    with np.errstate(divide="ignore", invalid="ignore"):
        return _differences(*_scaled(test_rows, xyz, samples), *_scaled(ref_rows, xyz, samples))


def _differences(XYZ_k, XYZ_ki, XYZ_r, XYZ_ri):
    """dE (N, S) and DC (N,): CIE 13.3 section 5, the von Kries adaptation in c, d and CIE 1964 U*V*W*."""
    (u_k, v_k), (u_ki, v_ki) = _uv(XYZ_k), _uv(XYZ_ki)
    (u_r, v_r), (u_ri, v_ri) = _uv(XYZ_r), _uv(XYZ_ri)
    dc = np.hypot(u_k - u_r, v_k - v_r)

    c_k, d_k = _cd(u_k, v_k)
    c_r, d_r = _cd(u_r, v_r)
    c_ki, d_ki = _cd(u_ki, v_ki)
    fc = (c_r / c_k)[:, None] * c_ki
    fd = (d_r / d_k)[:, None] * d_ki
    den = 16.518 + 1.481 * fc - fd
    u_a, v_a = (10.872 + 0.404 * fc - 4.0 * fd) / den, 5.520 / den  # the test samples' adapted u, v

    # U*V*W* of the samples, all relative to the reference white (u_r, v_r)
    W_t = 25.0 * np.cbrt(XYZ_ki[..., 1]) - 17.0
    W_r = 25.0 * np.cbrt(XYZ_ri[..., 1]) - 17.0
    dU = 13.0 * W_t * (u_a - u_r[:, None]) - 13.0 * W_r * (u_ri - u_r[:, None])
    dV = 13.0 * W_t * (v_a - v_r[:, None]) - 13.0 * W_r * (v_ri - v_r[:, None])
    dW = W_t - W_r
    dE = np.sqrt(dU * dU + dV * dV + dW * dW)  # the sum np.linalg.norm forms over (dU, dV, dW)
    return dE, dc


def cie13_3(values, cct_K, *, round_m: bool = True) -> Cri13Result:
    """CIE 13.3-1995 Ra and R1-R14 of spectra on the working grid.

    Parameters
    ----------
    values : array_like (N, 471)
        Spectral power of the test sources on 360-830 nm at 1 nm [any unit].
    cct_K : array_like (N,)
        Correlated colour temperature of each test source [K] (e.g. from
        :func:`cctkit.cct.cct_duv`), which selects the reference.
    round_m
        Round the daylight M1, M2 to three decimals (see :mod:`.reference`).

    Returns
    -------
    Cri13Result

    References
    ----------
    CIE 13.3-1995, sections 5 and 6; test colour samples of its Table 1 (TCS01-TCS14).
    """
    test = _check_values(values)
    T = np.atleast_1d(np.asarray(cct_K, dtype=np.float64))
    if T.shape != (test.shape[0],):
        raise ValueError(f"cct_K must have shape ({test.shape[0]},) to match values, got {T.shape}")
    from .reference import _as_cct
    from .tristimulus import rendering_rows

    rows = rendering_rows(test, _as_cct(T), which="cri", round_m=round_m)
    return from_rows(rows, T)


def from_rows(rows: dict, T: np.ndarray) -> Cri13Result:
    """:class:`Cri13Result` from :func:`.tristimulus.rendering_rows` (the reference built at tristimulus level)."""
    from .reference import _kinds
    from .tristimulus import column

    dE, dc = differences_from_rows(rows["test"], rows["ref13"], column(rows, "xyz2"), column(rows, "samples2"))
    R = 100.0 - 4.6 * dE
    Ra = R[:, :8].mean(axis=1)
    return Cri13Result(Ra=Ra, R=R, dE=dE, dc=dc, valid=dc < DC_LIMIT, cct_K=T, reference=_kinds(rows["m13"]))
