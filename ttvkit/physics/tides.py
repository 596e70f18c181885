"""Tides: orbital decay against the stellar tidal quality factor Q'_*, and apsidal rates.

Constant-phase-lag decay of a circular orbit raised by the star's tide
(Goldreich & Soter 1966, in the form used by Patra et al. 2017, AJ 154, 4,
and Yee et al. 2020, ApJL 888, L5):

    dP/dt = −(27π / 2Q'_*) (M_p / M_*) (R_* / a)⁵.

Assumptions: circular orbit, the planet's tide neglected, Q'_* constant
(no dependence on tidal frequency), the star rotating more slowly than the
orbit (so the orbit shrinks).

Apsidal precession expected from general relativity,
ω̇_GR = 3 (G M)^{3/2} / (c² a^{5/2} (1 − e²)), and from the tidal bulges
of planet and star (Ragozzine & Wolf 2009, ApJ 698, 1778, eq. 7 form):

    ω̇_tide = (15/2) n f(e) [k₂,p (M_*/M_p)(R_p/a)⁵ + k₂,* (M_p/M_*)(R_*/a)⁵],
    f(e) = (1 + 3e²/2 + e⁴/8) / (1 − e²)⁵,

with k₂ the Love numbers (planet default 0.6 for a Jupiter-like n≈1
polytrope, star 0.03; both assumptions, from memory).  Rotational bulges are
left out.
"""

from __future__ import annotations

from dataclasses import dataclass

import astropy.constants as const
import astropy.units as u
import numpy as np

from ttvkit.physics.system import System

__all__ = ["decay_rate_from_quality_factor", "quality_factor_from_decay_rate", "decay_timescale",
           "time_to_roche_limit", "roche_limit", "QUALITY_FACTOR_RANGES", "plausible_quality_factor",
           "general_relativity_precession", "tidal_precession", "MEASURED_QUALITY_FACTORS",
           "QUALITY_FACTOR_FLOOR", "measured_quality_factor_floor"]


def _ratio_terms(system: System, formula: str):
    star, comp = system.star, system.companion
    mp = comp.need("mass", formula)
    ms = star.need("mass", formula)
    rs = star.need("radius", formula)
    a = system.semi_major_axis
    return float((mp / ms).decompose()), float((rs / a).decompose())


def decay_rate_from_quality_factor(system: System, quality_factor: float) -> u.Quantity:
    """dP/dt (ms/yr, negative for decay) for a given Q'_*.

    Examples
    --------
    A Q'_* of 1e6 for a hot Jupiter at a/R* = 3 gives a few ms/yr:

    >>> import astropy.units as u
    >>> from ttvkit.physics import System, Star, Companion, Orbit
    >>> s = System(Star(mass=1.4 * u.Msun, radius=1.65 * u.Rsun), Companion(mass=1.5 * u.Mjup),
    ...            Orbit(period=1.09 * u.day, a_over_rstar=3.0))
    >>> -10 < decay_rate_from_quality_factor(s, 1e6).to_value(u.ms / u.yr) < -1
    True
    """
    q, r = _ratio_terms(system, "the tidal decay rate")
    rate = -27 * np.pi / (2 * quality_factor) * q * r ** 5
    return (rate * u.s / u.s).to(u.ms / u.yr)


def quality_factor_from_decay_rate(system: System, decay_rate) -> float:
    """Q'_* implied by a decay rate dP/dt (Quantity, e.g. ms/yr; or dimensionless s/s).

    A positive dP/dt (period growth) cannot come from the stellar tide of a
    slowly rotating star; the magnitude is used and the caller must judge
    the sign.
    """
    q, r = _ratio_terms(system, "the tidal quality factor Q'_*")
    rate = abs(float(u.Quantity(decay_rate, u.ms / u.yr).to_value(u.dimensionless_unscaled)))
    if rate == 0:
        return float("inf")
    return 27 * np.pi / (2 * rate) * q * r ** 5


def decay_timescale(period, decay_rate) -> u.Quantity:
    """The decay timescale P / abs(dP/dt), in Myr."""
    p = u.Quantity(period, u.day)
    rate = abs(u.Quantity(decay_rate, u.ms / u.yr).to_value(u.dimensionless_unscaled))
    return (p / rate).to(u.Myr)


def roche_limit(system: System) -> u.Quantity:
    """Roche limit of a fluid planet, a_R = 2.16 R_p (M_*/M_p)^{1/3} (Guillochon et al. 2011; memory)."""
    rp = system.companion.need("radius", "the Roche limit")
    mp = system.companion.need("mass", "the Roche limit")
    ms = system.star.need("mass", "the Roche limit")
    return (2.16 * rp * (ms / mp) ** (1 / 3)).to(u.AU)


def time_to_roche_limit(system: System, decay_rate) -> u.Quantity:
    """Remaining time until the orbit shrinks to the Roche limit (Myr).

    With constant Q'_*, ȧ ∝ a^{−11/2}, so t = (2/13)(a/abs(ȧ))[1 − (a_R/a)^{13/2}]
    and a/ȧ = (3/2) P/Ṗ.
    """
    a = system.semi_major_axis
    a_r = roche_limit(system)
    tau = decay_timescale(system.orbit.need("period", "the time to the Roche limit"), decay_rate)
    frac = float((a_r / a).decompose())
    if frac >= 1:
        return 0 * u.Myr
    return (3 / 13) * tau * (1 - frac ** 6.5)


@dataclass(frozen=True)
class QualityFactorRange:
    """A range of log10 Q'_* that published studies find plausible."""

    star_type: str
    log10_low: float
    log10_high: float
    source: str


#: Plausible Q'_* by star type.  Ranges recalled from the cited studies
#: (memory; order of magnitude): binary circularisation (Meibom & Mathieu
#: 2005, ApJ 620, 970) gives 10^5.5–10^6 for solar-type stars; the survival
#: of hot Jupiters (Jackson, Greenberg & Barnes 2008, ApJ 678, 1396; Hansen
#: 2012, ApJ 757, 6) wants 10^6–10^8; tidal-period-dependent fits (Penev et
#: al. 2018, AJ 155, 165) span 10^5–10^7; an evolved or F-type host may sit
#: at 10^5 (WASP-12: Yee et al. 2020; Weinberg et al. 2017, ApJL 849, L11).
#: The ``source`` strings are what a report prints (author, year, journal); that the ranges are
#: recalled, not re-read, is stated here and in the documentation.  A measured Q'_* outside them is
#: reported as a tension, never excluded (diagnosis.checks).
QUALITY_FACTOR_RANGES = (
    QualityFactorRange("solar-type dwarf (Teff < 6100 K)", 5.0, 8.5,
                       "Meibom & Mathieu 2005, ApJ 620, 970; Hansen 2012, ApJ 757, 6; "
                       "Penev et al. 2018, AJ 155, 165"),
    QualityFactorRange("F-type dwarf (Teff >= 6100 K)", 5.5, 9.0,
                       "Hansen 2012, ApJ 757, 6; Penev et al. 2018, AJ 155, 165"),
    QualityFactorRange("subgiant", 4.5, 7.0,
                       "Weinberg et al. 2017, ApJL 849, L11; Yee et al. 2020, ApJL 888, L5"),
)


#: Q'_* measured from the decay of real hot-Jupiter orbits: (value, 1σ or None, source).  Read in the
#: abstracts or catalogue ReadMe (shared/CHECKS.md); the lowest bounds what "has been measured".
MEASURED_QUALITY_FACTORS = (
    (1.39e5, 0.15e5, "Turner et al. 2021, AJ 161, 72 (WASP-12)"),
    (1.8e5, None, "Yee et al. 2020, ApJL 888, L5 (WASP-12)"),
    (1.72e5, 0.39e5, "Kutluay et al. 2023, TJAA 4, 10 (WASP-12)"),
    (2.5e5, None, "Maciejewski et al. 2016, A&A 588, L6 (WASP-12)"),
)

#: The floor below which a Q'_* is physically impossible.  Q'_* = 3Q/(2k₂), with Q ≥ 1 (a tide cannot
#: dissipate more than its whole energy per cycle: Q⁻¹ = sin of twice the lag angle, at most 1) and
#: k₂ ≤ 3/2 (a homogeneous fluid body, the most deformable; centrally condensed stars have far less),
#: so Q'_* ≥ 1 (Goldreich & Soter 1966 definitions; from memory).  Anything between this floor and
#: the measured values is "unusual", never excluded.
QUALITY_FACTOR_FLOOR = 1.0


def measured_quality_factor_floor() -> tuple[float, str]:
    """The lowest Q'_* measured on a real orbit, as its lower 2σ bound, and the source."""
    low = min(MEASURED_QUALITY_FACTORS, key=lambda m: m[0] - 2 * (m[1] or 0.0))
    return low[0] - 2 * (low[1] or 0.0), low[2]


def plausible_quality_factor(system: System) -> QualityFactorRange:
    """The documented Q'_* range for the star's type (by T_eff, and log g for subgiants)."""
    star = system.star
    teff = star.teff
    if star.mass is not None and star.radius is not None:
        logg = np.log10((const.G * star.mass / star.radius ** 2).to_value(u.cm / u.s ** 2))
        if logg < 3.9:
            return QUALITY_FACTOR_RANGES[2]
    if teff is not None and teff >= 6100 * u.K:
        return QUALITY_FACTOR_RANGES[1]
    return QUALITY_FACTOR_RANGES[0]


def general_relativity_precession(mass, semi_major_axis, eccentricity: float = 0.0) -> u.Quantity:
    """Relativistic apsidal rate ω̇ = 3 (GM)^{3/2} / (c² a^{5/2} (1 − e²)) (deg/yr).

    ``mass`` is the total mass of the pair.

    Examples
    --------
    Mercury (textbook: 42.98″ per century):

    >>> import astropy.units as u
    >>> rate = general_relativity_precession(1 * u.Msun, 0.387098 * u.AU, 0.205630)
    >>> round(rate.to_value(u.arcsec / (100 * u.yr)), 1)
    43.0
    """
    gm = const.G * u.Quantity(mass, u.Msun)
    a = u.Quantity(semi_major_axis, u.AU)
    rate = 3 * gm ** 1.5 / (const.c ** 2 * a ** 2.5 * (1 - eccentricity ** 2)) * u.rad
    return rate.to(u.deg / u.yr)


def tidal_precession(system: System, love_number_planet: float | None = None,
                     love_number_star: float = 0.03) -> u.Quantity:
    """Apsidal rate from the tidal bulges of planet and star (deg/yr; Ragozzine & Wolf 2009)."""
    star, comp, orbit = system.star, system.companion, system.orbit
    mp = comp.need("mass", "the tidal precession rate")
    rp = comp.need("radius", "the tidal precession rate")
    ms = star.need("mass", "the tidal precession rate")
    rs = star.need("radius", "the tidal precession rate")
    period = orbit.need("period", "the tidal precession rate")
    k2p = love_number_planet if love_number_planet is not None else (comp.love_number or 0.6)
    e = orbit.eccentricity or 0.0
    a = system.semi_major_axis
    n = 2 * np.pi / period
    f = (1 + 1.5 * e ** 2 + e ** 4 / 8) / (1 - e ** 2) ** 5
    terms = k2p * (ms / mp) * (rp / a) ** 5 + love_number_star * (mp / ms) * (rs / a) ** 5
    return (7.5 * n * f * terms.decompose() * u.rad).to(u.deg / u.yr)
