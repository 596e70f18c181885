"""Any light-curve input :func:`ttvkit.lightcurves.measure.measure` accepts, as ttvkit LightCurves.

Accepted: a path or a sequence of paths (CSV, ECSV, FITS); ttvkit
:class:`~ttvkit.lightcurves.reading.LightCurve` objects; ``(time, flux,
flux_err)`` tuples of arrays or Quantities; astropy ``TimeSeries``; and
objects shaped like lightkurve's ``LightCurve`` (``.time`` an astropy Time,
``.flux`` and ``.flux_err`` arrays or Quantities), duck-typed so that
lightkurve is not a dependency.  In-memory data go through the same
reading, cleaning and normalising as a file (they are written to a private
temporary CSV that is removed at once), so every check of a file applies.
"""

from __future__ import annotations

import os
import tempfile
from dataclasses import replace
from pathlib import Path

import numpy as np

from ttvkit.errors import InputError
from ttvkit.lightcurves.reading import LightCurve, read_light_curve

__all__ = ["as_light_curves"]


def _is_path(x) -> bool:
    return isinstance(x, (str, os.PathLike))


def _times(t, standard):
    """Day numbers and their standard from a Time, Quantity or array."""
    from astropy.time import Time

    from ttvkit.timing.standards import parse_standard

    if isinstance(t, Time):
        if standard is None and t.scale != "tdb":
            raise InputError(f"light-curve times are an astropy Time in scale {t.scale!r}; say their "
                             "standard (standard=..., e.g. JD_UTC or BJD_TDB)")
        std = parse_standard(standard or "BJD_TDB")  # a TDB Time: barycentric, as mission products are
        scaled = getattr(t, std.scale)
        return (scaled.jd1 - std.offset) + scaled.jd2, std.name
    values = getattr(t, "value", t)
    return np.asarray(values, dtype=float), standard


def _plain(x) -> np.ndarray:
    x = getattr(x, "value", x)  # Quantity or masked column
    return np.asarray(np.ma.filled(x, np.nan) if np.ma.isMaskedArray(x) else x, dtype=float)


def _columns(item):
    """(time, flux, flux_err, name) of an in-memory light curve, or None if ``item`` is none."""
    if isinstance(item, tuple) and len(item) == 3:
        return item[0], item[1], item[2], "arrays"
    if hasattr(item, "time") and hasattr(item, "flux") and hasattr(item, "flux_err"):
        return item.time, item.flux, item.flux_err, str(getattr(item, "meta", {}).get("OBJECT", "light curve"))
    if hasattr(item, "time") and hasattr(item, "colnames"):  # astropy TimeSeries
        names = {c.lower(): c for c in item.colnames}
        if "flux" not in names or "flux_err" not in names:
            raise InputError(f"the TimeSeries needs 'flux' and 'flux_err' columns; it has: "
                             f"{', '.join(item.colnames)}")
        return item.time, item[names["flux"]], item[names["flux_err"]], "TimeSeries"
    return None


def _from_memory(time, flux, flux_err, name, options, index) -> LightCurve:
    t, standard = _times(time, options.standard)
    f, e = _plain(flux), _plain(flux_err)
    if not (t.ndim == f.ndim == e.ndim == 1 and t.size == f.size == e.size):
        raise InputError(f"light curve {index + 1} ({name}): time, flux and flux_err must be 1-d arrays "
                         f"of one length (got {t.shape}, {f.shape}, {e.shape})")
    fd, tmp = tempfile.mkstemp(prefix="ttvkit-lc-", suffix=".csv")
    try:
        with os.fdopen(fd, "w") as handle:
            handle.write("time,flux,flux_err\n")
            for row in zip(t, f, e):
                handle.write(",".join(repr(float(v)) for v in row) + "\n")
        lc = read_light_curve(tmp, standard, None, None, options.target, options.observer)
    except InputError as exc:
        raise InputError(str(exc).replace(tmp, f"light curve {index + 1} ({name})")) from None
    finally:
        Path(tmp).unlink(missing_ok=True)
    return replace(lc, source=f"{name} {index + 1}")


def as_light_curves(inputs, options) -> list:
    """Every accepted input as a list of ttvkit LightCurves (``options``: a MeasureOptions)."""
    if _is_path(inputs) or isinstance(inputs, LightCurve) or _columns(inputs) is not None:
        inputs = [inputs]
    try:
        items = list(inputs)
    except TypeError:
        raise InputError(f"measure takes light-curve paths, LightCurves, (time, flux, flux_err) arrays, "
                         f"TimeSeries or lightkurve-style objects, not {type(inputs).__name__}") from None
    if not items:
        raise InputError("no light curves given")
    out = []
    for i, item in enumerate(items):
        if _is_path(item):
            out.append(read_light_curve(item, options.standard, options.columns, options.preset,
                                        options.target, options.observer))
        elif isinstance(item, LightCurve):
            out.append(item)
        else:
            cols = _columns(item)
            if cols is None:
                raise InputError(f"light curve {i + 1}: a {type(item).__name__} is not a path, a LightCurve, "
                                 "(time, flux, flux_err) arrays, a TimeSeries or a lightkurve-style object")
            out.append(_from_memory(*cols, options, i))
    return out
