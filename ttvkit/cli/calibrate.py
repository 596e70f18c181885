"""The ``calibrate`` sub-command of ``ttvkit``: injection and recovery for one table."""

from __future__ import annotations

import argparse
import json

__all__ = ["add_commands"]

_EPILOG = """\
examples:
  ttvkit calibrate times.ecsv --out calibration
  ttvkit calibrate times.ecsv --out cal15 --error-scale 1.5 --jitter
  ttvkit calibrate times.ecsv --out quick --nulls 100 --per-amplitude 50 --amplitudes 2,5 --json

Keeps the table's epochs, kinds and stated errors, simulates null tables and
tables with an injected signal, runs the verdict's data rules on each and
writes DIR/calibration.json and DIR/calibration.png/.pdf: how often each
hypothesis is called needed when there is nothing, and how large a signal
is recovered 50% and 90% of the time.
"""


def add_commands(sub) -> None:
    """Register ``calibrate``."""
    from ttvkit.cli.common import add_table_options

    p = sub.add_parser("calibrate", help="how far to trust a verdict: injection and recovery on this table",
                       description="Simulate null and injected tables with this table's epochs, kinds and "
                                   "errors and report false alarms and recovery.", epilog=_EPILOG,
                       formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("table", help="timing table (ECSV written by ttvkit, or CSV with --standard)")
    p.add_argument("--out", required=True, metavar="DIR", help="output folder (new or empty)")
    p.add_argument("--force", action="store_true", help="replace a non-empty DIR")
    p.add_argument("--nulls", type=int, default=200, help="null tables (default 200)")
    p.add_argument("--per-amplitude", type=int, default=200, help="tables per amplitude (default 200)")
    p.add_argument("--amplitudes", default="1,2,3,5,8",
                   help="injected amplitudes in σ of their detectability (default 1,2,3,5,8)")
    p.add_argument("--inject", default="orbital-decay",
                   help="injected hypotheses, comma-separated (orbital-decay, sinusoidal-modulation, "
                        "near-resonant-perturber, apsidal-precession)")
    p.add_argument("--error-scale", type=float, default=1.0,
                   help="true scatter / stated errors (1.5: errors understated 1.5x)")
    p.add_argument("--jitter", action="store_true", help="fit an extra white timing noise in every comparison")
    p.add_argument("--no-excess-noise", action="store_true",
                   help="do not decide per simulated table, as diagnose does, whether excess-noise terms are "
                        "needed (chi2 too large for its dof, p < 0.01)")
    p.add_argument("--seed", type=int, default=0)
    p.add_argument("--workers", type=int, help="worker processes (default: every core)")
    p.add_argument("--no-progress", action="store_true", help="no progress bar")
    p.add_argument("--json", action="store_true", help="print calibration.json's content on stdout")
    add_table_options(p)
    p.set_defaults(func=_cmd_calibrate)


def _cmd_calibrate(args) -> int:
    from concurrent.futures import ProcessPoolExecutor

    from ttvkit.cli.common import read_table_from_args
    from ttvkit.diagnosis.calibration import CalibrationOptions, calibrate
    from ttvkit.errors import InputError
    from ttvkit.inference.likelihood import Likelihood
    from ttvkit.io.outdir import staged_folder
    from ttvkit.report.calibration_figure import calibration_figure
    from ttvkit.report.figures import save_figure

    try:
        amplitudes = tuple(float(a) for a in args.amplitudes.split(","))
    except ValueError:
        raise InputError(f"--amplitudes {args.amplitudes!r}: give numbers separated by commas, e.g. 1,2,5") from None
    if args.workers is not None and args.workers < 1:
        raise InputError("--workers must be at least 1")
    table = read_table_from_args(args)
    options = CalibrationOptions(n_null=args.nulls, n_per_amplitude=args.per_amplitude, amplitudes=amplitudes,
                                 inject=tuple(s.strip() for s in args.inject.split(",") if s.strip()),
                                 error_scale=args.error_scale, seed=args.seed,
                                 likelihood=Likelihood(jitter=True) if args.jitter else None,
                                 excess_noise=not args.no_excess_noise)
    with staged_folder(args.out, args.force) as stage, ProcessPoolExecutor(max_workers=args.workers) as pool:
        result = calibrate(table, options, executor=pool, progress=not args.no_progress and not args.json)
        text = json.dumps(result.to_dict(), indent=2)
        (stage / "calibration.json").write_text(text + "\n", encoding="utf-8")
        save_figure(calibration_figure(result), stage / "calibration")
    if args.json:
        print(text)
        return 0
    print(f"false alarms on {result.n_null} null tables (any hypothesis called needed): "
          f"{result.false_alarms['any']:.1%}")
    for name, rows in result.recovery.items():
        found = ", ".join(f"{a:g}σ: {f:.0%}" for a, f in rows)
        print(f"{name} (1σ = {result.sigma_size(name)}): recovered {found}; "
              f"50% at {result.found_at(name, '50%')}, 90% at {result.found_at(name, '90%')}")
    if result.coverage is not None:
        print(f"68% intervals of dP/dt cover the truth {result.coverage:.1%} of the time")
    print(f"written: {args.out}/calibration.json, calibration.png, calibration.pdf")
    return 0

