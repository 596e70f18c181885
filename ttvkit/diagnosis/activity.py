"""The activity mechanism's own prediction, tested: does an activity indicator vary with the period change?

For each indicator series the user gives, :func:`link_indicators` runs the
lagged-correlation test with red-noise surrogates of
:func:`ttvkit.inference.activity_link.activity_link` against the O−C about a
constant period (ΔP/P by default, as Applegate 1992 ties the luminosity
change to the period change).  :func:`indicator_check` turns one result into
a check of every activity hypothesis (a sinusoidal or quasi-periodic
modulation):

* linked (surrogate p < 0.01): **pass** -- the mechanism's prediction is seen;
* not linked (p ≥ 0.05) although the indicator covers at least one
  modulation period: **tension** -- the predicted link is not seen (a
  tension, never an exclusion: the indicator may trace another star, or the
  response may be weak);
* otherwise (0.01 ≤ p < 0.05, or less than a cycle covered): a **note**.

The 0.01 and 0.05 levels are common practice, no source.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ttvkit.constants import YEAR_D
from ttvkit.errors import InputError, located

__all__ = ["IndicatorResult", "link_indicators", "indicator_check", "LINKED_P", "UNLINKED_P"]

#: Surrogate p below which an indicator counts as linked, and above which as not linked.
LINKED_P, UNLINKED_P = 0.01, 0.05


@dataclass(frozen=True)
class IndicatorResult:
    """One indicator series and its activity-link test against this table's O−C."""

    series: object        # IndicatorSeries
    link: object          # ActivityLink
    oc_time: np.ndarray
    oc: np.ndarray
    oc_error: np.ndarray

    def to_dict(self) -> dict:
        """Plain JSON: the indicator's name, unit, file and the link's summary."""
        return {"name": self.series.name, "unit": self.series.unit, "source": self.series.source,
                "n_points": int(np.size(self.series.time)), **self.link.to_dict()}


def link_indicators(table, reference_fit, series, seed: int = 0, n_surrogates: int = 999) -> list:
    """The activity-link test of each indicator series against the constant-period O−C.

    Parameters
    ----------
    table : TimingTable
    reference_fit : FitResult
        The constant-period fit (its residuals are the O−C).
    series : sequence of IndicatorSeries
    seed : int
        Seed of the surrogates (the same seed, the same p-values).
    n_surrogates : int

    Returns
    -------
    list of IndicatorResult
    """
    from ttvkit.inference.activity_link import activity_link

    oc = reference_fit.residuals()
    out = []
    for k, s in enumerate(series):
        try:
            link = activity_link(table.time, oc, table.uncertainty, s.time, s.value, s.error,
                                 n_surrogates=n_surrogates, seed=seed + k)
        except InputError as exc:           # say which indicator series (file) it is
            raise InputError(located(f"activity indicator {s.name!r}: {exc}", s.source)) from None
        out.append(IndicatorResult(s, link, np.asarray(table.time), np.asarray(oc), np.asarray(table.uncertainty)))
    return out


def indicator_check(result: IndicatorResult, fit):
    """The check an indicator's link adds to an activity hypothesis's verdict."""
    from ttvkit.diagnosis.checks import Check

    link, s = result.link, result.series
    period_yr = fit.estimate("modulation_period_yr").value if fit.has("modulation_period_yr") else None
    covered = np.ptp(s.time) / YEAR_D
    lag = f"{link.lag / YEAR_D:+.2g} yr" if abs(link.lag) >= 30 else f"{link.lag:+.0f} d"
    what = (f"'{s.name}' against ΔP/P" if link.target == "period change" else f"'{s.name}' against O−C")
    text = (f"{what}: largest |r| = {link.statistic:.2f} (r = {link.correlation:+.2f} at lag {lag}), "
            f"p = {link.p_value:.3g} from {link.n_surrogates} red-noise surrogates")
    if link.p_value < LINKED_P:
        outcome, text = "pass", text + ": the indicator varies with the period change, as the mechanism predicts"
    elif link.p_value >= UNLINKED_P and period_yr is not None and covered >= period_yr:
        outcome, text = "tension", (text + f": no link over {covered:.2g} yr (≥ one {period_yr:.2g}-yr cycle), "
                                    "though the mechanism predicts one (the indicator may trace the other star, "
                                    "or the response may be weak: a tension, not an exclusion)")
    else:
        outcome = "note"
        text += (": not significant" if link.p_value >= LINKED_P else "") + (
            f"; the indicator covers {covered:.2g} yr, less than one modulation period" if period_yr is not None
            and covered < period_yr else "")
    return Check(f"activity indicator '{s.name}'", float(link.p_value), LINKED_P, "p", outcome, text,
                 decisive=True, probability=float(link.p_value))
