"""The procurement story end to end: the demo lot against the supplier's claims."""

import json
from pathlib import Path

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
    assert out.read_text().splitlines()[0].startswith("name,verdict,Ra_value")


def test_claims_typo_is_one_line(tmp_path):
    bad = tmp_path / "bad.toml"
    bad.write_text('[limits]\nRa = { min = 90 }\nR99 = { min = 50 }\n')
    r = runner.invoke(app, ["verify", str(ROOT / "northbeam-nb-3000-95.csv"), "--claims", str(bad)])
    assert r.exit_code == 2
    lines = [l for l in r.output.splitlines() if l.strip()]
    assert len(lines) == 1 and "bad.toml" in lines[0] and "R99" in lines[0]
