"""The demo job: the Harbourside Lantern Hall scenario from spectra to reports.

``python -m cctkit.demo_job [--out reports]`` (what ``make demo`` runs) reads the demo
spectra in ``spectra/`` (made by :mod:`cctkit.demo`), and writes under ``--out``:

* ``harbourside-shortlist.pdf`` / ``.png`` / ``.json`` / ``.csv`` -- the three candidate
  downlights, a page each plus a comparison page, the summary picture and every number;
* ``tw-lab.pdf`` / ``.json`` -- the lab's tunable-white fixture at its five set points;
* ``nb3000-lot-verdict.json`` / ``.csv`` / ``.txt`` and ``nb3000-lot.pdf`` -- the delivered
  lot of NB-3000-95 checked against the supplier's claims (the PDF opens with the verdict pages);
* ``nb3000-lot-bins.csv`` -- the lot binned by ANSI quadrangle and SDCM step;
* ``hl-wash5-tuning.pdf`` / ``.png`` / ``.json`` / ``.csv`` -- the five-channel stage-wash fixture
  tuned from 1800 K to 6500 K on the Planckian locus for the highest Rf with Rg 95-110, at
  constant output (drive table and tuning report);
* ``nb3000-uncertainty.json`` / ``.csv`` / ``.pdf`` -- the shortlisted NB-3000-95 with the
  uncertainty of every number under the lab's instrument model (``spectra/models/``), and
  ``nb3000-report-u.pdf``, its full report with U (k = 2) in the headline strip.

The job is a script of library calls, the same ones the command line makes.  It replaces
its own previous outputs (never the spectra).
"""

from __future__ import annotations

import argparse
import sys
import time
from dataclasses import replace
from pathlib import Path

CANDIDATES = ("northbeam-nb-3000-95.csv", "caldera-cl-2700-80.csv", "vell-vo-4000-90.csv")
TUNABLE = "tw-lab-setpoints.csv"
LOT_DIR = "lot-nb3000"
CLAIMS = "claims/northbeam-3000K.toml"
PROFILE = "harbourside-lab-profile.toml"  # sign-off fields and the report date: same bytes on every run
WASH = "hl-wash5/hl-wash5-channels.csv"
WASH_POWER = "hl-wash5/hl-wash5-power.csv"
LAB_MODEL = "models/harbourside-lab-spectro.toml"


def _used(records) -> list:
    """The interpolation each record was actually resampled by (for the provenance block)."""
    return [r.get("interpolation") for r in records]


def _say(message: str) -> None:
    print(message, file=sys.stderr, flush=True)


def run(spectra_dir: Path, out: Path, *, date: str | None = None) -> dict[str, Path]:
    """Run the whole demo; returns the files written by name."""
    import numpy as np

    from .analysis import analyse, analyse_files, provenance, records_csv
    from .binning import bin_chromaticities
    from .claims import format_verdict, load_claims, verdict_csv, verify
    from .formats import dumps
    from .readers import read_spectra
    from .report import build_report
    from .report.profile import load_profile
    from .safe_io import atomic_write

    out.mkdir(parents=True, exist_ok=True)
    signoff = load_profile(spectra_dir / PROFILE)
    written: dict[str, Path] = {}

    def put(name: str, text: str) -> None:
        path = atomic_write(out / name, text, overwrite=True)
        written[name] = path
        _say(f"  wrote {path}")

    t0 = time.perf_counter()
    files = [spectra_dir / f for f in CANDIDATES]
    _say(f"[1/6] candidate downlights: {', '.join(f.name for f in files)}")
    shortlist = analyse_files(files)
    recs = shortlist.records()
    put("harbourside-shortlist.json", dumps({**provenance(used=_used(recs)), "spectra": recs}))
    put("harbourside-shortlist.csv", records_csv(recs))
    for suffix in (".pdf", ".png"):
        path = out / f"harbourside-shortlist{suffix}"
        build_report(shortlist, path, overwrite=True, inputs=files, date=date, records=recs, signoff=signoff)
        written[path.name] = path
        _say(f"  wrote {path}")

    _say(f"[2/6] tunable-white fixture: {TUNABLE}")
    tw_file = spectra_dir / TUNABLE
    tw = analyse(read_spectra(tw_file))
    tw_recs = tw.records()
    put("tw-lab.json", dumps({**provenance(used=_used(tw_recs)), "spectra": tw_recs}))
    build_report(
        tw,
        out / "tw-lab.pdf",
        overwrite=True,
        inputs=[tw_file],
        date=date,
        records=tw_recs,
        signoff=signoff.merged(title="Tunable-white fixture at five set points"),
    )
    written["tw-lab.pdf"] = out / "tw-lab.pdf"
    _say(f"  wrote {out / 'tw-lab.pdf'}")

    lot_files = [spectra_dir / CANDIDATES[0], *sorted((spectra_dir / LOT_DIR).glob("*.csv"))]
    _say(f"[3/6] delivered lot against the supplier's claims: {len(lot_files)} samples, {CLAIMS}")
    claims = load_claims(spectra_dir / CLAIMS)
    lot = analyse_files(lot_files)
    lot_recs = lot.records()
    verdict = verify(lot_recs, claims).as_dict()
    put("nb3000-lot-verdict.json", dumps({**provenance(used=_used(lot_recs)), **verdict}))
    put("nb3000-lot-verdict.csv", verdict_csv(verdict, claims))
    put("nb3000-lot-verdict.txt", format_verdict(verdict, claims) + "\n")
    build_report(
        lot,
        out / "nb3000-lot.pdf",
        overwrite=True,
        inputs=[*lot_files, spectra_dir / CLAIMS],
        date=date,
        verdict=verdict,
        claims=claims,
        records=lot_recs,
        signoff=signoff.merged(title="NB-3000-95 delivered lot against the supplier's claims"),
    )
    written["nb3000-lot.pdf"] = out / "nb3000-lot.pdf"
    _say(f"  wrote {out / 'nb3000-lot.pdf'}")
    failing = [s["name"] for s in verdict["samples"] if s["verdict"] != "pass"]
    _say(f"  verdict: {verdict['verdict']}; not passing: {', '.join(failing) or 'none'}")

    _say("[4/6] binning the lot (ANSI C78.377 quadrangle, SDCM step)")
    bins = bin_chromaticities(lot.xy, names=lot.spectra.names)
    put("nb3000-lot-bins.csv", bins.csv())

    from .blend import read_channels, solve_blend_path
    from .report.tuning import build_tuning_report

    wash_files = [spectra_dir / WASH, spectra_dir / WASH_POWER]
    _say(f"[5/6] tuning the five-channel HL-Wash5 from 1800 K to 6500 K (max Rf, Rg 95-110): {WASH}")
    channels = read_channels([wash_files[0]], power=wash_files[1])
    tuning = solve_blend_path(channels, np.arange(1800.0, 6501.0, 100.0), 0.0, objective="fidelity", rg=(95.0, 110.0))
    tuning_doc = tuning.document()
    put("hl-wash5-tuning.json", dumps(tuning_doc))
    put("hl-wash5-tuning.csv", tuning.csv())
    for suffix in (".pdf", ".png"):
        path = out / f"hl-wash5-tuning{suffix}"
        build_tuning_report(
            tuning,
            path,
            overwrite=True,
            inputs=wash_files,
            date=date,
            document=tuning_doc,
            title="Tuning: HL-Wash5 stage wash, 1800-6500 K",
        )
        written[path.name] = path
        _say(f"  wrote {path}")

    _say(f"[6/6] uncertainty of {CANDIDATES[0]} under the lab's model {LAB_MODEL}")
    from .report.uncertainty import write_uncertainty_report
    from .uncertainty import load_model, monte_carlo

    model = load_model(spectra_dir / LAB_MODEL)
    model = replace(model, source=str(Path(spectra_dir.name) / LAB_MODEL))  # no machine-specific path in outputs
    unc = monte_carlo(
        read_spectra(files[0]), model, progress=lambda i, n, m: _say(f"  {m} draws (JCGM 101 adaptive procedure)")
    )
    put("nb3000-uncertainty.json", dumps(unc.document()))
    put("nb3000-uncertainty.csv", unc.csv())
    write_uncertainty_report(
        unc,
        out / "nb3000-uncertainty.pdf",
        overwrite=True,
        inputs=[files[0], spectra_dir / LAB_MODEL],
        date=date or signoff.date,
    )
    written["nb3000-uncertainty.pdf"] = out / "nb3000-uncertainty.pdf"
    _say(f"  wrote {out / 'nb3000-uncertainty.pdf'}")
    # The same run in the full report: U (k = 2) in the headline strip, the uncertainty page after it.
    nb = analyse_files(files[:1])
    build_report(
        nb,
        out / "nb3000-report-u.pdf",
        overwrite=True,
        inputs=[files[0], spectra_dir / LAB_MODEL],
        date=date,
        signoff=signoff.merged(title="NB-3000-95 with measurement uncertainty"),
        uncertainty=unc,
    )
    written["nb3000-report-u.pdf"] = out / "nb3000-report-u.pdf"
    _say(f"  wrote {out / 'nb3000-report-u.pdf'}")
    _say(f"done in {time.perf_counter() - t0:.1f} s")
    return written


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(prog="python -m cctkit.demo_job", description=__doc__.splitlines()[0])
    parser.add_argument("--spectra", type=Path, default=Path("spectra"), help="folder of the demo spectra")
    parser.add_argument("--out", type=Path, default=Path("reports"), help="folder for the reports")
    parser.add_argument("--date", default=None, help="report date (YYYY-MM-DD; default the profile's)")
    args = parser.parse_args(argv)
    from .errors import CctkitError

    try:
        run(args.spectra, args.out, date=args.date)
    except CctkitError as exc:
        print(f"cctkit demo: {exc}", file=sys.stderr)
        return 2
    return 0


if __name__ == "__main__":
    sys.exit(main())
