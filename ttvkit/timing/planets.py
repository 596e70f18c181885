"""Mid-times of several planets and their starting elements: the inputs of a joint N-body fit.

Two inputs, each checked with errors that name the file, the row and the
column (or the key):

* **the mid-times** — one table with a ``planet`` column, or one table per
  planet (``{"b": "b.csv", "c": "c.csv"}``).  Each is read like any timing
  table (:class:`~ttvkit.timing.table.TimingTable`: every time standard,
  column mapping, header units), converted to BJD_TDB;
* **the starting elements** (TOML) — the star's mass with its 1σ
  uncertainty, the epoch at which the elements osculate, and per planet its
  mass (a ratio to the star's, or a mass with a unit), osculating period, a
  transit mid-time ``t0`` (which fixes the phase), ``ecosw`` and ``esinw``;
  optionally its inclination, and ``transiting = false`` for a planet that
  has no mid-times::

      epoch = 2459000.0               # BJD_TDB days (see time_standard)
      time_standard = "BJD_TDB"       # optional; BJD_TDB with a day offset, e.g. "BJD_TDB-2450000"

      [star]
      mass = "0.80 +- 0.03 Msun"

      [planets.b]
      mass = "4.0 Mearth"             # or: mass_ratio = 1.5e-5
      period = "5.0 d"
      t0 = 2459001.2
      ecosw = 0.01
      esinw = 0.0

      [planets.c]
      mass_ratio = 3.0e-5
      period = "7.6 d"
      t0 = 2459003.9
      ecosw = 0.0
      esinw = 0.02
      inclination = "89.6 deg"        # optional, default 90 deg (edge-on)

ω follows the usual convention of transit work: a transit happens at
ω + f = 90° (the observer on +z).  The elements are Jacobi osculating
elements at ``epoch``, which must not be later than the first mid-time.
:class:`StartingElements` gives what
:class:`~ttvkit.hypotheses.planetary_system.PlanetarySystem` needs
(``system_arguments`` and ``as_dict``).
"""

from __future__ import annotations

import math
import re
import sys
import warnings
from dataclasses import dataclass, field
from pathlib import Path

import astropy.units as u
import numpy as np

from ttvkit.errors import EphemerisError, InputError, TimeStandardError, TtvkitWarning, located
from ttvkit.io.readers import RawTable, read_raw_table
from ttvkit.physics.nbody import orbits_overlap
from ttvkit.physics.system import parse_quantity, split_uncertainty
from ttvkit.timing.ephemeris import Ephemeris
from ttvkit.timing.standards import parse_standard

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover
    import tomli as tomllib

__all__ = ["PlanetStart", "StartingElements", "PlanetTimes", "read_starting_elements", "read_planet_times"]

_TOP_KEYS = ("name", "epoch", "time_standard", "star", "planets")
_PLANET_KEYS = ("mass_ratio", "mass", "period", "t0", "ecosw", "esinw", "inclination", "transiting")
#: Hidden column that carries each row's number in its file through the table's validation.
_ROW = "__file_row__"


@dataclass(frozen=True)
class PlanetStart:
    """One planet's starting elements (Jacobi, osculating at the epoch).

    Attributes
    ----------
    name : str
    mass_ratio : float
        m / M_*.
    period : float
        Osculating period (days).
    t0 : float
        A transit mid-time of the osculating orbit (BJD_TDB days).
    ecosw, esinw : float
        e cos ω and e sin ω (transit at ω + f = 90°).
    inclination : float or None
        Radians; None for edge-on (90°).
    transiting : bool
        False for a planet with no mid-times (it only perturbs the others).
    """

    name: str
    mass_ratio: float
    period: float
    t0: float
    ecosw: float
    esinw: float
    inclination: float | None = None
    transiting: bool = True

    @property
    def eccentricity(self) -> float:
        return float(math.hypot(self.ecosw, self.esinw))

    @property
    def omega(self) -> float:
        """Argument of pericentre (radians, in [0, 2π))."""
        return float(math.atan2(self.esinw, self.ecosw) % (2 * math.pi))


@dataclass(frozen=True)
class StartingElements:
    """Starting elements of a planetary system, read from a TOML file (:func:`read_starting_elements`).

    Attributes
    ----------
    planets : tuple of PlanetStart
        In the file's order.
    epoch : float
        When the elements osculate (BJD_TDB days).
    star_mass, star_mass_error : Quantity
        The star's mass and its 1σ (M☉).
    source : str
        The file (for messages).
    name : str
        The system's name (optional key ``name``).
    """

    planets: tuple
    epoch: float
    star_mass: u.Quantity
    star_mass_error: u.Quantity
    source: str = "elements"
    name: str = ""

    @property
    def names(self) -> tuple[str, ...]:
        return tuple(p.name for p in self.planets)

    def planet(self, name: str) -> PlanetStart:
        """The planet called ``name``."""
        for p in self.planets:
            if p.name == name:
                return p
        raise InputError(f"{self.source}: no planet {name!r} (planets: {', '.join(self.names)})")

    def as_dict(self) -> dict:
        """``{planet: {mass_ratio, period, t0, ecosw, esinw}}`` (``PlanetarySystem.vector``'s input)."""
        return {p.name: {"mass_ratio": p.mass_ratio, "period": p.period, "t0": p.t0, "ecosw": p.ecosw,
                         "esinw": p.esinw} for p in self.planets}

    def system_arguments(self) -> dict:
        """Keyword arguments of :class:`~ttvkit.hypotheses.planetary_system.PlanetarySystem`."""
        incl = None
        if any(p.inclination is not None for p in self.planets):
            incl = [math.pi / 2 if p.inclination is None else p.inclination for p in self.planets]
        return {"names": self.names, "epoch": self.epoch, "star_mass": float(self.star_mass.to_value(u.Msun)),
                "star_mass_error": float(self.star_mass_error.to_value(u.Msun)), "inclination": incl}

    def ephemeris(self, name: str) -> Ephemeris:
        """The linear ephemeris (t0, P) of planet ``name``'s starting elements."""
        p = self.planet(name)
        return Ephemeris(p.t0, p.period)

    def with_values(self, values: dict) -> "StartingElements":
        """A copy with new ``{planet: {element: value}}`` (e.g. fitted ones)."""
        planets = []
        for p in self.planets:
            new = {k: float(v) for k, v in values.get(p.name, {}).items()}
            planets.append(PlanetStart(p.name, new.get("mass_ratio", p.mass_ratio), new.get("period", p.period),
                                       new.get("t0", p.t0), new.get("ecosw", p.ecosw), new.get("esinw", p.esinw),
                                       p.inclination, p.transiting))
        return StartingElements(tuple(planets), self.epoch, self.star_mass, self.star_mass_error,
                                self.source, self.name)

    def to_toml(self, errors: dict | None = None, header: str = "") -> str:
        """The elements as a file :func:`read_starting_elements` reads back (BJD_TDB, full days).

        ``errors`` (``{planet: {element: 1σ}}``) are written as comments.
        """
        errors = errors or {}
        lines = [f"# {line}" if line else "#" for line in header.splitlines()]
        if self.name:
            lines.append(f"name = {_toml_string(self.name)}")
        lines += [f"epoch = {float(self.epoch)!r}", 'time_standard = "BJD_TDB"', "", "[star]",
                  f'mass = "{float(self.star_mass.to_value(u.Msun))!r} +- '
                  f'{float(self.star_mass_error.to_value(u.Msun))!r} Msun"']
        for p in self.planets:
            err = errors.get(p.name, {})
            lines += ["", f"[planets.{_toml_key(p.name)}]"]
            for key, value, unit in (("mass_ratio", p.mass_ratio, ""), ("period", p.period, " d"),
                                     ("t0", p.t0, ""), ("ecosw", p.ecosw, ""), ("esinw", p.esinw, "")):
                text = f'"{float(value)!r}{unit}"' if unit else repr(float(value))
                note = f"    # 1 sigma {err[key]:.3g}" if key in err and np.isfinite(err[key]) else ""
                lines.append(f"{key} = {text}{note}")
            if p.inclination is not None:
                lines.append(f'inclination = "{float(math.degrees(p.inclination))!r} deg"')
            if not p.transiting:
                lines.append("transiting = false")
        return "\n".join(lines) + "\n"


def _toml_string(text: str) -> str:
    return '"' + text.replace("\\", "\\\\").replace('"', '\\"') + '"'


def _toml_key(name: str) -> str:
    return name if re.fullmatch(r"[A-Za-z0-9_-]+", name) else _toml_string(name)


# ------------------------------------------------------------------------------------- the elements
def read_starting_elements(source) -> StartingElements:
    """Read starting elements from a TOML file (format in the module notes) or an equivalent dict.

    Parameters
    ----------
    source : str, path-like, dict or StartingElements
        The file, or its content as nested dicts.

    Returns
    -------
    StartingElements

    Raises
    ------
    InputError
        Naming the file and the key: unreadable TOML, unknown keys, missing
        values, wrong units, mass ratios or periods ≤ 0, e ≥ 1, duplicate
        planet names, fewer than two planets, orbits that cross.
    """
    if isinstance(source, StartingElements):
        return source
    if isinstance(source, dict):
        return _elements_from_dict(source, "elements")
    path = Path(source)
    try:
        text = path.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise InputError(f"{path}: no such file") from None
    except IsADirectoryError:
        raise InputError(f"{path}: is a folder; give the elements file (TOML) itself") from None
    except OSError as exc:
        raise InputError(f"{path}: cannot be read ({exc.strerror})") from None
    except UnicodeDecodeError:
        raise InputError(f"{path}: is not UTF-8 text; expected an elements file (TOML)") from None
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        twice = re.search(r"declare \('planets', '([^']*)'\) twice.*?line (\d+)", str(exc))
        if twice:
            raise InputError(f"{path}: line {twice[2]}: [planets.{twice[1]}] is given twice; every "
                             "planet needs a name of its own") from None
        raise InputError(f"{path}: not valid TOML ({exc})") from None
    return _elements_from_dict(data, str(path))


def _elements_from_dict(data: dict, where: str) -> StartingElements:
    for key in data:
        if key not in _TOP_KEYS:
            raise InputError(f"{where}: unknown key {key!r}; known keys: {', '.join(_TOP_KEYS)}")
    for key in ("epoch", "star", "planets"):
        if key not in data:
            hint = {"epoch": "epoch = 2459000.0 (when the elements osculate, BJD_TDB days)",
                    "star": '[star] with mass = "0.8 +- 0.03 Msun"',
                    "planets": "a table [planets.NAME] per planet"}[key]
            raise InputError(f"{where}: missing {key!r}; give {hint}")
    try:
        std = parse_standard(str(data.get("time_standard", "BJD_TDB")))
    except TimeStandardError as exc:
        raise InputError(f"{where}: time_standard: {exc}") from None
    if std.frame != "BJD" or std.scale != "tdb":
        raise InputError(f"{where}: time_standard = {std.name!r}: the elements' times must be BJD_TDB "
                         "(optionally with a day offset, e.g. BJD_TDB-2450000); convert them first")
    epoch = _date(data["epoch"], where, "epoch") + std.offset
    star = data["star"]
    if not isinstance(star, dict):
        raise InputError(f"{where}: 'star' must be a table: [star] with mass = \"0.8 +- 0.03 Msun\"")
    unknown = sorted(set(star) - {"mass"})
    if unknown:
        raise InputError(f"{where}: [star] has unknown key(s) {', '.join(unknown)}; the only key is mass")
    if "mass" not in star:
        raise InputError(f"{where}: [star] mass is missing; e.g. mass = \"0.8 +- 0.03 Msun\"")
    star_mass, star_error = _uncertain(star["mass"], u.Msun, where, "[star] mass")
    if not star_mass.value > 0:
        raise InputError(f"{where}: [star] mass = {star['mass']!r} must be positive")
    if star_error is None:
        warnings.warn(located("[star] mass has no uncertainty (write \"0.80 +- 0.03 Msun\"): the planet "
                              "masses will carry none from the star", where), TtvkitWarning, stacklevel=3)
        star_error = 0 * u.Msun
    planets_data = data["planets"]
    if not isinstance(planets_data, dict) or not planets_data:
        raise InputError(f"{where}: 'planets' must hold a table [planets.NAME] per planet")
    seen = {}
    planets = []
    for raw_name, entry in planets_data.items():
        name = str(raw_name).strip()
        key = f"[planets.{raw_name}]"
        if not name:
            raise InputError(f"{where}: {key}: a planet needs a name")
        if name.lower() in seen:
            raise InputError(f"{where}: {key}: planet names must differ by more than case "
                             f"({seen[name.lower()]!r} is also given)")
        seen[name.lower()] = name
        if not isinstance(entry, dict):
            raise InputError(f"{where}: planets.{raw_name} must be a table [planets.{raw_name}]")
        planets.append(_planet(name, entry, where, key, star_mass, std.offset))
    if len(planets) < 2:
        raise InputError(f"{where}: gives {len(planets)} planet; a joint N-body model needs at least two "
                         "(one planet alone has no interactions to fit)")
    _check_orbits(planets, where)
    return StartingElements(tuple(planets), epoch, star_mass, star_error, where, str(data.get("name", "")))


def _planet(name, entry, where, key, star_mass, offset) -> PlanetStart:
    unknown = sorted(set(entry) - set(_PLANET_KEYS))
    if unknown:
        raise InputError(f"{where}: {key} has unknown key(s) {', '.join(unknown)}; known keys: "
                         f"{', '.join(_PLANET_KEYS)}")
    missing = [k for k in ("period", "t0", "ecosw", "esinw") if k not in entry]
    if missing:
        raise InputError(f"{where}: {key} lacks {', '.join(missing)} (every planet needs period, t0, "
                         "ecosw, esinw and mass_ratio or mass)")
    if ("mass" in entry) == ("mass_ratio" in entry):
        raise InputError(f"{where}: {key}: give one of mass_ratio (m/M_*) or mass (with a unit, "
                         "e.g. \"4.0 Mearth\"), not " + ("both" if "mass" in entry else "neither"))
    if "mass_ratio" in entry:
        mu = _plain(entry["mass_ratio"], where, f"{key} mass_ratio")
        if not mu > 0:
            raise InputError(f"{where}: {key} mass_ratio = {entry['mass_ratio']!r} must be positive")
    else:
        mass = _quantity(entry["mass"], u.Msun, where, f"{key} mass", example="4.0 Mearth")
        if not mass.value > 0:
            raise InputError(f"{where}: {key} mass = {entry['mass']!r} must be positive")
        mu = float((mass / star_mass).decompose())
    if not mu < 0.1:
        raise InputError(f"{where}: {key}: mass ratio {mu:.3g} is not planetary (the model takes m/M_* < 0.1)")
    period = _quantity(entry["period"], u.day, where, f"{key} period", example="5.0 d").value
    if not period > 0:
        raise InputError(f"{where}: {key} period = {entry['period']!r} must be positive")
    t0 = _date(entry["t0"], where, f"{key} t0") + offset
    ecosw = _plain(entry["ecosw"], where, f"{key} ecosw")
    esinw = _plain(entry["esinw"], where, f"{key} esinw")
    ecc = math.hypot(ecosw, esinw)
    if not ecc < 1:
        raise InputError(f"{where}: {key}: e = sqrt(ecosw² + esinw²) = {ecc:.3g}; a bound orbit needs e < 1")
    if not max(abs(ecosw), abs(esinw)) < 0.9:
        raise InputError(f"{where}: {key}: |ecosw| and |esinw| must be below 0.9 (the model's range)")
    incl = None
    if "inclination" in entry:
        incl = float(_quantity(entry["inclination"], u.deg, where, f"{key} inclination",
                               example="89.5 deg").to_value(u.rad))
        if not 0 < incl < math.pi:
            raise InputError(f"{where}: {key} inclination = {entry['inclination']!r} must lie between 0 and "
                             "180 deg")
    transiting = entry.get("transiting", True)
    if not isinstance(transiting, bool):
        raise InputError(f"{where}: {key} transiting = {transiting!r} must be true or false")
    return PlanetStart(name, float(mu), float(period), t0, ecosw, esinw, incl, transiting)


def _check_orbits(planets, where) -> None:
    order = sorted(planets, key=lambda p: p.period)
    for a, b in zip(order[:-1], order[1:]):
        if orbits_overlap(np.array([[a.period, b.period]]), np.array([[a.eccentricity, b.eccentricity]]))[0]:
            raise InputError(f"{where}: the orbits of {a.name} (P = {a.period:.6g} d, e = {a.eccentricity:.3g}) "
                             f"and {b.name} (P = {b.period:.6g} d, e = {b.eccentricity:.3g}) cross: {a.name}'s "
                             f"apocentre reaches {b.name}'s pericentre; such a system cannot be integrated")


def _plain(value, where, key) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise InputError(f"{where}: {key} = {value!r} must be a plain number")
    if not math.isfinite(value):
        raise InputError(f"{where}: {key} = {value!r} is not a finite number")
    return float(value)


def _date(value, where, key) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise InputError(f"{where}: {key} = {value!r} must be a plain number (a date in the file's "
                         "time_standard, BJD_TDB by default)")
    return _plain(value, where, key)


def _quantity(value, unit, where, key, example) -> u.Quantity:
    return parse_quantity(value, unit, f"{where}: {key}", example)


def _uncertain(value, unit, where, key):
    """``"0.80 +- 0.03 Msun"`` → (value, 1σ) as Quantities; a value without ``+-`` → (value, None)."""
    example = "0.80 +- 0.03 Msun"
    text, error = split_uncertainty(value, f"{where}: {key}", example)
    return (_quantity(text, unit, where, key, example),
            None if error is None else _quantity(error, unit, where, key, example))


# ------------------------------------------------------------------------------------ the mid-times
@dataclass(frozen=True)
class PlanetTimes:
    """Mid-times of several planets (BJD_TDB), one row per mid-time, grouped by planet.

    Attributes
    ----------
    planet : ndarray of str
        The planet of each row.
    time, sigma : ndarray
        Mid-times and 1σ (days, BJD_TDB).
    origin : tuple of str
        Where each row comes from (``"file, row N"``), for messages.
    tables : dict
        Planet name → its :class:`~ttvkit.timing.table.TimingTable`.
    warnings : list of str
        What reading the tables warned about (also issued as warnings).
    """

    planet: np.ndarray
    time: np.ndarray
    sigma: np.ndarray
    origin: tuple
    tables: dict
    warnings: list = field(default_factory=list)

    @property
    def n(self) -> int:
        return int(self.time.size)


def read_planet_times(tables, elements, *, planet_column: str = "planet", standard: str | None = None,
                      target=None, observer=None, columns: dict | None = None, units: dict | None = None,
                      bare_bjd: str | None = None) -> PlanetTimes:
    """Read the mid-times of several planets and check them against their starting elements.

    Parameters
    ----------
    tables : path, astropy Table, pandas DataFrame, or dict
        One table with a planet column, or ``{planet name: table}`` (each a
        path, Table or DataFrame) with one table per planet.
    elements : StartingElements, path or dict
        The starting elements (:func:`read_starting_elements`).
    planet_column : str
        The column that names each row's planet in a single table.
    standard, target, observer, columns, units, bare_bjd
        As for :meth:`TimingTable.read <ttvkit.timing.table.TimingTable.read>`;
        ``columns`` may also map ``planet``.  A table without an ``epoch``
        column is numbered from its planet's (t0, period).

    Returns
    -------
    PlanetTimes

    Raises
    ------
    InputError
        Naming the file, row and column: a planet the elements lack, a
        transiting planet without mid-times (or a non-transiting one with
        some), a mid-time before the elements' epoch, and every error of a
        timing table.
    """
    elements = read_starting_elements(elements)
    columns = dict(columns or {})
    planet_column = str(columns.pop("planet", planet_column)).strip().lower()
    options = {"standard": standard, "target": target, "observer": observer, "columns": columns,
               "units": units or {}, "bare_bjd": bare_bjd}
    per_planet: dict = {}
    if isinstance(tables, dict):
        for name, source in tables.items():
            name = str(name).strip()
            if name not in elements.names:
                raise InputError(f"a table is given for planet {name!r}, which {elements.source} lacks "
                                 f"(its planets: {', '.join(elements.names)})")
            raw = _raw(source, f"table of planet {name}")
            if planet_column in raw.columns:
                for i, v in enumerate(raw.columns[planet_column]):
                    if str(v).strip() != name:
                        raise InputError(located(f"planet {str(v).strip()!r} in the table given for planet "
                                                 f"{name!r}", raw.path, raw.where(i), planet_column))
                raw = _without(raw, planet_column)
            per_planet[name] = raw
    else:
        raw = _raw(tables, "table")
        per_planet = _split(raw, planet_column, elements)
    read, caught_all = {}, []
    for name in elements.names:
        if name not in per_planet:
            continue
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            read[name] = _timing_table(per_planet[name], elements, name, options)
        for w in caught:
            warnings.warn_explicit(w.message, w.category, w.filename, w.lineno, source=w.source)
            if issubclass(w.category, TtvkitWarning):
                caught_all.append(str(w.message))
    where = ", ".join(sorted({r.path for r in per_planet.values()}))
    for p in elements.planets:
        if p.transiting and p.name not in read:
            raise InputError(f"planet {p.name!r} has no mid-times in {where}; if it does not transit, say "
                             f"transiting = false under [planets.{p.name}] in {elements.source}")
        if not p.transiting and p.name in read:
            raise InputError(f"planet {p.name!r} has mid-times in {where}, but {elements.source} says "
                             f"transiting = false under [planets.{p.name}]")
    planet, time, sigma, origin = [], [], [], []
    for name, table in read.items():
        rows = table.extra[_ROW].astype(int)
        path = per_planet[name].path
        late = np.flatnonzero(table.time < elements.epoch)
        if late.size:
            i = late[np.argmin(table.time[late])]
            more = f" (and {late.size - 1} more row(s))" if late.size > 1 else ""
            raise InputError(located(f"mid-time {table.time[i]:.6f} (BJD_TDB) precedes the elements' epoch "
                                     f"{elements.epoch:.6f} of {elements.source}{more}: the model integrates "
                                     "forward from the epoch; give elements at an epoch before the first "
                                     "mid-time", path, int(rows[i]), "time"))
        order = np.argsort(table.time, kind="stable")
        planet += [name] * len(table)
        time.append(table.time[order])
        sigma.append(table.uncertainty[order])
        origin += [f"{path}, row {int(r)}" for r in rows[order]]
        table.extra.pop(_ROW)
    return PlanetTimes(np.array(planet, dtype=str), np.concatenate(time), np.concatenate(sigma), tuple(origin),
                       read, caught_all)


def _raw(source, label) -> RawTable:
    if isinstance(source, (str, Path)):
        return read_raw_table(source)
    from ttvkit.timing.reading import raw_from_table

    raw = raw_from_table(source)
    raw.path = label
    return raw


def _subset(raw: RawTable, idx) -> RawTable:
    return RawTable(raw.path, {k: [v[i] for i in idx] for k, v in raw.columns.items()}, raw.units,
                    [raw.rows[i] for i in idx], raw.meta, [raw.lines[i] for i in idx] if raw.lines else [])


def _without(raw: RawTable, column: str) -> RawTable:
    return RawTable(raw.path, {k: v for k, v in raw.columns.items() if k != column}, raw.units, raw.rows,
                    raw.meta, raw.lines)


def _split(raw: RawTable, column: str, elements: StartingElements) -> dict:
    if column not in raw.columns:
        raise InputError(located(f"no {column!r} column to say which planet each row is; the file has: "
                                 f"{', '.join(raw.columns)}; name yours with --column planet=NAME "
                                 "(columns={'planet': ...}), or give one table per planet", raw.path))
    groups: dict = {}
    problems = []
    for i, v in enumerate(raw.columns[column]):
        name = "" if v is None else str(v).strip()
        if not name:
            problems.append(located("no planet named", raw.path, raw.where(i), column))
        elif name not in elements.names:
            close = [n for n in elements.names if n.lower() == name.lower()]
            hint = f" (did you mean {close[0]!r}? names are case-sensitive)" if close else ""
            problems.append(located(f"planet {name!r} is not in {elements.source} (its planets: "
                                    f"{', '.join(elements.names)}){hint}", raw.path, raw.where(i), column))
        else:
            groups.setdefault(name, []).append(i)
    if problems:
        more = f" (and {len(problems) - 1} more row(s))" if len(problems) > 1 else ""
        raise InputError(problems[0] + more)
    return {name: _without(_subset(raw, idx), column) for name, idx in groups.items()}


def _timing_table(raw: RawTable, elements: StartingElements, name: str, options: dict):
    from ttvkit.timing.reading import build_table
    from ttvkit.timing.table import TimingTable

    raw = RawTable(raw.path, {**raw.columns, _ROW: list(raw.rows)}, raw.units, raw.rows, raw.meta, raw.lines)
    epoch_column = str(options["columns"].get("epoch", "epoch")).strip().lower()
    has_epochs = epoch_column in raw.columns and any(v not in (None, "") for v in raw.columns[epoch_column])
    # given epochs are checked against the planet's own times (their zero may be anyone's); missing
    # ones are numbered from the planet's starting (t0, P)
    ephemeris = None if has_epochs else elements.ephemeris(name)
    try:
        return build_table(TimingTable, raw, options["standard"], options["target"], options["observer"],
                           ephemeris, options["columns"], options["units"], source=Path(raw.path).name,
                           bare_bjd=options["bare_bjd"])
    except EphemerisError as exc:
        if has_epochs:
            raise
        # the table reader's hint names an option this path does not have; say where the numbering came from
        lines = str(exc).replace("; correct it or leave it out with --drop-rows", "").splitlines()
        lines[0] += (f" [planet {name}: rows without an epoch are numbered from its starting t0 and period in "
                     f"{elements.source}; correct the row, give better starting elements or an 'epoch' column]")
        raise EphemerisError("\n".join(lines)) from None
