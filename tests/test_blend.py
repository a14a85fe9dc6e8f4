"""Blending channels to target whites: exactness, optimality against brute force, reachability, CLI.

Independent references used here: plain linear algebra (three channels), an exhaustive
grid search over drive levels written in this file (four and five channels), the
optimality (KKT) conditions of a linear program evaluated by this file from the primal
solution alone, and :func:`cctkit.analysis.analyse` recomputing each blend from its drives.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest
from typer.testing import CliRunner

from cctkit import blend
from cctkit.cli import app
from cctkit.errors import InputError

SPECTRA = Path(__file__).resolve().parents[1] / "spectra"
CHANNELS = SPECTRA / "hl-wash5" / "hl-wash5-channels.csv"
POWER = SPECTRA / "hl-wash5" / "hl-wash5-power.csv"
runner = CliRunner()


def _uv_to_XYZ_direction(u: float, v: float) -> np.ndarray:
    # CIE 15:2018 section 8.1: x = 3u / (2u - 8v + 4), y = 2v / (2u - 8v + 4); X = x/y, Z = (1 - x - y)/y at Y = 1
    d = 2 * u - 8 * v + 4
    x, y = 3 * u / d, 2 * v / d
    return np.array([x / y, 1.0, (1 - x - y) / y])


@pytest.fixture(scope="module")
def wash() -> blend.Channels:
    return blend.read_channels([CHANNELS], power=POWER)


def _subset(ch: blend.Channels, names) -> blend.Channels:
    idx = [ch.names.index(n) for n in names]
    power = None if ch.power_W is None else ch.power_W[idx]
    return blend.Channels(names=tuple(names), values=ch.values[idx], quantity=ch.quantity, power_W=power)


# --------------------------------------------------------------------------- three channels


def test_three_channels_reproduce_the_target_XYZ(wash):
    ch = _subset(wash, ["warm white", "cool white", "lime"])
    T = np.array([2700.0, 3500.0, 4500.0, 5600.0])
    path = blend.solve_blend_path(ch, T, 0.0, luminous=300.0)
    assert path.status == ("ok",) * 4
    from cctkit.locus import uv_from_cct_duv

    for i, uv in enumerate(uv_from_cct_duv(T, 0.0)):
        target = 300.0 * _uv_to_XYZ_direction(*uv)
        got = path.drives[i] @ ch.XYZ  # tristimulus values are linear in the drives (additivity)
        # linear algebra: the 3 x 3 system has one solution; rounding only
        assert np.max(np.abs(got - target) / np.abs(target)) <= 1e-9
        assert np.all((path.drives[i] >= 0) & (path.drives[i] <= 1))
    assert all(s.startswith("linear system") for s in path.solver)


# --------------------------------------------------------------------------- linear objectives


def _grid_optimum(ch: blend.Channels, uv, Y: float, cost: np.ndarray, step: float) -> tuple[float, float]:
    """Exhaustive search: every channel but three on a grid of drive levels, the other three solved exactly.

    Returns the best cost found and the grid's resolution in cost: how much the cost can change
    between neighbouring grid points (the grid optimum is within it of the true optimum).
    """
    M = ch.XYZ.T
    K = M.shape[1]
    target = Y * _uv_to_XYZ_direction(*uv)
    best = np.inf
    free = list(range(K - 3))
    fixed = list(range(K - 3, K))
    levels = np.arange(0.0, 1.0 + step / 2, step)
    G = np.stack(np.meshgrid(*[levels] * len(free), indexing="ij"), axis=-1).reshape(-1, len(free))
    rest = np.linalg.solve(M[:, fixed], (target[:, None] - M[:, free] @ G.T)).T
    ok = np.all((rest >= 0) & (rest <= 1), axis=1)
    D = np.zeros((len(G), K))
    D[:, free] = G
    D[:, fixed] = rest
    if ok.any():
        best = float((D[ok] @ cost).min())
    # cost along the feasible set as a function of the grid drives: gradient c_free - c_fixed M_fixed^-1 M_free
    slope = cost[free] - cost[fixed] @ np.linalg.solve(M[:, fixed], M[:, free])
    return best, float(np.abs(slope).sum() * step)


def _kkt_ok(res, d: np.ndarray, tol: float = 1e-7) -> bool:
    """LP optimality for min c.d, A d = b, 0 <= d <= 1: some y makes the reduced costs r = c - A^T y
    zero on free variables, >= 0 at the lower bound and <= 0 at the upper bound."""
    c, A = res.c, res.A_eq
    lower = d <= 1e-9
    upper = d >= 1 - 1e-9
    free = ~(lower | upper)
    if free.any():
        y, *_ = np.linalg.lstsq(A[:, free].T, c[free], rcond=None)
    else:
        from scipy.optimize import linprog

        # any y with the sign conditions: a small feasibility problem in y
        r = linprog(
            np.zeros(3),
            A_ub=np.vstack([A[:, lower].T, -A[:, upper].T]),
            b_ub=np.concatenate([c[lower], -c[upper]]),
            bounds=[(None, None)] * 3,
            method="highs",
        )
        if r.status != 0:
            return False
        y = r.x
    r = c - A.T @ y
    return bool(np.all(np.abs(r[free]) <= tol) and np.all(r[lower] >= -tol) and np.all(r[upper] <= tol))


@pytest.mark.parametrize(
    "names, step",
    [
        (["royal blue", "warm white", "lime", "red"], 1e-4),
        (["royal blue", "warm white", "cool white", "lime", "red"], 2e-3),
    ],
)
@pytest.mark.parametrize("objective, sense", [("efficacy", "max"), ("melanopic", "max"), ("melanopic", "min")])
@pytest.mark.parametrize("cct_K", [2200.0, 4000.0, 6000.0])
def test_linear_objectives_equal_a_brute_force_search(wash, names, step, objective, sense, cct_K):
    from cctkit.locus import uv_from_cct_duv

    ch = _subset(wash, names)
    uv = uv_from_cct_duv(cct_K, 0.0)
    Y = 0.9 * float(blend.max_luminous(ch, uv)[0][0])
    d, res = blend.linear_blend(ch, uv, Y, objective=objective, sense=sense)
    assert res.status == 0 and d is not None
    raw = ch.power_W if objective == "efficacy" else (ch.melanopic if sense == "min" else -ch.melanopic)
    grid, resolution = _grid_optimum(ch, uv, Y, raw, step)
    lp = float(d @ raw)
    # the LP optimum is no worse than any grid point, and the best grid point is within the grid's
    # resolution of it (independent brute-force search in this file)
    assert lp <= grid + 1e-9 * abs(grid)
    assert grid - lp <= resolution
    assert resolution <= 2e-3 * abs(grid)  # the grid is fine enough for the comparison to mean something
    assert _kkt_ok(res, d)
    # the polished drives hit the target to rounding (linear algebra)
    target = Y * _uv_to_XYZ_direction(*uv)
    assert np.max(np.abs(d @ ch.XYZ - target) / np.abs(target)) <= 1e-9


def test_kkt_check_can_fail(wash):
    """The optimality check rejects a feasible but non-optimal vertex (so it is not vacuous)."""
    from cctkit.locus import uv_from_cct_duv

    ch = _subset(wash, ["royal blue", "warm white", "lime", "red"])
    uv = uv_from_cct_duv(4000.0, 0.0)
    Y = 0.5 * float(blend.max_luminous(ch, uv)[0][0])
    d_min, res_min = blend.linear_blend(ch, uv, Y, objective="melanopic", sense="min")
    d_max, _ = blend.linear_blend(ch, uv, Y, objective="melanopic", sense="max")
    assert not np.allclose(d_min, d_max, atol=1e-6)
    assert _kkt_ok(res_min, d_min) and not _kkt_ok(res_min, d_max)


# --------------------------------------------------------------------------- paths through analyse()


@pytest.fixture(scope="module")
def efficacy_path(wash):
    return blend.solve_blend_path(wash, np.arange(1800.0, 6501.0, 100.0), "ansi")


def _recheck(path):
    """Every returned blend recomputed from its drives through analyse()."""
    from cctkit.analysis import analyse
    from cctkit.constants import WAVELENGTH_NM
    from cctkit.spectra import Spectra

    ok = path.ok
    D = path.drives[ok]
    assert np.all((D >= 0) & (D <= 1))
    a = analyse(
        Spectra(
            WAVELENGTH_NM,
            D @ path.channels.values,
            names=[str(i) for i in range(len(D))],
            quantity=path.channels.quantity,
        ),
        rendering=False,
    )
    # tolerances of the issue: |dDuv| <= 1e-5, |dCCT| <= 0.5 K
    assert np.max(np.abs(a.cct.duv - path.target_duv[ok])) <= 1e-5
    assert np.max(np.abs(a.cct.cct_K - path.target_cct_K[ok])) <= 0.5
    return a


def test_efficacy_path_hits_every_target(efficacy_path):
    p = efficacy_path
    a = _recheck(p)
    # ANSI C78.377 defines the centre line from 2580 K: 1800-2500 K get no target
    assert [s for s, t in zip(p.status, p.target_cct_K) if t < 2580] == ["no-target"] * 8
    assert "2580-7040 K" in p.reason[0]
    # flat output: every returned blend gives the same luminous flux, the smallest maximum on the path
    lum = a.photometry.luminous
    assert np.ptp(lum) <= 1e-6 * lum.max()
    assert lum[0] == pytest.approx(p.luminous_max[p.ok].min(), rel=1e-6)
    step, at = p.largest_step()
    assert 0 < step <= 1 and p.status[at] == "ok"


def test_out_of_gamut_and_too_bright_get_their_status(wash):
    ch = _subset(wash, ["warm white", "cool white", "lime"])
    p = blend.solve_blend_path(ch, [1800.0, 4000.0, 4000.0], [0.0, 0.0, -0.03], luminous=200.0)
    assert p.status[0] == "out-of-gamut" and "outside the fixture's reachable region" in p.reason[0]
    assert p.status[1] == "ok"
    assert p.status[2] == "out-of-gamut"
    assert np.all(np.isnan(p.drives[[0, 2]]))
    p = blend.solve_blend_path(ch, [4000.0], 0.0, luminous=1e5)
    assert p.status == ("too-bright",) and "above the" in p.reason[0]
    assert p.records()[0]["drives"] == {"warm white": None, "cool white": None, "lime": None}


@pytest.mark.parametrize("duv", [0.0, 0.02, -0.02, 0.045])
def test_output_limit_by_vertices_equals_the_linear_program(wash, duv):
    from cctkit.locus import uv_from_cct_duv

    uv = uv_from_cct_duv(np.arange(1800.0, 6501.0, 500.0), duv)
    lp, messages = blend.max_luminous(wash, uv)
    assert all("HiGHS" in m for m in messages)
    # two methods of one LP: HiGHS and vertex enumeration agree to rounding (LP theory: optimum at a vertex)
    np.testing.assert_allclose(blend.max_luminous_by_vertices(wash, uv), lp, rtol=0, atol=1e-9 * lp.max())
    if duv == 0.045:
        assert (lp == 0).sum() >= 5  # far above the locus: out of reach for most CCTs


def test_hull_distance_is_zero_inside_and_positive_outside(wash):
    hull = blend.reachable_hull(wash)
    centre = hull.mean(axis=0)
    far = centre + np.array([1.0, 0.0])
    d = blend.hull_distance_uv(hull, np.array([centre, far]))
    assert d[0] == 0.0 and d[1] > 0.3


def test_fidelity_beats_a_grid_of_blends(wash):
    """Maximum Rf with Rg bounds: no worse than the best of a grid of feasible blends (brute force)."""
    from cctkit.analysis import analyse
    from cctkit.constants import WAVELENGTH_NM
    from cctkit.locus import uv_from_cct_duv
    from cctkit.spectra import Spectra

    T = 3500.0
    p = blend.solve_blend_path(wash, [T], 0.0, objective="fidelity", luminous=400.0, rg=(95.0, 110.0))
    assert p.status == ("ok",)
    _recheck(p)
    rf = float(p.metrics["Rf"][0])
    assert 95.0 <= p.metrics["Rg"][0] <= 110.0
    # brute force: grid over two drives, the other three solved exactly; keep blends within drive limits and Rg bounds
    M = wash.XYZ.T
    target = 400.0 * _uv_to_XYZ_direction(*uv_from_cct_duv(T, 0.0))
    levels = np.linspace(0, 1, 41)
    G = np.stack(np.meshgrid(levels, levels, indexing="ij"), axis=-1).reshape(-1, 2)
    rest = np.linalg.solve(M[:, 2:], (target[:, None] - M[:, :2] @ G.T)).T
    ok = np.all((rest >= 0) & (rest <= 1), axis=1)
    D = np.hstack([G, rest])[ok]
    g = analyse(Spectra(WAVELENGTH_NM, D @ wash.values, names=[str(i) for i in range(len(D))], quantity=wash.quantity))
    inside = (g.tm30.Rg >= 95) & (g.tm30.Rg <= 110)
    assert inside.sum() >= 10
    # within the grid's resolution (0.025 in drive level) of the best grid blend; measured margin 0.0-0.1
    assert rf >= float(g.tm30.Rf[inside].max()) - 0.3
    assert p.analysis.tm30.Rf[0] == pytest.approx(rf, abs=1e-9)  # the reported figure is analyse()'s


def test_rendering_constraint_that_cannot_be_met_is_reported(wash):
    p = blend.solve_blend_path(wash, [6000.0], 0.0, objective="fidelity", luminous=300.0, rg=(130.0, 140.0))
    assert p.status == ("constraint-unmet",) and "Rg" in p.reason[0]


# --------------------------------------------------------------------------- inputs


def test_channels_need_three(tmp_path):
    one = tmp_path / "one.csv"
    one.write_text("wavelength_nm,a\n" + "".join(f"{w},{1.0}\n" for w in range(380, 781, 5)))
    with pytest.raises(InputError, match=r"one\.csv: 1 channel found; .* at least 3 channels"):
        blend.read_channels([one])


def test_read_power_refuses_bad_files(tmp_path):
    f = tmp_path / "p.csv"
    f.write_text("channel,power_W\na,1\nb,-2\n")
    with pytest.raises(InputError, match=r"p\.csv:3: power of 'b' must be a positive"):
        blend.read_power(f, ["a", "b"])
    f.write_text("channel,power_W\na,1\n")
    with pytest.raises(InputError, match=r"p\.csv: no power for channel 'b'"):
        blend.read_power(f, ["a", "b"])


@pytest.mark.parametrize(
    "text, message",
    [
        ("6500:1800:100", "FIRST <= LAST"),
        ("1800:6500", "FIRST:LAST:STEP or a comma list"),
        ("500,600", "between 1000 and 25000 K"),
    ],
)
def test_bad_cct_paths(text, message):
    with pytest.raises(InputError, match=message):
        blend.parse_cct_path(text)


def test_cct_path_is_inclusive():
    assert blend.parse_cct_path("1800:6500:100").size == 48
    assert blend.parse_cct_path("2700,3000").tolist() == [2700.0, 3000.0]


# --------------------------------------------------------------------------- command line


def test_cli_json_drive_table(tmp_path):
    out = tmp_path / "drives.json"
    r = runner.invoke(
        app,
        [
            "blend",
            str(CHANNELS),
            "--power",
            str(POWER),
            "--cct",
            "2700,4000,6000",
            "--maximise",
            "melanopic",
            "--output",
            str(out),
        ],
    )
    assert r.exit_code == 0, r.output
    doc = json.loads(out.read_text())
    assert doc["objective"]["quantity"] == "melanopic" and doc["objective"]["sense"] == "maximise"
    assert {i["path"] for i in doc["inputs"]} == {str(CHANNELS), str(POWER)}
    assert all(len(i["sha256"]) == 64 for i in doc["inputs"])
    sp = doc["set_points"]
    assert [s["target_cct_K"] for s in sp] == [2700.0, 4000.0, 6000.0]
    for s in sp:
        assert s["status"] == "ok" and set(s["drives"]) == set(blend.read_channels([CHANNELS]).names)
        assert abs(s["cct_K"] - s["target_cct_K"]) <= 0.5 and abs(s["duv"] - s["target_duv"]) <= 1e-5
        for key in ("luminous_flux_lm", "efficacy_lm_per_W", "Ra", "R9", "Rf", "Rg", "melanopic_der"):
            assert isinstance(s[key], float)


def test_cli_csv_and_report(tmp_path):
    csv_out, pdf = tmp_path / "drives.csv", tmp_path / "tuning.pdf"
    r = runner.invoke(
        app,
        [
            "blend",
            str(CHANNELS),
            "--cct",
            "1800:6500:900",
            "--duv=-0.002",
            "--luminous",
            "300",
            "--output",
            str(csv_out),
            "--report",
            str(pdf),
        ],
    )
    assert r.exit_code == 0, r.output
    lines = csv_out.read_text().splitlines()
    assert lines[0].startswith("target_cct_K,target_duv,target_u,target_v,status,drive_royal blue,")
    assert len(lines) == 1 + 6
    from conftest import pdf_page_texts

    texts = pdf_page_texts(pdf)
    assert len(texts) == 3
    assert "Reachable region" in texts[0] and "Drive levels" in texts[0]
    assert "LER" in texts[1]  # no power given: efficacy of radiation


def test_cli_one_channel_file_is_refused(tmp_path):
    one = tmp_path / "single.csv"
    one.write_text("wavelength_nm,only\n" + "".join(f"{w},{1.0}\n" for w in range(380, 781, 5)))
    r = runner.invoke(app, ["blend", str(one), "--cct", "3000"])
    assert r.exit_code == 2
    assert r.output.count("\n") == 1 and "single.csv" in r.output and "at least 3 channels" in r.output


def test_cli_channels_on_different_grids_or_quantities_are_refused(tmp_path):
    a = tmp_path / "a.csv"
    b = tmp_path / "b.csv"
    c = tmp_path / "c.csv"
    a.write_text(
        "# quantity: radiant-flux\n# unit: W/nm\nwavelength_nm,x,y\n"
        + "".join(f"{w},1.0,2.0\n" for w in range(380, 781, 5))
    )
    b.write_text(
        "# quantity: radiant-flux\n# unit: W/nm\nwavelength_nm,z\n" + "".join(f"{w},1.0\n" for w in range(380, 781, 10))
    )
    c.write_text(
        "# quantity: irradiance\n# unit: W/(m^2 nm)\nwavelength_nm,z\n"
        + "".join(f"{w},1.0\n" for w in range(380, 781, 5))
    )
    for other, what in ((b, "different wavelength grid"), (c, "all channels must be one quantity")):
        r = runner.invoke(app, ["blend", str(a), str(other), "--cct", "3000"])
        assert r.exit_code == 2
        assert r.output.count("\n") == 1 and other.name in r.output and what in r.output


@pytest.mark.parametrize(
    "args, message",
    [
        (["--maximise", "speed"], "--maximise must be"),
        (["--minimise", "efficacy"], "--minimise must be"),
        (["--rg", "110:95"], "LO <= HI"),
        (["--power", "1,2"], "2 power values given for 5 channels"),
        (["--luminous", "bright"], "--luminous must be"),
        (["--duv", "ansii"], "--duv must be a number or 'ansi'"),
    ],
)
def test_cli_bad_options(args, message):
    r = runner.invoke(app, ["blend", str(CHANNELS), "--cct", "3000", *args])
    assert r.exit_code == 2 and r.output.count("\n") == 1 and message in r.output


def test_cli_power_needs_radiant_flux(tmp_path):
    f = tmp_path / "irr.csv"
    f.write_text(
        "# quantity: irradiance\n# unit: W/(m^2 nm)\nwavelength_nm,a,b,c\n"
        + "".join(f"{w},1.0,{w / 500},{500 / w}\n" for w in range(380, 781, 5))
    )
    r = runner.invoke(app, ["blend", str(f), "--cct", "3000", "--power", "1,1,1"])
    assert r.exit_code == 2 and "radiant flux" in r.output
