"""The residual periodogram: is there a periodic signal in the O−C at all?

Lomb–Scargle (astropy's :class:`~astropy.timeseries.LombScargle`, with the
timing uncertainties as weights) of the residuals from the constant-period
fit, over the periods a long-term signal may have in these data.  The
false-alarm probability of the highest peak uses Baluev's (2008, MNRAS 385,
1279) analytic bound, which astropy implements; the tests check it against
simulated white noise.

Periods longer than the data's span are searched (a long cycle shows as
curvature) but **flagged**: a peak there is a trend, not a measured period
(common practice, no source), and :attr:`Periodogram.best_beyond_baseline`
says so; the diagnosis passes the flag on to the reader.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ttvkit.hypotheses import TimingData
from ttvkit.hypotheses._periodic import period_range

__all__ = ["Periodogram", "residual_periodogram"]


@dataclass(frozen=True)
class Periodogram:
    """Lomb–Scargle power of the constant-period residuals.

    Attributes
    ----------
    period : ndarray
        Trial periods (days), descending.
    power : ndarray
        Normalised power ("standard" normalisation, 0 … 1).
    best_period : float
        Period of the highest peak (days).
    best_power : float
    false_alarm_probability : float
        Of the highest peak (Baluev 2008).
    levels : dict
        False-alarm probability → power level (e.g. 0.01 → 0.3).
    baseline : float
        Time the data cover (days); periods beyond it are flagged.
    """

    period: np.ndarray
    power: np.ndarray
    best_period: float
    best_power: float
    false_alarm_probability: float
    levels: dict
    baseline: float = float("inf")

    @property
    def best_beyond_baseline(self) -> bool:
        """True when the highest peak lies at a period longer than the data's span (a trend, not a cycle)."""
        return bool(self.best_period > self.baseline)

    def to_dict(self) -> dict:
        """Plain-JSON summary (without the full curve)."""
        return {"best_period_days": self.best_period, "best_power": self.best_power,
                "false_alarm_probability": self.false_alarm_probability,
                "levels": {str(k): v for k, v in self.levels.items()}, "baseline_days": self.baseline,
                "best_beyond_baseline": self.best_beyond_baseline}


def residual_periodogram(table, samples: int = 4000, levels=(0.1, 0.01, 0.001)) -> Periodogram:
    """Lomb–Scargle periodogram of the residuals from a constant-period fit.

    Parameters
    ----------
    table : TimingTable or TimingData
    samples : int
        Trial frequencies, evenly spaced in frequency.
    levels : sequence of float
        False-alarm probabilities whose power levels are wanted.

    Returns
    -------
    Periodogram
    """
    from astropy.timeseries import LombScargle

    data = table if isinstance(table, TimingData) else TimingData.from_table(table)
    resid = data.linear_residuals()
    t = data.epoch * data.period
    lo, hi = period_range(data)
    ls = LombScargle(t, resid, data.sigma, fit_mean=True, center_data=True, nterms=1)
    freq = np.linspace(1 / hi, 1 / lo, samples)
    power = ls.power(freq)
    i = int(np.argmax(power))
    fap = float(ls.false_alarm_probability(power[i], method="baluev", minimum_frequency=freq[0],
                                           maximum_frequency=freq[-1]))
    lv = {float(p): float(ls.false_alarm_level(p, method="baluev", minimum_frequency=freq[0],
                                               maximum_frequency=freq[-1])) for p in levels}
    return Periodogram(1 / freq, power, float(1 / freq[i]), float(power[i]), fap, lv, float(data.span))
