"""The ``measure`` sub-command of ``ttvkit``: mid-times from light curves."""

from __future__ import annotations

import argparse
import json

from ttvkit.constants import DAY_S

__all__ = ["add_commands"]

_EPILOG = """\
examples:
  ttvkit measure lc1.csv lc2.csv --ephemeris 2456000.31412,1.8734192 --fit-shape --out times.ecsv
  ttvkit measure sector*.fits --preset tess --ephemeris 2456000.314,1.87342 --shape shape.toml --out t.ecsv
  ttvkit measure night.csv --standard HJD_UTC --ra 287.41 --dec 31.18 --ephemeris 2456000.314,1.87342 \\
      --shape shape.toml --partial --out t.ecsv --json

A CSV with columns time, flux, flux_err reads with no column options (times
BJD_TDB unless --standard says otherwise).  A shape file holds a [shape]
table: period = "1.8734 d", radius_ratio, a_over_rstar, impact_parameter,
q1, q2 (Kipping 2013), and optionally exposure_time = "30 min".
"""


def add_commands(sub) -> None:
    """Register ``measure``."""
    from ttvkit.cli.common import add_target_options

    p = sub.add_parser("measure", help="mid-times from light curves (batman shape, per-transit fits)",
                       description="Cut a window around every predicted transit, fix or fit the transit "
                                   "shape, fit each window's mid-time with its baseline profiled out, "
                                   "measure the noise (white level, correlated noise), write a timing "
                                   "table; every untimed transit is listed with its reason.",
                       epilog=_EPILOG, formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("light_curves", nargs="+", metavar="LIGHTCURVE", help="CSV, ECSV or FITS light curves")
    p.add_argument("--ephemeris", required=True, metavar="T0,P", help="reference ephemeris (BJD_TDB days, days)")
    group = p.add_mutually_exclusive_group(required=True)
    group.add_argument("--shape", metavar="SHAPE.toml", help="transit shape file")
    group.add_argument("--fit-shape", action="store_true", help="fit the shape to all full transits first")
    p.add_argument("--out", required=True, help="output ECSV timing table")
    p.add_argument("--force", action="store_true", help="replace OUT if it exists")
    p.add_argument("--standard", help="time standard of the light curves' time column (default BJD_TDB)")
    p.add_argument("--preset", choices=["tess", "kepler"], help="mission FITS layout")
    p.add_argument("--column", action="append", default=[], metavar="OURS=THEIRS",
                   help="map a column: time, flux, flux_err, quality (repeatable)")
    p.add_argument("--partial", action="store_true", help="also time transits with ingress or egress missing")
    p.add_argument("--baseline-order", type=int, default=1, help="polynomial baseline degree (default 1)")
    p.add_argument("--noise", choices=["auto", "white", "gp", "given"], default="auto",
                   help="uncertainties from: the measured white level (white), a correlated-noise GP (gp), "
                        "the GP where the data need it (auto, default), the flux errors as given (given)")
    p.add_argument("--no-progress", action="store_true", help="no progress bar")
    p.add_argument("--json", action="store_true", help="print one JSON object on stdout")
    add_target_options(p)
    p.set_defaults(func=_cmd_measure)


def _cmd_measure(args) -> int:
    import numpy as np

    from ttvkit.cli.common import parse_columns, parse_observer, parse_target
    from ttvkit.io.readers import check_output_path
    from ttvkit.lightcurves.measure import MeasureOptions, measure
    from ttvkit.lightcurves.midtime import shape_from_toml
    from ttvkit.timing.table import Ephemeris

    check_output_path(args.out, args.force)
    columns = parse_columns(args.column, allowed=("time", "flux", "flux_err", "quality"), example="flux=SAP_FLUX")
    ephemeris = Ephemeris.parse(args.ephemeris)
    options = MeasureOptions(shape=shape_from_toml(args.shape) if args.shape else None, fit_shape=args.fit_shape,
                             standard=args.standard, preset=args.preset, columns=columns,
                             target=parse_target(args), observer=parse_observer(args), time_partial=args.partial,
                             baseline_order=args.baseline_order, noise=args.noise)
    table, report = measure(args.light_curves, ephemeris, options, progress=not args.no_progress and not args.json)
    table.write(args.out, overwrite=args.force)
    summary = {"output": str(args.out), **report.to_dict(),
               "median_uncertainty_s": float(np.median(table.uncertainty) * DAY_S),
               "median_beta": float(np.median(table.extra["beta"])),
               "median_noise_ratio": float(np.median(table.extra["noise_ratio"]))}
    if args.json:
        print(json.dumps(summary, indent=2, default=float))
        return 0
    sources = ", ".join(sorted(set(table.extra["error_source"])))
    print(f"timed {report.measured} transit(s) into {args.out}; median uncertainty "
          f"{summary['median_uncertainty_s']:.1f} s; errors from {sources} "
          f"(measured scatter / given errors: median {summary['median_noise_ratio']:.2f})")
    for source, counts in report.dropped.items():
        if any(counts.values()):
            print(f"  {source}: dropped {counts['nan']} NaN, {counts['quality']} flagged, "
                  f"{counts['clipped']} clipped points")
    for s in report.skipped:
        print(f"  untimed {s['source']} epoch {s['epoch']}: {s['reason']}")
    return 0
