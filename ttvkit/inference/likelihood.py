"""Likelihoods of timing residuals: Gaussian, with optional jitter, or Student-t.

Literature timings often have underestimated errors and outliers, so two
options widen the plain Gaussian:

* a **jitter** s added in quadrature, σ_eff² = σ² + s² (fitted, log-uniform
  prior from 10⁻³ to 10² × the median uncertainty);
* a **Student-t** likelihood with ν degrees of freedom (default 4), whose
  heavy tails let an outlier cost little (e.g. Gelman et al., *Bayesian
  Data Analysis*, 3rd ed., §17.2).

Functions work on residual arrays of shape ``(..., n)`` and return
log-likelihoods of shape ``(...)``.  They know nothing of hypotheses.
"""

from __future__ import annotations

import numpy as np
from scipy.special import gammaln

__all__ = ["Likelihood"]


class Likelihood:
    """Log-likelihood of residuals given uncertainties.

    Parameters
    ----------
    kind : {"gaussian", "student-t"}
    jitter : bool
        Fit an extra white-noise term (one more parameter, ``jitter``).
    dof : float
        Degrees of freedom of the Student-t.
    """

    def __init__(self, kind: str = "gaussian", jitter: bool = False, dof: float = 4.0):
        if kind not in ("gaussian", "student-t"):
            raise ValueError(f"unknown likelihood {kind!r}; use 'gaussian' or 'student-t'")
        self.kind = kind
        self.jitter = bool(jitter)
        self.dof = float(dof)

    @property
    def n_extra(self) -> int:
        """Parameters the likelihood adds (the log-jitter)."""
        return 1 if self.jitter else 0

    @property
    def is_least_squares(self) -> bool:
        """True when maximising it is plain weighted least squares."""
        return self.kind == "gaussian" and not self.jitter

    def jitter_bounds(self, sigma: np.ndarray) -> tuple[float, float]:
        """Bounds of ln(jitter / day)."""
        med = float(np.median(sigma))
        return float(np.log(1e-3 * med)), float(np.log(1e2 * med))

    def __call__(self, residuals: np.ndarray, sigma: np.ndarray, log_jitter=None) -> np.ndarray:
        var = sigma ** 2
        if self.jitter:
            var = var + np.exp(2 * np.asarray(log_jitter))[..., None]
        if self.kind == "gaussian":
            return -0.5 * np.sum(residuals ** 2 / var + np.log(2 * np.pi * var), axis=-1)
        nu = self.dof
        norm = gammaln((nu + 1) / 2) - gammaln(nu / 2) - 0.5 * np.log(nu * np.pi * var)
        return np.sum(norm - (nu + 1) / 2 * np.log1p(residuals ** 2 / (nu * var)), axis=-1)

    def describe(self) -> str:
        """Plain words, for reports."""
        base = "Gaussian" if self.kind == "gaussian" else f"Student-t (ν = {self.dof:g})"
        return base + (" with a fitted jitter" if self.jitter else "")
