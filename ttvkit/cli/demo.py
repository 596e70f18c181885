"""The ``demo`` sub-command: every capability on the invented scenario."""

from __future__ import annotations

import argparse
import json

__all__ = ["add_commands"]

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

A second invented scenario follows (--no-binary skips it): Tarrowby AB, an
eclipsing binary of a K and an M dwarf whose eclipse times wander with an
activity cycle, with a brightness series of the K dwarf.  Its report is in
DIR/binary/diagnosis/report.html.
"""


def add_commands(sub) -> None:
    """Register ``demo``."""
    p = sub.add_parser("demo", help="run ttvkit on the built-in invented scenario",
                       description="Build the invented demo scenario and run every ttvkit "
                                   "capability on it, writing the results into DIR.",
                       epilog=_EPILOG_DEMO, formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("--out", required=True, metavar="DIR", help="output folder (new or empty)")
    p.add_argument("--force", action="store_true", help="write into a non-empty DIR")
    p.add_argument("--no-sample", action="store_true", help="skip posterior sampling (faster)")
    p.add_argument("--progress", action="store_true", help="show the sampler's progress bars")
    p.add_argument("--no-perturbers", action="store_true",
                   help="skip the N-body perturber map (about 15 s faster)")
    p.add_argument("--fit-perturber", action="store_true",
                   help="also fit and sample the n-body-perturber hypothesis, seeded from the map "
                        "(a few minutes more)")
    p.add_argument("--no-binary", action="store_true",
                   help="skip the second scenario, an invented eclipsing binary (about 30 s faster)")
    p.add_argument("--json", action="store_true", help="print one JSON object on stdout")
    p.set_defaults(func=_cmd_demo)


def _cmd_demo(args) -> int:
    from ttvkit.demo.run import run_demo

    result = run_demo(args.out, force=args.force, quiet=args.json, sampled=not args.no_sample,
                      progress=args.progress, perturbers=not args.no_perturbers,
                      fit_perturber=args.fit_perturber, binary=not args.no_binary)
    if args.json:
        print(json.dumps(result, indent=2))
    return 0
