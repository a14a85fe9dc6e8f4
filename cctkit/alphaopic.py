"""CIE S 026/E:2018 alpha-opic quantities: irradiance, ELR, EDI and DER.

The five alpha-opic action spectra s_alpha(lambda) on the working grid, in energy terms,
each with peak (about) 1:

``s_cone``, ``m_cone``, ``l_cone``
    the CIE 2006 10 deg cone fundamentals (CIE 170-1:2006) as tabulated, which CIE S 026
    adopts; their tabulated maxima are 0.99997, 0.99994, 0.99998 and they are used
    unscaled (with that choice the D65 efficacies reproduce CIE S 026 Table 2 to all
    four published digits, see the tests).  Zero below 390 nm, where CIE 170-1 stops.
``rhodopic``
    the CIE 1951 scotopic function V'(lambda), 380-780 nm.
``melanopic``
    built here, not read from a table: the Govardovskii et al. (2000) A1 visual-pigment
    template for lambda_max = 480 nm (alpha and beta bands, quantal absorbance at the
    retina), multiplied by the transmittance of the ocular media of a 32-year-old
    observer from the van de Kraats & van Norren (2007) model that CIE 203:2012 adopts,
    converted from quantal to energy terms (times lambda), normalised to peak 1 on the
    1 nm grid and kept on 380-780 nm, the range CIE S 026 tabulates.  This is the
    construction behind the CIE S 026 s_mel as recalled from memory, not taken from the
    standard's text; it does not reproduce the published table exactly: peak 492 nm
    instead of 490 nm, s_mel(480 nm) = 0.949 instead of 0.9656, and D65 melanopic ELR
    1.3179 mW/lm instead of 1.3262 mW/lm (-0.63 %), measured in tests/test_alphaopic.py.  The coefficients of the
    lens model are quoted from memory.

Quantities, for spectral values S(lambda) of any radiometric quantity (irradiance gives
the names of CIE S 026; the others are the analogues, in the unit of that quantity):

* alpha-opic irradiance E_alpha = sum S(lambda) s_alpha(lambda) at 1 nm [W m^-2]
* alpha-opic efficacy of luminous radiation ELR = E_alpha / E_v [W/lm]
* alpha-opic equivalent daylight (D65) illuminance EDI = E_alpha / K_alpha^D65 [lx]
* alpha-opic daylight (D65) efficacy ratio DER = ELR / K_alpha^D65 (dimensionless)

where K_alpha^D65 is the alpha-opic ELR of CIE standard illuminant D65, the published
value of CIE S 026/E:2018 Table 2.

Circadian and other non-visual metrics describe the optical stimulus only; see
:data:`CIRCADIAN_CAUTION`.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache
from typing import Any

import numpy as np

from .colorimetry import safe_divide
from .constants import KE_MEL_D65_W_PER_LM, WAVELENGTH_NM
from .formats import finite_or_none as _num
from .photometry import _quantity, grid_values, luminous_total
from .spectra import Quantity

__all__ = [
    "ALPHA_OPIC_NAMES",
    "D65_ELR_W_PER_LM",
    "CIRCADIAN_CAUTION",
    "MELANOPIC_LAMBDA_MAX_NM",
    "OBSERVER_AGE_YEARS",
    "AlphaOpic",
    "alpha_opic",
    "action_spectra",
    "melanopic_action_spectrum",
    "ocular_media_density",
    "govardovskii2000",
]

#: Order of the alpha-opic columns everywhere in this module.
ALPHA_OPIC_NAMES = ("s_cone", "m_cone", "l_cone", "rhodopic", "melanopic")

#: alpha-opic ELR of CIE standard illuminant D65 [W/lm] -- CIE S 026/E:2018 Table 2
#: (0.8173, 1.4558, 1.6289, 1.4497, 1.3262 mW/lm; from memory; the melanopic value is
#: ``cctkit.constants.KE_MEL_D65_W_PER_LM``).  The first four are reproduced by our own
#: computation to the published four digits (tests/test_alphaopic.py).
D65_ELR_W_PER_LM = np.array([0.8173e-3, 1.4558e-3, 1.6289e-3, 1.4497e-3, KE_MEL_D65_W_PER_LM])
D65_ELR_W_PER_LM.setflags(write=False)

#: lambda_max of melanopsin [nm] -- CIE S 026/E:2018 (from memory).
MELANOPIC_LAMBDA_MAX_NM = 480.0
#: Age of the standard observer for pre-receptoral filtering [years] -- CIE S 026/E:2018 (from memory).
OBSERVER_AGE_YEARS = 32.0
#: Range over which CIE S 026/E:2018 tabulates the action spectra [nm].
TABULATED_RANGE_NM = (380.0, 780.0)

CIRCADIAN_CAUTION = (
    "alpha-opic and melanopic quantities (EDI, DER) describe the optical stimulus to the eye's "
    "photoreceptors per CIE S 026/E:2018; they are not a measure of health effects and are not medical advice."
)



def govardovskii2000(wavelength_nm: Any, lambda_max_nm: float) -> np.ndarray:
    """Govardovskii et al. (2000) A1 visual-pigment template (alpha + beta band), peak ~1.

    Parameters
    ----------
    wavelength_nm : array_like
        Wavelength [nm].
    lambda_max_nm
        Wavelength of peak alpha-band absorbance [nm].

    Returns
    -------
    ndarray
        Relative quantal absorbance (low-density), same shape as ``wavelength_nm``.

    References
    ----------
    Govardovskii V.I., Fyhrquist N., Reuter T., Kuzmin D.G., Donner K. (2000), "In search of
    the visual pigment template", Visual Neuroscience 17, 509-528
    (coefficients from memory).
    """
    lam = np.asarray(wavelength_nm, dtype=np.float64)
    x = lambda_max_nm / lam
    a = 0.8795 + 0.0459 * np.exp(-((lambda_max_nm - 300.0) ** 2) / 11940.0)
    alpha = 1.0 / (
        np.exp(69.7 * (a - x)) + np.exp(28.0 * (0.922 - x)) + np.exp(-14.9 * (1.104 - x)) + 0.674
    )
    beta_peak_nm = 189.0 + 0.315 * lambda_max_nm
    beta_width_nm = -40.5 + 0.195 * lambda_max_nm
    beta = 0.26 * np.exp(-(((lam - beta_peak_nm) / beta_width_nm) ** 2))
    return alpha + beta


def ocular_media_density(wavelength_nm: Any, age_years: float = OBSERVER_AGE_YEARS) -> np.ndarray:
    """Optical density of the ocular media (decadic) at ``age_years``.

    References
    ----------
    van de Kraats J., van Norren D. (2007), "Optical density of the aging human ocular media
    in the visible and the UV", J. Opt. Soc. Am. A 24, 1842-1857 (coefficients from
    memory); adopted by CIE 203:2012.
    """
    lam = np.asarray(wavelength_nm, dtype=np.float64)
    a2 = float(age_years) ** 2
    rayleigh = (0.446 + 0.000031 * a2) * (400.0 / lam) ** 4
    tryptophan = 14.19 * 10.68 * np.exp(-((0.057 * (lam - 273.0)) ** 2))
    lens_young = (0.998 - 0.000063 * a2) * 2.13 * np.exp(-((0.029 * (lam - 370.0)) ** 2))
    lens_old = (0.059 + 0.000186 * a2) * 11.95 * np.exp(-((0.021 * (lam - 325.0)) ** 2))
    lens_older = (0.016 + 0.000132 * a2) * 1.43 * np.exp(-((0.008 * (lam - 325.0)) ** 2))
    neutral = 0.111
    return rayleigh + tryptophan + lens_young + lens_old + lens_older + neutral


def melanopic_action_spectrum(wavelength_nm: Any = WAVELENGTH_NM) -> np.ndarray:
    """Melanopic action spectrum s_mel(lambda) in energy terms, peak 1 (construction in the module notes).

    Zero outside 380-780 nm.  Normalised by its maximum on the 1 nm working grid.
    """
    lam = np.asarray(wavelength_nm, dtype=np.float64)

    def unnormalised(w: np.ndarray) -> np.ndarray:
        quantal_cornea = govardovskii2000(w, MELANOPIC_LAMBDA_MAX_NM) * 10.0 ** (-ocular_media_density(w))
        return quantal_cornea * w  # per unit energy, photons scale with lambda

    peak = unnormalised(WAVELENGTH_NM).max()
    s = unnormalised(lam) / peak
    inside = (lam >= TABULATED_RANGE_NM[0]) & (lam <= TABULATED_RANGE_NM[1])
    return np.where(inside, s, 0.0)


@lru_cache(maxsize=1)
def action_spectra() -> np.ndarray:
    """The five alpha-opic action spectra on the working grid, (471, 5), columns :data:`ALPHA_OPIC_NAMES`."""
    from .tables import table

    lms = table("lms_10")
    out = np.column_stack([lms[:, 2], lms[:, 1], lms[:, 0], table("v_scotopic"), melanopic_action_spectrum()])
    out.setflags(write=False)
    return out


@dataclass(frozen=True)
class AlphaOpic:
    """alpha-opic quantities of N spectra; last axis of the (N, 5) arrays follows :data:`ALPHA_OPIC_NAMES`.

    ``radiant`` is the alpha-opic irradiance [W m^-2] for irradiance spectra, and its analogue
    in the radiant unit of ``quantity`` otherwise; ``edi`` is the equivalent daylight (D65)
    illuminance [lx] for irradiance, and the equivalent D65 luminous total (lm, cd m^-2, cd)
    otherwise.  ``elr_W_per_lm`` and ``der`` hold for any quantity, relative included.
    """

    quantity: Quantity
    radiant: np.ndarray
    elr_W_per_lm: np.ndarray
    edi: np.ndarray
    der: np.ndarray

    @property
    def melanopic_der(self) -> np.ndarray:
        return self.der[..., 4]

    @property
    def melanopic_edi(self) -> np.ndarray:
        return self.edi[..., 4]

    def record(self, i: int) -> dict[str, float | None]:
        """Per-spectrum record fields (melanopic EDI only for irradiance, as the record contract says)."""
        out: dict[str, float | None] = {"melanopic_der": _num(self.der[i, 4])}
        if self.quantity is Quantity.IRRADIANCE:
            out["melanopic_edi_lx"] = _num(self.edi[i, 4])
        return out

    def columns(self) -> dict[str, np.ndarray]:
        """The fields of :meth:`record` for every spectrum at once (NaN where a record has None)."""
        cols = {"melanopic_der": self.der[:, 4]}
        if self.quantity is Quantity.IRRADIANCE:
            cols["melanopic_edi_lx"] = self.edi[:, 4]
        return cols


def alpha_opic(values: Any, quantity: Quantity | str = Quantity.RELATIVE) -> AlphaOpic:
    """alpha-opic irradiance, ELR, EDI and DER of spectra on the working grid.

    Parameters
    ----------
    values : array_like (N, 471)
        Spectral values on the working grid, in ``quantity.unit``.
    quantity
        Radiometric quantity of ``values``.

    Returns
    -------
    AlphaOpic
        ELR and DER are NaN where the luminous total is zero.

    References
    ----------
    CIE S 026/E:2018: definitions of alpha-opic irradiance, ELR, EDI and DER, and Table 2
    (D65 efficacies).
    """
    q = _quantity(quantity)
    v = np.atleast_2d(grid_values(values))
    radiant = v @ action_spectra()
    elr = safe_divide(radiant, luminous_total(v)[:, None])
    return AlphaOpic(
        quantity=q,
        radiant=radiant,
        elr_W_per_lm=elr,
        edi=radiant / D65_ELR_W_PER_LM,
        der=elr / D65_ELR_W_PER_LM,
    )
