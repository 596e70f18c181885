"""Near-resonant perturbations: Laplace coefficients and the f, g of Lithwick et al.

Lithwick, Xie & Wu (2012, ApJ 761, 122): two planets near the j:j−1
resonance (inner period P, outer P′) have sinusoidal TTVs at the
super-period P_j = 1 / abs(j/P′ − (j−1)/P), normalised distance
Δ = (P′/P)(j−1)/j − 1, and for zero free eccentricities amplitudes

    abs(V)  = P  μ′ abs(f) / (π j^{2/3} (j−1)^{1/3} abs(Δ))   (inner planet, μ′ = m′/M*)
    abs(V′) = P′ μ  abs(g) / (π j abs(Δ))                     (outer planet, μ = m/M*)

(LXW 2012 eqs. 8–9, from memory).  f and g are sums of Laplace
coefficients b_{1/2}^{(k)}(α), α = (P/P′)^{2/3}, evaluated here by
quadrature at the actual period ratio:

    f = −½ [2j + α d/dα] b^{(j)},   g = ½ [2j − 1 + α d/dα] b^{(j−1)} − 2α δ_{j,2},

the −2α being the indirect term of the 2:1 resonance.  At exact
commensurability they reproduce LXW Table 3 (j = 2: −1.190, 0.4284).
"""

from __future__ import annotations

import astropy.units as u
import numpy as np
from scipy.integrate import quad

__all__ = ["laplace_coefficient", "resonance_coefficients", "super_period", "normalised_distance",
           "perturber_periods", "RESONANCES"]

#: Resonances (outer:inner period ratios) the default grid packs points around.
RESONANCES = (2.0, 1.5, 4 / 3, 3.0, 5 / 3)


def laplace_coefficient(s: float, k: int, alpha: float, derivative: bool = False) -> float:
    """b_s^{(k)}(α) = (1/π) ∫₀^{2π} cos(kψ) (1 − 2α cos ψ + α²)^{−s} dψ, or its α-derivative."""
    if derivative:
        def integrand(psi):
            base = 1 - 2 * alpha * np.cos(psi) + alpha ** 2
            return np.cos(k * psi) * (-s) * (2 * alpha - 2 * np.cos(psi)) * base ** (-s - 1)
    else:
        def integrand(psi):
            return np.cos(k * psi) * (1 - 2 * alpha * np.cos(psi) + alpha ** 2) ** (-s)
    value, _ = quad(integrand, 0.0, 2 * np.pi, limit=200, epsabs=1e-13, epsrel=1e-12)
    return value / np.pi


def resonance_coefficients(j: int, alpha: float | None = None) -> tuple[float, float]:
    """(f, g) of the j:j−1 resonance at α (exact commensurability if None)."""
    if j < 2:
        raise ValueError("first-order resonances need j >= 2")
    if alpha is None:
        alpha = ((j - 1) / j) ** (2 / 3)
    b_j = laplace_coefficient(0.5, j, alpha)
    db_j = laplace_coefficient(0.5, j, alpha, derivative=True)
    b_j1 = laplace_coefficient(0.5, j - 1, alpha)
    db_j1 = laplace_coefficient(0.5, j - 1, alpha, derivative=True)
    f = -0.5 * (2 * j * b_j + alpha * db_j)
    g = 0.5 * ((2 * j - 1) * b_j1 + alpha * db_j1) - (2 * alpha if j == 2 else 0.0)
    return float(f), float(g)


def super_period(inner_period, outer_period, j: int):
    """P_j = 1 / abs(j/P′ − (j−1)/P) (same unit as the periods)."""
    return 1.0 / np.abs(j / outer_period - (j - 1) / inner_period)


def normalised_distance(inner_period, outer_period, j: int):
    """Δ = (P′/P)(j−1)/j − 1."""
    return outer_period / inner_period * (j - 1) / j - 1.0


def perturber_periods(transit_period, low: float = 0.3, high: float = 10.0, n: int = 500,
                      resonance_points: int = 6, resonance_width: float = 0.03,
                      refine_on_top: bool = False) -> u.Quantity:
    """A grid of perturber periods: log-spaced plus points packed around resonances.

    Parameters
    ----------
    transit_period : Quantity
        The transiting planet's period.
    low, high : float
        Range as multiples of ``transit_period``.
    n : int
        Total number of periods; with ``refine_on_top`` the number evenly
        spaced in log period, the resonance points coming in addition.
    resonance_points : int
        Points on each side of every resonance in :data:`RESONANCES` (and of
        their inverses, for inner perturbers), within a fractional
        ``resonance_width`` of it.

    Returns
    -------
    Quantity
        Sorted periods (days).
    """
    p = u.Quantity(transit_period, u.day).to_value(u.day)
    ratios = list(RESONANCES) + [1 / r for r in RESONANCES]
    packed = []
    for r in ratios:
        if low < r < high:
            offsets = np.geomspace(resonance_width / 30, resonance_width, resonance_points)
            packed += list(r * (1 + offsets)) + list(r * (1 - offsets))
    packed = np.array([x for x in packed if low <= x <= high])
    base = np.geomspace(low, high, n if refine_on_top else max(n - packed.size, 2))
    return np.unique(np.concatenate([base, packed])) * p * u.day
