"""The procurement story end to end: the demo lot against the supplier's claims."""

import csv
import json
import re
from pathlib import Path

import pytest
from typer.testing import CliRunner

from cctkit.cli import app
from cctkit.spectra import sha256_of_file

ROOT = Path(__file__).resolve().parent.parent / "spectra"
CLAIMS = ROOT / "claims" / "northbeam-3000K.toml"
runner = CliRunner()


def test_candidate_passes_and_the_json_is_traceable():
    r = runner.invoke(app, ["verify", str(ROOT / "northbeam-nb-3000-95.csv"), "--claims", str(CLAIMS), "--json"])
    assert r.exit_code == 0, r.output
    doc = json.loads(r.stdout)
    assert doc["verdict"] == "pass" and doc["cctkit_version"]
    assert doc["claims_sha256"] == sha256_of_file(CLAIMS)
    assert doc["samples"][0]["sha256"] == sha256_of_file(ROOT / "northbeam-nb-3000-95.csv")
    metrics = [c["metric"] for c in doc["samples"][0]["checks"]]
    assert metrics == ["Ra", "R9", "luminous_flux_lm", "efficacy_lm_per_W", "ansi_quadrangle", "sdcm"]


def test_lot_fails_where_the_scenario_says(tmp_path):
    # The demo lot was made with known faults (spectra/README.md): U05 and U16 off-colour,
    # U11 low R9; U19 and U23 near the flux limit (within the guard band: inconclusive).
    files = sorted((ROOT / "lot-nb3000").glob("*.csv"))
    out = tmp_path / "verdict.csv"
    r = runner.invoke(app, ["verify", *map(str, files), "--claims", str(CLAIMS), "--json", "--output", str(out)])
    assert r.exit_code == 1
    doc = json.loads(r.stdout)
    by_name = {s["name"]: s["verdict"] for s in doc["samples"]}
    assert by_name["NB-3000-95-U05"] == "fail" and by_name["NB-3000-95-U16"] == "fail"
    assert by_name["NB-3000-95-U11"] == "fail"
    assert by_name["NB-3000-95-U19"] == "inconclusive"
    assert sum(v == "pass" for v in by_name.values()) >= 18
    assert out.read_text().splitlines()[0].startswith("name,declared_id,power_W,verdict,Ra_value")


def test_claims_typo_is_one_line(tmp_path):
    bad = tmp_path / "bad.toml"
    bad.write_text("[limits]\nRa = { min = 90 }\nR99 = { min = 50 }\n")
    r = runner.invoke(app, ["verify", str(ROOT / "northbeam-nb-3000-95.csv"), "--claims", str(bad)])
    assert r.exit_code == 2
    lines = [l for l in r.output.splitlines() if l.strip()]
    assert len(lines) == 1 and "bad.toml" in lines[0] and "R99" in lines[0]


# ---------------------------------------------------------------- terminal text, CSV, bins


def _lot():
    return [str(ROOT / "northbeam-nb-3000-95.csv"), *map(str, sorted((ROOT / "lot-nb3000").glob("*.csv")))]


def test_verify_text_fits_100_columns_with_counts_per_claim():
    r = runner.invoke(app, ["verify", *_lot(), "--claims", str(CLAIMS)])
    assert r.exit_code == 1
    lines = r.stdout.splitlines()
    assert max(len(line) for line in lines) <= 100
    doc = json.loads(runner.invoke(app, ["verify", *_lot(), "--claims", str(CLAIMS), "--json"]).stdout)
    n = len(doc["samples"])
    summary = lines[lines.index(next(x for x in lines if x.startswith("claim "))) + 1 :]
    for line, (metric, st) in zip(summary, doc["summary"].items()):
        cells = line.split()
        counts = [int(c) for c in cells if c.isdigit()][-3:]
        assert counts == [st["count_pass"], st["count_inconclusive"], st["count_fail"]], (metric, line)
        assert sum(counts) == n
    # Efficacy: 3 inconclusive in the demo lot (guard band U = 3 lm/W), so "22/25" alone would mislead.
    assert doc["summary"]["efficacy_lm_per_W"]["count_inconclusive"] > 0


def test_verify_columns_use_one_number_format_each():
    r = runner.invoke(app, ["verify", *_lot(), "--claims", str(CLAIMS)])
    rows = [line for line in r.stdout.splitlines() if re.match(r"^\s*\d+\s+NB-3000", line)]
    assert len(rows) == 25
    for line in rows:
        cells = line.split()
        ra, r9, flux, eff = (c.rstrip("!?") for c in cells[3:7])
        assert re.fullmatch(r"\d+\.\d", ra) and re.fullmatch(r"-?\d+\.\d", r9)  # Ra, R9: 1 decimal (CIE 13.3)
        assert re.fullmatch(r"\d+\.\d", flux) and re.fullmatch(r"\d+\.\d", eff)
        assert re.fullmatch(r"\d+\.\d\d", cells[-1].rstrip("!?"))  # SDCM: 2 decimals


def test_verify_wide_gives_margins_with_their_units():
    r = runner.invoke(app, ["verify", *_lot(), "--claims", str(CLAIMS), "--wide"])
    assert r.exit_code == 1
    assert re.search(r"3000K \[inside 3000K\] \+0\.\d{4} uv pass", r.stdout)  # quadrangle margin in uv
    assert re.search(r"\[>=1200\] [+-]\d+\.\d lm", r.stdout) and "NBD-" in r.stdout  # declared id column


def test_verify_csv_keeps_every_sidecar_column(tmp_path):
    out = tmp_path / "v.csv"
    r = runner.invoke(app, ["verify", *_lot(), "--claims", str(CLAIMS), "--output", str(out)])
    assert r.exit_code == 1
    rows = list(csv.DictReader(out.read_text().splitlines()))
    sidecar = {
        row["name"]: row
        for row in csv.DictReader(
            line
            for line in (ROOT / "claims" / "northbeam-3000K-power.csv").read_text().splitlines()
            if line.strip() and not line.startswith("#")
        )
    }
    for row in rows:
        side = sidecar[row["name"]]
        assert row["declared_id"] == side["declared_id"] and float(row["power_W"]) == float(side["power_W"])
    assert "efficacy_lm_per_W_U" in rows[0] and rows[0]["efficacy_lm_per_W_U"] == "3.0"


def test_bin_and_verify_count_the_same_sdcm_steps():
    r = runner.invoke(app, ["bin", *_lot(), "--json"])
    bins = {s["name"]: s["sdcm_steps"] for s in json.loads(r.stdout)["samples"]}
    doc = json.loads(runner.invoke(app, ["verify", *_lot(), "--claims", str(CLAIMS), "--json"]).stdout)
    for s in doc["samples"]:
        steps = next(c["value"] for c in s["checks"] if c["metric"] == "sdcm")
        assert abs(bins[s["name"]] - steps) < 1e-9, s["name"]
    text = runner.invoke(app, ["bin", *_lot()]).stdout
    assert "the rule verify uses" in text


def test_readme_claims_example_is_accepted(tmp_path):
    import tomllib

    from cctkit.claims import parse_claims

    readme = (ROOT.parent / "README.md").read_text()
    block = re.search(r"```toml\n(.*?)```", readme, flags=re.S).group(1)
    doc = tomllib.loads(block)
    doc.pop("samples", None)  # the sidecar file is the demo's; the keys are what this test checks
    doc["limits"].pop("efficacy_lm_per_W", None)
    doc["uncertainty"] = {k: v for k, v in doc.get("uncertainty", {}).items() if k != "efficacy_lm_per_W"}
    claims = parse_claims(doc, source="README.md")
    assert claims.chromaticity.sdcm_centre in ("iec", "ansi")
    assert claims.design_intent  # the README shows a design-intent claim


def test_design_intent_and_hue_bin_claims(tmp_path):
    claims = tmp_path / "c.toml"
    claims.write_text(
        "[limits]\nRf_h1 = { min = 80 }\nRcs_h1 = { min = -5, max = 15 }\n"
        '[design_intent]\nfidelity = "F3"\npreference = "P1"\n'
    )
    r = runner.invoke(app, ["verify", str(ROOT / "northbeam-nb-3000-95.csv"), "--claims", str(claims), "--json"])
    doc = json.loads(r.stdout)
    checks = {c["metric"]: c for c in doc["samples"][0]["checks"]}
    assert set(checks) == {"Rf_h1", "Rcs_h1", "intent_fidelity", "intent_preference"}
    inspect = json.loads(runner.invoke(app, ["inspect", str(ROOT / "northbeam-nb-3000-95.csv"), "--json"]).stdout)
    rec = inspect["spectra"][0] if "spectra" in inspect else inspect[0]
    assert checks["Rf_h1"]["value"] == pytest.approx(rec["Rf_h"][0])
    assert checks["Rcs_h1"]["value"] == pytest.approx(rec["Rcs_h"][0])  # percent, as TM-30 prints it
    from cctkit.rendering import intents

    lv = intents.levels(rec["Rf"], rec["Rg"], rec["Rf_h"][0], rec["Rcs_h"][0])
    got = int(lv["fidelity"])
    assert checks["intent_fidelity"]["value"] == (f"F{got}" if got else "none")
    assert checks["intent_fidelity"]["result"] == ("pass" if 0 < got <= 3 else "fail")
    assert r.exit_code == (0 if doc["verdict"] == "pass" else 1)
    bad = tmp_path / "bad.toml"
    bad.write_text('[design_intent]\npreference = "F1"\n')
    r = runner.invoke(app, ["verify", str(ROOT / "northbeam-nb-3000-95.csv"), "--claims", str(bad)])
    assert r.exit_code == 2 and "expected a level P1, P2 or P3" in r.output
