"""Per-source excess noise (issue 13): the likelihood, the decision, and honest errors on simulations."""

from __future__ import annotations

import numpy as np
import pytest
from scipy.stats import norm
from simulate import PERIOD, T_REF

from ttvkit import TimingTable
from ttvkit.inference.excess_noise import MIN_ROWS_PER_SOURCE, decide_excess_noise, jitter_likelihood
from ttvkit.inference.fitting import fit
from ttvkit.inference.likelihood import OTHER_SOURCES, Likelihood

DAY = 86400.0


def two_sources(rng, n=120, quoted_s=30.0, true_a_s=60.0, true_b_s=30.0, dp_de=-4e-10):
    """Source A understates its errors (true scatter 2x the quoted), source B states them right;
    both sample the same decaying orbit over 4000 epochs, interleaved in time, with gaps."""
    epochs = np.sort(rng.choice(np.arange(4000), 2 * n, replace=False))
    source = np.where(rng.random(2 * n) < 0.5, "A", "B")
    truth = T_REF + PERIOD * epochs + 0.5 * dp_de * epochs ** 2
    scatter = np.where(source == "A", true_a_s, true_b_s) / DAY
    time = truth + rng.normal(0.0, scatter)
    return TimingTable(time, np.full(2 * n, quoted_s / DAY), epoch=epochs, source=source)


def test_per_source_likelihood_matches_scipy_normal():
    # reference: scipy.stats.norm.logpdf with each row's variance sigma^2 + s_group^2
    rng = np.random.default_rng(1)
    resid, sigma = rng.normal(size=7), rng.uniform(0.5, 2.0, 7)
    source = np.array(["a", "b", "c", "a", "b", "a", "c"])
    like = Likelihood(jitter_sources=["a", "b"])
    assert like.jitter_groups == ("a", "b", OTHER_SOURCES) and like.n_extra == 3
    log_s = np.log([0.3, 1.5, 0.7])
    group = like.group_index(source, 7)
    expected = norm.logpdf(resid, scale=np.sqrt(sigma ** 2 + np.exp(2 * log_s)[group])).sum()
    assert like(resid, sigma, log_s, group) == pytest.approx(expected, rel=1e-12)
    # a batch of parameter vectors gives a batch of values
    batch = like(resid[None, :], sigma, np.vstack([log_s, log_s]), group)
    assert batch.shape == (2,) and batch[0] == pytest.approx(expected, rel=1e-12)


def test_jitter_groups_follow_the_row_counts():
    sources = ["big"] * 30 + ["mid"] * MIN_ROWS_PER_SOURCE + ["s1"] * 3 + ["s2"] * 2
    table = TimingTable(2456000.0 + 2.0 * np.arange(len(sources)), 1e-4, epoch=np.arange(len(sources)),
                        source=sources)
    like = jitter_likelihood(table, Likelihood())
    assert like.jitter_groups == ("big", "mid", OTHER_SOURCES)
    # every source rich: no empty "other" term
    only = table.subset(np.isin(table.source, ["big", "mid"]))
    assert jitter_likelihood(only, Likelihood()).jitter_groups == ("big", "mid")
    # one source: a single jitter
    assert jitter_likelihood(table.subset(table.source == "big"), Likelihood()).jitter_groups == (OTHER_SOURCES,)
    # a refit without a source keeps no jitter that nothing constrains
    assert like.restricted_to(only.source).jitter_groups == ("big", "mid")


def test_per_source_jitter_recovers_each_sources_excess():
    # A: quoted 30 s, true 60 s -> jitter sqrt(60^2 - 30^2) = 52 s; B: true = quoted -> jitter ~ 0.
    table = two_sources(np.random.default_rng(2), n=150)
    decision = decide_excess_noise(table)
    assert decision.applied and set(decision.likelihood.jitter_groups) == {"A", "B"}
    result = fit(table, "orbital-decay", decision.likelihood)
    a, b = result.estimate("jitter[A]"), result.estimate("jitter[B]")
    # a variance from ~150 points is known to ~12 %, so s_A to ~10 % (about 5 s); 3 sigma allowed
    assert a.value == pytest.approx(52.0, abs=15.0)
    assert b.value < 20.0  # consistent with none: 20 s is 3x what 150 points at 30 s could hide


@pytest.mark.parametrize("per_source", [True, False])
def test_decay_rate_pulls_have_unit_width_with_excess_noise(per_source):
    # 60 simulated tables of two sources, one understating its errors 2x (see two_sources): the
    # pulls (fit - truth) / error of dP/dE must have unit width.  The standard deviation of 60 unit
    # normals has a standard error of ~0.09, so 0.75-1.3 is a ~3-sigma window.  The plain
    # least-squares fit, whose errors ignore the excess, is the control that must fail.
    rng = np.random.default_rng(3)
    pulls, plain, errors, single_errors = [], [], [], []
    for _ in range(60):
        table = two_sources(rng, n=60)
        like = jitter_likelihood(table, Likelihood()) if per_source else Likelihood(jitter=True)
        est = fit(table, "orbital-decay", like).estimate("dP_dE")
        pulls.append((est.value + 4e-10) / (0.5 * (est.lower + est.upper)))
        errors.append(0.5 * (est.lower + est.upper))
        if per_source:
            est = fit(table, "orbital-decay").estimate("dP_dE")
            plain.append((est.value + 4e-10) / (0.5 * (est.lower + est.upper)))
            est = fit(table, "orbital-decay", Likelihood(jitter=True)).estimate("dP_dE")
            single_errors.append(0.5 * (est.lower + est.upper))
    assert 0.75 < np.std(pulls) < 1.3
    assert abs(np.mean(pulls)) < 0.4  # 3 standard errors of the mean of 60
    if per_source:
        assert np.std(plain) > 1.3  # errors understated by the unmodelled excess
        # weighting each source by its own scatter beats one shared jitter (A's rows count less)
        assert np.median(errors) < 0.95 * np.median(single_errors)
