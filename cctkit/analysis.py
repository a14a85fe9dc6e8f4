"""``analyse(spectra) -> Analysis``: every measure of cctkit, composed, for N spectra at once.

The measures are plain functions over arrays; this module only calls them in
order and keeps their results side by side.  Turning an :class:`Analysis` into
records (dicts with unit-bearing keys), JSON or CSV is a separate, dumb step
(:meth:`Analysis.records`).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from functools import cached_property
from typing import Any

import numpy as np

from . import __version__
from .cct import CctResult, cct_duv
from .colorimetry import XYZ_to_uv, XYZ_to_xy, uv_to_uvp
from .constants import C2_M_K, DUV_LIMIT, KM_LM_PER_W
from .errors import Flag
from .formats import finite_or_none
from .spectra import Quantity, Spectra, signal_problems, to_working_grid

__all__ = [
    "Analysis",
    "analyse",
    "analyse_groups",
    "analyse_files",
    "read_files",
    "flatten_record",
    "metadata_text",
    "records_csv",
    "provenance",
    "interpolation_summary",
    "CONVENTIONS",
]

#: The conventions every number is computed under (written into every output).
CONVENTIONS = {
    "wavelength_grid_nm": "360-830 nm at 1 nm",
    "summation": "plain sum at 1 nm, no end-point halving (CIE 15:2018)",
    "interpolation": "as measured on the 1 nm grid; auto: Sprague (CIE 167:2005) for uniform steps, PCHIP "
    "otherwise; sprague / linear / pchip on request; the method of each spectrum in its record",
    "extrapolation": "nearest measured value repeated (CIE 15:2018 section 7.2.2), for colour measures only "
    "(CIE 224 / TM-30: zero, their own rule)",
    "totals": "radiant and photon totals over the measured range as measured; PPF over 400-700 nm measured; "
    "luminous, scotopic and alpha-opic totals over the measured part of 360-830 nm; LER = luminous / radiant",
    "coverage_rule": "a total is withheld when its weighting function has more than 1 % of its integral "
    "(360-830 nm) outside the measured range",
    "c2_m_K": C2_M_K,
    "Km_lm_per_W": KM_LM_PER_W,
    "cct_method": "exact: nearest Planckian point in CIE 1960 uv (CIE 15:2018 section 9.5)",
    "dominant_wavelength": "CIE 15:2018 section 9.1, from the white point each record names (dominant_white; "
    "default E, equal energy, the achromatic stimulus used for light sources)",
    "shape": "peak withheld at an end of the measured range and for flat spectra; FWHM only where the "
    "spectrum is below half its maximum at both ends of the measured range",
    "cie224_short_range": "Rf, Rg and hue bins of spectra not covering 380-780 nm: zero where not measured "
    "(CIE 224:2017 / TM-30-20 rule); CIE 13.3 keeps the nearest measured value",
    "duv_sign": "positive above the Planckian locus (towards larger v)",
    "duv_limit": DUV_LIMIT,
}


@dataclass(frozen=True)
class Analysis:
    """All results for N spectra (arrays of leading length N)."""

    spectra: Spectra
    observer: int
    XYZ: np.ndarray  # (N, 3); Y in the luminous unit of the quantity (relative: Y = 100)
    xy: np.ndarray  # (N, 2)
    uv: np.ndarray
    uvp: np.ndarray
    cct: CctResult
    photometry: Any = None
    alphaopic: Any = None
    shape: Any = None
    dominant: Any = None
    cri: Any = None  # cctkit.rendering.Cri13Result
    tm30: Any = None  # cctkit.rendering.Tm30Result
    flags: tuple[tuple[Flag, ...], ...] = field(default=())

    def __len__(self) -> int:
        return self.XYZ.shape[0]

    @cached_property
    def _rendering_columns(self) -> tuple[dict[str, list], ...]:
        cols = []
        if self.cri is not None:
            cols.append(_cri_columns(self.cri))
        if self.tm30 is not None:
            cols.append(_tm30_columns(self.tm30))
        return tuple(cols)

    def records(self) -> list[dict[str, Any]]:
        """One dict per spectrum with unit-bearing keys (the keys `cctkit inspect --json` prints)."""
        in_domain = np.asarray(self.cct.in_domain)
        return [_record(self, i, bool(in_domain[i])) for i in range(len(self))]

    def columns(self) -> dict[str, np.ndarray]:
        """The flattened records as columns, built from the arrays (no per-spectrum dicts).

        Names, order, types and values are those of :func:`flatten_record` applied to
        :meth:`records` (list fields numbered ``R1..R14``, ``Rf_h1..``, flags ``;``-joined
        codes): float64 with NaN where a record holds None, int64, bool, or object (str/None).
        """
        return _columns(self)

    def to_frame(self):
        """A pandas DataFrame, one row per spectrum, values as :meth:`records` (:func:`cctkit.interop.analysis_to_frame`)."""
        from .interop import analysis_to_frame

        return analysis_to_frame(self)

    def _repr_html_(self) -> str:
        from .interop import analysis_html

        return analysis_html(self)


def _f(a, i):
    return finite_or_none(a[i])


def _finite(a) -> np.ndarray:
    """float64 copy of ``a`` with NaN where it is not finite (a record's None)."""
    arr = np.array(a, dtype=np.float64)
    arr[~np.isfinite(arr)] = np.nan
    return arr


def _text_column(items) -> np.ndarray:
    col = np.empty(len(items), dtype=object)
    col[:] = list(items)
    return col


def _part_columns(part, n: int) -> dict[str, np.ndarray]:
    """``part.columns()``, checked against ``part.record(0)``; row by row if they disagree.

    The check keeps the columns equal to the records when a measure's record changes
    before its ``columns`` method follows.
    """
    cols = (
        {k: v if np.asarray(v).dtype == object else _finite(v) for k, v in part.columns().items()}
        if hasattr(part, "columns")
        else None
    )
    if n and cols is not None:
        first = flatten_record(part.record(0))
        same = list(first) == list(cols) and all(
            (v is None and np.isnan(cols[k][0])) or (isinstance(v, (float, str)) and v == cols[k][0])
            for k, v in first.items()
        )
        if same:
            return cols
    recs = [flatten_record(part.record(i)) for i in range(n)]
    keys = list(dict.fromkeys(k for r in recs for k in r)) if recs else list(cols or {})
    return {
        k: (
            _text_column([r.get(k) for r in recs])
            if any(isinstance(r.get(k), str) for r in recs)
            else np.array([r.get(k) for r in recs], dtype=np.float64)
        )
        for k in keys
    }


def _columns(a: Analysis) -> dict[str, np.ndarray]:
    s = a.spectra
    n = len(a)
    rng = np.array(s.measured_range_nm, dtype=np.float64).reshape(n, 3)
    cct_K = _finite(a.cct.cct_K)
    cct_K[~np.asarray(a.cct.in_domain)] = np.nan
    out: dict[str, np.ndarray] = {
        "name": _text_column(s.names),
        "source": _text_column(s.sources),
        "sha256": _text_column(s.sha256),
        "quantity": _text_column([s.quantity.value] * n),
        "spectral_unit": _text_column([s.quantity.unit] * n),
        "measured_range_nm_lo": rng[:, 0].copy(),
        "measured_range_nm_hi": rng[:, 1].copy(),
        "measured_step_nm": rng[:, 2].copy(),
        "interpolation": _text_column(s.interpolation),
        "observer": np.full(n, a.observer, dtype=np.int64),
        "cct_K": cct_K,
        "duv": _finite(a.cct.duv),
    }
    for name, arr in (
        ("x", a.xy[:, 0]),
        ("y", a.xy[:, 1]),
        ("u", a.uv[:, 0]),
        ("v", a.uv[:, 1]),
        ("u_prime", a.uvp[:, 0]),
        ("v_prime", a.uvp[:, 1]),
        ("X", a.XYZ[:, 0]),
        ("Y", a.XYZ[:, 1]),
        ("Z", a.XYZ[:, 2]),
    ):
        out[name] = _finite(arr)
    for part in (a.photometry, a.alphaopic, a.shape, a.dominant):
        if part is not None:
            out.update(_part_columns(part, n))
    if a.cri is not None:
        r = a.cri
        out["Ra"] = _finite(r.Ra)
        R = _finite(r.R)
        out.update({f"R{j + 1}": np.ascontiguousarray(R[:, j]) for j in range(R.shape[1])})
        out["cri_valid"] = np.asarray(r.valid, dtype=bool).copy()
        out["cri_dc"] = _finite(r.dc)
        out["cri_reference"] = _text_column(r.reference)
    if a.tm30 is not None:
        from .rendering.tm30 import chroma_shift_percent

        t = a.tm30
        out["Rf"] = _finite(t.Rf)
        out["Rg"] = _finite(t.Rg)
        for key, block in (("Rf_h", t.Rf_h), ("Rcs_h", chroma_shift_percent(t)), ("Rhs_h", t.Rhs_h), ("Rf_i", t.Rf_i)):
            b = _finite(block)
            out.update({f"{key}{j + 1}": np.ascontiguousarray(b[:, j]) for j in range(b.shape[1])})
        out["reference"] = _text_column(t.reference)
    out["flags"] = _text_column([";".join(f.code for f in fl) for fl in a.flags])
    out["metadata"] = _text_column([metadata_text(dict(m)) for m in s.metadata])
    return out


def _record(a: Analysis, i: int, in_domain: bool | None = None) -> dict[str, Any]:
    s = a.spectra
    lo, hi, step = s.measured_range_nm[i]
    r: dict[str, Any] = {
        "name": s.names[i],
        "source": s.sources[i],
        "sha256": s.sha256[i],
        "quantity": s.quantity.value,
        "spectral_unit": s.quantity.unit,
        "measured_range_nm": [lo, hi],
        "measured_step_nm": step,
        "interpolation": s.interpolation[i],
        "observer": a.observer,
        "cct_K": _f(a.cct.cct_K, i) if (bool(a.cct.in_domain[i]) if in_domain is None else in_domain) else None,
        "duv": _f(a.cct.duv, i),
        "x": _f(a.xy[:, 0], i),
        "y": _f(a.xy[:, 1], i),
        "u": _f(a.uv[:, 0], i),
        "v": _f(a.uv[:, 1], i),
        "u_prime": _f(a.uvp[:, 0], i),
        "v_prime": _f(a.uvp[:, 1], i),
        "X": _f(a.XYZ[:, 0], i),
        "Y": _f(a.XYZ[:, 1], i),
        "Z": _f(a.XYZ[:, 2], i),
    }
    for part in (a.photometry, a.alphaopic, a.shape, a.dominant):
        if part is not None:
            r.update(part.record(i))
    for cols in a._rendering_columns:
        r.update({k: v[i] for k, v in cols.items()})
    r["flags"] = [f.as_dict() for f in a.flags[i]]
    r["metadata"] = s.metadata_of(i)
    return r


def _cct_flags(cct: CctResult, i: int, uv=None) -> tuple[Flag, ...]:
    duv = float(cct.duv[i])
    out = []
    if not np.isfinite(duv) and uv is not None and np.all(np.isfinite(uv[i])):
        from .cct import table_range_text

        out.append(
            Flag(
                "outside-cct-table",
                f"the nearest Planckian point lies outside the {cct.method} solver's table "
                f"({table_range_text(cct.method)}): CCT and Duv withheld",
            )
        )
    elif not np.isfinite(duv):
        out.append(Flag("no-chromaticity", "the spectrum has no colour signal (all tristimulus values zero)"))
    elif abs(duv) > DUV_LIMIT:
        out.append(
            Flag("duv-out-of-range", f"|Duv| = {abs(duv):.4f} > {DUV_LIMIT}: CCT is not meaningful and not reported")
        )
    elif not np.isfinite(float(cct.cct_K[i])):
        out.append(Flag("cct-out-of-range", "nearest Planckian point lies outside 1000-100000 K; CCT not reported"))
    return tuple(out)


def _cct_flag_rows(cct: CctResult, problems) -> np.ndarray:
    """Indices of the spectra with a signal problem or a CCT flag (:func:`_cct_flags`); the others get nothing."""
    duv = np.asarray(cct.duv, dtype=np.float64)
    with np.errstate(invalid="ignore"):
        rows = ~np.isfinite(duv) | (np.abs(duv) > DUV_LIMIT) | ~np.isfinite(np.asarray(cct.cct_K))
    rows |= _present(problems).reshape(rows.shape)
    return np.flatnonzero(rows)


def _present(items) -> np.ndarray:
    """(N,) bool: which of the per-spectrum items (flag tuples, or a flag or None) is there (non-empty, not None)."""
    return np.fromiter(map(bool, items), dtype=bool, count=len(items))


def _flagged(*per_spectrum) -> np.ndarray:
    """Indices where any of the per-spectrum flag tuples is non-empty."""
    if not per_spectrum[0]:
        return np.zeros(0, dtype=np.intp)
    rows = _present(per_spectrum[0])
    for flags in per_spectrum[1:]:
        rows |= _present(flags)
    return np.flatnonzero(rows)


def _add_flags(flags: tuple, rows: np.ndarray, make=None) -> tuple:
    """``flags`` with ``make(i)`` (default: the CCT flags) appended for each index in ``rows`` only."""
    if rows.size == 0:
        return tuple(flags)
    out = list(flags)
    for i in rows.tolist():
        out[i] = out[i] + make(i)
    return tuple(out)


_BLAS = None


def one_blas_thread():
    """A context in which BLAS runs one thread (threadpoolctl; a no-op when it is missing).

    :func:`analyse` runs in it: a BLAS may round a matrix product differently with another
    number of threads, so this keeps every result independent of the machine's core count
    and of how many batch workers ran it; batch workers are the parallelism instead.
    """
    global _BLAS
    if _BLAS is None:
        try:
            from threadpoolctl import ThreadpoolController

            _BLAS = ThreadpoolController()
        except ImportError:  # pragma: no cover - a declared dependency
            _BLAS = False
    if _BLAS is False:
        from contextlib import nullcontext

        return nullcontext()
    return _BLAS.limit(limits=1, user_api="blas")


def analyse(
    spectra: Spectra,
    *,
    observer: int = 2,
    rendering: bool = True,
    interpolation: str = "auto",
    dominant_white: Any = "E",
) -> Analysis:
    """Every measure for every spectrum in ``spectra``, vectorised.

    Parameters
    ----------
    spectra
        N spectra on any grid; they are resampled once to 360-830 nm at 1 nm by ``interpolation``
        (``"auto"``, ``"sprague"``, ``"linear"`` or ``"pchip"``, see :mod:`cctkit.spectra`).
    observer
        Observer for chromaticity and CCT: 2 (CIE 1931, the CCT convention) or 10 (CIE 1964).
        Photometry always uses V(lambda) (CIE 1924) and rendering uses the observers its
        standard prescribes.
    rendering
        Compute CIE 13.3 and CIE 224 / TM-30 colour rendering (the costly part).
    dominant_white
        White point of the dominant wavelength and excitation purity: ``"E"`` (default, the
        equal-energy white used for light sources), ``"D65"``, ``"D50"``, ``"A"`` or (x, y)
        (:func:`cctkit.dominant.resolve_white`); every record names it (``dominant_white``).
    """
    if int(observer) not in (2, 10):
        raise ValueError(f"observer must be 2 or 10, got {observer!r}")
    from .dominant import resolve_white

    white = resolve_white(dominant_white, observer=int(observer))  # a bad white fails before any work
    g = to_working_grid(spectra, interpolation=interpolation)
    # Spectra nothing can be computed from (no visible data, no signal) get every measure withheld
    # and a flag; the command line refuses them before this point (analysis.read_files).
    problems = signal_problems(g)
    empty = _present(problems)
    V = np.where(empty[:, None], np.nan, g.values) if empty.any() else g.values
    with np.errstate(invalid="ignore", divide="ignore"), one_blas_thread():
        return _analyse(g, V, problems, observer=int(observer), rendering=rendering, white=white)


def _analyse(
    g: Spectra, V: np.ndarray, problems, *, observer: int, rendering: bool, white: tuple = ("E", (1.0 / 3.0, 1.0 / 3.0))
) -> Analysis:
    raw, sums = _weighted_sums(g, V, observer)
    if g.quantity is Quantity.RELATIVE:
        with np.errstate(divide="ignore", invalid="ignore"):
            scale = np.where(raw[:, 1] != 0, 100.0 / raw[:, 1], np.nan)
        tri = raw * scale[:, None]
    else:
        tri = raw * KM_LM_PER_W
    xy = XYZ_to_xy(tri)
    uv = XYZ_to_uv(tri)
    cct = cct_duv(uv, observer=observer)
    flags = _add_flags(
        g.flags,
        _cct_flag_rows(cct, problems),
        lambda i: (problems[i],) if problems[i] is not None else _cct_flags(cct, i, uv),
    )
    parts = _extra_measures(g, V, xy, observer=int(observer), white=white, sums=sums)
    flags = _add_flags(
        flags,
        _flagged(parts["photometry"].flags, parts["alphaopic"].flags, parts["shape"].flags),
        lambda i: parts["photometry"].flags[i] + parts["alphaopic"].flags[i] + parts["shape"].flags[i],
    )
    if rendering:
        cri, fid, rendering_flags = _rendering(V, cct, observer=int(observer), measured_range_nm=g.measured_range_nm)
        parts.update(cri=cri, tm30=fid)
        flags = tuple(f + e if e else f for f, e in zip(flags, rendering_flags))
    return Analysis(
        spectra=g, observer=int(observer), XYZ=tri, xy=xy, uv=uv, uvp=uv_to_uvp(uv), cct=cct, flags=flags, **parts
    )


def _weighted_sums(g: Spectra, V: np.ndarray, observer: int) -> tuple[np.ndarray, dict[str, Any]]:
    """XYZ sums of ``V`` and the photometric and alpha-opic sums of its measured part, in one pass over the values.

    The same bits as each product on its own (:func:`cctkit.colorimetry.products_in_blocks`);
    when some spectrum leaves part of the grid unmeasured, the measured part is a second array.
    """
    from .alphaopic import action_spectra
    from .colorimetry import products_in_blocks
    from .photometry import _V, inside_range, range_masks
    from .tables import cmfs, table

    masks = range_masks(g.measured_range_nm)
    vm = inside_range(V, *masks)
    weights = [_V(), table("v_scotopic"), action_spectra()]
    if vm is V:
        raw, lum, sco, alpha = products_in_blocks(V, [cmfs(observer), *weights])
    else:
        (raw,) = products_in_blocks(V, [cmfs(observer)])
        lum, sco, alpha = products_in_blocks(vm, weights)
    return raw, {"masks": masks, "luminous": lum, "scotopic": sco, "alpha": alpha}


def _extra_measures(
    g: Spectra, V: np.ndarray, xy, *, observer: int, white: tuple = ("E", (1.0 / 3.0, 1.0 / 3.0)), sums=None
) -> dict[str, Any]:
    """Photometry, alpha-opic quantities, spectral shape, dominant wavelength (from :func:`_weighted_sums`)."""
    from .alphaopic import alpha_opic_of_sums
    from .dominant import dominant_wavelength
    from .photometry import measured_sums, photometry_of_sums
    from .shape import spectral_shape

    if sums is None:
        sums = _weighted_sums(g, V, observer)[1]
    totals = g.measured_totals
    if totals is None:
        from .constants import WAVELENGTH_NM
        from .photometry import inside_range

        totals = measured_sums(WAVELENGTH_NM, inside_range(V, *sums["masks"]))
    ranges = g.measured_range_nm
    return {
        "photometry": photometry_of_sums(
            g.quantity, sums["luminous"], sums["scotopic"], totals, measured_range_nm=ranges, masks=sums["masks"]
        ),
        "alphaopic": alpha_opic_of_sums(
            g.quantity, sums["alpha"], sums["luminous"], measured_range_nm=ranges, masks=sums["masks"]
        ),
        "shape": spectral_shape(V, measured_range_nm=ranges),
        "dominant": dominant_wavelength(xy, white_xy=white[0], observer=observer),
    }


def _rows(a) -> list:
    """``a`` (N, k) as nested Python lists with None for NaN (fast: one tolist, then only NaN rows)."""
    arr = np.asarray(a, dtype=np.float64)
    rows = arr.tolist()
    bad = ~np.isfinite(arr)
    if bad.any():
        for i in np.flatnonzero(bad.any(axis=tuple(range(1, arr.ndim)))):
            rows[i] = [None if not np.isfinite(v) else v for v in arr[i].tolist()]
    return rows


def _scalars(a) -> list:
    arr = np.asarray(a, dtype=np.float64)
    return [None if not np.isfinite(v) else v for v in arr.tolist()] if not np.isfinite(arr).all() else arr.tolist()


def _cri_columns(r) -> dict[str, list]:
    return {
        "Ra": _scalars(r.Ra),
        "R": _rows(r.R),
        "cri_valid": [bool(v) for v in np.asarray(r.valid).tolist()],
        "cri_dc": _scalars(r.dc),
        "cri_reference": list(r.reference),
    }


def _tm30_columns(r) -> dict[str, list]:
    from .rendering.tm30 import chroma_shift_percent

    return {
        "Rf": _scalars(r.Rf),
        "Rg": _scalars(r.Rg),
        "Rf_h": _rows(r.Rf_h),
        "Rcs_h": _rows(chroma_shift_percent(r)),  # percent, as TM-30 reports it
        "Rhs_h": _rows(r.Rhs_h),
        "Rf_i": _rows(r.Rf_i),
        "reference": list(r.reference),
    }


def _rendering(V: np.ndarray, cct: CctResult, *, observer: int, measured_range_nm=None):
    """CIE 13.3 and CIE 224 / TM-30 results and their flags.

    Both standards use the CIE 1931 2 deg CCT, so with ``observer=10`` it is computed anew.
    Spectra not covering 380-780 nm get Rf/Rg by CIE 224's own rule (see
    :func:`cctkit.rendering.tm30.short_range_rule`) and a ``cie224-short-range`` flag.
    """
    from .rendering import DC_LIMIT, REFERENCE_RANGE_K, colour_rendition, rendering_cct

    T, duv = (cct.cct_K, cct.duv) if observer == 2 else rendering_cct(V)
    r = colour_rendition(V, cct_K=T, duv=duv, measured_range_nm=measured_range_nm)
    # flags built for the flagged spectra only, from plain Python values
    flags: list[tuple[Flag, ...]] = [()] * V.shape[0]
    has_ref = np.isfinite(r.cct_K)
    poor = np.flatnonzero(has_ref & ~np.asarray(r.cri.valid, dtype=bool))
    made: dict[str, tuple[Flag, ...]] = {}  # one flag per distinct text: most spectra share a few
    for i, text in zip(poor.tolist(), _four_decimals(np.asarray(r.cri.dc)[poor])):
        flag = made.get(text)
        if flag is None:
            flag = made[text] = (
                Flag(
                    "cri-not-meaningful",
                    f"chromaticity distance DC = {text} from the reference is >= {DC_LIMIT}: "
                    "CIE 13.3 says the index is then not meaningful",
                ),
            )
        flags[i] = flag
    T = np.asarray(T, dtype=np.float64)
    with np.errstate(invalid="ignore"):
        above = (
            ~has_ref
            & np.isfinite(T)
            & (np.abs(np.asarray(duv, dtype=np.float64)) <= DUV_LIMIT)
            & (T > REFERENCE_RANGE_K[1])
        )
    for i, t in zip(np.flatnonzero(above).tolist(), T[above].tolist()):
        flags[i] = (
            Flag(
                "cct-above-reference-range",
                f"CCT {t:.0f} K is above {REFERENCE_RANGE_K[1]:g} K, where the CIE daylight "
                "reference is not defined: colour rendering not computed",
            ),
        )
    none = Flag("no-rendering", "no CCT, so no reference illuminant: colour rendering not computed")
    for i in np.flatnonzero(~has_ref & ~above).tolist():
        flags[i] = (none,)
    if measured_range_nm is not None:
        from .rendering.tm30 import RANGE_NM
        from .spectra import range_array

        lo_hi = range_array(measured_range_nm)
        short = has_ref & ((lo_hi[:, 0] > RANGE_NM[0]) | (lo_hi[:, 1] < RANGE_NM[1]))
        for i in np.flatnonzero(short).tolist():
            lo, hi = lo_hi[i]
            t = float(r.tm30.cct_K[i])
            at = f"the CCT of that spectrum, {t:.0f} K" if np.isfinite(t) else "no CCT: Rf and Rg withheld"
            flags[i] = flags[i] + (
                Flag(
                    "cie224-short-range",
                    f"measured {lo:g}-{hi:g} nm does not cover 380-780 nm: Rf, Rg and the hue bins take the spectrum "
                    f"as zero where it was not measured (CIE 224:2017 / TM-30-20 rule), reference at {at}; "
                    "Ra uses the nearest measured value",
                ),
            )
    return r.cri, r.tm30, tuple(flags)


def _four_decimals(x: np.ndarray) -> list[str]:
    """``f"{v:.4f}"`` of each value, formatted once per distinct text.

    Values in [+0, 1e8) whose last kept digit is not a near tie are rounded to integers of 1e-4 in
    one array step (x * 1e4 is within 1e-4 of the exact product there, so rounding it gives the
    digits the format rounds to); the others (ties, negatives, NaN, large) are formatted one by one.
    """
    x = np.asarray(x, dtype=np.float64)
    with np.errstate(invalid="ignore"):
        scaled = x * 1e4
        frac = scaled - np.floor(scaled)
        plain = ~np.signbit(x) & (scaled < 1e12) & (np.abs(frac - 0.5) > 1e-3)
    keys = np.where(plain, np.rint(np.where(plain, scaled, 0.0)), -1.0).astype(np.int64).tolist()
    texts: dict[int, str] = {}
    out = []
    for k, v in zip(keys, x.tolist()):
        if k < 0:
            out.append(f"{v:.4f}")
            continue
        t = texts.get(k)
        if t is None:
            q, rem = divmod(k, 10000)
            t = texts[k] = f"{q}.{rem:04d}"
        out.append(t)
    return out


def read_files(files, *, quantity=None, layout=None) -> list[Spectra]:
    """Read every file (each may hold several spectra) with :func:`cctkit.readers.read_spectra`, in order.

    ``layout`` (a :class:`cctkit.readers.TableLayout`) applies to every delimited-text file.
    A file with a spectrum nothing can be computed from (no data in 380-780 nm, no signal) is refused
    with :class:`~cctkit.errors.InputError` naming it (:func:`cctkit.spectra.require_signal`).
    """
    from .errors import InputError
    from .limits import MAX_SPECTRA, MAX_VALUES, too_many_spectra
    from .readers import read_spectra
    from .spectra import require_signal

    if not files:
        raise InputError("no input files given")
    out: list[Spectra] = []
    count = values = 0
    for f in files:  # refuse as soon as the limit is passed, before reading further files
        s = read_spectra(f, quantity=quantity, layout=layout)
        count += len(s)
        values += s.values.size
        if count > MAX_SPECTRA:
            raise InputError(too_many_spectra(count), source=str(f))
        if values > MAX_VALUES:
            raise InputError(
                f"over {MAX_VALUES} spectral values (spectra x points) by this file, the limit for "
                "one command; use `cctkit batch` for large lots",
                source=str(f),
            )
        out.append(require_signal(s))
    return out


def analyse_files(
    files,
    *,
    quantity=None,
    observer: int = 2,
    rendering: bool = True,
    layout=None,
    interpolation: str = "auto",
    dominant_white: Any = "E",
) -> Analysis:
    """:func:`analyse` of the spectra of ``files`` as one batch; they may differ in quantity
    (see :func:`analyse_mixed`)."""
    return analyse_mixed(
        read_files(files, quantity=quantity, layout=layout),
        observer=observer,
        rendering=rendering,
        interpolation=interpolation,
        dominant_white=dominant_white,
    )


@dataclass(frozen=True)
class MixedAnalysis(Analysis):
    """An :class:`Analysis` of spectra of different quantities, joined in input order.

    Each quantity was analysed on its own (so every absolute total keeps its own
    unit); ``records()`` are those per-quantity records.  ``spectra`` holds the
    values as measured, each in its own unit (``spectra.quantity`` says nothing
    here: the records carry each spectrum's quantity), and ``photometry``,
    ``alphaopic``, ``shape`` and ``dominant`` are left ``None``: use the records.
    """

    joined_records: tuple[dict[str, Any], ...] = ()

    def records(self) -> list[dict[str, Any]]:
        return [dict(r) for r in self.joined_records]

    def columns(self) -> dict[str, np.ndarray]:
        from .batch import records_table

        return records_table(self.records())


def analyse_mixed(
    items: list[Spectra],
    *,
    observer: int = 2,
    rendering: bool = True,
    interpolation: str = "auto",
    dominant_white: Any = "E",
) -> Analysis:
    """One analysis of several Spectra that may differ in quantity, in input order.

    Spectra of one quantity are joined and analysed as one batch (vectorised).
    With one quantity this is :func:`analyse` of the joined spectra; with several
    it is a :class:`MixedAnalysis` whose colour results (chromaticity, CCT,
    rendering) are side by side and whose records keep each spectrum's own
    quantity and totals.
    """
    from .spectra import concatenate

    if not items:
        from .errors import InputError

        raise InputError("no spectra given")
    groups: dict[Quantity, list[int]] = {}
    for i, s in enumerate(items):
        groups.setdefault(s.quantity, []).append(i)
    if len(groups) == 1:
        return analyse(
            concatenate(items, interpolation=interpolation),
            observer=observer,
            rendering=rendering,
            dominant_white=dominant_white,
        )
    parts = []
    where: dict[int, tuple[int, int]] = {}  # item -> (part, first spectrum in it)
    for k, idx in enumerate(groups.values()):
        pos = 0
        for i in idx:
            where[i] = (k, pos)
            pos += len(items[i])
        parts.append(
            analyse(
                concatenate([items[i] for i in idx], interpolation=interpolation),
                observer=observer,
                rendering=rendering,
                dominant_white=dominant_white,
            )
        )
    offsets = np.cumsum([0] + [len(a) for a in parts])
    perm = np.array([offsets[where[i][0]] + where[i][1] + j for i in range(len(items)) for j in range(len(items[i]))])
    all_records = [r for a in parts for r in a.records()]
    grids = [a.spectra for a in parts]
    joined = Spectra(
        wavelength_nm=grids[0].wavelength_nm,
        values=np.concatenate([g.values for g in grids])[perm],
        names=_pick(_chain(g.names for g in grids), perm),
        quantity=Quantity.RELATIVE,
        sources=_pick(_chain(g.sources for g in grids), perm),
        sha256=_pick(_chain(g.sha256 for g in grids), perm),
        flags=_pick(_chain(g.flags for g in grids), perm),
        measured_range_nm=_pick(_chain(g.measured_range_nm for g in grids), perm),
        metadata=_pick(_chain(g.metadata for g in grids), perm),
        measured_totals=np.concatenate([g.measured_totals for g in grids])[perm],
        interpolation=_pick(_chain(g.interpolation for g in grids), perm),
    )
    return MixedAnalysis(
        spectra=joined,
        observer=int(observer),
        XYZ=np.concatenate([a.XYZ for a in parts])[perm],
        xy=np.concatenate([a.xy for a in parts])[perm],
        uv=np.concatenate([a.uv for a in parts])[perm],
        uvp=np.concatenate([a.uvp for a in parts])[perm],
        cct=_join_results([a.cct for a in parts], perm),
        cri=_join_results([a.cri for a in parts], perm),
        tm30=_join_results([a.tm30 for a in parts], perm),
        flags=_pick(_chain(a.flags for a in parts), perm),
        joined_records=tuple(all_records[i] for i in perm),
    )


def _chain(seqs) -> tuple:
    return tuple(x for seq in seqs for x in seq)


def _pick(seq: tuple, perm: np.ndarray) -> tuple:
    return tuple(seq[i] for i in perm)


def _join_results(parts: list, perm: np.ndarray):
    """Per-spectrum result dataclasses (arrays and tuples of leading length N) joined and reordered."""
    import dataclasses

    first = parts[0]
    if first is None or any(p is None for p in parts):
        return None
    out = object.__new__(type(first))
    for f in dataclasses.fields(first):
        values = [getattr(p, f.name) for p in parts]
        v0 = values[0]
        if isinstance(v0, np.ndarray) and v0.ndim >= 1:
            joined: Any = np.concatenate(values)[perm]
        elif isinstance(v0, (tuple, list)):
            joined = type(v0)(_pick(_chain(values), perm))
        else:
            joined = v0
        object.__setattr__(out, f.name, joined)
    return out


def analyse_groups(
    items: list[Spectra],
    *,
    observer: int = 2,
    rendering: bool = True,
    interpolation: str = "auto",
    dominant_white: Any = "E",
) -> list[dict[str, Any]]:
    """Records for several Spectra that may differ in quantity, in input order.

    Spectra of one quantity are joined and analysed as one batch (vectorised); the
    records come back in the order of ``items``.
    """
    from .spectra import concatenate

    order: dict[Quantity, list[int]] = {}
    for i, s in enumerate(items):
        order.setdefault(s.quantity, []).append(i)
    per_item: dict[int, list[dict[str, Any]]] = {}
    for idx in order.values():
        recs = analyse(
            concatenate([items[i] for i in idx], interpolation=interpolation),
            observer=observer,
            rendering=rendering,
            dominant_white=dominant_white,
        ).records()
        pos = 0
        for i in idx:
            n = len(items[i])
            per_item[i] = recs[pos : pos + n]
            pos += n
    return [r for i in range(len(items)) for r in per_item[i]]


def flatten_record(rec: dict[str, Any]) -> dict[str, Any]:
    """One flat row from a record: lists become numbered columns (R1..R14, Rf_h1..), flags ``;``-joined codes."""
    out: dict[str, Any] = {}
    for k, v in rec.items():
        if k == "flags":
            out["flags"] = ";".join(f["code"] for f in v)
        elif k == "metadata" or isinstance(v, dict):
            out[k] = metadata_text(v)
        elif isinstance(v, list):
            if k.startswith("measured_range") or k.endswith("_range_nm"):
                out[f"{k}_lo"], out[f"{k}_hi"] = v
            else:
                out.update({f"{k}{i + 1}": x for i, x in enumerate(v)})
        else:
            out[k] = v
    return out


def metadata_text(metadata: dict[str, str] | None) -> str:
    """A spectrum's file metadata as one compact JSON text (one CSV cell); ``""`` when there is none."""
    import json

    return json.dumps(metadata, ensure_ascii=False, separators=(",", ":")) if metadata else ""


def records_csv(records: list[dict[str, Any]]) -> str:
    """Records as CSV text: list fields become numbered columns (R1..R14, Rf_h1..), plus the version."""
    from . import __version__
    from .formats import csv_text

    flat = [{**flatten_record(r), "cctkit_version": __version__} for r in records]
    header: list[str] = []
    for r in flat:
        for k in r:
            if k not in header:
                header.append(k)
    return csv_text(header, ([r.get(k, "") for k in header] for r in flat))


def interpolation_summary(methods) -> str:
    """The resampling methods actually used, with counts: ``"sprague (3 spectra); as measured (1 nm) (1 spectrum)"``."""
    counts: dict[str, int] = {}
    for m in methods:
        if m:
            counts[str(m)] = counts.get(str(m), 0) + 1
    return "; ".join(f"{m} ({k} spectr{'um' if k == 1 else 'a'})" for m, k in counts.items())


def provenance(*, interpolation: str = "auto", used=None) -> dict[str, Any]:
    """What every output carries so a number can be traced.

    ``interpolation`` is the method asked for (``--interpolation``); ``used``, when given, the
    method each spectrum was actually resampled by (records' ``interpolation``), summarised in
    ``conventions.interpolation_used``.
    """
    from .tables import colour_version

    colour_v = colour_version()
    conventions = {**CONVENTIONS, "interpolation_method": interpolation}
    if used is not None:
        conventions["interpolation_used"] = interpolation_summary(used)
    return {"cctkit_version": __version__, "colour_science_version": colour_v, "conventions": conventions}
