"""A close binary's period changing steadily: conservative mass transfer, or magnetic braking.

Both change the period at a constant rate over a timing baseline, so their
O−C is the same parabola as :class:`~ttvkit.hypotheses.ephemerides.OrbitalDecay`
(T0 + P·E + ½ (dP/dE) E²): the data cannot tell them apart, the physics of
the two stars can (:mod:`ttvkit.diagnosis.checks`).  They differ in what
they derive from dP/dE and in what they assume.

* ``mass-transfer``: conservative transfer, Ṗ/P = 3 Ṁ (1/M_d − 1/M_a)
  (:func:`ttvkit.physics.binaries.period_change_from_transfer`; derived from
  the conservation of J and M, checked against Hilditch 2001).  Derived:
  the transfer rate Ṁ **from the lighter star to the heavier one**; a
  negative rate means transfer from the heavier star to the lighter (the
  period then shrinks).
* ``magnetic-braking``: a convective star's magnetised wind takes angular
  momentum, the tides take it from the orbit, the period shrinks.  Derived:
  the orbital angular-momentum loss rate J̇ = (Ṗ/P) J_orb / 3 (the stars'
  spins neglected here; the check counts them).

Neither is in the default comparison of a planet; ``diagnose`` adds them
when the system file describes both stars (``[other_star]``).
"""

from __future__ import annotations

import numpy as np

from ttvkit.constants import DAY_S, G_SI, MSUN_KG, YEAR_D
from ttvkit.hypotheses.base import Derived, TimingData
from ttvkit.hypotheses.ephemerides import OrbitalDecay

__all__ = ["MassTransfer", "MagneticBraking", "BINARY_HYPOTHESES"]

#: Added to the comparison when the system is a binary with both stars described.
BINARY_HYPOTHESES = ("mass-transfer", "magnetic-braking")


def _relative_rate_per_year(p, _data):
    """(Ṗ/P) in 1/yr from dP/dE (days per epoch) and P (days): Ṗ = (dP/dE)/P, dimensionless."""
    pdot = p["dP_dE"][..., 0] / p["P"][..., 0]              # s/s
    return pdot / p["P"][..., 0] * YEAR_D                    # 1/yr


def _masses(data: TimingData):
    ctx = data.host
    if ctx.star_mass is None or not ctx.companion_mass > 0:
        return None
    return ctx.star_mass, ctx.companion_mass


class MassTransfer(OrbitalDecay):
    """Conservative mass transfer between the two stars: a constant Ṗ of either sign."""

    key = "mass-transfer"
    assumptions = ("Conservative mass transfer (no mass or angular momentum leaves the binary) at a "
                   "constant rate between two point masses on a circular orbit: Ṗ/P = 3 Ṁ (1/M_donor − "
                   "1/M_accretor). The period grows when the lighter star gives mass to the heavier.")

    def derived(self, p, data):
        out = {"dP_dt": super().derived(p, data)["dP_dt"]}
        masses = _masses(data)
        if masses is None:
            return out
        lighter, heavier = min(masses), max(masses)
        factor = 3 * (1 / lighter - 1 / heavier)                 # 1/M☉
        rate = _relative_rate_per_year(p, data)
        with np.errstate(divide="ignore", invalid="ignore"):
            mdot = rate / factor if factor > 0 else np.full_like(rate, np.nan)
        out["transfer_rate"] = Derived(mdot, "Msun/yr", "conservative transfer rate from the lighter star to "
                                       "the heavier (negative: from the heavier to the lighter)")
        return out


class MagneticBraking(OrbitalDecay):
    """Magnetic braking of a synchronised convective star: the period shrinks at a constant rate."""

    key = "magnetic-braking"
    assumptions = ("A convective star, spun in step with the orbit by tides, loses angular momentum in a "
                   "magnetised wind (Rappaport, Verbunt & Joss 1983, ApJ 275, 713): the tides take it from "
                   "the orbit, so the period only shrinks. Circular orbit, point masses, a constant rate "
                   "over the baseline.")

    def derived(self, p, data):
        out = {"dP_dt": super().derived(p, data)["dP_dt"]}
        masses = _masses(data)
        if masses is None:
            return out
        m1, m2 = (m * MSUN_KG for m in masses)
        period_s = p["P"][..., 0] * DAY_S
        j_orb = m1 * m2 * (G_SI ** 2 * period_s / (2 * np.pi * (m1 + m2))) ** (1 / 3)     # kg m² s⁻¹
        rate = _relative_rate_per_year(p, data) / (YEAR_D * DAY_S)                     # 1/s
        out["angular_momentum_loss"] = Derived(rate * j_orb / 3, "N m", "orbital angular-momentum change "
                                               "rate J̇ = (Ṗ/P) J_orb/3 (negative: lost)")
        return out
