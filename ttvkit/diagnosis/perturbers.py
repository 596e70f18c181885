"""Which unseen planets could perturb the transit times: the mass–period map.

For every perturber period of a grid (by default 0.3–10× the transiting
planet's, log-spaced, with extra points on both sides of each first- and
second-order resonance) and a few starting phases, the batched N-body engine
(:mod:`ttvkit.physics.nbody`) integrates the transiting planet with a
perturber of a small reference mass over the span of the data.  Its
transit-time variations, less their linear part, give a template per unit
mass u₁(E); to first order the timing model t(E) = T₀ + P E + m u₁(E) is
linear and gives an estimate of the largest allowed mass m₂.  TTVs are not
exactly linear in mass (a perturber also shifts the mean motions, so the
phase of a near-resonant signal drifts: 5% in amplitude at 20 Earth masses
near 2:1, measured), so a second integration at m₂ gives u₂(E), and
χ²(m) is evaluated with the template per unit mass interpolated linearly
in m between the two (T₀ and P profiled out exactly).

At each grid point:

* ``best_mass``: the mass that best explains the timing (zero if the best
  scaling is negative);
* ``largest_mass``: the largest mass the data allow, where χ²(m) rises
  ``delta_chi2`` above the constant-period fit's χ² (Δχ² = 9 by default);
* the star's RV semi-amplitude at that mass and whether the System's RV
  limits would already have shown it (2K sin(min(πB/P′, π/2)) > 3× the RV
  scatter, as for a light-travel-time companion: common practice, no source);
* Hill stability of the pair at that mass (Gladman 1993, Icarus 106, 247).

Per period the map keeps the phase with the lowest χ² (for ``best_mass``)
and the largest ``largest_mass`` over phases (the most permissive phase).

Assumptions: coplanar, edge-on orbits; the perturber on a circular orbit
(``eccentricity`` sets another fixed value) and the transiting planet on the
System's; the template per unit mass linear in mass between the two
integrations (tested against direct integrations: the mass limit within
0.4% for a 20-Earth-mass perturber near 2:1); masses are searched up to
1.5 m₂ (``largest_mass_is_lower_bound`` marks points where χ² never rose
that far); only transit (primary) mid-times are used.
The map is a plausibility screen of where a perturber could hide, not a
detection.
"""

from __future__ import annotations

import os
from concurrent.futures import ProcessPoolExecutor
from dataclasses import dataclass, field, replace
from pathlib import Path

import astropy.units as u
import numpy as np

from ttvkit.diagnosis._perturber_grid import (  # noqa: F401  (MAP_STEPS_PER_ORBIT: re-exported)
    MAP_STEPS_PER_ORBIT,
    _chi2_profile,
    _Grid,
    _template_pass,
    _TimingFit,
)
from ttvkit.errors import InputError
from ttvkit.physics.companions import (
    rv_threshold_semi_amplitude,
    rv_visibility,
)
from ttvkit.physics.kepler import radial_velocity_semi_amplitude
from ttvkit.physics.resonance import perturber_periods
from ttvkit.physics.system import System
from ttvkit.timing.table import TimingTable

__all__ = ["map_perturbers", "PerturberMap", "PerturberMapOptions"]

#: The map's model assumptions as the report states them (title, text).
MAP_ASSUMPTIONS = (
    "Perturbing planet (N-body mass–period map)",
    "A second planet on a circular, coplanar orbit integrated with the transiting planet by a "
    "corrected Wisdom–Holman map (agreeing with a high-order Runge–Kutta reference to better than 1 s "
    "over 500 orbits); transit-time variations scale linearly with its mass; the largest allowed mass "
    "is where χ² rises by the threshold above the constant-period fit; Hill stability by Gladman "
    "(1993); RV visibility as for a light-travel-time companion (3× the RV scatter over the "
    "baseline).")



@dataclass(frozen=True, kw_only=True)
class PerturberMapOptions:
    """The grid and thresholds of :func:`map_perturbers` (every field has a default).

    Attributes
    ----------
    periods : Quantity, optional
        Explicit perturber periods; otherwise :func:`perturber_periods` with
        ``n_periods``, ``low``, ``high`` and ``resonance_points``, scaled to
        the System's period (or the table's fitted period without one).
    n_periods : int
        Periods evenly spaced in log period; the points packed around the
        resonances come on top (the map's notes say how many).
    low, high : float
        Range as multiples of the transiting planet's period.
    resonance_points : int
        Points packed on each side of every resonance.
    n_phases : int
        Starting phases of the perturber per period (evenly spaced).
    eccentricity : float
        The perturber's (fixed) eccentricity.
    reference_mass : Quantity
        Mass of the template integrations (small, so the response is linear).
    delta_chi2 : float
        χ² rise above the constant-period fit that bounds ``largest_mass``.
    max_chunk : int
        Largest number of grid points integrated in one batch (memory).
    """

    periods: object = None
    n_periods: int = 500
    low: float = 0.3
    high: float = 10.0
    resonance_points: int = 6
    n_phases: int = 4
    eccentricity: float = 0.0
    reference_mass: object = 1 * u.Mearth
    delta_chi2: float = 9.0
    max_chunk: int = 600

    def __post_init__(self):
        if not 0 < self.low < self.high:
            raise InputError(f"perturber period range {self.low}-{self.high}: need 0 < low < high")
        if self.n_periods < 10 or self.n_phases < 1:
            raise InputError("the perturber map needs at least 10 periods and 1 phase")
        if not 0 <= self.eccentricity < 0.9:
            raise InputError("the perturber eccentricity must be in [0, 0.9)")
        if not self.delta_chi2 > 0:
            raise InputError("the map's delta chi2 must be positive")

    def period_grid(self, transit_period) -> u.Quantity:
        """The perturber periods for a transiting planet of ``transit_period``."""
        if self.periods is not None:
            return u.Quantity(self.periods, u.day)
        return perturber_periods(transit_period, self.low, self.high, self.n_periods, self.resonance_points,
                                 refine_on_top=True)

    def log_spaced_count(self) -> int:
        """Periods evenly spaced in log period (0 when the periods are given explicitly)."""
        return 0 if self.periods is not None else self.n_periods

    def describe(self) -> dict:
        """The settings recorded beside the map."""
        return {"n_phases": self.n_phases, "eccentricity": self.eccentricity, "delta_chi2": self.delta_chi2}


@dataclass
class PerturberMap:
    """The mass–period map: one row per grid point and a summary per period.

    Attributes
    ----------
    grid : astropy.table.QTable
        One row per (period, phase): ``period``, ``phase``, ``best_mass``,
        ``largest_mass``, ``chi2_best``, ``delta_chi2_best`` (χ² gain of the
        best mass over the constant-period fit), ``rv_semi_amplitude`` (at
        the largest mass), ``rv_seen``, ``hill_stable``, ``rv_seen_best``
        (at the best mass), ``best_allowed`` (the best mass Hill-stable and
        not excluded by the RVs: only these are ranked), ``integrated``.
    summary : astropy.table.QTable
        One row per period with the phase-optimised values.
    chi2_constant : float
        χ² of the constant-period fit.
    delta_chi2 : float
    rv_limit_mass : Quantity or None
        Per period, the mass whose RV change over the baseline equals 3× the
        RV scatter (None without RV limits).
    """

    grid: "object"
    summary: "object"
    chi2_constant: float
    delta_chi2: float
    n_points: int
    transit_period: u.Quantity
    rv_limit_mass: u.Quantity | None
    notes: list = field(default_factory=list)
    #: BJD_TDB of the integrations' start and the transiting planet's mean
    #: longitude at its transits (rad): what turns a grid phase into a longitude
    start_time: float | None = None
    transit_longitude: float = np.pi / 2

    def seeds(self, t0: float, count: int = 3) -> list[tuple[float, float, float]]:
        """The ``count`` best points of distinct periods as (period d, mass M⊕, longitude rad).

        The longitude is the perturber's mean longitude minus the transiting
        planet's at the transit ``t0`` (BJD_TDB), as the ``n-body-perturber``
        hypothesis defines it; used to seed its fit.
        """
        if self.start_time is None:
            return []
        order = np.argsort(-np.asarray(self.grid["delta_chi2_best"]))
        out, seen = [], set()
        for i in order:
            row = self.grid[int(i)]
            if not row["integrated"] or row["delta_chi2_best"] <= 0 or not row["best_allowed"]:
                continue
            period = float(row["period"].to_value(u.day))
            if period in seen:
                continue
            seen.add(period)
            lam = float(row["phase"].to_value(u.rad)) + 2 * np.pi * (t0 - self.start_time) / period
            out.append((period, float(row["best_mass"].to_value(u.Mearth)),
                        float(np.mod(lam - self.transit_longitude, 2 * np.pi))))
            if len(out) == count:
                break
        return out

    def best(self) -> dict | None:
        """The grid point that explains the timing best among those the physics allows.

        Only points whose best mass is Hill-stable and not excluded by the
        System's RV limits are ranked; None when there is none.
        """
        allowed = np.asarray(self.grid["best_allowed"])
        if not np.any(allowed):
            return None
        row = self.grid[int(np.argmax(np.where(allowed, self.grid["delta_chi2_best"], -np.inf)))]
        return {name: row[name] for name in self.grid.colnames}

    def write(self, folder: "str | Path") -> list[Path]:
        """Write ``perturber_map.ecsv`` (per period) and ``perturber_grid.ecsv`` (per point)."""
        import io

        from ttvkit.io.readers import atomic_write_text

        folder = Path(folder)
        out = []
        for name, table in (("perturber_map.ecsv", self.summary), ("perturber_grid.ecsv", self.grid)):
            table.meta["chi2_constant_period"] = self.chi2_constant
            table.meta["delta_chi2"] = self.delta_chi2
            table.meta["notes"] = list(self.notes)
            buffer = io.StringIO()
            table.write(buffer, format="ascii.ecsv")
            out.append(atomic_write_text(folder / name, buffer.getvalue(), overwrite=True))
        return out

    def to_dict(self) -> dict:
        """A JSON-ready summary."""
        best = self.best()
        return {
            "grid_points": self.n_points,
            "delta_chi2": self.delta_chi2,
            "chi2_constant_period": self.chi2_constant,
            "best_point": None if best is None else {
                "period_days": float(best["period"].to_value(u.day)),
                "period_ratio": float((best["period"] / self.transit_period).decompose()),
                "mass_mearth": float(best["best_mass"].to_value(u.Mearth)),
                "delta_chi2_gain": float(best["delta_chi2_best"]),
                "hill_stable": bool(best["hill_stable"]),
                "rv_seen": None if best["rv_seen_best"] < 0 else bool(best["rv_seen_best"]),
            },
            "periods": [
                {"period_days": float(r["period"].to_value(u.day)),
                 "best_mass_mearth": float(r["best_mass"].to_value(u.Mearth)),
                 "largest_mass_mearth": float(r["largest_mass"].to_value(u.Mearth)),
                 "rv_semi_amplitude_m_s": float(r["rv_semi_amplitude"].to_value(u.m / u.s)),
                 "rv_seen": None if r["rv_seen"] < 0 else bool(r["rv_seen"]),
                 "hill_stable": bool(r["hill_stable"])}
                for r in self.summary],
            "notes": list(self.notes),
        }


def map_perturbers(table: TimingTable, system: System, options: PerturberMapOptions | None = None, *,
                   executor=None, progress: bool = True, **changes) -> PerturberMap:
    """Map the perturber masses the timing allows and prefers, over perturber period.

    Parameters
    ----------
    table : TimingTable
        Mid-times; transit (and primary-eclipse) rows are used.
    system : System
        Star mass, companion mass and orbit (period, eccentricity); RV
        limits when known.
    options : PerturberMapOptions, optional
        The grid and thresholds (defaults: 500 log-spaced periods over
        0.3-10x plus points around the resonances, 4 phases).
    executor : object with ``map``, optional
        Runs the chunks of grid points (default: a process pool over all
        cores).  Pass ``map``-able objects such as a dask client's adapter.
    progress : bool
        Show a progress bar over chunks.
    **changes
        Fields of :class:`PerturberMapOptions` to change, e.g. ``n_phases=8``.

    Returns
    -------
    PerturberMap
    """
    data = _TimingFit.of(table, system)
    options = replace(options or PerturberMapOptions(), **changes)
    grid = _Grid.build(data, system, options)
    own_pool = None
    if executor is None:
        own_pool = executor = ProcessPoolExecutor(max_workers=os.cpu_count() or 1)
    try:
        # pass 1: the linear estimate from a reference-mass template
        m1 = np.full(grid.n, grid.m_ref)
        u1, ok = _template_pass(grid, data, executor, m1, "reference mass", progress)
        dd = np.einsum("ij,ij->i", u1, u1)
        dy = u1 @ data.y_res
        with np.errstate(divide="ignore", invalid="ignore"):
            s_hat = np.where(dd > 0, dy / dd, 0.0)
        lin_max = np.clip(s_hat + np.sqrt(np.clip(s_hat, 0, None) ** 2
                                          + options.delta_chi2 / np.where(dd > 0, dd, np.inf)), 0, None)
        # pass 2: TTVs are not exactly linear in mass (the perturber also
        # shifts the mean motions, so the phase of a near-resonant signal
        # drifts): integrate again at the linear estimate of the largest
        # mass and interpolate the template per unit mass between the two.
        m2 = np.clip(np.nan_to_num(lin_max, nan=grid.m_ref), 2 * grid.m_ref, 0.02 * grid.m_star)
        u2, ok2 = _template_pass(grid, data, executor, m2, "at the mass limit", progress)
    finally:
        if own_pool is not None:
            own_pool.shutdown()
    linear_only = ok & ~ok2
    u2[linear_only] = u1[linear_only]
    best_mass, largest_mass, gain, capped = _chi2_profile(u1, u2, m1, m2, data, options.delta_chi2, ok)
    table_ = _grid_table(grid, system, best_mass, largest_mass, gain, ok, capped, data.chi2_const)
    summary = _summary(grid, table_, data.p_transit)
    rv_limit = _rv_limit_mass(grid, system)
    if rv_limit is not None:
        summary["rv_limit_mass"] = rv_limit
    return PerturberMap(table_, summary, data.chi2_const, options.delta_chi2, grid.n, data.p_transit * u.day,
                        rv_limit, _notes(grid, data, ok, linear_only), start_time=data.start_time,
                        transit_longitude=grid.w_planet + grid.m_transit)


def _rv_seen(grid: _Grid, system: System, mass):
    """(K, seen) of perturbers of ``mass``: seen 1/0 by the System's RV limits, −1 without them."""
    k = radial_velocity_semi_amplitude(np.nan_to_num(mass), grid.m_star * u.Msun, grid.pp * u.day,
                                       grid.eccentricity)
    visible, _, _ = rv_visibility(k, grid.pp * u.day, system.radial_velocity)
    return k, (np.full(grid.n, -1, int) if visible is None else visible.astype(int))


def _rv_limit_mass(grid: _Grid, system: System):
    """Per period, the mass whose RV change over the baseline equals the RV threshold (None without RVs)."""
    rv = system.radial_velocity
    visible, _, _ = rv_visibility(np.zeros(1) * u.m / u.s, grid.periods[:1] * u.day, rv)
    if visible is None:
        return None
    unit_k = radial_velocity_semi_amplitude(1 * u.Mearth, grid.m_star * u.Msun, grid.periods * u.day,
                                            grid.eccentricity)
    return (rv_threshold_semi_amplitude(grid.periods * u.day, rv) / unit_k).decompose().value * u.Mearth


def _grid_table(grid: _Grid, system: System, best_mass, largest_mass, gain, ok, capped, chi2_const):
    """One row per (period, phase), with RV and Hill checks at the largest and at the best mass."""
    from astropy.table import QTable

    k, seen = _rv_seen(grid, system, largest_mass)
    _, seen_best = _rv_seen(grid, system, best_mass)
    msun = (lambda q: np.nan_to_num(q.to_value(u.Msun)))
    stable = grid.integrable & grid.stable_with(msun(largest_mass))
    allowed = ok & (seen_best != 1) & grid.integrable & grid.stable_with(msun(best_mass))
    table = QTable()
    table["period"] = grid.pp * u.day
    table["phase"] = grid.ph * u.rad
    table["best_mass"] = best_mass.to(u.Mearth)
    table["largest_mass"] = largest_mass.to(u.Mearth)
    table["chi2_best"] = np.where(ok, chi2_const - gain, np.nan)
    table["delta_chi2_best"] = np.where(ok, gain, 0.0)
    table["rv_semi_amplitude"] = k.to(u.m / u.s)
    table["rv_seen"] = seen
    table["rv_seen"].description = "1: RVs would already show it; 0: they would not; -1: no RV limits given"
    table["hill_stable"] = stable
    table["rv_seen_best"] = seen_best
    table["rv_seen_best"].description = "rv_seen at the best mass"
    table["best_allowed"] = allowed
    table["best_allowed"].description = ("the best mass is Hill-stable and not excluded by the RV limits: "
                                         "only such points are ranked")
    table["integrated"] = ok
    table["largest_mass_is_lower_bound"] = ok & capped
    return table


def _summary(grid: _Grid, table, p_transit: float):
    """One row per period: the best allowed phase and the most permissive largest mass."""
    from astropy.table import QTable

    rows = []
    per = grid.phases.size
    for i, p in enumerate(grid.periods):
        g = table[i * per:(i + 1) * per]
        good = np.asarray(g["integrated"])
        if not np.any(good):
            rows.append((p, np.nan, np.nan, 0.0, np.nan, -1, False, False, False))
            continue
        allowed = np.asarray(g["best_allowed"])
        pick = allowed if np.any(allowed) else good
        j_best = int(np.nanargmax(np.where(pick, g["delta_chi2_best"], -np.inf)))
        j_hi = int(np.nanargmax(np.where(good, g["largest_mass"].value, -np.inf)))
        rows.append((p, g["best_mass"][j_best].value, g["largest_mass"][j_hi].value,
                     float(g["delta_chi2_best"][j_best]), g["rv_semi_amplitude"][j_hi].value,
                     int(g["rv_seen"][j_hi]), bool(g["hill_stable"][j_hi]), bool(np.any(allowed)), True))
    cols = list(zip(*rows))
    summary = QTable()
    summary["period"] = np.array(cols[0]) * u.day
    summary["period_ratio"] = np.array(cols[0]) / p_transit
    summary["best_mass"] = np.array(cols[1]) * u.Mearth
    summary["largest_mass"] = np.array(cols[2]) * u.Mearth
    summary["delta_chi2_best"] = np.array(cols[3])
    summary["rv_semi_amplitude"] = np.array(cols[4]) * u.m / u.s
    summary["rv_seen"] = np.array(cols[5], int)
    summary["rv_seen"].description = table["rv_seen"].description
    summary["hill_stable"] = np.array(cols[6], bool)
    summary["best_allowed"] = np.array(cols[7], bool)
    summary["integrated"] = np.array(cols[8], bool)
    return summary


def _notes(grid: _Grid, data: _TimingFit, ok, linear_only) -> list[str]:
    """What the map did, in words (the report and the CLI print them)."""
    integrable, n, mask = grid.integrable, grid.n, data.mask
    extra = grid.periods.size - grid.n_log
    return [f"{int((~integrable).sum())} of {n} grid points are Hill-unstable or crossing even at the "
            f"reference mass and were not integrated",
            f"{int((integrable & ~ok).sum())} integrated points became unbound" if np.any(integrable & ~ok)
            else "no integrated point became unbound",
            f"{int(linear_only.sum())} points became unbound at their mass limit and keep the linear "
            f"estimate" if np.any(linear_only) else "every point was re-integrated at its mass limit",
            f"{int((~mask).sum())} non-transit rows were left out" if np.any(~mask) else "all rows are transits",
            "the best point is ranked only among points whose best mass is Hill-stable and not excluded by "
            "the RV limits",
            f"{grid.n_log} periods evenly spaced in log period as asked, plus {extra} packed around "
            f"resonances ({grid.periods.size} in all)" if grid.n_log else
            f"{grid.periods.size} periods given explicitly"]
