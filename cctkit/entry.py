"""The ``cctkit`` console entry point, and ``cctkit cct`` without the command-line framework.

``cctkit cct --xy X,Y`` is a look-up a person types at a prompt: its own work takes a few
milliseconds, and importing and building the command-line framework (``cctkit.cli``) took
longer than the rest of the command after numpy.  :func:`main` therefore answers the plain
forms of that one command itself -- ``[--quiet] cct (--xy | --uv | --uvp) A,B`` with any of
``--method M``, ``--observer O``, ``--json`` and ``--quiet`` -- through the same function the
framework's command calls (:func:`cct_result`), so the numbers and the text are the same.
Anything else (help, another command, another spelling, a bad value, a warning) goes to
:func:`cctkit.cli.main`, which gives its own answer and error messages; nothing is printed
before that decision.
"""

from __future__ import annotations

import os
import sys
from typing import Any

from .errors import InputError

__all__ = ["main", "cct_result", "coordinate_pair", "parse_observer"]


def coordinate_pair(name: str, text: str, rest: list[str]) -> tuple[float, float]:
    """``"0.3127,0.3290"`` (or ``"0.3127"`` followed by ``"0.3290"`` in ``rest``) as two numbers."""
    parts = [p for p in text.replace(";", ",").split(",")] if "," in text or ";" in text else [text]
    if len(parts) == 1 and rest:
        parts.append(rest.pop(0))
    try:
        if len(parts) != 2:
            raise ValueError
        return float(parts[0]), float(parts[1])
    except ValueError:
        raise InputError(
            f"{name} takes two numbers separated by a comma, e.g. {name} 0.3127,0.3290; got {','.join(parts)!r}"
        ) from None


def parse_observer(value: str) -> int:
    """``--observer``'s text (``2``, ``10``, ``10°``, ``10deg``) as 2 or 10."""
    key = str(value).replace("°", "").replace("deg", "").strip()
    if key not in ("2", "10"):
        raise InputError(f"--observer must be 2 or 10, got {value!r}")
    return int(key)


def cct_result(
    xy: str | None, uv: str | None, uvp: str | None, method: str, observer: str, rest: list[str]
) -> tuple[dict[str, Any], list[str]]:
    """The JSON document and the table lines of ``cctkit cct`` (InputError for a bad chromaticity).

    ``rest`` holds the positional words after the options (the second number of the "X Y" form);
    what is left of it after the chromaticity is refused.
    """
    import numpy as np

    from .cct import METHODS, cct_duv, table_range_text
    from .colorimetry import uvp_to_uv, xy_to_uv
    from .constants import DUV_LIMIT
    from .formats import format_number

    given = [(n, v) for n, v in (("--xy", xy), ("--uv", uv), ("--uvp", uvp)) if v is not None]
    if len(given) != 1:
        raise InputError("give exactly one of --xy X,Y, --uv U,V or --uvp U',V'")
    if method not in METHODS:
        raise InputError(f"--method must be one of {', '.join(METHODS)}, got {method!r}")
    name, pair = given[0][0], coordinate_pair(*given[0], rest)
    if rest:
        raise InputError(f"unexpected argument {rest[0]!r}; give the chromaticity as {name} X,Y")
    p = np.asarray(pair, dtype=float)
    if not np.all(np.isfinite(p)) or np.any(p <= 0) or np.any(p >= 1):
        raise InputError(f"{name} values must be chromaticity coordinates between 0 and 1, got {pair[0]:g} {pair[1]:g}")
    if name == "--xy":
        if p.sum() >= 1:
            raise InputError(f"--xy {pair[0]:g} {pair[1]:g} is not a chromaticity (x + y must be below 1)")
        p = xy_to_uv(p)
    elif name == "--uvp":
        p = uvp_to_uv(p)
    r = cct_duv(p, method=method, observer=parse_observer(observer))
    cct, duv = float(r.cct_K), float(r.duv)
    meaningful = bool(r.in_domain)
    doc: dict[str, Any] = {
        "cct_K": cct if meaningful else None,
        "duv": duv if np.isfinite(duv) else None,
        "method": method,
        "u": float(p[0]),
        "v": float(p[1]),
    }
    if not meaningful:
        if not np.isfinite(duv):
            doc["warning"] = (
                f"the nearest Planckian point lies outside the {method} table "
                f"({table_range_text(method)}): CCT and Duv not computed"
            )
        elif abs(duv) > DUV_LIMIT:
            doc["warning"] = f"|Duv| = {abs(duv):.4f} exceeds {DUV_LIMIT}: CCT is not meaningful"
        else:
            doc["warning"] = "nearest Planckian point outside 1000-100000 K: CCT not reported"
    lines = [
        f"CCT  {cct:.1f} K" if meaningful else "CCT  n/a",
        f"Duv  {format_number(duv, '{:+.5f}')}" if np.isfinite(duv) else "Duv  n/a",
        f"method  {method}; CIE 1960 uv = ({p[0]:.5f}, {p[1]:.5f})",
    ]
    return doc, lines


_CCT_VALUED = ("--xy", "--uv", "--uvp", "--method", "--observer")


def _plain_cct(args: list[str]) -> tuple[dict[str, str], bool, bool] | None:
    """The options of a plain ``cct`` run (values, --json, --quiet), or None for anything else."""
    quiet = False
    k = 0
    while k < len(args) and args[k] == "--quiet":
        quiet, k = True, k + 1
    if k >= len(args) or args[k] != "cct":
        return None
    values: dict[str, str] = {}
    json_out = False
    k += 1
    while k < len(args):
        word = args[k]
        if word == "--json":
            json_out = True
        elif word == "--quiet":
            quiet = True
        elif word in _CCT_VALUED and word not in values and k + 1 < len(args) and not args[k + 1].startswith("-"):
            values[word] = args[k + 1]
            k += 1
        else:
            return None
        k += 1
    return values, json_out, quiet


def _quick_cct(args: list[str]) -> bool:
    """Answer a plain ``cct`` run; False (nothing printed) where the full command line must answer."""
    if any(key.endswith("_COMPLETE") for key in os.environ):
        return False
    plain = _plain_cct(args)
    if plain is None:
        return False
    values, json_out, quiet = plain
    import warnings

    try:
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            doc, lines = cct_result(
                values.get("--xy"),
                values.get("--uv"),
                values.get("--uvp"),
                values.get("--method", "exact"),
                values.get("--observer", "2"),
                [],
            )
    except Exception:  # noqa: BLE001 - the full command line reports it, in its words
        return False
    if caught:  # the full command line prints warnings its own way
        return False
    if json_out:
        from .formats import dumps

        sys.stdout.write(dumps(doc))
    else:
        sys.stdout.write("".join(line + "\n" for line in lines))
    sys.stdout.flush()
    if "warning" in doc and not quiet:
        sys.stderr.write(f"warning: {doc['warning']}\n")
        sys.stderr.flush()
    return True


def main() -> None:
    """Console-script entry point: the plain ``cct`` forms here, everything else by :func:`cctkit.cli.main`."""
    from .errors import Stopped, stop_signals

    try:  # as the full command line answers a signal or a closed pipe
        with stop_signals():
            if _quick_cct(sys.argv[1:]):
                return
    except Stopped as exc:
        sys.stderr.write(f"cctkit: {exc.reason}; {exc.note}\n")
        sys.exit(exc.code)
    except BrokenPipeError:  # the reader of our output went away (e.g. `| head`)
        try:
            sys.stdout = open(os.devnull, "w")  # nothing more can reach the closed pipe
        except (OSError, ValueError):
            pass
        sys.exit(0)
    from .cli import main as full

    full()
