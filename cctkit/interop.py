"""Spectra and results to and from pandas and colour-science; the notebook view of an analysis.

pandas is an optional extra (``pip install 'cctkit[pandas]'``) and colour-science a
dependency; both are imported inside the functions that need them, so importing this
module (or ``cctkit --help``) costs nothing.

Layouts
-------
``Spectra.to_frame()`` gives one column per spectrum, named by the spectrum, on an index
named ``wavelength_nm`` [nm]; the radiometric quantity and its spectral unit travel in
``DataFrame.attrs``.  :func:`spectra_from_frame` reads that layout back (and the same
layout with the wavelengths in a column), so the round trip is exact.

colour-science holds spectra as ``SpectralDistribution`` (one) and
``MultiSpectralDistributions`` (several, one label each).  Neither carries a radiometric
quantity, so :func:`spectra_from_colour` takes it as an argument (default: relative).
"""

from __future__ import annotations

import html
from typing import TYPE_CHECKING, Any

import numpy as np

from .errors import InputError
from .spectra import Quantity, Spectra

if TYPE_CHECKING:  # pragma: no cover
    import pandas as pd

    from .analysis import Analysis

__all__ = [
    "spectra_from_frame",
    "spectra_to_frame",
    "spectra_from_colour",
    "spectra_to_colour",
    "analysis_to_frame",
    "analysis_html",
    "WAVELENGTH_COLUMNS",
]

#: Column names taken as the wavelength axis [nm] when the frame's index is not numeric.
WAVELENGTH_COLUMNS = ("wavelength_nm", "wavelength", "wl_nm", "nm")


def _pandas():
    try:
        import pandas as pd
    except ImportError:  # pragma: no cover - depends on the environment
        raise InputError("pandas is not installed; install it with: pip install 'cctkit[pandas]'") from None
    return pd


# --------------------------------------------------------------------------- pandas


def spectra_to_frame(spectra: Spectra) -> pd.DataFrame:
    """One column per spectrum (named by the spectrum) on a ``wavelength_nm`` index [nm].

    ``attrs`` carries ``quantity`` and ``spectral_unit`` so that :func:`spectra_from_frame`
    restores them.
    """
    pd = _pandas()
    index = pd.Index(np.array(spectra.wavelength_nm, dtype=np.float64), name="wavelength_nm")
    columns = pd.Index(list(spectra.names), dtype=object)
    df = pd.DataFrame(np.array(spectra.values, dtype=np.float64).T, index=index, columns=columns)
    df.attrs["quantity"] = spectra.quantity.value
    df.attrs["spectral_unit"] = spectra.quantity.unit
    return df


def spectra_from_frame(
    df: pd.DataFrame, *, quantity: Quantity | str | None = None, wavelength_column: str | None = None
) -> Spectra:
    """A :class:`~cctkit.spectra.Spectra` from a DataFrame with one column per spectrum.

    Parameters
    ----------
    df
        Spectral values, one column per spectrum (the column name is the spectrum's name).
    quantity
        Radiometric quantity of the values; default ``df.attrs["quantity"]``, else relative.
    wavelength_column
        Column holding the wavelengths [nm].  Default: the first of
        :data:`WAVELENGTH_COLUMNS` present, else the index when it is numeric (a default
        ``RangeIndex`` of row numbers is not taken for wavelengths).

    Raises
    ------
    InputError
        When no wavelength axis is found or a value column is not numeric.
    """
    pd = _pandas()
    if not isinstance(df, pd.DataFrame):
        raise InputError(f"expected a pandas DataFrame, got {type(df).__name__}", source="from_frame")
    data = df
    if wavelength_column is None:
        wavelength_column = next((c for c in WAVELENGTH_COLUMNS if c in df.columns), None)
        # a default RangeIndex (0, 1, 2, ...) is row numbers, not wavelengths
        positional = isinstance(df.index, pd.RangeIndex) and df.index.name is None
        if wavelength_column is None and (positional or not pd.api.types.is_numeric_dtype(df.index.dtype)):
            raise InputError(
                "no wavelength axis: give a numeric index [nm] or a column named one of "
                + ", ".join(WAVELENGTH_COLUMNS),
                source="from_frame",
            )
    if wavelength_column is not None:
        if wavelength_column not in df.columns:
            raise InputError(
                f"wavelength_column {wavelength_column!r} is not a column of the frame", source="from_frame"
            )
        wl = df[wavelength_column].to_numpy(dtype=np.float64)
        data = df.drop(columns=[wavelength_column])
    else:
        wl = df.index.to_numpy(dtype=np.float64)
    bad = [str(c) for c in data.columns if not pd.api.types.is_numeric_dtype(data[c].dtype)]
    if bad:
        raise InputError(f"column {bad[0]!r} is not numeric", source="from_frame")
    if quantity is None:
        quantity = df.attrs.get("quantity", Quantity.RELATIVE)
    q = quantity if isinstance(quantity, Quantity) else Quantity.parse(str(quantity), source="quantity")
    return Spectra(
        wavelength_nm=wl,
        values=data.to_numpy(dtype=np.float64).T,
        names=tuple(str(c) for c in data.columns),
        quantity=q,
    )


# --------------------------------------------------------------------------- colour-science


def spectra_to_colour(spectra: Spectra):
    """The spectra as one ``colour.MultiSpectralDistributions`` (labels = names), N = 1 included.

    ``msds.to_sds()`` gives the single distributions.  The radiometric quantity is not
    carried (colour-science has no place for it).
    """
    import colour

    return colour.MultiSpectralDistributions(
        np.array(spectra.values, dtype=np.float64).T,
        np.array(spectra.wavelength_nm, dtype=np.float64),
        labels=list(spectra.names),
        name="cctkit spectra",
    )


def spectra_from_colour(obj: Any, *, quantity: Quantity | str = Quantity.RELATIVE) -> Spectra:
    """A :class:`~cctkit.spectra.Spectra` from colour-science distributions.

    Parameters
    ----------
    obj
        A ``SpectralDistribution`` (one spectrum, named by its ``name``), a
        ``MultiSpectralDistributions`` (one spectrum per label), or a list of
        ``SpectralDistribution`` on one wavelength axis.
    quantity
        Radiometric quantity of the values (colour-science does not say).
    """
    import colour

    q = quantity if isinstance(quantity, Quantity) else Quantity.parse(str(quantity), source="quantity")
    if isinstance(obj, colour.MultiSpectralDistributions):
        return Spectra(
            wavelength_nm=np.array(obj.wavelengths, dtype=np.float64),
            values=np.array(obj.values, dtype=np.float64).T,
            names=tuple(str(n) for n in obj.labels),
            quantity=q,
        )
    if isinstance(obj, colour.SpectralDistribution):
        obj = [obj]
    items = list(obj) if isinstance(obj, (list, tuple)) else None
    if not items or not all(isinstance(s, colour.SpectralDistribution) for s in items):
        raise InputError(
            "expected a colour SpectralDistribution, MultiSpectralDistributions or a list of "
            f"SpectralDistribution, got {type(obj).__name__}",
            source="from_colour",
        )
    wl = np.array(items[0].wavelengths, dtype=np.float64)
    for s in items[1:]:
        if not np.array_equal(np.asarray(s.wavelengths, dtype=np.float64), wl):
            raise InputError(
                f"spectral distribution {s.name!r} is not on the wavelength axis of "
                f"{items[0].name!r}; align them first",
                source="from_colour",
            )
    return Spectra(
        wavelength_nm=wl,
        values=np.array([np.asarray(s.values, dtype=np.float64) for s in items]),
        names=tuple(str(s.name) for s in items),
        quantity=q,
    )


# --------------------------------------------------------------------------- analysis


def analysis_to_frame(analysis: Analysis) -> pd.DataFrame:
    """One row per spectrum; the columns of the records CSV (unit-bearing names, R1..R14, ...).

    Values are those of :meth:`~cctkit.analysis.Analysis.records` (None becomes NaN);
    list fields are numbered columns (``R1``..``R14``, ``Rf_h1``..) and ``flags`` is one
    column of ``;``-joined flag codes (empty when there is none).
    """
    from .analysis import flatten_record

    pd = _pandas()
    rows = [flatten_record(r) for r in analysis.records()]
    columns: list[str] = []
    for r in rows:
        columns.extend(k for k in r if k not in columns)
    df = pd.DataFrame.from_records(rows, columns=columns)
    df.attrs["observer"] = analysis.observer
    return df


# (record key, column header) of the notebook table; the unit is in the header.
_HTML_COLUMNS = (
    ("name", "spectrum"),
    ("cct_K", "CCT [K]"),
    ("duv", "Duv"),
    ("x", "x"),
    ("y", "y"),
    ("luminous", None),  # the quantity's photometric total, header from the quantity
    ("Ra", "Ra"),
    ("R9", "R9"),
    ("Rf", "Rf"),
    ("Rg", "Rg"),
    ("flags", "flags"),
)
_HTML_FORMATS = {
    "cct_K": "{:.0f}",
    "duv": "{:+.4f}",
    "x": "{:.4f}",
    "y": "{:.4f}",
    "luminous": "{:.4g}",
    "Ra": "{:.1f}",
    "R9": "{:.1f}",
    "Rf": "{:.1f}",
    "Rg": "{:.1f}",
}
_LUMINOUS_HEADERS = {
    "luminous_flux_lm": "flux [lm]",
    "illuminance_lx": "illuminance [lx]",
    "luminance_cd_per_m2": "luminance [cd/m²]",
    "intensity_cd": "intensity [cd]",
    "relative_luminous": "Y (relative)",
}


def analysis_html(analysis: Analysis, *, max_rows: int = 20) -> str:
    """A compact HTML table of the headline numbers (the notebook view of an analysis)."""
    from .formats import format_number

    n = len(analysis)
    shown = list(range(n)) if n <= max_rows else list(range(max_rows - 5)) + list(range(n - 5, n))
    key = analysis.spectra.quantity.luminous_name
    heads = [_LUMINOUS_HEADERS.get(key, key) if h is None else h for _, h in _HTML_COLUMNS]
    records = analysis.records()
    rows = []
    for pos, i in enumerate(shown):
        if pos and shown[pos - 1] != i - 1:
            rows.append("<tr>" + "".join("<td>…</td>" for _ in heads) + "</tr>")
        rec = dict(records[i])
        rec["R9"] = rec["R"][8] if rec.get("R") else None
        rec["luminous"] = rec.get(key)
        rec["flags"] = " ".join(f["code"] for f in rec["flags"])
        cells = []
        for k, _ in _HTML_COLUMNS:
            v = rec.get(k)
            if v is None:
                text = "n/a" if k not in ("flags",) else ""
            elif k in _HTML_FORMATS:
                text = format_number(float(v), _HTML_FORMATS[k])
            else:
                text = str(v)
            cells.append(f"<td>{html.escape(text)}</td>")
        rows.append("<tr>" + "".join(cells) + "</tr>")
    caption = (
        f"cctkit analysis: {n} spectr{'um' if n == 1 else 'a'}, {analysis.spectra.quantity.value}, "
        f"CIE {'1931 2°' if analysis.observer == 2 else '1964 10°'} observer"
    )
    head = "".join(f"<th>{html.escape(h)}</th>" for h in heads)
    return (
        f'<table class="cctkit-analysis"><caption>{html.escape(caption)}</caption>'
        f"<thead><tr>{head}</tr></thead><tbody>{''.join(rows)}</tbody></table>"
    )
