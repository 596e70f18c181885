"""Simulated light curves for the noise tests and benchmarks/midtime_speed.py (invented values).

The transit geometry is the Winn (2010) worked case of shared/CHECKS.md
(P = 3 d, a/R* = 8, k = 0.1, b = 0.3) with Kipping (2013) q1, q2 for
u = (0.40, 0.26).  Exposures are integrated by the midpoint rule on 61
sub-points, independently of batman's own supersampling (the thing under test).
"""

import batman
import numpy as np

from ttvkit.lightcurves.midtime import TransitShape
from ttvkit.lightcurves.reading import LightCurve
from ttvkit.timing import Ephemeris

SHAPE = TransitShape(period=3.0, radius_ratio=0.1, a_over_rstar=8.0, impact_parameter=0.3, q1=0.4356, q2=0.3030)
MINUTE = 1.0 / 1440


def exposed(shape, t, t0, exposure=0.0, n=61):
    """batman's flux at mid-time ``t0``, averaged over ``exposure`` (midpoint rule) if > 0."""
    p = shape.batman_params(t0)
    if exposure <= 0:
        return batman.TransitModel(p, t).light_curve(p)
    offsets = ((np.arange(n) + 0.5) / n - 0.5) * exposure
    fine = (t[:, None] + offsets).ravel()
    return batman.TransitModel(p, fine).light_curve(p).reshape(t.size, n).mean(axis=1)


def ar1(rng, n, cadence, amplitude, timescale):
    """AR(1) noise of rms ``amplitude``, correlation e^(−Δt/τ) between points ``cadence`` apart."""
    phi = np.exp(-cadence / timescale)
    x = np.empty(n)
    x[0] = rng.normal(0, amplitude)
    kicks = rng.normal(0, amplitude * np.sqrt(1 - phi ** 2), n)
    for i in range(1, n):
        x[i] = phi * x[i - 1] + kicks[i]
    return x


def simulate_curve(rng, n_transits=10, cadence=2 * MINUTE, white=1e-3, given=None, red=None, exposure=0.0,
                   half=0.2, shape=SHAPE):
    """A light curve of ``n_transits`` windows (±``half`` days) one period apart.

    ``given`` is the flux error written in the file (default: the true white
    level); ``red`` = (rms, τ) adds AR(1) noise.  Returns the LightCurve, the
    true mid-times by epoch and the reference ephemeris (truth offsets up to ±7 min).
    """
    t_all, f_all, truths = [], [], {}
    for k in range(n_transits):
        centre = k * shape.period
        truth = centre + rng.uniform(-0.005, 0.005)
        t = centre + np.arange(-half, half, cadence) + rng.uniform(0, cadence)
        f = exposed(shape, t, truth, exposure) * (1 + 0.002 * (t - centre)) + rng.normal(0, white, t.size)
        if red is not None:
            f = f + ar1(rng, t.size, cadence, *red)
        t_all.append(t)
        f_all.append(f)
        truths[k] = truth
    t, f = np.concatenate(t_all), np.concatenate(f_all)
    e = np.full(t.size, white if given is None else given)
    lc = LightCurve(t, f, e, "simulated", exposure if exposure > 0 else cadence, {}, None)
    return lc, truths, Ephemeris(0.0, shape.period)
