import os

import numpy as np
import pytest

# Tests must not depend on (or pollute) the user's table cache: use one per session.
os.environ.setdefault(
    "CCTKIT_CACHE_DIR", os.path.join(os.path.dirname(__file__), "..", ".pytest_cache", "cctkit-tables")
)


@pytest.fixture(scope="session")
def rng():
    return np.random.default_rng(20261201)


def illuminant_A_spd(wavelength_nm):
    """CIE standard illuminant A from its defining formula (CIE 15:2018 eq. 4.1, c2 = 1.435e-2 m K)."""
    lam = np.asarray(wavelength_nm, dtype=float)
    c = 1.435e7  # nm K
    return 100.0 * (560.0 / lam) ** 5 * (np.exp(c / (2848 * 560.0)) - 1) / (np.exp(c / (2848 * lam)) - 1)


def cie_illuminant_1nm(name: str) -> np.ndarray:
    """A CIE illuminant from the reference library (colour-science 0.4.7), brought to 1 nm over
    360-830 nm by its own interpolator, which for the CIE D65 / A datasets is linear (CIE 15:2018
    practice for D65).  Skips the test when colour-science is missing."""
    colour = pytest.importorskip("colour")
    sd = colour.SDS_ILLUMINANTS[name].copy().align(colour.SpectralShape(360, 830, 1))
    return np.asarray(sd.values)


def build_report_strict(analysis, path, **kw):
    """``cctkit.report.build_report`` with a fixed date, turning any warning into a failure."""
    import warnings

    from cctkit.report import build_report

    with warnings.catch_warnings():
        warnings.simplefilter("error")  # any matplotlib (or numpy) warning fails the test
        return build_report(analysis, path, date="2026-01-15", **kw)


def pdf_page_texts(path) -> list[str]:
    """The extracted text of each page of a PDF (pypdf)."""
    pypdf = pytest.importorskip("pypdf")
    return [p.extract_text() for p in pypdf.PdfReader(str(path)).pages]
