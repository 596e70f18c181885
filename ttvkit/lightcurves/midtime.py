"""Per-transit mid-times from light curves, with uncertainties one can trust.

The transit shape is batman's Mandel & Agol (2002) model (Kreidberg 2015,
PASP 127, 1161) with quadratic limb darkening parametrised by Kipping's
(2013, MNRAS 435, 2152) q1, q2 (u1 = 2√q1 q2, u2 = √q1 (1 − 2 q2)), the
radius ratio, a/R*, the impact parameter and optionally e, ω; long-cadence
points are supersampled over the exposure time (Kipping 2010, MNRAS 408,
1758).

With the shape fixed, each window's mid-time is a one-dimensional search:
the window's multiplicative polynomial baseline enters linearly and is
solved by weighted linear least squares inside the search (profiled out).
Each window's batman model is built once and re-evaluated with a new t0
(shared/STYLE.md).  The uncertainty comes from the curvature of the profile
χ², σ² = 2 / (d²χ²/dt0²), and is inflated by the time-averaging β factor of
the residuals (Pont, Zucker & Queloz 2006; Winn et al. 2008, ApJ 683,
1076).  (The curvature is taken as the Gauss–Newton Fisher information of
the profiled model.)  :func:`mid_time_mcmc` is the slow reference: emcee over t0 and the
baseline, kept for the tests.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.optimize import minimize_scalar

from ttvkit.errors import InputError
from ttvkit.physics.geometry import contact_durations

__all__ = ["TransitShape", "WindowModel", "MidTime", "fit_mid_time", "beta_factor", "mid_time_mcmc",
           "shape_from_toml"]


@dataclass(frozen=True)
class TransitShape:
    """The transit's shape (everything but the mid-time).

    Attributes
    ----------
    period : float
        Days.
    radius_ratio : float
        R_p / R*.
    a_over_rstar : float
    impact_parameter : float
    q1, q2 : float
        Kipping (2013) limb-darkening parameters in [0, 1].
    eccentricity, omega : float
        ω in degrees.
    exposure_time : float
        Integration time (days) for supersampling; 0 for none.
    supersample : int
        Sub-exposures per point when ``exposure_time`` > 0.
    """

    period: float
    radius_ratio: float
    a_over_rstar: float
    impact_parameter: float
    q1: float = 0.36
    q2: float = 0.3
    eccentricity: float = 0.0
    omega: float = 90.0
    exposure_time: float = 0.0
    supersample: int = 1

    @property
    def limb_darkening(self) -> tuple[float, float]:
        """(u1, u2) from q1, q2 (Kipping 2013, eq. 15)."""
        s = np.sqrt(self.q1)
        return 2 * s * self.q2, s * (1 - 2 * self.q2)

    @property
    def inclination(self) -> float:
        """Degrees, from b = a cos i / R* · (1 − e²)/(1 + e sin ω) (Winn 2010 eq. 7)."""
        e, w = self.eccentricity, np.radians(self.omega)
        cos_i = self.impact_parameter / self.a_over_rstar * (1 + e * np.sin(w)) / (1 - e ** 2)
        return float(np.degrees(np.arccos(np.clip(cos_i, -1, 1))))

    def durations(self) -> tuple[float, float]:
        """(T14, ingress duration τ) in days (Winn 2010 eqs. 14, 16, circular form)."""
        t14, t23 = contact_durations(self.period, self.a_over_rstar, self.radius_ratio, self.impact_parameter,
                                     np.radians(self.inclination), self.eccentricity, np.radians(self.omega))
        return t14, 0.5 * (t14 - t23) if t23 > 0 else 0.5 * t14

    def batman_params(self, t0: float = 0.0):
        """A batman.TransitParams for this shape."""
        import batman

        p = batman.TransitParams()
        p.t0, p.per, p.rp, p.a = t0, self.period, self.radius_ratio, self.a_over_rstar
        p.inc, p.ecc, p.w = self.inclination, self.eccentricity, self.omega
        p.limb_dark = "quadratic"
        p.u = list(self.limb_darkening)
        return p


def shape_from_toml(path) -> TransitShape:
    """Read a shape file: ``[shape]`` with period (with unit), radius_ratio, a_over_rstar,
    impact_parameter, q1, q2 and optionally exposure_time (with unit), supersample."""
    import astropy.units as u

    from ttvkit.physics.system import tomllib

    try:
        data = tomllib.loads(open(path, encoding="utf-8").read()).get("shape", {})
    except (OSError, tomllib.TOMLDecodeError) as exc:
        raise InputError(f"{path}: cannot read the shape file ({exc})") from None
    known = {f for f in TransitShape.__dataclass_fields__}
    kwargs = {}
    for key, value in data.items():
        if key not in known:
            raise InputError(f"{path}: [shape] has unknown key {key!r}; known: {', '.join(sorted(known))}")
        if key in ("period", "exposure_time"):
            try:
                kwargs[key] = u.Quantity(str(value)).to_value(u.day)
            except (TypeError, ValueError, u.UnitsError):
                raise InputError(f"{path}: [shape] {key} = {value!r} needs a time unit, e.g. \"2.5 d\"") from None
        else:
            kwargs[key] = int(value) if key == "supersample" else float(value)
    for key in ("period", "radius_ratio", "a_over_rstar", "impact_parameter"):
        if key not in kwargs:
            raise InputError(f"{path}: [shape] needs {key}")
    return TransitShape(**kwargs)


class WindowModel:
    """A window's batman model, built once and re-evaluated for trial mid-times.

    Parameters
    ----------
    time, flux, flux_err : ndarray
    shape : TransitShape
    baseline_order : int
        Degree of the multiplicative polynomial baseline (profiled out).
    """

    def __init__(self, time, flux, flux_err, shape: TransitShape, baseline_order: int = 1):
        import batman

        self.time = np.asarray(time, float)
        self.flux = np.asarray(flux, float)
        self.weight = 1.0 / np.asarray(flux_err, float)
        self.shape = shape
        self.centre = float(np.mean(self.time))
        self.params = shape.batman_params(self.centre)
        kw = {}
        if shape.exposure_time > 0 and shape.supersample > 1:
            kw = {"supersample_factor": int(shape.supersample), "exp_time": float(shape.exposure_time)}
        # batman models the time relative to t0 internally; pass times relative to the window centre
        self.model = batman.TransitModel(self.params, self.time - self.centre, **kw)
        x = (self.time - self.centre) / max(np.ptp(self.time), 1e-9)
        self.basis = np.vander(x, baseline_order + 1, increasing=True)
        self.flux_w = self.flux * self.weight
        self.design_t = (self.basis * self.weight[:, None]).T     # [k, n]: weighted basis, rows
        self.yy = float(self.flux_w @ self.flux_w)
        self.evaluations = 0

    def light_curve(self, t0: float) -> np.ndarray:
        """The transit model (no baseline) for mid-time ``t0`` (BJD_TDB)."""
        self.params.t0 = t0 - self.centre
        self.evaluations += 1
        return self.model.light_curve(self.params)

    def _normal(self, m: np.ndarray):
        """Normal equations AᵀA, Aᵀy of the baseline for the transit model ``m``."""
        a = m * self.design_t
        return a @ a.T, a @ self.flux_w

    def _solve(self, m: np.ndarray) -> np.ndarray:
        """Baseline coefficients for the transit model ``m``."""
        normal, rhs = self._normal(m)
        if normal.shape == (2, 2):  # the usual linear baseline: Cramer's rule, no LAPACK call
            det = normal[0, 0] * normal[1, 1] - normal[0, 1] * normal[1, 0]
            return np.array([normal[1, 1] * rhs[0] - normal[0, 1] * rhs[1],
                             normal[0, 0] * rhs[1] - normal[1, 0] * rhs[0]]) / det
        return np.linalg.solve(normal, rhs)

    def chi2(self, t0: float) -> float:
        """Profile χ² = yᵀy − (Aᵀy)ᵀ(AᵀA)⁻¹(Aᵀy): the baseline solved by weighted least squares."""
        normal, rhs = self._normal(self.light_curve(t0))
        if normal.shape == (2, 2):  # the quadratic form in closed form: this is the hot path
            det = normal[0, 0] * normal[1, 1] - normal[0, 1] * normal[1, 0]
            explained = (normal[1, 1] * rhs[0] ** 2 - 2 * normal[0, 1] * rhs[0] * rhs[1]
                         + normal[0, 0] * rhs[1] ** 2) / det
        else:
            explained = rhs @ np.linalg.solve(normal, rhs)
        return self.yy - float(explained)

    def profile_chi2(self, t0: float) -> tuple[float, np.ndarray]:
        """χ² with the baseline solved by weighted linear least squares; and the model."""
        m = self.light_curve(t0)
        model = (m[:, None] * self.basis) @ self._solve(m)
        r = (self.flux - model) * self.weight
        return float(r @ r), model


@dataclass(frozen=True)
class MidTime:
    """One fitted mid-time."""

    epoch: int
    time: float
    uncertainty: float
    white_uncertainty: float
    beta: float
    chi2: float
    n_points: int
    evaluations: int
    coverage: str
    source: str


def beta_factor(residuals: np.ndarray, sigma: np.ndarray, bin_sizes) -> float:
    """Time-averaging β (Pont et al. 2006; Winn et al. 2008): ≥ 1.

    For each bin size N the RMS of the binned residuals is compared with the
    white-noise expectation σ₁ N^{−1/2} √(M/(M−1)); β is the median over the
    bin sizes, never below 1.
    """
    r = np.asarray(residuals, float)
    r = r - r.mean()
    s1 = np.sqrt(r @ r / r.size)
    betas = []
    for n in bin_sizes:
        n = int(n)
        m = r.size // n
        if n < 2 or m < 3:
            continue
        binned = r[: m * n].reshape(m, n).sum(axis=1) / n
        binned = binned - binned.sum() / m
        expected = s1 / np.sqrt(n) * np.sqrt(m / (m - 1))
        betas.append(np.sqrt(binned @ binned / m) / expected)
    if not betas:
        return 1.0
    betas.sort()
    mid = len(betas) // 2
    median = betas[mid] if len(betas) % 2 else 0.5 * (betas[mid - 1] + betas[mid])
    return float(max(1.0, median))


def fit_mid_time(window, shape: TransitShape, search: float | None = None, baseline_order: int = 1,
                 correlated_noise: bool = True) -> MidTime:
    """Fit one window's mid-time with the shape fixed.

    Parameters
    ----------
    window : Window
    shape : TransitShape
    search : float, optional
        Half-width (days) of the mid-time search around the prediction
        (default a quarter of the transit duration).
    baseline_order : int
    correlated_noise : bool
        Inflate the uncertainty by the β factor.

    Returns
    -------
    MidTime
    """
    model = WindowModel(window.time, window.flux, window.flux_err, shape, baseline_order)
    t14, tau = shape.durations()
    half = search if search is not None else 0.25 * t14
    # Stop when the mid-time is known to 1/50 of its expected precision
    # (the Carter et al. 2008 bound for this window), far below its error.
    cadence = float(window.time[-1] - window.time[0]) / max(window.time.size - 1, 1)
    expected = float(np.median(window.flux_err)) / max(shape.radius_ratio ** 2, 1e-6) * np.sqrt(tau * cadence / 2)
    tol = max(min(expected / 50, tau * 1e-3), 1e-8)
    # Search in the offset from the prediction: Brent's tolerance has a term
    # relative to |x|, which at BJD ~ 2.46e6 would be ~0.04 d.
    res = minimize_scalar(lambda d: model.chi2(window.predicted + d), bounds=(-half, half),
                          method="bounded", options={"xatol": tol})
    t_best = float(window.predicted + res.x)
    # Curvature of the profile χ² from the model's derivative (Gauss–Newton,
    # the expected Fisher information): d²χ²/dt0² = 2 Σ (∂m/∂t0)² / σ², with
    # the baseline re-solved at t0 ± h so its correlation with t0 is
    # profiled out.  Unlike a second difference of the observed χ², this is
    # not thrown about by the kinks of the model at the contact points.
    h = max(tau / 10, 1e-6)
    chi2, best_model = model.profile_chi2(t_best)
    _, m_plus = model.profile_chi2(t_best + h)
    _, m_minus = model.profile_chi2(t_best - h)
    derivative = (m_plus - m_minus) / (2 * h) * model.weight
    curvature = 2 * float(derivative @ derivative)
    if not curvature > 0:
        raise InputError(f"{window.source}: epoch {window.epoch}: the χ² has no minimum at the mid-time "
                         "(no transit signal in the window?)")
    white = float(np.sqrt(2.0 / curvature))
    beta = 1.0
    if correlated_noise:
        n_tau = max(2, int(round(tau / cadence)))
        sizes = sorted({int(round(max(2, n_tau / 2) * 4 ** (i / 4))) for i in range(5)})
        beta = beta_factor((window.flux - best_model) / window.flux_err, np.ones(window.time.size), sizes)
    return MidTime(window.epoch, t_best, white * beta, white, beta, chi2, int(window.time.size),
                   model.evaluations, window.coverage, window.source)


def mid_time_mcmc(window, shape: TransitShape, n_steps: int = 3000, n_walkers: int = 16, seed: int = 0,
                  baseline_order: int = 1) -> tuple[float, float]:
    """Slow reference: emcee over the mid-time and the baseline coefficients.

    Returns the posterior median and standard deviation of the mid-time
    (days), without β inflation.  Uniform priors.
    """
    import emcee

    model = WindowModel(window.time, window.flux, window.flux_err, shape, baseline_order)
    fast = fit_mid_time(window, shape, baseline_order=baseline_order, correlated_noise=False)
    k = baseline_order + 1
    m0 = model.light_curve(fast.time)
    coef0, *_ = np.linalg.lstsq((m0[:, None] * model.basis) * model.weight[:, None], model.flux * model.weight,
                                rcond=None)

    def log_prob(theta):
        m = model.light_curve(theta[0])
        r = (model.flux - (m[:, None] * model.basis) @ theta[1:]) * model.weight
        return -0.5 * float(r @ r)

    rng = np.random.default_rng(seed)
    start = np.concatenate([[fast.time], coef0])
    scale = np.concatenate([[fast.white_uncertainty], np.full(k, 1e-5)])
    p0 = start + 0.1 * scale * rng.standard_normal((n_walkers, k + 1))
    sampler = emcee.EnsembleSampler(n_walkers, k + 1, log_prob)
    sampler.random_state = np.random.RandomState(seed).get_state()
    sampler.run_mcmc(p0, n_steps, progress=False)
    chain = sampler.get_chain(discard=n_steps // 3, flat=True)[:, 0]
    return float(np.median(chain)), float(np.std(chain))
