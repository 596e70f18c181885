"""Validity domains: each Term says where its model holds (fixed seeds, simulated tables)."""

import numpy as np
import pytest
from simulate import design

from ttvkit.hypotheses import TimingData, get_hypothesis


def data_over(span_epochs=2000, n=100, seed=3):
    epochs, occ, sigma = design(np.random.default_rng(seed), n=n, span_epochs=span_epochs)
    phase = np.where(occ, 0.5, 0.0)
    return TimingData(epochs, phase, occ, 2.0 * (epochs + phase), sigma, 2456000.0, 2.0)


def test_modulation_longer_than_the_baseline_is_a_trend():
    # 52.7 yr on ~11 yr of data (the case): less than one cycle, so a trend in disguise
    data = data_over()
    hyp = get_hypothesis("sinusoidal-modulation")
    long = hyp.validity([0.0, 2.0, 1e-4, 0.0, 52.7 * 365.25], data)
    short = hyp.validity([0.0, 2.0, 1e-4, 0.0, 0.4 * data.span], data)
    assert len(long) == 1 and "trend" in long[0]
    assert short == []


def test_near_resonant_super_period_and_resonance_width():
    # Lithwick, Xie & Wu 2012: near, not in, resonance (abs(Δ) > μ^(2/3), from memory) and a
    # super-period the data cover.  P = 2 d, j = 2: P' = 4.1 d gives Δ = 0.025 and P_j = 82 d.
    data = data_over()
    hyp = get_hypothesis("near-resonant-perturber")
    assert hyp.validity([0.0, 2.0, 5e-5, 0.0, 4.1], data) == []
    # P' = 4.0004 d: Δ = 1e-4, super-period 27 yr (longer than the 11-yr baseline)
    reasons = hyp.validity([0.0, 2.0, 5e-5, 0.0, 4.0004], data)
    assert reasons and "super-period" in reasons[0]
    # a huge amplitude at modest Δ implies a mass whose resonance width swallows Δ
    # 0.2-d amplitude: μ ≈ 0.01, μ^(2/3) ≈ 0.05 > Δ = 0.025
    wide = hyp.validity([0.0, 2.0, 0.2, 0.0, 4.1], data)
    assert wide and "resonance width" in wide[0]


def test_precession_at_the_edge_of_first_order():
    # Giménez & Bastero 1995: first order in e; the prior stops at 0.1
    data = data_over()
    hyp = get_hypothesis("apsidal-precession")
    assert hyp.validity([0.0, 2.0, 0.02, 0.01, 0.01], data) == []
    assert "first-order" in hyp.validity([0.0, 2.0, 0.099, 0.0, 0.01], data)[0]


def test_constant_and_decay_hold_everywhere():
    data = data_over()
    assert get_hypothesis("constant-period").validity([0.0, 2.0], data) == []
    assert get_hypothesis("orbital-decay").validity([0.0, 2.0, -1e-10], data) == []


def test_searched_periods_count_as_astropy_counts_independent_frequencies():
    # astropy's "naive" false-alarm probability of a Lomb-Scargle peak is 1 - (1 - p_single)^N with
    # N = T f_max independent frequencies (astropy.timeseries documentation); the look-elsewhere
    # charge counts the sinusoid's trials as T (f_max - f_min), which differs by T f_min = 0.2
    # (tolerance 0.5: that, and astropy's float rounding of N through two logarithms).
    from astropy.timeseries import LombScargle

    from ttvkit.diagnosis.verdicts import look_elsewhere
    from ttvkit.hypotheses._periodic import period_range

    data = data_over()
    t = data.epoch * data.period
    term = get_hypothesis("sinusoidal-modulation").terms[0]
    ours = data.span * term.searched_frequencies(data)
    f_max = 1.0 / period_range(data)[0]
    ls = LombScargle(t, np.random.default_rng(1).normal(size=t.size))
    z = 0.05
    single = ls.false_alarm_probability(z, method="single")
    naive = ls.false_alarm_probability(z, method="naive", maximum_frequency=f_max)
    theirs = np.log1p(-naive) / np.log1p(-single)
    assert ours == pytest.approx(theirs, abs=0.5)

    # a wider search pays more: the near-resonant super-frequency reaches ~0.1/P, the
    # precession rate 2 pi / 20 orbits, the modulation 40 cycles per baseline
    class Fit:
        def __init__(self, name):
            self.hypothesis, self.data = get_hypothesis(name), data
    charges = {name: look_elsewhere(Fit(name)) for name in
               ("orbital-decay", "sinusoidal-modulation", "apsidal-precession", "near-resonant-perturber")}
    assert charges["orbital-decay"] == 0.0
    assert 0 < charges["sinusoidal-modulation"] < charges["apsidal-precession"] < charges["near-resonant-perturber"]
    assert charges["sinusoidal-modulation"] == pytest.approx(2 * np.log(ours) - np.log(data.n))
