"""The CCT solver's 2-D lookup bracket equals the full bisection over the locus table, node for node.

The lookup only narrows where the bisection searches, and every bracket it finds is
verified (else the point is searched in full), so the node -- and with it every CCT and
Duv -- is bit-identical to the full search.  Held on random points within |Duv| <= 0.05
over 1000-25000 K and on points anywhere in and around the diagram (no outside source:
the full bisection is the definition this speeds up; the solver's accuracy is checked
against published tables and brute force in test_cct.py).
"""

from __future__ import annotations

import numpy as np
import pytest

import cctkit.cct as cct
from cctkit.locus import uv_from_cct_duv
from cctkit.planck import resolve_c2


@pytest.mark.parametrize("observer", [2, 10])
def test_lookup_bracket_equals_full_bisection(observer):
    rng = np.random.default_rng(12)
    n = 100_000
    T = np.exp(rng.uniform(np.log(1000.0), np.log(25000.0), n))
    near = uv_from_cct_duv(T, rng.uniform(-0.05, 0.05, n), observer=observer)
    anywhere = rng.uniform(-0.2, 0.8, (50_000, 2))
    anywhere[:6] = [[np.nan, 0.3], [0.2, np.inf], [0.0, 0.0], [0.18, 0.27], [0.45, 0.36], [0.6, 0.4]]
    c2 = resolve_c2("cie")
    tab, grid = cct._table(observer, c2), cct._grid(observer, c2)
    for pts in (near, anywhere):
        pu, pv = np.ascontiguousarray(pts[:, 0]), np.ascontiguousarray(pts[:, 1])
        k_full, ok_full = cct._bisect(tab, pu, pv)
        k, ok = cct._bracket(tab, grid, pu, pv)
        np.testing.assert_array_equal(ok, ok_full)
        np.testing.assert_array_equal(k[ok], k_full[ok])
    assert ok_full.sum() > 1000  # the second set reaches the locus too


@pytest.mark.parametrize("observer", [2, 10])
def test_blocks_and_lookup_give_the_bits_of_the_plain_bisection(observer):
    """cct_duv of many points (solved in blocks, bracketed through the lookup) equals, bit for bit,
    cct_duv of the same points a few at a time (each searched by the full bisection)."""
    rng = np.random.default_rng(21)
    n = 2 * cct._BLOCK + 1234
    T = np.exp(rng.uniform(np.log(900.0), np.log(120000.0), n))
    pts = uv_from_cct_duv(T, rng.uniform(-0.08, 0.08, n), observer=observer)
    pts[::97] = rng.uniform(-0.2, 0.8, pts[::97].shape)  # some anywhere
    pts[5] = [np.nan, 0.3]
    whole = cct.cct_duv(pts, observer=observer)
    small = cct._GRID_MIN_POINTS - 1
    parts = [cct.cct_duv(pts[s : s + small], observer=observer) for s in range(0, n, small)]
    for name in ("cct_K", "duv"):
        got = getattr(whole, name)
        plain = np.concatenate([getattr(p, name) for p in parts])
        assert got.tobytes() == plain.tobytes()
    assert np.isfinite(whole.cct_K).sum() > n // 2


def _basis_form(tab, k, pu, pv):
    """The solver's Newton steps on the Hermite basis functions in m (its earlier form, kept as the check)."""
    h = tab.h
    seg = cct._segments(tab, k)
    (u0, u1, du0, du1), (v0, v1, dv0, dv1) = seg
    gk, gk1 = (pu - u0) * du0 + (pv - v0) * dv0, (pu - u1) * du1 + (pv - v1) * dv1
    t = np.clip(np.where(gk != gk1, gk / (gk - gk1), 0.5), 0.0, 1.0)

    def hermite(t):
        t2, t3 = t * t, t * t * t
        out = []
        for p0, p1, d0, d1 in seg:
            m0, m1 = d0 * h, d1 * h
            f = (2 * t3 - 3 * t2 + 1) * p0 + (t3 - 2 * t2 + t) * m0 + (-2 * t3 + 3 * t2) * p1 + (t3 - t2) * m1
            d = ((6 * t2 - 6 * t) * p0 + (3 * t2 - 4 * t + 1) * m0 + (-6 * t2 + 6 * t) * p1 + (3 * t2 - 2 * t) * m1) / h
            d2 = ((12 * t - 6) * p0 + (6 * t - 4) * m0 + (-12 * t + 6) * p1 + (6 * t - 2) * m1) / (h * h)
            out.append((f, d, d2))
        return out

    for _ in range(2):
        (fu, du, d2u), (fv, dv, d2v) = hermite(t)
        ru, rv = pu - fu, pv - fv
        t = t - (ru * du + rv * dv) / (-(du * du + dv * dv) + ru * d2u + rv * d2v) / h
    (fu, du, _), (fv, dv, _) = hermite(t)
    return 1e6 / (tab.m[k] + t * h), ((pu - fu) * -dv + (pv - fv) * du) / np.hypot(du, dv)


@pytest.mark.parametrize("observer", [2, 10])
def test_polynomial_form_equals_the_hermite_basis_form(observer):
    # The interpolant is evaluated as a cubic in t by Horner's rule (fewer operations): the same
    # interpolant and Newton steps, so equal to rounding -- CCT within 1e-10 relative, Duv within
    # 1e-15 absolute (common practice, no source: the solver's own accuracy is ~1e-5 K, test_cct.py).
    rng = np.random.default_rng(31)
    n = 60_000
    T = np.exp(rng.uniform(np.log(1000.0), np.log(100000.0), n))
    pts = uv_from_cct_duv(T, rng.uniform(-0.05, 0.05, n), observer=observer)
    c2 = resolve_c2("cie")
    tab = cct._table(observer, c2)
    pu, pv = np.ascontiguousarray(pts[:, 0]), np.ascontiguousarray(pts[:, 1])
    k, ok = cct._bisect(tab, pu, pv)
    T_ref, duv_ref = _basis_form(tab, k, pu, pv)
    got = cct.cct_duv(pts, observer=observer)
    fine = ok & np.isfinite(got.cct_K)
    assert fine.sum() > 0.99 * n
    # the bound issue 16 sets for rewritten arithmetic (1e-10 relative); Duv near 0 held absolutely: common practice, no source
    np.testing.assert_allclose(got.cct_K[fine], T_ref[fine], rtol=1e-10, atol=0)
    np.testing.assert_allclose(got.duv[fine], duv_ref[fine], rtol=0, atol=1e-15)


def _previous_form(tab, k, pu, pv):
    """The solver as it was before Duv moved to where the last Newton step starts: the cubic by
    Horner's rule, two Newton steps, then the cubic evaluated once more where the second lands."""
    seg = cct._segments(tab, k)
    (u0, u1, du0, du1), (v0, v1, dv0, dv1) = seg
    gk, gk1 = (pu - u0) * du0 + (pv - v0) * dv0, (pu - u1) * du1 + (pv - v1) * dv1
    with np.errstate(divide="ignore", invalid="ignore"):
        t = np.clip(np.where(gk != gk1, gk / (gk - gk1), 0.5), 0.0, 1.0)
    cu, cv = cct._cubic(tab.h, seg)

    def value_slope(c, t):
        c0, c1, c2, c3 = c
        return c0 + t * (c1 + t * (c2 + t * c3)), c1 + t * (2 * c2 + 3 * t * c3)

    for _ in range(2):
        (fu, du), (fv, dv) = value_slope(cu, t), value_slope(cv, t)
        ru, rv = pu - fu, pv - fv
        dg = -(du * du + dv * dv) + ru * (2 * cu[2] + 6 * t * cu[3]) + rv * (2 * cv[2] + 6 * t * cv[3])
        with np.errstate(divide="ignore", invalid="ignore"):
            t = t - np.where(dg != 0, (ru * du + rv * dv) / dg, 0.0)
    (fu, du), (fv, dv) = value_slope(cu, t), value_slope(cv, t)
    return 1e6 / (tab.m[k] + t * tab.h), ((pu - fu) * -dv + (pv - fv) * du) / np.hypot(du, dv)


@pytest.mark.parametrize("observer", [2, 10])
def test_duv_where_the_last_step_starts_equals_the_evaluation_where_it_lands(observer):
    # CCT comes from the same Newton steps, bit for bit.  Duv is now taken where the second step
    # starts instead of from one more evaluation where it lands: Duv is stationary at the foot
    # point, so the two agree to rounding (measured: 2.2e-16 at most); held within 1e-15 absolute,
    # the bound issue 16 sets for rewritten arithmetic (common practice, no source).
    rng = np.random.default_rng(41)
    n = 3 * cct._BLOCK + 777  # through the lookup, in blocks, with a short last block
    T = np.exp(rng.uniform(np.log(900.0), np.log(200000.0), n))
    pts = uv_from_cct_duv(T, rng.uniform(-0.1, 0.1, n), observer=observer)
    pts[::53] = rng.uniform(-0.2, 0.8, pts[::53].shape)  # some anywhere
    tab = cct._table(observer, resolve_c2("cie"))
    pu, pv = np.ascontiguousarray(pts[:, 0]), np.ascontiguousarray(pts[:, 1])
    k, ok = cct._bisect(tab, pu, pv)
    T_ref, duv_ref = _previous_form(tab, k, pu, pv)
    got = cct.cct_duv(pts, observer=observer)
    fine = ok & np.isfinite(got.cct_K)
    assert fine.sum() > 0.8 * n  # the rest: outside 1000-100000 K, or far from the locus
    assert got.cct_K[fine].tobytes() == T_ref[fine].tobytes()
    np.testing.assert_array_equal(np.isnan(got.cct_K), ~fine)
    np.testing.assert_allclose(got.duv[ok], duv_ref[ok], rtol=0, atol=1e-15)
    assert np.isnan(got.duv[~ok]).all()
