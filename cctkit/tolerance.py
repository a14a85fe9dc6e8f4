"""Chromaticity tolerance regions: ANSI C78.377 quadrangles and SDCM (MacAdam) ellipses.

ANSI C78.377-2017 quadrangles
-----------------------------
ANSI C78.377-2017 ("Specifications for the Chromaticity of Solid-State Lighting
Products") defines, for each nominal CCT, a target CCT T with tolerance
+/- dT and a target Duv with tolerance +/- 0.006.  A quadrangle's four corners
are the chromaticities at (T - dT, Duv_T +/- 0.006) and (T + dT, Duv_T +/- 0.006),
i.e. on the isotemperature lines of T - dT and T + dT; its centre is (T, Duv_T).
The corners are computed here from that definition with
:func:`cctkit.cct.uv_from_cct_duv` (exact Planckian locus, CIE 15:2018
conventions), and the test suite checks them against the published corner
table.  Target values (from memory of ANSI C78.377-2017 Table 1):

======  ============  =====================
nominal T +/- dT [K]   Duv_T +/- 0.006
======  ============  =====================
2200    2238 +/- 102   0.000
2500    2460 +/- 120   0.000
2700    2725 +/- 145   0.000
3000    3045 +/- 175   0.000
3500    3465 +/- 245   0.000
4000    3985 +/- 275   0.001
4500    4503 +/- 243   0.001
5000    5028 +/- 283   0.002
5700    5665 +/- 355   0.002
6500    6530 +/- 510   0.003
======  ============  =====================

Neighbouring quadrangles meet on a shared isotemperature line (for example 2870 K
between 2700 K and 3000 K).  The tabulated values leave two 1 K overlaps:
4500 K ends at 4746 K while 5000 K starts at 4745 K, and 5000 K ends at 5311 K
while 5700 K starts at 5310 K.  The 2200 K and 2500 K categories were added in the
2015 edition (from memory).  Any other differences between the 2015 and 2017
editions are not reliably known to us, and nothing here depends on them.

Flexible CCT: for a target T between 2580 K and 7040 K (from memory), the
standard gives the target Duv and the CCT tolerance as polynomials in T
(:func:`flexible_duv_target`, :func:`flexible_cct_tolerance_K`).  They are also
from memory.  They reproduce the tabulated Duv targets to the table's 0.001
rounding, and dT at 2725 K and 6530 K to within 4 K.  The nominal quadrangles in
between use tabulated dT values chosen so that neighbours meet, and these are not
the polynomial values (3045 K: 175 K tabulated, 185 K from the polynomial).

Point-in-quadrangle test: the standard draws the quadrangles with straight edges
in the CIE 1931 xy diagram, and membership is decided there.  The corners lie on
isotemperature lines, which are straight in CIE 1960 uv.  The map from uv to xy is
a projective transformation, so straight edges stay straight, and the test gives
the same answer in either diagram.  The straight top and bottom edges are chords
of the curves Duv = Duv_T +/- 0.006.  At mid-edge they lie below those curves by
0.00008 (5000 K, 5700 K) to 0.00022 (3500 K, top edge) in uv.
The corners are the standard's; the drawn edges are taken as the boundary.  Points
on an edge are inside.  A point on an
edge shared by two quadrangles goes to the one with the lower nominal CCT.

SDCM ellipses
-------------
A MacAdam-type ellipse is written in CIE 1931 xy as the quadratic form
``n^2 = g11 dx^2 + 2 g12 dx dy + g22 dy^2``, where n is the number of steps
(standard deviations of colour matching, SDCM).  Two sources are provided:

* the lamp-centre ellipses F6500 ... F2700 of IEC 60081 Annex D
  (:data:`IEC60081_ELLIPSES`, from memory);
* MacAdam's 1942 ellipses for observer PGN (Wyszecki & Stiles 2000, Table 2(5.4.1),
  "calculated" columns), as shipped by colour-science.  These are interpolated to
  any centre: each ellipse becomes its metric tensor (g11, g12, g22), and the
  tensor components are interpolated linearly (barycentric) on the Delaunay
  triangulation of the 25 centres.  A convex combination of positive-definite
  tensors is again positive definite, so the result is always a valid ellipse.
  Outside the hull of the centres (warmer than about 2600 K near the locus), the
  tensor of the nearest centre is used and ``extrapolated`` is set.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cache, lru_cache

import numpy as np

from .colorimetry import uv_to_xy, xy_to_uv
from .errors import InputError
from .locus import uv_from_cct_duv

__all__ = [
    "ANSI_EDITION",
    "ANSI_NOMINAL_CCTS_K",
    "DUV_TOLERANCE",
    "Quadrangle",
    "ansi_quadrangle",
    "ansi_quadrangles",
    "flexible_quadrangle",
    "flexible_duv_target",
    "flexible_cct_tolerance_K",
    "quadrangle_index",
    "classify_ansi",
    "edge_margin_uv",
    "Ellipse",
    "IEC60081_ELLIPSES",
    "iec60081_ellipse",
    "metric_from_axes",
    "axes_from_metric",
    "sdcm_steps",
    "macadam1942_metric",
    "macadam1942_ellipse",
    "ellipse_boundary_xy",
]

ANSI_EDITION = "ANSI C78.377-2017"

# Nominal CCT -> (target CCT [K], CCT tolerance [K], target Duv).
# ANSI C78.377-2017 Table 1 (from memory); the corners these give are checked in
# tests/test_tolerance.py against the published corner table.
_ANSI_TABLE: dict[int, tuple[float, float, float]] = {
    2200: (2238.0, 102.0, 0.000),
    2500: (2460.0, 120.0, 0.000),
    2700: (2725.0, 145.0, 0.000),
    3000: (3045.0, 175.0, 0.000),
    3500: (3465.0, 245.0, 0.000),
    4000: (3985.0, 275.0, 0.001),
    4500: (4503.0, 243.0, 0.001),
    5000: (5028.0, 283.0, 0.002),
    5700: (5665.0, 355.0, 0.002),
    6500: (6530.0, 510.0, 0.003),
}
ANSI_NOMINAL_CCTS_K: tuple[int, ...] = tuple(_ANSI_TABLE)

#: Duv tolerance of every quadrangle -- ANSI C78.377-2017 Table 1 (from memory).
DUV_TOLERANCE = 0.006

#: Range of target CCT for the flexible-CCT rule [K] -- ANSI C78.377 (from memory).
FLEXIBLE_RANGE_K = (2580.0, 7040.0)


@dataclass(frozen=True)
class Quadrangle:
    """One ANSI C78.377 chromaticity quadrangle.

    Corners are ordered (T-dT, Duv+tol), (T+dT, Duv+tol), (T+dT, Duv-tol),
    (T-dT, Duv-tol), i.e. counter-clockwise in both xy and uv.
    """

    name: str
    nominal_cct_K: float
    target_cct_K: float
    cct_tolerance_K: float
    target_duv: float
    duv_tolerance: float
    centre_uv: np.ndarray
    corners_uv: np.ndarray
    centre_xy: np.ndarray
    corners_xy: np.ndarray


def _build(name: str, nominal: float, T: float, dT: float, duv: float) -> Quadrangle:
    tol = DUV_TOLERANCE
    Ts = np.array([T - dT, T + dT, T + dT, T - dT, T])
    Ds = np.array([duv + tol, duv + tol, duv - tol, duv - tol, duv])
    uv = uv_from_cct_duv(Ts, Ds)
    xy = uv_to_xy(uv)
    for a in (uv, xy):
        a.setflags(write=False)
    return Quadrangle(name, float(nominal), float(T), float(dT), float(duv), tol, uv[4], uv[:4], xy[4], xy[:4])


@cache
def ansi_quadrangles() -> tuple[Quadrangle, ...]:
    """The ten nominal-CCT quadrangles of ANSI C78.377-2017, warmest first."""
    return tuple(_build(f"{n}K", n, *_ANSI_TABLE[n]) for n in ANSI_NOMINAL_CCTS_K)


def ansi_quadrangle(nominal_cct_K: float) -> Quadrangle:
    """The quadrangle of one nominal CCT (2200, 2500, 2700, ... 6500 K)."""
    for q in ansi_quadrangles():
        if q.nominal_cct_K == float(nominal_cct_K):
            return q
    allowed = ", ".join(str(n) for n in ANSI_NOMINAL_CCTS_K)
    raise InputError(f"nominal CCT {nominal_cct_K!r} K is not an ANSI C78.377 category; expected one of {allowed}")


def flexible_duv_target(cct_K):
    """Target Duv of a flexible CCT, ANSI C78.377 (from memory): 57700/T^2 - 44.6/T + 0.0085."""
    T = np.asarray(cct_K, dtype=np.float64)
    return 57700.0 / T**2 - 44.6 / T + 0.0085


def flexible_cct_tolerance_K(cct_K):
    """CCT tolerance of a flexible CCT [K], ANSI C78.377 (from memory):
    1.1900e-8 T^3 - 1.5434e-4 T^2 + 0.7168 T - 902.55.
    """
    T = np.asarray(cct_K, dtype=np.float64)
    return 1.1900e-8 * T**3 - 1.5434e-4 * T**2 + 0.7168 * T - 902.55


def flexible_quadrangle(cct_K: float) -> Quadrangle:
    """The quadrangle of a flexible target CCT (2580-7040 K) by the ANSI C78.377 polynomials."""
    T = float(cct_K)
    lo, hi = FLEXIBLE_RANGE_K
    if not (lo <= T <= hi):
        raise InputError(f"flexible target CCT {cct_K!r} K is outside the {lo:.0f}-{hi:.0f} K range of ANSI C78.377")
    return _build(f"{T:.0f}K-flexible", T, T, float(flexible_cct_tolerance_K(T)), float(flexible_duv_target(T)))


def _as_xy(points, space: str) -> np.ndarray:
    pts = np.asarray(points, dtype=np.float64)
    if pts.shape[-1:] != (2,):
        raise InputError(f"chromaticity points must have shape (..., 2), got {pts.shape}")
    if space == "xy":
        return pts
    if space == "uv":
        return uv_to_xy(pts)
    raise InputError(f"space must be 'uv' or 'xy', got {space!r}")


def _edge_cross(xy: np.ndarray, corners: np.ndarray) -> np.ndarray:
    """Signed edge distances (..., Q, 4) of points (..., 2) from quadrangles (Q, 4, 2), positive inside."""
    a = corners
    b = np.roll(corners, -1, axis=-2)
    e = b - a
    p = xy[..., None, None, :] - a
    cross = e[..., 0] * p[..., 1] - e[..., 1] * p[..., 0]
    return cross / np.linalg.norm(e, axis=-1)


def quadrangle_index(points, *, space: str = "uv", quadrangles: tuple[Quadrangle, ...] | None = None) -> np.ndarray:
    """Index into ``quadrangles`` (default: the ANSI ones) of the quadrangle holding each point.

    Returns an int array of shape ``points.shape[:-1]``; -1 where no quadrangle holds
    the point (or the point is NaN).  The test runs in xy, edges inclusive.
    """
    quads = ansi_quadrangles() if quadrangles is None else quadrangles
    xy = _as_xy(points, space)
    corners = np.stack([q.corners_xy for q in quads])
    d = _edge_cross(xy, corners)
    # A tolerance far below the 4-decimal precision of published corners absorbs
    # rounding on shared edges.
    inside = np.all(d >= -1e-12, axis=-1)
    first = np.argmax(inside, axis=-1)
    return np.where(inside.any(axis=-1), first, -1)


def classify_ansi(points, *, space: str = "uv") -> np.ndarray:
    """Name of the ANSI C78.377 quadrangle holding each point ("3000K", ...), or None.

    Returns an object array of shape ``points.shape[:-1]``.
    """
    quads = ansi_quadrangles()
    idx = quadrangle_index(points, space=space, quadrangles=quads)
    names = np.array([q.name for q in quads] + [None], dtype=object)
    return names[idx]


def edge_margin_uv(points, quadrangle: Quadrangle, *, space: str = "uv") -> np.ndarray:
    """Signed distance in CIE 1960 uv from each point to the nearest edge of ``quadrangle``.

    Positive inside, negative outside (the distance to the nearest edge line, not
    the exact distance to the polygon near a corner).  Computed in uv, where
    distances are roughly perceptual and the edges are straight.
    """
    pts = np.asarray(points, dtype=np.float64)
    uv = pts if space == "uv" else xy_to_uv(_as_xy(pts, space))
    d = _edge_cross(uv, quadrangle.corners_uv[None])[..., 0, :]
    return d.min(axis=-1)


# ---------------------------------------------------------------- SDCM ellipses


@dataclass(frozen=True)
class Ellipse:
    """A one-step colour-discrimination ellipse in CIE 1931 xy.

    ``g`` holds (g11, g12, g22); the ellipse of n steps is
    g11 dx^2 + 2 g12 dx dy + g22 dy^2 = n^2.
    """

    name: str
    centre_xy: np.ndarray
    g: np.ndarray
    source: str
    extrapolated: bool = False

    def steps(self, xy) -> np.ndarray:
        """SDCM steps of points (..., 2) in xy from this ellipse's centre."""
        return sdcm_steps(xy, self.centre_xy, self.g)


# IEC 60081 Annex D, lamp-centre chromaticities and ellipse coefficients (from memory).
# name: (x, y, g11, g12, g22)
IEC60081_ELLIPSES: dict[str, tuple[float, float, float, float, float]] = {
    "F6500": (0.313, 0.337, 86.0e4, -40.0e4, 45.0e4),
    "F5000": (0.346, 0.359, 56.0e4, -25.0e4, 28.0e4),
    "F4000": (0.380, 0.380, 39.5e4, -21.5e4, 26.0e4),
    "F3500": (0.409, 0.394, 38.0e4, -20.0e4, 25.0e4),
    "F3000": (0.440, 0.403, 39.0e4, -19.5e4, 27.5e4),
    "F2700": (0.463, 0.420, 44.0e4, -18.6e4, 27.0e4),
}


def iec60081_ellipse(name: str | int) -> Ellipse:
    """The IEC 60081 Annex D ellipse ``"F3000"`` (or nominal ``3000``)."""
    key = f"F{int(name)}" if isinstance(name, (int, float)) or str(name).isdigit() else str(name).upper()
    try:
        x, y, g11, g12, g22 = IEC60081_ELLIPSES[key]
    except KeyError:
        allowed = ", ".join(IEC60081_ELLIPSES)
        raise InputError(f"no IEC 60081 ellipse named {name!r}; expected one of {allowed}") from None
    c = np.array([x, y])
    g = np.array([g11, g12, g22])
    c.setflags(write=False)
    g.setflags(write=False)
    return Ellipse(key, c, g, "IEC 60081 Annex D (from memory)")


def sdcm_steps(xy, centre_xy, g) -> np.ndarray:
    """Steps n = sqrt(g11 dx^2 + 2 g12 dx dy + g22 dy^2) of points (..., 2) from a centre.

    ``centre_xy`` (..., 2) and ``g`` (..., 3) broadcast against the points.
    """
    xy = np.asarray(xy, dtype=np.float64)
    c = np.asarray(centre_xy, dtype=np.float64)
    g = np.asarray(g, dtype=np.float64)
    dx = xy[..., 0] - c[..., 0]
    dy = xy[..., 1] - c[..., 1]
    q = g[..., 0] * dx * dx + 2.0 * g[..., 1] * dx * dy + g[..., 2] * dy * dy
    return np.sqrt(np.maximum(q, 0.0))


def metric_from_axes(a, b, theta_deg) -> np.ndarray:
    """(g11, g12, g22) of the one-step ellipse with semi-axes a, b, major axis at theta from +x.

    g = R diag(1/a^2, 1/b^2) R^T with R the rotation by theta.
    """
    a = np.asarray(a, dtype=np.float64)
    b = np.asarray(b, dtype=np.float64)
    t = np.deg2rad(np.asarray(theta_deg, dtype=np.float64))
    c, s = np.cos(t), np.sin(t)
    ia, ib = 1.0 / a**2, 1.0 / b**2
    return np.stack([ia * c * c + ib * s * s, (ia - ib) * c * s, ia * s * s + ib * c * c], axis=-1)


def axes_from_metric(g) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Semi-major axis a, semi-minor axis b and the major-axis angle theta [deg, 0-180) of (g11, g12, g22)."""
    g = np.asarray(g, dtype=np.float64)
    g11, g12, g22 = g[..., 0], g[..., 1], g[..., 2]
    mean = 0.5 * (g11 + g22)
    half = np.sqrt((0.5 * (g11 - g22)) ** 2 + g12**2)
    lam_small = mean - half  # eigenvalue along the major axis
    lam_big = mean + half
    # Eigenvector of the small eigenvalue: (g12, lam_small - g11), or (lam_small - g22, g12).
    vx = np.where(np.abs(g12) > 0, g12, np.where(g11 <= g22, 1.0, 0.0))
    vy = np.where(np.abs(g12) > 0, lam_small - g11, np.where(g11 <= g22, 0.0, 1.0))
    theta = np.rad2deg(np.arctan2(vy, vx)) % 180.0
    return 1.0 / np.sqrt(lam_small), 1.0 / np.sqrt(lam_big), theta


@lru_cache(maxsize=1)
def _macadam_data() -> tuple[np.ndarray, np.ndarray]:
    from colour.models.datasets.macadam_ellipses import DATA_MACADAM_1942_ELLIPSES

    d = np.asarray(DATA_MACADAM_1942_ELLIPSES, dtype=np.float64)
    centres = d[:, 0:2].copy()
    # "Calculated" columns: 10^3 a, 10^3 b, theta [deg] -- Wyszecki & Stiles (2000) Table 2(5.4.1).
    g = metric_from_axes(d[:, 5] * 1e-3, d[:, 6] * 1e-3, d[:, 7])
    centres.setflags(write=False)
    g.setflags(write=False)
    return centres, g


def macadam1942_metric(xy) -> tuple[np.ndarray, np.ndarray]:
    """MacAdam (1942) metric tensor (g11, g12, g22) interpolated at points (..., 2) in xy.

    Returns ``(g, extrapolated)``: g of shape (..., 3), and a bool array that is True
    where the point is outside the hull of MacAdam's 25 centres (nearest centre used).
    """
    centres, gdata = _macadam_data()
    pts = np.asarray(xy, dtype=np.float64)
    flat = pts.reshape(-1, 2)
    tri = _delaunay()
    simplex = tri.find_simplex(flat)
    inside = simplex >= 0
    s = np.where(inside, simplex, 0)
    T = tri.transform[s]
    bary2 = np.einsum("nij,nj->ni", T[:, :2, :], flat - T[:, 2, :])
    bary = np.concatenate([bary2, 1.0 - bary2.sum(axis=1, keepdims=True)], axis=1)
    verts = tri.simplices[s]
    g_in = np.einsum("nk,nkc->nc", bary, gdata[verts])
    nearest = np.argmin(((flat[:, None, :] - centres[None]) ** 2).sum(-1), axis=1)
    g = np.where(inside[:, None], g_in, gdata[nearest])
    return g.reshape(pts.shape[:-1] + (3,)), (~inside).reshape(pts.shape[:-1])


@lru_cache(maxsize=1)
def _delaunay():
    from scipy.spatial import Delaunay

    return Delaunay(_macadam_data()[0])


def macadam1942_ellipse(centre_xy, *, name: str = "") -> Ellipse:
    """The one-step MacAdam (1942) ellipse interpolated at ``centre_xy`` (x, y)."""
    c = np.asarray(centre_xy, dtype=np.float64).reshape(2)
    g, extra = macadam1942_metric(c)
    c.setflags(write=False)
    g.setflags(write=False)
    return Ellipse(
        name or f"MacAdam1942({c[0]:.4f},{c[1]:.4f})",
        c,
        g,
        "MacAdam 1942, Wyszecki & Stiles Table 2(5.4.1) via colour-science, interpolated",
        bool(extra),
    )


def ellipse_boundary_xy(ellipse: Ellipse, steps: float = 1.0, *, n_points: int = 181) -> np.ndarray:
    """Points (n_points, 2) in xy on the ``steps``-step contour of ``ellipse`` (for drawing)."""
    a, b, theta = axes_from_metric(ellipse.g)
    t = np.linspace(0.0, 2.0 * np.pi, int(n_points))
    th = np.deg2rad(theta)
    ex = steps * (a * np.cos(t) * np.cos(th) - b * np.sin(t) * np.sin(th))
    ey = steps * (a * np.cos(t) * np.sin(th) + b * np.sin(t) * np.cos(th))
    return np.stack([ellipse.centre_xy[0] + ex, ellipse.centre_xy[1] + ey], axis=-1)
