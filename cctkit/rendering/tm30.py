"""CIE 224:2017 colour fidelity index Rf and the ANSI/IES TM-30-20 gamut and hue-bin measures.

Vectorised over N spectra and the 99 colour evaluation samples (CES) at once.

Procedure (CIE 224:2017 section 4; ANSI/IES TM-30-20 sections 4-6):

1. Reference of the test CCT (:func:`~.reference.reference_cie224`): Planckian below
   4000 K, CIE daylight above 5000 K, the normalised blend in between.
2. CIE 1964 10 deg tristimulus values of the 99 CES under test and reference,
   summed at 1 nm over 380-780 nm (the calculation range both standards specify;
   the working grid's 360-380 and 780-830 nm are given zero weight here), each
   illuminant scaled to Y_10 = 100.
3. CIECAM02 with L_A = 100 cd/m^2, Y_b = 20, average surround and D = 1 (both
   standards fix complete adaptation), then CAM02-UCS J', a', b' (:mod:`.cam`).
4. dE'_i = |J'a'b'_test - J'a'b'_ref| per sample; Rf from the mean through
   Rf = 10 ln(exp((100 - c_f dE')/10) + 1), c_f = 6.73; Rf,i the same per sample.
5. (TM-30) 16 hue-angle bins of 22.5 deg by the *reference* hue of each sample; in
   each bin the mean a', b' under test and reference.  Rg = 100 A_test / A_ref, the
   areas of the two 16-gons of bin means.  Rf,hj from the bin's mean dE'.
   Rcs,hj and Rhs,hj: the shift of the bin mean (test minus reference) projected on
   the unit vector of the bin's centre hue angle (j + 1/2) 22.5 deg and on its
   normal, divided by the chroma of the reference bin mean.  Rcs,hj is returned as
   a fraction (x 100 for the percent TM-30 prints); Rhs,hj is dimensionless.  (The
   bin-centre direction, not the bin mean's own hue, reproduces the IES values for
   FL2 carried in the reference library's tests; see ``tests/test_rendering.py``.)

Editions (from memory of the documents, not re-read for this module): CIE 224:2017
defines Rf (and Rf,i).  ANSI/IES TM-30-18 adopted exactly that Rf (c_f = 6.73, the
10 deg observer, the CIE 224 reference) and keeps Rg, the hue-bin indices and the
colour vector graphic; TM-30-20 changed the document's recommendations and annexes,
not these calculations, so this module is TM-30-20 and TM-30-18 alike.  The first
edition, TM-30-15, used c_f = 7.54 and so gives other Rf values; it is not
implemented.  Clause numbers in this package are cited from memory.  Checked against the reference library colour-science 0.4.7
(``method="CIE 2017"`` and ``"ANSI/IES TM-30-18"``) in ``tests/test_rendering.py``.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..constants import WAVELENGTH_NM
from ..tables import cmfs, table
from .cam import _log1p, xyz_to_cam02ucs

__all__ = [
    "vector_graphic_xy",
    "chroma_shift_percent",
    "short_range_rule",
    "Tm30Result",
    "tm30",
    "tm30_samples",
    "fidelity_from_dE",
    "CF_CIE224",
    "N_BINS",
    "RANGE_NM",
]

#: Scaling factor c_f of CIE 224:2017 (section 4.6, from memory) and ANSI/IES TM-30-18/-20.
CF_CIE224 = 6.73
#: Number of hue-angle bins -- ANSI/IES TM-30-20 section 5.
N_BINS = 16
#: Calculation range of CIE 224:2017 and TM-30 [nm].
RANGE_NM = (380.0, 780.0)
_CHUNK = 2048
#: Value taken where a test spectrum has no data inside :data:`RANGE_NM` -- CIE 224:2017 section 4.2 and
#: ANSI/IES TM-30-20 section 4.1 (clause numbers from memory; the reference library colour-science 0.4.7
#: names the same rule in ``colour.quality.cfi2017``): missing values of the test source are zero.
MISSING_VALUE = 0.0
# Bin-centre hue angles (j + 1/2) 22.5 deg: the directions TM-30-20 projects the shifts on.
_CENTRE_RAD = (np.arange(N_BINS) + 0.5) * (2.0 * np.pi / N_BINS)
_COS_CENTRE, _SIN_CENTRE = np.cos(_CENTRE_RAD), np.sin(_CENTRE_RAD)


@dataclass(frozen=True)
class Tm30Result:
    """CIE 224:2017 / ANSI/IES TM-30-20 colour rendition of N spectra.

    Attributes
    ----------
    Rf : (N,)
        Fidelity index (CIE 224:2017 R_f, identical to TM-30 R_f).
    Rg : (N,)
        Gamut index (TM-30).
    Rf_h : (N, 16)
        Fidelity per hue bin.
    Rcs_h : (N, 16)
        Relative chroma shift per hue bin [fraction; x100 for percent].
    Rhs_h : (N, 16)
        Hue shift per hue bin [dimensionless].
    Rf_i : (N, 99)
        Fidelity per colour evaluation sample.
    dE_i : (N, 99)
        CAM02-UCS colour difference per sample.
    hue_bin_i : (N, 99)
        Hue bin (0-15) of each sample, by its reference hue (-1 where there is no result).
    ab_test_h, ab_ref_h : (N, 16, 2)
        Bin means of a', b' under test and reference (for a colour vector graphic).
    Jab_test_i, Jab_ref_i : (N, 99, 3)
        CAM02-UCS J', a', b' of each sample under test and reference.
    cct_K : (N,)
        CCT the reference was built for [K].
    reference : tuple of str
        ``"planckian"``, ``"daylight"`` or ``"blend"`` per spectrum.
    """

    Rf: np.ndarray
    Rg: np.ndarray
    Rf_h: np.ndarray
    Rcs_h: np.ndarray
    Rhs_h: np.ndarray
    Rf_i: np.ndarray
    dE_i: np.ndarray
    hue_bin_i: np.ndarray
    ab_test_h: np.ndarray
    ab_ref_h: np.ndarray
    Jab_test_i: np.ndarray
    Jab_ref_i: np.ndarray
    cct_K: np.ndarray
    reference: tuple[str, ...]


def fidelity_from_dE(dE, *, cf: float = CF_CIE224) -> np.ndarray:
    """Rf = 10 ln(exp((100 - c_f dE)/10) + 1) (CIE 224:2017 section 4.6)."""
    dE = np.asarray(dE, dtype=np.float64)
    return 10.0 * _log1p(np.exp((100.0 - cf * dE) / 10.0))


def _weights() -> tuple[np.ndarray, np.ndarray]:
    wl = WAVELENGTH_NM
    inside = ((wl >= RANGE_NM[0]) & (wl <= RANGE_NM[1])).astype(np.float64)
    cmf = cmfs(10) * inside[:, None]  # (471, 3)
    ces = table("ces_2017")  # (471, 99)
    sample_w = (ces[:, :, None] * cmf[:, None, :]).reshape(wl.shape[0], -1)  # (471, 297)
    return cmf, sample_w


def _jab(values: np.ndarray, cmf: np.ndarray, sample_w: np.ndarray) -> np.ndarray:
    """CAM02-UCS J'a'b' (n, 99, 3) of the CES under each illuminant in ``values`` (n, 471)."""
    XYZ_w = values @ cmf
    with np.errstate(divide="ignore", invalid="ignore"):
        k = 100.0 / XYZ_w[:, 1]
        XYZ_s = (values @ sample_w).reshape(values.shape[0], sample_w.shape[1] // 3, 3) * k[:, None, None]  # N may be 0
        return xyz_to_cam02ucs(XYZ_s, (XYZ_w * k[:, None])[:, None, :])


def _polygon_area(ab: np.ndarray) -> np.ndarray:
    x, y = ab[..., 0], ab[..., 1]
    return 0.5 * np.sum(x * np.roll(y, -1, axis=-1) - np.roll(x, -1, axis=-1) * y, axis=-1)


def tm30_samples(values, reference_values, *, cf: float = CF_CIE224) -> dict[str, np.ndarray]:
    """All TM-30 arrays for test spectra against given reference spectra (both (N, 471)).

    The building block of :func:`tm30`; returns the fields of :class:`Tm30Result`
    except ``cct_K`` and ``reference``.  Works in chunks of spectra to bound memory.
    """
    test = np.asarray(values, dtype=np.float64)
    ref = np.asarray(reference_values, dtype=np.float64)
    if test.ndim == 1:
        test = test[None]
    if ref.ndim == 1:
        ref = ref[None]
    if test.shape != ref.shape or test.shape[-1] != WAVELENGTH_NM.shape[0]:
        raise ValueError(f"values and reference_values must both be (N, 471), got {test.shape} and {ref.shape}")
    cmf, sample_w = _weights()
    parts = [
        _chunk(test[i : i + _CHUNK], ref[i : i + _CHUNK], cmf, sample_w, cf) for i in range(0, test.shape[0], _CHUNK)
    ]
    return {key: np.concatenate([p[key] for p in parts]) for key in parts[0]}


def _chunk(test, ref, cmf, sample_w, cf) -> dict[str, np.ndarray]:
    return _fields(_jab(test, cmf, sample_w), _jab(ref, cmf, sample_w), cf)


def _jab_from_rows(rows: np.ndarray, xyz: slice, samples: slice, out: np.ndarray | None = None) -> np.ndarray:
    """CAM02-UCS J'a'b' (n, 99, 3) of the CES from rows of :func:`.tristimulus.rendering_rows` (into ``out``)."""
    with np.errstate(divide="ignore", invalid="ignore"):
        k = 100.0 / rows[:, xyz.start + 1]
        s_rows = rows[:, samples]
        XYZ_s = s_rows.reshape(s_rows.shape[0], s_rows.shape[1] // 3, 3) * k[:, None, None]  # no -1: N may be 0
        return xyz_to_cam02ucs(XYZ_s, (rows[:, xyz] * k[:, None])[:, None, :], out=out)


def jab_into(rows: dict, test_out: np.ndarray, ref_out: np.ndarray) -> None:
    """CAM02-UCS J'a'b' of the CES under the test sources and their CIE 224 references (rows of
    :func:`.tristimulus.rendering_rows`) written into ``test_out`` and ``ref_out`` (n, 99, 3)."""
    from .tristimulus import column

    xyz, samples = column(rows, "xyz10"), column(rows, "samples10")
    _jab_from_rows(rows["test"], xyz, samples, out=test_out)
    _jab_from_rows(rows["ref224"], xyz, samples, out=ref_out)


def from_jab(Jt: np.ndarray, Jr: np.ndarray, T: np.ndarray, m224: np.ndarray, *, cf: float = CF_CIE224) -> Tm30Result:
    """:class:`Tm30Result` from the CES' J'a'b' under test and reference (:func:`jab_into`) and the blend weights."""
    from .reference import _kinds

    return Tm30Result(**_fields(Jt, Jr, cf), cct_K=T, reference=_kinds(m224))


def fields_into(Jt: np.ndarray, Jr: np.ndarray, out: dict, rows: slice, *, cf: float = CF_CIE224) -> None:
    """The per-spectrum :class:`Tm30Result` arrays of the spectra ``rows`` (from their J'a'b' ``Jt[rows]``,
    ``Jr[rows]``) written into the whole arrays ``out`` (allocated at the first call; J'a'b' not copied).

    Each value depends on its own spectrum only, so any blocking gives the bits of :func:`from_jab`.
    """
    n = Jt.shape[0]
    for key, value in _fields(Jt[rows], Jr[rows], cf).items():
        if key in ("Jab_test_i", "Jab_ref_i"):
            continue
        if key not in out:
            out[key] = np.empty((n,) + value.shape[1:], dtype=value.dtype)
        out[key][rows] = value


def from_rows(rows: dict, T: np.ndarray, *, cf: float = CF_CIE224) -> Tm30Result:
    """:class:`Tm30Result` from :func:`.tristimulus.rendering_rows` (the reference built at tristimulus level)."""
    from .reference import _kinds
    from .tristimulus import column

    xyz, samples = column(rows, "xyz10"), column(rows, "samples10")
    fields = _fields(_jab_from_rows(rows["test"], xyz, samples), _jab_from_rows(rows["ref224"], xyz, samples), cf)
    return Tm30Result(**fields, cct_K=T, reference=_kinds(rows["m224"]))


def _fields(Jt: np.ndarray, Jr: np.ndarray, cf: float) -> dict[str, np.ndarray]:
    d = [Jt[..., k] - Jr[..., k] for k in range(3)]
    dE = np.sqrt(d[0] * d[0] + d[1] * d[1] + d[2] * d[2])  # (n, 99): the sum np.linalg.norm(Jt - Jr, axis=-1) forms
    hue = np.arctan2(Jr[..., 2], Jr[..., 1]) % (2.0 * np.pi)
    n = Jt.shape[0]
    row_start = N_BINS * np.arange(n)[:, None]
    finite = np.isfinite(hue)
    if finite.all():
        bins = np.minimum((hue / (2.0 * np.pi / N_BINS)).astype(np.int64), N_BINS - 1)
        flat = (bins + row_start).ravel()
    else:
        bins = np.minimum((np.where(finite, hue, 0.0) / (2.0 * np.pi / N_BINS)).astype(np.int64), N_BINS - 1)
        bins = np.where(finite, bins, -1)  # a spectrum without a result (NaN) falls in no bin
        flat = np.where(finite, bins + row_start, n * N_BINS).ravel()
    # bin sums by one bincount over the flat index (spectrum, bin); spectra without a bin drop out

    def bin_sum(w: np.ndarray) -> np.ndarray:
        return np.bincount(flat, weights=w.ravel(), minlength=n * N_BINS + 1)[: n * N_BINS].reshape(n, N_BINS)

    count = np.bincount(flat, minlength=n * N_BINS + 1)[: n * N_BINS].reshape(n, N_BINS).astype(np.float64)
    with np.errstate(invalid="ignore", divide="ignore"):
        inv = np.where(count > 0, 1.0 / count, np.nan)
        ab_t = np.stack([bin_sum(Jt[..., 1]), bin_sum(Jt[..., 2])], axis=-1) * inv[..., None]
        ab_r = np.stack([bin_sum(Jr[..., 1]), bin_sum(Jr[..., 2])], axis=-1) * inv[..., None]
        dE_h = bin_sum(dE) * inv
        Rg = 100.0 * _polygon_area(ab_t) / _polygon_area(ab_r)
        C_r = np.hypot(ab_r[..., 0], ab_r[..., 1])
        shift = ab_t - ab_r
        Rcs = (shift[..., 0] * _COS_CENTRE + shift[..., 1] * _SIN_CENTRE) / C_r
        Rhs = (-shift[..., 0] * _SIN_CENTRE + shift[..., 1] * _COS_CENTRE) / C_r
    return {
        "Rf": fidelity_from_dE(dE.mean(axis=1), cf=cf),
        "Rg": Rg,
        "Rf_h": fidelity_from_dE(dE_h, cf=cf),
        "Rcs_h": Rcs,
        "Rhs_h": Rhs,
        "Rf_i": fidelity_from_dE(dE, cf=cf),
        "dE_i": dE,
        "hue_bin_i": bins,
        "ab_test_h": ab_t,
        "ab_ref_h": ab_r,
        "Jab_test_i": Jt,
        "Jab_ref_i": Jr,
    }


def tm30(values, cct_K, *, cf: float = CF_CIE224, blend_observer: int = 10) -> Tm30Result:
    """CIE 224:2017 Rf and ANSI/IES TM-30-20 Rg, Rf,hj, Rcs,hj, Rhs,hj of spectra on the working grid.

    Parameters
    ----------
    values : array_like (N, 471)
        Spectral power of the test sources on 360-830 nm at 1 nm [any unit].
    cct_K : array_like (N,)
        CCT of each test source [K] (CIE 1931 2 deg, as both standards use), which
        selects the reference.
    cf
        Scaling factor of the fidelity formula (6.73, CIE 224:2017).
    blend_observer
        Observer used to equalise Planckian and daylight inside the 4000-5000 K blend
        (see :func:`~.reference.reference_cie224`).

    Returns
    -------
    Tm30Result

    References
    ----------
    CIE 224:2017 section 4; ANSI/IES TM-30-20 sections 4-6; CIE 159:2004; Luo, Cui and Li (2006).
    """
    test = np.asarray(values, dtype=np.float64)
    if test.ndim == 1:
        test = test[None]
    T = np.atleast_1d(np.asarray(cct_K, dtype=np.float64))
    if T.shape != (test.shape[0],):
        raise ValueError(f"cct_K must have shape ({test.shape[0]},) to match values, got {T.shape}")
    if blend_observer not in (2, 10):
        raise ValueError(f"blend_observer must be 2 or 10, got {blend_observer!r}")
    from .reference import _as_cct
    from .tristimulus import rendering_rows

    _as_cct(T)
    parts = [
        from_rows(
            rendering_rows(test[i : i + _CHUNK], T[i : i + _CHUNK], which="tm30", blend_observer=blend_observer),
            T[i : i + _CHUNK],
            cf=cf,
        )
        for i in range(0, test.shape[0], _CHUNK)
    ]
    if not parts:
        return from_rows(rendering_rows(test, T, which="tm30", blend_observer=blend_observer), T, cf=cf)
    from . import _concatenate

    return _concatenate(parts)


def short_range_rule(values, measured_range_nm) -> tuple[np.ndarray, np.ndarray]:
    """CIE 224:2017 / TM-30-20 own rule for test spectra that do not cover 380-780 nm.

    Parameters
    ----------
    values : array_like (N, 471)
        Test spectra on the working grid (extrapolated by the nearest measured value).
    measured_range_nm : sequence of (lo, hi[, step])
        Measured range of each spectrum [nm].

    Returns
    -------
    rows : (k,) int
        Indices of the spectra whose measured range leaves part of 380-780 nm uncovered.
    test : (k, 471)
        Those spectra as both standards take them: :data:`MISSING_VALUE` (zero) wherever
        380-780 nm was not measured (CIE 224:2017 section 4.2, ANSI/IES TM-30-20 section 4.1,
        from memory), and zero outside 380-780 nm, the calculation range -- so the CCT that
        selects their reference is that of this spectrum, as in the standards' procedure.
    """
    v = np.asarray(values, dtype=np.float64)
    from ..spectra import range_array

    rng = range_array(measured_range_nm)
    if rng.shape[0] != v.shape[0]:
        raise ValueError(f"measured_range_nm must give one (lo, hi) per spectrum ({v.shape[0]}), got {rng.shape[0]}")
    lo = np.maximum(rng[:, 0], RANGE_NM[0])
    hi = np.minimum(rng[:, 1], RANGE_NM[1])
    rows = np.flatnonzero((rng[:, 0] > RANGE_NM[0]) | (rng[:, 1] < RANGE_NM[1]))
    keep = (WAVELENGTH_NM >= lo[rows, None]) & (WAVELENGTH_NM <= hi[rows, None])
    return rows, np.where(keep, v[rows], MISSING_VALUE)


def vector_graphic_xy(result: Tm30Result) -> tuple[np.ndarray, np.ndarray]:
    """Vertices of the TM-30 colour vector graphic, normalised to the reference chroma.

    Returns ``(reference, test)``, each (N, 16, 2): the reference vertices on the unit
    circle at the bin-centre hue angles, and the test vertices displaced from them by the
    bin-average a', b' shift divided by the reference bin chroma, i.e.
    ``(cos th_j + Rcs_j cos th_j - Rhs_j sin th_j, sin th_j + Rcs_j sin th_j + Rhs_j cos th_j)``
    (ANSI/IES TM-30-20 section 4.3 as recalled, from memory: the normalised graphic makes the
    reference polygon a circle).
    """
    c, s = _COS_CENTRE, _SIN_CENTRE
    rcs = np.asarray(result.Rcs_h, dtype=np.float64)
    rhs = np.asarray(result.Rhs_h, dtype=np.float64)
    test = np.stack([c * (1.0 + rcs) - s * rhs, s * (1.0 + rcs) + c * rhs], axis=-1)
    ref = np.broadcast_to(np.stack([c, s], axis=-1), test.shape).copy()
    return ref, test


def chroma_shift_percent(result: Tm30Result) -> np.ndarray:
    """Rcs,hj in percent, as TM-30 reports it, (N, 16) (``Tm30Result.Rcs_h`` is a fraction)."""
    return np.asarray(result.Rcs_h, dtype=np.float64) * 100.0
