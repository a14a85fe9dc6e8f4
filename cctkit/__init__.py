"""cctkit: colour temperature, chromaticity, colour rendering and photometry from measured spectra."""

from __future__ import annotations

__version__ = "0.1.0"

__all__ = ["__version__", "Spectra", "Quantity", "cct_duv", "analyse", "read_spectra", "plot"]


def __getattr__(name: str):
    # Lazy so that `import cctkit` (and `cctkit --help`) stays cheap.
    if name in ("Spectra", "Quantity"):
        from . import spectra

        return getattr(spectra, name)
    if name == "cct_duv":
        from .cct import cct_duv

        return cct_duv
    if name == "analyse":
        from .analysis import analyse

        return analyse
    if name == "plot":
        import importlib

        return importlib.import_module(".plot", __name__)
    if name == "read_spectra":
        from .readers import read_spectra

        return read_spectra
    raise AttributeError(f"module 'cctkit' has no attribute {name!r}")
