"""Simulated timing tables for the injection-and-recovery tests (fixed seeds)."""

import numpy as np

from ttvkit import TimingTable
from ttvkit.hypotheses import TimingData, get_hypothesis

T_REF = 2456000.0
PERIOD = 2.0


def design(rng, n=120, span_epochs=4000, occultation_fraction=0.0, sigma_s=30.0):
    epochs = np.sort(rng.choice(np.arange(span_epochs), n, replace=False)).astype(float)
    occ = rng.random(n) < occultation_fraction
    sigma = np.where(occ, 2 * sigma_s, sigma_s) / 86400.0
    return epochs, occ, sigma


def simulate(name, theta, rng, **kwargs):
    """A TimingTable drawn from hypothesis ``name`` at internal parameters ``theta``."""
    hyp = get_hypothesis(name)
    epochs, occ, sigma = design(rng, **kwargs)
    phase = np.where(occ, 0.5, 0.0)
    data = TimingData(epochs, phase, occ, np.zeros(epochs.size), sigma, T_REF, PERIOD)
    truth = hyp.predict(np.asarray(theta, float), data) + T_REF
    times = truth + rng.normal(0.0, sigma)
    kinds = np.where(occ, "occultation", "transit")
    return TimingTable(times, sigma, epoch=epochs.astype(int), kind=kinds, source="simulated")


def internal(table_result, name):
    """Internal parameter value of the fit (T0 relative to T_REF)."""
    i = [p.name for p in table_result.hypothesis.parameters()].index(name)
    value = table_result.theta[i]
    if name == "T0":
        value = value + table_result.data.t_ref - T_REF
    return value, float(np.sqrt(table_result.covariance[i, i]))
