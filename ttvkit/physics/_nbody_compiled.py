"""The corrected Wisdom–Holman map of :mod:`ttvkit.physics.nbody`, compiled per system with numba.

(A batched numpy engine of the same map was removed: it paid numpy's
per-call overhead at every step, so it was slower than this one except
for batches of hundreds of systems, and nothing in the library used it.)
This module is the algorithm -- Jacobi coordinates, the
kick–drift–kick step with the modified kick, the fitted symplectic
corrector, detection of g = x·vx + y·vy changing sign from − to + with the
planet in front (on the Jacobi vectors, which costs no change of
coordinates per step), Newton refinement on map steps from the synchronised
start of the step (its first half-kick from the acceleration the main loop
already has), the output corrector's inverse, and the last correction solved
on the planet's local two-body series -- written as scalar loops over
bodies for one system and compiled with numba (a general-purpose JIT
compiler for numpy code; Lam, Pitrou & Seibert 2015), with the loop over
systems in the compiled code too (``prange``: threads over systems).

Every system keeps its own step, and only the transits whose running index
is asked for are refined (the others are only counted), which is most of
the saving for sparse data.
"""

from __future__ import annotations

import functools
import threading

import numpy as np
from numba import njit, prange

from ttvkit.constants import C_AU_PER_DAY

__all__ = ["integrate"]

_G = 0.01720209895 ** 2


@njit(cache=True, error_model="numpy", inline="always")
def _drift_one(r, v, i, mu, h):
    """Kepler drift of Jacobi orbit ``i`` by ``h`` (Gauss f and g; elliptic only)."""
    x0, y0, z0 = r[i, 0], r[i, 1], r[i, 2]
    vx, vy, vz = v[i, 0], v[i, 1], v[i, 2]
    r0 = np.sqrt(x0 * x0 + y0 * y0 + z0 * z0)
    v2 = vx * vx + vy * vy + vz * vz
    rv = x0 * vx + y0 * vy + z0 * vz
    inv_a = 2.0 / r0 - v2 / mu
    if not inv_a > 0:
        for k in range(3):
            r[i, k] = np.nan
            v[i, k] = np.nan
        return
    a = 1.0 / inv_a
    n = np.sqrt(mu * inv_a ** 3)
    c = 1.0 - r0 * inv_a
    s = rv / np.sqrt(mu * a)
    target = n * h
    x = target + s * (1 - np.cos(target))
    for _ in range(30):
        sx, cx = np.sin(x), np.cos(x)
        step = (x - c * sx + s * (1 - cx) - target) / (1 - c * cx + s * sx)
        x -= step
        if not abs(step) >= 1e-14:
            break
    # sin and cos of the last, tiny step's result by the rotation to first order
    # (|step| < 1e-14: what is left, step²/2 < 1e-28, is far below a rounding)
    sx, cx = sx - cx * step, cx + sx * step
    f = 1 - a / r0 * (1 - cx)
    g = h - (x - sx) / n
    rr = a + (r0 - a) * cx + rv * np.sqrt(a / mu) * sx
    fdot = -np.sqrt(mu * a) / (rr * r0) * sx
    gdot = 1 - a / rr * (1 - cx)
    r[i, 0], r[i, 1], r[i, 2] = f * x0 + g * vx, f * y0 + g * vy, f * z0 + g * vz
    v[i, 0], v[i, 1], v[i, 2] = fdot * x0 + gdot * vx, fdot * y0 + gdot * vy, fdot * z0 + gdot * vz


@njit(cache=True, error_model="numpy", inline="always")
def _drift(r, v, mu, h):
    for i in range(r.shape[0]):
        _drift_one(r, v, i, mu[i], h)


@njit(cache=True, error_model="numpy", inline="always")
def _from_jacobi(r, m, icum, x):
    """Barycentric vectors x[B, 3] of Jacobi vectors r[N, 3] (star first in x); icum = 1/cumulative mass."""
    n = r.shape[0]
    cx, cy, cz = 0.0, 0.0, 0.0
    for i in range(n, 0, -1):
        f = m[i] * icum[i]
        px, py, pz = cx - f * r[i - 1, 0], cy - f * r[i - 1, 1], cz - f * r[i - 1, 2]
        x[i, 0], x[i, 1], x[i, 2] = px + r[i - 1, 0], py + r[i - 1, 1], pz + r[i - 1, 2]
        cx, cy, cz = px, py, pz
    x[0, 0], x[0, 1], x[0, 2] = cx, cy, cz


@njit(cache=True, error_model="numpy", inline="always")
def _to_jacobi_accel(acc, m, icum, out):
    """Jacobi-frame accelerations out[N, 3] of barycentric ones acc[B, 3]; icum = 1/cumulative mass."""
    sx, sy, sz = 0.0, 0.0, 0.0
    for i in range(out.shape[0]):
        sx += m[i] * acc[i, 0]
        sy += m[i] * acc[i, 1]
        sz += m[i] * acc[i, 2]
        out[i, 0] = acc[i + 1, 0] - sx * icum[i]
        out[i, 1] = acc[i + 1, 1] - sy * icum[i]
        out[i, 2] = acc[i + 1, 2] - sz * icum[i]


@njit(cache=True, error_model="numpy")
def _kick(r, v, h, mod, m, gm, icum, mu, work_x, work_a, work_dx, work_p, a, da):
    """v += h (a + mod·(∂a/∂r)·a): the interaction kick; ``mod`` = κ step² (0 for a plain kick).

    ``work_p`` [pairs, 5] keeps each pair's separation, 1/r² and 1/r³ from
    the acceleration pass for the Hessian pass.
    """
    nb = m.shape[0]
    n = nb - 1
    _from_jacobi(r, m, icum, work_x)
    for i in range(nb):
        for k in range(3):
            work_a[i, k] = 0.0
    q = 0
    for i in range(nb - 1):
        for j in range(i + 1, nb):
            dx = work_x[j, 0] - work_x[i, 0]
            dy = work_x[j, 1] - work_x[i, 1]
            dz = work_x[j, 2] - work_x[i, 2]
            inv_r2 = 1.0 / (dx * dx + dy * dy + dz * dz)
            inv_r3 = inv_r2 * np.sqrt(inv_r2)
            work_p[q, 0], work_p[q, 1], work_p[q, 2], work_p[q, 3], work_p[q, 4] = dx, dy, dz, inv_r2, inv_r3
            q += 1
            work_a[i, 0] += gm[j] * inv_r3 * dx
            work_a[i, 1] += gm[j] * inv_r3 * dy
            work_a[i, 2] += gm[j] * inv_r3 * dz
            work_a[j, 0] -= gm[i] * inv_r3 * dx
            work_a[j, 1] -= gm[i] * inv_r3 * dy
            work_a[j, 2] -= gm[i] * inv_r3 * dz
    _to_jacobi_accel(work_a, m, icum, a)
    for i in range(n):
        rn2 = r[i, 0] ** 2 + r[i, 1] ** 2 + r[i, 2] ** 2
        kep = mu[i] / (rn2 * np.sqrt(rn2))
        for k in range(3):
            a[i, k] += kep * r[i, k]
    if mod != 0.0:
        _from_jacobi(a, m, icum, work_dx)
        for i in range(nb):
            for k in range(3):
                work_a[i, k] = 0.0
        q = 0
        for i in range(nb - 1):
            for j in range(i + 1, nb):
                dx, dy, dz, inv_r2, inv_r3 = work_p[q, 0], work_p[q, 1], work_p[q, 2], work_p[q, 3], work_p[q, 4]
                q += 1
                ex = work_dx[j, 0] - work_dx[i, 0]
                ey = work_dx[j, 1] - work_dx[i, 1]
                ez = work_dx[j, 2] - work_dx[i, 2]
                proj = 3 * (dx * ex + dy * ey + dz * ez) * inv_r2
                tx = inv_r3 * (ex - proj * dx)
                ty = inv_r3 * (ey - proj * dy)
                tz = inv_r3 * (ez - proj * dz)
                work_a[i, 0] += gm[j] * tx
                work_a[i, 1] += gm[j] * ty
                work_a[i, 2] += gm[j] * tz
                work_a[j, 0] -= gm[i] * tx
                work_a[j, 1] -= gm[i] * ty
                work_a[j, 2] -= gm[i] * tz
        _to_jacobi_accel(work_a, m, icum, da)
        for i in range(n):
            rn2 = r[i, 0] ** 2 + r[i, 1] ** 2 + r[i, 2] ** 2
            kep = mu[i] / (rn2 * np.sqrt(rn2))
            ra = 3 * (r[i, 0] * a[i, 0] + r[i, 1] * a[i, 1] + r[i, 2] * a[i, 2]) / rn2
            for k in range(3):
                da[i, k] += kep * (a[i, k] - ra * r[i, k])
                a[i, k] += mod * da[i, k]
    for i in range(n):
        for k in range(3):
            v[i, k] += h * a[i, k]


@njit(cache=True, error_model="numpy", inline="always")
def _keep(a, da, mod, am, ap):
    """Copy a kick's acceleration (``a``, modified) and its plain part a − mod·da."""
    for i in range(a.shape[0]):
        for k in range(3):
            am[i, k] = a[i, k]
            ap[i, k] = a[i, k] - mod * da[i, k] if mod != 0.0 else a[i, k]


@njit(cache=True, error_model="numpy")
def _apply(kinds, values, h, r, v, m, gm, icum, mu, wx, wa, wdx, wp, a, da):
    """A corrector sequence: kinds 0 = drift, 1 = plain kick, by values·h."""
    for q in range(kinds.shape[0]):
        if kinds[q] == 0:
            _drift(r, v, mu, values[q] * h)
        else:
            _kick(r, v, values[q] * h, 0.0, m, gm, icum, mu, wx, wa, wdx, wp, a, da)


@njit(cache=True, error_model="numpy", inline="always")
def _relative(r, v, m, icum, planet, wx, wv):
    """Position and velocity of ``planet`` relative to the star (barycentric state left in wx, wv)."""
    _from_jacobi(r, m, icum, wx)
    _from_jacobi(v, m, icum, wv)
    return (wx[planet + 1, 0] - wx[0, 0], wx[planet + 1, 1] - wx[0, 1], wx[planet + 1, 2] - wx[0, 2],
            wv[planet + 1, 0] - wv[0, 0], wv[planet + 1, 1] - wv[0, 1], wv[planet + 1, 2] - wv[0, 2])


@njit(cache=True, error_model="numpy")
def _newton(r, v, m, icum, planet, mu_e, wx, wv):
    """g / (dg/dt) of ``planet`` with the two-body acceleration."""
    px, py, pz, vx, vy, _ = _relative(r, v, m, icum, planet, wx, wv)
    d = np.sqrt(px * px + py * py + pz * pz)
    k = -mu_e / (d * d * d)
    dg = vx * vx + vy * vy + px * k * px + py * k * py
    return (px * vx + py * vy) / dg


@njit(cache=True, error_model="numpy")
def _local_root(r, v, m, icum, planet, mu_e, wx, wv):
    """The time offset δ from the state (r, v) at which g of ``planet`` is zero, solved locally.

    The planet's position relative to the star is continued as the Taylor
    series R + V δ + A δ²/2 + J δ³/6 of its two-body motion (A and J the
    Keplerian acceleration and jerk) and g = x·vx + y·vy is solved on it by
    Newton.  Used only where |δ| is small (after full map steps have brought
    the trial time within ~1e-5 d): the series' truncation is ~(nδ)⁴/24 of
    the orbit and the perturbing acceleration left out moves the planet by
    ~(a_pert/a_Kepler)(nδ)²/2 of it, both far below 1e-10 d in time.
    """
    rx, ry, rz, vx, vy, vz = _relative(r, v, m, icum, planet, wx, wv)
    d2 = rx * rx + ry * ry + rz * rz
    k = -mu_e / (d2 * np.sqrt(d2))
    ax, ay = k * rx, k * ry
    q = 3 * (rx * vx + ry * vy + rz * vz) / d2
    jx, jy = k * (vx - q * rx), k * (vy - q * ry)
    delta = 0.0
    for _ in range(8):
        x = rx + delta * (vx + delta * (0.5 * ax + delta * jx / 6))
        y = ry + delta * (vy + delta * (0.5 * ay + delta * jy / 6))
        ux = vx + delta * (ax + 0.5 * delta * jx)
        uy = vy + delta * (ay + 0.5 * delta * jy)
        g = x * ux + y * uy
        dg = ux * ux + uy * uy + x * (ax + delta * jx) + y * (ay + delta * jy)
        step = g / dg
        delta -= step
        if abs(step) < 1e-13:
            break
    return delta


@njit(cache=True, error_model="numpy")
def _refine(p, tau, h, r0, vs, a0, m, gm, icum, mu, corrector, inv_k, inv_v, wx, wv, wa, wdx, wp, a, da, rt, vt):
    """Time of planet ``p``'s transit within the step from the synchronised state (r0, vs).

    Newton on g over a map step of trial length τ with plain kicks (the
    first from ``a0``, the plain acceleration at r0, kept by the caller; its
    derivative the two-body one), until a correction is below 1e-5 d (at
    most three map steps from the linear crossing; usually two).  With the
    corrector, the state at that trial τ goes back to real coordinates.
    The last correction is then solved locally on the planet's two-body
    Taylor series (:func:`_local_root`), which costs no map step.  Leaves
    the barycentric state at the last trial τ in ``wx``.
    """
    mu_e = _G * (m[0] + m[p + 1])
    for _ in range(40):
        rt[:, :] = r0
        for i in range(rt.shape[0]):      # the first half-kick: a0 is the plain acceleration at r0
            for k in range(3):
                vt[i, k] = vs[i, k] + 0.5 * tau * a0[i, k]
        _drift(rt, vt, mu, tau)
        _kick(rt, vt, 0.5 * tau, 0.0, m, gm, icum, mu, wx, wa, wdx, wp, a, da)
        delta = _newton(rt, vt, m, icum, p, mu_e, wx, wv)
        if abs(delta) < 1e-5:
            break
        tau = min(max(tau - delta, -h), 2 * h)     # the true crossing may sit just outside the step
    if corrector:
        _apply(inv_k, inv_v, h, rt, vt, m, gm, icum, mu, wx, wa, wdx, wp, a, da)
    return tau + _local_root(rt, vt, m, icum, p, mu_e, wx, wv)


@njit(cache=True, error_model="numpy")
def _one_system(m, r, v, h, n_steps, wanted, want_epoch, light_time, corrector,
                fwd_k, fwd_v, inv_k, inv_v, kappa, out):
    nb = m.shape[0]
    n = nb - 1
    k_max = out.shape[1]
    icum = 1.0 / np.cumsum(m)             # reciprocal cumulative masses (Jacobi weights)
    gm = _G * m
    mu = _G * np.cumsum(m)[1:]
    wx = np.empty((nb, 3))
    wv = np.empty((nb, 3))
    wa = np.empty((nb, 3))
    wdx = np.empty((nb, 3))
    wp = np.empty((nb * (nb - 1) // 2, 5))
    a = np.empty((n, 3))
    da = np.empty((n, 3))
    r0 = np.empty((n, 3))
    v0 = np.empty((n, 3))
    vs = np.empty((n, 3))
    # the accelerations (modified and plain) of each main-loop kick, at the
    # positions the next step starts from: the refinement of a transit needs
    # both at the start of its step, and recomputing them costs a kick.  Two
    # slots, the step's parity choosing which: no copying per step.
    am2 = np.empty((2, n, 3))
    ap2 = np.empty((2, n, 3))
    rt = np.empty((n, 3))
    vt = np.empty((n, 3))
    mod = kappa * h * h
    if corrector:
        _apply(fwd_k, fwd_v, h, r, v, m, gm, icum, mu, wx, wa, wdx, wp, a, da)
    g_old = np.empty(n)
    count = np.zeros(n, np.int64)
    hit = np.zeros(n, np.bool_)
    tau0 = np.empty(n)
    for p in range(n):
        g_old[p] = r[p, 0] * v[p, 0] + r[p, 1] * v[p, 1]
    _kick(r, v, 0.5 * h, mod, m, gm, icum, mu, wx, wa, wdx, wp, a, da)
    _keep(a, da, mod, am2[0], ap2[0])
    for step in range(n_steps):
        slot = step & 1
        am, ap = am2[slot], ap2[slot]
        r0[:, :] = r
        v0[:, :] = v
        _drift(r, v, mu, h)
        if not np.isfinite(np.sum(r[:, 0])):  # an orbit became unbound (its drift left NaN): all NaN
            for p in range(n):
                for q in range(k_max):
                    out[p, q] = np.nan
            return
        # detection on the Jacobi vectors (a proxy: the planet relative to the
        # star and the planets inside it, offset from the star by ~m_inner/M_*
        # of the inner orbits; the crossing moves by far less than a step), so
        # a step costs no change of coordinates; the refinement solves the
        # true, star-relative g and may end just outside the step
        hits = 0
        for p in range(n):
            hit[p] = False
            if not wanted[p]:
                continue
            g_new = r[p, 0] * v[p, 0] + r[p, 1] * v[p, 1]
            if g_old[p] < 0 and g_new >= 0 and r[p, 2] > 0:
                c = count[p]
                count[p] += 1
                if c < k_max and want_epoch[c]:
                    hit[p] = True
                    tau0[p] = h * g_old[p] / (g_old[p] - g_new)     # Newton starts at the linear crossing
                    hits += 1
            g_old[p] = g_new
        _kick(r, v, h, mod, m, gm, icum, mu, wx, wa, wdx, wp, a, da)
        _keep(a, da, mod, am2[1 - slot], ap2[1 - slot])
        if hits == 0:
            continue
        # refine from the synchronised start of the step (the velocities without
        # the last half-kick): Newton on a map step of trial length τ with plain kicks
        for i in range(n):
            for k in range(3):
                vs[i, k] = v0[i, k] - 0.5 * h * am[i, k]
        for p in range(n):
            if not hit[p]:
                continue
            t = step * h + _refine(p, tau0[p], h, r0, vs, ap, m, gm, icum, mu, corrector, inv_k, inv_v,
                                   wx, wv, wa, wdx, wp, a, da, rt, vt)
            if light_time:            # the star's barycentric z (wx holds the refined state)
                t -= wx[0, 2] / C_AU_PER_DAY
            out[p, count[p] - 1] = t
    _kick(r, v, -0.5 * h, mod, m, gm, icum, mu, wx, wa, wdx, wp, a, da)     # synchronise the final state
    if corrector:
        _apply(inv_k, inv_v, h, r, v, m, gm, icum, mu, wx, wa, wdx, wp, a, da)


def _batch(m, r, v, h, n_steps, wanted, want_epoch, light_time, corrector, fwd_k, fwd_v, inv_k, inv_v,
           kappa, out):
    for s in prange(m.shape[0]):
        _one_system(m[s], r[s], v[s], h[s], n_steps[s], wanted[s], want_epoch, light_time, corrector,
                    fwd_k, fwd_v, inv_k, inv_v, kappa, out[s])


_batch_serial = njit(cache=True, error_model="numpy")(_batch)
_batch_threads = njit(cache=True, error_model="numpy", parallel=True)(_batch)
_PARALLEL = threading.Lock()


@functools.lru_cache(maxsize=8)
def _op_arrays(ops: tuple) -> tuple:
    """A corrector's (kind, value/h) sequence as the kernel's arrays (kinds 0 = drift, 1 = kick); cached."""
    kinds = np.array([0 if k == "d" else 1 for k, _ in ops], np.int64)
    values = np.array([x for _, x in ops], float)
    kinds.flags.writeable = values.flags.writeable = False
    return kinds, values


def integrate(masses, r, v, h, n_steps, wanted, want_epoch, light_time: bool, corrector: bool,
              forward, inverse, kappa: float, threads: bool = True) -> tuple:
    """Transit times [S, N, K] of a batch from Jacobi states (already sorted inner to outer).

    Returns the times and the final Jacobi positions and velocities [S, N, 3]
    (real coordinates, synchronised; NaN for a system that went unbound).

    ``forward`` and ``inverse`` are the corrector's merged (kind, value/h)
    sequences; ``want_epoch[K]`` says which running transit indices to refine.
    """
    s, nb = masses.shape
    out = np.full((s, nb - 1, want_epoch.size), np.nan)
    fk, fv = _op_arrays(tuple(forward))
    ik, iv = _op_arrays(tuple(inverse))
    r_end, v_end = np.array(r, float), np.array(v, float)      # integrated in place
    args = (np.ascontiguousarray(masses, float), r_end, v_end,
            np.ascontiguousarray(h, float), np.ascontiguousarray(n_steps, np.int64),
            np.ascontiguousarray(wanted, np.bool_), np.ascontiguousarray(want_epoch, np.bool_),
            bool(light_time), bool(corrector), fk, fv, ik, iv, float(kappa), out)
    # numba's default threading layer must not be entered by two Python
    # threads at once: a second caller runs the serial kernel instead
    if threads and s > 1 and _PARALLEL.acquire(blocking=False):
        try:
            _batch_threads(*args)
        finally:
            _PARALLEL.release()
    else:
        _batch_serial(*args)
    return out, r_end, v_end
