"""Options and parsing shared by the sub-commands: target, observer, table columns, quantities."""

from __future__ import annotations

import argparse

from ttvkit.errors import InputError

__all__ = ["add_target_options", "add_table_options", "parse_target", "parse_observer", "parse_columns",
           "parse_quantity", "read_table_from_args"]


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


def read_table_from_args(args):
    """A TimingTable from a command's table options."""
    from ttvkit.timing.table import Ephemeris, TimingTable

    columns = parse_columns(args.column, example="time=HJD")
    units = {"uncertainty": args.uncertainty_unit} if args.uncertainty_unit else {}
    ephemeris = Ephemeris.parse(args.ephemeris) if args.ephemeris else None
    return TimingTable.read(args.table, standard=args.standard, target=parse_target(args),
                            observer=parse_observer(args), ephemeris=ephemeris,
                            columns=columns, units=units)
