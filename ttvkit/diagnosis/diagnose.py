"""The diagnosis: which explanations of a timing drift survive the data and the physics.

:func:`diagnose` fits every hypothesis (and the sensible pairs), joins each
fit with the graded physical checks of :mod:`ttvkit.diagnosis.checks` and
the validity domain of each term, and gives each a verdict by the rules of
:mod:`ttvkit.diagnosis.verdicts` (the one place they live).  This is the
only module that joins fits and physics.

It is a **plausibility screen, not a proof**: a hypothesis the data need
that passes every test the system file allows is not thereby the cause.
"""

from __future__ import annotations

import os
from dataclasses import dataclass, field, replace

import astropy.units as u
import numpy as np

from ttvkit.diagnosis.checks import checks_for
from ttvkit.diagnosis.curves import figure_curves
from ttvkit.diagnosis.forecast import Forecast, make_forecast
from ttvkit.diagnosis.verdicts import (
    DISFAVOURED,
    EXCLUDED,
    IN_TENSION,
    PLAUSIBLE,
    REJECT_DELTA_BIC,
    UNTESTED,
    VERDICTS,
    bic_gain,
    decide,
    statistical_standing,
)
from ttvkit.errors import InputError, MissingValueError
from ttvkit.hypotheses import BINARY_ADDITIONS, DEFAULT_COMPARISON, TimingData, get_hypothesis
from ttvkit.hypotheses.base import HostContext
from ttvkit.inference.fitting import compare
from ttvkit.inference.periodogram import Periodogram, residual_periodogram
from ttvkit.inference.results import Comparison

__all__ = ["Assessment", "Diagnosis", "DiagnosisOptions", "diagnose", "timing_context", "CAUTION"]

CAUTION = ("This verdict is a plausibility screen, not a proof. A hypothesis the data need that passes every "
           "physical test the system file allows is not thereby shown to be the cause, and the physical "
           "models are idealised (their assumptions are listed below).")


@dataclass
class Assessment:
    """One hypothesis: its fit, its physical checks and the verdict."""

    name: str
    fit: object
    delta_bic: float
    statistical: str
    checks: list
    physical: str
    verdict: str
    reason: str
    validity: list = field(default_factory=list)
    gain: float | None = None

    @property
    def stands(self) -> bool:
        """True when the data need it and the physics allows it (plausible, in tension or untested)."""
        return self.verdict in (PLAUSIBLE, IN_TENSION, UNTESTED)

    def to_dict(self) -> dict:
        """Plain-JSON form."""
        d = self.fit.to_dict()
        return {"name": self.name, "delta_bic": self.delta_bic, "statistical": self.statistical,
                "parameters": d["parameters"], "derived": d["derived"], "chi2": d["chi2"], "dof": d["dof"],
                "bic": d["bic"], "aic": d["aic"], "n_points": d["n_points"], "sampled": d["sampled"],
                "physical": {"standing": self.physical, "checks": [c.to_dict() for c in self.checks]},
                "verdict": self.verdict, "verdict_meaning": VERDICTS[self.verdict], "reason": self.reason,
                "validity": list(self.validity), "bic_gain_over_nested": self.gain,
                "assumptions": d["assumptions"]}


@dataclass
class Diagnosis:
    """Everything the report shows, computed once."""

    table: object
    system: object
    assessments: list
    periodogram: Periodogram
    forecast: Forecast | None
    suspicions: list
    warnings: list
    curves: dict = field(default_factory=dict)
    settings: dict = field(default_factory=dict)
    perturbers: object = None   # a PerturberMap when asked for
    calibration: object = None  # a Calibration of the verdict on this table's design, when asked for
    activity: list = field(default_factory=list)   # IndicatorResult per activity-indicator series given

    @property
    def standing(self) -> list:
        """Assessments that stand, best BIC first."""
        return [a for a in self.assessments if a.stands]

    def model_assumptions(self) -> dict:
        """Title → assumptions of every physical model the screen uses (the report lists them all)."""
        from ttvkit.diagnosis.checks import PHYSICAL_MODELS
        from ttvkit.diagnosis.perturbers import MAP_ASSUMPTIONS

        return dict([MAP_ASSUMPTIONS] + list(PHYSICAL_MODELS.values()))

    def __getitem__(self, name: str) -> Assessment:
        for a in self.assessments:
            if a.name == name:
                return a
        raise KeyError(name)

    def summary(self) -> str:
        """The verdict in a few sentences; only hypotheses the data need are named as explanations."""
        ref = self["constant-period"]
        out = []
        if ref.verdict == DISFAVOURED:
            out.append(f"The mid-times drift from a constant period (ΔBIC = {ref.delta_bic:.1f}).")
        else:
            out.append("A constant period describes the mid-times about as well as any alternative; "
                       "no other hypothesis is needed.")
        for verdict, words in ((PLAUSIBLE, "Needed by the data and physically plausible"),
                               (IN_TENSION, "Needed by the data but in tension with the physics"),
                               (UNTESTED, "Needed by the data, physically untested"),
                               (EXCLUDED, "Needed by the data but physically excluded")):
            names = [a.name for a in self.assessments if a.verdict == verdict]
            if names:
                out.append(f"{words}: " + ", ".join(names) + ".")
        return " ".join(out)

    def to_dict(self) -> dict:
        """The ``diagnosis.json`` content (see ``ttvkit/report/schemas/diagnosis.schema.json``)."""
        from ttvkit._version import __version__

        return {
            "ttvkit_version": __version__,
            "system": self.system.to_dict(),
            "n_points": len(self.table),
            "sources": self.table.sources,
            "summary": self.summary(),
            "caution": CAUTION,
            "hypotheses": [a.to_dict() for a in self.assessments],
            "periodogram": self.periodogram.to_dict(),
            "forecast": self.forecast.to_dict() if self.forecast is not None else None,
            "warnings": list(self.warnings),
            "settings": self.settings,
            "perturber_map": self.perturbers.to_dict() if self.perturbers is not None else None,
            "calibration": self.calibration.to_dict() if self.calibration is not None else None,
            "activity_indicators": [r.to_dict() for r in self.activity],
        }


def timing_context(system) -> HostContext:
    """The physical context a fit needs from a System (:meth:`HostContext.from_system`).

    Pass it as ``context`` to :func:`ttvkit.inference.fit` (the
    ``n-body-perturber`` hypothesis needs the star's mass).
    """
    return HostContext.from_system(system)


def _is_activity(fit) -> bool:
    """True for a hypothesis with an activity-cycle term (a sinusoidal or quasi-periodic modulation)."""
    from ttvkit.hypotheses import QuasiPeriodicModulation, SinusoidalModulation

    return any(isinstance(t, (SinusoidalModulation, QuasiPeriodicModulation)) for t in fit.hypothesis.terms)


def _assess(fit, comparison, system, indicators=()) -> Assessment:
    delta_bic = comparison.delta_bic(fit)
    checks = checks_for(fit, system)
    if indicators and _is_activity(fit):
        from ttvkit.diagnosis.activity import indicator_check

        checks += [indicator_check(r, fit) for r in indicators]
    decisive = [c for c in checks if c.decisive]
    fails = [c for c in decisive if c.outcome == "fail"]
    physical = ("excluded" if fails else "in tension" if any(c.outcome == "tension" for c in decisive)
                else "untested" if any(c.outcome == "untested" for c in decisive) else "possible")
    validity = fit.hypothesis.validity(fit.model_theta(), fit.data)
    gain = bic_gain(fit, comparison)
    verdict, reason = decide(fit.name, delta_bic, gain, validity, checks)
    return Assessment(fit.name, fit, float(delta_bic), statistical_standing(delta_bic), checks, physical,
                      verdict, reason, validity, gain)


@dataclass(frozen=True, kw_only=True)
class DiagnosisOptions:
    """How :func:`diagnose` fits, samples and forecasts (every field has a default).

    Attributes
    ----------
    hypotheses : tuple of str
        Default: every fast hypothesis and the pairs decay + modulation and
        decay + light-travel time (``constant-period`` is always added).
    sampled : bool
        Sample each posterior with emcee (bands, uncertainties); otherwise the
        Gaussian approximation at the optimum is used.
    n_steps, seed, progress
        Sampler settings (``n_steps``: the first run, steps per walker).
    max_steps : int or None
        Chains shorter than 50 autocorrelation times are extended up to this
        (:func:`ttvkit.inference.fitting.sample`).
    likelihood : Likelihood or None
        Gaussian by default.
    forecast_years : float
        How far the forecast looks.
    timing_precision_s : float or None
        Precision of a future mid-time; default the median of the recent
        uncertainties.
    now : float or None
        BJD_TDB the forecast starts from (default: the present).
    perturber_map : PerturberMapOptions or None
        Also map the perturbing planets the timing allows
        (:func:`ttvkit.diagnosis.perturbers.map_perturbers`; minutes of
        N-body work).
    fit_perturber : bool
        Also fit (and sample, if ``sampled``) the ``n-body-perturber``
        hypothesis, seeded from the map's best points when the map is made.
        Every evaluation is an N-body integration: minutes, and far longer
        sampled.
    perturber_steps : int
        Sampler steps of the ``n-body-perturber`` chain (not extended; a
        short chain is reported as a convergence note).  Measured on the
        demo (21 years of a 1.87-d planet): 0.7-1.8 s per step on two cores
        (the longer near a resonance, where the step is shorter).
    excess_noise : bool
        Add a jitter when χ² is too large (:mod:`ttvkit.inference.excess_noise`).
    activity : tuple of IndicatorSeries
        Activity indicators (:func:`ttvkit.timing.indicators.read_indicator_series`)
        to test against the period change; each adds a check to every
        activity hypothesis (:mod:`ttvkit.diagnosis.activity`).
    """

    hypotheses: tuple = DEFAULT_COMPARISON
    sampled: bool = True
    n_steps: int = 500
    seed: int = 0
    progress: bool = True
    max_steps: int | None = 40000
    likelihood: object = None
    forecast_years: float = 10.0
    timing_precision_s: float | None = None
    now: float | None = None
    perturber_map: object = None
    fit_perturber: bool = False
    perturber_steps: int = 500
    excess_noise: bool = True  # add a jitter when chi2 is too large (ttvkit.inference.excess_noise)
    activity: tuple = ()       # IndicatorSeries: activity indicators to test against the period change

    def __post_init__(self):
        if self.n_steps < 1 or self.perturber_steps < 1:
            raise InputError("sampler steps must be positive")
        if not self.forecast_years > 0:
            raise InputError(f"the forecast horizon must be positive (got {self.forecast_years} years)")

    def describe(self) -> dict:
        """The settings recorded in diagnosis.json."""
        return {"sampled": self.sampled, "n_steps": self.n_steps, "max_steps": self.max_steps, "seed": self.seed,
                "forecast_years": self.forecast_years,
                "likelihood": (self.likelihood.describe() if self.likelihood else "Gaussian"),
                "fit_perturber": bool(self.fit_perturber), "perturber_steps": int(self.perturber_steps),
                "activity_indicators": [a.name for a in self.activity]}


def diagnose(table, system, options: DiagnosisOptions | None = None, *, executor=None,
             map_executor=None, **changes) -> Diagnosis:
    """Fit every hypothesis and judge each against the data and the physics.

    Parameters
    ----------
    table : TimingTable
        Mid-times in BJD_TDB.
    system : System
        The star, companion, orbit and RV limits.
    options : DiagnosisOptions, optional
        How to fit, sample and forecast (defaults otherwise).
    executor : object with ``map``, optional
        Runs the hypotheses concurrently (serial by default).
    map_executor : object with ``map``, optional
        Runs the perturber map's chunks (default: a process pool).
    **changes
        Fields of :class:`DiagnosisOptions` to change, e.g. ``sampled=False``.

    Returns
    -------
    Diagnosis
    """
    if isinstance(system, (str, os.PathLike)):  # a system file: read it as the CLI does
        from ttvkit.physics.system import System

        system = System.from_toml(system)
    if not hasattr(system, "star"):
        raise InputError(f"diagnose needs a System (ttvkit.physics.System.from_toml(path)), "
                         f"not {type(system).__name__}")
    options = replace(options or DiagnosisOptions(), **changes)
    hypotheses = list(options.hypotheses)
    if getattr(system, "is_binary", False) and tuple(options.hypotheses) == DEFAULT_COMPARISON:
        # both stars described: the binaries' own readings of a period change, and a wandering cycle
        hypotheses += [h for h in BINARY_ADDITIONS if h not in hypotheses]
    if "constant-period" not in hypotheses:  # the reference of every O−C
        hypotheses.insert(0, "constant-period")
    notes = [{"kind": "table", "message": m} for m in getattr(table, "intake_warnings", [])]
    robust = options.likelihood is not None and options.likelihood.kind != "gaussian"
    added = [h for h in hypotheses if h not in options.hypotheses]
    if robust and any(get_hypothesis(h).has_process for h in added):
        # a Gaussian process has a closed-form likelihood only with Gaussian errors: not fitted by default
        hypotheses = [h for h in hypotheses if h not in added or not get_hypothesis(h).has_process]
        notes.append({"kind": "likelihood", "message": "quasi-periodic-modulation (a Gaussian process) was not "
                      "fitted: it needs a Gaussian likelihood, and a Student-t likelihood was asked for"})
    if options.excess_noise:
        from ttvkit.inference.excess_noise import decide_excess_noise

        noise = decide_excess_noise(table, options.likelihood, context=HostContext.from_system(system))
        options = replace(options, likelihood=noise.likelihood)
        notes += [{"kind": "excess noise", "message": noise.message}] if noise.message else []
    suspicions = table.check_standards()
    for s in suspicions:
        notes.append({"kind": "time standard", "message": s.message()})
    pmap = None
    if options.perturber_map is not None:
        from ttvkit.diagnosis.perturbers import map_perturbers

        pmap = map_perturbers(table, system, options.perturber_map, executor=map_executor,
                              progress=options.progress)
    data = TimingData.from_table(table, HostContext.from_system(system))
    if options.fit_perturber and "n-body-perturber" not in hypotheses:
        hypotheses.append("n-body-perturber")
        if pmap is not None:
            data = replace(data, perturber_seeds=tuple(pmap.seeds(data.t_ref)))
    comparison = _fit_all(data, hypotheses, options, executor, notes)
    ref = comparison["constant-period"]
    outliers = np.flatnonzero(np.abs(ref.residuals() / data.sigma) > 5)
    if outliers.size:
        notes.append({"kind": "outliers", "message": f"{outliers.size} mid-time(s) sit more than 5σ from the "
                      "constant-period fit; consider a robust likelihood (--robust)"})
    if comparison.best.name != "constant-period":  # does one row or source decide the detection?
        from ttvkit.inference.leverage import find_leverage

        notes += [{"kind": "leverage", "message": lev.message()} for lev in
                  find_leverage(comparison.best, table, context=HostContext.from_system(system))]
    indicators = []
    if options.activity:
        from ttvkit.diagnosis.activity import link_indicators

        indicators = link_indicators(table, ref, options.activity, seed=options.seed)
    assessments = [_assess(f, comparison, system, indicators) for f in comparison.fits]
    standing = [a.fit for a in assessments if a.stands]
    duration = None
    try:
        from ttvkit.physics.geometry import transit_durations

        duration = float(transit_durations(system)[0].to_value(u.h))
    except MissingValueError:
        pass
    forecast = make_forecast(standing or [comparison.best], ref, table, options.forecast_years,
                             options.timing_precision_s, duration, table.target, now=options.now)
    periodogram = residual_periodogram(data)
    if periodogram.best_beyond_baseline:
        notes.append({"kind": "periodogram", "message": (
            f"the periodogram's highest peak ({periodogram.best_period / 365.25:.3g} yr) is longer than the "
            f"{periodogram.baseline / 365.25:.3g}-yr baseline: it marks a trend (curvature), not a measured period")})
    diagnosis = Diagnosis(table, system, assessments, periodogram, forecast, suspicions, notes,
                          settings=options.describe(), activity=indicators)
    if pmap is not None:
        diagnosis.perturbers = pmap
        diagnosis.settings["perturber_map"] = options.perturber_map.describe()
    diagnosis.curves = figure_curves(diagnosis)
    return diagnosis


def _fit_all(data, hypotheses, options: DiagnosisOptions, executor, notes: list) -> Comparison:
    """Fit (and sample) the fast hypotheses together and the slow ones with their own chain length."""
    import warnings

    from ttvkit.inference import ConvergenceWarning

    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", ConvergenceWarning)
        slow = [h for h in hypotheses if get_hypothesis(h).expensive]
        fast = [h for h in hypotheses if h not in slow]
        # the verdict of a hypothesis the data reject (ΔBIC > 10) rests on its optimum: not sampled
        comparison = compare(data, fast, options.likelihood, sampled=options.sampled, n_steps=options.n_steps,
                             seed=options.seed, progress=options.progress, executor=executor,
                             max_steps=options.max_steps, sample_within=REJECT_DELTA_BIC)
        if slow:   # every evaluation an N-body integration: a chain of its own length, not extended
            extra = compare(data, slow, options.likelihood, sampled=options.sampled,
                            n_steps=options.perturber_steps, seed=options.seed, progress=options.progress,
                            max_steps=None)
            comparison = Comparison(comparison.fits + extra.fits)
    for w in caught:
        if issubclass(w.category, ConvergenceWarning):
            notes.append({"kind": "convergence", "message": str(w.message)})
    for f in comparison.fits:
        for msg in f.warnings:
            note = {"kind": "not sampled" if ": not sampled, " in msg else "convergence", "message": msg}
            if note not in notes:
                notes.append(note)
    return comparison
