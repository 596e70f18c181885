"""A recurrent but not strictly periodic O−C modulation: a Gaussian process.

Activity cycles are not clocks: their lengths and strengths wander from one
cycle to the next.  A strict sinusoid (:mod:`ttvkit.hypotheses.modulation`)
then fits a period the data do not pin down, and the energy budget inherits
it.  This hypothesis lets the O−C be a stochastically driven damped
harmonic oscillator (a Gaussian process, with the covariance of the SHO
term of celerite2, a general-purpose library for fast one-dimensional GPs;
Foreman-Mackey et al. 2017, AJ 154, 220) around the ephemeris:

* its RMS σ (the O−C semi-amplitude of a sinusoid of the same variance is
  A = √2 σ, which is what the Applegate budget reads);
* its characteristic (undamped) period ρ;
* its coherence time τ: how long the oscillation keeps its phase.

All three are fitted as logarithms (``ln_gp_amplitude``, …, in days), so
their priors are log-uniform: scales are what is unknown.  τ ≫ ρ is nearly
a sinusoid; τ ≲ ρ/2 is red noise with no cycle at all (the quality factor
Q = π τ/ρ < ½).

The modulation is not a parameter but integrated out: the likelihood is the
GP's marginal likelihood, ln N(O−C | ephemeris, K + diag σᵢ²), which is how
this hypothesis is compared with the others on equal terms -- every
hypothesis's likelihood is the probability of the same mid-times, the GP
one with its own Occam factor for the functions it could have been, and the
BIC charges its three hyperparameters (and the look-elsewhere charge its
searched period range) like any other parameters.  Gaussian errors only
(a Student-t likelihood with a GP has no closed form).
"""

from __future__ import annotations

import numpy as np

from ttvkit.constants import DAY_S, YEAR_D
from ttvkit.hypotheses._periodic import amplitude_limit, candidate_periods, longer_than_baseline, period_range
from ttvkit.hypotheses.base import Derived, Parameter, Term

__all__ = ["QuasiPeriodicModulation"]


class QuasiPeriodicModulation(Term):
    """A Gaussian-process O−C modulation with a characteristic period and a coherence time."""

    key = "quasi-periodic-modulation"
    gaussian_process = True
    assumptions = ("A recurrent but not strictly periodic O−C modulation: a stochastically driven damped "
                   "oscillator (a Gaussian process with a characteristic period and a coherence time) added to "
                   "the ephemeris, stationary over the baseline, with Gaussian timing errors; the modulation is "
                   "integrated out of the likelihood.")

    def parameters(self):
        return (Parameter("ln_gp_amplitude", "", "ln of the O−C modulation's RMS σ in days"),
                Parameter("ln_characteristic_period", "", "ln of the characteristic (undamped) period ρ in days"),
                Parameter("ln_coherence_time", "", "ln of the coherence time τ in days"))

    def bounds(self, data):
        limit = amplitude_limit(data, data.linear_residuals()) / DAY_S
        lo, hi = period_range(data)
        hi = min(hi, 2 * data.span)            # a process slower than the baseline is a trend, not a cycle
        floor = 1e-3 * float(np.median(data.sigma))
        return (np.log([floor, lo, lo / 4]), np.log([limit, hi, 20 * max(data.span, hi)]))

    def searched_frequencies(self, data):
        lo, hi = period_range(data)
        return 1.0 / lo - 1.0 / min(hi, 2 * data.span)

    def guesses(self, data, residuals):
        rms = max(float(np.sqrt(np.mean(residuals ** 2))), 1e-3 * float(np.median(data.sigma)))
        return [np.log([rms, period, 3 * period]) for period in candidate_periods(data, residuals)
                if period < 2 * data.span]

    def evaluate(self, p, data, base):
        return 0.0 * p["ln_gp_amplitude"]       # no deterministic signal: the process is in the likelihood

    def process(self, p) -> tuple[float, float, float]:
        """(σ, ρ, τ) in days of one parameter row, for the covariance."""
        return tuple(float(np.exp(np.ravel(p[name])[0]))
                     for name in ("ln_gp_amplitude", "ln_characteristic_period", "ln_coherence_time"))

    def derived(self, p, data):
        sigma = np.exp(p["ln_gp_amplitude"][..., 0]) * DAY_S
        period = np.exp(p["ln_characteristic_period"][..., 0])
        tau = np.exp(p["ln_coherence_time"][..., 0])
        amp = np.sqrt(2.0) * sigma
        return {
            "semi_amplitude": Derived(amp, "s", "equivalent O−C semi-amplitude √2 σ (a sinusoid of the same "
                                      "variance)"),
            "modulation_period_yr": Derived(period / YEAR_D, "yr", "characteristic period of the modulation"),
            "coherence_time_yr": Derived(tau / YEAR_D, "yr", "coherence time τ (how long a phase is kept)"),
            "quality_factor": Derived(np.pi * tau / period, "", "Q = π τ / ρ (≫ 1: nearly periodic; "
                                      "< 1/2: red noise, no cycle)"),
            "delta_P_over_P": Derived(2 * np.pi * amp / (period * DAY_S), "", "period modulation ΔP/P = "
                                      "2πA/P_mod"),
        }

    def validity(self, p, data):
        """Valid while the characteristic period is shorter than the baseline and Q ≥ ½ (a cycle exists)."""
        period = float(np.exp(np.ravel(p["ln_characteristic_period"])[0]))
        reason = longer_than_baseline(period, data, "the characteristic period")
        if reason:
            return reason
        q = np.pi * float(np.exp(np.ravel(p["ln_coherence_time"])[0])) / period
        if q < 0.5:
            return (f"the coherence time is {q / np.pi:.2g} of the characteristic period (Q = {q:.2g} < ½): "
                    "red noise with no cycle, not a recurrent modulation")
        return None
