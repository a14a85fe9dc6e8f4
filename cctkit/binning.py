"""Chromaticity binning: ANSI C78.377 quadrangle and SDCM step of each sample.

Each chromaticity gets:

* ``quadrangle``: the ANSI C78.377-2017 quadrangle that holds it ("3000K", ...),
  or None (see :func:`cctkit.tolerance.classify_ansi`);
* ``centre``: the nearest nominal centre, by distance in CIE 1960 uv (None without a chromaticity);
* ``sdcm_steps``: its distance from that centre in SDCM steps;
* ``sdcm_bin``: the smallest whole number of steps whose ellipse holds it
  (ceil of the steps, at least 1), or -1 when it cannot be computed.

Three sets of centres and ellipses, chosen by ``ellipses``:

``"iec-else-ansi"`` (default)
    The rule ``verify`` uses for an SDCM claim (:mod:`cctkit.claims`, ``sdcm_centre``
    default): at the ANSI nominal CCTs that have an IEC 60081 Annex D lamp ellipse (2700,
    3000, 3500, 4000, 5000, 6500 K) that lamp's centre and ellipse; at the others the ANSI
    quadrangle centre with MacAdam's (1942) ellipse interpolated there.  So ``bin`` and
    ``verify`` give the same step count for the same unit.
``"macadam1942"``
    The ten ANSI quadrangle centres, each with MacAdam's (1942) ellipse
    interpolated there.  The 2200 K and 2500 K centres lie outside the hull of
    MacAdam's data; they use the nearest datum ellipse and are marked
    ``extrapolated``.
``"iec60081"``
    The six IEC 60081 Annex D lamp chromaticities F2700 ... F6500 with their
    ellipses.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .colorimetry import xy_to_uv
from .errors import InputError

__all__ = ["BinResult", "bin_chromaticities", "ELLIPSE_SETS", "DEFAULT_ELLIPSES"]

ELLIPSE_SETS = ("iec-else-ansi", "macadam1942", "iec60081")
#: The default set: the same centre rule as a ``verify`` SDCM claim.
DEFAULT_ELLIPSES = "iec-else-ansi"


@dataclass(frozen=True)
class BinResult:
    """Bins of N chromaticities (arrays of length N)."""

    names: tuple[str, ...]
    xy: np.ndarray
    quadrangle: np.ndarray  # object: str or None
    centre: np.ndarray  # object: str, None where the chromaticity is not finite
    sdcm_steps: np.ndarray
    sdcm_bin: np.ndarray  # int, -1 where undefined
    extrapolated: np.ndarray  # bool
    ellipses: str

    def counts(self) -> dict[str, dict[str, int]]:
        """Per quadrangle name ("none" outside all), the number of samples per SDCM bin ("1", "2", ...)."""
        out: dict[str, dict[str, int]] = {}
        for q, b in zip(self.quadrangle, self.sdcm_bin):
            qk = "none" if q is None else str(q)
            bk = "undefined" if b < 0 else str(int(b))
            out.setdefault(qk, {})
            out[qk][bk] = out[qk].get(bk, 0) + 1
        return {
            k: dict(sorted(v.items(), key=lambda kv: (not kv[0].isdigit(), int(kv[0]) if kv[0].isdigit() else 0)))
            for k, v in sorted(out.items(), key=lambda kv: _order(kv[0]))
        }

    def records(self) -> list[dict]:
        """One plain dict per sample (JSON/CSV ready)."""
        return [
            {
                "name": n,
                "x": float(self.xy[i, 0]),
                "y": float(self.xy[i, 1]),
                "quadrangle": self.quadrangle[i],
                "centre": self.centre[i],
                "sdcm_steps": float(self.sdcm_steps[i]),
                "sdcm_bin": int(self.sdcm_bin[i]) if self.sdcm_bin[i] >= 0 else None,
                "extrapolated": bool(self.extrapolated[i]),
            }
            for i, n in enumerate(self.names)
        ]

    def csv(self) -> str:
        """CSV text, one row per sample (:func:`cctkit.formats.csv_text`: floats at repr precision)."""
        from .formats import csv_text

        cols = ["name", "x", "y", "quadrangle", "centre", "sdcm_steps", "sdcm_bin", "extrapolated"]
        return csv_text(cols, ([r[c] for c in cols] for r in self.records()))


def _order(name: str) -> tuple[int, str]:
    digits = "".join(ch for ch in name if ch.isdigit())
    return (int(digits) if digits else 10**9, name)


def _centres(ellipses: str):
    from . import tolerance as tol

    if ellipses == "macadam1942":
        quads = tol.ansi_quadrangles()
        names = [q.name for q in quads]
        xy = np.stack([q.centre_xy for q in quads])
        g, extra = tol.macadam1942_metric(xy)
        return names, xy, g, extra
    if ellipses == "iec-else-ansi":
        names, xy, g, extra = _centres("macadam1942")
        xy, g, extra = xy.copy(), g.copy(), extra.copy()
        for k, name in enumerate(names):
            key = f"F{name.rstrip('K')}"
            if key in tol.IEC60081_ELLIPSES:
                e = tol.iec60081_ellipse(key)
                names[k], xy[k], g[k], extra[k] = e.name, e.centre_xy, e.g, False
        return names, xy, g, extra
    if ellipses == "iec60081":
        items = [tol.iec60081_ellipse(k) for k in tol.IEC60081_ELLIPSES]
        return (
            [e.name for e in items],
            np.stack([e.centre_xy for e in items]),
            np.stack([e.g for e in items]),
            np.zeros(len(items), dtype=bool),
        )
    raise InputError(f"ellipses must be one of {', '.join(ELLIPSE_SETS)}, got {ellipses!r}")


def bin_chromaticities(xy, *, names=None, ellipses: str = DEFAULT_ELLIPSES) -> BinResult:
    """Assign chromaticities (N, 2) in CIE 1931 xy to quadrangles and SDCM bins.

    Parameters
    ----------
    xy
        Chromaticities, shape (N, 2) [CIE 1931 x, y].
    names
        One name per point (default "1", "2", ...).
    ellipses
        ``"iec-else-ansi"`` (default: the centre rule of ``verify``), ``"macadam1942"`` or
        ``"iec60081"`` (see the module docstring).
    """
    from . import tolerance as tol

    xy = np.asarray(xy, dtype=np.float64)
    if xy.ndim != 2 or xy.shape[1] != 2:
        raise InputError(f"chromaticities must have shape (N, 2), got {xy.shape}")
    n = xy.shape[0]
    names = tuple(str(s) for s in names) if names is not None else tuple(str(i + 1) for i in range(n))
    if len(names) != n:
        raise InputError(f"{len(names)} names for {n} chromaticities")
    cnames, cxy, cg, cextra = _centres(ellipses)
    uv = xy_to_uv(xy)
    cuv = xy_to_uv(cxy)
    d2 = ((uv[:, None, :] - cuv[None]) ** 2).sum(-1)
    finite = np.isfinite(d2).all(axis=1)
    k = np.argmin(np.where(np.isfinite(d2), d2, np.inf), axis=1) if n else np.zeros(0, dtype=int)
    steps = tol.sdcm_steps(xy, cxy[k], cg[k])
    steps = np.where(finite, steps, np.nan)
    with np.errstate(invalid="ignore"):
        bins = np.where(np.isfinite(steps), np.maximum(np.ceil(steps), 1.0), -1.0).astype(int)
    centre = np.array(cnames, dtype=object)[k] if n else np.zeros(0, dtype=object)
    centre[~finite] = None
    return BinResult(
        names=names,
        xy=xy,
        quadrangle=tol.classify_ansi(xy, space="xy"),
        # no chromaticity (all tristimulus values zero, NaN): no nearest centre either
        centre=centre,
        sdcm_steps=steps,
        sdcm_bin=bins,
        extrapolated=cextra[k] & finite,
        ellipses=ellipses,
    )
