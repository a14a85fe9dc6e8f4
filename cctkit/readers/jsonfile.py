"""cctkit spectra JSON.

Schema
------
One JSON object with these keys (no others)::

    {
      "quantity": "irradiance",          # optional: radiant-flux | irradiance | radiance | intensity | relative
      "unit": "mW/(m2 nm)",              # optional: spectral unit of every value (see cctkit.readers)
      "comment": "free text",            # optional, ignored
      "wavelength_nm": [380, 385, ...],  # required: positive numbers, strictly ascending or descending
      "spectra": [                       # required: one object per spectrum
        {"name": "lamp A", "values": [0.012, 0.015, ...]},
        {"name": "lamp B", "values": [...], "comment": "free text"}
      ]
    }

and a single-spectrum shorthand::

    {"wavelength_nm": [...], "values": [...], "name": "lamp A"}   # name optional

``quantity`` and ``unit`` may both be given only when they agree; a ``unit``
alone gives the quantity and converts the values to its base unit.  Names are
unique non-empty strings; an unnamed spectrum is named after the file
(``stem`` alone, ``stem#k`` with 1-based ``k`` among several).  Every value
list has one finite number per wavelength; ``NaN``/``Infinity``, ``null``,
booleans, strings and duplicate keys are refused with the key concerned and
the line where it first appears.
"""

from __future__ import annotations

import json
import re

import numpy as np

from ..errors import InputError
from ..spectra import Quantity
from . import ParsedSpectra, combine_quantity, decode_text, order_axis, parse_spectral_unit, short

__all__ = ["parse"]

_TOP_KEYS = {"quantity", "unit", "comment", "wavelength_nm", "spectra", "values", "name"}
_SPECTRUM_KEYS = {"name", "values", "comment"}


class _BadConstant(Exception):
    pass


class _DuplicateKey(Exception):
    pass


def _no_constants(name: str):
    raise _BadConstant(name)


def _pairs(pairs):
    out = {}
    for k, v in pairs:
        if k in out:
            raise _DuplicateKey(k)
        out[k] = v
    return out


def parse(data: bytes, *, source: str, stem: str) -> ParsedSpectra:
    """Parse cctkit spectra JSON (see the module docstring) into spectra in base units."""
    text, flags = decode_text(data, source)
    try:
        doc = json.loads(text, parse_constant=_no_constants, object_pairs_hook=_pairs)
    except json.JSONDecodeError as exc:
        raise InputError(f"not valid JSON: {exc.msg} (column {exc.colno})", source=source, line=exc.lineno) from None
    except _BadConstant as exc:
        raise InputError(
            f"{exc.args[0]} is not a number; every value must be finite",
            source=source,
            line=_line_of_token(text, exc.args[0]),
        ) from None
    except _DuplicateKey as exc:
        key = exc.args[0]
        raise InputError(
            f"key {short(key)} appears twice in one object", source=source, line=_line_of_key(text, key, nth=2)
        ) from None
    except RecursionError:
        raise InputError("JSON nested too deeply", source=source) from None
    except ValueError as exc:  # e.g. integers with more digits than Python converts
        raise InputError(
            f"not valid JSON: {str(exc).splitlines()[0] if str(exc) else 'bad number'}", source=source
        ) from None

    def fail(message: str, key: str | None = None):
        raise InputError(message, source=source, line=_line_of_key(text, key) if key else None)

    if not isinstance(doc, dict):
        fail(f"expected a JSON object at the top, got {_kind(doc)}")
    for key in doc:
        if key not in _TOP_KEYS:
            fail(f"unknown key {short(key)}; allowed: {', '.join(sorted(_TOP_KEYS))}", key)
    if "wavelength_nm" not in doc:
        fail("missing key 'wavelength_nm'")
    if "spectra" in doc and ("values" in doc or "name" in doc):
        extra = "values" if "values" in doc else "name"
        fail(f"key {extra!r} belongs inside 'spectra' when 'spectra' is given", extra)
    if "comment" in doc and not isinstance(doc["comment"], str):
        fail("key 'comment' must be a string", "comment")

    wl = _numbers(doc["wavelength_nm"], "wavelength_nm", fail)
    if "spectra" in doc:
        entries = doc["spectra"]
        if not isinstance(entries, list):
            fail(f"key 'spectra' must be a list of objects, got {_kind(entries)}", "spectra")
        if not entries:
            fail("key 'spectra' is an empty list", "spectra")
        for i, entry in enumerate(entries):
            if not isinstance(entry, dict):
                fail(f"spectra[{i}] must be an object with 'name' and 'values', got {_kind(entry)}", "spectra")
            for key in entry:
                if key not in _SPECTRUM_KEYS:
                    fail(f"unknown key {short(key)} in spectra[{i}]; allowed: {', '.join(sorted(_SPECTRUM_KEYS))}", key)
            if "values" not in entry:
                fail(f"spectra[{i}] has no key 'values'", "spectra")
            if "comment" in entry and not isinstance(entry["comment"], str):
                fail(f"key 'comment' in spectra[{i}] must be a string", "comment")
    elif "values" in doc:
        entries = [{k: doc[k] for k in ("name", "values") if k in doc}]
    else:
        fail("missing key 'spectra' (or 'values' for a single spectrum)")

    rows = []
    names = []
    for i, entry in enumerate(entries):
        key = f"spectra[{i}].values" if "spectra" in doc else "values"
        vals = _numbers(entry["values"], key, fail)
        if vals.shape[0] != wl.shape[0]:
            fail(f"{key} has {vals.shape[0]} numbers but 'wavelength_nm' has {wl.shape[0]}", "values")
        rows.append(vals)
        if "name" in entry:
            name = entry["name"]
            if not isinstance(name, str) or not name.strip():
                fail(f"key 'name' must be a non-empty string, got {short(str(name))}", "name")
            names.append(name.strip())
        else:
            names.append(stem if len(entries) == 1 else f"{stem}#{i + 1}")
    seen = set()
    for name in names:
        if name in seen:
            fail(f"spectrum name {short(name)} appears twice", "name")
        seen.add(name)

    quantity = unit_q = None
    quantity_line = _line_of_key(text, "quantity")
    if "quantity" in doc:
        if not isinstance(doc["quantity"], str):
            fail("key 'quantity' must be a string", "quantity")
        quantity = Quantity.parse(doc["quantity"], source=source, line=quantity_line)
    factor = 1.0
    if "unit" in doc:
        if not isinstance(doc["unit"], str):
            fail("key 'unit' must be a string", "unit")
        unit_q, factor = parse_spectral_unit(doc["unit"], source=source, line=_line_of_key(text, "unit"))
    quantity = combine_quantity(quantity, unit_q, source=source, line=quantity_line)

    values = np.vstack(rows) * factor
    if not np.all(np.isfinite(values)):
        fail("a value is beyond floating-point range after unit conversion", "unit")
    wl, values, order_flags = order_axis(wl, values, source=source)
    if len(entries) == 1:
        columns = None
    else:
        columns = tuple(names) if all("name" in e for e in entries) else tuple(str(i + 1) for i in range(len(entries)))
    return ParsedSpectra(
        wavelength_nm=wl,
        values=values,
        names=tuple(names),
        columns=columns,
        quantity=quantity,
        flags=flags + order_flags,
    )


def _numbers(obj, key: str, fail) -> np.ndarray:
    leaf = key.rsplit(".", 1)[-1]  # "spectra[0].values" is found in the text as key "values"
    if not isinstance(obj, list):
        fail(f"key {key!r} must be a list of numbers, got {_kind(obj)}", leaf)
    if not obj:
        fail(f"key {key!r} is an empty list", leaf)
    for j, v in enumerate(obj):
        if isinstance(v, bool) or not isinstance(v, (int, float)):
            fail(f"{key}[{j}] must be a number, got {_kind(v)}", leaf)
    try:
        arr = np.array([float(v) for v in obj], dtype=np.float64)
    except OverflowError:
        fail(f"key {key!r} holds a number beyond floating-point range", leaf)
    if not np.all(np.isfinite(arr)):
        j = int(np.flatnonzero(~np.isfinite(arr))[0])
        fail(f"{key}[{j}] is beyond floating-point range", leaf)
    return arr


def _kind(obj) -> str:
    if obj is None:
        return "null"
    if isinstance(obj, bool):
        return "a boolean"
    if isinstance(obj, (int, float)):
        return "a number"
    if isinstance(obj, str):
        return "a string"
    if isinstance(obj, list):
        return "a list"
    return "an object"


def _line_of_key(text: str, key: str | None, *, nth: int = 1) -> int | None:
    if not key:
        return None
    pattern = re.compile(re.escape(json.dumps(key)[1:-1]).join(['"', r'"\s*:']))
    for count, m in enumerate(pattern.finditer(text), start=1):
        if count == nth:
            return text.count("\n", 0, m.start()) + 1
    return None


def _line_of_token(text: str, token: str) -> int | None:
    m = re.search(rf"(?<![\w\"]){re.escape(token)}(?![\w\"])", text)
    return None if m is None else text.count("\n", 0, m.start()) + 1
