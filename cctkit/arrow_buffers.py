"""Arrow arrays to and from numpy through their buffers, for the batch path.

pyarrow's own conversions (``pyarrow.array``, ``Array.to_numpy``) import pandas when it
is installed, to look for pandas types: 0.5-0.6 s of CPU in each process that runs a
batch, more than a chunk's formatting.  These helpers build and read the buffers
directly (the Arrow columnar layout: a validity bitmap, least significant bit first, then
the values; strings as int32 offsets into UTF-8 data), so a batch run never imports pandas.
Each returns None, or takes the ordinary pyarrow route, for what it does not handle.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any, cast

import numpy as np

__all__ = ["floats_from_arrow", "float_array", "int_array", "bool_array", "string_array"]


def floats_from_arrow(column: Any) -> np.ndarray | None:
    """The values of a float64 Arrow array or chunked array without nulls, else None."""
    import pyarrow as pa

    if column.type != pa.float64() or column.null_count:
        return None
    chunks = column.chunks if isinstance(column, pa.ChunkedArray) else [column]
    parts = [
        np.frombuffer(c.buffers()[1], dtype=np.float64, count=len(c), offset=c.offset * 8) for c in chunks if len(c)
    ]
    if not parts:
        return np.empty(0)
    return parts[0] if len(parts) == 1 else np.concatenate(parts)


def _validity(valid: np.ndarray | None) -> tuple[Any, int]:
    """The validity bitmap buffer (None where every value is valid) and the null count."""
    import pyarrow as pa

    if valid is None or valid.all():
        return None, 0
    return pa.py_buffer(np.packbits(valid, bitorder="little")), int(valid.size - np.count_nonzero(valid))


def float_array(values: np.ndarray, valid: np.ndarray | None = None):
    """A float64 Arrow array of ``values``; nulls where ``valid`` is False."""
    import pyarrow as pa

    values = np.ascontiguousarray(values, dtype=np.float64)
    bitmap, nulls = _validity(valid)
    return pa.Array.from_buffers(pa.float64(), values.size, [bitmap, pa.py_buffer(values)], null_count=nulls)


def int_array(values: np.ndarray):
    """An int64 Arrow array of ``values``."""
    import pyarrow as pa

    values = np.ascontiguousarray(values, dtype=np.int64)
    return pa.Array.from_buffers(pa.int64(), values.size, [None, pa.py_buffer(values)], null_count=0)


def bool_array(values: np.ndarray, valid: np.ndarray | None = None):
    """A boolean Arrow array of ``values``; nulls where ``valid`` is False."""
    import pyarrow as pa

    values = np.asarray(values, dtype=bool)
    bitmap, nulls = _validity(valid)
    data = pa.py_buffer(np.packbits(values, bitorder="little"))
    return pa.Array.from_buffers(pa.bool_(), values.size, [bitmap, data], null_count=nulls)


def string_array(items: Sequence[str | None]):
    """A string Arrow array of ``items``; None is null."""
    import pyarrow as pa

    if None in items:
        valid: np.ndarray | None = np.fromiter((v is not None for v in items), dtype=bool, count=len(items))
        texts = [v if v is not None else "" for v in items]
    else:  # the usual case: no copy, no per-item Python step
        valid, texts = None, cast(list[str], list(items))
    joined = "".join(texts)
    if joined.isascii():
        data = joined.encode("ascii")
        lengths = np.fromiter(map(len, texts), dtype=np.int64, count=len(texts))
    else:
        encoded = [t.encode("utf-8") for t in texts]
        data = b"".join(encoded)
        lengths = np.fromiter(map(len, encoded), dtype=np.int64, count=len(encoded))
    if len(data) >= 2**31:  # past int32 offsets: pyarrow's own route (a large or chunked array)
        return pa.array(list(items), type=pa.string())
    offsets = np.zeros(len(texts) + 1, dtype=np.int32)
    offsets[1:] = np.cumsum(lengths)
    bitmap, nulls = _validity(valid)
    return pa.Array.from_buffers(
        pa.string(), len(texts), [bitmap, pa.py_buffer(offsets), pa.py_buffer(data)], null_count=nulls
    )
