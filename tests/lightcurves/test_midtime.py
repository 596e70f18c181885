"""Mid-times from light curves, against analytic bounds and a slow reference."""

import batman
import numpy as np
import pytest
from lightcurves.lc_sim import ar1

from ttvkit import InputError
from ttvkit.lightcurves.measure import fit_shape, measure
from ttvkit.lightcurves.midtime import TransitShape, WindowModel, fit_mid_time, tabulated_transit
from ttvkit.lightcurves.reading import Window, cut_windows, read_light_curve
from ttvkit.lightcurves.reference import mid_time_mcmc
from ttvkit.timing import Ephemeris

# Winn (2010) worked case (shared/CHECKS.md): P = 3 d, a/R* = 8, k = 0.1, b = 0.3.
SHAPE = TransitShape(period=3.0, radius_ratio=0.1, a_over_rstar=8.0, impact_parameter=0.3, q1=0.4356, q2=0.3030)
UNIFORM = TransitShape(period=3.0, radius_ratio=0.1, a_over_rstar=8.0, impact_parameter=0.3, q1=1e-12, q2=0.0)
CADENCE = 2.0 / 1440


def simulate_window(rng, shape, sigma=1e-3, cadence=CADENCE, noise=None, truth=None, half=0.2, exposure=0.0,
                    keep=None):
    truth = rng.uniform(-0.005, 0.005) if truth is None else truth
    t = np.arange(-half, half, cadence) + rng.uniform(0, cadence)
    p = shape.batman_params(truth)
    kw = {"supersample_factor": 31, "exp_time": exposure} if exposure else {}
    f = batman.TransitModel(p, t, **kw).light_curve(p) * (1 + 0.002 * t)
    f = f + (rng.normal(0, sigma, t.size) if noise is None else noise(rng, t.size))
    if keep is not None:
        m = keep(t)
        t, f = t[m], f[m]
    return Window(0, 0.0, t, f, np.full(t.size, sigma), "full", "simulated"), truth


def test_durations_match_winn_2010():
    # Winn 2010 eqs. 14-16 worked case: i = 87.8509 deg, T14 = 3.04287 h,
    # T23 = 2.43716 h (memory; agrees with batman's contact points below).
    t14, tau = SHAPE.durations()
    assert SHAPE.inclination == pytest.approx(87.8509, abs=1e-4)
    assert t14 * 24 == pytest.approx(3.04287, abs=1e-5)
    assert (t14 - 2 * tau) * 24 == pytest.approx(2.43716, abs=1e-5)
    # batman's model: first and last points below unity on a 0.1-s grid
    t = np.arange(-0.1, 0.1, 0.1 / 86400)
    p = UNIFORM.batman_params(0.0)
    inside = t[batman.TransitModel(p, t).light_curve(p) < 1]
    assert (inside[-1] - inside[0]) * 24 == pytest.approx(3.04287, abs=1e-3)


TABLE_SHAPES = {
    "limb-darkened": SHAPE,
    "uniform disk": UNIFORM,
    "grazing": TransitShape(period=1.5, radius_ratio=0.15, a_over_rstar=5.0, impact_parameter=1.05),
    "eccentric": TransitShape(period=20.0, radius_ratio=0.05, a_over_rstar=25.0, impact_parameter=0.5,
                              eccentricity=0.4, omega=30.0),
    "30-min exposure": TransitShape(period=3.0, radius_ratio=0.1, a_over_rstar=8.0, impact_parameter=0.3,
                                    exposure_time=30 / 1440, supersample=15),
}


@pytest.mark.parametrize("name", TABLE_SHAPES)
def test_tabulated_model_matches_direct_batman_calls(name):
    # Reference: batman itself (Kreidberg 2015), called at each trial mid-time as the fit did before
    # it interpolated one table per shape.  Tolerance 1e-4 of the depth: the interpolation's bound
    # (midtime.TABLE_STEPS_PER_INGRESS), two orders below the 1e-3 .. 1e-4 photometric noise of
    # real transits; and the chi2 minimum moves by < 1% of the mid-time error.
    shape = TABLE_SHAPES[name]
    rng = np.random.default_rng(11)
    t14, _ = shape.durations()
    t = 2460000.0 + np.sort(rng.uniform(-1.5 * t14, 1.5 * t14, 400))
    u, table = tabulated_transit(shape)
    assert table[0] == 1.0 and table[-1] == 1.0 and table.min() < 1.0
    depth = 1.0 - table.min()
    fast = WindowModel(t, np.ones(t.size), np.full(t.size, 1e-3), shape)
    slow = WindowModel(t, np.ones(t.size), np.full(t.size, 1e-3), shape, tabulated=False)
    for t0 in 2460000.0 + rng.uniform(-0.1 * t14, 0.1 * t14, 25):
        assert np.max(np.abs(fast.light_curve(t0) - slow.light_curve(t0))) < 1e-4 * depth
    # the fitted mid-time on a noisy window: same with the table as with direct calls
    truth = 2460000.0 + 0.003
    p = shape.batman_params(truth - 2460000.0)
    flux = batman.TransitModel(p, t - 2460000.0, **({"supersample_factor": 15, "exp_time": shape.exposure_time}
                                                    if shape.exposure_time else {})).light_curve(p)
    flux = flux + rng.normal(0, 1e-3, t.size)
    window = Window(0, 2460000.0, t, flux, np.full(t.size, 1e-3), "full", "simulated")
    fitted = fit_mid_time(window, shape)
    slow = WindowModel(t, flux, np.full(t.size, 1e-3), shape, tabulated=False)
    grid = fitted.time + np.linspace(-0.3, 0.3, 61) * fitted.uncertainty
    chi2 = np.array([slow.chi2(g) for g in grid])
    vertex = np.polyfit(grid - fitted.time, chi2, 2)
    assert abs(-vertex[1] / (2 * vertex[0])) < 0.01 * fitted.uncertainty


def test_scatter_matches_the_carter_bound():
    # Carter et al. 2008 (ApJ 689, 499): sigma_tc = (sigma/delta) sqrt(tau / (2 Gamma)).
    # 600 uniform-disk transits (the bound's trapezoid), white noise, 2-min cadence.
    # Tolerance 15% (the issue), pull std in [0.9, 1.1] over >= 500 transits.
    rng = np.random.default_rng(101)
    t14, tau = UNIFORM.durations()
    carter = 1e-3 / UNIFORM.radius_ratio ** 2 * np.sqrt(tau / (2 / CADENCE))
    errors, pulls = [], []
    for _ in range(600):
        w, truth = simulate_window(rng, UNIFORM)
        m = fit_mid_time(w, UNIFORM, correlated_noise=False)
        errors.append(m.time - truth)
        pulls.append((m.time - truth) / m.uncertainty)
    assert np.std(errors) / carter == pytest.approx(1.0, abs=0.15)
    assert 0.9 <= np.std(pulls) <= 1.1
    assert abs(np.mean(pulls)) < 0.15  # 3.6 sigma of the mean of 600


def test_carter_worked_number():
    # shared/CHECKS.md: sigma = 1e-3, Gamma = 1440/d, delta = 0.01, tau = 20 min -> 18.97 s
    assert 1e-3 / 0.01 * np.sqrt((20 / 1440) / (2 * 1440)) * 86400 == pytest.approx(18.97, abs=0.01)


def red_noise(phi=0.7, scale=1e-3):
    """AR(1) noise with lag-one correlation ``phi`` between neighbouring points (lc_sim.ar1)."""
    return lambda rng, n: ar1(rng, n, 1.0, scale, -1.0 / np.log(phi))


def test_beta_sees_red_noise():
    # AR(1) noise (phi = 0.7 per 2-min point): beta > 1 (Pont et al. 2006;
    # Winn et al. 2008), reported in every fit and applied only on request
    # (honest errors for correlated noise come from the GP: test_noise.py).
    rng = np.random.default_rng(202)
    betas, inflated = [], []
    for _ in range(100):
        w, _ = simulate_window(rng, SHAPE, noise=red_noise())
        m = fit_mid_time(w, SHAPE, correlated_noise=True)
        betas.append(m.beta)
        inflated.append(m.uncertainty / m.white_uncertainty)
    assert np.median(betas) > 1.3
    assert np.allclose(inflated, betas)


def test_beta_is_one_for_white_noise():
    rng = np.random.default_rng(203)
    betas = [fit_mid_time(simulate_window(rng, SHAPE)[0], SHAPE).beta for _ in range(100)]
    assert np.median(betas) < 1.1


def test_fast_path_agrees_with_the_emcee_reference():
    # The slow reference (emcee over t0 and the baseline): mid-times within
    # 0.15 sigma, uncertainties within 10% (the criterion).  The
    # posterior median itself wanders by ~0.04 sigma with the walkers' start
    # (16 walkers x 2000 kept steps, ~1000 independent samples): 0.1 sigma
    # was 2.5 of those and failed at 0.107 when the start moved by 0.01 sigma.
    rng = np.random.default_rng(303)
    for _ in range(4):
        w, _ = simulate_window(rng, SHAPE)
        fast = fit_mid_time(w, SHAPE, correlated_noise=False)
        median, sd = mid_time_mcmc(w, SHAPE, n_steps=3000, seed=1)
        assert abs(fast.time - median) < 0.15 * sd
        assert fast.uncertainty == pytest.approx(sd, rel=0.10)


def test_supersampling_removes_the_long_cadence_bias():
    # 30-min integrations (Kipping 2010, MNRAS 408, 1758) on transits whose
    # egress is not covered: a model without supersampling is wrong (its
    # errors are several times larger); the supersampled model is unbiased.
    # Shown on 200 transits each; "unbiased" = mean within 3 standard errors.
    rng = np.random.default_rng(404)
    exposure = 30 / 1440
    smeared = TransitShape(**{**SHAPE.__dict__, "exposure_time": exposure, "supersample": 15})
    plain, super_ = [], []
    for _ in range(200):
        w, truth = simulate_window(rng, SHAPE, sigma=1e-4, cadence=exposure, exposure=exposure, half=0.3,
                                   keep=lambda t: t < 0.02)
        plain.append(fit_mid_time(w, SHAPE, correlated_noise=False).time - truth)
        super_.append(fit_mid_time(w, smeared, correlated_noise=False).time - truth)
    plain, super_ = np.array(plain), np.array(super_)
    assert abs(super_.mean()) < 3 * super_.std() / np.sqrt(200)
    assert np.sqrt(np.mean(plain ** 2)) > 3 * np.sqrt(np.mean(super_ ** 2))


def test_fitted_shape_recovers_the_duration():
    # Global shape fit over 8 windows: T14 within 1% of the Winn closed form
    # of the true shape.
    rng = np.random.default_rng(505)
    windows = []
    for k in range(8):
        w, truth = simulate_window(rng, SHAPE, sigma=5e-4, truth=0.0)
        windows.append(Window(k, 0.001 * rng.normal(), w.time, w.flux, w.flux_err, "full", "s"))
    start = TransitShape(3.0, 0.09, 7.0, 0.4)
    fitted = fit_shape(windows, start)
    assert fitted.durations()[0] == pytest.approx(SHAPE.durations()[0], rel=0.01)
    assert fitted.radius_ratio == pytest.approx(0.1, rel=0.03)


def write_lc(path, t, f, e, header="time,flux,flux_err"):
    lines = [header] + [f"{a:.10f},{b:.10g},{c:.10g}" for a, b, c in zip(t, f, e)]
    path.write_text("\n".join(lines) + "\n")
    return path


@pytest.mark.parametrize("case,match", [
    ("nan", "no usable points"),
    ("order", "strictly increasing"),
    ("columns", "missing column 'flux_err'"),
    ("errors", "flux errors must be positive"),
])
def test_bad_light_curves(tmp_path, case, match):
    t = 2456000.0 + np.arange(100) * CADENCE
    f = np.ones(100)
    e = np.full(100, 1e-3)
    if case == "nan":
        f = f * np.nan
    if case == "order":
        t = t[::-1]
    if case == "errors":
        e[5] = 0.0
    header = "time,flux,err" if case == "columns" else "time,flux,flux_err"
    p = write_lc(tmp_path / "lc.csv", t, f, e, header)
    with pytest.raises(InputError, match=match) as info:
        read_light_curve(p)
    assert "lc.csv" in str(info.value)


def test_measure_reports_untimed_windows(tmp_path):
    # one full transit, one half-covered: the partial one is reported, not dropped silently
    rng = np.random.default_rng(606)
    eph = Ephemeris(2456000.0, 3.0)
    paths = []
    for k, cut in enumerate([None, 0.0]):
        w, _ = simulate_window(rng, SHAPE, truth=0.0, keep=None if cut is None else (lambda t: t < 0.0))
        paths.append(write_lc(tmp_path / f"lc{k}.csv", w.time + 2456000.0 + 3.0 * k, w.flux, w.flux_err))
    table, report = measure(paths, eph, shape=SHAPE, progress=False)
    assert report.measured == 1 and list(table.epoch) == [0]
    assert report.skipped and "partial" in report.skipped[0]["reason"]
    table2, report2 = measure(paths, eph, shape=SHAPE, time_partial=True, progress=False)
    assert report2.measured == 2 and list(table2.extra["coverage"]) == ["full", "partial"]


def test_windows_with_no_points_are_not_invented(tmp_path):
    t = 2456000.5 + np.arange(50) * CADENCE   # far from any transit of this ephemeris
    p = write_lc(tmp_path / "lc.csv", t, np.ones(50), np.full(50, 1e-3))
    lc = read_light_curve(p)
    assert cut_windows(lc, Ephemeris(2456000.0, 3.0), 0.12, 0.01) == []
    with pytest.raises(InputError, match="no light-curve points near any predicted transit"):
        measure([p], Ephemeris(2456000.0, 3.0), shape=SHAPE, progress=False)
