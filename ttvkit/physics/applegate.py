"""What an activity cycle can do to an orbit: the Applegate energy budget.

Applegate (1992, ApJ 385, 621): a magnetic activity cycle moves angular
momentum ΔJ between the star's interior and an outer shell; the shell's
changed spin changes the star's quadrupole moment Q, and through the
gravitational quadrupole coupling the orbital period changes,

    ΔP/P = −9 (R/a)² ΔQ / (M R²).                                (Applegate 1992)

The chain computed here, from an O−C semi-amplitude A (half the
peak-to-peak O−C) and a modulation period P_mod:

1. ΔP/P = 2π A / P_mod (the slope of A sin(2πt/P_mod));
2. ΔQ = −(ΔP/P) M a² / 9;
3. a rotating shell's quadrupole Q = (1/9) M_s R² (Ω² R³ / G M), so a spin
   change ΔΩ_s gives ΔQ = (2/9) M_s R⁵ Ω ΔΩ_s / (G M), and with
   I_s = (2/3) M_s R² the angular momentum moved is
   ΔJ = I_s ΔΩ_s = 3 G M ΔQ / (Ω R³).  With Ω = 2π/P (a synchronised star)
   this is Applegate's ΔJ = −(G M²/R)(a/R)² ΔP/(6π); here Ω is **the star's
   own spin** when its rotation period is known (planet hosts are not
   synchronised), and every result says which spin it used;
4. the change of differential rotation ΔΩ = ΔJ / I_eff with
   I_eff = I_s I_* / (I_s + I_*);
5. the energy ΔE = Ω_dr ΔJ + ΔJ² / (2 I_eff), with Ω_dr = ΔΩ by default
   (Applegate's estimate that the differential rotation is of the order of its
   change; ``differential_rotation="none"`` gives the minimum ΔJ²/(2 I_eff));
6. the luminosity variation ΔL ≈ π ΔE / P_mod and the energy ratio
   ΔE / (L P_mod): above 1 the star cannot power the modulation.

Two models:

* **thin shell** (Applegate 1992; also Tian, Xiang & Tao 2009, Ap&SS 319,
  119): a shell of mass M_s (0.1 M by default) at the surface around a core
  of moment I_* = k²(M − M_s) R², k² the gyration constant of the star's
  polytrope;
* **finite shell**, a two-zone model in the manner of Völschow et al. (2016,
  A&A 587, A34): the shell has a finite thickness, the density comes from a
  Lane–Emden polytrope (:mod:`ttvkit.physics.structure`; n = 1.5 for a fully
  convective star, n = 3 otherwise, or the System's ``polytropic_index``),
  each layer's quadrupole responds to the mass inside it,
  dQ = (2/9) r⁵ Ω ΔΩ_s dm / (G m(r)), and the energy is minimised over the
  shell's inner radius.

Assumptions: rigid rotation of core and shell separately, a quadrupole that
follows the shell's spin at once, a sinusoidal modulation, and the star's
whole luminosity available.  It is a plausibility screen, not a model of a
dynamo.  Formula chain recalled from Applegate (1992), from memory; the
general-spin form of step 3 is our derivation.
"""

from __future__ import annotations

from dataclasses import asdict, dataclass

import astropy.constants as const
import astropy.units as u
import numpy as np

from ttvkit.errors import InputError
from ttvkit.physics.structure import polytrope
from ttvkit.physics.system import System

__all__ = ["ActivityBudget", "period_change_from_amplitude", "thin_shell_budget",
           "finite_shell_budget", "activity_budgets", "activity_envelope"]

_ASSUMPTIONS = ("rigidly rotating core and shell exchanging angular momentum; quadrupole "
                "follows the shell's spin; sinusoidal modulation; the star's whole "
                "luminosity available over one modulation period")


@dataclass(frozen=True)
class ActivityBudget:
    """The Applegate budget of one O−C modulation for one star and one model.

    All quantities are astropy Quantities (SI) or plain floats.
    """

    model: str
    amplitude: u.Quantity
    modulation_period: u.Quantity
    delta_P_over_P: float
    delta_Q: u.Quantity
    delta_J: u.Quantity
    delta_Omega_over_Omega: float
    delta_E: u.Quantity
    delta_L: u.Quantity
    delta_L_over_L: float
    energy_ratio: float
    shell_mass: u.Quantity
    shell_thickness: u.Quantity
    spin_used: str
    structure: str
    assumptions: str = _ASSUMPTIONS

    @property
    def max_amplitude(self) -> u.Quantity:
        """Largest O−C semi-amplitude the star can power at this modulation period.

        Every energy term is quadratic in ΔJ ∝ A, so the ratio scales as A².
        """
        return (self.amplitude / np.sqrt(self.energy_ratio)).to(u.s)

    def to_dict(self) -> dict:
        """Plain-JSON form: each quantity as {"value", "unit"} in SI."""
        out = {}
        for key, value in asdict(self).items():
            if isinstance(value, u.Quantity):
                si = value.si
                out[key] = {"value": float(si.value), "unit": si.unit.to_string()}
            else:
                out[key] = value
        m = self.max_amplitude
        out["max_amplitude"] = {"value": float(m.value), "unit": "s"}
        return out


def period_change_from_amplitude(amplitude, modulation_period) -> float:
    """ΔP/P = 2π A / P_mod for an O−C semi-amplitude A.

    Parameters
    ----------
    amplitude : Quantity or float
        O−C semi-amplitude (seconds if a float).
    modulation_period : Quantity or float
        Modulation period (years if a float).

    Examples
    --------
    >>> import astropy.units as u
    >>> round(period_change_from_amplitude(60 * u.s, 28 * u.yr) * 1e7, 2)
    4.27
    """
    a = u.Quantity(amplitude, u.s)
    p = u.Quantity(modulation_period, u.yr)
    return float((2 * np.pi * a / p).decompose())


def _spin(system: System):
    star, orbit = system.star, system.orbit
    if star.rotation_period is not None:
        return (2 * np.pi / star.rotation_period).to(1 / u.s), \
            f"the star's own rotation period ({star.rotation_period.to(u.day):.3g})"
    period = orbit.need("period", "the Applegate budget (a synchronised star's spin)")
    return (2 * np.pi / period).to(1 / u.s), \
        f"synchronous rotation with the orbit ({period.to(u.day):.4g}; no rotation period given)"


def _common(system: System, amplitude, modulation_period):
    star = system.star
    mass = star.need("mass", "the Applegate budget")
    radius = star.need("radius", "the Applegate budget")
    lum = star.need("luminosity", "the Applegate energy ratio (give teff or luminosity)")
    a = system.semi_major_axis
    dpp = period_change_from_amplitude(amplitude, modulation_period)
    delta_q = (dpp * mass * a ** 2 / 9).to(u.kg * u.m ** 2)  # magnitude of ΔQ
    omega, spin_used = _spin(system)
    return mass, radius, lum, dpp, delta_q, omega, spin_used


def _finish(model, amplitude, modulation_period, dpp, delta_q, delta_j, i_eff, omega, lum,
            shell_mass, thickness, spin_used, structure, differential_rotation):
    delta_omega = (delta_j / i_eff).to(1 / u.s)
    omega_dr = delta_omega if differential_rotation == "equal" else 0 / u.s
    delta_e = (omega_dr * delta_j + delta_j ** 2 / (2 * i_eff)).to(u.J)
    p_mod = u.Quantity(modulation_period, u.yr)
    delta_l = (np.pi * delta_e / p_mod).to(u.W)
    return ActivityBudget(
        model=model, amplitude=u.Quantity(amplitude, u.s), modulation_period=p_mod,
        delta_P_over_P=dpp, delta_Q=delta_q, delta_J=delta_j.to(u.kg * u.m ** 2 / u.s),
        delta_Omega_over_Omega=float((delta_omega / omega).decompose()),
        delta_E=delta_e, delta_L=delta_l, delta_L_over_L=float((delta_l / lum).decompose()),
        energy_ratio=float((delta_e / (lum * p_mod)).decompose()),
        shell_mass=shell_mass.to(u.Msun), shell_thickness=thickness.to(u.Rsun),
        spin_used=spin_used, structure=structure)


def thin_shell_budget(system: System, amplitude, modulation_period, shell_mass_fraction: float = 0.1,
                      core_inertia=None, differential_rotation: str = "equal") -> ActivityBudget:
    """Applegate budget in the thin-shell model.

    Parameters
    ----------
    system : System
    amplitude : Quantity
        O−C semi-amplitude.
    modulation_period : Quantity
    shell_mass_fraction : float
        Shell mass / stellar mass (0.1 by default, Applegate 1992).
    core_inertia : Quantity, optional
        Moment of inertia of the interior; default k²(M − M_s)R² with k² of
        the star's polytrope.
    differential_rotation : {"equal", "none"}
        Ω_dr = ΔΩ (default) or 0.

    Returns
    -------
    ActivityBudget
    """
    fraction = float(shell_mass_fraction)
    if not 0 < fraction < 1:  # outside, the shell's energy turns negative or the core vanishes
        raise InputError(f"shell_mass_fraction {fraction:g} must be a fraction of the star's mass, "
                         "strictly between 0 and 1 (e.g. 0.1)")
    mass, radius, lum, dpp, delta_q, omega, spin_used = _common(system, amplitude, modulation_period)
    n = system.star.structure_index
    shell_mass = fraction * mass
    i_shell = (2 / 3) * shell_mass * radius ** 2
    if core_inertia is None:
        core_inertia = polytrope(n).gyration_squared * (mass - shell_mass) * radius ** 2
    i_eff = i_shell * core_inertia / (i_shell + core_inertia)
    delta_j = 3 * const.G * mass * delta_q / (omega * radius ** 3)
    return _finish("thin shell", amplitude, modulation_period, dpp, delta_q, delta_j, i_eff, omega, lum,
                   shell_mass, 0 * u.Rsun, spin_used,
                   f"thin shell of {shell_mass_fraction:g} M; core k² from an n = {n:g} polytrope",
                   differential_rotation)


def finite_shell_budget(system: System, amplitude, modulation_period,
                        differential_rotation: str = "equal", inner_radius=None) -> ActivityBudget:
    """Applegate budget in the finite-shell two-zone model, minimised over thickness.

    Parameters
    ----------
    system : System
    amplitude : Quantity
        O−C semi-amplitude.
    modulation_period : Quantity
    differential_rotation : {"equal", "none"}
    inner_radius : float, optional
        Fix the shell's inner radius (in units of R) instead of minimising.

    Returns
    -------
    ActivityBudget
        At the shell thickness that needs the least energy.
    """
    mass, radius, lum, dpp, delta_q, omega, spin_used = _common(system, amplitude, modulation_period)
    n = system.star.structure_index
    poly = polytrope(n)
    x, m, dm = poly.x[1:], poly.mass[1:], poly.dm_dx[1:]
    # cumulative integrals from the centre; shell = [x_in, 1]
    from scipy.integrate import cumulative_trapezoid

    s5 = cumulative_trapezoid(x ** 5 * dm / m, x, initial=0.0)
    s2 = cumulative_trapezoid(x ** 2 * dm, x, initial=0.0)
    shell_s5 = s5[-1] - s5
    shell_i = (2 / 3) * (s2[-1] - s2)
    core_i = (2 / 3) * s2
    if inner_radius is not None:
        k = np.array([int(np.clip(np.searchsorted(x, inner_radius), 1, x.size - 2))])
    else:
        k = np.arange(1, x.size - 1)
    mr2 = mass * radius ** 2
    i_s = shell_i[k] * mr2
    i_c = core_i[k] * mr2
    i_eff = i_s * i_c / (i_s + i_c)
    delta_omega_shell = 9 * const.G * delta_q / (2 * omega * radius ** 5 * shell_s5[k])
    delta_j = i_s * delta_omega_shell
    omega_factor = 1.5 if differential_rotation == "equal" else 0.5
    energy = omega_factor * (delta_j ** 2 / i_eff).to(u.J)
    best = int(np.argmin(energy.value))
    kb = k[best]
    return _finish("finite shell", amplitude, modulation_period, dpp, delta_q, delta_j[best], i_eff[best],
                   omega, lum, (1 - m[kb]) * mass, (1 - x[kb]) * radius, spin_used,
                   f"n = {n:g} polytrope; shell from {x[kb]:.3f} R to the surface (least energy)",
                   differential_rotation)


def activity_budgets(system: System, amplitude, modulation_period, **kwargs) -> dict:
    """Both models: ``{"thin shell": ActivityBudget, "finite shell": ActivityBudget}``."""
    shell = kwargs.pop("shell_mass_fraction", 0.1)
    return {"thin shell": thin_shell_budget(system, amplitude, modulation_period, shell, **kwargs),
            "finite shell": finite_shell_budget(system, amplitude, modulation_period, **kwargs)}


def activity_envelope(system: System, modulation_periods, model: str = "thin shell",
                      **kwargs) -> u.Quantity:
    """Largest O−C semi-amplitude the star can power, against modulation period.

    Parameters
    ----------
    system : System
    modulation_periods : Quantity array
    model : {"thin shell", "finite shell"}

    Returns
    -------
    Quantity
        Semi-amplitudes (s) at which the energy ratio is 1.
    """
    periods = np.atleast_1d(u.Quantity(modulation_periods, u.yr))
    func = thin_shell_budget if model == "thin shell" else finite_shell_budget
    if model not in ("thin shell", "finite shell"):
        raise ValueError(f"unknown model {model!r}; use 'thin shell' or 'finite shell'")
    return u.Quantity([func(system, 1 * u.s, p, **kwargs).max_amplitude for p in periods]).to(u.s)
