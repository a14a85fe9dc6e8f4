"""CIE S 026/E:2018 alpha-opic quantities: radiometric totals, ELR, equivalent daylight totals and DER.

The five alpha-opic action spectra s_alpha(lambda) are read from the standard's own table,
shipped as ``cctkit/data/cie-s026-alpha-opic.csv`` (CIE S 026/E:2018 Table 2, the CIE dataset
DOI 10.25039/CIE.DS.vqqhzp5a, CC BY-SA 4.0; source and licence in ``cctkit/data/README.md``):
S-cone-opic, M-cone-opic, L-cone-opic, rhodopic and melanopic, 380-780 nm at 1 nm, in energy
terms, peak 1.  On the working grid they are zero outside 380-780 nm, where S 026 tabulates
nothing.

Quantities, for spectral values S(lambda) of each radiometric quantity (CIE S 026 names them
for irradiance and radiance; flux and intensity follow the same pattern):

=============  ===============================  ==================================================
quantity       alpha-opic radiometric total     equivalent daylight (D65) photometric total
=============  ===============================  ==================================================
irradiance     alpha-opic irradiance [W m^-2]   EDI, equivalent daylight illuminance [lx]
radiance       alpha-opic radiance              EDL, equivalent daylight luminance [cd m^-2]
               [W sr^-1 m^-2]
radiant-flux   alpha-opic radiant flux [W]      equivalent daylight luminous flux [lm]
intensity      alpha-opic radiant intensity     equivalent daylight luminous intensity [cd]
               [W sr^-1]
=============  ===============================  ==================================================

* alpha-opic radiometric total E_alpha = sum S(lambda) s_alpha(lambda) at 1 nm;
* alpha-opic efficacy of luminous radiation ELR = E_alpha / E_v [W/lm] (reported in mW/lm);
* equivalent daylight total = E_alpha / K_alpha^D65, the luminous total of D65 that gives the
  same E_alpha;
* alpha-opic daylight (D65) efficacy ratio DER = ELR / K_alpha^D65 (dimensionless),

where K_alpha^D65 is the alpha-opic ELR of CIE standard illuminant D65 published in CIE S 026
Table 2.  ELR and DER hold for relative spectra too.

Only measured data enter these totals (``measured`` mask, see :mod:`cctkit.photometry`);
non-visual metrics describe the optical stimulus only, see :data:`CIRCADIAN_CAUTION`.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache
from typing import Any

import numpy as np

from .colorimetry import safe_divide
from .constants import KE_MEL_D65_W_PER_LM, KM_LM_PER_W, WAVELENGTH_NM
from .errors import Flag
from .formats import finite_or_none as _num
from .photometry import (
    _V,
    COVERAGE_LIMIT,
    _quantity,
    coverage_flag,
    grid_values,
    inside_range,
    range_masks,
    uncovered_share,
)
from .spectra import Quantity

__all__ = [
    "ALPHA_OPIC_NAMES",
    "D65_ELR_W_PER_LM",
    "CIRCADIAN_CAUTION",
    "TABLE_FILE",
    "RECORD_KEYS",
    "AlphaOpic",
    "alpha_opic",
    "alpha_opic_of_sums",
    "action_spectra",
    "melanopic_action_spectrum",
]

#: Order of the alpha-opic columns everywhere in this module (record keys start with these names).
ALPHA_OPIC_NAMES = ("s_cone_opic", "m_cone_opic", "l_cone_opic", "rhodopic", "melanopic")
#: The shipped table of CIE S 026/E:2018 (columns Wavelength, sc, mc, lc, rh, mel).
TABLE_FILE = "cie-s026-alpha-opic.csv"
_TABLE_COLUMNS = ("sc", "mc", "lc", "rh", "mel")

#: alpha-opic ELR of CIE standard illuminant D65 [W/lm] -- CIE S 026/E:2018 Table 2
#: (0.8173, 1.4558, 1.6289, 1.4497, 1.3262 mW/lm; the melanopic value is
#: ``cctkit.constants.KE_MEL_D65_W_PER_LM``).  Our own sums over the shipped action spectra
#: reproduce all five to the published four digits (tests/test_alphaopic.py).
D65_ELR_W_PER_LM = np.array([0.8173e-3, 1.4558e-3, 1.6289e-3, 1.4497e-3, KE_MEL_D65_W_PER_LM])
D65_ELR_W_PER_LM.setflags(write=False)

#: Range over which CIE S 026/E:2018 tabulates the action spectra [nm].
TABULATED_RANGE_NM = (380.0, 780.0)

CIRCADIAN_CAUTION = (
    "alpha-opic and melanopic quantities (EDI, DER) describe the optical stimulus to the eye's "
    "photoreceptors per CIE S 026/E:2018; they are not a measure of health effects and are not medical advice."
)

# Record-key pieces by quantity: (radiometric total name + unit, equivalent daylight total name + unit).
_KEYS = {
    Quantity.IRRADIANCE: ("irradiance_W_per_m2", "edi_lx"),
    Quantity.RADIANCE: ("radiance_W_per_sr_m2", "edl_cd_per_m2"),
    Quantity.RADIANT_FLUX: ("radiant_flux_W", "equivalent_daylight_flux_lm"),
    Quantity.INTENSITY: ("radiant_intensity_W_per_sr", "equivalent_daylight_intensity_cd"),
}

#: Every record key this module can write, over all quantities (for claims files).
RECORD_KEYS = tuple(
    f"{name}_{piece}"
    for name in ALPHA_OPIC_NAMES
    for piece in (*(k for pair in _KEYS.values() for k in pair), "elr_mW_per_lm", "der")
)


@lru_cache(maxsize=1)
def action_spectra() -> np.ndarray:
    """The five alpha-opic action spectra on the working grid, (471, 5), columns :data:`ALPHA_OPIC_NAMES`.

    Read from the shipped CIE S 026/E:2018 table (1 nm, 380-780 nm); zero outside that range.
    """
    from importlib import resources

    text = resources.files("cctkit").joinpath("data", TABLE_FILE).read_text(encoding="utf-8")
    lines = text.strip().splitlines()
    header = [h.strip() for h in lines[0].split(",")]
    data = np.array([[float(x) for x in line.split(",")] for line in lines[1:]], dtype=np.float64)
    wl = data[:, header.index("Wavelength")]
    cols = data[:, [header.index(c) for c in _TABLE_COLUMNS]]
    out = np.zeros((WAVELENGTH_NM.shape[0], len(_TABLE_COLUMNS)))
    out[np.rint(wl - WAVELENGTH_NM[0]).astype(int)] = cols
    out.setflags(write=False)
    return out


def melanopic_action_spectrum() -> np.ndarray:
    """s_mel(lambda) of CIE S 026/E:2018 on the working grid, (471,), peak 1 at 490 nm, zero outside 380-780 nm."""
    return action_spectra()[:, 4]


@dataclass(frozen=True)
class AlphaOpic:
    """alpha-opic quantities of N spectra; last axis of the (N, 5) arrays follows :data:`ALPHA_OPIC_NAMES`.

    ``radiant`` is the alpha-opic radiometric total in the radiant unit of ``quantity`` (W m^-2
    for irradiance, W sr^-1 m^-2 for radiance, W for flux, W sr^-1 for intensity); ``edi`` the
    equivalent daylight (D65) photometric total (lx, cd m^-2, lm, cd).  ``elr_W_per_lm`` and
    ``der`` hold for any quantity, relative included.  A measure whose action spectrum the
    measured range does not cover is NaN (``withheld``, see :mod:`cctkit.photometry`).
    """

    quantity: Quantity
    radiant: np.ndarray
    elr_W_per_lm: np.ndarray
    edi: np.ndarray
    der: np.ndarray
    flags: tuple[tuple[Flag, ...], ...] = ()

    @property
    def melanopic_der(self) -> np.ndarray:
        return self.der[..., 4]

    @property
    def melanopic_edi(self) -> np.ndarray:
        return self.edi[..., 4]

    def record(self, i: int) -> dict[str, float | None]:
        """Per-spectrum record fields: for each alpha, its totals (absolute quantities only), ELR and DER."""
        out: dict[str, float | None] = {}
        keys = _KEYS.get(self.quantity)
        for k, name in enumerate(ALPHA_OPIC_NAMES):
            if keys is not None:
                out[f"{name}_{keys[0]}"] = _num(self.radiant[i, k])
                out[f"{name}_{keys[1]}"] = _num(self.edi[i, k])
            out[f"{name}_elr_mW_per_lm"] = _num(self.elr_W_per_lm[i, k] * 1e3)
            out[f"{name}_der"] = _num(self.der[i, k])
        return out

    def columns(self) -> dict[str, np.ndarray]:
        """The fields of :meth:`record` for every spectrum at once (NaN where a record has None)."""
        cols: dict[str, np.ndarray] = {}
        keys = _KEYS.get(self.quantity)
        for k, name in enumerate(ALPHA_OPIC_NAMES):
            if keys is not None:
                cols[f"{name}_{keys[0]}"] = self.radiant[:, k]
                cols[f"{name}_{keys[1]}"] = self.edi[:, k]
            cols[f"{name}_elr_mW_per_lm"] = self.elr_W_per_lm[:, k] * 1e3
            cols[f"{name}_der"] = self.der[:, k]
        return cols


def alpha_opic(values: Any, quantity: Quantity | str = Quantity.RELATIVE, *, measured_range_nm=None) -> AlphaOpic:
    """alpha-opic totals, ELR, equivalent daylight totals and DER of spectra on the working grid.

    Parameters
    ----------
    values : array_like (N, 471)
        Spectral values on the working grid, in ``quantity.unit``.
    quantity
        Radiometric quantity of ``values``.
    measured_range_nm : sequence of (lo, hi, ...) per spectrum, optional
        Measured range of each spectrum [nm]; only values inside it are summed, and an alpha
        whose action spectrum it leaves uncovered by more than the coverage limit is withheld
        (NaN, flagged).  Default: the working grid.

    Returns
    -------
    AlphaOpic
        ELR and DER are NaN where the luminous total is zero or withheld.

    References
    ----------
    CIE S 026/E:2018: definitions of alpha-opic irradiance/radiance, ELR, EDI, EDL and DER;
    Table 2 (action spectra; D65 efficacies).
    """
    q = _quantity(quantity)
    v = np.atleast_2d(grid_values(values))
    n = v.shape[0]
    if measured_range_nm is None:
        measured_range_nm = ((float(WAVELENGTH_NM[0]), float(WAVELENGTH_NM[-1])),) * n
    masks, which = range_masks(measured_range_nm)
    v = inside_range(v, masks, which)
    return alpha_opic_of_sums(
        q, v @ action_spectra(), v @ _V(), measured_range_nm=measured_range_nm, masks=(masks, which)
    )


def alpha_opic_of_sums(
    quantity: Quantity | str, alpha_sums, luminous_sum, *, measured_range_nm, masks=None
) -> AlphaOpic:
    """:func:`alpha_opic` from the plain sums it is made of (so a caller can compute them in one pass).

    ``alpha_sums`` (N, 5) and ``luminous_sum`` (N,) are the values inside the measured range
    (:func:`cctkit.photometry.inside_range`) times the action spectra (:func:`action_spectra`) and
    V(lambda), summed at 1 nm; ``masks`` the :func:`cctkit.photometry.range_masks` of ``measured_range_nm``
    when the caller has them.
    """
    from .tables import table

    q = _quantity(quantity)
    masks, which = range_masks(measured_range_nm) if masks is None else masks
    n = which.shape[0]
    s = action_spectra()
    share = uncovered_share(masks, s)[which]  # (N, 5)
    short = share > COVERAGE_LIMIT
    v_short = uncovered_share(masks, table("cmf_2")[:, 1])[which] > COVERAGE_LIMIT
    radiant = np.where(short, np.nan, alpha_sums)
    lum = np.where(v_short, np.nan, KM_LM_PER_W * np.asarray(luminous_sum, dtype=np.float64))
    elr = safe_divide(radiant, lum[:, None])
    flags: list[tuple[Flag, ...]] = [()] * n
    for i in np.flatnonzero(short.any(axis=1)).tolist():  # only the spectra with a withheld quantity
        flags[i] = tuple(
            coverage_flag(
                f"{name} quantities",
                f"the {name} action spectrum",
                float(share[i, k]),
                measured_range_nm[i][0],
                measured_range_nm[i][1],
            )
            for k, name in enumerate(ALPHA_OPIC_NAMES)
            if short[i, k]
        )
    return AlphaOpic(
        quantity=q,
        radiant=radiant,
        elr_W_per_lm=elr,
        edi=radiant / D65_ELR_W_PER_LM,
        der=elr / D65_ELR_W_PER_LM,
        flags=tuple(flags),
    )
