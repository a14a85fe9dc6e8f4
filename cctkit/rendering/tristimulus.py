"""Both colour-rendering standards at tristimulus level: one weight matrix, references never built as spectra.

Everything CIE 13.3 and CIE 224 / TM-30 need from a spectrum S is linear in S: the
source's tristimulus values and those of the test samples under it, for the 2 deg
observer (CIE 13.3) and the 10 deg observer over 380-780 nm (CIE 224).  So one matrix
``W`` (471, 346) holds every weighting function side by side, and ``S @ W`` gives all
of them at once.  The references follow from the same linearity:

* CIE daylight is S0 + M1 S1 + M2 S2, so its row is (1, M1, M2) @ (basis @ W), a
  (3, 346) product computed once;
* Planck is needed only below 5000 K, where both standards use it; those spectra are
  built once and multiplied by ``W`` once, shared by both;
* the CIE 224 blend m P + (1 - m) D (P, D scaled to equal Y) is done on these rows.

The results equal those of the spectral route (:func:`.cie13_3.cie13_3_samples`,
:func:`.tm30.tm30_samples` against :func:`.reference.reference_cie13_3` /
:func:`.reference.reference_cie224` spectra) up to floating-point rounding (the scale
factors the standards cancel are not applied); ``tests/test_rendering_fast.py`` holds
them within 1e-10 relative.
"""

from __future__ import annotations

from functools import lru_cache

import numpy as np

from ..colorimetry import ROW_ALIGN
from ..constants import WAVELENGTH_NM
from ..planck import spectral_exitance
from ..tables import cmfs, table

__all__ = ["weights", "rendering_rows", "rendering_row_blocks", "column", "COLUMNS", "ROW_ALIGN"]

# column blocks of the weight matrix
_C2 = slice(0, 3)  # CIE 1931 2 deg XYZ of the source
_S2 = slice(3, 45)  # 14 CIE 13.3 samples x 3 (2 deg)
_C10 = slice(45, 48)  # CIE 1964 10 deg XYZ over 380-780 nm (CIE 224 calculation range)
_S10 = slice(48, 345)  # 99 CIE 224 samples x 3 (10 deg, 380-780 nm)
_Y10_FULL = 345  # 10 deg Y over 360-830 nm: equalises P and D in the CIE 224 blend (see reference_cie224)
_Y2_FULL = 1  # 2 deg Y over 360-830 nm (the other blend observer)
COLUMNS = {"xyz2": _C2, "samples2": _S2, "xyz10": _C10, "samples10": _S10}


@lru_cache(maxsize=1)
def weights() -> np.ndarray:
    """The weight matrix (471, 346): every linear functional of a spectrum both standards use."""
    from .tm30 import RANGE_NM

    cmf2 = cmfs(2)
    tcs = table("tcs_1995")
    inside = ((WAVELENGTH_NM >= RANGE_NM[0]) & (WAVELENGTH_NM <= RANGE_NM[1])).astype(np.float64)
    cmf10 = cmfs(10) * inside[:, None]
    ces = table("ces_2017")
    L = WAVELENGTH_NM.shape[0]
    W = np.concatenate(
        [
            cmf2,
            (tcs[:, :, None] * cmf2[:, None, :]).reshape(L, -1),
            cmf10,
            (ces[:, :, None] * cmf10[:, None, :]).reshape(L, -1),
            cmfs(10)[:, 1:2],
        ],
        axis=1,
    )
    W = np.ascontiguousarray(W)
    W.setflags(write=False)
    return W


_BLOCKS = {"cri": slice(0, 45), "tm30": slice(45, 346), "both": slice(0, 346)}


@lru_cache(maxsize=4)
def _block(which: str) -> tuple[np.ndarray, np.ndarray]:
    """The columns of :func:`weights` ``which`` standard needs, and S0, S1, S2 through them (3, k)."""
    W = np.ascontiguousarray(weights()[:, _BLOCKS[which]])
    day = np.ascontiguousarray(table("d_basis").T @ W)
    W.setflags(write=False)
    day.setflags(write=False)
    return W, day


def _daylight_coefficients(T: np.ndarray, round_m: bool) -> np.ndarray:
    from .reference import daylight_xy

    xy = daylight_xy(T)
    x, y = xy[:, 0], xy[:, 1]
    M = 0.0241 + 0.2562 * x - 0.7341 * y
    M1 = (-1.3515 - 1.7703 * x + 5.9114 * y) / M
    M2 = (0.0300 - 31.4424 * x + 30.0717 * y) / M
    if round_m:
        M1, M2 = np.round(M1, 3), np.round(M2, 3)
    return np.stack([np.ones_like(M1), M1, M2], axis=-1)


def rendering_rows(
    values: np.ndarray, T: np.ndarray, *, which: str = "both", round_m: bool = True, blend_observer: int = 10
) -> dict[str, np.ndarray]:
    """Weight-matrix rows of the test spectra and of both standards' references.

    Parameters
    ----------
    values : (N, 471)
        Test spectra on the working grid.
    T : (N,)
        Reference CCT [K]; NaN where there is no reference (its rows are NaN).
    which
        ``"cri"``, ``"tm30"`` or ``"both"``: the columns computed (:data:`COLUMNS`).
    round_m, blend_observer
        As in :func:`.reference.reference_cie13_3` and :func:`.reference.reference_cie224`.

    Returns
    -------
    dict
        ``test``, ``ref13``, ``ref224`` (N, 346) on an arbitrary scale per row (columns not
        computed are absent from the block, see :func:`column`); ``m13``, ``m224`` (N,),
        the weight of the Planckian component (1 Planckian, 0 daylight, between: the blend).
    """
    n = np.asarray(T).shape[0]
    for _start, _stop, rows in rendering_row_blocks(
        values, T, max(n, 1), which=which, round_m=round_m, blend_observer=blend_observer
    ):
        return rows
    raise AssertionError("unreachable")  # pragma: no cover - one block always comes


def _rows_of(product, a: int, b: int, k: int) -> np.ndarray:
    """Rows ``a:b`` of ``product(0, k)``, computed as ``product(lo, hi)`` over the aligned window around them.

    The window starts on a multiple of :data:`ROW_ALIGN` and ends on one (or at ``k``), so each row
    falls in the same kind of BLAS tile as in the product over all ``k`` rows: the same bits.
    """
    lo = a - a % ROW_ALIGN
    hi = min(-(-b // ROW_ALIGN) * ROW_ALIGN, k)
    return product(lo, hi)[a - lo : b - lo]


def rendering_row_blocks(
    values: np.ndarray,
    T: np.ndarray,
    block: int,
    *,
    which: str = "both",
    round_m: bool = True,
    blend_observer: int = 10,
):
    """:func:`rendering_rows` of ``values`` in consecutive blocks of ``block`` spectra: ``(start, stop, rows)``.

    Every number equals the same row of ``rendering_rows(values, T)`` bit for bit: the test rows are
    products of blocks starting on a multiple of :data:`ROW_ALIGN`, and each reference's rows are
    computed over the aligned window of that reference's rows (:func:`_rows_of`), so a block's
    temporaries stay in the processor's cache without changing a bit.  ``block`` is a multiple of
    :data:`ROW_ALIGN` unless it covers all spectra.
    """
    from .reference import CIE13_3_DAYLIGHT_FROM_K, CIE224_BLEND_K

    if blend_observer == 2 and which == "tm30":
        which = "both"  # the 2 deg Y that equalises the blend sits in the CIE 13.3 block
    W, day_rows = _block(which)
    off = _BLOCKS[which].start
    T = np.asarray(T, dtype=np.float64)
    values = np.asarray(values, dtype=np.float64)
    n, k = T.shape[0], W.shape[1]
    if block < n and block % ROW_ALIGN:
        raise ValueError(f"block must be a multiple of {ROW_ALIGN} spectra, got {block}")
    finite = np.isfinite(T)
    lo, hi = CIE224_BLEND_K
    planck = finite & (T < CIE13_3_DAYLIGHT_FROM_K)  # also where CIE 224 has a Planckian part: hi = 5000 K
    day = finite & (T >= lo)
    # each reference's rows are computed for the spectra that have it only (P: Planckian, D: daylight)
    T_p = T[planck]
    coef = _daylight_coefficients(T[day], round_m) if day.any() else np.zeros((0, 3))
    at_p = np.concatenate([[0], np.cumsum(planck)])  # rank of each spectrum among those with P
    at_d = np.concatenate([[0], np.cumsum(day)])
    k_p, k_d = T_p.shape[0], coef.shape[0]
    m224_all = np.clip((hi - T) / (hi - lo), 0.0, 1.0)
    y = (_Y10_FULL if blend_observer == 10 else _Y2_FULL) - off
    for s in range(0, max(n, 1), max(block, 1)):
        e = min(s + block, n)
        b_p, b_d, b_f, b_T = planck[s:e], day[s:e], finite[s:e], T[s:e]
        P = (
            _rows_of(lambda i, j: spectral_exitance(T_p[i:j], WAVELENGTH_NM) @ W, at_p[s], at_p[e], k_p)
            if b_p.any()
            else np.zeros((0, k))
        )
        D = _rows_of(lambda i, j: coef[i:j] @ day_rows, at_d[s], at_d[e], k_d) if b_d.any() else np.zeros((0, k))
        out = {"test": values[s:e] @ W, "block": which}
        m = e - s
        if which in ("cri", "both"):
            ref13 = np.full((m, k), np.nan)
            ref13[b_p] = P  # below 5000 K
            above = b_f & (b_T >= CIE13_3_DAYLIGHT_FROM_K)
            ref13[above] = D[above[b_d]]
            out["ref13"] = ref13
        m224 = m224_all[s:e]
        if which in ("tm30", "both"):
            ref224 = np.full((m, k), np.nan)
            pure_p, pure_d = m224 >= 1, m224 <= 0  # NaN (no reference) is neither: its row stays NaN
            blend = b_f & ~pure_p & ~pure_d
            with np.errstate(invalid="ignore", divide="ignore"):
                for rows, of, R in ((pure_p, b_p, P), (pure_d, b_d, D)):
                    if rows.any():
                        sub = R[rows[of]]
                        ref224[rows] = sub * (100.0 / sub[:, y])[:, None]
                if blend.any():  # between the two (CIE 224: 4000-5000 K), both exist; the same arithmetic
                    Pb, Db = P[blend[b_p]], D[blend[b_d]]
                    mb = m224[blend][:, None]
                    ref224[blend] = mb * (Pb * (100.0 / Pb[:, y])[:, None]) + (1.0 - mb) * (
                        Db * (100.0 / Db[:, y])[:, None]
                    )
            out["ref224"] = ref224
        out["m13"] = np.where(b_f, np.where(b_T >= CIE13_3_DAYLIGHT_FROM_K, 0.0, 1.0), np.nan)
        out["m224"] = m224
        yield s, e, out


def column(rows: dict, name: str) -> slice:
    """The slice of :data:`COLUMNS` ``name`` within the block ``rows`` holds."""
    c = COLUMNS[name]
    off = _BLOCKS[rows["block"]].start
    return slice(c.start - off, c.stop - off)
