"""Grading a physical check: the fit's posterior and the star's uncertainties, propagated by Monte Carlo.

A check draws the fitted quantity from the fit's posterior (its samples, or
the Gaussian approximation at the optimum when not sampled) and the system
from its stated uncertainties (:func:`ttvkit.physics.uncertain.system_draws`),
computes the physical quantity per draw, and reports the probability ``p``
that the physics allows it.  The tension is the two-sided Gaussian
equivalent, σ = Φ⁻¹(1 − p/2): p = 0.0027 is 3σ.  A check of something
**impossible** (energy beyond the star's output, a companion RVs would have
shown, a Q'_* below the physical floor) fails at ≥ 3σ; a check of something
**unusual** (a Q'_* outside what populations suggest) is "in tension" and
never excludes.
"""

from __future__ import annotations

import numpy as np
from scipy.stats import norm

__all__ = ["posterior_draws", "tension_sigma", "probability_below", "FAIL_SIGMA", "TENSION_SIGMA", "DRAWS"]

#: Tension (σ) at which an impossible-type check fails, and an unusual-type check is in tension
#: (3σ: common practice, no source).
FAIL_SIGMA = 3.0
TENSION_SIGMA = 3.0
#: Monte Carlo draws per check (the tail probability at 3σ, 0.0027, is then resolved to about one
#: draw in 400: coarse but enough for a screen; common practice, no source).
DRAWS = 400


def posterior_draws(fit, name: str, count: int = DRAWS, seed: int = 0) -> np.ndarray:
    """``count`` posterior draws of a parameter or derived quantity, in its reported unit."""
    theta = fit.draws(seed=seed)
    idx = np.linspace(0, theta.shape[0] - 1, min(count, theta.shape[0])).astype(int)
    theta = theta[idx]
    params = fit.hypothesis.parameters()
    names = [p.name for p in params]
    if name in names:
        i = names.index(name)
        return np.asarray(theta[:, i] * (params[i].to_display or 1.0), float)
    derived = fit.hypothesis.derived(fit.model_theta(theta), fit.data)
    return np.ravel(np.asarray(derived[name].values, float))


def tension_sigma(p_allowed: float) -> float:
    """Two-sided Gaussian-equivalent tension of a probability that the physics allows the value."""
    p = float(np.clip(p_allowed, 1e-15, 1.0))
    return float(max(0.0, norm.isf(p / 2)))


def probability_below(values, limit: float, log: bool = False) -> float:
    """P(value ≤ limit) from Monte Carlo draws.

    The fraction of draws, except in the far tails: when fewer than 5 draws
    fall on one side the fraction cannot resolve the tail (it would read 0
    and overstate the tension), so a normal distribution fitted to the draws
    (to their logarithm when ``log``, for positive quantities spread over
    decades) gives the probability instead.
    """
    v = np.asarray(values, float)
    v = v[np.isfinite(v)]
    if v.size == 0:
        return float("nan")
    below = int(np.sum(v <= limit))
    if 5 <= below <= v.size - 5:
        return below / v.size
    x, edge = (np.log(v[v > 0]), np.log(limit)) if log and limit > 0 else (v, limit)
    spread = float(np.std(x))
    if x.size < 2 or spread == 0:
        return below / v.size
    return float(norm.cdf((edge - float(np.mean(x))) / spread))
