"""Ephemeris terms: constant period and a steadily changing period.

* constant period: T(E) = T0 + P·(E + φ_k), with φ_k = 0 for transits and
  primary eclipses and ½ for occultations and secondary eclipses;
* orbital decay (or growth): T(E) = T0 + P·(E + φ_k) + ½ (dP/dE) E², the
  form of Patra et al. (2017, AJ 154, 4, eqs. 2–3): occultations shift the
  same way as transits.  Derived: dP/dt = (dP/dE)/P in ms/yr and the decay
  timescale P/abs(dP/dt).
"""

from __future__ import annotations

import numpy as np

from ttvkit._linear import weighted_lstsq
from ttvkit.constants import DAY_S, YEAR_D
from ttvkit.hypotheses.base import Derived, Parameter, Term, TimingData

__all__ = ["ConstantPeriod", "OrbitalDecay", "MS_PER_YR_PER_S_PER_S"]

#: (s/s) → (ms/yr)
MS_PER_YR_PER_S_PER_S = YEAR_D * DAY_S * 1e3


def t0_period_bounds(data: TimingData):
    """Default prior bounds of T0 (offset, days) and P shared by the ephemeris terms."""
    lo = np.array([-0.1 * data.period, data.period * (1 - 1e-3)])
    hi = np.array([0.1 * data.period, data.period * (1 + 1e-3)])
    return lo, hi


class ConstantPeriod(Term):
    """T(E) = T0 + P·(E + φ_k)."""

    key = "constant-period"
    is_ephemeris = True
    assumptions = "A strictly periodic orbit."

    def parameters(self):
        return (Parameter("T0", "BJD_TDB", "mid-time of epoch 0"),
                Parameter("P", "d", "orbital period"))

    def bounds(self, data):
        return t0_period_bounds(data)

    def guesses(self, data, residuals):
        return [np.array([0.0, data.period])]

    def evaluate(self, p, data, base):
        return p["T0"] + p["P"] * (data.epoch + data.phase)


class OrbitalDecay(Term):
    """T(E) = T0 + P·(E + φ_k) + ½ (dP/dE) E² (Patra et al. 2017)."""

    key = "orbital-decay"
    is_ephemeris = True
    assumptions = ("A period changing at a constant rate (tidal decay if negative); "
                   "occultations shift like transits.")

    def parameters(self):
        return (Parameter("T0", "BJD_TDB", "mid-time of epoch 0"),
                Parameter("P", "d", "orbital period at epoch 0"),
                Parameter("dP_dE", "d/epoch", "change of the period per orbit"))

    def bounds(self, data):
        lo, hi = t0_period_bounds(data)
        e_max = max(np.max(np.abs(data.epoch)), 1.0)
        limit = 0.1 * data.period / e_max ** 2
        return np.append(lo, -limit), np.append(hi, limit)

    def guesses(self, data, residuals):
        x = data.epoch
        design = np.column_stack([np.ones_like(x), x + data.phase, 0.5 * x ** 2])
        coef = weighted_lstsq(design, data.time, data.sigma)
        return [np.array([coef[0], coef[1], coef[2]]), np.array([0.0, data.period, 0.0])]

    def evaluate(self, p, data, base):
        return p["T0"] + p["P"] * (data.epoch + data.phase) + 0.5 * p["dP_dE"] * data.epoch ** 2

    def derived(self, p, data):
        rate = p["dP_dE"][..., 0] / p["P"][..., 0]              # s/s
        with np.errstate(divide="ignore"):
            timescale = p["P"][..., 0] / np.abs(rate) / YEAR_D / 1e6
        return {"dP_dt": Derived(rate * MS_PER_YR_PER_S_PER_S, "ms/yr", "rate of change of the period"),
                "decay_timescale": Derived(timescale, "Myr", "P / abs(dP/dt)")}
