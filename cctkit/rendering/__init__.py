"""Colour rendering: reference illuminants, CIE 13.3-1995 (Ra, R1-R14), CIE 224:2017 / TM-30 (Rf, Rg, ...).

Every function here works on spectra on the working grid, shape (N, 471), and takes
the test CCT as an argument so it does not depend on how the CCT was found;
:func:`colour_rendition` computes it with :func:`cctkit.cct.cct_duv` when not given.

Modules
-------
:mod:`.reference`  Planckian, CIE daylight, CIE 13.3 and CIE 224 references.
:mod:`.cie13_3`    CIE 13.3-1995 colour rendering index.
:mod:`.tm30`       CIE 224:2017 fidelity Rf and ANSI/IES TM-30-20 gamut and hue-bin measures.
:mod:`.cam`        CIECAM02 forward model and CAM02-UCS (CIE 159:2004).

Clause numbers cited in these modules are from memory of the standards; the numbers
themselves are checked against the reference library colour-science and published
values in ``tests/test_rendering.py`` and ``tests/test_reference.py``.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from ..colorimetry import XYZ, XYZ_to_uv
from .cie13_3 import DC_LIMIT, Cri13Result, cie13_3, cie13_3_samples
from .cie13_3 import from_rows as cri_from_rows
from .reference import (
    Reference,
    _kinds,
    _to_Y100,
    daylight_reference,
    daylight_xy,
    nominal_daylight_cct_K,
    planckian_reference,
    reference_cie13_3,
    reference_cie224,
)
from .tm30 import Tm30Result, fields_into, jab_into, tm30, tm30_samples
from .tristimulus import column, rendering_row_blocks

__all__ = [
    "Reference",
    "planckian_reference",
    "daylight_reference",
    "daylight_xy",
    "nominal_daylight_cct_K",
    "reference_cie13_3",
    "reference_cie224",
    "reference_for",
    "canonical_method",
    "REFERENCE_METHODS",
    "Cri13Result",
    "cie13_3",
    "cie13_3_samples",
    "DC_LIMIT",
    "Tm30Result",
    "tm30",
    "tm30_samples",
    "Rendition",
    "colour_rendition",
    "rendering_cct",
    "reference_cct",
    "REFERENCE_RANGE_K",
    "ReferenceComparison",
    "compare_to_reference",
]

#: Names accepted by :func:`reference_for` and the command line.
REFERENCE_METHODS = ("cie13.3", "cie224")


def canonical_method(method: str) -> str:
    """``"cie13.3"`` or ``"cie224"`` for the spellings people use (``CIE 13.3``, ``tm30``, ...)."""
    key = str(method).strip().lower().replace(" ", "").replace("_", ".").replace("-", "")
    if key in ("cie13.3", "cie13.31995", "13.3", "cri"):
        return "cie13.3"
    if key in ("cie224", "cie224:2017", "224", "tm30", "cie2017"):
        return "cie224"
    raise ValueError(f"method must be one of {', '.join(REFERENCE_METHODS)}, got {method!r}")


def reference_for(cct_K, *, method: str = "cie224") -> Reference:
    """The reference of ``method`` (``"cie13.3"`` or ``"cie224"``) for each CCT in ``cct_K`` [K]."""
    if canonical_method(method) == "cie13.3":
        return reference_cie13_3(cct_K)
    return reference_cie224(cct_K)


#: CCT range over which the references are defined [K]: the CIE 15 daylight polynomials hold
#: to 25000 K (CIE 15:2018 section 4.1.2); beyond, no reference is built.
REFERENCE_RANGE_K = (1000.0, 25000.0)
_BOUND_RTOL = 1e-6


def rendering_cct(values: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """CCT [K] and Duv by the CIE 1931 2 deg observer, which both rendering standards use."""
    from ..cct import cct_duv

    res = cct_duv(XYZ_to_uv(XYZ(values, observer=2)), observer=2)
    return np.asarray(res.cct_K, dtype=np.float64), np.asarray(res.duv, dtype=np.float64)


def reference_cct(cct_K, duv=None) -> np.ndarray:
    """The CCT a reference is built for: ``cct_K`` where |Duv| <= 0.05 (CIE 15:2018 section 9.5)
    and 1000 K <= CCT <= 25000 K (:data:`REFERENCE_RANGE_K`), else NaN.  The one rule for every caller."""
    from ..constants import DUV_LIMIT

    T = np.atleast_1d(np.asarray(cct_K, dtype=np.float64))
    # A blackbody at exactly 1000 K or 25000 K lands a rounding error either side of the bound:
    # within 1e-6 relative it is the bound (common practice, no source).
    lo, hi = REFERENCE_RANGE_K
    with np.errstate(invalid="ignore"):
        T = np.where((T < lo) & (T >= lo * (1 - _BOUND_RTOL)), lo, T)
        T = np.where((T > hi) & (T <= hi * (1 + _BOUND_RTOL)), hi, T)
    ok = np.isfinite(T) & (T >= lo) & (T <= hi)
    if duv is not None:
        d = np.atleast_1d(np.asarray(duv, dtype=np.float64))
        with np.errstate(invalid="ignore"):
            ok &= np.abs(d) <= DUV_LIMIT
    return np.where(ok, T, np.nan)


@dataclass(frozen=True)
class Rendition:
    """CIE 13.3 and CIE 224 / TM-30 results of the same N spectra.

    ``cct_K`` is the CCT both references were built for (NaN where no reference applies,
    :func:`reference_cct`); ``duv`` is NaN when the CCT was given without it.
    """

    cct_K: np.ndarray
    duv: np.ndarray
    cri: Cri13Result
    tm30: Tm30Result


def colour_rendition(values, *, cct_K=None, duv=None, measured_range_nm=None) -> Rendition:
    """Ra, R1-R14, Rf, Rg and the hue-bin measures of spectra on the working grid, (N, 471).

    Parameters
    ----------
    values : array_like (N, 471)
        Test spectra [any unit].
    cct_K : array_like (N,), optional
        CIE 1931 2 deg CCT of each spectrum [K]; computed (:func:`rendering_cct`) when omitted.
    duv : array_like (N,), optional
        Its Duv; with it, spectra with |Duv| > 0.05 get no reference.  Every index is NaN
        where :func:`reference_cct` gives no CCT.
    measured_range_nm : sequence of (lo, hi[, step]), optional
        Measured range of each spectrum [nm].  Where it leaves part of 380-780 nm uncovered,
        Rf, Rg and the hue-bin measures follow CIE 224 / TM-30's own rule
        (:func:`.tm30.short_range_rule`: zero where not measured, the reference at the CCT of
        that spectrum); CIE 13.3 has no such rule and keeps the nearest-value extrapolation.
    """
    v = np.asarray(values, dtype=np.float64)
    if v.ndim == 1:
        v = v[None]
    if cct_K is None:
        T, duv = rendering_cct(v)
    else:
        T = np.atleast_1d(np.asarray(cct_K, dtype=np.float64))
        duv = np.full_like(T, np.nan) if duv is None else np.atleast_1d(np.asarray(duv, dtype=np.float64))
    T_ref = reference_cct(T, None if np.all(np.isnan(duv)) else duv)
    if v.ndim != 2 or v.shape[1] != 471 or T_ref.shape != (v.shape[0],):
        raise ValueError(f"values must have shape (N, 471) and cct_K shape (N,), got {v.shape} and {T_ref.shape}")
    n = v.shape[0]
    if n == 0:
        return Rendition(cct_K=T_ref, duv=duv, cri=cie13_3(v, T_ref), tm30=tm30(v, T_ref))
    # Chunks bound the memory of the references and the colour appearance model's temporaries; the
    # samples' J'a'b' (a result) go straight into the whole arrays, and the per-spectrum TM-30 steps run
    # once over them (each value depends on its own spectrum only: the same bits as chunk by chunk).
    cri_parts, m224 = [], []
    ces = column({"block": "both"}, "samples10")  # the CIE 224 samples' XYZ columns
    Jt, Jr = (np.empty((n, (ces.stop - ces.start) // 3, 3)) for _ in range(2))
    fields: dict[str, np.ndarray] = {}
    for i in range(0, n, _CHUNK):  # the chunk fixes the rows each matrix product covers (hence the bits)
        T_c = T_ref[i : i + _CHUNK]
        # both references built once per block, and every step after them on the block: its temporaries
        # stay in the processor's cache
        for s, e, rows in rendering_row_blocks(v[i : i + _CHUNK], T_c, _BLOCK, which="both"):
            cri_parts.append(cri_from_rows(rows, T_c[s:e]))
            for j in range(0, e - s, _CAM_BLOCK):  # the appearance model in blocks that stay in cache
                end = min(j + _CAM_BLOCK, e - s)
                sub = {key: rows[key][j:end] for key in ("test", "ref224")}
                jab_into({**sub, "block": rows["block"]}, Jt[i + s + j : i + s + end], Jr[i + s + j : i + s + end])
            fields_into(Jt, Jr, fields, slice(i + s, i + e))
            m224.append(rows["m224"])
    fidelity = Tm30Result(**fields, Jab_test_i=Jt, Jab_ref_i=Jr, cct_K=T_ref, reference=_kinds(np.concatenate(m224)))
    if measured_range_nm is not None:
        fidelity = _short_range_tm30(v, T_ref, fidelity, measured_range_nm)
    return Rendition(cct_K=T_ref, duv=duv, cri=_concatenate(cri_parts), tm30=fidelity)


def _short_range_tm30(v: np.ndarray, T_ref: np.ndarray, fidelity: Tm30Result, measured_range_nm) -> Tm30Result:
    """``fidelity`` with the rows of spectra not covering 380-780 nm recomputed by CIE 224's own rule."""
    from .tm30 import short_range_rule

    rows, test = short_range_rule(v, measured_range_nm)
    has_ref = np.isfinite(T_ref[rows])  # no reference for the spectrum: nothing to recompute
    rows, test = rows[has_ref], test[has_ref]
    if rows.size == 0:
        return fidelity
    T, d = rendering_cct(test)
    sub = tm30(test, reference_cct(T, d))
    return _put_rows(fidelity, rows, sub)


def _put_rows(result, rows: np.ndarray, sub):
    """A copy of the per-spectrum dataclass ``result`` with ``rows`` replaced by the rows of ``sub``."""
    from dataclasses import fields

    out: dict[str, Any] = {}
    for f in fields(result):
        a, b = getattr(result, f.name), getattr(sub, f.name)
        if isinstance(a, tuple):
            lst = list(a)
            for k, i in enumerate(rows.tolist()):
                lst[i] = b[k]
            out[f.name] = tuple(lst)
        else:
            arr = np.array(a, copy=True)
            arr[rows] = b
            out[f.name] = arr
    return type(result)(**out)


#: Spectra per block of the rendering computation (bounds the memory of the (n, 99, 3) arrays).
_CHUNK = 4096
#: Spectra per block of the references, the CIE 13.3 step and the colour appearance model inside a chunk:
#: their temporaries then stay in the processor's cache (a multiple of ``tristimulus.ROW_ALIGN``, so the
#: products keep the bits of the whole chunk's).
_BLOCK = 512
#: Spectra per block of the colour appearance model (at most a block).
_CAM_BLOCK = 1024


def _concatenate(parts):
    from dataclasses import fields

    if len(parts) == 1:
        return parts[0]
    return type(parts[0])(
        **{
            f.name: (
                sum((getattr(p, f.name) for p in parts), ())
                if isinstance(getattr(parts[0], f.name), tuple)
                else np.concatenate([getattr(p, f.name) for p in parts])
            )
            for f in fields(parts[0])
        }
    )


@dataclass(frozen=True)
class ReferenceComparison:
    """A test spectrum set against its reference, everything per spectrum.

    Attributes
    ----------
    wavelength_nm : (471,)
        Working grid [nm].
    test, reference : (N, 471)
        Test and reference spectra, each scaled to Y = 100 (CIE 1931 2 deg).
    difference : (N, 471)
        ``test - reference`` on that scale.
    ratio : (N, 471)
        ``test / reference`` (NaN where the reference is 0).
    cct_K : (N,)
        CCT both references were built for [K].
    method : str
        Reference of the spectral comparison (``"cie13.3"`` or ``"cie224"``).
    reference_kind : tuple of str
        ``"planckian"``, ``"daylight"`` or ``"blend"`` of that reference.
    ces_dE : (N, 99)
        CAM02-UCS colour difference of each CIE 224 sample (CIE 224 reference).
    ces_hue_shift_deg : (N, 99)
        Hue angle under test minus under reference, in (-180, 180] [deg].
    tcs_dE : (N, 14)
        CIE 1964 U*V*W* colour difference of each CIE 13.3 sample (CIE 13.3 reference).
    """

    wavelength_nm: np.ndarray
    test: np.ndarray
    reference: np.ndarray
    difference: np.ndarray
    ratio: np.ndarray
    cct_K: np.ndarray
    method: str
    reference_kind: tuple[str, ...]
    ces_dE: np.ndarray
    ces_hue_shift_deg: np.ndarray
    tcs_dE: np.ndarray


def compare_to_reference(
    values, cct_K=None, *, method: str = "cie224", rendition: Rendition | None = None
) -> ReferenceComparison:
    """Test spectra against the reference illuminant of their CCT, per wavelength and per sample.

    Parameters
    ----------
    values : array_like (N, 471)
        Test spectra on the working grid [any unit].
    cct_K : array_like (N,), optional
        CCT of each spectrum [K]; computed with :func:`cctkit.cct.cct_duv` when omitted.
    method
        Reference for the per-wavelength comparison: ``"cie224"`` (default) or ``"cie13.3"``.
        The per-sample figures always use each metric's own reference.
    rendition
        The :func:`colour_rendition` of the same spectra, when the caller has it (its CCT is then
        used and nothing is computed twice).
    """
    from ..constants import WAVELENGTH_NM

    v = np.asarray(values, dtype=np.float64)
    if v.ndim == 1:
        v = v[None]
    if v.ndim != 2 or v.shape[1] != WAVELENGTH_NM.shape[0]:
        raise ValueError(f"values must have shape (N, 471) on the working grid, got {v.shape}")
    if rendition is None:
        rendition = colour_rendition(v, cct_K=cct_K)
    T = rendition.cct_K
    if T.shape != (v.shape[0],):
        raise ValueError(f"cct_K must have shape ({v.shape[0]},) to match values, got {T.shape}")
    ref = reference_for(T, method=method)
    with np.errstate(divide="ignore", invalid="ignore"):
        test = _to_Y100(v)
        ratio = np.where(ref.values > 0, test / np.where(ref.values > 0, ref.values, 1.0), np.nan)
    t = rendition.tm30
    ht = np.arctan2(t.Jab_test_i[..., 2], t.Jab_test_i[..., 1])
    hr = np.arctan2(t.Jab_ref_i[..., 2], t.Jab_ref_i[..., 1])
    shift = np.degrees(np.angle(np.exp(1j * (ht - hr))))  # wrapped to (-180, 180]
    dE_tcs = rendition.cri.dE
    return ReferenceComparison(
        wavelength_nm=WAVELENGTH_NM.copy(),
        test=test,
        reference=ref.values,
        difference=test - ref.values,
        ratio=ratio,
        cct_K=T,
        method=canonical_method(method),
        reference_kind=ref.kind,
        ces_dE=t.dE_i,
        ces_hue_shift_deg=shift,
        tcs_dE=dE_tcs,
    )
