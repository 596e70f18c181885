"""The ``ttvkit`` command.

Each sub-command is a small function that reads its arguments, calls the
library and prints.  Any :class:`~ttvkit.errors.TtvkitError` becomes one
line on stderr and exit status 2; ``--debug`` shows the traceback instead.
"""

from __future__ import annotations

import argparse
import json
import sys
import textwrap
import warnings

from ._version import __version__
from .errors import InputError, TtvkitError, TtvkitWarning

__all__ = ["main", "build_parser"]

_EPILOG_CONVERT = """\
examples:
  ttvkit convert compiled.csv --standard HJD_UTC --ra 287.41 --dec 31.18 --out times.ecsv
  ttvkit convert mission.csv --standard BTJD --ephemeris 2456000.314,1.87342 --out t.ecsv
  ttvkit convert odd.csv --column time=HJD --column uncertainty=err \\
      --uncertainty-unit min --standard HJD_UTC --ra 14:30:12.3 --dec -12:01:02 --out t.ecsv

The file's columns are time and uncertainty (days unless the header says
'uncertainty [s]'), and optionally epoch, kind, source and standard (per row).
Standards: FRAME_SCALE with FRAME in JD, MJD, HJD, BJD and SCALE in UTC, TT,
TDB, a day offset such as BJD_TDB-2457000, or BTJD / BKJD.
"""

_EPILOG_DEMO = """\
examples:
  ttvkit demo --out demo-output
  ttvkit demo --out demo-output --force     # replace an earlier run

The demo is an invented star (Orvessa) and planet (Orvessa b) with invented
timings from six invented sources, one of them planted in the wrong time
standard.  It converts the timings to BJD_TDB, catches the planted source,
re-reads it in the standard the check names, and writes the full diagnosis
(with an N-body map of perturbing planets; --no-perturbers skips it) to
DIR/diagnosis/report.html.  Its inputs are written to DIR/inputs so you
can run every other command on them.
"""


def _add_target_options(p: argparse.ArgumentParser) -> None:
    g = p.add_argument_group("target and observer (needed for JD and HJD times)")
    g.add_argument("--ra", help="right ascension, degrees or sexagesimal hours (14:30:12.3)")
    g.add_argument("--dec", help="declination, degrees or sexagesimal (-12:01:02)")
    g.add_argument("--pm-ra", type=float, help="proper motion in RA·cos(Dec), mas/yr")
    g.add_argument("--pm-dec", type=float, help="proper motion in Dec, mas/yr")
    g.add_argument("--observer", metavar="LON,LAT,HEIGHT",
                   help="observatory east longitude and latitude in degrees, height in m "
                        "(default: the geocentre)")


def _add_table_options(p: argparse.ArgumentParser) -> None:
    p.add_argument("--standard", help="time standard of rows without one, e.g. HJD_UTC, BJD_TDB, BTJD")
    p.add_argument("--ephemeris", metavar="T0,P",
                   help="reference ephemeris (BJD_TDB days, days) to assign missing epochs")
    p.add_argument("--column", action="append", default=[], metavar="OURS=THEIRS",
                   help="map a column, e.g. --column time=HJD (repeatable)")
    p.add_argument("--uncertainty-unit", help="unit of the uncertainty column when its header has none "
                                              "(default: d)")
    _add_target_options(p)


_EPILOG_BUDGET = """\
examples:
  ttvkit budget --system star.toml --amplitude 40s --modulation-period 11yr
  ttvkit budget --system star.toml --amplitude 1.2min --modulation-period 25yr --json

The amplitude is the O−C semi-amplitude (half the peak-to-peak O−C).  An
energy ratio above 1 means the star cannot power the modulation in that
model.  The spin used is the star's rotation period when the system file
gives one, else synchronous rotation with the orbit (the output says which).
"""


def build_parser() -> argparse.ArgumentParser:
    """The argument parser of the ``ttvkit`` command."""
    parser = argparse.ArgumentParser(
        prog="ttvkit",
        description="Transit and eclipse timing: put mid-times in BJD_TDB, fit every "
                    "explanation of a timing drift and test each against the physics.",
        formatter_class=argparse.RawDescriptionHelpFormatter,
        epilog="Run 'ttvkit COMMAND --help' for a command's options and examples.")
    parser.add_argument("--version", action="version", version=f"ttvkit {__version__}")
    parser.add_argument("--debug", action="store_true", help="show tracebacks of errors")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")

    p = sub.add_parser("convert", help="convert a timing table to BJD_TDB (ECSV)",
                       description="Read a timing table in any mix of time standards, convert "
                                   "every mid-time to BJD_TDB, check each source for a "
                                   "time-standard mix-up and write an ECSV table.",
                       epilog=_EPILOG_CONVERT, formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("table", help="CSV or ECSV timing table")
    p.add_argument("--out", required=True, help="output ECSV file")
    p.add_argument("--force", action="store_true", help="replace OUT if it exists")
    p.add_argument("--json", action="store_true", help="print one JSON object on stdout")
    _add_table_options(p)
    p.set_defaults(func=_cmd_convert)

    p = sub.add_parser("demo", help="run ttvkit on the built-in invented scenario",
                       description="Build the invented demo scenario and run every ttvkit "
                                   "capability on it, writing the results into DIR.",
                       epilog=_EPILOG_DEMO, formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("--out", required=True, metavar="DIR", help="output folder (new or empty)")
    p.add_argument("--force", action="store_true", help="write into a non-empty DIR")
    p.add_argument("--no-sample", action="store_true", help="skip posterior sampling (faster)")
    p.add_argument("--progress", action="store_true", help="show the sampler's progress bars")
    p.add_argument("--no-perturbers", action="store_true",
                   help="skip the N-body perturber map (about a minute faster)")
    p.add_argument("--fit-perturber", action="store_true",
                   help="also fit and sample the n-body-perturber hypothesis, seeded from the map "
                        "(a few minutes more)")
    p.add_argument("--json", action="store_true", help="print one JSON object on stdout")
    p.set_defaults(func=_cmd_demo)

    p = sub.add_parser("budget", help="can the star power an O−C modulation? (Applegate budget)",
                       description="The Applegate energy budget of an O−C modulation for the star "
                                   "of SYSTEM.toml, in the thin-shell and finite-shell models. "
                                   "A plausibility screen, not a proof.",
                       epilog=_EPILOG_BUDGET, formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("--system", required=True, help="system file (TOML, values with units)")
    p.add_argument("--amplitude", required=True, help="O−C semi-amplitude with a unit, e.g. 40s or 0.7min")
    p.add_argument("--modulation-period", required=True, help="modulation period with a unit, e.g. 11yr")
    p.add_argument("--shell-mass", type=float, default=0.1,
                   help="thin-shell mass as a fraction of the star's mass (default 0.1)")
    p.add_argument("--json", action="store_true", help="print one JSON object on stdout")
    p.set_defaults(func=_cmd_budget)

    from . import cli_diagnose, cli_fitting, cli_measure, cli_perturbers

    cli_measure.add_commands(sub)
    cli_fitting.add_commands(sub)
    cli_diagnose.add_commands(sub)
    cli_perturbers.add_commands(sub)
    return parser


def parse_target(args):
    """SkyCoord from --ra/--dec (and proper motion), or None."""
    from .timescales import make_target

    if args.ra is None and args.dec is None:
        return None
    if args.ra is None or args.dec is None:
        raise InputError("give both --ra and --dec")
    return make_target(args.ra, args.dec, args.pm_ra, args.pm_dec)


def parse_observer(args):
    """EarthLocation from --observer LON,LAT,HEIGHT, or None (geocentre)."""
    from .timescales import make_observer

    if not args.observer:
        return None
    try:
        parts = [float(x) for x in args.observer.split(",")]
    except ValueError:
        raise InputError(f"--observer {args.observer!r} must be LON,LAT[,HEIGHT] in degrees and m") from None
    if len(parts) not in (2, 3):
        raise InputError(f"--observer {args.observer!r} must be LON,LAT[,HEIGHT]")
    return make_observer(*parts)


def read_table_from_args(args):
    """A TimingTable from a command's table options."""
    from .timing import Ephemeris, TimingTable

    columns = {}
    for item in args.column:
        if "=" not in item:
            raise InputError(f"--column {item!r} must be OURS=THEIRS, e.g. time=HJD")
        ours, theirs = item.split("=", 1)
        columns[ours.strip()] = theirs.strip()
    units = {"uncertainty": args.uncertainty_unit} if args.uncertainty_unit else {}
    ephemeris = Ephemeris.parse(args.ephemeris) if args.ephemeris else None
    return TimingTable.read(args.table, standard=args.standard, target=parse_target(args),
                            observer=parse_observer(args), ephemeris=ephemeris,
                            columns=columns, units=units)


def _cmd_convert(args) -> int:
    from ._readers import check_output_path

    check_output_path(args.out, args.force)
    table = read_table_from_args(args)
    suspicions = table.check_standards()
    table.write(args.out, overwrite=args.force)
    summary = {
        "output": str(args.out),
        "n_points": len(table),
        "sources": table.sources,
        "given_standards": sorted(set(table.given_standard.tolist())),
        "warnings": [s.to_dict() for s in suspicions],
    }
    if args.json:
        print(json.dumps(summary, indent=2))
    else:
        print(f"wrote {len(table)} mid-times in BJD_TDB from {len(table.sources)} source(s) "
              f"(given as {', '.join(summary['given_standards'])}) to {args.out}")
    for s in suspicions:
        print(f"warning: {s.message()}", file=sys.stderr)
    return 0


def _cmd_demo(args) -> int:
    from .demo_run import run_demo

    result = run_demo(args.out, force=args.force, quiet=args.json, sampled=not args.no_sample,
                      progress=args.progress, perturbers=not args.no_perturbers,
                      fit_perturber=args.fit_perturber)
    if args.json:
        print(json.dumps(result, indent=2))
    return 0


def _quantity(text: str, unit: str, option: str):
    import astropy.units as u

    try:
        q = u.Quantity(text)
        return q.to(unit)
    except (TypeError, ValueError, u.UnitsError):
        raise InputError(f"{option} {text!r} must be a number with a unit convertible to {unit}, "
                         f"e.g. 40s or 11yr") from None


def _cmd_budget(args) -> int:
    from .physics import System, activity_budgets

    system = System.from_toml(args.system)
    amplitude = _quantity(args.amplitude, "s", "--amplitude")
    period = _quantity(args.modulation_period, "yr", "--modulation-period")
    if amplitude.value <= 0 or period.value <= 0:
        raise InputError("--amplitude and --modulation-period must be positive")
    budgets = activity_budgets(system, amplitude, period, shell_mass_fraction=args.shell_mass)
    if args.json:
        print(json.dumps({"system": system.name, "models": {k: b.to_dict() for k, b in budgets.items()},
                          "caution": "a plausibility screen, not a proof"}, indent=2))
        return 0
    print(f"Applegate budget for {system.name}: O−C semi-amplitude {amplitude:.3g}, "
          f"modulation period {period:.3g}")
    first = next(iter(budgets.values()))
    print(f"  delta_P_over_P          {first.delta_P_over_P:.3e}")
    print(f"  spin used               {first.spin_used}")
    rows = [("delta_J", "delta_J", "kg m2 / s"), ("delta_E", "delta_E", "J"),
            ("energy_ratio", "energy_ratio", ""), ("delta_L_over_L", "delta_L_over_L", ""),
            ("delta_Omega_over_Omega", "delta_Omega_over_Omega", "")]
    print(f"  {'':24s}" + "".join(f"{k:>16s}" for k in budgets))
    for label, attr, unit in rows:
        vals = []
        for b in budgets.values():
            v = getattr(b, attr)
            vals.append(f"{(v.si.value if hasattr(v, 'si') else v):16.3e}")
        print(f"  {label:24s}" + "".join(vals) + (f"  {unit}" if unit else ""))
    print(f"  {'max amplitude (s)':24s}" + "".join(f"{b.max_amplitude.value:16.3g}" for b in budgets.values()))
    for name, b in budgets.items():
        verdict = "cannot" if b.energy_ratio > 1 else "can"
        print(f"  {name}: the star {verdict} power this modulation ({b.structure})")
    print("  (a plausibility screen, not a proof; see the docs for each model's assumptions)")
    return 0


def main(argv: list[str] | None = None) -> int:
    """Entry point of the ``ttvkit`` command; returns the exit status."""
    parser = build_parser()
    args = parser.parse_args(argv)
    if args.command is None:
        parser.print_help()
        return 0
    try:
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always", TtvkitWarning)
            status = args.func(args)
        for w in caught:
            if issubclass(w.category, TtvkitWarning):
                print(f"warning: {w.message}", file=sys.stderr)
        return status
    except TtvkitError as exc:
        if args.debug:
            raise
        print(f"ttvkit {args.command}: error: {_one_line(str(exc))}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print(f"ttvkit {args.command}: interrupted", file=sys.stderr)
        return 130
    except Exception as exc:  # the user must never see a traceback by default
        if args.debug:
            raise
        print(f"ttvkit {args.command}: internal error ({type(exc).__name__}: "
              f"{_one_line(str(exc))}); rerun with --debug and report it", file=sys.stderr)
        return 1


def _one_line(text: str) -> str:
    return " ".join(textwrap.dedent(text).split())


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())

