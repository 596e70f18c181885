"""Two-body orbits: Kepler's equation, anomalies, radial-velocity amplitudes.

Kepler's equation M = E − e sin E is solved for arrays of (M, e) at once by
Halley's method in :func:`scipy.optimize.newton` (given f, f′ and f″, which
it vectorises over array starting points), started from Danby's guess
E₀ = M + 0.85 e sign(sin M) (Danby 1988, *Fundamentals of Celestial
Mechanics*).
"""

from __future__ import annotations

import warnings

import astropy.constants as const
import astropy.units as u
import numpy as np
from scipy.optimize import newton

__all__ = ["solve_kepler", "true_anomaly", "radial_velocity_semi_amplitude"]


def solve_kepler(mean_anomaly, eccentricity, tol: float = 1e-14) -> np.ndarray:
    """Eccentric anomaly E (radians) from mean anomaly M (radians) and e < 1.

    Parameters
    ----------
    mean_anomaly : array_like
    eccentricity : array_like
        Broadcast against ``mean_anomaly``; 0 ≤ e < 1.
    tol : float
        Absolute tolerance on E.

    Returns
    -------
    numpy.ndarray

    Examples
    --------
    Meeus, *Astronomical Algorithms*, Example 30.a (e = 0.1, M = 5°):

    >>> round(float(np.degrees(solve_kepler(np.radians(5.0), 0.1))), 6)
    5.554589
    """
    m, e = np.broadcast_arrays(np.asarray(mean_anomaly, float), np.asarray(eccentricity, float))
    if np.any((e < 0) | (e >= 1)):
        raise ValueError("eccentricity must be in [0, 1) for Kepler's equation")
    shape = m.shape
    m = m.ravel()
    e = e.ravel()
    wrapped = np.mod(m + np.pi, 2 * np.pi) - np.pi
    start = wrapped + 0.85 * e * np.sign(np.sin(wrapped))
    if m.size == 0:
        return np.zeros(shape)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)
        ecc = newton(lambda E: E - e * np.sin(E) - wrapped, start,
                     fprime=lambda E: 1 - e * np.cos(E),
                     fprime2=lambda E: e * np.sin(E), tol=tol, maxiter=100)
    ecc = np.asarray(ecc) + (m - wrapped)
    return ecc.reshape(shape)


def true_anomaly(eccentric_anomaly, eccentricity) -> np.ndarray:
    """True anomaly ν from E: tan(ν/2) = √((1+e)/(1−e)) tan(E/2)."""
    E = np.asarray(eccentric_anomaly, float)
    e = np.asarray(eccentricity, float)
    return 2 * np.arctan2(np.sqrt(1 + e) * np.sin(E / 2), np.sqrt(1 - e) * np.cos(E / 2))


def radial_velocity_semi_amplitude(companion_mass, host_mass, period, eccentricity: float = 0.0,
                                   inclination=90 * u.deg) -> u.Quantity:
    """K = (2πG/P)^{1/3} m sin i / (M + m)^{2/3} / √(1 − e²)  (m/s).

    Examples
    --------
    The Sun due to Jupiter (textbook ≈ 12.5 m/s):

    >>> import astropy.units as u
    >>> k = radial_velocity_semi_amplitude(1 * u.Mjup, 1 * u.Msun, 11.862 * u.yr, 0.0489)
    >>> round(k.to_value(u.m / u.s), 1)
    12.5
    """
    m = u.Quantity(companion_mass, u.Mjup)
    mh = u.Quantity(host_mass, u.Msun)
    p = u.Quantity(period, u.day)
    k = ((2 * np.pi * const.G / p) ** (1 / 3) * m * np.sin(u.Quantity(inclination, u.deg))
         / (mh + m) ** (2 / 3) / np.sqrt(1 - eccentricity ** 2))
    return k.to(u.m / u.s)
