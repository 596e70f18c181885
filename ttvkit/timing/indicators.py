"""Activity-indicator time series: brightness, spot coverage, S-index, X-ray luminosity, …

An observer testing whether a star's activity follows its binary's period
modulation holds one or more such series: irregularly sampled, with 1σ
errors, in any unit.  :class:`IndicatorSeries` holds one; :func:`read_indicator_series`
reads it from a CSV or ECSV file (or takes an astropy Table or pandas
DataFrame) with

* a time column: ``time`` / ``bjd_tdb`` (BJD_TDB days) or ``year`` (decimal
  years, TDB);
* a value column (named with ``value=``, else the one numeric column that is
  neither the time nor an error);
* an error column (``error``, ``uncertainty``, ``<value>_err`` or
  ``<value>_error``).

Bad input is refused naming the file, row and column.
"""

from __future__ import annotations

import os
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from ttvkit.errors import InputError, located

__all__ = ["IndicatorSeries", "read_indicator_series"]

_TIME_COLUMNS = ("time", "bjd_tdb", "bjd", "year")
_ERROR_NAMES = ("error", "uncertainty", "err", "sigma")


@dataclass(frozen=True)
class IndicatorSeries:
    """One activity indicator: times (BJD_TDB days), values and 1σ errors (any one unit).

    Attributes
    ----------
    name : str
        What the indicator is (shown in the report), e.g. "V-band brightness".
    time, value, error : ndarray
    unit : str
        The values' unit as written (free text; "" when none).
    source : str
        Where it came from (a file, or "table").
    """

    name: str
    time: np.ndarray
    value: np.ndarray
    error: np.ndarray
    unit: str = ""
    source: str = field(default="table", compare=False)

    def __post_init__(self):
        n = np.size(self.time)
        if not (np.size(self.value) == np.size(self.error) == n):
            raise InputError(f"indicator {self.name!r}: time, value and error must have the same length "
                             f"({n}, {np.size(self.value)}, {np.size(self.error)})")
        if n < 10:
            raise InputError(f"indicator {self.name!r} ({self.source}): {n} points; the activity link needs "
                             "at least 10")


def _numbers(raw, name, path):
    out = np.empty(len(raw.columns[name]))
    for i, v in enumerate(raw.columns[name]):
        try:
            out[i] = float(v)
        except (TypeError, ValueError):
            raise InputError(located(f"{v!r} is not a number", path, raw.where(i), name)) from None
        if not np.isfinite(out[i]):
            raise InputError(located(f"{v!r} is not a finite number", path, raw.where(i), name))
    return out


def read_indicator_series(source, value: str | None = None, name: str | None = None) -> IndicatorSeries:
    """Read an activity-indicator series from a file, an astropy Table or a pandas DataFrame.

    Parameters
    ----------
    source : path, astropy Table or pandas DataFrame
    value : str, optional
        The value column (default: the only numeric column that is neither a
        time nor an error).
    name : str, optional
        What the indicator is (default: the value column's name).

    Returns
    -------
    IndicatorSeries

    Raises
    ------
    InputError
        No time or error column, a non-number, a non-positive error, a time
        outside 1800–2100, fewer than 10 rows; each naming the file, row and
        column.
    """
    from ttvkit.io.readers import RawTable, read_raw_table

    if isinstance(source, (str, os.PathLike)):
        raw = read_raw_table(source)
        path = str(Path(source))
    else:
        columns = {str(c).lower(): list(np.asarray(source[c])) for c in getattr(source, "colnames", None)
                   or list(source.columns)}
        n = len(next(iter(columns.values()), []))
        raw = RawTable("table", columns, {}, list(range(1, n + 1)))
        path = "table"
    cols = raw.columns
    time_col = next((c for c in _TIME_COLUMNS if c in cols), None)
    if time_col is None:
        raise InputError(located(f"no time column; name one of {', '.join(_TIME_COLUMNS)} (BJD_TDB days, or "
                                 "'year' in decimal years)", path))
    candidates = [c for c in cols if c != time_col and c not in _ERROR_NAMES
                  and not c.endswith(("_err", "_error", "_uncertainty"))]
    if value is None and len(candidates) == 1:
        value = candidates[0]
    if value is None:
        numeric = [c for c in candidates if _is_numeric(cols[c])]
        if len(numeric) != 1:
            raise InputError(located(f"cannot tell the value column among {numeric or candidates}; name it "
                                     "(value=... / --activity FILE:COLUMN)", path))
        value = numeric[0]
    value = value.lower()
    if value not in cols:
        raise InputError(located(f"no column {value!r}; columns: {', '.join(cols)}", path))
    err_col = next((c for c in (f"{value}_err", f"{value}_error", f"{value}_uncertainty") + _ERROR_NAMES
                    if c in cols), None)
    if err_col is None:
        raise InputError(located(f"no error column for {value!r}; name it error, uncertainty or {value}_err",
                                 path))
    t = _numbers(raw, time_col, path)
    if time_col == "year":
        from astropy.time import Time

        bad = np.flatnonzero((t < 1800) | (t > 2100))
        if bad.size:
            raise InputError(located(f"year {t[bad[0]]:g} is outside 1800–2100", path, raw.where(int(bad[0])),
                                     time_col))
        t = Time(t, format="decimalyear", scale="tdb").jd
    else:
        bad = np.flatnonzero((t < 2378497) | (t > 2488070))          # 1800-01-01 .. 2100-01-01
        if bad.size:
            raise InputError(located(f"{t[bad[0]]:g} is not a BJD_TDB between 1800 and 2100 (an MJD or a "
                                     "mission day count?)", path, raw.where(int(bad[0])), time_col))
    y = _numbers(raw, value, path)
    e = _numbers(raw, err_col, path)
    bad = np.flatnonzero(~(e > 0))
    if bad.size:
        raise InputError(located(f"error {e[bad[0]]:g} must be positive", path, raw.where(int(bad[0])), err_col))
    unit = raw.units.get(value)
    return IndicatorSeries(name or value, t, y, e, unit.to_string() if unit is not None else "", path)


def _is_numeric(values) -> bool:
    try:
        [float(v) for v in values]
    except (TypeError, ValueError):
        return False
    return True
