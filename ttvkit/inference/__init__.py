"""Fitting any timing hypothesis: least squares, sampling, likelihoods, results, periodogram, predictions.

Nothing here knows any physics; :mod:`ttvkit.diagnosis` joins fits and physics.
"""

from ttvkit.inference.fitting import ConvergenceWarning, compare, fit, local_pool, sample
from ttvkit.inference.likelihood import Likelihood
from ttvkit.inference.periodogram import Periodogram, residual_periodogram
from ttvkit.inference.predictions import Prediction, predict_mid_times
from ttvkit.inference.results import Comparison, FitResult

__all__ = ["fit", "sample", "compare", "local_pool", "ConvergenceWarning", "Likelihood", "FitResult", "Comparison",
           "Periodogram", "residual_periodogram", "Prediction", "predict_mid_times"]
