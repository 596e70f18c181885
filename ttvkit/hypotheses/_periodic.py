"""Shared help for periodic terms: the range of periods worth searching and
periodogram-seeded starting guesses (so multi-start finds the global optimum,
not the nearest local one)."""

from __future__ import annotations

import numpy as np

from ttvkit._linear import weighted_lstsq
from ttvkit.constants import DAY_S
from ttvkit.hypotheses.base import TimingData

__all__ = ["period_range", "candidate_periods", "sinusoid_at", "amplitude_limit", "longer_than_baseline"]


def period_range(data: TimingData) -> tuple[float, float]:
    """Periods (days) a long-term timing signal may have in these data.

    From max(20 orbital periods, span/40) to 5× the span (common practice,
    no source: beyond a few spans the signal is a polynomial, below the
    shortest gaps it is aliasing).
    """
    span = max(data.span, 10 * data.period)
    return max(20 * data.period, span / 40.0), 5.0 * span


def candidate_periods(data: TimingData, residuals: np.ndarray, count: int = 4,
                      shortest: float | None = None) -> list[float]:
    """The ``count`` highest Lomb–Scargle peaks of the residuals, in days.

    ``shortest`` overrides the short end of :func:`period_range` (a
    near-resonant super-period can be a few tens of orbits).
    """
    from astropy.timeseries import LombScargle

    lo, hi = period_range(data)
    if shortest is not None:
        lo = shortest
    t = data.epoch * data.period
    if data.n < 4:
        return [np.sqrt(lo * hi)]
    freq = np.linspace(1 / hi, 1 / lo, 4000)
    power = LombScargle(t, residuals, data.sigma).power(freq)
    peaks = [i for i in range(1, freq.size - 1) if power[i] >= power[i - 1] and power[i] >= power[i + 1]]
    if power[0] > power[1]:
        peaks.append(0)
    peaks.sort(key=lambda i: -power[i])
    chosen = []
    for i in peaks:
        period = 1 / freq[i]
        if all(abs(period - c) / c > 0.05 for c in chosen):
            chosen.append(period)
        if len(chosen) == count:
            break
    return chosen or [np.sqrt(lo * hi)]


def sinusoid_at(data: TimingData, residuals: np.ndarray, period: float) -> tuple[float, float]:
    """Weighted linear fit of a·sin + b·cos (+ offset + slope) at ``period``; (a, b) in seconds."""
    t = data.epoch * data.period
    x = data.epoch + data.phase
    arg = 2 * np.pi * t / period
    design = np.column_stack([np.ones_like(t), x, np.sin(arg), np.cos(arg)])
    coef = weighted_lstsq(design, residuals, data.sigma)
    return float(coef[2] * DAY_S), float(coef[3] * DAY_S)


def amplitude_limit(data: TimingData, residuals: np.ndarray) -> float:
    """Bound (seconds) for amplitudes: 20× the largest residual or 10× the median error."""
    return float(max(20 * np.max(np.abs(residuals)), 10 * np.median(data.sigma)) * DAY_S)


def longer_than_baseline(period: float, data: TimingData, what: str) -> str | None:
    """The validity reason of a periodic term whose period (days) exceeds the data's span, else None.

    Less than one cycle in the data cannot tell a periodic signal from a
    trend (a polynomial): such a fit says "there is curvature", not "there
    is a cycle of this period" (common practice, no source).
    """
    span = data.span
    if span > 0 and period > span:
        return (f"{what} of {period / 365.25:.3g} yr is {period / span:.2g}× the {span / 365.25:.3g}-yr "
                "baseline: less than one cycle is covered, so the fit describes a trend, not a cycle")
    return None
