"""The noise as it is: the white level measured from the data, and a correlated-noise model.

Pipeline flux errors can be wrong in either direction, so each light
curve's per-point white level is measured from the out-of-transit residuals
of its windows (:func:`white_ratio`: the ratio of the measured scatter to
the given errors).

Correlated ("red") noise is modelled by a Gaussian process with an
exponential kernel k(Δt) = A² exp(−|Δt|/τ) plus a white term s² σ_i²
(σ_i the given errors), whose O(N) likelihood celerite2 computes
(Foreman-Mackey et al. 2017, AJ 154, 220).  An AR(1) process sampled at a
fixed cadence is exactly this kernel.  A, τ and s are fitted once per light
curve to the residuals of its windows (each window an independent stretch:
they are a period apart, many τ).  The GP is used only when it beats the
white model by a likelihood ratio 2 Δln L > 9.21 (the 1% point of χ² with
two degrees of freedom; with A on its bound at zero the true false-alarm
rate is lower — Self & Liang 1987, from memory), so white data keep the
fast white path.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.optimize import minimize

from ttvkit.lightcurves.midtime import WindowModel

__all__ = ["RedNoise", "white_ratio", "fit_red_noise", "GPWindowModel", "RED_NOISE_THRESHOLD"]

#: 2 Δln L above which the correlated-noise model is used: χ²(2 d.o.f.) at p = 0.01 (textbook).
RED_NOISE_THRESHOLD = 9.21


@dataclass(frozen=True)
class RedNoise:
    """A fitted exponential-kernel GP: amplitude A (relative flux), timescale τ (days),
    white scale s (× the given errors) and its gain 2 Δln L over white noise."""

    amplitude: float
    timescale: float
    white_scale: float
    gain: float

    def window_model(self, time, flux, flux_err, shape, baseline_order: int = 1,
                     tabulated: bool = True) -> GPWindowModel:
        """A window's model with this GP's likelihood (``flux_err``: the given errors)."""
        return GPWindowModel(time, flux, flux_err, shape, baseline_order, self, tabulated)

    @property
    def detected(self) -> bool:
        """True when the data need the correlated term (2 Δln L > :data:`RED_NOISE_THRESHOLD`)."""
        return self.gain > RED_NOISE_THRESHOLD


def white_ratio(residuals, errors, masks, n_params: int) -> float:
    """Measured scatter over the given errors, pooled over windows.

    Parameters
    ----------
    residuals, errors, masks : sequences of arrays
        Per window: the fit residuals, the given flux errors, and the
        out-of-transit points to use.
    n_params : int
        Fitted parameters per window (baseline terms and the mid-time),
        taken from the degrees of freedom in proportion to the points used.

    Returns
    -------
    float
        √(Σ (r/σ)² / Σ dof); 1.0 when there are no degrees of freedom.
    """
    chi2, dof = 0.0, 0.0
    for r, e, m in zip(residuals, errors, masks):
        z = r[m] / e[m]
        chi2 += float(z @ z)
        dof += m.sum() * (1 - n_params / max(r.size, n_params + 1))
    return float(np.sqrt(chi2 / dof)) if dof > 1 else 1.0


def _gp(amplitude: float, timescale: float):
    import celerite2
    from celerite2 import terms

    return celerite2.GaussianProcess(terms.RealTerm(a=amplitude ** 2, c=1.0 / timescale))


def fit_red_noise(times, residuals, errors, cadence: float) -> RedNoise:
    """Fit A, τ, s to the residuals of one light curve's windows (maximum likelihood).

    Parameters
    ----------
    times, residuals, errors : sequences of arrays
        Per window (each an independent stretch of data).
    cadence : float
        Days; τ is bounded to [cadence / 2, the longest window].

    Returns
    -------
    RedNoise
    """
    t = [np.asarray(x, float) - x[0] for x in times]
    r = np.concatenate([np.asarray(x, float) for x in residuals])
    var = np.concatenate([np.asarray(x, float) ** 2 for x in errors])
    n = r.size
    s2 = float(r @ (r / var)) / n
    white_lnl = -0.5 * (n + n * np.log(s2) + float(np.log(2 * np.pi * var).sum()))
    sigma = float(np.sqrt(s2 * np.median(var)))
    span = max(max(float(x[-1]) for x in t if x.size), cadence)
    # one celerite2 solve for the whole light curve: the windows laid end to end with gaps of
    # 50 window lengths, across which the kernel (τ ≤ one window length) is below e^-50
    shift = np.cumsum([0.0] + [51 * span] * (len(t) - 1))
    tt = np.concatenate([x + s for x, s in zip(t, shift)])

    def neg_lnl(theta):
        amp, tau, s = np.exp(theta)
        gp = _gp(amp, tau)
        gp.compute(tt, diag=s * s * var, quiet=True)
        value = gp.log_likelihood(r)
        return -value if np.isfinite(value) else 1e30

    lo = np.log([1e-3 * sigma, cadence / 2, 0.1 * np.sqrt(s2)])
    hi = np.log([10 * sigma, span, 10 * np.sqrt(s2)])
    x0 = np.clip(np.log([0.3 * sigma, 10 * cadence, 0.95 * np.sqrt(s2)]), lo + 1e-6, hi - 1e-6)
    # Nelder–Mead in the logs: no gradients to difference, and a likelihood known to 1e-3 in ln L
    # is far finer than the 9.21 threshold and than the hyperparameters' own spread
    best = minimize(neg_lnl, x0, method="Nelder-Mead", bounds=list(zip(lo, hi)),
                    options={"xatol": 1e-3, "fatol": 1e-3, "maxfev": 400})
    amp, tau, s = np.exp(best.x)
    return RedNoise(float(amp), float(tau), float(s), float(max(0.0, 2 * (-best.fun - white_lnl))))


class GPWindowModel(WindowModel):
    """A window's model whose χ² is the GP's generalised one: rᵀK⁻¹r, K = A² e^{−|Δt|/τ} + s²σ².

    ``flux_err`` are the given errors; the white term is ``red.white_scale`` times them.
    """

    _white = False      # the normal equations go through the GP: no batched white-noise shortcut

    def __init__(self, time, flux, flux_err, shape, baseline_order: int, red: RedNoise, tabulated: bool = True):
        err = np.asarray(flux_err, float) * red.white_scale
        super().__init__(time, flux, err, shape, baseline_order, tabulated)
        self.gp = _gp(red.amplitude, red.timescale)
        self.gp.compute(self.time - self.centre, diag=err ** 2, quiet=True)
        self.kinv_y = self.gp.apply_inverse(self.flux)
        self.yy = float(self.flux @ self.kinv_y)

    def metric(self, x: np.ndarray) -> np.ndarray:
        """K⁻¹ x (celerite2's O(N) solve)."""
        return self.gp.apply_inverse(x)

    def _normal(self, m: np.ndarray):
        a = m[:, None] * self.basis
        z = self.gp.apply_inverse(a)
        return a.T @ z, z.T @ self.flux
