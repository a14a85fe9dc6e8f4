"""Photometric and photon totals of spectra on the working grid.

Every function takes spectral values on the working grid (360-830 nm at 1 nm),
shape (..., 471), and sums them plainly at 1 nm without end-point halving
(CIE 15:2018 section 7.1 practice), so each total is a matrix product against
a weighting vector.  The unit of a total follows the radiometric quantity of
the values:

=============  ==================  ==================  =========================
quantity       radiant total       luminous total      photon total
=============  ==================  ==================  =========================
radiant-flux   W                   lm                  umol s^-1
irradiance     W m^-2              lx                  umol m^-2 s^-1
radiance       W sr^-1 m^-2        cd m^-2             umol sr^-1 m^-2 s^-1
intensity      W sr^-1             cd                  umol sr^-1 s^-1
relative       relative            relative            relative
=============  ==================  ==================  =========================

Ranges (each output names the range its total covers):

* radiant and photon totals: the data as measured, over the whole measured range
  (beyond 830 nm too), a plain sum of each sample times its wavelength step
  (:func:`measured_sums`; ``radiometric_range_nm``); nothing outside is invented;
* the photosynthetic photon flux (PPF, PPFD for irradiance): measured data inside
  400-700 nm inclusive (the photosynthetically active band of ANSI/ASABE S640, cited
  from memory; ``ppf_range_nm``);
* luminous, scotopic and alpha-opic totals: the measured part of the working grid
  (``photometric_range_nm`` = measured range within 360-830 nm); the values
  extrapolated for the colour measures are not counted;
* LER = luminous total / radiant total, both over the measured range.

Coverage rule: a total weighted by a function w(lambda) (V, V', an alpha-opic action
spectrum, the PAR photon weighting) is withheld (NaN, with a ``coverage-short`` flag
naming it and the share covered) when the measured range leaves more than
:data:`COVERAGE_LIMIT` (1 %) of the integral of w over 360-830 nm uncovered (our rule;
e.g. 400-700 nm data leave 0.06 % of V and 0.3 % of the S-cone-opic function
uncovered, 420-680 nm leave 7.3 % of the S-cone-opic and 1.3 % of the melanopic one).
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache
from typing import Any

import numpy as np

from .colorimetry import safe_divide
from .constants import C_M_PER_S, H_J_S, KM_LM_PER_W, KM_SCOTOPIC_LM_PER_W, WAVELENGTH_NM
from .errors import Flag, InputError
from .formats import finite_or_none as _num
from .spectra import Quantity, range_array

__all__ = [
    "N_A_PER_MOL",
    "PAR_BAND_NM",
    "Photometry",
    "photometry",
    "photometry_of_sums",
    "luminous_total",
    "radiant_total",
    "luminous_efficacy_of_radiation",
    "scotopic_total",
    "sp_ratio",
    "photon_total_umol",
    "ppf_umol",
    "grid_values",
    "measured_sums",
    "measured_mask",
    "uncovered_share",
    "coverage_flag",
    "COVERAGE_LIMIT",
]

#: Largest share of a weighting function's integral (over 360-830 nm) that the measured range may
#: leave uncovered before the total it weights is withheld -- our rule, see the module notes.
COVERAGE_LIMIT = 0.01

#: Avogadro constant [mol^-1] -- CODATA 2018 (exact since the 2019 SI redefinition).
N_A_PER_MOL = 6.02214076e23

#: Photosynthetically active band [nm], inclusive -- ANSI/ASABE S640 (from memory).
PAR_BAND_NM = (400.0, 700.0)

_LUMINOUS_UNIT = {
    Quantity.RADIANT_FLUX: "lm",
    Quantity.IRRADIANCE: "lx",
    Quantity.RADIANCE: "cd/m^2",
    Quantity.INTENSITY: "cd",
    Quantity.RELATIVE: "1",
}
_PHOTON_UNIT = {
    Quantity.RADIANT_FLUX: "umol/s",
    Quantity.IRRADIANCE: "umol/(m^2 s)",
    Quantity.RADIANCE: "umol/(sr m^2 s)",
    Quantity.INTENSITY: "umol/(sr s)",
    Quantity.RELATIVE: "1",
}
#: Record keys of the radiant, photon and PPF totals by quantity (relative spectra have none).
RADIANT_KEY = {
    Quantity.RADIANT_FLUX: "radiant_total_W",
    Quantity.IRRADIANCE: "radiant_total_W_per_m2",
    Quantity.RADIANCE: "radiant_total_W_per_sr_m2",
    Quantity.INTENSITY: "radiant_total_W_per_sr",
}
PHOTON_KEY = {
    Quantity.RADIANT_FLUX: "photon_flux_umol_per_s",
    Quantity.IRRADIANCE: "photon_flux_umol_per_m2_s",
    Quantity.RADIANCE: "photon_flux_umol_per_sr_m2_s",
    Quantity.INTENSITY: "photon_flux_umol_per_sr_s",
}
PPF_KEY = {
    Quantity.RADIANT_FLUX: "ppf_umol_per_s",
    Quantity.IRRADIANCE: "ppfd_umol_per_m2_s",
    Quantity.RADIANCE: "ppf_umol_per_sr_m2_s",
    Quantity.INTENSITY: "ppf_umol_per_sr_s",
}


def grid_values(values: Any, *, name: str = "values") -> np.ndarray:
    """``values`` as a float array whose last axis is the 471-point working grid.

    Raises
    ------
    InputError
        When the last axis does not hold 471 samples (360-830 nm at 1 nm).
    """
    arr = np.asarray(values, dtype=np.float64)
    n = WAVELENGTH_NM.shape[0]
    if arr.ndim == 0 or arr.shape[-1] != n:
        raise InputError(
            f"{name}: last axis must hold {n} samples of the 360-830 nm working grid at 1 nm, "
            f"got shape {arr.shape}; resample with cctkit.spectra.to_working_grid first"
        )
    return arr


def _quantity(quantity: Quantity | str) -> Quantity:
    return quantity if isinstance(quantity, Quantity) else Quantity.parse(quantity, source="quantity")


def _V() -> np.ndarray:
    from .tables import table

    return table("cmf_2")[:, 1]


@lru_cache(maxsize=1)
def _photon_weights() -> tuple[np.ndarray, np.ndarray]:
    # photons per joule at lambda is lambda / (h c); 1 nm step; mol -> umol is 1e6.
    per_W_umol = WAVELENGTH_NM * 1e-9 / (H_J_S * C_M_PER_S) / N_A_PER_MOL * 1e6
    par = (WAVELENGTH_NM >= PAR_BAND_NM[0]) & (WAVELENGTH_NM <= PAR_BAND_NM[1])
    full = per_W_umol.copy()
    band = np.where(par, per_W_umol, 0.0)
    full.setflags(write=False)
    band.setflags(write=False)
    return full, band


def _point_widths(wl: np.ndarray) -> np.ndarray:
    """Wavelength interval each sample stands for [nm]: the step for uniform data (plain sum, no
    end-point halving), half the distance between neighbours inside otherwise."""
    if wl.shape[0] < 2:
        return np.ones_like(wl)
    d = np.diff(wl)
    w = np.empty_like(wl)
    w[1:-1] = 0.5 * (d[:-1] + d[1:])
    w[0], w[-1] = d[0], d[-1]
    return w


def measured_sums(wavelength_nm: Any, values: Any, ranges=None) -> np.ndarray:
    """Radiant total, photon total [umol ...] and PPF of spectra as measured, (N, 3).

    Plain sums of each sample times the wavelength interval it stands for, over the whole
    measured range (or over each spectrum's ``ranges`` (lo, hi, ...) when given); PPF over the
    samples within 400-700 nm.  No extrapolation: what was not measured is not counted.
    """
    wl = np.asarray(wavelength_nm, dtype=np.float64)
    v = np.atleast_2d(np.asarray(values, dtype=np.float64))
    w = _point_widths(wl)
    photon = wl * 1e-9 / (H_J_S * C_M_PER_S) / N_A_PER_MOL * 1e6 * w  # umol per (W/nm) per sample
    par = (wl >= PAR_BAND_NM[0] - 1e-9) & (wl <= PAR_BAND_NM[1] + 1e-9)
    if ranges:
        lo = np.array([r[0] for r in ranges], dtype=np.float64)[:, None]
        hi = np.array([r[1] for r in ranges], dtype=np.float64)[:, None]
        v = np.where((wl >= lo - 1e-9) & (wl <= hi + 1e-9), v, 0.0)
    return np.column_stack([v @ w, v @ photon, v @ np.where(par, photon, 0.0)])


def measured_mask(measured_range_nm) -> np.ndarray:
    """(N, 471) True where the working grid lies inside each spectrum's measured range (lo, hi, ...)."""
    r = range_array(measured_range_nm)
    return (WAVELENGTH_NM >= r[:, :1] - 1e-9) & (WAVELENGTH_NM <= r[:, 1:] + 1e-9)


def range_masks(measured_range_nm) -> tuple[np.ndarray, np.ndarray]:
    """:func:`measured_mask` of each *distinct* measured range, and which of them each spectrum has.

    Returns ``(masks, which)``: ``masks`` (U, 471), ``which`` (N,) indices into it, so that
    ``masks[which]`` is :func:`measured_mask`; spectra of one file (or one batch chunk) share
    one range, and their coverage is worked out once.
    """
    r = range_array(measured_range_nm)
    if r.shape[0] == 0 or (r == r[0]).all():
        return measured_mask(r[:1]), np.zeros(r.shape[0], dtype=np.intp)
    distinct, which = np.unique(r, axis=0, return_inverse=True)
    return measured_mask(distinct), which.reshape(-1)


def inside_range(v: np.ndarray, masks: np.ndarray, which: np.ndarray) -> np.ndarray:
    """``v`` (N, 471) with the values outside each spectrum's measured range set to 0 (see :func:`range_masks`)."""
    # C order whatever the layout of v, as np.where with a full (N, 471) mask gives: BLAS may round a
    # product in another layout differently in the last bit
    if masks.shape[0] == 1 and masks[0].all() and v.dtype == np.float64 and v.flags.c_contiguous:
        return v  # every spectrum covers the grid: np.where would copy v value for value
    return np.ascontiguousarray(np.where(masks[0] if masks.shape[0] == 1 else masks[which], v, 0.0))


def uncovered_share(mask: np.ndarray, weights: np.ndarray) -> np.ndarray:
    """Share of each weighting function's integral (columns of ``weights``, 360-830 nm) outside ``mask``.

    ``mask`` (N, 471) from :func:`measured_mask`; ``weights`` (471,) or (471, k); result (N,) or (N, k).
    """
    w = np.asarray(weights, dtype=np.float64)
    return ((~mask).astype(np.float64) @ w) / w.sum(axis=0)


def coverage_flag(measure: str, weighting: str, share_uncovered: float, lo: float, hi: float) -> Flag:
    """The ``coverage-short`` flag of a withheld measure."""
    covered = min(max(1.0 - share_uncovered, 0.0), 1.0)  # a share rounded past 1 would read "-0.00 %"
    return Flag(
        "coverage-short",
        f"{measure} withheld: the measured range {lo:g}-{hi:g} nm covers {100 * covered:.2f} % "
        f"of the integral of {weighting} (at least {100 * (1 - COVERAGE_LIMIT):g} % needed)",
    )


def luminous_total(values: Any) -> np.ndarray:
    """Photopic luminous total Km sum S(lambda) V(lambda) at 1 nm over 360-830 nm.

    Parameters
    ----------
    values : array_like (..., 471)
        Spectral values on the working grid [W nm^-1, W m^-2 nm^-1, ...].

    Returns
    -------
    ndarray (...)
        Luminous flux [lm], illuminance [lx], luminance [cd m^-2] or intensity [cd]
        according to the quantity (a relative number for relative spectra).

    References
    ----------
    CIE 15:2018 section 7.1 (Km = 683.002 lm/W, CIE 1924 V(lambda) = y-bar of the CIE 1931 observer).
    """
    return KM_LM_PER_W * (grid_values(values) @ _V())


def radiant_total(values: Any) -> np.ndarray:
    """Radiant total sum S(lambda) at 1 nm over 360-830 nm [W, W m^-2, W sr^-1 m^-2, W sr^-1]."""
    return grid_values(values).sum(axis=-1)


def luminous_efficacy_of_radiation(values: Any) -> np.ndarray:
    """Luminous efficacy of radiation K = luminous total / radiant total over 360-830 nm [lm/W].

    The denominator is the radiant total over the working grid 360-830 nm, not over all
    wavelengths: infrared or ultraviolet outside the grid is not counted.  NaN for a
    spectrum whose radiant total is zero.

    References
    ----------
    CIE S 017 (ILV), term 'luminous efficacy of radiation'; CIE 15:2018 section 7.1.
    """
    v = grid_values(values)
    return safe_divide(luminous_total(v), radiant_total(v))


def scotopic_total(values: Any) -> np.ndarray:
    """Scotopic luminous total K'm sum S(lambda) V'(lambda) with K'm = 1700.06 lm/W.

    Unit as :func:`luminous_total` (scotopic lm, lx, ...).  V'(lambda) is the CIE 1951
    scotopic function, tabulated 380-780 nm (zero outside).

    References
    ----------
    CIE 15:2018 section 7.1 and Table T.3 (CIE 1951 V'(lambda)); K'm as in cctkit.constants.
    """
    from .tables import table

    return KM_SCOTOPIC_LM_PER_W * (grid_values(values) @ table("v_scotopic"))


def sp_ratio(values: Any) -> np.ndarray:
    """S/P ratio: scotopic over photopic luminous total (dimensionless); NaN if photopic is zero."""
    v = grid_values(values)
    return safe_divide(scotopic_total(v), luminous_total(v))


def photon_total_umol(values: Any) -> np.ndarray:
    """Photon total over 360-830 nm, sum S(lambda) lambda / (h c N_A) [umol s^-1, umol m^-2 s^-1, ...].

    References
    ----------
    h, c: CODATA 2018 (exact); N_A: CODATA 2018 (exact).
    """
    return grid_values(values) @ _photon_weights()[0]


def ppf_umol(values: Any) -> np.ndarray:
    """Photosynthetic photon flux over 400-700 nm inclusive [umol s^-1]; PPFD [umol m^-2 s^-1] for irradiance.

    References
    ----------
    ANSI/ASABE S640 (PAR band 400-700 nm, from memory); constants as :func:`photon_total_umol`.
    """
    return grid_values(values) @ _photon_weights()[1]


@dataclass(frozen=True)
class Photometry:
    """Photometric, radiometric and photon totals of N spectra (arrays of shape (N,)).

    The unit of ``luminous``, ``scotopic``, ``radiant``, ``photon_umol`` and ``ppf_umol``
    depends on ``quantity`` (see the module table and the ``*_unit`` properties);
    ``ler_lm_per_W`` and ``sp_ratio`` do not.  ``radiometric_range_nm``, ``photometric_range_nm``
    and ``ppf_range_nm`` (N, 2) are the ranges the totals cover; a withheld total is NaN and
    ``flags`` says why (coverage rule in the module notes).
    """

    quantity: Quantity
    luminous: np.ndarray
    scotopic: np.ndarray
    radiant: np.ndarray
    ler_lm_per_W: np.ndarray
    sp_ratio: np.ndarray
    photon_umol: np.ndarray
    ppf_umol: np.ndarray
    radiometric_range_nm: np.ndarray | None = None
    photometric_range_nm: np.ndarray | None = None
    ppf_range_nm: np.ndarray | None = None
    flags: tuple[tuple[Flag, ...], ...] = ()

    @property
    def luminous_unit(self) -> str:
        return _LUMINOUS_UNIT[self.quantity]

    @property
    def photon_unit(self) -> str:
        return _PHOTON_UNIT[self.quantity]

    def record(self, i: int) -> dict[str, Any]:
        """Per-spectrum record fields; absolute totals are left out for relative spectra."""
        out: dict[str, Any] = {
            "ler_lm_per_W": _num(self.ler_lm_per_W[i]),
            "sp_ratio": _num(self.sp_ratio[i]),
        }
        if self.quantity is not Quantity.RELATIVE:
            out[self.quantity.luminous_name] = _num(self.luminous[i])
            out[RADIANT_KEY[self.quantity]] = _num(self.radiant[i])
            out[PHOTON_KEY[self.quantity]] = _num(self.photon_umol[i])
            out[PPF_KEY[self.quantity]] = _num(self.ppf_umol[i])
        for key, r in (
            ("radiometric_range_nm", self.radiometric_range_nm),
            ("photometric_range_nm", self.photometric_range_nm),
            ("ppf_range_nm", self.ppf_range_nm),
        ):
            if r is not None:
                out[key] = [_num(r[i, 0]), _num(r[i, 1])]
        return out

    def columns(self) -> dict[str, np.ndarray]:
        """The fields of :meth:`record` for every spectrum at once (NaN where a record has None)."""
        cols = {"ler_lm_per_W": self.ler_lm_per_W, "sp_ratio": self.sp_ratio}
        if self.quantity is not Quantity.RELATIVE:
            cols[self.quantity.luminous_name] = self.luminous
            cols[RADIANT_KEY[self.quantity]] = self.radiant
            cols[PHOTON_KEY[self.quantity]] = self.photon_umol
            cols[PPF_KEY[self.quantity]] = self.ppf_umol
        for key, r in (
            ("radiometric_range_nm", self.radiometric_range_nm),
            ("photometric_range_nm", self.photometric_range_nm),
            ("ppf_range_nm", self.ppf_range_nm),
        ):
            if r is not None:  # flattened as flatten_record does
                cols[f"{key}_lo"], cols[f"{key}_hi"] = r[:, 0], r[:, 1]
        return cols


def photometry(
    values: Any, quantity: Quantity | str = Quantity.RELATIVE, *, measured_range_nm=None, measured_totals: Any = None
) -> Photometry:
    """All photometric and photon totals of spectra on the working grid.

    Parameters
    ----------
    values : array_like (N, 471)
        Spectral values on the working grid, in ``quantity.unit``.
    quantity
        Radiometric quantity of ``values``; fixes the unit of the totals.
    measured_range_nm : sequence of (lo, hi, ...) per spectrum, optional
        The range each spectrum was measured over [nm] (``Spectra.measured_range_nm``); values
        outside it are not counted and the coverage rule applies.  Default: the working grid.
    measured_totals : array_like (N, 3), optional
        Radiant, photon and PPF totals summed over the data as measured (``Spectra.measured_totals``);
        default: summed over ``values`` inside the measured range.

    Returns
    -------
    Photometry
    """
    q = _quantity(quantity)
    v = np.atleast_2d(grid_values(values))
    n = v.shape[0]
    if measured_range_nm is None:
        measured_range_nm = ((float(WAVELENGTH_NM[0]), float(WAVELENGTH_NM[-1])),) * n
    masks, which = range_masks(measured_range_nm)
    vm = inside_range(v, masks, which)
    if measured_totals is None:
        measured_totals = measured_sums(WAVELENGTH_NM, vm)
    from .tables import table

    return photometry_of_sums(
        q,
        vm @ _V(),
        vm @ table("v_scotopic"),
        measured_totals,
        measured_range_nm=measured_range_nm,
        masks=(masks, which),
    )


def photometry_of_sums(
    quantity: Quantity | str, luminous_sum, scotopic_sum, measured_totals, *, measured_range_nm, masks=None
) -> Photometry:
    """:func:`photometry` from the plain sums it is made of (so a caller can compute them in one pass).

    ``luminous_sum`` and ``scotopic_sum`` (N,) are the values inside the measured range (:func:`inside_range`)
    times V(lambda) and V'(lambda), summed at 1 nm; ``measured_totals`` (N, 3) as in :func:`photometry`;
    ``masks`` the :func:`range_masks` of ``measured_range_nm`` when the caller has them.
    """
    q = _quantity(quantity)
    masks, which = range_masks(measured_range_nm) if masks is None else masks
    n = which.shape[0]
    totals = np.asarray(measured_totals, dtype=np.float64).reshape(n, 3)
    rng = range_array(measured_range_nm).reshape(n, 2).copy()  # kept in the result: its own copy
    phot_rng = np.column_stack([np.maximum(rng[:, 0], WAVELENGTH_NM[0]), np.minimum(rng[:, 1], WAVELENGTH_NM[-1])])
    ppf_rng = np.column_stack([np.maximum(rng[:, 0], PAR_BAND_NM[0]), np.minimum(rng[:, 1], PAR_BAND_NM[1])])
    ppf_rng[ppf_rng[:, 0] > ppf_rng[:, 1]] = np.nan
    from .tables import table

    par = (WAVELENGTH_NM >= PAR_BAND_NM[0]) & (WAVELENGTH_NM <= PAR_BAND_NM[1])
    weights = np.column_stack([_V(), table("v_scotopic"), np.where(par, WAVELENGTH_NM, 0.0)])
    share = uncovered_share(masks, weights)[which]
    short = share > COVERAGE_LIMIT
    lum = np.where(short[:, 0], np.nan, KM_LM_PER_W * np.asarray(luminous_sum, dtype=np.float64))
    sco = np.where(short[:, 1], np.nan, KM_SCOTOPIC_LM_PER_W * np.asarray(scotopic_sum, dtype=np.float64))
    rad = totals[:, 0]
    ppf = np.where(short[:, 2], np.nan, totals[:, 2])
    names = (
        ("luminous total and LER", "V(lambda)"),
        ("scotopic total and S/P ratio", "V'(lambda)"),
        ("PPF", "the 400-700 nm photon weighting"),
    )
    flags: list[tuple[Flag, ...]] = [()] * n
    for i in np.flatnonzero(short.any(axis=1)).tolist():  # only the spectra with a withheld total
        flags[i] = tuple(
            coverage_flag(m, w, float(share[i, k]), rng[i, 0], rng[i, 1])
            for k, (m, w) in enumerate(names)
            if short[i, k]
        )
    return Photometry(
        quantity=q,
        luminous=lum,
        scotopic=sco,
        radiant=rad,
        ler_lm_per_W=safe_divide(lum, rad),
        sp_ratio=safe_divide(sco, lum),
        photon_umol=totals[:, 1],
        ppf_umol=ppf,
        radiometric_range_nm=rng,
        photometric_range_nm=phot_rng,
        ppf_range_nm=ppf_rng,
        flags=tuple(flags),
    )
