"""Physical checks of each fitted timing hypothesis against the actual system.

Each function takes a fitted result (its :class:`~ttvkit.inference.results.Estimate` of
each parameter and derived quantity), the term it checks and the :class:`~ttvkit.physics.System`
and returns :class:`Check` records: the value, the limit, the outcome and
the reason in words.  A check whose inputs are missing from the system is
``untested`` and says what is missing.  ``decisive`` checks can exclude a
hypothesis; the others are notes for the reader.

Each decisive check is graded (:mod:`ttvkit.diagnosis.grading`): the fit's
posterior and the system's stated uncertainties are propagated by Monte
Carlo into a probability that the physics allows the value, and a tension
in σ.  The rules (ours; each is a plausibility screen, not a proof):

* **modulation** — fails (impossible) when the more lenient of the thin- and
  finite-shell Applegate models needs more energy than the star radiates
  over one modulation period at ≥ 3σ, or predicts a luminosity change larger
  than the star's observed variability;
* **decay** — fails when the period grows at ≥ 3σ (tides of a star spinning
  slower than the orbit only shrink it) or when Q'_* lies below the physical
  floor Q'_* ≥ 1 (:data:`~ttvkit.physics.tides.QUALITY_FACTOR_FLOOR`); a
  Q'_* outside the range from the lowest measured value (WASP-12) to the top
  of the population range is **in tension** — unusual, never excluded;
* **precession** — fails when the eccentricity exceeds the system's limit or
  its measured value at ≥ 3σ, or the rate exceeds 3× the GR + tidal
  expectation (Love numbers are uncertain by about that factor) at ≥ 3σ;
* **light-travel time** — fails when the companion's RV signal would
  already have been seen (:func:`~ttvkit.physics.companions.light_time_companion`);
* **near-resonant perturber** — fails when the two orbits are not Hill
  stable (Gladman 1993) or the perturber's RV signal would have been seen.
"""

from __future__ import annotations

from dataclasses import asdict, dataclass

import astropy.units as u
import numpy as np

from ttvkit.diagnosis.grading import (
    DRAWS,
    FAIL_SIGMA,
    TENSION_SIGMA,
    posterior_draws,
    probability_below,
    tension_sigma,
)
from ttvkit.errors import MissingValueError
from ttvkit.hypotheses import (
    ApsidalPrecession,
    LightTravelTime,
    MagneticBraking,
    MassTransfer,
    NBodyPerturber,
    NearResonantPerturber,
    OrbitalDecay,
    QuasiPeriodicModulation,
    SinusoidalModulation,
)
from ttvkit.physics import activity_budgets
from ttvkit.physics.binaries import (
    applegate_for_each_star,
    period_change_from_braking,
    roche_lobe_radius,
    thermal_transfer_rate,
)
from ttvkit.physics.companions import (
    hill_stable,
    light_time_companion,
    mutual_hill_separation,
    projected_orbit_size,
    romer_acceleration,
    romer_decay_rate,
    rv_visibility,
)
from ttvkit.physics.kepler import radial_velocity_semi_amplitude
from ttvkit.physics.tides import (
    QUALITY_FACTOR_FLOOR,
    general_relativity_precession,
    measured_quality_factor_floor,
    plausible_quality_factor,
    quality_factor_from_decay_rate,
    tidal_precession,
)
from ttvkit.physics.uncertain import system_draws

__all__ = ["Check", "checks_for", "CHECKS", "PHYSICAL_MODELS", "QUALITY_FACTOR_CHECK"]

#: The name of the tidal-decay check that carries the required Q'_* (read by the survey's summary).
QUALITY_FACTOR_CHECK = "tidal quality factor Q'_*"

from ttvkit.diagnosis.models import PHYSICAL_MODELS  # noqa: E402  (re-exported: the report lists them)


@dataclass(frozen=True)
class Check:
    """One physical test of one hypothesis."""

    name: str
    value: float | None
    limit: float | None
    unit: str
    outcome: str          # "pass", "tension", "fail", "note" or "untested"
    reason: str
    decisive: bool = True
    tension: float | None = None       # σ, from the Monte Carlo probability (grading.tension_sigma)
    probability: float | None = None   # that the physics allows the fitted value

    def to_dict(self) -> dict:
        """Plain-JSON form."""
        return asdict(self)


def _untested(name: str, exc: Exception) -> Check:
    return Check(name, None, None, "", "untested", f"not tested: {exc}", True)


def _systems(system, count: int = DRAWS):
    return system_draws(system, count, seed=1)


def modulation_checks(fit, system, term=None) -> list[Check]:
    """Applegate energy budget (graded over the posterior and the star's uncertainties), ΔL/L, cycle."""
    amp = fit.estimate("semi_amplitude").value * u.s
    p_mod = fit.estimate("modulation_period_yr").value * u.yr
    try:
        per_star = _budgets_of_each_star(system, amp, p_mod)
    except MissingValueError as exc:
        return [_untested("activity energy budget", exc)]
    if not per_star:
        return [_untested("activity energy budget", MissingValueError(
            "neither star has what its Applegate budget needs"))]
    count = 100     # each draw solves the finite-shell minimisation (~4 ms per star)
    amps = posterior_draws(fit, "semi_amplitude", count)
    periods = posterior_draws(fit, "modulation_period_yr", count)
    ratios = np.array([min(b.energy_ratio for star in _budgets_of_each_star(s, a * u.s, q * u.yr).values()
                           for b in star.values())
                       for s, a, q in zip(_systems(system, count), amps, periods)])
    p_ok = probability_below(ratios, 1.0, log=True)
    sigma = tension_sigma(p_ok)
    out = []
    two = len(per_star) > 1 or system.is_binary
    for role, budgets in per_star.items():
        who = f"{_STAR_NAMES[role]}, " if two else ""
        for model, b in budgets.items():
            out.append(Check(f"energy ratio ({who}{model})", b.energy_ratio, 1.0, "",
                             "pass" if b.energy_ratio <= 1 else "fail",
                             f"the {model} model needs {b.energy_ratio:.3g}× the energy the {_STAR_NAMES[role] if two else 'star'} "
                             f"radiates in one {p_mod:.3g} cycle ({b.structure}; spin: {b.spin_used})", False))
    role, lenient = min(((r, b) for r, budgets in per_star.items() for b in budgets.values()),
                        key=lambda rb: rb[1].energy_ratio)
    star = _STAR_NAMES[role] if two else "the star"
    if two:
        star = f"the {star}"
    fails = sigma >= FAIL_SIGMA and lenient.energy_ratio > 1
    spread = (f"; P({'either star' if two else 'the star'} can power it) = {p_ok:.3g} over the fit's and "
              f"the {'stars' if two else 'star'}' uncertainties")
    out.append(Check("activity energy budget", lenient.energy_ratio, 1.0, "", "fail" if fails else "pass",
                     (f"{'neither star can' if two else 'the star cannot'} power a {amp:.3g} O−C semi-amplitude over "
                      f"{p_mod:.3g}: even the {lenient.model} model of {star} needs {lenient.energy_ratio:.3g}× "
                      f"its output (largest it can power: {lenient.max_amplitude:.3g}){spread} ({sigma:.1f}σ)")
                     if fails else
                     (f"{star} can power a {amp:.3g} O−C semi-amplitude over {p_mod:.3g} "
                      f"(largest it can power: {lenient.max_amplitude:.3g}, {lenient.model} model){spread}")
                     if lenient.energy_ratio <= 1 else
                     (f"at the best fit even {star} would need {lenient.energy_ratio:.3g}× its output for a "
                      f"{amp:.3g} O−C semi-amplitude over {p_mod:.3g} (largest it can power: "
                      f"{lenient.max_amplitude:.3g}, {lenient.model} model), but not beyond the "
                      f"uncertainties{spread} ({sigma:.1f}σ)"),
                     tension=sigma, probability=p_ok))
    out.append(Check("differential rotation ΔΩ/Ω", lenient.delta_Omega_over_Omega, None, "", "note",
                     f"ΔΩ/Ω = {lenient.delta_Omega_over_Omega:.3g} ({lenient.model}); active stars show "
                     "about 0.01 (Applegate 1992)", False))
    variability = system.star.variability_amplitude
    if variability is not None:
        dl = lenient.delta_L_over_L
        out.append(Check("luminosity change ΔL/L", dl, variability, "", "pass" if dl <= variability else "fail",
                         f"predicted ΔL/L = {dl:.3g} against the observed peak-to-peak variability "
                         f"{variability:.3g}"))
    cycle = system.star.activity_cycle
    if cycle is not None:
        rel = float(abs(p_mod - cycle) / cycle)
        out.append(Check("modulation period vs activity cycle", p_mod.to_value(u.yr), cycle.to_value(u.yr), "yr",
                         "note", f"P_mod = {p_mod:.3g} {'matches' if rel < 0.3 else 'differs from'} the "
                         f"known activity cycle of {cycle:.3g} (within 30%)", False))
    return out


#: How the report names each star of a binary.
_STAR_NAMES = {"primary": "primary star ([star])", "secondary": "other star ([other_star])"}


def _budgets_of_each_star(system, amplitude, modulation_period) -> dict:
    """{role: {model: ActivityBudget}} for the star, and for the other star of a binary.

    A star lacking a value its budget needs is left out (a binary); a single
    star lacking one raises MissingValueError.
    """
    if not system.is_binary:
        return {"primary": activity_budgets(system, amplitude, modulation_period)}
    return {role: b.budgets for role, b in applegate_for_each_star(
        system, system.other_star, amplitude, modulation_period).items() if b.budgets is not None}


def decay_checks(fit, system, term=None) -> list[Check]:
    """Sign of dP/dt; Q'_* graded against measured values and populations; the Rømer alternative."""
    est = fit.estimate("dP_dt")
    rate = est.value
    rates = posterior_draws(fit, "dP_dt")
    out = []
    p_shrinks = probability_below(rates, 0.0)
    if rate > 0 and tension_sigma(p_shrinks) >= FAIL_SIGMA:
        out.append(Check("sign of dP/dt", rate, 0.0, "ms/yr", "fail",
                         f"the period grows (dP/dt = {rate:+.3g} −{est.lower:.2g}/+{est.upper:.2g} ms/yr; "
                         f"P(shrinking) = {p_shrinks:.2g}); tides of a star spinning slower than the orbit "
                         "only shrink orbits", tension=tension_sigma(p_shrinks), probability=p_shrinks))
    try:
        out.append(_quality_factor_check(fit, system, rates))
    except MissingValueError as exc:
        out.append(_untested(QUALITY_FACTOR_CHECK, exc))
    period = system.orbit.period
    if period is not None:
        need = romer_acceleration(period, rate * u.ms / u.yr)
        rv = system.radial_velocity
        text = f"a line-of-sight acceleration of {need:.3g} would mimic this dP/dt (Rømer effect)"
        if rv.acceleration is not None:
            explained = romer_decay_rate(period, rv.acceleration).to_value(u.ms / u.yr)
            text += f"; the measured RV trend gives {explained:+.3g} ms/yr"
        elif rv.baseline is not None and rv.scatter is not None:
            change = abs(need * rv.baseline).to(u.m / u.s)
            text += (f"; over the RV baseline that is {change:.3g}, "
                     f"{'above' if change > 3 * rv.scatter else 'below'} 3× the RV scatter")
        out.append(Check("Rømer-effect alternative", need.value, None, "m/s/d", "note", text, False))
    return out


def _quality_factor_check(fit, system, rates) -> Check:
    """Q'_* per draw (posterior × star), graded: below the physical floor fails; outside the
    measured-to-population range is a tension, never an exclusion (shared/CHECKS.md)."""
    q = quality_factor_from_decay_rate(system, fit.estimate("dP_dt").value * u.ms / u.yr)
    shrinking = rates[rates < 0]
    if shrinking.size == 0:
        return Check(QUALITY_FACTOR_CHECK, q, None, "", "note",
                     "no posterior draw has a shrinking period: Q'_* is not defined", False)
    draws = np.array([quality_factor_from_decay_rate(s, r * u.ms / u.yr)
                      for s, r in zip(_systems(system, shrinking.size), shrinking)])
    band = plausible_quality_factor(system)
    measured, source = measured_quality_factor_floor()
    low = min(measured, 10 ** band.log10_low)
    p_possible = 1.0 - probability_below(draws, QUALITY_FACTOR_FLOOR, log=True)
    p_usual = max(0.0, 1.0 - probability_below(draws, low, log=True)
                  - (1.0 - probability_below(draws, 10 ** band.log10_high, log=True)))
    lo, hi = np.percentile(draws, [16, 84])
    text = (f"Q'_* = {q:.3g} (68%: {lo:.3g}–{hi:.3g}); measured on real orbits down to {measured:.3g} "
            f"({source}); populations suggest 10^{band.log10_low:g}–10^{band.log10_high:g} for a "
            f"{band.star_type} ({band.source})")
    if tension_sigma(p_possible) >= FAIL_SIGMA:
        return Check(QUALITY_FACTOR_CHECK, q, QUALITY_FACTOR_FLOOR, "", "fail",
                     text + f"; below the physical floor Q'_* ≥ {QUALITY_FACTOR_FLOOR:g}",
                     tension=tension_sigma(p_possible), probability=p_possible)
    sigma = tension_sigma(p_usual)
    outcome = "tension" if sigma >= TENSION_SIGMA else "pass"
    return Check(QUALITY_FACTOR_CHECK, q, low, "", outcome,
                 text + (f"; outside that range at {sigma:.1f}σ (unusual, not excluded)" if outcome == "tension"
                         else ""), tension=sigma, probability=p_usual)


def precession_checks(fit, system, term=None) -> list[Check]:
    """Eccentricity against the system's limit or measurement; rate against GR + tides (graded)."""
    e_draws = posterior_draws(fit, "eccentricity")
    e = fit.estimate("eccentricity").value
    out = [_eccentricity_check(e, e_draws, system)]
    rate = fit.estimate("domega_dt")
    rates = posterior_draws(fit, "domega_dt")
    try:
        companion = system.companion.mass if system.companion.mass is not None else 0 * u.Msun
        total = system.star.need("mass", "the GR precession") + companion
        expected = (general_relativity_precession(total, system.semi_major_axis, e)
                    + tidal_precession(system)).to_value(u.deg / u.yr)
        # an upper-bound test: the half-width below the value is the one that matters
        p_ok = probability_below(rates, 3 * expected)
        sigma = tension_sigma(p_ok)
        ok = sigma < FAIL_SIGMA
        out.append(Check("precession rate", rate.value, expected, "deg/yr", "pass" if ok else "fail",
                         f"fitted dω/dt = {rate.value:.3g} −{rate.lower:.2g}/+{rate.upper:.2g} deg/yr; GR + "
                         f"tidal bulges give {expected:.3g} deg/yr (3× allowed for the Love numbers)"
                         + ("" if ok else f"; faster at {sigma:.1f}σ: a faster rate needs another cause"),
                         tension=sigma, probability=p_ok))
    except MissingValueError as exc:
        out.append(_untested("precession rate", exc))
    return out


def _eccentricity_check(e, e_draws, system) -> Check:
    limit = system.orbit.eccentricity_limit
    measured_error = system.uncertainties.get("orbit.eccentricity")
    if measured_error is not None:
        measured = float(system.orbit.eccentricity or 0.0)
        spread = np.hypot(np.std(e_draws), float(measured_error))
        sigma = abs(e - measured) / spread if spread > 0 else float("inf")
        return Check("eccentricity", e, measured, "", "fail" if sigma >= FAIL_SIGMA else "pass",
                     f"the precession needs e = {e:.3g}; the orbit's measured e = {measured:.3g} ± "
                     f"{float(measured_error):.2g} ({sigma:.1f}σ apart)", tension=float(sigma))
    if limit is not None:
        p_ok = probability_below(e_draws, limit)
        sigma = tension_sigma(p_ok)
        return Check("eccentricity", e, limit, "", "pass" if sigma < FAIL_SIGMA else "fail",
                     f"the precession needs e = {e:.3g}; the system allows e ≤ {limit:.3g} "
                     f"(P(e ≤ limit) = {p_ok:.2g})", tension=sigma, probability=p_ok)
    return Check("eccentricity", e, None, "", "untested",
                 f"the precession needs e = {e:.3g}; the system file gives neither an eccentricity with its "
                 "uncertainty nor an eccentricity_limit", True)


def light_time_checks(fit, system, term=None) -> list[Check]:
    """Minimum mass and whether RVs would already show the companion."""
    amp = fit.estimate("light_time_amplitude").value * u.s
    period = fit.estimate("companion_period").value * u.day
    e = fit.estimate("eccentricity").value
    try:
        c = light_time_companion(system, amp, period, e)
    except MissingValueError as exc:
        return [_untested("radial-velocity visibility", exc)]
    mass = Check("minimum companion mass", c.minimum_mass.to_value(u.Mjup), None, "Mjup", "note",
                 f"m sin i ≥ {c.minimum_mass:.3g} (mass function {c.mass_function:.3g})", False)
    threshold = None if c.rv_limit is None else 3 * c.rv_limit.to_value(u.m / u.s)
    text = f"the companion would make K = {c.rv_semi_amplitude:.3g}; {c.reason}"
    if c.would_have_been_seen is None:
        return [mass, Check("radial-velocity visibility", c.rv_semi_amplitude.to_value(u.m / u.s), threshold,
                            "m/s", "untested", text)]
    # Graded: the fit's posterior (amplitude, period, e) and the RV limits' uncertainties drawn
    # together; p = P(the RVs would not have shown the companion); an impossible-type check
    margins = _light_time_rv_margins(fit, system)
    p_hidden = probability_below(margins, 1.0, log=True)
    sigma = tension_sigma(p_hidden)
    outcome = "fail" if sigma >= FAIL_SIGMA else "pass"
    return [mass, Check("radial-velocity visibility", c.rv_semi_amplitude.to_value(u.m / u.s), threshold, "m/s",
                        outcome, f"{text}; over the posterior P(the RVs would not have shown it) = {p_hidden:.2g}"
                        f"{f' ({sigma:.1f}σ)' if outcome == 'fail' else ''}", tension=sigma, probability=p_hidden)]


def _light_time_rv_margins(fit, system) -> np.ndarray:
    """Per posterior draw: how far the companion's RV signal is over what the RVs would have shown
    (> 1: seen), the larger of the RV change over 3× the scatter and an acceleration excess over 3σ."""
    amp = np.abs(posterior_draws(fit, "light_time_amplitude")) * u.s   # a Gaussian approximation can cross 0
    period = (posterior_draws(fit, "companion_period") * u.day).to(u.yr)
    e = np.clip(posterior_draws(fit, "eccentricity"), 0.0, 0.999)
    k = (2 * np.pi * projected_orbit_size(amp) / (period * np.sqrt(1 - e ** 2))).to(u.m / u.s)
    accel = (2 * np.pi * k / period).to(u.m / u.s / u.day)
    margins = np.empty(k.size)
    for i, drawn in enumerate(_systems(system, k.size)):
        rv = drawn.radial_velocity
        margins[i] = _rv_margin(k[i], period[i], rv)
        if rv.acceleration is not None and rv.acceleration_uncertainty is not None:
            excess = float(((accel[i] - abs(rv.acceleration)) / rv.acceleration_uncertainty).decompose())
            margins[i] = max(margins[i], excess / 3.0)
    return margins


def resonance_checks(fit, system, term=None) -> list[Check]:
    """Hill stability and RV visibility of the implied perturber."""
    if not fit.has("perturber_mass"):
        return [Check("perturber mass", None, None, "", "untested", "no star mass: the perturber mass is unknown")]
    mass = fit.estimate("perturber_mass").value * u.Mjup
    note = f"{mass.to(u.Mearth):.3g} for zero free eccentricity (Lithwick et al. 2012)"
    return perturber_checks(mass, fit.estimate("perturber_period").value * u.day, system, note,
                            draws=_perturber_draws(fit, u.Mjup))


def _perturber_draws(fit, mass_unit) -> tuple:
    """Posterior draws of the perturber's mass and period, for the graded checks."""
    return (np.abs(posterior_draws(fit, "perturber_mass")) * mass_unit,
            np.abs(posterior_draws(fit, "perturber_period")) * u.day)


def nbody_perturber_checks(fit, system, term=None) -> list[Check]:
    """Hill stability and RV visibility of the N-body perturber at its fitted mass and period."""
    mass = fit.estimate("perturber_mass").value * u.Mearth
    e = fit.estimate("perturber_eccentricity").value
    return perturber_checks(mass, fit.estimate("perturber_period").value * u.day, system,
                            f"{mass:.3g} from the N-body fit (e′ = {e:.2f})", eccentricity=e,
                            draws=_perturber_draws(fit, u.Mearth))


def perturber_checks(mass, p_pert, system, note: str, eccentricity: float = 0.0, draws=None) -> list[Check]:
    """Hill stability (Gladman 1993) and RV visibility of a perturbing planet of ``mass`` at ``p_pert``.

    With ``draws`` (posterior draws of the mass and the period, Quantities) both are graded: each
    draw is taken with a draw of the system's uncertain values, and the check fails only when the
    probability that the orbit is stable (that the RVs would have missed the planet) is below 3σ.
    """
    out = [Check("perturber mass", mass.to_value(u.Mjup), None, "Mjup", "note", note, False)]
    try:
        star = system.star.need("mass", "Hill stability")
        planet = system.companion.need("mass", "Hill stability")
        a1 = system.semi_major_axis
        a2 = a1 * float((p_pert / system.orbit.period).decompose()) ** (2 / 3)
        stable = hill_stable(star, planet, a1, mass, a2)
        graded = _graded_perturber(draws, system, eccentricity) if draws is not None else None
        caveat = " (a circular-orbit criterion)" if eccentricity > 0.05 else ""
        text = (f"orbits {a1:.3g} and {a2:.3g} are {'' if stable else 'not '}Hill stable "
                f"(Gladman 1993){caveat}")
        if graded is None:
            out.append(Check("Hill stability", float(abs(a2 - a1).to_value(u.AU)), None, "AU",
                             "pass" if stable else "fail", text))
        else:
            p_stable, sigma = graded["stable"]
            out.append(Check("Hill stability", float(abs(a2 - a1).to_value(u.AU)), None, "AU",
                             "fail" if sigma >= FAIL_SIGMA else "pass",
                             f"{text} at the best fit; over the posterior P(stable) = {p_stable:.2g}",
                             tension=sigma, probability=p_stable))
        k = radial_velocity_semi_amplitude(mass, star, p_pert, eccentricity)
        rv = system.radial_velocity
        seen, change, threshold = rv_visibility(k, p_pert, rv)
        if seen is not None:
            text = (f"the perturber would make K = {k:.3g}, an RV change of {change:.3g} over the "
                    f"{rv.baseline.to(u.yr):.3g} RV baseline, against 3× the RV scatter {threshold:.3g}")
            if graded is None or graded["hidden"] is None:
                outcome, extra = ("fail" if seen else "pass"), {}
            else:
                p_hidden, sigma = graded["hidden"]
                outcome = "fail" if sigma >= FAIL_SIGMA else "pass"
                text += f"; over the posterior P(the RVs would not have shown it) = {p_hidden:.2g}"
                extra = {"tension": sigma, "probability": p_hidden}
            out.append(Check("radial-velocity visibility", k.to_value(u.m / u.s), threshold.to_value(u.m / u.s),
                             "m/s", outcome, text, **extra))
        inc = system.orbit.inclination
        if inc is not None and system.star.radius is not None:
            b = float((a2 * np.cos(inc) / system.star.radius).decompose())
            out.append(Check("would it transit", b, 1.0, "", "note",
                             f"if coplanar its impact parameter would be {abs(b):.2f}: it would "
                             f"{'transit; look for its transits' if abs(b) < 1 else 'not transit'}", False))
    except MissingValueError as exc:
        out.append(_untested("Hill stability", exc))
    return out


def _graded_perturber(draws, system, eccentricity: float) -> dict:
    """P(Hill stable) and P(hidden from the RVs) over posterior draws of (mass, period) and the system's."""
    masses, periods = draws
    n = masses.size
    hill, rv_margin = np.empty(n), np.empty(n)
    for i, drawn in enumerate(_systems(system, n)):
        star, planet, a1 = drawn.star.mass, drawn.companion.mass, drawn.semi_major_axis
        a2 = a1 * float((periods[i] / drawn.orbit.period).decompose()) ** (2 / 3)
        hill[i] = mutual_hill_separation(star, planet, a1, masses[i], a2) / (2 * np.sqrt(3))
        k = radial_velocity_semi_amplitude(masses[i], star, periods[i], eccentricity)
        rv_margin[i] = _rv_margin(k, periods[i], drawn.radial_velocity)
    p_stable = 1.0 - probability_below(hill, 1.0, log=True)
    out = {"stable": (p_stable, tension_sigma(p_stable)), "hidden": None}
    if np.isfinite(rv_margin).any():
        p_hidden = probability_below(rv_margin, 1.0, log=True)
        out["hidden"] = (p_hidden, tension_sigma(p_hidden))
    return out


def _binary_stars(system):
    """(star, other) of a binary as Star objects: the other star in full, or a star of the companion's mass
    and radius; MissingValueError without the companion's mass."""
    from ttvkit.physics.system import OtherStar

    if system.is_binary:
        return system.star, system.other_star
    mass = system.companion.need("mass", "a binary's period-change checks")
    return system.star, OtherStar(mass=mass.to(u.Msun), radius=system.companion.radius)


def mass_transfer_checks(fit, system, term=None) -> list[Check]:
    """Roche-lobe overflow of the donor the sign names, weighted over both signs the posterior allows
    (decisive), its thermal-timescale rate (tension)."""
    try:
        star, other = _binary_stars(system)
    except MissingValueError as exc:
        return [_untested("donor fills its Roche lobe", exc)]
    if not fit.has("transfer_rate"):
        return [_untested("donor fills its Roche lobe", MissingValueError("the stars' masses are needed"))]
    est = fit.estimate("transfer_rate")
    if not np.isfinite(est.value):     # equal masses: dP/P = 3 dM (1/M_d − 1/M_a) = 0 whatever the rate
        return [_untested("donor fills its Roche lobe", MissingValueError(
            "the two stars have equal masses, so conservative transfer leaves the period unchanged to first "
            "order and no transfer rate follows from a period change"))]
    rates = posterior_draws(fit, "transfer_rate")
    lighter_is_star = star.mass <= other.mass
    grows = est.value >= 0                       # the lighter star gives: the period grows
    donor, accretor = ((star, other) if lighter_is_star == grows else (other, star))
    donor_name = ("the primary ([star])" if donor is star else "the other star ([other_star])")
    direction = "lighter → heavier (P grows)" if grows else "heavier → lighter (P shrinks)"
    out = [Check("transfer rate", est.value, None, "Msun/yr", "note",
                 f"conservative transfer of {abs(est.value):.3g} M☉/yr from {donor_name}, {direction}", False)]
    draws = _systems(system, DRAWS)
    if donor.radius is None:
        out.append(_untested("donor fills its Roche lobe", MissingValueError(
            f"{donor_name}'s radius is needed for its Roche lobe")))
    else:
        # each star's fill over the stars' uncertainties (NaN without a radius)
        fills = {True: [], False: []}            # keyed by "is the primary ([star])"
        for s in draws:
            st, ot = _binary_stars(s)
            for is_star, (d, a) in ((True, (st, ot)), (False, (ot, st))):
                fills[is_star].append(np.nan if d.radius is None else float(
                    (d.radius / roche_lobe_radius(d.mass, a.mass, s.semi_major_axis)).decompose()))
        fill = np.array(fills[donor is star])
        value = float(np.nanmedian(fill))
        # The posterior may allow either sign, and each sign names the other star as donor: transfer is
        # excluded only when the donor of every sign it allows is inside its lobe.  A star without a
        # radius cannot be tested and counts as filling.
        p_other_sign = (probability_below(rates, 0.0) if grows else 1.0 - probability_below(rates, 0.0))
        other_fill = np.array(fills[donor is not star])
        other_name = "the other star ([other_star])" if donor is star else "the primary ([star])"
        p_other_fills = (1.0 if not np.isfinite(other_fill).any() or p_other_sign == 0
                         else 1.0 - probability_below(other_fill, 1.0))
        p_fills = (1.0 - p_other_sign) * (1.0 - probability_below(fill, 1.0)) + p_other_sign * p_other_fills
        sigma = tension_sigma(p_fills)
        fails = value < 1 and sigma >= FAIL_SIGMA
        either = (f"; P(the donor of either sign fills its lobe) = {p_fills:.2g} (P(the rate has the other sign) "
                  f"= {p_other_sign:.2g})" if value < 1 and not fails else "")
        out.append(Check("donor fills its Roche lobe", value, 1.0, "R/R_L", "fail" if fails else "pass",
                         (f"{donor_name} fills {value:.2g} of its Roche lobe (Eggleton 1983, ApJ 268, 368): "
                          f"it cannot overflow it, so no conservative transfer from it" + (
                              f", nor from {other_name}, the donor of the other sign, which fills "
                              f"{np.nanmedian(other_fill):.2g} of its" if p_other_sign >= 0.01 else "") +
                          f" (P(the donor of either sign fills its lobe) = {p_fills:.2g}, {sigma:.1f}σ)") if fails else
                         f"{donor_name} fills {value:.2g} of its Roche lobe (Eggleton 1983, ApJ 268, 368)" + either,
                         tension=sigma, probability=p_fills))
    try:
        limit = thermal_transfer_rate(donor).to_value(u.Msun / u.yr)
    except MissingValueError as exc:
        out.append(_untested("thermal-timescale rate", exc))
        return out
    p_below = probability_below(np.abs(rates), limit, log=True)
    sigma = tension_sigma(p_below)
    above = abs(est.value) > limit and sigma >= TENSION_SIGMA
    out.append(Check("thermal-timescale rate", abs(est.value), limit, "Msun/yr", "tension" if above else "pass",
                     f"|Ṁ| = {abs(est.value):.3g} M☉/yr against the donor's M/τ_KH = {limit:.3g} M☉/yr"
                     + (f": faster than it can sustain for long, a short-lived phase if real ({sigma:.1f}σ)"
                        if above else ""), tension=sigma, probability=p_below))
    return out


def magnetic_braking_checks(fit, system, term=None) -> list[Check]:
    """Sign of dP/dt (braking only shortens the period; decisive); the rate against the RVJ 1983 law."""
    est = fit.estimate("dP_dt")
    rates = posterior_draws(fit, "dP_dt")
    out = []
    p_shrinks = probability_below(rates, 0.0)
    sigma = tension_sigma(p_shrinks)
    grows = est.value > 0 and sigma >= FAIL_SIGMA
    out.append(Check("sign of dP/dt", est.value, 0.0, "ms/yr", "fail" if grows else "pass",
                     (f"the period grows (dP/dt = {est.value:+.3g} ms/yr; P(shrinking) = {p_shrinks:.2g}): "
                      "magnetic braking only shortens it") if grows else
                     f"the period shrinks or is unchanged within its errors (P(shrinking) = {p_shrinks:.2g})",
                     tension=sigma if grows else None, probability=p_shrinks))
    try:
        star, other = _binary_stars(system)
        period = system.orbit.need("period", "the braking law")
    except MissingValueError as exc:
        out.append(_untested("braking law (Rappaport, Verbunt & Joss 1983)", exc))
        return out
    predicted = {}
    for braked, companion in ((star, other), (other, star)):
        if braked.radius is None or not _convective(braked):
            continue
        predicted[braked is star] = {g: period_change_from_braking(braked, companion.mass, period, gamma=g)
                                     .to_value(u.ms / u.yr) for g in (0.0, 4.0)}
    if not predicted:
        out.append(Check("braking law (Rappaport, Verbunt & Joss 1983)", None, None, "ms/yr", "note",
                         "neither star has a convective envelope the law applies to (0.1–1.3 M☉ on the main "
                         "sequence, from memory) or a radius: no braking expected", False))
        return out
    weakest = sum(min(abs(v[0.0]), abs(v[4.0])) for v in predicted.values())
    strongest = sum(max(abs(v[0.0]), abs(v[4.0])) for v in predicted.values())
    text = (f"the law gives dP/dt = −{weakest:.3g} to −{strongest:.3g} ms/yr for the convective "
            f"star{'s' if len(predicted) > 1 else ''} (γ = 0–4); fitted {est.value:+.3g} ms/yr")
    if est.value >= 0:     # the sign check above judges a growing period; the law has nothing to add
        out.append(Check("braking law (Rappaport, Verbunt & Joss 1983)", est.value, -strongest, "ms/yr", "note",
                         text + ", the wrong sign for braking (see the sign check)", False))
        return out
    inside = weakest / 10 <= abs(est.value) <= strongest * 10
    out.append(Check("braking law (Rappaport, Verbunt & Joss 1983)", est.value, -strongest, "ms/yr",
                     "pass" if inside else "tension",
                     text + ("" if inside else ", more than 10× outside that range (the law's calibration is "
                             "uncertain by about an order of magnitude, from memory: a tension, not an exclusion)"),
                     decisive=True))
    return out


def _convective(star) -> bool:
    """A star with a convective envelope for the braking law: 0.1–1.3 M☉ and not a white dwarf.

    (The mass range and the white-dwarf radius cut, R < 0.05 R☉, are from
    memory; a star outside them is only left out of the law's prediction.)
    """
    mass = star.mass.to_value(u.Msun)
    radius = star.radius.to_value(u.Rsun) if star.radius is not None else 1.0
    return 0.1 <= mass <= 1.3 and radius >= 0.05


def _rv_margin(semi_amplitude, period, limits) -> float:
    """The RV change over the baseline in units of what the RVs would show (> 1: seen; NaN: no limits)."""
    _, change, threshold = rv_visibility(semi_amplitude, period, limits)
    return np.nan if change is None else float((change / threshold).decompose())


#: The checks of each Term class; a Term with no entry (a constant period) has none.
CHECKS = {
    MassTransfer: mass_transfer_checks,
    MagneticBraking: magnetic_braking_checks,
    OrbitalDecay: decay_checks,
    ApsidalPrecession: precession_checks,
    SinusoidalModulation: modulation_checks,
    QuasiPeriodicModulation: modulation_checks,
    LightTravelTime: light_time_checks,
    NearResonantPerturber: resonance_checks,
    NBodyPerturber: nbody_perturber_checks,
}


def checks_for(fit, system) -> list[Check]:
    """All checks of a fitted (possibly combined) hypothesis, term by term (:data:`CHECKS`)."""
    out = []
    hypothesis = fit.hypothesis
    for term in (hypothesis.ephemeris,) + tuple(hypothesis.terms):
        for cls in type(term).__mro__:
            if cls in CHECKS:
                out += CHECKS[cls](fit, system, term)
                break
    return out
