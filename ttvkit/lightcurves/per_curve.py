"""Timing every window of one light curve: the noise measured, each window timed or untimed with its reason.

Two passes.  The first fits every window that covers its transit with the
given flux errors (the mid-time does not depend on a common scale of the
errors).  The light curve's white level is then measured from the
out-of-transit residuals (:func:`ttvkit.lightcurves.noise.white_ratio`) and
a correlated-noise model fitted to the residuals
(:func:`ttvkit.lightcurves.noise.fit_red_noise`).  The second pass either
rescales the white uncertainties by the measured ratio (white noise: no
refit) or refits each window with the GP likelihood.  Each window is then
checked: the transit must be detected (depth / σ_depth ≥
:data:`DETECTION_SNR`) and the search must not have ended at its bound.
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np

from ttvkit.lightcurves.midtime import MidTime, TransitShape, fit_mid_time
from ttvkit.lightcurves.noise import fit_red_noise, white_ratio

__all__ = ["time_light_curve", "supersampled", "DETECTION_SNR", "NOISE_MODELS", "SUBEXPOSURE_DAYS"]

#: Depth over its uncertainty below which a window's transit counts as not detected.  Pure noise
#: exceeds 5σ with probability 3e-7 per window (one-sided Gaussian), so flat data are refused;
#: below ~5σ the χ² profile in t0 is no longer close to a parabola and the Fisher error is
#: optimistic (common practice, no source).
DETECTION_SNR = 5.0

#: ``auto``: GP only where the data show correlated noise; ``white``: measured white level;
#: ``gp``: always the GP; ``given``: trust the flux errors as they are.
NOISE_MODELS = ("auto", "white", "gp", "given")

#: Sub-exposure length for supersampling long cadences (common practice, no source; with the
#: midpoint placement of :class:`~ttvkit.lightcurves.midtime.WindowModel` the 30-min timing error
#: is below 0.3 s at this step, tests/lightcurves/test_noise.py).
SUBEXPOSURE_DAYS = 2.0 / 1440

_COVERAGE_REASONS = {
    "no data": "no points: the transit falls in a gap of the light curve (NaN, flagged or missing rows)",
    "no points in transit": "no points between first and last contact",
    "no ingress or egress": "neither ingress nor egress is covered",
    "partial": "partial coverage (use --partial to time it)",
}


def supersampled(shape: TransitShape, exposure: float) -> TransitShape:
    """The shape integrated over ``exposure`` (days) when it is longer than 2.5 sub-exposures."""
    if exposure > 2.5 * SUBEXPOSURE_DAYS:
        return replace(shape, exposure_time=exposure, supersample=int(np.ceil(exposure / SUBEXPOSURE_DAYS)))
    return replace(shape, exposure_time=0.0, supersample=1)


def _untimed(window, reason: str) -> dict:
    return {"source": window.source, "epoch": window.epoch, "coverage": window.coverage, "reason": reason}


def _coverage_reason(window, time_partial: bool, baseline_order: int) -> str | None:
    if window.coverage == "partial" and time_partial:
        pass
    elif window.coverage != "full":
        return _COVERAGE_REASONS.get(window.coverage, window.coverage)
    if window.time.size < baseline_order + 4:
        return f"{window.time.size} points: too few to fit a mid-time and a degree-{baseline_order} baseline"
    return None


def judge(m: MidTime, search_half: float) -> str | None:
    """Why a fitted window is not a result (None if it is)."""
    snr = m.depth_snr
    lowest = min(snr, m.predicted_depth_snr if m.predicted_depth_snr is not None else snr)
    if lowest <= -DETECTION_SNR:
        return (f"the flux rises where the transit is predicted (depth {lowest:.1f} σ): "
                "magnitudes given as flux?")
    if not snr >= DETECTION_SNR:
        return f"transit not detected: depth {snr:.1f} σ, below {DETECTION_SNR:g} σ"
    if m.at_bound:
        return (f"the mid-time search ended at its bound ({search_half * 1440:.0f} min from the "
                "prediction): no transit there, or the ephemeris is off")
    if not np.isfinite(m.uncertainty) or m.uncertainty <= 0:
        return "the data carry no timing information (flat χ²)"
    return None


def time_light_curve(lc, windows, shape: TransitShape, noise: str = "auto", baseline_order: int = 1,
                     time_partial: bool = False) -> tuple[list[MidTime], list[dict], dict]:
    """Time every window of one light curve.

    Parameters
    ----------
    lc : LightCurve
    windows : list of Window
        This light curve's windows (:func:`~ttvkit.lightcurves.reading.cut_windows`).
    shape : TransitShape
        Without supersampling; the light curve's exposure is applied here.
    noise : {"auto", "white", "gp", "given"}
    baseline_order : int
    time_partial : bool

    Returns
    -------
    (timed, untimed, noise_info)
        ``untimed`` rows name source, epoch, coverage and the reason;
        ``noise_info`` holds the measured white ratio and the fitted
        correlated-noise model (or None).
    """
    model_shape = supersampled(shape, lc.exposure_time)
    t14, _ = shape.durations()
    half = 0.25 * t14
    untimed, first = [], []
    for w in windows:
        reason = _coverage_reason(w, time_partial, baseline_order)
        if reason:
            untimed.append(_untimed(w, reason))
        else:
            first.append((w, fit_mid_time(w, model_shape, baseline_order=baseline_order)))
    info = {"source": lc.source, "white_ratio": None, "red_noise": None, "model": noise}
    if not first:
        return [], untimed, info
    found = [(w, m) for w, m in first if judge(m, half) is None]
    if found:
        masks = [np.abs(w.time - m.time) > 0.5 * (t14 + lc.exposure_time) for w, m in found]
        ratio = white_ratio([m.residuals for _, m in found], [w.flux_err for w, _ in found], masks,
                            baseline_order + 2)
    else:   # no transit model to trust: the point-to-point scatter (differences cancel any slow trend)
        steps = np.concatenate([np.diff(w.flux) / np.hypot(w.flux_err[1:], w.flux_err[:-1]) for w, _ in first])
        ratio = float(1.4826 * np.median(np.abs(steps - np.median(steps)))) if steps.size else 1.0
    red = None
    if noise in ("auto", "gp") and found:   # hyperparameters from real fits only: a GP must not eat a dip
        red = fit_red_noise([w.time for w, _ in found], [m.residuals for _, m in found],
                            [w.flux_err for w, _ in found], max(lc.cadence, 1e-6))
        info["red_noise"] = {"amplitude": red.amplitude, "timescale_d": red.timescale,
                             "white_scale": red.white_scale, "gain_2dlnL": red.gain, "used": False}
        if noise == "auto" and not red.detected:
            red = None
    info["white_ratio"] = ratio
    timed = []
    for w, m in first:
        if red is not None:
            info["red_noise"]["used"] = True
            m = fit_mid_time(w, model_shape, baseline_order=baseline_order, red=red)
            m = replace(m, noise_ratio=ratio, residuals=None)
        elif noise != "given":
            m = replace(m, uncertainty=m.uncertainty * ratio, white_uncertainty=m.white_uncertainty * ratio,
                        depth_error=m.depth_error * ratio, error_source="flux_err x ratio", noise_ratio=ratio,
                        residuals=None, predicted_depth_snr=None if m.predicted_depth_snr is None
                        else m.predicted_depth_snr / ratio)
        else:
            m = replace(m, noise_ratio=ratio, residuals=None)
        reason = judge(m, half)
        if reason:
            untimed.append(_untimed(w, reason))
        else:
            timed.append(m)
    return timed, untimed, info
