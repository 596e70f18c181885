"""Unit factors and physical constants used in ttvkit's numerical cores, all from astropy.

The cores work in plain floats (days, solar masses, AU, radians); the
factors between those units come from :mod:`astropy.units` and
:mod:`astropy.constants` here, once, rather than being typed by hand.
"""

from __future__ import annotations

import astropy.constants as const
import astropy.units as u

__all__ = ["DAY_S", "YEAR_D", "MEARTH_PER_MSUN", "MJUP_PER_MSUN", "C_AU_PER_DAY", "G_SI", "MSUN_KG"]

#: Seconds in a day.
DAY_S: float = float(u.day.to(u.s))
#: Days in a Julian year (astropy's ``yr``).
YEAR_D: float = float(u.yr.to(u.day))
#: Earth masses in a solar mass (IAU 2015 nominal values, as astropy gives them).
MEARTH_PER_MSUN: float = float((const.M_sun / const.M_earth).decompose())
#: Jupiter masses in a solar mass.
MJUP_PER_MSUN: float = float((const.M_sun / const.M_jup).decompose())
#: The speed of light in AU per day.
C_AU_PER_DAY: float = float(const.c.to_value(u.AU / u.day))
#: The gravitational constant, m³ kg⁻¹ s⁻².
G_SI: float = float(const.G.si.value)
#: The solar mass, kg (IAU 2015 nominal).
MSUN_KG: float = float(const.M_sun.si.value)
