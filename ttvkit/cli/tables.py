"""The ``convert`` sub-command: a timing table in any mix of standards to BJD_TDB (ECSV)."""

from __future__ import annotations

import argparse
import json
import sys

from ttvkit.cli.common import add_table_options, read_edited_table

__all__ = ["add_commands"]

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


def add_commands(sub) -> None:
    """Register ``convert``."""
    p = sub.add_parser("convert", help="convert a timing table to BJD_TDB (ECSV)",
                       description="Read a timing table in any mix of time standards, convert "
                                   "every mid-time to BJD_TDB, check each source for a "
                                   "time-standard mix-up and write an ECSV table.",
                       epilog=_EPILOG_CONVERT, formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("table", help="CSV or ECSV timing table")
    p.add_argument("--out", required=True, help="output ECSV file")
    p.add_argument("--force", action="store_true", help="replace OUT if it exists")
    p.add_argument("--json", action="store_true", help="print one JSON object on stdout")
    add_table_options(p)
    p.set_defaults(func=_cmd_convert)


def _cmd_convert(args) -> int:
    from pathlib import Path

    from ttvkit.errors import OutputExistsError
    from ttvkit.io.readers import check_output_path

    check_output_path(args.out, args.force)
    if Path(args.out).resolve() == Path(args.table).resolve():
        raise OutputExistsError(f"{args.out}: is the input table; write the output to another file")
    table, edits, notes = read_edited_table(args)
    suspicions = table.check_standards()
    table.write(args.out, overwrite=args.force, meta={"table_edits": edits.to_dict(), "table_notes": notes})
    summary = {
        "output": str(args.out),
        "n_points": len(table),
        "sources": table.sources,
        "given_standards": sorted(set(table.given_standard.tolist())),
        "warnings": [s.to_dict() for s in suspicions],
        "table_edits": edits.to_dict(),
        "table_notes": notes,
    }
    if args.json:
        print(json.dumps(summary, indent=2))
    else:
        print(f"wrote {len(table)} mid-times in BJD_TDB from {len(table.sources)} source(s) "
              f"(given as {', '.join(summary['given_standards'])}) to {args.out}")
    for s in suspicions:
        print(f"warning: {s.message()}", file=sys.stderr)
    return 0
