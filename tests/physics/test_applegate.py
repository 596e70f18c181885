"""Applegate energy budgets, checked against published values and limits."""

import astropy.units as u
import numpy as np
import pytest

from ttvkit.physics import (
    Companion,
    Orbit,
    Star,
    System,
    activity_budgets,
    activity_envelope,
    finite_shell_budget,
    period_change_from_amplitude,
    polytrope,
    thin_shell_budget,
)
from ttvkit.physics.structure import polytrope as solve_polytrope


def test_baptista_period_change():
    # Baptista et al. 2002 (MNRAS 335, L75), abstract: O-C semi-amplitude
    # 1.0 +- 0.2 min over 28 +- 2 yr -> dP/P = 4.4e-7.  2*pi*A/P_mod gives
    # 4.27e-7 at 28 yr, inside the quoted +-2 yr; tolerance 5%.
    assert period_change_from_amplitude(1.0 * u.min, 28 * u.yr) == pytest.approx(4.4e-7, rel=0.05)


@pytest.mark.parametrize("index,xi1", [(1.5, 3.65375), (3.0, 6.89685)])
def test_lane_emden_first_zero(index, xi1):
    # Chandrasekhar 1939, Table of Lane-Emden functions (textbook).
    assert solve_polytrope(index).xi1 == pytest.approx(xi1, abs=2e-5)


def test_polytrope_mass_is_normalised():
    p = polytrope(1.5)
    assert p.mass[-1] == pytest.approx(1.0)
    # n = 1.5 gyration constant I/(MR^2) = 0.205 (textbook value, from memory)
    assert p.gyration_squared == pytest.approx(0.205, abs=0.002)


def nn_ser():
    # NN Ser secondary and orbit: M = 0.111 Msun, R = 0.149 Rsun, a = 0.934 Rsun
    # (Parsons et al. 2010a, MNRAS 402, 2591, abstract); Teff = 2950 K and
    # P = 0.13008 d (from memory); the white dwarf 0.535 Msun (same abstract).
    return System(Star(mass=0.111 * u.Msun, radius=0.149 * u.Rsun, teff=2950 * u.K),
                  Companion(mass=0.535 * u.Msun), Orbit(period=0.13008 * u.day, semi_major_axis=0.934 * u.Rsun))


def test_nn_ser_fails_on_energy():
    # Brinkworth et al. 2006 (MNRAS 365, 287), abstract: dP/dt = 2.85e-11 s/s
    # over the last 2 yr; Applegate "fails by an order of magnitude".  We take
    # the abstract's shortest third-body period, 30 yr, as the modulation
    # timescale (our reading) and the O-C semi-amplitude that gives that peak
    # rate: A = Pdot P_mod^2 / (4 pi^2 P).  Both models must find the star
    # unable to power it; the energy ratio grows with P_mod, so 30 yr is the
    # kindest case.  (Our thin shell gives ~2, not the paper's ~10: their
    # full inputs were not available to us.)
    p_mod = 30 * u.yr
    amp = 2.85e-11 * p_mod.to_value(u.s) ** 2 / (4 * np.pi ** 2 * (0.13008 * u.day).to_value(u.s)) * u.s
    budgets = activity_budgets(nn_ser(), amp, p_mod)
    assert budgets["thin shell"].energy_ratio > 1
    assert budgets["finite shell"].energy_ratio > 3
    assert "synchronous" in budgets["thin shell"].spin_used


def test_qs_vir_fails_on_energy():
    # Parsons et al. 2010b (MNRAS 407, 2362), abstract: a ~250 s departure from
    # linearity that Applegate's mechanism "fails to reproduce by an order of
    # magnitude".  Inputs: semi-amplitude 125 s (half the departure, our
    # reading); modulation timescale 16 yr (the period of later companion
    # fits, from memory); M = 0.43 Msun, R = 0.42 Rsun, Teff = 3100 K,
    # P = 0.150757 d, a = 1.28 Rsun, WD 0.78 Msun (from memory).  The finite
    # shell must fail; our thin shell does not (ratio ~0.4) -- a known
    # disagreement with the paper's order-of-magnitude verdict, kept visible.
    qs = System(Star(mass=0.43 * u.Msun, radius=0.42 * u.Rsun, teff=3100 * u.K), Companion(mass=0.78 * u.Msun),
                Orbit(period=0.150757 * u.day, semi_major_axis=1.28 * u.Rsun))
    b = activity_budgets(qs, 125 * u.s, 16 * u.yr)
    assert b["finite shell"].energy_ratio > 1
    assert b["finite shell"].energy_ratio > b["thin shell"].energy_ratio


def _limit_difference(system, x_in):
    poly = polytrope(system.star.structure_index)
    x = poly.x[1:]
    k = int(np.clip(np.searchsorted(x, x_in), 1, x.size - 2))
    finite = finite_shell_budget(system, 30 * u.s, 20 * u.yr, inner_radius=x_in)
    shell_fraction = float((finite.shell_mass / system.star.mass).decompose())
    m, r = system.star.mass, system.star.radius
    core = (2 / 3) * np.trapezoid((x ** 2 * poly.dm_dx[1:])[:k + 1], x[:k + 1]) * m * r ** 2
    thin = thin_shell_budget(system, 30 * u.s, 20 * u.yr, shell_mass_fraction=shell_fraction,
                             core_inertia=core)
    return abs(finite.delta_E.value / thin.delta_E.value - 1)


def test_thin_shell_limit_of_the_finite_shell():
    # Derived consistency check: a finite shell squeezed towards the surface
    # must approach the thin-shell energy with the same shell mass and core
    # inertia; the difference is first order in the thickness (each layer
    # sits at r < R), so it must shrink as the shell thins and be < 1% at
    # 0.1% of the radius.
    system = nn_ser()
    diffs = [_limit_difference(system, x) for x in (0.98, 0.995, 0.999)]
    assert diffs[0] > diffs[1] > diffs[2]
    assert diffs[2] < 0.01


def test_own_spin_versus_synchronous():
    # Derived: with Omega = 2 pi / P the general form reduces to Applegate's
    # dJ = -(G M^2/R)(a/R)^2 dP/(6 pi) (Applegate 1992, from memory).
    import astropy.constants as c
    system = nn_ser()
    b = thin_shell_budget(system, 30 * u.s, 20 * u.yr)
    m, r, a = system.star.mass, system.star.radius, system.semi_major_axis
    dp = b.delta_P_over_P * system.orbit.period
    expected = (c.G * m ** 2 / r * (a / r) ** 2 * dp / (6 * np.pi)).to(u.kg * u.m ** 2 / u.s)
    assert b.delta_J.value == pytest.approx(expected.value, rel=1e-6)
    spun = System(Star(mass=m, radius=r, teff=2950 * u.K, rotation_period=2 * system.orbit.period),
                  system.companion, Orbit(period=system.orbit.period, semi_major_axis=a))
    b2 = thin_shell_budget(spun, 30 * u.s, 20 * u.yr)
    assert b2.delta_J.value == pytest.approx(2 * b.delta_J.value, rel=1e-6)  # dJ ~ 1/Omega
    assert "own rotation" in b2.spin_used


def test_envelope_marks_energy_ratio_one():
    system = nn_ser()
    periods = np.array([5.0, 20.0, 60.0]) * u.yr
    for model in ("thin shell", "finite shell"):
        env = activity_envelope(system, periods, model=model)
        func = thin_shell_budget if model == "thin shell" else finite_shell_budget
        for p, a in zip(periods, env):
            assert func(system, a, p).energy_ratio == pytest.approx(1.0, rel=1e-6)
        assert np.all(np.diff(env.value) > 0)  # longer cycles can carry larger amplitudes (A ~ P^1.5)


def test_missing_luminosity_names_the_value():
    from ttvkit import MissingValueError
    s = System(Star(mass=0.5 * u.Msun, radius=0.5 * u.Rsun), Companion(mass=0.5 * u.Msun),
               Orbit(period=0.2 * u.day))
    with pytest.raises(MissingValueError, match="star.luminosity.*Applegate"):
        thin_shell_budget(s, 10 * u.s, 10 * u.yr)


@pytest.mark.parametrize("fraction", [1.5, -0.1, 0.0, 1.0])
def test_shell_mass_outside_the_star_is_refused_by_the_library(fraction):
    # A shell heavier than the star or of negative mass gives a negative core moment of inertia or
    # energy (Applegate 1992, ApJ 385, 621, eq. for the thin shell's energy): refused, not computed.
    from ttvkit.errors import InputError

    with pytest.raises(InputError, match="strictly between 0 and 1"):
        thin_shell_budget(nn_ser(), 30 * u.s, 20 * u.yr, shell_mass_fraction=fraction)
