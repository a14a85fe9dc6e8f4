"""The faster routes through analyse() give the numbers and flags of the plain ones.

Coverage (photometry, alpha-opic) is worked out once per distinct measured range, and the
"nothing can be computed" check is one mask over all spectra; these tests hold both against
the spectrum-by-spectrum definitions on a chunk mixing every kind of range.
"""

from __future__ import annotations

import numpy as np

from cctkit.alphaopic import alpha_opic
from cctkit.constants import KM_LM_PER_W, VISIBLE_BAND_NM, WAVELENGTH_NM
from cctkit.photometry import COVERAGE_LIMIT, measured_mask, photometry, uncovered_share
from cctkit.spectra import Spectra, signal_problems
from cctkit.tables import table

RANGES = [
    (360.0, 830.0, 1.0),
    (380.0, 780.0, 5.0),
    (400.0, 700.0, 2.0),
    (420.0, 680.0, 1.0),
    (500.0, 600.0, 1.0),
    (800.0, 830.0, 1.0),
]


def _chunk(n: int = 60) -> Spectra:
    rng = np.random.default_rng(5)
    wl = WAVELENGTH_NM
    values = np.exp(-0.5 * ((wl - rng.uniform(430, 620, (n, 1))) / rng.uniform(10, 80, (n, 1))) ** 2)
    values[7] = 0.0  # nothing positive: no-signal
    values[13] = -values[13]
    return Spectra(
        wl,
        values,
        tuple(f"s{i}" for i in range(n)),
        quantity="radiant-flux",
        measured_range_nm=tuple(RANGES[i % len(RANGES)] for i in range(n)),
    )


def test_signal_problems_follow_the_spectrum_by_spectrum_rule():
    s = _chunk()
    lo_vis, hi_vis = VISIBLE_BAND_NM
    expected = []
    for i, (lo, hi, _) in enumerate(s.measured_range_nm):  # the rule, one spectrum at a time
        if hi < lo_vis or lo > hi_vis:
            expected.append("no-visible-data")
            continue
        inside = (s.wavelength_nm >= max(lo, lo_vis) - 1e-9) & (s.wavelength_nm <= min(hi, hi_vis) + 1e-9)
        expected.append(None if np.any(s.values[i, inside] > 0) else "no-signal")
    got = [None if p is None else p.code for p in signal_problems(s)]
    assert got == expected
    assert got.count("no-visible-data") == 10 and got.count("no-signal") == 2  # both kinds are exercised


def test_coverage_once_per_range_equals_the_per_spectrum_masks():
    s = _chunk()
    v = s.values
    mask = measured_mask(s.measured_range_nm)  # (N, 471), the plain definition
    ph = photometry(v, s.quantity, measured_range_nm=s.measured_range_nm)
    ao = alpha_opic(v, s.quantity, measured_range_nm=s.measured_range_nm)
    vm = np.where(mask, v, 0.0)
    for i in range(len(s)):  # each spectrum alone, with its own range: same totals, same flags
        one = dict(measured_range_nm=s.measured_range_nm[i : i + 1])
        p1 = photometry(v[i : i + 1], s.quantity, **one)
        a1 = alpha_opic(v[i : i + 1], s.quantity, **one)
        np.testing.assert_allclose(ph.luminous[i], p1.luminous[0], rtol=1e-13)
        np.testing.assert_allclose(ao.radiant[i], a1.radiant[0], rtol=1e-13)
        assert ph.flags[i] == p1.flags[0] and ao.flags[i] == a1.flags[0]
    withheld = np.isnan(ph.luminous)
    assert withheld.any() and not withheld.all()  # both kinds are exercised
    share = uncovered_share(mask, table("cmf_2")[:, 1])  # V(lambda), per spectrum with the full mask
    assert np.array_equal(withheld, share > COVERAGE_LIMIT)
    # luminous total: Km times the V(lambda)-weighted sum over the measured range (CIE 15:2018 practice)
    np.testing.assert_allclose(
        ph.luminous[~withheld], (KM_LM_PER_W * (vm @ table("cmf_2")[:, 1]))[~withheld], rtol=1e-12
    )
    assert not any("-0.00 %" in f.message for flags in ph.flags + ao.flags for f in flags)


def test_wide_rows_parsed_by_arrow_are_the_bits_loadtxt_gives():
    import io

    from cctkit.readers.wide import _arrow_values

    rng = np.random.default_rng(2)
    x = rng.standard_normal((300, 40)) * 10.0 ** rng.integers(-9, 9, (300, 40))
    for fmt, d in (("{:.17g}", ","), ("{:.6g}", ";"), ("{:.3e}", "\t")):
        bodies = [d.join(fmt.format(v) for v in row) for row in x]
        ref = np.loadtxt(io.StringIO("\n".join(bodies)), delimiter=d, ndmin=2, comments=None)
        got = _arrow_values(bodies, d, 40)
        assert got is not None and got.tobytes() == ref.tobytes()
    # what Arrow cannot take as plain numbers is left to the slower routes (which name the bad cell)
    for bad in (["1,2,3", "4,,6"], ["1,2,3", "4,5,6,"], ["1,2,3", "4,NA,6"], ["1,2,3", "4,5"], ['1,"2",3']):
        assert _arrow_values(bad, ",", 3) is None
    assert _arrow_values(["1 2 3"], None, 3) is None


def test_a_control_character_in_a_wide_row_is_still_refused_with_its_line(tmp_path):
    # the per-line check is skipped only for files whose bytes hold no control character at all
    import pytest

    from cctkit.errors import InputError
    from cctkit.readers.wide import open_chunked

    wl = np.arange(380, 781, 5)
    rows = ["name," + ",".join(str(w) for w in wl)]
    rows += [f"lamp {k}," + ",".join("1.5" for _ in wl) for k in range(6)]
    clean = tmp_path / "clean.csv"
    clean.write_text("\n".join(rows) + "\n")
    assert sum(len(c) for c in open_chunked(clean, chunk_size=4).chunks()) == 6
    rows[4] = rows[4].replace("lamp 3", "lamp\x073")
    bad = tmp_path / "bad.csv"
    bad.write_text("\n".join(rows) + "\n")
    with pytest.raises(InputError, match="control character 0x07") as e:
        list(open_chunked(bad, chunk_size=4).chunks())
    assert e.value.line == 5


def test_sprague_by_rows_gives_the_bits_of_the_column_stencil():
    from cctkit.spectra import _SPRAGUE_COEF, _SPRAGUE_EXT, _positions, _sprague

    def by_columns(wl, values, target):  # the six-point stencil as first written (CIE 167:2005 section 5)
        n = wl.shape[0]
        i, t = _positions(wl, target)
        local = (t[:, None] ** np.arange(6)[None, :]) @ _SPRAGUE_COEF
        p = np.empty((values.shape[0], n + 4))
        p[:, 2 : n + 2] = values
        p[:, 1] = values[:, :6] @ _SPRAGUE_EXT[1]
        p[:, 0] = values[:, :6] @ _SPRAGUE_EXT[0]
        p[:, n + 2] = values[:, -6:] @ _SPRAGUE_EXT[1][::-1]
        p[:, n + 3] = values[:, -6:] @ _SPRAGUE_EXT[0][::-1]
        out = np.zeros((values.shape[0], target.shape[0]))
        for k in range(6):
            out += local[:, k] * p[:, i + k]
        return out

    rng = np.random.default_rng(8)
    for wl in (np.arange(380.0, 781.0, 5.0), np.arange(360.0, 831.0, 10.0), np.arange(400.0, 700.5, 2.5)):
        v = rng.random((37, wl.size))
        got = _sprague(wl, v, WAVELENGTH_NM)
        assert got.flags["C_CONTIGUOUS"] and got.tobytes() == by_columns(wl, v, WAVELENGTH_NM).tobytes()


def test_range_array_is_the_plain_conversion_and_remembers_only_immutable_input():
    from cctkit.spectra import range_array

    ranges = tuple(RANGES[i % len(RANGES)] for i in range(50))
    plain = np.array([r[:2] for r in ranges], dtype=np.float64)
    got = range_array(ranges)
    assert np.array_equal(got, plain) and not got.flags.writeable
    assert range_array(ranges) is got  # the same tuple again: remembered
    as_list = [list(r) for r in ranges]
    first = range_array(as_list)
    as_list[0][1] = 700.0  # a list can change between calls: never remembered
    assert range_array(as_list)[0, 1] == 700.0 and first[0, 1] == 830.0


def test_full_coverage_skips_the_copy_with_the_same_totals():
    from cctkit.photometry import inside_range, range_masks

    s = _chunk()
    full = ((360.0, 830.0, 1.0),) * len(s)
    masks, which = range_masks(full)
    v = np.ascontiguousarray(s.values)
    assert inside_range(v, masks, which) is v  # nothing to mask
    assert np.array_equal(inside_range(v, masks, which), np.where(masks[which], v, 0.0))
    # the totals are those of the masked copy, bit for bit (CIE 15:2018: V(lambda)-weighted sum)
    ph = photometry(v, s.quantity, measured_range_nm=full)
    copy = np.ascontiguousarray(np.where(masks[which], v, 0.0))
    assert np.array_equal(ph.luminous, KM_LM_PER_W * (copy @ table("cmf_2")[:, 1]))


def test_safe_divide_gives_the_masked_quotient_bit_for_bit():
    from cctkit.colorimetry import safe_divide

    rng = np.random.default_rng(3)
    a, b = rng.normal(size=(40, 6)), rng.normal(size=(40, 6))
    b[::4, 1], b[2, 2], b[3, 3], a[5, 5] = 0.0, -0.0, np.nan, np.inf
    for x, y in ((a, b), (a, b[:, :1]), (a[0], b[0]), (1.0, 0.0), (a.astype(np.float32), b.astype(np.float32))):
        with np.errstate(divide="ignore", invalid="ignore"):
            plain = np.where(y != 0, x / np.where(y != 0, y, 1.0), np.nan)  # NaN where the divisor is 0
        got = safe_divide(x, y)
        assert got.dtype == plain.dtype and got.shape == plain.shape and got.tobytes() == plain.tobytes()
