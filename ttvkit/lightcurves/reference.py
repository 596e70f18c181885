"""The slow reference for mid-time fits: emcee over the mid-time and the baseline (tests only)."""

from __future__ import annotations

import numpy as np

from ttvkit.lightcurves.midtime import TransitShape, WindowModel, fit_mid_time

__all__ = ["mid_time_mcmc"]


def mid_time_mcmc(window, shape: TransitShape, n_steps: int = 3000, n_walkers: int = 16, seed: int = 0,
                  baseline_order: int = 1, red=None) -> tuple[float, float]:
    """Slow reference: emcee over the mid-time and the baseline coefficients.

    Returns the posterior median and standard deviation of the mid-time
    (days), without β inflation.  Uniform priors.  With ``red`` (a
    :class:`~ttvkit.lightcurves.noise.RedNoise`) the likelihood is that GP's.
    The model is batman called at every step, not the fast path's table.
    """
    import emcee

    if red is None:
        model = WindowModel(window.time, window.flux, window.flux_err, shape, baseline_order, tabulated=False)
    else:
        model = red.window_model(window.time, window.flux, window.flux_err, shape, baseline_order, tabulated=False)
    fast = fit_mid_time(window, shape, baseline_order=baseline_order, red=red)
    k = baseline_order + 1
    coef0 = model._solve(model.light_curve(fast.time))

    def log_prob(theta):
        m = model.light_curve(theta[0])
        r = model.flux - (m[:, None] * model.basis) @ theta[1:]
        return -0.5 * float(r @ model.metric(r))

    rng = np.random.default_rng(seed)
    start = np.concatenate([[fast.time], coef0])
    scale = np.concatenate([[fast.white_uncertainty], np.full(k, 1e-5)])
    p0 = start + 0.1 * scale * rng.standard_normal((n_walkers, k + 1))
    sampler = emcee.EnsembleSampler(n_walkers, k + 1, log_prob)
    sampler.random_state = np.random.RandomState(seed).get_state()
    sampler.run_mcmc(p0, n_steps, progress=False)
    chain = sampler.get_chain(discard=n_steps // 3, flat=True)[:, 0]
    return float(np.median(chain)), float(np.std(chain))
