"""Physical and photometric constants, each with its unit and source.

Every number that enters a measure is defined here once.  Values marked
CODATA 2018 are exact or recommended values of the 2018 adjustment
(the SI redefinition of 2019 made h, c, k exact).
"""

from __future__ import annotations

import numpy as np

__all__ = [
    "H_J_S",
    "C_M_PER_S",
    "K_B_J_PER_K",
    "C1_W_M2",
    "C1L_W_M2_PER_SR",
    "C2_M_K",
    "C2_CODATA_M_K",
    "WIEN_B_M_K",
    "SIGMA_W_PER_M2_K4",
    "KM_LM_PER_W",
    "KM_SCOTOPIC_LM_PER_W",
    "WAVELENGTH_NM",
    "WAVELENGTH_START_NM",
    "WAVELENGTH_END_NM",
    "VISIBLE_BAND_NM",
    "DUV_LIMIT",
    "KE_MEL_D65_W_PER_LM",
]

#: Planck constant [J s] -- CODATA 2018 (exact).
H_J_S = 6.62607015e-34
#: Speed of light in vacuum [m/s] -- CODATA 2018 (exact).
C_M_PER_S = 299_792_458.0
#: Boltzmann constant [J/K] -- CODATA 2018 (exact).
K_B_J_PER_K = 1.380649e-23

#: First radiation constant c1 = 2 pi h c^2 [W m^2] -- CODATA 2018.
C1_W_M2 = 2.0 * np.pi * H_J_S * C_M_PER_S**2
#: First radiation constant for spectral radiance c1L = 2 h c^2 [W m^2 sr^-1] -- CODATA 2018.
C1L_W_M2_PER_SR = 2.0 * H_J_S * C_M_PER_S**2
#: Second radiation constant used for the Planckian locus [m K] -- CIE 15:2018 section 9.1
#: (the ITS-90 value, 1.4388e-2 m K).
C2_M_K = 1.4388e-2
#: Second radiation constant c2 = h c / k [m K] -- CODATA 2018 (1.438776877e-2 m K).
C2_CODATA_M_K = H_J_S * C_M_PER_S / K_B_J_PER_K

#: Wien displacement law constant b [m K] -- CODATA 2018.
WIEN_B_M_K = 2.897771955e-3
#: Stefan-Boltzmann constant [W m^-2 K^-4] -- CODATA 2018.
SIGMA_W_PER_M2_K4 = 5.670374419e-8

#: Maximum photopic luminous efficacy Km [lm/W] -- CIE 15:2018 section 7.1 (683 lm/W at
#: 540e12 Hz gives 683.002 lm/W at the 555 nm peak of V(lambda)).
KM_LM_PER_W = 683.002
#: Maximum scotopic luminous efficacy K'm [lm/W] -- CIE 15:2018 section 7.1 / CIE 18:2019.
KM_SCOTOPIC_LM_PER_W = 1700.06

#: Working wavelength grid [nm]: 360-830 nm at 1 nm -- CIE 15:2018 section 7.1.
WAVELENGTH_START_NM = 360
WAVELENGTH_END_NM = 830
WAVELENGTH_NM = np.arange(WAVELENGTH_START_NM, WAVELENGTH_END_NM + 1, dtype=np.float64)
WAVELENGTH_NM.setflags(write=False)

#: Band a measurement must cover for colorimetry to be trusted [nm] -- CIE 15:2018 section 7.2
#: (380-780 nm is the minimum summation range).
VISIBLE_BAND_NM = (380.0, 780.0)

#: Largest |Duv| for which CCT is reported as meaningful -- CIE 15:2018 section 9.5.
DUV_LIMIT = 0.05

#: Melanopic efficacy of luminous radiation of CIE standard illuminant D65 [W/lm]
#: -- CIE S 026/E:2018 Table 2 (1.3262 mW/lm).  Used as the denominator of the melanopic
#: daylight (D65) efficacy ratio, so that D65 coming out at 1.000 is an independent check.
KE_MEL_D65_W_PER_LM = 1.3262e-3
