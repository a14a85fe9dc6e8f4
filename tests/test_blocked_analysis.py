"""analyse() in cache-sized blocks gives the bits of the whole-chunk arithmetic.

``colour_rendition`` works through each 4096-spectrum chunk in blocks (``rendering._BLOCK``):
the test rows, both references, CIE 13.3, the appearance model and the TM-30 steps run block
by block.  A BLAS rounds the rows of an incomplete last tile of a product differently, so
the blocks start on multiples of ``tristimulus.ROW_ALIGN`` and each reference's rows are
computed over an aligned window of that reference's rows: every number keeps its bits.
These tests hold that bit for bit (the comparison is ``tobytes``) with one BLAS thread, as
``analyse()`` runs (with several threads a BLAS splits the rows among them, which moves the
tiles); the block of the size of a whole chunk is the arithmetic of the code before the blocks.
"""

from __future__ import annotations

import numpy as np
import pytest

from cctkit.analysis import one_blas_thread
from cctkit.constants import WAVELENGTH_NM
from cctkit.rendering import colour_rendition
from cctkit.rendering.tristimulus import ROW_ALIGN, rendering_row_blocks, rendering_rows


def sources(n: int, seed: int) -> tuple[np.ndarray, np.ndarray]:
    """Our own white LEDs with reference CCTs over 1000-25000 K: Planckian, blend, daylight and none mixed."""
    rng = np.random.default_rng(seed)
    wl = WAVELENGTH_NM[None, :]
    v = 0.01 * (
        np.exp(-0.5 * ((wl - rng.uniform(440, 462, (n, 1))) / 9.5) ** 2)
        + rng.uniform(0.2, 2.0, (n, 1)) * np.exp(-0.5 * ((wl - rng.uniform(540, 615, (n, 1))) / 55.0) ** 2)
    )
    T = np.exp(rng.uniform(np.log(1000.0), np.log(25000.0), n))
    T[rng.random(n) < 0.05] = np.nan  # no reference
    T[:4] = [4000.0, 5000.0, 4500.0, np.nan]  # the blend's edges
    return v, T


@pytest.fixture(autouse=True)
def _one_blas_thread():
    with one_blas_thread():
        yield


def same_bits(a, b, what):
    a, b = np.asarray(a), np.asarray(b)
    assert a.shape == b.shape and a.tobytes() == b.tobytes(), what


@pytest.mark.parametrize("n, seed", [(333, 1), (517, 2), (64, 3), (21, 4)])
def test_row_blocks_equal_the_rows_of_the_whole_product(n, seed):
    v, T = sources(n, seed)
    whole = rendering_rows(v, T, which="both")
    for block in (ROW_ALIGN, 3 * ROW_ALIGN, 512):
        parts = list(rendering_row_blocks(v, T, block, which="both"))
        assert [p[0] for p in parts] == list(range(0, n, block)) and parts[-1][1] == n
        for key in ("test", "ref13", "ref224", "m13", "m224"):
            same_bits(np.concatenate([p[2][key] for p in parts]), whole[key], (key, block))


def test_row_blocks_of_one_standard_and_the_two_degree_blend():
    v, T = sources(200, 5)
    for which, blend_observer in (("cri", 10), ("tm30", 10), ("tm30", 2)):
        whole = rendering_rows(v, T, which=which, blend_observer=blend_observer)
        parts = [p[2] for p in rendering_row_blocks(v, T, 32, which=which, blend_observer=blend_observer)]
        for key in whole:
            if key != "block":
                same_bits(np.concatenate([p[key] for p in parts]), whole[key], (which, key))


def test_a_block_off_the_row_alignment_is_refused():
    v, T = sources(100, 6)
    with pytest.raises(ValueError, match=f"multiple of {ROW_ALIGN}"):
        next(rendering_row_blocks(v, T, ROW_ALIGN + 1))


def test_colour_rendition_in_blocks_gives_the_bits_of_whole_chunks(monkeypatch):
    import cctkit.rendering as rendering

    v, T = sources(700, 7)
    monkeypatch.setattr(rendering, "_CHUNK", 320)  # several chunks, the last a short one
    runs = {}
    for block in (320, 16, 64, 512):  # 320: one block per chunk, the arithmetic before the blocks
        monkeypatch.setattr(rendering, "_BLOCK", block)
        runs[block] = colour_rendition(v, cct_K=T, duv=np.zeros_like(T))
    first = runs[320]
    for block, r in runs.items():
        for part in ("cri", "tm30"):
            a, b = getattr(r, part), getattr(first, part)
            for name, value in vars(a).items():
                if isinstance(value, tuple):
                    assert value == getattr(b, name), (block, part, name)
                else:
                    same_bits(value, getattr(b, name), (block, part, name))


def test_signal_check_of_one_measured_range_follows_the_rule():
    from cctkit.spectra import VISIBLE_BAND_NM, Spectra, signal_problems

    v, _ = sources(12, 8)
    mid = (np.abs(WAVELENGTH_NM - 580.0) < 3)[None, :]
    v[1] = 0.0  # all zero
    v[2] = -v[2]  # all negative
    v[3] = np.where(mid[0], 0.0, v[3])  # zero mid-band, positive elsewhere
    v[4] = np.where(WAVELENGTH_NM < 778.0, -1.0, 1e-9)  # positive only at the band's red end
    v[5] = np.where(WAVELENGTH_NM > 380.0, 0.0, 1e-9)  # positive only at 380 nm, the band's first point
    v[6] = np.where((WAVELENGTH_NM < 380.0) | (WAVELENGTH_NM > 780.0), 1.0, 0.0)  # positive outside the band only
    s = Spectra(WAVELENGTH_NM, v, tuple(f"s{i}" for i in range(12)))
    inside = (WAVELENGTH_NM >= VISIBLE_BAND_NM[0]) & (WAVELENGTH_NM <= VISIBLE_BAND_NM[1])
    expected = [None if np.any(row[inside] > 0) else "no-signal" for row in v]  # the rule, spectrum by spectrum
    assert [None if p is None else p.code for p in signal_problems(s)] == expected
    assert expected.count("no-signal") == 3  # the all-zero, all-negative and outside-only spectra


def test_products_in_blocks_give_the_bits_of_each_plain_product():
    from cctkit.alphaopic import action_spectra
    from cctkit.colorimetry import products_in_blocks
    from cctkit.tables import cmfs, table

    v, _ = sources(1037, 9)
    weights = [cmfs(2), table("cmf_2")[:, 1], table("v_scotopic"), action_spectra()]
    for block in (ROW_ALIGN, 512):
        for got, w in zip(products_in_blocks(v, weights, block=block), weights):
            same_bits(got, v @ w, block)
    with pytest.raises(ValueError, match=f"multiple of {ROW_ALIGN}"):
        products_in_blocks(v, weights, block=100)


@pytest.mark.parametrize("mixed", [False, True])
def test_analyse_sums_in_one_pass_give_the_bits_of_the_measures_alone(mixed):
    from cctkit.alphaopic import alpha_opic
    from cctkit.analysis import analyse
    from cctkit.colorimetry import XYZ
    from cctkit.constants import KM_LM_PER_W
    from cctkit.photometry import photometry
    from cctkit.spectra import Spectra

    v, _ = sources(700, 10)
    ranges = ((360.0, 830.0, 1.0), (400.0, 700.0, 1.0), (420.0, 680.0, 2.0), (380.0, 780.0, 5.0))
    kw = {"measured_range_nm": tuple(ranges[i % 4] for i in range(700))} if mixed else {}
    s = Spectra(WAVELENGTH_NM, v, tuple(f"s{i}" for i in range(700)), quantity="irradiance", **kw)
    a = analyse(s, rendering=False)
    same_bits(a.XYZ, XYZ(v) * KM_LM_PER_W, "XYZ")
    p = photometry(v, "irradiance", measured_range_nm=s.measured_range_nm, measured_totals=s.measured_totals)
    q = alpha_opic(v, "irradiance", measured_range_nm=s.measured_range_nm)
    for name in ("luminous", "scotopic", "radiant", "ler_lm_per_W", "sp_ratio", "photon_umol", "ppf_umol"):
        same_bits(getattr(a.photometry, name), getattr(p, name), name)
    for name in ("radiant", "elr_W_per_lm", "edi", "der"):
        same_bits(getattr(a.alphaopic, name), getattr(q, name), name)
    assert a.photometry.flags == p.flags and a.alphaopic.flags == q.flags
    assert mixed == any(a.photometry.flags)  # the mixed ranges withhold some totals


def test_four_decimal_texts_are_the_format_of_each_value():
    from cctkit.analysis import _four_decimals

    rng = np.random.default_rng(11)
    x = np.concatenate(
        [
            rng.uniform(0, 0.05, 20000),  # DC values
            rng.uniform(0, 1e8, 2000),
            np.arange(0, 2000) * 1e-4 + 0.5e-4,  # ties of the last digit (as near as binary gets)
            np.nextafter(np.arange(1, 200) * 1e-4 + 0.5e-4, 0),
            [0.0, -0.0, 1e-300, 5e-324, -1e-5, -2.5, np.nan, np.inf, -np.inf, 1e8, 1e12, 1e20, 0.99995, 9999.99995],
        ]
    )
    assert _four_decimals(x) == [f"{v:.4f}" for v in x.tolist()]


def test_reference_kinds_by_weight():
    from cctkit.rendering.reference import _kinds

    kinds = _kinds(np.array([1.0, 0.0, 0.5, np.nan, 1e-12, 1.0 - 1e-16, -0.0]))
    assert kinds == ("planckian", "daylight", "blend", "none", "blend", "blend", "daylight")
    assert all(type(k) is str for k in kinds)


def test_faster_appearance_model_stays_within_1e10_of_the_run_before_it():
    # CAM02-UCS takes |ab| as sqrt(a^2 + b^2) (np.hypot guards against overflow at ~8x the cost) and
    # ln(1 + x) as np.log(1 + x) for x >= 1e-4 (np.log1p below): not the same bits as before, so the
    # results are held against a run of the code before that change (commit 299d02c, the same sources:
    # tests/data/tm30_run_before_faster_cam.npz), within 1e-10 relative or 1e-12 absolute for values near
    # zero (the bound this project states for reordered arithmetic; common practice, no source)
    from pathlib import Path

    before = np.load(Path(__file__).parent / "data" / "tm30_run_before_faster_cam.npz")
    v, T = sources(32, 12)
    r = colour_rendition(v, cct_K=T, duv=np.zeros_like(T)).tm30
    for name in before.files:
        got = getattr(r, name)[: before[name].shape[0]]
        np.testing.assert_allclose(got, before[name], rtol=1e-10, atol=1e-12, equal_nan=True, err_msg=name)
    assert np.isfinite(before["Rf"]).sum() >= 25  # the run holds numbers, not only the no-reference NaN
