"""A corpus of malformed inputs: each gives one InputError line naming the file (and line), inputs untouched."""

from __future__ import annotations

import codecs
import json
import os
import re
from pathlib import Path

import pytest

from cctkit.errors import InputError
from cctkit.readers import read_spectra

GOOD = "380,0.1\n385,0.2\n390,0.3\n395,0.4\n400,0.5\n405,0.6\n"
WL = [380, 385, 390, 395, 400, 405]


def rows(*lines: str) -> str:
    return "\n".join(lines) + "\n"


def jdoc(**doc) -> str:
    """JSON with one top-level key per line, the first on line 2."""
    return "{\n" + ",\n".join(f"{json.dumps(k)}: {json.dumps(v)}" for k, v in doc.items()) + "\n}\n"


def tm27(body: str, quantity: str = "irradiance") -> str:
    return (
        '<?xml version="1.0"?>\n<IESTM2714 xmlns="http://www.ies.org/iestm2714" version="1.0">\n'
        f"<SpectralDistribution>\n<SpectralQuantity>{quantity}</SpectralQuantity>\n{body}"
        "</SpectralDistribution>\n</IESTM2714>\n"
    )


def sdata(pairs) -> str:
    return "".join(f'<SpectralData wavelength="{w}">{v}</SpectralData>\n' for w, v in pairs)


GOOD_XML_DATA = sdata(zip(WL, [0.1, 0.2, 0.3, 0.4, 0.5, 0.6]))
LAUGHS = (
    '<?xml version="1.0"?>\n<!DOCTYPE lolz [\n<!ENTITY lol "lol">\n'
    '<!ENTITY lol2 "&lol;&lol;&lol;&lol;&lol;&lol;&lol;&lol;&lol;&lol;">\n'
    '<!ENTITY lol3 "&lol2;&lol2;&lol2;&lol2;&lol2;&lol2;&lol2;&lol2;&lol2;&lol2;">\n]>\n'
    '<IESTM2714><SpectralDistribution><SpectralData wavelength="380">&lol3;</SpectralData>'
    "</SpectralDistribution></IESTM2714>\n"
)
EXTERNAL = (
    '<?xml version="1.0"?>\n<!DOCTYPE x [<!ENTITY ext SYSTEM "file:///etc/passwd">]>\n'
    '<IESTM2714><SpectralDistribution><SpectralData wavelength="380">&ext;</SpectralData>'
    "</SpectralDistribution></IESTM2714>\n"
)
ENTITY_NO_DTD_HEAD = '<?xml version="1.0"?>\n<IESTM2714>&undefined;</IESTM2714>\n'

# (id, file name, content, expected 1-based line or None, regex of the reason)
CASES: list[tuple[str, str, str | bytes, int | None, str]] = [
    # ---- delimited text
    ("empty", "empty.csv", b"", None, r"file is empty"),
    ("whitespace-only", "blank.csv", b"  \n\t\n\n", None, r"file is empty"),
    ("bom-only", "bom.csv", codecs.BOM_UTF8 + b"\r\n", None, r"file is empty"),
    ("utf16-bom-only", "bom16.json", codecs.BOM_UTF16_LE + " \n".encode("utf-16-le"), None, r"file is empty"),
    ("comments-only", "notes.csv", "# a\n// b\n% c\n", None, r"no data rows \(only comments"),
    ("header-only", "hdr.csv", "wavelength,A\n", 1, r"header but no data rows"),
    (
        "too-few-wavelengths-in-rows",
        "few.csv",
        "name,500,510\nlamp A,1,2\n",
        1,
        r"the header names only 2 wavelengths \(500-510 nm\) for spectra in rows; a spectrum needs at least 5$",
    ),
    ("one-column", "one.csv", rows(*[str(w) for w in WL]), 1, r"needs a wavelength column and at least one value"),
    ("nan-cell", "nan.csv", GOOD.replace("390,0.3", "390,nan"), 3, r"missing value 'nan' in column 2"),
    ("na-cell", "na.csv", GOOD.replace("395,0.4", "395,n/a"), 4, r"missing value 'n/a' in column 2"),
    (
        "empty-cell",
        "hole.csv",
        rows("wl,A,B", "380,1,2", "385,,2", "390,1,2", "395,1,2", "400,1,2"),
        3,
        r"empty cell in column 2",
    ),
    ("text-cell", "txt.csv", GOOD.replace("400,0.5", "400,0.5x"), 5, r"expected a number in column 2, got '0\.5x'"),
    (
        "text-in-middle",
        "mid.csv",
        GOOD.replace("395,0.4\n", "395,0.4\nrecalibrated here\n"),
        5,
        r"text among the data rows",
    ),
    (
        "header-in-middle",
        "hdr2.csv",
        "wavelength,A\n" + GOOD.replace("390,", "wavelength,A\n390,"),
        4,
        r"text among the data rows \(a second header\?\): 'wavelength'",
    ),
    ("ragged-short", "short.csv", GOOD.replace("385,0.2", "385"), 2, r"row has 1 cell, expected 2"),
    ("ragged-long", "long.csv", GOOD.replace("385,0.2", "385,0.2,0.9"), 2, r"row has 3 cells, expected 2"),
    ("duplicate-wavelength", "dup.csv", GOOD.replace("395,", "390,"), 4, r"duplicate wavelength 390 nm"),
    (
        "unordered",
        "order.csv",
        GOOD.replace("385,0.2\n390,0.3", "390,0.3\n385,0.2"),
        3,
        r"wavelengths out of order: 385 nm follows 390 nm",
    ),
    ("zero-wavelength", "zero.csv", "0,0.0\n" + GOOD, 1, r"wavelength 0 nm is not positive"),
    ("overflow", "big.csv", GOOD.replace("0.4", "1e999"), 4, r"value in column 2 is beyond floating-point range"),
    ("inf-cell", "inf.csv", GOOD.replace("0.4", "inf"), 4, r"missing value 'inf'"),
    (
        "unknown-unit",
        "unit.csv",
        "wavelength (nm),A (furlong/fortnight)\n" + GOOD,
        1,
        r"unknown unit 'furlong/fortnight'",
    ),
    ("not-spectral-unit", "w.csv", "wavelength (nm),A (W/m2)\n" + GOOD, 1, r"'W/m2' is not a spectral power unit"),
    ("photometric-unit", "lm.csv", "wavelength (nm),A (lm/nm)\n" + GOOD, 1, r"'lm/nm' is a photometric unit"),
    # W/nm Gm1000 m-1000: every symbol after '/' divides.  Decimal exponents: W 0, nm -9 (divided: +9),
    # Gm1000 = (9 + 0) * 1000 (divided: -9000), m-1000 = 0, so 10^(9 - 9000) W/m^3 against the base unit
    # W/(m^2 nm) = 10^9 W/m^3: off by 10^(9 - 9000 - 9) = 1e-9000.  # unit arithmetic, SI
    (
        "absurd-prefix-powers",
        "gm.csv",
        "wavelength (nm),A (W/nm Gm1000 m-1000)\n" + GOOD,
        1,
        r"unit 'W/nm Gm1000 m-1000' is off by a factor of 1e-9000",
    ),
    (
        "huge-unit-exponent",
        "exp.csv",
        "wavelength (nm),A (W" + "9" * 5000 + "/nm)\n" + GOOD,
        1,
        r"unknown unit 'W9{5000}/nm'",
    ),
    (
        "huge-wavelength-unit-exponent",
        "wexp.csv",
        "wavelength / nm" + "9" * 5000 + ",A\n" + GOOD,
        1,
        r"unknown wavelength unit 'nm9{5000}'",
    ),
    (
        "deeply-nested-unit",
        "nest.csv",
        "wavelength (nm),A (" + "(" * 5000 + "W/nm" + ")" * 5000 + ")\n" + GOOD,
        1,
        r"unknown unit '\({5000}W/nm\){5000}'",
    ),
    ("photon-unit", "ph.csv", "wavelength (nm),A (umol/m2/s/nm)\n" + GOOD, 1, r"photon units are not supported"),
    ("wavelength-unit", "wlu.csv", "wavelength (cm/s),A\n" + GOOD, 1, r"unknown wavelength unit 'cm/s'"),
    (
        "mixed-quantities",
        "mixq.csv",
        rows("wl (nm),A (W/nm),B (W/m2/nm)", *[f"{w},1,2" for w in WL]),
        1,
        r"value columns are in units of different quantities: irradiance, radiant-flux",
    ),
    (
        "unit-on-some",
        "some.csv",
        rows("wl (nm),A (W/nm),B", *[f"{w},1,2" for w in WL]),
        1,
        r"column 'B' has no unit while others do",
    ),
    (
        "duplicate-names",
        "names.csv",
        rows("wl,A,A", *[f"{w},1,2" for w in WL]),
        1,
        r"column name 'A' appears twice \(columns 2 and 3\)",
    ),
    ("header-count", "hcount.csv", "wavelength,A,B\n" + GOOD, 1, r"header has 3 columns but the data rows have 2"),
    # notes above a table are metadata now; two tables in one file are ambiguous
    (
        "two-tables",
        "two.csv",
        "lamp A\nwavelength,A\n" + GOOD + "lamp B\nwavelength,B\n" + GOOD,
        11,
        r"two tables of numbers, lines 3-8 and lines 11-16",
    ),
    ("header-no-numbers", "hn.csv", "Operator: Kit\nwavelength;lamp\nEnd of data\n", 2, r"header but no data rows"),
    (
        "space-in-tab-file",
        "mixsep.tsv",
        GOOD.replace(",", "\t").replace("390\t0.3", "390 0.3"),
        3,
        r"row has 1 cell, expected 2",
    ),
    (
        "micrometres-unstated",
        "um.csv",
        rows(*[f"0.{w},1" for w in WL]),
        None,
        r"wavelengths 0\.38-0\.405 look like micrometres",
    ),
    ("too-few-points", "few.csv", "380,1\n390,2\n400,3\n", None, r"only 3 wavelength points"),
    (
        "mixed-decimal",
        "mixdec.csv",
        rows(*[f"{w};0,{i + 1}" for i, w in enumerate(WL)]).replace("0,3", "0.3"),
        3,
        r"decimal point '0\.3' in column 2 while the file uses decimal commas",
    ),
    ("binary-png", "image.csv", b"\x89PNG\r\n\x1a\n\x00\x00\x00\rIHDR\x00\x00", None, r"binary file, not text \(NUL"),
    (
        "control-char",
        "ctl.csv",
        GOOD.replace("390,0.3", "390,0.3\x01"),
        3,
        r"binary file, not text \(control character 0x01\)",
    ),
    (
        "bad-utf16",
        "u16.csv",
        codecs.BOM_UTF16_LE + "380,1\n".encode("utf-16-le") + b"\x00\xd8",
        None,
        r"not valid UTF-16 text",
    ),
    (
        "directive-contradicts",
        "dq.csv",
        "# quantity: irradiance\nwl (nm),A (W/nm)\n" + GOOD,
        1,
        r"the stated quantity 'irradiance' contradicts the unit, which is one of 'radiant-flux'$",
    ),
    ("directive-unknown", "du.csv", "# quantity: brightness\n" + GOOD, 1, r"unknown quantity 'brightness'"),
    ("directive-conflict", "dd.csv", "# unit: W/nm\n# unit: mW/nm\n" + GOOD, 2, r"conflicting '# unit:' lines"),
    # ---- JSON
    ("json-syntax", "bad.json", '{\n "wavelength_nm": [380,\n', 3, r"not valid JSON"),
    ("json-top-list", "list.json", "[380, 0.1]", None, r"expected a JSON object at the top, got a list"),
    ("json-unknown-key", "key.json", '{\n "wavelength_nm": [380],\n "valeus": [1]\n}', 3, r"unknown key 'valeus'"),
    ("json-missing-wavelength", "nowl.json", jdoc(values=[1, 2, 3, 4, 5]), None, r"missing key 'wavelength_nm'"),
    ("json-missing-values", "noval.json", jdoc(wavelength_nm=WL), None, r"missing key 'spectra'"),
    (
        "json-nan",
        "nan.json",
        '{"wavelength_nm": [380, 385, 390, 395, 400],\n "values": [1, NaN, 3, 4, 5]}',
        2,
        r"NaN is not a number",
    ),
    (
        "json-infinity",
        "inf.json",
        '{"wavelength_nm": [380, 385, 390, 395, 400], "values": [1, 2, 3, 4, -Infinity]}',
        1,
        r"-Infinity is not a number",
    ),
    (
        "json-null",
        "null.json",
        jdoc(wavelength_nm=WL, values=[1, 2, None, 4, 5, 6]),
        3,
        r"values\[2\] must be a number, got null",
    ),
    (
        "json-string",
        "str.json",
        jdoc(wavelength_nm=WL, values=[1, 2, "3", 4, 5, 6]),
        3,
        r"values\[2\] must be a number, got a string",
    ),
    (
        "json-bool",
        "bool.json",
        jdoc(wavelength_nm=[380, True, 390, 395, 400, 405], values=[1] * 6),
        2,
        r"wavelength_nm\[1\] must be a number, got a boolean",
    ),
    (
        "json-length",
        "len.json",
        jdoc(wavelength_nm=WL, values=[1, 2, 3, 4, 5]),
        3,
        r"values has 5 numbers but 'wavelength_nm' has 6",
    ),
    (
        "json-duplicate-key",
        "dk.json",
        '{"wavelength_nm": [380],\n "values": [1],\n "values": [2]}',
        3,
        r"key 'values' appears twice",
    ),
    (
        "json-spectra-not-list",
        "sl.json",
        jdoc(wavelength_nm=WL, spectra={"values": [1] * 6}),
        3,
        r"key 'spectra' must be a list of objects, got an object",
    ),
    ("json-spectra-empty", "se.json", jdoc(wavelength_nm=WL, spectra=[]), 3, r"key 'spectra' is an empty list"),
    (
        "json-entry-key",
        "ek.json",
        '{"wavelength_nm": [380],\n "spectra": [{"values": [1],\n "unit": "W/nm"}]}',
        3,
        r"unknown key 'unit' in spectra\[0\]",
    ),
    (
        "json-entry-not-object",
        "eo.json",
        jdoc(wavelength_nm=WL, spectra=[[1] * 6]),
        3,
        r"spectra\[0\] must be an object",
    ),
    (
        "json-entry-no-values",
        "ev.json",
        jdoc(wavelength_nm=WL, spectra=[{"name": "A"}]),
        3,
        r"spectra\[0\] has no key 'values'",
    ),
    (
        "json-duplicate-names",
        "dn.json",
        jdoc(wavelength_nm=WL, spectra=[{"name": "A", "values": [1] * 6}, {"name": "A", "values": [2] * 6}]),
        3,
        r"spectrum name 'A' appears twice",
    ),
    (
        "json-empty-name",
        "en.json",
        jdoc(wavelength_nm=WL, values=[1] * 6, name=" "),
        4,
        r"key 'name' must be a non-empty string",
    ),
    (
        "json-quantity-vs-unit",
        "qu.json",
        jdoc(quantity="radiance", unit="W/nm", wavelength_nm=WL, values=[1] * 6),
        2,
        r"the stated quantity 'radiance' contradicts the unit, which is one of 'radiant-flux'$",
    ),
    (
        "json-unknown-unit",
        "uu.json",
        jdoc(unit="W/(m2 parsec)", wavelength_nm=WL, values=[1] * 6),
        2,
        r"unknown unit 'W/\(m2 parsec\)'",
    ),
    (
        "json-unknown-quantity",
        "uq.json",
        jdoc(quantity="glow", wavelength_nm=WL, values=[1] * 6),
        2,
        r"unknown quantity 'glow'",
    ),
    (
        "json-huge-float",
        "hf.json",
        '{"wavelength_nm": [380, 385, 390, 395, 400], "values": [1, 2, 3, 4, 1e999]}',
        1,
        r"values\[4\] is beyond floating-point range",
    ),
    (
        "json-huge-int",
        "hi.json",
        '{"wavelength_nm": [380, 385, 390, 395, 400], "values": [1, 2, 3, 4, ' + "9" * 5000 + "]}",
        None,
        r"not valid JSON",
    ),
    ("json-deep", "deep.json", "[" * 200_000 + "]" * 200_000, None, r"JSON nested too deeply"),
    (
        "json-both-forms",
        "both.json",
        jdoc(wavelength_nm=WL, values=[1] * 6, spectra=[]),
        3,
        r"key 'values' belongs inside 'spectra'",
    ),
    (
        "json-descending-dup",
        "dd.json",
        jdoc(wavelength_nm=[405, 400, 400, 395, 390, 385], values=[1] * 6),
        None,
        r"duplicate wavelength 400 nm",
    ),
    # ---- IES TM-27 XML
    ("xml-billion-laughs", "laughs.xml", LAUGHS, None, r"XML document type declarations \(DTD\) are not allowed"),
    ("xml-external-entity", "ext.spdx", EXTERNAL, None, r"XML document type declarations \(DTD\) are not allowed"),
    ("xml-undefined-entity", "ent.xml", ENTITY_NO_DTD_HEAD, 2, r"not well-formed XML: undefined entity"),
    ("xml-truncated", "trunc.xml", tm27(GOOD_XML_DATA)[:-40], 10, r"not well-formed XML"),
    (
        "xml-wrong-root",
        "svg.xml",
        '<?xml version="1.0"?>\n<svg xmlns="http://www.w3.org/2000/svg"/>\n',
        2,
        r"not an IES TM-27 document: root element is <svg>",
    ),
    (
        "xml-no-distribution",
        "nod.xml",
        '<IESTM2714 version="1.0"><Header/></IESTM2714>',
        1,
        r"no <SpectralDistribution> element",
    ),
    ("xml-no-data", "nodata.spdx", tm27(""), 3, r"<SpectralDistribution> holds no <SpectralData> elements"),
    (
        "xml-no-wavelength",
        "nowl.xml",
        tm27(GOOD_XML_DATA + "<SpectralData>0.7</SpectralData>\n"),
        11,
        r"<SpectralData> without a 'wavelength' attribute",
    ),
    (
        "xml-text-value",
        "txt.xml",
        tm27(GOOD_XML_DATA.replace(">0.3<", ">abc<")),
        7,
        r"value at 390 nm 'abc' is not a finite number",
    ),
    (
        "xml-nan-value",
        "nan.xml",
        tm27(GOOD_XML_DATA.replace(">0.3<", ">NaN<")),
        7,
        r"value at 390 nm 'NaN' is not a finite number",
    ),
    (
        "xml-bad-wavelength",
        "bw.xml",
        tm27(GOOD_XML_DATA.replace('"390"', '"39O"')),
        7,
        r"wavelength attribute '39O' is not a finite number",
    ),
    (
        "xml-reflectance",
        "refl.xml",
        tm27(GOOD_XML_DATA, quantity="reflectance"),
        4,
        r"SpectralQuantity 'reflectance' is not a light-source quantity",
    ),
    (
        "xml-unknown-quantity",
        "uq.xml",
        tm27(GOOD_XML_DATA, quantity="sparkle"),
        4,
        r"unknown SpectralQuantity 'sparkle'",
    ),
    (
        "xml-duplicate-wavelength",
        "dup.xml",
        tm27(GOOD_XML_DATA.replace('"395"', '"390"')),
        8,
        r"duplicate wavelength 390 nm",
    ),
    ("xml-binary", "blob.spdx", b"\x1f\x8b\x08\x00\x00\x00\x00\x00\x00\x03", 1, r"not well-formed XML"),
]


def _expect(path: Path, line: int | None, reason: str) -> str:
    where = re.escape(str(path)) + (f":{line}" if line is not None else "")
    return rf"^{where}: .*{reason}" if reason.startswith("(?") else rf"^{where}: {reason}"


@pytest.mark.parametrize("case", CASES, ids=[c[0] for c in CASES])
def test_malformed_corpus(tmp_path, case):
    _, name, content, line, reason = case
    p = tmp_path / name
    p.write_bytes(content if isinstance(content, bytes) else content.encode("utf-8"))
    before = p.read_bytes()
    with pytest.raises(InputError, match=_expect(p, line, reason)) as info:
        read_spectra(p)
    assert "\n" not in str(info.value)
    assert info.value.line == line
    assert p.read_bytes() == before


# ---- wide CSV, read in chunks: (id, content, expected line or None, regex of the reason); chunk size 2
WIDE_HEAD = "name," + ",".join(str(w) for w in WL)
WIDE_ROWS = [f"r{k}," + ",".join(f"0.{k}{i}" for i in range(len(WL))) for k in range(1, 6)]


def wide(*lines: str) -> str:
    return "\n".join(lines) + "\n"


WIDE_CASES = [
    (
        "wide-unit-conflict",
        wide("# unit: W/m2/nm", "# unit: mW/m2/nm", WIDE_HEAD, *WIDE_ROWS),
        2,
        r"conflicting '# unit:' lines$",
    ),
    (
        "wide-unit-conflict-percent",
        wide("% unit: W/m2/nm", "// unit: mW/m2/nm", WIDE_HEAD, *WIDE_ROWS),
        2,
        r"conflicting '# unit:' lines$",
    ),
    (
        "wide-quantity-contradicts-unit",
        wide("# quantity: radiance", "# unit: W/m2/nm", WIDE_HEAD, *WIDE_ROWS),
        1,
        r"the stated quantity 'radiance' contradicts the unit, which is one of 'irradiance'$",
    ),
    ("wide-unknown-quantity", wide("# quantity: glow", WIDE_HEAD, *WIDE_ROWS), 1, r"unknown quantity 'glow'"),
    (
        "wide-underscore-cell",
        wide(WIDE_HEAD, *WIDE_ROWS[:3], WIDE_ROWS[3].replace("0.43", "4_3"), WIDE_ROWS[4]),
        5,
        r"expected a number, got '4_3' in value column 4$",
    ),
    (
        "wide-short-row",
        wide(WIDE_HEAD, *WIDE_ROWS[:2], "r3,0.1,0.2", *WIDE_ROWS[3:]),
        4,
        r"row has 2 values, the header has 6 wavelengths$",
    ),
    (
        "wide-empty-last-cell",
        wide(WIDE_HEAD, WIDE_ROWS[0], WIDE_ROWS[1].rsplit(",", 1)[0] + ","),
        3,
        r"empty cell in value column 6$",
    ),
    (
        "wide-na-cell",
        wide(WIDE_HEAD, WIDE_ROWS[0], WIDE_ROWS[1].replace("0.22", "n/a")),
        3,
        r"missing or non-finite value at 390 nm$",
    ),
    (
        "wide-late-directive",
        wide(WIDE_HEAD, *WIDE_ROWS[:3], "# quantity: irradiance", *WIDE_ROWS[3:]),
        5,
        r"'# quantity:' after the header; directives must come before it$",
    ),
    (
        "wide-control-char",
        wide(WIDE_HEAD, *WIDE_ROWS[:2], WIDE_ROWS[2] + "\x07", *WIDE_ROWS[3:]),
        4,
        r"binary file, not text \(control character 0x07\)$",
    ),
    ("wide-header-only", wide("# quantity: irradiance", WIDE_HEAD), 2, r"header but no data rows$"),
    (
        "wide-too-few-wavelengths",
        "name;500;510;520\nlamp A;1;2;3\n",
        1,
        r"the header names only 3 wavelengths \(500-520 nm\); a spectrum needs at least 5$",
    ),
]


@pytest.mark.parametrize("case", WIDE_CASES, ids=[c[0] for c in WIDE_CASES])
def test_malformed_wide_corpus(tmp_path, case):
    from cctkit.readers.wide import open_chunked

    _, content, line, reason = case
    p = tmp_path / "bays.csv"
    p.write_bytes(content.encode("utf-8"))
    before = p.read_bytes()
    with pytest.raises(InputError, match=_expect(p, line, reason)) as info:
        for _ in open_chunked(p, chunk_size=2).chunks():
            pass
    assert "\n" not in str(info.value)
    assert info.value.line == line
    assert p.read_bytes() == before


def test_corpus_is_large_enough():
    assert len(CASES) >= 40
    assert len({c[0] for c in CASES}) == len(CASES)


# --------------------------------------------------------------------------- files and arguments


def _plain(folder: Path, name: str = "plain.csv", text: str = GOOD) -> Path:
    p = folder / name
    p.write_text(text)
    return p


def _folder(path: Path) -> Path:
    path.mkdir()
    return path


def _fifo(path: Path) -> Path:
    os.mkfifo(path)
    return path


def _locked(folder: Path) -> Path:
    p = _plain(folder, "locked.csv")
    p.chmod(0)
    return p


_UNIT_FILE = "wavelength (nm),A (W/nm)\n" + GOOD

# (id, make(tmp_path) -> (path to read, the file whose bytes must not change, or None), read_spectra keywords,
#  expected line, regex of the reason)
FILE_CASES = [
    ("missing-file", lambda t: (t / "absent.csv", None), {}, None, r"file not found$"),
    (
        "path-through-a-file",
        lambda t: (_plain(t) / "inner.csv", t / "plain.csv"),
        {},
        None,
        r"file not found \(a part of the path is not a folder\)$",
    ),
    ("directory", lambda t: (_folder(t / "folder.csv"), None), {}, None, r"is a folder, not a file$"),
    (
        "over-max-bytes",
        lambda t: (_plain(t, "big.csv"),) * 2,
        {"max_bytes": 20},
        None,
        rf"file is {len(GOOD)} bytes, over the limit of 20 bytes$",
    ),
    (
        "max-bytes-zero",
        lambda t: (_plain(t, "big.csv"),) * 2,
        {"max_bytes": 0},
        None,
        r"max_bytes must be a positive number of bytes, got 0$",
    ),
    pytest.param(
        (
            "named-pipe",
            lambda t: (_fifo(t / "pipe.csv"), None),
            {},
            None,
            r"is not a regular file \(device, pipe or socket\)$",
        ),
        marks=pytest.mark.skipif(not hasattr(os, "mkfifo"), reason="needs named pipes"),
    ),
    pytest.param(
        ("permission-denied", lambda t: (_locked(t), None), {}, None, r"permission denied$"),
        marks=pytest.mark.skipif(
            hasattr(os, "geteuid") and os.geteuid() == 0, reason="root reads files whatever their mode"
        ),
    ),
    (
        "unknown-quantity-argument",
        lambda t: (_plain(t, "q.csv", _UNIT_FILE),) * 2,
        {"quantity": "lumens"},
        None,
        r"unknown quantity 'lumens'",
    ),
    (
        "quantity-argument-conflict",
        lambda t: (_plain(t, "q.csv", _UNIT_FILE),) * 2,
        {"quantity": "irradiance"},
        None,
        r"the file states quantity 'radiant-flux' but 'irradiance' was asked for$",
    ),
]


@pytest.mark.parametrize("case", FILE_CASES, ids=[(c.values[0] if hasattr(c, "values") else c)[0] for c in FILE_CASES])
def test_file_and_argument_problems(tmp_path, case):
    _, make, kwargs, line, reason = case
    path, watched = make(tmp_path)
    before = watched.read_bytes() if watched is not None else None
    try:
        with pytest.raises(InputError, match=_expect(path, line, reason)) as info:
            read_spectra(path, **kwargs)
    finally:
        for q in tmp_path.iterdir():
            if q.is_file():
                q.chmod(0o644)
    assert "\n" not in str(info.value)
    assert info.value.line == line
    if watched is not None:
        assert watched.read_bytes() == before


def test_path_of_the_wrong_type():
    from cctkit.readers.wide import open_chunked

    for read in (read_spectra, open_chunked):
        with pytest.raises(InputError, match=r"^path: expected a file path, got int$") as info:
            read(3)
        assert info.value.line is None


# --------------------------------------------------------------------------- the command line

CLI_CASES = [
    "empty",
    "nan-cell",
    "ragged-long",
    "header-in-middle",
    "duplicate-wavelength",
    "unknown-unit",
    "binary-png",
    "json-syntax",
    "json-unknown-key",
    "json-nan",
    "xml-billion-laughs",
    "xml-wrong-root",
    "xml-text-value",
]


@pytest.mark.parametrize("case_id", CLI_CASES)
def test_cli_inspect_reports_one_line(tmp_path, case_id):
    from typer.testing import CliRunner

    from cctkit.cli import app

    _, name, content, line, reason = next(c for c in CASES if c[0] == case_id)
    p = tmp_path / name
    p.write_bytes(content if isinstance(content, bytes) else content.encode("utf-8"))
    before = p.read_bytes()
    result = CliRunner().invoke(app, ["inspect", str(p)])
    assert result.exit_code == 2
    err = result.stderr
    assert "Traceback" not in err and "Traceback" not in result.output
    lines = err.splitlines()
    assert len(lines) == 1, err
    assert name in lines[0]
    assert re.search(_expect(p, line, reason)[1:], lines[0])
    assert result.stdout == ""
    assert p.read_bytes() == before
