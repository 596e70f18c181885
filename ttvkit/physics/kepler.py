"""Two-body orbits: Kepler's equation, anomalies, radial-velocity amplitudes.

Kepler's equation M = E − e sin E is solved for arrays of (M, e) at once by
Halley's method (cubic convergence; a plain numpy loop, since the fits call it
thousands of times and a general root finder's overhead dominated), started
from Danby's guess E₀ = M + 0.85 e sign(sin M) (Danby 1988, *Fundamentals of
Celestial Mechanics*).
"""

from __future__ import annotations

import astropy.constants as const
import astropy.units as u
import numpy as np

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
    ecc = start
    for _ in range(100):  # Halley's step; converges in a few iterations for every e < 1 from Danby's start
        sin_e, cos_e = np.sin(ecc), np.cos(ecc)
        f = ecc - e * sin_e - wrapped
        f1 = 1 - e * cos_e
        step = f / (f1 - 0.5 * f * e * sin_e / f1)
        ecc = ecc - step
        if np.max(np.abs(step)) < tol:
            break
    ecc = ecc + (m - wrapped)
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
