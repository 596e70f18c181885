"""System-file consistency gates (issue 13), each naming the file and the key."""

from __future__ import annotations

import warnings

import pytest

from ttvkit.errors import InputError, MissingValueError
from ttvkit.physics.system import System
from ttvkit.physics.system_checks import SystemWarning

STAR = '[star]\nmass = "1 Msun"\nradius = "1 Rsun"\n'


def load(tmp_path, text):
    path = tmp_path / "s.toml"
    path.write_text(text)
    return path, (lambda: System.from_toml(path))


@pytest.mark.parametrize("text,match", [
    (STAR + '[orbit]\nperiod = "0.1 d"\n', "inside the star"),
    # a/R* from Kepler's law for 1 Msun, 1 Rsun, P = 3 d is about 8.6 (derived); 60 is 7x off
    (STAR + '[orbit]\nperiod = "3 d"\na_over_rstar = 60\n', r"a_over_rstar = 60.*Kepler's third law"),
    ('[star]\nmass = "inf Msun"\nradius = "1 Rsun"\n', r"\[star\] mass.*not a finite number"),
    ('[star]\nmass = "-1 Msun"\nradius = "1 Rsun"\n', r"\[star\] mass must be positive"),
    (STAR + "polytropic_index = 5.5\n", r"polytropic_index = 5.5 must be in \[0, 5\)"),
    (STAR + 'dec = "-95 deg"\n', r"\[star\] dec .*between -90 and \+90"),
])
def test_refused_naming_the_file(tmp_path, text, match):
    path, read = load(tmp_path, text)
    with pytest.raises(InputError, match=match) as info:
        read()
    assert str(path) in str(info.value)


def test_kepler_mismatch_of_30_percent_warns(tmp_path):
    # Kepler's third law (derived): a/R* = 8.6 for 1 Msun, 1 Rsun, 3 d; 11.2 is 30 % off
    _, read = load(tmp_path, STAR + '[orbit]\nperiod = "3 d"\na_over_rstar = 11.2\n')
    with pytest.warns(SystemWarning, match="a_over_rstar"):
        read()


def test_stellar_radius_in_jupiter_radii_warns(tmp_path):
    _, read = load(tmp_path, '[star]\nmass = "1 Msun"\nradius = "1.2 Rjup"\n')
    with pytest.warns(SystemWarning, match="planetary radii"):
        read()


def test_missing_orbit_names_the_file(tmp_path):
    path, read = load(tmp_path, STAR)
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        system = read()
    with pytest.raises(MissingValueError, match=str(path)):
        system.semi_major_axis


def test_diagnose_reads_a_path(tmp_path, demo_table, demo_inputs):
    from ttvkit.diagnosis.diagnose import diagnose

    with pytest.raises(InputError, match="not int"):
        diagnose(demo_table, 5)
    with pytest.raises(InputError, match="no such file"):
        diagnose(demo_table, tmp_path / "none.toml")
