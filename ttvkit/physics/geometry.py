"""Transit geometry: impact parameter and durations.

Winn (2010, "Transits and Occultations", in *Exoplanets*, ed. Seager),
eqs. 7, 14 and 16: b = (a cos i / R*) (1 − e²)/(1 + e sin ω),

    T14 = (P/π) asin[ (R*/a) √((1 + k)² − b²) / sin i ] · √(1 − e²)/(1 + e sin ω),

with k = R_p/R*; T23 the same with (1 − k)².
"""

from __future__ import annotations

import astropy.units as u
import numpy as np

from .system import System

__all__ = ["impact_parameter", "transit_durations"]


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
    b = impact_parameter(system)
    e = orbit.eccentricity or 0.0
    w = (orbit.omega if orbit.omega is not None else 90 * u.deg).to_value(u.rad)
    factor = np.sqrt(1 - e ** 2) / (1 + e * np.sin(w))

    def duration(size):
        arg = (size ** 2 - b ** 2)
        if arg <= 0:
            return 0.0
        return float(np.arcsin(min(np.sqrt(arg) / (a_rs * np.sin(inc)), 1.0)))

    p_h = period.to_value(u.h)
    return (p_h / np.pi * duration(1 + k) * factor * u.h, p_h / np.pi * duration(1 - k) * factor * u.h)
