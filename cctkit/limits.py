"""Resource limits: how much one command reads and holds, written down in one place.

Commands other than ``batch`` hold all their spectra in memory at once, so they
refuse inputs past these limits with one line pointing to ``cctkit batch``,
which streams any number of spectra in chunks of bounded size.  Measured on the
project's 2-core machine: ``cctkit inspect --json`` of 10,000 spectra (5 nm,
380-780 nm) peaks at 532 MiB resident.
"""

from __future__ import annotations

__all__ = ["MAX_POINTS", "MAX_WAVELENGTH_NM", "MAX_SPECTRA", "MAX_VALUES", "too_many_spectra"]

#: Most wavelength points in one spectrum [points]: 0.005 nm steps over 360-830 nm.
MAX_POINTS = 100_000
#: Longest wavelength accepted [nm]: 1 mm, far beyond any optical spectrometer (a larger number is a unit error).
MAX_WAVELENGTH_NM = 1_000_000.0
#: Most spectra one command other than ``batch`` analyses [spectra].
MAX_SPECTRA = 10_000
#: Most spectral values (spectra x points) one command other than ``batch`` reads [values] (160 MB as float64).
MAX_VALUES = 20_000_000


def too_many_spectra(count: int) -> str:
    """The one-line reason for refusing ``count`` spectra in a command other than ``batch``."""
    return (
        f"{count} spectra in the inputs, over the limit of {MAX_SPECTRA} for one command; "
        "use `cctkit batch` for large lots"
    )
