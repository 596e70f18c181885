"""Times of minimum of eclipsing binaries: Kwee & van Woerden (1956) and a symmetric-model fit.

Eclipse timers time minima with methods made for any symmetric eclipse,
not with a planet-transit model.  Two are given here, each returning what a
:class:`~ttvkit.timing.table.TimingTable` row needs (time, uncertainty,
kind):

* :func:`kwee_van_woerden` — the method of Kwee & van Woerden (1956,
  Bull. Astron. Inst. Netherlands 12, 327, as we recall it; the issue cites
  it as AN 74, 327; the paper was not re-read here): the light curve is interpolated to equal time steps Δ and
  reflected about a trial time T; the sum of squared differences of the
  reflected pairs, S(T), is evaluated at three trial times T−Δ, T, T+Δ, a
  parabola S = A T² + B T + C is put through them, the minimum is
  T₀ = −B / 2A and its classical uncertainty is

      σ² = (4AC − B²) / (4A² (Z − 1)),

  with Z the number of independent pairs, N/4 for N observed points used
  (the paper's choice for interpolated data; recalled from memory).  That
  formula is known to misjudge the error when the points are not many or the
  noise is not white; here the reported uncertainty is instead the scatter of
  the same estimator over a residual bootstrap (the symmetric fit's residuals
  reshuffled onto its model, Efron 1979), and the classical value is kept in
  ``formal_uncertainty`` for comparison.
* :func:`symmetric_fit` — least squares with a profile symmetric about t₀,
  f(t) = Σⱼ cⱼ uʲ with u = ((t − t₀)/w)², j = 0 … degree.  The cⱼ enter
  linearly and are solved at each trial t₀ (profiled out); t₀ minimises the
  profile χ², and σ² = 2 / (d²χ²/dt₀²).  Without flux errors the noise is
  estimated from the residuals.

Both assume a symmetric minimum (circular orbit, no spots moving across the
eclipse); an asymmetric one biases either method.  Times are in the light
curve's own time scale (BJD_TDB days inside ttvkit).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.optimize import minimize_scalar

from ttvkit.errors import InputError, located
from ttvkit.timing.ephemeris import Ephemeris
from ttvkit.timing.table import TimingTable

__all__ = ["EclipseMinimum", "kwee_van_woerden", "symmetric_fit", "minima_table"]

_KINDS = ("primary", "secondary")


@dataclass(frozen=True)
class EclipseMinimum:
    """One timed minimum.

    Attributes
    ----------
    time : float
        Time of minimum (days, the light curve's scale; BJD_TDB in ttvkit).
    uncertainty : float
        1σ uncertainty (days) — the one to use.
    kind : str
        ``"primary"`` or ``"secondary"``.
    method : str
        ``"kwee-van-woerden"`` or ``"symmetric fit (degree n)"``.
    n_points : int
        Points used.
    formal_uncertainty : float
        KvW's classical σ (the symmetric fit: its curvature σ, same as
        ``uncertainty``).
    """

    time: float
    uncertainty: float
    kind: str
    method: str
    n_points: int
    formal_uncertainty: float


def _clean(time, flux, flux_err=None, kind="primary", magnitudes=False, source=None):
    if kind not in _KINDS:
        raise InputError(f"kind {kind!r}: an eclipse minimum is 'primary' or 'secondary'")
    t = np.asarray(time, float).ravel()
    f = np.asarray(flux, float).ravel()
    if t.size != f.size:
        raise InputError(located(f"time has {t.size} values, flux {f.size}", source, None, "flux"))
    for name, arr in (("time", t), ("flux", f)):
        bad = np.flatnonzero(~np.isfinite(arr))
        if bad.size:
            raise InputError(located("not a finite number; drop or fix the row", source, int(bad[0]) + 1, name))
    err = None
    if flux_err is not None:
        err = np.broadcast_to(np.asarray(flux_err, float), t.shape).copy()
        bad = np.flatnonzero(~(err > 0))
        if bad.size:
            raise InputError(located("flux uncertainty must be positive", source, int(bad[0]) + 1, "flux_err"))
    if t.size < 12:
        raise InputError(located(f"only {t.size} points around the minimum; at least 12 are needed to "
                                 "time it", source))
    order = np.argsort(t, kind="stable")
    t, f = t[order], f[order]
    err = err[order] if err is not None else None
    if np.any(np.diff(t) <= 0):
        raise InputError(located("repeated time stamps; combine or drop duplicates", source, None, "time"))
    if magnitudes:
        f = -f
    return t, f, err


# ----------------------------------------------------------------- Kwee & van Woerden
def _kvw_sum(t, f, trial, step, k):
    offsets = step * np.arange(1, k + 1)
    left = np.interp(trial[:, None] - offsets, t, f)
    right = np.interp(trial[:, None] + offsets, t, f)
    return ((right - left) ** 2).sum(axis=1)


def _kvw_estimate(t, f, step):
    """T₀ and KvW's classical σ for one data set (sorted, flux with the minimum down)."""
    lo, hi = t[0], t[-1]
    span = hi - lo
    centre = np.linspace(lo + span / 4, hi - span / 4, 101)
    k = max(int(np.floor(span / 4 / step)), 3)
    guess = centre[np.argmin(_kvw_sum(t, f, centre, step, k))]
    for _ in range(20):
        k = int(np.floor((min(guess - lo, hi - guess) - step) / step))
        if k < 3:
            raise InputError("the minimum lies too close to the edge of the data to reflect the branches")
        s1, s2, s3 = _kvw_sum(t, f, guess + step * np.array([-1.0, 0.0, 1.0]), step, k)
        curvature = s1 - 2 * s2 + s3
        if curvature <= 0:
            raise InputError("no minimum of the reflected-branch sum: is this a symmetric eclipse?")
        shift = step * (s1 - s3) / (2 * curvature)
        if abs(shift) <= step:
            break
        guess = guess + np.clip(shift, -step, step)
    a = curvature / (2 * step ** 2)
    b = (s3 - s1) / (2 * step)
    c = s2
    n_used = int(np.count_nonzero(np.abs(t - guess) <= k * step))
    z = n_used / 4
    var = (4 * a * c - b ** 2) / (4 * a ** 2 * (z - 1)) if z > 1 else np.inf
    return guess + shift, float(np.sqrt(max(var, 0.0))), n_used


def kwee_van_woerden(time, flux, kind: str = "primary", magnitudes: bool = False, n_bootstrap: int = 200,
                     seed=None, source=None) -> EclipseMinimum:
    """Time of minimum by Kwee & van Woerden (1956), with a bootstrap uncertainty.

    Parameters
    ----------
    time, flux : array_like
        Points around one minimum (days; relative flux, or magnitudes with
        ``magnitudes=True``), covering both branches.
    kind : {"primary", "secondary"}
    magnitudes : bool
        ``flux`` holds magnitudes (the minimum of light is their maximum).
    n_bootstrap : int
        Residual-bootstrap replicates for the uncertainty (0: report KvW's
        classical σ).
    seed : int or numpy Generator, optional
    source : str, optional
        File name for error messages.

    Returns
    -------
    EclipseMinimum
    """
    t, f, _ = _clean(time, flux, None, kind, magnitudes, source)
    step = float(np.median(np.diff(t)))
    t0, formal, n_used = _kvw_estimate(t, f, step)
    sigma = formal
    if n_bootstrap:
        degree, _ = _choose_degree(t, f, np.ones_like(f), False)
        model, resid = _symmetric_model(t, f, None, degree, t0)
        resid = resid * np.sqrt(t.size / (t.size - degree - 2))  # fitted residuals are too small by the dof
        rng = np.random.default_rng(seed)
        draws = [_kvw_estimate(t, model + rng.permutation(resid), step)[0] for _ in range(n_bootstrap)]
        sigma = float(np.std(draws, ddof=1))
    return EclipseMinimum(float(t0), sigma, kind, "kwee-van-woerden", n_used, formal)


# ----------------------------------------------------------------- symmetric model
def _design(t, t0, width, degree):
    u = ((t - t0) / width) ** 2
    return u[:, None] ** np.arange(degree + 1)


def _profile_chi2(t, f, w, t0, width, degree):
    design = _design(t, t0, width, degree) * w[:, None]
    coef, *_ = np.linalg.lstsq(design, f * w, rcond=None)
    r = f * w - design @ coef
    return float(r @ r), coef


def _symmetric_model(t, f, err, degree, t0):
    """The symmetric model at a fixed t₀ and its residuals."""
    width = (t[-1] - t[0]) / 2
    w = np.ones_like(f) if err is None else 1 / err
    _, coef = _profile_chi2(t, f, w, t0, width, degree)
    model = _design(t, t0, width, degree) @ coef
    return model, f - model


def _fit_t0(t, f, w, degree):
    """Best t₀ of one degree: (t₀, χ² or RSS at it)."""
    width = (t[-1] - t[0]) / 2
    start = t[np.argmin(np.convolve(f, np.ones(5) / 5, mode="same")[2:-2]) + 2]
    lo = max(start - width / 2, t[0] + width / 4)
    hi = min(start + width / 2, t[-1] - width / 4)
    if not lo < hi:
        lo, hi = t[0] + width / 4, t[-1] - width / 4
    res = minimize_scalar(lambda x: _profile_chi2(t, f, w, x, width, degree)[0], bounds=(lo, hi),
                          method="bounded", options={"xatol": 1e-10 * width})
    return float(res.x), float(res.fun)


def _choose_degree(t, f, w, known_errors):
    """Degree 1 … 6 by the Bayesian information criterion (Schwarz 1978)."""
    best = None
    for degree in range(1, 7):
        t0, chi2 = _fit_t0(t, f, w, degree)
        k = degree + 2
        stat = chi2 + k * np.log(t.size) if known_errors else t.size * np.log(chi2 / t.size) + k * np.log(t.size)
        if best is None or stat < best[0]:
            best = (stat, degree, t0)
    return best[1], best[2]


def symmetric_fit(time, flux, flux_err=None, kind: str = "primary", degree: int | None = None,
                  magnitudes: bool = False, source=None) -> EclipseMinimum:
    """Time of minimum by least squares with a profile symmetric about t₀.

    Parameters
    ----------
    time, flux : array_like
        Points around one minimum (days; relative flux or magnitudes).
    flux_err : array_like, optional
        1σ flux errors; without them the noise is estimated from the residuals.
    kind : {"primary", "secondary"}
    degree : int, optional
        Highest power of u = ((t − t₀)/w)², 1 … 6; by default chosen by the
        Bayesian information criterion (a profile too stiff for the eclipse
        leaves systematic residuals and too small an uncertainty).
    magnitudes : bool
    source : str, optional

    Returns
    -------
    EclipseMinimum
    """
    t, f, err = _clean(time, flux, flux_err, kind, magnitudes, source)
    w = np.ones_like(f) if err is None else 1 / err
    if degree is None:
        degree, t0 = _choose_degree(t, f, w, err is not None)
    elif not 1 <= degree <= 6:
        raise InputError(f"degree = {degree}: use 1 … 6")
    else:
        t0, _ = _fit_t0(t, f, w, degree)
    width = (t[-1] - t[0]) / 2
    h = 1e-3 * width
    c = [_profile_chi2(t, f, w, t0 + d, width, degree)[0] for d in (-h, 0.0, h)]
    second = (c[0] - 2 * c[1] + c[2]) / h ** 2
    if not second > 0:
        raise InputError(located("the symmetric fit found no minimum; widen the window around the eclipse",
                                 source))
    scale = 1.0 if err is not None else c[1] / (t.size - degree - 2)
    sigma = float(np.sqrt(2 * scale / second))
    return EclipseMinimum(t0, sigma, kind, f"symmetric fit (degree {degree})", int(t.size), sigma)


def minima_table(minima, ephemeris: Ephemeris | None = None, epoch=None, source: str = "light curve") -> TimingTable:
    """A TimingTable from timed minima (kinds kept; epochs given or assigned from ``ephemeris``)."""
    minima = list(minima)
    if not minima:
        raise InputError("no minima to tabulate")
    return TimingTable([m.time for m in minima], [m.uncertainty for m in minima], epoch=epoch,
                       kind=[m.kind for m in minima], source=source, ephemeris=ephemeris,
                       extra={"method": [m.method for m in minima], "n_points": [m.n_points for m in minima]})
