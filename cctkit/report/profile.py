"""Sign-off fields and the report profile a lab keeps once.

A profile is a small TOML or JSON file::

    title = "Downlight candidates, measured"
    project = "Harbourside Lantern Hall, main hall relighting"
    lab = "Harbourside photometry bench"
    operator = "R. Okafor"
    instrument = "array spectroradiometer, 2 m integrating sphere"
    notes = "Measured after 30 min stabilisation at 25 degC."
    date = "2026-12-02"            # the report date printed on every page
    paper = "a4"                   # a4 | letter
    logo = "logo.png"              # PNG, relative to the profile file
    sections = ["verdict", "comparison", "spectra", "summary", "scatter"]

Every key is optional; options given on the command line win over the profile.
Unknown keys, wrong types and unreadable files are one-line :class:`InputError`s.
"""

from __future__ import annotations

import datetime as _dt
import json
import os
from collections.abc import Mapping
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any

from ..errors import InputError

__all__ = ["SignOff", "SECTIONS", "TEXT_FIELDS", "load_profile", "parse_profile", "report_date"]

#: Page kinds a profile may include (all by default); the sign-off page always comes first.
SECTIONS = ("verdict", "comparison", "spectra", "summary", "scatter")
#: Free-text sign-off fields, as (key, label on the page).
TEXT_FIELDS = (
    ("title", "Title"),
    ("project", "Project"),
    ("lab", "Laboratory"),
    ("operator", "Operator"),
    ("instrument", "Instrument"),
    ("notes", "Notes"),
)
_MAX_TEXT = 2000  # characters per field: a report field, not a document
_MAX_PROFILE_BYTES = 64 * 1024
DEFAULT_TITLE = "Spectral measurement report"


@dataclass(frozen=True)
class SignOff:
    """What a lab signs: the free-text fields, the report date, paper, logo and sections."""

    title: str = DEFAULT_TITLE
    project: str = ""
    lab: str = ""
    operator: str = ""
    instrument: str = ""
    notes: str = ""
    date: str | None = None
    paper: str | None = None
    logo: Path | None = None
    sections: tuple[str, ...] = SECTIONS
    source: str = ""
    extra: Mapping[str, Any] = field(default_factory=dict)

    def merged(self, **options: Any) -> SignOff:
        """This profile with every option that is not None put over it."""
        given = {k: v for k, v in options.items() if v is not None}
        if "logo" in given:
            given["logo"] = Path(given["logo"])
        if "sections" in given:
            given["sections"] = _sections(given["sections"], "--sections")
        for key in ("title", "project", "lab", "operator", "instrument", "notes"):
            if key in given:
                given[key] = _text(given[key], f"--{key}")
        if "date" in given:
            given["date"] = _date(given["date"], "--date")
        return replace(self, **given)


def report_date(date: str | None = None) -> str:
    """The report date: ``date`` when given, else from ``SOURCE_DATE_EPOCH`` (reproducible builds), else today."""
    if date:
        return _date(date, "date")
    epoch = os.environ.get("SOURCE_DATE_EPOCH")
    if epoch:
        try:
            return _dt.datetime.fromtimestamp(int(epoch), tz=_dt.UTC).date().isoformat()
        except (ValueError, OverflowError, OSError):
            raise InputError(
                f"SOURCE_DATE_EPOCH must be whole seconds since 1970, got {epoch!r}", source="SOURCE_DATE_EPOCH"
            ) from None
    return _dt.date.today().isoformat()


def _date(value: Any, where: str) -> str:
    if isinstance(value, _dt.date):
        return value.isoformat()
    if not isinstance(value, str):
        raise InputError(f"{where}: expected a date YYYY-MM-DD, got {value!r}", source=where)
    try:
        return _dt.date.fromisoformat(value.strip()).isoformat()
    except ValueError:
        raise InputError(f"{where}: expected a date YYYY-MM-DD, got {value!r}", source=where) from None


def _text(value: Any, where: str) -> str:
    if not isinstance(value, str):
        raise InputError(f"{where}: expected text, got {value!r}", source=where)
    text = " ".join("".join(ch if ch.isprintable() else " " for ch in value).split())
    if len(text) > _MAX_TEXT:
        raise InputError(f"{where}: at most {_MAX_TEXT} characters, got {len(text)}", source=where)
    return text


def _sections(value: Any, where: str) -> tuple[str, ...]:
    items = value.split(",") if isinstance(value, str) else value
    if not isinstance(items, (list, tuple)) or not all(isinstance(v, str) for v in items):
        raise InputError(f"{where}: expected a list of {', '.join(SECTIONS)}, got {value!r}", source=where)
    out = tuple(v.strip().lower() for v in items if v.strip())
    for v in out:
        if v not in SECTIONS:
            raise InputError(f"{where}: unknown section {v!r}; expected some of {', '.join(SECTIONS)}", source=where)
    if not out:
        raise InputError(f"{where}: name at least one of {', '.join(SECTIONS)}", source=where)
    return out


_KEYS = ("title", "project", "lab", "operator", "instrument", "notes", "date", "paper", "logo", "sections")


def parse_profile(doc: Mapping[str, Any], *, source: str = "<profile>", base_dir: str | Path = ".") -> SignOff:
    """A profile document (parsed TOML/JSON) as a :class:`SignOff`."""
    if not isinstance(doc, Mapping):
        raise InputError("a report profile must be a table of keys", source=source)
    kw: dict[str, Any] = {"source": source}
    for key, value in doc.items():
        where = f"{source}: {key}"
        if key not in _KEYS:
            import difflib

            close = difflib.get_close_matches(key, _KEYS, n=1)
            hint = f"; did you mean {close[0]!r}?" if close else f"; expected some of {', '.join(_KEYS)}"
            raise InputError(f"unknown key {key!r}{hint}", source=source)
        if key in ("title", "project", "lab", "operator", "instrument", "notes"):
            kw[key] = _text(value, where)
        elif key == "date":
            kw[key] = _date(value, where)
        elif key == "paper":
            if not isinstance(value, str):
                raise InputError(f"paper: expected a4 or letter, got {value!r}", source=source)
            kw[key] = value.strip().lower()
        elif key == "logo":
            if not isinstance(value, str) or not value:
                raise InputError(f"logo: expected a PNG file name, got {value!r}", source=source)
            p = Path(value)
            kw[key] = p if p.is_absolute() else Path(base_dir) / p
        else:
            kw[key] = _sections(value, where)
    return SignOff(**kw)


def load_profile(path: str | os.PathLike) -> SignOff:
    """Read a report profile (``.toml`` or ``.json``)."""
    p = Path(path)
    src = str(p)
    if p.suffix.lower() not in (".toml", ".json"):
        raise InputError(f"a report profile is .toml or .json, got {p.name!r}", source=src)
    try:
        if not p.is_file():
            raise InputError("report profile is not a regular file", source=src)
        if p.stat().st_size > _MAX_PROFILE_BYTES:
            raise InputError(f"report profile is larger than {_MAX_PROFILE_BYTES // 1024} KiB", source=src)
        raw = p.read_bytes()
    except OSError as exc:
        raise InputError(f"cannot read report profile ({exc.strerror or exc})", source=src) from None
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError:
        raise InputError("report profile is not UTF-8 text", source=src) from None
    if p.suffix.lower() == ".toml":
        import tomllib

        try:
            doc = tomllib.loads(text)
        except tomllib.TOMLDecodeError as exc:
            raise InputError(f"not valid TOML ({exc})", source=src) from None
    else:
        try:
            doc = json.loads(text)
        except json.JSONDecodeError as exc:
            raise InputError(f"not valid JSON ({exc.msg}, line {exc.lineno})", source=src) from None
    return parse_profile(doc, source=src, base_dir=p.parent)


def read_logo(path: Path):
    """The logo as an image array (PNG only, at most 2 MB); one-line InputError otherwise."""
    src = str(path)
    try:
        if not path.is_file():
            raise InputError("logo is not a regular file", source=src)
        if path.stat().st_size > 2 * 1024 * 1024:
            raise InputError("logo is larger than 2 MB", source=src)
        data = path.read_bytes()
    except OSError as exc:
        raise InputError(f"cannot read logo ({exc.strerror or exc})", source=src) from None
    if not data.startswith(b"\x89PNG\r\n\x1a\n"):
        raise InputError("logo must be a PNG image", source=src)
    import io

    from matplotlib import image as mpimg

    try:
        return mpimg.imread(io.BytesIO(data), format="png")
    except Exception:  # noqa: BLE001 - any decoder failure is a bad input file
        raise InputError("logo is not a readable PNG image", source=src) from None
