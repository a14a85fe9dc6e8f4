"""IES TM-27 spectral data (XML, ``.xml`` / ``.spdx``).

The bytes are parsed with :mod:`defusedxml` and refused when they hold a
document type declaration, entity declarations or external references, so
entity-expansion bombs and external-entity reads never run.  Only then are the
elements read (matched by local name, so any namespace, or none, is accepted)::

    <IESTM2714 xmlns="http://www.ies.org/iestm2714" version="1.0">
      <Header> ... </Header>
      <SpectralDistribution>
        <SpectralQuantity>irradiance</SpectralQuantity>
        <SpectralData wavelength="380">0.034</SpectralData>
        ...
      </SpectralDistribution>
    </IESTM2714>

``SpectralQuantity`` maps to our quantity: ``flux`` → radiant-flux,
``irradiance``, ``radiance``, ``intensity``, ``relative`` as named; ``other``
or an absent element says nothing (the caller's ``quantity`` or relative
applies).  Material properties (reflectance, transmittance, absorptance,
R-/T-factor) and ``exitance`` are refused: they are not light-source spectra
this toolkit measures.  Values are taken in the base unit of the quantity
(TM-27 carries no unit element).  Several ``SpectralDistribution`` elements on
one wavelength axis become several spectra ``stem#1``, ``stem#2``, ...

The ``<Header>`` fields (Manufacturer, CatalogNumber, Description, Laboratory,
ReportNumber, ReportDate, BandwidthFWHM, BandwidthCorrected, ...) become the
spectra's metadata; ``CatalogNumber``, else ``Description``, names the spectrum
in place of the file stem.

colour-science's own TM-27 reader opens the path itself with the standard
library parser, which is why this module reads the already-checked element tree
instead; the test suite cross-checks the values against that reader.
"""

from __future__ import annotations

import math
import xml.etree.ElementTree as ET

import numpy as np

from ..errors import InputError
from ..spectra import Quantity
from . import ParsedSpectra, order_axis, short
from .metadata import MAX_ENTRIES, limit_metadata

__all__ = ["parse", "QUANTITY_OF"]

#: TM-27 SpectralQuantity (lower case) -> our quantity; None = the file says nothing.
QUANTITY_OF: dict[str, Quantity | None] = {
    "flux": Quantity.RADIANT_FLUX,
    "irradiance": Quantity.IRRADIANCE,
    "radiance": Quantity.RADIANCE,
    "intensity": Quantity.INTENSITY,
    "relative": Quantity.RELATIVE,
    "other": None,
}
_REFUSED = {"reflectance", "transmittance", "absorptance", "r-factor", "t-factor", "exitance"}


class _LineTreeBuilder(ET.TreeBuilder):
    """A tree builder that remembers the line each element starts on."""

    def __init__(self):
        super().__init__()
        self.lines: dict[int, int] = {}
        self.expat = None

    def start(self, tag, attrs):
        element = super().start(tag, attrs)
        if self.expat is not None:
            self.lines[id(element)] = self.expat.CurrentLineNumber
        return element


def _local(tag) -> str:
    tag = tag if isinstance(tag, str) else ""
    return tag.rsplit("}", 1)[-1]


def parse(data: bytes, *, source: str, stem: str) -> ParsedSpectra:
    """Parse IES TM-27 XML bytes (see the module docstring) into spectra."""
    import defusedxml
    import defusedxml.ElementTree as DET

    builder = _LineTreeBuilder()
    try:
        parser = DET.DefusedXMLParser(target=builder, forbid_dtd=True, forbid_entities=True, forbid_external=True)
        builder.expat = getattr(parser, "parser", None) or getattr(parser, "_parser", None)
        parser.feed(data)
        root = parser.close()
    except defusedxml.DTDForbidden:
        raise InputError("XML document type declarations (DTD) are not allowed", source=source) from None
    except defusedxml.EntitiesForbidden:
        raise InputError("XML entity declarations are not allowed", source=source) from None
    except defusedxml.ExternalReferenceForbidden:
        raise InputError("XML external references are not allowed", source=source) from None
    except defusedxml.DefusedXmlException as exc:
        raise InputError(f"XML refused: {type(exc).__name__}", source=source) from None
    except ET.ParseError as exc:
        line, column = getattr(exc, "position", (None, None))
        reason = str(exc).split(":", 1)[0] or "syntax error"
        raise InputError(f"not well-formed XML: {reason} (column {column})", source=source, line=line) from None
    except (ValueError, LookupError) as exc:  # UnicodeError is a ValueError
        raise InputError(
            f"not readable XML: {str(exc).splitlines()[0] if str(exc) else type(exc).__name__}", source=source
        ) from None
    except RecursionError:
        raise InputError("XML nested too deeply", source=source) from None

    def line_of(element) -> int | None:
        return builder.lines.get(id(element))

    if _local(root.tag) != "IESTM2714":
        raise InputError(
            f"not an IES TM-27 document: root element is <{short(_local(root.tag), 30)[1:-1]}>",
            source=source,
            line=line_of(root),
        )
    distributions = [el for el in root if _local(el.tag) == "SpectralDistribution"]
    if not distributions:
        raise InputError("no <SpectralDistribution> element", source=source, line=line_of(root))

    axes, rows, stated, point_lines = [], [], [], []
    for dist in distributions:
        wl, vals, q, lines = _distribution(dist, source, line_of)
        axes.append(wl)
        rows.append(vals)
        stated.append(q)
        point_lines.append(lines)
    for k in range(1, len(axes)):
        if not np.array_equal(axes[k], axes[0]):
            raise InputError(
                f"<SpectralDistribution> {k + 1} has a wavelength axis different from the first",
                source=source,
                line=line_of(distributions[k]),
            )
    if len(set(stated)) > 1:
        raise InputError(
            "<SpectralDistribution> elements state different quantities: "
            + ", ".join(sorted({q.value if q else "unstated" for q in stated})),
            source=source,
        )
    lines = point_lines[0]
    wl, values, flags = order_axis(axes[0], np.vstack(rows), source=source, lines=lines if all(lines) else None)
    n = len(rows)
    metadata = _header_fields(root)
    fields = dict(metadata)
    base = (fields.get("CatalogNumber") or fields.get("Description") or "").strip() or stem
    names = (base,) if n == 1 else tuple(f"{base}#{k + 1}" for k in range(n))
    columns = None if n == 1 else tuple(str(k + 1) for k in range(n))
    return ParsedSpectra(
        wavelength_nm=wl,
        values=values,
        names=names,
        columns=columns,
        quantity=stated[0],
        flags=flags,
        metadata=metadata,
    )


def _header_fields(root) -> tuple[tuple[str, str], ...]:
    """The ``<Header>`` fields (Manufacturer, CatalogNumber, Description, Laboratory, ...) as text pairs.

    Nested elements are named ``Parent/Child``; empty ones are left out.
    """
    pairs: list[tuple[str, str]] = []

    def walk(el, prefix: str) -> None:
        for child in el:
            name = f"{prefix}{_local(child.tag)}"
            text = " ".join((child.text or "").split())
            if text:
                pairs.append((name, text))
            if len(pairs) < 4 * MAX_ENTRIES:
                walk(child, f"{name}/")

    for el in root:
        if _local(el.tag) == "Header":
            walk(el, "")
    return limit_metadata(pairs)


def _data_elements(dist):
    return [el for el in dist if _local(el.tag) == "SpectralData"]


def _distribution(dist, source, line_of):
    quantity = None
    for el in dist:
        if _local(el.tag) == "SpectralQuantity":
            text = (el.text or "").strip()
            key = text.lower()
            if key in _REFUSED:
                raise InputError(
                    f"SpectralQuantity {short(text)} is not a light-source quantity; expected flux, irradiance, "
                    "radiance, intensity or relative",
                    source=source,
                    line=line_of(el),
                )
            if key not in QUANTITY_OF:
                raise InputError(
                    f"unknown SpectralQuantity {short(text)}; expected flux, irradiance, radiance, intensity, "
                    "relative or other",
                    source=source,
                    line=line_of(el),
                )
            quantity = QUANTITY_OF[key]
    data = _data_elements(dist)
    if not data:
        raise InputError("<SpectralDistribution> holds no <SpectralData> elements", source=source, line=line_of(dist))
    wl = np.empty(len(data))
    vals = np.empty(len(data))
    for i, el in enumerate(data):
        attr = el.get("wavelength")
        if attr is None:
            raise InputError("<SpectralData> without a 'wavelength' attribute", source=source, line=line_of(el))
        wl[i] = _number(attr, "wavelength attribute", source, line_of(el))
        vals[i] = _number(el.text or "", f"value at {attr.strip()} nm", source, line_of(el))
    return wl, vals[np.newaxis, :], quantity, [line_of(el) or 0 for el in data]


def _number(text: str, what: str, source: str, line: int | None) -> float:
    t = text.strip()
    try:
        value = float(t)
    except (ValueError, OverflowError):
        value = math.nan
    if "_" in t or not math.isfinite(value):
        raise InputError(f"{what} {short(t)} is not a finite number", source=source, line=line)
    return value
