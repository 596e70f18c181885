"""Timing tables: validated mid-times, all in BJD_TDB, with their epochs.

A :class:`TimingTable` is what every later step of ttvkit reads.  Rows are
one mid-time each:

==================  =========================================================
column              meaning
==================  =========================================================
``epoch``           integer cycle number from the reference ephemeris
``time``            mid-time, BJD_TDB, days
``uncertainty``     1σ uncertainty of ``time``, days
``kind``            ``transit``, ``occultation`` (planets) or ``primary``,
                    ``secondary`` (eclipsing binaries)
``source``          where the time comes from (paper, observer, file)
``standard``        the standard of ``time`` as written (always ``BJD_TDB``
                    in tables ttvkit writes, so re-reading is exact)
``given_standard``  the standard the time was first given in (provenance)
==================  =========================================================

Plain CSV with the columns ``time``, ``uncertainty`` and optionally
``epoch``, ``kind``, ``source``, ``standard`` reads with no options but the
file's standard and the target's coordinates; other layouts read with a
column mapping.  Header names may carry a unit (``uncertainty [s]``); times
and uncertainties without one are in days.
"""

from __future__ import annotations

import io
import os
import warnings
from pathlib import Path

import astropy.units as u
import numpy as np
from astropy.coordinates import EarthLocation, SkyCoord

from ttvkit._version import __version__
from ttvkit.constants import YEAR_D
from ttvkit.errors import EphemerisError, InputError, TtvkitWarning
from ttvkit.io.readers import atomic_write_text, read_raw_table
from ttvkit.timing.ephemeris import KINDS, Ephemeris

__all__ = ["TimingTable"]


class TimingTable:
    """A validated table of mid-times in BJD_TDB.

    Parameters
    ----------
    time : array_like or Quantity
        Mid-times, BJD_TDB (days if plain numbers).
    uncertainty : array_like or Quantity
        1σ uncertainties (days if plain numbers); must be positive.
    epoch : array_like of int, optional
        Epochs; assigned from ``ephemeris`` when omitted.
    kind : str or array_like of str, optional
        ``transit`` (default), ``occultation``, ``primary`` or ``secondary``.
    source : str or array_like of str, optional
        Source label of each row.
    given_standard : str or array_like of str, optional
        The standard each time was originally given in (``BJD_TDB`` default).
    target : SkyCoord, optional
        Target coordinates (stored in the metadata when written).
    ephemeris : Ephemeris, optional
        The reference ephemeris.
    extra : dict, optional
        Further per-row columns (e.g. ``beta``, ``coverage`` from light curves).

    Examples
    --------
    >>> t = TimingTable([2455000.0, 2455002.7], [1e-4, 1e-4], epoch=[0, 1])
    >>> len(t)
    2
    """

    def __init__(self, time, uncertainty, epoch=None, kind="transit", source="unnamed",
                 given_standard="BJD_TDB", target: SkyCoord | None = None,
                 ephemeris: Ephemeris | None = None, extra: dict | None = None):
        self.time = _days(time, "time")
        n = self.time.size
        self.uncertainty = _sized(_days(uncertainty, "uncertainty"), n, "uncertainty")
        self.kind = _column(kind, n, "kind")
        self.source = _column(source, n, "source")
        self.given_standard = _column(given_standard, n, "given_standard")
        for k in np.unique(self.kind):
            if k not in KINDS:
                raise InputError(f"unknown kind {k!r}; known kinds: {', '.join(KINDS)}")
        if not np.all(np.isfinite(self.time)):
            raise InputError(f"time: row {int(np.flatnonzero(~np.isfinite(self.time))[0]) + 1} "
                             "is not a finite number")
        if not np.all(self.uncertainty > 0):
            raise InputError(f"uncertainty: row {int(np.flatnonzero(~(self.uncertainty > 0))[0]) + 1} "
                             "must be a positive number")
        self.ephemeris = ephemeris
        self.target = target
        if epoch is None:
            if ephemeris is None:
                raise EphemerisError("no epochs given: give an 'epoch' column or a "
                                     "reference ephemeris (T0, P) to assign them")
            self.epoch = ephemeris.assign_epochs(self.time, self.kind)
        else:
            raw_epoch = _sized(np.atleast_1d(np.asarray(epoch)), n, "epoch")
            try:
                as_float = raw_epoch.astype(float)
            except (TypeError, ValueError):
                raise InputError("epoch: values must be integers") from None
            if np.any(as_float != np.round(as_float)):
                raise InputError("epoch values must be integers")
            self.epoch = as_float.astype(np.int64)
        self.extra = {k: _sized(np.atleast_1d(np.asarray(v)), n, str(k)) for k, v in (extra or {}).items()}
        #: What reading the table warned about (repeats dropped, disagreements, old dates, bare 'BJD'
        #: labels), kept so that JSON outputs and reports can carry it; the warnings are also issued.
        self.intake_warnings: list[str] = []

    # ------------------------------------------------------------------ basics
    def __len__(self) -> int:
        return int(self.time.size)

    def __repr__(self) -> str:
        span = (self.time.max() - self.time.min()) / YEAR_D if len(self) else 0.0
        return (f"<TimingTable: {len(self)} mid-times from {len(np.unique(self.source))} "
                f"source(s) over {span:.1f} yr, BJD_TDB>")

    @property
    def sources(self) -> list:
        """The source labels in order of first appearance."""
        _, first = np.unique(self.source, return_index=True)
        return [str(self.source[i]) for i in sorted(first)]

    def subset(self, mask) -> "TimingTable":
        """The rows where ``mask`` is true (or the given indices)."""
        index = np.asarray(mask)
        out = TimingTable(self.time[index], self.uncertainty[index], self.epoch[index],
                          self.kind[index], self.source[index], self.given_standard[index],
                          self.target, self.ephemeris,
                          {k: v[index] for k, v in self.extra.items()})
        out.intake_warnings = list(self.intake_warnings)
        return out

    def sorted(self) -> "TimingTable":
        """A copy ordered by mid-time."""
        return self.subset(np.argsort(self.time, kind="stable"))

    @staticmethod
    def concatenate(tables: "list[TimingTable]") -> "TimingTable":
        """Join tables (the first one's target and ephemeris are kept)."""
        if not tables:
            raise InputError("nothing to concatenate")
        keys = set().union(*(t.extra for t in tables))
        extra = {}
        for k in keys:
            numeric = all(np.asarray(t.extra[k]).dtype.kind in "fiub" for t in tables if k in t.extra)
            parts = [t.extra[k] if k in t.extra else np.full(len(t), np.nan if numeric else "")
                     for t in tables]
            extra[k] = np.concatenate([np.asarray(p, dtype=object) for p in parts])
            try:
                extra[k] = extra[k].astype(float)
            except (TypeError, ValueError):
                extra[k] = extra[k].astype(str)
        first = tables[0]
        out = TimingTable(np.concatenate([t.time for t in tables]),
                          np.concatenate([t.uncertainty for t in tables]),
                          np.concatenate([t.epoch for t in tables]),
                          np.concatenate([t.kind for t in tables]),
                          np.concatenate([t.source for t in tables]),
                          np.concatenate([t.given_standard for t in tables]),
                          first.target, first.ephemeris, extra)
        out.intake_warnings = [w for t in tables for w in t.intake_warnings]
        return out

    def observed_minus_calculated(self, ephemeris: Ephemeris | None = None) -> u.Quantity:
        """O−C against ``ephemeris`` (the table's own if omitted), in seconds."""
        eph = ephemeris or self.ephemeris
        if eph is None:
            raise EphemerisError("O−C needs an ephemeris; none given and the table has none")
        return ((self.time - eph.predict(self.epoch, self.kind)) * u.day).to(u.s)

    # --------------------------------------------------------------- in & out
    @classmethod
    def from_table(cls, table, standard: str | None = None, **kwargs) -> "TimingTable":
        """A TimingTable from an astropy Table/QTable or a pandas DataFrame.

        The columns are read as in :meth:`read` (``time``, ``uncertainty``,
        optionally ``epoch``, ``kind``, ``source``, ``standard``; a column
        with a unit carries it; other names through ``columns=``), and every
        check of a file applies, rows numbered from 1.

        Parameters
        ----------
        table : astropy.table.Table, QTable or pandas.DataFrame
        standard : str, optional
            Standard of rows without one.
        **kwargs
            As for :meth:`read` (target, observer, ephemeris, columns, units,
            source, drop_rows, bare_bjd).
        """
        from ttvkit.timing.reading import build_table, raw_from_table

        raw = raw_from_table(table)
        kwargs.setdefault("source", "table")
        return _keeping_warnings(build_table, cls, raw, standard=standard, target=kwargs.pop("target", None),
                           observer=kwargs.pop("observer", None), ephemeris=kwargs.pop("ephemeris", None),
                           columns=kwargs.pop("columns", None) or {}, units=kwargs.pop("units", None) or {},
                           **kwargs)

    def to_pandas(self):
        """The table as a pandas DataFrame (times and uncertainties in days, BJD_TDB)."""
        return self.to_astropy().to_pandas()

    def to_astropy(self):
        """The table as an :class:`astropy.table.Table` with units and metadata."""
        from astropy.table import Table

        table = Table()
        table["epoch"] = self.epoch
        table["time"] = self.time * u.day
        table["time"].description = "mid-time, BJD_TDB"
        table["uncertainty"] = self.uncertainty * u.day
        table["uncertainty"].description = "1-sigma uncertainty of the mid-time"
        table["kind"] = self.kind
        table["source"] = self.source
        table["standard"] = np.full(len(self), "BJD_TDB")
        table["given_standard"] = self.given_standard
        for k, v in self.extra.items():
            table[k] = v
        table.meta["time_standard"] = "BJD_TDB"
        table.meta["written_by"] = f"ttvkit {__version__}"
        if self.target is not None:
            target = {"ra_deg": float(self.target.ra.deg), "dec_deg": float(self.target.dec.deg)}
            try:
                target["pm_ra_cosdec_mas_per_yr"] = float(self.target.pm_ra_cosdec.to_value(u.mas / u.yr))
                target["pm_dec_mas_per_yr"] = float(self.target.pm_dec.to_value(u.mas / u.yr))
                target["reference_epoch_jyear"] = float(self.target.obstime.jyear)
            except (AttributeError, TypeError):
                pass
            table.meta["target"] = target
        if self.ephemeris is not None:
            table.meta["ephemeris"] = {"reference_time_bjd_tdb": self.ephemeris.reference_time,
                                       "period_days": self.ephemeris.period}
        return table

    def write(self, path: "str | os.PathLike", overwrite: bool = False, meta: dict | None = None) -> Path:
        """Write the table as ECSV (atomically; refuses to overwrite unless asked).

        ``meta`` adds entries to the ECSV header (e.g. the edits made to the table).
        """
        buffer = io.StringIO()
        table = self.to_astropy()
        table.meta.update(meta or {})
        table.write(buffer, format="ascii.ecsv")
        return atomic_write_text(path, buffer.getvalue(), overwrite=overwrite)

    @classmethod
    def read(cls, path: "str | os.PathLike", standard: str | None = None,
             target: SkyCoord | None = None, observer: EarthLocation | None = None,
             ephemeris: Ephemeris | None = None, columns: dict | None = None,
             units: dict | None = None, source: str | None = None, drop_rows=(),
             bare_bjd: str | None = None) -> "TimingTable":
        """Read a CSV or ECSV timing table and convert it to BJD_TDB.

        Parameters
        ----------
        path : str or path-like
            The file.
        standard : str, optional
            Time standard of rows that have no ``standard`` value
            (see :func:`ttvkit.timing.standards.parse_standard`).
        target : SkyCoord, optional
            Target coordinates, needed for JD and HJD times (an ECSV written
            by ttvkit carries them).
        observer : EarthLocation, optional
            Where JD times were recorded (geocentre by default).
        ephemeris : Ephemeris, optional
            Used to assign epochs when the file has none.
        columns : dict, optional
            Mapping from ttvkit's column names to the file's, e.g.
            ``{"time": "HJD", "uncertainty": "err"}``.
        units : dict, optional
            Units of columns whose header carries none, e.g. ``{"uncertainty": "s"}``.
        source : str, optional
            Source label for rows without one (default: the file name).
        drop_rows : sequence of int, optional
            Data rows of the file (1-based, as errors name them) to leave out
            before anything is checked.
        bare_bjd : str, optional
            What a row labelled only ``BJD`` means (e.g. ``"BJD_TDB"``); without
            it such rows are refused.  Used rows are named in a warning.

        Returns
        -------
        TimingTable

        Raises
        ------
        InputError
            Naming the file, row and column of whatever is wrong.
        """
        raw = read_raw_table(path)
        from ttvkit.timing.reading import build_table

        return _keeping_warnings(build_table, cls, raw, standard=standard, target=target, observer=observer,
                           ephemeris=ephemeris, columns=columns or {}, units=units or {},
                           source=source or Path(path).name, drop_rows=drop_rows, bare_bjd=bare_bjd)

    def relabel_source(self, source: str, standard: str) -> "TimingTable":
        """A copy in which ``source``'s times are re-read as given in ``standard``.

        For a source the standards check flagged: its original numbers are
        recovered from its recorded ``given_standard`` and converted again,
        and the new standard is recorded.  The table itself is unchanged.
        """
        from ttvkit.timing.standards import from_bjd_tdb, parse_standard, to_bjd_tdb

        mine = self.source == source
        if not mine.any():
            raise InputError(f"no source {source!r} in the table; sources: {', '.join(self.sources)}")
        new = parse_standard(standard)
        out = self.subset(np.arange(len(self)))
        for given in np.unique(self.given_standard[mine]):
            rows = mine & (self.given_standard == given)
            original = from_bjd_tdb(self.time[rows], given, self.target) if given != "BJD_TDB" else self.time[rows]
            out.time[rows] = to_bjd_tdb(original, new, self.target) if new.name != "BJD_TDB" else original
        labels = out.given_standard.astype(object)  # a longer name must not be truncated
        labels[mine] = new.name
        out.given_standard = labels.astype(str)
        return out

    def check_standards(self, **kwargs):
        """Sources whose times look shifted by a time-standard mix-up.

        See :func:`ttvkit.timing.standards_check.suspect_standards`.
        """
        from ttvkit.timing.standards_check import suspect_standards

        return suspect_standards(self, **kwargs)


def _keeping_warnings(make, *args, **kwargs) -> "TimingTable":
    """``make(*args, **kwargs)`` with ttvkit's warnings both issued and kept on the table made."""
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        table = make(*args, **kwargs)
    for w in caught:
        warnings.warn_explicit(w.message, w.category, w.filename, w.lineno, source=w.source)
    table.intake_warnings = [str(w.message) for w in caught if issubclass(w.category, TtvkitWarning)]
    return table


def _days(values, name: str) -> np.ndarray:
    if isinstance(values, u.Quantity):
        try:
            values = values.to_value(u.day)
        except u.UnitConversionError:
            raise InputError(f"{name}: unit {values.unit} is not a time unit") from None
    try:
        return np.atleast_1d(np.asarray(values, dtype=float)).copy()
    except (TypeError, ValueError):
        raise InputError(f"{name}: values must be numbers") from None


def _sized(values: np.ndarray, n: int, name: str) -> np.ndarray:
    """One value per row (a single value is repeated); a clear error for a wrong length."""
    if values.ndim == 1 and values.size == n:
        return values.copy()
    if values.size == 1:
        return np.full(n, values.ravel()[0], dtype=values.dtype)
    raise InputError(f"{name}: has {values.size} values for {n} mid-times; give one per mid-time")


def _column(values, n: int, name: str) -> np.ndarray:
    arr = np.asarray(values, dtype=str)
    if arr.ndim == 0:
        return np.full(n, str(arr), dtype=object).astype(str)
    if arr.size != n:
        raise InputError(f"{name}: has {arr.size} values for {n} rows")
    return arr.copy()
