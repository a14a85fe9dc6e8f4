"""Reading user-named files boundedly; writing outputs atomically, never over an input.

Reading
    :func:`read_user_file` is the one way cctkit reads a file a user named
    (spectra, claims, sidecars): it opens without blocking, accepts only a
    regular file (a FIFO, device or socket is refused before a byte is read, so
    ``/dev/zero`` or a pipe cannot exhaust memory or hang), refuses files over a
    byte limit, and returns the bytes with the SHA-256 of exactly those bytes.
    Every file read this way is remembered (device and inode) so that no output
    of the same process can replace it.

Writing
    Every file cctkit writes goes through :func:`atomic_write` (or
    :func:`atomic_path` for writers that need a path, such as matplotlib): the
    data is written to a temporary file in the target folder and put in place
    only if the writing succeeded.  Without ``overwrite`` the final step is a
    hard link, which fails when the name exists, so a file created at the output
    path while the command ran (or by a concurrent run) is never replaced; with
    ``overwrite`` it is a rename, made only after checking again that the target
    is not an input.  :func:`output_group` makes several outputs of one command
    all-or-nothing.  Failures of the file system (read-only, full, permission)
    become an :class:`~cctkit.errors.InputError` naming the file.
"""

from __future__ import annotations

import contextlib
import contextvars
import errno
import hashlib
import os
import stat
import tempfile
from collections.abc import Iterable, Iterator
from dataclasses import dataclass
from pathlib import Path

from .errors import InputError

__all__ = [
    "atomic_write",
    "atomic_path",
    "check_output_path",
    "output_group",
    "read_user_file",
    "UserFile",
    "is_input",
    "forget_inputs",
    "os_error_text",
    "place",
    "remove_stale_temps",
    "write_journal",
]

#: Identities (st_dev, st_ino) of every file read through :func:`read_user_file` in this process.
_READ: set[tuple[int, int]] = set()


def os_error_text(exc: BaseException) -> str:
    """The operating system's words for ``exc`` (e.g. "No space left on device"), on one line."""
    text = getattr(exc, "strerror", None) or str(exc) or type(exc).__name__
    return str(text).replace("\n", " ")


# --------------------------------------------------------------------------- reading


@dataclass(frozen=True)
class UserFile:
    """The bytes of a user-named file and the SHA-256 of exactly those bytes."""

    path: str
    data: bytes
    sha256: str


def read_user_file(path: str | os.PathLike, *, max_bytes: int, what: str = "file") -> UserFile:
    """Read a regular file of at most ``max_bytes`` bytes, without ever blocking on it.

    The file is opened with ``O_NONBLOCK`` (a FIFO without a writer would
    otherwise hang the open) and checked with ``fstat`` on the open descriptor,
    so the check and the read concern the same file.  ``what`` names the file's
    role in messages ("claims file", "sidecar").
    """
    source = os.fsdecode(os.fspath(path))
    flags = os.O_RDONLY | getattr(os, "O_NONBLOCK", 0) | getattr(os, "O_NOCTTY", 0) | getattr(os, "O_CLOEXEC", 0)
    try:
        fd = os.open(source, flags)
    except FileNotFoundError:
        raise InputError(f"{what} not found", source=source) from None
    except IsADirectoryError:
        raise InputError("is a folder, not a file", source=source) from None
    except NotADirectoryError:
        raise InputError(f"{what} not found (a part of the path is not a folder)", source=source) from None
    except PermissionError:
        raise InputError("permission denied", source=source) from None
    except (OSError, ValueError) as exc:
        raise InputError(f"cannot read the {what} ({os_error_text(exc)})", source=source) from None
    try:
        st = os.fstat(fd)
        if stat.S_ISDIR(st.st_mode):
            raise InputError("is a folder, not a file", source=source)
        if not stat.S_ISREG(st.st_mode):
            raise InputError("is not a regular file (device, pipe or socket)", source=source)
        if st.st_size > max_bytes:
            raise InputError(f"{what} is {st.st_size} bytes, over the limit of {max_bytes} bytes", source=source)
        if hasattr(os, "set_blocking"):
            os.set_blocking(fd, True)
        with os.fdopen(fd, "rb", closefd=True) as fh:
            fd = -1
            data = fh.read(max_bytes + 1)
    except OSError as exc:
        raise InputError(f"cannot read the {what} ({os_error_text(exc)})", source=source) from None
    finally:
        if fd >= 0:
            os.close(fd)
    if len(data) > max_bytes:  # grew while being read
        raise InputError(f"{what} is over the limit of {max_bytes} bytes", source=source)
    _READ.add((st.st_dev, st.st_ino))
    return UserFile(source, data, hashlib.sha256(data).hexdigest())


def remember_input(path: str | os.PathLike) -> None:
    """Record ``path`` as an input of this process (for readers that stream a file themselves)."""
    with contextlib.suppress(OSError):
        st = os.stat(path)
        _READ.add((st.st_dev, st.st_ino))


def is_input(path: str | os.PathLike) -> bool:
    """True when ``path`` names a file this process has read as an input."""
    try:
        st = os.stat(path)
    except OSError:
        return False
    return (st.st_dev, st.st_ino) in _READ


def forget_inputs() -> None:
    """Start a new record of inputs (the command line does this at the start of each command)."""
    _READ.clear()


# --------------------------------------------------------------------------- writing


def check_output_path(path: str | os.PathLike, *, overwrite: bool = False, inputs: Iterable = ()) -> Path:
    """Refuse an output path that is an input, or exists without ``overwrite``."""
    out = Path(path)
    _refuse_input(out, inputs)
    if out.exists() and not overwrite:
        raise InputError("output file exists; pass --overwrite to replace it", source=str(out))
    if out.exists() and out.is_dir():
        raise InputError("output path is a directory", source=str(out))
    parent = out.parent if str(out.parent) else Path(".")
    if not parent.is_dir():
        raise InputError(f"output folder {str(parent)!r} does not exist", source=str(out))
    return out


def _refuse_input(out: Path, inputs: Iterable) -> None:
    for item in inputs:
        try:
            if out.exists() and Path(item).exists() and os.path.samefile(out, item):
                raise InputError("refusing to write over an input file", source=str(out))
        except OSError:
            pass
        if Path(os.path.abspath(item)) == Path(os.path.abspath(out)):
            raise InputError("refusing to write over an input file", source=str(out))
    if is_input(out):
        raise InputError("refusing to write over an input file", source=str(out))


_GROUP: contextvars.ContextVar[list | None] = contextvars.ContextVar("cctkit_output_group", default=None)


@contextlib.contextmanager
def output_group() -> Iterator[None]:
    """Make every :func:`atomic_path` / :func:`atomic_write` inside the block all-or-nothing.

    The outputs are written to temporary files; they are put in place together
    when the block ends without an error.  If putting one of them in place
    fails, those already placed are taken back (a replaced file is restored)
    and no output remains.
    """
    if _GROUP.get() is not None:  # already inside a group: the outer one commits
        yield
        return
    staged: list[tuple[Path, Path, bool, list]] = []
    token = _GROUP.set(staged)
    reset = False
    try:
        yield
        _GROUP.reset(token)
        reset = True
        _commit_all(staged)
    finally:
        if not reset:
            _GROUP.reset(token)
        for _, tmp, _, _ in staged:
            with contextlib.suppress(OSError):
                tmp.unlink()


def _commit_all(staged: list[tuple[Path, Path, bool, list]]) -> None:
    done: list[tuple[Path, Path | None]] = []  # (placed output, backup of what it replaced)
    try:
        for out, tmp, overwrite, inputs in staged:
            backup = None
            if overwrite and out.exists():
                backup = Path(tempfile.mktemp(prefix=f".{out.name}.", suffix=".old", dir=_folder(out)))
                os.link(out, backup)
            done.append((out, backup))
            place(tmp, out, overwrite=overwrite, inputs=inputs)
    except BaseException:
        for out, backup in reversed(done):
            with contextlib.suppress(OSError):
                if backup is not None:
                    os.replace(backup, out)
                else:
                    out.unlink()
        raise
    finally:
        for _, backup in done:
            if backup is not None:
                with contextlib.suppress(OSError):
                    backup.unlink()


def _folder(out: Path) -> Path:
    return out.parent if str(out.parent) else Path(".")


def place(tmp: Path, out: Path, *, overwrite: bool, inputs: Iterable = ()) -> None:
    """Put ``tmp`` at ``out``: create-exclusive (a hard link) unless ``overwrite``."""
    _refuse_input(out, inputs)  # again, now: the checks at start-up may be stale
    try:
        os.chmod(tmp, 0o644)
        if overwrite:
            os.replace(tmp, out)
            return
        try:
            os.link(tmp, out)
        except FileExistsError:
            raise InputError(
                "output file appeared while the command ran; not replaced (pass --overwrite to replace it)",
                source=str(out),
            ) from None
        except OSError as exc:
            if exc.errno not in (errno.EPERM, errno.ENOTSUP, errno.EOPNOTSUPP, errno.EXDEV, errno.EMLINK):
                raise
            _place_exclusive_copy(tmp, out)
        tmp.unlink()
    except InputError:
        raise
    except OSError as exc:
        raise InputError(f"cannot write the output ({os_error_text(exc)})", source=str(out)) from None


def _place_exclusive_copy(tmp: Path, out: Path) -> None:
    """Fallback for file systems without hard links: copy into a file created with O_EXCL."""
    try:
        fd = os.open(out, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o644)
    except FileExistsError:
        raise InputError("output file appeared while the command ran; not replaced", source=str(out)) from None
    try:
        with os.fdopen(fd, "wb") as dst, open(tmp, "rb") as src:
            for block in iter(lambda: src.read(1 << 20), b""):
                dst.write(block)
            dst.flush()
            os.fsync(dst.fileno())
    except BaseException:
        with contextlib.suppress(OSError):
            out.unlink()
        raise


@contextlib.contextmanager
def atomic_path(path: str | os.PathLike, *, overwrite: bool = False, inputs: Iterable = ()) -> Iterator[Path]:
    """Yield a temporary path beside ``path``; put it in place only if the block succeeds.

    An ``OSError`` raised while writing (disk full, read-only file system) becomes an
    :class:`~cctkit.errors.InputError` naming ``path``; the temporary file is removed.
    """
    inputs = list(inputs)
    out = check_output_path(path, overwrite=overwrite, inputs=inputs)
    try:
        # the process id in the name tells a later run whether the writer is still alive (remove_stale_temps)
        fd, tmp = tempfile.mkstemp(prefix=f".{out.name}.{os.getpid()}.", suffix=".tmp" + out.suffix, dir=_folder(out))
        os.close(fd)
    except OSError as exc:
        raise InputError(f"cannot write the output ({os_error_text(exc)})", source=str(out)) from None
    tmp_path = Path(tmp)
    group = _GROUP.get()
    try:
        try:
            yield tmp_path
        except OSError as exc:
            raise InputError(f"cannot write the output ({os_error_text(exc)})", source=str(out)) from None
        if group is not None:
            group.append((out, tmp_path, overwrite, inputs))
            return
        place(tmp_path, out, overwrite=overwrite, inputs=inputs)
    finally:
        if group is None or not any(t == tmp_path for _, t, _, _ in group):
            with contextlib.suppress(OSError):
                tmp_path.unlink()


def remove_stale_temps(path: str | os.PathLike) -> list[Path]:
    """Remove the temporary files an earlier, killed process left beside ``path``; return them.

    A temporary file is stale when the process that made it (its id is in the name) no longer runs.
    """
    out = Path(path)
    removed = []
    prefix = f".{out.name}."
    for item in _folder(out).glob(f"{glob_escape(prefix)}*.tmp{glob_escape(out.suffix)}"):
        pid_text = item.name[len(prefix) :].split(".", 1)[0]
        if not pid_text.isdigit() or _alive(int(pid_text)):
            continue
        with contextlib.suppress(OSError):
            item.unlink()
            removed.append(item)
    return removed


def glob_escape(text: str) -> str:
    import glob

    return glob.escape(text)


def _alive(pid: int) -> bool:
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except OSError:
        return True
    return True


def write_journal(path: Path, doc: dict) -> None:
    """Replace the small JSON file ``path`` atomically and durably (a run's progress record)."""
    import json

    tmp = path.with_name(path.name + f".{os.getpid()}.tmp")
    with open(tmp, "w", encoding="utf-8") as fh:
        json.dump(doc, fh)
        fh.flush()
        os.fsync(fh.fileno())
    os.replace(tmp, path)


def atomic_write(path: str | os.PathLike, data: str | bytes, *, overwrite: bool = False, inputs: Iterable = ()) -> Path:
    """Write ``data`` to ``path`` atomically (text is written as UTF-8 with ``\\n`` line ends)."""
    payload = data.encode("utf-8") if isinstance(data, str) else data
    with atomic_path(path, overwrite=overwrite, inputs=inputs) as tmp:
        with open(tmp, "wb") as fh:
            fh.write(payload)
            fh.flush()
            os.fsync(fh.fileno())
    return Path(path)
