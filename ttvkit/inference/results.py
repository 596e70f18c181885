"""Results of a fit: parameters with units, derived quantities, information criteria.

A :class:`FitResult` holds the optimum, its covariance and, when sampled,
the posterior samples.  Uncertainties are the 16th/84th percentiles of the
posterior when sampled, otherwise of draws from the Gaussian approximation
at the optimum (covariance from the Jacobian; a fixed seed keeps them
reproducible).  Cyclic parameters are summarised on the circle.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ttvkit.constants import DAY_S
from ttvkit.hypotheses.base import Hypothesis, TimingData
from ttvkit.inference.likelihood import Likelihood

__all__ = ["Estimate", "FitResult", "Comparison", "summarise"]


def summarise(values: np.ndarray, period: float | None = None) -> tuple[float, float, float]:
    """(median, lower, upper) with lower/upper the 1σ half-widths (16/50/84 %)."""
    v = np.asarray(values, float).ravel()
    v = v[np.isfinite(v)]
    if v.size == 0:
        return float("nan"), float("nan"), float("nan")
    if period is not None:
        centre = np.angle(np.mean(np.exp(2j * np.pi * v / period))) * period / (2 * np.pi)
        v = centre + (v - centre + period / 2) % period - period / 2
    lo, med, hi = np.percentile(v, [15.865, 50.0, 84.135])
    if period is not None:
        med = med % period
        lo, hi = med - (np.percentile(v, 50) - lo), med + (hi - np.percentile(v, 50))
    return float(med), float(med - lo), float(hi - med)


@dataclass(frozen=True)
class Estimate:
    """One fitted or derived quantity: the value, 1σ half-widths below and above, and the unit."""

    name: str
    value: float
    lower: float
    upper: float
    unit: str
    description: str = ""

    def toward(self, direction: float) -> float:
        """The half-width on the side of ``direction`` (+1: above the value, −1: below)."""
        return self.upper if direction > 0 else self.lower


@dataclass
class FitResult:
    """One hypothesis fitted to one timing table.

    Attributes
    ----------
    hypothesis : Hypothesis
    data : TimingData
    theta : ndarray
        Optimum (internal units), likelihood parameters last.
    covariance : ndarray
    log_likelihood : float
    chi2 : float
        Σ r²/σ² with the tabulated σ (no jitter).
    likelihood : Likelihood
    samples : ndarray, optional
        Posterior samples (internal units), shape (n, k).
    sampling : dict
        Sampler diagnostics (steps, walkers, autocorrelation time, converged).
    warnings : list of str
    """

    hypothesis: Hypothesis
    data: TimingData
    theta: np.ndarray
    covariance: np.ndarray
    log_likelihood: float
    chi2: float
    likelihood: Likelihood
    samples: np.ndarray | None = None
    sampling: dict = field(default_factory=dict)
    warnings: list = field(default_factory=list)
    # Summaries are computed once: the report, the checks and the JSON all
    # read them, and derived quantities over thousands of draws are not free.
    _cache: dict = field(default_factory=dict, repr=False, compare=False)

    @property
    def name(self) -> str:
        """The hypothesis name."""
        return self.hypothesis.name

    @property
    def n_points(self) -> int:
        """Number of mid-times."""
        return self.data.n

    @property
    def n_parameters(self) -> int:
        """Free parameters, the likelihood's included."""
        return int(self.theta.size)

    @property
    def dof(self) -> int:
        """Degrees of freedom n − k."""
        return self.n_points - self.n_parameters

    @property
    def reduced_chi2(self) -> float:
        """χ² / dof."""
        return self.chi2 / self.dof if self.dof > 0 else float("nan")

    @property
    def bic(self) -> float:
        """Bayesian information criterion −2 ln L + k ln n (Schwarz 1978)."""
        return -2 * self.log_likelihood + self.n_parameters * np.log(self.n_points)

    @property
    def aic(self) -> float:
        """Akaike information criterion −2 ln L + 2k (Akaike 1974)."""
        return -2 * self.log_likelihood + 2 * self.n_parameters

    def model_theta(self, theta=None) -> np.ndarray:
        """The hypothesis part of a parameter vector (likelihood parameters dropped)."""
        theta = self.theta if theta is None else theta
        return np.asarray(theta)[..., :self.hypothesis.n_parameters]

    def residuals(self) -> np.ndarray:
        """Observed minus best-fit mid-times (days)."""
        return self.data.time - self.hypothesis.predict(self.model_theta(), self.data)

    def draws(self, count: int = 4000, seed: int = 0) -> np.ndarray:
        """Posterior samples, or draws from the Gaussian approximation if not sampled."""
        if self.samples is not None:
            return self.samples
        key = ("draws", count, seed)
        if key in self._cache:
            return self._cache[key]
        rng = np.random.default_rng(seed)
        cov = 0.5 * (self.covariance + self.covariance.T)
        # Drawn in units of each parameter's own σ: the covariance mixes scales from 1e-22 (dP/dE²)
        # to 1e2 (a loosely pinned log-jitter), and an eigen-decomposition of the raw matrix would
        # drown the small ones in round-off.
        sd = np.sqrt(np.clip(np.diag(cov), 0, None))
        unit = np.where(sd > 0, sd, 1.0)
        try:
            z = rng.multivariate_normal(np.zeros(sd.size), cov / np.outer(unit, unit), size=count, method="eigh")
            draws = self.theta + z * unit
        except (np.linalg.LinAlgError, ValueError):
            draws = np.repeat(self.theta[None, :], count, axis=0)
        self._cache[key] = draws
        return draws

    def _periods(self):
        periods = [p.periodic for p in self.hypothesis.parameters()]
        return periods + [None] * self.likelihood.n_extra

    def parameter_table(self) -> dict:
        """name → {value, lower, upper, unit, description} in the shown units."""
        if "parameters" in self._cache:
            return self._cache["parameters"]
        draws = self.draws()
        out = {}
        params = list(self.hypothesis.parameters())
        for i, p in enumerate(params):
            col = draws[:, i]
            med, lo, hi = summarise(col, p.periodic)
            best = self.theta[i] if self.samples is None else med
            if p.periodic is not None and self.samples is None:
                best = best % p.periodic
            offset = self.data.t_ref if p.name == "T0" else 0.0
            out[p.name] = {"value": float(best * p.to_display + offset), "lower": lo * p.to_display,
                           "upper": hi * p.to_display, "unit": p.unit, "description": p.description}
        k = self.hypothesis.n_parameters
        if self.likelihood.jitter:  # draws of the Gaussian approximation are kept within the prior's bounds
            j_lo, j_hi = self.likelihood.jitter_bounds(
                self.data.sigma, self.likelihood.group_index(self.data.source, self.data.n))
        for g, (name, group) in enumerate(zip(self.likelihood.parameter_names(), self.likelihood.jitter_groups)):
            col = np.exp(np.clip(draws[:, k + g], j_lo[g], j_hi[g])) * DAY_S
            med, lo, hi = summarise(col)
            best = float(np.exp(self.theta[k + g]) * DAY_S) if self.samples is None else med
            whose = "" if self.likelihood.n_extra == 1 else f" ({group})"
            out[name] = {"value": best, "lower": lo, "upper": hi, "unit": "s",
                         "description": f"extra white timing noise added in quadrature{whose}"}
        self._cache["parameters"] = out
        return out

    def derived_table(self) -> dict:
        """name → {value, lower, upper, unit, description} of the derived quantities."""
        if "derived" in self._cache:
            return self._cache["derived"]
        draws = self.draws()
        model = self.model_theta(draws)
        best = self.hypothesis.derived(self.model_theta()[None, :], self.data)
        out = {}
        for name, d in self.hypothesis.derived(model, self.data).items():
            period = 360.0 if d.unit == "deg" else None
            med, lo, hi = summarise(d.values, period)
            value = med if self.samples is not None else float(np.ravel(best[name].values)[0])
            out[name] = {"value": value, "lower": lo, "upper": hi, "unit": d.unit,
                         "description": d.description}
        self._cache["derived"] = out
        return out

    def estimate(self, name: str) -> Estimate:
        """A parameter or derived quantity by name (``KeyError`` if the hypothesis has none)."""
        table = self.parameter_table()
        row = table[name] if name in table else self.derived_table()[name]
        return Estimate(name, float(row["value"]), float(row["lower"]), float(row["upper"]), row["unit"],
                        row.get("description", ""))

    def has(self, name: str) -> bool:
        """True when the fit has a parameter or derived quantity called ``name``."""
        return name in self.parameter_table() or name in self.derived_table()

    def to_dict(self) -> dict:
        """The JSON form documented for ``ttvkit fit --json``."""
        return {
            "hypothesis": self.name,
            "parameters": self.parameter_table(),
            "derived": self.derived_table(),
            "chi2": float(self.chi2),
            "dof": int(self.dof),
            "reduced_chi2": float(self.reduced_chi2),
            "log_likelihood": float(self.log_likelihood),
            "bic": float(self.bic),
            "aic": float(self.aic),
            "n_points": int(self.n_points),
            "n_parameters": int(self.n_parameters),
            "likelihood": self.likelihood.describe(),
            "sampled": self.samples is not None,
            "sampling": self.sampling,
            "assumptions": self.hypothesis.assumptions,
            "warnings": list(self.warnings),
        }


@dataclass
class Comparison:
    """Fits of several hypotheses to one table, sorted by BIC."""

    fits: list

    def __post_init__(self):
        self.fits = sorted(self.fits, key=lambda f: f.bic)

    @property
    def best(self) -> FitResult:
        """The hypothesis with the lowest BIC."""
        return self.fits[0]

    def delta_bic(self, fit: FitResult) -> float:
        """BIC of ``fit`` minus the lowest BIC."""
        return float(fit.bic - self.best.bic)

    def __getitem__(self, name: str) -> FitResult:
        for f in self.fits:
            if f.name == name:
                return f
        raise KeyError(name)

    def rows(self) -> list[dict]:
        """One summary row per hypothesis: name, k, χ², dof, BIC, ΔBIC, AIC."""
        return [{"hypothesis": f.name, "n_parameters": f.n_parameters, "chi2": f.chi2, "dof": f.dof,
                 "bic": f.bic, "delta_bic": self.delta_bic(f), "aic": f.aic} for f in self.fits]

    def to_dict(self) -> dict:
        """``{"hypotheses": [fit dicts sorted by BIC, each with delta_bic]}``."""
        items = []
        for f in self.fits:
            d = f.to_dict()
            d["delta_bic"] = self.delta_bic(f)
            items.append(d)
        return {"hypotheses": items}
