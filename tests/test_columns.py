"""Batch output built column-wise equals the record-by-record definition, value for value and byte for byte.

``Analysis.columns()`` and ``cctkit.batch.table_csv`` are faster routes to what
``Analysis.records()`` + ``flatten_record`` + ``formats.csv_text`` define; the expected
values here are those definitions themselves (the outside checks of the numbers live in
the tests of each measure).  Bit-identical: the same arithmetic, only arranged differently.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from cctkit.analysis import analyse
from cctkit.batch import _float_cells_py, records_table, table_csv
from cctkit.constants import WAVELENGTH_NM
from cctkit.formats import csv_text
from cctkit.spectra import Spectra


def leds(n: int, seed: int = 5) -> np.ndarray:
    """Our own two-band white LEDs, plus degenerate rows (dark, monochromatic, very cold)."""
    rng = np.random.default_rng(seed)
    wl = WAVELENGTH_NM[None, :]
    blue = rng.uniform(440, 462, (n, 1))
    peak = rng.uniform(545, 610, (n, 1))
    gain = rng.uniform(0.3, 1.8, (n, 1))
    v = 0.01 * (np.exp(-0.5 * ((wl - blue) / 9.5) ** 2) + gain * np.exp(-0.5 * ((wl - peak) / 55.0) ** 2))
    v[1] = 0.0  # no signal
    v[2] = 0.0
    v[2, 200] = 1.0  # monochromatic 560 nm: no CCT
    v[3] = np.exp(-0.5 * ((WAVELENGTH_NM - 450.0) / 30.0) ** 2)  # far above any reference CCT
    return v


@pytest.mark.parametrize("quantity", ["radiant-flux", "irradiance", "relative"])
@pytest.mark.parametrize("rendering", [True, False])
def test_columns_equal_flattened_records(quantity, rendering):
    s = Spectra(WAVELENGTH_NM, leds(40), tuple(f"lamp, {i}" for i in range(40)), quantity=quantity)
    a = analyse(s, rendering=rendering)
    expected = records_table(a.records())
    got = a.columns()
    assert list(got) == list(expected)  # the CSV header order
    for k in expected:
        assert got[k].dtype == expected[k].dtype, k
        if got[k].dtype == np.float64:
            np.testing.assert_array_equal(got[k], expected[k], err_msg=k)  # bit for bit, NaN where None
        else:
            assert got[k].tolist() == expected[k].tolist(), k


def test_part_columns_fall_back_to_records_when_they_disagree():
    from cctkit.analysis import _part_columns

    class Part:
        def columns(self):
            return {"a_nm": np.array([1.0, 2.0])}  # stale: the record has another key

        def record(self, i):
            return {"a_nm": [1.0, 2.0][i], "b": None}

    cols = _part_columns(Part(), 2)
    assert list(cols) == ["a_nm", "b"] and cols["a_nm"].tolist() == [1.0, 2.0] and np.isnan(cols["b"]).all()


def tricky_floats() -> np.ndarray:
    rng = np.random.default_rng(9)
    wide = rng.standard_normal(20_000) * np.exp(rng.uniform(-40, 45, 20_000))
    edges = [
        0.0,
        -0.0,
        1e-4,
        -1e-4,
        9.999999999999999e-05,
        1e10,
        9999999999.999998,
        1e16,
        1e15,
        123.0,
        -5.0,
        0.1,
        1 / 3,
        2.5e-7,
        1.7976931348623157e308,
        5e-324,
        math.nan,
        math.inf,
        -math.inf,
        380.0,
    ]
    return np.concatenate([edges, wide, np.round(wide, 3)])


def test_float_cells_are_repr_or_empty():
    x = tricky_floats()
    assert _float_cells_py(x) == ["" if not math.isfinite(v) else repr(v) for v in x.tolist()]


def test_table_csv_equals_csv_text_bytes(monkeypatch):
    x = tricky_floats()
    n = x.shape[0]
    names = np.empty(n, dtype=object)
    specials = ["plain", "with, comma", 'quote "q"', "line\nbreak", "cr\rhere", "", None, " lead", "=1+2", "é ü"]
    names[:] = [specials[i % len(specials)] for i in range(n)]
    table = {
        "name": names,
        "value": x,
        "scaled": x * 1e-3,
        "count": np.arange(n, dtype=np.int64) - 3,
        "ok": np.arange(n) % 3 == 0,
    }
    cols = list(table) + ["absent"]
    expected = csv_text(cols, zip(*(table[k].tolist() if k in table else [None] * n for k in cols)), write_header=False)
    assert table_csv(table, cols) == expected  # with pyarrow (a test dependency): numbers formatted in Arrow
    import builtins

    real_import = builtins.__import__

    def no_arrow(name, *args, **kwargs):
        if name.startswith("pyarrow"):
            raise ImportError(name)
        return real_import(name, *args, **kwargs)

    monkeypatch.setattr(builtins, "__import__", no_arrow)
    assert table_csv(table, cols) == expected  # and without it


@pytest.mark.parametrize("quantity", ["radiant-flux", "irradiance", "radiance", "intensity", "relative"])
def test_each_measure_has_columns_matching_its_record(quantity):
    """Each measure's columns() gives its record()'s keys and values (else batch falls back to slow rows)."""
    from cctkit.analysis import flatten_record

    s = Spectra(WAVELENGTH_NM, leds(6), tuple(f"m{i}" for i in range(6)), quantity=quantity)
    a = analyse(s, rendering=False)
    for part in (a.photometry, a.alphaopic, a.shape, a.dominant):
        cols = part.columns()
        for i in range(len(a)):
            rec = flatten_record(part.record(i))  # ranges [lo, hi] become *_lo / *_hi columns
            assert list(cols) == list(rec), f"{type(part).__name__}.columns() must follow record()"
            for k, v in rec.items():
                assert (v is None and not np.isfinite(cols[k][i])) or v == cols[k][i], (type(part).__name__, k)
