"""The batch data path's fast routes give what the plain routes give.

The wide-CSV reader takes chunks of plain lines as one block of bytes parsed by Arrow
(``readers.wide._iter_wide_bytes``); every other line goes line by line, as the reader
always did (``_iter_wide`` on a file that may hold CR or control characters).  Both must
yield the same spectra to the last bit, and the same errors.
"""

from __future__ import annotations

import dataclasses
from pathlib import Path

import numpy as np
import pytest

import cctkit.readers.wide as wide
from cctkit.errors import InputError

WL = [380 + 5 * k for k in range(81)]


def _rows(n: int, seed: int = 7) -> list[list[str]]:
    rng = np.random.default_rng(seed)
    wl = np.array(WL, dtype=float)
    blue = rng.uniform(440, 462, n)[:, None]
    v = np.exp(-0.5 * ((wl - blue) / 9.5) ** 2) + rng.uniform(0.5, 1.5, n)[:, None] * np.exp(
        -0.5 * ((wl - 575) / 55) ** 2
    )
    return [[repr(x) for x in r] for r in v.tolist()]


def _both(path: Path, chunk_size: int, *, skip: bool = False):
    """(spectra or error, skipped) read by the byte route and by the line route."""
    head = wide._wide_head(path, str(path))
    assert head is not None and not head.controls and not head.carriage_returns  # the byte route applies
    quantity = wide.resolve_quantity(head.quantity, None, source=str(path))
    out = []
    for h in (head, dataclasses.replace(head, carriage_returns=True)):  # the second: line by line
        skipped: list[InputError] | None = [] if skip else None
        try:
            got: object = list(wide._iter_wide(path, str(path), chunk_size, quantity, h, skipped))
        except InputError as exc:
            got = (str(exc), exc.line)
        out.append((got, [(str(e), e.line) for e in skipped or []]))
    return out


def _assert_same(a, b) -> None:
    (got_a, skipped_a), (got_b, skipped_b) = a, b
    assert skipped_a == skipped_b
    if isinstance(got_b, tuple):
        assert got_a == got_b
        return
    assert isinstance(got_a, list) and len(got_a) == len(got_b)
    for x, y in zip(got_a, got_b):
        for f in dataclasses.fields(x):
            u, v = getattr(x, f.name), getattr(y, f.name)
            if isinstance(u, np.ndarray):
                assert u.dtype == v.dtype and u.shape == v.shape and u.tobytes() == v.tobytes(), f.name
            else:
                assert u == v, f.name


def _write(path: Path, lines: list[str], *, named: bool = True, prelude: str = "# quantity: irradiance\n") -> Path:
    head = (["name"] if named else []) + [str(w) for w in WL]
    path.write_text(prelude + ",".join(head) + "\n" + "".join(line + "\n" for line in lines), encoding="utf-8")
    return path


@pytest.mark.parametrize("chunk_size", [1, 7, 64, 1000])
def test_byte_route_equals_line_route_on_mixed_lines(tmp_path, chunk_size, monkeypatch):
    plain = []
    real = wide._plain_rows
    monkeypatch.setattr(wide, "_plain_rows", lambda *a: plain.append(real(*a)) or plain[-1])
    rows = _rows(150)
    lines = [",".join([f"lamp {k:03d}", *r]) for k, r in enumerate(rows)]
    # what the byte route must leave to the line route, spread over the chunks
    lines[3] = "# a comment among the rows"
    lines[10] = ""
    lines[11] = "   "
    lines[12] = ",,,"
    lines[20] = '"lamp, quoted",' + ",".join(rows[20])
    lines[30] = "  lamp padded  ," + ",".join(rows[30]) + "  "
    lines[40] = "," + ",".join(rows[40])  # no name: named after the file and its row
    lines[50] = "Lüminaire 50," + ",".join(rows[50])  # not ASCII
    lines[60] = "% another comment"
    lines[70] = "lamp 70," + ",".join(r.upper() for r in rows[70])  # 1E-05 style cells
    lines[80] = "lamp 80," + ",".join(["+" + rows[80][0], *rows[80][1:]])
    lines[90] = "// and one more"
    path = _write(tmp_path / "mixed.csv", lines)
    _assert_same(*_both(path, chunk_size))
    taken = sum(p is not None for p in plain)
    assert taken > 0 if chunk_size < 1000 else taken == 0  # both routes were used where chunks hold plain lines only


def test_byte_route_equals_line_route_without_names_and_trailing_newline(tmp_path):
    rows = _rows(40)
    path = tmp_path / "unnamed.csv"
    path.write_text(",".join(map(str, WL)) + "\n" + "\n".join(",".join(r) for r in rows), encoding="utf-8")
    _assert_same(*_both(path, 16))
    a = _both(path, 16)[0][0]
    assert isinstance(a, list) and a[0].names[0] == "unnamed#1" and a[-1].names[-1] == "unnamed#40"


@pytest.mark.parametrize(
    "bad",
    [
        "lamp x," + ",".join(["0.5"] * 80 + ["abc"]),  # not a number
        "lamp x," + ",".join(["0.5"] * 80),  # a value short
        "lamp x," + ",".join(["0.5"] * 80 + ["nan"]),  # not finite
        "lamp x," + ",".join(["0.0"] * 81),  # no signal
        "# quantity: radiance",  # a directive after the header
    ],
)
@pytest.mark.parametrize("skip", [False, True])
def test_bad_rows_give_the_same_error_or_skip_on_both_routes(tmp_path, bad, skip):
    rows = _rows(30)
    lines = [",".join([f"lamp {k}", *r]) for k, r in enumerate(rows)]
    lines[17] = bad
    path = _write(tmp_path / "bad.csv", lines)
    a, b = _both(path, 8, skip=skip)
    _assert_same(a, b)
    no_signal = bad.endswith(",0.0")  # without --skip-bad such a row is analysed and flagged
    if bad.startswith("#") or (not skip and not no_signal):
        assert isinstance(b[0], tuple) and b[0][1] is not None  # one error, naming its line
    elif skip:
        assert len(b[1]) == 1 and b[1][0][1] == 2 + 1 + 17  # prelude, header, then the 18th row
    else:
        assert isinstance(b[0], list) and sum(len(s) for s in b[0]) == 30


def test_descending_header_and_unit_directive_on_the_byte_route(tmp_path):
    rows = _rows(20)
    head = ["name", *map(str, WL[::-1])]
    body = "".join(f"n{k}," + ",".join(r) + "\n" for k, r in enumerate(rows))
    text = "# unit: mW/m2/nm\n" + ",".join(head) + "\n" + body
    path = tmp_path / "desc.csv"
    path.write_text(text, encoding="utf-8")
    _assert_same(*_both(path, 6))
    got = _both(path, 100)[0][0]
    assert isinstance(got, list)
    # mW -> W, and the file's last column is the first wavelength
    assert got[0].values[0, 0] == float(rows[0][-1]) * 1e-3


# --------------------------------------------------------------------------- writers


@pytest.fixture(scope="module")
def small_lot(tmp_path_factory) -> Path:
    """A wide CSV of 60 LED-like spectra of our own."""
    path = tmp_path_factory.mktemp("lot") / "lot.csv"
    return _write(path, [",".join([f"unit {k:02d}", *r]) for k, r in enumerate(_rows(60, seed=3))])


def _batch(source: Path, out: Path, **kw):
    from cctkit.batch import run_batch
    from cctkit.readers.wide import open_chunked

    return run_batch(open_chunked(source, chunk_size=16), out, rendering=False, **kw)


def test_parquet_written_behind_equals_parquet_written_in_place(small_lot, tmp_path, monkeypatch):
    import cctkit.batch as batch

    behind = []
    real = batch._ParquetWriter.__init__

    def spy(self, path, metadata, **kw):
        behind.append(kw.get("behind", False))
        real(self, path, metadata, **kw)

    monkeypatch.setattr(batch._ParquetWriter, "__init__", spy)
    _batch(small_lot, tmp_path / "behind.parquet", workers=1)
    monkeypatch.setattr(batch._ParquetWriter, "__init__", lambda self, path, metadata, **kw: real(self, path, metadata))
    _batch(small_lot, tmp_path / "in-place.parquet", workers=1)
    assert behind == [True]  # one process: the chunks were encoded by the writing thread
    assert (tmp_path / "behind.parquet").read_bytes() == (tmp_path / "in-place.parquet").read_bytes()


def test_a_failed_write_behind_is_one_error_and_leaves_nothing(small_lot, tmp_path, monkeypatch):
    import errno
    import threading

    import pyarrow.parquet as pq

    real = pq.ParquetWriter.write_table
    calls = []

    def full_disk(self, table, *a, **k):
        calls.append(threading.current_thread().name)
        if len(calls) == 2:
            raise OSError(errno.ENOSPC, "No space left on device")
        return real(self, table, *a, **k)

    monkeypatch.setattr(pq.ParquetWriter, "write_table", full_disk)
    out_dir = tmp_path / "out"
    out_dir.mkdir()
    with pytest.raises(InputError, match="No space left on device") as caught:
        _batch(small_lot, out_dir / "r.parquet", workers=1)
    assert caught.value.source == str(out_dir / "r.parquet")
    assert calls[0].startswith("cctkit-parquet-writer")
    assert list(out_dir.iterdir()) == []  # no output, no temporary file
    assert not [t for t in threading.enumerate() if t.name.startswith("cctkit-parquet-writer")]


@pytest.mark.parametrize("suffix", [".parquet", ".csv"])
def test_ctrl_c_while_a_chunk_is_written_leaves_nothing(small_lot, tmp_path, suffix):
    import threading

    from cctkit.batch import Progress

    class Interrupted(Progress):
        def update(self, n):
            super().update(n)
            if self.done >= 32:
                raise KeyboardInterrupt

    out_dir = tmp_path / "out"
    out_dir.mkdir()
    with pytest.raises(KeyboardInterrupt):
        _batch(small_lot, out_dir / f"r{suffix}", workers=1, progress=Interrupted(None, enabled=False))
    assert list(out_dir.iterdir()) == []
    assert not [t for t in threading.enumerate() if t.name.startswith("cctkit-parquet-writer")]


def test_csv_output_has_its_writeback_started_chunk_by_chunk(small_lot, tmp_path, monkeypatch):
    import cctkit.batch as batch

    ranges = []
    real = batch._start_writeback
    monkeypatch.setattr(batch, "_start_writeback", lambda fd, a, b: ranges.append((a, b)) or real(fd, a, b))
    out = tmp_path / "r.csv"
    _batch(small_lot, out, workers=1)
    assert len(ranges) == 4  # 60 spectra in chunks of 16
    assert all(b > a for a, b in ranges) and all(x[1] == y[0] for x, y in zip(ranges, ranges[1:]))
    assert ranges[-1][1] == out.stat().st_size


@pytest.mark.parametrize("how", ["kernel", "across file systems", "appending"])
def test_rows_left_in_a_result_file_are_copied_after_what_is_written(tmp_path, monkeypatch, how):
    import errno
    import os

    import cctkit.batch as batch

    spool = tmp_path / "spool"
    spool.mkdir()
    result = batch._ChunkResult(["a", "b"], csv_bytes=b"1.5,x\n" * 50_000)
    monkeypatch.setattr(batch, "_work", lambda spectra, *opts: result)
    path = batch._spooled_work(None, str(spool))
    got = batch._unspooled(path)
    assert list(spool.iterdir()) == []  # the name is gone at once; the open file holds the rows
    assert got.columns == ["a", "b"] and got.csv_bytes is None and got.csv_file is not None
    if how == "across file systems":

        def refuse(*a, **k):
            raise OSError(errno.EXDEV, "Invalid cross-device link")

        monkeypatch.setattr(os, "copy_file_range", refuse)
    out = tmp_path / "out.csv"
    out.write_bytes(b"a,b\n")
    writer = batch._CsvWriter(out, columns=["a", "b"]) if how == "appending" else batch._CsvWriter(out)
    if how != "appending":
        writer.columns = ["a", "b"]
        writer._fh.write(b"a,b\n")
    writer.write(got)
    writer.write(batch._ChunkResult(["a", "b"], csv_bytes=b"2.5,y\n"))  # written after the copied rows
    writer.close()
    assert got.csv_file.closed
    assert out.read_bytes() == b"a,b\n" + b"1.5,x\n" * 50_000 + b"2.5,y\n"
