"""Tides, companions, Kepler's equation: published and textbook check values."""

import astropy.units as u
import numpy as np
import pytest
from scipy.optimize import brentq

from ttvkit.physics import Companion, Orbit, Star, System
from ttvkit.physics.companions import (
    hill_stable,
    light_time_companion,
    mass_function,
    minimum_companion_mass,
    romer_acceleration,
    romer_decay_rate,
)
from ttvkit.physics.kepler import radial_velocity_semi_amplitude, solve_kepler
from ttvkit.physics.tides import (
    decay_rate_from_quality_factor,
    decay_timescale,
    general_relativity_precession,
    plausible_quality_factor,
    quality_factor_from_decay_rate,
    tidal_precession,
    time_to_roche_limit,
)


def wasp12():
    # WASP-12 parameters as used by Yee et al. 2020: M* = 1.434 Msun,
    # R* = 1.657 Rsun, Mp = 1.47 Mjup, a/R* = 3.039 (Collins et al. 2017,
    # AJ 153, 78; from memory); P = 1.09142 d (Yee et al. 2020).
    return System(Star(mass=1.434 * u.Msun, radius=1.657 * u.Rsun, teff=6300 * u.K),
                  Companion(mass=1.47 * u.Mjup, radius=1.90 * u.Rjup),
                  Orbit(period=1.09142 * u.day, a_over_rstar=3.039))


def test_wasp12_quality_factor():
    # Yee et al. 2020 (ApJL 888, L5), abstract: dP/dt = -29 +- 2 ms/yr gives
    # Q'* = 1.8e5.  Tolerance 7%, the relative error of dP/dt.
    assert quality_factor_from_decay_rate(wasp12(), -29 * u.ms / u.yr) == pytest.approx(1.8e5, rel=0.07)
    # and back again
    rate = decay_rate_from_quality_factor(wasp12(), 1.8e5)
    assert rate.to_value(u.ms / u.yr) == pytest.approx(-29 * 1.74 / 1.8, rel=0.07)


def test_wasp12_decay_timescale():
    # Yee et al. 2020: P/|Pdot| = 3.25 +- 0.23 Myr; Patra et al. 2017: 3.2 Myr.
    assert decay_timescale(1.09142 * u.day, -29 * u.ms / u.yr).to_value(u.Myr) == pytest.approx(3.25, abs=0.05)


def test_roche_lifetime_is_shorter_than_the_decay_timescale():
    t = time_to_roche_limit(wasp12(), -29 * u.ms / u.yr)
    assert 0 < t.to_value(u.Myr) < 3 / 13 * 3.25 + 1e-9  # analytic bound (3/13) P/Pdot


def test_wasp12_is_judged_against_a_range():
    r = plausible_quality_factor(wasp12())
    assert r.log10_low < r.log10_high and "F-type" in r.star_type


def test_romer_effect_wasp4():
    # Bouma et al. 2020 (ApJL 893, L29), abstract: dv/dt = -0.0422 m/s/day on
    # WASP-4 (P = 1.33823 d) -> dP/dt = -5.94 +- 0.39 ms/yr.  Tolerance 1%
    # (the abstract's rounding).
    rate = romer_decay_rate(1.33823 * u.day, -0.0422 * u.m / u.s / u.day)
    assert rate.to_value(u.ms / u.yr) == pytest.approx(-5.94, rel=0.01)
    assert romer_acceleration(1.33823 * u.day, rate).to_value(u.m / u.s / u.day) == pytest.approx(-0.0422, rel=1e-9)


def test_rv_semi_amplitudes_of_the_sun():
    # Textbook: the Sun's reflex due to Jupiter ~12.5 m/s, due to the Earth
    # ~0.09 m/s (IAU constants via astropy).
    k_j = radial_velocity_semi_amplitude(1 * u.Mjup, 1 * u.Msun, 11.862 * u.yr, 0.0489)
    k_e = radial_velocity_semi_amplitude(1 * u.Mearth, 1 * u.Msun, 1 * u.yr, 0.0167)
    assert k_j.to_value(u.m / u.s) == pytest.approx(12.5, abs=0.1)
    assert k_e.to_value(u.m / u.s) == pytest.approx(0.09, abs=0.005)


def test_mercury_relativistic_precession():
    # Textbook: 42.98 arcsec per century.
    rate = general_relativity_precession(1 * u.Msun, 0.387098 * u.AU, 0.205630)
    assert rate.to_value(u.arcsec / (100 * u.yr)) == pytest.approx(42.98, abs=0.02)


def test_tidal_precession_is_positive_and_scales():
    s = wasp12()
    base = tidal_precession(s)
    assert base.value > 0
    assert tidal_precession(s, love_number_planet=1.2).value > base.value


def test_kepler_meeus_example():
    # Meeus, Astronomical Algorithms (2nd ed.), Example 30.a: E = 5.554589 deg.
    assert np.degrees(solve_kepler(np.radians(5.0), 0.1)) == pytest.approx(5.554589, abs=1e-6)


def test_kepler_against_scipy_brentq_on_a_grid():
    # General-purpose reference: scipy's bracketing root finder, per point.
    m = np.linspace(-7, 7, 41)
    e = np.array([0.0, 0.1, 0.5, 0.9, 0.99])
    mm, ee = np.meshgrid(m, e)
    ours = solve_kepler(mm, ee)
    for mi, ei, E in zip(mm.ravel(), ee.ravel(), ours.ravel()):
        ref = brentq(lambda x: x - ei * np.sin(x) - mi, mi - 1.01, mi + 1.01, xtol=1e-15)
        assert abs(E - ref) < 1e-12


def test_mass_function_and_minimum_mass():
    # Batten et al. 1989 constant: f(m) = 1.0385e-7 (1-e^2)^1.5 K^3 P [Msun; K km/s, P d].
    amp, period = 50 * u.s, 9.5 * u.yr
    k = (2 * np.pi * (amp * 299792.458 * u.km / u.s) / period).to_value(u.km / u.s)
    f_batten = 1.0385e-7 * k ** 3 * period.to_value(u.day)
    # 0.5%: the 1989 catalogue constant predates IAU 2015 GM_sun (modern: 1.0361e-7)
    assert mass_function(amp, period).to_value(u.Msun) == pytest.approx(f_batten, rel=5e-3)
    f = mass_function(amp, period)
    m3 = minimum_companion_mass(f, 1.0 * u.Msun).to_value(u.Msun)
    assert m3 ** 3 / (1.0 + m3) ** 2 == pytest.approx(f.to_value(u.Msun), rel=1e-9)


def test_companion_seen_in_rvs():
    s = wasp12()
    s.radial_velocity.baseline = 10 * u.yr
    s.radial_velocity.residual_rms = 10 * u.m / u.s
    loud = light_time_companion(s, 30 * u.s, 8 * u.yr)
    assert loud.would_have_been_seen is True
    quiet = light_time_companion(s, 0.05 * u.s, 8 * u.yr)
    assert quiet.would_have_been_seen is False
    unknown = light_time_companion(wasp12(), 30 * u.s, 8 * u.yr)
    assert unknown.would_have_been_seen is None


def test_hill_stability():
    # Gladman 1993: separation > 2 sqrt(3) mutual Hill radii.  Jupiter and
    # Saturn (5.2, 9.58 AU) are stable; two Jupiters 0.05 AU apart at 1 AU are not.
    assert hill_stable(1 * u.Msun, 1 * u.Mjup, 5.2 * u.AU, 0.3 * u.Mjup, 9.58 * u.AU)
    assert not hill_stable(1 * u.Msun, 1 * u.Mjup, 1.0 * u.AU, 1 * u.Mjup, 1.05 * u.AU)
