"""The physical system: the star, its companion, the orbit, the RV limits.

A :class:`System` is what the physical checks read.  It loads from a TOML
file whose values carry units as strings, parsed with :mod:`astropy.units`
(``mass = "0.92 Msun"``); dimensionless values are plain numbers.  A value a
formula needs but the file lacks raises
:class:`~ttvkit.errors.MissingValueError` naming the value and the formula.

Derived values fill themselves in: the luminosity from R and T_eff
(L = 4πR²σT⁴), the semi-major axis from a/R* or from Kepler's third law,
and the other way round.
"""

from __future__ import annotations

import re
import sys
from dataclasses import dataclass, field, fields
from pathlib import Path
from typing import ClassVar

import astropy.constants as const
import astropy.units as u
import numpy as np

from ttvkit.errors import InputError, MissingValueError

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover
    import tomli as tomllib

__all__ = ["Star", "OtherStar", "Companion", "Orbit", "RadialVelocityLimits", "System"]

# key -> (unit the value must convert to, or None for dimensionless), per table
_SCHEMA = {
    "star": {"mass": u.Msun, "radius": u.Rsun, "teff": u.K, "luminosity": u.Lsun,
             "rotation_period": u.day, "activity_cycle": u.yr, "variability_amplitude": None,
             "polytropic_index": None, "ra": u.deg, "dec": u.deg, "age": u.Gyr},
    "companion": {"mass": u.Mjup, "radius": u.Rjup, "love_number": None},
    "orbit": {"period": u.day, "semi_major_axis": u.AU, "a_over_rstar": None,
              "eccentricity": None, "eccentricity_limit": None, "omega": u.deg,
              "inclination": u.deg},
    "radial_velocity": {"baseline": u.yr, "residual_rms": u.m / u.s, "jitter": u.m / u.s,
                        "acceleration": u.m / u.s / u.day,
                        "acceleration_uncertainty": u.m / u.s / u.day},
    # the other star of an eclipsing binary (optional): the same values as [star]
    "other_star": {"mass": u.Msun, "radius": u.Rsun, "teff": u.K, "luminosity": u.Lsun,
                   "rotation_period": u.day, "activity_cycle": u.yr, "variability_amplitude": None,
                   "polytropic_index": None},
}


class _Section:
    """A table of the system file; ``need`` names the missing value and the formula."""

    SECTION: ClassVar[str] = ""

    def need(self, name: str, formula: str):
        """The value ``name``, or a MissingValueError naming it and ``formula``."""
        value = getattr(self, name)
        if value is None:
            where = getattr(self, "_where", None)
            raise MissingValueError(f"{where + ': ' if where else ''}{self.SECTION}.{name} is needed for {formula} but was not given; "
                                    f"add it to the system file's [{self.SECTION}] table")
        return value


@dataclass
class Star(_Section):
    """The host star (or, for an eclipsing binary, the active star).

    Attributes
    ----------
    mass, radius : Quantity
    teff, luminosity : Quantity, optional
        One is enough; the luminosity follows from R and T_eff.
    rotation_period : Quantity, optional
        The star's own spin; the activity budget uses it.
    activity_cycle : Quantity, optional
        A known activity-cycle length.
    variability_amplitude : float, optional
        Observed peak-to-peak photometric variability (relative flux).
    polytropic_index : float, optional
        Structure of the finite-shell model.  Default 1.5 below 0.5 M☉ (fully
        convective below about 0.35 M☉, Chabrier & Baraffe 1997, and convective
        through most of the radius up to about 0.5 M☉) and 3 above (Eddington's
        standard model of a radiative Sun-like star); both from memory.
    """

    SECTION: ClassVar[str] = "star"

    mass: u.Quantity | None = None
    radius: u.Quantity | None = None
    teff: u.Quantity | None = None
    luminosity: u.Quantity | None = None
    rotation_period: u.Quantity | None = None
    activity_cycle: u.Quantity | None = None
    variability_amplitude: float | None = None
    polytropic_index: float | None = None
    ra: u.Quantity | None = None
    dec: u.Quantity | None = None
    age: u.Quantity | None = None

    def __post_init__(self):
        self.derived_fields = set()   # filled in here, re-derived when the inputs are redrawn
        if self.luminosity is None and self.teff is not None and self.radius is not None:
            self.luminosity = (4 * np.pi * self.radius ** 2 * const.sigma_sb
                               * self.teff ** 4).to(u.Lsun)
            self.derived_fields.add("luminosity")

    @property
    def structure_index(self) -> float:
        """Polytropic index used for the finite-shell model (stated in results)."""
        if self.polytropic_index is not None:
            return float(self.polytropic_index)
        mass = self.need("mass", "the stellar structure")
        return 1.5 if mass < 0.5 * u.Msun else 3.0


@dataclass
class OtherStar(Star):
    """The other star of an eclipsing binary (the ``[other_star]`` table): the same values as :class:`Star`.

    With it, the Applegate budget runs with each star as the active one, and
    the mass-transfer and magnetic-braking hypotheses have both stars.  Its
    mass and radius are the companion's (``[companion]`` may then be left out).
    """

    SECTION: ClassVar[str] = "other_star"


@dataclass
class Companion(_Section):
    """The transiting planet, or the other star of an eclipsing binary."""

    SECTION: ClassVar[str] = "companion"

    mass: u.Quantity | None = None
    radius: u.Quantity | None = None
    love_number: float | None = None


@dataclass
class Orbit(_Section):
    """The orbit of the companion.

    ``eccentricity_limit`` is an upper limit from RVs or occultation timing,
    used to test the apsidal-precession hypothesis.
    """

    SECTION: ClassVar[str] = "orbit"

    period: u.Quantity | None = None
    semi_major_axis: u.Quantity | None = None
    a_over_rstar: float | None = None
    eccentricity: float | None = 0.0
    eccentricity_limit: float | None = None
    omega: u.Quantity | None = None
    inclination: u.Quantity | None = None


@dataclass
class RadialVelocityLimits(_Section):
    """What radial velocities already say (all optional)."""

    SECTION: ClassVar[str] = "radial_velocity"

    baseline: u.Quantity | None = None
    residual_rms: u.Quantity | None = None
    jitter: u.Quantity | None = None
    acceleration: u.Quantity | None = None
    acceleration_uncertainty: u.Quantity | None = None

    @property
    def scatter(self) -> u.Quantity | None:
        """The RV noise floor: the residual RMS, else the jitter."""
        return self.residual_rms if self.residual_rms is not None else self.jitter


@dataclass
class System:
    """A star, its companion, their orbit and the RV limits.

    Examples
    --------
    >>> import astropy.units as u
    >>> s = System(Star(mass=1 * u.Msun, radius=1 * u.Rsun, teff=5772 * u.K),
    ...            Companion(mass=1 * u.Mjup), Orbit(period=365.25 * u.day))
    >>> round(s.semi_major_axis.to_value(u.AU), 3)
    1.0
    """

    star: Star
    companion: Companion = field(default_factory=Companion)
    orbit: Orbit = field(default_factory=Orbit)
    radial_velocity: RadialVelocityLimits = field(default_factory=RadialVelocityLimits)
    name: str = "unnamed system"
    #: 1σ uncertainties of given values, keyed "section.key" (e.g. "star.mass"), same units as the values
    uncertainties: dict = field(default_factory=dict)
    #: the other star of an eclipsing binary, in full (None for a planet or an unknown companion)
    other_star: "OtherStar | None" = None

    @property
    def is_binary(self) -> bool:
        """True when the system file describes both stars (an ``[other_star]`` table)."""
        return self.other_star is not None

    def __post_init__(self):
        o, s = self.orbit, self.star
        o.derived_fields = getattr(o, "derived_fields", set())
        if o.semi_major_axis is None and o.a_over_rstar is not None and s.radius is not None:
            o.semi_major_axis = (o.a_over_rstar * s.radius).to(u.AU)
            o.derived_fields.add("semi_major_axis")
        if o.semi_major_axis is None and o.period is not None and s.mass is not None:
            total = s.mass + (self.companion.mass if self.companion.mass is not None else 0 * u.Msun)
            o.semi_major_axis = ((const.G * total * o.period ** 2 / (4 * np.pi ** 2)) ** (1 / 3)).to(u.AU)
            o.derived_fields.add("semi_major_axis")
        if o.a_over_rstar is None and o.semi_major_axis is not None and s.radius is not None:
            o.a_over_rstar = float((o.semi_major_axis / s.radius).decompose())
            o.derived_fields.add("a_over_rstar")

    @property
    def semi_major_axis(self) -> u.Quantity:
        """Orbital semi-major axis (from the file, from a/R*, or from Kepler's third law)."""
        return self.orbit.need("semi_major_axis", "the orbit's size (or give period and star.mass)")

    @classmethod
    def from_toml(cls, path: "str | Path") -> "System":
        """Load a system file (TOML, values with units as strings).

        Raises
        ------
        InputError
            Unreadable TOML, unknown tables or keys, unparseable or wrong units.
        """
        path = Path(path)
        try:
            data = tomllib.loads(path.read_text(encoding="utf-8"))
        except FileNotFoundError:
            raise InputError(f"{path}: no such file") from None
        except IsADirectoryError:
            raise InputError(f"{path}: is a folder; give the system file (TOML) itself") from None
        except OSError as exc:
            raise InputError(f"{path}: cannot be read ({exc.strerror})") from None
        except (tomllib.TOMLDecodeError, UnicodeDecodeError) as exc:
            raise InputError(f"{path}: not valid TOML ({exc})") from None
        return cls.from_dict(data, str(path))

    @classmethod
    def from_dict(cls, data: dict, where: str = "system") -> "System":
        """Build a System from nested dicts of strings/numbers (as in the TOML file)."""
        name = data.get("name", "unnamed system")
        tables, errors = {}, {}
        for section, schema in _SCHEMA.items():
            raw = data.get(section, {})
            if not isinstance(raw, dict):
                raise InputError(f"{where}: [{section}] must be a table")
            values = {}
            for key, value in raw.items():
                if key not in schema:
                    raise InputError(f"{where}: [{section}] has unknown key {key!r}; known keys: "
                                     f"{', '.join(schema)}")
                text, error = _split_uncertainty(value, where, section, key)
                values[key] = _parse(text, schema[key], where, section, key)
                if error is not None:
                    errors[f"{section}.{key}"] = _parse(error, schema[key], where, section, key)
            tables[section] = values
        for section in data:
            if section not in _SCHEMA and section != "name":
                raise InputError(f"{where}: unknown table [{section}]; known tables: "
                                 f"{', '.join(_SCHEMA)}")
        star = Star(**tables["star"])
        for key in ("mass", "radius"):
            star.need(key, f"every physical check (system file {where})")
        _check_ranges(where, tables)
        other = None
        if "other_star" in data:
            other = OtherStar(**tables["other_star"])
            other._where = where
            other.need("mass", f"a two-star system (system file {where})")
            _companion_from_other_star(tables["companion"], other, errors, where)
        system = cls(star, Companion(**tables["companion"]), Orbit(**tables["orbit"]),
                     RadialVelocityLimits(**tables["radial_velocity"]), str(name), errors, other)
        for section in (system.star, system.companion, system.orbit, system.radial_velocity):
            section._where = where
        from ttvkit.physics.system_checks import check_consistency

        radius_text = data.get("star", {}).get("radius")
        if radius_text is not None:
            radius_text = _split_uncertainty(radius_text, where, "star", "radius")[0]
        check_consistency(system, where, radius_text)
        return system

    def to_dict(self) -> dict:
        """Plain-JSON form, each quantity as ``{"value", "unit"}``."""
        out = {"name": self.name}
        for section in ("star", "companion", "orbit", "radial_velocity", "other_star"):
            obj = getattr(self, section)
            if obj is None:
                continue
            entry = {}
            for f in fields(obj):
                v = getattr(obj, f.name)
                if isinstance(v, u.Quantity):
                    entry[f.name] = {"value": float(v.value), "unit": v.unit.to_string()}
                elif v is not None:
                    entry[f.name] = v
            out[section] = entry
        return out


def _companion_from_other_star(companion: dict, other: "OtherStar", errors: dict, where: str) -> None:
    """Fill [companion] mass and radius (and their errors) from [other_star]; refuse two different values."""
    for key in ("mass", "radius"):
        value = getattr(other, key)
        if value is None:
            continue
        given = companion.get(key)
        if given is not None and not np.isclose(given.to_value(value.unit), value.value, rtol=1e-3):
            raise InputError(f"{where}: [companion] {key} = {given} and [other_star] {key} = {value} "
                             "describe the same star; give it once (in [other_star])")
        companion[key] = value
        if f"other_star.{key}" in errors and f"companion.{key}" not in errors:
            errors[f"companion.{key}"] = errors[f"other_star.{key}"]


_UNCERTAIN = re.compile(r"^\s*(?P<value>[-+0-9.eE]+)\s*(?:\+-|\+/-|±)\s*(?P<error>[0-9.eE+-]+)\s*(?P<unit>.*)$")


def split_uncertainty(value, label: str, example: str = "1.43 +- 0.07 Msun"):
    """``"1.43 +- 0.07 Msun"`` (or ``±``, ``+/-``) → ("1.43 Msun", "0.07 Msun"); other values unchanged.

    ``label`` says where the value is (``"file: [star] mass"``) in the errors raised.
    """
    if not isinstance(value, str):
        return value, None
    match = _UNCERTAIN.match(value)
    if match is None:
        if "+-" in value or "±" in value or "+/-" in value:
            raise InputError(f"{label} = {value!r}: write a value with its 1σ uncertainty as \"{example}\"")
        return value, None
    unit = match["unit"].strip()
    try:
        number, error = float(match["value"]), float(match["error"])
    except ValueError:
        raise InputError(f"{label} = {value!r}: unparseable value or uncertainty") from None
    if not error >= 0:
        raise InputError(f"{label} = {value!r}: the uncertainty must not be negative")
    if not unit:
        return number, error
    return f"{match['value']} {unit}", f"{match['error']} {unit}"


def parse_quantity(value, unit, label: str, example: str | None = None) -> u.Quantity:
    """A value with a unit, written as a string (``"0.9 Msun"``), converted to ``unit``.

    Refused, naming ``label``: a bare number, an unparseable string, a
    non-finite value, a unit that does not convert.
    """
    example = example or f"1.0 {unit.to_string()}"
    if isinstance(value, bool) or not isinstance(value, str):
        shown = f"{value} {unit.to_string()}" if isinstance(value, (int, float)) else example
        raise InputError(f"{label} = {value!r} needs a unit, written as a string, e.g. \"{shown}\"")
    try:
        q = u.Quantity(value)
    except (TypeError, ValueError):
        raise InputError(f"{label} = {value!r}: unparseable quantity; write a number and an astropy unit, "
                         f"e.g. \"{example}\"") from None
    if not np.all(np.isfinite(q.value)):
        raise InputError(f"{label} = {value!r} is not a finite number")
    try:
        return q.to(unit)
    except u.UnitConversionError:
        raise InputError(f"{label} = {value!r}: unit {q.unit} cannot be converted to {unit.to_string()}, "
                         f"e.g. \"{example}\"") from None


def _split_uncertainty(value, where, section, key):
    return split_uncertainty(value, f"{where}: [{section}] {key}")


def _parse(value, unit, where, section, key):
    if unit is None:
        if isinstance(value, bool) or not isinstance(value, (int, float)):
            raise InputError(f"{where}: [{section}] {key} = {value!r} must be a plain number")
        if not np.isfinite(value):
            raise InputError(f"{where}: [{section}] {key} = {value!r} is not a finite number")
        return float(value)
    return parse_quantity(value, unit, f"{where}: [{section}] {key}")


def _check_ranges(where, tables):
    positive = {"star": ["mass", "radius", "teff", "luminosity", "rotation_period", "activity_cycle"],
                "companion": ["mass", "radius"],
                "orbit": ["period", "semi_major_axis", "a_over_rstar"],
                "radial_velocity": ["baseline", "residual_rms", "jitter"],
                "other_star": ["mass", "radius", "teff", "luminosity", "rotation_period", "activity_cycle"]}
    for section, keys in positive.items():
        for key in keys:
            v = tables.get(section, {}).get(key)
            if v is not None and not (float(getattr(v, "value", v)) > 0):
                raise InputError(f"{where}: [{section}] {key} must be positive")
    for section in ("star", "other_star"):
        index = tables.get(section, {}).get("polytropic_index")
        if index is not None and not (0 <= index < 5):
            raise InputError(f"{where}: [{section}] polytropic_index = {index:g} must be in [0, 5) "
                             "(a polytrope of index 5 or more has no finite radius)")
    dec = tables["star"].get("dec")
    if dec is not None and not (-90 <= dec.to_value(u.deg) <= 90):
        raise InputError(f"{where}: [star] dec = {dec} must lie between -90 and +90 degrees")
    ra = tables["star"].get("ra")
    if ra is not None and not (0 <= ra.to_value(u.deg) < 360):
        raise InputError(f"{where}: [star] ra = {ra} must lie in [0, 360) degrees")
    e = tables["orbit"].get("eccentricity")
    if e is not None and not (0 <= e < 1):
        raise InputError(f"{where}: [orbit] eccentricity = {e} must be in [0, 1)")
