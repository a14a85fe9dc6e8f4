"""Readers: every format and variant, unit conversion by hand arithmetic, provenance."""

from __future__ import annotations

import codecs
import json
from pathlib import Path

import numpy as np
import pytest

from cctkit.constants import WAVELENGTH_NM
from cctkit.errors import InputError
from cctkit.readers import parse_length_unit, parse_spectral_unit, read_spectra
from cctkit.spectra import Quantity, sha256_of_file, to_working_grid

DATA = Path(__file__).parent / "data"
WL = [380.0, 385.0, 390.0, 395.0, 400.0, 405.0]
VA = [0.10, 0.20, 0.35, 0.50, 0.45, 0.30]
VB = [1.0, 2.0, 3.0, 4.0, 5.0, 6.0]


def write(tmp_path: Path, name: str, text: str | bytes, encoding: str = "utf-8") -> Path:
    p = tmp_path / name
    p.write_bytes(text if isinstance(text, bytes) else text.encode(encoding))
    return p


def table(
    sep: str = ",",
    header: str | list[str] | None = "wavelength (nm),A,B",
    decimal: str = ".",
    *,
    columns: tuple = (VA, VB),
    wl: list[float] = WL,
    quote: tuple[int, ...] = (),
) -> str:
    """Delimited text: a header, then one row per wavelength of ``wl`` and one value column per ``columns``.

    A header string has its commas replaced by ``sep``; a list of cells is joined by ``sep`` as given.
    Data cells whose 0-based column is in ``quote`` are written in double quotes.
    """
    if header is None:
        rows = []
    elif isinstance(header, str):
        rows = [header.replace(",", sep)]
    else:
        rows = [sep.join(header)]
    for w, *vals in zip(wl, *columns):
        cells = [f"{c:g}".replace(".", decimal) for c in (w, *vals)]
        rows.append(sep.join(f'"{c}"' if i in quote else c for i, c in enumerate(cells)))
    return "\n".join(rows) + "\n"


# --------------------------------------------------------------------------- delimited


@pytest.mark.parametrize(
    "name, text",
    [
        ("comma.csv", table(",")),
        ("tab.tsv", table("\t")),
        ("semi.csv", table(";")),
        ("space.txt", table(" ", header="wavelength A B")),
        ("multispace.dat", table("   ", header="wavelength   A   B")),
        ("semi_decimal_comma.csv", table(";", decimal=",")),
        ("tab_decimal_comma.tsv", table("\t", decimal=",")),
        ("space_decimal_comma.txt", table(" ", header="wavelength A B", decimal=",")),
        ("crlf.csv", table(",").replace("\n", "\r\n")),
        ("cr.csv", table(",").replace("\n", "\r")),
        ("comments.csv", "# bench 3\n// operator: K. Ostrand\n% run 12\n\n" + table(",").replace("\n", "\n\n", 2)),
        ("trailing_sep.csv", table(",").replace("\n", ",\n")),
        ("separator_only_lines.csv", table(",") + ",,\n;;\n"),
        ("spaced_cells.csv", table(", ")),
    ],
)
def test_delimited_variants_read_the_same_numbers(tmp_path, name, text):
    s = read_spectra(write(tmp_path, name, text))
    assert s.names == ("A", "B")
    np.testing.assert_array_equal(s.wavelength_nm, WL)
    np.testing.assert_allclose(s.values, [VA, VB], rtol=0, atol=1e-15)
    assert s.quantity is Quantity.RELATIVE


@pytest.mark.parametrize(
    "encoding, bom",
    [
        ("utf-8", b""),
        ("utf-8", codecs.BOM_UTF8),
        ("utf-16-le", codecs.BOM_UTF16_LE),
        ("utf-16-be", codecs.BOM_UTF16_BE),
        ("utf-16-le", b""),
        ("utf-32-le", codecs.BOM_UTF32_LE),
    ],
)
def test_text_encodings(tmp_path, encoding, bom):
    text = table(",", header="wavelength (µm),Ä lamp (µW/cm²/nm),B (µW/cm²/nm)")
    text = text.replace("380,", "0.380,").replace("385,", "0.385,").replace("390,", "0.390,")
    text = text.replace("395,", "0.395,").replace("400,", "0.400,").replace("405,", "0.405,")
    s = read_spectra(write(tmp_path, "enc.csv", bom + text.encode(encoding)))
    assert s.names == ("Ä lamp", "B")
    np.testing.assert_allclose(s.wavelength_nm, WL, rtol=0, atol=1e-9)
    # 1 µW/cm²/nm = 1e-6 W / (1e-4 m² · 1 nm) = 0.01 W/(m² nm)  # unit arithmetic, SI
    np.testing.assert_allclose(s.values, np.array([VA, VB]) * 0.01, rtol=1e-12)
    assert s.quantity is Quantity.IRRADIANCE


def test_latin1_file_is_read_and_flagged(tmp_path):
    text = table(",", header="wavelength (nm),A (µW/cm²/nm),B (µW/cm²/nm)")
    s = read_spectra(write(tmp_path, "latin.csv", text, encoding="latin-1"))
    assert s.quantity is Quantity.IRRADIANCE
    np.testing.assert_allclose(s.values[1], np.array(VB) * 0.01)  # unit arithmetic, SI
    assert "text-encoding" in [f.code for f in s.flags[0]]


@pytest.mark.parametrize(
    "unit, quantity, factor",
    [
        # each factor is unit arithmetic, SI: prefix powers over the base unit
        ("W/m2/nm", Quantity.IRRADIANCE, 1.0),
        ("W/(m^2 nm)", Quantity.IRRADIANCE, 1.0),
        ("W m-2 nm-1", Quantity.IRRADIANCE, 1.0),
        ("W·m⁻²·nm⁻¹", Quantity.IRRADIANCE, 1.0),
        ("W.m-2.nm-1", Quantity.IRRADIANCE, 1.0),
        ("mW/m²/nm", Quantity.IRRADIANCE, 1e-3),
        ("µW/cm²/nm", Quantity.IRRADIANCE, 1e-2),  # 1e-6 / 1e-4
        ("uW/cm2/nm", Quantity.IRRADIANCE, 1e-2),
        ("μW/cm2/nm", Quantity.IRRADIANCE, 1e-2),  # Greek mu, U+03BC
        ("W/m3", Quantity.IRRADIANCE, 1e-9),  # per metre of wavelength
        ("W/m2/um", Quantity.IRRADIANCE, 1e-3),  # per µm = per 1000 nm
        ("W/nm", Quantity.RADIANT_FLUX, 1.0),
        ("mW/nm", Quantity.RADIANT_FLUX, 1e-3),
        ("uW/nm", Quantity.RADIANT_FLUX, 1e-6),
        ("W/sr/m2/nm", Quantity.RADIANCE, 1.0),
        ("W/(sr m2 nm)", Quantity.RADIANCE, 1.0),
        ("mW/(sr m² nm)", Quantity.RADIANCE, 1e-3),
        ("W/sr/nm", Quantity.INTENSITY, 1.0),
        ("mW/(sr nm)", Quantity.INTENSITY, 1e-3),
        ("a.u.", Quantity.RELATIVE, 1.0),
        ("counts", Quantity.RELATIVE, 1.0),
        ("%", Quantity.RELATIVE, 1.0),
    ],
)
def test_spectral_units(unit, quantity, factor):
    q, f = parse_spectral_unit(unit, source="x")
    assert q is quantity
    assert f == pytest.approx(factor, rel=1e-12)


@pytest.mark.parametrize("unit, factor", [("nm", 1.0), ("um", 1000.0), ("µm", 1000.0), ("Å", 0.1), ("mm", 1e6)])
def test_length_units(unit, factor):
    assert parse_length_unit(unit, source="x") == pytest.approx(factor, rel=1e-12)  # unit arithmetic, SI


def test_unit_conversion_applied_per_column(tmp_path):
    text = table(";", header="wavelength [nm];A [mW/nm];B [W/nm]")
    s = read_spectra(write(tmp_path, "flux.csv", text))
    assert s.quantity is Quantity.RADIANT_FLUX
    np.testing.assert_allclose(s.values[0], np.array(VA) * 1e-3, rtol=1e-12)  # mW -> W, unit arithmetic, SI
    np.testing.assert_allclose(s.values[1], VB, rtol=1e-12)


def test_unit_after_slash_and_after_space(tmp_path):
    text = table(header="λ / nm,E / (W m-2 nm-1)", columns=(VA,))
    s = read_spectra(write(tmp_path, "slash.csv", text))
    assert s.quantity is Quantity.IRRADIANCE and s.names == ("E",)
    text = table(header="wavelength nm,lamp W/m2/nm", columns=(VA,))
    s = read_spectra(write(tmp_path, "space_unit.csv", text))
    assert s.quantity is Quantity.IRRADIANCE and s.names == ("lamp",)


def test_whitespace_header_with_bracketed_units(tmp_path):
    text = table("  ", header="wavelength (nm)  north lamp (mW/m2/nm)", columns=(VA,))
    with pytest.raises(InputError, match="header has"):
        # 'north lamp' has a space in a space-separated file: ambiguous, refused
        read_spectra(write(tmp_path, "ambiguous.txt", text))
    text = table("  ", header="wavelength (nm)  north_lamp (mW/m2/nm)", columns=(VA,))
    s = read_spectra(write(tmp_path, "ws.txt", text))
    assert s.names == ("north_lamp",)
    np.testing.assert_allclose(s.values[0], np.array(VA) * 1e-3)  # unit arithmetic, SI


def test_bracket_text_that_is_not_a_unit_stays_in_the_name(tmp_path):
    text = table(header="wavelength,lamp (2700 K),lamp (4000 K)")
    s = read_spectra(write(tmp_path, "names.csv", text))
    assert s.names == ("lamp (2700 K)", "lamp (4000 K)")
    assert s.quantity is Quantity.RELATIVE


def test_descending_rows_are_reversed_and_flagged(tmp_path):
    text = table(header="wavelength,A", wl=WL[::-1], columns=(VA[::-1],))
    s = read_spectra(write(tmp_path, "desc.csv", text))
    np.testing.assert_array_equal(s.wavelength_nm, WL)
    np.testing.assert_array_equal(s.values[0], VA)
    assert "wavelength-descending" in [f.code for f in s.flags[0]]


def test_headerless_files_are_named_after_the_file(tmp_path):
    headerless = table(header=None, columns=(VA,)).rstrip("\n")  # and no line end after the last row
    one = read_spectra(write(tmp_path, "bench_lamp.csv", headerless))
    assert one.names == ("bench_lamp",)
    assert one.sources == (str(tmp_path / "bench_lamp.csv"),)
    two = read_spectra(write(tmp_path, "pair.csv", table(",", header=None)))
    assert two.names == ("pair#2", "pair#3")
    assert two.sources == (f"{tmp_path / 'pair.csv'}#2", f"{tmp_path / 'pair.csv'}#3")


def test_single_generic_header_uses_the_file_stem(tmp_path):
    text = table(header="wavelength (nm),irradiance (W/m2/nm)", columns=(VA,))
    s = read_spectra(write(tmp_path, "dock7.csv", text))
    assert s.names == ("dock7",)
    assert s.quantity is Quantity.IRRADIANCE


def test_quoted_cells(tmp_path):
    text = table(header=['"wavelength (nm)"', '"lamp, north (W/nm)"', '"lamp south (W/nm)"'], quote=(0, 1))
    s = read_spectra(write(tmp_path, "quoted.csv", text))
    assert s.names == ("lamp, north", "lamp south")
    assert s.quantity is Quantity.RADIANT_FLUX
    np.testing.assert_array_equal(s.values, [VA, VB])
    text = table(";", header=['"wavelength"', '"A"'], decimal=",", columns=(VA,), quote=(1,))
    s = read_spectra(write(tmp_path, "quoted_semi.csv", text))
    np.testing.assert_allclose(s.values[0], VA, rtol=0, atol=1e-15)


def test_empty_first_header_cell(tmp_path):
    s = read_spectra(write(tmp_path, "blankcorner.csv", table(",", header=",A,B")))
    assert s.names == ("A", "B")


def test_fixture_file_provenance_and_values():
    path = DATA / "harbour_lamps.csv"
    s = read_spectra(path)
    assert s.names == ("pier lamp", "quay lamp")
    assert s.quantity is Quantity.IRRADIANCE
    assert s.sources == (f"{path}#pier lamp", f"{path}#quay lamp")
    assert s.sha256 == (sha256_of_file(path),) * 2
    np.testing.assert_allclose(s.values[0], [1.2e-3, 2.4e-3, 3.1e-3, 4.0e-3, 5.25e-3, 6.5e-3])  # mW -> W
    # kept as measured: no resampling
    np.testing.assert_array_equal(s.wavelength_nm, [380, 390, 400, 410, 420, 430])
    assert not s.on_working_grid
    assert to_working_grid(s).values.shape == (2, WAVELENGTH_NM.size)  # 360-830 nm at 1 nm: 471 points


def test_several_hundred_columns(tmp_path):
    rng = np.random.default_rng(7)
    wl = np.arange(360, 831, 1.0)
    vals = rng.uniform(0, 2, size=(300, wl.size))
    header = "wavelength," + ",".join(f"s{i:03d}" for i in range(300))
    rows = [header] + [f"{w:g}," + ",".join(repr(float(v)) for v in vals[:, j]) for j, w in enumerate(wl)]
    s = read_spectra(write(tmp_path, "many.csv", "\n".join(rows)))
    assert len(s) == 300 and s.names[299] == "s299"
    assert s.on_working_grid
    np.testing.assert_array_equal(s.values, vals)  # repr round-trips exactly


def test_quantity_argument_and_file_quantity(tmp_path):
    plain = write(tmp_path, "plain.csv", table(","))
    assert read_spectra(plain, quantity="irradiance").quantity is Quantity.IRRADIANCE
    assert read_spectra(plain, quantity=Quantity.RADIANCE).quantity is Quantity.RADIANCE
    stated = DATA / "harbour_lamps.csv"
    assert read_spectra(stated, quantity="irradiance").quantity is Quantity.IRRADIANCE
    with pytest.raises(InputError, match=r"harbour_lamps\.csv: the file states quantity 'irradiance' but 'radiance'"):
        read_spectra(stated, quantity="radiance")


def test_directives(tmp_path):
    text = "# quantity: radiant flux\n# unit: mW/nm\n" + table(",")
    s = read_spectra(write(tmp_path, "dir.csv", text))
    assert s.quantity is Quantity.RADIANT_FLUX
    np.testing.assert_allclose(s.values[1], np.array(VB) * 1e-3)  # unit arithmetic, SI


# --------------------------------------------------------------------------- JSON


def test_json_full_schema(tmp_path):
    doc = {
        "quantity": "irradiance",
        "unit": "mW/(m2 nm)",
        "comment": "quay survey, synthetic",
        "wavelength_nm": WL,
        "spectra": [{"name": "quay A", "values": VA}, {"name": "quay B", "values": VB, "comment": "x"}],
    }
    p = write(tmp_path, "survey.json", json.dumps(doc, indent=1))
    s = read_spectra(p)
    assert s.names == ("quay A", "quay B")
    assert s.quantity is Quantity.IRRADIANCE
    assert s.sources == (f"{p}#quay A", f"{p}#quay B")
    np.testing.assert_allclose(s.values, np.array([VA, VB]) * 1e-3)  # unit arithmetic, SI
    assert s.sha256[0] == sha256_of_file(p)


def test_json_shorthand_and_defaults(tmp_path):
    p = write(tmp_path, "lone.json", json.dumps({"wavelength_nm": WL[::-1], "values": VA[::-1]}))
    s = read_spectra(p)
    assert s.names == ("lone",) and s.quantity is Quantity.RELATIVE and s.sources == (str(p),)
    np.testing.assert_array_equal(s.values[0], VA)
    assert "wavelength-descending" in [f.code for f in s.flags[0]]
    s = read_spectra(write(tmp_path, "u.json", json.dumps({"unit": "W/sr/nm", "wavelength_nm": WL, "values": VB})))
    assert s.quantity is Quantity.INTENSITY
    s = read_spectra(
        write(tmp_path, "anon.json", json.dumps({"wavelength_nm": WL, "spectra": [{"values": VA}, {"values": VB}]}))
    )
    assert s.names == ("anon#1", "anon#2")


def test_json_with_bom_and_utf16(tmp_path):
    text = json.dumps({"name": "Ørsted pier", "wavelength_nm": WL, "values": VA}, ensure_ascii=False)
    s = read_spectra(write(tmp_path, "bom.json", codecs.BOM_UTF8 + text.encode()))
    assert s.names == ("Ørsted pier",)
    s = read_spectra(write(tmp_path, "u16.json", codecs.BOM_UTF16_LE + text.encode("utf-16-le")))
    assert s.names == ("Ørsted pier",)


# --------------------------------------------------------------------------- TM-27


def test_tm27_fixture_against_reference_reader():
    from colour.io.tm2714 import SpectralDistribution_IESTM2714

    path = DATA / "beacon_relative.spdx"
    s = read_spectra(path)
    ref = SpectralDistribution_IESTM2714(str(path)).read()  # reference library: colour-science 0.4.7
    np.testing.assert_array_equal(s.wavelength_nm, ref.wavelengths)
    np.testing.assert_array_equal(s.values[0], ref.values)
    assert ref.spectral_quantity == "relative" and s.quantity is Quantity.RELATIVE
    assert s.names == ("LW-12",)  # the CatalogNumber names it
    assert s.metadata_of(0)["CatalogNumber"] == "LW-12"
    assert s.sha256 == (sha256_of_file(path),)


@pytest.mark.parametrize(
    "tm27, quantity",
    [
        ("flux", Quantity.RADIANT_FLUX),
        ("irradiance", Quantity.IRRADIANCE),
        ("radiance", Quantity.RADIANCE),
        ("intensity", Quantity.INTENSITY),
        ("relative", Quantity.RELATIVE),
    ],
)
def test_tm27_written_by_reference_writer(tmp_path, tm27, quantity):
    from colour.io.tm2714 import Header_IESTM2714, SpectralDistribution_IESTM2714

    data = dict(zip(WL, VB))
    sd = SpectralDistribution_IESTM2714(
        header=Header_IESTM2714(manufacturer="Lanternfield Works"), spectral_quantity=tm27, data=data
    )
    sd.path = str(tmp_path / "written.spdx")
    sd.write()  # reference library: colour-science 0.4.7 writer
    s = read_spectra(tmp_path / "written.spdx")
    assert s.quantity is quantity
    np.testing.assert_array_equal(s.wavelength_nm, WL)
    np.testing.assert_array_equal(s.values[0], VB)


def _tm27(body: str, quantity: str = "irradiance", ns: str = ' xmlns="http://www.ies.org/iestm2714"') -> str:
    return (
        f'<?xml version="1.0"?>\n<IESTM2714{ns} version="1.0">\n<SpectralDistribution>\n'
        f"<SpectralQuantity>{quantity}</SpectralQuantity>\n{body}</SpectralDistribution>\n</IESTM2714>\n"
    )


def _data(wl=WL, vals=VA) -> str:
    return "".join(f'<SpectralData wavelength="{w:g}">{v!r}</SpectralData>\n' for w, v in zip(wl, vals))


def test_tm27_without_namespace_other_quantity_and_argument(tmp_path):
    p = write(tmp_path, "bare.xml", _tm27(_data(), quantity="other", ns=""))
    assert read_spectra(p).quantity is Quantity.RELATIVE
    assert read_spectra(p, quantity="radiance").quantity is Quantity.RADIANCE
    p = write(tmp_path, "irr.xml", _tm27(_data()))
    with pytest.raises(InputError, match="states quantity 'irradiance' but 'intensity'"):
        read_spectra(p, quantity="intensity")


def test_tm27_several_distributions_and_descending(tmp_path):
    body = _data(WL[::-1], VA[::-1])
    text = _tm27(body).replace(
        "</IESTM2714>",
        f"<SpectralDistribution><SpectralQuantity>irradiance"
        f"</SpectralQuantity>{_data(WL[::-1], VB[::-1])}"
        "</SpectralDistribution></IESTM2714>",
    )
    p = write(tmp_path, "two.spdx", text)
    s = read_spectra(p)
    assert s.names == ("two#1", "two#2") and s.sources == (f"{p}#1", f"{p}#2")
    np.testing.assert_array_equal(s.values, [VA, VB])
    assert "wavelength-descending" in [f.code for f in s.flags[0]]


# --------------------------------------------------------------------------- dispatch


def test_unknown_extension_is_sniffed(tmp_path):
    assert read_spectra(write(tmp_path, "a.spectrum", json.dumps({"wavelength_nm": WL, "values": VA}))).names == ("a",)
    assert read_spectra(write(tmp_path, "b.spectrum", _tm27(_data()))).quantity is Quantity.IRRADIANCE
    assert read_spectra(write(tmp_path, "c", table(","))).names == ("A", "B")


def test_inputs_are_not_modified(tmp_path):
    p = write(tmp_path, "keep.csv", table(",").replace("\n", "\r\n"))
    before = p.read_bytes(), p.stat().st_mtime_ns
    read_spectra(p)
    assert (p.read_bytes(), p.stat().st_mtime_ns) == before


# --------------------------------------------------------------------------- wide CSV (chunked reading)

WIDE_HEAD = "name," + ",".join(f"{w:g}" for w in WL)


def wide_text(*lines: str, sep: str = ",") -> str:
    """A wide CSV: the given lines, then rows 'a' (VA) and 'b' (VB)."""
    rows = [f"a{sep}" + sep.join(f"{v:g}" for v in VA), f"b{sep}" + sep.join(f"{v:g}" for v in VB)]
    return "\n".join([*lines, *rows]) + "\n"


def read_wide(path: Path, **kw):
    from cctkit.readers.wide import open_chunked

    src = open_chunked(path, **kw)
    chunks = list(src.chunks())
    assert src.layout == "wide-csv"
    assert src.total is not None and src.total >= sum(len(c) for c in chunks)  # an upper bound
    return src, chunks


def test_wide_reads_comments_encodings_and_quotes_as_delimited_does(tmp_path):
    variants = {
        "comments.csv": wide_text("// bench 3", "% run 12", "# unit: mW/m2/nm", "", WIDE_HEAD, "% between rows"),
        "latin1.csv": wide_text("# unit: mW/m2/nm", WIDE_HEAD.replace("name", "lampe µ")).encode("latin-1"),
        "utf16.csv": codecs.BOM_UTF16_LE + wide_text("# unit: mW/m2/nm", WIDE_HEAD).encode("utf-16-le"),
        "trailing.csv": "# unit: mW/m2/nm\n" + wide_text(WIDE_HEAD + ",").replace("\n", ",\n"),
        "quoted.csv": wide_text("# unit: mW/m2/nm", WIDE_HEAD)
        .replace("a,0.1,", '"a",0.1,"')
        .replace(",0.2,", '",0.2,'),
        "cr.csv": wide_text("# unit: mW/m2/nm", WIDE_HEAD).replace("\n", "\r"),
        "semicolon.csv": wide_text("# unit: mW/m2/nm", WIDE_HEAD.replace(",", ";"), sep=";"),
    }
    for name, text in variants.items():
        p = write(tmp_path, name, text)
        before = p.read_bytes()
        _, chunks = read_wide(p, chunk_size=1)
        assert [len(c) for c in chunks] == [1, 1], name
        assert chunks[1].names == ("b",)
        for chunk, expected in zip(chunks, (VA, VB)):
            assert chunk.quantity is Quantity.IRRADIANCE, name
            np.testing.assert_array_equal(chunk.wavelength_nm, WL)
            np.testing.assert_allclose(chunk.values[0], np.array(expected) * 1e-3, rtol=1e-15, err_msg=name)  # SI
        assert p.read_bytes() == before
    _, (latin,) = read_wide(tmp_path / "latin1.csv")
    assert "text-encoding" in [f.code for f in latin.flags[0]]


def test_wide_total_counts_lines_after_the_header(tmp_path):
    p = write(tmp_path, "notes.csv", wide_text(WIDE_HEAD, "# a note", "", "# another"))
    src, (chunk,) = read_wide(p)
    assert len(chunk) == 2 and src.total == 5  # 2 rows + 3 comment/blank lines after the header
