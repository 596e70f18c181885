"""The quasi-periodic (Gaussian-process) modulation: its likelihood, recovery of a wandering cycle, a null.

External references: scipy's dense multivariate-normal density (the likelihood), celerite2's
SHO covariance (Foreman-Mackey et al. 2017, AJ 154, 220) to draw the simulated cycles, scipy's
binomial distribution for the coverage band.
"""

import numpy as np
import pytest
from scipy.stats import multivariate_normal

from ttvkit import TimingTable
from ttvkit.errors import InputError
from ttvkit.hypotheses import TimingData, get_hypothesis
from ttvkit.inference.fitting import _log_like, _mapped, fit, local_pool, sample
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


def compiled(seed):
    """A table with what real compilations have, and its true (ρ, σ) in days.

    Truth varied per seed: ρ 5-12 yr, σ 20-60 s, τ 10-40 yr.  150-250 primary eclipses over
    28.5 yr with a 4-yr hole; two sources, A honest (2-5 s) and B quoting errors 1.5x smaller
    than its true 3-8 s; 3-8 eclipses timed twice (same process value, independent errors).  The
    O-C is drawn densely from celerite2's SHO covariance (Foreman-Mackey et al. 2017, AJ 154, 220).
    """
    from celerite2 import terms

    rng = np.random.default_rng(1000 + seed)
    rho, sig, tau = rng.uniform(5, 12) * YEAR, rng.uniform(20, 60) / 86400, rng.uniform(10, 40) * YEAR
    n, span = int(rng.integers(150, 251)), 80000
    start = rng.uniform(0.25, 0.6) * span
    pool = np.arange(span)
    pool = pool[(pool < start) | (pool > start + 4 * YEAR / PERIOD)]
    repeats = int(rng.integers(3, 9))
    epochs = np.sort(rng.choice(pool, n - repeats, replace=False))
    epochs = np.sort(np.concatenate([epochs, rng.choice(epochs, repeats, replace=False)])).astype(float)
    t = PERIOD * epochs
    source = np.where((t > np.median(t)) | (rng.uniform(size=n) < 0.3), "B", "A")
    error = np.where(source == "A", rng.uniform(2, 5, n), rng.uniform(3, 8, n)) / 86400
    quoted = np.where(source == "A", error, error / 1.5)
    cov = terms.SHOTerm(sigma=sig, rho=rho, tau=tau).get_value(np.abs(t[:, None] - t[None, :]))
    chol = np.linalg.cholesky(cov + 1e-10 * sig ** 2 * np.eye(n))   # repeated times: a tiny nugget
    oc = chol @ rng.standard_normal(n) + rng.normal(0, error)
    table = TimingTable(2450000 + t + oc, quoted, epoch=epochs.astype(int), kind="primary", source=source)
    return table, rho, sig


@pytest.mark.slow
def test_sampled_intervals_of_the_period_cover_the_truth():
    # Frequentist coverage of the sampled 68% interval (16th-84th percentile) of ln ρ over 20 seeded
    # compiled() tables, each fitted as diagnose would (the excess-noise decision adds one jitter per
    # source).  Tolerance: if the intervals were calibrated, the count inside would be Binomial(20,
    # 0.68), whose central 99.5% is 8..19 of 20 (scipy.stats.binom.ppf(0.0025) / isf(0.0025)); a
    # band this wide is what 20 trials can justify.  The truth is drawn from narrower ranges than the
    # log-uniform priors, so exact calibration is not guaranteed, only expected near the nominal rate.
    # Measured on 60 such tables (same generator, seeds 0-59): with the excess-noise terms the 68%
    # coverage of ln ρ is 0.55 ± 0.06 (95%: 0.95), below nominal by ~2σ -- the intervals look ~10-20%
    # too narrow, not yet explained; without them (plain least squares) 0.70 (95%: 0.97).  These 20
    # seeds: 11 of 20 inside.  The band catches gross miscalibration only.  2 processes; 2-4.5 min.
    from scipy.stats import binom

    from ttvkit.inference.excess_noise import decide_excess_noise

    cases = [compiled(seed) for seed in range(20)]
    jobs = [(table, "quasi-periodic-modulation", decide_excess_noise(table).likelihood) for table, _, _ in cases]
    pool = local_pool(2)
    try:
        fits = _mapped(pool, fit, jobs, costs=[1] * len(jobs))
        posteriors = _mapped(pool, sample, [(f,) for f in fits], costs=[1] * len(fits), kwargs=dict(progress=False))
    finally:
        if pool is not None:
            pool.shutdown()
    inside = 0
    for post, (_, rho, _) in zip(posteriors, cases):
        assert post.likelihood.jitter                  # the O-C's own scatter trips the decision
        e = post.estimate("ln_characteristic_period")  # median, and distances to the 16th/84th percentiles
        inside += e.value - e.lower <= np.log(rho) <= e.value + e.upper
    low, high = binom.ppf(0.0025, 20, 0.68), binom.isf(0.0025, 20, 0.68)
    assert (low, high) == (8, 19)
    assert low <= inside <= high, f"{inside} of 20 68% intervals of ln ρ contain the truth"
