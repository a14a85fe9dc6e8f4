"""Repeat scans of one sample: their mean spectrum and the spread per wavelength.

A lab often measures one lamp several times (columns of one export, or several
files).  :func:`average_repeats` takes those scans and returns their arithmetic
mean as one spectrum, keeping the experimental standard deviation of the scans
at every wavelength (GUM JCGM 100:2008 section 4.2: s(q_k) with n - 1 in the
denominator) and that of the mean, s(q_k) / sqrt(n), which is the type-A
standard uncertainty an uncertainty budget takes as input.

Scans on one wavelength axis are averaged as measured; scans on different axes
are first brought to the working grid (:func:`cctkit.spectra.to_working_grid`).
All scans must be of one radiometric quantity.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from .errors import Flag, InputError
from .spectra import Spectra, concatenate, to_working_grid

__all__ = ["RepeatScans", "average_repeats"]


@dataclass(frozen=True)
class RepeatScans:
    """The mean of ``count`` repeat scans and their spread.

    Attributes
    ----------
    mean
        One spectrum: the mean of the scans, in the scans' quantity and unit.
    std_dev
        Experimental standard deviation of the scans per wavelength, shape (L,)
        [unit of ``mean``].
    std_dev_of_mean
        ``std_dev / sqrt(count)``, the type-A standard uncertainty of the mean, shape (L,).
    count
        Number of scans averaged.
    sources
        Where each scan came from.
    """

    mean: Spectra
    std_dev: np.ndarray
    std_dev_of_mean: np.ndarray
    count: int
    sources: tuple[str, ...]

    @property
    def wavelength_nm(self) -> np.ndarray:
        return self.mean.wavelength_nm

    def summary(self) -> dict[str, Any]:
        """Plain data for JSON output: the count, the sources and both spreads per wavelength."""
        peak = float(np.max(np.abs(self.mean.values))) or 1.0
        return {
            "count": self.count,
            "sources": list(self.sources),
            "wavelength_nm": self.wavelength_nm.tolist(),
            "std_dev": self.std_dev.tolist(),
            "std_dev_of_mean": self.std_dev_of_mean.tolist(),
            "largest_std_dev_of_peak": float(np.max(self.std_dev)) / peak,
        }


def average_repeats(scans: Spectra | Sequence[Spectra], *, name: str | None = None) -> RepeatScans:
    """The mean of repeat scans of one sample and their standard deviation per wavelength.

    Parameters
    ----------
    scans
        One Spectra holding every scan (e.g. the columns of one file), or several
        (e.g. one per file).  At least two scans, all of one quantity.
    name
        Name of the mean spectrum (default: the first scan's name and the count).

    Raises
    ------
    InputError
        Fewer than two scans, or scans of different quantities (naming both sources).
    """
    items = [scans] if isinstance(scans, Spectra) else list(scans)
    if not items:
        raise InputError("no scans given to average")
    for s in items[1:]:
        if s.quantity is not items[0].quantity:
            raise InputError(
                f"repeat scans must be of one quantity: {items[0].sources[0] or items[0].names[0]} is "
                f"{items[0].quantity.value}, this one is {s.quantity.value}",
                source=s.sources[0] or None,
            )
    same_axis = all(np.array_equal(s.wavelength_nm, items[0].wavelength_nm) for s in items)
    joined = _join_as_measured(items) if same_axis else concatenate([to_working_grid(s) for s in items])
    n = len(joined)
    if n < 2:
        raise InputError(f"averaging repeat scans needs at least 2 scans, got {n}", source=joined.sources[0] or None)
    values = joined.values
    mean = values.mean(axis=0)
    std = values.std(axis=0, ddof=1)
    label = name or f"{joined.names[0]} (mean of {n} scans)"
    flags = (Flag("mean-of-repeats", f"mean of {n} repeat scans; their standard deviation per wavelength is kept"),)
    metadata = joined.metadata[0] + (("repeat scans", str(n)),)
    mean_spectrum = Spectra(
        wavelength_nm=joined.wavelength_nm,
        values=mean[np.newaxis, :],
        names=(label,),
        quantity=joined.quantity,
        sources=(joined.sources[0],),
        sha256=(joined.sha256[0],),
        flags=(tuple(dict.fromkeys(f for fl in joined.flags for f in fl if f.code not in _REMADE)) + flags,),
        metadata=(metadata,),
    )
    std.setflags(write=False)
    sem = std / np.sqrt(n)
    sem.setflags(write=False)
    return RepeatScans(mean=mean_spectrum, std_dev=std, std_dev_of_mean=sem, count=n, sources=joined.sources)


# Flags the Spectra of the mean finds again for itself.
_REMADE = {"negative-values", "coarse-step"}


def _join_as_measured(items: list[Spectra]) -> Spectra:
    if len(items) == 1:
        return items[0]
    return Spectra(
        wavelength_nm=items[0].wavelength_nm,
        values=np.concatenate([s.values for s in items]),
        names=sum((s.names for s in items), ()),
        quantity=items[0].quantity,
        sources=sum((s.sources for s in items), ()),
        sha256=sum((s.sha256 for s in items), ()),
        flags=sum((s.flags for s in items), ()),
        metadata=sum((s.metadata for s in items), ()),
        measured_totals=np.concatenate([s.measured_totals for s in items]),
    )
