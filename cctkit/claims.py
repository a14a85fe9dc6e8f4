"""Supplier claims, written as a small TOML file, checked against measured results.

A claims file is meant to be typed from a datasheet in two minutes::

    [claims]                      # who and what
    supplier = "Northbeam Lighting"
    product = "NB-Downlight 12 3000K"

    [limits]                      # any measured metric, with min and/or max
    Ra = { min = 90 }
    R9 = { min = 50 }
    luminous_flux_lm = { min = 1200 }
    efficacy_lm_per_W = { min = 110 }    # needs [samples] power

    [chromaticity]                # optional
    nominal_cct_K = 3000
    ansi_quadrangle = true        # inside the ANSI C78.377 quadrangle of nominal_cct_K
    max_sdcm = 3                  # within 3 SDCM steps
    sdcm_centre = "iec"           # "iec" (IEC 60081 lamp ellipse) or "ansi" (see below)

    [uncertainty]                 # optional expanded uncertainties U (k = 2), same units
    Ra = 1.0
    luminous_flux_lm = 36

    [samples]                     # per-sample inputs a spectrum cannot carry
    power_W = 10.5                # one value for every sample, or
    sidecar = "powers.csv"        # columns name,power_W[,declared_id], relative to this file;
                                  # lines starting with "#" are comments

Metric names are the keys of the per-spectrum record (``cctkit inspect --json``)
plus ``R1`` ... ``R14``, ``efficacy_lm_per_W`` (luminous flux / electrical power)
and ``power_W``.  ``sdcm`` and ``ansi_quadrangle`` checks come from
``[chromaticity]``.

Decision rules
--------------
Without an uncertainty the rule is simple acceptance: a value passes when it is
within its limits (limits included).  When ``[uncertainty]`` gives U for a
metric, a guard band applies, as in ISO 14253-1 and ILAC G8:09 (non-binary
statement).  The check passes when the value is inside the limit by at least U.
It fails when the value is outside by at least U.  Anything in between is
"inconclusive".  A sample's verdict, and the overall verdict, is "fail" if any
check fails.  Otherwise it is "inconclusive" if any check is inconclusive, and
"pass" if not.  A value the measurement could not give (NaN, e.g. CCT where
|Duv| > 0.05, or Ra of an invalid rendering) fails its check: conformance is
not shown.

SDCM centre
-----------
``sdcm_centre = "iec"`` (the default where the nominal CCT has one: 2700, 3000,
3500, 4000, 5000, 6500 K) measures steps from the IEC 60081 Annex D lamp
chromaticity with that lamp's ellipse, the classic meaning of "n-step MacAdam".
``"ansi"`` measures from the ANSI C78.377 quadrangle centre with MacAdam's
(1942) ellipse interpolated there (see :mod:`cctkit.tolerance`).
"""

from __future__ import annotations

import csv
import difflib
import math
import os
import tomllib
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from .alphaopic import RECORD_KEYS as ALPHA_OPIC_KEYS
from .errors import InputError
from .photometry import PHOTON_KEY, PPF_KEY, RADIANT_KEY

__all__ = [
    "Limit",
    "ChromaticityClaim",
    "Claims",
    "Check",
    "SampleVerdict",
    "Verdict",
    "METRICS",
    "load_claims",
    "parse_claims",
    "verify",
    "sdcm_ellipse",
    "format_verdict",
    "verdict_csv",
    "cell_text",
    "combine_results",
]

# Scalar keys of the per-spectrum record (the lead's record contract), plus names
# derived here.  Radiant and photon totals carry their quantity in the name.
_RECORD_METRICS = (
    "cct_K",
    "duv",
    "x",
    "y",
    "u",
    "v",
    "u_prime",
    "v_prime",
    "X",
    "Y",
    "Z",
    "luminous_flux_lm",
    "illuminance_lx",
    "luminance_cd_per_m2",
    "intensity_cd",
    *RADIANT_KEY.values(),
    "ler_lm_per_W",
    "sp_ratio",
    *ALPHA_OPIC_KEYS,
    "peak_nm",
    "centroid_nm",
    "fwhm_nm",
    "dominant_wavelength_nm",
    "purity",
    *PHOTON_KEY.values(),
    *PPF_KEY.values(),
    "Ra",
    "Rf",
    "Rg",
)
_DERIVED = ("efficacy_lm_per_W", "power_W")
# TM-30 hue-bin values: Rf_h1..Rf_h16, Rcs_h1..Rcs_h16 [%], Rhs_h1..Rhs_h16 (bin 1 holds the reds).
_BIN_METRICS = tuple(f"{k}{j}" for k in ("Rf_h", "Rcs_h", "Rhs_h") for j in range(1, 17))
METRICS: tuple[str, ...] = _RECORD_METRICS + tuple(f"R{i}" for i in range(1, 15)) + _DERIVED + _BIN_METRICS
#: Design-intent claims of ``[design_intent]`` (ANSI/IES TM-30-20 Annex E), as verdict metric names.
INTENT_METRICS = {"fidelity": "intent_fidelity", "preference": "intent_preference", "vividness": "intent_vividness"}
_CHROMA_METRICS = ("sdcm", "ansi_quadrangle")

_SECTIONS = ("claims", "limits", "chromaticity", "design_intent", "uncertainty", "samples")
_CLAIMS_KEYS = ("supplier", "product", "description", "reference", "date")
_CHROMA_KEYS = ("nominal_cct_K", "ansi_quadrangle", "max_sdcm", "sdcm_centre")
_SAMPLES_KEYS = ("power_W", "sidecar")


def _iec_nominals() -> tuple[int, ...]:
    """Nominal CCTs [K] with an IEC 60081 lamp ellipse ("F3000" -> 3000)."""
    from .tolerance import IEC60081_ELLIPSES

    return tuple(int(name[1:]) for name in IEC60081_ELLIPSES)


@dataclass(frozen=True)
class Limit:
    """An acceptance interval for one metric; either end may be open (None)."""

    metric: str
    min: float | None = None
    max: float | None = None


@dataclass(frozen=True)
class ChromaticityClaim:
    """Chromaticity claims tied to a nominal CCT."""

    nominal_cct_K: int
    ansi_quadrangle: bool = False
    max_sdcm: float | None = None
    sdcm_centre: str = "iec"


@dataclass(frozen=True)
class Claims:
    """A parsed claims file.

    ``power_W`` maps sample name to electrical power [W]; the key ``"*"`` holds
    a value that applies to every sample.  ``declared_id`` maps sample name to
    the supplier's identifier from the sidecar; ``sidecar`` maps it to every
    sidecar column as written (kept in the verdict CSV).
    """

    source: str
    supplier: str = ""
    product: str = ""
    limits: tuple[Limit, ...] = ()
    chromaticity: ChromaticityClaim | None = None
    uncertainty: Mapping[str, float] = field(default_factory=dict)
    power_W: Mapping[str, float] = field(default_factory=dict)
    declared_id: Mapping[str, str] = field(default_factory=dict)
    sidecar: Mapping[str, Mapping[str, str]] = field(default_factory=dict)
    design_intent: Mapping[str, int] = field(default_factory=dict)
    sha256: str | None = None  # of the claims file's bytes as read
    sidecar_path: str | None = None  # the sidecar's path, when one is named
    sidecar_sha256: str | None = None  # of the sidecar's bytes as read

    @property
    def metrics(self) -> tuple[str, ...]:
        """The metrics checked, in file order (limits first, then chromaticity)."""
        names = [lim.metric for lim in self.limits]
        if self.chromaticity is not None:
            if self.chromaticity.ansi_quadrangle:
                names.append("ansi_quadrangle")
            if self.chromaticity.max_sdcm is not None:
                names.append("sdcm")
        names += [INTENT_METRICS[k] for k in INTENT_METRICS if k in self.design_intent]
        return tuple(names)


# ------------------------------------------------------------------ parsing


def _suggest(word: str, choices) -> str:
    close = difflib.get_close_matches(word, list(choices), n=1, cutoff=0.5)
    if not close:
        close = [c for c in choices if c.lower() == word.lower()]
    return f"; did you mean {close[0]!r}?" if close else ""


def _number(value: Any, where: str, source: str) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise InputError(f"{where}: expected a number, got {value!r}", source=source)
    v = float(value)
    if not math.isfinite(v):
        raise InputError(f"{where}: expected a finite number, got {value!r}", source=source)
    return v


def _check_keys(table: Mapping, allowed, where: str, source: str) -> None:
    for key in table:
        if key not in allowed:
            raise InputError(f"{where}: unknown key {key!r}{_suggest(key, allowed)}", source=source)


def _table(doc: Mapping, name: str, source: str) -> Mapping:
    value = doc.get(name, {})
    if not isinstance(value, Mapping):
        raise InputError(f"[{name}] must be a table, got {value!r}", source=source)
    return value


#: Largest claims file read [bytes]: a datasheet's claims are a few hundred bytes.
MAX_CLAIMS_BYTES = 1024 * 1024
#: Largest sidecar read [bytes]: some 100,000 samples of name, power and identifier.
MAX_SIDECAR_BYTES = 16 * 1024 * 1024


def load_claims(path: str | Path) -> Claims:
    """Read and check a claims TOML file (see the module docstring for its layout).

    The file must be a regular file of at most :data:`MAX_CLAIMS_BYTES`; a sidecar it
    names must lie in the claims file's folder or below it (no absolute path, no ``..``).
    """
    from dataclasses import replace

    from .safe_io import read_user_file

    p = Path(path)
    source = str(p)
    try:
        raw = read_user_file(p, max_bytes=MAX_CLAIMS_BYTES)
    except InputError as exc:
        raise InputError(f"cannot read claims file ({exc.reason})", source=source) from None
    try:
        doc = tomllib.loads(raw.data.decode("utf-8"))
    except UnicodeDecodeError:
        raise InputError("claims file is not UTF-8 text", source=source) from None
    except tomllib.TOMLDecodeError as exc:
        raise InputError(f"not valid TOML ({str(exc).splitlines()[0]})", source=source) from None
    except RecursionError:
        raise InputError("not a claims file: nested too deeply", source=source) from None
    return replace(parse_claims(doc, source=source, base_dir=p.parent), sha256=raw.sha256)


def parse_claims(doc: Mapping[str, Any], *, source: str = "<claims>", base_dir: str | Path = ".") -> Claims:
    """Check a claims mapping (as parsed from TOML) and build :class:`Claims`."""
    _check_keys(doc, _SECTIONS, "top level", source)

    head = _table(doc, "claims", source)
    _check_keys(head, _CLAIMS_KEYS, "[claims]", source)
    for key, value in head.items():
        if not isinstance(value, str):
            raise InputError(f"[claims] {key}: expected text, got {value!r}", source=source)

    limits: list[Limit] = []
    for metric, spec in _table(doc, "limits", source).items():
        where = f"[limits] {metric}"
        if metric not in METRICS:
            hint = _suggest(metric, METRICS + _CHROMA_METRICS)
            if metric in _CHROMA_METRICS:
                hint = "; chromaticity claims belong in [chromaticity]"
            raise InputError(f"{where}: unknown metric{hint}", source=source)
        if not isinstance(spec, Mapping):
            raise InputError(f"{where}: expected a table like {{ min = 90 }}, got {spec!r}", source=source)
        _check_keys(spec, ("min", "max"), where, source)
        if not spec:
            raise InputError(f"{where}: give min, max or both", source=source)
        lo = _number(spec["min"], f"{where}.min", source) if "min" in spec else None
        hi = _number(spec["max"], f"{where}.max", source) if "max" in spec else None
        if lo is not None and hi is not None and lo > hi:
            raise InputError(f"{where}: inverted range, min {lo:g} > max {hi:g}", source=source)
        limits.append(Limit(metric, lo, hi))

    chroma = _parse_chromaticity(_table(doc, "chromaticity", source), source)

    uncertainty: dict[str, float] = {}
    checked = {lim.metric for lim in limits}
    if chroma is not None:
        checked |= {
            m for m, on in (("ansi_quadrangle", chroma.ansi_quadrangle), ("sdcm", chroma.max_sdcm is not None)) if on
        }
    for metric, value in _table(doc, "uncertainty", source).items():
        where = f"[uncertainty] {metric}"
        if metric not in METRICS + _CHROMA_METRICS:
            raise InputError(f"{where}: unknown metric{_suggest(metric, METRICS + _CHROMA_METRICS)}", source=source)
        if metric not in checked:
            raise InputError(f"{where}: no claim on this metric to apply it to", source=source)
        u = _number(value, where, source)
        if u < 0:
            raise InputError(f"{where}: an uncertainty cannot be negative, got {u:g}", source=source)
        uncertainty[metric] = u

    power, declared, side = _parse_samples(_table(doc, "samples", source), source, Path(base_dir))
    needs_power = [m for m in ("efficacy_lm_per_W", "power_W") if m in checked]
    if needs_power and not power:
        raise InputError(
            f"[limits] {needs_power[0]}: needs the electrical power; give [samples] power_W or sidecar",
            source=source,
        )
    intent = _parse_design_intent(_table(doc, "design_intent", source), source)
    if not limits and chroma is None and not intent:
        raise InputError("no claims to check: add a [limits], [chromaticity] or [design_intent] table", source=source)
    return Claims(
        source=source,
        supplier=head.get("supplier", ""),
        product=head.get("product", ""),
        limits=tuple(limits),
        chromaticity=chroma,
        uncertainty=uncertainty,
        power_W=power,
        declared_id=declared,
        sidecar=side[2] if side else {},
        design_intent=intent,
        sidecar_path=side[0] if side else None,
        sidecar_sha256=side[1] if side else None,
    )


def _parse_design_intent(table: Mapping, source: str) -> dict[str, int]:
    """``[design_intent]``: ``preference = "P2"`` claims at least TM-30-20 Annex E level P2 (1 strictest)."""
    from .rendering.intents import INTENTS

    _check_keys(table, tuple(INTENTS), "[design_intent]", source)
    out: dict[str, int] = {}
    for intent, value in table.items():
        prefix = INTENTS[intent]
        where = f"[design_intent] {intent}"
        text = str(value).strip().upper() if isinstance(value, (str, int)) and not isinstance(value, bool) else ""
        level = text[1:] if text.startswith(prefix) else text
        if level not in ("1", "2", "3"):
            raise InputError(
                f"{where}: expected a level {prefix}1, {prefix}2 or {prefix}3, got {value!r}", source=source
            )
        out[intent] = int(level)
    return out


def _parse_chromaticity(table: Mapping, source: str) -> ChromaticityClaim | None:
    if not table:
        return None
    from .tolerance import ANSI_NOMINAL_CCTS_K

    _check_keys(table, _CHROMA_KEYS, "[chromaticity]", source)
    if "nominal_cct_K" not in table:
        raise InputError("[chromaticity] nominal_cct_K: missing (e.g. nominal_cct_K = 3000)", source=source)
    nominal = _number(table["nominal_cct_K"], "[chromaticity] nominal_cct_K", source)
    if nominal not in ANSI_NOMINAL_CCTS_K:
        allowed = ", ".join(str(n) for n in ANSI_NOMINAL_CCTS_K)
        raise InputError(
            f"[chromaticity] nominal_cct_K: {nominal:g} K is not an ANSI C78.377 category; expected one of {allowed}",
            source=source,
        )
    quad = table.get("ansi_quadrangle", False)
    if not isinstance(quad, bool):
        raise InputError(f"[chromaticity] ansi_quadrangle: expected true or false, got {quad!r}", source=source)
    max_sdcm = None
    if "max_sdcm" in table:
        max_sdcm = _number(table["max_sdcm"], "[chromaticity] max_sdcm", source)
        if max_sdcm <= 0:
            raise InputError(f"[chromaticity] max_sdcm: must be positive, got {max_sdcm:g}", source=source)
    iec_nominals = _iec_nominals()
    default_centre = "iec" if int(nominal) in iec_nominals else "ansi"
    centre = table.get("sdcm_centre", default_centre)
    if centre not in ("iec", "ansi"):
        raise InputError(f'[chromaticity] sdcm_centre: expected "iec" or "ansi", got {centre!r}', source=source)
    if centre == "iec" and int(nominal) not in iec_nominals:
        raise InputError(
            f'[chromaticity] sdcm_centre: IEC 60081 has no {int(nominal)} K lamp ellipse; use "ansi"', source=source
        )
    if not quad and max_sdcm is None:
        raise InputError("[chromaticity]: set ansi_quadrangle = true and/or max_sdcm", source=source)
    return ChromaticityClaim(int(nominal), quad, max_sdcm, centre)


def _parse_samples(table: Mapping, source: str, base_dir: Path) -> tuple[dict, dict, tuple[str, str, dict] | None]:
    _check_keys(table, _SAMPLES_KEYS, "[samples]", source)
    if "power_W" in table and "sidecar" in table:
        raise InputError("[samples]: give power_W or sidecar, not both", source=source)
    if "power_W" in table:
        p = _number(table["power_W"], "[samples] power_W", source)
        if p <= 0:
            raise InputError(f"[samples] power_W: must be positive, got {p:g}", source=source)
        return {"*": p}, {}, None
    if "sidecar" not in table:
        return {}, {}, None
    name = table["sidecar"]
    if not isinstance(name, str) or not name:
        raise InputError(f"[samples] sidecar: expected a file name, got {name!r}", source=source)
    path = _confined(name, base_dir, source)
    power, declared, columns, sha = _read_sidecar(path, f"{source}: [samples] sidecar")
    return power, declared, (str(path), sha, columns)


def _confined(name: str, base_dir: Path, source: str) -> Path:
    """The sidecar's path: relative to the claims file's folder and inside it (after symbolic links)."""
    where = "[samples] sidecar"
    if "\x00" in name:
        raise InputError(f"{where}: the name holds a NUL character", source=source)
    rel = Path(name)
    if rel.is_absolute() or rel.drive:
        raise InputError(
            f"{where}: {name!r} is an absolute path; name a file in the claims file's folder", source=source
        )
    if ".." in rel.parts:
        raise InputError(f"{where}: {name!r} leaves the claims file's folder ('..' is not allowed)", source=source)
    path = base_dir / rel
    try:
        inside = Path(os.path.realpath(path)).is_relative_to(Path(os.path.realpath(base_dir)))
    except (OSError, ValueError):
        inside = False
    if not inside:
        raise InputError(f"{where}: {name!r} leads outside the claims file's folder (symbolic link)", source=source)
    return path


def _read_sidecar(path: Path, where: str) -> tuple[dict[str, float], dict[str, str], dict, str]:
    from .safe_io import read_user_file

    src = str(path)
    try:
        raw = read_user_file(path, max_bytes=MAX_SIDECAR_BYTES)
    except InputError as exc:
        raise InputError(f"cannot read sidecar ({exc.reason}), named in {where}", source=src) from None
    try:
        text = raw.data.decode("utf-8-sig")
    except UnicodeDecodeError:
        raise InputError("sidecar is not UTF-8 text", source=src) from None
    # Line numbers are kept for messages; blank lines and lines starting with "#" are skipped.
    numbered = [
        (n, line)
        for n, line in enumerate(text.splitlines(), start=1)
        if line.strip() and not line.lstrip().startswith("#")
    ]
    rows = [(n, r) for n, r in zip((n for n, _ in numbered), csv.reader(line for _, line in numbered))]
    if not rows:
        raise InputError("sidecar is empty; expected columns name,power_W[,declared_id]", source=src)
    head_line, head = rows[0]
    header = [c.strip() for c in head]
    for col in ("name", "power_W"):
        if col not in header:
            raise InputError(
                f"sidecar has no {col!r} column{_suggest(col, header)}; expected columns name,power_W[,declared_id]",
                source=src,
                line=head_line,
            )
    i_name, i_p = header.index("name"), header.index("power_W")
    i_id = header.index("declared_id") if "declared_id" in header else None
    power: dict[str, float] = {}
    declared: dict[str, str] = {}
    columns: dict[str, dict[str, str]] = {}  # every column of the sidecar, as written, by sample
    for lineno, row in rows[1:]:
        if len(row) < len(header):
            raise InputError(f"expected {len(header)} columns, got {len(row)}", source=src, line=lineno)
        nm = row[i_name].strip()
        if not nm:
            raise InputError("empty sample name", source=src, line=lineno)
        if nm in power:
            raise InputError(f"sample {nm!r} listed twice", source=src, line=lineno)
        try:
            p = float(row[i_p])
        except ValueError:
            raise InputError(f"power_W {row[i_p]!r} is not a number", source=src, line=lineno) from None
        if not (math.isfinite(p) and p > 0):
            raise InputError(f"power_W must be a positive number, got {row[i_p]!r}", source=src, line=lineno)
        power[nm] = p
        if i_id is not None:
            declared[nm] = row[i_id].strip()
        columns[nm] = {h: row[j].strip() for j, h in enumerate(header) if h and h != "name"}
    if not power:
        raise InputError("sidecar lists no samples", source=src)
    return power, declared, columns, raw.sha256


# ------------------------------------------------------------------ verdicts


@dataclass(frozen=True)
class Check:
    """One metric of one sample against its claim.

    ``margin`` is how far the value is inside the limits (negative outside), in
    the metric's unit; for ``ansi_quadrangle`` it is the distance in CIE 1960 uv
    to the nearest quadrangle edge and ``value`` is the quadrangle found.
    ``result`` is "pass", "fail" or "inconclusive"; ``uncertainty`` the U of a
    guard band (None under simple acceptance).

    :meth:`as_dict` always writes ``result``; ``pass`` (true, false, or null when
    inconclusive) is kept beside it for readers of earlier documents.
    """

    metric: str
    value: float | str | None
    min: float | None
    max: float | None
    margin: float | None
    result: str
    uncertainty: float | None = None
    uncertainty_source: str | None = None  # "claims" ([uncertainty] table) or "model" (computed)

    def as_dict(self) -> dict[str, Any]:
        d: dict[str, Any] = {
            "metric": self.metric,
            "value": self.value,
            "min": self.min,
            "max": self.max,
            "margin": self.margin,
            "result": self.result,
            "pass": None if self.result == "inconclusive" else self.result == "pass",
        }
        if self.uncertainty is not None:
            d["decision"] = {"rule": "guard-band", "U": self.uncertainty, "result": self.result}
            if self.uncertainty_source is not None:
                d["decision"]["U_source"] = self.uncertainty_source
        return d


@dataclass(frozen=True)
class SampleVerdict:
    name: str
    verdict: str
    checks: tuple[Check, ...]
    declared_id: str | None = None

    def as_dict(self) -> dict[str, Any]:
        return {
            "name": self.name,
            "verdict": self.verdict,
            "declared_id": self.declared_id,
            "checks": [c.as_dict() for c in self.checks],
        }


@dataclass(frozen=True)
class Verdict:
    """The outcome of :func:`verify`: overall verdict, per-sample checks, per-metric summary."""

    verdict: str
    samples: tuple[SampleVerdict, ...]
    summary: Mapping[str, Mapping[str, float | int | None]]
    guard_band: bool

    def as_dict(self) -> dict[str, Any]:
        d: dict[str, Any] = {
            "verdict": self.verdict,
            "samples": [s.as_dict() for s in self.samples],
            "summary": {k: dict(v) for k, v in self.summary.items()},
        }
        if self.guard_band:
            d["decision"] = "guard-band (ISO 14253-1, ILAC G8); simple acceptance where no U is given"
        return d


def _combine(results) -> str:
    results = list(results)
    if "fail" in results:
        return "fail"
    if "inconclusive" in results:
        return "inconclusive"
    return "pass"


def combine_results(results) -> str:
    """The verdict of several results: "fail" if any fails, else "inconclusive" if any is, else "pass"."""
    return _combine(results)


def _decide(margin: float | None, U: float | None) -> str:
    if margin is None or not math.isfinite(margin):
        return "fail"
    if not U:
        return "pass" if margin >= 0 else "fail"
    if margin >= U:
        return "pass"
    if margin <= -U:
        return "fail"
    return "inconclusive"


def _finite(v) -> float | None:
    if v is None or isinstance(v, bool):
        return None
    try:
        f = float(v)
    except (TypeError, ValueError):
        return None
    return f if math.isfinite(f) else None


def _record_value(rec: Mapping, metric: str, claims: Claims, name: str) -> float | None:
    if metric == "power_W" or metric == "efficacy_lm_per_W":
        power = claims.power_W.get(name, claims.power_W.get("*"))
        if power is None:
            raise InputError(f"no power_W for sample {name!r} in the sidecar", source=claims.source)
        if metric == "power_W":
            return power
        flux = _need(rec, "luminous_flux_lm", claims, name, why="efficacy_lm_per_W")
        f = _finite(flux)
        return None if f is None else f / power
    if metric in rec:
        return _finite(rec[metric])
    for key in ("Rf_h", "Rcs_h", "Rhs_h"):
        if metric.startswith(key) and metric[len(key) :].isdigit():
            bins = _need(rec, key, claims, name)
            j = int(metric[len(key) :]) - 1
            return None if bins is None or j >= len(bins) else _finite(bins[j])
    if metric[0] == "R" and metric[1:].isdigit() and "R" in rec:
        values = rec["R"]
        i = int(metric[1:]) - 1
        if values is None:
            return None
        return _finite(values[i]) if i < len(values) else None
    _need(rec, metric, claims, name)
    return None  # pragma: no cover - _need raised


def _need(rec: Mapping, key: str, claims: Claims, name: str, *, why: str | None = None):
    if key not in rec:
        reason = f" (for {why})" if why else ""
        quantity = rec.get("quantity")
        kind = f" (a {quantity} spectrum)" if quantity else ""
        raise InputError(f"claim needs {key}{reason} but sample {name!r}{kind} has none", source=claims.source)
    return rec[key]


def _guard(claims: Claims, computed: Mapping[str, float] | None, metric: str) -> tuple[float | None, str | None]:
    """U for a check: the claims file's [uncertainty] entry overrides the computed (model) one.

    The source is named only when computed uncertainties are in play (``computed`` not None).
    """
    if metric in claims.uncertainty:
        return claims.uncertainty[metric], ("claims" if computed is not None else None)
    if computed and computed.get(metric) is not None:
        return float(computed[metric]), "model"
    return None, None


def _limit_check(
    metric: str, value: float | None, lo: float | None, hi: float | None, U: float | None, source: str | None = None
) -> Check:
    margin = None
    if value is not None:
        sides = []
        if lo is not None:
            sides.append(value - lo)
        if hi is not None:
            sides.append(hi - value)
        margin = min(sides)
    return Check(metric, value, lo, hi, margin, _decide(margin, U), U, source)


def sdcm_ellipse(claim: ChromaticityClaim):
    """The one-step ellipse a chromaticity claim's ``max_sdcm`` is counted on.

    ``sdcm_centre = "iec"``: the IEC 60081 lamp-centre ellipse of the nominal CCT;
    ``"ansi"``: MacAdam (1942) interpolated to the ANSI C78.377 quadrangle centre.
    """
    from . import tolerance as tol

    if claim.sdcm_centre == "iec":
        return tol.iec60081_ellipse(claim.nominal_cct_K)
    return tol.macadam1942_ellipse(tol.ansi_quadrangle(claim.nominal_cct_K).centre_xy)


def _chroma_checks(records: list[Mapping], claims: Claims, computed=None) -> list[list[Check]]:
    """Chromaticity checks for every record at once, vectorised over samples."""
    from . import tolerance as tol

    c = claims.chromaticity
    out: list[list[Check]] = [[] for _ in records]
    if c is None:
        return out
    xy = np.array(
        [[_nan_if_none(_finite(_need(r, k, claims, _name(r, i)))) for k in ("x", "y")] for i, r in enumerate(records)],
        dtype=np.float64,
    ).reshape(-1, 2)
    if c.ansi_quadrangle:
        quad = tol.ansi_quadrangle(c.nominal_cct_K)
        found = tol.classify_ansi(xy, space="xy")
        margin = tol.edge_margin_uv(xy, quad, space="xy")
        for i in range(len(records)):
            m = _finite(margin[i])
            U, src = _guard(claims, computed[i] if computed is not None else None, "ansi_quadrangle")
            out[i].append(Check("ansi_quadrangle", found[i], None, None, m, _decide(m, U), U, src))
    if c.max_sdcm is not None:
        steps = sdcm_ellipse(c).steps(xy)
        for i in range(len(records)):
            s = _finite(steps[i])
            out[i].append(
                _limit_check(
                    "sdcm", s, None, c.max_sdcm, *_guard(claims, computed[i] if computed is not None else None, "sdcm")
                )
            )
    return out


def _intent_checks(records: list[Mapping], claims: Claims) -> list[list[Check]]:
    """TM-30-20 Annex E design-intent checks, vectorised over samples.

    The value is the strictest level met ("P2", or "none"); the margin is the claimed level
    minus the level met, in levels (none counts as 4), so a margin >= 0 passes.
    """
    out: list[list[Check]] = [[] for _ in records]
    if not claims.design_intent:
        return out
    from .rendering.intents import INTENTS, levels

    def column(key, j=None):
        vals = []
        for i, r in enumerate(records):
            v = _need(r, key, claims, _name(r, i), why="a design-intent claim")
            v = v if j is None or v is None else v[j]
            vals.append(_nan_if_none(_finite(v)))
        return np.array(vals, dtype=np.float64)

    lv = levels(column("Rf"), column("Rg"), column("Rf_h", 0), column("Rcs_h", 0))  # Rcs_h in percent
    for intent, want in claims.design_intent.items():
        got = lv[intent]
        for i in range(len(records)):
            g = int(got[i])
            margin = float(want - (g if g > 0 else 4))
            out[i].append(
                Check(
                    INTENT_METRICS[intent],
                    f"{INTENTS[intent]}{g}" if g else "none",
                    None,
                    float(want),
                    margin,
                    _decide(margin, None),
                    None,
                )
            )
    return out


def _nan_if_none(v: float | None) -> float:
    return np.nan if v is None else v


def _name(rec: Mapping, i: int) -> str:
    return str(rec.get("name", f"sample {i + 1}"))


def _summary(samples: list[SampleVerdict], metrics: tuple[str, ...]) -> dict[str, dict[str, Any]]:
    summary: dict[str, dict[str, Any]] = {}
    for j, metric in enumerate(metrics):
        checks = [s.checks[j] for s in samples]
        # For the quadrangle the value is a name; its statistics are of the uv margin.
        nums = np.array(
            [
                (ch.margin if metric == "ansi_quadrangle" else ch.value)
                for ch in checks
                if _finite(ch.margin if metric == "ansi_quadrangle" else ch.value) is not None
            ],
            dtype=np.float64,
        )
        n = nums.size
        summary[metric] = {
            "count_pass": sum(ch.result == "pass" for ch in checks),
            "count_inconclusive": sum(ch.result == "inconclusive" for ch in checks),
            "count_fail": sum(ch.result == "fail" for ch in checks),
            "mean": float(nums.mean()) if n else None,
            "std": float(nums.std(ddof=1)) if n >= 2 else None,
            "min": float(nums.min()) if n else None,
            "max": float(nums.max()) if n else None,
        }
    return summary


def verify(
    records: Sequence[Mapping[str, Any]], claims: Claims, uncertainties: Sequence[Mapping[str, float]] | None = None
) -> Verdict:
    """Check measured records (from ``Analysis.records()``) against ``claims``.

    Each sample gets one :class:`Check` per claimed metric, in the order of
    :attr:`Claims.metrics`.  ``summary`` gives, per metric, the number of samples
    that pass, and the mean, sample standard deviation (ddof = 1; None for
    fewer than two values), minimum and maximum of the values.  For
    ``ansi_quadrangle`` these statistics are of the uv edge margin.

    ``uncertainties`` gives, per record, computed expanded uncertainties U (k = 2) by
    metric (:func:`cctkit.uncertainty.claim_uncertainties`); they set the guard band of
    each check, except where the claims file's ``[uncertainty]`` table names the metric.

    Raises
    ------
    InputError
        No records, or a claim needs a quantity a record does not have (for
        example luminous flux of a relative spectrum, or a sample missing from
        the power sidecar).
    """
    records = list(records)
    if not records:
        raise InputError("no samples to verify", source=claims.source)
    if uncertainties is not None and len(uncertainties) != len(records):
        raise InputError(f"{len(uncertainties)} uncertainty sets for {len(records)} samples", source=claims.source)
    chroma = _chroma_checks(records, claims, uncertainties)
    intent_checks = _intent_checks(records, claims)
    samples = []
    for i, rec in enumerate(records):
        name = _name(rec, i)
        checks = [
            _limit_check(
                lim.metric,
                _record_value(rec, lim.metric, claims, name),
                lim.min,
                lim.max,
                *_guard(claims, uncertainties[i] if uncertainties is not None else None, lim.metric),
            )
            for lim in claims.limits
        ]
        checks += chroma[i]
        checks += intent_checks[i]
        samples.append(
            SampleVerdict(name, _combine(c.result for c in checks), tuple(checks), claims.declared_id.get(name))
        )
    return Verdict(
        verdict=_combine(s.verdict for s in samples),
        samples=tuple(samples),
        summary=_summary(samples, claims.metrics),
        guard_band=bool(claims.uncertainty) or bool(uncertainties),
    )


# ------------------------------------------------------------------ text and CSV of a verdict document


def cell_text(v: Any) -> str:
    """A value of a verdict or bin table as text: "n/a" for missing, 4/2/1 decimals by size."""
    if v is None:
        return "n/a"
    if isinstance(v, float):
        if not math.isfinite(v):
            return "n/a"
        a = abs(v)
        return f"{v:.4f}" if a < 1 else (f"{v:.2f}" if a < 100 else f"{v:.1f}")
    return str(v)


def _limit_text(c: Mapping[str, Any]) -> str:
    if c["metric"] == "ansi_quadrangle":
        return "inside"
    lo, hi = c["min"], c["max"]
    if lo is not None and hi is not None:
        return f"{cell_text(lo)}..{cell_text(hi)}"
    return f">={cell_text(lo)}" if lo is not None else f"<={cell_text(hi)}"


def format_verdict(doc: Mapping[str, Any], claims: Claims, *, wide: bool = False, width: int = 100) -> str:
    """A verdict document (:meth:`Verdict.as_dict`) as text: a table that fits ``width`` columns
    (:func:`cctkit.report.text.verdict_table`), or with ``wide`` every cell's value, limit,
    margin and result (:func:`cctkit.report.text.verdict_detail`)."""
    from .report.text import verdict_detail, verdict_table

    return verdict_detail(doc, claims) if wide else verdict_table(doc, claims, width=width)


def verdict_csv(doc: Mapping[str, Any], claims: Claims) -> str:
    """A verdict document as CSV: one row per sample with its declared id and every sidecar
    column; per claim its value, limits, margin, U and result (:func:`cctkit.report.text.verdict_rows_csv`)."""
    from .report.text import verdict_rows_csv

    text = verdict_rows_csv(doc, claims)
    # A traceable verdict (samples with their file's SHA-256) keeps its provenance in the CSV too.
    if not (doc["samples"] and all("sha256" in s for s in doc["samples"])):
        return text
    import csv
    import io

    from .formats import csv_text

    header, *rows = list(csv.reader(io.StringIO(text)))
    extra = [[s.get("source"), s.get("sha256"), claims.sha256] for s in doc["samples"]]
    return csv_text(
        header + ["source", "sha256", "claims_sha256"],
        [row + ["" if v is None else v for v in more] for row, more in zip(rows, extra)],
    )
