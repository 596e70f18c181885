"""Validation of a raw timing file into a :class:`~ttvkit.timing.table.TimingTable`.

Every check names the file, the row and the column, so that a person with a
compiled table of a hundred literature timings can find the bad one.
"""

from __future__ import annotations

import math
import warnings

import astropy.units as u
import numpy as np

from ttvkit.errors import EphemerisError, InputError, TimeStandardError, located
from ttvkit.io.readers import RawTable
from ttvkit.timing.ephemeris import ephemeris_from_meta, normalise_kind
from ttvkit.timing.intake_checks import (
    IntakeWarning,
    Problems,
    check_given_epochs,
    check_time_sizes,
    check_uncertainties,
    converted,
    handle_repeats,
    place_rows,
)
from ttvkit.timing.standards import parse_standard, target_from_meta, to_bjd_tdb

__all__ = ["build_table", "raw_from_table"]

_KNOWN = ("epoch", "time", "uncertainty", "kind", "source", "standard", "given_standard")


def _missing(value) -> bool:
    if value is None:
        return True
    if isinstance(value, str):
        return value.strip() == ""
    return False


def _why_not_number(value) -> str | None:
    """Why ``value`` is not a finite number, or None if it is one."""
    if _missing(value):
        return "is empty; a number is needed"
    try:
        x = float(value)
    except (TypeError, ValueError):
        return f"{value!r} is not a number"
    return None if math.isfinite(x) else f"{value!r} is not a finite number"


def _number(value, raw: RawTable, i: int, column: str) -> float:
    why = _why_not_number(value)
    if why is not None:
        raise InputError(located(why, raw.path, raw.where(i), column))
    return float(value)


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
                units: dict, source: str, drop_rows=(), bare_bjd=None):
    """Validate ``raw`` and return a ``cls`` (a TimingTable) in BJD_TDB.

    Every problem of the table is gathered and reported in one error (file,
    row, column each); no number leaves a table that has one.
    """
    raw = _select_rows(raw, drop_rows)
    names = _column_names(raw, columns)
    n = len(raw.rows)
    target = target if target is not None else target_from_meta(raw.meta)
    ephemeris = ephemeris if ephemeris is not None else ephemeris_from_meta(raw.meta)
    if standard is None and raw.meta.get("time_standard"):
        standard = raw.meta["time_standard"]
    file_std = _parse_file_standard(standard, raw)
    bare = _parse_file_standard(bare_bjd, raw) if bare_bjd is not None else None

    problems = Problems(raw.path)
    tcol, ucol = names["time"], names["uncertainty"]
    _time_unit(raw, tcol, units, problems)
    ufac = _unit_factor(raw, "uncertainty", ucol, units)
    times = _numbers(raw, tcol, problems)
    unc = _numbers(raw, ucol, problems) * ufac
    kinds = _labels(raw, names["kind"], "transit", n, problems, parse=normalise_kind)
    sources = _labels(raw, names["source"], source, n, problems)
    row_std = _standards(raw, names["standard"], file_std, bare, problems)
    ok = np.isfinite(times) & np.array([s is not None for s in row_std])
    check_time_sizes(times[ok], [s for s, g in zip(row_std, ok) if g], _Sub(raw, ok), tcol, problems)
    check_uncertainties(np.where(np.isfinite(unc), unc, 1e-3), raw, ucol,
                        ucol in raw.units or "uncertainty" in units,
                        ephemeris.period if ephemeris else None, problems)
    problems.raise_if_any()

    given = np.array([s.name for s in row_std], dtype=object)
    if "given_standard" in raw.columns:  # a table ttvkit wrote: keep the provenance
        for i, v in enumerate(raw.columns["given_standard"]):
            if not _missing(v):
                given[i] = str(v)
    bjd = _to_bjd(raw, times, row_std, target, observer, names["standard"], tcol)
    epochs = _epochs(raw, names["epoch"], bjd, kinds, ephemeris, problems)
    problems.raise_if_any()
    keep = handle_repeats(raw, bjd, unc, epochs, kinds, sources)
    extra = _extra_columns(raw, names)
    return cls(bjd[keep], unc[keep], epochs[keep], kinds[keep].astype(str), sources[keep].astype(str),
               given[keep].astype(str), target=target, ephemeris=ephemeris,
               extra={k: v[keep] for k, v in extra.items()})


class _Sub:
    """A view of a RawTable's rows where ``mask`` holds, for row numbers in messages."""

    def __init__(self, raw, mask):
        self.path, self._rows = raw.path, [r for r, m in zip(raw.rows, mask) if m]

    def where(self, index):
        return self._rows[index]


def _parse_file_standard(standard, raw):
    if standard is None:
        return None
    try:
        return parse_standard(standard)
    except TimeStandardError as exc:
        raise TimeStandardError(located(str(exc), raw.path)) from None


def _time_unit(raw, column, units, problems) -> None:
    """Mid-times are Julian-date numbers in days: a header unit other than days contradicts them."""
    unit = units.get("time", raw.units.get(column))
    if unit is None:
        return
    try:
        factor = (1.0 * u.Unit(unit)).to_value(u.day)
    except (ValueError, TypeError, u.UnitConversionError):
        problems.add(f"unit {unit} is not a time unit", None, column)
        return
    if not math.isclose(factor, 1.0):
        problems.add(f"the header says the times are in {unit}, but a mid-time is a Julian-date "
                     "number counted in days (its standard says which); remove the unit or give "
                     "the times as JD/BJD numbers", None, column)


def _to_bjd(raw, times, row_std, target, observer, scol, tcol) -> np.ndarray:
    bjd = np.empty(len(times))
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
        bjd[idx] = converted(to_bjd_tdb, raw, raw.where(int(idx[0])), tcol, times[idx], std, target, observer)
    return bjd


def _epochs(raw, ecol, bjd, kinds, ephemeris, problems) -> np.ndarray:
    n = len(bjd)
    if ecol in raw.columns and not all(_missing(v) for v in raw.columns[ecol]):
        epochs = np.zeros(n, dtype=np.int64)
        for i, v in enumerate(raw.columns[ecol]):
            why = _why_not_number(v)
            if why is not None:
                problems.add(why, raw.where(i), ecol)
                continue
            x = float(v)
            if x != round(x):
                problems.add(f"epoch {v!r} is not an integer", raw.where(i), ecol)
                continue
            epochs[i] = int(round(x))
        if not problems.items:
            check_given_epochs(bjd, epochs, kinds, ephemeris, raw, ecol, problems)
        return epochs
    if ephemeris is None:
        raise EphemerisError(located(
            "no 'epoch' column: give a reference ephemeris (T0,P in BJD_TDB days; "
            "--ephemeris on the command line) so epochs can be assigned", raw.path))
    return place_rows(bjd, kinds, ephemeris, raw, problems)


def _extra_columns(raw, names) -> dict:
    extra = {}
    for name, values in raw.columns.items():
        if name in names.values() or name in _KNOWN:
            continue
        arr = np.array(["" if _missing(v) else v for v in values], dtype=object)
        try:
            extra[name] = arr.astype(float)
        except (TypeError, ValueError):
            extra[name] = arr.astype(str)
    return extra


def raw_from_table(table) -> RawTable:
    """A RawTable from an astropy Table/QTable or a pandas DataFrame (rows numbered from 1)."""
    from astropy.table import Table

    if hasattr(table, "to_dict") and hasattr(table, "columns") and not isinstance(table, Table):
        try:
            table = Table.from_pandas(table)
        except Exception as exc:  # pandas/astropy raise many types for odd frames
            raise InputError(f"the DataFrame cannot be read as a table ({type(exc).__name__})") from None
    if not isinstance(table, Table):
        raise InputError(f"expected an astropy Table, QTable or pandas DataFrame, not {type(table).__name__}")
    if len(table) == 0:
        raise InputError("the table has no rows")
    columns, units = {}, {}
    for name in table.colnames:
        col = table[name]
        key = str(name).strip().lower()
        values = col.value if hasattr(col, "value") and hasattr(col, "unit") else np.asarray(col)
        mask = np.ma.getmaskarray(col) if hasattr(col, "mask") else np.zeros(len(col), bool)
        columns[key] = [None if m else (v.item() if hasattr(v, "item") else v)
                        for v, m in zip(np.asarray(values), mask)]
        if getattr(col, "unit", None) is not None:
            units[key] = col.unit
    return RawTable("table", columns, units, list(range(1, len(table) + 1)), dict(table.meta))


def _select_rows(raw: RawTable, drop_rows) -> RawTable:
    """``raw`` without the file rows ``drop_rows`` (1-based data rows, as errors name them)."""
    drop = {int(r) for r in (drop_rows or ())}
    if not drop:
        return raw
    missing = sorted(drop - set(raw.rows))
    if missing:
        raise InputError(located(f"--drop-rows names row(s) {', '.join(map(str, missing))}, which the "
                                 f"file does not have (rows 1–{max(raw.rows)})", raw.path))
    idx = [i for i, r in enumerate(raw.rows) if r not in drop]
    if not idx:
        raise InputError(located("--drop-rows leaves no row", raw.path))
    columns = {k: [v[i] for i in idx] for k, v in raw.columns.items()}
    return RawTable(raw.path, columns, raw.units, [raw.rows[i] for i in idx], raw.meta,
                    [raw.lines[i] for i in idx] if raw.lines else [])


def _column_names(raw: RawTable, columns: dict) -> dict:
    for key in columns:
        if key not in _KNOWN:
            raise InputError(f"column mapping names {key!r}, which is not one of "
                             f"ttvkit's columns: {', '.join(_KNOWN)}")
    names = {key: str(columns.get(key, key)).strip().lower() for key in _KNOWN}
    for key in ("time", "uncertainty"):
        if names[key] not in raw.columns:
            hint = "" if key not in columns else " (as mapped)"
            raise InputError(located(
                f"missing column '{names[key]}'{hint}; the file has: "
                f"{', '.join(raw.columns) or 'none'}; map yours with columns=... "
                "(--column time=NAME on the command line)", raw.path))
    return names


def _numbers(raw: RawTable, column: str, problems: Problems) -> np.ndarray:
    out = np.full(len(raw.rows), np.nan)
    for i, v in enumerate(raw.columns[column]):
        why = _why_not_number(v)
        if why is None:
            out[i] = float(v)
        else:
            problems.add(why, raw.where(i), column)
    return out


def _labels(raw, column, default, n, problems, parse=None):
    out = np.full(n, default, dtype=object)
    if column not in raw.columns:
        return out
    for i, v in enumerate(raw.columns[column]):
        if _missing(v):
            continue
        if parse is None:
            out[i] = str(v).strip()
            continue
        value = parse(v)
        if value is None:
            problems.add(f"unknown kind {v!r}; known kinds: transit, occultation, primary, secondary",
                         raw.where(i), column)
        else:
            out[i] = value
    return out


def _standards(raw, column, file_std, bare_bjd, problems):
    """The standard of each row (the row's own, else the file's); a bare 'BJD' read as told."""
    out, bare = [], []
    for i in range(len(raw.rows)):
        value = raw.columns[column][i] if column in raw.columns else None
        if _missing(value):
            if file_std is None:
                problems.add("no time standard: the row has none and none was given for the file; "
                             "give standard=... (--standard on the command line), e.g. BJD_TDB "
                             "or HJD_UTC", raw.where(i), column, TimeStandardError)
            out.append(file_std)
            continue
        text = str(value).strip()
        if text.upper() == "BJD" and bare_bjd is not None:
            out.append(bare_bjd)
            bare.append(raw.where(i))
            continue
        try:
            out.append(parse_standard(text))
        except TimeStandardError as exc:
            hint = (" (if the table's bare 'BJD' has one meaning, say it once: "
                    "bare_bjd=... / --bare-bjd BJD_TDB)" if text.upper() == "BJD" else "")
            problems.add(str(exc) + hint, raw.where(i), column, TimeStandardError)
            out.append(None)
    if bare:
        warnings.warn(located(f"{len(bare)} row(s) labelled only 'BJD' (rows "
                              f"{', '.join(map(str, bare[:12]))}{' ...' if len(bare) > 12 else ''}) "
                              f"read as {bare_bjd.name}, as told", raw.path, None, column),
                      IntakeWarning, stacklevel=4)
    return out
