"""``cctkit batch``: streamed chunks, local processes and Dask give the numbers ``inspect`` gives.

Numbers are compared two ways.  Where the chunks hold the same spectra in the same
order as the reference run, results must be identical to the last bit (identical
CSV bytes).  Where the chunking differs, BLAS may round a matrix product of a
different number of rows differently in the last bit, so those comparisons allow
1e-10 (relative or absolute): ULP-level differences grow through the colour-appearance
and CCT arithmetic to about 1e-12, while the coarsest published precision of these
numbers is 1e-4 (Duv) and 0.1 (Ra, Rf).
"""

from __future__ import annotations

import csv
import io
import json
import os
from pathlib import Path

import numpy as np
import pytest
from conftest import illuminant_A_spd
from typer.testing import CliRunner

from cctkit.cli import app  # registers every command, batch included
from cctkit.constants import C2_M_K

runner = CliRunner()


def run(*args):
    return runner.invoke(app, [str(a) for a in args])


# --------------------------------------------------------------------------- synthetic inputs


def led(wl, blue_nm, phosphor_gain, phosphor_nm=575.0, width_nm=55.0):
    """A phosphor-converted white LED of our own: a blue Gaussian plus a broad phosphor band."""
    wl = np.asarray(wl, dtype=float)
    blue = np.exp(-0.5 * ((wl - blue_nm) / 9.5) ** 2)
    phosphor = phosphor_gain * np.exp(-0.5 * ((wl - phosphor_nm) / width_nm) ** 2)
    return 0.02 * (blue + phosphor)


def write_wide(path: Path, wl, rows, names=None, *, header_comment="# quantity: irradiance"):
    with open(path, "w", encoding="utf-8") as fh:
        if header_comment:
            fh.write(header_comment + "\n")
        head = (["name"] if names is not None else []) + [f"{w:g}" for w in wl]
        fh.write(",".join(head) + "\n")
        for k, row in enumerate(rows):
            cells = ([names[k]] if names is not None else []) + [repr(float(v)) for v in row]
            fh.write(",".join(cells) + "\n")
    return path


def wide_rows(n, wl, seed=3):
    rng = np.random.default_rng(seed)
    blue = rng.uniform(440, 462, n)
    gain = rng.uniform(0.4, 1.6, n)
    peak = rng.uniform(545, 610, n)
    return np.stack([led(wl, b, g, p) for b, g, p in zip(blue, gain, peak)])


@pytest.fixture(scope="module")
def mixed_folder(tmp_path_factory):
    """Five files in five layouts, all irradiance, on different grids."""
    d = tmp_path_factory.mktemp("mixed")
    wl5 = np.arange(380, 781, 5.0)
    a = led(wl5, 450, 1.0)
    b = illuminant_A_spd(wl5) / 100.0
    with open(d / "a_long.csv", "w") as fh:
        fh.write("# Quay test bench (synthetic)\nwavelength (nm),north lamp (W/m2/nm),illuminant A (W/m2/nm)\n")
        for w, x, y in zip(wl5, a.tolist(), b.tolist()):
            fh.write(f"{w:g},{x!r},{y!r}\n")
    wl1 = np.arange(360, 831, 1.0)
    (d / "b_single.json").write_text(
        json.dumps(
            {
                "quantity": "irradiance",
                "wavelength_nm": wl1.tolist(),
                "spectra": [{"name": "south lamp", "values": led(wl1, 455, 1.3).tolist()}],
            }
        )
    )
    wl10 = np.arange(380, 781, 10.0)
    data = "\n".join(
        f'    <SpectralData wavelength="{w:g}">{v!r}</SpectralData>' for w, v in zip(wl10, led(wl10, 445, 0.8).tolist())
    )
    (d / "c_tm27.spdx").write_text(
        '<?xml version="1.0" encoding="UTF-8"?>\n<IESTM2714 xmlns="http://www.ies.org/iestm2714" version="1.0">\n'
        "  <Header><Manufacturer>Quay Works</Manufacturer><Description>synthetic</Description></Header>\n"
        "  <SpectralDistribution>\n    <SpectralQuantity>irradiance</SpectralQuantity>\n"
        f"{data}\n  </SpectralDistribution>\n</IESTM2714>\n"
    )
    wl2 = np.arange(780, 379, -2.0)  # descending: the reader reverses it and flags it
    with open(d / "d_descending.tsv", "w") as fh:
        fh.write("# quantity: irradiance\nwavelength\tpier lamp\tgate lamp\n")
        for w, x, y in zip(wl2, led(wl2, 452, 1.1, 590).tolist(), led(wl2, 458, 0.5).tolist()):
            fh.write(f"{w:g}\t{x!r}\t{y!r}\n")
    wl_short = np.arange(400, 701, 5.0)  # does not cover 380-780 nm: flagged range-short
    with open(d / "e_short.txt", "w") as fh:
        fh.write("# quantity: irradiance\n")
        for w, x in zip(wl_short, led(wl_short, 450, 1.2, 600).tolist()):
            fh.write(f"{w:g} {x!r}\n")
    (d / ".hidden.csv").write_text("not read\n")
    return d


def read_csv(path: Path) -> tuple[list[str], list[list[str]]]:
    with open(path, newline="", encoding="utf-8") as fh:
        rows = list(csv.reader(fh))
    return rows[0], rows[1:]


def assert_rows_close(header_a, rows_a, header_b, rows_b, tol=1e-10):
    """Same columns, same strings, numbers equal within ``tol`` (see the module docstring)."""
    assert header_a == header_b
    assert len(rows_a) == len(rows_b)
    for ra, rb in zip(rows_a, rows_b):
        for key, x, y in zip(header_a, ra, rb):
            if x == y:
                continue
            try:
                fx, fy = float(x), float(y)
            except ValueError:
                pytest.fail(f"{key}: {x!r} != {y!r}")
            assert fx == pytest.approx(fy, rel=tol, abs=tol), key


# --------------------------------------------------------------------------- equal to inspect


def test_mixed_folder_equals_inspect_exactly(mixed_folder, tmp_path):
    files = sorted(p for p in mixed_folder.iterdir() if not p.name.startswith("."))
    r = run("inspect", *files, "--output", tmp_path / "inspect.csv")
    assert r.exit_code == 0, r.stderr
    r = run("batch", mixed_folder, "--output", tmp_path / "batch.csv", "--workers", 1)
    assert r.exit_code == 0, r.stderr
    assert "7 spectra" in r.stderr
    # one chunk holding the same spectra in the same order: the very same numbers, byte for byte
    assert (tmp_path / "batch.csv").read_bytes() == (tmp_path / "inspect.csv").read_bytes()
    header, rows = read_csv(tmp_path / "batch.csv")
    names = [row[header.index("name")] for row in rows]
    # the TM-27 file is named by its Header Description
    assert names == ["north lamp", "illuminant A", "south lamp", "synthetic", "pier lamp", "gate lamp", "e_short"]
    flags = dict(zip(names, (row[header.index("flags")] for row in rows)))
    assert "wavelength-descending" in flags["pier lamp"] and "range-short" in flags["e_short"]
    # CIE 15:2018 section 4.1: CIE illuminant A has a CCT of about 2856 K (from memory)
    cct_A = float(rows[names.index("illuminant A")][header.index("cct_K")])
    assert cct_A == pytest.approx(2856, abs=2)


def test_mixed_folder_equals_each_file_inspected_alone(mixed_folder, tmp_path):
    r = run("batch", mixed_folder, "--output", tmp_path / "batch.csv", "--chunk-size", 3, "--workers", 2)
    assert r.exit_code == 0, r.stderr
    header, rows = read_csv(tmp_path / "batch.csv")
    expected: list[list[str]] = []
    ref_header = None
    for k, f in enumerate(sorted(p for p in mixed_folder.iterdir() if not p.name.startswith("."))):
        out = tmp_path / f"one{k}.csv"
        r = run("inspect", f, "--output", out)
        assert r.exit_code == 0, r.stderr
        ref_header, part = read_csv(out)
        expected += part
    assert_rows_close(header, rows, ref_header, expected)


def test_long_layout_file_goes_through_the_delimited_reader(mixed_folder, tmp_path):
    f = mixed_folder / "a_long.csv"
    assert run("inspect", f, "--output", tmp_path / "i.csv").exit_code == 0
    r = run("batch", f, "--output", tmp_path / "b.csv")
    assert r.exit_code == 0, r.stderr
    assert (tmp_path / "b.csv").read_bytes() == (tmp_path / "i.csv").read_bytes()


# --------------------------------------------------------------------------- chunking and executors


@pytest.fixture(scope="module")
def wide_file(tmp_path_factory):
    d = tmp_path_factory.mktemp("wide")
    wl = np.arange(380, 781, 5.0)
    rows = wide_rows(150, wl)
    names = [f"bay {k:03d}" for k in range(len(rows))]
    names[7] = '"bay, east"'  # a quoted name holding the delimiter
    return write_wide(d / "bays.csv", wl, rows, names)


def test_small_chunks_equal_one_chunk(wide_file, tmp_path):
    r = run("batch", wide_file, "-o", tmp_path / "one.csv", "--chunk-size", 1000, "--workers", 1)
    assert r.exit_code == 0, r.stderr
    r = run("batch", wide_file, "-o", tmp_path / "many.csv", "--chunk-size", 32, "--workers", 1)
    assert r.exit_code == 0, r.stderr
    assert "150 spectra in 5 chunks" in r.stderr
    h1, rows1 = read_csv(tmp_path / "one.csv")
    h2, rows2 = read_csv(tmp_path / "many.csv")
    assert_rows_close(h1, rows1, h2, rows2)
    assert rows1[7][0] == "bay, east" and rows1[149][0] == "bay 149"
    # the wide rows equal the same spectra analysed directly from a Spectra
    from cctkit.analysis import analyse
    from cctkit.batch import flatten_record
    from cctkit.readers.wide import open_chunked

    (chunk,) = list(open_chunked(wide_file, chunk_size=1000).chunks())
    ref = [flatten_record(rec) for rec in analyse(chunk).records()]
    assert ["" if r["cct_K"] is None else repr(r["cct_K"]) for r in ref] == [row[h1.index("cct_K")] for row in rows1]


def test_local_processes_equal_inline_exactly(wide_file, tmp_path):
    for workers in (1, 2):
        r = run("batch", wide_file, "-o", tmp_path / f"w{workers}.csv", "--chunk-size", 40, "--workers", workers)
        assert r.exit_code == 0, r.stderr
    assert "2 local processes" in r.stderr
    assert (tmp_path / "w1.csv").read_bytes() == (tmp_path / "w2.csv").read_bytes()


def test_dask_local_cluster_equals_local(wide_file, tmp_path):
    distributed = pytest.importorskip("distributed")
    r = run("batch", wide_file, "-o", tmp_path / "local.csv", "--chunk-size", 50, "--workers", 1)
    assert r.exit_code == 0, r.stderr
    with distributed.LocalCluster(
        n_workers=1, threads_per_worker=1, processes=False, dashboard_address=None
    ) as cluster:
        r = run(
            "batch",
            wide_file,
            "-o",
            tmp_path / "dask.csv",
            "--chunk-size",
            50,
            "--scheduler",
            cluster.scheduler_address,
        )
    assert r.exit_code == 0, r.stderr
    assert "dask" in r.stderr
    assert (tmp_path / "dask.csv").read_bytes() == (tmp_path / "local.csv").read_bytes()


def test_unreachable_scheduler_is_one_line(wide_file, tmp_path, monkeypatch):
    import cctkit.batch as batch

    monkeypatch.setattr(batch, "SCHEDULER_TIMEOUT_S", 1.0)
    r = run("batch", wide_file, "-o", tmp_path / "x.csv", "--scheduler", "tcp://127.0.0.1:9")
    assert r.exit_code == 2
    assert r.stderr.count("\n") == 1 and "--scheduler" in r.stderr
    assert not (tmp_path / "x.csv").exists()


# --------------------------------------------------------------------------- Parquet in and out


def test_parquet_output_holds_the_csv_numbers(wide_file, tmp_path):
    pq = pytest.importorskip("pyarrow.parquet")
    assert run("batch", wide_file, "-o", tmp_path / "r.csv", "--chunk-size", 64, "--workers", 1).exit_code == 0
    r = run("batch", wide_file, "-o", tmp_path / "r.parquet", "--chunk-size", 64, "--workers", 1)
    assert r.exit_code == 0, r.stderr
    table = pq.read_table(tmp_path / "r.parquet")
    header, rows = read_csv(tmp_path / "r.csv")
    assert table.column_names == header and table.num_rows == len(rows) == 150
    meta = json.loads(table.schema.metadata[b"cctkit"])
    assert meta["conventions"]["c2_m_K"] == pytest.approx(C2_M_K)  # 1.4388e-2 m K, CIE 15:2018 section 9.1
    for key in ("cct_K", "duv", "Ra", "Rf", "name", "cri_valid", "flags"):
        col = table.column(key).to_pylist()
        for value, cell in zip(col, (row[header.index(key)] for row in rows)):
            if value is None:
                assert cell == ""
            elif isinstance(value, float):
                assert value == float(cell)  # exact: same chunks, same numbers
            else:
                assert str(value) == cell


def test_parquet_inputs_equal_the_wide_csv(wide_file, tmp_path):
    pa = pytest.importorskip("pyarrow")
    import pyarrow.parquet as pq

    from cctkit.readers.wide import open_chunked

    (ref,) = list(open_chunked(wide_file, chunk_size=1000).chunks())
    # one column per wavelength, deliberately written in descending order
    cols = {"name": pa.array(list(ref.names))}
    for j in range(ref.wavelength_nm.size - 1, -1, -1):
        cols[f"{ref.wavelength_nm[j]:g}"] = pa.array(ref.values[:, j])
    pq.write_table(
        pa.table(cols).replace_schema_metadata({"quantity": "irradiance"}), tmp_path / "cols.parquet", row_group_size=40
    )
    # one list column with the axis in the metadata
    t = pa.table({"values": pa.array(ref.values.tolist(), type=pa.list_(pa.float64()))})
    t = t.replace_schema_metadata({"wavelength_nm": json.dumps(ref.wavelength_nm.tolist()), "quantity": "irradiance"})
    pq.write_table(t, tmp_path / "list.parquet")
    for name in ("cols.parquet", "list.parquet"):
        chunks = list(open_chunked(tmp_path / name, chunk_size=64).chunks())
        assert [len(c) for c in chunks] == [64, 64, 22]
        values = np.concatenate([c.values for c in chunks])
        np.testing.assert_array_equal(values, ref.values)
        assert chunks[0].quantity.value == "irradiance"
    assert list(open_chunked(tmp_path / "cols.parquet").chunks())[0].names == ref.names


def test_parquet_row_of_wrong_length_names_the_row(tmp_path):
    pa = pytest.importorskip("pyarrow")
    import pyarrow.parquet as pq

    t = pa.table({"values": pa.array([[1.0] * 6, [1.0] * 5], type=pa.list_(pa.float64()))})
    t = t.replace_schema_metadata({"wavelength_nm": json.dumps([400, 450, 500, 550, 600, 650])})
    pq.write_table(t, tmp_path / "bad.parquet")
    r = run("batch", tmp_path / "bad.parquet", "-o", tmp_path / "o.csv")
    assert r.exit_code == 2 and r.stderr.count("\n") == 1
    assert "bad.parquet" in r.stderr and "row 2" in r.stderr and "5 values" in r.stderr


# --------------------------------------------------------------------------- bad input and safe output


@pytest.mark.parametrize(
    "row, message",
    [
        ("bay x,1,2,3", "row has 3 values, the header has 81 wavelengths"),
        ("bay x," + ",".join(["0.1"] * 40 + ["abc"] + ["0.1"] * 40), "expected a number, got 'abc' in value column 41"),
        ("bay x," + ",".join(["0.1"] * 80 + [""]), "empty cell in value column 81"),
        ("bay x," + ",".join(["nan"] + ["0.1"] * 80), "missing or non-finite value at 380 nm"),
    ],
)
def test_malformed_row_is_one_line_naming_file_and_line(tmp_path, row, message):
    wl = np.arange(380, 781, 5.0)
    path = write_wide(tmp_path / "bays.csv", wl, wide_rows(100, wl), [f"b{k}" for k in range(100)])
    lines = path.read_text().splitlines()
    lines.insert(80, row)  # file line 81, inside the third chunk of 32
    path.write_text("\n".join(lines) + "\n")
    before = sorted(os.listdir(tmp_path))
    r = run("batch", path, "-o", tmp_path / "out.csv", "--chunk-size", 32, "--workers", 1)
    assert r.exit_code == 2
    assert r.stderr.count("\n") == 1 and "Traceback" not in r.stderr
    assert f"{path}:81: {message}" in r.stderr
    # the first two chunks were already written to a temporary file: nothing of it is left
    assert sorted(os.listdir(tmp_path)) == before


def test_output_is_not_overwritten_without_the_flag(wide_file, tmp_path):
    out = tmp_path / "out.csv"
    out.write_text("keep me\n")
    r = run("batch", wide_file, "-o", out)
    assert r.exit_code == 2 and r.stderr.count("\n") == 1
    assert "--overwrite" in r.stderr
    assert out.read_text() == "keep me\n"
    r = run("batch", wide_file, "-o", out, "--overwrite", "--workers", 1)
    assert r.exit_code == 0, r.stderr
    assert out.read_text().startswith("name,source,sha256")


def test_output_over_the_input_is_refused(wide_file, tmp_path):
    before = wide_file.read_bytes()
    r = run("batch", wide_file, "-o", wide_file, "--overwrite")
    assert r.exit_code == 2 and "input" in r.stderr
    assert wide_file.read_bytes() == before


def test_injected_failure_leaves_nothing(wide_file, tmp_path, monkeypatch):
    import cctkit.batch as batch

    real = batch._results  # the analysis half of each chunk's work, in this process and in the workers
    calls = []

    def failing(chunk, *opts):
        calls.append(len(chunk))
        if len(calls) == 3:
            raise batch.InputError("injected failure in the third chunk")
        return real(chunk, *opts)

    monkeypatch.setattr(batch, "_results", failing)
    for out in (tmp_path / "o.csv", tmp_path / "o.parquet"):
        calls.clear()
        r = run("batch", wide_file, "-o", out, "--chunk-size", 20, "--workers", 1)
        assert r.exit_code == 2 and "injected failure" in r.stderr
        assert calls == [20, 20, 20]
    assert os.listdir(tmp_path) == []


@pytest.mark.parametrize(
    "args, message",
    [
        (["--chunk-size", "0"], "--chunk-size must be at least 1"),
        (["--workers", "0"], "--workers must be at least 1"),
        (["--quantity", "brightness"], "unknown quantity"),
    ],
)
def test_bad_arguments_are_one_line(wide_file, tmp_path, args, message):
    r = run("batch", wide_file, "-o", tmp_path / "o.csv", *args)
    assert r.exit_code == 2 and r.stderr.count("\n") == 1 and message in r.stderr


def test_bad_inputs_are_one_line(tmp_path):
    (tmp_path / "empty").mkdir()
    (tmp_path / "x.bin").write_bytes(b"\x00\x01")
    (tmp_path / "q.csv").write_text("# quantity: radiance\nname,400,450,500,550,600\na,1,2,3,4,5\n")
    cases = [
        (tmp_path / "missing.csv", "not found"),
        (tmp_path / "empty", "holds no spectrum files"),
        (tmp_path / "x.bin", "unknown input type"),
    ]
    for path, message in cases:
        r = run("batch", path, "-o", tmp_path / "o.csv")
        assert r.exit_code == 2 and r.stderr.count("\n") == 1 and message in r.stderr, (path, r.stderr)
    r = run("batch", tmp_path / "q.csv", "-o", tmp_path / "o.csv", "--quantity", "irradiance")
    assert r.exit_code == 2 and "states quantity 'radiance'" in r.stderr
    assert not (tmp_path / "o.csv").exists()


def test_folder_of_mixed_quantities_names_the_file(tmp_path):
    wl = np.arange(380, 781, 5.0)
    write_wide(tmp_path / "a.csv", wl, wide_rows(2, wl), header_comment="# quantity: irradiance")
    write_wide(tmp_path / "b.csv", wl, wide_rows(2, wl), header_comment="# quantity: radiance")
    out = tmp_path.parent / f"{tmp_path.name}-o.csv"
    r = run("batch", tmp_path, "-o", out)
    assert r.exit_code == 2 and r.stderr.count("\n") == 1
    assert f"{tmp_path / 'b.csv'}: holds 'radiance' spectra while earlier files hold 'irradiance'" in r.stderr
    assert not out.exists()


def test_folder_of_wide_files_reads_each_in_order(tmp_path):
    wl = np.arange(380, 781, 5.0)
    rows = wide_rows(5, wl)
    write_wide(tmp_path / "a.csv", wl, rows[:3], ["r0", "r1", "r2"])
    write_wide(tmp_path / "b.csv", wl, rows[3:], header_comment=None)  # unnamed rows, relative
    from cctkit.readers.wide import open_chunked

    with pytest.raises(Exception, match="holds 'relative' spectra"):
        list(open_chunked(tmp_path).chunks())
    chunks = list(open_chunked(tmp_path, chunk_size=2, quantity="irradiance").chunks())
    assert [len(c) for c in chunks] == [2, 2, 1]
    assert sum((c.names for c in chunks), ()) == ("r0", "r1", "r2", "b#1", "b#2")


def test_progress_line_reports_rate_and_eta():
    from cctkit.batch import Progress

    buf = io.StringIO()
    p = Progress(1000, stream=buf, interval_s=0.0)
    p.update(250)
    p.finish()
    text = buf.getvalue()
    # not a terminal: plain lines, each complete, no carriage returns running together
    assert text.startswith("250/1,000 spectra ( 25.0%)") and "spectra/s" in text and "ETA" in text
    assert text.endswith("\n") and "\r" not in text and text.count("\n") == 2
    silent = io.StringIO()
    q = Progress(None, stream=silent, enabled=False)
    q.update(5)
    q.finish()
    assert silent.getvalue() == "" and q.done == 5


def test_columnar_table_matches_row_by_row_flattening(wide_file):
    """records_table (column by column) against flatten_record applied row by row."""
    from cctkit.analysis import analyse
    from cctkit.batch import _column, flatten_record, records_table
    from cctkit.readers.wide import open_chunked

    (chunk,) = list(open_chunked(wide_file, chunk_size=1000).chunks())
    real = analyse(chunk.select(slice(0, 40))).records()
    odd = [
        {"name": "a", "x": 1.0, "R": [1.0, None], "flags": [{"code": "c1", "message": "m"}], "n": 2, "ok": True},
        {"name": "b", "x": None, "R": [2.0, 3.0], "flags": [], "n": 3, "ok": None, "extra": "s", "L": [1, 2, 3]},
        {
            "name": "c",
            "x": 2.5,
            "R": None,
            "flags": [{"code": "c1", "message": "m"}, {"code": "c2", "message": "n"}],
            "n": 4,
            "ok": False,
            "L": [4, 5],
        },
    ]
    for records in (real, odd):
        flat = [flatten_record(r) for r in records]
        keys: dict[str, None] = {}
        for f in flat:
            keys.update(dict.fromkeys(f))
        table = records_table(records)
        assert sorted(table) == sorted(keys)
        if records is real:
            assert list(table) == list(keys)  # the CSV header order of inspect
        for k in keys:
            ref = _column(k, [f.get(k) for f in flat])
            got = table[k]
            assert got.dtype == ref.dtype, k
            if got.dtype == np.float64:
                np.testing.assert_array_equal(got, ref)
            else:
                assert got.tolist() == ref.tolist(), k
    table = records_table(odd)
    assert table["flags"].tolist() == ["c1", "", "c1;c2"]
    assert np.isnan(table["x"][1]) and table["n"].dtype == np.int64 and table["ok"].tolist() == [True, None, False]


def test_wide_unit_directive_and_descending_header(tmp_path):
    from cctkit.readers.wide import open_chunked

    wl = np.arange(380, 781, 5.0)
    rows = wide_rows(4, wl)
    write_wide(tmp_path / "w.csv", wl, rows, ["a", "b", "c", "d"], header_comment="# quantity: irradiance")
    write_wide(
        tmp_path / "mw.csv", wl[::-1], rows[:, ::-1] * 1000.0, ["a", "b", "c", "d"], header_comment="# unit: mW/m2/nm"
    )
    (ref,) = list(open_chunked(tmp_path / "w.csv").chunks())
    (got,) = list(open_chunked(tmp_path / "mw.csv").chunks())
    assert got.quantity is ref.quantity and got.quantity.value == "irradiance"
    np.testing.assert_array_equal(got.wavelength_nm, wl)
    np.testing.assert_allclose(got.values, ref.values, rtol=1e-15)  # mW -> W is a factor 1e-3 (SI prefix)
    assert all(f.code == "wavelength-descending" for f in got.flags[0]) and got.flags[0]
    assert got.sources[2] == f"{tmp_path / 'mw.csv'}#c" and len(set(got.sha256)) == 1
