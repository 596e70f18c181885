"""Invented systems shared by the tests (one definition each, instead of copies in every file).

Each factory returns a :class:`ttvkit.physics.System`; keyword arguments
change the orbital period or the RV limits.  All values are invented; tests
that check published numbers build their real systems beside the check.
"""

import astropy.units as u

from ttvkit.physics import Companion, Orbit, RadialVelocityLimits, Star, System


def sun_and_jupiter(period_days: float = 2.0, rv_baseline_yr: float | None = 5.0, rv_rms: float = 3.0,
                    name: str = "test pair") -> System:
    """A Sun-like star with a Jupiter-mass planet; RV limits over ``rv_baseline_yr`` (None: no RVs)."""
    limits = (RadialVelocityLimits(baseline=rv_baseline_yr * u.yr, residual_rms=rv_rms * u.m / u.s)
              if rv_baseline_yr is not None else RadialVelocityLimits())
    return System(Star(mass=1 * u.Msun, radius=1 * u.Rsun, teff=5800 * u.K), Companion(mass=1 * u.Mjup),
                  Orbit(period=period_days * u.day), limits, name=name)


def k_dwarf_binary(period_days: float = 2.0, **star) -> System:
    """An active K dwarf with a 0.6-M☉ stellar companion, synchronised (no rotation period given)."""
    fields = dict(mass=0.7 * u.Msun, radius=0.7 * u.Rsun, teff=4500 * u.K)
    fields.update(star)
    return System(Star(**fields), Companion(mass=0.6 * u.Msun), Orbit(period=period_days * u.day))
