"""Plausibility gates of a timing table at the edge, before any number leaves it.

Each gate names the file, the row and the column and the likely cause:
times whose size does not fit their stated standard (an MJD labelled JD, a
mission day count labelled BJD_TDB), dates the time-scale tables do not
cover, uncertainties that look like seconds or minutes read as days, a
header unit that contradicts the numbers, rows that cannot be placed on an
epoch, and repeated measurements of one event (kept; exact copies dropped;
disagreements flagged).  Problems are gathered and reported all at once.
"""

from __future__ import annotations

import warnings

import numpy as np

from ttvkit.errors import EphemerisError, InputError, TtvkitWarning, located

__all__ = ["Problems", "IntakeWarning", "check_time_sizes", "check_uncertainties",
           "place_rows", "handle_repeats", "converted"]

#: Julian dates of 1800-01-01 and 2100-01-01: a telescopic mid-time outside
#: is a wrong number, not an old or future observation (common practice, no source).
_JD_FIRST, _JD_LAST = 2378496.5, 2488069.5
#: JD of 1960-01-01: UTC as astropy/ERFA know it begins in 1960 ("dubious year"
#: before that; ERFA documentation of eraDat).
_JD_UTC_START = 2436934.5
#: An uncertainty above this (1.2 h) is taken for seconds or minutes read as days
#: (common practice, no source: published mid-times are good to minutes at worst).
_MAX_UNCERTAINTY_D = 0.05
#: Same-event measurements further apart than this many combined σ are flagged (issue 13).
_DISAGREE_SIGMA = 5.0
#: Two rows of one event within this (0.086 s) and with equal errors are one row twice.
_SAME_DAYS = 1e-6


class IntakeWarning(TtvkitWarning):
    """A value in a table is possible but unusual (a repeat dropped, a disagreement, an old date)."""


class Problems:
    """Gathers every problem of a table so that all are reported at once."""

    def __init__(self, path):
        self.path = path
        self.items: list[str] = []
        self.kinds: set = set()

    def add(self, message: str, row=None, column=None, kind=InputError) -> None:
        self.items.append(located(message, None, row, column))
        self.kinds.add(kind)

    def raise_if_any(self, cls=InputError) -> None:
        """Raise one error listing every problem (of the problems' own class when they share one)."""
        if not self.items:
            return
        if len(self.kinds) == 1:
            cls = next(iter(self.kinds))
        if len(self.items) == 1:
            raise cls(f"{self.path}, {self.items[0]}")
        listing = "\n".join(f"  - {item}" for item in self.items[:50])
        more = f"\n  ... and {len(self.items) - 50} more" if len(self.items) > 50 else ""
        raise cls(f"{self.path}: {len(self.items)} problems, no number was used:\n{listing}{more}")


def _guess(jd: float) -> str:
    if 2.0e6 < jd < 2.6e6:
        return "a full Julian date"
    if 1.5e4 < jd < 1.0e5:
        return "a modified Julian date (MJD = JD − 2400000.5) or a day count from 2,400,000"
    if 0 <= jd < 1.5e4:
        return "a mission day count (e.g. BTJD = BJD_TDB − 2457000, BKJD = BJD_TDB − 2454833)"
    return "no Julian-date numbering ttvkit knows"


def check_time_sizes(times, stds, raw, column: str, problems: Problems) -> None:
    """Full Julian dates (value + the standard's offset) must lie in 1800–2100."""
    for i, (x, std) in enumerate(zip(times, stds)):
        jd = x + std.offset
        if _JD_FIRST <= jd <= _JD_LAST:
            if std.scale == "utc" and jd < _JD_UTC_START:
                warnings.warn(located(
                    f"{x!r} in {std.name} is before 1960, where UTC is not defined by the "
                    "time-scale tables ttvkit uses (ERFA 'dubious year'): its conversion is "
                    "uncertain by seconds", raw.path, raw.where(i), column), IntakeWarning, stacklevel=3)
            continue
        problems.add(f"{x!r} does not fit the stated standard {std.name} (as a full JD it is "
                     f"{jd:.1f}, outside 1800–2100); the number looks like {_guess(x)}: "
                     "give the standard it is really in (--standard, or the row's standard column)",
                     raw.where(i), column)


def check_uncertainties(unc_days, raw, column: str, unit_given: bool, period, problems: Problems):
    """Positive, finite and of a size a mid-time can have (not seconds or minutes read as days)."""
    for i, s in enumerate(unc_days):
        if not s > 0:
            problems.add(f"uncertainty {raw.columns[column][i]!r} must be positive",
                         raw.where(i), column)
            continue
        limit = _MAX_UNCERTAINTY_D if period is None else min(_MAX_UNCERTAINTY_D, 0.05 * period)
        if s > limit:
            hint = ("; the header gives no unit, so days were assumed: if these are seconds or "
                    "minutes say so (--uncertainty-unit s, or a header 'uncertainty [s]')"
                    if not unit_given else "")
            problems.add(f"uncertainty {s:.6g} d = {s * 1440:.4g} min is too large for a "
                         f"mid-time{' (a large fraction of the period)' if period else ''}{hint}",
                         raw.where(i), column)


def place_rows(bjd, kinds, ephemeris, raw, problems: Problems, tolerance: float = 0.25):
    """Nearest epoch of every row; rows more than ``tolerance`` periods off are named."""
    from ttvkit.timing.ephemeris import kind_phase

    cycles = (bjd - ephemeris.reference_time) / ephemeris.period - kind_phase(kinds)
    epoch = np.rint(cycles)
    off = np.abs(cycles - epoch)
    for i in np.flatnonzero(off > tolerance):
        problems.add(f"time {bjd[i]:.6f} lies {off[i]:.2f} of a period from the nearest {kinds[i]} "
                     f"of the ephemeris T0={ephemeris.reference_time}, P={ephemeris.period}: the "
                     "epoch is ambiguous and the row cannot be placed (a typo, another object or another kind?); "
                     "correct it or leave it out with --drop-rows", raw.where(int(i)), "time",
                     EphemerisError)
    return epoch.astype(np.int64)


def check_given_epochs(bjd, epochs, kinds, ephemeris, raw, column: str, problems: Problems) -> None:
    """Given epochs against the ephemeris, or against a robust line through the table itself."""
    from scipy.stats import theilslopes

    from ttvkit.timing.ephemeris import kind_phase

    x = epochs + kind_phase(kinds)
    if ephemeris is not None:
        t0, period = ephemeris.reference_time, ephemeris.period
    elif len(np.unique(x)) >= 4:
        pick = np.linspace(0, x.size - 1, min(x.size, 2000)).astype(int)  # pairwise slopes: bound the cost
        period, t0, _, _ = theilslopes(bjd[pick], x[pick])
        if not period > 0:
            return
    else:
        return
    off = (bjd - (t0 + period * x)) / period
    for i in np.flatnonzero(np.abs(off) > 0.25):
        problems.add(f"epoch {epochs[i]} disagrees with the time {bjd[i]:.6f}: it lies {off[i]:+.2f} "
                     f"periods from where the {'ephemeris' if ephemeris else 'other rows'} put epoch "
                     f"{epochs[i]} (an epoch off by {int(np.rint(off[i]))}?)", raw.where(int(i)), column,
                     EphemerisError)


def handle_repeats(raw, bjd, unc, epochs, kinds, sources) -> np.ndarray:
    """Rows to keep: repeats of an event are kept, exact copies dropped, disagreements flagged.

    Independent measurements of one transit are data (compiled tables list
    them as published).  A row with the same time and uncertainty as an
    earlier one is the same measurement twice and is dropped with a warning
    naming both rows; two of one event further apart than 5σ are kept and
    flagged, naming both rows and their sources.
    """
    keep = np.ones(len(bjd), bool)
    key = np.array([f"{k}:{e}" for k, e in zip(kinds, epochs)])
    for group in _groups(key):
        for a_pos, a in enumerate(group):
            if not keep[a]:
                continue
            for b in group[a_pos + 1:]:
                if not keep[b]:
                    continue
                ra, rb = raw.where(int(a)), raw.where(int(b))
                if abs(bjd[a] - bjd[b]) < _SAME_DAYS and abs(unc[a] - unc[b]) < _SAME_DAYS:
                    keep[b] = False
                    warnings.warn(located(f"the same mid-time and uncertainty as row {ra} "
                                          f"(sources {sources[a]!r}, {sources[b]!r}): one measurement "
                                          "listed twice; row dropped", raw.path, rb, "time"),
                                  IntakeWarning, stacklevel=3)
                    continue
                z = abs(bjd[a] - bjd[b]) / np.hypot(unc[a], unc[b])
                if z > _DISAGREE_SIGMA:
                    warnings.warn(located(
                        f"rows {ra} ({sources[a]!r}) and {rb} ({sources[b]!r}) time the same "
                        f"{kinds[a]} (epoch {epochs[a]}) but differ by {abs(bjd[a] - bjd[b]) * 86400:.0f} s "
                        f"= {z:.1f}σ; both kept: check them", raw.path, None, "time"),
                        IntakeWarning, stacklevel=3)
    return keep


def _groups(key):
    order = np.argsort(key, kind="stable")
    sorted_keys = key[order]
    starts = np.flatnonzero(np.r_[True, sorted_keys[1:] != sorted_keys[:-1]])
    for s, e in zip(starts, np.r_[starts[1:], len(key)]):
        if e - s > 1:
            yield list(order[s:e])


def converted(func, raw, row, column, *args):
    """Call a time conversion, routing astropy/ERFA warnings through ttvkit's channel."""
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        out = func(*args)
    for w in caught:
        if issubclass(w.category, TtvkitWarning):
            warnings.warn(w.message, w.category, stacklevel=3)
        else:
            warnings.warn(located(f"time conversion: {str(w.message).splitlines()[0]}",
                                  raw.path, row, column), IntakeWarning, stacklevel=3)
    return out
