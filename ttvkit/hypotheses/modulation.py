"""A sinusoidal O−C modulation: the generic shape of an activity cycle.

    T(E) = T0 + P·(E + φ_k) + A sin(2π (T − T0) / P_mod + φ)

with A the **O−C semi-amplitude** (half the peak-to-peak O−C), the shape
an activity-driven quadrupole change would give (Applegate 1992, ApJ 385,
621).  Sampled as a·sin + b·cos (a = A cos φ, b = A sin φ; linear in the
amplitudes, no boundary at A = 0); A and φ are derived.  Shifts transits
and occultations alike.
"""

from __future__ import annotations

import numpy as np

from ttvkit.constants import DAY_S, YEAR_D
from ttvkit.hypotheses._periodic import (
    amplitude_limit,
    candidate_periods,
    longer_than_baseline,
    period_range,
    sinusoid_at,
)
from ttvkit.hypotheses.base import Derived, Parameter, Term

__all__ = ["SinusoidalModulation"]


class SinusoidalModulation(Term):
    """A·sin(2π(T − T0)/P_mod + φ) added to the ephemeris; A is the O−C semi-amplitude."""

    key = "sinusoidal-modulation"
    assumptions = ("A strictly sinusoidal O−C modulation of constant semi-amplitude and period, "
                   "the shape an activity cycle would give (real cycles are only quasi-periodic).")

    def parameters(self):
        return (Parameter("sin_amplitude", "s", "A cos φ: the sine coefficient of the O−C modulation",
                          DAY_S),
                Parameter("cos_amplitude", "s", "A sin φ: the cosine coefficient of the O−C modulation",
                          DAY_S),
                Parameter("modulation_period", "d", "period of the modulation P_mod"))

    def bounds(self, data):
        limit = amplitude_limit(data, data.linear_residuals()) / DAY_S
        lo, hi = period_range(data)
        return np.array([-limit, -limit, lo]), np.array([limit, limit, hi])

    def searched_frequencies(self, data):
        lo, hi = period_range(data)
        return 1.0 / lo - 1.0 / hi

    def guesses(self, data, residuals):
        out = []
        for period in candidate_periods(data, residuals):
            a, b = sinusoid_at(data, residuals, period)
            out.append(np.array([a / DAY_S, b / DAY_S, period]))
        return out

    def evaluate(self, p, data, base):
        arg = 2 * np.pi * base["P"] * (data.epoch + data.phase) / p["modulation_period"]
        return p["sin_amplitude"] * np.sin(arg) + p["cos_amplitude"] * np.cos(arg)

    def derived(self, p, data):
        a, b = p["sin_amplitude"][..., 0] * DAY_S, p["cos_amplitude"][..., 0] * DAY_S
        amp = np.hypot(a, b)
        period = p["modulation_period"][..., 0]
        return {
            "semi_amplitude": Derived(amp, "s", "O−C semi-amplitude A (half the peak-to-peak O−C)"),
            "phase": Derived(np.degrees(np.arctan2(b, a)) % 360, "deg", "phase φ at T0"),
            "modulation_period_yr": Derived(period / YEAR_D, "yr", "modulation period"),
            "delta_P_over_P": Derived(2 * np.pi * amp / (period * DAY_S), "",
                                      "period modulation ΔP/P = 2πA/P_mod"),
        }

    def validity(self, p, data):
        """Valid while the modulation period is shorter than the baseline (a longer one is a trend)."""
        return longer_than_baseline(float(np.ravel(p["modulation_period"])[0]), data, "the modulation period")
