"""Likelihoods of timing residuals: Gaussian, with optional jitter, or Student-t.

Literature timings often have underestimated errors and outliers, so two
options widen the plain Gaussian:

* a **jitter** s added in quadrature, σ_eff² = σ² + s² (fitted as ln s
  between 10⁻³ and 10² × the median uncertainty of the rows it applies
  to; the sampler's prior is uniform in s, as Gelman 2006, Bayesian
  Analysis 1, 515 recommends for a standard deviation that may be near
  zero).  One jitter may serve the whole table, or each named source may have
  its own (compiled tables mix observers whose errors are understated by
  different amounts), with one more shared by the remaining sources;
* a **Student-t** likelihood with ν degrees of freedom (default 4), whose
  heavy tails let an outlier cost little (e.g. Gelman et al., *Bayesian
  Data Analysis*, 3rd ed., §17.2).

Functions work on residual arrays of shape ``(..., n)`` and return
log-likelihoods of shape ``(...)``.  They know nothing of hypotheses.
"""

from __future__ import annotations

import numpy as np
from scipy.special import gammaln

__all__ = ["Likelihood", "OTHER_SOURCES"]

#: The jitter-group label of every source not named in ``jitter_sources``.
OTHER_SOURCES = "other sources"


class Likelihood:
    """Log-likelihood of residuals given uncertainties.

    Parameters
    ----------
    kind : {"gaussian", "student-t"}
    jitter : bool
        Fit extra white timing noise (added in quadrature).
    dof : float
        Degrees of freedom of the Student-t.
    jitter_sources : sequence of str, optional
        Sources that get a jitter of their own.  Implies ``jitter=True``.
        By default one jitter serves the whole table.
    other_sources : bool
        With ``jitter_sources``: the rows of every source not named share
        one more jitter (labelled :data:`OTHER_SOURCES`).  False when the
        named sources are all there are.
    """

    def __init__(self, kind: str = "gaussian", jitter: bool = False, dof: float = 4.0,
                 jitter_sources=None, other_sources: bool = True):
        if kind not in ("gaussian", "student-t"):
            raise ValueError(f"unknown likelihood {kind!r}; use 'gaussian' or 'student-t'")
        self.kind = kind
        self.dof = float(dof)
        named = tuple(str(s) for s in jitter_sources) if jitter_sources else ()
        if len(set(named)) != len(named) or OTHER_SOURCES in named:
            raise ValueError(f"jitter_sources must be distinct source names, not {named!r}")
        self.jitter = bool(jitter) or bool(named)
        self.jitter_sources = named
        #: Labels of the jitter terms, in parameter order.
        self.other_sources = bool(other_sources) or not named
        self.jitter_groups = (named + ((OTHER_SOURCES,) if self.other_sources else ())) if self.jitter else ()

    @property
    def n_extra(self) -> int:
        """Parameters the likelihood adds (one log-jitter per group)."""
        return len(self.jitter_groups)

    @property
    def is_least_squares(self) -> bool:
        """True when maximising it is plain weighted least squares."""
        return self.kind == "gaussian" and not self.jitter

    def group_index(self, source, n: int) -> np.ndarray:
        """The jitter term of each of ``n`` rows (an index into ``jitter_groups``)."""
        other = len(self.jitter_sources)
        if source is None or not self.jitter_sources:
            return np.full(n, other, dtype=int)
        cached = getattr(self, "_last_index", None)
        if cached is not None and cached[0] is source:  # the sampler asks for the same rows every step
            return cached[1]
        lookup = {s: i for i, s in enumerate(self.jitter_sources)}
        index = np.array([lookup.get(str(s), other) for s in source], dtype=int)
        if not self.other_sources and np.any(index == other):
            missing = sorted({str(s) for s in source} - set(self.jitter_sources))
            raise ValueError(f"sources {missing} have no jitter term; name them or allow other_sources")
        self._last_index = (source, index)
        return index

    def restricted_to(self, sources) -> "Likelihood":
        """The same likelihood with jitter terms only for the groups that ``sources`` (row labels) use:
        a refit without one source must not keep a free jitter that no row constrains."""
        if not self.jitter_sources:
            return self
        present = {str(s) for s in sources}
        named = tuple(s for s in self.jitter_sources if s in present)
        rest = self.other_sources and bool(present - set(named))
        if not named:
            return Likelihood(self.kind, jitter=True, dof=self.dof)
        return Likelihood(self.kind, dof=self.dof, jitter_sources=named, other_sources=rest)

    def jitter_bounds(self, sigma: np.ndarray, group: np.ndarray | None = None) -> tuple[np.ndarray, np.ndarray]:
        """Bounds of ln(jitter / day), one pair per group (from the group's median uncertainty)."""
        sigma = np.asarray(sigma, float)
        group = np.full(sigma.size, self.n_extra - 1) if group is None else group
        med = np.array([np.median(sigma[group == g]) if np.any(group == g) else np.median(sigma)
                        for g in range(self.n_extra)])
        return np.log(1e-3 * med), np.log(1e2 * med)

    def variance(self, sigma: np.ndarray, log_jitter=None, group=None) -> np.ndarray:
        """Each row's variance σᵢ² (+ its group's jitter²), shape (..., n)."""
        var = np.asarray(sigma, float) ** 2
        if self.jitter:
            lj = np.asarray(log_jitter, float)
            if self.n_extra == 1 and (lj.ndim == 0 or lj.shape[-1] != 1):
                lj = lj[..., None]
            group = np.full(np.shape(sigma)[-1], self.n_extra - 1) if group is None else group
            var = var + np.exp(2 * lj)[..., group]
        return var

    def __call__(self, residuals: np.ndarray, sigma: np.ndarray, log_jitter=None, group=None) -> np.ndarray:
        """ln L of ``residuals`` (shape (..., n)); ``log_jitter`` has shape (..., n_extra) or is a
        scalar for a single group; ``group`` maps rows to jitter terms (all to the last by default)."""
        var = self.variance(sigma, log_jitter, group)
        if self.kind == "gaussian":
            return -0.5 * np.sum(residuals ** 2 / var + np.log(2 * np.pi * var), axis=-1)
        nu = self.dof
        norm = gammaln((nu + 1) / 2) - gammaln(nu / 2) - 0.5 * np.log(nu * np.pi * var)
        return np.sum(norm - (nu + 1) / 2 * np.log1p(residuals ** 2 / (nu * var)), axis=-1)

    def parameter_names(self) -> list[str]:
        """Names of the likelihood's parameters as results show them."""
        if self.n_extra == 1:
            return ["jitter"]
        return [f"jitter[{g}]" for g in self.jitter_groups]

    def describe(self) -> str:
        """Plain words, for reports."""
        base = "Gaussian" if self.kind == "gaussian" else f"Student-t (ν = {self.dof:g})"
        if not self.jitter:
            return base
        if self.n_extra == 1:
            return base + " with a fitted jitter"
        return base + f" with a fitted jitter per source ({', '.join(self.jitter_groups)})"
