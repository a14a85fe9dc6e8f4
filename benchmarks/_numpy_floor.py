"""A tight numpy version of analyse()'s main arithmetic: the floor cctkit is measured against.

No dataclasses, no flags, no records, no validation: one product of the spectra with every
weighting function (photometric, photon, PPF and alpha-opic totals among its columns), CCT/Duv, both colour-rendering references at tristimulus level and
CIE 13.3 / CIE 224 / TM-30 written as plain array expressions.  Shape and dominant
wavelength are called from cctkit on both sides (their arithmetic is not duplicated here),
and so is the CCT solver (``bench_cct.py`` measures it against its own floor).  The
weighting tables come from cctkit.tables (data, not code under test).
"""

from __future__ import annotations

import numpy as np

from cctkit.alphaopic import D65_ELR_W_PER_LM, action_spectra
from cctkit.cct import cct_duv
from cctkit.constants import KM_LM_PER_W, WAVELENGTH_NM
from cctkit.dominant import dominant_wavelength
from cctkit.planck import spectral_exitance
from cctkit.rendering.reference import daylight_xy
from cctkit.shape import spectral_shape
from cctkit.tables import cmfs, table

_M_CAT = np.array([[0.7328, 0.4296, -0.1624], [-0.7036, 1.6975, 0.0061], [0.0030, 0.0136, 0.9834]])
_M_HPE = np.array([[0.38971, 0.68898, -0.07868], [-0.22981, 1.18340, 0.04641], [0.0, 0.0, 1.0]])
_MX = (_M_HPE @ np.linalg.inv(_M_CAT)).T
_K = 1.0 / 501.0
_FL = 0.2 * _K**4 * 500.0 + 0.1 * (1.0 - _K**4) ** 2 * np.cbrt(500.0)


def weights() -> np.ndarray:
    """(471, 3 + 42 + 3 + 297 + 1 + 2 + 1 + 5): XYZ 2 deg, TCS, XYZ 10 deg 380-780, CES, Y10, V', photons,
    photons over 400-700 nm (PPF), the five alpha-opic action spectra."""
    L = WAVELENGTH_NM.shape[0]
    c2, c10 = cmfs(2), cmfs(10) * ((WAVELENGTH_NM >= 380) & (WAVELENGTH_NM <= 780))[:, None]
    tcs, ces = table("tcs_1995"), table("ces_2017")
    photons = (WAVELENGTH_NM * 1e-9 / (6.62607015e-34 * 299792458.0 * 6.02214076e23) * 1e6)[:, None]
    par = ((WAVELENGTH_NM >= 400) & (WAVELENGTH_NM <= 700))[:, None]
    return np.ascontiguousarray(
        np.concatenate(
            [
                c2,
                (tcs[:, :, None] * c2[:, None, :]).reshape(L, -1),
                c10,
                (ces[:, :, None] * c10[:, None, :]).reshape(L, -1),
                cmfs(10)[:, 1:2],
                table("v_scotopic")[:, None],
                photons,
                photons * par,
                action_spectra(),
            ],
            axis=1,
        )
    )


def _ln1p(x: np.ndarray) -> np.ndarray:
    """ln(1 + x) as analyse() takes it: log(1 + x) where x >= 1e-4 (a third of log1p's time), log1p below."""
    out = np.log(1.0 + x)
    small = x < 1e-4
    if small.any():
        np.log1p(x, out=out, where=small)
    return out


def _cam(xyz_s, xyz_w):
    gain = xyz_w[:, 1:2] / (xyz_w @ _M_CAT.T)  # D = 1
    per = (_M_CAT.T * gain[:, None, :]) @ _MX

    def comp(x):
        p = np.exp(0.42 * np.log((_FL / 100.0) * np.abs(x)))
        return np.copysign(400.0 * p / (27.13 + p), x) + 0.1

    n = 20.0 / xyz_w[:, 1]
    nbb = (0.725 * n**-0.2)[:, None]
    w = comp((xyz_w[:, None, :] @ per)[:, 0, :])
    A_w = (2 * w[:, 0] + w[:, 1] + w[:, 2] / 20 - 0.305) * nbb[:, 0]
    r = comp(xyz_s @ per)
    a = r[..., 0] - 12 * r[..., 1] / 11 + r[..., 2] / 11
    b = (r[..., 0] + r[..., 1] - 2 * r[..., 2]) / 9
    ab = np.sqrt(a * a + b * b)  # as analyse(): hypot's overflow guard is not needed for a, b ~1-100
    A = (2 * r[..., 0] + r[..., 1] + r[..., 2] / 20 - 0.305) * nbb
    J = 100 * np.exp((0.69 * (1.48 + np.sqrt(n)))[:, None] * np.log(np.maximum(A / A_w[:, None], 0)))
    et = 0.25 * ((a * np.cos(2.0) - b * np.sin(2.0)) / ab + 3.8)
    t = (50000 / 13 * nbb * et * ab) / (r[..., 0] + r[..., 1] + 1.05 * r[..., 2])
    M = np.exp(0.9 * np.log(t)) * np.sqrt(J / 100) * ((1.64 - 0.29**n) ** 0.73 * _FL**0.25)[:, None]
    s = _ln1p(0.0228 * M) / (0.0228 * ab)
    return np.stack([1.7 * J / (1 + 0.007 * J), s * a, s * b], axis=-1)


def _uv(xyz):
    d = xyz[..., 0] + 15 * xyz[..., 1] + 3 * xyz[..., 2]
    return 4 * xyz[..., 0] / d, 6 * xyz[..., 1] / d


def floor(values: np.ndarray, W: np.ndarray, day_rows: np.ndarray) -> dict[str, np.ndarray]:
    """Every number of the main measures for spectra (N, 471) radiant flux, plainly."""
    n = values.shape[0]
    R = values @ W
    xyz = R[:, 0:3] * KM_LM_PER_W
    s = xyz.sum(1)
    xy = xyz[:, :2] / s[:, None]
    u, v = _uv(xyz)
    c = cct_duv(np.stack([u, v], -1))
    out = {
        "xy": xy,
        "cct": c.cct_K,
        "duv": c.duv,
        "flux": xyz[:, 1],
        "ler": xyz[:, 1] / values.sum(1),
        "sp": 1700.06 * R[:, 346] / xyz[:, 1],
        "photons": R[:, 347],
        "ppf": R[:, 348],
        "uvp": np.stack([u, 1.5 * v], -1),
    }
    alpha = R[:, 349:354]
    elr = alpha / xyz[:, 1:2]
    out.update(alpha=alpha, alpha_elr=elr, alpha_edi=alpha / D65_ELR_W_PER_LM, alpha_der=elr / D65_ELR_W_PER_LM)
    out["shape"] = spectral_shape(values)
    out["dominant"] = dominant_wavelength(xy)
    T = np.where(
        np.isfinite(c.cct_K) & (np.abs(c.duv) <= 0.05) & (c.cct_K >= 1000) & (c.cct_K <= 25000), c.cct_K, np.nan
    )
    # references at tristimulus level, each computed for the spectra that have it only
    low = T < 5000
    P = spectral_exitance(T[low]) @ W[:, :346]
    hi = T >= 4000
    dxy = daylight_xy(T[hi])
    x, y = dxy[:, 0], dxy[:, 1]
    M = 0.0241 + 0.2562 * x - 0.7341 * y
    coef = np.stack(
        [
            np.ones_like(x),
            np.round((-1.3515 - 1.7703 * x + 5.9114 * y) / M, 3),
            np.round((0.0300 - 31.4424 * x + 30.0717 * y) / M, 3),
        ],
        -1,
    )
    D = coef @ day_rows
    r13 = np.full((n, 346), np.nan)
    r13[low] = P
    r13[T >= 5000] = D[T[hi] >= 5000]
    m = np.clip((5000 - T) / 1000, 0, 1)
    Pn, Dn = P * (100 / P[:, 345:346]), D * (100 / D[:, 345:346])
    r224 = np.full((n, 346), np.nan)
    r224[m >= 1] = Pn[m[low] >= 1]
    r224[m <= 0] = Dn[m[hi] <= 0]
    mix = (m > 0) & (m < 1)
    mb = m[mix][:, None]
    r224[mix] = mb * Pn[mix[low]] + (1 - mb) * Dn[mix[hi]]

    # CIE 13.3
    def scaled(rows, a, b):
        k = 100 / rows[:, a + 1]
        return rows[:, a : a + 3] * k[:, None], rows[:, a + 3 : b].reshape(n, -1, 3) * k[:, None, None]

    (wk, sk), (wr, sr) = scaled(R, 0, 45), scaled(r13, 0, 45)
    uk, vk = _uv(wk)
    ur, vr = _uv(wr)
    uki, vki = _uv(sk)
    uri, vri = _uv(sr)
    ck, dk = (4 - uk - 10 * vk) / vk, (1.708 * vk + 0.404 - 1.481 * uk) / vk
    cr, dr = (4 - ur - 10 * vr) / vr, (1.708 * vr + 0.404 - 1.481 * ur) / vr
    cki, dki = (4 - uki - 10 * vki) / vki, (1.708 * vki + 0.404 - 1.481 * uki) / vki
    fc, fd = (cr / ck)[:, None] * cki, (dr / dk)[:, None] * dki
    den = 16.518 + 1.481 * fc - fd
    ua, va = (10.872 + 0.404 * fc - 4 * fd) / den, 5.520 / den
    Wt, Wr = 25 * np.cbrt(sk[..., 1]) - 17, 25 * np.cbrt(sr[..., 1]) - 17
    dE = np.sqrt(
        (13 * Wt * (ua - ur[:, None]) - 13 * Wr * (uri - ur[:, None])) ** 2
        + (13 * Wt * (va - vr[:, None]) - 13 * Wr * (vri - vr[:, None])) ** 2
        + (Wt - Wr) ** 2
    )
    out["R"] = 100 - 4.6 * dE
    out["Ra"] = out["R"][:, :8].mean(1)
    out["dc"] = np.hypot(uk - ur, vk - vr)
    # CIE 224 / TM-30
    (wk, sk), (wr, sr) = scaled(R[:, 45:346], 0, 300), scaled(r224[:, 45:346], 0, 300)
    Jt, Jr = _cam(sk, wk), _cam(sr, wr)
    dE = np.linalg.norm(Jt - Jr, axis=-1)
    out["Rf_i"] = 10 * _ln1p(np.exp((100 - 6.73 * dE) / 10))
    out["Rf"] = 10 * _ln1p(np.exp((100 - 6.73 * dE.mean(1)) / 10))
    hue = np.arctan2(Jr[..., 2], Jr[..., 1]) % (2 * np.pi)
    bins = np.minimum((np.nan_to_num(hue) / (np.pi / 8)).astype(np.int64), 15) + 16 * np.arange(n)[:, None]

    def bsum(w):
        return np.bincount(bins.ravel(), weights=w.ravel(), minlength=16 * n).reshape(n, 16)

    cnt = bsum(np.ones(bins.shape))
    at = np.stack([bsum(Jt[..., 1]), bsum(Jt[..., 2])], -1) / cnt[..., None]
    ar = np.stack([bsum(Jr[..., 1]), bsum(Jr[..., 2])], -1) / cnt[..., None]

    def area(p):
        return 0.5 * np.sum(p[..., 0] * np.roll(p[..., 1], -1, -1) - np.roll(p[..., 0], -1, -1) * p[..., 1], -1)

    out["Rg"] = 100 * area(at) / area(ar)
    th = (np.arange(16) + 0.5) * np.pi / 8
    sh = at - ar
    Cr = np.hypot(ar[..., 0], ar[..., 1])
    out["Rcs"] = (sh[..., 0] * np.cos(th) + sh[..., 1] * np.sin(th)) / Cr
    out["Rhs"] = (-sh[..., 0] * np.sin(th) + sh[..., 1] * np.cos(th)) / Cr
    out["Rf_h"] = 10 * _ln1p(np.exp((100 - 6.73 * bsum(dE) / cnt) / 10))
    return out


#: Blockings the benchmark times the floor with (0: all spectra at once); it takes the fastest.  Blocks
#: keep the temporaries in the processor's cache, which pays on a shared machine (analyse() works in
#: blocks too: chunks of 4096 spectra, worked through in blocks of 512).  512 was added when analyse()
#: moved to 512-spectrum blocks: the floor at 512 was faster than at 1024 in 7 of 10 side-by-side runs.
FLOOR_BLOCKS = (0, 4096, 1024, 512)


def floor_blocks(values: np.ndarray, W: np.ndarray, day_rows: np.ndarray, block: int) -> list[dict[str, np.ndarray]]:
    """:func:`floor` of ``values`` in blocks of ``block`` spectra (all at once for 0)."""
    step = block or values.shape[0]
    return [floor(values[i : i + step], W, day_rows) for i in range(0, values.shape[0], step)]


def prepare():
    W = weights()
    return W, table("d_basis").T @ W[:, :346]
