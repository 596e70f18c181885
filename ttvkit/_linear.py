"""Weighted linear least squares: the one helper for every straight-line ephemeris and linear guess.

A timing table's constant-period ephemeris, the linear starting points of
the hypotheses and the linear parts of the mix-up check all solve
``y ≈ design @ coef`` with weights 1/σ; they call :func:`weighted_lstsq`
(or :func:`weighted_line` for a straight line) instead of repeating it.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["weighted_lstsq", "weighted_line", "LineFit"]


def weighted_lstsq(design: np.ndarray, y: np.ndarray, sigma=None, *, weights=None) -> np.ndarray:
    """Coefficients of ``y ≈ design @ coef`` minimising Σ((y − design @ coef)/σ)².

    Parameters
    ----------
    design : ndarray, shape (n, k)
    y : ndarray, shape (n,) or (n, m)
        One or several right-hand sides.
    sigma : ndarray, shape (n,), optional
        1σ uncertainties; give these or ``weights``.
    weights : ndarray, shape (n,), optional
        Row weights multiplying both sides (1/σ).

    Returns
    -------
    ndarray, shape (k,) or (k, m)
    """
    w = (1.0 / np.asarray(sigma, float)) if weights is None else np.asarray(weights, float)
    y = np.asarray(y, float)
    rhs = y * w if y.ndim == 1 else y * w[:, None]
    coef, *_ = np.linalg.lstsq(design * w[:, None], rhs, rcond=None)
    return coef


@dataclass(frozen=True)
class LineFit:
    """``intercept + slope · x`` from a weighted fit, with the coefficients' covariance."""

    intercept: float
    slope: float
    covariance: np.ndarray

    def __call__(self, x) -> np.ndarray:
        return self.intercept + self.slope * np.asarray(x, float)


def weighted_line(x, y, sigma) -> LineFit:
    """The weighted straight line through ``(x, y)`` with 1σ errors ``sigma`` (a linear ephemeris)."""
    x = np.asarray(x, float)
    design = np.column_stack([np.ones_like(x), x])
    coef = weighted_lstsq(design, y, sigma)
    a = design / np.asarray(sigma, float)[:, None]
    covariance = np.linalg.pinv(a.T @ a)
    return LineFit(float(coef[0]), float(coef[1]), covariance)
