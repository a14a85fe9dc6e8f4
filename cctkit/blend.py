"""Blending the channels of a multi-channel luminaire: drive levels that hit a target white.

A tunable luminaire has K channels; channel k measured alone at full drive emits the
spectrum S_k(lambda).  Driven at levels d = (d_1 ... d_K), 0 <= d_k <= 1, it is assumed
to emit

    S(lambda) = sum_k d_k S_k(lambda)                                   (additivity)

i.e. each channel's output scales linearly with its drive level and keeps its spectral
shape, and channels do not interact (no thermal droop, no colour shift with drive level,
no optical cross-talk).  Real fixtures depart from this; the results are as good as the
assumption, and a blend should be measured before it is signed off.

Everything that follows is linear in ``d`` under that assumption:

* tristimulus values ``XYZ = M d`` with ``M`` (3, K) the channels' XYZ at full drive
  (CIE 15:2018 plain summation, Km = 683.002 lm/W for absolute quantities), so the
  luminous output is ``Y = M[1] d``;
* a target chromaticity (CIE 1960 u, v -> x, y) fixes the direction of XYZ,
  ``t = (x/y, 1, (1 - x - y)/y)``, and a target luminous output Y fixes the vector:
  ``M d = Y t``, three linear equations;
* radiant power, electrical power (when each channel's power at full drive is given)
  and every alpha-opic quantity are linear too.

Reachability.  The chromaticities a fixture can make are those of the cone
``{M d : d >= 0}``: in any chromaticity diagram that is the convex hull of the
channels' chromaticities (a central projection keeps convexity).  A target outside it
is refused (status ``out-of-gamut``).  Inside it, the drive limits cap the luminous
output: ``Y_max = max {Y : M d = Y t, 0 <= d <= 1}``, a linear program; a luminous
target above it is refused (``too-bright``).  "As bright as the path allows" (the
default, ``luminous="flat"``) takes the smallest ``Y_max`` over the reachable set
points of the path, which gives a tuning of constant output.

Solvers.

* Three channels: ``M`` is square and ``d = Y M^-1 t`` is the only solution (linear
  algebra; the target XYZ is reproduced to rounding).
* Efficacy and alpha-opic objectives at a fixed chromaticity and output are linear
  programs in ``d``: maximum efficacy is minimum power (electrical when given, else
  radiant: the luminous efficacy of radiation); melanopic maximum/minimum is the
  extreme of the melanopic radiant total at that output.  Solved with
  :func:`scipy.optimize.linprog` (HiGHS); its status is kept, and the optimum is
  polished onto the equality constraints by a small least-squares step on the
  channels that are not at a drive limit.
* Fidelity (maximum Rf, optionally with Rg bounds and an R9 floor) is not linear.
  Every vertex of the set of feasible drives (at most K <= 8 channels: all bases,
  solved as 3 x 3 systems; more channels: vertices from linear programs in random
  directions), interior points between them and the previous set point's drives are
  evaluated in one vectorised batch through :func:`cctkit.rendering.colour_rendition`
  (the measures :func:`cctkit.analysis.analyse` uses); the best one is refined by
  :func:`scipy.optimize.minimize` (SLSQP) in the (K - 3)-dimensional space of drives
  that keep the chromaticity and output.  Guaranteed: the returned drives are within
  0-1 and hit the target chromaticity and output (the equality constraints hold to
  rounding), and any Rg/R9 constraint holds for the returned blend (it is re-checked).
  Not guaranteed: that Rf is the global maximum; it is the best of the candidates,
  locally improved.  A rendering constraint no candidate meets is reported
  (``constraint-unmet``) although a blend meeting it might exist.
* Linear objectives with rendering constraints (``--maximise efficacy --r9-floor 50``)
  take the linear-program optimum when it meets the constraints, otherwise the same
  candidate search and SLSQP refinement with the linear objective.

Paths.  Set points are solved in order; each starts from (and, for fidelity, prefers
when nearly as good) the drives of the previous reachable set point, so drive levels
change smoothly; the largest change of any channel's drive between neighbours is
reported.

Every returned blend is recomputed from its drives through :func:`cctkit.analysis.analyse`,
and those are the numbers reported (CCT, Duv, Ra, R9, Rf, Rg, LER, melanopic DER).
"""

from __future__ import annotations

import itertools
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from .constants import WAVELENGTH_NM
from .errors import InputError
from .spectra import Quantity, Spectra

__all__ = [
    "ADDITIVITY",
    "GUARANTEES",
    "OBJECTIVES",
    "STATUSES",
    "CONTINUATION_RF",
    "Channels",
    "BlendPath",
    "channels_from_spectra",
    "read_channels",
    "read_power",
    "parse_cct_path",
    "parse_duv",
    "parse_range",
    "read_points",
    "duv_targets",
    "reachable_hull",
    "hull_distance_uv",
    "max_luminous",
    "max_luminous_by_vertices",
    "linear_blend",
    "solve_blend_path",
]

ADDITIVITY = (
    "additive channels: a channel driven at level d (0-1) emits d times its full-drive "
    "spectrum, keeps its spectral shape and does not interact with the other channels"
)
GUARANTEES = {
    "linear": "exact: the drives are the optimum of a linear program (HiGHS) or the only solution "
    "(three channels), polished onto the target chromaticity and output",
    "nonlinear": "the drives are within 0-1, hit the target chromaticity and output, and meet every "
    "Rg/R9 constraint given; the objective is the best of a vectorised candidate search "
    "refined by SLSQP, a local optimum, not guaranteed to be the global one",
}

#: (objective, sense) pairs the solver accepts.
OBJECTIVES = (("efficacy", "max"), ("fidelity", "max"), ("melanopic", "max"), ("melanopic", "min"))

#: Status of a set point and what it means.
STATUSES = {
    "ok": "blend found",
    "out-of-gamut": "target chromaticity outside the fixture's reachable region",
    "too-bright": "luminous target above what the drive limits allow at that chromaticity",
    "no-target": "no target chromaticity defined at this set point",
    "constraint-unmet": "no blend found that meets the rendering constraints",
    "solver-failed": "the solver did not return a solution",
}

#: Continuation: a set point keeps to its neighbour's blend (and refines from it) when that blend is
#: within this many Rf points of the best candidate (linear objectives: within 0.1 %) [1].
CONTINUATION_RF = 0.3

#: A drive within this of 0 or 1 is at its limit [1].
_AT_LIMIT = 1e-9
#: Channel counts up to which every vertex of the feasible drives is enumerated.
_ENUMERATE_MAX_K = 8


# --------------------------------------------------------------------------- channels


@dataclass(frozen=True, eq=False)
class Channels:
    """K channel spectra at full drive, on the working grid, with what the solvers need.

    Attributes
    ----------
    names
        Channel names (from the file header).
    values
        Spectra at full drive, (K, 471) in ``quantity.unit``.
    quantity
        Radiometric quantity of every channel.
    power_W
        Electrical power of each channel at full drive [W], or None.
    sources, sha256
        Where each channel came from and the SHA-256 of its file.
    power_source, power_sha256
        The file the powers came from and its SHA-256 (empty when given as numbers).
    """

    names: tuple[str, ...]
    values: np.ndarray
    quantity: Quantity
    power_W: np.ndarray | None = None
    sources: tuple[str, ...] = ()
    sha256: tuple[str, ...] = ()
    power_source: str = ""
    power_sha256: str = ""
    XYZ: np.ndarray = field(init=False)
    uv: np.ndarray = field(init=False)
    radiant: np.ndarray = field(init=False)
    melanopic: np.ndarray = field(init=False)

    def __post_init__(self) -> None:
        from .alphaopic import ALPHA_OPIC_NAMES, alpha_opic
        from .colorimetry import XYZ, XYZ_to_uv
        from .constants import KM_LM_PER_W
        from .photometry import radiant_total

        v = np.asarray(self.values, dtype=np.float64)
        tri = XYZ(v) * KM_LM_PER_W
        object.__setattr__(self, "XYZ", tri)
        object.__setattr__(self, "uv", XYZ_to_uv(tri))
        object.__setattr__(self, "radiant", radiant_total(v))
        mel = alpha_opic(v, self.quantity).radiant[:, ALPHA_OPIC_NAMES.index("melanopic")]
        object.__setattr__(self, "melanopic", np.asarray(mel, dtype=np.float64))

    def __len__(self) -> int:
        return len(self.names)

    @property
    def luminous(self) -> np.ndarray:
        """Luminous output of each channel at full drive, in the luminous unit of the quantity, (K,)."""
        return self.XYZ[:, 1]

    @property
    def luminous_key(self) -> str:
        return self.quantity.luminous_name


def channels_from_spectra(spectra: Spectra, power_W: Sequence[float] | np.ndarray | None = None) -> Channels:
    """:class:`Channels` from spectra already read (one spectrum per channel).

    Raises
    ------
    InputError
        Fewer than three channels, duplicate names, a channel with no light, or a power
        list of the wrong length or with non-positive values.
    """
    from .spectra import to_working_grid

    source = spectra.sources[0] if spectra.sources else None
    k = len(spectra)
    if k < 3:
        raise InputError(
            f"{k} channel found; blending to a target chromaticity needs at least 3 channels (one column per channel)"
            if k == 1
            else f"{k} channels found; blending to a target chromaticity needs at least 3 channels "
            "(two channels reach only the line between them)",
            source=source,
        )
    dup = sorted({n for n in spectra.names if spectra.names.count(n) > 1})
    if dup:
        raise InputError(f"channel names must differ; {dup[0]!r} appears more than once", source=source)
    g = to_working_grid(spectra)
    if np.any(g.values.sum(axis=1) <= 0):
        i = int(np.argmax(g.values.sum(axis=1) <= 0))
        raise InputError(f"channel {spectra.names[i]!r} has no light (its values sum to zero or less)", source=source)
    p = None
    if power_W is not None:
        p = np.asarray(power_W, dtype=np.float64).reshape(-1)
        if p.shape != (k,):
            raise InputError(f"{p.size} power values given for {k} channels", source="power")
        if not np.all(np.isfinite(p)) or np.any(p <= 0):
            raise InputError("every channel power must be a positive number of watts", source="power")
        if g.quantity is not Quantity.RADIANT_FLUX:
            raise InputError(
                f"electrical power needs channels in radiant flux (W/nm) so that efficacy is "
                f"lm/W; the channels are {g.quantity.value}",
                source=source,
            )
    return Channels(names=g.names, values=g.values, quantity=g.quantity, power_W=p, sources=g.sources, sha256=g.sha256)


def read_power(path, names: Sequence[str]) -> np.ndarray:
    """Electrical power per channel at full drive from a CSV file ``channel,power_W`` [W].

    Lines starting with ``#`` are comments; the first other line is the header.  Every
    channel in ``names`` must appear once; the result follows the order of ``names``.
    """
    import csv
    import io
    from pathlib import Path

    p = Path(path)
    src = str(path)
    try:
        text = p.read_bytes().decode("utf-8-sig")
    except OSError as exc:
        raise InputError(f"cannot read the power file ({exc.strerror or exc})", source=src) from None
    except UnicodeDecodeError:
        raise InputError("the power file is not UTF-8 text", source=src) from None
    rows = [
        (n, r)
        for n, r in enumerate(csv.reader(io.StringIO(text)), start=1)
        if r and not r[0].lstrip().startswith("#") and any(c.strip() for c in r)
    ]
    if not rows:
        raise InputError("no header line; expected 'channel,power_W'", source=src)
    header = [c.strip().lower() for c in rows[0][1]]
    if header[:2] != ["channel", "power_w"]:
        raise InputError(f"header must be 'channel,power_W', got {','.join(rows[0][1])!r}", source=src, line=rows[0][0])
    found: dict[str, float] = {}
    for line, r in rows[1:]:
        if len(r) < 2:
            raise InputError("expected 'channel,power_W'", source=src, line=line)
        name = r[0].strip()
        try:
            value = float(r[1])
        except ValueError:
            raise InputError(f"power {r[1].strip()!r} is not a number", source=src, line=line) from None
        if not np.isfinite(value) or value <= 0:
            raise InputError(
                f"power of {name!r} must be a positive number of watts, got {r[1].strip()}", source=src, line=line
            )
        if name in found:
            raise InputError(f"channel {name!r} appears twice", source=src, line=line)
        found[name] = value
    missing = [n for n in names if n not in found]
    if missing:
        raise InputError(f"no power for channel {missing[0]!r}", source=src)
    extra = [n for n in found if n not in names]
    if extra:
        raise InputError(f"channel {extra[0]!r} is not among the channels ({', '.join(names)})", source=src)
    return np.array([found[n] for n in names])


def read_channels(files: Sequence, *, quantity=None, power=None) -> Channels:
    """Channels from one or more files, one column (spectrum) per channel.

    All channels must share one wavelength axis and one radiometric quantity (they are
    added as measured).  ``power`` is a power file (:func:`read_power`) or a sequence of
    watts in channel order.
    """
    from .readers import read_spectra
    from .spectra import concatenate

    if not files:
        raise InputError("no channel files given")
    items = [read_spectra(f, quantity=quantity) for f in files]
    first = items[0]
    for f, s in zip(files[1:], items[1:]):
        if s.quantity is not first.quantity:
            raise InputError(
                f"channels hold {s.quantity.value} but {files[0]} holds {first.quantity.value}; "
                "all channels must be one quantity",
                source=str(f),
            )
        if s.wavelength_nm.shape != first.wavelength_nm.shape or not np.array_equal(
            s.wavelength_nm, first.wavelength_nm
        ):
            raise InputError(
                f"channels are on a different wavelength grid from {files[0]} "
                f"({s.wavelength_nm[0]:g}-{s.wavelength_nm[-1]:g} nm, {s.wavelength_nm.size} points "
                f"against {first.wavelength_nm[0]:g}-{first.wavelength_nm[-1]:g} nm, "
                f"{first.wavelength_nm.size} points); measure all channels on one grid",
                source=str(f),
            )
    from dataclasses import replace

    from .spectra import sha256_of_file

    spectra = concatenate(items) if len(items) > 1 else first
    if power is None:
        return channels_from_spectra(spectra)
    if isinstance(power, str) or hasattr(power, "__fspath__"):
        channels = channels_from_spectra(spectra, read_power(power, spectra.names))
        return replace(channels, power_source=str(power), power_sha256=sha256_of_file(power))
    return channels_from_spectra(spectra, power)


# --------------------------------------------------------------------------- targets


def parse_range(text: str, *, option: str = "--rg") -> tuple[float, float]:
    """``"LO:HI"`` -> (LO, HI), LO <= HI."""
    parts = str(text).split(":")
    try:
        lo, hi = (float(p) for p in parts)
    except ValueError:
        raise InputError(f"{option} must be LO:HI (two numbers), got {text!r}") from None
    if not (np.isfinite(lo) and np.isfinite(hi)) or lo > hi:
        raise InputError(f"{option} must be LO:HI with LO <= HI, got {text!r}")
    return lo, hi


def parse_cct_path(text: str) -> np.ndarray:
    """``"1800:6500:100"`` (first:last:step, inclusive) or ``"2700,3000,4000"`` -> CCTs [K]."""
    s = str(text).strip()
    try:
        parts = [float(p) for p in s.split(":")] if ":" in s else None
        T = np.array([float(p) for p in s.split(",")]) if parts is None else np.zeros(0)
    except ValueError:
        raise InputError(f"--cct must be FIRST:LAST:STEP or a comma list of CCTs in K, got {text!r}") from None
    if parts is not None:
        if len(parts) != 3:
            raise InputError(f"--cct must be FIRST:LAST:STEP or a comma list of CCTs in K, got {text!r}")
        a, b, step = parts
        if not step > 0 or not b >= a:
            raise InputError(f"--cct FIRST:LAST:STEP needs FIRST <= LAST and STEP > 0, got {text!r}")
        n = int(np.floor((b - a) / step + 1e-9)) + 1
        if n > 10000:
            raise InputError(f"--cct {text!r} gives {n} set points; at most 10000")
        T = a + step * np.arange(n)
    if T.size == 0 or not np.all(np.isfinite(T)) or np.any(T < 1000) or np.any(T > 25000):
        raise InputError(f"--cct values must be between 1000 and 25000 K, got {text!r}")
    return T


def parse_duv(text: str) -> float | str:
    """``"ansi"`` or a Duv value (|Duv| <= 0.05)."""
    s = str(text).strip().lower()
    if s == "ansi":
        return "ansi"
    try:
        v = float(s)
    except ValueError:
        raise InputError(f"--duv must be a number or 'ansi', got {text!r}") from None
    if not np.isfinite(v) or abs(v) > 0.05:
        raise InputError(f"--duv must be within -0.05..0.05, got {text!r}")
    return v


def duv_targets(cct_K, duv: float | str | Sequence[float]) -> tuple[np.ndarray, tuple[str, ...]]:
    """Target Duv per set point and, where none is defined, the reason (else "").

    ``duv="ansi"`` follows the ANSI C78.377 Duv centre line of a flexible CCT
    (:func:`cctkit.tolerance.flexible_duv_target`), defined for 2580-7040 K only.
    """
    from .tolerance import FLEXIBLE_RANGE_K, flexible_duv_target

    T = np.atleast_1d(np.asarray(cct_K, dtype=np.float64))
    if isinstance(duv, str):
        if duv != "ansi":
            raise InputError(f"duv must be a number or 'ansi', got {duv!r}")
        lo, hi = FLEXIBLE_RANGE_K
        inside = (T >= lo) & (T <= hi)
        d = np.where(inside, flexible_duv_target(T), np.nan)
        reasons = tuple(
            "" if ok else f"ANSI C78.377 defines its Duv centre line for {lo:.0f}-{hi:.0f} K only" for ok in inside
        )
        return d, reasons
    d = np.broadcast_to(np.asarray(duv, dtype=np.float64), T.shape).copy()
    return d, ("",) * T.size


def read_points(path) -> tuple[np.ndarray, np.ndarray]:
    """(CCT [K], Duv) pairs from a CSV file with header ``cct_K,duv`` (``#`` lines are comments)."""
    import csv
    import io
    from pathlib import Path

    src = str(path)
    try:
        text = Path(path).read_bytes().decode("utf-8-sig")
    except OSError as exc:
        raise InputError(f"cannot read the set-point file ({exc.strerror or exc})", source=src) from None
    except UnicodeDecodeError:
        raise InputError("the set-point file is not UTF-8 text", source=src) from None
    rows = [
        (n, r)
        for n, r in enumerate(csv.reader(io.StringIO(text)), start=1)
        if r and not r[0].lstrip().startswith("#") and any(c.strip() for c in r)
    ]
    if not rows or [c.strip().lower() for c in rows[0][1]][:2] != ["cct_k", "duv"]:
        raise InputError("header must be 'cct_K,duv'", source=src, line=rows[0][0] if rows else None)
    T, D = [], []
    for line, r in rows[1:]:
        try:
            t, d = float(r[0]), float(r[1])
        except (ValueError, IndexError):
            raise InputError("expected two numbers 'cct_K,duv'", source=src, line=line) from None
        if not (1000 <= t <= 25000) or not (abs(d) <= 0.05):
            raise InputError(f"CCT must be 1000-25000 K and |Duv| <= 0.05, got {t:g} K, {d:g}", source=src, line=line)
        T.append(t)
        D.append(d)
    if not T:
        raise InputError("no set points", source=src)
    return np.array(T), np.array(D)


# --------------------------------------------------------------------------- geometry


def reachable_hull(channels: Channels) -> np.ndarray:
    """Vertices of the fixture's reachable region in CIE 1960 uv, counter-clockwise, (H, 2)."""
    from scipy.spatial import ConvexHull

    uv = channels.uv
    try:
        hull = ConvexHull(uv)
    except Exception:  # noqa: BLE001 - collinear channels: the region is a segment
        order = np.argsort(uv[:, 0] + 1e-6 * uv[:, 1])
        return uv[[order[0], order[-1]]]
    return uv[hull.vertices]


def hull_distance_uv(hull_uv: np.ndarray, points_uv) -> np.ndarray:
    """Distance in uv from each point to the reachable region (0 inside), (..., 2) -> (...)."""
    p = np.asarray(points_uv, dtype=np.float64)
    flat = p.reshape(-1, 2)
    a = hull_uv
    b = np.roll(hull_uv, -1, axis=0)
    ab = b - a
    t = np.clip(np.einsum("nhk,hk->nh", flat[:, None, :] - a[None], ab) / np.maximum((ab**2).sum(-1), 1e-300), 0, 1)
    closest = a[None] + t[..., None] * ab[None]
    dist = np.sqrt(((flat[:, None, :] - closest) ** 2).sum(-1)).min(axis=1)
    cross = ab[None, :, 0] * (flat[:, None, 1] - a[None, :, 1]) - ab[None, :, 1] * (flat[:, None, 0] - a[None, :, 0])
    inside = np.all(cross >= -1e-15, axis=1) if len(hull_uv) > 2 else np.zeros(len(flat), bool)
    return np.where(inside, 0.0, dist).reshape(p.shape[:-1])


def _direction(uv: np.ndarray) -> np.ndarray:
    """XYZ direction with Y = 1 of chromaticities uv, (..., 2) -> (..., 3)."""
    from .colorimetry import uv_to_xy, xy_to_XYZ

    return xy_to_XYZ(uv_to_xy(uv), 1.0)


def max_luminous(channels: Channels, uv) -> tuple[np.ndarray, tuple[str, ...]]:
    """Largest luminous output reachable at each chromaticity within drive limits 0-1 (linear programs).

    Returns the output (in the channels' luminous unit; 0 where the chromaticity is out of
    reach) and the solver's message per point.
    """
    from scipy.optimize import linprog

    t = _direction(np.atleast_2d(np.asarray(uv, dtype=np.float64)))
    M = channels.XYZ.T
    scale = float(channels.luminous.sum())
    k = len(channels)
    out = np.zeros(len(t))
    msgs = []
    c = np.zeros(k + 1)
    c[-1] = -1.0
    for i, ti in enumerate(t):
        A = np.hstack([M / scale, -ti[:, None]])
        res = linprog(c, A_eq=A, b_eq=np.zeros(3), bounds=[(0, 1)] * k + [(0, None)], method="highs")
        msgs.append(f"HiGHS: {res.message}")
        if res.status == 0:
            out[i] = max(0.0, float(res.x[-1])) * scale
    return out, tuple(msgs)


def max_luminous_by_vertices(channels: Channels, uv) -> np.ndarray:
    """The same maximum as :func:`max_luminous`, by enumerating the vertices of the feasible drives.

    With the output free, the chromaticity is two homogeneous linear equations in the drives;
    an LP optimum lies at a vertex of ``{d in [0,1]^K : two equations}``, where two drives are
    basic and every other one is at 0 or 1.  All of them are solved at once (2 x 2 systems),
    for every chromaticity, and the largest output of a feasible one is kept.  Practical for
    K <= 8 channels (K(K-1)/2 * 2^(K-2) vertices per point).
    """
    t = _direction(np.atleast_2d(np.asarray(uv, dtype=np.float64)))  # (S, 3)
    M = channels.XYZ.T  # (3, K)
    K = M.shape[1]
    # X - (x/y) Y = 0 and Z - (z/y) Y = 0 for each target, (S, 2, K)
    H = np.stack([M[0] - t[:, 0:1] * M[1], M[2] - t[:, 2:3] * M[1]], axis=1) / float(channels.luminous.sum())
    best = np.zeros(len(t))
    patterns = np.array(list(itertools.product((0.0, 1.0), repeat=K - 2)))
    for pair in itertools.combinations(range(K), 2):
        B = list(pair)
        N = [k for k in range(K) if k not in B]
        HB = H[:, :, B]  # (S, 2, 2)
        det = HB[:, 0, 0] * HB[:, 1, 1] - HB[:, 0, 1] * HB[:, 1, 0]
        rhs = -np.einsum("sik,pk->spi", H[:, :, N], patterns)  # (S, P, 2)
        with np.errstate(divide="ignore", invalid="ignore"):
            d0 = (HB[:, None, 1, 1] * rhs[..., 0] - HB[:, None, 0, 1] * rhs[..., 1]) / det[:, None]
            d1 = (-HB[:, None, 1, 0] * rhs[..., 0] + HB[:, None, 0, 0] * rhs[..., 1]) / det[:, None]
        ok = (np.abs(det)[:, None] > 1e-12) & (d0 >= -1e-12) & (d0 <= 1 + 1e-12) & (d1 >= -1e-12) & (d1 <= 1 + 1e-12)
        Y = d0 * M[1, B[0]] + d1 * M[1, B[1]] + patterns @ M[1, N]  # (S, P)
        best = np.maximum(best, np.where(ok, Y, 0.0).max(axis=1))
    return best


# --------------------------------------------------------------------------- linear solves


def _polish(d: np.ndarray, A: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Move the drives not at a limit so that ``A d = b`` holds to rounding (least squares)."""
    d = np.clip(d, 0.0, 1.0)
    for _ in range(2):
        r = b - A @ d
        free = (d > _AT_LIMIT) & (d < 1.0 - _AT_LIMIT)
        if not free.any():
            free = np.ones_like(d, dtype=bool)
        step, *_ = np.linalg.lstsq(A[:, free], r, rcond=None)
        d = d.copy()
        d[free] += step
        d = np.where(np.abs(d) < 1e-13, 0.0, d)
        d = np.where(np.abs(d - 1.0) < 1e-13, 1.0, d)
    return d


def _objective_vector(channels: Channels, objective: str, sense: str) -> np.ndarray:
    if objective == "efficacy":
        c = channels.power_W if channels.power_W is not None else channels.radiant
    elif objective == "melanopic":
        c = channels.melanopic
    else:
        raise ValueError(f"no linear objective for {objective!r}")
    c = np.asarray(c, dtype=np.float64)
    c = c / np.max(np.abs(c))
    return -c if (objective == "melanopic" and sense == "max") else c


def _lp(c: np.ndarray, A: np.ndarray, b: np.ndarray):
    from scipy.optimize import linprog

    return linprog(c, A_eq=A, b_eq=b, bounds=[(0, 1)] * A.shape[1], method="highs")


def linear_blend(channels: Channels, uv, luminous: float, *, objective: str = "efficacy", sense: str = "max"):
    """The linear program of one set point: drives with chromaticity ``uv`` and output ``luminous``
    that optimise a linear objective, and HiGHS's result.

    Returns ``(drives or None, result)``; ``result`` is the :func:`scipy.optimize.linprog`
    result of ``min c.d`` s.t. ``(M / luminous) d = t``, ``0 <= d <= 1`` (``c`` scaled to
    max |c| = 1; negated for a maximum), with ``result.c``, ``result.A_eq`` and
    ``result.b_eq`` attached so its optimality conditions can be checked.
    """
    if (objective, sense) not in OBJECTIVES or objective == "fidelity":
        raise InputError(f"a linear objective is efficacy (max) or melanopic (max/min), got {sense}imise {objective}")
    c = _objective_vector(channels, objective, sense)
    A = channels.XYZ.T / float(luminous)
    b = _direction(np.asarray(uv, dtype=np.float64).reshape(2))
    res = _lp(c, A, b)
    res.c, res.A_eq, res.b_eq = c, A, b
    return (_polish(res.x, A, b) if res.status == 0 else None), res


def _vertices(A: np.ndarray, b: np.ndarray, rng: np.random.Generator) -> np.ndarray:
    """Vertices of {d in [0,1]^K : A d = b} (A is 3 x K), (V, K)."""
    K = A.shape[1]
    if K == 3:
        return np.linalg.solve(A, b)[None]
    if K <= _ENUMERATE_MAX_K:
        bases = np.array(list(itertools.combinations(range(K), 3)))
        patterns = np.array(list(itertools.product((0.0, 1.0), repeat=K - 3)))
        rows = []
        for B in bases:
            N = np.setdiff1d(np.arange(K), B)
            AB = A[:, B]
            if abs(np.linalg.det(AB)) < 1e-12 * np.abs(AB).max() ** 3:
                continue
            rhs = b[None, :] - patterns @ A[:, N].T  # (P, 3)
            dB = np.linalg.solve(AB, rhs.T).T
            D = np.zeros((len(patterns), K))
            D[:, B] = dB
            D[:, N] = patterns
            rows.append(D)
        D = np.concatenate(rows) if rows else np.zeros((0, K))
        ok = np.all((D >= -1e-10) & (D <= 1 + 1e-10), axis=1)
        return np.clip(D[ok], 0.0, 1.0)
    found = []
    for _ in range(4 * K):
        res = _lp(np.asarray(rng.standard_normal(K)), A, b)
        if res.status == 0:
            found.append(res.x)
    return np.array(found) if found else np.zeros((0, K))


# --------------------------------------------------------------------------- rendering evaluation


def _rendering_of(channels: Channels, D: np.ndarray, cct_K, duv, *, r9: bool = True) -> dict[str, np.ndarray]:
    """Rf, Rg (and R9) of blends ``D`` (n, K) at known chromaticities, one vectorised batch.

    The blends hit their target chromaticity, so the references are built at the target
    CCT (:func:`cctkit.rendering.reference_cct`, the rule every caller uses) and the
    indices come from the measures :func:`cctkit.analysis.analyse` calls
    (:func:`cctkit.rendering.tm30`, :func:`cctkit.rendering.cie13_3`).
    """
    from .rendering import cie13_3, reference_cct, tm30

    spectra = np.atleast_2d(D) @ channels.values
    n = spectra.shape[0]
    T = reference_cct(
        np.broadcast_to(np.asarray(cct_K, dtype=np.float64), (n,)),
        np.broadcast_to(np.asarray(duv, dtype=np.float64), (n,)),
    )
    with np.errstate(all="ignore"):
        t = tm30(spectra, T)
        out = {"Rf": np.asarray(t.Rf, dtype=np.float64), "Rg": np.asarray(t.Rg, dtype=np.float64)}
        out["R9"] = np.asarray(cie13_3(spectra, T).R[:, 8], dtype=np.float64) if r9 else np.full(n, np.nan)
    return out


def _violation(m: dict[str, np.ndarray], rg, r9_min) -> np.ndarray:
    v = np.zeros_like(m["Rf"])
    if rg is not None:
        v = v + np.maximum(rg[0] - m["Rg"], 0) + np.maximum(m["Rg"] - rg[1], 0)
    if r9_min is not None:
        v = v + np.maximum(r9_min - m["R9"], 0)
    return np.where(np.isfinite(v), v, np.inf)


#: With at most this many degrees of freedom (channels - 3), a grid of that many points per
#: dimension across the feasible drives joins the candidates.
_GRID_DIMS, _GRID_POINTS = 2, 14


def _candidates(A: np.ndarray, b: np.ndarray, N: np.ndarray, rng: np.random.Generator) -> np.ndarray:
    """Starting blends: every vertex of the feasible drives, their centre, points between them and,
    for up to two degrees of freedom, a grid across the feasible set, (n, K)."""
    V = _vertices(A, b, rng)
    if len(V) <= 1:
        return V
    centre = V.mean(axis=0, keepdims=True)
    cands = [V, centre, 0.5 * (V + centre)]
    m = N.shape[1]
    if 1 <= m <= _GRID_DIMS:
        Zv = (V - centre) @ N
        axes = [np.linspace(lo, hi, _GRID_POINTS) for lo, hi in zip(Zv.min(axis=0), Zv.max(axis=0))]
        Z = np.stack(np.meshgrid(*axes, indexing="ij"), axis=-1).reshape(-1, m)
        G = centre + Z @ N.T
        cands.append(G[np.all((G >= 0) & (G <= 1), axis=1)])
    if len(V) > 2:
        i, j = np.triu_indices(len(V), 1)
        pick = rng.choice(len(i), size=min(len(i), 24), replace=False)
        cands.append(0.5 * (V[i[pick]] + V[j[pick]]))
    return np.concatenate(cands)


class _Problem:
    """One set point's nonlinear problem: objective and rendering constraints of drives ``d``.

    Values are computed in batches (a point with its forward-difference stencil along the
    null space ``N`` of the chromaticity/output equations) and cached by the drives.
    """

    H = 1e-5

    def __init__(self, channels, N, cct_K, duv, objective, c, rg, r9_min):
        self.channels, self.N, self.T, self.duv = channels, N, cct_K, duv
        self.objective, self.c, self.rg, self.r9_min = objective, c, rg, r9_min
        self.cache: dict[bytes, tuple[np.ndarray, np.ndarray]] = {}
        self.calls = 0

    def values(self, m: dict[str, np.ndarray], D: np.ndarray) -> np.ndarray:
        """(n, 1 + constraints): objective to minimise (scaled) and constraint margins (>= 0 is met)."""
        f = -m["Rf"] / 100.0 if self.objective == "fidelity" else D @ self.c
        cols = [f]
        if self.rg is not None:
            cols += [(m["Rg"] - self.rg[0]) / 100.0, (self.rg[1] - m["Rg"]) / 100.0]
        if self.r9_min is not None:
            cols += [(m["R9"] - self.r9_min) / 100.0]
        return np.stack(cols, axis=-1)

    def ensure(self, points: Sequence[np.ndarray]) -> None:
        todo = [p for p in points if p.tobytes() not in self.cache]
        if not todo:
            return
        k = self.N.shape[1]
        rows = np.concatenate([np.vstack([p, p + self.H * self.N.T]) for p in todo])
        m = _rendering_of(self.channels, rows, self.T, self.duv, r9=self.r9_min is not None)
        self.calls += 1
        vals = self.values(m, rows).reshape(len(todo), k + 1, -1)
        for p, v in zip(todo, vals):
            self.cache[p.tobytes()] = (v[0], ((v[1:] - v[:1]) / self.H).T)  # (1+c,), (1+c, k)

    def at(self, d: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        self.ensure([d])
        return self.cache[d.tobytes()]


def _refine(
    problem: _Problem, A: np.ndarray, b: np.ndarray, start: np.ndarray, previous: np.ndarray | None
) -> tuple[np.ndarray, str, float]:
    """SLSQP from the better of ``start`` and the neighbour's drives; returns (drives, solver text, violation)."""
    from scipy.optimize import minimize

    N = problem.N
    starts = [start]
    if previous is not None:
        p = _polish(previous, A, b)
        if np.all((p >= 0) & (p <= 1)):
            starts.append(p)
    problem.ensure(starts)

    def violation(v: np.ndarray) -> float:
        return float(np.sum(np.maximum(-v[1:], 0.0))) if v.size > 1 else 0.0

    d0 = start
    v_start = problem.at(start)[0]
    if len(starts) > 1:
        v_prev = problem.at(starts[1])[0]
        # continuation: stay with the neighbour's blend when it is feasible and nearly as good
        tol = CONTINUATION_RF / 100.0 if problem.objective == "fidelity" else 1e-3 * abs(v_start[0])
        if violation(v_prev) <= 0 and (violation(v_start) > 0 or v_prev[0] <= v_start[0] + tol):
            d0 = starts[1]
    if N.shape[1] == 0:
        return d0, "", violation(problem.at(d0)[0])

    def point(z):
        return d0 + N @ z

    cons = [
        {"type": "ineq", "fun": lambda z: point(z), "jac": lambda z: N},
        {"type": "ineq", "fun": lambda z: 1.0 - point(z), "jac": lambda z: -N},
    ]
    if problem.rg is not None or problem.r9_min is not None:
        cons.append(
            {"type": "ineq", "fun": lambda z: problem.at(point(z))[0][1:], "jac": lambda z: problem.at(point(z))[1][1:]}
        )
    z0 = np.zeros(N.shape[1])
    res = minimize(
        lambda z: problem.at(point(z))[0][0],
        z0,
        jac=lambda z: problem.at(point(z))[1][0],
        method="SLSQP",
        constraints=cons,
        options={"maxiter": 30, "ftol": 1e-6},
    )
    text = f"SLSQP: {res.message}"
    v0 = problem.at(d0)[0]
    best, best_v = d0, v0
    if np.all(np.isfinite(res.x)):
        d1 = point(res.x)
        if np.all((d1 >= -1e-9) & (d1 <= 1 + 1e-9)):
            v1 = problem.at(d1)[0]
            if (violation(v1) <= 0 and (violation(v0) > 0 or v1[0] <= v0[0])) or (
                violation(v0) > 0 and violation(v1) < violation(v0)
            ):
                best, best_v = _polish(d1, A, b), v1
    return best, text, violation(best_v)


# --------------------------------------------------------------------------- the path


@dataclass(frozen=True, eq=False)
class BlendPath:
    """Drive levels of a fixture along a path of set points, with what each blend achieves.

    Arrays have a leading axis of length S (set points); ``drives`` is (S, K) with NaN rows
    where the set point was refused.  ``analysis`` is :func:`cctkit.analysis.analyse` of the
    returned blends (the rows with status ``"ok"``, in order), or None when there are none.
    """

    channels: Channels
    target_cct_K: np.ndarray
    target_duv: np.ndarray
    target_uv: np.ndarray
    drives: np.ndarray
    status: tuple[str, ...]
    reason: tuple[str, ...]
    solver: tuple[str, ...]
    luminous_target: np.ndarray
    luminous_max: np.ndarray
    objective: str
    sense: str
    luminous_mode: str
    rg: tuple[float, float] | None
    r9_min: float | None
    hull_uv: np.ndarray
    analysis: Any
    metrics: dict[str, np.ndarray]

    @property
    def ok(self) -> np.ndarray:
        return np.array([s == "ok" for s in self.status])

    @property
    def drive_steps(self) -> np.ndarray:
        """Largest change of any channel's drive from the previous returned blend, per set point (NaN first/refused)."""
        out = np.full(len(self.status), np.nan)
        last = None
        for i, s in enumerate(self.status):
            if s != "ok":
                continue
            if last is not None:
                out[i] = float(np.max(np.abs(self.drives[i] - self.drives[last])))
            last = i
        return out

    def largest_step(self) -> tuple[float | None, int | None]:
        """(largest drive step between neighbouring returned blends [1], index of the later set point)."""
        steps = self.drive_steps
        if not np.isfinite(steps).any():
            return None, None
        i = int(np.nanargmax(steps))
        return float(steps[i]), i

    @property
    def efficacy_basis(self) -> str:
        return "electrical" if self.channels.power_W is not None else "radiation (LER)"

    def records(self) -> list[dict[str, Any]]:
        """One dict per set point (the ``set_points`` of :meth:`document`)."""
        from .formats import finite_or_none as num

        ch = self.channels
        lum_key = ch.luminous_key
        steps = self.drive_steps
        out = []
        for i in range(len(self.status)):
            ok = self.status[i] == "ok"
            r: dict[str, Any] = {
                "target_cct_K": num(self.target_cct_K[i]),
                "target_duv": num(self.target_duv[i]),
                "target_u": num(self.target_uv[i, 0]),
                "target_v": num(self.target_uv[i, 1]),
                "status": self.status[i],
                "reason": self.reason[i],
                "drives": {n: (num(self.drives[i, k]) if ok else None) for k, n in enumerate(ch.names)},
                f"target_{lum_key}": num(self.luminous_target[i]),
                f"max_{lum_key}": num(self.luminous_max[i]),
            }
            for key, arr in self.metrics.items():
                r[key] = num(arr[i]) if ok else None
            r["drive_step_from_previous"] = num(steps[i])
            r["solver"] = self.solver[i]
            out.append(r)
        return out

    def document(self) -> dict[str, Any]:
        """The JSON document: provenance, channels, objective, constraints, set points."""
        from .analysis import provenance

        ch = self.channels
        step, at = self.largest_step()
        inputs: dict[str, str] = {}
        for src, sha in zip(ch.sources, ch.sha256):
            inputs.setdefault(src.split("#")[0], sha)
        if ch.power_source:
            inputs.setdefault(ch.power_source, ch.power_sha256)
        return {
            **provenance(),
            "inputs": [{"path": p, "sha256": s} for p, s in inputs.items()],
            "quantity": ch.quantity.value,
            "channels": [
                {
                    "name": n,
                    "source": ch.sources[k],
                    "u": float(ch.uv[k, 0]),
                    "v": float(ch.uv[k, 1]),
                    ch.luminous_key: float(ch.luminous[k]),
                    "power_W": None if ch.power_W is None else float(ch.power_W[k]),
                }
                for k, n in enumerate(ch.names)
            ],
            "objective": {
                "quantity": self.objective,
                "sense": "maximise" if self.sense == "max" else "minimise",
                "efficacy_basis": self.efficacy_basis,
            },
            "constraints": {
                "Rg": None if self.rg is None else list(self.rg),
                "R9_min": self.r9_min,
                "drive_range": [0.0, 1.0],
            },
            "luminous_target": self.luminous_mode,
            "additivity": ADDITIVITY,
            "guarantee": GUARANTEES["nonlinear" if self._nonlinear else "linear"],
            "largest_drive_step": {
                "value": step,
                "between_target_cct_K": None
                if at is None
                else [float(self.target_cct_K[self._previous_ok(at)]), float(self.target_cct_K[at])],
            },
            "set_points": self.records(),
        }

    @property
    def _nonlinear(self) -> bool:
        return self.objective == "fidelity" or self.rg is not None or self.r9_min is not None

    def _previous_ok(self, i: int) -> int:
        for j in range(i - 1, -1, -1):
            if self.status[j] == "ok":
                return j
        return i

    def csv(self) -> str:
        """The drive table as CSV text (one row per set point; drives as ``drive_<channel>`` columns)."""
        from . import __version__
        from .formats import csv_text

        recs = self.records()
        names = list(self.channels.names)
        skip = {"drives", "reason", "solver"}
        keys = [k for k in recs[0] if k not in skip]
        header = keys[:5] + [f"drive_{n}" for n in names] + keys[5:] + ["reason", "solver", "cctkit_version"]
        rows = []
        for r in recs:
            vals = [r[k] for k in keys]
            drives = [r["drives"][n] for n in names]
            rows.append(
                [("" if v is None else v) for v in vals[:5] + drives + vals[5:]]
                + [r["reason"], r["solver"], __version__]
            )
        return csv_text(header, rows)


def solve_blend_path(
    channels: Channels,
    cct_K,
    duv=0.0,
    *,
    objective: str = "efficacy",
    sense: str = "max",
    luminous: float | str = "flat",
    rg: tuple[float, float] | None = None,
    r9_min: float | None = None,
    progress: Callable[[int, int], None] | None = None,
    seed: int = 0,
) -> BlendPath:
    """Drive levels along a path of set points.

    Parameters
    ----------
    channels
        The fixture's channels (:func:`read_channels`, :func:`channels_from_spectra`).
    cct_K : array_like (S,)
        Target CCTs [K].
    duv : float, array_like (S,) or "ansi"
        Target Duv per set point; ``"ansi"`` follows the ANSI C78.377 centre line.
    objective, sense
        ``("efficacy", "max")`` (default), ``("fidelity", "max")``, ``("melanopic", "max")`` or
        ``("melanopic", "min")``.
    luminous
        ``"flat"``: the largest output every reachable set point can give (constant output);
        or a number, the output at every set point, in the channels' luminous unit
        (lm for radiant flux, lx for irradiance, ...).
    rg
        (low, high) bounds on TM-30 Rg of every blend.
    r9_min
        Lower bound on CIE 13.3 R9 of every blend.
    progress
        Called as ``progress(done, total)`` after each set point.
    seed
        Seed of the random choices of the candidate search (results are deterministic).

    Notes
    -----
    The solver evaluates many small batches of blends; numpy's BLAS runs them on one thread
    (threadpoolctl), which on a shared machine is several times faster than spreading each
    small product over every CPU.
    """
    from threadpoolctl import threadpool_limits

    with threadpool_limits(limits=1, user_api="blas"):
        return _solve_path(
            channels,
            cct_K,
            duv,
            objective=objective,
            sense=sense,
            luminous=luminous,
            rg=rg,
            r9_min=r9_min,
            progress=progress,
            seed=seed,
        )


def _solve_path(
    channels: Channels, cct_K, duv, *, objective: str, sense: str, luminous, rg, r9_min, progress, seed: int
) -> BlendPath:
    from scipy.linalg import null_space

    from .analysis import analyse
    from .locus import uv_from_cct_duv

    if (objective, sense) not in OBJECTIVES:
        allowed = ", ".join(f"{s}imise {o}" for o, s in OBJECTIVES)
        raise InputError(f"objective must be one of: {allowed}; got {sense}imise {objective}")
    if rg is not None and not (rg[0] <= rg[1]):
        raise InputError(f"rg must be (low, high) with low <= high, got {rg!r}")
    T = np.atleast_1d(np.asarray(cct_K, dtype=np.float64))
    D_target, no_target = duv_targets(T, duv)
    S = T.size
    uv = uv_from_cct_duv(T, np.nan_to_num(D_target))
    uv[~np.isfinite(D_target)] = np.nan
    hull = reachable_hull(channels)
    dist = hull_distance_uv(hull, np.nan_to_num(uv))
    defined = np.isfinite(D_target)
    ymax = np.zeros(S)
    lp_msgs = [""] * S
    idx = np.flatnonzero(defined)
    if idx.size and len(channels) <= _ENUMERATE_MAX_K:
        ymax[idx] = max_luminous_by_vertices(channels, uv[idx])
        for i in idx.tolist():
            lp_msgs[i] = "output limit by vertex enumeration"
    elif idx.size:
        y, msgs = max_luminous(channels, uv[idx])
        ymax[idx] = y
        for j, i in enumerate(idx.tolist()):
            lp_msgs[i] = msgs[j]
    total = float(channels.luminous.sum())
    reach = defined & (dist <= 0) & (ymax > 1e-9 * total)
    if isinstance(luminous, str):
        if luminous != "flat":
            raise InputError(f"luminous must be 'flat' or a number, got {luminous!r}")
        level = float(ymax[reach].min()) * (1 - 1e-9) if reach.any() else np.nan
        mode = "flat"
    else:
        level = float(luminous)
        if not np.isfinite(level) or level <= 0:
            raise InputError(f"luminous target must be a positive number, got {luminous!r}")
        mode = f"{level:g}"
    Y = np.full(S, level)

    status = ["ok"] * S
    reason = [""] * S
    solver = [""] * S
    drives = np.full((S, len(channels)), np.nan)
    M = channels.XYZ.T
    K = len(channels)
    N = null_space(M) if K > 3 else np.zeros((K, 0))
    rng = np.random.default_rng(seed)
    nonlinear = objective == "fidelity" or rg is not None or r9_min is not None
    c = None if objective == "fidelity" else _objective_vector(channels, objective, sense)
    lum_unit = (
        channels.quantity.luminous_name.rsplit("_", 1)[-1]
        if channels.quantity is not Quantity.RELATIVE
        else "(relative)"
    )
    systems: dict[int, tuple[np.ndarray, np.ndarray]] = {}
    # 1. reachability, and the exact solutions (three channels: linear system; linear objectives: HiGHS)
    for i in range(S):
        if not defined[i]:
            status[i], reason[i] = "no-target", no_target[i]
            continue
        if not reach[i]:
            status[i] = "out-of-gamut"
            reason[i] = (
                f"target u,v = {uv[i, 0]:.4f}, {uv[i, 1]:.4f} is outside the fixture's reachable region "
                f"(convex hull of the channel chromaticities) by {dist[i]:.2g} in uv"
                if dist[i] > 0
                else f"target u,v = {uv[i, 0]:.4f}, {uv[i, 1]:.4f} lies on the edge of the reachable region: "
                "no light can be made there"
            )
            solver[i] = lp_msgs[i]
            continue
        if Y[i] > ymax[i]:
            status[i] = "too-bright"
            reason[i] = (
                f"luminous target {Y[i]:.4g} {lum_unit} is above the {ymax[i]:.4g} {lum_unit} the channels "
                "can give at this chromaticity with drives 0-1"
            )
            solver[i] = lp_msgs[i]
            continue
        A = M / Y[i]
        b = _direction(uv[i])
        systems[i] = (A, b)
        if K == 3:
            d = np.linalg.solve(A, b)
            solver[i] = "linear system (three channels)"
            if np.any(d < -1e-12) or np.any(d > 1 + 1e-12):
                status[i], reason[i] = "solver-failed", "three-channel solution outside drive limits 0-1"
            else:
                drives[i] = np.clip(d, 0, 1)
        elif c is not None:
            res = _lp(c, A, b)
            solver[i] = f"HiGHS: {res.message}"
            if res.status == 0:
                drives[i] = _polish(res.x, A, b)
            else:
                status[i], reason[i] = "solver-failed", f"linear program: {res.message}"
    # 2. rendering constraints and fidelity: which set points still need the nonlinear search
    todo: list[int] = []
    if nonlinear:
        have = [i for i in systems if status[i] == "ok" and np.isfinite(drives[i]).all()]
        if have and (rg is not None or r9_min is not None):
            m = _rendering_of(channels, drives[have], T[have], D_target[have], r9=r9_min is not None)
            bad = _violation(m, rg, r9_min) > 0
        else:
            bad = np.zeros(len(have), bool)
        for j, i in enumerate(have):
            if K == 3 and bad[j]:
                status[i] = "constraint-unmet"
                reason[i] = f"the only blend has Rg {m['Rg'][j]:.1f}, R9 {m['R9'][j]:.1f}"
                drives[i] = np.nan
        todo = [
            i
            for i in systems
            if status[i] == "ok" and K > 3 and (objective == "fidelity" or (i in have and bad[have.index(i)]))
        ]
    # 3. candidate blends of every such set point, evaluated in one vectorised batch
    starts: dict[int, np.ndarray] = {}
    if todo:
        cand = {i: _candidates(*systems[i], N, rng) for i in todo}
        rows = [i for i in todo for _ in range(len(cand[i]))]
        allD = np.concatenate([cand[i] for i in todo])
        m = _rendering_of(channels, allD, T[rows], D_target[rows], r9=r9_min is not None)
        score = -m["Rf"] if objective == "fidelity" else allD @ c
        score = np.where(np.isfinite(score), score, np.inf)
        viol = _violation(m, rg, r9_min)
        pos = 0
        for i in todo:
            n = len(cand[i])
            if n == 0:
                status[i], reason[i] = "solver-failed", "vertex search found no feasible drives"
                continue
            s, v = score[pos : pos + n], viol[pos : pos + n]
            k = int(np.argmin(np.where(v <= 0, s, np.inf))) if (v <= 0).any() else int(np.argmin(v))
            starts[i] = cand[i][k]
            solver[i] = (solver[i] + "; " if solver[i] else "") + f"candidate search ({n} blends)"
            pos += n
    # 4. refine in path order, each set point starting from its neighbour's blend when nearly as good
    previous = None
    done = 0
    for i in range(S):
        if i in starts and status[i] == "ok":
            problem = _Problem(channels, N, float(T[i]), float(D_target[i]), objective, c, rg, r9_min)
            d, text, shortfall = _refine(problem, *systems[i], starts[i], previous)
            solver[i] += f" + {text}" if text else ""
            if shortfall > 0:
                mm = _rendering_of(channels, d[None], T[i], D_target[i], r9=True)
                parts = []
                if rg is not None:
                    parts.append(f"Rg {mm['Rg'][0]:.1f} (wanted {rg[0]:g}-{rg[1]:g})")
                if r9_min is not None:
                    parts.append(f"R9 {mm['R9'][0]:.1f} (wanted >= {r9_min:g})")
                status[i], reason[i] = "constraint-unmet", "closest blend found: " + ", ".join(parts)
            else:
                drives[i] = d
        if status[i] == "ok":
            previous = drives[i]
        done += 1
        if progress is not None:
            progress(done, S)

    ok = np.array([s == "ok" for s in status])
    metrics: dict[str, np.ndarray] = {}
    analysis = None
    if ok.any():
        blends = drives[ok] @ channels.values
        names = tuple(f"{T[i]:g} K / Duv {D_target[i]:+.4f}" for i in np.flatnonzero(ok))
        analysis = analyse(Spectra(WAVELENGTH_NM, blends, names=names, quantity=channels.quantity))
        metrics = _metrics(channels, drives, ok, analysis)
    else:
        metrics = {k: np.full(S, np.nan) for k in _metric_keys(channels)}
    return BlendPath(
        channels=channels,
        target_cct_K=T,
        target_duv=D_target,
        target_uv=uv,
        drives=drives,
        status=tuple(status),
        reason=tuple(reason),
        solver=tuple(solver),
        luminous_target=Y,
        luminous_max=ymax,
        objective=objective,
        sense=sense,
        luminous_mode=mode,
        rg=rg,
        r9_min=r9_min,
        hull_uv=hull,
        analysis=analysis,
        metrics=metrics,
    )


def _metric_keys(channels: Channels) -> list[str]:
    keys = ["cct_K", "duv", "u", "v", channels.luminous_key]
    if channels.power_W is not None:
        keys += ["electrical_power_W", "efficacy_lm_per_W"]
    keys += ["ler_lm_per_W", "Ra", "R9", "Rf", "Rg", "melanopic_der"]
    return keys


def _metrics(channels: Channels, drives: np.ndarray, ok: np.ndarray, a) -> dict[str, np.ndarray]:
    """Per-set-point figures from the analysis of the returned blends (NaN where refused)."""
    S = len(ok)

    def spread(values) -> np.ndarray:
        out = np.full(S, np.nan)
        out[ok] = np.asarray(values, dtype=np.float64)
        return out

    lum = drives[ok] @ channels.luminous
    m = {
        "cct_K": spread(np.where(a.cct.in_domain, a.cct.cct_K, np.nan)),
        "duv": spread(a.cct.duv),
        "u": spread(a.uv[:, 0]),
        "v": spread(a.uv[:, 1]),
        channels.luminous_key: spread(lum),
    }
    if channels.power_W is not None:
        power = drives[ok] @ channels.power_W
        m["electrical_power_W"] = spread(power)
        m["efficacy_lm_per_W"] = spread(lum / power)
    m["ler_lm_per_W"] = spread(a.photometry.ler_lm_per_W)
    m["Ra"] = spread(a.cri.Ra)
    m["R9"] = spread(a.cri.R[:, 8])
    m["Rf"] = spread(a.tm30.Rf)
    m["Rg"] = spread(a.tm30.Rg)
    m["melanopic_der"] = spread(a.alphaopic.melanopic_der)
    return m
