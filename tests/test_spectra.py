"""The Spectra type: validation messages, flags, and resampling to the working grid."""

import numpy as np
import pytest

from cctkit.constants import WAVELENGTH_NM
from cctkit.errors import InputError
from cctkit.spectra import Quantity, Spectra, concatenate, to_working_grid


def gauss(wl, mu, sigma):
    return np.exp(-0.5 * ((wl - mu) / sigma) ** 2)


def test_sprague_matches_reference_library():
    # reference library: colour-science 0.4 SpragueInterpolator (CIE 167:2005) on 5 nm data.
    import colour

    wl = np.arange(380.0, 781.0, 5.0)
    y = gauss(wl, 450, 12) + 0.8 * gauss(wl, 570, 45)
    ours = to_working_grid(Spectra(wl, y, ["led"])).values[0, 20:421]
    ref = colour.SpectralDistribution(y, wl).align(colour.SpectralShape(380, 780, 1)).values
    assert np.allclose(ours, ref, atol=1e-12)


def test_sprague_reproduces_a_quintic_exactly_inside():
    # Sprague interpolation is exact for polynomials up to degree 5 away from the ends  # CIE 167:2005 section 5
    wl = np.arange(360.0, 831.0, 10.0)
    x = (wl - 600) / 200
    poly = lambda t: 1 + t - 2 * t**2 + 0.5 * t**3 + 0.3 * t**4 - 0.2 * t**5  # noqa: E731
    out = to_working_grid(Spectra(wl, poly(x), ["p"])).values[0]
    inner = (WAVELENGTH_NM >= 390) & (WAVELENGTH_NM <= 800)
    assert np.allclose(out[inner], poly((WAVELENGTH_NM[inner] - 600) / 200), atol=1e-10)


def test_one_nm_data_is_kept_as_measured():
    wl = np.arange(380.0, 781.0)
    y = np.random.default_rng(3).random(wl.size)
    out = to_working_grid(Spectra(wl, y, ["raw"])).values[0]
    assert np.array_equal(out[20:421], y)


def test_non_uniform_data_uses_shape_preserving_interpolation():
    wl = np.sort(np.random.default_rng(5).uniform(355, 835, 300))
    y = np.clip(np.sin(wl / 30), 0, None)  # non-negative data with flat zero stretches
    out = to_working_grid(Spectra(wl, y, ["nu"])).values[0]
    assert out.min() >= 0  # PCHIP never overshoots below the data (Fritsch-Carlson)
    assert np.abs(out - np.clip(np.sin(WAVELENGTH_NM / 30), 0, None)).max() < 0.02


def test_extrapolation_repeats_the_nearest_value_and_flags_short_range():
    wl = np.arange(400.0, 701.0, 5.0)
    y = np.linspace(1, 2, wl.size)
    s = to_working_grid(Spectra(wl, y, ["short"]))
    assert np.all(s.values[0, :40] == 1.0) and np.all(s.values[0, -130:] == 2.0)  # CIE 15:2018 section 7.2.2
    assert [f.code for f in s.flags[0]] == ["range-short"]


def test_negative_and_coarse_data_are_flagged_not_refused():
    wl = np.arange(380.0, 781.0, 10.0)
    y = gauss(wl, 550, 60) - 0.01
    s = Spectra(wl, y, ["noisy"])
    codes = [f.code for f in s.flags[0]]
    assert "negative-values" in codes and "coarse-step" in codes


@pytest.mark.parametrize(
    "wl, values, match",
    [
        ([380, 390, 390, 400, 410, 420], np.ones(6), "strictly increasing; 390 nm follows 390 nm"),
        ([380, 370, 390, 400, 410, 420], np.ones(6), "strictly increasing"),
        ([380, 390, np.nan, 410, 420, 430], np.ones(6), "wavelengths contain NaN"),
        ([380, 390, 400], np.ones(3), "only 3 wavelength points"),
        (np.arange(380, 420, 5.0), np.r_[np.ones(7), np.nan], "has a NaN or infinite value at 415 nm"),
        (np.arange(380, 420, 5.0), np.ones(9), r"must have shape \(N, 8\)"),
    ],
)
def test_validation_messages(wl, values, match):
    with pytest.raises(InputError, match=match):
        Spectra(np.asarray(wl, float), np.asarray(values, float), ["s"], sources=("lamp.csv",))


def test_message_names_the_file():
    with pytest.raises(InputError, match=r"^lamp\.csv: "):
        Spectra(np.array([1.0, 2, 3]), np.ones(3), ["s"], sources=("lamp.csv",))


def test_quantity_parse():
    assert Quantity.parse("radiant-flux") is Quantity.RADIANT_FLUX
    assert Quantity.parse("Irradiance") is Quantity.IRRADIANCE
    with pytest.raises(InputError, match="unknown quantity 'lumens'; expected one of radiant-flux"):
        Quantity.parse("lumens")


def test_concatenate_refuses_mixed_quantities():
    wl = np.arange(380.0, 781.0, 5.0)
    a = Spectra(wl, np.ones(wl.size), ["a"], quantity=Quantity.IRRADIANCE)
    b = Spectra(wl, np.ones(wl.size), ["b"], quantity=Quantity.RADIANT_FLUX)
    with pytest.raises(InputError, match="different quantities"):
        concatenate([a, b])
    both = concatenate([a, a])
    assert both.values.shape == (2, 471) and both.names == ("a", "a")


def test_values_are_read_only():
    s = Spectra(np.arange(380.0, 781.0, 5.0), np.ones(81), ["a"])
    with pytest.raises(ValueError):
        s.values[0, 0] = 2.0
