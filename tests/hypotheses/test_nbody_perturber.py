"""The n-body-perturber hypothesis: fitted and sampled against mid-times simulated with scipy's DOP853."""

import warnings
from concurrent.futures import ThreadPoolExecutor

import astropy.units as u
import numpy as np
import pytest
from systems import sun_and_jupiter

from ttvkit import InputError
from ttvkit.cli import main
from ttvkit.hypotheses import (
    DEFAULT_COMPARISON,
    HostContext,
    TimingData,
    get_hypothesis,
)
from ttvkit.inference import fit, sample
from ttvkit.physics import nbody
from ttvkit.timing import TimingTable

P = 3.0
T_START = 2458000.0
N = 160
SIGMA_S = 20.0
MASS_EARTH = 20.0
RATIO = 2.05
MEAN_START = 1.0           # the perturber's mean anomaly at the simulation's start (circular, omega = 0)
M_PLANET = (1 * u.Mjup / u.Msun).decompose().value
CONTEXT = HostContext(star_mass=1.0, companion_mass=M_PLANET)
# The hypothesis's longitude: the perturber's mean longitude minus the
# transiting planet's at the transit of epoch 0.  The simulation starts half
# an orbit before that transit with the planet at mean anomaly -pi (omega =
# pi/2, so its mean longitude at transit is pi/2): lambda' = 1 + pi/2.05 - pi/2.
TRUE_LONGITUDE = MEAN_START + 2 * np.pi * 0.5 / RATIO - np.pi / 2


def simulated_table(seed=5):
    """Mid-times of a 3-d Jupiter with a 20-Earth-mass planet at 2.05x, from DOP853 (rtol 1e-12), 20-s noise."""
    m = np.array([[1.0, M_PLANET, (MASS_EARTH * u.Mearth).to_value(u.Msun)]])
    z = np.zeros((1, 2))
    ref = nbody.reference_transit_times(m, np.array([[P, RATIO * P]]), z, np.array([[np.pi / 2, 0.0]]),
                                        np.full((1, 2), np.pi / 2), z, np.array([[-np.pi, MEAN_START]]),
                                        t_end=(N + 0.25) * P)[0][0][:N]
    rng = np.random.default_rng(seed)
    return TimingTable(T_START + ref + rng.normal(0, SIGMA_S, N) / 86400, np.full(N, SIGMA_S / 86400),
                       epoch=np.arange(N))


@pytest.fixture(scope="module")
def fitted():
    table = simulated_table()
    return table, fit(table, "n-body-perturber", context=CONTEXT)


def test_fit_recovers_the_simulated_perturber(fitted):
    # Truth from scipy's DOP853, not from the engine the hypothesis uses.
    # Within 3 sigma of the fit's own (Jacobian) uncertainties: a fixed-seed
    # noise draw; the measured offsets are 0.7, 0.1 and 0.2 sigma.
    _, result = fitted
    p = result.to_dict()["parameters"]

    def within(name, truth, n_sigma=3.0):
        v = p[name]
        return abs(v["value"] - truth) < n_sigma * max(v["lower"], v["upper"])

    assert within("perturber_mass", MASS_EARTH)
    assert within("perturber_period", RATIO * P)
    assert within("perturber_longitude", TRUE_LONGITUDE)
    assert np.hypot(p["perturber_ecosw"]["value"], p["perturber_esinw"]["value"]) < 0.05   # truth 0
    # chi2 matches its degrees of freedom (within 3 sqrt(2 dof)): the model is the simulation's
    dof = N - result.hypothesis.n_parameters
    assert abs(result.chi2 - dof) < 3 * np.sqrt(2 * dof)


def test_fit_starts_from_the_near_resonant_period():
    # The starting points come from the residuals' super-period on either
    # side of 2:1 (Lithwick, Xie & Wu 2012: P_j = 1/|2/P' - 1/P| is the same
    # for P'/P = 2.05 and 1.955) and a coarse grid, each scaled in mass: both
    # sides are among the starts, within 2% of the two ratios.
    data = TimingData.from_table(simulated_table(), CONTEXT)
    hyp = get_hypothesis("n-body-perturber")
    hyp.bounds(data)
    starts = hyp.terms[0].guesses(data, data.linear_residuals())
    ratios = np.array([g[1] / P for g in starts])
    # the mirror: 2/P' - 1/P = -(2/P_true - 1/P), so P'/P = RATIO / (RATIO - 1)
    mirror = RATIO / (RATIO - 1)
    assert np.any(np.abs(ratios / RATIO - 1) < 0.02)
    assert np.any(np.abs(ratios / mirror - 1) < 0.02)
    masses = np.array([g[0] for g in starts])[np.abs(ratios / RATIO - 1) < 0.02]
    assert np.all((masses > 5) & (masses < 80))   # Earth masses: a 1-Earth-mass template scaled


@pytest.mark.slow
def test_sampled_posterior_covers_the_truth(fitted):
    # Slow (two minutes of N-body sampling): out of the default run.  emcee (fixed seed, 400 steps of 32 walkers: short of convergence, so
    # the warning is expected); the truth lies inside the central 99.7% of
    # every perturber parameter's samples (3 sigma for a Gaussian).
    _, result = fitted
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        sampled = sample(result, n_steps=400, max_steps=None, progress=False, seed=1)
    names = [q.name for q in sampled.hypothesis.parameters()]
    for name, truth in (("perturber_mass", MASS_EARTH), ("perturber_period", RATIO * P),
                        ("perturber_longitude", TRUE_LONGITUDE)):
        column = sampled.samples[:, names.index(name)]
        lo, hi = np.percentile(column, [0.15, 99.85])
        assert lo < truth < hi, name


def test_predictions_do_not_depend_on_which_epochs_are_asked(fitted):
    # The variation's straight line is removed over the fitted data's epochs
    # (the anchor), so predicting a subset, or future epochs, extends the
    # same mean ephemeris: a subset agrees with the full prediction to the
    # engine's refinement (1e-10 d), and a fractional epoch lies between its
    # neighbours (linear interpolation of the variation).
    table, result = fitted
    hyp, data = result.hypothesis, result.data
    full = hyp.predict(result.theta, data)
    pick = np.array([3, 40, 41, 150])
    sub = TimingData(data.epoch[pick], data.phase[pick], data.secondary[pick], data.time[pick],
                     data.sigma[pick], data.t_ref, data.period, data.host)
    np.testing.assert_allclose(hyp.predict(result.theta, sub), full[pick], rtol=0, atol=1e-9)
    half = TimingData(np.array([40.5, 200.0]), np.zeros(2), np.zeros(2, bool), np.zeros(2), np.ones(2),
                      data.t_ref, data.period, data.host)
    mid, future = hyp.predict(result.theta, half)
    assert min(full[40], full[41]) < mid < max(full[40], full[41])
    theta = result.theta
    assert abs(future - (theta[0] + theta[1] * 200)) < 0.01     # days: the TTV is ~minutes


def test_it_is_not_in_the_default_comparison_and_needs_the_star_mass():
    assert "n-body-perturber" not in DEFAULT_COMPARISON
    with pytest.raises(InputError, match="star's mass"):
        fit(simulated_table(), "n-body-perturber")


def make_system():
    return sun_and_jupiter(P)


def test_map_seeds_carry_the_longitude_the_hypothesis_uses():
    # The map's grid phase is the perturber's mean anomaly at its own start
    # (half an orbit before epoch 0, as in the simulation); seeds() turns it
    # into the hypothesis's longitude.  The map's best point is the injected
    # period at the grid phase nearest the truth (8 phases, pi/4 apart), and
    # its seed longitude is what the analytic relation above gives for that
    # phase, to 0.1 rad (the map's start is its fitted epoch-0 time less P/2,
    # a few seconds from the simulation's).
    from ttvkit.diagnosis.perturbers import map_perturbers

    table = simulated_table()
    # without RV limits: the map ranks only what the RVs allow, and the test pair's
    # 3 m/s over 5 yr would exclude this injected perturber
    pmap = map_perturbers(table, sun_and_jupiter(P, rv_baseline_yr=None),
                          periods=np.array([1.8, RATIO, 2.5]) * P * u.day, n_phases=8,
                          progress=False, executor=ThreadPoolExecutor(2))
    period, mass, lam = pmap.seeds(TimingData.from_table(table).t_ref)[0]
    assert period == pytest.approx(RATIO * P)
    best_phase = pmap.best()["phase"].to_value(u.rad)
    expected = best_phase + 2 * np.pi * 0.5 / RATIO - np.pi / 2
    assert np.angle(np.exp(1j * (lam - expected))) == pytest.approx(0.0, abs=0.1)
    assert abs(best_phase - MEAN_START) <= np.pi / 8 + 1e-9   # the nearest of 8 phases
    assert 5 < mass < 60


def test_diagnose_fits_it_when_asked_and_judges_its_physics(tmp_path, capsys):
    from ttvkit.diagnosis import diagnose

    table = simulated_table()
    # RV residuals of 6 m/s over 5 yr: the one RV-visibility rule (physics.companions.rv_visibility)
    # compares the RV change over the baseline, 2K = 14 m/s here, with 3 x 6 m/s
    quiet_rvs = sun_and_jupiter(P, rv_rms=6.0)
    d = diagnose(table, quiet_rvs, hypotheses=["constant-period"], sampled=False, progress=False,
                 now=T_START + 600, fit_perturber=True)
    a = d["n-body-perturber"]
    assert a.verdict == "needed and plausible"   # 20 Earth masses at 2.05x: Hill stable, 2K = 14 m/s < 3 x 6 m/s
    checks = {c.name: c for c in a.checks}
    assert checks["Hill stability"].outcome == "pass"
    assert checks["radial-velocity visibility"].outcome == "pass"
    # K at the fitted mass and period around a 1-Msun star, by the textbook
    # formula (Lovis & Fischer 2010, eq. 14): 28.4329 m/s (m sin i / Mjup)
    # (P / 1 yr)^(-1/3) (M / Msun)^(-2/3) for a circular orbit
    p = a.fit.to_dict()["parameters"]
    mass, period = p["perturber_mass"]["value"], p["perturber_period"]["value"]
    k = 28.4329 * (mass / 317.828) * (period / 365.25) ** (-1 / 3) * (1 + mass / 332946 + M_PLANET) ** (-2 / 3)
    assert checks["radial-velocity visibility"].value == pytest.approx(k, rel=0.01)
    # the command line without a system file: a one-line error naming what is missing (cheap)
    path = tmp_path / "t.ecsv"
    table.write(path)
    assert main(["fit", str(path), "--hypothesis", "n-body-perturber"]) == 2
    assert "star's mass" in capsys.readouterr().err


@pytest.mark.slow
def test_command_line_fits_it_with_a_system_file(tmp_path, capsys):
    # a second full N-body fit (minutes): out of the default run
    path = tmp_path / "t.ecsv"
    simulated_table().write(path)
    system = tmp_path / "s.toml"
    system.write_text('name = "test pair"\n[star]\nmass = "1 Msun"\nradius = "1 Rsun"\nteff = "5800 K"\n'
                      '[companion]\nmass = "1 Mjup"\n[orbit]\nperiod = "3 d"\n')
    assert main(["fit", str(path), "--hypothesis", "n-body-perturber", "--system", str(system)]) == 0
    assert "perturber_mass" in capsys.readouterr().out
