"""A perturbing planet of any period, by direct N-body integration.

The transiting planet's mean ephemeris (T0, P) plus the transit-time
variations that a second planet of mass m′, period P′, eccentricity vector
(e′ cos ω′, e′ sin ω′) and mean longitude λ′ would cause, computed by the
compiled Wisdom–Holman engine (:mod:`ttvkit.physics.nbody`) over the epochs
asked for.  Unlike ``near-resonant-perturber`` (Lithwick, Xie & Wu 2012) it
holds anywhere the pair is stable: in and out of resonance, for inner and
outer perturbers and for eccentric orbits.

Definitions: λ′ is the perturber's mean longitude minus the transiting
planet's, both at the transit of epoch 0 (T0), measured in the orbital
plane from the line of sight; 0 is a conjunction.  The integration starts
half an orbit before the earliest epoch needed with the transiting planet at
osculating period P and transiting at T0 + P·E (its eccentricity and ω from
the System), so the N-body times drift from T0 + P·E by the perturber's
shift of the mean motion.  The term removes that: its contribution is the
N-body times less their weighted straight line over the epochs of the data
it was fitted to (the "anchor"), so T0 and P stay the mean ephemeris, as in
every other hypothesis, and forecasts extend the same line.  Non-integer
epochs (figures) and occultations (epoch + ½) take the variation
interpolated linearly between neighbouring transits: an approximation for
occultations, exact enough for a circular transiting orbit.

Needs the star's mass in the data's :class:`~ttvkit.hypotheses.base.HostContext`
and uses the transiting planet's mass, eccentricity and ω when given
(``HostContext.from_system`` fills them from the System).  Assumptions: two planets, coplanar and edge-on; point masses, no
tides or relativity; the perturber on a fixed Keplerian start; transits are
minimum sky separations.  Each evaluation is a full integration, so fits
take seconds to minutes and sampling minutes to hours.
"""

from __future__ import annotations

import numpy as np

from ttvkit._linear import weighted_lstsq
from ttvkit.constants import MEARTH_PER_MSUN, YEAR_D
from ttvkit.errors import InputError
from ttvkit.hypotheses._periodic import candidate_periods
from ttvkit.hypotheses.base import Derived, Parameter, Term
from ttvkit.physics import nbody

__all__ = ["NBodyPerturber"]

#: Periods of the starting grid (times 4 longitudes, one batched integration at 1 Earth mass).
GRID_PERIODS = 120


class NBodyPerturber(Term):
    """Transit-time variations from an N-body integration of the transiting planet and one perturber."""

    key = "n-body-perturber"
    expensive = True
    assumptions = ("A second planet perturbing the transiting one, integrated directly (Wisdom–Holman map "
                   "with a symplectic corrector): two planets, coplanar edge-on orbits, point masses; the "
                   "transiting planet's eccentricity fixed at the System's.")

    def __init__(self, max_ratio: float = 10.0, min_ratio: float = 0.3):
        self.min_ratio, self.max_ratio = float(min_ratio), float(max_ratio)
        self._anchor = None          # (integer epochs, weights) of the data fitted first

    def parameters(self):
        return (Parameter("perturber_mass", "Mearth", "mass of the perturbing planet"),
                Parameter("perturber_period", "d", "osculating period of the perturber at the start"),
                Parameter("perturber_ecosw", "", "e′ cos ω′ of the perturber"),
                Parameter("perturber_esinw", "", "e′ sin ω′ of the perturber"),
                Parameter("perturber_longitude", "rad", "perturber's mean longitude minus the transiting "
                          "planet's at T0 (0: conjunction)", periodic=2 * np.pi))

    # -- the data the term is anchored to -------------------------------------------------------------
    def _anchor_on(self, data):
        if self._anchor is None:
            if np.any(data.epoch != np.round(data.epoch)):
                raise InputError("the n-body-perturber hypothesis must first see data with integer epochs")
            self._anchor = (np.round(data.epoch).astype(int), 1.0 / data.sigma ** 2)
        return self._anchor

    def _masses(self, data):
        host = data.host
        if not host.star_mass:
            raise InputError("the n-body-perturber hypothesis needs the star's mass (a System with star.mass)")
        omega = np.pi / 2 if host.omega is None else host.omega
        return float(host.star_mass), float(host.companion_mass), float(host.eccentricity), float(omega)

    def bounds(self, data):
        self._anchor_on(data)
        star, *_ = self._masses(data)
        top = 0.02 * star * MEARTH_PER_MSUN          # 20 Jupiter masses per solar mass
        return (np.array([0.0, self.min_ratio * data.period, -0.5, -0.5, 0.0]),
                np.array([top, self.max_ratio * data.period, 0.5, 0.5, 2 * np.pi]))

    # -- the model ----------------------------------------------------------------------------------------
    def _times(self, mass, p_pert, ecosw, esinw, lam, t0, period, data, epochs):
        """N-body transit times (days from t_ref) at integer ``epochs`` for a flat batch; NaN where it fails."""
        star, planet, e_t, w_t = self._masses(data)
        s = mass.size
        e_lo, e_hi = int(epochs.min()), int(epochs.max())
        e_p = np.hypot(ecosw, esinw)
        w_p = np.arctan2(esinw, ecosw)
        m_tr = float(nbody.mean_anomaly_at_transit(e_t, w_t))
        t_start = t0 + period * (e_lo - 0.5)
        lam_start = w_t + m_tr + lam + 2 * np.pi * (t_start - t0) / p_pert
        out = np.full((s, epochs.size), np.nan)
        # skip what cannot be integrated (crossing orbits, bad values) instead of raising
        ok = (np.isfinite(mass + p_pert + e_p + lam + t0 + period) & (mass >= 0) & (p_pert > 0) & (e_p < 1)
              & (period > 0))
        ok[ok] = ~nbody.orbits_overlap(np.column_stack([period[ok], p_pert[ok]]),
                                       np.column_stack([np.full(int(ok.sum()), e_t), e_p[ok]]))
        if not np.any(ok):
            return out
        n = int(ok.sum())
        masses = np.column_stack([np.full(n, star), np.full(n, planet), mass[ok] / MEARTH_PER_MSUN])
        periods = np.column_stack([period[ok], p_pert[ok]])
        ecc = np.column_stack([np.full(n, e_t), e_p[ok]])
        omega = np.column_stack([np.full(n, w_t), w_p[ok]])
        mean = np.column_stack([np.full(n, m_tr - np.pi), lam_start[ok] - w_p[ok]])
        inc = np.full((n, 2), np.pi / 2)
        node = np.zeros((n, 2))
        span = e_hi - e_lo
        tt = nbody.transit_times(masses, periods, ecc, omega, inc, node, mean, (span + 0.75) * float(np.max(period)),
                                 planets=0, max_transits=span + 2, epochs=epochs - e_lo)[:, 0]
        out[ok] = tt[:, epochs - e_lo] + t_start[ok, None]
        return out

    def evaluate(self, p, data, base):
        anchor_epochs, anchor_w = self._anchor_on(data)
        x = data.epoch + data.phase
        lo_e, hi_e = np.floor(x).astype(int), np.ceil(x).astype(int)
        needed = np.unique(np.concatenate([anchor_epochs, lo_e, hi_e]))
        shape = np.broadcast_shapes(*(v.shape for v in list(p.values()) + list(base.values())))[:-1]
        flat = [np.broadcast_to(v, shape + (1,)).reshape(-1) for v in
                (p["perturber_mass"], p["perturber_period"], p["perturber_ecosw"], p["perturber_esinw"],
                 p["perturber_longitude"], base["T0"], base["P"])]
        times = self._times(*flat, data, needed)
        # remove the weighted straight line over the anchor epochs: (T0, P) stay the mean ephemeris
        ia = np.searchsorted(needed, anchor_epochs)
        design = np.column_stack([np.ones(anchor_epochs.size), anchor_epochs])
        coef = weighted_lstsq(design, times[:, ia].T, weights=np.sqrt(anchor_w))   # [2, S]
        ttv = times - (coef[0][:, None] + coef[1][:, None] * needed[None, :])
        i0, i1 = np.searchsorted(needed, lo_e), np.searchsorted(needed, hi_e)
        frac = x - lo_e
        value = ttv[:, i0] * (1 - frac) + ttv[:, i1] * frac
        return value.reshape(shape + (x.size,))

    # -- starting points: a perturber map's best points (data.perturber_seeds), then a coarse grid
    #    and the near-resonant periods, each scaled linearly in mass ------------------------------------
    def guesses(self, data, residuals):
        lo, hi = self.bounds(data)
        from ttvkit.physics.resonance import perturber_periods

        period = data.period
        # the map's kind of grid, coarser: log-spaced plus points packed around the resonances
        ratios = list(perturber_periods(period, self.min_ratio, self.max_ratio, n=GRID_PERIODS,
                                        resonance_points=3).value / period)
        for j in (2, 3):     # near-resonant solutions: a super-period P_j on either side of j:j-1 and (j-1):j
            for p_j in candidate_periods(data, residuals, count=2, shortest=5 * period):
                for sign in (1.0, -1.0):
                    ratios.append(j / ((j - 1) + sign * period / p_j))               # outer perturber
                    ratios.append((j - 1) / (j + sign * period / p_j))               # inner perturber
        ratios = np.array([r for r in ratios if self.min_ratio < r < self.max_ratio and r > 0])
        phases = np.arange(4) * np.pi / 2
        rr, ph = (v.ravel() for v in np.meshgrid(ratios, phases, indexing="ij"))
        one = np.ones_like(rr)
        p = {"perturber_mass": one[:, None], "perturber_period": (rr * period)[:, None],
             "perturber_ecosw": 0 * one[:, None], "perturber_esinw": 0 * one[:, None],
             "perturber_longitude": ph[:, None]}
        base = {"T0": 0 * one[:, None], "P": period * one[:, None]}
        template = self.evaluate(p, data, base)                   # TTV per Earth mass
        w = 1 / data.sigma ** 2
        good = np.all(np.isfinite(template), axis=1)
        template = np.where(good[:, None], template, 0.0)
        uu = template ** 2 @ w
        ur = template @ (w * residuals)
        with np.errstate(divide="ignore", invalid="ignore"):
            scale = np.where(uu > 0, ur / uu, 0.0)
            gain = np.where((uu > 0) & (scale > 0), ur ** 2 / uu, -np.inf)
        order = np.argsort(-gain)
        out = [np.array([np.clip(m, lo[0], 0.5 * hi[0]), period_d, 0.0, 0.0, lam])   # from a perturber map
               for period_d, m, lam in data.perturber_seeds
               if lo[1] < period_d < hi[1] and np.isfinite(m)]
        used = set()
        for i in order:                    # the best phase of each of the six best periods
            if not np.isfinite(gain[i]) or len(used) == 6:
                break
            if rr[i] in used:
                continue
            used.add(rr[i])
            out.append(np.array([np.clip(scale[i], lo[0], 0.5 * hi[0]), rr[i] * period, 0.0, 0.0, ph[i]]))
        return out or [np.array([1.0, 2.1 * period, 0.0, 0.0, 0.0])]

    def derived(self, p, data):
        import astropy.units as u

        from ttvkit.physics.companions import mutual_hill_separation

        star, planet, *_ = self._masses(data)
        mass = p["perturber_mass"][..., 0]
        ratio = p["perturber_period"][..., 0] / p["P"][..., 0]
        ecc = np.hypot(p["perturber_ecosw"][..., 0], p["perturber_esinw"][..., 0])
        a_t = ((star + planet) * (p["P"][..., 0] / YEAR_D) ** 2) ** (1 / 3)
        sep = mutual_hill_separation(star * u.Msun, planet * u.Msun, a_t * u.AU, mass * u.Mearth,
                                     a_t * ratio ** (2 / 3) * u.AU)
        return {
            "period_ratio": Derived(ratio, "", "perturber period / transiting planet period"),
            "perturber_eccentricity": Derived(ecc, "", "e′"),
            "hill_separation": Derived(np.asarray(sep), "", "orbit separation in mutual Hill radii (Gladman 1993)"),
        }
