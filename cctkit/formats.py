"""Plain-text output formats shared by the library and the command line: JSON and CSV.

Both are deterministic (same input, same bytes): JSON with a fixed key order and
NaN/inf written as null; CSV with floats at repr precision and NaN as an empty cell.
"""

from __future__ import annotations

import json
import math
import re
from collections.abc import Iterable
from typing import Any

__all__ = ["clean", "dumps", "csv_text", "csv_cell", "terminal_safe", "format_number", "finite_or_none"]


def clean(obj: Any) -> Any:
    """Make ``obj`` JSON-safe: numpy scalars/arrays to Python, NaN/inf to None."""
    np: Any
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
    """Deterministic JSON text (same input, same bytes).

    Control characters are escaped (``\\u001b``), C1 and DEL included, so the text is safe to
    print on a terminal; the JSON values are unchanged.
    """
    text = json.dumps(clean(doc), indent=2, ensure_ascii=False, allow_nan=False) + "\n"
    return _JSON_UNSAFE.sub(lambda m: f"\\u{ord(m.group()):04x}", text)


_JSON_UNSAFE = re.compile("[\x7f-\x9f\u2028\u2029\u202a-\u202e\u2066-\u2069]")
#: Characters a terminal may act on: C0 controls (but tab and line feed), DEL, C1 controls, and the
#: Unicode line/paragraph separators and bidirectional overrides that change how a line reads.
_TERMINAL_UNSAFE = re.compile("[\x00-\x08\x0b-\x1f\x7f-\x9f\u2028\u2029\u202a-\u202e\u2066-\u2069]")


def terminal_safe(text: str, *, keep: str = "") -> str:
    """``text`` with every control character written as a visible escape (``\\x1b``, ``\\u202e``).

    Tab and line feed stay; so do the characters in ``keep`` (e.g. ``"\\r"`` for a progress line).
    """

    def escape(m: re.Match) -> str:
        c = m.group()
        if c in keep:
            return c
        return f"\\x{ord(c):02x}" if ord(c) < 0x100 else f"\\u{ord(c):04x}"

    return _TERMINAL_UNSAFE.sub(escape, text)


#: Leading characters a spreadsheet reads as the start of a formula (or that hide one).
FORMULA_LEAD = ("=", "+", "-", "@", "\t", "\r", "\n")


def csv_cell(value: Any) -> Any:
    """A text cell a spreadsheet will not run as a formula: a leading ``'`` is added to text starting
    with ``= + - @``, tab or CR/LF (OWASP's advice for CSV injection), unless the text is a plain number."""
    if isinstance(value, str) and value.startswith(FORMULA_LEAD):
        try:
            float(value)
        except ValueError:
            return "'" + value
    return value


def csv_text(header: list[str], rows: Iterable[Iterable[Any]], *, write_header: bool = True) -> str:
    """CSV text with a header; floats written with repr precision, NaN empty.

    ``write_header=False`` leaves the header line out (rows appended to a file that has it).
    """
    import csv
    import io

    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    if write_header:
        w.writerow([csv_cell(h) for h in header])
    for row in rows:
        w.writerow(
            [
                ""
                if (isinstance(v, float) and not math.isfinite(v))
                else (repr(float(v)) if isinstance(v, float) else csv_cell(v))
                for v in row
            ]
        )
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
