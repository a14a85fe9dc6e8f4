"""Correlated colour temperature and Duv.

``method="exact"`` (the default) solves the CIE 15:2018 section 9.5 definition
directly: CCT is the temperature of the point of the Planckian locus (as computed
in :mod:`cctkit.locus`) nearest to the test chromaticity in the CIE 1960 uv plane,
and Duv the signed distance to it, positive above the locus (towards larger v).

How the exact solver works, vectorised over any leading shape:

1. The locus is tabulated once in reciprocal temperature m = 1e6/T [MK^-1]
   ("mired"), with exact values uv(m) and exact derivatives d(uv)/dm from the
   analytic temperature derivative of Planck's law.
2. For each point p the nearest locus point is the root of
   g(m) = (p - uv(m)) . uv'(m); a vectorised bisection over the table nodes
   brackets it between two nodes (for many points a 2-D lookup of uv guesses the
   node, and the sign change of g verifies it: the same node, found faster).
3. Within the bracket, uv(m) is the cubic Hermite interpolant of the exact node
   values and derivatives (written once per point as a cubic in the fraction t of
   the segment, evaluated by Horner's rule), and Newton's method on g finds the root.

With nodes every 0.25 mired the interpolant is accurate to far better than
1 mK over 1000-25000 K (see ``tests/test_cct.py`` for the measured errors).

``method="ohno2013"`` and ``method="robertson1968"`` are the published
approximations, kept for comparison with datasheets that quote them.  Our
Ohno 2013 uses one 1 % table (no cascade); measured against the exact solver
(``benchmarks/bench_cct.py``) it is within 2.8 K (3.6e-4 relative) over
1000-20000 K and |Duv| <= 0.05, the largest errors in the triangular branch
(|Duv| < 0.002) at high CCT.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache

import numpy as np

from .constants import DUV_LIMIT
from .locus import T_MAX_K, T_MIN_K, planckian_uv, planckian_uv_dT, uv_from_cct_duv
from .planck import resolve_c2

__all__ = ["CctResult", "cct_duv", "uv_from_cct_duv", "METHODS", "table_range_K", "table_range_text"]

METHODS = ("exact", "ohno2013", "robertson1968")

_M_LO = 1e6 / 200_000.0  # table a little wider than the reported range, so the bracket exists
_M_HI = 1e6 / 900.0
_H_MIRED = 0.25
_NEWTON_STEPS = 2


@dataclass(frozen=True)
class CctResult:
    """CCT and Duv of each chromaticity (arrays of the input's leading shape).

    ``cct_K`` is NaN where the nearest locus point lies outside 1000-100000 K;
    ``in_domain`` is False there and where |Duv| > 0.05 (CIE 15:2018: CCT is then
    not meaningful, though the number is still returned).
    """

    cct_K: np.ndarray
    duv: np.ndarray
    method: str = "exact"

    @property
    def in_domain(self) -> np.ndarray:
        return np.isfinite(self.cct_K) & (np.abs(self.duv) <= DUV_LIMIT)


@dataclass(frozen=True)
class _Table:
    m: np.ndarray  # (K,) mired nodes
    u: np.ndarray  # (K,)
    v: np.ndarray
    du: np.ndarray  # (K,) du/dm
    dv: np.ndarray
    h: float


@lru_cache(maxsize=8)
def _table(observer: int, c2: float) -> _Table:
    from .tables import cached_arrays

    def build() -> dict[str, np.ndarray]:
        m = np.arange(_M_LO, _M_HI + _H_MIRED, _H_MIRED)
        T = 1e6 / m
        uv, duv_dT = planckian_uv_dT(T, observer=observer, c2=c2)
        d = duv_dT * (-(T**2) / 1e6)[:, None]  # dT/dm = -T^2 / 1e6
        return {"m": m, "u": uv[:, 0], "v": uv[:, 1], "du": d[:, 0], "dv": d[:, 1]}

    arr = cached_arrays(f"cct-locus-{observer}-{c2!r}-h{_H_MIRED}", build, ("m", "u", "v", "du", "dv"))
    cols = [np.ascontiguousarray(arr[k]) for k in ("m", "u", "v", "du", "dv")]
    for a in cols:
        a.setflags(write=False)
    m, u, v, du, dv = cols
    return _Table(m, u, v, du, dv, h=_H_MIRED)


def _segments(tab: _Table, k: np.ndarray) -> tuple[tuple[np.ndarray, ...], tuple[np.ndarray, ...]]:
    """The table values at both ends of segment k, gathered once: (u0, u1, du0, du1), (v0, v1, dv0, dv1)."""
    k1 = k + 1
    return ((tab.u[k], tab.u[k1], tab.du[k], tab.du[k1]), (tab.v[k], tab.v[k1], tab.dv[k], tab.dv[k1]))


def _cubic(tab: _Table, seg) -> tuple[tuple[np.ndarray, ...], tuple[np.ndarray, ...]]:
    """The cubic Hermite interpolant of the locus on the segments ``seg`` (:func:`_segments`) as
    c0 + t (c1 + t (c2 + t c3)) in the fraction t of the segment: (c0, c1, c2, c3) for u and for v."""
    h = tab.h
    out = []
    for p0, p1, d0, d1 in seg:
        m0, m1 = d0 * h, d1 * h  # derivatives with respect to t
        dp = p1 - p0
        out.append((p0, m0, 3 * dp - 2 * m0 - m1, m0 + m1 - 2 * dp))
    return out[0], out[1]


def _value_slope(c, t: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The cubic ``c`` (:func:`_cubic`) and its derivative with respect to t, at t."""
    c0, c1, c2, c3 = c
    return c0 + t * (c1 + t * (c2 + t * c3)), c1 + t * (2 * c2 + 3 * t * c3)


def _g(tab: _Table, k: np.ndarray, pu: np.ndarray, pv: np.ndarray) -> np.ndarray:
    """g at node k: (p - uv(m_k)) . uv'(m_k), positive below the foot point's mired, negative above."""
    return (pu - tab.u[k]) * tab.du[k] + (pv - tab.v[k]) * tab.dv[k]


def _bisect(tab: _Table, pu: np.ndarray, pv: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Node k with g(k) >= 0 > g(k + 1) by bisection over the whole table, and whether a bracket exists."""
    K = tab.m.shape[0]
    n = pu.shape[0]
    lo = np.zeros(n, dtype=np.intp)
    hi = np.full(n, K - 1, dtype=np.intp)
    # g falls as m rises near the locus; a point whose foot is outside the table has no sign change.
    bracketed = (_g(tab, lo, pu, pv) >= 0) & (_g(tab, hi, pu, pv) < 0)
    for _ in range(int(np.ceil(np.log2(K)))):
        mid = (lo + hi) >> 1
        up = _g(tab, mid, pu, pv) >= 0
        lo = np.where(up, mid, lo)
        hi = np.where(up, hi, mid)
    return np.minimum(lo, K - 2), bracketed


@dataclass(frozen=True)
class _Grid:
    origin: tuple[float, float]  # u, v of the grid's corner
    inv_step: float  # cells per unit of u and of v
    cells: int  # cells per side
    lo: np.ndarray  # (cells * cells,) lowest node a point of the cell can bracket
    span: np.ndarray  # (cells * cells,) nodes to search from lo (large where the cell needs the full search)
    cell: np.ndarray  # (cells * cells,) int32 lo * 64 + (nodes a bracket may start at) - 1; -1: full search
    foot: np.ndarray  # ((cells + 1) ** 2,) float32 mired of the nearest locus point at each corner (NaN: none)


_GRID_CELLS = 512
_GRID_SPAN = 32  # a cell whose bracket can lie among more nodes than this is searched in full
_GRID_MIN_POINTS = 4096  # fewer points are searched in full: building the lookup costs ~2e5 points' search


@lru_cache(maxsize=8)
def _grid(observer: int, c2: float) -> _Grid:
    """A 2-D lookup of uv: for each cell, the few table nodes its points' brackets lie among.

    Built once from the full bisection at the cell corners (the bracket node is monotone along
    the locus and moves by less than a node between neighbouring corners, so it is widened by
    one node each side), with the mired of each corner's nearest locus point, from which a
    point's node is guessed by bilinear interpolation.  Every bracket found through it is
    verified, and a point whose cell or verification fails is searched in full, so the result
    is the full search's.
    """
    tab = _table(observer, c2)
    G = _GRID_CELLS

    def build() -> dict[str, np.ndarray]:
        pad = 0.07  # beyond |Duv| = 0.05 everywhere along the locus
        u0, v0 = float(tab.u.min()) - pad, float(tab.v.min()) - pad
        size = max(float(tab.u.max()) - u0, float(tab.v.max()) - v0) + pad
        step = size / G
        edges = u0 + step * np.arange(G + 1), v0 + step * np.arange(G + 1)
        cu, cv = (a.ravel() for a in np.meshgrid(*edges, indexing="ij"))
        k, ok = _bisect(tab, cu, cv)
        foot = _solve(tab, k, ok, cu, cv)[2]  # the mired of each corner's nearest locus point
        k = np.where(ok, k, -(10**9)).reshape(G + 1, G + 1)
        corners = np.stack([k[:-1, :-1], k[1:, :-1], k[:-1, 1:], k[1:, 1:]])
        K = tab.m.shape[0]
        lo = np.clip(corners.min(axis=0) - 1, 0, K - 2)
        hi = np.clip(corners.max(axis=0) + 2, 1, K - 1)
        span = np.where(corners.min(axis=0) < 0, np.iinfo(np.int32).max, hi - lo)
        return {
            "lo": lo.ravel().astype(np.intp),
            "span": span.ravel().astype(np.intp),
            "geometry": np.array([u0, v0, 1.0 / step]),
            "foot": np.where(ok, foot, np.nan),
        }

    from .tables import cached_arrays

    # cached beside the locus table: building it costs ~0.2 s, a worker's or a short command's whole share
    arr = cached_arrays(f"cct-grid-{observer}-{c2!r}-h{_H_MIRED}-g{G}-b", build, ("lo", "span", "geometry", "foot"))
    u0, v0, inv_step = (float(x) for x in arr["geometry"])
    lo, span = arr["lo"].astype(np.intp), arr["span"].astype(np.intp)
    # small tables, as few cache lines per point as may be: the cell's node range packed in one int32
    # (lo * 64 + nodes - 1, -1 where the cell needs the full search), the foot mired in float32 (a guess)
    cell = np.where(span <= _GRID_SPAN, lo * 64 + np.minimum(span, _GRID_SPAN) - 1, -1).astype(np.int32)
    foot = np.ascontiguousarray(arr["foot"], dtype=np.float32)
    return _Grid((u0, v0), inv_step, G, lo, span, cell, foot)


def _bracket(tab: _Table, grid: _Grid, pu: np.ndarray, pv: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """:func:`_bisect`'s node and bracket flag, through the 2-D lookup (full search where it cannot say)."""
    k, bracketed, _ = _bracket_segments(tab, grid, pu, pv)
    return k, bracketed


def _bracket_segments(tab: _Table, grid: _Grid, pu: np.ndarray, pv: np.ndarray):
    """:func:`_bracket`, with the table values of the segments (:func:`_segments`) and g at both ends.

    The node is guessed from the corners' foot mired (bilinear in the cell), kept within the
    cell's node range, and verified by the sign change of g at its two ends, from the values
    the Newton steps need anyway; the few points whose guess fails are searched in full.
    """
    G = grid.cells
    with np.errstate(invalid="ignore"):
        fu = (pu - grid.origin[0]) * grid.inv_step
        fv = (pv - grid.origin[1]) * grid.inv_step
        iu = np.floor(fu)
        iv = np.floor(fv)
        inside = (iu >= 0) & (iu < G) & (iv >= 0) & (iv < G)
        a = fu - iu
        b = fv - iv
    iu_i = np.where(inside, iu, 0.0).astype(np.intp)
    iv_i = np.where(inside, iv, 0.0).astype(np.intp)
    cell = iu_i * G + iv_i
    corner = cell + iu_i  # (cells + 1) corners per row
    f = grid.foot
    m0 = f[corner]
    m1 = f[corner + 1]
    m0 += a * (f[corner + G + 1] - m0)  # along u at v of the cell's lower edge ...
    m1 += a * (f[corner + G + 2] - m1)  # ... and of its upper edge
    with np.errstate(invalid="ignore"):
        m0 += b * (m1 - m0)
        m0 -= tab.m[0]
        m0 *= 1.0 / tab.h
        guess = np.where(np.isfinite(m0), m0, -1.0)
    packed = grid.cell[cell]
    lo = packed >> 6
    k = np.clip(guess, lo, lo + (packed & 63)).astype(np.intp)  # floor: the guess is >= lo >= 0 here
    seg = _segments(tab, k)
    (u0, u1, du0, du1), (v0, v1, dv0, dv1) = seg
    gk = (pu - u0) * du0 + (pv - v0) * dv0  # _g at k and k + 1, from the gathered values
    gk1 = (pu - u1) * du1 + (pv - v1) * dv1
    bracketed = inside & (packed >= 0) & (gk >= 0) & (gk1 < 0)
    rest = np.flatnonzero(~bracketed)
    if rest.size:
        pr, qr = pu[rest], pv[rest]
        kr, bracketed[rest] = _bisect(tab, pr, qr)
        k[rest] = kr
        (u0r, u1r, du0r, du1r), (v0r, v1r, dv0r, dv1r) = _segments(tab, kr)
        for full, part in zip((u0, u1, du0, du1, v0, v1, dv0, dv1), (u0r, u1r, du0r, du1r, v0r, v1r, dv0r, dv1r)):
            full[rest] = part
        gk[rest] = (pr - u0r) * du0r + (qr - v0r) * dv0r
        gk1[rest] = (pr - u1r) * du1r + (qr - v1r) * dv1r
    return k, bracketed, (seg, gk, gk1)


#: Points solved at once: the solver's temporaries of a block stay in the processor's cache.
_BLOCK = 16384


def _exact(uv: np.ndarray, observer: int, c2: float) -> tuple[np.ndarray, np.ndarray]:
    tab = _table(observer, c2)
    p = uv.reshape(-1, 2)
    n = p.shape[0]
    grid = _grid(observer, c2) if n >= _GRID_MIN_POINTS else None
    cct = np.empty(n)
    duv = np.empty(n)
    for s in range(0, n, _BLOCK):  # each value depends on its own point only: blocks change no bit
        pu = np.ascontiguousarray(p[s : s + _BLOCK, 0])
        pv = np.ascontiguousarray(p[s : s + _BLOCK, 1])
        if grid is None:
            k, bracketed = _bisect(tab, pu, pv)  # the lookup gives these same nodes (tests/test_cct_bracket.py)
            cct[s : s + _BLOCK], duv[s : s + _BLOCK], _ = _solve(tab, k, bracketed, pu, pv)
        else:
            k, bracketed, found = _bracket_segments(tab, grid, pu, pv)
            cct[s : s + _BLOCK], duv[s : s + _BLOCK], _ = _solve(tab, k, bracketed, pu, pv, found)
    shape = uv.shape[:-1]
    return cct.reshape(shape), duv.reshape(shape)


def _solve(tab: _Table, k: np.ndarray, bracketed: np.ndarray, pu: np.ndarray, pv: np.ndarray, found=None):
    """CCT [K], Duv and the foot point's mired of points bracketed at node k: Hermite + Newton."""
    if found is None:
        seg = _segments(tab, k)
        (u0, u1, du0, du1), (v0, v1, dv0, dv1) = seg
        gk = (pu - u0) * du0 + (pv - v0) * dv0  # _g at k and k + 1, from the gathered values
        gk1 = (pu - u1) * du1 + (pv - v1) * dv1
    else:
        seg, gk, gk1 = found
    with np.errstate(divide="ignore", invalid="ignore"):
        t = np.clip(np.where(gk != gk1, gk / (gk - gk1), 0.5), 0.0, 1.0)
    cu, cv = _cubic(tab, seg)
    for _ in range(_NEWTON_STEPS):  # on g as a function of t (m = m_k + t h: the same root)
        fu, du = _value_slope(cu, t)
        fv, dv = _value_slope(cv, t)
        ru, rv = pu - fu, pv - fv
        gt = ru * du + rv * dv
        dg = -(du * du + dv * dv) + ru * (2 * cu[2] + 6 * t * cu[3]) + rv * (2 * cv[2] + 6 * t * cv[3])
        with np.errstate(divide="ignore", invalid="ignore"):
            t = t - np.where(dg != 0, gt / dg, 0.0)
    fu, du = _value_slope(cu, t)
    fv, dv = _value_slope(cv, t)
    m = tab.m[k] + t * tab.h
    cct = 1e6 / m
    # Normal pointing above: d(uv)/dm points towards *lower* T, so n = (-dv, du) / |d|.
    norm = np.hypot(du, dv)
    duv = ((pu - fu) * -dv + (pv - fv) * du) / norm
    finite = np.isfinite(pu) & np.isfinite(pv)
    outside = ~bracketed | (cct < T_MIN_K * (1 - 1e-9)) | (cct > T_MAX_K * (1 + 1e-9)) | ~finite
    cct = np.where(outside, np.nan, cct)
    # A point whose nearest locus point lies outside the table (below 900 K, above 200000 K) has no
    # root to find: its Duv is withheld (NaN), never taken from the end of the table.
    duv = np.where(finite & bracketed, duv, np.nan)
    return cct, duv, m


def table_range_K(method: str) -> tuple[float, float]:
    """Temperatures [K] the table of ``method`` spans; outside it CCT and Duv are NaN (withheld)."""
    if method == "exact":
        return (1e6 / _M_HI, 1e6 / _M_LO)
    if method == "ohno2013":
        n = int(np.ceil(np.log(T_MAX_K * 1.02 / (T_MIN_K * 0.98)) / np.log(1.01))) + 1
        return (T_MIN_K * 0.98, T_MIN_K * 0.98 * 1.01 ** (n - 1))
    if method == "robertson1968":
        return (1e6 / 600.0, np.inf)  # Wyszecki & Stiles Table 1(3.11): 0-600 mired
    raise ValueError(f"method must be one of {', '.join(METHODS)}, got {method!r}")


def table_range_text(method: str) -> str:
    """:func:`table_range_K` for people: ``"900-200000 K"``, ``"1667 K and above"``."""
    lo, hi = table_range_K(method)
    return f"{lo:.0f} K and above" if not np.isfinite(hi) else f"{lo:.0f}-{hi:.0f} K"


# ----------------------------------------------------------------------------- Ohno 2013


@lru_cache(maxsize=8)
def _ohno_table(observer: int, c2: float) -> tuple[np.ndarray, np.ndarray]:
    # Ohno (2013), LEUKOS 10(1): a locus table in 1 % steps of T over the working range.
    n = int(np.ceil(np.log(T_MAX_K * 1.02 / (T_MIN_K * 0.98)) / np.log(1.01))) + 1
    T = T_MIN_K * 0.98 * 1.01 ** np.arange(n)
    uv = planckian_uv(T, observer=observer, c2=c2)
    return T, uv


def _ohno2013(uv: np.ndarray, observer: int, c2: float, chunk: int = 8192) -> tuple[np.ndarray, np.ndarray]:
    T_tab, uv_tab = _ohno_table(observer, c2)
    p = uv.reshape(-1, 2)
    cct = np.empty(p.shape[0])
    duv = np.empty(p.shape[0])
    n_tab = T_tab.shape[0]
    for s in range(0, p.shape[0], chunk):  # chunks bound memory; each chunk is vectorised
        q = p[s : s + chunk]
        d = np.sqrt(((q[:, None, :] - uv_tab[None, :, :]) ** 2).sum(-1))
        i_near = np.argmin(d, axis=1)
        i = np.clip(i_near, 1, n_tab - 2)
        rows = np.arange(q.shape[0])
        dm1, d0, dp1 = d[rows, i - 1], d[rows, i], d[rows, i + 1]
        Tm1, T0, Tp1 = T_tab[i - 1], T_tab[i], T_tab[i + 1]
        # triangular solution
        l = np.linalg.norm(uv_tab[i + 1] - uv_tab[i - 1], axis=1)
        x = (dm1**2 - dp1**2 + l**2) / (2 * l)
        T_tri = Tm1 + (Tp1 - Tm1) * x / l
        v_tx = uv_tab[i - 1, 1] + (uv_tab[i + 1, 1] - uv_tab[i - 1, 1]) * x / l
        sign = np.sign(q[:, 1] - v_tx)
        duv_tri = sign * np.sqrt(np.maximum(dm1**2 - x**2, 0.0))
        # parabolic solution
        X = (Tp1 - T0) * (Tm1 - Tp1) * (T0 - Tm1)
        a = (Tm1 * (dp1 - d0) + T0 * (dm1 - dp1) + Tp1 * (d0 - dm1)) / X
        b = -(Tm1**2 * (dp1 - d0) + T0**2 * (dm1 - dp1) + Tp1**2 * (d0 - dm1)) / X
        c = -(dm1 * (Tp1 - T0) * T0 * Tp1 + d0 * (Tm1 - Tp1) * Tm1 * Tp1 + dp1 * (T0 - Tm1) * Tm1 * T0) / X
        T_par = -b / (2 * a) * 0.99991  # the paper's correction factor
        duv_par = sign * (a * T_par**2 + b * T_par + c)
        use_tri = np.abs(duv_tri) < 0.002
        # nearest table point at an end of the table: the true foot may lie beyond it, so withhold both
        at_end = (i_near == 0) | (i_near == n_tab - 1)
        cct[s : s + chunk] = np.where(at_end, np.nan, np.where(use_tri, T_tri, T_par))
        duv[s : s + chunk] = np.where(at_end, np.nan, np.where(use_tri, duv_tri, duv_par))
    out = (cct < T_MIN_K) | (cct > T_MAX_K) | ~np.isfinite(cct)
    cct = np.where(out, np.nan, cct)
    shape = uv.shape[:-1]
    return cct.reshape(shape), duv.reshape(shape)


# ----------------------------------------------------------------------------- Robertson 1968


def _robertson_table() -> np.ndarray:
    """Robertson's isotemperature lines (mired, u, v, slope t) as published in
    Wyszecki & Stiles (1982) Table 1(3.11), taken from colour-science's dataset."""
    from colour.temperature.robertson1968 import DATA_ISOTEMPERATURE_LINES_ROBERTSON1968

    return np.asarray(DATA_ISOTEMPERATURE_LINES_ROBERTSON1968, dtype=np.float64)


def _robertson1968(uv: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    tab = _robertson_table()
    mired, ut, vt, tt = tab.T
    p = uv.reshape(-1, 2)
    norm = np.sqrt(1.0 + tt**2)
    # signed distance of p from each isotemperature line (Robertson 1968, eq. 4)
    d = ((p[:, 1:2] - vt) - tt * (p[:, 0:1] - ut)) / norm
    change = (d[:, :-1] * d[:, 1:]) <= 0
    has = change.any(axis=1)
    i = np.argmax(change, axis=1)
    rows = np.arange(p.shape[0])
    d0, d1 = d[rows, i], d[rows, i + 1]
    with np.errstate(divide="ignore", invalid="ignore"):
        f = d0 / (d0 - d1)
    m = mired[i] + f * (mired[i + 1] - mired[i])
    with np.errstate(divide="ignore"):
        cct = np.where(has & (m > 0), 1e6 / m, np.nan)
    # Duv: distance to the locus point interpolated between the two table points, signed by v.
    u_l = ut[i] + f * (ut[i + 1] - ut[i])
    v_l = vt[i] + f * (vt[i + 1] - vt[i])
    duv = np.sign(p[:, 1] - v_l) * np.hypot(p[:, 0] - u_l, p[:, 1] - v_l)
    # outside the table (below 1667 K): no isotemperature lines bracket the point, nothing is computed
    duv = np.where(has, duv, np.nan)
    cct = np.where((cct < T_MIN_K) | (cct > T_MAX_K), np.nan, cct)
    shape = uv.shape[:-1]
    return cct.reshape(shape), duv.reshape(shape)


# ----------------------------------------------------------------------------- public


def cct_duv(uv, *, method: str = "exact", observer: int = 2, c2: float | str = "cie") -> CctResult:
    """CCT [K] and Duv of CIE 1960 uv chromaticities.

    Parameters
    ----------
    uv : array_like (..., 2)
        CIE 1960 UCS chromaticity coordinates.
    method
        ``"exact"`` (default; nearest locus point, CIE 15:2018 section 9.5),
        ``"ohno2013"`` (Ohno, LEUKOS 10(1), 2014, combined triangular/parabolic) or
        ``"robertson1968"`` (Robertson, JOSA 58(11), 1968, with the Wyszecki & Stiles table).
    observer
        CIE 1931 2 deg (``2``, the CCT convention) or CIE 1964 10 deg (``10``).
    c2
        Second radiation constant of the locus (``"cie"`` = 1.4388e-2 m K).

    Returns
    -------
    CctResult
        ``cct_K`` [K] and ``duv`` [1], each of shape ``uv.shape[:-1]``; ``cct_K`` is NaN
        where the nearest locus point lies outside 1000-100000 K.

    Notes
    -----
    Duv is positive above the locus (towards larger v, greenish), negative below (pinkish).
    Where the nearest locus point lies outside the method's table (:func:`table_range_K`:
    ``exact`` 900-200000 K; ``robertson1968`` 1667 K upward, its published table;
    ``ohno2013`` about 980-102000 K) both CCT and Duv are NaN: withheld, never extrapolated.
    Robertson's Duv is approximate.
    """
    uv = np.asarray(uv, dtype=np.float64)
    if uv.shape[-1:] != (2,):
        raise ValueError(f"uv must have shape (..., 2), got {uv.shape}")
    if method not in METHODS:
        raise ValueError(f"method must be one of {', '.join(METHODS)}, got {method!r}")
    if int(observer) not in (2, 10):
        raise ValueError(f"observer must be 2 or 10, got {observer!r}")
    c2v = resolve_c2(c2)
    if method == "exact":
        cct, duv = _exact(uv, int(observer), c2v)
    elif method == "ohno2013":
        cct, duv = _ohno2013(uv, int(observer), c2v)
    else:
        if int(observer) != 2 or c2v != resolve_c2("cie"):
            raise ValueError("robertson1968 uses its published 2 deg table; observer and c2 cannot be changed")
        cct, duv = _robertson1968(uv)
    return CctResult(cct_K=cct, duv=duv, method=method)
