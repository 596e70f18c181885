"""Hypothesis models against published relations and their own closed forms."""

import numpy as np
import pytest

from ttvkit import InputError
from ttvkit.hypotheses import HYPOTHESIS_NAMES, TimingData, get_hypothesis
from ttvkit.hypotheses.base import HostContext
from ttvkit.hypotheses.light_time import light_time_delay


def test_wasp12_decay_rate_and_timescale():
    # Yee et al. 2020 (ApJL 888, L5): dP/dN = (-10.04 +- 0.69) e-10 d/epoch
    # (from memory) with P = 1.09142 d gives dP/dt = -29 +- 2 ms/yr and
    # P/|Pdot| = 3.25 +- 0.23 Myr (abstract); Patra et al. 2017 (AJ 154, 4):
    # -29 +- 3 ms/yr, 3.2 Myr.  Tolerance: half the published 1-sigma.
    hyp = get_hypothesis("orbital-decay")
    theta = np.array([[0.0, 1.09142, -10.04e-10]])
    data = TimingData(np.zeros(1), np.zeros(1), np.zeros(1, bool), np.zeros(1), np.ones(1), 0.0, 1.09142)
    d = hyp.derived(theta, data)
    assert d["dP_dt"].values[0] == pytest.approx(-29.0, abs=1.0)
    assert d["decay_timescale"].values[0] == pytest.approx(3.25, abs=0.12)


@pytest.mark.parametrize("e", [0.0, 0.1, 0.4, 0.7, 0.9])
@pytest.mark.parametrize("omega_deg", [0.0, 35.0, 90.0, 160.0, 270.0])
def test_light_time_half_range_irwin(e, omega_deg):
    # Irwin 1952 (ApJ 116, 211): half-range = A sqrt(1 - e^2 cos^2 omega).
    # A dense grid over one period resolves the extrema to ~1e-7 relative.
    omega = np.radians(omega_deg)
    t = np.linspace(0.0, 1000.0, 400001)
    delay = light_time_delay(t, 1.0, 1000.0, np.sqrt(e) * np.cos(omega), np.sqrt(e) * np.sin(omega), 0.3)
    half_range = 0.5 * (delay.max() - delay.min())
    assert half_range == pytest.approx(np.sqrt(1 - e ** 2 * np.cos(omega) ** 2), rel=1e-5)


def test_precession_moves_transits_and_occultations_oppositely():
    # Gimenez & Bastero 1995 as in Patra et al. 2017, eqs. 4-5: the
    # e cos(omega) terms of transits and occultations have opposite signs.
    hyp = get_hypothesis("apsidal-precession")
    epochs = np.arange(0, 2000, 50.0)
    tr = TimingData(epochs, np.zeros_like(epochs), np.zeros(epochs.size, bool), epochs * 0, epochs * 0 + 1, 0.0, 2.0)
    oc = TimingData(epochs, np.full_like(epochs, 0.5), np.ones(epochs.size, bool), epochs * 0, epochs * 0 + 1, 0.0, 2.0)
    theta = np.array([0.0, 2.0, 0.01, 0.004, 2 * np.pi / 1500])
    flat = np.array([0.0, 2.0, 0.0, 0.0, 2 * np.pi / 1500])
    d_tr = hyp.predict(theta, tr) - hyp.predict(flat, tr)
    d_oc = hyp.predict(theta, oc) - hyp.predict(flat, oc)
    assert np.allclose(d_tr, -d_oc, atol=1e-12)
    assert np.max(np.abs(d_tr)) == pytest.approx(np.hypot(0.01, 0.004) * 2.0 / (1 - theta[4] / (2 * np.pi)) / np.pi, rel=1e-3)


def test_decay_occultations_shift_like_transits():
    # Patra et al. 2017, eqs. 2-3: the quadratic term is the same for both.
    hyp = get_hypothesis("orbital-decay")
    e = np.arange(0, 3000, 100.0)
    tr = TimingData(e, np.zeros_like(e), np.zeros(e.size, bool), e * 0, e * 0 + 1, 0.0, 2.0)
    oc = TimingData(e, np.full_like(e, 0.5), np.ones(e.size, bool), e * 0, e * 0 + 1, 0.0, 2.0)
    theta = np.array([0.0, 2.0, -1e-9])
    assert np.allclose(hyp.predict(theta, oc) - hyp.predict(theta, tr), 1.0, atol=1e-12)


def test_resonance_super_period():
    # Lithwick, Xie & Wu 2012 definitions: P = 10 d, P' = 20.4 d, j = 2 ->
    # Delta = 0.0200, P_j = 510.0 d (shared/CHECKS.md, derived).
    hyp = get_hypothesis("near-resonant-perturber(j=2)")
    data = TimingData(np.zeros(1), np.zeros(1), np.zeros(1, bool), np.zeros(1), np.ones(1), 0.0, 10.0)
    d = hyp.derived(np.array([[0.0, 10.0, 1e-4, 0.0, 20.4]]), data)
    assert d["super_period"].values[0] == pytest.approx(510.0, rel=1e-12)
    assert d["resonance_distance"].values[0] == pytest.approx(0.02, rel=1e-12)


def test_resonance_mass_formula():
    # LXW 2012 eq. 8 for zero free eccentricity (from memory):
    # |V| = P mu' |f| / (pi j^(2/3) (j-1)^(1/3) |Delta|): inverting it must
    # return the mass ratio we put in.
    from ttvkit.physics.resonance import resonance_coefficients
    p, pp, j, mu = 10.0, 20.4, 2, 3e-5
    f, _ = resonance_coefficients(j, (p / pp) ** (2 / 3))
    v = p * 86400 * mu * abs(f) / (np.pi * j ** (2 / 3) * (j - 1) ** (1 / 3) * 0.02)
    hyp = get_hypothesis("near-resonant-perturber")
    data = TimingData(np.zeros(1), np.zeros(1), np.zeros(1, bool), np.zeros(1), np.ones(1), 0.0, p,
                      HostContext(star_mass=1.0))
    d = hyp.derived(np.array([[0.0, p, v / 86400, 0.0, pp]]), data)
    assert d["perturber_mass_ratio"].values[0] == pytest.approx(mu, rel=1e-9)
    assert d["perturber_mass"].values[0] == pytest.approx(mu * 1047.57, rel=1e-4)


@pytest.mark.parametrize("j,f,g", [(2, -1.190, 0.4284), (3, -2.025, 2.484), (4, -2.840, 3.283), (5, -3.650, 4.084)])
def test_lithwick_table3(j, f, g):
    # Lithwick, Xie & Wu 2012, Table 3 (from memory), at exact commensurability.
    from ttvkit.physics.resonance import resonance_coefficients
    ff, gg = resonance_coefficients(j)
    assert ff == pytest.approx(f, abs=1e-3)
    assert gg == pytest.approx(g, abs=1e-3)


def test_combinations_and_names():
    h = get_hypothesis("orbital-decay+sinusoidal-modulation")
    assert [p.name for p in h.parameters()][:3] == ["T0", "P", "dP_dE"]
    with pytest.raises(InputError, match="ephemeris"):
        get_hypothesis("orbital-decay+apsidal-precession")
    with pytest.raises(InputError, match="unknown hypothesis"):
        get_hypothesis("tidal-wobble")
    with pytest.raises(InputError, match="j must be"):
        get_hypothesis("near-resonant-perturber(j=x)")


@pytest.mark.parametrize("name", HYPOTHESIS_NAMES)
def test_every_parameter_has_a_symbol_for_figures(name):
    # Figures for a paper label axes with symbols (dP/dE, P₃, e′ cos ω′), never the code's
    # names (ttv_cos_amplitude); common practice, no source.
    from ttvkit.hypotheses.base import SYMBOLS

    for p in get_hypothesis(name).parameters():
        assert p.name in SYMBOLS, f"{name}: parameter {p.name} has no symbol"
        assert "_" not in p.symbol, p.symbol
