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
   the segment, evaluated by Horner's rule), and Newton's method on g finds the root
   (two steps from the secant of g over the segment); Duv is the signed distance
   from the locus point where the last step starts (it is stationary at the foot
   point, so the last step's change of ~1e-6 of a segment cannot move it).

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
    # The cubic of each segment k (nodes k and k + 1) in its fraction t (:func:`_cubic`; c0 = u[k],
    # c1 = du[k] h): c2, 2 c2 and c3 of u and of v, (K,) each, the last row (no segment) 0.  Worked
    # out element-wise once for every segment, so the same bits as point by point.
    cu2: np.ndarray
    cu2x2: np.ndarray
    cu3: np.ndarray
    cv2: np.ndarray
    cv2x2: np.ndarray
    cv3: np.ndarray


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
    m, u, v, du, dv = cols
    k, k1 = np.arange(m.shape[0] - 1), np.arange(1, m.shape[0])
    cu, cv = _cubic(_H_MIRED, ((u[k], u[k1], du[k], du[k1]), (v[k], v[k1], dv[k], dv[k1])))
    coef = [np.append(a, 0.0) for a in (cu[2], 2 * cu[2], cu[3], cv[2], 2 * cv[2], cv[3])]
    for a in cols + coef:
        a.setflags(write=False)
    return _Table(m, u, v, du, dv, _H_MIRED, *coef)


def _segments(tab: _Table, k: np.ndarray) -> tuple[tuple[np.ndarray, ...], tuple[np.ndarray, ...]]:
    """The table values at both ends of segment k, gathered once: (u0, u1, du0, du1), (v0, v1, dv0, dv1)."""
    k1 = k + 1
    return ((tab.u[k], tab.u[k1], tab.du[k], tab.du[k1]), (tab.v[k], tab.v[k1], tab.dv[k], tab.dv[k1]))


def _cubic(h: float, seg) -> tuple[tuple[np.ndarray, ...], tuple[np.ndarray, ...]]:
    """The cubic Hermite interpolant of the locus on the segments ``seg`` (:func:`_segments`) of
    ``h`` mired, as c0 + t (c1 + t (c2 + t c3)) in the fraction t of the segment: (c0, c1, c2, c3)
    for u and for v."""
    out = []
    for p0, p1, d0, d1 in seg:
        m0, m1 = d0 * h, d1 * h  # derivatives with respect to t
        dp = p1 - p0
        out.append((p0, m0, 3 * dp - 2 * m0 - m1, m0 + m1 - 2 * dp))
    return out[0], out[1]


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


class _Work:
    """Buffers for one block of points, allocated once per call and reused block after block."""

    def __init__(self, n: int):
        f = [np.empty(n) for _ in range(24)]
        self.pu, self.pv, self.a, self.b, self.t, self.fu, self.fv, self.su, self.sv, self.x, self.y, self.g = f[:12]
        self.u0, self.v0, self.du0, self.dv0, self.gk, self.gk1 = f[12:18]  # :func:`_ends`
        self.cu, self.cv = tuple(f[18:21]), tuple(f[21:24])  # the cubics' c2, 2 c2, c3 (:func:`_solve`)
        self.k = np.empty(n, dtype=np.intp)
        self.k1 = np.empty(n, dtype=np.intp)
        self.iv = np.empty(n, dtype=np.intp)
        self.bracketed = np.empty(n, dtype=bool)
        self.mask = np.empty(n, dtype=bool)
        self.mask2 = np.empty(n, dtype=bool)
        self.rows = np.empty((n, 4), dtype=np.float32)

    def part(self, n: int) -> _Work:
        """The same buffers' first n points (the last, shorter block)."""
        w = object.__new__(_Work)
        for name, a in vars(self).items():
            setattr(w, name, tuple(b[:n] for b in a) if isinstance(a, tuple) else a[:n])
        return w


def _ends(tab: _Table, w: _Work) -> None:
    """What the Newton steps need of the segment at node ``w.k``: u, v, du/dm, dv/dm at the node
    and g at both ends (:func:`_g`, from the same gathered values), into ``w``."""
    k, k1, x, y = w.k, w.k1, w.x, w.y
    np.add(k, 1, out=k1)
    tab.u.take(k, mode="clip", out=w.u0)  # k >= -1 (-1: a cell searched in full); "clip" skips the check
    tab.v.take(k, mode="clip", out=w.v0)
    tab.du.take(k, mode="clip", out=w.du0)
    tab.dv.take(k, mode="clip", out=w.dv0)
    gk = np.subtract(w.pu, w.u0, out=w.gk)
    gk *= w.du0
    np.subtract(w.pv, w.v0, out=x)
    x *= w.dv0
    gk += x
    gk1 = np.subtract(w.pu, tab.u.take(k1, mode="clip", out=x), out=w.gk1)
    gk1 *= tab.du.take(k1, mode="clip", out=x)
    np.subtract(w.pv, tab.v.take(k1, mode="clip", out=x), out=y)
    y *= tab.dv.take(k1, mode="clip", out=x)
    gk1 += y


@dataclass(frozen=True)
class _Grid:
    origin: tuple[float, float]  # u, v of the grid's corner
    inv_step: float  # cells per unit of u and of v
    cells: int  # cells per side
    lo: np.ndarray  # (cells * cells,) lowest node a point of the cell can bracket
    span: np.ndarray  # (cells * cells,) nodes to search from lo (large where the cell needs the full search)
    # (cells * cells, 4) float32, one row of 16 bytes per cell: with f the foot point's position in
    # table nodes, (m - m_0) / h, at the cell's corners (u, v), (u + 1, v), (u, v + 1), (u + 1, v + 1):
    # f00, f10 - f00, f01, f11 - f01 (NaN: the cell is searched in full)
    rows: np.ndarray


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
        foot = _solve_nodes(tab, k, ok, cu, cv)[2]  # the mired of each corner's nearest locus point
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
    # everything a point's guess reads in one row, in float32: a guess needs no more
    f = ((arr["foot"] - tab.m[0]) / tab.h).astype(np.float32).reshape(G + 1, G + 1)
    c00, c10, c01, c11 = (c.ravel() for c in (f[:-1, :-1], f[1:, :-1], f[:-1, 1:], f[1:, 1:]))
    corners = np.stack([c00, c10, c01, c11], axis=1)
    # A bilinear guess lies between the cell's corners (to float32 rounding, ~1e-5 of a node), so
    # its node lies within the cell's node range [lo, lo + span - 1] where the corners' (with a
    # margin) do: a cell where they do not, or where span is large, is searched in full.
    with np.errstate(invalid="ignore"):
        usable = (span <= _GRID_SPAN) & (np.floor(corners.min(axis=1) - 1e-3) >= lo)
        usable &= np.floor(corners.max(axis=1) + 1e-3) <= lo + span - 1  # NaN corners: False
    rows = np.stack([c00, c10 - c00, c01, c11 - c01], axis=1)
    rows[~usable] = np.nan
    rows.setflags(write=False)
    return _Grid((u0, v0), inv_step, G, lo, span, rows)


def _bracket(tab: _Table, grid: _Grid, pu: np.ndarray, pv: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """:func:`_bisect`'s node and bracket flag, through the 2-D lookup (full search where it cannot say)."""
    w = _Work(pu.shape[0])
    np.copyto(w.pu, pu)
    np.copyto(w.pv, pv)
    rest = _guess(tab, grid, w)
    k, bracketed = w.k.copy(), w.bracketed.copy()
    k[rest], bracketed[rest] = _bisect(tab, pu[rest], pv[rest])
    return k, bracketed


def _guess(tab: _Table, grid: _Grid, w: _Work) -> np.ndarray:
    """The node of the points ``w.pu``, ``w.pv`` through the 2-D lookup, verified, into ``w.k`` and
    ``w.bracketed``, with :func:`_ends`; returns the points (indices) whose guess failed: they
    need the full search (:func:`_bisect`; ~0.4 % of points near the locus, off by one node).

    The node is guessed from the corners' foot (bilinear in the cell), kept within the cell's
    node range, and verified by the sign change of g at its two ends, from the values the
    Newton steps need anyway.  The guess only decides where to look: a node is taken only once
    verified, so the result is the full search's whatever the guess's rounding.
    """
    G = grid.cells
    a, b, x, y, cell, iv, rows = w.a, w.b, w.x, w.y, w.k1, w.iv, w.rows
    with np.errstate(invalid="ignore"):
        np.subtract(w.pu, grid.origin[0], out=a)
        a *= grid.inv_step
        np.subtract(w.pv, grid.origin[1], out=b)
        b *= grid.inv_step
        np.floor(a, out=x)
        np.floor(b, out=y)
        a -= x  # position within the cell
        b -= y
        np.copyto(cell, x, casting="unsafe")  # NaN, inf, far away: some integer outside 0..G-1
        np.copyto(iv, y, casting="unsafe")
    inside = np.less(cell.view(np.uintp), G, out=w.mask)  # 0 <= cell < G, as one unsigned comparison
    inside &= np.less(iv.view(np.uintp), G, out=w.bracketed)
    cell *= G
    cell += iv
    grid.rows.take(cell, axis=0, mode="clip", out=rows)  # a point outside takes any row: not verified below
    with np.errstate(invalid="ignore"):
        np.multiply(rows[:, 1], a, out=x)
        x += rows[:, 0]  # along u at the cell's lower v ...
        np.multiply(rows[:, 3], a, out=y)
        y += rows[:, 2]  # ... and at its upper v
        y -= x
        y *= b
        y += x
        np.fmax(y, -1.0, out=y)  # NaN: the cell is searched in full (node -1, never verified)
        k = w.k
        np.copyto(k, y, casting="unsafe")  # within the cell's node range (:func:`_grid`)
    _ends(tab, w)
    bracketed = np.greater_equal(w.gk, 0.0, out=w.bracketed)
    bracketed &= inside
    bracketed &= np.less(w.gk1, 0.0, out=w.mask)
    bracketed &= np.greater_equal(k, 0, out=w.mask)
    return np.flatnonzero(~bracketed)


#: Points solved at once: the solver's buffers for a block stay near the processor.
_BLOCK = 8192


def _exact(uv: np.ndarray, observer: int, c2: float) -> tuple[np.ndarray, np.ndarray]:
    tab = _table(observer, c2)
    p = uv.reshape(-1, 2)
    n = p.shape[0]
    if n < _GRID_MIN_POINTS:
        pu, pv = np.ascontiguousarray(p[:, 0]), np.ascontiguousarray(p[:, 1])
        k, bracketed = _bisect(tab, pu, pv)  # the lookup gives these same nodes (tests/test_cct_bracket.py)
        cct, duv, _ = _solve_nodes(tab, k, bracketed, pu, pv)
        return cct.reshape(uv.shape[:-1]), duv.reshape(uv.shape[:-1])
    grid = _grid(observer, c2)
    cct = np.empty(n)
    duv = np.empty(n)
    whole = _Work(min(n, _BLOCK))
    missed = []
    for s in range(0, n, _BLOCK):  # each value depends on its own point only: blocks change no bit
        e = min(s + _BLOCK, n)
        w = whole if e - s == whole.pu.shape[0] else whole.part(e - s)
        np.copyto(w.pu, p[s:e, 0])
        np.copyto(w.pv, p[s:e, 1])
        rest = _guess(tab, grid, w)
        if rest.size:
            missed.append(rest + s)
        _solve(tab, w, cct[s:e], duv[s:e])  # the missed points' results are replaced below
    if missed:  # searched in full all at once: a search's many small steps cost the same for 10 points or 1000
        i = np.concatenate(missed)
        pu, pv = p[i, 0], p[i, 1]
        k, bracketed = _bisect(tab, pu, pv)
        cct[i], duv[i], _ = _solve_nodes(tab, k, bracketed, pu, pv)
    shape = uv.shape[:-1]
    return cct.reshape(shape), duv.reshape(shape)


def _solve(tab: _Table, w: _Work, cct: np.ndarray, duv: np.ndarray) -> np.ndarray:
    """CCT [K] and Duv, into ``cct`` and ``duv``, of the points of ``w`` bracketed at node ``w.k``
    (:func:`_ends` gathered): Hermite + Newton.  Returns the foot point's mired (a buffer of ``w``).

    Newton's method on g(t) (m = m_k + t h: the same root) from the secant of g over the
    segment, two steps; CCT from where the second step lands.  Duv is taken where the second
    step starts: Duv is stationary at the foot point (its derivative along the locus is
    -curvature * g, zero at the root), so the first step's remaining error in t, ~1e-6 of a
    segment at most, moves it by ~1e-18, below the rounding of its own evaluation
    (tests/test_cct_bracket.py holds it within 1e-15 of the evaluation where the second lands).
    """
    h = tab.h
    k, t, x, y, g, ru, rv, su, sv = w.k, w.t, w.x, w.y, w.g, w.fu, w.fv, w.su, w.sv
    cu1, cv1 = w.du0, w.dv0  # scaled in place: du/dm, dv/dm are not needed after the bracket
    cu = tuple(a.take(k, mode="clip", out=o) for a, o in zip((tab.cu2, tab.cu2x2, tab.cu3), w.cu))
    cv = tuple(a.take(k, mode="clip", out=o) for a, o in zip((tab.cv2, tab.cv2x2, tab.cv3), w.cv))
    with np.errstate(all="ignore"):  # points without a bracket compute nonsense, withheld below
        np.subtract(w.gk, w.gk1, out=t)
        np.divide(w.gk, t, out=t)  # bracketed: gk >= 0 > gk1, so 0 <= t <= 1
        cu1 *= h  # the cubic's c1 (:func:`_cubic`); c2, 2 c2 and c3 come from the table
        cv1 *= h
        for step in range(_NEWTON_STEPS):
            np.multiply(t, 3.0, out=g)
            for p, c0, c1, (c2, c2x2, c3), r, s in ((w.pu, w.u0, cu1, cu, ru, su), (w.pv, w.v0, cv1, cv, rv, sv)):
                np.multiply(c3, t, out=r)  # the cubic by Horner's rule ...
                r += c2
                r *= t
                r += c1
                r *= t
                r += c0
                np.subtract(p, r, out=r)  # ... and p minus it
                np.multiply(g, c3, out=s)  # its derivative c1 + t (2 c2 + 3 t c3)
                s += c2x2
                s *= t
                s += c1
            if step == _NEWTON_STEPS - 1:
                # Normal pointing above: d(uv)/dm points towards *lower* T, so n = (-dv, du) / |d|.
                np.multiply(rv, su, out=x)
                x -= np.multiply(ru, sv, out=y)
                np.divide(x, np.hypot(su, sv, out=y), out=duv)
            g += g  # 6 t
            np.multiply(g, cu[2], out=x)
            x += cu[1]
            x *= ru
            np.multiply(g, cv[2], out=y)
            y += cv[1]
            y *= rv
            np.multiply(ru, su, out=g)
            g += np.multiply(rv, sv, out=ru)  # g(t) = r . d
            su *= su
            sv *= sv
            su += sv
            x -= su
            x += y  # g'(t) = -|d|^2 + r . (2 c2 + 6 t c3)
            g /= x
            if not np.isfinite(np.add.reduce(g)):  # one pass; where g'(t) = 0, no step
                g[x == 0] = 0.0
            t -= g
        t *= h
        t += tab.m.take(k, mode="clip", out=x)
        np.divide(1e6, t, out=cct)
    # A point whose nearest locus point lies outside the table (below 900 K, above 200000 K) has no
    # root to find: its Duv is withheld (NaN), never taken from the end of the table.  (A bracketed
    # point is finite: through the lookup it is inside the grid, and :func:`_solve_nodes` checks.)
    bad = np.logical_not(w.bracketed, out=w.mask2)
    np.copyto(duv, np.nan, where=bad)
    bad |= np.less(cct, T_MIN_K * (1 - 1e-9), out=w.mask)
    bad |= np.greater(cct, T_MAX_K * (1 + 1e-9), out=w.mask)
    np.copyto(cct, np.nan, where=bad)
    return t


def _solve_nodes(tab: _Table, k: np.ndarray, bracketed: np.ndarray, pu: np.ndarray, pv: np.ndarray):
    """:func:`_solve` of points already bracketed (node ``k``) in one go: CCT [K], Duv, foot mired."""
    w = _Work(pu.shape[0])
    np.copyto(w.pu, pu)
    np.copyto(w.pv, pv)
    w.k[:] = k
    # the bisection can find a sign change for an infinite coordinate: such a point is withheld
    np.logical_and(bracketed, np.isfinite(pu), out=w.bracketed)
    w.bracketed &= np.isfinite(pv)
    _ends(tab, w)
    cct, duv = np.empty(pu.shape[0]), np.empty(pu.shape[0])
    m = _solve(tab, w, cct, duv)
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
