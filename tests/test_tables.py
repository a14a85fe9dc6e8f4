"""Weighting tables on the working grid, and their cache."""

import numpy as np
import pytest

from cctkit import tables
from cctkit.constants import WAVELENGTH_NM


def at(nm):
    return int(np.flatnonzero(WAVELENGTH_NM == nm)[0])


@pytest.mark.parametrize(
    "nm, col, value",
    [
        (555, 1, 1.0),  # CIE 15:2018 Table T.4: y-bar(555 nm) = 1.000000 (from memory)
        (600, 0, 1.0622),  # CIE 1931 x-bar(600 nm) = 1.0622 (from memory)
        (450, 2, 1.7721),  # CIE 1931 z-bar(450 nm) = 1.7721 (from memory)
    ],
)
def test_cie_1931_values(nm, col, value):
    assert tables.cmfs(2)[at(nm), col] == pytest.approx(value, abs=1e-4)


def test_tables_equal_the_reference_library_data():
    # reference library: colour-science 0.4 datasets, the source of every table
    import colour

    c = colour.MSDS_CMFS["CIE 1964 10 Degree Standard Observer"]
    assert np.array_equal(tables.cmfs(10), c.values)
    d = colour.colorimetry.SDS_BASIS_FUNCTIONS_CIE_ILLUMINANT_D_SERIES["S0"]
    assert tables.table("d_basis")[at(560), 0] == pytest.approx(d[560], abs=1e-12)
    # 99 CES (CIE 224:2017), 14 TCS (CIE 13.3-1995), 471 = 360-830 nm at 1 nm
    assert tables.table("ces_2017").shape == (471, 99) and tables.table("tcs_1995").shape == (471, 14)
    # zero outside the published ranges of the action spectra (the CIE 170-1:2006 cone fundamentals start at 390 nm)
    assert np.all(tables.table("lms_10")[: at(390)] == 0)


def test_corrupt_cache_is_rebuilt(tmp_path, monkeypatch):
    monkeypatch.setenv("CCTKIT_CACHE_DIR", str(tmp_path))
    tables._all_tables.cache_clear()
    try:
        good = tables.table("cmf_2").copy()
        path = tables.cache_path()
        assert path.exists()
        path.write_bytes(b"not an npz file")
        tables._all_tables.cache_clear()
        assert np.array_equal(tables.table("cmf_2"), good)
    finally:
        tables._all_tables.cache_clear()


def test_unknown_table_and_observer():
    with pytest.raises(ValueError, match="unknown table 'cmf_3'"):
        tables.table("cmf_3")
    with pytest.raises(ValueError, match="observer must be 2 or 10"):
        tables.cmfs(5)


def test_cache_missing_a_key_is_rebuilt_and_rewritten(tmp_path, monkeypatch):
    monkeypatch.setenv("CCTKIT_CACHE_DIR", str(tmp_path))
    tables._all_tables.cache_clear()
    try:
        good = tables.table("cmf_2").copy()
        path = tables.cache_path()
        np.savez(path, cmf_2=good)  # a cache of another layout: one table only
        tables._all_tables.cache_clear()
        assert np.array_equal(tables.table("ces_2017"), tables.table("ces_2017"))
        with np.load(path) as z:
            assert set(tables.TABLE_NAMES) <= set(z.files)  # rewritten whole
        assert not list(tmp_path.glob("*.tmp*"))
    finally:
        tables._all_tables.cache_clear()
