"""Injection and recovery of the verdict on our own simulations (fixed seeds).

The requirements (issue 15): on null tables with realistic gaps any
hypothesis other than the constant period is called *needed* in ≤ 5%, also
when the stated errors are 1.5× too small; a decay injected at 5σ of its
detectability is recovered ≥ 90%; the 68% intervals of dP/dt cover the
truth 63–73% of the time.  The default-suite test is lean; the full numbers
are in the slow tests and in benchmarks/calibration_speed.py.
"""

import json
from pathlib import Path

import numpy as np
import pytest
from simulate import simulate

import ttvkit
from ttvkit.diagnosis.calibration import calibrate
from ttvkit.inference.likelihood import Likelihood
from ttvkit.report.calibration_figure import calibration_figure


class Serial:
    """An injected executor: anything with ``map`` (here the built-in, in this process)."""

    map = staticmethod(map)


def gapped_table(seed=5, n=100):
    # 100 transits drawn from 2000 epochs (11 yr of a 2-d orbit): irregular, with long gaps
    return simulate("constant-period", [0.0, 2.0], np.random.default_rng(seed), n=n, span_epochs=2000)


def test_lean_calibration_runs_through_an_injected_executor():
    result = calibrate(gapped_table(), n_null=12, n_per_amplitude=12, amplitudes=(8.0,),
                       hypotheses=("orbital-decay",), executor=Serial(), progress=False)
    # decay on null tables: a BIC gain ≥ 6 needs Δχ² ≥ 6 + ln 100 = 10.6, P ≈ 0.1% (χ²₁ tail); under
    # the required 5% three or more false alarms in 12 would have probability 2%: allow at most 2
    assert result.false_alarms["orbital-decay"] * 12 <= 2
    # at 8σ the expected Δχ² is 64; a miss needs a −5σ fluctuation: all but at most one recovered
    assert result.recovery["orbital-decay"][0][1] >= 11 / 12
    assert result.thresholds["orbital-decay"]["90%"] <= 8.0
    assert 0.0 <= result.coverage <= 1.0
    json.dumps(result.to_dict())
    assert calibration_figure(result).axes


@pytest.mark.slow
def test_null_false_alarms_and_decay_recovery_full():
    # 120 null tables, every default calibration hypothesis; 100 decays at 5σ
    result = calibrate(gapped_table(), n_null=120, n_per_amplitude=100, amplitudes=(5.0,), progress=False)
    assert result.false_alarms["any"] <= 0.05
    assert result.recovery["orbital-decay"][0][1] >= 0.90


@pytest.mark.slow
def test_understated_errors_with_the_excess_noise_term():
    # true scatter 1.5× the stated errors; the comparison fits an excess white noise (the jitter term)
    result = calibrate(gapped_table(), n_null=120, n_per_amplitude=0, error_scale=1.5,
                       likelihood=Likelihood(jitter=True), progress=False)
    assert result.false_alarms["any"] <= 0.05


def test_understated_errors_get_the_excess_noise_term_as_in_diagnose():
    # By default each simulated table goes through the same excess-noise decision as diagnose: with the
    # scatter 1.5x the stated errors, chi2/dof ~ 2.25 for 100 points (p ~ 1e-12), so every table is fitted
    # with a jitter.  Measured on 40 tables of this design: 0/40 false alarms with the decision, 25/40
    # without (a sinusoid absorbs the excess scatter).  For 12 tables: the default must stay at the 5%
    # target (<= 2 of 12, as in the lean test above); the plain least-squares control, at a true rate
    # near 60%, gives fewer than 4 of 12 with binomial probability < 1%.
    table = gapped_table(seed=8)
    common = dict(n_null=12, n_per_amplitude=0, error_scale=1.5, executor=Serial(), progress=False,
                  hypotheses=("orbital-decay", "sinusoidal-modulation"))
    decided = calibrate(table, **common)
    assert decided.settings["excess_noise"] is True
    assert decided.false_alarms["any"] * 12 <= 2
    plain = calibrate(table, excess_noise=False, **common)
    assert plain.false_alarms["any"] * 12 >= 4


def _sampled_and_unsampled(n_null, n_decay, seed):
    kw = {"n_null": n_null, "n_per_amplitude": n_decay, "amplitudes": (3.0,), "seed": seed,
          "executor": Serial(), "progress": False}
    return calibrate(gapped_table(), sampled=False, **kw), calibrate(gapped_table(), sampled=True, **kw)


@pytest.mark.filterwarnings("ignore::ttvkit.inference.ConvergenceWarning")  # short chains: only the best draw counts
def test_verdicts_with_and_without_sampling_agree():
    # The same simulated tables (same seed) judged from least squares (--no-sample) and from
    # emcee chains (the default) must get the same verdicts: the sampler keeps its best draw when it
    # beats the least-squares optimum, so a disagreement means least squares missed the optimum.
    # Before apsidal precession's starts were seeded from the residual periodogram this failed:
    # precession was "disfavoured by the data" without sampling and "not needed" with it.
    plain, sampled = _sampled_and_unsampled(5, 0, seed=3)
    assert plain.null_verdicts == sampled.null_verdicts


@pytest.mark.slow
@pytest.mark.filterwarnings("ignore::ttvkit.inference.ConvergenceWarning")
def test_verdicts_with_and_without_sampling_agree_full():
    # 30 null tables and 30 with a decay at 3 sigma of its detectability, where the verdict is
    # closest to its thresholds (issue 15: the --no-sample and sampled runs give the same verdicts)
    plain, sampled = _sampled_and_unsampled(30, 30, seed=4)
    assert plain.null_verdicts == sampled.null_verdicts
    assert plain.recovery == sampled.recovery


def test_near_resonant_and_precession_injections_are_recovered():
    # Each injected as a sinusoidal O-C turning once in half the baseline (Lithwick, Xie & Wu 2012 for
    # the near-resonant TTV; Gimenez & Bastero 1995 for the precessing orbit, first order in e) at 8
    # sigma of its detectability: the expected chi^2 gain is 64 against the ~20 that a BIC gain of 6
    # with 3 more parameters and 100 points needs, so a miss takes a ~-5 sigma fluctuation; allow one
    # of 8.  The injected hypotheses are fitted although the list does not name them.
    result = calibrate(gapped_table(), n_null=2, n_per_amplitude=8, amplitudes=(8.0,), hypotheses=(),
                       inject=("near-resonant-perturber", "apsidal-precession"), executor=Serial(), progress=False)
    assert "near-resonant-perturber(j=2)" in result.settings["hypotheses"]
    for name in ("near-resonant-perturber", "apsidal-precession"):
        assert result.recovery[name][0][1] >= 7 / 8, (name, result.recovery[name])


def test_report_includes_the_calibration_on_request(tmp_path):
    # diagnose --calibrate: the verdict's calibration on the table's own design goes into the report, the
    # JSON (validated against ttvkit's schema) and a figure.  A decay at 8 sigma of its detectability
    # needs delta-chi2 = 64 against a threshold of 6 + ln n: found in 10/10 (binomial: a 10% miss rate
    # would fail 10/10 only 35% of the time, so this cannot pass by luck on a broken injection).
    import jsonschema

    from ttvkit.diagnosis.calibration import CalibrationOptions
    from ttvkit.diagnosis.diagnose import DiagnosisOptions
    from ttvkit.physics import System
    from ttvkit.pipeline import run_diagnosis

    system = System.from_dict({"name": "invented", "star": {"mass": "1.0 Msun", "radius": "1.0 Rsun"},
                               "companion": {"mass": "1.0 Mjup"}, "orbit": {"period": "2.0 d"}})
    options = DiagnosisOptions(hypotheses=("orbital-decay",), sampled=False, progress=False)
    run = run_diagnosis(gapped_table(), system, tmp_path / "r", options, say=lambda *a: None,
                        calibration=CalibrationOptions(n_null=10, n_per_amplitude=10, amplitudes=(8.0,)),
                        calibration_executor=Serial())
    c = run.diagnosis.calibration
    assert c.settings["hypotheses"] == ["constant-period", "orbital-decay"]
    assert c.recovery["orbital-decay"] == [(8.0, 1.0)]
    payload = json.loads((tmp_path / "r" / "diagnosis.json").read_text())
    schema = json.loads((Path(ttvkit.__file__).parent / "report" / "schemas" / "diagnosis.schema.json").read_text())
    jsonschema.validate(payload, schema)
    assert payload["calibration"]["n_null"] == 10
    html = (tmp_path / "r" / "report.html").read_text()
    assert "How far to trust this verdict" in html and "ms/yr of dP/dt" in html
    assert (tmp_path / "r" / "calibration.png").exists() and (tmp_path / "r" / "calibration.pdf").exists()
