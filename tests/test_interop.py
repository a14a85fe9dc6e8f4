"""pandas and colour-science interop: exact round trips, to_frame() equal to records(), the notebook view."""

import math
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

import cctkit
from cctkit.analysis import analyse, flatten_record
from cctkit.errors import InputError
from cctkit.spectra import Quantity, Spectra

pd = pytest.importorskip("pandas")
colour = pytest.importorskip("colour")

SPECTRA = Path(__file__).resolve().parent.parent / "spectra"
DEMO = SPECTRA / "northbeam-nb-3000-95.csv"


def _two_spectra() -> Spectra:
    wl = np.arange(380.0, 781.0, 5.0)
    values = np.vstack(
        [
            np.exp(-0.5 * ((wl - 450) / 11) ** 2) + 0.7 * np.exp(-0.5 * ((wl - 590) / 50) ** 2),
            np.linspace(0.1, 1.3, wl.size) ** 1.7,
        ]
    )
    return Spectra(wl, values, ("lamp one", "lamp two"), quantity=Quantity.IRRADIANCE)


def _same(a: Spectra, b: Spectra) -> None:
    assert np.array_equal(a.wavelength_nm, b.wavelength_nm)
    assert np.array_equal(a.values, b.values)  # bit for bit, not approximately
    assert a.names == b.names
    assert a.quantity is b.quantity


def test_spectra_frame_round_trip_is_exact():
    s = _two_spectra()
    df = s.to_frame()
    assert df.index.name == "wavelength_nm" and list(df.columns) == ["lamp one", "lamp two"]
    assert df.attrs == {"quantity": "irradiance", "spectral_unit": "W/(m^2 nm)"}
    back = Spectra.from_frame(df)
    _same(s, back)
    pd.testing.assert_frame_equal(back.to_frame(), df)


def test_frame_with_a_wavelength_column_and_explicit_quantity():
    s = _two_spectra()
    df = s.to_frame().reset_index()  # wavelengths now a column, index a RangeIndex
    back = Spectra.from_frame(df, quantity="irradiance")
    _same(s, back)
    # a numeric RangeIndex is not taken for wavelengths when the column is named
    renamed = df.rename(columns={"wavelength_nm": "wl"})
    _same(s, Spectra.from_frame(renamed, wavelength_column="wl", quantity="irradiance"))


def test_frame_errors_name_the_cause():
    df = pd.DataFrame({"a": [1.0] * 6}, index=list("abcdef"))
    with pytest.raises(InputError, match="no wavelength axis"):
        Spectra.from_frame(df)
    df = pd.DataFrame({"wavelength_nm": np.arange(400.0, 700.0, 50), "lamp": ["x"] * 6})
    with pytest.raises(InputError, match="column 'lamp' is not numeric"):
        Spectra.from_frame(df)
    with pytest.raises(InputError, match="wavelength_column 'nope'"):
        Spectra.from_frame(df, wavelength_column="nope")
    with pytest.raises(InputError, match="unknown quantity"):
        Spectra.from_frame(_two_spectra().to_frame(), quantity="lumens")


def test_spectra_colour_round_trip_is_exact():
    s = _two_spectra()
    msds = s.to_colour()
    assert isinstance(msds, colour.MultiSpectralDistributions)
    assert list(msds.labels) == ["lamp one", "lamp two"]
    _same(s, Spectra.from_colour(msds, quantity="irradiance"))
    # and the other way: colour-science -> cctkit -> colour-science
    cmfs = colour.MSDS_CMFS["CIE 1931 2 Degree Standard Observer"]
    back = Spectra.from_colour(cmfs).to_colour()
    assert np.array_equal(back.wavelengths, cmfs.wavelengths)
    assert np.array_equal(back.values, cmfs.values)
    assert list(back.labels) == list(cmfs.labels)


def test_single_and_listed_distributions():
    sd = colour.SDS_ILLUMINANTS["A"]
    one = Spectra.from_colour(sd)
    assert len(one) == 1 and one.names == (sd.name,)
    assert np.array_equal(one.values[0], sd.values) and np.array_equal(one.wavelength_nm, sd.wavelengths)
    two = Spectra.from_colour([sd, sd.copy()])
    assert len(two) == 2
    shifted = colour.SpectralDistribution(sd.values[:100], sd.wavelengths[:100] + 0.5, name="shifted")
    with pytest.raises(InputError, match="not on the wavelength axis"):
        Spectra.from_colour([sd, shifted])
    with pytest.raises(InputError, match="expected a colour SpectralDistribution"):
        Spectra.from_colour({"a": 1})


def test_colour_user_gets_the_published_illuminant_A_numbers():
    # A colour-science user switches in one line: CIE illuminant A from the reference library's dataset.
    a = analyse(Spectra.from_colour(colour.SDS_ILLUMINANTS["A"]), rendering=False)
    assert a.xy[0] == pytest.approx([0.44757, 0.40745], abs=5e-5)  # CIE 15:2018 Table 3 (from memory), 2 deg
    assert float(a.cct.cct_K[0]) == pytest.approx(2856, abs=2)  # CIE 15:2018 section 4.1: A is 2856 K


@pytest.fixture(scope="module")
def demo_analysis():
    return analyse(cctkit.read_spectra(SPECTRA / "tw-lab-setpoints.csv"))


def test_analysis_frame_equals_records(demo_analysis):
    df = demo_analysis.to_frame()
    recs = demo_analysis.records()
    assert len(df) == len(recs) == len(demo_analysis) > 1
    for i, rec in enumerate(recs):
        flat = flatten_record(rec)
        assert list(df.columns) == list(flat)
        for key, want in flat.items():
            got = df[key].iloc[i]
            if want is None:
                assert got is None or (isinstance(got, float) and math.isnan(got)), key
            elif isinstance(want, float):
                assert got == want, key  # the same float, not approximately
            else:
                assert got == want, key
    assert {"cct_K", "duv", "Ra", "R9", "Rf", "Rg", "ler_lm_per_W", "flags"} <= set(df.columns)
    assert df["cct_K"].dtype == np.float64


def test_flags_are_a_column():
    wl = np.arange(420.0, 701.0, 5.0)  # does not cover 380-780 nm
    a = analyse(Spectra(wl, np.ones_like(wl), ["short"]), rendering=False)
    df = a.to_frame()
    assert "range-short" in df.loc[0, "flags"].split(";")


def test_html_view_is_compact_and_escaped(demo_analysis):
    text = demo_analysis._repr_html_()
    assert text.startswith("<table") and text.count("<tr>") == len(demo_analysis) + 1
    rec = demo_analysis.records()[0]
    assert f"<td>{rec['cct_K']:.0f}</td>" in text and "CCT [K]" in text and f"<td>{rec['Ra']:.1f}</td>" in text
    wl = np.arange(360.0, 831.0, 5.0)
    many = Spectra(wl, np.ones((30, wl.size)), [f"<b>{i}</b>" for i in range(30)])
    text = analyse(many, rendering=False)._repr_html_()
    assert "<b>" not in text and "&lt;b&gt;0&lt;/b&gt;" in text
    assert text.count("<tr>") == 1 + 20 + 1  # header, 20 rows, one ellipsis row
    assert "&lt;b&gt;29&lt;/b&gt;" in text and "&lt;b&gt;17&lt;/b&gt;" not in text


def test_top_level_names():
    a = cctkit.analyse(cctkit.read_spectra(DEMO))
    assert isinstance(a, cctkit.analysis.Analysis) and len(a) == 1


def test_interop_imports_no_pandas():
    code = "import sys, cctkit.interop, cctkit.analysis; print('pandas' in sys.modules, 'openpyxl' in sys.modules)"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
    assert out.strip() == "False False"
