"""A batched N-body transit-time engine: a corrected Wisdom–Holman map in Jacobi coordinates.

The second-order symplectic map of Wisdom & Holman (1991, AJ 102, 1528) in
Jacobi coordinates: each step is a half interaction kick, a Kepler drift of
every Jacobi orbit (μ_i = G M_i, M_i the mass interior to and including
body i) by Gauss's f and g functions, and a half kick.  The kick is the
Jacobi-frame acceleration less its Kepler part, the way WHFast (Rein & Tamayo
2015, MNRAS 452, 376) computes it.  (A democratic-heliocentric splitting was
tried first: its star–planet splitting error left 1–8 s offsets against
DOP853 at P/20, where Jacobi coordinates integrate a lone planet exactly.)
The map runs compiled per system with numba (:mod:`._nbody_compiled`), a
batch of systems on threads; :func:`reference_transit_times` is the plain
reference (scipy's DOP853).  Elements may be heliocentric or Jacobi
(``frame=``).

Transits: after each step the sky-plane function g = x·vx + y·vy of each
planet relative to the star (observer on +z) is checked for a sign change
from − to + with the planet in front (z > 0); the time of minimum sky
separation is refined by Newton's method on g, advancing the whole system
from the step's start by a map step of the trial length, to 1e-10 d.  These are
minimum-separation times, not batman's ``t0`` (which differs for eccentric
orbits).  An optional light-travel-time correction adds the delay of the
star's barycentric motion along the line of sight.

Accuracy: without help a Wisdom–Holman map at P/20 drifts in mean motion
by O(εh²) (ε the planet-to-star mass ratio) -- about 2.5 s per orbit for
a Jupiter pair, measured against DOP853.  Two standard remedies of Wisdom,
Holman & Touma (1996, Fields Inst. Commun. 10, 217) are used: a symplectic
corrector (real coordinates are mapped to the map's own at the start and
back at every transit; here fitted beyond its Taylor terms, see
:func:`_corrector_coefficients`) removes the O(εh²), O(εh⁴) and O(εh⁶)
terms, and a modified kick removes the O(ε²h²) term.  Measured with the
default steps on 1000 random two-planet systems (1e-3 M☉ at 10 d,
perturbers of 1e-5 to 1e-4 M☉ at 1.5–3.5× the period; the benchmark):
worst transit-time difference 0.78 s over 500 orbits on the 30 checked
against DOP853, the ten hardest among them.

Units: AU, days, solar masses.  Step: P_inner/20 by default, smaller for
eccentric orbits so periapse is resolved: P_inner (1 − e)^{3/2}/20 (after
Rauch & Holman 1999, AJ 117, 1087), for close pairs and for pairs near a
first-order resonance (:func:`default_step`).  :func:`reference_transit_times`
integrates the same systems with scipy's DOP853 (rtol 1e-12) for the tests.
"""

from __future__ import annotations

import functools

import numpy as np

from ttvkit.errors import InputError

__all__ = ["GAUSS_G", "elements_to_cartesian", "transit_times", "reference_transit_times", "default_step",
           "energy", "orbits_overlap", "mean_anomaly_at_transit", "STEPS_PER_ORBIT", "FRAMES"]

#: G in AU³ / (M☉ d²) (IAU k = 0.01720209895, k²).
GAUSS_G = 0.01720209895 ** 2


def _check(masses, period, ecc):
    masses = np.asarray(masses, float)
    if masses.ndim != 2 or masses.shape[1] < 2:
        raise InputError("masses must be shaped [system, body] with the star first")
    if np.any(~np.isfinite(masses)) or np.any(masses[:, 0] <= 0) or np.any(masses[:, 1:] < 0):
        raise InputError("masses must be finite, the star's positive and the planets' non-negative")
    if np.any(~np.isfinite(period)) or np.any(np.asarray(period) <= 0):
        raise InputError("orbital periods must be positive")
    if np.any((np.asarray(ecc) < 0) | (np.asarray(ecc) >= 1)):
        raise InputError("eccentricities must be in [0, 1): unbound orbits cannot be integrated")
    if np.any(orbits_overlap(period, ecc)):
        raise InputError("overlapping orbits: an inner apocentre reaches an outer pericentre")
    return masses


def orbits_overlap(period, ecc) -> np.ndarray:
    """Per system [S]: does an inner apocentre reach the next outer pericentre?

    Semi-major axes scale as P^{2/3} (a common central mass), so periods
    and eccentricities shaped [S, N] suffice.
    """
    p = np.asarray(period, float)
    e = np.asarray(ecc, float)
    order = np.argsort(p, axis=1)
    ps, es = (np.take_along_axis(x, order, axis=1) for x in (p, e))
    a = ps ** (2 / 3)
    return np.any(a[:, :-1] * (1 + es[:, :-1]) >= a[:, 1:] * (1 - es[:, 1:]), axis=1)


def mean_anomaly_at_transit(ecc, omega):
    """Mean anomaly at which a planet transits (ω + f = π/2, observer on +z; radians)."""
    f = np.pi / 2 - np.asarray(omega, float)
    E = 2 * np.arctan2(np.sqrt(1 - ecc) * np.sin(f / 2), np.sqrt(1 + ecc) * np.cos(f / 2))
    return E - ecc * np.sin(E)


def elements_to_cartesian(mu, period, ecc, omega, inc, node, mean_anomaly):
    """Heliocentric position and velocity (AU, AU/d) from elements (angles in radians).

    Observer on +z; a transit (planet in front) happens at ω + f = π/2.
    """
    from ttvkit.physics.kepler import solve_kepler, true_anomaly

    a = (mu * (period / (2 * np.pi)) ** 2) ** (1 / 3)
    E = solve_kepler(np.mod(mean_anomaly, 2 * np.pi), ecc)
    f = true_anomaly(E, ecc)
    r = a * (1 - ecc * np.cos(E))
    h = np.sqrt(mu * a * (1 - ecc ** 2))
    cO, sO, ci, si = np.cos(node), np.sin(node), np.cos(inc), np.sin(inc)
    u = omega + f
    cu, su = np.cos(u), np.sin(u)
    pos = np.stack([r * (cO * cu - sO * su * ci), r * (sO * cu + cO * su * ci), r * su * si], axis=-1)
    vr = mu / h * ecc * np.sin(f)
    vt = h / r
    vel = np.stack([vr * (cO * cu - sO * su * ci) - vt * (cO * su + sO * cu * ci),
                    vr * (sO * cu + cO * su * ci) - vt * (sO * su - cO * cu * ci),
                    vr * su * si + vt * cu * si], axis=-1)
    return pos, vel


class _Jacobi:
    """Jacobi coordinates of a batch (planets ordered inner to outer)."""

    def __init__(self, m):
        self.m = m                                    # [S, B], star first
        self.cum = np.cumsum(m, axis=1)               # M_i = m_0 + ... + m_i
        self.mu = GAUSS_G * self.cum[:, 1:]           # Kepler μ_i = G M_i (Wisdom & Holman 1991)

    def to_jacobi(self, x):
        com = np.cumsum(self.m[..., None] * x, axis=1) / self.cum[..., None]   # X_i
        return x[:, 1:] - com[:, :-1]

    def from_jacobi(self, r):
        n = r.shape[1]
        x = np.empty((r.shape[0], n + 1, 3))
        com = np.zeros((r.shape[0], 3))                                       # X_N = 0
        for i in range(n, 0, -1):
            prev = com - (self.m[:, i] / self.cum[:, i])[:, None] * r[:, i - 1]
            x[:, i] = prev + r[:, i - 1]
            com = prev
        x[:, 0] = com
        return x


#: The modified kick's coefficient: kicking with H_I + (h²/24){H_I,{H_I,H_K}}
#: cancels the O(ε²h²) term left by the kick–drift–kick map and its
#: corrector (the "modified kick" of Wisdom, Holman & Touma 1996); since
#: {H_I,{H_I,H_K}} = Σ m'|a|², its gradient adds (h²/12)·(∂a/∂r)·a to the
#: kick acceleration.
_KAPPA = 1 / 12


def _corrector_coefficients(pairs: int = 4, theta_max: float = 3.0, exact: int = 3) -> list[tuple[float, float]]:
    """(α_i, β_i) of the corrector's stage pairs: drifts a_i = α_i h, kicks b_i = β_i h.

    To first order in the interaction the kick–drift–kick map's log is
    h(A + (τ/2)coth(τ/2) B), τ = h ad_A (the Baker–Campbell–Hausdorff
    series of a symmetric splitting; A the Kepler flow, B the interaction).
    A change of coordinates exp(χ) with χ = h ψ(τ) B,
    ψ(τ) = [(τ/2)coth(τ/2) − 1]/τ = τ/12 − τ³/720 + τ⁵/30240 − …, turns it
    into h(A + B); stage pairs X(a, b)·X(−a, −b), X(a, b) =
    drift(a)·kick(b)·drift(−a), build exp(Σ 2b_i sinh(a_i ad_A) B)
    (the construction of Wisdom, Holman & Touma 1996, Fields Inst. Commun.
    10, 217).  On an oscillation of frequency ν the eigenvalue of τ is
    iθ, θ = hν, so the target is Σ 2β_i sin(α_i θ) = ψ(iθ)/i.  With
    α_i = 1/2, 1, …, the β_i here match the first ``exact`` Taylor terms
    exactly (Σβα = 1/24, Σβα³ = −1/240, Σβα⁵ = 1/504: a corrector of order
    2·exact + 1) and fit the rest in relative least squares for
    θ ≤ ``theta_max``, which covers the harmonics that matter at P/20
    (θ = 0.31 per harmonic of the inner orbit).  Measured against DOP853
    at P/20: the third-order Taylor corrector left an O(εh⁴) drift of
    ~0.08 s per orbit for a Neptune-mass perturber, this one 0.003.
    """
    alpha = 0.5 * np.arange(1, pairs + 1)
    theta = np.linspace(1e-3, theta_max, 600)
    target = -(0.5 * theta / np.tan(0.5 * theta) - 1) / theta
    design = 2 * np.sin(np.outer(theta, alpha)) / target[:, None]
    constraints = np.array([alpha ** (2 * k + 1) for k in range(exact)])
    values = np.array([1 / 24, -1 / 240, 1 / 504][:exact])
    kkt = np.block([[2 * design.T @ design, constraints.T], [constraints, np.zeros((exact, exact))]])
    rhs = np.concatenate([2 * design.sum(axis=0), values])
    beta = np.linalg.solve(kkt, rhs)[:pairs]
    return list(zip(alpha.tolist(), beta.tolist()))


_CORRECTOR = _corrector_coefficients()

#: The corrector that takes the map's coordinates back to real ones at each
#: transit: one stage pair, exact to third order (Σβα = 1/24).  Only the
#: corrector applied at the start decides how the map's mean motions drift (a
#: wrong starting point is a wrong semi-major axis, which accumulates); the
#: one at an output moves only that output, by the truncation of ψ (its τ³
#: term, −1/720, on an O(εh²) correction).  Measured against the references
#: of the tests (DOP853 grid and the two hardest benchmark systems at the
#: default step, REBOUND IAS15 over 1,000 orbits): worst differences equal to
#: or below those with the four-pair corrector (e.g. 0.0151 vs 0.0155 s,
#: 0.1786 vs 0.1827 s); outputs move by ≤ 0.075 s on a Jupiter + Neptune pair
#: near 2:1 at a fixed P/20 (which is 1.4 s off DOP853 either way), at a
#: third of the cost of a transit's refinement.
_OUTPUT_CORRECTOR = _corrector_coefficients(pairs=1, exact=1)


@functools.lru_cache(maxsize=2)
def _corrector_ops(inverse: bool) -> tuple[tuple[str, float], ...]:
    """The corrector as a sequence of drifts ("d") and kicks ("k"), lengths in units of the step.

    The forward one is :data:`_CORRECTOR`; the inverse, applied at outputs,
    is that of :data:`_OUTPUT_CORRECTOR`.  Consecutive Kepler drifts are
    merged (two-body flows compose exactly).
    """
    ops = []
    for alpha, beta in (_OUTPUT_CORRECTOR if inverse else _CORRECTOR):
        ops += [("d", alpha), ("k", beta), ("d", -alpha), ("d", -alpha), ("k", -beta), ("d", alpha)]
    if inverse:
        ops = [(kind, -x) for kind, x in reversed(ops)]
    merged = []
    for kind, x in ops:
        if merged and kind == "d" == merged[-1][0]:
            merged[-1] = ("d", merged[-1][1] + x)
        else:
            merged.append((kind, x))
    return tuple(merged)


#: Steps per inner orbit (the usual P/20; with the corrector and the modified
#: kick it keeps 500 orbits within 1 s of DOP853, measured).
STEPS_PER_ORBIT = 20


#: Closest fractional spacing (a_out − a_in)/a_in at which P/20 is kept; closer
#: pairs get a proportionally shorter step, since the interaction's harmonics
#: at conjunction reach ~1/spacing times the synodic frequency and the
#: corrector is fitted for hν ≤ 3.  Measured on the 1000 benchmark systems
#: (a Jupiter at 10 d, 3–33 Earth-mass perturbers at 1.5–3.5×): with 0.5,
#: six were 1–3.6 s off DOP853 over 500 orbits (close pairs near 8:5, 11:7,
#: 7:4 with TTVs of 200–700 s); with 0.8 the worst was 0.78 s.
CLOSE_SPACING = 0.8


#: Pairs within this fractional distance Δ = |(P_out/P_in)(j−1)/j − 1| of
#: the 2:1, 3:2 or 4:3 resonance get RESONANT_STEP_FACTOR of the step.
#: Measured against DOP853 on the 114 of 1000 benchmark systems within 4% of
#: a resonance (a Jupiter at 10 d, 3–33 Earth-mass perturbers): at P/20 the
#: worst was 15 s (a libration with 10-hour TTVs, Δ = 0.011), at 0.35 of it
#: 0.65 s; beyond Δ = 0.03 P/20 stayed within 0.3 s.
RESONANCE_WINDOW = 0.03
RESONANT_STEP_FACTOR = 0.35


def default_step(period, ecc) -> np.ndarray:
    """Step per system (days): P_inner (1 − e_max)^{3/2} / STEPS_PER_ORBIT, shortened for close pairs.

    The factor min(1, δ/CLOSE_SPACING) with δ the closest fractional spacing
    of semi-major axes of adjacent planets shortens the step for tightly
    packed pairs, and pairs within RESONANCE_WINDOW of a first-order
    resonance (2:1, 3:2, 4:3) get at most RESONANT_STEP_FACTOR of it.
    """
    p = np.sort(np.asarray(period, float), axis=1)
    e = np.asarray(ecc, float)
    h = p[:, 0] * (1 - np.max(e, axis=1)) ** 1.5 / STEPS_PER_ORBIT
    if p.shape[1] > 1:
        ratio = p[:, 1:] / p[:, :-1]
        spacing = np.min(ratio ** (2 / 3) - 1, axis=1)
        factor = np.minimum(1.0, spacing / CLOSE_SPACING)
        distance = np.min([np.abs(ratio * (j - 1) / j - 1) for j in (2, 3, 4)], axis=(0, 2))
        factor = np.where(distance < RESONANCE_WINDOW, np.minimum(factor, RESONANT_STEP_FACTOR), factor)
        h = h * factor
    return h


FRAMES = ("heliocentric", "jacobi")


def _setup(masses, period, ecc, omega, inc, node, mean_anomaly, frame: str = "heliocentric"):
    """Barycentric positions and velocities [S, B, 3] from osculating elements.

    ``frame="heliocentric"``: each planet's elements are relative to the
    star with μ = G(M_* + m_i).  ``frame="jacobi"``: Jacobi elements, each
    planet (in order of period) relative to the centre of mass of the star
    and the planets inside it, with μ_i = G(M_* + m_1 + … + m_i) -- the
    convention of the Jacobi elements of Agol et al. (2021, PSJ 2, 1).
    """
    if frame not in FRAMES:
        raise InputError(f"unknown frame {frame!r}: use 'heliocentric' or 'jacobi'")
    ms = masses[:, :1]
    mp = masses[:, 1:]
    if frame == "jacobi":
        order = np.argsort(period, axis=1)
        els = [np.take_along_axis(np.asarray(e, float), order, axis=1)
               for e in (period, ecc, omega, inc, node, mean_anomaly)]
        sorted_m = np.concatenate([ms, np.take_along_axis(mp, order, axis=1)], axis=1)
        jac = _Jacobi(sorted_m)
        r, v = elements_to_cartesian(jac.mu, *els)
        xs, us = jac.from_jacobi(r), jac.from_jacobi(v)
        x, u = np.empty_like(xs), np.empty_like(us)
        x[:, 0], u[:, 0] = xs[:, 0], us[:, 0]
        rows = np.arange(masses.shape[0])[:, None]
        x[rows, order + 1], u[rows, order + 1] = xs[:, 1:], us[:, 1:]
        return x, u
    q, v = elements_to_cartesian(GAUSS_G * (ms + mp), period, ecc, omega, inc, node, mean_anomaly)
    total = masses.sum(axis=1, keepdims=True)
    x_star = -np.einsum("sn,snk->sk", mp, q) / total
    v_star = -np.einsum("sn,snk->sk", mp, v) / total
    x = np.concatenate([x_star[:, None], q + x_star[:, None]], axis=1)
    u = np.concatenate([v_star[:, None], v + v_star[:, None]], axis=1)
    return x, u


def energy(x, u, masses) -> np.ndarray:
    """Total energy of each system from barycentric positions and velocities."""
    kin = 0.5 * np.einsum("sb,sbk,sbk->s", masses, u, u)
    d = x[:, None] - x[:, :, None]
    r = np.linalg.norm(d, axis=-1)
    iu = np.triu_indices(masses.shape[1], 1)
    pair = (masses[:, :, None] * masses[:, None, :])[:, iu[0], iu[1]]
    return kin - GAUSS_G * np.sum(pair / r[:, iu[0], iu[1]], axis=1)


def _wanted(shape, order, planets, epochs, k):
    """Which planets (Jacobi order) and which running transit indices to time."""
    wanted = np.ones(shape, bool)
    if planets is not None:
        chosen = np.zeros(shape, bool)
        chosen[:, np.atleast_1d(planets)] = True
        wanted = np.take_along_axis(chosen, order, axis=1)
    want_epoch = np.ones(k, bool)
    if epochs is not None:
        epochs = np.asarray(epochs, int)
        want_epoch[:] = False
        want_epoch[epochs[(epochs >= 0) & (epochs < k)]] = True
    return wanted, want_epoch


def transit_times(masses, period, ecc, omega, inc, node, mean_anomaly, t_end: float, dt=None,
                  light_time: bool = False, max_transits: int | None = None, return_state: bool = False,
                  corrector: bool = True, planets=None, epochs=None, threads: bool = True,
                  frame: str = "heliocentric"):
    """Transit (minimum sky-separation) times of every planet of every system.

    Parameters
    ----------
    masses : array [S, N+1]
        Star first (M☉).
    period, ecc, omega, inc, node, mean_anomaly : arrays [S, N]
        Osculating elements at t = 0 (days, radians), in ``frame``.
    t_end : float
        Integrate from 0 to ``t_end`` (days).
    dt : float or array [S], optional
        Step per system (default :func:`default_step`).
    light_time : bool
        Add the light-travel time of the star's barycentric motion.
    max_transits : int, optional
        Size of the output's last axis.
    return_state : bool
        Also return the final (barycentric positions, velocities, masses
        sorted as integrated, time reached) for energy checks.
    corrector : bool
        Apply the symplectic corrector (default): real coordinates are
        mapped to the map's own at the start and back at every transit,
        which removes the O(εh²) mean-motion error.
    planets : int or sequence of int, optional
        Only these planets' transits are timed (the others are NaN); by
        default all.  Timing costs a refinement per transit.
    epochs : sequence of int, optional
        Running transit indices (0 the first transit after t = 0) to time;
        the others are only counted and are NaN, which saves most of the
        cost for sparse data.
    threads : bool
        Let the compiled engine run systems on several threads.
    frame : {"heliocentric", "jacobi"}
        The coordinates the elements are osculating in (see :func:`_setup`).

    Returns
    -------
    ndarray [S, N, K]
        Transit times (days), NaN-padded; planets that never transit are all
        NaN, and so is every planet of a system in which an orbit became
        unbound (a close encounter).
    """
    from ttvkit.physics import _nbody_compiled

    masses = _check(masses, period, ecc)
    els = [np.asarray(x, float) for x in (period, ecc, omega, inc, node, mean_anomaly)]
    x, u = _setup(masses, *els, frame=frame)
    order = np.argsort(els[0], axis=1)                     # Jacobi: inner planet first
    rows = np.arange(masses.shape[0])[:, None]
    x = np.concatenate([x[:, :1], x[rows, order + 1]], axis=1)
    u = np.concatenate([u[:, :1], u[rows, order + 1]], axis=1)
    masses = np.concatenate([masses[:, :1], np.take_along_axis(masses[:, 1:], order, axis=1)], axis=1)
    period_sorted = np.take_along_axis(els[0], order, axis=1)
    jac = _Jacobi(masses)
    r, v = jac.to_jacobi(x), jac.to_jacobi(u)
    k = max_transits or int(np.ceil(t_end / np.min(els[0]))) + 2
    wanted, want_epoch = _wanted(period_sorted.shape, order, planets, epochs, k)
    ecc_sorted = np.take_along_axis(els[1], order, axis=1)
    hs = (default_step(period_sorted, ecc_sorted) if dt is None
          else np.broadcast_to(np.asarray(dt, float), (masses.shape[0],)))
    steps = np.ceil(t_end / hs).astype(int)
    out, r_end, v_end = _nbody_compiled.integrate(masses, r, v, hs, steps, wanted, want_epoch, light_time,
                                                  corrector, _corrector_ops(False), _corrector_ops(True),
                                                  _KAPPA, threads=threads)
    out[out > t_end] = np.nan                 # the last step may run past t_end
    out = np.take_along_axis(out, np.argsort(order, axis=1)[..., None], axis=1)
    if return_state:
        return out, (jac.from_jacobi(r_end), jac.from_jacobi(v_end), masses, hs * steps)
    return out


def reference_transit_times(masses, period, ecc, omega, inc, node, mean_anomaly, t_end: float,
                            rtol: float = 1e-12, frame: str = "heliocentric") -> list:
    """The plain reference: each system integrated with scipy's DOP853 in barycentric coordinates.

    Returns, per system, a list (per planet) of transit-time arrays.
    """
    from scipy.integrate import solve_ivp

    masses = _check(masses, period, ecc)
    xs, us = _setup(masses, *(np.asarray(x, float) for x in (period, ecc, omega, inc, node, mean_anomaly)),
                    frame=frame)
    results = []
    for s in range(masses.shape[0]):
        m = masses[s]
        n = m.size
        x, v = xs[s], us[s]

        def rhs(t, y, m=m, n=n):
            pos = y[: 3 * n].reshape(n, 3)
            d = pos[None, :, :] - pos[:, None, :]
            r3 = np.einsum("ijk,ijk->ij", d, d) ** 1.5
            np.fill_diagonal(r3, np.inf)
            acc = GAUSS_G * np.einsum("j,ijk,ij->ik", m, d, 1 / r3)
            return np.concatenate([y[3 * n:], acc.ravel()])

        events = []
        for j in range(1, n):
            def ev(t, y, j=j, n=n):
                rel = y[3 * j:3 * j + 3] - y[:3]
                vrel = y[3 * n + 3 * j:3 * n + 3 * j + 3] - y[3 * n:3 * n + 3]
                return rel[0] * vrel[0] + rel[1] * vrel[1]
            ev.direction = 1
            events.append(ev)
        sol = solve_ivp(rhs, (0, t_end), np.concatenate([x.ravel(), v.ravel()]), method="DOP853", rtol=rtol,
                        atol=1e-14, events=events)
        per = []
        for j, (tj, yj) in enumerate(zip(sol.t_events, sol.y_events)):
            front = (yj[:, 3 * (j + 1) + 2] - yj[:, 2]) > 0 if len(tj) else np.array([], bool)
            per.append(np.asarray(tj)[front])
        results.append(per)
    return results
