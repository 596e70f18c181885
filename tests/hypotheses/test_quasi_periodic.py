"""The quasi-periodic (Gaussian-process) modulation: its likelihood, recovery of a wandering cycle, a null.

External references: scipy's dense multivariate-normal density (the likelihood), celerite2's
SHO covariance (Foreman-Mackey et al. 2017, AJ 154, 220) to draw the simulated cycles.
"""

import numpy as np
import pytest
from scipy.stats import multivariate_normal

from ttvkit import TimingTable
from ttvkit.errors import InputError
from ttvkit.hypotheses import TimingData, get_hypothesis
from ttvkit.inference.fitting import _log_like, fit
from ttvkit.inference.likelihood import Likelihood

PERIOD = 0.13008          # days (an eclipsing binary's)
YEAR = 365.25


def wandering(seed, sigma_s=40.0, rho_yr=8.0, tau_yr=15.0, n=200, span=80000, error_s=3.0):
    """Primary eclipses over ~28 yr whose O−C is a draw of an SHO process (celerite2), 3-s errors."""
    import celerite2
    from celerite2 import terms

    rng = np.random.default_rng(seed)
    epochs = np.sort(rng.choice(np.arange(span), n, replace=False)).astype(float)
    sigma = np.full(n, error_s / 86400)
    t = PERIOD * epochs
    process = celerite2.GaussianProcess(terms.SHOTerm(sigma=sigma_s / 86400, rho=rho_yr * YEAR, tau=tau_yr * YEAR))
    process.compute(t, diag=sigma ** 2)
    np.random.seed(seed)                  # celerite2's sample() draws from numpy's global generator
    oc = process.sample() if sigma_s > 0 else rng.normal(0, sigma)
    return TimingTable(2450000 + t + oc, sigma, epoch=epochs.astype(int), kind="primary", source="simulated")


def test_likelihood_matches_the_dense_multivariate_normal():
    # ln N(r | 0, K + diag(σ² + s²)) computed densely by scipy, K from the SHO kernel's own values;
    # rows deliberately out of time order and with a jitter, so ordering and the diagonal are tested.
    from celerite2 import terms

    rng = np.random.default_rng(4)
    n = 40
    time = rng.permutation(np.sort(rng.uniform(0, 3000, n)))
    sigma = rng.uniform(2, 6, n) / 86400
    data = TimingData(np.arange(n, dtype=float), np.zeros(n), np.zeros(n, bool), time, sigma, 0.0, 1.0,
                      source=np.array(["a"] * n))
    hyp = get_hypothesis("quasi-periodic-modulation")
    theta = np.array([0.0, 1.0, np.log(30 / 86400), np.log(900.0), np.log(2000.0)])
    like = Likelihood(jitter=True)
    resid = rng.normal(0, 30 / 86400, n)
    ours = _log_like(like, data, resid, np.array([np.log(4 / 86400)]), hyp, theta)
    kernel = terms.SHOTerm(sigma=30 / 86400, rho=900.0, tau=2000.0)
    dense = kernel.get_value(np.abs(time[:, None] - time[None, :])) + np.diag(sigma ** 2 + (4 / 86400) ** 2)
    assert ours == pytest.approx(multivariate_normal(np.zeros(n), dense).logpdf(resid), rel=1e-9)
    assert kernel.get_value(np.array([0.0]))[0] == pytest.approx((30 / 86400) ** 2)   # σ² at zero lag
    with pytest.raises(InputError, match="Gaussian likelihood"):
        _log_like(Likelihood(kind="student-t"), data, resid, None, hyp, theta)


@pytest.mark.parametrize("seed", [1, 2])
def test_a_wandering_cycle_is_told_from_a_sinusoid(seed):
    # Truth: ρ = 8 yr, σ = 40 s (A = √2 σ = 56.6 s), τ = 15 yr.  The process is preferred over a
    # strict sinusoid by far more than ΔBIC 10 (measured 5200 and 3400), and its characteristic
    # period is recovered within 3σ of its Laplace error (measured 8.8 ± 0.7 and 8.0 ± 0.5 yr).
    table = wandering(seed)
    gp = fit(table, "quasi-periodic-modulation")
    assert fit(table, "sinusoidal-modulation").bic - gp.bic > 10
    period = gp.estimate("modulation_period_yr")
    assert abs(period.value - 8.0) < 3 * max(period.lower, period.upper)
    assert gp.hypothesis.validity(gp.theta, gp.data) == []


def test_white_noise_does_not_ask_for_a_process():
    # No modulation: the process's three parameters do not pay for themselves (seeded; ΔBIC
    # measured 13.9 against the constant period).
    table = wandering(3, sigma_s=0.0)
    gp = fit(table, "quasi-periodic-modulation")
    assert gp.bic > fit(table, "constant-period").bic


def test_conditional_mean_matches_the_dense_formula_at_unsorted_times():
    # The process's conditional mean K*(K + D)⁻¹ r by dense numpy linear algebra (the textbook GP
    # prediction, e.g. Rasmussen & Williams 2006, eq. 2.23), with the rows out of time order: the
    # figures' residuals and the fit's χ² use it.
    from ttvkit.inference.fitting import process_mean

    table = wandering(5)
    gp = fit(table, "quasi-periodic-modulation")
    data, hyp = gp.data, gp.hypothesis
    rng = np.random.default_rng(1)
    shuffled = rng.permutation(data.n)
    from dataclasses import replace

    data = replace(data, **{f: getattr(data, f)[shuffled] for f in ("epoch", "phase", "secondary", "time", "sigma")})
    k = hyp.n_parameters
    resid = data.time - hyp.predict(gp.theta[:k], data)
    from celerite2 import terms

    sigma, rho, tau = hyp.process(gp.theta[:k])
    lag = np.abs(data.time[:, None] - data.time[None, :])
    cov = terms.SHOTerm(sigma=sigma, rho=rho, tau=tau).get_value(lag)
    dense = cov @ np.linalg.solve(cov + np.diag(data.sigma ** 2), resid)
    mean, _ = process_mean(hyp, data, gp.likelihood, gp.theta)
    assert np.max(np.abs(mean - dense)) * 86400 < 1e-6          # seconds
    # and the χ² is about the whole model: near its degrees of freedom for honest 3-s errors
    assert gp.chi2 < 1.5 * gp.dof
