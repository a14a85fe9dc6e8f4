"""Measurement uncertainty of every reported number: Monte Carlo (JCGM 101) and the GUM law (JCGM 100).

A lab describes its spectroradiometer once, in a small TOML *model file*; every
measure of :func:`cctkit.analysis.analyse` then gets a value, a standard
uncertainty u, an expanded uncertainty U = k u (k = 2) and a 95 % coverage
interval.  The results characterise the measurement *as modelled*: they are as
good as the model, and an accredited laboratory's own uncertainty budget governs.

The model file
--------------
Every table is optional; a table left out is a component that is absent.
Table and key names are fixed so that model files can be exchanged::

    [scale]          # fully correlated across wavelength (calibration transfer)
    u_rel = 0.010
    [calibration]    # smooth, partly correlated across wavelength
    u_rel = 0.015
    correlation_nm = 60
    [wavelength]
    offset_u_nm = 0.20   # fully correlated shift of the wavelength scale
    jitter_u_nm = 0.05   # independent per measured point
    [bandwidth]
    fwhm_nm = 2.0
    fwhm_u_nm = 0.2
    [noise]          # uncorrelated per measured point
    u_rel = 0.005
    floor = 0.0      # absolute, in the spectral unit of the quantity (W/nm, W/(m^2 nm), ...)
    [nonlinearity]   # detector response not proportional to the signal
    u_rel = 0.002
    [stray_light]    # spectrally flat pedestal, relative to the spectrum's mean
    u_rel = 0.001
    [montecarlo]
    draws = "adaptive"   # or a number of draws M
    tolerance_digits = 2 # JCGM 101 section 7.9: significant digits of u to stabilise
    seed = 1
    block = 10000        # draws per stage of the adaptive procedure
    max_draws = 200000   # the adaptive procedure stops here if not yet stable

Mathematical model of each component
------------------------------------
The measured spectrum is S_j = S(lambda_j) on the instrument's own grid
lambda_j, j = 1..L.  One Monte Carlo draw replaces it by

    S*_j = [ S_j - e_j S'_j + e_j^2 S''_j / 2 + c S''_j ]
           x (1 + a) x (1 + sum_k b_k phi_k(lambda_j)) x (1 + g S_j / max S)
           + h mean(S) + sigma_j z_j

with, after CIE 198-SP2:2018 (spectral measurements and their correlations):

* **scale** -- a ~ N(0, u_scale^2), one number per draw: the same relative
  error at every wavelength (fully correlated).  Every relative measure
  (chromaticity, CCT, Duv, Ra, Rf, LER, DER) is invariant to it; absolute
  totals scale with it.
* **calibration** -- a smooth random function of wavelength: a zero-mean
  Gaussian process with standard deviation u_cal at every wavelength and
  correlation rho(l1, l2) = exp(-(l1 - l2)^2 / (2 ell^2)), ell =
  ``correlation_nm``.  It is drawn from the eigen-decomposition of the
  correlation matrix on the measured grid, phi_k = sqrt(mu_k) q_k, keeping the
  eigenvalues above 1e-10 of the largest (the few smooth basis functions that
  carry the correlation), b_k ~ N(0, u_cal^2).
* **wavelength** -- the value reported at lambda_j was taken at lambda_j + e_j,
  e_j = d + t_j with an offset d ~ N(0, u_off^2) common to all points (fully
  correlated) and a jitter t_j ~ N(0, u_jit^2) independent per point.  The
  spectrum at the nominal wavelength is then S(lambda_j - e_j), taken to second
  order in e_j: S_j - e_j S'_j + e_j^2 S''_j / 2, with S' and S'' from
  second-order finite differences on the measured grid.
* **bandwidth** -- the instrument convolves the spectrum with its slit function,
  here a triangle of FWHM b, whose variance is b^2 / 6.  To second order in the
  slit width, convolution adds (variance / 2) S''.  A slit of FWHM b + beta,
  beta ~ N(0, u_b^2), instead of the stated b changes the measured spectrum by
  c S'' with c = ((b + beta)^2 - b^2) / 12.
* **noise** -- sigma_j = sqrt((u_noise S_j)^2 + floor^2), z_j ~ N(0, 1)
  independent per measured point, on the measured grid before resampling.
* **nonlinearity** -- g ~ N(0, u_nl^2), one per draw: the relative error of a
  reading grows linearly with its level, zero at no signal and g at the peak.
* **stray_light** -- h ~ N(0, u_sl^2), one per draw: a flat pedestal of h times
  the spectrum's mean value (stray light left after, or for want of, a correction).
* **type A** from n repeat scans (the spectra of the input taken as repeats of
  one source): the mean spectrum replaces S, and each draw adds
  sqrt(nu / w) sum_r z_r (S_r - mean) / sqrt(n (n - 1)), z_r ~ N(0, 1),
  w ~ chi^2_nu, nu = n - 1: a draw of the multivariate t distribution of
  JCGM 101 section 6.4.9 for the mean of n observations (covariance
  nu / (nu - 2) x s^2 / n), without ever forming the L x L covariance.
  At least 4 repeats are needed for a finite variance.

The draws then take the path every spectrum takes: the same resampling to the
working grid (:func:`cctkit.spectra.to_working_grid`) and the same vectorised
:func:`cctkit.analysis.analyse`, chunk by chunk (no Python loop over draws).

Propagation
-----------
*Monte Carlo* (JCGM 101:2008): for each spectrum, M draws; the estimate is the
value of the measured spectrum (as ``inspect`` reports it) and, beside it, the
mean of the draws; u is the standard deviation of the draws (section 7.6);
the 95 % interval is the probabilistically symmetric one (section 7.7).
With ``draws = "adaptive"`` the procedure of section 7.9.4 runs stages of
``block`` draws (at least 10^4 is the clause's choice) until, for every
continuous measure, twice the standard deviation of the stage averages of y, u
and both interval ends is at most the numerical tolerance delta = 10^l / 2
of ``tolerance_digits`` significant digits of u (section 7.9.2); M is reported.

*GUM law of propagation* (JCGM 100:2008 section 5.1) for the chromaticity
measures: each component above, linearised, is a covariance of the measured
spectrum of the form F F^T (scale, calibration, offset, bandwidth,
nonlinearity, stray light, type A) or diag(d) (noise, jitter); with B the
sensitivity of the tristimulus sums to the measured values (the resampling
matrix times the colour-matching functions, B = R^T W),
cov(XYZ) = sum (B^T F)(B^T F)^T + B^T diag(d) B = W^T Sigma W, and analytic
Jacobians carry it to x y, u v, u' v' (CIE 15:2018 eqs. 7.3 and 8.1), and on
to CCT and Duv by implicit differentiation of the nearest-point condition
(uv - P(T)) . P'(T) = 0:  dT/d(uv) = P'^T / (|P'|^2 - (uv - P) . P''),
dDuv/d(uv) = n (the unit normal of the locus).  P' is the exact derivative of
the locus; P'' its central difference.  Beside the Monte Carlo u, the GUM u
shows where linearisation fails (JCGM 101 section 8).
"""

from __future__ import annotations

import hashlib
import math
import tomllib
import warnings
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field
from functools import lru_cache
from pathlib import Path
from typing import Any

import numpy as np

from .errors import InputError
from .spectra import Quantity, Spectra

__all__ = [
    "UncertaintyModel",
    "load_model",
    "parse_model",
    "draw_spectra",
    "measure_columns",
    "monte_carlo",
    "gum_chromaticity",
    "uv_ellipse",
    "Estimate",
    "SpectrumUncertainty",
    "UncertaintyResult",
    "GUM_KEYS",
    "UNCERTAINTY_CAUTION",
    "coverage_interval",
    "numerical_tolerance",
    "gum_validation",
    "cct_duv_jacobian",
    "TABLE_ROWS",
    "claim_uncertainties",
    "grid_groups",
    "decimals_for",
    "unit_of",
]

#: Coverage factor of the expanded uncertainty U = k u.
K_COVERAGE = 2.0
#: Coverage probability of the reported interval.
P_COVERAGE = 0.95
#: Measures the GUM law is written out for (JCGM 100 section 5.1).
GUM_KEYS = ("x", "y", "u", "v", "u_prime", "v_prime", "cct_K", "duv")
#: Measures on a discrete grid (the 1 nm working grid), left out of the adaptive stopping rule.
DISCRETE_KEYS = frozenset({"peak_nm"})
#: Draws analysed per call of :func:`cctkit.analysis.analyse` (bounds memory).
CHUNK_DRAWS = 5000

UNCERTAINTY_CAUTION = (
    "Uncertainties characterise the measurement as modelled in the model file; "
    "an accredited laboratory's uncertainty budget governs."
)

_SCHEMA: dict[str, dict[str, str]] = {
    "scale": {"u_rel": "number"},
    "calibration": {"u_rel": "number", "correlation_nm": "number"},
    "wavelength": {"offset_u_nm": "number", "jitter_u_nm": "number"},
    "bandwidth": {"fwhm_nm": "number", "fwhm_u_nm": "number"},
    "noise": {"u_rel": "number", "floor": "number"},
    "nonlinearity": {"u_rel": "number"},
    "stray_light": {"u_rel": "number"},
    "montecarlo": {"draws": "draws", "tolerance_digits": "int", "seed": "int", "block": "int", "max_draws": "int"},
}


# --------------------------------------------------------------------------- the model


@dataclass(frozen=True)
class UncertaintyModel:
    """Standard uncertainties of the measuring instrument and the Monte Carlo settings.

    Field names are ``<table>_<key>`` of the model file; 0 means the component is absent.
    ``draws`` is None for the adaptive procedure.
    """

    scale_u_rel: float = 0.0
    calibration_u_rel: float = 0.0
    calibration_correlation_nm: float = 0.0
    wavelength_offset_u_nm: float = 0.0
    wavelength_jitter_u_nm: float = 0.0
    bandwidth_fwhm_nm: float = 0.0
    bandwidth_fwhm_u_nm: float = 0.0
    noise_u_rel: float = 0.0
    noise_floor: float = 0.0
    nonlinearity_u_rel: float = 0.0
    stray_light_u_rel: float = 0.0
    draws: int | None = None
    tolerance_digits: int = 2
    seed: int = 1
    block: int = 10_000
    max_draws: int = 200_000
    source: str = "<model>"
    sha256: str = ""
    document: Mapping[str, Any] = field(default_factory=dict)

    def provenance(self) -> dict[str, Any]:
        """What an output records about the model: its file, SHA-256 and tables."""
        return {"file": self.source, "sha256": self.sha256, "tables": _plain(self.document)}

    def replace_draws(self, draws: int | None) -> UncertaintyModel:
        from dataclasses import replace

        return replace(self, draws=draws)


def _plain(obj: Any) -> Any:
    if isinstance(obj, Mapping):
        return {str(k): _plain(v) for k, v in obj.items()}
    return obj


def load_model(path: str | Path) -> UncertaintyModel:
    """Read a model file (TOML); bad content raises :class:`InputError` naming the file and key."""
    p = Path(path)
    try:
        data = p.read_bytes()
    except OSError as exc:
        raise InputError(f"cannot read the uncertainty model: {exc.strerror or exc}", source=str(path)) from None
    try:
        doc = tomllib.loads(data.decode("utf-8"))
    except (UnicodeDecodeError, tomllib.TOMLDecodeError) as exc:
        raise InputError(f"not a valid TOML uncertainty model ({exc})", source=str(path)) from None
    return parse_model(doc, source=str(path), sha256=hashlib.sha256(data).hexdigest())


def _suggest(word: str, choices) -> str:
    import difflib

    near = difflib.get_close_matches(word, list(choices), n=1)
    return f" (did you mean {near[0]!r}?)" if near else ""


def parse_model(doc: Mapping[str, Any], *, source: str = "<model>", sha256: str = "") -> UncertaintyModel:
    """An :class:`UncertaintyModel` from a parsed TOML document; see the module docstring for the tables."""
    kw: dict[str, Any] = {}
    for table, content in doc.items():
        if table not in _SCHEMA:
            raise InputError(
                f"unknown table [{table}]{_suggest(table, _SCHEMA)}; expected one of {', '.join(_SCHEMA)}",
                source=source,
            )
        if not isinstance(content, Mapping):
            raise InputError(f"[{table}] must be a table", source=source)
        for key, value in content.items():
            kind = _SCHEMA[table].get(key)
            where = f"[{table}] {key}"
            if kind is None:
                raise InputError(
                    f"unknown key {where}{_suggest(key, _SCHEMA[table])}; expected one of {', '.join(_SCHEMA[table])}",
                    source=source,
                )
            kw[f"{table}_{key}" if table != "montecarlo" else key] = _value(value, kind, where, source)
    if kw.get("calibration_u_rel", 0.0) > 0 and kw.get("calibration_correlation_nm", 0.0) <= 0:
        raise InputError("[calibration] needs correlation_nm > 0 when u_rel > 0", source=source)
    if "tolerance_digits" in kw and not 1 <= kw["tolerance_digits"] <= 4:
        raise InputError(f"[montecarlo] tolerance_digits must be 1 to 4, got {kw['tolerance_digits']}", source=source)
    if "block" in kw and kw["block"] < 100:
        raise InputError(f"[montecarlo] block must be at least 100, got {kw['block']}", source=source)
    if kw.get("max_draws", 200_000) < kw.get("block", 10_000):
        raise InputError("[montecarlo] max_draws must be at least block", source=source)
    return UncertaintyModel(**kw, source=source, sha256=sha256, document=_plain(doc))


def _value(value: Any, kind: str, where: str, source: str):
    if kind == "draws":
        if isinstance(value, str) and value.strip().lower() == "adaptive":
            return None
        if isinstance(value, bool) or not isinstance(value, int) or value < 100:
            raise InputError(
                f'{where} must be "adaptive" or a whole number of at least 100, got {value!r}', source=source
            )
        return int(value)
    if kind == "int":
        if isinstance(value, bool) or not isinstance(value, int) or value < 0:
            raise InputError(f"{where} must be a whole number >= 0, got {value!r}", source=source)
        return int(value)
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise InputError(f"{where} must be a number, got {value!r}", source=source)
    v = float(value)
    if not math.isfinite(v) or v < 0:
        raise InputError(f"{where} must be a finite number >= 0, got {value!r}", source=source)
    return v


# --------------------------------------------------------------------------- draws of the measured spectrum


@lru_cache(maxsize=16)
def _calibration_basis(wl_key: bytes, n: int, ell: float) -> np.ndarray:
    """Basis functions phi_k (L, K) of the smooth calibration error: correlation exp(-d^2 / (2 ell^2))."""
    wl = np.frombuffer(wl_key, dtype=np.float64, count=n)
    d = (wl[:, None] - wl[None, :]) / ell
    C = np.exp(-0.5 * d * d)
    mu, q = np.linalg.eigh(C)
    keep = mu > 1e-10 * mu[-1]
    basis = q[:, keep] * np.sqrt(mu[keep])[None, :]
    # Fix each basis vector's sign so draws do not depend on the eigen-solver's choice.
    signs = np.sign(basis[np.argmax(np.abs(basis), axis=0), np.arange(basis.shape[1])])
    basis = basis * signs[None, :]
    basis.setflags(write=False)
    return basis


@dataclass(frozen=True)
class _Prepared:
    """What the draws of one spectrum need, computed once on its measured grid."""

    wl: np.ndarray
    base: np.ndarray  # (L,) the measured (or mean) spectrum
    d1: np.ndarray  # dS/dlambda
    d2: np.ndarray  # d2S/dlambda2
    sigma: np.ndarray  # noise standard deviation per point
    level: np.ndarray  # S / max S (nonlinearity)
    mean: float
    basis: np.ndarray | None
    deviations: np.ndarray | None  # (n, L) repeats minus their mean, / sqrt(n (n - 1))


def _prepare(wl: np.ndarray, base: np.ndarray, model: UncertaintyModel, repeats: np.ndarray | None) -> _Prepared:
    wl = np.asarray(wl, dtype=np.float64)
    base = np.asarray(base, dtype=np.float64)
    d1 = np.gradient(base, wl, edge_order=2)
    d2 = np.gradient(d1, wl, edge_order=2)
    sigma = np.sqrt((model.noise_u_rel * base) ** 2 + model.noise_floor**2)
    peak = float(np.max(np.abs(base))) or 1.0
    basis = None
    if model.calibration_u_rel > 0:
        basis = _calibration_basis(
            np.ascontiguousarray(wl).tobytes(), wl.shape[0], float(model.calibration_correlation_nm)
        )
    deviations = None
    if repeats is not None:
        n = repeats.shape[0]
        deviations = (repeats - repeats.mean(axis=0)) / math.sqrt(n * (n - 1))
    return _Prepared(wl, base, d1, d2, sigma, base / peak, float(np.mean(base)), basis, deviations)


def draw_spectra(p: _Prepared, model: UncertaintyModel, rng: np.random.Generator, m: int) -> np.ndarray:
    """``m`` draws (m, L) of the spectrum on its measured grid, by the model of the module docstring.

    The random numbers are taken in a fixed order, component by component, so the
    same generator state gives the same draws.
    """
    L = p.base.shape[0]
    X = np.broadcast_to(p.base, (m, L)).copy()
    if p.deviations is not None:
        n = p.deviations.shape[0]
        nu = n - 1
        z = rng.standard_normal((m, n))
        w = rng.chisquare(nu, size=m)
        X += np.sqrt(nu / w)[:, None] * (z @ p.deviations)
    if model.wavelength_offset_u_nm > 0 or model.wavelength_jitter_u_nm > 0:
        e = np.zeros((m, L))
        if model.wavelength_offset_u_nm > 0:
            e += model.wavelength_offset_u_nm * rng.standard_normal((m, 1))
        if model.wavelength_jitter_u_nm > 0:
            e += model.wavelength_jitter_u_nm * rng.standard_normal((m, L))
        X += -e * p.d1 + 0.5 * e * e * p.d2
    if model.bandwidth_fwhm_u_nm > 0:
        beta = model.bandwidth_fwhm_u_nm * rng.standard_normal(m)
        b = model.bandwidth_fwhm_nm
        X += (((b + beta) ** 2 - b * b) / 12.0)[:, None] * p.d2
    if model.scale_u_rel > 0:
        X *= 1.0 + model.scale_u_rel * rng.standard_normal((m, 1))
    if p.basis is not None:
        X *= 1.0 + model.calibration_u_rel * (rng.standard_normal((m, p.basis.shape[1])) @ p.basis.T)
    if model.nonlinearity_u_rel > 0:
        X *= 1.0 + model.nonlinearity_u_rel * rng.standard_normal((m, 1)) * p.level
    if model.stray_light_u_rel > 0:
        X += model.stray_light_u_rel * p.mean * rng.standard_normal((m, 1))
    if model.noise_u_rel > 0 or model.noise_floor > 0:
        X += p.sigma * rng.standard_normal((m, L))
    return X


# --------------------------------------------------------------------------- measures as columns


def measure_columns(a) -> dict[str, np.ndarray]:
    """The scalar measures of an :class:`~cctkit.analysis.Analysis` as columns of length N.

    Keys and values are those of ``Analysis.records()`` (CCT NaN where it is not
    reported; ``R1``..``R14`` for the special indices), built column-wise.
    """
    cols: dict[str, np.ndarray] = {
        "cct_K": np.where(a.cct.in_domain, a.cct.cct_K, np.nan),
        "duv": a.cct.duv,
        "x": a.xy[:, 0],
        "y": a.xy[:, 1],
        "u": a.uv[:, 0],
        "v": a.uv[:, 1],
        "u_prime": a.uvp[:, 0],
        "v_prime": a.uvp[:, 1],
        "X": a.XYZ[:, 0],
        "Y": a.XYZ[:, 1],
        "Z": a.XYZ[:, 2],
    }
    ph = a.photometry
    if ph is not None:
        if ph.quantity is not Quantity.RELATIVE:
            cols[ph.quantity.luminous_name] = ph.luminous
        cols["ler_lm_per_W"] = ph.ler_lm_per_W
        cols["sp_ratio"] = ph.sp_ratio
    if a.alphaopic is not None:
        from .alphaopic import ALPHA_OPIC_NAMES  # the last axis of the alpha-opic arrays follows these names

        for k, name in enumerate(ALPHA_OPIC_NAMES):
            cols[f"{name}_elr_mW_per_lm"] = np.asarray(a.alphaopic.elr_W_per_lm)[:, k] * 1e3
            cols[f"{name}_der"] = np.asarray(a.alphaopic.der)[:, k]
    if a.shape is not None:
        cols.update(peak_nm=a.shape.peak_nm, centroid_nm=a.shape.centroid_nm, fwhm_nm=a.shape.fwhm_nm)
    if a.dominant is not None:
        cols.update(dominant_wavelength_nm=a.dominant.dominant_wavelength_nm, purity=a.dominant.purity)
    if a.cri is not None:
        cols["Ra"] = a.cri.Ra
        R = np.asarray(a.cri.R)
        cols.update({f"R{i + 1}": R[:, i] for i in range(R.shape[1])})
    if a.tm30 is not None:
        cols["Rf"] = a.tm30.Rf
        cols["Rg"] = a.tm30.Rg
    return {k: np.asarray(v, dtype=np.float64) for k, v in cols.items()}


#: The unit of each measure key (keys not listed are dimensionless).
UNITS = {
    "cct_K": "K",
    "luminous_flux_lm": "lm",
    "illuminance_lx": "lx",
    "luminance_cd_per_m2": "cd/m²",
    "intensity_cd": "cd",
    "ler_lm_per_W": "lm/W",
    "peak_nm": "nm",
    "centroid_nm": "nm",
    "fwhm_nm": "nm",
    "dominant_wavelength_nm": "nm",
}


#: (key, label) of the measures in the human table and the report, in order.
TABLE_ROWS: tuple[tuple[str, str], ...] = (
    ("cct_K", "CCT"),
    ("duv", "Duv"),
    ("x", "x"),
    ("y", "y"),
    ("u", "u (CIE 1960)"),
    ("v", "v (CIE 1960)"),
    ("u_prime", "u' (CIE 1976)"),
    ("v_prime", "v' (CIE 1976)"),
    ("luminous_flux_lm", "Luminous flux"),
    ("illuminance_lx", "Illuminance"),
    ("luminance_cd_per_m2", "Luminance"),
    ("intensity_cd", "Luminous intensity"),
    ("ler_lm_per_W", "LER"),
    ("sp_ratio", "S/P ratio"),
    ("melanopic_der", "Melanopic DER"),
    ("peak_nm", "Peak wavelength"),
    ("centroid_nm", "Centroid wavelength"),
    ("fwhm_nm", "FWHM"),
    ("dominant_wavelength_nm", "Dominant wavelength"),
    ("purity", "Excitation purity"),
    ("Ra", "Ra (CIE 13.3)"),
    ("R9", "R9"),
    ("Rf", "Rf (CIE 224 / TM-30)"),
    ("Rg", "Rg (TM-30)"),
)


def decimals_for(u: float, digits: int = 2) -> int:
    """Decimal places that show ``u`` to ``digits`` significant digits (4 when u is 0 or unknown)."""
    if not (u is not None and u > 0 and math.isfinite(u)):
        return 4
    return max(0, digits - 1 - int(math.floor(math.log10(u))))


def unit_of(key: str, quantity: Quantity | None = None) -> str:
    """The unit of measure ``key`` ("1" for dimensionless; X Y Z in the luminous unit of ``quantity``)."""
    if key in UNITS:
        return UNITS[key]
    if key.endswith("_mW_per_lm"):
        return "mW/lm"
    if key in ("X", "Y", "Z") and quantity is not None and quantity is not Quantity.RELATIVE:
        return UNITS.get(quantity.luminous_name, "1")
    return "1"


# --------------------------------------------------------------------------- statistics (JCGM 101 section 7)


def coverage_interval(sorted_draws: np.ndarray, p: float = P_COVERAGE) -> tuple[np.ndarray, np.ndarray]:
    """Probabilistically symmetric coverage interval of sorted draws along axis 0 (JCGM 101 section 7.7).

    q = pM when pM is whole, else int(pM + 1/2); the interval is [y_(r), y_(r+q)]
    with r = (M - q) / 2 (M - q even) or (M - q + 1) / 2 (odd), 1-based.
    """
    M = sorted_draws.shape[0]
    pM = p * M
    q = int(round(pM)) if abs(pM - round(pM)) < 1e-9 else int(pM + 0.5)
    r = (M - q) // 2 if (M - q) % 2 == 0 else (M - q + 1) // 2
    r = max(r, 1)
    return sorted_draws[r - 1], sorted_draws[min(r + q, M) - 1]


def numerical_tolerance(u: np.ndarray | float, digits: int) -> np.ndarray:
    """delta = 10^l / 2 where u = c x 10^l with c a ``digits``-digit integer (JCGM 101 section 7.9.2)."""
    u = np.asarray(u, dtype=np.float64)
    with np.errstate(divide="ignore", invalid="ignore"):
        ell = np.floor(np.log10(u)) - (digits - 1)
    return 0.5 * 10.0**ell


def _block_stats(y: np.ndarray) -> dict[str, np.ndarray]:
    """Per column of y (M, K): mean, u, and the interval ends, over the finite draws."""
    y = np.where(np.isfinite(y), y, np.nan)
    s = np.sort(y, axis=0)  # NaN sort last
    finite = np.isfinite(y).sum(axis=0)
    with warnings.catch_warnings():  # a measure with no finite draw (e.g. CCT off the locus) is NaN, quietly
        warnings.simplefilter("ignore", RuntimeWarning)
        mean = np.nanmean(y, axis=0)
        u = np.nanstd(y, axis=0, ddof=1)
    lo = np.full(y.shape[1], np.nan)
    hi = np.full(y.shape[1], np.nan)
    for m in np.unique(finite):
        if m < 2:
            continue
        cols = finite == m
        lo[cols], hi[cols] = coverage_interval(s[:m, cols])
    return {"mean": mean, "u": u, "lo": lo, "hi": hi, "finite": finite}


def gum_validation(
    value: float, u_gum: float, interval_95: tuple[float, float], digits: int
) -> tuple[float, float, float]:
    """JCGM 101 section 8.2: (d_low, d_high, delta) comparing the GUM interval with the Monte Carlo one.

    The GUM interval is value -/+ 1.96 u_gum (Gaussian, 95 %); d_low and d_high are the
    distances of its ends from the Monte Carlo interval's ends, delta the numerical
    tolerance of u_gum to ``digits`` significant digits.  The GUM is validated when both
    distances are at most delta.
    """
    Up = 1.959963984540054 * u_gum  # 95 % quantile of the normal distribution
    d_low = abs(value - Up - interval_95[0])
    d_high = abs(value + Up - interval_95[1])
    return d_low, d_high, float(numerical_tolerance(u_gum, digits))


# --------------------------------------------------------------------------- results


@dataclass(frozen=True)
class Estimate:
    """One measure of one spectrum: value, uncertainties, coverage interval (JCGM 101 section 7)."""

    value: float
    mean: float
    u: float
    interval_95: tuple[float, float]
    draws: int
    u_gum: float | None = None
    gum_validated: bool | None = None

    @property
    def U(self) -> float:
        return K_COVERAGE * self.u

    def as_dict(self) -> dict[str, Any]:
        d: dict[str, Any] = {
            "value": _num(self.value),
            "u": _num(self.u),
            "U": _num(self.U),
            "k": 2,
            "interval_95": [_num(self.interval_95[0]), _num(self.interval_95[1])],
            "draws": int(self.draws),
            "mean": _num(self.mean),
        }
        if self.u_gum is not None:
            d["u_gum"] = _num(self.u_gum)
            d["gum_validated"] = self.gum_validated
        return d


def _num(v) -> float | None:
    from .formats import finite_or_none

    return finite_or_none(v)


@dataclass(frozen=True)
class SpectrumUncertainty:
    """Every measure of one spectrum with its uncertainty, and how the Monte Carlo run went."""

    name: str
    source: str
    sha256: str
    quantity: Quantity
    estimates: Mapping[str, Estimate]
    draws_M: int
    stages: int
    converged: bool
    uv_covariance: np.ndarray  # (2, 2) of the Monte Carlo draws
    kept: Mapping[str, np.ndarray]  # draws of a few measures, for histograms and guard bands
    repeats: int = 1
    unstable: tuple[str, ...] = ()  # measures not yet stable when the adaptive procedure hit max_draws

    def record(self) -> dict[str, Any]:
        out: dict[str, Any] = {
            "name": self.name,
            "source": self.source,
            "sha256": self.sha256,
            "quantity": self.quantity.value,
            "spectral_unit": self.quantity.unit,
            "montecarlo": {"draws_M": self.draws_M, "stages": self.stages, "converged": self.converged},
        }
        if self.unstable:
            out["montecarlo"]["unstable"] = list(self.unstable)
        if self.repeats > 1:
            out["repeats"] = self.repeats
        out.update({k: e.as_dict() for k, e in self.estimates.items()})
        return out


@dataclass(frozen=True)
class UncertaintyResult:
    model: UncertaintyModel
    observer: int
    spectra: tuple[SpectrumUncertainty, ...]
    dominant_white: str = "E"

    def records(self) -> list[dict[str, Any]]:
        return [s.record() for s in self.spectra]

    def document(self) -> dict[str, Any]:
        """The JSON document: provenance, the model and its SHA-256, the method, one record per spectrum."""
        from .analysis import provenance

        return {
            **provenance(),
            "dominant_white": self.dominant_white,
            "uncertainty_model": self.model.provenance(),
            "uncertainty_method": {
                "montecarlo": "JCGM 101:2008 (GUM Supplement 1); probabilistically symmetric 95 % interval",
                "adaptive": self.model.draws is None,
                "tolerance_digits": self.model.tolerance_digits if self.model.draws is None else None,
                "seed": self.model.seed,
                "gum": "JCGM 100:2008 law of propagation for " + ", ".join(GUM_KEYS),
                "coverage_factor_k": 2,
            },
            "caution": UNCERTAINTY_CAUTION,
            "spectra": self.records(),
        }

    def csv(self) -> str:
        """One row per spectrum and measure."""
        from . import __version__
        from .formats import csv_text

        header = [
            "name",
            "measure",
            "unit",
            "value",
            "u",
            "U",
            "k",
            "interval_95_lo",
            "interval_95_hi",
            "draws",
            "mean",
            "u_gum",
            "draws_M",
            "model_sha256",
            "cctkit_version",
        ]
        rows = []
        for s in self.spectra:
            for key, e in s.estimates.items():
                d = e.as_dict()
                rows.append(
                    [
                        s.name,
                        key,
                        unit_of(key, s.quantity),
                        d["value"],
                        d["u"],
                        d["U"],
                        2,
                        d["interval_95"][0],
                        d["interval_95"][1],
                        d["draws"],
                        d["mean"],
                        d.get("u_gum"),
                        s.draws_M,
                        self.model.sha256,
                        __version__,
                    ]
                )
        return csv_text(header, rows)


# --------------------------------------------------------------------------- Monte Carlo


#: Measures whose draws are kept in the result (histograms, ellipses, guard bands).
KEPT_KEYS = ("cct_K", "Ra", "u", "v", "x", "y")


def _columns_of_draws(
    p: _Prepared, model, rng, m: int, *, quantity, observer: int, rendering: bool, dominant_white: str = "E"
) -> dict[str, np.ndarray]:
    from .analysis import analyse

    parts: list[dict[str, np.ndarray]] = []
    done = 0
    while done < m:
        k = min(CHUNK_DRAWS, m - done)
        X = draw_spectra(p, model, rng, k)
        s = Spectra(wavelength_nm=p.wl, values=X, names=("draw",) * k, quantity=quantity)
        parts.append(measure_columns(analyse(s, observer=observer, rendering=rendering, dominant_white=dominant_white)))
        done += k
    return {key: np.concatenate([c[key] for c in parts]) for key in parts[0]}


def _spectrum_mc(
    p: _Prepared,
    model: UncertaintyModel,
    rng: np.random.Generator,
    *,
    quantity,
    observer: int,
    rendering: bool,
    keys: Sequence[str],
    on_stage: Callable[[int], None] | None = None,
    dominant_white: str = "E",
):
    """Draw columns (M, K) for one spectrum: fixed M, or the adaptive stages of JCGM 101 section 7.9.4."""

    def stage(m):
        cols = _columns_of_draws(
            p, model, rng, m, quantity=quantity, observer=observer, rendering=rendering, dominant_white=dominant_white
        )
        return np.stack([cols[k] for k in keys], axis=1)

    if model.draws is not None:
        return stage(model.draws), 1, True, ()
    watched = np.array([k not in DISCRETE_KEYS for k in keys])
    blocks: list[np.ndarray] = []
    stats: list[dict[str, np.ndarray]] = []
    converged = False
    unstable: tuple[str, ...] = ()
    while sum(b.shape[0] for b in blocks) < model.max_draws:
        y = stage(min(model.block, model.max_draws - sum(b.shape[0] for b in blocks)))
        blocks.append(y)
        stats.append(_block_stats(y))
        h = len(blocks)
        if on_stage is not None:
            on_stage(sum(b.shape[0] for b in blocks))
        if h < 2:
            continue
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", RuntimeWarning)
            allu = np.nanstd(np.concatenate(blocks), axis=0, ddof=1)
        delta = numerical_tolerance(allu, model.tolerance_digits)
        worst = np.zeros(len(keys), dtype=bool)
        for name in ("mean", "u", "lo", "hi"):
            vals = np.stack([s[name] for s in stats])  # (h, K)
            with warnings.catch_warnings():
                warnings.simplefilter("ignore", RuntimeWarning)
                sd = np.nanstd(vals, axis=0, ddof=1) / math.sqrt(h)
            worst |= 2.0 * sd > delta
        # A measure the model leaves unchanged (u at the level of rounding) is stable by definition.
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", RuntimeWarning)
            scale = np.nanmax(np.abs(np.concatenate(blocks)), axis=0)
        exact = ~(allu > 1e-10 * np.where(scale > 0, scale, 1.0))
        active = watched & ~exact & np.isfinite(allu)
        unstable = tuple(k for k, bad in zip(keys, worst & active) if bad)
        if not unstable:
            converged = True
            break
    return np.concatenate(blocks), len(blocks), converged, unstable


def monte_carlo(
    spectra: Spectra | Sequence[Spectra],
    model: UncertaintyModel,
    *,
    observer: int = 2,
    rendering: bool = True,
    repeats: bool = False,
    progress: Callable[[int, int, int], None] | None = None,
    stage_progress: Callable[[int, int], None] | None = None,
    dominant_white: str = "E",
) -> UncertaintyResult:
    """Every measure of every spectrum with its Monte Carlo uncertainty (and the GUM u for chromaticity).

    Parameters
    ----------
    spectra
        N spectra on their measured grid (draws are made there, before resampling); a
        sequence of Spectra when they come on different grids.
    model
        The instrument's uncertainty model (:func:`load_model`).
    observer
        2 or 10, as for :func:`cctkit.analysis.analyse`.
    rendering
        Include CIE 13.3 and CIE 224 / TM-30 measures.
    repeats
        Take the N spectra (one Spectra) as repeat scans of one source: their mean is
        measured and their scatter is the type-A component (N >= 4).
    progress
        Called as ``progress(i, n, M)`` after each spectrum.
    stage_progress
        Called as ``stage_progress(i, draws_so_far)`` after each stage of the adaptive procedure.
    dominant_white
        White point of the dominant wavelength and purity, as for :func:`cctkit.analysis.analyse`.

    Returns
    -------
    UncertaintyResult
        Seeded by the model: spectrum i draws from ``SeedSequence(seed, spawn_key=(i,))``,
        so the same inputs and model give the same numbers, bit for bit.
    """
    groups = [spectra] if isinstance(spectra, Spectra) else list(spectra)
    if not groups:
        raise InputError("no spectra given")
    if int(observer) not in (2, 10):
        raise ValueError(f"observer must be 2 or 10, got {observer!r}")
    if repeats:
        if len(groups) > 1:
            raise InputError("repeat scans must share one wavelength grid", source=groups[1].sources[0] or None)
        n = len(groups[0])
        if n < 4:
            raise InputError(
                f"{n} repeat scan(s) given; at least 4 are needed for a finite type-A uncertainty "
                "(JCGM 101 section 6.4.9, t distribution with n - 1 degrees of freedom)",
                source=groups[0].sources[0] or None,
            )
    total = 1 if repeats else sum(len(g) for g in groups)
    out: list[SpectrumUncertainty] = []
    for g in groups:
        out.extend(
            _group_mc(
                g,
                model,
                observer=int(observer),
                rendering=rendering,
                repeats=repeats,
                first=len(out),
                total=total,
                progress=progress,
                stage_progress=stage_progress,
                dominant_white=dominant_white,
            )
        )
    return UncertaintyResult(model=model, observer=int(observer), spectra=tuple(out), dominant_white=dominant_white)


def _group_mc(
    spectra: Spectra,
    model: UncertaintyModel,
    *,
    observer: int,
    rendering: bool,
    repeats: bool,
    first: int,
    total: int,
    progress,
    stage_progress=None,
    dominant_white: str = "E",
) -> list[SpectrumUncertainty]:
    from .analysis import analyse

    wl = spectra.wavelength_nm
    rep = None
    if repeats:
        rep = spectra.values
        measured = Spectra(
            wavelength_nm=wl,
            values=rep.mean(axis=0)[None, :],
            names=(f"{spectra.names[0]} (mean of {len(spectra)} scans)",),
            quantity=spectra.quantity,
            sources=(spectra.sources[0],),
            sha256=(spectra.sha256[0],),
        )
    else:
        measured = spectra
    values = measure_columns(analyse(measured, observer=observer, rendering=rendering, dominant_white=dominant_white))
    keys = list(values)
    gum = gum_chromaticity(measured, model, observer=observer, repeats=rep)
    out = []
    for i in range(len(measured)):
        rng = np.random.default_rng(np.random.SeedSequence(model.seed, spawn_key=(first + i,)))
        p = _prepare(wl, measured.values[i], model, rep)
        on_stage = None if stage_progress is None else (lambda m, k=first + i + 1: stage_progress(k, m))
        y, stages, converged, unstable = _spectrum_mc(
            p,
            model,
            rng,
            quantity=measured.quantity,
            observer=observer,
            rendering=rendering,
            keys=keys,
            on_stage=on_stage,
            dominant_white=dominant_white,
        )
        st = _block_stats(y)
        est = {}
        for j, key in enumerate(keys):
            gu = float(gum[key][i]) if key in gum and np.isfinite(gum[key][i]) else None
            interval = (float(st["lo"][j]), float(st["hi"][j]))
            ok = None
            if gu is not None and gu > 0 and all(np.isfinite(interval)):
                d_low, d_high, delta = gum_validation(float(values[key][i]), gu, interval, model.tolerance_digits)
                ok = bool(d_low <= delta and d_high <= delta)
            est[key] = Estimate(
                value=float(values[key][i]),
                mean=float(st["mean"][j]),
                u=float(st["u"][j]),
                interval_95=interval,
                draws=int(st["finite"][j]),
                u_gum=gu,
                gum_validated=ok,
            )
        uvd = y[:, [keys.index("u"), keys.index("v")]]
        uvd = uvd[np.isfinite(uvd).all(axis=1)]
        cov = np.cov(uvd, rowvar=False) if uvd.shape[0] > 2 else np.full((2, 2), np.nan)
        kept = {k: y[:, keys.index(k)].copy() for k in KEPT_KEYS if k in keys}
        out.append(
            SpectrumUncertainty(
                name=measured.names[i],
                source=measured.sources[i],
                sha256=measured.sha256[i],
                quantity=measured.quantity,
                estimates=est,
                draws_M=int(y.shape[0]),
                stages=stages,
                converged=converged,
                uv_covariance=cov,
                kept=kept,
                repeats=len(spectra) if repeats else 1,
                unstable=unstable,
            )
        )
        if progress is not None:
            progress(first + i + 1, total, int(y.shape[0]))
    return out


# --------------------------------------------------------------------------- GUM law of propagation


def _sensitivity(wl: np.ndarray, base: np.ndarray, observer: int) -> np.ndarray:
    """B (L, 3): d(raw XYZ) / d(measured values), through the same resampling as every spectrum."""
    from .spectra import interpolation_matrix, to_working_grid
    from .tables import cmfs

    W = cmfs(observer)  # (471, 3)
    grid = Spectra(wavelength_nm=wl, values=base[None, :], names=("s",))
    if grid.on_working_grid:
        return W
    R = interpolation_matrix(wl)
    if R is not None:
        return R.T @ W
    # PCHIP is not linear in the data: its Jacobian at this spectrum, by central differences, all at once.
    L = wl.shape[0]
    h = 1e-6 * (float(np.max(np.abs(base))) or 1.0)
    plus = to_working_grid(Spectra(wavelength_nm=wl, values=base[None, :] + h * np.eye(L), names=("s",) * L)).values
    minus = to_working_grid(Spectra(wavelength_nm=wl, values=base[None, :] - h * np.eye(L), names=("s",) * L)).values
    return ((plus - minus) / (2 * h)) @ W


def _factors(p: _Prepared, model: UncertaintyModel) -> tuple[list[np.ndarray], np.ndarray]:
    """Linearised covariance of the measured spectrum: sum F F^T + diag(d), by the model of the docstring."""
    F: list[np.ndarray] = []
    if model.scale_u_rel > 0:
        F.append(model.scale_u_rel * p.base[:, None])
    if p.basis is not None:
        F.append(model.calibration_u_rel * p.base[:, None] * p.basis)
    if model.wavelength_offset_u_nm > 0:
        F.append(model.wavelength_offset_u_nm * p.d1[:, None])
    if model.bandwidth_fwhm_u_nm > 0:
        F.append(model.bandwidth_fwhm_u_nm * model.bandwidth_fwhm_nm / 6.0 * p.d2[:, None])
    if model.nonlinearity_u_rel > 0:
        F.append(model.nonlinearity_u_rel * (p.base * p.level)[:, None])
    if model.stray_light_u_rel > 0:
        F.append(np.full((p.base.shape[0], 1), model.stray_light_u_rel * p.mean))
    if p.deviations is not None:
        nu = p.deviations.shape[0] - 1
        F.append(math.sqrt(nu / (nu - 2)) * p.deviations.T)
    d = (model.wavelength_jitter_u_nm * p.d1) ** 2 + p.sigma**2
    return F, d


def _chromaticity_jacobians(XYZ: np.ndarray) -> dict[str, np.ndarray]:
    """d(x, y, u, v, u', v') / d(X, Y, Z), each (N, 3) (CIE 15:2018 eqs. 7.3, 8.1 differentiated)."""
    X, Y, Z = XYZ[:, 0], XYZ[:, 1], XYZ[:, 2]
    S = X + Y + Z
    D = X + 15.0 * Y + 3.0 * Z
    S2, D2 = S * S, D * D
    jx = np.stack([(Y + Z) / S2, -X / S2, -X / S2], axis=1)
    jy = np.stack([-Y / S2, (X + Z) / S2, -Y / S2], axis=1)
    ju = np.stack([4.0 * (15.0 * Y + 3.0 * Z) / D2, -60.0 * X / D2, -12.0 * X / D2], axis=1)
    jv = np.stack([-6.0 * Y / D2, 6.0 * (X + 3.0 * Z) / D2, -18.0 * Y / D2], axis=1)
    return {"x": jx, "y": jy, "u": ju, "v": jv, "u_prime": ju, "v_prime": 1.5 * jv}


def cct_duv_jacobian(uv: np.ndarray, cct_K: np.ndarray, *, observer: int = 2) -> tuple[np.ndarray, np.ndarray]:
    """d(CCT)/d(uv) [K] and d(Duv)/d(uv), each (N, 2), at the solved CCT.

    Implicit differentiation of (uv - P(T)) . P'(T) = 0 for the nearest locus point P(T):
    dT/d(uv) = P' / (|P'|^2 - (uv - P) . P''); Duv = n . (uv - P) with n the unit normal
    above the locus, so dDuv/d(uv) = n.
    """
    from .locus import locus_normal, planckian_uv_dT

    T = np.asarray(cct_K, dtype=np.float64)
    P, dP = planckian_uv_dT(T, observer=observer)
    h = 1e-5 * T
    d2P = (planckian_uv_dT(T + h, observer=observer)[1] - planckian_uv_dT(T - h, observer=observer)[1]) / (2 * h)[
        :, None
    ]
    r = uv - P
    denom = np.sum(dP * dP, axis=1) - np.sum(r * d2P, axis=1)
    dT = dP / denom[:, None]
    _, n = locus_normal(T, observer=observer)
    return dT, n


def gum_chromaticity(
    spectra: Spectra, model: UncertaintyModel, *, observer: int = 2, repeats: np.ndarray | None = None
) -> dict[str, np.ndarray]:
    """GUM standard uncertainties (JCGM 100 section 5.1) of x, y, u, v, u', v', CCT and Duv, each (N,).

    cov(XYZ) = W^T Sigma W from the linearised model (see the module docstring), then
    analytic Jacobians.  CCT is NaN where it is not reported (|Duv| > 0.05).
    """
    from .cct import cct_duv
    from .colorimetry import XYZ_to_uv

    wl = spectra.wavelength_nm
    N = len(spectra)
    covs = np.zeros((N, 3, 3))
    raw = np.zeros((N, 3))
    for i in range(N):  # one L x 3 sensitivity per spectrum (PCHIP's depends on the data)
        p = _prepare(wl, spectra.values[i], model, repeats)
        B = _sensitivity(wl, p.base, observer)
        F, d = _factors(p, model)
        c = (B * d[:, None]).T @ B
        for f in F:
            g = B.T @ f
            c = c + g @ g.T
        covs[i] = c
        raw[i] = p.base @ B
    out: dict[str, np.ndarray] = {}
    for key, J in _chromaticity_jacobians(raw).items():
        out[key] = np.sqrt(np.clip(np.einsum("ni,nij,nj->n", J, covs, J), 0.0, None))
    uv = XYZ_to_uv(raw)
    cct = cct_duv(uv, observer=observer)
    dT, dD = cct_duv_jacobian(uv, cct.cct_K, observer=observer)
    Juv = np.stack([_chromaticity_jacobians(raw)["u"], _chromaticity_jacobians(raw)["v"]], axis=1)  # (N, 2, 3)
    cov_uv = Juv @ covs @ np.transpose(Juv, (0, 2, 1))
    out["cct_K"] = np.where(
        cct.in_domain, np.sqrt(np.clip(np.einsum("ni,nij,nj->n", dT, cov_uv, dT), 0.0, None)), np.nan
    )
    out["duv"] = np.sqrt(np.clip(np.einsum("ni,nij,nj->n", dD, cov_uv, dD), 0.0, None))
    return out


# --------------------------------------------------------------------------- the 95 % region on the uv chart


def uv_ellipse(centre: Sequence[float], cov: np.ndarray, *, p: float = P_COVERAGE, points: int = 121) -> np.ndarray:
    """Vertices (points, 2) of the p coverage ellipse of a bivariate normal in uv (JCGM 102:2011, from memory).

    The ellipse is (q - centre)^T cov^-1 (q - centre) = k_p^2 with k_p^2 = -2 ln(1 - p)
    (the chi-squared quantile with 2 degrees of freedom; 5.991 for p = 0.95).
    """
    cov = np.asarray(cov, dtype=np.float64)
    k2 = -2.0 * math.log(1.0 - p)
    mu, q = np.linalg.eigh(cov)
    mu = np.clip(mu, 0.0, None)
    t = np.linspace(0.0, 2.0 * math.pi, points)
    circle = np.stack([np.cos(t), np.sin(t)], axis=1)
    return np.asarray(centre, dtype=np.float64)[None, :] + math.sqrt(k2) * (circle * np.sqrt(mu)[None, :]) @ q.T


# --------------------------------------------------------------------------- inputs and decisions


def grid_groups(items: Sequence[Spectra]) -> list[Spectra]:
    """Consecutive Spectra on the same measured grid joined (no resampling), input order kept.

    Draws are made on each spectrum's own grid, so spectra are only batched with others
    measured on the same wavelengths.
    """
    from itertools import groupby

    items = list(items)
    if not items:
        raise InputError("no spectra given")
    if len({s.quantity for s in items}) > 1:
        raise InputError(
            "spectra of different quantities cannot be analysed together: "
            + ", ".join(sorted({s.quantity.value for s in items}))
        )
    out = []
    for _, same_grid in groupby(items, key=lambda s: s.wavelength_nm.tobytes()):
        run = list(same_grid)
        if len(run) == 1:
            out.append(run[0])
            continue
        out.append(
            Spectra(
                wavelength_nm=run[0].wavelength_nm,
                values=np.concatenate([s.values for s in run]),
                names=sum((s.names for s in run), ()),
                quantity=run[0].quantity,
                sources=sum((s.sources for s in run), ()),
                sha256=sum((s.sha256 for s in run), ()),
                flags=sum((s.flags for s in run), ()),
                measured_range_nm=sum((s.measured_range_nm for s in run), ()),
            )
        )
    return out


def claim_uncertainties(result: UncertaintyResult, claims) -> list[dict[str, float]]:
    """Expanded uncertainties U (k = 2) per sample for the guard bands of :func:`cctkit.claims.verify`.

    Every measure's U from the Monte Carlo draws; ``efficacy_lm_per_W`` from the luminous
    flux's U over the sample's stated power (taken as exact); ``sdcm`` and
    ``ansi_quadrangle`` from the SDCM steps and quadrangle edge margins of the chromaticity
    draws themselves, with the claim's own ellipse and quadrangle.
    """
    from . import tolerance as tol
    from .claims import sdcm_ellipse

    out = []
    for s in result.spectra:
        d = {k: e.U for k, e in s.estimates.items() if np.isfinite(e.u)}
        power = claims.power_W.get(s.name, claims.power_W.get("*"))
        if power and "luminous_flux_lm" in d:
            d["efficacy_lm_per_W"] = d["luminous_flux_lm"] / float(power)
        c = claims.chromaticity
        if c is not None and "x" in s.kept and "y" in s.kept:
            xy = np.stack([s.kept["x"], s.kept["y"]], axis=1)
            xy = xy[np.isfinite(xy).all(axis=1)]
            if c.max_sdcm is not None and xy.shape[0] > 1:
                d["sdcm"] = K_COVERAGE * float(np.std(sdcm_ellipse(c).steps(xy), ddof=1))
            if c.ansi_quadrangle and xy.shape[0] > 1:
                margin = tol.edge_margin_uv(xy, tol.ansi_quadrangle(c.nominal_cct_K), space="xy")
                d["ansi_quadrangle"] = K_COVERAGE * float(np.nanstd(margin, ddof=1))
        out.append(d)
    return out
