"""Per-transit mid-times from light curves, with uncertainties one can trust.

The transit shape is batman's Mandel & Agol (2002) model (Kreidberg 2015,
PASP 127, 1161) with quadratic limb darkening parametrised by Kipping's
(2013, MNRAS 435, 2152) q1, q2 (u1 = 2√q1 q2, u2 = √q1 (1 − 2 q2)), the
radius ratio, a/R*, the impact parameter and optionally e, ω; long-cadence
points are supersampled over the exposure time (Kipping 2010, MNRAS 408,
1758).

With the shape fixed, each window's mid-time is a one-dimensional search:
the window's multiplicative polynomial baseline enters linearly and is
solved by generalised least squares inside the search (profiled out).
With the shape fixed, the model is one function of t − t0 for every window,
so batman evaluates it once per shape on a fine grid
(:func:`tabulated_transit`) and each trial t0 is a linear interpolation; the
search's coarse grid is one interpolation and two matrix products for all
its points.  A shape fit, which changes the shape between calls, calls
batman directly (``WindowModel(tabulated=False)``).  The uncertainty is the Fisher information of t0 with
the baseline profiled out, (F⁻¹)₀₀ with F = JᵀK⁻¹J, J the model's
derivatives; K is diagonal (the flux errors, times the measured white
ratio) or a Gaussian process (:mod:`ttvkit.lightcurves.noise`).  Each fit
also measures the transit depth against its error (the detection check)
and says whether the search ended at its bound.  The time-averaging β
(Pont, Zucker & Queloz 2006; Winn et al. 2008, ApJ 683, 1076) is reported,
and applied only on request: it understates correlated noise.
Long-cadence points are integrated over the instrument's exposure (batman's
sub-points placed at the midpoints of equal slices, see
:class:`WindowModel`).  :func:`ttvkit.lightcurves.reference.mid_time_mcmc` is the slow reference: emcee
over t0 and the baseline, with the white or the GP likelihood, kept for
the tests.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from functools import lru_cache

import numpy as np

from ttvkit.errors import InputError
from ttvkit.lightcurves.search import search_mid_time
from ttvkit.physics.geometry import contact_durations

__all__ = ["TransitShape", "WindowModel", "MidTime", "fit_mid_time", "beta_factor", "shape_from_toml",
           "tabulated_transit"]


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

    def __post_init__(self):
        k, b = self.radius_ratio, self.impact_parameter
        rules = [("period", self.period > 0, "must be positive"),
                 ("radius_ratio", 0 < k < 1, "must be between 0 and 1"),
                 ("a_over_rstar", self.a_over_rstar > 1, "must exceed 1"),
                 ("impact_parameter", 0 <= b < 1 + k, "must be in [0, 1 + radius_ratio): otherwise no transit"),
                 ("q1", 0 <= self.q1 <= 1, "must be in [0, 1] (Kipping 2013)"),
                 ("q2", 0 <= self.q2 <= 1, "must be in [0, 1] (Kipping 2013)"),
                 ("eccentricity", 0 <= self.eccentricity < 1, "must be in [0, 1)"),
                 ("exposure_time", self.exposure_time >= 0, "must not be negative"),
                 ("supersample", self.supersample >= 1, "must be at least 1")]
        for name, ok, why in rules:   # NaN fails every comparison, so it is refused too
            if not ok:
                raise InputError(f"transit shape: {name} = {getattr(self, name)!r} {why}")

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
        return _durations(self)

    def batman_params(self, t0: float = 0.0):
        """A batman.TransitParams for this shape."""
        import batman

        p = batman.TransitParams()
        p.t0, p.per, p.rp, p.a = t0, self.period, self.radius_ratio, self.a_over_rstar
        p.inc, p.ecc, p.w = self.inclination, self.eccentricity, self.omega
        p.limb_dark = "quadratic"
        p.u = list(self.limb_darkening)
        return p


@lru_cache(maxsize=256)
def _durations(shape: TransitShape) -> tuple[float, float]:
    """:meth:`TransitShape.durations`, once per shape (the shape is frozen; every window asks)."""
    t14, t23 = contact_durations(shape.period, shape.a_over_rstar, shape.radius_ratio, shape.impact_parameter,
                                 np.radians(shape.inclination), shape.eccentricity, np.radians(shape.omega))
    return t14, 0.5 * (t14 - t23) if t23 > 0 else 0.5 * t14


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
    try:
        return TransitShape(**kwargs)
    except InputError as exc:
        raise InputError(f"{path}: [shape]: {exc}") from None


def _supersampling(shape: TransitShape) -> dict:
    """batman's keyword arguments for the shape's exposure.

    batman places its n sub-points at linspace(-exp_time/2, exp_time/2, n), ends included, with
    equal weights: an effective exposure of exp_time * n / (n - 1) (checked numerically in
    tests/lightcurves/test_noise.py).  Asking for exposure * (n - 1) / n puts the sub-points at
    the midpoints of n equal slices of the instrument's exposure.
    """
    if shape.exposure_time > 0 and shape.supersample > 1:
        n = int(shape.supersample)
        return {"supersample_factor": n, "exp_time": float(shape.exposure_time) * (n - 1) / n}
    return {}


#: Table spacing in units of the ingress duration τ.  Linear interpolation of the tabulated model
#: errs by at most ~depth (h/τ)^1.5 next to a contact point (the flux deficit grows as x^1.5 there)
#: and depth (h/τ)^2 / 8 elsewhere: at τ/500, about 1e-4 of the depth, two orders below any
#: photometric noise (checked against direct batman calls in tests/lightcurves/test_midtime.py).
TABLE_STEPS_PER_INGRESS = 500
#: Most table points for one shape (a very short ingress would otherwise ask for millions).
TABLE_MAX_POINTS = 400_000


@lru_cache(maxsize=64)
def tabulated_transit(shape: TransitShape) -> tuple[np.ndarray, np.ndarray]:
    """The shape's batman model against time from mid-transit, on a grid fine enough to interpolate.

    With the shape fixed, the model of a window is this one function of
    ``t − t0`` (the orbit and the exposure do not change between transits),
    so it is evaluated once per shape and each trial mid-time is a linear
    interpolation (``np.interp``) instead of a batman call.  Outside the
    table the flux is exactly 1.

    Returns
    -------
    u, flux : ndarray
        Days from mid-transit, and the relative flux there (1 at both ends).
    """
    import batman

    t14, tau = shape.durations()
    step = max(tau / TABLE_STEPS_PER_INGRESS, (t14 + 2 * shape.exposure_time) / TABLE_MAX_POINTS)
    half = 0.6 * t14 + shape.exposure_time + 4 * step
    p = shape.batman_params(0.0)
    for _ in range(8):     # widen until the table ends out of transit (eccentric or grazing shapes)
        u = np.arange(-half, half + step / 2, step)
        flux = batman.TransitModel(p, u, **_supersampling(shape)).light_curve(p)
        if flux[0] == 1.0 and flux[-1] == 1.0:
            break
        half *= 1.5
    u.setflags(write=False)
    flux.setflags(write=False)
    return u, flux


class WindowModel:
    """A window's transit model, built once and re-evaluated for trial mid-times.

    Parameters
    ----------
    time, flux, flux_err : ndarray
    shape : TransitShape
    baseline_order : int
        Degree of the multiplicative polynomial baseline (profiled out).
    tabulated : bool
        Interpolate the shape's tabulated batman model
        (:func:`tabulated_transit`, the fast default for a fixed shape)
        instead of calling batman for each trial; ``False`` when the shape
        changes between calls (shape fits change ``params``).
    """

    #: White noise: the normal equations are products with fixed matrices (GPWindowModel: False)
    _white = True

    def __init__(self, time, flux, flux_err, shape: TransitShape, baseline_order: int = 1, tabulated: bool = True):
        import batman

        self.time = np.asarray(time, float)
        self.flux = np.asarray(flux, float)
        self.weight = 1.0 / np.asarray(flux_err, float)
        self.shape = shape
        self.centre = float(self.time.sum()) / max(self.time.size, 1)
        self.relative = self.time - self.centre
        self.table = tabulated_transit(shape) if tabulated else None
        # batman models the time relative to t0 internally; pass times relative to the window centre
        self.params = None if tabulated else shape.batman_params(self.centre)
        self.model = None if tabulated else batman.TransitModel(self.params, self.time - self.centre,
                                                                **_supersampling(shape))
        x = self.relative / max(float(self.time.max() - self.time.min()), 1e-9)
        self.basis = x[:, None] ** np.arange(baseline_order + 1)     # columns 1, x, x², ...
        flux_w = self.flux * self.weight
        self.yy = float(flux_w @ flux_w)
        self.evaluations = 0
        self._last = None
        # White noise: AᵀK⁻¹A = Σ m² w² bᵢbⱼ and AᵀK⁻¹y = Σ m w² f bᵢ are two products with fixed
        # matrices, for one trial model or a stack of them (the search's grid in one go)
        w2 = self._w2 = self.weight ** 2
        k = self.basis.shape[1]
        self._pairs = ((w2[:, None] * self.basis)[:, :, None] * self.basis[:, None, :]).reshape(-1, k * k)
        self._cross = (w2 * self.flux)[:, None] * self.basis

    def light_curve(self, t0: float) -> np.ndarray:
        """The transit model (no baseline) for mid-time ``t0`` (BJD_TDB); the last one is kept."""
        if self.table is not None:
            if self._last is not None and self._last[0] == t0:
                return self._last[1]
            self.evaluations += 1
            m = np.interp(self.relative - (t0 - self.centre), *self.table, left=1.0, right=1.0)
            self._last = (t0, m)
            return m
        p = self.params
        key = (t0, p.rp, p.a, p.inc, p.ecc, p.w, *p.u)    # fit_shape changes the shape between calls
        if self._last is not None and self._last[0] == key:
            return self._last[1]
        p.t0 = t0 - self.centre
        self.evaluations += 1
        m = self.model.light_curve(p)
        self._last = (key, m)
        return m

    def metric(self, x: np.ndarray) -> np.ndarray:
        """K⁻¹ x for the noise covariance K (here diagonal: the flux errors squared)."""
        w2 = self._w2
        return x * (w2[:, None] if np.ndim(x) == 2 else w2)

    def _normal(self, m: np.ndarray):
        """Normal equations AᵀK⁻¹A, AᵀK⁻¹y of the baseline for the transit model ``m``."""
        k = self._cross.shape[1]
        return ((m * m) @ self._pairs).reshape(k, k), m @ self._cross

    def _solve(self, m: np.ndarray) -> np.ndarray:
        """Baseline coefficients for the transit model ``m``."""
        normal, rhs = self._normal(m)
        if normal.shape == (2, 2):  # the usual linear baseline: Cramer's rule, no LAPACK call
            det = normal[0, 0] * normal[1, 1] - normal[0, 1] * normal[1, 0]
            return np.array([normal[1, 1] * rhs[0] - normal[0, 1] * rhs[1],
                             normal[0, 0] * rhs[1] - normal[1, 0] * rhs[0]]) / det
        return np.linalg.solve(normal, rhs)

    def chi2_many(self, t0s) -> np.ndarray:
        """:meth:`chi2` for several trial mid-times (one interpolation and two products for all of them)."""
        t0s = np.asarray(t0s, float)
        if self.table is None or not self._white:
            return np.array([self.chi2(t) for t in t0s])
        shifted = self.relative[None, :] - (t0s - self.centre)[:, None]
        m = np.interp(shifted.ravel(), *self.table, left=1.0, right=1.0).reshape(shifted.shape)
        self.evaluations += t0s.size
        return self.yy - _quadratic_forms((m * m) @ self._pairs, m @ self._cross)

    def chi2(self, t0: float) -> float:
        """Profile χ² = yᵀK⁻¹y − (AᵀK⁻¹y)ᵀ(AᵀK⁻¹A)⁻¹(AᵀK⁻¹y): the baseline solved by least squares."""
        normal, rhs = self._normal(self.light_curve(t0))
        if rhs.size == 2:     # the usual linear baseline, in Python floats: the refinement's hot path
            (a, b), (_, d) = normal.tolist()
            r0, r1 = rhs.tolist()
            return self.yy - (d * r0 ** 2 - 2 * b * r0 * r1 + a * r1 ** 2) / (a * d - b * b)
        return self.yy - float(_quadratic_forms(normal.reshape(1, -1), rhs.reshape(1, -1))[0])

    def profile_chi2(self, t0: float) -> tuple[float, np.ndarray]:
        """White-noise χ² with the baseline solved by weighted linear least squares; and the model."""
        m = self.light_curve(t0)
        model = (m[:, None] * self.basis) @ self._solve(m)
        r = (self.flux - model) * self.weight
        return float(r @ r), model


def _quadratic_forms(normal: np.ndarray, rhs: np.ndarray) -> np.ndarray:
    """rᵀN⁻¹r for a stack of k×k normal matrices (flattened, [G, k²]) and right-hand sides [G, k]."""
    k = rhs.shape[1]
    if k == 1:
        return rhs[:, 0] ** 2 / normal[:, 0]
    if k == 2:   # the usual linear baseline: the closed form, no LAPACK call (the hot path)
        a, b, d = normal[:, 0], normal[:, 1], normal[:, 3]
        r0, r1 = rhs[:, 0], rhs[:, 1]
        return (d * r0 ** 2 - 2 * b * r0 * r1 + a * r1 ** 2) / (a * d - b * b)
    return np.einsum("gi,gi->g", rhs, np.linalg.solve(normal.reshape(-1, k, k), rhs[:, :, None])[:, :, 0])


@dataclass(frozen=True)
class MidTime:
    """One fitted mid-time (days), its uncertainty and the checks that decide whether it stands.

    ``depth`` is the fitted depth in units of the shape's depth (1 = as
    expected) and ``depth_error`` its uncertainty; ``at_bound`` says the
    search ended at its bound; ``error_source`` says which noise model gave
    the uncertainty (``flux_err``, ``flux_err x ratio`` or ``gp``) and
    ``noise_ratio`` the out-of-transit scatter over the given errors.
    ``predicted_depth_snr`` is the depth S/N at the predicted time, kept
    when the fit found no transit (a brightening there means magnitudes).
    """

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
    depth: float = 1.0
    depth_error: float = 0.0
    at_bound: bool = False
    error_source: str = "flux_err"
    noise_ratio: float = 1.0
    residuals: np.ndarray | None = field(default=None, repr=False, compare=False)
    predicted_depth_snr: float | None = None

    @property
    def depth_snr(self) -> float:
        """Fitted depth over its uncertainty."""
        return self.depth / self.depth_error if self.depth_error > 0 else 0.0


def beta_factor(residuals: np.ndarray, sigma: np.ndarray, bin_sizes) -> float:
    """Time-averaging β (Pont et al. 2006; Winn et al. 2008): ≥ 1.

    For each bin size N the RMS of the binned residuals is compared with the
    white-noise expectation σ₁ N^{−1/2} √(M/(M−1)); β is the median over the
    bin sizes, never below 1.
    """
    r = np.asarray(residuals, float)
    r = r - r.mean()
    s1 = float(np.sqrt(r @ r / r.size))
    total = np.cumsum(r)      # bin sums as differences of the running sum: no reshape per bin size
    betas = []
    for n in bin_sizes:
        n = int(n)
        m = r.size // n
        if n < 2 or m < 3:
            continue
        ends = total[n - 1:m * n:n]
        binned = np.empty(m)
        binned[0] = ends[0]
        np.subtract(ends[1:], ends[:-1], out=binned[1:])
        binned /= n
        mean = float(binned.sum()) / m
        rms = np.sqrt(max(float(binned @ binned) / m - mean * mean, 0.0))
        expected = s1 / np.sqrt(n) * np.sqrt(m / (m - 1))
        betas.append(rms / expected)
    if not betas:
        return 1.0
    betas.sort()
    mid = len(betas) // 2
    median = betas[mid] if len(betas) % 2 else 0.5 * (betas[mid - 1] + betas[mid])
    return float(max(1.0, median))


def _curvature_and_depth(model: WindowModel, t0: float, h: float):
    """Mid-time σ from the Fisher information (baseline profiled), the depth scale ± σ, the residuals.

    Fisher matrix F = JᵀK⁻¹J with J = [∂model/∂t0, baseline columns]: the
    mid-time variance is (F⁻¹)₀₀, i.e. the baseline's correlation with t0
    profiled out.  The depth check fits flux = baseline + a (m − 1) baseline
    by generalised least squares (a = 1: the shape's depth).
    """
    m0 = model.light_curve(t0)
    basis = model.basis
    k = basis.shape[1]
    base = basis @ model._solve(m0)
    slope = (model.light_curve(t0 + h) - model.light_curve(t0 - h)) / (2 * h) * base
    x = np.empty((m0.size, 2 * k + 3))
    x[:, 0] = slope
    np.multiply(m0[:, None], basis, out=x[:, 1:k + 1])
    x[:, k + 1:2 * k + 1] = basis
    x[:, 2 * k + 1] = (m0 - 1) * base
    x[:, 2 * k + 2] = model.flux
    g = x.T @ model.metric(x)     # one K⁻¹ for every column: timing, depth and data
    # Both systems in one solve: a block-diagonal matrix, the timing block (rows 1..k) and the
    # depth block (rows k+1..2k+1), with the right-hand sides of each kept to its own block
    n = 2 * k + 1
    block = np.zeros((n, n))
    block[:k, :k] = g[1:k + 1, 1:k + 1]
    block[k:, k:] = g[k + 1:2 * k + 2, k + 1:2 * k + 2]
    rhs = np.zeros((n, 3))
    rhs[:k, 0] = g[1:k + 1, 0]
    rhs[k:, 1] = g[k + 1:2 * k + 2, -1]
    rhs[-1, 2] = 1.0
    try:
        sol = np.linalg.solve(block, rhs)
        variance = 1.0 / float(g[0, 0] - g[0, 1:k + 1] @ sol[:k, 0])
        depth, depth_var = float(sol[-1, 1]), float(sol[-1, 2])
    except np.linalg.LinAlgError:
        variance, depth, depth_var = np.nan, 0.0, np.inf
    white = float(np.sqrt(variance)) if variance > 0 else np.nan
    return white, depth, float(np.sqrt(max(depth_var, 0.0))), model.flux - m0 * base


def fit_mid_time(window, shape: TransitShape, search: float | None = None, baseline_order: int = 1,
                 correlated_noise: bool = False, red=None, error_scale: float = 1.0) -> MidTime:
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
        Inflate the uncertainty by the β factor (kept for comparison: β is
        always reported, and understates correlated noise; use ``red``).
    red : ttvkit.lightcurves.noise.RedNoise, optional
        A fitted correlated-noise model: the likelihood is a Gaussian process.
    error_scale : float
        Factor applied to the window's flux errors (the measured white level).

    Returns
    -------
    MidTime
        Check ``at_bound`` and ``depth_snr`` before trusting it.
    """
    err = np.asarray(window.flux_err, float) * error_scale
    if red is None:
        model = WindowModel(window.time, window.flux, err, shape, baseline_order)
        source = "flux_err" if error_scale == 1.0 else "flux_err x ratio"
    else:
        model = red.window_model(window.time, window.flux, err, shape, baseline_order)
        source = "gp"
    t14, tau = shape.durations()
    half = search if search is not None else 0.25 * t14
    # Stop when the mid-time is known to 1/50 of its expected precision
    # (the Carter et al. 2008 bound for this window), far below its error.
    cadence = float(window.time[-1] - window.time[0]) / max(window.time.size - 1, 1)
    expected = float(np.mean(err)) / max(shape.radius_ratio ** 2, 1e-6) * np.sqrt(tau * cadence / 2)
    tol = max(min(expected / 50, tau * 1e-3), 1e-8)
    offset, at_bound = search_mid_time(model.chi2, window.predicted, half, tol, model.chi2_many)
    t_best = float(window.predicted + offset)
    chi2 = model.chi2(t_best)     # before the derivative: the kept model is t_best's
    white, depth, depth_error, resid = _curvature_and_depth(model, t_best, max(tau / 10, 1e-6))
    n_tau = max(2, int(round(tau / cadence)))
    sizes = sorted({int(round(max(2, n_tau / 2) * 4 ** (i / 4))) for i in range(5)})
    beta = beta_factor(resid / err, np.ones(window.time.size), sizes)
    sigma = white * (beta if correlated_noise else 1.0)
    at_prediction = None
    if at_bound or not depth >= 5 * depth_error:   # no transit found: what is at the predicted time?
        _, d, e, _ = _curvature_and_depth(model, window.predicted, max(tau / 10, 1e-6))
        at_prediction = d / e if e > 0 else 0.0
    return MidTime(window.epoch, t_best, sigma, white, beta, chi2, int(window.time.size), model.evaluations,
                   window.coverage, window.source, depth, depth_error, bool(at_bound), source, error_scale,
                   resid, at_prediction)
