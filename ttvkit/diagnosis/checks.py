"""Physical checks of each fitted timing hypothesis against the actual system.

Each function takes a fitted result (its :class:`~ttvkit.inference.results.Estimate` of
each parameter and derived quantity), the term it checks and the :class:`~ttvkit.physics.System`
and returns :class:`Check` records: the value, the limit, the outcome and
the reason in words.  A check whose inputs are missing from the system is
``untested`` and says what is missing.  ``decisive`` checks can exclude a
hypothesis; the others are notes for the reader.

The rules (ours; each is a plausibility screen, not a proof):

* **modulation** — excluded when even the more lenient of the thin- and
  finite-shell Applegate models needs more energy than the star radiates
  over one modulation period, or predicts a luminosity change larger than
  the star's observed variability;
* **decay** — excluded when the period grows by more than 2σ (tides of a
  star spinning slower than the orbit only shrink it), or when even the
  slowest decay within 2σ needs a Q'_* below the documented range;
* **precession** — excluded when the eccentricity exceeds the system's
  limit, or the rate exceeds 3× the GR + tidal expectation (Love numbers are
  uncertain by about that factor) beyond 3σ;
* **light-travel time** — excluded when the companion's RV signal would
  already have been seen (:func:`~ttvkit.physics.companions.light_time_companion`);
* **near-resonant perturber** — excluded when the two orbits are not Hill
  stable (Gladman 1993) or the perturber's RV signal would have been seen.
"""

from __future__ import annotations

from dataclasses import asdict, dataclass

import astropy.units as u
import numpy as np

from ttvkit.errors import MissingValueError
from ttvkit.hypotheses import (
    ApsidalPrecession,
    LightTravelTime,
    NBodyPerturber,
    NearResonantPerturber,
    OrbitalDecay,
    SinusoidalModulation,
)
from ttvkit.physics import activity_budgets
from ttvkit.physics.companions import (
    hill_stable,
    light_time_companion,
    romer_acceleration,
    romer_decay_rate,
    rv_visibility,
)
from ttvkit.physics.kepler import radial_velocity_semi_amplitude
from ttvkit.physics.tides import (
    general_relativity_precession,
    plausible_quality_factor,
    quality_factor_from_decay_rate,
    tidal_precession,
)

__all__ = ["Check", "checks_for", "CHECKS", "PHYSICAL_MODELS"]


@dataclass(frozen=True)
class Check:
    """One physical test of one hypothesis."""

    name: str
    value: float | None
    limit: float | None
    unit: str
    outcome: str          # "pass", "fail", "note" or "untested"
    reason: str
    decisive: bool = True

    def to_dict(self) -> dict:
        """Plain-JSON form."""
        return asdict(self)


def _untested(name: str, exc: Exception) -> Check:
    return Check(name, None, None, "", "untested", f"not tested: {exc}", True)


def modulation_checks(fit, system, term=None) -> list[Check]:
    """Applegate energy budget, luminosity change and activity cycle."""
    amp = fit.estimate("semi_amplitude").value * u.s
    p_mod = fit.estimate("modulation_period_yr").value * u.yr
    try:
        budgets = activity_budgets(system, amp, p_mod)
    except MissingValueError as exc:
        return [_untested("activity energy budget", exc)]
    out = []
    for model, b in budgets.items():
        out.append(Check(f"energy ratio ({model})", b.energy_ratio, 1.0, "",
                         "pass" if b.energy_ratio <= 1 else "fail",
                         f"the {model} model needs {b.energy_ratio:.3g}× the energy the star radiates "
                         f"in one {p_mod:.3g} cycle ({b.structure}; spin: {b.spin_used})", False))
    lenient = min(budgets.values(), key=lambda b: b.energy_ratio)
    ok = lenient.energy_ratio <= 1
    out.append(Check("activity energy budget", lenient.energy_ratio, 1.0, "", "pass" if ok else "fail",
                     (f"the star can power a {amp:.3g} O−C semi-amplitude over {p_mod:.3g} "
                      f"(largest it can power: {lenient.max_amplitude:.3g}, {lenient.model} model)")
                     if ok else
                     (f"the star cannot power a {amp:.3g} O−C semi-amplitude over {p_mod:.3g}: even the "
                      f"{lenient.model} model needs {lenient.energy_ratio:.3g}× its output "
                      f"(largest it can power: {lenient.max_amplitude:.3g})")))
    out.append(Check("differential rotation ΔΩ/Ω", lenient.delta_Omega_over_Omega, None, "", "note",
                     f"ΔΩ/Ω = {lenient.delta_Omega_over_Omega:.3g} ({lenient.model}); active stars show "
                     "about 0.01 (Applegate 1992, from memory)", False))
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
                         f"known activity cycle of {cycle:.3g} (within 30%: common practice, no source)", False))
    return out


def decay_checks(fit, system, term=None) -> list[Check]:
    """Sign of dP/dt, Q'_* against the documented range, the Rømer alternative."""
    rate, err = fit.estimate("dP_dt").value, max(fit.estimate("dP_dt").lower, fit.estimate("dP_dt").upper)
    out = []
    if rate > 2 * err:
        out.append(Check("sign of dP/dt", rate, 0.0, "ms/yr", "fail",
                         f"the period grows (dP/dt = {rate:+.3g} ± {err:.2g} ms/yr); tides of a star "
                         "spinning slower than the orbit only shrink orbits"))
    try:
        q = quality_factor_from_decay_rate(system, rate * u.ms / u.yr)
        slowest = max(abs(rate) - 2 * err, 1e-12)
        q_weak = quality_factor_from_decay_rate(system, slowest * u.ms / u.yr)
        band = plausible_quality_factor(system)
        ok = q_weak >= 10 ** band.log10_low
        out.append(Check("tidal quality factor Q'_*", q, 10 ** band.log10_low, "", "pass" if ok else "fail",
                         f"Q'_* = {q:.3g} (≥ {q_weak:.3g} within 2σ) against the range "
                         f"10^{band.log10_low:g}–10^{band.log10_high:g} for a {band.star_type} "
                         f"({band.source})", rate < 0))
    except MissingValueError as exc:
        out.append(_untested("tidal quality factor Q'_*", exc))
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


def precession_checks(fit, system, term=None) -> list[Check]:
    """Eccentricity against the system's limit, rate against GR + tides."""
    e = fit.estimate("eccentricity").value
    out = []
    limit = system.orbit.eccentricity_limit
    if limit is not None:
        out.append(Check("eccentricity", e, limit, "", "pass" if e <= limit else "fail",
                         f"the precession needs e = {e:.3g}; the system allows e ≤ {limit:.3g}"))
    else:
        out.append(Check("eccentricity", e, None, "", "untested",
                         f"the precession needs e = {e:.3g}; the system file gives no eccentricity_limit", True))
    rate = fit.estimate("domega_dt").value
    err = max(fit.estimate("domega_dt").lower, fit.estimate("domega_dt").upper)
    try:
        companion = system.companion.mass if system.companion.mass is not None else 0 * u.Msun
        total = system.star.need("mass", "the GR precession") + companion
        expected = (general_relativity_precession(total, system.semi_major_axis, e)
                    + tidal_precession(system)).to_value(u.deg / u.yr)
        ok = rate - 3 * err <= 3 * expected
        out.append(Check("precession rate", rate, expected, "deg/yr", "pass" if ok else "fail",
                         f"fitted dω/dt = {rate:.3g} ± {err:.2g} deg/yr; GR + tidal bulges give "
                         f"{expected:.3g} deg/yr" + ("" if ok else "; a faster rate needs another cause")))
    except MissingValueError as exc:
        out.append(_untested("precession rate", exc))
    return out


def light_time_checks(fit, system, term=None) -> list[Check]:
    """Minimum mass and whether RVs would already show the companion."""
    amp = fit.estimate("light_time_amplitude").value * u.s
    period = fit.estimate("companion_period").value * u.day
    e = fit.estimate("eccentricity").value
    try:
        c = light_time_companion(system, amp, period, e)
    except MissingValueError as exc:
        return [_untested("radial-velocity visibility", exc)]
    outcome = "untested" if c.would_have_been_seen is None else ("fail" if c.would_have_been_seen else "pass")
    return [
        Check("minimum companion mass", c.minimum_mass.to_value(u.Mjup), None, "Mjup", "note",
              f"m sin i ≥ {c.minimum_mass:.3g} (mass function {c.mass_function:.3g})", False),
        Check("radial-velocity visibility", c.rv_semi_amplitude.to_value(u.m / u.s),
              None if c.rv_limit is None else 3 * c.rv_limit.to_value(u.m / u.s), "m/s", outcome,
              f"the companion would make K = {c.rv_semi_amplitude:.3g}; {c.reason}"),
    ]


def resonance_checks(fit, system, term=None) -> list[Check]:
    """Hill stability and RV visibility of the implied perturber."""
    if not fit.has("perturber_mass"):
        return [Check("perturber mass", None, None, "", "untested", "no star mass: the perturber mass is unknown")]
    mass = fit.estimate("perturber_mass").value * u.Mjup
    note = f"{mass.to(u.Mearth):.3g} for zero free eccentricity (Lithwick et al. 2012)"
    return perturber_checks(mass, fit.estimate("perturber_period").value * u.day, system, note)


def nbody_perturber_checks(fit, system, term=None) -> list[Check]:
    """Hill stability and RV visibility of the N-body perturber at its fitted mass and period."""
    mass = fit.estimate("perturber_mass").value * u.Mearth
    e = fit.estimate("perturber_eccentricity").value
    return perturber_checks(mass, fit.estimate("perturber_period").value * u.day, system,
                            f"{mass:.3g} from the N-body fit (e′ = {e:.2f})", eccentricity=e)


def perturber_checks(mass, p_pert, system, note: str, eccentricity: float = 0.0) -> list[Check]:
    """Hill stability (Gladman 1993) and RV visibility of a perturbing planet of ``mass`` at ``p_pert``."""
    out = [Check("perturber mass", mass.to_value(u.Mjup), None, "Mjup", "note", note, False)]
    try:
        star = system.star.need("mass", "Hill stability")
        planet = system.companion.need("mass", "Hill stability")
        a1 = system.semi_major_axis
        a2 = a1 * float((p_pert / system.orbit.period).decompose()) ** (2 / 3)
        stable = hill_stable(star, planet, a1, mass, a2)
        caveat = " (a circular-orbit criterion)" if eccentricity > 0.05 else ""
        out.append(Check("Hill stability", float(abs(a2 - a1).to_value(u.AU)), None, "AU",
                         "pass" if stable else "fail",
                         f"orbits {a1:.3g} and {a2:.3g} are {'' if stable else 'not '}Hill stable "
                         f"(Gladman 1993){caveat}"))
        k = radial_velocity_semi_amplitude(mass, star, p_pert, eccentricity)
        rv = system.radial_velocity
        seen, change, threshold = rv_visibility(k, p_pert, rv)
        if seen is not None:
            out.append(Check("radial-velocity visibility", k.to_value(u.m / u.s), threshold.to_value(u.m / u.s),
                             "m/s", "fail" if seen else "pass",
                             f"the perturber would make K = {k:.3g}, an RV change of {change:.3g} over the "
                             f"{rv.baseline.to(u.yr):.3g} RV baseline, against 3× the RV scatter {threshold:.3g}"))
        inc = system.orbit.inclination
        if inc is not None and system.star.radius is not None:
            b = float((a2 * np.cos(inc) / system.star.radius).decompose())
            out.append(Check("would it transit", b, 1.0, "", "note",
                             f"if coplanar its impact parameter would be {abs(b):.2f}: it would "
                             f"{'transit; look for its transits' if abs(b) < 1 else 'not transit'}", False))
    except MissingValueError as exc:
        out.append(_untested("Hill stability", exc))
    return out


#: The checks of each Term class; a Term with no entry (a constant period) has none.
CHECKS = {
    OrbitalDecay: decay_checks,
    ApsidalPrecession: precession_checks,
    SinusoidalModulation: modulation_checks,
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


#: The physical model behind each Term's checks: (title, assumptions), as the report states them.
PHYSICAL_MODELS = {
    NBodyPerturber: (
        "Perturbing planet (N-body fit)",
        "The transiting planet and one more planet of fitted mass, period, eccentricity vector and mean "
        "longitude, integrated directly (the same corrected Wisdom–Holman map); coplanar, edge-on orbits "
        "of point masses; the transiting planet's eccentricity held at the System's; T0 and P are the "
        "mean ephemeris (the integration's straight line over the data is removed). The fit starts from "
        "the map's best points when the map is made, from near-resonant periods and from a coarse grid; "
        "another mode may exist elsewhere in period. Hill stability after Gladman (1993) for circular "
        "orbits."),
    SinusoidalModulation: (
        "Activity cycle (Applegate 1992)",
        "An activity cycle moves angular momentum between the star's interior and an outer shell; the "
        "shell's changed spin changes the star's quadrupole moment and so the orbital period. Core and "
        "shell rotate rigidly; the quadrupole follows the shell's spin at once; the modulation is "
        "sinusoidal; the whole luminosity is available over one cycle; the initial differential rotation "
        "equals its change. The spin is the star's own when its rotation period is known, synchronous "
        "otherwise. Thin shell: 0.1 M at the surface. Finite shell (in the manner of Völschow et al. "
        "2016): a Lane–Emden polytrope (n = 1.5 below 0.5 M☉, else 3) with the energy minimised over the "
        "shell thickness."),
    OrbitalDecay: (
        "Tidal decay (Goldreich & Soter 1966; Patra et al. 2017)",
        "Constant-phase-lag tide raised on the star by a planet on a circular orbit; Q'_* constant; the "
        "planet's own tide neglected. Plausible Q'_* ranges by star type are a documented table, recalled "
        "from the cited studies."),
    ApsidalPrecession: (
        "Apsidal precession (Giménez & Bastero 1995)",
        "A slightly eccentric orbit to first order in e; a constant precession rate; the rate expected "
        "from general relativity and the tidal bulges (Ragozzine & Wolf 2009) with Love numbers k2 = 0.6 "
        "(planet) and 0.03 (star), uncertain by a factor of a few."),
    LightTravelTime: (
        "Distant companion (Irwin 1952)",
        "A Keplerian outer orbit of a point-mass pair; the light-travel time shifts all events alike. The "
        "companion would already have been seen if its RV change over the baseline exceeds 3× the RV "
        "scatter (common practice, no source)."),
    NearResonantPerturber: (
        "Near-resonant perturber (Lithwick, Xie & Wu 2012)",
        "Coplanar, nearly circular orbits near (not in) a first-order resonance; the quoted mass assumes "
        "zero free eccentricity (a free eccentricity trades against the mass). Hill stability after "
        "Gladman (1993) for circular orbits."),
}
