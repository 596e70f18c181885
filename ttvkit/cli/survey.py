"""The ``survey`` sub-command of ``ttvkit``: many targets, one diagnosis each, one summary."""

from __future__ import annotations

import argparse

__all__ = ["add_commands"]

_EPILOG = """\
examples:
  ttvkit survey manifest.csv --out survey
  ttvkit survey targets/ --out survey --workers 4 --no-sample
  ttvkit survey manifest.csv --out survey --scheduler tcp://10.0.0.5:8786
  ttvkit survey manifest.csv --out survey --no-sample --calibrate 20

A manifest is a CSV or ECSV with columns target, table, system (paths
relative to the manifest) and, optionally, per-target options: sampled,
n_steps, seed, forecast_years, timing_precision_s, now, hypotheses (names
separated by ';').  A folder holds NAME.ecsv (or NAME.csv) beside NAME.toml
for every target.  Writes DIR/targets/NAME/ (each what 'ttvkit diagnose'
writes), DIR/summary.ecsv and DIR/index.html.  Run the same command again
after an interruption: finished targets are skipped (--redo runs them all),
failed ones are tried again.  Exit status 3 when any target failed (the
others are done).  The verdict is a plausibility screen, not a proof.
"""


def add_commands(sub) -> None:
    """Register ``survey``."""
    from ttvkit.cli.common import add_sampler_options

    p = sub.add_parser("survey", help="diagnose many targets (dask; resumable) and summarise them",
                       description="Diagnose every target of a manifest or folder as one task on "
                                   "dask.distributed, each into its own report folder, and write one "
                                   "summary table and an index page.", epilog=_EPILOG,
                       formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("targets", help="manifest (CSV/ECSV) or folder of NAME.ecsv + NAME.toml")
    p.add_argument("--out", required=True, metavar="DIR", help="survey folder (new, empty, or an earlier run)")
    p.add_argument("--workers", type=int, default=2, help="worker processes of the local cluster (default 2)")
    p.add_argument("--scheduler", metavar="ADDRESS", help="use a running dask scheduler instead of a local cluster")
    p.add_argument("--redo", action="store_true", help="diagnose finished targets again")
    p.add_argument("--no-sample", action="store_true", help="skip posterior sampling (faster)")
    add_sampler_options(p)
    p.add_argument("--seed", type=int, default=0, help="sampler seed (default 0)")
    p.add_argument("--years", type=float, default=10.0, help="forecast horizon in years (default 10)")
    p.add_argument("--now", type=float, metavar="BJD_TDB",
                   help="start the forecasts at this BJD_TDB (default: the present)")
    p.add_argument("--robust", action="store_true", help="Student-t likelihood (outliers cost little)")
    p.add_argument("--calibrate", type=int, metavar="N", default=0,
                   help="also calibrate each target's verdict: N constant-period tables and N at each of 5 "
                        "injected decay rates, with the target's epochs and errors (slow: about 6N "
                        "unsampled diagnoses a target); adds false_alarm_rate and decay_found_half_the_time")
    p.add_argument("--no-progress", action="store_true", help="no progress bar")
    p.set_defaults(func=_cmd_survey)


def _cmd_survey(args) -> int:
    from ttvkit.cli.common import check_sampler_options
    from ttvkit.diagnosis.diagnose import DiagnosisOptions
    from ttvkit.errors import InputError
    from ttvkit.inference.likelihood import Likelihood
    from ttvkit.survey import run_survey

    check_sampler_options(args)
    options = DiagnosisOptions(sampled=not args.no_sample, n_steps=args.steps, max_steps=args.max_steps,
                               seed=args.seed,
                               forecast_years=args.years, now=args.now, progress=False,
                               likelihood=Likelihood("student-t") if args.robust else None)
    calibration = None
    if args.calibrate:
        from ttvkit.diagnosis.calibration import CalibrationOptions

        if args.calibrate < 10:
            raise InputError(f"--calibrate {args.calibrate}: a rate from fewer than 10 simulated tables says "
                             "little; give at least 10 (20 or more for a rate to quote)")
        calibration = CalibrationOptions(n_null=args.calibrate, n_per_amplitude=args.calibrate, seed=args.seed,
                                         likelihood=options.likelihood)
    run = run_survey(args.targets, args.out, options, scheduler=args.scheduler, n_workers=args.workers,
                     redo=args.redo, progress=not args.no_progress, calibration=calibration)
    print(f"survey: {run.ran} diagnosed now, {run.skipped} finished earlier, {run.failed} failed")
    for _, row in run.summary.iterrows():
        what = row["best"] if row["status"] == "done" else f"failed: {row['error']}"
        print(f"  {row['target']:24s} {what}")
    print(f"summary: {run.paths['summary.ecsv']}")
    print(f"index:   {run.paths['index.html']}")
    print("(a plausibility screen, not a proof)")
    return 0 if run.failed == 0 else 3
