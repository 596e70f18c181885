"""A small one-dimensional Gaussian process: Matérn kernels, fitted scale, mean, derivative, draws.

Enough for series of a few hundred points (dense Cholesky, O(N³)): smoothing
an O−C diagram and differentiating it, and drawing red-noise surrogates of an
irregularly sampled series with its own fitted autocorrelation.  The kernel
is a Matérn covariance (Rasmussen & Williams 2006, *Gaussian Processes for
Machine Learning*, MIT Press, eq. 4.17): ν = 3/2,

    k(τ) = s² (1 + √3|τ|/ℓ) exp(−√3|τ|/ℓ),

whose sample paths are once differentiable, so the posterior mean has a
derivative; or ν = 1/2, the exponential (Ornstein–Uhlenbeck, damped random
walk) covariance k(τ) = s² exp(−|τ|/ℓ), rough like most red noise.  The amplitude s and length ℓ maximise the marginal likelihood
(R&W eq. 2.30) on a logarithmic grid: coarse, but robust for short series.
For long series and the quasi-periodic timing hypothesis, celerite2
(Foreman-Mackey et al. 2017, AJ 154, 220) is the tool; this module does not
replace it.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.linalg import cho_factor, cho_solve

from ttvkit.errors import InputError

__all__ = ["MaternProcess", "fit_matern"]

KERNELS = ("matern32", "exponential")

_SQRT3 = np.sqrt(3.0)


def _kernel(t1, t2, amplitude, length, kind="matern32"):
    if kind == "exponential":
        return amplitude ** 2 * np.exp(-np.abs(t1[:, None] - t2[None, :]) / length)
    r = _SQRT3 * np.abs(t1[:, None] - t2[None, :]) / length
    return amplitude ** 2 * (1 + r) * np.exp(-r)


def _kernel_dt1(t1, t2, amplitude, length):
    """∂k(t1, t2)/∂t1."""
    tau = t1[:, None] - t2[None, :]
    r = _SQRT3 * np.abs(tau) / length
    return -3 * amplitude ** 2 * tau / length ** 2 * np.exp(-r)


@dataclass(frozen=True)
class MaternProcess:
    """A Matérn process conditioned on data (times sorted, values minus their mean, errors)."""

    time: np.ndarray
    value: np.ndarray
    error: np.ndarray
    mean: float
    amplitude: float
    length: float
    log_likelihood: float
    kernel: str = "matern32"

    def _alpha(self):
        cov = self._covariance()
        return cho_solve(cho_factor(cov, lower=True), self.value)

    def _covariance(self):
        return _kernel(self.time, self.time, self.amplitude, self.length, self.kernel) + np.diag(self.error ** 2)

    def predict(self, at, derivative: bool = False) -> np.ndarray:
        """Posterior mean at ``at`` (with the data mean added back), or its time derivative."""
        at = np.asarray(at, float)
        shape = at.shape
        flat = at.ravel()
        alpha = self._alpha()
        if derivative:
            if self.kernel != "matern32":
                raise InputError("the exponential kernel's mean has no derivative; use the Matérn-3/2 kernel")
            return (_kernel_dt1(flat, self.time, self.amplitude, self.length) @ alpha).reshape(shape)
        return (_kernel(flat, self.time, self.amplitude, self.length, self.kernel) @ alpha + self.mean).reshape(shape)

    def draws(self, n: int, rng: np.random.Generator) -> np.ndarray:
        """``n`` unconditioned draws at the data times (kernel + the data's white errors), shape (n, N)."""
        chol = np.linalg.cholesky(self._covariance())
        return rng.standard_normal((n, self.time.size)) @ chol.T


def fit_matern(time, value, error, kernels=("matern32",), n_lengths: int = 12,
               n_amplitudes: int = 8) -> MaternProcess:
    """Maximum-likelihood Matérn process for one series (grid over kernel, s and ℓ).

    Parameters
    ----------
    time, value, error : array_like
        The series (any units, consistent); errors 1σ, positive.
    kernels : tuple of {"matern32", "exponential"}
        Kernels tried; the one of highest likelihood is kept (same number
        of parameters, so no penalty is needed).
    n_lengths, n_amplitudes : int
        Grid sizes: ℓ from twice the median spacing to twice the span, s from
        0.1 to 3 times the standard deviation of the values (logarithmic).

    Returns
    -------
    MaternProcess
    """
    t = np.asarray(time, float)
    y = np.asarray(value, float)
    e = np.broadcast_to(np.asarray(error, float), t.shape).astype(float)
    if t.size < 5 or y.shape != t.shape:
        raise InputError("a Gaussian-process fit needs at least 5 points with one value each")
    if not (np.all(np.isfinite(t)) and np.all(np.isfinite(y)) and np.all(e > 0)):
        raise InputError("times and values must be finite and errors positive")
    order = np.argsort(t)
    t, y, e = t[order], y[order], e[order]
    mean = float(np.average(y, weights=1 / e ** 2))
    y = y - mean
    span = t[-1] - t[0]
    spacing = float(np.median(np.diff(t))) if t.size > 1 else span
    spread = float(np.std(y)) or float(np.median(e))
    best = None
    for kind in kernels:
        if kind not in KERNELS:
            raise InputError(f"unknown kernel {kind!r}; known: {', '.join(KERNELS)}")
        found = _grid(t, y, e, kind, np.geomspace(max(2 * spacing, span / 200), 2 * span, n_lengths),
                      np.geomspace(0.1 * spread, 3 * spread, n_amplitudes))
        if found is not None and (best is None or found[0] > best[0]):
            best = found + (kind,)
    if best is None:
        raise InputError("no Gaussian-process fit: the covariance was singular on every grid point")
    return MaternProcess(t, y, e, mean, best[1], best[2], best[0], best[3])


def _grid(t, y, e, kind, lengths, amplitudes):
    best = None
    for length in lengths:
        base = _kernel(t, t, 1.0, length, kind)
        for amp in amplitudes:
            cov = amp ** 2 * base + np.diag(e ** 2)
            try:
                factor = cho_factor(cov, lower=True)
            except np.linalg.LinAlgError:
                continue
            alpha = cho_solve(factor, y)
            logl = -0.5 * y @ alpha - np.log(np.diag(factor[0])).sum() - 0.5 * t.size * np.log(2 * np.pi)
            if best is None or logl > best[0]:
                best = (float(logl), float(amp), float(length))
    return best
