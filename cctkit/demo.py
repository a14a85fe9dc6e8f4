"""Synthetic spectra for the demonstration scenario, made by a small physical model.

The scenario: the *Harbourside Lantern Hall*, a fictional concert venue, chooses
downlights.  Three fictional suppliers submit one candidate each, the hall's
lighting lab measures a tunable-white fixture at five set points, and a
procurement lot of 24 delivered units of one candidate is measured unit by unit.
Every name, product and number here is invented; nothing is a real product or a
real measurement.

The model
---------
A phosphor-converted white LED is a blue InGaN die whose light is partly
absorbed by phosphors that re-emit it at longer wavelengths.

* **Blue die.**  A split Gaussian in photon energy: the low-energy (long
  wavelength) side is broader than the high-energy side by ``asymmetry``, as the
  emission of InGaN quantum wells is (band-tail states and phonon replicas).
* **Phosphor bands.**  Gaussians in photon energy.  A Ce3+ phosphor (YAG:Ce-like
  yellow, LuAG:Ce-like green) emits from the 5d level to the two 4f ground-state
  levels 2F5/2 and 2F7/2, about 0.25 eV apart, so its band is a doublet of two
  Gaussians; a Eu2+ nitride red is a single Gaussian.
* **Stokes loss.**  Phosphor ``k`` absorbs a fraction ``a_k`` of the blue photons
  and re-emits them with quantum efficiency ``QE_k``.  Because an emitted photon
  carries less energy than the absorbed one, the emitted power per watt of blue
  is ``a_k * QE_k * <E_k> / <E_blue>`` with ``<E>`` the mean photon energy of a band.
  The blue that leaves the package is ``1 - sum(a_k)`` of the die's output.
* **Mixing.**  The spectrum is linear in the absorbed fractions, and so is XYZ;
  asking the chromaticity to be a given CIE 1960 (u, v) is two linear equations
  in the two free fractions (yellow and red; a green phosphor, where used, is
  loaded in a fixed proportion to the yellow).  They are solved exactly, so each
  design lands on its target CCT and Duv (converted to uv with
  :func:`cctkit.locus.uv_from_cct_duv`) up to the measurement noise.
* **Instrument.**  The emitted spectrum, computed on a 0.1 nm grid, is convolved
  with the spectrometer's triangular bandpass, sampled on its wavelength grid,
  given Gaussian dark noise plus signal-dependent (shot) noise from a seeded
  generator, and rounded to five significant digits of the peak.  The design
  solve uses the noise-free *measured* spectrum brought to the working grid, so
  the bandpass and the resampling do not bias the targets.

Outputs are deterministic: the same code, numpy and tables give the same bytes.
Run ``python -m cctkit.demo --out spectra --overwrite`` to regenerate the
committed files.
"""

from __future__ import annotations

import argparse
import json
import sys
from collections.abc import Sequence
from dataclasses import dataclass, replace
from pathlib import Path

import numpy as np

from .constants import KM_LM_PER_W
from .errors import CctkitError, InputError

__all__ = [
    "BlueDie",
    "Phosphor",
    "WhiteLed",
    "Instrument",
    "DemoFile",
    "PRODUCTS",
    "TUNABLE_SET_POINTS_K",
    "WASH_CHANNELS",
    "WASH_FILE",
    "WASH_POWER_FILE",
    "LOT_SIZE",
    "FINE_WAVELENGTH_NM",
    "die_shape",
    "phosphor_shape",
    "led_components",
    "led_spectrum",
    "solve_absorbed_fractions",
    "design_chromaticity",
    "demo_files",
    "write_demo",
    "main",
]

#: h c expressed in eV nm (CODATA 2018 h, c and e, all exact).
HC_EV_NM = 1239.841984

#: The model's fine wavelength grid [nm]: 330-870 nm at 0.1 nm (wider than every
#: instrument range plus its bandpass, so the convolution has no edge effects).
FINE_WAVELENGTH_NM = np.arange(3300, 8701) / 10.0
FINE_WAVELENGTH_NM.setflags(write=False)
_FINE_STEP_NM = 0.1

#: Energy gap between the Ce3+ 4f ground levels 2F5/2 and 2F7/2 [eV] (about 2000 cm^-1,
#: a textbook figure for Ce3+ in garnets) -- from memory.
CE_DOUBLET_SPLIT_EV = 0.248

#: The generator's fixed base seed; each file adds its own index.
BASE_SEED = 7301

LOT_SIZE = 24
TUNABLE_SET_POINTS_K = (2700, 3500, 4500, 5700, 6500)

_NOTICE = "synthetic demonstration data made by cctkit.demo -- not a real product and not a real measurement"


# --------------------------------------------------------------------------- physical model


@dataclass(frozen=True)
class BlueDie:
    """An InGaN blue die.

    Attributes
    ----------
    peak_nm
        Wavelength of the emission maximum [nm].
    fwhm_nm
        Full width at half maximum, measured on the wavelength axis [nm].
    asymmetry
        Ratio of the low-energy to the high-energy half width [1].
    """

    peak_nm: float = 450.0
    fwhm_nm: float = 20.0
    asymmetry: float = 1.6


@dataclass(frozen=True)
class Phosphor:
    """A phosphor emission band, Gaussian in photon energy.

    Attributes
    ----------
    name
        Label used in file comments.
    peak_nm
        Wavelength of the (main) emission component [nm].
    fwhm_eV
        Full width at half maximum of each Gaussian component [eV].
    quantum_efficiency
        Photons emitted per blue photon absorbed [1].
    doublet_ratio
        Strength of the second (lower-energy) component of a Ce3+ doublet relative
        to the first; 0 for a single band [1].
    """

    name: str
    peak_nm: float
    fwhm_eV: float
    quantum_efficiency: float = 0.95
    doublet_ratio: float = 0.0


@dataclass(frozen=True)
class WhiteLed:
    """A phosphor-converted white LED design with its targets.

    The yellow and red absorbed fractions are solved for the target chromaticity;
    the green one, if any, is ``green_per_yellow`` times the yellow one.
    """

    name: str
    cct_K: float
    duv: float
    die: BlueDie
    yellow: Phosphor
    red: Phosphor
    green: Phosphor | None = None
    green_per_yellow: float = 0.0


@dataclass(frozen=True)
class Instrument:
    """A (simulated) spectroradiometer.

    Attributes
    ----------
    start_nm, stop_nm, step_nm
        Output wavelength grid [nm].
    bandpass_nm
        FWHM of the triangular slit function [nm].
    dark_noise
        Standard deviation of the additive dark noise, relative to the spectrum's peak [1].
    shot_noise
        Signal-dependent noise: standard deviation ``shot_noise * sqrt(peak * value)`` [1].
    description
        One line for the file comment.
    """

    start_nm: float
    stop_nm: float
    step_nm: float
    bandpass_nm: float
    dark_noise: float
    shot_noise: float
    description: str

    @property
    def wavelength_nm(self) -> np.ndarray:
        n = int(round((self.stop_nm - self.start_nm) / self.step_nm)) + 1
        return self.start_nm + self.step_nm * np.arange(n)


def _gauss_energy(wavelength_nm: np.ndarray, peak_nm: float, fwhm_eV) -> np.ndarray:
    """A Gaussian in photon energy, expressed per nm (times the Jacobian dE/dlambda = hc/lambda^2)."""
    E = HC_EV_NM / wavelength_nm
    sigma = np.asarray(fwhm_eV) / (2.0 * np.sqrt(2.0 * np.log(2.0)))
    return np.exp(-0.5 * ((E - HC_EV_NM / peak_nm) / sigma) ** 2) * HC_EV_NM / wavelength_nm**2


def _unit_power(shape: np.ndarray) -> np.ndarray:
    return shape / (shape.sum() * _FINE_STEP_NM)


def die_shape(die: BlueDie, wavelength_nm: np.ndarray = FINE_WAVELENGTH_NM) -> np.ndarray:
    """Spectral power of the blue die, normalised to 1 W on the fine grid [W/nm]."""
    E = HC_EV_NM / wavelength_nm
    E0 = HC_EV_NM / die.peak_nm
    fwhm_eV = HC_EV_NM * die.fwhm_nm / die.peak_nm**2  # small-width conversion
    half_high = fwhm_eV / (1.0 + die.asymmetry)
    half_low = fwhm_eV - half_high
    sigma = np.where(E >= E0, half_high, half_low) / np.sqrt(2.0 * np.log(2.0))
    return _unit_power(np.exp(-0.5 * ((E - E0) / sigma) ** 2) * HC_EV_NM / wavelength_nm**2)


def phosphor_shape(phosphor: Phosphor, wavelength_nm: np.ndarray = FINE_WAVELENGTH_NM) -> np.ndarray:
    """Spectral power of a phosphor band, normalised to 1 W on the fine grid [W/nm]."""
    shape = _gauss_energy(wavelength_nm, phosphor.peak_nm, phosphor.fwhm_eV)
    if phosphor.doublet_ratio:
        second_nm = HC_EV_NM / (HC_EV_NM / phosphor.peak_nm - CE_DOUBLET_SPLIT_EV)
        shape = shape + phosphor.doublet_ratio * _gauss_energy(wavelength_nm, second_nm, phosphor.fwhm_eV)
    return _unit_power(shape)


def _mean_photon_energy_eV(shape: np.ndarray, wavelength_nm: np.ndarray = FINE_WAVELENGTH_NM) -> float:
    return float(shape.sum() / (shape * wavelength_nm / HC_EV_NM).sum())


def _phosphors(led: WhiteLed) -> tuple[Phosphor, ...]:
    return (led.yellow, led.red) + ((led.green,) if led.green is not None else ())


def led_components(led: WhiteLed) -> np.ndarray:
    """Basis spectra per watt of blue: row 0 the die, then one row per phosphor per unit absorbed fraction.

    Row ``k >= 1`` is ``QE_k * <E_k>/<E_blue> * shape_k - shape_blue``: what one unit of
    absorbed fraction adds (converted light) and takes away (blue), shape (1 + P, L_fine) [W/nm].
    """
    blue = die_shape(led.die)
    e_blue = _mean_photon_energy_eV(blue)
    rows = [blue]
    for ph in _phosphors(led):
        shape = phosphor_shape(ph)
        stokes = _mean_photon_energy_eV(shape) / e_blue
        rows.append(ph.quantum_efficiency * stokes * shape - blue)
    return np.stack(rows)


def led_spectrum(led: WhiteLed, absorbed: Sequence[float] | np.ndarray, blue_W: float = 1.0) -> np.ndarray:
    """Emitted spectrum on the fine grid for the given absorbed fractions [W/nm]."""
    basis = led_components(led)
    weights = np.concatenate([[1.0], np.asarray(absorbed, dtype=np.float64)])
    return blue_W * (weights @ basis)


# --------------------------------------------------------------------------- instrument


def _slit_kernel(bandpass_nm: float) -> np.ndarray:
    half = int(round(bandpass_nm / _FINE_STEP_NM))
    k = 1.0 - np.abs(np.arange(-half, half + 1)) / (half + 1)
    return k / k.sum()


def _measure_noise_free(spectra_fine: np.ndarray, instrument: Instrument) -> np.ndarray:
    """Slit convolution and sampling, (..., L_fine) -> (..., L_instrument) [same unit]."""
    kernel = _slit_kernel(instrument.bandpass_nm)
    rows = np.atleast_2d(spectra_fine)
    conv = np.stack([np.convolve(r, kernel, mode="same") for r in rows])
    idx = np.rint((instrument.wavelength_nm - FINE_WAVELENGTH_NM[0]) / _FINE_STEP_NM).astype(int)
    out = conv[:, idx]
    return out.reshape(np.shape(spectra_fine)[:-1] + (idx.size,))


def _working_XYZ(measured: np.ndarray, instrument: Instrument) -> np.ndarray:
    """Plain-summation XYZ (CIE 15:2018) of instrument-grid spectra after resampling to the working grid."""
    from .colorimetry import XYZ
    from .spectra import Spectra, to_working_grid

    rows = np.atleast_2d(measured)
    sp = to_working_grid(Spectra(instrument.wavelength_nm, rows, names=tuple(str(i) for i in range(len(rows)))))
    return XYZ(sp.values)


def _add_noise(measured: np.ndarray, instrument: Instrument, rng: np.random.Generator) -> np.ndarray:
    peak = float(np.max(measured))
    sigma = np.sqrt((instrument.dark_noise * peak) ** 2 + instrument.shot_noise**2 * peak * np.clip(measured, 0, None))
    return measured + sigma * rng.standard_normal(measured.shape)


def _decimals(peak: float, significant: int = 5) -> int:
    return max(0, significant - 1 - int(np.floor(np.log10(peak))))


# --------------------------------------------------------------------------- solving designs


def solve_absorbed_fractions(led: WhiteLed, instrument: Instrument) -> np.ndarray:
    """Absorbed fractions (yellow, red[, green]) that put ``led`` on its target CCT and Duv.

    The condition ``uv = target`` is ``4X - u D = 0`` and ``6Y - v D = 0`` with
    ``D = X + 15Y + 3Z``; both are linear in the fractions, so a 2x2 solve is exact.

    Raises
    ------
    CctkitError
        When the target cannot be reached with fractions in [0, 1).
    """
    from .locus import uv_from_cct_duv

    u, v = uv_from_cct_duv(led.cct_K, led.duv)
    basis = led_components(led)
    if led.green is not None:  # the green loading follows the yellow one
        basis = np.stack([basis[0], basis[1] + led.green_per_yellow * basis[3], basis[2]])
    X, Y, Z = _working_XYZ(_measure_noise_free(basis, instrument), instrument).T
    D = X + 15.0 * Y + 3.0 * Z
    g = np.stack([4.0 * X - u * D, 6.0 * Y - v * D])  # (2, 1 + 2)
    a = np.linalg.solve(g[:, 1:], -g[:, 0])
    fractions = a if led.green is None else np.array([a[0], a[1], led.green_per_yellow * a[0]])
    if np.any(fractions < 0) or fractions.sum() >= 1.0:
        raise CctkitError(
            f"design {led.name!r}: target {led.cct_K:g} K / Duv {led.duv:+g} needs "
            f"absorbed fractions {np.round(fractions, 4).tolist()} outside [0, 1)"
        )
    return fractions


def design_chromaticity(led: WhiteLed, fractions: Sequence[float], instrument: Instrument) -> tuple[float, float]:
    """(CCT [K], Duv) of the noise-free measured design, by :func:`cctkit.cct.cct_duv`."""
    from .cct import cct_duv
    from .colorimetry import XYZ_to_uv

    measured = _measure_noise_free(led_spectrum(led, fractions), instrument)
    result = cct_duv(XYZ_to_uv(_working_XYZ(measured, instrument)))
    return float(result.cct_K[0]), float(result.duv[0])


def _luminous_per_unit(measured: np.ndarray, instrument: Instrument) -> np.ndarray:
    """Photopic total per spectrum: Km * sum(V * S) on the working grid [lm, or lx for irradiance]."""
    return KM_LM_PER_W * _working_XYZ(measured, instrument)[:, 1]


# --------------------------------------------------------------------------- the scenario

_YAG = Phosphor("YAG:Ce-type yellow garnet", 548.0, 0.30, 0.95, doublet_ratio=0.55)
_LUAG = Phosphor("LuAG:Ce-type green garnet", 520.0, 0.30, 0.93, doublet_ratio=0.55)
_NITRIDE_DEEP = Phosphor("CaAlSiN3:Eu-type nitride red", 630.0, 0.24, 0.90)

#: The candidate products: design, target luminous flux [lm], instrument key, supplier.
PRODUCTS: dict[str, dict] = {
    "NB-3000-95": {
        "supplier": "Northbeam Lighting",
        # Binned to the IEC 60081 Annex D F3000 lamp-colour centre x = 0.440, y = 0.403 (from memory),
        # which is 2940 K, Duv -0.0008; the 3-SDCM check of the lot is made around that centre.
        "design": WhiteLed(
            "NB-3000-95", 2940.0, -0.0008, BlueDie(450.0, 20.0), _YAG, _NITRIDE_DEEP, green=_LUAG, green_per_yellow=1.0
        ),
        "flux_lm": 1265.0,
        "instrument": "sphere-1nm",
        "file": "northbeam-nb-3000-95.csv",
    },
    "CL-2700-80": {
        "supplier": "Caldera Luminaires",
        "design": WhiteLed(
            "CL-2700-80",
            2700.0,
            0.0015,
            BlueDie(452.0, 21.0),
            Phosphor("YAG:Ce-type yellow garnet, broad", 552.0, 0.36, 0.95, doublet_ratio=0.55),
            Phosphor("(Sr,Ca)AlSiN3:Eu-type nitride red, short", 620.0, 0.22, 0.88),
        ),
        "flux_lm": 1310.0,
        "instrument": "sphere-5nm",
        "file": "caldera-cl-2700-80.csv",
    },
    "VO-4000-90": {
        "supplier": "Vell Optics",
        "design": WhiteLed(
            "VO-4000-90",
            4000.0,
            0.001,
            BlueDie(449.0, 19.0),
            replace(_YAG, peak_nm=552.0),
            replace(_NITRIDE_DEEP, peak_nm=628.0),
            green=replace(_LUAG, peak_nm=515.0),
            green_per_yellow=0.9,
        ),
        "flux_lm": 1280.0,
        "instrument": "sphere-1nm",
        "file": "vell-vo-4000-90.csv",
    },
}

INSTRUMENTS: dict[str, Instrument] = {
    "sphere-1nm": Instrument(
        380.0, 780.0, 1.0, 2.0, 1.5e-4, 4e-4, "integrating sphere with array spectroradiometer, 2.0 nm bandpass"
    ),
    "sphere-5nm": Instrument(
        360.0, 830.0, 5.0, 5.0, 1.5e-4, 4e-4, "integrating sphere with scanning spectroradiometer, 5 nm bandpass"
    ),
    "lab-0.5nm": Instrument(
        350.0, 800.0, 0.5, 1.5, 2.0e-4, 5e-4, "cosine-corrected irradiance head at 2.00 m on axis, 1.5 nm bandpass"
    ),
}

#: TW-Lab channels: warm, cool and a mint (above-locus) channel that pulls the mix onto the locus.
TUNABLE_CHANNELS = (
    WhiteLed(
        "TW-Lab warm",
        2550.0,
        0.0,
        BlueDie(452.0, 20.0),
        replace(_YAG, peak_nm=552.0),
        replace(_NITRIDE_DEEP, peak_nm=632.0),
    ),
    WhiteLed(
        "TW-Lab cool",
        7000.0,
        0.0,
        BlueDie(448.0, 19.0),
        replace(_YAG, peak_nm=545.0),
        replace(_NITRIDE_DEEP, peak_nm=628.0),
        green=_LUAG,
        green_per_yellow=0.5,
    ),
    WhiteLed(
        "TW-Lab mint",
        5000.0,
        0.03,
        BlueDie(450.0, 20.0),
        replace(_YAG, peak_nm=550.0),
        replace(_NITRIDE_DEEP, peak_nm=630.0),
        green=replace(_LUAG, peak_nm=525.0),
        green_per_yellow=2.0,
    ),
)
#: Illuminance the fixture's controller holds at each set point, on axis at 2 m [lx].
TUNABLE_ILLUMINANCE_LX = (480.0, 495.0, 505.0, 510.0, 500.0)
TUNABLE_DUV = 0.0


#: HL-Wash5: a five-channel stage-wash fixture of the hall, each channel measured alone at full
#: drive in the sphere.  Per channel: (name, kind, design, radiant output of the die at full drive [W],
#: wall-plug efficiency of the die [1]).  Direct emitters use the split-Gaussian die model; the
#: phosphor-converted ones are WhiteLed designs (the lime one with a fixed, nearly full conversion).
WASH_FILE = "hl-wash5/hl-wash5-channels.csv"
WASH_POWER_FILE = "hl-wash5/hl-wash5-power.csv"
_LIME = WhiteLed(
    "HL-Wash5 lime",
    0.0,
    0.0,
    BlueDie(450.0, 20.0),
    Phosphor("LuAG/YAG:Ce-type green-yellow garnet", 552.0, 0.30, 0.95, doublet_ratio=0.55),
    _NITRIDE_DEEP,
)
WASH_CHANNELS: tuple[tuple[str, str, BlueDie | WhiteLed, float, float], ...] = (
    ("royal blue", "direct", BlueDie(447.0, 18.0, 1.6), 1.10, 0.55),
    (
        "warm white",
        "converted",
        WhiteLed(
            "HL-Wash5 warm white",
            2200.0,
            0.0,
            BlueDie(452.0, 20.0),
            replace(_YAG, peak_nm=556.0),
            replace(_NITRIDE_DEEP, peak_nm=634.0),
        ),
        1.40,
        0.50,
    ),
    (
        "cool white",
        "converted",
        WhiteLed(
            "HL-Wash5 cool white",
            7200.0,
            -0.002,
            BlueDie(448.0, 19.0),
            replace(_YAG, peak_nm=545.0),
            replace(_NITRIDE_DEEP, peak_nm=626.0),
            green=_LUAG,
            green_per_yellow=0.6,
        ),
        1.40,
        0.50,
    ),
    ("lime", "lime", _LIME, 1.40, 0.48),
    ("red", "direct", BlueDie(626.0, 17.0, 1.2), 0.80, 0.34),
)
#: Absorbed fractions (green-yellow, red) of the lime channel: nearly full conversion.
_LIME_ABSORBED = (0.99, 0.0)


def _wash_measurement() -> tuple[np.ndarray, dict[str, np.ndarray], dict[str, float], Instrument]:
    """HL-Wash5 channels at full drive: radiant flux [W/nm] and electrical power [W] per channel."""
    inst = INSTRUMENTS["sphere-1nm"]
    rng = np.random.default_rng((BASE_SEED, 300))
    columns: dict[str, np.ndarray] = {}
    power: dict[str, float] = {}
    for name, kind, design, die_W, wall_plug in WASH_CHANNELS:
        if isinstance(design, BlueDie):  # kind "direct"
            fine = die_W * die_shape(design)
        elif kind == "lime":
            fine = led_spectrum(design, _LIME_ABSORBED, die_W)
        else:
            fine = led_spectrum(design, solve_absorbed_fractions(design, inst), die_W)
        columns[name] = _add_noise(_measure_noise_free(fine, inst), inst, rng)
        power[name] = round(die_W / wall_plug, 2)
    return inst.wavelength_nm, columns, power, inst


@dataclass(frozen=True)
class DemoFile:
    """One generated file: its path relative to the output folder and its bytes."""

    relpath: str
    data: bytes


def _comment_block(lines: Sequence[str]) -> str:
    return "".join(f"# {line}\n" for line in lines)


def _csv_text(
    wavelength_nm: np.ndarray,
    columns: dict[str, np.ndarray],
    *,
    quantity: str,
    unit: str,
    comments: Sequence[str],
    wl_decimals: int,
) -> str:
    names = list(columns)
    values = np.stack([columns[n] for n in names], axis=1)
    dec = _decimals(float(np.max(values)))
    values = np.round(values, dec) + 0.0  # + 0.0 turns -0.0 into 0.0
    head = _comment_block([_NOTICE, *comments, f"quantity: {quantity}", f"unit: {unit}"])
    header = ",".join(["wavelength_nm", *names]) + "\n"
    body = "".join(
        f"{w:.{wl_decimals}f}," + ",".join(f"{x:.{dec}f}" for x in row) + "\n" for w, row in zip(wavelength_nm, values)
    )
    return head + header + body


def _product_measurement(key: str, index: int) -> tuple[np.ndarray, np.ndarray, Instrument]:
    """(wavelength, noisy measured radiant flux [W/nm], instrument) of one candidate product."""
    spec = PRODUCTS[key]
    inst = INSTRUMENTS[spec["instrument"]]
    led = spec["design"]
    fractions = solve_absorbed_fractions(led, inst)
    clean = _measure_noise_free(led_spectrum(led, fractions), inst)
    scale = spec["flux_lm"] / _luminous_per_unit(clean, inst)[0]
    rng = np.random.default_rng((BASE_SEED, index))
    return inst.wavelength_nm, _add_noise(scale * clean, inst, rng), inst


def _lot_units() -> list[tuple[str, np.ndarray, str]]:
    """The 24 delivered NB-3000-95 units: (name, measured W/nm, production note)."""
    spec = PRODUCTS["NB-3000-95"]
    inst = INSTRUMENTS[spec["instrument"]]
    nominal: WhiteLed = spec["design"]
    fractions0 = solve_absorbed_fractions(nominal, inst)
    blue_W = spec["flux_lm"] / _luminous_per_unit(_measure_noise_free(led_spectrum(nominal, fractions0), inst), inst)[0]
    rng = np.random.default_rng((BASE_SEED, 100))
    n = LOT_SIZE
    # Unit-to-unit spread of an in-control process (standard deviations): die binned to 447.5-452.5 nm.
    die_peak = np.clip(nominal.die.peak_nm + 1.0 * rng.standard_normal(n), 447.5, 452.5)
    die_fwhm = nominal.die.fwhm_nm + 0.4 * rng.standard_normal(n)
    load_yellow = 1.0 + 0.003 * rng.standard_normal(n)
    load_red = 1.0 + 0.003 * rng.standard_normal(n)
    red_shift_nm = 0.7 * rng.standard_normal(n)
    power = 1.0 + 0.012 * rng.standard_normal(n)
    notes = ["in-control production"] * n
    # Production excursions that an acceptance check should catch (indices are 0-based).
    load_yellow[4] *= 1.04
    notes[4] = "yellow and green phosphor over-dispensed"
    load_yellow[15] *= 0.975
    load_red[15] *= 0.975
    notes[15] = "phosphor under-dispensed"
    red_shift_nm[10] -= 7.0
    load_red[10] *= 0.99
    load_yellow[10] *= 0.995
    notes[10] = "red phosphor from a short-wavelength batch"
    power[18] *= 0.935
    notes[18] = "die from a low radiant-power bin"
    power[22] *= 0.93
    notes[22] = "die from a low radiant-power bin"
    units = []
    for i in range(n):
        led = replace(
            nominal,
            die=replace(nominal.die, peak_nm=float(die_peak[i]), fwhm_nm=float(die_fwhm[i])),
            red=replace(nominal.red, peak_nm=nominal.red.peak_nm + float(red_shift_nm[i])),
        )
        fr = fractions0 * np.array([load_yellow[i], load_red[i], load_yellow[i]])
        clean = _measure_noise_free(led_spectrum(led, fr, blue_W * float(power[i])), inst)
        units.append((f"NB-3000-95-U{i + 1:02d}", _add_noise(clean, inst, rng), notes[i]))
    return units


def _tunable_measurement() -> tuple[np.ndarray, dict[str, np.ndarray], Instrument]:
    """TW-Lab at its set points: irradiance on axis at 2 m [W/(m^2 nm)]."""
    from .colorimetry import uv_to_xy, xy_to_XYZ
    from .locus import uv_from_cct_duv

    inst = INSTRUMENTS["lab-0.5nm"]
    channels = np.stack(
        [_measure_noise_free(led_spectrum(ch, solve_absorbed_fractions(ch, inst)), inst) for ch in TUNABLE_CHANNELS]
    )
    M = _working_XYZ(channels, inst).T  # (3 tristimulus, 3 channels)
    uv = uv_from_cct_duv(np.asarray(TUNABLE_SET_POINTS_K, dtype=np.float64), TUNABLE_DUV)
    Y = np.asarray(TUNABLE_ILLUMINANCE_LX) / KM_LM_PER_W
    target = xy_to_XYZ(uv_to_xy(uv), Y).T  # (3, S)
    drive = np.linalg.solve(M, target)  # channel drives, (3 channels, S)
    if np.any(drive < 0):
        raise CctkitError("TW-Lab: a set point lies outside the channel gamut")
    rng = np.random.default_rng((BASE_SEED, 200))
    columns = {}
    for j, T in enumerate(TUNABLE_SET_POINTS_K):
        clean = drive[:, j] @ channels
        columns[f"TW-Lab {T}K"] = _add_noise(clean, inst, rng)
    return inst.wavelength_nm, columns, inst


def _json_document(
    name: str,
    wavelength_nm: np.ndarray,
    values: np.ndarray,
    *,
    quantity: str,
    unit: str,
    comment: str,
    spectrum_comment: str,
) -> str:
    """The cctkit spectra JSON layout (see :mod:`cctkit.readers.jsonfile`), values rounded like the CSV."""
    dec = _decimals(float(np.max(values)))
    wl = [int(w) if float(w).is_integer() else float(w) for w in wavelength_nm]
    vals = ", ".join(f"{x:.{dec}f}" for x in np.round(values, dec) + 0.0)
    spectrum = f'{{"name": {json.dumps(name)}, "comment": {json.dumps(spectrum_comment)},\n   "values": [{vals}]}}'
    return (
        "{\n"
        f' "comment": {json.dumps(comment)},\n'
        f' "quantity": {json.dumps(quantity)},\n'
        f' "unit": {json.dumps(unit)},\n'
        f' "wavelength_nm": {json.dumps(wl)},\n'
        f' "spectra": [\n  {spectrum}\n ]\n'
        "}\n"
    )


def demo_files() -> list[DemoFile]:
    """Every file of the demonstration data, in a fixed order (pure; writes nothing)."""
    files: list[DemoFile] = []
    for index, key in enumerate(PRODUCTS):
        spec = PRODUCTS[key]
        wl, values, inst = _product_measurement(key, index)
        comments = [
            "scenario: Harbourside Lantern Hall downlight selection (fictional)",
            f"supplier: {spec['supplier']} (fictional); product: {key}",
            f"instrument: {inst.description} (simulated)",
            f"range: {inst.start_nm:g}-{inst.stop_nm:g} nm, step {inst.step_nm:g} nm",
        ]
        wl_dec = 0 if float(inst.step_nm).is_integer() else 1
        text = _csv_text(wl, {key: values}, quantity="radiant-flux", unit="W/nm", comments=comments, wl_decimals=wl_dec)
        files.append(DemoFile(spec["file"], text.encode("utf-8")))
        if key == "VO-4000-90":
            doc = _json_document(
                key,
                wl,
                values,
                quantity="radiant-flux",
                unit="W/nm",
                comment=_NOTICE,
                spectrum_comment=f"{spec['supplier']} (fictional) {key} downlight; {inst.description} (simulated)",
            )
            files.append(DemoFile(spec["file"].replace(".csv", ".json"), doc.encode("utf-8")))
    wl, columns, inst = _tunable_measurement()
    comments = [
        "scenario: Harbourside Lantern Hall lighting lab (fictional)",
        "fixture: TW-Lab tunable-white downlight, one column per colour-temperature set point",
        f"instrument: {inst.description} (simulated)",
        f"range: {inst.start_nm:g}-{inst.stop_nm:g} nm, step {inst.step_nm:g} nm",
    ]
    text = _csv_text(wl, columns, quantity="irradiance", unit="W/(m^2 nm)", comments=comments, wl_decimals=1)
    files.append(DemoFile("tw-lab-setpoints.csv", text.encode("utf-8")))
    wl, columns, power, inst = _wash_measurement()
    comments = [
        "scenario: Harbourside Lantern Hall stage-wash fixture (fictional)",
        "fixture: HL-Wash5, five channels, each measured alone at full drive, one column per channel",
        f"instrument: {inst.description} (simulated)",
        f"range: {inst.start_nm:g}-{inst.stop_nm:g} nm, step {inst.step_nm:g} nm",
    ]
    text = _csv_text(wl, columns, quantity="radiant-flux", unit="W/nm", comments=comments, wl_decimals=0)
    files.append(DemoFile(WASH_FILE, text.encode("utf-8")))
    power_text = _comment_block([_NOTICE, "HL-Wash5 electrical power per channel at full drive (simulated)"])
    power_text += "channel,power_W\n" + "".join(f"{k},{v:.2f}\n" for k, v in power.items())
    files.append(DemoFile(WASH_POWER_FILE, power_text.encode("utf-8")))
    inst = INSTRUMENTS["sphere-1nm"]
    for name, values, _note in _lot_units():
        comments = [
            "scenario: Harbourside Lantern Hall procurement lot of NB-3000-95 (fictional)",
            f"supplier: Northbeam Lighting (fictional); unit: {name}",
            f"instrument: {inst.description} (simulated)",
            f"range: {inst.start_nm:g}-{inst.stop_nm:g} nm, step {inst.step_nm:g} nm",
        ]
        text = _csv_text(
            inst.wavelength_nm, {name: values}, quantity="radiant-flux", unit="W/nm", comments=comments, wl_decimals=0
        )
        files.append(DemoFile(f"lot-nb3000/{name.lower()}.csv", text.encode("utf-8")))
    return files


def write_demo(folder: str | Path, *, overwrite: bool = False) -> list[Path]:
    """Generate the demonstration files into ``folder`` (created if missing).

    Every target is checked before anything is written, so a refusal leaves the
    folder as it was; each file is written atomically.

    Raises
    ------
    InputError
        When a target file exists and ``overwrite`` is false, or ``folder`` is a file.
    """
    from .safe_io import atomic_write, check_output_path

    root = Path(folder)
    if root.exists() and not root.is_dir():
        raise InputError("output folder is not a directory", source=str(root))
    files = demo_files()
    for f in files:
        target = root / f.relpath
        if target.exists():
            check_output_path(target, overwrite=overwrite)
    written = []
    for f in files:
        target = root / f.relpath
        target.parent.mkdir(parents=True, exist_ok=True)
        written.append(atomic_write(target, f.data, overwrite=overwrite))
    return written


def main(argv: Sequence[str] | None = None) -> int:
    """``python -m cctkit.demo [--out FOLDER] [--overwrite]``."""
    parser = argparse.ArgumentParser(
        prog="python -m cctkit.demo", description="Regenerate the synthetic demonstration spectra."
    )
    parser.add_argument("--out", default="spectra", help="output folder (default: spectra)")
    parser.add_argument("--overwrite", action="store_true", help="replace existing files")
    args = parser.parse_args(argv)
    try:
        written = write_demo(args.out, overwrite=args.overwrite)
    except CctkitError as exc:
        print(f"cctkit.demo: {exc}", file=sys.stderr)
        return 2
    print(f"wrote {len(written)} files to {args.out}", file=sys.stderr)
    return 0


if __name__ == "__main__":
    sys.exit(main())
