"""Dominant wavelength, complementary wavelength and excitation purity (CIE 15:2018 section 9.1).

In the CIE 1931 xy diagram a straight line is drawn from the white point W through the
sample S.  Where it meets the spectral locus (360-830 nm, built from the CIE 1931 2 deg
CMFs at 1 nm and joined point to point) beyond S lies the dominant wavelength; where it
meets the locus on the other side of W lies the complementary wavelength.  Samples whose
ray meets the purple line (the straight line joining the 360 nm and 830 nm ends of the
locus) instead have no dominant wavelength; they are described by their complementary
wavelength.

Conventions (ours, written down here and in DEVELOPERS.md):

* White point (the "specified achromatic stimulus" of CIE 15:2018 section 9.1, which leaves
  its choice to the user): equal-energy illuminant E (x = y = 1/3) by default, because cctkit
  measures self-luminous sources and E is the achromatic stimulus used for them (common
  practice for coloured LEDs; CIE 15 uses the illuminant's white for object colours).
  ``white_xy`` accepts any white; :data:`WHITE_POINTS` names E, D65, D50 and A
  (:func:`resolve_white`), and every record states the white used (``dominant_white``,
  ``dominant_white_x``, ``dominant_white_y``).
* ``dominant_wavelength_nm`` is signed: for purples it is minus the complementary
  wavelength (the usual notation, also that of the reference library colour-science);
  ``is_purple`` says which.  ``complementary_wavelength_nm`` is given for every sample
  whose backward ray meets the spectral locus (NaN where it meets the purple line).
* Wavelengths are interpolated linearly along the segment of the locus that the ray
  crosses, so they are not restricted to whole nanometres.  Beyond about 700 nm the locus
  points nearly coincide, so a dominant wavelength there is poorly defined; the first
  crossing along the ray (the shortest such wavelength on ties) is reported.
* Excitation purity p_e = |S - W| / |B - W|, where B is the boundary point (on the
  spectral locus or, for purples, on the purple line) beyond S.  p_e = 0 at the white
  point (where no dominant wavelength exists: NaN) and p_e > 1 outside the locus.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache
from typing import Any

import numpy as np

from .constants import WAVELENGTH_NM
from .errors import InputError
from .photometry import grid_values

__all__ = [
    "EQUAL_ENERGY_XY",
    "WHITE_POINTS",
    "resolve_white",
    "DominantWavelength",
    "dominant_wavelength",
    "dominant_wavelength_of_spectra",
    "spectral_locus_xy",
]

#: Chromaticity of the equal-energy illuminant E (CIE 15:2018 section 9.1: x = y = 1/3).
EQUAL_ENERGY_XY = (1.0 / 3.0, 1.0 / 3.0)

#: Named white points for the dominant wavelength: xy for the CIE 1931 2 deg / CIE 1964 10 deg observer
#: (CIE 15:2018 Table T.3, colorimetric data of the CIE illuminants, from memory to 5 digits; the tests
#: hold them against the reference library colour-science's CCS_ILLUMINANTS).
WHITE_POINTS: dict[str, dict[int, tuple[float, float]]] = {
    "E": {2: EQUAL_ENERGY_XY, 10: EQUAL_ENERGY_XY},
    "D65": {2: (0.31272, 0.32903), 10: (0.31382, 0.33100)},
    "D50": {2: (0.34567, 0.35851), 10: (0.34773, 0.35952)},
    "A": {2: (0.44758, 0.40745), 10: (0.45117, 0.40594)},
}


def resolve_white(white: Any = "E", *, observer: int = 2) -> tuple[str, tuple[float, float]]:
    """``(name, (x, y))`` of a white point given by name (:data:`WHITE_POINTS`, any case) or as (x, y).

    A pair is named ``"x,y"`` with its coordinates.  Raises :class:`~cctkit.errors.InputError`
    naming the value and what is allowed.
    """
    allowed = ", ".join(WHITE_POINTS)
    given = white
    if isinstance(white, str):
        key = white.strip().upper()
        if key in WHITE_POINTS:
            return key, WHITE_POINTS[key][10 if int(observer) == 10 else 2]
        parts = white.replace(";", ",").split(",")
        if len(parts) != 2:
            raise InputError(f"white point must be one of {allowed} or x,y (e.g. 0.3127,0.3290), got {white!r}")
        try:
            white = (float(parts[0]), float(parts[1]))
        except ValueError:
            raise InputError(
                f"white point must be one of {allowed} or x,y (e.g. 0.3127,0.3290), got {white!r}"
            ) from None
    xy = np.asarray(white, dtype=np.float64)
    if xy.shape != (2,) or not np.all(np.isfinite(xy)) or np.any(xy <= 0) or xy.sum() >= 1:
        raise InputError(
            f"white point must be one of {allowed} or a chromaticity x,y with x, y > 0 and x + y < 1, got {given!r}"
        )
    x, y = float(xy[0]), float(xy[1])
    return f"{x:g},{y:g}", (x, y)


_CHUNK = 16384  # samples per block: bounds the (samples x candidate segments) work arrays to ~10 MB each
_EPS = 1e-12


@lru_cache(maxsize=2)
def spectral_locus_xy(observer: int = 2) -> np.ndarray:
    """xy of the spectral locus 360-830 nm at 1 nm, (471, 2), for the 2 deg or 10 deg observer."""
    from .colorimetry import XYZ_to_xy
    from .tables import cmfs

    xy = XYZ_to_xy(cmfs(observer))
    xy.setflags(write=False)
    return xy


def _cross(ax, ay, bx, by):
    return ax * by - ay * bx


def _segments(locus: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Start and end points of the boundary's segments: i -> i+1 on the locus, then the purple line 830 -> 360."""
    return np.vstack([locus[:-1], locus[-1:]]), np.vstack([locus[1:], locus[:1]])


#: Angular tolerance [rad] within which two non-neighbouring segments count as overlapping (far above
#: the angle the 1e-9 segment-parameter tolerance of the crossing test can subtend, ~2e-10 rad).
_ANGLE_TOL = 1e-8


@lru_cache(maxsize=16)
def _angular_index(observer: int, wx: float, wy: float):
    """The boundary seen from the white point (wx, wy), for the sorted search of :func:`_hits`.

    Returns ``(start, sign, envelope, irregular, span_lo, span_hi)``: the boundary's vertex
    angles are ``sign * (angle - start)`` unwrapped from 0 to 2 pi along the boundary;
    ``envelope`` (472,) is their running maximum (sorted, for ``searchsorted``); ``irregular``
    lists the spectral segments whose angular span overlaps a segment other than its neighbours
    (where the locus turns back on itself as seen from the white: the nearly coincident points
    beyond about 700 nm), and ``span_lo``/``span_hi`` the merged angular intervals they cover.
    A ray within those intervals is tested against every irregular segment.  A white outside
    the boundary has no angular order: every segment is irregular and every angle in a span.
    """
    locus = spectral_locus_xy(observer)
    closed = np.vstack([locus, locus[:1]])
    ang = np.unwrap(np.arctan2(closed[:, 1] - wy, closed[:, 0] - wx))
    total = ang[-1] - ang[0]
    n_seg = locus.shape[0]
    if abs(abs(total) - 2.0 * np.pi) > 1e-6:  # not enclosed
        return float(ang[0]), 1.0, np.zeros(n_seg + 1), np.arange(n_seg - 1), np.array([-1.0]), np.array([10.0])
    sign = 1.0 if total > 0 else -1.0
    a = sign * (ang - ang[0])
    lo = np.minimum(a[:-1], a[1:]) - _ANGLE_TOL
    hi = np.maximum(a[:-1], a[1:]) + _ANGLE_TOL
    overlap = (lo[:, None] < hi[None, :]) & (lo[None, :] < hi[:, None])
    k = np.arange(n_seg)
    gap = np.abs(k[:, None] - k[None, :])
    overlap &= (gap > 1) & (gap < n_seg - 1)  # neighbours share a vertex (segment 0 and the purple line too)
    irregular = np.flatnonzero(overlap.any(axis=1) | (a[1:] <= a[:-1]))
    irregular = irregular[irregular != n_seg - 1]  # the purple line is tested for every sample anyway
    span_lo, span_hi = _merge(lo[irregular], hi[irregular])
    envelope = np.maximum.accumulate(a)
    for arr in (envelope, irregular, span_lo, span_hi):
        arr.setflags(write=False)
    return float(ang[0]), sign, envelope, irregular, span_lo, span_hi


def _merge(lo: np.ndarray, hi: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Union of the intervals [lo, hi] as sorted disjoint intervals."""
    if lo.size == 0:
        return np.array([np.inf]), np.array([-np.inf])
    order = np.argsort(lo)
    out_lo, out_hi = [lo[order[0]]], [hi[order[0]]]
    for a, b in zip(lo[order[1:]].tolist(), hi[order[1:]].tolist()):
        if a <= out_hi[-1]:
            out_hi[-1] = max(out_hi[-1], b)
        else:
            out_lo.append(a)
            out_hi.append(b)
    return np.array(out_lo), np.array(out_hi)


def _in_spans(angle: np.ndarray, span_lo: np.ndarray, span_hi: np.ndarray) -> np.ndarray:
    j = np.searchsorted(span_lo, angle, side="right") - 1
    return (j >= 0) & (angle <= span_hi[np.maximum(j, 0)])


def _candidates(S: np.ndarray, w: np.ndarray, observer: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Per sample, the indices (sorted) of every segment its line through the white can cross.

    One ``searchsorted`` of the ray's angle (and of the opposite angle) in the envelope gives
    the segment whose span holds it; its neighbours cover crossings at a shared vertex; the
    purple line is added for every sample.  Returns ``(C, rows, C_irr)``: ``C`` (n, 9) for all
    samples, and for the samples ``rows`` whose line points into an irregular span, ``C_irr``
    with the irregular segments added.
    """
    start, sign, envelope, irregular, span_lo, span_hi = _angular_index(observer, float(w[0]), float(w[1]))
    n_seg = envelope.shape[0] - 1
    phi = np.arctan2(S[:, 1] - w[1], S[:, 0] - w[0])
    two_pi = 2.0 * np.pi
    fwd = np.mod(sign * (phi - start), two_pi)
    back = np.mod(fwd + np.pi, two_pi)
    near = np.arange(-2, 2)
    C = np.concatenate(
        [
            np.mod(np.searchsorted(envelope, fwd)[:, None] + near, n_seg),
            np.mod(np.searchsorted(envelope, back)[:, None] + near, n_seg),
            np.full((S.shape[0], 1), n_seg - 1),
        ],
        axis=1,
    )
    rows = np.flatnonzero(_in_spans(fwd, span_lo, span_hi) | _in_spans(back, span_lo, span_hi))
    C_irr = np.concatenate([C[rows], np.broadcast_to(irregular, (rows.size, irregular.size))], axis=1)
    return np.sort(C, axis=1), rows, np.sort(C_irr, axis=1)


def _hits(S: np.ndarray, W: np.ndarray, locus: np.ndarray, observer: int):
    """For each sample, ray parameter of the first forward boundary crossing and the backward locus crossing.

    ``W`` holds one white point for all samples (2,).  Only the candidate segments of
    :func:`_candidates` are tested, each by exactly the arithmetic of a test against all
    segments, so the result is that of the exhaustive test, bit for bit (the benchmark
    ``benchmarks/bench_shape_dominant.py`` keeps the exhaustive test; the tests compare them).
    """
    A_all, B_all = _segments(locus)
    C, rows, C_irr = _candidates(S, W, observer)
    out = _hits_among(S, W, A_all, B_all, C)
    if rows.size:
        sub = _hits_among(S[rows], W, A_all, B_all, C_irr)
        for full, part in zip(out, sub):
            full[rows] = part
    return (*out, A_all.shape[0] - 1)


def _hits_among(S: np.ndarray, W: np.ndarray, A_all: np.ndarray, B_all: np.ndarray, C: np.ndarray):
    n_seg = A_all.shape[0]
    A, E = A_all[C], (B_all - A_all)[C]  # (n, c, 2)
    ex, ey = E[..., 0], E[..., 1]
    dx = (S[:, 0] - W[0])[:, None]
    dy = (S[:, 1] - W[1])[:, None]
    rx = A[..., 0] - W[0]
    ry = A[..., 1] - W[1]
    den = _cross(dx, dy, ex, ey)
    ok = np.abs(den) > _EPS
    safe = np.where(ok, den, 1.0)
    t = _cross(rx, ry, ex, ey) / safe
    s = _cross(rx, ry, dx, dy) / safe
    on_segment = ok & (s >= -1e-9) & (s <= 1.0 + 1e-9)
    purple = C == n_seg - 1
    rows = np.arange(len(S))
    fwd_t = np.where(on_segment & (t > 0), t, np.inf)
    k_fwd = np.argmin(fwd_t, axis=1)  # candidates sorted by index: ties go to the lowest segment
    t_fwd = fwd_t[rows, k_fwd]
    back_t = np.where(on_segment & (t < 0) & ~purple, t, -np.inf)
    back_any = np.where(on_segment & (t < 0), t, -np.inf)
    k_back = np.argmax(back_t, axis=1)
    t_back = back_t[rows, k_back]
    # the backward ray counts only if it meets the spectral locus before (or instead of) the purple line
    back_is_spectral = np.isfinite(t_back) & (t_back >= back_any.max(axis=1) - 1e-12)
    s_fwd = np.clip(s[rows, k_fwd], 0.0, 1.0)
    s_back = np.clip(s[rows, k_back], 0.0, 1.0)
    return [t_fwd, C[rows, k_fwd], s_fwd, t_back, C[rows, k_back], s_back, back_is_spectral]


@dataclass(frozen=True)
class DominantWavelength:
    """Dominant/complementary wavelength and excitation purity, arrays of the samples' leading shape.

    Attributes
    ----------
    dominant_wavelength_nm
        Dominant wavelength [nm]; for purples minus the complementary wavelength; NaN at the white point.
    complementary_wavelength_nm
        Complementary wavelength [nm] where the backward ray meets the spectral locus, else NaN.
    purity
        Excitation purity (dimensionless, 0 at the white point, 1 on the locus or purple line).
    is_purple
        True where the forward ray meets the purple line.
    boundary_xy
        xy of the boundary point beyond the sample, (..., 2).
    """

    dominant_wavelength_nm: np.ndarray
    complementary_wavelength_nm: np.ndarray
    purity: np.ndarray
    is_purple: np.ndarray
    boundary_xy: np.ndarray
    white: str = ""
    white_xy: np.ndarray | None = None

    def record(self, i: int) -> dict[str, Any]:
        from .formats import finite_or_none

        rec: dict[str, Any] = {
            "dominant_wavelength_nm": finite_or_none(self.dominant_wavelength_nm[i]),
            "purity": finite_or_none(self.purity[i]),
        }
        if self.white_xy is not None:
            w = np.asarray(self.white_xy, dtype=np.float64).reshape(-1, 2)
            wx, wy = w[i if w.shape[0] > 1 else 0]
            rec.update(dominant_white=self.white, dominant_white_x=float(wx), dominant_white_y=float(wy))
        return rec

    def columns(self) -> dict[str, np.ndarray]:
        """The fields of :meth:`record` for every spectrum at once (NaN where a record has None)."""
        cols: dict[str, np.ndarray] = {"dominant_wavelength_nm": self.dominant_wavelength_nm, "purity": self.purity}
        if self.white_xy is not None:
            n = np.asarray(self.purity).shape[0]
            w = np.broadcast_to(np.asarray(self.white_xy, dtype=np.float64).reshape(-1, 2), (n, 2))
            name = np.empty(n, dtype=object)
            name[:] = self.white
            cols.update(dominant_white=name, dominant_white_x=w[:, 0].copy(), dominant_white_y=w[:, 1].copy())
        return cols


def block_from_hits(s_xy: np.ndarray, w: np.ndarray, hits: Any) -> tuple[np.ndarray, ...]:
    """(dominant, complementary, purity, is_purple, boundary_xy) of one block of samples ``s_xy`` (M, 2)
    seen from the white ``w``, given ``hits(S, W)`` (the ray-locus intersections, as :func:`_hits`).

    Samples that are not finite or sit on the white get no wavelength (purity 0 on the white).
    ``benchmarks/bench_shape_dominant.py`` passes its exhaustive intersection test here."""
    wl = WAVELENGTH_NM
    finite = np.all(np.isfinite(s_xy), axis=1)
    at_white = finite & (np.hypot(*(s_xy - w).T) <= 1e-12)
    t_f, j_f, s_f, t_b, j_b, s_b, back_ok, purple_index = hits(np.where(finite[:, None], s_xy, w), w)
    found = finite & ~at_white & np.isfinite(t_f)
    is_purple = found & (j_f == purple_index)
    lam_f = wl[np.minimum(j_f, wl.shape[0] - 2)] + s_f
    lam_b = np.where(back_ok & finite & ~at_white, wl[np.minimum(j_b, wl.shape[0] - 2)] + s_b, np.nan)
    dom = np.where(found, np.where(is_purple, -lam_b, lam_f), np.nan)
    with np.errstate(divide="ignore"):
        purity = np.where(found, 1.0 / t_f, np.where(at_white, 0.0, np.nan))
    t_used = np.where(found, t_f, 0.0)[:, None]
    boundary = np.where(found[:, None], w + t_used * (s_xy - w), np.nan)
    return dom, lam_b, purity, is_purple, boundary


def dominant_wavelength(xy: Any, *, white_xy: Any = EQUAL_ENERGY_XY, observer: int = 2) -> DominantWavelength:
    """Dominant (or complementary) wavelength and excitation purity of chromaticities.

    Parameters
    ----------
    xy : array_like (..., 2)
        CIE 1931 (observer 2) or 1964 (observer 10) chromaticity of the samples.
    white_xy : str or array_like (2,) or (..., 2)
        White point: a name of :data:`WHITE_POINTS` (``"E"``, ``"D65"``, ``"D50"``, ``"A"``),
        ``"x,y"``, or the chromaticity itself; equal-energy E by default (see the module notes).
    observer
        2 or 10: which observer's spectral locus (360-830 nm) bounds the diagram.

    Returns
    -------
    DominantWavelength

    References
    ----------
    CIE 15:2018 section 9.1 (dominant wavelength, complementary wavelength, excitation purity).
    """
    S = np.asarray(xy, dtype=np.float64)
    if S.ndim == 0 or S.shape[-1] != 2:
        raise InputError(f"xy: last axis must hold the two chromaticity coordinates x, y, got shape {S.shape}")
    name, W = _white(white_xy, observer)
    lead = np.broadcast_shapes(S.shape[:-1], W.shape[:-1])
    S = np.broadcast_to(S, lead + (2,)).reshape(-1, 2)
    W = np.broadcast_to(W, lead + (2,)).reshape(-1, 2)
    locus = spectral_locus_xy(observer)

    n = S.shape[0]
    dom = np.full(n, np.nan)
    comp = np.full(n, np.nan)
    purity = np.full(n, np.nan)
    purple = np.zeros(n, dtype=bool)
    boundary = np.full((n, 2), np.nan)
    whites, which = np.unique(W, axis=0, return_inverse=True) if n else (W, np.zeros(0, dtype=np.intp))
    which = np.asarray(which).reshape(-1)
    for k, w in enumerate(whites):  # one white (the usual case) or a few: a loop over whites, not samples
        rows_w = np.flatnonzero(which == k) if whites.shape[0] > 1 else np.arange(n)
        for start in range(0, rows_w.size, _CHUNK):  # blocks of samples bound memory; each block is vectorised
            sl = rows_w[start : start + _CHUNK]
            dom[sl], comp[sl], purity[sl], purple[sl], boundary[sl] = block_from_hits(
                S[sl], w, lambda s_xy, w_xy: _hits(s_xy, w_xy, locus, observer)
            )
    return DominantWavelength(
        dominant_wavelength_nm=dom.reshape(lead),
        complementary_wavelength_nm=comp.reshape(lead),
        purity=purity.reshape(lead),
        is_purple=purple.reshape(lead),
        boundary_xy=boundary.reshape(lead + (2,)),
        white=name,
        white_xy=whites[0].copy() if whites.shape[0] == 1 else W.copy(),
    )


def _white(white_xy: Any, observer: int) -> tuple[str, np.ndarray]:
    """Name and xy array of the white point argument (a name, an (x, y), or one white per sample)."""
    if isinstance(white_xy, str):
        name, xy = resolve_white(white_xy, observer=observer)
        return name, np.array(xy, dtype=np.float64)
    W = np.asarray(white_xy, dtype=np.float64)
    if W.ndim == 0 or W.shape[-1] != 2 or not np.all(np.isfinite(W)):
        raise InputError(f"white_xy: expected finite (x, y), got {white_xy!r}")
    if W.shape != (2,):
        return "per sample", W
    for key, by_observer in WHITE_POINTS.items():
        if tuple(W.tolist()) == tuple(by_observer[10 if int(observer) == 10 else 2]):
            return key, W
    return f"{W[0]:g},{W[1]:g}", W


def dominant_wavelength_of_spectra(
    values: Any, *, white_xy: Any = EQUAL_ENERGY_XY, observer: int = 2
) -> DominantWavelength:
    """:func:`dominant_wavelength` of spectra on the working grid, (N, 471), via their xy."""
    from .colorimetry import XYZ, XYZ_to_xy

    v = np.atleast_2d(grid_values(values))
    return dominant_wavelength(XYZ_to_xy(XYZ(v, observer=observer)), white_xy=white_xy, observer=observer)
