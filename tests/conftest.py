import os

import numpy as np
import pytest

# Tests must not depend on (or pollute) the user's table cache: use one per session.
os.environ.setdefault("CCTKIT_CACHE_DIR", os.path.join(os.path.dirname(__file__), "..", ".pytest_cache", "cctkit-tables"))


@pytest.fixture(scope="session")
def rng():
    return np.random.default_rng(20261201)


def illuminant_A_spd(wavelength_nm):
    """CIE standard illuminant A from its defining formula (CIE 15:2018 eq. 4.1, c2 = 1.435e-2 m K)."""
    lam = np.asarray(wavelength_nm, dtype=float)
    c = 1.435e7  # nm K
    return 100.0 * (560.0 / lam) ** 5 * (np.exp(c / (2848 * 560.0)) - 1) / (np.exp(c / (2848 * lam)) - 1)
