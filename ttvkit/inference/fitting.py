"""Fitting any timing hypothesis: least squares, posterior sampling, comparison.

* :func:`fit` — weighted least squares (:func:`scipy.optimize.least_squares`)
  from every starting vector the hypothesis proposes (periodic terms seed
  theirs from the residual periodogram, so the global optimum is found, not
  the nearest local one), then, for a jitter or Student-t likelihood, a
  bounded maximisation of the likelihood from the least-squares optimum.
  The covariance is the inverse Fisher matrix, (JᵀJ)⁻¹ for least squares or
  the inverse numerical Hessian of −ln L otherwise.
* :func:`sample` — the posterior with emcee (Foreman-Mackey et al. 2013,
  PASP 125, 306), vectorised over walkers, uniform priors within each
  term's bounds; the integrated autocorrelation time τ is estimated
  (Goodman & Weare 2010; emcee's ``get_autocorr_time``) and a chain shorter
  than 50 τ gives a warning, or a :class:`~ttvkit.errors.ConvergenceError`
  when convergence is required.
* :func:`compare` — every hypothesis on the same footing, sorted by BIC.

This module knows nothing of physics.
"""

from __future__ import annotations

import warnings

import numpy as np
from scipy.optimize import least_squares, minimize

from ttvkit.errors import ConvergenceError, InputError, TtvkitWarning
from ttvkit.hypotheses import DEFAULT_COMPARISON, Hypothesis, TimingData, get_hypothesis
from ttvkit.inference.likelihood import Likelihood
from ttvkit.inference.results import Comparison, FitResult

__all__ = ["fit", "sample", "compare", "local_pool", "ConvergenceWarning"]


class ConvergenceWarning(TtvkitWarning):
    """A sampler chain is too short for its autocorrelation time."""


def _as_hypothesis(h) -> Hypothesis:
    return h if isinstance(h, Hypothesis) else get_hypothesis(h)


def _data(table, context) -> TimingData:
    if isinstance(table, TimingData):
        return table
    return TimingData.from_table(table, context)


def fit(table, hypothesis="constant-period", likelihood: Likelihood | None = None,
        context=None, max_starts: int = 60) -> FitResult:
    """Fit one hypothesis to a timing table.

    Parameters
    ----------
    table : TimingTable or TimingData
    hypothesis : str or Hypothesis
        A name from :data:`ttvkit.hypotheses.HYPOTHESIS_NAMES` (terms may be
        joined with ``+``) or a Hypothesis.
    likelihood : Likelihood, optional
        Gaussian without jitter by default.
    context : HostContext or System, optional
        Masses and orbit shape for mass-dependent derived quantities
        (:class:`~ttvkit.hypotheses.base.HostContext`; a System is read
        through ``HostContext.from_system``).
    max_starts : int
        Most starting vectors tried.

    Returns
    -------
    FitResult
    """
    hyp = _as_hypothesis(hypothesis)
    data = _data(table, context)
    like = likelihood or Likelihood()
    k = hyp.n_parameters
    if hyp.has_process and like.kind != "gaussian":
        raise InputError(f"{hyp.name} needs a Gaussian likelihood: a Student-t likelihood with a Gaussian "
                         "process has no closed form (drop --robust / the Student-t likelihood for it)")
    if data.n <= k + like.n_extra:
        raise InputError(f"hypothesis {hyp.name} has {k + like.n_extra} parameters but the table has "
                         f"only {data.n} mid-times; it cannot be fitted")
    lo, hi = hyp.bounds(data)

    last = {}

    def whitened(theta):
        value = (data.time - hyp.predict(theta, data)) / data.sigma
        last["theta"], last["value"] = np.array(theta, float), value
        return value

    # The Jacobian by forward differences, all shifted vectors in one batched predict: hypotheses
    # are vectorised over parameter rows, so k + 1 models cost about what two cost one at a time
    # (3x faster for the light-travel time's Kepler solve, far more for the N-body hypotheses).
    def jac(theta):
        """Forward differences as scipy's 2-point scheme takes them, all rows in one batched call."""
        step = np.sqrt(np.finfo(float).eps) * np.maximum(1.0, np.abs(theta))
        step = np.where(theta + step > hi, -step, step)            # stay inside the bounds
        rows = theta + np.diag(step)
        shifted = (data.time - hyp.predict(rows, data)) / data.sigma
        base = last["value"] if "theta" in last and np.array_equal(last["theta"], theta) else whitened(theta)
        return ((shifted - base) / step[:, None]).T

    # Two stages: a short run from every start, then a full polish of the few
    # best -- most starts lead nowhere and need not be run to convergence.
    trials = []
    for start in hyp.starts(data, limit=max_starts):
        res = _least_squares(whitened, start, lo, hi, quick=True, jac=jac)
        if res is not None:
            trials.append(res)
    trials.sort(key=lambda r: r.cost)
    best = None
    for trial in trials[:3]:
        res = _least_squares(whitened, trial.x, lo, hi, quick=False, jac=jac)
        if res is not None and (best is None or res.cost < best.cost):
            best = res
    if best is None:
        raise ConvergenceError(f"no starting point of {hyp.name} gave a finite fit")
    theta = best.x
    cov = _covariance_from_jacobian(best.jac)
    notes = []
    if hyp.has_process:     # the least squares ignore the process: maximise its likelihood from each start
        theta, cov = _maximise_process(hyp, data, like, theta, cov, lo, hi, max_starts)
    elif not like.is_least_squares:
        theta, cov = _maximise(hyp, data, like, theta, cov, lo, hi)
    resid = data.time - hyp.predict(theta[:k], data)
    chi2 = _chi2(hyp, data, like, theta)
    log_l = float(_log_like(like, data, resid, theta[k:], hyp, theta[:k]))
    return FitResult(hyp, data, theta, cov, log_l, chi2, like, warnings=notes)


def _log_like(like: Likelihood, data: TimingData, resid, extra, hyp: Hypothesis | None = None, theta=None):
    """ln L of residuals (..., n) with the likelihood's own parameters ``extra`` (..., n_extra).

    For a hypothesis with a Gaussian-process term (``hyp.has_process``) the
    residuals are not independent: ln L is the process's marginal likelihood
    with covariance K(σ, ρ, τ) + diag(each row's variance), row by row of
    ``theta`` (celerite2's O(n) solve).
    """
    group = like.group_index(data.source, data.n) if like.jitter else None
    if hyp is None or not hyp.has_process:
        return like(resid, data.sigma) if not like.jitter else like(resid, data.sigma, extra, group)
    if like.kind != "gaussian":
        raise InputError(f"{hyp.name} needs a Gaussian likelihood: a Student-t likelihood with a Gaussian "
                         "process has no closed form")
    import celerite2
    from celerite2 import terms

    resid2, theta2 = np.atleast_2d(resid), np.atleast_2d(theta)
    extra2 = np.atleast_2d(extra) if like.jitter else [None] * resid2.shape[0]
    order = np.argsort(data.time, kind="stable")
    out = np.empty(resid2.shape[0])
    for i, (r, th, ex) in enumerate(zip(resid2, theta2, extra2)):
        sigma, rho, tau = hyp.process(th)
        try:
            gp = celerite2.GaussianProcess(terms.SHOTerm(sigma=sigma, rho=rho, tau=tau))
            gp.compute(data.time[order], diag=like.variance(data.sigma, ex, group)[order], quiet=True)
            out[i] = gp.log_likelihood(r[order])
        except Exception:                       # a singular covariance at an extreme point: reject it
            out[i] = -np.inf
    return out if np.ndim(resid) > 1 else out[0]


def process_mean(hyp: Hypothesis, data: TimingData, like: Likelihood, theta, at=None) -> tuple:
    """The Gaussian-process term's conditional mean and standard deviation given the data.

    At the times ``at`` (days from ``data.t_ref``; default the data's own),
    at the parameter vector ``theta`` (model parameters, then the
    likelihood's jitters): celerite2's O(n) prediction from the residuals
    about the ephemeris.
    """
    import celerite2
    from celerite2 import terms

    k = hyp.n_parameters
    theta = np.asarray(theta, float)
    sigma, rho, tau = hyp.process(theta[:k])
    group = like.group_index(data.source, data.n) if like.jitter else None
    order = np.argsort(data.time, kind="stable")
    resid = data.time - hyp.predict(theta[:k], data)
    gp = celerite2.GaussianProcess(terms.SHOTerm(sigma=sigma, rho=rho, tau=tau))
    gp.compute(data.time[order], diag=like.variance(data.sigma, theta[k:] if like.jitter else None, group)[order],
               quiet=True)
    at = data.time if at is None else np.asarray(at, float)
    where = np.argsort(at, kind="stable")           # celerite2 predicts at sorted times only
    mean, var = np.empty(at.size), np.empty(at.size)
    mean[where], var[where] = gp.predict(resid[order], t=at[where], return_var=True)
    return mean, np.sqrt(np.clip(var, 0.0, None))


def _chi2(hyp: Hypothesis, data: TimingData, like: Likelihood, theta) -> float:
    """χ² of the residuals about the whole model (less the process's conditional mean, when it has one)."""
    k = hyp.n_parameters
    resid = data.time - hyp.predict(np.asarray(theta, float)[:k], data)
    if hyp.has_process:
        resid = resid - process_mean(hyp, data, like, theta)[0]
    return float(np.sum((resid / data.sigma) ** 2))


def _least_squares(func, start, lo, hi, quick: bool, jac="2-point"):
    try:
        if quick:
            res = least_squares(func, start, jac=jac, bounds=(lo, hi), x_scale="jac", method="trf",
                                xtol=1e-8, ftol=1e-8, gtol=1e-8, max_nfev=40)
        else:
            res = least_squares(func, start, jac=jac, bounds=(lo, hi), x_scale="jac", method="trf",
                                xtol=1e-12, ftol=1e-12, gtol=1e-12, max_nfev=2000)
    except ValueError:
        return None
    return res if np.all(np.isfinite(res.fun)) else None


def _covariance_from_jacobian(jac: np.ndarray) -> np.ndarray:
    """(JᵀJ)⁻¹ with the columns scaled first, so parameters of very different
    sizes (T0 in days, dP/dE ~ 1e-10 d) do not lose precision."""
    norms = np.linalg.norm(jac, axis=0)
    norms = np.where(norms > 0, norms, 1.0)
    scaled = jac / norms
    return np.linalg.pinv(scaled.T @ scaled) / np.outer(norms, norms)


def _full_bounds(hyp, data, like, lo, hi):
    if like.jitter:
        jl, jh = like.jitter_bounds(data.sigma, like.group_index(data.source, data.n))
        return np.append(lo, jl), np.append(hi, jh)
    return lo, hi


def _maximise(hyp, data, like, theta, cov, lo, hi):
    k = hyp.n_parameters
    flo, fhi = _full_bounds(hyp, data, like, lo, hi)
    x0 = theta.copy()
    if like.jitter:
        resid = data.time - hyp.predict(theta, data)
        group = like.group_index(data.source, data.n)
        for g in range(like.n_extra):  # start each jitter at its rows' excess scatter
            rows = group == g
            excess = (max(np.mean(resid[rows] ** 2 - data.sigma[rows] ** 2),
                          (0.1 * np.median(data.sigma[rows])) ** 2) if np.any(rows) else np.median(data.sigma) ** 2)
            x0 = np.append(x0, np.clip(0.5 * np.log(excess), flo[k + g] + 1e-6, fhi[k + g] - 1e-6))
    scale = np.sqrt(np.clip(np.diag(cov), 1e-30, None))
    scale = np.append(scale, np.full(like.n_extra, 0.1))

    def negative(z):
        x = x0 + z * scale
        r = data.time - hyp.predict(x[:k], data)
        value = -_log_like(like, data, r, x[k:], hyp, x[:k])
        return float(value) if np.isfinite(value) else 1e300

    zb = [((a - b) / s, (c - b) / s) for a, b, c, s in zip(flo, x0, fhi, scale)]
    res = minimize(negative, np.zeros_like(x0), method="L-BFGS-B", bounds=zb)
    res = minimize(negative, res.x, method="Nelder-Mead",
                   options={"xatol": 1e-6, "fatol": 1e-9, "maxiter": 4000 * x0.size})
    x = x0 + res.x * scale
    x = np.clip(x, flo, fhi)
    hess = _hessian(lambda v: negative((v - x0) / scale), x, scale * 1e-2)
    return x, _inverse_hessian(hess, scale)


def _maximise_process(hyp, data, like, theta, cov, lo, hi, max_starts):
    """The maximum of a Gaussian-process hypothesis's likelihood over its starts.

    The least squares fix the ephemeris (the process has no mean), then the
    full likelihood is maximised from each start of the process's own
    parameters (its candidate periods): the likelihood has one local
    maximum per period it could lock onto.
    """
    k = hyp.n_parameters
    best, best_value = None, -np.inf
    ephemeris = len(hyp.ephemeris.parameters())
    # the least squares do not see the process's parameters: give them a tenth of their range as scale
    cov = np.array(cov, float)
    cov[ephemeris:k, :] = 0.0
    cov[:, ephemeris:k] = 0.0
    cov[np.arange(ephemeris, k), np.arange(ephemeris, k)] = (0.1 * (hi[ephemeris:k] - lo[ephemeris:k])) ** 2
    for start in hyp.starts(data, limit=max_starts):
        x = np.array(theta, float)
        x[ephemeris:k] = start[ephemeris:k]
        try:
            cand = _maximise(hyp, data, like, x, cov, lo, hi)
        except (ValueError, np.linalg.LinAlgError):
            continue
        r = data.time - hyp.predict(cand[0][:k], data)
        value = float(_log_like(like, data, r, cand[0][k:], hyp, cand[0][:k]))
        if np.isfinite(value) and value > best_value:
            best, best_value = cand, value
    if best is None:
        raise ConvergenceError(f"no starting point of {hyp.name} gave a finite likelihood")
    return best


def _inverse_hessian(hess: np.ndarray, scale: np.ndarray) -> np.ndarray:
    """The covariance (the inverse Hessian of −ln L).  A direction the likelihood does not constrain
    (a jitter driven to its lower bound is flat) is set aside and given its prior-like scale, so the
    other parameters keep their correlations instead of all falling back to a diagonal guess."""
    n = hess.shape[0]
    keep = np.ones(n, bool)
    for _ in range(n):
        block = hess[np.ix_(keep, keep)] * np.outer(scale[keep], scale[keep])  # scaled to order unity
        try:
            np.linalg.cholesky(block)  # the optimum must be a maximum in every kept direction
            sub = np.linalg.inv(block) * np.outer(scale[keep], scale[keep])
            cov = np.diag(scale ** 2)
            cov[np.ix_(keep, keep)] = sub
            return cov
        except np.linalg.LinAlgError:
            pass
        curvature = np.where(keep, np.diag(hess) * scale ** 2, np.inf)
        keep[int(np.argmin(curvature))] = False  # drop the flattest direction and try again
        if not keep.any():
            break
    return np.diag(scale ** 2)


def _hessian(func, x, step):
    n = x.size
    h = np.zeros((n, n))
    f0 = func(x)
    for i in range(n):
        for j in range(i, n):
            ei = np.zeros(n)
            ej = np.zeros(n)
            ei[i] = step[i]
            ej[j] = step[j]
            if i == j:
                h[i, i] = (func(x + ei) - 2 * f0 + func(x - ei)) / step[i] ** 2
            else:
                h[i, j] = h[j, i] = (func(x + ei + ej) - func(x + ei - ej) - func(x - ei + ej)
                                     + func(x - ei - ej)) / (4 * step[i] * step[j])
    return h


def sample(result: FitResult, n_steps: int = 500, n_walkers: int | None = None, seed: int = 0,
           progress: bool = True, require_convergence: bool = False,
           max_steps: int | None = 40000) -> FitResult:
    """Sample the posterior of a fitted hypothesis with emcee; returns a new FitResult.

    Parameters
    ----------
    result : FitResult
        The optimum to start from (walkers drawn from its Gaussian approximation).
    n_steps : int
        Steps per walker of the first run.
    n_walkers : int, optional
        Default: max(16, 2 × number of parameters + 2).
    seed : int
        The same seed gives the same samples.
    progress : bool
        Show a tqdm progress bar.
    require_convergence : bool
        Raise ConvergenceError instead of warning when n_steps < 50 τ.
    max_steps : int or None
        While the chain is shorter than 50 τ (emcee's documented rule of
        thumb), keep sampling in chunks until it is, or until ``max_steps``
        steps per walker; None runs exactly ``n_steps``.  The defaults
        (500, then up to 40000) give chains as long as each posterior needs:
        a few hundred steps for a straight line, ~2000 for an eccentric
        orbit.

    Returns
    -------
    FitResult
        With ``samples`` (burn-in of 2τ discarded, thinned by τ/2) and
        ``sampling`` diagnostics.
    """
    import emcee

    hyp, data, like = result.hypothesis, result.data, result.likelihood
    k = hyp.n_parameters
    lo, hi = _full_bounds(hyp, data, like, *hyp.bounds(data))
    periodic = np.array([p.periodic is not None for p in hyp.parameters()] + [False] * like.n_extra)
    ndim = result.theta.size
    nw = n_walkers or max(16, 2 * ndim + 2)

    def log_prob(theta):
        theta = np.atleast_2d(theta)
        inside = np.all(((theta >= lo) & (theta <= hi)) | periodic, axis=1)
        out = np.full(theta.shape[0], -np.inf)
        if np.any(inside):
            t = theta[inside]
            r = data.time - hyp.predict(t[:, :k], data)
            out[inside] = _log_like(like, data, r, t[:, k:], hyp, t[:, :k]) + _log_jitter_prior(like, t[:, k:])
        out[~np.isfinite(out)] = -np.inf
        return out

    rng = np.random.default_rng(seed)
    ball = _starting_ball(result, log_prob, nw, rng, lo, hi, periodic)
    moves = [(emcee.moves.DEMove(), 0.5), (emcee.moves.StretchMove(), 0.5)]
    sampler = emcee.EnsembleSampler(nw, ndim, log_prob, vectorize=True, moves=moves)
    sampler.random_state = np.random.RandomState(seed).get_state()
    sampler.run_mcmc(ball, n_steps, progress=progress, progress_kwargs={"desc": hyp.name})
    tau = sampler.get_autocorr_time(tol=0)
    tau_max = float(np.nanmax(tau)) if np.all(np.isfinite(tau)) else float("inf")
    while max_steps is not None and n_steps < 50 * tau_max and n_steps < max_steps:
        # aim 10% past 50 tau: tau's estimate grows as the chain does
        more = int(min(max_steps - n_steps, max(n_steps // 4, 55 * tau_max - n_steps + 1)))
        sampler.run_mcmc(None, more, progress=progress, progress_kwargs={"desc": hyp.name})
        n_steps += more
        tau = sampler.get_autocorr_time(tol=0)
        tau_max = float(np.nanmax(tau)) if np.all(np.isfinite(tau)) else float("inf")
    converged = n_steps >= 50 * tau_max
    notes = list(result.warnings)
    if not converged:
        msg = (f"{hyp.name}: the chain of {n_steps} steps is shorter than 50 autocorrelation times "
               f"(tau = {tau_max:.0f} steps); run more steps before trusting the uncertainties")
        if require_convergence:
            raise ConvergenceError(msg)
        warnings.warn(msg, ConvergenceWarning, stacklevel=2)
        notes.append(msg)
    burn = int(min(2 * tau_max, n_steps / 2)) if np.isfinite(tau_max) else n_steps // 2
    thin = max(1, int(tau_max / 2)) if np.isfinite(tau_max) else 1
    samples = sampler.get_chain(discard=burn, thin=thin, flat=True)
    log_p = sampler.get_log_prob(discard=burn, thin=thin, flat=True)
    best = samples[int(np.argmax(log_p))]
    theta = best if log_p.max() > result.log_likelihood else result.theta
    diagnostics = {"n_steps": int(n_steps), "n_walkers": int(nw), "burn_in": burn, "thin": thin,
                   "autocorrelation_time": [float(t) for t in tau], "converged": bool(converged),
                   "acceptance_fraction": float(np.mean(sampler.acceptance_fraction)), "seed": int(seed)}
    resid = data.time - hyp.predict(theta[:k], data)
    return FitResult(hyp, data, theta, np.cov(samples.T).reshape(ndim, ndim),
                     float(_log_like(like, data, resid, theta[k:], hyp, theta[:k])),
                     _chi2(hyp, data, like, theta), like, samples, diagnostics, notes)


def _log_jitter_prior(like: Likelihood, log_jitter: np.ndarray) -> np.ndarray | float:
    """ln prior of the jitters, sampled as ln s: uniform in s itself, so the density in ln s is ∝ s.

    A log-uniform prior on a scale that may be near zero puts a plateau of
    probability down to its arbitrary lower cut, and the posterior (and the
    chain's mixing) depends on the cut; Gelman (2006, Bayesian Analysis 1,
    515) recommends a uniform prior on the standard deviation instead.
    """
    return np.sum(log_jitter, axis=-1) if like.jitter else 0.0


def _starting_ball(result: FitResult, log_prob, nw: int, rng, lo, hi, periodic) -> np.ndarray:
    """Walkers drawn from the optimum's Gaussian approximation (Laplace).

    Started where the posterior already is, the chain needs little burn-in,
    and the autocorrelation time measured on a short chain is not inflated
    by walkers spreading out of a tiny ball.  A draw outside the bounds or of
    zero probability (the approximation can be poor along a weak direction)
    is replaced by one from a ball of 1% of the standard deviations.
    """
    ndim = result.theta.size
    scale = np.sqrt(np.clip(np.diag(result.covariance), 0, None))
    scale = np.where(scale > 0, scale, 1e-8 * (np.abs(result.theta) + 1))
    span = hi - lo
    small = result.theta + 1e-2 * scale * rng.standard_normal((nw, ndim))
    small = np.where(periodic, small, np.clip(small, lo + 1e-9 * span, hi - 1e-9 * span))
    cov = 0.5 * (result.covariance + result.covariance.T)
    if not np.all(np.isfinite(cov)):
        return small
    try:
        values, vectors = np.linalg.eigh(cov)
    except np.linalg.LinAlgError:
        return small
    # a slightly indefinite covariance (rounding along a weak direction) is clipped to semi-definite,
    # and the 1% ball added keeps the walkers linearly independent along a direction of zero width
    wide = (result.theta + (rng.standard_normal((nw, ndim)) * np.sqrt(np.clip(values, 0, None))) @ vectors.T
            + (small - result.theta))
    lp = log_prob(wide)
    bad = ~np.isfinite(lp)
    wide[bad] = small[bad]
    return wide


def local_pool(workers: int | None = None):
    """A process pool for :func:`compare`'s ``executor``, or None when one process is all there is.

    Parameters
    ----------
    workers : int, optional
        Default: one per core, up to 4 (a comparison has 8 hypotheses, two
        of them far costlier than the rest).

    Workers are started with 'spawn': a forked copy of a process whose
    compiled N-body code has started its threads is not safe.  Spawned
    workers re-import the script that started them, so in a script make
    the pool under ``if __name__ == "__main__":`` (Python's
    multiprocessing documentation, "Safe importing of main module"); in a
    notebook nothing is needed.
    """
    import multiprocessing
    import os
    from concurrent.futures import ProcessPoolExecutor

    workers = min(4, os.cpu_count() or 1) if workers is None else int(workers)
    if workers <= 1:
        return None
    return ProcessPoolExecutor(max_workers=workers, mp_context=multiprocessing.get_context("spawn"))


def compare(table, hypotheses=DEFAULT_COMPARISON, likelihood: Likelihood | None = None,
            context=None, sampled: bool = False, n_steps: int = 500, seed: int = 0,
            progress: bool = True, executor=None, max_steps: int | None = 40000,
            sample_within: float | None = None) -> Comparison:
    """Fit every hypothesis (and optionally sample each) and sort by BIC.

    Parameters
    ----------
    table : TimingTable
    hypotheses : sequence of str or Hypothesis
    likelihood, context
        As in :func:`fit`.
    sampled : bool
        Also sample the posteriors (:func:`sample`), except where the
        optimum lies outside the hypothesis' validity: there the posterior is
        a ridge running to a prior bound (a period beyond the baseline, a
        trend in disguise), chains of 40000 steps did not converge on it, and
        the fit keeps its Gaussian approximation with a note in ``warnings``.
    n_steps, seed, progress, max_steps
        Passed to :func:`sample`.
    executor : object with ``map``, optional
        Runs the hypotheses concurrently (a process pool, a dask client);
        serial by default.
    sample_within : float, optional
        Sample only the hypotheses whose least-squares BIC is within this of
        the lowest (the others keep their Gaussian approximation, with a
        note); all by default.  ``diagnose`` passes the ΔBIC beyond which the
        data reject a hypothesis, whose verdict then rests on the optimum.

    Returns
    -------
    Comparison
    """
    data = _data(table, context)
    # the most parameters cost the most (starts, chain length): through a pool they go first
    fits = _mapped(executor, fit, [(data, h, likelihood) for h in hypotheses],
                   costs=[_as_hypothesis(h).n_parameters for h in hypotheses])
    if not sampled:
        return Comparison(fits)
    best = min(f.bic for f in fits)
    chosen = []
    for i, f in enumerate(fits):
        outside = f.hypothesis.validity(f.model_theta(), f.data)
        why = (f"the optimum lies outside the model's validity ({'; '.join(outside)})" if outside else
               f"its BIC exceeds the best by {f.bic - best:.1f} (> {sample_within:g})"
               if sample_within is not None and f.bic - best > sample_within else None)
        if why is None:
            chosen.append(i)
        else:
            f.warnings.append(f"{f.name}: not sampled, since {why}; its uncertainties are the Gaussian "
                              "approximation")
    show = progress and executor is None
    done = _mapped(executor, sample, [(fits[i],) for i in chosen], costs=[fits[i].theta.size for i in chosen],
                   kwargs=dict(n_steps=n_steps, seed=seed, progress=show, max_steps=max_steps))
    for i, result in zip(chosen, done):
        fits[i] = result
    return Comparison(fits)


def _mapped(executor, func, args: list, costs: list, kwargs: dict | None = None) -> list:
    """``func(*a, **kwargs)`` for each ``a``, in order; through ``executor`` the costliest first."""
    kwargs = kwargs or {}
    if executor is None:
        return [func(*a, **kwargs) for a in args]
    order = sorted(range(len(args)), key=lambda i: -costs[i])
    results = dict(zip(order, executor.map(_call, [(func, args[i], kwargs) for i in order])))
    out = []
    for i in range(len(args)):
        result, caught = results[i]
        for category, message in caught:  # a worker's warnings reach the caller (and the CLI's format)
            warnings.warn(message, category, stacklevel=3)
        out.append(result)
    return out


def _call(job):
    """Top level, so that a process pool can pickle it; returns the result and the warnings raised."""
    func, args, kwargs = job
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", TtvkitWarning)
        result = func(*args, **kwargs)
    return result, [(w.category, str(w.message)) for w in caught]
