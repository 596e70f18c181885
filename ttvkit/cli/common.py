"""Options and parsing shared by the sub-commands: target, observer, table columns, quantities."""

from __future__ import annotations

import argparse

from ttvkit.errors import InputError

__all__ = ["add_sampler_options", "check_sampler_options", "add_workers_option", "hypothesis_pool",
           "add_target_options", "add_table_options", "parse_target", "parse_observer", "parse_columns",
           "parse_quantity", "read_table_from_args", "read_edited_table", "table_edits", "require_rows"]


def add_sampler_options(p: argparse.ArgumentParser) -> None:
    """``--steps`` and ``--max-steps``: the first run of the sampler and the cap of its extension."""
    p.add_argument("--steps", type=int, default=500,
                   help="first run of the sampler, steps per walker (default 500); a chain shorter than 50 "
                        "autocorrelation times is then extended until it is long enough or --max-steps")
    p.add_argument("--max-steps", type=int, default=40000,
                   help="cap on a chain's length, steps per walker (default 40000); a chain stopped by the "
                        "cap is reported as unconverged")


def check_sampler_options(args) -> None:
    """Refuse a sampler run too short to estimate its autocorrelation time."""
    if args.steps < 100:
        raise InputError(f"--steps {args.steps}: the sampler needs at least 100 steps per walker")
    if args.max_steps < args.steps:
        raise InputError(f"--max-steps {args.max_steps} is below --steps {args.steps}")


def add_workers_option(p: argparse.ArgumentParser) -> None:
    """``--workers``: processes that fit and sample the hypotheses at once."""
    p.add_argument("--workers", type=int, default=None,
                   help="processes that fit and sample the hypotheses at once (default: one per core, up "
                        "to 4, when sampling; 1 otherwise)")


def hypothesis_pool(args, sampled: bool):
    """The process pool of ``--workers`` for the hypotheses, or None to fit them in this process."""
    from ttvkit.inference.fitting import local_pool

    if args.workers is not None and args.workers < 1:
        raise InputError(f"--workers {args.workers}: need at least 1")
    if args.workers is None and not sampled:  # unsampled fits take seconds: not worth starting processes
        return None
    return local_pool(args.workers)


def add_target_options(p: argparse.ArgumentParser) -> None:
    g = p.add_argument_group("target and observer (needed for JD and HJD times)")
    g.add_argument("--ra", help="right ascension, degrees or sexagesimal hours (14:30:12.3)")
    g.add_argument("--dec", help="declination, degrees or sexagesimal (-12:01:02)")
    g.add_argument("--pm-ra", type=float, help="proper motion in RA·cos(Dec), mas/yr")
    g.add_argument("--pm-dec", type=float, help="proper motion in Dec, mas/yr")
    g.add_argument("--observer", metavar="LON,LAT,HEIGHT",
                   help="observatory east longitude and latitude in degrees, height in m "
                        "(default: the geocentre)")


def add_table_options(p: argparse.ArgumentParser) -> None:
    p.add_argument("--standard", help="time standard of rows without one, e.g. HJD_UTC, BJD_TDB, BTJD")
    p.add_argument("--ephemeris", metavar="T0,P",
                   help="reference ephemeris (BJD_TDB days, days) to assign missing epochs")
    p.add_argument("--column", action="append", default=[], metavar="OURS=THEIRS",
                   help="map a column, e.g. --column time=HJD (repeatable)")
    p.add_argument("--uncertainty-unit", help="unit of the uncertainty column when its header has none "
                                              "(default: d)")
    p.add_argument("--bare-bjd", metavar="STANDARD",
                   help="what rows labelled only 'BJD' mean, e.g. BJD_TDB (a warning names them)")
    p.add_argument("--drop-rows", metavar="ROWS", default="",
                   help="leave out these data rows of the file, e.g. 12,40 or 12-14 (as errors number them)")
    p.add_argument("--relabel", action="append", default=[], metavar="SOURCE=STANDARD",
                   help="re-read one source's times in another standard (repeatable)")
    p.add_argument("--exclude-source", action="append", default=[], metavar="SOURCE",
                   help="leave a source out (repeatable)")
    add_target_options(p)


def parse_columns(items, allowed=None, example: str = "time=HJD") -> dict:
    """``--column OURS=THEIRS`` options as a dict; ``allowed`` limits OURS."""
    columns = {}
    for item in items:
        if "=" not in item:
            raise InputError(f"--column {item!r} must be OURS=THEIRS, e.g. {example}")
        ours, theirs = (x.strip() for x in item.split("=", 1))
        if allowed is not None and ours not in allowed:
            raise InputError(f"--column {ours!r}: the columns are {', '.join(allowed)}")
        columns[ours] = theirs
    return columns


def parse_quantity(text: str, unit: str, option: str):
    """A number with a unit from an option, e.g. ``40s``, converted to ``unit``."""
    import astropy.units as u

    try:
        q = u.Quantity(text)
        return q.to(unit)
    except (TypeError, ValueError, u.UnitsError):
        raise InputError(f"{option} {text!r} must be a number with a unit convertible to {unit}, "
                         f"e.g. 40s or 11yr") from None


def parse_target(args):
    """SkyCoord from --ra/--dec (and proper motion), or None."""
    from ttvkit.timing.standards import make_target

    if args.ra is None and args.dec is None:
        return None
    if args.ra is None or args.dec is None:
        raise InputError("give both --ra and --dec")
    return make_target(args.ra, args.dec, args.pm_ra, args.pm_dec)


def parse_observer(args):
    """EarthLocation from --observer LON,LAT,HEIGHT, or None (geocentre)."""
    from ttvkit.timing.standards import make_observer

    if not args.observer:
        return None
    try:
        parts = [float(x) for x in args.observer.split(",")]
    except ValueError:
        raise InputError(f"--observer {args.observer!r} must be LON,LAT[,HEIGHT] in degrees and m") from None
    if len(parts) not in (2, 3):
        raise InputError(f"--observer {args.observer!r} must be LON,LAT[,HEIGHT]")
    return make_observer(*parts)


def table_edits(args):
    """The TableEdits a command's options ask for."""
    from ttvkit.timing.edits import TableEdits, parse_relabel, parse_rows

    return TableEdits(relabel=dict(parse_relabel(item) for item in args.relabel),
                      exclude_sources=tuple(args.exclude_source), drop_rows=parse_rows(args.drop_rows))


def read_edited_table(args, minimum: int = 1):
    """The table with every edit applied: ``(table, edits, notes)``; fewer than ``minimum`` rows refused."""
    edits = table_edits(args)
    table, notes = edits.apply(read_table_from_args(args))
    require_rows(table, minimum, args.table)
    return table, edits, notes


def require_rows(table, minimum: int, path) -> None:
    """Refuse a table too short for a comparison of hypotheses, saying why."""
    if len(table) < minimum:
        raise InputError(f"{path}: has {len(table)} mid-time(s) after edits; a period change needs at "
                         f"least {minimum} mid-times (three fix a parabola exactly, with nothing left to "
                         "test it)")


def read_table_from_args(args):
    """A TimingTable from a command's table options (rows of --drop-rows left out)."""
    from ttvkit.timing.edits import parse_rows
    from ttvkit.timing.table import Ephemeris, TimingTable

    columns = parse_columns(args.column, example="time=HJD")
    units = {"uncertainty": args.uncertainty_unit} if args.uncertainty_unit else {}
    ephemeris = Ephemeris.parse(args.ephemeris) if args.ephemeris else None
    return TimingTable.read(args.table, standard=args.standard, target=parse_target(args),
                            observer=parse_observer(args), ephemeris=ephemeris,
                            columns=columns, units=units, drop_rows=parse_rows(args.drop_rows),
                            bare_bjd=args.bare_bjd)
