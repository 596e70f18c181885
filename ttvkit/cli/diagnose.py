"""The ``diagnose`` sub-command of ``ttvkit``."""

from __future__ import annotations

import argparse
import sys

__all__ = ["add_commands"]

_EPILOG = """\
examples:
  ttvkit diagnose times.ecsv --system star.toml --out diagnosis
  ttvkit diagnose compiled.csv --system star.toml --out diagnosis --relabel "Old survey=BJD_UTC"
  ttvkit diagnose times.ecsv --system star.toml --out quick --no-sample --json
  ttvkit diagnose times.ecsv --system star.toml --out d --calibrate 100   # how far to trust the verdict
  ttvkit diagnose times.ecsv --system star.toml --out d --light-curves lc1.csv lc2.csv --ephemeris T0,P
  ttvkit diagnose eclipses.csv --system binary.toml --out d --activity brightness.csv   # an eclipsing binary

Writes DIR/report.html (self-contained), the figures as PNG and PDF,
DIR/diagnosis.json and DIR/timings_bjd_tdb.ecsv.  The verdict is a
plausibility screen, not a proof.  The target's coordinates come from the
table, from --ra/--dec, or from the system file's [star] ra and dec.
"""


def add_commands(sub) -> None:
    """Register ``diagnose``."""
    from ttvkit.cli.common import add_sampler_options, add_table_options

    p = sub.add_parser("diagnose", help="what drives the timing drift? fit, test against physics, report",
                       description="Fit every timing hypothesis, test each against the physics of the "
                                   "star and planet, forecast when new data separate the survivors and "
                                   "write a report.", epilog=_EPILOG,
                       formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("table", help="timing table (ECSV written by ttvkit, or CSV with --standard)")
    p.add_argument("--system", required=True, help="system file (TOML, values with units)")
    p.add_argument("--out", required=True, metavar="DIR", help="report folder (new or empty)")
    p.add_argument("--force", action="store_true", help="replace a non-empty DIR")
    p.add_argument("--light-curves", nargs="+", default=[], metavar="LIGHTCURVE",
                   help="also time these light curves (CSV/ECSV/FITS, BJD_TDB) and add their mid-times")
    p.add_argument("--shape", metavar="SHAPE.toml",
                   help="transit shape for --light-curves (default: fitted to the light curves)")
    p.add_argument("--no-sample", action="store_true", help="skip posterior sampling (faster)")
    add_sampler_options(p)
    p.add_argument("--seed", type=int, default=0, help="sampler seed (default 0)")
    p.add_argument("--years", type=float, default=10.0, help="forecast horizon in years (default 10)")
    p.add_argument("--precision", type=float, help="future timing precision in seconds "
                                                   "(default: median of the recent uncertainties)")
    p.add_argument("--robust", action="store_true", help="Student-t likelihood (outliers cost little)")
    p.add_argument("--jitter", action="store_true", help="fit an extra white timing noise")
    p.add_argument("--no-excess-noise", action="store_true",
                   help="do not add an excess-noise term when chi2 is too large for its dof (p < 0.01)")
    p.add_argument("--no-progress", action="store_true", help="no progress bars")
    p.add_argument("--json", action="store_true", help="print diagnosis.json's content on stdout")
    p.add_argument("--fit-perturber", action="store_true",
                   help="also fit the n-body-perturber hypothesis (a second planet integrated directly; "
                        "seeded from the map with --perturbers). Slow: minutes, far longer sampled "
                        "(--no-sample or fewer --steps)")
    p.add_argument("--perturber-steps", type=int, default=500,
                   help="sampler steps of the n-body-perturber chain (default 500, not extended; about "
                        "0.7-1.8 s each for 20 years of a 2-d planet on two cores)")
    p.add_argument("--calibrate", type=int, metavar="N", default=0,
                   help="also calibrate the verdict on this table's epochs and errors and add it to the report: "
                        "N tables without a signal and N at each of 5 injected decay rates (6N unsampled "
                        "comparisons of the diagnosis' hypotheses on every core: several minutes for N = 20; "
                        "N >= 10)")
    p.add_argument("--activity", nargs="+", default=[], metavar="FILE[:COLUMN]",
                   help="activity-indicator series (CSV/ECSV: a time column 'time' in BJD_TDB or 'year', a value "
                        "column, its error column) to test against the period change; each adds a check to the "
                        "activity hypotheses and a figure. Name the value column after a colon when the file "
                        "has several")
    p.add_argument("--perturbers", action="store_true",
                   help="also map the perturbing planets the timing allows (N-body; minutes)")
    from ttvkit.cli.perturbers import add_map_options

    add_map_options(p)
    add_table_options(p)
    p.set_defaults(func=_cmd_diagnose)


def _cmd_diagnose(args) -> int:
    from ttvkit.cli.common import (
        check_sampler_options,
        hypothesis_pool,
        parse_target,
        read_table_from_args,
        require_rows,
        table_edits,
    )
    from ttvkit.diagnosis.diagnose import DiagnosisOptions
    from ttvkit.errors import InputError
    from ttvkit.inference.likelihood import Likelihood
    from ttvkit.io.outdir import check_folder
    from ttvkit.physics import System
    from ttvkit.pipeline import run_diagnosis

    if not args.years > 0:  # before any reading or fitting
        raise InputError(f"--years {args.years:g}: the forecast horizon must be positive")
    if args.calibrate and args.calibrate < 10:
        raise InputError(f"--calibrate {args.calibrate}: a rate from fewer than 10 simulated tables says "
                         "little; give at least 10 (100 or more for a rate to quote)")
    if args.precision is not None and not args.precision > 0:
        raise InputError(f"--precision {args.precision:g}: a timing precision must be positive (seconds)")

    activity_files = [_split_column(a) for a in args.activity]
    check_folder(args.out, args.force, inputs=[args.table, args.system, args.shape, *args.light_curves,
                                               *(f for f, _ in activity_files)])
    system = System.from_toml(args.system)
    from ttvkit.timing.indicators import read_indicator_series

    activity = tuple(read_indicator_series(f, value=c) for f, c in activity_files)
    if parse_target(args) is None and system.star.ra is not None and system.star.dec is not None:
        args.ra, args.dec = str(system.star.ra.to_value("deg")), str(system.star.dec.to_value("deg"))
    table = read_table_from_args(args)
    require_rows(table, 4, args.table)
    check_sampler_options(args)
    if args.perturber_steps < 100:
        raise InputError("--perturber-steps must be at least 100")
    if args.light_curves:
        from ttvkit.lightcurves.measure import measure
        from ttvkit.lightcurves.midtime import shape_from_toml
        from ttvkit.timing.table import Ephemeris, TimingTable

        ephemeris = Ephemeris.parse(args.ephemeris) if args.ephemeris else table.ephemeris
        if ephemeris is None:
            raise InputError("--light-curves needs --ephemeris T0,P (or a table that stores one)")
        shape = shape_from_toml(args.shape) if args.shape else None
        measured, _ = measure(args.light_curves, ephemeris, shape=shape, fit_shape=shape is None,
                              target=table.target, progress=not args.no_progress and not args.json)
        table = TimingTable.concatenate([table, measured])
    say = (lambda *a: print(*a, file=sys.stderr)) if args.json else print
    like = Likelihood("student-t" if args.robust else "gaussian", jitter=args.jitter)
    map_executor = None
    perturber_map = None
    if args.perturbers:
        from ttvkit.cli.perturbers import map_options

        perturber_map, map_executor = map_options(args)
    options = DiagnosisOptions(sampled=not args.no_sample, n_steps=args.steps, max_steps=args.max_steps,
                               seed=args.seed, forecast_years=args.years, timing_precision_s=args.precision,
                               likelihood=like,
                               progress=not args.no_progress and not args.json, perturber_map=perturber_map,
                               fit_perturber=args.fit_perturber, perturber_steps=args.perturber_steps,
                               excess_noise=not args.no_excess_noise, activity=activity)
    calibration = None
    if args.calibrate:
        from ttvkit.diagnosis.calibration import CalibrationOptions

        calibration = CalibrationOptions(n_null=args.calibrate, n_per_amplitude=args.calibrate, seed=args.seed)
    edits = table_edits(args)
    pool = hypothesis_pool(args, options.sampled)
    try:
        run = run_diagnosis(table, system, args.out, options, edits=edits, force=args.force,
                            executor=pool, map_executor=map_executor, say=say, calibration=calibration)
    finally:
        if pool is not None:
            pool.shutdown()
        if map_executor is not None:
            map_executor.shutdown()
    diagnosis, paths = run.diagnosis, run.paths
    if args.json:
        print((paths["diagnosis.json"]).read_text())
        return 0
    print(f"verdict: {diagnosis.summary()}")
    for a in diagnosis.assessments:
        print(f"  {a.name:40s} ΔBIC {a.delta_bic:7.1f}  {a.verdict}")
    print(f"report: {paths['report.html']}")
    print("(a plausibility screen, not a proof)")
    return 0


def _split_column(text: str) -> tuple:
    """'file.csv:column' → (file, column); a plain path (or a Windows drive letter) → (path, None)."""
    import os

    head, sep, tail = text.rpartition(":")
    if sep and head and not os.path.exists(text) and "/" not in tail and "\\" not in tail:
        return head, tail
    return text, None
