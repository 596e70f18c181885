"""Unseen companions: what a light-travel-time orbit implies, and would it be seen.

A distant companion moves the timed pair around their common barycentre;
the light-travel time across that orbit shifts every mid-time alike (Irwin
1952, ApJ 116, 211).  From the projected semi-major axis of the pair's orbit
a₁₂ sin i = c·A (A the light-time amplitude) and the period P₃:

* the mass function f(m) = 4π² (a₁₂ sin i)³ / (G P₃²) = (m₃ sin i)³/(M + m₃)²;
* the minimum companion mass (sin i = 1), the root of that cubic
  (:func:`scipy.optimize.brentq`);
* the host's RV semi-amplitude K = 2π a₁₂ sin i / (P₃ √(1 − e²));
* against the System's RV limits: over a baseline B the largest RV change
  is 2K sin(min(πB/P₃, π/2)) (a circular-orbit estimate); the companion
  would already have been seen if that exceeds 3× the RV residual RMS
  (common practice, no source; :func:`rv_visibility`, the one rule ttvkit
  uses for every companion and perturber), or if its acceleration 2πK/P₃ exceeds a
  measured acceleration by more than 3σ.

The Rømer effect of a steady line-of-sight acceleration a_r (Bouma et al.
2020, ApJL 893, L29): dP/dt = P a_r / c.

Hill stability of two planets on circular orbits (Gladman 1993, Icarus 106,
247): stable if a₂ − a₁ > 2√3 R_H with the mutual Hill radius
R_H = ((m₁ + m₂)/(3M))^{1/3} (a₁ + a₂)/2.
"""

from __future__ import annotations

from dataclasses import dataclass

import astropy.constants as const
import astropy.units as u
import numpy as np
from scipy.optimize import brentq

from ttvkit.physics.system import System

__all__ = ["projected_orbit_size", "mass_function", "minimum_companion_mass",
           "light_time_companion", "CompanionCheck", "romer_decay_rate", "romer_acceleration",
           "hill_stable", "mutual_hill_separation", "rv_change_over_baseline", "rv_visibility",
           "rv_threshold_semi_amplitude", "RV_DETECTION_SIGMA"]


def projected_orbit_size(light_time_amplitude) -> u.Quantity:
    """a₁₂ sin i = c · A (AU)."""
    return (const.c * u.Quantity(light_time_amplitude, u.s)).to(u.AU)


def mass_function(light_time_amplitude, period) -> u.Quantity:
    """f(m) = 4π² (a₁₂ sin i)³ / (G P²) in M☉."""
    a = projected_orbit_size(light_time_amplitude)
    p = u.Quantity(period, u.yr)
    return (4 * np.pi ** 2 * a ** 3 / (const.G * p ** 2)).to(u.Msun)


def minimum_companion_mass(mass_func, host_mass) -> u.Quantity:
    """Smallest m₃ (sin i = 1) with m₃³/(M + m₃)² = f(m) (M☉)."""
    f = u.Quantity(mass_func, u.Msun).to_value(u.Msun)
    m = u.Quantity(host_mass, u.Msun).to_value(u.Msun)
    if f <= 0:
        return 0 * u.Msun
    g = lambda x: x ** 3 - f * (m + x) ** 2  # noqa: E731
    hi = max(1.0, 10 * f + 10 * m)
    return brentq(g, 0.0, hi, xtol=1e-14, rtol=1e-12) * u.Msun


@dataclass(frozen=True)
class CompanionCheck:
    """What a light-travel-time companion implies and whether RVs would show it."""

    projected_orbit: u.Quantity
    mass_function: u.Quantity
    minimum_mass: u.Quantity
    rv_semi_amplitude: u.Quantity
    rv_change_over_baseline: u.Quantity | None
    rv_limit: u.Quantity | None
    acceleration: u.Quantity
    would_have_been_seen: bool | None
    reason: str


def light_time_companion(system: System, light_time_amplitude, period,
                         eccentricity: float = 0.0) -> CompanionCheck:
    """Mass function, minimum mass and RV signature of an LTTE companion.

    Parameters
    ----------
    system : System
        Host mass (star + companion for a binary) and RV limits.
    light_time_amplitude : Quantity
        A = a₁₂ sin i / c.
    period : Quantity
        Companion's orbital period.
    eccentricity : float

    Returns
    -------
    CompanionCheck
    """
    host = system.star.need("mass", "the light-travel-time companion's minimum mass")
    if system.companion.mass is not None:
        host = host + system.companion.mass
    p = u.Quantity(period, u.yr)
    a = projected_orbit_size(light_time_amplitude)
    f = mass_function(light_time_amplitude, p)
    m_min = minimum_companion_mass(f, host)
    k = (2 * np.pi * a / (p * np.sqrt(1 - eccentricity ** 2))).to(u.m / u.s)
    accel = (2 * np.pi * k / p).to(u.m / u.s / u.day)
    rv = system.radial_velocity
    change = None
    seen = None
    reason = "no RV limits given: cannot say whether radial velocities would show it"
    seen, change, limit = rv_visibility(k, p, rv)
    if seen is not None:
        reason = (f"over the {rv.baseline.to(u.yr):.3g} RV baseline it would change the host's "
                  f"velocity by {change:.3g}, {'more' if seen else 'less'} than 3x the RV scatter "
                  f"({limit:.3g})")
    if rv.acceleration is not None and rv.acceleration_uncertainty is not None:
        excess = (accel - abs(rv.acceleration)) / rv.acceleration_uncertainty
        if float(excess.decompose()) > 3:
            seen = True
            reason += f"; its acceleration {accel:.3g} exceeds the measured one by >3 sigma"
    return CompanionCheck(a, f, m_min.to(u.Mjup), k, change, rv.scatter, accel, seen, reason)


def romer_decay_rate(period, acceleration) -> u.Quantity:
    """Apparent dP/dt = P a_r / c from a line-of-sight acceleration (ms/yr)."""
    p = u.Quantity(period, u.day)
    a = u.Quantity(acceleration, u.m / u.s / u.day)
    return (p * a / const.c).to(u.ms / u.yr)


def romer_acceleration(period, decay_rate) -> u.Quantity:
    """Line-of-sight acceleration a_r = c (dP/dt) / P that a fitted dP/dt would need (m/s/day)."""
    p = u.Quantity(period, u.day)
    rate = u.Quantity(decay_rate, u.ms / u.yr)
    return (const.c * rate / p).to(u.m / u.s / u.day)


#: An RV signal counts as seen when its change over the RV baseline exceeds this many times the RV
#: residual scatter (common practice, no source).
RV_DETECTION_SIGMA = 3.0


def rv_visibility(semi_amplitude, period, limits):
    """The one RV-visibility rule of ttvkit: would the System's RVs already show this signal?

    Seen when the largest RV change over the RV baseline,
    2K sin(min(πB/P, π/2)) (:func:`rv_change_over_baseline`), exceeds
    :data:`RV_DETECTION_SIGMA` × the RV residual scatter.  The change over
    the baseline, not K alone, is the rule because a long-period companion
    moves the star little over a short RV series, however large its K.

    Parameters
    ----------
    semi_amplitude, period : Quantity (scalars or arrays)
    limits : RadialVelocityLimits

    Returns
    -------
    (seen, change, threshold)
        ``seen`` is a bool (or bool array); all three are None when the
        limits lack the scatter or the baseline.
    """
    if limits.scatter is None or limits.baseline is None:
        return None, None, None
    change = rv_change_over_baseline(semi_amplitude, period, limits.baseline)
    threshold = RV_DETECTION_SIGMA * limits.scatter.to(u.m / u.s)
    seen = change > threshold
    return (bool(seen) if np.ndim(seen) == 0 else np.asarray(seen)), change, threshold


def rv_threshold_semi_amplitude(period, limits) -> u.Quantity | None:
    """The smallest K the System's RVs would have seen at each ``period`` (None without limits)."""
    if limits.scatter is None or limits.baseline is None:
        return None
    unit = rv_change_over_baseline(1 * u.m / u.s, period, limits.baseline).to_value(u.m / u.s)
    return RV_DETECTION_SIGMA * limits.scatter.to(u.m / u.s) / unit


def rv_change_over_baseline(semi_amplitude, period, baseline) -> u.Quantity:
    """Largest RV change over a baseline, 2K sin(min(πB/P, π/2)) (circular-orbit estimate; arrays welcome)."""
    phase = np.minimum(np.pi * (u.Quantity(baseline, u.day) / u.Quantity(period, u.day)).decompose().value,
                       np.pi / 2)
    return (2 * u.Quantity(semi_amplitude, u.m / u.s) * np.sin(phase)).to(u.m / u.s)


def mutual_hill_separation(star_mass, mass_1, a_1, mass_2, a_2):
    """(a₂ − a₁) / R_H,mutual (Gladman 1993): a float, or an array for array inputs."""
    ms = u.Quantity(star_mass, u.Msun)
    m1, m2 = u.Quantity(mass_1, u.Mjup), u.Quantity(mass_2, u.Mjup)
    a1, a2 = u.Quantity(a_1, u.AU), u.Quantity(a_2, u.AU)
    r_h = ((m1 + m2) / (3 * ms)) ** (1 / 3) * (a1 + a2) / 2
    value = (abs(a2 - a1) / r_h).decompose().value
    return float(value) if np.ndim(value) == 0 else value


def hill_stable(star_mass, mass_1, a_1, mass_2, a_2):
    """Gladman (1993) criterion for circular orbits: separation > 2√3 mutual Hill radii (bool or bool array)."""
    stable = np.asarray(mutual_hill_separation(star_mass, mass_1, a_1, mass_2, a_2)) > 2 * np.sqrt(3)
    return bool(stable) if stable.ndim == 0 else stable
