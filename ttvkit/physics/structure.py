"""Stellar structure for the finite-shell activity model: Lane–Emden polytropes.

The Lane–Emden equation (Chandrasekhar 1939, *An Introduction to the Study
of Stellar Structure*, ch. IV)

    θ'' + (2/ξ) θ' + θⁿ = 0,   θ(0) = 1, θ'(0) = 0,

is integrated with :func:`scipy.integrate.solve_ivp` (DOP853) from the
series solution θ ≈ 1 − ξ²/6 + nξ⁴/120 near the centre to the surface
θ(ξ₁) = 0, found as a terminal event.  Density ρ ∝ θⁿ, enclosed mass
m(ξ) ∝ −ξ²θ'(ξ).  n = 1.5 models a fully convective star, n = 3 the
radiative Sun-like star (Eddington's standard model); both are crude, and
the results say which was used.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache

import numpy as np
from scipy.integrate import cumulative_trapezoid, solve_ivp

__all__ = ["Polytrope", "polytrope"]


@dataclass(frozen=True)
class Polytrope:
    """A solved polytrope on a radial grid, in units of the star's R and M.

    Attributes
    ----------
    index : float
        Polytropic index n.
    xi1 : float
        First zero of θ (the surface).
    x : ndarray
        r / R on the grid (0 … 1).
    mass : ndarray
        Enclosed mass m(r) / M.
    dm_dx : ndarray
        d(m/M)/d(r/R).
    """

    index: float
    xi1: float
    x: np.ndarray
    mass: np.ndarray
    dm_dx: np.ndarray

    @property
    def gyration_squared(self) -> float:
        """Moment of inertia / (M R²) of the whole star (spherical, (2/3)∫r²dm)."""
        return float(2.0 / 3.0 * np.trapezoid(self.x ** 2 * self.dm_dx, self.x))

    def radius_enclosing(self, mass_fraction: float) -> float:
        """r / R inside which the given fraction of the mass lies."""
        return float(np.interp(mass_fraction, self.mass, self.x))


@lru_cache(maxsize=8)
def polytrope(index: float, points: int = 4000) -> Polytrope:
    """Solve the Lane–Emden equation of index ``index`` (0 ≤ n < 5).

    Parameters
    ----------
    index : float
        Polytropic index n.
    points : int
        Grid points between centre and surface.

    Returns
    -------
    Polytrope

    Examples
    --------
    >>> round(polytrope(1.5).xi1, 4)
    3.6538
    """
    n = float(index)
    if not (0.0 <= n < 5.0):
        raise ValueError(f"polytropic index {n} must be in [0, 5) for a finite star")
    xi0 = 1e-4
    theta0 = 1 - xi0 ** 2 / 6 + n * xi0 ** 4 / 120
    dtheta0 = -xi0 / 3 + n * xi0 ** 3 / 30

    def rhs(xi, y):
        theta = max(y[0], 0.0)
        return [y[1], -theta ** n - 2.0 * y[1] / xi]

    def surface(xi, y):
        return y[0]

    surface.terminal = True
    surface.direction = -1
    sol = solve_ivp(rhs, (xi0, 20.0), [theta0, dtheta0], method="DOP853", rtol=1e-12,
                    atol=1e-14, events=surface, dense_output=True)
    xi1 = float(sol.t_events[0][0])
    xi = np.linspace(0.0, xi1, points)
    xi_eval = np.clip(xi, xi0, xi1)
    theta, dtheta = sol.sol(xi_eval)
    theta = np.clip(theta, 0.0, None)
    theta[0], dtheta[0] = 1.0, 0.0
    dm = xi ** 2 * theta ** n                       # ∝ dm/dξ
    mass = cumulative_trapezoid(dm, xi, initial=0.0)
    total = mass[-1]
    x = xi / xi1
    return Polytrope(n, xi1, x, mass / total, dm * xi1 / total)
