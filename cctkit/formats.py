"""Plain-text output formats shared by the library and the command line: JSON and CSV.

Both are deterministic (same input, same bytes): JSON with a fixed key order and
NaN/inf written as null; CSV with floats at repr precision and NaN as an empty cell.
"""

from __future__ import annotations

import json
import math
from typing import Any, Iterable

__all__ = ["clean", "dumps", "csv_text", "format_number", "finite_or_none"]


def clean(obj: Any) -> Any:
    """Make ``obj`` JSON-safe: numpy scalars/arrays to Python, NaN/inf to None."""
    try:
        import numpy as np
    except ImportError:  # pragma: no cover
        np = None
    if isinstance(obj, dict):
        return {str(k): clean(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [clean(v) for v in obj]
    if np is not None and isinstance(obj, np.ndarray):
        return clean(obj.tolist())
    if np is not None and isinstance(obj, np.generic):
        return clean(obj.item())
    if isinstance(obj, float):
        return obj if math.isfinite(obj) else None
    return obj


def dumps(doc: Any) -> str:
    """Deterministic JSON text (same input, same bytes)."""
    return json.dumps(clean(doc), indent=2, ensure_ascii=False, allow_nan=False) + "\n"


def csv_text(header: list[str], rows: Iterable[Iterable[Any]], *, write_header: bool = True) -> str:
    """CSV text with a header; floats written with repr precision, NaN empty.

    ``write_header=False`` leaves the header line out (rows appended to a file that has it).
    """
    import csv
    import io

    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    if write_header:
        w.writerow(header)
    for row in rows:
        w.writerow(["" if (isinstance(v, float) and not math.isfinite(v)) else (repr(float(v)) if isinstance(v, float) else v) for v in row])
    return buf.getvalue()


def format_number(value: float, fmt: str) -> str:
    """``fmt.format(value)`` without a negative zero ("-0.0000" becomes "+0.0000" or "0.0000")."""
    text = fmt.format(value)
    if text.startswith("-") and float(text) == 0.0:
        text = ("+" if "+" in fmt else "") + text[1:]
    return text


def finite_or_none(x) -> float | None:
    """``float(x)``, or None where it is NaN or infinite (the JSON-ready value of a record)."""
    v = float(x)
    return v if math.isfinite(v) else None
