"""Predicted mid-times with credible bands, in BJD_TDB and UTC.

The band of a hypothesis at a future epoch is the 16th–84th percentile of
its predictions over the posterior samples (or over draws from the Gaussian
approximation at the optimum when not sampled).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ttvkit.constants import DAY_S
from ttvkit.inference.results import FitResult
from ttvkit.timing.ephemeris import KINDS
from ttvkit.timing.standards import bjd_tdb_to_utc

__all__ = ["Prediction", "predict_mid_times", "prediction_band", "process_prediction"]


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
        return 0.5 * (self.upper - self.lower) * DAY_S

    def to_rows(self) -> list[dict]:
        """One dict per epoch."""
        rows = []
        for i, e in enumerate(self.epoch):
            rows.append({"epoch": int(e), "kind": str(self.kind[i]), "bjd_tdb": float(self.median[i]),
                         "lower": float(self.lower[i]), "upper": float(self.upper[i]),
                         "uncertainty_s": float(self.uncertainty_s[i]),
                         "utc": self.utc[i] if self.utc else None})
        return rows


def prediction_band(result: FitResult, data, max_draws: int = 1500) -> tuple:
    """Median and 1σ band (15.9th, 84.1th percentiles over posterior draws) of a fit's predictions.

    The one helper for every predicted curve (forecasts, figures, future
    mid-times).  Times are days from ``data.t_ref``; without samples the
    median is the best fit's prediction and the band comes from the
    Gaussian approximation's draws.

    Returns
    -------
    (median, lower, upper) : ndarrays
    """
    draws = result.model_theta(result.draws())
    if draws.shape[0] > max_draws:
        draws = draws[np.linspace(0, draws.shape[0] - 1, max_draws).astype(int)]
    times = result.hypothesis.predict(draws, data)
    lo, med, hi = np.percentile(times, [15.865, 50.0, 84.135], axis=0)
    if result.samples is None:
        med = result.hypothesis.predict(result.model_theta(), data)
    if result.hypothesis.has_process:
        mean, sd = process_prediction(result, med)
        half = 0.5 * (hi - lo)
        med = med + mean
        spread = np.sqrt(half ** 2 + sd ** 2)
        lo, hi = med - spread, med + spread
    return med, lo, hi


def process_prediction(result: FitResult, at) -> tuple[np.ndarray, np.ndarray]:
    """The Gaussian-process modulation at times ``at`` (days from t_ref), conditioned on the fit's residuals.

    Its conditional mean and standard deviation at the best fit (celerite2's
    O(n) prediction); far from the data the mean returns to 0 and the
    spread to the process's σ.  The band adds it in quadrature to the
    ephemeris's own spread.
    """
    from ttvkit.inference.fitting import process_mean

    return process_mean(result.hypothesis, result.data, result.likelihood, result.theta, at)


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
    future = base.at_epochs(epochs, phase)
    med, lo, hi = (x + base.t_ref for x in prediction_band(result, future, max_draws))
    utc = None
    if target is not None:
        utc = [t.isot for t in bjd_tdb_to_utc(med, target)]
    return Prediction(epochs, kinds.copy(), med, lo, hi, utc)
