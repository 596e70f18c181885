"""Does an activity indicator vary with the period modulation?  A lagged correlation with red-noise surrogates.

If a magnetic cycle of one star drives the O−C modulation, the star's
activity should vary with it.  Applegate (1992, ApJ 385, 621) ties the
luminosity change of the active star to the *change of the orbital period*:
the energy that spins the outer shell up and down, and so changes the
quadrupole moment and the period, is drawn from (and shows in) the star's
luminosity over the same cycle.  The indicator (brightness, spot coverage,
S-index, X-ray luminosity) is therefore compared by default with the
period change ΔP/P(t) = d(O−C)/dt, not with the O−C itself (``target="oc"``
does that; for a sinusoid the two differ by a quarter-cycle lag).  The sign
and the delay of the response are not fixed by the mechanism, so both signs
and a range of lags are allowed, and the search over lags is paid for in
the significance.  For a nearly periodic modulation a lag is defined only
modulo half a cycle, with the sign of r flipped: keep ``max_lag`` below a
quarter of the modulation period to read the lag and sign physically.

Method:

1. the O−C series is smoothed by a Matérn-3/2 Gaussian process
   (:mod:`ttvkit.inference.gaussian_process`); its posterior mean, or that
   mean's time derivative, is the *predictor*, evaluated at each indicator
   time minus a lag (only where that falls inside the O−C data);
2. the statistic is the largest absolute Pearson r between the indicator and the
   predictor over the lags;
3. its significance comes from surrogates: the indicator's own red noise is
   modelled by a Gaussian process fitted to it alone (Matérn-3/2 or
   exponential, whichever is more likely), surrogate indicator
   series are drawn from it (with the indicator's white errors) at the
   indicator's times, independent of the O−C, and the same statistic is
   computed for each; p = (1 + #{surrogate ≥ observed}) / (1 + n).  A plain
   Pearson p-value assumes independent points and is far too small for two
   red series (the spurious-correlation problem of autocorrelated data,
   e.g. Yule 1926, J. R. Stat. Soc. 89, 1; from memory).

The O−C smoothing is held fixed; under the null the indicator is
independent of it, so conditioning on the O−C is legitimate and the O−C's
own red noise is accounted for by the spread of the surrogate correlations.
Because the indicator's process is fitted to data that contain any real
signal, the surrogates are, if anything, too red: the test errs towards
missing a link rather than inventing one.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import astropy.units as u
import numpy as np

from ttvkit.errors import InputError
from ttvkit.inference.gaussian_process import MaternProcess, fit_matern

__all__ = ["ActivityLink", "activity_link"]

_TARGETS = {"period change": True, "oc": False}


@dataclass(frozen=True)
class ActivityLink:
    """The result of :func:`activity_link`.

    Attributes
    ----------
    target : str
        ``"period change"`` (ΔP/P = d(O−C)/dt) or ``"oc"``.
    statistic : float
        Largest absolute r over the lags.
    correlation : float
        Signed r at that lag.
    lag : float
        Days by which the indicator follows the target at the best lag
        (negative: it leads).
    p_value : float
        Surrogate p-value of ``statistic`` (includes the search over lags).
    n_surrogates : int
    lags, correlations : ndarray
        r at every lag tried.
    indicator_process, target_process : MaternProcess
        The fitted processes (indicator: the surrogates' model; target: the
        O−C smoothing).
    curve_time, oc_curve : ndarray
        The smoothed O−C (days) on a grid over the O−C span — for figures.
    overlay : ndarray
        The target at ``curve_time − lag`` scaled onto the indicator's units
        by least squares (a + b · target) — for figures.
    """

    target: str
    statistic: float
    correlation: float
    lag: float
    p_value: float
    n_surrogates: int
    lags: np.ndarray = field(repr=False)
    correlations: np.ndarray = field(repr=False)
    indicator_process: MaternProcess = field(repr=False)
    target_process: MaternProcess = field(repr=False)
    curve_time: np.ndarray = field(repr=False, default=None)
    oc_curve: np.ndarray = field(repr=False, default=None)
    overlay: np.ndarray = field(repr=False, default=None)

    def significant(self, alpha: float = 0.01) -> bool:
        """Whether p < ``alpha``."""
        return self.p_value < alpha

    def to_dict(self) -> dict:
        """Plain-JSON summary (no arrays): target, statistic, r, lag (days), p-value, surrogate model."""
        noise = self.indicator_process
        return {"target": self.target, "statistic": self.statistic, "correlation": self.correlation,
                "lag_days": self.lag, "p_value": self.p_value, "n_surrogates": self.n_surrogates,
                "lags_tried_days": [float(self.lags.min()), float(self.lags.max()), int(self.lags.size)],
                "surrogate_process": {"kernel": noise.kernel, "amplitude": noise.amplitude,
                                      "length_days": noise.length}}

    def predictor(self, at) -> np.ndarray:
        """The target curve (ΔP/P, or O−C in days) at times ``at`` — for figures."""
        return self.target_process.predict(at, derivative=self.target == "period change")


def _days(value, name):
    q = u.Quantity(value, u.day) if isinstance(value, u.Quantity) else np.asarray(value, float)
    arr = np.asarray(q.to_value(u.day) if isinstance(q, u.Quantity) else q, float).ravel()
    if not np.all(np.isfinite(arr)):
        raise InputError(f"{name}: row {int(np.flatnonzero(~np.isfinite(arr))[0]) + 1} is not a finite number")
    return arr


def _plain(value, name, n):
    arr = np.asarray(value.value if isinstance(value, u.Quantity) else value, float).ravel()
    arr = np.broadcast_to(arr, (n,)).astype(float) if arr.size in (1, n) else arr
    if arr.size != n:
        raise InputError(f"{name} has {arr.size} values for {n} times")
    if not np.all(np.isfinite(arr)):
        raise InputError(f"{name}: row {int(np.flatnonzero(~np.isfinite(arr))[0]) + 1} is not a finite number")
    return arr


def _masked_correlations(series, predictors, mask):
    """Pearson r of each series row with each predictor row over the mask: shape (n_series, n_lags)."""
    w = mask.astype(float)
    n = w.sum(axis=1)
    xw = predictors * w
    sx, sxx = xw.sum(axis=1), (xw * predictors).sum(axis=1)
    sy, syy, sxy = series @ w.T, (series ** 2) @ w.T, series @ xw.T
    cov = sxy - sx * sy / n
    var_x = sxx - sx ** 2 / n
    var_y = syy - sy ** 2 / n
    with np.errstate(invalid="ignore", divide="ignore"):
        r = cov / np.sqrt(var_x * var_y)
    return np.where(np.isfinite(r), r, 0.0)


def activity_link(oc_time, oc, oc_error, indicator_time, indicator, indicator_error,
                  target: str = "period change", max_lag=None, n_lags: int = 41, n_surrogates: int = 999,
                  min_overlap: float = 0.5, seed=None) -> ActivityLink:
    """Test whether an activity indicator varies with the O−C modulation.

    Parameters
    ----------
    oc_time, oc, oc_error : array_like or Quantity
        O−C series: times (BJD_TDB days), O−C and its errors (days if plain
        numbers, any time unit as Quantities).
    indicator_time, indicator, indicator_error : array_like or Quantity
        The indicator series, irregularly sampled, with 1σ errors (any unit).
    target : {"period change", "oc"}
        Compare with ΔP/P = d(O−C)/dt (default; Applegate 1992) or with O−C.
    max_lag : Quantity or float, optional
        Largest absolute lag tried (days); default a quarter of the O−C time span.
    n_lags : int
        Lags tried, evenly from −max_lag to +max_lag.
    n_surrogates : int
        Surrogate indicator series (p-values resolve down to 1/(n+1)).
    min_overlap : float
        A lag counts only if at least this fraction of the indicator points
        fall inside the O−C data after shifting.
    seed : int or numpy Generator, optional

    Returns
    -------
    ActivityLink
    """
    if target not in _TARGETS:
        raise InputError(f"target {target!r}: use 'period change' or 'oc'")
    t_oc = _days(oc_time, "oc_time")
    y_oc = _days(oc, "oc")
    e_oc = _days(oc_error, "oc_error") * np.ones_like(t_oc)
    t_ind = _days(indicator_time, "indicator_time")
    y_ind = _plain(indicator, "indicator", t_ind.size)
    e_ind = _plain(indicator_error, "indicator_error", t_ind.size)
    if y_oc.size != t_oc.size:
        raise InputError(f"oc has {y_oc.size} values for {t_oc.size} times")
    if t_ind.size < 10 or t_oc.size < 10:
        raise InputError("the activity link needs at least 10 O−C points and 10 indicator points")
    span = t_oc.max() - t_oc.min()
    max_lag = 0.25 * span if max_lag is None else float(u.Quantity(max_lag, u.day).value)
    lags = np.linspace(-max_lag, max_lag, n_lags) if max_lag > 0 else np.zeros(1)

    smooth = fit_matern(t_oc, y_oc, e_oc)
    shifted = t_ind[None, :] - lags[:, None]
    mask = (shifted >= t_oc.min()) & (shifted <= t_oc.max())
    keep = mask.sum(axis=1) >= max(min_overlap * t_ind.size, 5)
    if not np.any(keep):
        raise InputError("the indicator and the O−C series do not overlap in time at any lag tried")
    lags, shifted, mask = lags[keep], shifted[keep], mask[keep]
    predictors = smooth.predict(shifted, derivative=_TARGETS[target])

    observed = _masked_correlations(y_ind[None, :], predictors, mask)[0]
    best = int(np.argmax(np.abs(observed)))
    noise = fit_matern(t_ind, y_ind, e_ind, kernels=("matern32", "exponential"))
    rng = np.random.default_rng(seed)
    order = np.argsort(t_ind)
    draws = np.empty((n_surrogates, t_ind.size))
    draws[:, order] = noise.draws(n_surrogates, rng)  # the process stores sorted times
    null = np.abs(_masked_correlations(draws, predictors, mask)).max(axis=1)
    p_value = (1 + np.count_nonzero(null >= abs(observed[best]))) / (1 + n_surrogates)
    grid = np.linspace(t_oc.min(), t_oc.max(), 400)
    derivative = _TARGETS[target]
    used = mask[best]
    design = np.column_stack([np.ones(used.sum()), predictors[best][used]])
    coef, *_ = np.linalg.lstsq(design, y_ind[used], rcond=None)
    overlay = coef[0] + coef[1] * smooth.predict(grid - lags[best], derivative=derivative)
    overlay[(grid - lags[best] < t_oc.min()) | (grid - lags[best] > t_oc.max())] = np.nan  # no extrapolation
    return ActivityLink(target, float(abs(observed[best])), float(observed[best]), float(lags[best]),
                        float(p_value), int(n_surrogates), lags, observed, noise, smooth,
                        grid, smooth.predict(grid), overlay)
