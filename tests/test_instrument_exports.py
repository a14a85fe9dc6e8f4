"""Measurements as labs deliver them: exports with notes above the table, trailers below, units in headers.

Every layout here is invented for these tests (the kinds of things bench software
writes: key/value blocks, sections, decimal commas, other encodings, descending
or micrometre axes).  Each must give exactly the numbers of the same data written
as a plain CSV, and its notes must come back as metadata in ``inspect --json``.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from typer.testing import CliRunner

from cctkit.cli import app
from cctkit.errors import InputError
from cctkit.readers import TableLayout, read_spectra
from cctkit.spectra import Quantity

runner = CliRunner()

WL = np.arange(380, 781, 5)
# Two invented lamp spectra, written with 6 significant digits (so every layout writes the same text).
_A = 0.8 * np.exp(-0.5 * ((WL - 452) / 11.0) ** 2) + 0.55 * np.exp(-0.5 * ((WL - 590) / 60.0) ** 2) + 0.002
_B = 0.3 * np.exp(-0.5 * ((WL - 445) / 10.0) ** 2) + 0.7 * np.exp(-0.5 * ((WL - 610) / 55.0) ** 2) + 0.001
A_TEXT = [f"{v:.6g}" for v in _A]
B_TEXT = [f"{v:.6g}" for v in _B]
A = np.array([float(t) for t in A_TEXT])
B = np.array([float(t) for t in B_TEXT])


def run(*args):
    return runner.invoke(app, [str(a) for a in args])


def body(sep: str, *, comma: bool = False, two: bool = False, wl=None) -> str:
    """Data rows: wavelength then A (and B), ``sep``-separated, decimal commas if ``comma``."""
    wl_text = [f"{w:g}" for w in WL] if wl is None else wl
    rows = []
    for i, w in enumerate(wl_text):
        cells = [w, A_TEXT[i]] + ([B_TEXT[i]] if two else [])
        if comma:
            cells = [c.replace(".", ",") for c in cells]
        rows.append(sep.join(cells))
    return "\n".join(rows) + "\n"


# (id, file name, bytes, unit of the values as a plain CSV would state it, two spectra?, names,
#  metadata keys that must come back)
LAYOUTS = [
    (
        "colon-block-decimal-comma",
        "bench.txt",
        (
            "Quay Optics bench export\nInstrument: QX-400 spectroradiometer\nSerial: 0417\nDate: 2026-11-30 14:22\n"
            "Operator: R. Amadi\nIntegration time: 100 ms\n\nWavelength (nm);Irradiance [µW/cm²/nm]\n"
            + body(";", comma=True)
            + "End of data\n"
        ).encode(),
        "µW/cm²/nm",
        False,
        ("bench",),
        ["Instrument", "Serial", "Date", "Operator", "Integration time", "(text 1)"],
    ),
    (
        "tab-key-value",
        "run7.tsv",
        ("Lamp current\t350 mA\nAverages\t5\nwavelength\tlamp\n" + body("\t")).encode(),
        None,
        False,
        ("lamp",),
        ["Lamp current", "Averages"],
    ),
    (
        "semicolon-key-value-latin1",
        "messung.csv",
        (
            "Gerät;Hafenmesser 2\nSeriennummer;HM2-0099\nWellenlänge [nm];Bestrahlungsstärke [mW/m²/nm]\n"
            + body(";", comma=True)
        ).encode("latin-1"),
        "mW/m²/nm",
        False,
        ("messung",),
        ["Gerät", "Seriennummer"],
    ),
    (
        "comma-key-value",
        "pier.csv",
        ("Key,Value\nOperator,Ines\nDate,2026-12-01\n\nwl_nm,relative\n" + body(",")).encode(),
        None,
        False,
        ("pier",),
        ["Key", "Operator", "Date"],
    ),
    (
        "sections",
        "hall.dat",
        (
            "[Header]\nModel=LanternSpec 7\nSerial=77-A\n[Settings]\nExposure=250 ms\n[Data]\nnm\tcounts\n" + body("\t")
        ).encode(),
        None,
        False,
        ("hall",),
        ["[Header]", "Model", "Serial", "[Settings]", "Exposure", "[Data]"],
    ),
    (
        "semicolon-comments",
        "survey.csv",
        (";Harbourside lantern hall survey\n;operator: Wen\nWavelength;Lamp 4\n" + body(";")).encode(),
        None,
        False,
        ("Lamp 4",),
        ["(text 1)", "operator"],
    ),
    (
        "trailer-block",
        "tail.csv",
        ("wavelength (nm),gate lamp (W/nm)\n" + body(",") + "End of data\nChecksum: 51a0\n").encode(),
        "W/nm",
        False,
        ("gate lamp",),
        ["(text 1)", "Checksum"],
    ),
    (
        "descending-micrometres",
        "scan_um.csv",
        (
            "Scan direction: red to blue\nwavelength_um,flux_mW_per_nm\n"
            + "\n".join(f"{w / 1000:.3f},{a}" for w, a in zip(WL[::-1], A_TEXT[::-1]))
            + "\n"
        ).encode(),
        "mW/nm",
        False,
        ("scan_um",),
        ["Scan direction"],
    ),  # 'flux' only states the quantity
    (
        "angstrom-white-space",
        "uvvis.prn",
        (
            "Radiance survey, lantern 9\nWavelength [Å]   Radiance [W/(sr·m²·nm)]\n"
            + body("   ", wl=[f"{w * 10:g}" for w in WL])
        ).encode(),
        "W/(sr m2 nm)",
        False,
        ("uvvis",),
        ["Radiance survey"],
    ),
    (
        "two-line-header",
        "pair.csv",
        ("Site: north quay\nWavelength;Lamp A;Lamp B\nnm;W/nm;W/nm\n" + body(";", two=True)).encode(),
        "W/nm",
        True,
        ("Lamp A", "Lamp B"),
        ["Site"],
    ),
    (
        "tab-decimal-comma-symbols",
        "probe.txt",
        ("Messung vom 01.12.2026\nGerät:\tSpektro 5\nλ / nm\tE / (W m-2 nm-1)\n" + body("\t", comma=True)).encode(),
        "W/(m2 nm)",
        False,
        ("E",),
        ["(text 1)", "Gerät"],
    ),
    (
        "quoted-cells",
        "fixture.csv",
        (
            '"Report","Quayside fixture"\n"Operator","M. Lind"\n"Wavelength (nm)","Fixture 12 (W/m2/nm)"\n'
            + "".join(f'"{w:g}","{a}"\n' for w, a in zip(WL, A_TEXT))
        ).encode(),
        "W/m2/nm",
        False,
        ("Fixture 12",),
        ["Report", "Operator"],
    ),
    (
        "words-for-units",
        "words.csv",
        (
            "Spectral irradiance of the entrance lantern\nWavelength (nanometres),Spectral irradiance "
            "(watts per square metre per nanometre)\n" + body(",")
        ).encode(),
        "W/m2/nm",
        False,
        ("words",),
        ["(text 1)"],
    ),
    (
        "three-scans",
        "scans.tsv",
        ("Integration time: 20 ms\nScans: 3\nwavelength (nm)\tscan 1\tscan 2\n" + body("\t", two=True)).encode(),
        None,
        True,
        ("scan 1", "scan 2"),
        ["Integration time", "Scans"],
    ),
    (
        "utf16-export",
        "u16.txt",
        ("Instrument\tPocket meter\nDate\t2026-12-02\nWavelength [nm]\tIrradiance [W/m^2/nm]\n" + body("\t")).encode(
            "utf-16"
        ),
        "W/m^2/nm",
        False,
        ("u16",),
        ["Instrument", "Date"],
    ),
    (
        "crlf-stars-trailer",
        "crlf.csv",
        (
            "Spectrum export v3\r\nSample: Lantern L-3\r\nWavelength,Power (uW/nm)\r\n"
            + body(",").replace("\n", "\r\n")
            + "*** end ***\r\nSum: 12.5\r\n"
        ).encode(),
        "uW/nm",
        False,
        ("crlf",),
        ["(text 1)", "Sample", "(text 2)", "Sum"],
    ),
    (
        "percent-relative",
        "rel.csv",
        ("Title: relative output\nWavelength [nm],Relative [%]\n" + body(",")).encode(),
        None,
        False,
        ("rel",),
        ["Title"],
    ),
    (
        "hash-comment-keys",
        "hash.csv",
        ("# Instrument: Beacon rig\n# Serial: BR-1\nwavelength,lamp (W/nm)\n" + body(",")).encode(),
        "W/nm",
        False,
        ("lamp",),
        ["Instrument", "Serial"],
    ),
]


def plain_csv(folder: Path, unit: str | None, two: bool) -> Path:
    """The same data as a plain CSV: a header with the unit, then the rows."""
    u = f" ({unit})" if unit else ""
    head = f"wavelength (nm),A{u}" + (f",B{u}" if two else "")
    p = folder / ("plain2.csv" if two else "plain.csv")
    p.write_text(head + "\n" + body(",", two=two))
    return p


@pytest.mark.parametrize("case", LAYOUTS, ids=[c[0] for c in LAYOUTS])
def test_export_layout_gives_the_plain_csv_numbers(tmp_path, case):
    _, name, data, unit, two, names, keys = case
    p = tmp_path / name
    p.write_bytes(data)
    s = read_spectra(p)
    ref = read_spectra(plain_csv(tmp_path, unit, two))
    assert s.names == names
    assert s.quantity is ref.quantity
    np.testing.assert_array_equal(s.wavelength_nm, ref.wavelength_nm)
    np.testing.assert_array_equal(s.values, ref.values)  # exactly: same text, same unit
    got = s.metadata_of(0)
    for key in keys:
        assert key in got, (key, got)
    r = run("inspect", p, "--json")
    assert r.exit_code == 0, r.stderr
    doc = json.loads(r.stdout)
    assert list(doc["spectra"][0]["metadata"]) == list(got)


def test_corpus_has_at_least_fifteen_layouts():
    assert len({c[0] for c in LAYOUTS}) >= 15


def test_metadata_values_as_found(tmp_path):
    p = tmp_path / "bench.txt"
    p.write_bytes(LAYOUTS[0][2])
    meta = read_spectra(p).metadata_of(0)
    assert meta["Date"] == "2026-11-30 14:22"  # the time's colon stays in the value
    assert meta["Integration time"] == "100 ms"
    assert meta["(text 1)"] == "Quay Optics bench export"
    assert meta["(text 2)"] == "End of data"  # the trailer is kept too


def test_descending_axis_is_sorted_and_flagged(tmp_path):
    p = tmp_path / "scan_um.csv"
    p.write_bytes(dict((c[0], c[2]) for c in LAYOUTS)["descending-micrometres"])
    s = read_spectra(p)
    assert [f.code for f in s.flags[0]].count("wavelength-descending") == 1


# --------------------------------------------------------------------------- overrides


def test_layout_overrides(tmp_path):
    p = tmp_path / "indexed.csv"
    p.write_text(
        "Index,Wavelength (nm),Lamp (W/nm),Dark (W/nm)\n"
        + "".join(f"{i + 1},{w:g},{a},0.0\n" for i, (w, a) in enumerate(zip(WL, A_TEXT)))
    )
    # the index column is monotonic too: without help it would be taken as the axis
    s = read_spectra(p, layout=TableLayout.from_options(wavelength_column=2, columns="3"))
    np.testing.assert_array_equal(s.wavelength_nm, WL)
    np.testing.assert_array_equal(s.values[0], A)
    assert s.names == ("Lamp",) and s.quantity is Quantity.RADIANT_FLUX
    r = run("inspect", p, "--wavelength-column", 2, "--columns", "3", "--json")
    assert r.exit_code == 0, r.stderr
    assert json.loads(r.stdout)["spectra"][0]["name"] == "Lamp"


def test_skip_rows_delimiter_decimal(tmp_path):
    p = tmp_path / "odd.txt"
    # two numeric notes above the table would be a rival table; --skip-rows takes them as notes
    p.write_text("1;2\n3;4\n5;6\nwavelength;lamp\n" + body(";", comma=True))
    with pytest.raises(InputError, match=r"two tables of numbers, lines 1-3 and lines 5-85"):
        read_spectra(p)
    s = read_spectra(p, layout=TableLayout(skip_rows=3, delimiter=";", decimal=","))
    np.testing.assert_array_equal(s.values[0], A)
    assert s.metadata_of(0) == {"(text 1)": "1;2", "(text 2)": "3;4", "(text 3)": "5;6"}


@pytest.mark.parametrize(
    "args, message",
    [
        (("--delimiter", "|"), r"--delimiter must be one of tab"),
        (("--decimal", ";"), r"--decimal must be '\.' or ','"),
        (("--columns", "2-x"), r"--columns must be numbers"),
        (("--wavelength-column", "0"), r"--wavelength-column must be a column number >= 1"),
        (("--columns", "9"), r"--columns names column 9 but the table has 2 columns"),
    ],
)
def test_bad_layout_options(tmp_path, args, message):
    p = tmp_path / "a.csv"
    p.write_text("wavelength,lamp\n" + body(","))
    r = run("inspect", p, *args)
    assert r.exit_code == 2
    assert len(r.stderr.strip().splitlines()) == 1
    import re

    assert re.search(message, r.stderr), r.stderr


# --------------------------------------------------------------------------- ambiguous files


@pytest.mark.parametrize(
    "text, lines",
    [
        ("lamp A\nwavelength,A\n" + body(",") + "lamp B\nwavelength,B\n" + body(","), "lines 3-83 and lines 86-166"),
        ("Operator: Kit\nwavelength;lamp\nEnd of data\n", "ambiguous-none"),
        ("Notes\n" + "".join(f"{w},{v}\n" for v, w in zip(A_TEXT, [500, 450, 620, 410, 700, 420])), "out of order"),
    ],
)
def test_ambiguous_files_exit_2_with_lines(tmp_path, text, lines):
    p = tmp_path / "amb.csv"
    p.write_text(text)
    r = run("inspect", p)
    assert r.exit_code == 2
    err = r.stderr.strip()
    assert err.startswith(f"cctkit: {p}:") and "\n" not in err
    if lines == "ambiguous-none":
        assert f"{p}:2: header but no data rows" in err
    elif lines == "out of order":
        assert f"{p}:4: wavelengths out of order: 620 nm follows 450 nm" in err
    else:
        assert f"two tables of numbers, {lines}" in err


# --------------------------------------------------------------------------- units in headers


@pytest.mark.parametrize(
    "header, quantity, factor",
    [
        ("E [uW/cm2/nm]", Quantity.IRRADIANCE, 1e-2),  # unit arithmetic, SI
        ("E (microW per cm^2 per nm)", Quantity.IRRADIANCE, 1e-2),
        ("E [W·m⁻²·nm⁻¹]", Quantity.IRRADIANCE, 1.0),
        ("E / mW m-2 nm-1", Quantity.IRRADIANCE, 1e-3),
        ("L (W/(sr m2 nm))", Quantity.RADIANCE, 1.0),
        ("I [mW/(sr nm)]", Quantity.INTENSITY, 1e-3),
        ("P_uW_per_nm", Quantity.RADIANT_FLUX, 1e-6),
    ],
)
def test_units_in_headers(tmp_path, header, quantity, factor):
    p = tmp_path / "u.csv"
    p.write_text(f"wavelength (nm),{header}\n" + body(","))
    s = read_spectra(p)
    assert s.quantity is quantity
    np.testing.assert_allclose(s.values[0], A * factor, rtol=1e-15)


@pytest.mark.parametrize("header, shown", [("lamp [cd]", "cd"), ("lamp (lx)", "lx"), ("lamp [W/m2]", "W/m2")])
def test_non_spectral_unit_is_an_error_naming_the_header(tmp_path, header, shown):
    p = tmp_path / "u.csv"
    p.write_text(f"wavelength (nm),{header}\n" + body(","))
    with pytest.raises(InputError) as info:
        read_spectra(p)
    msg = str(info.value)
    assert msg.startswith(f"{p}:1: ") and repr(shown) in msg and repr(header) in msg
    assert "W/nm" in msg  # the units understood


def test_quantity_only_headers_do_not_name_spectra(tmp_path):
    p = tmp_path / "lot 4.csv"
    p.write_text("Wavelength [nm];Irradiance [W/m2/nm];Irradiance [W/m2/nm]\n" + body(";", two=True))
    assert read_spectra(p).names == ("lot 4#2", "lot 4#3")


# --------------------------------------------------------------------------- property: notes never change numbers

META_LINES = st.one_of(
    st.sampled_from(
        [
            "Date: 2026-12-01 10:05",
            "Gain;2",
            "[Data]",
            "Operator,Ana",
            "Exposure\t20 ms",
            "End of data",
            "1;2",
            "380,0.5",
            "12.5",
            "***",
            "Lamp current = 350 mA",
            "wavelength,lamp",
            ";comment",
            "",
        ]
    ),
    st.text(st.characters(blacklist_categories=("Cc", "Cs", "Zl", "Zp")), max_size=30),
)


@settings(
    max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture]
)
@given(
    above=st.lists(META_LINES, max_size=6),
    below=st.lists(META_LINES, max_size=4),
    sep=st.sampled_from([",", ";", "\t"]),
)
def test_notes_above_and_below_never_change_the_numbers(tmp_path, above, below, sep):
    comma = sep != ","
    table = f"wavelength (nm){sep}lamp\n" + body(sep, comma=comma)
    p = tmp_path / "noted.csv"
    p.write_text("\n".join(above) + ("\n" if above else "") + table + "\n".join(below) + "\n", encoding="utf-8")
    try:
        s = read_spectra(p)
    except InputError as exc:
        assert str(exc).startswith(str(p)) and "\n" not in str(exc)
        return
    np.testing.assert_array_equal(s.wavelength_nm, WL)
    np.testing.assert_array_equal(s.values, A[np.newaxis, :])
