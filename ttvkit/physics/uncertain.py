"""Uncertain inputs: Monte Carlo draws of a System whose values carry 1σ uncertainties.

A system file may give ``mass = "1.43 +- 0.07 Msun"``; :class:`~ttvkit.physics.System`
keeps the value and, in ``System.uncertainties``, its 1σ error.  The checks
propagate those errors by drawing systems: each uncertain value from a
normal distribution truncated to positive values (every such quantity is
positive), independently (correlations between, say, a star's mass and
radius are not known from a system file), and every value the System derives
(luminosity from R and T_eff, the semi-major axis) derived again from the
drawn inputs.  Units in, units out: the draws are Systems.
"""

from __future__ import annotations

import copy

import numpy as np

from ttvkit.physics.system import System

__all__ = ["system_draws", "draw_values"]


def _draw(value, error, rng):
    """One draw of ``value`` (Quantity or float) with 1σ ``error``, redrawn until positive (≤ 20 tries)."""
    for _ in range(20):
        x = value + error * rng.standard_normal()
        if np.all(np.asarray(getattr(x, "value", x)) > 0):
            return x
    return value


def system_draws(system: System, count: int = 200, seed=0) -> list[System]:
    """``count`` copies of ``system`` with every uncertain value drawn from its uncertainty.

    Parameters
    ----------
    system : System
    count : int
        Number of draws.  With no uncertainties every draw is the system itself.
    seed : int or numpy.random.Generator

    Returns
    -------
    list of System
    """
    if not system.uncertainties:
        return [system] * count
    rng = np.random.default_rng(seed)
    out = []
    for _ in range(count):
        sections = {}
        for name in ("star", "companion", "orbit", "radial_velocity", "other_star"):
            if getattr(system, name, None) is None:
                continue
            obj = copy.copy(getattr(system, name))
            for key in getattr(obj, "derived_fields", ()):
                setattr(obj, key, None)      # derived again from the drawn inputs
            sections[name] = obj
        for key, error in system.uncertainties.items():
            section, field = key.split(".", 1)
            obj = sections[section]
            setattr(obj, field, _draw(getattr(obj, field), error, rng))
        star = sections["star"]
        star.__post_init__()
        other = sections.get("other_star")
        if other is not None:
            other.__post_init__()
            # the companion is the other star: one draw for both
            for key in ("mass", "radius"):
                if f"other_star.{key}" in system.uncertainties:
                    setattr(sections["companion"], key, getattr(other, key))
        out.append(System(star, sections["companion"], sections["orbit"], sections["radial_velocity"],
                          system.name, {}, other))
    return out


def draw_values(system: System, key: str, count: int = 200, seed=0) -> np.ndarray:
    """Draws of one value ``"section.key"`` (plain floats in the value's unit; constant if certain)."""
    section, field = key.split(".", 1)
    value = getattr(getattr(system, section), field)
    error = system.uncertainties.get(key)
    plain = float(getattr(value, "value", value))
    if error is None:
        return np.full(count, plain)
    rng = np.random.default_rng(seed)
    unit = getattr(value, "unit", None)
    err = float(error.to_value(unit)) if unit is not None else float(error)
    draws = plain + err * rng.standard_normal(count)
    return np.abs(draws)
