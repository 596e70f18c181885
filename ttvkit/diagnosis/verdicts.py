"""The verdict vocabulary and the rules that assign it: the one place a verdict is decided.

Each hypothesis gets exactly one verdict from :data:`VERDICTS`, by the first
rule that applies, in this order:

1. the constant period is **sufficient** unless the data disfavour it;
2. **outside its validity** when the fitted values leave the domain where the
   term's model holds (:meth:`ttvkit.hypotheses.base.Term.validity`);
3. **disfavoured by the data** when its BIC exceeds the best by more than 10
   (Kass & Raftery 1995, JASA 90, 773: "very strong" evidence against);
4. **not needed** when it improves the BIC by less than 6 over every
   simpler hypothesis nested in it (a constant period, or the single term of
   a pair), net of a look-elsewhere charge for a period it searched
   (:func:`look_elsewhere`): the data do not require it;
5. **physically excluded** when a decisive physical check finds it
   impossible at ≥ 3σ (energy beyond the star's output, a companion RVs would
   have shown, an unstable orbit, a Q'_* below the physical floor);
6. **needed but in tension** when a decisive check finds it unusual at
   ≥ 3σ (the tension is given);
7. **needed, physically untested** when a decisive check lacks its inputs;
8. otherwise **needed and plausible**.

The data are judged first: a hypothesis the data do not need is "not
needed" whatever its physics, and the summary names as explanations only
hypotheses the data need.  The threshold for "needed" is Kass & Raftery's
"strong" step (ΔBIC 6): with 10 ("very strong") a decay injected at 5σ of
its detectability is found only ~87% of the time by construction (Δχ² ≥
10 + ln N needs z ≥ 3.9); with 6, ~95%, while null tables still call
something needed in well under 5% (checked by injection and recovery,
:mod:`ttvkit.diagnosis.calibration`; the numbers are in the documentation).  It is a plausibility screen, not a proof.
"""

from __future__ import annotations

import numpy as np

__all__ = ["VERDICTS", "NEEDED", "SUFFICIENT", "OUTSIDE_VALIDITY", "DISFAVOURED", "NOT_NEEDED",
           "EXCLUDED", "IN_TENSION", "UNTESTED", "PLAUSIBLE", "REJECT_DELTA_BIC", "NEEDED_DELTA_BIC",
           "statistical_standing", "decide", "bic_gain", "look_elsewhere"]

SUFFICIENT = "sufficient"
OUTSIDE_VALIDITY = "outside its validity"
DISFAVOURED = "disfavoured by the data"
NOT_NEEDED = "not needed"
EXCLUDED = "physically excluded"
IN_TENSION = "needed but in tension"
UNTESTED = "needed, physically untested"
PLAUSIBLE = "needed and plausible"

#: Each verdict and what it means (the report and the documentation print these).
VERDICTS = {
    SUFFICIENT: "the constant period describes the mid-times about as well as any alternative",
    OUTSIDE_VALIDITY: "the fit lies where the model does not hold (the reason is given); it explains nothing",
    DISFAVOURED: "the data reject it: its BIC exceeds the best by more than 10",
    NOT_NEEDED: "the data do not require it over the simpler hypotheses nested in it (BIC gain < 6)",
    EXCLUDED: "the data need it but the physics of this system forbids it at ≥ 3σ",
    IN_TENSION: "the data need it and it is physically possible, but unusual at ≥ 3σ (the tension is given)",
    UNTESTED: "the data need it; the system file lacks what its physical check needs",
    PLAUSIBLE: "the data need it and every physical check the system file allows passes",
}

#: Verdicts under which the data need the hypothesis.
NEEDED = (PLAUSIBLE, IN_TENSION, UNTESTED, EXCLUDED)

#: ΔBIC above the best beyond which the data reject a hypothesis (Kass & Raftery 1995: very strong).
REJECT_DELTA_BIC = 10.0
#: BIC gain over every nested simpler hypothesis a hypothesis must make to be needed (Kass & Raftery
#: 1995: "strong"; chosen by injection and recovery, see the module docstring).
NEEDED_DELTA_BIC = 6.0


def statistical_standing(delta_bic: float) -> str:
    """Words for a ΔBIC against the best (Kass & Raftery 1995)."""
    if delta_bic <= 2:
        return "best or as good as the best"
    if delta_bic <= 6:
        return "positive evidence against"
    if delta_bic <= 10:
        return "strong evidence against"
    return "very strong evidence against"


def _term_keys(fit) -> frozenset:
    h = fit.hypothesis
    keys = [t.key for t in (h.ephemeris,) + tuple(h.terms)]
    return frozenset(k for k in keys if k != "constant-period")


def look_elsewhere(fit) -> float:
    """The extra χ² a fit pays for the periods it searched (0 when it searched none).

    The best of N independent periods beats a fixed one: for noise, the
    chance that any of N trials reaches Δχ² = x is about N times the chance
    for one (a Bonferroni bound), so a searched period should cost 2 ln N in
    χ².  BIC already charges it ln n (n mid-times) as a parameter; the charge
    here is the rest, max(0, 2 ln N − ln n), per searched term, with
    N = baseline × the width of the searched frequency range
    (:meth:`ttvkit.hypotheses.base.Term.searched_frequencies`; independent
    frequencies are 1/baseline apart).  Without it, a hypothesis searching
    a wide range (a near-resonant super-period down to a few tens of orbits:
    N ≈ 200 on 11 years of a 2-d orbit) was called needed on 5.5% of
    constant-period tables with understated errors, a sinusoid searching
    N ≈ 40 on 2%.
    """
    data = fit.data
    h = fit.hypothesis
    charge = 0.0
    for term in (h.ephemeris,) + tuple(h.terms):
        trials = data.span * term.searched_frequencies(data)
        if trials > 1:
            charge += max(0.0, 2 * np.log(trials) - np.log(data.n))
    return float(charge)


def bic_gain(fit, comparison) -> float | None:
    """Lowest BIC improvement of ``fit`` over the fits of ``comparison`` nested in it.

    A fit is nested in another when its terms are a proper subset of the
    other's (the constant period is nested in everything).  The improvement
    is net of the look-elsewhere charge of the periods ``fit`` searches and
    the nested fit does not (:func:`look_elsewhere`).  None for the constant
    period itself, or when nothing nested was fitted.
    """
    keys = _term_keys(fit)
    if not keys:
        return None
    charge = look_elsewhere(fit)
    nested = [g.bic - fit.bic - (charge - look_elsewhere(g)) for g in comparison.fits if _term_keys(g) < keys]
    return float(min(nested)) if nested else None


def decide(name: str, delta_bic: float, gain: float | None, validity: list, checks: list) -> tuple[str, str]:
    """The verdict and its reason for one hypothesis.

    Parameters
    ----------
    name : str
    delta_bic : float
        BIC minus the lowest BIC of the comparison.
    gain : float or None
        Lowest BIC improvement over the simpler hypotheses nested in this one
        (None for the constant period itself; :func:`bic_gain`).
    validity : list of str
        Reasons the fit lies outside a term's validity domain.
    checks : list of Check
        Its physical checks.
    """
    if name == "constant-period":
        if delta_bic > REJECT_DELTA_BIC:
            return DISFAVOURED, f"ΔBIC = {delta_bic:.1f}: the mid-times drift from a constant period"
        return SUFFICIENT, f"ΔBIC = {delta_bic:.1f}"
    if validity:
        return OUTSIDE_VALIDITY, "; ".join(validity)
    if delta_bic > REJECT_DELTA_BIC:
        return DISFAVOURED, f"ΔBIC = {delta_bic:.1f} ({statistical_standing(delta_bic)})"
    if gain is None or gain < NEEDED_DELTA_BIC:   # nothing nested to compare with: not shown needed
        return NOT_NEEDED, ("no simpler hypothesis nested in it was fitted" if gain is None else
                            f"it lowers the BIC by only {gain:.1f} over the simpler hypotheses nested in it "
                            "(net of the charge for the periods it searched)")
    decisive = [c for c in checks if c.decisive]
    for outcome, verdict in (("fail", EXCLUDED), ("tension", IN_TENSION), ("untested", UNTESTED)):
        hit = [c for c in decisive if c.outcome == outcome]
        if hit:
            return verdict, "; ".join(c.reason for c in hit)
    passes = "; ".join(c.reason for c in decisive if c.outcome == "pass")
    return PLAUSIBLE, (f"BIC lower by {gain:.1f} than without it (net of the charge for the periods it "
                       "searched); " + (passes or "no physical objection"))
