"""Uncertain inputs in the system file and their Monte Carlo draws."""

import astropy.units as u
import numpy as np
import pytest

from ttvkit.errors import InputError
from ttvkit.physics import System
from ttvkit.physics.uncertain import draw_values, system_draws


def uncertain_system():
    return System.from_dict({"star": {"mass": "1.43 +- 0.07 Msun", "radius": "1.6 ± 0.1 Rsun", "teff": "6300 K"},
                             "companion": {"mass": "1.4 Mjup"},
                             "orbit": {"period": "1.09 d", "eccentricity": "0 +/- 0.01"}})


def test_values_and_uncertainties_are_read():
    s = uncertain_system()
    assert u.isclose(s.star.mass, 1.43 * u.Msun) and u.isclose(s.uncertainties["star.mass"], 0.07 * u.Msun)
    assert u.isclose(s.uncertainties["star.radius"], 0.1 * u.Rsun)
    assert s.orbit.eccentricity == 0.0 and s.uncertainties["orbit.eccentricity"] == 0.01


def test_draws_scatter_by_the_stated_error_and_rederive():
    s = uncertain_system()
    draws = system_draws(s, 400, seed=2)
    masses = np.array([d.star.mass.to_value(u.Msun) for d in draws])
    # 400 normal draws: the sample std is within 4 × σ/√(2·400) = 10% of 0.07 (standard error of a std)
    assert abs(masses.std() - 0.07) < 0.1 * 0.07
    # the semi-major axis follows Kepler's third law with each drawn mass: a ∝ M^(1/3)
    ratio = np.array([(d.semi_major_axis / s.semi_major_axis).decompose().value for d in draws])
    total = (masses * u.Msun + 1.4 * u.Mjup) / (s.star.mass + 1.4 * u.Mjup)
    assert np.allclose(ratio, total.decompose().value ** (1 / 3), rtol=1e-9)
    # the luminosity is derived again from each drawn radius (L ∝ R² at fixed T_eff)
    radii = np.array([d.star.radius.to_value(u.Rsun) for d in draws])
    lum = np.array([d.star.luminosity.to_value(u.Lsun) for d in draws])
    assert np.allclose(lum / s.star.luminosity.to_value(u.Lsun), (radii / 1.6) ** 2, rtol=1e-9)
    assert np.all(draw_values(s, "orbit.eccentricity", 100) >= 0)


@pytest.mark.parametrize("text", ["1.43 +- Msun", "1.43 +- -0.07 Msun"])
def test_bad_uncertainties_are_named(text):
    with pytest.raises(InputError, match=r"\[star\] mass"):
        System.from_dict({"star": {"mass": text, "radius": "1 Rsun"}})
