"""Leverage is not examined for a Gaussian-process hypothesis.

The deletion formula ranks rows by the Jacobian of the deterministic model; a Gaussian process lives in the
likelihood, so its three parameters have zero Jacobian columns and JᵀJ is singular (numpy's matrix_rank
says so below), every row's linearised shift is infinite and no row can be told from another.
"""

import numpy as np

from ttvkit import TimingTable
from ttvkit.inference.fitting import fit
from ttvkit.inference.leverage import _jacobian, find_leverage


def test_no_leverage_examination_for_a_gaussian_process():
    rng = np.random.default_rng(4)
    epochs = np.sort(rng.choice(np.arange(8000), 80, replace=False))
    sigma = np.full(epochs.size, 20.0 / 86400)
    # a 60-s sinusoid of 2000 orbits on a 1.5-d ephemeris, 20-s errors (invented)
    times = 2455000 + 1.5 * epochs + 60 / 86400 * np.sin(2 * np.pi * epochs / 2000) + rng.normal(0, sigma)
    table = TimingTable(times, sigma, epoch=epochs, kind="primary", source="simulated")
    result = fit(table, "quasi-periodic-modulation")
    jac = _jacobian(result)
    assert np.linalg.matrix_rank(jac.T @ jac) == 2 < result.hypothesis.n_parameters   # only T0 and P
    assert find_leverage(result, table) == []
