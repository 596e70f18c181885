"""Honest mid-time errors: the white level measured, correlated noise modelled, long cadence integrated.

Pull tests run on simulated light curves (batman, fixed seeds; lc_sim.py).
The issue's criterion is pull std in [0.9, 1.1] and <= 1% beyond 3 sigma
over >= 500 transits per case; that full table is printed by
benchmarks/midtime_speed.py.  Here each case has 200 transits (20 light
curves of 10), where the sample std of unit-normal pulls has a spread of
1/sqrt(400) = 0.05: the band [0.85, 1.15] is 3 of those, and still fails
every uncorrected case (given errors 2x off give 0.5 and 2.0; AR(1) noise
with white-only errors gives 1.66 and 2.9, measured).  Beyond 3 sigma: a
normal gives 0.27%, i.e. 0.5 of 200; <= 2.5% (5 of 200) has a chance
below 0.2% of failing for honest errors (binomial).
"""

import batman
import numpy as np
import pytest
from lightcurves.lc_sim import MINUTE, SHAPE, exposed, simulate_curve

from ttvkit.lightcurves.midtime import WindowModel, fit_mid_time
from ttvkit.lightcurves.noise import fit_red_noise
from ttvkit.lightcurves.per_curve import supersampled, time_light_curve
from ttvkit.lightcurves.reading import Window, cut_windows
from ttvkit.lightcurves.reference import mid_time_mcmc

T14, TAU = SHAPE.durations()

CASES = {
    "white": ({}, 0),
    "red 500 ppm, 15 min": ({"red": (5e-4, 15 * MINUTE)}, 1),
    "red 1000 ppm, 30 min": ({"red": (1e-3, 30 * MINUTE)}, 2),
    "errors 2x too large": ({"given": 2e-3}, 3),
    "errors 2x too small": ({"given": 5e-4}, 4),
    "30-min cadence": ({"cadence": 30 * MINUTE, "exposure": 30 * MINUTE, "white": 3e-4}, 5),
}


def pulls_for(kw, seed, curves=20, noise="auto"):
    rng = np.random.default_rng(seed)
    pulls, infos = [], []
    for _ in range(curves):
        lc, truths, eph = simulate_curve(rng, **kw)
        timed, untimed, info = time_light_curve(lc, cut_windows(lc, eph, T14, TAU), SHAPE, noise)
        assert not untimed, untimed
        pulls += [(m.time - truths[m.epoch]) / m.uncertainty for m in timed]
        infos.append(info)
    return np.array(pulls), infos


@pytest.mark.parametrize("case", list(CASES))
def test_pulls_are_honest(case):
    kw, seed = CASES[case]
    pulls, infos = pulls_for(kw, 1400 + seed)
    assert pulls.size == 200
    assert 0.85 <= np.std(pulls) <= 1.15, np.std(pulls)
    assert np.mean(np.abs(pulls) > 3) <= 0.025
    used = [i["red_noise"]["used"] for i in infos]
    # the GP is used where the noise is red, and (almost) never on white data: the
    # 2 dlnL > 9.21 threshold has a false-alarm rate <= 1% per light curve
    assert all(used) if "red" in case else sum(used) <= 2


def test_measured_white_level_matches_the_truth():
    # errors given 2x too large: the out-of-transit scatter says 0.5, to the
    # 1/sqrt(2 n) ~ 1.5% of ~2000 out-of-transit points (3 sigma: 5%)
    rng = np.random.default_rng(1410)
    lc, _, eph = simulate_curve(rng, given=2e-3)
    timed, _, info = time_light_curve(lc, cut_windows(lc, eph, T14, TAU), SHAPE, "white")
    assert info["white_ratio"] == pytest.approx(0.5, rel=0.05)
    assert {m.error_source for m in timed} == {"flux_err x ratio"}


def test_red_noise_hyperparameters_are_recovered():
    # AR(1) of rms 1000 ppm and tau = 30 min on 1000 ppm white noise: the fitted
    # exponential kernel is the AR(1) process (Foreman-Mackey et al. 2017: a
    # celerite real term); from 10 windows of 288 points, A within 30% and tau
    # within a factor 2 (their spread over seeds, measured ~10% and ~30%)
    rng = np.random.default_rng(1411)
    lc, _, eph = simulate_curve(rng, red=(1e-3, 30 * MINUTE))
    windows = cut_windows(lc, eph, T14, TAU)
    fits = [fit_mid_time(w, SHAPE) for w in windows]
    red = fit_red_noise([w.time for w in windows], [m.residuals for m in fits], [w.flux_err for w in windows],
                        2 * MINUTE)
    assert red.detected
    assert red.amplitude == pytest.approx(1e-3, rel=0.3)
    assert 15 * MINUTE < red.timescale < 60 * MINUTE
    assert red.white_scale == pytest.approx(1.0, rel=0.1)


def test_batman_supersampling_includes_the_exposure_ends():
    # batman (Kreidberg 2015) spreads its sub-points over
    # linspace(-exp_time/2, exp_time/2, n), ends included: checked on its own
    # sub-sample times.  WindowModel asks for E (n-1)/n, so its sub-points are
    # the midpoints of n slices of the instrument's exposure E: its model must
    # equal a fine midpoint-rule average over E (lc_sim.exposed, 61 points).
    exposure = 30 * MINUTE
    p = SHAPE.batman_params(0.0)
    m = batman.TransitModel(p, np.array([0.0]), supersample_factor=5, exp_time=exposure)
    assert np.allclose(m.t_supersample, np.linspace(-exposure / 2, exposure / 2, 5))
    t = np.arange(-0.2, 0.2, exposure) + 0.37 * exposure
    shape = supersampled(SHAPE, exposure)
    model = WindowModel(t, np.ones(t.size), np.ones(t.size), shape)
    truth = exposed(SHAPE, t, 0.001, exposure)
    # 15 midpoint sub-points against 61: within 5e-6 (1/2000 of the 1.1% depth; measured 2.4e-6)
    assert np.max(np.abs(model.light_curve(0.001) - truth)) < 5e-6
    naive = batman.TransitModel(p, t, supersample_factor=shape.supersample, exp_time=exposure)
    p.t0 = 0.001
    # the same points with E passed as is: an exposure 15/14 too long, off by ~1e-4 (measured)
    assert np.max(np.abs(naive.light_curve(p) - truth)) > 5e-5


def test_long_cadence_sampling_phase_sweep():
    # Noiseless 30-min integrations, the mid-time swept over one cadence in 24
    # steps: rms timing error <= 1 s (the criterion; before the fix:
    # rms 10.4 s, max 14.9 s, a fake periodic TTV as the phase drifts)
    exposure = 30 * MINUTE
    shape = supersampled(SHAPE, exposure)
    errors = []
    for phase in np.arange(24) / 24:
        t = np.arange(-0.3, 0.3, exposure) + phase * exposure
        f = exposed(SHAPE, t, 0.0, exposure)
        w = Window(0, 0.0, t, f, np.full(t.size, 1e-5), "full", "noiseless")
        errors.append(fit_mid_time(w, shape).time * 86400)
    assert np.sqrt(np.mean(np.square(errors))) <= 1.0
    assert np.max(np.abs(errors)) <= 2.0


def test_long_cadence_windows_are_full():
    # 30-min data of a 3-h transit: 6 points in transit, ingress and egress
    # sampled in time -> "full" (a point count of 10 used to call it sparse)
    rng = np.random.default_rng(1412)
    lc, _, eph = simulate_curve(rng, n_transits=3, cadence=30 * MINUTE, exposure=30 * MINUTE)
    assert [w.coverage for w in cut_windows(lc, eph, T14, TAU)] == ["full"] * 3


def cramer_rao(t, truth, sigma, h=1e-5):
    """Numerical bound: Fisher matrix of (t0, baseline a + b t) from the model's derivative."""
    base = 1 + 0.002 * t
    slope = (exposed(SHAPE, t, truth + h) - exposed(SHAPE, t, truth - h)) / (2 * h) * base
    m = exposed(SHAPE, t, truth)
    j = np.column_stack([slope, m, m * t])
    return np.linalg.inv(j.T @ j / sigma ** 2)[0, 0]


def test_scatter_at_the_numerical_cramer_rao_bound():
    # 500 limb-darkened transits, white noise, 2-min cadence: the scatter of the
    # mid-times within 10% of the numerical Cramer-Rao bound (Fisher
    # information from the model's derivative; Carter et al. 2008 is its
    # no-limb-darkening analytic limit, test_midtime.py).  The std of 500 has a
    # spread of 1/sqrt(1000) = 3.2%, so 10% is 3.2 of those.
    rng = np.random.default_rng(1413)
    errors, bounds = [], []
    for _ in range(50):
        lc, truths, eph = simulate_curve(rng)
        for w in cut_windows(lc, eph, T14, TAU):
            m = fit_mid_time(w, SHAPE)
            errors.append(m.time - truths[w.epoch])
            bounds.append(cramer_rao(w.time - w.predicted, truths[w.epoch] - w.predicted, 1e-3))
    assert np.std(errors) / np.sqrt(np.mean(bounds)) == pytest.approx(1.0, abs=0.10)


@pytest.mark.slow
def test_gp_path_agrees_with_the_emcee_reference():
    # The slow reference with the same GP likelihood: mid-times within 0.2
    # sigma, uncertainties within 15% (emcee's own sd has ~5% sampling noise)
    rng = np.random.default_rng(1414)
    lc, _, eph = simulate_curve(rng, n_transits=4, red=(1e-3, 30 * MINUTE))
    windows = cut_windows(lc, eph, T14, TAU)
    fits = [fit_mid_time(w, SHAPE) for w in windows]
    red = fit_red_noise([w.time for w in windows], [m.residuals for m in fits], [w.flux_err for w in windows],
                        2 * MINUTE)
    for w in windows[:2]:
        fast = fit_mid_time(w, SHAPE, red=red)
        median, sd = mid_time_mcmc(w, SHAPE, n_steps=2000, seed=2, red=red)
        assert abs(fast.time - median) < 0.2 * sd
        assert fast.uncertainty == pytest.approx(sd, rel=0.15)
