"""Colour rendering at tristimulus level equals the spectral route, within 1e-10 relative.

``cie13_3``, ``tm30`` and ``colour_rendition`` build the references at tristimulus level
(``rendering.tristimulus``); the spectral route builds each reference spectrum
(``reference_cie13_3`` / ``reference_cie224``) and runs ``cie13_3_samples`` /
``tm30_samples`` on it.  Same arithmetic in another order, so the two agree to rounding:
the check is 1e-10 relative (or absolute, for values near zero); the published precision
of these indices is 0.1 (Ra, Rf) and 1e-4 (DC).  The checks of the numbers themselves
against published values and colour-science are in ``test_rendering.py``.
"""

from __future__ import annotations

import numpy as np
import pytest

from cctkit.constants import WAVELENGTH_NM
from cctkit.rendering import (
    cie13_3,
    cie13_3_samples,
    colour_rendition,
    reference_cie13_3,
    reference_cie224,
    tm30,
    tm30_samples,
)


def sources(n: int = 300, seed: int = 4) -> tuple[np.ndarray, np.ndarray]:
    """Our own white LEDs with CCTs spread over 1000-25000 K (every reference kind and the blend)."""
    rng = np.random.default_rng(seed)
    wl = WAVELENGTH_NM[None, :]
    v = 0.01 * (
        np.exp(-0.5 * ((wl - rng.uniform(440, 462, (n, 1))) / 9.5) ** 2)
        + rng.uniform(0.2, 2.0, (n, 1)) * np.exp(-0.5 * ((wl - rng.uniform(540, 615, (n, 1))) / 55.0) ** 2)
    )
    T = np.exp(rng.uniform(np.log(1000.0), np.log(25000.0), n))
    T[:6] = [4000.0, 5000.0, 4500.0, 3999.999, 5000.001, np.nan]  # the blend's edges, and no reference
    return v, T


def close(a, b):
    np.testing.assert_allclose(a, b, rtol=1e-10, atol=1e-10, equal_nan=True)


def test_cie13_3_equals_the_spectral_route():
    v, T = sources()
    got = cie13_3(v, T)
    ref = reference_cie13_3(T)
    dE, dc = cie13_3_samples(v, ref.values)
    close(got.dE, dE)
    close(got.dc, dc)
    close(got.R, 100.0 - 4.6 * dE)
    assert got.reference == ref.kind


@pytest.mark.parametrize("blend_observer", [10, 2])
def test_tm30_equals_the_spectral_route(blend_observer):
    v, T = sources()
    got = tm30(v, T, blend_observer=blend_observer)
    ref = reference_cie224(T, blend_observer=blend_observer)
    want = tm30_samples(v, ref.values)
    for key, value in want.items():
        if key == "hue_bin_i":
            np.testing.assert_array_equal(getattr(got, key), value)
        else:
            close(getattr(got, key), value)
    assert got.reference == ref.kind


def test_colour_rendition_in_chunks_equals_the_standalone_measures(monkeypatch):
    import cctkit.rendering as rendering

    v, T = sources(250)
    T[np.isnan(T)] = 3000.0
    monkeypatch.setattr(rendering, "_CHUNK", 64)  # several chunks, the last a short one
    r = colour_rendition(v, cct_K=T, duv=np.zeros_like(T))
    cri, fid = cie13_3(v, r.cct_K), tm30(v, r.cct_K)
    close(r.cri.R, cri.R)
    close(r.tm30.Rf_i, fid.Rf_i)
    close(r.tm30.Rg, fid.Rg)
    assert r.cri.reference == cri.reference and r.tm30.reference == fid.reference
    assert len(r.tm30.reference) == 250


def cam02ucs_stepwise(XYZ, XYZ_w):
    """CIE 159:2004 forward model step by step with powers (L_A = 100, Y_b = 20, average, D = 1), then CAM02-UCS."""
    M_cat = np.array([[0.7328, 0.4296, -0.1624], [-0.7036, 1.6975, 0.0061], [0.0030, 0.0136, 0.9834]])
    M_hpe = np.array([[0.38971, 0.68898, -0.07868], [-0.22981, 1.18340, 0.04641], [0.0, 0.0, 1.0]])
    L_A, Y_b = 100.0, 20.0
    k = 1.0 / (5.0 * L_A + 1.0)
    F_L = 0.2 * k**4 * 5.0 * L_A + 0.1 * (1.0 - k**4) ** 2 * np.cbrt(5.0 * L_A)
    Y_w = XYZ_w[..., 1:2]
    n = Y_b / Y_w[..., 0]
    N_bb = 0.725 * n**-0.2
    z = 1.48 + np.sqrt(n)

    def post(xyz):
        rgb = xyz @ M_cat.T
        rgb_c = (Y_w / (XYZ_w @ M_cat.T)) * rgb
        rgb_p = rgb_c @ (M_hpe @ np.linalg.inv(M_cat)).T
        q = (F_L * np.abs(rgb_p) / 100.0) ** 0.42
        return np.sign(rgb_p) * 400.0 * q / (27.13 + q) + 0.1

    w, s = post(XYZ_w), post(XYZ)
    A_w = (2 * w[..., 0] + w[..., 1] + w[..., 2] / 20 - 0.305) * N_bb
    a = s[..., 0] - 12 * s[..., 1] / 11 + s[..., 2] / 11
    b = (s[..., 0] + s[..., 1] - 2 * s[..., 2]) / 9
    h = np.arctan2(b, a)
    A = (2 * s[..., 0] + s[..., 1] + s[..., 2] / 20 - 0.305) * N_bb
    J = 100 * (A / A_w) ** (0.69 * z)
    e_t = (np.cos(h + 2) + 3.8) / 4
    t = (50000 / 13 * N_bb * e_t * np.hypot(a, b)) / (s[..., 0] + s[..., 1] + 21 / 20 * s[..., 2])
    M = t**0.9 * np.sqrt(J / 100) * (1.64 - 0.29**n) ** 0.73 * F_L**0.25
    Mp = np.log1p(0.0228 * M) / 0.0228
    return np.stack([1.7 * J / (1 + 0.007 * J), Mp * np.cos(h), Mp * np.sin(h)], axis=-1)


def test_cam_with_one_matrix_per_white_equals_the_stepwise_model():
    from cctkit.rendering.cam import xyz_to_cam02ucs
    from cctkit.rendering.tristimulus import weights

    v, T = sources(60)
    W = weights()
    rows = v @ W
    k = 100.0 / rows[:, 46]
    XYZ_w = (rows[:, 45:48] * k[:, None])[:, None, :]
    XYZ = rows[:, 48:345].reshape(60, 99, 3) * k[:, None, None]
    close(xyz_to_cam02ucs(XYZ, XYZ_w), cam02ucs_stepwise(XYZ, XYZ_w))
    close(xyz_to_cam02ucs(XYZ[0], XYZ_w[0, 0]), cam02ucs_stepwise(XYZ[0], XYZ_w[0, 0]))  # one white
    per_sample = np.broadcast_to(XYZ_w, XYZ.shape)
    close(xyz_to_cam02ucs(XYZ, per_sample), cam02ucs_stepwise(XYZ, per_sample))  # a white per sample


def test_blocks_of_the_appearance_model_change_no_bit(monkeypatch):
    # colour_rendition runs the appearance model in blocks inside each chunk (the chunks fix the matrix
    # products, whose rounding can depend on the rows multiplied together), writing into the whole
    # result arrays; any blocking gives the same bits (each value depends on its own spectrum only)
    import cctkit.rendering as rendering

    v, T = sources(250)
    T[np.isnan(T)] = 3000.0
    monkeypatch.setattr(rendering, "_CHUNK", 100)  # several chunks, the last a short one
    runs = []
    for block in (100, 32, 1024, 7):
        monkeypatch.setattr(rendering, "_CAM_BLOCK", block)
        runs.append(colour_rendition(v, cct_K=T, duv=np.zeros_like(T)).tm30)
    for r in runs[1:]:
        for name in ("Jab_test_i", "Jab_ref_i", "Rf_i", "Rf", "Rg", "Rcs_h", "hue_bin_i"):
            assert getattr(r, name).tobytes() == getattr(runs[0], name).tobytes(), name
        assert r.reference == runs[0].reference


def test_no_spectra_give_empty_results_of_the_standards_shapes():
    """An empty (0, 471) array is a valid batch of no spectra: the results are empty arrays of the shapes each standard
    fixes (CIE 13.3-1995: 14 test samples; ANSI/IES TM-30-20: 99 samples, 16 hue bins), not an error from inside."""
    from cctkit.rendering import cie13_3, colour_rendition, tm30

    none, no_cct = np.empty((0, 471)), np.empty(0)
    cri = cie13_3(none, no_cct)
    assert cri.Ra.shape == (0,) and cri.R.shape == (0, 14)  # CIE 13.3-1995: R1-R14
    t = tm30(none, no_cct)
    assert t.Rf.shape == (0,) and t.Rf_i.shape == (0, 99) and t.Rf_h.shape == (0, 16)  # ANSI/IES TM-30-20
    assert t.Jab_test_i.shape == (0, 99, 3)
    assert colour_rendition(none).cct_K.shape == (0,)
