"""Consistency gates of a system file: numbers that cannot all be true together.

* a/R* against Kepler's third law from the masses, the stellar radius and
  the period: a warning beyond 20 %, an error beyond a factor 2 (issue 13's
  thresholds: common practice, no source);
* an orbit inside the star (a < R*, or a(1 − e) < R*): an error;
* an orbit inside the planet's Roche limit, a_R ≈ 2.16 R_p (M*/M_p)^(1/3)
  (Rappaport et al. 2013, ApJL 773, L15; from memory): a warning only, since
  a remembered value must not by itself exclude anything;
* a stellar radius written in Jupiter or Earth radii (a planet's radius put
  in the star's table?): a warning.
"""

from __future__ import annotations

import warnings

import astropy.constants as const
import astropy.units as u
import numpy as np

from ttvkit.errors import InputError, TtvkitWarning

__all__ = ["SystemWarning", "check_consistency"]

_WARN_RATIO, _ERROR_RATIO = 1.2, 2.0
_ROCHE = 2.16  # Rappaport et al. 2013 (from memory)


class SystemWarning(TtvkitWarning):
    """A system-file value is possible but unusual."""


def check_consistency(system, where: str, radius_text=None) -> None:
    """Raise or warn, naming the file and the keys, when the system's numbers disagree."""
    star, comp, orbit = system.star, system.companion, system.orbit
    if isinstance(radius_text, str) and u.Quantity(radius_text).unit in (u.Rjup, u.Rearth):
        warnings.warn(f"{where}: [star] radius = {radius_text!r} is given in planetary radii "
                      f"({star.radius.to(u.Rsun):.3g}); is it the companion's radius?", SystemWarning,
                      stacklevel=4)
    if orbit.a_over_rstar is not None and orbit.period is not None and star.mass is not None \
            and star.radius is not None:
        total = star.mass + (comp.mass if comp.mass is not None else 0 * u.Msun)
        kepler = float(((const.G * total * orbit.period ** 2 / (4 * np.pi ** 2)) ** (1 / 3) / star.radius)
                       .decompose())
        ratio = max(orbit.a_over_rstar / kepler, kepler / orbit.a_over_rstar)
        text = (f"{where}: [orbit] a_over_rstar = {orbit.a_over_rstar:g}, but Kepler's third law from "
                f"the masses, [star] radius and [orbit] period gives {kepler:.3g} ({ratio:.2f}x apart)")
        if ratio > _ERROR_RATIO:
            raise InputError(text + "; one of these values is wrong (a unit? the planet's radius?)")
        if ratio > _WARN_RATIO:
            warnings.warn(text, SystemWarning, stacklevel=4)
    if orbit.semi_major_axis is None or star.radius is None:
        return
    a_rs = float((orbit.semi_major_axis / star.radius).decompose())
    e = orbit.eccentricity or 0.0
    if a_rs * (1 - e) <= 1:
        raise InputError(f"{where}: the orbit lies inside the star (periastron {a_rs * (1 - e):.3g} stellar "
                         "radii); check [orbit] and [star] radius")
    if comp.mass is not None and comp.radius is not None and star.mass is not None \
            and getattr(system, "other_star", None) is None:       # a planet's Roche limit, not a star's
        roche = _ROCHE * float((comp.radius / orbit.semi_major_axis).decompose()) \
            * float((star.mass / comp.mass).decompose()) ** (1 / 3)
        if roche > 1:
            warnings.warn(f"{where}: the orbit lies inside the companion's Roche limit (a = {1 / roche:.2f} "
                          "a_Roche, with a_Roche = 2.16 R_p (M*/M_p)^(1/3), Rappaport et al. 2013, from "
                          "memory); check the masses and radii", SystemWarning, stacklevel=4)
