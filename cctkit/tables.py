"""Weighting tables on the working grid (360-830 nm, 1 nm), loaded once.

Every table comes from colour-science's datasets (CIE data as published) and is
brought to the working grid here; the result is cached as an ``.npz`` in the
user cache directory keyed by the cctkit and colour-science versions, so later
runs do not import colour-science at all (its import alone costs ~1.5 s).

Tables (all shape (471,) or (471, k), values outside the published range are 0
for action spectra / CMFs and the nearest value for reflectances):

``cmf_2``        CIE 1931 2 deg x, y, z (CIE 15:2018 Table T.4) (471, 3)
``cmf_10``       CIE 1964 10 deg x10, y10, z10 (CIE 15:2018 Table T.5) (471, 3)
``v_scotopic``   CIE 1951 scotopic V'(lambda) (CIE 15:2018 Table T.3) (471,)
``lms_10``       CIE 2006 10 deg cone fundamentals l, m, s (CIE 170-1:2006, energy, peak 1) (471, 3)
``tcs_1995``     CIE 13.3-1995 test colour samples TCS01-TCS14, Sprague to 1 nm (471, 14)
``ces_2017``     CIE 224:2017 / TM-30 colour evaluation samples CES1-CES99, the standard's own 1 nm
                 table over 380-780 nm as colour-science ships it (nearest value outside) (471, 99)
``d_basis``      CIE daylight basis S0, S1, S2 (CIE 15:2018 Table T.2), linear to 1 nm (471, 3)
"""

from __future__ import annotations

import os
import threading
from functools import lru_cache
from pathlib import Path

import numpy as np

from .constants import WAVELENGTH_NM

__all__ = ["table", "cmfs", "cache_path", "cached_arrays", "TABLE_NAMES"]

TABLE_NAMES = ("cmf_2", "cmf_10", "v_scotopic", "lms_10", "tcs_1995", "ces_2017", "d_basis")
_FORMAT = 2
_LOCK = threading.Lock()


@lru_cache(maxsize=1)
def colour_version() -> str | None:
    """colour-science's version, read from its installed metadata folder's name where that is beside the
    package (a scan of one folder); else through importlib.metadata, whose import costs more than a short
    command's whole work."""
    import importlib.util

    spec = importlib.util.find_spec("colour")
    if spec is not None and spec.origin:
        site = Path(spec.origin).parent.parent
        try:
            found = [
                e.name
                for e in os.scandir(site)
                if e.name.startswith("colour_science-") and e.name.endswith(".dist-info")
            ]
        except OSError:
            found = []
        if len(found) == 1:
            return found[0][len("colour_science-") : -len(".dist-info")]
    from importlib import metadata

    try:
        return metadata.version("colour-science")
    except metadata.PackageNotFoundError:  # pragma: no cover - dependency is required
        return None


def _versions() -> str:
    from . import __version__

    return f"{__version__}-{colour_version() or 'none'}-f{_FORMAT}"


def _cache_dir() -> Path:
    base = os.environ.get("CCTKIT_CACHE_DIR")
    if base:
        return Path(base)
    return Path(os.environ.get("XDG_CACHE_HOME") or Path.home() / ".cache") / "cctkit"


def cache_path() -> Path:
    """Where the table cache lives (``$CCTKIT_CACHE_DIR`` or the XDG cache directory)."""
    return _cache_dir() / f"tables-{_versions()}.npz"


def _build() -> dict[str, np.ndarray]:
    import colour
    from colour import SpectralShape
    from colour.colorimetry import (
        MSDS_CMFS,
        MSDS_CMFS_LMS,
        SDS_BASIS_FUNCTIONS_CIE_ILLUMINANT_D_SERIES,
        SDS_LEFS_SCOTOPIC,
    )
    from colour.quality.cfi2017 import load_TCS_CIE2017
    from colour.quality.datasets import SDS_TCS

    wl = WAVELENGTH_NM
    shape = SpectralShape(360, 830, 1)

    def on_grid_zero(domain, values):
        domain = np.asarray(domain, dtype=np.float64)
        values = np.asarray(values, dtype=np.float64)
        if values.ndim == 1:
            values = values[:, None]
        out = np.zeros((wl.shape[0], values.shape[1]))
        idx = np.searchsorted(wl, domain)
        keep = (idx < wl.shape[0]) & np.isclose(wl[np.minimum(idx, wl.shape[0] - 1)], domain)
        out[idx[keep]] = values[keep]
        return out

    t: dict[str, np.ndarray] = {}
    for key, name in (
        ("cmf_2", "CIE 1931 2 Degree Standard Observer"),
        ("cmf_10", "CIE 1964 10 Degree Standard Observer"),
    ):
        m = MSDS_CMFS[name]
        t[key] = on_grid_zero(m.wavelengths, m.values)
    s = SDS_LEFS_SCOTOPIC["CIE 1951 Scotopic Standard Observer"]
    t["v_scotopic"] = on_grid_zero(s.wavelengths, s.values)[:, 0]
    lms = MSDS_CMFS_LMS["Stockman & Sharpe 10 Degree Cone Fundamentals"]
    t["lms_10"] = on_grid_zero(lms.wavelengths, lms.values)
    tcs = SDS_TCS["CIE 1995"]
    t["tcs_1995"] = np.stack(
        [tcs[k].copy().align(shape).values for k in sorted(tcs.keys(), key=lambda k: int(k[3:]))], axis=1
    )
    # CIE 224:2017 publishes the samples at 1 nm and at 5 nm; the 1 nm table is used as published
    # (no interpolation).  Outside 380-780 nm the nearest value: the 10 deg weights there are zero.
    ces = load_TCS_CIE2017(SpectralShape(380, 780, 1))
    ces_wl = np.asarray(ces.wavelengths, dtype=np.float64)
    if not np.array_equal(ces_wl, np.arange(380.0, 781.0)):  # pragma: no cover - a changed dataset
        raise RuntimeError("colour-science's CIE 2017 1 nm colour evaluation samples do not span 380-780 nm at 1 nm")
    t["ces_2017"] = np.asarray(ces.values, dtype=np.float64)[np.clip(np.rint(wl - 380.0).astype(int), 0, 400)]
    d = SDS_BASIS_FUNCTIONS_CIE_ILLUMINANT_D_SERIES
    t["d_basis"] = np.stack(
        [np.interp(wl, d[k].wavelengths, d[k].values) for k in ("S0", "S1", "S2")], axis=1
    )  # CIE 15:2018 section 4.1.2: linear interpolation of the 10 nm / 5 nm basis
    del colour
    for v in t.values():
        assert v.shape[0] == wl.shape[0]
    return t


@lru_cache(maxsize=1)
def _all_tables() -> dict[str, np.ndarray]:
    with _LOCK:
        t = _load_or_build(cache_path(), _build, TABLE_NAMES)
        for v in t.values():
            v.setflags(write=False)
        return t


def _load_or_build(path: Path, build, keys) -> dict[str, np.ndarray]:
    """Arrays ``keys`` from the ``.npz`` at ``path``, or ``build()`` saved there atomically.

    A corrupt, partial or differently laid-out cache (any of ``keys`` missing) is rebuilt
    and rewritten, never trusted; a read-only cache folder only costs the rebuild next time.
    """
    if path.exists():
        try:
            with np.load(path, allow_pickle=False) as z:
                if set(keys) <= set(z.files):
                    return {k: z[k] for k in keys}
        except Exception:  # noqa: BLE001 - whatever is wrong with the file, it is rebuilt
            pass
    arrays = build()
    from .errors import InputError
    from .safe_io import atomic_path

    try:
        path.parent.mkdir(parents=True, exist_ok=True)
        with atomic_path(path, overwrite=True) as tmp:
            with open(tmp, "wb") as fh:
                np.savez(fh, **arrays)
    except (OSError, InputError):  # an unwritable cache only costs the rebuild next time
        pass
    return arrays


def table(name: str) -> np.ndarray:
    """The weighting table ``name`` on the working grid (read-only array)."""
    if name not in TABLE_NAMES:
        raise ValueError(f"unknown table {name!r}; expected one of {', '.join(TABLE_NAMES)}")
    return _all_tables()[name]


def cmfs(observer: int | str = 2) -> np.ndarray:
    """Colour-matching functions of the CIE 1931 2 deg (``2``) or 1964 10 deg (``10``) observer, (471, 3)."""
    key = str(observer).replace("°", "").strip()
    if key not in ("2", "10"):
        raise ValueError(f"observer must be 2 or 10, got {observer!r}")
    return table(f"cmf_{key}")


def cached_arrays(key: str, build, keys) -> dict[str, np.ndarray]:
    """Arrays derived from the tables (e.g. the CCT solver's locus table), cached beside them.

    ``build()`` returns a dict holding at least ``keys``; the result is stored as ``<key>-<versions>.npz`` in
    the cache folder and read back on later runs.
    """
    return _load_or_build(_cache_dir() / f"{key}-{_versions()}.npz", build, keys)
