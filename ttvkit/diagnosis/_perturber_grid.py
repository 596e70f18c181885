"""The grid machinery of the perturber map: the timing fit it profiles, the grid, the passes.

Private to :mod:`ttvkit.diagnosis.perturbers` (split out to keep files short);
see that module for the method.
"""

from __future__ import annotations

import os
from dataclasses import dataclass

import astropy.units as u
import numpy as np

from ttvkit._linear import weighted_line
from ttvkit.constants import YEAR_D
from ttvkit.errors import InputError
from ttvkit.physics import nbody
from ttvkit.physics.companions import hill_stable
from ttvkit.physics.system import System
from ttvkit.timing.table import TimingTable

#: Steps per orbit of the inner planet of each pair in the map's integrations
#: (the engine's P/20, shortened for close pairs).  Measured on the tests'
#: injected system: mass limits at P/20 within 0.2% of P/40 at all 24
#: points; at P/8 some moved by factors up to 7 (near 7:4 and for inner
#: perturbers), so the compiled engine's speed is spent on the step.
MAP_STEPS_PER_ORBIT = 20


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
    def build(cls, data: _TimingFit, system: System, options) -> "_Grid":
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
