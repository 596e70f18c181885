"""Eclipsing binaries: the two-star system file, mass transfer and magnetic braking as hypotheses, and the
Applegate budget of each star in the verdict.

Published inputs: NN Ser (Parsons et al. 2010, MNRAS 402, 2591, abstract: M_sec = 0.111 M☉,
R_sec = 0.149 R☉, M_WD = 0.535 M☉, R_WD = 0.0211 R☉, a = 0.934 R☉; a detached binary);
T_sec = 2950 K (from memory), T_WD = 57000 K and P = 0.13008 d (as in tests/physics/test_binaries.py).
"""

import warnings

import astropy.units as u
import numpy as np
import pytest

from ttvkit import TimingTable
from ttvkit.errors import InputError
from ttvkit.hypotheses import DEFAULT_COMPARISON, TimingData, get_hypothesis
from ttvkit.inference.fitting import fit
from ttvkit.physics import System
from ttvkit.physics.binaries import roche_lobe_radius, transfer_rate_from_period_change
from ttvkit.physics.uncertain import system_draws

NN_SER = """
name = "NN Ser (Parsons et al. 2010)"
[star]
mass = "0.111 +- 0.004 Msun"
radius = "0.149 +- 0.002 Rsun"
teff = "2950 K"
[other_star]
mass = "0.535 +- 0.012 Msun"
radius = "0.0211 +- 0.0002 Rsun"
teff = "57000 K"
[orbit]
period = "0.13008 d"
semi_major_axis = "0.934 Rsun"
"""
PERIOD = 0.13008


@pytest.fixture(scope="module")
def nn_ser(tmp_path_factory):
    path = tmp_path_factory.mktemp("eb") / "nn_ser.toml"
    path.write_text(NN_SER)
    return System.from_toml(path)


def parabola(pdot, seed=1, n=150, span=30000, sigma_s=5.0):
    """Primary eclipses whose period changes at Ṗ = ``pdot`` (s/s), 5-s errors (fixed seed)."""
    rng = np.random.default_rng(seed)
    epochs = np.sort(rng.choice(np.arange(span), n, replace=False)).astype(float)
    sigma = np.full(n, sigma_s / 86400)
    times = 2455000 + PERIOD * epochs + 0.5 * pdot * PERIOD * epochs ** 2 + rng.normal(0, sigma)
    return TimingTable(times, sigma, epoch=epochs.astype(int), kind="primary", source="simulated")


def test_other_star_table_fills_the_companion_and_is_drawn_with_it(nn_ser, tmp_path):
    assert nn_ser.is_binary
    assert nn_ser.companion.mass.to_value(u.Msun) == pytest.approx(0.535)
    assert nn_ser.companion.radius.to_value(u.Rsun) == pytest.approx(0.0211)
    assert nn_ser.other_star.luminosity is not None          # from R and T_eff
    for draw in system_draws(nn_ser, 20, seed=3):
        assert draw.other_star.mass == draw.companion.mass   # one star, one draw
    # one star described twice with different masses: refused, naming both tables
    bad = tmp_path / "bad.toml"
    bad.write_text(NN_SER.replace('[orbit]', '[companion]\nmass = "0.6 Msun"\n[orbit]'))
    with pytest.raises(InputError, match=r"bad.toml.*\[companion\] mass.*\[other_star\] mass"):
        System.from_toml(bad)
    # the other star's own values are checked like the star's
    neg = tmp_path / "neg.toml"
    neg.write_text(NN_SER.replace('teff = "57000 K"', 'teff = "-57000 K"'))
    with pytest.raises(InputError, match=r"neg.toml: \[other_star\] teff must be positive"):
        System.from_toml(neg)
    # a planet's Roche-limit warning is not raised for two stars
    good = tmp_path / "good.toml"
    good.write_text(NN_SER)
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        System.from_toml(good)


def test_roche_lobe_limits():
    # Eggleton 1983 (ApJ 268, 368; formula from memory): r_L/a = 0.3789 for equal masses
    # (0.49 / (0.6 + ln 2)); for q << 1 it tends to 0.49 q^(1/3) (to 1% at q = 1e-6).
    assert roche_lobe_radius(1.0, 1.0, 1 * u.Rsun).to_value(u.Rsun) == pytest.approx(0.49 / (0.6 + np.log(2)),
                                                                                       rel=1e-12)
    assert roche_lobe_radius(1.0, 1.0, 1 * u.Rsun).to_value(u.Rsun) == pytest.approx(0.3789, abs=1e-4)
    q = 1e-6
    assert roche_lobe_radius(q, 1.0, 1 * u.Rsun).to_value(u.Rsun) == pytest.approx(0.49 * q ** (1 / 3), rel=0.01)


def test_transfer_rate_is_derived_with_its_sign_spelled_out(nn_ser):
    # Derived rate = the physics module's inverse (Ṗ/P = 3 Ṁ (1/M_d − 1/M_a), hand-checked in
    # tests/physics/test_binaries.py) with the lighter star as donor; the other sign is transfer the
    # other way.  The fit recovers the injected Ṗ, so the rate follows from it within its error.
    from ttvkit.hypotheses import HostContext

    for sign in (+1, -1):
        table = parabola(sign * 2e-11)
        result = fit(table, "mass-transfer", context=HostContext.from_system(nn_ser))
        rate = result.estimate("transfer_rate")
        pdot = (sign * 2e-11 * u.s / u.s).to(u.s / u.yr)
        expected = transfer_rate_from_period_change(pdot, 0.111, 0.535, period=PERIOD * u.day)
        assert np.sign(rate.value) == sign
        # 3σ of the fitted rate (the injected Ṗ is recovered within its error)
        assert rate.value == pytest.approx(expected.to_value(u.Msun / u.yr), abs=3 * max(rate.lower, rate.upper))
        jdot = fit(table, "magnetic-braking", context=HostContext.from_system(nn_ser)).estimate(
            "angular_momentum_loss")
        assert np.sign(jdot.value) == sign


def test_binary_hypotheses_only_join_a_binary_diagnosis():
    assert "mass-transfer" not in DEFAULT_COMPARISON and "magnetic-braking" not in DEFAULT_COMPARISON
    # same parabola as orbital decay: identical fits, the physics tells them apart
    data = TimingData(np.arange(5.0), np.zeros(5), np.zeros(5, bool), np.zeros(5), np.ones(5), 0.0, 1.0)
    theta = np.array([0.0, 1.0, 1e-6])
    decay = get_hypothesis("orbital-decay").predict(theta, data)
    for name in ("mass-transfer", "magnetic-braking"):
        np.testing.assert_array_equal(get_hypothesis(name).predict(theta, data), decay)


@pytest.fixture(scope="module")
def growing(nn_ser):
    from ttvkit.diagnosis.diagnose import diagnose

    return diagnose(parabola(+2e-11), nn_ser, sampled=False, progress=False).to_dict()


@pytest.fixture(scope="module")
def shrinking(nn_ser):
    from ttvkit.diagnosis.diagnose import diagnose

    return diagnose(parabola(-2e-11), nn_ser, sampled=False, progress=False).to_dict()


def _hyp(diag, name):
    return next(h for h in diag["hypotheses"] if h["name"] == name)


def _check(hyp, name):
    return next(c for c in hyp["physical"]["checks"] if c["name"] == name)


def test_nn_ser_mass_transfer_is_excluded_both_ways(growing, shrinking):
    # NN Ser is detached (Parsons et al. 2010): the M dwarf fills ~0.63 of its Roche lobe
    # (Eggleton 1983 at q = 0.207: r_L = 0.254 a = 0.237 R☉ against R = 0.149 R☉), the white
    # dwarf ~0.04 of its.  A growing period names the lighter star (M dwarf) as donor, a
    # shrinking one the heavier (white dwarf): neither overflows its lobe, so both are excluded.
    for diag, donor, fill in ((growing, "primary", 0.63), (shrinking, "other star", 0.044)):
        hyp = _hyp(diag, "mass-transfer")
        assert hyp["verdict"] == "physically excluded"
        check = _check(hyp, "donor fills its Roche lobe")
        assert check["outcome"] == "fail" and donor in check["reason"]
        assert check["value"] == pytest.approx(fill, rel=0.05)


def test_magnetic_braking_needs_a_shrinking_period(growing, shrinking):
    # Braking only takes angular momentum away (Rappaport, Verbunt & Joss 1983): excluded for a
    # growing period; for a shrinking one of 0.6 ms/yr it stands, inside the law's γ = 0–4 range
    # for the M dwarf (the white dwarf has no convective envelope and is left out).
    assert _hyp(growing, "magnetic-braking")["verdict"] == "physically excluded"
    hyp = _hyp(shrinking, "magnetic-braking")
    assert hyp["verdict"] == "needed and plausible"
    law = _check(hyp, "braking law (Rappaport, Verbunt & Joss 1983)")
    assert law["outcome"] == "pass" and "convective star " in law["reason"]


def test_modulation_budget_names_each_star(growing):
    # Both stars' budgets are reported; the white dwarf needs > 1e4 times its output (as in
    # tests/physics/test_binaries.py) and the M dwarf is the lenient one.
    hyp = _hyp(growing, "sinusoidal-modulation")
    names = [c["name"] for c in hyp["physical"]["checks"]]
    assert "energy ratio (other star ([other_star]), thin shell)" in names
    assert _check(hyp, "energy ratio (other star ([other_star]), thin shell)")["value"] > 1e4
    assert "primary star" in _check(hyp, "activity energy budget")["reason"]


# An invented semi-detached pair for the sign of the transfer: a 2.0 M☉, 2.0 R☉ star and a 0.5 M☉ star of
# 3.3 R☉ on a 3-d orbit.  Hand-derived (Kepler's third law, then Eggleton 1983 as above): a = 11.88 R☉;
# the lighter star's lobe (q = 0.25) is 0.2677 a = 3.18 R☉, so it fills 1.04 of it; the heavier star's
# (q = 4) is 0.5014 a = 5.96 R☉, so it fills 0.34 of it.
SEMI_DETACHED = """
name = "invented semi-detached pair"
[star]
mass = "2.0 +- 0.02 Msun"
radius = "2.0 +- 0.02 Rsun"
teff = "9000 K"
[other_star]
mass = "0.5 +- 0.01 Msun"
radius = "3.3 +- 0.03 Rsun"
teff = "4500 K"
[orbit]
period = "3.0 d"
"""


def _semi_detached_check(tmp_path, pdot, seed):
    from ttvkit.diagnosis.checks import mass_transfer_checks
    from ttvkit.hypotheses import HostContext

    path = tmp_path / "semi.toml"
    path.write_text(SEMI_DETACHED)
    system = System.from_toml(path)
    rng = np.random.default_rng(seed)
    epochs = np.sort(rng.choice(np.arange(4000), 120, replace=False)).astype(float)
    sigma = np.full(epochs.size, 20.0 / 86400)
    times = 2455000 + 3.0 * epochs + 0.5 * pdot * 3.0 * epochs ** 2 + rng.normal(0, sigma)
    table = TimingTable(times, sigma, epoch=epochs.astype(int), kind="primary", source="simulated")
    result = fit(table, "mass-transfer", context=HostContext.from_system(system))
    check = next(c for c in mass_transfer_checks(result, system) if c.name == "donor fills its Roche lobe")
    return result.estimate("transfer_rate"), check


@pytest.mark.parametrize("seed", [0, 5])
def test_roche_check_allows_the_other_sign_when_the_rate_is_not_measured(tmp_path, seed):
    # No period change injected: the fitted rate's sign is chance; with these seeds it comes out negative
    # within 1σ, which names the heavier star as donor (inside its lobe, 0.34).  The posterior still allows
    # the positive sign, whose donor (the lighter star, 1.04) fills its lobe: mass transfer is not excluded.
    rate, check = _semi_detached_check(tmp_path, 0.0, seed)
    assert rate.value < 0 and abs(rate.value) < rate.upper
    assert check.value == pytest.approx(0.34, abs=0.01)
    assert check.outcome == "pass"


def test_roche_check_excludes_the_measured_sign_whose_donor_is_inside(tmp_path):
    # A clearly shrinking period names the heavier star (fills 0.34): excluded.  A clearly growing one names
    # the lighter star (fills 1.04): allowed.
    _, check = _semi_detached_check(tmp_path, -1e-9, 1)
    assert check.outcome == "fail" and check.value == pytest.approx(0.34, abs=0.01)
    _, check = _semi_detached_check(tmp_path, +1e-9, 1)
    assert check.outcome == "pass" and check.value == pytest.approx(1.04, abs=0.015)


def test_a_robust_diagnosis_of_a_binary_leaves_the_gaussian_process_out(nn_ser):
    # A Gaussian process has a closed-form marginal likelihood only with Gaussian errors, so with a
    # Student-t likelihood the quasi-periodic hypothesis cannot be fitted: diagnose leaves it out with a
    # note instead of failing altogether, and fitting it by name is refused with that reason.
    from ttvkit.diagnosis.diagnose import diagnose
    from ttvkit.inference import Likelihood

    robust = Likelihood("student-t")
    diag = diagnose(parabola(+2e-11), nn_ser, sampled=False, progress=False, likelihood=robust).to_dict()
    names = [h["name"] for h in diag["hypotheses"]]
    assert "quasi-periodic-modulation" not in names and "mass-transfer" in names
    assert any("quasi-periodic-modulation" in w["message"] and "Gaussian likelihood" in w["message"]
               for w in diag["warnings"])
    with pytest.raises(InputError, match="quasi-periodic-modulation needs a Gaussian likelihood"):
        fit(parabola(+2e-11), "quasi-periodic-modulation", robust)


def test_other_star_polytropic_index_is_range_checked(tmp_path):
    # A Lane–Emden polytrope of index n >= 5 has no finite radius (Chandrasekhar 1939, An Introduction to
    # the Study of Stellar Structure, ch. IV): refused by file and table when the system is read, as for
    # [star], instead of an internal error in the other star's Applegate budget after every fit.
    bad = tmp_path / "bad.toml"
    bad.write_text(NN_SER.replace('teff = "57000 K"', 'teff = "57000 K"\npolytropic_index = 5.5'))
    with pytest.raises(InputError, match=r"bad.toml: \[other_star\] polytropic_index = 5.5 must be in \[0, 5\)"):
        System.from_toml(bad)


def test_equal_masses_leave_the_transfer_rate_untested(tmp_path):
    # Ṗ/P = 3 Ṁ (1/M_d − 1/M_a) vanishes for M_d = M_a (the relation checked in
    # tests/physics/test_binaries.py): no rate follows, and the check says so instead of printing nan.
    from ttvkit.diagnosis.checks import mass_transfer_checks
    from ttvkit.hypotheses import HostContext

    path = tmp_path / "twins.toml"
    path.write_text(NN_SER.replace('"0.535 +- 0.012 Msun"', '"0.111 Msun"').replace('"0.111 +- 0.004 Msun"',
                                                                                    '"0.111 Msun"'))
    twins = System.from_toml(path)
    result = fit(parabola(2e-11), "mass-transfer", context=HostContext.from_system(twins))
    (check,) = mass_transfer_checks(result, twins)
    assert check.outcome == "untested" and "equal masses" in check.reason
