"""Metadata as found in the lines around a table: ``Key: value`` pairs, sections, free text.

Instrument exports put a block of notes above the numbers (and sometimes a few
lines below them).  :func:`metadata_from_lines` keeps them, in order, as
``(key, value)`` string pairs:

* ``Key: value``, ``Key = value``, ``Key<TAB>value``, ``Key;value`` and
  ``Key,value`` become ``(Key, value)`` (the first separator found, in that order
  of preference; the rest of the line is the value as written);
* ``[Section]`` becomes ``("[Section]", "")``;
* anything else is free text, kept under the key ``"(text N)"``;
* comment markers (``#``, ``//``, ``%``, ``;``, ``!``, ``*``) in front are dropped.

A key seen twice gets `` (2)``, `` (3)``, ... appended.  Limits keep a hostile
file from blowing up every output: at most :data:`MAX_ENTRIES` entries, keys cut
to :data:`MAX_KEY` characters and values to :data:`MAX_VALUE`.

:data:`IDENTITY_KEYS` says which keys a report shows first (instrument, serial,
date and time, operator, integration time), whatever language-neutral spelling
the file uses.
"""

from __future__ import annotations

import re
from collections.abc import Iterable, Mapping

__all__ = [
    "MAX_ENTRIES",
    "MAX_KEY",
    "MAX_VALUE",
    "metadata_from_lines",
    "limit_metadata",
    "IDENTITY_KEYS",
    "identity_rows",
]

#: Largest number of metadata entries kept per spectrum.
MAX_ENTRIES = 200
#: Longest key kept [characters].
MAX_KEY = 80
#: Longest value kept [characters].
MAX_VALUE = 500

_COMMENT = re.compile(r"^(?:#+|//+|%+|;+|!+|\*+)\s*")
_SECTION = re.compile(r"^\[\s*([^\[\]]{1,80}?)\s*\]$")
# A key starts with a letter and holds no more than a few words.
_KEY = re.compile(r"^[^\W\d_][^\t;:=,]{0,79}$")
_SEPARATORS = ("\t", ";", ":", "=", ",")


def _cut(text: str, limit: int) -> str:
    return text if len(text) <= limit else text[: limit - 1] + "…"


def _split_pair(line: str) -> tuple[str, str] | None:
    """``(key, value)`` when the line reads as a key and a value, else None."""
    for sep in _SEPARATORS:
        if sep not in line:
            continue
        key, value = line.split(sep, 1)
        key = key.strip().strip('"').strip().rstrip(":").strip()
        if sep == ":" and value[:1].isdigit() and key[-1:].isdigit():
            continue  # a time of day such as 10:05, not a separator
        if _KEY.match(key):
            return key, value.strip().strip('"').strip()
        return None
    return None


def metadata_from_lines(lines: Iterable[str]) -> tuple[tuple[str, str], ...]:
    """Ordered ``(key, value)`` pairs from the text lines around a table (see the module docstring)."""
    pairs: list[tuple[str, str]] = []
    texts = 0
    for raw in lines:
        line = _COMMENT.sub("", raw.strip()).strip()
        if len(line) >= 2 and line[0] == line[-1] == '"' and line.count('"') == 2:
            line = line[1:-1].strip()  # a quoted cell on its own
        if not line or not any(ch.isalnum() for ch in line):
            continue
        section = _SECTION.match(line)
        if section:
            pairs.append((f"[{section.group(1)}]", ""))
            continue
        pair = _split_pair(line)
        if pair is None:
            texts += 1
            pair = (f"(text {texts})", line)
        pairs.append(pair)
        if len(pairs) >= 4 * MAX_ENTRIES:
            break
    return limit_metadata(pairs)


def limit_metadata(pairs: Iterable[tuple[str, str]]) -> tuple[tuple[str, str], ...]:
    """Pairs with unique keys (`` (2)`` appended to repeats), cut to the size limits."""
    out: list[tuple[str, str]] = []
    seen: dict[str, int] = {}
    for key, value in pairs:
        key = _cut(str(key).strip(), MAX_KEY)
        value = _cut(str(value).strip(), MAX_VALUE)
        if key in seen:
            seen[key] += 1
            key = f"{key} ({seen[key]})"
        else:
            seen[key] = 1
        out.append((key, value))
        if len(out) >= MAX_ENTRIES:
            break
    return tuple(out)


#: Label shown in a report -> lower-case words a key may contain to be that label.
IDENTITY_KEYS: tuple[tuple[str, tuple[str, ...]], ...] = (
    ("Instrument", ("instrument", "device", "spectrometer", "spectroradiometer", "model", "meter", "gerät")),
    ("Serial", ("serial", "s/n", "sn")),
    ("Date/time", ("date", "time of", "timestamp", "measured at", "datum", "zeit")),
    ("Operator", ("operator", "user", "measured by", "technician", "bediener", "laboratory")),
    ("Integration", ("integration", "exposure", "integrationszeit")),
)


def _matches(key: str, words: tuple[str, ...]) -> bool:
    k = key.lower()
    tokens = set(re.split(r"[^\w/]+", k))
    return any((w in tokens) if len(w) <= 3 else (w in k) for w in words)


def identity_rows(
    metadata: Mapping[str, str] | Iterable[tuple[str, str]],
) -> tuple[list[tuple[str, str]], list[tuple[str, str]]]:
    """Recognised identity rows ``(label, value)`` and the remaining ``(key, value)`` pairs.

    Each label takes the first key that names it; free-text lines stay with the rest.
    """
    items = list(metadata.items()) if isinstance(metadata, Mapping) else list(metadata)
    shown: list[tuple[str, str]] = []
    used: set[int] = set()
    for label, words in IDENTITY_KEYS:
        for i, (key, value) in enumerate(items):
            if i in used or key.startswith(("(text", "[")) or not value:
                continue
            if _matches(key, words):
                shown.append((label, value))
                used.add(i)
                break
    rest = [(k, v) for i, (k, v) in enumerate(items) if i not in used]
    return shown, rest
