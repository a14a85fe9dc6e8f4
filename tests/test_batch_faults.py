"""``cctkit batch`` under faults: stopped, killed, resumed, a changed input, a lost Dask worker.

Every process started here is a child of the test on this machine; every cluster listens on
127.0.0.1 only; every wait is bounded.
"""

from __future__ import annotations

import dataclasses
import json
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import pytest
from typer.testing import CliRunner

from cctkit.cli import app
from cctkit.errors import InputError

runner = CliRunner()


def run(*args):
    return runner.invoke(app, [str(a) for a in args])


@pytest.fixture(scope="module")
def lot(tmp_path_factory) -> Path:
    """A wide CSV of 400 LED-like spectra of our own (blue line + phosphor band), at 5 nm."""
    d = tmp_path_factory.mktemp("lot")
    rng = np.random.default_rng(12)
    wl = np.arange(380, 781, 5.0)
    n = 400
    blue = np.exp(-0.5 * ((wl[None] - rng.uniform(445, 460, (n, 1))) / 9.5) ** 2)
    phosphor = rng.uniform(1.5, 3.0, (n, 1)) * np.exp(-0.5 * ((wl[None] - rng.uniform(560, 600, (n, 1))) / 55) ** 2)
    path = d / "lot.csv"
    with open(path, "w") as fh:
        fh.write("name," + ",".join(f"{w:g}" for w in wl) + "\n")
        for k, row in enumerate(blue + phosphor):
            fh.write(f"unit {k:03d}," + ",".join(repr(float(v)) for v in row) + "\n")
    return path


@pytest.fixture(scope="module")
def long_lot(lot, tmp_path_factory) -> Path:
    """The lot's rows twelve times over (4,800 spectra): a run long enough that a signal sent once it is under way
    always finds it still running, however fast the machine."""
    lines = lot.read_text().splitlines(keepends=True)
    path = tmp_path_factory.mktemp("long") / "long.csv"
    with open(path, "w") as fh:
        fh.write(lines[0])
        for rep in range(12):
            fh.writelines(line.replace("unit ", f"r{rep:02d} unit ", 1) for line in lines[1:])
    return path


@pytest.fixture(scope="module")
def reference(lot, tmp_path_factory) -> bytes:
    """The uninterrupted run's bytes (one process, same chunking)."""
    out = tmp_path_factory.mktemp("ref") / "ref.csv"
    r = run("batch", lot, "-o", out, "--chunk-size", 10, "--workers", 1, "--no-rendering", "--quiet")
    assert r.exit_code == 0, r.output
    return out.read_bytes()


def _start(args: list, cwd: Path) -> subprocess.Popen:
    return subprocess.Popen(
        [sys.executable, "-m", "cctkit", "batch", *map(str, args)],
        cwd=cwd,
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
        env={**os.environ, "OPENBLAS_NUM_THREADS": "1"},
    )


def _children(pid: int) -> list[int]:
    out = subprocess.run(["pgrep", "-P", str(pid)], capture_output=True, text=True).stdout
    return [int(x) for x in out.split()]


def _rows_written(folder: Path) -> int:
    """Rows in the temporary CSV a running batch writes in ``folder`` (header excluded)."""
    for p in folder.iterdir():
        if p.name.endswith(".tmp.csv"):
            try:
                return max(p.read_bytes().count(b"\n") - 1, 0)
            except FileNotFoundError:
                return 0
    return 0


def _gone(pid: int) -> bool:
    try:
        with open(f"/proc/{pid}/status") as fh:
            return any(line.startswith("State:") and "Z" in line for line in fh)  # a zombie has ended
    except FileNotFoundError:
        return True


def _wait_until(condition, timeout: float = 60.0, step: float = 0.05) -> bool:
    end = time.monotonic() + timeout
    while time.monotonic() < end:
        if condition():
            return True
        time.sleep(step)
    return False


def _journal_chunks(path: Path) -> int:
    try:
        return json.loads(path.read_text())["chunks"]
    except (OSError, ValueError, KeyError):
        return 0


def test_killed_run_resumes_with_identical_results_and_workers_die_with_it(lot, reference, tmp_path):
    out = tmp_path / "out.csv"
    journal = tmp_path / "out.csv.partial.json"
    proc = _start([lot, "-o", out, "--chunk-size", 10, "--workers", 2, "--no-rendering", "--resume"], tmp_path)
    try:
        assert _wait_until(lambda: _journal_chunks(journal) >= 3), proc.stderr.read() if proc.poll() else ""
        workers = _children(proc.pid)
        assert workers, "the run should have two worker processes"
        proc.kill()  # SIGKILL: no chance to clean up
        proc.wait(timeout=30)
    finally:
        if proc.poll() is None:
            proc.kill()
    assert _wait_until(lambda: all(_gone(w) for w in workers), timeout=10)  # PR_SET_PDEATHSIG
    assert not out.exists() and (tmp_path / "out.csv.partial").exists()
    done = _journal_chunks(journal)
    r = run("batch", lot, "-o", out, "--chunk-size", 10, "--workers", 1, "--no-rendering", "--resume")
    assert r.exit_code == 0, r.output
    assert f"resumed after {done} complete chunks ({10 * done} spectra)" in r.output
    assert out.read_bytes() == reference
    assert sorted(p.name for p in tmp_path.iterdir()) == ["out.csv"]


def test_resume_refuses_another_chunking(lot, tmp_path):
    out = tmp_path / "out.csv"
    partial, journal = tmp_path / "out.csv.partial", tmp_path / "out.csv.partial.json"
    partial.write_text("name\n")
    journal.write_text(
        json.dumps({"identity": {"chunk_size": 7}, "chunks": 1, "spectra": 7, "bytes": 5, "columns": ["name"]})
    )
    r = run("batch", lot, "-o", out, "--chunk-size", 10, "--no-rendering", "--resume")
    assert r.exit_code == 2 and "cannot continue" in r.output and "chunk size" in r.output
    # without --resume the unfinished run's files are removed, with a note, and the run starts afresh
    r = run("batch", lot, "-o", out, "--chunk-size", 200, "--workers", 1, "--no-rendering")
    assert r.exit_code == 0, r.output
    assert "removed out.csv.partial" in r.output and not partial.exists() and not journal.exists()


def test_sigterm_removes_the_temporary_file_and_the_workers(long_lot, tmp_path):
    # with rendering: each chunk takes longer, so the run is surely still going when the signal arrives
    # (without it, 4,800 spectra take under a second; the test failed once in a full run, 3 Dec 11:48)
    proc = _start([long_lot, "-o", tmp_path / "out.csv", "--chunk-size", 10, "--workers", 2], tmp_path)
    try:
        # the workers are past their start-up once a chunk's rows are in the file
        assert _wait_until(lambda: _rows_written(tmp_path) >= 10 and len(_children(proc.pid)) >= 2)
        workers = _children(proc.pid)
        # sent once: before pyarrow's own per-call signal handling was turned off inside cctkit's stop handling,
        # 8 of 90 signals sent this way under load were lost and the run finished with exit 0 (0 of 70 after)
        proc.send_signal(signal.SIGTERM)
        _, err = proc.communicate(timeout=60)
    finally:
        if proc.poll() is None:
            proc.kill()
    assert proc.returncode == 143, err
    assert err.strip().splitlines()[-1] == "cctkit: stopped by SIGTERM; nothing was written"
    assert "Traceback" not in err
    assert list(tmp_path.iterdir()) == []
    assert _wait_until(lambda: all(_gone(w) for w in workers), timeout=10)


def test_temporary_files_of_killed_runs_are_removed_live_ones_kept(lot, tmp_path):
    dead = tmp_path / ".out.csv.4194305.abcd.tmp.csv"  # above Linux's largest process id: no such process
    live = tmp_path / f".out.csv.{os.getpid()}.efgh.tmp.csv"  # this process: running
    dead.write_text("name\n")
    live.write_text("name\n")
    r = run("batch", lot, "-o", tmp_path / "out.csv", "--chunk-size", 200, "--workers", 1, "--no-rendering")
    assert r.exit_code == 0, r.output
    assert f"removed {dead.name}, left by an earlier run that was killed" in r.output
    assert not dead.exists() and live.exists()


def test_a_local_worker_killed_mid_run_changes_nothing(lot, reference, tmp_path):
    import multiprocessing

    from cctkit.batch import Progress, run_batch
    from cctkit.readers.wide import open_chunked

    killed = []

    class KillOnce(Progress):
        def update(self, n):
            super().update(n)
            if self.done == 20 and not killed:  # chunks still in flight on the pool
                victim = multiprocessing.active_children()[0]
                os.kill(victim.pid, signal.SIGKILL)
                killed.append(victim.pid)

    summary = run_batch(
        open_chunked(lot, chunk_size=10),
        tmp_path / "out.csv",
        workers=2,
        rendering=False,
        progress=KillOnce(None, enabled=False),
    )
    assert killed and summary.spectra == 400
    assert (tmp_path / "out.csv").read_bytes() == reference


def test_a_pool_found_broken_when_a_chunk_is_submitted_changes_nothing(lot, reference, tmp_path, monkeypatch):
    """A worker that dies while the parent is reading the next chunk breaks the pool before the
    chunk is submitted (seen in the soak: an internal error); the chunk runs on the new pool."""
    from concurrent.futures import ProcessPoolExecutor
    from concurrent.futures.process import BrokenProcessPool

    from cctkit.batch import run_batch
    from cctkit.readers.wide import open_chunked

    calls = []
    submit = ProcessPoolExecutor.submit

    def breaks_once(self, *args, **kwargs):
        calls.append(1)
        if len(calls) == 5:
            raise BrokenProcessPool("a child process terminated abruptly")
        return submit(self, *args, **kwargs)

    monkeypatch.setattr(ProcessPoolExecutor, "submit", breaks_once)
    summary = run_batch(open_chunked(lot, chunk_size=10), tmp_path / "out.csv", workers=2, rendering=False)
    assert len(calls) > 40 and summary.spectra == 400  # the chunks in flight were submitted again
    assert (tmp_path / "out.csv").read_bytes() == reference


def test_an_input_changed_during_the_run_is_refused(lot, tmp_path):
    from cctkit.batch import run_batch
    from cctkit.readers.wide import open_chunked

    copy = tmp_path / "lot.csv"
    copy.write_bytes(lot.read_bytes())
    source = open_chunked(copy, chunk_size=100)
    make = source._make

    def appended_midway():
        for k, chunk in enumerate(make()):
            if k == 1:
                with open(copy, "a") as fh:  # another program appends while the run reads
                    fh.write(lot.read_text().splitlines()[1].replace("unit 000", "late") + "\n")
                os.utime(copy, ns=(time.time_ns(), time.time_ns() + 10**9))
            yield chunk

    source = dataclasses.replace(source, _make=appended_midway)
    with pytest.raises(InputError, match="the input changed while the run read it"):
        run_batch(source, tmp_path / "out.csv", workers=1, rendering=False)
    assert not (tmp_path / "out.csv").exists()


# --------------------------------------------------------------------------- Dask


@pytest.mark.parametrize(
    "address, reason",
    [
        ("tcp://127.0.0.1:9", "cannot reach the Dask scheduler at tcp://127.0.0.1:9 (Connection refused)"),
        ("tls://127.0.0.1:9", "tls:// needs certificates"),
        ("udp://127.0.0.1:9", "expected tcp://host:port"),
        ("tcp://127.0.0.1", "expected host:port"),
    ],
)
def test_bad_scheduler_is_one_line_and_fast(lot, tmp_path, address, reason):
    t0 = time.monotonic()
    r = run("batch", lot, "-o", tmp_path / "out.csv", "--scheduler", address, "--no-rendering")
    assert time.monotonic() - t0 < 10  # not the 20 s stall of a client timeout
    assert r.exit_code == 2
    lines = [line for line in r.output.splitlines() if line.strip()]
    assert len(lines) == 1 and reason in lines[0] and "Traceback" not in r.output
    assert list(tmp_path.iterdir()) == []


def test_dask_worker_killed_mid_run_loses_and_doubles_nothing(lot, reference, tmp_path):
    distributed = pytest.importorskip("distributed")
    from cctkit.batch import Progress, run_batch
    from cctkit.readers.wide import open_chunked

    with (
        distributed.LocalCluster(
            n_workers=2, threads_per_worker=1, processes=True, host="127.0.0.1", dashboard_address=None, silence_logs=50
        ) as cluster,
        distributed.Client(cluster) as client,
    ):
        pids = client.run(os.getpid)  # worker address -> process id
        victim = sorted(pids.values())[0]

        class KillOnce(Progress):
            def update(self, n):
                super().update(n)
                if self.done == 50:  # after the first chunk: one worker dies with chunks in flight
                    os.kill(victim, signal.SIGKILL)

        summary = run_batch(
            open_chunked(lot, chunk_size=50),
            tmp_path / "dask.csv",
            scheduler=cluster.scheduler_address,
            rendering=False,
            progress=KillOnce(None, enabled=False),
        )
    assert summary.spectra == 400
    run_batch(open_chunked(lot, chunk_size=50), tmp_path / "here.csv", workers=1, rendering=False)
    # Every row once, in order, with the same bytes: the chunk function is pure, and a Dask worker process
    # computes with one BLAS thread like this one.
    assert (tmp_path / "dask.csv").read_bytes() == (tmp_path / "here.csv").read_bytes()


def test_result_folders_of_killed_runs_are_removed_live_ones_kept(lot, tmp_path, monkeypatch):
    """Workers hand their results over through files in a folder named after the run's process;
    a run removes the folders whose process is gone (a killed run's) and its own at the end."""
    import tempfile

    from cctkit import batch

    spool = tmp_path / "tmp"
    spool.mkdir()
    monkeypatch.setattr(tempfile, "tempdir", str(spool))
    gone = subprocess.run([sys.executable, "-c", "import os; print(os.getpid())"], capture_output=True, text=True)
    dead = spool / f"{batch._SPOOL_PREFIX}{int(gone.stdout)}-abc"
    live = spool / f"{batch._SPOOL_PREFIX}{os.getpid()}-def"
    for folder in (dead, live):
        folder.mkdir()
        (folder / "x.chunk").write_bytes(b"left")
    r = run("batch", lot, "-o", tmp_path / "out.csv", "--chunk-size", 50, "--workers", 2, "--no-rendering")
    assert r.exit_code == 0, r.output
    assert "2 local processes" in r.output
    assert sorted(p.name for p in spool.iterdir()) == [live.name]


@pytest.mark.parametrize("suffix", [".csv", ".parquet"])
def test_a_signal_whose_raise_was_discarded_still_stops_the_run(lot, tmp_path, suffix):
    """The stop handler records each signal before it raises; should the raise be lost on its way (Python
    code called from C may discard it), the run stops at its next chunk and writes nothing."""
    from cctkit import errors
    from cctkit.batch import Progress, run_batch
    from cctkit.readers.wide import open_chunked

    class SignalSeen(Progress):
        def update(self, n):
            super().update(n)
            if self.done == 20:
                errors.STOP_SIGNALS.append(signal.SIGTERM)  # what the handler leaves, its raise discarded

    out = tmp_path / f"out{suffix}"
    try:
        with pytest.raises(errors.Stopped) as caught:
            run_batch(open_chunked(lot, chunk_size=10), out, rendering=False, progress=SignalSeen(None, enabled=False))
    finally:
        errors.STOP_SIGNALS.clear()
    assert caught.value.code == 143
    assert list(tmp_path.iterdir()) == []  # nothing written, no temporary file left


def test_pyarrow_signal_handling_is_off_inside_the_stop_handling_only(monkeypatch):
    """pyarrow's CSV reader, called from the main thread, sets its own SIGINT/SIGTERM handlers for the call and
    now and then loses a signal arriving as it removes them; inside cctkit's stop handling it is turned off, and
    back on when that ends; a library caller outside it keeps pyarrow's default."""
    import pyarrow as pa

    from cctkit import errors
    from cctkit.readers.wide import _arrow_values

    calls: list[bool] = []
    monkeypatch.setattr(pa, "enable_signal_handlers", calls.append)
    rows = ["1.5,2.5,3.5", "4.5,5.5,6.5"]
    assert _arrow_values(rows, ",", 3).tolist() == [[1.5, 2.5, 3.5], [4.5, 5.5, 6.5]]
    assert calls == []  # outside: untouched
    with errors.stop_signals():
        with errors.stop_signals():  # nested: only the outermost turns it back on
            _arrow_values(rows, ",", 3)
            _arrow_values(rows, ",", 3)
        assert calls == [False]
    assert calls == [False, True]
    _arrow_values(rows, ",", 3)
    assert calls == [False, True]
