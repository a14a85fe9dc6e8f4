"""The :class:`Spectra` type, its validation, and resampling to the working grid.

A :class:`Spectra` holds N spectra measured on one wavelength axis.  Readers
keep the data as measured; :func:`to_working_grid` brings it once to the
working grid (360-830 nm at 1 nm, CIE 15:2018 practice), after which every
measure is a matrix product against tables on that grid.

Interpolation rules (written down here and in DEVELOPERS.md), ``interpolation=``:

* data already at 1 nm on whole nanometres: values are taken as they are (every method);
* ``"auto"`` (default): uniformly spaced data with at least 6 points by Sprague (1880) quintic
  interpolation, as CIE 167:2005 section 5 recommends for uniformly spaced data, with the CIE 167
  end extension of two points on each side; non-uniform data, or fewer than 6 points, by PCHIP.
  Line spectra at 5 nm or coarser (low-pressure sodium, high-pressure lamps, fluorescent
  tri-band) keep Sprague too: the tabulated CIE illuminants and the reference library are
  evaluated that way, so results stay comparable; but a quintic through a narrow line rings,
  and where that drives values below zero (more than 0.1 % of the peak, below the measured
  data's own minimum) the spectrum gets an ``interpolation-overshoot`` flag with the worst
  value relative to the peak.  CIE 167 itself warns that no interpolation recovers lines
  narrower than the step (from memory); measure such sources at 1 nm or finer where possible;
* ``"sprague"``: Sprague, refused for non-uniform data;
* ``"linear"``: straight lines between measured points: never overshoots, the choice for line
  spectra when the flag appears;
* ``"pchip"``: shape-preserving piecewise cubic Hermite (Fritsch-Carlson), no overshoot.

Sprague is applied as a six-point stencil per output sample, so memory and time grow linearly
with the number of measured points (a 0.02 nm file of 20,000 points costs a few MB).

Extrapolation outside the measured range repeats the nearest measured value
(CIE 15:2018 section 7.2.2, "closest measured value" rule); it serves the colour
measures only (chromaticity, CCT, rendering).  A flag ``range-short`` is raised
for every spectrum whose measured range does not cover 380-780 nm.

Radiometric totals are not taken from the working grid: every Spectra built from
measured data keeps ``measured_totals``, the radiant total, photon total and PPF
summed plainly over the data as measured (its whole range, beyond 830 nm too),
and carries them unchanged through resampling, selection and concatenation.
"""

from __future__ import annotations

import hashlib
from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field, replace
from enum import Enum

import numpy as np

from .constants import VISIBLE_BAND_NM, WAVELENGTH_NM
from .errors import Flag, InputError
from .limits import MAX_POINTS, MAX_WAVELENGTH_NM

__all__ = [
    "Quantity",
    "Spectra",
    "to_working_grid",
    "resample",
    "INTERPOLATION_METHODS",
    "interpolation_matrix",
    "sha256_of_file",
    "concatenate",
    "signal_problems",
    "require_signal",
    "range_array",
]

MIN_POINTS = 5


class Quantity(str, Enum):
    """Radiometric quantity of the spectral values, and its spectral unit."""

    RADIANT_FLUX = "radiant-flux"
    IRRADIANCE = "irradiance"
    RADIANCE = "radiance"
    INTENSITY = "intensity"
    RELATIVE = "relative"

    @property
    def unit(self) -> str:
        return _SPECTRAL_UNIT[self]

    @property
    def luminous_name(self) -> str:
        """Name (with unit) of the photometric total this quantity integrates to."""
        return _LUMINOUS_NAME[self]

    @classmethod
    def parse(cls, text: str, *, source: str | None = None, line: int | None = None) -> Quantity:
        key = str(text).strip().lower().replace("_", "-").replace(" ", "-")
        key = _QUANTITY_ALIASES.get(key, key)
        try:
            return cls(key)
        except ValueError:
            allowed = ", ".join(q.value for q in cls)
            raise InputError(
                f"unknown quantity {text!r}; expected one of {allowed}", source=source, line=line
            ) from None


_SPECTRAL_UNIT = {
    Quantity.RADIANT_FLUX: "W/nm",
    Quantity.IRRADIANCE: "W/(m^2 nm)",
    Quantity.RADIANCE: "W/(sr m^2 nm)",
    Quantity.INTENSITY: "W/(sr nm)",
    Quantity.RELATIVE: "1",
}
_LUMINOUS_NAME = {
    Quantity.RADIANT_FLUX: "luminous_flux_lm",
    Quantity.IRRADIANCE: "illuminance_lx",
    Quantity.RADIANCE: "luminance_cd_per_m2",
    Quantity.INTENSITY: "intensity_cd",
    Quantity.RELATIVE: "relative_luminous",
}
_QUANTITY_ALIASES = {
    "flux": "radiant-flux",
    "radiantflux": "radiant-flux",
    "spectral-irradiance": "irradiance",
    "spectral-radiance": "radiance",
    "radiant-intensity": "intensity",
    "spectral-intensity": "intensity",
    "spectral-flux": "radiant-flux",
    "relative-power": "relative",
}


def _median(a: np.ndarray) -> float:
    """``np.median`` of a 1-D array without NaN, the same number, without the import of ``numpy.ma``
    that ``np.median`` makes on first use (a fifth of a one-file command's start-up)."""
    s = np.sort(a)
    n = s.shape[0]
    return float(s[n // 2]) if n % 2 else float((s[n // 2 - 1] + s[n // 2]) / 2)


@dataclass(frozen=True, eq=False)
class Spectra:
    """N spectra on one wavelength axis.

    Attributes
    ----------
    wavelength_nm
        Strictly increasing, finite wavelengths, shape (L,) [nm].
    values
        Spectral values, shape (N, L), in ``quantity.unit``.
    names
        One name per spectrum.
    quantity
        The radiometric quantity of ``values``.
    sources
        Where each spectrum came from (file path, optionally ``#column``).
    sha256
        SHA-256 of each spectrum's source file, or ``""`` when not from a file.
    flags
        Per spectrum, the doubtful conditions found so far (see :class:`~cctkit.errors.Flag`).
    metadata
        Per spectrum, the ``(key, value)`` text pairs its file carried (instrument,
        operator, ...), in the file's order; ``()`` when there were none.
    """

    wavelength_nm: np.ndarray
    values: np.ndarray
    names: tuple[str, ...]
    quantity: Quantity = Quantity.RELATIVE
    sources: tuple[str, ...] = ()
    sha256: tuple[str, ...] = ()
    flags: tuple[tuple[Flag, ...], ...] = ()
    measured_range_nm: tuple[tuple[float, float, float], ...] = field(default=())
    metadata: tuple[tuple[tuple[str, str], ...], ...] = ()
    measured_totals: np.ndarray | None = None
    interpolation: tuple[str, ...] = ()

    def __post_init__(self) -> None:
        source = self.sources[0] if self.sources else None
        wl = np.asarray(self.wavelength_nm, dtype=np.float64)
        values = np.asarray(self.values, dtype=np.float64)
        if values.ndim == 1:
            values = values[np.newaxis, :]
        if wl.ndim != 1:
            raise InputError(f"wavelength axis must be one-dimensional, got shape {wl.shape}", source=source)
        if values.ndim != 2 or values.shape[1] != wl.shape[0]:
            raise InputError(
                f"values must have shape (N, {wl.shape[0]}) to match the wavelength axis, got {values.shape}",
                source=source,
            )
        if values.shape[0] == 0:
            raise InputError("no spectra found", source=source)
        if wl.shape[0] < MIN_POINTS:
            raise InputError(f"only {wl.shape[0]} wavelength points; at least {MIN_POINTS} are needed", source=source)
        if wl.shape[0] > MAX_POINTS:
            raise InputError(
                f"{wl.shape[0]} wavelength points, over the limit of {MAX_POINTS} per spectrum", source=source
            )
        if not np.all(np.isfinite(wl)):
            raise InputError("wavelengths contain NaN or infinite values", source=source)
        if wl.min() <= 0 or wl.max() > MAX_WAVELENGTH_NM:
            bad = wl.min() if wl.min() <= 0 else wl.max()
            raise InputError(
                f"wavelength {bad:g} nm is outside 0-{MAX_WAVELENGTH_NM:g} nm (wrong unit?)", source=source
            )
        steps = np.diff(wl)
        if np.any(steps <= 0):
            i = int(np.argmax(steps <= 0)) + 1
            raise InputError(
                f"wavelengths must be strictly increasing; {wl[i]:g} nm follows {wl[i - 1]:g} nm", source=source
            )
        bad = ~np.isfinite(values)
        if bad.any():
            n, j = np.argwhere(bad)[0]
            name = self.names[n] if n < len(self.names) else str(n)
            raise InputError(
                f"spectrum {name!r} has a NaN or infinite value at {wl[j]:g} nm", source=_pick(self.sources, n)
            )
        n = values.shape[0]
        names = tuple(str(s) for s in self.names)
        if len(names) != n:
            raise InputError(f"{len(names)} names given for {n} spectra", source=source)
        quantity = self.quantity if isinstance(self.quantity, Quantity) else Quantity.parse(self.quantity)
        wl.setflags(write=False)
        values.setflags(write=False)
        object.__setattr__(self, "wavelength_nm", wl)
        object.__setattr__(self, "values", values)
        object.__setattr__(self, "names", names)
        object.__setattr__(self, "quantity", quantity)
        object.__setattr__(self, "sources", _per_spectrum(self.sources, n, ""))
        object.__setattr__(self, "sha256", _per_spectrum(self.sha256, n, ""))
        flags = _per_spectrum(self.flags, n, ())
        if not self.measured_range_nm:
            step = _median(steps)
            measured = ((float(wl[0]), float(wl[-1]), step),) * n
            negative = values.min(axis=1) < 0
            flags = tuple(f + ((_negative_flag(values[i]),) if negative[i] else ()) for i, f in enumerate(flags))
            if step > 5.0 + 1e-9:
                flags = tuple(f + (_coarse_flag(step),) for f in flags)
            object.__setattr__(self, "measured_range_nm", measured)
        else:
            object.__setattr__(self, "measured_range_nm", _per_spectrum(self.measured_range_nm, n, None))
        object.__setattr__(self, "flags", flags)
        object.__setattr__(self, "interpolation", _per_spectrum(self.interpolation, n, "as measured"))
        if self.measured_totals is None:
            from .photometry import measured_sums

            totals = measured_sums(wl, values, self.measured_range_nm)
        else:
            totals = np.array(self.measured_totals, dtype=np.float64).reshape(n, -1)
        totals.setflags(write=False)
        object.__setattr__(self, "measured_totals", totals)
        object.__setattr__(self, "metadata", _per_spectrum(self.metadata, n, ()))

    def metadata_of(self, i: int) -> dict[str, str]:
        """The metadata of spectrum ``i`` as an ordered ``{key: value}`` dict."""
        return dict(self.metadata[i])

    def __len__(self) -> int:
        return self.values.shape[0]

    @property
    def on_working_grid(self) -> bool:
        return self.wavelength_nm.shape == WAVELENGTH_NM.shape and bool(
            np.array_equal(self.wavelength_nm, WAVELENGTH_NM)
        )

    def select(self, index: int | slice | Sequence[int]) -> Spectra:
        """The spectra at ``index`` (keeps names, sources and flags aligned)."""
        idx = np.arange(len(self))[index]
        idx = np.atleast_1d(idx)
        return replace(
            self,
            values=self.values[idx],
            names=tuple(self.names[i] for i in idx),
            sources=tuple(self.sources[i] for i in idx),
            sha256=tuple(self.sha256[i] for i in idx),
            flags=tuple(self.flags[i] for i in idx),
            measured_range_nm=tuple(self.measured_range_nm[i] for i in idx),
            metadata=tuple(self.metadata[i] for i in idx),
            measured_totals=np.asarray(self.measured_totals)[idx],  # never None once built
            interpolation=tuple(self.interpolation[i] for i in idx),
        )

    def scaled(self, factor: float, quantity: Quantity | None = None) -> Spectra:
        """The same spectra multiplied by ``factor`` (e.g. a unit conversion)."""
        return replace(
            self,
            values=self.values * factor,
            quantity=quantity or self.quantity,
            measured_totals=np.asarray(self.measured_totals) * factor,
        )

    # pandas / colour-science interop lives in cctkit.interop; these are its doors.
    @classmethod
    def from_frame(cls, df, **kwargs) -> Spectra:
        """Spectra from a pandas DataFrame, one column per spectrum (:func:`cctkit.interop.spectra_from_frame`)."""
        from .interop import spectra_from_frame

        return spectra_from_frame(df, **kwargs)

    def to_frame(self):
        """A pandas DataFrame, one column per spectrum on a ``wavelength_nm`` index (:func:`cctkit.interop.spectra_to_frame`)."""
        from .interop import spectra_to_frame

        return spectra_to_frame(self)

    @classmethod
    def from_colour(cls, obj, **kwargs) -> Spectra:
        """Spectra from colour-science distributions (:func:`cctkit.interop.spectra_from_colour`)."""
        from .interop import spectra_from_colour

        return spectra_from_colour(obj, **kwargs)

    def to_colour(self):
        """A ``colour.MultiSpectralDistributions``, one label per spectrum (:func:`cctkit.interop.spectra_to_colour`)."""
        from .interop import spectra_to_colour

        return spectra_to_colour(self)


def _pick(seq: Sequence[str], i: int) -> str | None:
    if not seq:
        return None
    return seq[i] if i < len(seq) else seq[0]


def _per_spectrum(seq, n: int, default):
    seq = tuple(seq)
    if len(seq) == n:
        return seq
    if len(seq) == 1:
        return seq * n
    if len(seq) == 0:
        return (default,) * n
    raise InputError(f"{len(seq)} per-spectrum entries given for {n} spectra")


def _negative_flag(row: np.ndarray) -> Flag:
    peak = float(np.max(np.abs(row))) or 1.0
    return Flag(
        "negative-values",
        f"negative spectral values down to {row.min() / peak:.2%} of the peak (dark-noise); kept as measured",
    )


def _coarse_flag(step: float) -> Flag:
    return Flag(
        "coarse-step",
        f"measured at {step:g} nm steps; CIE 15 recommends 5 nm or finer, narrow LED peaks may be misread",
    )


def _range_flag(lo: float, hi: float) -> Flag:
    return Flag(
        "range-short",
        f"measured range {lo:g}-{hi:g} nm does not cover 380-780 nm; values outside were extrapolated "
        "by repeating the nearest measured value",
    )


# --------------------------------------------------------------------------- resampling


#: Interpolation methods :func:`to_working_grid` accepts (the ``--interpolation`` choices).
INTERPOLATION_METHODS = ("auto", "sprague", "linear", "pchip")
#: Overshoot below this share of the peak (0.1 %) is treated as rounding, not ringing (our rule).
OVERSHOOT_LIMIT = 1e-3

# CIE 167:2005 Table 4 (from memory): two extra points at each end, from the first/last six.
_SPRAGUE_EXT = np.array([[884, -1960, 3033, -2648, 1080, -180], [508, -540, 488, -367, 144, -24]]) / 209.0
# Sprague (1880) quintic coefficients a0..a5 from p[i-2..i+3], CIE 167:2005 eq. (5) (from memory).
_SPRAGUE_COEF = (
    np.array(
        [
            [0, 0, 24, 0, 0, 0],
            [2, -16, 0, 16, -2, 0],
            [-1, 16, -30, 16, -1, 0],
            [-9, 39, -70, 66, -33, 7],
            [13, -64, 126, -124, 61, -12],
            [-5, 25, -50, 50, -25, 5],
        ],
        dtype=np.float64,
    )
    / 24.0
)


def _positions(wl: np.ndarray, target: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Segment index i and fraction t of each target inside ``wl`` (targets clipped to the range)."""
    clipped = np.clip(target, wl[0], wl[-1])  # constant extrapolation
    i = np.clip(np.searchsorted(wl, clipped, side="right") - 1, 0, wl.shape[0] - 2)
    t = (clipped - wl[i]) / (wl[i + 1] - wl[i])
    return i, t


def _sprague(wl: np.ndarray, values: np.ndarray, target: np.ndarray) -> np.ndarray:
    """Sprague interpolation of uniformly spaced data (CIE 167:2005 section 5), applied as a 6-point
    stencil per output sample: memory and time linear in the number of input points."""
    n = wl.shape[0]
    i, t = _positions(wl, target)
    local = (t[:, None] ** np.arange(6)[None, :]) @ _SPRAGUE_COEF  # (M, 6) weights on p[i-2 .. i+3]
    # Worked with wavelength as the first axis: gathering whole rows of the padded data is ~2x faster
    # than gathering columns; every output value is the same sum in the same order (same bits).
    pT = np.empty((n + 4, values.shape[0]))
    pT[2 : n + 2] = values.T
    pT[1] = values[:, :6] @ _SPRAGUE_EXT[1]
    pT[0] = values[:, :6] @ _SPRAGUE_EXT[0]
    pT[n + 2] = values[:, -6:] @ _SPRAGUE_EXT[1][::-1]
    pT[n + 3] = values[:, -6:] @ _SPRAGUE_EXT[0][::-1]
    outT = np.zeros((target.shape[0], values.shape[0]))
    for k in range(6):
        outT += local[:, k, None] * pT[i + k]  # padded index i+k is p[i-2+k]
    return np.ascontiguousarray(outT.T)


def _linear(wl: np.ndarray, values: np.ndarray, target: np.ndarray) -> np.ndarray:
    i, t = _positions(wl, target)
    return values[:, i] * (1.0 - t) + values[:, i + 1] * t


def _pchip(wl: np.ndarray, values: np.ndarray, target: np.ndarray) -> np.ndarray:
    from scipy.interpolate import PchipInterpolator

    return PchipInterpolator(wl, values, axis=1, extrapolate=False)(np.clip(target, wl[0], wl[-1]))


def _copy_exact(wl: np.ndarray, values: np.ndarray, target: np.ndarray, out: np.ndarray) -> np.ndarray:
    """Samples measured exactly on a grid wavelength are copied, not re-interpolated (and the nearest
    measured value is repeated outside the measured range)."""
    target = np.clip(target, wl[0], wl[-1])
    j = np.clip(np.searchsorted(wl, target), 0, wl.shape[0] - 1)
    hit = np.abs(wl[j] - target) <= 1e-9
    out[:, hit] = values[:, j[hit]]
    return out


def _overshoot(values: np.ndarray, resampled: np.ndarray, lo: float, hi: float) -> np.ndarray:
    """Per spectrum, the worst value resampling drove below the measured data's own minimum (and
    below zero), relative to the measured peak; 0 where it did not."""
    inside = (WAVELENGTH_NM >= lo - 1e-9) & (WAVELENGTH_NM <= hi + 1e-9)
    peak = np.max(np.abs(values), axis=1)
    floor = np.minimum(values.min(axis=1), 0.0)
    low = resampled[:, inside].min(axis=1) if inside.any() else np.zeros(values.shape[0])
    with np.errstate(divide="ignore", invalid="ignore"):
        rel = np.where(peak > 0, low / np.where(peak > 0, peak, 1.0), 0.0)
    return np.where(low < floor - OVERSHOOT_LIMIT * peak, rel, 0.0)


def _overshoot_flag(rel: float, method: str) -> Flag:
    return Flag(
        "interpolation-overshoot",
        f"resampling to 1 nm ({method}) drove values negative, down to {rel:.2%} of the peak, between measured "
        "points (ringing around narrow lines); consider --interpolation linear",
    )


def interpolation_matrix(wavelength_nm: np.ndarray) -> np.ndarray | None:
    """The (471, L) Sprague matrix taking values on ``wavelength_nm`` to the working grid.

    ``None`` when the grid is non-uniform or has fewer than 6 points.  For inspection and tests:
    :func:`to_working_grid` applies the stencil directly and never builds this matrix.
    """
    wl = np.ascontiguousarray(wavelength_nm, dtype=np.float64)
    steps = np.diff(wl)
    if wl.shape[0] < 6 or not np.allclose(steps, steps[0], rtol=1e-6, atol=1e-9):
        return None
    W = _sprague(wl, np.eye(wl.shape[0]), WAVELENGTH_NM).T
    return _copy_exact(wl, np.eye(wl.shape[0]), WAVELENGTH_NM, W.T.copy()).T


def resample(
    wavelength_nm: np.ndarray, values: np.ndarray, method: str = "auto"
) -> tuple[np.ndarray, tuple[str, ...], np.ndarray]:
    """Values (N, L) on ``wavelength_nm`` brought to the working grid by ``method``.

    Returns the (N, 471) values, the method used for each spectrum, and each spectrum's overshoot
    (worst value driven below zero, relative to the peak; 0 where none).  Rules in the module notes.
    """
    if method not in INTERPOLATION_METHODS:
        raise InputError(f"interpolation must be one of {', '.join(INTERPOLATION_METHODS)}, got {method!r}")
    wl = np.asarray(wavelength_nm, dtype=np.float64)
    v = np.atleast_2d(np.asarray(values, dtype=np.float64))
    n, target = v.shape[0], WAVELENGTH_NM
    steps = np.diff(wl)
    uniform = wl.shape[0] >= 6 and bool(np.allclose(steps, steps[0], rtol=1e-6, atol=1e-9))
    on_grid = bool(np.all(np.abs(wl - np.rint(wl)) <= 1e-9)) and uniform and abs(steps[0] - 1.0) <= 1e-9
    if on_grid:  # 1 nm data on whole nanometres: copied; every method agrees
        out = _copy_exact(wl, v, target, _linear(wl, v, target))
        return out, ("as measured (1 nm)",) * n, np.zeros(n)
    if method == "sprague" and not uniform:
        raise InputError(
            "--interpolation sprague needs at least 6 uniformly spaced wavelengths; use linear or pchip for this file"
        )
    if method == "linear":
        out, used = _linear(wl, v, target), ("linear",) * n
    elif method == "pchip" or (method == "auto" and not uniform):
        out, used = _pchip(wl, v, target), ("pchip",) * n
    else:
        out, used = _sprague(wl, v, target), ("sprague",) * n
    out = _copy_exact(wl, v, target, out)
    return out, used, _overshoot(v, out, wl[0], wl[-1])


def to_working_grid(spectra: Spectra, *, interpolation: str = "auto") -> Spectra:
    """Resample ``spectra`` to 360-830 nm at 1 nm, once, by the rules in the module docstring."""
    if spectra.on_working_grid:
        return spectra
    wl = spectra.wavelength_nm
    values, used, over = resample(wl, spectra.values, interpolation)
    flags = tuple(f + ((_overshoot_flag(float(o), m),) if o < 0 else ()) for f, o, m in zip(spectra.flags, over, used))
    lo, hi = float(wl[0]), float(wl[-1])
    if lo > VISIBLE_BAND_NM[0] + 1e-9 or hi < VISIBLE_BAND_NM[1] - 1e-9:
        flags = tuple(f + (_range_flag(lo, hi),) for f in flags)
    return Spectra(
        wavelength_nm=WAVELENGTH_NM.copy(),
        values=values,
        names=spectra.names,
        quantity=spectra.quantity,
        sources=spectra.sources,
        sha256=spectra.sha256,
        flags=flags,
        measured_range_nm=spectra.measured_range_nm,
        metadata=spectra.metadata,
        measured_totals=spectra.measured_totals,
        interpolation=used,
    )


def concatenate(items: Iterable[Spectra], *, interpolation: str = "auto") -> Spectra:
    """Join several Spectra (each brought to the working grid by ``interpolation``) into one batch.

    All items must share one radiometric quantity.
    """
    items = [to_working_grid(s, interpolation=interpolation) for s in items]
    if not items:
        raise InputError("no spectra given")
    quantities = {s.quantity for s in items}
    if len(quantities) > 1:
        raise InputError(
            "spectra of different quantities cannot be analysed together: "
            + ", ".join(sorted(q.value for q in quantities))
        )
    return Spectra(
        wavelength_nm=WAVELENGTH_NM.copy(),
        values=np.concatenate([s.values for s in items]),
        names=sum((s.names for s in items), ()),
        quantity=items[0].quantity,
        sources=sum((s.sources for s in items), ()),
        sha256=sum((s.sha256 for s in items), ()),
        flags=sum((s.flags for s in items), ()),
        measured_range_nm=sum((s.measured_range_nm for s in items), ()),
        metadata=sum((s.metadata for s in items), ()),
        measured_totals=np.concatenate([s.measured_totals for s in items]),
        interpolation=sum((s.interpolation for s in items), ()),
    )


_LAST_RANGES: tuple = (None, None)


def range_array(measured_range_nm) -> np.ndarray:
    """(N, 2) float array of the (lo, hi) [nm] of each measured range (lo, hi[, step]), read-only.

    The measures of one :func:`cctkit.analysis.analyse` call each need this of the same tuple; the
    last tuple converted is remembered (by identity: a tuple of tuples cannot change), which spares
    a Python loop over every spectrum per measure.
    """
    global _LAST_RANGES
    key, arr = _LAST_RANGES
    if key is measured_range_nm:
        return arr
    arr = np.asarray([tuple(m)[:2] for m in measured_range_nm], dtype=np.float64).reshape(-1, 2)
    arr.setflags(write=False)
    if isinstance(measured_range_nm, tuple) and all(type(m) is tuple for m in measured_range_nm):
        _LAST_RANGES = (measured_range_nm, arr)
    return arr


def signal_problems(spectra: Spectra) -> tuple[Flag | None, ...]:
    """Per spectrum, why nothing can be computed from it (a ``no-visible-data`` or ``no-signal``
    flag), or None when something can.

    Nothing can be computed when the measured range does not overlap 380-780 nm, or when no
    measured value inside 380-780 nm is positive (an all-zero or all-dark spectrum).
    """
    lo_vis, hi_vis = VISIBLE_BAND_NM
    wl = spectra.wavelength_nm
    n = len(spectra)
    r = range_array(spectra.measured_range_nm).reshape(n, 2)
    lo, hi = r[:, 0], r[:, 1]
    outside = (hi < lo_vis) | (lo > hi_vis)
    if n and (r == r[0]).all():  # one measured range (a file, a batch chunk): one band of columns
        cols = np.flatnonzero((wl >= max(lo[0], lo_vis) - 1e-9) & (wl <= min(hi[0], hi_vis) + 1e-9))
        band = spectra.values[:, cols[0] : cols[-1] + 1] if cols.size else spectra.values[:, :0]
        # one column first (nearly every spectrum is positive mid-band), the whole band only for the rest
        signal = band[:, band.shape[1] // 2] > 0 if band.shape[1] else np.zeros(n, dtype=bool)
        rest = np.flatnonzero(~signal)
        if rest.size and band.shape[1]:
            signal[rest] = (band[rest] > 0).any(axis=1)
    else:  # the measured part of 380-780 nm, spectrum by spectrum, as one (N, L) mask
        inside = (wl >= np.maximum(lo, lo_vis)[:, None] - 1e-9) & (wl <= np.minimum(hi, hi_vis)[:, None] + 1e-9)
        signal = (inside & (spectra.values > 0)).any(axis=1)
    out: list[Flag | None] = [None] * n
    for i in np.flatnonzero(outside | ~signal).tolist():
        if outside[i]:
            out[i] = Flag(
                "no-visible-data",
                f"no measured data in {lo_vis:g}-{hi_vis:g} nm (measured "
                f"{lo[i]:g}-{hi[i]:g} nm): nothing can be computed",
            )
        else:
            out[i] = Flag(
                "no-signal",
                f"no signal: no positive value in {lo_vis:g}-{hi_vis:g} nm "
                "(all zero or below zero); nothing can be computed",
            )
    return tuple(out)


def require_signal(spectra: Spectra) -> Spectra:
    """``spectra`` unchanged, or :class:`InputError` naming the first spectrum nothing can be computed from."""
    for i, problem in enumerate(signal_problems(spectra)):
        if problem is not None:
            name = spectra.names[i]
            where = spectra.sources[i] or name
            text = problem.message
            raise InputError(f"spectrum {name!r}: {text}" if len(spectra) > 1 else text, source=where)
    return spectra


def sha256_of_file(path) -> str:
    """SHA-256 hex digest of a file's bytes."""
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for block in iter(lambda: fh.read(1 << 20), b""):
            h.update(block)
    return h.hexdigest()
