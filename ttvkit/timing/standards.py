"""Time standards: from what a paper or a mission file gives to BJD_TDB.

Mid-times in the literature come as JD, MJD, HJD or BJD, counted in UTC, TT
or TDB, and mission products count days from a fixed offset.  Mixing them is
the commonest cause of spurious timing variations: UTC and TDB differ by
32.184 s plus the leap seconds (69.184 s since 2017-01-01), and HJD and BJD
by up to about 4 s (Eastman, Siverd & Gaudi 2010, PASP 122, 935).  This module
converts once, at the edge, with :mod:`astropy.time` underneath: the
barycentric and heliocentric light-travel times come from astropy's built-in
ERFA ephemeris (``epv00``), TDB−TT includes the observer's topocentric term.

A standard is written ``FRAME_SCALE`` with an optional day offset:

* ``FRAME`` — ``JD`` (as recorded by the observer, no light-time correction),
  ``MJD`` (``JD − 2400000.5``), ``HJD`` (heliocentric), ``BJD`` (barycentric);
* ``SCALE`` — ``UTC``, ``TT`` or ``TDB``;
* offset — ``BJD_TDB-2457000`` means the numbers are BJD_TDB − 2457000.
  The mission day counts ``BTJD`` (BJD_TDB − 2457000) and ``BKJD``
  (BJD_TDB − 2454833) are accepted by name (mission data-product
  conventions).

No network is used: see :mod:`ttvkit._offline`.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

import astropy.units as u
import numpy as np
from astropy.coordinates import EarthLocation, SkyCoord
from astropy.time import Time

from ttvkit import _offline  # noqa: F401  (switches IERS downloads off)
from ttvkit.constants import YEAR_D
from ttvkit.errors import TimeStandardError

__all__ = [
    "TimeStandard",
    "parse_standard",
    "known_standards",
    "to_bjd_tdb",
    "from_bjd_tdb",
    "bjd_tdb_to_utc",
    "make_target",
    "make_observer",
    "GEOCENTRE",
]

#: The geocentre, the default observer.
GEOCENTRE = EarthLocation.from_geocentric(0.0, 0.0, 0.0, unit=u.m)

_FRAMES = ("JD", "MJD", "HJD", "BJD")
_SCALES = ("UTC", "TT", "TDB")
_MISSION_DAY_COUNTS = {"BTJD": 2457000.0, "BKJD": 2454833.0}
_PATTERN = re.compile(
    r"^(?P<frame>MJD|JD|HJD|BJD)(?:[_\- ]?(?P<scale>UTC|TT|TDB))?"
    r"(?:\s*(?P<sign>[+-])\s*(?P<offset>[0-9]+(?:\.[0-9]*)?))?$"
)


def known_standards() -> str:
    """Human-readable list of the accepted standards, for error messages."""
    return ("FRAME_SCALE with FRAME one of JD, MJD, HJD, BJD and SCALE one of "
            "UTC, TT, TDB (e.g. BJD_TDB, HJD_UTC, JD_UTC, MJD_UTC), optionally "
            "with a day offset (BJD_TDB-2457000), or the mission day counts "
            "BTJD (BJD_TDB-2457000) and BKJD (BJD_TDB-2454833)")


@dataclass(frozen=True)
class TimeStandard:
    """A parsed time standard.

    Attributes
    ----------
    frame : str
        ``"JD"`` (no light-time correction), ``"HJD"`` or ``"BJD"``.
    scale : str
        astropy scale name: ``"utc"``, ``"tt"`` or ``"tdb"``.
    offset : float
        Days to add to a given number to obtain the full Julian date.
    name : str
        Canonical spelling, e.g. ``"HJD_UTC"`` or ``"BJD_TDB-2457000"``.
    """

    frame: str
    scale: str
    offset: float
    name: str

    @property
    def needs_target(self) -> bool:
        """True if converting this standard needs the target's coordinates."""
        return self.frame in ("JD", "HJD")

    def __str__(self) -> str:
        return self.name


def parse_standard(text: "str | TimeStandard") -> TimeStandard:
    """Parse a time-standard name such as ``"HJD_UTC"`` or ``"BTJD"``.

    Parameters
    ----------
    text : str or TimeStandard
        The name; case and the separator (``_``, ``-`` or space) are free.

    Returns
    -------
    TimeStandard

    Raises
    ------
    TimeStandardError
        If the name is unknown, or ambiguous (a frame without a scale:
        "BJD" could be BJD_UTC or BJD_TDB, which differ by over a minute).

    Examples
    --------
    >>> parse_standard("bjd_tdb-2457000").offset
    2457000.0
    >>> parse_standard("MJD_UTC").name
    'MJD_UTC'
    """
    if isinstance(text, TimeStandard):
        return text
    if not isinstance(text, str):
        raise TimeStandardError(f"time standard must be a string, got {text!r}; "
                                f"known standards: {known_standards()}")
    key = text.strip().upper()
    if key in _MISSION_DAY_COUNTS:
        offset = _MISSION_DAY_COUNTS[key]
        return TimeStandard("BJD", "tdb", offset, f"BJD_TDB-{offset:.10g}")
    match = _PATTERN.match(key)
    if match is None:
        raise TimeStandardError(f"unknown time standard {text!r}; known standards: "
                                f"{known_standards()}")
    frame, scale = match["frame"], match["scale"]
    if scale is None:
        raise TimeStandardError(
            f"ambiguous time standard {text!r}: {frame} must name its time scale "
            f"({', '.join(frame + '_' + s for s in _SCALES)}); UTC and TDB differ "
            f"by more than a minute")
    offset = 0.0
    name = f"{frame}_{scale}"
    if frame == "MJD":
        offset = 2400000.5
        frame = "JD"
    if match["offset"] is not None:
        if name.startswith("MJD"):
            raise TimeStandardError(f"time standard {text!r}: MJD already carries "
                                    "an offset; use JD with an offset instead "
                                    f"(known standards: {known_standards()})")
        extra = float(match["offset"])
        offset = extra if match["sign"] == "-" else -extra
        name = f"{name}{match['sign']}{extra:.10g}"
    return TimeStandard(frame, scale.lower(), offset, name)


def make_target(ra: "float | str | u.Quantity", dec: "float | str | u.Quantity",
                pm_ra_cosdec: "float | u.Quantity | None" = None,
                pm_dec: "float | u.Quantity | None" = None,
                reference_epoch: "float | None" = 2000.0) -> SkyCoord:
    """Build the target direction from RA/Dec (degrees or sexagesimal).

    Parameters
    ----------
    ra, dec : float, str or Quantity
        Right ascension and declination (ICRS).  Floats are degrees; strings
        may be sexagesimal (``"14h30m12.3s"``, ``"14:30:12.3"`` is read as
        hours for RA and degrees for Dec).
    pm_ra_cosdec, pm_dec : float or Quantity, optional
        Proper motion; floats are mas/yr.
    reference_epoch : float, optional
        Julian year at which ``ra`` and ``dec`` hold (J2000 by default).

    Returns
    -------
    astropy.coordinates.SkyCoord
    """
    from ttvkit.errors import InputError

    try:
        ra_q = _angle(ra, u.hourangle if isinstance(ra, str) and ":" in ra else u.deg)
        dec_q = _angle(dec, u.deg)
        kwargs = {}
        if pm_ra_cosdec is not None or pm_dec is not None:
            kwargs["pm_ra_cosdec"] = u.Quantity(pm_ra_cosdec or 0.0, u.mas / u.yr)
            kwargs["pm_dec"] = u.Quantity(pm_dec or 0.0, u.mas / u.yr)
            kwargs["obstime"] = Time(reference_epoch, format="jyear", scale="tdb")
        return SkyCoord(ra=ra_q, dec=dec_q, frame="icrs", **kwargs)
    except (ValueError, TypeError, u.UnitsError) as exc:
        raise InputError(f"cannot read target coordinates ra={ra!r}, dec={dec!r}: "
                         f"{exc}") from None


def _angle(value, default_unit):
    from astropy.coordinates import Angle

    if isinstance(value, u.Quantity):
        return Angle(value)
    if isinstance(value, str):
        text = value.strip()
        try:
            return Angle(float(text), u.deg)
        except ValueError:
            pass
        if any(c in text.lower() for c in "hdms°'\""):
            return Angle(text)
        return Angle(text, default_unit)
    return Angle(float(value), u.deg)


def make_observer(longitude: float, latitude: float, height: float = 0.0) -> EarthLocation:
    """An observatory from geodetic longitude, latitude (degrees, east positive) and height (m)."""
    from ttvkit.errors import InputError

    if not (-90.0 <= latitude <= 90.0):
        raise InputError(f"observer latitude {latitude} is outside [-90, 90] degrees")
    return EarthLocation.from_geodetic(longitude * u.deg, latitude * u.deg, height * u.m)


def _direction(target: SkyCoord, t: Time) -> SkyCoord:
    """Target direction at the times ``t``, moved by its proper motion if known.

    A linear motion on the sky is ample: the light-time error of a 1″
    position error is at most 499 s × 4.8e-6 = 2.4 ms, and proper motions are
    rarely more than 1″ per decade for timing targets.
    """
    try:
        pm_ra = target.pm_ra_cosdec
        pm_dec = target.pm_dec
    except (AttributeError, TypeError):
        return target
    ref = target.obstime if target.obstime is not None else Time(2000.0, format="jyear")
    years = (t.tdb.jd - ref.tdb.jd) / YEAR_D * u.yr
    dec = target.dec + pm_dec * years
    ra = target.ra + pm_ra * years / np.cos(target.dec.to_value(u.rad))
    return SkyCoord(ra=ra, dec=dec, frame="icrs")


def _as_days(values, std: "TimeStandard | None" = None) -> np.ndarray:
    """Plain day numbers; an astropy Time is read as a Julian date in the standard's scale."""
    if isinstance(values, Time):
        if std is None:
            raise TimeStandardError("an astropy Time needs a standard to say its frame")
        t = getattr(values, std.scale)
        return np.atleast_1d((t.jd1 - std.offset) + t.jd2)
    if isinstance(values, u.Quantity):
        try:
            values = values.to_value(u.day)
        except u.UnitConversionError:
            raise TimeStandardError(f"times in {values.unit} are not days") from None
    try:
        return np.atleast_1d(np.asarray(values, dtype=float))
    except (TypeError, ValueError):
        raise TimeStandardError("times must be numbers (days), a Quantity or an astropy Time") from None


def _time(standard: TimeStandard, values: np.ndarray, location: EarthLocation) -> Time:
    return Time(np.full(values.shape, standard.offset), values, format="jd",
                scale=standard.scale, location=location)


def to_bjd_tdb(values, standard: "str | TimeStandard", target: SkyCoord | None = None,
               observer: EarthLocation | None = None) -> np.ndarray:
    """Convert times given in ``standard`` to BJD_TDB (days).

    Parameters
    ----------
    values : array_like or Quantity
        The given times (days, in the numbering of ``standard``).
    standard : str or TimeStandard
        See :func:`parse_standard`.
    target : SkyCoord, optional
        Target direction; needed for JD and HJD frames.
    observer : EarthLocation, optional
        Where JD times were recorded; the geocentre by default.  (For HJD
        and BJD the observer enters only through the tiny topocentric
        TDB−TT term.)

    Returns
    -------
    numpy.ndarray
        BJD_TDB in days.

    Notes
    -----
    HJD → BJD undoes the heliocentric correction exactly: the observed time
    ``t`` solving ``t + Δ_hel(t) = HJD`` is found by fixed-point iteration
    (Δ_hel changes by < 1e-4 s per s, so each iteration gains four digits),
    then the barycentric correction of that ``t`` is applied.
    """
    std = parse_standard(standard)
    x = _as_days(values, std)
    location = observer if observer is not None else GEOCENTRE
    if std.frame == "BJD":
        t = _time(std, x, GEOCENTRE)
        tdb = t.tdb
        return tdb.jd1 + tdb.jd2
    if target is None:
        raise TimeStandardError(
            f"converting {std.name} times to BJD_TDB needs the target's coordinates "
            "(give ra and dec)")
    if std.frame == "HJD":
        observed = x.copy()
        for _ in range(8):
            t = _time(std, observed, location)
            helio = t.light_travel_time(_direction(target, t), kind="heliocentric")
            new = x - helio.to_value(u.day)
            converged = np.max(np.abs(new - observed)) < 1e-11
            observed = new
            if converged:
                break
        x = observed
    t = _time(std, x, location)
    bary = t.light_travel_time(_direction(target, t), kind="barycentric")
    tdb = t.tdb
    return tdb.jd1 + (tdb.jd2 + bary.to_value(u.day))


def from_bjd_tdb(bjd_tdb, standard: "str | TimeStandard", target: SkyCoord | None = None,
                 observer: EarthLocation | None = None) -> np.ndarray:
    """Express BJD_TDB times in another standard (the inverse of :func:`to_bjd_tdb`).

    Solved by fixed-point iteration on :func:`to_bjd_tdb` to 1e-10 d (9 µs).

    Parameters
    ----------
    bjd_tdb : array_like or Quantity
        Times in BJD_TDB (days).
    standard, target, observer
        As in :func:`to_bjd_tdb`.

    Returns
    -------
    numpy.ndarray
        The times in ``standard``'s numbering (days).
    """
    std = parse_standard(standard)
    goal = _as_days(bjd_tdb)
    guess = goal - std.offset
    for _ in range(10):
        error = goal - to_bjd_tdb(guess, std, target, observer)
        guess = guess + error
        if np.max(np.abs(error)) < 1e-10:
            break
    return guess


def bjd_tdb_to_utc(bjd_tdb, target: SkyCoord | None, observer: EarthLocation | None = None) -> Time:
    """The UTC instant at the observer when a BJD_TDB event is seen.

    Without a target the barycentric correction cannot be undone; the result
    is then the TDB instant expressed in UTC (off by up to ±8.3 min).
    """
    if target is None:
        x = _as_days(bjd_tdb)
        return Time(x, format="jd", scale="tdb").utc
    jd_utc = from_bjd_tdb(bjd_tdb, "JD_UTC", target, observer)
    return Time(jd_utc, format="jd", scale="utc")


def target_from_meta(meta: dict) -> SkyCoord | None:
    """The target stored in an ECSV header by :meth:`TimingTable.write`."""
    target = meta.get("target") if isinstance(meta, dict) else None
    if not isinstance(target, dict) or "ra_deg" not in target:
        return None
    return make_target(float(target["ra_deg"]), float(target["dec_deg"]),
                       target.get("pm_ra_cosdec_mas_per_yr"), target.get("pm_dec_mas_per_yr"),
                       target.get("reference_epoch_jyear", 2000.0))
