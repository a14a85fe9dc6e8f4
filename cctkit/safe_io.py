"""Writing outputs safely: atomically, never over an input, never over a file without leave.

Every file cctkit writes goes through :func:`atomic_write` (or
:func:`atomic_path` for writers that need a path, such as matplotlib): the data
is written to a temporary file in the target folder and renamed into place, so
a reader never sees a half-written file and a failed run leaves nothing behind.
"""

from __future__ import annotations

import contextlib
import os
import tempfile
from pathlib import Path
from typing import Iterable, Iterator

from .errors import InputError

__all__ = ["atomic_write", "atomic_path", "check_output_path"]


def check_output_path(path: str | os.PathLike, *, overwrite: bool = False, inputs: Iterable = ()) -> Path:
    """Refuse an output path that is an input, or exists without ``overwrite``."""
    out = Path(path)
    for item in inputs:
        try:
            if out.exists() and Path(item).exists() and os.path.samefile(out, item):
                raise InputError("refusing to write over an input file", source=str(out))
        except OSError:
            continue
        if Path(os.path.abspath(item)) == Path(os.path.abspath(out)):
            raise InputError("refusing to write over an input file", source=str(out))
    if out.exists() and not overwrite:
        raise InputError("output file exists; pass --overwrite to replace it", source=str(out))
    if out.exists() and out.is_dir():
        raise InputError("output path is a directory", source=str(out))
    parent = out.parent if str(out.parent) else Path(".")
    if not parent.is_dir():
        raise InputError(f"output folder {str(parent)!r} does not exist", source=str(out))
    return out


@contextlib.contextmanager
def atomic_path(path: str | os.PathLike, *, overwrite: bool = False, inputs: Iterable = ()) -> Iterator[Path]:
    """Yield a temporary path beside ``path``; rename it into place only if the block succeeds."""
    out = check_output_path(path, overwrite=overwrite, inputs=inputs)
    parent = out.parent if str(out.parent) else Path(".")
    fd, tmp = tempfile.mkstemp(prefix=f".{out.name}.", suffix=".tmp" + out.suffix, dir=parent)
    os.close(fd)
    tmp_path = Path(tmp)
    try:
        yield tmp_path
        os.chmod(tmp_path, 0o644)
        os.replace(tmp_path, out)
    finally:
        with contextlib.suppress(FileNotFoundError):
            tmp_path.unlink()


def atomic_write(
    path: str | os.PathLike, data: str | bytes, *, overwrite: bool = False, inputs: Iterable = ()
) -> Path:
    """Write ``data`` to ``path`` atomically (text is written as UTF-8 with ``\\n`` line ends)."""
    payload = data.encode("utf-8") if isinstance(data, str) else data
    with atomic_path(path, overwrite=overwrite, inputs=inputs) as tmp:
        with open(tmp, "wb") as fh:
            fh.write(payload)
            fh.flush()
            os.fsync(fh.fileno())
    return Path(path)
