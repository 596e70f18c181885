"""Several planets integrated together: the joint model of a multi-planet system's transit times.

N ≥ 2 planets, each with a mass ratio μ = m/M_*, an osculating period P, a
reference mid-time t0 (a transit of the osculating Keplerian orbit, which
fixes the phase), e cos ω and e sin ω, all Jacobi osculating
elements at one epoch (the convention of published joint N-body fits,
e.g. Agol et al. 2021, PSJ 2, 1), coplanar and edge-on by default.  Any
planet may transit; the times of those that do are the data, one timing
array per planet (or one table with a planet column).

The model integrates the system with the compiled Wisdom–Holman engine
(:mod:`ttvkit.physics.nbody`) from the epoch forward, so the epoch must not
be later than the first mid-time.  A batch of parameter vectors is one
call (threads over systems), which is how a fit's Jacobian costs one
integration per parameter at most and a single call in all.

Convention of ω: ``transit_longitude`` is ω + f at mid-transit in the
elements' own frame.  ttvkit's engine has the observer on +z, where a
transit is at ω + f = π/2 (the default).  The maximum-likelihood elements
file of Agol et al. (2021) needs 3π/2: measured, with π/2 its 447 transit
times are missed by hours (median |O−C|/σ = 37), with 3π/2 by 0.62σ
(tests/hypotheses/test_planetary_system.py).  This module knows nothing of
fitting: :mod:`ttvkit.inference.joint` fits it.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ttvkit.constants import MEARTH_PER_MSUN
from ttvkit.errors import InputError
from ttvkit.physics import nbody
from ttvkit.physics.resonance import normalised_distance, super_period

__all__ = ["PlanetarySystem", "SystemTimes", "ELEMENTS"]

#: Per-planet parameters, in the order of the parameter vector (planet after planet).
ELEMENTS = ("mass_ratio", "period", "t0", "ecosw", "esinw")

#: Finite-difference steps of each element for the Jacobian (common practice, no source:
#: small against the 1σ of published TTV fits, large against the engine's 1e-10 d noise).
_STEPS = {"mass_ratio": 1e-3, "period": 1e-6, "t0": 1e-5, "ecosw": 1e-4, "esinw": 1e-4}


@dataclass(frozen=True)
class SystemTimes:
    """Transit times of several planets, matched to the model's running transit indices.

    Attributes
    ----------
    planet : ndarray of int
        Index of the planet (in the system's order) of each row.
    time, sigma : ndarray
        Mid-times and their uncertainties (days).
    index : ndarray of int
        Running transit index of each row (0: the planet's first transit after
        the epoch), fixed when the data are matched to starting elements.
    """

    planet: np.ndarray
    time: np.ndarray
    sigma: np.ndarray
    index: np.ndarray

    @property
    def n(self) -> int:
        return int(self.time.size)


class PlanetarySystem:
    """N planets integrated together (coplanar, edge-on unless inclinations are given).

    Parameters
    ----------
    names : sequence of str
        Planet names, in the order of the parameter vector.
    epoch : float
        Time at which the elements osculate (same time scale as the data, days).
    star_mass : float
        The star's mass (M☉); transit times depend only on mass ratios and
        periods, so it only converts μ to planet masses.
    star_mass_error : float
        Its 1σ uncertainty (M☉), propagated into the planet masses.
    inclination, node : sequence of float, optional
        Fixed inclinations and nodes (radians); default π/2 and π (edge-on,
        coplanar).
    transit_longitude : float
        ω + f at mid-transit in the elements' frame (see the module notes).
    step : float, optional
        Integration step (days); default the engine's :func:`~ttvkit.physics.nbody.default_step`
        at the elements given to :meth:`match`, which is conservative for
        compact low-mass systems (check a longer one against
        :func:`~ttvkit.physics.nbody.reference_transit_times` first).
    """

    def __init__(self, names, epoch: float, star_mass: float = 1.0, star_mass_error: float = 0.0,
                 inclination=None, node=None, transit_longitude: float = np.pi / 2, step: float | None = None):
        self.names = tuple(str(n) for n in names)
        if len(self.names) < 2 or len(set(self.names)) != len(self.names):
            raise InputError("a planetary system needs at least two planets with distinct names")
        n = len(self.names)
        self.epoch = float(epoch)
        self.star_mass = float(star_mass)
        self.star_mass_error = float(star_mass_error)
        if not self.star_mass > 0:
            raise InputError(f"the star's mass must be positive, not {star_mass}")
        self.inclination = np.full(n, np.pi / 2) if inclination is None else np.asarray(inclination, float)
        self.node = np.full(n, np.pi) if node is None else np.asarray(node, float)
        self.omega_shift = np.pi / 2 - float(transit_longitude)     # to the engine's convention
        self.step = step
        self.dt = step                       # a fixed step, set by :meth:`match` (smooth Jacobians)

    # -- parameters ---------------------------------------------------------------------------------
    @property
    def parameter_names(self) -> tuple[str, ...]:
        return tuple(f"{p}_{e}" for p in self.names for e in ELEMENTS)

    def steps(self, theta) -> np.ndarray:
        """Finite-difference steps per parameter (the mass ratio's relative to its value)."""
        th = self._reshape(theta)
        steps = np.tile([_STEPS[e] for e in ELEMENTS], (len(self.names), 1))
        steps[:, 0] *= np.abs(th[:, 0])
        return steps.ravel()

    def bounds(self) -> tuple[np.ndarray, np.ndarray]:
        """Bounds of the parameter vector: μ in (0, 0.1), |e cos ω|, |e sin ω| < 0.9."""
        lo = np.tile([1e-12, 0.0, -np.inf, -0.9, -0.9], len(self.names))
        hi = np.tile([0.1, np.inf, np.inf, 0.9, 0.9], len(self.names))
        return lo, hi

    def vector(self, elements: dict) -> np.ndarray:
        """Parameter vector from ``{planet: {element: value}}`` (every element of every planet)."""
        missing = [p for p in self.names if p not in elements]
        if missing:
            raise InputError(f"no elements given for planet(s) {', '.join(missing)}")
        theta = np.array([[float(elements[p][e]) for e in ELEMENTS] for p in self.names])
        self._validate(theta)
        return theta.ravel()

    def _reshape(self, theta) -> np.ndarray:
        return np.asarray(theta, float).reshape(len(self.names), len(ELEMENTS))

    def _validate(self, th: np.ndarray) -> None:
        bad = [self.names[i] for i in np.nonzero(~(th[:, 0] > 0))[0]]
        if bad:
            raise InputError(f"mass ratios must be positive (planet(s) {', '.join(bad)})")
        if np.any(~(th[:, 1] > 0)):
            raise InputError("periods must be positive")
        ecc = np.hypot(th[:, 3], th[:, 4])
        if np.any(ecc >= 1):
            raise InputError("eccentricities must be below 1")
        if nbody.orbits_overlap(th[None, :, 1], ecc[None])[0]:
            raise InputError("the planets' orbits cross (an inner apocentre reaches an outer pericentre): "
                             "such a system is not stable and cannot be integrated")

    # -- the model ----------------------------------------------------------------------------------
    def _engine_elements(self, thetas: np.ndarray):
        th = thetas.reshape(thetas.shape[0], len(self.names), len(ELEMENTS))
        mu, period, t0, ecosw, esinw = (th[..., k] for k in range(len(ELEMENTS)))
        ecc = np.hypot(ecosw, esinw)
        omega = np.arctan2(esinw, ecosw) + self.omega_shift
        mean = nbody.mean_anomaly_at_transit(ecc, omega) + 2 * np.pi / period * (self.epoch - t0)
        masses = np.column_stack([np.full(th.shape[0], self.star_mass), mu * self.star_mass])
        shape = period.shape
        return (masses, period, ecc, omega, np.broadcast_to(self.inclination, shape),
                np.broadcast_to(self.node, shape), mean)

    def all_transits(self, theta, t_end: float) -> np.ndarray:
        """Every transit of every planet [N, K] from the epoch to ``t_end`` (days; NaN-padded)."""
        th = self._reshape(theta)
        self._validate(th)
        return nbody.transit_times(*self._engine_elements(th.reshape(1, -1)), t_end - self.epoch,
                                   dt=self.dt, frame="jacobi")[0] + self.epoch

    def predict(self, thetas, data: SystemTimes) -> np.ndarray:
        """Model mid-times [S, n] of the data's rows for a batch of parameter vectors [S, P].

        A system whose orbits cross, or that goes unbound, gives NaN rows.
        """
        thetas = np.atleast_2d(np.asarray(thetas, float))
        th = thetas.reshape(thetas.shape[0], len(self.names), len(ELEMENTS))
        ecc = np.hypot(th[..., 3], th[..., 4])
        ok = (np.all(th[..., 0] > 0, axis=1) & np.all(th[..., 1] > 0, axis=1) & np.all(ecc < 1, axis=1)
              & ~nbody.orbits_overlap(th[..., 1], np.minimum(ecc, 0.99)))
        out = np.full((thetas.shape[0], data.n), np.nan)
        if not np.any(ok):
            return out
        t_end = float(np.max(data.time)) + 1.0 - self.epoch
        tt = nbody.transit_times(*self._engine_elements(thetas[ok]), t_end, dt=self.dt, frame="jacobi",
                                 epochs=np.unique(data.index), max_transits=int(data.index.max()) + 1)
        out[ok] = tt[:, data.planet, data.index] + self.epoch
        return out

    def match(self, theta, planet, time, sigma) -> SystemTimes:
        """Match mid-times to the running transit indices of the elements ``theta``.

        Parameters
        ----------
        theta : array
            Starting elements (usually published ones).
        planet : sequence of str
            Planet name of each row.
        time, sigma : array
            Mid-times and uncertainties (days).
        """
        th = self._reshape(theta)
        self._validate(th)
        planet = np.asarray(planet).astype(str)
        time, sigma = np.asarray(time, float), np.asarray(sigma, float)
        unknown = sorted(set(planet) - set(self.names))
        if unknown:
            raise InputError(f"the timing data name planet(s) {', '.join(unknown)} that the system "
                             f"({', '.join(self.names)}) lacks")
        if np.any(~np.isfinite(time)) or np.any(~(sigma > 0)):
            row = int(np.nonzero(~np.isfinite(time) | ~(sigma > 0))[0][0])
            raise InputError(f"row {row}: mid-times must be finite and uncertainties positive")
        if np.min(time) < self.epoch:
            raise InputError(f"the first mid-time ({np.min(time)}) precedes the elements' epoch "
                             f"({self.epoch}): the model integrates forward from the epoch")
        engine = self._engine_elements(th.reshape(1, -1))
        self.dt = float(nbody.default_step(engine[1], engine[2])[0]) if self.step is None else float(self.step)
        idx = np.array([self.names.index(p) for p in planet])
        model = self.all_transits(theta, float(np.max(time)) + 2 * float(np.max(th[:, 1])))
        index = np.empty(time.size, int)
        for i in range(len(self.names)):
            rows = idx == i
            if np.any(rows):
                k = np.nanargmin(np.abs(model[i][None, :] - time[rows, None]), axis=1)
                index[rows] = k
        return SystemTimes(idx, time, sigma, index)

    def oc_curves(self, theta, data: SystemTimes) -> dict:
        """Per transiting planet, the O−C data and model against the model's own mean ephemeris (s).

        Returns ``{name: {"index", "oc_s", "sigma_s", "model_index", "model_oc_s"}}``; the
        straight line is fitted to the model's every transit over the data's span, so data and
        model share it (what report figures draw).
        """
        model = self.all_transits(theta, float(np.max(data.time)) + 1.0)
        curves = {}
        for i, name in enumerate(self.names):
            rows = data.planet == i
            if not np.any(rows):
                continue
            k = np.arange(int(data.index[rows].max()) + 1)
            tk = model[i, k]
            ok = np.isfinite(tk)
            slope, intercept = np.polyfit(k[ok], tk[ok], 1)
            curves[name] = {"index": data.index[rows],
                            "oc_s": (data.time[rows] - intercept - slope * data.index[rows]) * 86400.0,
                            "sigma_s": data.sigma[rows] * 86400.0, "model_index": k[ok],
                            "model_oc_s": (tk[ok] - intercept - slope * k[ok]) * 86400.0}
        return curves

    # -- derived quantities --------------------------------------------------------------------------
    def masses_earth(self, theta, cov=None) -> list[tuple[str, float, float]]:
        """(name, mass [M⊕], 1σ) per planet, the star's mass uncertainty propagated in quadrature."""
        th = self._reshape(theta)
        mu = th[:, 0]
        sig_mu = (np.zeros_like(mu) if cov is None
                  else np.sqrt(np.diag(cov)).reshape(th.shape)[:, 0])
        mass = mu * self.star_mass * MEARTH_PER_MSUN
        rel = np.hypot(sig_mu / mu, self.star_mass_error / self.star_mass)
        return [(n, float(m), float(m * r)) for n, m, r in zip(self.names, mass, rel)]

    def super_periods(self, theta, max_j: int = 4, window: float = 0.05) -> list[tuple[str, str, int, float]]:
        """(inner, outer, j, super-period [d]) of adjacent pairs within ``window`` of a j:j−1 resonance.

        P_j = 1/|j/P′ − (j−1)/P| (Lithwick, Xie & Wu 2012, ApJ 761, 122).
        """
        th = self._reshape(theta)
        order = np.argsort(th[:, 1])
        rows = []
        for a, b in zip(order[:-1], order[1:]):
            p_in, p_out = th[a, 1], th[b, 1]
            best = min(range(2, max_j + 1), key=lambda j: abs(normalised_distance(p_in, p_out, j)))
            if abs(normalised_distance(p_in, p_out, best)) < window:
                rows.append((self.names[a], self.names[b], best, float(super_period(p_in, p_out, best))))
        return rows
