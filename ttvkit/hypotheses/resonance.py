"""A perturbing planet near a first-order resonance (Lithwick, Xie & Wu 2012).

Near the j:j−1 resonance the transiting planet's TTV is a sinusoid at the
super-period P_j = 1/abs(j/P′ − (j−1)/P) (perturber outside) with a complex
amplitude, fitted here as its sine and cosine parts (LXW 2012, ApJ 761,
122).  The perturber's period P′ is the fitted parameter; j is fixed per
hypothesis (``NearResonantPerturber(j=3)``), and so is the side of the
perturber (``inside=True`` when the transiting planet is the outer one).

Derived: the super-period, abs(V), Δ, and, for **zero free eccentricity**,
the perturber's mass ratio μ′ = abs(V) π j^{2/3} (j−1)^{1/3} abs(Δ) / (P abs(f))
(outside) or μ = abs(V) π j abs(Δ) / (P abs(g)) (inside), with f, g at the
actual period ratio; in Jupiter masses when the host mass is known.
Assumptions: coplanar, nearly circular orbits, close to (not in) the
resonance, so that only the resonant terms matter; a free eccentricity would
make the mass smaller or larger (the mass–eccentricity degeneracy of LXW).
"""

from __future__ import annotations

import numpy as np

from ttvkit.constants import DAY_S, MJUP_PER_MSUN
from ttvkit.hypotheses._periodic import amplitude_limit, candidate_periods, longer_than_baseline, sinusoid_at
from ttvkit.hypotheses.base import Derived, Parameter, Term
from ttvkit.physics.resonance import normalised_distance, resonance_coefficients

__all__ = ["NearResonantPerturber"]



class NearResonantPerturber(Term):
    """Sinusoidal TTV at the super-period of a j:j−1 near-resonant perturber."""

    key = "near-resonant-perturber"     # each instance names its resonance, e.g. (j=3)
    assumptions = ("A perturbing planet near (not in) a first-order resonance, coplanar and nearly "
                   "circular orbits; the mass quoted assumes zero free eccentricity.")

    def __init__(self, j: int = 2, inside: bool = False, max_distance: float = 0.1):
        if int(j) != j or j < 2:
            raise ValueError("the resonance index j must be an integer >= 2")
        self.j = int(j)
        self.inside = bool(inside)
        self.max_distance = float(max_distance)
        side = "inner" if inside else "outer"
        self.key = f"near-resonant-perturber(j={self.j}{', inner' if inside else ''})"
        self._side = side

    def parameters(self):
        return (Parameter("ttv_sin_amplitude", "s", "sine part of the complex TTV amplitude", DAY_S),
                Parameter("ttv_cos_amplitude", "s", "cosine part of the complex TTV amplitude", DAY_S),
                Parameter("perturber_period", "d", f"period of the {self._side} perturber"))

    def _ratio(self):
        j = self.j
        return (j - 1) / j if self.inside else j / (j - 1)

    def bounds(self, data):
        limit = amplitude_limit(data, data.linear_residuals()) / DAY_S
        centre = self._ratio() * data.period
        return (np.array([-limit, -limit, centre * (1 - self.max_distance)]),
                np.array([limit, limit, centre * (1 + self.max_distance)]))

    def searched_frequencies(self, data):
        # the super-frequency runs from 0 (exact commensurability) to its value at the bounds
        lo, hi = self.bounds(data)
        return max(1.0 / self._super_period(data.period, lo[2]), 1.0 / self._super_period(data.period, hi[2]))

    def _super_period(self, p_transit, p_perturber):
        j = self.j
        if self.inside:
            return 1.0 / np.abs(j / p_transit - (j - 1) / p_perturber)
        return 1.0 / np.abs(j / p_perturber - (j - 1) / p_transit)

    def guesses(self, data, residuals):
        j, period = self.j, data.period
        lo, hi = self.bounds(data)[0][2], self.bounds(data)[1][2]
        out = []
        # the shortest super-period within the allowed distance from resonance
        shortest = max(3 * period, self._ratio() * period / (j * self.max_distance))
        for p_j in candidate_periods(data, residuals, shortest=shortest):
            for sign in (1.0, -1.0):
                if self.inside:
                    p_pert = (j - 1) / (j / period + sign / p_j)
                else:
                    p_pert = j / ((j - 1) / period + sign / p_j)
                if lo < p_pert < hi:
                    a, b = sinusoid_at(data, residuals, p_j)
                    out.append(np.array([a / DAY_S, b / DAY_S, p_pert]))
        return out or [np.array([0.0, 0.0, self._ratio() * period * (1 + 0.5 * self.max_distance)])]

    def evaluate(self, p, data, base):
        p_j = self._super_period(base["P"], p["perturber_period"])
        arg = 2 * np.pi * base["P"] * (data.epoch + data.phase) / p_j
        return p["ttv_sin_amplitude"] * np.sin(arg) + p["ttv_cos_amplitude"] * np.cos(arg)

    def derived(self, p, data):
        period = p["P"][..., 0]
        p_pert = p["perturber_period"][..., 0]
        amp = np.hypot(p["ttv_sin_amplitude"][..., 0], p["ttv_cos_amplitude"][..., 0]) * DAY_S
        j = self.j
        inner, outer = (p_pert, period) if self.inside else (period, p_pert)
        delta = normalised_distance(inner, outer, j)
        alpha = float(np.median((inner / outer) ** (2 / 3)))
        f, g = resonance_coefficients(j, alpha)
        if self.inside:
            mu = amp * np.pi * j * np.abs(delta) / (period * DAY_S * abs(g))
        else:
            mu = amp * np.pi * j ** (2 / 3) * (j - 1) ** (1 / 3) * np.abs(delta) / (period * DAY_S * abs(f))
        out = {
            "super_period": Derived(self._super_period(period, p_pert), "d", "period of the TTV"),
            "ttv_amplitude": Derived(amp, "s", "abs(V), the TTV semi-amplitude"),
            "resonance_distance": Derived(delta, "", "Δ = (P_out/P_in)(j−1)/j − 1"),
            "perturber_mass_ratio": Derived(mu, "", "perturber mass / star mass for zero free eccentricity"),
        }
        host = data.host.host_mass
        if host:
            out["perturber_mass"] = Derived(mu * host * MJUP_PER_MSUN, "Mjup",
                                            "perturber mass for zero free eccentricity")
        return out

    def validity(self, p, data):
        """Valid for a super-period shorter than the baseline and abs(Δ) outside the resonance width.

        Lithwick, Xie & Wu (2012, ApJ 761, 122) require the pair to be near,
        not in, resonance; the resonance width in Δ scales as μ^{2/3} (their
        Section 2; from memory), so abs(Δ) must exceed μ^{2/3} of the implied
        perturber.
        """
        d = self.derived(p, data)
        reason = longer_than_baseline(float(np.ravel(d["super_period"].values)[0]), data, "the super-period")
        if reason:
            return reason
        delta = abs(float(np.ravel(d["resonance_distance"].values)[0]))
        width = float(np.ravel(d["perturber_mass_ratio"].values)[0]) ** (2 / 3)
        if delta <= width:
            return (f"abs(Δ) = {delta:.3g} lies inside the resonance width μ^(2/3) = {width:.3g} of the implied "
                    "perturber: the near-resonant formula (Lithwick, Xie & Wu 2012) does not hold in resonance")
        return None
