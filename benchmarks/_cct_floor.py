"""A tight numpy version of cct_duv's exact solver: the floor ``bench_cct.py`` measures it against.

The same arithmetic on the same tables (cctkit.cct's locus table and 2-D lookup, read as
data, built outside the timing): the node guessed from the lookup and its bracket verified,
two Newton steps on the Hermite cubic of the segment, CCT from where the second lands and
Duv from where it starts -- and nothing else.  No input checks, no full search for points
whose guess fails (the floor only counts them, and ``bench_cct.py`` prints the count; the
benchmark's points need none), no handling of NaN, of points outside the lookup or of the
1000-100000 K reporting range, and every temporary lives in buffers allocated once and
reused block after block (``out=`` throughout).
"""

from __future__ import annotations

import numpy as np

from cctkit.cct import _grid, _table
from cctkit.planck import resolve_c2

#: Points per block of the floor (its buffers: ~25 arrays of this length).
FLOOR_BLOCK = 8192


class _Work:
    def __init__(self, n: int):
        f = [np.empty(n) for _ in range(14)]
        (
            self.pu,
            self.pv,
            self.a,
            self.b,
            self.t,
            self.fu,
            self.fv,
            self.su,
            self.sv,
            self.x,
            self.y,
            self.u0,
            self.v0,
            self.gk,
        ) = f
        (self.du0, self.dv0, self.gk1, self.c2u, self.c2u2, self.c3u, self.c2v, self.c2v2, self.c3v, self.g) = [
            np.empty(n) for _ in range(10)
        ]
        self.cell = np.empty(n, dtype=np.intp)
        self.iv = np.empty(n, dtype=np.intp)
        self.k = np.empty(n, dtype=np.intp)
        self.k1 = np.empty(n, dtype=np.intp)
        self.ok = np.empty(n, dtype=bool)
        self.ok2 = np.empty(n, dtype=bool)
        self.rows = np.empty((n, 4), dtype=np.float32)


def floor_cct_duv(
    uv: np.ndarray, observer: int = 2, block: int = FLOOR_BLOCK
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """CCT [K] and Duv of the (n, 2) uv points, and which points' guessed bracket held (the
    others' results are not valid: the floor does not search for them)."""
    c2 = resolve_c2("cie")
    tab, grid = _table(observer, c2), _grid(observer, c2)
    p = np.asarray(uv, dtype=np.float64).reshape(-1, 2)
    n = p.shape[0]
    cct = np.empty(n)
    duv = np.empty(n)
    W = _Work(min(block, n))
    G = grid.cells
    ou, ov, inv = grid.origin[0], grid.origin[1], grid.inv_step
    h = tab.h
    U, V, DU, DV = tab.u, tab.v, tab.du, tab.dv
    coef = (tab.cu2, tab.cu2x2, tab.cu3, tab.cv2, tab.cv2x2, tab.cv3)
    verified = np.empty(n, dtype=bool)
    for s in range(0, n, block):
        e = min(s + block, n)
        m = e - s
        if m != W.pu.shape[0]:
            W = _Work(m)
        pu, pv, a, b, t, fu, fv, su, sv, x, y = W.pu, W.pv, W.a, W.b, W.t, W.fu, W.fv, W.su, W.sv, W.x, W.y
        u0, v0, du0, dv0, gk, gk1, g = W.u0, W.v0, W.du0, W.dv0, W.gk, W.gk1, W.g
        cell, iv, k, k1, ok, rows = W.cell, W.iv, W.k, W.k1, W.ok, W.rows
        np.copyto(pu, p[s:e, 0])
        np.copyto(pv, p[s:e, 1])
        # the guess: bilinear in the cell (within the cell's node range by the lookup's construction)
        np.subtract(pu, ou, out=a)
        a *= inv
        np.subtract(pv, ov, out=b)
        b *= inv
        np.floor(a, out=x)
        np.floor(b, out=y)
        a -= x
        b -= y
        np.copyto(cell, x, casting="unsafe")
        np.copyto(iv, y, casting="unsafe")
        cell *= G
        cell += iv
        grid.rows.take(cell, axis=0, mode="clip", out=rows)
        np.multiply(rows[:, 1], a, out=x)
        x += rows[:, 0]
        np.multiply(rows[:, 3], a, out=y)
        y += rows[:, 2]
        y -= x
        y *= b
        y += x
        np.copyto(k, y, casting="unsafe")
        np.add(k, 1, out=k1)
        # the bracket's check: g at both ends of the segment
        U.take(k, mode="clip", out=u0)
        V.take(k, mode="clip", out=v0)
        DU.take(k, mode="clip", out=du0)
        DV.take(k, mode="clip", out=dv0)
        np.subtract(pu, u0, out=gk)
        gk *= du0
        np.subtract(pv, v0, out=x)
        x *= dv0
        gk += x
        U.take(k1, mode="clip", out=x)
        np.subtract(pu, x, out=gk1)
        DU.take(k1, mode="clip", out=x)
        gk1 *= x
        V.take(k1, mode="clip", out=x)
        np.subtract(pv, x, out=y)
        DV.take(k1, mode="clip", out=x)
        y *= x
        gk1 += y
        np.greater_equal(gk, 0.0, out=ok)
        np.less(gk1, 0.0, out=W.ok2)
        ok &= W.ok2
        np.copyto(verified[s:e], ok)
        # two Newton steps on the cubic of the segment
        c2u, c2u2, c3u, c2v, c2v2, c3v = W.c2u, W.c2u2, W.c3u, W.c2v, W.c2v2, W.c3v
        for src, dst in zip(coef, (c2u, c2u2, c3u, c2v, c2v2, c3v)):
            src.take(k, mode="clip", out=dst)
        du0 *= h  # now c1 of u
        dv0 *= h
        np.subtract(gk, gk1, out=t)
        np.divide(gk, t, out=t)
        for step in (0, 1):
            np.multiply(c3u, t, out=fu)
            fu += c2u
            fu *= t
            fu += du0
            fu *= t
            fu += u0
            np.subtract(pu, fu, out=fu)
            np.multiply(c3v, t, out=fv)
            fv += c2v
            fv *= t
            fv += dv0
            fv *= t
            fv += v0
            np.subtract(pv, fv, out=fv)
            np.multiply(t, 3.0, out=g)
            np.multiply(g, c3u, out=su)
            su += c2u2
            su *= t
            su += du0
            np.multiply(g, c3v, out=sv)
            sv += c2v2
            sv *= t
            sv += dv0
            if step == 1:
                np.multiply(fv, su, out=x)
                np.multiply(fu, sv, out=y)
                x -= y
                np.hypot(su, sv, out=y)
                np.divide(x, y, out=duv[s:e])
            g += g  # 6 t
            np.multiply(g, c3u, out=x)
            x += c2u2
            x *= fu
            np.multiply(g, c3v, out=y)
            y += c2v2
            y *= fv
            np.multiply(fu, su, out=g)
            fu = np.multiply(fv, sv, out=fu)
            g += fu  # g(t)
            su *= su
            sv *= sv
            su += sv
            x -= su
            x += y  # g'(t)
            g /= x
            t -= g
            fu = W.fu
        t *= h
        np.copyto(x, k, casting="unsafe")
        x *= h
        x += tab.m[0]
        t += x
        np.divide(1e6, t, out=cct[s:e])
    return cct, duv, verified
