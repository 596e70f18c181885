"""Loading system files."""

import astropy.units as u
import pytest

from ttvkit import InputError
from ttvkit.physics import System

ISSUE_LAYOUT = """
[star]
mass = "0.92 Msun"
radius = "0.88 Rsun"
teff = "5100 K"
rotation_period = "12 d"
[companion]
mass = "1.4 Mjup"
radius = "1.2 Rjup"
[orbit]
period = "2.7 d"
semi_major_axis = "0.036 AU"
eccentricity = 0.0
"""


def test_documented_layout_loads(tmp_path):
    p = tmp_path / "s.toml"
    p.write_text(ISSUE_LAYOUT)
    s = System.from_toml(p)
    assert s.star.mass.to_value(u.Msun) == pytest.approx(0.92)
    # L = 4 pi R^2 sigma T^4 (Stefan-Boltzmann): (0.88)^2 (5100/5772)^4 Lsun
    assert s.star.luminosity.to_value(u.Lsun) == pytest.approx(0.88 ** 2 * (5100 / 5772) ** 4, rel=1e-3)
    assert s.orbit.a_over_rstar == pytest.approx((0.036 * u.AU / (0.88 * u.Rsun)).decompose().value)


def test_kepler_third_law_fills_the_axis():
    s = System.from_dict({"star": {"mass": "1 Msun", "radius": "1 Rsun"}, "orbit": {"period": "365.25 d"}})
    assert s.semi_major_axis.to_value(u.AU) == pytest.approx(1.0, abs=1e-3)


def test_demo_system_loads(demo_inputs):
    s = System.from_toml(demo_inputs["system"])
    assert s.radial_velocity.residual_rms.to_value(u.m / u.s) == 9


@pytest.mark.parametrize("text,match", [
    ('[star]\nmass = "0.9 Msun"\nradius = "1 Rsun"\nradus = "1 Rsun"\n', "unknown key 'radus'"),
    ('[star]\nmass = "0.9 parsec"\nradius = "1 Rsun"\n', "cannot be converted"),
    ('[star]\nmass = "zz Msun"\nradius = "1 Rsun"\n', "unparseable"),
    ('[star]\nmass = 0.9\nradius = "1 Rsun"\n', "needs a unit"),
    ('[star]\nradius = "1 Rsun"\n', "star.mass"),
    ('[star]\nmass = "-1 Msun"\nradius = "1 Rsun"\n', "positive"),
    ('[star]\nmass = "1 Msun"\nradius = "1 Rsun"\n[orbit]\neccentricity = 1.2\n', "eccentricity"),
    ('[planet]\nmass = "1 Mjup"\n', "unknown table"),
    ('not toml = = =', "not valid TOML"),
])
def test_bad_system_files(tmp_path, text, match):
    p = tmp_path / "bad.toml"
    p.write_text(text)
    with pytest.raises(InputError, match=match):
        System.from_toml(p)
