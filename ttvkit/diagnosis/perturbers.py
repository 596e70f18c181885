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

from ttvkit._linear import weighted_line
from ttvkit.constants import YEAR_D
from ttvkit.errors import InputError
from ttvkit.physics import nbody
from ttvkit.physics.companions import (
    hill_stable,
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

#: Steps per orbit of the inner planet of each pair in the map's integrations
#: (the engine's P/20, shortened for close pairs).  Measured on the tests'
#: injected system: mass limits at P/20 within 0.2% of P/40 at all 24
#: points; at P/8 some moved by factors up to 7 (near 7:4 and for inner
#: perturbers), so the compiled engine's speed is spent on the step.
MAP_STEPS_PER_ORBIT = 20


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


def _integrate(job):
    """One chunk of grid points: transit times of the transiting planet (picklable for processes)."""
    masses, period, ecc, omega, inc, node, mean, t_end, dt, k, epochs = job
    # one thread per worker: the executor already spreads chunks over the cores
    return nbody.transit_times(masses, period, ecc, omega, inc, node, mean, t_end, dt=dt, planets=0,
                               max_transits=k, epochs=epochs, threads=False)[:, 0]


def _chunks(index, cost, n_chunks: int):
    """Split grid points into chunks of about equal cost (dealt out in order of cost)."""
    order = index[np.argsort(-cost)]
    n_chunks = max(1, min(n_chunks, order.size))
    return [order[j::n_chunks] for j in range(n_chunks)]


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


@dataclass
class _TimingFit:
    """The transit rows and their constant-period fit, with the projection that profiles (T₀, P) out."""

    mask: np.ndarray
    t: np.ndarray
    wts: np.ndarray
    idx: np.ndarray           # epochs since the first
    n_orbits: int
    p_transit: float
    chi2_const: float
    q: np.ndarray
    y_res: np.ndarray
    start_time: float

    @classmethod
    def of(cls, table: TimingTable, system: System) -> "_TimingFit":
        mask = np.isin(table.kind, ("transit", "primary"))
        if mask.sum() < 5:
            raise InputError(f"the perturber map needs at least 5 transit mid-times; the table has {mask.sum()}")
        t = table.time[mask]
        sigma = table.uncertainty[mask]
        epoch = table.epoch[mask].astype(int)
        idx = epoch - int(epoch.min())
        line = weighted_line(idx, t, sigma)
        wts = 1 / sigma
        chi2_const = float(np.sum(((t - line(idx)) * wts) ** 2))
        design = np.column_stack([np.ones_like(t), idx])
        q, _ = np.linalg.qr(design * wts[:, None])
        y = (t * wts)[None, :]
        y_res = (y - (y @ q) @ q.T)[0]
        return cls(mask, t, wts, idx, int(idx.max()) + 1, line.slope, chi2_const, q, y_res,
                   line.intercept - 0.5 * line.slope)

    def off_line(self, v):
        """Weighted residuals off the best line: (T₀, P) are eliminated exactly."""
        return v - (v @ self.q) @ self.q.T


@dataclass
class _Grid:
    """The (period, phase) grid and the engine's inputs for every point."""

    periods: np.ndarray
    n_log: int
    phases: np.ndarray
    pp: np.ndarray
    ph: np.ndarray
    m_star: float
    m_planet: float
    m_ref: float
    w_planet: float
    m_transit: float
    eccentricity: float
    engine: tuple             # masses, period, ecc, omega, inc, node, mean
    t_end: float
    integrable: np.ndarray
    step: np.ndarray
    chunks: list

    @property
    def n(self) -> int:
        return self.pp.size

    @classmethod
    def build(cls, data: _TimingFit, system: System, options: PerturberMapOptions) -> "_Grid":
        m_star = system.star.need("mass", "the perturber map").to_value(u.Msun)
        m_planet = system.companion.need("mass", "the perturber map (the transiting planet's mass)").to_value(u.Msun)
        e_planet = float(system.orbit.eccentricity or 0.0)
        w_planet = system.orbit.omega.to_value(u.rad) if system.orbit.omega is not None else np.pi / 2
        p_transit = data.p_transit
        grid_period = system.orbit.period if system.orbit.period is not None else p_transit * u.day
        periods = options.period_grid(grid_period).to_value(u.day)
        if np.any(~np.isfinite(periods)) or np.any(periods <= 0):
            raise InputError("perturber periods must be positive and finite")
        m_ref = u.Quantity(options.reference_mass, u.Msun).to_value(u.Msun)
        phases = np.arange(options.n_phases) * 2 * np.pi / options.n_phases
        pp, ph = (x.ravel() for x in np.meshgrid(periods, phases, indexing="ij"))
        n = pp.size
        # the engine's t = 0 is half an orbit before epoch e0's transit
        m_transit = float(nbody.mean_anomaly_at_transit(e_planet, w_planet))
        masses = np.column_stack([np.full(n, m_star), np.full(n, m_planet), np.full(n, m_ref)])
        period = np.column_stack([np.full(n, p_transit), pp])
        ecc = np.column_stack([np.full(n, e_planet), np.full(n, options.eccentricity)])
        engine = (masses, period, ecc, np.column_stack([np.full(n, w_planet), np.zeros(n)]),
                  np.full((n, 2), np.pi / 2), np.zeros((n, 2)),
                  np.column_stack([np.full(n, m_transit - np.pi), ph]))
        grid = cls(periods, options.log_spaced_count(), phases, pp, ph, m_star, m_planet, m_ref, w_planet,
                   m_transit, options.eccentricity, engine, data.n_orbits * p_transit + 0.25 * p_transit,
                   np.zeros(n, bool), np.full(n, np.nan), [])
        # points whose orbits cross or that are Hill-unstable even at the reference mass are not integrated
        grid.integrable = ~nbody.orbits_overlap(period, ecc) & grid.stable_with(m_ref)
        todo = np.nonzero(grid.integrable)[0]
        grid.step[todo] = nbody.default_step(period[todo], ecc[todo]) * nbody.STEPS_PER_ORBIT / MAP_STEPS_PER_ORBIT
        workers = os.cpu_count() or 1
        grid.chunks = _chunks(todo, 1 / grid.step[todo], max(4 * workers, int(np.ceil(todo.size / options.max_chunk))))
        return grid

    def stable_with(self, mass):
        """Gladman (1993) Hill stability of the pair with perturbers of ``mass`` (M☉)."""
        au_t, au_p = (((self.m_star + self.m_planet) * (x / YEAR_D) ** 2) ** (1 / 3) * u.AU
                      for x in (self.engine[1][:, 0], self.pp))
        return hill_stable(self.m_star * u.Msun, self.m_planet * u.Msun, au_t, mass * u.Msun, au_p)


def _template_pass(grid: _Grid, data: _TimingFit, executor, perturber_mass, label: str, progress: bool):
    """Projected, weighted templates per unit mass of every integrable point at these masses."""
    from tqdm.auto import tqdm

    m = grid.engine[0].copy()
    m[:, 2] = perturber_mass
    rest = grid.engine[1:]
    jobs = [(m[c], *(x[c] for x in rest), grid.t_end, grid.step[c], data.n_orbits + 2, data.idx)
            for c in grid.chunks]
    results = list(tqdm(executor.map(_integrate, jobs), total=len(jobs), desc=f"perturber map ({label})",
                        unit="chunk", disable=not progress))
    times = np.full((grid.n, data.n_orbits + 2), np.nan)
    for c, r in zip(grid.chunks, results):
        times[c, :r.shape[1]] = r
    p = data.p_transit
    template = times[:, data.idx] - (0.5 * p + p * data.idx)[None, :]   # the fit absorbs any line
    good = grid.integrable & np.all(np.isfinite(template), axis=1)
    template[~good] = 0.0
    return data.off_line(template * data.wts[None, :]) / perturber_mass[:, None], good


def _chi2_profile(u1, u2, m1, m2, data: _TimingFit, delta_chi2: float, ok):
    """Best and largest masses (Quantities), χ² gain and the capped flag from χ²(m) up to 1.5 m₂.

    χ²(m) = |y − m u1 − m (m − m1)/(m2 − m1) d|², d = u2 − u1.
    """
    d = u2 - u1
    fractions = np.linspace(0.0, 1.5, 601)
    mgrid = fractions[None, :] * m2[:, None]
    alpha = mgrid
    beta = mgrid * (mgrid - m1[:, None]) / (m2 - m1)[:, None]
    y = data.y_res
    yy = float(y @ y)
    yu, yd = u1 @ y, d @ y
    uu, ud, dd2 = (np.einsum("ij,ij->i", a, b) for a, b in ((u1, u1), (u1, d), (d, d)))
    chi2 = (yy - 2 * alpha * yu[:, None] - 2 * beta * yd[:, None] + alpha ** 2 * uu[:, None]
            + 2 * alpha * beta * ud[:, None] + beta ** 2 * dd2[:, None])
    j_best = np.argmin(chi2, axis=1)
    rows = np.arange(chi2.shape[0])
    above = (chi2 > data.chi2_const + delta_chi2) & (np.arange(fractions.size)[None, :] > j_best[:, None])
    first = np.where(above.any(axis=1), np.argmax(above, axis=1), fractions.size - 1)
    gain = np.where(ok, data.chi2_const - chi2[rows, j_best], 0.0)
    best = np.where(ok, mgrid[rows, j_best], np.nan) * u.Msun
    largest = np.where(ok, mgrid[rows, first], np.nan) * u.Msun
    return best, largest, gain, ~above.any(axis=1)


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
    integrable, n, mask = grid.integrable, grid.n, data.mask
    return [f"{grid.n_log} periods evenly spaced in log period as asked, plus {grid.periods.size - grid.n_log} "
            f"packed around resonances ({grid.periods.size} in all)" if grid.n_log else
            f"{grid.periods.size} periods given explicitly",
            f"{int((~integrable).sum())} of {n} grid points are Hill-unstable or crossing even at the "
            f"reference mass and were not integrated",
            f"{int((integrable & ~ok).sum())} integrated points became unbound" if np.any(integrable & ~ok)
            else "no integrated point became unbound",
            f"{int(linear_only.sum())} points became unbound at their mass limit and keep the linear "
            f"estimate" if np.any(linear_only) else "every point was re-integrated at its mass limit",
            f"{int((~mask).sum())} non-transit rows were left out" if np.any(~mask) else "all rows are transits",
            "the best point is ranked only among points whose best mass is Hill-stable and not excluded by "
            "the RV limits"]
