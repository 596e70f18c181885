"""Transit geometry: impact parameter and durations.

Winn (2010, "Transits and Occultations", in *Exoplanets*, ed. Seager),
eqs. 7, 14 and 16: b = (a cos i / R*) (1 − e²)/(1 + e sin ω),

    T14 = (P/π) asin[ (R*/a) √((1 + k)² − b²) / sin i ] · √(1 − e²)/(1 + e sin ω),

with k = R_p/R*; T23 the same with (1 − k)².
"""

from __future__ import annotations

import astropy.units as u
import numpy as np

from ttvkit.physics.system import System

__all__ = ["impact_parameter", "transit_durations", "contact_durations"]


def contact_durations(period: float, a_over_rstar: float, radius_ratio: float, impact: float,
                      inclination_rad: float, eccentricity: float = 0.0,
                      omega_rad: float = np.pi / 2) -> tuple[float, float]:
    """(T14, T23) in the unit of ``period`` (Winn 2010 eqs. 14, 16); T23 is 0 for a grazing transit.

    The one implementation of the formula: :func:`transit_durations` (from
    a System) and the light-curve transit shape both call it.
    """
    factor = np.sqrt(1 - eccentricity ** 2) / (1 + eccentricity * np.sin(omega_rad))
    sin_i = np.sin(inclination_rad)

    def duration(size):
        arg = size ** 2 - impact ** 2
        if arg <= 0:
            return 0.0
        return float(period / np.pi * np.arcsin(min(np.sqrt(arg) / (a_over_rstar * sin_i), 1.0)) * factor)

    return duration(1 + radius_ratio), duration(1 - radius_ratio)


def impact_parameter(system: System) -> float:
    """b of the transit (Winn 2010 eq. 7)."""
    orbit = system.orbit
    inc = orbit.need("inclination", "the impact parameter")
    a_rs = float((system.semi_major_axis / system.star.need("radius", "the impact parameter")).decompose())
    e = orbit.eccentricity or 0.0
    w = (orbit.omega if orbit.omega is not None else 90 * u.deg).to_value(u.rad)
    return float(a_rs * np.cos(inc.to_value(u.rad)) * (1 - e ** 2) / (1 + e * np.sin(w)))


def transit_durations(system: System) -> tuple[u.Quantity, u.Quantity]:
    """(T14, T23) in hours; T23 is 0 for a grazing transit (Winn 2010 eqs. 14, 16)."""
    orbit = system.orbit
    period = orbit.need("period", "the transit duration")
    inc = orbit.need("inclination", "the transit duration").to_value(u.rad)
    rs = system.star.need("radius", "the transit duration")
    rp = system.companion.need("radius", "the transit duration")
    k = float((rp / rs).decompose())
    a_rs = float((system.semi_major_axis / rs).decompose())
    e = orbit.eccentricity or 0.0
    w = (orbit.omega if orbit.omega is not None else 90 * u.deg).to_value(u.rad)
    t14, t23 = contact_durations(period.to_value(u.h), a_rs, k, impact_parameter(system), inc, e, w)
    return t14 * u.h, t23 * u.h
