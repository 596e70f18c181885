"""Predicted mid-times with credible bands, in BJD_TDB and UTC.

The band of a hypothesis at a future epoch is the 16th–84th percentile of
its predictions over the posterior samples (or over draws from the Gaussian
approximation at the optimum when not sampled).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .hypotheses import TimingData
from .results import FitResult
from .timescales import bjd_tdb_to_utc
from .timing import KINDS

__all__ = ["Prediction", "predict_mid_times"]


@dataclass(frozen=True)
class Prediction:
    """Predicted mid-times of one hypothesis.

    Attributes
    ----------
    epoch : ndarray of int
    kind : ndarray of str
    median, lower, upper : ndarray
        BJD_TDB (days): median and the 16th/84th percentiles.
    utc : list of str or None
        ISO calendar date-times (UTC, at the geocentre) of the median, when the
        target is known.
    """

    epoch: np.ndarray
    kind: np.ndarray
    median: np.ndarray
    lower: np.ndarray
    upper: np.ndarray
    utc: list | None

    @property
    def uncertainty_s(self) -> np.ndarray:
        """Half-width of the band in seconds."""
        return 0.5 * (self.upper - self.lower) * 86400.0

    def to_rows(self) -> list[dict]:
        """One dict per epoch."""
        rows = []
        for i, e in enumerate(self.epoch):
            rows.append({"epoch": int(e), "kind": str(self.kind[i]), "bjd_tdb": float(self.median[i]),
                         "lower": float(self.lower[i]), "upper": float(self.upper[i]),
                         "uncertainty_s": float(self.uncertainty_s[i]),
                         "utc": self.utc[i] if self.utc else None})
        return rows


def predict_mid_times(result: FitResult, epochs, kind="transit", target=None,
                      max_draws: int = 4000) -> Prediction:
    """Mid-times of ``epochs`` predicted by a fitted hypothesis, with 1σ bands.

    Parameters
    ----------
    result : FitResult
    epochs : array_like of int
    kind : str or array_like of str
    target : SkyCoord, optional
        For the UTC calendar dates at the geocentre.
    max_draws : int
        Posterior draws used for the band.

    Returns
    -------
    Prediction
    """
    epochs = np.atleast_1d(np.asarray(epochs, dtype=np.int64))
    kinds = np.broadcast_to(np.asarray(kind, dtype=str), epochs.shape)
    phase = np.array([KINDS[k] for k in kinds])
    base = result.data
    future = TimingData(epochs.astype(float), phase, phase > 0, np.zeros(epochs.size),
                        np.ones(epochs.size), base.t_ref, base.period, base.context)
    draws = result.model_theta(result.draws())
    if draws.shape[0] > max_draws:
        draws = draws[np.linspace(0, draws.shape[0] - 1, max_draws).astype(int)]
    times = result.hypothesis.predict(draws, future) + base.t_ref
    lo, med, hi = np.percentile(times, [15.865, 50.0, 84.135], axis=0)
    best = result.hypothesis.predict(result.model_theta(), future) + base.t_ref
    if result.samples is None:
        med = best
    utc = None
    if target is not None:
        utc = [t.isot for t in bjd_tdb_to_utc(med, target)]
    return Prediction(epochs, kinds.copy(), med, lo, hi, utc)
