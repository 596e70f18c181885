"""The ``perturbers`` sub-command of ``ttvkit``: the mass–period map of unseen planets."""

from __future__ import annotations

import argparse
import json
import sys

__all__ = ["add_commands", "add_map_options", "map_options"]

_EPILOG = """\
examples:
  ttvkit perturbers times.ecsv --system system.toml --out perturbers/
  ttvkit perturbers times.ecsv --system system.toml --out perturbers/ --periods 800 --phases 4 --json
  ttvkit perturbers times.ecsv --system system.toml --out p/ --range 0.5,5 --workers 2

Integrates the transiting planet with a perturber of a small reference mass
for every grid point (perturber period x starting phase), scales the
transit-time variations linearly with mass and fits each point by least
squares.  Writes perturber_map.ecsv (per period: best and largest allowed
mass, RV semi-amplitude, Hill stability), perturber_grid.ecsv (per point),
perturber_map.png/.pdf and perturber_map.json.  Slow: minutes on two cores
for 2000 points over a decade of transits.  A plausibility screen of where a
planet could hide, not a detection.
"""


def add_map_options(p: argparse.ArgumentParser) -> None:
    """Options of the map shared by ``perturbers`` and ``diagnose --perturbers``."""
    p.add_argument("--periods", type=int, default=500, metavar="N",
                   help="number of perturber periods evenly spaced in log period (default 500); points "
                   "packed around the resonances are added on top")
    p.add_argument("--phases", type=int, default=4, help="starting phases per period (default 4)")
    p.add_argument("--range", default="0.3,10", metavar="LOW,HIGH",
                   help="perturber periods as multiples of the transiting planet's (default 0.3,10)")
    p.add_argument("--perturber-eccentricity", type=float, default=0.0, metavar="E",
                   help="the perturber's fixed eccentricity (default 0)")
    p.add_argument("--delta-chi2", type=float, default=9.0,
                   help="chi2 rise above the constant-period fit that bounds the allowed mass (default 9)")
    p.add_argument("--workers", type=int,
                   help="processes (default: all cores); in diagnose also the processes that fit and sample "
                        "the hypotheses at once (default there: one per core, up to 4, when sampling)")


def map_options(args):
    """The map's options and its executor (or None) from parsed ``--periods ... --workers``."""
    from concurrent.futures import ProcessPoolExecutor

    from ttvkit.diagnosis.perturbers import PerturberMapOptions
    from ttvkit.errors import InputError

    try:
        low, high = (float(x) for x in args.range.split(","))
    except ValueError:
        raise InputError(f"--range {args.range!r} must be LOW,HIGH (multiples of the period)") from None
    if not 0 < low < high:
        raise InputError(f"--range {args.range!r}: need 0 < LOW < HIGH")
    if args.periods < 10 or args.phases < 1:
        raise InputError("--periods must be at least 10 and --phases at least 1")
    if not 0 <= args.perturber_eccentricity < 0.9:
        raise InputError("--perturber-eccentricity must be in [0, 0.9)")
    if args.delta_chi2 <= 0:
        raise InputError("--delta-chi2 must be positive")
    if args.workers is not None and args.workers < 1:
        raise InputError("--workers must be at least 1")
    options = PerturberMapOptions(n_periods=args.periods, low=low, high=high, n_phases=args.phases,
                                  eccentricity=args.perturber_eccentricity, delta_chi2=args.delta_chi2)
    executor = ProcessPoolExecutor(max_workers=args.workers) if args.workers is not None else None
    return options, executor


def add_commands(sub) -> None:
    """Register ``perturbers``."""
    from ttvkit.cli.common import add_table_options

    p = sub.add_parser("perturbers", help="which unseen planets could perturb the transit times? (N-body map)",
                       description="Map, over perturber period, the perturbing-planet masses the timing "
                                   "prefers and the largest it allows, with their RV signature and Hill "
                                   "stability, from batched N-body integrations.",
                       epilog=_EPILOG, formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("table", help="timing table (ECSV written by ttvkit, or CSV with --standard)")
    p.add_argument("--system", required=True, help="system file (TOML, values with units)")
    p.add_argument("--out", required=True, metavar="DIR", help="output folder (new or empty)")
    p.add_argument("--force", action="store_true", help="replace a non-empty DIR")
    add_map_options(p)
    p.add_argument("--no-progress", action="store_true", help="no progress bar")
    p.add_argument("--json", action="store_true", help="print perturber_map.json's content on stdout")
    add_table_options(p)
    p.set_defaults(func=_cmd_perturbers)


def _cmd_perturbers(args) -> int:
    from ttvkit.cli.common import read_edited_table
    from ttvkit.diagnosis.perturbers import map_perturbers
    from ttvkit.io.outdir import check_folder, staged_folder
    from ttvkit.physics import System
    from ttvkit.report.figures import perturber_map_figure, save_figure

    check_folder(args.out, args.force, inputs=[args.table, args.system])
    system = System.from_toml(args.system)
    table, edits, notes = read_edited_table(args)
    options, executor = map_options(args)
    try:
        with staged_folder(args.out, args.force, inputs=[args.table, args.system]) as stage:
            pmap = map_perturbers(table, system, options, executor=executor,
                                  progress=not args.no_progress and not args.json)
            pmap.write(stage)
            save_figure(perturber_map_figure(pmap), stage / "perturber_map")
            text = json.dumps({**pmap.to_dict(), "table_edits": edits.to_dict(), "table_notes": notes},
                              indent=2) + "\n"
            (stage / "perturber_map.json").write_text(text)
    finally:
        if executor is not None:
            executor.shutdown()
    if args.json:
        sys.stdout.write(text)
        return 0
    best = pmap.to_dict()["best_point"]
    if best is None:
        print(f"perturbers: {pmap.n_points} grid points; none that the RV limits and Hill stability allow "
              f"improves the fit")
    else:
        print(f"perturbers: {pmap.n_points} grid points; best allowed: {best['mass_mearth']:.3g} Earth masses "
              f"at {best['period_ratio']:.3f}x the period (chi2 gain {best['delta_chi2_gain']:.1f}, "
              f"Hill-stable, not excluded by the RV limits)")
    for note in pmap.notes:
        print(f"  {note}")
    print(f"wrote {args.out}/perturber_map.ecsv, perturber_grid.ecsv, perturber_map.png/.pdf, perturber_map.json")
    print("(a plausibility screen, not a detection)")
    return 0
