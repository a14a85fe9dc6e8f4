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
from cctkit.batch import _float_cells, _float_rows, records_table, table_csv
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
    assert _float_cells(x) == ["" if not math.isfinite(v) else repr(v) for v in x.tolist()]


def test_table_csv_equals_csv_text_bytes():
    x = tricky_floats()
    n = x.shape[0]
    names = np.empty(n, dtype=object)
    specials = ["plain", "with, comma", 'quote "q"', "line\nbreak", "cr\rhere", "", None, " lead", "=1+2", "é ü"]
    names[:] = [specials[i % len(specials)] for i in range(n)]
    table = {
        "name": names,
        "plain": np.array([f"lamp {i}" for i in range(n)], dtype=object),
        "value": x,
        "scaled": x * 1e-3,
        "count": np.arange(n, dtype=np.int64) - 3,
        "ok": np.arange(n) % 3 == 0,
        "tiny": np.where(np.arange(n) % 2 == 0, x * 1e-7, 0.5),  # many rows with 1e-11 <= |v| < 1e-4
        "last": x[::-1].copy(),
    }
    cols = list(table) + ["absent"]
    expected = csv_text(cols, zip(*(table[k].tolist() if k in table else [None] * n for k in cols)), write_header=False)
    assert table_csv(table, cols) == expected
    few = {k: v[:40] for k, v in table.items()}  # few rows: each one in the band written again by repr
    expected = csv_text(cols, zip(*(few[k].tolist() if k in few else [None] * 40 for k in cols)), write_header=False)
    assert table_csv(few, cols) == expected


def random_doubles(n: int, seed: int) -> np.ndarray:
    """Every kind of double: random bit patterns (all exponents, both signs, subnormals, NaN/inf)."""
    bits = np.random.default_rng(seed).integers(0, 2**64, size=n, dtype=np.uint64, endpoint=False)
    return bits.view(np.float64)


@pytest.mark.parametrize("seed", [1, 2])
def test_float_rows_are_repr_for_any_double(seed):
    """The orjson route against Python's repr on random doubles, and around the band it leaves to repr."""
    rng = np.random.default_rng(seed)
    edges = (1e-4, 1e-5, 1e-9, 1e-10, 1e-11, 1e15, 1e16)
    near_band = np.array([e * (1 + k * np.finfo(float).eps) for e in edges for k in (-2, -1, 0, 1, 2)])
    logs = 10 ** rng.uniform(-14, 18, 100_000)
    for x in (random_doubles(200_000, seed), logs[np.abs(logs) >= 1e-4], logs, np.concatenate([near_band, -near_band])):
        x = x[: x.size // 5 * 5].reshape(-1, 5)
        expected = [",".join("" if not math.isfinite(v) else repr(v) for v in r) for r in x.tolist()]
        assert [r.decode() for r in _float_rows(x)] == expected


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


def test_arrow_buffers_equal_pyarrow_conversions():
    """The buffer-built Arrow arrays equal pyarrow's own conversions (which import pandas)."""
    pa = pytest.importorskip("pyarrow")
    from cctkit import arrow_buffers as ab

    x = tricky_floats()
    ok = np.isfinite(x)
    assert ab.float_array(x, ok).equals(pa.array(x, mask=~ok))
    assert ab.float_array(x[ok]).equals(pa.array(x[ok]))
    k = np.arange(-5, 70, dtype=np.int64)
    assert ab.int_array(k).equals(pa.array(k))
    b = k % 3 == 0
    assert ab.bool_array(b).equals(pa.array(b))
    assert ab.bool_array(b, k % 5 != 0).equals(pa.array([bool(v) if j % 5 else None for j, v in zip(k, b)]))
    for items in (["a", None, "", "lamp, 3", "é ü", None], ["plain"] * 9, [None, None], []):
        assert ab.string_array(items).equals(pa.array(items, type=pa.string()))
    table = pa.table({"a": pa.array(x[ok][:40]), "b": pa.array([f"r{i}" for i in range(40)])})
    sliced = table.slice(7, 20).column("a")  # an offset into the buffer
    np.testing.assert_array_equal(ab.floats_from_arrow(sliced), x[ok][7:27])
    two = pa.chunked_array([pa.array(x[ok][:5]), pa.array(x[ok][5:9])])
    np.testing.assert_array_equal(ab.floats_from_arrow(two), x[ok][:9])
    assert ab.floats_from_arrow(pa.array([1.0, None])) is None  # nulls: the caller's own route
    assert ab.floats_from_arrow(pa.array([1, 2])) is None


def test_batch_runs_do_not_import_pandas(tmp_path):
    """pyarrow's array conversions import pandas (~0.5 s a process): the batch path avoids them."""
    pytest.importorskip("pyarrow")
    import subprocess
    import sys

    wl = np.arange(380, 781, 5)
    src = tmp_path / "wide.csv"
    values = leds(10)[[0, 4, 5, 6, 7, 8]][:, np.searchsorted(WAVELENGTH_NM, wl)]
    rows = [f"L{i}," + ",".join(f"{v:.5g}" for v in r) for i, r in enumerate(values)]
    src.write_text("name," + ",".join(map(str, wl)) + "\n" + "\n".join(rows) + "\n")
    code = (
        "import sys\nfrom cctkit.readers.wide import open_chunked\nfrom cctkit.batch import run_batch\n"
        "for out in sys.argv[2:]:\n    run_batch(open_chunked(sys.argv[1], chunk_size=4), out, workers=1)\n"
        "print('pandas' in sys.modules)"
    )
    outs = [str(tmp_path / "o.csv"), str(tmp_path / "o.parquet")]
    res = subprocess.run([sys.executable, "-c", code, str(src), *outs], capture_output=True, text=True, check=True)
    assert res.stdout.strip() == "False"
    pq = pytest.importorskip("pyarrow.parquet")
    assert pq.read_table(outs[1]).num_rows == 6
