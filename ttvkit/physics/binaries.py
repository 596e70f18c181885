"""What changes the period of a close binary: mass transfer, magnetic braking, either star's activity.

Three pieces of physics for eclipse timers, units in and units out.

**Conservative mass transfer.**  The orbital angular momentum of two point
masses on a circular orbit is

    J = M₁ M₂ √(G a / M),   M = M₁ + M₂,

and Kepler's third law a³ = G M P² / 4π² turns it into
J = M₁ M₂ (G² P / 2π M)^{1/3}.  With M and J constant (conservative
transfer: no mass or angular momentum leaves the binary)
ln P = −3 ln(M₁ M₂) + const, so

    Ṗ / P = −3 (Ṁ₁/M₁ + Ṁ₂/M₂).

Sign convention used throughout: the *donor* loses mass at the transfer
rate Ṁ_tr > 0 (Ṁ_d = −Ṁ_tr) and the *accretor* gains it (Ṁ_a = +Ṁ_tr), so

    Ṗ / P = 3 Ṁ_tr (1/M_d − 1/M_a) = 3 Ṁ_tr (M_a − M_d) / (M_d M_a).

The period **grows** when the donor is the **less** massive star (the usual
case after mass-ratio reversal, e.g. Algols) and **shrinks** when the donor
is the more massive one.  A negative rate means transfer the other way.
The relation is the standard one in Hilditch (2001, *An Introduction to
Close Binary Stars*, CUP, §4), checked here against our own derivation
(textbook form from memory).

The donor's thermal (Kelvin–Helmholtz) timescale τ_KH = G M² / (R L) sets
the fastest transfer it can sustain for long, Ṁ_KH ≈ M / τ_KH (Sun:
τ_KH ≈ 3 × 10⁷ yr; textbook value, from memory).  A fitted rate far above
it is a tension, not a proof of anything.

**Magnetic braking** of a tidally locked binary with a convective star:
Rappaport, Verbunt & Joss (1983, ApJ 275, 713) write the spin-down torque as

    J̇ = −3.8 × 10⁻³⁰ M R☉⁴ (R/R☉)^γ ω³  dyn cm   (M in g, ω in s⁻¹),

with γ between 0 and 4 (γ = 4 is the Verbunt & Zwaan 1981 form
J̇ ∝ M R⁴ ω³); the coefficient and the γ family are from memory.  Tides
take the lost spin from the orbit, so for a synchronised star ω = 2π/P and
the total J = J_orb + Σ I_i ω changes as dJ/dP = J_orb/(3P) − Σ I_i ω / P,
giving

    Ṗ / P = J̇ / (J_orb/3 − Σ I_i ω)

(with the spins neglected, Ṗ/P = 3 J̇ / J_orb).  Braking always shortens the
period.

**The Applegate budget of either star.**  In a binary either star may be
the active one.  :func:`applegate_for_each_star` runs the thin- and
finite-shell budgets of :mod:`ttvkit.physics.applegate` once with each star
in the role of the active star (building a swapped :class:`System`; the
budget code is not changed), so a verdict can say which star, if any,
could power the modulation.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import astropy.constants as const
import astropy.units as u
import numpy as np

from ttvkit.errors import InputError, MissingValueError
from ttvkit.physics.applegate import ActivityBudget, activity_budgets
from ttvkit.physics.system import Companion, Star, System

__all__ = ["orbital_angular_momentum", "period_change_from_transfer", "transfer_rate_from_period_change",
           "roche_lobe_radius",
           "thermal_timescale", "thermal_transfer_rate", "braking_torque", "period_change_from_braking",
           "StarBudgets", "swapped_system", "applegate_for_each_star"]

#: Rappaport, Verbunt & Joss (1983) braking coefficient, cgs (from memory).
RVJ_COEFFICIENT = 3.8e-30


def _mass(value, name: str) -> u.Quantity:
    q = u.Quantity(value, u.Msun)
    if not np.all(q.value > 0):
        raise InputError(f"{name} must be positive, got {value}")
    return q


def orbital_angular_momentum(mass_1, mass_2, period) -> u.Quantity:
    """Orbital angular momentum of a circular binary, J = M₁M₂ (G²P / 2πM)^{1/3}.

    Parameters
    ----------
    mass_1, mass_2 : Quantity
        Masses (M☉ if floats).
    period : Quantity
        Orbital period (days if a float).

    Returns
    -------
    Quantity
        kg m² s⁻¹.
    """
    m1, m2 = _mass(mass_1, "mass_1"), _mass(mass_2, "mass_2")
    p = u.Quantity(period, u.day)
    total = m1 + m2
    return (m1 * m2 * (const.G ** 2 * p / (2 * np.pi * total)) ** (1 / 3)).to(u.kg * u.m ** 2 / u.s)


def period_change_from_transfer(transfer_rate, donor_mass, accretor_mass, period=None):
    """Ṗ/P (or Ṗ, if ``period`` is given) of conservative mass transfer.

    Parameters
    ----------
    transfer_rate : Quantity
        Ṁ_tr > 0: mass flows from the donor to the accretor (M☉/yr if a
        float).  Negative: the other way.
    donor_mass, accretor_mass : Quantity
        Current masses (M☉ if floats).
    period : Quantity, optional
        Orbital period; if given, Ṗ is returned (s/yr) instead of Ṗ/P (1/yr).

    Returns
    -------
    Quantity
        Ṗ/P = 3 Ṁ_tr (1/M_d − 1/M_a): positive (period grows) when the donor
        is the less massive star.

    Examples
    --------
    >>> import astropy.units as u
    >>> r = period_change_from_transfer(1e-7 * u.Msun / u.yr, 0.5 * u.Msun, 1.0 * u.Msun)
    >>> round(r.to_value(1 / u.yr) * 1e7, 6)
    3.0
    """
    rate = u.Quantity(transfer_rate, u.Msun / u.yr)
    md, ma = _mass(donor_mass, "donor_mass"), _mass(accretor_mass, "accretor_mass")
    relative = (3 * rate * (1 / md - 1 / ma)).to(1 / u.yr)
    if period is None:
        return relative
    return (relative * u.Quantity(period, u.day)).to(u.s / u.yr)


def transfer_rate_from_period_change(period_change, donor_mass, accretor_mass, period=None) -> u.Quantity:
    """The conservative transfer rate Ṁ_tr that gives an observed period change.

    Parameters
    ----------
    period_change : Quantity
        Ṗ/P (1/yr) or, with ``period`` given, Ṗ (s/yr or any time/time).
    donor_mass, accretor_mass : Quantity
        Which star is taken as the donor decides the sign of the answer.
    period : Quantity, optional

    Returns
    -------
    Quantity
        M☉/yr; positive means donor → accretor as named.  Equal masses give
        no period change for any rate, and raise InputError.
    """
    md, ma = _mass(donor_mass, "donor_mass"), _mass(accretor_mass, "accretor_mass")
    if period is None:
        relative = u.Quantity(period_change, 1 / u.yr)
    else:
        relative = (u.Quantity(period_change) / u.Quantity(period, u.day)).to(1 / u.yr)
    factor = 3 * (1 / md - 1 / ma)
    if np.any(np.abs((factor * u.Msun).decompose().value) < 1e-12):
        raise InputError("equal donor and accretor masses: conservative transfer leaves the period "
                         "unchanged to first order, so no rate follows from a period change")
    return (relative / factor).to(u.Msun / u.yr)


def roche_lobe_radius(donor_mass, accretor_mass, separation) -> u.Quantity:
    """Volume-equivalent radius of the donor's Roche lobe (Eggleton 1983, ApJ 268, 368).

    r_L / a = 0.49 q^{2/3} / (0.6 q^{2/3} + ln(1 + q^{1/3})), q = M_d / M_a,
    good to about 1% for every q (Eggleton's stated accuracy; the formula is
    from memory; tests/physics/test_binaries.py checks it against its limits,
    r_L/a = 0.3789 at q = 1 and ≈ 0.49 q^{1/3} for q ≪ 1, the q^{1/3}
    scaling of the Hill radius).

    Parameters
    ----------
    donor_mass, accretor_mass : Quantity
        Masses (M☉ if floats).
    separation : Quantity
        Orbital separation a (AU if a float).

    Returns
    -------
    Quantity
        The lobe radius in R☉.
    """
    q = float((_mass(donor_mass, "donor_mass") / _mass(accretor_mass, "accretor_mass")).decompose())
    a = u.Quantity(separation, u.AU)
    q23, q13 = q ** (2 / 3), q ** (1 / 3)
    return (0.49 * q23 / (0.6 * q23 + np.log1p(q13)) * a).to(u.Rsun)


def thermal_timescale(star: Star) -> u.Quantity:
    """Kelvin–Helmholtz timescale τ_KH = G M² / (R L) of a star (years)."""
    mass = star.need("mass", "the thermal timescale")
    radius = star.need("radius", "the thermal timescale")
    lum = star.need("luminosity", "the thermal timescale (give teff or luminosity)")
    return (const.G * mass ** 2 / (radius * lum)).to(u.yr)


def thermal_transfer_rate(star: Star) -> u.Quantity:
    """The donor's thermal-timescale transfer rate M / τ_KH (M☉/yr)."""
    return (star.need("mass", "the thermal transfer rate") / thermal_timescale(star)).to(u.Msun / u.yr)


def braking_torque(star: Star, spin_period, gamma: float = 4.0) -> u.Quantity:
    """Magnetic-braking angular-momentum loss rate of Rappaport, Verbunt & Joss (1983).

    Parameters
    ----------
    star : Star
        The convective star being braked (mass, radius).
    spin_period : Quantity
        Its spin period (the orbital period for a synchronised star).
    gamma : float
        Exponent on R/R☉, 0 … 4 (4 by default: J̇ ∝ M R⁴ ω³).

    Returns
    -------
    Quantity
        J̇ ≤ 0, in N m (= kg m² s⁻²).
    """
    if not 0 <= gamma <= 4:
        raise InputError(f"gamma = {gamma}: the braking law's exponent lies between 0 and 4")
    mass = star.need("mass", "the magnetic-braking law").to_value(u.g)
    ratio = float((star.need("radius", "the magnetic-braking law") / const.R_sun).decompose())
    omega = (2 * np.pi / u.Quantity(spin_period, u.day)).to_value(1 / u.s)
    r_sun_cm = const.R_sun.to_value(u.cm)
    torque = -RVJ_COEFFICIENT * mass * r_sun_cm ** 4 * ratio ** gamma * omega ** 3  # dyn cm
    return (torque * u.dyn * u.cm).to(u.N * u.m)


def period_change_from_braking(braked: Star, other_mass, period, gamma: float = 4.0,
                               include_spins: bool = True) -> u.Quantity:
    """Ṗ of a synchronised binary whose convective star is magnetically braked.

    Parameters
    ----------
    braked : Star
        The braked star (mass, radius; its polytrope gives its moment of
        inertia when ``include_spins``).
    other_mass : Quantity
        The companion's mass.
    period : Quantity
        Orbital period (= spin period).
    gamma : float
        See :func:`braking_torque`.
    include_spins : bool
        Count the braked star's spin angular momentum, I ω with I = k² M R²
        (k² of its polytrope); otherwise Ṗ/P = 3 J̇/J_orb.

    Returns
    -------
    Quantity
        Ṗ in s/yr (negative: the period shortens).
    """
    from ttvkit.physics.structure import polytrope

    p = u.Quantity(period, u.day)
    torque = braking_torque(braked, p, gamma)
    j_orb = orbital_angular_momentum(braked.mass, other_mass, p)
    denominator = j_orb / 3
    if include_spins:
        inertia = polytrope(braked.structure_index).gyration_squared * braked.mass * braked.radius ** 2
        denominator = denominator - inertia * 2 * np.pi / p
    return (torque / denominator * p).to(u.s / u.yr)


@dataclass(frozen=True)
class StarBudgets:
    """The Applegate budgets of one star of a binary taken as the active star.

    Attributes
    ----------
    role : str
        ``"primary"`` (the System's star) or ``"secondary"`` (the other star).
    budgets : dict or None
        ``{"thin shell": ActivityBudget, "finite shell": ActivityBudget}``,
        or None when a value the budget needs is missing for this star.
    missing : str or None
        What was missing (the MissingValueError's message).
    """

    role: str
    budgets: "dict[str, ActivityBudget] | None"
    missing: str | None = None

    @property
    def least_energy_ratio(self) -> float | None:
        """The smaller energy ratio of the two models (None if not computed)."""
        if self.budgets is None:
            return None
        return min(b.energy_ratio for b in self.budgets.values())

    def to_dict(self) -> dict:
        """Plain-JSON form: role, each model's budget (``ActivityBudget.to_dict``) or what was missing."""
        budgets = None if self.budgets is None else {k: b.to_dict() for k, b in self.budgets.items()}
        return {"role": self.role, "budgets": budgets, "missing": self.missing}


def swapped_system(system: System, other_star: Star) -> System:
    """The same binary with ``other_star`` as the active star and the System's star as companion.

    Parameters
    ----------
    system : System
        Its ``star`` is one star of the binary, its ``companion.mass`` the other's.
    other_star : Star
        The other star in full (mass, radius, teff or luminosity, spin).

    Returns
    -------
    System
        A new System (the inputs are not modified); the orbit keeps the
        resolved semi-major axis, and a/R* is recomputed for the new star.
    """
    given = system.companion.mass
    if other_star.mass is None:
        raise MissingValueError("the other star's mass is needed for its Applegate budget")
    if given is not None and not np.isclose(given.to_value(u.Msun), other_star.mass.to_value(u.Msun), rtol=1e-3):
        raise InputError(f"the other star's mass ({other_star.mass.to(u.Msun):.4g}) differs from the "
                         f"system's companion mass ({given.to(u.Msun):.4g}); give one value")
    orbit = replace(system.orbit, semi_major_axis=system.semi_major_axis, a_over_rstar=None)
    companion = Companion(mass=system.star.mass, radius=system.star.radius)
    return System(replace(other_star), companion, orbit, system.radial_velocity,
                  name=f"{system.name} (other star active)")


def applegate_for_each_star(system: System, other_star: Star, amplitude, modulation_period,
                            **kwargs) -> "dict[str, StarBudgets]":
    """Thin- and finite-shell Applegate budgets with each star of a binary as the active one.

    Parameters
    ----------
    system : System
        The binary with its ``star`` as the primary.
    other_star : Star
        The secondary (mass, radius, teff or luminosity; rotation period if
        not synchronised).
    amplitude, modulation_period : Quantity
        O−C semi-amplitude and modulation period.
    **kwargs
        Passed to :func:`ttvkit.physics.applegate.activity_budgets`.

    Returns
    -------
    dict
        ``{"primary": StarBudgets, "secondary": StarBudgets}``.  A star whose
        luminosity (or other needed value) is missing gets ``budgets=None``
        and the reason in ``missing``; the other star is still computed.
    """
    out = {}
    for role, sys_ in (("primary", system), ("secondary", swapped_system(system, other_star))):
        try:
            out[role] = StarBudgets(role, activity_budgets(sys_, amplitude, modulation_period, **kwargs))
        except MissingValueError as exc:
            out[role] = StarBudgets(role, None, str(exc))
    return out
