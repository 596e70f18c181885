"""Injection and recovery: how far to trust a verdict for this table's epochs, kinds and errors.

:func:`calibrate` keeps a table's epochs, event kinds (transit, occultation,
…) and stated uncertainties, replaces its mid-times by simulated ones —
a constant period (null tables) or a constant period plus one hypothesis at
a grid of amplitudes — adds Gaussian noise (optionally ``error_scale`` times
larger than stated, to test understated errors), and runs the same
**data part** of the verdict as :func:`~ttvkit.diagnosis.diagnose` (fits,
ΔBIC against the best, BIC gain over nested hypotheses, validity domains;
:func:`~ttvkit.diagnosis.verdicts.decide`).  The physical checks are left
out: they depend on the system, not on the noise, and can only move a
"needed" hypothesis into "physically excluded" or "in tension".

It reports the false-alarm rate of every verdict (how often a hypothesis is
called *needed* on null tables), the fraction of injected signals recovered
at each amplitude and the amplitudes recovered 50% and 90% of the time
(linear interpolation in the grid), and the coverage of the 68% intervals of
dP/dt.  Amplitudes are in units of their **detectability** σ: the 1σ error
of the injected term's amplitude from the Fisher matrix of the table's own
design (for decay: of dP/dE in T0 + P E + ½ (dP/dE) E²), so "5σ" means an
amplitude five times its expected uncertainty.

The simulations run through an injected executor (anything with ``map``;
a process pool over every core by default) with a tqdm progress bar.
"""

from __future__ import annotations

import os
from concurrent.futures import ProcessPoolExecutor
from dataclasses import dataclass, field, replace

import numpy as np

from ttvkit.diagnosis.verdicts import NEEDED, bic_gain, decide
from ttvkit.errors import InputError
from ttvkit.hypotheses import TimingData, get_hypothesis
from ttvkit.hypotheses.ephemerides import MS_PER_YR_PER_S_PER_S
from ttvkit.inference.excess_noise import decide_excess_noise
from ttvkit.inference.fitting import compare

__all__ = ["CalibrationOptions", "Calibration", "calibrate", "CALIBRATION_HYPOTHESES", "detectability"]

#: The hypotheses calibrated by default: every fast single hypothesis except the light-travel time,
#: whose Kepler solve makes each fit about ten times slower (pass it in ``hypotheses`` to include it).
CALIBRATION_HYPOTHESES = ("constant-period", "orbital-decay", "apsidal-precession", "sinusoidal-modulation",
                          "near-resonant-perturber")


@dataclass(frozen=True, kw_only=True)
class CalibrationOptions:
    """What :func:`calibrate` simulates.

    Attributes
    ----------
    n_null : int
        Null (constant-period) tables.
    n_per_amplitude : int
        Tables per injected amplitude.
    amplitudes : tuple of float
        Injected amplitudes in units of the detectability σ (:func:`detectability`).
    inject : tuple of str
        Hypotheses injected at each amplitude: ``orbital-decay`` (dP/dE),
        ``sinusoidal-modulation``, ``near-resonant-perturber`` (outer, j = 2)
        and ``apsidal-precession`` (each a semi-amplitude of the O−C, turning
        once in half the baseline).
    hypotheses : tuple of str
        Fitted to every simulated table (the constant period and the injected
        hypotheses are always added).
    error_scale : float
        True scatter ÷ stated uncertainty (1.5: errors understated by 1.5×).
    likelihood : Likelihood or None
        Gaussian by default; ``Likelihood(jitter=True)`` fits an excess white noise.
    excess_noise : bool
        Decide on each simulated table, as ``diagnose`` does on the real one, whether its scatter
        needs excess-noise terms (:func:`~ttvkit.inference.excess_noise.decide_excess_noise`), so
        that the calibration runs the same verdict (True by default).
    seed : int
    sampled : bool
        Sample every simulated table's posteriors too (emcee, ``n_steps`` per walker), as
        ``diagnose`` does by default; far slower.  False: least squares, as ``--no-sample``.
    n_steps : int
    """

    n_null: int = 200
    n_per_amplitude: int = 200
    amplitudes: tuple = (1.0, 2.0, 3.0, 5.0, 8.0)
    inject: tuple = ("orbital-decay",)
    hypotheses: tuple = CALIBRATION_HYPOTHESES
    error_scale: float = 1.0
    likelihood: object = None
    excess_noise: bool = True
    seed: int = 0
    sampled: bool = False
    n_steps: int = 2000

    def __post_init__(self):
        if self.n_null < 1 or self.n_per_amplitude < 0:
            raise InputError("calibration needs at least one null table and a non-negative count per amplitude")
        if self.sampled and self.n_steps < 100:
            raise InputError(f"a sampled calibration needs at least 100 steps per walker (got {self.n_steps})")
        if not self.error_scale > 0:
            raise InputError(f"error_scale must be positive (got {self.error_scale})")
        for name in self.inject:
            if name not in _INJECTORS:
                raise InputError(f"cannot inject {name!r}; known: {', '.join(_INJECTORS)}")


@dataclass
class Calibration:
    """Injection–recovery results for one table's design.

    Attributes
    ----------
    false_alarms : dict
        Hypothesis → fraction of null tables on which it was called needed;
        ``"any"`` → fraction with any non-constant hypothesis needed.
    null_verdicts : dict
        Hypothesis → {verdict: count} on the null tables.
    recovery : dict
        Injected hypothesis → list of (amplitude σ, fraction called needed).
    thresholds : dict
        Injected hypothesis → {"50%": amplitude σ or None, "90%": …}.
    coverage : float or None
        Fraction of decay fits whose 68% interval of dP/dt holds the truth.
    n_null, n_per_amplitude : int
    amplitude_unit : dict
        Injected hypothesis → (value of 1σ detectability, unit).
    """

    false_alarms: dict
    null_verdicts: dict
    recovery: dict
    thresholds: dict
    coverage: float | None
    n_null: int
    n_per_amplitude: int
    amplitude_unit: dict
    settings: dict = field(default_factory=dict)

    def sigma_size(self, name: str) -> str:
        """One σ of detectability of injected ``name`` in an observer's units (ms/yr of dP/dt for a
        decay, seconds of semi-amplitude for a modulation)."""
        value, unit = self.amplitude_unit[name]
        period = self.settings.get("period")
        if unit == "d/epoch" and period:      # dP/dE → dP/dt = (dP/dE) / P
            return f"{value / period * MS_PER_YR_PER_S_PER_S:.3g} ms/yr of dP/dt"
        if unit == "d":
            return f"{value * 86400:.3g} s of semi-amplitude"
        return f"{value:.3g} {unit}"

    def found_at(self, name: str, level: str) -> str:
        """The amplitude (σ) at which injected ``name`` is called needed ``level`` ("50%" or "90%") of
        the time, or "not reached"."""
        value = self.thresholds[name][level]
        return "not reached" if value is None else f"{value:.2g}σ"

    def to_dict(self) -> dict:
        """Plain-JSON form."""
        return {"false_alarms": self.false_alarms, "null_verdicts": self.null_verdicts,
                "recovery": {k: [list(r) for r in v] for k, v in self.recovery.items()},
                "thresholds": self.thresholds, "coverage": self.coverage, "n_null": self.n_null,
                "n_per_amplitude": self.n_per_amplitude,
                "amplitude_unit": {k: list(v) for k, v in self.amplitude_unit.items()}, "settings": self.settings}


def detectability(data: TimingData, inject: str) -> tuple[float, str]:
    """1σ Fisher error of the injected term's amplitude for this design (internal units, unit name)."""
    x = data.epoch + data.phase
    columns = [np.ones_like(x), x]
    if inject == "orbital-decay":
        columns.append(0.5 * data.epoch ** 2)
    else:
        arg = 2 * np.pi * data.period * x / _modulation_period(data)
        columns.append(np.sin(arg))
    design = np.column_stack(columns) / data.sigma[:, None]
    cov = np.linalg.pinv(design.T @ design)
    return float(np.sqrt(cov[-1, -1])), ("d/epoch" if inject == "orbital-decay" else "d")


def _modulation_period(data: TimingData) -> float:
    return max(data.span / 2.0, 20 * data.period)


def _decay_theta(data, base, amplitude):
    return np.array([base[0], base[1], amplitude])


def _modulation_theta(data, base, amplitude):
    return np.array([base[0], base[1], amplitude, 0.0, _modulation_period(data)])


def _resonance_theta(data, base, amplitude):
    """A near-resonant perturber (outer, j = 2: the hypothesis's default) whose TTV turns with the
    injected modulation's period S: 1/S = |2/P′ − 1/P| (Lithwick, Xie & Wu 2012), so P′ = 2/(1/P + 1/S)."""
    s = _modulation_period(data)
    return np.array([base[0], base[1], amplitude, 0.0, 2.0 / (1.0 / base[1] + 1.0 / s)])


def _precession_theta(data, base, amplitude):
    """Apsidal precession turning once per S: the transits' O−C is −e cos(ω0 + E dω/dE) P/π (Giménez &
    Bastero 1995, first order), a sinusoid of semi-amplitude e P/π; ω0 = π/2 makes it a sine like the
    detectability's column."""
    s = _modulation_period(data)
    return np.array([base[0], base[1], 0.0, amplitude * np.pi / base[1], 2 * np.pi * base[1] / s])


_INJECTORS = {"orbital-decay": _decay_theta, "sinusoidal-modulation": _modulation_theta,
              "near-resonant-perturber": _resonance_theta, "apsidal-precession": _precession_theta}


def _trial(job):
    """One simulated table → {hypothesis: verdict} and the decay fit's interval (picklable, top level)."""
    (data, base_theta, inject, amplitude, hypotheses, likelihood, error_scale, seed, truth_rate, excess,
     sampled, n_steps) = job
    rng = np.random.default_rng(seed)
    hyp = get_hypothesis(inject or "constant-period")
    theta = _INJECTORS[inject](data, base_theta, amplitude) if inject else base_theta
    times = hyp.predict(theta, data) + rng.normal(0.0, error_scale * data.sigma)
    sim = replace(data, time=times)
    if excess:
        likelihood = decide_excess_noise(sim, likelihood).likelihood
    comparison = compare(sim, hypotheses, likelihood, sampled=sampled, n_steps=n_steps, seed=seed % 2 ** 32,
                         progress=False, max_steps=None)   # chains of exactly n_steps: the cost is known
    verdicts = {}
    for f in comparison.fits:
        verdict, _ = decide(f.name, comparison.delta_bic(f), bic_gain(f, comparison),
                            f.hypothesis.validity(f.model_theta(), f.data), [])
        verdicts[f.name] = verdict
    covered = None
    if "orbital-decay" in hypotheses:
        est = comparison["orbital-decay"].estimate("dP_dt")
        covered = bool(est.value - est.lower <= truth_rate <= est.value + est.upper)
    return verdicts, covered


def _thresholds(rows):
    """Amplitudes (σ) where the recovered fraction first reaches 50% and 90% (linear interpolation)."""
    out = {}
    for level in (0.5, 0.9):
        value = None
        for (a0, f0), (a1, f1) in zip([(0.0, 0.0)] + rows[:-1], rows):
            if f1 >= level:
                value = a0 + (a1 - a0) * (level - f0) / (f1 - f0) if f1 > f0 else a1
                break
        out[f"{int(level * 100)}%"] = value
    return out


def calibrate(table, options: CalibrationOptions | None = None, *, executor=None, progress: bool = True,
              **changes) -> Calibration:
    """Simulate null and injected tables with this table's epochs, kinds and errors; run the verdict.

    Parameters
    ----------
    table : TimingTable or TimingData
        Only its epochs, kinds, uncertainties and mean ephemeris are used.
    options : CalibrationOptions, optional
    executor : object with ``map``, optional
        Runs the simulations (a process pool over every core by default).
    progress : bool
        Show a tqdm progress bar.
    **changes
        Fields of :class:`CalibrationOptions` to change, e.g. ``n_null=100``.

    Returns
    -------
    Calibration
    """
    from tqdm.auto import tqdm

    options = replace(options or CalibrationOptions(), **changes)
    data = table if isinstance(table, TimingData) else TimingData.from_table(table)
    # every injected hypothesis is also fitted: a signal no fitted hypothesis describes is never "recovered"
    hypotheses = tuple(dict.fromkeys(get_hypothesis(h).name for h in ("constant-period",) + tuple(options.hypotheses)
                                     + tuple(options.inject)))
    base = compare(data, ["constant-period"], progress=False)["constant-period"].model_theta()
    rng = np.random.default_rng(options.seed)
    units = {name: detectability(data, name) for name in options.inject}
    jobs, labels = [], []
    for _ in range(options.n_null):
        jobs.append((data, base, None, 0.0, hypotheses, options.likelihood, options.error_scale,
                     int(rng.integers(2 ** 63)), 0.0, options.excess_noise, options.sampled, options.n_steps))
        labels.append((None, 0.0))
    for name in options.inject:
        sigma = units[name][0]
        for amp in options.amplitudes:
            for _ in range(options.n_per_amplitude):
                # decay is injected as shrinking (dP/dE < 0); its truth in ms/yr for the coverage
                value = -amp * sigma if name == "orbital-decay" else amp * sigma
                rate = value / base[1] * MS_PER_YR_PER_S_PER_S if name == "orbital-decay" else 0.0
                jobs.append((data, base, name, value, hypotheses, options.likelihood, options.error_scale,
                             int(rng.integers(2 ** 63)), rate, options.excess_noise, options.sampled,
                             options.n_steps))
                labels.append((name, amp))
    own = executor is None
    if own:
        executor = ProcessPoolExecutor(max_workers=os.cpu_count() or 1)
    try:
        results = list(tqdm(executor.map(_trial, jobs), total=len(jobs), desc="calibration",
                            disable=not progress))
    finally:
        if own:
            executor.shutdown()
    return _summarise(results, labels, hypotheses, options, units, float(base[1]))


def _summarise(results, labels, hypotheses, options, units, period: float) -> Calibration:
    null = [v for (v, _), (name, _) in zip(results, labels) if name is None]
    others = [h for h in hypotheses if h != "constant-period"]
    false_alarms = {h: float(np.mean([v.get(h) in NEEDED for v in null])) for h in others}
    false_alarms["any"] = float(np.mean([any(v.get(h) in NEEDED for h in others) for v in null]))
    null_verdicts = {h: {} for h in hypotheses}
    for v in null:
        for h in hypotheses:
            null_verdicts[h][v[h]] = null_verdicts[h].get(v[h], 0) + 1
    recovery, thresholds = {}, {}
    for name in options.inject:
        fitted = get_hypothesis(name).name      # e.g. the resonance's fitted name carries its j
        rows = []
        for amp in options.amplitudes:
            hits = [v.get(fitted) in NEEDED for (v, _), lab in zip(results, labels) if lab == (name, amp)]
            rows.append((float(amp), float(np.mean(hits)) if hits else float("nan")))
        recovery[name], thresholds[name] = rows, _thresholds(rows)
    covered = [c for (_, c) in results if c is not None]
    return Calibration(false_alarms, null_verdicts, recovery, thresholds,
                       float(np.mean(covered)) if covered else None, options.n_null, options.n_per_amplitude,
                       units, {"error_scale": options.error_scale, "seed": options.seed, "period": period,
                               "excess_noise": options.excess_noise, "sampled": options.sampled,
                               "hypotheses": list(hypotheses), "amplitudes_sigma": list(options.amplitudes),
                               "likelihood": (options.likelihood.describe() if options.likelihood
                                              else "Gaussian")})
