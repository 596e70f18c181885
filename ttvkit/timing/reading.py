"""Validation of a raw timing file into a :class:`~ttvkit.timing.table.TimingTable`.

Every check names the file, the row and the column, so that a person with a
compiled table of a hundred literature timings can find the bad one.
"""

from __future__ import annotations

import math

import astropy.units as u
import numpy as np

from ttvkit.errors import EphemerisError, InputError, TimeStandardError, located
from ttvkit.io.readers import RawTable
from ttvkit.timing.ephemeris import ephemeris_from_meta, normalise_kind
from ttvkit.timing.standards import parse_standard, target_from_meta, to_bjd_tdb

__all__ = ["build_table"]

_KNOWN = ("epoch", "time", "uncertainty", "kind", "source", "standard", "given_standard")


def _missing(value) -> bool:
    if value is None:
        return True
    if isinstance(value, str):
        return value.strip() == ""
    return False


def _number(value, raw: RawTable, i: int, column: str) -> float:
    if _missing(value):
        raise InputError(located("is empty; a number is needed", raw.path, raw.where(i), column))
    try:
        x = float(value)
    except (TypeError, ValueError):
        raise InputError(located(f"{value!r} is not a number", raw.path, raw.where(i), column)) from None
    if not math.isfinite(x):
        raise InputError(located(f"{value!r} is not a finite number", raw.path, raw.where(i), column))
    return x


def _unit_factor(raw: RawTable, key: str, column: str, units: dict, default=u.day) -> float:
    unit = raw.units.get(column)
    if key in units:
        try:
            unit = u.Unit(units[key])
        except (ValueError, TypeError):
            raise InputError(located(f"unparseable unit {units[key]!r}", raw.path, None, column)) from None
    if unit is None:
        return 1.0
    try:
        return (1.0 * unit).to_value(default)
    except u.UnitConversionError:
        raise InputError(located(f"unit {unit} is not a time unit", raw.path, None, column)) from None


def build_table(cls, raw: RawTable, standard, target, observer, ephemeris, columns: dict,
                units: dict, source: str):
    """Validate ``raw`` and return a ``cls`` (a TimingTable) in BJD_TDB."""
    for key in columns:
        if key not in _KNOWN:
            raise InputError(f"column mapping names {key!r}, which is not one of "
                             f"ttvkit's columns: {', '.join(_KNOWN)}")
    names = {key: str(columns.get(key, key)).strip().lower() for key in _KNOWN}
    n = len(raw.rows)
    for key in ("time", "uncertainty"):
        if names[key] not in raw.columns:
            hint = "" if key not in columns else " (as mapped)"
            raise InputError(located(
                f"missing column '{names[key]}'{hint}; the file has: "
                f"{', '.join(raw.columns) or 'none'}; map yours with columns=... "
                "(--column time=NAME on the command line)", raw.path))
    target = target if target is not None else target_from_meta(raw.meta)
    ephemeris = ephemeris if ephemeris is not None else ephemeris_from_meta(raw.meta)
    if standard is None and raw.meta.get("time_standard"):
        standard = raw.meta["time_standard"]

    tcol, ucol = names["time"], names["uncertainty"]
    tfac = _unit_factor(raw, "time", tcol, units)
    ufac = _unit_factor(raw, "uncertainty", ucol, units)
    times = np.array([_number(v, raw, i, tcol) for i, v in enumerate(raw.columns[tcol])]) * tfac
    unc = np.array([_number(v, raw, i, ucol) for i, v in enumerate(raw.columns[ucol])]) * ufac
    for i in np.flatnonzero(unc <= 0):
        raise InputError(located(f"uncertainty {raw.columns[ucol][i]!r} must be positive",
                                 raw.path, raw.where(int(i)), ucol))

    kinds = np.full(n, "transit", dtype=object)
    if names["kind"] in raw.columns:
        for i, v in enumerate(raw.columns[names["kind"]]):
            if _missing(v):
                continue
            k = normalise_kind(v)
            if k is None:
                raise InputError(located(f"unknown kind {v!r}; known kinds: transit, "
                                         "occultation, primary, secondary",
                                         raw.path, raw.where(i), names["kind"]))
            kinds[i] = k
    sources = np.full(n, source, dtype=object)
    if names["source"] in raw.columns:
        for i, v in enumerate(raw.columns[names["source"]]):
            if not _missing(v):
                sources[i] = str(v).strip()

    # time standards: per row, falling back to the file's
    file_std = None
    if standard is not None:
        try:
            file_std = parse_standard(standard)
        except TimeStandardError as exc:
            raise TimeStandardError(located(str(exc), raw.path)) from None
    row_std = []
    scol = names["standard"]
    for i in range(n):
        value = raw.columns[scol][i] if scol in raw.columns else None
        if _missing(value):
            if file_std is None:
                raise TimeStandardError(located(
                    "no time standard: the row has none and none was given for the file; "
                    "give standard=... (--standard on the command line), e.g. BJD_TDB "
                    "or HJD_UTC", raw.path, raw.where(i), scol))
            row_std.append(file_std)
        else:
            try:
                row_std.append(parse_standard(str(value)))
            except TimeStandardError as exc:
                raise TimeStandardError(located(str(exc), raw.path, raw.where(i), scol)) from None
    given = np.array([s.name for s in row_std], dtype=object)
    if "given_standard" in raw.columns:  # a table ttvkit wrote: keep the provenance
        for i, v in enumerate(raw.columns["given_standard"]):
            if not _missing(v):
                given[i] = str(v)

    bjd = np.empty(n)
    for name in np.unique([s.name for s in row_std]):
        idx = np.array([i for i, s in enumerate(row_std) if s.name == name])
        std = row_std[idx[0]]
        if std.name == "BJD_TDB":  # exact: no astropy round trip
            bjd[idx] = times[idx]
            continue
        if std.needs_target and target is None:
            raise TimeStandardError(located(
                f"{std.name} times need the target's coordinates to become BJD_TDB; "
                "give target=... (--ra and --dec on the command line)",
                raw.path, raw.where(int(idx[0])), scol if scol in raw.columns else tcol))
        bjd[idx] = to_bjd_tdb(times[idx], std, target, observer)

    # epochs
    ecol = names["epoch"]
    if ecol in raw.columns and not all(_missing(v) for v in raw.columns[ecol]):
        epochs = np.empty(n, dtype=np.int64)
        for i, v in enumerate(raw.columns[ecol]):
            x = _number(v, raw, i, ecol)
            if x != round(x):
                raise InputError(located(f"epoch {v!r} is not an integer", raw.path, raw.where(i), ecol))
            epochs[i] = int(round(x))
    else:
        if ephemeris is None:
            raise EphemerisError(located(
                "no 'epoch' column: give a reference ephemeris (T0,P in BJD_TDB days; "
                "--ephemeris on the command line) so epochs can be assigned", raw.path))
        epochs = ephemeris.assign_epochs(bjd, kinds, path=raw.path, rows=raw.rows)

    _check_duplicates(raw, bjd, epochs, kinds, sources)

    extra = {}
    for name, values in raw.columns.items():
        if name in names.values() or name in _KNOWN:
            continue
        arr = np.array(["" if _missing(v) else v for v in values], dtype=object)
        try:
            extra[name] = arr.astype(float)
        except (TypeError, ValueError):
            extra[name] = arr.astype(str)
    return cls(bjd, unc, epochs, kinds.astype(str), sources.astype(str), given.astype(str),
               target=target, ephemeris=ephemeris, extra=extra)


def _check_duplicates(raw, bjd, epochs, kinds, sources):
    order = np.lexsort((bjd, kinds, sources))
    for a, b in zip(order[:-1], order[1:]):
        if sources[a] == sources[b] and kinds[a] == kinds[b]:
            same_time = abs(bjd[a] - bjd[b]) < 1e-6
            if same_time or epochs[a] == epochs[b]:
                first, second = sorted((raw.where(int(a)), raw.where(int(b))))
                what = "the same mid-time" if same_time else f"the same epoch {epochs[a]}"
                raise InputError(located(
                    f"duplicates row {first}: {what} of kind {kinds[a]} from source "
                    f"{sources[a]!r}; remove one of them", raw.path, second, "time"))
