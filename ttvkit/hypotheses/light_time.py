"""Light-travel time across the orbit around a distant companion.

Irwin (1952, ApJ 116, 211):

    Δt = A [ (1 − e²) / (1 + e cos ν) · sin(ν + ω) + e sin ω ],

with A = a₁₂ sin i / c the light-time amplitude of the timed pair's orbit
about the common barycentre, ν the true anomaly of that orbit, found from
the mean anomaly M = M0 + 2π t / P₃ through Kepler's equation.  Transits and occultations
shift alike.  Sampled as √e cos ω, √e sin ω (uniform in e, no boundary at
e = 0) and the mean longitude λ₀ = M₀ + ω at the reference time: the
phase of a nearly circular orbit is λ₀, well defined however poorly ω is,
whereas M₀ and ω alone wind around each other as e → 0 and stall the
sampler.  The half-range of Δt is A √(1 − e² cos² ω).  Derived: a₁₂ sin i,
the mass function, the time of periastron, and the minimum companion mass
when the host mass is known.

Assumptions: a Keplerian outer orbit, a point-mass inner pair, no
dynamical perturbation of the inner orbit.
"""

from __future__ import annotations

import numpy as np
from numba import njit

from ttvkit.constants import DAY_S, YEAR_D
from ttvkit.hypotheses._periodic import (
    amplitude_limit,
    candidate_periods,
    longer_than_baseline,
    period_range,
    sinusoid_at,
)
from ttvkit.hypotheses.base import Derived, Parameter, Term

__all__ = ["LightTravelTime", "light_time_delay"]

_E_MAX = 0.95


def light_time_delay(t, amplitude, period, sqrt_e_cos, sqrt_e_sin, mean_anomaly0) -> np.ndarray:
    """Irwin (1952) delay (same unit as ``amplitude``) at times ``t`` (days).

    With r/a = 1 − e cos E, r cos ν = a (cos E − e) and
    r sin ν = a √(1 − e²) sin E, Irwin's bracket becomes
    √(1 − e²) sin E cos ω + cos E sin ω: no true anomaly is needed, and
    Kepler's equation is solved in one compiled loop (the sampler evaluates
    this for every walker at every step).
    """
    e = np.minimum(np.asarray(sqrt_e_cos) ** 2 + np.asarray(sqrt_e_sin) ** 2, _E_MAX)
    omega = np.arctan2(sqrt_e_sin, sqrt_e_cos)
    m = mean_anomaly0 + 2 * np.pi * np.asarray(t, float) / period
    m, e_b, cos_w, sin_w = np.broadcast_arrays(m, e, np.cos(omega), np.sin(omega))
    bracket = _irwin_bracket(np.ascontiguousarray(m, float).ravel(), np.ascontiguousarray(e_b, float).ravel(),
                             np.ascontiguousarray(cos_w, float).ravel(), np.ascontiguousarray(sin_w, float).ravel())
    return amplitude * bracket.reshape(m.shape)


@njit(cache=True)
def _irwin_bracket(m, e, cos_w, sin_w):  # pragma: no cover - compiled
    """√(1 − e²) sin E cos ω + cos E sin ω, E from Kepler's equation by Halley's method
    from Danby's start (as :func:`ttvkit.physics.kepler.solve_kepler`)."""
    out = np.empty(m.size)
    for i in range(m.size):
        ecc = e[i]
        mw = (m[i] + np.pi) % (2 * np.pi) - np.pi
        big_e = mw + 0.85 * ecc * np.sign(np.sin(mw))
        for _ in range(50):
            s, c = np.sin(big_e), np.cos(big_e)
            f = big_e - ecc * s - mw
            f1 = 1.0 - ecc * c
            step = f / (f1 - 0.5 * f * ecc * s / f1)
            big_e -= step
            if abs(step) < 1e-14:
                break
        out[i] = np.sqrt(1.0 - ecc * ecc) * np.sin(big_e) * cos_w[i] + np.cos(big_e) * sin_w[i]
    return out


class LightTravelTime(Term):
    """The light-time effect of a distant companion (Irwin 1952)."""

    key = "light-travel-time"
    assumptions = ("A distant companion on a Keplerian orbit moves the timed pair about their "
                   "common barycentre; the light-travel time shifts all events alike. Such a "
                   "companion should also show in radial velocities.")

    def parameters(self):
        return (Parameter("light_time_amplitude", "s", "A = a12 sin i / c", DAY_S),
                Parameter("companion_period", "d", "orbital period of the companion P3"),
                Parameter("sqrt_e_cos_omega", "", "√e cos ω"),
                Parameter("sqrt_e_sin_omega", "", "√e sin ω"),
                Parameter("mean_longitude0", "rad", "mean longitude λ0 = M0 + ω at the reference time",
                          periodic=2 * np.pi))

    def bounds(self, data):
        limit = amplitude_limit(data, data.linear_residuals()) / DAY_S
        lo, hi = period_range(data)
        root = np.sqrt(_E_MAX)
        return (np.array([0.0, lo, -root, -root, -4 * np.pi]),
                np.array([limit, hi, root, root, 4 * np.pi]))

    def searched_frequencies(self, data):
        lo, hi = period_range(data)
        return 1.0 / lo - 1.0 / hi

    def guesses(self, data, residuals):
        out = []
        for period in candidate_periods(data, residuals, count=3):
            a, b = sinusoid_at(data, residuals, period)
            amp, phase = np.hypot(a, b) / DAY_S, np.arctan2(b, a)
            for e in (0.02, 0.3, 0.6):
                for omega in (0.0, 0.5 * np.pi, np.pi, 1.5 * np.pi):
                    out.append(np.array([amp, period, np.sqrt(e) * np.cos(omega),
                                         np.sqrt(e) * np.sin(omega), phase % (2 * np.pi)]))
        return out

    def evaluate(self, p, data, base):
        t = base["P"] * (data.epoch + data.phase)
        k, h = p["sqrt_e_cos_omega"], p["sqrt_e_sin_omega"]
        return light_time_delay(t, p["light_time_amplitude"], p["companion_period"], k, h,
                                p["mean_longitude0"] - np.arctan2(h, k))

    def derived(self, p, data):
        import astropy.constants as const
        import astropy.units as u

        amp = p["light_time_amplitude"][..., 0] * DAY_S
        period = p["companion_period"][..., 0]
        k, h = p["sqrt_e_cos_omega"][..., 0], p["sqrt_e_sin_omega"][..., 0]
        e = np.minimum(k ** 2 + h ** 2, _E_MAX)
        omega = np.arctan2(h, k)
        a12 = (amp * u.s * const.c).to_value(u.AU)
        f_m = (4 * np.pi ** 2 * (a12 * u.AU) ** 3 / (const.G * (period * u.day) ** 2)).to_value(u.Msun)
        m0 = p["mean_longitude0"][..., 0] - omega
        t_peri = data.t_ref - (m0 % (2 * np.pi)) / (2 * np.pi) * period
        out = {
            "eccentricity": Derived(e, "", "companion orbit's eccentricity"),
            "omega": Derived(np.degrees(omega) % 360, "deg", "argument of periastron"),
            "half_range": Derived(amp * np.sqrt(1 - e ** 2 * np.cos(omega) ** 2), "s",
                                  "half the peak-to-peak light-time delay (Irwin 1952)"),
            "a12_sin_i": Derived(a12, "AU", "projected semi-major axis of the pair's orbit"),
            "mass_function": Derived(f_m, "Msun", "f(m) = (m3 sin i)^3 / (M + m3)^2"),
            "periastron_time": Derived(t_peri, "BJD_TDB", "a time of periastron passage"),
            "companion_period_yr": Derived(period / YEAR_D, "yr", "companion's period"),
        }
        host = data.host.host_mass
        if host:
            from ttvkit.physics.companions import minimum_companion_mass

            # one root per draw; 2000 evenly spaced draws pin the quantiles
            flat = np.atleast_1d(f_m).ravel()
            chosen = flat[np.linspace(0, flat.size - 1, min(flat.size, 2000)).astype(int)]
            mins = np.array([minimum_companion_mass(f * u.Msun, host * u.Msun).to_value(u.Mjup) for f in chosen])
            out["minimum_companion_mass"] = Derived(mins, "Mjup", "companion mass for sin i = 1")
        return out

    def validity(self, p, data):
        """Valid while the companion's period is shorter than the baseline (a longer one is a trend)."""
        return longer_than_baseline(float(np.ravel(p["companion_period"])[0]), data, "the companion's period")
