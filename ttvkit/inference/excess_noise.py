"""Excess scatter handled by default: fit an excess-noise term when χ² is too large.

Compiled literature tables often scatter more than their quoted
uncertainties allow (different observers, different light-curve models).
A plain weighted fit of such a table turns the excess into false
significance.  The decision is made once per table, on the quadratic
(orbital-decay) ephemeris, the most flexible cheap model every comparison
holds: if its χ² is too large for its degrees of freedom (p < 0.01, the
χ² distribution's upper tail), every hypothesis is fitted with white
excess-noise terms (jitters, added in quadrature) and the output says so:
one for each source with at least :data:`MIN_ROWS_PER_SOURCE` mid-times
(observers understate their errors by different amounts) and one shared by
the remaining rows; one for the whole table when no source has enough.
Under-dispersed tables (p > 0.999 in the lower tail: uncertainties likely
overestimated, or seconds/minutes read as days) get a warning.

The p < 0.01 threshold is common practice, no source; the lower-tail
threshold is set stricter so that honest tables rarely trip it.  Ten rows
per source: a variance estimated from n points has a relative error of
about sqrt(2 / (n − 1)), ≈ 0.5 at n = 10 (common practice, no source);
fewer rows would give jitters the data cannot pin down.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.stats import chi2 as chi2_distribution

from ttvkit.inference.likelihood import Likelihood

__all__ = ["ExcessNoiseDecision", "decide_excess_noise", "jitter_likelihood", "MIN_ROWS_PER_SOURCE"]

#: Upper-tail p-value below which the scatter is called excessive (common practice, no source).
P_EXCESS = 0.01
#: Lower-tail p-value below which the scatter is called too small (common practice, no source).
P_UNDER = 0.001
#: The model the decision is made on.
REFERENCE = "orbital-decay"
#: A source needs this many mid-times for a jitter of its own (see the module notes).
MIN_ROWS_PER_SOURCE = 10


@dataclass(frozen=True)
class ExcessNoiseDecision:
    """What :func:`decide_excess_noise` found and the likelihood to fit with.

    Attributes
    ----------
    likelihood : Likelihood
        The one to use (with a jitter when the scatter is excessive).
    applied : bool
        True when an excess-noise term was added.
    chi2, dof, p_value : float
        Of the reference (quadratic) fit; ``p_value`` is the upper tail.
    message : str or None
        A sentence for outputs, when there is something to say.
    """

    likelihood: Likelihood
    applied: bool
    chi2: float
    dof: int
    p_value: float
    message: str | None

    def to_dict(self) -> dict:
        """The decision, for JSON outputs."""
        return {"applied": self.applied, "reference_model": REFERENCE, "chi2": self.chi2,
                "dof": self.dof, "p_value": self.p_value, "message": self.message,
                "jitter_groups": list(self.likelihood.jitter_groups) if self.applied else []}


def jitter_likelihood(table, like: Likelihood, min_rows: int = MIN_ROWS_PER_SOURCE) -> Likelihood:
    """``like`` with excess-noise terms: one per source with ``min_rows`` or more mid-times, one more
    shared by the other rows, or a single one when fewer than two groups would result."""
    if getattr(table, "source", None) is None:
        return Likelihood(like.kind, jitter=True, dof=like.dof)
    source = np.asarray(table.source).astype(str)
    names, counts = np.unique(source, return_counts=True)
    order = sorted(range(len(names)), key=lambda i: (-counts[i], names[i]))
    rich = [str(names[i]) for i in order if counts[i] >= min_rows]
    rest = int(np.sum(~np.isin(source, rich)))
    if len(rich) + (rest > 0) < 2:  # one group in all: a single jitter
        return Likelihood(like.kind, jitter=True, dof=like.dof)
    if 0 < rest < 2:  # a lone leftover row cannot pin a jitter: it joins the smallest named source's
        rich = rich[:-1]
        rest = int(np.sum(~np.isin(source, rich)))
    return Likelihood(like.kind, dof=like.dof, jitter_sources=rich, other_sources=rest > 0)


def decide_excess_noise(table, likelihood: Likelihood | None = None, context=None) -> ExcessNoiseDecision:
    """Add an excess-noise term to ``likelihood`` when the table's scatter needs one.

    Parameters
    ----------
    table : TimingTable or TimingData
    likelihood : Likelihood, optional
        The user's choice; only a plain Gaussian (no jitter, not Student-t)
        is changed, since the others already allow for excess scatter.
    context : HostContext or System, optional
        Passed to the reference fit.

    Returns
    -------
    ExcessNoiseDecision
    """
    from ttvkit.inference.fitting import fit

    like = likelihood or Likelihood()
    if len(table.time) < 5:  # a quadratic leaves no degree of freedom to judge the scatter by
        return ExcessNoiseDecision(like, False, float("nan"), 0, float("nan"), None)
    ref = fit(table, REFERENCE, Likelihood(), context=context)
    dof = int(ref.dof)
    p_high = float(chi2_distribution.sf(ref.chi2, dof))
    p_low = float(chi2_distribution.cdf(ref.chi2, dof))
    head = f"χ² = {ref.chi2:.1f} for {dof} dof (reduced {ref.chi2 / dof:.2f}) about a quadratic ephemeris"
    if p_high < P_EXCESS and like.is_least_squares:
        jittered = jitter_likelihood(table, like)
        if jittered.n_extra == 1:
            terms = "an excess-noise term (a white jitter added in quadrature; one for the whole table)"
        else:
            terms = (f"{jittered.n_extra} excess-noise terms (white jitters added in quadrature; one each for "
                     f"{', '.join(repr(g) for g in jittered.jitter_sources)}"
                     f"{' and one for the other sources' if jittered.other_sources else ''})")
        message = (f"{head}, p = {p_high:.1e}: the quoted uncertainties are too small for the scatter; "
                   f"every hypothesis was fitted with {terms} -- turn off with --no-excess-noise")
        return ExcessNoiseDecision(jittered, True, float(ref.chi2), dof, p_high, message)
    if p_low < P_UNDER:
        message = (f"{head}: the scatter is far smaller than the quoted uncertainties (p = {p_low:.1e}); "
                   "they may be overestimated, or given in seconds or minutes and read as days")
        return ExcessNoiseDecision(like, False, float(ref.chi2), dof, p_high, message)
    if p_high < P_EXCESS:
        message = f"{head}, p = {p_high:.1e}: excess scatter; the chosen likelihood allows for it"
        return ExcessNoiseDecision(like, False, float(ref.chi2), dof, p_high, message)
    return ExcessNoiseDecision(like, False, float(ref.chi2), dof, p_high, None)
