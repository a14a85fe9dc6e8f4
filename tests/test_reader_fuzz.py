"""Property tests: a reader returns a valid Spectra or raises InputError, never anything else.

Generated files are well-formed delimited text, JSON and TM-27 XML (whose numbers
must come back exactly, in base units), the same with random damage, and
arbitrary bytes or text under each extension.
"""

from __future__ import annotations

import codecs
import json
import os
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from cctkit.errors import InputError
from cctkit.readers import read_spectra
from cctkit.spectra import MIN_POINTS, Quantity, Spectra

# CCTKIT_FUZZ_EXAMPLES raises the count for a longer local hunt; CI keeps the file under ~20 s.
SETTINGS = settings(
    max_examples=int(os.environ.get("CCTKIT_FUZZ_EXAMPLES", "60")),
    deadline=None,
    suppress_health_check=[HealthCheck.too_slow],
)

# unit text -> (quantity, factor to base unit); factors are unit arithmetic, SI
UNITS = {
    None: (None, 1.0),
    "W/m2/nm": (Quantity.IRRADIANCE, 1.0),
    "mW/nm": (Quantity.RADIANT_FLUX, 1e-3),
    "µW/cm²/nm": (Quantity.IRRADIANCE, 1e-2),
    "W/(sr m2 nm)": (Quantity.RADIANCE, 1.0),
    "a.u.": (Quantity.RELATIVE, 1.0),
}
FLOATS = st.floats(min_value=-1e3, max_value=1e3, allow_nan=False, allow_subnormal=False)


@pytest.fixture(scope="module")
def folder(tmp_path_factory) -> Path:
    return tmp_path_factory.mktemp("fuzz")


def outcome(path: Path, **kw) -> Spectra | None:
    """Read ``path``; None for an InputError (checked to be one line naming the file)."""
    try:
        s = read_spectra(path, **kw)
    except InputError as exc:
        text = str(exc)
        assert text.startswith(str(path)), text
        assert "\n" not in text and "\r" not in text
        return None
    assert isinstance(s, Spectra)
    assert s.values.ndim == 2 and s.values.shape[1] == s.wavelength_nm.shape[0] >= MIN_POINTS
    assert np.all(np.isfinite(s.values)) and np.all(np.diff(s.wavelength_nm) > 0)
    assert len(s.names) == len(s.sources) == len(s.sha256) == len(s)
    assert all(src.startswith(str(path)) for src in s.sources)
    return s


def write(folder: Path, name: str, data: bytes) -> Path:
    p = folder / name
    p.write_bytes(data)
    return p


def read_generated(
    folder: Path, name: str, data: bytes, *, valid: bool, n_points: int, refused: bool = False
) -> Spectra | None:
    """Write and read a generated file; its Spectra when it must be read, else None.

    ``refused`` files must raise InputError.  A ``valid`` file must be read when it
    has at least MIN_POINTS wavelengths and refused when it has fewer.
    """
    s = outcome(write(folder, name, data))
    if refused:
        assert s is None
    if not valid:
        return None
    if n_points < MIN_POINTS:
        assert s is None
        return None
    assert s is not None
    return s


def damage(draw, text: str) -> str:
    """One random edit: delete, insert junk, duplicate or swap a line, truncate."""
    kind = draw(st.sampled_from(["delete", "insert", "dup-line", "swap", "truncate"]))
    if not text:
        return text
    i = draw(st.integers(0, len(text) - 1))
    if kind == "delete":
        return text[:i] + text[i + 1 :]
    if kind == "insert":
        junk = draw(
            st.sampled_from(
                [
                    "n/a",
                    "nan",
                    ",",
                    ";",
                    "\t",
                    "abc",
                    "\n",
                    "1e999",
                    "-",
                    "<",
                    "&",
                    '"',
                    "{",
                    "]",
                    "\x00",
                    "\u2028",
                    "#",
                    "0,5",
                    ".",
                ]
            )
        )
        return text[:i] + junk + text[i:]
    lines = text.split("\n")
    if kind == "dup-line":
        j = draw(st.integers(0, len(lines) - 1))
        return "\n".join(lines[: j + 1] + lines[j:])
    if kind == "swap" and len(lines) > 2:
        j = draw(st.integers(0, len(lines) - 2))
        lines[j], lines[j + 1] = lines[j + 1], lines[j]
        return "\n".join(lines)
    return text[:i]


# --------------------------------------------------------------------------- delimited


@st.composite
def delimited_files(draw):
    n_rows = draw(st.integers(3, 12))
    n_cols = draw(st.integers(1, 4))
    sep = draw(st.sampled_from([",", "\t", ";", " ", "   "]))
    decimal = "." if sep == "," else draw(st.sampled_from([".", ","]))
    unit = draw(st.sampled_from(list(UNITS)))
    header = draw(st.booleans()) or unit is not None
    start = draw(st.integers(300, 700))
    step = draw(st.sampled_from([0.5, 1.0, 2.0, 5.0]))
    wl = start + step * np.arange(n_rows)
    values = np.array(
        draw(st.lists(st.lists(FLOATS, min_size=n_cols, max_size=n_cols), min_size=n_rows, max_size=n_rows))
    )
    order = np.arange(n_rows)[::-1] if draw(st.booleans()) else np.arange(n_rows)
    lines = []
    if draw(st.booleans()):
        lines.append("# generated bench file")
    if header:
        cells = ["wavelength (nm)"] + [f"s{k}" + (f" ({unit})" if unit else "") for k in range(n_cols)]
        lines.append(sep.join(cells))
    for i in order:
        cells = [f"{wl[i]:g}"] + [repr(float(v)) for v in values[i]]
        lines.append(sep.join(c.replace(".", decimal) for c in cells))
        if draw(st.integers(0, 9)) == 0:
            lines.append(draw(st.sampled_from(["", "// note", "% note", sep * 2])))
    newline = draw(st.sampled_from(["\n", "\r\n"]))
    text = newline.join(lines) + newline
    broken = draw(st.booleans())
    if broken:
        text = damage(draw, text)
    encoding = draw(st.sampled_from(["utf-8", "utf-8-sig", "utf-16"]))
    ext = draw(st.sampled_from([".csv", ".tsv", ".txt", ".dat"]))
    return text.encode(encoding), ext, wl, values, n_cols, unit, broken


@SETTINGS
@given(delimited_files())
def test_delimited_property(folder, case):
    data, ext, wl, values, n_cols, unit, broken = case
    s = read_generated(folder, "gen" + ext, data, valid=not broken, n_points=len(wl))
    if s is None:
        return
    quantity, factor = UNITS[unit]
    assert s.quantity is (quantity or Quantity.RELATIVE)
    np.testing.assert_allclose(s.wavelength_nm, wl, rtol=0, atol=1e-9)
    np.testing.assert_allclose(s.values, values.T * factor, rtol=1e-12, atol=0)
    assert len(s) == n_cols


# --------------------------------------------------------------------------- JSON

JSON_LEAVES = st.none() | st.booleans() | st.integers(-(10**6), 10**6) | FLOATS | st.text(max_size=8)
JSON_VALUES = st.recursive(
    JSON_LEAVES, lambda c: st.lists(c, max_size=6) | st.dictionaries(st.text(max_size=6), c, max_size=4), max_leaves=20
)
KEYS = ["quantity", "unit", "comment", "wavelength_nm", "spectra", "values", "name", "extra"]


@st.composite
def json_files(draw):
    n = draw(st.integers(3, 10))
    wl = sorted(draw(st.sets(st.integers(300, 900), min_size=n, max_size=n)))
    k = draw(st.integers(1, 3))
    values = draw(st.lists(st.lists(FLOATS, min_size=n, max_size=n), min_size=k, max_size=k))
    unit = draw(st.sampled_from([u for u in UNITS if u]))
    if k == 1 and draw(st.booleans()):
        doc = {"wavelength_nm": wl, "values": values[0]}
    else:
        doc = {"wavelength_nm": wl, "spectra": [{"name": f"lamp {i}", "values": v} for i, v in enumerate(values)]}
    if draw(st.booleans()):
        doc["unit"] = unit
    mode = draw(st.sampled_from(["valid", "replace-key", "damage-text"]))
    if mode == "replace-key":
        doc[draw(st.sampled_from(KEYS))] = draw(JSON_VALUES)
    text = json.dumps(doc, indent=draw(st.sampled_from([None, 1, 2])))
    if mode == "damage-text":
        text = damage(draw, text)
    bom = draw(st.sampled_from([b"", codecs.BOM_UTF8]))
    return bom + text.encode(), doc, wl, values, mode


@SETTINGS
@given(json_files())
def test_json_property(folder, case):
    data, doc, wl, values, mode = case
    s = read_generated(folder, "gen.json", data, valid=mode == "valid", n_points=len(wl))
    if s is None:
        return
    quantity, factor = UNITS[doc.get("unit")]
    assert s.quantity is (quantity or Quantity.RELATIVE)
    np.testing.assert_array_equal(s.wavelength_nm, wl)
    np.testing.assert_allclose(s.values, np.array(values) * factor, rtol=1e-12, atol=0)


@SETTINGS
@given(JSON_VALUES)
def test_any_json_document(folder, doc):
    outcome(write(folder, "any.json", json.dumps(doc).encode()))


# --------------------------------------------------------------------------- TM-27 XML

XML_NUMBERS = st.sampled_from(["380", "385.5", "1e2", "", "abc", "nan", "inf", "-5", "0", " 390 ", "4_0", "١٢"])


@st.composite
def xml_files(draw):
    n = draw(st.integers(3, 10))
    wl = sorted(draw(st.sets(st.integers(300, 900), min_size=n, max_size=n)))
    vals = draw(st.lists(FLOATS, min_size=n, max_size=n))
    quantity = draw(st.sampled_from(["irradiance", "flux", "relative", "other", "radiance", "intensity"]))
    ns = draw(st.sampled_from(['xmlns="http://www.ies.org/iestm2714" ', ""]))
    data = "".join(f'<SpectralData wavelength="{w}">{v!r}</SpectralData>\n' for w, v in zip(wl, vals))
    text = (
        f'<?xml version="1.0" encoding="UTF-8"?>\n<IESTM2714 {ns}version="1.0">\n<Header><Manufacturer>'
        f"Quayside</Manufacturer></Header>\n<SpectralDistribution>\n<SpectralQuantity>{quantity}"
        f"</SpectralQuantity>\n{data}</SpectralDistribution>\n</IESTM2714>\n"
    )
    mode = draw(st.sampled_from(["valid", "damage-text", "bad-number", "dtd"]))
    if mode == "damage-text":
        text = damage(draw, text)
    elif mode == "bad-number":
        bad = draw(XML_NUMBERS)
        text = text.replace(
            f'wavelength="{wl[0]}">',
            f'wavelength="{bad}">' if draw(st.booleans()) else f'wavelength="{wl[0]}">{bad}<x/>',
            1,
        )
    elif mode == "dtd":
        text = text.replace("<IESTM2714", '<!DOCTYPE IESTM2714 [<!ENTITY e "x">]>\n<IESTM2714', 1)
    return text.encode(), wl, vals, quantity, mode


QUANTITY_OF = {
    "irradiance": Quantity.IRRADIANCE,
    "flux": Quantity.RADIANT_FLUX,
    "relative": Quantity.RELATIVE,
    "other": Quantity.RELATIVE,
    "radiance": Quantity.RADIANCE,
    "intensity": Quantity.INTENSITY,
}


@SETTINGS
@given(xml_files())
def test_tm27_property(folder, case):
    data, wl, vals, quantity, mode = case
    s = read_generated(folder, "gen.spdx", data, valid=mode == "valid", n_points=len(wl), refused=mode == "dtd")
    if s is None:
        return
    assert s.quantity is QUANTITY_OF[quantity]
    np.testing.assert_array_equal(s.wavelength_nm, wl)
    np.testing.assert_array_equal(s.values[0], vals)


# --------------------------------------------------------------------------- anything at all


@SETTINGS
@given(st.binary(max_size=400), st.sampled_from([".csv", ".json", ".xml", ".bin", ""]))
def test_arbitrary_bytes(folder, data, ext):
    outcome(write(folder, "raw" + ext, data))


@SETTINGS
@given(
    st.text(max_size=300),
    st.sampled_from([".csv", ".json", ".spdx", ".dat"]),
    st.sampled_from([None, "irradiance", "relative"]),
)
def test_arbitrary_text(folder, text, ext, quantity):
    outcome(write(folder, "text" + ext, text.encode("utf-8", errors="surrogatepass")), quantity=quantity)
