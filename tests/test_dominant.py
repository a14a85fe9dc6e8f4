"""Dominant / complementary wavelength and excitation purity (cctkit.dominant)."""

from __future__ import annotations

import numpy as np
import pytest

from cctkit.dominant import EQUAL_ENERGY_XY, dominant_wavelength, dominant_wavelength_of_spectra, spectral_locus_xy
from cctkit.errors import InputError


def _points_inside_locus(n: int, seed: int) -> np.ndarray:
    from matplotlib.path import Path

    rng = np.random.default_rng(seed)
    xy = np.column_stack([rng.uniform(0.01, 0.74, n), rng.uniform(0.005, 0.84, n)])
    return xy[Path(spectral_locus_xy()).contains_points(xy)]


# Whites: illuminant E, and D65 (0.3127, 0.3290) and A (0.44757, 0.40745) in CIE 1931 xy: CIE 15:2018,
# colorimetric data of the CIE illuminants (from memory: D65 0.31272, 0.32903; A 0.44758, 0.40745);
# the reference library colour-science 0.4.7 computes 0.31271, 0.32901 and 0.44757, 0.40744 from its
# spectra.  They only choose the white; the expected values come from the reference library below.
@pytest.mark.parametrize("white", [EQUAL_ENERGY_XY, (0.3127, 0.3290), (0.44757, 0.40745)])
def test_against_reference_library(white):
    colour = pytest.importorskip("colour")
    xy = _points_inside_locus(600, seed=7)
    W = np.array(white)
    r = dominant_wavelength(xy, white_xy=W)
    wl, xy_wl, xy_cwl = colour.dominant_wavelength(xy, W)  # reference library: colour-science 0.4.7
    pe = colour.excitation_purity(xy, W)
    # colour-science reports the 1 nm locus sample nearest the crossing; ours interpolates along the segment
    assert np.all(np.sign(r.dominant_wavelength_nm) == np.sign(wl))
    assert np.abs(np.abs(r.dominant_wavelength_nm) - np.abs(wl)).max() <= 0.5
    # the boundary point itself and the purity agree to numerical precision
    assert r.boundary_xy == pytest.approx(xy_wl, abs=1e-6)
    assert r.purity == pytest.approx(pe, abs=1e-6)
    purple = wl < 0
    assert np.array_equal(r.is_purple, purple)
    assert np.abs(r.complementary_wavelength_nm[purple] + wl[purple]).max() <= 0.5


def test_spectral_colours_are_their_own_dominant_wavelength():
    locus = spectral_locus_xy()
    lam = np.array([450.0, 500.0, 555.0, 600.0])
    xy = locus[(lam - 360).astype(int)]
    r = dominant_wavelength(xy)
    # CIE 15:2018 section 9.1: a point on the spectral locus has purity 1 and its own wavelength
    assert r.dominant_wavelength_nm == pytest.approx(lam, abs=1e-6)
    assert r.purity == pytest.approx(np.ones(4), abs=1e-9)


def test_purple_gets_negative_complementary():
    locus = spectral_locus_xy()
    mid_purple = 0.5 * (locus[0] + locus[-1])  # on the purple line
    sample = 0.5 * (mid_purple + np.array(EQUAL_ENERGY_XY))
    r = dominant_wavelength(sample)
    assert bool(r.is_purple)
    assert float(r.dominant_wavelength_nm) < 0
    assert float(r.purity) == pytest.approx(0.5, abs=1e-9)  # half-way from white to the purple line
    assert float(r.complementary_wavelength_nm) == pytest.approx(-float(r.dominant_wavelength_nm))
    # Greens are the complements of purples: seen from E, the purple line's ends (360 and 830 nm)
    # have complementary wavelengths 570 and 494 nm (reference library: colour-science 0.4.7
    # dominant_wavelength just inside each end, 1 nm samples; ours 569.6 and 493.9).
    assert 490 < float(r.complementary_wavelength_nm) < 570
    colour = pytest.importorskip("colour")
    lib_wl = float(colour.dominant_wavelength(sample, np.array(EQUAL_ENERGY_XY))[0])  # -515 nm
    # reference library: colour-science 0.4.7 (nearest 1 nm sample, hence 0.5 nm as above)
    assert float(r.complementary_wavelength_nm) == pytest.approx(-lib_wl, abs=0.5)


def test_white_point_and_nan():
    r = dominant_wavelength(np.array([[1 / 3, 1 / 3], [np.nan, 0.3]]))
    assert np.isnan(r.dominant_wavelength_nm).all()
    assert r.purity[0] == 0.0 and np.isnan(r.purity[1])
    assert r.record(0) == {
        "dominant_wavelength_nm": None,
        "purity": 0.0,
        "dominant_white": "E",
        "dominant_white_x": 1 / 3,
        "dominant_white_y": 1 / 3,
    }


def test_leading_shape_and_spectra_entry():
    xy = _points_inside_locus(200, seed=2)[:48].reshape(4, 12, 2)
    assert dominant_wavelength(xy).purity.shape == (4, 12)
    from cctkit.constants import WAVELENGTH_NM

    narrow = np.exp(-0.5 * ((WAVELENGTH_NM - 590.0) / 3.0) ** 2)
    r = dominant_wavelength_of_spectra(narrow)
    # A narrow band lies near the spectral locus at its peak.  reference library: colour-science 0.4.7
    # dominant_wavelength and excitation_purity of the same 1 nm samples: 590 nm (nearest 1 nm sample,
    # hence 0.5 nm as above; ours 589.90) and purity 0.999937.
    colour = pytest.importorskip("colour")
    lib_xy = colour.XYZ_to_xy(colour.sd_to_XYZ(colour.SpectralDistribution(narrow, WAVELENGTH_NM)))
    lib_pe = float(colour.excitation_purity(lib_xy, np.array(EQUAL_ENERGY_XY)))
    assert r.dominant_wavelength_nm[0] == pytest.approx(590.0, abs=0.5)
    assert r.purity[0] == pytest.approx(lib_pe, abs=1e-6) and r.purity[0] <= 1.0  # purity 1 is the locus


def test_bad_input():
    with pytest.raises(InputError, match=r"xy: last axis must hold the two chromaticity coordinates"):
        dominant_wavelength(np.ones((3, 3)))
    with pytest.raises(InputError, match=r"white_xy: expected finite"):
        dominant_wavelength(np.ones(2) * 0.3, white_xy=(np.nan, 0.3))


def _exhaustive():
    """The exhaustive form (every sample against all 471 segments), kept in the benchmark for comparison."""
    import importlib.util
    from pathlib import Path

    path = Path(__file__).resolve().parents[1] / "benchmarks" / "bench_shape_dominant.py"
    spec = importlib.util.spec_from_file_location("bench_shape_dominant", path)
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    return mod


@pytest.mark.parametrize("observer, white", [(2, "E"), (2, "D65"), (10, "A"), (2, (0.25, 0.30))])
def test_sorted_search_equals_exhaustive_bit_for_bit(observer, white):
    from cctkit.dominant import resolve_white

    bench = _exhaustive()
    rng = np.random.default_rng(11)
    xy = np.vstack(
        [
            rng.uniform([0.0, 0.0], [0.75, 0.85], (4000, 2)),  # inside and outside the locus, purples too
            spectral_locus_xy(observer)[::3],  # on the locus, vertices included
            spectral_locus_xy(observer)[400:] + 1e-7,  # beyond 760 nm, where the locus turns back on itself
            [[np.nan, 0.3], [1 / 3, 1 / 3]],
        ]
    )
    _, w = resolve_white(white, observer=observer) if isinstance(white, str) else ("", white)
    r = dominant_wavelength(xy, white_xy=w, observer=observer)
    old = bench.exhaustive_dominant(xy, w, observer)
    new = (r.dominant_wavelength_nm, r.complementary_wavelength_nm, r.purity, r.is_purple, r.boundary_xy)
    for a, b in zip(old, new):  # identical, NaN where NaN (the claim of the sorted search)
        assert np.array_equal(a, b, equal_nan=True)


def test_per_sample_whites_and_white_outside_locus():
    bench = _exhaustive()
    xy = _points_inside_locus(300, seed=5)
    whites = np.where(np.arange(xy.shape[0])[:, None] % 2 == 0, (1 / 3, 1 / 3), (0.31272, 0.32903))
    r = dominant_wavelength(xy, white_xy=whites)
    assert r.white == "per sample"
    old = bench.exhaustive_dominant(xy, whites)
    assert np.array_equal(old[0], r.dominant_wavelength_nm, equal_nan=True)
    assert np.array_equal(old[2], r.purity, equal_nan=True)
    outside = (0.05, 0.9)  # not a white at all: no angular order; every segment is tested
    r = dominant_wavelength(xy[:50], white_xy=outside)
    old = bench.exhaustive_dominant(xy[:50], outside)
    assert np.array_equal(old[0], r.dominant_wavelength_nm, equal_nan=True)


def test_named_white_points_against_reference_library():
    from cctkit.dominant import WHITE_POINTS, resolve_white

    colour = pytest.importorskip("colour")
    for observer, lib_name in (
        (2, "CIE 1931 2 Degree Standard Observer"),
        (10, "CIE 1964 10 Degree Standard Observer"),
    ):
        lib = colour.CCS_ILLUMINANTS[lib_name]
        for name in WHITE_POINTS:
            # reference library: colour-science 0.4.7 CCS_ILLUMINANTS (4-5 digits), hence 5e-5
            assert resolve_white(name, observer=observer)[1] == pytest.approx(tuple(lib[name]), abs=5e-5)
    assert resolve_white("d65") == ("D65", (0.31272, 0.32903))  # CIE 15:2018 Table T.3, from memory
    assert resolve_white("0.3,0.31") == ("0.3,0.31", (0.3, 0.31))
    with pytest.raises(InputError, match=r"white point must be one of E, D65, D50, A or x,y"):
        resolve_white("D75")
    with pytest.raises(InputError, match=r"x \+ y < 1"):
        resolve_white("0.6,0.5")


def test_white_point_changes_the_answer_and_is_recorded():
    xy = np.array([[0.40, 0.50]])  # a yellow-green
    e = dominant_wavelength(xy)
    a = dominant_wavelength(xy, white_xy="A")
    assert e.record(0)["dominant_white"] == "E" and a.record(0)["dominant_white"] == "A"
    assert a.record(0)["dominant_white_x"] == 0.44758  # illuminant A: CIE 15:2018 Table T.3, from memory
    # seen from A (yellower) the same point lies towards shorter wavelengths: a different answer
    assert a.dominant_wavelength_nm[0] < e.dominant_wavelength_nm[0] - 5
    colour = pytest.importorskip("colour")
    lib = colour.dominant_wavelength(xy[0], np.array([0.44758, 0.40745]))[0]  # reference library: colour-science 0.4.7
    assert a.dominant_wavelength_nm[0] == pytest.approx(lib, abs=0.5)
